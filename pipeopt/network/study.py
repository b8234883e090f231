"""Network study (study layer): a network file to the least-cost sizes and the proof of pressure.

A :class:`NetworkStudy` reads a network study file (TOML, every dimensional value with its
unit), builds a :class:`~pipeopt.network.design.DesignProblem` in SI, chooses the optimizer
(exact mixed-integer programming for a branched network, the batched local search for a looped
one), re-solves the chosen design's hydraulics and returns a :class:`NetworkResult`. It holds no
formulas: the physics is in :mod:`pipeopt.network.hydraulics`, the money in
:mod:`pipeopt.network.lifecycle`, the optimizers in :mod:`pipeopt.network.design`.

The study file (sections and keys; ``[fluid]``, ``[pumping]``, ``[energy]``,
``[pump_station]``, ``[economics]`` and ``[growth]`` read as in a sizing study)::

    [study]            name, currency, illustrative, description
    [network]          head_loss ("darcy-weisbach" | "hazen-williams"),
                       hazen_williams_coefficient, hazen_williams_flow_exponent,
                       hazen_williams_diameter_exponent, roughness, hazen_williams_c,
                       min_pressure_head, velocity_max, split_pipes
    [optimizer]        seed, evaluations, chains, target
    [[duty]]           name, hours, demand_factor
    [[node]]           name, elevation, demand (one flow, or one per duty point),
                       min_pressure_head, x, y
    [[source]]         name, head, pumped, level, x, y
    [[pipe]]           name, from, to, length, minor_loss_k, and either an existing pipe
                       (inner_diameter, roughness or hazen_williams_c) or a pipe to size
                       (optional sizes = [...] naming diameter options)
    [[diameter_option]] name, inner_diameter or (material, size), cost_per_metre or
                       cost = { coefficient, exponent } (a D^n on the outside diameter),
                       roughness, hazen_williams_c

Examples
--------
>>> from pipeopt.network import NetworkStudy
>>> result = NetworkStudy.demo().run(progress=False)
>>> result.success, bool(result.nodes["feasible"].all())
(True, True)
"""

from __future__ import annotations

import difflib
import html
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from ..catalog import default_catalog
from ..costs import EnergyTariff, PowerLawPipeCost, PumpStationCost
from ..duty import DutyProfile
from ..errors import InputError
from ..fluid import Fluid
from ..studyfile import Section, StudyFileError, StudyFileMixin
from ..units import Quantity
from . import design as ds
from .hydraulics import (
    HAZEN_WILLIAMS_COEFFICIENT,
    HAZEN_WILLIAMS_DIAMETER_EXPONENT,
    HAZEN_WILLIAMS_FLOW_EXPONENT,
    NetworkGraph,
)
from .lifecycle import NetworkEconomics

__all__ = ["Node", "Source", "Pipe", "DiameterOption", "NetworkSettings", "NetworkStudy",
           "NetworkResult", "CAUTION"]

#: The caution every network summary carries.
CAUTION = ("An engineering-economics study that supports, and does not replace, a design: the "
           "check covers steady pressures at the given demands only, not surge, fire flows, "
           "pipe pressure ratings or supply when a pipe fails; "
           "pressure, surge and structural questions need a qualified engineer, and local "
           "codes and licensed engineering practice govern.")


# --------------------------------------------------------------------------------------------
# inputs (SI)
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Node:
    """A junction: elevation [m], demand per duty point [m³/s], minimum pressure head [m]."""

    name: str
    elevation: float
    demand: tuple
    min_pressure_head: float
    x: float = float("nan")
    y: float = float("nan")


@dataclass(frozen=True)
class Source:
    """A source: a fixed head [m], or a pumped source drawing from ``level`` [m].

    A pumped source without ``head`` delivers the least head that keeps every junction's
    pressure (the design chooses it); with ``head`` it holds that head.
    """

    name: str
    head: float | None
    pumped: bool = False
    level: float | None = None
    x: float = float("nan")
    y: float = float("nan")


@dataclass(frozen=True)
class Pipe:
    """A pipe from one node to another; existing when ``inner_diameter`` is given [m]."""

    name: str
    start: str
    end: str
    length: float
    inner_diameter: float | None = None
    roughness: float | None = None
    hazen_williams_c: float | None = None
    minor_loss_k: float = 0.0
    sizes: tuple = ()


@dataclass(frozen=True)
class DiameterOption:
    """A candidate size: inner diameter [m], capital per metre, roughness [m], C [-]."""

    name: str
    inner_diameter: float
    cost_per_metre: float
    roughness: float | None = None
    hazen_williams_c: float | None = None
    source: str = "study file"


@dataclass(frozen=True)
class NetworkSettings:
    """The ``[network]`` and ``[optimizer]`` settings, SI."""

    head_loss: str = "darcy-weisbach"
    hazen_williams_coefficient: float = HAZEN_WILLIAMS_COEFFICIENT
    hazen_williams_flow_exponent: float = HAZEN_WILLIAMS_FLOW_EXPONENT
    hazen_williams_diameter_exponent: float = HAZEN_WILLIAMS_DIAMETER_EXPONENT
    roughness: float = 1e-4
    hazen_williams_c: float = 130.0
    velocity_max: float | None = None
    split_pipes: bool = False
    min_pressure_head: float | None = None
    seed: int = 1
    evaluations: int = 100_000
    chains: int = 8
    target: float | None = None


# --------------------------------------------------------------------------------------------
# the study
# --------------------------------------------------------------------------------------------
class NetworkStudy(StudyFileMixin):
    """Least-cost (or least life-cycle-cost) sizing of the pipes of a network.

    Parameters
    ----------
    nodes : list of Node
    sources : list of Source
    pipes : list of Pipe
    options : list of DiameterOption
        Candidate sizes of the pipes to size.
    settings : NetworkSettings, optional
    fluid : Fluid, optional
        The liquid (default: water at 15 °C).
    duty_names : tuple of str, optional
        Names of the duty points (one per entry of each node's demand).
    hours : tuple of float, optional
        Hours per year of each duty point [h/yr] (needed where the network is pumped).
    growth : float
        Yearly growth of every demand [1/yr].
    economics : dict, optional
        ``efficiency``, ``tariff`` (EnergyTariff), ``pump_station`` (PumpStationCost or None),
        ``discount_rate``, ``horizon``, ``pipe_life``, ``pipe_maintenance``: needed where a
        source is pumped.
    name, currency : str
    illustrative : bool
        Marks every output as using invented numbers.
    """

    _DEMO_FILE = "demo_network.toml"

    def __init__(self, nodes: list[Node], sources: list[Source], pipes: list[Pipe],
                 options: list[DiameterOption], settings: NetworkSettings | None = None,
                 fluid: Fluid | None = None, duty_names: tuple = ("design",),
                 hours: tuple | None = None, growth: float = 0.0,
                 economics: dict | None = None, name: str = "network study",
                 currency: str = "", illustrative: bool = False) -> None:
        self.nodes = list(nodes)
        self.sources = list(sources)
        self.pipes = list(pipes)
        self.options = sorted(options, key=lambda o: o.inner_diameter)
        self.settings = settings or NetworkSettings()
        self.fluid = fluid or Fluid.water(Quantity(15.0, "degC"))
        self.fluid_is_default = fluid is None
        self.duty_names = tuple(duty_names)
        self.hours = None if hours is None else tuple(float(h) for h in hours)
        self.growth = float(growth)
        self.economics_inputs = economics
        self.name = name
        self.currency = currency
        self.illustrative = bool(illustrative)
        self.notes: list[str] = []
        self.problem = self._build_problem()

    # ----- construction ---------------------------------------------------------------------
    def _build_problem(self) -> ds.DesignProblem:
        s = self.settings
        if not self.sources:
            raise InputError("source: the network has no source (add a [[source]] table)")
        if not self.nodes:
            raise InputError("node: the network has no node to supply (add [[node]] tables)")
        names = [n.name for n in self.nodes] + [x.name for x in self.sources]
        seen: set[str] = set()
        for nm in names:
            if nm in seen:
                raise InputError(f"node/source name {nm!r} is used twice; names must be unique")
            seen.add(nm)
        index = {nm: i for i, nm in enumerate(names)}
        start, end = [], []
        for k, p in enumerate(self.pipes):
            for key, ref in (("from", p.start), ("to", p.end)):
                if ref not in index:
                    near = difflib.get_close_matches(ref, names, n=1, cutoff=0.5)
                    hint = f"; did you mean {near[0]!r}?" if near else ""
                    raise InputError(f"pipe[{k}].{key}: no node or source is named {ref!r}"
                                     f"{hint}")
            start.append(index[p.start])
            end.append(index[p.end])
        pnames = [p.name for p in self.pipes]
        if len(set(pnames)) != len(pnames):
            dup = next(n for n in pnames if pnames.count(n) > 1)
            raise InputError(f"pipe name {dup!r} is used twice; names must be unique")
        graph = NetworkGraph(len(self.nodes), len(self.sources), start, end,
                             node_names=tuple(names), pipe_names=tuple(pnames))
        k = len(self.duty_names)
        for i, n in enumerate(self.nodes):
            if len(n.demand) != k:
                raise InputError(f"node[{i}].demand: {len(n.demand)} value(s) for {k} duty "
                                 f"point(s); give one flow, or one per duty point")
        base = np.array([n.demand for n in self.nodes], dtype=float).T           # (K, J)
        pumped = [x for x in self.sources if x.pumped]
        free = [x for x in pumped if x.head is None]
        if free and len(self.sources) > 1:
            raise InputError(f"source {free[0].name!r}: a pumped source without a head may "
                             f"only feed a network with no other source (give it a head, or "
                             f"remove the other sources)")
        econ = None
        if pumped:
            econ = self._economics(base)
        elif self.economics_inputs is not None:
            self.notes.append("gravity-fed: the cost is the pipe capital only (the energy and "
                              "economics sections are not used)")
        demand = self._demand_by_year(base, econ)
        design = [i for i, p in enumerate(self.pipes) if p.inner_diameter is None]
        m = len(self.options)
        if design and m == 0:
            raise InputError("diameter_option: pipes are to be sized but no [[diameter_option]] "
                             "is given")
        onames = [o.name for o in self.options]
        if len(set(onames)) != len(onames):
            dup = next(n for n in onames if onames.count(n) > 1)
            raise InputError(f"diameter_option name {dup!r} is used twice")
        dias = [o.inner_diameter for o in self.options]
        if len(set(dias)) != len(dias):
            raise InputError("diameter_option: two options have the same inner diameter")
        allowed = np.ones((len(design), m), dtype=bool)
        for r, i in enumerate(design):
            p = self.pipes[i]
            if p.sizes:
                for sz in p.sizes:
                    if sz not in onames:
                        near = difflib.get_close_matches(sz, onames, n=1, cutoff=0.5)
                        hint = f"; did you mean {near[0]!r}?" if near else ""
                        raise InputError(f"pipe[{i}].sizes: no diameter option is named "
                                         f"{sz!r}{hint}")
                allowed[r] = [o in p.sizes for o in onames]
        hw = s.head_loss == "hazen-williams"
        rough = np.array([np.nan if p.inner_diameter is None else
                          (p.roughness if p.roughness is not None else s.roughness)
                          for p in self.pipes])
        cfac = np.array([np.nan if p.inner_diameter is None else
                         (p.hazen_williams_c if p.hazen_williams_c is not None
                          else s.hazen_williams_c) for p in self.pipes])
        for i, p in enumerate(self.pipes):
            if p.inner_diameter is not None and hw and p.roughness is not None \
                    and p.hazen_williams_c is None:
                raise InputError(f"pipe[{i}]: head_loss is hazen-williams; give the existing "
                                 f"pipe a hazen_williams_c, not a roughness")
            if p.inner_diameter is not None and not hw and p.hazen_williams_c is not None \
                    and p.roughness is None:
                raise InputError(f"pipe[{i}]: head_loss is darcy-weisbach; give the existing "
                                 f"pipe a roughness, not a hazen_williams_c")
        fixed_head = np.array([x.level if (x.pumped and x.head is None) else x.head
                               for x in self.sources], dtype=float)
        suction = np.array([x.level if x.pumped else np.nan for x in self.sources], dtype=float)
        return ds.DesignProblem(
            graph=graph, length=[p.length for p in self.pipes], design=np.array(design, int),
            option_diameter=dias, option_cost=[o.cost_per_metre for o in self.options],
            allowed=allowed, demand=demand,
            elevation=[n.elevation for n in self.nodes],
            min_head=[n.min_pressure_head for n in self.nodes],
            source_head=fixed_head, suction_level=suction, free_pump=bool(free),
            head_loss=s.head_loss,
            fixed_diameter=[np.nan if p.inner_diameter is None else p.inner_diameter
                            for p in self.pipes],
            roughness=np.nan_to_num(rough), c_factor=np.nan_to_num(cfac, nan=130.0),
            option_roughness=[s.roughness if o.roughness is None else o.roughness
                              for o in self.options],
            option_c_factor=[s.hazen_williams_c if o.hazen_williams_c is None
                             else o.hazen_williams_c for o in self.options],
            minor_loss_k=[p.minor_loss_k for p in self.pipes],
            density=self.fluid.density, viscosity=self.fluid.viscosity,
            hazen_williams=(s.hazen_williams_coefficient, s.hazen_williams_diameter_exponent,
                            s.hazen_williams_flow_exponent),
            velocity_max=s.velocity_max, economics=econ)

    def _economics(self, base: np.ndarray) -> NetworkEconomics:
        e = self.economics_inputs
        if e is None:
            raise InputError("a pumped source needs [pumping], [energy] and [economics] "
                             "sections (efficiency, energy price, discount rate, horizon, pipe "
                             "life)")
        if self.hours is None:
            raise InputError("a pumped source needs the hours of each duty point: add "
                             "[[duty]] tables with hours")
        total = base.sum(axis=1)
        if np.any(total <= 0):
            raise InputError("duty: the total demand of every duty point must be positive")
        duty = DutyProfile.from_si(flows=tuple(total), hours=self.hours, growth=self.growth,
                                   names=self.duty_names)
        return NetworkEconomics(duty=duty, efficiency=e["efficiency"], tariff=e["tariff"],
                                pump_station=e.get("pump_station"),
                                discount_rate=e["discount_rate"], horizon=e["horizon"],
                                pipe_life=e["pipe_life"],
                                pipe_maintenance=e.get("pipe_maintenance", 0.0))

    def _demand_by_year(self, base: np.ndarray, econ: NetworkEconomics | None) -> np.ndarray:
        """Demands (T, K, J): every year when a pumped network's demands grow, else one."""
        if not self.growth:
            return base[None]
        if econ is None and self.economics_inputs is None:
            raise InputError("growth: demands that grow need a horizon ([economics] horizon)")
        horizon = econ.horizon if econ is not None else int(self.economics_inputs["horizon"])
        factors = (1.0 + self.growth) ** np.arange(horizon)
        if econ is None:
            # special case: a gravity network is checked in its year of largest demands
            f = factors.max() if self.growth > 0 else factors.min()
            return (base * f)[None]
        return factors[:, None, None] * base[None]

    # ----- study file ------------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> NetworkStudy:
        top = Section(mapping, "", ("study", "network", "optimizer", "fluid", "duty", "growth",
                                    "node", "source", "pipe", "diameter_option", "pumping",
                                    "energy", "pump_station", "economics", "uncertainty"))
        if top.has("uncertainty"):
            raise StudyFileError("uncertainty: not supported in a network study yet (run the "
                                 "study with each value of interest instead)")
        return _read_study(top, base)

    # ----- running ---------------------------------------------------------------------------
    def run(self, progress: bool | None = None, method: str = "auto") -> NetworkResult:
        """Size the pipes and check every junction's pressure.

        Parameters
        ----------
        progress : bool, optional
            Progress bar of the looped search (default: when standard error is a terminal).
        method : {"auto", "milp", "search"}
            ``"auto"``: exact programming when the network is branched, the search otherwise.

        Returns
        -------
        NetworkResult
        """
        pr = self.problem
        s = self.settings
        branched = pr.graph.is_forest()
        if method not in ("auto", "milp", "search"):
            raise InputError(f"method must be 'auto', 'milp' or 'search'; got {method!r}")
        if method == "milp" and not branched:
            raise InputError("method 'milp' needs a branched network (this one has a loop or "
                             "a part fed by several sources)")
        if s.split_pipes and not branched:
            raise InputError("network.split_pipes: split pipes are designed only for branched "
                             "networks")
        if pr.n_design == 0:
            outcome = ds.design_looped(pr, seed=s.seed, evaluations=1, progress=False)
            outcome.message = "no pipe to size: the existing network checked"
        elif method == "milp" or (method == "auto" and branched):
            outcome = ds.design_branched(pr, split=s.split_pipes)
        else:
            outcome = ds.design_looped(pr, seed=s.seed, evaluations=s.evaluations,
                                       chains=s.chains, target=s.target, progress=progress)
        return NetworkResult._build(self, outcome)

    def __repr__(self) -> str:
        n_new = self.problem.n_design
        return (f"NetworkStudy({self.name!r}: {len(self.nodes)} nodes, {len(self.sources)} "
                f"source(s), {len(self.pipes)} pipes of which {n_new} to size, "
                f"{len(self.options)} candidate sizes)")


# --------------------------------------------------------------------------------------------
# reading the study file
# --------------------------------------------------------------------------------------------
def _bool(sec: Section, name: str, default: bool) -> bool:
    v = sec.raw(name, default)
    if not isinstance(v, bool):
        raise StudyFileError(f"{sec.key(name)}: expected true or false, got {v!r}")
    return v


def _coordinate(sec: Section, name: str) -> float:
    if not sec.has(name):
        return float("nan")
    return sec.quantity(name, "length", positive=False)


def _read_study(top: Section, base: Path) -> NetworkStudy:
    st = top.table("study", ("name", "currency", "illustrative", "description"))
    name, currency, illustrative = "network study", "", False
    if st:
        name = st.text("name", name)
        currency = st.text("currency", "")
        illustrative = _bool(st, "illustrative", False)
        st.text("description", "")
    settings = _read_settings(top)
    fluid = _read_fluid(top.table("fluid", ("kind", "temperature", "pressure", "name",
                                            "density", "viscosity")))
    duties = top.tables("duty", ("name", "hours", "demand_factor"), required=False)
    duty_names = tuple(d.text("name", f"duty {i + 1}") for i, d in enumerate(duties)) \
        or ("design",)
    factors = [d.number("demand_factor", 1.0, low=0.0) for d in duties] or [1.0]
    hours = None
    if duties and all(d.has("hours") for d in duties):
        hours = tuple(d.number("hours", None, low=0.0, high=8760.0, low_open=True,
                               example="4200") for d in duties)
    elif any(d.has("hours") for d in duties):
        k = next(i for i, d in enumerate(duties) if not d.has("hours"))
        raise StudyFileError(f"duty[{k}].hours: required key is missing (give every duty "
                             f"point its hours, e.g. hours = 4200)")
    gr = top.table("growth", ("flow_per_year",))
    growth = gr.number("flow_per_year", 0.0, low=-0.5, high=0.5) if gr else 0.0
    s = settings
    nodes = [_read_node(sec, factors, s) for sec in
             top.tables("node", ("name", "elevation", "demand", "min_pressure_head", "x", "y"))]
    sources = [_read_source(sec) for sec in
               top.tables("source", ("name", "head", "pumped", "level", "x", "y"))]
    pipes = [_read_pipe(sec, s) for sec in
             top.tables("pipe", ("name", "from", "to", "length", "inner_diameter", "roughness",
                                 "hazen_williams_c", "minor_loss_k", "sizes"))]
    options = [_read_option(sec, base) for sec in
               top.tables("diameter_option", ("name", "inner_diameter", "material", "size",
                                              "cost_per_metre", "cost", "roughness",
                                              "hazen_williams_c"), required=False)]
    economics = _read_economics(top)
    return NetworkStudy(nodes, sources, pipes, options, settings, fluid, duty_names, hours,
                        growth, economics, name, currency, illustrative)


def _read_settings(top: Section) -> NetworkSettings:
    net = top.table("network", ("head_loss", "hazen_williams_coefficient",
                                "hazen_williams_flow_exponent",
                                "hazen_williams_diameter_exponent", "roughness",
                                "hazen_williams_c", "min_pressure_head", "velocity_max",
                                "split_pipes"))
    opt = top.table("optimizer", ("seed", "evaluations", "chains", "target"))
    kw: dict[str, Any] = {}
    if net:
        kw["head_loss"] = net.text("head_loss", "darcy-weisbach",
                                   ("darcy-weisbach", "hazen-williams"))
        kw["hazen_williams_coefficient"] = net.number(
            "hazen_williams_coefficient", HAZEN_WILLIAMS_COEFFICIENT, low=1.0, high=100.0)
        kw["hazen_williams_flow_exponent"] = net.number(
            "hazen_williams_flow_exponent", HAZEN_WILLIAMS_FLOW_EXPONENT, low=1.5, high=2.0)
        kw["hazen_williams_diameter_exponent"] = net.number(
            "hazen_williams_diameter_exponent", HAZEN_WILLIAMS_DIAMETER_EXPONENT, low=4.0,
            high=5.5)
        kw["roughness"] = net.quantity("roughness", "roughness", default="0.1 mm",
                                       nonnegative=True)
        kw["hazen_williams_c"] = net.number("hazen_williams_c", 130.0, low=1.0, high=200.0)
        kw["velocity_max"] = net.quantity("velocity_max", "velocity", required=False)
        kw["split_pipes"] = _bool(net, "split_pipes", False)
        kw["min_pressure_head"] = net.quantity("min_pressure_head", "head", required=False,
                                               nonnegative=True)
    if opt:
        kw["seed"] = int(opt.number("seed", 1, low=0, integer=True))
        kw["evaluations"] = int(opt.number("evaluations", 100_000, low=1, high=1e9,
                                           integer=True))
        kw["chains"] = int(opt.number("chains", 8, low=1, high=256, integer=True))
        if opt.has("target"):
            kw["target"] = opt.number("target", None, low=0.0)
    return NetworkSettings(**kw)


def _read_fluid(sec: Section | None) -> Fluid | None:
    if sec is None:
        return None
    kind = sec.text("kind", "water", ("water", "coolprop", "custom"))
    if kind == "custom":
        return Fluid(Quantity(sec.quantity("density", "density"), "kg/m^3"),
                     Quantity(sec.quantity("viscosity", "viscosity"), "Pa*s"),
                     name=sec.text("name", "custom fluid"))
    t = Quantity(sec.quantity("temperature", "temperature"), "K")
    p = Quantity(sec.quantity("pressure", "pressure", default="1 atm", required=False), "Pa")
    if kind == "water":
        return Fluid.water(t, p)
    fluid_name = sec.text("name", None)
    if not fluid_name:
        raise StudyFileError("fluid.name: required with kind = \"coolprop\" (e.g. name = "
                             "\"INCOMP::MEG-30%\")")
    return Fluid.coolprop(fluid_name, t, p)


def _read_node(sec: Section, factors: list[float], s: NetworkSettings) -> Node:
    name = sec.text("name", None)
    if not name:
        raise StudyFileError(f"{sec.key('name')}: required key is missing")
    elevation = sec.quantity("elevation", "head", positive=False)
    raw = sec.required("demand")
    k = len(factors)
    if isinstance(raw, list):
        if len(raw) != k:
            raise StudyFileError(f"{sec.key('demand')}: {len(raw)} flows for {k} duty "
                                 f"point(s); give one flow, or one per duty point")
        demand = tuple(Section({"demand": v}, sec.path, ("demand",)).quantity(
            "demand", "flow", positive=False) for v in raw)
    else:
        q = sec.quantity("demand", "flow", positive=False)
        demand = tuple(q * f for f in factors)
    mp = s.min_pressure_head
    if sec.has("min_pressure_head"):
        mp = sec.quantity("min_pressure_head", "head", nonnegative=True)
    if mp is None:
        raise StudyFileError(f"{sec.key('min_pressure_head')}: required key is missing (or "
                             f"set network.min_pressure_head for every node), e.g. "
                             f"min_pressure_head = \"20 m\"")
    return Node(name, elevation, demand, mp,
                _coordinate(sec, "x"), _coordinate(sec, "y"))


def _read_source(sec: Section) -> Source:
    name = sec.text("name", None)
    if not name:
        raise StudyFileError(f"{sec.key('name')}: required key is missing")
    pumped = _bool(sec, "pumped", False)
    head = sec.quantity("head", "head", required=False, positive=False)
    level = sec.quantity("level", "head", required=False, positive=False)
    if pumped and level is None:
        raise StudyFileError(f"{sec.key('level')}: a pumped source needs the level it draws "
                             f"from, e.g. level = \"38 m\"")
    if not pumped and level is not None:
        raise StudyFileError(f"{sec.key('level')}: only a pumped source has a level (set "
                             f"pumped = true, or give head only)")
    if not pumped and head is None:
        raise StudyFileError(f"{sec.key('head')}: required key is missing (the head the "
                             f"source holds, e.g. head = \"85 m\")")
    if pumped and head is not None and head < level:
        raise StudyFileError(f"{sec.key('head')}: a pumped source's head must be at least its "
                             f"level ({level:g} m); got {head:g} m")
    return Source(name, head, pumped, level, _coordinate(sec, "x"), _coordinate(sec, "y"))


def _read_pipe(sec: Section, s: NetworkSettings) -> Pipe:
    name = sec.text("name", None)
    if not name:
        raise StudyFileError(f"{sec.key('name')}: required key is missing")
    start = sec.text("from", None)
    end = sec.text("to", None)
    for key, v in (("from", start), ("to", end)):
        if not v:
            raise StudyFileError(f"{sec.key(key)}: required key is missing (a node or source "
                                 f"name)")
    length = sec.quantity("length", "length")
    d = sec.quantity("inner_diameter", "diameter", required=False)
    rough = sec.quantity("roughness", "roughness", required=False, nonnegative=True)
    c = None
    if sec.has("hazen_williams_c"):
        c = sec.number("hazen_williams_c", None, low=1.0, high=200.0)
    if d is None and (rough is not None or c is not None):
        raise StudyFileError(f"{sec.path}: roughness and hazen_williams_c belong to an existing "
                             f"pipe (give its inner_diameter), or to a [[diameter_option]]")
    sizes = sec.raw("sizes", [])
    if not isinstance(sizes, list) or not all(isinstance(x, str) for x in sizes):
        raise StudyFileError(f"{sec.key('sizes')}: expected a list of diameter option names, "
                             f"e.g. [\"DN 150\", \"DN 200\"]")
    if d is not None and sizes:
        raise StudyFileError(f"{sec.key('sizes')}: an existing pipe (with inner_diameter) is "
                             f"not sized")
    k = sec.number("minor_loss_k", 0.0, low=0.0, high=1e4)
    return Pipe(name, start, end, length, d, rough, c, k, tuple(sizes))


def _read_option(sec: Section, base: Path) -> DiameterOption:
    name = sec.text("name", None)
    material = sec.text("material", None)
    size = sec.text("size", None)
    d = sec.quantity("inner_diameter", "diameter", required=False)
    rough = sec.quantity("roughness", "roughness", required=False, nonnegative=True)
    c = sec.number("hazen_williams_c", None, low=1.0, high=200.0) \
        if sec.has("hazen_williams_c") else None
    source = "study file"
    outside = None
    if material is not None or size is not None:
        if d is not None or material is None or size is None:
            raise StudyFileError(f"{sec.path}: give either inner_diameter, or material and "
                                 f"size (a catalog designation such as material = "
                                 f"\"ductile-iron\", size = \"DN 200 C40\")")
        cat = default_catalog()
        try:
            row = cat.lookup(material, size)
            mat = cat.material(material)
        except InputError as exc:
            raise StudyFileError(f"{sec.path}: {exc}") from None
        d = float(row["inner_diameter_m"])
        outside = float(row["outside_diameter_m"])
        rough = mat.roughness if rough is None else rough
        c = mat.hazen_williams_c if c is None else c
        name = name or f"{material} {size}"
        source = str(row["provenance"])
    if d is None:
        raise StudyFileError(f"{sec.key('inner_diameter')}: required key is missing (or give "
                             f"material and size), e.g. inner_diameter = \"0.2 m\"")
    if not name:
        raise StudyFileError(f"{sec.key('name')}: required key is missing")
    if sec.has("cost_per_metre") == sec.has("cost"):
        raise StudyFileError(f"{sec.path}: give cost_per_metre (capital per metre, supplied "
                             f"and installed) or cost = {{ coefficient, exponent }}, one of "
                             f"the two")
    if sec.has("cost"):
        cs = sec.table("cost", ("coefficient", "exponent"))
        model = PowerLawPipeCost(cs.number("coefficient", None, low=0.0, low_open=True,
                                           example="1800.0"),
                                 cs.number("exponent", None, low=0.0, high=4.0, low_open=True,
                                           example="1.25"))
        cost = float(model.per_metre(outside if outside is not None else d))
    else:
        cost = sec.number("cost_per_metre", None, low=0.0, low_open=True, example="120.0")
    return DiameterOption(name, d, cost, rough, c, source)


def _read_economics(top: Section) -> dict | None:
    pu = top.table("pumping", ("efficiency",))
    en = top.table("energy", ("price", "escalation", "demand_charge"))
    ps = top.table("pump_station", ("cost_coefficient", "cost_exponent", "standby_fraction",
                                    "life", "maintenance"))
    ec = top.table("economics", ("discount_rate", "horizon", "pipe_life", "pipe_maintenance"))
    if not (pu or en or ps or ec):
        return None
    for sec, nm in ((pu, "pumping"), (en, "energy"), (ec, "economics")):
        if sec is None:
            raise StudyFileError(f"{nm}: required section [{nm}] is missing (a pumped network "
                                 f"needs [pumping], [energy] and [economics])")
    out: dict[str, Any] = {
        "efficiency": pu.number("efficiency", None, low=0.0, high=1.0, low_open=True,
                                example="0.70"),
        "tariff": EnergyTariff(en.number("price", None, low=0.0, low_open=True, high=100.0,
                                         example="0.12"),
                               en.number("escalation", 0.0, low=-0.5, high=0.5),
                               en.number("demand_charge", 0.0, low=0.0)),
        "discount_rate": ec.number("discount_rate", None, low=0.0, high=1.0, example="0.05"),
        "horizon": int(ec.number("horizon", None, low=1, high=200, integer=True,
                                 example="30")),
        "pipe_life": ec.number("pipe_life", None, low=1.0, high=500.0, example="60"),
        "pipe_maintenance": ec.number("pipe_maintenance", 0.0, low=0.0, high=1.0),
        "pump_station": None,
    }
    if ps:
        out["pump_station"] = PumpStationCost(
            ps.number("cost_coefficient", None, low=0.0, low_open=True, example="8000"),
            ps.number("cost_exponent", None, low=0.0, high=2.0, low_open=True, example="0.7"),
            ps.number("standby_fraction", 0.0, low=0.0, high=10.0),
            ps.number("life", 20.0, low=1.0, high=200.0),
            ps.number("maintenance", 0.0, low=0.0, high=1.0))
    return out


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
@dataclass
class NetworkResult:
    """What a network study found.

    Attributes
    ----------
    study : NetworkStudy
    pipes : pandas.DataFrame
        One row per pipe (per segment of a split pipe): ``pipe``, ``from``, ``to``,
        ``status`` (new or existing), ``size``, ``inner_diameter_m``, ``length_m``,
        ``flow_m3_s``, ``velocity_m_s``, ``head_loss_m`` (in the case that sets the least
        pressure margin of the network), ``max_velocity_m_s`` (any case) and ``cost`` (capital
        of a new pipe, in the study currency).
    nodes : pandas.DataFrame
        One row per node and source: ``node``, ``kind``, ``elevation_m``, ``head_m``,
        ``pressure_head_m``, ``min_pressure_head_m``, ``margin_m`` (in the case that sets that
        node's least margin, named in ``case``), ``feasible``, ``x_m``, ``y_m``.
    total_cost : float
        Present value of the life-cycle cost where the network is pumped; pipe capital where
        it is gravity-fed [currency].
    costs : dict
        The cost terms (``capex_pipe``, and where pumped ``capex_pump_station``,
        ``pv_energy``, ``pv_maintenance``, ``pv_replacement``, ``pv_residual``, ``pv_total``,
        ``eac``, ``installed_power_kw``).
    success : bool
        A design was found that holds every node's minimum pressure in every case.
    message : str
    outcome : DesignOutcome
        The optimizer's record (method, gap, evaluations, history of the best so far).
    cases : pandas.DataFrame
        One row per demand case (duty point, year): total demand, pump head, power, least
        margin.
    """

    study: NetworkStudy
    pipes: pd.DataFrame
    nodes: pd.DataFrame
    total_cost: float
    costs: dict
    success: bool
    message: str
    outcome: Any = field(repr=False)
    cases: pd.DataFrame = field(repr=False, default_factory=pd.DataFrame)
    _crit: int = field(repr=False, default=0)

    @property
    def currency(self) -> str:
        return self.study.currency

    @classmethod
    def _build(cls, study: NetworkStudy, outcome: ds.DesignOutcome) -> NetworkResult:
        pr = study.problem
        ev = outcome.evaluation
        g = pr.graph
        t_, k_, j = pr.demand.shape
        s = t_ * k_
        case_names = [f"{study.duty_names[c % k_]}" + (f", year {c // k_ + 1}" if t_ > 1 else "")
                      for c in range(s)]
        required = pr.elevation + pr.min_head
        margin = ev.head[0] - required[None, :]                                # (S, J)
        # the case that sets the least margin; of equals, the one of largest demand
        least = margin.min(axis=1)
        tied = least <= least.min() + ds.HEAD_TOLERANCE
        crit = int(np.argmax(np.where(tied, pr.demand.reshape(s, j).sum(axis=1), -np.inf)))
        node_case = np.argmin(margin, axis=0)                                  # (J,)
        jj = np.arange(j)
        head_j = ev.head[0][node_case, jj]
        new = np.zeros(g.n_pipes, dtype=bool)
        new[pr.design] = True
        nodes = pd.DataFrame({
            "node": list(g.node_names[:j]), "kind": "junction",
            "elevation_m": pr.elevation, "head_m": head_j,
            "pressure_head_m": head_j - pr.elevation, "min_pressure_head_m": pr.min_head,
            "margin_m": margin[node_case, jj],
            "feasible": margin[node_case, jj] >= -ds.HEAD_TOLERANCE,
            "case": [case_names[c] for c in node_case],
            "x_m": [n.x for n in study.nodes], "y_m": [n.y for n in study.nodes]})
        src_head = np.array([x.head if x.head is not None else np.nan for x in study.sources])
        if pr.free_pump:
            src_head = np.array([study.sources[0].level + float(ev.pump_head[0, crit])])
        srcs = pd.DataFrame({
            "node": list(g.node_names[j:]), "kind": "source",
            "elevation_m": [x.level if x.level is not None else x.head for x in study.sources],
            "head_m": src_head, "pressure_head_m": np.nan, "min_pressure_head_m": np.nan,
            "margin_m": np.nan, "feasible": True, "case": case_names[crit],
            "x_m": [x.x for x in study.sources], "y_m": [x.y for x in study.sources]})
        nodes = pd.concat([nodes, srcs], ignore_index=True)
        names = list(g.node_names)
        opt_names = [o.name for o in study.options]
        flow = ev.flow[0, crit]
        base = {"pipe": list(g.pipe_names), "from": [names[i] for i in g.start],
                "to": [names[i] for i in g.end],
                "status": np.where(new, "new", "existing"), "length_m": pr.length,
                "flow_m3_s": flow}
        vmax = np.abs(ev.velocity[0]).max(axis=0)
        if outcome.lengths is None:
            sizes = np.array(["existing"] * g.n_pipes, dtype=object)
            diam = pr.fixed_diameter.copy()
            cost = np.zeros(g.n_pipes)
            if pr.n_design:
                sizes[pr.design] = [opt_names[c] for c in outcome.choice]
                diam[pr.design] = pr.option_diameter[outcome.choice]
                cost[pr.design] = pr.option_cost[outcome.choice] * pr.length[pr.design]
            pipes = pd.DataFrame({**base, "size": sizes, "inner_diameter_m": diam,
                                  "velocity_m_s": flow / (np.pi * diam**2 / 4.0),
                                  "head_loss_m": ev.head_loss[0, crit],
                                  "max_velocity_m_s": vmax, "cost": cost})
            pipes = pipes[["pipe", "from", "to", "status", "size", "inner_diameter_m",
                           "length_m", "flow_m3_s", "velocity_m_s", "head_loss_m",
                           "max_velocity_m_s", "cost"]]
        else:
            pipes = _split_rows(study, outcome, base, crit, vmax)
        lc = ev.life_cycle
        costs = {"capex_pipe": float(ev.capital[0])}
        if lc is not None:
            for key in ("capex_pump_station", "installed_power_kw", "pv_energy",
                        "pv_maintenance", "pv_replacement", "pv_residual", "pv_total", "eac"):
                costs[key] = float(getattr(lc, key)[0])
        total = float(ev.cost[0])
        dem = pr.demand.reshape(s, j)
        cases = pd.DataFrame({"case": case_names, "total_demand_m3_s": dem.sum(axis=1),
                              "pump_head_m": ev.pump_head[0],
                              "power_kw": ev.power_kw[0].reshape(s),
                              "least_margin_m": margin.min(axis=1),
                              "mass_imbalance_m3_s": float(ev.mass_residual[0]),
                              "energy_imbalance_m": float(ev.energy_residual[0])})
        ok = bool(outcome.success and ev.feasible[0])
        msg = outcome.message
        if not ev.converged[0]:
            msg += "; the hydraulics of the design did not converge"
        return cls(study=study, pipes=pipes, nodes=nodes, total_cost=total, costs=costs,
                   success=ok, message=msg, outcome=outcome, cases=cases, _crit=crit)

    # ----- views -----------------------------------------------------------------------------
    def text(self) -> str:
        """A plain-text summary: cost, method, sizes, pressures, the hydraulic check, caution."""
        s = self.study
        pr = s.problem
        ev = self.outcome.evaluation
        cur = f" {self.currency}" if self.currency else ""
        law = ("Hazen-Williams (coefficient "
               f"{s.settings.hazen_williams_coefficient:g})" if pr.head_loss == "hazen-williams"
               else "Darcy-Weisbach with Colebrook-White")
        lines = [f"pipeopt network study: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the network and its cost figures are invented.")
        n_cases = pr.n_cases
        lines.append(f"{len(s.nodes)} nodes, {len(s.sources)} source(s), {len(s.pipes)} pipes "
                     f"({pr.n_design} to size from {len(s.options)} sizes); "
                     f"{'branched' if pr.graph.is_forest() else 'looped'}; {law}; "
                     f"{n_cases} demand case(s)")
        lines.append(f"Optimizer: {self.message}")
        lines.append("")
        c = self.costs
        if "pv_total" in c:
            lines += [f"Life-cycle cost {c['pv_total']:,.0f}{cur} present value "
                      f"(EAC {c['eac']:,.0f}{cur}/yr): pipes {c['capex_pipe']:,.0f}, pump "
                      f"station {c['capex_pump_station']:,.0f}, energy {c['pv_energy']:,.0f}",
                      f"  pump head {self.cases['pump_head_m'].min():.1f}-"
                      f"{self.cases['pump_head_m'].max():.1f} m, peak power "
                      f"{self.cases['power_kw'].max():.1f} kW, installed "
                      f"{c['installed_power_kw']:.1f} kW"]
        else:
            lines.append(f"Pipe capital {c['capex_pipe']:,.0f}{cur} (gravity-fed: capital "
                         f"only)")
        new = self.pipes[self.pipes["status"] == "new"]
        if not new.empty:
            w_p = max(len(str(p)) for p in new["pipe"])
            w_s = max(len(str(p)) for p in new["size"])
            lines += ["", f"Sizes chosen (velocity in the {self.cases['case'].iloc[self._crit]} "
                          f"case):"]
            for _, r in new.iterrows():
                lines.append(f"  {r['pipe']:<{w_p}}  {r['size']:<{w_s}} {r['length_m']:8,.0f} m "
                             f"{r['inner_diameter_m'] * 1000:7.1f} mm "
                             f"{abs(r['velocity_m_s']):5.2f} m/s {r['cost']:>12,.0f}{cur}")
        jn = self.nodes[self.nodes["kind"] == "junction"]
        worst = jn.nsmallest(min(3, len(jn)), "margin_m")
        lines += ["", f"Pressure: {int(jn['feasible'].sum())} of {len(jn)} nodes at or above "
                      f"their minimum in every case; least margins:"]
        for _, r in worst.iterrows():
            lines.append(f"  {r['node']:<16} {r['pressure_head_m']:7.2f} m against "
                         f"{r['min_pressure_head_m']:.2f} m ({r['case']})")
        mass, energy = float(ev.mass_residual[0]), float(ev.energy_residual[0])
        held = "held" if mass <= 1e-9 and energy <= 1e-9 else "NOT held"
        lines.append(f"Check: the design re-solved by the global gradient method; mass and "
                     f"energy balance to 1e-9 {held} (the residuals are in the cases table)")
        if int(ev.transitional[0]):
            lines.append(f"Note: {int(ev.transitional[0])} pipe(s) run in the laminar-turbulent "
                         f"band (2000 <= Re < 4000) in some case; their friction factor is "
                         f"bridged linearly between the two regimes")
        if s.fluid_is_default and pr.head_loss == "darcy-weisbach":
            lines.append("Fluid: water at 15 degC (no [fluid] section)")
        lines += [f"Note: {n}" for n in s.notes]
        lines += ["", "Caution: " + CAUTION]
        return "\n".join(lines)

    def __repr__(self) -> str:
        return (f"NetworkResult({self.study.name!r}: total cost {self.total_cost:,.0f} "
                f"{self.currency}, success={self.success})")

    def _repr_html_(self) -> str:
        money = html.escape(self.currency or "currency")
        text = html.escape(self.text()).replace("\n", "<br>")
        pipes = self.pipes.to_html(index=False, border=0, float_format=lambda x: f"{x:,.4g}")
        nodes = self.nodes.drop(columns=["x_m", "y_m"]).to_html(
            index=False, border=0, float_format=lambda x: f"{x:,.4g}")
        return (f"<div class='pipeopt-result'><p style='font-family:monospace'>{text}</p>"
                f"<p><b>Pipes</b> (money in {money})</p>{pipes}<p><b>Nodes</b></p>{nodes}"
                f"</div>")


def _split_rows(study: NetworkStudy, outcome: ds.DesignOutcome, base: dict, crit: int,
                vmax: np.ndarray) -> pd.DataFrame:
    """Pipe rows of a split-pipe design: one row per segment of each size."""
    pr = study.problem
    rows = pd.DataFrame(base)
    rows["size"] = "existing"
    rows["inner_diameter_m"] = pr.fixed_diameter
    rows["velocity_m_s"] = rows["flow_m3_s"] / (np.pi * pr.fixed_diameter**2 / 4.0)
    rows["head_loss_m"] = outcome.evaluation.head_loss[0, crit]
    rows["max_velocity_m_s"] = vmax
    rows["cost"] = 0.0
    seg_p, seg_d = np.nonzero(outcome.lengths > 0)
    pipes_i = pr.design[seg_p]
    d = pr.option_diameter[seg_d]
    seg_len = outcome.lengths[seg_p, seg_d]
    q = rows["flow_m3_s"].to_numpy()[pipes_i]
    # the head loss of each segment: its share of the pipe's loss by its own law
    law = pr.law(d[None, :], pr.option_roughness[seg_d][None, :],
                 pr.option_c_factor[seg_d][None, :], length=seg_len, minor=False)
    h, _ = law(q[None, :])
    seg = pd.DataFrame({
        "pipe": rows["pipe"].to_numpy()[pipes_i], "from": rows["from"].to_numpy()[pipes_i],
        "to": rows["to"].to_numpy()[pipes_i], "status": "new",
        "size": [study.options[k].name for k in seg_d], "inner_diameter_m": d,
        "length_m": seg_len, "flow_m3_s": q, "velocity_m_s": q / (np.pi * d**2 / 4.0),
        "head_loss_m": h[0], "max_velocity_m_s": vmax[pipes_i],
        "cost": seg_len * pr.option_cost[seg_d]})
    seg["order"] = pipes_i
    rows["order"] = np.arange(len(rows))
    out = pd.concat([rows[rows["status"] == "existing"], seg], ignore_index=True)
    out = out.sort_values("order", kind="stable").reset_index(drop=True)
    return out[["pipe", "from", "to", "status", "size", "inner_diameter_m", "length_m",
                "flow_m3_s", "velocity_m_s", "head_loss_m", "max_velocity_m_s", "cost"]]
