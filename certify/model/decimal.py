"""Decimal text for exact enclosures: rounded outward, with only the digits they support."""

from __future__ import annotations

import math
from fractions import Fraction

MAX_DIGITS = 17


def _exponent(q: Fraction) -> int:
    """Return floor(log10 |q|) for q != 0, exactly."""
    e = len(str(abs(q.numerator))) - len(str(q.denominator))
    while abs(q) >= Fraction(10) ** (e + 1):
        e += 1
    while abs(q) < Fraction(10) ** e:
        e -= 1
    return e


def round_decimal(q: Fraction, digits: int, up: bool) -> str:
    """Return q rounded down (or up) to `digits` significant decimal digits, as text."""
    if q == 0:
        return "0"
    k = digits - 1 - _exponent(q)
    scaled = q * Fraction(10) ** k
    n = math.ceil(scaled) if up else math.floor(scaled)
    return _text(n, k)


def _text(n: int, k: int) -> str:
    """Return the decimal text of n * 10**-k."""
    sign, digits = ("-" if n < 0 else ""), str(abs(n))
    if n == 0:
        return "0"
    if k <= 0:
        exponent = -k
        if len(digits) + exponent > 21:
            tail = digits[1:].rstrip("0")
            return f"{sign}{digits[0]}{'.' + tail if tail else ''}e+{len(digits) - 1 + exponent}"
        return sign + digits + "0" * exponent
    if k >= len(digits) + 6:
        tail = digits[1:].rstrip("0")
        mant = digits[0] + ("." + tail if tail else "")
        return f"{sign}{mant}e-{k - len(digits) + 1}"
    digits = digits.rjust(k + 1, "0")
    whole, frac = digits[:-k], digits[-k:].rstrip("0")
    return sign + whole + ("." + frac if frac else "")


def bounds_text(lo: Fraction, hi: Fraction, digits: int = MAX_DIGITS) -> tuple[str, str]:
    """Return (lo rounded down, hi rounded up) at `digits` significant digits."""
    return round_decimal(lo, digits, up=False), round_decimal(hi, digits, up=True)


def honest_digits(lo: Fraction, hi: Fraction) -> int:
    """Return the fewest significant digits at which outward rounding at most doubles the width.

    A point (lo == hi) gets up to MAX_DIGITS; a wide interval gets few digits, never more than
    it supports.
    """
    for d in range(3, MAX_DIGITS + 1):
        a, b = bounds_text(lo, hi, d)
        if Fraction(b) - Fraction(a) <= 2 * (hi - lo) and (lo != hi or (Fraction(a) == lo
                                                                          and Fraction(b) == hi)):
            return d
    return MAX_DIGITS


def interval_text(lo: Fraction, hi: Fraction) -> str:
    """Return '[a, b]' with outward-rounded ends, or a single number for an exact point."""
    if lo == hi:
        a, b = bounds_text(lo, hi, honest_digits(lo, hi))
        if a == b:
            return a
        return f"{lo.numerator}/{lo.denominator}" if len(str(lo)) <= 20 else f"[{a}, {b}]"
    a, b = bounds_text(lo, hi, honest_digits(lo, hi))
    return f"[{a}, {b}]"


def value_text(lo: Fraction, hi: Fraction) -> str:
    """Return a parameter value as people wrote it: an exact number, p/q, or an interval."""
    def one(q: Fraction) -> str:
        if q.denominator == 1:
            return str(q.numerator)
        a = round_decimal(q, 30, up=False)
        return a if Fraction(a) == q else f"{q.numerator}/{q.denominator}"
    return one(lo) if lo == hi else f"[{one(lo)}, {one(hi)}]"


def membership_text(name: str, lo: Fraction, hi: Fraction) -> str:
    """Return 'x = 0.5' for a point, 'x in 1.44… [1.4409, 1.4410]' for an interval."""
    return f"{name} = {interval_text(lo, hi)}" if lo == hi else f"{name} in {interval_text(lo, hi)}"
