"""Tests of pipeopt.stations: booster stations placed by dynamic programming.

Sources, named beside each check:
- the economic number and positions of pumping stations on a level line, worked by hand in
  this file and found by brute-force enumeration of every layout of up to four boosters among
  eleven sites (the optimizer must match it exactly);
- the control rule of the contributor guide (DEVELOPERS.md, "Long lines": each station holds
  its discharge at the least head its own segment needs), whose laws are checked as
  properties: another booster never raises the pressure anywhere, and telescoped classes never
  cost more than the cheapest single class that holds everywhere.
"""

from __future__ import annotations

import itertools
import math
import tempfile
from pathlib import Path

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import SizingStudy
from pipeopt.errors import InputError
from pipeopt.stations import Boosters, evaluate_layouts, telescope

G = 9.80665
SIZES = """material,designation,nominal,pressure_class,outside_diameter_mm,wall_mm,\
pressure_rating_bar
steel,600 A,600,A,620,10,10
steel,600 B,600,B,620,10,20
"""
_FOLDER = tempfile.TemporaryDirectory()   # the user's own sizes file of these studies
(Path(_FOLDER.name) / "level_sizes.csv").write_text(SIZES)


def level_study(max_count: int = 4, fixed: float = 300000.0, per_kw: float = 400.0,
                flow: str = "0.5 m^3/s", **extra) -> SizingStudy:
    """A level 60 km line, one bore with two classes (equal bores, ratings 10 and 20 bar),
    eleven booster sites; constant friction factor, no station at the head is priced."""
    d = {
        "catalog": {"sizes": "level_sizes.csv"},
        "study": {"name": "level line (invented)", "currency": "EUR", "illustrative": True},
        "fluid": {"kind": "custom", "density": "1000 kg/m^3", "viscosity": "1 mPa*s"},
        "hydraulics": {"friction_method": "constant", "friction_factor": 0.02},
        "line": {"length": "60 km", "static_head": "20 m"},
        "duty": [{"flow": flow, "hours": 6000}],
        "pumping": {"efficiency": 0.75},
        "energy": {"price": 0.1},
        "economics": {"discount_rate": 0.05, "horizon": 30, "pipe_life": 30},
        "material": [{"name": "steel", "classes": ["A", "B"],
                      "cost": {"table": {"600 A": 300.0, "600 B": 380.0}}}],
        "constraints": {"surge_allowance": "0 m", "pressure_min": "0 bar"},
        "boosters": {"max_count": max_count, "sites": [f"{k} km" for k in range(5, 60, 5)],
                     "fixed_cost": fixed, "cost_per_kw": per_kw, "life": 30},
    }
    d.update(extra)
    return SizingStudy.from_dict(d, base_dir=_FOLDER.name)


def hand_layouts(max_count: int, fixed: float, per_kw: float, q: float = 0.5):
    """Every layout of up to ``max_count`` boosters among the eleven sites, priced by hand.

    Level line at elevation 0, uniform friction gradient i = f / D × V² / (2 g) (constant f),
    delivery head 20 m, least head 0 m everywhere: a station's discharge head is i × its
    segment's length + the head wanted at the segment's end (0 at a booster, 20 m at the
    delivery); every booster receives exactly 0 m. Each 5 km stretch takes class A (10 bar,
    300 EUR/m) when its highest pressure is within 10 bar, else B (20 bar, 380 EUR/m), else
    the layout fails. Boosters cost fixed + per kW of ρ g Q ΔH / η; energy is Σ ρ g Q ΔH / η
    over 6000 h at 0.1 EUR/kWh, every year (no escalation), discounted at 5 % over 30 years.
    """
    rho, f, eta = 1000.0, 0.02, 0.75
    bore = 0.620 - 2 * 0.010
    v = q / (math.pi * bore**2 / 4)
    i = f / bore * v * v / (2 * G)
    annuity = (1 - 1.05**-30) / 0.05
    crf = 0.05 * 1.05**30 / (1.05**30 - 1)     # capital recovery factor r(1+r)^n/((1+r)^n-1)
    sites = [5000.0 * k for k in range(1, 12)]
    out = {}
    for n in range(max_count + 1):
        for chosen in itertools.combinations(sites, n):
            xs = [0.0, *chosen, 60000.0]
            pipe, stations, energy, ok = 0.0, 0.0, 0.0, True
            for j in range(len(xs) - 1):
                a, b = xs[j], xs[j + 1]
                head = i * (b - a) + (20.0 if b == 60000.0 else 0.0)
                kw = rho * G * q * head / eta / 1000.0
                energy += kw * 6000 * 0.1 * annuity
                if j:
                    stations += fixed + per_kw * kw
                for s in np.arange(a, b, 5000.0):  # each stretch of the segment
                    p_bar = rho * G * (head - i * (s - a)) / 1e5   # highest at its start
                    if p_bar <= 10 + 1e-9:
                        pipe += 5000 * 300.0
                    elif p_bar <= 20 + 1e-9:
                        pipe += 5000 * 380.0
                    else:
                        ok = False
            if ok:
                out[chosen] = (pipe + stations + energy) * crf
    return out


@pytest.mark.reference
@pytest.mark.parametrize(("fixed", "per_kw"), [(300000.0, 400.0), (50000.0, 100.0),
                                               (2_000_000.0, 0.0)])
def test_dynamic_programme_matches_brute_force_enumeration(fixed, per_kw):
    # hand-worked model of this file, every one of the 562 layouts enumerated
    hand = hand_layouts(4, fixed, per_kw)
    best_layout = min(hand, key=hand.get)
    res = level_study(4, fixed, per_kw).run()
    b = res.best
    got = tuple(float(x) * 1000.0 for x in b["booster_chainages_km"].split(", ") if x)
    assert got == pytest.approx(best_layout)
    assert b["eac"] == pytest.approx(hand[best_layout], rel=1e-9)
    # and for every number of boosters, the best layout of that number
    c = res.candidates
    for n in range(5):
        mine = {k: v for k, v in hand.items() if len(k) == n}
        row = c[c["boosters"] == n]
        if not mine:
            assert not row["feasible"].any()
            continue
        assert row["eac"].min() == pytest.approx(min(mine.values()), rel=1e-9)


@pytest.mark.reference
def test_economic_number_of_stations_falls_as_stations_cost_more():
    # hand model of this file: cheap stations -> more of them, dear stations -> the fewest that
    # hold the pressure (the classic trade of pipe class against station capital)
    counts = []
    for fixed in (20000.0, 300000.0, 5_000_000.0):
        hand = hand_layouts(4, fixed, 0.0)
        n_hand = len(min(hand, key=hand.get))
        res = level_study(4, fixed, 0.0).run()
        assert int(res.best["boosters"]) == n_hand
        counts.append(n_hand)
    assert counts[0] > counts[-1]
    # the fewest stations that hold: total head over the 20 bar of class B, by hand
    bore = 0.6
    v = 0.5 / (math.pi * bore**2 / 4)
    total = 0.02 / bore * v * v / (2 * G) * 60000.0 + 20.0
    assert counts[-1] == math.ceil(total / (20e5 / (1000 * G))) - 1


def level_gradient(q: float) -> float:
    """Friction head per metre of the level study's 600 mm bore, Darcy-Weisbach with f 0.02."""
    v = q / (math.pi * 0.6**2 / 4)
    return 0.02 / 0.6 * v * v / (2 * G)


@pytest.mark.reference
def test_station_table_of_the_level_line_by_hand():
    # Three boosters at 15, 30 and 45 km (the best layout of the first case above): each
    # station lifts i x 15 km, the last 20 m more for the delivery; power rho g Q H / eta;
    # discharge pressure rho g H; every booster receives 0 m; NPSH available at sea level
    # p_atm / (rho g) with no vapour pressure given (101,325 Pa, ISO 2533, from memory)
    res = level_study().run()
    st_ = res.stations
    assert st_["chainage_m"].tolist() == [0.0, 15000.0, 30000.0, 45000.0]
    head = level_gradient(0.5) * 15000.0 + np.array([0.0, 0.0, 0.0, 20.0])
    np.testing.assert_allclose(st_["head_max_m"], head, rtol=1e-12)
    np.testing.assert_allclose(st_["peak_kw"], 1000 * G * 0.5 * head / 0.75 / 1000, rtol=1e-12)
    np.testing.assert_allclose(st_["discharge_pressure_max_bar"], 1000 * G * head / 1e5,
                               rtol=1e-12)
    np.testing.assert_allclose(st_["suction_pressure_min_bar"], 0.0, atol=1e-12)
    np.testing.assert_allclose(st_["npsh_available_m"], 101325.0 / (1000 * G), rtol=1e-12)
    b = res.best
    assert b["head_loss_m"] == pytest.approx(level_gradient(0.5) * 60000.0, rel=1e-12)
    assert b["velocity_m_s"] == pytest.approx(0.5 / (math.pi * 0.09), rel=1e-12)


@pytest.mark.reference
@pytest.mark.parametrize("chosen", [(), (3,), (2, 7), (4, 6, 9)])
def test_telescoped_classes_equal_a_brute_force_over_every_assignment(chosen):
    # Flow 0.3 m3/s. Every one of the 2^12 assignments of class A (10 bar, 300 EUR/m) or B
    # (20 bar, 380 EUR/m) to the twelve 5 km stretches, priced by hand; the cheapest whose
    # every stretch holds its highest pressure rho g (H_segment - i (x - a)) (at its start,
    # Darcy-Weisbach with constant f) must be the telescoped one.
    study = level_study(4, flow="0.3 m^3/s")
    m = study.layout.model
    i = level_gradient(0.3)
    pts = [0, *chosen]
    bounds = [*pts, 12]
    pressure = np.zeros(12)
    for a, b in zip(bounds[:-1], bounds[1:], strict=True):
        head = i * 5000.0 * (b - a) + (20.0 if b == 12 else 0.0)
        for k in range(a, b):
            pressure[k] = 1000 * G * (head - i * 5000.0 * (k - a))
    combos = np.array(list(itertools.product((0, 1), repeat=12)))
    rating = np.where(combos == 0, 10e5, 20e5)
    cost = np.where(combos == 0, 300.0, 380.0).sum(axis=1) * 5000.0
    holds = np.all(pressure <= rating + 1e-3, axis=1)
    best = combos[holds][cost[holds].argmin()]
    lay = np.array([pts])
    classes, excess, _ = telescope(m, np.array([0]), lay, np.zeros((1, m.n_points - 1), int))
    lc, extra = evaluate_layouts(m, np.array([0]), classes, lay)
    assert np.all(excess <= 0)
    np.testing.assert_allclose(extra["stretch_pressure"][0], pressure, rtol=1e-12)
    np.testing.assert_array_equal(classes[0], best)
    assert lc.capex_pipe[0] == pytest.approx(cost[holds].min(), rel=1e-12)


@pytest.mark.reference
def test_a_line_without_boosters_by_hand():
    # no booster allowed, 0.3 m3/s: one station lifts i x 60 km + 20 m (13.8 bar at the head);
    # the classes and the EAC of the hand model of this file (hand_layouts)
    hand = hand_layouts(0, 300000.0, 400.0, q=0.3)
    res = level_study(0, flow="0.3 m^3/s").run()
    b = res.best
    assert b["pump_head_m"] == pytest.approx(level_gradient(0.3) * 60000.0 + 20.0, rel=1e-12)
    assert b["eac"] == pytest.approx(hand[()], rel=1e-9)
    # the pressure falls below 10 bar after (H - 10 bar / rho g) / i metres: class B up to the
    # stretch holding that point, class A beyond (5 km stretches)
    h0 = level_gradient(0.3) * 60000.0 + 20.0
    x_a = (h0 - 10e5 / (1000 * G)) / level_gradient(0.3)
    n_b = math.ceil(x_a / 5000.0)
    assert b["classes_along"] == f"600 B 0.0-{5.0 * n_b:.1f} km; 600 A {5.0 * n_b:.1f}-60.0 km"


@pytest.mark.reference
def test_a_booster_receives_its_suction_minimum_by_hand():
    # 0.45 m3/s; one booster allowed at 25 km only, which must receive 0.5 bar: the head
    # station lifts i x 25 km + 0.5 bar / (rho g); the booster the rest,
    # i x 35 km + 20 m - 0.5 bar / (rho g)
    # (the control rule of the contributor guide, Darcy-Weisbach with constant f, by hand)
    boosters = {"max_count": 1, "sites": ["25 km"], "fixed_cost": 1000.0, "life": 30,
                "suction_pressure_min": "0.5 bar"}
    res = level_study(boosters=boosters, flow="0.45 m^3/s").run()
    st_ = res.stations
    assert st_["chainage_m"].tolist() == [0.0, 25000.0]
    i, hs = level_gradient(0.45), 0.5e5 / (1000 * G)
    np.testing.assert_allclose(st_["head_max_m"], [i * 25000.0 + hs, i * 35000.0 + 20.0 - hs],
                               rtol=1e-12)
    assert st_["suction_pressure_min_bar"].iloc[1] == pytest.approx(0.5, rel=1e-12)
    assert st_["npsh_available_m"].iloc[1] == pytest.approx(hs + 101325.0 / (1000 * G),
                                                            rel=1e-12)   # ISO 2533 sea level


@pytest.mark.reference
def test_a_booster_held_at_its_npsh_required_plus_margin():
    # NPSH available = p_abs / (rho g) - p_v / (rho g) at the suction (ISO 9906 definition,
    # from memory): with NPSH required 12 m and a 1 m margin, the booster must receive
    # 13 m + (p_v - p_atm) / (rho g) of gauge head: at sea level p_atm 101,325 Pa (ISO 2533,
    # from memory) and p_v 2.3 kPa, 2.902 m. The head station's inlet is at 0.5 bar gauge
    # (10.1 m + 5.1 m available there); 0.45 m3/s. By hand: the head station lifts
    # i x 25 km + 2.902 m - 0.5 bar / (rho g), the booster i x 35 km + 20 m + 0.5 bar / (rho g)
    # - 2.902 m (the delivery is the static head above the inlet's head).
    boosters = {"max_count": 1, "sites": ["25 km"], "fixed_cost": 1000.0, "life": 30}
    res = level_study(boosters=boosters, flow="0.45 m^3/s",
                      line={"length": "60 km", "static_head": "20 m",
                            "suction_pressure": "0.5 bar"},
                      fluid={"kind": "custom", "density": "1000 kg/m^3", "viscosity": "1 mPa*s",
                             "vapour_pressure": "2.3 kPa"},
                      pumping={"efficiency": 0.75, "npsh_required": "12 m",
                               "npsh_margin": "1 m"}).run()
    st_ = res.stations
    rho_g = 1000 * G
    hs = 13.0 + (2300.0 - 101325.0) / rho_g
    assert hs == pytest.approx(2.902, abs=5e-4)
    i = level_gradient(0.45)
    assert st_["chainage_m"].tolist() == [0.0, 25000.0]
    assert st_["suction_pressure_min_bar"].iloc[1] * 1e5 / rho_g == pytest.approx(hs, rel=1e-12)
    assert st_["npsh_available_m"].iloc[1] == pytest.approx(13.0, rel=1e-12)
    h_in = 0.5e5 / rho_g
    assert st_["npsh_available_m"].iloc[0] == pytest.approx(h_in + (101325.0 - 2300.0) / rho_g,
                                                            rel=1e-12)
    np.testing.assert_allclose(st_["head_max_m"], [i * 25000.0 + hs - h_in,
                                                   i * 35000.0 + 20.0 + h_in - hs], rtol=1e-12)


def test_more_boosters_than_sites_is_refused():
    boosters = {"max_count": 3, "sites": ["10 km", "20 km"], "fixed_cost": 1.0}
    with pytest.raises(InputError, match=r"boosters\.max_count \(3\) exceeds the 2 "):
        level_study(boosters=boosters)
    with pytest.raises(InputError, match=r"boosters\.max_count: must be <= 10; got 12"):
        level_study(12)
    bad = {"max_count": 1, "sites": ["60 km"], "fixed_cost": 1.0}
    with pytest.raises(InputError, match=r"boosters\.sites: 60 km is not within the line"):
        level_study(boosters=bad)


def test_booster_cost_rules():
    with pytest.raises(InputError, match=r"boosters: give a booster's cost"):
        Boosters(2)
    with pytest.raises(InputError, match=r"boosters\.cost_exponent: give cost_coefficient"):
        Boosters(1, cost_coefficient=5000.0)
    b = Boosters(1, fixed_cost=1.0, cost_coefficient=2.0, cost_exponent=0.5,
                 standby_fraction=1.0)
    assert float(b.capital(8.0)) == pytest.approx(1.0 + 2.0 * 16.0**0.5)   # by hand


# ------------------------------------------------------------------------------------------
# laws of the control rule (DEVELOPERS.md, Long lines)
# ------------------------------------------------------------------------------------------
PROFILE_STUDY = None


def ridge_study() -> SizingStudy:
    global PROFILE_STUDY
    if PROFILE_STUDY is None:
        PROFILE_STUDY = SizingStudy.demo("longline")
    return PROFILE_STUDY


@settings(max_examples=25, deadline=None)
@given(pipe=st.integers(0, 8), first=st.sampled_from([None, 0, 1]), extra=st.integers(0, 1))
def test_another_booster_never_raises_any_pressure(pipe, first, extra):
    # the suction minimum is the line's own minimum here (no NPSH rule at the boosters), so
    # splitting a segment can only lower its discharge heads (law of the control rule)
    study = ridge_study()
    m = study.layout.model
    saved = m.suction_least
    m.suction_least = m.least.copy()
    try:
        sites = list(m.sites)
        base = [0] + ([] if first is None else [sites[first]])
        more = sorted(set(base) | {sites[extra]})
        n = max(len(base), len(more))
        lay = np.full((2, n), -1)
        lay[0, : len(base)] = base
        lay[1, : len(more)] = more
        p = np.array([pipe, pipe])
        classes = np.zeros((2, m.n_points - 1), dtype=int)
        _, extra_ = evaluate_layouts(m, p, classes, lay)
    finally:
        m.suction_least = saved
    assert np.all(extra_["stretch_pressure"][1] <= extra_["stretch_pressure"][0] + 1e-6)


@settings(max_examples=20, deadline=None)
@given(flow=st.floats(0.3, 0.7), count=st.integers(0, 4), seed=st.integers(0, 10**6))
def test_telescoping_never_costs_more_than_one_class_throughout(flow, count, seed):
    # equal bores: the classes do not change the hydraulics, so each stretch's cheapest
    # holding class is never dearer than the one class that holds everywhere (law)
    study = level_study(4, flow=f"{flow} m^3/s")
    m = study.layout.model
    rng = np.random.default_rng(seed)
    chosen = np.sort(rng.choice(m.sites, size=count, replace=False))
    lay = np.concatenate([[0], chosen])[None, :]
    classes, excess, _ = telescope(m, np.array([0]), lay, np.zeros((1, m.n_points - 1), int))
    lc, extra = evaluate_layouts(m, np.array([0]), classes, lay)
    if np.any(excess > 0):
        return  # no class holds somewhere: nothing to compare
    cost = lc.capex_pipe[0]
    for j in range(2):  # one class throughout, where it holds everywhere
        one = np.full_like(classes, j)
        lc1, e1 = evaluate_layouts(m, np.array([0]), one, lay)
        pfa = m.pfa[0, :, j]
        if np.all(e1["stretch_pressure"][0] <= pfa + 1e-6):
            assert cost <= lc1.capex_pipe[0] + 1e-6
