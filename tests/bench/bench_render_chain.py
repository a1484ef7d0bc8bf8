"""Timing of the sheet of a 6-state chain with indexed complex roots (issue 17): render stages, by format.

Three carts of our own (masses 1, 2, 3; springs 1, 2, 3; a damper 1/2 on the
first cart; a push sin(2t)/3 on the third) give an irreducible degree-6
characteristic polynomial, so the answer holds indexed roots in real form
sigma_k +- i omega_k.  The script solves once (or loads a pickled Solution
with ``--load``), then prints, per format, the best of N renders, and the
share of the stages that are measured apart: the indexed roots' names
(``collect_roots``), the engineering reading (``Solution.response``, computed
once, under its own time limit) and the compact Result.  A script, not a
test: wall-clock time is never asserted.

    .venv/bin/python tests/bench/bench_render_chain.py [--repeat 2] [--load FILE] [--save FILE]
"""

from __future__ import annotations

import argparse
import dataclasses
import pickle

import sympy as sp

import derive
from derive.model import Solution
from derive.documents.result import result_forms
from derive.documents.sheet_steps import StepContext
from derive.render import render
from derive.render.printing import MathFormatter, collect_roots
from timing import best_time  # tests/bench/timing.py (the scripts run from this folder)

t = sp.Symbol("t")


def chain() -> Solution:
    """The three-cart chain, solved and verified."""
    R = sp.Rational
    m1, m2, m3, k1, k2, k3, c = 1, 2, 3, 1, 2, 3, R(1, 2)
    A = [[0, 0, 0, 1, 0, 0], [0, 0, 0, 0, 1, 0], [0, 0, 0, 0, 0, 1],
         [-R(k1 + k2, m1), R(k2, m1), 0, -c / m1, 0, 0],
         [R(k2, m2), -R(k2 + k3, m2), R(k3, m2), 0, 0, 0],
         [0, R(k3, m3), -R(k3, m3), 0, 0, 0]]
    f = [0, 0, 0, 0, 0, sp.sin(2 * t) / 3]
    return derive.solve(A, f, t=t, x0=[1, 0, 0, 0, 0, 0])


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--load", help="a pickled Solution of the chain (skips the solve)")
    parser.add_argument("--save", help="pickle the Solution here after solving")
    args = parser.parse_args()
    if args.load:
        with open(args.load, "rb") as fh:
            sol = pickle.load(fh)
        print(f"loaded {args.load}")
    else:
        seconds, sol = best_time(chain, 1)
        print(f"solve + verify: {seconds:8.2f} s")
        if args.save:
            with open(args.save, "wb") as fh:
                pickle.dump(sol, fh)
    seconds, roots = best_time(lambda: collect_roots(sol.eigenvalues, sol.steps, sol.x), args.repeat)
    print(f"{'root names (collect_roots)':34s} {seconds:8.2f} s")
    seconds, _ = best_time(lambda: sol.response, 1)
    print(f"{'reading (first read, then kept)':34s} {seconds:8.2f} s")
    fmt = MathFormatter.for_roots(roots)
    seconds, forms = best_time(lambda: result_forms(sol, StepContext(solution=sol, fmt=fmt, lam=sp.Symbol("lambda"))), args.repeat)
    print(f"{'compact Result (result_forms)':34s} {seconds:8.2f} s  ({len(forms.coefficients)} named coefficients)")
    # the LaTeX renderer keeps the last sheet's work for the fragment written beside it; a copy of
    # the solution per run (the same steps, another object) makes every run do the whole work
    for fmt_name in ("latex", "markdown", "text"):
        seconds, out = best_time(lambda: render(dataclasses.replace(sol), format=fmt_name), args.repeat)
        print(f"{'render ' + fmt_name:34s} {seconds:8.2f} s  ({len(str(out)) / 1000:.0f} k characters)")

    def sheet_and_fragment() -> str:
        # what write_outputs writes for LaTeX: the standalone sheet and its -body fragment
        copy = dataclasses.replace(sol)
        return render(copy, format="latex") + render(copy, format="latex", fragment=True)

    seconds, out = best_time(sheet_and_fragment, args.repeat)
    print(f"{'render latex sheet + fragment':34s} {seconds:8.2f} s  ({len(out) / 1000:.0f} k characters)")


if __name__ == "__main__":
    main()
