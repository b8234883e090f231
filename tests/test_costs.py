"""Tests of pipeopt.costs (cost models; definitions, no external figures).

Every expected value is computed by hand in the test from the cost forms of the contributor
guide (DEVELOPERS.md#the-sizing-model-in-words: material plus laying m p + a OD^n, a power law of
the diameter, a station a (P (1 + s))^b) and the tariff of docs/references.md#economics
(energy x escalated price + demand charge x peak; compound escalation, common practice).
"""

import numpy as np
import pytest

from pipeopt.costs import (
    DesignationCostTable,
    EnergyTariff,
    MassLayingCost,
    PowerLawPipeCost,
    PumpStationCost,
)
from pipeopt.errors import InputError


@pytest.mark.reference
def test_power_law():
    # a D^b per metre, the common power-law cost form (common practice), by hand
    c = PowerLawPipeCost(1800.0, 1.25)
    assert c.per_metre(0.3) == pytest.approx(1800 * 0.3**1.25)
    np.testing.assert_allclose(c.per_metre([0.2, 0.4]), 1800 * np.array([0.2, 0.4]) ** 1.25)
    with pytest.raises(InputError, match=r"cost\.coefficient: must be positive; got -1\.0"):
        PowerLawPipeCost(-1.0, 1.2)
    with pytest.raises(InputError, match=r"cost\.exponent: must be <= 4"):
        PowerLawPipeCost(100.0, 9.0)


@pytest.mark.reference
def test_material_plus_laying_by_hand():
    # definition: c = m p + a OD^n, or a laying cost by nominal size (worked by hand)
    c = MassLayingCost(2.5, 600.0, 1.1)
    got = c.price(["315 SDR 17", "315 SDR 11"], ["315", "315"], [0.315, 0.315], [16.7, 24.7])
    want = [16.7 * 2.5 + 600.0 * 0.315**1.1, 24.7 * 2.5 + 600.0 * 0.315**1.1]
    np.testing.assert_allclose(got, want, rtol=1e-15)
    t = MassLayingCost(2.0, laying_table={"DN 300": 150.0, "DN 400": 190.0})
    assert t.price(["DN 300 C40"], ["dn300"], [0.326], [60.0]).tolist() == [60.0 * 2.0 + 150.0]
    with pytest.raises(InputError, match=r"no laying cost for nominal size 'DN 350'; nearest "
                                         r"listed: DN 300"):
        t.price(["DN 350 C40"], ["DN 350"], [0.378], [70.0])
    with pytest.raises(InputError, match=r"cost: give laying_coefficient"):
        MassLayingCost(2.0)


def test_designation_table_is_used_as_given():
    # no interpolation: each designation its own price, two classes of one bore allowed
    t = DesignationCostTable.parse({"DN 300 C40": 412.0, "DN 300 C25": 398.0,
                                    "DN 400 C30": 455.0}, "cost.table")
    got = t.price(["DN 300 C25", "dn 300 c40"], ["DN 300"] * 2, [0.326] * 2, [50.0, 60.0])
    assert got.tolist() == [398.0, 412.0]
    with pytest.raises(InputError, match=r"no cost for 'DN 350 C40'; nearest listed: "
                                         r"DN 300 C40"):
        t.price(["DN 350 C40"], ["DN 350"], [0.378], [70.0])
    with pytest.raises(InputError, match="listed twice"):
        DesignationCostTable.parse([["DN 300 C40", 1.0], ["dn300c40", 2.0]], "cost.table")


@pytest.mark.reference
def test_pump_station():
    # a (P (1 + s))^b, DEVELOPERS.md#the-sizing-model-in-words, by hand: 100 kW + 50 % standby
    ps = PumpStationCost(8000.0, 0.7, standby_fraction=0.5, life=20, maintenance=0.01)
    assert ps.installed_power(100.0) == pytest.approx(150.0)
    assert ps.capital(100.0) == pytest.approx(8000 * 150**0.7)
    with pytest.raises(InputError, match=r"pump_station\.life: must be >= 1"):
        PumpStationCost(8000.0, 0.7, life=0)
    with pytest.raises(InputError, match=r"pump_station\.life: expected a whole number"):
        PumpStationCost(8000.0, 0.7, life=20.5)
    with pytest.raises(InputError, match=r"pump_station\.stages must be whole years, increasing"):
        PumpStationCost(8000.0, 0.7, stages=[5, 10])


@pytest.mark.reference
def test_tariff():
    # compound escalation p_t = p_1 (1 + e)^(t - 1) and cost = E p_t + demand charge x peak
    # (docs/references.md#economics, common practice), by hand: 0.12 x 1.02 = 0.1224,
    # 0.12 x 1.02^2 = 0.124848
    t = EnergyTariff(0.12, escalation=0.02, demand_charge=50.0)
    np.testing.assert_allclose(t.price_by_year(3), [0.12, 0.1224, 0.124848])
    cost = t.yearly_cost(np.array([[1000.0, 1000.0]]), np.array([[10.0, 20.0]]))
    np.testing.assert_allclose(cost, [[120.0 + 500.0, 122.4 + 1000.0]])
    with pytest.raises(InputError, match=r"energy\.price: must be positive"):
        EnergyTariff(0.0)
    # per-sample prices: (S, N)
    np.testing.assert_allclose(t.price_by_year(2, np.array([0.1, 0.2]), np.array([0.0, 0.5])),
                               [[0.1, 0.1], [0.2, 0.3]], rtol=1e-15)
