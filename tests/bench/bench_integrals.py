"""Benchmark: the closed-form integrator against sympy's integrate.

Not part of the test run (no test functions):

    .venv/bin/python tests/bench/bench_integrals.py [--repeat 3]

For a fixed set of integrands e^{-lam s} g(s), with g an exponential
polynomial of the kinds forcing terms take (polynomials, exponentials,
sinusoids, products, resonant cases, a symbolic rate), it times

- ours: ``to_expoly`` + ``integrate_against`` (the formula path the solver uses), and
- sympy: ``sympy.integrate(exp(-lam*s) * g(s), s)``,

checks that each of our antiderivatives differentiates back to the integrand,
and prints per-integral times, the ratio sympy/ours, and the total and median
ratios.  Each call runs on a cleared sympy cache so neither side profits from
the other's work.
"""

from __future__ import annotations

import argparse
import statistics
import time

import sympy as sp
from sympy.core.cache import clear_cache

from derive.exact import is_zero_number
from derive.expoly import integrate_against, to_expoly

s = sp.Symbol("s", real=True)
k = sp.Symbol("k", positive=True)

#: (name, eigenvalue lam, forcing g(s)); invented, covering each forcing class.
INTEGRALS: tuple[tuple[str, sp.Expr, sp.Expr], ...] = (
    ("constant", sp.Integer(-2), sp.Integer(3)),
    ("ramp", sp.Integer(-1), 2 * s),
    ("cubic", sp.Rational(-1, 2), s**3 - 2 * s + 1),
    ("exponential", sp.Integer(-3), sp.exp(-s)),
    ("resonant-exp", sp.Integer(-1), sp.exp(-s)),
    ("t*exp resonant", sp.Integer(-2), s**2 * sp.exp(-2 * s)),
    ("sine", sp.Integer(-1), sp.sin(2 * s)),
    ("cosine-phase", sp.Rational(-1, 5), sp.cos(3 * s + 1)),
    ("damped sine", sp.Integer(-2), sp.exp(-s) * sp.sin(s)),
    ("t*cos", sp.Integer(-1), s * sp.cos(s)),
    ("t^2*sin*exp", sp.Integer(-3), s**2 * sp.exp(-s / 2) * sp.sin(4 * s)),
    ("resonant sine", sp.I * 2, sp.sin(2 * s)),
    ("complex eig, cos", -1 + 2 * sp.I, sp.cos(s)),
    ("radical eig", (1 - sp.sqrt(5)) / 2, s * sp.exp(-s)),
    ("sinh", sp.Integer(-4), sp.sinh(s) + sp.cosh(2 * s)),
    ("symbolic rate", -k, sp.exp(-2 * s) + s),
)


def _ours(lam: sp.Expr, g: sp.Expr) -> sp.Expr:
    res = integrate_against(to_expoly(g, s), lam, is_zero=is_zero_number)
    return res.antiderivative.to_expr(s)


def _theirs(lam: sp.Expr, g: sp.Expr) -> sp.Expr:
    return sp.integrate(sp.exp(-lam * s) * g, s)


def _timed(fn, *args, repeat: int) -> tuple[float, sp.Expr]:
    best = float("inf")
    out = None
    for _ in range(repeat):
        clear_cache()
        start = time.perf_counter()
        out = fn(*args)
        best = min(best, time.perf_counter() - start)
    return best, out


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--repeat", type=int, default=3, help="best of this many runs per integral")
    args = ap.parse_args(argv)
    rows = []
    for name, lam, g in INTEGRALS:
        t_ours, ours = _timed(_ours, lam, g, repeat=args.repeat)
        t_theirs, _ = _timed(_theirs, lam, g, repeat=args.repeat)
        integrand = sp.exp(-lam * s) * g
        ok = sp.simplify(sp.expand((sp.diff(ours, s) - integrand).rewrite(sp.exp))) == 0
        rows.append((name, t_ours, t_theirs, ok))
    print(f"{'integral':<18} {'ours s':>9} {'sympy s':>9} {'ratio':>8}  derivative check")
    for name, a, b, ok in rows:
        print(f"{name:<18} {a:9.4f} {b:9.4f} {b / a:7.1f}x  {'ok' if ok else 'WRONG'}")
    total_ours = sum(r[1] for r in rows)
    total_theirs = sum(r[2] for r in rows)
    med = statistics.median(r[2] / r[1] for r in rows)
    print(f"\ntotal: ours {total_ours:.3f} s, sympy integrate {total_theirs:.3f} s, ratio {total_theirs / total_ours:.1f}x")
    print(f"median ratio per integral: {med:.1f}x; derivative check: {sum(r[3] for r in rows)}/{len(rows)} ok")
    return 0 if all(r[3] for r in rows) else 1


if __name__ == "__main__":
    raise SystemExit(main())
