"""First-order parameter forms: wide parameter boxes in one piece, never across a bifurcation."""

from __future__ import annotations

import copy
from fractions import Fraction as F

import mpmath
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from certify import CertificateRejected, equilibrium, make_model, verify
from certify.check.ad import evaluate
from certify.check.forms import FormArithmetic
from certify.check.arith import ArbArithmetic, DomainError
from certify.check.dyadic import DyadicArithmetic
from certify.check.expr import Tape, parse_expression

from .published import brusselator_model, logistic_model, lorenz_c_plus, lorenz_model


lorenz = lorenz_model  # Lorenz 1963: Hopf at rho_H = 470/19 for sigma = 10, beta = 8/3


def test_lorenz_c_plus_in_one_piece_on_both_sides_of_the_hopf_value():
    up = equilibrium(lorenz(["27", "29"]), [{"x": 8, "y": 8, "z": 27}])[0]
    assert (up.verdict, up.unstable_dimension, up.pieces) == ("hyperbolic", 2, 1)
    assert "sensitivity" in up.certificate["pieces"][0]
    down = equilibrium(lorenz(["21", "23"]), [{"x": 7, "y": 7, "z": 21}])[0]
    assert (down.verdict, down.type, down.pieces) == ("hyperbolic", "sink", 1)
    for r in (up, down):
        assert verify(r.certificate, "both").claim == r.certificate["claim"]
    # the branch C+ = (sqrt(beta (rho - 1)), ., rho - 1) lies in the reported enclosure
    lo, hi = (mpmath.mpf(q.numerator) / q.denominator for q in up.enclosure["x"])
    assert lo <= lorenz_c_plus(27)[0] and lorenz_c_plus(29)[0] <= hi


def test_lorenz_box_containing_the_hopf_value_is_never_certified():
    r = equilibrium(lorenz(["24.7", "24.8"]), [{"x": 8, "y": 8, "z": 24}])[0]
    assert r.verdict != "hyperbolic"


brusselator = brusselator_model  # Prigogine & Lefever 1968: Hopf at b = 1 + a^2


@pytest.mark.parametrize("a, b, kind", [(["1", "1.1"], ["1.2", "1.5"], "sink"),
                                        (["1", "1.1"], ["2.5", "3"], "source")])
def test_brusselator_boxes_either_side_of_the_hopf_curve(a, b, kind):
    # Computed by hand from the trace b - 1 - a^2 at (a, b/a) (Prigogine & Lefever 1968): <= -0.5
    # on the first box, >= 0.29 on the second.
    r = equilibrium(brusselator(a, b), [{"x": 1.05, "y": 1.5}])[0]
    assert r.verdict == "hyperbolic" and r.type == kind


def test_brusselator_box_across_the_hopf_curve_is_never_certified():
    r = equilibrium(brusselator(["0.9", "1.1"], ["1.9", "2.1"]), [{"x": 1, "y": 2}])[0]
    assert r.verdict != "hyperbolic"


@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.fractions(min_value=F(1, 100), max_value=1, max_denominator=100),
       st.fractions(min_value=F(1, 100), max_value=1, max_denominator=100))
def test_saddle_node_boxes_containing_zero_are_never_certified(below, above):
    # x' = mu - x^2: the zero +sqrt(mu) disappears at mu = 0 (common practice).
    m = make_model(["x"], ["mu - x**2"], {"mu": [str(-below), str(above)]})
    r = equilibrium(m, [{"x": 0.5}], max_precision=53)[0]
    assert r.verdict != "hyperbolic"


@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
@given(st.fractions(min_value=-1, max_value=1, max_denominator=8),
       st.fractions(min_value=F(1, 16), max_value=1, max_denominator=16))
def test_linear_family_crossing_at_a_known_mu(centre, half):
    # x' = A(mu) x with A(mu) = V diag(mu, -1) V^-1, V = [[2, 1], [1, 1]]: the eigenvalue mu
    # crosses the axis at mu = 0 exactly; a box containing 0 is never certified, and a certified
    # box has unstable dimension 1 when mu > 0 there and 0 when mu < 0.
    lo, hi = centre - half, centre + half
    m = make_model(["x", "y"], ["(2*mu + 1)*x + (-2*mu - 2)*y", "(mu + 1)*x + (-mu - 2)*y"],
                   {"mu": [str(lo), str(hi)]})
    r = equilibrium(m, [{"x": 0.1, "y": 0.1}], max_precision=53)[0]
    if lo <= 0 <= hi:
        assert r.verdict != "hyperbolic"
    elif r.verdict == "hyperbolic":
        assert r.unstable_dimension == (1 if lo > 0 else 0)


def test_altered_sensitivity_or_remainder_is_rejected():
    r = equilibrium(lorenz(["27", "29"]), [{"x": 8, "y": 8, "z": 27}])[0]
    bad = copy.deepcopy(r.certificate)
    bad["pieces"][0]["sensitivity"] = [[str(-5 * F(v)) for v in row] for row in
                                       r.certificate["pieces"][0]["sensitivity"]]
    with pytest.raises(CertificateRejected):  # a branch running the wrong way
        verify(bad)
    bad = copy.deepcopy(r.certificate)
    c = F(bad["pieces"][0]["centre"][0])
    e = F(bad["pieces"][0]["box"][0][1]) - c
    bad["pieces"][0]["box"][0] = [str(c - e / 1000), str(c + e / 1000)]  # E shrunk 1000-fold
    with pytest.raises(CertificateRejected) as info:
        verify(bad)
    assert info.value.code == "krawczyk"


@pytest.mark.parametrize("base", [ArbArithmetic(60), DyadicArithmetic(60)], ids=["flint", "python"])
@pytest.mark.parametrize("text", ["exp(x*p)", "log(x + p)", "sqrt(x + p)", "sin(x*p)",
                                  "cos(x - p)", "tan(x*p/4)", "tanh(x*p)", "sinh(x - p)",
                                  "cosh(x*p)", "atan(x*p)", "x**3/p", "x**(-2)", "x**p",
                                  "p**0*x"])
def test_parameter_form_functions_contain_the_values_along_the_parameter(base, text):
    mpmath.mp.dps = 30
    tape = Tape([parse_expression(text, {"x", "p"})], ["x"], ["p"])
    ar = FormArithmetic(base, 1)
    with ar.active():
        x = ar.form(base.const(F(3, 2)), [base.const(F(1, 10))])  # x = 3/2 + e/10
        p = ar.form(base.const(F(2)), [base.const(F(1, 4))])      # p = 2 + e/4
        vals, jac = evaluate(tape, ar, [x], [p])
        v, dv = vals[0], jac[0][0]
        import sympy as sp
        xs, ps = sp.symbols("x p")
        from certify.model.symbolic import to_sympy
        expr = to_sympy(parse_expression(text, {"x", "p"}), {"x": xs, "p": ps})
        for e in (F(-1), F(-1, 3), F(0), F(1, 2), F(1)):
            point = {xs: sp.Rational(3, 2) + sp.Rational(e) / 10,
                     ps: 2 + sp.Rational(e) / 4}
            exact_v = mpmath.mpf(str(expr.evalf(30, subs=point)))
            exact_d = mpmath.mpf(str(sp.diff(expr, xs).evalf(30, subs=point)))
            for form, value in ((v, exact_v), (dv, exact_d)):
                at = form.c + form.r
                for d, q in zip(form.d, form.q):
                    at = at + d * base.const(e) + q * base.const(e * e)
                lo, hi = base.bounds(at)
                assert mpmath.mpf(lo.numerator) / lo.denominator - 1e-25 <= value
                assert value <= mpmath.mpf(hi.numerator) / hi.denominator + 1e-25


def test_parameter_form_domain_and_many_parameters():
    base = ArbArithmetic(53)
    ar = FormArithmetic(base, 1)
    x = ar.form(base.const(F(0)), [base.const(F(1))])  # x = e over [-1, 1]
    with pytest.raises(DomainError):
        ar.call("log", x, "log(x)")
    with pytest.raises(DomainError):
        ar.div(ar.const(F(1)), x)
    exact_base = DyadicArithmetic(53)  # exact ends: the range of 1 + e is exactly [0, 2]
    exact_ar = FormArithmetic(exact_base, 1)
    with pytest.raises(DomainError, match="not differentiable"):
        exact_ar.call("sqrt", exact_ar.form(exact_base.const(F(1)), [exact_base.const(F(1))]),
                      "sqrt(x)")
    assert ar.exact_integer(ar.const(F(3))) == 3 and ar.exact_integer(x) is None
    assert ar.positive(ar.const(F(1)))
    wide = FormArithmetic(base, 5)  # beyond MAX_VERTICES_PARAMETERS: the range is used
    entry = wide.form(base.const(F(3)), [base.const(F(1, 10))] * 5)
    families = list(wide.vertex_matrices([[entry]]))
    assert len(families) == 1 and families[0][0][0][0] <= F(5, 2)


def test_logistic_map_branch_over_a_parameter_box():
    # May 1976: the fixed point 1 - 1/r has multiplier 2 - r, attracting for 1 < r < 3.
    m = logistic_model(["2.4", "2.6"])
    res = equilibrium(m, [{"x": 0.6}])[0]
    assert (res.type, res.pieces) == ("attracting", 1)
    assert "sensitivity" in res.certificate["pieces"][0]


def test_branch_refusals():
    from certify.check import check
    from certify.check import inertia, reader
    from flint import arb

    r = equilibrium(lorenz(["27", "29"]), [{"x": 8, "y": 8, "z": 27}])[0]
    bad = copy.deepcopy(r.certificate)
    bad["pieces"][0]["centre"][0] = "100"
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "krawczyk"
    bad = copy.deepcopy(r.certificate)
    bad["model"]["equations"]["x"] = "sigma*(y - x) + 0*log(x - 9)"
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "domain"
    base = ArbArithmetic(53)
    aff = FormArithmetic(base, 1)
    nan = aff.form(arb("nan"), [base.const(F(0))])
    problem = reader.Problem(None, "flow", 1, [], {})
    with pytest.raises(CertificateRejected) as info:
        inertia.check_inertia(problem, aff, [[nan]], reader.ZeroHint(
            [], [], [], None, None, inertia_factor=[[F(1)]]), 1, "here")
    assert info.value.code == "domain"
