"""The words of verdicts: the trade's names for kinds of equilibria, counts, axis crossings."""

from __future__ import annotations

TYPES = {"flow": ("sink", "source"), "map": ("attracting", "repelling")}
AXIS_WORDS = {"zero": "an eigenvalue exactly 0",
              "imaginary pair": "a pair of eigenvalues exactly on the imaginary axis (±iω)",
              "+1": "a multiplier exactly +1", "-1": "a multiplier exactly -1",
              "complex pair": "a pair of multipliers exactly on the unit circle"}


def type_word(kind: str, stable: int, unstable: int) -> str:
    """Return sink / source / saddle (flows) or attracting / repelling / saddle (maps)."""
    stable_word, unstable_word = TYPES[kind]
    return stable_word if unstable == 0 else unstable_word if stable == 0 else "saddle"


def axis_word(eigenvalue: str) -> str:
    """Return how a proof of non-hyperbolicity found the spectrum on the axis (unit circle)."""
    return AXIS_WORDS.get(eigenvalue, eigenvalue)


def plural(count: int, one: str, many: str | None = None) -> str:
    """Return '1 equilibrium', '3 equilibria', '0 boxes'."""
    return f"{count} {one if count == 1 else many or one + 's'}"
