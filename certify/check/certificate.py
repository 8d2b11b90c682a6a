"""Check a certificate from the file alone: read it, then test each proof obligation.

The order follows proofs/FORMAT.md: the reader, the model, obligation 1 (Krawczyk existence and
uniqueness), obligations 2 and 3 (inertia for flows and maps), obligation 4 (proven not
hyperbolic), the tiling of the parameter box. Every check either returns or raises
CertificateRejected; nothing here searches, iterates or inflates.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from fractions import Fraction

from . import exact
from .ad import evaluate, exact_size_bound
from .affine import AffineArithmetic, branch_krawczyk, vertex_matrices
from .arith import ArbArithmetic, BudgetError, DomainError, ExactArithmetic
from .expr import ExpressionError, Tape, parse_expression

Bounds = tuple[Fraction, Fraction]
Box = list[Bounds]

FORMAT = "certify-certificate"
VERSION = 1
MAX_BYTES = 50_000_000
MAX_DIMENSION = 200
MAX_PIECES = 100_000
MAX_NUMBER_CHARS = 4000
MAX_EXACT_BITS = 65_536  # any number of an exact evaluation (the not-hyperbolic claim)
MAX_FUNCTION_WORK = 2**28  # elementary calls x period x precision^2
_RATIONAL = re.compile(r"-?[0-9]+(/[0-9]+)?\Z")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")


class CertificateRejected(Exception):
    """A certificate failed a check: a short code, the field where, and the reason."""

    def __init__(self, code: str, where: str, reason: str):
        self.code, self.where, self.reason = code, where, reason
        super().__init__(f"{code} at {where}: {reason}")


@dataclass
class Verified:
    """What a certificate proved, as re-derived by the checker."""

    claim: dict
    kind: str
    variables: list[str]
    parameters: dict[str, Bounds]
    enclosures: list[Box]  # one per piece: K(X, P) intersected with X
    pieces: int
    arithmetic: str


# ---------------------------------------------------------------- reading the file


def rational_text(q: Fraction) -> str:
    """Return q as the certificate writes exact numbers: "p" or "p/q"."""
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def _rational(v, where: str) -> Fraction:
    """Return the exact rational written as "p", "-p" or "p/q"."""
    if isinstance(v, bool) or not isinstance(v, (str, int)):
        raise CertificateRejected("malformed", where, f"found {type(v).__name__}, "
                                  "expected an exact number as a string \"p\" or \"p/q\"")
    text = str(v)
    if len(text) > MAX_NUMBER_CHARS or not _RATIONAL.match(text):
        raise CertificateRejected("malformed", where, f"found {text[:30]!r}, expected \"p/q\"")
    num, _, den = text.partition("/")
    if den and int(den) == 0:
        raise CertificateRejected("malformed", where, "zero denominator")
    return Fraction(int(num), int(den or 1))


def _list(v, n: int | None, where: str) -> list:
    if not isinstance(v, list) or (n is not None and len(v) != n):
        want = f"a list of {n}" if n is not None else "a list"
        got = f"a list of {len(v)}" if isinstance(v, list) else type(v).__name__
        raise CertificateRejected("malformed", where, f"found {got}, expected {want}")
    return v


def _dict(v, keys: set[str], where: str, optional: set[str] = frozenset()) -> dict:
    if not isinstance(v, dict):
        raise CertificateRejected("malformed", where, f"found {type(v).__name__}, expected object")
    missing, extra = keys - v.keys(), v.keys() - keys - optional
    if missing or extra:
        what = f"missing {sorted(missing)}" if missing else f"unknown {sorted(extra)}"
        raise CertificateRejected("malformed", where, f"found {what}, expected keys "
                                  f"{sorted(keys)}")
    return v


def _interval(v, where: str) -> Bounds:
    lo, hi = (_rational(x, f"{where}[{i}]") for i, x in enumerate(_list(v, 2, where)))
    if lo > hi:
        raise CertificateRejected("malformed", where, f"found [{lo}, {hi}], an empty interval")
    return lo, hi


def _matrix(v, n: int, where: str) -> list[list[Fraction]]:
    return [[_rational(x, f"{where}[{i}][{j}]") for j, x in enumerate(_list(row, n,
             f"{where}[{i}]"))] for i, row in enumerate(_list(v, n, where))]


def _integer(v, lo: int, hi: int, where: str) -> int:
    if isinstance(v, bool) or not isinstance(v, int) or not lo <= v <= hi:
        raise CertificateRejected("malformed", where, f"found {v!r}, expected an integer "
                                  f"in [{lo}, {hi}]")
    return v


def _unique_keys(pairs: list[tuple[str, object]]) -> dict:
    """Return the JSON object of the pairs, refusing a key written twice."""
    data = dict(pairs)
    if len(data) != len(pairs):
        seen = [k for i, (k, _) in enumerate(pairs) if k in dict(pairs[:i])]
        raise ValueError(f"the key {seen[0]!r} appears twice in one object")
    return data


def load(text: str | bytes) -> dict:
    """Return the parsed JSON object of a certificate, refusing oversized or deep files."""
    if len(text) > MAX_BYTES:
        raise CertificateRejected("malformed", "file", f"larger than {MAX_BYTES} bytes")
    try:
        data = json.loads(text, object_pairs_hook=_unique_keys)
    except (ValueError, RecursionError) as exc:
        raise CertificateRejected("malformed", "file", f"not JSON ({str(exc)[:80]})") from None
    if not isinstance(data, dict):
        raise CertificateRejected("malformed", "file", "found a JSON value, expected an object")
    return data


# ---------------------------------------------------------------- the checks


def check(data: dict, arithmetic: str = "flint") -> Verified:
    """Return what the certificate proves, or raise CertificateRejected."""
    _dict(data, {"format", "version", "model", "claim", "precision"}, "certificate",
          {"tool", "period", "pieces", "region"})
    if not isinstance(data.get("tool", ""), str) or len(data.get("tool", "")) > 200:
        raise CertificateRejected("malformed", "tool", "expected a short text")
    if type(data["format"]) is not str or data["format"] != FORMAT:
        raise CertificateRejected("version", "format", f"found {data['format']!r}, "
                                  f"expected {FORMAT!r}")
    if type(data["version"]) is not int or data["version"] != VERSION:
        raise CertificateRejected("version", "version", f"found {data['version']!r}, "
                                  f"expected {VERSION}")
    model = _dict(data["model"], {"kind", "variables", "parameters", "equations"}, "model",
                  {"name"})
    kind = model["kind"]
    if kind not in ("flow", "map"):
        raise CertificateRejected("malformed", "model.kind", f"found {kind!r}")
    variables = _list(model["variables"], None, "model.variables")
    n = len(variables)
    if not 1 <= n <= MAX_DIMENSION or len(set(map(str, variables))) != n:
        raise CertificateRejected("malformed", "model.variables", "expected 1 to "
                                  f"{MAX_DIMENSION} distinct names")
    params = model["parameters"]
    if not isinstance(params, dict) or len(params) > 10 * MAX_DIMENSION:
        raise CertificateRejected("malformed", "model.parameters", "expected an object")
    names = [*variables, *params]
    for name in names:
        if not isinstance(name, str) or not _NAME.match(name):
            raise CertificateRejected("malformed", "model", f"found name {name!r}")
    if len(set(names)) != len(names):
        raise CertificateRejected("model", "model.parameters", "a name is both a variable "
                                  "and a parameter")
    pbox = {p: _interval(v, f"model.parameters.{p}") for p, v in params.items()}
    eqs = _dict(model["equations"], set(variables), "model.equations")
    trees = []
    for v in variables:
        try:
            trees.append(parse_expression(eqs[v], frozenset(names)))
        except ExpressionError as exc:
            raise CertificateRejected("model", f"model.equations.{v}", str(exc)) from None
    tape = Tape(trees, variables, list(params))
    period = _integer(data.get("period", 1), 1, 64, "period")
    if kind == "flow" and period != 1:
        raise CertificateRejected("malformed", "period", "a flow has no period")
    prec = _integer(data["precision"], 30, 100_000, "precision")
    _check_budget(tape, n, period, prec)
    claim = data["claim"]
    if not isinstance(claim, dict) or claim.get("verdict") not in ("hyperbolic",
                                                                    "not hyperbolic", "count"):
        raise CertificateRejected("malformed", "claim.verdict",
                                  "expected \"hyperbolic\", \"not hyperbolic\" or \"count\"")
    wanted = {"hyperbolic": {"pieces"}, "not hyperbolic": set(), "count": {"pieces", "region"}}
    extra = {"pieces", "region"} & data.keys() - wanted[claim["verdict"]]
    if extra:
        raise CertificateRejected("malformed", min(extra), f"found {min(extra)!r}, which a "
                                  f"{claim['verdict']!r} claim does not have")
    ctx = Problem(tape, kind, period, list(params), pbox)
    ar = ArbArithmetic(prec) if arithmetic == "flint" else _other_arithmetic(arithmetic, prec)
    if claim["verdict"] == "count":
        from .region import check_count

        derived, enclosures = check_count(ctx, ar, data, claim, n, variables)
        return Verified(derived, kind, variables, pbox, enclosures, derived["pieces"], ar.name)
    if claim["verdict"] == "not hyperbolic":
        _dict(claim, {"verdict", "point"}, "claim", {"eigenvalue"})
        point = [_rational(x, f"claim.point[{i}]")
                 for i, x in enumerate(_list(claim["point"], n, "claim.point"))]
        where = _check_not_hyperbolic(ctx, point)
        return Verified({"verdict": "not hyperbolic", "eigenvalue": where, "point": point},
                        kind, variables, pbox, [[(q, q) for q in point]], 0, "exact")
    _dict(claim, {"verdict", "stable_dimension", "unstable_dimension"}, "claim")
    stable = _integer(claim["stable_dimension"], 0, n, "claim.stable_dimension")
    unstable = _integer(claim["unstable_dimension"], 0, n, "claim.unstable_dimension")
    if stable + unstable != n:
        raise CertificateRejected("inertia", "claim", f"found {stable} + {unstable} "
                                  f"dimensions, expected a total of {n}")
    pieces = _list(data.get("pieces"), None, "pieces")
    if not 1 <= len(pieces) <= MAX_PIECES:
        raise CertificateRejected("malformed", "pieces", f"expected 1 to {MAX_PIECES} pieces")
    enclosures, boxes = [], []
    for i, piece in enumerate(pieces):
        where = f"pieces[{i}]"
        _dict(piece, {"parameters", "centre", "box", "preconditioner", "inertia_matrix"}, where,
              {"sensitivity", "preconditioner_slopes"})
        piece_box = piece_parameters(ctx, piece, where)
        boxes.append(piece_box)
        centre = [_rational(x, f"{where}.centre[{j}]")
                  for j, x in enumerate(_list(piece["centre"], n, f"{where}.centre"))]
        box = [_interval(x, f"{where}.box[{j}]")
               for j, x in enumerate(_list(piece["box"], n, f"{where}.box"))]
        precond = _matrix(piece["preconditioner"], n, f"{where}.preconditioner")
        s = _matrix(piece["inertia_matrix"], n, f"{where}.inertia_matrix")
        sens, slopes = branch_fields(piece, n, len(params), where)
        with ar.active():
            enclosure, jac, inertia_ar = _check_krawczyk(ctx, ar, piece_box, centre, box,
                                                         precond, where, sens, slopes)
            check_inertia(ctx, inertia_ar, jac, s, stable, where)
        enclosures.append(enclosure)
    _check_tiling([pbox[p] for p in params], boxes)
    return Verified({"verdict": "hyperbolic", "stable_dimension": stable,
                     "unstable_dimension": unstable}, kind, variables, pbox, enclosures,
                    len(pieces), ar.name)


def _check_budget(tape: Tape, n: int, period: int, prec: int) -> None:
    """Refuse work whose size is over the bounds of proofs/FORMAT.md, before doing any."""
    if n * prec > exact.MAX_ELIMINATION_BITS:
        raise CertificateRejected("budget", "precision", f"found {n} variables at {prec} bits, "
                                  f"expected n x precision <= {exact.MAX_ELIMINATION_BITS}")
    calls = sum(1 if op == "call" else 2 for op, *_ in tape.code if op in ("call", "pow"))
    if calls * period * prec**2 > MAX_FUNCTION_WORK:
        raise CertificateRejected("budget", "precision", f"found {calls} function calls x "
                                  f"period {period} x {prec}^2 bits, expected at most "
                                  f"{MAX_FUNCTION_WORK}")


def branch_fields(piece: dict, n: int, k: int, where: str):
    """Return the optional first-order form of a piece or zero: (A, slopes), None when absent."""
    sens = slopes = None
    if "preconditioner_slopes" in piece:
        if "sensitivity" not in piece:
            raise CertificateRejected("malformed", f"{where}.preconditioner_slopes",
                                      "found slopes without a sensitivity")
        slopes = [_matrix(m, n, f"{where}.preconditioner_slopes[{a}]") for a, m in
                  enumerate(_list(piece["preconditioner_slopes"], k,
                                  f"{where}.preconditioner_slopes"))]
    if "sensitivity" in piece:
        sens = [[_rational(x, f"{where}.sensitivity[{a}][{b}]") for b, x in
                 enumerate(_list(row, k, f"{where}.sensitivity[{a}]"))]
                for a, row in enumerate(_list(piece["sensitivity"], n, f"{where}.sensitivity"))]
    return sens, slopes


def _other_arithmetic(name: str, prec: int):
    if name == "python":
        from .dyadic import DyadicArithmetic

        return DyadicArithmetic(prec)
    raise CertificateRejected("malformed", "arithmetic", f"unknown arithmetic {name!r}")


@dataclass
class Problem:
    """The equations to check: the tape of g, flow or map, the period, the parameter box."""

    tape: Tape
    kind: str
    period: int
    params: list[str]
    pbox: dict[str, Bounds]


def piece_parameters(ctx: Problem, piece: dict, where: str) -> Box:
    """Return a piece's parameter box, which must lie inside the model's."""
    pp = _dict(piece["parameters"], set(ctx.params), f"{where}.parameters")
    box = [_interval(pp[p], f"{where}.parameters.{p}") for p in ctx.params]
    for p, (lo, hi) in zip(ctx.params, box):
        if lo < ctx.pbox[p][0] or hi > ctx.pbox[p][1]:
            raise CertificateRejected("tiling", f"{where}.parameters.{p}",
                                      "found a piece reaching outside the parameter box")
    return box


def krawczyk_image(ctx: Problem, ar, pbox: Box, centre: list[Fraction], box: Box,
                   precond) -> tuple[list, list]:
    """Return K(X, P) = c - C f(c, P) + (I - C J(X, P)) (X - c) and J_g(X, P).

    For maps f = g^k - id, so J_f = J_g - I; J_g is returned for the inertia test. Raises
    DomainError when f or its Jacobian leaves its domain over X x P.
    """
    n = len(box)
    p_iv = [ar.interval(lo, hi) for lo, hi in pbox]
    fc, _ = evaluate(ctx.tape, ar, [ar.const(c) for c in centre], p_iv, ctx.period, False)
    _, jac = evaluate(ctx.tape, ar, [ar.interval(lo, hi) for lo, hi in box], p_iv, ctx.period)
    one, zero = ar.const(Fraction(1)), ar.const(Fraction(0))
    if ctx.kind == "map":
        fc = [v - ar.const(c) for v, c in zip(fc, centre)]
        jf = [[jac[i][j] - (one if i == j else zero) for j in range(n)] for i in range(n)]
    else:
        jf = jac
    cm = [[ar.const(q) for q in row] for row in precond]
    dx = [ar.interval(lo - c, hi - c) for (lo, hi), c in zip(box, centre)]
    image = []
    for i in range(n):
        k = ar.const(centre[i])
        for t in range(n):
            k = k - cm[i][t] * fc[t]
        for j in range(n):
            e = one if i == j else zero
            for t in range(n):
                e = e - cm[i][t] * jf[t][j]
            k = k + e * dx[j]
        image.append(k)
    return image, jac


def _check_krawczyk(ctx: Problem, ar, pbox: Box, centre: list[Fraction], box: Box,
                    precond, where: str, sens=None, slopes=None):
    """Obligation 1: K lies in the interior of E = X - c (Krawczyk 1969; Moore 1977; Rump 1983).

    Plain (sens None): K = -C f(c, P) + (I - C J(X, P)) E; then for every p in P there is
    exactly one zero of f(., p) in X, and it lies in c + K. First-order form (sens = A, 1' in
    proofs/FORMAT.md): K = -C(p) f(c + A d, p) + (I - C(p) J(X_d, p)) E for every p,
    X_d = X + A d, C(p) = C + sum_l S_l d_l (slopes S_l, zero when absent).
    Returns the enclosure of the zeros over P, J_g, and the arithmetic J_g is written in.
    """
    for j, ((lo, hi), c) in enumerate(zip(box, centre)):
        if not lo <= c <= hi:
            raise CertificateRejected("krawczyk", f"{where}.centre[{j}]", "found a centre "
                                      "outside the box")
    try:
        if sens is None:
            image, jac = krawczyk_image(ctx, ar, pbox, centre, box, precond)
            image = [tuple(v - c for v in _bounds(ar, k, where)) for k, c in zip(image, centre)]
            inertia_ar = ar
        else:
            image, _, jac, inertia_ar = branch_krawczyk(ctx, ar, pbox, centre, box, sens,
                                                        precond, slopes)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    enclosure = []
    for j, ((k_lo, k_hi), (lo, hi), c) in enumerate(zip(image, box, centre)):
        if not (lo - c < k_lo and k_hi < hi - c):
            raise CertificateRejected("krawczyk", f"{where}.box[{j}]", "found K = "
                                      f"[{_approx(c + k_lo)}, {_approx(c + k_hi)}], expected a "
                                      "subset of the interior of the box")
        spread = sum(abs(a) * (p_hi - p_lo) / 2 for a, (p_lo, p_hi) in
                     zip(sens[j], pbox)) if sens else 0
        enclosure.append((c - spread + k_lo, c + spread + k_hi))
    return enclosure, jac, inertia_ar


def _approx(q: Fraction) -> str:
    """Return a short decimal rendering of q for a message (never used to decide)."""
    try:
        return f"{float(q):.17g}"
    except OverflowError:
        return ("-" if q < 0 else "") + "huge"


def _bounds(ar, x, where: str) -> Bounds:
    try:
        return ar.bounds(x)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None


def check_inertia(ctx: Problem, ar, jac, s, stable: int, where: str) -> None:
    """Obligations 2 and 3: a definite Lyapunov (flows) or Stein (maps) form over J(X, P).

    Flows: M = -(J^T S + S J) positive definite for every J in the family means no eigenvalue on
    the imaginary axis, and as many eigenvalues with Re < 0 as S has positive eigenvalues
    (Ostrowski & Schneider 1962; Taussky 1961). Maps: M = S - J^T S J positive definite means no
    eigenvalue of modulus 1, and as many inside the unit circle as S has positive eigenvalues
    (the Stein form of the same theorem).
    """
    n = len(s)
    if any(s[i][j] != s[j][i] for i in range(n) for j in range(i)):
        raise CertificateRejected("inertia", f"{where}.inertia_matrix", "found a matrix that "
                                  "is not symmetric")
    sa = [[ar.const(q) for q in row] for row in s]
    sj = [[sum((sa[i][t] * jac[t][j] for t in range(n)), ar.const(Fraction(0)))
           for j in range(n)] for i in range(n)]
    if ctx.kind == "flow":
        m = [[-(sj[i][j] + sj[j][i]) for j in range(n)] for i in range(n)]
    else:
        m = [[sa[i][j] - sum((jac[t][i] * sj[t][j] for t in range(n)), ar.const(Fraction(0)))
              for j in range(n)] for i in range(n)]
    if isinstance(ar, AffineArithmetic):
        families = vertex_matrices(ar, m)
    else:
        lo = [[Fraction(0)] * n for _ in range(n)]
        hi = [[Fraction(0)] * n for _ in range(n)]
        for i in range(n):
            for j in range(i, n):
                lo[i][j], hi[i][j] = _bounds(ar, m[i][j], where)
        families = [(lo, hi)]
    try:
        definite = all(exact.interval_positive_definite(lo, hi) for lo, hi in families)
        counts = exact.inertia(s) if definite else None
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    except BudgetError as exc:
        raise CertificateRejected("budget", f"{where}.inertia_matrix", str(exc)) from None
    if not definite:
        form = "-(J^T S + S J)" if ctx.kind == "flow" else "S - J^T S J"
        raise CertificateRejected("not-definite", f"{where}.inertia_matrix",
                                  f"could not prove {form} positive definite over J(X, P)")
    if counts is None or counts[0] != stable:
        found = "undetermined" if counts is None else f"{counts[0]} positive eigenvalues"
        raise CertificateRejected("inertia", f"{where}.inertia_matrix", f"found {found}, "
                                  f"expected {stable} (the claimed stable dimension)")


def _check_not_hyperbolic(ctx: Problem, point: list[Fraction]) -> str:
    """Obligation 4: an exact zero whose exact Jacobian has an eigenvalue on the axis (circle)."""
    ar = ExactArithmetic()
    for p, (lo, hi) in ctx.pbox.items():
        if lo != hi:
            raise CertificateRejected("not-exact", f"model.parameters.{p}", "found an interval, "
                                      "expected an exact value")
    params = [ctx.pbox[p][0] for p in ctx.params]
    if exact_size_bound(ctx.tape, point, params, ctx.period, MAX_EXACT_BITS) > MAX_EXACT_BITS:
        raise CertificateRejected("budget", "claim.point", "found an exact evaluation that "
                                  f"may need numbers of more than {MAX_EXACT_BITS} bits")
    try:
        g, jac = evaluate(ctx.tape, ar, point, params, ctx.period)
    except DomainError as exc:
        raise CertificateRejected("not-exact", "claim.point", str(exc)) from None
    residual = [gi - (xi if ctx.kind == "map" else 0) for gi, xi in zip(g, point)]
    if any(r != 0 for r in residual):
        raise CertificateRejected("not-zero", "claim.point", "found f(point) != 0, "
                                  "expected an exact equilibrium")
    try:
        poly = exact.charpoly(jac)
    except BudgetError as exc:
        raise CertificateRejected("budget", "claim.point", str(exc)) from None
    found = (exact.imaginary_axis_root if ctx.kind == "flow" else exact.unit_circle_root)(poly)
    if found is None:
        axis = "imaginary axis" if ctx.kind == "flow" else "unit circle"
        raise CertificateRejected("hyperbolic", "claim", f"found no eigenvalue on the {axis}")
    return found


def _check_tiling(outer: Box, boxes: list[Box]) -> None:
    """The pieces cover the parameter box: inside it, interiors disjoint, volumes adding up.

    Closed boxes inside P with pairwise disjoint interiors and total volume vol(P) cover P: the
    uncovered rest would be relatively open in P with measure zero, hence empty. Directions in
    which P is a point are compared for equality.
    """
    wide = [k for k, (lo, hi) in enumerate(outer) if hi > lo]
    for i, b in enumerate(boxes):
        for k, (lo, hi) in enumerate(outer):
            if k not in wide and b[k] != (lo, hi):
                raise CertificateRejected("tiling", f"pieces[{i}].parameters", "found a point "
                                          "parameter that differs from the model's")
    if not wide:
        return

    def volume(b: Box) -> Fraction:
        v = Fraction(1)
        for k in wide:
            v *= b[k][1] - b[k][0]
        return v

    if sum(volume(b) for b in boxes) != volume(outer):
        raise CertificateRejected("tiling", "pieces", "found pieces whose volumes do not add "
                                  "up to the parameter box")
    order = sorted(range(len(boxes)), key=lambda i: boxes[i][wide[0]][0])
    for a_pos, a in enumerate(order):
        a_hi = boxes[a][wide[0]][1]
        for b in order[a_pos + 1:]:
            if boxes[b][wide[0]][0] >= a_hi:
                break
            if all(boxes[a][k][0] < boxes[b][k][1] and boxes[b][k][0] < boxes[a][k][1]
                   for k in wide):
                raise CertificateRejected("tiling", f"pieces[{b}].parameters",
                                          f"found a piece overlapping pieces[{a}]")
