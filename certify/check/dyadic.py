"""The second arithmetic: intervals with dyadic endpoints, standard library only.

An endpoint is m * 2**e with integers m, e and |m| < 2**prec; every operation computes the
exact result of the endpoints and rounds the lower end down and the upper end up (floor and
ceiling of integer shifts), so each result contains the exact range. The elementary functions
are built from these operations with argument reduction and a Taylor (or atanh / arctan) series
whose truncation error is added as an explicit interval [-R, R]; each bound is justified where
it is used. Nothing here depends on python-flint: the two arithmetics are independent.
"""

from __future__ import annotations

import math
from contextlib import contextmanager
from fractions import Fraction
from math import isqrt
from typing import Iterator

from .arith import Bounds, DomainError, Rules

GUARD = 24  # extra bits for the series inside elementary functions
MAX_ARGUMENT = 2**20  # |x| beyond this: exp/sin/cos refuse (DomainError), never a huge loop


def _round(m: int, e: int, p: int, up: bool) -> tuple[int, int]:
    """Return m * 2**e rounded to p bits: floor (up=False) or ceiling (up=True)."""
    s = m.bit_length() - p
    if s <= 0:
        return m, e
    return (-((-m) >> s) if up else m >> s), e + s


def _top(m: int, e: int) -> int:
    """Return t with |m * 2**e| < 2**t (for m != 0)."""
    return e + m.bit_length()


def _add(m1: int, e1: int, m2: int, e2: int, p: int, up: bool) -> tuple[int, int]:
    """Return m1 2^e1 + m2 2^e2 rounded in the given direction."""
    if m1 == 0 or m2 == 0:
        return _round(m1 or m2, e1 if m1 else e2, p, up)
    t1, t2 = _top(m1, e1), _top(m2, e2)
    if t1 < t2:
        m1, e1, m2, e2, t1, t2 = m2, e2, m1, e1, t2, t1
    if t1 - t2 > p + 4:
        # |x2| < 2^t2 <= 2^(t1-p-4): replace x2 by a value on the outward side of it, which is
        # 0 or +-2^(t1-p-4); the rounded sum then stays on the correct side of x1 + x2.
        if (m2 > 0) != up:
            return _round(m1, e1, p, up)
        m2, e2 = (1 if up else -1), t1 - p - 4
    e = min(e1, e2)
    return _round((m1 << (e1 - e)) + (m2 << (e2 - e)), e, p, up)


def _less(a: tuple[int, int], b: tuple[int, int]) -> bool:
    """Return whether the dyadic a is below the dyadic b, exactly."""
    (m1, e1), (m2, e2) = a, b
    s1, s2 = (m1 > 0) - (m1 < 0), (m2 > 0) - (m2 < 0)
    if s1 != s2 or s1 == 0:
        return s1 < s2
    t1, t2 = _top(m1, e1), _top(m2, e2)
    if t1 != t2:  # 2^(t-1) <= |x| < 2^t
        return (t1 < t2) == (s1 > 0)
    e = min(e1, e2)
    return (m1 << (e1 - e)) < (m2 << (e2 - e))


class Dyadic:
    """A closed interval [lm 2^le, hm 2^he] at precision p."""

    __slots__ = ("lo", "hi", "p")

    def __init__(self, lo: tuple[int, int], hi: tuple[int, int], p: int):
        self.lo, self.hi, self.p = lo, hi, p

    def __add__(self, o: Dyadic) -> Dyadic:
        p = max(self.p, o.p)
        return Dyadic(_add(*self.lo, *o.lo, p, False), _add(*self.hi, *o.hi, p, True), p)

    def __neg__(self) -> Dyadic:
        return Dyadic((-self.hi[0], self.hi[1]), (-self.lo[0], self.lo[1]), self.p)

    def __sub__(self, o: Dyadic) -> Dyadic:
        return self + (-o)

    def __mul__(self, o: Dyadic) -> Dyadic:
        p = max(self.p, o.p)
        products = [(a[0] * b[0], a[1] + b[1]) for a in (self.lo, self.hi) for b in (o.lo, o.hi)]
        low = high = products[0]
        for q in products[1:]:
            low = q if _less(q, low) else low
            high = q if _less(high, q) else high
        return Dyadic(_round(*low, p, False), _round(*high, p, True), p)

    def positive(self) -> bool:
        """Return whether every point is > 0."""
        return self.lo[0] > 0

    def negative(self) -> bool:
        """Return whether every point is < 0."""
        return self.hi[0] < 0

    def point(self, which: int) -> Dyadic:
        """Return the lower (0) or upper (1) end as a point interval."""
        end = self.hi if which else self.lo
        return Dyadic(end, end, self.p)

    def magnitude(self) -> Dyadic:
        """Return the point max(|lo|, |hi|)."""
        a, b = (abs(self.lo[0]), self.lo[1]), (abs(self.hi[0]), self.hi[1])
        end = b if _less(a, b) else a
        return Dyadic(end, end, self.p)


def _scale(x: Dyadic, k: int) -> Dyadic:
    """Return x * 2**k exactly."""
    return Dyadic((x.lo[0], x.lo[1] + k), (x.hi[0], x.hi[1] + k), x.p)


def _hull(a: Dyadic, b: Dyadic) -> Dyadic:
    lo = a.lo if _less(a.lo, b.lo) else b.lo
    hi = b.hi if _less(a.hi, b.hi) else a.hi
    return Dyadic(lo, hi, max(a.p, b.p))


class DyadicArithmetic(Rules):
    """Outward-rounded dyadic intervals at an explicit precision; standard library only."""

    name = "python"

    def __init__(self, prec: int = 53):
        self.prec = int(prec)
        self._constants: dict[tuple[str, int], Dyadic] = {}

    @contextmanager
    def active(self) -> Iterator[None]:
        """Precision lives in the values: nothing to set up."""
        yield

    def const(self, q: Fraction, p: int | None = None) -> Dyadic:
        """Return an interval containing q with p-bit ends."""
        p = p or self.prec
        num, den = q.numerator, q.denominator
        k = p + den.bit_length() - num.bit_length() + 2
        if den & (den - 1) == 0 and num.bit_length() <= p:  # a short dyadic: exact
            point = (num, 1 - den.bit_length())
            return Dyadic(point, point, p)
        scaled = num << k if k >= 0 else num
        den_k = den if k >= 0 else den << -k
        lo, hi = scaled // den_k, -((-scaled) // den_k)
        return Dyadic(_round(lo, -k, p, False), _round(hi, -k, p, True), p)

    def interval(self, lo: Fraction, hi: Fraction) -> Dyadic:
        """Return an interval containing [lo, hi]."""
        return Dyadic(self.const(lo).lo, self.const(hi).hi, self.prec)

    def magnitude(self, x: Dyadic) -> Dyadic:
        """Return the point max(|lo|, |hi|)."""
        return x.magnitude()

    def bounds(self, x: Dyadic) -> Bounds:
        """Return the exact ends as Fractions."""
        def f(m, e):
            return Fraction(m << e) if e >= 0 else Fraction(m, 1 << -e)
        return f(*x.lo), f(*x.hi)

    def exact_integer(self, x: Dyadic) -> int | None:
        """Return x as an int when it is an exact integer point."""
        lo, hi = self.bounds(x)
        return int(lo) if lo == hi and lo.denominator == 1 else None

    def positive(self, x: Dyadic) -> bool:
        """Return whether every point of x is > 0."""
        return x.positive()

    def ends(self, x: Dyadic) -> tuple[Dyadic, Dyadic]:
        """Return the two ends as point intervals."""
        return x.point(0), x.point(1)

    def hull(self, a: Dyadic, b: Dyadic) -> Dyadic:
        """Return the smallest interval holding a and b."""
        return _hull(a, b)

    def quotient(self, a: Dyadic, b: Dyadic) -> Dyadic:
        """Return a / b for b excluding 0: a times [1/hi, 1/lo], each end rounded outward."""
        p = max(a.p, b.p)

        def recip(m: int, e: int, up: bool) -> tuple[int, int]:
            k = p + m.bit_length() + 2  # 1/(m 2^e) = 2^k / m * 2^(-k-e)
            q = -((-(1 << k)) // m) if up else (1 << k) // m
            return _round(q, -k - e, p, up)

        return a * Dyadic(recip(*b.hi, False), recip(*b.lo, True), p)

    # ------------------------------------------------------------ elementary functions

    def elementary(self, fname: str, x: Dyadic, what: str) -> Dyadic:
        """Return fname(x) for x in its domain; monotone pieces use the ends."""
        if fname in ("exp", "log", "sqrt", "atan", "sinh", "tanh"):
            f = getattr(self, "_" + fname)
            return Dyadic(f(x.point(0), what).lo, f(x.point(1), what).hi, x.p)
        if fname == "cosh":
            top = self._cosh(x.magnitude(), what).hi
            if x.positive() or x.negative():
                ends = _hull(self._cosh(x.point(0), what), self._cosh(x.point(1), what))
                return Dyadic(ends.lo, top, x.p)
            return Dyadic(self.const(Fraction(1)).lo, top, x.p)
        if fname == "cos":
            return self._cos_interval(x, what)
        if fname == "sin":
            return self._cos_interval(x - _scale(self._pi(x.p + GUARD), -1), what)
        return self.div(self.elementary("sin", x, what), self._cos_interval(x, what), what)

    def _series(self, first: Dyadic, ratio, w: int) -> Dyadic:
        """Return t_0 + t_1 + ... with t_0 = first, t_{k+1} = t_k * ratio(k), plus the tail.

        Every caller keeps |ratio(k)| <= 1/2 for all k (reduced arguments), so the terms after
        t_k add up to at most 2 |t_{k+1}|; summing stops once that bound is below 2^-w and adds
        it as [-R, R].
        """
        total, term, k = first, first, 0
        while True:
            term = term * ratio(k)
            k += 1
            m, e = term.magnitude().hi
            if _less((m, e + 1), (1, -w)) or k > 40 * w:  # the tail is at most 2 |term|
                return total + Dyadic((-m, e + 1), (m, e + 1), w)
            total = total + term

    def _narrow(self, x: Dyadic, p: int) -> Dyadic:
        """Return x with its ends rounded outward to p bits."""
        return Dyadic(_round(*x.lo, p, False), _round(*x.hi, p, True), p)

    def _c(self, q, w: int) -> Dyadic:
        return self.const(Fraction(q), w)

    def _exp(self, x: Dyadic, what: str) -> Dyadic:
        """exp at a point: x = r 2^s with |r| <= 2^-8, Taylor series of exp(r), s squarings."""
        if x.lo[0] == 0:
            return self.const(Fraction(1), x.p)
        t = _top(*x.lo)
        if t > 21:
            raise DomainError(what, "exp of an argument beyond 2^20")
        s = max(0, t + 8)
        w = x.p + s + GUARD  # each squaring at most doubles the relative error
        r = _scale(Dyadic(x.lo, x.lo, w), -s)
        total = self._series(self._c(1, w), lambda k: self.div(r, self._c(k + 1, w)), w)
        for _ in range(s):
            total = total * total
        return self._narrow(total, x.p)

    def _atanh2(self, z: Dyadic, w: int) -> Dyadic:
        """Return 2 atanh(z) = 2 sum z^(2k+1)/(2k+1) for |z| <= 1/3 (ratio <= z^2 <= 1/9)."""
        z2 = z * z
        return _scale(self._series(z, lambda k: self.div(z2 * self._c(2 * k + 1, w),
                                                         self._c(2 * k + 3, w)), w), 1)

    def _ln2(self, w: int) -> Dyadic:
        """Return log 2 = 2 atanh(1/3)."""
        key = ("ln2", w)
        if key not in self._constants:
            self._constants[key] = self._atanh2(self.div(self._c(1, w), self._c(3, w)), w)
        return self._constants[key]

    def _log(self, x: Dyadic, what: str) -> Dyadic:
        """log at a point m 2^e: with y = m 2^-b in [3/4, 3/2),
        log x = 2 atanh((y - 1)/(y + 1)) + (e + b) log 2."""
        m, e = x.lo
        b = m.bit_length()
        if 4 * m < 3 << b:  # m 2^-b < 3/4: use twice that, in [1, 3/2)
            b -= 1
        k = e + b
        w = x.p + GUARD + k.bit_length()
        y = Dyadic((m, -b), (m, -b), w)
        one = self._c(1, w)
        z = self.div(y - one, y + one)  # in [-1/7, 1/5]
        return self._narrow(self._atanh2(z, w) + self._c(k, w) * self._ln2(w), x.p)

    def _sqrt(self, x: Dyadic, what: str) -> Dyadic:
        """sqrt at a point by the exact integer square root, rounded outward."""
        m, e = x.lo
        if m == 0:
            return x
        k = max(0, 2 * (x.p + 2) - m.bit_length())
        k += (e - k) % 2
        big = m << k
        r = isqrt(big)
        half = (e - k) // 2
        hi = r if r * r == big else r + 1
        return Dyadic(_round(r, half, x.p, False), _round(hi, half, x.p, True), x.p)

    def _arctan_series(self, t: Dyadic, w: int) -> Dyadic:
        """Return atan(t) = sum (-1)^k t^(2k+1)/(2k+1) for |t| <= 1/5 (ratio <= t^2)."""
        t2 = -(t * t)
        return self._series(t, lambda k: self.div(t2 * self._c(2 * k + 1, w),
                                                   self._c(2 * k + 3, w)), w)

    def _pi(self, w: int) -> Dyadic:
        """Return pi = 16 atan(1/5) - 4 atan(1/239) (Machin 1706)."""
        key = ("pi", w)
        if key not in self._constants:
            a = self._arctan_series(self.div(self._c(1, w), self._c(5, w)), w)
            b = self._arctan_series(self.div(self._c(1, w), self._c(239, w)), w)
            self._constants[key] = _scale(a, 4) - _scale(b, 2)
        return self._constants[key]

    def _atan(self, x: Dyadic, what: str) -> Dyadic:
        """atan at a point: atan x = +-pi/2 - atan(1/x) for |x| > 1, then three halvings
        atan t = 2 atan(t / (1 + sqrt(1 + t^2))), leaving |t| <= tan(pi/32) < 1/5."""
        if x.lo[0] == 0:
            return x
        w = x.p + GUARD
        t = Dyadic(x.lo, x.lo, w)
        one = self._c(1, w)
        outer = None
        if _top(*x.lo) > 1 and not _less(t.magnitude().hi, (1, 0)):
            outer = _scale(self._pi(w), -1)
            outer = outer if x.lo[0] > 0 else -outer
            t = self.div(one, t)
        for _ in range(3):
            root = one + t * t
            root = Dyadic(self._sqrt(root.point(0), what).lo, self._sqrt(root.point(1), what).hi, w)
            t = self.div(t, one + root)
        a = _scale(self._arctan_series(t, w), 3)
        return self._narrow(a if outer is None else outer - a, x.p)

    def _small(self, x: Dyadic) -> bool:
        return _less(x.magnitude().hi, (1, -4))  # |x| < 1/16

    def _sinh(self, x: Dyadic, what: str) -> Dyadic:
        """sinh at a point: the odd series for |x| < 1/16, else (e^x - e^-x)/2."""
        w = x.p + GUARD
        t = Dyadic(x.lo, x.lo, w)
        if self._small(t):
            t2 = t * t
            s = self._series(t, lambda k: self.div(t2, self._c((2 * k + 2) * (2 * k + 3), w)), w)
        else:
            s = _scale(self._exp(t, what) - self._exp(-t, what), -1)
        return self._narrow(s, x.p)

    def _cosh(self, x: Dyadic, what: str) -> Dyadic:
        """cosh at a point: (e^x + e^-x)/2."""
        t = Dyadic(x.lo, x.lo, x.p + GUARD)
        return self._narrow(_scale(self._exp(t, what) + self._exp(-t, what), -1), x.p)

    def _tanh(self, x: Dyadic, what: str) -> Dyadic:
        """tanh at a point: sinh/cosh for |x| < 1/16, else 1 - 2/(e^(2x) + 1)."""
        w = x.p + GUARD
        t = Dyadic(x.lo, x.lo, w)
        if self._small(t):
            return self._narrow(self.div(self._sinh(t, what), self._cosh(t, what)), x.p)
        if _top(*x.lo) > 12:  # |x| >= 2048: 0 < 1 - |tanh x| < 2 e^(-2|x|) < 2^-4000
            near = Dyadic(_add(1, 0, -1, -4000, w, False), (1, 0), w)
            return self._narrow(near if x.lo[0] > 0 else -near, x.p)
        one = self._c(1, w)
        e2 = self._exp(_scale(t, 1), what)
        return self._narrow(one - self.div(self._c(2, w), e2 + one), x.p)

    def _cos_point(self, x: Dyadic, w: int) -> Dyadic:
        """cos over a (thin) interval: x = r + k pi/2 with |r| <= pi/4 + tiny, then series."""
        half_pi = _scale(self._pi(w), -1)
        lo, hi = self.bounds(self.div(x, half_pi))
        k = round((lo + hi) / 2)
        r = x - self._c(k, w) * half_pi
        r2 = -(r * r)
        cos_r = self._series(self._c(1, w), lambda j: self.div(
            r2, self._c((2 * j + 1) * (2 * j + 2), w)), w)
        sin_r = self._series(r, lambda j: self.div(r2, self._c((2 * j + 2) * (2 * j + 3), w)), w)
        return [cos_r, -sin_r, -cos_r, sin_r][k % 4]

    def _cos_interval(self, x: Dyadic, what: str) -> Dyadic:
        """cos over an interval: the ends, and +-1 wherever a multiple k pi may lie inside."""
        if max(_top(*x.lo), _top(*x.hi)) > 21:
            raise DomainError(what, "cos or sin of an argument beyond 2^20")
        w = x.p + GUARD
        lo, hi = self.bounds(x)
        one = self._c(1, x.p)
        if hi - lo >= 7:  # wider than 2 pi
            return Dyadic((-one.hi[0], one.hi[1]), one.hi, x.p)
        pi = self._pi(w)
        out = _hull(self._cos_point(Dyadic(x.lo, x.lo, w), w),
                    self._cos_point(Dyadic(x.hi, x.hi, w), w))
        # 3.1 < pi < 3.2, so every k with k pi in [lo, hi] lies in this range.
        a, b = Fraction(31, 10), Fraction(32, 10)
        for k in range(math.floor(min(lo / a, lo / b)) - 1, math.ceil(max(hi / a, hi / b)) + 2):
            kpi = self._c(k, w) * pi
            if not (_less(kpi.hi, x.lo) or _less(x.hi, kpi.lo)):
                extreme = one if k % 2 == 0 else -one
                out = _hull(out, extreme)
        return self._narrow(out, x.p)
