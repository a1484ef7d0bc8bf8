"""Second-order systems M q'' + C q' + K q = F(t): the block first-order form and the modes.

The block form with the states q, then q' is

    x = (q, q'),   x' = [[0, I], [-M^-1 K, -M^-1 C]] x + (0, M^-1 F),

built exactly (M is inverted in exact arithmetic) and solved by the one
solver.  :func:`modes` gives the modal description of the same system: the
generalized eigenproblem K phi = omega^2 M phi, mass-normalised mode shapes
and, when the damping is proportional (C = 0 or C = alpha M + beta K), one
damping ratio per mode.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import sympy as sp

from .solving.system import exact_value
from .errors import InputError
from .model import Case, Solution, System
from .pipeline import build_system, solve_case

__all__ = ["Modes", "block_form", "modes", "solve_second_order", "second_order_states"]


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


def _square(value: Any, key: str, symbols: Mapping[str, sp.Symbol], n: int | None) -> sp.ImmutableMatrix:
    rows = value.tolist() if isinstance(value, sp.MatrixBase) else value
    try:
        rows = [list(r) for r in rows]
    except TypeError:
        raise InputError(f"{key} must be a square matrix: a sympy Matrix or a list of rows", key=key) from None
    size = len(rows) if n is None else n
    if size == 0 or len(rows) != size or any(len(r) != size for r in rows):
        raise InputError(f"{key} must be {size}x{size}; found rows of lengths {[len(r) for r in rows]}", key=key)
    return sp.ImmutableMatrix([[_entry(v, f"{key}[{i}][{j}]", symbols) for j, v in enumerate(r)] for i, r in enumerate(rows)])


def _vector(value: Any, key: str, symbols: Mapping[str, sp.Symbol], n: int) -> sp.ImmutableMatrix:
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


def second_order_states(names: Sequence[str]) -> tuple[sp.Symbol, ...]:
    """The states q1..qn, then q1'..qn' (each derivative named as the user writes it)."""
    from .reduction import derivative_symbol

    return tuple(derivative_symbol(n, 0) for n in names) + tuple(derivative_symbol(n, 1) for n in names)


def _symbols(params: Any) -> dict[str, sp.Symbol]:
    if params is None:
        return {}
    keys = params.keys() if isinstance(params, Mapping) else params
    out: dict[str, sp.Symbol] = {}
    for k in keys:
        sym = k if isinstance(k, sp.Symbol) else getattr(k, "symbol", None) or sp.Symbol(str(k), real=True)
        out[sym.name] = sym
    return out


def solve_second_order(
    M: Any,
    C: Any,
    K: Any,
    F: Any = None,
    *,
    t: sp.Symbol | None = None,
    q0: Any = None,
    v0: Any = None,
    t0: Any = 0,
    params: Any = None,
    assume: Any = None,
) -> Solution:
    """Solve M q'' + C q' + K q = F(t) exactly through the block first-order form (states q, then q').

    ``C`` may be ``None`` (no damping); ``q0`` and ``v0`` are the initial
    displacements and velocities (give both or neither).

    >>> sol = solve_second_order([[1]], None, [[4]], q0=[1], v0=[0])
    >>> sol.x.T
    Matrix([[cos(2*t), -2*sin(2*t)]])
    """
    t = t if t is not None else sp.Symbol("t")
    symbols = {**_symbols(params), t.name: t}
    Mm = _square(M, "M", symbols, None)
    n = Mm.rows
    Cm = sp.ImmutableMatrix(sp.zeros(n, n)) if C is None else _square(C, "C", symbols, n)
    Km = _square(K, "K", symbols, n)
    Fm = sp.ImmutableMatrix(sp.zeros(n, 1)) if F is None else _vector(F, "F", symbols, n)
    for name, mat in (("M", Mm), ("C", Cm), ("K", Km)):
        if mat.has(t):
            raise InputError(f"{name} depends on {t}: this solver needs constant coefficients", key=name)
    if (q0 is None) != (v0 is None):
        raise InputError("give both q0 and v0 (initial displacements and velocities), or neither", key="q0" if q0 is None else "v0")
    x0 = None
    if q0 is not None:
        x0 = list(_vector(q0, "q0", symbols, n)) + list(_vector(v0, "v0", symbols, n))
    A, f = block_form(Mm, Cm, Km, Fm)
    states = second_order_states([f"q{i + 1}" for i in range(n)])
    system, notices = build_system(A, f, t=t, x0=x0, t0=t0, params=params, states=states)
    system = System(
        A=system.A, f=system.f, t=system.t, states=system.states, x0=system.x0, t0=system.t0,
        params=system.params, equations=("M q'' + C q' + K q = F",),
    )
    return solve_case(Case(name="second_order", system=system, notices=notices), assume=assume)


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


def _rayleigh(M: sp.MatrixBase, C: sp.MatrixBase, K: sp.MatrixBase) -> tuple[sp.Expr, sp.Expr] | None:
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
    symbols = _symbols(params)
    Mm = _square(M, "M", symbols, None)
    n = Mm.rows
    Km = _square(K, "K", symbols, n)
    Cm = sp.ImmutableMatrix(sp.zeros(n, n)) if C is None else _square(C, "C", symbols, n)
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
    ray = _rayleigh(Mm, Cm, Km)
    ratios_out = None
    if ray is not None:
        a, b = ray
        ratios_out = tuple(sp.factor((a + b * w) / (2 * sp.sqrt(w))) if w != 0 else sp.nan for w in omega2)
    return Modes(omega2, freqs, shapes, ray, ratios_out)
