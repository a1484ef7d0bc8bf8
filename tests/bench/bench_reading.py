"""How cheap the tolerance band is: the closed form at the box corners against solving again at each.

Run from the repository root: ``.venv/bin/python tests/bench/bench_reading.py``.
It prints the times; nothing is asserted (the machine is shared).
"""

from __future__ import annotations

import itertools
import time

import numpy as np
import sympy as sp

import derive
from derive.reading import envelope, response, sensitivity


def main() -> None:
    t = sp.Symbol("t")
    k, m, c = sp.symbols("k m c", positive=True)
    values = {k: sp.Integer(4), m: sp.Integer(1), c: sp.Integer(1)}
    sol = derive.solve([[0, 1], [-k / m, -c / m]], [0, 1 / m], t=t, x0=[0, 0], params=values)
    tol = {k: sp.Rational(5, 100), m: sp.Rational(5, 100), c: sp.Rational(10, 100)}
    span, points = 12.0, 400

    start = time.perf_counter()
    band = envelope(sol, tol, span=span, points=points)
    closed = time.perf_counter() - start

    start = time.perf_counter()
    corners = list(itertools.product(*[(v * (1 - tol[p]), v * (1 + tol[p])) for p, v in values.items()]))
    lo = hi = None
    for kk, mm, cc in corners:
        again = derive.solve([[0, 1], [-kk / mm, -cc / mm]], [0, 1 / mm], t=t, x0=[0, 0])
        row = np.array([float(again.x[0].subs(t, s).evalf()) for s in band.times[:: points // 40]])
        lo = row if lo is None else np.minimum(lo, row)
        hi = row if hi is None else np.maximum(hi, row)
    resolved = time.perf_counter() - start
    gap = max(np.max(np.abs(lo - band.lower["x_1"][:: points // 40])), np.max(np.abs(hi - band.upper["x_1"][:: points // 40])))

    start = time.perf_counter()
    reading = response(sol)
    read = time.perf_counter() - start
    start = time.perf_counter()
    for p in (k, m, c):
        sensitivity(sol, p)
    sens = time.perf_counter() - start

    print(f"tolerance band, {band.corners} corners x {points} times, closed form: {closed:.3f} s")
    print(f"re-solving at each corner (and evaluating only {len(lo)} times): {resolved:.3f} s "
          f"({resolved / closed:.0f} x slower); largest gap between the two: {gap:.1e}")
    print(f"response reading (stability, modes, step figures of 2 states): {read:.3f} s")
    print(f"exact sensitivities to k, m, c: {sens:.3f} s")
    print(f"x_1: final {reading.states['x_1'].final_value}, overshoot {reading.states['x_1'].overshoot:.4f}, "
          f"settling {reading.states['x_1'].settling_time:.4f}")


if __name__ == "__main__":
    main()
