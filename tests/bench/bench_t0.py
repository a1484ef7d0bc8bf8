"""Timing of an initial value problem at t0 = 1 against t0 = 0 (issue: time shift).

Prints, per case, the best of N runs of ``derive.solve`` from t0 = 0 and from
t0 = 1 (the stage list solves the latter in tau = t - t0), and with
``--before`` one run of the route without the shift (the stages composed by
hand, as ``solve_system`` composed them before), which takes minutes on the
symbolic case.  Every run starts from a cold sympy cache (as a user's one
solve does): warm, the run at t0 = 0 would reuse the cache of the run before
while the shifted run, with fresh stand-in symbols, cannot, and the ratio
would measure the cache.  The two times of a row and their ratio come from
one run of this script.  A script, not a test: wall-clock time is never asserted.

    .venv/bin/python tests/bench/bench_t0.py [--repeat 3] [--before] [--only NAME]
"""

from __future__ import annotations

import argparse
import time
from typing import Any, Callable

import sympy as sp
from sympy.core.cache import clear_cache

import derive
from derive.pipeline import build_system
from derive.solving.assembly import assemble
from derive.solving.methods import Problem, choose_method
from derive.spectral import decompose

t = sp.Symbol("t", real=True)
c, k, m = sp.symbols("c k m", positive=True)

#: name -> (A, f, x0); scenarios of our own
CASES: dict[str, tuple[Any, Any, Any]] = {
    "symbolic spring-mass-damper, sin 2t": ([[0, 1], [-k / m, -c / m]], [0, sp.sin(2 * t) / m], [1, 0]),
    "numeric 3-state chain, sin 2t + e^(-t/2)": (
        [[0, 1, 0], [0, 0, 1], [-6, -11, -6]], [0, 0, sp.sin(2 * t) + sp.exp(-t / 2)], [1, -1, 2]),
    "numeric 2-state, step at t = 2": ([[0, 1], [-2, -3]], [0, sp.Heaviside(t - 2)], [1, 0]),
}


def _unshifted(A: Any, f: Any, x0: Any, t0: Any) -> Any:
    """The stages as composed before the shift: decompose, the method at t0, assemble."""
    system, _ = build_system(A, f, t=t, x0=x0, t0=t0)
    dec = decompose(system.A, values=system.parameter_values(), strict=False)
    problem = Problem.of(system, dec)
    return assemble(problem, choose_method(problem).solve(problem), steps=tuple(dec.steps))


def _best(fns: list[Callable[[], Any]], repeat: int) -> list[tuple[float, bool]]:
    """Best time and verdict of each function; the runs alternate, so a load change on a shared machine hits all."""
    best, ok = [float("inf")] * len(fns), [True] * len(fns)
    for _ in range(repeat):
        for i, fn in enumerate(fns):
            clear_cache()
            start = time.perf_counter()
            sol = fn()
            best[i] = min(best[i], time.perf_counter() - start)
            ok[i] = ok[i] and sol.verification.ok
    return list(zip(best, ok))


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3)
    ap.add_argument("--before", action="store_true", help="also time the route without the shift (once; slow)")
    ap.add_argument("--only", default="", help="run the cases whose name contains this")
    args = ap.parse_args()
    derive.solve([[-1]], x0=[1])  # warm the imports
    head = f"{'case':44s} {'t0 = 0':>9s} {'t0 = 1':>9s} {'ratio':>6s}"
    print(head + (f" {'before, t0 = 1':>15s}" if args.before else ""))
    for name, (A, f, x0) in CASES.items():
        if args.only and args.only not in name:
            continue
        (zero, ok0), (one, ok1) = _best(
            [lambda: derive.solve(A, f, t=t, x0=x0, t0=0), lambda: derive.solve(A, f, t=t, x0=x0, t0=1)], args.repeat
        )
        row = f"{name:44s} {zero:8.2f}s {one:8.2f}s {one / zero:6.2f}"
        if args.before:
            [(old, okb)] = _best([lambda: _unshifted(A, f, x0, 1)], 1)
            row += f" {old:14.2f}s" + ("" if okb else " (not verified)")
        print(row + ("" if ok0 and ok1 else "  (not verified)"))


if __name__ == "__main__":
    main()
