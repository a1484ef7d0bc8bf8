"""The modes of a solution: one per real eigenvalue or complex pair, and the time span they set.

A mode's figures follow from its eigenvalue lambda = sigma + i omega_d:
time constant -1/sigma, natural frequency |lambda|, damping ratio
-sigma/|lambda|, damped frequency |omega_d| (K. Ogata, Modern Control
Engineering, 5th ed., section 5-3, from memory).  The shape is the
eigenvector from P: the pattern in which the states move together.
"""

from __future__ import annotations

from typing import Mapping

import sympy as sp

from ..model import Solution
from ..verify.span import PERIODS, settling_span
from .evaluation import approx, decided_sign
from .records import Mode
from .stability import jordan_blocks

__all__ = ["modes_of", "time_span"]


def _clean(e: sp.Expr) -> sp.Expr:
    if e.has(sp.CRootOf):
        return e  # an indexed root is already its simplest exact form; simplify only re-evaluates it
    return sp.radsimp(sp.simplify(e)) if not e.free_symbols else sp.simplify(e)


def _eigenvector_columns(solution: Solution) -> list[int]:
    """For each column, the column of the eigenvector heading its Jordan chain."""
    heads: list[int] = []
    for start, size in jordan_blocks(solution.D):
        heads.extend([start] * size)
    return heads


def modes_of(solution: Solution, values: Mapping[sp.Symbol, sp.Expr]) -> tuple[Mode, ...]:
    """The modes at ``values`` (exact; numbers when every symbol has a value).

    >>> import derive
    >>> [m.eigenvalue for m in modes_of(derive.solve([[0, 1], [-2, -3]]), {})]
    [-2, -1]
    """
    sub = dict(values)
    real_matrix = all(decided_sign(sp.im(e.xreplace(sub))) == 0 for e in solution.system.A)
    heads = _eigenvector_columns(solution)
    lams = [_clean(raw.xreplace(sub)) for raw in solution.eigenvalues]
    seen: list[sp.Expr] = []
    found: list[Mode] = []
    for col, lam in enumerate(lams):
        if any(_equal(lam, other) for other in seen):
            continue
        im_sign = decided_sign(sp.im(lam))
        if real_matrix and im_sign == -1:
            continue  # the member with Im > 0 stands for the pair
        seen.append(lam)
        vec = [_clean(v.xreplace(sub)) for v in solution.P.col(heads[col])]
        multiplicity = sum(1 for other in lams if _equal(lam, other))
        partner = _quadratic_partner(lam, lams, seen) if real_matrix and im_sign is None else None
        if partner is not None:
            seen.append(partner)
            found.append(_quadratic_mode(lam, partner, multiplicity, vec))
            continue
        found.append(_mode(lam, multiplicity, vec, pair=real_matrix and im_sign == 1, real=im_sign == 0))
    return _mark_dominant(found)


def _equal(a: sp.Expr, b: sp.Expr) -> bool:
    d = a - b
    if not d.free_symbols and abs(approx(d)) > 1e-20:
        return False  # clearly apart: no exact test needed
    return decided_sign(sp.re(d)) == 0 and decided_sign(sp.im(d)) == 0


def _radical_free(e: sp.Expr) -> bool:
    return not any(p.exp.is_Rational and not p.exp.is_Integer for p in e.atoms(sp.Pow))


def _quadratic_partner(lam: sp.Expr, lams: list[sp.Expr], seen: list[sp.Expr]) -> sp.Expr | None:
    """The other root of a real quadratic factor with ``lam``, when the two are written with one radical."""
    for other in lams:
        if other is lam or any(_equal(other, s) for s in seen):
            continue
        total, product = sp.simplify(lam + other), sp.simplify(sp.expand(lam * other))
        if _radical_free(total) and _radical_free(product):
            return other
    return None


def _quadratic_mode(lam: sp.Expr, other: sp.Expr, multiplicity: int, vec: list[sp.Expr]) -> Mode:
    """A pair that is real or complex depending on the parameters: the figures of s^2 + 2 zeta w_n s + w_n^2.

    With lam + other = -2 zeta w_n and lam*other = w_n^2, these read the
    same for both kinds; the time constant -2/(lam + other) is the decay of
    the envelope when the pair is complex, and the damped frequency
    w_n sqrt(1 - zeta^2) is real only then.
    """
    total, product = sp.simplify(lam + other), sp.simplify(sp.expand(lam * other))
    omega_n = sp.simplify(sp.sqrt(product))
    zeta = sp.simplify(-total / (2 * omega_n))
    shape, _ = _shape(vec, real=True)
    return Mode(
        lam, multiplicity, sp.simplify(-2 / total), omega_n, zeta, sp.simplify(sp.sqrt(product - total**2 / 4)), shape, None, True
    )


def _mode(lam: sp.Expr, multiplicity: int, vec: list[sp.Expr], *, pair: bool, real: bool) -> Mode:
    sigma = _clean(sp.re(lam))
    omega = _clean(sp.Abs(sp.im(lam)))
    size = _clean(sp.sqrt(sigma**2 + sp.im(lam) ** 2))
    sigma_sign = decided_sign(sigma)
    tau = None if sigma_sign == 0 else _clean(-1 / sigma)
    zeta = None if decided_sign(size) == 0 else _clean(-sigma / size)
    shape, phase = _shape(vec, real=real)
    return Mode(lam, multiplicity, tau, size, zeta, omega, shape, phase, is_pair=pair)


def _shape(vec: list[sp.Expr], *, real: bool) -> tuple[tuple[sp.Expr, ...] | None, tuple[sp.Expr, ...] | None]:
    if any(v.has(sp.zoo, sp.nan) for v in vec):
        return None, None
    numeric = not any(v.free_symbols for v in vec)
    if numeric:
        ref = max(range(len(vec)), key=lambda i: abs(approx(vec[i])))
    else:
        ref = next((i for i, v in enumerate(vec) if decided_sign(sp.Abs(v)) != 0), 0)
    scaled = [_clean(v / vec[ref]) for v in vec]
    if real:
        return tuple(scaled), None
    # with indexed roots, Abs and arg would evaluate to decimals to decide signs: keep them formal
    formal = any(v.has(sp.CRootOf) for v in scaled)
    return (
        tuple(_clean(sp.Abs(v, evaluate=not formal)) for v in scaled),
        tuple(_clean(sp.arg(v, evaluate=not formal)) for v in scaled),
    )


def _mark_dominant(found: list[Mode]) -> tuple[Mode, ...]:
    rates = [sp.re(m.eigenvalue) for m in found]
    if not found or any(r.free_symbols for r in rates):
        return tuple(found)
    top = max(range(len(found)), key=lambda i: approx(rates[i]).real)
    if decided_sign(rates[top]) != -1:
        return tuple(found)  # nothing decays, so no mode is the slowest to decay
    return tuple(Mode(**{**m.__dict__, "dominant": i == top}) for i, m in enumerate(found))


def time_span(modes: tuple[Mode, ...], *, last_switch: float = 0.0, forcing_frequency: float | None = None) -> float | None:
    """About five slowest time constants (three periods of an undamped mode, three e-foldings of a growing one).

    Measured from the last switch of the input (0 when it never switches);
    None when the modes carry symbols.

    >>> time_span((Mode(sp.Integer(-2), 1, sp.Rational(1, 2), sp.Integer(2), sp.Integer(1), sp.Integer(0), None),))
    2.5
    """
    if any(sp.sympify(m.eigenvalue, strict=True).free_symbols for m in modes):
        return None
    values = [complex(approx(m.eigenvalue)) for m in modes]
    span = settling_span(values, forcing_frequency=forcing_frequency)
    # a growing mode hides everything else after a few e-foldings: a figure over a slow mode's
    # settling or three input periods would show only e^{sigma t} at 1e60 (the check may run longer)
    growth = max((z.real for z in values if z.real > 1e-9 * abs(z)), default=0.0)
    if growth > 0:
        span = min(span, PERIODS / growth)
    return last_switch + span
