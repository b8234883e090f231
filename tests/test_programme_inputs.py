"""Tests of pipeopt.programme_inputs: the programme file's own sections and its reader."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

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


def test_sections_take_units_at_the_door():
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


def test_flow_growth_has_the_rules_of_a_sizing_study():
    # flow multipliers (1 + g)^(min(t, T_d) - 1), worked here for g = 10 %, T_d = 3
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
