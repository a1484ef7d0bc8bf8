"""The modes of M q'' + C q' + K q = F, and the block first-order form, without the solver.

:func:`modes` solves the generalized eigenproblem K phi = omega^2 M phi with
mass-normalised shapes and, when the damping is proportional (C = 0 or
C = alpha M + beta K), one damping ratio per mode.  :func:`modal_steps` and
:func:`reduction_steps` build the sheet's steps for a System read from equations of
higher order or from M, C and K.  This module does not import the pipeline,
so the stage list can call it; ``derive.second_order`` holds the solver.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import sympy as sp

from .errors import InputError
from .reduction import derivative_symbol, reduction_of
from .solving.system import exact_value
from .steps import Deferred, ModalStep, ReductionStep, Step

__all__ = [
    "Modes",
    "block_form",
    "modes",
    "rayleigh_coefficients",
    "modal_coordinates",
    "form_steps",
    "read_square",
    "read_vector",
    "symbols_of",
]


@dataclass(frozen=True)
class Modes:
    """The undamped modes of M q'' + C q' + K q = F, in order of rising frequency where that is decidable.

    ``omega_squared[i]`` and column i of ``shapes`` solve K phi = omega^2 M phi
    with phi^T M phi = 1.  ``rayleigh`` is (alpha, beta) with C = alpha M + beta K
    when the damping is proportional (``(0, 0)`` for C = 0), and then
    ``damping_ratios[i]`` = (alpha + beta omega_i^2) / (2 omega_i); both are
    ``None`` when C does not decouple in the modes.
    """

    omega_squared: tuple[sp.Expr, ...]
    frequencies: tuple[sp.Expr, ...]
    shapes: sp.ImmutableMatrix
    rayleigh: tuple[sp.Expr, sp.Expr] | None
    damping_ratios: tuple[sp.Expr, ...] | None


def _entry(value: Any, key: str, symbols: Mapping[str, sp.Symbol]) -> sp.Expr:
    """One matrix entry as an exact sympy object, read as build_system reads A (strings parsed safely)."""
    return exact_value(value, symbols=symbols, key=key, notices=[])


def read_square(value: Any, key: str, symbols: Mapping[str, sp.Symbol], n: int | None) -> sp.ImmutableMatrix:
    rows = value.tolist() if isinstance(value, sp.MatrixBase) else value
    try:
        rows = [list(r) for r in rows]
    except TypeError:
        raise InputError(f"{key} must be a square matrix: a sympy Matrix or a list of rows", key=key) from None
    size = len(rows) if n is None else n
    if size == 0 or len(rows) != size or any(len(r) != size for r in rows):
        raise InputError(f"{key} must be {size}x{size}; found rows of lengths {[len(r) for r in rows]}", key=key)
    return sp.ImmutableMatrix([[_entry(v, f"{key}[{i}][{j}]", symbols) for j, v in enumerate(r)] for i, r in enumerate(rows)])


def read_vector(value: Any, key: str, symbols: Mapping[str, sp.Symbol], n: int) -> sp.ImmutableMatrix:
    items = list(value)
    if len(items) != n:
        raise InputError(f"M is {n}x{n} but {key} has {len(items)} entries", key=key)
    return sp.ImmutableMatrix([_entry(v, f"{key}[{i}]", symbols) for i, v in enumerate(items)])


def block_form(
    M: sp.MatrixBase, C: sp.MatrixBase, K: sp.MatrixBase, F: sp.MatrixBase, *, key: str = "M", file: str | None = None
) -> tuple[sp.ImmutableMatrix, sp.ImmutableMatrix]:
    """(A, f) of the first-order form with the states q, then q'.

    >>> A, f = block_form(sp.Matrix([[2]]), sp.Matrix([[4]]), sp.Matrix([[8]]), sp.Matrix([6]))
    >>> A, f
    (Matrix([
    [ 0,  1],
    [-4, -2]]), Matrix([
    [0],
    [3]]))
    """
    n = M.rows
    det = sp.factor(M.det())
    if det == 0:
        raise InputError("the mass matrix M is singular (its determinant is 0); expected an invertible M", key=key, file=file)
    Minv = M.inv()
    top = sp.zeros(n, n).row_join(sp.eye(n))
    bottom = (-(Minv * K)).applyfunc(sp.factor).row_join((-(Minv * C)).applyfunc(sp.factor))
    A = sp.ImmutableMatrix(top.col_join(bottom))
    f = sp.ImmutableMatrix(sp.zeros(n, 1).col_join((Minv * F).applyfunc(sp.factor)))
    return A, f


def symbols_of(params: Any) -> dict[str, sp.Symbol]:
    if params is None:
        return {}
    keys = params.keys() if isinstance(params, Mapping) else params
    out: dict[str, sp.Symbol] = {}
    for k in keys:
        sym = k if isinstance(k, sp.Symbol) else getattr(k, "symbol", None) or sp.Symbol(str(k), real=True)
        out[sym.name] = sym
    return out


def _m_orthonormal(vectors: list[sp.Matrix], M: sp.MatrixBase) -> list[sp.Matrix]:
    """Gram-Schmidt in the inner product u^T M v, so modes of one frequency are M-orthogonal and normalised."""
    out: list[sp.Matrix] = []
    for v in vectors:
        w = v
        for u in out:
            w = w - (u.T * M * v)[0] * u
        norm = sp.sqrt(sp.factor((w.T * M * w)[0]))
        out.append((w / norm).applyfunc(sp.radsimp))
    return out


def rayleigh_coefficients(M: sp.MatrixBase, C: sp.MatrixBase, K: sp.MatrixBase) -> tuple[sp.Expr, sp.Expr] | None:
    """(alpha, beta) with C = alpha M + beta K, or None when C is not of that form."""
    if all(c == 0 for c in C):
        return sp.Integer(0), sp.Integer(0)
    alpha, beta = sp.Dummy("alpha"), sp.Dummy("beta")
    eqs = [sp.expand(c - alpha * m - beta * k) for c, m, k in zip(C, M, K)]
    found = sp.linsolve(eqs, [alpha, beta])
    if not found:
        return None
    a, b = next(iter(found))
    if a.free_symbols & {alpha, beta} or b.free_symbols & {alpha, beta}:
        # M and K proportional: any split works; take C as a multiple of M.
        a, b = a.subs(beta, 0), b.subs(beta, 0)
    return sp.factor(a), sp.factor(b)


def modes(M: Any, K: Any, C: Any = None, *, params: Any = None) -> Modes:
    """The natural frequencies, mass-normalised mode shapes and (proportional) damping ratios.

    >>> m, k = sp.symbols("m k", positive=True)
    >>> md = modes([[m, 0], [0, m]], [[2*k, -k], [-k, 2*k]])
    >>> md.omega_squared
    (k/m, 3*k/m)
    """
    symbols = symbols_of(params)
    Mm = read_square(M, "M", symbols, None)
    n = Mm.rows
    Km = read_square(K, "K", symbols, n)
    Cm = sp.ImmutableMatrix(sp.zeros(n, n)) if C is None else read_square(C, "C", symbols, n)
    if sp.factor(Mm.det()) == 0:
        raise InputError("the mass matrix M is singular (its determinant is 0); expected an invertible M", key="M")
    pencil = (Mm.inv() * Km).applyfunc(sp.factor)
    pairs: list[tuple[sp.Expr, sp.Matrix]] = []
    for value, _mult, vectors in pencil.eigenvects():
        value = sp.factor(value)
        for phi in _m_orthonormal([sp.Matrix(v) for v in vectors], Mm):
            pairs.append((value, phi))
    first = pairs[0][0]
    ratios = [sp.simplify(w / first) if first != 0 else w for w, _ in pairs]
    # Roots of a cubic come in radicals with I even when real: compare their numeric values.
    values = [complex(sp.N(r, 30)) if r.is_number else None for r in ratios]
    if all(v is not None and abs(v.imag) < 1e-20 for v in values):
        order = sorted(range(len(pairs)), key=lambda i: (values[i] or 0j).real)
        pairs = [pairs[i] for i in order]
    omega2 = tuple(w for w, _ in pairs)
    freqs = tuple(sp.sqrt(w) for w in omega2)
    shapes = sp.ImmutableMatrix.hstack(*[phi for _, phi in pairs])
    ray = rayleigh_coefficients(Mm, Cm, Km)
    ratios_out = None
    if ray is not None:
        a, b = ray
        ratios_out = tuple(sp.factor((a + b * w) / (2 * sp.sqrt(w))) if w != 0 else sp.nan for w in omega2)
    return Modes(omega2, freqs, shapes, ray, ratios_out)


def modal_coordinates(system: Any, n: int) -> tuple[sp.Symbol, ...]:
    """The modal coordinates eta_1..eta_n, under another letter where the system uses that name.

    Physical coordinates are q (or the user's names) and the first-order
    decoupling uses y, so the modes take eta, or xi, or r when eta is taken.

    >>> from derive.pipeline import build_system
    >>> modal_coordinates(build_system([[0, 1], [-1, 0]])[0], 2)
    (eta_1, eta_2)
    """
    used = {s.name for s in system.states} | {p.name for p in system.params} | {system.t.name}
    used |= {s.name for s in system.A.free_symbols | system.f.free_symbols}
    bases = {u.split("_")[0].rstrip("0123456789'") for u in used}
    base = next((b for b in ("eta", "xi", "r") if b not in bases), "eta_m")
    return tuple(sp.Symbol(f"{base}_{i + 1}", real=True) for i in range(n))


def _frequency_equation(M: sp.MatrixBase, K: sp.MatrixBase, omega: sp.Symbol) -> sp.Expr:
    """det(K - omega^2 M), factored as a polynomial in omega^2 (shown beside the eigenproblem)."""
    mu = sp.Dummy("mu")
    return sp.factor((K - mu * M).det()).xreplace({mu: omega**2})


#: the sheet writes out the modes when every factor of det(K - omega^2 M) has at most this degree in omega^2
MAX_MODE_DEGREE = 2


def _modes_of(M: sp.ImmutableMatrix, K: sp.ImmutableMatrix, C: sp.ImmutableMatrix) -> Modes | None:
    """The modes for the sheet, or None when a factor of the frequency equation has degree 3 or more in
    omega^2: the shapes of its roots in radicals are unreadable and slow to reach (minutes for a cubic)."""
    mu = sp.Dummy("mu")
    _, factors = sp.factor_list((K - mu * M).det(), mu)
    if any(sp.degree(q, mu) > MAX_MODE_DEGREE for q, _ in factors):
        return None
    return modes(M, K, C)


def _definitions(names: Sequence[tuple[str, int]]) -> tuple[tuple[sp.Symbol, sp.Symbol, int], ...]:
    return tuple((derivative_symbol(n, k), derivative_symbol(n, 0), k) for n, order in names for k in range(order))


def form_steps(system: Any) -> tuple[Step, ...]:
    """The reduction to first order (and, for proportional damping, the modal route) of a System.

    Empty for a system written in first order.  A second-order form whose
    M, C and K no longer give the system's A (a relation has been put in)
    is not shown.
    """
    if system.second_order is None:
        red = reduction_of(system)
        if red is None:
            return ()
        return (ReductionStep(
            t=system.t, equations=red.original_equations, definitions=_definitions(red.order_by_state),
            rows=red.first_order_equations, A=system.A, f=system.f,
        ),)
    M, C, K, F = system.second_order
    A, f = block_form(M, C, K, F)
    if any(sp.cancel(e) != 0 for e in A - system.A):
        return ()
    n = M.rows
    x = sp.ImmutableMatrix(system.states)
    rows = A * x + f
    q = system.states[:n]
    definitions = tuple((s, s, 0) for s in q) + tuple((d, s, 1) for s, d in zip(q, system.states[n:]))
    steps: list[Step] = [ReductionStep(
        t=system.t, equations=("M q'' + C q' + K q = F",), definitions=definitions,
        rows=tuple(zip(system.states, rows)), A=system.A, f=system.f, second_order=(M, C, K, F),
    )]
    ray = rayleigh_coefficients(M, C, K)
    if ray is not None:
        steps.append(ModalStep(
            t=system.t, coordinates=system.states[:n], eta=modal_coordinates(system, n), M=M, C=C, K=K, F=F,
            rayleigh=ray, modes=Deferred(_modes_of, M, K, C),
            frequency_equation=Deferred(_frequency_equation, M, K, sp.Symbol("omega", positive=True)),
        ))
    return tuple(steps)
