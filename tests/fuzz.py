"""Fuzz targets for the certificate reader and checker, and for the model loader.

    python tests/fuzz.py --seconds 600          both targets, ten minutes each
    python tests/fuzz.py --target model --seconds 60

Inputs are corpus files and bundled examples mutated at the byte level by hypothesis
(flips, deletions, duplications, and splices of tokens that tend to break parsers). The
property: the checker either accepts (and the claim is one it states) or raises
CertificateRejected; the loader either returns a Model or raises InputError; never another
exception, and each input is handled within a second. tests/test_fuzz.py runs both targets
for a short budget in CI.
"""

from __future__ import annotations

import argparse
import sys
import time
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT))

from certify.check import CertificateRejected, check, load  # noqa: E402
from certify.errors import InputError  # noqa: E402
from certify.model import model_from_text  # noqa: E402

CERTS = [p.read_bytes() for p in sorted((ROOT / "proofs" / "valid").glob("*.cert.json"))]
MODELS = [p.read_bytes() for p in sorted((ROOT / "examples").glob("*.toml"))]
TOKENS = [b"**", b"^", b"/", b"-", b"[", b"]", b"{", b"}", b'"', b",", b"1e999", b"0/0",
          b"__import__('os')", b"x.y", b"9" * 50, b"(" * 50, b"nan", b"inf", b"\x00", b"\xff",
          b"=", b"\n[[guesses]]\n", b"\n[region]\n", b'"1/3"', b"exp(", b"log(-1)"]
PER_INPUT_SECONDS = 1.0


@st.composite
def mutated(draw, seeds: list[bytes]) -> bytes:
    data = bytearray(draw(st.sampled_from(seeds)))
    for _ in range(draw(st.integers(1, 6))):
        if not data:
            break
        at = draw(st.integers(0, len(data) - 1))
        op = draw(st.sampled_from(["flip", "delete", "duplicate", "token"]))
        if op == "flip":
            data[at] = draw(st.integers(0, 255))
        elif op == "delete":
            del data[at:at + draw(st.integers(1, 40))]
        elif op == "duplicate":
            data[at:at] = data[at:at + draw(st.integers(1, 200))]
        else:
            data[at:at] = draw(st.sampled_from(TOKENS))
    return bytes(data)


def certificate_target(data: bytes) -> None:
    """The checker accepts or rejects; nothing else escapes, and it is quick."""
    start = time.perf_counter()
    try:
        verified = check(load(data), "flint")
        if verified.claim["verdict"] not in ("hyperbolic", "not hyperbolic", "count"):
            raise AssertionError("accepted an unknown claim")
    except CertificateRejected:
        pass
    if time.perf_counter() - start > PER_INPUT_SECONDS:
        raise AssertionError(f"slow input: {data[:80]!r}")


def model_target(data: bytes) -> None:
    """The loader returns a Model or raises InputError; nothing else escapes."""
    start = time.perf_counter()
    try:
        model_from_text(data.decode("utf-8", errors="replace"), "fuzz.toml")
    except InputError:
        pass
    if time.perf_counter() - start > PER_INPUT_SECONDS:
        raise AssertionError(f"slow input: {data[:80]!r}")


TARGETS = {"certificate": (certificate_target, CERTS), "model": (model_target, MODELS)}


def run(target: str, examples: int) -> None:
    """Run one target on `examples` fresh mutated inputs."""
    fn, seeds = TARGETS[target]

    @settings(max_examples=examples, deadline=None, database=None,
              suppress_health_check=list(HealthCheck))
    @given(mutated(seeds))
    def property_(data):
        fn(data)

    property_()


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--target", choices=[*TARGETS, "all"], default="all")
    parser.add_argument("--seconds", type=float, default=60)
    args = parser.parse_args()
    for target in TARGETS if args.target == "all" else [args.target]:
        start, runs = time.perf_counter(), 0
        while time.perf_counter() - start < args.seconds:
            run(target, 200)
            runs += 200
        print(f"{target}: {runs} inputs in {time.perf_counter() - start:.0f} s, no failure")


if __name__ == "__main__":
    main()
