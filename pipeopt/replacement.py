"""Economics of replacing each main of a register, in every year (model layer).

For every main at once (arrays over mains, no loop per main), the present value of keeping it
and of replacing it in each year of action a = 0 … N − 1, with the conventions of a single-main
upgrade study (:mod:`pipeopt.upgrade`):

- study years t = 1 … N from now; an action in year a spends its capital at time a and the new
  main serves from year a + 1; every cash flow is real and discounted to now with the factors
  of a :class:`pipeopt.cashflow.Timeline`;
- breaks of the existing main: the rate N0 e^{A t} integrated over each year
  (:func:`pipeopt.renewal.break_counts`) times the cost of a repair; after replacement a share
  ``break_factor`` of them continues (0 by default: a new main);
- energy of a pumped main (one duty: flow Q growing by g a year until the design year, held
  ``hours`` a year, :func:`pipeopt.duty.flow_multipliers`): the bore D and a roughness
  ε_t = ε_now + α (t − 1) before the action, the new bore and ε_new + α_new (t − a − 1) after
  it; velocity, Reynolds number, Colebrook–White friction factor and Darcy–Weisbach head loss
  plus minor losses (:func:`pipeopt.hydraulics.pipe_hydraulics`, as in an upgrade study);
  P = ρ g Q (z + h) / η; yearly cost E_t p (1 + e)^(t−1) + d P̂_t
  (:meth:`pipeopt.costs.EnergyTariff.yearly_cost`);
- maintenance of the new main, a fraction of its capital every year after the action;
- residual value of the new main at the horizon, straight line over its life:
  C max(0, 1 − (N − a) / T) (:func:`pipeopt.economics.straight_line_residual`).

NPV of replacing in year a = PV(keep) − PV(replace in a); the best year is the one of least PV
(greatest NPV); benefit–cost ratio = PV of the running-cost savings over PV of the net capital
(capital less its discounted residual), as in the upgrade study's summary.

Every quantity of a main depends on that main's inputs only, and every sum runs along the
year axis of that main, so the results do not depend on how mains are split into chunks or
partitions: evaluating a register whole, in chunks or on a cluster gives the same numbers,
bit for bit (on one machine with the same library versions).

References
----------
.. [1] U. Shamir, C. D. D. Howard, "An analytic approach to scheduling pipe replacement",
   J. AWWA 71(5), 248–258, 1979.
.. [2] C. F. Colebrook, "Turbulent flow in pipes, with particular reference to the transition
   region between the smooth and rough pipe laws", J. Inst. Civil Eng. 11(4), 133–156, 1939.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import ClassVar

import numpy as np

from . import friction as fr
from .cashflow import Timeline
from .costs import EnergyTariff
from .duty import flow_multipliers
from .economics import straight_line_residual
from .errors import InputError
from .hydraulics import pipe_hydraulics
from .renewal import break_counts

__all__ = ["RenewalScenario", "Mains", "MainsEconomics", "evaluate_mains"]

#: Elements of one (mains, action years, study years) block of the new main's energy: the
#: blocks of about 8 MB per array bound the memory of an evaluation whatever the register size.
BLOCK_ELEMENTS = 1 << 20


@dataclass(frozen=True)
class RenewalScenario:
    """Inputs shared by every main of a programme, in SI.

    Attributes
    ----------
    density : float
        Fluid density ρ [kg/m³].
    viscosity : float
        Dynamic viscosity μ [Pa·s].
    efficiency : float
        Wire-to-water efficiency of pumping η [-], 0 < η <= 1.
    tariff : EnergyTariff
        Energy price, its real escalation and the demand charge.
    discount_rate : float
        Real discount rate i [1/yr], 0 <= i <= 1.
    horizon : int
        Study years N [yr].
    break_cost : float
        Cost of repairing one break [currency].
    new_roughness : float
        Roughness of the new main [m].
    new_aging : float
        Roughness growth of the new main α_new [m/yr].
    life : float
        Life of the new main T [yr], for its straight-line residual value.
    maintenance : float
        Yearly maintenance of the new main as a fraction of its capital [1/yr].
    break_factor : float
        Share of the old main's breaks that continues after replacement [-] (0: none).
    minor_loss_k : float
        Sum of minor-loss coefficients of a pumped main ΣK [-].
    flow_growth : float
        Compound growth of every pumped flow g [1/yr].
    design_year : int, optional
        The pumped flows grow until this study year and then stay [yr].
    """

    #: Every main's friction factor is Colebrook–White's (for
    #: :func:`pipeopt.hydraulics.pipe_hydraulics`).
    friction_method: ClassVar[str] = "colebrook"
    constant_friction_factor: ClassVar[None] = None

    density: float
    viscosity: float
    efficiency: float
    tariff: EnergyTariff
    discount_rate: float
    horizon: int
    break_cost: float
    new_roughness: float
    new_aging: float = 0.0
    life: float = 80.0
    maintenance: float = 0.0
    break_factor: float = 0.0
    minor_loss_k: float = 0.0
    flow_growth: float = 0.0
    design_year: int | None = None

    def __post_init__(self) -> None:
        checks = [
            ("density", self.density > 0), ("viscosity", self.viscosity > 0),
            ("efficiency", 0 < self.efficiency <= 1),
            ("discount_rate", 0 <= self.discount_rate <= 1),
            ("horizon", int(self.horizon) == self.horizon and 1 <= self.horizon <= 200),
            ("break_cost", self.break_cost >= 0), ("new_roughness", self.new_roughness >= 0),
            ("new_aging", self.new_aging >= 0), ("life", self.life > 0),
            ("maintenance", 0 <= self.maintenance <= 1),
            ("break_factor", 0 <= self.break_factor <= 1),
            ("minor_loss_k", self.minor_loss_k >= 0),
            ("flow_growth", -0.5 <= self.flow_growth <= 0.5),
            ("design_year", self.design_year is None or (int(self.design_year)
                                                         == self.design_year >= 1)),
        ]
        for name, ok in checks:
            value = getattr(self, name)
            if not (ok and (value is None or math.isfinite(value))):
                raise InputError(f"{name} is out of range; got {value!r}")


@dataclass(frozen=True)
class Mains:
    """Per-main inputs, each an array over the M mains, in SI.

    Attributes
    ----------
    length : ndarray
        Length L [m], > 0.
    diameter : ndarray
        Inner diameter now D [m], > 0.
    roughness : ndarray
        Roughness now ε_now [m], >= 0.
    aging : ndarray
        Roughness growth of the existing main α [m/yr], >= 0.
    flow : ndarray
        Pumped flow Q in year 1 [m³/s]; 0 for a main that is not pumped (no energy).
    hours : ndarray
        Hours per year the flow is pumped [h/yr] (ignored where the flow is 0).
    static_head : ndarray
        Static head of the pumping [m] (ignored where the flow is 0).
    breaks_now : ndarray
        Break rate now N0 [1/yr], >= 0.
    break_growth : ndarray
        Break growth rate A [1/yr], |A| < 1.
    capital : ndarray
        Capital of replacing the main [currency], > 0.
    new_diameter : ndarray
        Inner diameter of the new main [m], > 0.
    """

    length: np.ndarray
    diameter: np.ndarray
    roughness: np.ndarray
    aging: np.ndarray
    flow: np.ndarray
    hours: np.ndarray
    static_head: np.ndarray
    breaks_now: np.ndarray
    break_growth: np.ndarray
    capital: np.ndarray
    new_diameter: np.ndarray

    def __post_init__(self) -> None:
        n = None
        for name in self.__dataclass_fields__:
            a = np.ascontiguousarray(np.asarray(getattr(self, name), dtype=float).reshape(-1))
            object.__setattr__(self, name, a)
            if n is not None and a.size != n:
                raise InputError(f"Mains: every array needs one value per main; {name} has "
                                 f"{a.size}, expected {n}")
            n = a.size
        pumped = self.flow > 0
        finite = {name: np.isfinite(getattr(self, name)) for name in self.__dataclass_fields__}
        rules = [
            ("length", finite["length"] & (self.length > 0)),
            ("diameter", finite["diameter"] & (self.diameter > 0)),
            ("roughness", finite["roughness"] & (self.roughness >= 0)),
            ("aging", finite["aging"] & (self.aging >= 0)),
            ("flow", finite["flow"] & (self.flow >= 0)),
            ("breaks_now", finite["breaks_now"] & (self.breaks_now >= 0)),
            ("break_growth", finite["break_growth"] & (np.abs(self.break_growth) < 1)),
            ("capital", finite["capital"] & (self.capital > 0)),
            ("new_diameter", finite["new_diameter"] & (self.new_diameter > 0)),
            # hours and static head matter only where the main is pumped
            ("hours", ~pumped | ((self.hours > 0) & (self.hours <= 8760))),
            ("static_head", ~pumped | finite["static_head"]),
        ]
        for name, ok in rules:
            if not np.all(ok):
                k = int(np.flatnonzero(~ok)[0])
                raise InputError(f"Mains.{name} is out of range at main {k}; got "
                                 f"{getattr(self, name)[k]!r}")

    @property
    def size(self) -> int:
        """Number of mains M."""
        return int(self.length.size)


@dataclass
class MainsEconomics:
    """Per-main results of :func:`evaluate_mains`: arrays over mains (M,) or (M, N).

    Money is in the study currency, present values at now (t = 0). Year indices are years of
    action a = 0 … N − 1 (0 = now).

    Attributes
    ----------
    pv_keep : ndarray (M,)
        PV of keeping the main: its breaks and (if pumped) its energy over the horizon.
    pv_replace : ndarray (M, N)
        PV of replacing it in each year of action.
    npv : ndarray (M, N)
        NPV of replacing in each year against keeping, pv_keep − pv_replace.
    best_year : ndarray (M,) of int
        Year of action of the least PV (it may still be worse than keeping: see ``npv_best``).
    npv_best : ndarray (M,)
        NPV at the best year.
    benefit_cost_ratio : ndarray (M,)
        At the best year: PV of running-cost savings over PV of net capital.
    pv_saving_breaks, pv_saving_energy, pv_maintenance_new : ndarray (M,)
        At the best year: PV of the breaks avoided, of the energy saved (negative when the new
        main costs more to pump through), and of the new main's maintenance.
    pv_net_capital : ndarray (M,)
        At the best year: PV of capital less the PV of its residual value.
    energy_kwh_year1 : ndarray (M,)
        Energy of pumping in year 1 through the existing main [kWh] (0 when not pumped).
    head_loss_year1 : ndarray (M,)
        Friction and minor head loss of the existing main in year 1 [m].
    velocity_year1 : ndarray (M,)
        Mean velocity in year 1 [m/s].
    roughness_capped : ndarray (M,) of bool
        The relative roughness of the existing main reached 0.05, the edge of the Moody chart,
        within the horizon, and was computed at 0.05 from then on.
    transitional : ndarray (M,) of bool
        Some year had 2000 <= Re < 4000 (the turbulent friction factor was used: conservative).
    """

    pv_keep: np.ndarray
    pv_replace: np.ndarray
    npv: np.ndarray
    best_year: np.ndarray
    npv_best: np.ndarray
    benefit_cost_ratio: np.ndarray
    pv_saving_breaks: np.ndarray
    pv_saving_energy: np.ndarray
    pv_maintenance_new: np.ndarray
    pv_net_capital: np.ndarray
    energy_kwh_year1: np.ndarray
    head_loss_year1: np.ndarray
    velocity_year1: np.ndarray
    roughness_capped: np.ndarray
    transitional: np.ndarray


def _hydraulics(s: RenewalScenario, flow: np.ndarray, diameter: np.ndarray,
                roughness: np.ndarray, length: np.ndarray) -> dict[str, np.ndarray]:
    """Head loss and pumping of one main per row, broadcasting; flows are positive."""
    return pipe_hydraulics(s, diameter, roughness, flow, length)


def _energy_cost(s: RenewalScenario, flow: np.ndarray, head_loss: np.ndarray,
                 static_head: np.ndarray, hours: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Yearly energy [kWh] and its cost (:meth:`~pipeopt.costs.EnergyTariff.yearly_cost`),
    years on the last axis."""
    power_w = s.density * fr.GRAVITY * flow * (static_head + head_loss) / s.efficiency
    energy = power_w * hours / 1000.0
    return energy, s.tariff.yearly_cost(energy, power_w / 1000.0)


def _suffix(prefix: np.ndarray, n: int) -> np.ndarray:
    """Σ_{t > a} from a prefix sum with a leading zero column: total − prefix[a], a < N."""
    return prefix[:, n:n + 1] - prefix[:, :n]


def evaluate_mains(s: RenewalScenario, mains: Mains) -> MainsEconomics:
    """PV of keeping each main and of replacing it in each year, NPV, best year, B/C.

    Parameters
    ----------
    s : RenewalScenario
        Inputs shared by every main.
    mains : Mains
        Per-main inputs (M mains).

    Returns
    -------
    MainsEconomics

    Notes
    -----
    The PV of replacing in year a is assembled from sums along each main's year axis:
    the keep cash flows of years t <= a (prefix sums), the capital at a, the new main's energy
    over t > a, the breaks that continue (``break_factor``) and the new main's maintenance over
    t > a (suffix sums), less the residual value at N. When the new main does not age its
    hydraulics depend on the year only and its energy over t > a is a suffix sum; otherwise
    its energy depends on both the year (flow growth) and its age t − a − 1, and is formed on
    (mains × action years × years) blocks of at most :data:`BLOCK_ELEMENTS`.

    Examples
    --------
    A main with 2 breaks a year now, growing 8 % a year, not pumped, 300 m long, replaced for
    600,000 (2,000 per metre):

    >>> s = RenewalScenario(998.0, 1.0e-3, 0.7, EnergyTariff(0.15), 0.04, 40, 6000.0, 1e-5)
    >>> m = Mains(length=[300.0], diameter=[0.2], roughness=[1e-3], aging=[0.0], flow=[0.0],
    ...           hours=[0.0], static_head=[0.0], breaks_now=[2.0], break_growth=[0.08],
    ...           capital=[600000.0], new_diameter=[0.2])
    >>> e = evaluate_mains(s, m)
    >>> int(e.best_year[0]), round(float(e.benefit_cost_ratio[0]), 2)
    (10, 3.18)
    """
    n = int(s.horizon)
    count = mains.size
    t = np.arange(1, n + 1)
    years = np.arange(n)                                     # years of action a
    timeline = Timeline(s.discount_rate, n)
    disc = timeline.factor[0]                                # (N+1,), t = 0 … N
    d = disc[1:]

    # breaks of the existing main, every year (M, N)
    breaks = (break_counts(1.0, mains.break_growth, n) * mains.breaks_now[:, None]
              * s.break_cost)
    zero = np.zeros((count, 1))
    pre_breaks = np.concatenate([zero, np.cumsum(breaks * d, axis=1)], axis=1)  # (M, N+1)

    # energy of the existing main, every year (M, N); zero where not pumped
    keep_energy = np.zeros((count, n))
    energy_year1 = np.zeros(count)
    head_loss_year1 = np.zeros(count)
    velocity_year1 = np.zeros(count)
    capped = np.zeros(count, dtype=bool)
    transitional = np.zeros(count, dtype=bool)
    new_energy_pv = np.zeros((count, n))                     # Σ_{t>a} new energy cost d_t
    pumped = np.flatnonzero(mains.flow > 0)
    growth = flow_multipliers(n, s.flow_growth, design_year=s.design_year)   # (N,)
    if pumped.size:
        q = mains.flow[pumped, None] * growth[None, :]       # (P, N)
        eps = mains.roughness[pumped, None] + mains.aging[pumped, None] * (t - 1)[None, :]
        length = mains.length[pumped, None]
        z = mains.static_head[pumped, None]
        hours = mains.hours[pumped, None]
        old = _hydraulics(s, q, mains.diameter[pumped, None], eps, length)
        energy, cost = _energy_cost(s, q, old["head_loss"], z, hours)
        keep_energy[pumped] = cost
        energy_year1[pumped] = energy[:, 0]
        head_loss_year1[pumped] = old["head_loss"][:, 0]
        velocity_year1[pumped] = old["velocity"][:, 0]
        capped[pumped] = old["capped"].any(axis=1)
        transitional[pumped] = old["transitional"].any(axis=1)
        d_new = mains.new_diameter[pumped, None]
        if s.new_aging == 0:
            # special case: the new main does not age, so its hydraulics depend on the year
            # only and its energy over t > a is a suffix sum
            new = _hydraulics(s, q, d_new, np.full((1, 1), s.new_roughness), length)
            _, new_cost = _energy_cost(s, q, new["head_loss"], z, hours)
            transitional[pumped] |= new["transitional"].any(axis=1)
            pre = np.concatenate([np.zeros((pumped.size, 1)),
                                  np.cumsum(new_cost * d, axis=1)], axis=1)
            new_energy_pv[pumped] = _suffix(pre, n)
        else:
            new_energy_pv[pumped] = _aging_new_energy(s, mains, pumped, q, d, transitional)
    pre_energy = np.concatenate([zero, np.cumsum(keep_energy * d, axis=1)], axis=1)

    capital = mains.capital[:, None]
    residual = np.asarray(straight_line_residual(n - years, s.life))  # (N,) share left at N
    # Σ_{t>a} d_t: present worth of 1 a year in the years after each year of action, (1, N)
    after = (timeline.after(years[None, :]) * timeline.factor[:, None, :]).sum(axis=-1)
    net_capital = capital * (disc[None, :n] - residual[None, :] * timeline.end_factor)  # (M, N)
    maintenance = s.maintenance * capital * after                                    # (M, N)
    breaks_after = _suffix(pre_breaks, n)                                            # (M, N)
    pv_replace = (pre_energy[:, :n] + pre_breaks[:, :n] + net_capital + new_energy_pv
                  + s.break_factor * breaks_after + maintenance)
    pv_keep = pre_energy[:, n] + pre_breaks[:, n]
    npv = pv_keep[:, None] - pv_replace

    best = np.argmin(pv_replace, axis=1)
    rows = np.arange(count)
    saving_breaks = (1.0 - s.break_factor) * breaks_after[rows, best]
    saving_energy = _suffix(pre_energy, n)[rows, best] - new_energy_pv[rows, best]
    upkeep = maintenance[rows, best]
    cap = net_capital[rows, best]
    # net capital > 0: capital > 0, discount rate >= 0 and a residual fraction below 1
    bc = (saving_breaks + saving_energy - upkeep) / cap
    return MainsEconomics(
        pv_keep=pv_keep, pv_replace=pv_replace, npv=npv, best_year=best,
        npv_best=npv[rows, best], benefit_cost_ratio=bc, pv_saving_breaks=saving_breaks,
        pv_saving_energy=saving_energy, pv_maintenance_new=upkeep, pv_net_capital=cap,
        energy_kwh_year1=energy_year1, head_loss_year1=head_loss_year1,
        velocity_year1=velocity_year1, roughness_capped=capped, transitional=transitional)


def _aging_new_energy(s: RenewalScenario, mains: Mains, pumped: np.ndarray, q: np.ndarray,
                      d: np.ndarray, transitional: np.ndarray) -> np.ndarray:
    """Σ_{t>a} of the new main's energy cost, discounted, when the new main ages: (P, N).

    The new main's roughness in year t after an action in year a is ε_new + α_new (t − a − 1);
    with the flow of year t, its energy is formed on blocks of (mains × action years × years).
    When flows do not grow the hydraulics depend on the age only and are solved once per age,
    then gathered; otherwise they are solved for every (action year, year) pair.
    """
    n = int(s.horizon)
    t = np.arange(1, n + 1)
    a = np.arange(n)
    after = t[None, :] > a[:, None]                                  # (A, N)
    age = np.maximum(t[None, :] - a[:, None] - 1, 0)                 # (A, N)
    weight = np.where(after, d[None, :], 0.0)                        # (A, N)
    out = np.empty((pumped.size, n))
    step = max(1, BLOCK_ELEMENTS // (n * n))
    for start in range(0, pumped.size, step):
        rows = pumped[start:start + step]
        qb = q[start:start + step]                                   # (B, N)
        length = mains.length[rows, None]
        z = mains.static_head[rows, None]
        hours = mains.hours[rows, None]
        d_new = mains.new_diameter[rows, None]
        if s.flow_growth == 0:
            # special case: constant flows; the hydraulics depend on the new main's age only
            eps_age = s.new_roughness + s.new_aging * np.arange(n)[None, :]     # (1, N) by age
            hyd = _hydraulics(s, qb, d_new, eps_age, length)
            loss = np.take(hyd["head_loss"], age, axis=1)                      # (B, A, N)
            trans = hyd["transitional"].any(axis=1)
        else:
            eps = s.new_roughness + s.new_aging * age                          # (A, N)
            hyd = _hydraulics(s, qb[:, None, :], d_new[:, :, None], eps[None, :, :],
                              length[:, :, None])
            loss = hyd["head_loss"]
            trans = (hyd["transitional"] & after[None]).any(axis=(1, 2))
        _, cost = _energy_cost(s, qb[:, None, :], loss, z[:, :, None], hours[:, :, None])
        out[start:start + step] = (cost * weight[None, :, :]).sum(axis=2)
        transitional[rows] |= trans
    return out
