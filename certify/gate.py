"""Claims files and the gate: certify every named claim about a model, for CI and reviews.

A claims file (TOML, see README "Claims and gates"):

    model = "chemostat.toml"          # relative to the claims file
    [[claim]]
    name = "strain u dominates"
    expect = "equilibrium"            # an equilibrium near a point ...
    near = { u = 2.9, v = 0.35 }
    within = 0.5                      # optional: the enclosure lies within near +- within
    type = "sink"                     # optional: sink / source / saddle (maps: attracting ...)
    unstable_dimension = 0            # optional
    parameters = { a = ["3.1", "3.3"] }   # optional overrides: values or [lo, hi]
    [[claim]]
    name = "three equilibria"
    expect = "count"                  # ... a certified count in a region ...
    count = 3
    unstable_dimensions = [0, 0, 1]   # optional: one per equilibrium, any order
    region = { u = ["0", "4"], v = ["0", "4"] }   # optional (default: the model's [region])
    [[claim]]
    name = "nothing with both strains high"
    expect = "none"                   # ... or no equilibrium in a region
    region = { u = ["2", "4"], v = ["2", "4"] }

Each claim ends as holds (proved as stated), fails (something contrary was proved), or
undecided (neither could be proved; the reason is given).
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

from .errors import InputError
from .settings import MAX_PERIOD

FORMAT = "certify-gate"
EXPECT = ("equilibrium", "count", "none")
KEYS = {"name", "expect", "near", "within", "type", "unstable_dimension", "parameters",
        "count", "unstable_dimensions", "region", "period"}
DEFAULT_WITHIN = Fraction(1, 10)  # relative: 10% of max(1, |near|) per coordinate


@dataclass
class Claim:
    """One named claim of a claims file."""

    name: str
    expect: str
    line: int | None
    parameters: dict = field(default_factory=dict)
    near: dict | None = None
    within: Fraction | None = None
    type: str | None = None
    unstable_dimension: int | None = None
    count: int | None = None
    unstable_dimensions: list | None = None
    region: dict | None = None
    period: int = 1

    def expected_text(self) -> str:
        """Return what the claim says, in words."""
        params = _params_text(self.parameters)
        if self.expect == "equilibrium":
            what = self.type or "a hyperbolic equilibrium"
            dims = ("" if self.unstable_dimension is None else
                    f", unstable dimension {self.unstable_dimension}")
            near = ", ".join(f"{k} = {v}" for k, v in self.near.items())
            return f"{what}{dims} near ({near}){params}"
        if self.expect == "none":
            return f"no equilibrium in the region{params}"
        dims = ("" if self.unstable_dimensions is None else
                f", unstable dimensions {sorted(self.unstable_dimensions)}")
        from .vocabulary import plural

        return f"exactly {plural(self.count, 'equilibrium', 'equilibria')} in the region" \
            f"{dims}{params}"


def _params_text(params: dict) -> str:
    if not params:
        return ""
    from .model.decimal import value_text

    return " at " + ", ".join(f"{k} = {value_text(lo, hi)}" for k, (lo, hi) in params.items())


@dataclass
class ClaimsFile:
    """A parsed claims file."""

    path: Path
    model_path: Path
    claims: list[Claim]
    title: str | None = None


def load_claims(path: str | Path, models_anywhere: bool = False) -> ClaimsFile:
    """Return the claims of a file, or raise InputError naming the file, key, line, reason.

    The model must lie in the claims file's folder or below it, unless models_anywhere: a
    claims file from elsewhere cannot make the tool read (and report on) any file it likes.
    """
    from .model.model import parse_toml, read_text

    p = Path(path)
    text = read_text(p)
    reader = _ClaimReader(text, str(path))
    data = parse_toml(text, str(path))
    fail = reader.fail
    unknown = [k for k in data if k not in ("model", "claim", "title")]
    if unknown:
        fail(f"unknown key '{unknown[0]}' (expected model, title, [[claim]])", unknown[0])
    if not isinstance(data.get("model"), str):
        fail("missing or not a string: the model file, relative to this file", "model")
    model_path = (p.parent / data["model"]).resolve()
    if not models_anywhere and not model_path.is_relative_to(p.parent.resolve()):
        fail("the model file must lie in this file's folder or below it (certify gate "
             "--models-anywhere allows others)", "model")
    if not model_path.is_file():
        fail(f"the model file {data['model']!r} does not exist (relative to this file)",
             "model")
    raw = data.get("claim")
    if not isinstance(raw, list) or not raw:
        fail("no claims: add [[claim]] tables", "claim")
    claims, names = [], set()
    for i, c in enumerate(raw):
        claim = reader.claim(c, i)
        if claim.name in names:
            fail(f"the name {claim.name!r} is used twice", "name", i)
        names.add(claim.name)
        claims.append(claim)
    title = data.get("title")
    if title is not None and not isinstance(title, str):
        fail("the title is a string", "title")
    return ClaimsFile(p, model_path, claims, title)


def _non_negative_int(v) -> bool:
    return isinstance(v, int) and not isinstance(v, bool) and v >= 0


class _ClaimReader:
    """Reads the [[claim]] tables of one claims file; every refusal names key and line."""

    def __init__(self, text: str, source: str):
        self.text, self.source = text, source

    def fail(self, reason: str, key: str | None = None, index: int | None = None):
        from .model.model import _line_of

        line = _line_of(self.text, "claim" if index is not None else None, key or "",
                        index or 0) if key else None
        where = f"claim[{index}].{key}" if index is not None and key else key
        raise InputError(reason, self.source, where, line)

    def value(self, v, key: str, i: int):
        """Return the exact (lo, hi) of a number or [lo, hi] written under claim[i].key."""
        from .model.model import _line_of, parse_value

        return parse_value(v, self.source, f"claim[{i}].{key}",
                           _line_of(self.text, "claim", key.split(".")[0], i))

    def table(self, c: dict, key: str, kind: str, i: int) -> dict:
        v = c.get(key)
        if not isinstance(v, dict) or not v:
            self.fail(f"expected a table of {kind}", key, i)
        return v

    def claim(self, c, i: int) -> Claim:
        """Return claim number i, with the keys common to every kind, then its own."""
        from .model.model import _line_of

        if not isinstance(c, dict):
            self.fail("a claim is a table", "claim")
        bad = [k for k in c if k not in KEYS]
        if bad:
            self.fail(f"unknown key '{bad[0]}'", bad[0], i)
        name = c.get("name")
        if not isinstance(name, str) or not name.strip():
            self.fail("every claim needs a name (a non-empty string)",
                      "name" if "name" in c else "expect", i)
        expect = c.get("expect")
        if expect not in EXPECT:
            self.fail(f"expected one of {', '.join(EXPECT)}, found {expect!r}", "expect", i)
        claim = Claim(name=name, expect=expect, line=_line_of(self.text, "claim", "name", i))
        for k, v in (self.table(c, "parameters", "parameter values", i).items()
                     if "parameters" in c else ()):
            if isinstance(v, dict):
                self.fail(f"parameter {k}: expected a number or [lo, hi]", "parameters", i)
            claim.parameters[k] = self.value(v, f"parameters.{k}", i)
        if "region" in c:
            claim.region = {}
            for k, v in self.table(c, "region", "variable ranges", i).items():
                lo, hi = self.value(v, f"region.{k}", i)
                if lo >= hi:
                    self.fail(f"the side for '{k}' is empty or has width 0", "region", i)
                claim.region[k] = (lo, hi)
        if "period" in c:
            if not _non_negative_int(c["period"]) or not 1 <= c["period"] <= MAX_PERIOD:
                self.fail(f"the period is an integer from 1 to {MAX_PERIOD}", "period", i)
            claim.period = c["period"]
        if expect == "equilibrium":
            self._equilibrium_keys(c, i, claim)
        else:
            self._count_keys(c, i, claim)
        return claim

    def _equilibrium_keys(self, c: dict, i: int, claim: Claim) -> None:
        """Read near, within, type and unstable_dimension of an equilibrium claim."""
        claim.near = {}
        for k, v in self.table(c, "near", "variable values", i).items():
            try:
                claim.near[k] = float(v) if not isinstance(v, bool) else None
            except (TypeError, ValueError):
                claim.near[k] = None
            if claim.near[k] is None:
                self.fail(f"near.{k}: expected a number", "near", i)
        if "within" in c:
            w, w2 = self.value(c["within"], "within", i)
            if w != w2 or w <= 0:
                self.fail("within is one positive number", "within", i)
            claim.within = w
        if "type" in c:
            if c["type"] not in ("sink", "source", "saddle", "attracting", "repelling"):
                self.fail(f"unknown type {c['type']!r} (sink, source, saddle; for maps "
                          "attracting, repelling, saddle)", "type", i)
            claim.type = c["type"]
        if "unstable_dimension" in c:
            if not _non_negative_int(c["unstable_dimension"]):
                self.fail("expected a non-negative integer", "unstable_dimension", i)
            claim.unstable_dimension = c["unstable_dimension"]
        for k in ("count", "unstable_dimensions"):
            if k in c:
                self.fail(f"'{k}' belongs to expect = \"count\"", k, i)

    def _count_keys(self, c: dict, i: int, claim: Claim) -> None:
        """Read count and unstable_dimensions of a count (or none) claim."""
        for k in ("near", "within", "type", "unstable_dimension"):
            if k in c:
                self.fail(f"'{k}' belongs to expect = \"equilibrium\"", k, i)
        if claim.expect != "count":
            if "count" in c or "unstable_dimensions" in c:
                self.fail("expect = \"none\" takes no count", "count" if "count" in c
                          else "unstable_dimensions", i)
            return
        n = c.get("count")
        if not _non_negative_int(n):
            self.fail("expect = \"count\" needs count = a non-negative integer",
                      "count" if "count" in c else "expect", i)
        claim.count = n
        if "unstable_dimensions" in c:
            dims = c["unstable_dimensions"]
            if not isinstance(dims, list) or len(dims) != n or \
                    not all(_non_negative_int(d) for d in dims):
                self.fail(f"expected a list of {n} non-negative integers, one per "
                          "equilibrium", "unstable_dimensions", i)
            claim.unstable_dimensions = dims


@dataclass
class Outcome:
    """What the gate found for one claim."""

    claim: Claim
    status: str  # "holds", "fails" or "undecided"
    proved: str
    certificate: dict | None = None
    certificate_path: str | None = None
    seconds: float = 0.0


def _slug(name: str) -> str:
    return re.sub(r"[^A-Za-z0-9]+", "-", name).strip("-").lower()[:60] or "claim"


def evaluate(claims: ClaimsFile, out: Path | None = None, arithmetics=("flint",)) -> list:
    """Certify every claim; return one Outcome each (certificates written to out if given)."""
    import time

    from .api import equilibrium, scan
    from .io.files import write_certificate
    from .model import load_model

    model = load_model(claims.model_path)
    outcomes = []
    for c in claims.claims:
        start = time.monotonic()
        for k in c.parameters:
            if k not in model.parameters:
                raise InputError(f"no parameter named '{k}' in the model", str(claims.path),
                                 f"{c.name}: parameters", c.line)
        m = model.with_parameters(c.parameters) if c.parameters else model
        if c.expect == "equilibrium":
            missing = [v for v in m.variables if v not in c.near]
            extra = [k for k in c.near if k not in m.variables]
            if missing or extra:
                why = f"no value for {missing[0]}" if missing else f"'{extra[0]}' is not a " \
                    "variable"
                raise InputError(why, str(claims.path), f"{c.name}: near", c.line)
            r = equilibrium(m, [c.near], period=c.period, arithmetics=arithmetics)[0]
            outcome = _judge_equilibrium(c, r)
            outcome.certificate = r.certificate
        else:
            region = c.region or m.region
            if not region:
                raise InputError("no region: give region = {...} or a [region] in the model",
                                 str(claims.path), f"{c.name}: region", c.line)
            r = scan(m, region, arithmetics=arithmetics)
            outcome = _judge_count(c, r)
            outcome.certificate = r.certificate
        outcome.seconds = time.monotonic() - start
        if out is not None and outcome.certificate is not None:
            path = out / f"{_slug(c.name)}.cert.json"
            write_certificate(outcome.certificate, path)
            outcome.certificate_path = str(path)
        outcomes.append(outcome)
    return outcomes


def _judge_equilibrium(c: Claim, r) -> Outcome:
    from .model.decimal import membership_text

    if r.verdict == "undecided":
        return Outcome(c, "undecided", f"undecided ({r.reason}): {r.message}")
    if r.verdict == "not hyperbolic":
        return Outcome(c, "fails", "proved NOT hyperbolic: an eigenvalue lies exactly on "
                       "the axis")
    enc = ", ".join(membership_text(v, *r.enclosure[v]) for v in r.variables)
    proved = f"{r.type}, unstable dimension {r.unstable_dimension}, {enc}"
    wrong = []
    for v in r.variables:
        centre = Fraction(c.near[v])
        w = c.within if c.within is not None else DEFAULT_WITHIN * max(1, abs(centre))
        lo, hi = r.enclosure[v]
        if lo < centre - w or hi > centre + w:
            wrong.append(f"{v} is not within {float(w):g} of {c.near[v]:g}")
    if c.type is not None and r.type != c.type:
        wrong.append(f"it is a {r.type}, not a {c.type}")
    if c.unstable_dimension is not None and r.unstable_dimension != c.unstable_dimension:
        wrong.append(f"the unstable dimension is {r.unstable_dimension}, not "
                     f"{c.unstable_dimension}")
    if wrong:
        return Outcome(c, "fails", f"proved {proved}; so " + "; ".join(wrong))
    return Outcome(c, "holds", f"proved {proved}")


def _judge_count(c: Claim, r) -> Outcome:
    if r.count is None:
        return Outcome(c, "undecided", f"undecided ({r.reason}): {r.message}")
    from .vocabulary import plural

    n = len(r.model.variables)
    inside = [z for z in r.zeros if z.inside]
    dims = sorted(n - z.stable_dimension for z in inside if z.stable_dimension is not None)
    loose = [z for z in inside if z.stable_dimension is None]
    proved = f"proved exactly {plural(r.count, 'equilibrium', 'equilibria')} in the region"
    if dims:
        proved += f", unstable dimensions {dims}"
    for z in loose:
        proved += f"; {z.reason}" if z.not_hyperbolic else \
            f"; one of unknown kind ({z.reason or 'unclassified'})"
    expected = 0 if c.expect == "none" else c.count
    if r.count != expected:
        return Outcome(c, "fails", proved)
    if c.unstable_dimensions is None:
        return Outcome(c, "holds", proved)
    claimed = sorted(c.unstable_dimensions)
    # Each classified zero must take one claimed dimension; a zero proved not hyperbolic can
    # take none. Only unclassified zeros that might still be hyperbolic leave it open.
    left = list(claimed)
    for d in dims:
        if d not in left:
            return Outcome(c, "fails", proved)
        left.remove(d)
    if any(z.not_hyperbolic for z in loose):
        return Outcome(c, "fails", proved + ", so it has no unstable dimension")
    if loose:
        return Outcome(c, "undecided", "undecided (unclassified): " + proved)
    return Outcome(c, "holds", proved)


def gate_json(claims: ClaimsFile, outcomes: list) -> dict:
    """Return the gate's results as one JSON object (also what `certify report` reads)."""
    from .io.sweep_store import sha256_file

    return {"format": FORMAT, "version": 1, "claims_file": str(claims.path),
            "title": claims.title,
            "model": str(claims.model_path), "model_sha256": sha256_file(claims.model_path),
            "passed": all(o.status == "holds" for o in outcomes),
            "claims": [{"name": o.claim.name, "status": o.status,
                        "expected": o.claim.expected_text(), "proved": o.proved,
                        "certificate": o.certificate_path,
                        "seconds": round(o.seconds, 3)} for o in outcomes]}


def junit_xml(claims: ClaimsFile, outcomes: list) -> bytes:
    """Return JUnit XML: one test case per claim; failures and undecided claims explained."""
    import xml.etree.ElementTree as ET

    suite = ET.Element("testsuite", name=f"certify gate {claims.path.name}",
                       tests=str(len(outcomes)),
                       failures=str(sum(o.status == "fails" for o in outcomes)),
                       errors=str(sum(o.status == "undecided" for o in outcomes)),
                       time=f"{sum(o.seconds for o in outcomes):.3f}")
    for o in outcomes:
        case = ET.SubElement(suite, "testcase", classname=claims.path.stem, name=o.claim.name,
                             time=f"{o.seconds:.3f}")
        text = f"expected: {o.claim.expected_text()}\n{o.proved}"
        if o.status == "fails":
            ET.SubElement(case, "failure", type="claim-fails",
                          message=f"the claim is false: {o.proved}"[:500]).text = text
        elif o.status == "undecided":
            ET.SubElement(case, "error", type="undecided",
                          message=f"could not be proved either way: {o.proved}"[:500]).text = text
        else:
            ET.SubElement(case, "system-out").text = text
    root = ET.Element("testsuites")
    root.append(suite)
    return ET.tostring(root, encoding="utf-8", xml_declaration=True)
