"""Inputs users actually write, and hostile ones: one clean line and exit 2, never a traceback,
nothing half-written, files written with the user's permissions."""

from __future__ import annotations

import os
import shutil
import stat
import tempfile
from pathlib import Path

import pytest

from .conftest import EXAMPLES, run_cli

CHEMOSTAT = EXAMPLES / "chemostat.toml"
GUESS = ("--guess", "u=2.9,v=0.35")


def _one_clean_line(proc, *fragments):
    assert proc.returncode == 2, proc.stdout + proc.stderr
    assert "Traceback" not in proc.stderr
    lines = proc.stderr.strip().splitlines()
    assert len(lines) == 1, proc.stderr
    for fragment in fragments:
        assert fragment in lines[0], lines[0]


@pytest.mark.parametrize("command", [("equilibrium", CHEMOSTAT, *GUESS),
                                     ("scan", CHEMOSTAT, "--max-boxes", "50")])
def test_bad_out_paths_are_one_line_errors(tmp_path, command):
    folder = tmp_path / "a-folder"
    folder.mkdir()
    for out, why in [(folder, "this is a folder"),
                     (tmp_path / "missing" / "x.cert.json", "the folder does not exist"),
                     ("/proc/certify-test/x.cert.json", "the folder does not exist"),
                     ("/proc/x.cert.json", "cannot write in the folder")]:
        proc = run_cli(*command, "--out", out)
        _one_clean_line(proc, "--out", why)
    assert list(folder.iterdir()) == []


def test_out_through_a_symbolic_link_to_another_device(tmp_path):
    other = Path(tempfile.mkdtemp(dir="/dev/shm")) if os.path.isdir("/dev/shm") else None
    if other is None or os.stat(other).st_dev == os.stat(tmp_path).st_dev:
        pytest.skip("no second file system to link to")
    try:
        (tmp_path / "link.cert.json").symlink_to(other / "target.cert.json")
        proc = run_cli("equilibrium", CHEMOSTAT, *GUESS, "--out", tmp_path / "link.cert.json")
        assert proc.returncode == 0, proc.stderr
        assert (tmp_path / "link.cert.json").is_symlink()  # the link stays, its file is new
        assert run_cli("verify", tmp_path / "link.cert.json").returncode == 0
    finally:
        shutil.rmtree(other)


def test_certificates_are_written_with_the_users_umask(tmp_path):
    out = tmp_path / "c.cert.json"
    for umask, mode in [(0o022, 0o644), (0o077, 0o600), (0o002, 0o664)]:
        out.unlink(missing_ok=True)
        old = os.umask(umask)
        try:
            proc = run_cli("equilibrium", CHEMOSTAT, *GUESS, "--out", out)
        finally:
            os.umask(old)
        assert proc.returncode == 0, proc.stderr
        assert stat.S_IMODE(out.stat().st_mode) == mode, (oct(umask), oct(out.stat().st_mode))


def test_claims_name_models_only_below_their_own_folder(tmp_path):
    inner = tmp_path / "claims"
    inner.mkdir()
    shutil.copy(CHEMOSTAT, tmp_path / "chemostat.toml")
    claims = inner / "claims.toml"
    claims.write_text('model = "../chemostat.toml"\n[[claim]]\nname = "none up there"\n'
                      'expect = "none"\nregion = { u = ["2", "4"], v = ["2", "4"] }\n')
    proc = run_cli("gate", claims)
    _one_clean_line(proc, f"{claims}:1:", "this file's folder", "--models-anywhere")
    allowed = run_cli("gate", claims, "--models-anywhere")
    assert allowed.returncode == 0, allowed.stdout + allowed.stderr
    assert "HOLDS" in allowed.stdout
