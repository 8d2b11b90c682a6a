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


CENTRE = """name = "linear centre"
variables = ["x", "y"]
[equations]
x = "-y"
y = "x"
[region]
x = ["-1", "1"]
y = ["-1", "1"]
"""


def test_scan_of_a_centre_says_one_equilibrium_at_a_point_and_why_its_kind_is_open(write):
    # x' = -y, y' = x: eigenvalues +-i exactly (common practice: the linear centre).
    model = write("centre.toml", CENTRE)
    proc = run_cli("scan", model)
    assert proc.returncode == 0, proc.stderr
    assert "exactly 1 equilibrium in the region" in proc.stdout
    assert "x = 0" in proc.stdout and "x in 0" not in proc.stdout
    assert "not hyperbolic (proved)" in proc.stdout and "imaginary axis" in proc.stdout
    import json

    zero = json.loads(run_cli("scan", model, "--json").stdout)["equilibria"][0]
    assert zero["not_hyperbolic"] is True and zero["stable_dimension"] is None
    assert "imaginary axis" in zero["reason"]


def test_gate_count_claim_over_a_non_hyperbolic_zero(write, tmp_path):
    write("centre.toml", CENTRE)
    with_dims = write("dims.toml", 'model = "centre.toml"\n[[claim]]\nname = "a sink"\n'
                      'expect = "count"\ncount = 1\nunstable_dimensions = [0]\n')
    junit = tmp_path / "j.xml"
    proc = run_cli("gate", with_dims, "--junit", junit)
    assert proc.returncode == 1 and "Traceback" not in proc.stderr, proc.stderr
    assert proc.stdout.startswith("FAILS") and "no unstable dimension" in proc.stdout
    import xml.etree.ElementTree as ET

    case = ET.parse(junit).getroot().find(".//testcase")
    assert case.find("failure") is not None and "not hyperbolic" in case.find("failure").get(
        "message")
    plain = write("plain.toml", 'model = "centre.toml"\n[[claim]]\nname = "one"\n'
                  'expect = "count"\ncount = 1\n')
    proc = run_cli("gate", plain)
    assert proc.returncode == 0 and proc.stdout.startswith("HOLDS"), proc.stdout


from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

MODELS = {"chemostat.toml": {"u": (0, 4), "v": (0, 4)},
          "fishery.toml": {"B": (-1, 120), "E": (-1, 50)},
          "seasonal-map.toml": {"L": (-1, 30), "A": (-1, 10)}}
OUTCOMES = {"holds": 0, "fails": 0, "undecided": 0}


@st.composite
def claims_files(draw):
    name = draw(st.sampled_from(sorted(MODELS)))
    sides = MODELS[name]
    lines = [f'model = "{name}"']
    for k in range(draw(st.integers(1, 3))):
        expect = draw(st.sampled_from(["count", "none", "equilibrium"]))
        lines += ["[[claim]]", f'name = "claim {k}"', f'expect = "{expect}"']
        if expect == "equilibrium":
            near = ", ".join(f"{v} = {draw(st.integers(lo, hi))}" for v, (lo, hi) in
                             sides.items())
            lines.append(f"near = {{ {near} }}")
            if draw(st.booleans()):
                lines.append(f"unstable_dimension = {draw(st.integers(0, 2))}")
        else:
            cuts = {v: sorted(draw(st.lists(st.integers(lo, hi), min_size=2, max_size=2,
                                            unique=True))) for v, (lo, hi) in sides.items()}
            region = ", ".join(f'{v} = ["{a}", "{b}"]' for v, (a, b) in cuts.items())
            lines.append(f"region = {{ {region} }}")
            if expect == "count":
                count = draw(st.integers(0, 3))
                lines.append(f"count = {count}")
                if draw(st.booleans()):
                    dims = draw(st.lists(st.integers(0, 2), min_size=count, max_size=count))
                    lines.append(f"unstable_dimensions = {dims}")
    return name, "\n".join(lines) + "\n"


@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
@given(claims_files())
def test_random_claims_files_never_raise(tmp_path_factory, case):
    from certify import gate

    name, text = case
    folder = tmp_path_factory.mktemp("claims")
    shutil.copy(EXAMPLES / name, folder / name)
    (folder / "claims.toml").write_text(text)
    claims = gate.load_claims(folder / "claims.toml")
    outcomes = gate.evaluate(claims, None, ("flint",))
    assert len(outcomes) == len(claims.claims)
    for o in outcomes:
        assert o.status in OUTCOMES and o.proved
        OUTCOMES[o.status] += 1
    assert gate.junit_xml(claims, outcomes).startswith(b"<?xml")


def test_benchmark_runner_lists_its_benchmarks_and_refuses_unknown_names():
    import subprocess
    import sys

    runner = [sys.executable, str(EXAMPLES.parent / "benchmarks" / "run.py")]
    listing = subprocess.run([*runner, "--help"], capture_output=True, text=True, timeout=60,
                             check=False)
    assert listing.returncode == 0
    for name in ("eval", "certify", "verify", "scan", "branches", "sweep", "hostile"):
        assert f"\n  {name} " in listing.stdout
    wrong = subprocess.run([*runner, "nope"], capture_output=True, text=True, timeout=60,
                           check=False)
    assert wrong.returncode == 2 and "unknown benchmark 'nope'" in wrong.stderr


def test_a_huge_exact_power_is_undecided_budget_not_a_hang(write):
    # (x - 2)^2 has a double zero at 2 (no Krawczyk proof); the exact proof of its eigenvalue 0
    # would evaluate 2^(10^12): refused by the size bound, before it is computed.
    model = write("tower.toml", 'variables = ["x"]\n[equations]\n'
                  'x = "(x - 2)**2 + 0*((((x**1000)**1000)**1000)**1000)"\n')
    proc = run_cli("equilibrium", model, "--guess", "x=1.9", "--json", timeout=60)
    assert proc.returncode == 1 and "Traceback" not in proc.stderr, proc.stderr
    import json

    result = json.loads(proc.stdout)["results"][0]
    assert (result["verdict"], result["reason"]) == ("undecided", "budget")
    hostile = EXAMPLES.parent / "proofs" / "invalid" / "not-hyperbolic-huge-power.cert.json"
    proc = run_cli("verify", hostile, timeout=60)
    assert proc.returncode == 1 and "REJECTED: budget" in proc.stdout
