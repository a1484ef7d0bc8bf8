"""Deciding whether an exact expression is zero.

Structural simplification settles most cases (rationals, radicals, i).  What
it cannot settle (indexed roots, nested radicals) goes to a numeric identity
test at high precision: the expression is evaluated with mpmath at 50 digits
at several random points of its free symbols (respecting positive and
negative assumptions).  An expression that is not identically zero is
nonzero at a random point with probability one, and a zero one evaluates to
about 1e-50 of its scale, so the threshold separates them with a wide margin.
"""

from __future__ import annotations

import functools
import random
from dataclasses import dataclass

import numpy as np
import sympy as sp

__all__ = ["ZeroVerdict", "decide_zero", "is_zero_number", "random_point", "numeric_function"]

DIGITS = 50
POINTS = 4


def numeric_function(args, expr, modules, *, values=None):
    """A numeric function of an expression (or a list of them).

    For numpy and one variable, sums, products, powers, exp, sin and cos of
    it are evaluated by walking the tree (``_TreeFunction``): lambdify prints
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
            return _TreeFunction(args, exprs if exprs is not None else expr, values)
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


class _TreeFunction:
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


@dataclass(frozen=True)
class ZeroVerdict:
    zero: bool
    method: str  # "exact" or "numeric identity (50 digits, 4 points)"
    size: float = 0.0  # largest numeric magnitude seen, when numeric


def random_point(symbols, rng: random.Random) -> dict[sp.Symbol, sp.Expr]:
    """Random exact values for symbols, consistent with their sign assumptions."""
    out = {}
    for s in symbols:
        v = sp.Rational(rng.randint(3, 29), rng.randint(5, 13))
        if s.is_negative or s.is_nonpositive:
            v = -v
        elif not (s.is_positive or s.is_nonnegative) and rng.random() < 0.5:
            v = -v
        out[s] = v
    return out


@functools.lru_cache(maxsize=256)
def root_value(r: sp.CRootOf, digits: int = DIGITS + 15) -> sp.Expr:
    """The decimal of an indexed root, computed once.

    ``eval_approx`` (Newton refinement from the isolating interval) takes a
    fraction of a second where ``evalf`` on a complex CRootOf at this precision
    took seconds per root.
    """
    try:
        return r.eval_approx(digits)
    except Exception:  # pragma: no cover - fall back to sympy's evaluator
        return sp.N(r, digits)


def _numeric_zero(expr: sp.Expr, *, seed: int = 12345, points: int = POINTS) -> ZeroVerdict:
    import mpmath

    rng = random.Random(seed)
    # indexed roots: their decimals once, at a margin above the working precision
    roots = {r: root_value(r) for r in expr.atoms(sp.CRootOf)}
    e = expr.xreplace(roots) if roots else expr
    syms = sorted(e.free_symbols, key=sp.default_sort_key)
    terms = list(sp.Add.make_args(e))[:200]
    with mpmath.workdps(DIGITS):
        try:
            total_fn = numeric_function(syms, e, "mpmath")
            terms_fn = numeric_function(syms, terms, "mpmath")
        except Exception:  # pragma: no cover - unusual functions: sympy's evaluator
            total_fn = terms_fn = None
        worst = 0.0
        npts = points if syms else 1
        for _ in range(npts):
            pt = random_point(syms, rng)
            args = [mpmath.mpf(pt[s].p) / pt[s].q for s in syms]
            try:
                if total_fn is not None:
                    mag = abs(mpmath.mpc(total_fn(*args)))
                    scale = max([mpmath.mpf(1)] + [abs(mpmath.mpc(v)) for v in terms_fn(*args)])
                else:
                    mag = abs(complex(sp.N(e.xreplace(pt), DIGITS)))
                    scale = 1.0
            except (TypeError, ValueError, ZeroDivisionError):
                return ZeroVerdict(False, "undecided: not a number at a sample point")
            rel = float(mag / scale)
            worst = max(worst, rel)
            if rel > 1e-30:
                return ZeroVerdict(False, f"numeric identity test ({DIGITS} digits)", rel)
    return ZeroVerdict(True, f"numeric identity test ({DIGITS} digits, {npts} points)", worst)


def decide_zero(expr: sp.Expr, *, allow_simplify: bool = True) -> ZeroVerdict:
    """Is ``expr`` identically zero?  Exact first, numeric identity if needed."""
    e = sp.expand(sp.sympify(expr, strict=True))
    if e == 0:
        return ZeroVerdict(True, "exact")
    if e.is_number and not e.has(sp.CRootOf):
        if e.is_zero is False:
            return ZeroVerdict(False, "exact")
    if allow_simplify and sp.count_ops(e) < 400 and not e.has(sp.CRootOf):
        s = sp.simplify(e)
        if s == 0:
            return ZeroVerdict(True, "exact")
    return _numeric_zero(e)


def is_zero_number(expr: sp.Expr) -> bool:
    """Exact zero test for a difference of exponents (resonance).

    Parameters left in the expression make it generically nonzero: the caller
    records the condition that it does not vanish.
    """
    e = sp.expand(expr)
    if e == 0:
        return True
    if e.free_symbols:
        return bool(sp.cancel(e) == 0)
    if e.is_Rational or e.is_zero is False:
        return False
    roots = e.atoms(sp.CRootOf)
    val = sp.N(e.xreplace({r: root_value(r) for r in roots}) if roots else e, DIGITS)
    if abs(complex(val)) > 1e-30:
        return False
    # numerically tiny: settle it exactly
    if sp.simplify(e) == 0:
        return True
    try:
        return sp.minimal_polynomial(e, sp.Dummy("z")).is_Symbol
    except (NotImplementedError, ValueError):  # pragma: no cover - sympy internals
        return True
