"""Tests of pipeopt.programme_inputs: the programme file's own sections and its reader.

Reference checks name their source beside the value: the exact definitions of the units
(NIST Special Publication 811, 2008, appendix B: 1 in = 0.0254 m, 1 ft = 0.3048 m exactly;
the SI prefixes of the SI Brochure, 9th edition, 2019, table 7), compound growth written out,
and the water of the [fluid] section against the iapws package (IAPWS-95 density, IAPWS 2008
viscosity; docs/references.md#water-properties).
"""

from __future__ import annotations

from pathlib import Path

import iapws
import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt.errors import InputError
from pipeopt.inputs import Economics, FluidSpec, Pumping, StudyInfo
from pipeopt.programme_inputs import (
    BreakSettings,
    MaterialClass,
    NewMain,
    ProgrammeSettings,
    PumpedMains,
    SolverOptions,
    flow_growth,
    read_programme,
)
from pipeopt.studyfile import StudyFileError, read_toml

ROOT = Path(__file__).resolve().parents[1]
DEMO = read_toml(ROOT / "pipeopt" / "data" / "demo_programme.toml")


@pytest.mark.reference
def test_sections_take_units_at_the_door():
    # SI prefix milli = 1e-3 exactly (BIPM SI Brochure, 9th ed.; docs/references.md#units)
    m = MaterialClass("cast-iron", "0.26 mm", "0.04 mm/yr", 0.05)
    assert m.roughness == pytest.approx(2.6e-4, rel=1e-12)       # 0.26 mm in m
    assert m.aging == pytest.approx(4e-5, rel=1e-12)             # 0.04 mm/yr in m/yr
    with pytest.raises(InputError, match=r"material\.aging: expected a roughness growth rate "
                                         r"such as '0\.02 mm/yr', got 0\.04 with no unit"):
        MaterialClass("cast-iron", "0.26 mm", 0.04, 0.05)
    with pytest.raises(InputError, match=r"material\.break_growth: must be <= 0\.5; got 0\.8"):
        MaterialClass("cast-iron", "0.26 mm", "0 mm/yr", 0.8)
    with pytest.raises(InputError, match=r"material\.name: required key is missing \(the name "
                                         r"used in the register's material column\)"):
        MaterialClass("  ", "0.26 mm", "0 mm/yr", 0.05)
    new = NewMain("0.03 mm")
    assert (new.aging, new.break_factor) == (0.0, 0.0)
    with pytest.raises(InputError, match=r"replacement\.roughness: must not be negative"):
        NewMain("-0.03 mm")


def test_sections_are_frozen():
    b = BreakSettings(7500.0)
    with pytest.raises(AttributeError):
        b.repair_cost = 1.0
    assert (b.growth_from, b.min_fit_breaks, b.max_fitted_growth) == ("material", 100, 0.2)


def test_budget_one_value_or_a_list_by_year():
    one = ProgrammeSettings(2027, 2.0e6)
    assert not one.by_year and one.budgets(40).tolist() == [2.0e6] * 40   # every year
    assert ProgrammeSettings(2027, 2.0e6, 10).budgets(40).tolist() == [2.0e6] * 10
    listed = ProgrammeSettings(2027, [1e6, 2e6, 0])
    assert listed.by_year and listed.budgets(40).tolist() == [1e6, 2e6, 0.0]
    assert ProgrammeSettings(2027, np.array([1e6, 2e6])).budget == (1e6, 2e6)
    with pytest.raises(InputError, match=r"programme\.budget\[2\]: expected a number, got "
                                         r"true/false True"):
        ProgrammeSettings(2027, [1e6, 2e6, True])
    with pytest.raises(InputError, match=r"programme\.budget: the list is empty"):
        ProgrammeSettings(2027, [])
    with pytest.raises(InputError, match=r"programme\.budget: must not be negative; got -5"):
        ProgrammeSettings(2027, -5)
    with pytest.raises(InputError, match=r"programme\.years: 12 years for a horizon of 10 "
                                         r"years \(economics\.horizon\)"):
        ProgrammeSettings(2027, 1e6, 12).budgets(10)
    budget = one.budgets(5)
    with pytest.raises(ValueError, match="read-only"):
        budget[0] = 1.0


def test_solver_options_rules():
    assert SolverOptions().method == "auto"
    with pytest.raises(InputError, match=r"solver\.method: must be one of auto, milp, "
                                         r"heuristic; got 'mlp'; did you mean 'milp'\?"):
        SolverOptions("mlp")
    with pytest.raises(InputError, match=r"solver\.time_limit: must be >= 0\.1; got 0"):
        SolverOptions(time_limit=0)


@pytest.mark.reference
def test_flow_growth_has_the_rules_of_a_sizing_study():
    # flow multipliers (1 + g)^(min(t, T_d) - 1), compound growth (common practice), worked
    # here by hand for g = 10 %, T_d = 3
    grown = flow_growth({"growth": 0.1, "design_year": 3})
    np.testing.assert_allclose(grown.multipliers(5), [1.0, 1.1, 1.21, 1.21, 1.21],
                               rtol=1e-14)
    assert flow_growth(None).growth == 0.0 and flow_growth(0.02).growth == 0.02
    with pytest.raises(InputError, match=r"growth\.flow_per_year: must be <= 0\.5; got 0\.9"):
        flow_growth(0.9)
    with pytest.raises(InputError, match=r"growth: unknown argument 'flow_cap'"):
        flow_growth({"flow_cap": "1 m^3/s"})


def test_read_programme_gives_every_section():
    sec = read_programme(DEMO, ROOT)
    assert isinstance(sec["info"], StudyInfo) and sec["info"].illustrative
    assert isinstance(sec["fluid"], FluidSpec) and isinstance(sec["pumping"], Pumping)
    assert isinstance(sec["economics"], Economics) and sec["economics"].pipe_life == 80.0
    assert sec["pumped_mains"] == PumpedMains(4.0)
    assert sec["breaks"] == BreakSettings(7500.0, "history", 100, 0.2)
    assert sec["replacement"] == NewMain("0.03 mm", "0 mm/yr", 0.0)
    assert [m.name for m in sec["materials"]][:2] == ["cast-iron", "asbestos-cement"]
    assert sec["programme"] == ProgrammeSettings(2027, 2.0e6, 10)
    assert sec["growth"] == {"growth": 0.0}
    data = {k: v for k, v in DEMO.items() if k != "study"}
    assert read_programme(data, ROOT)["info"].name == "renewal programme"


def test_read_programme_refuses_before_any_physics():
    # a bad [[material]] table is reported although the fluid and the rest are fine
    data = dict(DEMO)
    data["material"] = [dict(DEMO["material"][0], roughness="0.26")]
    with pytest.raises(InputError, match=r"material\[0\]\.roughness: expected a roughness "
                                         r"height such as '0\.045 mm', got '0\.26' with no "
                                         r"unit"):
        read_programme(data, ROOT)
    data = dict(DEMO, programme={"first_year": 2027, "budget": 1e6, "year": 10})
    with pytest.raises(StudyFileError, match=r"programme\.year: unknown key; did you mean "
                                             r"'programme\.years'\?"):
        read_programme(data, ROOT)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "metres"), [
    ("0.26 mm", 0.26e-3),                  # SI Brochure table 7: milli = 1e-3
    ("260 um", 260e-6),                    # micro = 1e-6
    ("0.026 cm", 0.026e-2),                # centi = 1e-2
    ("0.0102 in", 0.0102 * 0.0254),        # NIST SP 811: 1 in = 0.0254 m exactly
    ("0.001 ft", 0.001 * 0.3048),          # NIST SP 811: 1 ft = 0.3048 m exactly
    ("26 thou", 26 * 0.001 * 0.0254),      # NIST SP 811: 1 mil (thou) = 0.001 in
])
def test_roughness_of_a_class_and_of_the_new_main_in_any_length_unit(text, metres):
    assert MaterialClass("cast-iron", text, "0 mm/yr", 0.05).roughness == pytest.approx(
        metres, rel=1e-14)
    assert NewMain(text).roughness == pytest.approx(metres, rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "metres_per_year"), [
    ("0.04 mm/yr", 0.04e-3),               # SI Brochure table 7: milli = 1e-3
    ("40 um/yr", 40e-6),                   # micro = 1e-6
    ("0.0016 in/yr", 0.0016 * 0.0254),     # NIST SP 811: 1 in = 0.0254 m exactly
    ("4 cm/century", 4e-2 / 100.0),        # a century is 100 years
])
def test_aging_of_a_class_and_of_the_new_main_in_any_rate_unit(text, metres_per_year):
    assert MaterialClass("cast-iron", "0.26 mm", text, 0.05).aging == pytest.approx(
        metres_per_year, rel=1e-14)
    assert NewMain("0.03 mm", text).aging == pytest.approx(metres_per_year, rel=1e-14)


@pytest.mark.reference
@settings(max_examples=60, deadline=None)
@given(st.floats(-0.2, 0.3), st.one_of(st.none(), st.integers(1, 60)), st.integers(1, 80))
def test_flow_multipliers_are_compound_growth_to_the_design_year(growth, design_year, years):
    # (1 + g)^(min(t, T_d) - 1) for t = 1..N, written out in plain Python (common practice)
    spec = {"growth": growth} if design_year is None else {"growth": growth,
                                                          "design_year": design_year}
    got = flow_growth(spec).multipliers(years)
    top = years if design_year is None else design_year
    expected = [(1.0 + growth) ** (min(t, top) - 1) for t in range(1, years + 1)]
    np.testing.assert_allclose(got, expected, rtol=1e-13)


@pytest.mark.reference
@pytest.mark.parametrize("celsius", [4.0, 10.0, 25.0])
def test_the_water_of_a_programme_file_is_iapws_water(celsius):
    # [fluid] kind = "water" at 1 atm: IAPWS-95 density and IAPWS 2008 viscosity by the iapws
    # package, an implementation independent of pipeopt.water
    data = dict(DEMO, fluid={"kind": "water", "temperature": f"{celsius} degC"})
    fluid = read_programme(data, ROOT)["fluid"].build()
    water = iapws.IAPWS95(T=273.15 + celsius, P=0.101325)
    assert fluid.density == pytest.approx(water.rho, rel=1e-12)
    assert fluid.viscosity == pytest.approx(water.mu, rel=1e-12)


@pytest.mark.reference
@pytest.mark.parametrize(("temperature", "pressure", "kelvin", "megapascal"), [
    ("50 degF", None, (50.0 + 459.67) / 1.8, 0.101325),      # NIST SP 811: T/K = (t/F + 459.67)/1.8
    ("300 K", "10 bar", 300.0, 1.0),                          # SI Brochure table 8: 1 bar = 1e5 Pa
    # NIST SP 811: 1 lbf/in2 = 0.45359237 kg x 9.80665 m/s2 / (0.0254 m)^2 exactly
    ("50 degF", "30 psi", (50.0 + 459.67) / 1.8, 30 * 0.45359237 * 9.80665 / 0.0254 ** 2 / 1e6),
])
def test_the_fluid_state_in_any_units_is_the_iapws_state(temperature, pressure, kelvin,
                                                         megapascal):
    # the state converted by the units' exact definitions, then water from the iapws package
    fluid_section = {"kind": "water", "temperature": temperature}
    if pressure is not None:
        fluid_section["pressure"] = pressure
    fluid = read_programme(dict(DEMO, fluid=fluid_section), ROOT)["fluid"].build()
    water = iapws.IAPWS95(T=kelvin, P=megapascal)
    assert fluid.density == pytest.approx(water.rho, rel=1e-12)
    assert fluid.viscosity == pytest.approx(water.mu, rel=1e-12)


@pytest.mark.reference
def test_a_custom_fluid_in_us_units():
    # 62.4 lb/ft3 and 1.2 cP: NIST SP 811, 1 lb = 0.45359237 kg and 1 ft = 0.3048 m exactly;
    # 1 P = 0.1 Pa s (CGS unit of dynamic viscosity), so 1 cP = 1e-3 Pa s
    data = dict(DEMO, fluid={"kind": "custom", "density": "62.4 lb/ft^3", "viscosity": "1.2 cP"})
    fluid = read_programme(data, ROOT)["fluid"].build()
    assert fluid.density == pytest.approx(62.4 * 0.45359237 / 0.3048 ** 3, rel=1e-14)
    assert fluid.viscosity == pytest.approx(1.2e-3, rel=1e-14)


# ------------------------------------------------------------------------------------------
# conversions and the programme's yearly figures against outside definitions
# ------------------------------------------------------------------------------------------
INCH = 0.0254                  # 1 in = 0.0254 m exactly (NIST SP 811 (2008), B.9)


@pytest.mark.reference
def test_material_classes_in_inches_read_to_the_exact_definition():
    # NIST SP 811 (2008), B.9: 1 in = 0.0254 m exactly; the aging rate is kept in m per year
    m = MaterialClass("cast-iron", "0.0102 in", "0.0016 in/yr", 0.05)
    assert m.roughness == pytest.approx(0.0102 * INCH, rel=1e-14)      # 0.25908 mm
    assert m.aging == pytest.approx(0.0016 * INCH, rel=1e-14)          # 0.04064 mm/yr
    new = NewMain("0.0012 in", "0.0001 in/yr")
    assert new.roughness == pytest.approx(3.048e-5, rel=1e-14)
    assert new.aging == pytest.approx(2.54e-6, rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("text", "kelvin"), [
    ("10 degC", 283.15),       # T/K = t/degC + 273.15 (BIPM SI Brochure, 9th ed.)
    ("50 degF", 283.15),       # (50 - 32) x 5/9 + 273.15 (NIST SP 811 (2008), B.9)
    ("4 degC", 277.15),
])
def test_the_programme_fluid_temperature_in_kelvin(text, kelvin):
    data = dict(DEMO, fluid={"kind": "water", "temperature": text})
    assert read_programme(data, ROOT)["fluid"].temperature == pytest.approx(kelvin, rel=1e-15)


@pytest.mark.reference
def test_the_programme_water_against_iapws95():
    # the demo programme's water at 10 degC and 1 atm, against the iapws package's IAPWS-95
    # density and viscosity (IAPWS R6-95(2018), IAPWS R12-08; docs/references.md#water-
    # properties); the IAPWS release tolerance of the fit, well inside 1e-5 here
    from iapws import IAPWS95

    fluid = read_programme(DEMO, ROOT)["fluid"].build()
    ref = IAPWS95(T=283.15, P=0.101325)
    assert fluid.density == pytest.approx(ref.rho, rel=1e-6)            # about 999.70 kg/m^3
    assert fluid.viscosity == pytest.approx(ref.mu, rel=1e-5)           # about 1.306 mPa s


@pytest.mark.reference
def test_the_programme_energy_prices_by_year_by_hand():
    # the demo's tariff: p_t = 0.16 (1 + 0.01)^(t - 1) in year t, the first year at the quoted
    # price (escalation as compound growth; docs/references.md#economics), in 30-digit mpmath
    tariff = read_programme(DEMO, ROOT)["energy"]
    prices = tariff.price_by_year(40)
    with mp.workdps(30):
        want = [float(mp.mpf("0.16") * (1 + mp.mpf("0.01")) ** (t - 1)) for t in range(1, 41)]
    np.testing.assert_allclose(prices, want, rtol=1e-14)
    assert prices[-1] == pytest.approx(0.16 * 1.01**39, rel=1e-14)          # 0.2350... in year 40
    # a yearly bill of an invented 250 MWh and a 40 kW peak, with a demand charge of 60 a kW:
    # C_t = E_t p_t + d P_t (DEVELOPERS.md, the sizing model, step 2)
    charged = type(tariff)(0.16, 0.01, 60.0)
    bill = charged.yearly_cost(np.full(40, 250_000.0), np.full(40, 40.0))
    np.testing.assert_allclose(bill, [250_000.0 * w + 60.0 * 40.0 for w in want], rtol=1e-14)


@pytest.mark.reference
def test_growth_read_from_a_programme_file_by_compound_growth():
    # [growth] flow_per_year = 2.5 %, design_year 20: multiplier (1 + g)^(min(t, 20) - 1) in
    # year t (compound growth, capped at the design year; DEVELOPERS.md, the sizing model,
    # step 1), each year by mpmath, 40 years
    data = dict(DEMO, growth={"flow_per_year": 0.025, "design_year": 20})
    grown = flow_growth(read_programme(data, ROOT)["growth"])
    with mp.workdps(30):
        want = [float((1 + mp.mpf("0.025")) ** (min(t, 20) - 1)) for t in range(1, 41)]
    np.testing.assert_allclose(grown.multipliers(40), want, rtol=1e-14)


@pytest.mark.reference
def test_growth_without_a_design_year_compounds_every_year():
    # [growth] flow_per_year = 2 % with no design year: (1 + g)^(t - 1) in every year t of the
    # horizon (compound growth), against 30-digit mpmath; one year's step is exactly 1 + g
    data = dict(DEMO, growth={"flow_per_year": 0.02})
    grown = flow_growth(read_programme(data, ROOT)["growth"]).multipliers(40)
    with mp.workdps(30):
        want = [float(mp.mpf("1.02") ** (t - 1)) for t in range(1, 41)]
    np.testing.assert_allclose(grown, want, rtol=1e-14)
    np.testing.assert_allclose(grown[1:] / grown[:-1], 1.02, rtol=1e-14)
