"""Numbers of the engineering reading as sheet inlines: short decimals, exact forms where symbols remain."""

from __future__ import annotations

import math
from typing import Any

import sympy as sp

from ..render.decimals import format_decimal
from .blocks import Inline, Math, Name

__all__ = ["decimal_name", "quantity"]


def decimal_name(value: Any) -> Name:
    """A number as a short decimal (4 significant digits), in both spellings."""
    expr = sp.Float(value) if isinstance(value, float) else sp.sympify(value, strict=True)
    return Name(format_decimal(expr, digits=4, latex=True), format_decimal(expr, digits=4))


def quantity(value: Any) -> tuple[Inline, ...]:
    """A reading figure: a decimal when it is a number, the exact expression otherwise, -- when undefined."""
    if value is None:
        return ("--",)
    if isinstance(value, float):
        return (decimal_name(value),) if math.isfinite(value) else ("--",)
    expr = sp.sympify(value, strict=True)
    if expr.free_symbols:
        return (Math(expr),)
    return (decimal_name(expr),)
