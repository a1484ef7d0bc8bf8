"""Timing of the verification of switched inputs: a 2-state step, pulse and impulse case.

Prints, per case, the best of five runs of ``derive.solve`` and of the
verification inside it (``derive.forcing.verify_pieces``, wrapped by a timer
here).  A script, not a test: wall-clock time is never asserted.

    .venv/bin/python tests/bench/bench_verify_pieces.py
"""

from __future__ import annotations

import time

import sympy as sp

import derive
import derive.forcing as forcing

t = sp.Symbol("t")
A = [[0, 1], [-2, -3]]
CASES = {
    "step": [0, sp.Heaviside(t - 1)],
    "pulse": [0, sp.Heaviside(t - 1) - sp.Heaviside(t - 2)],
    "impulse": [0, sp.DiracDelta(t - 1)],
    "exponential (reference)": [0, sp.exp(-t / 2)],
}


def main() -> None:
    spent: list[float] = []
    inner = forcing.verify_pieces

    def timed(*args, **kwargs):
        start = time.perf_counter()
        try:
            return inner(*args, **kwargs)
        finally:
            spent.append(time.perf_counter() - start)

    forcing.verify_pieces = timed  # type: ignore[assignment]
    derive.solve(A, CASES["step"], t=t, x0=[1, 0])  # warm the caches once
    for name, f in CASES.items():
        whole, checks = [], []
        for _ in range(5):
            spent.clear()
            start = time.perf_counter()
            sol = derive.solve(A, f, t=t, x0=[1, 0])
            whole.append(time.perf_counter() - start)
            checks.append(sum(spent))
            assert sol.ok
        method = sol.verification.numeric.method if sol.verification.numeric else "-"
        print(f"{name:24s} solve {min(whole):.3f} s   verification {min(checks):.3f} s   ({method})")


if __name__ == "__main__":
    main()
