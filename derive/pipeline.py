"""The public solving entry points, where they have always been importable.

The stages themselves are composed in ``derive.solving.stages`` (the stage
list); this module keeps ``derive.pipeline.solve`` and friends working.
"""

from __future__ import annotations

from .solving.stages import solve, solve_case, solve_system
from .solving.system import build_system

__all__ = ["solve", "solve_system", "solve_case", "build_system"]
