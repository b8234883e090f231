"""Sizing study (study layer): the least life-cycle-cost diameter, material and class of a line.

A :class:`SizingStudy` holds its inputs as frozen sections (:mod:`pipeopt.inputs`), builds the
candidate grid once (:mod:`pipeopt.candidates`), hands SI arrays to the model
(:func:`pipeopt.lifecycle.evaluate`), applies the limits (:mod:`pipeopt.feasibility`), finds
the continuous optimum (:mod:`pipeopt.optimum`) and returns a :class:`SizingResult`. It holds
no formulas.

A study cannot go stale: its sections are frozen. For a what-if, ``study.run(inputs={...})``
evaluates named inputs (:data:`pipeopt.variations.INPUTS`) and ``study.replace(...)`` builds a
new study with other sections.

Examples
--------
>>> from pipeopt import SizingStudy
>>> study = SizingStudy.demo()
>>> result = study.run()
>>> result.success
True
>>> result.best["material"] in {"ductile-iron", "pe100", "steel"}
True
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from functools import cached_property
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from . import feasibility
from .candidates import REFERENCE_TEMPERATURE, build_candidates
from .catalog import Catalog, default_catalog
from .costs import EnergyTariff, PumpStationCost
from .duty import DutyProfile
from .errors import InputError
from .fluid import Fluid
from .inputs import (
    Carbon,
    Constraints,
    Economics,
    Hydraulics,
    Line,
    MaterialChoice,
    Pumping,
    StudyInfo,
    read_sizing,
)
from .lifecycle import LifeCycle, Scenario, evaluate
from .optimum import class_curves, continuous_optimum
from .pumps import npsh_available, standard_atmosphere_pressure
from .results import CAUTION, StudyResult, html_table
from .studyfile import FrozenStudy, StudyFileMixin
from .variations import Variations, check_input_name

__all__ = ["Line", "Economics", "Constraints", "Carbon", "MaterialChoice", "SizingStudy",
           "SizingResult", "CAUTION"]


def _size_words(size: Any) -> str:
    """A designation for a summary; "-" where there is none (no NaN, no None in words)."""
    return size if isinstance(size, str) and size else "-"


def _section(value: Any, cls: type, build: Any) -> Any:
    """``value`` if it is already a ``cls``, else ``build(value)``."""
    return value if isinstance(value, cls) else build(value)


def _refuse_non_finite(lc: LifeCycle, candidates: pd.DataFrame,
                       inputs: dict[str, Any] | None) -> None:
    """Refuse a result whose money is not a finite number (inputs so extreme that a sum
    overflowed): a table of inf or nan would rank nothing and mean nothing."""
    eac = np.asarray(lc.eac, dtype=float)
    bad = ~np.isfinite(eac)
    if not np.any(bad):
        return
    names = (candidates["material"] + " " + candidates["size"])[bad].tolist()
    shown = ", ".join(names[:3]) + (f" and {len(names) - 3} more" if len(names) > 3 else "")
    given = f" with inputs {inputs}" if inputs else ""
    raise InputError(f"run: the life-cycle cost of {shown} is not a finite number{given}; an "
                     "input is far outside any real line (check the energy price, flows, "
                     "lengths, costs and economics for a misplaced exponent or unit)")


class SizingStudy(FrozenStudy, StudyFileMixin):
    """A life-cycle-cost sizing study of one pumped line.

    Parameters
    ----------
    fluid : Fluid
        The liquid.
    line : Line
        Length, static head, minor losses, parallel lines.
    duty : DutyProfile
        Duty points (flow, hours) and growth.
    efficiency : float or Pumping
        Wire-to-water efficiency of pumping (pump × motor × drive), 0 < η <= 1.
    tariff : EnergyTariff
        Energy price, escalation, demand charge.
    economics : Economics
        Discount rate, horizon, pipe life and maintenance.
    materials : sequence of MaterialChoice
        Candidate materials.
    pump_station : PumpStationCost, optional
        Station capital and stages; absent means no pump capital.
    constraints : Constraints, optional
        Velocity limits and surge allowance.
    carbon : Carbon, optional
        Carbon prices; absent means no carbon cost.
    catalog : Catalog, optional
        Sizes and materials (default: the bundled catalog).
    name, currency, description : str
        Labels for outputs.
    author, revision, date : str
        The title block of the report (``[study]`` keys); ``date`` as text or a
        :class:`datetime.date`. Empty: not given (the report says so).
    friction_method : str
        ``"colebrook"`` (default), another :data:`pipeopt.friction.METHODS` entry, or
        ``"constant"`` with ``constant_friction_factor``.
    constant_friction_factor : float, optional
        Darcy factor for ``friction_method="constant"`` (textbook checks).
    illustrative : bool
        Marks every output as using illustrative (invented) numbers.
    uncertainty : dict, optional
        The ``[uncertainty]`` settings (samples, seed, distributions) of a study file.
    profile : GroundProfile, optional
        The ground along the route (a long line, :mod:`pipeopt.longline`); needs
        ``line.cover``.
    sections : sequence of LineSection, optional
        Sections in series, each with the sizes it may take (a long line).
    boosters : Boosters, optional
        Booster stations the optimizer may add, and their cost (a long line).
    equipment : sequence of Equipment, optional
        Fixed losses given by a pressure drop at a flow (:class:`pipeopt.losses.Equipment`).
    fittings : Fittings, optional
        Fittings by count from the bundled table (:class:`pipeopt.losses.Fittings`).

    Every argument after ``materials`` is keyword-only. With a profile, sections or boosters
    the study is a long-line study: its candidates are *designs* (a size per section, classes
    along the line, booster stations), see :class:`pipeopt.longline.LongLine`.
    """

    _OTHERWISE = " or run(inputs={...})"

    _DEMO_FILE = "demo_sizing.toml"

    def __init__(self, fluid: Fluid, line: Line, duty: DutyProfile, efficiency: Any,
                 tariff: EnergyTariff, economics: Economics, materials: Any, *,
                 pump_station: PumpStationCost | None = None,
                 constraints: Constraints | None = None, carbon: Carbon | None = None,
                 catalog: Catalog | None = None, name: str = "sizing study",
                 currency: str = "", friction_method: str = "colebrook",
                 constant_friction_factor: float | None = None, illustrative: bool = False,
                 description: str = "", uncertainty: dict | None = None,
                 profile: Any = None, sections: Any = (), boosters: Any = None,
                 equipment: Any = (), fittings: Any = None, author: str = "",
                 revision: str = "", date: Any = "") -> None:
        if not isinstance(fluid, Fluid):
            raise InputError("fluid must be a pipeopt.Fluid")
        for value, cls, what in ((line, Line, "line"), (duty, DutyProfile, "duty"),
                                 (tariff, EnergyTariff, "tariff"),
                                 (economics, Economics, "economics")):
            if not isinstance(value, cls):
                raise InputError(f"{what} must be a {cls.__name__}; got {type(value).__name__}")
        materials = tuple(_section(m, MaterialChoice, lambda d: MaterialChoice(**d))
                          for m in (materials or ()))
        if not materials:
            raise InputError("materials: at least one candidate material is needed")
        names = [m.name for m in materials]
        if len(set(names)) != len(names):
            raise InputError("materials: each material may appear once")
        self._args = {"fluid": fluid, "line": line, "duty": duty, "efficiency": efficiency,
                      "tariff": tariff, "economics": economics, "materials": materials,
                      "pump_station": pump_station, "constraints": constraints,
                      "carbon": carbon, "catalog": catalog, "name": name, "currency": currency,
                      "friction_method": friction_method,
                      "constant_friction_factor": constant_friction_factor,
                      "illustrative": illustrative, "description": description,
                      "uncertainty": uncertainty, "profile": profile, "sections": sections,
                      "boosters": boosters, "equipment": equipment, "fittings": fittings,
                      "author": author, "revision": revision, "date": date}
        self.fluid = fluid
        self.line = line
        self.duty = duty
        self.pumping = _section(efficiency, Pumping, lambda e: Pumping(e))
        self.tariff = tariff
        self.economics = economics
        self.materials = materials
        self.pump_station = pump_station
        self.constraints = constraints or Constraints()
        self.carbon = carbon
        self.hydraulics = Hydraulics(friction_method, constant_friction_factor)
        self.catalog = catalog or default_catalog()
        self.info = StudyInfo(name=name, currency=currency, illustrative=illustrative,
                              description=description, author=author, revision=revision,
                              date=date)
        self.uncertainty = uncertainty
        for m in materials:
            self.catalog.material(m.name)
        pump = self.pumping.pump_set(duty)
        self.equipment = tuple(equipment or ())
        self.fittings = fittings
        long_line = profile is not None or bool(sections) or boosters is not None
        if not long_line:
            for key in ("cover", "source_level"):
                if getattr(line, key) is not None:
                    raise InputError(f"line.{key}: needs a ground profile ([[profile]])")
            for i, e in enumerate(self.equipment):
                if e.at is not None:
                    raise InputError(f"equipment[{i}].at: a chainage needs a long line "
                                     f"([[profile]], [[section]] or [boosters]); leave it out "
                                     f"for equipment at the pump station")
        self.scenario = Scenario(
            density=fluid.density, viscosity=fluid.viscosity, length=line.length,
            static_head=line.static_head, minor_loss_k=line.minor_loss_k, parallel=line.parallel,
            duty=duty, efficiency=pump.efficiency, tariff=tariff,
            pump_station=pump_station, discount_rate=economics.discount_rate,
            horizon=economics.horizon, pipe_life=economics.pipe_life,
            pipe_maintenance=economics.pipe_maintenance,
            grid_factor=carbon.grid_factor if carbon else 0.0,
            carbon_price=carbon.price / 1000.0 if carbon else 0.0,
            friction_method=friction_method, constant_friction_factor=constant_friction_factor,
            pump=pump if pump.shaped else None,
            equipment_coefficient=0.0 if long_line else sum(
                e.coefficient(fluid.density) for e in self.equipment),
            fittings=None if long_line else fittings)
        built = build_candidates(materials, self.catalog, fluid.bulk_modulus, fluid.density,
                                 self.constraints.restraint, fluid.temperature)
        #: The candidate table (one row per material, size and class), SI.
        self.candidates = built.table
        #: The pipe cost model of each material, resolved (a cost table given by designation
        #: becomes a :class:`~pipeopt.costs.TablePipeCost` on the catalog's inner diameters).
        self.pipe_costs = built.costs
        self.notes = built.notes
        #: The long line (:class:`pipeopt.longline.LongLine`), or None for a uniform line.
        self.layout = None
        if long_line:
            from .longline import LongLine

            self.layout = LongLine(self.scenario, fluid, line, self.pumping, self.constraints,
                                   built.table, tuple(m.name for m in materials), profile,
                                   tuple(sections or ()), boosters, self.equipment, fittings,
                                   self.service_temperature)
            #: Every catalog size and class of the study's materials (a long line's candidate
            #: table holds its designs instead).
            self.catalog_candidates = built.table
            self.candidates = self.layout.table
        self._frozen = True


    # ----- labels ---------------------------------------------------------------------------

    @property
    def efficiency(self) -> float:
        """Wire-to-water efficiency at the pump's best point."""
        return self.scenario.efficiency

    @property
    def service_temperature(self) -> float:
        """Temperature of the ratings [K]: the fluid's, or 20 °C when it gives none."""
        return REFERENCE_TEMPERATURE if self.fluid.temperature is None else \
            float(self.fluid.temperature)

    # ----- what-ifs -------------------------------------------------------------------------

    def variations(self, values: dict[str, Any]) -> Variations:
        """Named inputs (:data:`pipeopt.variations.SIZING_INPUTS`, and
        ``pipe_cost_factor:<material>``) as :class:`~pipeopt.variations.Variations`; each value a
        scalar (one sample) or an array over samples."""
        mats = self.candidates["material"].to_numpy()
        kwargs: dict[str, Any] = {}
        pipe = None
        arrays = {}
        for name, value in values.items():
            check_input_name(name, "sizing", tuple(m.name for m in self.materials))
            arrays[name] = np.atleast_1d(np.asarray(value, dtype=float))
        n = {a.shape[0] for a in arrays.values()}
        if len(n) > 1:
            raise InputError(f"inputs: every input needs the same number of samples; got "
                             f"{sorted(n)}")
        for name, arr in arrays.items():
            if name == "pipe_cost_factor" or name.startswith("pipe_cost_factor:"):
                Variations.of({"pipe_cost_factor": arr}).resolved({})  # the factor's rule
                if pipe is None:
                    pipe = np.ones((arr.shape[0], mats.size))
                if self.layout is not None and ":" in name:  # a design's share of material
                    share = self.layout.material_share(name.split(":", 1)[1])
                    pipe *= 1.0 + (arr[:, None] - 1.0) * share[None, :]
                    continue
                cols = (slice(None) if name == "pipe_cost_factor"
                        else mats == name.split(":", 1)[1])
                pipe[:, cols] *= arr[:, None]
            else:
                kwargs[name] = arr
        if pipe is not None:
            kwargs["pipe_cost_factor"] = pipe
        return Variations(**kwargs)

    def base_value(self, name: str) -> float:
        """The study's own value of a named input (1 for a factor)."""
        check_input_name(name, "sizing", tuple(m.name for m in self.materials))
        return float(self.scenario.base_values().get(name.split(":")[0], 1.0))

    # ----- study files ----------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> SizingStudy:
        return cls.from_sections(read_sizing(mapping, base))

    @classmethod
    def from_sections(cls, sec: dict[str, Any]) -> SizingStudy:
        """Build the study from the checked sections of :func:`pipeopt.inputs.read_sizing`
        (the fluid's properties are computed here)."""
        fluid = sec["fluid"].build()
        info, hyd = sec["info"], sec["hydraulics"]
        study = cls(fluid, sec["line"], sec["duty"], sec["pumping"], sec["energy"],
                    sec["economics"], sec["materials"], pump_station=sec["pump_station"],
                    constraints=sec["constraints"], carbon=sec["carbon"],
                    catalog=sec["catalog"], name=info.name, currency=info.currency,
                    friction_method=hyd.friction_method,
                    constant_friction_factor=hyd.friction_factor,
                    illustrative=info.illustrative, description=info.description,
                    profile=sec["profile"], sections=sec["sections"],
                    boosters=sec["boosters"], equipment=sec["equipment"],
                    fittings=sec["fittings"],
                    author=info.author, revision=info.revision, date=info.date)
        if sec["uncertainty"] is not None:
            from .uncertainty import read_uncertainty_section

            unc = read_uncertainty_section(sec["uncertainty"], "sizing",
                                           tuple(m.name for m in study.materials))
            study = study.replace(uncertainty=unc)
        return study

    # ----- running --------------------------------------------------------------------------
    def evaluate(self, scenario: Scenario | None = None,
                 variations: Variations | None = None, yearly: bool = True) -> LifeCycle:
        """The life-cycle arrays of every candidate (model layer output).

        With ``variations`` (per-sample inputs), the arrays have a leading sample axis;
        ``yearly=False`` skips the yearly arrays.
        """
        if self.layout is not None and scenario is None:
            return self.layout.evaluate(variations, yearly)
        c = self._columns
        s = scenario or self.scenario
        co2 = c["embodied_co2_kg_per_m"] if (self.carbon and self.carbon.embodied) else 0.0
        return evaluate(s, c["inner_diameter_m"], c["roughness_m"], c["aging_m_per_year"],
                        c["cost_per_metre"], co2, variations=variations, yearly=yearly)

    def check(self, lc: LifeCycle) -> dict[str, np.ndarray]:
        """The constraint checks of the candidates (:func:`pipeopt.feasibility.check`; a long
        line's designs: :meth:`pipeopt.longline.LongLine.check`)."""
        if self.layout is not None:
            return self.layout.check(lc)
        checks = feasibility.check(self._columns, lc, self.constraints, self.scenario.density,
                                   float(self.line.suction_pressure))
        pmp = self.pumping
        if pmp.npsh_required is not None:
            pressure = (float(standard_atmosphere_pressure(pmp.elevation or 0.0))
                        + float(self.line.suction_pressure))
            if self.fluid.vapour_pressure is None:
                raise InputError("pumping.npsh_required: the fluid gives no vapour pressure; "
                                 "give fluid.vapour_pressure")
            feasibility.npsh_check(checks, float(npsh_available(
                pressure, self.fluid.vapour_pressure, self.fluid.density)),
                float(pmp.npsh_required), float(pmp.npsh_margin if pmp.npsh_margin
                                                is not None else 1.0))
        return checks

    def run(self, inputs: dict[str, Any] | None = None, optimum: bool = True) -> SizingResult:
        """Evaluate every candidate, check feasibility, pick the best, find continuous optima.

        Parameters
        ----------
        inputs : dict, optional
            Single values of named inputs replacing the study's own
            (:data:`pipeopt.variations.SIZING_INPUTS`, e.g. ``{"energy_price": 0.2}``); the
            explorer and what-if questions use them.
        optimum : bool
            Also find the continuous optimum of each material (default True).
        """
        variations = None
        if inputs:
            variations = self.variations(inputs)
            if variations.size != 1:
                raise InputError("run: inputs take one value each (use monte_carlo for many)")
        lc = self.evaluate(variations=variations)
        if variations is not None:
            lc = lc.take(0)
        _refuse_non_finite(lc, self.candidates, inputs)
        table = self._table(lc)
        feasible = table["feasible"].to_numpy()
        if not feasible.any():
            best = None
            success = False
            message = ("no candidate meets every constraint; see the 'reasons' column (relax a "
                       "limit, widen the diameter range, or add a pressure class)")
        else:
            # the first of equal least EACs, as idxmin over the feasible rows
            rows = np.flatnonzero(feasible)
            best = table.iloc[rows[np.argmin(table["eac"].to_numpy()[rows])]]
            success = True
            message = f"best of {rows.size} feasible candidates out of {len(table)}"
        opt = (self.continuous_optimum(table, variations) if optimum and self.layout is None
               else pd.DataFrame())
        return SizingResult(self, table, best, opt, success, message, lc,
                            dict(inputs or {}))

    def _table(self, lc: LifeCycle) -> pd.DataFrame:
        col = c = self._columns
        checks = self.check(lc)
        crf = float(np.asarray(lc.crf).reshape(-1)[0])
        cols = {
            "material": col["material"], "size": col["size"], "class": col["class"],
            "inner_diameter_m": col["inner_diameter_m"], "roughness_m": col["roughness_m"],
            "velocity_m_s": lc.velocity_design, "reynolds": lc.reynolds_design,
            "friction_factor": lc.friction_factor_design, "head_loss_m": lc.head_loss_design,
            "pump_head_m": lc.pump_head_design, "electrical_power_kw": lc.pump_power_peak_year1,
            "energy_kwh_year1": lc.energy_year1, "velocity_peak_m_s": lc.velocity_max,
            "pump_head_max_m": lc.pump_head_max, "surge_head_m": checks["surge"],
            "operating_pressure_bar": checks["operating_pressure"] / 1e5,
            "mdp_bar": checks["mdp"] / 1e5, "pfa_bar": checks["pfa"] / 1e5,
            "pma_bar": checks["pma"] / 1e5,
            "pressure_rating_bar": c["pressure_rating_pa"] / 1e5,
            "temperature_factor": col["temperature_factor"],
            "mass_kg_per_m": col["mass_kg_per_m"], "cost_per_metre": col["cost_per_metre"],
            "installed_power_kw": lc.installed_power, "capex_pipe": lc.capex_pipe,
            "capex_pump_station": lc.capex_pump_station,
            "pv_pump_station": lc.pv_pump_station, "pv_energy": lc.pv_energy,
            "pv_maintenance": lc.pv_maintenance, "pv_replacement": lc.pv_replacement,
            "pv_carbon": lc.pv_carbon, "pv_residual": lc.pv_residual, "pv_total": lc.pv_total,
            "eac": lc.eac,
            # the EAC in parts that add up to it (the capital charge includes the stations'
            # first purchases at their present value)
            "eac_capital": (lc.capex_pipe + lc.pv_pump_station) * crf,
            "eac_energy": lc.pv_energy * crf,
            "eac_maintenance": lc.pv_maintenance * crf,
            "eac_renewal": lc.pv_replacement * crf,
            "eac_carbon": lc.pv_carbon * crf,
            "eac_residual": -lc.pv_residual * crf,
        }
        if self.layout is not None:
            reasons, notes = self.layout.reasons(lc, checks)
            for name in ("nominal", "boosters", "booster_chainages_km", "classes_along"):
                cols[name] = c[name]
            cols["highest_pressure_bar"] = checks["highest_pressure"] / 1e5
        else:
            reasons, notes = feasibility.reasons(c, lc, checks, self.constraints,
                                                 self.service_temperature)
        feasible = np.asarray(checks["feasible"], dtype=bool)
        # rank 1, 2, ... of the feasible candidates by EAC, the first of equal EACs first
        order = np.flatnonzero(feasible)
        order = order[np.argsort(np.asarray(lc.eac)[order], kind="stable")]
        rank = np.zeros(feasible.size, dtype=np.int64)
        rank[order] = np.arange(1, order.size + 1)
        cols.update(feasible=feasible, reasons=reasons, notes=notes,
                    rank=pd.arrays.IntegerArray(rank, ~feasible))
        return pd.DataFrame(cols, index=self.candidates.index)

    def continuous_optimum(self, table: pd.DataFrame | None = None,
                           variations: Variations | None = None) -> pd.DataFrame:
        """The EAC-minimizing inner diameter of each material within the velocity limits
        (:func:`pipeopt.optimum.continuous_optimum`)."""
        table = self._table(self.evaluate()) if table is None else table
        return continuous_optimum(self.scenario, self.candidates, table, self.constraints,
                                  variations, bool(self.carbon and self.carbon.embodied),
                                  float(self.line.suction_pressure), self._class_curves)

    @cached_property
    def _columns(self) -> dict[str, Any]:
        """The candidate table's columns, read once (numbers as read-only numpy arrays, text
        and objects as pandas arrays): a study is evaluated again and again (the table, the
        optimum, every what-if), and reading a column of a frame costs more than a small
        evaluation's arithmetic. The candidate table is the study's; change a study with
        :meth:`replace`, never its table in place."""
        out: dict[str, Any] = {}
        for name, series in self.candidates.items():
            if series.dtype.kind in "biuf":
                arr = series.to_numpy()
                if arr.flags.writeable:  # a view of the frame's block: read-only here
                    arr = arr.view()
                    arr.flags.writeable = False
                out[name] = arr
            else:
                out[name] = series.array
        return out

    @cached_property
    def _class_curves(self):
        """The classes' continuous curves for the optimum (built on first use, then kept)."""
        return class_curves(self.candidates)

    # ----- uncertainty ----------------------------------------------------------------------
    def tornado(self, ranges: dict[str, tuple[float, float]] | None = None):
        """One-way sensitivity of the chosen design (:func:`pipeopt.uncertainty.tornado`)."""
        from .uncertainty import tornado

        return tornado(self, ranges)

    def switching_values(self, ranges: dict[str, tuple[float, float]] | None = None,
                         grid: int = 41):
        """Where the best candidate changes (:func:`pipeopt.uncertainty.switching_values`)."""
        from .uncertainty import switching_values

        return switching_values(self, ranges, grid)

    def monte_carlo(self, distributions: dict | None = None, n: int | None = None,
                    seed: int | None = None, progress: bool | None = None, **kwargs: Any):
        """Monte Carlo of every candidate (:func:`pipeopt.uncertainty.monte_carlo`).

        Without arguments, uses the study file's ``[uncertainty]`` section.
        """
        from .uncertainty import monte_carlo

        cfg = self.uncertainty or {}
        dists = distributions if distributions is not None else cfg.get("distributions")
        if not dists:
            raise InputError("monte_carlo: give distributions, or an [uncertainty] section in "
                             "the study file")
        return monte_carlo(self, dists, n if n is not None else cfg.get("samples", 2000),
                           seed if seed is not None else cfg.get("seed", 0), progress, **kwargs)

    def __repr__(self) -> str:
        mats = ", ".join(m.name for m in self.materials)
        return (f"SizingStudy({self.name!r}: {len(self.candidates)} candidates of {mats}; "
                f"{len(self.duty.flows)} duty point(s), {self.economics.horizon} years)")

    def _repr_html_(self) -> str:
        s = self.scenario
        duty = pd.DataFrame({"duty point": self.duty.names,
                             "flow [m³/h]": np.asarray(self.duty.flows) * 3600.0,
                             "hours [h/yr]": self.duty.hours})
        mats = self.candidates.groupby("material", sort=False).agg(
            candidates=("size", "size"), smallest_bore_mm=("inner_diameter_m", "min"),
            largest_bore_mm=("inner_diameter_m", "max")).reset_index()
        mats[["smallest_bore_mm", "largest_bore_mm"]] *= 1000.0
        note = "<p><i>Illustrative numbers.</i></p>" if self.illustrative else ""
        return (f"<div><p><b>Sizing study: {html.escape(self.name)}</b></p>{note}"
                f"<p>{self.line.length / 1000:.3g} km, static head {s.static_head:.3g} m, "
                f"ΣK {s.minor_loss_k:g}, {s.parallel} line(s); {html.escape(self.fluid.name)} "
                f"{self.fluid.density:.1f} kg/m³; energy {s.tariff.price:g} "
                f"{html.escape(self.currency)}/kWh; {s.discount_rate * 100:g} % over "
                f"{s.horizon} years</p>" + html_table(duty) + html_table(mats) + "</div>")


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class SizingResult(StudyResult):
    """What a sizing study found.

    Attributes
    ----------
    study : SizingStudy
        The study that was run.
    candidates : pandas.DataFrame
        One row per (material, size, class); money in the study currency, other units in the
        column names. ``feasible`` and ``reasons`` say whether and why not; ``rank`` orders the
        feasible candidates by EAC; ``eac_capital`` … ``eac_residual`` are the parts of the EAC.
    best : pandas.Series or None
        The feasible candidate with the least EAC, None when no candidate is feasible.
    optimum : pandas.DataFrame
        One row per material: the continuous-optimum inner diameter, its EAC, and the candidate
        sizes that bracket it.
    success : bool
        Whether a feasible candidate was found.
    message : str
        Words on the outcome.
    lifecycle : LifeCycle
        The model-layer arrays (yearly energy, peak demand, cash flows) behind the table.
    inputs : dict
        The named inputs this run used in place of the study's own (empty: none).
    """

    study: SizingStudy
    candidates: pd.DataFrame
    best: pd.Series | None
    optimum: pd.DataFrame
    success: bool
    message: str
    lifecycle: LifeCycle = field(repr=False)
    inputs: dict = field(default_factory=dict)

    @property
    def currency(self) -> str:
        return self.study.currency

    @property
    def scenario(self) -> Scenario:
        """The study's SI inputs (before any named ``inputs`` of this run)."""
        return self.study.scenario

    @cached_property
    def horizon(self) -> int:
        """The horizon this run used [yr]."""
        return int(self.lifecycle.cash_flows.timeline.horizon[0])

    def _design(self, index: int | None) -> int:
        if self.study.layout is None:
            raise InputError("profile and stations describe a long line ([[profile]], "
                             "[[section]] or [boosters]); this study is a uniform line")
        if index is None:
            if self.best is None:
                raise InputError("no feasible design: pass the row index of a design")
            index = int(self.best.name)
        return index

    def _run_inputs(self) -> Variations | None:
        return self.study.variations(self.inputs) if self.inputs else None

    @cached_property
    def profile(self) -> pd.DataFrame:
        """The grade-line envelope along the best design of a long line, one row per point:
        ``chainage_m``, ``ground_m``, ``pipe_m`` (axis), ``head_min_m``, ``head_max_m``
        (lowest and highest grade line over every duty point and year of the horizon),
        ``pressure_min_bar``, ``pressure_max_bar`` (gauge), ``class`` and ``size`` laid there,
        ``station``, ``pfa_bar``, ``pma_bar`` of the class, ``least_pressure_bar`` allowed.
        :meth:`profile_of` gives another design's."""
        return self.profile_of(None)

    def profile_of(self, index: int | None = None) -> pd.DataFrame:
        """The grade-line envelope of design ``index`` (default: the best)."""
        index = self._design(index)
        return self.study.layout.profile_table(index, self._run_inputs())

    @cached_property
    def stations(self) -> pd.DataFrame:
        """The stations of the best design of a long line: ``station``, ``chainage_m``,
        ``ground_m``, ``head_max_m`` (largest head added), ``peak_kw`` (electrical),
        ``installed_kw``, ``suction_pressure_min_bar``, ``discharge_pressure_max_bar``,
        ``npsh_available_m`` (least), ``npsh_required_m``."""
        index = self._design(None)
        return self.study.layout.station_table(index, self._run_inputs())

    def yearly(self, index: int | None = None) -> pd.DataFrame:
        """Year-by-year flows, energy and cash flows of one candidate (default: the best).

        Rows are years 0 … N; money columns (``capital_pipe``, ``capital_station``,
        ``station_renewal``, ``energy_cost``, ``maintenance``, ``carbon``, ``residual``) add up
        to ``total``, and the ``discounted`` column sums to the candidate's ``pv_total``.
        """
        if index is None:
            if self.best is None:
                raise InputError("no feasible candidate: pass the row index of a candidate")
            index = int(self.best.name)
        lc = self.lifecycle
        n = self.horizon
        # the model names its money row "energy"; in tables it is energy_cost (kWh apart)
        frame = lc.cash_flows.frame(0, index).rename(columns={"energy": "energy_cost"})
        mult = np.concatenate([[np.nan], self.study.duty.multipliers(
            n, growth=self.inputs.get("growth"),
            flow_factor=self.inputs.get("flow_factor", 1.0)).reshape(-1)])
        frame.insert(1, "flow_multiplier", mult)
        frame.insert(2, "energy_kwh", np.concatenate([[0.0], lc.energy_kwh[index, :n]]))
        frame.insert(3, "peak_kw", np.concatenate([[0.0], lc.peak_kw[index, :n]]))
        return frame

    def breakdown(self, n: int = 5) -> pd.DataFrame:
        """Present-value cost breakdown of the ``n`` best feasible candidates."""
        cols = ["material", "size", "capex_pipe", "capex_pump_station", "pv_pump_station",
                "pv_energy", "pv_maintenance", "pv_replacement", "pv_carbon", "pv_residual",
                "pv_total", "eac"]
        feas = self.candidates[self.candidates["feasible"]]
        return feas.nsmallest(n, "eac")[cols]

    def runner_up(self) -> pd.DataFrame:
        """The best and second-best feasible candidate of each material."""
        feas = self.candidates[self.candidates["feasible"]].sort_values("eac")
        return feas.groupby("material", sort=False).head(2).reset_index(drop=True)

    def _temperature_words(self, row: pd.Series) -> str:
        t = self.study.service_temperature - 273.15
        f = row["temperature_factor"]
        given = "" if self.study.fluid.temperature is not None else " (not given: taken)"
        if f == 1:
            return f"service temperature {t:.0f} degC{given}: no derating of {row['material']}"
        return (f"service temperature {t:.0f} degC{given}: {row['material']} derated x {f:.3g} "
                f"(PFA {row['pfa_bar']:.1f} of {row['pressure_rating_bar']:.1f} bar)")

    @staticmethod
    def _pv_parts(row: pd.Series) -> str:
        """The parts of a candidate's present value in words (those that are not zero)."""
        parts = [("pipe", row["capex_pipe"]), ("pump station", row["pv_pump_station"]),
                 ("energy", row["pv_energy"]), ("maintenance", row["pv_maintenance"]),
                 ("station renewals", row["pv_replacement"]), ("carbon", row["pv_carbon"]),
                 ("residual value", -row["pv_residual"])]
        return ", ".join(f"{name} {value:,.0f}" for name, value in parts if value != 0)

    def _line_words(self, b: pd.Series) -> list[str]:
        """The long line's lines of the summary: classes, stations, pressures."""
        cur = f" {self.currency}" if self.currency else ""
        prof = self.profile
        st = self.stations
        low = prof["pressure_min_bar"].to_numpy()
        at = prof["chainage_m"].to_numpy()
        i_hi = int(np.argmax(prof["pressure_max_bar"]))
        i_lo = int(np.argmin(low))
        out = [f"  classes along the line: {b['classes_along']}",
               f"  highest pressure {prof['pressure_max_bar'].iloc[i_hi]:.1f} bar at "
               f"{at[i_hi] / 1000:.1f} km; lowest {low[i_lo]:.2f} bar at {at[i_lo] / 1000:.1f} "
               f"km; governing stretch: operating {b['operating_pressure_bar']:.1f} bar within "
               f"PFA {b['pfa_bar']:.1f} bar, MDP {b['mdp_bar']:.1f} bar (surge "
               f"{b['surge_head_m']:.1f} m) within PMA {b['pma_bar']:.1f} bar"]
        vacuum = [c for c in str(b.get("notes") or "").split("; ")
                  if c.startswith("sub-atmospheric")]
        if vacuum:  # an engineering caution, named where the reader looks
            out.append(f"  caution: {vacuum[0]}; air valves, column separation and the pipe's "
                       f"resistance to vacuum need an engineer's check")
        for _, r in st.iterrows():
            out.append(f"  {r['station']:<13} {r['chainage_m'] / 1000:6.1f} km  head up to "
                       f"{r['head_max_m']:6.1f} m  peak {r['peak_kw']:7.0f} kW  suction "
                       f">= {r['suction_pressure_min_bar']:.2f} bar")
        ru = self.candidates[self.candidates["feasible"]]
        if "boosters" in ru and not ru.empty:
            by_n = ru.loc[ru.groupby("boosters")["eac"].idxmin()]
            out.append("  best with each number of boosters: " + "; ".join(
                f"{r['size']} EAC {r['eac']:,.0f}{cur}/yr"
                for _, r in by_n.iterrows()))
        return out

    def tables(self) -> dict[str, pd.DataFrame]:
        top = self.candidates.sort_values(["feasible", "eac"], ascending=[False, True])
        cols = ["material", "size", "inner_diameter_m", "velocity_m_s", "head_loss_m",
                "electrical_power_kw", "capex_pipe", "pv_energy", "eac", "feasible", "reasons"]
        return {f"Ten best candidates (money in {self.currency or 'currency'})":
                top[cols].head(10)}

    def headline(self) -> str:
        cur = f" {self.currency}" if self.currency else ""
        if self.best is None:
            return f"{self.study.name}: no feasible candidate"
        b = self.best
        return (f"{self.study.name}: best {b['material']} {b['size']}, EAC "
                f"{b['eac']:,.0f}{cur}/yr")

    def text(self) -> str:
        """A plain-text summary: the best candidate, runners-up, continuous optima."""
        cur = f" {self.currency}" if self.currency else ""
        s = self.study
        lines = [f"pipeopt sizing study: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the scenario and its cost figures are invented.")
        lines.append(f"{len(self.candidates)} candidates, {len(s.duty.flows)} duty point(s), "
                     f"horizon {self.horizon} years at "
                     f"{float(self.lifecycle.cash_flows.timeline.rate[0]) * 100:g} % real; "
                     f"{self.message}")
        if self.inputs:
            lines.append("What-if inputs: " + ", ".join(f"{k} = {v:g}" for k, v in
                                                        self.inputs.items()))
        b = self.best
        if b is not None:
            lines += [
                "",
                f"Best: {b['material']} {b['size']} (inner diameter "
                f"{b['inner_diameter_m'] * 1000:.1f} mm)",
                f"  EAC {b['eac']:,.0f}{cur}/yr; present value {b['pv_total']:,.0f}{cur} = "
                + self._pv_parts(b),
                f"  velocity {b['velocity_m_s']:.2f} m/s, head loss {b['head_loss_m']:.2f} m, "
                f"pump head {b['pump_head_m']:.1f} m, electrical power "
                f"{b['electrical_power_kw']:.1f} kW (largest duty, year 1)",
            ]
            if s.layout is None:
                lines += [
                    f"  MDP {b['mdp_bar']:.1f} bar (suction {s.line.suction_pressure / 1e5:.1f} "
                    f"bar + highest pump head {b['pump_head_max_m']:.1f} m + surge "
                    f"{b['surge_head_m']:.1f} m) within PMA {b['pma_bar']:.1f} bar; operating "
                    f"{b['operating_pressure_bar']:.1f} bar within PFA {b['pfa_bar']:.1f} bar",
                    f"  {self._temperature_words(b)}"]
            else:
                lines += self._line_words(b)
        else:
            lines += ["", "No feasible candidate. " + self.message]
        ru = self.runner_up()
        if not ru.empty:
            lines += ["", "Best two feasible candidates of each material:"]
            for _, r in ru.iterrows():
                delta = "" if b is None else f" (+{r['eac'] - b['eac']:,.0f})"
                lines.append(f"  {r['material']:<16} {r['size']:<16} EAC {r['eac']:>12,.0f}"
                             f"{cur}/yr{delta}  V {r['velocity_m_s']:.2f} m/s")
        if not self.optimum.empty:
            lines += ["", "Continuous optimum within the velocity limits (class, inner diameter, "
                          "EAC, neighbouring sizes of the class):"]
            for _, o in self.optimum.iterrows():
                flag = " (at the edge of the size range)" if o["at_bound"] else ""
                lines.append(f"  {o['material']:<16} {o['class']:<8} "
                             f"{o['inner_diameter_m'] * 1000:8.1f} mm  EAC {o['eac']:>12,.0f}"
                             f"{cur}/yr  between {_size_words(o['lower_size'])} and "
                             f"{_size_words(o['upper_size'])}{flag}")
                if o["limited_by"]:
                    lines.append(f"    {o['limited_by']} binds: unconstrained "
                                 f"{o['unconstrained_inner_diameter_m'] * 1000:.1f} mm, EAC "
                                 f"{o['unconstrained_eac']:,.0f}{cur}/yr")
                if o["note"]:
                    lines.append(f"    {o['note']}")
        infeasible = int((~self.candidates["feasible"]).sum())
        if infeasible:
            lines += ["", f"{infeasible} candidate(s) infeasible; see the 'reasons' column."]
        if s.notes:
            lines += [f"Note: {n}" for n in s.notes]
        lines += ["", "Caution: " + CAUTION]
        return "\n".join(lines)
