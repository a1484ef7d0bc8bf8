"""Values into the algebra, on request: the declared parameter values put into A, f, x0 before the decomposition.

The symbolic route is the default: parameters stay symbols and their values
serve the checks.  With substitution (``[solve] values = "substitute"``,
``--substitute``, ``substitute=True``) every parameter the system uses must
have a value; the values are exact, so the derivation is exact and numeric.
Relations are applied before (they tie parameters together, the values then
fix the rest); a regime is decided by the values and only said in a notice.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any, Callable, Sequence

import sympy as sp

from .errors import InputError
from .model import Solution, System
from .steps import EquationsStep, ValuesStep

__all__ = ["used_parameters", "substitute_values", "regime_verdicts", "with_values_step"]


def used_parameters(system: System, extra: Sequence[Any] = ()) -> tuple[sp.Symbol, ...]:
    """The declared parameters that A, f, x0, t0 (and ``extra`` expressions) contain, in declaration order."""
    found: set[sp.Basic] = set(system.A.free_symbols) | set(system.f.free_symbols) | set(sp.sympify(system.t0, strict=True).free_symbols)
    if system.x0 is not None:
        found |= system.x0.free_symbols
    for e in extra:
        found |= e.free_symbols
    return tuple(p.symbol for p in system.params if p.symbol in found)


def substitute_values(
    system: System,
    *,
    missing: Callable[[sp.Symbol], InputError],
    extra: Sequence[Any] = (),
) -> tuple[System, ValuesStep]:
    """``system`` with every parameter value put in, and the step that shows it.

    ``missing(symbol)`` builds the error for a used parameter without a value
    (it names the key where the value belongs).

    >>> k = sp.Symbol("k", positive=True)
    >>> from derive.model import Parameter
    >>> s = System(A=sp.ImmutableMatrix([[-k]]), f=sp.ImmutableMatrix([0]), t=sp.Symbol("t"),
    ...            states=(sp.Symbol("x"),), params=(Parameter(k, sp.Integer(3)),))
    >>> substitute_values(s, missing=lambda p: InputError(p.name))[0].A
    Matrix([[-3]])
    """
    values = system.parameter_values()
    for p in used_parameters(system, extra):
        if p not in values:
            raise missing(p)
    new = replace(
        system,
        A=sp.ImmutableMatrix(system.A.xreplace(values)),
        f=sp.ImmutableMatrix(system.f.xreplace(values)),
        x0=None if system.x0 is None else sp.ImmutableMatrix(system.x0.xreplace(values)),
        t0=sp.sympify(system.t0, strict=True).xreplace(values),
        substituted=True,
    )
    used = used_parameters(system, extra)
    step = ValuesStep(
        t=system.t,
        values=tuple((p, values[p]) for p in used),
        A_symbolic=system.A,
        f_symbolic=system.f,
        x0_symbolic=system.x0,
        A=new.A,
        f=new.f,
        x0=new.x0,
    )
    return new, step


def regime_verdicts(regimes: Sequence[tuple[sp.Expr, int]], values: dict[sp.Symbol, sp.Expr]) -> tuple[str, ...]:
    """One notice per regime: with the values in the algebra the regime is moot, and the values decide it.

    >>> c, k = sp.symbols("c k", positive=True)
    >>> regime_verdicts([(c**2 - 4*k, -1)], {c: sp.Integer(1), k: sp.Integer(1)})[0][:44]
    'the regime c^2 - 4*k < 0 is decided by the v'
    """
    out = []
    for expr, sign in regimes:
        written = f"{_said(expr)} {'<' if sign < 0 else '>'} 0"
        value = expr.xreplace(values)
        if value.free_symbols:
            out.append(f"the regime {written} is not used: with the values in the algebra the eigenvalues are numbers")
            continue
        negative = bool(value < 0)
        side = "the values lie on its boundary" if value == 0 else "it holds" if negative == (sign < 0) else "it does not hold"
        out.append(
            f"the regime {written} is decided by the values put into the algebra ({_said(expr)} = {_said(value)}): "
            f"{side}, and the derivation follows the values"
        )
    return tuple(out)


def _said(e: Any) -> str:
    return sp.sstr(e).replace("**", "^")


def with_values_step(solution: Solution, step: ValuesStep) -> Solution:
    """The Solution with ``step`` shown where the values go in: after the equations, before the decomposition.

    The equations step shows A and f as read off the equations, with the
    parameters, as the user wrote them.
    """
    steps = list(solution.steps)
    at = 0
    if steps and isinstance(steps[0], EquationsStep):
        steps[0] = replace(steps[0], A=step.A_symbolic, f=step.f_symbolic)
        at = 1
    steps.insert(at, step)
    return replace(solution, steps=tuple(steps))
