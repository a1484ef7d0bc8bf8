"""Timing of a 6-state chain with indexed complex roots (issue 17, item 4): solve, verify, render.

Three carts (masses 1, 2, 3) joined by springs (1 to the wall, 2 and 3 between
the carts), a damper 1/2 on the first cart and a push sin(2t)/3 on the third:
the characteristic polynomial is an irreducible sextic, so the eigenvalues are
three complex pairs of indexed roots, written sigma_k +- i omega_k.  With
``--quintic`` also the 5-state companion case with two complex pairs and a
unit step at t = 1.  Prints seconds per stage; a script, not a test.

    .venv/bin/python tests/bench/bench_chain.py [--no-render] [--quintic]
"""

from __future__ import annotations

import argparse
import time

import sympy as sp

import derive
from derive.render import render
from derive.verify import verify

t = sp.Symbol("t")
R = sp.Rational

#: masses, springs (wall-1, 1-2, 2-3) and the damper on cart 1: a scenario of our own
M1, M2, M3, K1, K2, K3, C = 1, 2, 3, 1, 2, 3, R(1, 2)
CHAIN_A = [
    [0, 0, 0, 1, 0, 0],
    [0, 0, 0, 0, 1, 0],
    [0, 0, 0, 0, 0, 1],
    [-R(K1 + K2, M1), R(K2, M1), 0, -C / M1, 0, 0],
    [R(K2, M2), -R(K2 + K3, M2), R(K3, M2), 0, 0, 0],
    [0, R(K3, M3), -R(K3, M3), 0, 0, 0],
]
CHAIN_F = [0, 0, 0, 0, 0, sp.sin(2 * t) / 3]
CHAIN_X0 = [1, 0, 0, 0, 0, 0]

#: lambda^5 + 4 lambda^4 + 10 lambda^3 + 14 lambda^2 + 13 lambda + 7 (one real root, two pairs)
QUINTIC_A = [[0, 1, 0, 0, 0], [0, 0, 1, 0, 0], [0, 0, 0, 1, 0], [0, 0, 0, 0, 1], [-7, -13, -14, -10, -4]]
QUINTIC_F = [0, 0, 0, 0, sp.Heaviside(t - 1)]
QUINTIC_X0 = [1, 0, 0, 0, -1]


def _run(name: str, A, f, x0, *, do_render: bool) -> None:
    """One case: wall-clock and CPU seconds per stage (CPU time is the fairer number on a shared machine)."""
    wall, cpu = time.perf_counter(), time.process_time()

    def lap() -> str:
        nonlocal wall, cpu
        w, c = time.perf_counter(), time.process_time()
        out = f"{w - wall:.1f} s (CPU {c - cpu:.1f} s)"
        wall, cpu = w, c
        return out

    sol = derive.solve(A, f, t=t, x0=x0)  # verified inside (VerificationError otherwise)
    line = f"{name}: solve+verify {lap()}; ok={sol.verification.ok}"
    if not sol.x.has(sp.Piecewise):
        # the verification again, alone, on the finished x(t) (numeric check included)
        again = verify(sol.system, sol.x)
        line += f"; verify alone {lap()}, ok={again.ok}"
    if do_render:
        render(sol, format="latex")
        line += f"; render {lap()}"
    print(line, flush=True)


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--no-render", action="store_true")
    ap.add_argument("--quintic", action="store_true", help="also the quintic with a step at t = 1")
    args = ap.parse_args()
    _run("6-state chain, sin 2t", CHAIN_A, CHAIN_F, CHAIN_X0, do_render=not args.no_render)
    if args.quintic:
        _run("5-state quintic, step at t = 1", QUINTIC_A, QUINTIC_F, QUINTIC_X0, do_render=not args.no_render)


if __name__ == "__main__":
    main()
