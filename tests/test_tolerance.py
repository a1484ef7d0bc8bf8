"""Sensitivities and tolerance bands: the case file, the numbers, the sheet in every format, the PDF.

The scenarios (a bath probe as a first-order lag, the demo with a toleranced
heater) are of our own invention; tests/data/sheets/probe_lag.toml and
demo_tolerance.toml.  Outside references are named beside each check.
"""

from __future__ import annotations

import json
import math
import re
import shutil
import subprocess
from pathlib import Path

import numpy as np
import pytest
import sympy as sp
from click.testing import CliRunner

import derive
from derive.casefile import load_case, loads_case
from derive.cli import cli
from derive.documents.blocks import Figure, Heading
from derive.documents.reading_section import reading_blocks
from derive.errors import CaseFileError
from derive import Parameter, Tolerance
from derive.model import Solution
from derive.output import write_outputs
from derive.pipeline import solve_case
from derive.reading import envelope, samples, sensitivities, sensitivity, tolerance_envelope
from derive.readingfile import parse_tolerance
from derive.render import render

from reference import ivp_values

DATA = Path(__file__).parent / "data" / "sheets"
LAG = DATA / "probe_lag.toml"
TAU, U = 4.0, 1.0  # the probe's declared time constant (s) and bath step (K)

tau_s = sp.Symbol("tau", positive=True)
t_s = sp.Symbol("t")


def lag() -> Solution:
    return solve_case(load_case(LAG))


def step(tau: float, times: np.ndarray) -> np.ndarray:
    """x = 1 - exp(-t/tau), the unit step response of a first-order lag from rest (from memory; common practice)."""
    return U * (1.0 - np.exp(-times / tau))


# ---------------------------------------------------------------------------
# The case file


def test_the_case_file_gives_the_tolerance_and_asks_for_sensitivities() -> None:
    case = load_case(LAG)
    tau = next(p for p in case.system.params if p.name == "tau")
    assert tau.tolerance == Tolerance(sp.Rational(1, 20), relative=True)
    assert tau.tolerance.half_width(tau.value) == sp.Rational(1, 5)
    assert next(p for p in case.system.params if p.name == "u").tolerance is None
    assert case.options is not None and case.options.sensitivities is True


@pytest.mark.parametrize("raw, amount, relative", [
    ("5%", sp.Rational(1, 20), True), ("0.5 %", sp.Rational(1, 200), True), (0.1, sp.Rational(1, 10), False), (1, 1, False),
])
def test_accepted_forms_of_a_tolerance(raw: object, amount: sp.Expr, relative: bool) -> None:
    assert parse_tolerance(raw, value=sp.Integer(4), positive=True) == Tolerance(amount, relative)


BAD = [
    ('tolerance = "five percent"', "parameters.tau.tolerance"),
    ('tolerance = "150%"', "parameters.tau.tolerance"),
    ('tolerance = "0%"', "parameters.tau.tolerance"),
    ("tolerance = -0.1", "parameters.tau.tolerance"),
    ("tolerance = true", "parameters.tau.tolerance"),
    ("tolerance = 4", "parameters.tau.tolerance"),  # the lower corner 4 - 4 breaks tau > 0
]


def _with(line: str) -> str:
    return LAG.read_text().replace('tolerance = "5%"', line)


@pytest.mark.parametrize("line, key", BAD)
def test_a_bad_tolerance_names_file_and_key(line: str, key: str) -> None:
    with pytest.raises(CaseFileError) as err:
        loads_case(_with(line), name="probe_lag", source="probe_lag.toml")
    assert err.value.key == key and "probe_lag.toml" in str(err.value)
    assert "expected" in err.value.message


def test_a_tolerance_without_a_value_is_refused() -> None:
    text = _with('tolerance = "5%"').replace("value = 4\n", "")
    with pytest.raises(CaseFileError) as err:
        loads_case(text, name="probe_lag", source="probe_lag.toml")
    assert err.value.key == "parameters.tau.tolerance" and "value" in err.value.message


@pytest.mark.parametrize("table, key", [
    ('sensitivities = "yes"', "reading.sensitivities"), ("sensitivity = true", "reading.sensitivity"),
])
def test_a_bad_reading_table_names_the_key(table: str, key: str) -> None:
    text = LAG.read_text().replace("sensitivities = true", table)
    with pytest.raises(CaseFileError) as err:
        loads_case(text, name="probe_lag", source="probe_lag.toml")
    assert err.value.key == key


def test_the_cli_refuses_a_bad_tolerance_with_exit_2_naming_file_and_key(tmp_path: Path) -> None:
    case = tmp_path / "bad_lag.toml"
    case.write_text(_with('tolerance = "5 percent"'))
    res = CliRunner().invoke(cli, ["solve", str(case), "-o", str(tmp_path / "out"), "--no-pdf"], catch_exceptions=False)
    assert res.exit_code == 2
    assert "bad_lag.toml" in res.output and "parameters.tau.tolerance" in res.output


# ---------------------------------------------------------------------------
# The numbers


def test_the_lag_band_edges_are_the_responses_at_the_ends_of_the_time_constant() -> None:
    # x = 1 - exp(-t/tau) falls as tau grows at every t > 0 (monotone in tau: from memory, common practice),
    # so the band's lower edge is the response at tau (1 + 5 %) and its upper edge the one at tau (1 - 5 %)
    band = tolerance_envelope(lag(), span=20.0, points=81)
    assert band is not None and band.corners == 2
    assert band.varied == ((tau_s, sp.Rational(19, 5), sp.Rational(21, 5)),)
    np.testing.assert_allclose(band.lower["x"], step(TAU * 1.05, band.times), rtol=1e-12, atol=1e-14)
    np.testing.assert_allclose(band.upper["x"], step(TAU * 0.95, band.times), rtol=1e-12, atol=1e-14)
    at, width = band.widest("x")
    widths = step(TAU * 0.95, band.times) - step(TAU * 1.05, band.times)
    assert width == pytest.approx(widths.max(), rel=1e-12) and at == pytest.approx(band.times[widths.argmax()])


def test_the_band_holds_the_nominal_response_at_every_sampled_time() -> None:
    # a spring-mass-damper with two toleranced parameters: the nominal curve comes from samples(), not the band
    k, c = sp.symbols("k c", positive=True)
    sol = derive.solve([[0, 1], [-k, -c]], [0, 1], x0=[0, 0], params={k: 4, c: sp.Rational(3, 2)})
    band = envelope(sol, {k: sp.Rational(1, 10), c: Tolerance(sp.Rational(1, 4))}, span=8.0, points=97)
    assert band.corners == 4
    times, values = samples(sol, span=8.0, points=97)
    np.testing.assert_allclose(band.times, times)
    for name in ("x_1", "x_2"):
        assert np.all(band.lower[name] <= values[name] + 1e-12)
        assert np.all(values[name] <= band.upper[name] + 1e-12)
        assert np.max(band.upper[name] - band.lower[name]) > 1e-3  # a band, not a line


def test_a_grid_inside_the_box_widens_a_band_the_corners_alone_miss() -> None:
    # an underdamped spring: its stiffness moves the ringing along the time axis, so at some times the
    # declared stiffness gives a value outside the range of the two ends (the response is not monotone in k)
    k, c = sp.symbols("k c", positive=True)
    sol = derive.solve([[0, 1], [-k, -c]], [0, 1], x0=[0, 0], params={k: 4, c: 1})
    corners = envelope(sol, {k: sp.Rational(5, 100), c: sp.Rational(5, 100)}, span=12.0, points=121)
    band = envelope(sol, {k: sp.Rational(5, 100), c: sp.Rational(5, 100)}, span=12.0, points=121, levels=3)
    assert (corners.inside, band.inside) == (1, 5) and band.beyond > 1e-4
    # every set of the 3 x 3 grid, evaluated by sympy on its own, lies in the band
    t = sol.system.t
    for kk in (sp.Rational(19, 5), 4, sp.Rational(21, 5)):
        for cc in (sp.Rational(19, 20), 1, sp.Rational(21, 20)):
            line = sp.lambdify(t, sol.x[0].xreplace({k: kk, c: cc}), "mpmath")
            at = np.array([float(sp.re(line(float(v)))) for v in band.times])
            assert np.all(band.lower["x_1"] <= at + 1e-9) and np.all(at <= band.upper["x_1"] + 1e-9)
    assert np.all(band.upper["x_1"] - band.lower["x_1"] >= corners.upper["x_1"] - corners.lower["x_1"] - 1e-15)


def test_the_sheet_says_whether_the_corners_bound_the_band() -> None:
    assert "Every set inside the box lay within the range of the corners" in " ".join(render(lag(), "text").split())
    text = (
        '[system]\nequations = ["y\' = v", "v\' = -k*y - v/2 + 1"]\n[initial]\nvalues = [0, 0]\n'
        '[parameters.k]\nassume = ["positive"]\nvalue = 4\ntolerance = "5%"\n'
    )
    out = render(solve_case(loads_case(text, name="spring", source="spring.toml")), "text")
    assert "lay outside the range of the corners, by up to" in " ".join(out.split())


def test_the_sensitivity_to_the_time_constant_is_the_hand_derivative() -> None:
    # d/dtau (u (1 - exp(-t/tau))) = -u t/tau^2 exp(-t/tau), by hand
    sol = lag()
    tau, u = (p.symbol for p in sol.system.params)
    t = sol.system.t
    (d,) = sensitivity(sol, "tau")
    assert sp.simplify(d - (-u * t / tau**2 * sp.exp(-t / tau))) == 0


def test_the_sensitivity_agrees_with_a_central_difference_of_a_numeric_integration() -> None:
    # reference: scipy.integrate.solve_ivp, DOP853 (Hairer, Norsett and Wanner, Solving Ordinary
    # Differential Equations I, 2nd ed., section II.10), at tau +- h; central difference: common practice
    sol = lag()
    (found,) = [s for s in sensitivities(sol, span=20.0) if s.parameter == tau_s]
    h = 1e-4
    times = list(found.times)
    up = ivp_values([[-1 / (TAU + h)]], [sp.Float(U / (TAU + h))], [0], times)[0]
    down = ivp_values([[-1 / (TAU - h)]], [sp.Float(U / (TAU - h))], [0], times)[0]
    np.testing.assert_allclose(found.values["x"], (up - down) / (2 * h), rtol=1e-6)
    # the largest magnitude of -t/tau^2 exp(-t/tau) is at t = tau, where it is -1/(e tau), by hand
    at, peak = found.peak["x"]
    assert at == pytest.approx(TAU, abs=20.0 / 240) and peak == pytest.approx(-1 / (math.e * TAU), rel=1e-3)


def test_tolerances_through_the_api_are_parameter_records() -> None:
    tau = Parameter(tau_s, sp.Integer(4), tolerance=Tolerance(sp.Rational(1, 5)))
    sol = derive.solve([[-1 / tau_s]], [1 / tau_s], x0=[0], t=t_s, params=[tau])
    band = tolerance_envelope(sol, span=20.0, points=41)
    assert band is not None and band.varied == ((tau_s, sp.Rational(19, 5), sp.Rational(21, 5)),)
    fig = next(b for b in reading_blocks(sol) if isinstance(b, Figure) and b.name == "response")
    assert [s.key for s in fig.series if s.style == "band"] == ["x_1"]
    assert tolerance_envelope(derive.solve([[-1 / tau_s]], x0=[1], t=t_s, params={tau_s: 4})) is None


# ---------------------------------------------------------------------------
# The sheet


def test_the_response_figure_draws_the_band_under_the_curves() -> None:
    sol = lag()
    fig = next(b for b in reading_blocks(sol) if isinstance(b, Figure) and b.name == "response")
    bands = [s for s in fig.series if s.style == "band"]
    assert [b.key for b in bands] == ["x"] and bands[0].label == "tolerance band"
    assert fig.series.index(bands[0]) < min(k for k, s in enumerate(fig.series) if s.style == "line")
    xs = [p[0] for p in bands[0].points]
    n = len(xs) // 2
    times = np.array(xs[:n])
    # the closed path: the upper edge forward in time, then the lower edge back
    assert xs[n:] == xs[:n][::-1]
    np.testing.assert_allclose([p[1] for p in bands[0].points[:n]], step(TAU * 0.95, times), rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose([p[1] for p in bands[0].points[n:]][::-1], step(TAU * 1.05, times), rtol=1e-9, atol=1e-12)
    assert "tolerance band" in fig.caption


def test_the_svg_figure_shades_the_band() -> None:
    pytest.importorskip("matplotlib")
    import importlib

    svg = importlib.import_module("derive.render.svg")
    fig = next(b for b in reading_blocks(lag()) if isinstance(b, Figure) and b.name == "response")
    plain = Figure(fig.caption, fig.xlabel, fig.ylabel, tuple(s for s in fig.series if s.style != "band"), fig.lines, fig.name)
    with_band, without = svg.figure_svg(fig), svg.figure_svg(plain)
    assert with_band is not None and without is not None
    # the band is one filled, translucent path more (its legend swatch another)
    assert with_band.count(b"opacity: 0.18") >= 1 and without.count(b"opacity: 0.18") == 0


@pytest.mark.parametrize("fmt", ["latex", "markdown", "text"])
def test_sensitivities_and_the_band_in_every_format(fmt: str) -> None:
    out = render(lag(), fmt)
    assert "Sensitivities" in out and "Tolerance band" in out
    assert "combinations" not in out and "both ends" in out  # one toleranced parameter: two corners
    assert out.index("Tolerance band") < out.index("Sensitivities")
    assert not re.search(r"\w\s*\*\*", out) and "textasciicircum" not in out


def test_the_json_record_carries_sensitivities_and_the_band() -> None:
    reading = json.loads(render(lag(), "json"))["reading"]
    by_name = {s["parameter"]: s for s in reading["sensitivities"]}
    assert set(by_name) == {"tau", "u"}
    assert sp.sympify(by_name["u"]["exact"]["x"]) == 1 - sp.exp(-t_s / sp.Symbol("tau"))
    band = reading["tolerance_band"]
    assert band["corners"] == 2 and band["varied"] == [{"parameter": "tau", "low": "19/5", "high": "21/5"}]
    times = np.linspace(0.0, 20.0, 241)
    assert band["widest"]["x"]["width"] == pytest.approx(np.max(step(3.8, times) - step(4.2, times)))


def test_a_sheet_without_either_request_is_unchanged() -> None:
    text = LAG.read_text().replace('tolerance = "5%"\n', "").replace("[reading]\nsensitivities = true\n", "")
    sol = solve_case(loads_case(text, name="plain", source="plain.toml"))
    blocks = reading_blocks(sol)
    assert not any(isinstance(b, Heading) and b.text == "Sensitivities" for b in blocks)
    assert "sensitivities" not in json.loads(render(sol, "json"))["reading"]
    assert all(s.style != "band" for b in blocks if isinstance(b, Figure) for s in b.series)


def test_substituted_values_leave_nothing_to_vary_and_the_sheet_says_so() -> None:
    text = LAG.read_text() + '\n[solve]\nvalues = "substitute"\n'
    out = render(solve_case(loads_case(text, name="sub", source="sub.toml")), "text")
    assert "no parameter to vary" in out


def test_a_long_exact_sensitivity_is_left_to_the_json_record() -> None:
    # a conductance into a two-zone balance: the derivative by it holds square roots of the discriminant
    case = loads_case(
        '[system]\nequations = ["a\' = -(a - b)*g - a + 1", "b\' = (a - b)*g - b"]\n[initial]\nvalues = [0, 0]\n'
        '[parameters.g]\nassume = ["positive"]\nvalue = 2\n[reading]\nsensitivities = true\n',
        name="zones", source="zones.toml",
    )
    sol = solve_case(case)
    out = render(sol, "text")
    assert "are long: they are in the JSON record" in out
    reading = json.loads(render(sol, "json"))["reading"]
    assert sp.sympify(reading["sensitivities"][0]["exact"]["a"]).has(sp.Symbol("g"))


def test_a_state_free_of_a_parameter_is_named_once_and_left_out_of_the_table() -> None:
    case = loads_case(
        '[system]\nequations = ["a\' = -a + 1", "b\' = a - k*b"]\n[initial]\nvalues = [0, 0]\n'
        '[parameters.k]\nassume = ["positive"]\nvalue = 2\n[reading]\nsensitivities = true\n',
        name="free", source="free.toml",
    )
    out = " ".join(render(solve_case(case), "text").split())
    assert "Zero, as the state does not depend on the parameter: ∂a/∂k." in out
    table = out[out.index("Largest At time"):]
    assert " k b " in table and " k a " not in table


needs_tex = pytest.mark.skipif(shutil.which("latexmk") is None, reason="latexmk is not on the PATH")


@pytest.mark.tex
@needs_tex
def test_the_pdf_with_the_band_compiles_and_fits_the_page(tmp_path: Path) -> None:
    write_outputs(lag(), tmp_path, stem="probe_lag", formats=("latex",), pdf=False)
    tex = (tmp_path / "probe_lag.tex").read_text()
    assert "fill opacity" in tex and "-- cycle" in tex
    run = subprocess.run(
        ["latexmk", "-pdf", "-interaction=nonstopmode", "-halt-on-error", "-no-shell-escape", "probe_lag.tex"],
        cwd=tmp_path, capture_output=True, text=True, timeout=600,
    )
    log = (tmp_path / "probe_lag.log").read_text(errors="replace")
    errors = [line for line in log.splitlines() if line.startswith("!")]
    assert run.returncode == 0 and not errors, errors[:5]
    wide = [float(w) for w in re.findall(r"Overfull \\hbox \(([0-9.]+)pt too wide\)", log) if float(w) > 10]
    assert not wide, wide
    assert (tmp_path / "probe_lag.pdf").stat().st_size > 1000
