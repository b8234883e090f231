"""Tests of pipeopt.upgrade: keep, reline, replace, duplicate.

Sources, named beside each check: Shamir & Howard (1979), J. AWWA 71(5) (optimal replacement
time, docs/references.md#renewal, from memory); numpy-financial's NPV/IRR convention (NPV at
the IRR is zero);
the Darcy-Weisbach / Colebrook model of DEVELOPERS.md#the-upgrade-model-in-words for the
hydraulics; hand computations.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path

import numpy as np
import pytest

from pipeopt import Fluid, UpgradeStudy
from pipeopt import friction as fr
from pipeopt.costs import EnergyTariff
from pipeopt.duty import DutyProfile
from pipeopt.economics import net_present_value
from pipeopt.errors import InputError
from pipeopt.lifecycle import parallel_split
from pipeopt.renewal import shamir_howard_replacement_time
from pipeopt.sizing import Economics
from pipeopt.studyfile import StudyFileError
from pipeopt.upgrade import ExistingLine, FieldTest, UpgradeOption

DATA = Path(__file__).parent / "data"


def breaks_only_study(n0, a, cb, cr, rate, horizon=120, year=0) -> UpgradeStudy:
    """Same bore and roughness before and after: only breaks and capital differ."""
    length = 2000.0
    existing = ExistingLine("2 km", "10 m", "cast-iron", inner_diameter="0.3 m",
                            roughness="0.1 mm", breaks_per_year=n0, break_growth=a,
                            break_cost=cb)
    option = UpgradeOption("replace", name="replace", material="ductile-iron",
                           inner_diameter="0.3 m", roughness="0.1 mm",
                           cost_per_metre=cr / length, life=1e9, year=year)
    return UpgradeStudy(Fluid.water("15 degC"), existing, DutyProfile(("0.08 m^3/s",), (6000,)),
                        0.7, EnergyTariff(0.1), Economics(rate, horizon, 80), [option])


@pytest.mark.parametrize(
    ("n0", "a", "cb", "cr", "rate"),
    [(2.0, 0.08, 1e4, 1.5e6, 0.05), (5.0, 0.05, 8e3, 2e6, 0.04), (1.0, 0.12, 1.5e4, 3e6, 0.06),
     (8.0, 0.03, 5e3, 3e6, 0.03)],
)
def test_best_year_agrees_with_shamir_howard(n0, a, cb, cr, rate):
    # Shamir & Howard (1979): t* = (1/A) ln(ln(1+R) C_r / (C_b N0)); within one year of the
    # discrete scan (yearly cash flows at year ends)
    st = breaks_only_study(n0, a, cb, cr, rate)
    best = st.best_year("replace")
    t_star = shamir_howard_replacement_time(n0, a, cb, cr, rate)
    assert 0 < t_star < 100
    assert abs(best.year - t_star) <= 1.0


def test_energy_identical_when_hydraulics_identical():
    st = breaks_only_study(2.0, 0.08, 1e4, 1.5e6, 0.05, horizon=30)
    cf = st.run().cash_flows
    keep = cf[cf["option"] == "keep"]["energy_cost"].to_numpy()
    rep = cf[cf["option"] == "replace"]["energy_cost"].to_numpy()
    np.testing.assert_allclose(keep, rep, rtol=1e-12)


def test_cash_flows_by_hand():
    # one option, acting in year 2 of 4; hand arithmetic from the module conventions
    st = breaks_only_study(2.0, 0.1, 1000.0, 50000.0, 0.05, horizon=4, year=2)
    with pytest.raises(AttributeError, match="cannot be changed"):
        st.options = ()  # a study cannot go stale: build another one
    cf = st.run().cash_flows
    rep = cf[cf["option"] == "replace"].set_index("year")
    assert rep.loc[2, "capital"] == pytest.approx(50000.0)
    # breaks continue in years 1 and 2 (rate 2/yr growing at 0.1, integrated), stop from year 3
    per_year = (math.exp(0.1) - 1) / 0.1
    assert rep.loc[1, "breaks"] == pytest.approx(2000.0 * per_year)
    assert rep.loc[2, "breaks"] == pytest.approx(2000.0 * per_year * math.exp(0.1))
    assert rep.loc[3, "breaks"] == 0 and rep.loc[4, "breaks"] == 0
    # residual at N = 4: capital x (1 - (4 - 2)/1e9), a credit
    assert rep.loc[4, "residual"] == pytest.approx(-50000.0 * (1 - 2 / 1e9))
    total = rep["total"].to_numpy()
    assert rep["discounted"].to_numpy() == pytest.approx(total / 1.05 ** np.arange(5))


def test_demo_summary_and_irr_definition():
    res = UpgradeStudy.demo().run()
    s = res.summary
    assert list(s["option"]) == ["keep", "reline", "replace DN 300", "duplicate PE 250"]
    cf = res.cash_flows
    keep = cf[cf["option"] == "keep"]["total"].to_numpy()
    for _, row in s.iloc[1:].iterrows():
        tot = cf[cf["option"] == row["option"]]["total"].to_numpy()
        savings = keep - tot
        # NPV of the savings at the discount rate is the summary's NPV (definition)
        assert net_present_value(savings, 0.04) == pytest.approx(row["npv_vs_keep"], rel=1e-10)
        if row["irr"] is not None and not np.isnan(row["irr"]):
            # numpy-financial's definition: NPV at the IRR is zero (relative to the flows)
            assert abs(net_present_value(savings, row["irr"])) <= 1e-9 * np.abs(savings).sum()
    text = res.text()
    assert "ILLUSTRATIVE" in text and "Caution" in text
    assert res.best["option"] == s.loc[s["pv_cost"].idxmin(), "option"]


def test_payback_consistent_with_cumulative_savings():
    res = UpgradeStudy.demo().run()
    cf = res.cash_flows
    keep = cf[cf["option"] == "keep"]["total"].to_numpy()
    row = res.summary.set_index("option").loc["replace DN 300"]
    tot = cf[cf["option"] == "replace DN 300"]["total"].to_numpy()
    cum = np.cumsum(keep - tot)
    year = int(row["simple_payback_year"])
    assert cum[year] >= 0 and cum[year - 1] < 0 and (cum[year:] >= -1e-9).all()


def test_duplicate_split_equal_head_loss():
    # DEVELOPERS.md upgrade model: both lines carry the same head loss; flows add up
    st = UpgradeStudy.demo()
    s = st.scenario
    q = s.duty.flows_by_year(s.horizon)
    eps_old = (st.roughness + st.existing.aging * np.arange(s.horizon))[:, None]
    old, new = parallel_split(s, [
        {"diameter": st.bore, "roughness": eps_old, "length": s.length, "minor_loss_k": 6.0},
        {"diameter": 0.2202, "roughness": 7e-6, "length": s.length, "minor_loss_k": 6.0}], q)
    assert np.max(np.abs(old["head_loss"] - new["head_loss"])) < 1e-9
    np.testing.assert_allclose(old["flow"] + new["flow"], q, rtol=1e-14)
    # and each line's head loss is its own Darcy-Weisbach loss at its share of the flow
    i, k = 10, 1
    h_check = fr.line_head_loss(new["flow"][i, k], 0.2202, s.length, 7e-6, s.density,
                                s.viscosity, k_sum=6.0)
    assert h_check == pytest.approx(new["head_loss"][i, k], rel=1e-12)


def test_field_test_back_calculation_feeds_forward():
    st = UpgradeStudy.demo()
    t = st.existing.field_test
    eps = st.roughness
    h = fr.line_head_loss(t.flow, st.bore, t.length, eps, st.fluid.density, st.fluid.viscosity)
    # the back-calculated roughness reproduces the measured pressure drop
    dp = (h - (t.upstream_elevation - t.downstream_elevation)) * st.fluid.density * 9.80665
    assert dp == pytest.approx(t.upstream_pressure - t.downstream_pressure, rel=1e-9)
    assert 0.3e-3 < eps < 3e-3  # aged unlined iron, common practice range (from memory)


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"upstream_pressure": "4.2 bar"}, "implausible negative roughness"),
        ({"upstream_pressure": "2.0 bar"}, "must be positive"),
        ({"upstream_pressure": "40 bar"}, "above 0.05 of the bore"),
    ],
)
def test_implausible_field_tests_are_refused(kwargs, match):
    test = dict(flow="300 m^3/h", upstream_pressure="4.6 bar", downstream_pressure="3.9 bar",
                upstream_elevation="31 m", downstream_elevation="31 m", length="1200 m")
    test.update(kwargs)
    existing = ExistingLine("3.8 km", "22 m", "cast-iron-aged", inner_diameter="0.28 m",
                            field_test=FieldTest(**test))
    with pytest.raises(InputError, match=match):
        UpgradeStudy(Fluid.water("10 degC"), existing, DutyProfile(("0.08 m^3/s",), (6000,)), 0.7,
                     EnergyTariff(0.1), Economics(0.04, 30, 80), [])


def test_impossible_inputs():
    with pytest.raises(InputError, match=r"existing\.field_test\.flow: must be positive"):
        FieldTest("0 m^3/h", "4 bar", "3 bar", "0 m", "0 m", "100 m")
    fluid = Fluid.water("10 degC")
    existing = ExistingLine("3 km", "20 m", "cast-iron-aged", inner_diameter="0.2 m",
                            roughness="1 mm")
    args = (fluid, existing, DutyProfile(("0.05 m^3/s",), (6000,)), 0.7, EnergyTariff(0.1),
            Economics(0.04, 30, 80))
    with pytest.raises(InputError, match="thicker than the bore's radius"):
        UpgradeStudy(*args, [UpgradeOption("reline", liner_thickness="120 mm",
                                           cleaned_bore="0.21 m", cost_per_metre=100.0)])
    with pytest.raises(InputError, match="the bore after cleaning is not known"):
        UpgradeStudy(*args, [UpgradeOption("reline", liner_thickness="5 mm",
                                           cost_per_metre=100.0)])
    with pytest.raises(InputError, match="inner_diameter is not used by a reline"):
        UpgradeOption("reline", liner_thickness="5 mm", inner_diameter="0.2 m",
                      cost_per_metre=100.0)
    with pytest.raises(InputError, match="beyond the horizon"):
        UpgradeStudy(*args, [UpgradeOption("reline", year=30, liner_thickness="5 mm",
                                           cleaned_bore="0.21 m", cost_per_metre=100.0)])
    with pytest.raises(InputError, match="exactly one of roughness"):
        ExistingLine("3 km", "20 m", "cast-iron-aged", inner_diameter="0.2 m")
    with pytest.raises(InputError, match="no option named"):
        UpgradeStudy(*args, []).best_year("reline")


def test_hazen_williams_condition_and_catalog_bore():
    existing = ExistingLine("3 km", "20 m", "ductile-iron", size="DN 300 C40",
                            bore_loss="10 mm", hazen_williams_c=90.0)
    st = UpgradeStudy(Fluid.water("10 degC"), existing, DutyProfile(("0.08 m^3/s",), (6000,)), 0.7,
                      EnergyTariff(0.1), Economics(0.04, 30, 80),
                      [UpgradeOption("replace", material="ductile-iron", size="same",
                                     cost_per_metre=500.0)])
    assert st.bore == pytest.approx(0.3076 - 0.010)
    # C of the condition report matches the C given (the equivalent roughness round-trips)
    assert st.condition["hazen_williams_c"] == pytest.approx(90.0, rel=1e-9)
    assert st.states[0].state.diameter == pytest.approx(0.3076)


def test_upgrade_study_file_errors():
    import tomllib

    base = tomllib.loads((Path(__file__).parents[1] / "pipeopt" / "data" /
                          "demo_upgrade.toml").read_text())
    bad = copy.deepcopy(base)
    bad["option"][0]["year"] = 45
    with pytest.raises(StudyFileError, match="beyond the horizon"):
        UpgradeStudy.from_dict(bad)
    bad = copy.deepcopy(base)
    bad["existing"]["lenght"] = "3 km"
    with pytest.raises(StudyFileError, match="existing.lenght: unknown key; did you mean"):
        UpgradeStudy.from_dict(bad)
    bad = copy.deepcopy(base)
    bad["option"][1]["kind"] = "repalce"
    with pytest.raises(StudyFileError, match="did you mean 'replace'"):
        UpgradeStudy.from_dict(bad)


def test_upgrade_from_toml_file_and_cli(tmp_path):
    from pipeopt.cli import main

    st = UpgradeStudy.from_toml(DATA / "tullomere_booster.toml")
    res = st.run()
    assert set(res.cash_flows["option"]) == {"keep", "reline", "duplicate"}
    assert main(["upgrade", str(DATA / "tullomere_booster.toml"), "--out", str(tmp_path)]) == 0
    assert (tmp_path / "cash_flows.csv").is_file() and (tmp_path / "summary.csv").is_file()


def test_upgrade_rich_display():
    st = UpgradeStudy.demo()
    html = st._repr_html_()
    assert "Upgrade study" in html and "<table" in html and "back-calculated" in html
    assert "<table" in st.run()._repr_html_()


def test_cash_flow_tables_reconcile_and_reline_cleans_first():
    res = UpgradeStudy.demo().run()
    cf = res.cash_flows
    rows = ["capital", "cleaning", "station", "energy_cost", "breaks", "leakage",
            "maintenance", "residual"]
    for _, r in res.summary.iterrows():
        t = cf[cf["option"] == r["option"]]
        # every table reconciles: rows add up to the total, discounted rows to the PV
        np.testing.assert_allclose(t[rows].sum(axis=1), t["total"], rtol=1e-12, atol=1e-6)
        assert t["discounted"].sum() == pytest.approx(r["pv_cost"], rel=1e-9)
        np.testing.assert_allclose(t["discounted"], t["total"] / 1.04 ** t["year"], rtol=1e-13)
    # the reline cleans back to the bore as laid (300 mm in the demo file), then lines it:
    # 300 - 2 x 6 = 288 mm, not the tuberculated 280 - 12 = 268 mm
    st = res.study
    reline = [o for o in st.states if o.kind == "reline"][0]
    assert reline.state.diameter == pytest.approx(0.300 - 2 * 0.006, abs=1e-12)
    t = cf[cf["option"] == "reline"].set_index("year")
    assert t.loc[0, "capital"] == pytest.approx(260.0 * 3800.0)
    assert t.loc[0, "cleaning"] == pytest.approx(35.0 * 3800.0)


def test_cli_best_year_of_every_option(capsys):
    from pipeopt.cli import main

    assert main(["upgrade", str(DATA / "tullomere_booster.toml"), "--best-year"]) == 0
    out = capsys.readouterr().out
    st = UpgradeStudy.from_toml(DATA / "tullomere_booster.toml")
    for opt in st.states:
        b = st.best_year(opt.name)
        assert f"{opt.name:<20} year {b.year:>3}" in out
