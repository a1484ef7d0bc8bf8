"""Closed form: forcing that is a sum of t^k e^{gamma t} (sines and cosines included).

g = P^-1 f stays an exponential polynomial, each scalar equation is solved by
its integrating factor in closed form (``derive.scalar``), and x = P y is
recombined with the real form and the constants (``derive.recombine``).
"""

from __future__ import annotations

import functools
from typing import Sequence

import sympy as sp

from ...exact import is_zero_number
from ...expoly import ExpPoly, NotExpPoly, to_expoly
from ...recombine import conjugate_pairs, recombine
from ...scalar import decouple, solve_blocks
from ...steps import DecoupleStep, Deferred
from .base import ForcingMethod, Pieces, Problem

__all__ = ["ClosedForm", "expoly_column"]


@functools.lru_cache(maxsize=16)
def expoly_column(f: sp.ImmutableMatrix, t: sp.Symbol) -> tuple[ExpPoly, ...] | None:
    """The forcing as exponential polynomials, or None when an entry is not one (cached: asked twice)."""
    try:
        return tuple(to_expoly(e, t) for e in f)
    except NotExpPoly:
        return None


def _column(polys: Sequence[ExpPoly], t: sp.Symbol) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([p.to_expr(t) for p in polys])


class ClosedForm(ForcingMethod):
    """Exponential polynomials: one closed form for all t, by integrating factors."""

    name = "closed form"

    def accepts(self, problem: Problem) -> bool:
        return expoly_column(problem.system.f, problem.t) is not None

    def solve(self, problem: Problem) -> Pieces:
        system, dec, t = problem.system, problem.dec, problem.t
        f_ep = expoly_column(system.f, t)
        assert f_ep is not None  # accepts() said so
        g_ep = decouple(dec.P_inv, f_ep)
        steps: list = [DecoupleStep(t=t, y=problem.y, D=dec.J, P_inv=dec.P_inv, f=system.f, g=Deferred(_column, g_ep, t))]
        constants = problem.constants()
        # the sheet says which scalar solution is the conjugate of which
        conj = {}
        pos_of_block = []
        pos = 0
        for b in dec.blocks:
            pos_of_block.append(pos)
            pos += sum(len(ch) for ch in b.chains)
        for bi, bj in conjugate_pairs(dec.blocks):
            conj[pos_of_block[bj]] = pos_of_block[bi] + 1
        scal = solve_blocks(
            dec.jordan_blocks,
            g_ep,
            t=t,
            constants=constants,
            y_symbols=problem.y,
            ivp=system.x0 is not None,
            t0=system.t0,
            is_zero=is_zero_number,
            conjugates=conj,
        )
        steps.extend(scal.steps)
        rec = recombine(
            dec.P,
            dec.P_inv,
            scal.y,
            blocks=dec.blocks,
            constants=constants,
            t=t,
            t0=system.t0,
            x0=system.x0,
            real=problem.real,
            numbers=problem.numbers,
        )
        steps.extend(rec.steps)
        notices = []
        if problem.real and not rec.real_form and any(b.kind != "real" for b in dec.blocks):
            notices.append(
                "whether the eigenvalues are real or complex depends on the parameter values, so the "
                "result is written with exponentials of the eigenvalues as they stand; it holds in both "
                "regimes (with the square roots imaginary where their argument is negative)"
            )
        return Pieces(
            x=rec.x,
            homogeneous=rec.homogeneous,
            particular=rec.particular,
            constants=rec.constants,
            steps=tuple(steps),
            conditions=scal.conditions,
            notices=tuple(notices),
        )
