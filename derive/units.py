"""Units: every term of every equation checked for dimensional consistency (with pint).

A case opts in with a ``[units]`` table giving each state's unit (and, if it
likes, each input's); the parameters' ``unit`` keys are then read as units,
and ``[system] time_unit`` (default seconds) is the unit of t.  Row i of
x' = A x + f must have the unit of x_i per unit of time in every term: each
``A[i, j] x_j`` and each term of ``f_i``.  A state ``y'`` made by the
reduction to first order has the unit of ``y`` per unit of time.  Only
dimensions are compared (kW against W/K*K agrees); function arguments such as
the ``t/24`` in ``sin(2*pi*t/24)`` are numbers in the unit of time.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from typing import Any

import pint
import sympy as sp

from .errors import CaseFileError
from .model import Parameter
from .valuetext import show, type_name

__all__ = ["UnitError", "REGISTRY", "parse_unit", "check_units", "term_unit"]

#: One registry for the program: quantities from different registries cannot be compared.
#: Offset units (degC, degF) become their base unit in products, so a state in degC per
#: minute has a dimension instead of pint's "ambiguous operation" (only dimensions are compared).
REGISTRY: pint.UnitRegistry = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


class UnitError(CaseFileError):
    """A unit that cannot be read, or an equation whose terms disagree in their units."""


def parse_unit(text: object, *, key: str, file: str | None = None) -> Any:
    """A unit string -> a pint Quantity of magnitude 1; refused with the key when pint cannot read it.

    >>> parse_unit("kW/K", key="k").dimensionality == parse_unit("W/degC", key="k").dimensionality
    True
    """
    if not isinstance(text, str):
        raise UnitError(f"{key} is {type_name(text)} ({show(text)}); expected a unit such as \"kW\"", file=file, key=key)
    if text.strip() in ("", "1", "-"):
        return REGISTRY.Quantity(1)
    try:
        return REGISTRY.Quantity(1, text)
    except Exception as err:  # noqa: BLE001 - pint raises several unrelated types for bad text
        raise UnitError(
            f"{key} = {text!r} is not a unit that can be read ({type(err).__name__})",
            file=file,
            key=key,
            hint="write units such as kW, W/K, m/s^2, h or degC; \"1\" for a pure number",
        ) from None


def _show(q: Any) -> str:
    text = format(q.units, "~")
    return text if text else "1 (no unit)"


def term_unit(expr: sp.Expr, units: Mapping[sp.Symbol, Any]) -> Any:
    """The unit of a product-like term; sums inside must agree.

    >>> k, T = sp.symbols("k T")
    >>> _show(term_unit(k*T, {k: parse_unit("W/K", key="k"), T: parse_unit("K", key="T")}))
    'W'
    """
    if expr.is_Number or expr.is_NumberSymbol:
        return REGISTRY.Quantity(1)
    if isinstance(expr, sp.Symbol):
        return units.get(expr, REGISTRY.Quantity(1))
    if isinstance(expr, sp.Mul):
        out = REGISTRY.Quantity(1)
        for a in expr.args:
            out = out * term_unit(a, units)
        return out
    if isinstance(expr, sp.Pow) and expr.exp.is_Rational:
        base = term_unit(expr.base, units)
        e = expr.exp
        return base ** (int(e) if e.is_Integer else float(e))
    if isinstance(expr, sp.Add):
        parts = [term_unit(a, units) for a in expr.args]
        for p in parts[1:]:
            if p.dimensionality != parts[0].dimensionality:
                raise _Mismatch(expr, parts[0], p)
        return parts[0]
    if isinstance(expr, sp.Piecewise):
        return term_unit(expr.args[0].expr, units)
    # Functions of time (exp, sin, step, ...): a pure number.
    return REGISTRY.Quantity(1)


class _Mismatch(Exception):
    def __init__(self, expr: sp.Expr, first: Any, second: Any) -> None:
        super().__init__(str(expr))
        self.expr, self.first, self.second = expr, first, second


def _unit_table(
    raw: object, *, states: Sequence[sp.Symbol], inputs: Sequence[sp.Symbol], file: str | None
) -> dict[str, Any]:
    if not isinstance(raw, dict):
        raise UnitError(f"units is {type_name(raw)} ({show(raw)}); expected a table such as T1 = \"K\"", file=file, key="units")
    bases = list(dict.fromkeys(s.name.rstrip("'") for s in states))
    allowed = bases + [s.name for s in states if s.name not in bases] + [u.name for u in inputs]
    out = {}
    for name, text in raw.items():
        if name not in allowed:
            raise UnitError(
                f"{name!r} in [units] is not a state or an input; expected one of: {', '.join(allowed)}",
                file=file,
                key=f"units.{name}",
            )
        out[name] = parse_unit(text, key=f"units.{name}", file=file)
    missing = [b for b in bases if b not in out]
    if missing:
        raise UnitError(
            f"[units] gives no unit for the state {missing[0]!r}; expected one for every state ({', '.join(bases)})",
            file=file,
            key="units",
        )
    return out


def _state_unit(name: str, table: Mapping[str, Any], time: Any) -> Any:
    if name in table:
        return table[name]
    base = name.rstrip("'")
    return table[base] / time ** (len(name) - len(base))


def _row_key(state: sp.Symbol, form: str, equations: Sequence[str]) -> str:
    base = state.name.rstrip("'")
    for i, line in enumerate(equations):
        left = line.split("=")[0]
        if re.search(rf"(?<![A-Za-z0-9_]){re.escape(base)}(?![A-Za-z0-9_])", left):
            return f"system.equations[{i}]"
    return f"system.{form}"


def check_units(
    raw_units: object,
    time_unit: object,
    *,
    states: Sequence[sp.Symbol],
    params: Sequence[Parameter],
    inputs: Sequence[sp.Symbol],
    A: sp.MatrixBase,
    f: sp.MatrixBase,
    form: str,
    equations: Sequence[str] = (),
    file: str | None = None,
) -> tuple[str, ...]:
    """Check every term of x' = A x + f against the unit of x_i per unit of time; returns notices."""
    time = parse_unit(time_unit, key="system.time_unit", file=file)
    if time.dimensionality != REGISTRY.Quantity(1, "s").dimensionality:
        raise UnitError(f"system.time_unit = {time_unit!r} is not a unit of time", file=file, key="system.time_unit")
    table = _unit_table(raw_units, states=states, inputs=inputs, file=file)
    units: dict[sp.Symbol, Any] = {p.symbol: parse_unit(p.unit, key=f"parameters.{p.name}.unit", file=file) for p in params}
    units.update({u: table[u.name] for u in inputs if u.name in table})
    units.update({s: _state_unit(s.name, table, time) for s in states})
    for i, x in enumerate(states):
        want = units[x] / time
        key = _row_key(x, form, equations)
        terms = [A[i, j] * s for j, s in enumerate(states) if A[i, j] != 0]
        terms += list(sp.Add.make_args(sp.expand(f[i]))) if f[i] != 0 else []
        for term in terms:
            try:
                got = term_unit(term, units)
            except _Mismatch as bad:
                raise UnitError(
                    f"in the equation of {x.name}', the sum {bad.expr} adds {_show(bad.first)} to {_show(bad.second)}",
                    file=file,
                    key=key,
                ) from None
            if got.dimensionality != want.dimensionality:
                raise UnitError(
                    f"in the equation of {x.name}', the term {term} has the unit {_show(got)}, "
                    f"but {x.name}' has the unit {_show(want)}",
                    file=file,
                    key=key,
                    hint="check the units of the parameters in this term, or the term itself",
                )
    return (f"units: every term of every equation checked for dimensional consistency (time in {_show(time)})",)
