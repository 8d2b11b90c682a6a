"""Find every equilibrium in a region and certify the count (untrusted branch and bound).

Each box is, in this order: inside the uniqueness box of a zero already found; excluded because
some component of f provably misses 0 on it; the home of a new zero (float Newton from its
midpoint, then a Krawczyk box grown as far as the test allows, and a tight classified box);
excluded because its Krawczyk image misses it; or cut in two across its widest side, measured
relative to the region's side (so boxes stay similar in the region's own scale). The finished
tree is a certificate the checker re-verifies (obligation 5); only its verdict is reported.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field
from fractions import Fraction

import numpy as np

from ..check.ad import evaluate
from ..check.arith import ArbArithmetic, DomainError
from ..check.count import inside_for_every_p, widened
from ..check.forms import check_enclosure, spreads
from ..check.reader import CertificateRejected, ZeroHint, read_zero
from ..check.verdict import check
from ..model.numbers import exact_texts, rational_text
from ..model import Interval, Model
from ..model.symbolic import FloatSystem
from .equilibrium import (Undecided, _inflate, branch_enclosure, certificate,
                          certify_branch_piece, certify_piece, float_residual, krawczyk_image,
                          problem_of)
from ..settings import SCAN_MAX_BOXES, SCAN_TIME_LIMIT
from .inertia import INERTIA_KEYS, to_exact

MIN_WIDTH = Fraction(1, 2**40)  # smallest box side, relative to the region's side
GROWTH_STEPS = 40


@dataclass
class Zero:
    """A zero found by the scan: its uniqueness box, enclosure and classification."""

    entry: dict
    box: list[Interval]  # holds the zero's uniqueness box X_p for every p (disjoint from others)
    core: list[Interval] | None = None  # inside X_p for every p: leaves here hold only this zero
    inside: bool | None = None
    stable_dimension: int | None = None
    enclosure: list[Interval] | None = None
    reason: str | None = None  # why the kind is not certified, when it is not
    not_hyperbolic: bool = False  # proved: an eigenvalue exactly on the axis (unit circle)


@dataclass
class ScanResult:
    """The outcome of a scan: a certified count, or null with the reason and the loose ends."""

    model: Model
    region: dict[str, Interval]
    count: int | None
    reason: str | None
    message: str
    zeros: list[Zero] = field(default_factory=list)
    undecided_boxes: list[list[Interval]] = field(default_factory=list)
    boxes: int = 0
    seconds: float = 0.0
    certificate: dict | None = None
    certificate_path: str | None = None
    pieces: int = 0


class _Scanner:
    def __init__(self, model: Model, region: list[Interval], pbox: list[Interval],
                 max_boxes: int, deadline: float, progress, done: int = 0):
        self.model, self.region = model, region
        self.problem = problem_of(model)
        self.ar = ArbArithmetic(53)
        self.pbox = pbox
        self.system = FloatSystem(model, dict(zip(self.problem.params, pbox)))
        self.widths = [hi - lo for lo, hi in region]
        self.zeros: list[Zero] = []
        self.undecided: list[list[Interval]] = []
        self.max_boxes, self.deadline = max_boxes, deadline
        self.progress, self.done, self.start = progress, done, done
        # A zero Newton found but Krawczyk could not enclose over a proper parameter box: give up
        # on this piece at once, so the parameter box is cut instead of the state space.
        self.abort = False
        self.lost: list[np.ndarray] = []  # zeros Newton found and Krawczyk could not enclose
        self.wide = any(lo != hi for lo, hi in pbox)
        with self.ar.active():
            self.p_iv = [self.ar.interval(lo, hi) for lo, hi in self.pbox]

    def run(self) -> dict:
        root: dict = {}
        stack = [(root, self.region)]
        while stack:
            node, box = stack.pop()
            self.done += 1
            if self.progress and self.done % 100 == 0:
                self.progress(self.done, len(stack), len(self.zeros))
            if (self.abort or self.done - self.start > self.max_boxes
                    or time.monotonic() > self.deadline):
                node["undecided"] = True
                self.undecided.append(box)
                continue
            hint = self._hint(box)
            if hint is not None:
                node.update(hint)
                continue
            face = self._face(box)
            if face is not None:
                k, mid = face
                lo, hi = box[k]
            else:
                k = max(range(len(box)), key=lambda i: (box[i][1] - box[i][0]) / self.widths[i]
                        if self.widths[i] else -1)
                lo, hi = box[k]
                if not self.widths[k] or (hi - lo) / self.widths[k] < MIN_WIDTH:
                    node["undecided"] = True
                    self.undecided.append(box)
                    continue
                mid = (lo + hi) / 2
            low, high = {}, {}
            node.update({"split": k, "at": rational_text(mid), "low": low, "high": high})
            stack.append((high, box[:k] + [(mid, hi)] + box[k + 1:]))
            stack.append((low, box[:k] + [(lo, mid)] + box[k + 1:]))
        return root

    def _face(self, box: list[Interval]) -> tuple[int, Fraction] | None:
        """Return a cut (side, value) along a face of a zero's box that crosses this box.

        Leaves then lie inside a uniqueness box or beside it, never across its face: a box
        across a face can neither be given to the zero nor excluded.
        """
        for z in self.zeros:
            if not all(lo < z_hi and z_lo < hi for (lo, hi), (z_lo, z_hi) in zip(box, z.core)):
                continue
            for k, ((lo, hi), (z_lo, z_hi)) in enumerate(zip(box, z.core)):
                for at in (z_lo, z_hi):
                    if lo < at < hi:
                        return k, at
        return None

    def _hint(self, box: list[Interval]) -> dict | None:
        """Return a leaf hint for the box, or None to cut it."""
        for j, z in enumerate(self.zeros):
            if all(z_lo <= lo and hi <= z_hi for (lo, hi), (z_lo, z_hi) in zip(box, z.core)):
                return {"zero": j}
        ar = self.ar
        try:
            with ar.active():
                xs = [ar.interval(lo, hi) for lo, hi in box]
                values, _ = evaluate(self.problem.tape, ar, xs, self.p_iv, 1, False)
                for i, v in enumerate(values):
                    if self.model.kind == "map":
                        v = v - xs[i]
                    lo, hi = ar.bounds(v)
                    if lo > 0 or hi < 0:
                        return {"exclude": i}
        except DomainError:
            return None
        if self._find_zero(box):
            return self._hint(box)
        return self._krawczyk_empty(box)

    def _find_zero(self, box: list[Interval]) -> bool:
        """Look for a new zero near the box by float Newton; certify it; return whether found."""
        x = np.array([float((lo + hi) / 2) for lo, hi in box])
        lows = np.array([float(lo) for lo, _ in box])
        highs = np.array([float(hi) for _, hi in box])
        for step_number in range(30):
            fx, jx = float_residual(self.system, self.model.kind, 1, x)
            if not (np.all(np.isfinite(fx)) and np.all(np.isfinite(jx))):
                return False
            try:
                step = np.linalg.solve(jx, fx)
            except np.linalg.LinAlgError:
                return False
            x = x - step
            if np.linalg.norm(step) <= 1e-14 * (1 + np.linalg.norm(x)):
                break
            # Steering only: give up on an iterate that reached a known zero or wandered far
            # from the box (a zero found from elsewhere is found again from its own box).
            if self._known(x) or (step_number >= 3 and np.any(
                    (x < lows - 4 * (highs - lows)) | (x > highs + 4 * (highs - lows)))):
                return False
        else:
            return False
        slack = [float(hi - lo) / 20 for lo, hi in box]
        if not all(float(lo) - s <= v <= float(hi) + s for (lo, hi), s, v in zip(box, slack, x)):
            return False
        if self._known(x):
            return False
        zero = self._certify_zero(x)
        if zero is None:
            self.abort = self.wide
            self.lost.append(x)
            return False
        self.zeros.append(zero)
        return True

    def _known(self, x: np.ndarray) -> bool:
        """Return whether the point lies in the uniqueness box of a zero already found."""
        return any(all(float(lo) <= v <= float(hi) for (lo, hi), v in zip(z.box, x))
                   for z in self.zeros)

    def _certify_zero(self, x: np.ndarray) -> Zero | None:
        """Return a zero with a uniqueness box grown as far as the Krawczyk test allows.

        Over a parameter box where a plain box fails (the dependency problem), the first-order
        branch form c + A (p - p_c) + E is tried instead.
        """
        zero = self._certify_plain_zero(x)
        if zero is None and self.wide:
            zero = self._certify_branch_zero(x)
        return zero

    def _certify_plain_zero(self, x: np.ndarray) -> Zero | None:
        """Return a zero with a plain uniqueness box, or None."""
        problem, ar = self.problem, self.ar
        try:
            with ar.active():
                _, jc = evaluate(problem.tape, ar, [ar.const(Fraction(float(v))) for v in x],
                                 self.p_iv, 1)
            jf = np.array([[float(v.mid()) for v in row] for row in jc])
            if self.model.kind == "map":
                jf = jf - np.eye(len(x))
            precond = to_exact(np.linalg.inv(jf))
            centre = [Fraction(float(v)) for v in x]
            box, _ = _inflate(problem, ar, self.pbox, centre, precond)
        except (Undecided, DomainError, np.linalg.LinAlgError, ValueError):
            return None
        if any(self._meets(box, z.box) for z in self.zeros):
            return None
        box = self._grow(centre, box, precond)  # every trial kept clear of the other zeros
        entry = {"centre": exact_texts(centre), "box": exact_texts(box),
                 "preconditioner": exact_texts(precond)}
        zero = Zero(entry=entry, box=box, core=box)
        try:
            piece, stable = certify_piece(problem, self.pbox, x, 53)
        except Undecided as exc:
            zero.reason = f"{exc.reason}: {exc.message}"
            if not self.wide:
                self._try_not_hyperbolic(zero, x)
            return zero
        tight = [(Fraction(lo), Fraction(hi)) for lo, hi in piece["box"]]
        if not all(lo <= t_lo and t_hi <= hi for (lo, hi), (t_lo, t_hi) in zip(box, tight)):
            zero.reason = "the box proving its kind reaches outside its uniqueness box"
            return zero
        entry["classification"] = {k: piece[k] for k in ("centre", "box", "preconditioner",
                                                         *INERTIA_KEYS) if k in piece}
        entry["classification"]["stable_dimension"] = stable
        return zero

    def _certify_branch_zero(self, x: np.ndarray) -> Zero | None:
        """Return a zero in first-order form over the parameter piece, or None."""
        try:
            centre, box, sens, precond, slopes, _, _ = branch_enclosure(
                self.problem, self.system, self.pbox, x, 53)
        except Undecided:
            return None
        spread = spreads(sens, self.pbox, len(centre))
        # E must hold more than twice the travel for the core to hold the zero for every p.
        start = [max(hi - c, 3 * s) for (lo, hi), c, s in zip(box, centre, spread)]
        if not self._holds(centre, start, precond, (sens, slopes, spread)):
            return None
        box = [(c - r, c + r) for c, r in zip(centre, start)]
        box = self._grow(centre, box, precond, (sens, slopes, spread))  # hulls kept apart
        form = ZeroHint(centre, box, precond, sens, slopes)
        entry = {"centre": exact_texts(centre), "box": exact_texts(box),
                 "preconditioner": exact_texts(precond), "sensitivity": exact_texts(sens),
                 "preconditioner_slopes": exact_texts(slopes)}
        zero = Zero(entry=entry, box=widened(form, self.pbox, 1),
                    core=widened(form, self.pbox, -1))
        try:
            piece, stable = certify_branch_piece(self.problem, self.system, self.pbox, x, 53)
        except Undecided as exc:
            zero.reason = f"{exc.reason}: {exc.message}"
            return zero
        tight = {k: piece[k] for k in ("centre", "box", "preconditioner", "sensitivity",
                                       "preconditioner_slopes", *INERTIA_KEYS) if k in piece}
        if _fits(tight, entry, self.pbox):
            entry["classification"] = {**tight, "stable_dimension": stable}
        else:
            zero.reason = "the box proving its kind reaches outside its uniqueness box"
        return zero

    def _try_not_hyperbolic(self, zero: Zero, x: np.ndarray) -> None:
        """Prove the zero not hyperbolic when it is exactly rational (the reason says so)."""
        from ..vocabulary import axis_word
        from .equilibrium import Attempt, _try_not_hyperbolic

        attempt = Attempt(guess={}, parameters={})
        _try_not_hyperbolic(self.model, self.problem, x, attempt)
        if attempt.verdict == "not hyperbolic":
            zero.not_hyperbolic = True
            zero.reason = ("not hyperbolic (proved): "
                           + axis_word(attempt.verified.claim["eigenvalue"]))

    def _grow(self, centre: list[Fraction], box: list[Interval], precond,
              branch=None) -> list[Interval]:
        """Return the box grown side by side as far as the Krawczyk test holds.

        Each side is doubled on its own (a zero that does not move in one coordinate keeps a
        thin side there otherwise), up to a quarter of the region's side, never meeting the
        uniqueness box of another zero.
        """
        radius = [hi - c for (lo, hi), c in zip(box, centre)]
        caps = [w / 4 for w in self.widths]
        floor = [cap / 4**12 for cap in caps]  # a thin side starts here, 2^-24 of the cap
        for _ in range(GROWTH_STEPS):  # sides grow fourfold: a box at most 4x too small
            doubled = [min(max(r * 4, f), cap) for r, f, cap in zip(radius, floor, caps)]
            grew = False
            for k in range(len(box)):  # a side that fails now may pass once others grew
                trial = radius[:k] + [doubled[k]] + radius[k + 1:]
                if doubled[k] > radius[k] and self._holds(centre, trial, precond, branch):
                    radius, grew = trial, True
            if not grew:  # coupled sides may only grow together: the 2, 3, ... thinnest ones
                order = sorted(range(len(box)), key=lambda i: radius[i] / caps[i])
                for size in range(2, len(box) + 1):
                    trial = list(radius)
                    for i in order[:size]:
                        trial[i] = doubled[i]
                    if trial != radius and self._holds(centre, trial, precond, branch):
                        radius, grew = trial, True
                        break
                if not grew:
                    break
        return [(c - r, c + r) for c, r in zip(centre, radius)]

    def _holds(self, centre: list[Fraction], radius: list[Fraction], precond,
               branch=None) -> bool:
        """Return whether the Krawczyk test (plain, or of the branch form) holds on c +- r."""
        sens, slopes, spread = branch or (None, None, [0] * len(centre))
        trial = [(c - r, c + r) for c, r in zip(centre, radius)]
        hull = [(lo - s, hi + s) for (lo, hi), s in zip(trial, spread)]
        if any(self._meets(hull, z.box) for z in self.zeros):
            return False
        try:
            check_enclosure(self.problem, self.ar, self.pbox,
                            ZeroHint(centre, trial, precond, sens, slopes), "zero")
        except CertificateRejected:
            return False
        return True

    @staticmethod
    def _meets(a: list[Interval], b: list[Interval]) -> bool:
        return all(lo <= b_hi and b_lo <= hi for (lo, hi), (b_lo, b_hi) in zip(a, b))

    def _krawczyk_empty(self, box: list[Interval]) -> dict | None:
        """Return an 'empty' hint when the Krawczyk image of the box misses it."""
        ar, problem = self.ar, self.problem
        centre = [(lo + hi) / 2 for lo, hi in box]
        try:
            with ar.active():
                _, jc = evaluate(problem.tape, ar, [ar.const(c) for c in centre], self.p_iv, 1)
                jf = np.array([[float(v.mid()) for v in row] for row in jc])
                if self.model.kind == "map":
                    jf = jf - np.eye(len(box))
                precond = to_exact(np.linalg.inv(jf))
                kb, _ = krawczyk_image(problem, ar, self.pbox, centre, box, precond)
        except (DomainError, np.linalg.LinAlgError, ValueError):
            return None
        if any(k_hi < lo or hi < k_lo for (lo, hi), (k_lo, k_hi) in zip(box, kb)):
            return {"empty": {"centre": exact_texts(centre),
                              "preconditioner": exact_texts(precond)}}
        return None


PIECE_BOXES = 2000  # boxes one parameter piece may use before its box is cut instead
MIN_PIECE = Fraction(1, 2**12)  # narrowest parameter piece, relative to the requested box


def scan(model: Model, region: dict[str, Interval] | None = None,
         max_boxes: int = SCAN_MAX_BOXES, time_limit: float = SCAN_TIME_LIMIT,
         progress=None, arithmetics: tuple[str, ...] = ("flint",),
         cut_parameters: bool = True) -> ScanResult:
    """Return the certified number of equilibria (fixed points) of the model in the region.

    For a parameter box the count must hold for every parameter in it: when one proof does not
    cover the box (a zero's branch moves too far for one Krawczyk box), the parameter box is
    cut into pieces, each scanned on its own; the count and the kinds of zeros must agree
    (cut_parameters=False: one piece only, for sweeps, which cut their blocks themselves).
    """
    region = dict(region or model.region or {})
    b = [region[v] for v in model.variables]
    start, deadline = time.monotonic(), time.monotonic() + time_limit
    problem = problem_of(model)
    full = [model.parameters[p] for p in problem.params]
    widths = [hi - lo for lo, hi in full]
    todo, pieces, done = [full], [], 0
    result = ScanResult(model=model, region=region, count=None, reason=None, message="")
    first_zeros: list[Zero] | None = None
    while todo:
        pbox = todo.pop()
        rel = [(hi - lo) / w if w else Fraction(0) for (lo, hi), w in zip(pbox, widths)]
        can_cut = cut_parameters and bool(rel) and max(rel) > MIN_PIECE
        budget = min(PIECE_BOXES, max_boxes - done) if can_cut else max_boxes - done
        scanner = _Scanner(model, b, pbox, budget, deadline, progress, done)
        tree = scanner.run()
        done = scanner.done
        if scanner.undecided and can_cut and time.monotonic() < deadline and done < max_boxes:
            todo += _cut_parameters(scanner, pbox, b, rel)
            continue
        outcome = _finish(scanner, b, tree, pbox, problem.params)
        if outcome is not None:
            result.reason, result.message = outcome
            result.zeros, result.undecided_boxes = scanner.zeros, scanner.undecided
            result.boxes, result.seconds = done, time.monotonic() - start
            if len(pieces) or todo:
                result.message += " (in the parameter piece " + ", ".join(
                    f"{p}=[{float(lo):.6g}, {float(hi):.6g}]"
                    for p, (lo, hi) in zip(problem.params, pbox)) + ")"
            return result
        pieces.append({"parameters": exact_texts(dict(zip(problem.params, pbox))),
                       "zeros": [z.entry for z in scanner.zeros], "tree": tree})
        if first_zeros is None:
            first_zeros = scanner.zeros
    result.boxes, result.seconds = done, time.monotonic() - start
    result.zeros = first_zeros or []
    return _certified_count(model, result, pieces, b, arithmetics)


def _cut_parameters(scanner: _Scanner, pbox: list[Interval], b: list[Interval],
                    rel: list[Fraction]) -> list[list[Interval]]:
    """Return the two halves of the parameter box, cut where the zeros move furthest."""
    score = _movement(scanner, pbox, b)
    if not any(score):
        score = [float(r) for r in rel]
    k = max(range(len(rel)), key=lambda i: score[i] if rel[i] > MIN_PIECE else -1.0)
    lo, hi = pbox[k]
    mid = (lo + hi) / 2
    return [pbox[:k] + [(mid, hi)] + pbox[k + 1:], pbox[:k] + [(lo, mid)] + pbox[k + 1:]]


def _certified_count(model: Model, result: ScanResult, pieces: list[dict], b: list[Interval],
                     arithmetics: tuple[str, ...]) -> ScanResult:
    """Write the count certificate of the pieces, check it, and fill in the result."""
    counts = {sum(1 for z in _inside_flags(p, b)) for p in pieces}
    if len(counts) > 1:
        result.reason = "count-varies"
        result.message = ("the number of equilibria in the region differs between parts of the "
                          "parameter box (a zero crosses the border of the region)")
        return result
    dims = _dims(pieces[0], b)
    claim = {"verdict": "count", "count": len(dims), "stable_dimensions": dims}
    cert = certificate(model, 1, 53, claim, [])
    cert["region"] = exact_texts(dict(zip(model.variables, b)))
    cert["pieces"] = pieces
    try:
        for name in arithmetics:
            verified = check(cert, name)
    except CertificateRejected as exc:
        result.reason, result.message = "precision-limit", f"the checker refused: {exc}"
        return result
    for z, derived in zip(result.zeros, verified.claim["zeros"]):
        z.inside, z.stable_dimension = derived["inside"], derived["stable_dimension"]
        z.enclosure = derived["enclosure"]
    result.count, result.certificate = verified.claim["count"], cert
    result.pieces = len(pieces)
    return result


def _fits(inner: dict, outer: dict, pbox: list[Interval]) -> bool:
    """Return whether the form inner lies in the form outer for every parameter (as checked)."""
    n, k = len(inner["centre"]), len(pbox)
    return inside_for_every_p(read_zero(inner, n, k, "inner", optional=set(INERTIA_KEYS)),
                              read_zero(outer, n, k, "outer"), pbox)


def _movement(scanner: _Scanner, pbox: list[Interval], region: list[Interval]) -> list[float]:
    """Return, per parameter, how far the zeros found move across its range (floats, steering).

    The largest |(J^-1 df/dp)_ik| wid(p_k) / wid(region_i) over the zeros and coordinates: the
    parameter to cut is the one whose range moves a zero furthest in the region's own scale.
    """
    system, kind, names = scanner.system, scanner.model.kind, scanner.problem.params
    widths = np.array([float(hi - lo) or 1.0 for lo, hi in region])
    score = [0.0] * len(pbox)
    points = [np.array([float(Fraction(c)) for c in z.entry["centre"]]) for z in scanner.zeros]
    for x in points + scanner.lost:
        try:
            _, jx = float_residual(system, kind, 1, x)
            jinv = np.linalg.inv(jx)
        except (np.linalg.LinAlgError, ValueError):
            continue
        for k, (name, (lo, hi)) in enumerate(zip(names, pbox)):
            if lo == hi:
                continue
            saved, h = system.point[name], float(hi - lo) / 2
            system.point[name] = saved + h
            up, _ = float_residual(system, kind, 1, x)
            system.point[name] = saved - h
            down, _ = float_residual(system, kind, 1, x)
            system.point[name] = saved
            move = np.abs(jinv @ (up - down)) / widths
            if np.all(np.isfinite(move)):
                score[k] = max(score[k], float(np.max(move)))
    return score


def _tight(entry: dict) -> list[Interval]:
    return [(Fraction(lo), Fraction(hi)) for lo, hi in entry.get("classification", entry)["box"]]


def _inside_flags(piece: dict, b: list[Interval]):
    for entry in piece["zeros"]:
        if all(lo <= e_lo and e_hi <= hi for (lo, hi), (e_lo, e_hi) in zip(b, _tight(entry))):
            yield entry


def _dims(piece: dict, b: list[Interval]) -> list:
    dims = []
    for entry in _inside_flags(piece, b):
        c = entry.get("classification")
        dims.append(None if c is None else c["stable_dimension"])
    return sorted(dims, key=lambda d: (d is None, d))


def _finish(scanner: _Scanner, b, tree, pbox, params) -> tuple[str, str] | None:
    """Return (reason, message) when this piece cannot give a certified count, else None.

    Each zero is placed first (inside, outside, or on the border of the region by its own
    enclosure), so that a zero is called "on the border" only when it is.
    """
    border = 0
    for z in scanner.zeros:
        t = _tight(z.entry)
        inside = all(lo <= e_lo and e_hi <= hi for (lo, hi), (e_lo, e_hi) in zip(b, t))
        outside = any(e_hi < lo or hi < e_lo for (lo, hi), (e_lo, e_hi) in zip(b, t))
        z.enclosure = t
        z.inside = inside if (inside or outside) else None
        z.stable_dimension = z.entry.get("classification", {}).get("stable_dimension")
        border += z.inside is None
        if scanner.undecided and z.stable_dimension is not None:  # no checked certificate
            z.stable_dimension, z.reason = None, "not reported: the count is not certified"
    if scanner.undecided:
        budget = time.monotonic() > scanner.deadline or scanner.done - scanner.start > \
            scanner.max_boxes
        return ("budget" if budget else "undecided-boxes",
                f"{len(scanner.undecided)} boxes stayed undecided " +
                ("(the budget ran out)" if budget else
                 "(near a singular zero, or a zero the search could not certify)"))
    if border:
        return "on-boundary", (f"{border} zero(s) on or too near the border of the region to "
                               "say whether they are in it; widen or shift the region")
    return None
