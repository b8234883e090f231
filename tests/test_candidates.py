"""Tests of pipeopt.candidates and the decision-grade checks of a sizing study: prices that
follow the pipe, pressure and temperature checks that protect, an optimum within the limits.

Sources, beside each check:
- ASME B36.10M plain-end mass per metre, M = 0.0246615 (D - t) t kg/m with D, t in mm (the
  standard's formula for carbon steel of density 7.85 kg/dm^3; table values from memory);
- EN 805 vocabulary (MDP, PFA, PMA; from memory): MDP = operating pressure + surge;
- ISO 4427-1 / EN 12201-1 Annex A, Table A.1: PE derating factor 0.74 at 40 degC (from memory);
- Joukowsky (1900): surge head a dV / g;
- Barlow's formula p = 2 S E t / D_o, t = e (1 - 0.125) - 1.5 mm, S = 137.9 MPa (ASME B31.3
  para. 304.1.2 and Table A-1, from memory; docs/references.md#pressure-ratings).
"""

from __future__ import annotations

import copy

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import SizingStudy, catalog
from pipeopt.candidates import build_candidates
from pipeopt.costs import MassLayingCost, PowerLawPipeCost
from pipeopt.inputs import MaterialChoice

BASE = {
    "study": {"name": "decision checks (test, illustrative)", "currency": "EUR"},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "3 km", "static_head": "25 m", "minor_loss_k": 5.0},
    "duty": [{"flow": "400 m^3/h", "hours": 6000}],
    "pumping": {"efficiency": 0.72},
    "energy": {"price": 0.12},
    "economics": {"discount_rate": 0.05, "horizon": 30, "pipe_life": 60},
    "material": [
        {"name": "pe100", "classes": ["SDR 17", "SDR 11"], "min_diameter": "0.2 m",
         "max_diameter": "0.7 m",
         "cost": {"price_per_kg": 2.6, "laying_coefficient": 380.0, "laying_exponent": 1.05}},
        {"name": "pvc-u", "min_diameter": "0.2 m", "max_diameter": "0.6 m",
         "cost": {"price_per_kg": 2.2, "laying_coefficient": 360.0, "laying_exponent": 1.05}},
        {"name": "ductile-iron", "min_diameter": "0.2 m", "max_diameter": "0.7 m",
         "cost": {"price_per_kg": 1.9, "laying_coefficient": 520.0, "laying_exponent": 1.1}},
    ],
}


def study(**changes) -> SizingStudy:
    m = copy.deepcopy(BASE)
    for key, value in changes.items():
        section, _, name = key.partition("__")
        if name:
            m.setdefault(section, {})[name] = value
        else:
            m[section] = value
    return SizingStudy.from_dict(m)


@pytest.mark.reference
@pytest.mark.parametrize(("designation", "want"), [
    ("NPS 6 Sch 40", 0.0246615 * (168.3 - 7.11) * 7.11),     # ASME B36.10M: 28.26 kg/m
    ("NPS 12 STD", 0.0246615 * (323.8 - 9.53) * 9.53),       # ASME B36.10M: 73.8 kg/m
    ("NPS 24 STD", 0.0246615 * (610.0 - 9.53) * 9.53),       # ASME B36.10M: 141.12 kg/m
])
def test_mass_per_metre_against_the_steel_pipe_formula(designation, want):
    row = catalog.lookup("steel", designation)
    mass = catalog.mass_per_metre(row["outside_diameter_m"], row["wall_m"], row["lining_m"],
                                  catalog.get_material("steel").density)
    # the standard's constant is rounded to 6 figures: agreement to 1e-5
    assert mass == pytest.approx(want, rel=1e-5)


@pytest.mark.reference
def test_published_table_values_of_steel_mass():
    # ASME B36.10M table values (from memory): NPS 6 Sch 40 28.26 kg/m, NPS 24 STD 141.12 kg/m
    for designation, want in (("NPS 6 Sch 40", 28.26), ("NPS 24 STD", 141.12)):
        row = catalog.lookup("steel", designation)
        mass = catalog.mass_per_metre(row["outside_diameter_m"], row["wall_m"], 0.0, 7850.0)
        assert mass == pytest.approx(want, abs=0.01)   # the table's two decimals


def _every_material_with_sizes() -> list[str]:
    c = catalog.default_catalog()
    return [k for k in c.material_keys if not c.all_sizes[c.all_sizes["material"] == k].empty]


@settings(max_examples=25, deadline=None)
@given(price=st.floats(0.1, 20.0), coef=st.floats(0.0, 3000.0), expo=st.floats(0.5, 2.0),
       material=st.sampled_from(_every_material_with_sizes()))
def test_a_heavier_class_of_one_size_never_costs_less(price, coef, expo, material):
    # the reason a class wins must be its hydraulics or its rating, never a cheaper price for
    # more pipe: at one nominal size, more mass per metre never costs less
    cost = MassLayingCost(price, max(coef, 1.0), expo)
    built = build_candidates((MaterialChoice(material, cost),), catalog.default_catalog(),
                             2.19e9, 999.0, "anchored-throughout", 288.15)
    t = built.table
    for _, rows in t.groupby("nominal"):
        rows = rows.sort_values(["mass_kg_per_m", "wall_m"])
        assert np.all(np.diff(rows["cost_per_metre"].to_numpy()) >= -1e-9)
        assert np.all(np.diff(rows["wall_m"].to_numpy()) >= 0)
    # a power law on the outside diameter prices every class of a size the same
    law = build_candidates((MaterialChoice(material, PowerLawPipeCost(1500.0, 1.3)),),
                           catalog.default_catalog(), 2.19e9, 999.0, "anchored-throughout",
                           288.15).table
    spread = law.groupby("nominal")["cost_per_metre"].agg(np.ptp)
    assert (spread[law.groupby("nominal")["outside_diameter_m"].agg(np.ptp) == 0] == 0).all()


@pytest.mark.reference
def test_pe_derating_and_a_hot_study():
    # ISO 4427-1 / EN 12201-1 Table A.1 (from memory): 0.74 at 40 degC
    svc = catalog.default_catalog().service("pe100")
    assert svc.factor(313.15) == pytest.approx(0.74, abs=1e-12)
    res = study(fluid={"kind": "water", "temperature": "90 degC", "pressure": "3 bar"}).run()
    c = res.candidates
    for mat in ("pe100", "pvc-u"):
        rows = c[c["material"] == mat]
        assert not rows["feasible"].any()
        assert rows["reasons"].str.contains("service temperature 90.0 degC is above the "
                                            f"{mat} limit").all()


@pytest.mark.reference
def test_steel_candidates_priced_and_rated_by_hand():
    # material plus laying (DEVELOPERS.md#the-sizing-model-in-words): 2.0 per kg x the ASME
    # B36.10M mass 0.0246615 (D - t) t + 500 OD^1.1; PFA by Barlow on the steel wall
    built = build_candidates((MaterialChoice("steel", MassLayingCost(2.0, 500.0, 1.1)),),
                             catalog.default_catalog(), 2.19e9, 999.0, "anchored-throughout",
                             288.15).table.set_index("size")
    for size, od_mm, wall_mm in (("NPS 6 Sch 40", 168.3, 7.11), ("NPS 12 STD", 323.8, 9.53)):
        row = built.loc[size]
        mass = 0.0246615 * (od_mm - wall_mm) * wall_mm
        # the standard's constant is rounded to 6 figures: agreement to 1e-5
        assert row["cost_per_metre"] == pytest.approx(2.0 * mass + 500.0 * (od_mm / 1e3) ** 1.1,
                                                      rel=1e-5)
        barlow = 2 * 137.9e6 * (wall_mm * (1 - 0.125) - 1.5) / od_mm
        assert row["pfa_pa"] == pytest.approx(barlow, rel=1e-12)   # 15 degC: not derated


@pytest.mark.reference
def test_wave_speed_of_every_pe_candidate_by_hand():
    # docs/references.md#surge: Korteweg's a = sqrt(K/rho)/sqrt(1 + c1 K D/(E e)) with the
    # Wylie & Streeter thick-wall factor c1 = 2 (e/D)(1 + nu) + psi D/(D + e), psi = 1 - nu^2
    # anchored throughout; PE 100 short-term E 1.1 GPa, nu 0.45 (docs/references.md#materials)
    k, rho, e_mod, nu = 2.19e9, 999.0, 1.1e9, 0.45
    t = build_candidates((MaterialChoice("pe100", PowerLawPipeCost(1000.0, 1.2)),),
                         catalog.default_catalog(), k, rho, "anchored-throughout",
                         288.15).table
    d, e = t["inner_diameter_m"].to_numpy(), t["wall_m"].to_numpy()
    c1 = 2 * e / d * (1 + nu) + (1 - nu**2) * d / (d + e)
    want = np.sqrt(k / rho) / np.sqrt(1 + c1 * k * d / (e_mod * e))
    assert len(t) > 20
    np.testing.assert_allclose(t["wave_speed_m_s"], want, rtol=1e-13)


def test_hot_study_picks_no_plastic():
    # at 90 degC only metal without a temperature-limited lining may serve: here none of the
    # three materials qualifies, and the study says so instead of picking a plastic
    res = study(fluid={"kind": "water", "temperature": "90 degC", "pressure": "3 bar"}).run()
    assert not res.success
    reasons = res.candidates["reasons"]
    assert reasons.str.contains("service temperature").all()


@pytest.mark.reference
def test_derated_pe_at_35_degc():
    res = study(fluid={"kind": "water", "temperature": "35 degC"}).run()
    c = res.candidates
    pe = c[c["material"] == "pe100"]
    # linear between 30 degC (0.87) and 40 degC (0.74): 0.805 (the table, by hand)
    np.testing.assert_allclose(pe["temperature_factor"], 0.805, rtol=1e-12)
    np.testing.assert_allclose(pe["pfa_bar"], 0.805 * pe["pressure_rating_bar"], rtol=1e-12)


@pytest.mark.reference
def test_closed_loop_suction_pressure_by_hand():
    # EN 805: MDP = system pressure + pump head + surge; operating = the same without surge
    res = study(line={"length": "3 km", "static_head": "0 m", "minor_loss_k": 5.0,
                      "suction_pressure": "10 bar"},
                constraints={"surge_allowance": "15 m"}).run()
    c = res.candidates
    rho_g = res.study.fluid.density * 9.80665
    by_hand = 10e5 + (c["pump_head_max_m"] + 15.0) * rho_g
    np.testing.assert_allclose(c["mdp_bar"] * 1e5, by_hand, rtol=1e-13)
    np.testing.assert_allclose(c["operating_pressure_bar"] * 1e5,
                               10e5 + c["pump_head_max_m"] * rho_g, rtol=1e-13)
    # a 10 bar loop rules out every PN 10 / SDR 17 class, by its PFA
    weak = c[c["pressure_rating_bar"] <= 10.0]
    assert not weak["feasible"].any()
    assert weak["reasons"].str.contains("exceeds PFA|exceeds PMA").all()
    assert "MDP" in res.text() and "PMA" in res.text() and "service temperature" in res.text()


def test_constrained_optimum_sits_on_the_velocity_limit():
    vmax = 1.0
    res = study(constraints={"velocity_max": f"{vmax} m/s"}).run()
    opt = res.optimum.set_index("material")
    q = 400.0 / 3600.0
    for mat, o in opt.iterrows():
        d_limit = np.sqrt(4 * q / (np.pi * vmax))
        if o["limited_by"] == "velocity_max":
            # at the limit, to 1e-6
            assert o["velocity_peak_m_s"] == pytest.approx(vmax, rel=1e-6)
            assert o["inner_diameter_m"] == pytest.approx(d_limit, rel=1e-6)
            assert o["unconstrained_inner_diameter_m"] < o["inner_diameter_m"]
            assert o["unconstrained_eac"] <= o["eac"]
        assert o["velocity_peak_m_s"] <= vmax * (1 + 1e-6)
        # the optimum is the least EAC of its class's curve within the limit: a dense scan of
        # the same curve, independent of the minimizer, finds nothing lower
        cls = res.study.candidates
        cls = cls[(cls["material"] == mat) & (cls["class"] == o["class"])]
        lo = max(d_limit, cls["inner_diameter_m"].min())
        hi = cls["inner_diameter_m"].max()
        d = np.geomspace(lo, hi, 400)
        b, c = cls["inner_diameter_m"].to_numpy(), cls["cost_per_metre"].to_numpy()
        order = np.argsort(b)
        cost = np.exp(np.interp(np.log(d), np.log(b[order]), np.log(c[order])))
        from pipeopt.lifecycle import evaluate

        eac = evaluate(res.study.scenario, d, cls["roughness_m"].iloc[0], 0.0, cost,
                       eac_only=True)
        assert o["eac"] <= eac.min() * (1 + 1e-9)
        # bracketed by neighbouring nominal sizes of the same class
        for side in ("lower", "upper"):
            if o[f"{side}_size"] is not None:
                row = cls[cls["size"] == o[f"{side}_size"]]
                assert not row.empty


def test_two_stage_station_in_a_study_reconciles():
    res = study(growth={"flow_per_year": 0.03, "design_year": 20},
                pump_station={"cost_coefficient": 8000.0, "cost_exponent": 0.7,
                              "standby_fraction": 0.5, "life": 25, "stages": [0, 12]}).run()
    y = res.yearly()
    assert y.loc[y["year"] == 12, "capital_station"].iloc[0] > 0    # the second stage
    assert y.loc[y["year"] == 25, "station_renewal"].iloc[0] > 0    # stage 0 renewed
    assert y["discounted"].sum() == pytest.approx(res.best["pv_total"], rel=1e-12)
    # growth stops after the design year: flows (and energy) stay from year 20 on
    e = y.set_index("year")["energy_kwh"]
    assert e[25] == pytest.approx(e[20], rel=1e-12) and e[20] > e[19]
