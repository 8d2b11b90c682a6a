"""Obligation 1: existence and uniqueness of a zero in a box, by Krawczyk's operator.

K(X, P) = c - C f(c, P) + (I - C J_f(X, P)) (X - c) (Krawczyk 1969). If K lies in the interior
of X, then for every p in P, f(., p) has exactly one zero in X, and it lies in K (existence by
Brouwer's fixed-point theorem, Moore 1977; uniqueness from the interior condition, Rump 1983;
see Neumaier 1990, ch. 5). Over a plain box the matrix algebra is exact midpoint-radius
arithmetic on integers (matrices.py); over the parameter forms of obligation 3 (forms.py) the
operator below runs in the forms' arithmetic.
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError
from .matrices import MidRad
from .reader import Bounds, Box, CertificateRejected, Problem, approx

EXTRA_BITS = 64  # bits kept below the largest entry when values are enclosed (matrices.py)


def krawczyk_operator(ar, precond: list, fc: list, jf: list, dx: list) -> list:
    """Return -C f(c) + (I - C J) dx, entry by entry, in the arithmetic of its arguments."""
    n = len(dx)
    one, zero = ar.const(Fraction(1)), ar.const(Fraction(0))
    image = []
    for i in range(n):
        k = zero
        for t in range(n):
            k = k - precond[i][t] * fc[t]
        for j in range(n):
            e = one if i == j else zero
            for t in range(n):
                e = e - precond[i][t] * jf[t][j]
            k = k + e * dx[j]
        image.append(k)
    return image


def krawczyk_image(problem: Problem, ar, pbox: Box, centre: list[Fraction], box: Box,
                   precond) -> tuple[list[Bounds], MidRad]:
    """Return the exact bounds of K(X, P) - c and J_g(X, P) over a plain box X.

    The entries come from the arithmetic ar; the matrix algebra is exact on integers
    (matrices.py). DomainError outside a domain.
    """
    n, bits, fast = len(centre), ar.prec + EXTRA_BITS, ar.name == "flint"
    p = [ar.interval(lo, hi) for lo, hi in pbox]
    fc, _ = problem.residual(ar, [ar.const(c) for c in centre], p, False)
    _, jac = problem.residual(ar, [ar.interval(lo, hi) for lo, hi in box], p)
    jg = MidRad.from_values(ar, jac, bits, fast)
    one = MidRad.diagonal(n, Fraction(1), 2, fast)
    jf = jg - one if problem.kind == "map" else jg
    cm = MidRad.from_exact(precond, bits, fast)
    f = MidRad.from_values(ar, [[v] for v in fc], bits, fast)
    dx = MidRad.from_bounds([[lo - c] for (lo, _), c in zip(box, centre)],
                            [[hi - c] for (_, hi), c in zip(box, centre)], bits, fast)
    image = (one - cm @ jf) @ dx - cm @ f
    return [row[0] for row in image.bounds()], jg


def bounds(ar, x, where: str) -> tuple[Fraction, Fraction]:
    """Return the exact bounds of x, a non-finite value rejecting the piece (code domain)."""
    try:
        return ar.bounds(x)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None


def check_interior(image: list, box: Box, centre: list[Fraction], where: str) -> None:
    """Refuse unless every c + K_j lies strictly inside X_j (exact bounds of K - c)."""
    for j, ((k_lo, k_hi), (lo, hi), c) in enumerate(zip(image, box, centre)):
        if not (lo - c < k_lo and k_hi < hi - c):
            raise CertificateRejected("krawczyk", f"{where}.box[{j}]", "found K = "
                                      f"[{approx(c + k_lo)}, {approx(c + k_hi)}], expected a "
                                      "subset of the interior of the box")


def check_centre(box: Box, centre: list[Fraction], where: str) -> None:
    """Refuse a centre outside its box."""
    for j, ((lo, hi), c) in enumerate(zip(box, centre)):
        if not lo <= c <= hi:
            raise CertificateRejected("krawczyk", f"{where}.centre[{j}]", "found a centre "
                                      "outside the box")
