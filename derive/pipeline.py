"""solve(): the one place where the stages are composed.

    System -> decompose (spectral) -> decouple (g = P^-1 f) -> integrate
    (scalar, by integrating factor) -> recombine (x = P y, real form,
    constants) -> verify -> Solution

Each stage returns its result with the steps it took; the steps are
concatenated here, in derivation order.
"""

from __future__ import annotations

from dataclasses import replace
from fractions import Fraction
from typing import Any, Iterable, Mapping, Sequence

import sympy as sp

from .errors import InputError, VerificationError
from .exact import is_zero_number
from .expoly import NotExpPoly, to_expoly
from .model import Case, Condition, Parameter, Solution, System
from .recombine import conjugate_pairs, recombine, restore_roots
from .relations import apply_relations, parse_relations, split_assumptions
from .relations import regimes as regime_notes
from .scalar import decouple, solve_blocks
from .spectral import decompose
from .steady import steady_state_steps
from .steps import DecoupleStep, Deferred, EquationsStep, ResultStep, Step
from .verify import verify

__all__ = ["solve", "solve_system", "solve_case", "build_system"]


def _exact(value: Any, *, symbols: Mapping[str, sp.Symbol], key: str, notices: list[str]) -> sp.Expr:
    """A user value as an exact sympy object: numbers, strings (parsed safely), sympy."""
    if isinstance(value, bool):
        raise InputError(f"expected a number or an expression, found the boolean {value}", key=key)
    if isinstance(value, sp.Basic):
        floats = value.atoms(sp.Float)
        if floats:
            rep = {fl: sp.Rational(str(fl)) for fl in floats}
            notices.append(f"{key}: floating-point numbers read as exact rationals")
            value = value.xreplace(rep)
        return value
    if isinstance(value, int):
        return sp.Integer(value)
    if isinstance(value, float):
        r = sp.Rational(repr(value))
        notices.append(f"{key}: {value!r} read as the exact value {r}")
        return r
    if isinstance(value, str):
        from .parsing import parse_expression

        expr, notes = parse_expression(value, symbols=symbols, key=key)
        notices.extend(notes)
        return expr
    if isinstance(value, Fraction):
        return sp.Rational(value.numerator, value.denominator)
    raise InputError(f"expected a number or an expression, found {type(value).__name__}", key=key)


def _params(params: Any) -> tuple[tuple[Parameter, ...], dict[str, sp.Symbol]]:
    out: list[Parameter] = []
    if params is None:
        return (), {}
    if isinstance(params, Mapping):
        items: Iterable = params.items()
    else:
        items = [(p, None) if not isinstance(p, Parameter) else (p, p) for p in params]
    for k, v in items:
        if isinstance(v, Parameter):
            out.append(v)
            continue
        sym = k if isinstance(k, sp.Symbol) else sp.Symbol(str(k), real=True)
        val = None
        if v is not None:
            val = _exact(v, symbols={}, key=f"params[{sym.name}]", notices=[])
        out.append(Parameter(symbol=sym, value=val))
    return tuple(out), {p.name: p.symbol for p in out}


def build_system(
    A: Any,
    f: Any = None,
    *,
    t: sp.Symbol | None = None,
    x0: Any = None,
    t0: Any = 0,
    params: Any = None,
    states: Sequence[sp.Symbol] | None = None,
) -> tuple[System, tuple[str, ...]]:
    """Normalise API arguments into a System (exact objects only)."""
    notices: list[str] = []
    t = t if t is not None else sp.Symbol("t")
    if not isinstance(t, sp.Symbol):
        raise InputError(f"t must be a sympy Symbol, found {type(t).__name__}", key="t")
    plist, names = _params(params)
    names = dict(names)
    names.setdefault(t.name, t)
    if isinstance(A, sp.MatrixBase):
        rows = A.tolist()
    else:
        try:
            rows = [list(r) for r in A]
        except TypeError:
            raise InputError("A must be a square matrix: a sympy Matrix or a list of rows", key="A")
    n = len(rows)
    if n == 0 or any(len(r) != n for r in rows):
        shape = f"{n} rows of lengths {[len(r) for r in rows]}"
        raise InputError(f"A must be square, found {shape}", key="A")
    Am = sp.ImmutableMatrix(
        [[_exact(v, symbols=names, key=f"A[{i}][{j}]", notices=notices) for j, v in enumerate(r)] for i, r in enumerate(rows)]
    )
    if Am.has(t):
        raise InputError(f"A depends on {t}: this solver needs constant coefficients", key="A")
    if f is None:
        fm = sp.ImmutableMatrix(sp.zeros(n, 1))
    else:
        fl = list(f)
        if len(fl) != n:
            raise InputError(f"A is {n}x{n} but f has {len(fl)} entries", key="f")
        fm = sp.ImmutableMatrix([_exact(v, symbols=names, key=f"f[{i}]", notices=notices) for i, v in enumerate(fl)])
    x0m = None
    if x0 is not None:
        xl = list(x0)
        if len(xl) != n:
            raise InputError(f"A is {n}x{n} but x0 has {len(xl)} entries", key="x0")
        x0m = sp.ImmutableMatrix([_exact(v, symbols=names, key=f"x0[{i}]", notices=notices) for i, v in enumerate(xl)])
        if x0m.has(t):
            raise InputError(f"x0 depends on {t}: initial values must be constants", key="x0")
    t0e = _exact(t0, symbols=names, key="t0", notices=notices)
    if t0e.has(t) or not t0e.is_real and t0e.is_real is not None:
        raise InputError(f"t0 must be a real number, found {t0e}", key="t0")
    known = {p.symbol for p in plist}
    for s in (Am.free_symbols | fm.free_symbols | (x0m.free_symbols if x0m is not None else set())) - {t}:
        if s not in known:
            plist = plist + (Parameter(symbol=s),)
            known.add(s)
    if states is None:
        states = tuple(sp.Symbol(f"x_{i + 1}") for i in range(n))
    system = System(A=Am, f=fm, t=t, states=tuple(states), x0=x0m, t0=t0e, params=plist)
    return system, tuple(notices)


def solve(A, f=None, *, t=None, x0=None, t0=0, params=None, assume=None) -> Solution:
    """Solve x' = A x + f(t) exactly, with every step recorded and verified.

    >>> import sympy as sp
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
    return _solve_on(system, assume, notices=notices)


def solve_case(case: Case, *, assume=None) -> Solution:
    """Solve a loaded case file; the Solution carries the case for rendering."""
    return _solve_on(case.system, assume, notices=tuple(case.notices), case=case)


def _solve_on(system: System, assume, *, notices=(), case: Case | None = None) -> Solution:
    conds: tuple = ()
    notes: tuple[str, ...] = ()
    regimes: tuple = ()
    if assume:
        names = {p.name: p.symbol for p in system.params}
        assume, regimes = split_assumptions(assume, symbols=names, key="assume")
        rel = parse_relations(assume, symbols=names, key="assume")
        system, conds, notes = apply_relations(system, rel)
    try:
        sol = solve_system(system, case=case, regimes=regimes)
    except VerificationError as err:
        bad = getattr(err, "solution", None)
        if bad is not None:
            err.solution = replace(  # type: ignore[attr-defined]
                bad, conditions=conds + bad.conditions, notices=tuple(notices) + notes + bad.notices
            )
        raise
    return replace(sol, conditions=conds + sol.conditions, notices=tuple(notices) + notes + sol.notices)


def _constant_names(system: System) -> str:
    used = {s.name for s in system.A.free_symbols | system.f.free_symbols} | {s.name for s in system.states}
    used |= {p.name for p in system.params} | {system.t.name}
    n = system.n
    for base in ("c", "C", "K", "k"):
        if not any(f"{base}_{i + 1}" in used or f"{base}{i + 1}" in used for i in range(n)):
            return base
    return "c_const"


def _column(polys, t: sp.Symbol) -> sp.ImmutableMatrix:
    return sp.ImmutableMatrix([p.to_expr(t) for p in polys])


def _is_real_data(system: System) -> bool:
    items = list(system.A) + list(system.f) + (list(system.x0) if system.x0 is not None else []) + [system.t0]
    if system.t.is_real is False:
        return False
    for e in items:
        if e.is_real is True:
            continue
        # expressions in t: real when every symbol is real and no i appears
        if not e.has(sp.I) and all((s.is_real or s == system.t) for s in e.free_symbols):
            continue
        return False
    return True


def solve_system(system: System, *, case: Case | None = None, check: bool = True, regimes=()) -> Solution:
    """Run the whole pipeline on a System.  With ``check`` (default) an
    unverified result raises VerificationError carrying the Solution."""
    t = system.t
    n = system.n
    steps: list[Step] = []
    notices: list[str] = []
    if system.equations:
        steps.append(EquationsStep(equations=system.equations, states=system.states, t=t, A=system.A, f=system.f))
    values = system.parameter_values()
    dec = decompose(system.A, values=values, regimes=regimes)
    steps.extend(dec.steps)

    P, J, P_inv = dec.P, dec.J, dec.P_inv
    y_syms = tuple(sp.Symbol(f"y_{i + 1}") for i in range(n))
    # g = P^-1 f, as exponential polynomials
    try:
        f_ep = [to_expoly(e, t) for e in system.f]
    except NotExpPoly:
        # steps, impulses, piecewise and other inputs: per interval or in convolution form
        from .forcing import solve_general_forcing

        sol = solve_general_forcing(system, dec, steps=steps, case=case, check=check)
        return replace(sol, conditions=sol.conditions + _regime_conditions(regimes))
    g_ep = decouple(P_inv, f_ep)
    steps.append(DecoupleStep(t=t, y=y_syms, D=J, P_inv=P_inv, f=system.f, g=Deferred(_column, g_ep, t)))

    base = _constant_names(system)
    constants = tuple(sp.Symbol(f"{base}_{i + 1}") for i in range(n))
    ivp = system.x0 is not None
    conj = {}
    pos_of_block = []
    pos = 0
    for b in dec.blocks:
        pos_of_block.append(pos)
        pos += sum(len(ch) for ch in b.chains)
    for bi, bj in conjugate_pairs(dec.blocks):
        conj[pos_of_block[bj]] = pos_of_block[bi] + 1
    scal = solve_blocks(
        dec.jordan_blocks,
        g_ep,
        t=t,
        constants=constants,
        y_symbols=y_syms,
        ivp=ivp,
        t0=system.t0,
        is_zero=is_zero_number,
        conjugates=conj,
    )
    steps.extend(scal.steps)

    if not regimes:
        notices.extend(regime_notes(dec.steps[0].factors, dec.lam, values))
    real = _is_real_data(system)
    rec = recombine(
        P,
        P_inv,
        scal.y,
        blocks=dec.blocks,
        constants=constants,
        t=t,
        t0=system.t0,
        x0=system.x0,
        real=real,
    )
    steps.extend(rec.steps)
    if real and not rec.real_form and any(b.kind != "real" for b in dec.blocks):
        notices.append(
            "whether the eigenvalues are real or complex depends on the parameter values, so the "
            "result is written with exponentials of the eigenvalues as they stand; it holds in both "
            "regimes (with the square roots imaginary where their argument is negative)"
        )
    # a chosen regime ran the algebra with a positive placeholder for a square
    # root; the result carries the root itself
    aux = dict(dec.aux)
    x_res, hom_res, par_res = rec.x, rec.homogeneous, rec.particular
    if aux:
        x_res, hom_res, par_res = (
            sp.ImmutableMatrix([restore_roots(e, aux, cs, t) for e in m])
            for m, cs in ((x_res, rec.constants), (hom_res, rec.constants), (par_res, ()))
        )
    # a regime (expr < 0) already implies expr != 0: state it once
    implied = {sp.expand(e) for e, _ in regimes} | {sp.expand(-e) for e, _ in regimes}
    kept = tuple(
        c for c in dec.conditions + scal.conditions if not (c.relation == "!= 0" and sp.expand(c.expr) in implied)
    )
    conditions = kept + _regime_conditions(regimes)
    steps.extend(steady_state_steps(system, dec.column_eigenvalues, x_res))
    steps.append(
        ResultStep(
            t=t,
            states=system.states,
            x=x_res,
            homogeneous=hom_res,
            particular=par_res,
            constants=rec.constants,
        )
    )
    eigenvalues = tuple(sp.sympify(e, strict=True).xreplace(aux) for e in dec.column_eigenvalues)
    ver = verify(
        system,
        x_res,
        constants=rec.constants,
        similarity_ok=True,
        eigenvalues=eigenvalues,
        decimals=[b.numeric for b in dec.blocks for ch in b.chains for _ in ch],
    )
    if aux:
        from .forcing import _swap

        steps = [_swap(st, aux) for st in steps]
        conditions = _swap(conditions, aux)
        P, J, P_inv = (sp.ImmutableMatrix(m.xreplace(aux)) for m in (P, J, P_inv))
    sol = Solution(
        system=system,
        x=x_res,
        constants=rec.constants,
        eigenvalues=eigenvalues,
        P=P,
        D=J,
        P_inv=P_inv,
        is_diagonalizable=dec.diagonalizable,
        homogeneous=hom_res,
        particular=par_res,
        steps=tuple(steps),
        verification=ver,
        conditions=conditions,
        notices=tuple(notices),
        case=case,
    )
    if check and not ver.ok:
        err = VerificationError(
            "the derived solution failed verification: "
            + _failure_summary(ver)
            + "; it is not reported as a result",
        )
        err.solution = sol  # type: ignore[attr-defined]
        raise err
    return sol


def _regime_conditions(regimes) -> tuple[Condition, ...]:
    """The chosen regimes (expr, sign) as stated conditions."""
    return tuple(
        Condition(expr=e, relation="< 0" if sign < 0 else "> 0", reason="the regime solved here") for e, sign in regimes
    )


def _failure_summary(ver) -> str:
    parts = []
    if not ver.residual_zero:
        parts.append("the residual x' - A x - f is not zero")
    if ver.initial_ok is False:
        parts.append("x(t0) differs from x0")
    if ver.numeric is not None and not ver.numeric.ok:
        parts.append(f"numeric integration differs by {ver.numeric.max_rel_gap:.3g} (relative)")
    if not ver.similarity_ok:
        parts.append("P D P^-1 differs from A")
    return ", ".join(parts) or "unknown"
