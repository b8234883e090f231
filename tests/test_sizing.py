"""Tests of pipeopt.sizing: the sizing study against sources outside the project.

Sources, named beside each check:
- the closed-form economic diameter D* = (5B/(mA))^(1/(m+5)) and the m/5 split of costs at D*
  (derivation in docs/references.md#economics; Genereaux, Ind. Eng. Chem. 29(4), 1937, from
  memory, and the textbook treatment);
- Peters & Timmerhaus, Plant Design and Economics for Chemical Engineers: turbulent
  D_opt = 3.9 q^0.45 rho^0.13 (in, ft^3/s, lb/ft^3) and 0.363 q^0.45 rho^0.13 (m, m^3/s, kg/m^3),
  each in its own units, an order-of-magnitude check only;
- optimum velocity of pumped water about 1-2 m/s (common practice, docs/references.md#economics);
- the contributor guide's model section (DEVELOPERS.md#the-sizing-model-in-words) for
  the feasibility rules.
"""

from __future__ import annotations

import copy
import math
from pathlib import Path

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

from pipeopt import SizingStudy
from pipeopt.economics import capital_recovery_factor
from pipeopt.errors import InputError
from pipeopt.studyfile import StudyFileError

from .conftest import colebrook_mpmath

DATA = Path(__file__).parent / "data"

BASE = {
    "study": {"name": "check", "currency": "EUR"},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "2 km", "static_head": "0 m"},
    "duty": [{"flow": "0.2 m^3/s", "hours": 8000}],
    "pumping": {"efficiency": 0.75},
    "energy": {"price": 0.1},
    "economics": {"discount_rate": 0.06, "horizon": 30, "pipe_life": 30},
    "material": [{"name": "pe100", "classes": ["SDR 17"],
                  "cost": {"coefficient": 1500.0, "exponent": 1.4}}],
}


def study_from(**changes) -> SizingStudy:
    m = copy.deepcopy(BASE)
    for key, value in changes.items():
        section, _, name = key.partition("__")
        if name:
            m.setdefault(section, {})[name] = value
        else:
            m[section] = value
    return SizingStudy.from_dict(m)


# ------------------------------------------------------------------------------------------
# closed-form optimum (Genereaux 1937; derivation in docs/references.md#economics)
# ------------------------------------------------------------------------------------------
def bore_power_law_table(material: str, pressure_class: str, a: float, m: float) -> dict:
    """A cost table by designation of a * bore^m (a textbook cost model on the bore, for the
    closed form), for every size of one class."""
    from pipeopt import catalog

    sizes = catalog.list_sizes(material, classes=pressure_class)
    return {"table": {d: a * b**m for d, b in zip(sizes["designation"],
                                                   sizes["inner_diameter_m"], strict=True)}}


@pytest.mark.reference
def test_closed_form_optimum_with_constant_friction():
    f, a, m = 0.015, 1500.0, 1.4
    # the continuous optimum interpolates a class's costs log-log between its sizes, which
    # reproduces a power law of the bore exactly: the closed form applies
    st_ = study_from(hydraulics={"friction_method": "constant", "friction_factor": f},
                     material=[{"name": "pe100", "classes": ["SDR 17"],
                                "cost": bore_power_law_table("pe100", "SDR 17", a, m)}])
    rho = st_.fluid.density
    q, tau, p, eta, i, n = 0.2, 8000.0, 0.1, 0.75, 0.06, 30
    crf = capital_recovery_factor(i, n)
    big_a = a * crf                                            # capital charge per m per D^m
    big_b = 8 * f * rho * q**3 * tau * p / (math.pi**2 * eta * 1000.0)  # energy per m per D^-5
    d_star = (5 * big_b / (m * big_a)) ** (1 / (m + 5))
    res = st_.run()
    opt = res.optimum.iloc[0]
    assert opt["inner_diameter_m"] == pytest.approx(d_star, abs=1e-6)
    # at D*, the energy cost is m/5 of the capital charge
    lc = st_.evaluate()
    from pipeopt.lifecycle import evaluate
    at = evaluate(st_.scenario, np.array([opt["inner_diameter_m"]]), 0.0, 0.0,
                  np.array([a * opt["inner_diameter_m"] ** m]))
    energy_per_year = at.pv_energy[0] * crf
    capital_charge = at.capex_pipe[0] * crf
    assert energy_per_year / capital_charge == pytest.approx(m / 5, rel=1e-6)
    assert lc.eac.min() >= opt["eac"] - 1e-6  # no catalog size beats the continuous optimum


@pytest.mark.reference
def test_peters_timmerhaus_order_of_magnitude_and_velocity():
    # A typical turbulent water line (illustrative inputs): steel, 0.1 m^3/s, 8000 h/yr.
    st_ = study_from(duty=[{"flow": "0.1 m^3/s", "hours": 8000}], pumping={"efficiency": 0.7},
                     energy={"price": 0.12},
                     material=[{"name": "steel", "classes": ["STD"],
                                "cost": {"coefficient": 2400.0, "exponent": 1.2}}])
    opt = st_.run().optimum.iloc[0]
    q_si, rho_si = 0.1, st_.fluid.density
    d_pt_si = 0.363 * q_si**0.45 * rho_si**0.13                  # m (P&T SI form)
    d_pt_in = 3.9 * (q_si / 0.3048**3) ** 0.45 * (rho_si * 0.0624280) ** 0.13  # inches
    assert 0.5 < opt["inner_diameter_m"] / d_pt_si < 2.0         # order of magnitude only
    assert 0.5 < opt["inner_diameter_m"] / (d_pt_in * 0.0254) < 2.0
    assert 1.0 <= opt["velocity_m_s"] <= 2.0                      # common practice, 1-2 m/s


@settings(max_examples=12, deadline=None)
@given(p1=st.floats(0.03, 0.5), p2=st.floats(0.03, 0.5))
def test_higher_energy_price_never_gives_smaller_optimum(p1, p2):
    lo, hi = sorted((p1, p2))
    d_lo = study_from(energy={"price": lo}).run().optimum["inner_diameter_m"].iloc[0]
    d_hi = study_from(energy={"price": hi}).run().optimum["inner_diameter_m"].iloc[0]
    assert d_hi >= d_lo - 2e-6


# ------------------------------------------------------------------------------------------
# the result
# ------------------------------------------------------------------------------------------
REQUIRED = ["material", "size", "inner_diameter_m", "roughness_m", "velocity_m_s", "reynolds",
            "friction_factor", "head_loss_m", "electrical_power_kw", "energy_kwh_year1",
            "capex_pipe",
            "capex_pump_station", "pv_energy", "pv_maintenance", "pv_total", "eac", "feasible",
            "reasons"]


def test_demo_result_structure():
    res = SizingStudy.demo().run()
    assert set(REQUIRED) <= set(res.candidates.columns)
    assert res.success and res.best is not None
    feas = res.candidates[res.candidates["feasible"]]
    assert res.best["eac"] == feas["eac"].min()
    assert set(res.optimum["material"]) == {"ductile-iron", "pe100", "steel"}
    for _, o in res.optimum.iterrows():  # bracketing sizes really bracket the optimum
        assert o["lower_inner_diameter_m"] <= o["inner_diameter_m"] <= o["upper_inner_diameter_m"]
    text = res.text()
    assert "ILLUSTRATIVE" in text and "Caution" in text and "Best:" in text
    assert str(res) == text and "\n" not in repr(res) and "best pe100" in repr(res)
    assert "<table" in res._repr_html_()
    y = res.yearly()
    assert len(y) == 41 and list(y["year"]) == list(range(41))  # years 0 ... N
    # the yearly table reconciles to the present value (a sum of its discounted rows)
    assert y["discounted"].sum() == pytest.approx(res.best["pv_total"], rel=1e-12)
    assert (res.breakdown()["eac"].diff().dropna() >= 0).all()


def test_infeasible_candidates_stay_with_reasons():
    res = SizingStudy.demo().run()
    bad = res.candidates[~res.candidates["feasible"]]
    assert not bad.empty and (bad["reasons"] != "").all()
    fast = bad[bad["reasons"].str.contains("exceeds velocity_max")]
    assert (fast["velocity_peak_m_s"] > 2.5).all()
    slow = bad[bad["reasons"].str.contains("below velocity_min")]
    assert (slow["velocity_m_s"] < 0.5).all()


@pytest.mark.reference
def test_pressure_check_uses_joukowsky_or_allowance():
    # EN 805 (from memory): MDP = operating pressure + surge; Joukowsky (1900): dH = a dV / g
    res = study_from(line={"length": "2 km", "static_head": "60 m"},
                     constraints={"surge_allowance": "30 m"}).run()
    c = res.candidates
    np.testing.assert_allclose(c["surge_head_m"], 30.0)
    over = c["mdp_bar"] > c["pma_bar"]
    assert over.any() and (c.loc[over, "reasons"].str.contains("exceeds PMA")).all()
    assert not c.loc[~over, "reasons"].str.contains("exceeds PMA").any()
    # MDP = operating pressure + rho g surge (EN 805 vocabulary; by definition)
    rho_g = res.study.fluid.density * 9.80665
    np.testing.assert_allclose(c["mdp_bar"] * 1e5, (c["pump_head_max_m"] + 30.0) * rho_g,
                               rtol=1e-12)
    # without an allowance: Joukowsky a V_max / g with the candidate's wave speed
    res2 = study_from().run()
    c2 = res2.candidates
    wave = res2.study.candidates["wave_speed_m_s"]
    np.testing.assert_allclose(c2["surge_head_m"], wave * c2["velocity_peak_m_s"] / 9.80665)


def test_no_feasible_candidate_is_reported_not_raised():
    res = study_from(constraints={"velocity_max": "0.05 m/s"}).run()
    assert not res.success and res.best is None
    assert "no candidate meets every constraint" in res.message
    assert "No feasible candidate" in res.text()


def test_non_finite_money_is_refused_naming_the_candidates(monkeypatch):
    # a backstop behind the bounded inputs: an overflowed sum must never rank candidates
    import dataclasses

    st = SizingStudy.demo()
    real = SizingStudy.evaluate

    def overflowing(self, *args, **kwargs):
        lc = real(self, *args, **kwargs)
        eac = np.array(lc.eac, dtype=float)
        eac[..., 1] = np.inf
        return dataclasses.replace(lc, eac=eac)

    monkeypatch.setattr(SizingStudy, "evaluate", overflowing)
    name = st.candidates["material"].iloc[1] + " " + st.candidates["size"].iloc[1]
    with pytest.raises(InputError, match=f"life-cycle cost of {name} is not a finite number"):
        st.run()


def test_toml_study_with_cost_table():
    st_ = SizingStudy.from_toml(DATA / "marrowin_flats.toml")
    res = st_.run()
    pvc = res.candidates[res.candidates["material"] == "pvc-u"]
    row = pvc[pvc["size"] == "315 PN 10"].iloc[0]
    assert row["capex_pipe"] == pytest.approx(190.0 * 1800.0)  # table cost, exactly
    assert res.success


def test_aging_and_growth_raise_energy_over_the_years():
    res = SizingStudy.demo().run()
    y = res.yearly()
    assert (np.diff(y["energy_kwh"]) > 0).all()  # 1.2 %/yr growth and steel aging


# ------------------------------------------------------------------------------------------
# study-file errors name the key, the rule and the value
# ------------------------------------------------------------------------------------------
@pytest.mark.parametrize(
    ("changes", "match"),
    [
        ({"line": {"length": 3200, "static_head": "0 m"}},
         r"line\.length: expected a length such as '3\.2 km', got 3200 with no unit"),
        ({"line": {"length": "3 kg", "static_head": "0 m"}}, r"line\.length: expected a length"),
        ({"line": {"lenght": "3 km", "static_head": "0 m"}},
         r"line\.lenght: unknown key; did you mean 'line\.length'\?"),
        ({"pumping": {"efficiency": 1.5}}, r"pumping\.efficiency: must be <= 1"),
        ({"pumping": {"efficiency": "70 %"}}, r"pumping\.efficiency: expected a number"),
        ({"duty": [{"flow": "0.2 m^3/s", "hours": 9000}]}, r"duty\[0\]\.hours: must be <= 8760"),
        ({"duty": [{"flow": "0.2 m^3/s"}]}, r"duty\[0\]\.hours: required key is missing"),
        ({"economics": {"discount_rate": 0.06, "horizon": 30.5, "pipe_life": 30}},
         r"economics\.horizon: expected a whole number"),
        ({"material": [{"name": "unobtanium", "cost": {"coefficient": 1.0, "exponent": 1.0}}]},
         r"material\[0\]\.name: .*unknown material 'unobtanium'"),
        ({"material": [{"name": "pe100", "cost": {"coefficient": 1.0}}]},
         r"material\[0\]\.cost\.exponent: required key is missing"),
        ({"fluid": {"kind": "water", "temperature": "150 degC"}}, r"not liquid"),
        ({"fluid": {"kind": "wine", "temperature": "15 degC"}},
         r"fluid\.kind: must be one of water, coolprop, custom"),
        ({"constraints": {"velocity_min": "3 m/s", "velocity_max": "2 m/s"}},
         r"velocity_min \(3 m/s\) must be below velocity_max"),
        ({"extra": {}}, r"extra: unknown key"),
        ({"duty": [{"flow": "0.2 m^3/s", "hours": 4000, "price": "0.1 EUR"}]},
         r"duty\[0\]\.price: expected a number \(write it without a unit"),
        ({"duty": [{"flow": "0.2 m^3/s", "hours": 4000, "efficiency": 0.8},
                   {"flow": "0.1 m^3/s", "hours": 4000}], "pumping": {}},
         r"duty\[1\]\.efficiency: give a pump efficiency on every \[\[duty\]\], or on none"),
        ({"duty": [{"flow": "0.2 m^3/s", "hours": 4000, "efficiency": 0.8}]},
         r"duty\[0\]\.efficiency: the duty points give pump efficiencies"),
        ({"pumping": {"efficiency": 0.7, "npsh_margin": "1 m"}},
         r"pumping\.npsh_margin: needs npsh_required"),
        ({"equipment": [{"pressure_drop": "35 kPa", "at_flow": "400 m^3/h", "at": "1 km"}]},
         r"equipment\[0\]\.at: a chainage needs a long line"),
        ({"line": {"length": "2 km", "static_head": "0 m", "cover": "1 m"}},
         r"line\.cover: needs a ground profile"),
        ({"fluid": {"kind": "water", "temperature": "15 C"}},
         r"fluid\.temperature: '15 C': write degC for degrees Celsius"),
        ({"carbon": {"grid_factor": 0.25, "price": 80.0}},
         r"carbon\.grid_factor: expected an emission factor .* such as '0\.25 kg/kWh', got "
         r"0\.25 with no unit"),
        ({"carbon": {"grid_factor": "0.25 kg", "price": 80.0}},
         r"carbon\.grid_factor: expected an emission factor"),
        ({"study": {"name": "x", "author": 3}}, r"study\.author: expected text"),
    ],
)
def test_study_errors(changes, match):
    with pytest.raises(StudyFileError, match=match):
        study_from(**changes)


def test_study_labels_and_grid_factor_units():
    import datetime

    st = study_from(study={"name": "check", "currency": "EUR", "author": "A. Engineer",
                           "revision": "B", "date": datetime.date(2026, 3, 1)},
                    carbon={"grid_factor": "250 g/kWh", "price": 80.0})
    assert (st.info.author, st.info.revision, st.info.date) == ("A. Engineer", "B", "2026-03-01")
    assert st.scenario.grid_factor == pytest.approx(0.25, rel=1e-15)   # kg CO2e per kWh
    assert study_from().info.date == ""          # never the clock


def test_study_error_is_input_error_and_value_error():
    with pytest.raises(InputError):
        study_from(pumping={"efficiency": 0})
    with pytest.raises(ValueError):
        study_from(pumping={"efficiency": 0})


def test_toml_syntax_error_names_line_and_column(tmp_path):
    bad = tmp_path / "bad.toml"
    bad.write_text("[line]\nlength = \"3 km\nstatic_head = 3\n")
    with pytest.raises(StudyFileError, match=r"bad\.toml: TOML syntax error: .*line 2, column"):
        SizingStudy.from_toml(bad)


def test_python_constructor_matches_study_file():
    from pipeopt import Fluid
    from pipeopt.costs import EnergyTariff
    from pipeopt.duty import DutyProfile
    from pipeopt.sizing import Economics, Line, MaterialChoice

    st_ = SizingStudy(
        Fluid.water("15 degC"), Line("2 km", "0 m"), DutyProfile(("0.2 m^3/s",), (8000,)), 0.75,
        EnergyTariff(0.1), Economics(0.06, 30, 30),
        [MaterialChoice("pe100", {"coefficient": 1500.0, "exponent": 1.4}, classes=["SDR 17"])])
    a = st_.run().candidates["eac"].to_numpy()
    b = study_from().run().candidates["eac"].to_numpy()
    np.testing.assert_allclose(a, b, rtol=1e-13)
    with pytest.raises(InputError, match=r"line\.length: expected a length"):
        Line(2000.0, "0 m")
    # the same rule and message from Python and from a study file
    with pytest.raises(InputError, match=r"pumping\.efficiency: must be <= 1; got 1\.5"):
        SizingStudy(Fluid.water("15 degC"), Line("2 km", "0 m"),
                    DutyProfile(("0.2 m^3/s",), (8000,)), 1.5, EnergyTariff(0.1),
                    Economics(0.06, 30, 30), [MaterialChoice("pe100", {"coefficient": 1500.0,
                                                                        "exponent": 1.4})])


def test_study_rich_display():
    html = SizingStudy.demo()._repr_html_()
    assert "Sizing study" in html and "<table" in html and "flow [m³/h]" in html
    assert "Illustrative" in html


# ------------------------------------------------------------------------------------------
# time of use, pumps, equipment and fittings in a uniform line (docs/references.md#long-lines)
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
def test_time_of_use_prices_from_a_study_file():
    # one duty at 0.05 and one at 0.15 EUR/kWh: the energy cost is each duty's energy at its
    # own price (hand: the two halves of the hours, priced apart; time-of-use tariffs,
    # docs/references.md#long-lines)
    flat = study_from(duty=[{"flow": "0.2 m^3/s", "hours": 4000},
                            {"flow": "0.2 m^3/s", "hours": 4000}]).run()
    tou = study_from(duty=[{"flow": "0.2 m^3/s", "hours": 4000, "price": 0.05},
                           {"flow": "0.2 m^3/s", "hours": 4000, "price": 0.15}]).run()
    np.testing.assert_allclose(tou.candidates["pv_energy"], flat.candidates["pv_energy"],
                               rtol=1e-12)   # the mean of 0.05 and 0.15 is the flat 0.1
    half = study_from(duty=[{"flow": "0.2 m^3/s", "hours": 4000, "price": 0.05},
                            {"flow": "0.2 m^3/s", "hours": 4000}]).run()  # the other at 0.1
    np.testing.assert_allclose(half.candidates["pv_energy"],
                               0.75 * flat.candidates["pv_energy"], rtol=1e-12)
    assert tou.study.duty.prices == (0.05, 0.15)
    # by hand for every third candidate: P = rho g Q H / eta (Darcy-Weisbach, mpmath Colebrook),
    # yearly cost P (4000 x 0.05 + 4000 x 0.15) / 1000, present worth over 30 years at 6 %
    with mp.workdps(30):
        annuity = float(mp.fsum(1 / mp.mpf("1.06") ** t for t in range(1, 31)))
    for _, row in tou.candidates.iloc[::3].iterrows():
        d = row["inner_diameter_m"]
        v = 0.2 / (math.pi * d * d / 4)
        f = colebrook_mpmath(RHO_15 * v * d / MU_15, PE_ROUGHNESS / d)
        p_kw = RHO_15 * 9.80665 * 0.2 * f * 2000.0 / d * v * v / (2 * 9.80665) / 0.75 / 1000
        want = p_kw * (4000.0 * 0.05 + 4000.0 * 0.15) * annuity
        assert row["pv_energy"] == pytest.approx(want, rel=1e-5)


@pytest.mark.reference
def test_npsh_short_is_a_reason_for_every_candidate():
    # NPSH available at sea level from an open tank at the pump, water at 15 degC:
    # (101325 - 1705) / (999.1 g) = 10.17 m (ISO 9906 definition; docs/references.md)
    res = study_from(pumping={"efficiency": 0.75, "npsh_required": "9.5 m",
                              "npsh_margin": "1 m"}).run()
    assert not res.success
    assert res.candidates["reasons"].str.contains(
        r"NPSH available 10\.17 m at the pump inlet is below NPSH required 9\.50 m \+ margin "
        r"1\.00 m").all()
    ok = study_from(pumping={"efficiency": 0.75, "npsh_required": "9 m",
                             "npsh_margin": "1 m"}).run()
    assert ok.success
    high = study_from(pumping={"efficiency": 0.75, "npsh_required": "9 m",
                               "npsh_margin": "1 m", "elevation": "1000 m"}).run()
    assert not high.success   # the barometric pressure at 1000 m is 11.4 kPa lower


@pytest.mark.reference
def test_equipment_and_fittings_add_their_losses():
    base = study_from().run().candidates
    eq = study_from(equipment=[{"pressure_drop": "35 kPa", "at_flow": "0.2 m^3/s"}]).run()
    rho_g = eq.study.fluid.density * 9.80665
    np.testing.assert_allclose(eq.candidates["head_loss_m"] - base["head_loss_m"],
                               35e3 / rho_g, atol=1e-9)   # the stated drop at the stated flow
    fit = study_from(fittings={"gate-valve": 2, "exit": 1}).run().candidates
    from pipeopt.losses import fitting_k

    d = fit["inner_diameter_m"].to_numpy()
    v = fit["velocity_m_s"].to_numpy()
    k = 2 * np.asarray(fitting_k("gate-valve", d)) + 1.0
    np.testing.assert_allclose(fit["head_loss_m"] - base["head_loss_m"], k * v * v / 19.6133,
                               rtol=1e-9)
    # by hand where Crane's f_T table is flat (Crane TP-410, from memory;
    # docs/references.md#long-lines): 0.013 for the Schedule 40 bores of NPS 12-16
    # (303.18-381.00 mm), 0.012 from NPS 18 (428.46 mm) on; a gate valve is 8 f_T and the
    # exit 1.0; 2 g = 19.6133 m/s^2 (standard gravity, exact)
    f_t = np.select([(d >= 0.30318) & (d <= 0.381), d >= 0.42846], [0.013, 0.012], np.nan)
    flat = ~np.isnan(f_t)
    assert flat.sum() >= 5
    np.testing.assert_allclose((fit["head_loss_m"] - base["head_loss_m"])[flat],
                               ((2 * 8 * f_t + 1.0) * v * v / 19.6133)[flat], rtol=1e-9)


def test_upgrade_studies_refuse_the_sizing_only_keys():
    from pipeopt import UpgradeStudy
    from pipeopt.studyfile import read_toml

    d = read_toml(Path(__file__).parents[1] / "pipeopt" / "data" / "demo_upgrade.toml")
    d["duty"][0]["price"] = 0.1
    with pytest.raises(StudyFileError, match=r"duty\[0\]\.price: unknown key"):
        UpgradeStudy.from_dict(d)
    d = read_toml(Path(__file__).parents[1] / "pipeopt" / "data" / "demo_upgrade.toml")
    d["pumping"] = {"bep_efficiency": 0.8}
    with pytest.raises(StudyFileError, match=r"pumping\.bep_efficiency: unknown key"):
        UpgradeStudy.from_dict(d)


# ------------------------------------------------------------------------------------------
# every candidate by hand, the best by enumeration, the continuous optimum by scipy
# ------------------------------------------------------------------------------------------
# Water at 15 degC and 1 atm, IAPWS-95 and IAPWS R12-08 (docs/references.md#water-properties):
RHO_15, MU_15 = 999.1026, 1.13757e-3
PE_ROUGHNESS = 0.007e-3      # PE, Moody (1944) chart (docs/references.md#materials)


def hand_eac(bore, cost_per_metre, static=0.0, k=0.0):
    """EAC of one candidate of BASE by hand (DEVELOPERS.md#the-sizing-model-in-words): no
    growth, aging, station, maintenance or escalation, pipe life = horizon (no residual), so
    EAC = capital x CRF + the yearly energy cost; Darcy-Weisbach with a 40-digit mpmath
    Colebrook root; CRF = i (1 + i)^n / ((1 + i)^n - 1) in mpmath."""
    q, length, eta, hours, price, i, n = 0.2, 2000.0, 0.75, 8000.0, 0.1, 0.06, 30
    v = q / (math.pi * bore * bore / 4)
    f = colebrook_mpmath(RHO_15 * v * bore / MU_15, PE_ROUGHNESS / bore)
    head = static + (f * length / bore + k) * v * v / (2 * 9.80665)
    energy_cost = RHO_15 * 9.80665 * q * head / eta * hours / 1000.0 * price
    with mp.workdps(30):
        crf = float(mp.mpf(i) * (1 + mp.mpf(i)) ** n / ((1 + mp.mpf(i)) ** n - 1))
    return cost_per_metre * length * crf + energy_cost


@pytest.mark.reference
def test_every_candidate_by_hand_and_the_best_by_enumeration():
    # velocity limits 0.5-2.5 m/s (common practice) decide feasibility here; the cost is
    # 1500 OD^1.4 per metre on the outside diameter; the tolerance, 1e-5, covers the water
    # properties printed to 7 and 6 figures
    res = study_from(constraints={"velocity_min": "0.5 m/s", "velocity_max": "2.5 m/s"}).run()
    c = res.candidates
    bores = c["inner_diameter_m"].to_numpy()
    od = res.study.candidates.set_index("size").loc[c["size"], "outside_diameter_m"]
    costs = 1500.0 * od.to_numpy() ** 1.4
    np.testing.assert_allclose(c["capex_pipe"], costs * 2000.0, rtol=1e-12)
    want = np.array([hand_eac(b, m) for b, m in zip(bores, costs, strict=True)])
    np.testing.assert_allclose(c["eac"], want, rtol=1e-5)
    v = 0.2 / (np.pi * bores**2 / 4)
    ok = (v >= 0.5) & (v <= 2.5)
    assert ok.sum() >= 4 and (~ok).sum() >= 4
    assert c["feasible"].tolist() == ok.tolist()
    # brute force: the cheapest feasible row of the hand figures is the study's best
    best = int(np.argmin(np.where(ok, want, np.inf)))
    assert res.best["size"] == c["size"].iloc[best]
    assert res.best["eac"] == pytest.approx(want[best], rel=1e-5)


@pytest.mark.reference
def test_continuous_optimum_against_scipy_minimize_scalar():
    # a cost a bore^m per metre (the continuous optimum interpolates log-log, so the power law
    # is exact between sizes), Colebrook friction and a 20 m lift: the optimum of the hand
    # EAC function by scipy.optimize.minimize_scalar (bounded, Brent) over the class's bores
    a, m = 1500.0, 1.4
    st_ = study_from(line={"length": "2 km", "static_head": "20 m"},
                     material=[{"name": "pe100", "classes": ["SDR 17"],
                                "cost": bore_power_law_table("pe100", "SDR 17", a, m)}])
    opt = st_.run().optimum.iloc[0]
    bores = st_.candidates["inner_diameter_m"]
    found = optimize.minimize_scalar(lambda x: hand_eac(x, a * x**m, static=20.0),
                                     bounds=(bores.min(), bores.max()), method="bounded",
                                     options={"xatol": 1e-8})
    assert found.success
    assert opt["inner_diameter_m"] == pytest.approx(found.x, rel=1e-4)
    # flat at the optimum: the EAC agrees far closer than the diameter
    assert opt["eac"] == pytest.approx(found.fun, rel=1e-6)


@pytest.mark.reference
def test_hydraulic_columns_of_every_candidate_by_hand():
    # V = 4Q/(pi D^2), Re = rho V D / mu, f the 40-digit mpmath Colebrook root (Colebrook 1939),
    # h = f L/D V^2/2g (Darcy-Weisbach), P = rho g Q H / eta, E = P x 8000 h
    # (docs/references.md#friction; DEVELOPERS.md#the-sizing-model-in-words, steps 1-2)
    c = study_from(line={"length": "2 km", "static_head": "12 m"}).run().candidates
    for _, row in c.iloc[::3].iterrows():
        d = row["inner_diameter_m"]
        v = 0.2 / (math.pi * d * d / 4)
        re = RHO_15 * v * d / MU_15
        f = colebrook_mpmath(re, PE_ROUGHNESS / d)
        h = f * 2000.0 / d * v * v / (2 * 9.80665)
        p_kw = RHO_15 * 9.80665 * 0.2 * (12.0 + h) / 0.75 / 1000.0
        assert row["velocity_m_s"] == pytest.approx(v, rel=1e-14)
        assert row["reynolds"] == pytest.approx(re, rel=1e-5)
        assert row["friction_factor"] == pytest.approx(f, rel=1e-5)
        assert row["head_loss_m"] == pytest.approx(h, rel=1e-5)
        assert row["pump_head_m"] == pytest.approx(12.0 + h, rel=1e-5)
        assert row["electrical_power_kw"] == pytest.approx(p_kw, rel=1e-5)
        assert row["energy_kwh_year1"] == pytest.approx(p_kw * 8000.0, rel=1e-5)


@pytest.mark.reference
def test_yearly_table_of_a_growing_study_by_hand():
    # flows grow 3 % a year to the design year 5 and then stay (DEVELOPERS.md model section,
    # step 1); each year's energy by hand, discounted by 1.06^-t (docs/references.md#economics)
    res = study_from(growth={"flow_per_year": 0.03, "design_year": 5},
                     economics={"discount_rate": 0.06, "horizon": 8, "pipe_life": 30}).run()
    y = res.yearly().set_index("year")
    d = res.best["inner_diameter_m"]
    for t in range(1, 9):
        q = 0.2 * 1.03 ** (min(t, 5) - 1)
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(RHO_15 * v * d / MU_15, PE_ROUGHNESS / d)
        h = f * 2000.0 / d * v * v / (2 * 9.80665)
        e_kwh = RHO_15 * 9.80665 * q * h / 0.75 * 8000.0 / 1000.0
        assert y.loc[t, "flow_multiplier"] == pytest.approx(1.03 ** (min(t, 5) - 1), rel=1e-14)
        assert y.loc[t, "energy_kwh"] == pytest.approx(e_kwh, rel=1e-5)
        assert y.loc[t, "energy_cost"] == pytest.approx(e_kwh * 0.1, rel=1e-5)
        assert y.loc[t, "discounted"] == pytest.approx(y.loc[t, "total"] / 1.06**t, rel=1e-13)
    # pipe life 30 > horizon 8: credited 1 - 8/30 of the capital at the horizon (a credit,
    # negative in the table)
    assert y.loc[8, "residual"] == pytest.approx(-res.best["capex_pipe"] * (1 - 8 / 30),
                                                 rel=1e-12)


# ------------------------------------------------------------------------------------------
# feasibility rules, derating and a staged station, by hand
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
@pytest.mark.parametrize(("temperature", "factor"),
                         [(15.0, 1.0), (25.0, 0.935), (30.0, 0.87), (35.0, 0.805)])
def test_pe_ratings_derated_per_iso_4427_annex_a(temperature, factor):
    # ISO 4427-1:2019 / EN 12201-1 Annex A, Table A.1 (from memory): PE factors 1.00 at 20,
    # 0.87 at 30 and 0.74 at 40 degC, linear between (25 degC: (1.00 + 0.87) / 2 = 0.935,
    # 35 degC: (0.87 + 0.74) / 2 = 0.805), 1.00 below 20 degC; PN of PE 100 SDR 17 =
    # 20 MRS / (C (SDR - 1)) = 20 x 10 / (1.25 x 16) = 10 bar (ISO 4427-1); PFA = f PN
    c = study_from(fluid={"kind": "water", "temperature": f"{temperature} degC"}).run().candidates
    np.testing.assert_allclose(c["pressure_rating_bar"], 20 * 10 / (1.25 * 16), rtol=1e-12)
    np.testing.assert_allclose(c["temperature_factor"], factor, rtol=1e-12)
    np.testing.assert_allclose(c["pfa_bar"], 10.0 * factor, rtol=1e-12)


@pytest.mark.reference
def test_pe_above_its_40_degc_rating_is_refused_with_the_reason():
    # ISO 4427-1 / EN 12201-1 give PE ratings for water from 0 to 40 degC only (from memory):
    # at 45 degC no candidate is rated, each says why
    c = study_from(fluid={"kind": "water", "temperature": "45 degC"}).run().candidates
    assert not c["feasible"].any()
    assert c["reasons"].str.contains("service temperature 45.0 degC").all()


def wave_speed_pe100(od: float, e: float, bulk: float, rho: float) -> float:
    """Korteweg's wave speed with Wylie & Streeter's thick-wall factor, anchored throughout
    (docs/references.md#surge), for PE 100 (E = 1.1 GPa short-term, nu = 0.45, the values of
    docs/references.md#surge) of outside diameter ``od`` and wall ``e``: D = OD - 2 e."""
    nu = 0.45
    d = od - 2 * e
    c1 = 2 * e / d * (1 + nu) + (1 - nu * nu) * d / (d + e)
    return math.sqrt(bulk / rho) / math.sqrt(1 + c1 * bulk * d / (1.1e9 * e))


@pytest.mark.reference
def test_feasibility_reasons_of_every_candidate_by_hand():
    # a 60 m lift with limits 0.6-2.0 m/s, PE 100 SDR 17 (PN 10, ISO 4427-1) at 15 degC:
    # - V = Q / (pi D^2 / 4) (continuity): too fast above 2.0, too slow below 0.6 m/s;
    # - operating pressure rho g (60 m + Darcy-Weisbach loss, mpmath Colebrook root) above the
    #   PFA 10 bar;
    # - MDP = operating pressure + rho g a V / g (EN 805 from memory; Joukowsky 1900 with
    #   Korteweg's a, K = rho w^2 of iapws at 15 degC) above the PMA, taken equal to PN 10
    #   for PE (no surge allowance above PN: the conservative basis the catalog states)
    import iapws

    res = study_from(line={"length": "2 km", "static_head": "60 m"},
                     constraints={"velocity_min": "0.6 m/s", "velocity_max": "2.0 m/s"}).run()
    w = iapws.IAPWS95(T=288.15, P=0.101325)
    bulk = w.rho * w.w ** 2
    cat = res.study.candidates.set_index("size").loc[res.candidates["size"]]
    kinds = set()
    for (_, row), o, e in zip(res.candidates.iterrows(), cat["outside_diameter_m"],
                              cat["wall_m"], strict=True):
        d = row["inner_diameter_m"]
        assert d == pytest.approx(o - 2 * e, rel=1e-12)      # the wall of the size table
        assert 0.95 <= o / 17 / e <= 1.0 or e == 0.002         # OD / SDR rounded up, >= 2 mm
        v = 0.2 / (math.pi * d * d / 4)
        f = colebrook_mpmath(RHO_15 * v * d / MU_15, PE_ROUGHNESS / d)
        p_op = RHO_15 * 9.80665 * (60.0 + f * 2000.0 / d * v * v / (2 * 9.80665))
        surge = wave_speed_pe100(o, e, bulk, RHO_15) * v / 9.80665
        mdp = p_op + RHO_15 * 9.80665 * surge
        assert row["velocity_peak_m_s"] == pytest.approx(v, rel=1e-12)
        assert row["surge_head_m"] == pytest.approx(surge, rel=1e-5)
        assert row["mdp_bar"] == pytest.approx(mdp / 1e5, rel=1e-5)
        want = {"exceeds velocity_max": v > 2.0, "below velocity_min": v < 0.6,
                "exceeds PFA": p_op > 10e5, "exceeds PMA": mdp > 10e5}
        got = {k: k in row["reasons"] for k in want}
        assert got == want, row["size"]
        assert row["feasible"] == (not any(want.values()))
        if v > 2.0 or v < 0.6:
            assert f"velocity {v:.2f} m/s" in row["reasons"]
        kinds |= {k for k, on in want.items() if on}
    assert kinds == {"exceeds velocity_max", "below velocity_min", "exceeds PFA",
                     "exceeds PMA"}
    assert res.candidates["feasible"].sum() >= 2


@pytest.mark.reference
def test_staged_pump_station_present_value_by_hand():
    # flows grow 3 %/yr to the design year 20; the station (9000 (1.5 P)^0.68, standby 50 %)
    # is built at year 0 for the peak of years 1-10 and extended at year 10 for the rest;
    # each stage's capital discounted at 6 % (present value, common practice); maintenance
    # 1.5 %/yr of the stages in service (the second from year 11); life 30: the year-10 stage
    # is worth 1 - 20/30 of its capital at the horizon 30 (straight-line residual, common
    # practice); peak P = rho g Q H / eta with H = 20 m + Darcy-Weisbach (mpmath Colebrook)
    res = study_from(line={"length": "2 km", "static_head": "20 m"},
                     growth={"flow_per_year": 0.03, "design_year": 20},
                     economics={"discount_rate": 0.06, "horizon": 30, "pipe_life": 30},
                     pump_station={"cost_coefficient": 9000.0, "cost_exponent": 0.68,
                                   "standby_fraction": 0.5, "life": 30, "maintenance": 0.015,
                                   "stages": [0, 10]}).run()
    best = res.best
    d = best["inner_diameter_m"]

    def peak_kw(t):
        q = 0.2 * 1.03 ** (min(t, 20) - 1)
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(RHO_15 * v * d / MU_15, PE_ROUGHNESS / d)
        return RHO_15 * 9.80665 * q * (20.0 + f * 2000.0 / d * v * v / 19.6133) / 0.75 / 1e3

    p_first = max(peak_kw(t) for t in range(1, 11))
    p_all = max(peak_kw(t) for t in range(1, 31))
    c0 = 9000.0 * (1.5 * p_first) ** 0.68
    c1 = 9000.0 * (1.5 * (p_all - p_first)) ** 0.68
    with mp.workdps(30):
        disc = [mp.mpf(1) / mp.mpf("1.06") ** t for t in range(31)]
        pv_capital = float(c0 + c1 * disc[10])
        pv_maint = float(mp.fsum(0.015 * (c0 + (c1 if t > 10 else 0.0)) * disc[t]
                                 for t in range(1, 31)))
        pv_resid = float(c1 * (1 - mp.mpf(20) / 30) * disc[30])
    assert best["installed_power_kw"] == pytest.approx(1.5 * p_all, rel=1e-5)
    assert best["capex_pump_station"] == pytest.approx(c0 + c1, rel=1e-5)
    assert best["pv_pump_station"] == pytest.approx(pv_capital, rel=1e-5)
    assert best["pv_maintenance"] == pytest.approx(pv_maint, rel=1e-5)   # no pipe maintenance
    assert best["pv_residual"] == pytest.approx(pv_resid, rel=1e-5)      # pipe life = horizon
    assert best["pv_replacement"] == 0.0


@pytest.mark.reference
def test_growth_capped_by_the_flow_cap_by_hand():
    # flows grow 5 %/yr and never exceed the cap 0.25 m3/s (multiplier min(1.05^(t-1), 1.25):
    # the cap binds from year 6, 1.05^5 = 1.276 > 1.25); each year's energy by hand
    # (Darcy-Weisbach, mpmath Colebrook, P = rho g Q H / eta), the largest velocity and pump
    # head of any year at the cap (continuity Q / (pi D^2 / 4))
    res = study_from(growth={"flow_per_year": 0.05, "flow_cap": "0.25 m^3/s"},
                     economics={"discount_rate": 0.06, "horizon": 10, "pipe_life": 10}).run()
    y = res.yearly().set_index("year")
    best = res.best
    d = best["inner_diameter_m"]

    def head_loss(q):
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(RHO_15 * v * d / MU_15, PE_ROUGHNESS / d)
        return f * 2000.0 / d * v * v / (2 * 9.80665)

    for t in range(1, 11):
        m = min(1.05 ** (t - 1), 1.25)
        assert y.loc[t, "flow_multiplier"] == pytest.approx(m, rel=1e-14)
        q = 0.2 * m
        e_kwh = RHO_15 * 9.80665 * q * head_loss(q) / 0.75 * 8000.0 / 1000.0
        assert y.loc[t, "energy_kwh"] == pytest.approx(e_kwh, rel=1e-5)
    assert (y.loc[6:, "flow_multiplier"] == 1.25).all()
    assert best["velocity_peak_m_s"] == pytest.approx(0.25 / (math.pi * d * d / 4), rel=1e-12)
    assert best["pump_head_max_m"] == pytest.approx(head_loss(0.25), rel=1e-5)


@pytest.mark.reference
def test_class_curves_of_the_optimum_equal_numpy_interp_class_by_class():
    # the continuous optimum interpolates every class in one pass; numpy.interp (the reference,
    # an independent implementation) applied class by class gives the same cost and carbon
    # (log-log), wave speed (linear) and the lower rating of the two neighbouring sizes
    from pipeopt.optimum import _Classes

    st_ = study_from(material=[{"name": "ductile-iron", "cost": {"coefficient": 2100.0,
                                                                  "exponent": 1.3}},
                               {"name": "pe100", "cost": {"coefficient": 1500.0,
                                                          "exponent": 1.45}}])
    c = st_.candidates
    cl = _Classes(c, np.ones(len(c)))
    rng = np.random.default_rng(3)
    groups = rng.integers(0, len(cl.groups), 4000)
    lo = np.array([g["d"][0] for g in cl.groups])[groups]
    hi = np.array([g["d"][-1] for g in cl.groups])[groups]
    d = np.exp(rng.uniform(np.log(lo * 0.9), np.log(hi * 1.1)))
    # catalog bores themselves, and the ends of each class
    d[:len(cl.groups)] = lo[:len(cl.groups)]
    d[-50:] = np.array([g["d"][len(g["d"]) // 2] for g in cl.groups])[groups[-50:]]
    got = cl.at(groups, d, full=True)
    for j, g in enumerate(cl.groups):
        sel = groups == j
        x = g["d"]
        ld = np.log(np.clip(d[sel], x[0], x[-1]))
        np.testing.assert_allclose(got["cost"][sel],
                                   np.exp(np.interp(ld, np.log(x), np.log(g["cost"]))),
                                   rtol=1e-14)
        if np.all(g["co2"] > 0):
            np.testing.assert_allclose(got["co2"][sel],
                                       np.exp(np.interp(ld, np.log(x), np.log(g["co2"]))),
                                       rtol=1e-14)
        np.testing.assert_allclose(got["wave"][sel], np.interp(d[sel], x, g["wave"]),
                                   rtol=1e-14)
        if x.size > 1:
            k = np.clip(np.searchsorted(x, d[sel], side="right") - 1, 0, x.size - 2)
            nxt = np.where(np.isclose(d[sel], x[k], rtol=1e-12), k, k + 1)
            np.testing.assert_array_equal(got["pfa"][sel], np.minimum(g["pfa"][k],
                                                                      g["pfa"][nxt]))
            np.testing.assert_array_equal(got["pma"][sel], np.minimum(g["pma"][k],
                                                                      g["pma"][nxt]))


@pytest.mark.reference
@settings(max_examples=8, deadline=None)
@given(price=st.floats(0.03, 0.45))
def test_continuous_optimum_is_no_worse_than_a_dense_scan_or_any_bore(price):
    # Along a class the EAC has a kink at every catalog bore (prices interpolated size to
    # size), and over ranges of energy price the minimum sits on a bore. Reference: a dense
    # scan of the same class curve (4,000 log-spaced diameters, numpy.interp log-log of the
    # class's prices, the model evaluated directly) plus every catalog bore of the class: no
    # point of it is below the optimum found.
    from pipeopt.lifecycle import evaluate

    study = SizingStudy.demo()
    res = study.run(inputs={"energy_price": price})
    var = study.variations({"energy_price": price})
    for _, o in res.optimum.iterrows():
        cls = study.candidates
        cls = cls[(cls["material"] == o["material"]) & (cls["class"] == o["class"])]
        b = np.sort(np.unique(cls["inner_diameter_m"].to_numpy()))
        cost = cls.groupby("inner_diameter_m")["cost_per_metre"].first().loc[b].to_numpy()
        lo = max(b[0], o["inner_diameter_m"] if o["limited_by"] == "velocity_max" else 0.0)
        hi = min(b[-1], o["inner_diameter_m"] if o["limited_by"] == "velocity_min" else 9.0)
        d = np.concatenate([np.geomspace(lo, hi, 4000), b[(b >= lo) & (b <= hi)]])
        c = np.exp(np.interp(np.log(d), np.log(b), np.log(cost)))
        eac = evaluate(study.scenario, d, cls["roughness_m"].iloc[0],
                       cls["aging_m_per_year"].iloc[0], c, variations=var, eac_only=True)[0]
        assert o["eac"] <= eac.min() * (1 + 1e-12)


@pytest.mark.parametrize("make", [SizingStudy.demo, study_from], ids=["demo", "base"])
def test_continuous_optimum_settles_in_a_few_evaluations(make, monkeypatch):
    # Behaviour of the minimizer, not a timing: started at the scan's parabola, one Newton
    # step on and rescaled to a curvature of 1 there, L-BFGS-B confirms the minimum in a few
    # evaluations (it hovered for up to nine at the kinks of a piece's maximum, and forty to
    # ninety before it worked between catalog bores). Its answer is checked against a dense
    # scan by test_continuous_optimum_is_no_worse_than_a_dense_scan_or_any_bore.
    import pipeopt.optimum as po

    calls = []
    real = po.optimize.minimize

    def counted(*args, **kwargs):
        res = real(*args, **kwargs)
        calls.append(res.nfev)
        return res

    monkeypatch.setattr(po.optimize, "minimize", counted)
    study = make()
    for price in np.linspace(0.03, 0.45, 15):
        study.run(inputs={"energy_price": float(price)})
    assert calls and max(calls) <= 4, calls
