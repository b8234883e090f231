"""Network study inputs (study layer, edge): the network file's own sections, and its reader.

The sections a network shares with a sizing study are read by the same classes, so their keys,
rules and messages are the same: ``[study]`` (:class:`~pipeopt.inputs.StudyInfo`), ``[fluid]``
(:class:`~pipeopt.inputs.FluidSpec`), ``[pumping]`` (:class:`~pipeopt.inputs.Pumping`),
``[energy]`` (:class:`~pipeopt.costs.EnergyTariff`), ``[pump_station]``
(:class:`~pipeopt.costs.PumpStationCost`), ``[economics]`` (:class:`~pipeopt.inputs.Economics`)
and the growth keys of ``[growth]`` (``flow_per_year``, ``design_year``, ``flow_cap``, checked
by :class:`~pipeopt.duty.DutyProfile` on the network's total demand). A gravity-fed network may
leave out ``[pumping]``, ``[energy]`` and ``[economics]``.

The network's own sections are :class:`~pipeopt.fields.InputSection` s too, each field with its
unit and rule in one spec: :class:`NetworkSettings` (``[network]``), :class:`OptimizerSettings`
(``[optimizer]``), :class:`DutyPoint` (``[[duty]]``: name, hours, demand factor), :class:`Node`
(``[[node]]``), :class:`Source` (``[[source]]``), :class:`Pipe` (``[[pipe]]``) and
:class:`DiameterOption` (``[[diameter_option]]``). Every section is read and checked by
:func:`read_network` before any fluid property or hydraulic call.

Examples
--------
>>> round(Node("Quillmere Cross", "44 m", "4 L/s", "25 m").demand * 1000, 9)  # L/s
4.0
>>> Node("Quillmere Cross", 44, "4 L/s")  # doctest: +ELLIPSIS
Traceback (most recent call last):
...
pipeopt.errors.InputError: node.elevation: expected a head ... such as '24 m', got 44 with no unit
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..costs import EnergyTariff, PowerLawPipeCost, PumpStationCost
from ..duty import HOURS_PER_YEAR
from ..errors import InputError
from ..fields import (
    InputSection,
    flag,
    number,
    quantity,
    section,
    text,
    texts,
    to_quantity,
    whole,
)
from ..inputs import Economics, FluidSpec, Pumping, StudyInfo
from ..studyfile import Section, StudyFileError
from .hydraulics import (
    HAZEN_WILLIAMS_COEFFICIENT,
    HAZEN_WILLIAMS_DIAMETER_EXPONENT,
    HAZEN_WILLIAMS_FLOW_EXPONENT,
)

__all__ = ["NetworkSettings", "OptimizerSettings", "DutyPoint", "Node", "Source", "Pipe",
           "DiameterOption", "HEAD_LOSS_LAWS", "GROWTH_KEYS", "read_network"]

#: The head-loss laws of ``network.head_loss``.
HEAD_LOSS_LAWS = ("darcy-weisbach", "hazen-williams")
#: The keys of ``[growth]`` (the duty growth keys of a sizing study) and the
#: :class:`~pipeopt.duty.DutyProfile` argument each stands for.
GROWTH_KEYS = {"flow_per_year": "growth", "design_year": "design_year", "flow_cap": "flow_cap"}


@dataclass(frozen=True)
class NetworkSettings(InputSection):
    """The ``[network]`` section: the head-loss law and the network-wide defaults.

    Parameters
    ----------
    head_loss : {"darcy-weisbach", "hazen-williams"}
        Darcy–Weisbach with Colebrook–White (default) or Hazen–Williams.
    hazen_williams_coefficient, hazen_williams_flow_exponent, hazen_williams_diameter_exponent
        The SI Hazen–Williams constants (10.5088, 1.852, 4.87 by default; published
        benchmarks differ in them).
    roughness : str or Quantity
        Roughness of an existing pipe or a diameter option that gives none (default 0.1 mm).
    hazen_williams_c : float
        Hazen–Williams C of an existing pipe or a diameter option that gives none (130).
    min_pressure_head : str or Quantity, optional
        Least pressure head of every node that gives none, e.g. ``"25 m"``.
    velocity_max : str or Quantity, optional
        Highest velocity in a new pipe in any demand case, e.g. ``"2.5 m/s"``.
    split_pipes : bool
        Let a pipe of a branched network be made of two sizes in series.
    """

    SECTION = "network"
    head_loss: str = text(HEAD_LOSS_LAWS, default="darcy-weisbach")
    hazen_williams_coefficient: float = number(1.0, 100.0, default=HAZEN_WILLIAMS_COEFFICIENT)
    hazen_williams_flow_exponent: float = number(1.5, 2.0, default=HAZEN_WILLIAMS_FLOW_EXPONENT)
    hazen_williams_diameter_exponent: float = number(4.0, 5.5,
                                                     default=HAZEN_WILLIAMS_DIAMETER_EXPONENT)
    roughness: float = quantity("roughness", low=0.0, default="0.1 mm")
    hazen_williams_c: float = number(1.0, 200.0, default=130.0)
    min_pressure_head: float | None = quantity("head", low=0.0, default=None)
    velocity_max: float | None = quantity("velocity", low=0.0, low_open=True, default=None)
    split_pipes: bool = flag(default=False)

    @property
    def hazen_williams(self) -> tuple[float, float, float]:
        """(coefficient, diameter exponent, flow exponent) of Hazen–Williams."""
        return (self.hazen_williams_coefficient, self.hazen_williams_diameter_exponent,
                self.hazen_williams_flow_exponent)


@dataclass(frozen=True)
class OptimizerSettings(InputSection):
    """The ``[optimizer]`` section: the looped search's seed, budget, chains and target cost."""

    SECTION = "optimizer"
    seed: int = whole(0, 1e12, default=1)
    evaluations: int = whole(1, 1e9, default=100_000)
    chains: int = whole(1, 256, default=8)
    target: float | None = number(0.0, 1e15, default=None)


@dataclass(frozen=True)
class DutyPoint(InputSection):
    """A ``[[duty]]`` table of a network: a demand case and the hours it is held.

    Parameters
    ----------
    name : str, optional
        Label (default ``duty 1``, ``duty 2``, ...).
    hours : float, optional
        Hours per year [h/yr] the case is held (needed where the network is pumped; every duty
        point gives them, or none does).
    demand_factor : float
        Factor on every node's single demand in this case (a node that lists one demand per
        duty point is not scaled).
    """

    SECTION = "duty"
    name: str | None = text(default=None)
    hours: float | None = number(0.0, HOURS_PER_YEAR, low_open=True, default=None,
                                 example="4200")
    demand_factor: float = number(0.0, 100.0, default=1.0)


@dataclass(frozen=True)
class Node(InputSection):
    """A junction: elevation, demand, least pressure head, optional map coordinates.

    Parameters
    ----------
    name : str
    elevation : str or Quantity
        Ground (or outlet) level, e.g. ``"44 m"``.
    demand : str, Quantity or sequence of them
        One flow (scaled by each duty point's ``demand_factor``), or one flow per duty point;
        negative for an inflow.
    min_pressure_head : str or Quantity, optional
        Least pressure head the node must keep (default: ``network.min_pressure_head``).
    x, y : str or Quantity, optional
        Map coordinates.
    """

    SECTION = "node"
    name: str = text()
    elevation: float = quantity("head")
    demand: Any = field(default=None, metadata={})
    min_pressure_head: float | None = quantity("head", low=0.0, default=None)
    x: float | None = quantity("length", default=None)
    y: float | None = quantity("length", default=None)

    def _check(self, path: str) -> None:
        if not self.name:
            raise InputError(f"{path}.name: required key is missing")
        d = self.demand
        if d is None:
            raise InputError(f"{path}.demand: required key is missing (write it with a unit, "
                             f"e.g. demand = \"4 L/s\", or one flow per duty point)")
        if isinstance(d, list | tuple):
            if not d:
                raise InputError(f"{path}.demand: expected a flow or a list of flows, got an "
                                 f"empty list")
            value: Any = tuple(to_quantity(v, "flow", f"{path}.demand[{i}]")
                               for i, v in enumerate(d))
        else:
            value = to_quantity(d, "flow", f"{path}.demand")
        object.__setattr__(self, "demand", value)

    @property
    def per_duty(self) -> bool:
        """True when the node lists one demand per duty point."""
        return isinstance(self.demand, tuple)

    def demands(self, factors: tuple[float, ...], path: str) -> tuple[float, ...]:
        """The node's demand in each duty point [m³/s]."""
        if not self.per_duty:
            return tuple(float(self.demand) * f for f in factors)
        if len(self.demand) != len(factors):
            raise InputError(f"{path}.demand: {len(self.demand)} flows for {len(factors)} duty "
                             f"point(s); give one flow, or one per duty point")
        return tuple(float(v) for v in self.demand)

    @classmethod
    def read(cls, sec: Any, **given: Any) -> Node:
        return super().read(sec, demand=sec.raw("demand"), **given)

    @classmethod
    def keys(cls) -> tuple[str, ...]:
        return (*super().keys(), "demand")


@dataclass(frozen=True)
class Source(InputSection):
    """A source: a fixed head, or a pumped source drawing from a level.

    A pumped source without ``head`` delivers, in each demand case, the least head that keeps
    every node's pressure (the design chooses it); with ``head`` it holds that head.

    Parameters
    ----------
    name : str
    head : str or Quantity, optional
        The head the source holds, e.g. ``"85 m"`` (required unless pumped).
    pumped : bool
        The source is pumped: its pump station and energy are part of the cost.
    level : str or Quantity, optional
        The level a pumped source draws from, e.g. ``"31 m"``.
    x, y : str or Quantity, optional
        Map coordinates.
    """

    SECTION = "source"
    name: str = text()
    head: float | None = quantity("head", default=None)
    pumped: bool = flag(default=False)
    level: float | None = quantity("head", default=None)
    x: float | None = quantity("length", default=None)
    y: float | None = quantity("length", default=None)

    def _check(self, path: str) -> None:
        if not self.name:
            raise InputError(f"{path}.name: required key is missing")
        if self.pumped and self.level is None:
            raise InputError(f"{path}.level: a pumped source needs the level it draws from, "
                             f"e.g. level = \"38 m\"")
        if not self.pumped and self.level is not None:
            raise InputError(f"{path}.level: only a pumped source has a level (set pumped = "
                             f"true, or give head only)")
        if not self.pumped and self.head is None:
            raise InputError(f"{path}.head: required key is missing (the head the source "
                             f"holds, e.g. head = \"85 m\")")
        if self.pumped and self.head is not None and self.head < self.level:
            raise InputError(f"{path}.head: a pumped source's head must be at least its level "
                             f"({self.level:g} m); got {self.head:g} m")

    @property
    def free(self) -> bool:
        """A pumped source whose head the design chooses."""
        return self.pumped and self.head is None


@dataclass(frozen=True)
class Pipe(InputSection):
    """A pipe from one node to another: existing when ``inner_diameter`` is given, else sized.

    Parameters
    ----------
    name : str
    start, end : str
        The nodes or sources it joins (study file: ``from``, ``to``).
    length : str or Quantity
    inner_diameter : str or Quantity, optional
        The bore of an existing pipe (kept as it is).
    roughness : str or Quantity, optional
        An existing pipe's roughness (Darcy–Weisbach).
    hazen_williams_c : float, optional
        An existing pipe's C (Hazen–Williams).
    minor_loss_k : float
        Sum of the pipe's minor-loss coefficients.
    sizes : sequence of str, optional
        Names of the diameter options a pipe to size may take (default: every option).
    """

    SECTION = "pipe"
    name: str = text()
    start: str = text(key="from")
    end: str = text(key="to")
    length: float = quantity("length", low=0.0, low_open=True)
    inner_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    roughness: float | None = quantity("roughness", low=0.0, default=None)
    hazen_williams_c: float | None = number(1.0, 200.0, default=None)
    minor_loss_k: float = number(0.0, 1e4, default=0.0)
    sizes: tuple = texts(default=())

    def _check(self, path: str) -> None:
        for key, value in (("name", self.name), ("from", self.start), ("to", self.end)):
            if not value:
                raise InputError(f"{path}.{key}: required key is missing")
        if self.inner_diameter is None and (self.roughness is not None
                                            or self.hazen_williams_c is not None):
            raise InputError(f"{path}: roughness and hazen_williams_c belong to an existing "
                             f"pipe (give its inner_diameter), or to a [[diameter_option]]")
        if self.inner_diameter is not None and self.sizes:
            raise InputError(f"{path}.sizes: an existing pipe (with inner_diameter) is not "
                             f"sized")

    @property
    def existing(self) -> bool:
        """The pipe is kept as it is (it has an inner diameter)."""
        return self.inner_diameter is not None


@dataclass(frozen=True)
class DiameterOption(InputSection):
    """A candidate size of the pipes to size, and its capital per metre.

    Parameters
    ----------
    name : str, optional
        Label (default: ``"<material> <size>"`` for a catalog size).
    inner_diameter : str or Quantity, optional
        The bore; or give ``material`` and ``size`` (a catalog designation).
    material, size : str, optional
        A catalog material and designation, e.g. ``"ductile-iron"``, ``"DN 200 C40"``: the bore,
        roughness and C come from the catalog.
    cost_per_metre : float, optional
        Capital per metre, supplied and installed [currency/m].
    cost : PowerLawPipeCost, optional
        Or a · D^n on the outside diameter (a catalog size) or the bore (``{coefficient,
        exponent}`` in a study file).
    roughness : str or Quantity, optional
        Roughness (default: the catalog material's, else ``network.roughness``).
    hazen_williams_c : float, optional
        C (default: the catalog material's, else ``network.hazen_williams_c``).
    """

    SECTION = "diameter_option"
    name: str | None = text(default=None)
    inner_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    material: str | None = text(default=None)
    size: str | None = text(default=None)
    cost_per_metre: float | None = number(0.0, 1e9, low_open=True, default=None,
                                          example="120.0")
    cost: PowerLawPipeCost | None = section(PowerLawPipeCost, default=None)
    roughness: float | None = quantity("roughness", low=0.0, default=None)
    hazen_williams_c: float | None = number(1.0, 200.0, default=None)

    def _check(self, path: str) -> None:
        catalog = self.material is not None or self.size is not None
        if catalog and (self.inner_diameter is not None or self.material is None
                        or self.size is None):
            raise InputError(f"{path}: give either inner_diameter, or material and size (a "
                             f"catalog designation such as material = \"ductile-iron\", size = "
                             f"\"DN 200 C40\")")
        if not catalog and self.inner_diameter is None:
            raise InputError(f"{path}.inner_diameter: required key is missing (or give "
                             f"material and size), e.g. inner_diameter = \"0.2 m\"")
        if not catalog and not self.name:
            raise InputError(f"{path}.name: required key is missing")
        if (self.cost_per_metre is None) == (self.cost is None):
            raise InputError(f"{path}: give cost_per_metre (capital per metre, supplied and "
                             f"installed) or cost = {{ coefficient, exponent }}, one of the two")


# --------------------------------------------------------------------------------------------
# the reader
# --------------------------------------------------------------------------------------------
#: Top-level sections of a network study file.
SECTIONS = ("study", "network", "optimizer", "fluid", "duty", "growth", "node", "source",
            "pipe", "diameter_option", "pumping", "energy", "pump_station", "economics",
            "uncertainty")


def read_network(mapping: dict, base: Path) -> dict[str, Any]:
    """Every section of a network study file, checked; the fluid not yet evaluated.

    Returns
    -------
    dict
        ``info`` (StudyInfo), ``settings`` (NetworkSettings), ``optimizer``
        (OptimizerSettings), ``fluid`` (FluidSpec or None: water at 15 °C), ``duties`` (tuple
        of DutyPoint), ``growth`` (the raw ``[growth]`` values by DutyProfile argument),
        ``nodes``, ``sources``, ``pipes``, ``options`` (tuples of sections), ``pumping``,
        ``energy``, ``pump_station``, ``economics`` (each None when absent) and the raw
        ``uncertainty`` table.
    """
    top = Section(mapping, "", SECTIONS)
    info_sec = top.table("study", StudyInfo.keys())
    info = StudyInfo.read(info_sec)
    if info_sec is None or not info_sec.has("name"):
        info = StudyInfo(name="network study", currency=info.currency,
                         illustrative=info.illustrative, description=info.description)
    fluid = top.table("fluid", FluidSpec.keys())
    duties = top.tables("duty", DutyPoint.keys(), required=False)
    given = [d.has("hours") for d in duties]
    if any(given) and not all(given):
        k = given.index(False)
        raise StudyFileError(f"duty[{k}].hours: required key is missing (give every duty point "
                             f"its hours, e.g. hours = 4200)")
    gr = top.table("growth", tuple(GROWTH_KEYS))
    growth = {} if gr is None else {arg: gr.raw(key) for key, arg in GROWTH_KEYS.items()
                                    if gr.has(key)}

    def optional(name: str, cls: Any) -> Any:
        sec = top.table(name, cls.keys())
        return None if sec is None else cls.read(sec)

    return {
        "info": info,
        "settings": NetworkSettings.read(top.table("network", NetworkSettings.keys())),
        "optimizer": OptimizerSettings.read(top.table("optimizer", OptimizerSettings.keys())),
        "fluid": None if fluid is None else FluidSpec.read(fluid),
        "duties": tuple(DutyPoint.read(d) for d in duties),
        "growth": growth,
        "nodes": tuple(Node.read(s) for s in top.tables("node", Node.keys())),
        "sources": tuple(Source.read(s) for s in top.tables("source", Source.keys())),
        "pipes": tuple(Pipe.read(s) for s in top.tables("pipe", Pipe.keys())),
        "options": tuple(DiameterOption.read(s) for s in
                         top.tables("diameter_option", DiameterOption.keys(), required=False)),
        "pumping": optional("pumping", Pumping),
        "energy": optional("energy", EnergyTariff),
        "pump_station": optional("pump_station", PumpStationCost),
        "economics": optional("economics", Economics),
        "uncertainty": top.raw("uncertainty"),
    }

