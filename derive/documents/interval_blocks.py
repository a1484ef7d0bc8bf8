"""Step blocks for time measured from t0 (the shift tau = t - t0).

Registered in ``derive.documents.sheet_steps.STEP_BLOCKS``; the functions take
the step and the sheet's ``StepContext`` (typed loosely here: this module is
imported by sheet_steps, not the other way round).
"""

from __future__ import annotations

from typing import Any, Callable

import sympy as sp

from ..render.printing import format_decimal
from .blocks import Block, Eq, Heading, Math, N, Name, P
from .coefficients import NAMES_KEY, is_long_in_roots, named_coefficient, tidy_parts

__all__ = ["shift_blocks", "with_decimals", "interval_blocks", "jump_blocks", "handed"]

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


def _names_note(c: Any) -> list[Block]:
    """Once per sheet, where the names first stand for states and coefficients of the intervals: what they are."""
    names = c.cache.get(NAMES_KEY, {})
    if not names or c.cache.get("names_said"):
        return []
    c.cache["names_said"] = True
    return [P(Math(next(iter(names.values()))), " to ", Math(list(names.values())[-1]),
              " (and those named later) stand for coefficients too long in the indexed roots for a line; each is listed "
              "exactly, with its decimal, among the exact coefficients in the appendix.")]


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
        if s.kind == "interval":
            out += _names_note(c)
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


def _vector(name: str, plain: str, M: Any) -> Eq:
    return Eq(((Name(name, plain), M),))


def handed(c: Any, vec: Any) -> Any:
    """A vector of numbers (a state handed across a switch) with each entry long in indexed roots named
    kappa_n (listed exactly in the appendix), the short ones as they are; display only."""
    if not isinstance(vec, sp.MatrixBase):
        return vec
    naming, names = c.naming, c.cache.setdefault(NAMES_KEY, {})
    out = []
    for e in vec:
        held = naming.hold(e)
        if isinstance(held, sp.Expr) and is_long_in_roots(held, naming):
            parts = tidy_parts(held, naming)
            held = named_coefficient(sp.Mul(*parts, evaluate=False) if len(parts) > 1 else parts[0], names, naming)
        out.append(held)
    return sp.ImmutableMatrix(vec.rows, vec.cols, out)


def interval_blocks(s: Any, c: Any) -> list[Block]:
    """One interval between switches: its forcing, the state it starts from, its solution and the state it hands on."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    a, ap = f.m(s.start), f.plain(s.start)
    end, endp = (r"\infty", "infinity") if s.end is None else (f.m(s.end), f.plain(s.end))
    origin = "the initial state" if s.index == 1 else f"the state in which interval {s.index - 1} ends"
    Y, Yp = c.coord()
    how = (
        P("The forcing is an exponential polynomial here, so each decoupled equation is solved by its integrating factor "
          "with the integral taken from ", Math(s.start), " to ", N(T, Tp), ", which gives")
        if s.method == "closed form"
        else P("The forcing has no closed-form rule here; each decoupled equation is solved in convolution form (shown next), which gives")
    )
    out: list[Block] = [
        Heading(3, f"Interval {s.index}: ", N(rf"{a} \le {T} < {end}", f"{ap} <= {Tp} < {endp}"), f"interval {s.index}"),
        P("On this interval every step, pulse and piecewise branch of the input has a fixed value, so the forcing is"),
        _vector(f"f({T})", f"f({Tp})", s.f),
        P("and, decoupled with ", N("g = P^{-1} f", "g = P^-1 f"), ","),
        _vector(f"g({T})", f"g({Tp})", c.compact(s.g)),
        P(f"The interval starts from {origin} (with any jump at ", N(f"{T} = {a}", f"{Tp} = {ap}"), " applied):"),
        _vector(f"x({a})", f"x({ap})", handed(c, s.x_start)),
        P("so the decoupled equations start from ", N(rf"{Y}({a}) = P^{{-1}}\,x({a})", f"{Yp}({ap}) = P^-1 x({ap})"), ":"),
        _vector(f"{Y}({a})", f"{Yp}({ap})", handed(c, s.y_start)),
        how,
        _vector(f"{Y}({T})", f"{Yp}({Tp})", c.compact(s.y)),
        P("and, with ", N(rf"x = P\,{Y}", f"x = P {Yp}"), ", on this interval"),
        Eq(c.state_rows(s.x)),
    ]
    if s.x_end is not None:
        out += [
            P("At ", N(f"{T} = {end}", f"{Tp} = {endp}"), " the state, handed to the next interval, is"),
            _vector(f"x({end})", f"x({endp})", handed(c, s.x_end)),
        ]
    else:
        out.append(P("This interval has no end: the solution above holds for all later times."))
    return out


def jump_blocks(s: Any, c: Any) -> list[Block]:
    """An impulse at a switch: the state before and after the jump."""
    f = c.fmt
    T, Tp = f.m(s.t), f.plain(s.t)
    a, ap = f.m(s.at), f.plain(s.at)
    return [
        Heading(3, "Impulse at ", N(f"{T} = {a}", f"{Tp} = {ap}"), "the switch"),
        P("The forcing contains an impulse ", N(rf"b\,\delta({T} - {a})", f"b delta({Tp} - {ap})"), " with"),
        _vector("b", "b", s.weight),
        P("Integrating ", N(r"x' = A\,x + f", "x' = A x + f"), " over a vanishing interval around ", N(f"{T} = {a}", f"{Tp} = {ap}"),
          ", only the impulse contributes, so the state jumps by ", N("b"), ":"),
        _vector(f"x({a}^{{-}})", f"x({ap}-)", handed(c, s.before)),
        _vector(f"x({a}^{{+}}) = x({a}^{{-}}) + b", f"x({ap}+) = x({ap}-) + b", handed(c, s.after)),
    ]
