"""Second-order systems M q'' + C q' + K q = F(t): the block first-order form and the modes.

The block form with the states q, then q' is

    x = (q, q'),   x' = [[0, I], [-M^-1 K, -M^-1 C]] x + (0, M^-1 F),

built exactly (M is inverted in exact arithmetic) and solved by the one
solver.  :func:`modes` (from ``derive.modal``) gives the modal description of
the same system: the generalized eigenproblem K phi = omega^2 M phi,
mass-normalised mode shapes and, when the damping is proportional (C = 0 or
C = alpha M + beta K), one damping ratio per mode.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import replace
from typing import Any

import sympy as sp

from .errors import InputError
from .modal import Modes, block_form, modes, read_square, read_vector, symbols_of
from .model import Case, Solution
from .pipeline import build_system, solve_case
from .reduction import derivative_symbol

__all__ = ["Modes", "block_form", "modes", "solve_second_order", "second_order_states"]


def second_order_states(names: Sequence[str]) -> tuple[sp.Symbol, ...]:
    """The states q1..qn, then q1'..qn' (each derivative named as the user writes it)."""
    return tuple(derivative_symbol(n, 0) for n in names) + tuple(derivative_symbol(n, 1) for n in names)


def solve_second_order(
    M: Any,
    C: Any,
    K: Any,
    F: Any = None,
    *,
    t: sp.Symbol | None = None,
    q0: Any = None,
    v0: Any = None,
    t0: Any = 0,
    params: Any = None,
    assume: Any = None,
) -> Solution:
    """Solve M q'' + C q' + K q = F(t) exactly through the block first-order form (states q, then q').

    ``C`` may be ``None`` (no damping); ``q0`` and ``v0`` are the initial
    displacements and velocities (give both or neither).

    >>> sol = solve_second_order([[1]], None, [[4]], q0=[1], v0=[0])
    >>> sol.x.T
    Matrix([[cos(2*t), -2*sin(2*t)]])
    """
    t = t if t is not None else sp.Symbol("t")
    symbols = {**symbols_of(params), t.name: t}
    Mm = read_square(M, "M", symbols, None)
    n = Mm.rows
    Cm = sp.ImmutableMatrix(sp.zeros(n, n)) if C is None else read_square(C, "C", symbols, n)
    Km = read_square(K, "K", symbols, n)
    Fm = sp.ImmutableMatrix(sp.zeros(n, 1)) if F is None else read_vector(F, "F", symbols, n)
    for name, mat in (("M", Mm), ("C", Cm), ("K", Km)):
        if mat.has(t):
            raise InputError(f"{name} depends on {t}: this solver needs constant coefficients", key=name)
    if (q0 is None) != (v0 is None):
        raise InputError("give both q0 and v0 (initial displacements and velocities), or neither", key="q0" if q0 is None else "v0")
    x0 = None
    if q0 is not None:
        x0 = list(read_vector(q0, "q0", symbols, n)) + list(read_vector(v0, "v0", symbols, n))
    A, f = block_form(Mm, Cm, Km, Fm)
    states = second_order_states([f"q{i + 1}" for i in range(n)])
    system, notices = build_system(A, f, t=t, x0=x0, t0=t0, params=params, states=states)
    system = replace(system, second_order=(Mm, Cm, Km, Fm))
    return solve_case(Case(name="second_order", system=system, notices=notices), assume=assume)
