"""Claims files, the gate with JUnit XML, and reports with honest digits (issue: claims)."""

from __future__ import annotations

import json
import shutil
import subprocess
import xml.etree.ElementTree as ET
from fractions import Fraction as F

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from certify.cli import main
from certify.io.publish import certain_digits, enclosure_cell

from .conftest import EXAMPLES

CLAIMS = """
model = "chemostat.toml"

[[claim]]
name = "three equilibria, two sinks and a saddle"
expect = "count"
count = 3
unstable_dimensions = [0, 0, 1]

[[claim]]
name = "strain u dominates at high supply"
expect = "equilibrium"
near = { u = 2.9, v = 0.35 }
parameters = { a = ["3.1", "3.3"] }
type = "sink"
"""


def test_bundled_claims_hold_and_junit_records_them(tmp_path, capsys):
    junit = tmp_path / "claims.xml"
    code = main(["gate", str(EXAMPLES / "chemostat-claims.toml"), "--junit", str(junit),
                 "--out", str(tmp_path / "out")])
    out = capsys.readouterr().out
    assert code == 0, out
    assert out.count("HOLDS") == 4 and "4 of 4 claims hold" in out
    suite = ET.parse(junit).getroot().find("testsuite")
    assert suite.get("tests") == "4" and suite.get("failures") == "0"
    assert len(suite.findall("testcase")) == 4
    assert not suite.findall("testcase/failure") and not suite.findall("testcase/error")
    gate = json.loads((tmp_path / "out" / "gate.json").read_text())
    assert gate["passed"] and all((tmp_path / "out" / p.split("/")[-1]).exists()
                                  for p in (c["certificate"] for c in gate["claims"]))
    # every kept certificate passes the trusted checker with both arithmetics
    assert main(["verify", *map(str, (tmp_path / "out").glob("*.cert.json"))]) == 0


def test_a_model_edit_that_breaks_one_claim_fails_the_gate_and_junit_says_which(tmp_path,
                                                                                capsys):
    # With a = 1.5 the symmetric state u = v, u^3 + u = 3/2, has |F'(u)| = 2u^2/(1 + u^2) < 1:
    # the only equilibrium (computed by hand from the model's equations); the count claim is
    # false, the claim with its own supply range still holds.
    model = (EXAMPLES / "chemostat.toml").read_text()
    (tmp_path / "chemostat.toml").write_text(model.replace('a = "3.2"', 'a = "1.5"'))
    claims = tmp_path / "claims.toml"
    claims.write_text(CLAIMS)
    junit = tmp_path / "junit.xml"
    code = main(["gate", str(claims), "--junit", str(junit)])
    out = capsys.readouterr().out
    assert code == 1
    assert "FAILS     three equilibria" in out and "HOLDS     strain u" in out
    suite = ET.parse(junit).getroot().find("testsuite")
    failed = [c for c in suite.findall("testcase") if c.find("failure") is not None]
    assert [c.get("name") for c in failed] == ["three equilibria, two sinks and a saddle"]
    assert "exactly 1 equilibrium in the region" in failed[0].find("failure").get("message")
    assert suite.get("failures") == "1" and suite.get("errors") == "0"


def test_undecided_claim_is_an_error_case_with_the_reason(tmp_path, capsys):
    (tmp_path / "fold.toml").write_text('name = "fold"\nkind = "flow"\nvariables = ["x"]\n'
                                        '[parameters]\nmu = 0\n[equations]\nx = "mu - x**2"\n')
    claims = tmp_path / "c.toml"
    claims.write_text('model = "fold.toml"\n[[claim]]\nname = "a sink at the fold"\n'
                      'expect = "equilibrium"\nnear = { x = 0.0 }\ntype = "sink"\n'
                      'parameters = { mu = ["-0.1", "0.1"] }\n')  # across the fold
    junit = tmp_path / "j.xml"
    assert main(["gate", str(claims), "--junit", str(junit)]) == 1
    assert "UNDECIDED" in capsys.readouterr().out
    case = ET.parse(junit).getroot().find("testsuite/testcase")
    assert case.find("error").get("type") == "undecided"


@pytest.mark.parametrize("text, why, line", [
    ('model = "chemostat.toml"\n[[claim]]\nname = "x"\nexpect = "maybe"\n', "expect", 4),
    ('model = "nothere.toml"\n[[claim]]\nname = "x"\nexpect = "none"\n', "does not exist", 1),
    ('model = "chemostat.toml"\n[[claim]]\nname = "x"\nexpect = "count"\n', "count", 4),
    ('model = "chemostat.toml"\n[[claim]]\nname = "x"\nexpect = "none"\ncolour = 1\n',
     "unknown key", 5),
    ('model = "chemostat.toml"\n[[claim]]\nname = "x"\nexpect = "none"\n[[claim]]\n'
     'name = "x"\nexpect = "none"\n', "used twice", 6),
    ('model = "chemostat.toml"\n[[claim]]\nname = "x"\nexpect = "equilibrium"\n'
     'near = { u = "high", v = 1 }\n', "expected a number", 5),
    ('model = "chemostat.toml"\n[[claim\n', "not valid TOML", 2),
])
def test_bad_claims_files_are_one_line_errors(tmp_path, capsys, text, why, line):
    shutil.copy(EXAMPLES / "chemostat.toml", tmp_path / "chemostat.toml")
    claims = tmp_path / "claims.toml"
    claims.write_text(text)
    assert main(["gate", str(claims), "--junit", str(tmp_path / "j.xml")]) == 2
    err = capsys.readouterr().err.strip()
    assert len(err.splitlines()) == 1 and why in err and f"claims.toml:{line}" in err, err
    assert not (tmp_path / "j.xml").exists()


def test_digits_of_the_issue_example():
    digits, lo, hi = enclosure_cell(F("1.2344"), F("1.2347"))
    assert digits == "1.234" and (lo, hi) == ("1.2344", "1.2347")
    assert certain_digits(F("-1.2347"), F("-1.2344")) == "-1.234"
    assert certain_digits(F("-1"), F("1")) == ""


def _prefix_interval(text: str):
    """Return the set [a, b) (or (a, b] for negatives) meant by the certain digits."""
    neg = text.startswith("-")
    body = text.lstrip("-")
    if "e" in body:
        mant, exp = body.split("e")
        k = len(mant.replace(".", "")) - 1 - int(exp)
        value = F(mant.replace(".", "")) / F(10) ** k
    else:
        k = len(body.split(".")[1]) if "." in body else 0
        value = F(body)
    step = F(1, 10 ** k) if k >= 0 else F(10) ** -k
    return (-(value + step), -value) if neg else (value, value + step)


@settings(max_examples=300, deadline=None)
@given(st.fractions(min_value=-10**6, max_value=10**6, max_denominator=10**12),
       st.fractions(min_value=0, max_value=10, max_denominator=10**12))
def test_printed_intervals_always_contain_the_exact_enclosure(centre, width):
    lo, hi = centre, centre + width
    digits, lo_text, hi_text = enclosure_cell(lo, hi)
    assert F(lo_text) <= lo and hi <= F(hi_text)
    if digits and lo != hi:
        a, b = _prefix_interval(digits)
        assert a <= lo and hi <= b
        assert (hi < b) if not digits.startswith("-") else (a < lo)


def _gate_out(tmp_path):
    out = tmp_path / "gate-out"
    assert main(["gate", str(EXAMPLES / "chemostat-claims.toml"), "--out", str(out)]) == 0
    return out


def _sweep_out(tmp_path):
    out = tmp_path / "sweep"
    assert main(["sweep", str(EXAMPLES / "fishery.toml"), "--grid", "c=3..5:4", "--grid",
                 "p=4.5..5.5:3", "--out", str(out), "--workers", "1"]) == 0
    return out


def test_markdown_and_latex_reports(tmp_path, capsys):
    gate, sweep = _gate_out(tmp_path), _sweep_out(tmp_path)
    capsys.readouterr()
    md = tmp_path / "r.md"
    assert main(["report", str(gate), str(sweep), "-o", str(md)]) == 0
    text = md.read_text()
    hashes = [line.split("`")[-2] for line in text.splitlines() if line.startswith("|")
              and line.count("`") >= 2 and len(line.split("`")[-2]) == 64]
    import hashlib

    files = {hashlib.sha256(p.read_bytes()).hexdigest() for p in gate.glob("*.cert.json")}
    assert set(hashes) == files and len(files) == 4
    assert "![map of the parameter plane](sweep/map.png)" in text
    assert "Cautions" in text and "licensed" in text and "physical system" in text
    tex = tmp_path / "r.tex"
    assert main(["report", str(gate), "--format", "latex", "-o", str(tex)]) == 0
    body = tex.read_text()
    assert body.count("\\begin{tabular}") == body.count("\\end{tabular}") >= 2
    rows = [r for r in body.splitlines() if r.endswith("\\\\") and "SHA-256" not in r
            and r.count("&") == 6]
    assert len(rows) == 4


def test_a_tampered_certificate_is_not_reported(tmp_path, capsys):
    gate = _gate_out(tmp_path)
    cert = gate / "the-symmetric-state-is-a-saddle.cert.json"
    doc = json.loads(cert.read_text())
    doc["model"]["equations"]["u"] += " + 1/1000"  # the zero moves out of the box
    bad = tmp_path / "bad.cert.json"
    bad.write_text(json.dumps(doc))
    capsys.readouterr()
    assert main(["report", str(bad)]) == 1
    out = capsys.readouterr().out
    assert "REJECTED" in out and "| Two-strain" not in out


def _chromium():
    for name in ("chromium", "chromium-browser", "google-chrome"):
        path = shutil.which(name)
        if path:
            return path
    return None


def test_html_report_renders_in_a_real_browser(tmp_path):
    browser = _chromium()
    if browser is None:
        pytest.skip("no Chromium could be installed on this machine (.ci/run installs "
                    "Debian's chromium package); the HTML report was not rendered")
    import matplotlib.image

    gate, sweep = _gate_out(tmp_path), _sweep_out(tmp_path)
    page = tmp_path / "report.html"
    assert main(["report", str(gate), str(sweep), "--format", "html", "-o", str(page)]) == 0
    html = page.read_text()
    assert "<script" not in html and "src=" not in html  # one self-contained file
    flags = ["--headless", "--no-sandbox", "--disable-gpu", "--hide-scrollbars",
             f"--user-data-dir={tmp_path / 'profile'}"]
    dom = subprocess.run([browser, *flags, "--dump-dom", page.as_uri()], capture_output=True,
                         text=True, timeout=120).stdout
    assert '<table id="statements">' in dom and "<svg" in dom and 'id="map"' in dom
    assert dom.count("<tr>") >= 4 + 1 + 4 + 1
    shot = tmp_path / "shot.png"
    subprocess.run([browser, *flags, "--window-size=1280,1800", f"--screenshot={shot}",
                    page.as_uri()], capture_output=True, timeout=120)
    pixels = matplotlib.image.imread(shot)
    assert pixels.shape[0] >= 1000 and pixels.std() > 0.05  # not blank
    shutil.copy(shot, tmp_path / "report-screenshot.png")
