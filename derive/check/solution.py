"""The solution items of a claim check: x' = A x + f, independent constants, x(t0) = x0.

A general solution passes when it satisfies the ODE for every value of its
constants and d x / d c is nonsingular; an initial value solution also by
x(t0) = x0.  ``derive.solve`` is called only to state the right value of a
failed item, never to decide pass or fail.
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from dataclasses import dataclass
from types import MappingProxyType

import sympy as sp

from ..errors import TimeLimitError
from .items import (
    CheckItem, clean, clean_matrix, decide_entry, decide_matrix, is_zero, plain, short, small_integers,
)

__all__ = ["Problem", "RightSolution", "ode_item", "constants_item", "initial_item"]


@dataclass(frozen=True)
class Problem:
    """The system the solution items are checked against."""

    A: sp.ImmutableMatrix
    f: sp.ImmutableMatrix
    t: sp.Symbol
    x0: sp.ImmutableMatrix | None
    t0: sp.Expr


class RightSolution:
    """The pipeline's solutions, computed at most once per check and only to state a right value."""

    def __init__(self, problem: Problem) -> None:
        self.problem = problem

    def get(self, *, ivp: bool) -> sp.ImmutableMatrix | None:
        found = _right_solutions(self.problem)
        return None if found is None else found.get("ivp" if ivp else "general")


@functools.lru_cache(maxsize=16)
def _right_solutions(problem: Problem) -> Mapping[str, sp.ImmutableMatrix] | None:
    """derive.solve's general and IVP solutions, or None when it cannot give them."""
    from dataclasses import replace

    from ..pipeline import build_system, solve_system

    try:
        system, _ = build_system(problem.A, problem.f, t=problem.t, x0=problem.x0, t0=problem.t0)
        out = {"general": solve_system(replace(system, x0=None), check=True).x}
        if problem.x0 is not None:
            out["ivp"] = solve_system(system, check=True).x
        return MappingProxyType(out)
    except TimeLimitError:
        raise
    except Exception:  # noqa: BLE001 - only a hint: any failure means "no right value to show"
        return None


def _solution_residual(prob: Problem, x: sp.ImmutableMatrix) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([sp.expand(sp.diff(x[i], prob.t) - (prob.A * x)[i] - prob.f[i]) for i in range(x.rows)])


def ode_item(
    prob: Problem, x: sp.ImmutableMatrix, constants: tuple[sp.Symbol, ...], *, step: str, right: RightSolution
) -> CheckItem:
    """The item x' = A x + f (for every value of the constants)."""
    n = prob.A.shape[0]
    name = f"{step}: x' = A x + f"
    r = _solution_residual(prob, x)
    verdict = decide_matrix(list(r), prob.t)
    if verdict.zero:
        tail = " for all values of the constants" if constants else ""
        return CheckItem.vanished(name, step, f"x' - A x - f = 0{tail}", verdict=verdict, shape=(n, 1), claimed=x)
    shown = clean_matrix(r)
    hom = sp.ImmutableMatrix([sp.expand(sp.diff(x[i], prob.t) - (prob.A * x)[i]) for i in range(n)])
    zero_c = {c: 0 for c in constants}
    part_r = r.xreplace(zero_c).applyfunc(sp.expand)
    const_r = (r - part_r).applyfunc(sp.expand)
    if any(e != 0 for e in prob.f) and decide_matrix(list(hom), prob.t).zero:
        why = "x satisfies x' = A x but not x' = A x + f: the particular solution is missing"
    elif constants and not decide_matrix(list(const_r), prob.t).zero:
        why = (
            "the part with the constants does not satisfy x' = A x (check the exponents, e.g. the sign "
            "of the integrating factor, and the eigenvectors)"
        )
    elif constants:
        why = "the part without constants (the particular solution) does not satisfy x' = A x + f"
    else:
        why = (
            "x does not satisfy x' = A x + f (check the exponents, e.g. the sign of the integrating "
            "factor, and the particular solution)"
        )
    detail = f"x' - A x - f = {short(shown)} (should be 0): {why} ({verdict.describe()})"
    expected = right.get(ivp=(step == "IVP solution"))
    if expected is not None:
        detail += f"; the right value is x = {short(expected, 240)}"
    return CheckItem(
        name=name, step=step, ok=False, detail=detail, residual=shown, method=verdict.method,
        claimed=x, expected=expected,
    )


def constants_item(prob: Problem, x: sp.ImmutableMatrix, constants: tuple[sp.Symbol, ...]) -> CheckItem:
    """The item: the constants of a general solution are independent (det dx/dc != 0)."""
    n = prob.A.shape[0]
    name = "general solution: independent constants"
    names = ", ".join(c.name for c in constants) or "none"
    if len(constants) != n:
        detail = (
            f"x has {len(constants)} free constant{'s' if len(constants) != 1 else ''} ({names}); a general solution "
            f"of a system with {n} states has exactly {n} independent constants"
        )
        return CheckItem(name=name, step="general solution", ok=False, detail=detail, method="exact", claimed=x)
    Phi = x.jacobian(sp.Matrix(constants)).applyfunc(sp.expand)
    det = sp.expand(Phi.det(method="berkowitz"))
    verdict = decide_entry(det, prob.t)
    if not verdict.zero:
        return CheckItem(
            name=name,
            step="general solution",
            ok=True,
            detail=f"the fundamental matrix dx/dc for c = ({names}) has det = {short(clean(det), 100)}, "
            f"not identically zero ({verdict.describe()})",
            residual=det,
            method=verdict.short,
            claimed=x,
        )
    # Null vectors of dx/dc at t0 show which combination of constants is lost.
    detail = (
        f"det(dx/dc) = 0 for c = ({names}) ({verdict.describe()}): the constants are not independent, "
        f"so x cannot meet every initial condition"
    )
    try:
        null = sp.Matrix(Phi.xreplace({prob.t: prob.t0})).nullspace(iszerofunc=is_zero, simplify=True)
    except (ValueError, TypeError, NotImplementedError):  # pragma: no cover - sympy internals
        null = []
    if null:
        w = small_integers(sp.ImmutableMatrix(null[0]))
        detail += (
            f"; x does not change when ({names}) moves along the direction {short(w)}, "
            "as when two constants enter only as one sum or as multiples of each other"
        )
    return CheckItem(
        name=name, step="general solution", ok=False, detail=detail, residual=det, method=verdict.short, claimed=x
    )


def initial_item(prob: Problem, x: sp.ImmutableMatrix, right: RightSolution) -> CheckItem:
    """The item x(t0) = x0."""
    assert prob.x0 is not None
    n = prob.A.shape[0]
    at = x.xreplace({prob.t: prob.t0})
    r = (at - prob.x0).applyfunc(sp.expand)
    verdict = decide_matrix(list(r))
    name = "IVP solution: x(t0) = x0"
    if verdict.zero:
        return CheckItem.vanished(
            name, "IVP solution", f"x({plain(prob.t0)}) = {short(prob.x0)} = x0", verdict=verdict, shape=(n, 1), claimed=x
        )
    shown = clean_matrix(r)
    detail = (
        f"x({plain(prob.t0)}) - x0 = {short(shown)} (should be 0): x({plain(prob.t0)}) = {short(clean_matrix(at))} "
        f"but x0 = {short(prob.x0)}; check the constants found from the initial values ({verdict.describe()})"
    )
    expected = right.get(ivp=True)
    if expected is not None:
        detail += f"; the right value is x = {short(expected, 240)}"
    return CheckItem(
        name=name, step="IVP solution", ok=False, detail=detail, residual=shown, method=verdict.method,
        claimed=x, expected=expected,
    )
