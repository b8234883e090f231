"""Life-cycle cost of candidate lines (model layer): hydraulics by year and duty, then money.

This module is the arithmetic of a sizing study, written once so that every number a study
prints can be re-derived by hand (the contributor guide states the model in words). It works
on SI floats and arrays: a :class:`Scenario` of scalars shared by every candidate, and arrays of
candidate properties (inner diameter, roughness, aging rate, cost per metre), shape (C,). The
hydraulics come from :mod:`pipeopt.hydraulics`, the money from :mod:`pipeopt.cashflow`.

Year by year, t = 1 … N, duty point k:

- Q_k,t = m_t Q_k (growth until the design year, capped); per line q = Q_k,t / n_p;
  V = q / (π D²/4)
- ε_t = ε₀ + α (t − 1); Re = ρ V D / μ; f = friction_factor(Re, ε_t / D)
- h = (f L / D + ΣK) V² / (2 g); pump head H = z + h
- P_k,t = ρ g Q_k,t H / η [W] (all lines together)
- E_t = Σ_k P_k,t h_k / 1000 [kWh]; P̂_t = max_k P_k,t / 1000 [kW]
- C_E,t = E_t p (1 + e)^(t−1) + d P̂_t

Capital at t = 0: C_pipe = c(D) L n_p. The pump station is built in stages (one by default):
stage j, built in year b_j, brings it to the largest peak of the years before the next stage,
for a P^b of the increase times (1 + s)^b, and is bought again every T_s years while t < N.
Maintenance every year: m_p C_pipe + m_s × the capital of the stages in service. Residual at N,
straight line: C_pipe max(0, 1 − N/T_p) + each stage's max(0, 1 − (N − t_last)/T_s).
PV = Σ of every cash flow discounted at the real rate; EAC = PV · CRF(i, N).

With :class:`~pipeopt.variations.Variations`, every sample uses its own horizon N_s: for the
present values, for the station's sizing, renewals and residual, and for the feasibility
figures (the largest velocity and pump head of the years 1 … N_s).

When flows do not grow and no candidate ages, every year has the same hydraulics, which are then
evaluated once and broadcast over the years.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from . import friction as fr
from ._arrays import last_axis_max
from .cashflow import CashFlows, Timeline, station_stages
from .costs import EnergyTariff, PumpStationCost
from .duty import DutyProfile
from .economics import straight_line_residual
from .errors import InputError
from .hydraulics import candidate_years, parallel_split, pipe_hydraulics, pumping, running_max
from .variations import NamedInputs, Variations

__all__ = ["Scenario", "LifeCycle", "Variations", "evaluate", "pipe_hydraulics", "pumping",
           "parallel_split"]


@dataclass(frozen=True)
class Scenario(NamedInputs):
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
        Station capital model and stages; None means no pump capital.
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
    pump : PumpSet or None
        Efficiency by duty point or from a curve against flow (:mod:`pipeopt.pumpset`); None:
        the constant ``efficiency``.
    equipment_coefficient : float
        Fixed equipment at the station, head loss c Q² of the total flow [s²/m⁵].
    fittings : Fittings or None
        Fittings by count (:class:`pipeopt.losses.Fittings`), their ΣK at each candidate's bore
        added to ``minor_loss_k``.

    With time-of-use prices (``duty.prices``), each duty point's energy is priced at its own
    price; the named input ``energy_price`` scales every one in proportion.
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
    pump: Any = None
    equipment_coefficient: float = 0.0
    fittings: Any = None

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
    """Results of :func:`evaluate`, arrays over candidates (C,) or candidates × years.

    With :class:`Variations`, every array has a leading sample axis: (S, C). Hydraulic figures
    "at design" are those of the largest duty flow in year 1; the largest velocity and pump head
    are those of the years within the sample's own horizon. Money is in the study currency,
    present values at t = 0. The yearly arrays (``energy_kwh``, ``peak_kw``, ``energy_cost``,
    ``carbon_cost``: (C, N), years 1 … N) and ``cash_flows`` are None when ``evaluate`` was
    called with ``yearly=False``.
    """

    velocity_design: np.ndarray          # m/s, largest duty flow, year 1
    reynolds_design: np.ndarray
    friction_factor_design: np.ndarray
    head_loss_design: np.ndarray         # m
    pump_head_design: np.ndarray         # m
    pump_power_peak_year1: np.ndarray    # kW electrical, max over duty points, year 1
    energy_year1: np.ndarray             # kWh
    velocity_max: np.ndarray             # m/s, largest flow of the years 1 … N
    pump_head_max: np.ndarray            # m, any duty point, years 1 … N
    installed_power: np.ndarray          # kW, last stage, with standby
    capex_pipe: np.ndarray
    capex_pump_station: np.ndarray       # every stage's capital, undiscounted
    pv_pump_station: np.ndarray          # the stages' first purchases, discounted
    pv_energy: np.ndarray
    pv_maintenance: np.ndarray
    pv_replacement: np.ndarray
    pv_residual: np.ndarray              # a credit: subtracted in pv_total
    pv_carbon: np.ndarray
    pv_total: np.ndarray
    eac: np.ndarray
    crf: np.ndarray                      # capital recovery factor of the sample(s)
    energy_kwh: np.ndarray | None        # (C, N)
    peak_kw: np.ndarray | None           # (C, N)
    energy_cost: np.ndarray | None       # (C, N)
    carbon_cost: np.ndarray | None       # (C, N) operational
    embodied_carbon_cost: np.ndarray     # (C,) at t = 0
    maintenance: np.ndarray              # (C,) per year once every stage is in service
    replacement_years: np.ndarray        # years a station stage is bought again (sample 0)
    transitional_points: np.ndarray      # (C,) count of duty-year points with 2000 <= Re < 4000
    roughness_capped: np.ndarray         # (C,) bool: ε/D reached the 0.05 bound and was capped
    cash_flows: CashFlows | None = None  # yearly rows t = 0 … N, reconciling to pv_total

    def take(self, sample: int) -> LifeCycle:
        """The arrays of one sample (the sample axis dropped; cash flows of that sample)."""
        out = LifeCycle(**vars(self))
        for name, value in vars(self).items():
            if name not in ("replacement_years", "cash_flows") and value is not None:
                setattr(out, name, np.asarray(value)[sample])
        if self.cash_flows is not None:
            out.cash_flows = self.cash_flows.sample(sample)
        return out


def _weighted(x0: np.ndarray, w: np.ndarray) -> np.ndarray:
    """Σ_t x0[s, c, t] w[s, t] for x0 of shape (S_h, C, T), T = 1 meaning every year.

    einsum's own loops (not BLAS): each sum is formed in the same order whatever the number of
    samples, so results do not depend on how samples are chunked.
    """
    if x0.shape[2] == 1:
        return x0[:, :, 0] * w.sum(axis=1)[:, None]
    if x0.shape[0] == 1:
        return np.einsum("ct,st->sc", x0[0], w)
    return np.einsum("sct,st->sc", x0, w)


@functools.lru_cache(maxsize=64)
def _base_timeline(rate: float, horizon: float, n_years: int | None = None) -> Timeline:
    """The timeline of a single scenario (cached: studies, what-ifs and the continuous optimum
    evaluate one scenario again and again)."""
    return Timeline(rate, horizon, n_years)


def _direct_hydraulics(s: Scenario, d: np.ndarray, eps0: np.ndarray, alpha: np.ndarray,
                       v: dict, tl: Timeline, years_mode: str,
                       weights: dict[str, np.ndarray]) -> dict[str, Any]:
    """Hydraulics of every candidate, year and duty point solved directly, and the sums the
    money needs (the reference path).

    Arrays over hydraulic samples S_h (1 when every sample shares the flows, growth and aging),
    candidates C, years T (1 when every year is the same) and duty points K. Returns the design
    figures (S_h, C), the largest velocity and pump head within each sample's horizon (S, C),
    the weighted sums of energy and peak demand at η = 1 (S, C), and the yearly energy and peak
    (S_h, C, T) for the cash flows and the station.
    """
    hyd_keys = ("flow_factor", "growth", "aging_factor")
    shared = all(np.ptp(v[k]) == 0 for k in hyd_keys)
    hv = {k: (v[k][:1] if shared else v[k]) for k in hyd_keys}
    same_every_year = (years_mode == "auto" and not np.any(hv["growth"]) and not np.any(alpha))
    t_eval = 1 if same_every_year else tl.n_max
    m = s.duty.multipliers(t_eval, growth=hv["growth"], flow_factor=hv["flow_factor"])
    hyd = candidate_years(s, d, eps0, alpha, m, hv["aging_factor"])
    k = int(np.argmax(s.duty.flow_array))
    energy0, peak0 = hyd["energy"], hyd["peak"]
    priced0 = hyd.get("energy_priced", energy0)   # time of use: energy x price ratio
    last = tl.horizon - 1
    return {
        "velocity_design": hyd["velocity"][:, :, 0, k],
        "reynolds_design": hyd["reynolds"][:, :, 0, k],
        "friction_factor_design": hyd["friction_factor"][:, :, 0, k],
        "head_loss_design": hyd["head_loss"][:, :, 0, k],
        "pump_head_design": hyd["pump_head"][:, :, 0, k],
        "peak_year1": peak0[:, :, 0], "energy_year1": energy0[:, :, 0],
        "velocity_max": running_max(last_axis_max(hyd["velocity"]), last),
        "pump_head_max": running_max(last_axis_max(hyd["pump_head"]), last),
        "energy_price": _weighted(priced0, weights["price"]),
        "energy_run": _weighted(energy0, weights["run"]),
        "peak_run": _weighted(peak0, weights["run"]),
        "energy": energy0, "peak": peak0, "priced": priced0,
        "capped": np.any(hyd["capped"], axis=(2, 3)),
        "transitional": np.count_nonzero(hyd["transitional"], axis=(2, 3)),
    }


#: Samples evaluated together in a matrix product of the series path. Results of a sample
#: depend only on its block, so a batch in chunks that are multiples of BLOCK (counted from its
#: first sample) gives the same bits whatever the chunking.
BLOCK = 256


def _series_applies(s: Scenario, v: dict) -> bool:
    """Whether the friction-series path holds for a batch whose flows vary by sample: flows
    that never fall with the years (so the largest velocity, head and demand of a sample's
    horizon are those of its last year), shared aging, and a non-negative static head (the
    largest duty point is then the largest demand); a plain line (no pump curve, fittings by
    count, fixed equipment or time-of-use prices: those go the direct way)."""
    plain = (getattr(s, "pump", None) is None and getattr(s, "fittings", None) is None
             and not getattr(s, "equipment_coefficient", 0.0)
             and s.duty.price_ratios(s.tariff.price) is None)
    return (plain and np.ptp(v["aging_factor"]) == 0 and bool(np.all(v["growth"] >= 0))
            and s.static_head >= 0)


@functools.lru_cache(maxsize=8)
def _cached_series(s: Scenario, re0: bytes, rr: bytes, shape: tuple, lo: bytes,
                   hi: bytes) -> Any:
    """The friction series of a batch (fitted once; every chunk of the batch reuses it)."""
    from .surrogate import friction_series

    c, k, t = shape
    return friction_series(s, np.frombuffer(re0).reshape(c, k), np.frombuffer(rr).reshape(c, t),
                           np.frombuffer(lo), np.frombuffer(hi))


def _series_hydraulics(s: Scenario, d: np.ndarray, eps0: np.ndarray, alpha: np.ndarray,
                       v: dict, tl: Timeline, m_range: tuple,
                       weights: dict[str, np.ndarray]) -> dict[str, Any]:
    """The sums the money needs, by Chebyshev series of the friction factor in ln m.

    f(Re0[c, k] m, ε_t/D) = Σ_j a_j[c, t, k] T_j(x[s, t]) (:mod:`pipeopt.surrogate`), so the
    energy of every sample, candidate and year, summed over duty points and weighted over the
    years, is a matrix product of the basis (S, T·J) with coefficients (T·J, C); the largest
    velocity, head and demand of a horizon are those of its last year (flows that never fall).
    Candidates whose series misses its error bound are solved directly.
    """
    from .cashflow import stage_last_years

    duty = s.duty
    q, hrs = duty.flow_array, duty.hours_array                                    # (K,)
    kmax = int(np.argmax(q))
    n_t = tl.n_max
    area = np.pi * d * d / 4.0
    v0 = (q[None, :] / s.parallel) / area[:, None]                                # (C, K)
    re0 = s.density * v0 * d[:, None] / s.viscosity
    years = np.arange(n_t)
    rr_raw = (eps0[:, None] + alpha[:, None] * float(v["aging_factor"][0]) * years) / d[:, None]
    capped = np.any(rr_raw > fr.MAX_RELATIVE_ROUGHNESS, axis=1)
    rr = np.minimum(rr_raw, fr.MAX_RELATIVE_ROUGHNESS)
    lo, hi = (np.ascontiguousarray(np.asarray(x, dtype=float)[:n_t]) for x in m_range)
    series = _cached_series(s, np.ascontiguousarray(re0).tobytes(),
                            np.ascontiguousarray(rr).tobytes(), (d.size, q.size, n_t),
                            lo.tobytes(), hi.tobytes())
    a = series.coefficients                                                       # (C,T,K,J)
    m = duty.multipliers(n_t, growth=v["growth"], flow_factor=v["flow_factor"])   # (S, T)
    basis = series.basis(m)                                                       # (S,T,J)
    g = fr.GRAVITY
    rg = s.density * g / 1000.0
    c2 = v0 * v0 / (2.0 * g)                                                      # (C, K)
    l_d = s.length / d
    w_total = float(np.sum(q * hrs))
    g_c = s.minor_loss_k * (c2 * (q * hrs)[None, :]).sum(axis=1)                  # (C,)
    b_e = l_d[:, None, None] * np.einsum("ck,ctkj->ctj", c2 * (q * hrs)[None, :], a)
    a_p = a[:, :, kmax, :]                                                        # (C,T,J)
    ap0 = s.minor_loss_k * c2[:, kmax]
    ap1 = l_d * c2[:, kmax]
    m3 = m**3

    def contract(w: np.ndarray, coef: np.ndarray) -> np.ndarray:
        """Σ_{t,j} basis[s,t,j] m³[s,t] w[s,t] coef[c,t,j], in blocks of BLOCK samples."""
        u = (basis * (m3 * w)[:, :, None]).reshape(m.shape[0], -1)
        flat = coef.reshape(coef.shape[0], -1).T
        out = np.empty((m.shape[0], coef.shape[0]))
        for start in range(0, m.shape[0], BLOCK):
            out[start:start + BLOCK] = u[start:start + BLOCK] @ flat
        return out

    def energy_sum(w: np.ndarray) -> np.ndarray:   # Σ_t E0[s,c,t] w[s,t] at η = 1
        return rg * (s.static_head * w_total * (m * w).sum(axis=1)[:, None]
                     + g_c[None, :] * (m3 * w).sum(axis=1)[:, None] + contract(w, b_e))

    run = weights["run"]
    zero = np.zeros((m.shape[0], d.size))
    # the sums a study does not need are not formed (no demand charge, no carbon price)
    peak_run = (rg * q[kmax] * (s.static_head * (m * run).sum(axis=1)[:, None]
                                + ap0[None, :] * (m3 * run).sum(axis=1)[:, None]
                                + ap1[None, :] * contract(run, a_p))
                if np.any(v["demand_charge"]) else zero)

    def at_year(y: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Friction factor (largest duty), multiplier and head of each sample's year y.

        One contraction per distinct year (einsum: the same sums whatever the samples)."""
        f = np.empty((y.size, d.size))
        for year in np.unique(y):
            rows = np.flatnonzero(y == year)
            f[rows] = np.einsum("sj,cj->sc", basis[rows, year], a_p[:, year])
        my = m[np.arange(y.size), y][:, None]
        return f, my, s.static_head + my * my * (ap0[None, :] + ap1[None, :] * f)

    last = tl.horizon - 1
    _, m_last, head_last = at_year(last)
    f0, m0, head0 = at_year(np.zeros(last.size, dtype=int))
    out = {
        "velocity_design": v0[None, :, kmax] * m0,
        "reynolds_design": re0[None, :, kmax] * m0,
        "friction_factor_design": f0,
        "head_loss_design": head0 - s.static_head, "pump_head_design": head0,
        "peak_year1": rg * q[kmax] * m0 * head0,
        "energy_year1": rg * m0 * (s.static_head * w_total + m0 * m0 * (
            g_c[None, :] + np.einsum("sj,cj->sc", basis[:, 0], b_e[:, 0]))),
        "velocity_max": v0[None, :, kmax] * m_last, "pump_head_max": head_last,
        "energy_price": energy_sum(weights["price"]),
        "energy_run": energy_sum(run) if weights.get("carbon") else zero,
        "peak_run": peak_run,
        "capped": np.broadcast_to(capped, (m.shape[0], d.size)),
        "transitional": np.zeros((m.shape[0], d.size), dtype=int),
    }
    if s.pump_station is not None:
        ends = stage_last_years(s.pump_station, tl)                              # (S, J)
        stage = []
        for j in range(ends.shape[1]):
            _, m_j, head_j = at_year(ends[:, j])
            stage.append(rg * q[kmax] * m_j * head_j)
        out["stage_peaks"] = np.stack(stage, axis=-1)
    bad = ~series.accurate
    if np.any(bad):  # candidates whose series misses its bound: solved directly
        exact = _direct_hydraulics(s, d[bad], eps0[bad], alpha[bad], v, tl, "auto", weights)
        for key, value in out.items():
            if key in exact and np.ndim(value) == 2:
                value = np.array(value)
                value[:, bad] = exact[key]
                out[key] = value
        if "stage_peaks" in out:
            peaks = np.stack([running_max(exact["peak"], ends[:, j])
                              for j in range(ends.shape[1])], axis=-1)
            out["stage_peaks"][:, bad] = peaks
    return out


def evaluate(s: Scenario, diameter: Any, roughness: Any, aging_rate: Any,
             pipe_cost_per_metre: Any, embodied_co2_per_metre: Any = 0.0,
             years_mode: Literal["auto", "full"] = "auto",
             variations: Variations | None = None, eac_only: bool = False,
             yearly: bool = True) -> Any:
    """Hydraulics and life-cycle cost of every candidate, every duty point, every year.

    Parameters
    ----------
    s : Scenario
        The shared inputs, SI.
    diameter : array_like, shape (C,)
        Inner diameter of each candidate [m].
    roughness : array_like, shape (C,)
        New-pipe absolute roughness ε₀ [m].
    aging_rate : array_like, shape (C,)
        Roughness growth α [m/yr].
    pipe_cost_per_metre : array_like, shape (C,)
        Pipe capital c(D) per metre of one line [currency/m].
    embodied_co2_per_metre : array_like, optional
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
        Also build the yearly arrays and cash flows ((S, C, N) arrays); False leaves them None
        (Monte Carlo needs only the present values and the checks).

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
    v = s.resolve(variations)
    if variations is None:
        tl = _base_timeline(s.discount_rate, s.horizon)
    elif variations.size == 1:  # a what-if: the same timeline for each of its evaluations
        tl = _base_timeline(float(v["discount_rate"][0]), float(v["horizon"][0]),
                            variations.n_years)
    else:
        tl = Timeline(v["discount_rate"], v["horizon"], variations.n_years)
    n_samples, n_years = tl.size, tl.n_max
    col = (slice(None), None)                              # (S,) -> (S, 1)

    inv_eta = 1.0 / v["efficiency"]                                             # (S,)
    e_scale = v["hours_factor"] * inv_eta                                       # (S,)
    run = tl.running[:, 1:]                                                     # (S, N)
    price = s.tariff.price_by_year(n_years, v["energy_price"], v["escalation"])  # (S, N)
    carbon_rate = s.grid_factor * s.carbon_price
    weights = {"price": price * run, "run": run, "carbon": bool(carbon_rate)}
    use_series = (variations is not None and variations.m_range is not None and not yearly
                  and years_mode == "auto" and _series_applies(s, v))
    hs = (_series_hydraulics(s, d, eps0, alpha, v, tl, variations.m_range, weights)
          if use_series else
          _direct_hydraulics(s, d, eps0, alpha, v, tl, years_mode, weights))

    def per_sample(x: np.ndarray) -> np.ndarray:
        return np.broadcast_to(x, (n_samples,) + x.shape[1:])

    # --- money: (S, C); yearly amounts are weighted sums, never (S, C, N) arrays ---------------
    pv_energy = (e_scale[:, None] * hs["energy_price"]
                 + (v["demand_charge"] * inv_eta)[:, None] * hs["peak_run"])
    pv_op_carbon = (e_scale[:, None] * carbon_rate * hs["energy_run"] if carbon_rate
                    else np.zeros_like(pv_energy))
    capex_pipe = cost_m[None, :] * v["pipe_cost_factor"] * s.length * s.parallel       # (S, C)
    embodied_cost = np.broadcast_to(co2_m * s.length * s.parallel * s.carbon_price,
                                    capex_pipe.shape)
    zero = np.zeros_like(capex_pipe)
    station = None
    pv_st = {"capital": zero, "renewal": zero, "maintenance": zero, "residual": zero}
    installed, capex_ps = zero, zero
    if s.pump_station is not None:
        station = station_stages(s.pump_station, hs.get("peak"), tl, v["station_cost_factor"],
                                 scale=inv_eta, stage_peaks=hs.get("stage_peaks"))
        pv_st = station.present_values(s.pump_station.maintenance)
        installed, capex_ps = station.installed, station.capital.sum(axis=-1)
    pipe_residual = capex_pipe * tl.kept(("residual", s.pipe_life), lambda: np.asarray(
        straight_line_residual(tl.horizon, s.pipe_life), dtype=float))[col]
    pv_carbon = pv_op_carbon + embodied_cost
    pv_maintenance = s.pipe_maintenance * capex_pipe * tl.annuity[col] + pv_st["maintenance"]
    pv_residual = pipe_residual * tl.end_factor[col] + pv_st["residual"]
    pv_total = (capex_pipe + pv_st["capital"] + pv_energy + pv_maintenance + pv_st["renewal"]
                + pv_carbon - pv_residual)
    eac = pv_total * tl.crf[col]
    if eac_only:
        return eac[0] if variations is None else eac

    # --- yearly amounts (S, C, N) and the cash-flow rows t = 0 … N ---------------------------
    energy = peak = energy_cost = carbon_cost = flows = None
    if yearly:
        live = tl.live[:, None, 1:]
        full = lambda x: np.broadcast_to(x, x.shape[:2] + (n_years,))  # noqa: E731
        energy = full(hs["energy"]) * e_scale[:, None, None] * live
        peak = full(hs["peak"]) * inv_eta[:, None, None] * live
        priced = (energy if hs["priced"] is hs["energy"] else
                  full(hs["priced"]) * e_scale[:, None, None] * live)
        energy_cost = priced * price[:, None, :] + v["demand_charge"][:, None, None] * peak
        carbon_cost = energy * carbon_rate

        def years_1_to_n(x: np.ndarray) -> np.ndarray:  # (S, C, N) -> (S, C, N + 1)
            return np.concatenate([np.zeros(x.shape[:2] + (1,)), x], axis=-1)

        at_start = (tl.years == 0)[None, None, :]
        at_end = tl.years[None, None, :] == tl.horizon[:, None, None]
        st_rows = (station.yearly(s.pump_station.maintenance) if station is not None else
                   {"capital": 0.0, "renewal": 0.0, "maintenance": 0.0,
                    "residual": np.zeros_like(capex_pipe)})
        flows = CashFlows(tl, {
            "capital_pipe": capex_pipe[..., None] * at_start,
            "capital_station": st_rows["capital"],
            "station_renewal": st_rows["renewal"],
            "energy": years_1_to_n(energy_cost),
            "maintenance": (s.pipe_maintenance * capex_pipe[..., None] * tl.live[:, None, :]
                            + st_rows["maintenance"]),
            "carbon": years_1_to_n(carbon_cost) + embodied_cost[..., None] * at_start,
            "residual": -(pipe_residual + st_rows["residual"])[..., None] * at_end,
        })
    maintenance = s.pipe_maintenance * capex_pipe + (
        s.pump_station.maintenance * capex_ps if s.pump_station is not None else 0.0)
    replacement_years = (tl.years[station.schedule.renewal[0].any(axis=0)].astype(float)
                         if station is not None else np.zeros(0))
    out = LifeCycle(
        velocity_design=per_sample(hs["velocity_design"]),
        reynolds_design=per_sample(hs["reynolds_design"]),
        friction_factor_design=per_sample(hs["friction_factor_design"]),
        head_loss_design=per_sample(hs["head_loss_design"]),
        pump_head_design=per_sample(hs["pump_head_design"]),
        pump_power_peak_year1=per_sample(hs["peak_year1"]) * inv_eta[:, None],
        energy_year1=per_sample(hs["energy_year1"]) * e_scale[:, None],
        velocity_max=hs["velocity_max"], pump_head_max=hs["pump_head_max"],
        installed_power=installed, capex_pipe=capex_pipe, capex_pump_station=capex_ps,
        pv_pump_station=pv_st["capital"], pv_energy=pv_energy, pv_maintenance=pv_maintenance,
        pv_replacement=pv_st["renewal"], pv_residual=pv_residual, pv_carbon=pv_carbon,
        pv_total=pv_total, eac=eac, crf=tl.crf, energy_kwh=energy, peak_kw=peak,
        energy_cost=energy_cost, carbon_cost=carbon_cost, embodied_carbon_cost=embodied_cost,
        maintenance=maintenance, replacement_years=replacement_years,
        transitional_points=per_sample(hs["transitional"]),
        roughness_capped=per_sample(hs["capped"]),
        cash_flows=flows,
    )
    if variations is None:  # a single scenario: drop the sample axis
        for name, value in vars(out).items():
            if name not in ("replacement_years", "cash_flows") and value is not None:
                setattr(out, name, np.asarray(value)[0])
    return out
