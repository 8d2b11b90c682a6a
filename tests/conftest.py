"""Shared helpers: run the command line in-process or as a real subprocess."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"


def run_cli(*args: str, timeout: float = 120) -> subprocess.CompletedProcess:
    """Run `certify ARGS` in a subprocess and return the completed process."""
    return subprocess.run([sys.executable, "-m", "certify.cli", *map(str, args)],
                          capture_output=True, text=True, timeout=timeout, cwd=ROOT)


@pytest.fixture
def write(tmp_path):
    """Write a text file in a temporary folder and return its path."""
    def _write(name: str, text: str) -> Path:
        p = tmp_path / name
        p.write_text(text)
        return p
    return _write


def pytest_configure(config):
    """With CERTIFY_FORCE_UNDECIDED=1 every search answers undecided (a one-off check).

    The search's calls of the checker are made to refuse everything, so every verdict the search
    would report becomes undecided; the tests of decided cases must then fail (see
    DEVELOPERS.md). `certify verify` and the kernel's own tests are left alone.
    """
    import os

    if os.environ.get("CERTIFY_FORCE_UNDECIDED") != "1":
        return
    from certify.check import CertificateRejected
    from certify.search import equilibrium, region, sweep

    def refuse(*args, **kwargs):
        raise CertificateRejected("forced", "search", "CERTIFY_FORCE_UNDECIDED is set")

    for module in (equilibrium, region, sweep):
        module.check = refuse
