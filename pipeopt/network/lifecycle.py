"""Life-cycle cost of network designs (model layer): pipe capital, pump station, energy.

The money model of a sizing study, applied to a whole network, and built on the same engine
(:mod:`pipeopt.cashflow`): the pipes are bought at t = 0; where a source is pumped, the pump
station is built in stages (:attr:`~pipeopt.costs.PumpStationCost.stages`, one by default),
each sized for the largest electrical demand until the next stage (with its standby) and bought
again at the end of each of its lives within the horizon (:func:`~pipeopt.cashflow.station_stages`);
energy is paid every year at the escalated price plus the demand charge on the year's peak;
maintenance is a fixed fraction of the pipe capital and of the stages in service; straight-line
residual values are credited at the horizon; every amount is discounted at the real rate to
t = 0 by a :class:`~pipeopt.cashflow.Timeline`, and EAC = PV × CRF. The yearly rows
(:class:`~pipeopt.cashflow.CashFlows`) reconcile to the present value. A gravity-fed network
(no pumped source) costs its pipe capital only and needs none of this.

With :class:`~pipeopt.variations.Variations` every sample has its own inputs (energy price,
escalation, demand charge, discount rate, horizon, efficiency, hours factor, pipe and station
cost factors) and its own horizon; arrays then carry a leading sample axis.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..cashflow import CashFlows, Timeline, purchases, station_stages
from ..costs import EnergyTariff, PumpStationCost
from ..duty import DutyProfile
from ..economics import straight_line_residual
from ..errors import InputError
from ..variations import INPUTS, NamedInputs, Variations

__all__ = ["NetworkEconomics", "NetworkLifeCycle", "life_cycle", "year_weights",
           "NETWORK_INPUTS"]

#: The named inputs (:data:`pipeopt.variations.INPUTS`) a network's life-cycle cost takes:
#: ``flow_factor`` multiplies every node's demand, ``growth`` is the demands' yearly growth.
NETWORK_INPUTS = ("energy_price", "escalation", "demand_charge", "discount_rate", "horizon",
                  "efficiency", "growth", "flow_factor", "hours_factor", "pipe_cost_factor",
                  "station_cost_factor")


@dataclass(frozen=True)
class NetworkEconomics(NamedInputs):
    """The economic inputs of a pumped network, SI and money.

    Attributes
    ----------
    duty : DutyProfile
        Duty points (hours per year of each) and the growth of every demand (with its design
        year and cap); its flows are the network's total demand at each duty point [m³/s].
    efficiency : float
        Wire-to-water efficiency of the pumps η [-].
    tariff : EnergyTariff
        Energy price, escalation and demand charge.
    pump_station : PumpStationCost or None
        Station capital model and stages; None means no station capital.
    discount_rate : float
        Real discount rate i [1/yr].
    horizon : int
        Analysis horizon N [yr].
    pipe_life : float
        Pipe service life T_p [yr].
    pipe_maintenance : float
        Pipe maintenance per year as a fraction of pipe capital [1/yr].
    """

    duty: DutyProfile
    efficiency: float
    tariff: EnergyTariff
    pump_station: PumpStationCost | None
    discount_rate: float
    horizon: int
    pipe_life: float
    pipe_maintenance: float = 0.0

    def __post_init__(self) -> None:
        # the rules of the named inputs these stand for (one rule, one message)
        for name, section in (("efficiency", "pumping."), ("discount_rate", "economics."),
                              ("horizon", "economics.")):
            INPUTS[name].check(np.asarray(getattr(self, name), dtype=float), section)

    @property
    def years(self) -> int:
        """Years whose hydraulics differ: N when demands grow, else 1 (every year alike)."""
        return int(self.horizon) if self.duty.grows else 1


    def timeline(self, variations: Variations | None = None) -> Timeline:
        """The study years of the base case, or of every sample of ``variations``."""
        if variations is None:
            return _base_timeline(float(self.discount_rate), int(self.horizon))
        v = self.resolve(variations)
        return Timeline(v["discount_rate"], v["horizon"], variations.n_years)


@functools.lru_cache(maxsize=64)
def _base_timeline(rate: float, horizon: int) -> Timeline:
    """The timeline of one study (cached: the searches price many batches of one study)."""
    return Timeline(rate, horizon)


def year_weights(econ: NetworkEconomics) -> dict[str, Any]:
    """Present-value weights of every amount of the model, for the exact (linear) programme.

    Returns
    -------
    dict
        ``energy`` (N,): PV of one kWh used in year t [currency/kWh];
        ``demand`` (N,): PV of one kW of peak demand in year t [currency/kW];
        ``pipe``: PV of everything one unit of pipe capital brings (itself, maintenance, minus
        the residual) [-];
        ``station`` (J,): the same for one unit of capital of each station stage built within
        the horizon (itself, renewals, maintenance while in service, minus the residual) [-];
        ``stage_last`` (J,): the last year of the peaks each stage is sized for [yr].

    Examples
    --------
    >>> from pipeopt.costs import EnergyTariff
    >>> from pipeopt.duty import DutyProfile
    >>> econ = NetworkEconomics(DutyProfile(["0.1 m^3/s"], [8760.0]), 1.0, EnergyTariff(0.1),
    ...                         None, 0.0, 10, 50.0)
    >>> w = year_weights(econ)
    >>> round(float(w["energy"].sum()), 12), round(w["pipe"], 12)
    (1.0, 0.2)
    """
    tl = econ.timeline()
    n = int(econ.horizon)
    run = tl.running[0, 1:]                                                    # (N,)
    pipe = float(1.0 + econ.pipe_maintenance * tl.annuity[0]
                 - straight_line_residual(n, econ.pipe_life) * tl.end_factor[0])
    out: dict[str, Any] = {"energy": run * econ.tariff.price_by_year(n),
                           "demand": run * econ.tariff.demand_charge, "pipe": pipe,
                           "station": np.zeros(0), "stage_last": np.zeros(0, dtype=int)}
    ps = econ.pump_station
    if ps is not None:
        b = np.asarray(ps.stages, dtype=int)
        built = b < n
        w = purchases(tl, b[built], ps.life).weights(tl)
        out["station"] = (w["first"] + w["renewal"] + ps.maintenance * w["maintenance"]
                          - w["residual"])[0]
        out["stage_last"] = np.minimum(np.append(b[built][1:], n), n)
    return out


@dataclass
class NetworkLifeCycle:
    """Life-cycle cost of a batch of designs: arrays over designs (B,), years (B, N).

    With variations, every array has a leading sample axis: (S, B) and (S, B, N). Money is in
    the study currency, present values at t = 0.

    Attributes
    ----------
    capex_pipe : ndarray
        Capital of the new pipes, at t = 0.
    capex_pump_station : ndarray
        Capital of every station stage, undiscounted.
    pv_pump_station : ndarray
        The stages' first purchases, discounted.
    installed_power_kw : ndarray
        Installed power of the last stage, standby included [kW].
    pv_energy, pv_maintenance, pv_replacement : ndarray
        Present values of the energy bill, maintenance and station renewals.
    pv_residual : ndarray
        Present value of the residual values (a credit: subtracted in ``pv_total``).
    pv_total, eac : ndarray
        Present value of the life-cycle cost and its equivalent annual cost [currency/yr].
    energy_kwh, peak_kw, energy_cost : ndarray
        Energy [kWh], peak electrical demand [kW] and energy bill of years 1 … N (zero beyond
        a sample's own horizon).
    cash_flows : CashFlows or None
        Yearly rows t = 0 … N that reconcile to ``pv_total`` (``yearly=True``).
    """

    capex_pipe: np.ndarray
    capex_pump_station: np.ndarray
    pv_pump_station: np.ndarray
    installed_power_kw: np.ndarray
    pv_energy: np.ndarray
    pv_maintenance: np.ndarray
    pv_replacement: np.ndarray
    pv_residual: np.ndarray
    pv_total: np.ndarray
    eac: np.ndarray
    energy_kwh: np.ndarray
    peak_kw: np.ndarray
    energy_cost: np.ndarray
    cash_flows: CashFlows | None = None


def life_cycle(econ: NetworkEconomics, pipe_capital: Any, power_kw: Any,
               variations: Variations | None = None, yearly: bool = False) -> NetworkLifeCycle:
    """Life-cycle cost of designs from their pipe capital and pumping power.

    Parameters
    ----------
    econ : NetworkEconomics
    pipe_capital : array_like, shape (B,)
        Capital of the new pipes of each design [currency].
    power_kw : array_like, shape (B, T, K) or (S, B, T, K)
        Electrical power of all pumps together at each duty point K in each year, at the
        study's efficiency [kW]; T = 1 when every year is alike, else at least the longest
        horizon. A leading sample axis when the demands differ between samples.
    variations : Variations, optional
        Per-sample named inputs (:data:`NETWORK_INPUTS`); the arrays then have a leading
        sample axis.
    yearly : bool
        Also build the yearly cash-flow rows (``cash_flows``).

    Returns
    -------
    NetworkLifeCycle

    Examples
    --------
    >>> from pipeopt.costs import EnergyTariff
    >>> from pipeopt.duty import DutyProfile
    >>> econ = NetworkEconomics(DutyProfile(["0.1 m^3/s"], [8760.0]), 1.0, EnergyTariff(0.1),
    ...                         None, 0.0, 10, 50.0)
    >>> lc = life_cycle(econ, [1000.0], [[[1.0]]])
    >>> round(float(lc.pv_energy[0]), 6), round(float(lc.pv_residual[0]), 6)
    (8760.0, 800.0)
    """
    cap0 = np.atleast_1d(np.asarray(pipe_capital, dtype=float))
    p = np.asarray(power_kw, dtype=float)
    if p.ndim == 3:
        p = p[None]
    if p.ndim != 4 or p.shape[1] != cap0.shape[0]:
        raise InputError("power_kw must have the shape (designs, years, duty points) or "
                         "(samples, designs, years, duty points)")
    v = econ.resolve(variations)
    tl = econ.timeline(variations)
    n = tl.n_max
    if p.shape[2] == 1:
        p = np.broadcast_to(p, p.shape[:2] + (n, p.shape[3]))
    elif p.shape[2] < n:
        raise InputError(f"power_kw has {p.shape[2]} years; the horizon is {n}")
    p = p[:, :, :n, :]
    col = (slice(None), None)
    scale = econ.efficiency / v["efficiency"]                                  # (S,)
    hours = econ.duty.hours_array[None, :] * v["hours_factor"][:, None]        # (S, K)
    live = tl.live[:, None, 1:]                                                # (S, 1, N)
    energy = ((p * hours[:, None, None, :]).sum(axis=3) * scale[:, None, None]) * live
    peak = p.max(axis=3) * scale[:, None, None] * live                         # (S, B, N)
    price = econ.tariff.price_by_year(n, v["energy_price"], v["escalation"])   # (S, N)
    energy_cost = energy * price[:, None, :] + v["demand_charge"][:, None, None] * peak
    pv_energy = np.einsum("sbt,st->sb", energy_cost, tl.factor[:, 1:])
    cap = cap0[None, :] * v["pipe_cost_factor"]                                # (S, B)
    zero = np.zeros_like(cap)
    pv_st = {"capital": zero, "renewal": zero, "maintenance": zero, "residual": zero}
    capex_ps, installed, stages = zero, zero, None
    if econ.pump_station is not None:
        # the peaks at the study's efficiency, rescaled per sample inside
        stages = station_stages(econ.pump_station, p.max(axis=3), tl,
                                v["station_cost_factor"], scale=scale)
        pv_st = stages.present_values(econ.pump_station.maintenance)
        capex_ps, installed = stages.capital.sum(axis=-1), stages.installed
    pipe_residual = cap * np.asarray(straight_line_residual(tl.horizon, econ.pipe_life))[col]
    pv_maintenance = econ.pipe_maintenance * cap * tl.annuity[col] + pv_st["maintenance"]
    pv_residual = pipe_residual * tl.end_factor[col] + pv_st["residual"]
    pv_total = (cap + pv_st["capital"] + pv_energy + pv_maintenance + pv_st["renewal"]
                - pv_residual)
    flows = None
    if yearly:
        at_start = (tl.years == 0)[None, None, :]
        at_end = tl.years[None, None, :] == tl.horizon[:, None, None]
        st = (stages.yearly(econ.pump_station.maintenance) if stages is not None else
              {"capital": 0.0, "renewal": 0.0, "maintenance": 0.0, "residual": zero})
        flows = CashFlows(tl, {
            "capital_pipe": cap[..., None] * at_start,
            "capital_station": st["capital"],
            "station_renewal": st["renewal"],
            "energy": np.concatenate([np.zeros(energy_cost.shape[:2] + (1,)), energy_cost],
                                     axis=-1),
            "maintenance": (econ.pipe_maintenance * cap[..., None] * tl.live[:, None, :]
                            + st["maintenance"]),
            "residual": -(pipe_residual + st["residual"])[..., None] * at_end,
        })
    out = NetworkLifeCycle(
        capex_pipe=cap, capex_pump_station=np.broadcast_to(capex_ps, cap.shape),
        pv_pump_station=pv_st["capital"], installed_power_kw=np.broadcast_to(installed,
                                                                             cap.shape),
        pv_energy=pv_energy, pv_maintenance=pv_maintenance, pv_replacement=pv_st["renewal"],
        pv_residual=pv_residual, pv_total=pv_total, eac=pv_total * tl.crf[col],
        energy_kwh=energy, peak_kw=peak, energy_cost=energy_cost, cash_flows=flows)
    if variations is None:  # one scenario: drop the sample axis
        for name, value in vars(out).items():
            if name != "cash_flows":
                setattr(out, name, np.asarray(value)[0])
    return out
