"""The certificate corpora: every valid file verifies, every invalid one gets its code."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest

from certify.check import CertificateRejected, check, load

from .conftest import run_cli

PROOFS = Path(__file__).resolve().parent.parent / "proofs"
VALID = sorted((PROOFS / "valid").glob("*.cert.json"))
MANIFEST = json.loads((PROOFS / "invalid" / "MANIFEST.json").read_text())
SCHEMA = json.loads((PROOFS / "certificate-v2.schema.json").read_text())


def test_corpus_is_complete():
    assert len(VALID) >= 20
    on_disk = {p.name for p in (PROOFS / "invalid").glob("*.cert.json")}
    assert on_disk == set(MANIFEST)


def test_valid_corpus_verifies_with_both_arithmetics_from_the_command_line():
    proc = run_cli("verify", *VALID, timeout=300)
    assert proc.returncode == 0, proc.stdout + proc.stderr
    assert proc.stdout.count(": VERIFIED") == len(VALID)


@pytest.mark.parametrize("path", VALID, ids=lambda p: p.name)
def test_valid_files_match_the_schema_and_both_arithmetics_agree(path):
    data = load(path.read_bytes())
    jsonschema.validate(data, SCHEMA)
    def summary(claim):  # enclosures depend on the arithmetic's rounding; verdicts must not
        return {k: v for k, v in claim.items() if k not in ("zeros", "point")}
    assert summary(check(data, "flint").claim) == summary(check(data, "python").claim)


@pytest.mark.parametrize("name", sorted(MANIFEST))
def test_invalid_files_are_rejected_with_their_code(name):
    text = (PROOFS / "invalid" / name).read_bytes()
    codes = []
    for arithmetic in ("flint", "python"):
        with pytest.raises(CertificateRejected) as info:
            check(load(text), arithmetic)
        codes.append(info.value.code)
    assert codes == [MANIFEST[name]["code"]] * 2, MANIFEST[name]["why"]


def test_invalid_corpus_from_the_command_line():
    files = [PROOFS / "invalid" / n for n in sorted(MANIFEST)]
    proc = run_cli("verify", *files, "--json", timeout=300)
    assert proc.returncode == 1
    rows = json.loads(proc.stdout)["files"]
    assert [r["status"] for r in rows] == ["REJECTED"] * len(files)
    assert [r["code"] for r in rows] == [MANIFEST[n]["code"] for n in sorted(MANIFEST)]
