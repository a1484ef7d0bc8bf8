"""Step blocks for time measured from t0 (the shift tau = t - t0).

Registered in ``derive.documents.sheet_steps.STEP_BLOCKS``; the functions take
the step and the sheet's ``StepContext`` (typed loosely here: this module is
imported by sheet_steps, not the other way round).
"""

from __future__ import annotations

from typing import Any, Callable

import sympy as sp

from ..render.printing import format_decimal
from .blocks import Block, Eq, Heading, N, Name, P

__all__ = ["shift_blocks", "with_decimals"]

Handler = Callable[[Any, Any], list[Block]]


def _decimals(name: str, plain: str, vec: Any, c: Any) -> list[Block]:
    """``name`` ~ (d_1, ..., d_n) in decimals, when every entry is a number (else nothing)."""
    if vec is None or not all(isinstance(e, sp.Basic) and e.is_number for e in vec):
        return []
    digits = c.fmt.style.digits
    values = [format_decimal(e, digits=digits) for e in vec]
    if not all(values):
        return []
    return [P("In decimals, ", N(rf"{name} \approx ({', '.join(values)})", f"{plain} ~ ({', '.join(values)})"), ".",
              runs_on=True)]


def with_decimals(handler: Handler) -> Handler:
    """A block function for interval and jump steps that adds the handed-over state in decimals.

    The exact state handed across a switch is what a checker compares; the
    decimals beside it are what an engineer reads.
    """

    def blocks(s: Any, c: Any) -> list[Block]:
        out = handler(s, c)
        f = c.fmt
        if s.kind == "interval" and s.x_end is not None:
            end, endp = f.m(s.end), f.plain(s.end)
            out += _decimals(f"x({end})", f"x({endp})", s.x_end, c)
        elif s.kind == "jump":
            a, ap = f.m(s.at), f.plain(s.at)
            out += _decimals(f"x({a}^{{+}})", f"x({ap}+)", s.after, c)
        return out

    return blocks


def shift_blocks(s: Any, c: Any) -> list[Block]:
    """The shift tau = t - t0: forcing in tau, initial values at tau = 0."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    U, Up = f.m(s.tau), f.plain(s.tau)
    a, ap = f.m(s.t0), f.plain(s.t0)
    return [
        Heading(3, "Time measured from ", N(f"{T}_0 = {a}", f"{Tp}0 = {ap}"), "time measured from t0"),
        P("The initial values are given at ", N(f"{T} = {a}", f"{Tp} = {ap}"), ". Time is measured from there, ",
          N(f"{U} = {T} - {a}", f"{Up} = {Tp} - {ap}"), ", so the problem starts at ", N(f"{U} = 0", f"{Up} = 0"),
          " with the same matrix A:"),
        P(N(rf"\frac{{dx}}{{d{U}}} = A\,x + f({U} + {a})", f"dx/d{Up} = A x + f({Up} + {ap})"), ","),
        Eq(((Name(f"x({U} = 0)", f"x({Up} = 0)"), s.x0),)),
        P("where the forcing, read at ", N(f"{T} = {U} + {a}", f"{Tp} = {Up} + {ap}"),
          " (exponentials and sines split by the addition formulas), is"),
        Eq(((Name(f"f({U} + {a})", f"f({Up} + {ap})"), s.f_shifted),)),
        P("The derivation below is carried out in ", N(U, Up), "; the result is written back in ", N(T, Tp),
          " with ", N(f"{U} = {T} - {a}", f"{Up} = {Tp} - {ap}"),
          " (the input's own modes in ", N(T, Tp), ", the free response in ", N(f"{T} - {a}", f"{Tp} - {ap}"),
          ") and is verified against the system as given, from ", N(f"x({a}) = x_0", f"x({ap}) = x0"), "."),
    ]
