"""Life-cycle cost of candidate lines (model layer): hydraulics by year and duty, then money.

This module is the arithmetic of a sizing study, written out once so that every number a study
prints can be re-derived by hand (the contributor guide states the model in words). It works
on SI floats and arrays: a :class:`Scenario` of scalars shared by every candidate, and arrays of
candidate properties (inner diameter, roughness, aging rate, cost per metre), shape (C,).

Year by year, t = 1 … N, duty point k:

- Q_k,t = Q_k (1 + g)^(t−1); per line q = Q_k,t / n_p; V = q / (π D²/4)
- ε_t = ε₀ + α (t − 1); Re = ρ V D / μ; f = friction_factor(Re, ε_t / D)
- h = (f L / D + ΣK) V² / (2 g); pump head H = z + h
- P_k,t = ρ g Q_k,t H / η [W] (all lines together)
- E_t = Σ_k P_k,t h_k / 1000 [kWh]; P̂_t = max_k P_k,t / 1000 [kW]
- C_E,t = E_t p (1 + e)^(t−1) + d P̂_t

Capital at t = 0: C_pipe = c(D) L n_p; C_ps = a P_inst^b with P_inst = max_t P̂_t (1 + s),
bought again at T_s, 2 T_s, … while t < N. Maintenance every year M = m_p C_pipe + m_s C_ps.
Residual at N, straight line: C_pipe max(0, 1 − N/T_p) + C_ps max(0, 1 − (N − t_last)/T_s).
PV = C_pipe + C_ps + Σ_t (C_E,t + M + carbon_t)/(1+i)^t + Σ_r C_ps/(1+i)^(t_r)
− residual/(1+i)^N; EAC = PV · CRF(i, N).

When flows do not grow and no candidate ages, every year has the same hydraulics, which are then
evaluated once and broadcast over the years.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from . import friction as fr
from .costs import EnergyTariff, PumpStationCost
from .duty import DutyProfile
from .economics import capital_recovery_factor
from .errors import InputError

__all__ = ["Scenario", "LifeCycle", "Variations", "VARIABLE_INPUTS", "evaluate",
           "pipe_hydraulics", "pumping", "parallel_split"]


@dataclass(frozen=True)
class Scenario:
    """Everything a life-cycle evaluation needs besides the candidates, in SI.

    Attributes
    ----------
    density : float
        Fluid density ρ [kg/m³].
    viscosity : float
        Dynamic viscosity μ [Pa·s].
    length : float
        Line length L [m].
    static_head : float
        Static head z [m] (lift plus residual head at delivery).
    minor_loss_k : float
        Sum of minor-loss coefficients ΣK [-], referred to the line velocity.
    parallel : int
        Identical lines in parallel sharing the flow, n_p.
    duty : DutyProfile
        Duty points and growth.
    efficiency : float
        Wire-to-water efficiency η [-].
    tariff : EnergyTariff
        Energy price, escalation and demand charge.
    pump_station : PumpStationCost or None
        Station capital model; None means no pump capital.
    discount_rate : float
        Real discount rate i [1/yr].
    horizon : int
        Analysis horizon N [yr].
    pipe_life : float
        Pipe service life T_p [yr].
    pipe_maintenance : float
        Pipe maintenance m_p as a fraction of pipe capital per year [1/yr].
    grid_factor : float
        Operational emission factor [kg CO2e/kWh] (0: no carbon cost).
    carbon_price : float
        Carbon price [currency/kg CO2e] (0: no carbon cost).
    friction_method : str
        A :data:`pipeopt.friction.METHODS` entry, or ``"constant"``.
    constant_friction_factor : float or None
        The Darcy factor used everywhere when ``friction_method == "constant"``.
    """

    density: float
    viscosity: float
    length: float
    static_head: float
    minor_loss_k: float
    parallel: int
    duty: DutyProfile
    efficiency: float
    tariff: EnergyTariff
    pump_station: PumpStationCost | None
    discount_rate: float
    horizon: int
    pipe_life: float
    pipe_maintenance: float = 0.0
    grid_factor: float = 0.0
    carbon_price: float = 0.0
    friction_method: str = "colebrook"
    constant_friction_factor: float | None = None

    def __post_init__(self) -> None:
        if not 0 < self.efficiency <= 1:
            raise InputError(f"pumping.efficiency must be in (0, 1]; got {self.efficiency!r}")
        if int(self.horizon) != self.horizon or self.horizon < 1:
            raise InputError(f"economics.horizon must be a whole number of years >= 1; got "
                             f"{self.horizon!r}")
        if int(self.parallel) != self.parallel or self.parallel < 1:
            raise InputError(f"line.parallel must be a whole number >= 1; got {self.parallel!r}")
        if self.friction_method == "constant":
            f = self.constant_friction_factor
            if f is None or not 0 < f < 1:
                raise InputError("hydraulics.friction_factor must be in (0, 1) with method "
                                 "'constant'")
        elif self.friction_method not in fr.METHODS:
            raise InputError(f"hydraulics.friction_method must be one of "
                             f"{', '.join(fr.METHODS)} or 'constant'; got "
                             f"{self.friction_method!r}")


@dataclass
class LifeCycle:
    """Results of :func:`evaluate`, arrays over candidates (C,) or candidates × years (C, N).

    With :class:`Variations`, every array has a leading sample axis: (S, C) and (S, C, N). The
    yearly arrays (``energy_kwh``, ``peak_kw``, ``energy_cost``, ``carbon_cost``) are None when
    ``evaluate`` was called with ``yearly=False``. Hydraulic figures "at design" are those of the
    largest duty flow in year 1. Money is in the study currency, present values at t = 0.
    """

    velocity_design: np.ndarray          # m/s, largest duty flow, year 1
    reynolds_design: np.ndarray
    friction_factor_design: np.ndarray
    head_loss_design: np.ndarray         # m
    pump_head_design: np.ndarray         # m
    pump_power_peak_year1: np.ndarray    # kW, max over duty points, year 1
    energy_year1: np.ndarray             # kWh
    velocity_max: np.ndarray             # m/s, largest flow of any year
    pump_head_max: np.ndarray            # m, any duty point, any year
    installed_power: np.ndarray          # kW, with standby
    capex_pipe: np.ndarray
    capex_pump_station: np.ndarray
    pv_energy: np.ndarray
    pv_maintenance: np.ndarray
    pv_replacement: np.ndarray
    pv_residual: np.ndarray              # a credit: subtracted in pv_total
    pv_carbon: np.ndarray
    pv_total: np.ndarray
    eac: np.ndarray
    energy_kwh: np.ndarray               # (C, N)
    peak_kw: np.ndarray                  # (C, N)
    energy_cost: np.ndarray              # (C, N)
    carbon_cost: np.ndarray              # (C, N) operational
    embodied_carbon_cost: np.ndarray     # (C,) at t = 0
    maintenance: np.ndarray              # (C,) per year
    replacement_years: np.ndarray        # years the station is bought again
    transitional_points: np.ndarray      # (C,) count of duty-year points with 2000 <= Re < 4000
    roughness_capped: np.ndarray         # (C,) bool: ε/D reached the 0.05 bound and was capped


def _friction(s: Scenario, re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    if s.friction_method == "constant":
        return np.full(np.broadcast_shapes(re.shape, rr.shape), s.constant_friction_factor)
    if s.friction_method == "colebrook" and re.min() >= fr.LAMINAR_LIMIT:
        # every point turbulent or transitional: the inputs are valid by construction here
        # (positive flows and bores, relative roughness capped to [0, 0.05]), so go straight
        # to the solver without the public function's checks
        re_b, rr_b = np.broadcast_arrays(re, rr)
        return fr._colebrook(re_b, rr_b)
    return np.asarray(fr.friction_factor(re, rr, method=s.friction_method, transition="ignore"))


def pipe_hydraulics(s: Scenario, diameter: np.ndarray, roughness: np.ndarray,
                    flow: np.ndarray, length: float | None = None,
                    minor_loss_k: float | None = None) -> dict[str, np.ndarray]:
    """Velocity, Reynolds number, friction factor and head loss of one line, broadcasting.

    Parameters
    ----------
    s : Scenario
        Fluid properties, friction method and (by default) length and minor losses.
    diameter, roughness : ndarray
        Inner diameter [m] and absolute roughness [m], broadcasting against ``flow``.
    flow : ndarray
        Flow in this line [m³/s], positive.
    length, minor_loss_k : float, optional
        Override the scenario's line length [m] and ΣK [-] (a duplicate line, a test section).

    Returns
    -------
    dict of ndarray
        ``velocity`` [m/s], ``reynolds``, ``friction_factor``, ``head_loss`` [m], and flags
        ``capped`` (ε/D above 0.05, computed at 0.05) and ``transitional`` (2000 <= Re < 4000).
    """
    length = s.length if length is None else length
    k = s.minor_loss_k if minor_loss_k is None else minor_loss_k
    d = np.asarray(diameter, dtype=float)
    v = np.asarray(flow, dtype=float) / (np.pi * d * d / 4.0)
    re = s.density * v * d / s.viscosity
    rr = np.asarray(roughness, dtype=float) / d
    capped = rr > fr.MAX_RELATIVE_ROUGHNESS
    f = _friction(s, re, np.minimum(rr, fr.MAX_RELATIVE_ROUGHNESS))
    h = (f * length / d + k) * v * v / (2.0 * fr.GRAVITY)
    return {"velocity": v, "reynolds": re, "friction_factor": f, "head_loss": h,
            "capped": np.broadcast_to(capped, h.shape),
            "transitional": (re >= fr.LAMINAR_LIMIT) & (re < fr.TURBULENT_LIMIT)}


def pumping(s: Scenario, head_loss: np.ndarray, flow_total: np.ndarray,
            efficiency: Any = None,
            hours_factor: Any = 1.0) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Pump head, yearly energy and peak demand from head losses over (..., years, duty points).

    H = z + h; P = ρ g Q H / η for the whole flow; E = Σ_k P h_k / 1000 [kWh];
    P̂ = max_k P / 1000 [kW]. ``efficiency`` (default the scenario's) and ``hours_factor``
    (multiplying every duty's hours) may be arrays broadcasting against ``head_loss``.

    Returns
    -------
    head : ndarray, shape (..., T, K)
        Pump head [m].
    energy : ndarray, shape (..., T)
        Electrical energy of each year [kWh].
    peak : ndarray, shape (..., T)
        Peak electrical demand of each year [kW].
    """
    head = s.static_head + head_loss
    eta = s.efficiency if efficiency is None else efficiency
    power_w = s.density * fr.GRAVITY * flow_total * head / eta
    energy = (power_w * (s.duty.hours_array * hours_factor)).sum(axis=-1) / 1000.0
    return head, energy, power_w.max(axis=-1) / 1000.0


#: Names of the inputs a :class:`Variations` may change, each an array over samples.
VARIABLE_INPUTS = ("energy_price", "escalation", "demand_charge", "discount_rate", "horizon",
                   "efficiency", "flow_factor", "hours_factor", "growth", "aging_factor",
                   "pipe_cost_factor", "station_cost_factor")


@dataclass(frozen=True)
class Variations:
    """Per-sample values of scenario inputs, for sensitivity and Monte Carlo (model layer).

    Each field is None (the scenario's own value) or an array over S samples. Factors multiply
    the scenario's value (``flow_factor`` every duty flow, ``hours_factor`` every duty's hours,
    ``aging_factor`` every candidate's aging rate, ``pipe_cost_factor`` the pipe capital, which
    may also be an (S, C) array, one factor per candidate); the others replace it.
    """

    energy_price: np.ndarray | None = None
    escalation: np.ndarray | None = None
    demand_charge: np.ndarray | None = None
    discount_rate: np.ndarray | None = None
    horizon: np.ndarray | None = None
    efficiency: np.ndarray | None = None
    flow_factor: np.ndarray | None = None
    hours_factor: np.ndarray | None = None
    growth: np.ndarray | None = None
    aging_factor: np.ndarray | None = None
    pipe_cost_factor: np.ndarray | None = None
    station_cost_factor: np.ndarray | None = None

    @property
    def size(self) -> int:
        """Number of samples S (1 when nothing varies)."""
        sizes = {np.shape(v)[0] for v in self.__dict__.values() if v is not None}
        if len(sizes) > 1:
            raise InputError(f"Variations: every input needs the same number of samples; got "
                             f"{sorted(sizes)}")
        return sizes.pop() if sizes else 1

    def resolved(self, s: Scenario) -> dict[str, np.ndarray]:
        """Every input as an (S,) array (pipe_cost_factor (S, 1) or (S, C)), defaults filled."""
        n = self.size
        base = {"energy_price": s.tariff.price, "escalation": s.tariff.escalation,
                "demand_charge": s.tariff.demand_charge, "discount_rate": s.discount_rate,
                "horizon": s.horizon, "efficiency": s.efficiency, "flow_factor": 1.0,
                "hours_factor": 1.0, "growth": s.duty.growth, "aging_factor": 1.0,
                "station_cost_factor": 1.0}
        out = {}
        for name, default in base.items():
            v = getattr(self, name)
            out[name] = np.full(n, float(default)) if v is None else np.asarray(v, dtype=float)
        pc = self.pipe_cost_factor
        out["pipe_cost_factor"] = (np.ones((n, 1)) if pc is None else
                                   np.asarray(pc, dtype=float).reshape(n, -1))
        h = out["horizon"]
        if np.any(h != np.round(h)) or np.any(h < 1):
            raise InputError("horizon must be a whole number of years >= 1 in every sample")
        if np.any(out["efficiency"] <= 0) or np.any(out["efficiency"] > 1):
            raise InputError("efficiency must be in (0, 1] in every sample")
        if np.any(out["discount_rate"] <= -1) or np.any(out["growth"] <= -1):
            raise InputError("discount_rate and growth must be greater than -1 in every sample")
        for name in ("flow_factor", "hours_factor", "energy_price"):
            if np.any(out[name] <= 0):
                raise InputError(f"{name} must be positive in every sample")
        return out


def _constants(s: Scenario, v: dict[str, np.ndarray]) -> dict[str, Any]:
    """Arrays over samples and years that do not depend on the candidates."""
    horizon = v["horizon"].astype(int)                                         # (S,)
    n_years = int(horizon.max())
    t = np.arange(1, n_years + 1)
    live = t[None, :] <= horizon[:, None]                                      # (S, N)
    log1p_i = np.log1p(v["discount_rate"])
    disc = np.exp(-t[None, :] * log1p_i[:, None]) * live                       # (S, N)
    out = {"v": v, "horizon": horizon, "live": live, "disc": disc,
           "disc_end": np.exp(-horizon * log1p_i), "annuity": disc.sum(axis=1),
           "price": v["energy_price"][:, None]
           * (1.0 + v["escalation"][:, None]) ** (t[None, :] - 1),
           "crf": np.asarray(capital_recovery_factor(v["discount_rate"], horizon)),
           "rep_factor": np.zeros(horizon.shape), "replacement_years": np.zeros(0),
           "station_residual_fraction": np.zeros(horizon.shape)}
    if s.pump_station is not None:
        life = s.pump_station.life
        # purchases at k T_s < N (k >= 1); t_last is the last of them, 0 if none
        k_max = np.ceil(horizon / life).astype(int) - 1                        # (S,)
        k = np.arange(1, int(k_max.max()) + 1)
        buys = k[None, :] <= k_max[:, None]
        out["rep_factor"] = (np.exp(-life * k[None, :] * log1p_i[:, None]) * buys).sum(axis=1)
        out["station_residual_fraction"] = np.maximum(0.0, 1.0 - (horizon - life * k_max) / life)
        out["replacement_years"] = life * np.arange(1, int(k_max[0]) + 1)
    return out


@functools.lru_cache(maxsize=64)
def _base_constants(s: Scenario) -> dict[str, Any]:
    """:func:`_constants` of the scenario itself (cached: studies re-evaluate one scenario)."""
    return _constants(s, Variations().resolved(s))


def evaluate(s: Scenario, diameter: np.ndarray, roughness: np.ndarray, aging_rate: np.ndarray,
             pipe_cost_per_metre: np.ndarray, embodied_co2_per_metre: np.ndarray | float = 0.0,
             years_mode: Literal["auto", "full"] = "auto",
             variations: Variations | None = None, eac_only: bool = False,
             yearly: bool = True) -> Any:
    """Hydraulics and life-cycle cost of every candidate, every duty point, every year.

    Parameters
    ----------
    s : Scenario
        The shared inputs, SI.
    diameter : ndarray, shape (C,)
        Inner diameter of each candidate [m].
    roughness : ndarray, shape (C,)
        New-pipe absolute roughness ε₀ [m].
    aging_rate : ndarray, shape (C,)
        Roughness growth α [m/yr].
    pipe_cost_per_metre : ndarray, shape (C,)
        Pipe capital c(D) per metre of one line [currency/m].
    embodied_co2_per_metre : ndarray or float, optional
        Embodied emissions of one line per metre [kg CO2e/m].
    years_mode : {"auto", "full"}
        ``"auto"`` evaluates the hydraulics once when no flow grows and nothing ages;
        ``"full"`` always evaluates every year (for checks).
    variations : Variations, optional
        Per-sample inputs. Without it the result arrays have shape (C,) and (C, N); with it,
        a leading sample axis: (S, C) and (S, C, N) (N the longest horizon; years beyond a
        sample's own horizon hold zeros).

    eac_only : bool, optional
        Return only the EAC array (the objective of the continuous optimum).
    yearly : bool, optional
        Also build the yearly arrays (energy, demand, costs: (S, C, N)); False leaves them
        None (Monte Carlo needs only the present values and the checks).

    Returns
    -------
    LifeCycle, or ndarray when ``eac_only``
    """
    d = np.atleast_1d(np.asarray(diameter, dtype=float))
    eps0 = np.asarray(roughness, dtype=float) * np.ones_like(d)
    alpha = np.asarray(aging_rate, dtype=float) * np.ones_like(d)
    cost_m = np.asarray(pipe_cost_per_metre, dtype=float) * np.ones_like(d)
    co2_m = np.asarray(embodied_co2_per_metre, dtype=float) * np.ones_like(d)
    if not d.min() > 0:
        raise InputError("candidate inner diameters must be positive")
    c = _base_constants(s) if variations is None else _constants(s, variations.resolved(s))
    v = c["v"]
    horizon = c["horizon"]                               # (S,)
    n_years = int(horizon.max())
    duty = s.duty
    k_design = int(np.argmax(duty.flow_array))
    col = (slice(None), None)                            # (S,) -> (S, 1)

    # --- hydraulics on (S_h, C, T, K); T = 1 when every year is the same --------------------
    # Flows, growth and aging change the hydraulics; when every sample shares them (S_h = 1)
    # the hydraulics are evaluated once: efficiency and hours only scale energy and demand.
    n_samples = horizon.size
    hyd_keys = ("flow_factor", "growth", "aging_factor")
    shared = all(np.ptp(v[k]) == 0 for k in hyd_keys)
    hv = {k: (v[k][:1] if shared else v[k]) for k in hyd_keys}
    same_every_year = (years_mode == "auto" and not np.any(hv["growth"]) and not np.any(alpha))
    t_eval = 1 if same_every_year else n_years
    years = np.arange(t_eval)
    growth = (1.0 + hv["growth"][:, None]) ** years[None, :]                   # (S_h, T)
    q_total = duty.flow_array[None, None, :] * (hv["flow_factor"][:, None] * growth)[:, :, None]
    eps_t = (eps0[None, :, None] + alpha[None, :, None] * hv["aging_factor"][:, None, None]
             * years[None, None, :])                                           # (S_h, C, T)
    hyd = pipe_hydraulics(s, d[None, :, None, None], eps_t[..., None],
                          q_total[:, None, :, :] / s.parallel)
    vel, re, f, h = hyd["velocity"], hyd["reynolds"], hyd["friction_factor"], hyd["head_loss"]
    capped = np.any(hyd["capped"], axis=(2, 3))
    transitional = np.count_nonzero(hyd["transitional"], axis=(2, 3))
    # energy and demand at eta = 1 and base hours, (S_h, C, T); each sample scales them
    head, energy0, peak0 = pumping(s, h, q_total[:, None, :, :], efficiency=1.0)
    inv_eta = 1.0 / v["efficiency"]                                             # (S,)
    e_scale = v["hours_factor"] * inv_eta                                      # (S,)

    def per_sample(x: np.ndarray) -> np.ndarray:
        return np.broadcast_to(x, (n_samples,) + x.shape[1:])

    def weighted(x0: np.ndarray, w: np.ndarray) -> np.ndarray:
        """Σ_t x0[s, c, t] w[s, t] for x0 of shape (S_h, C, T), T = 1 meaning every year."""
        if x0.shape[2] == 1:
            return x0[:, :, 0] * w.sum(axis=1)[:, None]
        # einsum's own loops (not BLAS): each sum is formed in the same order whatever the
        # number of samples, so results do not depend on how samples are chunked
        if x0.shape[0] == 1:
            return np.einsum("ct,st->sc", x0[0], w)
        return np.einsum("sct,st->sc", x0, w)

    # --- money: (S, C); yearly amounts are weighted sums, never (S, C, N) arrays ----------------
    live, disc, disc_end, price = c["live"], c["disc"], c["disc_end"], c["price"]
    pv_energy = (e_scale[:, None] * weighted(energy0, price * disc)
                 + (v["demand_charge"] * inv_eta)[:, None] * weighted(peak0, disc))
    carbon_rate = s.grid_factor * s.carbon_price
    pv_op_carbon = (e_scale[:, None] * carbon_rate * weighted(energy0, disc) if carbon_rate
                    else np.zeros_like(pv_energy))
    capex_pipe = cost_m[None, :] * v["pipe_cost_factor"] * s.length * s.parallel       # (S, C)
    embodied_cost = np.broadcast_to(co2_m * s.length * s.parallel * s.carbon_price,
                                    capex_pipe.shape)
    installed = np.zeros_like(capex_pipe)
    capex_ps = np.zeros_like(capex_pipe)
    residual_ps = np.zeros_like(capex_pipe)
    m_s = 0.0
    if s.pump_station is not None:
        ps = s.pump_station
        # the largest demand of the years within each sample's horizon
        running = np.maximum.accumulate(peak0, axis=2)                         # (S_h, C, T)
        last = np.minimum(horizon, running.shape[2]) - 1                       # (S,)
        rows = np.arange(n_samples) if running.shape[0] > 1 else np.zeros(n_samples, int)
        peak_max = running[rows, :, last] * inv_eta[:, None]                   # (S, C)
        installed = ps.installed_power(peak_max)
        capex_ps = ps.capital(peak_max) * v["station_cost_factor"][col]
        residual_ps = capex_ps * c["station_residual_fraction"][col]
        m_s = ps.maintenance
    maintenance = s.pipe_maintenance * capex_pipe + m_s * capex_ps                     # (S, C)
    pv_carbon = pv_op_carbon + embodied_cost
    pv_maintenance = maintenance * c["annuity"][col]
    pv_replacement = capex_ps * c["rep_factor"][col]
    residual = capex_pipe * np.maximum(0.0, 1.0 - horizon / s.pipe_life)[col] + residual_ps
    pv_residual = residual * disc_end[col]
    pv_total = (capex_pipe + capex_ps + pv_energy + pv_maintenance + pv_replacement + pv_carbon
                - pv_residual)
    eac = pv_total * c["crf"][col]
    if eac_only:
        return eac[0] if variations is None else eac

    # yearly amounts (S, C, N) for the result tables
    energy = peak = energy_cost = carbon_cost = None
    if yearly:
        full = (lambda x: np.broadcast_to(x, x.shape[:2] + (n_years,))) if same_every_year \
            else (lambda x: x)
        energy = full(energy0) * e_scale[:, None, None]
        peak = full(peak0) * inv_eta[:, None, None]
        energy_cost = (energy * price[:, None, :] + v["demand_charge"][:, None, None] * peak) \
            * live[:, None, :]
        carbon_cost = energy * carbon_rate * live[:, None, :]

    out = LifeCycle(
        velocity_design=per_sample(vel[:, :, 0, k_design]),
        reynolds_design=per_sample(re[:, :, 0, k_design]),
        friction_factor_design=per_sample(f[:, :, 0, k_design]),
        head_loss_design=per_sample(h[:, :, 0, k_design]),
        pump_head_design=per_sample(head[:, :, 0, k_design]),
        pump_power_peak_year1=peak0[:, :, 0] * inv_eta[:, None],
        energy_year1=energy0[:, :, 0] * e_scale[:, None],
        velocity_max=per_sample(vel.max(axis=(2, 3))),
        pump_head_max=per_sample(head.max(axis=(2, 3))), installed_power=installed,
        capex_pipe=capex_pipe,
        capex_pump_station=capex_ps, pv_energy=pv_energy, pv_maintenance=pv_maintenance,
        pv_replacement=pv_replacement, pv_residual=pv_residual, pv_carbon=pv_carbon,
        pv_total=pv_total, eac=eac, energy_kwh=energy, peak_kw=peak,
        energy_cost=energy_cost, carbon_cost=carbon_cost, embodied_carbon_cost=embodied_cost,
        maintenance=maintenance, replacement_years=c["replacement_years"],
        transitional_points=per_sample(transitional), roughness_capped=per_sample(capped),
    )
    if variations is None:  # a single scenario: drop the sample axis
        for name, value in vars(out).items():
            if name != "replacement_years" and value is not None:
                setattr(out, name, np.asarray(value)[0])
    return out


def parallel_split(s: Scenario, lines: list[dict], flow_total: np.ndarray,
                   tol: float = 1e-12, max_iter: int = 100) -> list[dict[str, np.ndarray]]:
    """Split a total flow between lines laid in parallel so that all carry the same head loss.

    Each line i has a resistance h_i = R_i q_i² with R_i = (f_i L_i / D_i + K_i) / (2 g A_i²);
    for fixed friction factors the split is q_i ∝ R_i^{−1/2}. The friction factors are then
    re-evaluated at the new flows and the split repeated until the head losses agree to ``tol``
    metres (the friction factor depends weakly on flow, so this converges in a few steps).

    Parameters
    ----------
    s : Scenario
        Fluid and friction method.
    lines : list of dict
        Each with ``diameter`` [m], ``roughness`` [m] (arrays broadcasting against
        ``flow_total``), ``length`` [m] and ``minor_loss_k`` [-].
    flow_total : ndarray
        Total flow [m³/s].

    Returns
    -------
    list of dict
        Per line, the :func:`pipe_hydraulics` arrays plus ``flow`` [m³/s].

    Raises
    ------
    InputError
        When the head losses do not agree within ``max_iter`` iterations.
    """
    q = np.asarray(flow_total, dtype=float)
    geo = []
    for line in lines:
        d = np.asarray(line["diameter"], dtype=float)
        geo.append((d, np.asarray(line["roughness"], dtype=float), float(line["length"]),
                    float(line["minor_loss_k"]), (np.pi * d * d / 4.0) ** 2))
    f = [np.full(np.broadcast_shapes(q.shape, g[0].shape), 0.02) for g in geo]
    for _ in range(max_iter):
        inv = [1.0 / np.sqrt((fi * L / d + k) / (2.0 * fr.GRAVITY * a2))
               for fi, (d, _, L, k, a2) in zip(f, geo, strict=True)]
        total = sum(inv)
        flows = [q * x / total for x in inv]
        hyd = [pipe_hydraulics(s, d, eps, qi, L, k)
               for qi, (d, eps, L, k, _) in zip(flows, geo, strict=True)]
        heads = [h["head_loss"] for h in hyd]
        spread = max(np.max(np.abs(h - heads[0])) for h in heads)
        f = [h["friction_factor"] for h in hyd]
        if spread <= tol:
            for h, qi in zip(hyd, flows, strict=True):
                h["flow"] = qi
            return hyd
    raise InputError(f"parallel_split: head losses still differ by {spread:.3g} m after "
                     f"{max_iter} iterations")
