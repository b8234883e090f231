"""Upgrade study (study layer): keep, reline, replace or duplicate an existing line, and when.

An :class:`UpgradeStudy` describes an existing main (its bore, its hydraulic condition from a
roughness, a Hazen–Williams C or a field test, its aging, breaks and leakage) and a set of
options, each with its capital cost and year of action. For every option and every year it
computes the hydraulics with the model of a sizing study (:mod:`pipeopt.lifecycle`), then the
cash flows, and compares each option with keeping the line: present value, NPV, IRR, payback,
benefit–cost ratio, and the year of action that minimizes the present value.

Conventions: study years t = 1 … N start now; an action in year ``a`` (0 … N − 1) spends its
capital at time a and the new state serves from year a + 1 on. The break rate of the existing
line grows as N0 e^{A t} (the breaks of year t are that rate integrated over the year, see
:func:`pipeopt.renewal.break_counts`); leakage cost as L0 (1 + g_L)^(t − 1). Every cash flow
is real and is discounted at the study's real rate. Residual value at the horizon is
straight-line over each asset's life.

Examples
--------
>>> from pipeopt import UpgradeStudy
>>> result = UpgradeStudy.demo().run()
>>> list(result.summary["option"])[:2]
['keep', 'reline']
"""

from __future__ import annotations

import html
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from . import friction as fr
from .catalog import Catalog, default_catalog
from .costs import EnergyTariff, PowerLawPipeCost, PumpStationCost
from .duty import DutyProfile
from .economics import internal_rate_of_return
from .errors import InputError
from .fluid import Fluid
from .lifecycle import Scenario, parallel_split, pipe_hydraulics, pumping
from .renewal import break_counts
from .sizing import CAUTION, Economics, _si, read_common_sections
from .studyfile import Section, StudyFileError, StudyFileMixin
from .units import Quantity

__all__ = ["FieldTest", "ExistingLine", "UpgradeOption", "UpgradeStudy", "UpgradeResult",
           "BestYear", "OPTION_KINDS"]

OPTION_KINDS = ("reline", "replace", "duplicate")


# --------------------------------------------------------------------------------------------
# inputs
# --------------------------------------------------------------------------------------------
@dataclass
class FieldTest:
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

    flow: Any
    upstream_pressure: Any
    downstream_pressure: Any
    upstream_elevation: Any
    downstream_elevation: Any
    length: Any
    minor_loss_k: float = 0.0

    def __post_init__(self) -> None:
        self.flow = _si(self.flow, "flow", "existing.field_test.flow")
        if not self.flow > 0:
            raise InputError(f"existing.field_test.flow must be positive (a test with no flow "
                             f"shows no friction); got {self.flow:g} m^3/s")
        self.upstream_pressure = _si(self.upstream_pressure, "pressure",
                                     "existing.field_test.upstream_pressure")
        self.downstream_pressure = _si(self.downstream_pressure, "pressure",
                                       "existing.field_test.downstream_pressure")
        self.upstream_elevation = _si(self.upstream_elevation, "head",
                                      "existing.field_test.upstream_elevation")
        self.downstream_elevation = _si(self.downstream_elevation, "head",
                                        "existing.field_test.downstream_elevation")
        self.length = _si(self.length, "length", "existing.field_test.length")
        if not self.length > 0:
            raise InputError("existing.field_test.length must be positive")

    def friction_loss(self, density: float) -> float:
        """Friction head loss between the taps [m]: Δp / (ρ g) + Δz (equal velocity heads)."""
        return ((self.upstream_pressure - self.downstream_pressure) / (density * fr.GRAVITY)
                + (self.upstream_elevation - self.downstream_elevation))


@dataclass
class ExistingLine:
    """The existing line and its condition.

    Parameters
    ----------
    length, static_head : str or Quantity
        As in a sizing study.
    inner_diameter : str or Quantity, optional
        The bore as it is now. Or give ``size`` (a catalog designation of ``material``) and
        ``bore_loss`` (reduction of the diameter by tuberculation or deposits).
    material : str
        Catalog material key (for the wave speed and the description), e.g.
        ``"cast-iron-aged"``.
    size : str, optional
        Catalog designation of the line as laid.
    bore_loss : str or Quantity, optional
        Loss of diameter since it was laid, e.g. ``"8 mm"``.
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

    length: Any
    static_head: Any
    material: str
    inner_diameter: Any = None
    size: str | None = None
    bore_loss: Any = None
    minor_loss_k: float = 0.0
    roughness: Any = None
    hazen_williams_c: float | None = None
    field_test: FieldTest | None = None
    aging: Any = None
    age: float | None = None
    breaks_per_year: float = 0.0
    break_growth: float = 0.0
    break_cost: float = 0.0
    leakage_cost: float = 0.0
    leakage_growth: float = 0.0

    def __post_init__(self) -> None:
        self.length = _si(self.length, "length", "existing.length")
        if not self.length > 0:
            raise InputError("existing.length must be positive")
        self.static_head = _si(self.static_head, "head", "existing.static_head")
        if self.inner_diameter is not None:
            self.inner_diameter = _si(self.inner_diameter, "diameter", "existing.inner_diameter")
            if not self.inner_diameter > 0:
                raise InputError("existing.inner_diameter must be positive")
        elif self.size is None:
            raise InputError("existing: give inner_diameter, or size (and bore_loss)")
        self.bore_loss = 0.0 if self.bore_loss is None else _si(self.bore_loss, "diameter",
                                                                "existing.bore_loss")
        given = [x is not None for x in (self.roughness, self.hazen_williams_c, self.field_test)]
        if sum(given) != 1:
            raise InputError("existing: give exactly one of roughness, hazen_williams_c and "
                             "field_test to describe the line's condition")
        if self.roughness is not None:
            self.roughness = _si(self.roughness, "roughness", "existing.roughness")
            if self.roughness < 0:
                raise InputError("existing.roughness must not be negative")
        if self.hazen_williams_c is not None and not 20 <= self.hazen_williams_c <= 160:
            raise InputError(f"existing.hazen_williams_c must be between 20 and 160; got "
                             f"{self.hazen_williams_c!r}")
        self.aging = 0.0 if self.aging is None else _si(self.aging, "aging_rate",
                                                        "existing.aging")
        if self.aging < 0:
            raise InputError("existing.aging must not be negative")
        for name in ("breaks_per_year", "break_cost", "leakage_cost"):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not v >= 0 \
                    or not math.isfinite(v):
                raise InputError(f"existing.{name} must be a number >= 0; got {v!r}")
        for name in ("break_growth", "leakage_growth"):
            v = getattr(self, name)
            if isinstance(v, bool) or not isinstance(v, (int, float)) or not -0.5 <= v <= 0.5:
                raise InputError(f"existing.{name} must be a rate per year between -0.5 and 0.5; "
                                 f"got {v!r}")


@dataclass
class UpgradeOption:
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
        ``reline``: liner thickness; the new bore is the old bore minus twice this.
    liner_roughness : str or Quantity
        ``reline``: roughness of the liner (default: the catalog's cement-mortar lining).
    material : str
        ``replace``/``duplicate``: catalog material of the new pipe.
    size : str
        ``replace``/``duplicate``: catalog designation, or ``"same"`` (``replace``: the bore of
        the line as laid).
    inner_diameter : str or Quantity, optional
        Instead of ``size``.
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

    kind: str
    name: str | None = None
    year: int = 0
    cost_per_metre: float | None = None
    cost: Any = None
    liner_thickness: Any = None
    liner_roughness: Any = None
    material: str | None = None
    size: str | None = None
    inner_diameter: Any = None
    roughness: Any = None
    aging: Any = None
    life: float | None = None
    maintenance: float = 0.0
    break_factor: float | None = None
    leakage_factor: float | None = None
    minor_loss_k: float | None = None

    def __post_init__(self) -> None:
        if self.kind not in OPTION_KINDS:
            raise InputError(f"option.kind must be one of {', '.join(OPTION_KINDS)} ('keep' is "
                             f"always compared); got {self.kind!r}")
        self.name = self.name or self.kind
        where = f"option {self.name!r}"
        if isinstance(self.year, bool) or int(self.year) != self.year or self.year < 0:
            raise InputError(f"{where}: year must be a whole number >= 0; got {self.year!r}")
        self.year = int(self.year)
        if isinstance(self.cost, dict):
            self.cost = PowerLawPipeCost(self.cost.get("coefficient"), self.cost.get("exponent"))
        if (self.cost_per_metre is None) == (self.cost is None):
            raise InputError(f"{where}: give cost_per_metre or cost (one of them)")
        if self.cost_per_metre is not None and not (self.cost_per_metre >= 0):
            raise InputError(f"{where}: cost_per_metre must be >= 0")
        if self.kind == "reline":
            if self.liner_thickness is None:
                raise InputError(f"{where}: liner_thickness is required for a reline")
            self.liner_thickness = _si(self.liner_thickness, "length",
                                       f"{where}: liner_thickness")
            if not self.liner_thickness > 0:
                raise InputError(f"{where}: liner_thickness must be positive")
            if self.liner_roughness is not None:
                self.liner_roughness = _si(self.liner_roughness, "roughness",
                                           f"{where}: liner_roughness")
        else:
            if self.material is None:
                raise InputError(f"{where}: material is required for a {self.kind}")
            if (self.size is None) == (self.inner_diameter is None):
                raise InputError(f"{where}: give size or inner_diameter (one of them)")
            if self.size == "same" and self.kind != "replace":
                raise InputError(f"{where}: size 'same' is for a replace")
            if self.inner_diameter is not None:
                self.inner_diameter = _si(self.inner_diameter, "diameter",
                                          f"{where}: inner_diameter")
        if self.roughness is not None:
            self.roughness = _si(self.roughness, "roughness", f"{where}: roughness")
        self.aging = 0.0 if self.aging is None else _si(self.aging, "aging_rate",
                                                        f"{where}: aging")
        defaults = {"reline": (1.0, 1.0), "replace": (0.0, 0.0), "duplicate": (1.0, 1.0)}
        bf, lf = defaults[self.kind]
        self.break_factor = bf if self.break_factor is None else float(self.break_factor)
        self.leakage_factor = lf if self.leakage_factor is None else float(self.leakage_factor)
        for name in ("break_factor", "leakage_factor", "maintenance"):
            v = getattr(self, name)
            if not 0 <= v <= 1:
                raise InputError(f"{where}: {name} must be between 0 and 1; got {v!r}")
        if self.life is not None and not self.life > 0:
            raise InputError(f"{where}: life must be positive")


# --------------------------------------------------------------------------------------------
# the study
# --------------------------------------------------------------------------------------------
@dataclass
class _State:
    """Resolved option: geometry of the new state and its money parameters (SI)."""

    name: str
    kind: str
    year: int
    capital: float
    diameter: float          # bore after the action (the new line's, for a duplicate)
    roughness: float
    aging: float
    life: float
    maintenance: float
    break_factor: float
    leakage_factor: float
    minor_loss_k: float
    description: str


class UpgradeStudy(StudyFileMixin):
    """Economics of upgrading an existing line: keep, reline, replace, duplicate.

    Parameters
    ----------
    fluid : Fluid
        The liquid.
    existing : ExistingLine
        The line as it is.
    duty : DutyProfile
        Duty points and growth.
    efficiency : float
        Wire-to-water efficiency of pumping.
    tariff : EnergyTariff
        Energy price, escalation, demand charge.
    economics : Economics
        Discount rate, horizon, default life of new pipe (``pipe_life``), maintenance.
    options : list of UpgradeOption
        The options compared with keeping the line.
    pump_station : PumpStationCost, optional
        When given, every option also pays for a station sized on its own peak demand (bought
        at t = 0 and every ``life`` years; ``life`` must be whole years).
    catalog : Catalog, optional
        Sizes and materials.
    name, currency : str
        Labels.
    illustrative : bool
        Marks every output as using invented numbers.
    """

    _DEMO_FILE = "demo_upgrade.toml"

    def __init__(self, fluid: Fluid, existing: ExistingLine, duty: DutyProfile,
                 efficiency: float, tariff: EnergyTariff, economics: Economics,
                 options: list[UpgradeOption], pump_station: PumpStationCost | None = None,
                 catalog: Catalog | None = None, name: str = "upgrade study",
                 currency: str = "", illustrative: bool = False) -> None:
        self.fluid = fluid
        self.existing = existing
        self.duty = duty
        self.tariff = tariff
        self.economics = economics
        self.options = list(options)
        self.pump_station = pump_station
        self.catalog = catalog or default_catalog()
        self.name = name
        self.currency = currency
        self.illustrative = bool(illustrative)
        n = economics.horizon
        if pump_station is not None and pump_station.life != int(pump_station.life):
            raise InputError("pump_station.life must be a whole number of years in an upgrade "
                             "study (its cash flows are yearly)")
        names = [o.name for o in self.options]
        if len(set(names)) != len(names) or "keep" in names:
            raise InputError("options: every option needs its own name, and 'keep' is reserved")
        for o in self.options:
            if o.year >= n:
                raise InputError(f"option {o.name!r}: year {o.year} is beyond the horizon (the "
                                 f"last year of action is {n - 1})")
        self.scenario = Scenario(
            density=fluid.density, viscosity=fluid.viscosity, length=existing.length,
            static_head=existing.static_head, minor_loss_k=existing.minor_loss_k, parallel=1,
            duty=duty, efficiency=efficiency, tariff=tariff, pump_station=pump_station,
            discount_rate=economics.discount_rate, horizon=n, pipe_life=economics.pipe_life,
            pipe_maintenance=economics.pipe_maintenance)
        self.bore, self.bore_as_laid = self._bore()
        self.condition = self._condition()
        self.roughness = self.condition["roughness_m"]
        self.states = [self._resolve(o) for o in self.options]

    # ----- the existing line ----------------------------------------------------------------
    def _bore(self) -> tuple[float, float]:
        ex = self.existing
        if ex.inner_diameter is not None:
            return ex.inner_diameter, ex.inner_diameter
        row = self.catalog.lookup(ex.material, ex.size)
        laid = float(row["inner_diameter_m"])
        bore = laid - ex.bore_loss
        if not bore > 0:
            raise InputError(f"existing.bore_loss ({ex.bore_loss * 1e3:g} mm) leaves no bore of "
                             f"{ex.size} ({laid * 1e3:.1f} mm)")
        return bore, laid

    def _condition(self) -> dict[str, Any]:
        """Roughness and C of the existing line now, from the description given."""
        ex = self.existing
        s = self.scenario
        q_design = max(self.duty.flows)
        v = q_design / (np.pi * self.bore**2 / 4.0)
        if ex.roughness is not None:
            eps = ex.roughness
            source = "given roughness"
        elif ex.hazen_williams_c is not None:
            eps = fr.roughness_from_hazen_williams_c(ex.hazen_williams_c, self.bore, v,
                                                     s.density, s.viscosity)
            source = (f"from Hazen-Williams C = {ex.hazen_williams_c:g} at the largest year-1 "
                      f"duty ({v:.2f} m/s)")
        else:
            t = ex.field_test
            h = t.friction_loss(s.density)
            eps = fr.roughness_from_head_loss(t.flow, self.bore, t.length, h, s.density,
                                              s.viscosity, t.minor_loss_k)
            source = (f"back-calculated from a field test: {t.flow * 3600:.1f} m^3/h, friction "
                      f"loss {h:.2f} m over {t.length:.0f} m")
        if eps / self.bore > fr.MAX_RELATIVE_ROUGHNESS:
            raise InputError(f"existing: roughness {eps * 1e3:.3g} mm is more than 0.05 of the "
                             f"bore ({self.bore * 1e3:.1f} mm), beyond the Moody chart")
        h_design = fr.line_head_loss(q_design, self.bore, s.length, eps, s.density,
                                     s.viscosity, transition="ignore")
        c = fr.hazen_williams_c_from_head_loss(q_design, self.bore, s.length, h_design)
        return {"roughness_m": float(eps), "hazen_williams_c": float(c), "source": source,
                "bore_m": self.bore, "bore_as_laid_m": self.bore_as_laid}

    def _resolve(self, o: UpgradeOption) -> _State:
        life = o.life if o.life is not None else self.economics.pipe_life
        where = f"option {o.name!r}"
        if o.kind == "reline":
            d = self.bore - 2.0 * o.liner_thickness
            if not d > 0:
                raise InputError(f"{where}: a liner of {o.liner_thickness * 1e3:g} mm is thicker "
                                 f"than the bore's radius ({self.bore / 2 * 1e3:.1f} mm)")
            eps = (o.roughness if o.roughness is not None
                   else o.liner_roughness if o.liner_roughness is not None
                   else self.catalog.material("cement-mortar-lined").roughness)
            desc = f"liner {o.liner_thickness * 1e3:g} mm, bore {d * 1e3:.1f} mm"
        else:
            mat = self.catalog.material(o.material)
            if o.inner_diameter is not None:
                d = o.inner_diameter
                desc = f"{o.material}, bore {d * 1e3:.1f} mm"
            elif o.size == "same":
                d = self.bore_as_laid
                desc = f"{o.material}, the bore as laid ({d * 1e3:.1f} mm)"
            else:
                d = float(self.catalog.lookup(o.material, o.size)["inner_diameter_m"])
                desc = f"{o.material} {o.size} (bore {d * 1e3:.1f} mm)"
            eps = mat.roughness if o.roughness is None else o.roughness
        if eps / d > fr.MAX_RELATIVE_ROUGHNESS:
            raise InputError(f"{where}: roughness is more than 0.05 of the bore")
        per_metre = (o.cost_per_metre if o.cost_per_metre is not None
                     else float(o.cost.per_metre(d)))
        k = self.existing.minor_loss_k if o.minor_loss_k is None else float(o.minor_loss_k)
        return _State(o.name, o.kind, o.year, per_metre * self.existing.length, d, eps, o.aging,
                      life, o.maintenance, o.break_factor, o.leakage_factor, k, desc)

    # ----- hydraulics -----------------------------------------------------------------------
    def _inputs(self, v: dict[str, np.ndarray] | None) -> dict[str, np.ndarray]:
        """Per-sample inputs (S,) with the study's own values where not given (S = 1)."""
        s = self.scenario
        ex = self.existing
        base = {"energy_price": s.tariff.price, "escalation": s.tariff.escalation,
                "discount_rate": s.discount_rate, "flow_factor": 1.0, "growth": s.duty.growth,
                "aging_factor": 1.0, "break_cost_factor": 1.0, "break_growth": ex.break_growth,
                "capital_factor": 1.0, "leakage_factor": 1.0}
        v = v or {}
        n = len(next(iter(v.values()))) if v else 1
        out = {k: np.asarray(v[k], dtype=float) if k in v else np.full(n, float(x))
               for k, x in base.items()}
        if np.any(out["flow_factor"] <= 0) or np.any(out["discount_rate"] <= -1):
            raise InputError("flow_factor must be positive and discount_rate above -1")
        return out

    def _old_hydraulics(self, v: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
        """The existing line in every year, aging from now: arrays (S, N, K) and (S, N)."""
        s = self.scenario
        n = s.horizon
        yrs = np.arange(n)
        q = (s.duty.flow_array[None, None, :] * v["flow_factor"][:, None, None]
             * (1.0 + v["growth"][:, None, None]) ** yrs[None, :, None])        # (S, N, K)
        eps = self.roughness + self.existing.aging * v["aging_factor"][:, None] * yrs[None, :]
        hyd = pipe_hydraulics(s, self.bore, eps[:, :, None], q)
        head, energy, peak = pumping(s, hyd["head_loss"], q)
        return {"q": q, "eps": eps, "head": head, "energy": energy, "peak": peak,
                "velocity": hyd["velocity"], "head_loss": hyd["head_loss"]}

    def _new_hydraulics(self, st: _State, years: np.ndarray,
                        v: dict[str, np.ndarray]) -> dict[str, np.ndarray]:
        """The line after acting in year(s) ``years``, every year: arrays (L, N, K), (L, N).

        L is the number of action years (one sample) or of samples (one action year). Years
        at or before the action hold the existing line's values.
        """
        s = self.scenario
        n = s.horizon
        old = self._old_hydraulics(v)
        t = np.arange(1, n + 1)
        age_new = np.maximum(t[None, :] - years[:, None] - 1, 0)       # (A, N)
        eps_new = (st.roughness + st.aging * age_new)[:, :, None]      # (A, N, 1)
        length = max(years.size, old["q"].shape[0])
        q = np.broadcast_to(old["q"], (length,) + old["q"].shape[1:])
        if st.kind == "duplicate":
            lines = [{"diameter": self.bore, "roughness": old["eps"][:, :, None],
                      "length": s.length, "minor_loss_k": s.minor_loss_k},
                     {"diameter": st.diameter, "roughness": eps_new, "length": s.length,
                      "minor_loss_k": st.minor_loss_k}]
            old_h, new_h = parallel_split(s, lines, q)
            h = new_h["head_loss"]
            velocity = np.maximum(old_h["velocity"], new_h["velocity"])
        else:
            hyd = pipe_hydraulics(s, st.diameter, eps_new, q)
            h = hyd["head_loss"]
            velocity = hyd["velocity"]
        after = (t[None, :] > years[:, None])[:, :, None]              # (A, N, 1)
        h = np.where(after, h, old["head_loss"])
        velocity = np.where(after, velocity, old["velocity"])
        head, energy, peak = pumping(s, h, q)
        return {"head": head, "energy": energy, "peak": peak, "velocity": velocity,
                "head_loss": h}

    # ----- money ----------------------------------------------------------------------------
    def _flows(self, st: _State | None, years: np.ndarray,
               samples: dict[str, np.ndarray] | None = None) -> dict[str, np.ndarray]:
        """Yearly cash flows, shape (L, N + 1) for t = 0 … N.

        For each year of action in ``years`` (one set of inputs), or for each sample of
        ``samples`` (one year of action).
        """
        s = self.scenario
        ex = self.existing
        n = s.horizon
        v = self._inputs(samples)
        if samples is not None and years.size != 1:
            raise InputError("sampled cash flows take one year of action")
        t = np.arange(n + 1)
        if st is None:  # keep
            hyd = self._old_hydraulics(v)
            after = np.zeros((1, n), dtype=bool)
        else:
            hyd = self._new_hydraulics(st, years, v)
            after = t[None, 1:] > years[:, None]                        # (A, N)
        energy, peak = hyd["energy"], hyd["peak"]
        count = max(energy.shape[0], years.size)
        shape = (count, n + 1)
        col = (slice(None), None)
        price = v["energy_price"][col] * (1.0 + v["escalation"][col]) ** np.arange(n)[None, :]
        capital = np.zeros(shape)
        energy_cost = np.zeros(shape)
        energy_cost[:, 1:] = energy * price + s.tariff.demand_charge * peak
        old_breaks = (break_counts(ex.breaks_per_year, v["break_growth"], n)
                      * ex.break_cost * v["break_cost_factor"][col])            # (S, N)
        old_leak = (ex.leakage_cost * v["leakage_factor"][col]
                    * (1.0 + ex.leakage_growth) ** np.arange(n)[None, :])
        breaks = np.zeros(shape)
        leak = np.zeros(shape)
        maintenance = np.zeros(shape)
        residual = np.zeros(shape)
        if st is None:
            breaks[:, 1:] = old_breaks
            leak[:, 1:] = old_leak
        else:
            cap = st.capital * v["capital_factor"]                       # (S,)
            capital[np.arange(count), np.broadcast_to(years, (count,))] += cap
            breaks[:, 1:] = old_breaks * np.where(after, st.break_factor, 1.0)
            leak[:, 1:] = old_leak * np.where(after, st.leakage_factor, 1.0)
            maintenance[:, 1:] = np.where(after, st.maintenance * cap[col], 0.0)
            residual[:, n] = -cap * np.maximum(0.0, 1.0 - (n - years) / st.life)
        if s.pump_station is not None:
            ps = s.pump_station
            c_ps = np.broadcast_to(np.asarray(ps.capital(np.max(peak, axis=-1))).reshape(-1),
                                   (count,))
            life = int(ps.life)
            buys = np.arange(0, n, life)                                # 0, T_s, 2 T_s ... < N
            capital[:, buys] += c_ps[:, None]
            maintenance[:, 1:] += ps.maintenance * c_ps[:, None]
            residual[:, n] -= c_ps * max(0.0, 1.0 - (n - buys[-1]) / life)
        total = capital + energy_cost + breaks + leak + maintenance + residual
        disc = np.exp(-t[None, :] * np.log1p(v["discount_rate"])[col])
        return {"capital": capital, "energy": energy_cost, "breaks": breaks, "leakage": leak,
                "maintenance": maintenance, "residual": residual, "total": total,
                "discounted": total * disc, "energy_kwh": energy, "peak_kw": peak,
                "velocity_max": np.broadcast_to(np.max(hyd["velocity"], axis=(-2, -1)),
                                                (count,)),
                "head_max": np.broadcast_to(np.max(hyd["head"], axis=(-2, -1)), (count,))}

    def sampled_pv(self, option: _State | None, samples: dict[str, np.ndarray]) -> np.ndarray:
        """Present value of costs of ``option`` (None: keep) for every sample, shape (S,).

        ``samples`` maps input names of :data:`pipeopt.uncertainty.UPGRADE_INPUTS` to arrays.
        """
        years = np.array([0 if option is None else option.year])
        return self._flows(option, years, samples)["discounted"].sum(axis=1)

    # ----- study files ----------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> UpgradeStudy:
        top = Section(mapping, "", ("study", "fluid", "existing", "duty", "growth", "pumping",
                                    "energy", "pump_station", "economics", "option", "catalog"))
        common = read_common_sections(top, base)
        exs = top.table("existing", ("material", "length", "static_head", "inner_diameter",
                                     "size", "bore_loss", "minor_loss_k", "roughness",
                                     "hazen_williams_c", "field_test", "aging", "age",
                                     "breaks_per_year", "break_growth", "break_cost",
                                     "leakage_cost", "leakage_growth"), required=True)
        test = None
        ft = exs.table("field_test", ("flow", "upstream_pressure", "downstream_pressure",
                                      "upstream_elevation", "downstream_elevation", "length",
                                      "minor_loss_k"))
        if ft:
            def q(key: str, kind: str) -> Quantity:
                unit = {"flow": "m^3/s", "pressure": "Pa", "head": "m", "length": "m"}[kind]
                return Quantity(ft.quantity(key, kind, positive=False), unit)

            test = FieldTest(q("flow", "flow"), q("upstream_pressure", "pressure"),
                             q("downstream_pressure", "pressure"),
                             q("upstream_elevation", "head"), q("downstream_elevation", "head"),
                             q("length", "length"), ft.number("minor_loss_k", 0.0, low=0.0))

        def opt_q(sec: Section, key: str, kind: str, unit: str) -> Quantity | None:
            v = sec.quantity(key, kind, required=False, nonnegative=True)
            return None if v is None else Quantity(v, unit)

        material = exs.text("material", None)
        if not material:
            raise StudyFileError("existing.material: required key is missing (a catalog "
                                 "material such as \"cast-iron-aged\")")
        try:
            common["catalog"].material(material)
        except InputError as exc:
            raise StudyFileError(f"existing.material: {exc}") from None
        existing = ExistingLine(
            Quantity(exs.quantity("length", "length"), "m"),
            Quantity(exs.quantity("static_head", "head", positive=False), "m"),
            material, opt_q(exs, "inner_diameter", "diameter", "m"), exs.text("size", None),
            opt_q(exs, "bore_loss", "diameter", "m"), exs.number("minor_loss_k", 0.0, low=0.0),
            opt_q(exs, "roughness", "roughness", "m"),
            exs.number("hazen_williams_c", -1.0) if exs.has("hazen_williams_c") else None,
            test, opt_q(exs, "aging", "aging_rate", "m/year"),
            exs.number("age", 0.0, low=0.0),
            exs.number("breaks_per_year", 0.0, low=0.0), exs.number("break_growth", 0.0),
            exs.number("break_cost", 0.0, low=0.0), exs.number("leakage_cost", 0.0, low=0.0),
            exs.number("leakage_growth", 0.0))
        options = []
        for sec in top.tables("option", ("kind", "name", "year", "cost_per_metre", "cost",
                                         "liner_thickness", "liner_roughness", "material",
                                         "size", "inner_diameter", "roughness", "aging", "life",
                                         "maintenance", "break_factor", "leakage_factor",
                                         "minor_loss_k")):
            cost = None
            cs = sec.table("cost", ("coefficient", "exponent"))
            if cs:
                cost = PowerLawPipeCost(cs.number("coefficient", None, low=0.0, low_open=True),
                                        cs.number("exponent", None, low=0.0, low_open=True))
            kind = sec.text("kind", None, OPTION_KINDS)
            size = sec.text("size", None)
            mat = sec.text("material", None)
            if mat is not None:
                try:
                    common["catalog"].material(mat)
                except InputError as exc:
                    raise StudyFileError(f"{sec.key('material')}: {exc}") from None
            try:
                options.append(UpgradeOption(
                    kind, sec.text("name", None),
                    int(sec.number("year", 0, low=0, integer=True)),
                    sec.number("cost_per_metre", -1.0) if sec.has("cost_per_metre") else None,
                    cost, opt_q(sec, "liner_thickness", "length", "m"),
                    opt_q(sec, "liner_roughness", "roughness", "m"), mat, size,
                    opt_q(sec, "inner_diameter", "diameter", "m"),
                    opt_q(sec, "roughness", "roughness", "m"),
                    opt_q(sec, "aging", "aging_rate", "m/year"),
                    sec.number("life", -1.0) if sec.has("life") else None,
                    sec.number("maintenance", 0.0, low=0.0, high=1.0),
                    sec.number("break_factor", -1.0) if sec.has("break_factor") else None,
                    sec.number("leakage_factor", -1.0) if sec.has("leakage_factor") else None,
                    sec.number("minor_loss_k", -1.0) if sec.has("minor_loss_k") else None))
            except InputError as exc:
                raise StudyFileError(f"{sec.path}: {exc}") from None
        return cls(common["fluid"], existing, common["duty"], common["efficiency"],
                   common["tariff"], common["economics"], options, common["pump_station"],
                   common["catalog"], common["name"], common["currency"],
                   common["illustrative"])

    # ----- running --------------------------------------------------------------------------
    def run(self, inputs: dict[str, Any] | None = None) -> UpgradeResult:
        """Cash flows and the comparison of every option with keeping the line.

        Parameters
        ----------
        inputs : dict, optional
            Single values replacing the study's own, by the names of
            :data:`pipeopt.uncertainty.UPGRADE_INPUTS` (``{"energy_price": 0.2}``); used by
            the explorer and for what-if questions.
        """
        n = self.scenario.horizon
        t = np.arange(n + 1)
        samples = None
        if inputs:
            samples = {k: np.atleast_1d(np.asarray(v, dtype=float))[:1] for k, v in
                       inputs.items()}
        keep = self._flows(None, np.array([0]), samples)
        frames = [_long_frame("keep", keep, 0, t)]
        rate = float(self._inputs(samples)["discount_rate"][0])
        summary = [_summary_row("keep", "keep", "existing line, aging and breaks continue", None,
                                keep, keep, rate)]
        for st in self.states:
            fl = self._flows(st, np.array([st.year]), samples)
            frames.append(_long_frame(st.name, fl, 0, t))
            summary.append(_summary_row(st.name, st.kind, st.description, st.year, fl, keep,
                                        rate))
        cash = pd.concat(frames, ignore_index=True)
        table = pd.DataFrame(summary)
        best = table.loc[table["pv_cost"].idxmin()]
        return UpgradeResult(self, cash, table, best)

    def best_year(self, option: str) -> BestYear:
        """The year of action of ``option`` that minimizes the present value, scanning them all.

        Every year 0 … N − 1 is evaluated at once (the hydraulics of acting in each year form
        one array). Returns a :class:`BestYear` with the PV of each year.
        """
        st = self._state(option)
        n = self.scenario.horizon
        years = np.arange(n)
        fl = self._flows(st, years)
        pv = fl["discounted"].sum(axis=1)
        keep_pv = float(self._flows(None, np.array([0]))["discounted"].sum())
        table = pd.DataFrame({"year": years, "pv_cost": pv, "npv_vs_keep": keep_pv - pv})
        k = int(np.argmin(pv))
        return BestYear(option, int(years[k]), float(pv[k]), keep_pv, table)

    def monte_carlo(self, distributions: dict, n: int = 10000, seed: int = 0,
                    progress: bool | None = None):
        """NPV of each option against keep under uncertainty
        (:func:`pipeopt.uncertainty.upgrade_monte_carlo`)."""
        from .uncertainty import upgrade_monte_carlo

        return upgrade_monte_carlo(self, distributions, n, seed, progress)

    def _state(self, option: str) -> _State:
        for st in self.states:
            if st.name == option:
                return st
        raise InputError(f"option: no option named {option!r}; options: "
                         f"{', '.join(s.name for s in self.states)}")

    def __repr__(self) -> str:
        return (f"UpgradeStudy({self.name!r}: existing bore {self.bore * 1e3:.1f} mm, "
                f"{len(self.options)} option(s), {self.economics.horizon} years)")

    def _repr_html_(self) -> str:
        c = self.condition
        opts = pd.DataFrame({"option": [st.name for st in self.states],
                             "kind": [st.kind for st in self.states],
                             "year": [st.year for st in self.states],
                             "what": [st.description for st in self.states],
                             "capital": [st.capital for st in self.states]})
        note = "<p><i>Illustrative numbers.</i></p>" if self.illustrative else ""
        return (f"<div><p><b>Upgrade study: {html.escape(self.name)}</b></p>{note}"
                f"<p>existing line {self.existing.length / 1000:.3g} km, bore "
                f"{c['bore_m'] * 1e3:.1f} mm, roughness {c['roughness_m'] * 1e3:.3g} mm, "
                f"C {c['hazen_williams_c']:.0f} ({html.escape(c['source'])})</p>"
                + opts.to_html(index=False, border=0, float_format=lambda x: f"{x:,.0f}")
                + "</div>")


def _long_frame(name: str, fl: dict, row: int, t: np.ndarray) -> pd.DataFrame:
    return pd.DataFrame({
        "option": name, "year": t, "capital": fl["capital"][row], "energy": fl["energy"][row],
        "breaks": fl["breaks"][row], "leakage": fl["leakage"][row],
        "maintenance": fl["maintenance"][row], "residual": fl["residual"][row],
        "total": fl["total"][row], "discounted": fl["discounted"][row]})


def _payback(savings: np.ndarray) -> float | None:
    """First year from which the cumulative savings stay >= 0; None if they never do."""
    cum = np.cumsum(savings)
    if np.all(np.abs(savings) < 1e-9):
        return None
    negative = np.flatnonzero(cum < -1e-9)
    if negative.size == 0:
        return 0.0
    last = negative[-1]
    return None if last == cum.size - 1 else float(last + 1)


def _summary_row(name: str, kind: str, description: str, year: int | None, fl: dict,
                 keep: dict, rate: float) -> dict[str, Any]:
    pv = float(fl["discounted"].sum())
    keep_pv = float(keep["discounted"].sum())
    row: dict[str, Any] = {"option": name, "kind": kind, "year": year,
                           "description": description, "pv_cost": pv,
                           "npv_vs_keep": keep_pv - pv,
                           "energy_kwh_year1": float(fl["energy_kwh"][0, 0]),
                           "velocity_max_m_s": float(fl["velocity_max"][0]),
                           "pump_head_max_m": float(fl["head_max"][0])}
    if kind == "keep":
        row.update(irr=None, irr_note="baseline", simple_payback_year=None,
                   discounted_payback_year=None, benefit_cost_ratio=None)
        return row
    savings = keep["total"][0] - fl["total"][0]               # t = 0 … N, positive = saved
    irr = internal_rate_of_return(savings)
    disc = np.exp(-np.arange(savings.size) * np.log1p(rate))
    benefit = sum(float((keep[k][0] - fl[k][0]) @ disc)
                  for k in ("energy", "breaks", "leakage", "maintenance"))
    extra_capital = float((fl["capital"][0] + fl["residual"][0] - keep["capital"][0]
                           - keep["residual"][0]) @ disc)
    row.update(irr=irr.rate, irr_note=irr.message, simple_payback_year=_payback(savings),
               discounted_payback_year=_payback(savings * disc),
               benefit_cost_ratio=benefit / extra_capital if extra_capital > 0 else None)
    return row


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
@dataclass
class BestYear:
    """The best year of action of one option.

    Attributes
    ----------
    option : str
        The option.
    year : int
        Year of action with the least present value (0 = now).
    pv_cost : float
        That present value [currency].
    keep_pv_cost : float
        Present value of keeping the line [currency].
    table : pandas.DataFrame
        ``year``, ``pv_cost``, ``npv_vs_keep`` for every year of action.
    """

    option: str
    year: int
    pv_cost: float
    keep_pv_cost: float
    table: pd.DataFrame = field(repr=False)

    def __repr__(self) -> str:
        return (f"BestYear({self.option!r}: act in year {self.year}, PV {self.pv_cost:,.0f} "
                f"against {self.keep_pv_cost:,.0f} for keeping the line)")


@dataclass
class UpgradeResult:
    """What an upgrade study found.

    Attributes
    ----------
    study : UpgradeStudy
        The study.
    cash_flows : pandas.DataFrame
        Long table: option, year (0 … N), capital, energy, breaks, leakage, maintenance,
        residual (a credit, negative), total, discounted.
    summary : pandas.DataFrame
        Per option: PV of costs, NPV against keeping the line (positive = the option saves),
        IRR of the incremental cash flows (None with a note when there is no unique rate),
        simple and discounted payback years (the study year from which cumulative savings stay
        non-negative), benefit–cost ratio (PV of running-cost savings over PV of the extra net
        capital).
    best : pandas.Series
        The summary row with the least PV.
    """

    study: UpgradeStudy
    cash_flows: pd.DataFrame
    summary: pd.DataFrame
    best: pd.Series

    def text(self) -> str:
        """A plain-text summary."""
        s = self.study
        cur = f" {s.currency}" if s.currency else ""
        c = s.condition
        lines = [f"pipeopt upgrade study: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the scenario and its cost figures are invented.")
        lines += [
            f"existing line: {s.existing.length / 1000:.2f} km, bore {c['bore_m'] * 1e3:.1f} mm; "
            f"roughness {c['roughness_m'] * 1e3:.3g} mm, equivalent C {c['hazen_williams_c']:.0f}"
            f" ({c['source']})",
            f"horizon {s.economics.horizon} years at {s.economics.discount_rate * 100:g} % real",
            "",
            f"{'option':<16}{'year':>5}{'PV of costs':>16}{'NPV vs keep':>15}{'IRR':>9}"
            f"{'payback':>9}{'B/C':>7}",
        ]
        for _, r in self.summary.iterrows():
            irr = "" if r["irr"] is None or pd.isna(r["irr"]) else f"{r['irr'] * 100:.1f} %"
            if r["kind"] != "keep" and not irr:
                irr = "n/a"
            pb = r["simple_payback_year"]
            pb = "" if pb is None or pd.isna(pb) else f"{pb:.0f}"
            bc = r["benefit_cost_ratio"]
            bc = "" if bc is None or pd.isna(bc) else f"{bc:.2f}"
            yr = "" if r["year"] is None or pd.isna(r["year"]) else f"{int(r['year'])}"
            lines.append(f"{r['option']:<16}{yr:>5}{r['pv_cost']:>16,.0f}"
                         f"{r['npv_vs_keep']:>15,.0f}{irr:>9}{pb:>9}{bc:>7}")
        notes = [f"  {r['option']}: IRR {r['irr_note']}" for _, r in self.summary.iterrows()
                 if r["kind"] != "keep" and r["irr_note"] != "unique"]
        if notes:
            lines += ["", "IRR not given:", *notes]
        lines += ["", f"Least present value: {self.best['option']} ({self.best['description']})"
                  f", {self.best['pv_cost']:,.0f}{cur}", "", "Caution: " + CAUTION]
        return "\n".join(lines)

    def __repr__(self) -> str:
        return self.text()

    def _repr_html_(self) -> str:
        text = html.escape(self.text()).replace("\n", "<br>")
        table = self.summary.to_html(index=False, float_format=lambda x: f"{x:,.4g}", border=0)
        return f"<div><p style='font-family:monospace'>{text}</p>{table}</div>"
