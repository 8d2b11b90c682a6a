"""Certificates: the checker accepts what was proved and rejects edits that break the proof."""

from __future__ import annotations

import copy
import json
from fractions import Fraction as F

import pytest

from certify import CertificateRejected, equilibrium, verify
from certify.check import check

from .conftest import EXAMPLES, run_cli
from .published import brusselator_model


@pytest.fixture(scope="module")
def saddle():
    # The symmetric state of the bundled chemostat example: a saddle.
    from certify import load_model
    r = equilibrium(load_model(EXAMPLES / "chemostat.toml"), [{"u": 1.2, "v": 1.2}])[0]
    assert r.verdict == "hyperbolic" and r.type == "saddle"
    return r.certificate


def _nudge(text: str, up: bool) -> str:
    q = F(text)
    step = F(1, 2**60) * (abs(q) if q else 1)
    q = q + step if up else q - step
    return str(q.numerator) if q.denominator == 1 else f"{q.numerator}/{q.denominator}"


def test_certificate_verifies_and_states_its_claim(saddle):
    v = check(saddle)
    assert v.claim == {"verdict": "hyperbolic", "stable_dimension": 1, "unstable_dimension": 1}


def test_box_shrunk_below_the_krawczyk_image_is_rejected(saddle):
    bad = copy.deepcopy(saddle)
    piece = bad["pieces"][0]
    lo, hi = (F(x) for x in piece["box"][0])
    mid = (lo + hi) / 2
    piece["box"][0] = [str(mid - (hi - lo) / 1000), str(mid + (hi - lo) / 1000)]
    piece["centre"][0] = str(mid)
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "krawczyk"


def test_claimed_inertia_changed_is_rejected(saddle):
    for stable, unstable in [(2, 0), (0, 2)]:
        bad = copy.deepcopy(saddle)
        bad["claim"]["stable_dimension"], bad["claim"]["unstable_dimension"] = stable, unstable
        with pytest.raises(CertificateRejected) as info:
            check(bad)
        # S = F D F^T takes its signs D from the claimed split, so the form is not definite.
        assert info.value.code == "not-definite"
        assert f"{stable} entries +1 (the claimed stable dimension)" in info.value.reason


def test_inertia_factor_columns_swapped_is_rejected(saddle):
    bad = copy.deepcopy(saddle)
    f = bad["pieces"][0]["inertia_factor"]
    bad["pieces"][0]["inertia_factor"] = [row[::-1] for row in f]  # S becomes -S
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "not-definite"


def _neg(x: str) -> str:
    return x[1:] if x.startswith("-") else ("-" + x if x != "0" else x)


def test_parameter_changed_is_rejected(saddle):
    # a = 1.6: the model has a single equilibrium, a sink, so the saddle claim must fail.
    bad = copy.deepcopy(saddle)
    bad["model"]["parameters"]["a"] = ["8/5", "8/5"]
    bad["pieces"][0]["parameters"]["a"] = ["8/5", "8/5"]
    with pytest.raises(CertificateRejected):
        check(bad)


def test_parameter_box_widened_without_pieces_is_rejected(saddle):
    bad = copy.deepcopy(saddle)
    bad["model"]["parameters"]["a"] = ["3", "16/5"]
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "tiling"


def test_equation_edited_is_rejected(saddle):
    bad = copy.deepcopy(saddle)
    bad["model"]["equations"]["u"] = "a / (1 + v**n) - k*u + 1/10"
    with pytest.raises(CertificateRejected):
        check(bad)


def test_every_single_nudge_is_rejected_or_still_proves(saddle):
    """Nudge each number of the piece by a tiny step; accepted mutants must re-verify the claim."""
    piece = saddle["pieces"][0]
    tried = rejected = 0
    for key in ("box", "centre", "preconditioner", "inertia_factor"):
        flat = piece[key]
        positions = ([(i, j) for i in range(len(flat)) for j in range(len(flat[i]))]
                     if isinstance(flat[0], list) else [(i, None) for i in range(len(flat))])
        for i, j in positions:
            for up in (True, False):
                bad = copy.deepcopy(saddle)
                target = bad["pieces"][0][key]
                if j is None:
                    target[i] = _nudge(target[i], up)
                else:
                    target[i][j] = _nudge(target[i][j], up)
                tried += 1
                try:
                    v = check(bad)
                except CertificateRejected:
                    rejected += 1
                    continue
                # a tiny nudge may still prove the same claim: it must then be the same claim
                assert v.claim == saddle["claim"]
    assert tried == 28  # 2 x (4 box ends + 2 centre + 4 + 4 matrix entries)
    # One coarse edit of each field must be refused, so a checker that ignored a field fails.
    centre = piece["centre"]
    coarse = {"box": lambda p: p.__setitem__("box", [[c, c] for c in centre]),
              "centre": lambda p: p["centre"].__setitem__(0, str(F(p["box"][0][1]) + 1)),
              "preconditioner": lambda p: p.__setitem__("preconditioner",
                                                        [["0", "0"], ["0", "0"]]),
              "inertia_factor": lambda p: p.__setitem__("inertia_factor", [
                  row[::-1] for row in p["inertia_factor"]])}
    for key, edit in coarse.items():
        bad = copy.deepcopy(saddle)
        edit(bad["pieces"][0])
        with pytest.raises(CertificateRejected):
            check(bad)


@pytest.mark.parametrize("mutate, code", [
    (lambda c: c.pop("claim"), "malformed"),
    (lambda c: c.__setitem__("version", 3), "version"),
    (lambda c: c.__setitem__("version", 1), "version"),
    (lambda c: c["pieces"][0].__setitem__("box", c["pieces"][0]["box"][:1]), "malformed"),
    (lambda c: c["pieces"][0]["centre"].__setitem__(0, 1.5), "malformed"),
    (lambda c: c["pieces"][0]["centre"].__setitem__(0, "1e5"), "malformed"),
    (lambda c: c["model"]["equations"].__setitem__("u", "__import__('os')"), "model"),
    (lambda c: c["model"]["equations"].__setitem__("u", "10**10**10"), "model"),
    (lambda c: c.__setitem__("precision", 10**9), "malformed"),
    (lambda c: c["pieces"].clear(), "malformed"),
])
def test_malformed_certificates_get_their_code(saddle, mutate, code):
    bad = copy.deepcopy(saddle)
    mutate(bad)
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == code


def test_verify_command_line(saddle, tmp_path):
    good = tmp_path / "good.cert.json"
    good.write_text(json.dumps(saddle))
    bad = copy.deepcopy(saddle)
    bad["claim"]["stable_dimension"], bad["claim"]["unstable_dimension"] = 2, 0
    badf = tmp_path / "bad.cert.json"
    badf.write_text(json.dumps(bad))
    junk = tmp_path / "junk.json"
    junk.write_text("[" * 100000)
    proc = run_cli("verify", good)
    assert proc.returncode == 0 and "VERIFIED" in proc.stdout
    proc = run_cli("verify", good, badf, junk)
    assert proc.returncode == 1
    lines = proc.stdout.strip().splitlines()
    assert "VERIFIED" in lines[0]
    assert "REJECTED: not-definite" in lines[1] and "REJECTED: malformed" in lines[2]
    assert "Traceback" not in proc.stderr


def test_not_hyperbolic_certificate_rejects_a_moved_point():
    # Brusselator at a = 1, b = 2 (Prigogine & Lefever 1968): equilibrium (1, 2), eigenvalues +-i.
    r = equilibrium(brusselator_model(1, 2), [{"x": 1.1, "y": 1.9}])[0]
    assert r.verdict == "not hyperbolic"
    bad = copy.deepcopy(r.certificate)
    bad["claim"]["point"] = ["1", "201/100"]
    with pytest.raises(CertificateRejected) as info:
        verify(bad)
    assert info.value.code == "not-zero"
    bad = copy.deepcopy(r.certificate)
    bad["model"]["parameters"]["b"] = ["3", "3"]
    bad["claim"]["point"] = ["1", "3"]
    with pytest.raises(CertificateRejected) as info:
        verify(bad)
    assert info.value.code == "hyperbolic"  # at b = 3 the equilibrium (1, 3) is a source


def test_equilibrium_command_writes_and_verifies(tmp_path):
    out = tmp_path / "chem.cert.json"
    proc = run_cli("equilibrium", EXAMPLES / "chemostat.toml", "--out", out, "--json")
    assert proc.returncode == 0, proc.stderr
    data = json.loads(proc.stdout)
    kinds = sorted(r["type"] for r in data["results"])
    assert kinds == ["saddle", "sink", "sink"]
    paths = [r["certificate"] for r in data["results"]]
    assert all(paths) and len(set(paths)) == 3
    proc = run_cli("verify", *paths)
    assert proc.returncode == 0 and proc.stdout.count("VERIFIED") == 3
    lo, hi = data["results"][1]["enclosure"]["u"]
    assert F(lo) <= F(hi) and float(hi) - float(lo) < 1e-10
