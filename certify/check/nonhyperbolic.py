"""Obligation 6: an exactly rational equilibrium with an eigenvalue on the axis (or circle)."""

from __future__ import annotations

from fractions import Fraction

from . import exact
from .ad import exact_size_bound
from .arith import BudgetError, DomainError, ExactArithmetic
from .reader import Certificate, CertificateRejected, keys, reject_if, vector

MAX_EXACT_BITS = 65_536  # any number of an exact evaluation


def check_not_hyperbolic(cert: Certificate) -> tuple[list[Fraction], str]:
    """Return the point and how its spectrum meets the imaginary axis (maps: the unit circle).

    f(point) = 0 in exact arithmetic, and the exact characteristic polynomial of the exact
    Jacobian has a root there (exact.py decides it by Sturm sequences).
    """
    problem = cert.problem
    keys(cert.claim, {"verdict", "point"}, "claim", {"eigenvalue"})
    point = vector(cert.claim["point"], len(cert.variables), "claim.point")
    for p, (lo, hi) in problem.pbox.items():
        reject_if(lo != hi, "not-exact", f"model.parameters.{p}",
                  "found an interval, expected an exact value")
    params = [problem.pbox[p][0] for p in problem.params]
    if exact_size_bound(problem.tape, point, params, problem.period,
                        MAX_EXACT_BITS) > MAX_EXACT_BITS:
        raise CertificateRejected("budget", "claim.point", "found an exact evaluation that "
                                  f"may need numbers of more than {MAX_EXACT_BITS} bits")
    try:
        residual, jac = problem.residual(ExactArithmetic(), point, params)
    except DomainError as exc:
        raise CertificateRejected("not-exact", "claim.point", str(exc)) from None
    reject_if(any(r != 0 for r in residual), "not-zero", "claim.point",
              "found f(point) != 0, expected an exact equilibrium")
    try:
        poly = exact.charpoly(jac)
    except BudgetError as exc:
        raise CertificateRejected("budget", "claim.point", str(exc)) from None
    flow = problem.kind == "flow"
    found = (exact.imaginary_axis_root if flow else exact.unit_circle_root)(poly)
    if found is None:
        axis = "imaginary axis" if flow else "unit circle"
        raise CertificateRejected("hyperbolic", "claim", f"found no eigenvalue on the {axis}")
    return point, found
