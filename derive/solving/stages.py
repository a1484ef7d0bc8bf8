"""The stage list: the one place where the stages of a solve are composed.

    System
      -> decompose   A = P J P^-1, exact (derive.spectral)
      -> decouple    g = P^-1 f                              \
      -> integrate   each scalar y_i' = lam_i y_i + g_i       > by the forcing method
      -> recombine   x = P y, real form, constants from x0   /  (derive.solving.methods)
      -> verify      residual, initial values, numeric run
      -> assemble    regime roots restored, steps, conditions -> Solution

Each stage returns its result with the steps it took; the steps are
concatenated in derivation order.  The forcing method is the first in
``derive.solving.methods.METHODS`` that accepts the forcing: closed form for
exponential polynomials, switched for steps, pulses, ramps and impulses,
convolution for anything else.
"""

from __future__ import annotations

from typing import Any, Sequence

import sympy as sp

from ..modal import form_steps
from ..model import Case, Condition, Solution, System
from ..relations import apply_relations, parse_relations, split_assumptions
from ..relations import check_regimes
from ..relations import regimes as regime_notes
from ..settings import DEFAULT_SETTINGS, Settings
from ..spectral import decompose
from ..steps import EquationsStep, Step
from .assembly import assemble
from .methods import Problem, choose_method
from .system import build_system

__all__ = ["solve", "solve_case", "solve_system"]


def solve_system(
    system: System,
    *,
    case: Case | None = None,
    check: bool = True,
    regimes: Sequence[tuple[sp.Expr, int]] = (),
    conditions: Sequence[Condition] = (),
    notices: Sequence[str] = (),
    settings: Settings = DEFAULT_SETTINGS,
) -> Solution:
    """Run the whole pipeline on a System.

    With ``check`` (default) an unverified result raises VerificationError
    carrying the Solution.  ``regimes`` fix the signs of discriminants in the
    parameters; ``conditions`` and ``notices`` from the input (relations,
    parsing) lead the Solution's own.
    """
    steps: list[Step] = []
    if system.equations:
        steps.append(EquationsStep(equations=system.equations, states=system.states, t=system.t, A=system.A, f=system.f))
    steps.extend(form_steps(system))
    values = system.parameter_values()
    # decompose (a failed check P J P^-1 = A is reported by the verification, with the result)
    dec = decompose(system.A, values=values, regimes=regimes, settings=settings, strict=False)
    steps.extend(dec.steps)
    if regimes:
        # a regime that fixes no discriminant would be listed as solved here and then ignored
        check_regimes(dec.steps[0].factors, dec.lam, regimes)
    notices = list(notices)
    if not regimes:
        notices.extend(regime_notes(dec.steps[0].factors, dec.lam, values))
    problem = Problem.of(system, dec, settings=settings)
    # decouple, integrate, recombine: by the first method that accepts the forcing
    pieces = choose_method(problem).solve(problem)
    # verify and assemble
    return assemble(
        problem, pieces, steps=steps, regimes=regimes, conditions=conditions, notices=notices, case=case, check=check
    )


def solve(
    A: Any,
    f: Any = None,
    *,
    t: sp.Symbol | None = None,
    x0: Any = None,
    t0: Any = 0,
    params: Any = None,
    assume: Any = None,
    settings: Settings = DEFAULT_SETTINGS,
) -> Solution:
    """Solve x' = A x + f(t) exactly, with every step recorded and verified.

    >>> sol = solve([[0, 1], [-2, -3]], x0=[1, 0])
    >>> sol.eigenvalues
    (-2, -1)

    ``params`` maps parameters (Symbols or names) to numeric values used only
    in the numeric check, or lists them.  ``assume`` gives parameter relations
    to solve on, e.g. ``["c^2 = 4*k*m"]`` or ``{k: c**2/(4*m)}`` (the critically
    damped case of a spring-mass-damper).  Raises ``VerificationError`` if the
    result does not verify; call ``solve_system`` for the unchecked record.
    """
    system, notices = build_system(A, f, t=t, x0=x0, t0=t0, params=params)
    return _solve_on(system, assume, notices=notices, settings=settings)


def solve_case(case: Case, *, assume: Any = None, settings: Settings = DEFAULT_SETTINGS) -> Solution:
    """Solve a loaded case file; the Solution carries the case for rendering."""
    return _solve_on(case.system, assume, notices=tuple(case.notices), case=case, settings=settings)


def _solve_on(
    system: System, assume: Any, *, notices: Sequence[str] = (), case: Case | None = None, settings: Settings
) -> Solution:
    conds: tuple[Condition, ...] = ()
    notes: tuple[str, ...] = ()
    regimes: tuple = ()
    if assume:
        names = {p.name: p.symbol for p in system.params}
        assume, regimes = split_assumptions(assume, symbols=names, key="assume")
        rel = parse_relations(assume, symbols=names, key="assume")
        system, conds, notes = apply_relations(system, rel)
    return solve_system(
        system,
        case=case,
        regimes=regimes,
        conditions=conds,
        notices=tuple(notices) + tuple(notes),
        settings=settings,
    )
