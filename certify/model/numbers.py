"""Exact numbers as people write them (model files, the command line) and as certificates do."""

from __future__ import annotations

from fractions import Fraction

from ..check.expr import ExpressionError, check_characters, parse_number


def parse_rational(text: str) -> Fraction:
    """Return the exact value of '-3', '0.1', '1e-9' or '8/3' (a sign, then a number or p/q)."""
    if not isinstance(text, str):
        raise ExpressionError("expected a number written as text")
    check_characters(text)
    body = text.strip()
    sign = -1 if body.startswith("-") else 1
    body = body[1:].strip() if body[:1] in "+-" and body else body
    if "/" in body:
        num, _, den = body.partition("/")
        den_value = parse_number(den.strip())
        if den_value == 0:
            raise ExpressionError("division by zero in a number", text)
        return sign * parse_number(num.strip()) / den_value
    return sign * parse_number(body)


def rational_text(q: Fraction) -> str:
    """Return q as certificates write exact numbers: "p" or "p/q"."""
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def exact_texts(value):
    """Return a rational, or lists, tuples and dicts of them (nested), as the same nesting of
    exact texts: an interval (lo, hi) becomes [lo, hi], a dict keeps its keys."""
    if isinstance(value, dict):
        return {k: exact_texts(v) for k, v in value.items()}
    if isinstance(value, (list, tuple)):
        return [exact_texts(v) for v in value]
    return rational_text(value)
