"""Duty profile (model layer): the flows a line carries and for how long, with demand growth.

A duty point is a total flow Q_k [m³/s] held for h_k hours per year. Every duty flow grows at
the same compound rate g until the design year T_d (after it the flows stay), and the largest
duty flow never exceeds the flow cap Q_cap when one is given:

    m_t = min[(1 + g)^(min(t, T_d) − 1), Q_cap / max_k Q_k],   Q_k,t = m_t Q_k,

in study year t = 1 … N. A flow factor f (sensitivity, Monte Carlo) multiplies the year-1 flows
before the cap.

Flows are dimensional: give them with units (``"420 m^3/h"``) or as pint Quantities; a bare
number is refused, because 420 read as m³/s instead of m³/h is a factor of 3600.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from .economics import growth_factors
from .errors import InputError
from .fields import InputSection, number, numbers, quantities, quantity, texts, whole

__all__ = ["HOURS_PER_YEAR", "DutyProfile", "flow_multipliers"]

#: Hours in a (non-leap) year: the limit of a duty profile's total hours.
HOURS_PER_YEAR = 8760.0


def flow_multipliers(years: int, growth: Any, flow_factor: Any = 1.0,
                     design_year: int | None = None, cap_ratio: float | None = None) -> Any:
    """Multiplier of the year-1 duty flows in study years 1 … N, for one or many samples.

    Parameters
    ----------
    years : int
        Number of study years N.
    growth : float or ndarray, shape (S,)
        Compound growth of the flows g [1/yr].
    flow_factor : float or ndarray, shape (S,)
        Factor f on the year-1 flows [-].
    design_year : int, optional
        Growth stops after this year T_d [yr].
    cap_ratio : float, optional
        Q_cap / max_k Q_k: the multiplier never exceeds it [-].

    Returns
    -------
    ndarray, shape (N,) or (S, N)
        m_t = min(f (1 + g)^(min(t, T_d) − 1), Q_cap / max_k Q_k).

    Examples
    --------
    >>> flow_multipliers(5, 0.1, design_year=3).round(3).tolist()
    [1.0, 1.1, 1.21, 1.21, 1.21]
    >>> flow_multipliers(4, 0.1, cap_ratio=1.15).round(3).tolist()
    [1.0, 1.1, 1.15, 1.15]
    """
    f = np.asarray(flow_factor, dtype=float)
    grown = growth_factors(growth, years)
    if design_year is not None and design_year < years:  # the flows stay after T_d
        grown = grown[..., np.minimum(np.arange(years), design_year - 1)]
    m = f[..., None] * grown
    if cap_ratio is not None:
        m = np.minimum(m, cap_ratio)
    return m


@dataclass(frozen=True)
class DutyProfile(InputSection):
    """Duty points of a line, with compound growth of every flow, a design year and a cap.

    Parameters
    ----------
    flows : sequence of str or Quantity
        Total flow of each duty point, all parallel lines together, e.g. ``["310 m^3/h",
        "520 m^3/h"]``; positive.
    hours : sequence of float
        Hours per year each point is held [h/yr], each > 0; their sum at most 8760.
    growth : float, optional
        Compound growth of every duty flow per year, g [1/yr], from −0.5 to 0.5 (a decline when
        negative). Study file: ``growth.flow_per_year``.
    names : sequence of str, optional
        Names of the duty points (default ``duty 1``, ``duty 2``, ...).
    design_year : int, optional
        The flows grow until this study year and then stay (``growth.design_year``).
    flow_cap : str or Quantity, optional
        The largest duty flow never exceeds this flow (``growth.flow_cap``).
    prices : sequence of float, optional
        Energy price of each duty point in year 1 [currency/kWh] (time of use: a night and a
        day tariff); empty (default) prices every point at the tariff's price
        (``duty[k].price``).
    efficiencies : sequence of float, optional
        Pump efficiency at each duty point [-], in (0, 1] (``duty[k].efficiency``); empty
        (default) when the efficiency is given another way (``[pumping]``).

    Examples
    --------
    >>> duty = DutyProfile(["360 m^3/h", "180 m^3/h"], [3000, 4000], growth=0.02)
    >>> duty.flows_by_year(3)[:, 0].round(6).tolist()
    [0.1, 0.102, 0.10404]
    >>> DutyProfile([0.1], [3000])  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    pipeopt.errors.InputError: duty[0].flow: expected a volumetric flow ..., got 0.1 with no unit
    """

    SECTION = "duty"
    flows: tuple = quantities("flow", low=0.0, low_open=True, element="flow")
    hours: tuple = numbers(0.0, HOURS_PER_YEAR, low_open=True, element="hours",
                           unit="h/yr")
    growth: float = number(-0.5, 0.5, default=0.0, key="growth.flow_per_year",
                           unit="1/yr")
    names: tuple = texts(default=(), element="name")
    design_year: int | None = whole(1, 200, default=None, key="growth.design_year",
                                    unit="yr")
    flow_cap: float | None = quantity("flow", low=0.0, low_open=True, default=None,
                                      key="growth.flow_cap")
    prices: tuple = numbers(0.0, 100.0, low_open=True, default=(), element="price")
    efficiencies: tuple = numbers(0.0, 1.0, low_open=True, default=(), element="efficiency")

    def _check(self, path: str) -> None:
        q, h = self.flows, self.hours
        if len(q) == 0:
            raise InputError(f"{path}: at least one duty point (flow, hours) is needed")
        if len(q) != len(h):
            raise InputError(f"{path}: {len(q)} flows but {len(h)} hours; give one of each per "
                             f"duty point")
        if sum(h) > HOURS_PER_YEAR + 1e-9:
            raise InputError(f"{path}: the hours of all duty points add up to {sum(h):g}, more "
                             f"than the 8760 hours of a year")
        names = tuple(self.names) or tuple(f"duty {k + 1}" for k in range(len(q)))
        if len(names) != len(q):
            raise InputError(f"{path}: {len(names)} names for {len(q)} duty points")
        object.__setattr__(self, "names", names)
        for what, values in (("prices", self.prices), ("efficiencies", self.efficiencies)):
            if values and len(values) != len(q):
                raise InputError(f"{path}: {len(values)} {what} for {len(q)} duty points; give "
                                 f"one per duty point, or none")
        if self.flow_cap is not None and self.flow_cap < max(q):
            raise InputError(f"growth.flow_cap ({self.flow_cap * 3600:g} m^3/h) is below the "
                             f"largest year-1 duty flow ({max(q) * 3600:g} m^3/h)")

    def price_ratios(self, price: float) -> np.ndarray | None:
        """Each duty point's energy price over ``price`` (the tariff's), shape (K,); None
        when the duty points give no prices of their own."""
        return np.asarray(self.prices, dtype=float) / price if self.prices else None

    @property
    def flow_array(self) -> np.ndarray:
        """Year-1 flows [m³/s], shape (K,)."""
        return np.asarray(self.flows, dtype=float)

    @property
    def hours_array(self) -> np.ndarray:
        """Hours per year [h/yr], shape (K,)."""
        return np.asarray(self.hours, dtype=float)

    @property
    def cap_ratio(self) -> float | None:
        """Q_cap / max_k Q_k, or None without a cap."""
        return None if self.flow_cap is None else self.flow_cap / max(self.flows)

    @property
    def grows(self) -> bool:
        """Whether any year's flows differ from year 1's."""
        return self.growth != 0

    def multipliers(self, years: int, growth: Any = None, flow_factor: Any = 1.0) -> Any:
        """:func:`flow_multipliers` with this profile's growth, design year and cap.

        ``growth`` (default: the profile's own) and ``flow_factor`` may be arrays over samples.
        """
        g = self.growth if growth is None else growth
        return flow_multipliers(years, g, flow_factor, self.design_year, self.cap_ratio)

    def growth_factors(self, years: int) -> np.ndarray:
        """Multipliers m_t of the year-1 flows for t = 1 … N, shape (N,)."""
        return self.multipliers(years)

    def flows_by_year(self, years: int) -> np.ndarray:
        """Flows of every duty point in every year [m³/s], shape (N, K)."""
        return self.growth_factors(years)[:, None] * self.flow_array[None, :]

    def scaled(self, flow_factor: float = 1.0, hours_factor: float = 1.0) -> DutyProfile:
        """A copy with every flow and/or every hours figure scaled (for sensitivity)."""
        return DutyProfile.from_si(flows=tuple(self.flow_array * flow_factor),
                                   hours=tuple(self.hours_array * hours_factor),
                                   growth=self.growth, names=self.names,
                                   design_year=self.design_year, flow_cap=self.flow_cap,
                                   prices=self.prices, efficiencies=self.efficiencies)
