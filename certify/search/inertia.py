"""Build the hints of the inertia proof in floating point (untrusted).

S: ordered real Schur form J = Q T Q^T with the stable block first, a Sylvester solve that
splits T into diag(T11, T22), then one Lyapunov (flows) or Stein (maps) solve per block; it is
written as a factor F with S = F D F^T, D = diag(I_p, -I_q). The definiteness hint: c between
the radius of M and its smallest eigenvalue, L the Cholesky factor of mid(M) - c I. The
checker decides whether they work; this module only proposes them.
"""

from __future__ import annotations

import math
import warnings
from fractions import Fraction

import numpy as np
import scipy.linalg as sla


INERTIA_KEYS = ("inertia_factor", "definiteness_factor", "definiteness_shift")


def dyadic(x: float, bits: int = 50) -> Fraction:
    """Return x rounded to a dyadic rational with about `bits` significant bits."""
    if x == 0 or not math.isfinite(x):
        return Fraction(0)
    m, e = math.frexp(x)
    return Fraction(round(m * (1 << bits))) * Fraction(2) ** (e - bits)


def to_exact(a: np.ndarray, bits: int = 50) -> list[list[Fraction]]:
    """Return a float matrix as exact dyadics, dropping entries negligible beside the rest."""
    scale = float(np.max(np.abs(a))) if a.size else 0.0
    return [[dyadic(float(v), bits) if abs(v) > 1e-40 * scale else Fraction(0) for v in row]
            for row in a]


def stable_count(j: np.ndarray, kind: str) -> int:
    """Return the float estimate of the stable dimension of j."""
    ev = np.linalg.eigvals(j)
    return int(np.sum(ev.real < 0)) if kind == "flow" else int(np.sum(np.abs(ev) < 1))


def inertia_matrix(j: np.ndarray, kind: str) -> np.ndarray | None:
    """Return a symmetric S with -(J^T S + S J) > 0 (flows) or S - J^T S J > 0 (maps), or None."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return _inertia_matrix(j, kind)


def _inertia_matrix(j: np.ndarray, kind: str) -> np.ndarray | None:
    n = j.shape[0]
    sort = "lhp" if kind == "flow" else "iuc"
    try:
        t, q, k = sla.schur(j, output="real", sort=sort)
        t11, t12, t22 = t[:k, :k], t[:k, k:], t[k:, k:]
        y = sla.solve_sylvester(t11, -t22, -t12) if 0 < k < n else np.zeros((k, n - k))
        if kind == "flow":
            p1 = sla.solve_continuous_lyapunov(t11.T, -np.eye(k)) if k else np.zeros((0, 0))
            p2 = sla.solve_continuous_lyapunov(t22.T, np.eye(n - k)) if k < n else np.zeros((0, 0))
        else:
            p1 = sla.solve_discrete_lyapunov(t11.T, np.eye(k)) if k else np.zeros((0, 0))
            p2 = (sla.solve_discrete_lyapunov(t22.T, -np.eye(n - k)) if k < n
                  else np.zeros((0, 0)))
    except (np.linalg.LinAlgError, ValueError):
        return None
    block = np.zeros((n, n))
    block[:k, :k] = p1
    block[k:, k:] = -p2
    w = np.eye(n)
    w[:k, k:] = y
    v = q @ w
    try:
        vinv = np.linalg.inv(v)
    except np.linalg.LinAlgError:
        return None
    s = vinv.T @ block @ vinv
    s = (s + s.T) / 2
    if not np.all(np.isfinite(s)):
        return None
    return s / np.max(np.abs(s))


def common_inertia_matrix(vertices: list[np.ndarray], kind: str, start: np.ndarray,
                          max_dimension: int = 6) -> np.ndarray | None:
    """Return S improved so that the form is definite at every vertex Jacobian, or None.

    Maximises the smallest eigenvalue of -(J^T S + S J) (flows) or S - J^T S J (maps) over the
    vertices by Nelder-Mead on the entries of S (normalised), starting from the midpoint's
    Lyapunov or Stein solution: a small substitute for a semidefinite program, as steering.
    """
    import scipy.optimize as so

    n = start.shape[0]
    if n > max_dimension:
        return None
    iu = np.triu_indices(n)

    def unpack(v):
        s = np.zeros((n, n))
        s[iu] = v
        s = s + s.T - np.diag(np.diag(s))
        return s / np.linalg.norm(s)

    stack = np.array(vertices)  # all vertex Jacobians at once
    stack_t = np.transpose(stack, (0, 2, 1))

    def form(s):
        return -(stack_t @ s + s @ stack) if kind == "flow" else s - stack_t @ s @ stack

    scale = max(np.linalg.norm(j) for j in vertices)
    best = {}

    class Enough(Exception):
        pass

    def worst(v):
        s = unpack(v)
        value = -np.linalg.eigvalsh(form(s)).min()
        if value < -0.05 * scale:  # definite with a margin: the interval test decides
            best["x"] = v
            raise Enough
        return value

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            res = so.minimize(worst, start[iu], method="Nelder-Mead",
                              options={"maxiter": 40 * n * n, "xatol": 1e-9, "fatol": 1e-9})
        except Enough:
            return unpack(best["x"])
    return unpack(res.x) if res.fun < 0 else None


def factor(s: np.ndarray) -> tuple[np.ndarray, int] | None:
    """Return (F, p): S = F D F^T with D = diag(I_p, -I_q), positive eigenvalues first."""
    try:
        values, vectors = np.linalg.eigh((s + s.T) / 2)
    except np.linalg.LinAlgError:
        return None
    if not np.all(np.isfinite(values)) or np.any(values == 0):
        return None
    order = np.argsort(-values)
    values, vectors = values[order], vectors[:, order]
    return vectors * np.sqrt(np.abs(values)), int(np.sum(values > 0))


def family_spread(families: list) -> tuple[np.ndarray, float]:
    """Return (centre, radius): every matrix of the interval matrices (MidRad) lies within
    radius (largest row sum of distances, in floats: it only steers) of the centre."""
    mids = [np.ldexp(np.array(m.mid, dtype=float), m.exp) for m in families]
    centre = sum(mids) / len(mids)
    radius = 0.0
    for m, mid in zip(families, mids):
        spread = np.abs(mid - centre)
        if m.rad is not None:
            spread = spread + np.ldexp(np.array(m.rad, dtype=float), m.exp)
        radius = max(radius, float(spread.sum(axis=1).max()))
    return centre, radius


def definiteness_hint(mid: np.ndarray, radius: float) -> tuple[np.ndarray, float] | None:
    """Return (L, c): mid - c I = L L^T with radius < c < lambda_min(mid), or None."""
    try:
        low = float(np.linalg.eigvalsh((mid + mid.T) / 2)[0])
    except np.linalg.LinAlgError:
        return None
    if not low > radius:
        return None
    c = radius + (low - radius) / 2
    try:
        lower = np.linalg.cholesky((mid + mid.T) / 2 - c * np.eye(len(mid)))
    except np.linalg.LinAlgError:
        return None
    return lower, c
