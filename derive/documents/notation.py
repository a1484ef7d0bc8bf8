"""The sheet's own symbols: the letter of the decoupled coordinates, and the definitions of H, delta and arg.

The printers (``derive.render.printers``) decide how the unit step, the
impulse and atan2 are written; this module says once, where a sheet first
uses one, what it means, and tells every format which letter the decoupled
coordinates x = P y carry (``derive.solving.methods.base.coordinate_base``
chose it when the problem was set up).
"""

from __future__ import annotations

from typing import Any, Sequence

import sympy as sp

from ..model import Solution
from .blocks import Block, Inline, N, P

__all__ = ["coordinate_letter", "notation_blocks"]


def coordinate_letter(solution: Solution) -> sp.Symbol:
    """The letter of the decoupled coordinates x = P y of ``solution`` (y unless a state, parameter,
    input or output takes it: ``derive.solving.methods.base.coordinate_base`` chose it).

    >>> from derive import loads_case, solve_case
    >>> coordinate_letter(solve_case(loads_case('[system]\\nstates = ["y", "v"]\\nmatrix = [[-1, 0], [0, -2]]')))
    z
    """
    for step in solution.steps:
        if getattr(step, "kind", "") == "decouple" and step.y:
            return sp.Symbol(step.y[0].name.rpartition("_")[0])
    return sp.Symbol("y")


def notation_blocks(objs: Sequence[Any], ctx: Any) -> list[Block]:
    """A sentence defining the unit step H, the impulse delta and arg where ``objs`` first use them (once a sheet).

    ``ctx`` is the sheet's ``StepContext`` (its printer, time and cache of what is already defined).
    """
    defined: set[str] = ctx.cache.setdefault("notation", set())
    f = ctx.fmt
    T, Tp = f.m(ctx.t), f.plain(ctx.t)
    j = f.style.imaginary_unit
    meanings: dict[Any, tuple[str, tuple[Inline, ...]]] = {
        sp.Heaviside: ("step", (N(rf"\mathrm{{H}}({T} - a)", f"H({Tp} - a)"), " is the unit step, 0 for ",
                                N(f"{T} < a", f"{Tp} < a"), " and 1 for ", N(f"{T} > a", f"{Tp} > a"))),
        sp.DiracDelta: ("impulse", (N(rf"\delta({T} - a)", f"delta({Tp} - a)"), " is the unit impulse at ", N(f"{T} = a", f"{Tp} = a"))),
        sp.atan2: ("arg", (N(rf"\arg(a + {j}\,b)", f"arg(a + {j} b)"), " is the angle of the point ", N("(a, b)"),
                           " from the positive real axis, between ", N(r"-\pi", "-π"), " and ", N(r"\pi", "π"))),
    }
    parts: list[Inline] = []
    for kind, (name, words) in meanings.items():
        if name in defined or not any(isinstance(o, (sp.Basic, sp.MatrixBase)) and o.has(kind) for o in objs):
            continue
        defined.add(name)
        parts += ["; " if parts else "Here ", *words]
    return [P(*parts, ".")] if parts else []
