"""Search-side views of a model: exact sympy expressions and fast float functions for Newton."""

from __future__ import annotations

from fractions import Fraction
from functools import lru_cache

import numpy as np
import sympy as sp

from .model import Model

_SYMPY_FUNCTIONS = {"exp": sp.exp, "log": sp.log, "sqrt": sp.sqrt, "sin": sp.sin, "cos": sp.cos,
                    "tan": sp.tan, "tanh": sp.tanh, "sinh": sp.sinh, "cosh": sp.cosh,
                    "atan": sp.atan}


def to_sympy(tree: tuple, symbols: dict[str, sp.Symbol]) -> sp.Expr:
    """Return the sympy expression of a tree; numbers stay exact Rationals."""
    op = tree[0]
    if op == "num":
        return sp.Rational(tree[1].numerator, tree[1].denominator)
    if op == "name":
        return symbols[tree[1]]
    if op == "neg":
        return -to_sympy(tree[1], symbols)
    if op == "call":
        return _SYMPY_FUNCTIONS[tree[1]](to_sympy(tree[2], symbols))
    a, b = to_sympy(tree[1], symbols), to_sympy(tree[2], symbols)
    if op == "add":
        return a + b
    if op == "sub":
        return a - b
    if op == "mul":
        return a * b
    return a / b if op == "div" else a**b


def symbols_of(model: Model) -> dict[str, sp.Symbol]:
    """Return one real sympy symbol per variable and parameter."""
    return {n: sp.Symbol(n, real=True) for n in (*model.variables, *model.parameters)}


def equations_sympy(model: Model) -> list[sp.Expr]:
    """Return the right-hand sides as sympy expressions."""
    syms = symbols_of(model)
    return [to_sympy(t, syms) for t in model.trees]


def jacobian_sympy(model: Model) -> sp.Matrix:
    """Return the exact symbolic Jacobian of the right-hand sides in the state variables."""
    syms = symbols_of(model)
    rhs = sp.Matrix(equations_sympy(model))
    return rhs.jacobian([syms[v] for v in model.variables])


class FloatSystem:
    """Float functions g(x), Dg(x) at fixed parameter values (the midpoints of their intervals)."""

    def __init__(self, model: Model,
                 parameters: dict[str, tuple[Fraction, Fraction]] | None = None):
        params = parameters or model.parameters
        self.model = model
        self.point = {k: float((lo + hi) / 2) for k, (lo, hi) in params.items()}
        self._f, self._j = _compiled(model)

    def g(self, x: np.ndarray) -> np.ndarray:
        """Return the right-hand side at x (for a map: the next state)."""
        return np.asarray(self._f(*x, **self.point), dtype=float).reshape(-1)

    def dg(self, x: np.ndarray) -> np.ndarray:
        """Return the Jacobian of the right-hand side at x."""
        n = len(x)
        return np.asarray(self._j(*x, **self.point), dtype=float).reshape(n, n)


@lru_cache(maxsize=64)
def _compiled_cached(key: tuple) -> tuple:
    variables, parameters, trees = key
    syms = {n: sp.Symbol(n, real=True) for n in (*variables, *parameters)}
    rhs = sp.Matrix([to_sympy(t, syms) for t in trees])
    jac = rhs.jacobian([syms[v] for v in variables])
    args = [syms[v] for v in variables] + [syms[p] for p in parameters]
    f = sp.lambdify(args, list(rhs), modules="numpy", cse=True)
    j = sp.lambdify(args, jac.tolist(), modules="numpy", cse=True)
    return f, j


def _compiled(model: Model) -> tuple:
    """Return lambdified f and J, keyword parameters, cached per model structure."""
    f, j = _compiled_cached((model.variables, tuple(model.parameters), model.trees))
    nv = len(model.variables)
    names = list(model.parameters)

    def call(fun):
        def wrapped(*x, **p):
            with np.errstate(all="ignore"):
                return fun(*x[:nv], *(p[n] for n in names))
        return wrapped

    return call(f), call(j)
