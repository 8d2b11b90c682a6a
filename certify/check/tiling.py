"""Obligation 4: the pieces of a claim cover its parameter box."""

from __future__ import annotations

from fractions import Fraction

from .reader import Box, CertificateRejected, Problem, interval, keys, reject_if


def piece_parameters(problem: Problem, piece: dict, where: str) -> Box:
    """Return a piece's parameter box, which must lie inside the model's."""
    pp = keys(piece["parameters"], set(problem.params), f"{where}.parameters")
    box = [interval(pp[p], f"{where}.parameters.{p}") for p in problem.params]
    for p, (lo, hi) in zip(problem.params, box):
        reject_if(lo < problem.pbox[p][0] or hi > problem.pbox[p][1], "tiling",
                  f"{where}.parameters.{p}", "found a piece reaching outside the parameter box")
    return box


def check_tiling(outer: Box, boxes: list[Box]) -> None:
    """The pieces cover the parameter box: inside it, interiors disjoint, volumes adding up.

    Closed boxes inside P with pairwise disjoint interiors and total volume vol(P) cover P: the
    uncovered rest would be relatively open in P with measure zero, hence empty. Directions in
    which P is a point are compared for equality.
    """
    wide = [k for k, (lo, hi) in enumerate(outer) if hi > lo]
    for i, b in enumerate(boxes):
        for k, (lo, hi) in enumerate(outer):
            reject_if(k not in wide and b[k] != (lo, hi), "tiling", f"pieces[{i}].parameters",
                      "found a point parameter that differs from the model's")
    if not wide:
        return

    def volume(b: Box) -> Fraction:
        v = Fraction(1)
        for k in wide:
            v *= b[k][1] - b[k][0]
        return v

    reject_if(sum(volume(b) for b in boxes) != volume(outer), "tiling", "pieces",
              "found pieces whose volumes do not add up to the parameter box")
    order = sorted(range(len(boxes)), key=lambda i: boxes[i][wide[0]][0])
    for a_pos, a in enumerate(order):
        a_hi = boxes[a][wide[0]][1]
        for b in order[a_pos + 1:]:
            if boxes[b][wide[0]][0] >= a_hi:
                break
            if all(boxes[a][k][0] < boxes[b][k][1] and boxes[b][k][0] < boxes[a][k][1]
                   for k in wide):
                raise CertificateRejected("tiling", f"pieces[{b}].parameters",
                                          f"found a piece overlapping pieces[{a}]")
