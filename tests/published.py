"""Published models and check values, each with its source and how the value here was obtained.

The tests import their published models and values from here, so every number that comes from
the literature is written once, next to its source. Values computed by hand for a test (not
published) stay in the test, marked "computed by hand". Bibliographic details marked
"(from memory)" were written without the publication at hand.
"""

from __future__ import annotations

from dataclasses import dataclass
from fractions import Fraction as F

import mpmath

from certify import make_model


@dataclass(frozen=True)
class Published:
    """A published model or value: the value, where it was published, how it was obtained."""

    value: object
    source: str
    how: str


# ---------------------------------------------------------------- Lorenz 1963

LORENZ_SOURCE = ("E. N. Lorenz, \"Deterministic nonperiodic flow\", J. Atmos. Sci. 20 (1963) "
                 "130-141, eqs. (25)-(27) (volume and pages from memory)")

LORENZ = Published(
    (["x", "y", "z"], ["sigma*(y - x)", "rho*x - y - x*z", "x*y - beta*z"]),
    LORENZ_SOURCE, "the equations as printed, in the paper's names")

LORENZ_CLASSICAL = Published({"sigma": 10, "beta": "8/3"}, LORENZ_SOURCE,
                             "the parameter values used in the paper")

LORENZ_HOPF_RHO = Published(
    F(470, 19), f"{LORENZ_SOURCE}; the formula also in S. H. Strogatz, Nonlinear Dynamics and "
    "Chaos (1994), section 9.2",
    "rho_H = sigma (sigma + beta + 3) / (sigma - beta - 1), evaluated exactly for sigma = 10, "
    "beta = 8/3")


def lorenz_model(rho, name: str = "Lorenz", **options):
    """Return the Lorenz model with the classical sigma, beta and the given rho (a number, a
    text or an interval [lo, hi]); options go to make_model (a region, say)."""
    variables, equations = LORENZ.value
    return make_model(variables, equations, {**LORENZ_CLASSICAL.value, "rho": rho}, name=name,
                      **options)


def lorenz_c_plus(rho) -> tuple:
    """Return C+ = (sqrt(beta (rho - 1)), sqrt(beta (rho - 1)), rho - 1) (Lorenz 1963), mpmath."""
    beta, rho = mpmath.mpf(8) / 3, mpmath.mpf(rho)
    r = mpmath.sqrt(beta * (rho - 1))
    return r, r, rho - 1


def lorenz_origin_eigenvalues(rho) -> list:
    """Return the origin's eigenvalues -beta and (-(sigma + 1) +- sqrt((sigma + 1)^2
    + 4 sigma (rho - 1)))/2 (Lorenz 1963), in increasing order, with mpmath at 50 digits."""
    with mpmath.workdps(50):
        s, b, r = mpmath.mpf(10), mpmath.mpf(8) / 3, mpmath.mpf(rho)
        root = mpmath.sqrt((s + 1) ** 2 + 4 * s * (r - 1))
        return sorted([-b, (-(s + 1) + root) / 2, (-(s + 1) - root) / 2])


def lorenz_c_plus_charpoly(rho) -> list[F]:
    """Return the coefficients, highest first, of l^3 + (sigma + beta + 1) l^2
    + beta (sigma + rho) l + 2 sigma beta (rho - 1), the characteristic polynomial at C+-
    (Lorenz 1963; Strogatz 1994, section 9.2), exactly."""
    s, b, r = F(10), F(8, 3), F(rho)
    return [F(1), s + b + 1, b * (s + r), 2 * s * b * (r - 1)]


# ---------------------------------------------------------------- Brusselator

BRUSSELATOR_SOURCE = ("I. Prigogine, R. Lefever, \"Symmetry breaking instabilities in "
                      "dissipative systems. II\", J. Chem. Phys. 48 (1968) 1695-1700 (from "
                      "memory)")

BRUSSELATOR = Published((["x", "y"], ["a - (b + 1)*x + x**2*y", "b*x - x**2*y"]),
                        BRUSSELATOR_SOURCE, "the equations as usually written, names x, y, a, b")


def brusselator_model(a, b, **options):
    """Return the Brusselator with parameters a, b (numbers, texts or [lo, hi] intervals);
    options go to make_model."""
    variables, equations = BRUSSELATOR.value
    return make_model(variables, equations, {"a": a, "b": b}, **options)


def brusselator_equilibrium(a, b) -> tuple[F, F]:
    """Return the unique equilibrium (a, b/a) (Prigogine & Lefever 1968), exactly."""
    return F(a), F(b) / F(a)


def brusselator_hopf_b(a) -> F:
    """Return b = 1 + a^2, where the trace b - 1 - a^2 of the Jacobian at (a, b/a) vanishes
    while its determinant a^2 stays positive (Prigogine & Lefever 1968)."""
    return 1 + F(a) ** 2


def brusselator_grid_model(cells: int, a, b, du, dv):
    """Return the Brusselator kinetics (Prigogine & Lefever 1968) on a 1-D grid of `cells` cells
    with spacing 1 and reflecting ends (the ends' missing neighbour is the cell itself: common
    practice), n = 2 cells, and a guess at the homogeneous state (a, b/a)."""
    names, eqs, guess = [], [], {}
    for i in range(cells):
        left, right = max(i - 1, 0), min(i + 1, cells - 1)
        names += [f"u{i}", f"v{i}"]
        eqs += [f"a - (b + 1)*u{i} + u{i}**2*v{i} + du*(u{left} - 2*u{i} + u{right})",
                f"b*u{i} - u{i}**2*v{i} + dv*(v{left} - 2*v{i} + v{right})"]
        guess[f"u{i}"], guess[f"v{i}"] = float(F(a)) * 1.001, float(F(b) / F(a)) * 0.999
    params = {"a": str(a), "b": str(b), "du": str(du), "dv": str(dv)}
    return make_model(names, eqs, params, name=f"brusselator-grid-{cells}"), guess


def brusselator_grid_unstable_dimension(cells: int, a, b, du, dv) -> int:
    """Return the number of eigenvalues with Re > 0 at the homogeneous state (a, b/a).

    The Jacobian is block-diagonal in the discrete cosine modes k = 0 .. N-1, with eigenvalues
    mu_k = 4 sin^2(k pi / 2N) of the negated reflecting-end Laplacian (from memory; the tests
    confirm it against the eigenvalues of the assembled matrix), and on mode k the 2 x 2 block
    [[b - 1 - du mu_k, a^2], [-b, -a^2 - dv mu_k]] (Prigogine & Lefever 1968 kinetics).
    """
    a, b, du, dv = (mpmath.mpf(F(v).numerator) / F(v).denominator for v in (a, b, du, dv))
    count = 0
    for k in range(cells):
        mu = 4 * mpmath.sin(k * mpmath.pi / (2 * cells)) ** 2
        block = mpmath.matrix([[b - 1 - du * mu, a * a], [-b, -a * a - dv * mu]])
        count += sum(1 for ev in mpmath.eig(block)[0] if mpmath.re(ev) > 0)
    return count


# ---------------------------------------------------------------- logistic map

LOGISTIC_SOURCE = ("R. M. May, \"Simple mathematical models with very complicated dynamics\", "
                   "Nature 261 (1976) 459-467 (pages from memory)")

LOGISTIC = Published((["x"], ["r*x*(1 - x)"]), LOGISTIC_SOURCE, "the map x -> r x (1 - x)")


def logistic_model(r):
    """Return the logistic map with parameter r."""
    variables, equations = LOGISTIC.value
    return make_model(variables, equations, {"r": r}, kind="map")


def logistic_fixed_point(r) -> tuple[F, F]:
    """Return the fixed point 1 - 1/r and its multiplier 2 - r (May 1976), exactly."""
    return 1 - 1 / F(r), 2 - F(r)


LOGISTIC_FLIP_R = Published(F(3), LOGISTIC_SOURCE,
                            "the multiplier 2 - r of the fixed point is -1 at r = 3")


def logistic_period_two(r) -> tuple:
    """Return the period-2 points (r + 1 +- sqrt((r + 1)(r - 3)))/(2 r) and the cycle's
    multiplier -r^2 + 2 r + 4 (May 1976), with mpmath."""
    r = mpmath.mpf(F(r).numerator) / F(r).denominator
    root = mpmath.sqrt((r + 1) * (r - 3))
    return (r + 1 - root) / (2 * r), (r + 1 + root) / (2 * r), -r * r + 2 * r + 4
