"""Steady state and transient of a stable system under constant or sinusoidal input.

When every eigenvalue has a negative real part the free response dies out
and what remains is the steady state, the particular solution that has the
form of the input:

    constant input f0:          x_ss = -A^-1 f0
    sinusoid f = Re(F e^{i w t}): x_ss = Re(X e^{i w t}),  X = (i w I - A)^-1 F,

so each state oscillates as |X_k| cos(w t + arg X_k).  Both come from one
linear solve each, so they are computed exactly here and checked by
substitution before they are shown; the transient is what the full solution
adds to them.  Engineers read the amplitude and phase directly off a sheet,
which the integrating-factor form of the particular part does not show.
"""

from __future__ import annotations

import functools
from typing import Mapping, Sequence

import sympy as sp

from .exact import decide_zero
from .expoly import NotExpPoly, norm_coeff, split_complex, to_expoly
from .model import System
from .transient import transient
from .ringcheck import residual_is_zero
from .spectral import small_field
from .steps import Deferred, SteadyStateStep

__all__ = ["steady_state_steps", "stability"]


def stability(eigenvalues: Sequence[sp.Expr], values: Mapping[sp.Symbol, sp.Expr]) -> str | None:
    """How Re(lambda) < 0 holds for every eigenvalue: "exact", "at the parameter values", or None.

    >>> stability((sp.Integer(-1), -2 + sp.I), {})
    'exact'
    """
    basis = "exact"
    for lam in dict.fromkeys(eigenvalues):
        re = split_complex(lam)[0]  # an indexed root: its sigma, a real root whose sign is read exactly
        negative = re.is_negative
        if negative is True:
            continue
        if negative is False:
            return None
        # The sign depends on the parameters: decide it at their given values only.
        point = sp.sympify(re, strict=True).xreplace(dict(values))
        if point.free_symbols:
            return None
        try:
            if complex(sp.N(point, 30)).real < 0:
                basis = "at the parameter values"
                continue
        except (TypeError, ValueError):
            pass
        return None
    return basis


def _is_real(system: System, f: sp.MatrixBase) -> bool:
    for e in list(system.A) + list(f):
        if e.has(sp.I):
            return False
        if any(not (s.is_real or s == system.t) for s in e.free_symbols):
            return False
    return True


def _solve(M: sp.Matrix, b: sp.Matrix) -> sp.Matrix:
    """M y = b exactly: by DomainMatrix in a small exact field of the numbers where
    there is one (Q, Q(i), a quadratic field), else by sympy's LU."""
    exact = small_field(M, b)
    if exact is None:
        return M.LUsolve(b)
    return exact[0].lu_solve(exact[1]).to_Matrix()


def _clean(e: sp.Expr) -> sp.Expr:
    return norm_coeff(e) if not e.free_symbols else sp.factor(sp.cancel(sp.expand(e)))


def steady_state_steps(
    system: System,
    eigenvalues: Sequence[sp.Expr],
    x: sp.MatrixBase,
    *,
    f: sp.MatrixBase | None = None,
    since: sp.Expr | None = None,
) -> tuple[SteadyStateStep, ...]:
    """The steady-state step, when the system is stable and the input constant or sinusoidal.

    ``f`` is the forcing the steady state answers (the system's by default;
    the last interval's for a switched input, which holds from ``since``).
    Returns an empty tuple when the step does not apply.

    >>> t = sp.Symbol("t")
    >>> sys_ = System(A=sp.ImmutableMatrix([[-2]]), f=sp.ImmutableMatrix([4]), t=t, states=(sp.Symbol("x"),))
    >>> steady_state_steps(sys_, (sp.Integer(-2),), sp.ImmutableMatrix([2 - 2*sp.exp(-2*t)]))[0].x_ss
    Matrix([[2]])
    """
    t = system.t
    A = sp.Matrix(system.A)
    n = A.rows
    f = sp.ImmutableMatrix(system.f if f is None else f)
    if all(e == 0 for e in f) or not _is_real(system, f):
        return ()
    basis = stability(eigenvalues, system.parameter_values())
    if basis is None:
        return ()
    try:
        eps = [to_expoly(e, t) for e in f]
    except NotExpPoly:
        return ()
    exps: set[sp.Expr] = set()
    for ep in eps:
        for (k, gamma), _ in ep.terms:
            if k != 0:
                return ()  # a polynomial in t has no bounded steady state
            exps.add(gamma)
    zero = sp.Integer(0)
    osc = [g for g in exps if g != 0]
    omega: sp.Expr | None = None
    if osc:
        parts = [split_complex(g) for g in osc]
        if any(re != 0 for re, _ in parts):
            return ()  # exponentially varying input: its response decays or grows with it
        ims = {sp.Abs(im) for _, im in parts}
        if len(ims) != 1 or len(osc) != 2:
            return ()  # more than one frequency: not a single amplitude and phase
        omega = next(iter(ims))
        if omega.is_positive is not True:
            return ()
    f0 = sp.ImmutableMatrix([ep.as_dict().get((0, zero), zero) for ep in eps])
    has_const = any(e != 0 for e in f0)
    # the step applies: what it shows is worked out when the sheet reads it
    content = functools.cache(functools.partial(_content, A, f, f0, has_const, eps, omega, x, t))
    return (
        SteadyStateStep(
            t=t,
            eigenvalues=tuple(dict.fromkeys(eigenvalues)),
            stability=basis,
            forcing=f,
            constant=f0 if has_const else None,
            x_constant=Deferred(_part, content, "x_constant"),
            omega=omega,
            phasor_in=Deferred(_part, content, "phasor_in"),
            phasor=Deferred(_part, content, "phasor"),
            amplitude=Deferred(_part, content, "amplitude"),
            phase=Deferred(_part, content, "phase"),
            x_ss=Deferred(_part, content, "x_ss"),
            transient=Deferred(_part, content, "transient"),
            since=since,
            residual_zero=Deferred(_part, content, "residual_zero"),
        ),
    )


def _part(content, name: str):
    return content()[name]


def _content(A: sp.Matrix, f: sp.ImmutableMatrix, f0: sp.ImmutableMatrix, has_const: bool, eps, omega, x, t) -> dict:
    """x_ss = -A^-1 f0 plus Re(X e^{i w t}), its amplitudes and phases, its own
    substitution check and the transient x - x_ss."""
    n = A.rows
    zero = sp.Integer(0)
    x_const = None
    x_ss = sp.Matrix.zeros(n, 1)
    if has_const:
        x_const = sp.ImmutableMatrix(_solve(A, -sp.Matrix(f0)).applyfunc(_clean))
        x_ss = x_ss + sp.Matrix(x_const)
    F = X = None
    amplitude: tuple[sp.Expr, ...] = ()
    phase: tuple[sp.Expr, ...] = ()
    if omega is not None:
        key = (0, sp.expand(sp.I * omega))
        # f = C e^{i w t} + conj(C) e^{-i w t} = Re(2 C e^{i w t}): the phasor is 2 C
        F = sp.ImmutableMatrix([_clean(2 * ep.as_dict().get(key, zero)) for ep in eps])
        M = sp.I * omega * sp.eye(n) - A
        X = sp.ImmutableMatrix(_solve(M, sp.Matrix(F)).applyfunc(_clean))
        amps, phases = [], []
        for k in range(n):
            re, im = split_complex(X[k])
            re, im = _clean(re), _clean(im)
            if re == 0 and im == 0:
                amps.append(zero)
                phases.append(zero)
            else:
                amps.append(sp.sqrt(_clean(re**2 + im**2)))
                phases.append(sp.atan2(im, re))
            x_ss[k] += re * sp.cos(omega * t) - im * sp.sin(omega * t)
        amplitude, phase = tuple(amps), tuple(phases)
    x_ss = sp.ImmutableMatrix(x_ss)
    ok = residual_is_zero(list(x_ss), A, list(f), t) or all(
        decide_zero(x_ss[i].diff(t) - (A.row(i) * x_ss)[0] - f[i]).zero for i in range(n)
    )
    return {
        "x_constant": x_const,
        "phasor_in": F,
        "phasor": X,
        "amplitude": amplitude,
        "phase": phase,
        "x_ss": x_ss,
        "transient": sp.ImmutableMatrix([transient(a, b, t) for a, b in zip(x, x_ss)]),
        "residual_zero": ok,
    }
