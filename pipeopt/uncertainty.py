"""Uncertainty and sensitivity (study layer): how robust is the choice?

Three analyses of a :class:`~pipeopt.sizing.SizingStudy`, all evaluated with arrays across the
varied values (every candidate, every sample at once, in chunks that bound memory):

- :func:`tornado`: one input at a time at a low and a high value; the EAC of the chosen design
  there, and whether the best candidate changes.
- :func:`switching_values`: the value of each input at which the best candidate changes, found
  by root finding on the EAC difference of the two candidates (or on the feasibility limit).
- :func:`monte_carlo`: N samples of the inputs from their distributions; the EAC distribution
  of every candidate, the probability that each is the cheapest feasible one, the expected
  regret of each choice, and the rank correlation of each input with the EAC of the chosen
  design. The same seed gives the same results to the bit.

For an :class:`~pipeopt.upgrade.UpgradeStudy`, :func:`upgrade_monte_carlo` gives the
distribution of each option's NPV against keeping the line and the probability it is positive.

Inputs that can vary (names used in Python and in a study file's ``[uncertainty]`` section):
``energy_price`` [currency/kWh], ``escalation`` [1/yr], ``demand_charge``, ``discount_rate``
[1/yr], ``horizon`` [yr], ``efficiency`` [-], ``flow_factor`` (multiplies every duty flow),
``hours_factor`` (multiplies every duty's hours), ``growth`` [1/yr], ``aging_factor`` (multiplies
every aging rate), ``pipe_cost_factor`` (all materials) or ``pipe_cost_factor:<material>``,
``station_cost_factor``.
"""

from __future__ import annotations

import abc
import html
import sys
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize, stats

from .errors import InputError
from .lifecycle import VARIABLE_INPUTS, Variations

__all__ = ["Uniform", "Triangular", "Normal", "LogNormal", "DISTRIBUTIONS", "tornado",
           "switching_values", "monte_carlo", "upgrade_monte_carlo", "TornadoResult",
           "SwitchingResult", "MonteCarloResult", "UpgradeMonteCarloResult",
           "read_uncertainty_section"]


# --------------------------------------------------------------------------------------------
# distributions
# --------------------------------------------------------------------------------------------
class _Distribution(abc.ABC):
    """Base of the input distributions: ``sample(rng, n)``, ``cdf(x)``, ``support``."""

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        return self._frozen().ppf(rng.random(n))

    def cdf(self, x: Any) -> Any:
        """Cumulative distribution function."""
        return self._frozen().cdf(x)

    @property
    def support(self) -> tuple[float, float]:
        """The smallest and largest values the distribution can give."""
        lo, hi = self._frozen().support()
        return float(lo), float(hi)

    @abc.abstractmethod
    def _frozen(self):
        """The frozen scipy.stats distribution."""


@dataclass(frozen=True)
class Uniform(_Distribution):
    """Uniform between ``low`` and ``high``."""

    low: float
    high: float

    def __post_init__(self) -> None:
        if not self.low < self.high:
            raise InputError(f"uniform: low ({self.low}) must be below high ({self.high})")

    def _frozen(self):
        return stats.uniform(self.low, self.high - self.low)


@dataclass(frozen=True)
class Triangular(_Distribution):
    """Triangular with ``low`` <= ``mode`` <= ``high``."""

    low: float
    mode: float
    high: float

    def __post_init__(self) -> None:
        if not (self.low <= self.mode <= self.high and self.low < self.high):
            raise InputError(f"triangular: need low <= mode <= high and low < high; got "
                             f"{self.low}, {self.mode}, {self.high}")

    def _frozen(self):
        return stats.triang((self.mode - self.low) / (self.high - self.low), self.low,
                            self.high - self.low)


@dataclass(frozen=True)
class Normal(_Distribution):
    """Normal with ``mean`` and ``sd``, truncated to [``low``, ``high``] when given."""

    mean: float
    sd: float
    low: float = -np.inf
    high: float = np.inf

    def __post_init__(self) -> None:
        if not self.sd > 0:
            raise InputError(f"normal: sd must be positive; got {self.sd}")
        if not self.low < self.high:
            raise InputError("normal: low must be below high")

    def _frozen(self):
        a = (self.low - self.mean) / self.sd
        b = (self.high - self.mean) / self.sd
        return stats.truncnorm(a, b, loc=self.mean, scale=self.sd)


@dataclass(frozen=True)
class LogNormal(_Distribution):
    """Lognormal with ``median`` and ``sigma`` (the standard deviation of the logarithm)."""

    median: float
    sigma: float

    def __post_init__(self) -> None:
        if not (self.median > 0 and self.sigma > 0):
            raise InputError("lognormal: median and sigma must be positive")

    def _frozen(self):
        return stats.lognorm(self.sigma, scale=self.median)


DISTRIBUTIONS = {"uniform": Uniform, "triangular": Triangular, "normal": Normal,
                 "lognormal": LogNormal}


# --------------------------------------------------------------------------------------------
# mapping named inputs onto Variations
# --------------------------------------------------------------------------------------------
def _check_name(study, name: str) -> None:
    if name in VARIABLE_INPUTS:
        return
    if name.startswith("pipe_cost_factor:"):
        mat = name.split(":", 1)[1]
        if mat not in {m.name for m in study.materials}:
            raise InputError(f"uncertainty: {name!r} names no material of the study "
                             f"({', '.join(m.name for m in study.materials)})")
        return
    raise InputError(f"uncertainty: unknown input {name!r}; inputs: "
                     f"{', '.join(VARIABLE_INPUTS)}, pipe_cost_factor:<material>")


def _variations(study, values: dict[str, np.ndarray]) -> Variations:
    """Variations of a sizing study from named arrays of samples (S,)."""
    kwargs: dict[str, Any] = {}
    n = len(next(iter(values.values())))
    mats = study.candidates["material"].to_numpy()
    pipe = None
    for name, arr in values.items():
        arr = np.asarray(arr, dtype=float)
        if name == "horizon":
            arr = np.round(arr)
        if name == "pipe_cost_factor" or name.startswith("pipe_cost_factor:"):
            if pipe is None:
                pipe = np.ones((n, mats.size))
            cols = (slice(None) if name == "pipe_cost_factor"
                    else mats == name.split(":", 1)[1])
            pipe[:, cols] *= arr[:, None]
        else:
            kwargs[name] = arr
    if pipe is not None:
        kwargs["pipe_cost_factor"] = pipe
    return Variations(**kwargs)


def _base_value(study, name: str) -> float:
    """The study's own value of an input (1 for every factor), from the model's defaults."""
    base = Variations().resolved(study.scenario)
    return 1.0 if name.startswith("pipe_cost_factor") else float(base[name][0])


def default_ranges(study) -> dict[str, tuple[float, float]]:
    """Low and high values of each input for a tornado when none are given (common practice
    spreads for a screening study; state your own in a real one)."""
    s = study.scenario
    r = {
        "energy_price": (0.7 * s.tariff.price, 1.3 * s.tariff.price),
        "escalation": (s.tariff.escalation - 0.01, s.tariff.escalation + 0.01),
        "discount_rate": (max(0.0, s.discount_rate - 0.02), s.discount_rate + 0.02),
        "horizon": (max(1.0, round(0.75 * s.horizon)), round(1.25 * s.horizon)),
        "efficiency": (max(0.1, s.efficiency - 0.10), min(1.0, s.efficiency + 0.05)),
        "flow_factor": (0.8, 1.2),
        "hours_factor": (0.8, min(1.2, 8760.0 / sum(s.duty.hours))),
        "growth": (s.duty.growth - 0.01, s.duty.growth + 0.01),
    }
    if np.any(study.candidates["aging_m_per_year"] > 0):
        r["aging_factor"] = (0.0, 2.0)
    for m in study.materials:
        r[f"pipe_cost_factor:{m.name}"] = (0.8, 1.2)
    if s.pump_station is not None:
        r["station_cost_factor"] = (0.8, 1.2)
    return r


def _label(study, idx: int | None) -> str:
    if idx is None or idx < 0:
        return "none feasible"
    c = study.candidates.iloc[idx]
    return f"{c['material']} {c['size']}"


def _evaluate(study, values: dict[str, np.ndarray]):
    """EAC and feasibility (S, C) of a sizing study for named sample arrays."""
    lc = study.evaluate(variations=_variations(study, values), yearly=False)
    feas = study.feasibility(lc)["feasible"]
    return lc.eac, feas


def _best(eac: np.ndarray, feas: np.ndarray) -> np.ndarray:
    """Index of the cheapest feasible candidate per sample, −1 where none is feasible."""
    masked = np.where(feas, eac, np.inf)
    best = np.argmin(masked, axis=1)
    return np.where(np.isfinite(masked[np.arange(masked.shape[0]), best]), best, -1)


# --------------------------------------------------------------------------------------------
# tornado
# --------------------------------------------------------------------------------------------
@dataclass
class TornadoResult:
    """One-way sensitivity of the chosen design's EAC.

    Attributes
    ----------
    chosen : str
        The best candidate at the base values.
    base_eac : float
        Its EAC at the base values [currency/yr].
    table : pandas.DataFrame
        Per input: ``low``, ``high``, ``eac_low``, ``eac_high`` (of the chosen design),
        ``swing`` (their difference in magnitude), ``best_low``, ``best_high`` and
        ``changes`` (whether the best candidate differs at either end); sorted by swing.
    currency : str
        Label of money figures.
    """

    chosen: str
    base_eac: float
    table: pd.DataFrame
    currency: str = ""

    def __repr__(self) -> str:
        lines = [f"Tornado: EAC of {self.chosen} (base {self.base_eac:,.0f} {self.currency}/yr)",
                 f"{'input':<32}{'low':>10}{'high':>10}{'EAC low':>14}{'EAC high':>14}"
                 f"{'swing':>12}  best changes?"]
        for _, r in self.table.iterrows():
            ch = f"yes ({r['best_low']} / {r['best_high']})" if r["changes"] else "no"
            lines.append(f"{r['input']:<32}{r['low']:>10.4g}{r['high']:>10.4g}"
                         f"{r['eac_low']:>14,.0f}{r['eac_high']:>14,.0f}{r['swing']:>12,.0f}"
                         f"  {ch}")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        return (f"<p><b>Tornado</b>: EAC of {html.escape(self.chosen)} (base "
                f"{self.base_eac:,.0f} {html.escape(self.currency)}/yr)</p>"
                + self.table.to_html(index=False, float_format=lambda x: f"{x:,.4g}", border=0))


def _base_choice(study) -> tuple[int, np.ndarray]:
    """The best candidate at the study's own values, and every candidate's EAC there."""
    lc = study.evaluate(yearly=False)
    feas = study.feasibility(lc)["feasible"]
    best = int(_best(lc.eac[None, :], feas[None, :])[0])
    if best < 0:
        raise InputError("sensitivity: no candidate is feasible at the base values")
    return best, lc.eac


def tornado(study, ranges: dict[str, tuple[float, float]] | None = None) -> TornadoResult:
    """One-way sensitivity: each input at its low and high value, the others at base.

    Parameters
    ----------
    study : SizingStudy
    ranges : dict of str to (low, high), optional
        Inputs and their values (see the module notes for the names); default
        :func:`default_ranges`.

    Returns
    -------
    TornadoResult
    """
    ranges = dict(ranges or default_ranges(study))
    for name in ranges:
        _check_name(study, name)
    names = list(ranges)
    n = 2 * len(names)
    values = {}
    for j, name in enumerate(names):
        col = np.full(n, _base_value(study, name))
        col[2 * j], col[2 * j + 1] = ranges[name]
        values[name] = col
    chosen, base = _base_choice(study)
    eac, feas = _evaluate(study, values)
    best = _best(eac, feas)
    rows = []
    for j, name in enumerate(names):
        lo, hi = 2 * j, 2 * j + 1
        rows.append({"input": name, "low": ranges[name][0], "high": ranges[name][1],
                     "eac_low": eac[lo, chosen], "eac_high": eac[hi, chosen],
                     "swing": abs(eac[hi, chosen] - eac[lo, chosen]),
                     "best_low": _label(study, int(best[lo])),
                     "best_high": _label(study, int(best[hi])),
                     "changes": bool(best[lo] != chosen or best[hi] != chosen)})
    table = pd.DataFrame(rows).sort_values("swing", ascending=False, kind="stable")
    return TornadoResult(_label(study, chosen), float(base[chosen]), table.reset_index(drop=True),
                         study.currency)


# --------------------------------------------------------------------------------------------
# switching values
# --------------------------------------------------------------------------------------------
@dataclass
class SwitchingResult:
    """Values of each input at which the best candidate changes.

    Attributes
    ----------
    chosen : str
        The best candidate at the base values.
    table : pandas.DataFrame
        Per input and direction (``below``/``above`` the base value): ``switching_value`` (NaN
        when none), ``switches_to``, ``how`` ("equal EAC" or "chosen becomes infeasible"),
        ``relative_eac_gap`` at the switching value (the check of the root), and ``statement``
        in words.
    """

    chosen: str
    table: pd.DataFrame

    def __repr__(self) -> str:
        lines = [f"Switching values (chosen at base: {self.chosen})"]
        lines += [f"  {r['input']:<32} {r['statement']}" for _, r in self.table.iterrows()]
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        return (f"<p><b>Switching values</b> (chosen at base: {html.escape(self.chosen)})</p>"
                + self.table.to_html(index=False, float_format=lambda x: f"{x:,.6g}", border=0))


def switching_values(study, ranges: dict[str, tuple[float, float]] | None = None,
                     grid: int = 41) -> SwitchingResult:
    """For each input, the value at which the best candidate changes, within its range.

    Each input is scanned on ``grid`` values from its low to its high value (all inputs and
    values in one evaluation); from the base value outwards in each direction, the first value
    where another candidate is best brackets the switch. When the chosen and the new candidate
    are both feasible there, :func:`scipy.optimize.brentq` finds where their EACs are equal
    (to a relative gap below 1e-9); otherwise bisection finds where the chosen one stops being
    feasible. ``horizon`` is scanned year by year (it is whole years).

    Returns
    -------
    SwitchingResult
    """
    ranges = dict(ranges or default_ranges(study))
    for name in ranges:
        _check_name(study, name)
    chosen, _ = _base_choice(study)
    rows = []
    for name, (lo, hi) in ranges.items():
        base = _base_value(study, name)
        if name == "horizon":
            xs = np.arange(int(round(lo)), int(round(hi)) + 1, dtype=float)
        else:
            xs = np.linspace(lo, hi, grid)
        eac, feas = _evaluate(study, {name: xs})
        best = _best(eac, feas)
        for direction, order in (("below", np.flatnonzero(xs <= base)[::-1]),
                                 ("above", np.flatnonzero(xs >= base))):
            rows.append(_switch_one(study, name, direction, xs, order, best, chosen, base))
    return SwitchingResult(_label(study, chosen), pd.DataFrame(rows))


def _switch_one(study, name: str, direction: str, xs: np.ndarray, order: np.ndarray,
                best: np.ndarray, chosen: int, base: float) -> dict[str, Any]:
    row = {"input": name, "direction": direction, "base": base, "switching_value": np.nan,
           "switches_to": None, "how": None, "relative_eac_gap": np.nan}
    edge = xs[order[-1]] if order.size else base
    changed = [i for i in order if best[i] != chosen]
    if not changed:
        row["statement"] = (f"no switch {direction} the base value {base:.6g} down to "
                            f"{edge:.6g}" if direction == "below" else
                            f"no switch {direction} the base value {base:.6g} up to {edge:.6g}")
        return row
    i_new = changed[0]
    pos = list(order).index(i_new)
    i_old = order[pos - 1] if pos > 0 else None
    x_new = xs[i_new]
    x_old = xs[i_old] if i_old is not None else base
    other = int(best[i_new])
    row["switches_to"] = _label(study, other)

    def at(x: float):
        eac, feas = _evaluate(study, {name: np.array([x])})
        return int(_best(eac, feas)[0]), eac[0], feas[0]

    if name == "horizon":  # whole years: the first year of the scan where the choice differs
        row.update(switching_value=x_new, how="first whole year with another best candidate")
        row["statement"] = f"switches to {row['switches_to']} at {x_new:.0f} years"
        return row

    def gap(x: float) -> float:
        _, e, _ = at(x)
        return float(e[chosen] - e[other])

    def both_feasible(f: np.ndarray) -> bool:
        return bool(other >= 0 and f[chosen] and f[other])

    lo, hi = x_old, x_new          # best is the chosen one at lo, another at hi
    _, e_lo, f_lo = at(lo)
    _, e_hi, f_hi = at(hi)
    if not (both_feasible(f_lo) and both_feasible(f_hi)
            and e_lo[chosen] <= e_lo[other] and e_hi[chosen] >= e_hi[other]):
        # a feasibility limit lies in between: bisect on "the chosen one is still best"
        for _ in range(200):
            mid = 0.5 * (lo + hi)
            if at(mid)[0] == chosen:
                lo = mid
            else:
                hi = mid
            if abs(hi - lo) <= 1e-12 * max(1.0, abs(hi)):
                break
        other = at(hi)[0]
        row["switches_to"] = _label(study, other)
        _, e_lo, f_lo = at(lo)
        _, e_hi, f_hi = at(hi)
        if not (both_feasible(f_lo) and both_feasible(f_hi)):
            lost = _label(study, chosen) if not f_hi[chosen] else row["switches_to"]
            verb = "becomes infeasible" if not f_hi[chosen] else "becomes feasible"
            row.update(switching_value=hi, how=f"{lost} {verb}")
            row["statement"] = (f"switches to {row['switches_to']} at {hi:.6g}, where {lost} "
                                f"{verb}")
            return row
    x_star = optimize.brentq(gap, lo, hi, xtol=1e-14 * max(1.0, abs(hi)), rtol=1e-13,
                             maxiter=200)
    _, e_star, _ = at(x_star)
    row.update(switching_value=x_star, how="equal EAC",
               relative_eac_gap=abs(e_star[chosen] - e_star[other]) / abs(e_star[chosen]))
    row["statement"] = (f"switches to {row['switches_to']} at {x_star:.6g} (equal EAC "
                        f"{e_star[chosen]:,.0f})")
    return row


# --------------------------------------------------------------------------------------------
# Monte Carlo
# --------------------------------------------------------------------------------------------
def _progress(total: int, progress: bool | None, desc: str):
    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc=desc, unit="sample", file=sys.stderr)


def _samples(distributions: dict[str, _Distribution], n: int, seed: int) -> dict[str, np.ndarray]:
    if not isinstance(n, int | np.integer) or n < 2:
        raise InputError(f"monte_carlo: n must be a whole number >= 2; got {n!r}")
    if not distributions:
        raise InputError("monte_carlo: give at least one input distribution")
    rng = np.random.default_rng(seed)
    return {name: d.sample(rng, int(n)) for name, d in distributions.items()}


#: Inputs that change the hydraulics of a sample (the rest only scale money).
HYDRAULIC_INPUTS = ("flow_factor", "growth", "aging_factor")


def _chunk_size(study, memory_bytes: float, hydraulic: bool) -> int:
    """Samples per chunk: about sixteen (C, N, K) arrays per sample are alive at once when the
    hydraulics vary, about thirty (C,) arrays when they are shared by every sample."""
    c = len(study.candidates)
    if hydraulic:
        n = int(max(study.scenario.horizon, 1))
        k = len(study.scenario.duty.flows)
        per_sample = c * n * k * 8.0 * 16
    else:
        per_sample = c * 8.0 * 30
    return int(max(1, min(50_000, memory_bytes // per_sample)))


@dataclass
class MonteCarloResult:
    """Monte Carlo of a sizing study.

    Attributes
    ----------
    n : int
        Number of samples.
    seed : int
        Seed of the random generator.
    inputs : pandas.DataFrame
        The sampled inputs, one column per input.
    eac : numpy.ndarray, shape (n, C)
        EAC of every candidate in every sample [currency/yr].
    feasible : numpy.ndarray, shape (n, C)
        Feasibility of every candidate in every sample.
    candidates : pandas.DataFrame
        Per candidate: ``candidate`` (its row in the study's candidates and the column of
        ``eac``), ``material``, ``size``, EAC ``mean`` and quantiles ``p05``, ``p25``,
        ``p50``, ``p75``, ``p95``, ``prob_cheapest`` (cheapest feasible), ``prob_infeasible``,
        ``expected_regret`` (mean EAC above the cheapest feasible, over the samples where the
        candidate is feasible); sorted by probability of being cheapest, then mean EAC.
    chosen : str
        The base-case best candidate.
    correlation : pandas.DataFrame
        Spearman rank correlation of each input with the EAC of the chosen candidate.
    prob_none_feasible : float
        Share of samples where no candidate is feasible.
    """

    n: int
    seed: int
    inputs: pd.DataFrame
    eac: np.ndarray = field(repr=False)
    feasible: np.ndarray = field(repr=False)
    candidates: pd.DataFrame = field(repr=False)
    chosen: str = ""
    correlation: pd.DataFrame = field(default_factory=pd.DataFrame, repr=False)
    prob_none_feasible: float = 0.0
    currency: str = ""

    def __repr__(self) -> str:
        top = self.candidates.head(6)
        lines = [f"Monte Carlo: {self.n} samples (seed {self.seed}); chosen at base: "
                 f"{self.chosen}; EAC and regret in {self.currency or 'currency'}/yr",
                 f"{'candidate':<30}{'P(cheapest)':>12}{'EAC p05':>13}{'p50':>13}{'p95':>13}"
                 f"{'regret':>11}"]
        for _, r in top.iterrows():
            lines.append(f"{r['material'] + ' ' + r['size']:<30}{r['prob_cheapest']:>12.3f}"
                         f"{r['p05']:>13,.0f}{r['p50']:>13,.0f}{r['p95']:>13,.0f}"
                         f"{r['expected_regret']:>11,.0f}")
        lines.append("Rank correlation of the inputs with the chosen design's EAC:")
        lines += [f"  {r['input']:<30}{r['spearman']:+.3f}"
                  for _, r in self.correlation.iterrows()]
        if self.prob_none_feasible:
            lines.append(f"No candidate feasible in {self.prob_none_feasible:.1%} of samples.")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        return (f"<p><b>Monte Carlo</b>: {self.n} samples, seed {self.seed}; chosen at base "
                f"{html.escape(self.chosen)}</p>"
                + self.candidates.head(10).to_html(index=False,
                                                   float_format=lambda x: f"{x:,.4g}", border=0)
                + self.correlation.to_html(index=False, border=0))


def monte_carlo(study, distributions: dict[str, _Distribution], n: int = 10000, seed: int = 0,
                progress: bool | None = None, memory: float = 64e6,
                workers: int = 1) -> MonteCarloResult:
    """Monte Carlo of a sizing study: every candidate, every sample, in chunks of samples.

    Parameters
    ----------
    study : SizingStudy
    distributions : dict of str to distribution
        Input name to :class:`Uniform`, :class:`Triangular`, :class:`Normal` or
        :class:`LogNormal`; the inputs are sampled in the order given.
    n : int
        Number of samples.
    seed : int
        Seed of :func:`numpy.random.default_rng`; the same seed gives the same results.
    progress : bool, optional
        Show a progress bar (default: when standard error is a terminal).
    memory : float
        Rough bound on the working memory of one chunk [bytes] (a few samples per chunk keep
        the arrays in cache).
    workers : int
        Threads evaluating chunks side by side (2 on a 2-core machine roughly halves the time
        when flows, growth or aging vary); results do not depend on it.

    Returns
    -------
    MonteCarloResult
    """
    for name in distributions:
        _check_name(study, name)
    chosen, _ = _base_choice(study)
    values = _samples(distributions, n, seed)
    size = _chunk_size(study, memory, any(k in HYDRAULIC_INPUTS for k in distributions))
    c = len(study.candidates)
    eac = np.empty((n, c))
    feas = np.empty((n, c), dtype=bool)
    bar = _progress(n, progress if n > 2000 or progress else False, "Monte Carlo")
    def run_chunk(start: int) -> int:
        stop = min(start + size, n)
        e, f = _evaluate(study, {k: v[start:stop] for k, v in values.items()})
        eac[start:stop], feas[start:stop] = e, f  # disjoint slices: no two chunks share rows
        return stop - start

    starts = range(0, n, size)
    if workers > 1:  # numpy releases the GIL inside its loops; chunks are independent
        from concurrent.futures import ThreadPoolExecutor

        with ThreadPoolExecutor(max_workers=workers) as pool:
            for done in pool.map(run_chunk, starts):
                if bar is not None:
                    bar.update(done)
    else:
        for start in starts:
            done = run_chunk(start)
            if bar is not None:
                bar.update(done)
    if bar is not None:
        bar.close()
    best = _best(eac, feas)
    none = best < 0
    masked = np.where(feas, eac, np.nan)
    cheapest = np.where(none, np.nan, eac[np.arange(n), np.maximum(best, 0)])
    regret = masked - cheapest[:, None]
    q = np.quantile(eac, [0.05, 0.25, 0.5, 0.75, 0.95], axis=0)
    counts = np.bincount(best[~none], minlength=c)
    finite = np.isfinite(regret)
    n_finite = finite.sum(axis=0)
    exp_regret = np.where(n_finite > 0, np.where(finite, regret, 0.0).sum(axis=0)
                          / np.maximum(n_finite, 1), np.nan)
    table = pd.DataFrame({
        "candidate": np.arange(c), "material": study.candidates["material"],
        "size": study.candidates["size"], "mean": eac.mean(axis=0), "p05": q[0], "p25": q[1],
        "p50": q[2], "p75": q[3], "p95": q[4], "prob_cheapest": counts / n,
        "prob_infeasible": 1.0 - feas.mean(axis=0), "expected_regret": exp_regret})
    table = table.sort_values(["prob_cheapest", "mean"], ascending=[False, True],
                              kind="stable").reset_index(drop=True)
    inputs = pd.DataFrame(values)
    corr = []
    for name, col in values.items():
        rho = stats.spearmanr(col, eac[:, chosen]).statistic if np.ptp(col) > 0 else np.nan
        corr.append({"input": name, "spearman": float(rho)})
    corr_df = pd.DataFrame(corr).sort_values("spearman", key=np.abs, ascending=False,
                                             kind="stable").reset_index(drop=True)
    return MonteCarloResult(n, seed, inputs, eac, feas, table, _label(study, chosen), corr_df,
                            float(none.mean()), study.currency)


# --------------------------------------------------------------------------------------------
# upgrade study
# --------------------------------------------------------------------------------------------
UPGRADE_INPUTS = ("energy_price", "escalation", "discount_rate", "flow_factor", "growth",
                  "aging_factor", "break_cost_factor", "break_growth", "capital_factor",
                  "leakage_factor")


@dataclass
class UpgradeMonteCarloResult:
    """Monte Carlo of an upgrade study.

    Attributes
    ----------
    n, seed : int
        Samples and seed.
    inputs : pandas.DataFrame
        The sampled inputs.
    npv : pandas.DataFrame
        NPV against keeping the line, one column per option, one row per sample.
    summary : pandas.DataFrame
        Per option: mean and quantiles of the NPV, ``prob_positive`` (the option saves money)
        and ``prob_best`` (it has the least PV of all options, keep included).
    """

    n: int
    seed: int
    inputs: pd.DataFrame
    npv: pd.DataFrame = field(repr=False)
    summary: pd.DataFrame = field(repr=False)

    def __repr__(self) -> str:
        lines = [f"Upgrade Monte Carlo: {self.n} samples (seed {self.seed})",
                 f"{'option':<20}{'NPV p05':>14}{'p50':>14}{'p95':>14}{'P(NPV>0)':>10}"
                 f"{'P(best)':>9}"]
        for _, r in self.summary.iterrows():
            lines.append(f"{r['option']:<20}{r['p05']:>14,.0f}{r['p50']:>14,.0f}"
                         f"{r['p95']:>14,.0f}{r['prob_positive']:>10.3f}{r['prob_best']:>9.3f}")
        return "\n".join(lines)

    def _repr_html_(self) -> str:
        return (f"<p><b>Upgrade Monte Carlo</b>: {self.n} samples, seed {self.seed}</p>"
                + self.summary.to_html(index=False, float_format=lambda x: f"{x:,.4g}",
                                       border=0))


def upgrade_monte_carlo(study, distributions: dict[str, _Distribution], n: int = 10000,
                        seed: int = 0, progress: bool | None = None) -> UpgradeMonteCarloResult:
    """Monte Carlo of an upgrade study: the NPV of each option against keeping the line.

    Inputs: ``energy_price``, ``escalation``, ``discount_rate``, ``flow_factor``, ``growth``,
    ``aging_factor`` (of the existing line), ``break_cost_factor``, ``break_growth``,
    ``capital_factor`` (every option's capital), ``leakage_factor`` (the leakage cost).
    All samples are evaluated at once per option (the hydraulics of an upgrade study are small).
    """
    for name in distributions:
        if name not in UPGRADE_INPUTS:
            raise InputError(f"uncertainty: unknown upgrade input {name!r}; inputs: "
                             f"{', '.join(UPGRADE_INPUTS)}")
    values = _samples(distributions, n, seed)
    bar = _progress(len(study.states) + 1, progress, "Upgrade Monte Carlo")
    keep = study.sampled_pv(None, values)
    pvs = {"keep": keep}
    for st in study.states:
        pvs[st.name] = study.sampled_pv(st, values)
        if bar is not None:
            bar.update(1)
    if bar is not None:
        bar.close()
    npv = pd.DataFrame({k: keep - v for k, v in pvs.items() if k != "keep"})
    all_pv = np.column_stack(list(pvs.values()))
    best = np.argmin(all_pv, axis=1)
    rows = []
    for j, name in enumerate(pvs):
        if name == "keep":
            continue
        col = npv[name].to_numpy()
        q = np.quantile(col, [0.05, 0.5, 0.95])
        rows.append({"option": name, "mean": col.mean(), "p05": q[0], "p50": q[1],
                     "p95": q[2], "prob_positive": float((col > 0).mean()),
                     "prob_best": float((best == j).mean())})
    rows.append({"option": "keep", "mean": 0.0, "p05": 0.0, "p50": 0.0, "p95": 0.0,
                 "prob_positive": 0.0, "prob_best": float((best == 0).mean())})
    return UpgradeMonteCarloResult(n, seed, pd.DataFrame(values), npv, pd.DataFrame(rows))


# --------------------------------------------------------------------------------------------
# study-file section
# --------------------------------------------------------------------------------------------
def read_uncertainty_section(sec) -> dict[str, Any]:
    """Read an ``[uncertainty]`` section: ``samples``, ``seed`` and one table per input.

    Example::

        [uncertainty]
        samples = 5000
        seed = 7
        energy_price = { distribution = "triangular", low = 0.10, mode = 0.14, high = 0.22 }
        discount_rate = { distribution = "uniform", low = 0.03, high = 0.08 }
        flow_factor = { distribution = "normal", mean = 1.0, sd = 0.1, low = 0.7, high = 1.3 }
    """
    from .studyfile import Section, StudyFileError

    out: dict[str, Any] = {"samples": int(sec.number("samples", 2000, low=2, integer=True)),
                           "seed": int(sec.number("seed", 0, low=0, integer=True)),
                           "distributions": {}}
    params = {"uniform": ("low", "high"), "triangular": ("low", "mode", "high"),
              "normal": ("mean", "sd", "low", "high"), "lognormal": ("median", "sigma")}
    for name, spec in sec.data.items():
        if name in ("samples", "seed"):
            continue
        key = sec.key(name)
        kind_sec = Section(spec, key, ("distribution", "low", "mode", "high", "mean", "sd",
                                       "median", "sigma"))
        kind = kind_sec.text("distribution", None, tuple(DISTRIBUTIONS))
        wanted = params[kind]
        extra = set(spec) - {"distribution", *wanted}
        if extra:
            raise StudyFileError(f"{key}: {kind} takes {', '.join(wanted)}; not "
                                 f"{', '.join(sorted(extra))}")
        optional = {"low", "high"} if kind == "normal" else set()
        args = {}
        for p in wanted:
            if p in optional and p not in spec:
                continue
            args[p] = kind_sec.number(p, None)
        try:
            out["distributions"][name] = DISTRIBUTIONS[kind](**args)
        except InputError as exc:
            raise StudyFileError(f"{key}: {exc}") from None
    return out
