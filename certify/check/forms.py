"""Obligation 3: parameter forms, for a zero that moves across a parameter box.

A ParameterForm is c + sum_i d_i e_i + sum_{i<=j} q_ij e_i e_j + r with e_i in [-1, 1] standing
for the i-th parameter (p_i = mid_i + rad_i e_i), thin coefficients c, d_i, q_ij of a base
arithmetic and an interval remainder r; for every e the exact value lies in that set (after
Comba & Stolfi 1993). The second-order terms are kept, so x y and y x cancel, and only
third-order terms go into r: a product keeps d d' and bounds the products with the higher parts
into r; a function f(c + h), h = L + Q + r with L the linear part, is
f(c) + f'(c) h + f''(c) L^2 / 2 plus the remainder (f''(range) - f''(c)) L^2 / 2 +
f''(range) (h^2 - L^2) / 2 (Taylor with the Lagrange remainder), its derivatives taken from the
one table of ad.py. FormArithmetic offers the arithmetic protocol, so the differentiation of
ad.py and the Krawczyk operator of enclosure.py run on it unchanged.
"""

from __future__ import annotations

from fractions import Fraction

from .ad import apply, derivatives
from .arith import DomainError
from .enclosure import check_centre, check_interior, krawczyk_image, krawczyk_operator
from .reader import Box, CertificateRejected, Problem, ZeroHint

MAX_VERTICES_PARAMETERS = 4  # above this, the linear part is bounded as a whole (no vertices)


class ParameterForm:
    """c + sum_i d_i e_i + sum_{i<=j} q_ij e_i e_j + r, each part a value of the base."""

    __slots__ = ("c", "d", "q", "r", "ar")

    def __init__(self, c, d: list, q: list, r, ar: FormArithmetic):
        self.c, self.d, self.q, self.r, self.ar = c, d, q, r, ar

    def __add__(self, o: ParameterForm) -> ParameterForm:
        return ParameterForm(self.c + o.c, [a + b for a, b in zip(self.d, o.d)],
                             [a + b for a, b in zip(self.q, o.q)], self.r + o.r, self.ar)

    def __neg__(self) -> ParameterForm:
        return ParameterForm(-self.c, [-a for a in self.d], [-a for a in self.q], -self.r,
                             self.ar)

    def __sub__(self, o: ParameterForm) -> ParameterForm:
        return self + (-o)

    def __mul__(self, o: ParameterForm) -> ParameterForm:
        """The product: the products d_i d'_j join the q terms; the products of a linear part
        with the other's higher part, and of the higher parts, are bounded into r."""
        ar = self.ar
        lx, ly = ar.size(self.d), ar.size(o.d)
        hx, hy = ar.size([*self.q, self.r]), ar.size([*o.q, o.r])
        rest = (lx * hy + hx * ly + hx * hy) * ar.sym
        q = [self.c * qb + o.c * qa + ar.outer(self.d, o.d, t)
             for t, (qa, qb) in enumerate(zip(self.q, o.q))]
        return ParameterForm(self.c * o.c, [self.c * b + o.c * a for a, b in zip(self.d, o.d)],
                             q, self.c * o.r + o.c * self.r + rest, ar)


class FormArithmetic:
    """Second-order forms over k parameters on top of a base arithmetic (flint or python)."""

    def __init__(self, base, k: int):
        self.base, self.k = base, k
        self.name, self.prec = base.name, base.prec
        self.zero = base.const(Fraction(0))
        self.sym = base.interval(Fraction(-1), Fraction(1))
        self.unit = base.interval(Fraction(0), Fraction(1))
        self.pairs = [(i, j) for i in range(k) for j in range(i, k)]

    def active(self):
        """Use the base arithmetic's precision."""
        return self.base.active()

    def outer(self, d: list, d2: list, t: int):
        """Return the coefficient of e_i e_j (pair t) in (d . e) (d2 . e)."""
        i, j = self.pairs[t]
        return d[i] * d2[i] if i == j else d[i] * d2[j] + d[j] * d2[i]

    def form(self, c, d: list, r=None) -> ParameterForm:
        """Return the form c + sum d_i e_i + r from base values."""
        return ParameterForm(c, list(d), [self.zero] * len(self.pairs),
                             self.zero if r is None else r, self)

    def const(self, q: Fraction) -> ParameterForm:
        """Return the constant q."""
        return self.form(self.base.const(q), [self.zero] * self.k)

    def quadratic_range(self, x: ParameterForm):
        """Return an interval containing sum q_ij e_i e_j (e_i^2 in [0, 1])."""
        total = self.zero
        for (i, j), q in zip(self.pairs, x.q):
            total = total + q * (self.unit if i == j else self.sym)
        return total

    def range(self, x: ParameterForm):
        """Return an interval containing every value of x."""
        total = x.c + x.r + self.quadratic_range(x)
        for d in x.d:
            total = total + d * self.sym
        return total

    def size(self, values: list):
        """Return a base value whose upper end bounds sum |v| from above."""
        total = self.zero
        for v in values:
            total = total + self.base.magnitude(v)
        return total

    def exact_integer(self, x: ParameterForm) -> int | None:
        """Return x as an int when it is a constant exact integer."""
        if any(self.base.bounds(v) != (0, 0) for v in [*x.d, *x.q, x.r]):
            return None
        return self.base.exact_integer(x.c)

    def positive(self, x: ParameterForm) -> bool:
        """Return whether every value is > 0."""
        return self.base.positive(self.range(x))

    def _taylor(self, op: str, x: ParameterForm, what: str, n: int = 0) -> ParameterForm:
        """Return op(c + h) for x = c + h by the second-order expansion of the docstring above."""
        b = self.base
        rng = self.range(x)
        f_range = apply(b, op, rng, what, n)  # checks the domain over the whole range
        f0 = apply(b, op, x.c, what, n)
        f1, f2c = derivatives(b, op, x.c, f0, what, n, second=True)
        f2r = derivatives(b, op, rng, f_range, what, n, second=True)[1]
        lin, high = self.size(x.d), self.size([*x.q, x.r])
        half = b.const(Fraction(1, 2))
        bound = (b.const(Fraction(2)) * lin * high + high * high) * self.sym
        curv = (f2r - f2c) * half * (lin * lin) + f2r * half * bound
        q = [f1 * qq + f2c * half * self.outer(x.d, x.d, t) for t, qq in enumerate(x.q)]
        return ParameterForm(f0, [f1 * d for d in x.d], q, f1 * x.r + curv, self)

    def div(self, a: ParameterForm, b: ParameterForm, what: str = "/") -> ParameterForm:
        """Return a / b as a times 1/b."""
        return a * self._taylor("recip", b, what)

    def ipow(self, x: ParameterForm, n: int, what: str = "**") -> ParameterForm:
        """Return x**n for an integer n."""
        if n < 0:
            return self.div(self.const(Fraction(1)), self.ipow(x, -n, what), what)
        if n <= 1:
            return self.const(Fraction(1)) if n == 0 else x
        return self._taylor("pow", x, what, n)

    def call(self, fname: str, x: ParameterForm, what: str) -> ParameterForm:
        """Return fname(x) by second-order Taylor expansion with a rigorous remainder."""
        return self._taylor(fname, x, what)

    def vertex_matrices(self, m: list[list[ParameterForm]]):
        """Yield symmetric interval matrices (exact lo, hi) whose definiteness proves it for
        every e.

        M(e) is a convex combination of the vertices c + sum s_i d_i, s in {-1, 1}^k, plus a
        value in R = [second-order part] + r, and the definite matrices form a convex cone: so
        the vertex matrices plus R suffice; for many parameters, the whole range instead.
        """
        n = len(m)
        signs = [[]]
        if self.k <= MAX_VERTICES_PARAMETERS:
            for _ in range(self.k):
                signs = [s + [t] for s in signs for t in (-1, 1)]
        for s in signs:
            lo = [[Fraction(0)] * n for _ in range(n)]
            hi = [[Fraction(0)] * n for _ in range(n)]
            for i in range(n):
                for j in range(i, n):
                    x = m[i][j]
                    v = x.c + x.r + self.quadratic_range(x) if s else self.range(x)
                    for si, d in zip(s, x.d):
                        v = v + d if si > 0 else v - d
                    # M is symmetric: the upper entry encloses both m_ij and m_ji
                    lo[i][j], hi[i][j] = lo[j][i], hi[j][i] = self.base.bounds(v)
            yield lo, hi


def branch_krawczyk(problem: Problem, base, pbox: Box, hint: ZeroHint):
    """Return (K(E) bounds, E bounds, J_g over the zero's form, its arithmetic).

    With d = p - p_c, E = X - c, X_d = c + A d + E and C(p) = C + sum_l S_l d_l (any matrix
    function of p will do): if -C(p) f(c + A d, p) + (I - C(p) J(X_d, p)) E lies in the
    interior of E for every p, Krawczyk's test with centre 0 holds for u -> f(c + A d + u, p),
    so f(., p) has exactly one zero in X_d, and it lies in c + A d + K(E, p). Everything is
    kept as a form in e until the last step, so first-order terms in e cancel.
    """
    n, k = len(hint.centre), len(pbox)
    ar = FormArithmetic(base, k)
    rads = [(hi - lo) / 2 for lo, hi in pbox]
    e = [base.interval(lo - c, hi - c) for (lo, hi), c in zip(hint.box, hint.centre)]
    sens, slopes = hint.sensitivity, hint.slopes

    def state(with_remainder: bool):
        return [ar.form(base.const(c), [base.const(sens[j][i] * rads[i]) for i in range(k)],
                        e[j] if with_remainder else None) for j, c in enumerate(hint.centre)]

    params = [ar.form(base.const((lo + hi) / 2), [base.const(rads[i] if i == t else Fraction(0))
                                                  for t in range(k)])
              for i, (lo, hi) in enumerate(pbox)]
    with ar.active():
        at_branch = state(False)
        f0, _ = problem.residual(ar, at_branch, params, False)
        _, jac = problem.residual(ar, state(True), params)
        cp = [[ar.form(base.const(hint.preconditioner[i][t]),
                       [base.const(slopes[m][i][t] * rads[m] if slopes else Fraction(0))
                        for m in range(k)]) for t in range(n)] for i in range(n)]
        deviation = [ar.form(ar.zero, [ar.zero] * k, x) for x in e]
        forms = krawczyk_operator(ar, cp, f0, problem.jacobian_f(ar, jac), deviation)
        image, e = [base.bounds(ar.range(v)) for v in forms], [base.bounds(x) for x in e]
        if all(e_lo < lo and hi < e_hi for (lo, hi), (e_lo, e_hi) in zip(image, e)):
            # Then x(p) lies in c + A d + K(E, p): J over that form is tighter than over X_d.
            _, jac = problem.residual(ar, [x + v for x, v in zip(at_branch, forms)], params)
    return image, e, jac, ar


def check_enclosure(problem: Problem, ar, pbox: Box, hint: ZeroHint, where: str):
    """Obligations 1 and 3: the Krawczyk test of a plain box, or of a box in first-order form.

    Returns the enclosure of the zeros over the piece (c + A (P - p_c) + K), J_g, and the
    arithmetic J_g is written in (intervals, or forms in the parameters).
    """
    check_centre(hint.box, hint.centre, where)
    try:
        with ar.active():
            if hint.sensitivity is None:
                image, jac = krawczyk_image(problem, ar, pbox, hint.centre, hint.box,
                                            hint.preconditioner)
                inertia_ar = ar
            else:
                image, _, jac, inertia_ar = branch_krawczyk(problem, ar, pbox, hint)
    except DomainError as exc:
        raise CertificateRejected("domain", where, str(exc)) from None
    check_interior(image, hint.box, hint.centre, where)
    spread = spreads(hint.sensitivity, pbox, len(hint.centre))
    return [(c - s + lo, c + s + hi) for c, s, (lo, hi) in zip(hint.centre, spread, image)], \
        jac, inertia_ar


def spreads(sensitivity, pbox: Box, n: int) -> list[Fraction]:
    """Return sum_l |A_il| rad(P_l) per coordinate: how far c + A (p - p_c) moves over P."""
    if sensitivity is None:
        return [Fraction(0)] * n
    return [sum(abs(a) * (hi - lo) / 2 for a, (lo, hi) in zip(row, pbox)) for row in sensitivity]
