"""Continuous optimum (study layer): the EAC-minimizing inner diameter of each material.

For every pressure class of every material, the inner diameter is let vary continuously between
the class's smallest and largest catalog bores. Along a class the pipe's cost per metre, its
embodied carbon and its wave speed are interpolated between the class's catalog sizes (cost and
carbon log-log, so that a power law is reproduced exactly), the rating is the lower of the two
neighbouring sizes' ratings (conservative), and roughness and aging are the material's.

The minimization honours the velocity limits: velocity_max sets the smallest diameter (at the
largest flow of the years of the horizon), velocity_min the largest (at the largest year-1
duty). Because prices are interpolated size to size, a class's EAC has a kink at every catalog
bore. A vectorized scan of the life-cycle model (33 diameters and every bore of every class at
once) finds each class's best point, then one bounded :func:`scipy.optimize.minimize`
(L-BFGS-B) over the two smooth pieces beside it, for all the classes at once, refines them
(the objective is separable: the sum of the pieces' EACs, each scaled by its curvature). Where
a velocity limit holds the optimum, the unconstrained optimum of that class is found the same
way and reported beside it.

A material's optimum is its class with the least EAC among those that meet the velocity limits
and hold the pressure at their optimum (operating pressure within PFA, MDP within PMA, at the
service temperature); it is bracketed by the neighbouring catalog sizes of that class.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize

from .friction import GRAVITY
from .lifecycle import Scenario, evaluate
from .surge import joukowsky_head
from .variations import Variations

__all__ = ["continuous_optimum", "class_curves", "OPTIMUM_COLUMNS"]

OPTIMUM_COLUMNS = ["material", "class", "inner_diameter_m", "eac", "velocity_m_s",
                   "velocity_peak_m_s", "limited_by", "unconstrained_inner_diameter_m",
                   "unconstrained_eac", "at_bound", "operating_pressure_bar", "mdp_bar",
                   "pfa_bar", "pma_bar", "pressure_ok", "lower_size", "lower_inner_diameter_m",
                   "lower_eac", "upper_size", "upper_inner_diameter_m", "upper_eac",
                   "best_feasible_size", "best_feasible_eac", "note"]


class _Classes:
    """The continuous curves of every (material, class): cost, carbon, wave speed, rating."""

    def __init__(self, candidates: pd.DataFrame, cost_factor: np.ndarray) -> None:
        col = {k: candidates[k].to_numpy() for k in (
            "material", "class", "inner_diameter_m", "cost_per_metre",
            "embodied_co2_kg_per_m", "wave_speed_m_s", "pfa_pa", "pma_pa", "roughness_m",
            "aging_m_per_year", "pressure_rating_pa", "temperature_factor")}
        d_all = col["inner_diameter_m"].astype(float)
        cost_all = col["cost_per_metre"].astype(float) * cost_factor
        # classes in order of first appearance; rows of a class by bore, repeated bores once
        keys = [(m, c) for m, c in zip(col["material"], col["class"], strict=True)]
        first = dict.fromkeys(keys)
        code = {k: j for j, k in enumerate(first)}
        g_of = np.fromiter((code[k] for k in keys), dtype=int, count=len(keys))
        order = np.lexsort((np.arange(d_all.size), d_all, g_of))
        g_sorted, d_sorted = g_of[order], d_all[order]
        repeat = np.zeros(order.size, dtype=bool)
        repeat[1:] = (g_sorted[1:] == g_sorted[:-1]) & (d_sorted[1:] == d_sorted[:-1])
        order, g_sorted = order[~repeat], g_sorted[~repeat]
        bounds = np.searchsorted(g_sorted, np.arange(len(first) + 1))
        index = candidates.index.to_numpy()
        self.groups = []
        for j, (mat, cls) in enumerate(first):
            rows = order[bounds[j]:bounds[j + 1]]
            grp = {
                "material": mat, "class": cls, "index": index[rows],
                "d": d_all[rows], "cost": cost_all[rows],
                "co2": col["embodied_co2_kg_per_m"][rows].astype(float),
                "wave": col["wave_speed_m_s"][rows].astype(float),
                "pfa": col["pfa_pa"][rows].astype(float),
                "pma": col["pma_pa"][rows].astype(float),
                "eps": float(col["roughness_m"][rows[0]]),
                "alpha": float(col["aging_m_per_year"][rows[0]]),
                "rated": bool(np.isfinite(col["pressure_rating_pa"][rows].astype(float)).all()),
                "hot": bool(np.isnan(col["temperature_factor"][rows].astype(float)).any())}
            grp["log_d"] = np.log(grp["d"])
            grp["log_cost"] = np.log(np.maximum(grp["cost"], 1e-300))
            self.groups.append(grp)
        # every class's curve end to end, for interpolating many classes in one pass: class g
        # holds entries start[g] .. start[g] + size[g] - 1, keyed by g * _KEY + ln D
        size = np.array([g["d"].size for g in self.groups])
        self.start = np.concatenate([[0], np.cumsum(size)[:-1]]).astype(int)
        self.last = self.start + size - 1
        cat = lambda k: np.concatenate([g[k] for g in self.groups])  # noqa: E731
        self.d, self.log_d, self.log_cost = cat("d"), cat("log_d"), cat("log_cost")
        self.wave, self.pfa, self.pma = cat("wave"), cat("pfa"), cat("pma")
        owner = np.repeat(np.arange(len(self.groups)), size)
        self.key = owner * _KEY + self.log_d
        has_co2 = np.array([bool(np.all(g["co2"] > 0)) for g in self.groups])
        co2 = cat("co2")
        self.log_co2 = np.log(np.where(has_co2[owner], co2, 1.0))
        self.has_co2 = has_co2

    def bores(self, groups: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """The catalog bores of classes ``groups`` [m], and for each the position in
        ``groups`` of the class it belongs to."""
        count = self.last[groups] - self.start[groups] + 1
        owner = np.repeat(np.arange(groups.size), count)
        offset = np.arange(owner.size) - np.repeat(np.cumsum(count) - count, count)
        return self.d[self.start[groups][owner] + offset], owner

    def at(self, groups: np.ndarray, d: np.ndarray, full: bool) -> dict[str, np.ndarray]:
        """Cost, carbon (and with ``full`` wave speed, PFA, PMA) of class ``groups[i]`` at
        inner diameter ``d[i]``, every point in one pass.

        Cost and carbon are interpolated log-log between the class's neighbouring sizes (the
        formula of :func:`numpy.interp`, with a class's end values outside its range), the wave
        speed linearly in D, PFA and PMA are the lower of the two neighbours' (a catalog bore
        itself: its own).
        """
        start, last = self.start[groups], self.last[groups]
        ld = np.log(np.clip(d, self.d[start], self.d[last]))
        # j: the entry at or below ld within the class, so that [j, j + 1] brackets it (the
        # composite key rounds ln D to about 1e-13; one step each way puts j right again)
        top = np.maximum(last - 1, start)
        j = np.clip(np.searchsorted(self.key, groups * _KEY + ld, side="right") - 1, start, top)
        j = np.where((ld < self.log_d[j]) & (j > start), j - 1, j)
        k = np.minimum(j + 1, last)
        j = np.minimum(np.where((ld >= self.log_d[k]) & (k > j), k, j), top)
        k = np.minimum(j + 1, last)
        dx = self.log_d[k] - self.log_d[j]
        single = dx == 0.0
        safe = np.where(single, 1.0, dx)

        def interp(y: np.ndarray) -> np.ndarray:
            # numpy.interp's formula, and a class's last value exactly at its end
            out = np.where(single, 0.0, (y[k] - y[j]) / safe) * (ld - self.log_d[j]) + y[j]
            return np.where(ld >= self.log_d[last], y[last], out)

        out = {"cost": np.exp(interp(self.log_cost)),
               "co2": np.where(self.has_co2[groups], np.exp(interp(self.log_co2)), 0.0)}
        if full:
            dd = np.clip(d, self.d[start], self.d[last])
            wd = self.d[k] - self.d[j]
            slope = np.where(single, 0.0, (self.wave[k] - self.wave[j]) / np.where(single, 1.0, wd))
            wave = np.where(dd >= self.d[last], self.wave[last], slope * (dd - self.d[j])
                            + self.wave[j])
            exact = np.abs(d - self.d[j]) <= 1e-8 + 1e-12 * self.d[j]  # numpy.isclose
            nxt = np.where(exact, j, k)
            out.update(wave=wave, pfa=np.minimum(self.pfa[j], self.pfa[nxt]),
                       pma=np.minimum(self.pma[j], self.pma[nxt]))
        return out


def _close(a: float, b: float, rtol: float) -> bool:
    """:func:`numpy.isclose` of two floats (absolute tolerance 1e-8), without its array set-up
    (the optimum's bookkeeping asks it a few times per material)."""
    return bool(a == b or (math.isfinite(b) and abs(a - b) <= 1e-8 + rtol * abs(b)))


#: Spacing of the classes' keys in :class:`_Classes`: wider than any span of ln D.
_KEY = 1000.0


def class_curves(candidates: pd.DataFrame) -> _Classes:
    """The continuous curves of every class of ``candidates`` at their own prices (built once
    per study and passed to :func:`continuous_optimum` as ``curves``)."""
    return _Classes(candidates, np.ones(len(candidates)))


def continuous_optimum(s: Scenario, candidates: pd.DataFrame, table: pd.DataFrame,
                       constraints: Any, variations: Variations | None = None,
                       embodied: bool = False, suction_pressure: float = 0.0,
                       curves: _Classes | None = None) -> pd.DataFrame:
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
    curves : optional
        :func:`class_curves` of these candidates, if already built (used when the prices are
        the candidates' own, i.e. no ``pipe_cost_factor`` among the variations).

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
        curves = None
    cl = _Classes(candidates, cost_factor) if curves is None else curves
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

    def curve_at(d: np.ndarray, groups: np.ndarray, full: bool) -> dict[str, np.ndarray]:
        out = cl.at(groups, d, full)
        out["eps"] = eps_g[groups]
        out["alpha"] = alpha_g[groups]
        return out

    eps_g = np.array([g["eps"] for g in cl.groups])
    alpha_g = np.array([g["alpha"] for g in cl.groups])

    def model(d: np.ndarray, groups: np.ndarray, eac_only: bool = True) -> Any:
        cv = curve_at(d, groups, full=not eac_only)
        lc = evaluate(s, d, cv["eps"], cv["alpha"], cv["cost"],
                      cv["co2"] if embodied else 0.0, variations=var, eac_only=eac_only,
                      yearly=False)
        if eac_only:
            return lc if var is None else lc[0]
        return (lc if var is None else lc.take(0)), cv

    def minimize(lo: np.ndarray, hi: np.ndarray,
                 groups: np.ndarray) -> tuple[np.ndarray, np.ndarray, Any]:
        """Minimum of each class's EAC within [lo, hi]: a scan, then one L-BFGS-B for all.

        Returns the diameters, their EACs and, when every class's minimum is a point the
        minimizer ended at, the largest velocity and pump head there (else None).

        Along a class the EAC is smooth between catalog bores and has a kink at each (the
        price per metre is interpolated size to size), so a minimum often sits on a bore,
        where no derivative vanishes. The scan evaluates 33 log-spaced diameters and every
        catalog bore of each class (one evaluation) and takes the best point p with its
        neighbours L and R among those points: no kink lies inside (L, p) or (p, R).
        L-BFGS-B then minimizes over both pieces of every class at once (two variables per
        class, u in [0, 1] across each piece; the pieces are smooth, and a minimum on the
        kink is a minimum at a bound of both), each piece's EAC scaled by the curvature of the
        three points so that the problem is well conditioned, with derivatives by central
        differences (three diameters per piece, one evaluation per iteration). It starts from
        the vertex of the parabola through the three points, moved by one Newton step on
        central differences there (one evaluation), so that it usually confirms the minimum
        in one or two evaluations instead of searching for it.
        """
        n = groups.size
        r = np.arange(n)
        grids = np.geomspace(lo, hi, 33, axis=1)
        bores, own_b = cl.bores(groups)
        inside = (bores > lo[own_b] * (1 + 1e-12)) & (bores < hi[own_b] * (1 - 1e-12))
        bores, own_b = bores[inside], own_b[inside]
        pts = np.concatenate([grids.ravel(), bores])
        own = np.concatenate([np.repeat(r, 33), own_b])
        vals = model(pts, groups[own])
        # every class's points by diameter, a point repeated (a bore on the grid) once
        order = np.lexsort((pts, own))
        pts, own, vals = pts[order], own[order], vals[order]
        keep = np.ones(pts.size, dtype=bool)
        keep[1:] = (own[1:] != own[:-1]) | (pts[1:] > pts[:-1] * (1 + 1e-12))
        pts, own, vals = pts[keep], own[keep], vals[keep]
        first = np.searchsorted(own, r)
        last = np.searchsorted(own, r, side="right") - 1
        i = np.lexsort((vals, own))[first]                    # each class's best point
        i_lo, i_hi = np.maximum(i - 1, first), np.minimum(i + 1, last)
        x_lo, x0, x_hi = pts[i_lo], pts[i], pts[i_hi]
        e_lo, e0, e_hi = vals[i_lo], vals[i], vals[i_hi]
        inner = (i > first) & (i < last)
        with np.errstate(divide="ignore", invalid="ignore"):
            s_hi = (e_hi - e0) / (x_hi - x0)
            s_lo = (e0 - e_lo) / (x0 - x_lo)
            f2 = 2.0 * (s_hi - s_lo) / (x_hi - x_lo)
            # the parabola through the three points: its slope at x0, and its vertex
            f1 = (s_hi * (x0 - x_lo) + s_lo * (x_hi - x0)) / (x_hi - x_lo)
            vertex = x0 - f1 / f2
        usable = inner & (f2 > 0) & np.isfinite(vertex)
        vertex = np.where(usable, vertex, x0)
        # the two pieces of each class: [x_lo, x0] (variables 0 … n-1), [x0, x_hi] (n … 2n-1)
        a = np.concatenate([x_lo, x0])
        width = np.concatenate([x0 - x_lo, x_hi - x0])
        g2, base = np.concatenate([groups, groups]), np.concatenate([e0, e0])
        scale = np.where(np.concatenate([usable, usable]), np.concatenate([f2, f2]) * width**2,
                         np.maximum(np.abs(base), 1.0) * 1e-3)
        scale = np.where(np.isfinite(scale) & (scale > 0), scale, 1.0)
        if not np.any(width > 0):
            return x0, e0, None
        safe_w = np.where(width > 0, width, 1.0)
        m = 2 * n
        # the model's EACs at u, u + h and u - h, with the largest velocity and pump head at
        # u, by the bytes of u (the minimizer's first request is the start, already evaluated)
        seen: dict[bytes, tuple[np.ndarray, ...]] = {}

        # difference steps: 1e-5 (1e-4 for the start's curvature) of a piece, and never less
        # than 1e-6 (1e-5) of the diameter, so that rounding in the EAC (about 1e-15 of it)
        # stays far below the gradient tolerance on a narrow piece (a bore close to the best
        # point)
        rel = np.concatenate([x0, x0]) / safe_w
        h_fun = np.minimum(np.maximum(1e-5, 1e-6 * rel), 0.1)
        h_start = np.minimum(np.maximum(1e-4, 1e-5 * rel), 0.2)

        def evaluated(u: np.ndarray, hu: Any) -> tuple[np.ndarray, ...]:
            found = seen.get(u.tobytes())
            if found is None:
                up, um = np.minimum(u + hu, 1.0), np.maximum(u - hu, 0.0)
                at = np.tile(a, 3) + np.concatenate([u, up, um]) * np.tile(width, 3)
                lc, _ = model(at, np.tile(g2, 3), eac_only=False)
                found = (lc.eac.reshape(3, m), up, um, lc.velocity_max[:m],
                         lc.pump_head_max[:m])
                seen[u.tobytes()] = found
            return found

        def scaled(u: np.ndarray, hu: Any) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
            """Scaled EAC at u, and its first and second central differences (step hu)."""
            eac, up, um = evaluated(u, hu)[:3]
            e = (eac - base) / scale
            live = (up - um > 0) & (width > 0)
            step = np.where(live, up - um, 1.0)
            grad = np.where(live, (e[1] - e[2]) / step, 0.0)
            # no slope: a difference within the EAC's rounding (taken as 1e-14 of it), a
            # slope that would move the diameter by less than 1e-8 of itself, or one whose
            # minimum lies less than 1e-14 of the EAC below (the scaled curvature is about 1
            # near the minimum, so the distance to it is about the slope, and the gain half its
            # square)
            floor = np.maximum(np.maximum(1e-14 * np.abs(base) / scale / step, 1e-8 * rel),
                               np.sqrt(2e-14 * np.abs(base) / scale))
            grad = np.where(np.abs(grad) > floor, grad, 0.0)
            curv = np.where(live & (up - u == u - um),
                            (e[1] - 2.0 * e[0] + e[2]) / (0.5 * step) ** 2, 0.0)
            return e[0], grad, curv

        def fun(u: np.ndarray) -> tuple[float, np.ndarray]:
            e, grad, _ = scaled(u, h_fun)
            return float(e.sum()), grad

        u0 = np.clip((np.concatenate([vertex, vertex]) - a) / safe_w, 0.0, 1.0)
        u0 = np.where(width > 0, u0, 0.0)
        # one Newton step from the parabola's vertex (first and second differences there),
        # then each piece rescaled to a curvature of 1 at the point reached: with every
        # variable bounded, L-BFGS-B's first Hessian estimate is the identity, so its first
        # step is a Newton step too, and its first evaluation is the one made here
        _, grad, curv = scaled(u0, h_start)
        newton = curv > 0
        u0 = np.where(newton, np.clip(u0 - grad / np.where(newton, curv, 1.0), 0.0, 1.0), u0)
        _, _, curv = scaled(u0, h_fun)
        scale = np.where(curv > 0, scale * curv, scale)
        res = optimize.minimize(fun, u0, jac=True, method="L-BFGS-B",
                                bounds=optimize.Bounds(np.zeros(m), np.ones(m)),
                                options={"ftol": 1e-13, "gtol": 1e-6, "maxiter": 50})
        u = np.clip(res.x, 0.0, 1.0)
        x = a + u * width
        found = seen.get(u.tobytes())
        e = found[0][0] if found is not None else model(x, g2)
        right = e[n:] < e[:n]                                # the better piece of each class
        pick = np.where(right, r + n, r)
        x, e = x[pick], e[pick]
        better = e <= e0
        figures = (tuple(f[pick] for f in found[3:])
                   if found is not None and np.all(better) else None)
        return np.where(better, x, x0), np.where(better, e, e0), figures

    everything = np.arange(n_g)
    d_con, e_con, figures = minimize(c_lo, c_hi, everything)
    # the unconstrained optimum differs only where a velocity limit holds the optimum
    held = possible & (((d_con <= c_lo * (1 + 1e-9)) & (c_lo > d_lo))
                       | ((d_con >= c_hi * (1 - 1e-9)) & (c_hi < d_hi)))
    d_free, e_free = d_con.copy(), e_con.copy()
    if np.any(held):
        g = np.flatnonzero(held)
        d_free[g], e_free[g], _ = minimize(d_lo[g], d_hi[g], g)
    if figures is None:
        lc, cv = model(d_con, everything, eac_only=False)
        velocity_max, pump_head_max = lc.velocity_max, lc.pump_head_max
    else:  # the minimizer's last evaluation was at d_con
        velocity_max, pump_head_max = figures
        cv = cl.at(everything, d_con, full=True)
    rho_g = s.density * GRAVITY
    surge = (np.full(n_g, float(constraints.surge_allowance))
             if constraints.surge_allowance is not None
             else joukowsky_head(cv["wave"], velocity_max))
    operating = suction_pressure + pump_head_max * rho_g
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
        elif not _close(d_star, d_free[pick], 1e-6):
            limited = ("velocity_max" if _close(d_star, lo_v[pick], 1e-9)
                       else "velocity_min" if _close(d_star, hi_v[pick], 1e-9)
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
            "material": mat, "class": g["class"], "inner_diameter_m": d_star,
            "eac": float(e_con[pick]), "velocity_m_s": q_design / (np.pi * d_star**2 / 4.0),
            "velocity_peak_m_s": float(velocity_max[pick]), "limited_by": limited,
            "unconstrained_inner_diameter_m": float(d_free[pick]),
            "unconstrained_eac": float(e_free[pick]),
            "at_bound": bool(_close(d_star, g["d"][0], 1e-6)
                             or _close(d_star, g["d"][-1], 1e-6)),
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
    return pd.DataFrame({c: [row[c] for row in rows] for c in OPTIMUM_COLUMNS})
