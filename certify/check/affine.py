"""Second-order forms in the parameters (after Comba & Stolfi 1993), over either arithmetic.

A quantity is c + sum_i d_i e_i + sum_{i<=j} q_ij e_i e_j + r with e_i in [-1, 1] standing for
the i-th parameter (p_i = mid_i + rad_i e_i), thin interval coefficients c, d_i, q_ij and an
interval remainder r; for every e the exact value lies in that set. The second-order terms are
kept (so x y and y x cancel, and rho x - x z cancels along the Lorenz branch), and only
third-order terms go into r: a product keeps d d' and puts the products with the other
deviations into r; a function f(c + h), h = L + Q + r with L the linear part, is
f(c) + f'(c) h + f''(c) L^2 / 2 plus the remainder (f''(range) - f''(c)) L^2 / 2 +
f''(range) (h^2 - L^2) / 2 (Taylor with the Lagrange remainder). The class offers the interface
of an arithmetic, so the automatic differentiation of ad.py runs on it unchanged.
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError


class Affine:
    """c + sum_i d_i e_i + sum_{i<=j} q_ij e_i e_j + r, each part a value of the base."""

    __slots__ = ("c", "d", "q", "r", "ar")

    def __init__(self, c, d: list, q: list, r, ar: AffineArithmetic):
        self.c, self.d, self.q, self.r, self.ar = c, d, q, r, ar

    def __add__(self, o: Affine) -> Affine:
        return Affine(self.c + o.c, [a + b for a, b in zip(self.d, o.d)],
                      [a + b for a, b in zip(self.q, o.q)], self.r + o.r, self.ar)

    def __neg__(self) -> Affine:
        return Affine(-self.c, [-a for a in self.d], [-a for a in self.q], -self.r, self.ar)

    def __sub__(self, o: Affine) -> Affine:
        return self + (-o)

    def __mul__(self, o: Affine) -> Affine:
        """The product: the products d_i d'_j join the q terms; the products of a linear part
        with the other's higher part, and of the higher parts, are bounded into r."""
        ar = self.ar
        lx, ly = ar.size(self.d), ar.size(o.d)
        hx, hy = ar.size([*self.q, self.r]), ar.size([*o.q, o.r])
        rest = (lx * hy + hx * ly + hx * hy) * ar.sym
        q = [self.c * qb + o.c * qa + ar.outer(self.d, o.d, t)
             for t, (qa, qb) in enumerate(zip(self.q, o.q))]
        return Affine(self.c * o.c, [self.c * bb + o.c * a for a, bb in zip(self.d, o.d)], q,
                      self.c * o.r + o.c * self.r + rest, ar)


class AffineArithmetic:
    """Second-order forms over k parameters on top of a base arithmetic (flint or python)."""

    def __init__(self, base, k: int):
        self.base, self.k = base, k
        self.name, self.prec = base.name, base.prec
        self.zero = base.const(Fraction(0))
        self.sym = base.interval(Fraction(-1), Fraction(1))
        self.pairs = [(i, j) for i in range(k) for j in range(i, k)]

    def active(self):
        """Use the base arithmetic's precision."""
        return self.base.active()

    def outer(self, d: list, d2: list, t: int):
        """Return the coefficient of e_i e_j (pair t) in (d . e) (d2 . e)."""
        i, j = self.pairs[t]
        return d[i] * d2[i] if i == j else d[i] * d2[j] + d[j] * d2[i]

    def form(self, c, d: list, r=None) -> Affine:
        """Return the form c + sum d_i e_i + r from base values."""
        return Affine(c, list(d), [self.zero] * len(self.pairs),
                      self.zero if r is None else r, self)

    def interval_part(self, lo: Fraction, hi: Fraction):
        """Return the base interval [lo, hi] (a remainder)."""
        return self.base.interval(lo, hi)

    def const(self, q: Fraction) -> Affine:
        """Return the constant q."""
        return self.form(self.base.const(q), [self.zero] * self.k)

    def quadratic_range(self, x: Affine):
        """Return an interval containing sum q_ij e_i e_j (e_i^2 in [0, 1])."""
        one = self.base.interval(Fraction(-1), Fraction(1))
        unit = self.base.interval(Fraction(0), Fraction(1))
        total = self.zero
        for (i, j), q in zip(self.pairs, x.q):
            total = total + q * (unit if i == j else one)
        return total

    def range(self, x: Affine):
        """Return an interval containing every value of x."""
        one = self.base.interval(Fraction(-1), Fraction(1))
        total = x.c + x.r + self.quadratic_range(x)
        for d in x.d:
            total = total + d * one
        return total

    def size(self, values: list):
        """Return a base value whose upper end bounds sum |v| from above."""
        total = self.zero
        for v in values:
            total = total + self.base.magnitude(v)
        return total

    def exact_integer(self, x: Affine) -> int | None:
        """Return x as an int when it is a constant exact integer."""
        if any(self.base.bounds(v) != (0, 0) for v in [*x.d, *x.q, x.r]):
            return None
        return self.base.exact_integer(x.c)

    def positive(self, x: Affine) -> bool:
        """Return whether every value is > 0."""
        return self.base.positive(self.range(x))

    def _taylor(self, x: Affine, f0, f1, second) -> Affine:
        """Return f(c + h) for x = c + h; second(v) encloses f'' over the base value v."""
        b = self.base
        lin, high = self.size(x.d), self.size([*x.q, x.r])
        f2c, f2r = second(x.c), second(self.range(x))
        half = b.const(Fraction(1, 2))
        bound = (b.const(Fraction(2)) * lin * high + high * high) * self.sym
        curv = (f2r - f2c) * half * (lin * lin) + f2r * half * bound
        q = [f1 * qq + f2c * half * self.outer(x.d, x.d, t) for t, qq in enumerate(x.q)]
        return Affine(f0, [f1 * d for d in x.d], q, f1 * x.r + curv, self)

    def div(self, a: Affine, bb: Affine, what: str = "/") -> Affine:
        """Return a / b as a times 1/b (1/x: f' = -1/x^2, f'' = 2/x^3)."""
        b, one = self.base, self.base.const(Fraction(1))
        b.div(one, self.range(bb), what)  # the divisor's range must exclude 0
        inv_c = b.div(one, bb.c, what)
        recip = self._taylor(bb, inv_c, -(inv_c * inv_c),
                             lambda v: b.div(b.const(Fraction(2)), b.ipow(v, 3, what), what))
        return a * recip

    def ipow(self, x: Affine, n: int, what: str = "**") -> Affine:
        """Return x**n (f' = n x^(n-1), f'' = n (n-1) x^(n-2))."""
        b = self.base
        if n == 0:
            return self.const(Fraction(1))
        if n < 0:
            return self.div(self.const(Fraction(1)), self.ipow(x, -n, what), what)
        if n == 1:
            return x
        return self._taylor(x, b.ipow(x.c, n, what),
                            b.const(Fraction(n)) * b.ipow(x.c, n - 1, what),
                            lambda v: b.const(Fraction(n * (n - 1))) * b.ipow(v, n - 2, what))

    def call(self, fname: str, x: Affine, what: str) -> Affine:
        """Return fname(x) by second-order Taylor expansion with a rigorous remainder."""
        b = self.base
        b.call(fname, self.range(x), what)  # checks the domain over the whole range
        f0 = b.call(fname, x.c, what)
        one, two = b.const(Fraction(1)), b.const(Fraction(2))
        if fname in ("exp", "sinh", "cosh"):  # f'' = f
            other = {"exp": "exp", "sinh": "cosh", "cosh": "sinh"}[fname]
            return self._taylor(x, f0, b.call(other, x.c, what),
                                lambda v: b.call(fname, v, what))
        if fname == "log":
            return self._taylor(x, f0, b.div(one, x.c, what),
                                lambda v: -b.div(one, b.ipow(v, 2, what), what))
        if fname == "sqrt":
            if not b.positive(b.call("sqrt", self.range(x), what)):
                raise DomainError(what, "sqrt is not differentiable at 0")
            return self._taylor(x, f0, b.div(one, two * f0, what),
                                lambda v: -b.div(one, b.const(Fraction(4)) * v *
                                                 b.call("sqrt", v, what), what))
        if fname in ("sin", "cos"):  # f'' = -f
            s0, c0 = b.call("sin", x.c, what), b.call("cos", x.c, what)
            return self._taylor(x, f0, c0 if fname == "sin" else -s0,
                                lambda v: -b.call(fname, v, what))
        if fname in ("tan", "tanh"):  # f' = 1 + s f^2, f'' = 2 s f (1 + s f^2)
            sign = one if fname == "tan" else -one

            def second(v):
                t = b.call(fname, v, what)
                return two * sign * t * (one + sign * b.ipow(t, 2, what))
            return self._taylor(x, f0, one + sign * b.ipow(f0, 2, what), second)

        def atan2nd(v):  # atan: f' = 1/(1 + x^2), f'' = -2x/(1 + x^2)^2
            q = one + b.ipow(v, 2, what)
            return -b.div(two * v, q * q, what)
        return self._taylor(x, f0, b.div(one, one + b.ipow(x.c, 2, what), what), atan2nd)


MAX_VERTICES_PARAMETERS = 4  # above this, the linear part is bounded as a whole (no vertices)


def branch_krawczyk(ctx, base, pbox, centre, box, sens, precond, slopes=None):
    """Return (K(E) bounds, E, J_g over the zero's form) for the branch x(p) in x~ + A d + E.

    With e the parameters scaled to [-1, 1], E = X - x~ and the preconditioner
    C(p) = C + sum_l S_l (p_l - p_c,l) (S_l the optional slopes; any C(p) will do): if
    -C(p) f(x~ + A d, p) + (I - C(p) J(X_d, p)) E lies in the interior of E for every p in P
    (d = p - p_c, X_d = x~ + A d + E), then for each p, F(u) = f(x~ + A d + u, p) has exactly
    one zero u in E (Krawczyk's test with centre 0), so x(p) is unique in X_d. Everything is
    kept as an affine form in e until the last step, so first-order terms in e cancel.
    """
    from .ad import evaluate

    n, k = len(centre), len(pbox)
    ar = AffineArithmetic(base, k)
    mids = [(lo + hi) / 2 for lo, hi in pbox]
    rads = [(hi - lo) / 2 for lo, hi in pbox]
    e = [ar.interval_part(lo - c, hi - c) for (lo, hi), c in zip(box, centre)]

    def state(with_remainder: bool):
        return [ar.form(base.const(c), [base.const(sens[j][i] * rads[i]) for i in range(k)],
                        e[j] if with_remainder else None) for j, c in enumerate(centre)]

    params = [ar.form(base.const(m), [base.const(r if i == t else Fraction(0))
                                      for t in range(k)]) for i, (m, r) in
              enumerate(zip(mids, rads))]
    with ar.active():
        at_branch = state(False)
        f0, _ = evaluate(ctx.tape, ar, at_branch, params, ctx.period, False)
        if ctx.kind == "map":
            f0 = [v - x for v, x in zip(f0, at_branch)]
        _, jac = evaluate(ctx.tape, ar, state(True), params, ctx.period)
        one, zero = ar.const(Fraction(1)), ar.const(Fraction(0))
        cp = [[ar.form(base.const(precond[i][t]),
                       [base.const(slopes[m][i][t] * rads[m] if slopes else Fraction(0))
                        for m in range(k)]) for t in range(n)] for i in range(n)]
        deviation = [ar.form(ar.zero, [ar.zero] * k, x) for x in e]
        image = []
        for i in range(n):
            v = zero
            for t in range(n):
                v = v - cp[i][t] * f0[t]
            for j in range(n):
                m = one if i == j else zero
                for t in range(n):
                    m = m - cp[i][t] * (jac[t][j] - (one if ctx.kind == "map" and t == j
                                                     else zero))
                v = v + m * deviation[j]
            image.append(v)
        forms, image = image, [base.bounds(ar.range(v)) for v in image]
        e = [base.bounds(x) for x in e]
        if all(e_lo < lo and hi < e_hi for (lo, hi), (e_lo, e_hi) in zip(image, e)):
            # Then the zero x(p) lies in x~ + A d + K(E, p): J over that second-order form is
            # tighter than J over X_d, and serves the inertia test.
            _, jac = evaluate(ctx.tape, ar, [x + v for x, v in zip(at_branch, forms)], params,
                              ctx.period)
    return image, e, jac, ar


def vertex_matrices(ar, m):
    """Yield, as (lo, hi) exact bounds, interval matrices whose positive definiteness for all
    of them proves it for every parameter: the vertices c + sum s_i d_i + R for s in {-1, 1}^k,
    R the range of the second-order part plus r (M(e) is a convex combination of the vertices
    of its linear part plus a value in R), or for many parameters the whole range."""
    n, k = len(m), ar.k
    signs = [[]]
    if k <= MAX_VERTICES_PARAMETERS:
        for _ in range(k):
            signs = [s + [t] for s in signs for t in (-1, 1)]
    for s in signs:
        lo = [[Fraction(0)] * n for _ in range(n)]
        hi = [[Fraction(0)] * n for _ in range(n)]
        for i in range(n):
            for j in range(i, n):
                x = m[i][j]
                if s:
                    v = x.c + x.r + ar.quadratic_range(x)
                    for si, d in zip(s, x.d):
                        v = v + d if si > 0 else v - d
                else:
                    v = ar.range(x)
                lo[i][j], hi[i][j] = ar.base.bounds(v)
        yield lo, hi
