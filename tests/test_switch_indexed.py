"""The join at a switch when the eigenvalues are indexed complex roots (issue 17).

A cubic of our own, lambda^3 + 2 lambda^2 + 3 lambda + 5, has one real root and
a complex pair whose radical form is judged too large: the roots stay indexed
(CRootOf), the pair is written sigma +- i omega, and a unit step at t = 1 makes
two pieces.  The state handed across the switch mixes sigma, omega and the roots
themselves; the gap x(1+) - x(1-) vanishes only by the relations between the
roots of the cubic (``derive.rootrelations``), and a wrong piece must still be
caught.
"""

from __future__ import annotations

import sympy as sp

import derive
from derive.realroots import pair_parts
from derive.rootrelations import vanishes, vanishing
from derive.verify import PieceRecord, verify_solution

t = sp.Symbol("t")
lam = sp.Symbol("lambda")
CUBIC = lam**3 + 2 * lam**2 + 3 * lam + 5
A = [[0, 1, 0], [0, 0, 1], [-5, -3, -2]]
F = [0, 0, sp.Heaviside(t - 1)]
X0 = [1, 0, 0]


def _pieces(sol: derive.Solution) -> list[PieceRecord]:
    """The two intervals of the Piecewise result as verification records."""
    before = sp.ImmutableMatrix([e.args[0][0] for e in sol.x])
    after = sp.ImmutableMatrix([e.args[1][0] for e in sol.x])
    zero = sp.ImmutableMatrix([0, 0, 0])
    return [
        PieceRecord(sp.Integer(0), sp.Integer(1), zero, before, zero),
        PieceRecord(sp.Integer(1), None, sp.ImmutableMatrix([0, 0, 1]), after, zero),
    ]


def test_relations_between_roots_decide_exactly() -> None:
    r = [sp.CRootOf(CUBIC, k) for k in range(3)]
    # Vieta (common practice): r0 + r1 + r2 = -2, r0 r1 r2 = -5; neither holds root by root
    assert vanishes(r[0] + r[1] + r[2] + 2)
    assert vanishes(r[0] * r[1] * r[2] + 5)
    assert not vanishes(r[0] * r[1] * r[2] - 5)
    assert not vanishes(r[0] - r[1])
    # sigma of the pair is (r + conj r)/2: with the real root, 2 sigma + r_real = -2
    real = next(x for x in r if x.is_real)
    sigma, omega, upper = pair_parts(next(x for x in r if not x.is_real))
    assert vanishes(2 * sigma + real + 2)
    # |r|^2 = sigma^2 + omega^2 and r_real |r|^2 = -5
    assert vanishes(real * (sigma**2 + omega**2) + 5)
    assert not vanishes(real * (sigma**2 - omega**2) + 5)
    # held functions of numbers: cos^2 + sin^2 = 1 is known, e^sigma is a generator
    assert vanishes(sp.exp(sigma) * (sp.cos(omega) ** 2 + sp.sin(omega) ** 2 - 1))
    assert not vanishes(sp.exp(sigma) - sp.exp(real))
    # anything else is "not settled", never a verdict
    assert vanishing([real + sp.Symbol("a"), 2 * sigma + real + 2]) == [False, True]


def test_switch_with_indexed_complex_pair_joins_exactly() -> None:
    sol = derive.solve(A, F, t=t, x0=X0)
    assert any(isinstance(ev, sp.CRootOf) and ev.is_real is False for ev in sol.eigenvalues)
    ver = sol.verification
    assert ver.ok and ver.residual_method == "exact"
    assert "At t = 1: continuity x(t+) = x(t-) holds exactly." in ver.notes
    before, after = _pieces(sol)
    gap = [a.xreplace({t: 1}) - b.xreplace({t: 1}) for a, b in zip(after.x, before.x)]
    assert any(g != 0 for g in gap)  # not zero as it stands: the relations are needed
    assert vanishing(gap) == [True, True, True]


def test_a_wrong_piece_after_the_switch_is_caught() -> None:
    sol = derive.solve(A, F, t=t, x0=X0)
    before, after = _pieces(sol)
    real = next(ev for ev in sol.eigenvalues if ev.is_real)
    # plus a free motion e^{r (t - 1)} v of the real mode, 10^-9 in size: the residual stays
    # zero, the join is off by 10^-9 v at t = 1
    v = [1, real, real**2]
    eps = sp.Rational(1, 10**9)
    wrong = sp.ImmutableMatrix([x + eps * vi * sp.exp(real * (t - 1)) for x, vi in zip(after.x, v)])
    bad = PieceRecord(after.start, after.end, after.f, wrong, after.jump)
    gap = [a.xreplace({t: 1}) - b.xreplace({t: 1}) for a, b in zip(wrong, before.x)]
    assert vanishing(gap) == [False, False, False]
    ver = verify_solution(sol.system, [before, bad], numeric=False)
    assert not ver.ok and not ver.residual_zero
    assert any(n.startswith("At t = 1: the pieces do NOT join") for n in ver.notes)
