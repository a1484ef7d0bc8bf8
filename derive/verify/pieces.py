"""Verification of a solution given per interval (switched inputs, impulses, convolution).

The call form of the interval-by-interval solvers; the checks themselves are
:func:`derive.verify.verify_solution`, the same for one piece or many.
"""

from __future__ import annotations

from collections.abc import Sequence

import sympy as sp

from ..model import System, Verification
from ..settings import DEFAULT_SETTINGS, Settings
from . import verify_solution
from .numeric import PieceRecord, numeric_solution

__all__ = ["PieceRecord", "verify_pieces", "numeric_solution"]


def verify_pieces(
    system: System,
    pieces: Sequence[PieceRecord],
    *,
    constants: Sequence[sp.Symbol] = (),
    eigenvalues: Sequence[sp.Expr] = (),
    numeric: bool = True,
    settings: Settings = DEFAULT_SETTINGS,
    exact: bool = True,
) -> Verification:
    """Residual on every interval, continuity (or the jump) at every switch, x(t0), numerics
    (``exact=False``: the numeric check alone, see ``verify_solution``).

    >>> t = sp.Symbol("t")
    >>> sys_ = System(A=sp.ImmutableMatrix([[-1]]), f=sp.ImmutableMatrix([1]), t=t, states=(sp.Symbol("x"),),
    ...               x0=sp.ImmutableMatrix([0]))
    >>> piece = PieceRecord(0, None, sp.ImmutableMatrix([1]), sp.ImmutableMatrix([1 - sp.exp(-t)]), sp.ImmutableMatrix([0]))
    >>> verify_pieces(sys_, [piece]).ok
    True
    """
    return verify_solution(
        system, pieces, constants=constants, eigenvalues=eigenvalues, numeric=numeric, settings=settings, exact=exact
    )
