"""Cost models (model layer): pipe capital per metre, pump-station capital, energy tariff.

Money is in the study's currency, a label only; prices are real (constant-money) values.
No prices ship with pipeopt: every cost figure is a study input. The demo figures are invented
and say so.
"""

from __future__ import annotations

import abc
import math
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .economics import growth_factors
from .errors import InputError
from .fields import InputSection, number, numbers, whole

__all__ = ["PipeCostModel", "PowerLawPipeCost", "MassLayingCost", "DesignationCostTable",
           "PumpStationCost", "EnergyTariff"]


def _norm(label: str) -> str:
    return re.sub(r"[\s_]+", "", str(label)).upper().replace("SCHEDULE", "SCH")


class PipeCostModel(abc.ABC):
    """Pipe capital per metre of one line, supplied and laid, for catalog sizes.

    Every pipe cost model prices a table of sizes (:meth:`price`), so the price follows the
    pipe (its outside diameter, its mass, its designation), never its bore: at one nominal size a
    heavier class costs more.
    """

    @abc.abstractmethod
    def price(self, designation: Any, nominal: Any, outside_diameter: Any,
              mass_per_metre: Any) -> np.ndarray:
        """Capital per metre [currency/m] of each size.

        Parameters
        ----------
        designation, nominal : array_like of str
            Catalog designation (``"DN 300 C40"``) and nominal size (``"DN 300"``).
        outside_diameter : array_like
            Outside diameter [m].
        mass_per_metre : array_like
            Mass of pipe and lining per metre [kg/m].
        """

    def describe(self) -> str:
        """Words for reports."""
        return type(self).__name__


@dataclass(frozen=True)
class PowerLawPipeCost(PipeCostModel, InputSection):
    """Pipe capital per metre of line, supplied and installed: c = a · D^n, D in metres.

    In a sizing study D is the pipe's **outside** diameter (never the bore, so that a heavier
    class of one size is not cheaper); in an upgrade option it is the new pipe's outside
    diameter when a catalog size is given, else the bore given.

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
    coefficient: float = number(0.0, 1e9, low_open=True, example="1800.0",
                                unit="{currency}/m (OD in m)")
    exponent: float = number(0.0, 4.0, low_open=True, example="1.25")

    def per_metre(self, diameter: Any) -> Any:
        """Capital cost per metre [currency/m] at diameter(s) D [m]."""
        (d,), tpl = as_float_arrays(diameter)
        return restore(self.coefficient * d**self.exponent, tpl)

    def price(self, designation, nominal, outside_diameter, mass_per_metre):
        return np.asarray(self.per_metre(np.asarray(outside_diameter, dtype=float)))

    def describe(self) -> str:
        return f"{self.coefficient:g} x OD^{self.exponent:g} per m (OD in m)"


@dataclass(frozen=True)
class MassLayingCost(PipeCostModel, InputSection):
    """Pipe capital per metre as material plus laying: c = m p + a · OD^n (or a laying table).

    The material cost is the mass per metre m (wall and lining, from the catalog's outside
    diameter, wall, lining and densities) times a price per kilogram p; the laying cost
    (trench, bedding, jointing, reinstatement) a power law of the outside diameter, or a table
    by nominal size (``laying_table = {"DN 300" = 180.0, ...}``).

    Parameters
    ----------
    price_per_kg : float
        p [currency/kg] of pipe supplied (wall and lining).
    laying_coefficient : float
        a [currency/m at OD = 1 m] (0 with a laying table).
    laying_exponent : float
        n [-].
    laying_table : dict of str to float, optional
        Laying cost per metre [currency/m] by nominal size; every nominal size of the
        candidates must be listed.

    Examples
    --------
    >>> c = MassLayingCost(2.5, 600.0, 1.1)
    >>> round(float(c.price(["315 SDR 17"], ["315"], [0.315], [17.0])[0]), 2)
    210.88
    """

    SECTION = "cost"
    price_per_kg: float = number(0.0, 1e5, low_open=True, example="2.4",
                                 unit="{currency}/kg")
    laying_coefficient: float = number(0.0, 1e9, default=0.0,
                                       unit="{currency}/m (OD in m)")
    laying_exponent: float = number(0.0, 4.0, default=1.0)
    laying_table: Any = field(default=None, metadata={})

    def _check(self, path: str) -> None:
        table = self.laying_table
        if table is None:
            if self.laying_coefficient == 0:
                raise InputError(f"{path}: give laying_coefficient (and laying_exponent), or a "
                                 f"laying_table by nominal size")
            return
        if not isinstance(table, dict) or not table:
            raise InputError(f"{path}.laying_table: expected a table {{ \"DN 300\" = 180.0, "
                             f"... }} of laying cost per metre by nominal size")
        clean = {}
        for k, v in table.items():
            if isinstance(v, bool) or not isinstance(v, int | float) or not 0 <= v < 1e9:
                raise InputError(f"{path}.laying_table.{k}: must be a number >= 0; got {v!r}")
            clean[_norm(k)] = (str(k), float(v))
        object.__setattr__(self, "laying_table", clean)

    def laying(self, nominal: Any, outside_diameter: Any) -> np.ndarray:
        """Laying cost per metre [currency/m]."""
        if self.laying_table is None:
            od = np.asarray(outside_diameter, dtype=float)
            return self.laying_coefficient * od**self.laying_exponent
        names = [v[0] for v in self.laying_table.values()]
        out = []
        for nom in np.atleast_1d(nominal):
            hit = self.laying_table.get(_norm(nom))
            if hit is None:
                from .catalog import nearest_designations  # pandas: only on the error path

                near = nearest_designations(str(nom), names)
                raise InputError(f"cost.laying_table: no laying cost for nominal size "
                                 f"{str(nom)!r}; nearest listed: {', '.join(near) or 'none'}")
            out.append(hit[1])
        return np.asarray(out, dtype=float)

    def price(self, designation, nominal, outside_diameter, mass_per_metre):
        return (np.asarray(mass_per_metre, dtype=float) * self.price_per_kg
                + self.laying(nominal, outside_diameter))

    def describe(self) -> str:
        lay = (f"{self.laying_coefficient:g} x OD^{self.laying_exponent:g}"
               if self.laying_table is None else
               f"laying table of {len(self.laying_table)} nominal sizes")
        return f"{self.price_per_kg:g} per kg of pipe + laying {lay} per m (OD in m)"


@dataclass(frozen=True)
class DesignationCostTable(PipeCostModel):
    """Pipe capital per metre listed by designation, used as given (no interpolation).

    Parameters
    ----------
    rows : tuple of (str, float)
        ``(designation, cost per metre)``; designations are matched forgiving case and spaces.

    Examples
    --------
    >>> t = DesignationCostTable.parse({"DN 300 C40": 412.0, "DN 300 C25": 398.0}, "cost")
    >>> t.price(["dn300 c40"], ["DN 300"], [0.326], [60.0]).tolist()
    [412.0]
    """

    rows: tuple

    @classmethod
    def parse(cls, value: Any, where: str) -> DesignationCostTable:
        """From a list of ``[designation, cost]`` pairs or a table ``{designation = cost}``."""
        pairs = list(value.items()) if isinstance(value, dict) else value
        if not isinstance(pairs, list | tuple) or len(pairs) < 1:
            raise InputError(f"{where} must list [designation, cost per metre] rows")
        rows, seen = [], set()
        for j, row in enumerate(pairs):
            if not (isinstance(row, list | tuple) and len(row) == 2):
                raise InputError(f"{where}[{j}] must be [designation, cost per metre]")
            label, cost = row
            if not isinstance(label, str) or not label.strip():
                raise InputError(f"{where}[{j}]: the designation must be text; got {label!r}")
            if isinstance(cost, bool) or not isinstance(cost, int | float) \
                    or not math.isfinite(cost) or not 0 < cost < 1e9:
                raise InputError(f"{where}[{j}]: cost must be a positive number; got {cost!r}")
            if _norm(label) in seen:
                raise InputError(f"{where}: {label!r} is listed twice")
            seen.add(_norm(label))
            rows.append((label.strip(), float(cost)))
        return cls(tuple(rows))

    def price(self, designation, nominal, outside_diameter, mass_per_metre):
        table = {_norm(k): v for k, v in self.rows}
        out = []
        for d in np.atleast_1d(designation):
            if _norm(d) not in table:
                from .catalog import nearest_designations  # pandas: only on the error path

                near = nearest_designations(str(d), [k for k, _ in self.rows])
                raise InputError(f"cost.table: no cost for {str(d)!r}; nearest listed: "
                                 f"{', '.join(near) or 'none'}")
            out.append(table[_norm(d)])
        return np.asarray(out, dtype=float)

    def describe(self) -> str:
        return f"table of {len(self.rows)} designations"


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
                                key="cost_coefficient", unit="{currency}/kW^b")
    exponent: float = number(0.0, 2.0, low_open=True, example="0.7", key="cost_exponent")
    standby_fraction: float = number(0.0, 10.0, default=0.0)
    life: int = whole(1, 200, default=20, unit="yr")
    maintenance: float = number(0.0, 1.0, default=0.0, unit="1/yr")
    stages: tuple = numbers(0.0, 200.0, default=(0,), unit="yr")

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
    price: float = number(0.0, 100.0, low_open=True, example="0.12",
                          unit="{currency}/kWh")
    escalation: float = number(-0.5, 0.5, default=0.0, unit="1/yr")
    demand_charge: float = number(0.0, 1e5, default=0.0, unit="{currency}/(kW yr)")

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
