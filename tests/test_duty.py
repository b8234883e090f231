"""Tests of pipeopt.duty (definitions; 8760 h in a year, common practice).

Reference checks: compound growth Q_t = Q_1 (1 + g)^(t - 1) worked by hand; exact unit
definitions (BIPM SI Brochure 9th ed.; NIST SP 811, 2008; docs/references.md#units: 1 US gallon
= 3.785411784 L, 1 ft = 0.3048 m, 1 h = 3600 s); growth stopping at the design year and the cap
recomputed by an explicit loop (DEVELOPERS.md#the-sizing-model-in-words, step 1).
"""

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt.duty import DutyProfile, flow_multipliers
from pipeopt.errors import InputError
from pipeopt.units import Quantity


@pytest.mark.reference
def test_growth_compounds():
    # compound growth by definition: Q_t = Q_1 (1 + g)^(t - 1)
    d = DutyProfile(("0.1 m^3/s", "0.2 m^3/s"), (1000, 2000), growth=0.05)
    q = d.flows_by_year(3)
    np.testing.assert_allclose(q, [[0.1, 0.2], [0.105, 0.21], [0.11025, 0.2205]], rtol=1e-15)
    assert d.names == ("duty 1", "duty 2")


@pytest.mark.reference
def test_flows_need_units_at_the_door():
    # 1 h = 3600 s (SI Brochure, exact): 420 m^3/h = 420/3600 m^3/s
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


@pytest.mark.reference
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


@pytest.mark.reference
def test_flow_units_by_their_exact_definitions():
    # NIST SP 811 (2008) / docs/references.md#units, exact: 1 US gallon = 3.785411784e-3 m^3,
    # 1 ft = 0.3048 m, 1 L = 1e-3 m^3, 1 min = 60 s, 1 d = 86400 s
    d = DutyProfile(("1000 gal/min", "10 L/s", "1 ft^3/s", "2400 m^3/d"), (100, 100, 100, 100))
    want = [1000 * 3.785411784e-3 / 60, 10e-3, 0.3048**3, 2400 / 86400]
    np.testing.assert_allclose(d.flows, want, rtol=1e-14)


@pytest.mark.reference
@settings(max_examples=80, deadline=None)
@given(g=st.floats(-0.05, 0.5), years=st.integers(1, 40), design=st.integers(1, 45),
       cap=st.floats(1.0, 3.0), factor=st.floats(0.5, 1.5))
def test_flow_multipliers_against_an_explicit_loop(g, years, design, cap, factor):
    # DEVELOPERS.md#the-sizing-model-in-words step 1, year by year in plain Python:
    # m_t = min(f (1 + g)^(min(t, T_d) - 1), cap) for t = 1 ... N
    want = []
    for t in range(1, years + 1):
        m = factor
        for _ in range(min(t, design) - 1):
            m *= 1 + g
        want.append(min(m, cap))
    got = flow_multipliers(years, g, factor, design_year=design, cap_ratio=cap)
    np.testing.assert_allclose(got, want, rtol=1e-12)
