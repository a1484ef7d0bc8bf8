"""One interval of the time axis solved as an initial value problem in its own time.

Shared by the switched and the convolution methods: the forcing on an
interval is decoupled once more (g = P^-1 f, the decomposition is reused),
and ``solve_local`` runs ``scalar.solve_blocks`` and ``recombine.recombine``
in the interval's own time tau = t - start.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from typing import Sequence, TypeAlias

import sympy as sp

from ...exact import is_zero_number
from ...expoly import ExpPoly, to_expoly
from ...model import Condition
from ...recombine import Recombined, recombine
from ...scalar import ScalarResult, decouple, solve_blocks
from ...steps import Deferred, Lazy, Step, substitute
from .base import Problem

__all__ = ["Piece", "Local", "decoupled", "solve_local", "closed_piece", "group_terms"]

Matrix: TypeAlias = sp.ImmutableMatrix
_ZERO = sp.Integer(0)


@dataclass(frozen=True)
class Piece:
    """The solution on one interval: x, the decoupled y and g, y at the start, and how it was found.

    y, g and y_start are for the sheet (``IntervalStep``) and may be Deferred.
    """

    x: Matrix
    y: Lazy[Matrix]
    g: Lazy[Matrix]
    y_start: Lazy[Matrix]
    method: str
    steps: tuple[Step, ...]
    conditions: tuple[Condition, ...]


@dataclass(frozen=True)
class Local:
    """``solve_local``'s result: the scalar and recombined solutions and the map tau -> t - start."""

    scalar: ScalarResult
    rec: Recombined
    shift: dict
    g: list[ExpPoly]


def decoupled(problem: Problem, f: Sequence[sp.Expr]) -> Matrix:
    """g = P^-1 f for any forcing, expanded row by row."""
    P_inv, n = problem.dec.P_inv, problem.n
    return Matrix([sp.expand(sum((P_inv[i, j] * f[j] for j in range(n)), _ZERO)) for i in range(n)])


def solve_local(
    problem: Problem,
    f: Sequence[sp.Expr],
    *,
    start: sp.Expr,
    x_start: Matrix | None,
    constants: Sequence[sp.Symbol],
    with_steps: bool = False,
) -> Local:
    """solve_blocks and recombine in the interval's own time tau = t - start.

    Each interval is an initial value problem at tau = 0, so the handed-over
    state enters only through the constants and no e^{-lam a} factors are
    carried through ``recombine`` (where, with parameters, they would end up
    in denominators).  Only with ``with_steps`` are recombine's steps carried
    back into t (the convolution shows them; an interval of a switched input
    does not).
    """
    dec, t = problem.dec, problem.t
    ivp = x_start is not None
    tau = sp.Dummy("tau", real=True) if ivp else t
    shift = {tau: t - start} if ivp else {}
    f_ep = [to_expoly(sp.expand(sp.sympify(e, strict=True).subs(t, tau + start)) if ivp else e, tau) for e in f]
    g_ep = decouple(dec.P_inv, f_ep)
    scal = solve_blocks(
        dec.jordan_blocks, g_ep, t=tau, constants=constants, y_symbols=problem.y, ivp=ivp, t0=_ZERO,
        is_zero=is_zero_number,
    )
    rec = recombine(
        dec.P, dec.P_inv, scal.y, blocks=dec.blocks, constants=constants,
        t=tau, t0=_ZERO, x0=x_start, real=problem.real,
    )
    if shift:
        rec = replace(
            rec,
            x=rec.x.xreplace(shift),
            homogeneous=rec.homogeneous.xreplace(shift),
            particular=rec.particular.xreplace(shift),
            steps=substitute(rec.steps, shift) if with_steps else (),
        )
    return Local(scalar=scal, rec=rec, shift=shift, g=g_ep)


def closed_piece(
    problem: Problem,
    f: Sequence[sp.Expr],
    *,
    start: sp.Expr,
    x_start: Matrix,
    constants: Sequence[sp.Symbol],
    free: bool = False,
) -> tuple[Piece, Matrix | None]:
    """An interval whose forcing is an exponential polynomial, in closed form.

    Returns the piece and, with ``free``, its free response (the homogeneous
    part, grouped like x): on the first interval that is e^{A (t - t0)} x0.
    """
    t = problem.t
    loc = solve_local(problem, f, start=start, x_start=x_start, constants=constants)
    x = loc.rec.x.applyfunc(lambda e: group_terms(e, t))
    response = None
    if free:
        # with no input on the interval x is its free response
        unforced = all(e == 0 for e in f)
        response = x if unforced else loc.rec.homogeneous.applyfunc(lambda e: group_terms(e, t))
    # y, y(start) and g are shown on the sheet only: built when it is read
    y_start = Deferred(_y_start, problem.dec.P_inv, x_start)
    piece = Piece(
        x=x,
        y=Deferred(_y_shown, loc, y_start, constants, t),
        g=Deferred(decoupled, problem, tuple(f)),
        y_start=y_start,
        method="closed form",
        steps=(),
        conditions=tuple(replace(c, expr=c.expr.xreplace(loc.shift)) for c in loc.scalar.conditions),
    )
    return piece, response


def _y_start(P_inv: Matrix, x_start: Matrix) -> Matrix:
    return Matrix([sp.expand(v) for v in P_inv * x_start])


def _y_shown(loc: Local, y_start: Deferred[Matrix], constants: Sequence[sp.Symbol], t: sp.Symbol) -> Matrix:
    """y on the interval in t, with the constants y(start) put in."""
    values = dict(zip(constants, y_start.fn(*y_start.args)))
    tau = next(iter(loc.shift))
    return Matrix([group_terms(yy.to_expr(tau).xreplace(loc.shift).xreplace(values), t) for yy in loc.scalar.y])


def group_terms(e: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """Collect a sum by its t-dependent factors, numbers like e^{-2} kept in the coefficients.

    On an interval starting at a the closed form has factors e^{lam (t - a)};
    the state handed over brings constants such as e^{-2}.  Grouping by the
    factors with t gives (5 - 5 e^{-2}) e^{3 - t} rather than two terms.

    >>> t = sp.Symbol("t")
    >>> group_terms(5*sp.exp(3 - t) - 5*sp.exp(-2)*sp.exp(3 - t), t)
    5*(1 - exp(-2))*exp(3 - t)
    """
    exps = sorted(sp.sympify(e, strict=True).atoms(sp.exp), key=sp.default_sort_key)
    hold = {x: sp.Dummy(f"E{i}", positive=True) for i, x in enumerate(exps)}
    back = {v: sp.exp(sp.factor_terms(k.args[0])) if k.has(t) else k for k, v in hold.items()}
    timed = {v for k, v in hold.items() if k.has(t)}
    ex = sp.expand(sp.sympify(e, strict=True).xreplace(hold))
    groups: dict[sp.Expr, list[sp.Expr]] = {}
    for term in sp.Add.make_args(ex):
        with_t: list[sp.Expr] = []
        rest: list[sp.Expr] = []
        for factor in sp.Mul.make_args(term):
            (with_t if (factor.has(t) or factor.free_symbols & timed) else rest).append(factor)
        groups.setdefault(sp.Mul(*with_t), []).append(sp.Mul(*rest))
    out = [key.xreplace(back) * sp.factor_terms(sp.Add(*parts).xreplace(back)) for key, parts in groups.items()]
    return sp.Add(*out)
