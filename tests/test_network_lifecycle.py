"""Tests of pipeopt.network.lifecycle against the life-cycle model computed by hand."""

from __future__ import annotations

import numpy as np
import pytest

from pipeopt.costs import EnergyTariff, PumpStationCost
from pipeopt.duty import DutyProfile
from pipeopt.errors import InputError
from pipeopt.network.lifecycle import NetworkEconomics, life_cycle, year_weights
from pipeopt.variations import Variations


def economics(**kw):
    base = {"duty": DutyProfile(("0.05 m^3/s", "0.09 m^3/s"), (6000.0, 1500.0), 0.02),
            "efficiency": 0.7,
            "tariff": EnergyTariff(0.12, 0.015, 55.0),
            "pump_station": PumpStationCost(8500.0, 0.7, 0.5, 15.0, 0.02),
            "discount_rate": 0.05, "horizon": 40, "pipe_life": 70.0, "pipe_maintenance": 0.004}
    base.update(kw)
    return NetworkEconomics(**base)


@pytest.mark.reference
def test_life_cycle_against_a_year_by_year_hand_computation():
    # the model, written out year by year (present value of every amount at 5 %): energy
    # E_t = sum_k P_tk h_k at price p (1+e)^(t-1) plus the demand charge on the year's peak;
    # station a (1.5 P_max)^b at t = 0, 15 and 30, residual 1 - (40 - 30)/15 of it at 40;
    # maintenance 0.004 pipe + 0.02 station a year; pipe residual 1 - 40/70 at 40
    econ = economics()
    n = 40
    rng = np.random.default_rng(0)
    power = rng.uniform(20, 60, size=(2, n, 2))             # two designs, kW
    capital = np.array([1.2e6, 0.9e6])
    lc = life_cycle(econ, capital, power)
    for b in range(2):
        pv_energy = 0.0
        for t in range(1, n + 1):
            e = 6000.0 * power[b, t - 1, 0] + 1500.0 * power[b, t - 1, 1]
            cost = e * 0.12 * 1.015 ** (t - 1) + 55.0 * power[b, t - 1].max()
            pv_energy += cost / 1.05**t
        c_ps = 8500.0 * (1.5 * power[b].max()) ** 0.7
        maint = sum((0.004 * capital[b] + 0.02 * c_ps) / 1.05**t for t in range(1, n + 1))
        renew = c_ps / 1.05**15 + c_ps / 1.05**30
        residual = (capital[b] * (1 - 40 / 70) + c_ps * (1 - 10 / 15)) / 1.05**40
        total = capital[b] + c_ps + pv_energy + maint + renew - residual
        assert lc.pv_energy[b] == pytest.approx(pv_energy, rel=1e-12)
        assert lc.capex_pump_station[b] == pytest.approx(c_ps, rel=1e-12)
        assert lc.pv_total[b] == pytest.approx(total, rel=1e-12)
        crf = 0.05 * 1.05**40 / (1.05**40 - 1)              # capital recovery factor
        assert lc.eac[b] == pytest.approx(total * crf, rel=1e-12)


@pytest.mark.reference
def test_one_year_of_power_stands_for_every_year():
    # steady power (no growth): one year of power stands for all 40, and the present value is
    # the explicit discounted sum sum_t C_t / (1 + i)^t written out in mpmath (the model of
    # the first test: energy at 0.12 escalating 1.5 %, demand charge 55, station
    # 8500 (1.5 P)^0.7 at 0, 15, 30 with residual 1 - 10/15, maintenance, pipe residual)
    import mpmath

    econ = economics(duty=DutyProfile(("0.05 m^3/s", "0.09 m^3/s"), (6000.0, 1500.0)))
    p1 = np.full((1, 1, 2), 30.0)
    pn = np.full((1, 40, 2), 30.0)
    one = life_cycle(econ, [1e6], p1).pv_total[0]
    assert one == pytest.approx(life_cycle(econ, [1e6], pn).pv_total[0], rel=1e-14)
    mpmath.mp.dps = 30
    r = mpmath.mpf("1.05")
    c_ps = 8500 * (mpmath.mpf(45)) ** mpmath.mpf("0.7")
    pv = 10**6 + c_ps + c_ps / r**15 + c_ps / r**30
    for t in range(1, 41):
        energy = 30 * (6000 + 1500) * mpmath.mpf("0.12") * mpmath.mpf("1.015") ** (t - 1)
        pv += (energy + 55 * 30 + mpmath.mpf("0.004") * 10**6 + mpmath.mpf("0.02") * c_ps) / r**t
    pv -= (10**6 * (1 - mpmath.mpf(40) / 70) + c_ps * (1 - mpmath.mpf(10) / 15)) / r**40
    assert one == pytest.approx(float(pv), rel=1e-12)


@pytest.mark.reference
def test_year_weights_by_hand():
    # the present-value weight of each amount, written out: a kWh in year t costs
    # 0.12 * 1.015^(t-1) / 1.05^t, a kW of peak 55 / 1.05^t; one unit of pipe capital brings
    # 1 + 0.004 sum_t 1.05^-t - (1 - 40/70) 1.05^-40; one unit of station capital
    # 1 + 1.05^-15 + 1.05^-30 + 0.02 sum_t 1.05^-t - (1 - 10/15) 1.05^-40 (present value,
    # common practice; straight-line residual)
    econ = economics()
    w = year_weights(econ)
    t = np.arange(1, 41)
    disc = 1.05**-t
    np.testing.assert_allclose(w["energy"], 0.12 * 1.015 ** (t - 1) * disc, rtol=1e-13)
    np.testing.assert_allclose(w["demand"], 55.0 * disc, rtol=1e-13)
    assert w["pipe"] == pytest.approx(1 + 0.004 * disc.sum() - (1 - 40 / 70) * 1.05**-40,
                                      rel=1e-13)
    np.testing.assert_allclose(w["station"], [1 + 1.05**-15 + 1.05**-30 + 0.02 * disc.sum()
                                              - (1 - 10 / 15) * 1.05**-40], rtol=1e-13)
    assert w["stage_last"].tolist() == [40]
    # and they give the same present values as life_cycle
    power = np.random.default_rng(1).uniform(10, 50, size=(1, 40, 2))
    lc = life_cycle(econ, [5e5], power)
    energy = (power[0] * np.array([6000.0, 1500.0])).sum(axis=1)
    peak = power[0].max(axis=1)
    assert (energy * w["energy"] + peak * w["demand"]).sum() == pytest.approx(
        lc.pv_energy[0], rel=1e-12)
    station = lc.capex_pump_station[0]
    assert 5e5 * w["pipe"] + station * w["station"][0] + lc.pv_energy[0] == pytest.approx(
        lc.pv_total[0], rel=1e-12)


def test_a_design_that_never_pumps_buys_no_station():
    lc = life_cycle(economics(), [1e5], np.zeros((1, 40, 2)))
    assert lc.capex_pump_station[0] == 0.0
    assert lc.pv_energy[0] == 0.0


def test_shapes_are_checked():
    with pytest.raises(InputError, match="designs, years, duty points"):
        life_cycle(economics(), [1e5], np.zeros((40, 2)))
    with pytest.raises(InputError, match="the horizon is 40"):
        life_cycle(economics(), [1e5], np.zeros((1, 7, 2)))
    with pytest.raises(InputError, match=r"pumping\.efficiency must be > 0 and <= 1; got 1\.5"):
        economics(efficiency=1.5)
    with pytest.raises(InputError, match=r"economics\.horizon must be a whole number"):
        economics(horizon=30.5)


# ----- the yearly cash flows and the station's stages ------------------------------------------
@pytest.mark.reference
def test_cash_flows_reconcile_to_the_present_value():
    # every row discounted by the test's own factor 1.05^-t sums to pv_total (to 1e-9)
    econ = economics()
    power = np.random.default_rng(2).uniform(20, 60, size=(3, 40, 2))
    lc = life_cycle(econ, [1.2e6, 0.9e6, 1.5e6], power, yearly=True)
    for b in range(3):
        table = lc.cash_flows.frame(0, b)
        t = table["year"].to_numpy(dtype=float)
        rows = table.drop(columns=["year", "total", "discount_factor", "discounted"])
        assert (rows.sum(axis=1) * 1.05**-t).sum() == pytest.approx(lc.pv_total[b], rel=1e-9)
        assert table["discounted"].sum() == pytest.approx(lc.pv_total[b], rel=1e-9)
        # the capital and the station renewals fall in the years the model says
        assert table.loc[table["year"] == 0, "capital_pipe"].item() == pytest.approx(
            lc.capex_pipe[b])
        renewals = table.loc[table["station_renewal"] > 0, "year"].tolist()
        assert renewals == [15, 30]


@pytest.mark.reference
def test_a_station_in_two_stages_by_hand():
    # stages at years 0 and 12, life 15, horizon 40: stage 0 sized on the largest peak of years
    # 1-12 and bought at 0, 15, 30 (residual 1 - 10/15); stage 1 adds the rest of the largest
    # peak of years 1-40, bought at 12 and 27 (residual 1 - 13/15); maintenance 0.02 of each
    # stage while in service (stage 1 from year 13)
    station = PumpStationCost(8500.0, 0.7, 0.5, 15, 0.02, stages=(0, 12))
    econ = economics(pump_station=station)
    power = np.linspace(20.0, 60.0, 40)[None, :, None] * np.array([1.0, 1.2])   # growing
    lc = life_cycle(econ, [1e6], power, yearly=True)
    peak = power[0].max(axis=1)
    p0, p1 = peak[:12].max(), peak.max()
    c0, c1 = 8500.0 * (1.5 * p0) ** 0.7, 8500.0 * (1.5 * (p1 - p0)) ** 0.7
    t = np.arange(1, 41)
    disc = 1.05**-t
    pv_station = (c0 * (1 + 1.05**-15 + 1.05**-30) + c1 * (1.05**-12 + 1.05**-27)
                  + 0.02 * (c0 * disc.sum() + c1 * disc[12:].sum())
                  - (c0 * (1 - 10 / 15) + c1 * (1 - 13 / 15)) * 1.05**-40)
    assert lc.capex_pump_station[0] == pytest.approx(c0 + c1, rel=1e-12)
    assert lc.installed_power_kw[0] == pytest.approx(1.5 * p1, rel=1e-12)
    station_terms = (lc.pv_pump_station + lc.pv_replacement + lc.pv_maintenance
                     - 0.004 * 1e6 * disc.sum() - lc.pv_residual
                     + 1e6 * (1 - 40 / 70) * 1.05**-40)
    assert station_terms[0] == pytest.approx(pv_station, rel=1e-10)
    w = year_weights(econ)
    assert w["stage_last"].tolist() == [12, 40]
    assert (w["station"] * [c0, c1]).sum() == pytest.approx(pv_station, rel=1e-10)


def test_each_sample_uses_its_own_inputs_and_horizon():
    # a batch of samples equals the same inputs evaluated one at a time
    econ = economics()
    power = np.random.default_rng(3).uniform(20, 60, size=(2, 40, 2))
    values = {"energy_price": np.array([0.1, 0.2, 0.15]), "horizon": np.array([20, 40, 33]),
              "discount_rate": np.array([0.03, 0.05, 0.08]),
              "efficiency": np.array([0.6, 0.7, 0.8]),
              "station_cost_factor": np.array([0.8, 1.0, 1.3]),
              "pipe_cost_factor": np.array([1.1, 1.0, 0.9])}
    batch = life_cycle(econ, [1e6, 8e5], power, variations=Variations.of(values),
                       yearly=True)
    for k in range(3):
        one = {n: v[k:k + 1] for n, v in values.items()}
        single = life_cycle(econ, [1e6, 8e5], power, variations=Variations.of(one),
                            yearly=True)
        np.testing.assert_allclose(batch.pv_total[k], single.pv_total[0], rtol=1e-12)
        np.testing.assert_allclose(batch.eac[k], single.eac[0], rtol=1e-12)
        table = batch.cash_flows.frame(k, 1)
        assert table["year"].iloc[-1] == values["horizon"][k]
        assert table["discounted"].sum() == pytest.approx(batch.pv_total[k, 1], rel=1e-9)
    # the efficiency scales the power: at 0.35 the energy of the base case doubles
    half = life_cycle(econ, [1e6, 8e5], power, variations=Variations.of({"efficiency": 0.35}))
    base = life_cycle(econ, [1e6, 8e5], power)
    np.testing.assert_allclose(half.pv_energy[0], 2 * base.pv_energy, rtol=1e-12)


@pytest.mark.reference
def test_a_sample_by_hand():
    # One sample (price 0.2, horizon 20, rate 8 %, efficiency 0.6, station cost x1.3, pipe cost
    # x0.9) priced year by year as in the first test: power scaled by 0.7 / 0.6 (P = rho g Q H
    # / eta), the station sized on the largest peak of its own 20 years, renewed at 15,
    # residual 1 - 5/15 of the renewal and 1 - 20/70 of the pipes at year 20 (present value,
    # common practice)
    econ = economics()
    power = np.random.default_rng(4).uniform(20, 60, size=(1, 40, 2))
    values = {"energy_price": 0.2, "horizon": 20, "discount_rate": 0.08, "efficiency": 0.6,
              "station_cost_factor": 1.3, "pipe_cost_factor": 0.9}
    lc = life_cycle(econ, [1e6], power, variations=Variations.of(values))
    n, i = 20, 0.08
    p = power[0, :n] * 0.7 / 0.6
    capital = 0.9e6
    c_ps = 1.3 * 8500.0 * (1.5 * p.max()) ** 0.7
    total = capital + c_ps + c_ps / (1 + i) ** 15
    for t in range(1, n + 1):
        e = 6000.0 * p[t - 1, 0] + 1500.0 * p[t - 1, 1]
        total += (e * 0.2 * 1.015 ** (t - 1) + 55.0 * p[t - 1].max()
                  + 0.004 * capital + 0.02 * c_ps) / (1 + i) ** t
    total -= (capital * (1 - 20 / 70) + c_ps * (1 - 5 / 15)) / (1 + i) ** n
    assert lc.pv_total[0, 0] == pytest.approx(total, rel=1e-12)
    crf = i * (1 + i) ** n / ((1 + i) ** n - 1)
    assert lc.eac[0, 0] == pytest.approx(total * crf, rel=1e-12)
