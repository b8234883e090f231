"""The money engine (model layer): study years, discounting, purchases, residuals, cash flows.

One place for the arithmetic every study shares, built on the tested helpers of
:mod:`pipeopt.economics`:

- :class:`Timeline`: study years t = 0 … N_max for S samples, each sample with its *own* horizon
  N_s and discount rate i_s: discount factors (1 + i_s)^−t, the mask of the years a sample
  lives through, its capital recovery factor;
- :func:`purchases`: assets built in given years and bought again at the end of each life while
  t < N_s (a pump station and its stages), with the straight-line residual value each leaves at
  the horizon;
- :func:`station_stages`: the capital of each stage of a pump station, each sized for the
  largest demand until the next stage within the sample's own horizon;
- :class:`CashFlows`: named yearly rows (capital, energy, maintenance, residual, ...) over
  t = 0 … N, their total, their discounted values and present value; a table that reconciles
  to the present value by construction.

Conventions: capital of year 0 is spent now; running costs of year t at its end; every amount
is real (constant money) and discounted at the real rate; years beyond a sample's horizon hold
nothing.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import TYPE_CHECKING, Any

import numpy as np

from .economics import capital_recovery_factor, discount_factor, straight_line_residual
from .errors import InputError

if TYPE_CHECKING:  # pandas loads where a table is made
    import pandas as pd

__all__ = ["Timeline", "Purchases", "purchases", "station_stages", "stage_last_years",
           "StationStages", "CashFlows"]


class Timeline:
    """Study years t = 0 … N_max of S samples, each with its own horizon and discount rate.

    Parameters
    ----------
    discount_rate : float or array_like, shape (S,)
        Real discount rate i [1/yr] of each sample.
    horizon : int or array_like, shape (S,)
        Analysis horizon N [yr] of each sample, whole years >= 1.
    n_years : int, optional
        Length of the year axis N_max (default: the longest horizon). A batch split into
        chunks gives every chunk the same axis, so that sums over the years are formed the
        same way whatever the chunk.

    Examples
    --------
    >>> tl = Timeline(0.05, [2, 3])
    >>> tl.factor.round(4).tolist()
    [[1.0, 0.9524, 0.907, 0.8638], [1.0, 0.9524, 0.907, 0.8638]]
    >>> tl.live.astype(int).tolist()
    [[0, 1, 1, 0], [0, 1, 1, 1]]
    """

    def __init__(self, discount_rate: Any, horizon: Any, n_years: int | None = None) -> None:
        rate, n = np.broadcast_arrays(np.atleast_1d(np.asarray(discount_rate, dtype=float)),
                                      np.atleast_1d(np.asarray(horizon, dtype=float)))
        if np.any(n != np.round(n)) or np.any(n < 1):
            raise InputError(f"horizon must be a whole number of years >= 1; got "
                             f"{n[(n != np.round(n)) | (n < 1)][0]!r}")
        self.rate = rate.copy()
        self.horizon = n.astype(int)
        self.n_max = int(self.horizon.max()) if n_years is None else int(n_years)
        if self.n_max < self.horizon.max():
            raise InputError(f"n_years ({n_years}) is shorter than a horizon "
                             f"({int(self.horizon.max())})")
        self.years = np.arange(self.n_max + 1)

    @property
    def size(self) -> int:
        """Number of samples S."""
        return self.horizon.size

    @cached_property
    def factor(self) -> np.ndarray:
        """Discount factors (1 + i_s)^−t, shape (S, N_max + 1)."""
        return np.asarray(discount_factor(self.rate[:, None], self.years[None, :]))

    @cached_property
    def live(self) -> np.ndarray:
        """True in the years 1 … N_s a sample pays running costs, shape (S, N_max + 1)."""
        return (self.years[None, :] >= 1) & (self.years[None, :] <= self.horizon[:, None])

    @cached_property
    def running(self) -> np.ndarray:
        """Discount factors of the running years (0 elsewhere), shape (S, N_max + 1)."""
        return self.factor * self.live

    @cached_property
    def end_factor(self) -> np.ndarray:
        """Discount factor at each sample's horizon, (1 + i_s)^−N_s, shape (S,)."""
        return np.asarray(discount_factor(self.rate, self.horizon))

    @cached_property
    def annuity(self) -> np.ndarray:
        """Present worth of 1 paid at the end of each year 1 … N_s, shape (S,)."""
        return self.running.sum(axis=1)

    @cached_property
    def crf(self) -> np.ndarray:
        """Capital recovery factor of each sample, shape (S,)."""
        return np.asarray(capital_recovery_factor(self.rate, self.horizon))

    def kept(self, key: Any, build: Any) -> Any:
        """``build()``, made once per timeline and ``key`` and then kept.

        For what depends only on the timeline (a purchase schedule, residual shares): the
        timelines of single scenarios are cached (:func:`pipeopt.lifecycle._base_timeline`)
        and evaluated again and again. The value's arrays are made read-only.
        """
        memo = self.__dict__.setdefault("_kept", {})
        if key not in memo:
            value = build()
            for arr in _arrays_in(value):
                arr.flags.writeable = False
            memo[key] = value
        return memo[key]

    def after(self, year: Any) -> np.ndarray:
        """True in the running years later than ``year`` (scalar or (S,) or (S, L)).

        Returns shape (S, N_max + 1) or (S, L, N_max + 1).
        """
        y = np.asarray(year)
        live = self.live if y.ndim < 2 else self.live[:, None, :]
        return live & (self.years > y[..., None])


def _arrays_in(value: Any) -> list[np.ndarray]:
    """The numpy arrays in a value kept by :meth:`Timeline.kept` (nested in tuples, dicts and
    dataclass fields)."""
    if isinstance(value, np.ndarray):
        return [value]
    if isinstance(value, (tuple, list)):
        return [a for v in value for a in _arrays_in(v)]
    if isinstance(value, dict):
        return [a for v in value.values() for a in _arrays_in(v)]
    if hasattr(value, "__dataclass_fields__"):
        return [a for v in vars(value).values() for a in _arrays_in(v)]
    return []


@dataclass
class Purchases:
    """Assets built in given years and bought again every ``life`` years while t < N_s.

    Arrays over samples S, assets J and years t = 0 … N_max.

    Attributes
    ----------
    first : ndarray of bool, shape (S, J, N_max + 1)
        The year each asset is built (none when its build year is not before the horizon).
    renewal : ndarray of bool, shape (S, J, N_max + 1)
        The years it is bought again.
    in_service : ndarray of bool, shape (S, J, N_max + 1)
        The running years after it was built (it pays maintenance then).
    residual_fraction : ndarray, shape (S, J)
        Straight-line share of its capital left at the horizon (the last purchase's).
    """

    first: np.ndarray
    renewal: np.ndarray
    in_service: np.ndarray
    residual_fraction: np.ndarray

    def weights(self, timeline: Timeline) -> dict[str, np.ndarray]:
        """Present worth of 1 of capital per asset: ``first``, ``renewal``, ``maintenance``
        (1 per year in service) and ``residual`` (the credit at the horizon), each (S, J)."""
        f = timeline.factor[:, None, :]
        return {"first": (self.first * f).sum(axis=-1),
                "renewal": (self.renewal * f).sum(axis=-1),
                "maintenance": (self.in_service * f).sum(axis=-1),
                "residual": self.residual_fraction * timeline.end_factor[:, None]}


def purchases(timeline: Timeline, build_years: Any, life: float) -> Purchases:
    """The purchase schedule of assets built in ``build_years`` with a service ``life``.

    An asset built in year b (0 = now) is bought again at b + T, b + 2T, … while the year is
    before the sample's horizon N_s; at the horizon it is credited the straight-line residual
    value of its last purchase, max(0, 1 − (N_s − t_last)/T). An asset whose build year is not
    before the horizon is never built.

    Parameters
    ----------
    timeline : Timeline
    build_years : array_like of int, shape (J,)
        Year each asset is first built.
    life : float
        Service life T [yr], whole years.

    Returns
    -------
    Purchases

    Examples
    --------
    >>> p = purchases(Timeline(0.05, 5), [0], 2)
    >>> p.first[0, 0].astype(int).tolist(), p.renewal[0, 0].astype(int).tolist()
    ([1, 0, 0, 0, 0, 0], [0, 0, 1, 0, 1, 0])
    >>> float(p.residual_fraction[0, 0])
    0.5
    """
    b = np.atleast_1d(np.asarray(build_years, dtype=int))
    if life != int(life) or life < 1:
        raise InputError(f"life must be a whole number of years >= 1; got {life!r}")
    life = int(life)
    t = timeline.years[None, None, :]
    n = timeline.horizon[:, None, None]
    since = t - b[None, :, None]                                                # (1, J, N+1)
    bought = (since >= 0) & (since % life == 0) & (t < n)                       # (S, J, N+1)
    first = bought & (since == 0)
    built = first.any(axis=-1)                                                  # (S, J)
    t_last = np.where(bought, t, -1).max(axis=-1)                               # (S, J)
    age = timeline.horizon[:, None] - t_last
    residual = np.where(built, np.asarray(straight_line_residual(age, life)), 0.0)
    in_service = (since > 0) & timeline.live[:, None, :] & built[..., None]
    return Purchases(first, bought & ~first, in_service, residual)


@dataclass
class StationStages:
    """Pump-station stages of every sample and candidate.

    Attributes
    ----------
    peak : ndarray, shape (S, C, J)
        Peak electrical demand [kW] each stage brings the station up to (cumulative).
    capital : ndarray, shape (S, C, J)
        Capital of each stage [currency] (a · (ΔP (1 + s))^b times the cost factor).
    schedule : Purchases
        When each stage is built and renewed, and its residual share at the horizon.
    weights : dict of ndarray
        :meth:`Purchases.weights` of the schedule, each (S, J).
    """

    peak: np.ndarray
    capital: np.ndarray
    schedule: Purchases
    standby_fraction: float
    weights: dict = field(repr=False)

    @property
    def installed(self) -> np.ndarray:
        """Installed power at the last stage, standby included [kW], shape (S, C)."""
        return self.peak[..., -1] * (1.0 + self.standby_fraction)

    def present_values(self, maintenance: float) -> dict[str, np.ndarray]:
        """PV of first purchases, renewals, maintenance and residual credit, each (S, C)."""
        w = self.weights
        return {"capital": np.einsum("scj,sj->sc", self.capital, w["first"]),
                "renewal": np.einsum("scj,sj->sc", self.capital, w["renewal"]),
                "maintenance": maintenance * np.einsum("scj,sj->sc", self.capital,
                                                       w["maintenance"]),
                "residual": np.einsum("scj,sj->sc", self.capital, w["residual"])}

    def yearly(self, maintenance: float) -> dict[str, np.ndarray]:
        """Yearly capital, renewals, maintenance and residual credit, each (S, C, N_max + 1)."""
        p = self.schedule
        cap = self.capital
        return {"capital": np.einsum("scj,sjt->sct", cap, p.first.astype(float)),
                "renewal": np.einsum("scj,sjt->sct", cap, p.renewal.astype(float)),
                "maintenance": maintenance * np.einsum("scj,sjt->sct", cap,
                                                       p.in_service.astype(float)),
                "residual": np.einsum("scj,sj->sc", cap, p.residual_fraction)}


def stage_last_years(station: Any, timeline: Timeline) -> np.ndarray:
    """Index (year − 1) of the last year each stage is sized for, per sample: (S, J).

    Stage j serves until the year before stage j + 1 is built, the last stage until the
    sample's horizon.
    """
    b = np.asarray(station.stages, dtype=int)
    ends = np.append(b[1:], np.iinfo(np.int64).max)
    return np.minimum(ends[None, :], timeline.horizon[:, None]) - 1


def station_stages(station: Any, peak_kw: np.ndarray | None, timeline: Timeline,
                   cost_factor: Any = 1.0, scale: Any = 1.0,
                   stage_peaks: np.ndarray | None = None) -> StationStages:
    """Size and price the stages of a pump station from the peak demand of every year.

    Stage j, built in year b_j (b_0 = 0), brings the station up to the largest peak demand of
    the years before stage j + 1 is built (the horizon for the last stage), within each
    sample's horizon; its capital is a (ΔP_j (1 + s))^b for the increase ΔP_j it adds.
    One stage (the default) gives a station sized at year 0 for the largest peak of the horizon.

    Parameters
    ----------
    station : PumpStationCost
        Cost model, standby, life, stages.
    peak_kw : ndarray, shape (S_p, C, T)
        Peak electrical demand [kW] in years 1 … T (T = 1: the same every year); S_p is S or 1.
    timeline : Timeline
    cost_factor : float or ndarray, shape (S,)
        Factor on the station capital (sensitivity).
    scale : float or ndarray, shape (S,)
        Factor on ``peak_kw`` of each sample (1/η when the peaks were computed at η = 1).
    stage_peaks : ndarray, shape (S, C, J), optional
        Instead of ``peak_kw``: the largest peak of the years each stage is sized for
        (:func:`stage_last_years`), already known to the caller.

    Returns
    -------
    StationStages
    """
    from .hydraulics import running_max

    b = np.asarray(station.stages, dtype=int)
    if stage_peaks is None:
        last = stage_last_years(station, timeline)                              # (S, J)
        # one running maximum per stage (a handful), each over every sample and candidate
        stage_peaks = np.stack([running_max(peak_kw, last[:, j]) for j in range(b.size)],
                               axis=-1)
    peak = (np.maximum.accumulate(stage_peaks, axis=-1)
            * np.asarray(scale, dtype=float).reshape(-1, 1, 1))
    step = np.diff(peak, axis=-1, prepend=0.0)
    factor = np.asarray(cost_factor, dtype=float).reshape(-1, 1, 1)
    capital = np.asarray(station.capital(step)) * factor

    def schedule_of_stages() -> tuple[Purchases, np.ndarray, dict[str, np.ndarray]]:
        p = purchases(timeline, b, station.life)
        return p, p.first.any(axis=-1)[:, None, :], p.weights(timeline)

    schedule, built, weights = timeline.kept(("stages", tuple(b.tolist()), station.life),
                                             schedule_of_stages)
    capital = capital * built                                     # stages after the horizon
    return StationStages(peak, capital, schedule, station.standby_fraction, weights)


class CashFlows:
    """Named yearly cash flows over t = 0 … N_max, shape (S, L, N_max + 1) each.

    L counts what the rows describe (candidates, options, years of action). Rows are costs
    (positive) and credits (negative: residual value). The total, the discounted rows and the
    present value follow from the rows and the :class:`Timeline`, so a table of the rows always
    reconciles to its present value.

    Parameters
    ----------
    timeline : Timeline
    rows : dict of str to ndarray
        Each broadcasting to (S, L, N_max + 1) [currency].
    """

    def __init__(self, timeline: Timeline, rows: dict[str, Any]) -> None:
        self.timeline = timeline
        shape = np.broadcast_shapes(*(np.shape(r) for r in rows.values()))
        self.rows = {k: np.broadcast_to(np.asarray(v, dtype=float), shape)
                     for k, v in rows.items()}
        self.shape = shape

    @cached_property
    def total(self) -> np.ndarray:
        """Sum of the rows, (S, L, N_max + 1)."""
        return sum(self.rows.values())

    @cached_property
    def discounted(self) -> np.ndarray:
        """Total times the discount factor of its year, (S, L, N_max + 1)."""
        return self.total * self.timeline.factor[:, None, :]

    @cached_property
    def present_value(self) -> np.ndarray:
        """Present value at t = 0, (S, L)."""
        return self.discounted.sum(axis=-1)

    def sample(self, index: int) -> CashFlows:
        """The cash flows of one sample (a timeline of one sample)."""
        tl = Timeline(self.timeline.rate[index], self.timeline.horizon[index])
        n = tl.n_max + 1
        return CashFlows(tl, {k: v[index:index + 1, :, :n] for k, v in self.rows.items()})

    def frame(self, sample: int = 0, item: int = 0, **labels: Any) -> pd.DataFrame:
        """One sample's and item's rows as a table: year, each row, total, discount factor,
        discounted (years 0 … N_s of that sample)."""
        import pandas as pd

        n = int(self.timeline.horizon[sample])
        t = self.timeline.years[: n + 1]
        data: dict[str, Any] = dict(labels)
        data["year"] = t
        for k, v in self.rows.items():
            data[k] = v[sample, item, : n + 1]
        data["total"] = self.total[sample, item, : n + 1]
        data["discount_factor"] = self.timeline.factor[sample, : n + 1]
        data["discounted"] = self.discounted[sample, item, : n + 1]
        return pd.DataFrame(data)
