"""Convolution: any other input (1/(1 + t^2), an unspecified u(t) given through Python).

Per decoupled equation

    y(t) = e^{J (t - t0)} y(t0) + integral from t0 to t of e^{J (t - s)} g(s) ds,

written as e^{J (t - t0)} times integrals whose integrands are free of t, so
that x' - A x - f cancels exactly even where an integral stays unevaluated.
Each integral is given to sympy's ``integrate`` under an inner time limit
(``derive.limits.inner_limit``, ``Settings.integrate_seconds`` each and
``Settings.integrate_budget`` for all of one solve) and its closed form is
accepted only after it is checked by differentiation; otherwise the
``Integral`` is kept and the numeric check evaluates it by quadrature.
"""

from __future__ import annotations

import time
from dataclasses import replace
from typing import Sequence, TypeAlias

import sympy as sp
from sympy.core.function import AppliedUndef

from ...exact import decide_zero
from ...expoly import reads_negative, split_complex
from ...limits import LimitExpired, inner_limit
from ...realroots import as_real_parts
from ...steps import ConvolutionStep, DecoupleStep, RealFormStep, RecombineStep, Step
from ...verify.pieces import PieceRecord
from .base import Budget, ForcingMethod, Pieces, Problem
from .intervals import Piece, decoupled, group_terms, solve_local

__all__ = ["Convolution", "convolution_piece"]

Matrix: TypeAlias = sp.ImmutableMatrix
_ZERO = sp.Integer(0)


def _evaluate(integral: sp.Integral, t: sp.Symbol, budget: Budget) -> sp.Expr:
    """A checked closed form of a definite integral from t0 to t, or the integral itself."""
    body = integral.function
    (s, lo, hi), = integral.limits
    if body.atoms(AppliedUndef) or budget.left <= 0.05:
        return integral
    started = time.monotonic()
    value: sp.Expr = integral
    try:
        with inner_limit(budget.take()) as armed:
            if armed:
                found = sp.integrate(body, (s, lo, hi))
                if not found.has(sp.Integral) and not found.has(sp.Piecewise) and found.is_finite is not False:
                    # accepted only if it differentiates back to the integrand and vanishes at t0
                    check = sp.diff(found, t) - body.subs(s, t)
                    start = found.subs(t, lo)
                    if decide_zero(check).zero and decide_zero(start).zero:
                        value = found
    except LimitExpired:
        value = integral
    except (NotImplementedError, ValueError, TypeError, ZeroDivisionError, RecursionError):
        value = integral
    budget.spend(started)
    return value


def _real_part(e: sp.Expr, t: sp.Symbol, held: Sequence[sp.Symbol]) -> sp.Expr:
    """Re(e) for real t, real parameters and real placeholders ``held``."""
    tr = sp.Dummy("t", real=True)
    z = sp.expand(as_real_parts(e).xreplace({t: tr}))
    # one exponential per term first: as_real_imag leaves re(e^{-2 i} e^{2 i t}) unsplit
    re = sp.Add(*[sp.powsimp(term, combine="exp").as_real_imag()[0] for term in sp.Add.make_args(z)])
    return re.xreplace({tr: t})


def convolution_piece(
    problem: Problem,
    f: Sequence[sp.Expr],
    *,
    start: sp.Expr,
    x_start: Matrix | None,
    constants: Sequence[sp.Symbol],
) -> tuple[Piece, tuple[Step, ...], Matrix, Matrix]:
    """y = e^{J (t - t0)} y(t0) + e^{J (t - t0)} integral of e^{-J (s - t0)} g(s) ds.

    Returns the piece, the homogeneous-part steps of ``recombine`` (adjusted
    to carry the particular part), the homogeneous part and the particular part.
    """
    dec, t, s = problem.dec, problem.t, problem.s
    n = problem.n
    ivp = x_start is not None
    loc = solve_local(problem, [_ZERO] * n, start=start, x_start=x_start, constants=constants, with_steps=True)
    scal_h, rec_h, shift = loc.scalar, loc.rec, loc.shift
    g = decoupled(problem, f)
    sigma = s - start
    # indexed complex roots have no closed real and imaginary parts to write (as in
    # recombine): their integrals stay in exponential form, and so does x
    real = problem.real
    # Base integrals: integrand (-sigma)^k e^{-lam sigma} times one forcing entry,
    # in real form (cos and sin of the imaginary part) when the data are real.
    base: dict[tuple, tuple[sp.Symbol, sp.Integral]] = {}

    def held(l: int, k: int, lam: sp.Expr) -> sp.Expr:
        """A placeholder for the integral of (-sigma)^k e^{-lam sigma} f_l(s) ds."""
        fl = sp.sympify(f[l], strict=True).subs(t, s)
        poly = (-sigma) ** k
        if real:
            a, b = split_complex(lam)
            # a conjugate pair shares its integrals: sin(-b sigma) = -sin(b sigma)
            flip = -1 if (b != 0 and reads_negative(b)) else 1
            b = flip * b
            damp = sp.exp(-a * sigma) if a != 0 else sp.Integer(1)
            parts = [("c", sp.cos(b * sigma))] + ([("s", sp.sin(b * sigma))] if b != 0 else [])
            out = _ZERO
            for name, osc in parts:
                part_key = (l, k, a, b, name)
                if part_key not in base:
                    ph = sp.Dummy(f"K{len(base)}", real=True)
                    base[part_key] = (ph, sp.Integral(poly * damp * (osc if b != 0 else 1) * fl, (s, start, t)))
                # e^{-i b sigma} = cos(b sigma) - i sin(b sigma)
                out += base[part_key][0] * (1 if name == "c" else -sp.I * flip)
            return out
        key = (l, k, lam)
        if key not in base:
            ph = sp.Dummy(f"K{len(base)}")
            base[key] = (ph, sp.Integral(poly * sp.exp(-lam * sigma) * fl, (s, start, t)))
        return base[key][0]

    y_p: list[sp.Expr] = []
    kernels: list[sp.Expr] = []
    pos = 0
    for lam, size in dec.jordan_blocks:
        for r in range(size):
            i = pos + r
            acc = _ZERO
            kern = _ZERO
            for m in range(size - r):
                j = i + m
                kern += (t - s) ** m / sp.factorial(m) * sp.exp(lam * (t - s)) * g[j].subs(t, s)
                for k in range(m + 1):
                    weight = sp.binomial(m, k) / sp.factorial(m) * (t - start) ** (m - k)
                    inner = sum((dec.P_inv[j, l] * held(l, k, lam) for l in range(n) if dec.P_inv[j, l] != 0 and f[l] != 0), _ZERO)
                    acc += weight * inner
            y_p.append(sp.exp(lam * (t - start)) * acc)
            kernels.append(kern)
        pos += size
    placeholders = [ph for ph, _ in base.values()]
    integrals = dict(base.values())
    x_p_held = [sp.expand(sum((dec.P[i, j] * y_p[j] for j in range(n)), _ZERO)) for i in range(n)]
    if real:
        x_p_held = [_real_part(e, t, placeholders) for e in x_p_held]
    values = {ph: _evaluate(I, t, problem.budget) for ph, I in base.values()}
    # grouped while the integrals are still placeholders: the grouping must not reach inside them
    x_p = Matrix([group_terms(e, t).xreplace(values) for e in x_p_held])
    x_h = rec_h.x
    x = Matrix([a + b for a, b in zip(x_h, x_p)])

    y_h = [yy.to_expr(next(iter(shift))).xreplace(shift) if ivp else yy.to_expr(t) for yy in scal_h.y]
    if ivp:
        y_start = Matrix([sp.expand(v) for v in dec.P_inv * x_start])
        y_h = [e.xreplace(dict(zip(constants, y_start))) for e in y_h]
    else:
        y_start = Matrix(list(constants))
    conv_steps: list[Step] = []
    y_full = []
    pos = 0
    for lam, size in dec.jordan_blocks:
        for r in range(size):
            i = pos + r
            used = [ph for ph in placeholders if y_p[i].has(ph)]
            sol = y_h[i] + y_p[i].xreplace(values)
            y_full.append(sol)
            conv_steps.append(
                ConvolutionStep(
                    index=i + 1, t=t, s=s, y=problem.y[i], eigenvalue=lam, g=g[i], kernel=kernels[i], t0=start,
                    homogeneous=y_h[i],
                    integrals=tuple((integrals[ph], values[ph]) for ph in used),
                    closed=all(not values[ph].has(sp.Integral) for ph in used),
                    written=y_h[i] + sp.Integral(kernels[i], (s, start, t)),
                    solution=sol,
                )
            )
        pos += size
    # recombine's steps describe the free part; give them the particular part too
    adjusted: list[Step] = []
    for step in rec_h.steps:
        if isinstance(step, RecombineStep):
            homogeneous: Matrix = step.homogeneous  # a Lazy field reads as its value
            step = replace(step, y=Matrix(y_full), particular=x_p, x=Matrix([a + b for a, b in zip(homogeneous, x_p)]))
        elif isinstance(step, RealFormStep):
            step = replace(step, particular=x_p)
        adjusted.append(step)
    piece = Piece(
        x=x, y=Matrix(y_full), g=g, y_start=y_start, method="convolution",
        steps=tuple(conv_steps), conditions=(),
    )
    return piece, tuple(adjusted), rec_h.homogeneous, x_p


class Convolution(ForcingMethod):
    """Any input: the convolution integrals, in closed form where sympy finds one in time."""

    name = "convolution"

    def accepts(self, problem: Problem) -> bool:
        return True  # the last resort: an integral can always be written down

    def solve(self, problem: Problem) -> Pieces:
        system, dec, t = problem.system, problem.dec, problem.t
        constants = problem.constants()
        g = decoupled(problem, system.f)
        steps: list[Step] = [DecoupleStep(t=t, y=problem.y, D=dec.J, P_inv=dec.P_inv, f=system.f, g=g)]
        piece, rec_steps, x_h, x_p = convolution_piece(
            problem, system.f, start=system.t0, x_start=system.x0, constants=constants
        )
        steps.extend(piece.steps)
        steps.extend(rec_steps)
        notices = []
        if any(isinstance(s, ConvolutionStep) and not s.closed for s in piece.steps):
            notices.append(
                "some convolution integrals have no closed form found within the time limit; they are kept as "
                "definite integrals, evaluated by quadrature in the numeric check"
            )
        record = PieceRecord(start=system.t0, end=None, f=system.f, x=piece.x, jump=Matrix([0] * system.n))
        return Pieces(
            x=piece.x,
            homogeneous=x_h,
            particular=x_p,
            constants=() if system.x0 is not None else constants,
            steps=tuple(steps),
            records=(record,),
            conditions=piece.conditions,
            notices=tuple(notices),
            steady=False,
        )
