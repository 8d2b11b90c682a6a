"""Large models: the hint-based definiteness test, checked against closed-form spectra, and the
mutations of its hints (a wrong F, L or c is refused)."""

from __future__ import annotations

import copy
from fractions import Fraction as F

import mpmath
import pytest

from certify import equilibrium
from certify.check import CertificateRejected, check

from .published import brusselator_grid_model, brusselator_grid_unstable_dimension

STABLE = ("2", "3", "1", "1")  # a, b, du, dv: b < 1 + a^2 and equal diffusion, all modes stable
TURING = ("2", "3", "1", "8")  # the same kinetics with dv = 8: some modes grow (computed by hand)


@pytest.fixture(scope="module")
def turing():
    model, guess = brusselator_grid_model(10, *TURING)
    return equilibrium(model, [guess])[0]


def test_closed_form_spectrum_agrees_with_the_assembled_jacobian():
    # The test of the formula: eigenvalues of the assembled 20 x 20 Jacobian at (a, b/a).
    cells, (a, b, du, dv) = 10, (2, 3, 1, 8)
    n = 2 * cells
    jac = mpmath.zeros(n, n)
    for i in range(cells):
        u, v = 2 * i, 2 * i + 1
        jac[u, u], jac[u, v] = b - 1, a * a
        jac[v, u], jac[v, v] = -b, -a * a
        for j in (max(i - 1, 0), min(i + 1, cells - 1)):
            jac[u, u] -= du
            jac[u, 2 * j] += du
            jac[v, v] -= dv
            jac[v, 2 * j + 1] += dv
    unstable = sum(1 for ev in mpmath.eig(jac)[0] if mpmath.re(ev) > 0)
    assert unstable == brusselator_grid_unstable_dimension(cells, *TURING) >= 1


@pytest.mark.parametrize("cells, values", [(10, STABLE), (10, TURING), (20, TURING)])
def test_grid_dimensions_match_the_closed_form(cells, values):
    model, guess = brusselator_grid_model(cells, *values)
    r = equilibrium(model, [guess])[0]
    unstable = brusselator_grid_unstable_dimension(cells, *values)
    assert r.verdict == "hyperbolic"
    assert (r.stable_dimension, r.unstable_dimension) == (2 * cells - unstable, unstable)
    piece = r.certificate["pieces"][0]
    assert {"inertia_factor", "definiteness_factor", "definiteness_shift"} <= piece.keys()
    for arithmetic in ("flint", "python"):
        assert check(r.certificate, arithmetic).claim["unstable_dimension"] == unstable


def _rejected(cert, edit) -> str:
    bad = copy.deepcopy(cert)
    edit(bad["pieces"][0])
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    return info.value.code


def test_wrong_hints_are_refused(turing):
    cert = turing.certificate
    shift = F(cert["pieces"][0]["definiteness_shift"])

    def scaled_factor(p):
        p["definiteness_factor"] = [[str(F(v) * 2) for v in row]
                                    for row in p["definiteness_factor"]]

    def zero_factor(p):
        p["definiteness_factor"] = [["0"] * (i + 1) for i in range(len(p["centre"]))]

    def swapped_columns(p):  # S = F D F^T with the first stable and the last unstable swapped
        f = p["inertia_factor"]
        for row in f:
            row[0], row[-1] = row[-1], row[0]

    assert _rejected(cert, scaled_factor) == "not-definite"
    assert _rejected(cert, zero_factor) == "not-definite"
    assert _rejected(cert, swapped_columns) == "not-definite"
    assert _rejected(cert, lambda p: p.update(definiteness_shift=str(shift / 1000))) == \
        "not-definite"
    # (a larger shift still proves it: lambda_min >= c - max row sum |E| holds for every c)
    assert _rejected(cert, lambda p: p.update(definiteness_shift="0")) == "malformed"
    assert _rejected(cert, lambda p: p.pop("definiteness_shift")) == "malformed"
    assert _rejected(cert, lambda p: p["definiteness_factor"][3].append("0")) == "malformed"
    # Without the hint the exact test runs, and refuses what is over its size bound.
    bad = copy.deepcopy(cert)
    for key in ("definiteness_factor", "definiteness_shift"):
        bad["pieces"][0].pop(key)
    try:
        assert check(bad).claim == cert["claim"]
    except CertificateRejected as exc:
        assert exc.code == "budget"


def test_a_claimed_dimension_off_by_one_is_refused(turing):
    bad = copy.deepcopy(turing.certificate)
    bad["claim"]["stable_dimension"] += 1
    bad["claim"]["unstable_dimension"] -= 1
    with pytest.raises(CertificateRejected) as info:
        check(bad)
    assert info.value.code == "not-definite"
