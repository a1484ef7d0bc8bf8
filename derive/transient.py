"""The transient x - x_ss of a stable system, regrouped where the steady state meets the result.

The steady state x_ss holds no exponential in t (constants and the input's
sines and cosines), so subtracting it only changes the terms of x(t) free of
one.  Regrouping the whole difference with ``recombine.tidy`` would expand
every coefficient of every mode again: on a 6-state chain with indexed roots
that took longer than the rest of the sheet's algebra.  Here the terms of x
carrying a mode e^{u} are kept as they stand (x is already grouped by
exponential), and only the rest meets x_ss.
"""

from __future__ import annotations

import sympy as sp

from .recombine import tidy
from .rootring import atoms_of

__all__ = ["transient"]


def _timed_exps(e: sp.Basic, t: sp.Symbol) -> set:
    """The exponentials e^{u} in ``e`` whose exponent holds ``t`` (no indexed root is opened)."""
    return {x for x in atoms_of(e, sp.exp) if t in atoms_of(x.args[0], sp.Symbol)}


def transient(x: sp.Expr, x_ss: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """x - x_ss, grouped by exponential as ``recombine.tidy`` groups it.

    >>> t = sp.Symbol("t")
    >>> transient(sp.exp(-t) * (2 + t) + sp.cos(t) / 2 + 1, 1 + sp.cos(t) / 2, t)
    (t + 2)*exp(-t)
    """
    if not isinstance(x, sp.Add) or _timed_exps(x_ss, t):
        return tidy(x - x_ss, (), t)
    kept: list[sp.Expr] = []
    modes: set = set()
    rest: list[sp.Expr] = []
    for term in x.args:
        exps = _timed_exps(term, t)
        if not exps:
            rest.append(term)
            continue
        factors = sp.Mul.make_args(term)
        own = [f for f in factors if f in exps]
        # one mode e^{u} as a factor of its own, met by no other term: already grouped as tidy groups it
        if len(exps) != 1 or len(own) != 1 or own[0] in modes or any(_timed_exps(f, t) for f in factors if f is not own[0]):
            return tidy(x - x_ss, (), t)
        modes.add(own[0])
        kept.append(term)
    return sp.Add(*kept, tidy(sp.Add(*rest) - x_ss, (), t))
