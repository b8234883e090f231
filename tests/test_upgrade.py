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

from .conftest import colebrook_mpmath

DATA = Path(__file__).parent / "data"
G = 9.80665
# Water at 15 degC, 1 atm (IAPWS-95, R12-08; docs/references.md#water-properties), printed to 7
# and 6 figures: hand figures built on them are held to 1e-5
RHO_15, MU_15 = 999.1026, 1.13757e-3


def dw_head(q, bore, length, eps, k=0.0, rho=RHO_15, mu=MU_15):
    """Darcy-Weisbach head loss [m] with f from a 40-digit mpmath Colebrook root, plus K V^2/2g
    (docs/references.md#friction)."""
    v = q / (math.pi * bore * bore / 4)
    f = colebrook_mpmath(rho * v * bore / mu, eps / bore)
    return (f * length / bore + k) * v * v / (2 * G)


def split_by_root(q, line_a, line_b):
    """Flow of line a when a and b in parallel carry q at equal head loss: the root of
    h_a(q_a) - h_b(q - q_a) = 0 by scipy's brentq (each h by dw_head), bracketed by 5 and 95 %
    of q (each line of these tests carries a share within it)."""
    from scipy.optimize import brentq

    return brentq(lambda qa: dw_head(qa, *line_a) - dw_head(q - qa, *line_b),
                  0.05 * q, 0.95 * q, xtol=1e-16, rtol=1e-15)


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


@pytest.mark.reference
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
    t_star = math.log(math.log(1 + rate) * cr / (cb * n0)) / a    # the formula, here
    assert shamir_howard_replacement_time(n0, a, cb, cr, rate) == pytest.approx(t_star,
                                                                                 rel=1e-12)
    assert 0 < t_star < 100
    assert abs(best.year - t_star) <= 1.0


def test_energy_identical_when_hydraulics_identical():
    st = breaks_only_study(2.0, 0.08, 1e4, 1.5e6, 0.05, horizon=30)
    cf = st.run().cash_flows
    keep = cf[cf["option"] == "keep"]["energy_cost"].to_numpy()
    rep = cf[cf["option"] == "replace"]["energy_cost"].to_numpy()
    np.testing.assert_allclose(keep, rep, rtol=1e-12)


@pytest.mark.reference
def test_cash_flows_by_hand():
    # one option, acting in year 2 of 4; hand arithmetic from the module conventions
    # (DEVELOPERS.md#the-upgrade-model-in-words; breaks N0 e^{A t} integrated over each year,
    # Shamir & Howard 1979, docs/references.md#renewal)
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


@pytest.mark.reference
def test_demo_summary_and_irr_definition():
    res = UpgradeStudy.demo().run()
    s = res.summary
    assert list(s["option"]) == ["keep", "reline", "replace DN 300", "duplicate PE 250"]
    cf = res.cash_flows
    keep = cf[cf["option"] == "keep"]["total"].to_numpy()
    for _, row in s.iloc[1:].iterrows():
        tot = cf[cf["option"] == row["option"]]["total"].to_numpy()
        savings = keep - tot
        # NPV of the savings at the discount rate is the summary's NPV: the explicit sum
        # sum_t S_t / (1 + i)^t (docs/references.md#economics, numpy-financial's convention)
        explicit = sum(c / 1.04**t for t, c in enumerate(savings))
        assert explicit == pytest.approx(row["npv_vs_keep"], rel=1e-10)
        assert net_present_value(savings, 0.04) == pytest.approx(explicit, rel=1e-12)
        if row["irr"] is not None and not np.isnan(row["irr"]):
            # numpy-financial's definition: NPV at the IRR is zero (relative to the flows)
            r = row["irr"]
            assert abs(sum(c / (1 + r) ** t for t, c in enumerate(savings))) <= (
                1e-9 * np.abs(savings).sum())
    text = res.text()
    assert "ILLUSTRATIVE" in text and "Caution" in text
    assert res.best["option"] == s.loc[s["pv_cost"].idxmin(), "option"]


@pytest.mark.reference
def test_payback_consistent_with_cumulative_savings():
    # simple payback (common practice; docs/references.md#economics): the first year from which
    # the cumulative undiscounted savings stay non-negative, found here by hand
    res = UpgradeStudy.demo().run()
    cf = res.cash_flows
    keep = cf[cf["option"] == "keep"]["total"].to_numpy()
    row = res.summary.set_index("option").loc["replace DN 300"]
    tot = cf[cf["option"] == "replace DN 300"]["total"].to_numpy()
    cum = np.cumsum(keep - tot)
    year = int(row["simple_payback_year"])
    assert cum[year] >= 0 and cum[year - 1] < 0 and (cum[year:] >= -1e-9).all()


@pytest.mark.reference
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
    # the split by independent root finding (brentq on h_old(q_a) = h_new(q - q_a), each h by
    # Darcy-Weisbach with a 40-digit mpmath Colebrook root) at two years and every duty
    rho, mu = s.density, s.viscosity          # the study's fluid: the inputs of the split
    for i in (0, 10):
        for k in range(q.shape[1]):
            line_old = (st.bore, s.length, float(eps_old[i, 0]), 6.0, rho, mu)
            line_new = (0.2202, s.length, 7e-6, 6.0, rho, mu)
            qa = split_by_root(float(q[i, k]), line_old, line_new)
            assert old["flow"][i, k] == pytest.approx(qa, rel=1e-11)
            assert new["head_loss"][i, k] == pytest.approx(dw_head(qa, *line_old), rel=1e-11)


@pytest.mark.reference
def test_field_test_back_calculation_feeds_forward():
    st = UpgradeStudy.demo()
    t = st.existing.field_test
    eps = st.roughness
    h = fr.line_head_loss(t.flow, st.bore, t.length, eps, st.fluid.density, st.fluid.viscosity)
    # Darcy-Weisbach with a 40-digit mpmath Colebrook root, by hand, at the same roughness
    assert h == pytest.approx(dw_head(t.flow, st.bore, t.length, eps, 0.0, st.fluid.density,
                                      st.fluid.viscosity), rel=1e-12)
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


@pytest.mark.reference
def test_hazen_williams_condition_and_catalog_bore():
    # EN 545:2010 (from memory; docs/references.md#pipe-dimensions): DN 300 DE 326 mm, C40 wall
    # 6.2 mm, cement lining 3 mm: bore 326 - 2 x 6.2 - 2 x 3 = 307.6 mm; the bore loss 10 mm
    existing = ExistingLine("3 km", "20 m", "ductile-iron", size="DN 300 C40",
                            bore_loss="10 mm", hazen_williams_c=90.0)
    st = UpgradeStudy(Fluid.water("10 degC"), existing, DutyProfile(("0.08 m^3/s",), (6000,)), 0.7,
                      EnergyTariff(0.1), Economics(0.04, 30, 80),
                      [UpgradeOption("replace", material="ductile-iron", size="same",
                                     cost_per_metre=500.0)])
    assert st.bore == pytest.approx(0.3076 - 0.010)
    # the equivalent roughness gives, at the largest year-1 duty, the Hazen-Williams loss of
    # C 90: h = 10.67 L Q^1.852 / (C^1.852 D^4.8704) (docs/references.md#friction, SI form)
    # against Darcy-Weisbach with a 40-digit mpmath Colebrook root
    h_hw = 10.67 * 3000.0 * 0.08**1.852 / (90.0**1.852 * st.bore**4.8704)
    h_dw = dw_head(0.08, st.bore, 3000.0, st.roughness, 0.0, st.fluid.density,
                   st.fluid.viscosity)
    assert h_dw == pytest.approx(h_hw, rel=1e-9)
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


def test_upgrade_pumping_takes_pump_times_motor_or_refuses_one_pump_keys_by_name():
    # one wire-to-water efficiency: pump x motor x drive (common practice: efficiencies of a
    # pump train in series multiply); a pump curve or NPSH names its key (from Python these
    # used to reach the model as None and end in a TypeError; a study file's [pumping] takes
    # efficiency only)
    from pipeopt.inputs import Pumping

    demo = UpgradeStudy.demo()
    study = demo.replace(efficiency=Pumping(pump_efficiency=0.8, motor_efficiency=0.93,
                                            drive_efficiency=0.97))
    assert study.scenario.efficiency == pytest.approx(0.8 * 0.93 * 0.97, rel=1e-15)
    assert study.run().summary.shape[0] == len(study.options) + 1
    for pumping in (Pumping(bep_efficiency=0.8), Pumping(pump_efficiency=0.8,
                                                         npsh_required="3 m")):
        key = "bep_efficiency" if pumping.bep_efficiency else "npsh_required"
        with pytest.raises(InputError, match=rf"^pumping\.{key}: an upgrade study prices"):
            demo.replace(efficiency=pumping)


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


@pytest.mark.reference
def test_cash_flow_tables_reconcile_and_reline_cleans_first():
    # hand arithmetic: discounting by 1.04^-t (docs/references.md#economics), the demo's
    # bores and prices (DEVELOPERS.md#the-upgrade-model-in-words)
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


def hand_upgrade_study() -> UpgradeStudy:
    """A level 2 km main (invented, illustrative): keep, replace by a larger bore, duplicate."""
    ex = ExistingLine("2 km", "10 m", "cast-iron", inner_diameter="0.3 m", roughness="1 mm",
                      aging="0 mm/yr")
    ops = [UpgradeOption("replace", name="replace", material="ductile-iron",
                         inner_diameter="0.35 m", roughness="0.01 mm", aging="0 mm/yr",
                         cost_per_metre=400.0, life=80),
           UpgradeOption("duplicate", name="duplicate", material="pe100",
                         inner_diameter="0.2 m", roughness="0.007 mm", aging="0 mm/yr",
                         cost_per_metre=200.0, life=80)]
    return UpgradeStudy(Fluid.water("15 degC"), ex,
                        DutyProfile(("0.12 m^3/s", "0.06 m^3/s"), (3000, 4000)), 0.7,
                        EnergyTariff(0.1), Economics(0.04, 5, 80), ops)


def hand_energy_cost(head_of_flow) -> float:
    """Yearly energy cost, rho g Q (10 m + h(Q)) / 0.7 x hours / 1000 x 0.10 per kWh, over the
    two duty points (DEVELOPERS.md#the-sizing-model-in-words, step 2)."""
    return sum(RHO_15 * G * q * (10.0 + head_of_flow(q)) / 0.7 * hrs / 1000.0 * 0.1
               for q, hrs in ((0.12, 3000.0), (0.06, 4000.0)))


@pytest.mark.reference
def test_keep_and_replace_by_hand():
    # keep: the old bore's energy every year; replace at year 0: capital 400 x 2000, the new
    # bore's energy, the residual 1 - 5/80 of the capital at the horizon; PVs and the NPV of
    # replacing by explicit discounted sums at 4 % (docs/references.md#economics)
    res = hand_upgrade_study().run()
    cf = res.cash_flows
    keep = hand_energy_cost(lambda q: dw_head(q, 0.3, 2000.0, 1e-3))
    new = hand_energy_cost(lambda q: dw_head(q, 0.35, 2000.0, 1e-5))
    k = cf[cf["option"] == "keep"].set_index("year")
    r = cf[cf["option"] == "replace"].set_index("year")
    np.testing.assert_allclose(k.loc[1:, "energy_cost"], keep, rtol=1e-5)
    np.testing.assert_allclose(r.loc[1:, "energy_cost"], new, rtol=1e-5)
    flows_keep = [0.0] + [keep] * 5
    flows_rep = [800000.0] + [new] * 5
    flows_rep[5] -= 800000.0 * (1 - 5 / 80)
    pv_keep = sum(c / 1.04**t for t, c in enumerate(flows_keep))
    pv_rep = sum(c / 1.04**t for t, c in enumerate(flows_rep))
    s = res.summary.set_index("option")
    assert s.loc["keep", "pv_cost"] == pytest.approx(pv_keep, rel=1e-5)
    assert s.loc["replace", "pv_cost"] == pytest.approx(pv_rep, rel=1e-5)
    assert s.loc["replace", "npv_vs_keep"] == pytest.approx(pv_keep - pv_rep, rel=1e-4)


@pytest.mark.reference
def test_duplicate_by_hand_with_the_split_found_by_root():
    # duplicate: the old and the new line share each duty flow at equal head loss (root found
    # here), the pump lifts 10 m plus that common loss; capital 200 x 2000 at year 0
    res = hand_upgrade_study().run()
    cf = res.cash_flows
    old, new = (0.3, 2000.0, 1e-3), (0.2, 2000.0, 7e-6)

    def shared(q):
        return dw_head(split_by_root(q, old, new), *old)

    want = hand_energy_cost(shared)
    d = cf[cf["option"] == "duplicate"].set_index("year")
    np.testing.assert_allclose(d.loc[1:, "energy_cost"], want, rtol=1e-5)
    assert d.loc[0, "capital"] == pytest.approx(400000.0)
    assert d.loc[5, "residual"] == pytest.approx(-400000.0 * (1 - 5 / 80), rel=1e-12)
    # the head the duplicated pair loses is below either line alone at the full flow
    assert shared(0.12) < min(dw_head(0.12, *old), dw_head(0.12, *new))


@pytest.mark.reference
def test_reline_in_year_one_by_hand():
    # DEVELOPERS.md#the-upgrade-model-in-words: the reline cleans the tuberculated 280 mm bore
    # back to the 300 mm as laid and loses twice the 6 mm liner: 288 mm at 0.01 mm roughness.
    # Acting at the end of year 1: year 1 still runs the old line; capital 250 x 2000 and
    # cleaning 30 x 2000 in year 1; the liner (not the cleaning) credited 1 - 4/50 at year 5
    ex = ExistingLine("2 km", "10 m", "cast-iron", inner_diameter="0.28 m",
                      bore_as_laid="0.3 m", roughness="1 mm", aging="0 mm/yr")
    op = UpgradeOption("reline", name="reline", liner_thickness="6 mm",
                       liner_roughness="0.01 mm", aging="0 mm/yr", cost_per_metre=250.0,
                       cleaning_cost_per_metre=30.0, life=50, year=1)
    st = UpgradeStudy(Fluid.water("15 degC"), ex,
                      DutyProfile(("0.12 m^3/s", "0.06 m^3/s"), (3000, 4000)), 0.7,
                      EnergyTariff(0.1), Economics(0.04, 5, 80), [op])
    res = st.run()
    cf = res.cash_flows
    old = hand_energy_cost(lambda q: dw_head(q, 0.28, 2000.0, 1e-3))
    new = hand_energy_cost(lambda q: dw_head(q, 0.288, 2000.0, 1e-5))
    r = cf[cf["option"] == "reline"].set_index("year")
    assert r.loc[1, "energy_cost"] == pytest.approx(old, rel=1e-5)
    np.testing.assert_allclose(r.loc[2:, "energy_cost"], new, rtol=1e-5)
    assert (r.loc[1, "capital"], r.loc[1, "cleaning"]) == (500000.0, 60000.0)
    assert r.loc[5, "residual"] == pytest.approx(-500000.0 * (1 - 4 / 50), rel=1e-12)
    flows = [0.0, 560000.0 + old] + [new] * 4
    flows[5] -= 500000.0 * (1 - 4 / 50)
    pv = sum(c / 1.04**t for t, c in enumerate(flows))
    assert res.summary.set_index("option").loc["reline", "pv_cost"] == pytest.approx(pv,
                                                                                   rel=1e-5)
