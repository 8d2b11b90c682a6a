"""A short fuzzing budget in CI for the certificate reader and the model loader (tests/fuzz.py)."""

from __future__ import annotations

import pytest

from . import fuzz


@pytest.mark.parametrize("target", sorted(fuzz.TARGETS))
def test_fuzz_target_short_budget(target):
    fuzz.run(target, 400)
