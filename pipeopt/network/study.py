"""Network study (study layer): a network file to the least-cost sizes and the proof of pressure.

A :class:`NetworkStudy` holds its inputs as frozen sections (:mod:`pipeopt.network.inputs`, and
the sections it shares with a sizing study), builds a
:class:`~pipeopt.network.design.DesignProblem` in SI, chooses the optimizer (exact
mixed-integer programming for a branched network, the batched local search for a looped one),
re-solves the chosen design's hydraulics and returns a :class:`NetworkResult`. It holds no
formulas: the physics is in :mod:`pipeopt.network.hydraulics`, the money in
:mod:`pipeopt.network.lifecycle` (on :mod:`pipeopt.cashflow`), the optimizers in
:mod:`pipeopt.network.design`. A study cannot go stale: its sections are frozen, and
:meth:`NetworkStudy.replace` builds another.

The study file (sections and keys; ``[study]``, ``[fluid]``, ``[pumping]``, ``[energy]``,
``[pump_station]``, ``[economics]`` and ``[growth]`` as in a sizing study, the economic ones
needed only where a source is pumped)::

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
    [uncertainty]      samples, seed, designs and one distribution per named input
                       (a pumped network: Monte Carlo of the chosen design's life-cycle cost)

Examples
--------
>>> from pipeopt.network import NetworkStudy
>>> result = NetworkStudy.demo().run(progress=False)
>>> result.success, bool(result.nodes["feasible"].all())
(True, True)
"""

from __future__ import annotations

import difflib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .. import results
from ..catalog import default_catalog
from ..costs import EnergyTariff, PumpStationCost
from ..duty import HOURS_PER_YEAR, DutyProfile
from ..errors import InputError
from ..fields import SI
from ..fluid import Fluid
from ..inputs import Economics, Pumping, StudyInfo
from ..results import StudyResult
from ..studyfile import FrozenStudy, StudyFileMixin
from . import design as ds
from .hydraulics import NetworkGraph
from .inputs import (
    DiameterOption,
    DutyPoint,
    NetworkSettings,
    Node,
    OptimizerSettings,
    Pipe,
    Source,
    read_network,
)
from .lifecycle import NetworkEconomics, life_cycle

__all__ = ["Node", "Source", "Pipe", "DiameterOption", "DutyPoint", "NetworkSettings",
           "OptimizerSettings", "SizeOption", "NetworkStudy", "NetworkResult", "CAUTION",
           "NETWORK_CAUTION"]

#: The network's own caution: what its pressure check leaves out.
NETWORK_CAUTION = ("The network check covers steady pressures at the given demands only: not "
                   "surge, fire flows, pipe pressure ratings or supply when a pipe fails.")
#: The caution every network summary carries: the shared one, then the network's own.
CAUTION = f"{results.CAUTION} {NETWORK_CAUTION}"


@dataclass(frozen=True)
class SizeOption:
    """A candidate size as the design uses it: bore [m], capital per metre, roughness [m], C.

    ``roughness`` and ``hazen_williams_c`` are None where neither the option nor its catalog
    material gives them (the ``[network]`` defaults then apply); ``source`` says where the bore
    comes from.
    """

    name: str
    inner_diameter: float
    cost_per_metre: float
    roughness: float | None = None
    hazen_williams_c: float | None = None
    source: str = "study file"


def _size_option(option: DiameterOption, index: int) -> SizeOption:
    """The bore, price and wall of a diameter option (a catalog size looked up here)."""
    d, outside = option.inner_diameter, None
    rough, c, name = option.roughness, option.hazen_williams_c, option.name
    source = "study file"
    if option.material is not None:
        cat = default_catalog()
        try:
            row = cat.lookup(option.material, option.size)
            mat = cat.material(option.material)
        except InputError as exc:
            raise InputError(f"diameter_option[{index}]: {exc}") from None
        d = float(row["inner_diameter_m"])
        outside = float(row["outside_diameter_m"])
        rough = mat.roughness if rough is None else rough
        c = mat.hazen_williams_c if c is None else c
        name = name or f"{option.material} {option.size}"
        source = str(row["provenance"])
    cost = (option.cost_per_metre if option.cost is None
            else float(option.cost.per_metre(outside if outside is not None else d)))
    return SizeOption(name, float(d), float(cost),
                      None if rough is None else float(rough), None if c is None else float(c),
                      source)


def _sections(values: Any, cls: type, what: str) -> tuple:
    """A tuple of input sections of ``cls`` (mappings are built into sections)."""
    out = []
    for i, v in enumerate(values or ()):
        if isinstance(v, dict):
            v = cls(**v)
        if not isinstance(v, cls):
            raise InputError(f"{what}[{i}] must be a {cls.__name__}; got {type(v).__name__}")
        out.append(v)
    return tuple(out)


def _suggest(name: str, names: list[str]) -> str:
    near = difflib.get_close_matches(name, names, n=1, cutoff=0.5)
    return f"; did you mean {near[0]!r}?" if near else ""


def _duplicate(names: list[str]) -> str | None:
    seen: set[str] = set()
    for n in names:
        if n in seen:
            return n
        seen.add(n)
    return None


# --------------------------------------------------------------------------------------------
# the study
# --------------------------------------------------------------------------------------------
class NetworkStudy(FrozenStudy, StudyFileMixin):
    """Least-cost (or least life-cycle-cost) sizing of the pipes of a network.

    Parameters
    ----------
    nodes : sequence of Node
    sources : sequence of Source
    pipes : sequence of Pipe
    options : sequence of DiameterOption
        Candidate sizes of the pipes to size.
    settings : NetworkSettings, optional
        The head-loss law and the network-wide defaults.
    optimizer : OptimizerSettings, optional
        Seed, budget, chains and target of the looped search.
    fluid : Fluid, optional
        The liquid (default: water at 15 °C).
    duties : sequence of DutyPoint, optional
        The demand cases (default: one, ``"design"``, at the nodes' demands).
    growth : float or mapping, optional
        Yearly growth of every demand, or the growth arguments of a
        :class:`~pipeopt.duty.DutyProfile` (``growth``, ``design_year``, ``flow_cap``).
    pumping : Pumping or float, optional
        Wire-to-water efficiency of the pumps.
    tariff : EnergyTariff, optional
    pump_station : PumpStationCost, optional
        Station capital and stages (absent: no station capital).
    economics : Economics, optional
        Discount rate, horizon, pipe life and maintenance. ``pumping``, ``tariff`` and
        ``economics`` are needed where a source is pumped; ``economics`` also where demands
        grow (for the horizon).
    name, currency, description : str
        Labels for outputs.
    illustrative : bool
        Marks every output as using invented numbers.
    uncertainty : dict, optional
        The ``[uncertainty]`` settings of a study file (samples, seed, designs,
        distributions).

    Every argument after ``options`` is keyword-only.
    """

    _DEMO_FILE = "demo_network.toml"

    def __init__(self, nodes: Any, sources: Any, pipes: Any, options: Any = (), *,
                 settings: NetworkSettings | None = None,
                 optimizer: OptimizerSettings | None = None, fluid: Fluid | None = None,
                 duties: Any = (), growth: Any = None, pumping: Any = None,
                 tariff: EnergyTariff | None = None,
                 pump_station: PumpStationCost | None = None,
                 economics: Economics | None = None, name: str = "network study",
                 currency: str = "", illustrative: bool = False, description: str = "",
                 uncertainty: dict | None = None) -> None:
        self._args = {k: v for k, v in locals().items() if k not in ("self", "__class__")}
        if fluid is not None and not isinstance(fluid, Fluid):
            raise InputError("fluid must be a pipeopt.Fluid")
        for value, cls, what in ((settings, NetworkSettings, "settings"),
                                 (optimizer, OptimizerSettings, "optimizer"),
                                 (tariff, EnergyTariff, "tariff"),
                                 (pump_station, PumpStationCost, "pump_station"),
                                 (economics, Economics, "economics")):
            if value is not None and not isinstance(value, cls):
                raise InputError(f"{what} must be a {cls.__name__}; got {type(value).__name__}")
        self.nodes = _sections(nodes, Node, "node")
        self.sources = _sections(sources, Source, "source")
        self.pipes = _sections(pipes, Pipe, "pipe")
        self.diameter_options = _sections(options, DiameterOption, "diameter_option")
        self.duties = _sections(duties, DutyPoint, "duty")
        self.settings = settings or NetworkSettings()
        self.optimizer = optimizer or OptimizerSettings()
        self.fluid = fluid or Fluid.water("15 degC")
        self.fluid_is_default = fluid is None
        self.info = StudyInfo(name, currency, illustrative, description)
        self.pumping = (pumping if pumping is None or isinstance(pumping, Pumping)
                        else Pumping(pumping))
        self.tariff = tariff
        self.pump_station = pump_station
        self.economics = economics
        self.growth = ({} if growth is None else dict(growth) if isinstance(growth, dict)
                       else {"growth": growth})
        self.uncertainty = uncertainty
        self.notes: list[str] = []
        self.options = tuple(sorted((_size_option(o, i)
                                     for i, o in enumerate(self.diameter_options)),
                                    key=lambda o: o.inner_diameter))
        self.duty_names = (tuple(d.name or f"duty {i + 1}" for i, d in enumerate(self.duties))
                           or ("design",))
        self.problem = self._build_problem()
        self._frozen = True



    # ----- labels ---------------------------------------------------------------------------

    @property
    def pumped(self) -> bool:
        """True when a source is pumped (its station and energy are part of the cost)."""
        return any(x.pumped for x in self.sources)

    # ----- construction ---------------------------------------------------------------------
    def _check_names(self) -> dict[str, int]:
        if not self.sources:
            raise InputError("source: the network has no source (add a [[source]] table)")
        if not self.nodes:
            raise InputError("node: the network has no node to supply (add [[node]] tables)")
        names = [n.name for n in self.nodes] + [x.name for x in self.sources]
        dup = _duplicate(names)
        if dup is not None:
            raise InputError(f"node/source name {dup!r} is used twice; names must be unique")
        for k, p in enumerate(self.pipes):
            for key, ref in (("from", p.start), ("to", p.end)):
                if ref not in names:
                    raise InputError(f"pipe[{k}].{key}: no node or source is named {ref!r}"
                                     f"{_suggest(ref, names)}")
        dup = _duplicate([p.name for p in self.pipes])
        if dup is not None:
            raise InputError(f"pipe name {dup!r} is used twice; names must be unique")
        onames = [o.name for o in self.options]
        dup = _duplicate(onames)
        if dup is not None:
            raise InputError(f"diameter_option name {dup!r} is used twice")
        if len({o.inner_diameter for o in self.options}) != len(self.options):
            raise InputError("diameter_option: two options have the same inner diameter")
        return {nm: i for i, nm in enumerate(names)}

    def _duty(self, base: np.ndarray) -> DutyProfile | None:
        """The network's duty profile: total demand and hours of each duty point, growth.

        Needed where a source is pumped (energy) or demands grow; None otherwise.
        """
        hours = [d.hours for d in self.duties]
        given = bool(hours) and all(h is not None for h in hours)
        if not (self.pumped or self.growth):
            return None
        if self.pumped and not given:
            raise InputError("a pumped source needs the hours of each duty point: add [[duty]] "
                             "tables with hours")
        total = base.sum(axis=1)
        if np.any(total <= 0):
            k = int(np.flatnonzero(total <= 0)[0])
            raise InputError(f"duty[{k}]: the total demand of every duty point must be positive "
                             f"(got {total[k]:g} m^3/s for {self.duty_names[k]!r})")
        # a gravity network gives no hours: they are not used, so an even share of the year
        # stands in for them (the duty profile then only carries the growth of the demands)
        hrs = tuple(hours) if given else (HOURS_PER_YEAR / len(total),) * len(total)
        # the growth keys as the file or caller gave them: DutyProfile checks their rules
        return DutyProfile(tuple(SI(q) for q in total), hrs, names=self.duty_names,
                           **self.growth)

    def _economics(self, duty: DutyProfile) -> NetworkEconomics:
        for value, section in ((self.pumping, "pumping"), (self.tariff, "energy"),
                               (self.economics, "economics")):
            if value is None:
                raise InputError(f"{section}: required section [{section}] is missing (a pumped "
                                 f"network needs [pumping], [energy] and [economics])")
        e = self.economics
        return NetworkEconomics(duty=duty, efficiency=self.pumping.efficiency,
                                tariff=self.tariff, pump_station=self.pump_station,
                                discount_rate=e.discount_rate, horizon=e.horizon,
                                pipe_life=e.pipe_life, pipe_maintenance=e.pipe_maintenance)

    def _demand_by_year(self, base: np.ndarray, duty: DutyProfile | None,
                        econ: NetworkEconomics | None) -> np.ndarray:
        """Demands (T, K, J): every year when a pumped network's demands grow, else one."""
        if duty is None or not duty.grows:
            return base[None]
        if self.economics is None:
            raise InputError("growth: demands that grow need a horizon ([economics] horizon)")
        m = duty.multipliers(int(self.economics.horizon))                     # (N,)
        if econ is None:
            # special case: a gravity network is checked in its year of largest demands
            return (base * float(m.max()))[None]
        return m[:, None, None] * base[None]

    def _build_problem(self) -> ds.DesignProblem:
        s = self.settings
        index = self._check_names()
        names = list(index)
        graph = NetworkGraph(len(self.nodes), len(self.sources),
                             [index[p.start] for p in self.pipes],
                             [index[p.end] for p in self.pipes], node_names=tuple(names),
                             pipe_names=tuple(p.name for p in self.pipes))
        factors = tuple(d.demand_factor for d in self.duties) or (1.0,)
        base = np.array([n.demands(factors, f"node[{i}]") for i, n in enumerate(self.nodes)],
                        dtype=float).T                                         # (K, J)
        min_head = []
        for i, n in enumerate(self.nodes):
            mp = n.min_pressure_head if n.min_pressure_head is not None else s.min_pressure_head
            if mp is None:
                raise InputError(f"node[{i}].min_pressure_head: required key is missing (or set "
                                 f"network.min_pressure_head for every node), e.g. "
                                 f"min_pressure_head = \"20 m\"")
            min_head.append(float(mp))
        free = [x for x in self.sources if x.free]
        if free and len(self.sources) > 1:
            raise InputError(f"source {free[0].name!r}: a pumped source without a head may "
                             f"only feed a network with no other source (give it a head, or "
                             f"remove the other sources)")
        duty = self._duty(base)
        econ = self._economics(duty) if self.pumped else None
        if not self.pumped:
            unused = [sec for sec, v in (("pumping", self.pumping), ("energy", self.tariff),
                                         ("pump_station", self.pump_station)) if v is not None]
            if self.economics is not None and (duty is None or not duty.grows):
                unused.append("economics")
            if unused:
                self.notes.append(f"gravity-fed: the cost is the pipe capital only (not used: "
                                  f"{', '.join(f'[{u}]' for u in unused)})")
        demand = self._demand_by_year(base, duty, econ)
        design = [i for i, p in enumerate(self.pipes) if not p.existing]
        m = len(self.options)
        if design and m == 0:
            raise InputError("diameter_option: pipes are to be sized but no [[diameter_option]] "
                             "is given")
        onames = [o.name for o in self.options]
        allowed = np.ones((len(design), m), dtype=bool)
        for r, i in enumerate(design):
            p = self.pipes[i]
            if p.sizes:
                for sz in p.sizes:
                    if sz not in onames:
                        raise InputError(f"pipe[{i}].sizes: no diameter option is named "
                                         f"{sz!r}{_suggest(sz, onames)}")
                allowed[r] = [o in p.sizes for o in onames]
        hw = s.head_loss == "hazen-williams"
        for i, p in enumerate(self.pipes):
            if p.existing and hw and p.roughness is not None and p.hazen_williams_c is None:
                raise InputError(f"pipe[{i}]: head_loss is hazen-williams; give the existing "
                                 f"pipe a hazen_williams_c, not a roughness")
            if p.existing and not hw and p.hazen_williams_c is not None and p.roughness is None:
                raise InputError(f"pipe[{i}]: head_loss is darcy-weisbach; give the existing "
                                 f"pipe a roughness, not a hazen_williams_c")

        return ds.DesignProblem(
            graph=graph, length=[p.length for p in self.pipes], design=np.array(design, int),
            option_diameter=[o.inner_diameter for o in self.options],
            option_cost=[o.cost_per_metre for o in self.options],
            allowed=allowed, demand=demand,
            elevation=[n.elevation for n in self.nodes], min_head=min_head,
            source_head=[x.level if x.free else x.head for x in self.sources],
            suction_level=[x.level if x.pumped else np.nan for x in self.sources],
            free_pump=bool(free), head_loss=s.head_loss,
            fixed_diameter=[p.inner_diameter if p.existing else np.nan for p in self.pipes],
            # existing pipes: their own roughness and C, else the [network] defaults (the
            # values of pipes to size are their options')
            roughness=[(s.roughness if p.roughness is None else p.roughness) if p.existing
                       else 0.0 for p in self.pipes],
            c_factor=[(s.hazen_williams_c if p.hazen_williams_c is None else p.hazen_williams_c)
                      if p.existing else 130.0 for p in self.pipes],
            option_roughness=[s.roughness if o.roughness is None else o.roughness
                              for o in self.options],
            option_c_factor=[s.hazen_williams_c if o.hazen_williams_c is None
                             else o.hazen_williams_c for o in self.options],
            minor_loss_k=[p.minor_loss_k for p in self.pipes],
            density=self.fluid.density, viscosity=self.fluid.viscosity,
            hazen_williams=s.hazen_williams, velocity_max=s.velocity_max, economics=econ)

    # ----- study file ------------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> NetworkStudy:
        sec = read_network(mapping, base)
        info = sec["info"]
        fluid = None if sec["fluid"] is None else sec["fluid"].build()
        study = cls(sec["nodes"], sec["sources"], sec["pipes"], sec["options"],
                    settings=sec["settings"], optimizer=sec["optimizer"], fluid=fluid,
                    duties=sec["duties"], growth=sec["growth"], pumping=sec["pumping"],
                    tariff=sec["energy"], pump_station=sec["pump_station"],
                    economics=sec["economics"], name=info.name, currency=info.currency,
                    illustrative=info.illustrative, description=info.description)
        if sec["uncertainty"] is not None:
            from .uncertainty import read_network_uncertainty

            study = study.replace(uncertainty=read_network_uncertainty(sec["uncertainty"],
                                                                       study))
        return study

    # ----- running ---------------------------------------------------------------------------
    def run(self, progress: bool | None = None, method: str = "auto",
            uncertainty: bool = True) -> NetworkResult:
        """Size the pipes and check every junction's pressure.

        Parameters
        ----------
        progress : bool, optional
            Progress bars of the looped search and the Monte Carlo (default: when standard
            error is a terminal).
        method : {"auto", "milp", "search"}
            ``"auto"``: exact programming when the network is branched, the search otherwise.
        uncertainty : bool
            Where the study has ``[uncertainty]`` and a design was found, also run its Monte
            Carlo (:meth:`monte_carlo`) and attach it to the result.

        Returns
        -------
        NetworkResult
        """
        pr = self.problem
        s, o = self.settings, self.optimizer
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
            outcome = ds.design_looped(pr, seed=o.seed, evaluations=1, progress=False)
            outcome.message = "no pipe to size: the existing network checked"
        elif method == "milp" or (method == "auto" and branched):
            outcome = ds.design_branched(pr, split=s.split_pipes)
        else:
            outcome = ds.design_looped(pr, seed=o.seed, evaluations=o.evaluations,
                                       chains=o.chains, target=o.target, progress=progress)
        result = NetworkResult.build(self, outcome)
        if uncertainty and self.uncertainty and result.success:
            result.monte_carlo = self.monte_carlo(result=result, progress=progress)
        return result

    def monte_carlo(self, distributions: dict[str, Any] | None = None, n: int | None = None,
                    seed: int | None = None, designs: int | None = None, result: Any = None,
                    progress: bool | None = None) -> Any:
        """Monte Carlo of the life-cycle cost of the chosen design and its runners-up.

        See :func:`pipeopt.network.uncertainty.monte_carlo`; the arguments default to the
        study's ``[uncertainty]``.
        """
        from .uncertainty import monte_carlo

        return monte_carlo(self, distributions, n, seed, designs, result, progress)

    def __repr__(self) -> str:
        n_new = self.problem.n_design
        return (f"NetworkStudy({self.name!r}: {len(self.nodes)} nodes, {len(self.sources)} "
                f"source(s), {len(self.pipes)} pipes of which {n_new} to size, "
                f"{len(self.options)} candidate sizes)")


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
def _coordinate(value: float | None) -> float:
    return float("nan") if value is None else float(value)


@dataclass(repr=False)
class NetworkResult(StudyResult):
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
        The cost terms (``capex_pipe``, and where pumped ``capex_pump_station`` (every
        stage, undiscounted), ``pv_pump_station``, ``pv_energy``, ``pv_maintenance``,
        ``pv_replacement``, ``pv_residual``, ``pv_total``, ``eac``, ``installed_power_kw``).
    success : bool
        A design was found that holds every node's minimum pressure in every case.
    message : str
    outcome : DesignOutcome
        The optimizer's record (method, gap, evaluations, history of the best so far).
    cases : pandas.DataFrame
        One row per demand case (duty point, year): total demand, pump head, power, least
        margin, the hydraulic residuals.
    monte_carlo : NetworkMonteCarloResult or None
        The Monte Carlo of the study's ``[uncertainty]``, where it has one.
    cash_flows : pandas.DataFrame
        The chosen design's money year by year (:class:`~pipeopt.cashflow.CashFlows`): ``year``
        0 … N, ``capital_pipe``, ``capital_station``, ``station_renewal``, ``energy``,
        ``maintenance``, ``residual`` (a credit), ``total``, ``discount_factor``,
        ``discounted``; the ``discounted`` column sums to ``total_cost``. A gravity network:
        year 0, the pipe capital.
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
    cash_flows: pd.DataFrame = field(repr=False, default_factory=pd.DataFrame)
    critical_case: int = 0
    monte_carlo: Any = field(repr=False, default=None)

    @property
    def currency(self) -> str:
        return self.study.currency

    @classmethod
    def build(cls, study: NetworkStudy, outcome: ds.DesignOutcome) -> NetworkResult:
        """The result of ``study`` from its optimizer's outcome."""
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
            "x_m": [_coordinate(n.x) for n in study.nodes],
            "y_m": [_coordinate(n.y) for n in study.nodes]})
        src_head = np.array([x.head if x.head is not None else np.nan for x in study.sources])
        if pr.free_pump:
            src_head = np.array([study.sources[0].level + float(ev.pump_head[0, crit])])
        srcs = pd.DataFrame({
            "node": list(g.node_names[j:]), "kind": "source",
            "elevation_m": [x.level if x.level is not None else x.head for x in study.sources],
            "head_m": src_head, "pressure_head_m": np.nan, "min_pressure_head_m": np.nan,
            "margin_m": np.nan, "feasible": True, "case": case_names[crit],
            "x_m": [_coordinate(x.x) for x in study.sources],
            "y_m": [_coordinate(x.y) for x in study.sources]})
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
        costs = {"capex_pipe": float(ev.capital[0])}
        total = float(ev.cost[0])
        if ev.life_cycle is not None:
            # the chosen design's money again, year by year (reconciles to its present value)
            lc = life_cycle(pr.economics, ev.capital, ev.power_kw, yearly=True)
            for key in ("capex_pump_station", "pv_pump_station", "installed_power_kw",
                        "pv_energy", "pv_maintenance", "pv_replacement", "pv_residual",
                        "pv_total", "eac"):
                costs[key] = float(getattr(lc, key)[0])
            cash = lc.cash_flows.frame(0, 0)
        else:
            cash = pd.DataFrame({"year": [0], "capital_pipe": [costs["capex_pipe"]],
                                 "total": [costs["capex_pipe"]], "discount_factor": [1.0],
                                 "discounted": [costs["capex_pipe"]]})
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
                   success=ok, message=msg, outcome=outcome, cases=cases, cash_flows=cash,
                   critical_case=crit)

    # ----- views -----------------------------------------------------------------------------
    def headline(self) -> str:
        state = "every node holds its pressure" if self.success else "no feasible design"
        cur = f" {self.currency}" if self.currency else ""
        return f"{self.study.name}: total cost {self.total_cost:,.0f}{cur}; {state}"

    def tables(self) -> dict[str, pd.DataFrame]:
        out = {"Pipes": self.pipes, "Nodes": self.nodes.drop(columns=["x_m", "y_m"]),
               "Demand cases": self.cases, "Cash flows": self.cash_flows}
        if self.monte_carlo is not None:
            out.update(self.monte_carlo.tables())
        return out

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
        lines.append(f"{len(s.nodes)} nodes, {len(s.sources)} source(s), {len(s.pipes)} pipes "
                     f"({pr.n_design} to size from {len(s.options)} sizes); "
                     f"{'branched' if pr.graph.is_forest() else 'looped'}; {law}; "
                     f"{pr.n_cases} demand case(s)")
        lines.append(f"Optimizer: {self.message}")
        lines.append("")
        c = self.costs
        if "pv_total" in c:
            lines += [f"Life-cycle cost {c['pv_total']:,.0f}{cur} present value "
                      f"(EAC {c['eac']:,.0f}{cur}/yr) = pipes {c['capex_pipe']:,.0f}, pump "
                      f"station {c['pv_pump_station']:,.0f}, energy {c['pv_energy']:,.0f}, "
                      f"maintenance {c['pv_maintenance']:,.0f}, station renewals "
                      f"{c['pv_replacement']:,.0f}, residual value {-c['pv_residual']:,.0f}",
                      f"  pump head {self.cases['pump_head_m'].min():.1f}-"
                      f"{self.cases['pump_head_m'].max():.1f} m, peak power "
                      f"{self.cases['power_kw'].max():.1f} kW, installed "
                      f"{c['installed_power_kw']:.1f} kW",
                      f"  cash flows of years 0-{int(self.cash_flows['year'].iloc[-1])} in the "
                      f"cash_flows table; discounted, they sum to the present value"]
        else:
            lines.append(f"Pipe capital {c['capex_pipe']:,.0f}{cur} (gravity-fed: capital "
                         f"only)")
        new = self.pipes[self.pipes["status"] == "new"]
        if not new.empty:
            w_p = max(len(str(p)) for p in new["pipe"])
            w_s = max(len(str(p)) for p in new["size"])
            lines += ["", f"Sizes chosen (velocity in the "
                          f"{self.cases['case'].iloc[self.critical_case]} case):"]
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
        if self.monte_carlo is not None:
            lines += ["", self.monte_carlo.text()]
        lines += ["", "Caution: " + CAUTION]
        return "\n".join(lines)


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
