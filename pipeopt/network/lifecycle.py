"""Life-cycle cost of a network design (model layer): pipe capital, pump station, energy.

The same model as a sizing study, applied to a whole network: the pipes are bought at t = 0;
where a source is pumped, the pump station is sized on the largest electrical demand of any
year (with its standby), bought at t = 0 and again at the end of each of its lives within the
horizon; energy is paid every year at the escalated price plus the demand charge; maintenance
is a fixed fraction of each capital; straight-line residual values are credited at the horizon;
every amount is discounted at the real rate to t = 0 and EAC = PV × CRF. A gravity-fed network
(no pumped source) costs its pipe capital only.

Everything is built from the public model functions :mod:`pipeopt.economics`,
:class:`pipeopt.costs.EnergyTariff`, :class:`pipeopt.costs.PumpStationCost` and
:class:`pipeopt.duty.DutyProfile`; arrays carry a leading axis over designs.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .. import economics as ec
from ..costs import EnergyTariff, PumpStationCost
from ..duty import DutyProfile
from ..errors import InputError

__all__ = ["NetworkEconomics", "NetworkLifeCycle", "life_cycle", "year_weights"]


@dataclass(frozen=True)
class NetworkEconomics:
    """The economic inputs of a pumped network, SI and money.

    Attributes
    ----------
    duty : DutyProfile
        Duty points (hours per year of each) and the yearly growth of every demand; its flows
        are the network's total demand at each duty point [m³/s].
    efficiency : float
        Wire-to-water efficiency of the pumps η [-].
    tariff : EnergyTariff
        Energy price, escalation and demand charge.
    pump_station : PumpStationCost or None
        Station capital model; None means no station capital.
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
        if not 0 < self.efficiency <= 1:
            raise InputError(f"pumping.efficiency must be in (0, 1]; got {self.efficiency!r}")
        if int(self.horizon) != self.horizon or self.horizon < 1:
            raise InputError(f"economics.horizon must be a whole number of years >= 1; got "
                             f"{self.horizon!r}")

    @property
    def years(self) -> int:
        """Years whose hydraulics differ: N when demands grow, else 1 (every year alike)."""
        return int(self.horizon) if self.duty.growth else 1

    def replacement_years(self) -> np.ndarray:
        """Years at which the pump station is bought again: T_s, 2 T_s, … before N."""
        if self.pump_station is None:
            return np.zeros(0)
        life = self.pump_station.life
        return np.arange(life, self.horizon, life)


def year_weights(econ: NetworkEconomics) -> dict[str, np.ndarray | float]:
    """Present-value weights of every yearly amount of the model, shape (N,) or scalars.

    Returns
    -------
    dict
        ``energy`` (N,): PV of one kWh used in year t [currency/kWh];
        ``demand`` (N,): PV of one kW of peak demand in year t [currency/kW];
        ``pipe``: PV of everything one unit of pipe capital brings (itself, maintenance, minus
        the residual) [-]; ``station``: the same for one unit of station capital (itself,
        maintenance, renewals, minus the residual) [-].
    """
    n = int(econ.horizon)
    i = econ.discount_rate
    t = np.arange(1, n + 1)
    disc = np.asarray(ec.discount_factor(i, t))
    annuity = float(ec.present_worth_of_series(1.0, i, n))
    end = float(ec.discount_factor(i, n))
    pipe = 1.0 + econ.pipe_maintenance * annuity - max(0.0, 1.0 - n / econ.pipe_life) * end
    station = 0.0
    if econ.pump_station is not None:
        ps = econ.pump_station
        reps = econ.replacement_years()
        t_last = float(reps[-1]) if reps.size else 0.0
        residual = max(0.0, 1.0 - (n - t_last) / ps.life)
        station = (1.0 + ps.maintenance * annuity
                   + float(np.sum(ec.discount_factor(i, reps))) - residual * end)
    return {"energy": disc * econ.tariff.price_by_year(n),
            "demand": disc * econ.tariff.demand_charge, "pipe": pipe, "station": station}


@dataclass
class NetworkLifeCycle:
    """Life-cycle cost of a batch of designs, arrays over designs (B,) or (B, N).

    Money is in the study currency, present values at t = 0.
    """

    capex_pipe: np.ndarray
    capex_pump_station: np.ndarray
    installed_power_kw: np.ndarray
    pv_energy: np.ndarray
    pv_maintenance: np.ndarray
    pv_replacement: np.ndarray
    pv_residual: np.ndarray          # a credit: subtracted in pv_total
    pv_total: np.ndarray
    eac: np.ndarray
    energy_kwh: np.ndarray           # (B, N)
    peak_kw: np.ndarray              # (B, N)
    energy_cost: np.ndarray          # (B, N)


def life_cycle(econ: NetworkEconomics, pipe_capital: np.ndarray,
               power_kw: np.ndarray) -> NetworkLifeCycle:
    """Life-cycle cost of designs from their pipe capital and pumping power.

    Parameters
    ----------
    econ : NetworkEconomics
    pipe_capital : array_like, shape (B,)
        Capital of the new pipes of each design [currency].
    power_kw : array_like, shape (B, T, K)
        Electrical power of all pumps together at each duty point K in each year [kW];
        T = N (every year), or T = 1 when every year is alike.

    Returns
    -------
    NetworkLifeCycle

    Examples
    --------
    >>> from pipeopt.costs import EnergyTariff
    >>> from pipeopt.duty import DutyProfile
    >>> econ = NetworkEconomics(DutyProfile(["0.1 m^3/s"], [8760.0]), 1.0, EnergyTariff(0.1), None,
    ...                         0.0, 10, 50.0)
    >>> lc = life_cycle(econ, [1000.0], [[[1.0]]])
    >>> round(float(lc.pv_energy[0]), 6), round(float(lc.pv_residual[0]), 6)
    (8760.0, 800.0)
    """
    cap = np.atleast_1d(np.asarray(pipe_capital, dtype=float))
    p = np.asarray(power_kw, dtype=float)
    if p.ndim != 3 or p.shape[0] != cap.shape[0]:
        raise InputError("power_kw must have the shape (designs, years, duty points)")
    n = int(econ.horizon)
    i = econ.discount_rate
    hours = econ.duty.hours_array
    p = np.broadcast_to(p, (p.shape[0], n, p.shape[2])) if p.shape[1] == 1 else p
    if p.shape[1] != n:
        raise InputError(f"power_kw has {p.shape[1]} years; the horizon is {n}")
    energy = (p * hours).sum(axis=2)                                        # (B, N) kWh
    peak = p.max(axis=2)                                                    # (B, N) kW
    energy_cost = econ.tariff.yearly_cost(energy, peak)
    pv_energy = np.atleast_1d(ec.present_value(energy_cost, i))
    capex_ps = np.zeros_like(cap)
    installed = np.zeros_like(cap)
    m_s = 0.0
    residual_ps = np.zeros_like(cap)
    pv_rep = np.zeros_like(cap)
    peak_max = peak.max(axis=1)
    if econ.pump_station is not None:
        ps = econ.pump_station
        pumped = peak_max > 0
        # special case: a design that never pumps buys no station
        capex_ps = np.where(pumped, ps.capital(peak_max), 0.0)
        installed = np.asarray(ps.installed_power(peak_max))
        m_s = ps.maintenance
        reps = econ.replacement_years()
        pv_rep = capex_ps * float(np.sum(ec.discount_factor(i, reps)))
        t_last = float(reps[-1]) if reps.size else 0.0
        residual_ps = capex_ps * max(0.0, 1.0 - (n - t_last) / ps.life)
    maintenance = econ.pipe_maintenance * cap + m_s * capex_ps
    pv_maint = maintenance * float(ec.present_worth_of_series(1.0, i, n))
    residual = cap * max(0.0, 1.0 - n / econ.pipe_life) + residual_ps
    pv_res = residual * float(ec.discount_factor(i, n))
    total = cap + capex_ps + pv_energy + pv_maint + pv_rep - pv_res
    eac = np.asarray(ec.equivalent_annual_cost(total, i, n))
    return NetworkLifeCycle(capex_pipe=cap, capex_pump_station=capex_ps,
                            installed_power_kw=installed, pv_energy=pv_energy,
                            pv_maintenance=pv_maint, pv_replacement=pv_rep, pv_residual=pv_res,
                            pv_total=total, eac=eac, energy_kwh=energy, peak_kw=peak,
                            energy_cost=energy_cost)
