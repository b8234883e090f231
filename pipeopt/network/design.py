"""Least-cost design of pipe networks (model layer): evaluation and the two optimizers.

A :class:`DesignProblem` holds, in SI, everything a design needs: the topology, the pipes that
exist and the pipes to be sized, the candidate sizes and their prices, the demands of every
duty point (and year, when demands grow), the sources, the lowest head each junction must keep
and, for a pumped network, the economics. :func:`evaluate` prices and checks many designs at
once: the hydraulics of every design and demand case are solved in one batch
(:func:`~pipeopt.network.hydraulics.solve_network`), the pumped source delivers the least head
that keeps every junction's pressure, and the life-cycle cost comes from
:func:`~pipeopt.network.lifecycle.life_cycle`.

Two optimizers:

- :func:`design_branched` is exact for a branched network (every part a tree fed by one
  source): the flows follow from the demands, so the head loss of every pipe in every size is
  known and the least-cost design is a mixed-integer linear programme (one size per pipe, or
  split pipes of two sizes) solved by :func:`scipy.optimize.milp`, with its optimality gap.
- :func:`design_looped` searches a looped network: several chains of steepest-descent local
  search over one-size and two-pipe swap moves, every neighbourhood of every chain evaluated
  in one hydraulic batch, restarted from shaken local optima with a growing shake (variable
  neighbourhood search). Seeded and reproducible; a progress bar shows the best so far.

References
----------
.. [1] E. Alperovits, U. Shamir, "Design of optimal water distribution systems", Water Resour.
   Res. 13(6):885-900, 1977, doi:10.1029/WR013i006p00885 (the two-loop network; split-pipe
   linear programming for given flows).
.. [2] D. Karmeli, Y. Gadish, S. Meyers, "Design of optimal water distribution networks",
   J. Pipeline Div. ASCE 94(PL1):1-10, 1968 (linear programming of branched networks).
.. [3] N. Mladenović, P. Hansen, "Variable neighborhood search", Comput. Oper. Res.
   24(11):1097-1100, 1997, doi:10.1016/S0305-0548(97)00031-2.
"""

from __future__ import annotations

import sys
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import optimize, sparse

from .. import friction as fr
from ..errors import InputError
from .hydraulics import (
    HAZEN_WILLIAMS_COEFFICIENT,
    HAZEN_WILLIAMS_DIAMETER_EXPONENT,
    HAZEN_WILLIAMS_FLOW_EXPONENT,
    DarcyWeisbach,
    HazenWilliams,
    NetworkGraph,
    solve_network,
)
from .lifecycle import NetworkEconomics, NetworkLifeCycle, life_cycle, year_weights

__all__ = ["DesignProblem", "Evaluation", "DesignOutcome", "evaluate", "design_branched",
           "design_looped", "HEAD_TOLERANCE"]

#: Pressure shortfall [m] below which a junction counts as holding its minimum (rounding).
HEAD_TOLERANCE = 1e-6
_UNSOLVED = 1e6          # violation given to a design whose hydraulics did not converge


@dataclass(frozen=True)
class DesignProblem:
    """A network design problem, SI.

    Attributes
    ----------
    graph : NetworkGraph
        Topology: J junctions, F fixed-head nodes (sources), P pipes.
    length : ndarray, shape (P,)
        Pipe lengths [m].
    design : ndarray of int, shape (Nd,)
        The pipes to be sized (indices into the P pipes).
    option_diameter : ndarray, shape (M,)
        Inner diameter of each candidate size [m], increasing.
    option_cost : ndarray, shape (M,)
        Capital per metre of each size, supplied and installed [currency/m].
    allowed : ndarray of bool, shape (Nd, M)
        Which sizes each design pipe may take.
    demand : ndarray, shape (T, K, J)
        Junction demands in each year T (1 when every year is alike) and duty point K [m³/s].
    elevation : ndarray, shape (J,)
        Junction elevations [m].
    min_head : ndarray, shape (J,)
        Lowest pressure head each junction must keep [m].
    source_head : ndarray, shape (F,)
        Head each source holds [m]; for a pumped source whose head the design chooses
        (``free_pump``), the level it draws from.
    suction_level : ndarray, shape (F,)
        Level a pumped source draws from [m] (its pump head is its head less this level);
        NaN for a source that is not pumped.
    free_pump : bool
        The network's one source is pumped and delivers, at each duty point and year, the least
        head that keeps every junction's pressure.
    head_loss : {"hazen-williams", "darcy-weisbach"}
    fixed_diameter : ndarray, shape (P,)
        Inner diameter of existing pipes [m] (NaN for design pipes).
    roughness : ndarray, shape (P,)
        Absolute roughness of existing pipes [m] (Darcy–Weisbach).
    c_factor : ndarray, shape (P,)
        Hazen–Williams C of existing pipes [-].
    option_roughness, option_c_factor : ndarray, shape (M,)
        Roughness [m] and C [-] of each candidate size.
    minor_loss_k : ndarray, shape (P,)
        Sum of minor-loss coefficients of each pipe [-].
    density, viscosity : float
        Fluid density [kg/m³] and dynamic viscosity [Pa·s].
    hazen_williams : tuple of float
        (coefficient, diameter exponent, flow exponent) of Hazen–Williams.
    velocity_max : float or None
        Highest velocity allowed in a new pipe [m/s].
    economics : NetworkEconomics or None
        The life-cycle inputs where the network is pumped (None: capital only).
    """

    graph: NetworkGraph
    length: np.ndarray
    design: np.ndarray
    option_diameter: np.ndarray
    option_cost: np.ndarray
    allowed: np.ndarray
    demand: np.ndarray
    elevation: np.ndarray
    min_head: np.ndarray
    source_head: np.ndarray
    suction_level: np.ndarray
    free_pump: bool = False
    head_loss: str = "darcy-weisbach"
    fixed_diameter: np.ndarray | None = None
    roughness: np.ndarray | None = None
    c_factor: np.ndarray | None = None
    option_roughness: np.ndarray | None = None
    option_c_factor: np.ndarray | None = None
    minor_loss_k: np.ndarray | None = None
    density: float = 999.1
    viscosity: float = 1.138e-3
    hazen_williams: tuple = (HAZEN_WILLIAMS_COEFFICIENT, HAZEN_WILLIAMS_DIAMETER_EXPONENT,
                             HAZEN_WILLIAMS_FLOW_EXPONENT)
    velocity_max: float | None = None
    economics: NetworkEconomics | None = None

    def __post_init__(self) -> None:
        g = self.graph
        p, j, f = g.n_pipes, g.n_junctions, g.n_fixed
        set_ = object.__setattr__
        set_(self, "length", np.asarray(self.length, dtype=float).reshape(p))
        set_(self, "design", np.asarray(self.design, dtype=np.int64).ravel())
        d = np.asarray(self.option_diameter, dtype=float).ravel()
        m = d.size
        set_(self, "option_diameter", d)
        set_(self, "option_cost", np.asarray(self.option_cost, dtype=float).reshape(m))
        nd = self.design.size
        set_(self, "allowed", np.broadcast_to(np.asarray(self.allowed, dtype=bool), (nd, m)))
        dem = np.asarray(self.demand, dtype=float)
        set_(self, "demand", dem.reshape((1,) * (3 - dem.ndim) + dem.shape))
        for name, n in (("elevation", j), ("min_head", j), ("source_head", f),
                        ("suction_level", f)):
            set_(self, name, np.asarray(getattr(self, name), dtype=float).reshape(n))
        nan_p = np.full(p, np.nan)
        for name, default in (("fixed_diameter", nan_p), ("roughness", np.zeros(p)),
                              ("c_factor", np.full(p, 130.0)), ("minor_loss_k", np.zeros(p))):
            v = getattr(self, name)
            set_(self, name, np.broadcast_to(np.asarray(default if v is None else v,
                                                        dtype=float), (p,)).copy())
        for name, default in (("option_roughness", 0.0), ("option_c_factor", 130.0)):
            v = getattr(self, name)
            set_(self, name, np.broadcast_to(np.asarray(default if v is None else v,
                                                        dtype=float), (m,)).copy())
        if self.head_loss not in ("hazen-williams", "darcy-weisbach"):
            raise InputError(f"head_loss must be 'hazen-williams' or 'darcy-weisbach'; got "
                             f"{self.head_loss!r}")
        if m == 0 and nd:
            raise InputError("there are pipes to size but no candidate sizes")
        if m and (np.any(np.diff(d) <= 0) or d[0] <= 0):
            raise InputError("candidate inner diameters must be positive and increasing")
        if nd and not np.all(self.allowed.any(axis=1)):
            k = int(np.flatnonzero(~self.allowed.any(axis=1))[0])
            raise InputError(f"{g.pipe_names[self.design[k]]}: no candidate size is allowed")
        if np.unique(self.design).size != nd or (nd and (self.design.min() < 0
                                                         or self.design.max() >= p)):
            raise InputError("design pipes must be distinct pipes of the network")
        fixed = np.ones(p, dtype=bool)
        fixed[self.design] = False
        if np.any(~(self.fixed_diameter[fixed] > 0)):
            k = int(np.flatnonzero(fixed & ~(self.fixed_diameter > 0))[0])
            raise InputError(f"{g.pipe_names[k]}: an existing pipe needs a positive inner "
                             f"diameter")
        if self.free_pump and f != 1:
            raise InputError("a pumped source whose head the design chooses must be the "
                             "network's only source")
        if self.demand.shape[2] != j:
            raise InputError(f"demand has {self.demand.shape[2]} junctions; the network has {j}")

    # ----- shapes ------------------------------------------------------------------------------
    @property
    def n_design(self) -> int:
        """Number of pipes to size, Nd."""
        return int(self.design.size)

    @property
    def n_cases(self) -> int:
        """Demand cases S = T × K (years × duty points)."""
        return int(self.demand.shape[0] * self.demand.shape[1])

    @property
    def pumped(self) -> bool:
        """True when any source is pumped (energy is then part of the cost)."""
        return bool(self.free_pump or np.any(np.isfinite(self.suction_level)))

    def pipe_arrays(self, choice: np.ndarray) -> dict[str, np.ndarray]:
        """Diameter, roughness, C and cost per metre of every pipe of designs (B, Nd) -> (B, P).

        ``choice`` holds option indices (0 … M−1) of the design pipes.
        """
        c = np.atleast_2d(np.asarray(choice, dtype=np.int64))
        b = c.shape[0]
        out = {}
        for key, fixed, opt in (("diameter", self.fixed_diameter, self.option_diameter),
                                ("roughness", self.roughness, self.option_roughness),
                                ("c_factor", self.c_factor, self.option_c_factor)):
            a = np.repeat(fixed[None, :], b, axis=0)
            if self.n_design:
                a[:, self.design] = opt[c]
            out[key] = a
        cost = np.zeros((b, self.graph.n_pipes))
        if self.n_design:
            cost[:, self.design] = self.option_cost[c] * self.length[self.design]
        out["capital"] = cost.sum(axis=1)
        return out

    def law(self, diameter: np.ndarray, roughness: np.ndarray, c_factor: np.ndarray,
            length: np.ndarray | None = None, minor: bool = True):
        """The head-loss law of pipes with these properties, batch shape (B, P)."""
        length = self.length if length is None else length
        k = self.minor_loss_k if minor else 0.0
        if self.head_loss == "hazen-williams":
            coef, beta, n = self.hazen_williams
            return HazenWilliams(length, diameter, c_factor, k, coef, beta, n)
        return DarcyWeisbach(length, diameter, roughness, self.density, self.viscosity, k)


@dataclass
class Evaluation:
    """Hydraulics, checks and cost of a batch of B designs over S demand cases.

    Attributes
    ----------
    cost : ndarray, shape (B,)
        The objective: present value of the life-cycle cost where the network is pumped,
        pipe capital otherwise [currency].
    capital : ndarray, shape (B,)
        Capital of the new pipes [currency].
    violation : ndarray, shape (B,)
        Sum of every junction's pressure shortfall [m] in every case plus every new pipe's
        excess velocity [m/s] (a ranking measure: 0 for a feasible design).
    shortfall : ndarray, shape (B,)
        Largest pressure shortfall of any junction in any case [m].
    feasible : ndarray of bool, shape (B,)
    converged : ndarray of bool, shape (B,)
    flow, velocity, head_loss : ndarray, shape (B, S, P)
    head : ndarray, shape (B, S, J)
        Junction heads with the pump head included [m].
    pump_head : ndarray, shape (B, S)
        Head added by the pumped source(s) [m] (0 for gravity).
    power_kw : ndarray, shape (B, T, K)
        Electrical power of the pumps [kW].
    life_cycle : NetworkLifeCycle or None
    energy_residual, mass_residual : ndarray, shape (B,)
        Largest residuals of the hydraulic solution over the cases [m], [m³/s].
    source_flow : ndarray, shape (B, S, F)
        Net flow out of every source [m³/s].
    transitional : ndarray of int, shape (B,)
        Most pipes in the laminar-turbulent band (2000 <= Re < 4000) in any case
        (Darcy–Weisbach only).
    case_violation : ndarray, shape (B, S)
        The violation of each demand case alone (pressure shortfalls, excess velocities, a
        large number where the hydraulics did not converge).
    hydraulic_kw : ndarray, shape (B, S)
        Power the pumped sources give the water, ρ g Q H, in each case [kW] (0 for gravity).
    """

    cost: np.ndarray
    capital: np.ndarray
    violation: np.ndarray
    shortfall: np.ndarray
    feasible: np.ndarray
    converged: np.ndarray
    flow: np.ndarray
    velocity: np.ndarray
    head_loss: np.ndarray
    head: np.ndarray
    pump_head: np.ndarray
    power_kw: np.ndarray
    life_cycle: NetworkLifeCycle | None
    energy_residual: np.ndarray
    mass_residual: np.ndarray
    source_flow: np.ndarray
    transitional: np.ndarray
    case_violation: np.ndarray
    hydraulic_kw: np.ndarray


def evaluate(problem: DesignProblem, choice: Any, flow0: np.ndarray | None = None,
             lengths: np.ndarray | None = None) -> Evaluation:
    """Hydraulics, pressure checks and cost of a batch of designs.

    Parameters
    ----------
    problem : DesignProblem
    choice : array_like of int, shape (B, Nd) or (Nd,)
        Option index of every design pipe of every design.
    flow0 : ndarray, shape (B, S, P), optional
        Starting flows (a nearby design's solution).
    lengths : ndarray, shape (B, Nd, M), optional
        Split pipes: the length of each design pipe in each size [m] (each row summing to the
        pipe's length); ``choice`` is then ignored.

    Returns
    -------
    Evaluation
    """
    pr = problem
    g = pr.graph
    t_, k_, j = pr.demand.shape
    s = t_ * k_
    p = g.n_pipes
    if lengths is None:
        c = np.atleast_2d(np.asarray(choice, dtype=np.int64))
        b = c.shape[0]
        if c.shape[1] != pr.n_design:
            raise InputError(f"a design has {c.shape[1]} sizes; the problem has {pr.n_design} "
                             f"pipes to size")
        if pr.n_design and (c.min() < 0 or c.max() >= pr.option_diameter.size):
            raise InputError("option index out of range")
        arr = pr.pipe_arrays(c)
        rep = {k: np.repeat(v, s, axis=0) for k, v in arr.items() if v.ndim == 2}
        law = pr.law(rep["diameter"], rep["roughness"], rep["c_factor"])
        capital = arr["capital"]
        new = np.zeros(p, dtype=bool)
        new[pr.design] = True
        diam_for_velocity = arr["diameter"]
    else:
        seg = np.asarray(lengths, dtype=float)
        b = seg.shape[0]
        law = _SeriesLaw(pr, seg, s)
        capital = (seg * pr.option_cost[None, None, :]).sum(axis=(1, 2))
        new = np.zeros(p, dtype=bool)
        new[pr.design] = True
        diam_for_velocity = law.equivalent_diameter()
    demand = np.tile(pr.demand.reshape(s, j), (b, 1))
    fixed = pr.source_head
    f0 = None if flow0 is None else np.asarray(flow0, dtype=float).reshape(b * s, p)
    st = solve_network(g, law, demand, fixed, flow0=f0)
    flow = st.flow.reshape(b, s, p)
    head = st.head.reshape(b, s, j)
    required = pr.elevation + pr.min_head                                     # (J,)
    # net outflow of every source, (B, S, F)
    full_in = np.zeros((b * s, g.n_nodes))
    np.add.at(full_in, (slice(None), g.start), -st.flow)
    np.add.at(full_in, (slice(None), g.end), st.flow)
    source_flow = -full_in[:, j:].reshape(b, s, g.n_fixed)
    if pr.free_pump:
        # special case: the one pumped source lifts everything by the least head that keeps
        # every junction's pressure (never a negative pump head)
        pump = np.maximum(0.0, (required - head).max(axis=2))                  # (B, S)
        head = head + pump[:, :, None]
        lift = pump[:, :, None]
    else:
        lift = np.where(np.isfinite(pr.suction_level), fixed - np.nan_to_num(pr.suction_level),
                        0.0)
        lift = np.broadcast_to(lift, (b, s, g.n_fixed))
        pump = (lift * (source_flow > 0)).max(axis=2)
    short = np.maximum(0.0, required - head)                                  # (B, S, J)
    velocity = flow / (np.pi * diam_for_velocity[:, None, :] ** 2 / 4.0)
    v_case = np.zeros((b, s))
    if pr.velocity_max is not None:
        v_case = np.maximum(0.0, np.abs(velocity[:, :, new]) - pr.velocity_max).sum(axis=2)
    v_excess = v_case.sum(axis=1)
    converged_case = st.converged.reshape(b, s)
    converged = converged_case.all(axis=1)
    violation = short.sum(axis=(1, 2)) + v_excess + np.where(converged, 0.0, _UNSOLVED)
    case_violation = short.sum(axis=2) + v_case + np.where(converged_case, 0.0, _UNSOLVED)
    shortfall = short.max(axis=(1, 2))
    power = np.zeros((b, t_, k_))
    lc = None
    cost = capital.copy()
    # power given to the water by every pumped source, rho g Q H, only while it delivers
    q_out = np.maximum(source_flow, 0.0)
    water_w = (pr.density * fr.GRAVITY * q_out * lift).sum(axis=2)              # (B, S)
    if pr.pumped and pr.economics is not None:
        # electrical power: rho g Q H / eta
        power = (water_w / pr.economics.efficiency / 1000.0).reshape(b, t_, k_)
        lc = life_cycle(pr.economics, capital, power)
        cost = lc.pv_total
    feasible = converged & (violation <= HEAD_TOLERANCE * max(1, s * j))
    return Evaluation(cost=cost, capital=capital, violation=violation, shortfall=shortfall,
                      feasible=feasible, converged=converged, flow=flow, velocity=velocity,
                      head_loss=st.head_loss.reshape(b, s, p), head=head, pump_head=pump,
                      power_kw=power, life_cycle=lc,
                      energy_residual=st.energy_residual.reshape(b, s).max(axis=1),
                      mass_residual=st.mass_residual.reshape(b, s).max(axis=1),
                      source_flow=source_flow,
                      transitional=st.transitional.reshape(b, s).max(axis=1),
                      case_violation=case_violation, hydraulic_kw=water_w / 1000.0)


class _SeriesLaw:
    """Head-loss law of split pipes: the segments of each size in series, summed."""

    def __init__(self, pr: DesignProblem, lengths: np.ndarray, s: int) -> None:
        b, _, m = lengths.shape
        p = pr.graph.n_pipes
        self.parts = []
        for d in range(m):  # a handful of sizes, not candidates
            seg = np.zeros((b, p))
            seg[:, pr.design] = lengths[:, :, d]
            diam = np.full((b, p), pr.option_diameter[d])
            rough = np.full((b, p), pr.option_roughness[d])
            cf = np.full((b, p), pr.option_c_factor[d])
            self.parts.append(pr.law(np.repeat(diam, s, axis=0), np.repeat(rough, s, axis=0),
                                     np.repeat(cf, s, axis=0), length=np.repeat(seg, s, axis=0),
                                     minor=False))
        fixed = np.ones(p, dtype=bool)
        fixed[pr.design] = False
        seg = np.where(fixed, pr.length, 0.0)[None, :].repeat(b, axis=0)
        keep = np.where(fixed, pr.fixed_diameter, pr.option_diameter[0])
        self.parts.append(pr.law(np.repeat(keep[None, :].repeat(b, axis=0), s, axis=0),
                                 np.repeat(np.where(fixed, pr.roughness, 0.0)[None, :]
                                           .repeat(b, axis=0), s, axis=0),
                                 np.repeat(np.where(fixed, pr.c_factor, 130.0)[None, :]
                                           .repeat(b, axis=0), s, axis=0),
                                 length=np.repeat(seg, s, axis=0), minor=False))
        # minor losses on the equivalent (largest-segment) bore
        self.lengths = lengths
        self.pr = pr
        eq = self.equivalent_diameter()
        self.minor = pr.law(np.repeat(eq, s, axis=0), np.zeros((b * s, p)),
                            np.full((b * s, p), 130.0), length=np.zeros(p), minor=True)
        self.diameter = np.repeat(eq, s, axis=0)

    def equivalent_diameter(self) -> np.ndarray:
        """Bore of the longest segment of each pipe (for velocities and minor losses)."""
        pr = self.pr
        b = self.lengths.shape[0]
        out = np.repeat(pr.fixed_diameter[None, :], b, axis=0)
        out[:, pr.design] = pr.option_diameter[np.argmax(self.lengths, axis=2)]
        return out

    def __call__(self, flow: np.ndarray, rows: Any = slice(None)):
        h = np.zeros_like(flow)
        g = np.zeros_like(flow)
        for law in [*self.parts, self.minor]:
            hh, gg = law(flow, rows)
            h += hh
            g += gg
        return h, g


# --------------------------------------------------------------------------------------------
# outcome
# --------------------------------------------------------------------------------------------
@dataclass
class DesignOutcome:
    """What an optimizer found.

    Attributes
    ----------
    choice : ndarray of int, shape (Nd,)
        Option index of every design pipe (for split pipes: the longest segment's size).
    lengths : ndarray, shape (Nd, M) or None
        Length of each design pipe in each size [m] (split pipes only).
    cost : float
        Objective of the design [currency] (see :class:`Evaluation`).
    lower_bound : float or None
        A proven lower bound on the objective (exact methods), else None.
    gap : float or None
        (cost − lower_bound) / cost.
    success : bool
    message : str
    method : str
    evaluations : int
        Designs whose hydraulics were solved.
    history : list of (int, float)
        Best feasible objective so far against evaluations (looped search).
    evaluation : Evaluation
        The chosen design evaluated (B = 1).
    seconds : float
        Wall time of the optimizer [s].
    """

    choice: np.ndarray
    lengths: np.ndarray | None
    cost: float
    lower_bound: float | None
    gap: float | None
    success: bool
    message: str
    method: str
    evaluations: int
    history: list = field(default_factory=list)
    evaluation: Evaluation | None = None
    seconds: float = 0.0


# --------------------------------------------------------------------------------------------
# branched networks: mixed-integer linear programme
# --------------------------------------------------------------------------------------------
def _station_breakpoints(pr: DesignProblem, peak_hint: float, upper: float) -> np.ndarray:
    """Peak-power breakpoints [kW] for the piecewise-linear station cost: 0, then geometric."""
    upper = max(upper, peak_hint * 2.0, 1e-3)
    lo = max(upper * 1e-4, 1e-6)
    pts = np.geomspace(lo, upper, 24)
    if peak_hint > 0:
        pts = np.concatenate([pts, peak_hint * np.linspace(0.8, 1.25, 19)])
    return np.unique(np.concatenate([[0.0], pts]))


def design_branched(problem: DesignProblem, split: bool = False, gap: float = 1e-7,
                    time_limit: float = 120.0) -> DesignOutcome:
    """Exact least-cost design of a branched network by mixed-integer linear programming.

    In a network whose every part is a tree fed by one source, the flow of every pipe in every
    demand case follows from the demands (:meth:`NetworkGraph.tree_flows`), so the head loss of
    every pipe in every candidate size is a known number and the head of a junction is its
    source head less the head losses along its path. Minimizing the pipe capital (plus, for a
    pumped source, the present value of the energy, demand charge and pump station) subject to
    every junction's minimum head is then a linear programme over the pipe sizes:

    - ``split=False``: one size per pipe (binary variables y_pd, Σ_d y_pd = 1);
    - ``split=True``: each pipe may be made of lengths x_pd of several sizes (continuous,
      Σ_d x_pd = L_p), the classic split-pipe formulation (Karmeli et al. 1968), whose
      optimum uses at most two sizes per pipe.

    A pumped source whose head the design chooses adds its pump head in each case as a
    variable; the concave station cost a·P^b enters as a piecewise-linear interpolation (it
    lies below the curve, so the programme's bound is a true lower bound), refined around the
    solution twice. The result's cost is always the design evaluated by :func:`evaluate`;
    the gap compares it with the lower bound proven by the solver.

    Parameters
    ----------
    problem : DesignProblem
    split : bool
        Split pipes (several sizes along one pipe) instead of one size per pipe.
    gap : float
        Relative optimality gap at which the solver may stop.
    time_limit : float
        Solver time limit [s]; the best design found by then is returned, with its gap.

    Returns
    -------
    DesignOutcome

    Raises
    ------
    InputError
        When the network is not branched.
    """
    t0 = time.perf_counter()
    pr = problem
    g = pr.graph
    if not g.is_forest():
        raise InputError("design_branched: the network has a loop or a part fed by several "
                         "sources; use design_looped")
    t_, k_, j = pr.demand.shape
    s = t_ * k_
    nd, m = pr.n_design, pr.option_diameter.size
    p = g.n_pipes
    flows = g.tree_flows(pr.demand.reshape(s, j))                            # (S, P)
    # head loss of every pipe, in every size, in every case: one batch of rows (S*M)
    diam = np.repeat(pr.fixed_diameter[None, :], s * m, axis=0)
    rough = np.repeat(pr.roughness[None, :], s * m, axis=0)
    cf = np.repeat(pr.c_factor[None, :], s * m, axis=0)
    opt = np.tile(np.arange(m), s)
    if nd:
        diam[:, pr.design] = pr.option_diameter[opt][:, None]
        rough[:, pr.design] = pr.option_roughness[opt][:, None]
        cf[:, pr.design] = pr.option_c_factor[opt][:, None]
    law = pr.law(diam, rough, cf)
    hl, _ = law(np.repeat(flows, m, axis=0))
    hl = hl.reshape(s, m, p)
    fixed_pipes = np.setdiff1d(np.arange(p), pr.design)
    # path matrix: H = H_source(i) - Pi @ h, Pi = A12^-1 (0/±1)
    a12 = g._incidence().toarray()
    path = np.rint(np.linalg.solve(a12, np.eye(p)))                          # (J, P)
    a10 = np.zeros((p, g.n_fixed))
    for col, ends in ((-1.0, g.start), (1.0, g.end)):
        is_fixed = ends >= j
        a10[np.flatnonzero(is_fixed), ends[is_fixed] - j] = col
    base_head = -path @ (a10 @ pr.source_head)                               # (J,)
    required = pr.elevation + pr.min_head
    # h of fixed pipes (any size row will do) and of design pipes by size
    h_fixed = (path[:, fixed_pipes] @ hl[:, 0, fixed_pipes].T).T             # (S, J)
    h_design = hl[:, :, pr.design]                                           # (S, M, Nd)
    # variables: design sizes (Nd*M), then pump heads (S), peaks (T), station (breakpoints)
    allowed = pr.allowed.copy()
    if pr.velocity_max is not None and nd:
        v = np.abs(flows[:, pr.design])[:, :, None] / (np.pi * pr.option_diameter ** 2 / 4.0)
        allowed &= ~(v > pr.velocity_max).any(axis=0)
        if not np.all(allowed.any(axis=1)):
            k = int(np.flatnonzero(~allowed.any(axis=1))[0])
            return _failed(pr, f"{g.pipe_names[pr.design[k]]}: every allowed size exceeds "
                           f"the velocity limit", "milp", t0)
    lengths_d = pr.length[pr.design]
    n_x = nd * m
    energy = pr.free_pump and pr.economics is not None
    station = energy and pr.economics.pump_station is not None
    weights = year_weights(pr.economics) if pr.economics is not None and pr.pumped else None
    pipe_w = weights["pipe"] if weights is not None else 1.0
    if split:
        cost_x = (pipe_w * np.repeat(pr.option_cost[None, :], nd, axis=0)).ravel()
        coef_x = (path[:, pr.design][None, :, :, None]
                  * (h_design / lengths_d[None, None, :]).transpose(0, 2, 1)[:, None, :, :])
    else:
        cost_x = (pipe_w * pr.option_cost[None, :] * lengths_d[:, None]).ravel()
        coef_x = (path[:, pr.design][None, :, :, None]
                  * h_design.transpose(0, 2, 1)[:, None, :, :])               # (S, J, Nd, M)
    coef_x = coef_x.reshape(s, j, n_x)
    n_pump = s if pr.free_pump else 0
    n_peak = t_ if energy else 0
    upper = 0.0
    q_tot = pr.demand.reshape(s, j).sum(axis=1)                              # (S,)
    n_stage = weights["station"].size if station else 0
    hints = np.zeros(n_stage)
    if energy:
        econ = pr.economics
        kw_per_m = pr.density * fr.GRAVITY * np.maximum(q_tot, 0.0) / econ.efficiency / 1000.0
        # the all-smallest design bounds the pump heads from above
        h_small = h_fixed + np.einsum("jn,sn->sj", path[:, pr.design],
                                      h_design[:, 0, :]) if nd else h_fixed
        worst = (required[None, :] - base_head[None, :] + h_small).max(axis=1)
        upper = float((np.maximum(worst, 0.0) * kw_per_m).max())
    for _refinement in range(3 if station else 1):
        # each station stage: breakpoints of the power it adds, their weights lambda, the
        # segments z of the SOS2 condition, and the power added (one block per stage)
        bps = [_station_breakpoints(pr, h, upper) for h in hints]
        sizes = [b.size + (b.size - 1) + 1 for b in bps]
        i_pump, i_peak = n_x, n_x + n_pump
        i_st = i_peak + n_peak
        starts = i_st + np.concatenate([[0], np.cumsum(sizes)])[:-1].astype(int)
        n_var = i_st + int(sum(sizes))
        c = np.zeros(n_var)
        c[:n_x] = cost_x
        integrality = np.zeros(n_var)
        lb, ub = np.zeros(n_var), np.full(n_var, np.inf)
        ub[:n_x] = np.where(allowed.ravel(), np.repeat(lengths_d, m) if split else 1.0, 0.0)
        if not split:
            integrality[:n_x] = 1
        for b0, bp in zip(starts, bps, strict=True):
            ub[b0:b0 + 2 * bp.size - 1] = 1.0                  # lambda and z in [0, 1]
            integrality[b0 + bp.size:b0 + 2 * bp.size - 1] = 1   # z binary
        cons = []
        # one size per pipe (or lengths summing to the pipe)
        a_sum = sparse.kron(sparse.eye(nd), np.ones((1, m)), format="csr")
        rhs_sum = lengths_d if split else np.ones(nd)
        cons.append(optimize.LinearConstraint(_pad(a_sum, n_var, 0), rhs_sum, rhs_sum))
        # heads: sum(coef x) - pump_s <= base_head - required - h_fixed, every case and junction
        a_head = sparse.csr_matrix(coef_x.reshape(s * j, n_x))
        blocks = [a_head]
        if n_pump:
            blocks.append(-sparse.kron(sparse.eye(s), np.ones((j, 1)), format="csr"))
        a_h = sparse.hstack(blocks, format="csr")
        rhs_h = (base_head[None, :] - required[None, :] - h_fixed).ravel()
        cons.append(optimize.LinearConstraint(_pad(a_h, n_var, 0), -np.inf, rhs_h))
        if energy:
            econ = pr.economics
            w_e = weights["energy"] if t_ > 1 else weights["energy"].sum(keepdims=True)
            w_d = (weights["demand"] if t_ > 1
                   else np.atleast_1d(weights["demand"]).sum(keepdims=True))
            hours = econ.duty.hours_array
            kw = kw_per_m.reshape(t_, k_)
            # energy PV of the pump head of case (t, k): w_e[t] hours_k kW-per-metre
            c[i_pump:i_pump + s] = (w_e[:, None] * hours[None, :] * kw).ravel()
            c[i_peak:i_peak + t_] = w_d
            # peak_t >= power of each duty point of year t
            cases = np.arange(s)
            a_pk = _rows([cases, cases], [i_pump + cases, i_peak + cases // k_],
                         [kw.ravel(), -np.ones(s)], (s, n_var))
            cons.append(optimize.LinearConstraint(a_pk, -np.inf, 0.0))
            if station:
                cons += _stage_constraints(econ.pump_station, weights, bps, starts, c,
                                           i_peak, t_, n_var)
        res = optimize.milp(c, integrality=integrality, bounds=optimize.Bounds(lb, ub),
                            constraints=cons,
                            options={"mip_rel_gap": gap, "time_limit": time_limit,
                                     "presolve": True})
        if res.x is None:
            msg = ("no design keeps every junction's minimum pressure, even with the largest "
                   "allowed sizes" if res.status == 2 else f"the solver stopped: {res.message}")
            return _failed(pr, msg, "milp", t0)
        if station:
            hints = np.array([res.x[b0 + 2 * bp.size - 1] for b0, bp in zip(starts, bps,
                                                                            strict=True)])
    x = res.x[:n_x].reshape(nd, m)
    if split:
        lengths = np.where(x > 1e-9 * lengths_d[:, None], x, 0.0)
        lengths *= (lengths_d / lengths.sum(axis=1))[:, None]
        choice = np.argmax(lengths, axis=1)
        ev = evaluate(pr, None, lengths=lengths[None])
    else:
        lengths = None
        choice = np.argmax(x, axis=1)
        ev = evaluate(pr, choice[None])
    # the bound of the programme, in the units of the evaluated objective
    bound = getattr(res, "mip_dual_bound", None)
    bound = float(res.fun) if bound is None or not np.isfinite(bound) else float(bound)
    cost = float(ev.cost[0])
    if pr.pumped and pr.economics is not None and not energy:
        # fixed pump heads: the energy does not depend on the sizes; add it to the bound
        bound += cost - float(ev.capital[0]) * pipe_w
    lower = min(bound, cost)
    gap_out = (cost - lower) / cost if cost > 0 else 0.0
    ok = bool(ev.feasible[0])
    message = (f"optimal within a gap of {gap_out:.2e} (mixed-integer programme"
               f"{', split pipes' if split else ''})" if ok else
               "the solver's design does not hold every pressure when re-solved")
    return DesignOutcome(choice=choice, lengths=lengths, cost=cost, lower_bound=lower,
                         gap=gap_out, success=ok, message=message, method="milp",
                         evaluations=1, evaluation=ev, seconds=time.perf_counter() - t0)


def _rows(rows: list, cols: list, vals: list, shape: tuple) -> sparse.csr_matrix:
    """A sparse matrix from lists of (row, column, value) arrays."""
    return sparse.csr_matrix((np.concatenate([np.asarray(v, float) for v in vals]),
                              (np.concatenate([np.asarray(r, int) for r in rows]),
                               np.concatenate([np.asarray(c, int) for c in cols]))), shape=shape)


def _stage_constraints(station: Any, weights: dict, bps: list, starts: np.ndarray,
                       c: np.ndarray, i_peak: int, t_: int, n_var: int) -> list:
    """Rows of the pump-station stages in the programme, and their costs (set in ``c``).

    Stage j adds the power D_j = sum_q lambda_jq B_jq (sum_q lambda_jq = 1, at most two
    neighbouring lambda non-zero: lambda_jq <= z_j(q-1) + z_jq, sum_q z_jq = 1); the stages up
    to j cover the peak of every year before the next stage is built (all years when every
    year is alike); its cost is the stage's present-value weight times the interpolated
    capital sum_q lambda_jq a (B_jq (1 + s))^b, which lies below the concave curve.
    """
    cons = []
    added = []
    for jj, (b0, bp) in enumerate(zip(starts, bps, strict=True)):
        nb = bp.size
        ns = nb - 1
        lam = b0 + np.arange(nb)
        seg = b0 + nb + np.arange(ns)
        d_j = b0 + nb + ns
        added.append(d_j)
        c[lam] = weights["station"][jj] * np.asarray(station.capital(bp))
        q = np.arange(nb)
        r_sos = 2 + q
        a = _rows([np.zeros(nb), np.ones(nb), [1], r_sos, r_sos[1:], r_sos[:ns],
                   np.full(ns, 2 + nb)],
                  [lam, lam, [d_j], lam, seg[q[1:] - 1], seg, seg],
                  [np.ones(nb), bp, [-1.0], np.ones(nb), -np.ones(ns), -np.ones(ns),
                   np.ones(ns)], (3 + nb, n_var))
        lo = np.concatenate([[1.0, 0.0], np.full(nb, -np.inf), [1.0]])
        hi = np.concatenate([[1.0, 0.0], np.zeros(nb), [1.0]])
        cons.append(optimize.LinearConstraint(a, lo, hi))
        # peak_t - sum_{i <= j} D_i <= 0 for the years this stage covers
        years = np.arange(1) if t_ == 1 else np.arange(int(weights["stage_last"][jj]))
        rows_d = np.repeat(np.arange(years.size), len(added))
        cols_d = np.tile(np.asarray(added), years.size)
        a_pk = _rows([np.arange(years.size), rows_d], [i_peak + years, cols_d],
                     [np.ones(years.size), -np.ones(rows_d.size)], (years.size, n_var))
        cons.append(optimize.LinearConstraint(a_pk, -np.inf, 0.0))
    return cons


def _pad(a: sparse.spmatrix, n_var: int, offset: int) -> sparse.csr_matrix:
    """Place the columns of ``a`` at ``offset`` in a matrix of ``n_var`` columns."""
    a = sparse.csr_matrix(a)
    right = n_var - offset - a.shape[1]
    parts = ([sparse.csr_matrix((a.shape[0], offset))] if offset else []) + [a]
    if right:
        parts.append(sparse.csr_matrix((a.shape[0], right)))
    return sparse.hstack(parts, format="csr")


def _failed(pr: DesignProblem, message: str, method: str, t0: float) -> DesignOutcome:
    largest = np.array([np.flatnonzero(row)[-1] for row in pr.allowed], dtype=np.int64)
    ev = evaluate(pr, largest[None])
    return DesignOutcome(choice=largest, lengths=None, cost=float(ev.cost[0]), lower_bound=None,
                         gap=None, success=False, message=message, method=method,
                         evaluations=1, evaluation=ev, seconds=time.perf_counter() - t0)


# --------------------------------------------------------------------------------------------
# looped networks: batched local search with shaking
# --------------------------------------------------------------------------------------------
def _better(viol_a, cost_a, viol_b, cost_b, tol):
    """Is design a better than design b? Feasible first, then cost; else less violation."""
    fa, fb = viol_a <= tol, viol_b <= tol
    return np.where(fa & fb, cost_a < cost_b * (1 - 1e-12) - 1e-9,
                    np.where(fa != fb, fa, viol_a < viol_b * (1 - 1e-9) - 1e-12))


def _neighbourhoods(ranks: np.ndarray, n_allowed: np.ndarray, rng: np.random.Generator,
                    pairs_per_chain: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """One-size moves and two-pipe swaps (one pipe down a size, another up) of each chain.

    Every one-size move of every chain, and for chain c a random ``pairs_per_chain[c]`` of
    its swaps. Returns the neighbour rank vectors (N, Nd) and the chain of each (N,).
    """
    c, nd = ranks.shape
    eye = np.eye(nd, dtype=np.int64)
    singles = np.concatenate([ranks[:, None, :] + eye[None], ranks[:, None, :] - eye[None]],
                             axis=1)                                           # (C, 2Nd, Nd)
    ii, jj = np.nonzero(~np.eye(nd, dtype=bool))
    order = rng.random((c, ii.size)).argsort(axis=1)
    n_take = int(min(ii.size, pairs_per_chain.max(initial=0)))
    take = order[:, :n_take]                                                   # (C, n)
    pairs = ranks[:, None, :] - eye[ii[take]] + eye[jj[take]]                  # (C, n, Nd)
    keep_pair = np.arange(n_take)[None, :] < pairs_per_chain[:, None]
    cand = np.concatenate([singles, pairs], axis=1)
    keep = np.concatenate([np.ones(singles.shape[:2], dtype=bool), keep_pair], axis=1)
    owner = np.repeat(np.arange(c), cand.shape[1]).reshape(c, -1)
    cand, owner = cand[keep], owner[keep]
    ok = np.all((cand >= 0) & (cand < n_allowed[None, :]), axis=1)
    return cand[ok], owner[ok]


def design_looped(problem: DesignProblem, seed: int = 1, evaluations: int = 200_000,
                  chains: int = 8, max_pairs: int = 1200, sample: int = 64, restart: int = 4,
                  target: float | None = None,
                  patience: int | None = None, start: Any = None,
                  progress: bool | None = None) -> DesignOutcome:
    """Least-cost design of a looped network by batched local search with shaking.

    ``chains`` independent searches run side by side. Each step evaluates, for every chain at
    once (one hydraulic batch, each candidate started from its chain's flows), every move to
    the next size up or down of one pipe and a random sample of the swaps that take one pipe
    down a size and another up (all of them, up to ``max_pairs``, before a chain is declared
    stuck). A chain moves to its
    best neighbour while that is better: a feasible design beats an infeasible one, feasible
    designs compare by cost, infeasible ones by their pressure shortfall. At a local optimum
    the chain shakes its best design found so far by changing k pipes at random by one or two
    sizes and descends again; k grows by one after each shake that finds nothing better and
    returns to 2 after one that does (variable neighbourhood search, Mladenović & Hansen 1997).

    Parameters
    ----------
    problem : DesignProblem
    seed : int
        Seed of the random generator: the same seed gives the same designs.
    evaluations : int
        Budget of designs whose hydraulics are solved.
    chains : int
        Searches run side by side.
    max_pairs : int
        Largest number of swap moves per chain when its whole neighbourhood is checked.
    sample : int
        Swap moves drawn per chain and step; only when none of them (nor a one-size move)
        improves is the whole neighbourhood checked before the chain counts as stuck.
    restart : int
        Shakes without a better design after which a chain starts afresh, from a random
        design or a crossover of two of the best local optima met so far.
    target : float, optional
        Stop as soon as a feasible design costs no more than this.
    patience : int, optional
        Stop after this many shakes of every chain without a better design (default: run the
        whole budget).
    start : array_like of int, shape (Nd,), optional
        A design to start one chain from (option indices).
    progress : bool, optional
        Show a progress bar with the best cost so far (default: when standard error is a
        terminal).

    Returns
    -------
    DesignOutcome
    """
    t0 = time.perf_counter()
    pr = problem
    rng = np.random.default_rng(seed)
    nd = pr.n_design
    # work in ranks: the r-th allowed size of each pipe
    n_allowed = pr.allowed.sum(axis=1)
    order = np.argsort(~pr.allowed, axis=1, kind="stable")      # allowed option indices first
    to_option = order[:, : n_allowed.max()] if nd else np.zeros((0, 0), dtype=np.int64)

    def options(r: np.ndarray) -> np.ndarray:
        return to_option[np.arange(nd)[None, :], r]

    if nd == 0:
        ev = evaluate(pr, np.zeros((1, 0), dtype=np.int64))
        return DesignOutcome(np.zeros(0, np.int64), None, float(ev.cost[0]), None, None,
                             bool(ev.feasible[0]), "nothing to size", "search", 1,
                             evaluation=ev, seconds=time.perf_counter() - t0)
    tol = HEAD_TOLERANCE * max(1, pr.n_cases * pr.graph.n_junctions)
    ranks = rng.integers(0, n_allowed[None, :], size=(chains, nd))
    ranks[0] = n_allowed - 1                                    # one chain from the largest
    if start is not None:
        inv = np.argsort(order, axis=1)
        ranks[min(1, chains - 1)] = inv[np.arange(nd), np.asarray(start, dtype=np.int64)]
    ev = evaluate(pr, options(ranks))
    used = chains
    cur_v, cur_c, cur_f = ev.violation.copy(), ev.cost.copy(), ev.flow.copy()
    best_r, best_v, best_c = ranks.copy(), cur_v.copy(), cur_c.copy()
    shake = np.full(chains, 2)
    stale = np.zeros(chains, dtype=np.int64)
    full = np.zeros(chains, dtype=bool)    # evaluate the whole neighbourhood next step
    elite_r, elite_v, elite_c = ranks[:0].copy(), cur_v[:0].copy(), cur_c[:0].copy()
    g_best = int(np.lexsort((cur_c, cur_v > tol))[0])
    glob = (ranks[g_best].copy(), float(cur_v[g_best]), float(cur_c[g_best]))
    history = [(used, glob[2])] if glob[1] <= tol else []
    bar = _bar(evaluations, progress)
    if bar is not None and glob[1] <= tol:
        bar.set_postfix_str(f"best {glob[2]:,.0f}")
    stop = ""
    try:
        while used < evaluations:
            cand, owner = _neighbourhoods(ranks, n_allowed, rng,
                                          np.where(full, max_pairs, sample))
            if pr.economics is None or not pr.pumped:
                # capital only: from a feasible design only cheaper moves can improve
                step_cost = ((pr.option_cost[options(cand)] - pr.option_cost[options(
                    ranks[owner])]) * pr.length[pr.design][None, :]).sum(axis=1)
                keep = ~((cur_v[owner] <= tol) & (step_cost >= 0))
                cand, owner = cand[keep], owner[keep]
            if cand.shape[0] == 0:
                nb_v = np.zeros(0)
                nb_c = np.zeros(0)
            else:
                nev = evaluate(pr, options(cand), flow0=cur_f[owner])
                nb_v, nb_c = nev.violation, nev.cost
                used += cand.shape[0]
                if bar is not None:
                    bar.update(max(0, min(cand.shape[0], evaluations - bar.n)))
            # best neighbour of each chain: lexicographic (infeasible, violation or cost)
            infeas = nb_v > tol
            key2 = np.where(infeas, nb_v, nb_c)
            idx = np.lexsort((key2, infeas, owner))
            first = np.ones(idx.size, dtype=bool)
            first[1:] = owner[idx][1:] != owner[idx][:-1]
            top = idx[first]
            move = np.zeros(chains, dtype=bool)
            to = np.full(chains, -1)
            if top.size:
                better = _better(nb_v[top], nb_c[top], cur_v[owner[top]], cur_c[owner[top]],
                                 tol)
                move[owner[top]] = better
                to[owner[top]] = top
            mv = np.flatnonzero(move)
            ranks[mv] = cand[to[mv]]
            cur_v[mv], cur_c[mv] = nb_v[to[mv]], nb_c[to[mv]]
            if mv.size:
                cur_f[mv] = nev.flow[to[mv]]
            # a chain whose sample held no better move looks at its whole neighbourhood next;
            # a chain whose whole neighbourhood held none is at a local optimum
            look = ~move & ~full
            full = look
            lo = np.flatnonzero(~move & ~look)
            if lo.size:
                improved = _better(cur_v[lo], cur_c[lo], best_v[lo], best_c[lo], tol)
                up = lo[improved]
                best_r[up], best_v[up], best_c[up] = ranks[up], cur_v[up], cur_c[up]
                shake[up] = 2
                stale[up] = 0
                same = lo[~improved]
                shake[same] = np.where(shake[same] >= max(3, nd // 2), 2, shake[same] + 1)
                stale[same] += 1
                k = int(np.lexsort((np.where(best_v > tol, best_v, best_c), best_v > tol))[0])
                if _better(best_v[k], best_c[k], glob[1], glob[2], tol) or \
                        (glob[1] > tol >= best_v[k]):
                    glob = (best_r[k].copy(), float(best_v[k]), float(best_c[k]))
                    history.append((used, glob[2]))
                    if bar is not None:
                        bar.set_postfix_str(f"best {glob[2]:,.0f}", refresh=False)
                if target is not None and glob[1] <= tol and glob[2] <= target * (1 + 1e-9):
                    stop = "target reached"
                    break
                if patience is not None and np.all(stale >= patience):
                    stop = f"no better design after {patience} shakes of every chain"
                    break
                # chains stuck for `restart` shakes start afresh: half from a random design,
                # half from a uniform crossover of two elite local optima
                fresh = lo[stale[lo] >= restart]
                if fresh.size:
                    elite_r, elite_v, elite_c = _archive(elite_r, elite_v, elite_c,
                                                         best_r[fresh], best_v[fresh],
                                                         best_c[fresh], tol, 2 * chains)
                    rand = rng.integers(0, n_allowed[None, :], size=(fresh.size, nd))
                    mix = rand
                    if elite_r.shape[0]:
                        a = rng.integers(0, elite_r.shape[0], size=fresh.size)
                        b = rng.integers(0, elite_r.shape[0], size=fresh.size)
                        mix = np.where(rng.random((fresh.size, nd)) < 0.5, elite_r[a],
                                       elite_r[b])
                    best_r[fresh] = np.where(rng.random(fresh.size)[:, None] < 0.5, mix, rand)
                    best_v[fresh], best_c[fresh] = np.inf, np.inf
                    stale[fresh], shake[fresh] = 0, 2
                # shake: from the chain's best (sometimes from the best of all chains)
                base = best_r[lo].copy()
                from_glob = (rng.random(lo.size) < 0.1) & np.isfinite(best_v[lo])
                base[from_glob] = glob[0]
                pick = rng.random((lo.size, nd)).argsort(axis=1) < shake[lo][:, None]
                # each shaken pipe moves one or two sizes, or (half the time) to any size
                step = rng.choice(np.array([-2, -1, 1, 2]), size=(lo.size, nd))
                near = np.clip(base + step, 0, n_allowed[None, :] - 1)
                anywhere = rng.integers(0, n_allowed[None, :], size=(lo.size, nd))
                jump = np.where(rng.random((lo.size, nd)) < 0.5, near, anywhere)
                ranks[lo] = np.where(pick, jump, base)
                sev = evaluate(pr, options(ranks[lo]), flow0=cur_f[lo])
                used += lo.size
                cur_v[lo], cur_c[lo], cur_f[lo] = sev.violation, sev.cost, sev.flow
        else:
            stop = f"evaluation budget of {evaluations:,} spent"
    finally:
        if bar is not None:
            bar.close()
    # the best design met, including chains still descending
    allv = np.concatenate([best_v, cur_v, [glob[1]]])
    allc = np.concatenate([best_c, cur_c, [glob[2]]])
    allr = np.concatenate([best_r, ranks, glob[0][None]])
    k = int(np.lexsort((np.where(allv > tol, allv, allc), allv > tol))[0])
    choice = options(allr[k][None])[0]
    final = evaluate(pr, choice[None])
    ok = bool(final.feasible[0])
    if ok and (not history or history[-1][1] > float(final.cost[0])):
        history.append((used, float(final.cost[0])))
    msg = (f"best design after {used:,} evaluations ({stop})" if ok else
           f"no design found that holds every minimum pressure ({stop}); the least shortfall "
           f"is {float(final.shortfall[0]):.3g} m")
    return DesignOutcome(choice=choice, lengths=None, cost=float(final.cost[0]),
                         lower_bound=None, gap=None, success=ok, message=msg, method="search",
                         evaluations=used, history=history, evaluation=final,
                         seconds=time.perf_counter() - t0)


def _archive(er, ev, ec, r, v, c, tol, size):
    """Keep the ``size`` best distinct designs of an elite archive and new local optima."""
    keep = np.isfinite(v)
    r, v, c = np.concatenate([er, r[keep]]), np.concatenate([ev, v[keep]]), \
        np.concatenate([ec, c[keep]])
    _, first = np.unique(r, axis=0, return_index=True)
    r, v, c = r[first], v[first], c[first]
    order = np.lexsort((np.where(v > tol, v, c), v > tol))[:size]
    if order.size == 0:
        return er, ev, ec
    return r[order], v[order], c[order]


def _bar(total: int, progress: bool | None):
    show = sys.stderr.isatty() if progress is None else bool(progress)
    if not show:
        return None
    from tqdm import tqdm

    return tqdm(total=total, desc="network design", unit="design", file=sys.stderr)
