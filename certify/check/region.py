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

from .ad import evaluate
from .arith import DomainError
from .certificate import (Box, CertificateRejected, Problem, _bounds, _check_krawczyk,
                          _check_tiling, _dict, _integer, _interval, _list, _matrix, _rational,
                          branch_fields, check_inertia, krawczyk_image, piece_parameters)

MAX_NODES = 2_000_000
MAX_DEPTH = 200
MAX_ZEROS = 10_000


def check_count(ctx: Problem, ar, data: dict, claim: dict, n: int, variables: list[str]):
    """Return (claim as re-derived, zero enclosures of the first piece) for a count certificate.

    The parameter box is covered by pieces (checked like those of hyperbolic claims); each
    piece has its own zeros and tree, and must give the claimed count and the claimed stable
    dimensions of the zeros inside (as a multiset; null for a zero left unclassified).
    """
    _dict(claim, {"verdict", "count", "stable_dimensions"}, "claim")
    region = _dict(data.get("region"), set(variables), "region")
    b = [_interval(region[v], f"region.{v}") for v in variables]
    count = _integer(claim["count"], 0, MAX_ZEROS, "claim.count")
    dims = _list(claim["stable_dimensions"], count, "claim.stable_dimensions")
    for i, d in enumerate(dims):
        if d is not None:
            _integer(d, 0, n, f"claim.stable_dimensions[{i}]")
    want = sorted(dims, key=lambda d: (d is None, d))
    pieces = _list(data.get("pieces"), None, "pieces")
    if not 1 <= len(pieces) <= MAX_ZEROS:
        raise CertificateRejected("malformed", "pieces", f"expected 1 to {MAX_ZEROS} pieces")
    covers, first, leaves = [], None, 0
    for i, piece in enumerate(pieces):
        where = f"pieces[{i}]"
        _dict(piece, {"parameters", "zeros", "tree"}, where)
        pbox = piece_parameters(ctx, piece, where)
        covers.append(pbox)
        found, n_leaves = _check_piece(ctx, ar, pbox, piece, b, n, where)
        inside = sorted((z["stable_dimension"] for z in found if z["inside"]),
                        key=lambda d: (d is None, d))
        if inside != want:
            raise CertificateRejected("count", where, f"found {len(inside)} zeros inside with "
                                      f"stable dimensions {inside}, expected {want}")
        first = found if first is None else first
        leaves += n_leaves
    _check_tiling([ctx.pbox[p] for p in ctx.params], covers)
    return {"verdict": "count", "count": count, "stable_dimensions": want, "zeros": first,
            "leaves": leaves, "pieces": len(pieces), "region": b}, \
        [z["enclosure"] for z in first]


def _check_piece(ctx: Problem, ar, pbox: Box, piece: dict, b: Box, n: int, where: str):
    """Check the zeros and the tree of one parameter piece; return the zeros and leaf count."""
    zeros = _list(piece["zeros"], None, f"{where}.zeros")
    if len(zeros) > MAX_ZEROS:
        raise CertificateRejected("malformed", f"{where}.zeros", f"more than {MAX_ZEROS} zeros")
    hulls, cores, found = [], [], []
    for j, zero in enumerate(zeros):
        at = f"{where}.zeros[{j}]"
        _dict(zero, {"centre", "box", "preconditioner"}, at, {"classification", *BRANCH})
        form, enclosure, _, _ = _zero(ctx, ar, pbox, zero, n, at)
        stable = None
        if "classification" in zero:
            tight = zero["classification"]
            _dict(tight, {"centre", "box", "preconditioner", "inertia_matrix",
                          "stable_dimension"}, f"{at}.classification", BRANCH)
            inner, enclosure, jac, inertia_ar = _zero(ctx, ar, pbox, tight, n,
                                                      f"{at}.classification")
            if not _inside_for_every_p(inner, form, pbox):
                raise CertificateRejected("count", f"{at}.classification.box",
                                          "found a box reaching outside the uniqueness box")
            stable = _integer(tight["stable_dimension"], 0, n,
                              f"{at}.classification.stable_dimension")
            s = _matrix(tight["inertia_matrix"], n, f"{at}.classification.inertia_matrix")
            with ar.active():
                check_inertia(ctx, inertia_ar, jac, s, stable, f"{at}.classification")
        inside = all(lo <= e_lo and e_hi <= hi for (lo, hi), (e_lo, e_hi) in zip(b, enclosure))
        outside = any(e_hi < lo or hi < e_lo for (lo, hi), (e_lo, e_hi) in zip(b, enclosure))
        if not (inside or outside):
            raise CertificateRejected("on-boundary", at, "found a zero whose enclosure "
                                      "crosses the border of the region")
        hull, core = _hull(form, pbox), _core(form, pbox)
        for k, other in enumerate(hulls):
            if all(o_lo <= hi and lo <= o_hi for (lo, hi), (o_lo, o_hi) in zip(hull, other)):
                raise CertificateRejected("count", at, f"found a uniqueness box meeting "
                                          f"that of zeros[{k}]")
        hulls.append(hull)
        cores.append(core)
        found.append({"inside": inside, "stable_dimension": stable, "enclosure": enclosure})
    return found, _check_tree(ctx, ar, pbox, piece["tree"], b, cores, n, where)


BRANCH = {"sensitivity", "preconditioner_slopes"}


def _zero(ctx: Problem, ar, pbox: Box, zero: dict, n: int, where: str):
    """Return ((c, E, A), enclosure, J, its arithmetic) after the Krawczyk test of one zero.

    For every p in the piece, f(., p) has exactly one zero in X_p = c + A (p - p_c) + E
    (obligation 1, or its first-order form when the zero has a sensitivity A; A = 0 otherwise).
    """
    centre = [_rational(x, f"{where}.centre[{i}]")
              for i, x in enumerate(_list(zero["centre"], n, f"{where}.centre"))]
    box = [_interval(x, f"{where}.box[{i}]")
           for i, x in enumerate(_list(zero["box"], n, f"{where}.box"))]
    precond = _matrix(zero["preconditioner"], n, f"{where}.preconditioner")
    sens, slopes = branch_fields(zero, n, len(pbox), where)
    with ar.active():
        enclosure, jac, inertia_ar = _check_krawczyk(ctx, ar, pbox, centre, box, precond, where,
                                                     sens, slopes)
    moves = sens or [[Fraction(0)] * len(pbox) for _ in range(n)]
    errors = [(lo - c, hi - c) for (lo, hi), c in zip(box, centre)]
    return (centre, errors, moves), enclosure, jac, inertia_ar


def _spread(moves: list[list[Fraction]], pbox: Box) -> list[Fraction]:
    """Return sum_l |A_il| rad(P_l) per coordinate: how far c + A (p - p_c) moves over P."""
    return [sum(abs(a) * (hi - lo) / 2 for a, (lo, hi) in zip(row, pbox)) for row in moves]


def _hull(form, pbox: Box) -> Box:
    """Return a box holding X_p for every p (zeros with disjoint hulls are distinct)."""
    centre, errors, moves = form
    return [(c + e_lo - s, c + e_hi + s)
            for c, (e_lo, e_hi), s in zip(centre, errors, _spread(moves, pbox))]


def _core(form, pbox: Box) -> Box:
    """Return the box inside X_p for every p (a leaf in it holds no zero but this one)."""
    centre, errors, moves = form
    return [(c + e_lo + s, c + e_hi - s)
            for c, (e_lo, e_hi), s in zip(centre, errors, _spread(moves, pbox))]


def _inside_for_every_p(inner, outer, pbox: Box) -> bool:
    """Return whether c' + A'(p - p_c) + E' lies in c + A(p - p_c) + E for every p in P.

    The difference c' - c + (A' - A)(p - p_c) + E' must lie in E: E' shifted by c' - c and
    widened by sum_l |A'_il - A_il| rad(P_l).
    """
    (c1, e1, a1), (c0, e0, a0) = inner, outer
    diff = [[x - y for x, y in zip(r1, r0)] for r1, r0 in zip(a1, a0)]
    return all(lo0 <= d + lo1 - s and d + hi1 + s <= hi0 for d, (lo1, hi1), (lo0, hi0), s in
               zip((x - y for x, y in zip(c1, c0)), e1, e0, _spread(diff, pbox)))


def _check_tree(ctx: Problem, ar, pbox: Box, tree, region: Box, boxes: list[Box],
                n: int, where: str) -> int:
    """Walk the bisection tree over the region and check every leaf's hint; return the leaves."""
    stack, nodes, leaves = [(tree, region, f"{where}.tree", 0)], 0, 0
    p_iv = None
    while stack:
        node, box, where, depth = stack.pop()
        nodes += 1
        if nodes > MAX_NODES or depth > MAX_DEPTH:
            raise CertificateRejected("malformed", where, "found a tree too large or too deep")
        if not isinstance(node, dict):
            raise CertificateRejected("malformed", where, "expected a split or a leaf")
        if "split" in node or len(node) != 1:
            _dict(node, {"split", "at", "low", "high"}, where)
            k = _integer(node["split"], 0, n - 1, f"{where}.split")
            at = _rational(node["at"], f"{where}.at")
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
            if p_iv is None:
                p_iv = [ar.interval(lo, hi) for lo, hi in pbox]
            _leaf(ctx, ar, pbox, p_iv, node, box, boxes, n, where)
    return leaves


def _leaf(ctx: Problem, ar, pbox, p_iv, node: dict, box: Box, boxes: list[Box], n: int,
          where: str) -> None:
    """Check one leaf: excluded by a component, by a Krawczyk image, or inside a zero's box."""
    if "zero" in node:
        j = _integer(node["zero"], 0, len(boxes) - 1, f"{where}.zero")
        if not all(z_lo <= lo and hi <= z_hi for (lo, hi), (z_lo, z_hi) in zip(box, boxes[j])):
            raise CertificateRejected("count", where, f"found a leaf outside zeros[{j}].box")
        return
    try:
        if "exclude" in node:
            i = _integer(node["exclude"], 0, n - 1, f"{where}.exclude")
            values, _ = evaluate(ctx.tape, ar, [ar.interval(lo, hi) for lo, hi in box], p_iv,
                                 ctx.period, False)
            value = values[i] - ar.interval(*box[i]) if ctx.kind == "map" else values[i]
            lo, hi = _bounds(ar, value, where)
            if lo > 0 or hi < 0:
                return
            raise CertificateRejected("count", where, f"found component {i} reaching 0")
        empty = _dict(node.get("empty"), {"centre", "preconditioner"}, f"{where}.empty")
        centre = [_rational(x, f"{where}.empty.centre[{i}]")
                  for i, x in enumerate(_list(empty["centre"], n, f"{where}.empty.centre"))]
        if not all(lo <= c <= hi for (lo, hi), c in zip(box, centre)):
            raise CertificateRejected("count", where, "found a centre outside the leaf")
        precond = _matrix(empty["preconditioner"], n, f"{where}.empty.preconditioner")
        image, _ = krawczyk_image(ctx, ar, pbox, centre, box, precond)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    for (lo, hi), k in zip(box, image):
        k_lo, k_hi = _bounds(ar, k, where)
        if k_hi < lo or hi < k_lo:  # Krawczyk 1969: every zero in the leaf lies in K
            return
    raise CertificateRejected("count", where, "found a Krawczyk image meeting the leaf")

