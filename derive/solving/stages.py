"""The stage list: the one place where the stages of a solve are composed.

    System
      -> decompose   A = P J P^-1, exact (derive.spectral)
      -> shift       an IVP at t0 != 0 in tau = t - t0 (derive.solving.shift)
      -> decouple    g = P^-1 f                              \
      -> integrate   each scalar y_i' = lam_i y_i + g_i       > by the forcing method
      -> recombine   x = P y, real form, constants from x0   /  (derive.solving.methods)
      -> shift back  the result in t: input modes in t, free response in t - t0
      -> verify      residual, initial values, numeric run
      -> assemble    regime roots restored, steps, conditions -> Solution

Each stage returns its result with the steps it took; the steps are
concatenated in derivation order.  The forcing method is the first in
``derive.solving.methods.METHODS`` that accepts the forcing: closed form for
exponential polynomials, switched for steps, pulses, ramps and impulses,
convolution for anything else.
"""

from __future__ import annotations

from typing import Any, Callable, Mapping, Sequence

import sympy as sp

from ..errors import CaseFileError, InputError, VerificationError
from ..modal import form_steps
from ..model import Case, Condition, Solution, System
from ..options import OutputSpec, SolveOptions
from ..outputs import attach_outputs, outputs_from_mapping
from ..relations import apply_relations, parse_relations, split_assumptions
from ..relations import check_regimes
from ..relations import regimes as regime_notes
from ..settings import DEFAULT_SETTINGS, Settings
from ..eigenvalues import COMPLEX_DATA_NOTICE
from ..spectral import decompose
from ..steps import EquationsStep, Step
from ..substitution import regime_verdicts, substitute_values, with_values_step
from .assembly import assemble
from .methods import Problem, choose_method
from .shift import shift_back, time_shift
from .methods.base import case_names, is_real_data
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
    if not is_real_data(system):
        notices.append(COMPLEX_DATA_NOTICE)
    if not regimes:
        notices.extend(regime_notes(dec.steps[0].factors, dec.lam, values))
    problem = Problem.of(system, dec, settings=settings, taken=case_names(case))
    # an initial value problem at t0 != 0 is solved in tau = t - t0 from 0 (it then costs what t0 = 0 costs)
    shift = time_shift(system)
    # decouple, integrate, recombine: by the first method that accepts the forcing
    if shift is None:
        pieces = choose_method(problem).solve(problem)
    else:
        shifted = Problem.of(shift.shifted, dec, settings=settings, taken=case_names(case), numbers=shift.stand_ins)
        pieces = shift_back(choose_method(shifted).solve(shifted), shift, dec.column_eigenvalues)
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
    substitute: bool = False,
    outputs: Mapping[str, Any] | None = None,
) -> Solution:
    """Solve x' = A x + f(t) exactly, with every step recorded and verified.

    >>> sol = solve([[0, 1], [-2, -3]], x0=[1, 0])
    >>> sol.eigenvalues
    (-2, -1)

    ``params`` maps parameters (Symbols or names) to numeric values used only
    in the numeric check, or lists them; with ``substitute`` the values are
    put into the algebra before the decomposition instead (every parameter
    then needs one).  ``assume`` gives parameter relations
    to solve on, e.g. ``["c^2 = 4*k*m"]`` or ``{k: c**2/(4*m)}`` (the critically
    damped case of a spring-mass-damper).  ``outputs`` maps output names to
    linear combinations of the states, e.g. ``{"s": "k*(x_1 - x_2)"}``:
    ``Solution.outputs`` then holds y = C x + D u.  Raises
    ``VerificationError`` if the result does not verify; call
    ``solve_system`` for the unchecked record.
    """
    system, notices = build_system(A, f, t=t, x0=x0, t0=t0, params=params)
    spec = None
    if outputs is not None:
        spec = outputs_from_mapping(
            outputs, states=system.states, params={p.name: p.symbol for p in system.params}, t=system.t
        )
    return _solve_on(
        system, assume, notices=notices, settings=settings, substitute=substitute, outputs=spec,
        missing=lambda p: InputError(
            f"the parameter {p.name} has no value; substitute=True puts every parameter's value into the algebra",
            key=f"params[{p.name}]",
            hint=f"give it in params, e.g. params={{'{p.name}': 2}}, or solve symbolically (substitute=False)",
        ),
    )


def solve_case(
    case: Case,
    *,
    assume: Any = None,
    settings: Settings = DEFAULT_SETTINGS,
    substitute: bool | None = None,
    outputs: Mapping[str, Any] | None = None,
) -> Solution:
    """Solve a loaded case file; the Solution carries the case for rendering.

    ``substitute`` (None: as the case file's ``[solve] values`` says) puts
    the parameter values into the algebra; ``outputs`` (names to
    expressions) are used instead of the case file's ``[outputs]``.
    """
    options = case.options or SolveOptions()
    spec = options.outputs
    if outputs is not None:
        s = case.system
        spec = outputs_from_mapping(
            outputs, states=s.states, params={p.name: p.symbol for p in s.params}, inputs=options.inputs, t=s.t,
            file=case.source,
        )
    chosen = options.substitute if substitute is None else bool(substitute)

    def missing(p: sp.Symbol) -> InputError:
        how = "substitution (--substitute)" if substitute else '[solve] values = "substitute"'
        return CaseFileError(
            f"the parameter {p.name} has no value; {how} puts every parameter's value into the algebra",
            file=case.source, key=f"parameters.{p.name}.value",
            hint=f"give [parameters.{p.name}] a value, or solve symbolically",
        )

    return _solve_on(
        case.system, assume, notices=tuple(case.notices), case=case, settings=settings, substitute=chosen,
        outputs=spec, missing=missing,
    )


def _solve_on(
    system: System,
    assume: Any,
    *,
    notices: Sequence[str] = (),
    case: Case | None = None,
    settings: Settings,
    substitute: bool = False,
    outputs: OutputSpec | None = None,
    missing: Callable[[sp.Symbol], InputError] | None = None,
) -> Solution:
    conds: tuple[Condition, ...] = ()
    notes: tuple[str, ...] = ()
    regimes: tuple = ()
    if assume:
        names = {p.name: p.symbol for p in system.params}
        assume, regimes = split_assumptions(assume, symbols=names, key="assume")
        rel = parse_relations(assume, symbols=names, key="assume")
        system, conds, notes = apply_relations(system, rel)
        if outputs is not None:
            outputs = outputs.xreplace(dict(rel))
    values_step = None
    if substitute:
        values = system.parameter_values()
        extra = () if outputs is None else (outputs.C, outputs.D, *(f for _, f in outputs.inputs))
        system, values_step = substitute_values(
            system, missing=missing or (lambda p: InputError(f"the parameter {p.name} has no value", key="params")), extra=extra
        )
        notes += regime_verdicts(regimes, values)
        regimes = ()
        if outputs is not None:
            outputs = outputs.xreplace(values)

    def finish(sol: Solution) -> Solution:
        if values_step is not None:
            sol = with_values_step(sol, values_step)
        if outputs is not None:
            sol = attach_outputs(sol, outputs)
        return sol

    try:
        sol = solve_system(
            system,
            case=case,
            regimes=regimes,
            conditions=conds,
            notices=tuple(notices) + tuple(notes),
            settings=settings,
        )
    except VerificationError as err:
        if err.solution is not None:
            err.solution = finish(err.solution)
        raise
    sol = finish(sol)
    if sol.outputs is not None and not sol.outputs.verified:
        raise VerificationError(
            "the outputs y = C x + D u failed verification; they are not reported as a result", solution=sol
        )
    return sol
