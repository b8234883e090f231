"""Feasibility of candidates (study layer): velocity, pressure and temperature checks, and why.

:func:`check` applies the study's limits to the model's arrays (any leading sample axis);
:func:`reasons` writes, for the flagged candidates only, why each is infeasible and what else
the reader should know. The rules, in the vocabulary of EN 805:

- velocity_max against the largest velocity of any duty point in the years 1 … N of the
  horizon (the model gives it per sample, within that sample's own horizon);
- velocity_min against the largest duty flow in year 1;
- the operating pressure without surge, suction pressure + ρ g × the highest pump head, against
  PFA, the allowable operating pressure of the class at the service temperature;
- the maximum design pressure MDP, the operating pressure plus the surge (the Joukowsky head
  rise of stopping the largest flow with the candidate's Korteweg wave speed, unless the study
  gives an allowance), against PMA, the allowable maximum operating pressure with surge;
- the service temperature against the material's limit (plastics are derated below it);
- with ``pumping.npsh_required``, the NPSH available at the pump inlet against the NPSH
  required plus a margin (:func:`npsh_check`, added by the study).

A long line's designs are checked by :meth:`pipeopt.longline.LongLine.check` (every stretch
against its own class, the least pressure along the line by construction).

The highest pressure of a single line is at the pump discharge: the grade line falls along the
line faster than the pipe rises in a pumped main, so every other point is at a lower pressure.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from .friction import GRAVITY
from .inputs import Constraints
from .surge import joukowsky_head

__all__ = ["check", "reasons", "join_clauses", "npsh_check"]


def check(candidates: Any, lc: Any, constraints: Constraints, density: float,
          suction_pressure: float = 0.0) -> dict[str, np.ndarray]:
    """The constraint checks of every candidate, as arrays (any leading sample axis).

    Parameters
    ----------
    candidates : pandas.DataFrame or mapping of str to array
        The candidate table, or its columns (wave speed, PFA, PMA at the service temperature).
    lc : LifeCycle
        The model's arrays.
    constraints : Constraints
    density : float
        Liquid density [kg/m³].
    suction_pressure : float
        Gauge pressure at the pump suction [Pa].

    Returns
    -------
    dict of ndarray
        ``surge`` [m], ``operating_pressure`` and ``mdp`` [Pa], ``pfa`` and ``pma`` [Pa],
        masks ``too_slow``, ``too_fast``, ``over_pfa``, ``over_pma``, ``too_hot`` (True where
        the rule is broken) and ``feasible``.
    """
    con = constraints
    if con.surge_allowance is not None:
        surge = np.full(np.shape(lc.velocity_max), float(con.surge_allowance))
    else:
        surge = joukowsky_head(np.asarray(candidates["wave_speed_m_s"], dtype=float),
                               np.asarray(lc.velocity_max))
    rho_g = density * GRAVITY
    operating = suction_pressure + lc.pump_head_max * rho_g
    mdp = operating + surge * rho_g
    pfa = np.asarray(candidates["pfa_pa"], dtype=float)
    pma = np.asarray(candidates["pma_pa"], dtype=float)
    rated = np.isfinite(np.asarray(candidates["pressure_rating_pa"], dtype=float))
    too_hot = ~np.isfinite(np.asarray(candidates["temperature_factor"], dtype=float))
    too_slow = (lc.velocity_design < con.velocity_min if con.velocity_min is not None
                else np.zeros(np.shape(lc.velocity_design), dtype=bool))
    too_fast = (lc.velocity_max > con.velocity_max if con.velocity_max is not None
                else np.zeros(np.shape(lc.velocity_max), dtype=bool))
    over_pfa = rated & ~too_hot & (operating > pfa)
    over_pma = rated & ~too_hot & (mdp > pma)
    return {"surge": surge, "operating_pressure": operating, "mdp": mdp, "pfa": pfa,
            "pma": pma, "too_slow": too_slow, "too_fast": too_fast, "over_pfa": over_pfa,
            "over_pma": over_pma, "too_hot": np.broadcast_to(too_hot, np.shape(too_fast)),
            "feasible": ~(too_slow | too_fast | over_pfa | over_pma | too_hot)}


def npsh_check(checks: dict[str, Any], available: float, required: float,
               margin: float) -> None:
    """Add the pump's suction rule to ``checks`` (in place): NPSH available at the inlet must
    be at least NPSH required + margin [m]. Sets ``npsh_short``, narrows ``feasible`` and adds
    the reason to ``clauses`` (words :func:`reasons` writes)."""
    short = np.full(np.shape(checks["feasible"]), available < required + margin)
    checks["npsh_short"] = short
    checks["feasible"] = checks["feasible"] & ~short
    words = (f"NPSH available {available:.2f} m at the pump inlet is below NPSH required "
             f"{required:.2f} m + margin {margin:.2f} m")
    checks.setdefault("clauses", []).append((short, lambda ix: np.full(ix.size, words)))


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


def reasons(candidates: Any, lc: Any, checks: dict[str, np.ndarray],
            constraints: Constraints, temperature: float) -> tuple[np.ndarray, np.ndarray]:
    """Why each infeasible candidate is infeasible, and notes on the others (one sample).

    ``candidates``: the candidate table or its columns (a mapping of str to array);
    ``temperature`` is the service temperature [K].

    Returns
    -------
    reasons, notes : ndarray of str, shape (C,)
    """
    con = constraints
    surge, mdp, operating = checks["surge"], checks["mdp"], checks["operating_pressure"]
    pfa, pma = checks["pfa"], checks["pma"]
    pclass = np.asarray(candidates["class"], dtype=str)
    material = np.asarray(candidates["material"], dtype=str)
    factor = np.asarray(candidates["temperature_factor"], dtype=float)
    t_max = np.asarray(candidates["max_temperature_k"], dtype=float)
    t_c = temperature - 273.15

    def derated(ix: np.ndarray) -> list[str]:
        return ["" if f == 1 else f" (derated x {f:.3g} at {t_c:.0f} degC)" for f in factor[ix]]

    clauses = [  # (mask, function of the flagged indices giving their words)
        (checks["too_hot"], lambda ix: [
            f"service temperature {t_c:.1f} degC is above the {m} limit of {t - 273.15:.0f} "
            f"degC for its pressure rating" for m, t in zip(material[ix], t_max[ix],
                                                            strict=True)]),
        (checks["too_slow"], lambda ix: np.char.add(
            np.char.mod("velocity %.2f m/s", lc.velocity_design[ix]),
            f" at the largest year-1 duty is below velocity_min {con.velocity_min:g} m/s")),
        (checks["too_fast"], lambda ix: np.char.add(
            np.char.mod("velocity %.2f m/s", lc.velocity_max[ix]),
            f" at the largest flow of any year exceeds velocity_max "
            f"{con.velocity_max:g} m/s")),
        (checks["over_pfa"], lambda ix: [
            f"operating pressure {p / 1e5:.1f} bar exceeds PFA {r / 1e5:.1f} bar of {k}{d}"
            for p, r, k, d in zip(operating[ix], pfa[ix], pclass[ix], derated(ix),
                                  strict=True)]),
        (checks["over_pma"], lambda ix: [
            f"MDP {p / 1e5:.1f} bar (operating {o / 1e5:.1f} + surge {a:.1f} m) exceeds PMA "
            f"{r / 1e5:.1f} bar of {k}{d}" for p, o, a, r, k, d in zip(
                mdp[ix], operating[ix], surge[ix], pma[ix], pclass[ix], derated(ix),
                strict=True)]),
    ]
    clauses += list(checks.get("clauses", ()))  # rules added by the study (NPSH)
    n = factor.shape[0]
    rated = np.isfinite(np.asarray(candidates["pressure_rating_pa"], dtype=float))
    notes = join_clauses(n, [
        (~rated, lambda ix: np.full(ix.size, "no pressure rating: pressure not checked")),
        (rated & (factor < 1), lambda ix: [
            f"rating derated x {f:.3g} for {t_c:.0f} degC" for f in factor[ix]]),
        (np.asarray(lc.transitional_points) > 0, lambda ix: np.full(
            ix.size, "transitional flow (2000 <= Re < 4000) at some duty points")),
        (lc.roughness_capped, lambda ix: np.full(
            ix.size, "aged roughness capped at 0.05 D (Moody chart limit)"))])
    return join_clauses(n, clauses), notes
