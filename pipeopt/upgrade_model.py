"""Cash flows of acting on an existing line (model layer): keep, reline, replace, duplicate.

The arithmetic of an upgrade study, on SI arrays over samples S, years of action A and study
years. Conventions: study years t = 1 … N start now; an action in year a (0 … N − 1) spends its
capital at time a and the new state serves from year a + 1; the old line ages from now at its
rate (times the sample's aging factor); the new state ages from its first year of service.

Cash flows of year t (rows of a :class:`~pipeopt.cashflow.CashFlows`, t = 0 … N_s):

- ``capital``: the option's capital at t = a; ``cleaning``: the cleaning before a reline, at a;
- ``station``: pump-station stages bought and renewed (when the study has a station), each
  option's station sized on its own peak demand;
- ``energy_cost``: E_t p (1 + e)^(t−1) + d P̂_t, with the hydraulics of the old line up to a and
  of the new state after it (a duplicate shares the flow with the old line at equal head loss);
- ``breaks``: the old line's breaks N0 e^{A t} integrated over each year
  (:func:`pipeopt.renewal.break_counts`) times the cost of a repair, times the option's break
  share after the action; ``leakage``: L0 (1 + g_L)^(t−1), times the option's leakage share;
- ``maintenance``: the option's yearly fraction of its capital after the action, plus the
  station's maintenance;
- ``residual``: a credit at the horizon, the straight-line residual value of the option's
  capital and of the station.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .cashflow import CashFlows, Timeline, station_stages
from .economics import growth_factors, straight_line_residual
from .hydraulics import parallel_split, pipe_hydraulics, pumping
from .renewal import break_counts

__all__ = ["LineState", "ExistingCondition", "upgrade_cash_flows", "ROWS"]

#: The rows of an upgrade cash-flow table, in order.
ROWS = ("capital", "cleaning", "station", "energy_cost", "breaks", "leakage", "maintenance",
        "residual")


@dataclass(frozen=True)
class ExistingCondition:
    """The existing line now, SI: bore [m], roughness [m], aging [m/yr], breaks per year now,
    cost of a repair, leakage cost per year now and its growth [1/yr]."""

    bore: float
    roughness: float
    aging: float
    breaks_per_year: float
    break_cost: float
    leakage_cost: float
    leakage_growth: float


@dataclass(frozen=True)
class LineState:
    """The line after an action, SI.

    Attributes
    ----------
    kind : {"reline", "replace", "duplicate"}
    diameter : float
        Bore after the action (the new line's, for a duplicate) [m].
    roughness, aging : float
        Its roughness [m] and aging rate [m/yr] from the first year of service.
    minor_loss_k : float
        ΣK of the new line (a duplicate) or of the line [-].
    capital, cleaning : float
        Capital of the action and of cleaning before a reline [currency].
    life : float
        Life of the new asset for its residual value [yr].
    maintenance : float
        Yearly maintenance as a fraction of the capital [1/yr].
    break_share, leakage_share : float
        Shares of the old line's breaks and leakage that continue after the action [-].
    """

    kind: str
    diameter: float
    roughness: float
    aging: float
    minor_loss_k: float
    capital: float
    cleaning: float
    life: float
    maintenance: float
    break_share: float
    leakage_share: float


def _hydraulics(s: Any, ex: ExistingCondition, state: LineState | None,
                action_years: np.ndarray, v: dict[str, np.ndarray],
                n_years: int) -> dict[str, np.ndarray]:
    """Head loss, velocity, pump head, energy and peak of every sample, action year and year.

    Arrays (S, A, N, K) and (S, A, N); A = 1 for keeping the line.
    """
    m = s.duty.multipliers(n_years, growth=v["growth"], flow_factor=v["flow_factor"])  # (S, N)
    q = s.duty.flow_array[None, None, None, :] * m[:, None, :, None]       # (S, 1, N, K)
    yrs = np.arange(n_years)
    eps_old = (ex.roughness + ex.aging * v["aging_factor"][:, None] * yrs[None, :])  # (S, N)
    old = pipe_hydraulics(s, ex.bore, eps_old[:, None, :, None], q)
    h, velocity = old["head_loss"], old["velocity"]
    if state is not None:
        t = np.arange(1, n_years + 1)
        age_new = np.maximum(t[None, :] - action_years[:, None] - 1, 0)          # (A, N)
        eps_new = (state.roughness + state.aging * age_new)[None, :, :, None]    # (1, A, N, 1)
        q_a = np.broadcast_to(q, (q.shape[0], action_years.size) + q.shape[2:])
        if state.kind == "duplicate":
            lines = [{"diameter": ex.bore, "roughness": eps_old[:, None, :, None],
                      "length": s.length, "minor_loss_k": s.minor_loss_k},
                     {"diameter": state.diameter, "roughness": eps_new, "length": s.length,
                      "minor_loss_k": state.minor_loss_k}]
            old_h, new_h = parallel_split(s, lines, q_a)
            h_new = new_h["head_loss"]
            v_new = np.maximum(old_h["velocity"], new_h["velocity"])
        else:
            new = pipe_hydraulics(s, state.diameter, eps_new, q_a)
            h_new, v_new = new["head_loss"], new["velocity"]
        after = (t[None, :] > action_years[:, None])[None, :, :, None]          # (1, A, N, 1)
        h = np.where(after, h_new, h)
        velocity = np.where(after, v_new, velocity)
    eta = v["efficiency"][:, None, None, None]
    hours = v["hours_factor"][:, None, None, None]
    head, energy, peak = pumping(s, h, q, efficiency=eta, hours_factor=hours)
    return {"head_loss": h, "velocity": velocity, "head": head, "energy": energy, "peak": peak}


def upgrade_cash_flows(s: Any, ex: ExistingCondition, state: LineState | None,
                       action_years: Any, v: dict[str, np.ndarray],
                       timeline: Timeline) -> tuple[CashFlows, dict[str, np.ndarray]]:
    """Yearly cash flows of keeping the line (``state`` None) or of one action.

    Parameters
    ----------
    s : Scenario
        Fluid, friction method, line (length, static head, ΣK), duty, tariff, pump station.
    ex : ExistingCondition
        The existing line now.
    state : LineState or None
        The state after the action; None keeps the line.
    action_years : array_like of int, shape (A,)
        Years of action (0 = now), each before every sample's horizon.
    v : dict of ndarray
        Named inputs per sample, (S,) each (:meth:`pipeopt.variations.Variations.resolved`).
    timeline : Timeline
        The samples' horizons and discount rates.

    Returns
    -------
    CashFlows
        Rows :data:`ROWS`, shape (S, A, N_max + 1).
    dict of ndarray
        ``energy_kwh`` and ``peak_kw`` (S, A, N_max), ``velocity_max`` and ``head_max``
        (S, A) within each sample's horizon.
    """
    a = np.atleast_1d(np.asarray(action_years, dtype=int))
    n = timeline.n_max
    hyd = _hydraulics(s, ex, state, a, v, n)
    live = timeline.live[:, None, 1:]                                           # (S, 1, N)
    energy = hyd["energy"] * live
    peak = hyd["peak"] * live
    col = (slice(None), None, None)
    price = s.tariff.price_by_year(n, v["energy_price"], v["escalation"])       # (S, N)
    zero = np.zeros((timeline.size, a.size, n + 1))

    def years_1_to_n(x: np.ndarray) -> np.ndarray:
        out = zero.copy()
        out[..., 1:] = x
        return out

    energy_cost = years_1_to_n(energy * price[:, None, :] + v["demand_charge"][col] * peak)
    old_breaks = (break_counts(ex.breaks_per_year, v["break_growth"], n)
                  * ex.break_cost * v["break_cost_factor"][:, None])            # (S, N)
    old_leak = (ex.leakage_cost * v["leakage_cost_factor"][:, None]
                * growth_factors(ex.leakage_growth, n)[None, :])                # (S, N)
    t = timeline.years[None, None, :]
    at_action = t == a[None, :, None]                                           # (1, A, N+1)
    at_end = t == timeline.horizon[:, None, None]                               # (S, 1, N+1)
    after = timeline.after(np.broadcast_to(a, (timeline.size, a.size)))        # (S, A, N+1)
    rows = {k: zero for k in ROWS}
    if state is None:
        rows["breaks"] = years_1_to_n(old_breaks[:, None, :] * live)
        rows["leakage"] = years_1_to_n(old_leak[:, None, :] * live)
    else:
        cap = state.capital * v["capital_factor"]                               # (S,)
        rows["capital"] = cap[col] * at_action
        rows["cleaning"] = state.cleaning * v["capital_factor"][col] * at_action
        share_b = np.where(after[..., 1:], state.break_share, 1.0)
        share_l = np.where(after[..., 1:], state.leakage_share, 1.0)
        rows["breaks"] = years_1_to_n(old_breaks[:, None, :] * share_b * live)
        rows["leakage"] = years_1_to_n(old_leak[:, None, :] * share_l * live)
        rows["maintenance"] = state.maintenance * cap[col] * after
        age = timeline.horizon[:, None] - a[None, :]                            # (S, A)
        residual = cap[:, None] * np.asarray(straight_line_residual(age, state.life))
        rows["residual"] = -residual[..., None] * at_end
    rows["energy_cost"] = energy_cost
    if s.pump_station is not None:
        st = station_stages(s.pump_station, hyd["peak"] * live, timeline,
                            v["station_cost_factor"])
        y = st.yearly(s.pump_station.maintenance)
        rows["station"] = y["capital"] + y["renewal"]
        rows["maintenance"] = rows["maintenance"] + y["maintenance"]
        rows["residual"] = rows["residual"] - y["residual"][..., None] * at_end
    last = timeline.horizon - 1
    v_max = np.maximum.accumulate(hyd["velocity"].max(axis=-1), axis=-1)
    h_max = np.maximum.accumulate(hyd["head"].max(axis=-1), axis=-1)
    idx = np.arange(timeline.size)
    extra = {"energy_kwh": energy, "peak_kw": peak, "velocity_max": v_max[idx, :, last],
             "head_max": h_max[idx, :, last]}
    return CashFlows(timeline, rows), extra
