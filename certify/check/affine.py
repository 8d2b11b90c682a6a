"""Affine forms in the parameters (Comba & Stolfi 1993), over either interval arithmetic.

A quantity is c + sum_i d_i e_i + sum_i q_i e_i^2 + r with e_i in [-1, 1] standing for the
i-th parameter (p_i = mid_i + rad_i e_i), thin interval coefficients c, d_i, q_i and an interval
remainder r; for every e the exact value lies in that set. Keeping the squares e_i^2 as their
own terms lets them cancel (rho x - x z along a branch where z - rho is constant); products put
the remaining second-order terms into r;
each function is expanded to first order at c with the remainder f''(range) h^2 / 2, h the
range of the deviation (Taylor with the Lagrange remainder). The class offers the interface of
an arithmetic, so the automatic differentiation of ad.py runs on it unchanged.
"""

from __future__ import annotations

from fractions import Fraction

from .arith import DomainError


class Affine:
    """c + sum_i d_i e_i + sum_i q_i e_i^2 + r, each part a value of the base arithmetic."""

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
        """The product: the squares d_i d'_i e_i^2 join the q terms; the rest of the product of
        the two deviations is bounded by rad * rad' - sum |d_i d'_i|."""
        ar, b = self.ar, self.ar.base
        squares = [a * c for a, c in zip(self.d, o.d)]
        rest = ar.radius_value(self) * ar.radius_value(o) - sum(ar.mig(sq) for sq in squares)
        return Affine(self.c * o.c, [self.c * bb + o.c * a for a, bb in zip(self.d, o.d)],
                      [self.c * qb + o.c * qa + sq for qa, qb, sq in zip(self.q, o.q, squares)],
                      self.c * o.r + o.c * self.r + b.interval(-rest, rest), ar)


class AffineArithmetic:
    """Affine forms over k parameters on top of a base arithmetic (flint or python)."""

    def __init__(self, base, k: int):
        self.base, self.k = base, k
        self.name, self.prec = base.name, base.prec
        self.zero = base.const(Fraction(0))

    def active(self):
        """Use the base arithmetic's precision."""
        return self.base.active()

    def form(self, c, d: list, r=None) -> Affine:
        """Return the affine form c + sum d_i e_i + r from base values."""
        return Affine(c, list(d), [self.zero] * self.k, self.zero if r is None else r, self)

    def interval_part(self, lo: Fraction, hi: Fraction):
        """Return the base interval [lo, hi] (a remainder)."""
        return self.base.interval(lo, hi)

    def const(self, q: Fraction) -> Affine:
        """Return the constant q."""
        return self.form(self.base.const(q), [self.zero] * self.k)

    def range(self, x: Affine):
        """Return an interval containing every value of x."""
        one = self.base.interval(Fraction(-1), Fraction(1))
        unit = self.base.interval(Fraction(0), Fraction(1))
        total = x.c + x.r
        for d, q in zip(x.d, x.q):
            total = total + d * one + q * unit
        return total

    def radius_value(self, x: Affine) -> Fraction:
        """Return an exact upper bound of |sum d_i e_i + sum q_i e_i^2 + r|."""
        total = Fraction(0)
        for v in [*x.d, *x.q, x.r]:
            lo, hi = self.base.bounds(v)
            total += max(abs(lo), abs(hi))
        return total

    def radius(self, x: Affine):
        """Return that bound as a point of the base arithmetic."""
        return self.base.const(self.radius_value(x))

    def mig(self, v) -> Fraction:
        """Return an exact lower bound of |v|."""
        lo, hi = self.base.bounds(v)
        return lo if lo > 0 else (-hi if hi < 0 else Fraction(0))

    def exact_integer(self, x: Affine) -> int | None:
        """Return x as an int when it is a constant exact integer."""
        if any(self.base.bounds(v) != (0, 0) for v in [*x.d, *x.q, x.r]):
            return None
        return self.base.exact_integer(x.c)

    def positive(self, x: Affine) -> bool:
        """Return whether every value is > 0."""
        return self.base.positive(self.range(x))

    def _taylor(self, x: Affine, f0, f1, f2_range) -> Affine:
        """Return f(c) + f'(c) h + [f''(range) * h^2 / 2] for x = c + h."""
        b = self.base
        h = self.radius(x)
        curv = f2_range * b.interval(Fraction(0), Fraction(1, 2)) * h * h
        return Affine(f0, [f1 * d for d in x.d], [f1 * q for q in x.q], f1 * x.r + curv, self)

    def div(self, a: Affine, bb: Affine, what: str = "/") -> Affine:
        """Return a / b as a times 1/b (1/x: f' = -1/x^2, f'' = 2/x^3 over the range)."""
        b, one = self.base, self.base.const(Fraction(1))
        rng = self.range(bb)
        b.div(one, rng, what)  # the divisor's range must exclude 0
        inv_c = b.div(one, bb.c, what)
        recip = self._taylor(bb, inv_c, -(inv_c * inv_c),
                             b.div(b.const(Fraction(2)), b.ipow(rng, 3, what), what))
        return a * recip

    def ipow(self, x: Affine, n: int, what: str = "**") -> Affine:
        """Return x**n (f' = n x^(n-1), f'' = n (n-1) x^(n-2) over the range)."""
        b = self.base
        if n == 0:
            return self.const(Fraction(1))
        if n < 0:
            return self.div(self.const(Fraction(1)), self.ipow(x, -n, what), what)
        if n == 1:
            return x
        rng = self.range(x)
        return self._taylor(x, b.ipow(x.c, n, what),
                            b.const(Fraction(n)) * b.ipow(x.c, n - 1, what),
                            b.const(Fraction(n * (n - 1))) * b.ipow(rng, n - 2, what))

    def call(self, fname: str, x: Affine, what: str) -> Affine:
        """Return fname(x) by first-order Taylor expansion with a rigorous remainder."""
        b = self.base
        rng = self.range(x)
        fr = b.call(fname, rng, what)  # checks the domain over the whole range
        f0 = b.call(fname, x.c, what)
        one, two = b.const(Fraction(1)), b.const(Fraction(2))
        if fname in ("exp", "sinh", "cosh"):
            other = {"exp": "exp", "sinh": "cosh", "cosh": "sinh"}[fname]
            return self._taylor(x, f0, b.call(other, x.c, what), fr)
        if fname == "log":
            return self._taylor(x, f0, b.div(one, x.c, what),
                                -b.div(one, b.ipow(rng, 2, what), what))
        if fname == "sqrt":
            if not b.positive(fr):
                raise DomainError(what, "sqrt is not differentiable at 0")
            return self._taylor(x, f0, b.div(one, two * f0, what),
                                -b.div(one, b.const(Fraction(4)) * rng * fr, what))
        if fname in ("sin", "cos"):
            s0, c0 = b.call("sin", x.c, what), b.call("cos", x.c, what)
            return self._taylor(x, f0, c0 if fname == "sin" else -s0, -fr)
        if fname in ("tan", "tanh"):
            sign = one if fname == "tan" else -one
            t2 = b.ipow(fr, 2, what)
            return self._taylor(x, f0, one + sign * b.ipow(f0, 2, what),
                                two * sign * fr * (one + sign * t2))
        q = one + b.ipow(rng, 2, what)  # atan: f' = 1/(1 + x^2), f'' = -2x/(1 + x^2)^2
        return self._taylor(x, f0, b.div(one, one + b.ipow(x.c, 2, what), what),
                            -b.div(two * rng, q * q, what))


MAX_VERTICES_PARAMETERS = 4  # above this, the linear part is bounded as a whole (no vertices)


def branch_krawczyk(ctx, base, pbox, centre, box, sens, precond):
    """Return (K(E) bounds, E, affine J_g) for the branch x(p) in x~ + A (p - p_c) + E.

    With e the parameters scaled to [-1, 1] and E = X - x~: if
    -C f(x~ + A d, p) + (I - C J(X_d, p)) E lies in the interior of E for every p in P
    (d = p - p_c, X_d = x~ + A d + E), then for each p, F(u) = f(x~ + A d + u, p) has exactly
    one zero u in E (Krawczyk's test with centre 0), so x(p) is unique in X_d.
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
        one, zero = base.const(Fraction(1)), base.const(Fraction(0))
        fr = [ar.range(v) for v in f0]
        jr = [[ar.range(v) - (one if (ctx.kind == "map" and i == j) else zero)
               for j, v in enumerate(row)] for i, row in enumerate(jac)]
        image = []
        for i in range(n):
            v = zero
            for t in range(n):
                v = v - base.const(precond[i][t]) * fr[t]
            for j in range(n):
                m = one if i == j else zero
                for t in range(n):
                    m = m - base.const(precond[i][t]) * jr[t][j]
                v = v + m * e[j]
            image.append(base.bounds(v))
    return image, [base.bounds(x) for x in e], jac, ar


def vertex_matrices(ar, m):
    """Yield, as (lo, hi) exact bounds, interval matrices whose positive definiteness for all
    of them proves it for every parameter: the vertices c + sum s_i d_i + r for s in {-1, 1}^k
    (M(e) is a convex combination of them plus the same remainder), or for many parameters the
    whole range."""
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
                    v = x.c + x.r
                    unit = ar.base.interval(Fraction(0), Fraction(1))
                    for si, d, q in zip(s, x.d, x.q):
                        v = (v + d if si > 0 else v - d) + q * unit
                else:
                    v = ar.range(x)
                lo[i][j], hi[i][j] = ar.base.bounds(v)
        yield lo, hi
