"""Tests of pipeopt.duty (definitions; 8760 h in a year, common practice)."""

import numpy as np
import pytest

from pipeopt.duty import DutyProfile, flow_multipliers
from pipeopt.errors import InputError
from pipeopt.units import Quantity


def test_growth_compounds():
    # compound growth by definition: Q_t = Q_1 (1 + g)^(t - 1)
    d = DutyProfile(("0.1 m^3/s", "0.2 m^3/s"), (1000, 2000), growth=0.05)
    q = d.flows_by_year(3)
    np.testing.assert_allclose(q, [[0.1, 0.2], [0.105, 0.21], [0.11025, 0.2205]], rtol=1e-15)
    assert d.names == ("duty 1", "duty 2")


def test_flows_need_units_at_the_door():
    # 420 read as m^3/s instead of m^3/h would be 3600 times too much: refused
    with pytest.raises(InputError, match=r"duty\[0\]\.flow: expected a volumetric flow such as "
                                         r"'380 m\^3/h', got 420.0 with no unit"):
        DutyProfile([420.0], [8000])
    d = DutyProfile([Quantity(420, "m^3/h")], [8000])
    assert d.flows[0] == pytest.approx(420 / 3600, rel=1e-15)


@pytest.mark.parametrize(
    ("flows", "hours", "growth", "match"),
    [
        (("0.1 m^3/s",), (9000,), 0.0, r"duty\[0\]\.hours: must be <= 8760"),
        (("0.1 m^3/s", "0.1 m^3/s"), (5000, 5000), 0.0, "add up to 10000, more than the 8760"),
        (("-0.1 m^3/s",), (100,), 0.0, r"duty\[0\]\.flow: must be positive"),
        (("0.1 m^3/s",), (100, 200), 0.0, "1 flows but 2 hours"),
        (("0.1 m^3/s",), (100,), 2.0, r"growth\.flow_per_year: must be <= 0\.5"),
        ((), (), 0.0, "at least one duty point"),
    ],
)
def test_errors(flows, hours, growth, match):
    with pytest.raises(InputError, match=match):
        DutyProfile(flows, hours, growth)


def test_growth_stops_at_the_design_year_and_at_the_cap():
    # by definition: after the design year the flows stay; the largest flow never exceeds the cap
    d = DutyProfile(("100 m^3/h", "200 m^3/h"), (1000, 1000), growth=0.1, design_year=3)
    np.testing.assert_allclose(d.growth_factors(5), [1.0, 1.1, 1.21, 1.21, 1.21], rtol=1e-15)
    c = DutyProfile(("100 m^3/h", "200 m^3/h"), (1000, 1000), growth=0.1, flow_cap="230 m^3/h")
    q = c.flows_by_year(4) * 3600
    np.testing.assert_allclose(q[:, 1], [200.0, 220.0, 230.0, 230.0], rtol=1e-14)
    np.testing.assert_allclose(q[:, 0], [100.0, 110.0, 115.0, 115.0], rtol=1e-14)
    with pytest.raises(InputError, match="growth.flow_cap .* below the largest year-1"):
        DutyProfile(("100 m^3/h",), (1000,), flow_cap="50 m^3/h")
    # per-sample growth and flow factor broadcast over samples
    m = flow_multipliers(3, np.array([0.0, 0.1]), np.array([1.0, 2.0]))
    np.testing.assert_allclose(m, [[1.0, 1.0, 1.0], [2.0, 2.2, 2.42]], rtol=1e-15)


def test_scaled():
    d = DutyProfile(("0.1 m^3/s",), (1000,)).scaled(1.5, 2.0)
    assert d.flows == (pytest.approx(0.15),) and d.hours == (2000.0,)


def test_frozen():
    import dataclasses

    d = DutyProfile(("0.1 m^3/s",), (1000,))
    with pytest.raises(dataclasses.FrozenInstanceError):
        d.growth = 0.2
    # a section rebuilt from its own values does not ask for units again
    assert dataclasses.replace(d, growth=0.02).flows == d.flows
