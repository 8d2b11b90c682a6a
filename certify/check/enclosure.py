"""Obligation 1: existence and uniqueness of a zero in a box, by Krawczyk's operator.

K(X, P) = c - C f(c, P) + (I - C J_f(X, P)) (X - c) (Krawczyk 1969). If K lies in the interior
of X, then for every p in P, f(., p) has exactly one zero in X, and it lies in K (existence by
Brouwer's fixed-point theorem, Moore 1977; uniqueness from the interior condition, Rump 1983;
see Neumaier 1990, ch. 5). The operator is written once, over any arithmetic: intervals here,
the parameter forms of obligation 3 in forms.py.
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError
from .reader import Box, CertificateRejected, Problem, approx


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
                   precond) -> tuple[list, list]:
    """Return K(X, P) - c and J_g(X, P) over a plain box X; DomainError outside a domain."""
    p = [ar.interval(lo, hi) for lo, hi in pbox]
    fc, _ = problem.residual(ar, [ar.const(c) for c in centre], p, False)
    _, jac = problem.residual(ar, [ar.interval(lo, hi) for lo, hi in box], p)
    cm = [[ar.const(q) for q in row] for row in precond]
    dx = [ar.interval(lo - c, hi - c) for (lo, hi), c in zip(box, centre)]
    return krawczyk_operator(ar, cm, fc, problem.jacobian_f(ar, jac), dx), jac


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
