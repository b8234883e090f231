"""Sizing study (study layer): the least life-cycle-cost diameter, material and class of a line.

A :class:`SizingStudy` reads its inputs (a TOML study file, a mapping, or Python objects), builds
the candidate grid from the catalog, hands SI arrays to :func:`pipeopt.lifecycle.evaluate`, checks
feasibility and returns a :class:`SizingResult`. It holds no formulas: the model is in
:mod:`pipeopt.lifecycle` (and the contributor guide states it in words).

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
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
from scipy import optimize

from . import friction as fr
from .catalog import Catalog, default_catalog, load_catalog
from .costs import EnergyTariff, PowerLawPipeCost, PumpStationCost, TablePipeCost
from .duty import DutyProfile
from .errors import InputError
from .fluid import Fluid
from .lifecycle import LifeCycle, Scenario, Variations, evaluate
from .studyfile import Section, StudyFileError, StudyFileMixin
from .surge import RESTRAINTS, joukowsky_head, wave_speed
from .units import Quantity, to_si

__all__ = ["Line", "Economics", "Constraints", "Carbon", "MaterialChoice", "SizingStudy",
           "SizingResult", "CAUTION", "DEFAULT_BULK_MODULUS"]

#: The caution every sizing output carries.
CAUTION = ("A study aid, not a design: pressure ratings and the Joukowsky surge screen do not "
           "replace a transient analysis; pressure, surge and structural questions need a "
           "qualified engineer, and local codes and licensed engineering practice govern.")
#: Bulk modulus used when the fluid gives none [Pa]: water near 20 degC (common practice).
DEFAULT_BULK_MODULUS = 2.19e9


def _si(value: Any, kind: str, field_name: str, allow_none: bool = False) -> float | None:
    if value is None and allow_none:
        return None
    out = to_si(value, kind, field_name)
    if not isinstance(out, float):
        raise InputError(f"{field_name}: expected a single value")
    return out


def _fraction(value: Any, field_name: str, low: float = 0.0, high: float = 1.0) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.floating)):
        raise InputError(f"{field_name} must be a plain number; got {value!r}")
    v = float(value)
    if not (math.isfinite(v) and low <= v <= high):
        raise InputError(f"{field_name} must be between {low:g} and {high:g}; got {value!r}")
    return v


# --------------------------------------------------------------------------------------------
# input sections (units parsed here, SI stored)
# --------------------------------------------------------------------------------------------
@dataclass
class Line:
    """The line: length, static head, minor losses, number of parallel lines.

    Parameters
    ----------
    length : str or Quantity
        Line length, e.g. ``"3.2 km"``.
    static_head : str or Quantity
        Lift from suction level to delivery level plus the residual head required at delivery,
        e.g. ``"24 m"``; may be zero or negative (a falling line that is still pumped).
    minor_loss_k : float
        Sum of minor-loss coefficients, referred to the line velocity.
    parallel : int
        Identical lines in parallel sharing the flow.
    """

    length: Any
    static_head: Any
    minor_loss_k: float = 0.0
    parallel: int = 1

    def __post_init__(self) -> None:
        self.length = _si(self.length, "length", "line.length")
        if not self.length > 0:
            raise InputError(f"line.length must be positive; got {self.length} m")
        self.static_head = _si(self.static_head, "head", "line.static_head")
        self.minor_loss_k = _fraction(self.minor_loss_k, "line.minor_loss_k", 0.0, 1e4)
        if isinstance(self.parallel, bool) or int(self.parallel) != self.parallel \
                or self.parallel < 1:
            raise InputError(f"line.parallel must be a whole number >= 1; got {self.parallel!r}")
        self.parallel = int(self.parallel)


@dataclass
class Economics:
    """Discounting and lives: real discount rate, horizon, pipe life and maintenance.

    Parameters
    ----------
    discount_rate : float
        Real discount rate per year (0.05 for 5 %).
    horizon : int
        Analysis horizon [yr].
    pipe_life : float
        Pipe service life [yr] (straight-line residual value at the horizon).
    pipe_maintenance : float
        Yearly pipe maintenance as a fraction of pipe capital.
    """

    discount_rate: float
    horizon: int
    pipe_life: float
    pipe_maintenance: float = 0.0

    def __post_init__(self) -> None:
        self.discount_rate = _fraction(self.discount_rate, "economics.discount_rate", 0.0, 1.0)
        if isinstance(self.horizon, bool) or int(self.horizon) != self.horizon \
                or not 1 <= self.horizon <= 200:
            raise InputError(f"economics.horizon must be a whole number of years from 1 to 200; "
                             f"got {self.horizon!r}")
        self.horizon = int(self.horizon)
        self.pipe_life = _fraction(self.pipe_life, "economics.pipe_life", 1.0, 500.0)
        self.pipe_maintenance = _fraction(self.pipe_maintenance, "economics.pipe_maintenance")


@dataclass
class Constraints:
    """Feasibility limits.

    Parameters
    ----------
    velocity_min, velocity_max : str or Quantity, optional
        Velocity limits, e.g. ``"0.5 m/s"``. velocity_max is checked against the largest flow of
        any year; velocity_min against the largest duty flow in year 1.
    surge_allowance : str or Quantity, optional
        A head added to the highest pump head in the pressure check, e.g. ``"40 m"``. When not
        given, the Joukowsky head rise of stopping the largest flow of any year is used, with the
        candidate's Korteweg wave speed.
    restraint : str
        Axial restraint for the wave speed (:data:`pipeopt.surge.RESTRAINTS`); default
        ``"anchored-throughout"`` (buried, restrained pipe).
    """

    velocity_min: Any = None
    velocity_max: Any = None
    surge_allowance: Any = None
    restraint: str = "anchored-throughout"

    def __post_init__(self) -> None:
        self.velocity_min = _si(self.velocity_min, "velocity", "constraints.velocity_min", True)
        self.velocity_max = _si(self.velocity_max, "velocity", "constraints.velocity_max", True)
        self.surge_allowance = _si(self.surge_allowance, "head", "constraints.surge_allowance",
                                   True)
        if self.velocity_min is not None and self.velocity_min < 0:
            raise InputError("constraints.velocity_min must not be negative")
        if self.velocity_max is not None and not self.velocity_max > 0:
            raise InputError("constraints.velocity_max must be positive")
        if (self.velocity_min is not None and self.velocity_max is not None
                and self.velocity_min >= self.velocity_max):
            raise InputError(f"constraints.velocity_min ({self.velocity_min:g} m/s) must be below "
                             f"velocity_max ({self.velocity_max:g} m/s)")
        if self.surge_allowance is not None and self.surge_allowance < 0:
            raise InputError("constraints.surge_allowance must not be negative")
        if self.restraint not in RESTRAINTS:
            raise InputError(f"constraints.restraint must be one of {', '.join(RESTRAINTS)}; got "
                             f"{self.restraint!r}")


@dataclass
class Carbon:
    """Carbon cost: operational emissions of the pumping energy and embodied emissions of pipe.

    Parameters
    ----------
    grid_factor : float
        Emission factor of the electricity [kg CO2e per kWh].
    price : float
        Carbon price [currency per tonne CO2e].
    embodied : bool
        Charge the embodied emissions of the pipe (mass × material factor) at t = 0.
    """

    grid_factor: float
    price: float
    embodied: bool = True

    def __post_init__(self) -> None:
        self.grid_factor = _fraction(self.grid_factor, "carbon.grid_factor", 0.0, 5.0)
        self.price = _fraction(self.price, "carbon.price", 0.0, 1e5)


@dataclass
class MaterialChoice:
    """A candidate material, its size filter, cost model and aging.

    Parameters
    ----------
    name : str
        A catalog material key (``"ductile-iron"``).
    cost : PowerLawPipeCost, TablePipeCost or dict
        Pipe capital per metre, supplied and installed; a dict ``{"coefficient": a,
        "exponent": n}`` means a·D^n with D in m; ``{"table": [[designation, cost], ...]}`` a
        table by size.
    min_diameter, max_diameter : str or Quantity, optional
        Inner-diameter range of the candidates.
    sizes : list of str, optional
        Candidate designations (instead of the range).
    classes : list of str, optional
        Pressure classes to consider (``["C40"]``, ``["SDR 17", "SDR 11"]``).
    aging : str, Quantity or None
        Roughness growth, e.g. ``"0.02 mm/yr"``, or ``"typical"`` for the catalog's typical rate;
        None (default) means no aging.
    roughness : str or Quantity, optional
        New-pipe roughness instead of the catalog's, e.g. ``"0.05 mm"``.
    """

    name: str
    cost: Any
    min_diameter: Any = None
    max_diameter: Any = None
    sizes: list | None = None
    classes: list | None = None
    aging: Any = None
    roughness: Any = None

    def __post_init__(self) -> None:
        where = f"material {self.name!r}"
        if not isinstance(self.name, str) or not self.name:
            raise InputError("material.name must be a catalog material key such as "
                             "'ductile-iron'")
        self.min_diameter = _si(self.min_diameter, "diameter", f"{where}: min_diameter", True)
        self.max_diameter = _si(self.max_diameter, "diameter", f"{where}: max_diameter", True)
        if (self.min_diameter is not None and self.max_diameter is not None
                and self.min_diameter > self.max_diameter):
            raise InputError(f"{where}: min_diameter is larger than max_diameter")
        if self.roughness is not None:
            self.roughness = _si(self.roughness, "roughness", f"{where}: roughness")
            if self.roughness < 0:
                raise InputError(f"{where}: roughness must not be negative")
        if self.aging is not None and self.aging != "typical":
            self.aging = _si(self.aging, "aging_rate", f"{where}: aging")
            if self.aging < 0:
                raise InputError(f"{where}: aging must not be negative")
        if isinstance(self.cost, dict) and "table" not in self.cost:
            self.cost = PowerLawPipeCost(self.cost.get("coefficient"), self.cost.get("exponent"))


# --------------------------------------------------------------------------------------------
# the study
# --------------------------------------------------------------------------------------------
_CANDIDATE_STATIC = ["material", "size", "pressure_class", "outside_diameter_m", "wall_m",
                     "inner_diameter_m", "roughness_m", "aging_m_per_year", "pressure_rating_pa",
                     "wave_speed_m_s", "cost_per_metre", "embodied_co2_kg_per_m", "provenance"]


class SizingStudy(StudyFileMixin):
    """A life-cycle-cost sizing study of one pumped line.

    Parameters
    ----------
    fluid : Fluid
        The liquid.
    line : Line
        Length, static head, minor losses, parallel lines.
    duty : DutyProfile
        Duty points (flow, hours) and growth.
    efficiency : float
        Wire-to-water efficiency of pumping (pump × motor × drive), 0 < η <= 1.
    tariff : EnergyTariff
        Energy price, escalation, demand charge.
    economics : Economics
        Discount rate, horizon, pipe life and maintenance.
    materials : list of MaterialChoice
        Candidate materials.
    pump_station : PumpStationCost, optional
        Station capital; absent means no pump capital.
    constraints : Constraints, optional
        Velocity limits and surge allowance.
    carbon : Carbon, optional
        Carbon prices; absent means no carbon cost.
    catalog : Catalog, optional
        Sizes and materials (default: the bundled catalog).
    name, currency : str
        Labels for outputs.
    friction_method : str
        ``"colebrook"`` (default), another :data:`pipeopt.friction.METHODS` entry, or
        ``"constant"`` with ``constant_friction_factor``.
    constant_friction_factor : float, optional
        Darcy factor for ``friction_method="constant"`` (textbook checks).
    illustrative : bool
        Marks every output as using illustrative (invented) numbers.
    """

    _DEMO_FILE = "demo_sizing.toml"

    def __init__(self, fluid: Fluid, line: Line, duty: DutyProfile, efficiency: float,
                 tariff: EnergyTariff, economics: Economics, materials: list[MaterialChoice],
                 pump_station: PumpStationCost | None = None,
                 constraints: Constraints | None = None, carbon: Carbon | None = None,
                 catalog: Catalog | None = None, name: str = "sizing study",
                 currency: str = "", friction_method: str = "colebrook",
                 constant_friction_factor: float | None = None,
                 illustrative: bool = False) -> None:
        if not isinstance(fluid, Fluid):
            raise InputError("fluid must be a pipeopt.Fluid")
        if not materials:
            raise InputError("materials: at least one candidate material is needed")
        self.fluid = fluid
        self.line = line
        self.duty = duty
        self.efficiency = _fraction(efficiency, "pumping.efficiency", 1e-6, 1.0)
        self.tariff = tariff
        self.economics = economics
        self.materials = list(materials)
        self.pump_station = pump_station
        self.constraints = constraints or Constraints()
        self.carbon = carbon
        self.catalog = catalog or default_catalog()
        self.name = name
        self.currency = currency
        self.illustrative = bool(illustrative)
        self.notes: list[str] = []
        #: The study file's ``[uncertainty]`` section (samples, seed, distributions), if any.
        self.uncertainty: dict[str, Any] | None = None
        names = [m.name for m in self.materials]
        if len(set(names)) != len(names):
            raise InputError("materials: each material may appear once")
        self.scenario = Scenario(
            density=fluid.density, viscosity=fluid.viscosity, length=line.length,
            static_head=line.static_head, minor_loss_k=line.minor_loss_k, parallel=line.parallel,
            duty=duty, efficiency=self.efficiency, tariff=tariff, pump_station=pump_station,
            discount_rate=economics.discount_rate, horizon=economics.horizon,
            pipe_life=economics.pipe_life, pipe_maintenance=economics.pipe_maintenance,
            grid_factor=carbon.grid_factor if carbon else 0.0,
            carbon_price=carbon.price / 1000.0 if carbon else 0.0,
            friction_method=friction_method, constant_friction_factor=constant_friction_factor)
        #: The pipe cost model of each material, resolved (a cost table given by designation
        #: becomes a :class:`~pipeopt.costs.TablePipeCost` on the catalog's inner diameters).
        self.pipe_costs: dict[str, PowerLawPipeCost | TablePipeCost] = {}
        self.candidates = self._build_candidates()

    # ----- construction ---------------------------------------------------------------------
    def _build_candidates(self) -> pd.DataFrame:
        frames = []
        for choice in self.materials:
            mat = self.catalog.material(choice.name)
            where = f"material {choice.name!r}"
            try:
                sizes = self.catalog.sizes(choice.name, pressure_class=choice.classes)
            except InputError as exc:
                raise InputError(f"{where}: {exc}") from None
            if choice.sizes is not None:
                try:
                    sizes = self.catalog.sizes(choice.name, designations=list(choice.sizes))
                except InputError as exc:
                    raise InputError(f"{where}: sizes: {exc}") from None
            if choice.min_diameter is not None:
                sizes = sizes[sizes["inner_diameter_m"] >= choice.min_diameter - 1e-12]
            if choice.max_diameter is not None:
                sizes = sizes[sizes["inner_diameter_m"] <= choice.max_diameter + 1e-12]
            if sizes.empty:
                raise InputError(f"{where}: no catalog size matches the diameter range and "
                                 f"classes given")
            sizes = sizes.reset_index(drop=True)
            cost = choice.cost
            if isinstance(cost, dict):  # a table by designation
                cost = self._cost_table(choice, cost["table"])
            if not isinstance(cost, (PowerLawPipeCost, TablePipeCost)):
                raise InputError(f"{where}: cost must be a power law {{coefficient, exponent}} "
                                 f"or a table")
            d = sizes["inner_diameter_m"].to_numpy()
            try:
                cost_m = np.asarray(cost.per_metre(d), dtype=float)
            except InputError as exc:
                raise InputError(f"{where}: {exc}") from None
            self.pipe_costs[choice.name] = cost
            roughness = mat.roughness if choice.roughness is None else choice.roughness
            aging = (0.0 if choice.aging is None else
                     mat.aging_rate if choice.aging == "typical" else float(choice.aging))
            od = sizes["outside_diameter_m"].to_numpy()
            wall = sizes["wall_m"].to_numpy()
            k = self.fluid.bulk_modulus or DEFAULT_BULK_MODULUS
            a = wave_speed(k, self.fluid.density, od - wall, wall, mat.elastic_modulus,
                           mat.poisson_ratio, self.constraints.restraint)
            mass = np.pi / 4.0 * (od**2 - (od - 2 * wall) ** 2) * mat.density
            co2 = mass * (mat.embodied_carbon or 0.0)
            frames.append(pd.DataFrame({
                "material": choice.name, "size": sizes["designation"],
                "pressure_class": sizes["pressure_class"], "outside_diameter_m": od,
                "wall_m": wall, "inner_diameter_m": d, "roughness_m": roughness,
                "aging_m_per_year": aging, "pressure_rating_pa": sizes["pressure_rating_pa"],
                "wave_speed_m_s": a, "cost_per_metre": cost_m, "embodied_co2_kg_per_m": co2,
                "provenance": sizes["provenance"]}))
        if self.fluid.bulk_modulus is None:
            self.notes.append("the fluid gives no bulk modulus: 2.19 GPa (water) is used for wave "
                              "speeds")
        return pd.concat(frames, ignore_index=True)[_CANDIDATE_STATIC]

    def _cost_table(self, choice: MaterialChoice, rows: Any) -> TablePipeCost:
        where = f"material {choice.name!r}: cost.table"
        if not isinstance(rows, list) or len(rows) < 2:
            raise InputError(f"{where} must list at least two [designation, cost] rows")
        pairs = []
        for j, row in enumerate(rows):
            if not (isinstance(row, (list, tuple)) and len(row) == 2):
                raise InputError(f"{where}[{j}] must be [designation, cost per metre]")
            label, value = row
            if isinstance(value, bool) or not isinstance(value, (int, float)) or value <= 0:
                raise InputError(f"{where}[{j}]: cost must be a positive number; got {value!r}")
            d = float(self.catalog.lookup(choice.name, str(label))["inner_diameter_m"])
            pairs.append((d, float(value), str(label)))
        pairs.sort()
        return TablePipeCost(tuple(p[0] for p in pairs), tuple(p[1] for p in pairs),
                             tuple(p[2] for p in pairs))

    # ----- study files ----------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> SizingStudy:
        top = Section(mapping, "", ("study", "fluid", "line", "duty", "growth", "pumping",
                                    "energy", "pump_station", "economics", "material",
                                    "constraints", "carbon", "hydraulics", "catalog",
                                    "uncertainty"))
        common = read_common_sections(top, base)
        name, currency, illustrative = common["name"], common["currency"], common["illustrative"]
        fluid, duty, efficiency = common["fluid"], common["duty"], common["efficiency"]
        tariff, station, economics = common["tariff"], common["pump_station"], common["economics"]
        catalog = common["catalog"]
        ln = top.table("line", ("length", "static_head", "minor_loss_k", "parallel"),
                       required=True)
        line = Line(Quantity(ln.quantity("length", "length"), "m"),
                    Quantity(ln.quantity("static_head", "head", positive=False), "m"),
                    ln.number("minor_loss_k", 0.0, low=0.0),
                    int(ln.number("parallel", 1, low=1, integer=True)))
        materials = [_read_material(m, catalog) for m in
                     top.tables("material", ("name", "min_diameter", "max_diameter", "sizes",
                                             "classes", "cost", "aging", "roughness"))]
        co = top.table("constraints", ("velocity_min", "velocity_max", "surge_allowance",
                                       "restraint"))
        constraints = Constraints()
        if co:
            vmin = co.quantity("velocity_min", "velocity", required=False, nonnegative=True)
            vmax = co.quantity("velocity_max", "velocity", required=False)
            surge = co.quantity("surge_allowance", "head", required=False, nonnegative=True)
            constraints = Constraints(
                None if vmin is None else Quantity(vmin, "m/s"),
                None if vmax is None else Quantity(vmax, "m/s"),
                None if surge is None else Quantity(surge, "m"),
                co.text("restraint", "anchored-throughout", RESTRAINTS))
        cb = top.table("carbon", ("grid_factor", "price", "embodied"))
        carbon = None
        if cb:
            emb = cb.raw("embodied", True)
            if not isinstance(emb, bool):
                raise StudyFileError("carbon.embodied: expected true or false")
            carbon = Carbon(cb.number("grid_factor", None, low=0.0, high=5.0, example="0.25"),
                            cb.number("price", None, low=0.0, example="80"), emb)
        hy = top.table("hydraulics", ("friction_method", "friction_factor"))
        method, const = "colebrook", None
        if hy:
            method = hy.text("friction_method", "colebrook", (*fr.METHODS, "constant"))
            if method == "constant":
                const = hy.number("friction_factor", None, low=0.0, high=1.0, low_open=True,
                                  example="0.02")
        study = cls(fluid, line, duty, efficiency, tariff, economics, materials, station,
                    constraints, carbon, catalog, name, currency, method, const, illustrative)
        unc = top.table("uncertainty", tuple(top.data.get("uncertainty", {}) or ()))
        if unc:
            from .uncertainty import read_uncertainty_section

            study.uncertainty = read_uncertainty_section(unc)
            for name in study.uncertainty["distributions"]:
                try:
                    from .uncertainty import _check_name

                    _check_name(study, name)
                except InputError as exc:
                    raise StudyFileError(f"uncertainty.{name}: {exc}") from None
        return study

    # ----- running --------------------------------------------------------------------------
    def evaluate(self, scenario: Scenario | None = None,
                 variations: Variations | None = None, yearly: bool = True) -> LifeCycle:
        """The life-cycle arrays of every candidate (model layer output).

        With ``variations`` (per-sample inputs), the arrays have a leading sample axis;
        ``yearly=False`` skips the yearly arrays.
        """
        c = self.candidates
        s = scenario or self.scenario
        co2 = c["embodied_co2_kg_per_m"].to_numpy() if (self.carbon and self.carbon.embodied) \
            else 0.0
        return evaluate(s, c["inner_diameter_m"].to_numpy(), c["roughness_m"].to_numpy(),
                        c["aging_m_per_year"].to_numpy(), c["cost_per_metre"].to_numpy(), co2,
                        variations=variations, yearly=yearly)

    def run(self, scenario: Scenario | None = None, optimum: bool = True) -> SizingResult:
        """Evaluate every candidate, check feasibility, pick the best, find continuous optima.

        Parameters
        ----------
        scenario : Scenario, optional
            Replaces the study's own (for sensitivity and the explorer).
        optimum : bool
            Also find the continuous optimum of each material (default True).
        """
        s = scenario or self.scenario
        lc = self.evaluate(s)
        table = self._table(lc, s)
        feasible = table[table["feasible"]]
        if feasible.empty:
            best = None
            success = False
            message = ("no candidate meets every constraint; see the 'reasons' column (relax a "
                       "limit, widen the diameter range, or add a pressure class)")
        else:
            best = feasible.loc[feasible["eac"].idxmin()]
            success = True
            message = f"best of {len(feasible)} feasible candidates out of {len(table)}"
        opt = self.continuous_optimum(s, table) if optimum else pd.DataFrame()
        return SizingResult(self, table, best, opt, success, message, lc, s)

    def feasibility(self, lc: LifeCycle, s: Scenario | None = None) -> dict[str, np.ndarray]:
        """The constraint checks of every candidate, as arrays (any leading sample axis).

        Returns
        -------
        dict of ndarray
            ``surge`` [m], ``design_pressure`` [Pa], ``rating`` [Pa], masks ``too_slow``,
            ``too_fast``, ``over_pressure`` (True where the rule is broken) and ``feasible``.
        """
        s = s or self.scenario
        c = self.candidates
        con = self.constraints
        if con.surge_allowance is not None:
            surge = np.full(np.shape(lc.velocity_max), con.surge_allowance)
        else:
            surge = joukowsky_head(c["wave_speed_m_s"].to_numpy(), np.asarray(lc.velocity_max))
        design_pressure = (lc.pump_head_max + surge) * (s.density * fr.GRAVITY)
        rating = c["pressure_rating_pa"].to_numpy(dtype=float)
        too_slow = (lc.velocity_design < con.velocity_min if con.velocity_min is not None
                    else np.zeros(np.shape(lc.velocity_design), dtype=bool))
        too_fast = (lc.velocity_max > con.velocity_max if con.velocity_max is not None
                    else np.zeros(np.shape(lc.velocity_max), dtype=bool))
        over = np.isfinite(rating) & (design_pressure > rating)
        return {"surge": surge, "design_pressure": design_pressure, "rating": rating,
                "too_slow": too_slow, "too_fast": too_fast, "over_pressure": over,
                "feasible": ~(too_slow | too_fast | over)}

    def _table(self, lc: LifeCycle, s: Scenario) -> pd.DataFrame:
        c = self.candidates
        checks = self.feasibility(lc, s)
        surge, design_pressure = checks["surge"], checks["design_pressure"]
        rating = checks["rating"]
        df = pd.DataFrame({
            "material": c["material"], "size": c["size"], "pressure_class": c["pressure_class"],
            "inner_diameter_m": c["inner_diameter_m"], "roughness_m": c["roughness_m"],
            "velocity_m_s": lc.velocity_design, "reynolds": lc.reynolds_design,
            "friction_factor": lc.friction_factor_design, "head_loss_m": lc.head_loss_design,
            "pump_head_m": lc.pump_head_design, "pump_power_kw": lc.pump_power_peak_year1,
            "energy_kwh_year1": lc.energy_year1, "velocity_max_m_s": lc.velocity_max,
            "pump_head_max_m": lc.pump_head_max, "surge_head_m": surge,
            "design_pressure_bar": design_pressure / 1e5, "pressure_rating_bar": rating / 1e5,
            "installed_power_kw": lc.installed_power, "capex_pipe": lc.capex_pipe,
            "capex_pump_station": lc.capex_pump_station, "pv_energy": lc.pv_energy,
            "pv_maintenance": lc.pv_maintenance, "pv_replacement": lc.pv_replacement,
            "pv_carbon": lc.pv_carbon, "pv_residual": lc.pv_residual, "pv_total": lc.pv_total,
            "eac": lc.eac,
        })
        con = self.constraints
        rated = np.isfinite(rating)
        pclass = c["pressure_class"].to_numpy(dtype=str)
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
        reasons = _join_clauses(len(c), clauses)
        notes = _join_clauses(len(c), [
            (~rated, lambda ix: np.full(ix.size, "no pressure rating: pressure not checked")),
            (np.asarray(lc.transitional_points) > 0, lambda ix: np.full(
                ix.size, "transitional flow (2000 <= Re < 4000) at some duty points")),
            (lc.roughness_capped, lambda ix: np.full(
                ix.size, "aged roughness capped at 0.05 D (Moody chart limit)"))])
        df["feasible"] = checks["feasible"]
        df["reasons"] = reasons
        df["notes"] = notes
        df["rank"] = df["eac"].where(df["feasible"]).rank(method="first").astype("Int64")
        return df

    def continuous_optimum(self, scenario: Scenario | None = None,
                           table: pd.DataFrame | None = None) -> pd.DataFrame:
        """The EAC-minimizing inner diameter of each material when D varies continuously.

        Between the material's smallest and largest candidate inner diameters, with its cost
        model, new roughness and aging: two vectorized scans (65 log-spaced diameters, then 33
        around the best of them, all materials in one evaluation each) bracket the minimum, then
        :func:`scipy.optimize.minimize_scalar` (bounded, xatol 1e-7 m) refines it.
        Reported with the two candidate sizes that bracket it.
        """
        s = scenario or self.scenario
        if table is None:
            table = self._table(self.evaluate(s), s)
        mat_col = self.candidates["material"].to_numpy()
        d_all = self.candidates["inner_diameter_m"].to_numpy()
        specs = []
        for choice in self.materials:
            sel = mat_col == choice.name
            first = int(np.flatnonzero(sel)[0])
            specs.append((choice, sel, float(d_all[sel].min()), float(d_all[sel].max()),
                          float(self.candidates["roughness_m"].iloc[first]),
                          float(self.candidates["aging_m_per_year"].iloc[first])))
        # one vectorized scan of every material's range brackets each minimum
        eps_all = np.array([sp[4] for sp in specs])
        alpha_all = np.array([sp[5] for sp in specs])

        def scan(grids: np.ndarray) -> np.ndarray:  # EAC on an (M, n) grid, one evaluation
            n = grids.shape[1]
            costs = np.concatenate([np.asarray(self.pipe_costs[sp[0].name].per_metre(g))
                                    for sp, g in zip(specs, grids, strict=True)])
            return evaluate(s, grids.ravel(), np.repeat(eps_all, n), np.repeat(alpha_all, n),
                            costs, eac_only=True).reshape(grids.shape)

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
        for (choice, sel, d_lo, d_hi, eps0, alpha), grid, values in zip(
                specs, grids, scan_eac, strict=True):
            cost = self.pipe_costs[choice.name]

            def eac(x: float, cost=cost, eps0=eps0, alpha=alpha) -> float:
                d = np.array([x])
                return float(evaluate(s, d, eps0, alpha, np.asarray(cost.per_metre(d)),
                                      eac_only=True)[0])

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
                "material": choice.name, "inner_diameter_m": d_star, "eac": e_star,
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
                    seed: int | None = None, progress: bool | None = None):
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
                           seed if seed is not None else cfg.get("seed", 0), progress)

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
                f"{s.horizon} years</p>"
                + duty.to_html(index=False, border=0, float_format=lambda x: f"{x:,.4g}")
                + mats.to_html(index=False, border=0, float_format=lambda x: f"{x:,.1f}")
                + "</div>")


def read_common_sections(top: Section, base: Path) -> dict[str, Any]:
    """Read the sections a sizing and an upgrade study share.

    ``[study]``, ``[fluid]``, ``[[duty]]``, ``[growth]``, ``[pumping]``, ``[energy]``,
    ``[pump_station]``, ``[economics]`` and ``[catalog]`` (paths relative to ``base``).
    """
    study = top.table("study", ("name", "currency", "illustrative", "description"))
    name, currency, illustrative = "study", "", False
    if study:
        name = study.text("name", "study")
        currency = study.text("currency", "")
        ill = study.raw("illustrative", False)
        if not isinstance(ill, bool):
            raise StudyFileError("study.illustrative: expected true or false")
        illustrative = ill
        study.text("description", "")
    fluid = _read_fluid(top.table("fluid", ("kind", "temperature", "pressure", "name",
                                            "density", "viscosity", "vapour_pressure",
                                            "bulk_modulus"), required=True))
    flows, hours, names = [], [], []
    for d in top.tables("duty", ("flow", "hours", "name")):
        flows.append(d.quantity("flow", "flow"))
        hours.append(d.number("hours", None, low=0.0, high=8760.0, low_open=True,
                              example="4200"))
        names.append(d.text("name", f"duty {len(names) + 1}"))
    growth = 0.0
    gr = top.table("growth", ("flow_per_year",))
    if gr:
        growth = gr.number("flow_per_year", 0.0, low=-0.5, high=0.5)
    duty = DutyProfile(tuple(flows), tuple(hours), growth, tuple(names))
    pu = top.table("pumping", ("efficiency",), required=True)
    efficiency = pu.number("efficiency", None, low=0.0, high=1.0, low_open=True, example="0.70")
    en = top.table("energy", ("price", "escalation", "demand_charge"), required=True)
    tariff = EnergyTariff(en.number("price", None, low=0.0, low_open=True, high=100.0,
                                    example="0.12"),
                          en.number("escalation", 0.0, low=-0.5, high=0.5),
                          en.number("demand_charge", 0.0, low=0.0))
    ps = top.table("pump_station", ("cost_coefficient", "cost_exponent", "standby_fraction",
                                    "life", "maintenance"))
    station = None
    if ps:
        station = PumpStationCost(
            ps.number("cost_coefficient", None, low=0.0, low_open=True, example="8000"),
            ps.number("cost_exponent", None, low=0.0, high=2.0, low_open=True, example="0.7"),
            ps.number("standby_fraction", 0.0, low=0.0, high=10.0),
            ps.number("life", 20.0, low=1.0, high=200.0),
            ps.number("maintenance", 0.0, low=0.0, high=1.0))
    ec = top.table("economics", ("discount_rate", "horizon", "pipe_life", "pipe_maintenance"),
                   required=True)
    economics = Economics(ec.number("discount_rate", None, low=0.0, high=1.0, example="0.05"),
                          int(ec.number("horizon", None, low=1, high=200, integer=True,
                                        example="30")),
                          ec.number("pipe_life", None, low=1.0, high=500.0, example="60"),
                          ec.number("pipe_maintenance", 0.0, low=0.0, high=1.0))
    cat = top.table("catalog", ("sizes", "materials"))
    catalog = default_catalog()
    if cat:
        sizes_path = cat.text("sizes")
        mats_path = cat.text("materials")
        catalog = load_catalog(sizes=base / sizes_path if sizes_path else None,
                               materials=base / mats_path if mats_path else None)
    return {"name": name, "currency": currency, "illustrative": illustrative, "fluid": fluid,
            "duty": duty, "efficiency": efficiency, "tariff": tariff, "pump_station": station,
            "economics": economics, "catalog": catalog}


def _join_clauses(n: int, clauses: list) -> np.ndarray:
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


def _read_fluid(sec: Section) -> Fluid:
    kind = sec.text("kind", "water", ("water", "coolprop", "custom"))
    if kind == "custom":
        fluid = Fluid(Quantity(sec.quantity("density", "density"), "kg/m^3"),
                      Quantity(sec.quantity("viscosity", "viscosity"), "Pa*s"),
                      None if not sec.has("vapour_pressure") else
                      Quantity(sec.quantity("vapour_pressure", "pressure", nonnegative=True), "Pa"),
                      None if not sec.has("bulk_modulus") else
                      Quantity(sec.quantity("bulk_modulus", "pressure"), "Pa"),
                      name=sec.text("name", "custom fluid"))
    else:
        t = sec.quantity("temperature", "temperature")
        p = sec.quantity("pressure", "pressure", default="1 atm", required=False)
        if kind == "water":
            fluid = Fluid.water(Quantity(t, "K"), Quantity(p, "Pa"))
        else:
            name = sec.text("name", None)
            if not name:
                raise StudyFileError("fluid.name: required with kind = \"coolprop\" (e.g. "
                                     "name = \"INCOMP::MEG-30%\")")
            fluid = Fluid.coolprop(name, Quantity(t, "K"), Quantity(p, "Pa"))
    return fluid


def _read_material(sec: Section, catalog: Catalog) -> MaterialChoice:
    name = sec.text("name", None)
    if not name:
        raise StudyFileError(f"{sec.key('name')}: required key is missing (a catalog material "
                             f"such as \"ductile-iron\")")
    try:
        catalog.material(name)
    except InputError as exc:
        raise StudyFileError(f"{sec.key('name')}: {exc}") from None
    cost_sec = sec.table("cost", ("coefficient", "exponent", "table"), required=True)
    if cost_sec.has("table"):
        cost: Any = {"table": cost_sec.raw("table")}
    else:
        cost = PowerLawPipeCost(
            cost_sec.number("coefficient", None, low=0.0, low_open=True, example="1800.0"),
            cost_sec.number("exponent", None, low=0.0, high=4.0, low_open=True, example="1.25"))
    lists = {}
    for key in ("sizes", "classes"):
        v = sec.raw(key)
        if v is not None and (not isinstance(v, list) or not all(isinstance(x, str) for x in v)):
            raise StudyFileError(f"{sec.key(key)}: expected a list of text, e.g. "
                                 f"[\"DN 300 C40\"]")
        lists[key] = v
    aging = sec.raw("aging")
    if aging is not None and aging != "typical":
        aging = Quantity(sec.quantity("aging", "aging_rate", nonnegative=True), "m/year")
    rough = None
    if sec.has("roughness"):
        rough = Quantity(sec.quantity("roughness", "roughness", nonnegative=True), "m")
    dmin = sec.quantity("min_diameter", "diameter", required=False)
    dmax = sec.quantity("max_diameter", "diameter", required=False)
    try:
        return MaterialChoice(name, cost, None if dmin is None else Quantity(dmin, "m"),
                              None if dmax is None else Quantity(dmax, "m"), lists["sizes"],
                              lists["classes"], aging, rough)
    except InputError as exc:
        raise StudyFileError(f"{sec.path}: {exc}") from None


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
@dataclass
class SizingResult:
    """What a sizing study found.

    Attributes
    ----------
    study : SizingStudy
        The study that was run.
    candidates : pandas.DataFrame
        One row per (material, size, class); money in the study currency, other units in the
        column names. ``feasible`` and ``reasons`` say whether and why not; ``rank`` orders the
        feasible candidates by EAC.
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
        The model-layer arrays (yearly energy, peak demand, costs) behind the table.
    scenario : Scenario
        The SI inputs used.
    """

    study: SizingStudy
    candidates: pd.DataFrame
    best: pd.Series | None
    optimum: pd.DataFrame
    success: bool
    message: str
    lifecycle: LifeCycle = field(repr=False)
    scenario: Scenario = field(repr=False)

    @property
    def currency(self) -> str:
        return self.study.currency

    def yearly(self, index: int | None = None) -> pd.DataFrame:
        """Year-by-year flows, energy and costs of one candidate (default: the best)."""
        if index is None:
            if self.best is None:
                raise InputError("no feasible candidate: pass the row index of a candidate")
            index = int(self.best.name)
        lc = self.lifecycle
        n = self.scenario.horizon
        t = np.arange(1, n + 1)
        return pd.DataFrame({
            "year": t, "flow_factor": self.scenario.duty.growth_factors(n),
            "energy_kwh": lc.energy_kwh[index], "peak_kw": lc.peak_kw[index],
            "energy_cost": lc.energy_cost[index], "maintenance": lc.maintenance[index],
            "carbon_cost": lc.carbon_cost[index],
            "discount_factor": np.exp(-t * np.log1p(self.scenario.discount_rate)),
        })

    def breakdown(self, n: int = 5) -> pd.DataFrame:
        """Present-value cost breakdown of the ``n`` best feasible candidates."""
        cols = ["material", "size", "capex_pipe", "capex_pump_station", "pv_energy",
                "pv_maintenance", "pv_replacement", "pv_carbon", "pv_residual", "pv_total", "eac"]
        feas = self.candidates[self.candidates["feasible"]]
        return feas.nsmallest(n, "eac")[cols]

    def runner_up(self) -> pd.DataFrame:
        """The best and second-best feasible candidate of each material."""
        feas = self.candidates[self.candidates["feasible"]].sort_values("eac")
        return feas.groupby("material", sort=False).head(2).reset_index(drop=True)

    def summary(self) -> str:
        """A plain-text summary: the best candidate, runners-up, continuous optima."""
        cur = f" {self.currency}" if self.currency else ""
        s = self.study
        lines = [f"pipeopt sizing study: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the scenario and its cost figures are invented.")
        lines.append(f"{len(self.candidates)} candidates, {len(s.duty.flows)} duty point(s), "
                     f"horizon {s.economics.horizon} years at "
                     f"{s.economics.discount_rate * 100:g} % real; {self.message}")
        b = self.best
        if b is not None:
            lines += [
                "",
                f"Best: {b['material']} {b['size']} (inner diameter "
                f"{b['inner_diameter_m'] * 1000:.1f} mm)",
                f"  EAC {b['eac']:,.0f}{cur}/yr; present value {b['pv_total']:,.0f}{cur} "
                f"(pipe {b['capex_pipe']:,.0f}, pump station {b['capex_pump_station']:,.0f}, "
                f"energy {b['pv_energy']:,.0f})",
                f"  velocity {b['velocity_m_s']:.2f} m/s, head loss {b['head_loss_m']:.2f} m, "
                f"pump head {b['pump_head_m']:.1f} m, peak power {b['pump_power_kw']:.1f} kW "
                f"(largest duty, year 1)",
                f"  design pressure {b['design_pressure_bar']:.1f} bar (highest head "
                f"{b['pump_head_max_m']:.1f} m + surge {b['surge_head_m']:.1f} m) against a "
                f"{b['pressure_rating_bar']:.1f} bar rating",
            ]
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
            lines += ["", "Continuous optimum (inner diameter, EAC, bracketing sizes):"]
            for _, o in self.optimum.iterrows():
                flag = " (at the edge of the size range)" if o["at_bound"] else ""
                lines.append(f"  {o['material']:<16} {o['inner_diameter_m'] * 1000:8.1f} mm  "
                             f"EAC {o['eac']:>12,.0f}{cur}/yr  between {o['lower_size']} and "
                             f"{o['upper_size']}{flag}")
        infeasible = int((~self.candidates["feasible"]).sum())
        if infeasible:
            lines += ["", f"{infeasible} candidate(s) infeasible; see the 'reasons' column."]
        if s.notes:
            lines += [f"Note: {n}" for n in s.notes]
        lines += ["", "Caution: " + CAUTION]
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.summary()

    def _repr_html_(self) -> str:
        top = self.candidates.sort_values(["feasible", "eac"], ascending=[False, True]).head(10)
        cols = ["material", "size", "inner_diameter_m", "velocity_m_s", "head_loss_m",
                "pump_power_kw", "capex_pipe", "pv_energy", "eac", "feasible", "reasons"]
        styled = top[cols].to_html(index=False, float_format=lambda x: f"{x:,.4g}",
                                   classes="pipeopt-table", border=0)
        text = html.escape(self.summary()).replace("\n", "<br>")
        money = html.escape(self.currency or "currency")
        return (f"<div class='pipeopt-result'><p style='font-family:monospace'>{text}</p>"
                f"<p><b>Ten best candidates</b> (money in {money})</p>{styled}</div>")
