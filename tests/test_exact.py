"""Exact linear algebra and polynomial tests of the kernel, against worked values."""

from __future__ import annotations

from fractions import Fraction as F

import sympy as sp

from certify.check import exact, inertia
from certify.check.matrices import MidRad

from .published import LORENZ_HOPF_RHO, lorenz_c_plus_charpoly


def _m(rows):
    return [[F(x) for x in row] for row in rows]


def _family(t):
    centre = _m([[2, 1], [1, 2]])
    return MidRad.from_bounds([[c - t for c in row] for row in centre],
                              [[c + t for c in row] for row in centre], 60)


def test_rohn_midpoint_radius_test():
    # Computed by hand: A_c = [[2, 1], [1, 2]], Delta = t * ones: t = 0.4 is certified
    # positive definite; t = 0.5 is the equality case, where the family holds a singular member.
    for t, expected in [(F(2, 5), True), (F(1, 2), False)]:
        assert inertia.exact_definite(_family(t)) is expected


def test_definiteness_hint():
    # Computed by hand: with c = 1 and L = [[1, 0], [1, 1/2]], A_c - c I - L L^T =
    # [[0, 0], [0, -1/4]]; with the radius t the row sums of |E| are 2t and 1/4 + 2t, below
    # c = 1 iff t < 3/8 (the equality case t = 3/8 is refused).
    lower = [[F(1)], [F(1), F(1, 2)]]
    assert inertia.hint_definite(_family(F(1, 3)), lower, F(1), 60)
    assert not inertia.hint_definite(_family(F(3, 8)), lower, F(1), 60)
    zero = [[F(0)], [F(0), F(0)]]  # L = 0: rows |2 - c| + 1, below c iff c > 3/2
    assert inertia.hint_definite(_family(F(0)), zero, F(2), 60)
    assert not inertia.hint_definite(_family(F(0)), zero, F(3, 2), 60)


def test_integer_definiteness_against_sympy_eigenvalues():
    for rows in ([[2, 3, 1], [3, -1, 0], [1, 0, -4]], [[5, 2, 1], [2, 4, 1], [1, 1, 3]],
                 [[1, 2], [2, 4]], [[4, -2], [-2, 1]]):
        ev = sp.Matrix(rows).eigenvals()
        expected = all(sp.re(sp.N(v)) > 0 for v in ev)  # symmetric: real eigenvalues
        assert exact.positive_definite_integers(rows) is expected


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
