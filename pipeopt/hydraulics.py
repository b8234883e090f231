"""Hydraulics of lines by year and duty point (model layer), built on the physics core.

The functions here take SI arrays and an object ``s`` that carries the fluid and the friction
method (``density`` [kg/m³], ``viscosity`` [Pa·s], ``friction_method``,
``constant_friction_factor``) and, where used, the line (``length`` [m], ``minor_loss_k`` [-],
``static_head`` [m], ``efficiency`` [-], ``duty``): a :class:`pipeopt.lifecycle.Scenario`
is one. They broadcast like numpy over any leading axes (samples, candidates, years, duty
points).

- :func:`pipe_hydraulics`: velocity, Reynolds number, friction factor and head loss of a line;
- :func:`pumping`: pump head, yearly energy and peak demand from head losses;
- :func:`parallel_split`: the flow split between lines laid in parallel at equal head loss;
- :func:`candidate_years`: the hydraulics of candidates over the study years, with growth of the
  flows and aging of the roughness.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from . import friction as fr
from ._arrays import last_axis_max, last_axis_sum
from .errors import InputError

__all__ = ["pipe_hydraulics", "pumping", "parallel_split", "candidate_years", "running_max"]


def _friction(s: Any, re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    if s.friction_method == "constant":
        return np.full(np.broadcast_shapes(re.shape, rr.shape), s.constant_friction_factor)
    return np.asarray(fr.friction_factor(re, rr, method=s.friction_method, transition="ignore"))


def pipe_hydraulics(s: Any, diameter: Any, roughness: Any, flow: Any,
                    length: float | None = None,
                    minor_loss_k: float | None = None) -> dict[str, np.ndarray]:
    """Velocity, Reynolds number, friction factor and head loss of one line, broadcasting.

    V = q / (π D²/4); Re = ρ V D / μ; f by the study's friction method (Colebrook–White by
    default) at ε/D (capped at the Moody chart's 0.05); h = (f L / D + ΣK) V² / (2 g).

    Parameters
    ----------
    s : Scenario (or any object with the fluid and friction attributes)
        Fluid properties, friction method and (by default) length and minor losses.
    diameter, roughness : array_like
        Inner diameter [m] and absolute roughness [m], broadcasting against ``flow``.
    flow : array_like
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


def pumping(s: Any, head_loss: Any, flow_total: Any, efficiency: Any = None,
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
    head = s.static_head + np.asarray(head_loss, dtype=float)
    eta = s.efficiency if efficiency is None else efficiency
    power_w = s.density * fr.GRAVITY * np.asarray(flow_total, dtype=float) * head / eta
    energy = last_axis_sum(power_w * (s.duty.hours_array * hours_factor)) / 1000.0
    return head, energy, last_axis_max(power_w) / 1000.0


def running_max(x: Any, last: Any) -> np.ndarray:
    """The largest value of ``x`` over its last axis (years) up to index ``last`` of each sample.

    Parameters
    ----------
    x : array_like, shape (S_x, ..., T)
        Values by year on the last axis; S_x is the number of samples S or 1 (shared by all).
        T = 1 means the same value every year.
    last : array_like of int, shape (S,)
        Index of the last year of each sample (its horizon less one).

    Returns
    -------
    ndarray, shape (S, ...)
        max over t <= last[s] of x[s, ..., t].

    Examples
    --------
    >>> running_max(np.array([[[1.0, 3.0, 2.0, 5.0]]]), np.array([0, 2, 3])).tolist()
    [[1.0], [3.0], [5.0]]
    """
    x = np.asarray(x)
    last = np.atleast_1d(np.asarray(last, dtype=int))
    if x.shape[-1] == 1:
        return np.broadcast_to(x[..., 0], (last.size,) + x.shape[1:-1])
    run = np.maximum.accumulate(x, axis=-1)
    rows = np.arange(last.size) if run.shape[0] > 1 else np.zeros(last.size, dtype=int)
    return run[rows, ..., np.minimum(last, run.shape[-1] - 1)]


def candidate_years(s: Any, diameter: np.ndarray, roughness: np.ndarray, aging: np.ndarray,
                    multipliers: np.ndarray, aging_factor: np.ndarray) -> dict[str, np.ndarray]:
    """Hydraulics of candidates over the study years: arrays (S_h, C, T, K).

    Q_k,t = m_t Q_k (all lines together; each of ``s.parallel`` lines carries its share),
    ε_t = ε₀ + α f_α (t − 1).

    Parameters
    ----------
    s : Scenario
        Fluid, friction method, line and duty.
    diameter, roughness, aging : ndarray, shape (C,)
        Inner diameter [m], new roughness ε₀ [m], aging rate α [m/yr] of each candidate.
    multipliers : ndarray, shape (S_h, T)
        Multiplier m_t of the year-1 duty flows (growth, cap, flow factor) of each hydraulic
        sample and year; T = 1 when every year is the same.
    aging_factor : ndarray, shape (S_h,)
        Factor f_α on every aging rate.

    Returns
    -------
    dict of ndarray
        :func:`pipe_hydraulics` arrays (S_h, C, T, K), ``flow_total`` (S_h, 1, T, K) [m³/s],
        and from :func:`pumping` at η = 1 and the base hours: ``pump_head`` (S_h, C, T, K)
        [m], ``energy`` and ``peak`` (S_h, C, T) [kWh, kW]; with time-of-use prices also
        ``energy_priced`` (S_h, C, T): Σ_k P_k h_k p_k / p [kWh], the energy weighted by each
        duty's price over the tariff's.

    Notes
    -----
    Optional attributes of ``s`` (a :class:`pipeopt.lifecycle.Scenario` has them):
    ``fittings`` (:class:`pipeopt.losses.Fittings`, whose ΣK at each bore adds to ΣK),
    ``equipment_coefficient`` c [s²/m⁵] (a fixed loss c Q² of the total flow at the station)
    and ``pump`` (:class:`pipeopt.pumpset.PumpSet`: power ρ g Q H_E / φ instead of ρ g Q H).
    """
    years = np.arange(multipliers.shape[1])
    q_total = s.duty.flow_array[None, None, :] * multipliers[:, :, None]         # (S_h, T, K)
    eps_t = (roughness[None, :, None] + aging[None, :, None] * aging_factor[:, None, None]
             * years[None, None, :])                                           # (S_h, C, T)
    fittings = getattr(s, "fittings", None)
    k = (None if fittings is None else
         s.minor_loss_k + np.asarray(fittings.k_sum(diameter))[None, :, None, None])
    hyd = pipe_hydraulics(s, diameter[None, :, None, None], eps_t[..., None],
                          q_total[:, None, :, :] / s.parallel, minor_loss_k=k)
    q4 = q_total[:, None, :, :]
    equipment = getattr(s, "equipment_coefficient", 0.0)
    if equipment:  # fixed equipment at the station carries the total flow
        hyd["head_loss"] = hyd["head_loss"] + equipment * q4 * q4
    pump = getattr(s, "pump", None)
    ratios = s.duty.price_ratios(s.tariff.price) if getattr(s, "tariff", None) else None
    if (pump is None or not pump.shaped) and ratios is None:
        head, energy, peak = pumping(s, hyd["head_loss"], q4, efficiency=1.0)
    else:
        head = s.static_head + hyd["head_loss"]
        if pump is not None and pump.shaped:
            terms = pump.power_terms(q4, head)
            power_w = s.density * fr.GRAVITY * q4 * terms["head"] / terms["factor"]
            hyd["pump_outside"] = terms["outside"]
        else:
            power_w = s.density * fr.GRAVITY * q4 * head
        hours = s.duty.hours_array
        energy = last_axis_sum(power_w * hours) / 1000.0
        peak = last_axis_max(power_w) / 1000.0
        if ratios is not None:
            hyd["energy_priced"] = last_axis_sum(power_w * (hours * ratios)) / 1000.0
    hyd.update(flow_total=q4, pump_head=head, energy=energy, peak=peak)
    return hyd


def parallel_split(s: Any, lines: list[dict], flow_total: Any, tol: float = 1e-12,
                   max_iter: int = 100) -> list[dict[str, np.ndarray]]:
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
    flow_total : array_like
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
    spread = np.inf
    for _ in range(max_iter):
        inv = [1.0 / np.sqrt((fi * length / d + k) / (2.0 * fr.GRAVITY * a2))
               for fi, (d, _, length, k, a2) in zip(f, geo, strict=True)]
        total = sum(inv)
        flows = [q * x / total for x in inv]
        hyd = [pipe_hydraulics(s, d, eps, qi, length, k)
               for qi, (d, eps, length, k, _) in zip(flows, geo, strict=True)]
        heads = [h["head_loss"] for h in hyd]
        spread = max(np.max(np.abs(h - heads[0])) for h in heads)
        f = [h["friction_factor"] for h in hyd]
        if spread <= tol:
            for h, qi in zip(hyd, flows, strict=True):
                h["flow"] = qi
            return hyd
    raise InputError(f"parallel_split: head losses still differ by {spread:.3g} m after "
                     f"{max_iter} iterations")
