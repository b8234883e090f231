"""Tests of pipeopt.schedule: the budgeted choice of a renewal year for each main.

References outside the code under test: exhaustive enumeration of every programme, written
here (itertools.product over "no renewal" or a year for each main); the linear-programming
relaxation solved here with scipy.optimize.linprog, which bounds every programme from above
(common practice in integer programming: a relaxation bounds the integer optimum).
"""

from __future__ import annotations

import itertools

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import optimize

from pipeopt.errors import InputError
from pipeopt.schedule import lagrangian_bound, schedule_renewals


def enumerate_best(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray) -> float:
    """The best total NPV over every programme that keeps each year within its budget."""
    m, w = npv.shape
    best = 0.0
    for choice in itertools.product(range(-1, w), repeat=m):
        c = np.array(choice)
        on = c >= 0
        spent = np.bincount(c[on], weights=capital[on], minlength=w)
        if np.all(spent <= budget):
            best = max(best, float(npv[np.flatnonzero(on), c[on]].sum()))
    return best


def instance(seed: int, m: int, w: int):
    rng = np.random.default_rng(seed)
    capital = rng.integers(20, 100, m).astype(float)
    # NPV by year: some mains pay from now, some only later, some never
    npv = rng.normal(0.3, 1.0, (m, 1)) * capital[:, None] + rng.normal(0, 15, (m, w))
    budget = rng.integers(60, 160, w).astype(float)
    return npv, capital, budget


def lp_relaxation(npv, capital, budget) -> float:
    m, w = npv.shape
    ok = (npv > 0) & (capital[:, None] <= budget[None, :])
    mains, years = np.nonzero(ok)
    a = np.zeros((m + w, mains.size))
    a[mains, np.arange(mains.size)] = 1.0
    a[m + years, np.arange(mains.size)] = capital[mains]
    res = optimize.linprog(-npv[mains, years], A_ub=a, b_ub=np.r_[np.ones(m), budget],
                           bounds=(0, 1), method="highs")
    return -res.fun


@pytest.mark.parametrize("seed", range(12))
def test_milp_equals_exhaustive_enumeration(seed):
    npv, capital, budget = instance(seed, 7, 3)
    best = enumerate_best(npv, capital, budget)
    s = schedule_renewals(npv, capital, budget, method="milp", mip_gap=0.0)
    assert s.optimal and s.method == "milp"
    assert s.objective == pytest.approx(best, rel=1e-12, abs=1e-9)
    # never over a year's budget, at most one year per main, only paying pairs
    spent = np.bincount(s.year[s.year >= 0], weights=capital[s.year >= 0], minlength=3)
    assert np.all(spent <= budget)
    np.testing.assert_array_equal(spent, s.capital_by_year)
    assert np.all(npv[np.flatnonzero(s.year >= 0), s.year[s.year >= 0]] > 0)


@pytest.mark.parametrize("seed", range(12))
def test_heuristic_is_feasible_and_its_bound_holds(seed):
    npv, capital, budget = instance(seed, 7, 3)
    best = enumerate_best(npv, capital, budget)
    lp = lp_relaxation(npv, capital, budget)
    s = schedule_renewals(npv, capital, budget, method="heuristic")
    spent = np.bincount(s.year[s.year >= 0], weights=capital[s.year >= 0], minlength=3)
    assert np.all(spent <= budget)
    assert s.objective <= best + 1e-9
    # the bound is above the optimum, and no tighter than the LP relaxation can be
    assert s.bound >= best - 1e-9
    assert s.bound >= lp - 1e-6 * abs(lp)
    assert s.gap == pytest.approx((s.bound - s.objective) / s.bound, rel=1e-12, abs=1e-15)


def test_lagrangian_bound_reaches_the_lp_relaxation():
    # at its minimum the Lagrangian dual of the budgets is the LP relaxation (each main's
    # "at most one year" has integral vertices: common practice, Fisher 1981)
    npv, capital, budget = instance(3, 300, 8)
    lp = lp_relaxation(npv, capital, budget)
    bound, lam = lagrangian_bound(npv, capital, budget, iterations=500, tolerance=1e-10)
    assert bound >= lp - 1e-7 * lp
    assert bound == pytest.approx(lp, rel=1e-6)
    assert np.all(lam >= 0)


def test_heuristic_gap_is_small_on_a_large_programme():
    rng = np.random.default_rng(1)
    m, w = 20_000, 10
    capital = rng.lognormal(np.log(8e4), 0.8, m)
    npv = (rng.normal(-0.3, 1.0, m) * capital)[:, None] * (1.0 - 0.03 * np.arange(w))[None, :]
    budget = np.full(w, 2.0e7)
    s = schedule_renewals(npv, capital, budget, method="heuristic")
    assert np.all(s.capital_by_year <= budget)
    assert s.gap < 0.01
    assert s.objective > 0


@settings(max_examples=60, deadline=None)
@given(st.integers(0, 10_000), st.integers(1, 9), st.integers(1, 4),
       st.sampled_from(["milp", "heuristic"]))
def test_never_over_budget(seed, m, w, method):
    npv, capital, budget = instance(seed, m, w)
    s = schedule_renewals(npv, capital, budget, method=method)
    on = s.year >= 0
    spent = np.bincount(s.year[on], weights=capital[on], minlength=w)
    assert np.all(spent <= budget)
    assert s.year.shape == (m,) and np.all(s.year < w)
    assert s.objective == pytest.approx(float(npv[np.flatnonzero(on), s.year[on]].sum()))


def test_a_year_without_budget_and_a_main_too_dear():
    npv = np.array([[10.0, 10.0], [5.0, 5.0], [50.0, 50.0]])
    capital = np.array([10.0, 10.0, 500.0])
    s = schedule_renewals(npv, capital, np.array([0.0, 100.0]))
    assert s.year.tolist() == [1, 1, -1]
    assert s.capital_by_year.tolist() == [0.0, 20.0]


def test_nothing_pays():
    s = schedule_renewals(-np.ones((3, 2)), np.ones(3), np.ones(2))
    assert s.year.tolist() == [-1, -1, -1] and s.objective == 0.0 and s.pairs == 0


def test_errors():
    with pytest.raises(InputError, match="npv must be"):
        schedule_renewals(np.ones(3), np.ones(3), np.ones(1))
    with pytest.raises(InputError, match="capital must be positive"):
        schedule_renewals(np.ones((1, 1)), np.zeros(1), np.ones(1))
    with pytest.raises(InputError, match="method must be one of"):
        schedule_renewals(np.ones((1, 1)), np.ones(1), np.ones(1), method="greedy")
