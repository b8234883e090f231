"""Tests of pipeopt.replacement: the value of replacing each main in each year.

Checks, each with its source:
- the single-main upgrade study (pipeopt.upgrade.UpgradeStudy.best_year, built through its
  public from_dict with a "replace" option) on 50 random mains: the same best year, and the
  same PV of keeping and of replacing in every year to 1e-9 (an independent path through the
  package: its own hydraulics, tariff and discounting code);
- Shamir & Howard (1979), "An analytic approach to scheduling pipe replacement", J. AWWA
  71(5):248-258: for breaks only, the optimal replacement time
  t* = (1/A) ln(ln(1+R) C_r / (C_b N0)), written out here, within one year of the yearly scan;
- a three-year case computed by hand from the module's conventions;
- the whole model written out in this file (hand_economics: velocity, Darcy-Weisbach head loss
  with a Colebrook-White root found by mpmath, energy, tariff, Shamir & Howard's breaks, and
  every present value as an explicit year-by-year discounted sum): pumped and unpumped mains,
  an aging new main, the benefit-cost ratio, the edge of Moody's chart, and the best year by
  exhaustive search over the years of action.
"""

from __future__ import annotations

import dataclasses
import math

import mpmath as mp
import numpy as np
import pytest

from pipeopt import Fluid
from pipeopt.costs import EnergyTariff
from pipeopt.errors import InputError
from pipeopt.replacement import Mains, RenewalScenario, evaluate_mains

from .conftest import upgrade_study_for_main

WATER = Fluid.water("10 degC")


def random_mains(rng: np.random.Generator, n: int, pumped: bool = True) -> dict[str, np.ndarray]:
    d = rng.uniform(0.1, 0.5, n)
    return {
        "length": rng.uniform(80.0, 3000.0, n), "diameter": d,
        "roughness": rng.uniform(0.05e-3, 3e-3, n), "aging": rng.uniform(0.0, 4e-5, n),
        "flow": (rng.uniform(0.3, 1.4, n) * np.pi * d * d / 4.0) if pumped else np.zeros(n),
        "hours": rng.uniform(2000.0, 8000.0, n), "static_head": rng.uniform(4.0, 50.0, n),
        "breaks_now": rng.uniform(0.0, 4.0, n), "break_growth": rng.uniform(-0.02, 0.1, n),
        # per metre here; the tests multiply by the length
        "capital": rng.uniform(200.0, 1500.0, n), "new_diameter": d * rng.uniform(0.9, 1.1, n),
    }


def scenario(flow_growth: float, new_aging: float, horizon: int = 40,
             design_year: int | None = None) -> RenewalScenario:
    return RenewalScenario(density=WATER.density, viscosity=WATER.viscosity, efficiency=0.7,
                           tariff=EnergyTariff(0.15, 0.01, 40.0), discount_rate=0.04,
                           horizon=horizon, break_cost=7000.0, new_roughness=2e-5,
                           new_aging=new_aging, life=80.0, maintenance=0.002, break_factor=0.0,
                           minor_loss_k=3.0, flow_growth=flow_growth, design_year=design_year)


@pytest.mark.parametrize(("flow_growth", "new_aging"),
                         [(0.0, 0.0), (0.01, 0.0), (0.0, 2e-5), (0.008, 1.5e-5)])
def test_agrees_with_the_single_main_upgrade_study(flow_growth, new_aging):
    # 50 random mains in all, across the four ways the new main's energy is formed
    rng = np.random.default_rng(int(flow_growth * 1e4 + new_aging * 1e7))
    inputs = random_mains(rng, 13 if flow_growth == 0 and new_aging == 0 else 12)
    inputs["capital"] = inputs["capital"] * inputs["length"]
    s = scenario(flow_growth, new_aging)
    econ = evaluate_mains(s, Mains(**inputs))
    for k in range(inputs["length"].size):
        main = {key: float(v[k]) for key, v in inputs.items()}
        best = upgrade_study_for_main(main, s).best_year("replace")
        pv = best.table["pv_cost"].to_numpy()
        assert econ.best_year[k] == best.year
        np.testing.assert_allclose(econ.pv_replace[k], pv, rtol=1e-9, atol=0)
        assert econ.pv_keep[k] == pytest.approx(best.keep_pv_cost, rel=1e-9)
        np.testing.assert_allclose(econ.npv[k], best.table["npv_vs_keep"].to_numpy(), rtol=1e-9,
                                   atol=1e-9 * best.keep_pv_cost)


@pytest.mark.parametrize("new_aging", [0.0, 1.5e-5])
def test_flows_stop_growing_after_the_design_year_as_in_the_upgrade_study(new_aging):
    # growth.flow_per_year with growth.design_year: the flows of a sizing or upgrade study's
    # duty profile grow until the design year and then stay; the single-main upgrade study
    # built through its public from_dict is the independent path
    rng = np.random.default_rng(31)
    inputs = random_mains(rng, 5)
    inputs["capital"] = inputs["capital"] * inputs["length"]
    s = scenario(0.03, new_aging, design_year=12)
    econ = evaluate_mains(s, Mains(**inputs))
    assert not np.allclose(econ.pv_keep, evaluate_mains(scenario(0.03, new_aging),
                                                        Mains(**inputs)).pv_keep, rtol=1e-6)
    for k in range(5):
        main = {key: float(v[k]) for key, v in inputs.items()}
        best = upgrade_study_for_main(main, s).best_year("replace")
        assert econ.best_year[k] == best.year
        np.testing.assert_allclose(econ.pv_replace[k], best.table["pv_cost"].to_numpy(),
                                   rtol=1e-9, atol=0)


def test_benefit_cost_ratio_agrees_with_the_upgrade_summary():
    # the upgrade study's B/C (PV of running-cost savings over PV of net capital) at the year
    # of action the programme finds best
    rng = np.random.default_rng(5)
    inputs = random_mains(rng, 6)
    inputs["capital"] = inputs["capital"] * inputs["length"]
    s = scenario(0.005, 0.0)
    econ = evaluate_mains(s, Mains(**inputs))
    for k in range(6):
        main = {key: float(v[k]) for key, v in inputs.items()}
        study = upgrade_study_for_main(main, s)
        option = dataclasses.replace(study.options[0], year=int(econ.best_year[k]))
        study = study.replace(options=(option,))  # a study is frozen: a new one
        row = study.run().summary.set_index("option").loc["replace"]
        assert econ.benefit_cost_ratio[k] == pytest.approx(row["benefit_cost_ratio"], rel=1e-9)
        assert econ.npv_best[k] == pytest.approx(row["npv_vs_keep"], rel=1e-9,
                                                 abs=1e-9 * row["pv_cost"])


@pytest.mark.reference
@pytest.mark.parametrize(
    ("n0", "a", "cb", "cr", "rate"),
    [(2.0, 0.08, 1e4, 1.5e6, 0.05), (5.0, 0.05, 8e3, 2e6, 0.04), (1.0, 0.12, 1.5e4, 3e6, 0.06),
     (8.0, 0.03, 5e3, 3e6, 0.03)],
)
def test_breaks_only_best_year_is_shamir_howard(n0, a, cb, cr, rate):
    # Shamir & Howard (1979), J. AWWA 71(5):248-258: t* = (1/A) ln(ln(1+R) C_r / (C_b N0)),
    # their continuous optimum; the yearly scan (cash flows at year ends, a long horizon and
    # a full residual credit so that the horizon does not pull the year) is within one year
    t_star = math.log(math.log(1.0 + rate) * cr / (cb * n0)) / a
    s = RenewalScenario(density=WATER.density, viscosity=WATER.viscosity, efficiency=0.7,
                        tariff=EnergyTariff(0.1), discount_rate=rate, horizon=150,
                        break_cost=cb, new_roughness=1e-4, life=1e9)
    m = Mains(length=[1000.0], diameter=[0.3], roughness=[1e-4], aging=[0.0], flow=[0.0],
              hours=[0.0], static_head=[0.0], breaks_now=[n0], break_growth=[a], capital=[cr],
              new_diameter=[0.3])
    e = evaluate_mains(s, m)
    assert 0 < t_star < 100
    assert abs(int(e.best_year[0]) - t_star) <= 1.0
    assert e.npv_best[0] > 0


@pytest.mark.reference
def test_three_years_by_hand():
    # breaks 2 a year now growing 10 %, 1,000 a repair; capital 5,000, life 10 years,
    # maintenance 1 % a year, 5 % real; year t costs b_t = 2 (e^0.1 - 1)/0.1 e^{0.1 (t-1)} 1000
    # (Shamir & Howard 1979's rate integrated over the year), every amount discounted by
    # 1.05^-t and summed by hand (docs/references.md#economics, #renewal-programmes)
    s = RenewalScenario(density=WATER.density, viscosity=WATER.viscosity, efficiency=0.7,
                        tariff=EnergyTariff(0.1), discount_rate=0.05, horizon=3,
                        break_cost=1000.0, new_roughness=1e-4, life=10.0, maintenance=0.01)
    m = Mains(length=[100.0], diameter=[0.2], roughness=[1e-4], aging=[0.0], flow=[0.0],
              hours=[0.0], static_head=[0.0], breaks_now=[2.0], break_growth=[0.1],
              capital=[5000.0], new_diameter=[0.2])
    e = evaluate_mains(s, m)
    b = [2.0 * (math.exp(0.1) - 1) / 0.1 * math.exp(0.1 * (t - 1)) * 1000.0 for t in (1, 2, 3)]
    d = [1.05 ** -t for t in range(4)]
    keep = sum(b[t - 1] * d[t] for t in (1, 2, 3))
    assert e.pv_keep[0] == pytest.approx(keep, rel=1e-13)
    for a in range(3):
        before = sum(b[t - 1] * d[t] for t in range(1, a + 1))
        upkeep = sum(0.01 * 5000.0 * d[t] for t in range(a + 1, 4))
        residual = 5000.0 * max(0.0, 1.0 - (3 - a) / 10.0) * d[3]
        expected = before + 5000.0 * d[a] + upkeep - residual
        assert e.pv_replace[0, a] == pytest.approx(expected, rel=1e-13)
    assert int(e.best_year[0]) == int(np.argmin([e.pv_replace[0, a] for a in range(3)]))


def test_results_do_not_depend_on_how_mains_are_split():
    # every number of a main comes from that main alone: whole or in two parts, bit for bit
    rng = np.random.default_rng(9)
    inputs = random_mains(rng, 200)
    inputs["flow"][::3] = 0.0
    inputs["capital"] = inputs["capital"] * inputs["length"]
    for s in (scenario(0.01, 2e-5), scenario(0.0, 2e-5), scenario(0.01, 0.0)):
        whole = evaluate_mains(s, Mains(**inputs))
        parts = [evaluate_mains(s, Mains(**{k: v[sl] for k, v in inputs.items()}))
                 for sl in (slice(0, 77), slice(77, 200))]
        for name in ("pv_keep", "pv_replace", "npv", "best_year", "benefit_cost_ratio",
                     "energy_kwh_year1", "transitional", "roughness_capped"):
            joined = np.concatenate([getattr(p, name) for p in parts])
            assert np.array_equal(getattr(whole, name), joined), name


@pytest.mark.reference
def test_a_main_that_is_not_pumped_has_no_energy_and_pumping_costs_energy():
    s = scenario(0.0, 0.0)
    m = Mains(length=[500.0, 500.0], diameter=[0.2, 0.2], roughness=[2e-3, 2e-3],
              aging=[0.0, 0.0], flow=[0.0, 0.02], hours=[0.0, 6000.0], static_head=[0.0, 20.0],
              breaks_now=[0.0, 0.0], break_growth=[0.0, 0.0], capital=[1e5, 1e5],
              new_diameter=[0.2, 0.2])
    e = evaluate_mains(s, m)
    assert e.energy_kwh_year1[0] == 0.0 and e.pv_keep[0] == 0.0
    # 0.02 m3/s lifted 20 m plus friction at 70 %: more than rho g Q z / eta x hours
    assert e.energy_kwh_year1[1] > WATER.density * 9.80665 * 0.02 * 20.0 / 0.7 * 6000 / 1000
    # and exactly rho g Q (z + h) / eta x hours with h by Darcy-Weisbach and a Colebrook-White
    # root in mpmath (hand_line below)
    v, h = hand_line(s, 0.02, 0.2, 2e-3, 500.0)
    assert e.velocity_year1[1] == pytest.approx(v, rel=1e-14)
    assert e.head_loss_year1[1] == pytest.approx(h, rel=1e-11)
    assert e.energy_kwh_year1[1] == pytest.approx(
        WATER.density * G * 0.02 * (20.0 + h) / 0.7 * 6000 / 1000, rel=1e-11)
    # the rough old main costs more to pump through than the smooth new one
    assert e.pv_saving_energy[1] > 0


def test_errors_name_the_input():
    good = {k: [1.0] for k in ("length", "diameter", "roughness", "aging", "flow", "hours",
                               "static_head", "breaks_now", "break_growth", "capital",
                               "new_diameter")}
    good["break_growth"] = [0.05]
    Mains(**good)
    with pytest.raises(InputError, match="Mains.length is out of range at main 0"):
        Mains(**{**good, "length": [-1.0]})
    with pytest.raises(InputError, match="one value per main"):
        Mains(**{**good, "capital": [1.0, 2.0]})
    with pytest.raises(InputError, match="Mains.hours"):
        Mains(**{**good, "hours": [9000.0]})
    with pytest.raises(InputError, match="discount_rate is out of range"):
        RenewalScenario(998.0, 1e-3, 0.7, EnergyTariff(0.1), -0.01, 40, 1000.0, 1e-5)


# ----- the model written out by hand: Colebrook-White root in mpmath, explicit discounted sums -
G = 9.80665          # standard gravity, m/s2 (CGPM 1901; common practice)


def colebrook_root(re: float, rr: float) -> float:
    """Darcy friction factor: the root of Colebrook-White (Colebrook 1939, J. Inst. Civil Eng.
    11(4), 133-156), 1/sqrt(f) = -2 log10(rr/3.7 + 2.51/(Re sqrt(f))), by mpmath at 30 digits."""
    with mp.workdps(30):
        x = mp.findroot(lambda x: x + 2 * mp.log10(mp.mpf(rr) / mp.mpf("3.7")
                                                   + mp.mpf("2.51") * x / mp.mpf(re)), 7)
        return float(1 / x ** 2)


def hand_line(s: RenewalScenario, q: float, d: float, eps: float, length: float):
    """Velocity and Darcy-Weisbach head loss h = (f L/D + K) v^2/2g, f at eps/D (at most 0.05,
    the largest relative roughness of Moody's 1944 chart)."""
    v = q / (math.pi * d * d / 4.0)
    f = colebrook_root(s.density * v * d / s.viscosity, min(eps / d, 0.05))
    return v, (f * length / d + s.minor_loss_k) * v * v / (2.0 * G)


def hand_economics(s: RenewalScenario, main: dict) -> dict:
    """PV of keeping one main and of replacing it in each year a = 0..N-1, summed year by year.

    Breaks: the rate N0 e^{A s} integrated over year t, times a repair (Shamir & Howard 1979);
    energy: P = rho g Q (z + h)/eta, E = P hours, cost E p (1+e)^(t-1) + d P; each year
    discounted by (1+i)^-t; the capital at a, the new main's upkeep m C after it, its
    straight-line residual C max(0, 1 - (N-a)/T) credited at N (docs/references.md#economics).
    """
    n, i = s.horizon, s.discount_rate
    disc = [(1.0 + i) ** -t for t in range(n + 1)]
    n0, a_br, c = main["breaks_now"], main["break_growth"], main["capital"]

    def flow(t):
        top = t if s.design_year is None else min(t, s.design_year)
        return main["flow"] * (1.0 + s.flow_growth) ** (top - 1)

    memo: dict = {}

    def energy(t, d, eps):
        if main["flow"] == 0:
            return 0.0, 0.0, 0.0, 0.0
        if (t, d, eps) not in memo:
            memo[t, d, eps] = pumped_year(t, d, eps)
        return memo[t, d, eps]

    def pumped_year(t, d, eps):
        q = flow(t)
        v, h = hand_line(s, q, d, eps, main["length"])
        power = s.density * G * q * (main["static_head"] + h) / s.efficiency
        kwh = power * main["hours"] / 1000.0
        cost = (kwh * s.tariff.price * (1.0 + s.tariff.escalation) ** (t - 1)
                + s.tariff.demand_charge * power / 1000.0)
        return cost, kwh, h, v

    years = range(1, n + 1)
    breaks = {t: s.break_cost * n0 * (math.exp(a_br * t) - math.exp(a_br * (t - 1))) / a_br
              if a_br else s.break_cost * n0 for t in years}
    old = {t: energy(t, main["diameter"], main["roughness"] + main["aging"] * (t - 1))
           for t in years}
    keep = {t: breaks[t] + old[t][0] for t in years}
    pv_keep = math.fsum(keep[t] * disc[t] for t in years)
    out = {"pv_keep": pv_keep, "pv_replace": [], "parts": [], "energy1": old[1][1],
           "head_loss1": old[1][2], "velocity1": old[1][3]}
    for a in range(n):
        after = [t for t in years if t > a]
        new_energy = math.fsum(energy(t, main["new_diameter"],
                                      s.new_roughness + s.new_aging * (t - a - 1))[0] * disc[t]
                               for t in after)
        upkeep = math.fsum(s.maintenance * c * disc[t] for t in after)
        go_on = math.fsum(s.break_factor * breaks[t] * disc[t] for t in after)
        net_capital = c * disc[a] - c * max(0.0, 1.0 - (n - a) / s.life) * disc[n]
        before = math.fsum(keep[t] * disc[t] for t in years if t <= a)
        out["pv_replace"].append(before + net_capital + new_energy + upkeep + go_on)
        out["parts"].append({
            "breaks_saved": math.fsum((1.0 - s.break_factor) * breaks[t] * disc[t]
                                      for t in after),
            "energy_saved": math.fsum(old[t][0] * disc[t] for t in after) - new_energy,
            "upkeep": upkeep, "net_capital": net_capital})
    return out


def one_main(**values) -> Mains:
    return Mains(**{k: [v] for k, v in values.items()})


@pytest.mark.reference
def test_best_year_is_the_least_of_an_explicit_discounted_sum():
    # exhaustive search over every year of action of the present value written out above
    # (explicit sums: Shamir & Howard's breaks, capital, upkeep, a quarter of the breaks going
    # on after renewal, the straight-line residual)
    s = RenewalScenario(density=WATER.density, viscosity=WATER.viscosity, efficiency=0.7,
                        tariff=EnergyTariff(0.1), discount_rate=0.045, horizon=30,
                        break_cost=9000.0, new_roughness=1e-4, life=50.0, maintenance=0.004,
                        break_factor=0.25)
    main = {"length": 600.0, "diameter": 0.25, "roughness": 1e-3, "aging": 0.0, "flow": 0.0,
            "hours": 0.0, "static_head": 0.0, "breaks_now": 1.6, "break_growth": 0.09,
            "capital": 540000.0, "new_diameter": 0.25}
    hand = hand_economics(s, main)
    best = min(range(30), key=lambda a: hand["pv_replace"][a])
    e = evaluate_mains(s, one_main(**main))
    assert 0 < best < 29                       # an interior optimum, not the horizon's edge
    assert int(e.best_year[0]) == best
    assert e.pv_keep[0] == pytest.approx(hand["pv_keep"], rel=1e-12)
    np.testing.assert_allclose(e.pv_replace[0], hand["pv_replace"], rtol=1e-12)
    assert e.npv_best[0] == pytest.approx(hand["pv_keep"] - hand["pv_replace"][best], rel=1e-11)


PUMPED = {"length": 2400.0, "diameter": 0.28, "roughness": 1.2e-3, "aging": 3e-5,
          "flow": 0.055, "hours": 5200.0, "static_head": 18.0, "breaks_now": 0.8,
          "break_growth": 0.05, "capital": 1.3e6, "new_diameter": 0.3}


def pumped_scenario(**changes) -> RenewalScenario:
    base = {"density": WATER.density, "viscosity": WATER.viscosity, "efficiency": 0.72,
            "tariff": EnergyTariff(0.14, 0.012, 35.0), "discount_rate": 0.035, "horizon": 20,
            "break_cost": 6500.0, "new_roughness": 3e-5, "life": 70.0, "maintenance": 0.003,
            "minor_loss_k": 4.0, "flow_growth": 0.012, "design_year": 9}
    return RenewalScenario(**{**base, **changes})


@pytest.mark.reference
def test_a_pumped_main_by_hand():
    # velocity, Darcy-Weisbach head loss with a Colebrook-White root found by mpmath, energy,
    # tariff and every discounted sum written out in hand_economics; the old main ages, flows
    # grow 1.2 % a year until year 9
    s = pumped_scenario()
    hand = hand_economics(s, PUMPED)
    e = evaluate_mains(s, one_main(**PUMPED))
    assert e.velocity_year1[0] == pytest.approx(0.055 / (math.pi * 0.28 ** 2 / 4), rel=1e-14)
    assert e.head_loss_year1[0] == pytest.approx(hand["head_loss1"], rel=1e-11)
    assert e.energy_kwh_year1[0] == pytest.approx(hand["energy1"], rel=1e-11)
    assert e.pv_keep[0] == pytest.approx(hand["pv_keep"], rel=1e-11)
    np.testing.assert_allclose(e.pv_replace[0], hand["pv_replace"], rtol=1e-11)
    assert int(e.best_year[0]) == int(np.argmin(hand["pv_replace"]))
    assert not e.roughness_capped[0] and not e.transitional[0]


@pytest.mark.reference
@pytest.mark.parametrize("flow_growth", [0.0, 0.012])
def test_an_aging_new_main_by_hand(flow_growth):
    # the new main roughens by 0.02 mm a year from its year of laying: its energy depends on
    # the year (flow) and on its age t - a - 1, summed by hand for every year of action
    s = pumped_scenario(new_aging=2e-5, flow_growth=flow_growth, horizon=14)
    hand = hand_economics(s, PUMPED)
    e = evaluate_mains(s, one_main(**PUMPED))
    assert e.pv_keep[0] == pytest.approx(hand["pv_keep"], rel=1e-11)
    np.testing.assert_allclose(e.pv_replace[0], hand["pv_replace"], rtol=1e-11)


@pytest.mark.reference
def test_benefit_cost_ratio_and_savings_by_hand():
    # at the best year a: B/C = (PV breaks avoided + PV energy saved - PV upkeep) / (capital at
    # a less its discounted residual), each PV summed year by year in hand_economics
    s = pumped_scenario(break_factor=0.1)
    main = dict(PUMPED, breaks_now=2.5, break_growth=0.07)
    hand = hand_economics(s, main)
    e = evaluate_mains(s, one_main(**main))
    a = int(np.argmin(hand["pv_replace"]))
    assert int(e.best_year[0]) == a
    p = hand["parts"][a]
    assert e.pv_saving_breaks[0] == pytest.approx(p["breaks_saved"], rel=1e-11)
    assert e.pv_saving_energy[0] == pytest.approx(p["energy_saved"], rel=1e-9)
    assert e.pv_maintenance_new[0] == pytest.approx(p["upkeep"], rel=1e-12)
    assert e.pv_net_capital[0] == pytest.approx(p["net_capital"], rel=1e-12)
    ratio = (p["breaks_saved"] + p["energy_saved"] - p["upkeep"]) / p["net_capital"]
    assert e.benefit_cost_ratio[0] == pytest.approx(ratio, rel=1e-10)


@pytest.mark.reference
def test_relative_roughness_is_held_at_the_edge_of_the_moody_chart():
    # a 100 mm main whose roughness grows 0.2 mm a year from 4.5 mm passes eps/D = 0.05 in its
    # fourth year; from then on the friction factor is Colebrook-White's at 0.05, the largest
    # relative roughness of Moody's chart (L. F. Moody, Trans. ASME 66, 671-684, 1944)
    s = pumped_scenario(horizon=8, flow_growth=0.0, design_year=None)
    main = dict(PUMPED, diameter=0.1, new_diameter=0.1, roughness=4.5e-3, aging=2e-4,
                flow=0.012, length=800.0)
    hand = hand_economics(s, main)
    e = evaluate_mains(s, one_main(**main))
    assert e.roughness_capped[0]
    assert e.pv_keep[0] == pytest.approx(hand["pv_keep"], rel=1e-11)
    np.testing.assert_allclose(e.pv_replace[0], hand["pv_replace"], rtol=1e-11)
