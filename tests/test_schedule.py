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
from scipy import optimize, sparse

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


@pytest.mark.reference
@pytest.mark.parametrize("seed", range(12))
def test_milp_equals_exhaustive_enumeration(seed):
    # brute force: enumerate_best tries every one of the 4^7 programmes (written here)
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


@pytest.mark.reference
@pytest.mark.parametrize("seed", range(12))
def test_heuristic_is_feasible_and_its_bound_holds(seed):
    # the optimum by exhaustive enumeration (written here) and the LP relaxation solved by
    # scipy.optimize.linprog, which bounds every programme (common practice)
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


@pytest.mark.reference
def test_lagrangian_bound_reaches_the_lp_relaxation():
    # at its minimum the Lagrangian dual of the budgets is the LP relaxation (each main's
    # "at most one year" has integral vertices: common practice, Fisher 1981)
    npv, capital, budget = instance(3, 300, 8)
    lp = lp_relaxation(npv, capital, budget)
    bound, lam = lagrangian_bound(npv, capital, budget, iterations=500, tolerance=1e-10)
    assert bound >= lp - 1e-7 * lp
    assert bound == pytest.approx(lp, rel=1e-6)
    assert np.all(lam >= 0)


@pytest.mark.slow
@pytest.mark.reference
def test_heuristic_gap_is_small_on_a_large_programme():
    rng = np.random.default_rng(1)
    m, w = 20_000, 10
    capital = rng.lognormal(np.log(8e4), 0.8, m)
    npv = (rng.normal(-0.3, 1.0, m) * capital)[:, None] * (1.0 - 0.03 * np.arange(w))[None, :]
    budget = np.full(w, 2.0e7)
    s = schedule_renewals(npv, capital, budget, method="heuristic")
    assert np.all(s.capital_by_year <= budget)
    assert s.gap < 0.01
    # the LP relaxation, solved here by scipy.optimize.linprog (HiGHS) on sparse rows, bounds
    # every programme from above (common practice in integer programming): the heuristic is
    # within 1 % of it, so within 1 % of the optimum, and its own bound is no tighter than it
    ok = (npv > 0) & (capital[:, None] <= budget[None, :])
    mains, years = np.nonzero(ok)
    k = mains.size
    rows = sparse.vstack([sparse.csr_array((np.ones(k), (mains, np.arange(k))), shape=(m, k)),
                          sparse.csr_array((capital[mains], (years, np.arange(k))),
                                           shape=(w, k))])
    lp = optimize.linprog(-npv[mains, years], A_ub=rows, b_ub=np.r_[np.ones(m), budget],
                          bounds=(0, 1), method="highs")
    assert lp.status == 0
    assert s.objective >= 0.99 * -lp.fun
    assert s.objective <= -lp.fun
    assert s.bound >= -lp.fun * (1 - 1e-6)


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


@pytest.mark.reference
def test_a_year_without_budget_and_a_main_too_dear():
    # by hand: year 0 has no budget and main 2 (500) fits no year, so mains 0 and 1 share
    # year 1 (20 of 100), NPV 15; exhaustive enumeration written here agrees
    npv = np.array([[10.0, 10.0], [5.0, 5.0], [50.0, 50.0]])
    capital = np.array([10.0, 10.0, 500.0])
    budget = np.array([0.0, 100.0])
    s = schedule_renewals(npv, capital, budget)
    assert s.year.tolist() == [1, 1, -1]
    assert s.capital_by_year.tolist() == [0.0, 20.0]
    assert s.objective == 15.0 == enumerate_best(npv, capital, budget)


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


def enumerate_programmes(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray):
    """Every programme within the budgets as (total NPV, years), best first (brute force)."""
    m, w = npv.shape
    out = []
    for choice in itertools.product(range(-1, w), repeat=m):
        spent = [sum(capital[i] for i in range(m) if choice[i] == a) for a in range(w)]
        if all(spent[a] <= budget[a] for a in range(w)):
            out.append((sum(npv[i, choice[i]] for i in range(m) if choice[i] >= 0), choice))
    return sorted(out, key=lambda item: -item[0])


@pytest.mark.reference
@pytest.mark.parametrize(("seed", "m"), [(s, m) for m in (3, 4, 5) for s in range(4)])
def test_tiny_register_schedule_is_the_enumerated_programme(seed, m):
    # a tiny register (3 to 5 mains, 3 years): the default method returns exactly the
    # programme found by trying every one of the (W + 1)^M choices in plain Python (brute
    # force, written here); the optimum is unique on these draws (checked below)
    rng = np.random.default_rng(100 + seed)
    capital = rng.uniform(20.0, 90.0, m).round(1)
    npv = rng.uniform(-30.0, 80.0, (m, 3)).round(2)
    budget = rng.uniform(40.0, 120.0, 3).round(1)
    ranked = enumerate_programmes(npv, capital, budget)
    best_value, best_years = ranked[0]
    assert len(ranked) == 1 or ranked[1][0] < best_value - 1e-6   # a unique optimum
    s = schedule_renewals(npv, capital, budget, mip_gap=0.0)
    assert tuple(s.year.tolist()) == best_years
    assert s.objective == pytest.approx(best_value, rel=1e-12)
    spent = [sum(capital[i] for i in range(m) if best_years[i] == a) for a in range(3)]
    np.testing.assert_allclose(s.capital_by_year, spent, rtol=1e-12)


@pytest.mark.reference
@pytest.mark.parametrize("seed", range(6))
def test_one_year_bound_is_dantzigs_fractional_knapsack(seed):
    # one year and one budget: the LP relaxation is the fractional knapsack, solved by taking
    # the items in decreasing NPV per unit of capital and a fraction of the first that does not
    # fit (G. B. Dantzig, "Discrete-variable extremum problems", Operations Research 5(2),
    # 266-288, 1957); written here in plain Python
    rng = np.random.default_rng(seed)
    m = 25
    capital = rng.uniform(10.0, 60.0, m)
    npv = rng.uniform(-20.0, 100.0, (m, 1))
    budget = np.array([float(capital.sum()) * 0.3])
    items = sorted(((npv[i, 0], capital[i]) for i in range(m) if npv[i, 0] > 0),
                   key=lambda vc: -vc[0] / vc[1])
    left, dantzig = budget[0], 0.0
    for value, cost in items:
        take = min(1.0, left / cost)
        dantzig += take * value
        left -= take * cost
        if take < 1.0:
            break
    bound, _ = lagrangian_bound(npv, capital, budget, iterations=500, tolerance=1e-12)
    assert bound == pytest.approx(dantzig, rel=1e-8)
