"""Long lines (study layer): a route over a ground profile, sections in series, boosters.

A sizing study becomes a long-line study when it has a ground profile (``[[profile]]``),
sections in series (``[[section]]``) or booster stations (``[boosters]``). :class:`LongLine`
then assembles, from the study's inputs and its candidate table:

- the points of the route: the profile's, with the ends of sections, the candidate booster
  sites and the equipment added (ground interpolated linearly between profile points);
- the *pipes*: one (material, nominal size) per section, every combination of those the
  sections allow, each size with its classes in order of cost;
- the arrays of :class:`pipeopt.stations.LineModel`;

and finds, for every pipe and every number of boosters n = 0 … N, the least-cost layout by
dynamic programming (:func:`pipeopt.stations.optimal_layouts`, with the hydraulics of each
size's lightest class), then telescopes the classes at that layout with each class's own bore
(:func:`pipeopt.stations.telescope`) and evaluates the result exactly
(:func:`pipeopt.stations.evaluate_layouts`). Each (pipe, n) is a *design*, a row of the study's
candidate table; the best is the feasible design with the least EAC.

It holds no formula: the physics is in :mod:`pipeopt.profile`, :mod:`pipeopt.pumps` and
:mod:`pipeopt.losses`, the money in :mod:`pipeopt.stations` and :mod:`pipeopt.cashflow`.
"""

from __future__ import annotations

import itertools
import re
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from .candidates import CANDIDATE_COLUMNS
from .errors import InputError
from .feasibility import join_clauses
from .friction import GRAVITY
from .lifecycle import LifeCycle, Scenario
from .profile import GroundProfile, least_heads, stretches_below
from .pumps import standard_atmosphere_pressure
from .stations import (
    MAX_POSITIONS,
    Boosters,
    LineModel,
    evaluate_layouts,
    optimal_layouts,
    telescope,
)
from .variations import Variations

__all__ = ["LongLine", "LineLifeCycle", "MAX_PIPES", "PROFILE_COLUMNS", "STATION_COLUMNS"]

#: The most pipe combinations (one pipe per section) a study may hold.
MAX_PIPES = 3000
#: Columns of :attr:`pipeopt.sizing.SizingResult.profile`.
PROFILE_COLUMNS = ["chainage_m", "ground_m", "pipe_m", "head_min_m", "head_max_m",
                   "pressure_min_bar", "pressure_max_bar", "class", "station", "size",
                   "pfa_bar", "pma_bar", "least_pressure_bar", "pfa_head_m", "least_head_m"]
#: Columns of :attr:`pipeopt.sizing.SizingResult.stations`.
STATION_COLUMNS = ["station", "chainage_m", "ground_m", "head_max_m", "peak_kw",
                   "installed_kw", "suction_pressure_min_bar", "discharge_pressure_max_bar",
                   "npsh_available_m", "npsh_required_m"]


def _norm(label: str) -> str:
    return re.sub(r"[\s_]+", "", str(label)).upper()


@dataclass
class LineLifeCycle(LifeCycle):
    """:class:`~pipeopt.lifecycle.LifeCycle` of long-line designs, with the line's arrays
    (``line``: highest pressure and velocity of every stretch, station figures, envelopes)."""

    line: dict = field(default_factory=dict)

    _SAMPLED = ("stretch_pressure", "highest_pressure", "stretch_velocity", "design_velocity",
                "station_peak_kw", "station_head_m", "pump_outside")

    def take(self, sample: int) -> LineLifeCycle:
        plain = LifeCycle(**{k: v for k, v in vars(self).items() if k != "line"}).take(sample)
        line = {k: (np.asarray(v)[sample] if k in self._SAMPLED else v)
                for k, v in self.line.items()}
        return LineLifeCycle(**vars(plain), line=line)


class LongLine:
    """The long line of a sizing study and its designs.

    Parameters
    ----------
    scenario : Scenario
        The study's SI inputs (fluid, friction, duty, tariff, head station, economics).
    fluid : Fluid
    line : Line
    pumping : Pumping
    constraints : Constraints
    candidates : pandas.DataFrame
        The study's candidate table (every size and class of its materials, priced).
    materials : tuple of str
        The study's material names, in order.
    profile : GroundProfile, optional
    sections : tuple of LineSection
    boosters : Boosters, optional
    equipment : tuple of Equipment
    fittings : Fittings, optional
    temperature : float
        Service temperature [K].
    """

    def __init__(self, scenario: Scenario, fluid: Any, line: Any, pumping: Any,
                 constraints: Any, candidates: pd.DataFrame, materials: tuple[str, ...],
                 profile: GroundProfile | None, sections: tuple, boosters: Boosters | None,
                 equipment: tuple, fittings: Any, temperature: float) -> None:
        self.scenario = scenario
        self.constraints = constraints
        self.temperature = temperature
        self.profile_given = profile is not None
        self.boosters = boosters
        rho_g = scenario.density * GRAVITY
        length = float(line.length)
        if profile is not None:
            if line.cover is None:
                raise InputError("line.cover: required with a ground profile (the depth of "
                                 "cover over the pipe crown, e.g. cover = \"1.2 m\")")
            if abs(profile.length - length) > max(1.0, 1e-6 * length):
                raise InputError(f"line.length ({length / 1000:g} km) differs from the "
                                 f"profile's ({profile.length / 1000:g} km, last chainage less "
                                 f"the first); leave line.length out or make them agree")
            start = float(profile.x[0])
        else:
            if line.cover is not None or line.source_level is not None:
                key = "cover" if line.cover is not None else "source_level"
                raise InputError(f"line.{key}: needs a ground profile ([[profile]])")
            start = 0.0
            profile = GroundProfile.from_si(chainage=(0.0, length), elevation=(0.0, 0.0))
        end = start + length
        # ----- sections -----------------------------------------------------------------------
        sections = tuple(sections) or (None,)
        bounds = [start]
        for i, sec in enumerate(sections):
            last = i == len(sections) - 1
            if sec is None or (sec.length is None and sec.end is None):
                if not last:
                    raise InputError(f"section[{i}]: give length or end (only the last section "
                                     f"may run to the end of the line)")
                bounds.append(end)
            else:
                stop = bounds[-1] + sec.length if sec.length is not None else float(sec.end)
                if stop <= bounds[-1] + 1e-9:
                    raise InputError(f"section[{i}].end: must be beyond the section's start "
                                     f"({bounds[-1] / 1000:g} km); got {stop / 1000:g} km")
                if stop > end + max(1.0, 1e-6 * length):
                    raise InputError(f"section[{i}]: ends at {stop / 1000:g} km, beyond the end "
                                     f"of the line ({end / 1000:g} km)")
                bounds.append(min(stop, end))
        if abs(bounds[-1] - end) > max(1.0, 1e-6 * length):
            raise InputError(f"section: the sections end at {bounds[-1] / 1000:g} km, before the "
                             f"end of the line ({end / 1000:g} km); let the last run to the end")
        bounds[-1] = end
        # ----- sites and equipment ------------------------------------------------------------
        sites = np.asarray(boosters.sites if boosters is not None else (), dtype=float)
        for x in sites:
            if not start < x < end:
                raise InputError(f"boosters.sites: {x / 1000:g} km is not within the line "
                                 f"({start / 1000:g} to {end / 1000:g} km, ends excluded)")
        at = []
        for i, e in enumerate(equipment):
            x = start if e.at is None else float(e.at)
            if not start <= x < end:
                raise InputError(f"equipment[{i}].at: {x / 1000:g} km is not within the line "
                                 f"({start / 1000:g} to {end / 1000:g} km, end excluded)")
            at.append(x)
        chain, ground = profile.with_points(np.concatenate([bounds, sites, at]))
        if not self.profile_given:
            ground = np.zeros_like(chain)
        n_pts = chain.size
        lengths = np.diff(chain)
        mid = 0.5 * (chain[:-1] + chain[1:])
        section_of = np.clip(np.searchsorted(np.asarray(bounds), mid) - 1, 0,
                             len(sections) - 1)
        site_idx = np.searchsorted(chain, sites)
        if boosters is not None and not sites.size:     # every point between the ends
            site_idx = np.arange(1, n_pts - 1)
        if site_idx.size > MAX_POSITIONS:
            raise InputError(f"boosters: {site_idx.size} candidate points, more than the "
                             f"{MAX_POSITIONS} the optimizer takes; give boosters.sites")
        n_boost = 0 if boosters is None else int(boosters.max_count)
        if n_boost > site_idx.size:
            raise InputError(f"boosters.max_count ({n_boost}) exceeds the {site_idx.size} "
                             f"candidate site(s)")
        equip_c = np.zeros(n_pts - 1)
        for e, x in zip(equipment, at, strict=True):  # a few items
            equip_c[int(np.searchsorted(chain, x))] += e.coefficient(scenario.density)
        # ----- pipes -------------------------------------------------------------------------
        self.groups = self._groups(candidates)
        choices = [self._section_groups(i, sec, materials) for i, sec in enumerate(sections)]
        n_pipes = int(np.prod([len(c) for c in choices]))
        if n_pipes > MAX_PIPES:
            raise InputError(f"section: {n_pipes:,} combinations of sizes, more than the "
                             f"{MAX_PIPES:,} a study may hold; narrow the sizes of a section")
        combos = np.array(list(itertools.product(*choices)), dtype=int).reshape(n_pipes, -1)
        grp = combos[:, section_of]                                           # (C, P - 1)
        ga = self._group_arrays(fittings, float(line.minor_loss_k))
        share = lengths / length
        self.section_bounds = np.asarray(bounds)
        self.section_of = section_of
        self.combos = combos
        self.sections = sections
        # ----- the least heads ----------------------------------------------------------------
        if pumping.elevation is not None and self.profile_given:
            raise InputError("pumping.elevation: with a ground profile each station's elevation "
                             "comes from the profile")
        # elevations above sea level (a level line: the pump's, pumping.elevation)
        above_sea = (ground if self.profile_given else
                     np.full(n_pts, float(pumping.elevation or 0.0)))
        pv = fluid.vapour_pressure
        least = least_heads(above_sea, scenario.density, pv, constraints.pressure_min,
                            float(constraints.vapour_margin))
        suction = least.copy()
        if boosters is not None and boosters.suction_pressure_min is not None:
            suction = np.maximum(suction, boosters.suction_pressure_min / rho_g)
        self.npsh_required = pumping.npsh_required
        self.npsh_margin = (0.0 if pumping.npsh_required is None else
                            float(pumping.npsh_margin if pumping.npsh_margin is not None
                                  else 1.0))
        atm = np.asarray(standard_atmosphere_pressure(above_sea))
        if pumping.npsh_required is not None:
            if pv is None:
                raise InputError("pumping.npsh_required: the fluid gives no vapour pressure; "
                                 "give fluid.vapour_pressure")
            suction = np.maximum(suction, (pv - atm) / rho_g + self.npsh_required
                                 + self.npsh_margin)
        self.atmosphere = atm
        cover = float(line.cover or 0.0)
        source = (float(line.source_level) if line.source_level is not None
                  else float(ground[0] - cover))
        head_in = source + float(line.suction_pressure) / rho_g
        self.model = LineModel(
            scenario=scenario, pump=pumping.pump_set(scenario.duty),
            boosters=boosters if n_boost else None,
            chainage=chain, ground=ground, lengths=lengths,
            sites=site_idx if n_boost else np.zeros(0, dtype=int), equipment=equip_c,
            cover=cover, head_in=head_in, delivery=head_in + float(line.static_head),
            least=least, suction_least=suction,
            surge_allowance=(None if constraints.surge_allowance is None
                             else float(constraints.surge_allowance)),
            bore=ga["bore"][grp], outside=ga["od"][grp], cost=ga["cost"][grp],
            co2=ga["co2"][grp], pfa=ga["pfa"][grp], pma=ga["pma"][grp], wave=ga["wave"][grp],
            minor_k=ga["k"][grp] * share[None, :, None], rated=ga["rated"][grp],
            usable=ga["usable"][grp], roughness=ga["eps"][grp], aging=ga["alpha"][grp])
        if not self.profile_given:  # a level line: the axis at the pump's level
            self.model.outside = np.zeros_like(self.model.outside)
        self.source_level = source
        self.vapour_pressure = pv
        self.grp = grp
        self._solve(n_boost)

    # ----- pipes ------------------------------------------------------------------------------
    @staticmethod
    def _groups(candidates: pd.DataFrame) -> list[pd.DataFrame]:
        """The classes of every (material, nominal size), usable first, then by cost."""
        out = []
        c = candidates.assign(_usable=np.isfinite(candidates["temperature_factor"]))
        for _, rows in c.groupby(["material", "nominal"], sort=False):
            out.append(rows.sort_values(["_usable", "cost_per_metre"],
                                        ascending=[False, True], kind="stable"))
        return out

    def _section_groups(self, i: int, sec: Any, materials: tuple[str, ...]) -> list[int]:
        where = f"section[{i}]"
        mats = materials if sec is None or not sec.materials else sec.materials
        for m in mats:
            if m not in materials:
                raise InputError(f"{where}.materials: {m!r} is not a [[material]] of the study "
                                 f"({', '.join(materials)})")
        keep = []
        wanted = None if sec is None or not sec.sizes else {_norm(x) for x in sec.sizes}
        for k, g in enumerate(self.groups):
            first = g.iloc[0]
            if first["material"] not in mats:
                continue
            if wanted is not None and _norm(first["nominal"]) not in wanted:
                continue
            bore = g["inner_diameter_m"].max()
            if sec is not None and sec.min_diameter is not None and bore < sec.min_diameter:
                continue
            if sec is not None and sec.max_diameter is not None and bore > sec.max_diameter:
                continue
            keep.append(k)
        if wanted is not None:
            found = {_norm(self.groups[k].iloc[0]["nominal"]) for k in keep}
            missing = sorted(wanted - found)
            if missing:
                known = sorted({str(g.iloc[0]["nominal"]) for g in self.groups
                                if g.iloc[0]["material"] in mats})
                raise InputError(f"{where}.sizes: no nominal size {missing[0]!r} among the "
                                 f"candidates of {', '.join(mats)} (sizes: {', '.join(known)})")
        if not keep:
            raise InputError(f"{where}: no candidate size matches the section's materials, "
                             f"sizes and diameter range")
        return keep

    def _group_arrays(self, fittings: Any, line_k: float) -> dict[str, np.ndarray]:
        n_g = len(self.groups)
        n_j = max(len(g) for g in self.groups)
        out = {k: np.full((n_g, n_j), np.nan) for k in
               ("bore", "od", "cost", "co2", "pfa", "pma", "wave", "k", "mass", "wall",
                "lining")}
        out["rated"] = np.zeros((n_g, n_j), dtype=bool)
        out["usable"] = np.zeros((n_g, n_j), dtype=bool)
        out["eps"] = np.zeros(n_g)
        out["alpha"] = np.zeros(n_g)
        names = np.full((n_g, n_j), "", dtype=object)
        sizes = np.full((n_g, n_j), "", dtype=object)
        cols = {"bore": "inner_diameter_m", "od": "outside_diameter_m", "cost": "cost_per_metre",
                "co2": "embodied_co2_kg_per_m", "pfa": "pfa_pa", "pma": "pma_pa",
                "wave": "wave_speed_m_s", "mass": "mass_kg_per_m", "wall": "wall_m",
                "lining": "lining_m"}
        for i, g in enumerate(self.groups):  # the (material, size) groups: table assembly
            n = len(g)
            for key, col in cols.items():
                out[key][i, :n] = g[col].to_numpy(dtype=float)
            out["rated"][i, :n] = np.isfinite(g["pressure_rating_pa"].to_numpy(dtype=float))
            out["usable"][i, :n] = g["_usable"].to_numpy(dtype=bool)
            out["eps"][i] = float(g["roughness_m"].iloc[0])
            out["alpha"][i] = float(g["aging_m_per_year"].iloc[0])
            names[i, :n] = g["class"].to_numpy(dtype=object)
            sizes[i, :n] = g["size"].to_numpy(dtype=object)
            # padding classes: the first class's geometry (never chosen: not usable)
            for key in cols:
                out[key][i, n:] = out[key][i, 0]
            out["cost"][i, n:] = np.inf
        bore = out["bore"]
        out["k"] = line_k + (np.zeros_like(bore) if fittings is None
                             else np.asarray(fittings.k_sum(bore)))
        self.class_names = names
        self.size_names = sizes
        self.group_arrays = out
        return out

    # ----- solving ----------------------------------------------------------------------------
    def _solve(self, n_boost: int) -> None:
        m = self.model
        n_pipes = self.combos.shape[0]
        # the DP with the hydraulics of each size's lightest class (class 0: the cheapest)
        dp = optimal_layouts(m, np.zeros((n_pipes, m.n_points - 1), dtype=int))
        ok = np.isfinite(dp["cost"])                                          # (C, N + 1)
        pipe, count = np.nonzero(ok)
        stations = dp["stations"][pipe, count]                                # (D, N + 1)
        classes, excess, _ = telescope(m, pipe, stations,
                                       np.zeros((pipe.size, m.n_points - 1), dtype=int))
        self.design_pipe = pipe
        self.design_boosters = count
        self.design_stations = stations
        self.design_classes = classes
        self.design_excess = excess
        self.dp_cost = dp["cost"][pipe, count]
        lc, extra = evaluate_layouts(m, pipe, classes, stations)
        self.base_lc = lc
        self.base_extra = extra
        self.table = self._design_table(lc, extra)

    def _labels(self) -> dict[str, list]:
        pipe, cls = self.design_pipe, self.design_classes
        grp = self.grp[pipe]                                                  # (D, P - 1)
        names = self.class_names[grp, cls]                                    # (D, P - 1)
        x = self.model.chainage
        out = {"material": [], "size": [], "nominal": [], "classes": [], "along": [],
               "chainages": []}
        for d in range(pipe.size):  # formatting the words of each design
            groups = list(dict.fromkeys(self.combos[pipe[d]]))
            mats = list(dict.fromkeys(str(self.groups[g].iloc[0]["material"]) for g in groups))
            noms = [str(self.groups[g].iloc[0]["nominal"]) for g in self.combos[pipe[d]]]
            n = int(self.design_boosters[d])
            st = self.design_stations[d]
            km = [f"{x[p] / 1000:.1f}" for p in st[1:] if p >= 0]
            out["material"].append(" + ".join(mats))
            out["nominal"].append(" / ".join(noms))
            out["size"].append(f"{' / '.join(dict.fromkeys(noms))}, {n} booster"
                               f"{'s' if n != 1 else ''}"
                               + (f" at {', '.join(km)} km" if km else ""))
            out["classes"].append("/".join(dict.fromkeys(str(c) for c in names[d])))
            runs, start = [], 0
            for s in range(1, names.shape[1] + 1):
                if s == names.shape[1] or names[d, s] != names[d, start] \
                        or grp[d, s] != grp[d, start]:
                    runs.append(f"{self.size_names[grp[d, start], cls[d, start]]} "
                                f"{x[start] / 1000:.1f}-{x[s] / 1000:.1f} km")
                    start = s
            out["along"].append("; ".join(runs))
            out["chainages"].append(", ".join(km))
        return out

    def _design_table(self, lc: LifeCycle, extra: dict) -> pd.DataFrame:
        m = self.model
        pipe, cls = self.design_pipe, self.design_classes
        grp = self.grp[pipe]
        ga = self.group_arrays
        def take(name: str) -> np.ndarray:  # (D, P - 1)
            return ga[name][grp, cls]

        lengths = m.lengths
        total = lengths.sum()
        pressure = np.asarray(extra["stretch_pressure"])
        gov = self._governing(pressure, self._stretch_mdp(
            pressure, np.asarray(extra["stretch_velocity"]))[1])
        rows = np.arange(pipe.size)
        lab = self._labels()
        prov = []
        for d in range(pipe.size):  # words
            prov.append("; ".join(dict.fromkeys(
                str(self.groups[g].iloc[0]["provenance"]) for g in self.combos[pipe[d]])))
        temp = np.array([[float(self.groups[g]["temperature_factor"].min()) for g in row]
                         for row in self.combos])[pipe].min(axis=1)
        t_max = np.array([[float(self.groups[g]["max_temperature_k"].min()) for g in row]
                          for row in self.combos])[pipe].min(axis=1)
        table = pd.DataFrame({
            "material": lab["material"], "size": lab["size"], "nominal": lab["nominal"],
            "class": lab["classes"], "outside_diameter_m": take("od")[:, 0],
            "wall_m": take("wall")[:, 0], "lining_m": take("lining")[:, 0],
            "inner_diameter_m": take("bore").min(axis=1),
            "mass_kg_per_m": (take("mass") * lengths).sum(axis=1) / total,
            "roughness_m": m.roughness[pipe, 0], "aging_m_per_year": m.aging[pipe, 0],
            "pressure_rating_pa": self._rating(pipe, cls)[rows, gov],
            "temperature_factor": temp,
            "pfa_pa": take("pfa")[rows, gov], "pma_pa": take("pma")[rows, gov],
            "max_temperature_k": t_max,
            "wave_speed_m_s": take("wave")[rows, gov],
            "cost_per_metre": (take("cost") * lengths).sum(axis=1) / total,
            "embodied_co2_kg_per_m": (take("co2") * lengths).sum(axis=1) / total,
            "provenance": prov})[CANDIDATE_COLUMNS]
        table["boosters"] = self.design_boosters
        table["booster_chainages_km"] = lab["chainages"]
        table["classes_along"] = lab["along"]
        return table

    def _rating(self, pipe: np.ndarray, cls: np.ndarray) -> np.ndarray:
        """Rating at the reference temperature of each stretch's class [Pa] (D, P − 1)."""
        out = np.full(cls.shape, np.nan)
        grp = self.grp[pipe]
        for g in np.unique(grp):  # the groups present
            rows = self.groups[g]["pressure_rating_pa"].to_numpy(dtype=float)
            sel = grp == g
            out[sel] = rows[np.minimum(cls[sel], rows.size - 1)]
        return out

    def _stretch_mdp(self, pressure: np.ndarray, velocity: np.ndarray
                     ) -> tuple[np.ndarray, np.ndarray]:
        """Surge head [m] and EN 805 MDP [Pa] of every stretch of each design, from operating
        pressures [Pa] and velocities [m/s] ([S,] D, P − 1): the study's surge allowance, or
        the Joukowsky rise of stopping the flow, a V / g with the class's wave speed (the
        formula of :func:`pipeopt.surge.joukowsky_head`, here on arrays already checked)."""
        con = self.constraints
        surge = (np.full(np.shape(velocity), float(con.surge_allowance))
                 if con.surge_allowance is not None
                 else self.model.pick("wave", self.design_pipe, self.design_classes)
                 * velocity / GRAVITY)
        return surge, pressure + self.scenario.density * GRAVITY * surge

    def _governing(self, pressure: np.ndarray, mdp: np.ndarray) -> np.ndarray:
        """The governing stretch of each design: the least margin to its PFA (operating
        pressure) or to its PMA (MDP), the EN 805 checks; the highest pressure where no
        stretch is rated. From pressures and MDPs [Pa] ([S,] D, P − 1); the same stretch gives
        the table's rating and the checks' PFA, PMA and MDP."""
        m = self.model
        pipe, cls = self.design_pipe, self.design_classes
        pfa, pma = m.pick("pfa", pipe, cls), m.pick("pma", pipe, cls)
        rated = m.pick("rated", pipe, cls)
        margin = np.where(rated, np.minimum(pfa - pressure, pma - mdp), np.inf)
        return np.where(np.isfinite(margin).any(axis=-1), np.argmin(margin, axis=-1),
                        np.argmax(pressure, axis=-1))

    # ----- evaluation -------------------------------------------------------------------------
    def evaluate(self, variations: Variations | None = None, yearly: bool = True
                 ) -> LineLifeCycle:
        """The designs' life-cycle arrays for the named inputs ``variations``."""
        if variations is None and yearly:
            lc, extra = self.base_lc, self.base_extra
        else:
            lc, extra = evaluate_layouts(self.model, self.design_pipe, self.design_classes,
                                         self.design_stations, variations, yearly)
        return LineLifeCycle(**vars(lc), line=extra)

    def material_share(self, material: str) -> np.ndarray:
        """The share of each design's pipe capital of ``material`` (D,)."""
        pipe, cls = self.design_pipe, self.design_classes
        grp = self.grp[pipe]
        cost = self.model.pick("cost", pipe, cls) * self.model.lengths
        mats = np.array([str(g.iloc[0]["material"]) for g in self.groups], dtype=object)
        mine = mats[grp] == material
        return (cost * mine).sum(axis=1) / cost.sum(axis=1)

    def npsh_available(self) -> np.ndarray:
        """NPSH available at the head station's inlet of each design [m] (D,)."""
        m = self.model
        z0 = m.axis(self.design_pipe)[:, 0]
        pv = self.vapour_pressure or 0.0
        return (m.head_in - z0 + (self.atmosphere[0] - pv)
                / (self.scenario.density * GRAVITY))

    def check(self, lc: LineLifeCycle) -> dict[str, Any]:
        """The checks of the designs (the keys of :func:`pipeopt.feasibility.check`, with the
        long line's own: every stretch against its class, the head station's NPSH)."""
        m, con = self.model, self.constraints
        pipe, cls = self.design_pipe, self.design_classes
        p = np.asarray(lc.line["stretch_pressure"])                            # ([S,] D, Z)
        vel = np.asarray(lc.line["stretch_velocity"])
        v_design = np.asarray(lc.line["design_velocity"])
        pfa = m.pick("pfa", pipe, cls)
        pma = m.pick("pma", pipe, cls)
        rated = m.pick("rated", pipe, cls)
        usable = m.pick("usable", pipe, cls)
        surge, mdp = self._stretch_mdp(p, vel)
        over_pfa_z = rated & usable & (p > pfa * (1 + 1e-12))
        over_pma_z = rated & usable & (mdp > pma * (1 + 1e-12))
        gov = self._governing(p, mdp)
        def pick(a: np.ndarray) -> np.ndarray:  # the governing stretch's figure
            return np.take_along_axis(np.broadcast_to(a, p.shape), gov[..., None],
                                      axis=-1)[..., 0]

        shape = p.shape[:-1]
        too_hot = np.broadcast_to(~usable.all(axis=-1), shape)
        too_fast = (vel > con.velocity_max).any(axis=-1) if con.velocity_max is not None \
            else np.zeros(shape, dtype=bool)
        too_slow = (v_design < con.velocity_min).any(axis=-1) if con.velocity_min is not None \
            else np.zeros(shape, dtype=bool)
        over_pfa, over_pma = over_pfa_z.any(axis=-1), over_pma_z.any(axis=-1)
        npsh_short = np.zeros(shape, dtype=bool)
        if self.npsh_required is not None:
            npsh_short = np.broadcast_to(
                self.npsh_available() < self.npsh_required + self.npsh_margin - 1e-12, shape)
        feasible = ~(too_slow | too_fast | over_pfa | over_pma | too_hot | npsh_short)
        return {"surge": pick(surge), "operating_pressure": pick(p), "mdp": pick(mdp),
                "pfa": pick(pfa), "pma": pick(pma), "too_slow": too_slow, "too_fast": too_fast,
                "over_pfa": over_pfa, "over_pma": over_pma, "too_hot": too_hot,
                "npsh_short": npsh_short, "feasible": feasible,
                "stretch_over_pfa": over_pfa_z, "stretch_over_pma": over_pma_z,
                "stretch_mdp": mdp, "highest_pressure": p.max(axis=-1)}

    def _range(self, mask: np.ndarray) -> str:
        """Chainage ranges [km] of the stretches flagged in ``mask`` (P − 1,)."""
        x = self.model.chainage
        runs, start = [], None
        for s in range(mask.size + 1):  # words for one design
            on = s < mask.size and mask[s]
            if on and start is None:
                start = s
            elif not on and start is not None:
                runs.append(f"{x[start] / 1000:.1f}-{x[s] / 1000:.1f} km")
                start = None
        return ", ".join(runs)

    def reasons(self, lc: LineLifeCycle, checks: dict[str, Any]) -> tuple[np.ndarray,
                                                                           np.ndarray]:
        """Why each design is infeasible, and notes (one sample)."""
        con = self.constraints
        pipe, cls = self.design_pipe, self.design_classes
        names = self.class_names[self.grp[pipe], cls]
        p = np.asarray(lc.line["stretch_pressure"])
        vel = np.asarray(lc.line["stretch_velocity"])
        v_design = np.asarray(lc.line["design_velocity"])
        pfa = self.model.pick("pfa", pipe, cls)
        pma = self.model.pick("pma", pipe, cls)
        mdp = checks["stretch_mdp"]
        t_c = self.temperature - 273.15

        def worst(ix: np.ndarray, excess: np.ndarray, words: Any) -> list[str]:
            out = []
            for d in ix:
                z = int(np.argmax(excess[d]))
                out.append(words(d, z) + f" at {self._range(excess[d] > 0)}")
            return out

        clauses = [
            (checks["too_hot"], lambda ix: [
                f"service temperature {t_c:.1f} degC is above a class's limit for its rating "
                f"on some stretch" for _ in ix]),
            (checks["too_slow"], lambda ix: [
                f"velocity {v_design[d].min():.2f} m/s at the largest year-1 duty is below "
                f"velocity_min {con.velocity_min:g} m/s at "
                f"{self._range(v_design[d] < con.velocity_min)}" for d in ix]),
            (checks["too_fast"], lambda ix: [
                f"velocity {vel[d].max():.2f} m/s at the largest flow of any year exceeds "
                f"velocity_max {con.velocity_max:g} m/s at "
                f"{self._range(vel[d] > con.velocity_max)}" for d in ix]),
            (checks["over_pfa"], lambda ix: worst(
                ix, np.where(checks["stretch_over_pfa"], p - pfa, 0.0),
                lambda d, z: f"operating pressure {p[d, z] / 1e5:.1f} bar exceeds PFA "
                             f"{pfa[d, z] / 1e5:.1f} bar of {names[d, z]}")),
            (checks["over_pma"], lambda ix: worst(
                ix, np.where(checks["stretch_over_pma"], mdp - pma, 0.0),
                lambda d, z: f"MDP {mdp[d, z] / 1e5:.1f} bar exceeds PMA "
                             f"{pma[d, z] / 1e5:.1f} bar of {names[d, z]}")),
            (checks["npsh_short"], lambda ix: [
                f"NPSH available {self.npsh_available()[d]:.2f} m at the head station's inlet "
                f"is below NPSH required {self.npsh_required:.2f} m + margin "
                f"{self.npsh_margin:.2f} m" for d in ix]),
        ]
        low = self.base_extra["pressure_min"]                                 # (D, P)
        x = self.model.chainage
        n = pipe.size
        notes = join_clauses(n, [
            (low.min(axis=1) < 0, lambda ix: [
                "sub-atmospheric at " + ", ".join(
                    f"{a / 1000:.1f}-{b / 1000:.1f} km" for a, b in
                    stretches_below(x, low[d])) + f" (lowest {low[d].min() / 1e5:.2f} bar)"
                for d in ix]),
            (np.asarray(lc.line["pump_outside"]), lambda ix: np.full(
                ix.size, "pumps run outside 70-120 % of their best-efficiency flow at some "
                         "duty points")),
            (np.asarray(lc.transitional_points) > 0, lambda ix: np.full(
                ix.size, "transitional flow (2000 <= Re < 4000) at some duty points")),
            (np.asarray(lc.roughness_capped), lambda ix: np.full(
                ix.size, "aged roughness capped at 0.05 D (Moody chart limit)"))])
        return join_clauses(n, clauses), notes

    # ----- tables of one design -----------------------------------------------------------
    def _one(self, index: int, variations: Variations | None) -> dict[str, Any]:
        sel = np.array([index])
        lc, extra = evaluate_layouts(self.model, self.design_pipe[sel],
                                     self.design_classes[sel], self.design_stations[sel],
                                     variations, yearly=False)
        if variations is not None:
            extra = {k: (np.asarray(v)[0] if k in LineLifeCycle._SAMPLED else v)
                     for k, v in extra.items()}
        return extra

    def profile_table(self, index: int, variations: Variations | None = None) -> pd.DataFrame:
        """The grade-line envelope along design ``index`` (:data:`PROFILE_COLUMNS`).

        One row per point; a station has two rows at its chainage, its suction side (named
        ``"... suction"``) and then its discharge side, so that the lift it gives shows as a
        step.
        """
        e = self._one(index, variations)
        m = self.model
        pipe, cls = self.design_pipe[index], self.design_classes[index]
        grp = self.grp[pipe]
        rho_g = self.scenario.density * GRAVITY

        def per_point(a: np.ndarray) -> np.ndarray:
            return np.concatenate([a, a[-1:]])

        ga = self.group_arrays
        pts = np.arange(m.n_points)
        cols = {"chainage_m": m.chainage, "ground_m": m.ground, "pipe_m": e["axis"][0],
                "head_min_m": e["discharge_min"][0], "head_max_m": e["discharge_max"][0],
                "pressure_min_bar": e["discharge_pressure_min"][0] / 1e5,
                "pressure_max_bar": e["discharge_pressure_max"][0] / 1e5,
                "class": per_point(self.class_names[grp, cls]),
                "station": np.full(m.n_points, "", dtype=object),
                "size": per_point(self.size_names[grp, cls]),
                "pfa_bar": per_point(ga["pfa"][grp, cls]) / 1e5,
                "pma_bar": per_point(ga["pma"][grp, cls]) / 1e5,
                "least_pressure_bar": m.least * rho_g / 1e5,
                "pfa_head_m": e["axis"][0] + per_point(ga["pfa"][grp, cls]) / rho_g,
                "least_head_m": e["axis"][0] + m.least}
        table = pd.DataFrame(cols)
        suction = []
        for j, pt in enumerate(self.design_stations[index]):  # the stations: a few rows
            if pt < 0:
                continue
            name = "head station" if j == 0 else f"booster {j}"
            table.loc[pt, "station"] = name
            row = table.loc[pt].copy()
            row["station"] = f"{name} suction"
            if j == 0:
                row[["head_min_m", "head_max_m"]] = m.head_in
                row[["pressure_min_bar", "pressure_max_bar"]] = \
                    (m.head_in - row["pipe_m"]) * rho_g / 1e5
            else:
                row["head_min_m"] = e["arrival_min"][0][pt]
                row["head_max_m"] = e["arrival_max"][0][pt]
                row["pressure_min_bar"] = e["arrival_pressure_min"][0][pt] / 1e5
                row["pressure_max_bar"] = e["arrival_pressure_max"][0][pt] / 1e5
                # the suction side lies on the pipe coming in
                for col in ("class", "size", "pfa_bar", "pma_bar"):
                    row[col] = table.loc[pt - 1, col]
                row["pfa_head_m"] = row["pipe_m"] + row["pfa_bar"] * 1e5 / rho_g
            suction.append((pt - 0.5, row))
        order = np.concatenate([pts.astype(float), [k for k, _ in suction]])
        rows = pd.concat([table, pd.DataFrame([r for _, r in suction])], ignore_index=True)
        return rows.iloc[np.argsort(order, kind="stable")].reset_index(drop=True)[
            PROFILE_COLUMNS]

    def station_table(self, index: int, variations: Variations | None = None) -> pd.DataFrame:
        """The stations of design ``index`` (:data:`STATION_COLUMNS`)."""
        e = self._one(index, variations)
        m = self.model
        st = self.design_stations[index]
        on = st >= 0
        pts = st[on]
        rho_g = self.scenario.density * GRAVITY
        z = e["axis"][0][pts]
        pv = self.vapour_pressure or 0.0
        suction = np.where(np.arange(pts.size) == 0, m.head_in, e["arrival_min"][0][pts]) - z
        standby = np.zeros(pts.size)
        if self.scenario.pump_station is not None:
            standby[0] = self.scenario.pump_station.standby_fraction
        if m.boosters is not None:
            standby[1:] = m.boosters.standby_fraction
        peak = np.asarray(e["station_peak_kw"])[0][on]
        return pd.DataFrame({
            "station": ["head station"] + [f"booster {j}" for j in range(1, pts.size)],
            "chainage_m": m.chainage[pts], "ground_m": m.ground[pts],
            "head_max_m": np.asarray(e["station_head_m"])[0][on], "peak_kw": peak,
            "installed_kw": peak * (1 + standby),
            "suction_pressure_min_bar": suction * rho_g / 1e5,
            "discharge_pressure_max_bar": e["discharge_pressure_max"][0][pts] / 1e5,
            "npsh_available_m": suction + (self.atmosphere[pts] - pv) / rho_g,
            "npsh_required_m": (np.nan if self.npsh_required is None
                                else float(self.npsh_required))})[STATION_COLUMNS]

    def describe(self) -> list[str]:
        """Words on the route for summaries."""
        m = self.model
        x = m.chainage
        out = [f"Route: {(x[-1] - x[0]) / 1000:.1f} km, {m.n_points} points"
               + (f", ground {m.ground.min():.0f} to {m.ground.max():.0f} m, cover "
                  f"{m.cover:g} m" if self.profile_given else " (no ground profile: level)")
               + f"; {len(self.sections)} section(s); boosters: "
               + ("none" if m.boosters is None else
                  f"up to {m.boosters.max_count} at {m.sites.size} candidate point(s)")]
        return out
