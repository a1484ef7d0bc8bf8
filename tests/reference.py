"""Numeric references outside the program, for tests that compare a solution with them.

- ``expm_values``: x(t) = e^{A (t - t0)} x0 by scipy.linalg.expm (scaling and
  squaring with Pade approximants, Al-Mohy and Higham, SIAM J. Matrix Anal. Appl.
  31 (2009); common practice);
- ``ivp_values``: x(t) by scipy.integrate.solve_ivp with DOP853 (the Dormand-Prince
  8(5,3) pair of Hairer, Norsett and Wanner, Solving Ordinary Differential Equations
  I, 2nd ed., section II.10; common practice) at tight tolerances;
- ``solution_values``: our x(t) evaluated by sympy at 30 digits, for comparison.
"""

from __future__ import annotations

from typing import Any, Sequence

import numpy as np
import sympy as sp
from scipy.integrate import solve_ivp
from scipy.linalg import expm


def _float_matrix(A: Any) -> np.ndarray:
    return np.array(sp.Matrix(A).evalf(30).tolist(), dtype=complex)


def expm_values(A: Any, x0: Sequence[Any], times: Sequence[float], *, t0: float = 0.0) -> np.ndarray:
    """Columns e^{A (t - t0)} x0 for t in ``times`` (scipy.linalg.expm)."""
    An = _float_matrix(A)
    x = np.array([complex(sp.N(v, 30)) for v in x0])
    return np.array([expm(An * (tv - t0)) @ x for tv in times]).T


def ivp_values(A: Any, f: Sequence[Any] | None, x0: Sequence[Any], times: Sequence[float], *,
               t0: float = 0.0, t: sp.Symbol | None = None) -> np.ndarray:
    """Columns x(t) for t in ``times`` (solve_ivp, DOP853, rtol = atol = 1e-12); f is
    a list of sympy expressions in ``t`` (smooth on the span)."""
    t = t if t is not None else sp.Symbol("t")
    An = _float_matrix(A).real
    n = An.shape[0]
    fn = sp.lambdify(t, [sp.sympify(g) for g in (f if f is not None else [0] * n)], "numpy")

    def rhs(tt: float, y: np.ndarray) -> np.ndarray:
        return An @ y + np.array([complex(v).real for v in fn(tt)])

    x = np.array([float(sp.N(v, 30)) for v in x0])
    out = solve_ivp(rhs, (t0, max(times)), x, method="DOP853", rtol=1e-12, atol=1e-12, t_eval=sorted(times))
    assert out.success, out.message
    return out.y


def solution_values(x: Any, times: Sequence[float], *, t: sp.Symbol | None = None) -> np.ndarray:
    """Columns of the sympy vector ``x`` evaluated at ``times`` with 30 digits."""
    t = t if t is not None else sp.Symbol("t")
    return np.array([[complex(sp.N(e.subs(t, sp.Float(tv, 30)), 30)) for e in x] for tv in sorted(times)]).T


def assert_close(ours: np.ndarray, ref: np.ndarray, *, rtol: float = 1e-9) -> None:
    """Max gap relative to max(1, |ref|), and ours real where the reference is."""
    scale = max(1.0, float(np.max(np.abs(ref))))
    gap = float(np.max(np.abs(ours - ref))) / scale
    assert gap < rtol, f"relative gap {gap:.3e} >= {rtol:g}\nours\n{ours}\nreference\n{ref}"
