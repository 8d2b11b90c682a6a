"""Arithmetics for the checker: python-flint's arb balls, and exact rationals.

An arithmetic turns exact rationals into its own numbers, combines them with + - * and the
methods below, and tells exact outward bounds back as Fractions. Every method that can leave
its domain raises DomainError instead of returning nan; precision is fixed per instance.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from fractions import Fraction

Bounds = tuple[Fraction, Fraction]


class DomainError(ArithmeticError):
    """A function was applied outside its domain over a box (log of [-1, 2], 1/[0, 1], ...)."""

    def __init__(self, what: str, reason: str):
        self.what, self.reason = what, reason
        super().__init__(f"{reason} in '{what}'")


class BudgetError(ArithmeticError):
    """An exact computation whose size bound, known before it starts, is over the limit."""


def power_by_squaring(one, base, n: int):
    """Return base**n for an integer n >= 0 by repeated squaring (one: the unit)."""
    result = one
    while n:
        if n & 1:
            result = result * base
        n >>= 1
        if n:
            base = base * base
    return result


class ArbArithmetic:
    """Outward-rounded ball arithmetic from python-flint at an explicit precision in bits."""

    name = "flint"

    def __init__(self, prec: int = 53):
        import flint

        self.flint, self.prec = flint, int(prec)

    @contextmanager
    def active(self) -> Iterator[None]:
        """Run the enclosed computation at this instance's precision."""
        with self.flint.ctx.workprec(self.prec):
            yield

    def const(self, q: Fraction):
        """Return a ball containing the rational q."""
        return self.flint.arb(self.flint.fmpq(q.numerator, q.denominator))

    def interval(self, lo: Fraction, hi: Fraction):
        """Return a ball containing the closed interval [lo, hi].

        A ball's radius carries 30 bits, so a union can reach slightly past an end; an interval
        of one sign is cut back to that sign (its exact range lies there).
        """
        if lo == hi:
            return self.const(lo)
        ball = self.const(lo).union(self.const(hi))
        if lo >= 0:
            return ball.nonnegative_part()
        return -((-ball).nonnegative_part()) if hi <= 0 else ball

    def magnitude(self, x):
        """Return a ball whose upper end bounds |x| from above."""
        return x.abs_upper()

    def bounds(self, x) -> Bounds:
        """Return exact rational bounds lo <= x <= hi."""
        if not x.is_finite():
            raise DomainError("?", "overflow or undefined value")
        m, e = x.mid().man_exp()
        r, f = x.rad().man_exp()
        m, e, r, f = int(m), int(e), int(r), int(f)
        k = min(e, f, 0)  # common scale 2^k
        mid, rad = m << (e - k), r << (f - k)
        return Fraction(mid - rad, 1 << -k), Fraction(mid + rad, 1 << -k)

    def exact_integer(self, x) -> int | None:
        """Return x as an int when it is an exact integer, else None."""
        if x.is_exact() and x.is_integer():
            return int(x.unique_fmpz())
        return None

    def positive(self, x) -> bool:
        """Return whether every point of x is > 0."""
        return bool(x > 0)

    def _finite(self, y, what: str):
        if not y.is_finite():
            raise DomainError(what, "overflow or undefined value")
        return y

    def div(self, a, b, what: str = "/"):
        """Return a / b, refusing a divisor that may be 0."""
        if not (b > 0 or b < 0):
            raise DomainError(what, "division by an interval containing 0")
        return self._finite(a / b, what)

    def ipow(self, x, n: int, what: str = "**"):
        """Return x**n for an integer n, tight at 0 (arb's own ** gives nan when mid is 0)."""
        if n < 0:
            return self.div(self.const(Fraction(1)), self.ipow(x, -n, what), what)
        if n == 0:
            return self.const(Fraction(1))
        if n == 1:
            return x
        arb = self.flint.arb
        if n % 2 == 0:
            lo, hi = x.abs_lower(), x.abs_upper()
            low = arb(0) if lo == 0 else self._point_pow(lo, n)
            return self._finite(low.union(self._point_pow(hi, n)).nonnegative_part(), what)
        lo, hi = x.lower(), x.upper()
        return self._finite(self._point_pow(lo, n).union(self._point_pow(hi, n)), what)

    def _point_pow(self, p, n: int):
        """Return p**n for an exact point p by repeated squaring in ball arithmetic."""
        return power_by_squaring(self.flint.arb(1), p, n)

    def call(self, fname: str, x, what: str):
        """Return the whitelisted function fname applied to x, with its domain checked."""
        if fname == "log" and not x > 0:
            raise DomainError(what, "log of an interval reaching <= 0")
        if fname == "sqrt":
            if not x >= 0:
                raise DomainError(what, "sqrt of an interval reaching < 0")
            lo, hi = x.lower(), x.upper()
            low = self.flint.arb(0) if not lo > 0 else lo.sqrt()
            return self._finite(low.union(hi.sqrt()).nonnegative_part(), what)
        if fname == "tan" and not (x.cos() > 0 or x.cos() < 0):
            raise DomainError(what, "tan of an interval reaching a pole")
        return self._finite(getattr(x, fname)(), what)


class ExactArithmetic:
    """Exact rational arithmetic on points; any function other than + - * / ** is refused."""

    name = "exact"

    @contextmanager
    def active(self) -> Iterator[None]:
        """Exact arithmetic needs no set-up."""
        yield

    def const(self, q: Fraction) -> Fraction:
        """Return q."""
        return q

    def exact_integer(self, x: Fraction) -> int | None:
        """Return x as an int when it is an integer."""
        return int(x) if x.denominator == 1 else None

    def positive(self, x: Fraction) -> bool:
        """Return whether x > 0."""
        return x > 0

    def div(self, a: Fraction, b: Fraction, what: str = "/") -> Fraction:
        """Return a / b for b != 0."""
        if b == 0:
            raise DomainError(what, "division by 0")
        return a / b

    def ipow(self, x: Fraction, n: int, what: str = "**") -> Fraction:
        """Return x**n exactly."""
        if n < 0 and x == 0:
            raise DomainError(what, "division by 0")
        return x**n

    def call(self, fname: str, x: Fraction, what: str) -> Fraction:
        """Refuse transcendental functions, which have no exact rational value in general."""
        raise DomainError(what, f"{fname} has no exact rational value")
