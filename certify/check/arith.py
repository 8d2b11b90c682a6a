"""The arithmetic protocol, the rules every arithmetic shares, and two of the arithmetics.

An arithmetic turns exact rationals into its own values and combines them with + - * and
unary minus. Each backend supplies a few primitives only: ``const``, ``interval``, ``bounds``
(exact outward bounds as Fractions), ``ends`` (the two ends as point values), ``hull``,
``magnitude``, ``positive``, ``exact_integer``, ``quotient`` (for a divisor known to exclude 0)
and ``elementary`` (for an argument known to lie in the function's domain). The rules built on
them are written once, in :class:`Rules`: the domain of every operation, division and integer
powers. A value outside a domain raises DomainError, never nan; precision is fixed per instance.
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


class Rules:
    """Domains, division and integer powers over a backend's primitives, written once."""

    def finite(self, y, what: str):
        """Return y, or raise DomainError when the backend produced no finite value."""
        return y

    def nonzero(self, x) -> bool:
        """Return whether x excludes 0."""
        return self.positive(x) or self.positive(-x)

    def div(self, a, b, what: str = "/"):
        """Return a / b, refusing a divisor that may be 0."""
        if not self.nonzero(b):
            raise DomainError(what, "division by an interval containing 0")
        return self.finite(self.quotient(a, b), what)

    def ipow(self, x, n: int, what: str = "**"):
        """Return x**n for an integer n: from the ends, and from 0 for an even power over 0.

        x**n is monotone in x for odd n and on each side of 0 for even n, so the powers of the
        ends (exact points, by repeated squaring) bound it; tight at 0.
        """
        one = self.const(Fraction(1))
        if n < 0:
            return self.div(one, self.ipow(x, -n, what), what)
        if n <= 1:
            return one if n == 0 else x
        if n % 2 == 0 and not self.nonzero(x):
            top = power_by_squaring(one, self.magnitude(x), n)
            return self.finite(self.hull(self.const(Fraction(0)), top), what)
        lo, hi = self.ends(x)
        ends = power_by_squaring(one, lo, n), power_by_squaring(one, hi, n)
        return self.finite(self.hull(*ends), what)

    def call(self, fname: str, x, what: str):
        """Return the whitelisted function fname applied to x, with its domain checked."""
        if fname == "log" and not self.positive(x):
            raise DomainError(what, "log of an interval reaching <= 0")
        if fname == "sqrt" and self.bounds(x)[0] < 0:
            raise DomainError(what, "sqrt of an interval reaching < 0")
        if fname == "tan" and not self.nonzero(self.elementary("cos", x, what)):
            raise DomainError(what, "tan of an interval reaching a pole")
        return self.finite(self.elementary(fname, x, what), what)


class ArbArithmetic(Rules):
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
        """Return a ball containing the closed interval [lo, hi]."""
        return self.const(lo) if lo == hi else self.hull(self.const(lo), self.const(hi))

    def hull(self, a, b):
        """Return a ball containing a and b.

        A ball's radius carries 30 bits, so a union can reach slightly past an end; the union of
        two values of one sign is cut back to that sign (its exact range lies there).
        """
        ball = a.union(b)
        if a >= 0 and b >= 0:
            return ball.nonnegative_part()
        return -((-ball).nonnegative_part()) if a <= 0 and b <= 0 else ball

    def ends(self, x):
        """Return the lower and upper end of x as exact points."""
        return x.lower(), x.upper()

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

    def finite(self, y, what: str):
        """Return y, refusing an infinite or undefined ball."""
        if not y.is_finite():
            raise DomainError(what, "overflow or undefined value")
        return y

    def quotient(self, a, b):
        """Return a / b."""
        return a / b

    def elementary(self, fname: str, x, what: str):
        """Return fname(x); sqrt from its ends (arb's own is wide near 0)."""
        if fname == "sqrt":
            lo, hi = x.lower(), x.upper()
            low = self.flint.arb(0) if not lo > 0 else lo.sqrt()
            return self.hull(low, hi.sqrt())
        return getattr(x, fname)()


class ExactArithmetic(Rules):
    """Exact rational arithmetic on points; any function other than + - * / ** is refused."""

    name = "exact"

    @contextmanager
    def active(self) -> Iterator[None]:
        """Exact arithmetic needs no set-up."""
        yield

    def const(self, q: Fraction) -> Fraction:
        """Return q."""
        return q

    def bounds(self, x: Fraction) -> Bounds:
        """Return (x, x)."""
        return x, x

    def ends(self, x: Fraction) -> tuple[Fraction, Fraction]:
        """Return (x, x)."""
        return x, x

    def hull(self, a: Fraction, b: Fraction) -> Fraction:
        """Return a; exact evaluation only forms the hull of a point with itself."""
        return a

    def magnitude(self, x: Fraction) -> Fraction:
        """Return |x|."""
        return abs(x)

    def exact_integer(self, x: Fraction) -> int | None:
        """Return x as an int when it is an integer."""
        return int(x) if x.denominator == 1 else None

    def positive(self, x: Fraction) -> bool:
        """Return whether x > 0."""
        return x > 0

    def quotient(self, a: Fraction, b: Fraction) -> Fraction:
        """Return a / b."""
        return a / b

    def elementary(self, fname: str, x: Fraction, what: str) -> Fraction:
        """Refuse transcendental functions, which have no exact rational value in general."""
        raise DomainError(what, f"{fname} has no exact rational value")
