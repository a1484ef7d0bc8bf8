"""The periodic response to a sinusoidal input, from the complex amplitude (i omega I - A)^-1 b.

An input f(t) = b0 + Re(b e^{i omega t}) (sines and cosines at one
frequency, plus constants) has the periodic particular response
x_p = -A^-1 b0 + Re(X e^{i omega t}) with X = (i omega I - A)^-1 b, whenever
neither 0 (with b0 != 0) nor i omega is an eigenvalue.  Each state's part is
written offset + amplitude*sin(omega t + phase).
"""

from __future__ import annotations

from typing import Mapping

import sympy as sp

from ..model import Solution
from .evaluation import decided_sign
from .records import SinusoidalReading

__all__ = ["sinusoidal_input", "sinusoidal_reading"]


def sinusoidal_input(f: sp.MatrixBase, t: sp.Symbol) -> tuple[sp.Expr, sp.Matrix, sp.Matrix] | None:
    """(omega, b0, b) with f = b0 + Re(b e^{i omega t}), or None when f is not of that form.

    >>> t = sp.Symbol("t")
    >>> sinusoidal_input(sp.Matrix([3 * sp.sin(2 * t) + 1]), t)
    (2, Matrix([[1]]), Matrix([[-3*I]]))
    """
    omega: sp.Expr | None = None
    b0 = sp.zeros(f.shape[0], 1)
    b = sp.zeros(f.shape[0], 1)
    for i, e in enumerate(f):
        for term in sp.Add.make_args(sp.expand(e)):
            if not term.has(t):
                b0[i] += term
                continue
            waves = [a for a in sp.Mul.make_args(term) if a.has(t)]
            if len(waves) != 1 or not isinstance(waves[0], (sp.sin, sp.cos)):
                return None
            arg = waves[0].args[0]
            w = sp.diff(arg, t)
            if w.has(t) or (omega is not None and sp.simplify(w - omega) != 0):
                return None
            omega = w if omega is None else omega
            lag = sp.exp(sp.I * (arg - w * t))
            coefficient = term / waves[0]
            # cos(w t + p) = Re(e^{ip} e^{iwt}); sin(w t + p) = Re(-i e^{ip} e^{iwt})
            b[i] += coefficient * lag * (1 if isinstance(waves[0], sp.cos) else -sp.I)
    if omega is None:
        return None
    return omega, b0, b


def sinusoidal_reading(solution: Solution, values: Mapping[sp.Symbol, sp.Expr]) -> dict[str, SinusoidalReading] | None:
    """Each state's offset, amplitude and phase (relative to sin(omega t)) under a sinusoidal input; exact.

    >>> import derive
    >>> t = sp.Symbol("t")
    >>> r = sinusoidal_reading(derive.solve([[-1]], [sp.sin(t)], t=t), {})
    >>> r["x_1"].amplitude, r["x_1"].phase
    (sqrt(2)/2, -pi/4)
    """
    sy = solution.system
    sub = dict(values)
    found = sinusoidal_input(sp.Matrix(sy.f), sy.t)
    if found is None:
        return None
    omega, b0, b = found
    A = sp.Matrix(sy.A)
    n = A.shape[0]
    shifted = sp.I * omega * sp.eye(n) - A
    det = sp.simplify(shifted.det().xreplace(sub))
    if decided_sign(sp.Abs(det)) == 0:
        return None  # i omega is an eigenvalue: resonance, no periodic response
    X = shifted.LUsolve(b)
    offset = sp.zeros(n, 1)
    if any(e != 0 for e in b0):
        if decided_sign(sp.Abs(sp.simplify(A.det().xreplace(sub)))) == 0:
            return None
        offset = -A.LUsolve(b0)
    out: dict[str, SinusoidalReading] = {}
    for state, Xi, ci in zip(sy.states, X, offset):
        re, im = sp.simplify(Xi.xreplace(sub)).as_real_imag()
        re, im = sp.simplify(re), sp.simplify(im)
        amplitude = sp.simplify(sp.sqrt(sp.factor(sp.cancel(re**2 + im**2))))
        phase = sp.simplify(sp.atan2(im, re) + sp.pi / 2)
        if not phase.free_symbols and phase.is_number and float(sp.N(phase)) > float(sp.pi):
            phase = sp.simplify(phase - 2 * sp.pi)
        out[state.name] = SinusoidalReading(omega.xreplace(sub), amplitude, phase, sp.simplify(ci.xreplace(sub)))
    return out
