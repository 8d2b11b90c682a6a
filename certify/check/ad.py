"""Forward-mode automatic differentiation of a tape over any arithmetic of arith.py.

A dual number is (value, gradient) where the gradient is a dict {state index: derivative};
quantities that depend on parameters only carry an empty dict, so their derivatives are never
formed (sqrt(p) over p in [0, 1] is fine; sqrt(x) needs x > 0 for its derivative).
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError
from .expr import Tape

Dual = tuple[object, dict]


def _scale(g: dict, c) -> dict:
    return {i: d * c for i, d in g.items()}


def _combine(ga: dict, ca, gb: dict, cb) -> dict:
    """Return ga*ca + gb*cb (ca or cb None means coefficient 1)."""
    out = {i: (d if ca is None else d * ca) for i, d in ga.items()}
    for i, d in gb.items():
        t = d if cb is None else d * cb
        out[i] = out[i] + t if i in out else t
    return out


def run(tape: Tape, ar, inputs: list[Dual], params: list) -> list[Dual]:
    """Evaluate the tape on state duals and parameter values; return the output duals."""
    slots: list[Dual] = list(inputs) + [(p, {}) for p in params]
    one = ar.const(Fraction(1))
    for op, a, b, what in tape.code:
        if op == "num":
            slots.append((ar.const(a), {}))
            continue
        va, ga = slots[a]
        if op == "add" or op == "sub":
            vb, gb = slots[b]
            if op == "add":
                slots.append((va + vb, _combine(ga, None, gb, None)))
            else:
                slots.append((va - vb, _combine(ga, None, _scale(gb, -one), None)))
        elif op == "mul":
            vb, gb = slots[b]
            slots.append((va * vb, _combine(ga, vb, gb, va)))
        elif op == "div":
            vb, gb = slots[b]
            v = ar.div(va, vb, what)
            g = _combine(ga, None, gb, -v) if gb else ga
            slots.append((v, _scale(g, ar.div(one, vb, what)) if g else {}))
        elif op == "neg":
            slots.append((-va, _scale(ga, -one)))
        elif op == "pow":
            slots.append(_power(ar, slots[a], slots[b], what))
        else:
            slots.append(_function(ar, b, va, ga, what))
    return [slots[i] for i in tape.outputs]


def exact_size_bound(tape: Tape, state: list[Fraction], params: list[Fraction], period: int,
                     limit: int) -> int:
    """Return a bound on the size of every value and derivative of an exact evaluation.

    A size bounds the bits of a numerator and a denominator: a + b, a * b and a / b have size
    at most s(a) + s(b) + 1, a**n (|n| <= 1000 on this path) at most |n| s(a); a derivative
    rule is a sum of such products. Computed from the sizes alone, before any arithmetic, and
    capped just above the limit so that the bound itself stays small.
    """
    def size(q: Fraction) -> int:
        return max(q.numerator.bit_length(), q.denominator.bit_length())

    def plus(a: int, b: int) -> int:  # the sum of two terms, 0 meaning "no term"
        return min(a + b + 1 if a and b else a or b, limit + 1)

    values, grads = [size(q) for q in state], [1] * len(state)
    for _ in range(period):
        vs = values + [size(q) for q in params]
        ds = grads + [0] * len(params)
        for op, a, b, _ in tape.code:
            if op == "num":
                v, d = size(a), 0
            elif op in ("add", "sub"):
                v, d = plus(vs[a], vs[b]), plus(ds[a], ds[b])
            elif op == "neg":
                v, d = vs[a], ds[a]
            elif op == "pow":
                v = min(1000 * vs[a], limit + 1)
                d = plus(11 + v, ds[a]) if ds[a] else 0
            elif op == "call":  # refused by exact arithmetic: evaluation stops there
                v, d = 0, 0
            else:  # mul, div
                v = plus(vs[a], vs[b])
                d = plus(plus(ds[a], vs[b]) if ds[a] else 0, plus(ds[b], v) if ds[b] else 0)
                d = plus(d, vs[b]) if op == "div" and d else d
            vs.append(v)
            ds.append(d)
        values, grads = [vs[i] for i in tape.outputs], [ds[i] for i in tape.outputs]
    return max(values + grads + [0])


def apply(ar, op: str, x, what: str, n: int = 0):
    """Return op(x): a whitelisted function, "recip" (1/x) or "pow" (x**n, n an integer)."""
    if op == "pow":
        return ar.ipow(x, n, what)
    return ar.div(ar.const(Fraction(1)), x, what) if op == "recip" else ar.call(op, x, what)


def derivatives(ar, op: str, x, fx, what: str, n: int = 0, second: bool = False):
    """Return (op'(x), op''(x) when second, else None) over any arithmetic, fx being op(x).

    The kernel's one table of derivatives: forward-mode differentiation uses the first, the
    parameter forms the first at a centre and the second over a range.
    """
    one, two = ar.const(Fraction(1)), ar.const(Fraction(2))
    if op == "exp":
        return fx, fx
    if op in ("sinh", "cosh"):
        return ar.call("cosh" if op == "sinh" else "sinh", x, what), fx
    if op in ("sin", "cos"):
        d1 = ar.call("cos", x, what) if op == "sin" else -ar.call("sin", x, what)
        return d1, -fx
    if op == "pow":
        d1 = ar.const(Fraction(n)) * ar.ipow(x, n - 1, what)
        return d1, ar.const(Fraction(n * (n - 1))) * ar.ipow(x, n - 2, what) if second else None
    if op == "sqrt" and not ar.positive(fx):
        raise DomainError(what, "sqrt is not differentiable at 0")
    if op in ("log", "sqrt", "atan"):
        q = {"log": x, "sqrt": fx + fx, "atan": one + ar.ipow(x, 2, what)}[op]
        d1 = ar.div(one, q, what)
        if not second or op == "log":
            return d1, -(d1 * d1) if second else None
        return d1, -ar.div(d1, x + x, what) if op == "sqrt" else -(x + x) * d1 * d1
    # tan: 1 + f^2, tanh: 1 - f^2, recip: -f^2; then f'' = 2 s f f' with s = 1, -1, -1
    sign = one if op == "tan" else -one
    d1 = (one if op != "recip" else ar.const(Fraction(0))) + sign * ar.ipow(fx, 2, what)
    return d1, two * sign * fx * d1 if second else None


def _power(ar, base: Dual, expo: Dual, what: str) -> Dual:
    """Return base**expo: an integer power for an exact integer exponent, else exp(e log b)."""
    vb, gb = base
    ve, ge = expo
    n = ar.exact_integer(ve) if not ge else None
    if n is not None and abs(n) <= 1000:
        v = ar.ipow(vb, n, what)
        if not gb or n == 0:
            return v, {}
        return v, _scale(gb, derivatives(ar, "pow", vb, v, what, n)[0])
    if not ar.positive(vb):
        raise DomainError(what, "non-integer power of an interval reaching <= 0")
    lb = ar.call("log", vb, what)
    v = ar.call("exp", ve * lb, what)
    g = _combine(gb, ar.div(ve * v, vb, what), ge, v * lb) if (gb or ge) else {}
    return v, g


def _function(ar, fname: str, x, gx: dict, what: str) -> Dual:
    """Return fname(x) with its derivative times gx."""
    v = ar.call(fname, x, what)
    return (v, _scale(gx, derivatives(ar, fname, x, v, what)[0])) if gx else (v, {})


def evaluate(tape: Tape, ar, box: list, params: list, period: int = 1,
             jacobian: bool = True) -> tuple[list, list[list] | None]:
    """Return enclosures of g(box, params) (period-fold composed) and of its Jacobian in x.

    box and params are lists of values of the arithmetic ar (intervals or points).
    """
    n = len(box)
    duals: list[Dual] = [(x, {i: ar.const(Fraction(1))} if jacobian else {})
                         for i, x in enumerate(box)]
    with ar.active():
        for _ in range(period):
            duals = run(tape, ar, duals, params)
        zero = ar.const(Fraction(0))
        values = [v for v, _ in duals]
        if not jacobian:
            return values, None
        jac = [[g.get(j, zero) for j in range(n)] for _, g in duals]
    return values, jac
