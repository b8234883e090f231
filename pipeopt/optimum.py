"""Continuous optimum (study layer): the EAC-minimizing inner diameter of each material.

For every pressure class of every material, the inner diameter is let vary continuously between
the class's smallest and largest catalog bores. Along a class the pipe's cost per metre, its
embodied carbon and its wave speed are interpolated between the class's catalog sizes (cost and
carbon log-log, so that a power law is reproduced exactly), the rating is the lower of the two
neighbouring sizes' ratings (conservative), and roughness and aging are the material's.

The minimization honours the velocity limits: velocity_max sets the smallest diameter (at the
largest flow of the years of the horizon), velocity_min the largest (at the largest year-1
duty). Two vectorized scans of the life-cycle model (every class at once) bracket each minimum,
then one bounded :func:`scipy.optimize.minimize` (L-BFGS-B) over all the classes' diameters at
once refines them (the objective is separable: the sum of the classes' EACs). The unconstrained
optimum of each class is found the same way, and reported beside the constrained one when the
limits move it.

A material's optimum is its class with the least EAC among those that meet the velocity limits
and hold the pressure at their optimum (operating pressure within PFA, MDP within PMA, at the
service temperature); it is bracketed by the neighbouring catalog sizes of that class.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize

from .friction import GRAVITY
from .lifecycle import Scenario, evaluate
from .surge import joukowsky_head
from .variations import Variations

__all__ = ["continuous_optimum", "OPTIMUM_COLUMNS"]

OPTIMUM_COLUMNS = ["material", "pressure_class", "inner_diameter_m", "eac", "velocity_m_s",
                   "velocity_max_m_s", "limited_by", "unconstrained_inner_diameter_m",
                   "unconstrained_eac", "at_bound", "operating_pressure_bar", "mdp_bar",
                   "pfa_bar", "pma_bar", "pressure_ok", "lower_size", "lower_inner_diameter_m",
                   "lower_eac", "upper_size", "upper_inner_diameter_m", "upper_eac",
                   "best_feasible_size", "best_feasible_eac", "note"]


class _Classes:
    """The continuous curves of every (material, class): cost, carbon, wave speed, rating."""

    def __init__(self, candidates: pd.DataFrame, cost_factor: np.ndarray) -> None:
        c = candidates.assign(_cost=candidates["cost_per_metre"].to_numpy() * cost_factor)
        self.groups = []
        for (mat, cls), rows in c.groupby(["material", "pressure_class"], sort=False):
            rows = rows.sort_values("inner_diameter_m").drop_duplicates("inner_diameter_m")
            self.groups.append({
                "material": mat, "class": cls, "index": rows.index.to_numpy(),
                "d": rows["inner_diameter_m"].to_numpy(dtype=float),
                "cost": rows["_cost"].to_numpy(dtype=float),
                "co2": rows["embodied_co2_kg_per_m"].to_numpy(dtype=float),
                "wave": rows["wave_speed_m_s"].to_numpy(dtype=float),
                "pfa": rows["pfa_pa"].to_numpy(dtype=float),
                "pma": rows["pma_pa"].to_numpy(dtype=float),
                "eps": float(rows["roughness_m"].iloc[0]),
                "alpha": float(rows["aging_m_per_year"].iloc[0]),
                "rated": bool(np.isfinite(rows["pressure_rating_pa"]).all()),
                "hot": bool(np.isnan(rows["temperature_factor"]).any())})

    def at(self, g: int, d: np.ndarray) -> dict[str, np.ndarray]:
        grp = self.groups[g]
        x = grp["d"]
        if x.size == 1:
            one = np.ones_like(d)
            return {k: grp[k][0] * one for k in ("cost", "co2", "wave", "pfa", "pma")}
        ld = np.log(np.clip(d, x[0], x[-1]))

        def loglog(y: np.ndarray) -> np.ndarray:
            return np.exp(np.interp(ld, np.log(x), np.log(np.maximum(y, 1e-300))))

        # the lower rating of the two neighbouring catalog sizes (conservative)
        k = np.clip(np.searchsorted(x, d, side="right") - 1, 0, x.size - 2)
        exact = np.isclose(d, x[k], rtol=1e-12)
        nxt = np.where(exact, k, k + 1)
        return {"cost": loglog(grp["cost"]),
                "co2": loglog(grp["co2"]) if np.all(grp["co2"] > 0) else np.zeros_like(d),
                "wave": np.interp(d, x, grp["wave"]),
                "pfa": np.minimum(grp["pfa"][k], grp["pfa"][nxt]),
                "pma": np.minimum(grp["pma"][k], grp["pma"][nxt])}


def continuous_optimum(s: Scenario, candidates: pd.DataFrame, table: pd.DataFrame,
                       constraints: Any, variations: Variations | None = None,
                       embodied: bool = False, suction_pressure: float = 0.0) -> pd.DataFrame:
    """The EAC-minimizing inner diameter of each material when D varies continuously.

    Parameters
    ----------
    s : Scenario
    candidates : pandas.DataFrame
        The candidate table (:mod:`pipeopt.candidates`).
    table : pandas.DataFrame
        The evaluated candidates (``eac``, ``feasible``, ``size``), for the bracketing sizes.
    constraints : Constraints
        Velocity limits and surge allowance.
    variations : Variations, optional
        One sample of named inputs (a what-if), as in the evaluation of the table.
    embodied : bool
        Charge the embodied carbon of the pipe (as the table did).
    suction_pressure : float
        Gauge pressure at the pump suction [Pa].

    Returns
    -------
    pandas.DataFrame
        One row per material, columns :data:`OPTIMUM_COLUMNS`.
    """
    cost_factor = np.ones(len(candidates))
    var = variations
    if variations is not None and variations.pipe_cost_factor is not None:
        cost_factor = np.broadcast_to(np.asarray(variations.pipe_cost_factor)[0],
                                      (len(candidates),)).astype(float)
        from dataclasses import replace

        var = replace(variations, pipe_cost_factor=None)
    cl = _Classes(candidates, cost_factor)
    n_g = len(cl.groups)
    v = s.resolve(var)
    horizon = int(v["horizon"][0])
    m = s.duty.multipliers(horizon, growth=v["growth"], flow_factor=v["flow_factor"])[0]
    q_design = max(s.duty.flows) * m[0] / s.parallel
    q_max = max(s.duty.flows) * m.max() / s.parallel
    d_lo = np.array([g["d"][0] for g in cl.groups])
    d_hi = np.array([g["d"][-1] for g in cl.groups])
    lo_v = (np.full(n_g, np.sqrt(4 * q_max / (np.pi * constraints.velocity_max)))
            if constraints.velocity_max is not None else np.zeros(n_g))
    hi_v = (np.full(n_g, np.sqrt(4 * q_design / (np.pi * constraints.velocity_min)))
            if constraints.velocity_min else np.full(n_g, np.inf))
    c_lo, c_hi = np.maximum(d_lo, lo_v), np.minimum(d_hi, hi_v)
    possible = c_lo <= c_hi
    c_lo, c_hi = np.where(possible, c_lo, d_lo), np.where(possible, c_hi, d_hi)

    def curves(d: np.ndarray, groups: np.ndarray) -> dict[str, np.ndarray]:
        out = {k: np.empty_like(d) for k in ("cost", "co2", "wave", "pfa", "pma")}
        for g in np.unique(groups):
            sel = groups == g
            for k, x in cl.at(int(g), d[sel]).items():
                out[k][sel] = x
        out["eps"] = np.array([cl.groups[g]["eps"] for g in groups])
        out["alpha"] = np.array([cl.groups[g]["alpha"] for g in groups])
        return out

    def model(d: np.ndarray, groups: np.ndarray, eac_only: bool = True) -> Any:
        cv = curves(d, groups)
        lc = evaluate(s, d, cv["eps"], cv["alpha"], cv["cost"],
                      cv["co2"] if embodied else 0.0, variations=var, eac_only=eac_only,
                      yearly=False)
        if eac_only:
            return lc if var is None else lc[0]
        return (lc if var is None else lc.take(0)), cv

    def minimize(lo: np.ndarray, hi: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Minimum of every class's EAC within [lo, hi]: two scans, then L-BFGS-B."""
        groups = np.arange(n_g)
        grids = np.geomspace(lo, hi, 65, axis=1)
        values = model(grids.ravel(), np.repeat(groups, 65)).reshape(grids.shape)
        k = np.argmin(values, axis=1)
        a = grids[groups, np.maximum(k - 1, 0)]
        b = grids[groups, np.minimum(k + 1, 64)]
        grids = np.linspace(a, b, 33, axis=1)
        values = model(grids.ravel(), np.repeat(groups, 33)).reshape(grids.shape)
        k = np.argmin(values, axis=1)
        x0 = grids[groups, k]
        e0 = values[groups, k]
        a = grids[groups, np.maximum(k - 1, 0)]
        b = grids[groups, np.minimum(k + 1, 32)]
        scale = np.maximum(np.abs(e0), 1.0)

        def fun(x: np.ndarray) -> tuple[float, np.ndarray]:
            # the classes' EACs (scaled) and their derivatives by central differences, all in
            # one evaluation of the model: 3 diameters per class
            h = np.maximum(1e-7 * x, 1e-9)
            pts = np.concatenate([x, np.clip(x + h, a, b), np.clip(x - h, a, b)])
            e = model(pts, np.tile(groups, 3)).reshape(3, n_g) / scale
            step = np.clip(x + h, a, b) - np.clip(x - h, a, b)
            grad = np.where(step > 0, (e[1] - e[2]) / np.where(step > 0, step, 1.0), 0.0)
            return float(e[0].sum()), grad

        span = np.where(b > a, b - a, 0.0)
        if np.any(span > 0):
            res = optimize.minimize(fun, x0, jac=True, method="L-BFGS-B",
                                    bounds=optimize.Bounds(a, b),
                                    options={"ftol": 1e-15, "gtol": 1e-12, "maxiter": 200})
            x = np.clip(res.x, a, b)
            e = model(x, groups)
            better = e <= e0
            return np.where(better, x, x0), np.where(better, e, e0)
        return x0, e0

    d_free, e_free = minimize(d_lo, d_hi)
    d_con, e_con = minimize(c_lo, c_hi)
    lc, cv = model(d_con, np.arange(n_g), eac_only=False)
    rho_g = s.density * GRAVITY
    surge = (np.full(n_g, float(constraints.surge_allowance))
             if constraints.surge_allowance is not None
             else joukowsky_head(cv["wave"], lc.velocity_max))
    operating = suction_pressure + lc.pump_head_max * rho_g
    mdp = operating + surge * rho_g
    rated = np.array([g["rated"] for g in cl.groups])
    hot = np.array([g["hot"] for g in cl.groups])
    pressure_ok = ~rated | ((operating <= cv["pfa"]) & (mdp <= cv["pma"]))
    t_d = table["inner_diameter_m"].to_numpy()
    t_eac = table["eac"].to_numpy()
    t_size = table["size"].to_numpy()
    t_feas = table["feasible"].to_numpy()
    t_mat = table["material"].to_numpy()
    rows = []
    for mat in dict.fromkeys(g["material"] for g in cl.groups):
        gs = [j for j, g in enumerate(cl.groups) if g["material"] == mat]
        ok = [j for j in gs if possible[j] and pressure_ok[j] and not hot[j]]
        pick = min(ok or gs, key=lambda j: e_con[j])
        g = cl.groups[pick]
        d_star = float(d_con[pick])
        notes = []
        limited = ""
        if not possible[pick]:
            notes.append("no diameter of the class meets the velocity limits")
        elif not np.isclose(d_star, d_free[pick], rtol=1e-6):
            limited = ("velocity_max" if np.isclose(d_star, lo_v[pick], rtol=1e-9)
                       else "velocity_min" if np.isclose(d_star, hi_v[pick], rtol=1e-9)
                       else "")
        if not ok:
            notes.append("no class of the material holds the pressure at its optimum, or the "
                         "service temperature is above the material's limit")
        idx = g["index"]
        below = idx[g["d"] <= d_star * (1 + 1e-12)]
        above = idx[g["d"] >= d_star * (1 - 1e-12)]
        i_lo = below[-1] if below.size else None
        i_hi = above[0] if above.size else None
        feas = (t_mat == mat) & t_feas
        i_best = np.flatnonzero(feas)[np.argmin(t_eac[feas])] if feas.any() else None
        rows.append({
            "material": mat, "pressure_class": g["class"], "inner_diameter_m": d_star,
            "eac": float(e_con[pick]), "velocity_m_s": q_design / (np.pi * d_star**2 / 4.0),
            "velocity_max_m_s": float(lc.velocity_max[pick]), "limited_by": limited,
            "unconstrained_inner_diameter_m": float(d_free[pick]),
            "unconstrained_eac": float(e_free[pick]),
            "at_bound": bool(np.isclose(d_star, g["d"][0], rtol=1e-6)
                             or np.isclose(d_star, g["d"][-1], rtol=1e-6)),
            "operating_pressure_bar": float(operating[pick]) / 1e5,
            "mdp_bar": float(mdp[pick]) / 1e5, "pfa_bar": float(cv["pfa"][pick]) / 1e5,
            "pma_bar": float(cv["pma"][pick]) / 1e5, "pressure_ok": bool(pressure_ok[pick]),
            "lower_size": None if i_lo is None else t_size[i_lo],
            "lower_inner_diameter_m": np.nan if i_lo is None else t_d[i_lo],
            "lower_eac": np.nan if i_lo is None else t_eac[i_lo],
            "upper_size": None if i_hi is None else t_size[i_hi],
            "upper_inner_diameter_m": np.nan if i_hi is None else t_d[i_hi],
            "upper_eac": np.nan if i_hi is None else t_eac[i_hi],
            "best_feasible_size": None if i_best is None else t_size[i_best],
            "best_feasible_eac": np.nan if i_best is None else t_eac[i_best],
            "note": "; ".join(notes)})
    return pd.DataFrame(rows, columns=OPTIMUM_COLUMNS)
