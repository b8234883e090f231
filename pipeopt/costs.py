"""Cost models (model layer): pipe capital per metre, pump-station capital, energy tariff.

Money is in the study's currency, a label only; prices are real (constant-money) values.
No prices ship with pipeopt: every cost figure is a study input. The demo figures are invented
and say so.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError

__all__ = ["PowerLawPipeCost", "TablePipeCost", "PumpStationCost", "EnergyTariff"]


def _positive(value: float, field: str) -> float:
    v = float(value)
    if not np.isfinite(v) or v <= 0:
        raise InputError(f"{field} must be a positive number; got {value!r}")
    return v


def _fraction(value: float, field: str, upper: float = 1.0) -> float:
    v = float(value)
    if not np.isfinite(v) or v < 0 or v > upper:
        raise InputError(f"{field} must be a fraction between 0 and {upper:g}; got {value!r}")
    return v


@dataclass(frozen=True)
class PowerLawPipeCost:
    """Pipe capital per metre of line, supplied and installed: c(D) = a · D^n, D in metres.

    Parameters
    ----------
    coefficient : float
        a [currency/m at D = 1 m].
    exponent : float
        n [-], typically 1.0–1.6 (Sarchet & Colburn 1940 used 1.5 above 1 in).

    Examples
    --------
    >>> round(PowerLawPipeCost(1800.0, 1.25).per_metre(0.3), 2)
    399.64
    """

    coefficient: float
    exponent: float

    def __post_init__(self) -> None:
        _positive(self.coefficient, "cost.coefficient")
        e = float(self.exponent)
        if not np.isfinite(e) or e <= 0 or e > 4:
            raise InputError(f"cost.exponent must be between 0 and 4; got {self.exponent!r}")

    def per_metre(self, diameter: Any) -> Any:
        """Capital cost per metre [currency/m] at inner diameter(s) [m]."""
        (d,), tpl = as_float_arrays(diameter)
        return restore(self.coefficient * d**self.exponent, tpl)

    def describe(self) -> str:
        """Words for reports."""
        return f"{self.coefficient:g} x D^{self.exponent:g} per m (D in m)"


@dataclass(frozen=True)
class TablePipeCost:
    """Pipe capital per metre from a table by inner diameter, interpolated log–log.

    Between table points the cost follows a power law (linear in log c against log D), so a
    table made from a power law is reproduced exactly; the continuous optimum then has a
    continuous cost curve. Outside the table the cost is not extrapolated: an error says so.

    Parameters
    ----------
    diameters : array_like
        Inner diameters [m], strictly increasing, at least two.
    costs : array_like
        Capital per metre at those diameters [currency/m], positive.
    labels : tuple of str, optional
        Designations the rows came from, for reports.
    """

    diameters: tuple
    costs: tuple
    labels: tuple = ()

    def __post_init__(self) -> None:
        d = np.asarray(self.diameters, dtype=float)
        c = np.asarray(self.costs, dtype=float)
        if d.ndim != 1 or d.size < 2 or d.shape != c.shape:
            raise InputError("cost.table needs at least two rows of (diameter, cost)")
        if np.any(~np.isfinite(d)) or np.any(d <= 0) or np.any(np.diff(d) <= 0):
            raise InputError("cost.table diameters must be positive and strictly increasing "
                             "(two sizes with the same inner diameter need one cost)")
        if np.any(~np.isfinite(c)) or np.any(c <= 0):
            raise InputError("cost.table costs must be positive numbers")
        object.__setattr__(self, "diameters", tuple(d.tolist()))
        object.__setattr__(self, "costs", tuple(c.tolist()))

    def per_metre(self, diameter: Any) -> Any:
        """Capital cost per metre [currency/m] at inner diameter(s) [m], log–log interpolated."""
        (d,), tpl = as_float_arrays(diameter)
        lo, hi = self.diameters[0], self.diameters[-1]
        tol = 1e-9
        if np.any(d < lo * (1 - tol)) or np.any(d > hi * (1 + tol)):
            bad = d[(d < lo * (1 - tol)) | (d > hi * (1 + tol))].ravel()[0]
            raise InputError(f"cost.table covers inner diameters {lo:g}-{hi:g} m; a cost at "
                             f"{bad:g} m would be an extrapolation (add a row)")
        logc = np.interp(np.log(np.clip(d, lo, hi)), np.log(self.diameters), np.log(self.costs))
        return restore(np.exp(logc), tpl)

    def describe(self) -> str:
        """Words for reports."""
        return f"table of {len(self.diameters)} sizes, log-log interpolated"


@dataclass(frozen=True)
class PumpStationCost:
    """Pump-station capital a · P^b for installed electrical power P [kW], with standby and life.

    Parameters
    ----------
    coefficient : float
        a [currency/kW^b].
    exponent : float
        b [-], typically 0.6–0.9 (economies of scale).
    standby_fraction : float
        s [-]: installed power is the peak demand times (1 + s).
    life : float
        T_s [yr]: the station is bought again every T_s years within the horizon.
    maintenance : float
        m_s [1/yr]: yearly maintenance as a fraction of the station capital.
    """

    coefficient: float
    exponent: float
    standby_fraction: float = 0.0
    life: float = 20.0
    maintenance: float = 0.0

    def __post_init__(self) -> None:
        _positive(self.coefficient, "pump_station.cost_coefficient")
        e = float(self.exponent)
        if not np.isfinite(e) or e <= 0 or e > 2:
            raise InputError(f"pump_station.cost_exponent must be between 0 and 2; got "
                             f"{self.exponent!r}")
        _fraction(self.standby_fraction, "pump_station.standby_fraction", 10.0)
        _positive(self.life, "pump_station.life")
        _fraction(self.maintenance, "pump_station.maintenance")

    def installed_power(self, peak_power_kw: Any) -> Any:
        """Installed power [kW] for a peak electrical demand [kW]."""
        (p,), tpl = as_float_arrays(peak_power_kw)
        return restore(p * (1.0 + self.standby_fraction), tpl)

    def capital(self, peak_power_kw: Any) -> Any:
        """Station capital [currency] for a peak electrical demand [kW] (standby included)."""
        (p,), tpl = as_float_arrays(peak_power_kw)
        return restore(self.coefficient * (p * (1.0 + self.standby_fraction)) ** self.exponent,
                       tpl)


@dataclass(frozen=True)
class EnergyTariff:
    """Electricity tariff: energy price with real escalation, and a demand charge.

    Parameters
    ----------
    price : float
        Energy price in year 1, p [currency/kWh].
    escalation : float
        Real escalation of the energy price, e [1/yr]: year t pays p (1 + e)^(t−1).
    demand_charge : float
        d [currency per kW of peak electrical demand per year].
    """

    price: float
    escalation: float = 0.0
    demand_charge: float = 0.0

    def __post_init__(self) -> None:
        _positive(self.price, "energy.price")
        e = float(self.escalation)
        if not np.isfinite(e) or e <= -1 or e > 1:
            raise InputError(f"energy.escalation must be a fraction per year between -1 and 1 "
                             f"(0.02 for 2 %); got {self.escalation!r}")
        d = float(self.demand_charge)
        if not np.isfinite(d) or d < 0:
            raise InputError(f"energy.demand_charge must be >= 0; got {self.demand_charge!r}")

    def price_by_year(self, years: int) -> np.ndarray:
        """Energy price of years 1…N [currency/kWh]."""
        t = np.arange(years)
        return self.price * (1.0 + self.escalation) ** t

    def yearly_cost(self, energy_kwh: Any, peak_kw: Any) -> np.ndarray:
        """Energy cost of each year, C_E,t = E_t p (1+e)^(t−1) + d P̂_t, along the last axis.

        Parameters
        ----------
        energy_kwh : array_like
            Energy of years 1…N on the last axis [kWh].
        peak_kw : array_like
            Peak electrical demand of years 1…N on the last axis [kW].
        """
        e = np.asarray(energy_kwh, dtype=float)
        return e * self.price_by_year(e.shape[-1]) + self.demand_charge * np.asarray(peak_kw)
