"""The trusted checker's branch coverage stays at 100% (the kernel is small and read:
docs/ARCHITECTURE.md).

Runs the deterministic kernel tests under coverage.py in a subprocess and requires every line
and branch of certify/check/ to be taken; a new branch needs its test in test_kernel_paths.py.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
DETERMINISTIC = ["tests/test_kernel_paths.py", "tests/test_exact.py", "tests/test_corpus.py",
                 "tests/test_certificates.py", "tests/test_expressions.py",
                 "tests/test_models.py", "tests/test_kernel_guards.py",
                 "tests/test_equilibrium.py", "tests/test_scan.py", "tests/test_branches.py",
                 "tests/test_scale.py"]
SKIP = "not random and not never_certified and not linear_family"  # the slow property tests


def test_checker_branch_coverage_is_complete(tmp_path):
    data = tmp_path / ".coverage"
    env = {"COVERAGE_FILE": str(data)}
    import os

    env = {**os.environ, **env}
    run = subprocess.run([sys.executable, "-m", "coverage", "run", "--branch",
                          "--source=certify/check", "-m", "pytest", "-q", "-x",
                          "-p", "no:cacheprovider", "-k", SKIP, *DETERMINISTIC],
                         cwd=ROOT, env=env, capture_output=True, text=True, timeout=900,
                         check=False)
    assert run.returncode == 0, run.stdout[-3000:] + run.stderr[-3000:]
    report = subprocess.run([sys.executable, "-m", "coverage", "report", "--show-missing",
                             "--fail-under=100"], cwd=ROOT, env=env, capture_output=True,
                            text=True, timeout=120, check=False)
    assert report.returncode == 0, report.stdout
