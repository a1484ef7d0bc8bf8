"""Reading switched forcing: steps, pulses, ramps, piecewise inputs and impulses.

The solving methods (``derive.solving.methods``) cut the time axis at the
switches this module finds and solve each interval on its own:

* ``switching_times`` -- every time a step u(t - a), an impulse delta(t - a)
  or a branch of a ``Piecewise`` switches, in increasing order;
* ``resolve_on`` -- the forcing on one open interval between switches (steps
  0 or 1, impulses 0, the piecewise branch that holds);
* ``impulse_weight`` -- the vector b of the impulses b delta(t - a) at a
  switch: integrating x' = A x + f across t = a gives the jump
  x(a+) = x(a-) + b;
* ``piecewise_from_intervals`` -- the case file's ``{ piecewise = [...] }``
  as a sympy ``Piecewise``.
"""

from __future__ import annotations

import functools
from typing import Any, Sequence, TypeAlias

import sympy as sp

from .errors import InputError, UnsupportedError

__all__ = [
    "piecewise_from_intervals",
    "is_switched",
    "decided_sign",
    "switching_times",
    "resolve_on",
    "impulse_weight",
]

_SWITCHES = (sp.Heaviside, sp.DiracDelta, sp.Piecewise)
_ZERO = sp.Integer(0)
Matrix: TypeAlias = sp.ImmutableMatrix


# ---------------------------------------------------------------------------
# Piecewise input from intervals (the case file's ``{ piecewise = [...] }``)


def _exact_value(value: Any, *, key: str | None, file: str | None) -> sp.Expr:
    """A number or sympy object; text is refused here (it goes through the parser)."""
    try:
        return sp.sympify(value, strict=True)
    except sp.SympifyError:
        raise InputError(
            f"expected a number or a sympy expression, found {value!r}; "
            "parse text with derive.parsing.parse_expression first",
            key=key,
            file=file,
        )


def piecewise_from_intervals(
    pieces: Sequence[tuple[sp.Expr, sp.Expr | None]],
    t: sp.Symbol,
    *,
    key: str | None = None,
    file: str | None = None,
) -> sp.Expr:
    """``[(v1, b1), (v2, b2), ..., (vn, None)]`` -> v1 for t < b1, v2 until b2, ..., vn after.

    >>> t = sp.Symbol("t")
    >>> piecewise_from_intervals([(0, 2), (5, 8), (0, None)], t)
    Piecewise((0, t < 2), (5, t < 8), (0, True))
    """
    if not pieces:
        raise InputError("a piecewise input needs at least one interval; found none", key=key, file=file)
    args = []
    previous: sp.Expr | None = None
    for i, (value, bound) in enumerate(pieces):
        last = i == len(pieces) - 1
        value = _exact_value(value, key=key, file=file)
        if last:
            if bound is not None:
                raise InputError(
                    f"the last interval of a piecewise input has the bound {bound}; expected only a value "
                    "(it holds from the previous bound on)",
                    key=f"{key}[{i}]" if key else None,
                    file=file,
                )
            args.append((value, True))
            break
        if bound is None:
            raise InputError(
                f"interval {i + 1} of {len(pieces)} has no end; expected [value, end] for every interval but the last",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        bound = _exact_value(bound, key=key, file=file)
        if bound.has(t):
            raise InputError(
                f"the bound {bound} depends on {t}; expected a time (a number or a parameter expression)",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        if previous is not None and decided_sign(bound - previous) in (-1, 0):
            raise InputError(
                f"the bounds must increase, but {bound} follows {previous}",
                key=f"{key}[{i}]" if key else None,
                file=file,
            )
        previous = bound
        args.append((value, t < bound))
    return sp.Piecewise(*args)


# ---------------------------------------------------------------------------
# Switching times, and the forcing on one interval


def _switch_atoms(expr: sp.Expr, t: sp.Symbol) -> list[sp.Expr]:
    return [a for a in sp.sympify(expr, strict=True).atoms(*_SWITCHES) if a.has(t)]


def is_switched(f: Sequence[sp.Expr], t: sp.Symbol) -> bool:
    """True when the forcing contains a step, impulse or piecewise definition in t.

    >>> t = sp.Symbol("t")
    >>> is_switched([sp.Heaviside(t - 1), 0], t), is_switched([sp.exp(-t)], t)
    (True, False)
    """
    return any(_switch_atoms(e, t) for e in f)


def decided_sign(d: sp.Expr) -> int | None:
    """-1, 0 or 1 when sympy can decide the sign of ``d`` (assumptions included), else None."""
    d = sp.sympify(d, strict=True)
    if d.is_Rational:
        return (d.p > 0) - (d.p < 0)

    def sign_of(e: sp.Expr) -> int | None:
        if e.is_zero:
            return 0
        if e.is_positive:
            return 1
        if e.is_negative:
            return -1
        return None

    # the assumptions first; simplify once, only when they cannot tell
    got = sign_of(d)
    return got if got is not None else sign_of(sp.simplify(d))


def _root(arg: sp.Expr, t: sp.Symbol, what: str) -> sp.Expr:
    arg = sp.expand(arg)
    slope = sp.diff(arg, t)
    if slope.has(t) or slope == 0:
        raise UnsupportedError(
            f"the switch {what} has the argument {arg}, not linear in {t}; expected a time shift like {t} - a",
            key="system.forcing",
        )
    root = -(arg - slope * t) / slope
    # a number is in lowest terms already; only a parameter expression is simplified
    return root if root.is_number else sp.simplify(root)


def _relations(cond: Any) -> list[sp.Expr]:
    if cond in (sp.true, sp.false, True, False):
        return []
    if isinstance(cond, sp.core.relational.Relational):
        return [cond]
    if isinstance(cond, (sp.And, sp.Or, sp.Not)):
        return [r for a in cond.args for r in _relations(a)]
    raise UnsupportedError(f"the piecewise condition {cond} is not a comparison of times", key="system.forcing")


def switching_times(f: Sequence[sp.Expr], t: sp.Symbol) -> tuple[sp.Expr, ...]:
    """Every time at which a step, impulse or piecewise branch switches, in increasing order.

    >>> t = sp.Symbol("t")
    >>> switching_times([sp.Heaviside(t - 3) - sp.Heaviside(t - 1), sp.DiracDelta(t - 2)], t)
    (1, 2, 3)

    Raises ``UnsupportedError`` when a switch argument is not linear in t or
    the order of two switching times cannot be decided.
    """
    times: list[sp.Expr] = []
    for e in f:
        for atom in _switch_atoms(e, t):
            if isinstance(atom, sp.Heaviside):
                times.append(_root(atom.args[0], t, str(atom)))
            elif isinstance(atom, sp.DiracDelta):
                if len(atom.args) > 1 and atom.args[1] != 0:
                    raise UnsupportedError(
                        f"{atom} is a derivative of an impulse; expected impulses b*delta(t - a) only",
                        key="system.forcing",
                    )
                times.append(_root(atom.args[0], t, str(atom)))
            else:
                for value, cond in atom.args:
                    for rel in _relations(cond):
                        d = rel.lhs - rel.rhs
                        if not d.has(t):
                            raise UnsupportedError(
                                f"the piecewise condition {rel} does not involve {t}; expected conditions on time",
                                key="system.forcing",
                            )
                        times.append(_root(d, t, str(rel)))
    return _sorted_unique(times)


def _sorted_unique(times: Sequence[sp.Expr]) -> tuple[sp.Expr, ...]:
    def cmp(a: sp.Expr, b: sp.Expr) -> int:
        s = decided_sign(a - b)
        if s is None:
            raise UnsupportedError(
                f"the order of the switching times {a} and {b} cannot be decided; "
                "give numeric times or declare the parameters' signs",
                key="system.forcing",
            )
        return s

    out: list[sp.Expr] = []
    for x in sorted(times, key=functools.cmp_to_key(cmp)):
        if not out or cmp(out[-1], x) != 0:
            out.append(x)
    return tuple(out)


def _truth(cond: Any) -> bool:
    if cond in (sp.true, True):
        return True
    if cond in (sp.false, False):
        return False
    if isinstance(cond, sp.And):
        return all(_truth(a) for a in cond.args)
    if isinstance(cond, sp.Or):
        return any(_truth(a) for a in cond.args)
    if isinstance(cond, sp.Not):
        return not _truth(cond.args[0])
    if isinstance(cond, sp.core.relational.Relational):
        s = decided_sign(cond.lhs - cond.rhs)
        if s is None:
            raise UnsupportedError(f"cannot decide whether {cond} holds", key="system.forcing")
        op = cond.rel_op
        return {"<": s < 0, "<=": s <= 0, ">": s > 0, ">=": s >= 0, "==": s == 0, "!=": s != 0}[op]
    raise UnsupportedError(f"the condition {cond} is not a comparison of times", key="system.forcing")


def resolve_on(expr: sp.Expr, t: sp.Symbol, point: sp.Expr) -> sp.Expr:
    """The forcing on the open interval containing ``point`` (no switch inside it).

    Steps become 0 or 1, impulses 0 (they act as jumps at the switches) and a
    piecewise definition its branch on the interval.

    >>> t = sp.Symbol("t")
    >>> resolve_on(5*sp.Heaviside(t - 2) + sp.DiracDelta(t - 3), t, sp.Integer(4))
    5
    """
    expr = sp.sympify(expr, strict=True)

    def step(*args: sp.Expr) -> sp.Expr:
        if not args[0].has(t):
            return sp.Heaviside(*args)
        s = decided_sign(args[0].subs(t, point))
        if s is None or s == 0:
            raise UnsupportedError(f"cannot decide the sign of {args[0]} on the interval around {point}", key="system.forcing")
        return sp.Integer(1 if s > 0 else 0)

    def delta(*args: sp.Expr) -> sp.Expr:
        return _ZERO if args[0].has(t) else sp.DiracDelta(*args)

    def branch(*args: Any) -> sp.Expr:
        for value, cond in args:
            c = cond.subs(t, point) if hasattr(cond, "subs") else cond
            if _truth(c):
                return value
        return sp.nan

    out = expr.replace(sp.Heaviside, step).replace(sp.DiracDelta, delta).replace(sp.Piecewise, branch)
    if out.has(sp.nan):
        raise UnsupportedError(
            f"the piecewise input {expr} is not defined around {t} = {point}; expected a branch for every time",
            key="system.forcing",
        )
    return out


def impulse_weight(f: Sequence[sp.Expr], t: sp.Symbol, at: sp.Expr) -> Matrix:
    """The vector b of the impulses b delta(t - a) at ``at`` (zeros when there are none).

    >>> t = sp.Symbol("t")
    >>> impulse_weight([3*sp.DiracDelta(t - 1), sp.DiracDelta(2*t - 2)], t, sp.Integer(1)).T
    Matrix([[3, 1/2]])
    """
    out = []
    for e in f:
        w = _ZERO
        for term in sp.Add.make_args(sp.expand(e)):
            deltas = [a for a in term.atoms(sp.DiracDelta) if a.has(t)]
            if not deltas:
                continue
            if len(deltas) > 1:
                raise UnsupportedError(f"the term {term} multiplies impulses; expected b*delta(t - a)", key="system.forcing")
            d = deltas[0]
            coeff = term / d  # term is a product holding d: the division cancels it
            if coeff.has(sp.DiracDelta) or _switch_atoms(coeff, t):
                raise UnsupportedError(
                    f"the impulse term {term} is not a coefficient times delta(t - a); expected b*delta(t - a)",
                    key="system.forcing",
                )
            arg = sp.expand(d.args[0])
            slope = sp.diff(arg, t)
            if decided_sign(_root(arg, t, str(d)) - at) != 0:
                continue
            # delta(k t + m) = delta(t - a) / |k|
            w += coeff.subs(t, at) / sp.Abs(slope)
        out.append(sp.simplify(w) if w.free_symbols else w)
    return Matrix(out)
