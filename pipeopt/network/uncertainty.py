"""Uncertainty of a network design's life-cycle cost (study layer): Monte Carlo of fixed designs.

The design of a network is found once, at the study's own inputs; :func:`monte_carlo` then
asks how its life-cycle cost, and that of a few runner-up designs, spread when the named
inputs (:data:`~pipeopt.network.lifecycle.NETWORK_INPUTS`, a subset of
:data:`pipeopt.variations.INPUTS`) vary: ``energy_price``, ``escalation``, ``demand_charge``,
``discount_rate``, ``horizon``, ``efficiency``, ``growth``, ``flow_factor`` (every node's
demand), ``hours_factor``, ``pipe_cost_factor`` and ``station_cost_factor``.

The runner-up designs are the cheapest feasible designs one size step from the chosen one
(one pipe a size up or down). Every sample uses its own inputs and its own horizon: where the
demands vary (``flow_factor``, ``growth``), the hydraulics of every design are solved at that
sample's demands in every year and duty point (the pumped source again lifting just enough),
and a design is infeasible in a sample when a node's pressure or a velocity limit fails in a
year within the sample's horizon. The money is
:func:`~pipeopt.network.lifecycle.life_cycle` with :class:`~pipeopt.variations.Variations`.

The checks are those of :mod:`pipeopt.uncertainty`: 2 to ``MAX_SAMPLES`` samples, at most
``MAX_CELLS`` samples × designs, a seed from 0 to 2**63 − 1, distributions with ``ppf`` or
``rvs`` (pipeopt's own or frozen scipy.stats ones), input names of a network, every sampled
value against its input's rule (a sampled horizon rounded to whole years). The same seed gives
the same results.

A study file asks for it with ``[uncertainty]`` (``samples``, ``seed``, ``designs`` and one
distribution table per input, as in a sizing study); :meth:`NetworkStudy.run` then runs it
after the design and attaches it to the result.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from ..errors import InputError
from ..results import StudyResult
from ..uncertainty import draw_samples, read_uncertainty_section
from ..variations import Variations
from . import design as ds
from .lifecycle import NETWORK_INPUTS, life_cycle

__all__ = ["monte_carlo", "NetworkMonteCarloResult", "read_network_uncertainty",
           "runner_up_designs", "MAX_DESIGNS", "MAX_CASES"]

#: The most designs (the chosen one and its runners-up) a Monte Carlo compares.
MAX_DESIGNS = 20
#: Hydraulic cases (designs × samples × years × duty points) solved in one batch.
MAX_CASES = 20_000
#: Samples priced in one batch (the yearly arrays of a batch: samples × designs × years).
_MONEY_CHUNK = 20_000


def check_network_input(name: Any) -> str:
    """Refuse a name that is no named input of a network, naming the valid ones."""
    if not isinstance(name, str) or name not in NETWORK_INPUTS:
        raise InputError(f"unknown network input {name!r}; inputs: {', '.join(NETWORK_INPUTS)}")
    return name


def read_network_uncertainty(data: Any, study: Any = None) -> dict[str, Any]:
    """Read a network's ``[uncertainty]`` table: ``samples``, ``seed``, ``designs`` and one
    distribution table per named input (as in a sizing study). Example::

        [uncertainty]
        samples = 2000
        seed = 7
        designs = 3                  # the chosen design and two runners-up
        energy_price = { distribution = "triangular", low = 0.10, mode = 0.14, high = 0.22 }
        flow_factor = { distribution = "normal", mean = 1.0, sd = 0.1, low = 0.7, high = 1.3 }
    """
    from ..studyfile import Section, StudyFileError

    if not isinstance(data, dict):
        raise StudyFileError("uncertainty: expected a table ([uncertainty])")
    for name in data:
        if name not in ("samples", "seed", "designs"):
            try:
                check_network_input(name)
            except InputError as exc:
                raise StudyFileError(f"uncertainty.{name}: {exc}") from None
    designs = Section({"designs": data["designs"]} if "designs" in data else {},
                      "uncertainty", ("designs",)).number("designs", 3, low=1, high=MAX_DESIGNS,
                                                          integer=True)
    rest = {k: v for k, v in data.items() if k != "designs"}
    out = read_uncertainty_section(rest, "sizing")
    if not out["distributions"]:
        raise StudyFileError("uncertainty: give at least one input distribution, e.g. "
                             "energy_price = { distribution = \"uniform\", low = 0.1, "
                             "high = 0.2 }")
    if study is not None and not study.pumped:
        raise StudyFileError("uncertainty: a gravity-fed network costs its pipe capital only; "
                             "the Monte Carlo of a network's life-cycle cost needs a pumped "
                             "source")
    out["designs"] = int(designs)
    return out


# --------------------------------------------------------------------------------------------
# samples
# --------------------------------------------------------------------------------------------
# --------------------------------------------------------------------------------------------
# the designs compared
# --------------------------------------------------------------------------------------------
def runner_up_designs(problem: ds.DesignProblem, choice: Any, count: int
                      ) -> tuple[np.ndarray, np.ndarray]:
    """The chosen design and the cheapest feasible designs one size step from it.

    Parameters
    ----------
    problem : DesignProblem
    choice : array_like of int, shape (Nd,)
        The chosen design (option indices).
    count : int
        Designs wanted, the chosen one included.

    Returns
    -------
    choices : ndarray of int, shape (B, Nd)
        The chosen design first, then its runners-up by cost (B <= count).
    costs : ndarray, shape (B,)
        Their objective at the study's own inputs [currency].
    """
    pr = problem
    c = np.asarray(choice, dtype=np.int64)
    nd = pr.n_design
    moves = []
    for step in (1, -1):  # every pipe one allowed size up, then down
        ranks = np.cumsum(pr.allowed, axis=1) - 1                            # (Nd, M)
        allowed_idx = [np.flatnonzero(row) for row in pr.allowed]
        for p in range(nd):
            r = int(ranks[p, c[p]]) + step
            if 0 <= r < allowed_idx[p].size:
                cand = c.copy()
                cand[p] = allowed_idx[p][r]
                moves.append(cand)
    base = ds.evaluate(pr, c[None])
    if count <= 1 or not moves:
        return c[None], base.cost
    nb = ds.evaluate(pr, np.array(moves))
    order = [k for k in np.argsort(nb.cost, kind="stable") if nb.feasible[k]][:count - 1]
    return (np.concatenate([c[None], np.array(moves)[order]]),
            np.concatenate([base.cost, nb.cost[order]]))


def _label(study: Any, chosen: np.ndarray, design: np.ndarray) -> str:
    pr = study.problem
    if np.array_equal(chosen, design):
        return "chosen"
    k = int(np.flatnonzero(chosen != design)[0])
    pipe = pr.graph.pipe_names[pr.design[k]]
    names = [o.name for o in study.options]
    return f"{pipe} {names[design[k]]} (not {names[chosen[k]]})"


# --------------------------------------------------------------------------------------------
# the result
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class NetworkMonteCarloResult(StudyResult):
    """Monte Carlo of a network's chosen design and its runners-up.

    Attributes
    ----------
    n, seed : int
        Samples and seed.
    inputs : pandas.DataFrame
        The sampled inputs, one column per input.
    pv : numpy.ndarray, shape (n, B)
        Life-cycle cost (present value) of every design in every sample [currency].
    feasible : numpy.ndarray of bool, shape (n, B)
        Every node's pressure and every velocity limit held in the sample's years.
    designs : pandas.DataFrame
        Per design: ``design`` (``chosen``, or the pipe and size that differ), ``pv_base`` (at
        the study's own inputs), ``pv_mean``, quantiles ``pv_p05`` … ``pv_p95``,
        ``prob_cheapest`` (the cheapest feasible of the designs), ``prob_infeasible`` and
        ``expected_regret`` (mean PV above the cheapest feasible design, over the samples
        where the design is feasible).
    correlation : pandas.DataFrame
        Spearman rank correlation of each input with the chosen design's PV.
    """

    n: int
    seed: int
    inputs: pd.DataFrame
    pv: np.ndarray = field(repr=False)
    feasible: np.ndarray = field(repr=False)
    designs: pd.DataFrame = field(repr=False)
    correlation: pd.DataFrame = field(default_factory=pd.DataFrame, repr=False)
    currency: str = ""
    success: bool = True
    message: str = ""

    def headline(self) -> str:
        top = self.designs.iloc[0]
        return (f"{self.n} samples (seed {self.seed}); chosen design PV p50 "
                f"{top['pv_p50']:,.0f}, cheapest of {len(self.designs)} designs in "
                f"{top['prob_cheapest']:.1%}")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Monte Carlo of the designs": self.designs,
                "Rank correlation": self.correlation}

    def text(self) -> str:
        cur = self.currency or "currency"
        w = max(12, *(len(d) for d in self.designs["design"]))
        lines = [f"Monte Carlo of the life-cycle cost: {self.n} samples (seed {self.seed}) of "
                 f"{len(self.inputs.columns)} input(s); PV in {cur}",
                 f"{'design':<{w}}{'PV p05':>13}{'p50':>13}{'p95':>13}{'P(cheapest)':>13}"
                 f"{'P(infeasible)':>15}"]
        for _, r in self.designs.iterrows():
            lines.append(f"{r['design']:<{w}}{r['pv_p05']:>13,.0f}{r['pv_p50']:>13,.0f}"
                         f"{r['pv_p95']:>13,.0f}{r['prob_cheapest']:>13.3f}"
                         f"{r['prob_infeasible']:>15.3f}")
        lines.append("Rank correlation of the inputs with the chosen design's PV:")
        lines += [f"  {r['input']:<22}{r['spearman']:+.3f}"
                  for _, r in self.correlation.iterrows()]
        return "\n".join(lines)


# --------------------------------------------------------------------------------------------
# the Monte Carlo
# --------------------------------------------------------------------------------------------
def monte_carlo(study: Any, distributions: dict[str, Any] | None = None, n: int | None = None,
                seed: int | None = None, designs: int | None = None, result: Any = None,
                progress: bool | None = None) -> NetworkMonteCarloResult:
    """Monte Carlo of the life-cycle cost of a network's chosen design and its runners-up.

    Parameters
    ----------
    study : NetworkStudy
        A pumped network.
    distributions : dict of str to distribution, optional
        Input name (:data:`~pipeopt.network.lifecycle.NETWORK_INPUTS`) to a distribution;
        default: the study's ``[uncertainty]``. ``n``, ``seed`` and ``designs`` default to
        its ``samples``, ``seed`` and ``designs`` (else 2000, 0 and 3).
    n : int, optional
        Samples, 2 to ``MAX_SAMPLES``.
    seed : int, optional
        Seed of :func:`numpy.random.default_rng`.
    designs : int, optional
        The chosen design and its runners-up, 1 to :data:`MAX_DESIGNS`.
    result : NetworkResult, optional
        The study's result (default: the study is run).
    progress : bool, optional
        Progress bar over the hydraulic batches (default: when standard error is a terminal).

    Returns
    -------
    NetworkMonteCarloResult
    """
    from scipy import stats

    unc = study.uncertainty or {}
    distributions = distributions if distributions is not None else unc.get("distributions")
    n = n if n is not None else unc.get("samples", 2000)
    seed = seed if seed is not None else unc.get("seed", 0)
    designs = designs if designs is not None else unc.get("designs", 3)
    if isinstance(designs, bool) or not isinstance(designs, int | np.integer) \
            or not 1 <= designs <= MAX_DESIGNS:
        raise InputError(f"monte_carlo: designs must be a whole number from 1 to {MAX_DESIGNS}; "
                         f"got {designs!r}")
    if not study.pumped:
        raise InputError("monte_carlo: a gravity-fed network costs its pipe capital only; the "
                         "Monte Carlo of a network's life-cycle cost needs a pumped source")
    values = draw_samples(distributions, n, seed, int(designs), check_network_input, "designs")
    n = int(n)
    if result is None:
        result = study.run(progress=False, uncertainty=False)
    if not result.success:
        raise InputError("monte_carlo: the study found no design that holds every pressure")
    pr = study.problem
    outcome = result.outcome
    if outcome.lengths is not None:  # split pipes: the chosen design only
        choices, lengths = None, outcome.lengths[None]
        base_pv = np.array([result.total_cost])
        labels = ["chosen"]
    else:
        choices, base_pv = runner_up_designs(pr, outcome.choice, int(designs))
        lengths = None
        labels = [_label(study, choices[0], c) for c in choices]
    b = base_pv.size
    pv, feas = _evaluate(study, values, n, choices, lengths, progress)
    masked = np.where(feas, pv, np.inf)
    best = np.argmin(masked, axis=1)
    none = ~np.isfinite(masked[np.arange(n), best])
    cheapest = np.where(none, np.nan, pv[np.arange(n), best])
    regret = np.where(feas, pv - cheapest[:, None], np.nan)
    finite = np.isfinite(regret)
    n_finite = finite.sum(axis=0)
    q = np.quantile(pv, [0.05, 0.25, 0.5, 0.75, 0.95], axis=0)
    counts = np.bincount(best[~none], minlength=b)
    table = pd.DataFrame({
        "design": labels, "pv_base": base_pv, "pv_mean": pv.mean(axis=0), "pv_p05": q[0],
        "pv_p25": q[1], "pv_p50": q[2], "pv_p75": q[3], "pv_p95": q[4],
        "prob_cheapest": counts / n, "prob_infeasible": 1.0 - feas.mean(axis=0),
        "expected_regret": np.where(n_finite > 0, np.where(finite, regret, 0.0).sum(axis=0)
                                    / np.maximum(n_finite, 1), np.nan)})
    corr = []
    for name, col in values.items():
        rho = stats.spearmanr(col, pv[:, 0]).statistic if np.ptp(col) > 0 else np.nan
        corr.append({"input": name, "spearman": float(rho)})
    corr_df = pd.DataFrame(corr).sort_values("spearman", key=np.abs, ascending=False,
                                             kind="stable").reset_index(drop=True)
    return NetworkMonteCarloResult(n, int(seed), pd.DataFrame(values), pv, feas, table,
                                   corr_df, study.currency,
                                   message=f"{n} samples of {len(values)} input(s), "
                                           f"{b} design(s)")


def _evaluate(study: Any, values: dict[str, np.ndarray], n: int, choices: np.ndarray | None,
              lengths: np.ndarray | None, progress: bool | None
              ) -> tuple[np.ndarray, np.ndarray]:
    """PV (n, B) and feasibility (n, B) of every design in every sample."""
    pr = study.problem
    econ = pr.economics
    duty = econ.duty
    b = 1 if choices is None else choices.shape[0]
    horizon = values.get("horizon", np.full(n, float(econ.horizon)))
    n_years = int(horizon.max())
    growth = values.get("growth")
    grows = duty.grows or (growth is not None and np.any(growth != 0))
    t_ = n_years if grows else 1
    hydraulic = "flow_factor" in values or "growth" in values
    s_h = n if hydraulic else 1
    g = growth if growth is not None else np.full(s_h, duty.growth)
    ff = values.get("flow_factor", np.ones(s_h))
    # demand multipliers of the year-1 demands, (S_h, T): growth (design year, cap) and factor
    mult = (np.asarray(duty.multipliers(t_, growth=g[:s_h], flow_factor=ff[:s_h])) if grows
            else ff[:s_h, None])
    base = pr.demand[0]                                                        # (K, J)
    k_, j = base.shape
    per_sample = max(1, MAX_CASES // max(1, b * t_ * k_))
    kw = np.empty((s_h, b, t_, k_))
    ok = np.empty((s_h, b, t_), dtype=bool)
    tol = ds.HEAD_TOLERANCE * max(1, j)
    starts = range(0, s_h, per_sample)
    bar = _bar(len(starts), progress)
    for start in starts:
        stop = min(start + per_sample, s_h)
        c = stop - start
        demand = mult[start:stop, :, None, None] * base[None, None]           # (c, T, K, J)
        sub = dataclasses.replace(pr, demand=demand.reshape(c * t_, k_, j), economics=None)
        ev = ds.evaluate(sub, choices, lengths=lengths)
        kw[start:stop] = ev.hydraulic_kw.reshape(b, c, t_, k_).transpose(1, 0, 2, 3)
        ok[start:stop] = (ev.case_violation.reshape(b, c, t_, k_) <= tol).all(axis=3) \
            .transpose(1, 0, 2)
        if bar is not None:
            bar.update(1)
    if bar is not None:
        bar.close()
    # a design is feasible in a sample when every year within its horizon holds
    years_in = (np.arange(t_)[None, :] < horizon[:, None]) if t_ > 1 else np.ones((n, 1), bool)
    feasible = np.all(ok[np.arange(n) if s_h > 1 else np.zeros(n, int)]
                      | ~years_in[:, None, :], axis=2)                         # (n, B)
    capital = (pr.pipe_arrays(choices)["capital"] if choices is not None
               else (lengths * pr.option_cost[None, None, :]).sum(axis=(1, 2)))
    electrical = kw / econ.efficiency          # at the study's efficiency; life_cycle rescales
    pv = np.empty((n, b))
    for start in range(0, n, _MONEY_CHUNK):
        stop = min(start + _MONEY_CHUNK, n)
        var = Variations(**{k: v[start:stop] for k, v in values.items()}, n_years=n_years)
        power = electrical[start:stop] if s_h > 1 else electrical
        pv[start:stop] = life_cycle(econ, capital, power, variations=var).pv_total
    return pv, feasible


def _bar(total: int, progress: bool | None):
    import sys

    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show or total < 2:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc="network Monte Carlo", unit="batch", file=sys.stderr)
