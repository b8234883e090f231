"""Duty profile (model layer): the flows a line carries and for how long, with demand growth.

A duty point is a total flow Q_k [m³/s] held for h_k hours per year. Every duty flow grows at
the same compound rate g: Q_k,t = Q_k (1 + g)^(t−1) in study year t = 1 … N.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from .errors import InputError

__all__ = ["HOURS_PER_YEAR", "DutyProfile"]

#: Hours in a (non-leap) year: the limit of a duty profile's total hours.
HOURS_PER_YEAR = 8760.0


@dataclass(frozen=True)
class DutyProfile:
    """Duty points of a line, with compound growth of every flow.

    Parameters
    ----------
    flows : sequence of float
        Total flow of each duty point, all parallel lines together [m³/s], positive.
    hours : sequence of float
        Hours per year each point is held [h/yr], each > 0; their sum at most 8760.
    growth : float, optional
        Compound growth of every duty flow per year, g [1/yr]; may be negative (a decline).

    Examples
    --------
    >>> duty = DutyProfile([0.1, 0.05], [3000, 4000], growth=0.02)
    >>> duty.flows_by_year(3)[:, 0].round(6).tolist()
    [0.1, 0.102, 0.10404]
    """

    flows: tuple
    hours: tuple
    growth: float = 0.0
    names: tuple = field(default=())

    def __post_init__(self) -> None:
        q = np.atleast_1d(np.asarray(self.flows, dtype=float))
        h = np.atleast_1d(np.asarray(self.hours, dtype=float))
        if q.ndim != 1 or q.size == 0:
            raise InputError("duty: at least one duty point (flow, hours) is needed")
        if q.shape != h.shape:
            raise InputError(f"duty: {q.size} flows but {h.size} hours; give one of each per "
                             f"duty point")
        for k in range(q.size):
            if not np.isfinite(q[k]) or q[k] <= 0:
                raise InputError(f"duty[{k}].flow must be positive; got {q[k]!r} m^3/s")
            if not np.isfinite(h[k]) or h[k] <= 0 or h[k] > HOURS_PER_YEAR:
                raise InputError(f"duty[{k}].hours must be between 0 and 8760 hours per year; "
                                 f"got {h[k]!r}")
        if h.sum() > HOURS_PER_YEAR + 1e-9:
            raise InputError(f"duty: the hours of all duty points add up to {h.sum():g}, more "
                             f"than the 8760 hours of a year")
        g = float(self.growth)
        if not np.isfinite(g) or g <= -1 or g > 1:
            raise InputError(f"growth.flow_per_year must be a fraction per year between -1 and 1 "
                             f"(0.01 for 1 %); got {self.growth!r}")
        object.__setattr__(self, "flows", tuple(q.tolist()))
        object.__setattr__(self, "hours", tuple(h.tolist()))
        names = tuple(self.names) or tuple(f"duty {k + 1}" for k in range(q.size))
        object.__setattr__(self, "names", names)

    @property
    def flow_array(self) -> np.ndarray:
        """Year-1 flows [m³/s], shape (K,)."""
        return np.asarray(self.flows)

    @property
    def hours_array(self) -> np.ndarray:
        """Hours per year [h/yr], shape (K,)."""
        return np.asarray(self.hours)

    def growth_factors(self, years: int) -> np.ndarray:
        """(1 + g)^(t−1) for t = 1 … N, shape (N,)."""
        return (1.0 + self.growth) ** np.arange(years)

    def flows_by_year(self, years: int) -> np.ndarray:
        """Flows of every duty point in every year [m³/s], shape (N, K)."""
        return self.growth_factors(years)[:, None] * self.flow_array[None, :]

    def scaled(self, flow_factor: float = 1.0, hours_factor: float = 1.0) -> DutyProfile:
        """A copy with every flow and/or every hours figure scaled (for sensitivity)."""
        return DutyProfile(tuple(np.asarray(self.flows) * flow_factor),
                           tuple(np.asarray(self.hours) * hours_factor), self.growth, self.names)
