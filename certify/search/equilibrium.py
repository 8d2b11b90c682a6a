"""Find and certify one equilibrium (or fixed or periodic point) from a guess.

Untrusted search: float Newton, epsilon-inflation (Rump), the Krawczyk test run through the
checker's own code, a float inertia matrix, precision escalation and parameter bisection. The
verdict is whatever the checker accepts on the finished certificate; everything else is
undecided with a reason.
"""

from __future__ import annotations

from dataclasses import dataclass, field
import itertools
from fractions import Fraction

import numpy as np

from ..version import __version__
from ..check.ad import evaluate
from ..check import enclosure
from ..check.arith import ArbArithmetic, BudgetError, DomainError
from ..check.forms import branch_krawczyk
from ..check.inertia import check_inertia, lyapunov_families
from ..check.matrices import MidRad
from ..check.reader import FORMAT, VERSION, CertificateRejected, Problem, ZeroHint
from ..check.verdict import Verified, check
from ..model.numbers import exact_texts, rational_text
from ..model import Interval, Model
from ..model.symbolic import FloatSystem
from ..settings import (DEFAULT_MAX_PRECISION, DEFAULT_PRECISION, HINT_DIMENSION,
                        INFLATION_ROUNDS, MAX_PIECES, MIN_PIECE_FRACTION)
from .inertia import (common_inertia_matrix, definiteness_hint, dyadic, factor, family_spread,
                      inertia_matrix, to_exact)


class Undecided(Exception):
    """The search could not produce a certificate: a reason word and a sentence for people."""

    def __init__(self, reason: str, message: str):
        self.reason, self.message = reason, message
        super().__init__(f"{reason}: {message}")


@dataclass
class Attempt:
    """The outcome for one guess: a checked certificate, or the reason there is none."""

    guess: dict[str, float]
    parameters: dict[str, Interval]
    verdict: str = "undecided"
    reason: str | None = None
    message: str = ""
    certificate: dict | None = None
    verified: Verified | None = None
    precision: int = DEFAULT_PRECISION
    eigenvalues: list = field(default_factory=list)


def problem_of(model: Model, period: int = 1) -> Problem:
    """Return the checker's view of the model."""
    return Problem(model.tape, model.kind, period, list(model.parameters), dict(model.parameters))


# ---------------------------------------------------------------- floats (steering only)


def float_residual(system: FloatSystem, kind: str, period: int,
                   x: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Return f(x) and Df(x) in floats, with f = g^k - id for maps."""
    if kind == "flow":
        return system.g(x), system.dg(x)
    y, jac = x, np.eye(len(x))
    for _ in range(period):
        jac = system.dg(y) @ jac
        y = system.g(y)
    return y - x, jac - np.eye(len(x))


def newton(system: FloatSystem, kind: str, period: int, x0: np.ndarray,
           iterations: int = 200) -> np.ndarray:
    """Return a float approximation of a zero near x0, or raise Undecided(no-enclosure)."""
    x = np.array(x0, dtype=float)
    previous = np.inf
    for _ in range(iterations):
        fx, jx = float_residual(system, kind, period, x)
        if not np.all(np.isfinite(fx)) or not np.all(np.isfinite(jx)):
            raise Undecided("no-enclosure", "Newton's method left the domain of the model")
        try:
            step = np.linalg.solve(jx, fx)
        except np.linalg.LinAlgError:
            step = np.linalg.lstsq(jx, fx, rcond=None)[0]
        x = x - step
        size, scale = np.linalg.norm(step), 1 + np.linalg.norm(x)
        # converged, or down at rounding level and no longer shrinking
        if size <= 1e-15 * scale or (size <= 1e-12 * scale and size >= previous / 2):
            break
        previous = size
    fx, _ = float_residual(system, kind, period, x)
    if not np.all(np.isfinite(x)) or np.linalg.norm(fx) > 1e-6 * (1 + np.linalg.norm(x)):
        raise Undecided("no-enclosure", "Newton's method did not converge from this guess")
    return x


# ---------------------------------------------------------------- one piece


def _mid(ar, x) -> float:
    """Return the float nearest the midpoint of a ball (steering only)."""
    return float(x.mid())


def _refine_centre(problem: Problem, ar, pbox, centre: list[Fraction],
                   precond: list[list[Fraction]], rounds: int) -> list[Fraction]:
    """Return the centre improved by simplified Newton steps with residuals at precision ar."""
    p_iv = [ar.interval(lo, hi) for lo, hi in pbox]
    bits = ar.prec + 8
    for _ in range(rounds):
        with ar.active():
            fc, _ = evaluate(problem.tape, ar, [ar.const(c) for c in centre], p_iv,
                             problem.period, False)
            res = [(sum(ar.bounds(v)) / 2) - (c if problem.kind == "map" else 0)
                   for v, c in zip(fc, centre)]
        step = [sum(precond[i][t] * res[t] for t in range(len(res))) for i in range(len(res))]
        centre = [_round(c - s, bits) for c, s in zip(centre, step)]
    return centre


def _round(q: Fraction, bits: int) -> Fraction:
    """Return q rounded to a dyadic with `bits` bits after its leading bit."""
    if q == 0:
        return q
    e = q.numerator.bit_length() - q.denominator.bit_length()
    scale = Fraction(2) ** (bits - e)
    return Fraction(round(q * scale)) / scale


def certify_piece(problem: Problem, pbox: list[Interval], x: np.ndarray, prec: int) -> dict:
    """Return a checked piece {parameters, centre, box, preconditioner, inertia_matrix}.

    Raises Undecided(no-enclosure | near-axis | domain).
    """
    n = len(x)
    ar = ArbArithmetic(prec)
    centre = [Fraction(float(v)) for v in x]
    try:
        with ar.active():
            p_iv = [ar.interval(lo, hi) for lo, hi in pbox]
            _, jc = evaluate(problem.tape, ar, [ar.const(c) for c in centre], p_iv,
                             problem.period)
        jf = np.array([[_mid(ar, v) for v in row] for row in jc])
    except DomainError as exc:
        raise Undecided("domain", str(exc)) from None
    if problem.kind == "map":
        jf = jf - np.eye(n)
    try:
        c_float = np.linalg.inv(jf)
    except np.linalg.LinAlgError:
        raise Undecided("no-enclosure", "the Jacobian is singular at the approximate zero") \
            from None
    if not np.all(np.isfinite(c_float)):
        raise Undecided("no-enclosure", "the Jacobian is singular at the approximate zero")
    precond = to_exact(c_float)
    if prec > 53:
        centre = _refine_centre(problem, ar, pbox, centre, precond, 2 + prec // 53)
    box, jac = _inflate(problem, ar, pbox, centre, precond)
    jmid = np.ldexp(np.array(jac.mid, dtype=float), jac.exp)
    entries, stable = inertia_entries(problem, ar, jac, inertia_matrix(jmid, problem.kind))
    return exact_texts({"parameters": dict(zip(problem.params, pbox)), "centre": centre,
                        "box": box, "preconditioner": precond, **entries}), stable


def inertia_entries(problem: Problem, ar, jac, s_float) -> tuple[dict, int]:
    """Return the checked inertia keys of a piece (S as a factor, the definiteness hint from
    HINT_DIMENSION variables on) and its stable dimension; raise Undecided(near-axis)."""
    split = factor(s_float) if s_float is not None else None
    if split is None:
        raise Undecided("near-axis", "no inertia matrix could be built (an eigenvalue is on "
                        "or very near the axis)")
    f, stable = to_exact(split[0], 52), split[1]
    hint = ZeroHint([], [], [], None, None, inertia_factor=f)
    if len(f) >= HINT_DIMENSION:
        try:
            families = lyapunov_families(problem, ar, jac, f, stable)
        except (DomainError, BudgetError):
            families = []
        found = definiteness_hint(*family_spread(families)) if families else None
        if found is not None:
            hint.definiteness_factor = [row[:i + 1] for i, row in enumerate(to_exact(found[0]))]
            hint.definiteness_shift = dyadic(found[1])
    try:
        with ar.active():
            check_inertia(problem, ar, jac, hint, stable, "piece")
    except CertificateRejected as exc:
        raise Undecided("near-axis", "hyperbolicity could not be proved over the enclosure "
                        f"({exc.reason})") from None
    entries = {"inertia_factor": f}
    if hint.definiteness_factor is not None:
        entries.update(definiteness_factor=hint.definiteness_factor,
                       definiteness_shift=hint.definiteness_shift)
    return entries, stable


def branch_enclosure(problem: Problem, system: FloatSystem, pbox: list[Interval],
                     x: np.ndarray, prec: int):
    """Return (c, X, A, C, slopes, J, arithmetic): the first-order form's Krawczyk test passed.

    For every p in the box, the zero lies in c + A (p - p_c) + (X - c). Raises Undecided.
    """
    ar = ArbArithmetic(prec)
    jinv, sens_float, slopes = _branch_slopes(problem, system, pbox, x)
    sens = to_exact(sens_float)
    precond = to_exact(jinv)
    slopes_exact = [to_exact(m) for m in slopes]
    centre = [Fraction(float(v)) for v in x]
    tiny = Fraction(2) ** (-prec - 20)
    try:
        image, _, _, _ = branch_krawczyk(problem, ar, pbox, ZeroHint(
            centre, [(c, c) for c in centre], precond, sens, slopes_exact))
        radius = [max(abs(lo), abs(hi)) * 2 + abs(c) * Fraction(2) ** (-prec + 5) + tiny
                  for (lo, hi), c in zip(image, centre)]
        for _ in range(INFLATION_ROUNDS):
            box = [(c - r, c + r) for c, r in zip(centre, radius)]
            image, e, jac, form_ar = branch_krawczyk(problem, ar, pbox, ZeroHint(
                centre, box, precond, sens, slopes_exact))
            if all(e_lo < lo and hi < e_hi for (lo, hi), (e_lo, e_hi) in zip(image, e)):
                break
            # E starts at twice the image at E = 0, so image > 1.5 E means the linear part
            # alone expands (factor > 1) here, and it only grows with E: give up at once.
            if any(max(abs(lo), abs(hi)) > Fraction(3, 2) * r
                   for r, (lo, hi) in zip(radius, image)):
                raise Undecided("box-too-wide", "the first-order branch form did not enclose "
                                "(the Krawczyk map expands over this parameter box)")
            radius = [max(r, abs(lo), abs(hi)) * Fraction(3, 2) + tiny
                      for r, (lo, hi) in zip(radius, image)]
            if any(r > 1e3 * (1 + abs(c)) for r, c in zip(radius, centre)):
                raise Undecided("box-too-wide", "the first-order branch form did not enclose")
        else:
            raise Undecided("box-too-wide", "the first-order branch form did not enclose")
    except DomainError as exc:
        raise Undecided("domain", str(exc)) from None
    return centre, box, sens, precond, slopes_exact, jac, form_ar


def _branch_slopes(problem: Problem, system: FloatSystem, pbox: list[Interval],
                   x: np.ndarray) -> tuple[np.ndarray, np.ndarray, list[np.ndarray]]:
    """Return J^-1, the sensitivity -J^-1 df/dp and the slopes d/dp J(x(p), p)^-1 along the
    branch, at x, by central differences in floats (they only steer). Raises Undecided."""
    n, k = len(x), len(pbox)
    _, jx = float_residual(system, problem.kind, problem.period, x)
    try:
        jinv = np.linalg.inv(jx)
    except np.linalg.LinAlgError:
        raise Undecided("no-enclosure", "the Jacobian is singular") from None
    dfdp = np.zeros((n, k))
    steps = []
    for i, name in enumerate(problem.params):
        lo, hi = pbox[i]
        if lo == hi:
            steps.append(None)
            continue
        h = 1e-6 * max(1.0, abs(float(lo + hi) / 2))
        steps.append(h)
        saved = system.point[name]
        system.point[name] = saved + h
        up, _ = float_residual(system, problem.kind, problem.period, x)
        system.point[name] = saved - h
        down, _ = float_residual(system, problem.kind, problem.period, x)
        system.point[name] = saved
        dfdp[:, i] = (up - down) / (2 * h)
    sens_float = -jinv @ dfdp
    # The preconditioner's slopes make I - C(p) J(p) of second order in p - p_c.
    slopes = []
    for i, name in enumerate(problem.params):
        h = steps[i]
        if h is None:
            slopes.append(np.zeros((n, n)))
            continue
        saved = system.point[name]
        inverses = []
        for sign in (1, -1):
            system.point[name] = saved + sign * h
            _, j_side = float_residual(system, problem.kind, problem.period,
                                       x + sign * h * sens_float[:, i])
            inverses.append(np.linalg.inv(j_side))
        system.point[name] = saved
        slopes.append((inverses[0] - inverses[1]) / (2 * h))
    if not all(np.all(np.isfinite(m)) for m in slopes):
        raise Undecided("no-enclosure", "the Jacobian is singular near the branch")
    return jinv, sens_float, slopes


def certify_branch_piece(problem: Problem, system: FloatSystem, pbox: list[Interval],
                         x: np.ndarray, prec: int, improve: bool = True) -> dict:
    """Return a checked piece in first-order form: x(p) in x~ + A (p - p_c) + E.

    A ~ -J^-1 df/dp at the parameter centre (central differences in floats: it only steers).
    Raises Undecided.
    """
    ar = ArbArithmetic(prec)
    centre, box, sens, precond, slopes_exact, jac, form_ar = branch_enclosure(problem, system, pbox,
                                                                         x, prec)
    jmid = np.array([[float(v.c.mid()) for v in row] for row in jac])
    s_float = inertia_matrix(jmid, problem.kind)
    if s_float is None:
        raise Undecided("near-axis", "no inertia matrix could be built")
    entries, stable = _checked_branch_inertia(problem, ar, form_ar, jac, s_float, improve)
    return exact_texts({"parameters": dict(zip(problem.params, pbox)), "centre": centre,
                        "box": box, "sensitivity": sens, "preconditioner": precond,
                        "preconditioner_slopes": slopes_exact, **entries}), stable


def _checked_branch_inertia(problem, ar, form_ar, jac, s_float, improve=True):
    """Return inertia keys the checker accepts over the branch, and the stable dimension, or
    raise Undecided.

    First the midpoint's Lyapunov/Stein solution; then one improved to be definite at the
    vertex Jacobians of the first-order form (a common Lyapunov matrix).
    """
    def improved():  # a common Lyapunov matrix, only when the midpoint's solution fails
        centre = np.array([[float(v.c.mid()) for v in row] for row in jac])
        slopes = [np.array([[float(v.d[i].mid()) for v in row] for row in jac])
                  for i in range(form_ar.k)]
        vertices = [centre]
        for slope in slopes:
            if np.any(slope):
                vertices = [v + t * slope for v in vertices for t in (-1, 1)]
        better = common_inertia_matrix(vertices, problem.kind, s_float) \
            if len(vertices) > 1 else None
        if better is not None:
            yield better

    reason = "no inertia matrix could be built"
    for s in itertools.chain([s_float], improved() if improve else ()):
        try:
            with ar.active():
                return inertia_entries(problem, form_ar, jac, s)
        except Undecided as exc:
            reason = exc.message
    raise Undecided("near-axis", f"hyperbolicity not proved over the branch ({reason})")


def krawczyk_image(problem: Problem, ar, pbox, centre, box, precond) -> tuple[list, MidRad]:
    """Return the exact bounds of K(X, P) (the checker's K - c shifted back) and J_g(X, P)."""
    image, jac = enclosure.krawczyk_image(problem, ar, pbox, centre, box, precond)
    return [(c + lo, c + hi) for c, (lo, hi) in zip(centre, image)], jac


def _inflate(problem: Problem, ar, pbox, centre, precond):
    """Return a box X with K(X, P) in its interior (epsilon-inflation, Rump 1980), and J(X, P)."""
    tiny = Fraction(2) ** (-ar.prec - 20)
    try:
        with ar.active():
            image, _ = krawczyk_image(problem, ar, pbox, centre, [(c, c) for c in centre],
                                      precond)
            # Start at twice the Newton correction plus 32 units in the last place, so that the
            # proof does not hinge on one arithmetic's rounding.
            radius = [max(abs(lo - c), abs(hi - c)) * 2 + abs(c) * Fraction(2) ** (-ar.prec + 5)
                      + tiny for (lo, hi), c in zip(image, centre)]
            for _ in range(INFLATION_ROUNDS):
                box = [(c - r, c + r) for c, r in zip(centre, radius)]
                kb, jac = krawczyk_image(problem, ar, pbox, centre, box, precond)
                if all(b[0] < lo and hi < b[1] for b, (lo, hi) in zip(box, kb)):
                    return box, jac
                if any(hi < b[0] or lo > b[1] for b, (lo, hi) in zip(box, kb)):
                    # Krawczyk 1969: every zero in X lies in K(X, P); K misses X, so none does.
                    shown = ", ".join(f"[{float(lo):.6g}, {float(hi):.6g}]" for lo, hi in box)
                    raise Undecided("no-enclosure", "the Krawczyk image misses the box, which "
                                    f"proves there is no equilibrium in {shown}")
                radius = [max(r, abs(lo - c), abs(hi - c)) * Fraction(3, 2) + tiny
                          for r, c, (lo, hi) in zip(radius, centre, kb)]
                if any(r > 1e6 * (1 + abs(c)) for r, c in zip(radius, centre)):
                    break
    except DomainError as exc:
        raise Undecided("domain", str(exc)) from None
    raise Undecided("no-enclosure", "the Krawczyk test did not succeed for any inflated box "
                    "(the zero may be singular, e.g. a fold, or the box too wide)")


# ---------------------------------------------------------------- one guess, all pieces


def precisions(start: int, limit: int) -> list[int]:
    """Return the precision ladder start, 2 start, 4 start, ... up to limit."""
    out, p = [], start
    while p <= limit:
        out.append(p)
        p *= 2
    return out or [start]


def certify_guess(model: Model, guess: dict[str, float], period: int = 1,
                  precision: int = DEFAULT_PRECISION,
                  max_precision: int = DEFAULT_MAX_PRECISION,
                  max_pieces: int = MAX_PIECES,
                  arithmetics: tuple[str, ...] = ("flint",),
                  first_order: bool = True, improve: bool = True) -> Attempt:
    """Return the certified verdict for the equilibrium reached from one guess.

    The finished certificate must pass the checker in every arithmetic named (the fast one by
    default; both when the certificate is to be written to a file). improve=False skips the
    search for a common Lyapunov matrix (sweeps cut such a block instead).
    """
    attempt = Attempt(guess=dict(guess), parameters=dict(model.parameters))
    problem = problem_of(model, period)
    x0 = np.array([guess[v] for v in model.variables], dtype=float)
    full = [model.parameters[p] for p in problem.params]
    try:
        pieces, used, stable = _cover(model, problem, full, x0, precision, max_precision,
                                      max_pieces, first_order, improve)
    except Undecided as exc:
        attempt.reason, attempt.message = exc.reason, exc.message
        if all(lo == hi for lo, hi in full):
            _try_not_hyperbolic(model, problem, x0, attempt)
        return attempt
    claim = {"verdict": "hyperbolic", "stable_dimension": stable,
             "unstable_dimension": model.dimension - stable}
    cert = certificate(model, period, used, claim, pieces)
    try:
        for name in arithmetics:
            verified = check(cert, name)
    except CertificateRejected as exc:
        attempt.reason = "precision-limit"
        attempt.message = f"the checker ({name} arithmetic) refused: {exc}"
        return attempt
    attempt.verdict, attempt.certificate, attempt.verified = "hyperbolic", cert, verified
    attempt.precision = used
    attempt.reason, attempt.message = None, ""
    return attempt


def certificate(model: Model, period: int, precision: int, claim: dict,
                pieces: list[dict]) -> dict:
    """Return the certificate document (proofs/FORMAT.md) for a claim."""
    cert = {"format": FORMAT, "version": VERSION, "tool": f"certify {__version__}",
            "model": {"name": model.name, "kind": model.kind,
                      "variables": list(model.variables),
                      "parameters": exact_texts(model.parameters),
                      "equations": dict(model.equations)},
            "period": period, "precision": precision, "claim": claim}
    if pieces:
        cert["pieces"] = pieces
    return cert


def _cover(model, problem, full, x0, precision, max_precision, max_pieces, first_order=True,
           improve=True):
    """Return (pieces, precision used, stable dimension): pieces covering the parameter box,
    bisecting where one proof does not suffice."""
    ladder = precisions(precision, max_precision)
    widths = [hi - lo for lo, hi in full]
    todo = [(full, x0)]
    pieces, used, stable = [], precision, None
    while todo:
        pbox, guess = todo.pop()
        system = FloatSystem(model, dict(zip(problem.params, pbox)))
        x = newton(system, model.kind, problem.period, guess)
        failure = None
        wide = any(lo != hi for lo, hi in pbox)
        # Over a proper parameter box the widths come from the box, not from rounding: more
        # precision does not help there, cutting the box does.
        for prec in ladder if not wide else ladder[:1]:
            try:
                piece = None
                if wide and first_order:  # first-order form first; plain where it fails
                    try:
                        piece = certify_branch_piece(problem, system, pbox, x, prec, improve)
                    except Undecided as exc:
                        if exc.reason == "near-axis":  # plain intervals would be wider still
                            raise
                piece = piece or certify_piece(problem, pbox, x, prec)
                break
            except Undecided as exc:
                failure = exc
                if exc.reason == "domain" and all(lo == hi for lo, hi in pbox):
                    break
        else:
            piece = None
        if piece is not None:
            if stable is not None and piece[1] != stable:
                raise Undecided("near-axis", "pieces of the parameter box have different "
                                "stable dimensions")
            stable, used = piece[1], max(used, prec)
            pieces.append(piece[0])
            continue
        rel = [(hi - lo) / w if w else Fraction(0) for (lo, hi), w in zip(pbox, widths)]
        k = max(range(len(rel)), key=lambda i: rel[i]) if rel else None
        if k is None or rel[k] <= MIN_PIECE_FRACTION:
            if any(lo != hi for lo, hi in pbox):
                named = ", ".join(f"{p}=[{float(lo):.10g}, {float(hi):.10g}]"
                                  for p, (lo, hi) in zip(problem.params, pbox) if lo != hi)
                reason = "near-axis" if failure.reason == "near-axis" else "box-too-wide"
                raise Undecided(reason, f"the piece {named} could not be certified "
                                f"({failure.message})")
            raise failure
        if len(pieces) + len(todo) + 2 > max_pieces:
            if max_pieces == 1:  # one proof was asked for: say why it failed
                raise Undecided(failure.reason, failure.message)
            raise Undecided("budget", f"more than {max_pieces} pieces would be needed")
        lo, hi = pbox[k]
        mid = (lo + hi) / 2
        todo.append((pbox[:k] + [(mid, hi)] + pbox[k + 1:], x))
        todo.append((pbox[:k] + [(lo, mid)] + pbox[k + 1:], x))
    return pieces, used, stable


def _try_not_hyperbolic(model: Model, problem: Problem, x0: np.ndarray, attempt: Attempt):
    """Prove a zero is not hyperbolic when it is exactly rational (FORMAT.md, obligation 6)."""
    system = FloatSystem(model)
    try:
        x = newton(system, model.kind, problem.period, x0, iterations=400)
    except Undecided:
        return
    for bound in (1, 10, 100, 1000, 10**4, 10**6, 10**9):
        point = [Fraction(float(v)).limit_denominator(bound) for v in x]
        if any(abs(float(p) - float(v)) > 1e-7 * (1 + abs(v)) for p, v in zip(point, x)):
            continue
        claim = {"verdict": "not hyperbolic", "point": [rational_text(p) for p in point]}
        cert = certificate(model, problem.period, DEFAULT_PRECISION, claim, [])
        try:
            verified = check(cert)
        except CertificateRejected as exc:
            if exc.code == "budget":  # no smaller denominator can make the work smaller
                attempt.reason = "budget"
                attempt.message += f"; an exact proof of the eigenvalue on the axis was not " \
                                   f"tried: {exc.reason}"
                return
            continue
        attempt.verdict, attempt.reason = "not hyperbolic", None
        axis = "imaginary axis" if model.kind == "flow" else "unit circle"
        attempt.message = f"exact eigenvalue on the {axis} ({verified.claim['eigenvalue']})"
        attempt.certificate, attempt.verified = cert, verified
        return
