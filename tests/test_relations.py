"""Parameter relations and regimes: admissible solutions, contradictions, equivalent forms."""

from __future__ import annotations

import pytest
import sympy as sp

import derive
from derive.errors import InputError
from derive.model import System
from derive.relations import (
    apply_relations,
    check_regimes,
    parse_relations,
    regime_sign,
    split_assumptions,
)

k, m, c = sp.symbols("k m c", positive=True)
C, R, L = sp.symbols("C R L", positive=True)
x = sp.Symbol("x", real=True)
lam = sp.Symbol("lambda")
SMD = {"k": k, "m": m, "c": c, "x": x}


def test_a_relation_is_solved_for_a_first_power_parameter() -> None:
    assert parse_relations(["c^2 = 4 k m"], symbols=SMD) == ((k, c**2 / (4 * m)),)
    assert parse_relations({"k": "c^2/(4 m)"}, symbols=SMD) == ((k, c**2 / (4 * m)),)
    assert parse_relations({k: c**2 / (4 * m)}, symbols=SMD) == ((k, c**2 / (4 * m)),)


def test_a_value_the_assumptions_leave_open_is_accepted() -> None:
    # x is only real, so k = -x (positive when x < 0) is admissible; k = -x^2 is not
    assert parse_relations(["k + x = 0"], symbols=SMD) == ((k, -x),)
    with pytest.raises(InputError, match="never positive"):
        parse_relations(["k + x^2 = 0"], symbols=SMD)


@pytest.mark.parametrize(
    ("relation", "reason"),
    [
        ("m = 0", "m = 0 is never positive, but m is assumed positive"),
        ("c^2 = -4*k*m", "k = -c**2/(4*m) is never positive"),
        ("c^2 = -4*k*m", "is not real"),
        ("k + m = 0", "is never positive"),
    ],
)
def test_a_relation_that_contradicts_the_assumptions_is_refused(relation: str, reason: str) -> None:
    with pytest.raises(InputError) as info:
        parse_relations([relation], symbols=SMD, key="assume")
    assert reason in info.value.message and info.value.key == "assume[0]"
    assert info.value.hint


@pytest.mark.parametrize(
    ("items", "message"),
    [
        (["1 = 2"], "never holds"),
        (["k = k"], "always holds"),
        ({"k": "-c"}, "never positive"),
        ({"k": "k + 1"}, "both sides"),
        ({"kk": "1"}, "did you mean"),
    ],
)
def test_relations_without_a_usable_solution(items: object, message: str) -> None:
    with pytest.raises(InputError) as info:
        parse_relations(items, symbols=SMD)  # type: ignore[arg-type]
    assert message in str(info.value)


@pytest.mark.parametrize(
    ("regime", "message"),
    [
        ("c^2 + 4*k*m < 0", "can never hold"),
        ("m < 0", "can never hold"),
        ("x^2 < 0", "can never hold"),
        ("c^2 + 4*k*m > 0", "selects nothing"),
    ],
)
def test_a_regime_the_assumptions_decide_is_refused(regime: str, message: str) -> None:
    with pytest.raises(InputError) as info:
        split_assumptions([regime], symbols=SMD)
    assert message in info.value.message and info.value.key == "assume[0]"


def test_regime_sign_compares_up_to_a_factor_of_known_sign() -> None:
    disc = C**2 * R**2 - 4 * C * L  # the discriminant of C L s^2 + C R s + 1
    for written in ("C*R^2 < 4*L", "C^2*R^2 < 4*C*L", "R^2 < 4*L/C", "4*L > C*R^2"):
        _, regimes = split_assumptions([written], symbols={"C": C, "R": R, "L": L})
        assert regime_sign(disc, regimes) == -1, written
        assert regime_sign(-disc / L, regimes) == 1, written
    _, other = split_assumptions(["C*L < 1"], symbols={"C": C, "R": R, "L": L})
    assert regime_sign(disc, other) == 0


def test_a_regime_that_fixes_no_discriminant_is_refused() -> None:
    factors = [(C * L * lam**2 + C * R * lam + 1, 1)]
    check_regimes(factors, lam, [(C * R**2 - 4 * L, -1)])  # recognised: no error
    with pytest.raises(InputError) as info:
        check_regimes(factors, lam, [(C * L - 1, -1)])
    assert "C*R^2 - 4*L" in info.value.message and "C*R^2 - 4*L < 0" in (info.value.hint or "")
    with pytest.raises(InputError, match="no quadratic factor"):
        check_regimes([(lam + 1, 2)], lam, [(C - L, 1)])


def test_a_relation_that_divides_by_zero_is_refused() -> None:
    mr = sp.Symbol("mr", real=True)
    t = sp.Symbol("t", real=True)
    system = System(
        A=sp.ImmutableMatrix([[0, 1], [-1 / mr, 0]]),
        f=sp.ImmutableMatrix([0, 0]),
        t=t,
        states=(sp.Symbol("x", real=True), sp.Symbol("v", real=True)),
    )
    (rel,) = parse_relations(["mr = 0"], symbols={"mr": mr})
    with pytest.raises(InputError, match="divides by zero"):
        apply_relations(system, [rel])


def test_the_critical_relation_still_solves() -> None:
    A = sp.Matrix([[0, 1], [-k / m, -c / m]])
    sol = derive.solve(A, x0=[1, 0], assume=["c^2 = 4*k*m"])
    assert sol.eigenvalues == (-c / (2 * m), -c / (2 * m))


def test_a_regime_in_a_reduced_form_is_used() -> None:
    # a series RLC circuit, charge q and current i: C L q'' + C R q' + q = 0
    A = sp.Matrix([[0, 1], [-1 / (L * C), -R / L]])
    sol = derive.solve(A, assume=["C*R^2 < 4*L"])
    assert not sol.x.has(sp.I) and sol.x.has(sp.cos)


def test_a_relation_with_several_admissible_solutions_asks_which() -> None:
    cr = sp.Symbol("c", real=True)
    with pytest.raises(InputError) as info:
        parse_relations(["c^2 = 4"], symbols={"c": cr})
    assert "c = -2 or c = 2" in info.value.message
    assert "'c = -2'" in (info.value.hint or "")
    # with c assumed positive only one solution is left, and it is taken
    assert parse_relations(["c^2 = 4"], symbols={"c": c}) == ((c, sp.Integer(2)),)


def test_one_relation_on_its_own_and_wrong_containers() -> None:
    assert parse_relations("c^2 = 4 k m", symbols=SMD) == ((k, c**2 / (4 * m)),)
    assert split_assumptions("c^2 < 4 k m", symbols=SMD) == ([], ((c**2 - 4 * k * m, -1),))
    with pytest.raises(InputError, match="expected a list of relations"):
        parse_relations(5, symbols=SMD)  # type: ignore[arg-type]
    with pytest.raises(InputError) as info:
        split_assumptions(["c^2 <= 4 k m"], symbols=SMD)
    assert "strict" in info.value.message and "'lhs = rhs'" in (info.value.hint or "")
    with pytest.raises(InputError, match="must be an equation"):
        parse_relations([sp.Le(c, k)], symbols=SMD)
