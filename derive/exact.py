"""Deciding whether an exact expression is zero: the names the solving stages call.

The one engine is :mod:`derive.verify.zero` (exact reduction, then a numeric
identity test at high precision under ``derive.settings.ZeroPolicy``);
``decide_zero`` is that engine under the default policy.  ``is_zero_number``
is the exact test of a difference of exponents (resonance), which must never
answer "zero" on numeric evidence alone.
"""

from __future__ import annotations

import random

import sympy as sp

from .settings import DEFAULT_ZERO_POLICY
from .verify.evaluate import numeric_function, root_value
from .verify.zero import ZeroVerdict, decide, draw

__all__ = ["ZeroVerdict", "decide_zero", "is_zero_number", "random_point", "numeric_function", "root_value"]


def random_point(symbols, rng: random.Random) -> dict[sp.Symbol, sp.Expr]:
    """Random exact values for symbols, consistent with their sign assumptions."""
    return {s: draw(s, rng) for s in symbols}


def decide_zero(expr: sp.Expr, *, allow_simplify: bool = True) -> ZeroVerdict:
    """Is ``expr`` identically zero?  Exact first, numeric identity if needed (the default policy).

    >>> decide_zero(sp.sqrt(2) ** 2 - 2).zero
    True
    """
    return decide(sp.sympify(expr, strict=True), simplify=allow_simplify)


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
    val = sp.N(e.xreplace({r: root_value(r) for r in roots}) if roots else e, DEFAULT_ZERO_POLICY.digits)
    if abs(complex(val)) > DEFAULT_ZERO_POLICY.relative_tol:
        return False
    # numerically tiny: settle it exactly
    if sp.simplify(e) == 0:
        return True
    try:
        return sp.minimal_polynomial(e, sp.Dummy("z")).is_Symbol
    except (NotImplementedError, ValueError):  # pragma: no cover - sympy internals
        return True
