"""The sheet's notation says one thing per symbol: decoupled coordinates, primed states, the unit step, arg, reasons."""

from __future__ import annotations

import re

import sympy as sp

import derive
from derive.pipeline import build_system
from derive.render.printing import MathFormatter, MathStyle
from derive.solving.methods.base import case_names, coordinate_base

t = sp.Symbol("t")
f = MathFormatter.for_roots(())

# A lift deck of our own: m y'' + c y' + k y = load, reduced to the states y, y'.
LIFT = """
[system]
equations = ["y'' + 3*y' + 2*y = 2*u"]

[inputs]
u = "step(t - 1)"

[initial]
values = [0, 0]
"""


def lift() -> derive.Solution:
    return derive.solve_case(derive.loads_case(LIFT, source="lift.toml"))


def test_decoupled_coordinates_avoid_a_state_named_y() -> None:
    sol = lift()
    (decouple,) = [s for s in sol.steps if s.kind == "decouple"]
    assert [s.name for s in decouple.y] == ["z_1", "z_2"]
    text = derive.render(sol, "text")
    md = derive.render(sol, "markdown")
    tex = derive.render(sol, "latex", fragment=True)
    assert "z_1'(t)" in text and "x = P z" in text and "Each z_k'" in text
    assert "z_{1}" in md and "z_{1}" in tex
    # y is the user's state only: never a coordinate y_1, y_2 in any format
    assert not re.search(r"y_\{?[12k]", text) and not re.search(r"y_\{?[12]", md) and not re.search(r"y_\{[12]\}", tex)


def test_coordinate_letter_skips_states_parameters_and_case_names() -> None:
    def system(*names: str) -> derive.System:
        return build_system(sp.diag(-1, -2), states=sp.symbols(names))[0]

    assert coordinate_base(system("x_1", "x_2")) == "y"
    assert coordinate_base(system("y", "z")) == "w"
    assert coordinate_base(system("y1", "x")) == "z"
    assert coordinate_base(system("yaw", "x")) == "y"  # a longer name does not take the letter
    assert coordinate_base(system("a", "b"), taken=("y",)) == "z"
    case = derive.loads_case('[system]\nstates = ["a", "b"]\nmatrix = [[-1, 0], [0, -2]]\n[outputs]\ns = "a + b"\n')
    assert "y" in case_names(case)  # the output vector is y = C x + D u
    sol = derive.solve_case(case)
    assert [s.name for s in next(s for s in sol.steps if s.kind == "decouple").y] == ["z_1", "z_2"]


def test_primed_states_print_like_their_base_state() -> None:
    q1, q1d, q1dd = sp.Symbol("q1"), sp.Symbol("q1'"), sp.Symbol("q1''")
    assert f.m(q1) == "q_{1}" and f.m(q1d) == "q_{1}'" and f.m(q1dd) == "q_{1}''"
    assert f.m(q1d**2) == r"\left(q_{1}'\right)^{2}" and f.m(1 / q1d**2) == r"\frac{1}{\left(q_{1}'\right)^{2}}"  # no double superscript
    assert f.m(sp.Symbol("omega'")) == r"\omega'"
    assert f.plain(q1) == "q1" and f.plain(q1d) == "q1'" and f.plain(q1d**2) == "(q1')^2"
    assert f.plain(sp.Symbol("omega'")) == "ω'"
    sol = derive.solve_second_order([[1]], [[3]], [[2]], q0=[1], v0=[0])
    md = derive.render(sol, "markdown")
    assert "q_{1}'" in md
    display = md.split("$$")[1::2]
    inline = re.findall(r"(?<!\$)\$([^$\n]+)\$(?!\$)", "".join(md.split("$$")[0::2]))
    math = "".join(display + inline)
    assert "q_{1}'" in math and "q1'" not in math  # in formulas, only the printed form


def test_atan2_prints_as_the_argument_of_a_complex_number() -> None:
    a, b = sp.symbols("a b")
    assert f.m(sp.atan2(b, a)) == r"\arg\left(a + i b\right)"
    assert f.plain(sp.atan2(b, a)) == "arg(a + i b)"
    assert f.plain(sp.atan2(-b, a)) == "arg(a - i b)"
    assert f.plain(sp.atan2(a + b, a)) == "arg(a + i (a + b))"
    j = MathFormatter.for_roots((), style=MathStyle(imaginary_unit="j"))
    assert j.m(sp.atan2(b, a)) == r"\arg\left(a + j b\right)"
    assert "atan" not in f.m(sp.atan2(b, a) ** 2) + f.plain(sp.atan2(b, a) ** 2)
    # and the arctangent by its mathematical name
    assert f.m(sp.atan(a)) == r"\arctan{\left(a \right)}" and f.plain(sp.atan(a) / 2) == "arctan(a)/2"


def test_unit_step_is_H_and_defined_once_in_every_format() -> None:
    assert f.m(sp.Heaviside(t - 1)) == r"\mathrm{H}\left(t - 1\right)"
    assert f.plain(2 * sp.Heaviside(t - 1)) == "2 H(t - 1)"
    sol = lift()
    text = derive.render(sol, "text")
    md = derive.render(sol, "markdown")
    tex = derive.render(sol, "latex", fragment=True)
    assert text.count("Here H(t - a) is the unit step") == 1
    assert md.count(r"Here $\mathrm{H}(t - a)$ is the unit step") == 1
    assert tex.count(r"\mathrm{H}(t - a)$ is the unit step") == 1
    # u is the named input: the step is never written u(t - 1)
    assert "u(t - 1)" not in text and r"u\left(t - 1\right)" not in md + tex


def test_piecewise_in_plain_text_is_not_a_constructor() -> None:
    e = sp.Piecewise((0, t < 1), (2 * sp.exp(1 - t), t < 3), (5, True))
    assert f.plain(e) == "{ 0 for t < 1; 2 exp(-(t - 1)) for 1 ≤ t < 3; 5 for t ≥ 3 }"
    assert "Piecewise(" not in derive.render(lift(), "text").split("Result")[-1]


def test_stability_reason_is_words_not_program_text() -> None:
    slow = derive.solve([[sp.Rational(-1, 5), 0], [0, -1]], x0=[1, 1]).response.reason
    assert "time constant 5" in slow and "exp(" not in slow
    irrational = derive.solve([[-sp.sqrt(2), 0], [0, -3]], x0=[1, 1]).response.reason
    assert "time constant about 0.7071" in irrational
    defective = derive.solve([[0, 1], [0, 0]], x0=[1, 1]).response.reason
    assert "defective" in defective and "exp(" not in defective and "*" not in defective
