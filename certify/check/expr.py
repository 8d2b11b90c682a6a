"""Safe model expressions: a whitelist parser over Python's ast, and the evaluation tape.

Nothing here ever calls eval, exec or an import: the text is parsed by ``ast.parse`` in
eval mode and every node is checked against a whitelist before it becomes a tape entry.
"""

from __future__ import annotations

import ast
import re
from fractions import Fraction

FUNCTIONS = ("exp", "log", "sqrt", "sin", "cos", "tan", "tanh", "sinh", "cosh", "atan")
MAX_TEXT = 20_000  # characters in one expression
MAX_DEPTH = 300  # nesting depth of the expression tree
MAX_DIGITS = 60  # significant digits in one number
MAX_DECIMAL_EXPONENT = 400  # |e| in a literal such as 1e-9
MAX_INT_EXPONENT = 1000  # |n| in x**n with an integer literal n

_NUMBER = re.compile(r"([0-9][0-9_]*)?(\.[0-9][0-9_]*|\.)?([eE][+-]?[0-9]+)?")
_BINARY = {ast.Add: "add", ast.Sub: "sub", ast.Mult: "mul", ast.Div: "div", ast.Pow: "pow"}


class ExpressionError(ValueError):
    """A model expression outside the whitelist, with the 1-based column of the offence."""

    def __init__(self, reason: str, text: str = "", column: int = 0):
        self.reason, self.text, self.column = reason, text, column
        where = f" at column {column}" if column else ""
        found = f"found '{text}'{where}: " if text else ""
        super().__init__(found + reason)


def parse_number(text: str) -> Fraction:
    """Return the exact value of a decimal literal such as '0.1', '1e-9' or '3'."""
    body = text.replace("_", "")
    m = _NUMBER.fullmatch(body)
    if not body or m is None or not (m.group(1) or (m.group(2) or "").strip(".")):
        raise ExpressionError("expected a decimal number", text)
    significant = ((m.group(1) or "") + (m.group(2) or "").lstrip(".")).lstrip("0")
    if len(significant) > MAX_DIGITS:
        raise ExpressionError(f"a number may have at most {MAX_DIGITS} digits", text[:20] + "...")
    if m.group(3) and abs(int(m.group(3)[1:])) > MAX_DECIMAL_EXPONENT:
        raise ExpressionError(f"a decimal exponent must be at most {MAX_DECIMAL_EXPONENT}", text)
    return Fraction(body if not body.endswith(".") else body[:-1])


def parse_expression(text: str, names: set[str] | frozenset[str]) -> tuple:
    """Parse one right-hand side into a tree of tuples, refusing anything off the whitelist.

    Trees: ("num", Fraction), ("name", str), ("neg", a), (op, a, b) for op in add sub mul div pow,
    ("call", function, a).
    """
    if not isinstance(text, str):
        raise ExpressionError("an expression must be a string")
    if len(text) > MAX_TEXT:
        raise ExpressionError(f"an expression may have at most {MAX_TEXT} characters")
    check_characters(text)
    if "^" in text:
        col = text.index("^") + 1
        raise ExpressionError("use ** for powers", "^", col)
    try:
        tree = ast.parse(text.strip(), mode="eval")
    except SyntaxError as exc:
        raise ExpressionError(f"not a valid expression ({exc.msg})", text.strip()[:40],
                              exc.offset or 0) from None
    except (RecursionError, MemoryError, ValueError):
        raise ExpressionError(f"nesting deeper than {MAX_DEPTH}") from None
    return _walk(tree.body, text.strip(), frozenset(names), 0)


def check_characters(text: str) -> None:
    """Refuse any character but printable ASCII and the space, and the comment sign.

    Python's parser reads a lone carriage return, a form feed or U+2028 as a line break and
    folds look-alike letters (NFKC), so text outside this set could mean something other than
    it shows; within it, every node's column is its offset in the text.
    """
    for i, ch in enumerate(text):
        if not " " <= ch <= "~":
            raise ExpressionError("an expression may contain only printable ASCII characters "
                                  "and spaces", f"U+{ord(ch):04X}", i + 1)
        if ch in "#\\":
            raise ExpressionError("comments and backslashes are not allowed in an expression",
                                  ch, i + 1)


def _walk(node: ast.AST, src: str, names: frozenset[str], depth: int) -> tuple:
    """Return the tree for one checked ast node."""
    if depth > MAX_DEPTH:
        raise ExpressionError(f"nesting deeper than {MAX_DEPTH}")
    seg = (_segment(src, node) or type(node).__name__)[:40]
    col = getattr(node, "col_offset", -1) + 1
    down = depth + 1
    if isinstance(node, ast.Constant):
        if isinstance(node.value, bool) or not isinstance(node.value, (int, float)):
            raise ExpressionError("only numbers, declared names and whitelisted functions "
                                  "are allowed", seg, col)
        return ("num", parse_number(_segment(src, node)))
    if isinstance(node, ast.Name):
        if node.id in names:
            return ("name", node.id)
        if node.id in FUNCTIONS:
            raise ExpressionError("a function must be called with one argument", seg, col)
        raise ExpressionError(f"undeclared name '{node.id}'", seg, col)
    if isinstance(node, ast.UnaryOp) and isinstance(node.op, (ast.USub, ast.UAdd)):
        inner = _walk(node.operand, src, names, down)
        return ("neg", inner) if isinstance(node.op, ast.USub) else inner
    if isinstance(node, ast.BinOp) and type(node.op) in _BINARY:
        op = _BINARY[type(node.op)]
        left = _walk(node.left, src, names, down)
        right = _walk(node.right, src, names, down)
        if op == "pow":
            _check_exponent(node.right, src)
        return (op, left, right)
    if isinstance(node, ast.Call):
        fname = node.func.id if isinstance(node.func, ast.Name) else None
        if fname not in FUNCTIONS:
            what = f"function '{fname}'" if fname else "this kind of call"
            raise ExpressionError(f"{what} is not allowed; allowed: {', '.join(FUNCTIONS)}",
                                  seg, col)
        if node.keywords or len(node.args) != 1 or isinstance(node.args[0], ast.Starred):
            raise ExpressionError(f"{fname} takes exactly one positional argument", seg, col)
        return ("call", fname, _walk(node.args[0], src, names, down))
    kinds = {ast.Attribute: "attribute access is", ast.Subscript: "subscripts are",
             ast.Lambda: "lambdas are", ast.Compare: "comparisons are",
             ast.BoolOp: "boolean operators are", ast.IfExp: "conditional expressions are",
             ast.keyword: "keywords are"}
    for kind, label in kinds.items():
        if isinstance(node, kind):
            raise ExpressionError(f"{label} not allowed in a model expression", seg, col)
    raise ExpressionError("not allowed in a model expression (allowed: numbers, declared names, "
                          "+ - * / **, and " + ", ".join(FUNCTIONS) + ")", seg, col)


def _segment(src: str, node: ast.AST) -> str:
    """Return the source text of a node (the text is one line of ASCII, see check_characters)."""
    return src[node.col_offset:node.end_col_offset]


def _check_exponent(node: ast.AST, src: str) -> None:
    """Refuse power towers and integer exponents above the cap, before anything is computed."""
    for sub in ast.walk(node):
        if isinstance(sub, ast.BinOp) and isinstance(sub.op, ast.Pow):
            raise ExpressionError("an exponent may not itself contain **",
                                  (_segment(src, sub) or "**")[:40],
                                  sub.col_offset + 1)
        if isinstance(sub, ast.Constant) and isinstance(sub.value, (int, float)):
            if abs(parse_number(_segment(src, sub) or "0")) > MAX_INT_EXPONENT:
                raise ExpressionError(f"an exponent may be at most {MAX_INT_EXPONENT} in size",
                                      _segment(src, sub) or "", sub.col_offset + 1)


def unparse(tree: tuple) -> str:
    """Return readable text for a tree (used in messages and reports)."""
    op = tree[0]
    if op == "num":
        q = tree[1]
        return str(q.numerator) if q.denominator == 1 else f"({q})"
    if op == "name":
        return tree[1]
    if op == "neg":
        return f"(-{unparse(tree[1])})"
    if op == "call":
        return f"{tree[1]}({unparse(tree[2])})"
    sym = {"add": "+", "sub": "-", "mul": "*", "div": "/", "pow": "**"}[op]
    return f"({unparse(tree[1])} {sym} {unparse(tree[2])})"


class Tape:
    """A straight-line program for a list of trees, with common subexpressions shared.

    Slots 0..n-1 are the state variables, the next ones the parameters; each instruction is
    (op, arg1, arg2, text) with args being slot numbers, a Fraction for "num", or a function name.
    """

    def __init__(self, trees: list[tuple], variables: list[str], parameters: list[str]):
        self.variables, self.parameters = list(variables), list(parameters)
        self.slots: dict[str, int] = {}
        for i, name in enumerate(self.variables + self.parameters):
            self.slots[name] = i
        self.code: list[tuple] = []
        self._seen: dict[tuple, int] = {}
        self.outputs = [self._emit(t) for t in trees]

    def _emit(self, tree: tuple) -> int:
        """Return the slot holding the value of tree, appending instructions as needed."""
        op = tree[0]
        if op == "name":
            return self.slots[tree[1]]
        if op == "num":
            key = ("num", tree[1], None)
        elif op == "neg":
            key = ("neg", self._emit(tree[1]), None)
        elif op == "call":
            key = ("call", self._emit(tree[2]), tree[1])
        else:
            key = (op, self._emit(tree[1]), self._emit(tree[2]))
        if key not in self._seen:
            self._seen[key] = len(self.slots) + len(self.code)
            self.code.append(key + (unparse(tree)[:60],))
        return self._seen[key]
