"""Tests of pipeopt.costs (cost models; definitions, no external figures)."""

import numpy as np
import pytest

from pipeopt.costs import EnergyTariff, PowerLawPipeCost, PumpStationCost, TablePipeCost
from pipeopt.errors import InputError


def test_power_law():
    c = PowerLawPipeCost(1800.0, 1.25)
    assert c.per_metre(0.3) == pytest.approx(1800 * 0.3**1.25)
    np.testing.assert_allclose(c.per_metre([0.2, 0.4]), 1800 * np.array([0.2, 0.4]) ** 1.25)
    with pytest.raises(InputError, match=r"cost\.coefficient: must be positive; got -1\.0"):
        PowerLawPipeCost(-1.0, 1.2)
    with pytest.raises(InputError, match=r"cost\.exponent: must be <= 4"):
        PowerLawPipeCost(100.0, 9.0)


def test_table_reproduces_a_power_law_between_rows():
    d = np.array([0.2, 0.3, 0.45])
    law = PowerLawPipeCost(2000.0, 1.3)
    table = TablePipeCost(tuple(d), tuple(law.per_metre(d)))
    x = np.array([0.2, 0.25, 0.33, 0.45])
    np.testing.assert_allclose(table.per_metre(x), law.per_metre(x), rtol=1e-12)
    with pytest.raises(InputError, match="extrapolation"):
        table.per_metre(0.5)
    with pytest.raises(InputError, match="strictly increasing"):
        TablePipeCost((0.3, 0.2), (1.0, 2.0))


def test_pump_station():
    ps = PumpStationCost(8000.0, 0.7, standby_fraction=0.5, life=20, maintenance=0.01)
    assert ps.installed_power(100.0) == pytest.approx(150.0)
    assert ps.capital(100.0) == pytest.approx(8000 * 150**0.7)
    with pytest.raises(InputError, match=r"pump_station\.life: must be >= 1"):
        PumpStationCost(8000.0, 0.7, life=0)
    with pytest.raises(InputError, match=r"pump_station\.life: expected a whole number"):
        PumpStationCost(8000.0, 0.7, life=20.5)
    with pytest.raises(InputError, match=r"pump_station\.stages must be whole years, increasing"):
        PumpStationCost(8000.0, 0.7, stages=[5, 10])


def test_tariff():
    t = EnergyTariff(0.12, escalation=0.02, demand_charge=50.0)
    np.testing.assert_allclose(t.price_by_year(3), [0.12, 0.1224, 0.124848])
    cost = t.yearly_cost(np.array([[1000.0, 1000.0]]), np.array([[10.0, 20.0]]))
    np.testing.assert_allclose(cost, [[120.0 + 500.0, 122.4 + 1000.0]])
    with pytest.raises(InputError, match=r"energy\.price: must be positive"):
        EnergyTariff(0.0)
    # per-sample prices: (S, N)
    np.testing.assert_allclose(t.price_by_year(2, np.array([0.1, 0.2]), np.array([0.0, 0.5])),
                               [[0.1, 0.1], [0.2, 0.3]], rtol=1e-15)
