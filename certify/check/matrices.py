"""Interval matrices in exact midpoint-radius form on integers, shared by both arithmetics.

A MidRad holds integer matrices M and R >= 0 and one exponent e: entry (i, j) lies in
[(M_ij - R_ij) 2^e, (M_ij + R_ij) 2^e]. Only the conversion of a value into this form rounds
(outward); sums and products are exact on the integers, by the triangle inequality
(A +- R_A)(B +- R_B) in AB +- (|A| R_B + R_A |B| + R_A R_B) entrywise (Rump 1999). So the
matrix algebra of a proof is the same whichever arithmetic enclosed its entries, and a product
costs n^3 integer multiply-adds: in C (python-flint's fmpz_mat) under the flint arithmetic, in
Python's integers under the other.
"""

from __future__ import annotations

from fractions import Fraction
from operator import mul

Ints = list[list[int]]


def _floor(q: Fraction, e: int) -> int:
    """Return floor(q / 2^e)."""
    n, d = q.numerator, q.denominator
    return (n << -e) // d if e <= 0 else n // (d << e)


def _top(q: Fraction) -> int:
    """Return t with |q| < 2^t (q != 0)."""
    return abs(q.numerator).bit_length() - abs(q.denominator).bit_length() + 1


class MidRad:
    """An interval matrix (M +- R) 2^e; R None means exact (all zero)."""

    __slots__ = ("mid", "rad", "exp", "fast")

    def __init__(self, mid: Ints, rad: Ints | None, exp: int, fast: bool = False):
        self.mid, self.rad, self.exp, self.fast = mid, rad, exp, fast

    @classmethod
    def from_bounds(cls, lo: list[list[Fraction]], hi: list[list[Fraction]], bits: int,
                    fast: bool = False) -> MidRad:
        """Return the outward enclosure of [lo, hi] with `bits` bits below the largest entry."""
        tops = [_top(q) for row in (*lo, *hi) for q in row if q]
        e = max(tops, default=0) - bits
        lo_i = [[_floor(q, e) for q in row] for row in lo]
        hi_i = [[-_floor(-q, e) for q in row] for row in hi]
        mid = [[(a + b) >> 1 for a, b in zip(ra, rb)] for ra, rb in zip(lo_i, hi_i)]
        rad = [[b - m for m, b in zip(rm, rb)] for rm, rb in zip(mid, hi_i)]
        return cls(mid, rad if any(map(any, rad)) else None, e, fast)

    @classmethod
    def from_exact(cls, rows: list[list[Fraction]], bits: int, fast: bool = False) -> MidRad:
        """Return the enclosure of an exact rational matrix."""
        return cls.from_bounds(rows, rows, bits, fast)

    @classmethod
    def from_values(cls, ar, rows: list[list], bits: int, fast: bool = False) -> MidRad:
        """Return the enclosure of a matrix of values of the arithmetic ar (exact bounds)."""
        pairs = [[ar.bounds(v) for v in row] for row in rows]
        return cls.from_bounds([[lo for lo, _ in row] for row in pairs],
                               [[hi for _, hi in row] for row in pairs], bits, fast)

    def _at(self, e: int) -> tuple[Ints, Ints | None]:
        """Return (M, R) rescaled to the exponent e <= self.exp (exact)."""
        s = self.exp - e
        if s == 0:
            return self.mid, self.rad
        shifted = [[v << s for v in row] for row in self.mid]
        return shifted, None if self.rad is None else [[v << s for v in row] for row in self.rad]

    def __add__(self, o: MidRad) -> MidRad:
        e = min(self.exp, o.exp)
        (a, ra), (b, rb) = self._at(e), o._at(e)
        rad = ra if rb is None else rb if ra is None else _plus(ra, rb)
        return MidRad(_plus(a, b), rad, e, self.fast)

    def __neg__(self) -> MidRad:
        return MidRad([[-v for v in row] for row in self.mid], self.rad, self.exp, self.fast)

    def __sub__(self, o: MidRad) -> MidRad:
        return self + (-o)

    def __matmul__(self, o: MidRad) -> MidRad:
        """The product, exact: mid A B, radius |A| R_B + R_A |B| + R_A R_B."""
        prod = _product_fast if self.fast else _product
        mid = prod(self.mid, o.mid)
        terms = []
        if o.rad is not None:
            terms.append(prod(_abs(self.mid), o.rad))
        if self.rad is not None:
            terms.append(prod(self.rad, _abs(o.mid)))
            if o.rad is not None:
                terms.append(prod(self.rad, o.rad))
        rad = None
        for t in terms:
            rad = t if rad is None else _plus(rad, t)
        return MidRad(mid, rad, self.exp + o.exp, self.fast)

    def transpose(self) -> MidRad:
        """Return the transpose."""
        rad = None if self.rad is None else [list(r) for r in zip(*self.rad)]
        return MidRad([list(r) for r in zip(*self.mid)], rad, self.exp, self.fast)

    @classmethod
    def diagonal(cls, n: int, q: Fraction, bits: int, fast: bool = False) -> MidRad:
        """Return the enclosure of q I (exact when q is a dyadic of at most `bits` bits)."""
        rows = [[q if i == j else Fraction(0) for j in range(n)] for i in range(n)]
        return cls.from_exact(rows, bits, fast)

    def bounds(self) -> list[list[tuple[Fraction, Fraction]]]:
        """Return the exact bounds of every entry."""
        unit = Fraction(2) ** self.exp
        return [[((m - r) * unit, (m + r) * unit) for m, r in zip(rm, rr)]
                for rm, rr in zip(self.mid, self.rad or [[0] * len(self.mid[0])] * len(self.mid))]

    def row_magnitudes(self) -> list[Fraction]:
        """Return, per row, an upper bound of sum_j |entry_ij| over the enclosure."""
        rad = [sum(row) for row in self.rad] if self.rad else [0] * len(self.mid)
        return [(sum(map(abs, rm)) + r) * Fraction(2) ** self.exp for rm, r in zip(self.mid, rad)]


def _plus(a: Ints, b: Ints) -> Ints:
    return [[x + y for x, y in zip(ra, rb)] for ra, rb in zip(a, b)]


def _abs(a: Ints) -> Ints:
    return [[abs(x) for x in row] for row in a]


def _product(a: Ints, b: Ints) -> Ints:
    """Return the integer product a b; the columns of b kept as (index, value) of nonzeros."""
    columns = [[(t, v) for t, v in enumerate(col) if v] for col in zip(*b)]
    dense = [list(col) for col in zip(*b)]
    out = []
    for row in a:
        out.append([sum(map(mul, row, col)) if 2 * len(nz) > len(row) else
                    sum(row[t] * v for t, v in nz) for col, nz in zip(dense, columns)])
    return out


def _product_fast(a: Ints, b: Ints) -> Ints:
    """Return the integer product a b in C (python-flint's fmpz_mat)."""
    import flint

    return [[int(v) for v in row] for row in (flint.fmpz_mat(a) * flint.fmpz_mat(b)).tolist()]
