"""Exact integer and rational linear algebra: definiteness, characteristic polynomials, their
roots on the imaginary axis and the unit circle."""

from __future__ import annotations

from fractions import Fraction
from math import lcm

from .arith import BudgetError

Matrix = list[list[Fraction]]
Poly = list[Fraction]  # coefficients, constant term first

# Size bounds, checked before the work starts (proofs/FORMAT.md, "Bounds"). Fraction-free
# elimination on an n x n integer matrix with entries of h bits keeps every entry a minor, of at
# most n (h + log2 n) bits (Hadamard); the characteristic polynomial's coefficients stay within
# the same bound, and its root tests grow with the degree.
MAX_ELIMINATION_BITS = 40_000  # n * (h + log2 n) for definiteness and inertia
MAX_CHARPOLY_DIMENSION = 12
MAX_CHARPOLY_BITS = 4_096  # n * (h + log2 n) for the exact characteristic polynomial


def _integer_matrix(a: Matrix, limit: int = MAX_ELIMINATION_BITS) -> tuple[list[list[int]], int]:
    """Return (D, d): D = d a has integer entries, d > 0; refuse when n (h + log2 n) > limit."""
    n, d = len(a), 1
    for row in a:
        for q in row:
            d = lcm(d, q.denominator)
            if n * d.bit_length() > limit:
                raise BudgetError(f"a common denominator of more than {limit // n} bits")
    m = [[q.numerator * (d // q.denominator) for q in row] for row in a]
    h = max((abs(v).bit_length() for row in m for v in row), default=0)
    if n * (h + n.bit_length()) > limit:
        raise BudgetError(f"an exact {n} x {n} matrix with {h}-bit entries (limit: n (h + log2 "
                          f"n) <= {limit} bits)")
    return m, d


def positive_definite_integers(m: list[list[int]]) -> bool:
    """Return whether the symmetric integer matrix m is positive definite.

    Sylvester's criterion: all leading principal minors > 0; fraction-free (Bareiss) elimination
    produces them as its pivots, every division exact. Refused (BudgetError) when
    n (h + log2 n) > MAX_ELIMINATION_BITS, h the largest entry's bits.
    """
    n = len(m)
    h = max((abs(v).bit_length() for row in m for v in row), default=0)
    if n * (h + n.bit_length()) > MAX_ELIMINATION_BITS:
        raise BudgetError(f"an exact {n} x {n} matrix with {h}-bit entries (limit: n (h + log2 "
                          f"n) <= {MAX_ELIMINATION_BITS} bits)")
    m, prev = [list(row) for row in m], 1
    for k in range(n):
        pk = m[k][k]
        if pk <= 0:
            return False
        for i in range(k + 1, n):
            mi, mik = m[i], m[i][k]
            for j in range(k + 1, n):
                mi[j] = (mi[j] * pk - mik * m[k][j]) // prev
        prev = pk
    return True


def charpoly(a: Matrix) -> Poly:
    """Return det(t I - a), constant term first (Faddeev-LeVerrier over the integers).

    With D = d a integer, the Faddeev-LeVerrier matrices and coefficients of D are integers and
    each division by k is exact; det(t I - a) has the coefficients c_k(D) / d^(n - k).
    """
    n = len(a)
    if n > MAX_CHARPOLY_DIMENSION:
        raise BudgetError(f"an exact characteristic polynomial of degree {n} (at most "
                          f"{MAX_CHARPOLY_DIMENSION})")
    ints, d = _integer_matrix(a, MAX_CHARPOLY_BITS)
    coeffs = [0] * n + [1]
    m = [[0] * n for _ in range(n)]
    for k in range(1, n + 1):
        for i in range(n):
            m[i][i] += coeffs[n - k + 1]
        am = [[sum(ints[i][t] * m[t][j] for t in range(n)) for j in range(n)] for i in range(n)]
        coeffs[n - k] = -sum(am[i][i] for i in range(n)) // k
        m = am
    return [Fraction(c, d ** (n - k)) for k, c in enumerate(coeffs)]


def _trim(p: Poly) -> Poly:
    while p and p[-1] == 0:
        p = p[:-1]
    return p


def _rem(a: Poly, b: Poly) -> Poly:
    a = list(a)
    while len(a) >= len(b) and a:
        c = a[-1] / b[-1]
        shift = len(a) - len(b)
        for i, bi in enumerate(b):
            a[shift + i] -= c * bi
        a = _trim(a)
    return a


def _gcd(a: Poly, b: Poly) -> Poly:
    a, b = _trim(a), _trim(b)
    while b:
        a, b = b, _rem(a, b)
    return a


def _sign_changes(values: list[Fraction]) -> int:
    signs = [v > 0 for v in values if v != 0]
    return sum(1 for s, t in zip(signs, signs[1:]) if s != t)


def has_positive_root(p: Poly) -> bool:
    """Return whether the nonzero rational polynomial p has a real root s > 0 (Sturm 1829)."""
    p = _trim(p)
    while len(p) > 1 and p[0] == 0:
        p = p[1:]
    if len(p) <= 1:
        return False
    seq = [p, _trim([i * c for i, c in enumerate(p)][1:])]
    while len(seq[-1]) > 1:
        r = _rem(seq[-2], seq[-1])
        if not r:
            break
        seq.append([-c for c in r])
    at_zero = _sign_changes([q[0] for q in seq])
    at_infinity = _sign_changes([q[-1] for q in seq])
    return at_zero - at_infinity > 0


def imaginary_axis_root(p: Poly) -> str | None:
    """Return how p has a root on the imaginary axis ('zero', 'imaginary pair'), or None.

    p(i w) = A(w^2) + i w B(w^2); a root i w with w != 0 is a common root s = w^2 > 0 of A and B.
    """
    if p[0] == 0:
        return "zero"
    a = [c * (-1) ** (k // 2) for k, c in enumerate(p) if k % 2 == 0]
    b = [c * (-1) ** (k // 2) for k, c in enumerate(p) if k % 2 == 1]
    g = _gcd(a, b) if _trim(b) else _trim(a)
    return "imaginary pair" if g and has_positive_root(g) else None


def unit_circle_root(p: Poly) -> str | None:
    """Return how p has a root of modulus 1 ('+1', '-1', 'complex pair'), or None.

    The Cayley map lambda = (1 + s)/(1 - s) takes the imaginary axis onto the unit circle less -1;
    q(s) = (1 - s)^n p((1 + s)/(1 - s)) has the matching roots.
    """
    if sum(p) == 0:
        return "+1"
    if sum(c * (-1) ** k for k, c in enumerate(p)) == 0:
        return "-1"
    n = len(p) - 1
    q = [Fraction(0)] * (n + 1)
    for k, c in enumerate(p):
        term = [Fraction(1)]
        for factor in [[1, 1]] * k + [[1, -1]] * (n - k):
            term = [sum(term[i - j] * factor[j] for j in range(2) if 0 <= i - j < len(term))
                    for i in range(len(term) + 1)]
        for i, t in enumerate(term):
            q[i] += c * t
    return "complex pair" if imaginary_axis_root(_trim(q)) else None
