"""Switched inputs and impulses against a closed-form input of the same size.

For each system (2 states, 3 states, a symbolic parameter) ``derive.solve``
is timed with an exponential input (the closed-form reference), a step, an
impulse and a pulse, from the same x0.  Each solve starts with sympy's cache
cleared (and derive's own memo of the forcing column), so a repeat does not
find the previous solve's expressions; the figure is the best of ``--repeat``
runs (timeit's convention: the run the machine disturbed least).  The time
includes the verification (residual of every piece, joins, x(t0) and the
numeric check), not the rendering of a sheet.

A script, not a test: nothing is asserted on time.

    .venv/bin/python tests/bench/bench_switched.py                 # best of 7
    .venv/bin/python tests/bench/bench_switched.py --repeat 3 --only 2-state
    .venv/bin/python tests/bench/bench_switched.py --profile "2-state/pulse"
    .venv/bin/python tests/bench/bench_switched.py --cpu           # CPU clock, for a busy machine
"""

from __future__ import annotations

import os

# one core: BLAS threads would blur the times on a shared machine (set before numpy loads)
for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import cProfile  # noqa: E402
import pstats  # noqa: E402
import time  # noqa: E402
from typing import Any  # noqa: E402

import sympy as sp  # noqa: E402
from sympy.core.cache import clear_cache  # noqa: E402

import derive  # noqa: E402
from derive.solving.methods.closed import expoly_column  # noqa: E402

t = sp.Symbol("t")
k = sp.Symbol("k", positive=True)

# name -> (A, x0, the entry of f that carries the input)
SYSTEMS: dict[str, tuple[list, list, int]] = {
    "2-state": ([[0, 1], [-2, -3]], [1, 0], 1),
    "3-state": ([[0, 1, 0], [0, 0, 1], [-6, -11, -6]], [1, 0, 0], 2),
    "symbolic": ([[-k, 1], [0, -2]], [1, 0], 1),
}

INPUTS: dict[str, sp.Expr] = {
    "exponential": sp.exp(-t / 2),
    "step": sp.Heaviside(t - 1),
    "impulse": sp.DiracDelta(t - 1),
    "pulse": sp.Heaviside(t - 1) - sp.Heaviside(t - 2),
}


def _forcing(system: str, inp: str) -> list[sp.Expr]:
    A, _, row = SYSTEMS[system]
    f = [sp.Integer(0)] * len(A)
    f[row] = INPUTS[inp]
    return f


def _solve(system: str, inp: str) -> Any:
    A, x0, _ = SYSTEMS[system]
    return derive.solve(A, _forcing(system, inp), t=t, x0=x0)


def _fresh() -> None:
    clear_cache()
    expoly_column.cache_clear()


def best_of(system: str, inp: str, repeat: int, clock=time.perf_counter) -> float:
    """The fastest of ``repeat`` solves, each from a cleared cache."""
    times = []
    for _ in range(repeat):
        _fresh()
        start = clock()
        sol = _solve(system, inp)
        times.append(clock() - start)
        if not sol.ok:  # pragma: no cover - a benchmark of a wrong answer means nothing
            raise SystemExit(f"{system}/{inp} did not verify")
    return min(times)


def profile(name: str, top: int) -> None:
    system, inp = name.split("/")
    _solve(system, inp)  # the first solve of a process loads modules
    _fresh()
    prof = cProfile.Profile()
    prof.enable()
    _solve(system, inp)
    prof.disable()
    stats = pstats.Stats(prof)
    stats.sort_stats("cumulative").print_stats(top)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    parser.add_argument("--repeat", type=int, default=7, help="best of N solves per case (default 7)")
    parser.add_argument("--only", action="append", choices=list(SYSTEMS), help="one system (repeatable)")
    parser.add_argument("--profile", metavar="SYSTEM/INPUT", help="cProfile one solve instead of timing")
    parser.add_argument("--top", type=int, default=45, help="rows of the profile (default 45)")
    parser.add_argument(
        "--cpu", action="store_true", help="time by the process's CPU clock (steadier on a busy machine)"
    )
    args = parser.parse_args()
    if args.profile:
        profile(args.profile, args.top)
        return
    for inp in INPUTS:  # load modules and warm every code path once
        _solve("2-state", inp)
    clock = time.process_time if args.cpu else time.perf_counter
    what = "CPU time" if args.cpu else "wall-clock time"
    print(f"derive.solve, {what}, best of {args.repeat}, sympy cache cleared before each solve (ms; ratio to exponential)")
    print(f"{'system':10s}" + "".join(f"{name:>20s}" for name in INPUTS))
    for system in args.only or list(SYSTEMS):
        times = {inp: best_of(system, inp, args.repeat, clock) for inp in INPUTS}
        ref = times["exponential"]
        cells = [f"{1000 * s:8.1f} ({s / ref:4.1f}x)" for s in times.values()]
        print(f"{system:10s}" + "".join(f"{c:>20s}" for c in cells))


if __name__ == "__main__":
    main()
