"""Parameter sweeps: published check values per cell, durable results, executors, maps."""

from __future__ import annotations

import json
import os
import random
import signal
import subprocess
import sys
import time
from fractions import Fraction as F
from pathlib import Path

import pytest

from certify import verify
from certify.api import sweep
from certify.cli import main
from certify.io.sweep_store import read_results

from .conftest import ROOT
from .published import LORENZ_HOPF_RHO, brusselator_hopf_b, brusselator_model

# The Lorenz model of tests/published.py, written as a model file (the sweep reads files).
LORENZ = """
name = "Lorenz 1963"
kind = "flow"
variables = ["x", "y", "z"]
[parameters]
sigma = 10
rho = 28
beta = "8/3"
[equations]
x = "sigma*(y - x)"
y = "x*(rho - z) - y"
z = "x*y - beta*z"
[[guesses]]
x = 6.3
y = 6.3
z = 15
"""

FOLD = """
name = "Saddle-node normal form"
kind = "flow"
variables = ["x"]
[parameters]
mu = 0
[equations]
x = "mu - x**2"
[region]
x = ["-2", "2"]
"""


def brusselator():
    # Prigogine & Lefever 1968 (tests/published.py): equilibrium (a, b/a), Hopf at b = 1 + a^2.
    return brusselator_model("1", "2", guesses=[{"x": 1.2, "y": 2.5}])


def by_cell(folder) -> dict:
    return {tuple(r["cell"]): r for r in read_results(folder)}


def check_certificates(folder, records) -> int:
    """Every certificate a line names verifies, covers the line's cell and says what the line
    says (the sweep's lines are only a summary of the certificates). Returns the number
    checked."""
    seen = {}
    for r in records:
        entries = r.get("equilibria") or [r]
        for e in entries:
            if e.get("certificate") is None:
                assert r["status"] == "undecided"
                continue
            path = Path(folder) / e["certificate"]
            if path not in seen:
                seen[path] = verify(path, "flint")
            v = seen[path]
            for name, (lo, hi) in r["parameters"].items():
                c_lo, c_hi = v.parameters[name]
                assert c_lo <= F(lo) and F(hi) <= c_hi, (path, name)
            if "count" in e and "equilibria" not in r:
                assert v.claim["verdict"] == "count" and v.claim["count"] == e["count"]
            else:
                assert v.claim["verdict"] == "hyperbolic"
                assert v.claim["unstable_dimension"] == e["unstable_dimension"]
    return len(seen)


def test_brusselator_grid_sinks_below_sources_above_nothing_across(tmp_path):
    # Prigogine & Lefever 1968: trace of the Jacobian at (a, b/a) is b - 1 - a^2, determinant
    # a^2 > 0: a sink below b = 1 + a^2, a source above.
    result = sweep(brusselator(), {"a": ("0.5", "2", 20), "b": ("1", "5", 20)}, refine=2,
                   workers=2, out=tmp_path / "bru")
    cells = by_cell(result.folder)
    assert len(cells) == 400
    half = F(1, 10)  # half a cell width in b
    below = above = 0
    for r in cells.values():
        (a0, a1), (b0, b1) = ([F(v) for v in r["parameters"][k]] for k in ("a", "b"))
        e = r["equilibria"][0]
        if b1 + half <= brusselator_hopf_b(a0):
            below += 1
            assert e["verdict"] == "hyperbolic" and e["type"] == "sink", r
        elif b0 - half >= brusselator_hopf_b(a1):
            above += 1
            assert e["verdict"] == "hyperbolic" and e["type"] == "source", r
        if b0 < brusselator_hopf_b(a1) and b1 > brusselator_hopf_b(a0):  # the curve meets it
            assert e["verdict"] == "undecided", r
    assert below > 100 and above > 150
    assert check_certificates(result.folder, cells.values()) > 0
    # blocks first: far fewer proofs than cells away from the curve
    assert result.stats.blocks < 2 * 400


def test_lorenz_56_cells_sinks_then_saddles(tmp_path, write):
    # Lorenz 1963: C+ is stable for 1 < rho < rho_H = sigma (sigma + beta + 3) / (sigma - beta - 1)
    # = 470/19 for sigma = 10, beta = 8/3, with two unstable directions above it.
    model = write("lorenz.toml", LORENZ)
    out = tmp_path / "lz"
    code = main(["sweep", str(model), "--grid", "rho=2..30:56", "--out", str(out),
                 "--workers", "1", "--json"])
    assert code == 1  # the cell with rho_H stays undecided
    cells = by_cell(out)
    rho_h = LORENZ_HOPF_RHO.value
    for r in cells.values():
        lo, hi = (F(v) for v in r["parameters"]["rho"])
        e = r["equilibria"][0]
        if hi < rho_h:
            assert e["type"] == "sink" and e["unstable_dimension"] == 0
        elif lo > rho_h:
            assert e["verdict"] == "hyperbolic" and e["unstable_dimension"] == 2
        else:
            assert e["verdict"] == "undecided"
    assert len(cells) == 56
    check_certificates(out, cells.values())


def test_fold_scan_counts_zero_then_two(tmp_path, write):
    # x' = mu - x^2: no equilibrium for mu < 0, two (+-sqrt(mu)) for mu > 0 (common practice:
    # the saddle-node normal form).
    model = write("fold.toml", FOLD)
    result = sweep(model, {"mu": ("-1", "1", 9)}, scan=True, workers=2, out=tmp_path / "fold")
    cells = by_cell(result.folder)
    for r in cells.values():
        lo, hi = (F(v) for v in r["parameters"]["mu"])
        if hi < 0:
            assert r["count"] == 0
        elif lo > 0:
            assert r["count"] == 2 and r["stable_dimensions"] == [0, 1]
        else:
            assert r["status"] == "undecided" and r["count"] is None
    check_certificates(result.folder, cells.values())


def _sweep_cmd(model, out, *extra):
    return [sys.executable, "-m", "certify.cli", "sweep", str(model), "--grid", "rho=2..30:28",
            "--out", str(out), "--workers", "1", "--refine", "1", "--json", *extra]


def test_killed_sweep_resumes_to_the_same_results(tmp_path, write):
    model = write("lorenz.toml", LORENZ)
    reference = tmp_path / "reference"
    started = time.monotonic()
    done = subprocess.run(_sweep_cmd(model, reference), capture_output=True, text=True,
                          timeout=300, cwd=ROOT)
    assert done.returncode in (0, 1), done.stderr
    duration = time.monotonic() - started  # kills land inside a run, however fast the machine
    expected = (reference / "results.jsonl").read_text().splitlines()
    rng = random.Random(7)
    out = tmp_path / "killed"
    kills, first = 0, True
    for start in range(12):
        cmd = _sweep_cmd(model, out) if first else _sweep_cmd(model, out, "--resume")
        proc = subprocess.Popen(cmd, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=ROOT)
        time.sleep(rng.uniform(0.4, 0.9) * duration)
        if start < 3 and proc.poll() is None:  # three kills at most, then it runs to the end
            os.kill(proc.pid, signal.SIGKILL)
            proc.wait()
            kills += 1
            first = False if (out / "manifest.json").exists() else first
            continue
        proc.communicate(timeout=300)
        assert proc.returncode in (0, 1)
        break
    else:
        pytest.fail("the sweep did not finish after 12 starts")
    lines = (out / "results.jsonl").read_text().splitlines()
    assert all(json.loads(line) for line in lines)  # no torn line
    cells = [tuple(json.loads(line)["cell"]) for line in lines]
    assert len(cells) == len(set(cells)) == 28  # none lost, none twice
    assert {json.dumps(json.loads(x), sort_keys=True) for x in lines} == \
        {json.dumps(json.loads(x), sort_keys=True) for x in expected}
    assert kills >= 1


def test_torn_last_line_is_cut_on_resume(tmp_path, write):
    model = write("lorenz.toml", LORENZ)
    out = tmp_path / "s"
    assert main(["sweep", str(model), "--grid", "rho=2..12:4", "--out", str(out),
                 "--workers", "1"]) == 0
    lines = (out / "results.jsonl").read_bytes().splitlines(keepends=True)
    (out / "results.jsonl").write_bytes(b"".join(lines[:2]) + lines[2][:25])
    assert len(list(read_results(out))) == 2  # the torn line is skipped when read
    assert main(["sweep", str(model), "--grid", "rho=2..12:4", "--out", str(out),
                 "--workers", "1", "--resume"]) == 0
    again = [json.loads(x) for x in (out / "results.jsonl").read_text().splitlines()]
    assert sorted(tuple(r["cell"]) for r in again) == [(0,), (1,), (2,), (3,)]


def test_resume_refuses_changed_arguments_or_model(tmp_path, write, capsys):
    model = write("lorenz.toml", LORENZ)
    out = tmp_path / "s"
    assert main(["sweep", str(model), "--grid", "rho=2..12:4", "--out", str(out),
                 "--workers", "1"]) == 0
    capsys.readouterr()
    before = (out / "results.jsonl").read_bytes()
    assert main(["sweep", str(model), "--grid", "rho=2..12:5", "--out", str(out),
                 "--workers", "1", "--resume"]) == 2
    err = capsys.readouterr().err
    assert "manifest.json" in err and "grid" in err and len(err.strip().splitlines()) == 1
    assert main(["sweep", str(model), "--grid", "rho=2..12:4", "--out", str(out),
                 "--workers", "1"]) == 2
    assert "--resume" in capsys.readouterr().err
    model.write_text(LORENZ.replace("sigma = 10", "sigma = 11"))
    assert main(["sweep", str(model), "--grid", "rho=2..12:4", "--out", str(out),
                 "--workers", "1", "--resume"]) == 2
    assert "model file changed" in capsys.readouterr().err
    assert (out / "results.jsonl").read_bytes() == before  # nothing lost or half-written


@pytest.mark.parametrize("grid, why", [("rho=2..30", "NAME=LO..HI:N"),
                                       ("rho=30..2:4", "empty"),
                                       ("rho=2..30:x", "integer"),
                                       ("kappa=2..30:4", "no parameter named"),
                                       ("rho=2..30:0", "positive")])
def test_bad_grids_are_one_line_errors(tmp_path, write, capsys, grid, why):
    model = write("lorenz.toml", LORENZ)
    assert main(["sweep", str(model), "--grid", grid, "--out", str(tmp_path / "s")]) == 2
    err = capsys.readouterr().err.strip()
    assert why in err and len(err.splitlines()) == 1 and "Traceback" not in err
    assert not (tmp_path / "s").exists()


def test_api_iterates_cells_and_writes_the_same_lines(tmp_path, write):
    model = write("lorenz.toml", LORENZ)
    result = sweep(model, {"rho": ("2", "12", 4)}, workers=1)
    cells = list(result)
    assert [c["cell"] for c in cells] == [[0], [1], [2], [3]] or len(cells) == 4
    assert all(c["equilibria"][0]["type"] == "sink" for c in cells)
    copy = tmp_path / "copy.jsonl"
    result.write_jsonl(copy)
    assert copy.read_text() == result.results_path.read_text()
    assert result.summary()["certified"] == 4


def test_maps_are_drawn_and_not_blank(tmp_path, write):
    import matplotlib.image

    model = write("lorenz.toml", LORENZ)
    out = tmp_path / "s"
    main(["sweep", str(model), "--grid", "rho=20..30:8", "--out", str(out), "--workers", "1"])
    png = matplotlib.image.imread(out / "map.png")
    assert png.shape[0] > 100 and png.std() > 0.05
    svg = (out / "map.svg").read_text()
    assert "<svg" in svg and "undecided" in svg and "unstable dimension 2" in svg
    assert "rho" in svg


def test_without_matplotlib_the_sweep_still_works_and_says_how(tmp_path, write, capsys,
                                                                 monkeypatch):
    from certify.io import sweep_report

    def missing(*a, **k):
        raise ImportError("matplotlib")
    monkeypatch.setattr(sweep_report, "draw_maps", missing)
    model = write("lorenz.toml", LORENZ)
    assert main(["sweep", str(model), "--grid", "rho=2..6:2", "--out",
                 str(tmp_path / "s"), "--workers", "1"]) == 0
    out = capsys.readouterr().out
    assert "certify[plot]" in out and "2 of 2 cells certified" in out


def test_dask_cluster_gives_the_local_results_even_when_a_worker_dies(tmp_path, write):
    distributed = pytest.importorskip("distributed")
    model = write("lorenz.toml", LORENZ)
    grid = {"rho": ("2", "30", 28)}
    local = sweep(model, grid, refine=1, workers=1, out=tmp_path / "local")
    expected = {json.dumps(r, sort_keys=True) for r in local}
    with distributed.LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                                  dashboard_address=None, host="127.0.0.1") as cluster:
        address = cluster.scheduler_address
        on_dask = sweep(model, grid, refine=1, scheduler=address, out=tmp_path / "dask")
        assert {json.dumps(r, sort_keys=True) for r in on_dask} == expected

        import threading

        with distributed.Client(address) as client:
            pids = list(client.run(os.getpid).values())
        outcome = {}

        def run():
            outcome["r"] = sweep(model, grid, refine=1, scheduler=address,
                                 out=tmp_path / "dask-killed")
        thread = threading.Thread(target=run)
        thread.start()
        deadline = time.monotonic() + 60
        results = tmp_path / "dask-killed" / "results.jsonl"
        while time.monotonic() < deadline and not (results.exists() and results.stat().st_size):
            time.sleep(0.05)
        os.kill(pids[0], signal.SIGKILL)  # one worker dies mid-sweep
        assert len(results.read_text().splitlines()) < 28
        thread.join(timeout=300)
        assert not thread.is_alive()
        assert {json.dumps(r, sort_keys=True) for r in outcome["r"]} == expected


def test_fishery_left_edge_is_proved_with_refinement(tmp_path):
    # The bundled fishery: for c in [1, 2] the fleet's equilibrium B* = c/(pq) is a weakly damped
    # focus (Re = -rB*/(2K), from the Jacobian computed by hand in the README); whole cells are
    # undecided, halves and quarters are proved, and every cell ends certified.
    from .conftest import EXAMPLES

    grid = {"c": ("1", "2", 2), "p": ("4", "6", 4)}
    coarse = sweep(EXAMPLES / "fishery.toml", grid, workers=1, out=tmp_path / "coarse")
    assert any(r["status"] == "undecided" for r in by_cell(coarse.folder).values())
    fine = sweep(EXAMPLES / "fishery.toml", grid, workers=1, refine=2, out=tmp_path / "fine")
    cells = by_cell(fine.folder)
    assert len(cells) == 8 and all(r["status"] == "certified" for r in cells.values())
    check_certificates(fine.folder, cells.values())
