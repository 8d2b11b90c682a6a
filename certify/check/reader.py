"""The strict reader: certificate JSON into typed records, every size bounded before use.

Unknown, missing or repeated keys are rejected, every exact number is read from its own text,
and the bounds of proofs/FORMAT.md ("Bounds") are checked before any arithmetic starts. The
checks of the obligations read only these records and the reader's field functions.
"""

from __future__ import annotations

import json
import re
from dataclasses import dataclass
from fractions import Fraction

from .ad import evaluate
from .expr import ExpressionError, Tape, parse_expression

Bounds = tuple[Fraction, Fraction]
Box = list[Bounds]
Matrix = list[list[Fraction]]

FORMAT = "certify-certificate"
VERSION = 2
VERDICTS = ("hyperbolic", "not hyperbolic", "count")
MAX_BYTES = 50_000_000
MAX_DIMENSION = 200
MAX_PIECES = 100_000
MAX_NUMBER_CHARS = 4000
MIN_PRECISION, MAX_PRECISION = 30, 100_000  # bits
MAX_PERIOD = 64
MAX_PRECISION_WORK = 40_000  # n x precision
MAX_FUNCTION_WORK = 2**28  # elementary calls x period x precision^2
BRANCH_KEYS = frozenset({"sensitivity", "preconditioner_slopes"})
DEFINITENESS_KEYS = frozenset({"definiteness_factor", "definiteness_shift"})
_RATIONAL = re.compile(r"-?[0-9]+(/[0-9]+)?\Z")
_NAME = re.compile(r"[A-Za-z_][A-Za-z0-9_]*\Z")


class CertificateRejected(Exception):
    """A certificate failed a check: a short code, the field where, and the reason."""

    def __init__(self, code: str, where: str, reason: str):
        self.code, self.where, self.reason = code, where, reason
        super().__init__(f"{code} at {where}: {reason}")


def reject_if(failed: bool, code: str, where: str, reason: str, *args) -> None:
    """Raise CertificateRejected(code, where, reason.format(*args)) when failed is true.

    The reason is formatted only on failure, so a check inside a loop costs its comparison only.
    """
    if failed:
        raise CertificateRejected(code, where, reason.format(*args))


def _unique_keys(pairs: list[tuple[str, object]]) -> dict:
    """Return the JSON object of the pairs, refusing a key written twice."""
    data = dict(pairs)
    if len(data) != len(pairs):
        seen = [k for i, (k, _) in enumerate(pairs) if k in dict(pairs[:i])]
        raise ValueError(f"the key {seen[0]!r} appears twice in one object")
    return data


def load(text: str | bytes) -> dict:
    """Return the parsed JSON object of a certificate, refusing oversized or deep files."""
    reject_if(len(text) > MAX_BYTES, "malformed", "file", "larger than {} bytes", MAX_BYTES)
    try:
        data = json.loads(text, object_pairs_hook=_unique_keys)
    except (ValueError, RecursionError) as exc:
        raise CertificateRejected("malformed", "file", f"not JSON ({str(exc)[:80]})") from None
    if not isinstance(data, dict):
        raise CertificateRejected("malformed", "file", "found a JSON value, expected an object")
    return data


# ---------------------------------------------------------------- fields


def rational(v, where: str) -> Fraction:
    """Return the exact rational written as "p", "-p" or "p/q"."""
    reject_if(isinstance(v, bool) or not isinstance(v, (str, int)), "malformed", where,
              'found {}, expected an exact number as a string "p" or "p/q"', type(v).__name__)
    text = str(v)
    if len(text) > MAX_NUMBER_CHARS or not _RATIONAL.match(text):
        raise CertificateRejected("malformed", where, f"found {text[:30]!r}, expected \"p/q\"")
    num, _, den = text.partition("/")
    reject_if(den and int(den) == 0, "malformed", where, "zero denominator")
    return Fraction(int(num), int(den or 1))


def items(v, n: int | None, where: str) -> list:
    """Return v, a list of n entries (any number when n is None)."""
    if not isinstance(v, list) or (n is not None and len(v) != n):
        want = f"a list of {n}" if n is not None else "a list"
        got = f"a list of {len(v)}" if isinstance(v, list) else type(v).__name__
        raise CertificateRejected("malformed", where, f"found {got}, expected {want}")
    return v


def keys(v, required: set[str], where: str, optional=frozenset()) -> dict:
    """Return v, an object with the required keys and no keys but the optional ones."""
    if not isinstance(v, dict):
        raise CertificateRejected("malformed", where, f"found {type(v).__name__}, expected object")
    missing, extra = required - v.keys(), v.keys() - required - optional
    if missing or extra:
        what = f"missing {sorted(missing)}" if missing else f"unknown {sorted(extra)}"
        raise CertificateRejected("malformed", where, f"found {what}, expected keys "
                                  f"{sorted(required)}")
    return v


def vector(v, n: int, where: str) -> list[Fraction]:
    """Return a list of n exact rationals."""
    return [rational(x, f"{where}[{i}]") for i, x in enumerate(items(v, n, where))]


def interval(v, where: str) -> Bounds:
    """Return [lo, hi] with lo <= hi."""
    lo, hi = vector(v, 2, where)
    reject_if(lo > hi, "malformed", where, "found [{}, {}], an empty interval", lo, hi)
    return lo, hi


def intervals(v, n: int, where: str) -> Box:
    """Return a list of n intervals."""
    return [interval(x, f"{where}[{i}]") for i, x in enumerate(items(v, n, where))]


def matrix(v, rows: int, where: str, columns: int | None = None) -> Matrix:
    """Return a rows x columns matrix (square by default) of exact rationals."""
    return [vector(row, rows if columns is None else columns, f"{where}[{i}]")
            for i, row in enumerate(items(v, rows, where))]


def integer(v, lo: int, hi: int, where: str) -> int:
    """Return v, a JSON integer in [lo, hi]."""
    reject_if(isinstance(v, bool) or not isinstance(v, int) or (not lo <= v <= hi), "malformed",
              where, "found {!r}, expected an integer in [{}, {}]", v, lo, hi)
    return v


def approx(q: Fraction) -> str:
    """Return a short decimal rendering of q for a message (never used to decide)."""
    try:
        return f"{float(q):.17g}"
    except OverflowError:
        return ("-" if q < 0 else "") + "huge"


# ---------------------------------------------------------------- records


@dataclass
class Problem:
    """The equations to check: the tape of g, flow or map, the period, the parameter box.

    f = g for a flow and f = g^k - id for a map of period k; J_g is kept for the inertia test.
    """

    tape: Tape
    kind: str
    period: int
    params: list[str]
    pbox: dict[str, Bounds]

    def residual(self, ar, x: list, p: list, jacobian: bool = True) -> tuple[list, list | None]:
        """Return f(x, p) and J_g(x, p) (None when not asked for) in the arithmetic ar."""
        g, jac = evaluate(self.tape, ar, x, p, self.period, jacobian)
        return ([gi - xi for gi, xi in zip(g, x)] if self.kind == "map" else g), jac

    def jacobian_f(self, ar, jac: list) -> list:
        """Return J_f from J_g: J_g - I for a map."""
        if self.kind == "flow":
            return jac
        one = ar.const(Fraction(1))
        return [[v - one if i == j else v for j, v in enumerate(row)] for i, row in
                enumerate(jac)]


@dataclass
class Certificate:
    """The header of a certificate: the problem, the precision, the claim, the raw file."""

    problem: Problem
    variables: list[str]
    precision: int
    claim: dict
    data: dict


@dataclass
class ZeroHint:
    """A box X = c + A (p - p_c) + E with its Krawczyk hints, and optionally its inertia hint.

    A (sensitivity) and the preconditioner slopes are None for a plain box; S and the stable
    dimension are None where the record carries no inertia claim.
    """

    centre: list[Fraction]
    box: Box
    preconditioner: Matrix
    sensitivity: Matrix | None
    slopes: list[Matrix] | None
    inertia_factor: Matrix | None = None
    stable_dimension: int | None = None
    definiteness_factor: Matrix | None = None  # lower triangular: row i has i + 1 entries
    definiteness_shift: Fraction | None = None


def read_certificate(data: dict) -> Certificate:
    """Return the header records, after the checks of the format, the model and the bounds."""
    keys(data, {"format", "version", "model", "claim", "precision"}, "certificate",
         {"tool", "period", "pieces", "region"})
    if not isinstance(data.get("tool", ""), str) or len(data.get("tool", "")) > 200:
        raise CertificateRejected("malformed", "tool", "expected a short text")
    for key, want in (("format", FORMAT), ("version", VERSION)):
        if type(data[key]) is not type(want) or data[key] != want:
            why = (": version 1 proved inertia from an exact matrix, which this checker no longer "
                   "reads; create the certificate again") if data[key] == 1 else ""
            raise CertificateRejected("version", key, f"found {data[key]!r}, expected "
                                      f"{want!r}{why}")
    problem, variables = _read_model(data["model"])
    period = integer(data.get("period", 1), 1, MAX_PERIOD, "period")
    reject_if(problem.kind == "flow" and period != 1, "malformed", "period", "a flow has no period")
    problem.period = period
    precision = integer(data["precision"], MIN_PRECISION, MAX_PRECISION, "precision")
    _check_budget(problem.tape, len(variables), period, precision)
    claim = data["claim"]
    reject_if(not isinstance(claim, dict) or claim.get("verdict") not in VERDICTS, "malformed",
              "claim.verdict", 'expected "hyperbolic", "not hyperbolic" or "count"')
    wanted = {"hyperbolic": {"pieces"}, "not hyperbolic": set(), "count": {"pieces", "region"}}
    extra = {"pieces", "region"} & data.keys() - wanted[claim["verdict"]]
    if extra:
        raise CertificateRejected("malformed", min(extra), f"found {min(extra)!r}, which a "
                                  f"{claim['verdict']!r} claim does not have")
    return Certificate(problem, variables, precision, claim, data)


def _read_model(model) -> tuple[Problem, list[str]]:
    """Return the problem of the model object (period 1) and its variables."""
    model = keys(model, {"kind", "variables", "parameters", "equations"}, "model", {"name"})
    if model["kind"] not in ("flow", "map"):
        raise CertificateRejected("malformed", "model.kind", f"found {model['kind']!r}")
    variables = items(model["variables"], None, "model.variables")
    n = len(variables)
    reject_if(not 1 <= n <= MAX_DIMENSION or len(set(map(str, variables))) != n, "malformed",
              "model.variables", "expected 1 to {} distinct names", MAX_DIMENSION)
    params = model["parameters"]
    if not isinstance(params, dict) or len(params) > 10 * MAX_DIMENSION:
        raise CertificateRejected("malformed", "model.parameters", "expected an object")
    names = [*variables, *params]
    for name in names:
        if not isinstance(name, str) or not _NAME.match(name):
            raise CertificateRejected("malformed", "model", f"found name {name!r}")
    reject_if(len(set(names)) != len(names), "model", "model.parameters",
              "a name is both a variable and a parameter")
    pbox = {p: interval(v, f"model.parameters.{p}") for p, v in params.items()}
    equations = keys(model["equations"], set(variables), "model.equations")
    trees = []
    for v in variables:
        try:
            trees.append(parse_expression(equations[v], frozenset(names)))
        except ExpressionError as exc:
            raise CertificateRejected("model", f"model.equations.{v}", str(exc)) from None
    tape = Tape(trees, variables, list(params))
    return Problem(tape, model["kind"], 1, list(params), pbox), variables


def _check_budget(tape: Tape, n: int, period: int, prec: int) -> None:
    """Refuse work whose size is over the bounds of proofs/FORMAT.md, before doing any."""
    if n * prec > MAX_PRECISION_WORK:
        raise CertificateRejected("budget", "precision", f"found {n} variables at {prec} bits, "
                                  f"expected n x precision <= {MAX_PRECISION_WORK}")
    calls = sum(1 if op == "call" else 2 for op, *_ in tape.code if op in ("call", "pow"))
    reject_if(calls * period * prec ** 2 > MAX_FUNCTION_WORK, "budget", "precision",
              "found {} function calls x period {} x {}^2 bits, expected at most {}", calls, period,
              prec, MAX_FUNCTION_WORK)


def read_zero(v, n: int, k: int, where: str, required=frozenset(), optional=frozenset(),
              inertia: bool = False) -> ZeroHint:
    """Return the hint record of a piece or a zero: centre, box, preconditioner, optional form.

    With inertia, the record also carries "inertia_factor", optionally the definiteness hint
    (and "stable_dimension" when it is in required). The keys of v must be these, the required
    ones and the optional ones.
    """
    base = {"centre", "box", "preconditioner"} | ({"inertia_factor"} if inertia else set())
    keys(v, base | set(required), where, BRANCH_KEYS | set(optional) |
         (DEFINITENESS_KEYS if inertia else set()))
    slopes = sens = None
    if "preconditioner_slopes" in v:
        reject_if("sensitivity" not in v, "malformed", f"{where}.preconditioner_slopes",
                  "found slopes without a sensitivity")
        slopes = [matrix(m, n, f"{where}.preconditioner_slopes[{a}]") for a, m in
                  enumerate(items(v["preconditioner_slopes"], k, f"{where}.preconditioner_slopes"))]
    if "sensitivity" in v:
        sens = matrix(v["sensitivity"], n, f"{where}.sensitivity", k)
    hint = ZeroHint(vector(v["centre"], n, f"{where}.centre"),
                    intervals(v["box"], n, f"{where}.box"),
                    matrix(v["preconditioner"], n, f"{where}.preconditioner"), sens, slopes)
    if inertia:
        hint.inertia_factor = matrix(v["inertia_factor"], n, f"{where}.inertia_factor")
        _read_definiteness(v, hint, n, where)
    if "stable_dimension" in v:
        hint.stable_dimension = integer(v["stable_dimension"], 0, n, f"{where}.stable_dimension")
    return hint


def _read_definiteness(v: dict, hint: ZeroHint, n: int, where: str) -> None:
    """Read the optional hint (L, c): both keys or neither, row i of L with i + 1 entries."""
    present = DEFINITENESS_KEYS & v.keys()
    if not present:
        return
    reject_if(present != DEFINITENESS_KEYS, "malformed", f"{where}.{min(present)}",
              "expected both definiteness_factor and definiteness_shift")
    rows = items(v["definiteness_factor"], n, f"{where}.definiteness_factor")
    hint.definiteness_factor = [vector(row, i + 1, f"{where}.definiteness_factor[{i}]")
                                for i, row in enumerate(rows)]
    hint.definiteness_shift = rational(v["definiteness_shift"], f"{where}.definiteness_shift")
    reject_if(hint.definiteness_shift <= 0, "malformed", f"{where}.definiteness_shift",
              "expected a shift > 0")
