"""How cheap the tolerance band is: the closed form at the 2^n box corners against one numeric integration per corner.

Run from the repository root: ``.venv/bin/python tests/bench/bench_tolerance.py``.
It prints the times (the fastest of three runs, timeit's convention) and the
largest gap between the two bands; nothing is asserted (the machine is shared).

The reference integrates x' = A x + f at each corner with scipy's solve_ivp
(DOP853, rtol 1e-10, atol 1e-12) on the same time grid.  The closed form's
one-off costs (the symbolic solve, and compiling x(t; p) once inside
``envelope``) are printed apart: the symbolic solve is paid once for the
sheet anyway.
"""

from __future__ import annotations

import itertools

import numpy as np
import sympy as sp
from scipy.integrate import solve_ivp

import derive
from derive.model import Solution
from derive.reading import Envelope, envelope
from timing import best_time  # tests/bench/timing.py (the scripts run from this folder)


def _integrated(A: sp.Matrix, f: sp.Matrix, x0: list[float], box: dict[sp.Symbol, tuple[sp.Expr, sp.Expr, sp.Expr]],
                t: sp.Symbol, times: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Least and greatest of every state over the corners and the declared values, one solve_ivp run each."""
    symbols = list(box)
    A_of = sp.lambdify(symbols, A, "numpy")
    f_of = sp.lambdify([t, *symbols], f, "numpy")
    lo = hi = None
    sets = [*itertools.product(*[(float(a), float(b)) for a, _, b in box.values()]), tuple(float(v) for _, v, _ in box.values())]
    for corner in sets:
        An = np.array(A_of(*corner), dtype=float)

        def rhs(tt: float, y: np.ndarray, An: np.ndarray = An, corner: tuple[float, ...] = corner) -> np.ndarray:
            return An @ y + np.array(f_of(tt, *corner), dtype=float).ravel()

        run = solve_ivp(rhs, (times[0], times[-1]), x0, method="DOP853", rtol=1e-10, atol=1e-12, t_eval=times)
        lo = run.y if lo is None else np.minimum(lo, run.y)
        hi = run.y if hi is None else np.maximum(hi, run.y)
    assert lo is not None and hi is not None
    return lo, hi


def case(n: int) -> None:
    t = sp.Symbol("t")
    k, m, c, F = sp.symbols("k m c F", positive=True)
    values = {k: sp.Integer(4), m: sp.Integer(1), c: sp.Integer(1), F: sp.Integer(2)}
    A = sp.Matrix([[0, 1], [-k / m, -c / m]])
    f = sp.Matrix([0, F / m])
    varied = [k, c, m, F][:n]
    tol = {p: sp.Rational(5, 100) for p in varied}
    span, points = 12.0, 241

    solve_time, sol = best_time(lambda: derive.solve(A, f, t=t, x0=[0, 0], params=values), repeat=1)
    assert isinstance(sol, Solution)
    closed, band = best_time(lambda: envelope(sol, tol, span=span, points=points))
    assert isinstance(band, Envelope)
    grid, inside = best_time(lambda: envelope(sol, tol, span=span, points=points, levels=3))
    assert isinstance(inside, Envelope)
    box = {p: (values[p] * (1 - tol[p]), values[p], values[p] * (1 + tol[p])) for p in varied}
    fixed = {p: v for p, v in values.items() if p not in box}
    numeric, (lo, hi) = best_time(lambda: _integrated(A.xreplace(fixed), f.xreplace(fixed), [0.0, 0.0], box, t, band.times))  # type: ignore[misc]
    gap = max(float(np.max(np.abs(lo[i] - band.lower[s]))) + float(np.max(np.abs(hi[i] - band.upper[s])))
              for i, s in enumerate(("x_1", "x_2")))
    sets = band.corners + 1
    print(f"n = {n}: {band.corners:2d} corners + declared values, {points} times | closed form {closed * 1e3:6.1f} ms "
          f"({closed / sets * 1e3:4.1f} ms a set, compiling included) | solve_ivp {numeric * 1e3:6.1f} ms "
          f"({numeric / sets * 1e3:4.1f} ms a set; {numeric / closed:4.1f} x) | gap {gap:.1e}")
    print(f"       the 3^n grid ({inside.inside} sets inside, declared values among them): {grid * 1e3:6.1f} ms, "
          f"beyond the corners by {inside.beyond:.1e} | the symbolic solve, once: {solve_time:.2f} s")


def main() -> None:
    print("spring-mass-damper x'' + (c/m) x' + (k/m) x = F/m from rest, 5 % on the first n of k, c, m, F")
    for n in (1, 2, 3, 4):
        case(n)


if __name__ == "__main__":
    main()
