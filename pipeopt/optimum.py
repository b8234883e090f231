"""Continuous optimum (study layer): the EAC-minimizing inner diameter of each material.

Between a material's smallest and largest candidate inner diameters, with its cost model, new
roughness and aging, two vectorized scans of the life-cycle model (65 log-spaced diameters,
then 33 around the best of them, every material in one evaluation each) bracket the minimum,
then :func:`scipy.optimize.minimize_scalar` (bounded, xatol 1e-7 m) refines it. It is reported
with the candidate sizes that bracket it.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize

from .lifecycle import Scenario, evaluate
from .variations import Variations

__all__ = ["continuous_optimum"]


def continuous_optimum(s: Scenario, candidates: pd.DataFrame, costs: dict[str, Any],
                       table: pd.DataFrame, variations: Variations | None = None,
                       ) -> pd.DataFrame:
    """The EAC-minimizing inner diameter of each material when D varies continuously.

    Parameters
    ----------
    s : Scenario
    candidates : pandas.DataFrame
        The candidate table (material, inner diameter, roughness, aging).
    costs : dict of str to cost model
        Each material's pipe cost model (``per_metre(diameter)``).
    table : pandas.DataFrame
        The evaluated candidates (``eac``, ``feasible``, ``size``), for the bracketing sizes.
    variations : Variations, optional
        One sample of named inputs (a what-if), as in the evaluation of the table.

    Returns
    -------
    pandas.DataFrame
        One row per material: ``inner_diameter_m``, ``eac``, ``velocity_m_s`` (largest year-1
        duty), ``at_bound``, the bracketing sizes below and above with their inner diameters
        and EAC, and the best feasible size of the material.
    """
    mat_col = candidates["material"].to_numpy()
    d_all = candidates["inner_diameter_m"].to_numpy()
    names = list(dict.fromkeys(mat_col))
    specs = []
    for name in names:
        sel = mat_col == name
        first = int(np.flatnonzero(sel)[0])
        specs.append((name, sel, float(d_all[sel].min()), float(d_all[sel].max()),
                      float(candidates["roughness_m"].iloc[first]),
                      float(candidates["aging_m_per_year"].iloc[first])))
    eps_all = np.array([sp[4] for sp in specs])
    alpha_all = np.array([sp[5] for sp in specs])

    def eac_of(d: np.ndarray, eps: np.ndarray, alpha: np.ndarray, cost: np.ndarray):
        out = evaluate(s, d, eps, alpha, cost, variations=variations, eac_only=True)
        return out if variations is None else out[0]

    def scan(grids: np.ndarray) -> np.ndarray:  # EAC on an (M, n) grid, one evaluation
        n = grids.shape[1]
        cost = np.concatenate([np.asarray(costs[sp[0]].per_metre(g))
                               for sp, g in zip(specs, grids, strict=True)])
        return eac_of(grids.ravel(), np.repeat(eps_all, n), np.repeat(alpha_all, n),
                      cost).reshape(grids.shape)

    # two vectorized scans (coarse, then around each minimum) bracket every material's
    # optimum tightly, so that the bounded minimizer needs few scalar evaluations
    grids = np.array([np.geomspace(lo, hi, 65) for _, _, lo, hi, _, _ in specs])
    values = scan(grids)
    k = np.argmin(values, axis=1)
    rows_m = np.arange(len(specs))
    lo = grids[rows_m, np.maximum(k - 1, 0)]
    hi = grids[rows_m, np.minimum(k + 1, grids.shape[1] - 1)]
    grids = np.linspace(lo, hi, 33, axis=1)
    scan_eac = scan(grids)
    n_grid = grids.shape[1]
    q_design = max(s.duty.flows) / s.parallel
    t_d = table["inner_diameter_m"].to_numpy()
    t_eac = table["eac"].to_numpy()
    t_size = table["size"].to_numpy()
    t_feas = table["feasible"].to_numpy()
    rows = []
    for (name, sel, d_lo, d_hi, eps0, alpha), grid, values in zip(specs, grids, scan_eac,
                                                                  strict=True):
        cost = costs[name]

        def eac(x: float, cost=cost, eps0=eps0, alpha=alpha) -> float:
            d = np.array([x])
            return float(eac_of(d, eps0, alpha, np.asarray(cost.per_metre(d)))[0])

        k = int(np.argmin(values))
        d_star, e_star = float(grid[k]), float(values[k])
        if d_hi > d_lo:
            lo, hi = grid[max(k - 1, 0)], grid[min(k + 1, n_grid - 1)]
            res = optimize.minimize_scalar(eac, bounds=(lo, hi), method="bounded",
                                           options={"xatol": 1e-7})
            if res.fun <= e_star:
                d_star, e_star = float(res.x), float(res.fun)
        below = sel & (t_d <= d_star)
        above = sel & (t_d >= d_star)
        i_lo = np.flatnonzero(below)[np.argmax(t_d[below])] if below.any() else None
        i_hi = np.flatnonzero(above)[np.argmin(t_d[above])] if above.any() else None
        feas = sel & t_feas
        i_best = np.flatnonzero(feas)[np.argmin(t_eac[feas])] if feas.any() else None
        rows.append({
            "material": name, "inner_diameter_m": d_star, "eac": e_star,
            "velocity_m_s": q_design / (np.pi * d_star**2 / 4.0),
            "at_bound": bool(np.isclose(d_star, d_lo, rtol=1e-6)
                             or np.isclose(d_star, d_hi, rtol=1e-6)),
            "lower_size": None if i_lo is None else t_size[i_lo],
            "lower_inner_diameter_m": np.nan if i_lo is None else t_d[i_lo],
            "lower_eac": np.nan if i_lo is None else t_eac[i_lo],
            "upper_size": None if i_hi is None else t_size[i_hi],
            "upper_inner_diameter_m": np.nan if i_hi is None else t_d[i_hi],
            "upper_eac": np.nan if i_hi is None else t_eac[i_hi],
            "best_feasible_size": None if i_best is None else t_size[i_best],
            "best_feasible_eac": np.nan if i_best is None else t_eac[i_best],
        })
    return pd.DataFrame(rows)
