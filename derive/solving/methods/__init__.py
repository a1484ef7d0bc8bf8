"""The forcing methods and their registry.

``METHODS`` lists one instance of each method, asked in order by
``choose_method``: the first whose ``accepts`` is true integrates the
forcing.  Closed form comes first (exact and cheapest), the switched method
next (it cuts the axis and reuses the closed form per interval), convolution
last (it accepts anything).  To add a method, subclass ``ForcingMethod``
(``base.py`` states the contract) and insert an instance here.
"""

from __future__ import annotations

import sympy as sp

from ...errors import UnsupportedError
from .base import ForcingMethod, Pieces, Problem
from .closed import ClosedForm
from .convolution import Convolution
from .switched import Switched

__all__ = ["METHODS", "ForcingMethod", "Pieces", "Problem", "choose_method"]

METHODS: tuple[ForcingMethod, ...] = (ClosedForm(), Switched(), Convolution())


def choose_method(problem: Problem, methods: tuple[ForcingMethod, ...] = METHODS) -> ForcingMethod:
    """The first method that accepts the problem's forcing.

    >>> from derive.pipeline import build_system
    >>> from derive.spectral import decompose
    >>> t = sp.Symbol("t")
    >>> system, _ = build_system([[-1]], [sp.Heaviside(t - 1)], t=t)
    >>> choose_method(Problem.of(system, decompose(system.A))).name
    'switched'
    """
    t = problem.t
    for e in problem.system.f:
        if e.has(sp.Integral) or e.has(sp.Derivative):
            raise UnsupportedError(
                f"the forcing {e} contains an integral or derivative; expected a function of {t}", key="system.forcing"
            )
    for method in methods:
        if method.accepts(problem):
            return method
    raise UnsupportedError(f"no solving method accepts the forcing {list(problem.system.f)}", key="system.forcing")
