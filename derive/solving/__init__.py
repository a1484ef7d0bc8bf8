"""Solving x' = A x + f(t): the stage list, the forcing methods and the one assembly.

``stages.solve_system`` composes the stages in order; ``methods`` holds the
forcing methods behind one contract and a registry; ``assembly`` builds the
Solution from one piece or many; ``system`` turns API arguments into a System.
"""

from __future__ import annotations

from .stages import solve, solve_case, solve_system
from .system import build_system

__all__ = ["solve", "solve_case", "solve_system", "build_system"]
