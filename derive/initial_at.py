"""The initial-value check x(t0) = x0 at t0 != 0, settled in a ring of rational functions.

At t0 != 0 the result carries the input's modes in t, so x(t0) holds numbers
such as cos 2, sin 2 and e^{-1/2} beside the parameters.  Expanding and
simplifying such an expression costs seconds on a symbolic spring-mass-damper.
Here every cosine and sine of one argument is a pair of generators (C, S) with
the one relation C^2 + S^2 = 1, i a generator with i^2 = -1, every exponential
an independent generator, and a square root of the parameters a symbol R with
the radicand solved for one parameter; x(t0) - x0 is then read into a field of
rational functions by sparse arithmetic and its numerator reduced by the
relations.

Only a zero remainder is a verdict: the relations used are true, so zero
proves x(t0) = x0; anything else (a relation not used here, such as
cos 4 = 2 cos^2 2 - 1) answers False, "not settled", and the caller goes on to
the general zero test.  Only the final x(t), t0 and x0 are read.
"""

from __future__ import annotations

from typing import Sequence

import sympy as sp
from sympy.polys.fields import field

__all__ = ["initial_is_zero_at"]

#: what the ring does not read: the general zero test settles those
_OPAQUE = (sp.Integral, sp.Heaviside, sp.DiracDelta, sp.Piecewise, sp.CRootOf, sp.Derivative)


def initial_is_zero_at(x: Sequence[sp.Expr], x0: Sequence[sp.Expr], t: sp.Symbol, t0: sp.Expr) -> bool:
    """True when x(t0) = x0 holds exactly with cos^2 u + sin^2 u = 1; False means "not settled here".

    >>> t = sp.Symbol("t")
    >>> x = [sp.sin(2*t)**2 + sp.cos(2*t)**2 * sp.exp(1 - t)]
    >>> initial_is_zero_at(x, [1], t, 1), initial_is_zero_at(x, [2], t, 1)
    (True, False)
    """
    diffs = [_unit_phases(sp.sympify(e, strict=True).xreplace({t: t0}) - v) for e, v in zip(x, x0)]
    if any(d.has(t, *_OPAQUE) for d in diffs):
        return False
    in_symbols = _radicals_as_symbols(diffs)
    if in_symbols is None:
        return False
    diffs = in_symbols
    pairs: dict[sp.Expr, tuple[sp.Dummy, sp.Dummy]] = {}
    hold: dict[sp.Expr, sp.Expr] = {}
    for d in diffs:
        for a in d.atoms(sp.exp, sp.sin, sp.cos):
            if a in hold:
                continue
            if isinstance(a, sp.exp):
                hold[a] = sp.Dummy(f"E{len(hold)}")
                continue
            u = a.args[0]
            # sin(-u) is already -sin(u) in sympy: the key is the argument itself
            if u not in pairs:
                pairs[u] = (sp.Dummy(f"C{len(pairs)}"), sp.Dummy(f"S{len(pairs)}"))
            C, S = pairs[u]
            hold[a] = C if isinstance(a, sp.cos) else S
    # i is a generator u with u^2 + 1 = 0 like each pair (C, S); x(t0) - x0 = N/D is
    # read into a field of rational functions by its own arithmetic (no expansion
    # as sympy expressions), and it is zero where N lies in the ideal of the relations
    unit = sp.Dummy("u")
    relations = [S**2 + C**2 - 1 for C, S in pairs.values()] + [unit**2 + 1]
    for d in diffs:
        held = d.xreplace(hold).xreplace({sp.I: unit})
        if held == 0:
            continue
        first = [g for C, S in pairs.values() for g in (C, S)] + [unit]
        syms = first + sorted(held.free_symbols - set(first), key=sp.default_sort_key)
        try:
            F = field(syms, sp.QQ)[0]
            value = F.from_expr(held)
            rels = [F.ring.from_expr(r) for r in relations]
        except (ValueError, sp.PolynomialError, sp.GeneratorsError, sp.CoercionFailed):
            return False
        # the relations have leading terms C^2 and u^2 in distinct generators: the
        # remainder is unique, zero exactly for a member of the ideal
        if value.numer.rem(rels) != 0 or value.denom.rem(rels) == 0:
            return False
    return True


def _unit_phases(e: sp.Expr) -> sp.Expr:
    """e^{r + i q} with a number q as e^r (cos q + i sin q): the phase joins the (C, S) pairs."""
    rep = {}
    for a in e.atoms(sp.exp):
        u = sp.expand(a.args[0])
        q = u.coeff(sp.I)
        if q != 0 and q.is_number and not (u - sp.I * q).has(sp.I):
            rep[a] = sp.exp(u - sp.I * q) * (sp.cos(q) + sp.I * sp.sin(q))
    return e.xreplace(rep) if rep else e


def _radicals_as_symbols(diffs: list[sp.Expr]) -> list[sp.Expr] | None:
    """Each square root sqrt(D) of the parameters as a symbol R, D solved for a parameter it is linear in.

    With k = (c^2 - R^2)/(4 m) for sqrt(c^2 - 4 k m) = R the map (c, m, R) ->
    (c, k, m) covers every parameter point, so an identity in (c, m, R) is
    one in (c, k, m): no relation R^2 = D is left to use.  None when a root
    is not of that shape (a cube root, a root of a number, two roots in one
    parameter).
    """
    roots = set()
    for d in diffs:
        roots |= {p for p in d.atoms(sp.Pow) if p.exp.is_Rational and not p.exp.is_Integer}
    if not roots:
        return diffs
    used: set[sp.Symbol] = set()
    rep: dict[sp.Expr, sp.Expr] = {}
    solved: dict[sp.Symbol, sp.Expr] = {}
    for base in sorted({p.base for p in roots}, key=sp.default_sort_key):
        if any(p.exp.q != 2 for p in roots if p.base == base) or not base.free_symbols or base.free_symbols & used:
            return None
        for s in sorted(base.free_symbols, key=sp.default_sort_key):
            a = sp.diff(base, s)
            if a != 0 and not a.has(s):
                R = sp.Dummy("R", positive=True)
                solved[s] = sp.cancel((R**2 - (base - a * s)) / a)
                rep.update({p: R**p.exp.p for p in roots if p.base == base})
                used |= base.free_symbols
                break
        else:
            return None
    return [d.xreplace(rep).xreplace(solved) for d in diffs]
