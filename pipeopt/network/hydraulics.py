"""Steady flow in looped pipe networks (physics layer): the global gradient method.

A network is a graph of *junctions* (nodes whose head is unknown: each takes a known demand)
and *fixed-head nodes* (reservoirs, tanks at a set level, the outlet of a pump that holds a
head), joined by pipes. Each pipe runs from its ``start`` node to its ``end`` node; a positive
flow runs that way. The steady state satisfies

- mass balance at every junction: inflow − outflow = demand, ``A21 Q = d``;
- energy balance along every pipe: H_start − H_end = h(Q), the head loss of the pipe.

:func:`solve_network` solves both together by the global gradient method of Todini & Pilati
(1988): Newton's method on the pipe flows and junction heads at once, reduced to a symmetric
positive definite system in the heads alone (a weighted graph Laplacian) at every step, so that
mass balance holds exactly after each step and the energy balance converges quadratically.

Everything is batched over a leading axis: B designs (or demand cases) of one topology are
solved at once. Small networks use numpy's batched dense solver; larger ones one sparse LU
(scipy.sparse, SuperLU) of the block-diagonal system of the whole batch.

Head-loss laws (the ``law`` argument): :class:`HazenWilliams` (SI coefficient settable, as
published benchmarks differ in it) and :class:`DarcyWeisbach` (the Colebrook–White factor of
:func:`pipeopt.friction.friction_factor`, with its exact derivative).

References
----------
.. [1] E. Todini, S. Pilati, "A gradient algorithm for the analysis of pipe networks", in
   B. Coulbeck, C.-H. Orr (eds.), Computer Applications in Water Supply, Vol. 1, Research
   Studies Press, Letchworth, 1988, pp. 1-20.
.. [2] A. Hazen, G. S. Williams, Hydraulic Tables, 3rd ed., Wiley, New York, 1920.
.. [3] C. F. Colebrook, "Turbulent flow in pipes, with particular reference to the transition
   region between the smooth and rough pipe laws", J. Inst. Civil Eng. 11(4):133-156, 1939.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
from scipy import sparse
from scipy.sparse import csgraph
from scipy.sparse import linalg as splinalg

from .. import friction as fr
from ..errors import InputError

__all__ = ["NetworkGraph", "HazenWilliams", "DarcyWeisbach", "HydraulicState",
           "hazen_williams_resistance", "darcy_weisbach_resistance", "solve_network",
           "HAZEN_WILLIAMS_COEFFICIENT", "HAZEN_WILLIAMS_FLOW_EXPONENT",
           "HAZEN_WILLIAMS_DIAMETER_EXPONENT"]

#: SI coefficient ω of h = ω L Q^1.852 / (C^1.852 D^4.87) used by most published network
#: design benchmarks since Savic & Walters (1997); other texts use 10.583 to 10.9031.
HAZEN_WILLIAMS_COEFFICIENT = 10.5088
#: Flow exponent of Hazen-Williams (1.852 = 1/0.54).
HAZEN_WILLIAMS_FLOW_EXPONENT = 1.852
#: Diameter exponent of Hazen-Williams in the SI form (4.87 = 2.63/0.54).
HAZEN_WILLIAMS_DIAMETER_EXPONENT = 4.87

_DENSE_LIMIT = 96        # junctions up to which the batched dense solver is used
_TINY_FLOW = 1e-12       # m³/s: below this a Hazen-Williams pipe is taken as linear (Q = 0)


# --------------------------------------------------------------------------------------------
# topology
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class NetworkGraph:
    """The topology of a network, checked on construction.

    Nodes ``0 … n_junctions−1`` are junctions (unknown head); nodes ``n_junctions …
    n_junctions+n_fixed−1`` are fixed-head nodes.

    Parameters
    ----------
    n_junctions : int
        Number of junctions J.
    n_fixed : int
        Number of fixed-head nodes F (at least one).
    start, end : array_like of int, shape (P,)
        Node index of each pipe's two ends; a positive flow runs from ``start`` to ``end``.
    node_names, pipe_names : tuple of str, optional
        Names used in error messages (default ``node 3``, ``pipe 5``).

    Raises
    ------
    InputError
        For a network with no fixed-head node, a pipe joining a node to itself or to a node that
        does not exist, a junction that no pipe reaches, or a group of junctions with no path to
        any fixed-head node (their heads would be undetermined).

    Examples
    --------
    >>> g = NetworkGraph(2, 1, [2, 0], [0, 1])
    >>> g.n_pipes
    2
    """

    n_junctions: int
    n_fixed: int
    start: Any
    end: Any
    node_names: tuple = ()
    pipe_names: tuple = ()
    _a12: Any = field(default=None, repr=False, compare=False)
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    def __post_init__(self) -> None:
        start = np.asarray(self.start, dtype=np.int64).ravel()
        end = np.asarray(self.end, dtype=np.int64).ravel()
        n_nodes = int(self.n_junctions) + int(self.n_fixed)
        object.__setattr__(self, "start", start)
        object.__setattr__(self, "end", end)
        names = tuple(self.node_names) or tuple(f"node {i}" for i in range(n_nodes))
        pnames = tuple(self.pipe_names) or tuple(f"pipe {p}" for p in range(start.size))
        object.__setattr__(self, "node_names", names)
        object.__setattr__(self, "pipe_names", pnames)
        if len(names) != n_nodes or len(pnames) != start.size:
            raise InputError("node_names and pipe_names must name every node and every pipe")
        if self.n_fixed < 1:
            raise InputError("the network has no source: at least one node of fixed head (a "
                             "reservoir, a tank or a pumped source) is needed")
        if start.shape != end.shape or start.size == 0:
            raise InputError("a network needs at least one pipe, each with a start and an end")
        for p in range(start.size):
            for k in (start[p], end[p]):
                if not 0 <= k < n_nodes:
                    raise InputError(f"{pnames[p]}: refers to node index {k}, but the network "
                                     f"has nodes 0 to {n_nodes - 1}")
        loops = np.flatnonzero(start == end)
        if loops.size:
            p = loops[0]
            raise InputError(f"{pnames[p]}: starts and ends at the same node "
                             f"({names[start[p]]!r})")
        degree = np.bincount(np.concatenate([start, end]), minlength=n_nodes)
        lonely = np.flatnonzero(degree[: self.n_junctions] == 0)
        if lonely.size:
            raise InputError(f"{names[lonely[0]]}: is disconnected (no pipe reaches it)")
        # every junction needs a path to a fixed-head node
        adj = sparse.coo_matrix((np.ones(start.size), (start, end)), shape=(n_nodes, n_nodes))
        _, label = csgraph.connected_components(adj, directed=False)
        fed = np.zeros(label.max() + 1, dtype=bool)
        fed[label[self.n_junctions:]] = True
        orphans = np.flatnonzero(~fed[label[: self.n_junctions]])
        if orphans.size:
            group = [names[i] for i in orphans]
            shown = ", ".join(repr(g) for g in group[:5]) + (" ..." if len(group) > 5 else "")
            raise InputError(f"{names[orphans[0]]}: has no path to any source (the group "
                             f"{shown} is cut off from every fixed-head node)")

    @property
    def n_pipes(self) -> int:
        """Number of pipes P."""
        return int(self.start.size)

    @property
    def n_nodes(self) -> int:
        """Number of nodes J + F."""
        return int(self.n_junctions + self.n_fixed)

    def is_forest(self) -> bool:
        """True when every connected part is a tree holding exactly one fixed-head node.

        Then the flow in every pipe follows from the demands alone (a branched network).
        """
        n = self.n_nodes
        adj = sparse.coo_matrix((np.ones(self.n_pipes), (self.start, self.end)), shape=(n, n))
        n_comp, label = csgraph.connected_components(adj, directed=False)
        sources_per_part = np.bincount(label[self.n_junctions:], minlength=n_comp)
        return self.n_pipes == n - n_comp and bool(np.all(sources_per_part == 1))

    def junction_balance(self, pipe_values: np.ndarray) -> np.ndarray:
        """Σ over pipes ending at a junction − Σ over pipes starting there, shape (..., J).

        With pipe flows, the inflow minus the outflow of every junction (``A21 Q``).
        """
        x = np.asarray(pipe_values, dtype=float)
        lead = x.shape[:-1]
        x2 = x.reshape(-1, self.n_pipes)
        b = x2.shape[0]
        n = self.n_nodes
        offs = (np.arange(b) * n)[:, None]
        inflow = np.bincount((offs + self.end[None, :]).ravel(), weights=x2.ravel(),
                             minlength=b * n)
        outflow = np.bincount((offs + self.start[None, :]).ravel(), weights=x2.ravel(),
                              minlength=b * n)
        return (inflow - outflow).reshape(b, n)[:, : self.n_junctions].reshape(*lead, -1)

    def head_drop(self, junction_head: np.ndarray, fixed_head: np.ndarray) -> np.ndarray:
        """H_start − H_end of every pipe, shape (..., P), from junction and fixed heads."""
        jh = np.asarray(junction_head, dtype=float)
        fh = np.broadcast_to(np.asarray(fixed_head, dtype=float),
                             jh.shape[:-1] + (self.n_fixed,))
        h = np.concatenate([jh, fh], axis=-1)
        return h[..., self.start] - h[..., self.end]

    def tree_flows(self, demand: np.ndarray) -> np.ndarray:
        """Pipe flows of a branched network (see :meth:`is_forest`) from junction demands.

        Parameters
        ----------
        demand : array_like, shape (..., J)
            Junction demands [m³/s] (positive: taken out of the network).

        Returns
        -------
        ndarray, shape (..., P)
            The flow of every pipe [m³/s], positive from ``start`` to ``end``.

        Raises
        ------
        InputError
            When the network is not branched.
        """
        if not self.is_forest():
            raise InputError("tree_flows: the network has a loop or a part with several "
                             "sources; its flows depend on the pipes (solve it instead)")
        d = np.asarray(demand, dtype=float)
        j = self.n_junctions
        # A21 restricted to junction rows is square (J x P with P = J in a forest with one
        # source per part) and non-singular: solve A21 Q = d exactly
        a21 = self._incidence().T.tocsc()
        lu = splinalg.splu(a21)
        flat = d.reshape(-1, j).T
        return lu.solve(np.ascontiguousarray(flat)).T.reshape(d.shape[:-1] + (self.n_pipes,))

    def _incidence(self) -> sparse.csr_matrix:
        """A12 (P x J): −1 at a pipe's start junction, +1 at its end junction."""
        if self._a12 is None:
            p = np.arange(self.n_pipes)
            rows = np.concatenate([p, p])
            cols = np.concatenate([self.start, self.end])
            vals = np.concatenate([-np.ones(self.n_pipes), np.ones(self.n_pipes)])
            keep = cols < self.n_junctions
            a12 = sparse.csr_matrix((vals[keep], (rows[keep], cols[keep])),
                                    shape=(self.n_pipes, self.n_junctions))
            object.__setattr__(self, "_a12", a12)
        return self._a12


# --------------------------------------------------------------------------------------------
# head-loss laws
# --------------------------------------------------------------------------------------------
def hazen_williams_resistance(length: Any, diameter: Any, c_factor: Any,
                              coefficient: float = HAZEN_WILLIAMS_COEFFICIENT,
                              diameter_exponent: float = HAZEN_WILLIAMS_DIAMETER_EXPONENT,
                              flow_exponent: float = HAZEN_WILLIAMS_FLOW_EXPONENT) -> np.ndarray:
    """Resistance r of the Hazen–Williams law h = r |Q|^(n−1) Q, SI form.

    .. math:: r = \\omega L / (C^{n} D^{\\beta})

    Parameters
    ----------
    length : array_like
        Pipe length L [m].
    diameter : array_like
        Inner diameter D [m].
    c_factor : array_like
        Hazen–Williams coefficient C [-].
    coefficient : float
        ω [SI], 10.5088 by default (the value of most published design benchmarks).
    diameter_exponent : float
        β [-], 4.87 by default.
    flow_exponent : float
        n [-], 1.852 by default.

    Returns
    -------
    ndarray
        r [s^n / m^(3n−1)], so that h [m] = r |Q|^(n−1) Q with Q in m³/s.

    References
    ----------
    .. [1] A. Hazen, G. S. Williams, Hydraulic Tables, 3rd ed., Wiley, New York, 1920.
    .. [2] D. A. Savic, G. A. Walters, "Genetic algorithms for least-cost design of water
       distribution networks", J. Water Resour. Plann. Manage. 123(2):67-77, 1997,
       doi:10.1061/(ASCE)0733-9496(1997)123:2(67) (the coefficient 10.5088).

    Examples
    --------
    >>> r = hazen_williams_resistance(1000.0, 0.3, 130.0)
    >>> round(float(r * 0.1 ** 1.852), 3)
    6.323
    """
    length_, d, c = (np.asarray(v, dtype=float) for v in (length, diameter, c_factor))
    return coefficient * length_ / (c**flow_exponent * d**diameter_exponent)


def darcy_weisbach_resistance(length: Any, diameter: Any) -> np.ndarray:
    """Geometric factor of Darcy–Weisbach, h = f · r_D · |Q| Q, r_D = 8 L / (g π² D⁵).

    Parameters
    ----------
    length : array_like
        Pipe length L [m].
    diameter : array_like
        Inner diameter D [m].

    Returns
    -------
    ndarray
        r_D [s²/m⁵].

    Examples
    --------
    >>> round(float(0.02 * darcy_weisbach_resistance(1000.0, 0.3) * 0.1 ** 2), 4)
    6.8029
    """
    length_, d = np.asarray(length, dtype=float), np.asarray(diameter, dtype=float)
    return 8.0 * length_ / (fr.GRAVITY * np.pi**2 * d**5)


def _minor_resistance(minor_loss_k: np.ndarray, diameter: np.ndarray) -> np.ndarray:
    """K V²/(2g) = m |Q| Q with m = 8 K / (g π² D⁴)."""
    return 8.0 * minor_loss_k / (fr.GRAVITY * np.pi**2 * diameter**4)


class HazenWilliams:
    """The Hazen–Williams head-loss law of every pipe of a batch, plus minor losses.

    Parameters
    ----------
    length : array_like, shape (P,)
        Pipe lengths [m].
    diameter : array_like, shape (B, P) or (P,)
        Inner diameters [m].
    c_factor : array_like, shape (B, P) or (P,)
        Hazen–Williams C [-].
    minor_loss_k : array_like, optional
        Sum of minor-loss coefficients of each pipe [-], referred to its velocity.
    coefficient, diameter_exponent, flow_exponent : float
        As in :func:`hazen_williams_resistance`.
    """

    name = "hazen-williams"

    def __init__(self, length: Any, diameter: Any, c_factor: Any, minor_loss_k: Any = 0.0,
                 coefficient: float = HAZEN_WILLIAMS_COEFFICIENT,
                 diameter_exponent: float = HAZEN_WILLIAMS_DIAMETER_EXPONENT,
                 flow_exponent: float = HAZEN_WILLIAMS_FLOW_EXPONENT) -> None:
        d = np.atleast_2d(np.asarray(diameter, dtype=float)
                          * np.ones_like(np.asarray(length, dtype=float)))
        self.diameter = d
        self.n = float(flow_exponent)
        self.r = np.broadcast_to(hazen_williams_resistance(length, d, c_factor, coefficient,
                                                           diameter_exponent, flow_exponent),
                                 d.shape)
        self.m = np.broadcast_to(_minor_resistance(np.asarray(minor_loss_k, dtype=float), d),
                                 d.shape)

    def __call__(self, flow: np.ndarray, rows: np.ndarray | slice = slice(None)):
        """Head loss h [m] and its derivative dh/dQ [s/m²] at ``flow`` (rows of the batch)."""
        r, m = self.r[rows], self.m[rows]
        a = np.abs(flow)
        small = a < _TINY_FLOW
        # special case: a pipe with (almost) no flow is taken as linear through the origin,
        # continuous with the power law at |Q| = _TINY_FLOW, so that dh/dQ stays positive
        a_eff = np.where(small, _TINY_FLOW, a)
        pw = a_eff ** (self.n - 1.0)
        h = r * pw * flow + m * a * flow
        g = np.where(small, r * pw, self.n * r * pw) + 2.0 * m * a
        return h, g


class DarcyWeisbach:
    """The Darcy–Weisbach head-loss law with the Colebrook–White factor, plus minor losses.

    The friction factor comes from :func:`pipeopt.friction.friction_factor` (Colebrook–White
    solved to machine precision; 64/Re when laminar). Across the transition band
    2000 <= Re < 4000 the factor is bridged linearly in Re from 64/2000 to the Colebrook–White
    value at Re = 4000, so that the head loss is a continuous, increasing function of the flow
    and every network has a solution; the points in the band are counted in
    :attr:`HydraulicState.transitional`. The derivative of the head loss includes the change
    of the friction factor with the flow (exact, from the implicit Colebrook–White equation),
    so Newton's method converges quadratically.

    Parameters
    ----------
    length : array_like, shape (P,)
        Pipe lengths [m].
    diameter : array_like, shape (B, P) or (P,)
        Inner diameters [m].
    roughness : array_like, shape (B, P) or (P,)
        Absolute roughness [m].
    density, viscosity : float
        Fluid density [kg/m³] and dynamic viscosity [Pa·s].
    minor_loss_k : array_like, optional
        Sum of minor-loss coefficients of each pipe [-].
    """

    name = "darcy-weisbach"

    def __init__(self, length: Any, diameter: Any, roughness: Any, density: float,
                 viscosity: float, minor_loss_k: Any = 0.0) -> None:
        d = np.atleast_2d(np.asarray(diameter, dtype=float)
                          * np.ones_like(np.asarray(length, dtype=float)))
        self.diameter = d
        self.rd = np.broadcast_to(darcy_weisbach_resistance(length, d), d.shape)
        rr = np.broadcast_to(np.asarray(roughness, dtype=float) / d, d.shape)
        if rr.size and rr.max() > fr.MAX_RELATIVE_ROUGHNESS:
            raise InputError(f"relative roughness must not exceed {fr.MAX_RELATIVE_ROUGHNESS}; "
                             f"got {rr.max():.4g}")
        self.rr = rr
        self.m = np.broadcast_to(_minor_resistance(np.asarray(minor_loss_k, dtype=float), d),
                                 d.shape)
        # Re = re_per_flow * |Q|
        self.re_per_flow = 4.0 * density / (np.pi * viscosity * d)
        # laminar: f |Q| = 64 |Q| / Re = 64 / re_per_flow, so h = rd (64 / re_per_flow) Q
        self.laminar_slope = self.rd * 64.0 / self.re_per_flow

    def __call__(self, flow: np.ndarray, rows: np.ndarray | slice = slice(None)):
        """Head loss h [m] and its derivative dh/dQ [s/m²] at ``flow`` (rows of the batch)."""
        rd, rr, m = self.rd[rows], self.rr[rows], self.m[rows]
        a = np.abs(flow)
        re = self.re_per_flow[rows] * a
        lam_slope = self.laminar_slope[rows]
        laminar = re < fr.LAMINAR_LIMIT
        band = ~laminar & (re < fr.TURBULENT_LIMIT)
        # Colebrook-White at max(Re, 4000): the turbulent value, or the band's upper end
        f_t = np.asarray(fr.friction_factor(np.maximum(re, fr.TURBULENT_LIMIT), rr,
                                            transition="ignore"))
        # turbulent: d(f Q|Q|)/dQ = f |Q| (2 - 2c/(Re + c)), from the implicit equation
        x = 1.0 / np.sqrt(f_t)
        re_t = np.maximum(re, fr.TURBULENT_LIMIT)
        s = rr / 3.7 + 2.51 * x / re_t
        c = (2.0 / np.log(10.0)) * 2.51 / s
        g_turb = rd * a * f_t * 2.0 * re_t / (re_t + c)
        # transition band: f linear in Re between 64/2000 and f_t(4000)
        f_lo = 64.0 / fr.LAMINAR_LIMIT
        slope = (f_t - f_lo) / (fr.TURBULENT_LIMIT - fr.LAMINAR_LIMIT)
        f_band = f_lo + slope * (re - fr.LAMINAR_LIMIT)
        g_band = rd * a * (2.0 * f_band + re * slope)
        f = np.where(band, f_band, f_t)
        h = np.where(laminar, lam_slope * flow, rd * f * a * flow) + m * a * flow
        g = np.where(laminar, lam_slope, np.where(band, g_band, g_turb)) + 2.0 * m * a
        return h, g

    def transitional(self, flow: np.ndarray) -> np.ndarray:
        """True where 2000 <= Re < 4000, shape of ``flow``."""
        re = self.re_per_flow * np.abs(flow)
        return (re >= fr.LAMINAR_LIMIT) & (re < fr.TURBULENT_LIMIT)


# --------------------------------------------------------------------------------------------
# the solver
# --------------------------------------------------------------------------------------------
@dataclass
class HydraulicState:
    """Steady flows and heads of a batch of B networks of one topology.

    Attributes
    ----------
    flow : ndarray, shape (B, P)
        Pipe flows [m³/s], positive from start to end.
    head : ndarray, shape (B, J)
        Junction heads [m].
    head_loss : ndarray, shape (B, P)
        h(Q) of every pipe [m].
    energy_residual : ndarray, shape (B,)
        Largest |h(Q) − (H_start − H_end)| over the pipes [m].
    mass_residual : ndarray, shape (B,)
        Largest |inflow − outflow − demand| over the junctions [m³/s].
    converged : ndarray of bool, shape (B,)
        Both residuals within the tolerances.
    iterations : ndarray of int, shape (B,)
        Newton steps taken.
    transitional : ndarray of int, shape (B,)
        Pipes with 2000 <= Re < 4000 (Darcy–Weisbach only; 0 otherwise).
    """

    flow: np.ndarray
    head: np.ndarray
    head_loss: np.ndarray
    energy_residual: np.ndarray
    mass_residual: np.ndarray
    converged: np.ndarray
    iterations: np.ndarray
    transitional: np.ndarray


def _schur_pattern(graph: NetworkGraph, b: int) -> dict[str, np.ndarray]:
    """Where each pipe's weight goes in the batch's matrix A21 diag(w) A12 (cached per B).

    Entries: the diagonal at both junction ends (+w), the two off-diagonal places (−w). For
    the dense path, flat positions in (B, J, J); for the sparse path, the CSC structure of the
    block-diagonal (B·J)² matrix and the data slot of every entry.
    """
    cache = graph._cache
    if b in cache:
        return cache[b]
    j = graph.n_junctions
    s, e = graph.start, graph.end
    s_in, e_in = s < j, e < j
    both = s_in & e_in
    ii = np.concatenate([s[s_in], e[e_in], s[both], e[both]])
    jj = np.concatenate([s[s_in], e[e_in], e[both], s[both]])
    pipe = np.concatenate([np.flatnonzero(s_in), np.flatnonzero(e_in), np.flatnonzero(both),
                           np.flatnonzero(both)])
    sign = np.concatenate([np.ones(s_in.sum() + e_in.sum()), -np.ones(2 * both.sum())])
    out = {"pipe": pipe, "sign": sign}
    if j <= _DENSE_LIMIT:
        out["flat"] = (np.arange(b)[:, None] * (j * j) + (ii * j + jj)[None, :]).ravel()
    else:
        offs = (np.arange(b) * j)[:, None]
        rows = (offs + ii[None, :]).ravel()
        cols = (offs + jj[None, :]).ravel()
        # column-major order; duplicates (several pipes on one diagonal) share a slot
        key = cols.astype(np.int64) * (b * j) + rows
        uniq, slot = np.unique(key, return_inverse=True)
        out["slot"] = slot
        out["n_slots"] = uniq.size
        out["indices"] = (uniq % (b * j)).astype(np.int32)
        out["indptr"] = np.searchsorted(uniq // (b * j), np.arange(b * j + 1)).astype(np.int32)
    if len(cache) > 8:
        cache.clear()
    cache[b] = out
    return out


def _schur_solve(graph: NetworkGraph, w: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    """Solve (A21 diag(w) A12) H = rhs for a batch: w (B, P), rhs (B, J) -> H (B, J).

    Large batches are solved in blocks (a handful) that keep the dense matrices within
    about 64 MB, or the sparse system within about 200,000 unknowns.
    """
    j = graph.n_junctions
    block = max(1, int(8e6 // (j * j)) if j <= _DENSE_LIMIT else 200_000 // j)
    if w.shape[0] <= block:
        return _schur_block(graph, w, rhs)
    return np.concatenate([_schur_block(graph, w[k:k + block], rhs[k:k + block])
                           for k in range(0, w.shape[0], block)])


def _schur_block(graph: NetworkGraph, w: np.ndarray, rhs: np.ndarray) -> np.ndarray:
    b = w.shape[0]
    j = graph.n_junctions
    pat = _schur_pattern(graph, b)
    vals = (w[:, pat["pipe"]] * pat["sign"][None, :]).ravel()              # (B * nnz,)
    if "flat" in pat:
        mat = np.bincount(pat["flat"], weights=vals, minlength=b * j * j).reshape(b, j, j)
        return np.linalg.solve(mat, rhs[..., None])[..., 0]
    data = np.bincount(pat["slot"], weights=vals, minlength=pat["n_slots"])
    mat = sparse.csc_matrix((data, pat["indices"], pat["indptr"]), shape=(b * j, b * j))
    lu = splinalg.splu(mat, permc_spec="MMD_AT_PLUS_A",
                       options={"SymmetricMode": True, "DiagPivotThresh": 0.0})
    return lu.solve(rhs.ravel()).reshape(b, j)


def solve_network(graph: NetworkGraph, law: Any, demand: Any, fixed_head: Any,
                  flow0: Any = None, tol_head: float = 1e-9, tol_flow: float = 1e-9,
                  max_iter: int = 60) -> HydraulicState:
    """Steady flows and heads of a batch of networks by the global gradient method.

    Parameters
    ----------
    graph : NetworkGraph
        The topology (shared by the batch).
    law : HazenWilliams or DarcyWeisbach
        Head-loss law of every pipe of every batch member, shape (B, P) inside.
    demand : array_like, shape (B, J) or (J,)
        Junction demands [m³/s]; positive is taken out of the network.
    fixed_head : array_like, shape (B, F) or (F,)
        Heads of the fixed-head nodes [m].
    flow0 : array_like, shape (B, P) or (P,), optional
        Starting flows [m³/s] (a previous solution makes a nearby design converge in a few
        steps); by default every pipe starts at a velocity of 1 m/s from start to end.
    tol_head : float
        Energy balance to reach on every pipe [m].
    tol_flow : float
        Mass balance to reach at every junction [m³/s].
    max_iter : int
        Newton steps at most; members not converged by then are flagged.

    Returns
    -------
    HydraulicState

    Notes
    -----
    With pipe flows Q, junction heads H, fixed heads H0, the incidence A12 (−1 at a pipe's
    start junction, +1 at its end) and A10 (the same for fixed-head nodes), each step solves

    .. math:: (A_{21} G^{-1} A_{12})\\, \\delta H = (A_{21} Q - d) - A_{21} G^{-1} r

    .. math:: Q' = Q - G^{-1} (r + A_{12} \\delta H), \\qquad H' = H + \\delta H

    with G = diag(dh/dQ), A21 = A12ᵀ and r = h(Q) + A12 H + A10 H0 the energy residual
    (Todini & Pilati 1988, written in correction form so that rounding stays small where a
    pipe carries almost no flow). After every step A21 Q' = d holds to rounding; the energy
    residual falls quadratically.

    References
    ----------
    .. [1] E. Todini, S. Pilati, "A gradient algorithm for the analysis of pipe networks", in
       B. Coulbeck, C.-H. Orr (eds.), Computer Applications in Water Supply, Vol. 1, Research
       Studies Press, 1988, pp. 1-20.

    Examples
    --------
    Two pipes in parallel from a reservoir at 50 m to one junction taking 0.1 m³/s:

    >>> g = NetworkGraph(1, 1, [1, 1], [0, 0])
    >>> law = HazenWilliams([1000.0, 1000.0], [0.3, 0.2], [130.0, 130.0])
    >>> st = solve_network(g, law, [0.1], [50.0])
    >>> bool(st.converged[0]), round(float(st.flow[0].sum()), 12)
    (True, 0.1)
    """
    b = law.diameter.shape[0]
    j, p = graph.n_junctions, graph.n_pipes
    if law.diameter.shape[1] != p:
        raise InputError(f"the head-loss law has {law.diameter.shape[1]} pipes; the network "
                         f"has {p}")
    d = np.broadcast_to(np.asarray(demand, dtype=float), (b, j))
    h0 = np.broadcast_to(np.asarray(fixed_head, dtype=float), (b, graph.n_fixed))
    if not (np.all(np.isfinite(d)) and np.all(np.isfinite(h0))):
        raise InputError("demands and fixed heads must be finite")
    if flow0 is None:
        q = np.broadcast_to(np.pi * law.diameter**2 / 4.0, (b, p)).copy()
    else:
        q = np.array(np.broadcast_to(np.asarray(flow0, dtype=float), (b, p)))
    # A10 H0 of every pipe: +H0 at a fixed start... written as the fixed part of -(Hs - He)
    full = np.concatenate([np.zeros((b, j)), h0], axis=1)
    s_fix = np.where(graph.start >= j, graph.start, 0)
    e_fix = np.where(graph.end >= j, graph.end, 0)
    a10h0 = (-np.where(graph.start >= j, full[:, s_fix], 0.0)
             + np.where(graph.end >= j, full[:, e_fix], 0.0))                  # (B, P)
    a12 = graph._incidence()
    # start every junction at the mean fixed head: the first step then corrects small numbers
    head = np.repeat(h0.mean(axis=1, keepdims=True), j, axis=1)
    hl, g = law(q)
    iterations = np.zeros(b, dtype=np.int64)
    energy = np.full(b, np.inf)
    mass = np.full(b, np.inf)
    active = np.arange(b)
    for _ in range(max_iter):
        if active.size == 0:
            break
        qa, hla, ga, ha = q[active], hl[active], g[active], head[active]
        # the step in correction form, on the residuals themselves, so that rounding stays
        # small near the solution (a pipe with almost no flow has a tiny dh/dQ)
        r_e = hla + (a12 @ ha.T).T + a10h0[active]                        # energy residual
        r_m = graph.junction_balance(qa) - d[active]                       # mass residual
        inv_g = 1.0 / ga
        dh = _schur_solve(graph, inv_g, r_m - graph.junction_balance(r_e * inv_g))
        qa = qa - (r_e + (a12 @ dh.T).T) * inv_g
        ha = ha + dh
        hla, ga = law(qa, active)
        q[active], hl[active], g[active], head[active] = qa, hla, ga, ha
        iterations[active] += 1
        energy[active] = np.abs(hla + (a12 @ ha.T).T + a10h0[active]).max(axis=1)
        mass[active] = np.abs(graph.junction_balance(qa) - d[active]).max(axis=1, initial=0.0)
        done = (energy[active] <= tol_head) & (mass[active] <= tol_flow)
        active = active[~done]
    converged = (energy <= tol_head) & (mass <= tol_flow)
    trans = (np.count_nonzero(law.transitional(q), axis=1) if hasattr(law, "transitional")
             else np.zeros(b, dtype=np.int64))
    return HydraulicState(flow=q, head=head, head_loss=hl, energy_residual=energy,
                          mass_residual=mass, converged=converged, iterations=iterations,
                          transitional=trans)
