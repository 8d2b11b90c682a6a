"""Obligation 2: hyperbolicity and inertia, by a definite Lyapunov (flows) or Stein (maps) form.

The certificate gives S by a factor F: S = F D F^T with D = diag(I_p, -I_q), p the claimed
stable dimension. Flows: if M = -(J^T S + S J) is positive definite for every J of the family,
no eigenvalue of J lies on the imaginary axis, S is nonsingular, and as many eigenvalues have
Re < 0 as S has positive eigenvalues (Ostrowski & Schneider 1962). Maps: M = S - J^T S J
positive definite means the same with the unit circle (Taussky 1961; the Cayley transform
carries it to the flow case). S nonsingular makes F nonsingular, so S has exactly p positive
eigenvalues (Sylvester's law of inertia): nothing about S itself needs a test.

Each interval matrix M of the family is proved definite in one of two ways:
- with a hint (L, c), c > 0: E = M - c I - L L^T; if every row sum of |E| is < c, then every
  symmetric matrix of the family has lambda_min >= c + lambda_min(L L^T) - rho(E) >= c -
  max_i sum_j |E_ij| > 0 (Weyl; rho(E) is at most any induced norm);
- without: mid(M) - sigma I positive definite, sigma the largest row sum of rad(M) (Rohn 1994),
  decided exactly by Sylvester's criterion on integers (exact.py).
"""

from __future__ import annotations

from fractions import Fraction

from . import exact
from .arith import BudgetError, DomainError
from .enclosure import EXTRA_BITS
from .matrices import MidRad
from .reader import CertificateRejected, Problem, ZeroHint



def factor_product(f: list[list[Fraction]], stable: int, bits: int, fast: bool) -> MidRad:
    """Return an enclosure of S = F D F^T, D = diag(I_stable, -I_rest)."""
    fm = MidRad.from_exact(f, bits, fast)
    signed = MidRad([[-v if j >= stable else v for j, v in enumerate(row)] for row in fm.mid],
                    None if fm.rad is None else fm.rad, fm.exp, fast)
    return signed @ fm.transpose()


def lyapunov_form(kind: str, s: MidRad, jac: MidRad) -> MidRad:
    """Return -(J^T S + S J) for a flow, S - J^T S J for a map."""
    sj = s @ jac
    if kind == "flow":
        return -(sj + sj.transpose())
    return s - jac.transpose() @ sj


def _form_families(problem: Problem, ar, jac: list, s: MidRad, bits: int):
    """Yield MidRad matrices whose definiteness proves it over parameter forms (forms.py)."""
    n = len(jac)
    b = ar.base
    sa = [[ar.form(b.const((lo + hi) / 2), [ar.zero] * ar.k, b.interval((lo - hi) / 2,
                                                                         (hi - lo) / 2))
           for lo, hi in row] for row in s.bounds()]
    zero = ar.const(Fraction(0))
    sj = [[sum((sa[i][t] * jac[t][j] for t in range(n)), zero) for j in range(n)]
          for i in range(n)]
    if problem.kind == "flow":
        m = [[-(sj[i][j] + sj[j][i]) for j in range(n)] for i in range(n)]
    else:
        m = [[sa[i][j] - sum((jac[t][i] * sj[t][j] for t in range(n)), zero) for j in range(n)]
             for i in range(n)]
    for lo, hi in ar.vertex_matrices(m):
        yield MidRad.from_bounds(lo, hi, bits, s.fast)


def lyapunov_families(problem: Problem, ar, jac, factor: list[list[Fraction]],
                      stable: int) -> list[MidRad]:
    """Return the interval matrices M whose definiteness proves obligation 2 (or 3b)."""
    bits = ar.prec + EXTRA_BITS
    s = factor_product(factor, stable, bits, ar.name == "flint")
    if isinstance(jac, MidRad):
        return [lyapunov_form(problem.kind, s, jac)]
    with ar.active():
        return list(_form_families(problem, ar, jac, s, bits))


def hint_definite(m: MidRad, factor: list[list[Fraction]], shift: Fraction, bits: int) -> bool:
    """Return whether every row sum of |M - c I - L L^T| is below c (c = shift > 0)."""
    n = len(m.mid)
    lower = MidRad.from_exact([row + [Fraction(0)] * (n - len(row)) for row in factor], bits,
                              m.fast)
    residual = m - MidRad.diagonal(n, shift, bits, m.fast) - lower @ lower.transpose()
    return shift > 0 and max(residual.row_magnitudes()) < shift


def exact_definite(m: MidRad) -> bool:
    """Return whether mid(M) - sigma I is positive definite, sigma = max row sum of rad(M)."""
    n = len(m.mid)
    # Each matrix of the family is symmetric, so the upper entry (i, j) encloses both m_ij, m_ji.
    mid = [[m.mid[min(i, j)][max(i, j)] for j in range(n)] for i in range(n)]
    rad = m.rad or [[0] * n for _ in range(n)]
    sigma = max(sum(rad[min(i, j)][max(i, j)] for j in range(n)) for i in range(n))
    shifted = [[v - (sigma if i == j else 0) for j, v in enumerate(row)]
               for i, row in enumerate(mid)]
    return exact.positive_definite_integers(shifted)


def check_inertia(problem: Problem, ar, jac, hint: ZeroHint, stable: int, where: str) -> None:
    """Refuse unless M is positive definite over the family with S = F D F^T (D from stable).

    jac is J_g as a MidRad over a plain box, or a matrix of parameter forms (ar their
    arithmetic).
    """
    bits = ar.prec + EXTRA_BITS
    try:
        families = lyapunov_families(problem, ar, jac, hint.inertia_factor, stable)
        if hint.definiteness_factor is None:
            definite = all(exact_definite(m) for m in families)
        else:
            definite = all(hint_definite(m, hint.definiteness_factor, hint.definiteness_shift,
                                         bits) for m in families)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    except BudgetError as exc:
        raise CertificateRejected("budget", f"{where}.inertia_factor", str(exc)) from None
    if not definite:
        form = "-(J^T S + S J)" if problem.kind == "flow" else "S - J^T S J"
        raise CertificateRejected("not-definite", f"{where}.inertia_factor",
                                  f"could not prove {form} positive definite over J(X, P) with "
                                  f"S = F D F^T, D having {stable} entries +1 (the claimed "
                                  "stable dimension)")
