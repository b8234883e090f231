"""Feasibility of candidates (study layer): velocity and pressure checks, and their reasons.

:func:`check` applies the study's limits to the model's arrays (any leading sample axis);
:func:`reasons` writes, for the flagged candidates only, why each is infeasible and what else
the reader should know. The rules:

- velocity_max against the largest velocity of any duty point in the years 1 … N of the
  horizon (the model gives it per sample, within that sample's own horizon);
- velocity_min against the largest duty flow in year 1;
- pressure: the highest pump head plus the surge allowance (the Joukowsky head rise of stopping
  the largest flow with the candidate's Korteweg wave speed, unless the study gives an
  allowance) against the rating of the candidate's class.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

from .friction import GRAVITY
from .inputs import Constraints
from .surge import joukowsky_head

__all__ = ["check", "reasons", "join_clauses"]


def check(candidates: pd.DataFrame, lc: Any, constraints: Constraints,
          density: float) -> dict[str, np.ndarray]:
    """The constraint checks of every candidate, as arrays (any leading sample axis).

    Parameters
    ----------
    candidates : pandas.DataFrame
        The candidate table (wave speed, rating).
    lc : LifeCycle
        The model's arrays.
    constraints : Constraints
    density : float
        Liquid density [kg/m³].

    Returns
    -------
    dict of ndarray
        ``surge`` [m], ``design_pressure`` [Pa], ``rating`` [Pa], masks ``too_slow``,
        ``too_fast``, ``over_pressure`` (True where the rule is broken) and ``feasible``.
    """
    con = constraints
    if con.surge_allowance is not None:
        surge = np.full(np.shape(lc.velocity_max), float(con.surge_allowance))
    else:
        surge = joukowsky_head(candidates["wave_speed_m_s"].to_numpy(),
                               np.asarray(lc.velocity_max))
    design_pressure = (lc.pump_head_max + surge) * (density * GRAVITY)
    rating = candidates["pressure_rating_pa"].to_numpy(dtype=float)
    too_slow = (lc.velocity_design < con.velocity_min if con.velocity_min is not None
                else np.zeros(np.shape(lc.velocity_design), dtype=bool))
    too_fast = (lc.velocity_max > con.velocity_max if con.velocity_max is not None
                else np.zeros(np.shape(lc.velocity_max), dtype=bool))
    over = np.isfinite(rating) & (design_pressure > rating)
    return {"surge": surge, "design_pressure": design_pressure, "rating": rating,
            "too_slow": too_slow, "too_fast": too_fast, "over_pressure": over,
            "feasible": ~(too_slow | too_fast | over)}


def join_clauses(n: int, clauses: list) -> np.ndarray:
    """Words for each of n rows: the clauses whose mask holds there, joined by '; '.

    Only the flagged rows are formatted; the rest stay empty strings.
    """
    out = np.full(n, "", dtype=object)
    for mask, words in clauses:
        ix = np.flatnonzero(mask)
        if ix.size == 0:
            continue
        text = np.asarray(words(ix), dtype=object)
        prev = out[ix]
        out[ix] = np.where(prev == "", text, prev + "; " + text)
    return out


def reasons(candidates: pd.DataFrame, lc: Any, checks: dict[str, np.ndarray],
            constraints: Constraints) -> tuple[np.ndarray, np.ndarray]:
    """Why each infeasible candidate is infeasible, and notes on the others (one sample).

    Returns
    -------
    reasons, notes : ndarray of str, shape (C,)
    """
    con = constraints
    surge, design_pressure = checks["surge"], checks["design_pressure"]
    rating = checks["rating"]
    pclass = candidates["pressure_class"].to_numpy(dtype=str)
    clauses = [  # (mask, function of the flagged indices giving their words)
        (checks["too_slow"], lambda ix: np.char.add(
            np.char.mod("velocity %.2f m/s", lc.velocity_design[ix]),
            f" at the largest year-1 duty is below velocity_min {con.velocity_min:g} m/s")),
        (checks["too_fast"], lambda ix: np.char.add(
            np.char.mod("velocity %.2f m/s", lc.velocity_max[ix]),
            f" at the largest flow of any year exceeds velocity_max "
            f"{con.velocity_max:g} m/s")),
        (checks["over_pressure"], lambda ix: [
            f"pump head {h:.1f} m + surge {a:.1f} m = {p / 1e5:.1f} bar exceeds the "
            f"{r / 1e5:.1f} bar rating of {k}" for h, a, p, r, k in zip(
                lc.pump_head_max[ix], surge[ix], design_pressure[ix], rating[ix],
                pclass[ix], strict=True)]),
    ]
    n = len(candidates)
    notes = join_clauses(n, [
        (~np.isfinite(rating), lambda ix: np.full(ix.size,
                                                  "no pressure rating: pressure not checked")),
        (np.asarray(lc.transitional_points) > 0, lambda ix: np.full(
            ix.size, "transitional flow (2000 <= Re < 4000) at some duty points")),
        (lc.roughness_capped, lambda ix: np.full(
            ix.size, "aged roughness capped at 0.05 D (Moody chart limit)"))])
    return join_clauses(n, clauses), notes
