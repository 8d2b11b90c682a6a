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
