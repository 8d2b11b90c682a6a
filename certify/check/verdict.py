"""The verdict: read a certificate, test the obligations its claim needs, say what it proves.

A hyperbolic claim needs obligations 1 or 3 (the enclosure of each piece), 2 (its inertia) and
4 (the pieces cover the parameter box); a count needs 5; a not-hyperbolic claim needs 6.
Every check either returns or raises CertificateRejected; nothing here searches, iterates or
inflates.
"""

from __future__ import annotations

from dataclasses import dataclass

from .arith import ArbArithmetic
from .count import check_count
from .forms import check_enclosure
from .inertia import check_inertia
from .nonhyperbolic import check_not_hyperbolic
from .reader import (MAX_PIECES, Bounds, Box, Certificate, CertificateRejected, integer, items,
                     keys, read_certificate, read_zero, reject_if)
from .tiling import check_tiling, piece_parameters


@dataclass
class Verified:
    """What a certificate proved, as re-derived by the checker."""

    claim: dict
    kind: str
    variables: list[str]
    parameters: dict[str, Bounds]
    enclosures: list[Box]  # one per piece: K(X, P) intersected with X
    pieces: int
    arithmetic: str


def make_arithmetic(name: str, prec: int):
    """Return the interval arithmetic called name ("flint" or "python") at prec bits."""
    if name == "flint":
        return ArbArithmetic(prec)
    from .dyadic import DyadicArithmetic

    return DyadicArithmetic(prec)


def check(data: dict, arithmetic: str = "flint") -> Verified:
    """Return what the certificate proves, or raise CertificateRejected.

    arithmetic: "flint" (python-flint balls), "python" (standard-library dyadic intervals) or
    "both": then the file is accepted only if each arithmetic accepts it.
    """
    if arithmetic == "both":
        check(data, "flint")
        return check(data, "python")
    if arithmetic not in ("flint", "python"):
        raise CertificateRejected("malformed", "arithmetic", f"unknown arithmetic {arithmetic!r}")
    cert = read_certificate(data)
    problem, verdict = cert.problem, cert.claim["verdict"]

    def verified(claim: dict, enclosures: list[Box], pieces: int, name: str) -> Verified:
        return Verified(claim, problem.kind, cert.variables, problem.pbox, enclosures, pieces,
                        name)

    if verdict == "not hyperbolic":
        point, where = check_not_hyperbolic(cert)
        return verified({"verdict": verdict, "eigenvalue": where, "point": point},
                        [[(q, q) for q in point]], 0, "exact")
    ar = make_arithmetic(arithmetic, cert.precision)
    if verdict == "count":
        claim, enclosures = check_count(cert, ar)
        return verified(claim, enclosures, claim["pieces"], ar.name)
    stable, enclosures = _check_hyperbolic(cert, ar)
    claim = {"verdict": verdict, "stable_dimension": stable,
             "unstable_dimension": len(cert.variables) - stable}
    return verified(claim, enclosures, len(enclosures), ar.name)


def _check_hyperbolic(cert: Certificate, ar) -> tuple[int, list[Box]]:
    """Return the stable dimension and the enclosure of each piece of a hyperbolic claim."""
    problem, n = cert.problem, len(cert.variables)
    keys(cert.claim, {"verdict", "stable_dimension", "unstable_dimension"}, "claim")
    stable = integer(cert.claim["stable_dimension"], 0, n, "claim.stable_dimension")
    unstable = integer(cert.claim["unstable_dimension"], 0, n, "claim.unstable_dimension")
    reject_if(stable + unstable != n, "inertia", "claim",
              "found {} + {} dimensions, expected a total of {}", stable, unstable, n)
    pieces = items(cert.data.get("pieces"), None, "pieces")
    if not 1 <= len(pieces) <= MAX_PIECES:
        raise CertificateRejected("malformed", "pieces", f"expected 1 to {MAX_PIECES} pieces")
    enclosures, boxes = [], []
    for i, piece in enumerate(pieces):
        where = f"pieces[{i}]"
        hint = read_zero(piece, n, len(problem.params), where, {"parameters"}, inertia=True)
        pbox = piece_parameters(problem, piece, where)
        boxes.append(pbox)
        enclosure, jac, inertia_ar = check_enclosure(problem, ar, pbox, hint, where)
        check_inertia(problem, inertia_ar, jac, hint, stable, where)
        enclosures.append(enclosure)
    check_tiling([problem.pbox[p] for p in problem.params], boxes)
    return stable, enclosures
