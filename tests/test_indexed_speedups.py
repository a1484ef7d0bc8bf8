"""The indexed-root short cuts of recombine.tidy and timeline.final_value give what the plain forms give.

tidy expands with each indexed root standing in as a symbol, and final_value
expands only the factors in t; both must agree with the plain computation
(sp.expand with the roots as they stand, every term classified).
"""

from __future__ import annotations

import sympy as sp

from derive.recombine import tidy
from derive.reading.timeline import final_value

t = sp.Symbol("t")
z = sp.Symbol("z")
#: z^3 - z - 1: one real root and a complex pair (a polynomial of our own choosing)
Q = z**3 - z - 1
R0, R1 = sp.CRootOf(Q, 0), sp.CRootOf(Q, 1)
#: a real root of a second polynomial, used as a decay rate's sigma stand-in
S = sp.CRootOf(z**3 + 3 * z**2 + 3 * z + sp.Rational(1, 2), 0)  # (z + 1)^3 = 1/2: z = 2^(-1/3) - 1 < 0


def test_tidy_with_indexed_roots_equals_the_grouping_of_the_plain_expansion():
    e = (R0 + 2) * (R0 * sp.exp(S * (t - 1)) * sp.cos(3 * (t - 1)) + 1) + (R0**2 - 1) * sp.exp(S * (t - 1)) * sp.sin(3 * (t - 1)) - sp.Rational(1, 7)
    got = tidy(e, (), t)
    # the same function: the difference expands to zero with the roots as they stand
    assert sp.expand(got - e) == 0
    # grouped by exponential: exactly one e^{S (t - 1)} factor among the top-level terms
    exps = [a for a in sp.Add.make_args(got) if a.has(sp.exp)]
    assert len(exps) == 1
    # the constant part is the plain expansion's constant part
    const = sp.Add(*[a for a in sp.Add.make_args(got) if not a.has(t)])
    assert const == sp.Add(*[a for a in sp.Add.make_args(sp.expand(e)) if not a.has(t)])
    assert const == R0 + 2 - sp.Rational(1, 7)


def test_tidy_keeps_a_complex_root_complex():
    # a complex root stands in as a symbol without the real assumption: re(.) must not be dropped
    e = sp.exp(-t) * (R1 + 1) * (R1 - 1)
    got = tidy(e, (), t)
    assert sp.expand(got - e) == 0
    assert got.has(R1)


def test_final_value_of_a_switched_branch_with_indexed_roots():
    # after the switch: 1/7 plus decaying modes with coefficients in the roots (direct: the modes vanish)
    last = sp.Rational(1, 7) + (R0**2 + 3) * sp.exp(S * (t - 1)) * (R0 * sp.cos(2 * (t - 1)) + sp.sin(2 * (t - 1)))
    x = sp.Piecewise((sp.exp(-t), t < 1), (last, True))
    assert final_value(x, t) == ("converges", sp.Rational(1, 7))


def test_final_value_constant_from_a_product_with_an_add_in_t():
    # (R0 + 1)(2 + e^{-t}): the constant is 2 (R0 + 1), written expanded
    kind, value = final_value((R0 + 1) * (2 + sp.exp(-t)), t)
    assert kind == "converges"
    assert sp.expand(value - 2 * (R0 + 1)) == 0


def test_final_value_sees_a_persistent_term_and_one_that_cancels():
    # cos t survives; a growing e^{t} whose coefficients cancel across two terms does not count (direct)
    assert final_value(sp.exp(-t) + R0 * sp.cos(t), t) == ("bounded", None)
    cancel = sp.Add(sp.Mul(R0 + 1, sp.exp(t), evaluate=False), sp.Mul(-R0 - 1, sp.exp(t), evaluate=False), evaluate=False)
    assert final_value(cancel + 3, t) == ("converges", 3)
    assert final_value(sp.Mul(R0, sp.exp(t), evaluate=False) + 1, t) == ("unbounded", None)


def test_final_value_of_a_nested_piecewise_is_folded():
    inner = sp.Piecewise((0, t < 2), (1, True))
    assert final_value(2 * inner + sp.exp(-t), t) == ("converges", 2)


def _tree_text(obj: sp.Basic) -> str:
    """The definition of structure_text written out: every node, a root's polynomial included."""
    if not obj.args:
        return sp.srepr(obj)
    return type(obj).__name__ + "(" + ",".join(_tree_text(a) for a in obj.args) + ")"


def test_structure_text_of_indexed_roots_is_the_whole_tree():
    from derive.documents.sheet import structure_text

    e = R0 * sp.exp(S * t) + R1**2 * sp.cos(R0 * t) + S
    assert structure_text(e) == _tree_text(e)
    assert structure_text(sp.ImmutableMatrix([e, R0])) == "[" + _tree_text(e) + "," + _tree_text(R0) + "]"
    # the root's polynomial is in the text: two roots of different polynomials differ
    assert structure_text(R0) != structure_text(S)

