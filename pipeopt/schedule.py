"""A renewal programme under yearly budgets (model layer): which main in which year.

Given the NPV of renewing each main i in each planned year of action a (against keeping it)
and its capital C_i, choose at most one year for each main so as to maximise the total NPV
without spending more than the budget B_a of any year:

.. math:: \\max \\sum_{i,a} V_{ia} x_{ia} \\quad \\text{s.t.} \\quad \\sum_a x_{ia} \\le 1,
          \\quad \\sum_i C_i x_{ia} \\le B_a, \\quad x_{ia} \\in \\{0, 1\\}

Only pairs with V_ia > 0 and C_i <= B_a can be in an optimum, so only those are variables.

Two methods:

``"milp"``
    :func:`scipy.optimize.milp` (HiGHS branch and cut), exact up to its relative gap
    tolerance; its dual bound is reported.
``"heuristic"``
    For programmes too large for the MILP. The budgets are relaxed with multipliers
    λ_a >= 0 (Lagrangian relaxation): for any λ,
    L(λ) = Σ_a λ_a B_a + Σ_i max(0, max_a (V_ia − λ_a C_i)) is an upper bound on the optimum,
    and its minimum over λ equals the bound of the linear-programming relaxation (each main's
    choice of at most one year has integral vertices). L is minimised by Kelley's
    cutting-plane method, each cut from one vectorized evaluation over all mains. A feasible
    programme is then built in rounds: every unplaced main proposes the year that is best for
    it at the prices λ (V_ia − λ_a C_i, among the years still open to it); each year accepts
    proposals in order of NPV per unit of capital while its budget lasts; a main that no
    longer fits a year's remaining budget crosses that year off. The gap to the bound is
    reported.

Neither method ever spends more than a year's budget: the spending of every year is summed
again from the chosen mains and, should a solver tolerance have let a year run over by a
rounding, the lowest-ranked mains of that year are dropped until it fits.

References
----------
.. [1] J. E. Kelley, "The cutting-plane method for solving convex programs", J. SIAM 8(4),
   703–712, 1960.
.. [2] M. L. Fisher, "The Lagrangian relaxation method for solving integer programming
   problems", Management Science 27(1), 1–18, 1981.
.. [3] Q. Huangfu, J. A. J. Hall, "Parallelizing the dual revised simplex method", Math. Prog.
   Comp. 10, 119–142, 2018 (HiGHS).
"""

from __future__ import annotations

import contextlib
import os
import sys
from collections.abc import Iterator
from dataclasses import dataclass

import numpy as np
from scipy import optimize, sparse

from .errors import InputError

__all__ = ["Schedule", "schedule_renewals", "lagrangian_bound", "METHODS"]

METHODS = ("auto", "milp", "heuristic")


@dataclass
class Schedule:
    """A budgeted renewal programme.

    Attributes
    ----------
    year : ndarray (M,) of int
        Planned year of action of each main (0 = now), −1 when it is not renewed.
    objective : float
        Total NPV of the renewals chosen [currency].
    bound : float
        An upper bound on the best total NPV [currency].
    gap : float
        (bound − objective) / bound [-]; within the MILP's tolerance when ``optimal``.
    method : str
        ``"milp"`` or ``"heuristic"``.
    optimal : bool
        True when the programme is proved optimal within the solver's tolerance.
    message : str
        What the solver said, in words.
    pairs : int
        Candidate (main, year) pairs: positive NPV and capital within the year's budget.
    capital_by_year : ndarray (W,)
        Capital spent in each planned year [currency].
    """

    year: np.ndarray
    objective: float
    bound: float
    gap: float
    method: str
    optimal: bool
    message: str
    pairs: int
    capital_by_year: np.ndarray


def _check(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray) -> None:
    if npv.ndim != 2 or capital.shape != (npv.shape[0],) or budget.shape != (npv.shape[1],):
        raise InputError(f"npv must be (mains, years), capital (mains,) and budget (years,); "
                         f"got {npv.shape}, {capital.shape} and {budget.shape}")
    if not np.all(np.isfinite(npv)):
        raise InputError("npv must be finite")
    if not (np.all(np.isfinite(capital)) and np.all(capital > 0)):
        raise InputError("capital must be positive for every main")
    if not (np.all(np.isfinite(budget)) and np.all(budget >= 0)):
        raise InputError("budget must be >= 0 in every year")


def _values(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray) -> np.ndarray:
    """V with −inf where a pair cannot be in an optimum (NPV <= 0 or capital over budget)."""
    ok = (npv > 0) & (capital[:, None] <= budget[None, :])
    return np.where(ok, npv, -np.inf)


def _dual(lam: np.ndarray, values: np.ndarray, capital: np.ndarray,
          budget: np.ndarray) -> tuple[float, np.ndarray]:
    """L(λ) and a subgradient: B − the capital each year would get at prices λ."""
    adjusted = values - lam[None, :] * capital[:, None]
    best = np.argmax(adjusted, axis=1)
    gain = adjusted[np.arange(values.shape[0]), best]
    pick = gain > 0
    total = float(lam @ budget) + float(gain[pick].sum())
    spend = np.bincount(best[pick], weights=capital[pick], minlength=budget.size)
    return total, budget - spend


def lagrangian_bound(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray,
                     iterations: int = 300, tolerance: float = 1e-6) -> tuple[float, np.ndarray]:
    """Upper bound on the best programme: the Lagrangian dual of the budgets, minimised.

    Parameters
    ----------
    npv : ndarray (M, W)
        NPV of renewing main i in year a [currency].
    capital : ndarray (M,)
        Capital of renewing each main [currency], > 0.
    budget : ndarray (W,)
        Budget of each year [currency], >= 0.
    iterations : int
        Most cutting planes.
    tolerance : float
        Stop when the bound is within this fraction of the cutting-plane model's minimum.

    Returns
    -------
    bound : float
        The least L(λ) found [currency]: an upper bound on the optimum, and at the minimum the
        bound of the linear-programming relaxation.
    multipliers : ndarray (W,)
        The λ of that bound [currency of NPV per currency of capital].

    Examples
    --------
    Two mains, one year, a budget for one of them: the LP relaxation takes all of the better
    ratio (10 per 1) and half of the other (6 per 2 → 3 of its 6).

    >>> b, lam = lagrangian_bound(np.array([[10.0], [6.0]]), np.array([1.0, 2.0]),
    ...                           np.array([2.0]))
    >>> round(b, 9), round(float(lam[0]), 9)
    (13.0, 3.0)
    """
    npv = np.asarray(npv, dtype=float)
    capital = np.asarray(capital, dtype=float)
    budget = np.asarray(budget, dtype=float)
    _check(npv, capital, budget)
    values = _values(npv, capital, budget)
    w = budget.size
    ratio = np.where(np.isfinite(values), values / capital[:, None], 0.0)
    # beyond the best NPV per unit of capital no main wants a year: λ never needs to be higher
    top = np.maximum(ratio.max(axis=0, initial=0.0), 0.0)
    lam = np.zeros(w)
    best_value, g = _dual(lam, values, capital, budget)
    best_lam = lam.copy()
    cuts_a, cuts_b = [], []
    bounds = [(0.0, float(u)) for u in top] + [(None, None)]
    cost = np.zeros(w + 1)
    cost[-1] = 1.0
    value = best_value
    for _ in range(iterations):
        # cut: z >= L(λk) + g·(λ − λk), written −z + g·λ <= g·λk − L(λk)
        cuts_a.append(np.concatenate([g, [-1.0]]))
        cuts_b.append(float(g @ lam) - value)
        lp = optimize.linprog(cost, A_ub=np.array(cuts_a), b_ub=np.array(cuts_b), bounds=bounds,
                              method="highs")
        if lp.status != 0:
            break
        model = float(lp.fun)
        if best_value - model <= tolerance * max(1.0, abs(best_value)):
            break
        lam = np.clip(lp.x[:w], 0.0, top)
        value, g = _dual(lam, values, capital, budget)
        if value < best_value:
            best_value, best_lam = value, lam.copy()
    return best_value, best_lam


def _groupwise_cumsum(group: np.ndarray, amount: np.ndarray) -> np.ndarray:
    """Running sum of ``amount`` within runs of equal ``group`` (already sorted by group)."""
    total = np.cumsum(amount)
    first = np.ones(group.size, dtype=bool)
    first[1:] = group[1:] != group[:-1]
    run = np.cumsum(first) - 1
    return total - (total - amount)[first][run]


def _first_fit(years: np.ndarray, cap: np.ndarray, budget: np.ndarray) -> np.ndarray:
    """First-fit in the given order within each year: accept an item if it still fits.

    ``years`` and ``cap`` are sorted by year, then by priority. Each pass accepts, in every
    year at once, the longest run of items that fits the budget left, after dropping the items
    that no longer fit even alone: the same as taking the items one by one.
    """
    accept = np.zeros(years.size, dtype=bool)
    live = np.ones(years.size, dtype=bool)
    left = budget.astype(float).copy()
    while True:
        # a hair under the budget, so that summing a year again in another order cannot run
        # over it by a rounding
        live &= cap <= left[years] - 1e-12 * budget[years]
        idx = np.flatnonzero(live)
        if idx.size == 0:
            return accept
        ok = (_groupwise_cumsum(years[idx], cap[idx])
              <= left[years[idx]] - 1e-12 * budget[years[idx]])
        took = idx[ok]
        accept[took] = True
        live[took] = False
        left -= np.bincount(years[took], weights=cap[took], minlength=budget.size)


def _heuristic(values: np.ndarray, capital: np.ndarray, budget: np.ndarray,
               lam: np.ndarray) -> np.ndarray:
    """A feasible programme by deferred acceptance at the prices λ (see module notes).

    Each round, every main without a year proposes to the open year that is best for it at
    prices λ; each year takes, from the mains it holds and the new proposals, the best by NPV
    per unit of capital that fit its budget (first fit); a main turned away crosses that year
    off. Each main proposes to each year at most once, so the rounds end.
    """
    m, _ = values.shape
    open_year = np.isfinite(values)
    year = np.full(m, -1, dtype=np.int64)
    ratio = np.where(open_year, values / capital[:, None], -np.inf)
    adjusted = np.where(open_year, values - lam[None, :] * capital[:, None], -np.inf)
    while True:
        free = np.flatnonzero((year < 0) & open_year.any(axis=1))
        if free.size == 0:
            return year
        held = np.flatnonzero(year >= 0)
        pick = np.argmax(np.where(open_year[free], adjusted[free], -np.inf), axis=1)
        mains = np.concatenate([held, free])
        years = np.concatenate([year[held], pick])
        # by year, then NPV per unit of capital (highest first), then register order
        order = np.lexsort((mains, -ratio[mains, years], years))
        mains, years = mains[order], years[order]
        accept = _first_fit(years, capital[mains], budget)
        year[mains[accept]] = years[accept]
        out = ~accept
        year[mains[out]] = -1
        open_year[mains[out], years[out]] = False


def _total(values: np.ndarray, year: np.ndarray) -> float:
    """Total NPV of a programme (mains in register order)."""
    chosen = np.flatnonzero(year >= 0)
    return float(values[chosen, year[chosen]].sum())


def _fit_budgets(year: np.ndarray, values: np.ndarray, capital: np.ndarray,
                 budget: np.ndarray) -> tuple[np.ndarray, int]:
    """Drop the lowest-ranked mains of any year that runs over its budget; count the drops."""
    year = year.copy()
    chosen = np.flatnonzero(year >= 0)
    spent = np.bincount(year[chosen], weights=capital[chosen], minlength=budget.size)
    over = spent > budget
    if not over.any():
        return year, 0
    idx = chosen[over[year[chosen]]]
    yrs = year[idx]
    ratio = values[idx, yrs] / capital[idx]
    order = np.lexsort((-idx, ratio, yrs))            # lowest ratio first within each year
    idx, yrs = idx[order], yrs[order]
    removed = _groupwise_cumsum(yrs, capital[idx])
    # drop until the capital removed covers the excess of the year
    drop = (removed - capital[idx]) < (spent - budget)[yrs]
    year[idx[drop]] = -1
    return year, int(drop.sum())


@contextlib.contextmanager
def _quiet_stdout() -> Iterator[None]:
    """Send the process's standard output (file descriptor 1) to the null device meanwhile.

    HiGHS may print diagnostics there from its C++ core whatever its display option says; a
    programme's printed summary must not be interleaved with them.
    """
    sys.stdout.flush()
    saved = os.dup(1)
    try:
        with open(os.devnull, "wb") as null:
            os.dup2(null.fileno(), 1)
        yield
    finally:
        os.dup2(saved, 1)
        os.close(saved)


def _milp(values: np.ndarray, capital: np.ndarray, budget: np.ndarray, time_limit: float,
          mip_gap: float, node_limit: int):
    """Solve the programme with HiGHS; returns (year, bound, optimal, message) or None."""
    m, w = values.shape
    mains, years = np.nonzero(np.isfinite(values))
    k = mains.size
    v = values[mains, years]
    per_main = np.bincount(mains, minlength=m)
    several = per_main[mains] > 1                      # a main with one pair needs no row
    row_of = np.cumsum(per_main > 1) - 1
    a_main = sparse.csr_array((np.ones(int(several.sum())),
                               (row_of[mains[several]], np.flatnonzero(several))),
                              shape=(int((per_main > 1).sum()), k))
    # budget rows scaled by the budget: Σ (C_i / B_a) x <= 1
    a_budget = sparse.csr_array((capital[mains] / budget[years], (years, np.arange(k))),
                                shape=(w, k))
    constraints = [optimize.LinearConstraint(a_budget, -np.inf, 1.0)]
    if a_main.shape[0]:
        constraints.append(optimize.LinearConstraint(a_main, -np.inf, 1.0))
    with _quiet_stdout():
        res = optimize.milp(-v, integrality=np.ones(k), bounds=optimize.Bounds(0.0, 1.0),
                            constraints=constraints,
                            options={"time_limit": float(time_limit),
                                     "node_limit": int(node_limit),
                                     "mip_rel_gap": float(mip_gap), "disp": False})
    if res.x is None:
        return None, res
    year = np.full(m, -1, dtype=np.int64)
    on = res.x > 0.5
    year[mains[on]] = years[on]
    return year, res


def schedule_renewals(npv: np.ndarray, capital: np.ndarray, budget: np.ndarray,
                      method: str = "auto", time_limit: float = 120.0, mip_gap: float = 1e-4,
                      max_pairs: int = 5_000, node_limit: int = 5_000) -> Schedule:
    """Choose the year of renewal of each main (or none) to maximise NPV within yearly budgets.

    Parameters
    ----------
    npv : ndarray (M, W)
        NPV of renewing main i in planned year a against keeping it [currency].
    capital : ndarray (M,)
        Capital of renewing each main, spent in its year [currency], > 0.
    budget : ndarray (W,)
        Capital budget of each planned year [currency], >= 0.
    method : {"auto", "milp", "heuristic"}
        ``"auto"``: the MILP when there are at most ``max_pairs`` candidate pairs, else the
        heuristic.
    time_limit : float
        Seconds the MILP may take; at the limit its best programme is kept (compared with the
        heuristic's) and the gap reported [s]. A safety net: a programme stopped by the clock
        may differ from run to run; ``node_limit`` stops it the same way every time.
    mip_gap : float
        Relative gap at which the MILP stops [-].
    max_pairs : int
        Largest number of candidate pairs given to the MILP with ``"auto"``. Knapsack-like
        programmes close their gap slowly in branch and cut (on thousands of pairs, HiGHS may
        take minutes to improve on the heuristic by a tenth of a per cent), hence the
        modest default.
    node_limit : int
        Branch-and-bound nodes the MILP may explore.

    Returns
    -------
    Schedule

    Examples
    --------
    Three mains, two years, 100 a year: the best two cannot share a year.

    >>> npv = np.array([[50.0, 45.0], [40.0, 38.0], [10.0, 9.0]])
    >>> s = schedule_renewals(npv, np.array([80.0, 70.0, 40.0]), np.array([100.0, 100.0]))
    >>> s.year.tolist(), s.objective, s.method
    ([0, 1, -1], 88.0, 'milp')
    """
    npv = np.asarray(npv, dtype=float)
    capital = np.asarray(capital, dtype=float)
    budget = np.asarray(budget, dtype=float)
    _check(npv, capital, budget)
    if method not in METHODS:
        raise InputError(f"method must be one of {', '.join(METHODS)}; got {method!r}")
    m, w = npv.shape
    # only mains with a candidate year take part; the others are never renewed
    full = _values(npv, capital, budget)
    keep = np.flatnonzero(np.isfinite(full).any(axis=1))
    values, npv, capital = full[keep], npv[keep], capital[keep]
    pairs = int(np.isfinite(values).sum())
    if pairs == 0:
        return Schedule(np.full(m, -1, dtype=np.int64), 0.0, 0.0, 0.0, "milp", True,
                        "no main has a positive NPV within a year's budget: nothing to renew",
                        0, np.zeros(w))
    use_milp = method == "milp" or (method == "auto" and pairs <= max_pairs)
    year = None
    notes = []
    optimal = False
    bound = np.inf
    used = "heuristic"
    if use_milp:
        year, res = _milp(values, capital, budget, time_limit, mip_gap, node_limit)
        if year is not None:
            used = "milp"
            optimal = res.status == 0
            bound = -float(res.mip_dual_bound) if res.mip_dual_bound is not None else np.inf
            notes.append("MILP (HiGHS): " + ("optimal within a relative gap of "
                                             f"{mip_gap:g}" if optimal else
                                             f"stopped ({res.message.strip()})"))
        else:
            notes.append(f"MILP (HiGHS) found no programme ({res.message.strip()}); heuristic "
                         f"used")
    if year is None or not optimal:
        lbound, lam = lagrangian_bound(npv, capital, budget)
        guess = _heuristic(values, capital, budget, lam)
        bound = min(bound, lbound)
        if year is None or _total(values, guess) > _total(values, year):
            year, used = guess, "heuristic"
            notes.append("Lagrangian heuristic, bound from the LP relaxation (Lagrangian dual)")
    year, dropped = _fit_budgets(year, values, capital, budget)
    if dropped:
        notes.append(f"{dropped} main(s) dropped to keep every year within its budget")
        optimal = False
    chosen = np.flatnonzero(year >= 0)
    objective = _total(values, year)
    if optimal:
        bound = max(bound, objective) if np.isfinite(bound) else objective
    gap = 0.0 if bound <= 0 else max(0.0, (bound - objective) / bound)
    spent = np.bincount(year[chosen], weights=capital[chosen], minlength=w)
    every = np.full(m, -1, dtype=np.int64)
    every[keep] = year
    return Schedule(every, objective, float(bound), float(gap), used, bool(optimal),
                    "; ".join(notes), pairs, spent)
