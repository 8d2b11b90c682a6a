"""Certified verdicts against published check values (sources named beside each check)."""

from __future__ import annotations

from fractions import Fraction as F

import mpmath
import pytest

from certify import equilibrium, make_model, verify

from .published import (LOGISTIC_FLIP_R, LORENZ_HOPF_RHO, brusselator_equilibrium,
                        brusselator_model, logistic_fixed_point, logistic_model,
                        logistic_period_two, lorenz_c_plus, lorenz_c_plus_charpoly, lorenz_model,
                        lorenz_origin_eigenvalues)

mpmath.mp.dps = 50


lorenz = lorenz_model


def contains(bounds, value) -> bool:
    lo, hi = bounds
    if isinstance(value, F):
        value = mpmath.mpf(value.numerator) / value.denominator
    return mpmath.mpf(lo.numerator) / lo.denominator <= value <= \
        mpmath.mpf(hi.numerator) / hi.denominator


def only(results):
    assert len(results) == 1
    return results[0]


def test_lorenz_origin_and_c_plus_at_rho_28():
    # Lorenz 1963 (tests/published.py): the origin has -8/3 and (-11 +- sqrt(1201))/2
    # (unstable dimension 1); C+ = (6 sqrt 2, 6 sqrt 2, 27) has a real eigenvalue near -13.8546
    # and a pair with real part near +0.0940 (unstable dimension 2); mpmath at 50 digits.
    o, c = equilibrium(lorenz(28), [{"x": 0.1, "y": 0.1, "z": 0.1}, {"x": 8, "y": 8, "z": 27}])
    assert (o.verdict, o.type, o.unstable_dimension, o.stable_dimension) == \
        ("hyperbolic", "saddle", 1, 2)
    assert all(contains(o.enclosure[v], 0) for v in "xyz")
    exact_ev = lorenz_origin_eigenvalues(28)
    assert len(o.eigenvalues) == 3
    for e, v in zip(o.eigenvalues, exact_ev):
        assert contains(e["re"], v)
    assert (c.verdict, c.type, c.unstable_dimension) == ("hyperbolic", "saddle", 2)
    assert all(contains(c.enclosure[v], w) for v, w in zip("xyz", lorenz_c_plus(28)))
    # roots of l^3 + 41/3 l^2 + 304/3 l + 1440, the characteristic polynomial at C+
    roots = mpmath.polyroots([mpmath.mpf(q.numerator) / q.denominator
                              for q in lorenz_c_plus_charpoly(28)])
    real = [r for r in roots if abs(mpmath.im(r)) < 1e-30][0]
    pair = [r for r in roots if mpmath.im(r) > 0][0]
    assert contains(c.eigenvalues[0]["re"], mpmath.re(real))
    assert any(contains(e["re"], mpmath.re(pair)) and contains(e["im"], mpmath.im(pair))
               for e in c.eigenvalues)


def test_lorenz_parameter_boxes_and_the_hopf_value():
    # Hopf value rho_H = 470/19 (Lorenz 1963, tests/published.py). Below it C+ is a sink,
    # above it unstable dimension 2.
    sigma, beta = F(10), F(8, 3)
    assert LORENZ_HOPF_RHO.value == sigma * (sigma + beta + 3) / (sigma - beta - 1)
    c_plus = {"x": 7, "y": 7, "z": 21}
    sink = only(equilibrium(lorenz(["20", "24"]), [c_plus]))
    assert (sink.verdict, sink.type, sink.unstable_dimension) == ("hyperbolic", "sink", 0)
    assert sink.pieces >= 1
    up = only(equilibrium(lorenz(["25", "27"]), [{"x": 8, "y": 8, "z": 26}]))
    assert (up.verdict, up.unstable_dimension) == ("hyperbolic", 2)
    across = only(equilibrium(lorenz(["24.7", "24.8"]), [{"x": 8, "y": 8, "z": 24}]))
    assert across.verdict != "hyperbolic"
    at_hopf = only(equilibrium(lorenz(LORENZ_HOPF_RHO.value), [{"x": 8, "y": 8, "z": 24}]))
    assert at_hopf.verdict != "hyperbolic"


def test_lorenz_pitchfork_at_rho_1_is_proved_not_hyperbolic():
    # At rho = 1 the origin has eigenvalues 0, -11, -8/3 (Lorenz 1963): exactly zero.
    r = only(equilibrium(lorenz(1), [{"x": 0.01, "y": 0.01, "z": 0.01}]))
    assert r.verdict == "not hyperbolic"
    assert "zero" in r.message
    assert verify(r.certificate).claim["verdict"] == "not hyperbolic"


brusselator = brusselator_model  # Prigogine & Lefever 1968: equilibrium (a, b/a), Hopf b = 1 + a^2


@pytest.mark.parametrize("b, verdict, kind", [("3/2", "hyperbolic", "sink"),
                                               ("5/2", "hyperbolic", "source"),
                                               ("2", "not hyperbolic", None)])
def test_brusselator(b, verdict, kind):
    r = only(equilibrium(brusselator(1, b), [{"x": 1.1, "y": 1.9}]))
    assert r.verdict == verdict and r.type == kind
    if verdict == "not hyperbolic":
        assert "imaginary pair" in r.message  # eigenvalues +-i at (1, 2)
    else:
        x, y = brusselator_equilibrium(1, b)
        assert contains(r.enclosure["x"], x) and contains(r.enclosure["y"], y)


def test_saddle_node_normal_form():
    # x' = mu - x^2 at mu = 1/4: x = 1/2 sink (eigenvalue -1), x = -1/2 source
    # (common practice; e.g. Strogatz, ch. 3).
    m = make_model(["x"], ["mu - x**2"], {"mu": "1/4"})
    sink, source = equilibrium(m, [{"x": 0.6}, {"x": -0.4}])
    assert (sink.type, source.type) == ("sink", "source")
    assert contains(sink.enclosure["x"], mpmath.mpf("0.5"))
    assert contains(sink.eigenvalues[0]["re"], -1)


@pytest.mark.parametrize("alpha", ["1", "-1", "1/1000", "-7/3"])
def test_cubic_is_never_hyperbolic(alpha):
    # x' = alpha x^3 at 0: the linearisation is 0 for every alpha (common practice).
    m = make_model(["x"], ["alpha*x**3"], {"alpha": alpha})
    r = only(equilibrium(m, [{"x": 0.5}]))
    assert r.verdict != "hyperbolic"
    if alpha in ("1", "-1"):
        assert r.verdict == "not hyperbolic" and "zero" in r.message


def test_pitchfork_normal_form():
    # x' = mu x - x^3 at mu = 1: +-1 sinks (eigenvalue -2), 0 a source (common practice).
    m = make_model(["x"], ["mu*x - x**3"], {"mu": 1})
    a, b, c = equilibrium(m, [{"x": 1.2}, {"x": -0.9}, {"x": 0.1}])
    assert (a.type, b.type, c.type) == ("sink", "sink", "source")
    assert contains(a.eigenvalues[0]["re"], -2)


logistic = logistic_model  # May 1976: fixed point 1 - 1/r with multiplier 2 - r


@pytest.mark.parametrize("r, kind", [("5/2", "attracting"), ("16/5", "repelling")])
def test_logistic_fixed_point(r, kind):
    res = only(equilibrium(logistic(r), [{"x": 0.6}]))
    assert res.type == kind
    point, multiplier = logistic_fixed_point(r)
    assert contains(res.enclosure["x"], point)
    assert contains(res.eigenvalues[0]["re"], multiplier)


def test_logistic_flip_at_r_3_proved_not_hyperbolic():
    # May 1976: at r = 3 the fixed point 2/3 has multiplier -1.
    res = only(equilibrium(logistic(LOGISTIC_FLIP_R.value), [{"x": 0.6}]))
    assert res.verdict == "not hyperbolic" and "-1" in res.message


def test_logistic_period_two():
    # May 1976: at r = 16/5 the period-2 points are (r + 1 +- sqrt((r+1)(r-3)))/(2r) with
    # multiplier -r^2 + 2r + 4 = 0.16: attracting.
    _, hi, multiplier = logistic_period_two("16/5")
    res = only(equilibrium(logistic("16/5"), [{"x": 0.8}], period=2))
    assert res.type == "attracting" and res.period == 2
    assert contains(res.enclosure["x"], hi)
    assert contains(res.eigenvalues[0]["re"], multiplier)


def test_diverging_guess_is_undecided():
    m = make_model(["x"], ["exp(x)"], {})
    r = only(equilibrium(m, [{"x": 0}]))
    assert r.verdict == "undecided" and r.reason == "no-enclosure"


def test_domain_violation_is_undecided_not_a_crash():
    # The zero x = 1 of x - 1 + 0*log(x - 1) sits where log is undefined: every box around it
    # reaches log's border, so the only honest answer is undecided for that reason.
    for text in ("x - 1 + 0*log(x - 1)", "x - 1 + 0*sqrt(1 - x)", "x - 1 + (x - 1)*sqrt(x - 1)"):
        r = only(equilibrium(make_model(["x"], [text], {}), [{"x": 1.5}]))
        assert (r.verdict, r.reason) == ("undecided", "domain"), (text, r.message)
    # log(x) - a has the one zero x = e^a, with f' = 1/x > 0: a source for every a (by hand).
    m = make_model(["x"], ["log(x) - a"], {"a": ["-50", "2"]})
    r = only(equilibrium(m, [{"x": 1}]))
    assert r.verdict == "undecided" or (r.verdict, r.type) == ("hyperbolic", "source")


def test_guesses_reaching_the_same_equilibrium_are_marked():
    # Two starts near the strain-u state and one at the symmetric state (bundled example): the
    # second result's enclosure lies in the first one's uniqueness box, so it is the same zero.
    from certify import equilibrium, load_model

    from .conftest import EXAMPLES

    model = load_model(EXAMPLES / "chemostat.toml")
    r = equilibrium(model, [{"u": 2.9, "v": 0.35}, {"u": 2.7, "v": 0.4}, {"u": 1.2, "v": 1.2}])
    assert [x.verdict for x in r] == ["hyperbolic"] * 3
    assert [x.same_as for x in r] == [None, 1, None]
