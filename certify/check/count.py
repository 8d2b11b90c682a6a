"""Obligation 5: the certified number of equilibria in a region (proofs/FORMAT.md).

The region B is cut by a bisection tree whose leaves each carry a hint: a component of f that
provably misses 0 on the leaf, a Krawczyk image that misses the leaf, or the number of a zero
whose uniqueness box contains the leaf. Every zero of f(., p) in B therefore lies in one of the
uniqueness boxes; they are pairwise disjoint and each holds exactly one zero, whose enclosure
lies inside B (counted) or outside it (not counted); an enclosure across the border of B is
rejected, so a count is never stated for it.
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError
from .enclosure import bounds, krawczyk_image
from .forms import check_enclosure, spreads
from .inertia import check_inertia
from .reader import (Box, Certificate, CertificateRejected, ZeroHint, integer, interval, items,
                     keys, matrix, rational, read_zero, reject_if, vector)
from .tiling import check_tiling, piece_parameters

MAX_NODES = 2_000_000
MAX_DEPTH = 200
MAX_ZEROS = 10_000  # zeros in one piece, and the count claimed
MAX_COUNT_PIECES = 10_000  # parameter pieces of one count


def check_count(cert: Certificate, ar) -> tuple[dict, list[Box]]:
    """Return (claim as re-derived, zero enclosures of the first piece) for a count certificate.

    The parameter box is covered by pieces (obligation 4); each piece has its own zeros and
    tree, and must give the claimed count and the claimed stable dimensions of the zeros inside
    (as a multiset; null for a zero left unclassified).
    """
    problem, variables, claim = cert.problem, cert.variables, cert.claim
    n = len(variables)
    keys(claim, {"verdict", "count", "stable_dimensions"}, "claim")
    region = keys(cert.data.get("region"), set(variables), "region")
    b = [interval(region[v], f"region.{v}") for v in variables]
    count = integer(claim["count"], 0, MAX_ZEROS, "claim.count")
    dims = items(claim["stable_dimensions"], count, "claim.stable_dimensions")
    for i, d in enumerate(dims):
        if d is not None:
            integer(d, 0, n, f"claim.stable_dimensions[{i}]")
    want = sorted(dims, key=lambda d: (d is None, d))
    pieces = items(cert.data.get("pieces"), None, "pieces")
    if not 1 <= len(pieces) <= MAX_COUNT_PIECES:
        raise CertificateRejected("malformed", "pieces", f"expected 1 to {MAX_COUNT_PIECES} "
                                  "pieces")
    covers, first, leaves = [], None, 0
    for i, piece in enumerate(pieces):
        where = f"pieces[{i}]"
        keys(piece, {"parameters", "zeros", "tree"}, where)
        pbox = piece_parameters(problem, piece, where)
        covers.append(pbox)
        found, cores = _check_zeros(cert, ar, pbox, piece["zeros"], b, where)
        leaves += _check_tree(cert, ar, pbox, piece["tree"], b, cores, where)
        inside = sorted((z["stable_dimension"] for z in found if z["inside"]),
                        key=lambda d: (d is None, d))
        if inside != want:
            raise CertificateRejected("count", where, f"found {len(inside)} zeros inside with "
                                      f"stable dimensions {inside}, expected {want}")
        first = found if first is None else first
    check_tiling([problem.pbox[p] for p in problem.params], covers)
    return {"verdict": "count", "count": count, "stable_dimensions": want, "zeros": first,
            "leaves": leaves, "pieces": len(pieces), "region": b}, \
        [z["enclosure"] for z in first]


def _check_zeros(cert: Certificate, ar, pbox: Box, zeros, b: Box, where: str):
    """Check the zeros of one piece; return them (inside B or not, kind, enclosure), cores."""
    n, k = len(cert.variables), len(pbox)
    zeros = items(zeros, None, f"{where}.zeros")
    if len(zeros) > MAX_ZEROS:
        raise CertificateRejected("malformed", f"{where}.zeros", f"more than {MAX_ZEROS} zeros")
    hulls, cores, found = [], [], []
    for j, zero in enumerate(zeros):
        at = f"{where}.zeros[{j}]"
        hint = read_zero(zero, n, k, at, optional={"classification"})
        enclosure, _, _ = check_enclosure(cert.problem, ar, pbox, hint, at)
        stable = None
        if "classification" in zero:
            tight = read_zero(zero["classification"], n, k, f"{at}.classification",
                              {"stable_dimension"}, inertia=True)
            enclosure, jac, inertia_ar = check_enclosure(cert.problem, ar, pbox, tight,
                                                         f"{at}.classification")
            reject_if(not inside_for_every_p(tight, hint, pbox), "count",
                      f"{at}.classification.box", "found a box reaching outside the uniqueness box")
            stable = tight.stable_dimension
            check_inertia(cert.problem, inertia_ar, jac, tight, stable, f"{at}.classification")
        inside = all(lo <= e_lo and e_hi <= hi for (lo, hi), (e_lo, e_hi) in zip(b, enclosure))
        outside = any(e_hi < lo or hi < e_lo for (lo, hi), (e_lo, e_hi) in zip(b, enclosure))
        reject_if(not (inside or outside), "on-boundary", at,
                  "found a zero whose enclosure crosses the border of the region")
        hull = widened(hint, pbox, 1)
        for m, other in enumerate(hulls):
            if all(o_lo <= hi and lo <= o_hi for (lo, hi), (o_lo, o_hi) in zip(hull, other)):
                raise CertificateRejected("count", at, f"found a uniqueness box meeting "
                                          f"that of zeros[{m}]")
        hulls.append(hull)
        cores.append(widened(hint, pbox, -1))
        found.append({"inside": inside, "stable_dimension": stable, "enclosure": enclosure})
    return found, cores


def widened(hint: ZeroHint, pbox: Box, sign: int) -> Box:
    """Return the hull (sign 1) or the core (sign -1) of X_p = c + A (p - p_c) + E over P.

    The hull holds X_p for every p (zeros with disjoint hulls are distinct); the core lies
    inside X_p for every p (a leaf in it holds no zero but this one).
    """
    s = spreads(hint.sensitivity, pbox, len(hint.box))
    return [(lo - sign * si, hi + sign * si) for (lo, hi), si in zip(hint.box, s)]


def inside_for_every_p(inner: ZeroHint, outer: ZeroHint, pbox: Box) -> bool:
    """Return whether c' + A'(p - p_c) + E' lies in c + A(p - p_c) + E for every p in P.

    The difference c' - c + (A' - A)(p - p_c) + E' must lie in E: E' shifted by c' - c and
    widened by sum_l |A'_il - A_il| rad(P_l).
    """
    n, k = len(inner.centre), len(pbox)
    zero = [[Fraction(0)] * k for _ in range(n)]
    a1, a0 = inner.sensitivity or zero, outer.sensitivity or zero
    diff = [[x - y for x, y in zip(r1, r0)] for r1, r0 in zip(a1, a0)]
    return all(lo0 <= lo1 - s and hi1 + s <= hi0 for (lo1, hi1), (lo0, hi0), s in
               zip(inner.box, outer.box, spreads(diff, pbox, n)))


def _check_tree(cert: Certificate, ar, pbox: Box, tree, region: Box, cores: list[Box],
                where: str) -> int:
    """Walk the bisection tree over the region and check every leaf's hint; return the leaves."""
    n = len(region)
    stack, nodes, leaves = [(tree, region, f"{where}.tree", 0)], 0, 0
    while stack:
        node, box, where, depth = stack.pop()
        nodes += 1
        if nodes > MAX_NODES or depth > MAX_DEPTH:
            raise CertificateRejected("malformed", where, "found a tree too large or too deep")
        if not isinstance(node, dict):
            raise CertificateRejected("malformed", where, "expected a split or a leaf")
        if "split" in node or len(node) != 1:
            keys(node, {"split", "at", "low", "high"}, where)
            k = integer(node["split"], 0, n - 1, f"{where}.split")
            at = rational(node["at"], f"{where}.at")
            lo, hi = box[k]
            if not lo < at < hi:
                raise CertificateRejected("tiling", f"{where}.at", "found a cut outside the box")
            stack.append((node["low"], box[:k] + [(lo, at)] + box[k + 1:], f"{where}.low",
                          depth + 1))
            stack.append((node["high"], box[:k] + [(at, hi)] + box[k + 1:], f"{where}.high",
                          depth + 1))
            continue
        leaves += 1
        with ar.active():
            _check_leaf(cert, ar, pbox, node, box, cores, where)
    return leaves


def _check_leaf(cert: Certificate, ar, pbox: Box, node: dict, box: Box, cores: list[Box],
                where: str) -> None:
    """Check one leaf: excluded by a component, by a Krawczyk image, or inside a zero's core."""
    problem, n = cert.problem, len(box)
    if "zero" in node:
        j = integer(node["zero"], 0, len(cores) - 1, f"{where}.zero")
        if not all(z_lo <= lo and hi <= z_hi for (lo, hi), (z_lo, z_hi) in zip(box, cores[j])):
            raise CertificateRejected("count", where, f"found a leaf outside zeros[{j}].box")
        return
    try:
        if "exclude" in node:
            i = integer(node["exclude"], 0, n - 1, f"{where}.exclude")
            values, _ = problem.residual(ar, [ar.interval(lo, hi) for lo, hi in box],
                                         [ar.interval(lo, hi) for lo, hi in pbox], False)
            lo, hi = bounds(ar, values[i], where)
            if lo > 0 or hi < 0:
                return
            raise CertificateRejected("count", where, f"found component {i} reaching 0")
        empty = keys(node.get("empty"), {"centre", "preconditioner"}, f"{where}.empty")
        centre = vector(empty["centre"], n, f"{where}.empty.centre")
        if not all(lo <= c <= hi for (lo, hi), c in zip(box, centre)):
            raise CertificateRejected("count", where, "found a centre outside the leaf")
        precond = matrix(empty["preconditioner"], n, f"{where}.empty.preconditioner")
        image, _ = krawczyk_image(problem, ar, pbox, centre, box, precond)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    for (lo, hi), (k_lo, k_hi), c in zip(box, image, centre):
        if c + k_hi < lo or hi < c + k_lo:  # Krawczyk 1969: every zero in the leaf lies in K
            return
    raise CertificateRejected("count", where, "found a Krawczyk image meeting the leaf")
