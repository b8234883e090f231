"""Pumping stations along a long line (model layer): where to put boosters, and what it costs.

A long line (:mod:`pipeopt.profile`) is pumped by a head station at its start and up to N
booster stations at candidate points (sites the user gives, or the points of the profile). Each
station holds its discharge at the least head its own segment needs (the rule of
:mod:`pipeopt.profile`), so:

- the grade line of a segment, its pressures and hence the cheapest pipe class of each of its
  stretches depend on the segment only (its start and end);
- the head a station adds, ΔH_j = G_j − G_{j−1}, depends on its own segment and the one before,
  so a station's power, its capital (fixed + per kW and/or a power law of the installed power,
  one stage, bought again every ``life`` years, with maintenance and residual value through
  :func:`pipeopt.cashflow.station_stages`), its energy at each duty point's price and its demand
  charge on its own peak depend on three consecutive stations.

The life-cycle cost of a layout is therefore a sum of terms over consecutive pairs (pipe) and
triples (stations) of stations, and :func:`optimal_layouts` finds, by dynamic programming over
the candidate points with the state (previous station, current station), the layout with the
least present value for every number of boosters n = 0 … N. By Bellman's principle of
optimality this is the global minimum over all C(M, n) layouts of n boosters among M candidate
points, for the pipe and the hydraulics given (no layout is left out and no bound is used).
Work grows as M³ N per pipe.

:func:`evaluate_layouts` evaluates fixed layouts and classes exactly, for any number of samples
of the named inputs (:class:`~pipeopt.variations.Variations`), and returns the
:class:`~pipeopt.lifecycle.LifeCycle` arrays of a sizing study plus the grade lines.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

from ._arrays import last_axis_max, last_axis_sum
from .cashflow import CashFlows, Timeline, station_stages
from .economics import straight_line_residual
from .errors import InputError
from .fields import InputSection, number, quantities, quantity, whole
from .friction import GRAVITY
from .hydraulics import running_max
from .lifecycle import LifeCycle, Scenario
from .profile import cumulative, grade_lines, segment_heads, stretch_losses
from .pumpset import PumpSet
from .variations import Variations

__all__ = ["Boosters", "LineModel", "station_values", "optimal_layouts", "telescope",
           "evaluate_layouts", "MAX_POSITIONS"]

#: The most candidate booster points the dynamic programme takes.
MAX_POSITIONS = 120


@dataclass(frozen=True)
class Boosters(InputSection):
    """Booster stations a long line may have, and their costs (study file ``[boosters]``).

    Parameters
    ----------
    max_count : int
        N: the optimizer considers 0 … N boosters (0 to 10; default 1).
    sites : sequence of str or Quantity, optional
        Candidate chainages, e.g. ``["14.5 km", "26 km"]``; default: every point of the
        profile between the ends.
    fixed_cost : float
        Capital of a booster whatever its size [currency].
    cost_per_kw : float
        Capital per kW of installed power [currency/kW].
    cost_coefficient, cost_exponent : float, optional
        A power law a P^b of the installed power P [kW], added to the above.
    standby_fraction : float
        Installed power is the peak demand × (1 + s).
    life : int
        Years before a booster is bought again.
    maintenance : float
        Yearly maintenance as a fraction of its capital.
    suction_pressure_min : str or Quantity, optional
        Least gauge pressure at a booster's suction (beside the NPSH the pump requires and the
        line's least pressure), e.g. ``"0.5 bar"``.

    Examples
    --------
    >>> b = Boosters(2, fixed_cost=400000.0, cost_per_kw=800.0, standby_fraction=0.5)
    >>> float(b.capital(100.0))
    520000.0
    """

    SECTION = "boosters"
    max_count: int = whole(0, 10, default=1)
    sites: tuple = quantities("length", low=0.0, default=())
    fixed_cost: float = number(0.0, 1e10, default=0.0)
    cost_per_kw: float = number(0.0, 1e7, default=0.0)
    cost_coefficient: float | None = number(0.0, 1e9, low_open=True, default=None)
    cost_exponent: float | None = number(0.0, 2.0, low_open=True, default=None)
    standby_fraction: float = number(0.0, 10.0, default=0.0)
    life: int = whole(1, 200, default=20)
    maintenance: float = number(0.0, 1.0, default=0.0)
    suction_pressure_min: float | None = quantity("pressure", low=-1e5, high=1e8, default=None)

    def _check(self, path: str) -> None:
        if (self.cost_coefficient is None) != (self.cost_exponent is None):
            raise InputError(f"{path}.cost_exponent: give cost_coefficient and cost_exponent "
                             f"together")
        if self.max_count and not (self.fixed_cost or self.cost_per_kw
                                   or self.cost_coefficient):
            raise InputError(f"{path}: give a booster's cost: fixed_cost, cost_per_kw, or "
                             f"cost_coefficient and cost_exponent")
        if len(set(self.sites)) != len(self.sites):
            raise InputError(f"{path}.sites: each site may appear once; got "
                             f"{[f'{x / 1000:g} km' for x in self.sites]}")

    @property
    def stages(self) -> tuple[int, ...]:
        """One stage, built at year 0 (the interface of :func:`pipeopt.cashflow.station_stages`)."""
        return (0,)

    def installed_power(self, peak_power_kw: Any) -> Any:
        """Installed power [kW] for a peak electrical demand [kW]."""
        return np.asarray(peak_power_kw, dtype=float) * (1.0 + self.standby_fraction)

    def capital(self, peak_power_kw: Any) -> Any:
        """Capital [currency] of a booster for a peak demand [kW] (standby included)."""
        p = self.installed_power(peak_power_kw)
        out = self.fixed_cost + self.cost_per_kw * p
        if self.cost_coefficient is not None:
            out = out + self.cost_coefficient * p**self.cost_exponent
        return out

    def describe(self) -> str:
        parts = []
        if self.fixed_cost:
            parts.append(f"{self.fixed_cost:,.0f}")
        if self.cost_per_kw:
            parts.append(f"{self.cost_per_kw:,.0f} per kW")
        if self.cost_coefficient is not None:
            parts.append(f"{self.cost_coefficient:g} x kW^{self.cost_exponent:g}")
        return " + ".join(parts) or "no cost"


@dataclass
class LineModel:
    """A long line as arrays (SI), built by the study layer.

    Points i = 0 … P − 1, stretches s = 0 … P − 2 (between points s and s + 1), candidate pipes
    c = 0 … C − 1 (one pipe choice per section), classes j = 0 … J − 1 of each stretch's pipe in
    order of cost (padding classes are not ``usable``).

    Attributes
    ----------
    scenario : Scenario
        Fluid, friction method, duty, tariff, head-station cost, economics, carbon.
    pump : PumpSet
    boosters : Boosters or None
    chainage, ground : ndarray (P,)
        Chainage as given [m] and ground elevation [m].
    lengths : ndarray (P − 1,)
        Stretch lengths [m].
    sites : ndarray of int (M,)
        Points where a booster may stand.
    equipment : ndarray (P − 1,)
        Equipment coefficient at each stretch's start [s²/m⁵].
    cover : float
        Cover over the crown [m].
    head_in : float
        Head at the head station's suction [m].
    delivery : float
        Least head at the delivery [m].
    least, suction_least : ndarray (P,)
        Least gauge head on the line and at a booster's suction at each point [m].
    surge_allowance : float or None
        Surge head [m] (None: Joukowsky with each class's wave speed).
    bore, outside, cost, co2, pfa, pma, wave, minor_k : ndarray (C, P − 1, J)
        Per class of each stretch's pipe: bore [m], outside diameter [m], cost per metre of
        one line [currency/m], embodied CO2 [kg/m], PFA and PMA [Pa] at the service temperature,
        wave speed [m/s], local-loss coefficient of the stretch [-].
    rated, usable : ndarray of bool (C, P − 1, J)
        The class has a rating; the class exists and is not above its temperature limit.
    roughness, aging : ndarray (C, P − 1)
        New roughness [m] and aging rate [m/yr] of each stretch's material.
    """

    scenario: Scenario
    pump: PumpSet
    boosters: Boosters | None
    chainage: np.ndarray
    ground: np.ndarray
    lengths: np.ndarray
    sites: np.ndarray
    equipment: np.ndarray
    cover: float
    head_in: float
    delivery: float
    least: np.ndarray
    suction_least: np.ndarray
    surge_allowance: float | None
    bore: np.ndarray
    outside: np.ndarray
    cost: np.ndarray
    co2: np.ndarray
    pfa: np.ndarray
    pma: np.ndarray
    wave: np.ndarray
    minor_k: np.ndarray
    rated: np.ndarray
    usable: np.ndarray
    roughness: np.ndarray
    aging: np.ndarray

    @property
    def n_points(self) -> int:
        return self.chainage.size

    def pick(self, name: str, pipe: np.ndarray, classes: np.ndarray) -> np.ndarray:
        """(D, P − 1) values of ``name`` for designs of pipes ``pipe`` (D,) and classes
        ``classes`` (D, P − 1)."""
        arr = getattr(self, name)[pipe]
        return np.take_along_axis(arr, classes[..., None], axis=-1)[..., 0]

    def axis(self, pipe: np.ndarray) -> np.ndarray:
        """Pipe axis elevation at every point of pipes ``pipe`` (D, P) [m]: at a point where
        the size changes, the downstream pipe's."""
        od = self.outside[pipe, :, 0]                                        # (D, P - 1)
        od_pt = np.concatenate([od, od[:, -1:]], axis=1)
        return self.ground - self.cover - 0.5 * od_pt


# --------------------------------------------------------------------------------------------
# money of stations
# --------------------------------------------------------------------------------------------
def _weighted(x: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Σ_t x[s, i, t] w[s, t] for x (S_x, I, T) (T = 1: every year the same), w (S, N)."""
    if x.shape[-1] == 1:
        return x[..., 0] * w.sum(axis=1)[:, None]
    if x.shape[0] == 1:
        return np.einsum("it,st->si", x[0], w[:, : x.shape[-1]])
    return np.einsum("sit,st->si", x, w[:, : x.shape[-1]])


def station_values(dh: np.ndarray, flow: np.ndarray, s: Scenario, pump: PumpSet, cost: Any,
                   tl: Timeline, v: dict[str, np.ndarray]) -> dict[str, Any]:
    """Power, energy and present values of stations adding heads ``dh``.

    Parameters
    ----------
    dh : ndarray, shape (S_h, X, T, K)
        Head each station adds at each state [m] (none where not positive).
    flow : ndarray, shape (S_h, 1, T, K)
        Total flow [m³/s].
    s : Scenario
    pump : PumpSet
    cost : PumpStationCost, Boosters or None
        The stations' capital model (None: no capital).
    tl : Timeline
    v : dict
        The resolved named inputs (:meth:`pipeopt.lifecycle.Scenario.resolve`).

    Returns
    -------
    dict
        ``energy0``, ``priced0``, ``peak0`` (S_h, X, T) at η = 1 and the base hours [kWh],
        [kWh], [kW]; present values (S, X): ``energy`` (price and demand charge),
        ``carbon``, ``capital``, ``renewal``, ``maintenance``, ``residual``; ``stages`` (the
        :class:`~pipeopt.cashflow.StationStages` or None), ``outside`` (S_h, X): states outside
        the pump's preferred region.
    """
    terms = pump.power_terms(flow, dh)
    power = s.density * GRAVITY * flow * terms["head"] / terms["factor"]       # W
    hours = s.duty.hours_array
    ratios = s.duty.price_ratios(s.tariff.price)
    energy0 = last_axis_sum(power * hours) / 1000.0
    priced0 = energy0 if ratios is None else last_axis_sum(power * (hours * ratios)) / 1000.0
    peak0 = last_axis_max(power) / 1000.0
    inv_eta = 1.0 / v["efficiency"]
    e_scale = v["hours_factor"] * inv_eta
    price = s.tariff.price_by_year(tl.n_max, v["energy_price"], v["escalation"])
    run = tl.running[:, 1:]
    out: dict[str, Any] = {
        "energy0": energy0, "priced0": priced0, "peak0": peak0,
        "energy": (e_scale[:, None] * _weighted(priced0, price * run)
                   + (v["demand_charge"] * inv_eta)[:, None] * _weighted(peak0, run)),
        "carbon": e_scale[:, None] * s.grid_factor * s.carbon_price * _weighted(energy0, run),
        "outside": terms["outside"].any(axis=(-2, -1)), "stages": None}
    zero = np.zeros_like(out["energy"])
    out.update(capital=zero, renewal=zero, maintenance=zero, residual=zero)
    if cost is not None:
        st = station_stages(cost, peak0, tl, v["station_cost_factor"], scale=inv_eta)
        out.update(st.present_values(cost.maintenance))
        out["stages"] = st
    return out


def _pv_total(sv: dict[str, Any]) -> np.ndarray:
    return (sv["capital"] + sv["renewal"] + sv["maintenance"] - sv["residual"] + sv["energy"]
            + sv["carbon"])


def _states(s: Scenario, years: int, v: dict[str, np.ndarray], hydraulic: bool
            ) -> tuple[np.ndarray, np.ndarray]:
    """Total flow (S_h, T, K) and aging factor (S_h,) of the hydraulic samples."""
    keys = ("flow_factor", "growth", "aging_factor")
    hv = {k: (v[k] if hydraulic else v[k][:1]) for k in keys}
    m = s.duty.multipliers(years, growth=hv["growth"], flow_factor=hv["flow_factor"])
    return s.duty.flow_array[None, None, :] * np.atleast_2d(m)[:, :, None], hv["aging_factor"]


def _state_years(m: LineModel, n_years: int, growth: np.ndarray) -> int:
    """1 when every year has the same hydraulics, else every year."""
    return 1 if (not np.any(growth) and not np.any(m.aging)) else n_years


# --------------------------------------------------------------------------------------------
# the dynamic programme
# --------------------------------------------------------------------------------------------
def _line_heads(m: LineModel, pipe: np.ndarray, classes: np.ndarray, flow: np.ndarray,
                aging_factor: np.ndarray) -> dict[str, np.ndarray]:
    """Losses, cumulative losses and the heads r + F and e + F of pipes with given classes.

    Returns arrays (S_h, D, T, K, P) ``g``, ``end``, ``cum``; (S_h, D, T, K, P − 1) ``loss``,
    ``velocity`` and flags; (D, P) ``axis``.
    """
    s = m.scenario
    hyd = stretch_losses(s, m.lengths, m.pick("bore", pipe, classes),
                         m.roughness[pipe], m.aging[pipe], m.pick("minor_k", pipe, classes),
                         m.equipment, flow, s.parallel, aging_factor)
    cum = cumulative(hyd["loss"])
    z = m.axis(pipe)
    req = z + m.least
    end = z + m.suction_least
    end[:, -1] = np.maximum(req[:, -1], m.delivery)
    hyd.update(cum=cum, axis=z, g=req[None, :, None, None, :] + cum,
               end=end[None, :, None, None, :] + cum)
    return hyd


def _hold(m: LineModel, pipe: np.ndarray, pmax: np.ndarray, vmax: np.ndarray,
          stretches: slice = slice(None)) -> tuple[np.ndarray, np.ndarray]:
    """The cheapest class holding each stretch's highest pressure, and the excess where none
    does.

    ``pmax`` and ``vmax`` (D, Z) are the highest pressure [Pa] and velocity [m/s] of the
    ``stretches`` (Z of them) of pipes ``pipe`` (D,). Returns the class index (D, Z) (the most
    expensive usable one where none holds) and the excess [bar] over its PFA or PMA, plus 1
    (0 where a class holds).
    """
    rho_g = m.scenario.density * GRAVITY
    pfa, pma = m.pfa[pipe][:, stretches], m.pma[pipe][:, stretches]
    usable, rated = m.usable[pipe][:, stretches], m.rated[pipe][:, stretches]
    surge = (np.full(pfa.shape, m.surge_allowance) if m.surge_allowance is not None
             else m.wave[pipe][:, stretches] * vmax[..., None] / GRAVITY)
    mdp = pmax[..., None] + rho_g * surge
    holds = usable & (~rated | ((pmax[..., None] <= pfa) & (mdp <= pma)))
    any_ = holds.any(axis=-1)
    j = np.where(any_, np.argmax(holds, axis=-1),
                 np.maximum(usable.sum(axis=-1) - 1, 0))

    def take(a: np.ndarray) -> np.ndarray:
        return np.take_along_axis(a, j[..., None], axis=-1)[..., 0]

    over = np.maximum(pmax - take(pfa), take(mdp) - take(pma))
    excess = np.where(any_, 0.0, np.where(np.isfinite(over),
                                          np.maximum(over, 0.0) / 1e5 + 1.0, 1.0))
    return j, excess


def _pipe_weight(s: Scenario, tl: Timeline) -> float:
    """Present value of 1 of pipe capital: capital, maintenance, less the residual credit."""
    resid = float(straight_line_residual(tl.horizon[0], s.pipe_life))
    return float(1.0 + s.pipe_maintenance * tl.annuity[0] - resid * tl.end_factor[0])


def optimal_layouts(m: LineModel, classes0: np.ndarray) -> dict[str, np.ndarray]:
    """The least-life-cycle-cost layout of 0 … N boosters for every pipe, at the base inputs.

    Parameters
    ----------
    m : LineModel
    classes0 : ndarray of int, shape (C, P − 1)
        The class of each stretch whose bore the hydraulics use (its lightest, say); the
        classes laid are chosen per segment.

    Returns
    -------
    dict of ndarray
        ``stations`` (C, N + 1, N + 1): points of the head station and the boosters of the
        best layout with n boosters (padded with −1); ``cost`` (C, N + 1): its present value
        (inf when no layout has n boosters); ``violation`` (C, N + 1): True when even its best
        layout has a stretch no class holds.

    Notes
    -----
    Nodes are the head station (point 0), the M candidate points and the delivery. For every
    pair of nodes (a, b) the pipe of segment [a, b) is priced with the cheapest class of each
    stretch that holds the segment's highest pressure there; for every triple (p, a, b) the
    station at a is priced from its heads ΔH = G_ab − G_pa. V_n(a, b), the least cost of the
    line up to b with stations … p, a, b and n boosters, obeys

        V_n(a, b) = min_p [V_{n'}(p, a) + S(p, a, b)] + Pipe(a, b),  n' = n − [b is a booster],

    and the answer for n boosters is min_a V_n(a, delivery). A stretch that no class holds adds
    a penalty larger than any cost, so a layout that holds everywhere always wins.
    """
    s = m.scenario
    n_max = 0 if m.boosters is None else int(m.boosters.max_count)
    c_n, p_n = classes0.shape[0], m.n_points
    pipe = np.arange(c_n)
    v = s.resolve(None)
    tl = Timeline(s.discount_rate, s.horizon)
    t_eval = _state_years(m, tl.n_max, v["growth"])
    flow, af = _states(s, t_eval, v, hydraulic=False)
    h = _line_heads(m, pipe, classes0, flow, af)
    g, end, cum = h["g"][0], h["end"][0], h["cum"][0]                        # (C, T, K, P)
    z = h["axis"]
    vmax = h["velocity"][0].max(axis=(1, 2))                                  # (C, P - 1)
    nodes = np.concatenate([[0], m.sites, [p_n - 1]]).astype(int)
    big_m = nodes.size - 2                                                   # candidate sites
    rho_g = s.density * GRAVITY
    # Φ[y', y] = max over states of g_y' − F_y, in chunks of y' (no (T, K, P, P) array)
    phi = np.empty((c_n, p_n, p_n))
    per = max(1, int(4e6 // max(1, c_n * g.shape[1] * g.shape[2] * p_n)))
    for lo in range(0, p_n, per):  # a few chunks
        hi = min(lo + per, p_n)
        phi[:, lo:hi, :] = (g[..., lo:hi, None] - cum[..., None, :]).max(axis=(1, 2))
    phi_end = (end[..., nodes[1:], None] - cum[..., None, :]).max(axis=(1, 2))  # (C, M+1, P)
    g_pair = np.full((nodes.size - 1, nodes.size, c_n) + g.shape[1:3], np.nan)
    pipe_pv = np.full((nodes.size - 1, nodes.size, c_n), np.inf)
    violation = np.zeros((nodes.size - 1, nodes.size, c_n))
    weight = _pipe_weight(s, tl) * s.parallel
    cost_m = m.cost * weight + m.co2 * s.carbon_price * s.parallel          # (C, P-1, J)
    for a in range(nodes.size - 1):  # the nodes: an algorithm's stages (M + 1 of them)
        pa = nodes[a]
        cm = np.maximum.accumulate(g[..., pa:], axis=-1)                      # (C,T,K,P-pa)
        cphi = np.maximum.accumulate(phi[:, pa:, :], axis=1)                  # (C,P-pa,P)
        for b in range(a + 1, nodes.size):
            pb = nodes[b]
            g_pair[a, b] = np.maximum(cm[..., pb - 1 - pa], end[..., pb])
            hh = np.maximum(cphi[:, pb - 1 - pa, :], phi_end[:, b - 1, :])   # (C, P)
            ph = hh - z
            pmax = rho_g * np.maximum(ph[:, pa:pb], ph[:, pa + 1:pb + 1])    # (C, pb - pa)
            j, excess = _hold(m, pipe, pmax, vmax[:, pa:pb], slice(pa, pb))
            cst = np.take_along_axis(cost_m[:, pa:pb, :], j[..., None], axis=-1)[..., 0]
            pipe_pv[a, b] = (cst * m.lengths[pa:pb]).sum(axis=-1)
            violation[a, b] = excess.sum(axis=-1)
    # stations: the head station from each first segment; a booster from each triple
    head_dh = g_pair[0, 1:] - m.head_in                                       # (M+1, C, T, K)
    sv = station_values(np.moveaxis(head_dh, 0, 1).reshape((1, -1) + g.shape[1:3]), flow[:, None],
                        s, m.pump, s.pump_station, tl, v)
    head_pv = _pv_total(sv)[0].reshape(c_n, big_m + 1)                        # (C, M+1)
    booster_pv = {}
    for a in range(1, big_m + 1):  # each candidate site
        dh = g_pair[a, a + 1:][None, :] - g_pair[:a, a][:, None]             # (a, nb, C, T, K)
        shp = dh.shape
        flat = np.moveaxis(dh, 2, 0).reshape((1, -1) + g.shape[1:3])
        sv = station_values(flat, flow[:, None], s, m.pump, m.boosters, tl, v)
        booster_pv[a] = _pv_total(sv)[0].reshape(c_n, shp[0], shp[1])
    # penalty: more than any layout can cost
    finite = np.isfinite(pipe_pv)
    bound = (np.abs(pipe_pv[finite]).sum() + np.abs(head_pv).sum()
             + sum(np.abs(x).sum() for x in booster_pv.values()) + 1.0)
    big = 1e3 * bound
    edge = pipe_pv + big * violation                                          # (A, B, C)
    end_node = nodes.size - 1
    value = np.full((n_max + 1, nodes.size - 1, nodes.size, c_n), np.inf)
    back = np.zeros((n_max + 1, nodes.size - 1, nodes.size, c_n), dtype=int)
    for b in range(1, nodes.size):
        n_b = int(b < end_node)
        if n_b <= n_max:
            value[n_b, 0, b] = head_pv[:, b - 1] + edge[0, b]
    for a in range(1, big_m + 1):
        for n in range(1, n_max + 1):
            prev = value[n, :a, a]                                            # (a, C)
            cand = prev[:, None, :] + np.moveaxis(booster_pv[a], 0, -1)       # (a, nb, C)
            best = np.argmin(cand, axis=0)                                    # (nb, C)
            low = np.take_along_axis(cand, best[None], axis=0)[0]
            for k, b in enumerate(range(a + 1, nodes.size)):
                n_new = n + int(b < end_node)
                if n_new <= n_max:
                    value[n_new, a, b] = low[k] + edge[a, b]
                    back[n_new, a, b] = best[k]
    total = value[:, :, end_node, :]                                          # (N+1, A, C)
    last = np.argmin(total, axis=1)                                           # (N+1, C)
    cost = np.take_along_axis(total, last[:, None, :], axis=1)[:, 0, :]       # (N+1, C)
    stations = np.full((c_n, n_max + 1, n_max + 1), -1)
    bad = np.zeros((c_n, n_max + 1), dtype=bool)
    cols = np.arange(c_n)
    for n in range(n_max + 1):  # backtrack n steps for every pipe at once
        a, b, cnt = last[n].copy(), np.full(c_n, end_node), np.full(c_n, n)
        for j in range(n, -1, -1):
            stations[:, n, j] = nodes[a]
            bad[:, n] |= violation[a, b, cols] > 0
            if j:
                p = back[cnt, a, b, cols]
                cnt = cnt - (b < end_node)
                a, b = p, a
    feasible = np.isfinite(cost.T)
    stations[~feasible] = -1
    return {"stations": stations, "cost": np.where(feasible, cost.T, np.inf),
            "violation": bad & feasible}


#: The most numbers of one (samples, designs, years, duty points, stations, points) array of a
#: batch of hydraulic samples in :func:`evaluate_layouts`.
_BATCH_NUMBERS = 4e6


def _samples(variations: Variations, start: int, stop: int) -> Variations:
    """Samples ``start`` … ``stop`` − 1 of ``variations`` (the same year axis)."""
    from dataclasses import replace

    given = {k: np.asarray(x)[start:stop] for k, x in variations.given.items()}
    return replace(variations, **given)


def _joined(parts: list[tuple[LifeCycle, dict]]) -> tuple[LifeCycle, dict]:
    """Batches of samples joined along the sample axis (no yearly arrays)."""
    first_lc, first_extra = parts[0]
    lc = LifeCycle(**vars(first_lc))
    for name, value in vars(first_lc).items():
        if name not in ("replacement_years", "cash_flows") and value is not None:
            setattr(lc, name, np.concatenate([np.asarray(getattr(p[0], name))
                                              for p in parts]))
    extra = dict(first_extra)
    for name in ("stretch_pressure", "highest_pressure", "stretch_velocity", "design_velocity",
                 "station_peak_kw", "station_head_m", "pump_outside"):
        extra[name] = np.concatenate([np.asarray(p[1][name]) for p in parts])
    return lc, extra


# --------------------------------------------------------------------------------------------
# fixed layouts, exactly
# --------------------------------------------------------------------------------------------
def _segments(stations: np.ndarray, n_points: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Starts, ends and existence of each design's segments from its stations (D, J), padded
    with −1."""
    exists = stations >= 0
    st = np.where(exists, stations, n_points - 1)
    nxt = np.concatenate([st[:, 1:], np.full((st.shape[0], 1), n_points - 1)], axis=1)
    ends = np.where(exists, np.maximum(nxt, st + 1), n_points - 1)
    ends = np.minimum(ends, n_points - 1)
    return st, ends, exists


def _layout(m: LineModel, pipe: np.ndarray, classes: np.ndarray, stations: np.ndarray,
            flow: np.ndarray, aging_factor: np.ndarray) -> dict[str, np.ndarray]:
    """Grade lines, station heads and stretch pressures of fixed designs (any sample axis)."""
    h = _line_heads(m, pipe, classes, flow, aging_factor)
    st, ends, exists = _segments(stations, m.n_points)
    seg_g = segment_heads(h["g"], h["end"], st[:, None, None, :], ends[:, None, None, :])
    seg = np.where(exists[None, :, None, None, :], seg_g, 0.0)                # (S,D,T,K,J)
    before = np.concatenate([np.full(seg.shape[:-1] + (1,), m.head_in), seg[..., :-1]],
                            axis=-1)
    dh = np.where(exists[None, :, None, None, :], seg - before, 0.0)
    # grade_lines wants the design axis next to the last: (S_h, T, K, D, ·)
    dis, arr = grade_lines(seg.transpose(0, 2, 3, 1, 4), h["cum"].transpose(0, 2, 3, 1, 4),
                           np.where(exists, stations, 0), exists)
    dis, arr = dis.transpose(0, 3, 1, 2, 4), arr.transpose(0, 3, 1, 2, 4)
    z = h["axis"][None, :, None, None, :]
    rho_g = m.scenario.density * GRAVITY
    p_dis, p_arr = rho_g * (dis - z), rho_g * (arr - z)
    h.update(segment_g=seg, station_head=dh, discharge=dis, arrival=arr, exists=exists,
             pressure_start=p_dis[..., :-1], pressure_end=p_arr[..., 1:],
             pressure_high=np.maximum(p_dis, p_arr), pressure_low=np.minimum(p_dis, p_arr))
    return h


def telescope(m: LineModel, pipe: np.ndarray, stations: np.ndarray, classes: np.ndarray,
              max_rounds: int = 8) -> tuple[np.ndarray, np.ndarray, int]:
    """Class telescoping at fixed stations: each stretch the cheapest class holding its own
    highest pressure, with the hydraulics of the classes laid (a fixed point).

    Starting from ``classes`` (D, P − 1), the highest pressure of every stretch is computed with
    the bores of the classes laid, and each stretch is given the cheapest class that holds it;
    this repeats until the classes stay the same. A cycle (a heavier class's smaller bore
    raising the pressure that made it needed) is settled by the heavier of the two.

    Returns
    -------
    classes : ndarray (D, P − 1)
    excess : ndarray (D, P − 1)
        [bar] over the rating where no class holds (0 elsewhere).
    rounds : int
    """
    s = m.scenario
    v = s.resolve(None)
    tl = Timeline(s.discount_rate, s.horizon)
    flow, af = _states(s, _state_years(m, tl.n_max, v["growth"]), v, hydraulic=False)
    seen = [classes]
    excess = np.zeros(classes.shape)
    for rounds in range(1, max_rounds + 1):  # a handful of rounds
        lay = _layout(m, pipe, classes, stations, flow, af)
        pmax = np.maximum(lay["pressure_start"], lay["pressure_end"])[0].max(axis=(1, 2))
        vmax = lay["velocity"][0].max(axis=(1, 2))
        new, excess = _hold(m, pipe, pmax, vmax)
        if np.array_equal(new, classes):
            return classes, excess, rounds
        if any(np.array_equal(new, old) for old in seen):
            new = np.maximum(new, classes)
        seen.append(new)
        classes = new
    return classes, excess, max_rounds


def evaluate_layouts(m: LineModel, pipe: np.ndarray, classes: np.ndarray,
                     stations: np.ndarray, variations: Variations | None = None,
                     yearly: bool = True) -> tuple[LifeCycle, dict[str, Any]]:
    """Life-cycle arrays of fixed designs (pipe, classes, stations) for any samples.

    Parameters
    ----------
    m : LineModel
    pipe : ndarray of int (D,)
        The pipe of each design.
    classes : ndarray of int (D, P − 1)
        The class laid on each stretch.
    stations : ndarray of int (D, J)
        Points of each design's stations (head station first), padded with −1.
    variations : Variations, optional
        Per-sample named inputs; without them the arrays have no sample axis.
    yearly : bool
        Also build the yearly arrays and cash flows.

    Returns
    -------
    LifeCycle
        As :func:`pipeopt.lifecycle.evaluate` gives for a uniform line; the figures "at
        design" are those of the largest year-1 duty, velocities those of the fastest stretch,
        head loss the total loss along the line, pump head and power the sums over stations.
    dict
        ``highest_pressure`` (S, D) [Pa] (operating, anywhere), ``stretch_pressure`` (S, D,
        P − 1), ``stretch_velocity`` (S, D, P − 1) [m/s], ``station_peak_kw`` (S, D, J),
        ``station_head_m`` (S, D, J) (largest), ``pump_outside`` (D,), the base grade line
        envelopes (D, P) ``head_max``, ``head_min``, ``pressure_max``, ``pressure_min``.
    """
    s = m.scenario
    v = s.resolve(variations)
    tl = (Timeline(s.discount_rate, s.horizon) if variations is None
          else Timeline(v["discount_rate"], v["horizon"], variations.n_years))
    n_s, n_years = tl.size, tl.n_max
    last = tl.horizon - 1
    hyd_keys = ("flow_factor", "growth", "aging_factor")
    hydraulic = not all(np.ptp(v[k]) == 0 for k in hyd_keys)
    # every hydraulic sample has its own grade lines, (D, T, K, J, P) numbers each: evaluate
    # them a batch at a time (the same sums in the same order: results do not depend on it)
    per_sample = (pipe.size * n_years * s.duty.flow_array.size * stations.shape[1]
                  * m.n_points)
    batch = max(1, int(_BATCH_NUMBERS // max(per_sample, 1)))
    if hydraulic and not yearly and n_s > batch:
        parts = [evaluate_layouts(m, pipe, classes, stations, _samples(variations, a, a + batch),
                                  yearly=False) for a in range(0, n_s, batch)]
        return _joined(parts)
    t_eval = _state_years(m, n_years, v["growth"])
    flow, af = _states(s, t_eval, v, hydraulic)
    lay = _layout(m, pipe, classes, stations, flow, af)
    d_n, j_n = stations.shape
    k_design = int(np.argmax(s.duty.flow_array))
    s.density * GRAVITY
    exists = lay["exists"]
    # stations: head station (j = 0) and boosters (j >= 1), flattened over designs
    dh = lay["station_head"]                                                  # (S_h,D,T,K,J)
    s_h = dh.shape[0]
    head = station_values(dh[..., 0], flow[:, None], s, m.pump, s.pump_station, tl, v)
    keys = ("energy", "carbon", "capital", "renewal", "maintenance", "residual")
    pv = {k: head[k] for k in keys}
    peaks = [head["peak0"]]
    e0, pr0 = head["energy0"], head["priced0"]
    outside = head["outside"]
    booster = None
    if j_n > 1:
        flat = np.moveaxis(dh[..., 1:], -1, 2).reshape((s_h, d_n * (j_n - 1)) + dh.shape[2:4])
        booster = station_values(flat, flow[:, None], s, m.pump, m.boosters, tl, v)
        on = np.broadcast_to(exists[:, 1:], (d_n, j_n - 1)).reshape(-1).astype(float)
        for k in keys:
            pv[k] = pv[k] + (booster[k] * on).reshape(n_s, d_n, j_n - 1).sum(axis=-1)
        bpk = booster["peak0"].reshape(s_h, d_n, j_n - 1, -1) * on.reshape(1, d_n, -1, 1)
        peaks += [bpk[:, :, i] for i in range(j_n - 1)]
        e0 = e0 + (booster["energy0"].reshape(s_h, d_n, j_n - 1, -1)
                   * on.reshape(1, d_n, -1, 1)).sum(axis=2)
        pr0 = pr0 + (booster["priced0"].reshape(s_h, d_n, j_n - 1, -1)
                     * on.reshape(1, d_n, -1, 1)).sum(axis=2)
        outside = outside | (booster["outside"].reshape(s_h, d_n, j_n - 1)
                             & exists[None, :, 1:]).any(axis=-1)
    peak_st = np.stack(peaks, axis=2)                                        # (S_h,D,J,T)
    # pipe
    lengths = m.lengths
    cost_m = m.pick("cost", pipe, classes)
    capex0 = (cost_m * lengths).sum(axis=-1) * s.parallel                    # (D,)
    capex_pipe = capex0[None, :] * v["pipe_cost_factor"]                      # (S, D)
    co2 = (m.pick("co2", pipe, classes) * lengths).sum(axis=-1) * s.parallel
    embodied = np.broadcast_to(co2 * s.carbon_price, capex_pipe.shape)
    col = (slice(None), None)
    resid = capex_pipe * np.asarray(straight_line_residual(tl.horizon, s.pipe_life))[col]
    pv_maint = s.pipe_maintenance * capex_pipe * tl.annuity[col] + pv["maintenance"]
    pv_resid = resid * tl.end_factor[col] + pv["residual"]
    pv_carbon = pv["carbon"] + embodied
    pv_total = (capex_pipe + pv["capital"] + pv["energy"] + pv_maint + pv["renewal"]
                + pv_carbon - pv_resid)
    eac = pv_total * tl.crf[col]
    inv_eta = 1.0 / v["efficiency"]
    e_scale = v["hours_factor"] * inv_eta
    # capital of all stations (undiscounted) and installed power
    cap_head = (head["stages"].capital.sum(axis=-1) if head["stages"] is not None
                else np.zeros((n_s, d_n)))
    installed = (head["stages"].installed if head["stages"] is not None
                 else np.zeros((n_s, d_n)))
    if booster is not None and booster["stages"] is not None:
        bst = booster["stages"]
        on2 = exists[:, 1:].astype(float)
        cap_head = cap_head + (bst.capital.sum(axis=-1).reshape(n_s, d_n, -1) * on2).sum(-1)
        installed = installed + (bst.installed.reshape(n_s, d_n, -1) * on2).sum(-1)
    # hydraulic figures of the table
    vel = lay["velocity"]                                                    # (S_h,D,T,K,P-1)
    vel_design = vel[:, :, 0, k_design, :].max(axis=-1)
    fast = np.argmax(vel[:, :, 0, k_design, :], axis=-1)
    def pick_fast(a: np.ndarray) -> np.ndarray:  # the fastest stretch's figure
        return np.take_along_axis(a[:, :, 0, k_design, :], fast[..., None], axis=-1)[..., 0]

    loss_total = lay["cum"][..., -1]                                          # (S_h,D,T,K)
    pump_head = np.maximum(dh, 0.0).sum(axis=-1)                              # (S_h,D,T,K)
    def per_sample(x: np.ndarray) -> np.ndarray:
        return np.broadcast_to(x, (n_s,) + x.shape[1:])

    peak_total = peak_st.sum(axis=2)                                          # (S_h,D,T)
    p_stretch = np.maximum(lay["pressure_start"], lay["pressure_end"]).max(axis=3)  # (S_h,D,T,Z)
    p_high = running_max(np.moveaxis(p_stretch, 2, -1), last)                 # (S, D, Z)
    v_stretch = running_max(np.moveaxis(vel.max(axis=3), 2, -1), last)        # (S, D, Z)
    st_head = running_max(np.moveaxis(np.maximum(dh, 0.0).max(axis=3), 2, -1), last)
    st_peak = running_max(peak_st, last) * inv_eta[:, None, None]             # (S, D, J)
    zero = np.zeros_like(capex_pipe)
    energy = peak = energy_cost = carbon_cost = flows = None
    if yearly:
        full = ((lambda x: np.broadcast_to(x, x.shape[:2] + (n_years,))) if t_eval == 1
                else (lambda x: x))
        live = tl.live[:, None, 1:]
        price = s.tariff.price_by_year(n_years, v["energy_price"], v["escalation"])
        energy = full(e0) * e_scale[:, None, None] * live
        priced = full(pr0) * e_scale[:, None, None] * live
        # the demand charge of each station on its own peak: their sum
        peak = full(peak_total) * inv_eta[:, None, None] * live
        energy_cost = priced * price[:, None, :] + v["demand_charge"][:, None, None] * peak
        carbon_cost = energy * s.grid_factor * s.carbon_price

        def years_1_to_n(x: np.ndarray) -> np.ndarray:
            return np.concatenate([np.zeros(x.shape[:2] + (1,)), x], axis=-1)

        at_start = (tl.years == 0)[None, None, :]
        at_end = tl.years[None, None, :] == tl.horizon[:, None, None]
        rows = {"capital": 0.0, "renewal": 0.0, "maintenance": 0.0, "residual": 0.0}
        for sv, on in ((head, None), (booster, exists[:, 1:])):
            if sv is None or sv["stages"] is None:
                continue
            yr = sv["stages"].yearly(s.pump_station.maintenance if on is None
                                     else m.boosters.maintenance)
            for k in rows:
                x = yr[k]
                if on is not None:
                    x = (x.reshape((n_s, d_n, -1) + x.shape[2:])
                         * on.reshape((1, d_n, -1) + (1,) * (x.ndim - 2))).sum(axis=2)
                rows[k] = rows[k] + x
        resid_rows = rows["residual"] if np.ndim(rows["residual"]) else zero
        flows = CashFlows(tl, {
            "capital_pipe": capex_pipe[..., None] * at_start,
            "capital_station": rows["capital"],
            "station_renewal": rows["renewal"],
            "energy": years_1_to_n(energy_cost),
            "maintenance": (s.pipe_maintenance * capex_pipe[..., None] * tl.live[:, None, :]
                            + rows["maintenance"]),
            "carbon": years_1_to_n(carbon_cost) + embodied[..., None] * at_start,
            "residual": -(resid + resid_rows)[..., None] * at_end,
        })
    maintenance = s.pipe_maintenance * capex_pipe + (
        s.pump_station.maintenance * (head["stages"].capital.sum(axis=-1))
        if head["stages"] is not None else 0.0)
    if booster is not None and booster["stages"] is not None:
        maintenance = maintenance + m.boosters.maintenance * (
            booster["stages"].capital.sum(axis=-1).reshape(n_s, d_n, -1)
            * exists[:, 1:]).sum(axis=-1)
    lc = LifeCycle(
        velocity_design=per_sample(vel_design),
        reynolds_design=per_sample(pick_fast(lay["reynolds"])),
        friction_factor_design=per_sample(pick_fast(lay["friction_factor"])),
        head_loss_design=per_sample(loss_total[:, :, 0, k_design]),
        pump_head_design=per_sample(pump_head[:, :, 0, k_design]),
        pump_power_peak_year1=per_sample(peak_total[:, :, 0]) * inv_eta[:, None],
        energy_year1=per_sample(e0[:, :, 0]) * e_scale[:, None],
        velocity_max=v_stretch.max(axis=-1),
        pump_head_max=running_max(pump_head.max(axis=3), last),
        installed_power=installed, capex_pipe=capex_pipe, capex_pump_station=cap_head,
        pv_pump_station=pv["capital"], pv_energy=pv["energy"], pv_maintenance=pv_maint,
        pv_replacement=pv["renewal"], pv_residual=pv_resid, pv_carbon=pv_carbon,
        pv_total=pv_total, eac=eac, crf=tl.crf, energy_kwh=energy, peak_kw=peak,
        energy_cost=energy_cost, carbon_cost=carbon_cost, embodied_carbon_cost=embodied,
        maintenance=maintenance, replacement_years=np.zeros(0),
        transitional_points=per_sample(np.count_nonzero(lay["transitional"], axis=(2, 3, 4))),
        roughness_capped=per_sample(np.any(lay["capped"], axis=(2, 3, 4))),
        cash_flows=flows)
    rho_g = s.density * GRAVITY
    z = lay["axis"]
    base = {"axis": z,
            "pressure_max": lay["pressure_high"].max(axis=(2, 3))[0],
            "pressure_min": lay["pressure_low"].min(axis=(2, 3))[0]}
    for side in ("discharge", "arrival"):  # the two sides of a station (equal elsewhere)
        h = lay[side]
        base[f"{side}_max"] = h.max(axis=(2, 3))[0]
        base[f"{side}_min"] = h.min(axis=(2, 3))[0]
        base[f"{side}_pressure_max"] = rho_g * (base[f"{side}_max"] - z)
        base[f"{side}_pressure_min"] = rho_g * (base[f"{side}_min"] - z)
    extra = {"stretch_pressure": p_high, "highest_pressure": p_high.max(axis=-1),
             "stretch_velocity": v_stretch, "design_velocity": per_sample(vel[:, :, 0, k_design]),
             "station_peak_kw": st_peak,
             "station_head_m": st_head, "pump_outside": per_sample(outside), **base}
    if variations is None:
        for name, value in vars(lc).items():
            if name not in ("replacement_years", "cash_flows") and value is not None:
                setattr(lc, name, np.asarray(value)[0])
        for name in ("stretch_pressure", "highest_pressure", "stretch_velocity",
                     "design_velocity", "station_peak_kw", "station_head_m", "pump_outside"):
            extra[name] = np.asarray(extra[name])[0]
    return lc, extra
