"""One interval of the time axis solved as an initial value problem in its own time.

Shared by the switched and the convolution methods: the forcing on an
interval is decoupled once more (g = P^-1 f, the decomposition is reused),
and ``solve_local`` runs ``scalar.solve_blocks`` and ``recombine.recombine``
in the interval's own time tau = t - start.

Where the data are numbers (P without parameters, an interval's input in t
only), ``closed_piece`` does not call ``recombine``: x = P y is formed on the
exponential polynomials of ``solve_blocks`` with the same operations, and
grouped once (``grouping``).  The groups are kept, so the forced part x - free
of each interval is a merge of two groupings (``difference``) rather than a
new expansion.  A solve shares one ``Shared`` record across its intervals:
the real-form decision of ``recombine`` (asked once) and the basis of the free
response in local time, which is the same on every interval.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Sequence, TypeAlias

import sympy as sp

from ...exact import is_zero_number
from ...expoly import ExpPoly, to_expoly
from ...model import Condition
from ...recombine import Recombined, recombine
from ...rootring import atoms_of, common_out, contains, expanded, replace_atoms
from ...scalar import ScalarResult, decouple, solve_blocks
from ...steps import Deferred, Lazy, Step, substitute
from .base import Problem

__all__ = [
    "Piece",
    "Local",
    "Shared",
    "Grouped",
    "decoupled",
    "solve_local",
    "closed_piece",
    "group_terms",
    "grouping",
    "difference",
]

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
    # the groupings of x and of the free response, where closed_piece made them (for ``difference``)
    grouped: tuple["Grouped", ...] | None = None
    free_grouped: tuple["Grouped", ...] | None = None


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


def _scalar_local(
    problem: Problem, f: Sequence[sp.Expr], *, start: sp.Expr, constants: Sequence[sp.Symbol], ivp: bool
) -> tuple[sp.Symbol, dict, list[ExpPoly], ScalarResult]:
    """tau, the map tau -> t - start, g = P^-1 f and y from ``solve_blocks``, in the interval's own time."""
    dec, t = problem.dec, problem.t
    tau = sp.Dummy("tau", real=True) if ivp else t
    shift = {tau: t - start} if ivp else {}
    f_ep = [to_expoly(sp.expand(sp.sympify(e, strict=True).subs(t, tau + start)) if ivp else e, tau) for e in f]
    g_ep = decouple(dec.P_inv, f_ep)
    scal = solve_blocks(
        dec.jordan_blocks, g_ep, t=tau, constants=constants, y_symbols=problem.y, ivp=ivp, t0=_ZERO,
        is_zero=is_zero_number,
    )
    return tau, shift, g_ep, scal


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
    dec = problem.dec
    tau, shift, g_ep, scal = _scalar_local(problem, f, start=start, constants=constants, ivp=x_start is not None)
    rec = recombine(
        dec.P, dec.P_inv, scal.y, blocks=dec.blocks, constants=constants,
        t=tau, t0=_ZERO, x0=x_start, real=problem.real, numbers=problem.numbers,
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


@dataclass
class Shared:
    """What the intervals of one solve share: recombine's real-form decision and the free basis.

    ``basis[k][i]`` is component i of x = P y for y(0) = e_k in local time,
    the same on every interval (the decomposition is); it is filled by the
    first interval that splits its y.
    """

    real_form: bool
    basis: list[list[ExpPoly]] | None = field(default=None)
    # per exponent g and start: e^{g (t - start)} as ``grouping`` restores it; whether that is stable
    restored: dict[tuple[sp.Expr, sp.Expr], sp.Expr | None] = field(default_factory=dict)
    stable: dict[tuple[sp.Expr, sp.Expr], bool] = field(default_factory=dict)

    def exponential(self, g: sp.Expr, start: sp.Expr, t: sp.Symbol) -> sp.Expr | None:
        """e^{g tau} with tau = t - start, written as ``grouping`` writes it; None for a complex g."""
        key = (g, start)
        if key not in self.restored:
            self.restored[key] = None
            if g.is_real:
                # g (t - start) is what putting t - start for tau in g tau gives
                arg = g * (t - start)
                restored = common_out(arg)
                # with rational numbers exp's own evaluation leaves g (t - start) as it is (it would
                # only change a log, a multiple of i pi or zero), and its assumption queries cost
                # a millisecond a call on a cold cache
                atom = sp.exp(restored, evaluate=not (g.is_Rational and start.is_Rational))
                if isinstance(atom, sp.exp) and t in atom.free_symbols:
                    self.restored[key] = atom
                    self.stable[key] = restored == arg or common_out(restored) == restored
        return self.restored[key]

    @classmethod
    def of(cls, problem: Problem) -> "Shared":
        """Ask ``recombine`` once whether it takes the real form (its rule, on y = 0: no work)."""
        dec, n = problem.dec, problem.n
        probe = recombine(
            dec.P, dec.P_inv, [ExpPoly()] * n, blocks=dec.blocks, constants=(),
            t=problem.t, t0=_ZERO, x0=None, real=problem.real,
        )
        return cls(real_form=probe.real_form)


def _numbers_only(problem: Problem, f: Sequence[sp.Expr], x_start: Matrix, constants: Sequence[sp.Symbol]) -> bool:
    """P, the interval's input and x(start) free of parameters (the constants of a general solution aside)."""
    if problem.dec.P.free_symbols or problem.dec.P_inv.free_symbols:
        return False
    t = problem.t
    if any(sp.sympify(e, strict=True).free_symbols - {t} - problem.numbers for e in f):
        return False
    return not (x_start.free_symbols - set(constants) - problem.numbers)


def _local_x(
    problem: Problem, scal: ScalarResult, x_start: Matrix, constants: Sequence[sp.Symbol], shared: Shared
) -> tuple[list[ExpPoly], list[ExpPoly]]:
    """(free part, x) = P y with y(0) = P^-1 x_start, on the exponential polynomials.

    The operations are recombine's for a numeric P (split y by constant,
    x = P y per constant, the constants' values put in), so the coefficients
    come out in the same form.
    """
    P, P_inv, n = problem.dec.P, problem.dec.P_inv, problem.n
    y_split = [yj.split_linear(constants) for yj in scal.y]
    if shared.basis is None:
        shared.basis = [
            [ExpPoly.combination((P[i, j], y_split[j][0][k]) for j in range(n)) for i in range(n)]
            for k in range(len(constants))
        ]
    xp = [ExpPoly.combination((P[i, j], y_split[j][1]) for j in range(n)) for i in range(n)]
    values = [sp.expand(sum((P_inv[i, j] * x_start[j] for j in range(n)), _ZERO)) for i in range(n)]
    values = [v if not v.free_symbols else sp.factor(v) for v in values]
    hv = [ExpPoly.combination((v, phi[i]) for v, phi in zip(values, shared.basis)) for i in range(n)]
    return hv, [h + p for h, p in zip(hv, xp)]


def closed_piece(
    problem: Problem,
    f: Sequence[sp.Expr],
    *,
    start: sp.Expr,
    x_start: Matrix,
    constants: Sequence[sp.Symbol],
    free: bool = False,
    shared: Shared | None = None,
) -> tuple[Piece, Matrix | None]:
    """An interval whose forcing is an exponential polynomial, in closed form.

    Returns the piece and, with ``free``, its free response (the homogeneous
    part, grouped like x): on the first interval that is e^{A (t - t0)} x0.
    With ``shared`` and numbers only, x = P y is formed here (see the module).
    """
    t = problem.t
    y_start = Deferred(_y_start, problem.dec.P_inv, x_start)
    unforced = all(e == 0 for e in f)
    grouped: tuple[Grouped, ...] | None = None
    free_grouped: tuple[Grouped, ...] | None = None
    if shared is not None and _numbers_only(problem, f, x_start, constants):
        tau, shift, _, scal = _scalar_local(problem, f, start=start, constants=constants, ivp=True)
        hv, xs = _local_x(problem, scal, x_start, constants, shared)

        def grouped_of(p: ExpPoly) -> Grouped:
            direct = _grouping_of(p, tau, shift, t, start, shared)
            if direct is not None:
                return direct
            return grouping(replace_atoms(p.real_form(tau) if shared.real_form else p.to_expr(tau), shift), t)

        grouped = tuple(grouped_of(p) for p in xs)
        x = Matrix([g.expr for g in grouped])
        response = None
        if free:
            # with no input on the interval x is its free response
            free_grouped = grouped if unforced else tuple(grouped_of(p) for p in hv)
            response = Matrix([g.expr for g in free_grouped])
    else:
        loc = solve_local(problem, f, start=start, x_start=x_start, constants=constants)
        scal, shift = loc.scalar, loc.shift
        x = loc.rec.x.applyfunc(lambda e: group_terms(e, t))
        response = None
        if free:
            # with no input on the interval x is its free response
            response = x if unforced else loc.rec.homogeneous.applyfunc(lambda e: group_terms(e, t))
    # y, y(start) and g are shown on the sheet only: built when it is read
    piece = Piece(
        x=x,
        y=Deferred(_y_shown, tuple(scal.y), shift, y_start, constants, t),
        g=Deferred(decoupled, problem, tuple(f)),
        y_start=y_start,
        method="closed form",
        steps=(),
        conditions=tuple(replace(c, expr=c.expr.xreplace(shift)) for c in scal.conditions),
        grouped=grouped,
        free_grouped=free_grouped,
    )
    return piece, response


def _y_start(P_inv: Matrix, x_start: Matrix) -> Matrix:
    return Matrix([sp.expand(v) for v in P_inv * x_start])


def _y_shown(
    y: Sequence[ExpPoly], shift: dict, y_start: Deferred[Matrix], constants: Sequence[sp.Symbol], t: sp.Symbol
) -> Matrix:
    """y on the interval in t, with the constants y(start) put in."""
    values = dict(zip(constants, y_start.fn(*y_start.args)))
    tau = next(iter(shift))
    return Matrix([group_terms(yy.to_expr(tau).xreplace(shift).xreplace(values), t) for yy in y])


@dataclass(frozen=True)
class Grouped:
    """An expression grouped by its factors in t, with the groups it was made from.

    ``groups`` holds (factor in t, the expanded terms of its coefficient);
    ``stable`` says that grouping ``expr`` again finds the same groups (each
    exponential in t is written as restoring it writes it), so the groups may
    stand for it.
    """

    expr: sp.Expr
    groups: tuple[tuple[sp.Expr, tuple[sp.Expr, ...]], ...]
    stable: bool
    terms: tuple[sp.Expr, ...] = ()  # factor times its coefficient, group by group (the terms of expr)
    # the same for minus the expression, made when asked (the free response is subtracted on every interval)
    negated: dict[int, sp.Expr] = field(default_factory=dict, compare=False, repr=False)

    @classmethod
    def of(cls, groups: tuple[tuple[sp.Expr, tuple[sp.Expr, ...]], ...], stable: bool) -> "Grouped":
        """The grouped expression of its groups: each factor times its coefficient with common factors out."""
        terms = tuple(key * common_out(sp.Add(*parts)) for key, parts in groups)
        return cls(expr=sp.Add(*terms), groups=groups, stable=stable, terms=terms)

    def negated_term(self, i: int) -> sp.Expr:
        """Group i of minus the expression, as ``group_terms`` of it writes it."""
        if i not in self.negated:
            key, parts = self.groups[i]
            self.negated[i] = key * common_out(sp.Add(*[-p for p in parts]))
        return self.negated[i]


def group_terms(e: sp.Expr, t: sp.Symbol) -> sp.Expr:
    """Collect a sum by its t-dependent factors, numbers like e^{-2} kept in the coefficients.

    On an interval starting at a the closed form has factors e^{lam (t - a)};
    the state handed over brings constants such as e^{-2}.  Grouping by the
    factors with t gives (5 - 5 e^{-2}) e^{3 - t} rather than two terms.

    >>> t = sp.Symbol("t")
    >>> group_terms(5*sp.exp(3 - t) - 5*sp.exp(-2)*sp.exp(3 - t), t)
    5*(1 - exp(-2))*exp(3 - t)
    """
    return grouping(e, t).expr


def grouping(e: sp.Expr, t: sp.Symbol) -> Grouped:
    """``group_terms`` with its groups kept (for ``difference``)."""
    # atoms_of, replace_atoms, free_symbols: has, atoms and xreplace reread every indexed root's polynomial
    e = sp.sympify(e, strict=True)
    exps = sorted(atoms_of(e, sp.exp), key=sp.default_sort_key)
    hold = {x: sp.Dummy(f"E{i}", positive=True) for i, x in enumerate(exps)}
    back = {v: sp.exp(common_out(k.args[0])) if t in k.free_symbols else k for k, v in hold.items()}
    timed = {v for k, v in hold.items() if t in k.free_symbols}
    # grouping the result again holds the restored exponentials: it finds these groups when
    # restoring them once more changes nothing
    stable = all(common_out(back[v].args[0]) == back[v].args[0] for v in timed)
    held = replace_atoms(e, hold)
    ex = expanded(held) if contains(held, sp.CRootOf) else sp.expand(held)
    groups: dict[sp.Expr, list[sp.Expr]] = {}
    for term in sp.Add.make_args(ex):
        with_t: list[sp.Expr] = []
        rest: list[sp.Expr] = []
        for factor in sp.Mul.make_args(term):
            (with_t if factor.free_symbols & (timed | {t}) else rest).append(factor)
        groups.setdefault(sp.Mul(*with_t), []).append(sp.Mul(*rest))
    kept = tuple(
        (replace_atoms(key, back), tuple(replace_atoms(p, back) for p in parts)) for key, parts in groups.items()
    )
    return Grouped.of(kept, stable)






def _grouping_of(p: ExpPoly, tau: sp.Symbol, shift: dict, t: sp.Symbol, start: sp.Expr, shared: Shared) -> Grouped | None:
    """``grouping`` of p(tau) with tau = t - start, read off the exponential polynomial.

    For real exponents (the real form of such terms is the terms themselves)
    and powers of tau only where start = 0: each term c tau^k e^{g tau} is then
    one group, its factor e^{g (t - start)} t^k as ``grouping`` restores it and
    its parts the terms of c (expanded already).  Otherwise None: the caller
    groups the expression.
    """
    groups = []
    for (k, g), c in p.terms:
        if k and start != 0:
            return None
        key = shared.exponential(g, start, t) if g != 0 else sp.Integer(1)
        if key is None:
            return None
        groups.append((key * t**k if k else key, sp.Add.make_args(c)))
    stable = all(shared.stable.get((g, start), False) for (_, g), _ in p.terms if g != 0)
    return Grouped.of(tuple(groups), stable)


def difference(a: Grouped, b: Grouped, t: sp.Symbol) -> sp.Expr:
    """group_terms(a - b) from the two groupings: the groups of b negated and merged into a's.

    Expanding a - b gives the terms of each and joins like terms; adding the
    terms of a shared factor does the same, so the result is group_terms's.
    When a grouping may not stand for its expression, or a factor repeats,
    a - b is grouped afresh.
    """
    keys_a = [k for k, _ in a.groups]
    keys_b = [k for k, _ in b.groups]
    if not (a.stable and b.stable) or len(set(keys_a)) < len(keys_a) or len(set(keys_b)) < len(keys_b):
        return group_terms(a.expr - b.expr, t)
    where_b = {k: i for i, k in enumerate(keys_b)}
    out = []
    for i, (k, parts) in enumerate(a.groups):
        j = where_b.get(k)
        if j is None:
            out.append(a.terms[i])
        else:
            out.append(k * common_out(sp.Add(*parts, *[-p for p in b.groups[j][1]])))
    shared = set(keys_a)
    out += [b.negated_term(j) for j, k in enumerate(keys_b) if k not in shared]
    return sp.Add(*out)
