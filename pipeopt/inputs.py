"""Study inputs (edge layer): the sections of a study file as frozen dataclasses, and readers.

Each section is an :class:`~pipeopt.fields.InputSection`: units are parsed once on entry, every
rule is checked once with one message (naming the key path, the rule and the value), and the
section cannot be changed afterwards (``study.economics.discount_rate = 0.02`` raises). For a
what-if, build a new study with :meth:`pipeopt.sizing.SizingStudy.replace` or pass named inputs
to ``run(inputs=...)``.

The readers (:func:`read_sizing`, :func:`read_upgrade`) turn a study-file mapping into these
sections; every section is read and checked before any fluid property or physics call, so a bad
file is answered at once.
"""

from __future__ import annotations

import datetime as _dt
from dataclasses import dataclass, field
from pathlib import Path
from typing import TYPE_CHECKING, Any

from . import friction as fr
from .costs import (
    DesignationCostTable,
    EnergyTariff,
    MassLayingCost,
    PipeCostModel,
    PowerLawPipeCost,
    PumpStationCost,
)
from .duty import DutyProfile
from .errors import InputError
from .fields import (
    SI,
    InputSection,
    flag,
    number,
    quantity,
    section,
    text,
    texts,
    to_quantity,
    whole,
)
from .fluid import Fluid
from .pumpset import PumpSet
from .studyfile import Section, StudyFileError
from .surge import RESTRAINTS

if TYPE_CHECKING:  # the catalog brings pandas: imported where a reader needs it
    from .catalog import Catalog

__all__ = ["StudyInfo", "FluidSpec", "Line", "Pumping", "Economics", "Constraints", "Carbon",
           "Hydraulics", "MaterialChoice", "FieldTest", "ExistingLine",
           "UpgradeOption", "OPTION_KINDS", "read_common", "read_sizing", "read_upgrade"]


# --------------------------------------------------------------------------------------------
# sections every study shares
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class StudyInfo(InputSection):
    """Labels of a study for its outputs: the title block of every report.

    Parameters
    ----------
    name : str
        The study's title.
    currency : str
        A label for every money figure (``"EUR"``).
    illustrative : bool
        The numbers are invented; every output says so.
    description : str
        A sentence on the job.
    author : str
        Who prepared the study (``"A. Engineer"``).
    revision : str
        Its revision (``"B"``, ``"2"``, ``"draft"``).
    date : str
        Its date, as text (``"2026-03-01"``) or a TOML date (``date = 2026-03-01``), shown
        as given. pipeopt never reads the clock: a report without a date says so.
    """

    SECTION = "study"
    name: str = text(default="study")
    currency: str = text(default="")
    illustrative: bool = flag(default=False)
    description: str = text(default="")
    author: str = text(default="")
    revision: str = text(default="")
    date: str = text(default="")

    def __post_init__(self) -> None:
        if isinstance(self.date, _dt.date):  # a TOML date (or a datetime.date from Python)
            object.__setattr__(self, "date", self.date.isoformat())
        super().__post_init__()


@dataclass(frozen=True)
class FluidSpec(InputSection):
    """The ``[fluid]`` section: which liquid, at which state (properties are computed by
    :meth:`build`, after every section has been checked).

    Parameters
    ----------
    kind : {"water", "coolprop", "custom"}
    temperature : str or Quantity
        Required for water and CoolProp fluids, e.g. ``"15 degC"``.
    pressure : str or Quantity, optional
        Absolute pressure at which properties are evaluated (default 1 atm).
    name : str, optional
        CoolProp fluid name (``kind = "coolprop"``) or a label (``"custom"``).
    density, viscosity, vapour_pressure, bulk_modulus : str or Quantity, optional
        The properties of a custom fluid.
    """

    SECTION = "fluid"
    kind: str = text(("water", "coolprop", "custom"), default="water")
    temperature: float | None = quantity("temperature", low=0.0, low_open=True, default=None)
    pressure: float | None = quantity("pressure", low=0.0, low_open=True, default=None)
    name: str | None = text(default=None)
    density: float | None = quantity("density", low=0.0, low_open=True, default=None)
    viscosity: float | None = quantity("viscosity", low=0.0, low_open=True, default=None)
    vapour_pressure: float | None = quantity("pressure", low=0.0, default=None)
    bulk_modulus: float | None = quantity("pressure", low=0.0, low_open=True, default=None)

    def _check(self, path: str) -> None:
        if self.kind == "custom":
            for key in ("density", "viscosity"):
                if getattr(self, key) is None:
                    raise InputError(f"{path}.{key}: required with kind = \"custom\" (write it "
                                     f"with a unit)")
        else:
            if self.temperature is None:
                raise InputError(f"{path}.temperature: required key is missing (write it with "
                                 f"a unit, e.g. temperature = \"15 degC\")")
            if self.kind == "coolprop" and not self.name:
                raise InputError(f"{path}.name: required with kind = \"coolprop\" (e.g. "
                                 f"name = \"INCOMP::MEG-30%\")")

    def build(self) -> Fluid:
        """The :class:`~pipeopt.fluid.Fluid` (property calls happen here)."""
        def q(v: float | None, unit: str) -> str | None:
            return None if v is None else f"{float(v)!r} {unit}"

        if self.kind == "custom":
            return Fluid(q(self.density, "kg/m^3"), q(self.viscosity, "Pa*s"),
                         q(self.vapour_pressure, "Pa"), q(self.bulk_modulus, "Pa"),
                         name=self.name or "custom fluid")
        t = q(self.temperature, "K")
        p = q(self.pressure, "Pa") or "1 atm"
        if self.kind == "water":
            return Fluid.water(t, p)
        return Fluid.coolprop(self.name, t, p)


@dataclass(frozen=True)
class Pumping(InputSection):
    """Pumping: how hydraulic power becomes electrical power, and the pump's suction.

    Give the efficiency one way: ``efficiency``, the wire-to-water efficiency η (pump × motor ×
    drive), 0 < η <= 1 (the plain case); or the pump's own efficiency, as a constant
    (``pump_efficiency``), on every ``[[duty]]`` (``duty[k].efficiency``) or as a curve against
    flow (``bep_efficiency``, ``bep_flow``), with ``motor_efficiency`` and ``drive_efficiency``
    apart (:class:`~pipeopt.pumpset.PumpSet`).

    Parameters
    ----------
    efficiency : float, optional
        Wire-to-water efficiency η [-].
    pump_efficiency : float, optional
        Pump efficiency at every duty [-].
    bep_efficiency : float, optional
        Pump efficiency at its best-efficiency point [-]; the efficiency follows
        :func:`pipeopt.pumps.bep_efficiency_curve` against flow.
    bep_flow : str or Quantity, optional
        Best-efficiency flow at full speed (default: each station's design flow, the largest it
        serves), e.g. ``"1200 m^3/h"``.
    control : {"throttle", "variable-speed"}, optional
        With a curve: fixed speed and a control valve (default), or a variable-speed drive.
    shutoff_head_ratio : float, optional
        With a curve: shut-off head over design head (default 1.2, common practice for radial
        pumps).
    motor_efficiency, drive_efficiency : float, optional
        Motor and drive efficiencies [-] (default 1: included in the pump efficiency).
    npsh_required : str or Quantity, optional
        NPSH the pump requires at its largest flow, e.g. ``"6 m"``: the NPSH available at each
        station's inlet must exceed it by ``npsh_margin``.
    npsh_margin : str or Quantity, optional
        Margin over the NPSH required (default ``"1 m"``, common practice).
    elevation : str or Quantity, optional
        Elevation of the pump above sea level for the barometric pressure (default ``"0 m"``;
        a line with a ground profile takes each station's from the profile).
    """

    SECTION = "pumping"
    efficiency: float | None = number(0.0, 1.0, low_open=True, default=None, example="0.70")
    pump_efficiency: float | None = number(0.0, 1.0, low_open=True, default=None)
    bep_efficiency: float | None = number(0.0, 1.0, low_open=True, default=None)
    bep_flow: float | None = quantity("flow", low=0.0, low_open=True, default=None)
    control: str | None = text(("throttle", "variable-speed"), default=None)
    shutoff_head_ratio: float | None = number(1.0, 3.0, low_open=True, default=None)
    motor_efficiency: float | None = number(0.0, 1.0, low_open=True, default=None)
    drive_efficiency: float | None = number(0.0, 1.0, low_open=True, default=None)
    npsh_required: float | None = quantity("head", low=0.0, default=None)
    npsh_margin: float | None = quantity("head", low=0.0, default=None)
    elevation: float | None = quantity("head", low=-500.0, high=9000.0, default=None)

    def _check(self, path: str) -> None:
        ways = [k for k in ("efficiency", "pump_efficiency", "bep_efficiency")
                if getattr(self, k) is not None]
        if len(ways) > 1:
            raise InputError(f"{path}.{ways[1]}: give one of efficiency (wire-to-water), "
                             f"pump_efficiency and bep_efficiency")
        if self.efficiency is not None:
            for key in ("motor_efficiency", "drive_efficiency"):
                if getattr(self, key) is not None:
                    raise InputError(f"{path}.{key}: not with efficiency, which is wire-to-water "
                                     f"(it includes the motor and drive); give pump_efficiency "
                                     f"or bep_efficiency instead")
        if self.bep_efficiency is None:
            for key in ("bep_flow", "control", "shutoff_head_ratio"):
                if getattr(self, key) is not None:
                    raise InputError(f"{path}.{key}: needs a pump curve (bep_efficiency)")
        if self.npsh_margin is not None and self.npsh_required is None:
            raise InputError(f"{path}.npsh_margin: needs npsh_required")

    #: Keys that describe one station's pump (a curve, its control, NPSH, its elevation).
    ONE_STATION_KEYS = ("bep_efficiency", "bep_flow", "control", "shutoff_head_ratio",
                        "npsh_required", "npsh_margin", "elevation")

    def wire_to_water(self, study: str) -> float:
        """One wire-to-water efficiency, for studies that price pumping with a single one.

        ``efficiency`` as given, or ``pump_efficiency`` × ``motor_efficiency`` ×
        ``drive_efficiency`` (each 1 when not given: the efficiencies of a pump train in series
        multiply, common practice).

        Parameters
        ----------
        study : str
            What prices the pumping this way (for the message), e.g. "a renewal programme".

        Raises
        ------
        InputError
            For a key of one station's pump (:data:`ONE_STATION_KEYS`), and when no efficiency
            is given.
        """
        for key in self.ONE_STATION_KEYS:
            if getattr(self, key) is not None:
                raise InputError(f"pumping.{key}: {study} prices its pumping with one "
                                 f"wire-to-water efficiency; give efficiency, or pump_efficiency "
                                 f"(with motor_efficiency, drive_efficiency)")
        if self.efficiency is not None:
            return float(self.efficiency)
        if self.pump_efficiency is not None:
            return float(self.pump_efficiency
                         * (1.0 if self.motor_efficiency is None else self.motor_efficiency)
                         * (1.0 if self.drive_efficiency is None else self.drive_efficiency))
        raise InputError("pumping.efficiency: required key is missing (e.g. efficiency = 0.70, "
                         "or pump_efficiency with motor_efficiency)")

    def pump_set(self, duty: DutyProfile) -> PumpSet:
        """The :class:`~pipeopt.pumpset.PumpSet` of these settings and the duty's efficiencies.

        Raises
        ------
        InputError
            When no efficiency is given, or the duty's and this section's both are.
        """
        if duty.efficiencies and (self.efficiency is not None or self.pump_efficiency
                                  is not None or self.bep_efficiency is not None):
            raise InputError("duty[0].efficiency: the duty points give pump efficiencies; leave "
                             "pumping.efficiency, pump_efficiency and bep_efficiency out")
        if self.efficiency is not None:
            return PumpSet(float(self.efficiency))
        drive = (1.0 if self.motor_efficiency is None else self.motor_efficiency) * \
            (1.0 if self.drive_efficiency is None else self.drive_efficiency)
        if self.bep_efficiency is not None:
            return PumpSet(self.bep_efficiency * drive, bep_flow=self.bep_flow, curve=True,
                           control=self.control or "throttle",
                           shutoff_ratio=self.shutoff_head_ratio or 1.2)
        if self.pump_efficiency is not None:
            return PumpSet(self.pump_efficiency * drive)
        if duty.efficiencies:
            best = max(duty.efficiencies)
            return PumpSet(best * drive,
                           duty_ratios=tuple(e / best for e in duty.efficiencies))
        raise InputError("pumping.efficiency: required key is missing (e.g. efficiency = 0.70; "
                         "or pump_efficiency, bep_efficiency, or an efficiency on every "
                         "[[duty]])")


@dataclass(frozen=True)
class Economics(InputSection):
    """Discounting and lives.

    Parameters
    ----------
    discount_rate : float
        Real discount rate per year (0.05 for 5 %), 0 to 1.
    horizon : int
        Analysis horizon [yr], whole years from 1 to 200.
    pipe_life : float
        Pipe service life [yr] (straight-line residual value at the horizon), 1 to 500.
    pipe_maintenance : float
        Yearly pipe maintenance as a fraction of pipe capital, 0 to 1.
    """

    SECTION = "economics"
    discount_rate: float = number(0.0, 1.0, example="0.05", unit="1/yr")
    horizon: int = whole(1, 200, example="30", unit="yr")
    pipe_life: float = number(1.0, 500.0, example="60", unit="yr")
    pipe_maintenance: float = number(0.0, 1.0, default=0.0, unit="1/yr")


@dataclass(frozen=True)
class Line(InputSection):
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
    suction_pressure : str or Quantity
        Gauge pressure at the pump suction, e.g. ``"10 bar"`` in a closed loop (district
        heating, chilled water); default 0 (suction from an open tank at the pump's level).
        Every pressure along the line includes it.
    cover : str or Quantity, optional
        Depth of cover over the pipe crown along a ground profile, e.g. ``"1.2 m"`` (required
        with a ``[[profile]]``).
    source_level : str or Quantity, optional
        With a ground profile: the level of the liquid the first station draws from, e.g.
        ``"86 m"`` (default: the pipe axis at the first chainage); the delivery head is this
        plus ``static_head``.
    """

    SECTION = "line"
    length: float = quantity("length", low=0.0, low_open=True)
    static_head: float = quantity("head")
    minor_loss_k: float = number(0.0, 1e4, default=0.0)
    parallel: int = whole(1, 100, default=1)
    suction_pressure: float = quantity("pressure", low=-1e5, high=1e8, default="0 Pa")
    cover: float | None = quantity("length", low=0.0, high=50.0, default=None)
    source_level: float | None = quantity("head", default=None)


@dataclass(frozen=True)
class Constraints(InputSection):
    """Feasibility limits.

    Parameters
    ----------
    velocity_min, velocity_max : str or Quantity, optional
        Velocity limits, e.g. ``"0.5 m/s"``. velocity_max is checked against the largest flow of
        the years within the horizon; velocity_min against the largest duty flow in year 1.
    surge_allowance : str or Quantity, optional
        A head added to the highest pump head in the pressure check, e.g. ``"40 m"``. When not
        given, the Joukowsky head rise of stopping the largest flow is used, with the
        candidate's Korteweg wave speed.
    restraint : str
        Axial restraint for the wave speed (:data:`pipeopt.surge.RESTRAINTS`); default
        ``"anchored-throughout"`` (buried, restrained pipe).
    pressure_min : str or Quantity, optional
        Long lines: the lowest gauge pressure allowed anywhere along the line at any duty,
        e.g. ``"0.5 bar"``. Default: the vapour pressure of the liquid plus
        ``vapour_margin`` (absolute, with the standard atmosphere at each elevation).
    vapour_margin : str or Quantity
        Long lines: the head kept above the vapour pressure when ``pressure_min`` is not given
        (default ``"3 m"``, common practice).
    """

    SECTION = "constraints"
    velocity_min: float | None = quantity("velocity", low=0.0, default=None)
    velocity_max: float | None = quantity("velocity", low=0.0, low_open=True, default=None)
    surge_allowance: float | None = quantity("head", low=0.0, default=None)
    restraint: str = text(RESTRAINTS, default="anchored-throughout")
    pressure_min: float | None = quantity("pressure", low=-1e5, high=1e8, default=None)
    vapour_margin: float = quantity("head", low=0.0, low_open=True, default="3 m")

    def _check(self, path: str) -> None:
        if (self.velocity_min is not None and self.velocity_max is not None
                and self.velocity_min >= self.velocity_max):
            raise InputError(f"{path}.velocity_min ({self.velocity_min:g} m/s) must be below "
                             f"velocity_max ({self.velocity_max:g} m/s)")


@dataclass(frozen=True)
class Carbon(InputSection):
    """Carbon cost: operational emissions of the pumping energy and embodied emissions of pipe.

    Parameters
    ----------
    grid_factor : str or Quantity
        Emission factor of the electricity, a mass of CO2e per energy, e.g. ``"0.25 kg/kWh"``
        or ``"250 g/kWh"`` (stored in kg/kWh), at most 5 kg/kWh.
    price : float
        Carbon price [currency per tonne CO2e].
    embodied : bool
        Charge the embodied emissions of the pipe (mass × material factor) at t = 0.
    """

    SECTION = "carbon"
    grid_factor: float = quantity("emission_factor", low=0.0, high=5.0)
    price: float = number(0.0, 1e5, example="80", unit="{currency}/t CO2e")
    embodied: bool = flag(default=True)


@dataclass(frozen=True)
class Hydraulics(InputSection):
    """The friction method: ``"colebrook"`` (default), another of
    :data:`pipeopt.friction.METHODS`, or ``"constant"`` with a Darcy ``friction_factor``."""

    SECTION = "hydraulics"
    friction_method: str = text((*fr.METHODS, "constant"), default="colebrook")
    friction_factor: float | None = number(0.0, 1.0, low_open=True, default=None,
                                           example="0.02")

    def _check(self, path: str) -> None:
        if self.friction_method == "constant" and self.friction_factor is None:
            raise InputError(f"{path}.friction_factor: required key is missing with "
                             f"friction_method = \"constant\" (e.g. friction_factor = 0.02)")


def _cost_model(value: Any, where: str) -> PipeCostModel:
    """A material's pipe cost model from its ``cost`` table (or a model given in Python).

    ``{price_per_kg, laying_coefficient, laying_exponent}`` or ``{price_per_kg,
    laying_table}``: material plus laying (:class:`~pipeopt.costs.MassLayingCost`);
    ``{coefficient, exponent}``: a power law of the outside diameter; ``{table = {...}}``: costs
    by designation, used as given.
    """
    if isinstance(value, PipeCostModel):
        return value
    if not isinstance(value, dict):
        raise InputError(f"{where}: expected a table such as {{ price_per_kg = 2.4, "
                         f"laying_coefficient = 600.0, laying_exponent = 1.1 }}, got "
                         f"{type(value).__name__}")
    if "table" in value:
        extra = set(value) - {"table"}
        if extra:
            raise InputError(f"{where}.{sorted(extra)[0]}: unknown key with a cost table")
        return DesignationCostTable.parse(value["table"], f"{where}.table")
    if "price_per_kg" in value or "laying_table" in value or "laying_coefficient" in value:
        sec = Section(value, where, MassLayingCost.keys() + ("laying_table",))
        return MassLayingCost.read(sec, laying_table=value.get("laying_table"))
    sec = Section(value, where, PowerLawPipeCost.keys() + ("table",))
    return PowerLawPipeCost.read(sec)


@dataclass(frozen=True)
class MaterialChoice(InputSection):
    """A candidate material, its size filter, cost model and aging.

    Parameters
    ----------
    name : str
        A catalog material key (``"ductile-iron"``).
    cost : PipeCostModel or dict
        Pipe capital per metre, supplied and laid, priced by designation (never by the bore):
        ``{"price_per_kg": p, "laying_coefficient": a, "laying_exponent": n}`` is material
        (mass per metre × p) plus laying a·OD^n (:class:`~pipeopt.costs.MassLayingCost`);
        ``{"coefficient": a, "exponent": n}`` a·OD^n; ``{"table": {designation: cost}}`` costs
        by designation, used as given.
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

    SECTION = "material"
    name: str = text()
    cost: Any = field(default=None, metadata={})
    min_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    max_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    sizes: tuple | None = texts(default=None)
    classes: tuple | None = texts(default=None)
    aging: Any = field(default=None, metadata={})
    roughness: float | None = quantity("roughness", low=0.0, default=None)

    def _check(self, path: str) -> None:
        if not self.name:
            raise InputError(f"{path}.name must be a catalog material key such as "
                             f"'ductile-iron'")
        if self.cost is None:
            raise InputError(f"{path}.cost: required key is missing (e.g. cost = {{ coefficient "
                             f"= 1800.0, exponent = 1.25 }})")
        object.__setattr__(self, "cost", _cost_model(self.cost, f"{path}.cost"))
        if (self.min_diameter is not None and self.max_diameter is not None
                and self.min_diameter > self.max_diameter):
            raise InputError(f"{path}: min_diameter is larger than max_diameter")
        if (isinstance(self.aging, str) and self.aging != "typical"
                and not any(ch.isdigit() for ch in self.aging)):
            raise InputError(f"{path}.aging: expected \"typical\" (the catalog's rate) or a "
                             f"rate with a unit such as '0.02 mm/yr'; got {self.aging!r}")
        if self.aging is not None and self.aging != "typical":
            object.__setattr__(self, "aging", to_quantity(self.aging, "aging_rate",
                                                          f"{path}.aging", low=0.0))

    @classmethod
    def read(cls, sec: Any, **given: Any) -> MaterialChoice:
        cost = sec.raw("cost") if sec.has("cost") else None
        aging = sec.raw("aging") if sec.has("aging") else None
        return super().read(sec, cost=cost, aging=aging, **given)

    @classmethod
    def keys(cls) -> tuple[str, ...]:
        return (*super().keys(), "cost", "aging")


# --------------------------------------------------------------------------------------------
# upgrade study sections
# --------------------------------------------------------------------------------------------
OPTION_KINDS = ("reline", "replace", "duplicate")


@dataclass(frozen=True)
class FieldTest(InputSection):
    """A field test of the existing line: a flow and two pressures along it.

    Parameters
    ----------
    flow : str or Quantity
        Measured flow, e.g. ``"310 m^3/h"``.
    upstream_pressure, downstream_pressure : str or Quantity
        Gauge pressures at the two taps, e.g. ``"5.2 bar"``.
    upstream_elevation, downstream_elevation : str or Quantity
        Elevations of the gauges, e.g. ``"42 m"``.
    length : str or Quantity
        Pipe length between the taps.
    minor_loss_k : float
        Loss coefficients of fittings between the taps.
    """

    SECTION = "existing.field_test"
    flow: float = quantity("flow", low=0.0, low_open=True)
    upstream_pressure: float = quantity("pressure")
    downstream_pressure: float = quantity("pressure")
    upstream_elevation: float = quantity("head")
    downstream_elevation: float = quantity("head")
    length: float = quantity("length", low=0.0, low_open=True)
    minor_loss_k: float = number(0.0, 1e4, default=0.0)

    def friction_loss(self, density: float) -> float:
        """Friction head loss between the taps [m]: Δp / (ρ g) + Δz (equal velocity heads)."""
        return ((self.upstream_pressure - self.downstream_pressure) / (density * fr.GRAVITY)
                + (self.upstream_elevation - self.downstream_elevation))


@dataclass(frozen=True)
class ExistingLine(InputSection):
    """The existing line and its condition.

    Parameters
    ----------
    length, static_head : str or Quantity
        As in a sizing study.
    material : str
        Catalog material key (for the wave speed and the description), e.g.
        ``"cast-iron-aged"``.
    inner_diameter : str or Quantity, optional
        The bore as it is now. Or give ``size`` (a catalog designation of ``material``) and
        ``bore_loss`` (reduction of the diameter by tuberculation or deposits).
    size : str, optional
        Catalog designation of the line as laid.
    bore_loss : str or Quantity, optional
        Loss of diameter since it was laid, e.g. ``"8 mm"``.
    bore_as_laid : str or Quantity, optional
        The bore when new (what cleaning restores before a reline); from ``size`` when given.
    minor_loss_k : float
        Sum of minor-loss coefficients.
    roughness : str or Quantity, optional
        Effective roughness now. Exactly one of ``roughness``, ``hazen_williams_c`` and
        ``field_test`` describes the condition.
    hazen_williams_c : float, optional
        Hazen–Williams C now; converted to an equivalent roughness at the largest year-1 duty.
    field_test : FieldTest, optional
        A field test from which the roughness is back-calculated.
    aging : str or Quantity, optional
        Roughness growth from now on, e.g. ``"0.08 mm/yr"``.
    age : float, optional
        Years in service (for reports).
    breaks_per_year, break_growth, break_cost : float
        Breaks per year now, their exponential growth rate A [1/yr] and the cost of a repair.
    leakage_cost, leakage_growth : float
        Cost of lost water per year now and its growth per year.
    """

    SECTION = "existing"
    length: float = quantity("length", low=0.0, low_open=True)
    static_head: float = quantity("head")
    material: str = text()
    inner_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    size: str | None = text(default=None)
    bore_loss: float | None = quantity("diameter", low=0.0, default=None)
    bore_as_laid: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    minor_loss_k: float = number(0.0, 1e4, default=0.0)
    roughness: float | None = quantity("roughness", low=0.0, default=None)
    hazen_williams_c: float | None = number(20.0, 160.0, default=None)
    field_test: FieldTest | None = section(FieldTest, default=None)
    aging: float | None = quantity("aging_rate", low=0.0, default=None)
    age: float | None = number(0.0, 300.0, default=None, unit="yr")
    breaks_per_year: float = number(0.0, 1e5, default=0.0, unit="1/yr")
    break_growth: float = number(-0.5, 0.5, default=0.0, unit="1/yr")
    break_cost: float = number(0.0, 1e9, default=0.0, unit="{currency}")
    leakage_cost: float = number(0.0, 1e10, default=0.0, unit="{currency}/yr")
    leakage_growth: float = number(-0.5, 0.5, default=0.0, unit="1/yr")

    def _check(self, path: str) -> None:
        if self.inner_diameter is None and self.size is None:
            raise InputError(f"{path}: give inner_diameter, or size (and bore_loss)")
        given = [x is not None for x in (self.roughness, self.hazen_williams_c, self.field_test)]
        if sum(given) != 1:
            raise InputError(f"{path}: give exactly one of roughness, hazen_williams_c and "
                             f"field_test to describe the line's condition")
        if self.aging is None:
            object.__setattr__(self, "aging", SI(0.0))
        if self.bore_loss is None:
            object.__setattr__(self, "bore_loss", SI(0.0))


@dataclass(frozen=True)
class UpgradeOption(InputSection):
    """One way to act on the line.

    Parameters
    ----------
    kind : {"reline", "replace", "duplicate"}
        What is done.
    name : str, optional
        Label (default: the kind).
    year : int
        Year of action a (0 = now); the new state serves from year a + 1.
    cost_per_metre : float, optional
        Capital per metre of line. Or give ``cost`` (a power law in the new inner diameter).
    cost : PowerLawPipeCost or dict, optional
        ``{"coefficient": a, "exponent": n}``.
    liner_thickness : str or Quantity
        ``reline``: liner thickness; the new bore is the cleaned bore minus twice this.
    liner_roughness : str or Quantity
        ``reline``: roughness of the liner (default: the catalog's cement-mortar lining).
    cleaned_bore : str or Quantity, optional
        ``reline``: the bore after cleaning (default: the line's bore as laid).
    cleaning_cost_per_metre : float
        ``reline``: capital per metre of cleaning the bore before lining (reported apart).
    material : str
        ``replace``/``duplicate``: catalog material of the new pipe.
    size : str
        ``replace``/``duplicate``: catalog designation, or ``"same"`` (``replace``: the bore of
        the line as laid).
    inner_diameter : str or Quantity, optional
        ``replace``/``duplicate``: the new bore, instead of ``size``.
    roughness, aging : str or Quantity, optional
        New roughness and its growth (defaults: the catalog material's roughness, no aging).
    life : float, optional
        Life of the new asset [yr] for its residual value (default: economics.pipe_life).
    maintenance : float
        Yearly maintenance of the new asset as a fraction of its capital.
    break_factor : float, optional
        Share of the old line's breaks that continue after the action (defaults: reline 1,
        replace 0, duplicate 1).
    leakage_factor : float, optional
        Share of the leakage cost that continues (defaults: reline 1, replace 0, duplicate 1).
    minor_loss_k : float, optional
        ``duplicate``: ΣK of the new line (default: that of the existing line).
    """

    SECTION = "option"
    kind: str = text(OPTION_KINDS)
    name: str | None = text(default=None)
    year: int = whole(0, 199, default=0, unit="yr")
    cost_per_metre: float | None = number(0.0, 1e9, default=None, unit="{currency}/m")
    cost: PowerLawPipeCost | None = section(PowerLawPipeCost, default=None)
    cleaning_cost_per_metre: float = number(0.0, 1e9, default=0.0, unit="{currency}/m")
    liner_thickness: float | None = quantity("length", low=0.0, low_open=True, default=None)
    liner_roughness: float | None = quantity("roughness", low=0.0, default=None)
    cleaned_bore: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    material: str | None = text(default=None)
    size: str | None = text(default=None)
    inner_diameter: float | None = quantity("diameter", low=0.0, low_open=True, default=None)
    roughness: float | None = quantity("roughness", low=0.0, default=None)
    aging: float | None = quantity("aging_rate", low=0.0, default=None)
    life: float | None = number(0.0, 1e12, low_open=True, default=None, unit="yr")
    maintenance: float = number(0.0, 1.0, default=0.0, unit="1/yr")
    break_factor: float | None = number(0.0, 1.0, default=None)
    leakage_factor: float | None = number(0.0, 1.0, default=None)
    minor_loss_k: float | None = number(0.0, 1e4, default=None)

    def _check(self, path: str) -> None:
        where = f"option {self.name or self.kind!r}"
        if isinstance(self.cost, dict):
            object.__setattr__(self, "cost", _cost_model(self.cost, f"{path}.cost"))
        if (self.cost_per_metre is None) == (self.cost is None):
            raise InputError(f"{where}: give cost_per_metre or cost (one of them)")
        if self.kind == "reline":
            if self.liner_thickness is None:
                raise InputError(f"{where}: liner_thickness is required for a reline")
            for key in ("material", "size", "inner_diameter"):
                if getattr(self, key) is not None:
                    raise InputError(f"{where}: {key} is not used by a reline (it keeps the "
                                     f"line and lines it); give cleaned_bore for the bore after "
                                     f"cleaning")
        else:
            for key in ("liner_thickness", "liner_roughness", "cleaned_bore"):
                if getattr(self, key) is not None:
                    raise InputError(f"{where}: {key} is for a reline, not a {self.kind}")
            if self.cleaning_cost_per_metre:
                raise InputError(f"{where}: cleaning_cost_per_metre is for a reline")
            if self.material is None:
                raise InputError(f"{where}: material is required for a {self.kind}")
            if (self.size is None) == (self.inner_diameter is None):
                raise InputError(f"{where}: give size or inner_diameter (one of them)")
            if self.size == "same" and self.kind != "replace":
                raise InputError(f"{where}: size 'same' is for a replace")
        defaults = {"reline": (1.0, 1.0), "replace": (0.0, 0.0), "duplicate": (1.0, 1.0)}
        bf, lf = defaults[self.kind]
        object.__setattr__(self, "name", self.name or self.kind)
        if self.break_factor is None:
            object.__setattr__(self, "break_factor", bf)
        if self.leakage_factor is None:
            object.__setattr__(self, "leakage_factor", lf)
        if self.aging is None:
            object.__setattr__(self, "aging", SI(0.0))


# --------------------------------------------------------------------------------------------
# readers
# --------------------------------------------------------------------------------------------
_COMMON = ("study", "fluid", "duty", "growth", "pumping", "energy", "pump_station",
           "economics", "catalog", "uncertainty")


def _read_duty(top: Section, energy: Any = None) -> DutyProfile:
    """The ``[[duty]]`` tables and ``[growth]``; with ``energy`` (a sizing study: a function
    that reads ``[energy]``) each duty may also give its own energy ``price`` (time of use; a
    duty without one pays the tariff's) and pump ``efficiency``."""
    keys = ("flow", "hours", "name") + (("price", "efficiency") if energy is not None else ())
    flows, hours, names, prices, effs = [], [], [], [], []
    tables = top.tables("duty", keys)
    for d in tables:
        for key in ("flow", "hours"):
            d.required(key)
        flows.append(d.raw("flow"))
        hours.append(d.raw("hours"))
        names.append(d.raw("name", f"duty {len(names) + 1}"))
        prices.append(d.raw("price"))
        effs.append(d.raw("efficiency"))
    extra: dict[str, Any] = {}
    if any(p is not None for p in prices):  # a duty without a price pays the tariff's
        base = energy().price if any(p is None for p in prices) else None
        extra["prices"] = tuple(base if p is None else p for p in prices)
    given = [e is not None for e in effs]
    if any(given):
        if not all(given):
            raise StudyFileError(f"{tables[given.index(False)].key('efficiency')}: give a pump "
                                 f"efficiency on every [[duty]], or on none")
        extra["efficiencies"] = tuple(effs)
    gr = top.table("growth", ("flow_per_year", "design_year", "flow_cap"))
    g = {} if gr is None else {"growth": gr.raw("flow_per_year", 0.0),
                               "design_year": gr.raw("design_year"),
                               "flow_cap": gr.raw("flow_cap")}
    return DutyProfile(tuple(flows), tuple(hours), names=tuple(names), **g, **extra)


def _read_catalog(top: Section, base: Path) -> Catalog:
    from .catalog import default_catalog, load_catalog

    cat = top.table("catalog", ("sizes", "materials"))
    if not cat:
        return default_catalog()
    sizes_path = cat.text("sizes")
    mats_path = cat.text("materials")
    return load_catalog(sizes=base / sizes_path if sizes_path else None,
                        materials=base / mats_path if mats_path else None)


def read_common(top: Section, base: Path, kind: str = "sizing",
                also: tuple[str, ...] = ()) -> dict[str, Any]:
    """The sections a sizing and an upgrade study share, checked, as input sections.

    ``[study]``, ``[fluid]`` (a :class:`FluidSpec`, not yet evaluated), ``[[duty]]`` and
    ``[growth]``, ``[pumping]``, ``[energy]``, ``[pump_station]``, ``[economics]`` and the raw
    ``[uncertainty]`` table. The ``[catalog]`` files are read last, by :func:`read_sizing` and
    :func:`read_upgrade`, once every other section has passed its checks. An upgrade study
    (``kind = "upgrade"``) takes the wire-to-water efficiency and one energy price only.
    ``also`` names the study's own required sections, checked present with the shared ones
    before any value is read.
    """
    station = top.table("pump_station", PumpStationCost.keys())
    sizing = kind == "sizing"
    info = StudyInfo.read(top.table("study", StudyInfo.keys()))
    top.require_present(("fluid",))            # in the order the sections are read
    top.require_present(arrays=("duty",))
    top.require_present(("pumping", "energy", "economics", *also))
    fluid = FluidSpec.read(top.table("fluid", FluidSpec.keys(), required=True))
    def energy_section() -> EnergyTariff:
        return EnergyTariff.read(top.table("energy", EnergyTariff.keys(), required=True))

    duty = _read_duty(top, energy_section if sizing else None)
    pumping = Pumping.read(top.table("pumping", Pumping.keys() if sizing else ("efficiency",),
                                     required=True))
    if pumping.efficiency is None and not sizing:
        raise StudyFileError("pumping.efficiency: required key is missing (e.g. efficiency = "
                             "0.70)")
    energy = energy_section()
    return {
        "info": info,
        "fluid": fluid,
        "duty": duty,
        "pumping": pumping,
        "energy": energy,
        "pump_station": None if station is None else PumpStationCost.read(station),
        "economics": Economics.read(top.table("economics", Economics.keys(), required=True)),
        "uncertainty": top.raw("uncertainty"),
    }


def _materials_known(materials: list[MaterialChoice], secs: list[Section],
                     catalog: Catalog) -> None:
    for m, sec in zip(materials, secs, strict=True):
        try:
            catalog.material(m.name)
        except InputError as exc:
            raise StudyFileError(f"{sec.key('name')}: {exc}") from None


def read_sizing(mapping: dict, base: Path) -> dict[str, Any]:
    """Every section of a sizing study file, checked; the fluid not yet evaluated."""
    from .route import ROUTE_KEYS, read_route

    top = Section(mapping, "", (*_COMMON, "line", "material", "constraints", "carbon",
                                "hydraulics", *ROUTE_KEYS))
    out = read_common(top, base, also=("line",))
    out.update(read_route(top, base))
    line = top.table("line", Line.keys(), required=True)
    given = {}
    if out["profile"] is not None and not line.has("length"):  # the profile's length
        given["length"] = SI(out["profile"].length)
    out["line"] = Line.read(line, **given)
    secs = top.tables("material", MaterialChoice.keys())
    out["materials"] = tuple(MaterialChoice.read(s) for s in secs)
    out["constraints"] = Constraints.read(top.table("constraints", Constraints.keys()))
    carbon = top.table("carbon", Carbon.keys())
    out["carbon"] = None if carbon is None else Carbon.read(carbon)
    out["hydraulics"] = Hydraulics.read(top.table("hydraulics", Hydraulics.keys()))
    out["catalog"] = _read_catalog(top, base)
    _materials_known(list(out["materials"]), secs, out["catalog"])
    return out


def read_upgrade(mapping: dict, base: Path) -> dict[str, Any]:
    """Every section of an upgrade study file, checked; the fluid not yet evaluated."""
    top = Section(mapping, "", (*_COMMON, "existing", "option"))
    out = read_common(top, base, "upgrade", also=("existing",))
    ex = top.table("existing", ExistingLine.keys(), required=True)
    out["existing"] = ExistingLine.read(ex)
    secs = top.tables("option", UpgradeOption.keys())
    out["options"] = tuple(UpgradeOption.read(sec) for sec in secs)
    out["catalog"] = _read_catalog(top, base)
    try:
        out["catalog"].material(out["existing"].material)
    except InputError as exc:
        raise StudyFileError(f"existing.material: {exc}") from None
    for opt, sec in zip(out["options"], secs, strict=True):
        if opt.material is not None:
            try:
                out["catalog"].material(opt.material)
            except InputError as exc:
                raise StudyFileError(f"{sec.key('material')}: {exc}") from None
    return out
