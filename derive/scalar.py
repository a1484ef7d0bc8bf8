"""Integrating-factor solution of the decoupled equations, block by block.

After x = P y the system reads y' = J y + g.  Within a Jordan block of size s
the equations are

    y_i' = lam y_i + y_{i+1} + g_i      (i < last),     y_last' = lam y_last + g_last,

so each block is solved from its last equation up, each equation by the
integrating factor e^{-lam t}: (e^{-lam t} y_i)' = e^{-lam t} h_i(t), with h_i
holding the component just solved.  For an initial value problem the integral
runs from t0 to t and the homogeneous term is c_i e^{lam (t - t0)}, so that
y_i(t0) = c_i and the constants come out as c = P^-1 x0.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable, Sequence

import sympy as sp

from .expoly import ExpPoly, integrate_against, shift_exponents
from .model import Condition, Relation
from .steps import Deferred, ScalarStep

__all__ = ["ScalarResult", "solve_blocks", "decouple"]


def decouple(P_inv: sp.MatrixBase, f: Sequence[ExpPoly]) -> list[ExpPoly]:
    """g = P^-1 f, row by row, for forcing given as exponential polynomials."""
    n = len(f)
    return [ExpPoly.combination((P_inv[i, j], f[j]) for j in range(n)) for i in range(n)]


@dataclass(frozen=True)
class ScalarResult:
    y: tuple[ExpPoly, ...]  # y_i(t), linear in the constants
    steps: tuple[ScalarStep, ...]
    conditions: tuple[Condition, ...]
    resonant: tuple[int, ...]


def solve_blocks(
    jordan_blocks: Sequence[tuple[sp.Expr, int]],
    g: Sequence[ExpPoly],
    *,
    t: sp.Symbol,
    constants: Sequence[sp.Symbol],
    y_symbols: Sequence[sp.Symbol],
    ivp: bool,
    t0: sp.Expr = sp.Integer(0),
    is_zero: Callable[[sp.Expr], bool],
    conjugates: dict[int, int] | None = None,
) -> ScalarResult:
    """Solve y' = J y + g for every Jordan block, bottom-up within each block.

    ``conjugates`` maps the index of an eigenvalue's first column to that of
    its conjugate partner, only to say so on the sheet.
    """
    n = len(g)
    y: dict[int, ExpPoly] = {}  # filled bottom-up: y[i + 1] before y[i] within a block
    steps_by_index: dict[int, ScalarStep] = {}
    conditions: list[Condition] = []
    resonant: list[int] = []
    conjugates = conjugates or {}
    seen_beta: set = set()
    start = 0
    for lam, size in jordan_blocks:
        for i in range(start + size - 1, start - 1, -1):
            last = i == start + size - 1
            h = g[i] if last else g[i] + y[i + 1]
            res = integrate_against(h, lam, is_zero=is_zero)
            F = res.antiderivative
            c = constants[i]
            if ivp:
                F0 = F.at(t0)
                particular = shift_exponents(F, lam) - ExpPoly.term(F0, 0, lam)
                homog = ExpPoly.term(c * sp.exp(-lam * t0), 0, lam) if t0 != 0 else ExpPoly.term(c, 0, lam)
            else:
                particular = shift_exponents(F, lam)
                homog = ExpPoly.term(c, 0, lam)
            yi = homog + particular
            y[i] = yi
            if res.resonant:
                resonant.append(i)
            for beta in res.nonzero:
                key = sp.expand(beta)
                if key in seen_beta or -key in seen_beta:
                    continue
                seen_beta.add(key)
                conditions.append(
                    Condition(
                        expr=key,
                        relation=Relation.NONZERO,
                        # the expression is the difference itself; the text names no symbol,
                        # since a regime's placeholder root is still in lam here
                        reason="a forcing exponent differs from an eigenvalue (no resonance)",
                    )
                )
            shift = t - t0 if ivp else t
            # the equation written out is for the sheet: built when it is read
            steps_by_index[i] = ScalarStep(
                index=i + 1,
                t=t,
                y=y_symbols[i],
                eigenvalue=lam,
                g=Deferred(g[i].to_expr, t),
                coupling=None if last else y_symbols[i + 1],
                coupling_value=None if last else Deferred(_expr, y[i + 1], t, t0 if ivp else 0),
                rhs=Deferred(h.to_expr, t),
                factor=Deferred(_factor, lam, shift),
                integrand=Deferred(_integrand, h, lam, t),
                integral=Deferred(_integral, F, t, t0 if ivp else None),
                constant=c,
                solution=Deferred(_expr, yi, t, t0 if ivp else 0),
                resonant=res.resonant,
                t0=t0 if ivp else sp.Integer(0),
                conjugate_of=conjugates.get(i),
            )
        start += size
    ordered = tuple(steps_by_index.values())  # solve order: bottom-up in each block
    return ScalarResult(
        y=tuple(y[i] for i in range(n)),
        steps=ordered,
        conditions=tuple(conditions),
        resonant=tuple(resonant),
    )


def _expr(p: ExpPoly, t: sp.Symbol, t0: sp.Expr) -> sp.Expr:
    return p.to_expr(t, t0=t0)


def _factor(lam: sp.Expr, shift: sp.Expr) -> sp.Expr:
    return sp.exp(-lam * shift)


def _integrand(h: ExpPoly, lam: sp.Expr, t: sp.Symbol) -> sp.Expr:
    return shift_exponents(h, -lam).to_expr(t)


def _integral(F: ExpPoly, t: sp.Symbol, t0: sp.Expr | None) -> sp.Expr:
    """The antiderivative, or the integral from t0 to t for an initial value problem."""
    return (F if t0 is None else F - ExpPoly.constant(F.at(t0))).to_expr(t)
