"""The Python surface: certify equilibria of a model, verify certificate files."""

from __future__ import annotations

import json
from dataclasses import dataclass, field
from fractions import Fraction
from pathlib import Path

from .check import CertificateRejected, Verified, check, load
from .errors import InputError
from .model import Interval, Model, load_model
from .settings import (DEFAULT_MAX_PRECISION, DEFAULT_PRECISION, MAX_CELLS, MAX_PERIOD,
                       MAX_PRECISION, MAX_REFINE, MIN_PRECISION, SCAN_MAX_BOXES, SCAN_TIME_LIMIT,
                       SWEEP_MAX_BOXES)
from .vocabulary import type_word


@dataclass
class EquilibriumResult:
    """One certified (or undecided) equilibrium, fixed point or periodic point."""

    verdict: str  # "hyperbolic", "not hyperbolic" or "undecided"
    reason: str | None
    message: str
    kind: str
    variables: tuple[str, ...]
    parameters: dict[str, Interval]
    guess: dict[str, float]
    period: int = 1
    stable_dimension: int | None = None
    unstable_dimension: int | None = None
    enclosure: dict[str, Interval] | None = None
    eigenvalues: list[dict] = field(default_factory=list)  # {"re": (lo, hi), "im": (lo, hi)}
    pieces: int = 0
    first_order_pieces: int = 0  # pieces proved in the first-order branch form
    precision: int = DEFAULT_PRECISION
    certificate: dict | None = None
    certificate_path: str | None = None
    same_as: int | None = None  # the number of an earlier result that is provably the same

    @property
    def type(self) -> str | None:
        """Return sink / source / saddle (flows) or attracting / repelling / saddle (maps)."""
        if self.verdict != "hyperbolic":
            return None
        return type_word(self.kind, self.stable_dimension, self.unstable_dimension)


def equilibrium(model: Model | str | Path, guesses: list[dict[str, float]] | None = None,
                parameters: dict[str, Interval] | None = None, period: int = 1,
                precision: int = DEFAULT_PRECISION,
                max_precision: int = DEFAULT_MAX_PRECISION,
                arithmetics: tuple[str, ...] = ("flint",),
                first_order: bool = True) -> list[EquilibriumResult]:
    """Return one result per guess: a verdict proved by the checker, or undecided with a reason.

    arithmetics: the checker's arithmetics every verdict must pass in-process ("flint", the
    fast one, by default; add "python" for the independent standard-library one).
    first_order: over parameter boxes, try the first-order branch form x~ + A (p - p_c) + E
    before plain intervals (the default).
    """
    from .search.equilibrium import certify_guess  # numpy, scipy, sympy: only when searching

    model = _prepared(model, parameters)
    _check_run(model, period, precision, max_precision)
    guesses = _checked_guesses(model, guesses)
    results = [_result(model, certify_guess(model, g, period, precision, max_precision,
                                            arithmetics=arithmetics, first_order=first_order),
                       period) for g in guesses]
    _mark_repeats(results)
    return results


def _prepared(model: Model | str | Path, parameters: dict[str, Interval] | None) -> Model:
    """Return the model (read from its file when given a path) with the parameters set."""
    if not isinstance(model, Model):
        model = load_model(model)
    return model.with_parameters(parameters) if parameters else model


def _check_run(model: Model, period: int, precision: int = DEFAULT_PRECISION,
               max_precision: int = DEFAULT_MAX_PRECISION) -> None:
    """Refuse a period or precision that the searches of equilibrium and sweep cannot use."""
    if period != 1 and model.kind != "map":
        raise InputError("--period is for maps only (kind = \"map\")", model.source, "--period")
    if not 1 <= period <= MAX_PERIOD:
        raise InputError(f"the period must be between 1 and {MAX_PERIOD}", model.source,
                         "--period")
    if not (MIN_PRECISION <= precision <= MAX_PRECISION and max_precision <= MAX_PRECISION):
        raise InputError(f"precision must be between {MIN_PRECISION} and {MAX_PRECISION} bits",
                         model.source, "--precision")


def _checked_guesses(model: Model, guesses: list[dict[str, float]] | None) -> list[dict]:
    """Return the guesses (given, or the model's), each with a value for every variable only."""
    guesses = list(guesses or model.guesses)
    if not guesses:
        raise InputError("no starting point: give --guess or [[guesses]] in the model",
                         model.source, "guesses")
    for g in guesses:
        missing = [v for v in model.variables if v not in g]
        extra = [k for k in g if k not in model.variables]
        if missing or extra:
            what = f"no value for {', '.join(missing)}" if missing else \
                f"'{extra[0]}' is not a variable"
            raise InputError(what, model.source, "--guess")
    return guesses


def _mark_repeats(results: list[EquilibriumResult]) -> None:
    """Mark a result whose enclosure lies in an earlier result's uniqueness box (every piece's
    box, so for every parameter): it is provably the same equilibrium."""
    for j, r in enumerate(results):
        if r.enclosure is None:
            continue
        for i, earlier in enumerate(results[:j]):
            if earlier.certificate is None or earlier.same_as is not None or \
                    len(earlier.certificate.get("pieces", [])) != 1 or \
                    "sensitivity" in earlier.certificate["pieces"][0]:
                continue
            box = earlier.certificate["pieces"][0]["box"]
            if all(Fraction(lo) <= r.enclosure[v][0] and r.enclosure[v][1] <= Fraction(hi)
                   for v, (lo, hi) in zip(r.variables, box)):
                r.same_as = i + 1
                break


def _result(model: Model, attempt, period: int) -> EquilibriumResult:
    res = EquilibriumResult(verdict=attempt.verdict, reason=attempt.reason,
                            message=attempt.message, kind=model.kind,
                            variables=model.variables, parameters=attempt.parameters,
                            guess=attempt.guess, period=period, precision=attempt.precision,
                            certificate=attempt.certificate)
    ver = attempt.verified
    if ver is None:
        return res
    res.enclosure = {v: (min(e[i][0] for e in ver.enclosures), max(e[i][1] for e in
                                                                   ver.enclosures))
                     for i, v in enumerate(model.variables)}
    res.pieces = ver.pieces
    res.first_order_pieces = sum(1 for p in (attempt.certificate or {}).get("pieces", [])
                                 if "sensitivity" in p)
    if ver.claim["verdict"] == "hyperbolic":
        res.stable_dimension = ver.claim["stable_dimension"]
        res.unstable_dimension = ver.claim["unstable_dimension"]
        if ver.pieces == 1:
            res.eigenvalues = _eigenvalues(model, attempt.certificate, period)
    return res


def _eigenvalues(model: Model, cert: dict, period: int) -> list[dict]:
    """Return enclosures of the eigenvalues over J(X, P) where Arb's Rump method isolates them.

    Informational only: the verdict comes from the certificate, never from these.
    """
    from flint import acb_mat, arb_mat

    from .check.ad import evaluate
    from .check.arith import ArbArithmetic

    piece = cert["pieces"][0]
    ar = ArbArithmetic(cert["precision"])
    frac = [tuple(Fraction(x) for x in pair) for pair in piece["box"]]
    pb = [tuple(Fraction(x) for x in piece["parameters"][p]) for p in model.parameters]
    try:
        with ar.active():
            _, jac = evaluate(model.tape, ar, [ar.interval(lo, hi) for lo, hi in frac],
                              [ar.interval(lo, hi) for lo, hi in pb], period)
            values = acb_mat(arb_mat(jac)).eig(algorithm="rump")
            out = []
            for z in values:
                out.append({"re": ar.bounds(z.real), "im": ar.bounds(z.imag)})
    except (ValueError, ArithmeticError):
        return []
    return sorted(out, key=lambda e: (e["re"][0], e["im"][0]))


def scan(model: Model | str | Path, region: dict[str, Interval] | None = None,
         parameters: dict[str, Interval] | None = None, max_boxes: int = SCAN_MAX_BOXES,
         time_limit: float = SCAN_TIME_LIMIT, progress=None,
         arithmetics: tuple[str, ...] = ("flint",)):
    """Return the certified number of equilibria in a region (a ScanResult), for every
    parameter in the model's (or the given) parameter box; count is None when not certified."""
    from .search.region import scan as run_scan

    model = _prepared(model, parameters)
    region = _exact_region(model, region)
    return run_scan(model, region, max_boxes, time_limit, progress, arithmetics)


def _exact_region(model: Model, region: dict | None) -> dict[str, Interval]:
    """Return the search region (given, or the model's) with exact ends, one side per variable."""
    from .model import parse_value

    region = region or model.region
    if not region:
        raise InputError("no region: give --region or a [region] table", model.source,
                         "region")
    exact_region = {}
    for v in model.variables:
        if v not in region:
            raise InputError(f"the region has no side for '{v}'", model.source, "region")
        lo, hi = region[v]
        ends = [x if isinstance(x, Fraction) else parse_value(x, model.source, "region")[0]
                for x in (lo, hi)]
        if ends[0] >= ends[1]:
            raise InputError(f"the side for '{v}' is empty or has width 0", model.source,
                             "region")
        exact_region[v] = (ends[0], ends[1])
    return exact_region




def verify(source: str | Path | dict, arithmetic: str = "both") -> Verified:
    """Return what a certificate proves, or raise CertificateRejected; source is a path or dict.

    arithmetic: "flint" (python-flint balls), "python" (standard-library dyadic intervals) or
    "both" (the default): the file is accepted only if every selected arithmetic accepts it.
    """
    if isinstance(source, dict):
        data = source
    else:
        try:
            data = load(Path(source).read_bytes())
        except OSError as exc:
            raise CertificateRejected("malformed", "file",
                                      f"cannot read ({exc.strerror})") from None
    return check(data, arithmetic)


class SweepResult:
    """A finished sweep: iterate over its cells (read back from results.jsonl, streaming)."""

    def __init__(self, folder: Path, manifest: dict, stats):
        self.folder, self.manifest, self.stats = folder, manifest, stats

    def __iter__(self):
        from .io.sweep_store import read_results

        return read_results(self.folder)

    @property
    def results_path(self) -> Path:
        """Return the path of the results file (JSON lines)."""
        from .io.sweep_store import RESULTS

        return self.folder / RESULTS

    def summary(self) -> dict:
        """Return {"cells", "certified", "undecided", "rows": [(label, cells), ...]}."""
        from .io.sweep_report import summarize

        return summarize(self)

    def write_jsonl(self, path: str | Path) -> None:
        """Write the cells' JSON lines (the same as results.jsonl) to another file."""
        import shutil

        shutil.copyfile(self.results_path, path)


def _grid_axes(model: Model, grid) -> tuple:
    from .model import parse_value
    from .search.sweep import Axis

    if not grid:
        raise InputError("a sweep needs at least one grid parameter", model.source, "--grid")
    axes, cells = [], 1
    for name, spec in grid.items():
        if name not in model.parameters:
            known = ", ".join(model.parameters) or "none"
            raise InputError(f"no parameter named '{name}' (parameters: {known})",
                             model.source, "--grid")
        lo_text, hi_text, n = spec
        lo, _ = parse_value(lo_text if isinstance(lo_text, (str, int, Fraction)) else
                            str(lo_text), model.source, f"--grid {name}")
        hi, _ = parse_value(hi_text if isinstance(hi_text, (str, int, Fraction)) else
                            str(hi_text), model.source, f"--grid {name}")
        if not lo < hi:
            raise InputError(f"the range of '{name}' is empty (LO must be below HI)",
                             model.source, "--grid")
        if isinstance(n, bool) or not isinstance(n, int) or n < 1:
            raise InputError(f"the number of cells for '{name}' must be a positive integer",
                             model.source, "--grid")
        cells *= n
        axes.append(Axis(name, lo, hi, n))
    if cells > MAX_CELLS:
        raise InputError(f"{cells} cells is more than the limit of {MAX_CELLS}", model.source,
                         "--grid")
    return tuple(axes)


def _model_hash(model: Model, source) -> str:
    import hashlib

    if isinstance(source, (str, Path)):
        from .io.sweep_store import sha256_file

        return sha256_file(source)
    text = json.dumps({"name": model.name, "kind": model.kind,
                       "variables": list(model.variables),
                       "equations": dict(model.equations),
                       "parameters": {k: [str(lo), str(hi)] for k, (lo, hi) in
                                      model.parameters.items()}}, sort_keys=True)
    return hashlib.sha256(text.encode()).hexdigest()


def sweep(model: Model | str | Path, grid: dict, guesses: list[dict[str, float]] | None = None,
          scan: bool = False, region: dict[str, Interval] | None = None,
          parameters: dict[str, Interval] | None = None, refine: int = 0, period: int = 1,
          workers: int | None = None, scheduler: str | None = None,
          out: str | Path | None = None, resume: bool = False, max_boxes: int = SWEEP_MAX_BOXES,
          progress=None) -> SweepResult:
    """Certify every cell of a parameter grid; return the results (also in out/results.jsonl).

    grid: {name: (lo, hi, n)}, n equal cells between lo and hi (exact decimals or rationals).
    Each cell is a closed parameter box; its verdicts hold for every parameter in it. With
    scan=False the equilibria reached from the guesses (at the grid's centre, continued from
    block to block) are certified; with scan=True the number of equilibria in the region.
    refine: cells left undecided are bisected up to this many further levels.
    workers: local processes (default: all cores); scheduler: a Dask address instead.
    out: the sweep's folder (default: a new temporary folder).
    """
    import os
    import tempfile

    from .io.sweep_store import FORMAT, VERSION, SweepStore
    from .search.executors import drive
    from .search.sweep import Job

    source = model
    model = _prepared(model, parameters)
    axes = _grid_axes(model, grid)
    _check_run(model, period)
    if not 0 <= refine <= MAX_REFINE:
        raise InputError(f"--refine must be between 0 and {MAX_REFINE}", model.source,
                         "--refine")
    box = list(_exact_region(model, region).values()) if scan else ()
    starts = () if scan else tuple(tuple(float(g[v]) for v in model.variables)
                                   for g in _checked_guesses(model, guesses))
    job = Job(model=model, axes=axes, mode="scan" if scan else "guess", guesses=starts,
              region=tuple(box), period=period, refine=refine, max_boxes=max_boxes)
    arguments = {"grid": [a.text() for a in axes], "mode": job.mode,
                 "guesses": [list(g) for g in starts],
                 "region": [[str(lo), str(hi)] for lo, hi in box],
                 "parameters": {k: [str(lo), str(hi)] for k, (lo, hi) in
                                model.parameters.items()},
                 "refine": refine, "period": period, "max_boxes": max_boxes}
    manifest = {"format": FORMAT, "version": VERSION, "tool": "certify",
                "model": str(source) if isinstance(source, (str, Path)) else model.name,
                "model_name": model.name,
                "model_sha256": _model_hash(model, source), "arguments": arguments,
                "cells": 1}
    for a in axes:
        manifest["cells"] *= a.n
    folder = Path(out) if out is not None else Path(tempfile.mkdtemp(prefix="certify-sweep-"))
    store = SweepStore(folder)
    finished = store.open(manifest, resume)
    try:
        stats = drive(job, store, finished, workers or os.cpu_count() or 1, scheduler,
                      progress)
    finally:
        store.close()
    return SweepResult(folder, manifest, stats)
