"""Tests of pipeopt.lifecycle: the life-cycle cost model worked by hand.

Source of the model: the contributor guide's model section
(DEVELOPERS.md#the-sizing-model-in-words).
The hand computation below follows it line by line in plain Python, with friction factors from
an independent 40-digit mpmath solution of Colebrook (1939) (tests/conftest.py).
"""

from __future__ import annotations

import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt.costs import EnergyTariff, PumpStationCost
from pipeopt.duty import DutyProfile
from pipeopt.errors import InputError
from pipeopt.lifecycle import Scenario, evaluate

from .conftest import colebrook_mpmath

G = 9.80665


def hand_years(d, eps0, alpha, years=3, growth=0.02, static=15.0, eta=0.7, friction=None,
               duties=((0.05, 3000.0), (0.08, 1500.0)), rho=999.1, mu=1.1376e-3, k=4.0):
    """Yearly energy [kWh] and peak demand [kW] of one pipe, by hand (DEVELOPERS.md model
    section, steps 1-2): Darcy-Weisbach with f from a 40-digit mpmath Colebrook root (or the
    given constant), P = rho g Q H / eta, E = sum of P x hours."""
    area = math.pi * d * d / 4
    energy, peak = [], []
    for t in range(1, years + 1):
        eps_t = eps0 + alpha * (t - 1)
        e_t, p_max = 0.0, 0.0
        for q0, hrs in duties:
            q = q0 * (1 + growth) ** (t - 1)
            v = q / area
            f = friction if friction is not None else colebrook_mpmath(rho * v * d / mu,
                                                                       eps_t / d)
            h = (f * 2000.0 / d + k) * v * v / (2 * G)
            p_w = rho * G * q * (static + h) / eta
            e_t += p_w * hrs / 1000.0
            p_max = max(p_max, p_w / 1000.0)
        energy.append(e_t)
        peak.append(p_max)
    return energy, peak


def small_scenario(**over) -> Scenario:
    base = dict(
        density=999.1, viscosity=1.1376e-3, length=2000.0, static_head=15.0, minor_loss_k=4.0,
        parallel=1, duty=DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0), growth=0.02),
        efficiency=0.7, tariff=EnergyTariff(0.10, escalation=0.01, demand_charge=40.0),
        pump_station=PumpStationCost(5000.0, 0.7, standby_fraction=0.5, life=2,
                                     maintenance=0.02),
        discount_rate=0.06, horizon=3, pipe_life=50.0, pipe_maintenance=0.01)
    base.update(over)
    return Scenario(**base)


@pytest.mark.reference
def test_present_value_and_eac_by_hand():
    s = small_scenario()
    d, eps0, alpha, c_m = 0.25, 0.1e-3, 0.05e-3, 300.0
    lc = evaluate(s, np.array([d]), eps0, alpha, np.array([c_m]))

    # --- by hand, DEVELOPERS.md "The sizing model in words", step 1-2 -------------------------
    area = math.pi * d * d / 4
    energy, peak = [], []
    for t in (1, 2, 3):
        eps_t = eps0 + alpha * (t - 1)
        e_t, p_max = 0.0, 0.0
        for q0, hrs in ((0.05, 3000.0), (0.08, 1500.0)):
            q = q0 * 1.02 ** (t - 1)
            v = q / area
            re = 999.1 * v * d / 1.1376e-3
            f = colebrook_mpmath(re, eps_t / d)
            h = (f * 2000.0 / d + 4.0) * v * v / (2 * G)
            p_w = 999.1 * G * q * (15.0 + h) / 0.7
            e_t += p_w * hrs / 1000.0
            p_max = max(p_max, p_w / 1000.0)
        energy.append(e_t)
        peak.append(p_max)
    energy_cost = [energy[t] * 0.10 * 1.01**t + 40.0 * peak[t] for t in range(3)]
    # --- capital, maintenance, replacement, residual ----------------------------------------
    c_pipe = 300.0 * 2000.0
    c_ps = 5000.0 * (max(peak) * 1.5) ** 0.7
    maint = 0.01 * c_pipe + 0.02 * c_ps
    # station bought at t = 0 and again at t = 2 (< N = 3); t_last = 2
    residual = c_pipe * (1 - 3 / 50) + c_ps * (1 - (3 - 2) / 2)
    pv = (c_pipe + c_ps + sum((energy_cost[t - 1] + maint) / 1.06**t for t in (1, 2, 3))
          + c_ps / 1.06**2 - residual / 1.06**3)
    crf = 0.06 * 1.06**3 / (1.06**3 - 1)

    assert lc.energy_kwh[0] == pytest.approx(energy, rel=1e-12)
    assert lc.capex_pipe[0] == pytest.approx(c_pipe)
    assert lc.capex_pump_station[0] == pytest.approx(c_ps, rel=1e-12)
    assert list(lc.replacement_years) == [2.0]
    assert lc.pv_total[0] == pytest.approx(pv, rel=1e-11)
    assert lc.eac[0] == pytest.approx(pv * crf, rel=1e-11)


def test_years_collapse_equals_full_evaluation():
    s = small_scenario(duty=DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0)), horizon=25)
    d = np.linspace(0.15, 0.5, 12)
    fast = evaluate(s, d, 1e-4, 0.0, 400.0 * d**1.3)
    full = evaluate(s, d, 1e-4, 0.0, 400.0 * d**1.3, years_mode="full")
    np.testing.assert_allclose(fast.pv_total, full.pv_total, rtol=1e-13)
    np.testing.assert_allclose(fast.energy_kwh, full.energy_kwh, rtol=1e-13)


def test_no_pump_station_no_carbon():
    s = small_scenario(pump_station=None)
    lc = evaluate(s, np.array([0.3]), 1e-4, 0.0, np.array([350.0]))
    assert lc.capex_pump_station[0] == 0 and lc.pv_replacement[0] == 0
    assert lc.pv_carbon[0] == 0


@pytest.mark.reference
def test_carbon_terms():
    # DEVELOPERS.md model section, step 4: operational energy x grid factor x carbon price each
    # year, discounted, plus embodied mass x factor x price at t = 0; the energy by hand
    s = small_scenario(grid_factor=0.3, carbon_price=0.08)  # 80 per tonne
    lc = evaluate(s, np.array([0.3]), 1e-4, 0.0, np.array([350.0]), embodied_co2_per_metre=50.0)
    energy, _ = hand_years(0.3, 1e-4, 0.0)
    want = sum(energy[t - 1] * 0.3 * 0.08 / 1.06**t for t in (1, 2, 3)) + 50.0 * 2000.0 * 0.08
    assert lc.pv_carbon[0] == pytest.approx(want, rel=1e-12)


@pytest.mark.reference
def test_constant_friction_and_errors():
    # Darcy-Weisbach with f = 0.02 throughout (docs/references.md#friction), energy by hand
    s = small_scenario(friction_method="constant", constant_friction_factor=0.02)
    lc = evaluate(s, np.array([0.3]), 1e-4, 0.0, np.array([350.0]))
    assert lc.friction_factor_design[0] == 0.02
    energy, _ = hand_years(0.3, 1e-4, 0.0, friction=0.02)
    assert lc.energy_kwh[0] == pytest.approx(energy, rel=1e-13)
    with pytest.raises(InputError, match="friction_factor must be in"):
        small_scenario(friction_method="constant")
    with pytest.raises(InputError, match="pumping.efficiency"):
        small_scenario(efficiency=1.2)


@settings(max_examples=60, deadline=None)
@given(d1=st.floats(0.1, 1.0), d2=st.floats(0.1, 1.0), eps=st.floats(0.0, 1e-3),
       growth=st.floats(-0.02, 0.04))
def test_monotone_in_diameter(d1, d2, eps, growth):
    # Laws of the model: pipe capital rises with D, pumping energy falls with D; EAC finite > 0.
    lo, hi = sorted((d1, d2))
    s = small_scenario(duty=DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0),
                                        growth=growth), horizon=20)
    lc = evaluate(s, np.array([lo, hi]), eps, 1e-5, 900.0 * np.array([lo, hi]) ** 1.3)
    assert lc.capex_pipe[0] <= lc.capex_pipe[1]
    assert np.all(lc.energy_kwh[0] >= lc.energy_kwh[1] - 1e-9)
    assert np.all(np.isfinite(lc.eac)) and np.all(lc.eac > 0)


@settings(max_examples=40, deadline=None)
@given(horizons=st.lists(st.integers(1, 30), min_size=1, max_size=6),
       growth=st.floats(-0.03, 0.05), rate=st.floats(0.0, 0.12))
def test_each_sample_uses_its_own_horizon(horizons, growth, rate):
    # A batch of samples with different horizons equals the same inputs evaluated one sample
    # at a time: present values, station sizing and renewals, residuals and the feasibility
    # figures (largest velocity and pump head of the years within the sample's horizon).
    import dataclasses

    from pipeopt.variations import Variations

    s = small_scenario(duty=DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0),
                                        growth=growth), horizon=10,
                       pump_station=PumpStationCost(5000.0, 0.7, standby_fraction=0.5, life=7,
                                                    maintenance=0.02, stages=[0, 9]))
    d = np.array([0.2, 0.3, 0.45])
    args = (d, 1e-4, 3e-5, 900.0 * d**1.3)
    var = Variations(horizon=np.array(horizons, dtype=float),
                     discount_rate=np.full(len(horizons), rate))
    batch = evaluate(s, *args, variations=var)
    for j, n in enumerate(horizons):
        one = evaluate(dataclasses.replace(s, horizon=n, discount_rate=rate), *args)
        for name in ("pv_total", "eac", "velocity_max", "pump_head_max", "installed_power",
                     "pv_replacement", "pv_residual", "capex_pump_station"):
            np.testing.assert_allclose(getattr(batch, name)[j], getattr(one, name),
                                       rtol=1e-12, atol=1e-9, err_msg=name)
        # every cash-flow table reconciles to its present value
        np.testing.assert_allclose(batch.cash_flows.present_value[j], one.pv_total,
                                   rtol=1e-12)


@pytest.mark.reference
def test_time_of_use_duty_efficiencies_equipment_and_fittings_by_hand():
    # DEVELOPERS.md model section, with each duty's own price and pump efficiency, a fixed
    # loss c Q^2 (35 kPa at 0.08 m3/s) and two gate valves (Crane TP-410, 8 f_T, f_T 0.014 at
    # 250 mm, from memory; docs/references.md#long-lines), worked by hand
    from pipeopt.losses import Fittings
    from pipeopt.pumpset import PumpSet

    duty = DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0), growth=0.02,
                       prices=(0.06, 0.15))
    c_eq = 35e3 / (999.1 * G * 0.08**2)
    s = small_scenario(duty=duty, efficiency=0.8, pump=PumpSet(0.8, duty_ratios=(1.0, 0.9)),
                       equipment_coefficient=c_eq,
                       fittings=Fittings((("gate-valve", 2),)))
    d, eps0, alpha = 0.25, 0.1e-3, 0.05e-3
    lc = evaluate(s, np.array([d]), eps0, alpha, np.array([300.0]))
    area = math.pi * d * d / 4
    k_fit = 2 * 8 * 0.014
    cost, energy = [], []
    for t in (1, 2, 3):
        eps_t = eps0 + alpha * (t - 1)
        e_t, c_t, p_max = 0.0, 0.0, 0.0
        for q0, hrs, price, eta in ((0.05, 3000.0, 0.06, 0.8), (0.08, 1500.0, 0.15, 0.72)):
            q = q0 * 1.02 ** (t - 1)
            v = q / area
            re = 999.1 * v * d / 1.1376e-3
            f = colebrook_mpmath(re, eps_t / d)
            h = (f * 2000.0 / d + 4.0 + k_fit) * v * v / (2 * G) + c_eq * q * q
            p_w = 999.1 * G * q * (15.0 + h) / eta
            e_t += p_w * hrs / 1000.0
            c_t += p_w * hrs / 1000.0 * price * 1.01 ** (t - 1)
            p_max = max(p_max, p_w / 1000.0)
        energy.append(e_t)
        cost.append(c_t + 40.0 * p_max)
    assert lc.energy_kwh[0] == pytest.approx(energy, rel=1e-12)
    assert lc.energy_cost[0] == pytest.approx(cost, rel=1e-12)
    pv_energy = sum(cost[t - 1] / 1.06**t for t in (1, 2, 3))
    assert lc.pv_energy[0] == pytest.approx(pv_energy, rel=1e-12)
    # the named input energy_price scales every period's price in proportion
    from pipeopt.variations import Variations

    lc2 = evaluate(s, np.array([d]), eps0, alpha, np.array([300.0]),
                   variations=Variations.of({"energy_price": 0.2, "demand_charge": 0.0}))
    energy_part = [c - 40.0 * p for c, p in zip(cost, lc.peak_kw[0], strict=True)]
    assert lc2.pv_energy[0, 0] == pytest.approx(
        sum(2.0 * energy_part[t - 1] / 1.06**t for t in (1, 2, 3)), rel=1e-12)


@pytest.mark.reference
def test_variable_speed_curve_on_friction_only_costs_as_the_best_efficiency():
    # affinity laws (Gulich 2014, 3.4, from memory): with no static head every duty of a
    # variable-speed pump is similar to the design point, at the best efficiency; a throttled
    # pump on its curve never uses less
    from pipeopt.pumpset import PumpSet

    same = dict(static_head=0.0, efficiency=0.8, friction_method="constant",
                constant_friction_factor=0.02)
    base = small_scenario(**same)
    vsd = small_scenario(**same, pump=PumpSet(0.8, curve=True, control="variable-speed"))
    thr = small_scenario(**same, pump=PumpSet(0.8, curve=True, control="throttle"))
    d = np.array([0.2, 0.25, 0.3])
    a = evaluate(base, d, 0.0, 0.0, np.full(3, 300.0))
    b = evaluate(vsd, d, 0.0, 0.0, np.full(3, 300.0))
    c = evaluate(thr, d, 0.0, 0.0, np.full(3, 300.0))
    # a constant friction factor: H = c Q^2 exactly, every state similar to the design point
    np.testing.assert_allclose(b.pv_energy, a.pv_energy, rtol=1e-12)
    assert np.all(c.pv_energy > b.pv_energy)
    # by hand: every state at the best efficiency 0.8, h = f L/D V^2/2g (Darcy-Weisbach),
    # energy cost E_t 0.10 x 1.01^(t-1) + 40 x peak, discounted at 6 %
    for j, dj in enumerate(d):
        energy, peak = hand_years(dj, 0.0, 0.0, static=0.0, eta=0.8, friction=0.02)
        want = sum((energy[t - 1] * 0.10 * 1.01 ** (t - 1) + 40.0 * peak[t - 1]) / 1.06**t
                   for t in (1, 2, 3))
        assert b.pv_energy[j] == pytest.approx(want, rel=1e-12)


@pytest.mark.reference
@pytest.mark.parametrize("rate", [0.06, 0.0])
def test_a_25_year_study_against_an_explicit_mpmath_sum(rate):
    # DEVELOPERS.md#the-sizing-model-in-words, year by year in 30-digit mpmath: pipe capital at
    # t = 0; a station a (P (1 + s))^b bought at 0 and again at 20 (life 20), credited
    # 1 - 5/20 of its price at 25; maintenance on both; energy E p (1 + e)^(t-1) + d P_peak;
    # every amount discounted by (1 + i)^-t (docs/references.md#economics);
    # EAC = PV i (1 + i)^N / ((1 + i)^N - 1), PV / N at i = 0
    n, d, c_m = 25, 0.3, 420.0
    s = small_scenario(duty=DutyProfile(("0.05 m^3/s", "0.08 m^3/s"), (3000.0, 1500.0)),
                       horizon=n, discount_rate=rate,
                       pump_station=PumpStationCost(5000.0, 0.7, standby_fraction=0.5, life=20,
                                                    maintenance=0.02))
    lc = evaluate(s, np.array([d]), 1e-4, 0.0, np.array([c_m]))
    energy, peak = hand_years(d, 1e-4, 0.0, years=1, growth=0.0)
    with mp.workdps(30):
        i = mp.mpf(rate)
        c_pipe = mp.mpf(c_m) * 2000
        c_ps = 5000 * (mp.mpf(peak[0]) * mp.mpf("1.5")) ** mp.mpf("0.7")
        flows = [c_pipe + c_ps] + [mp.mpf(0)] * n
        for t in range(1, n + 1):
            flows[t] += (mp.mpf(energy[0]) * mp.mpf("0.10") * mp.mpf("1.01") ** (t - 1)
                         + 40 * mp.mpf(peak[0]))
            flows[t] += mp.mpf("0.01") * c_pipe + mp.mpf("0.02") * c_ps
        flows[20] += c_ps
        flows[n] -= c_pipe * (1 - mp.mpf(n) / 50) + c_ps * (1 - mp.mpf(5) / 20)
        pv = mp.fsum(c / (1 + i) ** t for t, c in enumerate(flows))
        crf = 1 / mp.mpf(n) if rate == 0 else i * (1 + i) ** n / ((1 + i) ** n - 1)
        eac = pv * crf
    assert lc.pv_total[0] == pytest.approx(float(pv), rel=1e-11)
    assert lc.eac[0] == pytest.approx(float(eac), rel=1e-11)


@pytest.mark.reference
def test_laminar_flow_uses_hagen_poiseuille():
    # docs/references.md#friction: f = 64/Re below Re 2000 (Hagen-Poiseuille); a viscous oil
    # (invented: 900 kg/m3, 0.5 Pa s) at Re about 100, energy by hand with Darcy-Weisbach
    s = small_scenario(density=900.0, viscosity=0.5,
                       duty=DutyProfile(("0.005 m^3/s",), (4000.0,)))
    d = 0.1
    lc = evaluate(s, np.array([d]), 1e-4, 0.0, np.array([200.0]))
    v = 0.005 / (math.pi * d * d / 4)
    re = 900.0 * v * d / 0.5
    assert re < 2000
    energy, _ = hand_years(d, 1e-4, 0.0, growth=0.0, friction=64 / re,
                           duties=((0.005, 4000.0),), rho=900.0, mu=0.5)
    assert lc.energy_kwh[0] == pytest.approx(energy, rel=1e-12)


def test_the_study_s_own_inputs_are_resolved_once_and_cannot_be_changed():
    # a scenario is evaluated again and again (the table, the optimum, the explorer): its own
    # named inputs are resolved once; each caller gets its own dict of read-only arrays, and
    # an evaluation gives the same bits the first time and after.
    s = small_scenario()
    first = evaluate(s, [0.2, 0.3], 1e-4, 2e-5, [300.0, 420.0])
    v = s.resolve(None)
    assert v["energy_price"].tolist() == [0.10] and v["horizon"].tolist() == [3.0]
    with pytest.raises(ValueError, match="read-only"):
        v["energy_price"][0] = 1.0
    v["extra"] = np.ones(1)
    assert "extra" not in s.resolve(None)
    again = evaluate(s, [0.2, 0.3], 1e-4, 2e-5, [300.0, 420.0])
    for name in ("eac", "pv_energy", "pv_pump_station", "pv_residual", "pv_total"):
        assert np.array_equal(getattr(first, name), getattr(again, name))
    # a fresh scenario with the same inputs agrees bit for bit, and the kept inputs are not
    # among the scenario's attributes (a copy made from them is a valid scenario)
    fresh = evaluate(small_scenario(), [0.2, 0.3], 1e-4, 2e-5, [300.0, 420.0])
    assert np.array_equal(fresh.eac, first.eac)
    assert type(s)(**vars(s)) == s
