"""Every refusal path of the trusted kernel, one by one (the branch-coverage gate's tests)."""

from __future__ import annotations

import copy
import json
from fractions import Fraction as F
from pathlib import Path

import pytest
from flint import arb

from certify.check import CertificateRejected, check, load
from certify.check import enclosure, reader, tiling
from certify.check import exact
from certify.check.ad import evaluate
from certify.check.arith import ArbArithmetic, BudgetError, DomainError, ExactArithmetic
from certify.check.dyadic import DyadicArithmetic
from certify.check.expr import ExpressionError, Tape, parse_expression
from certify.model.numbers import parse_rational

VALID = Path(__file__).resolve().parent.parent / "proofs" / "valid"
SADDLE = json.loads((VALID / "chemostat-2.cert.json").read_text())
ARITHMETICS = [ArbArithmetic(53), DyadicArithmetic(53)]


def _eval(text, lo, hi, ar, names=("x",)):
    tape = Tape([parse_expression(text, set(names))], list(names), [])
    with ar.active():
        vals, jac = evaluate(tape, ar, [ar.interval(F(lo), F(hi))], [])
        return ar.bounds(vals[0]), ar.bounds(jac[0][0])


@pytest.mark.parametrize("ar", ARITHMETICS, ids=lambda a: a.name)
def test_general_powers_and_their_derivatives(ar):
    (lo, hi), (dlo, dhi) = _eval("x**(1/2)", 4, 4, ar)
    assert lo <= 2 <= hi and dlo <= F(1, 4) <= dhi
    (lo, hi), (dlo, dhi) = _eval("x**x", 2, 2, ar)  # d/dx x^x = x^x (log x + 1)
    assert lo <= 4 <= hi and dlo <= F(677259, 10**5) and dhi >= F(677258, 10**5)  # 6.772588...
    (lo, hi), _ = _eval("x**(-2)", 2, 2, ar)
    assert lo <= F(1, 4) <= hi
    (lo, hi), _ = _eval("x**0 + 0*x", -1, 1, ar)
    assert lo <= 1 <= hi
    with pytest.raises(DomainError, match="non-integer power"):
        _eval("x**(1/2)", -1, 4, ar)
    with pytest.raises(DomainError, match="not differentiable"):
        _eval("sqrt(x)", 0, 1, ar)
    (lo, hi), (dlo, dhi) = _eval("tan(x)", 0, 0, ar)  # tan' = 1 + tan^2
    assert lo <= 0 <= hi and dlo <= 1 <= dhi


@pytest.mark.parametrize("ar", ARITHMETICS, ids=lambda a: a.name)
def test_domain_refusals(ar):
    for text, lo, hi in [("log(x)", -1, 1), ("sqrt(x)", -1, 1), ("tan(x)", 1, 2),
                         ("1/x", -1, 1), ("x**(-1)", -1, 1)]:
        with pytest.raises(DomainError):
            _eval(text, lo, hi, ar)


def test_dyadic_edges():
    ar = DyadicArithmetic(53)
    with pytest.raises(DomainError):
        ar.call("exp", ar.const(F(2**22)), "exp")
    with pytest.raises(DomainError):
        ar.call("cos", ar.const(F(2**22)), "cos")
    lo, hi = ar.bounds(ar.call("cos", ar.interval(F(0), F(10)), "cos"))
    assert lo <= -1 and hi >= 1
    lo, hi = ar.bounds(ar.call("tanh", ar.const(F(5000)), "tanh"))
    assert lo < 1 <= hi and 1 - lo < F(1, 2**50)
    lo, hi = ar.bounds(ar.call("tanh", ar.const(F(-5000)), "tanh"))
    assert lo <= -1 < hi
    assert ar.bounds(ar.call("sqrt", ar.const(F(0)), "sqrt")) == (0, 0)
    lo, hi = ar.bounds(ar.ipow(ar.const(F(2)), -2))
    assert lo <= F(1, 4) <= hi
    assert ar.bounds(ar.ipow(ar.interval(F(-3), F(2)), 0)) == (1, 1)
    lo, hi = ar.bounds(ar.call("cosh", ar.interval(F(-1), F(2)), "cosh"))
    assert lo <= 1 and hi >= F(3762, 1000)


def test_arb_refuses_non_finite_values():
    ar = ArbArithmetic(53)
    with pytest.raises(DomainError):
        ar.bounds(arb("nan"))
    with pytest.raises(DomainError):
        ar.finite(arb("nan"), "x")
    with pytest.raises(CertificateRejected) as info:
        enclosure.bounds(ar, arb("nan"), "here")
    assert info.value.code == "domain"


def test_exact_arithmetic():
    ar = ExactArithmetic()
    assert ar.positive(F(1)) and not ar.positive(F(0))
    with pytest.raises(DomainError):
        ar.div(F(1), F(0))
    with pytest.raises(DomainError):
        ar.ipow(F(0), -1)
    assert ar.exact_integer(F(3)) == 3 and ar.exact_integer(F(1, 2)) is None


def test_exact_layer_pivots_and_repeated_roots():
    assert not exact.positive_definite_integers([[0, 1], [1, 0]])  # a zero first pivot
    assert not exact.positive_definite_integers([[2, 1, 0], [1, 2, 3], [0, 3, 1]])  # 2 3 -13
    assert exact.positive_definite_integers([[2, 1, 0], [1, 2, 1], [0, 1, 2]])
    assert exact.has_positive_root([F(1), F(-2), F(1)])  # (s - 1)^2: Sturm ends early


def test_expression_edges():
    with pytest.raises(ExpressionError, match="must be a string"):
        parse_expression(3, {"x"})
    with pytest.raises(ExpressionError, match="at most 20000"):
        parse_expression("x+" * 10001 + "x", {"x"})
    with pytest.raises(ExpressionError, match="nesting deeper"):
        parse_expression("-" * 350 + "x", {"x"})
    with pytest.raises(ExpressionError, match="called with one argument"):
        parse_expression("exp + 1", {"x"})
    with pytest.raises(ExpressionError, match="as text"):
        parse_rational(3)
    with pytest.raises(ExpressionError, match="U\\+000A at column 5|'U\\+000A' at column 5"):
        parse_expression("(x +\n 2)", {"x"})
    with pytest.raises(ExpressionError, match="comments"):
        parse_expression("x + 2 # 1", {"x"})


def _mutated(change):
    doc = copy.deepcopy(SADDLE)
    change(doc)
    return doc


@pytest.mark.parametrize("change, code", [
    (lambda d: d["pieces"][0]["centre"].__setitem__(0, "1/0"), "malformed"),
    (lambda d: d.__setitem__("model", []), "malformed"),
    (lambda d: d["model"].__setitem__("kind", "ode"), "malformed"),
    (lambda d: d["model"].__setitem__("parameters", []), "malformed"),
    (lambda d: d["model"]["parameters"].__setitem__("1a", ["1", "1"]), "malformed"),
    (lambda d: d["model"]["parameters"].__setitem__("u", ["1", "1"]), "model"),
    (lambda d: d["claim"].update(stable_dimension=2, unstable_dimension=1), "inertia"),
    (lambda d: d["claim"].__setitem__("verdict", "stable"), "malformed"),
    (lambda d: d.__setitem__("period", 2), "malformed"),
    (lambda d: d.__setitem__("format", "other"), "version"),
    (lambda d: d["pieces"][0]["box"].__setitem__(0, ["2", "1"]), "malformed"),
    (lambda d: d["pieces"][0]["parameters"].__setitem__("a", ["3", "3"]), "tiling"),
    (lambda d: d["pieces"][0].__setitem__("inertia_factor", [["0", "0"], ["0", "0"]]),
     "not-definite"),
    (lambda d: d["pieces"][0].__setitem__("definiteness_shift", "1"), "malformed"),
    (lambda d: d.__setitem__("region", {"junk": 1}), "malformed"),
    (lambda d: d.__setitem__("note", "trust me"), "malformed"),
    (lambda d: d.__setitem__("tool", 7), "malformed"),
    (lambda d: d.update(claim={"verdict": "not hyperbolic", "point": ["1", "1"]}), "malformed"),
])
def test_certificate_refusals(change, code):
    with pytest.raises(CertificateRejected) as info:
        check(_mutated(change))
    assert info.value.code == code


def test_reader_refusals():
    for text in ["[1, 2]", "x" * (reader.MAX_BYTES + 1), '{"a": 1, "b": 2, "a": 3}']:
        with pytest.raises(CertificateRejected):
            load(text)
    with pytest.raises(CertificateRejected) as info:
        check(SADDLE, "quantum")
    assert info.value.code == "malformed"


def test_tiling_of_a_two_parameter_box():
    outer = [(F(0), F(2)), (F(0), F(1)), (F(5), F(5))]
    halves = [[(F(0), F(1)), (F(0), F(1)), (F(5), F(5))], [(F(1), F(2)), (F(0), F(1)),
                                                             (F(5), F(5))]]
    tiling.check_tiling(outer, halves)
    with pytest.raises(CertificateRejected):  # overlap with the right total volume
        tiling.check_tiling(outer, [halves[0], halves[0], ])
    with pytest.raises(CertificateRejected):  # an overlapping pair hiding a gap
        tiling.check_tiling(outer, [[(F(0), F(1)), (F(0), F(1)), (F(5), F(5))],
                                          [(F(1, 2), F(3, 2)), (F(0), F(1)), (F(5), F(5))],
                                          [(F(3, 2), F(2)), (F(0), F(1)), (F(5), F(5))],
                                          [(F(0), F(1, 2)), (F(0), F(0)), (F(5), F(5))]])
    with pytest.raises(CertificateRejected):  # a point parameter that differs
        tiling.check_tiling(outer, [[(F(0), F(2)), (F(0), F(1)), (F(4), F(4))]])


def test_exact_definiteness_over_its_size_bound_is_refused():
    # At 8,000 bits the integers of the exact test (about 3 x 8,064 bits for two variables) are
    # over the elimination bound: refused as a budget, never computed.
    with pytest.raises(CertificateRejected) as info:
        check(_mutated(lambda d: d.__setitem__("precision", 8000)))
    assert info.value.code == "budget" and "inertia_factor" in info.value.where


def test_a_hand_made_inertia_factor_is_accepted():
    # For the chemostat saddle, J ~ [[-1, -c], [-c, -1]] with c > 1. F = [[1, 1], [1, -1]] with
    # D = diag(1, -1) gives S = F D F^T = [[0, 2], [2, 0]] and -(J^T S + S J) = 4 [[c, 1],
    # [1, c]], positive definite: one stable direction (computed by hand).
    doc = _mutated(lambda d: d["pieces"][0].__setitem__("inertia_factor", [["1", "1"],
                                                                            ["1", "-1"]]))
    assert check(doc).claim["stable_dimension"] == 1
    doc = _mutated(lambda d: d["pieces"][0].__setitem__("inertia_factor", [["1", "1"],
                                                                            ["-1", "1"]]))
    with pytest.raises(CertificateRejected) as info:  # S = [[0, -2], [-2, 0]]: the form is -M
        check(doc)
    assert info.value.code == "not-definite"


@pytest.mark.parametrize("ar", ARITHMETICS, ids=lambda a: a.name)
@pytest.mark.parametrize("fname", ["exp", "log", "sqrt", "sin", "cos", "tan", "tanh", "sinh",
                                   "cosh", "atan"])
def test_every_function_derivative_against_mpmath(ar, fname):
    import mpmath

    mpmath.mp.dps = 40
    x0 = F(3, 10)
    (lo, hi), (dlo, dhi) = _eval(f"{fname}(x)", x0, x0, ar)
    f = getattr(mpmath, fname)
    value, slope = f(mpmath.mpf(3) / 10), mpmath.diff(f, mpmath.mpf(3) / 10)
    assert mpmath.mpf(lo.numerator) / lo.denominator <= value <= \
        mpmath.mpf(hi.numerator) / hi.denominator
    assert mpmath.mpf(dlo.numerator) / dlo.denominator <= slope <= \
        mpmath.mpf(dhi.numerator) / dhi.denominator


def test_tiling_by_quarters():
    outer = [(F(0), F(2)), (F(0), F(2))]
    quarters = [[(F(a), F(a + 1)), (F(b), F(b + 1))] for a in (0, 1) for b in (0, 1)]
    tiling.check_tiling(outer, quarters)


def test_a_huge_box_end_is_reported_not_crashed():
    # Found by tests/fuzz.py: a box end of about 2.4e30 overflowed the float in the message.
    doc = _mutated(lambda d: d["pieces"][0]["box"][0].__setitem__(1, "10" + "0" * 400))
    with pytest.raises(CertificateRejected) as info:
        check(doc)
    assert info.value.code in ("krawczyk", "domain")
    assert reader.approx(F(10) ** 400) == "huge"
    assert reader.approx(-F(10) ** 400) == "-huge"


def test_dyadic_special_arguments():
    import mpmath

    mpmath.mp.dps = 40
    ar = DyadicArithmetic(53)
    for fname, x in [("exp", F(0)), ("atan", F(0)), ("atan", F(7)), ("atan", F(-7)),
                     ("sinh", F(1, 100)), ("tanh", F(1, 100)), ("tanh", F(3))]:
        lo, hi = ar.bounds(ar.call(fname, ar.const(x), fname))
        v = getattr(mpmath, fname)(mpmath.mpf(x.numerator) / x.denominator)
        assert mpmath.mpf(lo.numerator) / lo.denominator <= v <= \
            mpmath.mpf(hi.numerator) / hi.denominator, (fname, x)
    big, tiny = ar.const(F(10**30)), ar.const(F(1, 10**30))
    lo, hi = ar.bounds(tiny - big)  # the negligible term on both sides of both ends
    assert lo <= F(1, 10**30) - 10**30 <= hi


def test_exact_division_and_interval_parameters_in_a_not_hyperbolic_claim():
    assert ExactArithmetic().div(F(1), F(4)) == F(1, 4)
    doc = json.loads((VALID / "brusselator-hopf-1.cert.json").read_text())
    doc["model"]["parameters"]["b"] = ["2", "21/10"]
    with pytest.raises(CertificateRejected) as info:
        check(doc)
    assert info.value.code == "not-exact"


def test_exact_size_bounds_refuse_before_computing():
    doc = json.loads((VALID / "brusselator-hopf-1.cert.json").read_text())
    big = "7" * 3000  # about 10,000 bits: within the evaluation bound, over the polynomial's
    doc["model"]["parameters"]["a"] = [big, big]
    doc["model"]["equations"] = {"x": "a*x - a", "y": "-y*(x - 1)"}
    doc["claim"]["point"] = ["1", "0"]
    with pytest.raises(CertificateRejected, match="common denominator|matrix with") as info:
        check(doc)
    assert info.value.code == "budget"
    doc["model"]["equations"] = {"x": "a*x - a + 0*(x*a/(1 + x**2 + a))**900", "y": "y"}
    with pytest.raises(CertificateRejected, match="more than 65536 bits"):
        check(doc)
    assert exact.positive_definite_integers([[3**20_000]])  # 31,700 bits: within the bound
    with pytest.raises(BudgetError, match="matrix with"):
        exact.positive_definite_integers([[3**30_000]])
    with pytest.raises(BudgetError, match="common denominator"):
        exact.charpoly([[F(1, 3**3_000)]])


# ------------------------------------------------------------------ count certificates


@pytest.fixture(scope="module")
def circle_count():
    from certify import make_model
    from certify.api import scan

    m = make_model(["x", "y"], ["x**2 + y**2 - 4", "x*y - 1"], {},
                   region={"x": ["-3", "3"], "y": ["-3", "3"]})
    cert = scan(m).certificate
    assert cert is not None
    return cert


def _leaves(node, path=()):
    if "split" in node:
        yield from _leaves(node["low"], path + ("low",))
        yield from _leaves(node["high"], path + ("high",))
    else:
        yield path, node


def _replace_leaf(doc, kind, new):
    tree = doc["pieces"][0]["tree"]
    path, _ = next((p, n) for p, n in _leaves(tree) if kind in n)
    node = tree
    for key in path[:-1]:
        node = node[key]
    if path:
        node[path[-1]] = new(node[path[-1]])
    else:
        doc["pieces"][0]["tree"] = new(tree)


def _count_code(doc):
    with pytest.raises(CertificateRejected) as info:
        check(doc)
    return info.value.code


def test_count_refusals(circle_count, monkeypatch):
    from certify.check import count

    base = circle_count
    zero0 = base["pieces"][0]["zeros"][0]
    cases = []
    d = copy.deepcopy(base)
    d["pieces"] = []
    cases.append((d, "malformed"))
    d = copy.deepcopy(base)
    c = d["pieces"][0]["zeros"][0]["classification"]
    c.update(centre=zero0["centre"], preconditioner=zero0["preconditioner"],
             box=[[lo, str(F(hi) + F(1, 2**200))] for lo, hi in zero0["box"]])
    cases.append((d, "count"))  # a classification box reaching outside the uniqueness box
    d = copy.deepcopy(base)
    d["region"]["x"] = [d["region"]["x"][0], zero0["centre"][0]]
    cases.append((d, "on-boundary"))
    d = copy.deepcopy(base)
    d["pieces"][0]["zeros"].append(copy.deepcopy(zero0))
    cases.append((d, "count"))
    d = copy.deepcopy(base)
    d["pieces"][0]["tree"]["at"] = d["region"]["x"][0]
    cases.append((d, "tiling"))
    d = copy.deepcopy(base)
    _replace_leaf(d, "exclude", lambda leaf: {"zero": 0})
    cases.append((d, "count"))
    d = copy.deepcopy(base)
    _replace_leaf(d, "exclude", lambda leaf: [leaf])
    cases.append((d, "malformed"))  # a leaf that is not an object
    d = copy.deepcopy(base)
    _replace_leaf(d, "zero", lambda leaf: {**leaf, "junk": 1})
    cases.append((d, "malformed"))  # a leaf with an extra key
    d = copy.deepcopy(base)
    _replace_leaf(d, "zero", lambda leaf: {"exclude": 0})
    cases.append((d, "count"))
    d = copy.deepcopy(base)
    _replace_leaf(d, "empty", lambda leaf: {"empty": {**leaf["empty"], "centre": ["9", "9"]}})
    cases.append((d, "count"))
    d = copy.deepcopy(base)
    _replace_leaf(d, "empty", lambda leaf: {"empty": {**leaf["empty"], "preconditioner": [
        ["0", "0"], ["0", "0"]]}})
    cases.append((d, "count"))
    for doc, code in cases:
        got = _count_code(doc)
        assert code is None or got == code, (code, got)
    monkeypatch.setattr(count, "MAX_DEPTH", 1)
    assert _count_code(copy.deepcopy(base)) == "malformed"
    monkeypatch.setattr(count, "MAX_ZEROS", 1)
    assert _count_code(copy.deepcopy(base)) == "malformed"


def test_count_with_an_unclassified_zero(circle_count):
    d = copy.deepcopy(circle_count)
    zero = d["pieces"][0]["zeros"][0]
    dim = zero.pop("classification")["stable_dimension"]
    dims = list(d["claim"]["stable_dimensions"])
    dims.remove(dim)
    d["claim"]["stable_dimensions"] = dims + [None]
    assert check(d).claim["stable_dimensions"] == dims + [None]


def test_count_pieces_and_domain():
    from certify.check.reader import FORMAT

    def doc(rhs, region, mu=("1", "1"), piece_mu=None):
        return {"format": FORMAT, "version": 2, "precision": 53,
                "model": {"kind": "flow", "variables": ["x"], "parameters": {"mu": list(mu)},
                          "equations": {"x": rhs}},
                "claim": {"verdict": "count", "count": 0, "stable_dimensions": []},
                "region": {"x": region},
                "pieces": [{"parameters": {"mu": list(piece_mu or mu)}, "zeros": [],
                            "tree": {"exclude": 0}}]}

    assert check(doc("log(x + 2) + 5*mu", ["-1", "1"])).claim["count"] == 0
    assert _count_code(doc("log(x + 2) + 5*mu", ["-3", "1"])) == "domain"
    assert _count_code(doc("x + 5*mu", ["-1", "1"], ("1", "2"), ("0", "2"))) == "tiling"


def test_count_zero_limit(monkeypatch):
    from certify.check import count

    base = json.loads(json.dumps({"format": "certify-certificate", "version": 2,
                                  "precision": 53, "model": {
                                      "kind": "flow", "variables": ["x"], "parameters": {},
                                      "equations": {"x": "x + 5"}},
                                  "claim": {"verdict": "count", "count": 0,
                                            "stable_dimensions": []},
                                  "region": {"x": ["-1", "1"]},
                                  "pieces": [{"parameters": {}, "zeros": [{}, {}],
                                              "tree": {"exclude": 0}}]}))
    monkeypatch.setattr(count, "MAX_ZEROS", 1)
    assert _count_code(base) == "malformed"
