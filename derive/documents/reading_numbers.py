"""Numbers of the engineering reading as sheet inlines: short decimals, exact forms where symbols remain,
and the units the case declares beside them."""

from __future__ import annotations

import math
from typing import Any

import sympy as sp

from ..render.decimals import format_decimal
from ..model import System
from .blocks import Inline, Math, Name, Unit

__all__ = ["decimal_name", "quantity", "with_unit", "headed", "state_units", "per_time"]


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


def with_unit(parts: tuple[Inline, ...], unit: str) -> tuple[Inline, ...]:
    """A figure followed by its unit ("" or an undefined figure: the figure alone).

    >>> with_unit(("--",), "K"), with_unit(("2",), "")
    (('--',), ('2',))
    >>> with_unit(("2",), "K")
    ('2', ' ', Unit(text='K'))
    """
    if not unit or parts == ("--",):
        return parts
    return (*parts, " ", Unit(unit))


def headed(title: "str | tuple[Inline, ...]", unit: str) -> "str | tuple[Inline, ...]":
    """A column heading with its unit in brackets when the column has one.

    >>> headed("Peak time", ""), headed("Peak time", "h")
    ('Peak time', ('Peak time', ' (', Unit(text='h'), ')'))
    """
    if not unit:
        return title
    return (*((title,) if isinstance(title, str) else title), " (", Unit(unit), ")")


def per_time(unit: str, time_unit: str, order: int = 1) -> str:
    """``unit`` per ``time_unit`` to the power ``order``, as text pint reads ("" without a time unit).

    >>> per_time("m", "s"), per_time("kW/m^2", "h"), per_time("1", "h"), per_time("m", "s", 2)
    ('m/s', '(kW/m^2)/h', '1/h', 'm/s^2')
    """
    if not time_unit:
        return ""
    numerator = f"({unit})" if any(c in unit for c in "/* ") else unit
    time = f"({time_unit})" if any(c in time_unit for c in "/* ") else time_unit
    return f"{numerator}/{time}" + (f"^{order}" if order > 1 else "")


def state_units(system: System) -> dict[str, str]:
    """Each state's unit as text: the declared one, or a derivative's from its base state and the time unit.

    A state made by a reduction of order (``y'``) has the unit of ``y`` per
    unit of time, as the dimensional check (``derive.units``) reads it; a
    state with no unit to give is left out.
    """
    declared = dict(system.units)
    out: dict[str, str] = {}
    for state in system.states:
        name = state.name
        base = name.rstrip("'")
        if name in declared:
            out[name] = declared[name]
        elif base in declared and per_time(declared[base], system.time_unit):
            out[name] = per_time(declared[base], system.time_unit, len(name) - len(base))
    return out
