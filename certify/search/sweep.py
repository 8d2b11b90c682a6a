"""Parameter sweeps: certify every cell of a grid, proving big blocks of cells first.

A grid cell is a closed parameter box. A block is a box of whole cells; the sweep starts with
the whole grid as one block and tries one proof on it (for each tracked equilibrium, or the scan
count). A block whose proof fails is cut in two across the axis with the most cells, so the
number of proofs grows with the part of the plane where the proof is lost, not with the number
of cells. Before a proof is tried on a block of several cells, floats at its corners steer: if
they disagree on the unstable dimension, the block is cut at once (a float never decides a
verdict; it only saves a proof that would fail). A single cell that stays undecided is bisected
up to `refine` further levels; if all its parts are certified alike, their pieces make one
certificate for the cell, otherwise the certified parts are listed with their own certificates.

Work items are picklable and carry everything a worker needs, so the same function runs in
this process, in a local process pool, or on a Dask cluster.
"""

from __future__ import annotations

import itertools
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from ..check import check
from ..check.reader import CertificateRejected
from ..model.numbers import exact_texts, rational_text
from ..model import Interval, Model
from ..model.symbolic import FloatSystem

STEER_AXES = 4  # floats at the 2^k corners steer blocks in up to this many grid parameters


@dataclass(frozen=True)
class Axis:
    """One grid parameter: n equal cells between lo and hi (exact rationals)."""

    name: str
    lo: Fraction
    hi: Fraction
    n: int

    def edge(self, i: int) -> Fraction:
        """Return the i-th cell edge (0 <= i <= n), exactly."""
        return self.lo + (self.hi - self.lo) * i / self.n

    def text(self) -> str:
        """Return the axis as NAME=LO..HI:N."""
        return f"{self.name}={rational_text(self.lo)}..{rational_text(self.hi)}:{self.n}"


Block = tuple[tuple[int, int], ...]  # half-open ranges of cell indices, one per axis


@dataclass
class Job:
    """What every block of one sweep shares (sent to workers once per block, small)."""

    model: Model
    axes: tuple[Axis, ...]
    mode: str  # "guess" or "scan"
    guesses: tuple[tuple[float, ...], ...] = ()
    region: tuple[Interval, ...] = ()
    period: int = 1
    refine: int = 0
    max_boxes: int = 2_000
    # In-process checks use the fast arithmetic (it may serve there); certify verify
    # re-checks the written certificates with both.
    arithmetics: tuple[str, ...] = ("flint",)


@dataclass
class Task:
    """One block to prove; `starts` are predicted Newton starting points at its centre (None
    for an equilibrium already certified on an enclosing block, whose result is `inherited`)."""

    block: Block
    starts: list = field(default_factory=list)
    inherited: list = field(default_factory=list)


def block_box(axes, block: Block) -> dict[str, Interval]:
    """Return the parameter box of a block: {name: (lo, hi)} with exact ends."""
    return {a.name: (a.edge(i0), a.edge(i1)) for a, (i0, i1) in zip(axes, block)}


def cells_of(block: Block):
    """Yield the cell indices in a block."""
    return itertools.product(*(range(i0, i1) for i0, i1 in block))


def n_cells(block: Block) -> int:
    """Return the number of cells in a block."""
    out = 1
    for i0, i1 in block:
        out *= i1 - i0
    return out


def split(block: Block) -> tuple[Block, Block]:
    """Cut a block in two across the axis with the most cells."""
    k = max(range(len(block)), key=lambda i: block[i][1] - block[i][0])
    i0, i1 = block[k]
    mid = (i0 + i1) // 2
    return (block[:k] + ((i0, mid),) + block[k + 1:], block[:k] + ((mid, i1),) + block[k + 1:])


def _model_for(job: Job, box: dict[str, Interval]) -> Model:
    return job.model.with_parameters(box)


def _float_point(model: Model, params: dict[str, float], x0, period: int):
    """Return (x, unstable count) by float Newton at a parameter point, or None."""
    from .equilibrium import Undecided, float_residual, newton

    exact = {k: (Fraction(v), Fraction(v)) for k, v in params.items()}
    system = FloatSystem(model, {**model.parameters, **exact})
    try:
        x = newton(system, model.kind, period, np.asarray(x0, dtype=float))
        _, jac = float_residual(system, model.kind, period, x)
    except (Undecided, ValueError, ArithmeticError, np.linalg.LinAlgError):
        return None
    if model.kind == "map":
        jac = jac + np.eye(len(x))  # float_residual returns D(g^K) - I for maps
        lam = np.abs(np.linalg.eigvals(jac)) - 1.0
    else:
        lam = np.linalg.eigvals(jac).real
    if not np.all(np.isfinite(lam)) or np.min(np.abs(lam)) < 1e-9:
        return None
    return x, int(np.sum(lam > 0))


def _steer(job: Job, box: dict[str, Interval], start) -> bool:
    """Return False when floats at the corners of a block say one proof cannot cover it."""
    names = [a.name for a in job.axes]
    if len(names) > STEER_AXES:
        return True
    centre = {k: float((lo + hi) / 2) for k, (lo, hi) in job.model.parameters.items()}
    dims = set()
    for corner in itertools.product(*((box[n][0], box[n][1]) for n in names)):
        point = {**centre, **{n: float(v) for n, v in zip(names, corner)}}
        found = _float_point(job.model, point, start, job.period)
        if found is None:
            return False
        dims.add(found[1])
    return len(dims) == 1


def _predict(job: Job, box: dict[str, Interval], start):
    """Return (x at the block's centre, dx/dp there) by float Newton and central differences."""
    from .equilibrium import Undecided, float_residual, newton

    model = _model_for(job, box)
    system = FloatSystem(model)
    try:
        x = newton(system, model.kind, job.period, np.asarray(start, dtype=float))
        _, jac = float_residual(system, model.kind, job.period, x)
        slopes = []
        for a in job.axes:
            h = 1e-6 * max(1.0, abs(system.point[a.name]))
            saved = system.point[a.name]
            system.point[a.name] = saved + h
            up, _ = float_residual(system, model.kind, job.period, x)
            system.point[a.name] = saved - h
            down, _ = float_residual(system, model.kind, job.period, x)
            system.point[a.name] = saved
            slopes.append(-np.linalg.solve(jac, (up - down) / (2 * h)))
    except (Undecided, ValueError, ArithmeticError, np.linalg.LinAlgError):
        return None
    if not all(np.all(np.isfinite(s)) for s in slopes):
        return None
    return x, np.array(slopes).T


def _attempt_guess(job: Job, box: dict[str, Interval], start, improve: bool = True) -> dict:
    """Return one tracked equilibrium's outcome on a box: certified with its certificate, or
    undecided with the reason."""
    from .equilibrium import certify_guess

    model = _model_for(job, box)
    guess = dict(zip(model.variables, (float(v) for v in start)))
    attempt = certify_guess(model, guess, job.period, max_pieces=1,
                            arithmetics=job.arithmetics, improve=improve)
    if attempt.verdict != "hyperbolic":
        return {"verdict": "undecided", "reason": attempt.reason, "message": attempt.message}
    claim = attempt.verified.claim
    enclosure = [(min(e[i][0] for e in attempt.verified.enclosures),
                  max(e[i][1] for e in attempt.verified.enclosures))
                 for i in range(len(model.variables))]
    return {"verdict": "hyperbolic", "stable_dimension": claim["stable_dimension"],
            "unstable_dimension": claim["unstable_dimension"],
            "enclosure": exact_texts(enclosure),
            "certificate": attempt.certificate}


def _steered_attempt(job: Job, box: dict[str, Interval], x, improve: bool = True) -> dict:
    """Try a proof on a box unless floats at its corners already disagree on the unstable
    dimension (then no single verdict can hold there: undecided, no proof tried)."""
    if not _steer(job, box, x):
        return {"verdict": "undecided", "reason": "near-axis", "proofs": 0,
                "message": "the unstable dimension changes inside (floats at the corners "
                           "disagree), so no single verdict holds here"}
    return {**_attempt_guess(job, box, x, improve), "proofs": 1}


def _attempt_scan(job: Job, box: dict[str, Interval], cut: bool = True) -> dict:
    """Return the certified count on a box; cut=False keeps one parameter piece (a block of
    several cells is cut by the sweep instead)."""
    from .region import scan

    model = _model_for(job, box)
    region = dict(zip(model.variables, job.region))
    result = scan(model, region, max_boxes=job.max_boxes, time_limit=3600.0,
                  arithmetics=job.arithmetics, cut_parameters=cut)
    if result.count is None:
        return {"verdict": "undecided", "reason": result.reason, "message": result.message}
    claim = result.certificate["claim"]
    return {"verdict": "count", "count": result.count,
            "stable_dimensions": claim["stable_dimensions"], "certificate": result.certificate}


def _sub_boxes(box: dict[str, Interval], names: list[str]):
    """Yield the 2^k boxes of one bisection of every grid parameter."""
    halves = []
    for n in names:
        lo, hi = box[n]
        mid = (lo + hi) / 2
        halves.append(((lo, mid), (mid, hi)))
    for choice in itertools.product(*halves):
        yield {**box, **dict(zip(names, choice))}


def _same(a: dict, b: dict) -> bool:
    keys = ("verdict", "stable_dimension", "count", "stable_dimensions")
    return all(a.get(k) == b.get(k) for k in keys)


def _refine(job: Job, box: dict[str, Interval], attempt, depth: int) -> list[dict]:
    """Return the certified parts of a box after `depth` levels of bisection (each part with
    its parameters and outcome); the parts that stay undecided are left out."""
    names = [a.name for a in job.axes]
    parts = []
    for sub in _sub_boxes(box, names):
        found = attempt(sub)
        if found["verdict"] != "undecided":
            found["parameters"] = sub
            parts.append(found)
        elif depth > 1:
            parts += _refine(job, sub, attempt, depth - 1)
    return parts


def _merge(job: Job, parts: list[dict], box: dict[str, Interval]) -> dict | None:
    """Return one certificate for a box tiled by parts certified alike, checked, or None."""
    from .equilibrium import certificate

    first = parts[0]
    if not all(_same(first, p) for p in parts):
        return None
    pieces = [piece for p in parts for piece in p["certificate"]["pieces"]]
    precision = max(p["certificate"]["precision"] for p in parts)
    cert = certificate(_model_for(job, box), job.period, precision,
                       dict(first["certificate"]["claim"]), pieces)
    if "region" in first["certificate"]:
        cert["region"] = first["certificate"]["region"]
    try:
        for name in job.arithmetics:
            check(cert, name)
    except CertificateRejected:
        return None
    merged = {k: v for k, v in first.items() if k != "parameters"}
    return {**merged, "certificate": cert}


def _covered(parts: list[dict], box: dict[str, Interval], names: list[str]) -> Fraction:
    """Return the fraction of the box's volume (in the grid parameters) the parts cover."""
    def volume(b):
        out = Fraction(1)
        for n in names:
            out *= b[n][1] - b[n][0]
        return out
    return sum((volume(p["parameters"]) for p in parts), Fraction(0)) / volume(box)


def _finish_cell(job: Job, box: dict[str, Interval], found: dict, attempt) -> tuple[dict, int]:
    """Refine an undecided cell; return its outcome and the number of proofs tried."""
    counter = [0]

    def counted(sub):
        found = attempt(sub)
        counter[0] += found.pop("proofs", 1)
        return found

    parts = _refine(job, box, counted, job.refine)
    names = [a.name for a in job.axes]
    if parts and _covered(parts, box, names) == 1:
        merged = _merge(job, parts, box)
        if merged is not None:
            merged["refined"] = job.refine
            return merged, counter[0]
    found = dict(found)
    found["parts"] = parts
    found["certified_fraction"] = rational_text(_covered(parts, box, names)) if parts else "0"
    return found, counter[0]


def run_block(job: Job, task: Task) -> dict:
    """Prove one block (the worker's whole job). Returns {"outcomes": [...], "proofs": k,
    "predictions": [...]}: one outcome per tracked equilibrium (or one for the scan)."""
    box = block_box(job.axes, task.block)
    single = n_cells(task.block) == 1
    outcomes, predictions, proofs = [], [], 0
    if job.mode == "scan":  # a scan block is only cut when its count failed: nothing inherited
        found = _attempt_scan(job, box, cut=single)
        proofs += 1
        if found["verdict"] == "undecided" and single and job.refine:
            found, k = _finish_cell(job, box, found, lambda sub: _attempt_scan(job, sub))
            proofs += k
        return {"outcomes": [found], "proofs": proofs, "predictions": [None]}
    for k, start in enumerate(task.starts):
        if task.inherited and task.inherited[k] is not None:
            outcomes.append(task.inherited[k])
            predictions.append(None)
            continue
        predicted = _predict(job, box, start)
        predictions.append(None if predicted is None else
                           (predicted[0].tolist(), predicted[1].tolist()))
        x = predicted[0] if predicted is not None else np.asarray(start, dtype=float)
        if predicted is None:
            found = {"verdict": "undecided", "reason": "no-enclosure",
                     "message": "float Newton did not converge at the centre of the cell"}
        else:
            found = _steered_attempt(job, box, x, improve=single)
            proofs += found.pop("proofs")
        if found["verdict"] == "undecided" and single and job.refine:
            found, tried = _finish_cell(job, box, found,
                                        lambda sub, x=x: _steered_attempt(job, sub, x))
            proofs += tried
        outcomes.append(found)
    return {"outcomes": outcomes, "proofs": proofs, "predictions": predictions}


def child_tasks(job: Job, task: Task, result: dict) -> list[Task]:
    """Return the two halves of a block whose proof failed, with what they inherit."""
    halves = split(task.block)
    out = []
    for half in halves:
        starts, inherited = [], []
        centre = block_box(job.axes, half)
        parent = block_box(job.axes, task.block)
        for k, found in enumerate(result["outcomes"]):
            keep = found if found["verdict"] != "undecided" else None
            inherited.append(keep)
            if job.mode == "scan":
                starts.append(None)
                continue
            pred = result["predictions"][k]
            if pred is None:
                starts.append(task.starts[k])
                continue
            x, slope = np.array(pred[0]), np.array(pred[1])
            shift = np.array([float((centre[a.name][0] + centre[a.name][1]) / 2
                                    - (parent[a.name][0] + parent[a.name][1]) / 2)
                              for a in job.axes])
            starts.append((x + slope @ shift).tolist())
        out.append(Task(half, starts, inherited))
    return out


def needs_split(task: Task, result: dict) -> bool:
    """Return whether a finished block must be cut (several cells, some proof failed)."""
    return n_cells(task.block) > 1 and any(o["verdict"] == "undecided"
                                           for o in result["outcomes"])
