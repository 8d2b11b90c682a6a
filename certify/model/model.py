"""Read a model file into a Model: exact rational parameters, whitelisted expression trees."""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass, field, replace
from fractions import Fraction
from pathlib import Path

from ..check.expr import FUNCTIONS, ExpressionError, Tape, parse_expression
from .numbers import parse_rational
from ..errors import InputError

Interval = tuple[Fraction, Fraction]

_IDENT = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")
_TOP_KEYS = ("name", "description", "kind", "variables", "parameters", "equations", "guesses",
             "region")
_RESERVED = set(FUNCTIONS) | {"pi", "e", "inf", "nan"}
MAX_FILE_BYTES = 1_000_000
MAX_VARIABLES = 200


@dataclass(frozen=True)
class Model:
    """A vector field x' = f(x, p) (kind "flow") or a map x -> g(x, p) (kind "map")."""

    name: str
    kind: str
    variables: tuple[str, ...]
    parameters: dict[str, Interval]
    equations: dict[str, str]
    trees: tuple[tuple, ...]
    guesses: tuple[dict[str, float], ...] = ()
    region: dict[str, Interval] | None = None
    source: str = "<model>"
    tape: Tape = field(init=False, repr=False, compare=False)

    def __post_init__(self):
        object.__setattr__(self, "tape", Tape(list(self.trees), list(self.variables),
                                              list(self.parameters)))

    @property
    def dimension(self) -> int:
        """Return the number of state variables."""
        return len(self.variables)

    def with_parameters(self, overrides: dict[str, Interval]) -> Model:
        """Return a copy with some parameters replaced by exact values or intervals."""
        for name in overrides:
            if name not in self.parameters:
                known = ", ".join(self.parameters) or "none"
                raise InputError(f"no parameter named '{name}' (parameters: {known})",
                                 self.source, "--set")
        return replace(self, parameters={**self.parameters, **overrides})

    def with_region(self, region: dict[str, Interval]) -> Model:
        """Return a copy with a new search region."""
        return replace(self, region=dict(region))


def parse_value(raw, file: str | None = None, key: str | None = None,
                line: int | None = None) -> Interval:
    """Return the exact interval meant by a parameter value: a number, 'p/q', or [lo, hi]."""
    def one(v) -> Fraction:
        if isinstance(v, Fraction):  # from the Python API: already exact
            return v
        if isinstance(v, bool) or not isinstance(v, (str, int)):
            raise InputError(f"expected a number, found {type(v).__name__}", file, key, line)
        try:
            return Fraction(v) if isinstance(v, int) else parse_rational(v)
        except ExpressionError as exc:
            raise InputError(f"not an exact finite number ({exc.reason}): {str(v)[:30]!r}",
                             file, key, line) from None

    if isinstance(raw, (list, tuple)):
        if len(raw) != 2:
            raise InputError(f"an interval is [lo, hi], found {len(raw)} entries", file, key, line)
        lo, hi = one(raw[0]), one(raw[1])
        if lo > hi:
            raise InputError(f"empty interval: lower end {raw[0]} is above upper end {raw[1]}",
                             file, key, line)
        return lo, hi
    q = one(raw)
    return q, q


def _line_of(text: str, table: str | None, key: str, index: int = 0) -> int | None:
    """Return the 1-based line where key is set inside [table] (the index-th [[table]])."""
    current, seen = None, -1
    pattern = re.compile(r"\s*(?:\"|')?" + re.escape(key) + r"(?:\"|')?\s*=")
    for number, line in enumerate(text.splitlines(), 1):
        header = re.match(r"\s*\[\[?\s*([^\]]+?)\s*\]\]?", line)
        if header:
            current = header.group(1)
            if current == table:
                seen += 1
            continue
        if current == table and (table is None or seen == index) and pattern.match(line):
            return number
    return None


def parse_toml(text: str, source: str) -> dict:
    """Return the TOML document, floats kept as their decimal text; errors name the line."""
    try:
        return tomllib.loads(text, parse_float=str)
    except tomllib.TOMLDecodeError as exc:
        m = re.search(r"line (\d+)", str(exc))
        raise InputError(f"not valid TOML ({exc})", source, None,
                         int(m.group(1)) if m else None) from None


def read_text(path: str | Path) -> str:
    """Return a TOML input file's text (at most MAX_FILE_BYTES of UTF-8)."""
    try:
        raw = Path(path).read_bytes()
    except OSError as exc:
        raise InputError(f"cannot read the file ({exc.strerror})", str(path)) from None
    if len(raw) > MAX_FILE_BYTES:
        raise InputError(f"an input file may have at most {MAX_FILE_BYTES} bytes", str(path))
    try:
        return raw.decode("utf-8")
    except UnicodeDecodeError:
        raise InputError("the file is not UTF-8 text", str(path)) from None


def model_from_text(text: str, source: str = "<model>") -> Model:
    """Return the Model described by the TOML text (README, "Model files")."""
    data = parse_toml(text, source)
    return _build(data, source, lambda table, key, index=0: _line_of(text, table, key, index))


def load_model(path: str | Path) -> Model:
    """Return the Model in a TOML file."""
    return model_from_text(read_text(path), str(path))


def make_model(variables: list[str], equations: dict[str, str] | list[str],
               parameters: dict | None = None, kind: str = "flow", name: str = "model",
               guesses: list[dict] | None = None, region: dict | None = None) -> Model:
    """Return a Model built from Python values, with the same checks as a model file.

    Parameter values are numbers as text ("0.1", "8/3"), ints, or [lo, hi] pairs; a Python float
    is refused, because its binary value is not the decimal the user typed.
    """
    if isinstance(equations, list):
        equations = dict(zip(variables, equations))
    data = {"name": name, "kind": kind, "variables": list(variables),
            "parameters": dict(parameters or {}), "equations": dict(equations)}
    if guesses:
        data["guesses"] = [{k: str(v) for k, v in g.items()} for g in guesses]
    if region:
        data["region"] = dict(region)
    return _build(data, "<python>", lambda *a: None)


def _build(data: dict, source: str, line_of) -> Model:
    """Validate parsed TOML data and return the Model."""
    def fail(reason, table=None, key=None, index=0, column=None):
        shown = f"{table}.{key}" if table and key else (key or table)
        raise InputError(reason, source, shown, line_of(table, key, index) if key else None,
                         column)

    for key in data:
        if key not in _TOP_KEYS:
            fail(f"unknown key (allowed: {', '.join(_TOP_KEYS)})", None, key)
    kind = data.get("kind", "flow")
    if kind not in ("flow", "map"):
        fail(f"kind must be \"flow\" or \"map\", found {kind!r}", None, "kind")
    name = data.get("name", Path(source).stem)
    if not isinstance(name, str):
        fail("name must be text", None, "name")
    variables = _variables(data, fail)
    parameters = _parameters(data, variables, fail)
    equations, trees = _equations(data, variables, parameters, fail)
    guesses = _guesses(data, variables, fail)
    region = _region(data, variables, fail) if "region" in data else None
    return Model(name=name, kind=kind, variables=tuple(variables), parameters=parameters,
                 equations={v: equations[v] for v in variables}, trees=tuple(trees),
                 guesses=tuple(guesses), region=region, source=source)


def _variables(data: dict, fail) -> list[str]:
    """Return the list of variable names: identifiers, not reserved, each once."""
    variables = data.get("variables")
    if not isinstance(variables, list) or not variables:
        fail("variables must be a non-empty list of names", None, "variables")
    if len(variables) > MAX_VARIABLES:
        fail(f"at most {MAX_VARIABLES} variables are supported", None, "variables")
    for v in variables:
        if not isinstance(v, str) or not _IDENT.match(v) or v in _RESERVED:
            fail(f"{v!r} cannot be a variable name (reserved or not an identifier)", None,
                 "variables")
    if len(set(variables)) != len(variables):
        fail("a variable is listed twice", None, "variables")
    return variables


def _parameters(data: dict, variables: list[str], fail) -> dict[str, Interval]:
    """Return the parameters with their exact values or intervals."""
    raw_params = data.get("parameters", {})
    if not isinstance(raw_params, dict):
        fail("parameters must be a table", None, "parameters")
    parameters: dict[str, Interval] = {}
    for pname, raw in raw_params.items():
        if not _IDENT.match(pname) or pname in _RESERVED:
            fail(f"{pname!r} cannot be a parameter name (reserved or not an identifier)",
                 "parameters", pname)
        if pname in variables:
            fail(f"'{pname}' is both a variable and a parameter", "parameters", pname)
        try:
            parameters[pname] = parse_value(raw)
        except InputError as exc:
            fail(exc.reason, "parameters", pname)
    return parameters


def _equations(data: dict, variables: list[str], parameters: dict, fail) -> tuple[dict, list]:
    """Return the equations (one per variable) and their parsed trees."""
    equations = data.get("equations")
    if not isinstance(equations, dict):
        fail("an [equations] table with one right-hand side per variable is required",
             None, "equations")
    names = frozenset(variables) | frozenset(parameters)
    for v in variables:
        if v not in equations:
            fail(f"missing equation for variable '{v}'", "equations", None)
    for v, rhs in equations.items():
        if v not in variables:
            fail(f"equation for '{v}', which is not a variable", "equations", v)
        if not isinstance(rhs, str):
            fail("an equation must be a string", "equations", v)
    trees = []
    for v in variables:
        try:
            trees.append(parse_expression(equations[v], names))
        except ExpressionError as exc:
            fail(str(exc), "equations", v, column=None)
    return equations, trees


def _guesses(data: dict, variables: list[str], fail) -> list[dict[str, float]]:
    """Return the [[guesses]]: one number per variable each."""
    guesses = []
    raw_guesses = data.get("guesses", [])
    if not isinstance(raw_guesses, list):
        fail("guesses must be written as [[guesses]] tables", None, "guesses")
    for i, g in enumerate(raw_guesses):
        if not isinstance(g, dict):
            fail("each [[guesses]] entry must be a table", None, "guesses")
        point = {}
        for key in g:
            if key not in variables:
                fail(f"'{key}' is not a variable", "guesses", key, i)
        for v in variables:
            if v not in g:
                fail(f"guess {i + 1} has no value for '{v}'", "guesses", None, i)
            try:
                lo, hi = parse_value(g[v])
            except InputError as exc:
                fail(exc.reason, "guesses", v, i)
            if lo != hi:
                fail("a guess is a single number", "guesses", v, i)
            point[v] = float(lo)
        guesses.append(point)
    return guesses


def _region(data: dict, variables: list[str], fail) -> dict[str, Interval]:
    """Return the [region]: one side [lo, hi] per variable."""
    raw_region = data["region"]
    if not isinstance(raw_region, dict):
        fail("region must be a table of [lo, hi] per variable", None, "region")
    region = {}
    for key, raw in raw_region.items():
        if key not in variables:
            fail(f"'{key}' is not a variable", "region", key)
        if not isinstance(raw, list):
            fail("a region side is [lo, hi]", "region", key)
        try:
            region[key] = parse_value(raw)
        except InputError as exc:
            fail(exc.reason, "region", key)
    for v in variables:
        if v not in region:
            fail(f"the region has no side for '{v}'", "region", None)
    return region
