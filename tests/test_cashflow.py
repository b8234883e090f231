"""Tests of pipeopt.cashflow: the money engine, against cash flows worked by hand.

Sources: the definitions of present worth (1 + i)^-t and of the capital recovery factor
(DeGarmo, Sullivan & Canada, Engineering Economy, any edition, from memory); straight-line
residual value (common practice); the purchase and staging rules of the model stated in
DEVELOPERS.md ("The sizing model in words"). Every expected value below is computed by hand in
the test, year by year.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt.cashflow import CashFlows, Timeline, purchases, station_stages
from pipeopt.costs import PumpStationCost
from pipeopt.errors import InputError


@pytest.mark.reference
def test_timeline_by_hand():
    tl = Timeline([0.05, 0.0], [3, 2])
    assert tl.factor[0].tolist() == pytest.approx([1.0, 1 / 1.05, 1 / 1.05**2, 1 / 1.05**3],
                                                  rel=1e-15)
    assert tl.live.astype(int).tolist() == [[0, 1, 1, 1], [0, 1, 1, 0]]
    assert tl.annuity[0] == pytest.approx(1 / 1.05 + 1 / 1.05**2 + 1 / 1.05**3, rel=1e-15)
    assert tl.annuity[1] == 2.0
    # CRF = i (1 + i)^N / ((1 + i)^N - 1); 1/N at zero rate
    assert tl.crf[0] == pytest.approx(0.05 * 1.05**3 / (1.05**3 - 1), rel=1e-14)
    assert tl.crf[1] == 0.5
    assert tl.end_factor.tolist() == pytest.approx([1 / 1.05**3, 1.0], rel=1e-15)
    with pytest.raises(InputError, match="horizon must be a whole number"):
        Timeline(0.05, 2.5)
    with pytest.raises(InputError, match="shorter than a horizon"):
        Timeline(0.05, 5, n_years=3)


@pytest.mark.reference
def test_purchases_by_hand():
    # life 4, horizon 10: bought at 0, 4, 8 (< 10); the last purchase is 2 years old at the
    # horizon: residual 1 - 2/4 = 0.5. A stage built in year 12 is never built.
    p = purchases(Timeline(0.05, 10), [0, 3, 12], 4)
    assert np.flatnonzero(p.first[0, 0]).tolist() == [0]
    assert np.flatnonzero(p.renewal[0, 0]).tolist() == [4, 8]
    assert np.flatnonzero(p.renewal[0, 1]).tolist() == [7]          # built 3, renewed 7
    assert p.residual_fraction[0].tolist() == [0.5, 0.25, 0.0]     # 1 - 3/4 for the second
    assert not p.first[0, 2].any() and not p.in_service[0, 2].any()
    assert np.flatnonzero(p.in_service[0, 1]).tolist() == list(range(4, 11))
    w = p.weights(Timeline(0.05, 10))
    assert w["renewal"][0, 0] == pytest.approx(1.05**-4 + 1.05**-8, rel=1e-15)


@pytest.mark.reference
def test_two_stage_station_against_a_cash_flow_by_hand():
    # Stage 0 at year 0 sized for the largest peak of years 1-5; stage 1 built in year 5 adds
    # what years 6-12 need more. Capital a (dP (1 + s))^b; each stage bought again every 6
    # years before the horizon; maintenance m on the stages in service; residual straight line.
    a, b, s, life, m, i, n = 9000.0, 0.7, 0.5, 6, 0.02, 0.05, 12
    station = PumpStationCost(a, b, standby_fraction=s, life=life, maintenance=m,
                              stages=[0, 5])
    peak = np.array([[[60, 62, 64, 66, 68, 70, 75, 80, 85, 90, 95, 100.0]]])   # years 1-12
    tl = Timeline(i, n)
    st_ = station_stages(station, peak, tl)
    c0 = a * (68.0 * (1 + s)) ** b              # largest peak of years 1-5
    c1 = a * ((100.0 - 68.0) * (1 + s)) ** b    # the rest, for years 6-12
    assert st_.capital[0, 0].tolist() == pytest.approx([c0, c1], rel=1e-14)
    # cash flows by hand: stage 0 bought at 0, 6; stage 1 at 5, 11
    flows = np.zeros(n + 1)
    flows[0] += c0
    flows[6] += c0
    flows[5] += c1
    flows[11] += c1
    for t in range(1, n + 1):
        flows[t] += m * c0 + (m * c1 if t > 5 else 0.0)
    # residual at 12: stage 0 last bought at 6 (6 of 6 years used: 0); stage 1 at 11 (1 of 6)
    flows[n] -= c1 * (1 - 1 / 6)
    want = sum(flows[t] / (1 + i) ** t for t in range(n + 1))
    pv = st_.present_values(m)
    got = pv["capital"] + pv["renewal"] + pv["maintenance"] - pv["residual"]
    assert float(got[0, 0]) == pytest.approx(want, rel=1e-13)
    # the yearly rows give the same cash flow
    y = st_.yearly(m)
    rows = y["capital"] + y["renewal"] + y["maintenance"]
    rows[..., n] -= y["residual"]
    assert rows[0, 0].tolist() == pytest.approx(flows.tolist(), rel=1e-13)


@settings(max_examples=60, deadline=None)
@given(rates=st.lists(st.floats(0.0, 0.2), min_size=1, max_size=5),
       data=st.data())
@pytest.mark.reference
def test_cash_flows_reconcile_to_present_value(rates, data):
    # the present value of a cash-flow table is the sum of its discounted rows (definition)
    horizons = data.draw(st.lists(st.integers(1, 30), min_size=len(rates),
                                  max_size=len(rates)))
    tl = Timeline(rates, horizons)
    rng = np.random.default_rng(len(rates))
    rows = {"a": rng.normal(size=(len(rates), 2, tl.n_max + 1)),
            "b": rng.normal(size=(len(rates), 2, tl.n_max + 1))}
    cf = CashFlows(tl, rows)
    for s_, (r, n) in enumerate(zip(rates, horizons, strict=True)):
        want = sum((rows["a"][s_, 1, t] + rows["b"][s_, 1, t]) / (1 + r) ** t
                   for t in range(tl.n_max + 1))
        assert cf.present_value[s_, 1] == pytest.approx(want, rel=1e-9, abs=1e-9)
        frame = cf.frame(s_, 1)
        assert len(frame) == n + 1
        assert (frame["a"] + frame["b"]).to_numpy() == pytest.approx(frame["total"].to_numpy())


def test_a_timeline_keeps_the_stage_schedule_and_a_kept_value_is_read_only():
    # the schedule of a station's stages depends only on the timeline; a cached timeline (one
    # scenario evaluated again and again) builds it once. Its results are the same bits as a
    # fresh timeline's, whatever the peaks, and nobody can change a kept array.
    station = PumpStationCost(9000.0, 0.7, standby_fraction=0.5, life=6, maintenance=0.02,
                              stages=[0, 5])
    kept = Timeline(0.05, 12)
    rng = np.random.default_rng(3)
    for _ in range(3):
        peak = rng.uniform(10.0, 100.0, (1, 4, 12))
        a = station_stages(station, peak, kept)
        b = station_stages(station, peak, Timeline(0.05, 12))
        assert np.array_equal(a.capital, b.capital)
        for key in b.weights:
            assert np.array_equal(a.weights[key], b.weights[key])
        assert np.array_equal(a.schedule.first, b.schedule.first)
    again = station_stages(station, peak, kept)
    assert again.schedule is a.schedule and again.weights is a.weights
    with pytest.raises(ValueError, match="read-only"):
        a.weights["first"][0, 0] = 0.0
    with pytest.raises(ValueError, match="read-only"):
        a.schedule.renewal[0, 0, 0] = True
    # another life is another schedule
    other = PumpStationCost(9000.0, 0.7, standby_fraction=0.5, life=4, maintenance=0.02,
                            stages=[0, 5])
    assert station_stages(other, peak, kept).schedule is not a.schedule
