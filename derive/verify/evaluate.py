"""Numbers from exact expressions: a fast numpy evaluator and the decimals of indexed roots.

``numeric_function`` turns an expression (or a list of them) into a function
of numpy arrays; ``root_value`` gives the decimal of a ``CRootOf`` once, at a
margin above the working precision of the zero test.  Both are shared by the
numeric check (``derive.verify``), the zero test (``derive.verify.zero``) and
the spectral stage.
"""

from __future__ import annotations

import functools

import numpy as np
import sympy as sp

__all__ = ["numeric_function", "root_value", "TreeFunction"]


def numeric_function(args, expr, modules, *, values=None):
    """A numeric function of an expression (or a list of them).

    For numpy and one variable, sums, products, powers, exp, sin and cos of
    it are evaluated by walking the tree (``TreeFunction``): lambdify prints
    the expression as source and compiles it, which costs more than the
    evaluation on a grid.  Anything else goes to sympy's lambdify, without its
    docstring (which prints the expression once more).  ``values`` maps other
    symbols to numbers (the sampled constants of a general solution): the walk
    reads them as it goes, lambdify gets the expression with them put in.
    """
    values = dict(values or {})
    exprs = list(expr) if isinstance(expr, (list, tuple)) else None
    if modules in ("numpy", ["numpy"]) and isinstance(args, sp.Symbol):
        if all(_walkable(e, args, values) for e in (exprs if exprs is not None else [expr])):
            return TreeFunction(args, exprs if exprs is not None else expr, values)
    if values:
        expr = [e.xreplace(values) for e in exprs] if exprs is not None else expr.xreplace(values)
    return sp.lambdify(args, expr, modules=modules, docstring_limit=0)


_UNARY = {sp.exp: "exp", sp.sin: "sin", sp.cos: "cos"}


def _walkable(e, x: sp.Symbol, values=()) -> bool:
    if not isinstance(e, sp.Basic):
        return False
    for node in sp.preorder_traversal(e):
        if node.is_Atom:
            if node.is_Symbol and node != x and node not in values:
                return False
            if not (node.is_Symbol or node.is_number):
                return False
        elif not (node.is_Add or node.is_Mul or node.is_Pow or type(node) in _UNARY or node.is_number):
            return False
    return True


class TreeFunction:
    """Evaluate expressions in one variable on numpy arrays, node by node (complex128)."""

    def __init__(self, x: sp.Symbol, expr, values=None) -> None:
        self.x = x
        self.expr = expr
        self.values = {s: complex(v) for s, v in (values or {}).items()}

    def __call__(self, value):
        v = np.asarray(value)
        if isinstance(self.expr, list):
            memo: dict = {}
            return [self._real(self._eval(e, v, memo)) for e in self.expr]
        return self._real(self._eval(self.expr, v, {}))

    @staticmethod
    def _real(out):
        # real where the imaginary part is exactly zero, as lambdify gives for a real expression
        if np.iscomplexobj(out) and not np.any(np.imag(out)):
            return np.real(out) if isinstance(out, np.ndarray) else float(np.real(out))
        return out

    def _eval(self, e, v, memo):
        got = memo.get(e)
        if got is not None:
            return got
        if e == self.x:
            out = v.astype(complex)
        elif e.is_Symbol:
            out = self.values[e]
        elif e.is_number:
            out = complex(e)
        elif e.is_Add:
            out = 0
            for a in e.args:
                out = out + self._eval(a, v, memo)
        elif e.is_Mul:
            out = 1
            for a in e.args:
                out = out * self._eval(a, v, memo)
        elif e.is_Pow:
            base = self._eval(e.base, v, memo)
            if e.exp.is_Integer:
                out = base ** int(e.exp)
            else:
                out = np.power(base, self._eval(e.exp, v, memo))
        else:
            out = getattr(np, _UNARY[type(e)])(self._eval(e.args[0], v, memo))
        memo[e] = out
        return out



@functools.lru_cache(maxsize=256)
def root_value(r: sp.CRootOf, digits: int = 65) -> sp.Expr:
    """The decimal of an indexed root, computed once.

    ``eval_approx`` (Newton refinement from the isolating interval) takes a
    fraction of a second where ``evalf`` on a complex CRootOf at this precision
    took seconds per root.
    """
    try:
        return r.eval_approx(digits)
    except Exception:  # pragma: no cover - fall back to sympy's evaluator
        return sp.N(r, digits)
