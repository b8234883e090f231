"""Local losses (physics layer): fittings by count from a bundled table, and fixed equipment.

- Fittings (valves, bends, tees, entrance and exit) lose K V² / (2 g) each. The bundled table
  ``catalog/fittings.csv`` gives K after Crane Technical Paper No. 410, either as a multiple of
  f_T, the friction factor of clean commercial steel pipe in complete turbulence at the
  fitting's size (``catalog/fittings_ft.csv``), or as a fixed number (entrance, exit).
  :class:`Fittings` holds the counts a study gives (``bend-90-long-radius = 12``) and sums
  their K at any bore, beside the line's own single sum ``line.minor_loss_k``.
- Fixed equipment (a flow meter, a strainer, a UV reactor, a heat exchanger) is described by a
  pressure drop at a stated flow; its loss scales with the flow squared (the quadratic law of
  fully turbulent local losses): h = Δp / (ρ g) (Q / Q_ref)² (:class:`Equipment`).

References
----------
.. [1] Crane Co., *Flow of Fluids through Valves, Fittings and Pipe*, Technical Paper No. 410,
   "Representative resistance coefficients (K) for valves and fittings", and its table of
   friction factors for clean commercial steel pipe with flow in the zone of complete
   turbulence (values from memory).
"""

from __future__ import annotations

import csv
import difflib
import functools
import io
from dataclasses import dataclass
from importlib import resources
from typing import TYPE_CHECKING, Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError
from .fields import InputSection, quantity, text
from .friction import GRAVITY

if TYPE_CHECKING:  # pandas loads where the table is read, not when a study file is checked
    import pandas as pd

__all__ = ["fittings_table", "fully_turbulent_friction_factor", "fitting_k", "Fittings",
           "Equipment", "FITTING_NAMES"]


@functools.cache
def _raw(name: str) -> str:
    """The text of a bundled table."""
    return resources.files("pipeopt").joinpath("catalog", name).read_text("utf-8")


@functools.cache
def _table(name: str) -> pd.DataFrame:
    import pandas as pd

    return pd.read_csv(io.StringIO(_raw(name)), comment="#", skipinitialspace=True)


def fittings_table() -> pd.DataFrame:
    """The bundled table of fittings (a copy): name, kind (``f_T`` or ``fixed``), value,
    min_bore_mm, max_bore_mm, description, provenance."""
    return _table("fittings.csv").copy()


def _fitting_names() -> tuple[str, ...]:
    """The names in the fittings table, in order (read with the csv module: no pandas when a
    study file is only being checked)."""
    lines = (line for line in _raw("fittings.csv").splitlines() if not line.startswith("#"))
    return tuple(dict.fromkeys(row["name"].strip() for row in csv.DictReader(lines)))


#: Names of the bundled fittings.
FITTING_NAMES: tuple[str, ...] = _fitting_names()


def fully_turbulent_friction_factor(diameter: Any) -> Any:
    """f_T of clean commercial steel pipe in complete turbulence, at a bore (Crane TP-410).

    Interpolated linearly in log(bore) between the table's sizes (NPS 1/2 to 24, Schedule 40
    bores); outside the table the end value holds.

    Parameters
    ----------
    diameter : float or array_like
        Inner diameter [m], positive.

    Returns
    -------
    float or ndarray
        f_T [-].

    References
    ----------
    .. [1] Crane Co., Technical Paper No. 410 (from memory).

    Examples
    --------
    >>> fully_turbulent_friction_factor(0.10226)
    0.017
    """
    (d,), tpl = as_float_arrays(diameter)
    if np.any(d <= 0):
        raise InputError(f"diameter must be positive; got {float(np.min(d))!r}")
    ft = _table("fittings_ft.csv")
    x = np.log(ft["inner_diameter_mm"].to_numpy(dtype=float) / 1000.0)
    return restore(np.interp(np.log(d), x, ft["f_t"].to_numpy(dtype=float)), tpl)


def _suggest(name: str) -> str:
    near = difflib.get_close_matches(name, FITTING_NAMES, n=1, cutoff=0.5)
    return f"; did you mean {near[0]!r}?" if near else ""


def fitting_k(name: str, diameter: Any) -> Any:
    """Resistance coefficient K of one bundled fitting at a bore.

    Parameters
    ----------
    name : str
        A name of :data:`FITTING_NAMES` (``"gate-valve"``, ``"bend-90-long-radius"``, ...).
    diameter : float or array_like
        Inner diameter of the pipe the fitting sits in [m].

    Returns
    -------
    float or ndarray
        K [-], referred to the velocity in that pipe.

    Examples
    --------
    >>> round(fitting_k("gate-valve", 0.10226), 6)
    0.136
    >>> fitting_k("exit", 0.3)
    1.0
    """
    if name not in FITTING_NAMES:
        raise InputError(f"fittings: unknown fitting {name!r}{_suggest(name)} (known: "
                         f"{', '.join(FITTING_NAMES)})")
    (d,), tpl = as_float_arrays(diameter)
    rows = _table("fittings.csv")
    rows = rows[rows["name"] == name]
    bore_mm = d * 1000.0
    out = np.full(d.shape, np.nan)
    for _, r in rows.iterrows():  # one to three rows (size bands) per fitting
        lo = -np.inf if np.isnan(float(r["min_bore_mm"])) else float(r["min_bore_mm"])
        hi = np.inf if np.isnan(float(r["max_bore_mm"])) else float(r["max_bore_mm"])
        band = (bore_mm >= lo) & (bore_mm < hi)
        k = float(r["value"]) * (fully_turbulent_friction_factor(d) if r["kind"] == "f_T"
                                 else np.ones_like(d))
        out = np.where(band, k, out)
    return restore(out, tpl)


@dataclass(frozen=True)
class Fittings:
    """Fittings of a line by count, from the bundled table.

    Parameters
    ----------
    counts : tuple of (str, int)
        ``(name, count)`` pairs, names of :data:`FITTING_NAMES`.

    Examples
    --------
    >>> f = Fittings.parse({"gate-valve": 2, "exit": 1})
    >>> round(float(f.k_sum(0.10226)), 6)
    1.272
    """

    counts: tuple

    @classmethod
    def parse(cls, mapping: Any, where: str = "fittings") -> Fittings:
        """From a study file's ``[fittings]`` table: ``{name = count, ...}``."""
        if isinstance(mapping, Fittings):
            return mapping
        if not isinstance(mapping, dict) or not mapping:
            raise InputError(f"{where}: expected a table of fittings by count, e.g. "
                             f"{{ gate-valve = 2, bend-90-long-radius = 12 }}")
        out = []
        for name, count in mapping.items():
            key = f"{where}.{name}"
            if name not in FITTING_NAMES:
                raise InputError(f"{key}: unknown fitting{_suggest(str(name))} (the bundled "
                                 f"table after Crane TP-410 has: {', '.join(FITTING_NAMES)})")
            if isinstance(count, bool) or not isinstance(count, (int, float)) \
                    or count != int(count) or not 0 <= count <= 100_000:
                raise InputError(f"{key}: expected a whole number of fittings from 0 to "
                                 f"100000; got {count!r}")
            out.append((str(name), int(count)))
        return cls(tuple(out))

    def k_sum(self, diameter: Any) -> Any:
        """Σ count × K of every fitting at a bore [-] (same kind as ``diameter``)."""
        (d,), tpl = as_float_arrays(diameter)
        total = np.zeros_like(d)
        for name, n in self.counts:  # a handful of fitting types
            if n:
                total = total + n * np.asarray(fitting_k(name, d))
        return restore(total, tpl)

    def describe(self) -> str:
        return ", ".join(f"{n} x {name}" for name, n in self.counts if n)


@dataclass(frozen=True)
class Equipment(InputSection):
    """A fixed loss (flow meter, strainer, UV reactor, ...) given by its pressure drop at a flow.

    h = Δp / (ρ g) × (Q / Q_ref)²: the loss of fully turbulent local resistance grows with the
    flow squared.

    Parameters
    ----------
    pressure_drop : str or Quantity
        Δp at ``at_flow``, e.g. ``"35 kPa"``.
    at_flow : str or Quantity
        Q_ref, e.g. ``"400 m^3/h"``.
    name : str
        A label.
    at : str or Quantity, optional
        Chainage of the item along a long line (default: at the head station's discharge).

    Examples
    --------
    >>> e = Equipment("35 kPa", "400 m^3/h", name="meter")
    >>> round(e.head(400 / 3600, 1000.0), 4)
    3.569
    """

    SECTION = "equipment"
    pressure_drop: float = quantity("pressure", low=0.0, low_open=True)
    at_flow: float = quantity("flow", low=0.0, low_open=True)
    name: str = text(default="equipment")
    at: float | None = quantity("length", low=0.0, default=None)

    def coefficient(self, density: float) -> float:
        """c [s²/m⁵] of h = c Q² for a liquid of ``density`` [kg/m³]."""
        return self.pressure_drop / (density * GRAVITY * self.at_flow**2)

    def head(self, flow: Any, density: float) -> Any:
        """Head loss [m] at ``flow`` [m³/s]."""
        (q,), tpl = as_float_arrays(flow)
        return restore(self.coefficient(density) * q * q, tpl)
