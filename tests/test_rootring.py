"""Arithmetic with indexed roots in Q[i, z]/(i^2 + 1, q(z)) (derive.rootring).

Each exact result is compared with the same expression evaluated at 40 digits
with mpmath's values of the roots (common practice: an identity of algebraic
numbers checked numerically at high precision), and the normal forms are
checked to have the shape the module promises.
"""

from __future__ import annotations

import pytest
import sympy as sp

from derive.rootring import atoms_of, collected, expand_number, plainly_nonzero, real_imag, reduce_number

x = sp.Symbol("x")
#: an irreducible quintic with one real root and two complex pairs, and a cubic with one pair
QUINTIC = x**5 + 4 * x**4 + 10 * x**3 + 14 * x**2 + 13 * x + 7
CUBIC = x**3 + x + 1


def value(e: sp.Expr) -> complex:
    e = e.xreplace({r: r.eval_approx(45) for r in atoms_of(e, sp.CRootOf)})
    return complex(sp.N(e, 40))


def degree_in(e: sp.Expr, r: sp.Expr) -> int:
    z = sp.Dummy("z")
    return sp.Poly(e.xreplace({r: z}), z).degree()


@pytest.mark.parametrize("k", range(5))
def test_reduced_with_a_denominator_matches_the_value(k: int) -> None:
    r = sp.CRootOf(QUINTIC, k)
    e = (r**7 + sp.I * r**2 - 3) / (2 * sp.I - r) + r**3 / 5
    got = reduce_number(e)
    assert got is not None
    assert degree_in(got.coeff(sp.I, 0) if got.has(sp.I) else got, r) <= 4  # below the degree of q
    assert not any(p.exp.is_negative for p in atoms_of(got, sp.Pow))  # the denominator is cleared
    assert abs(value(got) - value(e)) < 1e-30 * max(1.0, abs(value(e)))


def test_sum_over_all_roots_is_rational() -> None:
    roots = [sp.CRootOf(QUINTIC, k) for k in range(5)]
    s = sp.Add(*[(r**3 + 2 * r) / (3 - r) for r in roots])
    got = reduce_number(s)
    assert got is not None and got.is_Rational
    assert abs(complex(got) - value(s)) < 1e-30


def test_power_sums_by_newton() -> None:
    roots = [sp.CRootOf(QUINTIC, k) for k in range(5)]
    for e in range(1, 9):
        got = reduce_number(sp.Add(*[r**e for r in roots]))
        assert got is not None and got.is_Rational
        assert abs(complex(got) - value(sp.Add(*[r**e for r in roots]))) < 1e-30


def test_outside_the_ring_is_left_alone() -> None:
    r = sp.CRootOf(QUINTIC, 1)
    assert reduce_number(r + sp.sqrt(2)) is None
    assert reduce_number(r + sp.Symbol("a")) is None
    assert reduce_number(sp.Integer(3)) is None  # no root: nothing to do here


def test_expand_and_collect_agree_with_sympy() -> None:
    r = sp.CRootOf(CUBIC, 0)
    t = sp.Symbol("t")
    e = (r + sp.I * t) ** 3 * (sp.cos(2 * t) - r * sp.sin(2 * t)) + (r - 1) ** 2 * sp.sin(2 * t)
    assert sp.expand(expand_number(e) - sp.expand(e)) == 0
    parts = collected(e, [sp.cos(2 * t), sp.sin(2 * t)])
    assert parts is not None
    ref = sp.collect(sp.expand(e), [sp.cos(2 * t), sp.sin(2 * t)], evaluate=False)
    assert {k: sp.expand(v) for k, v in parts} == {k: sp.expand(v) for k, v in ref.items()}


def test_real_and_imaginary_parts() -> None:
    r = sp.CRootOf(CUBIC, 1)  # complex
    sg, om = sp.Symbol("sigma", real=True), sp.Symbol("omega", real=True)
    upper = complex(r.eval_approx(30)).imag > 0
    sign = 1 if upper else -1
    re, im = real_imag(r**2 + sp.I * r, lambda root: (sg, om, sign) if root == r else None)
    z = sg + sign * sp.I * om
    want = sp.expand(z**2 + sp.I * z)
    assert sp.expand(re - sp.re(want)) == 0 and sp.expand(im - sp.im(want)) == 0


def test_plainly_nonzero_by_degree() -> None:
    r = sp.CRootOf(QUINTIC, 2)
    assert plainly_nonzero(2 * sp.I - r)
    assert plainly_nonzero(sp.Rational(1, 3) + sp.I)
    assert not plainly_nonzero(r**5 + 4 * r**4 + 10 * r**3 + 14 * r**2 + 13 * r + 7)  # zero
    assert not plainly_nonzero(r**2 - r)  # not settled by degree alone


def test_real_parts_hold_real_exponentials_and_reject_complex_ones() -> None:
    r = sp.CRootOf(CUBIC, 1)  # complex
    s = sp.CRootOf(CUBIC, 0)  # real
    sg, om = sp.Symbol("sigma", real=True), sp.Symbol("omega", real=True)
    parts = lambda root: (sg, om, 1) if root == r else None  # noqa: E731
    got = real_imag(sp.exp(s) * sp.cos(s) * (r + sp.I), parts)
    assert got is not None
    assert sp.expand(got[0] - sp.exp(s) * sp.cos(s) * sg) == 0
    assert sp.expand(got[1] - sp.exp(s) * sp.cos(s) * (om + 1)) == 0
    assert real_imag(sp.exp(r) * 2, parts) is None  # e^r with r complex is not a real generator
    assert real_imag(sp.exp(sp.I * s), parts) is None
