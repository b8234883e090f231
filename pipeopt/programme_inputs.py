"""Renewal programme inputs (study layer, edge): the programme file's own sections, and its reader.

The sections a programme shares with a sizing study are read by the same classes, so their keys,
rules and messages are the same: ``[study]`` (:class:`~pipeopt.inputs.StudyInfo`), ``[fluid]``
(:class:`~pipeopt.inputs.FluidSpec`), ``[pumping]`` (:class:`~pipeopt.inputs.Pumping`),
``[energy]`` (:class:`~pipeopt.costs.EnergyTariff`), ``[economics]``
(:class:`~pipeopt.inputs.Economics`: ``pipe_life`` and ``pipe_maintenance`` are the new main's
life, for its residual value, and its yearly maintenance) and the growth keys of ``[growth]``
(``flow_per_year``, ``design_year``, checked by :class:`~pipeopt.duty.DutyProfile` and applied
to the flow of every pumped main).

The programme's own sections are :class:`~pipeopt.fields.InputSection` s, each field with its
unit and rule in one spec: :class:`PumpedMains` (``[pumped_mains]``), :class:`BreakSettings`
(``[breaks]``), :class:`NewMain` (``[replacement]``), :class:`MaterialClass`
(``[[material]]``), :class:`ProgrammeSettings` (``[programme]``) and :class:`SolverOptions`
(``[solver]``). :func:`read_programme` reads and checks every section before any fluid property
is computed.

Examples
--------
>>> MaterialClass("cast-iron", "0.26 mm", "0.04 mm/yr", 0.05).aging  # m/yr
4e-05
>>> MaterialClass("cast-iron", 0.26, "0.04 mm/yr", 0.05)  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
pipeopt.errors.InputError: material.roughness: expected a roughness ..., got 0.26 with no unit
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np

from .costs import EnergyTariff
from .duty import DutyProfile
from .errors import InputError
from .fields import SI, InputSection, number, quantity, text, to_number, whole
from .inputs import Economics, FluidSpec, Pumping, StudyInfo
from .schedule import METHODS
from .studyfile import Section, StudyFileError

__all__ = ["PumpedMains", "BreakSettings", "NewMain", "MaterialClass", "ProgrammeSettings",
           "SolverOptions", "GROWTH_FROM", "GROWTH_KEYS", "SECTIONS", "MOVED", "flow_growth",
           "read_programme", "wire_to_water"]

#: Where the break growth rate of each main comes from.
GROWTH_FROM = ("material", "history")
#: The keys of ``[growth]`` a programme takes (a sizing study's, but for the cap on one line's
#: flow) and the :class:`~pipeopt.duty.DutyProfile` argument each stands for.
GROWTH_KEYS = {"flow_per_year": "growth", "design_year": "design_year"}
#: Largest yearly budget [currency].
MAX_BUDGET = 1e15


@dataclass(frozen=True)
class PumpedMains(InputSection):
    """The ``[pumped_mains]`` section: what every pumped main shares that the register does
    not give.

    Parameters
    ----------
    minor_loss_k : float
        Sum of minor-loss coefficients of a pumped main ΣK [-], referred to its velocity (the
        rule of a sizing study's ``line.minor_loss_k``).
    """

    SECTION = "pumped_mains"
    minor_loss_k: float = number(0.0, 1e4, default=0.0)


@dataclass(frozen=True)
class BreakSettings(InputSection):
    """The ``[breaks]`` section: the cost of a repair and where the growth of breaks comes from.

    Parameters
    ----------
    repair_cost : float
        Cost of repairing one break (repair, reinstatement, interruption) [currency].
    growth_from : {"material", "history"}
        The break growth rate A of each main: its material class's (``[[material]]``
        ``break_growth``), or fitted from the register's pooled counts of two 5-year windows
        where they allow.
    min_fit_breaks : int
        ``"history"``: breaks a material class needs in each pooled window to fit its rate.
    max_fitted_growth : float
        ``"history"``: limit on the size of a fitted rate [1/yr].
    """

    SECTION = "breaks"
    repair_cost: float = number(0.0, 1e9, example="7500")
    growth_from: str = text(GROWTH_FROM, default="material")
    min_fit_breaks: int = whole(1, 1e6, default=100)
    max_fitted_growth: float = number(0.0, 0.5, default=0.2)


@dataclass(frozen=True)
class NewMain(InputSection):
    """The ``[replacement]`` section: the main that replaces an old one, like for like.

    Its life (for the straight-line residual value at the horizon) and its yearly maintenance
    are ``economics.pipe_life`` and ``economics.pipe_maintenance``, as for a sizing study's new
    pipe.

    Parameters
    ----------
    roughness : str or Quantity
        Roughness of the new main, e.g. ``"0.03 mm"``.
    aging : str or Quantity
        Its roughness growth, e.g. ``"0.01 mm/yr"`` (default: none).
    break_factor : float
        Share of the old main's breaks that goes on after the renewal [-] (default 0: none).
    """

    SECTION = "replacement"
    roughness: float = quantity("roughness", low=0.0)
    aging: float = quantity("aging_rate", low=0.0, default=SI(0.0))
    break_factor: float = number(0.0, 1.0, default=0.0)


@dataclass(frozen=True)
class MaterialClass(InputSection):
    """A ``[[material]]`` table: a material class of the register.

    Parameters
    ----------
    name : str
        The name used in the register's ``material`` column.
    roughness : str or Quantity
        Roughness of new pipe of this class, e.g. ``"0.26 mm"``.
    aging : str or Quantity
        Roughness growth, e.g. ``"0.03 mm/yr"``; the roughness now is ``roughness + aging ×
        age``.
    break_growth : float
        Exponential growth rate of breaks A [1/yr] (Shamir & Howard 1979), e.g. 0.05.
    """

    SECTION = "material"
    name: str = text()
    roughness: float = quantity("roughness", low=0.0)
    aging: float = quantity("aging_rate", low=0.0)
    break_growth: float = number(-0.5, 0.5, example="0.04")

    def _check(self, path: str) -> None:
        if not self.name.strip():
            raise InputError(f"{path}.name: required key is missing (the name used in the "
                             f"register's material column)")


@dataclass(frozen=True)
class ProgrammeSettings(InputSection):
    """The ``[programme]`` section: the years the programme plans and their budgets.

    Parameters
    ----------
    first_year : int
        Calendar year of year of action 0 (now); ages are counted to it.
    budget : float or sequence of float
        Capital budget of each year of action [currency], >= 0: one value for every year, or a
        list by year.
    years : int, optional
        Years of action the programme plans (default: the length of a list budget, else the
        horizon); at most the horizon (checked by the study, which knows it).
    """

    SECTION = "programme"
    first_year: int = whole(1900, 2200, example="2027")
    budget: Any = field(default=None, metadata={})
    years: int | None = whole(1, 200, default=None)

    def _check(self, path: str) -> None:
        b = self.budget
        if b is None:
            raise InputError(f"{path}.budget: required key is missing (e.g. budget = 2.5e6, "
                             f"or a list by year)")
        if isinstance(b, (list, tuple, np.ndarray)):
            if len(b) == 0:
                raise InputError(f"{path}.budget: the list is empty; give a budget for each "
                                 f"year, or one for every year")
            value: Any = tuple(to_number(v, f"{path}.budget[{k}]", low=0.0, high=MAX_BUDGET)
                               for k, v in enumerate(b))
            if self.years is not None and self.years != len(value):
                raise InputError(f"{path}.years: {self.years} years but the budget list gives "
                                 f"{len(value)}")
        else:
            value = to_number(b, f"{path}.budget", low=0.0, high=MAX_BUDGET)
        object.__setattr__(self, "budget", value)

    @property
    def by_year(self) -> bool:
        """True when the budget is a list by year."""
        return isinstance(self.budget, tuple)

    def budgets(self, horizon: int) -> np.ndarray:
        """The budget of every planned year [currency], shape (W,), checked against the
        study's horizon [yr]."""
        path = self.SECTION
        w = len(self.budget) if self.by_year else self.years or horizon
        if w > horizon:
            what = (f"{path}.budget: a list of {w} budgets" if self.by_year and self.years is None
                    else f"{path}.years: {w} years")
            raise InputError(f"{what} for a horizon of {horizon} years (economics.horizon); "
                             f"the programme plans at most the horizon's years")
        out = np.array(self.budget if self.by_year else (self.budget,) * w, dtype=float)
        out.flags.writeable = False
        return out

    @classmethod
    def read(cls, sec: Any, **given: Any) -> ProgrammeSettings:
        return super().read(sec, budget=sec.raw("budget") if sec is not None else None,
                            **given)

    @classmethod
    def keys(cls) -> tuple[str, ...]:
        return (*super().keys(), "budget")


@dataclass(frozen=True)
class SolverOptions(InputSection):
    """The ``[solver]`` section: how the schedule is chosen (see
    :func:`pipeopt.schedule.schedule_renewals`).

    Parameters
    ----------
    method : {"auto", "milp", "heuristic"}
        ``"auto"``: the MILP up to ``max_pairs`` candidate (main, year) pairs, else the
        Lagrangian heuristic with its bound.
    time_limit : float
        Seconds the MILP may take (a safety net; a run stopped by the clock may differ from
        the next) [s].
    mip_gap : float
        Relative gap at which the MILP stops [-].
    max_pairs : int
        Largest MILP under ``"auto"`` (candidate main-years).
    node_limit : int
        Branch-and-bound nodes the MILP may explore (stops it the same way every run).
    """

    SECTION = "solver"
    method: str = text(METHODS, default="auto")
    time_limit: float = number(0.1, 86400.0, default=120.0)
    mip_gap: float = number(0.0, 1.0, default=1e-4)
    max_pairs: int = whole(1, 1e9, default=5_000)
    node_limit: int = whole(1, 1e9, default=5_000)


def flow_growth(growth: Any) -> DutyProfile:
    """The growth of every pumped main's flow, checked by the rules of a sizing study's duty
    profile (``growth.flow_per_year``, ``growth.design_year``).

    Parameters
    ----------
    growth : float, mapping or None
        Compound growth per year [1/yr], or the :class:`~pipeopt.duty.DutyProfile` arguments
        ``growth`` and ``design_year``.

    Returns
    -------
    DutyProfile
        A profile of one unit flow whose :meth:`~pipeopt.duty.DutyProfile.multipliers` are the
        multipliers of every pumped main's year-1 flow.
    """
    values = {} if growth is None else (dict(growth) if isinstance(growth, dict)
                                        else {"growth": growth})
    unknown = set(values) - set(GROWTH_KEYS.values())
    if unknown:
        raise InputError(f"growth: unknown argument {sorted(unknown)[0]!r}; a programme takes "
                         f"{', '.join(GROWTH_KEYS.values())}")
    return DutyProfile.from_si(flows=(1.0,), hours=(1.0,), **values)


# --------------------------------------------------------------------------------------------
# the reader
# --------------------------------------------------------------------------------------------
#: Top-level sections of a programme study file.
SECTIONS = ("study", "fluid", "pumping", "energy", "economics", "growth", "pumped_mains",
            "breaks", "replacement", "material", "programme", "solver")
#: Keys of earlier programme files and where they are now.
MOVED = {("pumping", "minor_loss_k"): "pumped_mains.minor_loss_k",
         ("pumping", "flow_growth"): "growth.flow_per_year, as in a sizing study",
         ("replacement", "life"): "economics.pipe_life, as in a sizing study",
         ("replacement", "maintenance"): "economics.pipe_maintenance, as in a sizing study"}


def wire_to_water(pumping: Pumping) -> float:
    """The one wire-to-water efficiency a programme prices every pumped main's energy with
    (:meth:`pipeopt.inputs.Pumping.wire_to_water`; a register's mains have no pump curve)."""
    return pumping.wire_to_water("a renewal programme")


def read_programme(mapping: dict, base: Path) -> dict[str, Any]:
    """Every section of a programme study file, checked; the fluid not yet evaluated.

    Returns
    -------
    dict
        ``info`` (StudyInfo), ``fluid`` (FluidSpec), ``pumping``, ``energy``, ``economics``,
        ``growth`` (the ``[growth]`` values by DutyProfile argument), ``pumped_mains``,
        ``breaks``, ``replacement``, ``materials`` (a tuple of MaterialClass), ``programme``
        and ``solver``.
    """
    for (table, key), now in MOVED.items():
        sec = mapping.get(table)
        if isinstance(sec, dict) and key in sec:
            raise StudyFileError(f"{table}.{key}: this key has moved; write it as {now}")
    grown = mapping.get("growth")
    if isinstance(grown, dict) and "flow_cap" in grown:
        raise StudyFileError("growth.flow_cap: a cap on one line's flow does not apply to the "
                             "mains of a register; a programme takes flow_per_year and "
                             "design_year")
    top = Section(mapping, "", SECTIONS)
    info_sec = top.table("study", StudyInfo.keys())
    info = StudyInfo.read(info_sec)
    if info_sec is None or not info_sec.has("name"):
        info = dataclasses.replace(info, name="renewal programme")
    gr = top.table("growth", tuple(GROWTH_KEYS))
    growth = {} if gr is None else {arg: gr.raw(key) for key, arg in GROWTH_KEYS.items()
                                    if gr.has(key)}
    flow_growth(growth)                       # the rules of a sizing study's [growth]

    def read(cls: Any, required: bool = False) -> Any:
        return cls.read(top.table(cls.SECTION, cls.keys(), required=required))

    fluid = read(FluidSpec, required=True)    # the sections in the order of the outline
    pumping = read(Pumping, required=True)
    wire_to_water(pumping)                    # one efficiency for every main, checked here
    return {
        "info": info,
        "fluid": fluid,
        "pumping": pumping,
        "energy": read(EnergyTariff, required=True),
        "economics": read(Economics, required=True),
        "growth": growth,
        "pumped_mains": read(PumpedMains),
        "breaks": read(BreakSettings, required=True),
        "replacement": read(NewMain, required=True),
        "materials": tuple(MaterialClass.read(s)
                           for s in top.tables("material", MaterialClass.keys())),
        "programme": read(ProgrammeSettings, required=True),
        "solver": read(SolverOptions),
    }
