"""The functions an expression may call, and what their arguments must satisfy.

The parser (:mod:`derive.parsing`) calls only the names listed in
:data:`FUNCTIONS`.  The switching helpers (step, ramp, pulse, impulse) have
arguments that can be well-formed and still mean nothing the user intended: a
pulse whose end comes before its start is a negative pulse, an impulse whose
argument does not move with time is no impulse at all.  Each helper's
``check`` names the argument at fault so the parser can point at it; it
decides with the parameters' assumptions and says so when they do not decide.
"""

from __future__ import annotations

import keyword
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from types import MappingProxyType

import sympy as sp

__all__ = ["ArgumentProblem", "FunctionSpec", "FUNCTIONS", "CONSTANTS", "RESERVED_NAMES"]


@dataclass(frozen=True)
class ArgumentProblem:
    """Why argument ``index`` (0-based) of a call cannot be used, and what to write."""

    index: int
    message: str
    hint: str


Check = Callable[[Sequence[sp.Expr], "sp.Symbol | None"], "ArgumentProblem | None"]


def _no_check(args: Sequence[sp.Expr], t: sp.Symbol | None) -> ArgumentProblem | None:
    return None


@dataclass(frozen=True)
class FunctionSpec:
    """One callable name: accepted argument counts, builder, a usage line and an argument check."""

    arities: tuple[int, ...]
    build: Callable[..., sp.Expr]
    usage: str
    check: Check = _no_check


def _step(x: sp.Expr, a: sp.Expr | None = None) -> sp.Expr:
    return sp.Heaviside(x if a is None else x - a)


def _ramp(x: sp.Expr, a: sp.Expr | None = None) -> sp.Expr:
    arg = x if a is None else x - a
    return arg * sp.Heaviside(arg)


def _impulse(x: sp.Expr, a: sp.Expr | None = None) -> sp.Expr:
    return sp.DiracDelta(x if a is None else x - a)


def _pulse(x: sp.Expr, a: sp.Expr, b: sp.Expr) -> sp.Expr:
    return sp.Heaviside(x - a) - sp.Heaviside(x - b)


def _switch_time(name: str) -> Check:
    """step, ramp: the switching argument must move with time."""

    def check(args: Sequence[sp.Expr], t: sp.Symbol | None) -> ArgumentProblem | None:
        switch = args[0] if len(args) == 1 else args[0] - args[1]
        if t is None or t in switch.free_symbols:
            return None
        shown = ", ".join(sp.sstr(a) for a in args)
        return ArgumentProblem(
            0,
            f"{name}({shown}) does not depend on {t}"
            + (f" (it switches on the sign of {sp.sstr(switch)})" if len(args) == 2 else "")
            + ": it is a constant, not a switch at some time",
            f"write {name}({t} - a) for a switch at {t} = a",
        )

    return check


def _check_impulse(args: Sequence[sp.Expr], t: sp.Symbol | None) -> ArgumentProblem | None:
    arg = args[0] if len(args) == 1 else args[0] - args[1]
    scale = sp.diff(arg, t) if t is not None else (sp.Integer(0) if not arg.free_symbols else None)
    if scale is None or not (scale == 0 or scale.is_zero):
        return None
    shown = ", ".join(sp.sstr(a) for a in args)
    return ArgumentProblem(
        0,
        f"impulse({shown}) has a zero time scale: its argument does not change with time, "
        "so it is not an impulse at any instant",
        "write impulse(t - a) for a unit impulse at t = a (c*impulse(t - a) for strength c)",
    )


def _check_pulse(args: Sequence[sp.Expr], t: sp.Symbol | None) -> ArgumentProblem | None:
    x, start, end = args
    if t is not None and not any(t in a.free_symbols for a in args):
        return ArgumentProblem(
            0,
            f"the first argument {sp.sstr(x)} of pulse does not depend on {t}",
            f"write pulse({t}, a, b) for 1 on a <= {t} < b",
        )
    width = sp.simplify(end - start) if (end - start).free_symbols else end - start
    a, b = sp.sstr(start), sp.sstr(end)
    usage = f"write pulse({sp.sstr(x)}, a, b) with the start a before the end b"
    if width == 0 or width.is_zero:
        return ArgumentProblem(2, f"the pulse ends where it starts ({b} = {a}): it is zero everywhere", usage)
    if width.is_positive:
        return None
    if width.is_nonpositive:
        return ArgumentProblem(
            2,
            f"the end {b} of the pulse comes before its start {a}; read as written it would be a "
            "negative pulse",
            f"write pulse({sp.sstr(x)}, {b}, {a}) (and -pulse(...) if a negative pulse is meant)",
        )
    return ArgumentProblem(
        2,
        f"whether the end {b} of the pulse comes after its start {a} cannot be decided from the "
        "parameters' assumptions; the other order would be a negative pulse",
        f"write the end as the start plus a width declared positive, e.g. pulse({sp.sstr(x)}, {a}, {a} + w) "
        "with [parameters.w] assume = [\"positive\"], or write step(t - a) - step(t - b) for a signed difference",
    )


#: The only names that may be called.  ``step`` is sympy's ``Heaviside`` with
#: its default H(0) = 1/2: the value at a single instant does not change the
#: solution of x' = A x + f, and the default form is the one sympy's
#: integrator handles best.
FUNCTIONS: Mapping[str, FunctionSpec] = MappingProxyType(
    {
        "exp": FunctionSpec((1,), sp.exp, "exp(x)"),
        "sin": FunctionSpec((1,), sp.sin, "sin(x)"),
        "cos": FunctionSpec((1,), sp.cos, "cos(x)"),
        "tan": FunctionSpec((1,), sp.tan, "tan(x)"),
        "sinh": FunctionSpec((1,), sp.sinh, "sinh(x)"),
        "cosh": FunctionSpec((1,), sp.cosh, "cosh(x)"),
        "tanh": FunctionSpec((1,), sp.tanh, "tanh(x)"),
        "sqrt": FunctionSpec((1,), sp.sqrt, "sqrt(x)"),
        "log": FunctionSpec((1,), sp.log, "log(x) (natural logarithm)"),
        "ln": FunctionSpec((1,), sp.log, "ln(x) (natural logarithm)"),
        "abs": FunctionSpec((1,), sp.Abs, "abs(x)"),
        "step": FunctionSpec((1, 2), _step, "step(t - a) or step(t, a)", _switch_time("step")),
        "ramp": FunctionSpec((1, 2), _ramp, "ramp(t - a) or ramp(t, a)", _switch_time("ramp")),
        "pulse": FunctionSpec((3,), _pulse, "pulse(t, a, b) (1 on a <= t < b)", _check_pulse),
        "impulse": FunctionSpec((1, 2), _impulse, "impulse(t - a) or impulse(t, a)", _check_impulse),
        "delta": FunctionSpec((1, 2), _impulse, "delta(t - a) or delta(t, a)", _check_impulse),
    }
)

#: Constants available unless a declared symbol has the same name.
CONSTANTS: Mapping[str, sp.Expr] = MappingProxyType({"pi": sp.pi, "e": sp.E})

#: Names a state, parameter or independent variable may not take: they would
#: shadow a function or constant, or cannot be written in an expression.
RESERVED_NAMES: frozenset[str] = frozenset(FUNCTIONS) | frozenset(CONSTANTS) | frozenset(keyword.kwlist)
