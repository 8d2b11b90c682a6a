"""Soundness properties (hypothesis): verdicts never contradict exactly known spectra."""

from __future__ import annotations

from fractions import Fraction as F

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from certify import equilibrium, make_model


def _matmul(a, b):
    return [[sum(a[i][t] * b[t][j] for t in range(len(b))) for j in range(len(b[0]))]
            for i in range(len(a))]


def _inverse(a):
    n = len(a)
    m = [row[:] + [F(int(i == j)) for j in range(n)] for i, row in enumerate(a)]
    for k in range(n):
        p = next(i for i in range(k, n) if m[i][k] != 0)
        m[k], m[p] = m[p], m[k]
        m[k] = [v / m[k][k] for v in m[k]]
        for i in range(n):
            if i != k and m[i][k] != 0:
                m[i] = [a - m[i][k] * b for a, b in zip(m[i], m[k])]
    return [row[n:] for row in m]


def _q(x: F) -> str:
    return f"({x.numerator}/{x.denominator})"


@st.composite
def spectra(draw, maps: bool):
    """A block-diagonal D with chosen real parts (flows) or moduli (maps), and a rational V."""
    n = draw(st.integers(1, 3))
    small = st.fractions(min_value=-3, max_value=3, max_denominator=8)
    blocks, truth, degenerate, dim = [], 0, False, 0
    while dim < n:
        if n - dim >= 2 and draw(st.booleans()):
            re, im = draw(small), draw(st.fractions(min_value=F(1, 4), max_value=3,
                                                   max_denominator=8))
            if maps:
                re = re / 4
            blocks.append([[re, im], [-im, re]])
            if maps:
                mod2 = re * re + im * im
                degenerate |= mod2 == 1
                truth += 2 if mod2 < 1 else 0
            else:
                degenerate |= re == 0
                truth += 2 if re < 0 else 0
            dim += 2
        else:
            lam = draw(small)
            blocks.append([[lam]])
            degenerate |= (abs(lam) == 1) if maps else (lam == 0)
            truth += 1 if (abs(lam) < 1 if maps else lam < 0) else 0
            dim += 1
    d = [[F(0)] * n for _ in range(n)]
    at = 0
    for b in blocks:
        for i, row in enumerate(b):
            for j, v in enumerate(row):
                d[at + i][at + j] = v
        at += len(b)
    entries = st.integers(-3, 3)
    while True:
        v = [[F(draw(entries)) + (3 if i == j else 0) for j in range(n)] for i in range(n)]
        try:
            vinv = _inverse(v)
            break
        except StopIteration:
            continue
    a = _matmul(_matmul(v, d), vinv)
    return a, truth, degenerate


def _linear_model(a, kind):
    n = len(a)
    names = [f"x{i}" for i in range(n)]
    eqs = [" + ".join(f"{_q(a[i][j])}*{names[j]}" for j in range(n)) for i in range(n)]
    return make_model(names, eqs, {}, kind=kind), names


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(spectra(maps=False))
def test_flow_dimensions_are_never_wrong(case):
    a, stable, degenerate = case
    model, names = _linear_model(a, "flow")
    r = equilibrium(model, [{v: 0.3 for v in names}])[0]
    if degenerate:
        assert r.verdict != "hyperbolic"
    if r.verdict == "hyperbolic":
        assert r.stable_dimension == stable
    if not degenerate:
        assert r.verdict == "hyperbolic"  # exact rational data, well away from the axis


MAPS_DECIDED = {True: 0, False: 0}


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(spectra(maps=True))
def test_map_dimensions_are_never_wrong(case):
    a, inside, degenerate = case
    model, names = _linear_model(a, "map")
    r = equilibrium(model, [{v: 0.3 for v in names}])[0]
    if degenerate:
        assert r.verdict != "hyperbolic"
    if r.verdict == "hyperbolic":
        assert r.stable_dimension == inside
    if not degenerate:
        MAPS_DECIDED[r.verdict == "hyperbolic"] += 1


def test_most_non_degenerate_maps_were_decided():
    if not sum(MAPS_DECIDED.values()):
        return  # the property test was deselected
    assert MAPS_DECIDED[True] >= 0.8 * sum(MAPS_DECIDED.values()), MAPS_DECIDED


def test_eigenvalues_at_relative_distance_1e_12_from_the_axis_are_decided():
    # Exact construction: A = V diag(1e-12, -1e-12, -2) V^-1 with rational V.
    eps = F(1, 10**12)
    v = [[F(2), F(1), F(0)], [F(1), F(3), F(1)], [F(0), F(1), F(2)]]
    d = [[eps, F(0), F(0)], [F(0), -eps, F(0)], [F(0), F(0), F(-2)]]
    a = _matmul(_matmul(v, d), _inverse(v))
    model, names = _linear_model(a, "flow")
    r = equilibrium(model, [{n: 0.1 for n in names}])[0]
    assert r.verdict == "hyperbolic" and r.stable_dimension == 2 and r.unstable_dimension == 1
