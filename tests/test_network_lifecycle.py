"""Tests of pipeopt.network.lifecycle against the life-cycle model computed by hand."""

from __future__ import annotations

import numpy as np
import pytest

from pipeopt.costs import EnergyTariff, PumpStationCost
from pipeopt.duty import DutyProfile
from pipeopt.errors import InputError
from pipeopt.network.lifecycle import NetworkEconomics, life_cycle, year_weights


def economics(**kw):
    base = {"duty": DutyProfile(("0.05 m^3/s", "0.09 m^3/s"), (6000.0, 1500.0), 0.02),
            "efficiency": 0.7,
            "tariff": EnergyTariff(0.12, 0.015, 55.0),
            "pump_station": PumpStationCost(8500.0, 0.7, 0.5, 15.0, 0.02),
            "discount_rate": 0.05, "horizon": 40, "pipe_life": 70.0, "pipe_maintenance": 0.004}
    base.update(kw)
    return NetworkEconomics(**base)


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


def test_one_year_of_power_stands_for_every_year():
    econ = economics(duty=DutyProfile(("0.05 m^3/s", "0.09 m^3/s"), (6000.0, 1500.0)))
    p1 = np.full((1, 1, 2), 30.0)
    pn = np.full((1, 40, 2), 30.0)
    assert life_cycle(econ, [1e6], p1).pv_total[0] == pytest.approx(
        life_cycle(econ, [1e6], pn).pv_total[0], rel=1e-14)


def test_year_weights_reproduce_the_present_values():
    # the weights the exact programme uses give the same present values as life_cycle
    econ = economics()
    w = year_weights(econ)
    power = np.random.default_rng(1).uniform(10, 50, size=(1, 40, 2))
    lc = life_cycle(econ, [5e5], power)
    energy = (power[0] * np.array([6000.0, 1500.0])).sum(axis=1)
    peak = power[0].max(axis=1)
    assert (energy * w["energy"] + peak * w["demand"]).sum() == pytest.approx(
        lc.pv_energy[0], rel=1e-12)
    station = lc.capex_pump_station[0]
    assert 5e5 * w["pipe"] + station * w["station"] + lc.pv_energy[0] == pytest.approx(
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
    with pytest.raises(InputError, match="efficiency"):
        economics(efficiency=1.5)
