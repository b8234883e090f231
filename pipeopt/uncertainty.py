"""Uncertainty and sensitivity (study layer): how robust is the choice?

Three analyses of a :class:`~pipeopt.sizing.SizingStudy` (the choice: the feasible candidate
with the least EAC) or an :class:`~pipeopt.upgrade.UpgradeStudy` (the choice: the option with
the least present value of costs, keeping the line included), all evaluated with arrays across
the varied values:

- :func:`tornado`: one input at a time at a low and a high value; the chosen design's figure
  there, and whether the best choice changes.
- :func:`switching_values` (sizing): the value of each input at which the best candidate
  changes, found by root finding on the EAC difference of the two candidates (or on the
  feasibility limit).
- :func:`monte_carlo` (sizing) and :func:`upgrade_monte_carlo`: N samples of the inputs from
  their distributions; the distribution of every candidate's EAC (or every option's NPV
  against keeping the line), the probability that each is the best, the expected regret. The
  same seed gives the same results to the bit, whatever the chunking.

Inputs are the named inputs of :data:`pipeopt.variations.INPUTS` (plus
``pipe_cost_factor:<material>`` in a sizing study). Every sample, and every value of a scan, is
evaluated with its own horizon. A distribution is one of :class:`Uniform`, :class:`Triangular`,
:class:`Normal`, :class:`LogNormal`, or any object with a ``ppf`` method (a frozen
``scipy.stats`` distribution) or an ``rvs`` method.
"""

from __future__ import annotations

import abc
import math
import sys
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .errors import InputError
from .results import StudyResult
from .variations import INPUTS, check_input_name

__all__ = ["Uniform", "Triangular", "Normal", "LogNormal", "DISTRIBUTIONS", "MAX_SAMPLES",
           "tornado", "switching_values", "monte_carlo", "upgrade_monte_carlo",
           "default_ranges", "TornadoResult", "SwitchingResult", "MonteCarloResult",
           "UpgradeMonteCarloResult", "read_uncertainty_section", "draw_samples", "MAX_CELLS"]

#: The most samples a Monte Carlo may take. Its results hold about 9 bytes per sample and
#: candidate (EAC and feasibility): 1,000,000 samples of 400 candidates need about 3.6 GB.
MAX_SAMPLES = 1_000_000
#: The most (samples x candidates) a Monte Carlo may hold (about 450 MB of results).
MAX_CELLS = 50_000_000


# --------------------------------------------------------------------------------------------
# distributions
# --------------------------------------------------------------------------------------------
def _number(value: Any, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float | np.integer | np.floating):
        raise InputError(f"{what} must be a number; got {value!r}")
    v = float(value)
    if not math.isfinite(v):
        raise InputError(f"{what} must be finite; got {value!r}")
    return v


class _Distribution(abc.ABC):
    """Base of the input distributions: ``ppf``, ``cdf``, ``support``, ``sample``."""

    def sample(self, rng: np.random.Generator, n: int) -> np.ndarray:
        return self.ppf(rng.random(n))

    def ppf(self, q: Any) -> Any:
        """Percent point function (inverse of the CDF)."""
        return self._frozen().ppf(q)

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
        lo, hi = _number(self.low, "uniform: low"), _number(self.high, "uniform: high")
        if not lo < hi:
            raise InputError(f"uniform: low ({self.low}) must be below high ({self.high})")

    def _frozen(self):
        from scipy import stats

        return stats.uniform(self.low, self.high - self.low)


@dataclass(frozen=True)
class Triangular(_Distribution):
    """Triangular with ``low`` <= ``mode`` <= ``high``."""

    low: float
    mode: float
    high: float

    def __post_init__(self) -> None:
        for k in ("low", "mode", "high"):
            _number(getattr(self, k), f"triangular: {k}")
        if not (self.low <= self.mode <= self.high and self.low < self.high):
            raise InputError(f"triangular: need low <= mode <= high and low < high; got "
                             f"{self.low}, {self.mode}, {self.high}")

    def _frozen(self):
        from scipy import stats

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
        _number(self.mean, "normal: mean")
        if not _number(self.sd, "normal: sd") > 0:
            raise InputError(f"normal: sd must be positive; got {self.sd}")
        if not float(self.low) < float(self.high):
            raise InputError("normal: low must be below high")

    def _frozen(self):
        a = (self.low - self.mean) / self.sd
        b = (self.high - self.mean) / self.sd
        from scipy import stats

        return stats.truncnorm(a, b, loc=self.mean, scale=self.sd)


@dataclass(frozen=True)
class LogNormal(_Distribution):
    """Lognormal with ``median`` and ``sigma`` (the standard deviation of the logarithm)."""

    median: float
    sigma: float

    def __post_init__(self) -> None:
        if not (_number(self.median, "lognormal: median") > 0
                and _number(self.sigma, "lognormal: sigma") > 0):
            raise InputError("lognormal: median and sigma must be positive")

    def _frozen(self):
        from scipy import stats

        return stats.lognorm(self.sigma, scale=self.median)


DISTRIBUTIONS = {"uniform": Uniform, "triangular": Triangular, "normal": Normal,
                 "lognormal": LogNormal}


def _draw(dist: Any, name: str, rng: np.random.Generator, n: int) -> np.ndarray:
    """n values of ``dist``: by its ppf at uniform numbers, or its rvs with this generator."""
    if hasattr(dist, "ppf"):
        out = dist.ppf(rng.random(n))
    elif hasattr(dist, "rvs"):
        out = dist.rvs(size=n, random_state=rng)
    else:
        raise InputError(f"uncertainty.{name}: expected a distribution (Uniform, Triangular, "
                         f"Normal, LogNormal, or a scipy.stats frozen distribution); got "
                         f"{dist!r} ({type(dist).__name__})")
    out = np.asarray(out, dtype=float).reshape(-1)
    if out.size != n or not np.all(np.isfinite(out)):
        raise InputError(f"uncertainty.{name}: the distribution gave values that are not "
                         f"finite numbers")
    return out


def _check_distributions(distributions: Any) -> dict[str, Any]:
    if not isinstance(distributions, dict) or not distributions:
        raise InputError("uncertainty: give at least one input distribution as a mapping "
                         "{name: distribution}")
    for name, dist in distributions.items():
        if not (hasattr(dist, "ppf") or hasattr(dist, "rvs")):
            raise InputError(f"uncertainty.{name}: expected a distribution (Uniform, "
                             f"Triangular, Normal, LogNormal, or a scipy.stats frozen "
                             f"distribution); got {dist!r} ({type(dist).__name__})")
    return distributions


# --------------------------------------------------------------------------------------------
# the decision each study makes, seen from here
# --------------------------------------------------------------------------------------------
class _Decision(abc.ABC):
    """What a study chooses among and by which figure (the least is best)."""

    kind: str
    metric: str          # column stem: "eac" or "pv"
    metric_words: str    # "EAC" or "present value of costs"
    per_year: str        # "/yr" or ""

    def __init__(self, study: Any) -> None:
        self.study = study

    @property
    def currency(self) -> str:
        return self.study.currency

    @property
    @abc.abstractmethod
    def labels(self) -> list[str]:
        """Names of the choices (candidates or options)."""

    @abc.abstractmethod
    def evaluate(self, values: dict[str, np.ndarray], n_years: int | None = None,
                 ) -> tuple[np.ndarray, np.ndarray]:
        """The figure (S, C) and feasibility (S, C) of every choice in every sample."""

    def check_name(self, name: str) -> str:
        mats = tuple(m.name for m in getattr(self.study, "materials", ()))
        return check_input_name(name, self.kind, mats)

    def base_value(self, name: str) -> float:
        return self.study.base_value(name)

    def base_choice(self) -> tuple[int, np.ndarray]:
        """The best choice at the study's own values, and every choice's figure there."""
        value, feas = self.evaluate({})
        best = int(_best(value, feas)[0])
        if best < 0:
            raise InputError("sensitivity: no candidate is feasible at the base values")
        return best, value[0]


class _SizingDecision(_Decision):
    kind, metric, metric_words, per_year = "sizing", "eac", "EAC", "/yr"

    @property
    def labels(self) -> list[str]:
        c = self.study.candidates
        return (c["material"] + " " + c["size"]).tolist()

    def series_range(self, values: dict[str, np.ndarray], n_years: int) -> tuple | None:
        """The batch's smallest and largest flow multiplier of each year, when the friction
        series path applies to the whole batch (flows that vary and never fall, shared aging,
        a non-negative static head); None otherwise."""
        if not any(k in values for k in ("flow_factor", "growth")) or "aging_factor" in values:
            return None
        s = self.study.scenario
        growth = values.get("growth", np.array([s.duty.growth]))
        if np.any(growth < 0) or s.static_head < 0 or self.study.hydraulics.friction_method \
                not in ("colebrook", "swamee-jain", "haaland", "serghides", "churchill"):
            return None
        m = s.duty.multipliers(n_years, growth=growth,
                               flow_factor=values.get("flow_factor", np.ones(1)))
        m = np.atleast_2d(m)
        return (m.min(axis=0), m.max(axis=0))

    def evaluate(self, values, n_years=None, m_range=None):
        var = self.study.variations(values) if values else None
        if var is not None and n_years is not None:
            var = _with_years(var, n_years, m_range)
        lc = self.study.evaluate(variations=var, yearly=False)
        eac = np.atleast_2d(lc.eac)
        feas = np.atleast_2d(self.study.check(lc)["feasible"])
        return eac, feas


class _UpgradeDecision(_Decision):
    kind, metric, metric_words, per_year = "upgrade", "pv", "present value of costs", ""

    @property
    def labels(self) -> list[str]:
        return ["keep", *[o.name for o in self.study.states]]

    def evaluate(self, values, n_years=None, m_range=None):
        var = self.study.variations(values)
        if n_years is not None:
            var = _with_years(var, n_years)
        pv = self.study.sample_pv(var).to_numpy()
        return pv, np.ones(pv.shape, dtype=bool)


def _with_years(var: Any, n_years: int, m_range: tuple | None = None) -> Any:
    from dataclasses import replace

    return replace(var, n_years=int(n_years), m_range=m_range)


def _decision(study: Any) -> _Decision:
    from .sizing import SizingStudy
    from .upgrade import UpgradeStudy

    if isinstance(study, SizingStudy):
        return _SizingDecision(study)
    if isinstance(study, UpgradeStudy):
        return _UpgradeDecision(study)
    raise InputError(f"expected a SizingStudy or an UpgradeStudy; got {type(study).__name__}")


def _best(value: np.ndarray, feas: np.ndarray) -> np.ndarray:
    """Index of the best (least) feasible choice per sample, −1 where none is feasible."""
    masked = np.where(feas, value, np.inf)
    best = np.argmin(masked, axis=1)
    return np.where(np.isfinite(masked[np.arange(masked.shape[0]), best]), best, -1)


def _label(d: _Decision, idx: int | None) -> str:
    if idx is None or idx < 0:
        return "none feasible"
    return d.labels[idx]


def default_ranges(study: Any) -> dict[str, tuple[float, float]]:
    """Low and high values of each input for a tornado when none are given (common practice
    spreads for a screening study; state your own in a real one)."""
    d = _decision(study)
    b = d.base_value
    price, esc, rate, horizon = (b("energy_price"), b("escalation"), b("discount_rate"),
                                 b("horizon"))
    r = {
        "energy_price": (0.7 * price, 1.3 * price),
        "escalation": (esc - 0.01, esc + 0.01),
        "discount_rate": (max(0.0, rate - 0.02), rate + 0.02),
        "horizon": (max(1.0, round(0.75 * horizon)), min(200.0, round(1.25 * horizon))),
        "efficiency": (max(0.1, b("efficiency") - 0.10), min(1.0, b("efficiency") + 0.05)),
        "flow_factor": (0.8, 1.2),
        "hours_factor": (0.8, min(1.2, 8760.0 / sum(study.duty.hours))),
        "growth": (b("growth") - 0.01, b("growth") + 0.01),
    }
    if d.kind == "sizing":
        if np.any(study.candidates["aging_m_per_year"] > 0):
            r["aging_factor"] = (0.0, 2.0)
        for m in study.materials:
            r[f"pipe_cost_factor:{m.name}"] = (0.8, 1.2)
    else:
        last_action = max((o.year for o in study.options), default=0)
        r["horizon"] = (max(float(last_action + 1), r["horizon"][0]), r["horizon"][1])
        if study.existing.aging > 0:
            r["aging_factor"] = (0.0, 2.0)
        r["capital_factor"] = (0.8, 1.2)
        if study.existing.breaks_per_year > 0:
            r["break_cost_factor"] = (0.5, 1.5)
            r["break_growth"] = (b("break_growth") - 0.02, b("break_growth") + 0.02)
        if study.existing.leakage_cost > 0:
            r["leakage_cost_factor"] = (0.5, 1.5)
    if study.pump_station is not None:
        r["station_cost_factor"] = (0.8, 1.2)
    return r


def _check_ranges(d: _Decision, ranges: Any) -> dict[str, tuple[float, float]]:
    if not isinstance(ranges, dict) or not ranges:
        raise InputError("ranges: give a mapping {input: (low, high)}")
    out = {}
    for name, pair in ranges.items():
        d.check_name(name)
        if not isinstance(pair, list | tuple | np.ndarray) or len(pair) != 2:
            raise InputError(f"ranges.{name}: needs (low, high) values; got {pair!r}")
        lo = _number(pair[0], f"ranges.{name}: low")
        hi = _number(pair[1], f"ranges.{name}: high")
        spec = INPUTS[name.split(":")[0]]
        for x in (lo, hi):
            spec.check(np.array([x]), f"ranges.{name}: ")
        out[name] = (lo, hi)
    return out


# --------------------------------------------------------------------------------------------
# tornado
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class TornadoResult(StudyResult):
    """One-way sensitivity of the chosen design's figure (EAC, or present value of costs).

    Attributes
    ----------
    chosen : str
        The best choice at the base values.
    base_value : float
        Its figure at the base values [currency/yr for an EAC, currency for a PV].
    table : pandas.DataFrame
        Per input: ``low``, ``high``, ``<metric>_low``, ``<metric>_high`` (of the chosen
        design; metric ``eac`` or ``pv``), ``swing`` (their difference in magnitude),
        ``best_low``, ``best_high`` and ``changes`` (whether the best choice differs at either
        end); sorted by swing.
    metric : str
        ``"eac"`` or ``"pv"``.
    currency : str
        Label of money figures.
    """

    chosen: str
    base_value: float
    table: pd.DataFrame
    metric: str = "eac"
    currency: str = ""
    success: bool = True
    message: str = "each input at its low and high value, the others at base"

    @property
    def base_eac(self) -> float:
        """The chosen design's EAC at the base values (sizing)."""
        return self.base_value

    def headline(self) -> str:
        changes = int(self.table["changes"].sum())
        return (f"{len(self.table)} inputs; the best changes at an end of {changes} of them "
                f"(chosen at base: {self.chosen})")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Tornado": self.table}

    def text(self) -> str:
        m = "EAC" if self.metric == "eac" else "PV"
        unit = f"{self.currency}/yr" if self.metric == "eac" else self.currency
        lines = [f"Tornado: {m} of {self.chosen} (base {self.base_value:,.0f} {unit})",
                 f"{'input':<32}{'low':>10}{'high':>10}{m + ' low':>14}{m + ' high':>14}"
                 f"{'swing':>12}  best changes?"]
        for _, r in self.table.iterrows():
            ch = f"yes ({r['best_low']} / {r['best_high']})" if r["changes"] else "no"
            lines.append(f"{r['input']:<32}{r['low']:>10.4g}{r['high']:>10.4g}"
                         f"{r[self.metric + '_low']:>14,.0f}{r[self.metric + '_high']:>14,.0f}"
                         f"{r['swing']:>12,.0f}  {ch}")
        return "\n".join(lines)


def tornado(study: Any, ranges: dict[str, tuple[float, float]] | None = None) -> TornadoResult:
    """One-way sensitivity: each input at its low and high value, the others at base.

    Parameters
    ----------
    study : SizingStudy or UpgradeStudy
    ranges : dict of str to (low, high), optional
        Inputs and their values (see the module notes for the names); default
        :func:`default_ranges`.

    Returns
    -------
    TornadoResult
    """
    d = _decision(study)
    ranges = _check_ranges(d, ranges if ranges is not None else default_ranges(study))
    names = list(ranges)
    n = 2 * len(names)
    values = {}
    for j, name in enumerate(names):
        col = np.full(n, d.base_value(name))
        col[2 * j], col[2 * j + 1] = ranges[name]
        values[name] = col
    chosen, base = d.base_choice()
    value, feas = d.evaluate(values)
    best = _best(value, feas)
    m = d.metric
    rows = []
    for j, name in enumerate(names):
        lo, hi = 2 * j, 2 * j + 1
        rows.append({"input": name, "low": ranges[name][0], "high": ranges[name][1],
                     f"{m}_low": value[lo, chosen], f"{m}_high": value[hi, chosen],
                     "swing": abs(value[hi, chosen] - value[lo, chosen]),
                     "best_low": _label(d, int(best[lo])),
                     "best_high": _label(d, int(best[hi])),
                     "changes": bool(best[lo] != chosen or best[hi] != chosen)})
    table = pd.DataFrame(rows).sort_values("swing", ascending=False, kind="stable")
    return TornadoResult(_label(d, chosen), float(base[chosen]), table.reset_index(drop=True),
                         m, d.currency)


# --------------------------------------------------------------------------------------------
# switching values
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class SwitchingResult(StudyResult):
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
    success: bool = True
    message: str = "each input scanned from its base value outwards"

    def headline(self) -> str:
        n = int(self.table["switching_value"].notna().sum())
        return f"{n} switching value(s) found (chosen at base: {self.chosen})"

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Switching values": self.table}

    def text(self) -> str:
        lines = [f"Switching values (chosen at base: {self.chosen})"]
        lines += [f"  {r['input']:<32} {r['statement']}" for _, r in self.table.iterrows()]
        return "\n".join(lines)


def switching_values(study: Any, ranges: dict[str, tuple[float, float]] | None = None,
                     grid: int = 41) -> SwitchingResult:
    """For each input, the value at which the best candidate changes, within its range.

    Each input is scanned on ``grid`` values from its low to its high value (all values of an
    input in one evaluation); from the base value outwards in each direction, the first value
    where another candidate is best brackets the switch. When the chosen and the new candidate
    are both feasible there, :func:`scipy.optimize.brentq` finds where their EACs are equal
    (to a relative gap below 1e-9); otherwise bisection finds where the chosen one stops being
    feasible. ``horizon`` is scanned year by year (it is whole years).

    Returns
    -------
    SwitchingResult
    """
    d = _decision(study)
    if d.kind != "sizing":
        raise InputError("switching_values: for a sizing study (use tornado or monte_carlo for "
                         "an upgrade study)")
    ranges = _check_ranges(d, ranges if ranges is not None else default_ranges(study))
    chosen, _ = d.base_choice()
    rows = []
    for name, (lo, hi) in ranges.items():
        base = d.base_value(name)
        if name == "horizon":
            xs = np.arange(int(round(lo)), int(round(hi)) + 1, dtype=float)
        else:
            xs = np.linspace(lo, hi, grid)
        value, feas = d.evaluate({name: xs})
        best = _best(value, feas)
        for direction, order in (("below", np.flatnonzero(xs <= base)[::-1]),
                                 ("above", np.flatnonzero(xs >= base))):
            rows.append(_switch_one(d, name, direction, xs, order, best, chosen, base))
    return SwitchingResult(_label(d, chosen), pd.DataFrame(rows))


def _switch_one(d: _Decision, name: str, direction: str, xs: np.ndarray, order: np.ndarray,
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
    row["switches_to"] = _label(d, other)

    def at(x: float):
        value, feas = d.evaluate({name: np.array([x])})
        return int(_best(value, feas)[0]), value[0], feas[0]

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
        row["switches_to"] = _label(d, other)
        _, e_lo, f_lo = at(lo)
        _, e_hi, f_hi = at(hi)
        if not (both_feasible(f_lo) and both_feasible(f_hi)):
            lost = _label(d, chosen) if not f_hi[chosen] else row["switches_to"]
            verb = "becomes infeasible" if not f_hi[chosen] else "becomes feasible"
            row.update(switching_value=hi, how=f"{lost} {verb}")
            row["statement"] = (f"switches to {row['switches_to']} at {hi:.6g}, where {lost} "
                                f"{verb}")
            return row
    from scipy import optimize

    x_star = optimize.brentq(gap, lo, hi, xtol=1e-14 * max(1.0, abs(hi)), rtol=1e-13,
                             maxiter=200)
    _, e_star, _ = at(x_star)
    row.update(switching_value=x_star, how="equal EAC",
               relative_eac_gap=abs(e_star[chosen] - e_star[other]) / abs(e_star[chosen]))
    row["statement"] = (f"switches to {row['switches_to']} at {x_star:.6g} (equal EAC "
                        f"{e_star[chosen]:,.0f})")
    return row


# --------------------------------------------------------------------------------------------
# Monte Carlo machinery
# --------------------------------------------------------------------------------------------
def _progress(total: int, progress: bool | None, desc: str):
    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc=desc, unit="sample", file=sys.stderr)


def draw_samples(distributions: dict[str, Any], n: Any, seed: Any, n_choices: int,
                 check_name: Any, choices: str = "choices") -> dict[str, np.ndarray]:
    """Checked samples of named inputs, for a Monte Carlo of any study.

    Parameters
    ----------
    distributions : dict of str to distribution
        Input name to a distribution (:class:`Uniform`, :class:`Triangular`, :class:`Normal`,
        :class:`LogNormal`, or anything with ``ppf`` or ``rvs``), drawn in the order given.
    n : int
        Number of samples, 2 to :data:`MAX_SAMPLES`.
    seed : int
        Seed of :func:`numpy.random.default_rng`, 0 to 2**63 - 1.
    n_choices : int
        Choices evaluated in every sample (candidates, options, designs): ``n × n_choices``
        may not exceed :data:`MAX_CELLS`.
    check_name : callable
        Refuses a name that is no input of the study (raises :class:`InputError`).
    choices : str
        What the choices are called, for the message.

    Returns
    -------
    dict of str to ndarray, shape (n,)
        The values; a sampled horizon rounded to whole years; every value checked against its
        input's rule (:data:`pipeopt.variations.INPUTS`).
    """
    if isinstance(n, bool) or not isinstance(n, int | np.integer) or not 2 <= n <= MAX_SAMPLES:
        raise InputError(f"monte_carlo: n must be a whole number from 2 to {MAX_SAMPLES:,}; "
                         f"got {n!r}")
    cells = int(n) * int(n_choices)
    if cells > MAX_CELLS:
        raise InputError(f"monte_carlo: {int(n):,} samples of {n_choices} {choices} would "
                         f"hold {cells * 9 / 1e9:.1f} GB of results; at most {MAX_CELLS:,} "
                         f"samples x {choices} (fewer samples or {choices})")
    if isinstance(seed, bool) or not isinstance(seed, int | np.integer) \
            or not 0 <= seed < 2**63:
        raise InputError(f"monte_carlo: seed must be a whole number from 0 to 2**63 - 1; got "
                         f"{seed!r}")
    for name in _check_distributions(distributions):
        check_name(name)
    rng = np.random.default_rng(int(seed))
    values = {name: _draw(dist, name, rng, int(n)) for name, dist in distributions.items()}
    if "horizon" in values:  # whole years: a sampled horizon is rounded to the nearest year
        values["horizon"] = np.round(values["horizon"])
    for name, arr in values.items():
        INPUTS[name.split(":")[0]].check(arr, f"uncertainty.{name}: sampled ")
    return values


def _samples(d: _Decision, distributions: dict[str, Any], n: Any,
             seed: Any) -> dict[str, np.ndarray]:
    return draw_samples(distributions, n, seed, len(d.labels), d.check_name)


#: Inputs that change the hydraulics of a sample (the rest only scale money).
HYDRAULIC_INPUTS = ("flow_factor", "growth", "aging_factor")


def _evaluate_samples(d: _Decision, values: dict[str, np.ndarray], n: int, size: int,
                      workers: int, bar: Any,
                      series: bool = True) -> tuple[np.ndarray, np.ndarray]:
    """Every sample's figure and feasibility, in chunks of ``size`` samples (one year axis).

    When the friction series apply to the whole batch (:mod:`pipeopt.surrogate`), the chunks
    are whole multiples of :data:`pipeopt.lifecycle.BLOCK` samples, so that every sample is
    computed in the same block of the series' matrix products whatever the chunk size.
    """
    from .lifecycle import BLOCK

    n_years = int(values["horizon"].max()) if "horizon" in values \
        else int(d.base_value("horizon"))
    m_range = (d.series_range(values, n_years) if series and hasattr(d, "series_range")
               else None)
    if m_range is not None:
        size = BLOCK * max(1, -(-size // BLOCK))
    c = len(d.labels)
    value = np.empty((n, c))
    feas = np.empty((n, c), dtype=bool)

    def run_chunk(start: int) -> int:
        stop = min(start + size, n)
        v, f = d.evaluate({k: x[start:stop] for k, x in values.items()}, n_years, m_range)
        value[start:stop], feas[start:stop] = v, f  # disjoint slices: no two chunks share rows
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
    return value, feas


def _chunk_size(study: Any, memory_bytes: float, hydraulic: bool) -> int:
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


# --------------------------------------------------------------------------------------------
# Monte Carlo of a sizing study
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class MonteCarloResult(StudyResult):
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
        Per candidate: ``candidate_index`` (its row in the study's candidates and the column of
        ``eac``), ``material``, ``size``, ``eac_mean`` and quantiles ``eac_p05``, ``eac_p25``,
        ``eac_p50``, ``eac_p75``, ``eac_p95``, ``prob_cheapest`` (cheapest feasible),
        ``prob_infeasible``, ``expected_regret`` (mean EAC above the cheapest feasible, over the
        samples where the candidate is feasible); sorted by probability of being cheapest, then
        mean EAC.
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
    success: bool = True
    message: str = ""

    def headline(self) -> str:
        top = self.candidates.iloc[0]
        return (f"{self.n} samples (seed {self.seed}); most often cheapest "
                f"{top['material']} {top['size']} (P = {top['prob_cheapest']:.3f})")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Monte Carlo": self.candidates.head(10), "Rank correlation": self.correlation}

    def text(self) -> str:
        top = self.candidates.head(6)
        lines = [f"Monte Carlo: {self.n} samples (seed {self.seed}); chosen at base: "
                 f"{self.chosen}; EAC and regret in {self.currency or 'currency'}/yr",
                 f"{'candidate':<30}{'P(cheapest)':>12}{'P(infeasible)':>14}{'EAC p05':>13}"
                 f"{'p50':>13}{'p95':>13}{'regret':>11}"]
        for _, r in top.iterrows():
            lines.append(f"{r['material'] + ' ' + r['size']:<30}{r['prob_cheapest']:>12.3f}"
                         f"{r['prob_infeasible']:>14.3f}"
                         f"{r['eac_p05']:>13,.0f}{r['eac_p50']:>13,.0f}{r['eac_p95']:>13,.0f}"
                         f"{r['expected_regret']:>11,.0f}")
        lines += ["regret: mean EAC above the cheapest feasible candidate, over the samples",
                  "in which the candidate itself is feasible (read it with P(infeasible))"]
        lines.append("Rank correlation of the inputs with the chosen design's EAC:")
        lines += [f"  {r['input']:<30}{r['spearman']:+.3f}"
                  for _, r in self.correlation.iterrows()]
        if self.prob_none_feasible:
            lines.append(f"No candidate feasible in {self.prob_none_feasible:.1%} of samples.")
        return "\n".join(lines)


def monte_carlo(study: Any, distributions: dict[str, Any], n: int = 10000, seed: int = 0,
                progress: bool | None = None, memory: float = 64e6,
                workers: int = 1, friction_series: bool = True) -> MonteCarloResult:
    """Monte Carlo of a sizing study: every candidate, every sample, in chunks of samples.

    Parameters
    ----------
    study : SizingStudy
    distributions : dict of str to distribution
        Input name to :class:`Uniform`, :class:`Triangular`, :class:`Normal`,
        :class:`LogNormal` or a frozen scipy.stats distribution; the inputs are sampled in the
        order given.
    n : int
        Number of samples, 2 to :data:`MAX_SAMPLES`.
    seed : int
        Seed of :func:`numpy.random.default_rng`; the same seed gives the same results.
    progress : bool, optional
        Show a progress bar (default: when standard error is a terminal).
    memory : float
        Rough bound on the working memory of one chunk [bytes] (a few samples per chunk keep
        the arrays in cache).
    workers : int
        Threads evaluating chunks side by side; results do not depend on it.
    friction_series : bool
        Where the flows vary by sample, fit the friction factor of each candidate, year and
        duty point as a Chebyshev series in the flow multiplier once for the batch
        (:mod:`pipeopt.surrogate`; error bound 1e-14, candidates outside it solved directly)
        instead of solving Colebrook-White for every sample (False: the reference path, some
        twenty times slower; the two agree to about 1e-14 in EAC).

    Returns
    -------
    MonteCarloResult
    """
    d = _decision(study)
    if d.kind != "sizing":
        raise InputError("monte_carlo: for a sizing study (upgrade studies: "
                         "upgrade_monte_carlo)")
    values = _samples(d, distributions, n, seed)
    chosen, _ = d.base_choice()
    size = _chunk_size(study, memory, any(k in HYDRAULIC_INPUTS for k in distributions))
    bar = _progress(n, progress if n > 2000 or progress else False, "Monte Carlo")
    eac, feas = _evaluate_samples(d, values, n, size, workers, bar, friction_series)
    c = eac.shape[1]
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
        "candidate_index": np.arange(c), "material": study.candidates["material"],
        "size": study.candidates["size"], "eac_mean": eac.mean(axis=0), "eac_p05": q[0],
        "eac_p25": q[1], "eac_p50": q[2], "eac_p75": q[3], "eac_p95": q[4],
        "prob_cheapest": counts / n, "prob_infeasible": 1.0 - feas.mean(axis=0),
        "expected_regret": exp_regret})
    table = table.sort_values(["prob_cheapest", "eac_mean"], ascending=[False, True],
                              kind="stable").reset_index(drop=True)
    from scipy import stats

    corr = []
    for name, col in values.items():
        rho = stats.spearmanr(col, eac[:, chosen]).statistic if np.ptp(col) > 0 else np.nan
        corr.append({"input": name, "spearman": float(rho)})
    corr_df = pd.DataFrame(corr).sort_values("spearman", key=np.abs, ascending=False,
                                             kind="stable").reset_index(drop=True)
    return MonteCarloResult(int(n), int(seed), pd.DataFrame(values), eac, feas, table,
                            _label(d, chosen), corr_df, float(none.mean()), study.currency,
                            message=f"{int(n)} samples of {len(distributions)} input(s)")


# --------------------------------------------------------------------------------------------
# Monte Carlo of an upgrade study
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class UpgradeMonteCarloResult(StudyResult):
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
        Per option: mean and quantiles of the NPV (``npv_mean``, ``npv_p05``, ``npv_p50``,
        ``npv_p95``), ``prob_positive`` (the option saves money) and ``prob_best`` (it has
        the least PV of all options, keep included).
    """

    n: int
    seed: int
    inputs: pd.DataFrame
    npv: pd.DataFrame = field(repr=False)
    summary: pd.DataFrame = field(repr=False)
    currency: str = ""
    success: bool = True
    message: str = ""

    def headline(self) -> str:
        top = self.summary.sort_values("prob_best", ascending=False).iloc[0]
        return (f"{self.n} samples (seed {self.seed}); most often best {top['option']} "
                f"(P = {top['prob_best']:.3f})")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Upgrade Monte Carlo": self.summary}

    def text(self) -> str:
        lines = [f"Upgrade Monte Carlo: {self.n} samples (seed {self.seed}); NPV against "
                 f"keeping the line in {self.currency or 'currency'}",
                 f"{'option':<20}{'NPV p05':>14}{'p50':>14}{'p95':>14}{'P(NPV>0)':>10}"
                 f"{'P(best)':>9}"]
        for _, r in self.summary.iterrows():
            lines.append(f"{r['option']:<20}{r['npv_p05']:>14,.0f}{r['npv_p50']:>14,.0f}"
                         f"{r['npv_p95']:>14,.0f}{r['prob_positive']:>10.3f}"
                         f"{r['prob_best']:>9.3f}")
        return "\n".join(lines)


def upgrade_monte_carlo(study: Any, distributions: dict[str, Any], n: int = 10000,
                        seed: int = 0, progress: bool | None = None,
                        chunk: int = 5000) -> UpgradeMonteCarloResult:
    """Monte Carlo of an upgrade study: the NPV of each option against keeping the line.

    Inputs: the names of :data:`pipeopt.variations.UPGRADE_INPUTS`. Samples are evaluated in
    chunks of ``chunk`` (every option and keep at once per chunk), each with its own horizon.
    """
    d = _decision(study)
    if d.kind != "upgrade":
        raise InputError("upgrade_monte_carlo: for an upgrade study")
    values = _samples(d, distributions, n, seed)
    bar = _progress(n, progress if n > 2000 or progress else False, "Upgrade Monte Carlo")
    pv, _ = _evaluate_samples(d, values, n, max(1, int(chunk)), 1, bar)
    labels = d.labels
    npv = pd.DataFrame({name: pv[:, 0] - pv[:, j] for j, name in enumerate(labels) if j > 0})
    best = np.argmin(pv, axis=1)
    rows = []
    for j, name in enumerate(labels):
        if j == 0:
            continue
        col = npv[name].to_numpy()
        q = np.quantile(col, [0.05, 0.5, 0.95])
        rows.append({"option": name, "npv_mean": col.mean(), "npv_p05": q[0], "npv_p50": q[1],
                     "npv_p95": q[2], "prob_positive": float((col > 0).mean()),
                     "prob_best": float((best == j).mean())})
    rows.append({"option": "keep", "npv_mean": 0.0, "npv_p05": 0.0, "npv_p50": 0.0,
                 "npv_p95": 0.0, "prob_positive": 0.0, "prob_best": float((best == 0).mean())})
    return UpgradeMonteCarloResult(int(n), int(seed), pd.DataFrame(values), npv,
                                   pd.DataFrame(rows), study.currency,
                                   message=f"{int(n)} samples of {len(distributions)} input(s)")


# --------------------------------------------------------------------------------------------
# study-file section
# --------------------------------------------------------------------------------------------
def read_uncertainty_section(data: Any, study: str, materials: tuple[str, ...] = ()
                             ) -> dict[str, Any]:
    """Read an ``[uncertainty]`` table: ``samples``, ``seed`` and one table per input.

    ``study`` is ``"sizing"`` or ``"upgrade"`` (which inputs are allowed); ``materials`` the
    materials ``pipe_cost_factor:<material>`` may name. Example::

        [uncertainty]
        samples = 5000
        seed = 7
        energy_price = { distribution = "triangular", low = 0.10, mode = 0.14, high = 0.22 }
        discount_rate = { distribution = "uniform", low = 0.03, high = 0.08 }
        flow_factor = { distribution = "normal", mean = 1.0, sd = 0.1, low = 0.7, high = 1.3 }
    """
    from .studyfile import Section, StudyFileError

    if not isinstance(data, dict):
        raise StudyFileError("uncertainty: expected a table ([uncertainty])")
    sec = Section(data, "uncertainty", tuple(data))
    out: dict[str, Any] = {
        "samples": int(sec.number("samples", 2000, low=2, high=MAX_SAMPLES, integer=True)),
        "seed": int(sec.number("seed", 0, low=0, high=2**53, integer=True)),
        "distributions": {}}
    params = {"uniform": ("low", "high"), "triangular": ("low", "mode", "high"),
              "normal": ("mean", "sd", "low", "high"), "lognormal": ("median", "sigma")}
    for name, spec in data.items():
        if name in ("samples", "seed"):
            continue
        key = sec.key(name)
        try:
            check_input_name(name, study, materials)
        except InputError as exc:
            raise StudyFileError(f"{key}: {exc}") from None
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
