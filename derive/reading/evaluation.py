"""Exact signs, parameter values and numeric evaluation of a closed form.

The reading decides signs exactly where the expression is a number (an
evaluation to many digits that is clearly away from zero fixes the sign; a
value at zero is confirmed by its minimal polynomial), and evaluates the
closed form in double precision only to find where a level is crossed.
"""

from __future__ import annotations

from typing import Callable, Mapping, Sequence

import numpy as np
import sympy as sp
from sympy.polys.polyerrors import NotAlgebraic

from ..errors import InputError
from ..exact import decide_zero, numeric_function, root_value
from ..forcing import switching_times
from ..model import Solution
from ..rootring import atoms_of, replace_atoms

__all__ = [
    "decided_sign",
    "approx",
    "reading_values",
    "has_all_values",
    "at_values",
    "numeric_series",
    "with_root_values",
    "switch_and_impulse_times",
    "parameter_symbol",
]

_DIGITS = 60
_CLEAR = sp.Float("1e-40")


def decided_sign(e: sp.Expr) -> int | None:
    """-1, 0 or 1 for a real expression when it can be decided exactly, else None.

    >>> decided_sign(sp.sqrt(2) - sp.Rational(141, 100)), decided_sign(sp.re((-1 + sp.sqrt(-15)) / 2))
    (1, -1)
    """
    e = sp.sympify(e, strict=True)
    if e.is_Rational:
        return (e.p > 0) - (e.p < 0)
    if e.free_symbols:
        for form in (e, sp.simplify(e)):
            if form.is_zero:
                return 0
            if form.is_positive:
                return 1
            if form.is_negative:
                return -1
        return None
    exact = e
    e = with_root_values(e)
    v = sp.N(e, _DIGITS)
    re, im = v.as_real_imag()
    if abs(im) > _CLEAR:
        return None  # not real: no sign
    if abs(re) > _CLEAR:
        return 1 if re > 0 else -1
    try:
        if sp.minimal_polynomial(exact, sp.Dummy("z")).is_Symbol:
            return 0
    except (NotImplementedError, ValueError, TypeError, sp.PolynomialError, NotAlgebraic):
        pass
    return 0 if decide_zero(exact).zero else None


def approx(e: sp.Expr, digits: int = 30) -> complex:
    """A complex decimal of a number, indexed roots read from their cached decimals.

    >>> approx(sp.sqrt(-4))
    2j
    """
    e = with_root_values(sp.sympify(e, strict=True))
    return complex(sp.N(e, digits))


def with_root_values(e: sp.Expr) -> sp.Expr:
    """``e`` with every indexed root replaced by its cached decimal (for numeric work only).

    sympy's atoms and xreplace open every root, rebuilding its polynomial each time; the
    rootring walks do not.

    >>> x = sp.Symbol("x"); r = sp.CRootOf(x**3 - x - 1, 0)
    >>> round(float(with_root_values(2 * r)), 6)
    2.649436
    """
    return replace_atoms(e, {r: root_value(r) for r in atoms_of(e, sp.CRootOf)})


def reading_values(solution: Solution, values: Mapping[sp.Basic, object] | None) -> dict[sp.Symbol, sp.Expr]:
    """The parameter values to read at: the caller's (names or symbols) over the declared ones."""
    out: dict[sp.Symbol, sp.Expr] = dict(solution.system.parameter_values())
    for key, value in (values or {}).items():
        symbol = parameter_symbol(solution, key)
        if isinstance(value, float):
            out[symbol] = sp.nsimplify(value, rational=True)
            continue
        try:
            out[symbol] = sp.sympify(value, strict=True)  # numbers and expressions only: never text
        except sp.SympifyError:
            raise InputError(f"the value of {symbol} must be a number, got {value!r}", key="values") from None
    return out


def parameter_symbol(solution: Solution, key: object) -> sp.Symbol:
    """The system's parameter named by ``key`` (a Symbol or its name); InputError otherwise."""
    names = {p.name: p.symbol for p in solution.system.params}
    for s in _free(solution):
        names.setdefault(s.name, s)
    name = key.name if isinstance(key, sp.Symbol) else str(key)
    if name not in names:
        raise InputError(
            f"{name!r} is not a parameter of this system; expected one of {', '.join(sorted(names)) or '(none)'}",
            key="parameter",
        )
    return names[name]


def _free(solution: Solution) -> set[sp.Symbol]:
    sy = solution.system
    out: set[sp.Symbol] = set()
    for M in (sy.A, sy.f, sy.x0):
        if M is not None:
            out |= M.free_symbols
    out |= sp.sympify(sy.t0, strict=True).free_symbols
    return {s for s in out if s != sy.t}


def has_all_values(solution: Solution, values: Mapping[sp.Symbol, sp.Expr]) -> bool:
    """True when every parameter of the system (A, f, x0, t0) has a value."""
    return _free(solution) <= set(values)


def at_values(solution: Solution, values: Mapping[sp.Symbol, sp.Expr]) -> sp.ImmutableMatrix:
    """The closed form x(t) with the values put in exactly.

    Where the closed form is singular at the values (a repeated eigenvalue the
    symbolic route kept apart, e.g. critical damping), the system is solved
    again at the values, so the reading describes the system as it is.
    """
    x = sp.ImmutableMatrix(solution.x.xreplace(dict(values)))
    if not any(e.has(sp.zoo, sp.nan, sp.oo, -sp.oo) for e in x):
        return x
    from ..pipeline import solve  # only here: the reading is otherwise independent of the pipeline

    sy = solution.system
    sub = dict(values)
    again = solve(
        sy.A.xreplace(sub),
        sy.f.xreplace(sub),
        t=sy.t,
        x0=None if sy.x0 is None else sy.x0.xreplace(sub),
        t0=sp.sympify(sy.t0, strict=True).xreplace(sub),
    )
    return again.x


def numeric_series(exprs: Sequence[sp.Expr], t: sp.Symbol) -> Callable[[np.ndarray], np.ndarray]:
    """A function of a time array giving the real values of ``exprs``, one row per expression."""
    ready = [with_root_values(sp.sympify(e, strict=True)) for e in exprs]
    fn = numeric_function(t, ready, "numpy")

    def evaluate(times: np.ndarray) -> np.ndarray:
        times = np.asarray(times, dtype=float)
        rows = fn(times)
        return np.vstack([np.real(np.broadcast_to(np.asarray(r, dtype=complex), times.shape)) for r in rows])

    return evaluate


def switch_and_impulse_times(solution: Solution, values: Mapping[sp.Symbol, sp.Expr]) -> tuple[tuple[float, ...], tuple[float, ...]]:
    """The input's switching times and, among them, its impulse times, as floats."""
    sy = solution.system
    f = [e.xreplace(dict(values)) for e in sy.f]
    switches = tuple(float(s) for s in switching_times(f, sy.t))
    impulses = sorted(
        {float(sp.solve(d.args[0], sy.t)[0]) for e in f for d in e.atoms(sp.DiracDelta) if d.has(sy.t)}
    )
    return switches, tuple(impulses)
