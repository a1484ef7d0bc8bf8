"""A 6-state chain with indexed complex roots solves, verifies and stays in real form (issue 17, item 4).

Three carts of our own (masses 1, 2, 3; springs 1, 2, 3; a damper 1/2 on the
first cart; a push sin(2t)/3 on the third): the characteristic polynomial is an
irreducible sextic with three complex pairs.  The exact answer is compared with
scipy's solve_ivp (reference library, DOP853 at rtol 1e-12, tests/reference.py)
at a few times.  Timing lives in tests/bench/bench_chain.py, never here.
"""

from __future__ import annotations

import numpy as np
import sympy as sp

from bench.bench_chain import CHAIN_A, CHAIN_F, CHAIN_X0, t
from reference import ivp_values
from derive import solve
from derive.rootring import atoms_of


def _value(e: sp.Expr, tv: float) -> float:
    e = e.xreplace({r: r.eval_approx(35) for r in atoms_of(e, sp.CRootOf)}).xreplace({t: sp.Float(tv, 30)})
    return complex(sp.N(e, 25)).real


def test_chain_with_indexed_roots_solves_verifies_in_real_form() -> None:
    sol = solve(CHAIN_A, CHAIN_F, t=t, x0=CHAIN_X0)  # raises VerificationError unless verified
    assert any(isinstance(ev, sp.CRootOf) and ev.is_real is False for ev in sol.eigenvalues)
    ver = sol.verification
    assert ver.ok and ver.residual_zero and ver.residual_method == "exact" and ver.initial_ok
    # real form: no i, only real indexed roots (sigma_k, omega_k), real rates only
    assert not sol.x.has(sp.I)
    assert all(r.is_real for r in atoms_of(sol.x, sp.CRootOf))
    for a in atoms_of(sol.x, sp.exp, sp.sin, sp.cos):
        rate = sp.diff(a.args[0], t)
        assert not rate.has(sp.I) and all(r.is_real for r in atoms_of(rate, sp.CRootOf))
    times = [0.0, 0.7, 2.5, 6.0]
    ref = ivp_values(CHAIN_A, CHAIN_F, CHAIN_X0, times, t=t)
    ours = np.array([[_value(e, tv) for tv in times] for e in sol.x])
    assert np.allclose(ours, ref, rtol=1e-8, atol=1e-9)
