"""Units in LaTeX with siunitx: one conversion from a pint-read unit to siunitx macros.

A unit the case file gives as text (``"kW"``, ``"W/(m*K)"``, ``"m/s^2"``) is
read by pint (:func:`derive.units.parse_unit`, the same reading the
dimensional check uses) and written as ``\\unit[per-mode=symbol]{...}``:
``kW`` becomes ``\\kilo\\watt`` and ``m/s^2`` becomes
``\\metre\\per\\second\\squared``, which siunitx sets as "kW" and "m/s²" with
the spacing and upright type of the SI brochure.  siunitx v3 (TeX Live 2022
carries 3.2) provides ``\\unit``; the per-mode is given with each unit, not
by ``\\sisetup``, so a host report that loads siunitx keeps its own settings.

Text that pint cannot read, or that holds a unit siunitx has no macro for
(``rpm``, ``kWh``), stays the user's text, escaped: the sheet never guesses
a spelling.  Markdown and plain text show the user's text unchanged.
"""

from __future__ import annotations

from typing import Any

from ..documents.blocks import Name
from ..units import REGISTRY, UnitError, parse_unit
from .escape import tex_escape

__all__ = ["SI_UNITS", "SI_PREFIXES", "UNIT_MACRO", "siunitx_unit", "unit_latex", "axis_label"]

#: How every siunitx unit starts on a page: a document holding it needs the package siunitx.
UNIT_MACRO = r"\unit[per-mode=symbol]{"

#: pint's unit names -> siunitx v3 unit macros (the units engineers write in this program's cases).
SI_UNITS: dict[str, str] = {
    "meter": r"\metre", "gram": r"\gram", "second": r"\second", "ampere": r"\ampere", "kelvin": r"\kelvin",
    "mole": r"\mole", "candela": r"\candela", "degree_Celsius": r"\degreeCelsius",
    # pint reads degC inside a compound unit (degC/kW) as a difference; on paper it is still degC
    "delta_degree_Celsius": r"\degreeCelsius", "watt": r"\watt",
    "joule": r"\joule", "newton": r"\newton", "pascal": r"\pascal", "volt": r"\volt", "ohm": r"\ohm",
    "farad": r"\farad", "henry": r"\henry", "coulomb": r"\coulomb", "siemens": r"\siemens", "weber": r"\weber",
    "tesla": r"\tesla", "hertz": r"\hertz", "radian": r"\radian", "steradian": r"\steradian", "degree": r"\degree",
    "minute": r"\minute", "hour": r"\hour", "day": r"\day", "liter": r"\litre", "metric_ton": r"\tonne",
    "bar": r"\bar", "percent": r"\percent", "decibel": r"\decibel", "electron_volt": r"\electronvolt", "hectare": r"\hectare",
}

#: pint's prefix names -> siunitx prefix macros.
SI_PREFIXES: dict[str, str] = {
    "": "", "yocto": r"\yocto", "zepto": r"\zepto", "atto": r"\atto", "femto": r"\femto", "pico": r"\pico",
    "nano": r"\nano", "micro": r"\micro", "milli": r"\milli", "centi": r"\centi", "deci": r"\deci",
    "deca": r"\deca", "hecto": r"\hecto", "kilo": r"\kilo", "mega": r"\mega", "giga": r"\giga",
    "tera": r"\tera", "peta": r"\peta", "exa": r"\exa", "zetta": r"\zetta", "yotta": r"\yotta",
}

_POWERS = {1: "", 2: r"\squared", 3: r"\cubed"}


def _power(exponent: Any) -> str:
    """siunitx's power after a unit: nothing, \\squared, \\cubed or \\tothe{n}."""
    e = abs(exponent)
    if e in _POWERS:
        return _POWERS[int(e)]
    text = f"{int(e)}" if float(e).is_integer() else f"{float(e):g}"
    return rf"\tothe{{{text}}}"


def _macro(name: str) -> str | None:
    """One pint unit name (``kilowatt``) as siunitx macros (``\\kilo\\watt``), None without a macro."""
    for prefix, unit, suffix in REGISTRY.parse_unit_name(name):
        if not suffix and unit in SI_UNITS and prefix in SI_PREFIXES:
            return SI_PREFIXES[prefix] + SI_UNITS[unit]
    return None


def siunitx_unit(text: str) -> str | None:
    """A unit as ``\\unit[per-mode=symbol]{...}`` from pint's reading of ``text``; None when it cannot be.

    None for text pint cannot read, a pure number, or a unit siunitx has no
    macro for; the caller then sets the text itself.

    >>> siunitx_unit("kW")
    '\\\\unit[per-mode=symbol]{\\\\kilo\\\\watt}'
    >>> siunitx_unit("m/s^2")
    '\\\\unit[per-mode=symbol]{\\\\metre\\\\per\\\\second\\\\squared}'
    >>> siunitx_unit("rpm") is None, siunitx_unit("two bananas") is None
    (True, True)
    """
    try:
        quantity = parse_unit(text, key="unit")
    except UnitError:
        return None
    # pint keeps the order the unit was written in; numerator first, then each \per
    parts = list(quantity.units._units.items())
    if not parts:
        return None
    out: list[str] = []
    for name, exponent in sorted(parts, key=lambda item: item[1] < 0):
        macro = _macro(name)
        if macro is None:
            return None
        out.append((r"\per" if exponent < 0 else "") + macro + _power(exponent))
    return UNIT_MACRO + "".join(out) + "}"


def unit_latex(text: str) -> str:
    """A unit for a LaTeX page (text mode): siunitx when pint and siunitx know it, else the escaped text.

    >>> unit_latex("ohm"), unit_latex("kWh/a")
    ('\\\\unit[per-mode=symbol]{\\\\ohm}', 'kWh/a')
    """
    return siunitx_unit(text) or tex_escape(text)


def axis_label(latex: str, plain: str, unit: str) -> Name:
    """A figure axis label, the quantity over its unit ("t / h", ISO 80000-1); the quantity alone without a unit.

    ``latex`` and ``plain`` are the program's spellings of the quantity; the
    unit is the user's text, set by siunitx or escaped (:func:`unit_latex`).

    >>> axis_label("t", "t", "h").plain, axis_label(r"\\omega", "omega", "rad/h").plain, axis_label("t", "t", "").plain
    ('t / h', 'omega / (rad/h)', 't')
    """
    if not unit.strip():
        return Name(latex, plain)
    tex = unit_latex(unit)
    compound = "/" in unit or " " in unit.strip() or "*" in unit
    if compound:
        return Name(rf"{latex} \;/\; (\text{{{tex}}})", f"{plain} / ({unit})")
    return Name(rf"{latex} \;/\; \text{{{tex}}}", f"{plain} / {unit}")
