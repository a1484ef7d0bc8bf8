"""Switched inputs and impulses: the time axis cut at the switches, interval by interval.

Between two switching times every step, pulse, ramp or piecewise input is an
ordinary function of t, usually an exponential polynomial, so each interval
is solved as an initial value problem whose initial state is the state the
previous interval ends in (``intervals.closed_piece``; the convolution form
where an interval's input is not an exponential polynomial).  The
decomposition A = P J P^-1 is computed once and reused on every interval.
An impulse b delta(t - a) is a switch at which the handed-over state jumps,
x(a+) = x(a-) + b; an impulse at t0 acts on x0 (x0 is the state just before
t0).  The result is a ``Piecewise`` in t, continuous at each step switch, and
is defined for t >= t0.
"""

from __future__ import annotations

from typing import TypeAlias

import sympy as sp

from ...errors import LimitError, UnsupportedError
from ...forcing import decided_sign, impulse_weight, is_switched, resolve_on, switching_times
from ...model import Condition
from ...rootring import replace_atoms
from ...steps import DecoupleStep, Deferred, IntervalStep, JumpStep, Step
from ...verify.pieces import PieceRecord
from .base import ForcingMethod, Pieces, Problem
from .closed import expoly_column
from .convolution import convolution_piece
from .intervals import Grouped, Piece, Shared, closed_piece, decoupled, difference, group_terms

__all__ = ["Switched"]

Matrix: TypeAlias = sp.ImmutableMatrix
_ZERO = sp.Integer(0)


def _number(e: sp.Expr) -> sp.Expr:
    """A handed-over state value: expanded, with exponentials of numbers combined per term."""
    return sp.Add(*[sp.powsimp(term) if _powers(term) > 1 else term for term in sp.Add.make_args(sp.expand(e))])


def _state_at(piece: Piece, t: sp.Symbol, end: sp.Expr) -> Matrix:
    """x(end) on a piece, as ``_number`` writes it.

    From the groupings: a part of a coefficient times its factor's value is
    a term of the expansion already, so nothing is expanded.
    """
    if piece.grouped is None:
        # replace_atoms: never into an indexed root's polynomial (xreplace rebuilds it on every read)
        return Matrix([_number(replace_atoms(e, {t: end})) for e in piece.x])
    out = []
    for g in piece.grouped:
        terms = [part * replace_atoms(key, {t: end}) for key, parts in g.groups for part in parts]
        out.append(sp.Add(*[sp.powsimp(term) if _powers(term) > 1 else term for term in terms]))
    return Matrix(out)


def _powers(term: sp.Expr) -> int:
    """How many factors of a product are powers or exponentials (powsimp has nothing to join below two)."""
    return sum(1 for f in sp.Mul.make_args(term) if f.is_Pow or isinstance(f, sp.exp) or f is sp.E)


def _midpoint(a: sp.Expr, b: sp.Expr | None) -> sp.Expr:
    return a + 1 if b is None else (a + b) / 2


def _difference(piece: Piece, free: Matrix, free_grouped: tuple[Grouped, ...] | None, t: sp.Symbol) -> list[sp.Expr]:
    """x - free on one interval, grouped; an interval before any input has x = free (nothing to group)."""
    out = []
    for i, x in enumerate(piece.x):
        if x == free[i]:
            out.append(_ZERO)
        elif piece.grouped is not None and free_grouped is not None:
            out.append(difference(piece.grouped[i], free_grouped[i], t))
        else:
            out.append(group_terms(x - free[i], t))
    return out


def _piecewise(values: list[sp.Expr], records: list[PieceRecord], t: sp.Symbol) -> sp.Expr:
    """One component over the intervals: value k while t < end k, the last one after."""
    if len(records) == 1:
        return values[0]
    return sp.Piecewise(*[(v, t < r.end) for v, r in zip(values[:-1], records[:-1])], (values[-1], True))


class Switched(ForcingMethod):
    """Steps, pulses, ramps, piecewise inputs and impulses, interval by interval."""

    name = "switched"

    def accepts(self, problem: Problem) -> bool:
        return is_switched(problem.system.f, problem.t)

    def _piece(
        self, problem: Problem, f: Matrix, *, start: sp.Expr, x_start: Matrix, constants, free: bool, shared: Shared
    ) -> tuple[Piece, Matrix | None]:
        """One interval, in closed form when its input allows; with ``free``, its free response if known."""
        if expoly_column(f, problem.t) is not None:
            return closed_piece(
                problem, f, start=start, x_start=x_start, constants=constants, free=free, shared=shared
            )
        return convolution_piece(problem, f, start=start, x_start=x_start, constants=constants)[0], None

    def solve(self, problem: Problem) -> Pieces:
        system, dec, t, n = problem.system, problem.dec, problem.t, problem.n
        consts = problem.constants(real=True)
        t0 = system.t0
        times = switching_times(system.f, t)
        placed: list[tuple[sp.Expr, int]] = []  # (switching time, sign of time - t0)
        for a in times:
            sign = decided_sign(a - t0)
            if sign is None:
                raise UnsupportedError(
                    f"the switching time {a} cannot be placed relative to t0 = {t0}; give numeric times or declare signs",
                    key="system.forcing",
                )
            placed.append((a, sign))
        notices: list[str] = []
        before = [a for a, sign in placed if sign < 0]
        if any(any(e != 0 for e in impulse_weight(system.f, t, a)) for a in before):
            notices.append("impulses before t0 are outside the solution's range t >= t0 and have no effect on it")
        inner = [a for a, sign in placed if sign > 0]
        limit = problem.settings.max_intervals
        if len(inner) + 1 > limit:
            raise LimitError(
                f"the forcing switches {len(inner)} times after t0, giving {len(inner) + 1} intervals; "
                f"the limit is {limit}",
                key="system.forcing",
            )
        ivp = system.x0 is not None
        x0 = system.x0 if system.x0 is not None else Matrix(list(consts))
        if not ivp:
            notices.append(
                "no initial values: the free constants are the state at t0, "
                f"x({sp.sstr(t0)}) = ({', '.join(c.name for c in consts)})"
            )
        steps: list[Step] = [
            DecoupleStep(t=t, y=problem.y, D=dec.J, P_inv=dec.P_inv, f=system.f, g=Deferred(decoupled, problem, system.f))
        ]
        bounds = [t0] + inner
        records: list[PieceRecord] = []
        conditions: list[Condition] = []
        state = x0
        free: Matrix | None = None
        free_grouped: tuple[Grouped, ...] | None = None
        pieces: list[Piece] = []
        shared = Shared.of(problem)
        for k, a in enumerate(bounds):
            end = bounds[k + 1] if k + 1 < len(bounds) else None
            jump = impulse_weight(system.f, t, a)
            if any(e != 0 for e in jump):
                after = Matrix([sp.expand(u + v) for u, v in zip(state, jump)])
                steps.append(JumpStep(t=t, at=a, weight=jump, before=state, after=after))
                state = after
            f_k = Matrix([sp.expand(resolve_on(e, t, _midpoint(a, end))) for e in system.f])
            # the first interval, when it starts from x0 itself, gives the free response on the way
            first = k == 0 and state == x0
            piece, response = self._piece(
                problem, f_k, start=a, x_start=state, constants=consts, free=first, shared=shared
            )
            if first:
                free, free_grouped = response, piece.free_grouped
            pieces.append(piece)
            conditions.extend(piece.conditions)
            x_end = None if end is None else _state_at(piece, t, end)
            steps.append(
                IntervalStep(
                    index=k + 1, t=t, start=a, end=end, f=f_k, g=piece.g, x_start=state, y_start=piece.y_start,
                    y=piece.y, x=piece.x, x_end=x_end, method=piece.method,
                )
            )
            steps.extend(piece.steps)
            records.append(PieceRecord(start=a, end=end, f=f_k, x=piece.x, jump=jump))
            if x_end is not None:
                state = x_end
        if free is None:
            # the free response e^{A (t - t0)} x0, when no interval gave it on the way
            unforced = closed_piece(problem, [_ZERO] * n, start=t0, x_start=x0, constants=consts, shared=shared)[0]
            free, free_grouped = unforced.x, unforced.grouped
        assert free is not None
        x = Matrix([_piecewise([r.x[i] for r in records], records, t) for i in range(n)])
        # the forced response is the rest
        differences = [_difference(piece, free, free_grouped, t) for piece in pieces]
        forced = Matrix([_piecewise([d[i] for d in differences], records, t) for i in range(n)])
        return Pieces(
            x=x,
            homogeneous=free,
            particular=forced,
            constants=() if ivp else consts,
            steps=tuple(steps),
            records=tuple(records),
            conditions=tuple(conditions),
            notices=tuple(notices),
        )
