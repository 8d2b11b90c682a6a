"""Exact linear algebra and polynomial tests of the kernel, against worked values."""

from __future__ import annotations

from fractions import Fraction as F

import sympy as sp

from certify.check import exact

from .published import LORENZ_HOPF_RHO, lorenz_c_plus_charpoly


def _m(rows):
    return [[F(x) for x in row] for row in rows]


def test_rohn_midpoint_radius_test():
    # Computed by hand: A_c = [[2, 1], [1, 2]], Delta = t * ones: t = 0.4 is certified
    # positive definite; t = 0.5 is the equality case, where the family holds a singular member.
    centre = _m([[2, 1], [1, 2]])
    for t, expected in [(F(2, 5), True), (F(1, 2), False)]:
        lo = [[c - t for c in row] for row in centre]
        hi = [[c + t for c in row] for row in centre]
        assert exact.interval_positive_definite(lo, hi) is expected


def test_inertia_against_sympy_eigenvalues():
    a = _m([[2, 3, 1], [3, -1, 0], [1, 0, -4]])
    ev = sp.Matrix(a).eigenvals()
    pos = sum(m for v, m in ev.items() if sp.re(sp.N(v)) > 0)
    assert exact.inertia(a) == (pos, 3 - pos)
    assert exact.inertia(_m([[0, 1], [1, 0]])) == (1, 1)  # no 1x1 pivot: a congruence first
    assert exact.inertia(_m([[0, 0, 1], [0, 0, 0], [1, 0, 0]])) is None  # singular: refused


def test_charpoly_against_sympy():
    a = _m([[1, 2, 0], [F(1, 3), -1, 5], [2, 0, F(7, 2)]])
    t = sp.Symbol("t")
    expected = sp.Poly(sp.Matrix(a).charpoly(t).as_expr(), t).all_coeffs()[::-1]
    assert exact.charpoly(a) == [F(int(c.p), int(c.q)) for c in expected]


def test_axis_and_circle_roots():
    # Lorenz 1963 (tests/published.py): at rho_H = 470/19 the characteristic polynomial at C+
    # has the pair +-i omega; at rho = 28 it has no root on the axis.
    at_hopf = lorenz_c_plus_charpoly(LORENZ_HOPF_RHO.value)[::-1]  # constant term first
    assert exact.imaginary_axis_root(at_hopf) == "imaginary pair"
    assert exact.imaginary_axis_root(lorenz_c_plus_charpoly(28)[::-1]) is None
    assert exact.imaginary_axis_root([F(0), F(1)]) == "zero"
    assert exact.unit_circle_root([F(1), F(-1), F(1)]) == "complex pair"  # e^{+-i pi/3}
    assert exact.unit_circle_root([F(1, 4), F(0), F(1)]) is None          # roots +-i/2
    assert exact.unit_circle_root([F(2), F(-3), F(1)]) == "+1"
    assert exact.unit_circle_root([F(1), F(2), F(1)]) == "-1"
    assert exact.unit_circle_root([F(1), F(-F(5, 2)), F(1)]) is None      # 2 and 1/2


def test_sturm_positive_roots():
    assert exact.has_positive_root([F(-2), F(0), F(1)])       # s^2 - 2
    assert not exact.has_positive_root([F(2), F(0), F(1)])    # s^2 + 2
    assert not exact.has_positive_root([F(2), F(3), F(1)])    # roots -1, -2
    assert exact.has_positive_root([F(0), F(-1), F(1)])       # s(s - 1)
