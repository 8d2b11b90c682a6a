"""Obligation 2: hyperbolicity and inertia, by a definite Lyapunov (flows) or Stein (maps) form.

Flows: if M = -(J^T S + S J) is positive definite for every J in the family, no eigenvalue lies
on the imaginary axis, and as many have Re < 0 as S has positive eigenvalues (Ostrowski &
Schneider 1962; Taussky 1961). Maps: M = S - J^T S J positive definite means no eigenvalue of
modulus 1, and as many inside the unit circle as S has positive eigenvalues (the Stein form of
the same theorem). Definiteness of the interval matrix and the inertia of S are exact (exact.py).
"""

from __future__ import annotations

from fractions import Fraction

from . import exact
from .arith import BudgetError, DomainError
from .reader import CertificateRejected, Matrix, Problem, reject_if


def lyapunov_matrix(problem: Problem, ar, jac: list, s: Matrix) -> list:
    """Return -(J^T S + S J) for a flow, S - J^T S J for a map, in the arithmetic of J."""
    n, zero = len(s), ar.const(Fraction(0))
    sa = [[ar.const(q) for q in row] for row in s]
    sj = [[sum((sa[i][t] * jac[t][j] for t in range(n)), zero) for j in range(n)]
          for i in range(n)]
    if problem.kind == "flow":
        return [[-(sj[i][j] + sj[j][i]) for j in range(n)] for i in range(n)]
    return [[sa[i][j] - sum((jac[t][i] * sj[t][j] for t in range(n)), zero) for j in range(n)]
            for i in range(n)]


def _families(ar, m: list):
    """Yield exact (lo, hi) interval matrices, the upper triangle filled, covering the family."""
    if hasattr(ar, "vertex_matrices"):
        yield from ar.vertex_matrices(m)
        return
    n = len(m)
    lo = [[Fraction(0)] * n for _ in range(n)]
    hi = [[Fraction(0)] * n for _ in range(n)]
    for i in range(n):
        for j in range(i, n):
            lo[i][j], hi[i][j] = ar.bounds(m[i][j])
    yield lo, hi


def check_inertia(problem: Problem, ar, jac: list, s: Matrix, stable: int, where: str) -> None:
    """Refuse unless S is symmetric, M is definite over J(X, P), and S has `stable` positive
    eigenvalues."""
    n = len(s)
    reject_if(any(s[i][j] != s[j][i] for i in range(n) for j in range(i)), "inertia",
              f"{where}.inertia_matrix", "found a matrix that is not symmetric")
    try:
        with ar.active():
            m = lyapunov_matrix(problem, ar, jac, s)
            definite = all(exact.interval_positive_definite(lo, hi)
                           for lo, hi in _families(ar, m))
        counts = exact.inertia(s) if definite else None
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    except BudgetError as exc:
        raise CertificateRejected("budget", f"{where}.inertia_matrix", str(exc)) from None
    if not definite:
        form = "-(J^T S + S J)" if problem.kind == "flow" else "S - J^T S J"
        raise CertificateRejected("not-definite", f"{where}.inertia_matrix",
                                  f"could not prove {form} positive definite over J(X, P)")
    if counts is None or counts[0] != stable:
        found = "undetermined" if counts is None else f"{counts[0]} positive eigenvalues"
        raise CertificateRejected("inertia", f"{where}.inertia_matrix", f"found {found}, "
                                  f"expected {stable} (the claimed stable dimension)")
