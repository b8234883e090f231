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
from .economics import growth_factors
from .errors import InputError
from .fields import InputSection, number, numbers, whole

__all__ = ["PowerLawPipeCost", "TablePipeCost", "PumpStationCost", "EnergyTariff"]


@dataclass(frozen=True)
class PowerLawPipeCost(InputSection):
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

    SECTION = "cost"
    coefficient: float = number(0.0, 1e9, low_open=True, example="1800.0")
    exponent: float = number(0.0, 4.0, low_open=True, example="1.25")

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
class PumpStationCost(InputSection):
    """Pump-station capital a · P^b for installed electrical power P [kW], with standby, life
    and stages.

    Parameters
    ----------
    coefficient : float
        a [currency/kW^b] (study file: ``pump_station.cost_coefficient``).
    exponent : float
        b [-], typically 0.6–0.9 (economies of scale) (``pump_station.cost_exponent``).
    standby_fraction : float
        s [-]: installed power is the peak demand times (1 + s).
    life : int
        T_s [yr], whole years: each stage is bought again every T_s years within the horizon.
    maintenance : float
        m_s [1/yr]: yearly maintenance as a fraction of the capital of the stages in service.
    stages : sequence of int
        Study years in which the station is built or extended, the first 0 (default ``(0,)``:
        one stage, sized at year 0 for the largest peak of the horizon). Stage j is sized for
        the largest peak demand before stage j + 1 (or the horizon) less what is installed.
    """

    SECTION = "pump_station"
    coefficient: float = number(0.0, 1e9, low_open=True, example="8000",
                                key="cost_coefficient")
    exponent: float = number(0.0, 2.0, low_open=True, example="0.7", key="cost_exponent")
    standby_fraction: float = number(0.0, 10.0, default=0.0)
    life: int = whole(1, 200, default=20)
    maintenance: float = number(0.0, 1.0, default=0.0)
    stages: tuple = numbers(0.0, 200.0, default=(0,))

    def _check(self, path: str) -> None:
        st = self.stages
        if not st or st[0] != 0 or any(b <= a for a, b in zip(st, st[1:], strict=False)) \
                or any(x != int(x) for x in st):
            raise InputError(f"{path}.stages must be whole years, increasing, starting at 0 "
                             f"(e.g. [0, 15]); got {list(st)}")
        object.__setattr__(self, "stages", tuple(int(x) for x in st))

    def installed_power(self, peak_power_kw: Any) -> Any:
        """Installed power [kW] for a peak electrical demand [kW]."""
        (p,), tpl = as_float_arrays(peak_power_kw)
        return restore(p * (1.0 + self.standby_fraction), tpl)

    def capital(self, peak_power_kw: Any) -> Any:
        """Capital [currency] of a stage for a peak electrical demand [kW] (standby included)."""
        (p,), tpl = as_float_arrays(peak_power_kw)
        return restore(self.coefficient * (p * (1.0 + self.standby_fraction)) ** self.exponent,
                       tpl)


@dataclass(frozen=True)
class EnergyTariff(InputSection):
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

    SECTION = "energy"
    price: float = number(0.0, 100.0, low_open=True, example="0.12")
    escalation: float = number(-0.5, 0.5, default=0.0)
    demand_charge: float = number(0.0, 1e5, default=0.0)

    def price_by_year(self, years: int, price: Any = None, escalation: Any = None) -> Any:
        """Energy price of years 1…N [currency/kWh], shape (N,), or (S, N) for per-sample
        ``price`` and ``escalation`` arrays (S,)."""
        p = np.asarray(self.price if price is None else price, dtype=float)
        e = self.escalation if escalation is None else escalation
        return p[..., None] * growth_factors(e, years)

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
