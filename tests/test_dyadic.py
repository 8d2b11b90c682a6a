"""The standard-library arithmetic against mpmath at 100 digits (hypothesis)."""

from __future__ import annotations

from fractions import Fraction as F

import mpmath
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from certify.check.arith import DomainError
from certify.check.dyadic import DyadicArithmetic

FUNCS = ["exp", "log", "sqrt", "sin", "cos", "tan", "tanh", "sinh", "cosh", "atan"]
ends = st.fractions(min_value=-60, max_value=60, max_denominator=1000)
widths = st.one_of(st.just(F(0)), st.fractions(min_value=0, max_value=4, max_denominator=1000))


def _mp(q: F):
    return mpmath.mpf(q.numerator) / q.denominator


@settings(max_examples=400, deadline=None)
@given(st.sampled_from(FUNCS), ends, widths, st.fractions(0, 1), st.sampled_from([53, 113, 300]))
def test_functions_contain_the_100_digit_values(fname, lo, width, t, prec):
    mpmath.mp.dps = 100
    if fname in ("log", "sqrt"):
        lo = abs(lo) + F(1, 10**6)
    hi = lo + width
    ar = DyadicArithmetic(prec)
    try:
        lo_b, hi_b = ar.bounds(ar.call(fname, ar.interval(lo, hi), fname))
    except DomainError:
        assert fname in ("exp", "tan", "sinh", "cosh", "tanh") or width > 0
        return
    for x in (lo, hi, lo + t * width):
        v = getattr(mpmath, fname)(_mp(x))
        assert _mp(lo_b) <= v <= _mp(hi_b), (fname, lo, hi, x)
    if width == 0:  # a point: the enclosure is a few units in the last place wide
        # the argument itself is rounded to prec bits, so allow for its condition number
        # |x f'(x)| / (1 + |f(x)|) (large for tan near a pole)
        f = getattr(mpmath, fname)
        slope = abs(mpmath.diff(f, _mp(lo))) / (1 + abs(f(_mp(lo))))
        scale = (1 + abs(lo)) * (1 + F(str(mpmath.nstr(slope, 15))))
        assert hi_b - lo_b <= (abs(hi_b) + 1) * scale * F(1, 2 ** (prec - 6))


def test_sin_reaches_one_over_an_interval_containing_half_pi():
    ar = DyadicArithmetic(53)
    lo, hi = ar.bounds(ar.call("sin", ar.interval(F(3, 2), F(17, 10)), "sin"))
    assert hi >= 1 and F(9916, 10000) <= lo <= F(99167, 100000)  # sin 1.7 = 0.991664...
    lo, hi = ar.bounds(ar.call("cos", ar.interval(F(3), F(33, 10)), "cos"))
    assert lo <= -1 and F(-98748, 100000) <= hi <= F(-98747, 100000)  # cos 3.3 = -0.987479...


def test_rational_constants_and_products_are_outward():
    ar = DyadicArithmetic(53)
    tenth = ar.const(F(1, 10))
    lo, hi = ar.bounds(tenth)
    assert lo < F(1, 10) < hi and hi - lo <= F(1, 2**56)
    lo, hi = ar.bounds(tenth * tenth * ar.const(F(100)))
    assert lo <= 1 <= hi
    lo, hi = ar.bounds(ar.div(ar.const(F(1)), ar.const(F(3))))
    assert lo < F(1, 3) < hi
    lo, hi = ar.bounds(ar.ipow(ar.interval(F(-1), F(2)), 2))
    assert lo == 0 and hi == 4
    with pytest.raises(DomainError):
        ar.div(ar.const(F(1)), ar.interval(F(-1), F(1)))


def test_sums_of_very_different_magnitudes_stay_outward():
    ar = DyadicArithmetic(53)
    big, tiny = ar.const(F(10**30)), ar.const(F(1, 10**30))
    lo, hi = ar.bounds(big + tiny)
    assert lo <= F(10**30) + F(1, 10**30) <= hi
    lo, hi = ar.bounds(big - tiny)
    assert lo <= F(10**30) - F(1, 10**30) <= hi
