"""Certified counts of equilibria in a region, against published and exactly known values."""

from __future__ import annotations

import copy
from fractions import Fraction as F

import pytest
import sympy as sp
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from certify import CertificateRejected, make_model, verify
from certify.api import scan

from .conftest import EXAMPLES, run_cli
from .published import lorenz_model


def lorenz(rho):
    # Lorenz 1963 (tests/published.py), in a box holding all three equilibria for rho <= 28.
    return lorenz_model(rho, region={"x": ["-30", "30"], "y": ["-30", "30"], "z": ["-10", "60"]})


def _kinds(result):
    return sorted(z.stable_dimension for z in result.zeros if z.inside)


def test_lorenz_three_equilibria_at_rho_28():
    # Lorenz 1963: the origin (unstable dimension 1) and C+- (unstable dimension 2).
    r = scan(lorenz(28))
    assert r.count == 3
    assert sorted(3 - d for d in _kinds(r)) == [1, 2, 2]
    verify(r.certificate)


def test_lorenz_one_sink_at_rho_one_half():
    # Lorenz 1963: for rho < 1 the origin is the only equilibrium, and it attracts.
    r = scan(lorenz("1/2"))
    assert r.count == 1 and _kinds(r) == [3]


def test_decoupled_cubics_nine_zeros():
    # Computed by hand (each coordinate solves t - t^3 = 0): x' = x - x^3, y' = y - y^3
    # has exactly 9 zeros in [-1.5, 1.5]^2: (0, 0) dim 2, (+-1, +-1) dim 0, four saddles.
    m = make_model(["x", "y"], ["x - x**3", "y - y**3"], {},
                   region={"x": ["-1.5", "1.5"], "y": ["-1.5", "1.5"]})
    r = scan(m)
    assert r.count == 9
    assert sorted(2 - d for d in _kinds(r)) == [0, 0, 0, 0, 1, 1, 1, 1, 2]


def test_zeros_on_the_border_are_reported_not_counted():
    # The same system in [-1, 1]^2 puts eight of the zeros on the border (computed by hand).
    m = make_model(["x", "y"], ["x - x**3", "y - y**3"], {},
                   region={"x": ["-1", "1"], "y": ["-1", "1"]})
    r = scan(m)
    assert r.count is None and r.reason == "on-boundary"
    assert r.certificate is None


def test_circle_and_hyperbola_four_zeros():
    # Computed by hand: x^2 + y^2 = 4, x y = 1 give x^4 - 4 x^2 + 1 = 0, x = +-sqrt(2 +- sqrt(3)),
    # so the curves meet in exactly 4 points.
    m = make_model(["x", "y"], ["x**2 + y**2 - 4", "x*y - 1"], {},
                   region={"x": ["-3", "3"], "y": ["-3", "3"]})
    r = scan(m)
    assert r.count == 4
    assert sorted(2 - d for d in _kinds(r)) == [0, 1, 1, 2]


@pytest.mark.parametrize("mu, count", [(["1/4", "1"], 2), (["-1", "-1/4"], 0)])
def test_saddle_node_over_parameter_boxes(mu, count):
    # x' = mu - x^2 (common practice; Strogatz ch. 3): two zeros for mu > 0, none for mu < 0.
    m = make_model(["x"], ["mu - x**2"], {"mu": mu}, region={"x": ["-2", "2"]})
    r = scan(m)
    assert r.count == count
    assert verify(r.certificate).claim["count"] == count


def test_saddle_node_across_the_fold_is_never_counted():
    m = make_model(["x"], ["mu - x**2"], {"mu": ["-1/4", "1/4"]}, region={"x": ["-2", "2"]})
    r = scan(m, max_boxes=3000)
    assert r.count is None and r.certificate is None


def test_pitchfork_three_zeros_for_every_mu():
    # x' = mu x - x^3 with mu in [1/4, 1]: 0 and +-sqrt(mu) (common practice).
    m = make_model(["x"], ["mu*x - x**3"], {"mu": ["1/4", "1"]}, region={"x": ["-2", "2"]})
    r = scan(m)
    assert r.count == 3 and _kinds(r) == [0, 1, 1]


def test_budget_leaves_boxes_undecided():
    r = scan(lorenz(28), max_boxes=20)
    assert r.count is None and r.reason == "budget" and r.undecided_boxes


def test_scan_command_line(tmp_path):
    out = tmp_path / "count.cert.json"
    proc = run_cli("scan", EXAMPLES / "chemostat.toml", "--out", out, "--json")
    assert proc.returncode == 0, proc.stderr
    import json
    data = json.loads(proc.stdout)
    assert data["count"] == 3 and data["undecided_boxes"] == []
    assert sorted(z["type"] for z in data["equilibria"]) == ["saddle", "sink", "sink"]
    proc = run_cli("verify", out)
    assert proc.returncode == 0 and "exactly 3 equilibria" in proc.stdout
    proc = run_cli("scan", EXAMPLES / "chemostat.toml", "--max-boxes", "5")
    assert proc.returncode == 1 and "not certified (budget)" in proc.stdout
    proc = run_cli("scan", EXAMPLES / "chemostat.toml", "--region", "u=0..4")
    assert proc.returncode == 2 and "no side for v" in proc.stderr


def _first_leaf_path(node, want):
    """Return the list of keys to the first leaf of the wanted kind."""
    if want in node:
        return []
    for key in ("low", "high"):
        if key in node:
            path = _first_leaf_path(node[key], want)
            if path is not None:
                return [key] + path
    return None


def test_count_certificate_with_a_leaf_removed_or_a_box_shrunk_is_rejected():
    m = make_model(["x", "y"], ["x**2 + y**2 - 4", "x*y - 1"], {},
                   region={"x": ["-3", "3"], "y": ["-3", "3"]})
    cert = scan(m).certificate
    bad = copy.deepcopy(cert)
    node = bad["pieces"][0]["tree"]
    path = _first_leaf_path(node, "exclude")
    parent = node
    for key in path[:-1]:
        parent = parent[key]
    parent[path[-1]] = {"exclude": 0} if "zero" in parent[path[-1]] else {}
    with pytest.raises(CertificateRejected):
        verify(bad)
    bad = copy.deepcopy(cert)
    zero = bad["pieces"][0]["zeros"][0]
    lo, hi = (F(v) for v in zero["box"][0])
    c = F(zero["centre"][0])
    zero["box"][0] = [str(c - (c - lo) / 10**6), str(c + (hi - c) / 10**6)]
    with pytest.raises(CertificateRejected):
        verify(bad)
    bad = copy.deepcopy(cert)
    bad["claim"]["count"] = 3
    bad["claim"]["stable_dimensions"] = bad["claim"]["stable_dimensions"][:3]
    with pytest.raises(CertificateRejected):
        verify(bad)


@st.composite
def triangular(draw):
    """f1 = (x - a)(x - b), f2 = (y - c)(y - d) + e (x - a): rational coefficients."""
    roots = st.fractions(min_value=-2, max_value=2, max_denominator=4)
    a, b = draw(roots), draw(roots)
    c, d = draw(roots), draw(roots)
    e = draw(st.fractions(min_value=-1, max_value=1, max_denominator=3))
    lo = [draw(st.fractions(min_value=-3, max_value=0, max_denominator=5)) for _ in range(2)]
    hi = [draw(st.fractions(min_value=F(1, 5), max_value=3, max_denominator=5)) for _ in range(2)]
    return a, b, c, d, e, lo, hi


def _q(v: F) -> str:
    return f"({v.numerator}/{v.denominator})"


TRIANGULAR_DECIDED = {True: 0, False: 0}


@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
@given(triangular())
def test_random_triangular_systems_against_sympy(case):
    a, b, c, d, e, lo, hi = case
    f1 = f"(x - {_q(a)})*(x - {_q(b)})"
    f2 = f"(y - {_q(c)})*(y - {_q(d)}) + {_q(e)}*(x - {_q(a)})"
    m = make_model(["x", "y"], [f1, f2], {}, region={
        "x": [str(lo[0]), str(hi[0])], "y": [str(lo[1]), str(hi[1])]})
    r = scan(m, max_boxes=4000, time_limit=20)
    degenerate = a == b or any(v in (lo[0], hi[0]) for v in (a, b)) or any(
        (c - d) ** 2 == 4 * e * (r - a)  # a double root in y on the line x = r
        or any((y - c) * (y - d) + e * (r - a) == 0 for y in (lo[1], hi[1]))  # on the border
        for r in (a, b))
    if not degenerate:
        TRIANGULAR_DECIDED[r.count is not None] += 1
    if r.count is None:
        return  # undecided is always allowed (double roots, zeros on the border)
    x, y = sp.symbols("x y", real=True)
    sx = sp.Rational(a.numerator, a.denominator), sp.Rational(b.numerator, b.denominator)
    exprs = [(x - sx[0]) * (x - sx[1]),
             (y - sp.Rational(c.numerator, c.denominator)) *
             (y - sp.Rational(d.numerator, d.denominator)) + sp.Rational(e.numerator,
                                                                        e.denominator) *
             (x - sx[0])]
    solutions = sp.solve(exprs, [x, y], dict=True)
    inside = {(s[x], s[y]) for s in solutions
              if s[x].is_real and s[y].is_real
              and lo[0] <= s[x] <= hi[0] and lo[1] <= s[y] <= hi[1]}
    assert r.count == len(inside)


def test_most_simple_triangular_systems_were_counted():
    if not sum(TRIANGULAR_DECIDED.values()):
        return  # the property test was deselected
    assert TRIANGULAR_DECIDED[True] >= 0.8 * sum(TRIANGULAR_DECIDED.values()), TRIANGULAR_DECIDED


COMPETITION = {"x": "x*(1 - x/K - a*y)", "y": "y*(1 - y - b*x)"}


@pytest.mark.parametrize("boxes", [{"K": ["1.5", "1.7"]},
                                   {"K": ["1.5", "1.7"], "a": ["0.49", "0.51"]}])
def test_competition_count_over_parameter_boxes_in_which_equilibria_move(boxes):
    # Lotka-Volterra competition with a = b = 1/2 (Murray, Mathematical Biology I, 3rd ed.,
    # section 3.5: the textbook analysis): a source at (0, 0), saddles at (K, 0) and (0, 1), and
    # the coexistence sink x = K(1 - a)/(1 - abK), y = 1 - bx; across K in [1.5, 1.7] the
    # boundary state (K, 0) travels 0.2 and the sink 0.28. Exact values from sympy.
    params = {"K": "1.6", "a": "1/2", "b": "1/2", **boxes}
    m = make_model(["x", "y"], COMPETITION, params,
                   region={"x": ["-0.5", "3"], "y": ["-0.5", "2"]})
    r = scan(m)
    assert r.count == 4, r.message
    assert sorted(2 - z.stable_dimension for z in r.zeros if z.inside) == [0, 1, 1, 2]
    x, y, K, a, b = sp.symbols("x y K a b", real=True)
    solutions = sp.solve([x * (1 - x / K - a * y), y * (1 - y - b * x)], [x, y], dict=True)
    assert len(solutions) == 4
    for piece in r.certificate["pieces"]:
        centre = {s: sp.Rational((F(lo) + F(hi)) / 2) for s, (lo, hi) in
                  zip((K, a, b), (piece["parameters"][n] for n in ("K", "a", "b")))}
        for s in solutions:
            point = [s[x].subs(centre), s[y].subs(centre)]
            holders = [z for z in piece["zeros"] if all(
                F(lo) <= F(str(v)) <= F(hi) for v, (lo, hi) in zip(point, z["box"]))]
            assert len(holders) == 1, (piece["parameters"], point)
    assert verify_count(r.certificate) == 4


def verify_count(cert) -> int:
    from certify.check import check

    return check(cert, "python").claim["count"]
