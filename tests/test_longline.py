"""Tests of pipeopt.longline: a long-line sizing study end to end.

Sources: the model of the contributor guide (DEVELOPERS.md, "Long lines") for the rules
checked (every stretch within its class, every point at or above the least pressure, the best
design the least EAC of the feasible ones, cash flows that add up to the present value); the
demo is invented and illustrative. Hand-worked checks of the grade line and of the station
optimizer are in tests/test_profile.py and tests/test_stations.py.
"""

from __future__ import annotations

import copy
import os
import re
import subprocess
import sys
import tomllib
from importlib import resources

import numpy as np
import pytest

from pipeopt import SizingStudy
from pipeopt.errors import InputError
from pipeopt.longline import PROFILE_COLUMNS, STATION_COLUMNS
from pipeopt.studyfile import StudyFileError
from pipeopt.uncertainty import Triangular, Uniform

DEMO = tomllib.loads(resources.files("pipeopt").joinpath("data", "demo_longline.toml")
                     .read_text("utf-8"))


@pytest.fixture(scope="module")
def demo():
    study = SizingStudy.demo("longline")
    return study, study.run()


def test_demo_result(demo):
    study, res = demo
    assert res.success and res.best is not None
    c = res.candidates
    feas = c[c["feasible"]]
    assert res.best["eac"] == feas["eac"].min()
    assert set(c["boosters"]) == {0, 1, 2}
    # every design of every pipe: one per pipe and number of boosters (3 x 3 sizes)
    assert len(c) == 9 * 3
    text = res.text()
    for word in ("ILLUSTRATIVE", "Caution", "classes along the line", "head station",
                 "booster 1", "best with each number of boosters"):
        assert word in text
    assert "continuous optimum" not in text.lower() and res.optimum.empty
    # the chosen design runs below atmospheric pressure on a stretch: the summary (and so every
    # report) names that stretch as a caution, exactly as the candidate's notes give it
    vacuum = [c for c in res.best["notes"].split("; ") if c.startswith("sub-atmospheric")]
    assert vacuum and f"caution: {vacuum[0]}; air valves" in text
    assert res.profile["pressure_min_bar"].min() < 0


@pytest.mark.reference
def test_profile_and_stations_tables(demo):
    study, res = demo
    prof = res.profile
    assert list(prof.columns) == PROFILE_COLUMNS
    assert list(res.stations.columns) == STATION_COLUMNS
    x = prof["chainage_m"].to_numpy()
    assert x[0] == 0.0 and x[-1] == 39600.0 and np.all(np.diff(x) >= 0)
    # every point at or above the least pressure, at every duty and year
    assert np.all(prof["pressure_min_bar"] >= prof["least_pressure_bar"] - 1e-9)
    # every stretch within the PFA of its class (operating, without surge); the PFA of a
    # ductile-iron C class is its number in bar and PMA = 1.2 PFA (EN 545:2010, from memory;
    # docs/references.md#pipe-dimensions), at 12 degC with no derating
    line = prof[~prof["station"].str.endswith("suction")]
    assert np.all(line["pressure_max_bar"] <= line["pfa_bar"] + 1e-9)
    number = prof["class"].str.removeprefix("C").astype(float)
    np.testing.assert_allclose(prof["pfa_bar"], number, rtol=1e-12)
    np.testing.assert_allclose(prof["pma_bar"], 1.2 * number, rtol=1e-12)
    assert {"C25", "C40"} <= set(prof["class"])          # classes telescoped along the line
    # the grade line is never below the pipe minus the least head
    assert np.all(prof["head_min_m"] >= prof["least_head_m"] - 1e-9)
    n = int(res.best["boosters"])
    assert len(res.stations) == n + 1
    # the lowest point of the lowest grade line is at the ridge, named sub-atmospheric
    ridge = prof.loc[prof["pressure_min_bar"].idxmin()]
    assert ridge["chainage_m"] == 22000.0 and ridge["pressure_min_bar"] < 0
    assert "sub-atmospheric at" in res.best["notes"] and "21.4-22.9 km" in res.best["notes"]
    # a booster's suction: NPSH available = required + margin where it is the least allowed
    st = res.stations
    assert np.all(st["npsh_available_m"] >= st["npsh_required_m"] + 1.0 - 1e-9)


@pytest.mark.reference
def test_yearly_cash_flows_add_up(demo):
    # each year's amounts discounted by the test's own factor 1.05^-t (economics.discount_rate
    # 5 %) add up to the present value, and EAC = PV x r(1+r)^n/((1+r)^n-1) over 40 years
    # (capital recovery factor, common practice); the flows grow 0.5 % a year, compounded, to
    # the design year 20 and stay there
    _, res = demo
    y = res.yearly()
    assert len(y) == 41
    t = y["year"].to_numpy(dtype=float)
    amounts = y.drop(columns=["year", "flow_multiplier", "energy_kwh", "peak_kw", "total",
                              "discount_factor", "discounted"]).sum(axis=1)
    pv = float((amounts * 1.05**-t).sum())
    assert pv == pytest.approx(res.best["pv_total"], rel=1e-12)
    assert y["discounted"].sum() == pytest.approx(pv, rel=1e-12)
    crf = 0.05 * 1.05**40 / (1.05**40 - 1)
    assert res.best["eac"] == pytest.approx(pv * crf, rel=1e-12)
    np.testing.assert_allclose(y["flow_multiplier"].iloc[1:],
                               1.005 ** np.minimum(np.arange(40), 19), rtol=1e-14)


@pytest.mark.reference
def test_npsh_available_at_every_station_by_hand(demo):
    # NPSH available = suction gauge head + (p_atm - p_v) / (rho g) (ISO 9906 definition, from
    # memory), p_atm by the ISO 2533 troposphere formula at the station's ground (from memory),
    # p_v and rho of water at 12 degC from the iapws package (IAPWS-95). The head station draws
    # from the sump at 44 m onto a pipe axis at 45 - 1.2 m cover - OD/2; the booster receives
    # the larger of its 0.5 bar minimum and NPSH required 5 m + margin 1 m less the
    # absolute head, which here is the 0.5 bar (boosters.suction_pressure_min)
    import iapws

    _, res = demo
    rho = iapws.IAPWS95(T=285.15, P=0.101325).rho
    pv = iapws.IAPWS95(T=285.15, x=0).P * 1e6
    rho_g = rho * 9.80665
    st_ = res.stations
    z = st_["ground_m"].to_numpy()
    p_atm = 101325.0 * (1 - 0.0065 * z / 288.15) ** (9.80665 * 0.0289644 / (8.3144598 * 0.0065))
    from pipeopt import catalog

    first = res.best["classes_along"].split(" 0.0-")[0]          # e.g. "DN 700 C25"
    od = float(catalog.lookup("ductile-iron", first)["outside_diameter_m"])
    suction = np.array([44.0 - (45.0 - 1.2 - od / 2)]
                       + [max(0.5e5 / rho_g, 6.0 + (pv - p) / rho_g) for p in p_atm[1:]])
    np.testing.assert_allclose(st_["suction_pressure_min_bar"], suction * rho_g / 1e5,
                               rtol=1e-9)
    np.testing.assert_allclose(st_["npsh_available_m"], suction + (p_atm - pv) / rho_g,
                               rtol=1e-9)
    assert np.all(st_["npsh_available_m"] >= 5.0 + 1.0)


def simple_line() -> dict:
    """The demo line without growth, boosters, equipment, fittings or line K: one duty of
    1600 m3/h for 8000 h, wire-to-water efficiency 0.8, class C40 only, roughness 0.1 mm."""
    d = copy.deepcopy(DEMO)
    for key in ("growth", "equipment", "fittings", "boosters"):
        d.pop(key)
    d["line"] = {"static_head": "246 m", "source_level": "44 m", "cover": "1.2 m"}
    d["duty"] = [{"name": "all year", "flow": "1600 m^3/h", "hours": 8000}]
    d["pumping"] = {"efficiency": 0.8}
    d["material"][0]["classes"] = ["C40"]
    d["material"][0]["roughness"] = "0.1 mm"
    return d


def hand_grade(nominal: str, q: float) -> tuple[float, float]:
    """(friction over the whole line, least head the head station must hold) for the simple
    line with the climb and descent sizes ``nominal`` ("DN 700 / DN 600") at flow ``q``:
    Darcy-Weisbach with f from Colebrook-White (Colebrook 1939) by mpmath.findroot, water at
    12 degC from iapws (IAPWS-95), and the control rule of the contributor guide: the larger of
    the delivery's need (44 + 246 m) and every point's least head (axis + (p_v + rho g 3 m -
    p_atm) / (rho g), ISO 2533 at the ground, from memory) plus the friction up to it."""
    import iapws
    import mpmath

    from pipeopt import catalog

    w = iapws.IAPWS95(T=285.15, P=0.101325)
    rho, nu = w.rho, w.mu / w.rho
    pv = iapws.IAPWS95(T=285.15, x=0).P * 1e6
    rho_g = rho * 9.80665
    x = np.array([float(p["chainage"].split()[0]) * 1000 for p in DEMO["profile"]])
    z = np.array([float(p["elevation"].split()[0]) for p in DEMO["profile"]])
    p_atm = 101325.0 * (1 - 0.0065 * z / 288.15) ** (9.80665 * 0.0289644 / (8.3144598 * 0.0065))
    climb, descent = nominal.split(" / ")
    pipes = [catalog.lookup("ductile-iron", f"{n} C40") for n in (climb, descent)]
    sec = np.where(x[:-1] < 22000.0, 0, 1)                        # the section of each stretch
    bore = np.array([float(pipes[k]["inner_diameter_m"]) for k in sec])
    od = np.array([float(pipes[k]["outside_diameter_m"]) for k in sec])
    loss = []
    for d, length in zip(bore, np.diff(x), strict=True):
        v = q / (np.pi * d * d / 4)
        re = v * d / nu
        root = mpmath.findroot(lambda y, d=d, re=re: y + 2 * mpmath.log10(
            1e-4 / d / 3.7 + 2.51 * y / re), 8)
        loss.append(float(1 / root**2) * length / d * v * v / (2 * 9.80665))
    f_cum = np.concatenate([[0.0], np.cumsum(loss)])
    axis = z - 1.2 - 0.5 * np.append(od, od[-1])
    least = axis + (pv + 3.0 * rho_g - p_atm) / rho_g
    return f_cum[-1], max((least + f_cum).max(), 44.0 + 246.0 + f_cum[-1])


@pytest.mark.reference
def test_time_of_use_energy_of_year_one_by_hand():
    # the simple line with its two duty points back (1600 m3/h for 4000 h at 0.16, 1000 m3/h
    # for 3500 h at 0.08 EUR/kWh) and a demand charge of 70 per kW of peak: year 1's energy
    # and bill by hand, each duty at its own grade line (hand_grade), P = rho g Q H / eta
    import iapws

    d = simple_line()
    d["duty"] = copy.deepcopy(DEMO["duty"])
    res = SizingStudy.from_dict(d).run()
    rho_g = iapws.IAPWS95(T=285.15, P=0.101325).rho * 9.80665
    for idx, row in res.candidates.iterrows():
        kw = []
        for flow, hours, price in ((1600.0, 4000.0, 0.16), (1000.0, 3500.0, 0.08)):
            _, g0 = hand_grade(row["nominal"], flow / 3600.0)
            kw.append((rho_g * flow / 3600.0 * (g0 - 44.0) / 0.8 / 1000.0, hours, price))
        energy = sum(p * h for p, h, _ in kw)
        bill = sum(p * h * c for p, h, c in kw) + 70.0 * max(p for p, _, _ in kw)
        assert row["energy_kwh_year1"] == pytest.approx(energy, rel=1e-9)
        year1 = res.yearly(idx).set_index("year").loc[1]
        assert year1["energy_kwh"] == pytest.approx(energy, rel=1e-9)
        assert year1["peak_kw"] == pytest.approx(max(p for p, _, _ in kw), rel=1e-9)
        assert year1["energy_cost"] == pytest.approx(bill, rel=1e-9)


@pytest.mark.reference
def test_pump_head_and_energy_of_every_design_by_hand():
    # every design of the simple line (one duty, 1600 m3/h, 8000 h): friction, pump head,
    # power rho g Q H / eta (common practice) and year 1's energy by hand (hand_grade above)
    import iapws

    res = SizingStudy.from_dict(simple_line()).run()
    rho_g = iapws.IAPWS95(T=285.15, P=0.101325).rho * 9.80665
    q = 1600.0 / 3600.0
    c = res.candidates
    assert len(c) == 9
    for _, row in c.iterrows():
        friction, g0 = hand_grade(row["nominal"], q)
        assert row["head_loss_m"] == pytest.approx(friction, rel=1e-9)
        assert row["pump_head_m"] == pytest.approx(g0 - 44.0, rel=1e-9)
        power = rho_g * q * (g0 - 44.0) / 0.8 / 1000.0
        assert row["electrical_power_kw"] == pytest.approx(power, rel=1e-9)
        assert row["energy_kwh_year1"] == pytest.approx(power * 8000.0, rel=1e-9)


def test_python_constructor_matches_the_study_file(demo):
    from pipeopt import Fluid
    from pipeopt.costs import EnergyTariff, PumpStationCost
    from pipeopt.duty import DutyProfile
    from pipeopt.inputs import Constraints, Economics, Line, MaterialChoice, Pumping
    from pipeopt.losses import Equipment, Fittings
    from pipeopt.profile import GroundProfile
    from pipeopt.route import LineSection
    from pipeopt.stations import Boosters

    pts = DEMO["profile"]
    study = SizingStudy(
        Fluid.water("12 degC"),
        Line("39.6 km", "246 m", minor_loss_k=4.0, cover="1.2 m", source_level="44 m"),
        DutyProfile(("1600 m^3/h", "1000 m^3/h"), (4000, 3500), growth=0.005, design_year=20,
                    names=("day", "night"), prices=(0.16, 0.08)),
        Pumping(bep_efficiency=0.86, bep_flow="1500 m^3/h", control="variable-speed",
                motor_efficiency=0.95, drive_efficiency=0.97, npsh_required="5 m",
                npsh_margin="1 m"),
        EnergyTariff(0.13, escalation=0.01, demand_charge=70.0),
        Economics(0.05, 40, 80, 0.002),
        [MaterialChoice("ductile-iron", DEMO["material"][0]["cost"],
                        classes=["C25", "C30", "C40", "C50"], min_diameter="0.45 m",
                        max_diameter="0.85 m")],
        pump_station=PumpStationCost(9000.0, 0.68, standby_fraction=0.5, life=25,
                                     maintenance=0.015),
        constraints=Constraints("0.5 m/s", "2.5 m/s"),
        profile=GroundProfile(tuple(p["chainage"] for p in pts),
                              tuple(p["elevation"] for p in pts)),
        sections=(LineSection(end="22 km", sizes=["DN 600", "DN 700", "DN 800"]),
                  LineSection(sizes=["DN 500", "DN 600", "DN 700"])),
        boosters=Boosters(2, sites=["12 km", "19 km"], fixed_cost=650000.0, cost_per_kw=450.0,
                          standby_fraction=0.5, life=25, maintenance=0.02,
                          suction_pressure_min="0.5 bar"),
        equipment=(Equipment("35 kPa", "1600 m^3/h"),),
        fittings=Fittings.parse(DEMO["fittings"]))
    np.testing.assert_allclose(study.run().candidates["eac"], demo[1].candidates["eac"],
                               rtol=1e-13)


def test_named_inputs_and_their_samples(demo):
    study, res = demo
    same = study.run(inputs={"flow_factor": 1.0, "energy_price": 0.13})
    np.testing.assert_allclose(same.candidates["eac"], res.candidates["eac"], rtol=1e-12)
    more = study.run(inputs={"flow_factor": 1.1})
    assert (more.candidates["eac"] > res.candidates["eac"]).all()
    assert more.profile["head_max_m"].iloc[1] > res.profile["head_max_m"].iloc[1]
    # one material: its factor is the factor on every pipe
    a = study.run(inputs={"pipe_cost_factor:ductile-iron": 1.2}).candidates["capex_pipe"]
    b = study.run(inputs={"pipe_cost_factor": 1.2}).candidates["capex_pipe"]
    np.testing.assert_allclose(a, b, rtol=1e-13)
    # a batch of samples equals the samples one by one (hydraulic inputs vary)
    values = {"flow_factor": np.array([0.9, 1.0, 1.15]), "horizon": np.array([30, 40, 35]),
              "energy_price": np.array([0.1, 0.13, 0.2])}
    lc = study.evaluate(variations=study.variations(values), yearly=False)
    for i in range(3):
        one = study.run(inputs={k: float(v[i]) for k, v in values.items()}, optimum=False)
        np.testing.assert_allclose(lc.eac[i], one.candidates["eac"], rtol=1e-11)
        np.testing.assert_array_equal(study.check(lc)["feasible"][i],
                                      one.candidates["feasible"])


def test_uncertainty_of_a_long_line(demo):
    study, _ = demo
    mc = study.monte_carlo({"energy_price": Triangular(0.1, 0.13, 0.2),
                            "flow_factor": Uniform(0.9, 1.1)}, n=200, seed=3)
    assert mc.candidates["prob_cheapest"].sum() == pytest.approx(1.0)
    t = study.tornado({"energy_price": (0.1, 0.2), "discount_rate": (0.03, 0.07)})
    assert len(t.table) == 2 and (t.table["swing"] > 0).all()


@pytest.mark.parametrize(
    ("changes", "match"),
    [
        ({"pumping": {"efficiency": 0.7, "bep_efficiency": 0.8}},
         r"pumping\.bep_efficiency: give one of efficiency \(wire-to-water\)"),
        ({"pumping": {"efficiency": 0.7, "motor_efficiency": 0.95}},
         r"pumping\.motor_efficiency: not with efficiency"),
        ({"pumping": {"pump_efficiency": 0.8, "control": "variable-speed"}},
         r"pumping\.control: needs a pump curve \(bep_efficiency\)"),
        ({"pumping": {"motor_efficiency": 0.95}},
         r"pumping\.efficiency: required key is missing"),
        ({"boosters": {"max_count": 1, "sites": ["12 km"]}},
         r"boosters: give a booster's cost"),
        ({"boosters": {"max_count": 1, "sites": ["12 km", "12 km"], "fixed_cost": 1.0}},
         r"boosters\.sites: each site may appear once"),
        ({"fittings": {"gate-valv": 2}}, r"fittings\.gate-valv: unknown fitting; did you mean"),
        ({"equipment": [{"pressure_drop": "35 kPa"}]},
         r"equipment\[0\]\.at_flow: required key is missing"),
        ({"line": {"static_head": "246 m", "cover": "1.2 m", "length": "30 km"}},
         r"line\.length \(30 km\) differs from the profile's"),
        ({"boosters": {"max_count": 1, "fixed_cost": 1.0, "colour": "red"}},
         r"boosters\.colour: unknown key"),
    ],
)
def test_long_line_study_errors(changes, match):
    d = copy.deepcopy(DEMO)
    d.update(changes)
    with pytest.raises(StudyFileError, match=match):
        SizingStudy.from_dict(d)


def test_no_profile_sections_only_is_a_level_line():
    d = copy.deepcopy(DEMO)
    for key in ("profile", "boosters"):
        d.pop(key)
    d["line"] = {"length": "39.6 km", "static_head": "246 m", "minor_loss_k": 4.0}
    res = SizingStudy.from_dict(d).run()
    assert set(res.candidates["boosters"]) == {0}
    assert (res.profile["ground_m"] == 0).all() and (res.profile["pipe_m"] == 0).all()
    # a level line: the highest pressure is at the pump's discharge
    prof = res.profile[res.profile["station"] != "head station suction"]
    assert prof["pressure_max_bar"].idxmax() == prof.index[0]
    with pytest.raises(InputError, match="uniform line"):
        SizingStudy.demo().run().profile  # noqa: B018


@pytest.mark.slow
def test_command_line_runs_the_long_line_demo(tmp_path):
    study = tmp_path / "longline.toml"
    study.write_text(resources.files("pipeopt").joinpath("data", "demo_longline.toml")
                     .read_text("utf-8"))
    run = subprocess.run([sys.executable, "-m", "pipeopt.cli", "run", str(study), "--out",
                          str(tmp_path / "out")], capture_output=True, text=True, timeout=600,
                         env={**os.environ, "MPLBACKEND": "Agg"})
    assert run.returncode == 0, run.stderr[-2000:]
    assert "booster" in run.stdout and (tmp_path / "out" / "report.html").exists()


def test_samples_in_batches_give_the_same_figures(demo, monkeypatch):
    # hydraulic samples are evaluated a batch at a time; the batch size changes nothing
    import pipeopt.stations as stations

    study, _ = demo
    values = {"flow_factor": np.linspace(0.9, 1.1, 12), "energy_price": np.linspace(0.1, 0.2, 12)}
    var = study.variations(values)
    whole = study.evaluate(variations=var, yearly=False)
    monkeypatch.setattr(stations, "_BATCH_NUMBERS", 1e4)
    parts = study.evaluate(variations=var, yearly=False)
    np.testing.assert_array_equal(whole.eac, parts.eac)
    np.testing.assert_array_equal(study.check(whole)["feasible"], study.check(parts)["feasible"])


# ----- reference checks: surge, classes, velocities and the grade line by hand ---------------

E_DUCTILE, NU_DUCTILE = 170e9, 0.28   # ductile iron, docs/references.md#surge (EN 545, from memory)
EN545_CLASSES = ("C25", "C30", "C40", "C50")


def water_12c():
    """(rho, isentropic bulk modulus rho w^2) of water at 12 degC, 1 atm, from iapws
    (IAPWS-95)."""
    import iapws

    w = iapws.IAPWS95(T=285.15, P=0.101325)
    return w.rho, w.rho * w.w ** 2


def joukowsky_head(designation: str, q: float) -> tuple[float, float]:
    """(bore, Joukowsky head a V / g) of ductile-iron ``designation`` at flow ``q``, by hand.

    Korteweg's wave speed with Wylie & Streeter's thick-wall factor, anchored throughout
    (psi = 1 - nu^2), D the metal bore OD - 2 e (the elastic wall; the cement lining is left
    out), docs/references.md#surge; V = Q / (pi d^2 / 4) on the lined bore d (continuity);
    Joukowsky (1900) dH = a dV / g for a stop from V.
    """
    from pipeopt import catalog

    rho, k = water_12c()
    row = catalog.lookup("ductile-iron", designation)
    e = float(row["wall_m"])
    d_wall = float(row["outside_diameter_m"]) - 2 * e
    c1 = 2 * e / d_wall * (1 + NU_DUCTILE) + (1 - NU_DUCTILE ** 2) * d_wall / (d_wall + e)
    a = np.sqrt(k / rho) / np.sqrt(1 + c1 * k * d_wall / (E_DUCTILE * e))
    bore = float(row["inner_diameter_m"])
    return bore, a * (q / (np.pi * bore * bore / 4)) / 9.80665


def stretches(prof):
    """Per stretch of a profile table: (designation, highest operating pressure [Pa]): the
    larger of the discharge side at its start and the arrival side at its end."""
    name = prof["station"]
    out_side = prof[~name.str.endswith("suction")].reset_index(drop=True)
    in_side = prof[~(name.eq("head station") | name.str.fullmatch(r"booster \d+"))]
    in_side = in_side.reset_index(drop=True)
    return [(out_side.loc[s, "size"], 1e5 * max(out_side.loc[s, "pressure_max_bar"],
                                                in_side.loc[s + 1, "pressure_max_bar"]))
            for s in range(len(out_side) - 1)]


@pytest.mark.reference
def test_joukowsky_surge_and_mdp_along_the_best_design_by_hand(demo):
    # every stretch of the chosen design: surge a V / g by hand (joukowsky_head) at the largest
    # flow of any year, 1600 m3/h x 1.005^19 (growth to the design year 20), MDP = operating
    # pressure + rho g surge (EN 805, from memory; docs/references.md#surge), within the class's
    # PFA = its number in bar and PMA = 1.2 PFA (EN 545:2010, from memory). The figures the
    # table prints are those of the stretch with the least margin to either limit.
    _, res = demo
    rho, _ = water_12c()
    q = 1600.0 * 1.005 ** 19 / 3600.0
    rows = []
    for designation, p in stretches(res.profile):
        pfa = float(designation.split(" C")[1]) * 1e5
        surge = joukowsky_head(designation, q)[1]
        mdp = p + rho * 9.80665 * surge
        assert p <= pfa and mdp <= 1.2 * pfa
        rows.append((min(pfa - p, 1.2 * pfa - mdp), p, surge, mdp, pfa))
    assert len(rows) == 16                        # 17 points of the route, a booster at 12 km
    _, p, surge, mdp, pfa = min(rows)
    best = res.best
    assert best["surge_head_m"] == pytest.approx(surge, rel=1e-9)
    assert best["operating_pressure_bar"] == pytest.approx(p / 1e5, rel=1e-12)
    assert best["mdp_bar"] == pytest.approx(mdp / 1e5, rel=1e-9)
    assert best["pfa_bar"] == pytest.approx(pfa / 1e5, rel=1e-12)
    assert best["pma_bar"] == pytest.approx(1.2 * pfa / 1e5, rel=1e-12)


@pytest.mark.reference
def test_classes_telescope_to_the_lightest_en545_class_that_holds(demo):
    # brute force over the four classes of EN 545:2010 (PFA = the class number in bar, PMA =
    # 1.2 PFA, from memory): on each stretch, at the pressures the line runs at, the chosen
    # class is the lightest (least wall, so cheapest at a price per kg) whose PFA holds the
    # operating pressure and whose PMA holds operating pressure + its own Joukowsky surge
    from pipeopt import catalog

    _, res = demo
    rho, _ = water_12c()
    q = 1600.0 * 1.005 ** 19 / 3600.0
    walls = [float(catalog.lookup("ductile-iron", f"DN 700 {c}")["wall_m"])
             for c in EN545_CLASSES]
    assert walls == sorted(walls)                 # C25 the lightest
    chosen = []
    for designation, p in stretches(res.profile):
        nominal = designation.split(" C")[0]
        holds = [c for c in EN545_CLASSES
                 if p <= float(c[1:]) * 1e5
                 and p + rho * 9.80665 * joukowsky_head(f"{nominal} {c}", q)[1]
                 <= 1.2 * float(c[1:]) * 1e5]
        assert designation == f"{nominal} {holds[0]}"
        chosen.append(holds[0])
    # the booster's discharge at 12 km needs C40, the climb after it C30 (PMA), else C25
    assert chosen[3:5] == ["C40", "C30"] and set(chosen) == {"C25", "C30", "C40"}


@pytest.mark.reference
def test_every_design_rating_is_the_pfa_of_its_governing_class(demo):
    # EN 545:2010 (from memory): the rating of a C class is its number in bar and is its PFA;
    # at 12 degC no derating, so each row's rating equals its PFA and PMA = 1.2 x rating (the
    # rating and the PFA/PMA were once taken at different stretches: 'PFA 25.0 of 30.0 bar')
    _, res = demo
    c = res.candidates
    assert (c["temperature_factor"] == 1.0).all()
    np.testing.assert_allclose(c["pfa_bar"], c["pressure_rating_bar"], rtol=1e-12)
    np.testing.assert_allclose(c["pma_bar"], 1.2 * c["pressure_rating_bar"], rtol=1e-12)


def parse_classes_along(text: str) -> list[tuple[str, float, float]]:
    """[(designation, start km, end km)] of a classes_along cell."""
    out = []
    for part in text.split("; "):
        m = re.fullmatch(r"(DN \d+ C\d+) ([\d.]+)-([\d.]+) km", part)
        out.append((m.group(1), float(m.group(2)), float(m.group(3))))
    return out


@pytest.mark.reference
def test_velocity_limits_and_their_reasons_by_continuity():
    # the demo with limits 1.0-2.0 m/s: V = Q / (pi d^2 / 4) (continuity) on the lined bore of
    # every class along each design (catalog, EN 545 dimensions): too fast when the largest
    # flow of any year (1600 m3/h x 1.005^19) exceeds 2.0 m/s anywhere, too slow when the
    # largest year-1 duty (1600 m3/h) is below 1.0 m/s anywhere; the printed speeds are the
    # fastest and slowest of those, to 2 decimals
    from pipeopt import catalog

    d = copy.deepcopy(DEMO)
    d["constraints"] = {"velocity_min": "1.0 m/s", "velocity_max": "2.0 m/s"}
    res = SizingStudy.from_dict(d).run()
    q_max, q_1 = 1600.0 * 1.005 ** 19 / 3600.0, 1600.0 / 3600.0
    flagged = 0
    for _, row in res.candidates.iterrows():
        area = [np.pi * float(catalog.lookup("ductile-iron", des)["inner_diameter_m"]) ** 2 / 4
                for des, _, _ in parse_classes_along(row["classes_along"])]
        fast, slow = q_max / min(area), q_1 / max(area)
        reasons = row["reasons"]
        assert ("exceeds velocity_max" in reasons) == (fast > 2.0)
        assert ("below velocity_min" in reasons) == (slow < 1.0)
        if fast > 2.0:
            assert f"velocity {fast:.2f} m/s at the largest flow of any year" in reasons
        if slow < 1.0:
            assert f"velocity {slow:.2f} m/s at the largest year-1 duty" in reasons
        flagged += (fast > 2.0) or (slow < 1.0)
        assert row["velocity_peak_m_s"] == pytest.approx(fast, rel=1e-12)
    # every design with a DN 500 descent (2.46 m/s) or a DN 800 climb (0.86 m/s): 15 of 27
    assert flagged == 15


def hand_line(nominal: str, q: float):
    """(grade line at each point, pipe axis at each point, rho g) of the simple line at
    flow ``q`` with class C40 (hand_grade's rules, written out point by point)."""
    import iapws
    import mpmath

    from pipeopt import catalog

    w = iapws.IAPWS95(T=285.15, P=0.101325)
    rho, nu = w.rho, w.mu / w.rho
    pv = iapws.IAPWS95(T=285.15, x=0).P * 1e6
    rho_g = rho * 9.80665
    x = np.array([float(p["chainage"].split()[0]) * 1000 for p in DEMO["profile"]])
    z = np.array([float(p["elevation"].split()[0]) for p in DEMO["profile"]])
    p_atm = 101325.0 * (1 - 0.0065 * z / 288.15) ** (9.80665 * 0.0289644 / (8.3144598 * 0.0065))
    climb, descent = (nominal.split(" / ") * 2)[:2]
    pipes = [catalog.lookup("ductile-iron", f"{n} C40") for n in (climb, descent)]
    sec = np.where(x[:-1] < 22000.0, 0, 1)
    bore = np.array([float(pipes[k]["inner_diameter_m"]) for k in sec])
    od = np.array([float(pipes[k]["outside_diameter_m"]) for k in sec])
    loss = []
    for d, length in zip(bore, np.diff(x), strict=True):
        v = q / (np.pi * d * d / 4)
        root = mpmath.findroot(lambda y, d=d, re=v * d / nu: y + 2 * mpmath.log10(
            1e-4 / d / 3.7 + 2.51 * y / re), 8)                  # Colebrook (1939)
        loss.append(float(1 / root**2) * length / d * v * v / (2 * 9.80665))  # Darcy-Weisbach
    f_cum = np.concatenate([[0.0], np.cumsum(loss)])
    axis = z - 1.2 - 0.5 * np.append(od, od[-1])
    least = axis + (pv + 3.0 * rho_g - p_atm) / rho_g
    g0 = max((least + f_cum).max(), 44.0 + 246.0 + f_cum[-1])
    return g0 - f_cum, axis, rho_g


@pytest.mark.reference
def test_pressure_envelope_at_every_point_of_the_simple_line_by_hand():
    # one duty, no growth: the envelope is one grade line, the head station's head less the
    # Darcy-Weisbach friction (mpmath Colebrook root) up to each point; pressure = rho g
    # (head - axis), the axis 1.2 m cover and half the outside diameter below the ground
    res = SizingStudy.from_dict(simple_line()).run()
    prof = res.profile[res.profile["station"] != "head station suction"]
    head, axis, rho_g = hand_line(res.best["nominal"], 1600.0 / 3600.0)
    np.testing.assert_allclose(prof["pipe_m"], axis, rtol=1e-12)
    np.testing.assert_allclose(prof["head_max_m"], head, rtol=1e-9)
    np.testing.assert_allclose(prof["head_min_m"], head, rtol=1e-9)
    np.testing.assert_allclose(prof["pressure_max_bar"], rho_g * (head - axis) / 1e5,
                               rtol=1e-8, atol=1e-9)
    assert (prof["class"] == "C40").all()


@pytest.mark.reference
def test_sub_atmospheric_stretch_of_the_simple_line_by_hand():
    # the hand grade line (hand_line) gives the gauge pressure rho g (head - axis) at every
    # point; where it is below zero the pipe runs below atmospheric pressure: the stretch
    # from the zero crossing before to the one after, the pressure linear in chainage between
    # points (ground and grade line both linear there), printed to 0.1 km and the lowest
    # pressure to 0.01 bar
    res = SizingStudy.from_dict(simple_line()).run()
    best = res.best
    head, axis, rho_g = hand_line(best["nominal"], 1600.0 / 3600.0)
    p = rho_g * (head - axis) / 1e5
    x = np.array([float(q["chainage"].split()[0]) for q in DEMO["profile"]])
    below = np.flatnonzero(p < 0)
    assert below.size and np.all(np.diff(below) == 1)          # one stretch, at the ridge
    i, j = below[0], below[-1]
    start = x[i - 1] + (x[i] - x[i - 1]) * p[i - 1] / (p[i - 1] - p[i])
    end = x[j] + (x[j + 1] - x[j]) * p[j] / (p[j] - p[j + 1])
    assert f"sub-atmospheric at {start:.1f}-{end:.1f} km (lowest {p.min():.2f} bar)" \
        in best["notes"]
