"""Units: each term of each equation checked for dimensional consistency (pint)."""

from __future__ import annotations

import pytest

from derive.casefile import loads_case
from derive.units import UnitError

ROOM = """
[parameters.C]
assume = ["positive"]
unit = "kJ/K"
[parameters.UA]
assume = ["positive"]
unit = "{ua}"
[parameters.Q]
unit = "kW"
[inputs]
Ta = "5*sin(2*pi*t/24)"
[units]
T = "K"
Ta = "{ta}"
[system]
time_unit = "{time}"
equations = ["T' = (UA*(Ta - T) + Q)/C"]
"""


def room(ua: str = "kW/K", ta: str = "K", time: str = "h"):  # type: ignore[no-untyped-def]
    return loads_case(ROOM.format(ua=ua, ta=ta, time=time), source="room.toml")


def test_consistent_heat_balance_is_accepted() -> None:
    case = room()
    assert any(n.startswith("units: every term") and "time in h" in n for n in case.notices)


def test_wrong_parameter_unit_names_equation_term_and_both_units() -> None:
    """A conductance given as kW (not kW/K): UA*T/C has the unit K^2 kW/kJ, T' has K/h."""
    with pytest.raises(UnitError) as err:
        room(ua="kW")
    e = err.value
    assert e.file == "room.toml" and e.key == "system.equations[0]"
    assert "the equation of T'" in e.message
    assert "the term -T*UA/C has the unit K ** 2 * kW / kJ" in e.message
    assert "but T' has the unit K / h" in e.message


def test_input_unit_is_checked_before_its_formula_goes_in() -> None:
    with pytest.raises(UnitError) as err:
        room(ta="W")
    assert "Ta" in err.value.message and "W" in err.value.message


def test_second_order_equation_with_derived_state_units() -> None:
    text = """
[parameters.k]
unit = "{k}"
[parameters.m]
unit = "kg"
[units]
y = "m"
[system]
equations = ["m*y'' + k*y = 0"]
"""
    loads_case(text.format(k="N/m"))
    with pytest.raises(UnitError) as err:
        loads_case(text.format(k="N"))
    assert "the equation of y''" in err.value.message and "m / s ** 2" in err.value.message


@pytest.mark.parametrize(
    ("extra", "key", "says"),
    [
        ('[units]\nT = "kelvinz"\n', "units.T", "not a unit"),
        ('[units]\nX = "K"\n', "units.X", "not a state"),
        ("[units]\n", "units", "no unit for the state 'T'"),
        ('[units]\nT = "K"\n[parameters.a]\nunit = "zzqq"\n', "parameters.a.unit", "not a unit"),
    ],
)
def test_unit_table_refusals(extra: str, key: str, says: str) -> None:
    with pytest.raises(UnitError) as err:
        loads_case('[system]\nequations = ["T\' = -T/tau"]\n[parameters.tau]\nunit = "s"\n' + extra, source="c.toml")
    assert err.value.key == key and says in err.value.message, err.value.message


def test_time_unit_must_be_a_time() -> None:
    with pytest.raises(UnitError) as err:
        room(time="kg")
    assert err.value.key == "system.time_unit"


def test_cases_without_units_keep_free_text_labels() -> None:
    case = loads_case('[parameters.k]\nunit = "per hour, roughly"\n[system]\nmatrix = [["-k"]]\n')
    assert case.system.params[0].unit == "per hour, roughly"
