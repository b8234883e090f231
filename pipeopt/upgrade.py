"""Upgrade study (study layer): keep, reline, replace or duplicate an existing line, and when.

An :class:`UpgradeStudy` describes an existing main (its bore, its hydraulic condition from a
roughness, a Hazen–Williams C or a field test, its aging, breaks and leakage) and a set of
options, each with its capital cost and year of action. It resolves each option into the state
of the line after it, hands SI arrays to the model
(:func:`pipeopt.upgrade_model.upgrade_cash_flows`, the same hydraulics and money engine as a
sizing study), and compares each option with keeping
the line: present value, NPV, IRR, payback, benefit–cost ratio, and the year of action that
minimizes the present value.

Conventions: study years t = 1 … N start now; an action in year ``a`` (0 … N − 1) spends its
capital at time a and the new state serves from year a + 1. A reline first cleans the bore back
to the bore as laid (or the cleaned bore the option gives), then lines it: the new bore is the
cleaned bore minus twice the liner. Every cash flow is real and is discounted at the study's
real rate. Residual value at the horizon is straight-line over each asset's life.

Examples
--------
>>> from pipeopt import UpgradeStudy
>>> result = UpgradeStudy.demo().run()
>>> list(result.summary["option"])[:2]
['keep', 'reline']
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from . import friction as fr
from .cashflow import Timeline
from .catalog import Catalog, default_catalog
from .costs import EnergyTariff, PumpStationCost
from .duty import DutyProfile
from .economics import internal_rate_of_return
from .errors import InputError
from .fluid import Fluid
from .inputs import (
    OPTION_KINDS,
    Economics,
    ExistingLine,
    FieldTest,
    Pumping,
    StudyInfo,
    UpgradeOption,
    read_upgrade,
)
from .lifecycle import Scenario
from .results import CAUTION, StudyResult, html_table
from .studyfile import FrozenStudy, StudyFileMixin
from .upgrade_model import ROWS, ExistingCondition, LineState, upgrade_cash_flows
from .variations import Variations, check_input_name

__all__ = ["FieldTest", "ExistingLine", "UpgradeOption", "UpgradeStudy", "UpgradeResult",
           "BestYear", "OPTION_KINDS"]


@dataclass(frozen=True)
class _Option:
    """An option resolved: its inputs, the state it leaves, words for reports."""

    option: UpgradeOption
    state: LineState
    description: str

    @property
    def name(self) -> str:
        return self.option.name

    @property
    def kind(self) -> str:
        return self.option.kind

    @property
    def year(self) -> int:
        return self.option.year

    @property
    def capital(self) -> float:
        return self.state.capital + self.state.cleaning


class UpgradeStudy(FrozenStudy, StudyFileMixin):
    """Economics of upgrading an existing line: keep, reline, replace, duplicate.

    Parameters
    ----------
    fluid : Fluid
        The liquid.
    existing : ExistingLine
        The line as it is.
    duty : DutyProfile
        Duty points and growth.
    efficiency : float or Pumping
        Wire-to-water efficiency of pumping.
    tariff : EnergyTariff
        Energy price, escalation, demand charge.
    economics : Economics
        Discount rate, horizon, default life of new pipe (``pipe_life``), maintenance.
    options : sequence of UpgradeOption
        The options compared with keeping the line.
    pump_station : PumpStationCost, optional
        When given, every option also pays for a station sized on its own peak demand (its
        stages bought in their years and every ``life`` years).
    catalog : Catalog, optional
        Sizes and materials.
    name, currency, description : str
        Labels.
    author, revision, date : str
        The title block of the report (``[study]`` keys); ``date`` as text or a
        :class:`datetime.date`. Empty: not given (the report says so).
    illustrative : bool
        Marks every output as using invented numbers.
    uncertainty : dict, optional
        The ``[uncertainty]`` settings of a study file (Monte Carlo of the options).

    Every argument after ``options`` is keyword-only.
    """

    _OTHERWISE = " or run(inputs={...})"

    _DEMO_FILE = "demo_upgrade.toml"

    def __init__(self, fluid: Fluid, existing: ExistingLine, duty: DutyProfile,
                 efficiency: Any, tariff: EnergyTariff, economics: Economics, options: Any, *,
                 pump_station: PumpStationCost | None = None, catalog: Catalog | None = None,
                 name: str = "upgrade study", currency: str = "", illustrative: bool = False,
                 description: str = "", uncertainty: dict | None = None, author: str = "",
                 revision: str = "", date: Any = "") -> None:
        if not isinstance(fluid, Fluid):
            raise InputError("fluid must be a pipeopt.Fluid")
        options = tuple(options or ())
        self._args = {"fluid": fluid, "existing": existing, "duty": duty,
                      "efficiency": efficiency, "tariff": tariff, "economics": economics,
                      "options": options, "pump_station": pump_station, "catalog": catalog,
                      "name": name, "currency": currency, "illustrative": illustrative,
                      "description": description, "uncertainty": uncertainty,
                      "author": author, "revision": revision, "date": date}
        self.fluid = fluid
        self.existing = existing
        self.duty = duty
        self.pumping = efficiency if isinstance(efficiency, Pumping) else Pumping(efficiency)
        self.tariff = tariff
        self.economics = economics
        self.options = options
        self.pump_station = pump_station
        self.catalog = catalog or default_catalog()
        self.info = StudyInfo(name=name, currency=currency, illustrative=illustrative,
                              description=description, author=author, revision=revision,
                              date=date)
        self.uncertainty = uncertainty
        n = economics.horizon
        names = [o.name for o in options]
        if len(set(names)) != len(names) or "keep" in names:
            raise InputError("options: every option needs its own name, and 'keep' is reserved")
        for o in options:
            if o.year >= n:
                raise InputError(f"option {o.name!r}: year {o.year} is beyond the horizon (the "
                                 f"last year of action is {n - 1})")
        self.scenario = Scenario(
            density=fluid.density, viscosity=fluid.viscosity, length=existing.length,
            static_head=existing.static_head, minor_loss_k=existing.minor_loss_k, parallel=1,
            duty=duty, efficiency=self.pumping.wire_to_water("an upgrade study"), tariff=tariff,
            pump_station=pump_station, discount_rate=economics.discount_rate, horizon=n,
            pipe_life=economics.pipe_life, pipe_maintenance=economics.pipe_maintenance)
        self.bore, self.bore_as_laid = self._bore()
        self.condition = self._condition()
        self.roughness = self.condition["roughness_m"]
        self.states = tuple(self._resolve(o) for o in options)
        self._existing_condition = ExistingCondition(
            self.bore, self.roughness, existing.aging, existing.breaks_per_year,
            existing.break_cost, existing.leakage_cost, existing.leakage_growth)
        self._frozen = True




    # ----- the existing line ----------------------------------------------------------------
    def _bore(self) -> tuple[float, float | None]:
        ex = self.existing
        laid = None if ex.bore_as_laid is None else float(ex.bore_as_laid)
        if ex.size is not None:
            laid = float(self.catalog.lookup(ex.material, ex.size)["inner_diameter_m"])
        if ex.inner_diameter is not None:
            bore = float(ex.inner_diameter)
        else:
            bore = laid - ex.bore_loss
            if not bore > 0:
                raise InputError(f"existing.bore_loss ({ex.bore_loss * 1e3:g} mm) leaves no "
                                 f"bore of {ex.size} ({laid * 1e3:.1f} mm)")
        if laid is not None and bore > laid * (1 + 1e-9):
            raise InputError(f"existing: the bore now ({bore * 1e3:.1f} mm) is larger than the "
                             f"bore as laid ({laid * 1e3:.1f} mm)")
        return bore, laid

    def _condition(self) -> dict[str, Any]:
        """Roughness and C of the existing line now, from the description given."""
        ex = self.existing
        s = self.scenario
        q_design = max(self.duty.flows)
        h = None
        v = q_design / (np.pi * self.bore**2 / 4.0)
        if ex.roughness is not None:
            eps = float(ex.roughness)
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
                "bore_m": self.bore, "bore_as_laid_m": self.bore_as_laid,
                "field_test_friction_loss_m": h}

    def _resolve(self, o: UpgradeOption) -> _Option:
        life = o.life if o.life is not None else self.economics.pipe_life
        where = f"option {o.name!r}"
        length = self.existing.length
        cleaning = 0.0
        if o.kind == "reline":
            cleaned = o.cleaned_bore if o.cleaned_bore is not None else self.bore_as_laid
            if cleaned is None:
                raise InputError(f"{where}: the bore after cleaning is not known; give "
                                 f"existing.bore_as_laid (or existing.size), or the option's "
                                 f"cleaned_bore")
            if cleaned < self.bore * (1 - 1e-9):
                raise InputError(f"{where}: cleaned_bore ({cleaned * 1e3:.1f} mm) is smaller "
                                 f"than the bore now ({self.bore * 1e3:.1f} mm)")
            d = cleaned - 2.0 * o.liner_thickness
            if not d > 0:
                raise InputError(f"{where}: a liner of {o.liner_thickness * 1e3:g} mm is thicker "
                                 f"than the bore's radius ({cleaned / 2 * 1e3:.1f} mm)")
            eps = (o.roughness if o.roughness is not None
                   else o.liner_roughness if o.liner_roughness is not None
                   else self.catalog.material("cement-mortar-lined").roughness)
            cleaning = o.cleaning_cost_per_metre * length
            desc = (f"cleaned to {cleaned * 1e3:.1f} mm, liner {o.liner_thickness * 1e3:g} mm, "
                    f"bore {d * 1e3:.1f} mm")
        else:
            mat = self.catalog.material(o.material)
            if o.inner_diameter is not None:
                d = float(o.inner_diameter)
                desc = f"{o.material}, bore {d * 1e3:.1f} mm"
            elif o.size == "same":
                if self.bore_as_laid is None:
                    raise InputError(f"{where}: size 'same' needs the bore as laid (give "
                                     f"existing.bore_as_laid or existing.size)")
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
        state = LineState(o.kind, float(d), float(eps), float(o.aging), k, per_metre * length,
                          cleaning, float(life), o.maintenance, o.break_factor,
                          o.leakage_factor)
        return _Option(o, state, desc)

    # ----- named inputs ---------------------------------------------------------------------
    def base_values(self) -> dict[str, float]:
        """The study's own values of the named inputs it holds."""
        return {**self.scenario.base_values(), "break_growth": self.existing.break_growth}

    def base_value(self, name: str) -> float:
        """The study's own value of a named input (1 for a factor)."""
        check_input_name(name, "upgrade")
        return float(self.base_values().get(name, 1.0))

    def variations(self, values: dict[str, Any]) -> Variations:
        """Named inputs (:data:`pipeopt.variations.UPGRADE_INPUTS`) as Variations."""
        for name in values:
            check_input_name(name, "upgrade")
        return Variations.of(values)

    def _resolved(self, variations: Variations | None) -> tuple[dict, Timeline]:
        v = (variations or Variations()).resolved(self.base_values(),
                                                  hours_total=sum(self.duty.hours))
        last_action = max((o.year for o in self.options), default=0)
        if np.any(v["horizon"] <= last_action):
            bad = float(v["horizon"][v["horizon"] <= last_action][0])
            raise InputError(f"horizon must be after the last year of action ({last_action}) in "
                             f"every sample; got {bad:g}")
        n_years = None if variations is None else variations.n_years
        return v, Timeline(v["discount_rate"], v["horizon"], n_years)

    def cash_flows(self, option: str | None, action_years: Any = None,
                   variations: Variations | None = None):
        """The model's cash flows of ``option`` (None or "keep": keep the line).

        Returns the :class:`~pipeopt.cashflow.CashFlows` (samples × action years × years) and
        the hydraulic summary (:func:`pipeopt.upgrade_model.upgrade_cash_flows`).
        """
        v, tl = self._resolved(variations)
        if option in (None, "keep"):
            return upgrade_cash_flows(self.scenario, self._existing_condition, None, [0], v, tl)
        opt = self._option(option)
        years = [opt.year] if action_years is None else action_years
        return upgrade_cash_flows(self.scenario, self._existing_condition, opt.state, years, v,
                                  tl)

    def sample_pv(self, variations: Variations) -> pd.DataFrame:
        """Present value of costs of keep and of every option in every sample, (S, 1 + O)."""
        pv = {"keep": self.cash_flows(None, variations=variations)[0].present_value[:, 0]}
        for opt in self.states:
            pv[opt.name] = self.cash_flows(opt.name, variations=variations)[0].present_value[:, 0]
        return pd.DataFrame(pv)

    # ----- study files ----------------------------------------------------------------------
    @classmethod
    def _from_dict(cls, mapping: dict, base: Path) -> UpgradeStudy:
        return cls.from_sections(read_upgrade(mapping, base))

    @classmethod
    def from_sections(cls, sec: dict[str, Any]) -> UpgradeStudy:
        """Build the study from the checked sections of :func:`pipeopt.inputs.read_upgrade`."""
        fluid = sec["fluid"].build()
        info = sec["info"]
        study = cls(fluid, sec["existing"], sec["duty"], sec["pumping"], sec["energy"],
                    sec["economics"], sec["options"], pump_station=sec["pump_station"],
                    catalog=sec["catalog"], name=info.name, currency=info.currency,
                    illustrative=info.illustrative, description=info.description,
                    author=info.author, revision=info.revision, date=info.date)
        if sec["uncertainty"] is not None:
            from .uncertainty import read_uncertainty_section

            study = study.replace(uncertainty=read_uncertainty_section(sec["uncertainty"],
                                                                       "upgrade"))
        return study

    # ----- running --------------------------------------------------------------------------
    def run(self, inputs: dict[str, Any] | None = None) -> UpgradeResult:
        """Cash flows and the comparison of every option with keeping the line.

        Parameters
        ----------
        inputs : dict, optional
            Single values of named inputs replacing the study's own
            (:data:`pipeopt.variations.UPGRADE_INPUTS`, e.g. ``{"energy_price": 0.2}``); used
            by the explorer and for what-if questions.
        """
        var = None
        if inputs:
            var = self.variations(inputs)
            if var.size != 1:
                raise InputError("run: inputs take one value each (use monte_carlo for many)")
        keep, keep_h = self.cash_flows(None, variations=var)
        frames = [_long_frame("keep", keep)]
        summary = [_summary_row("keep", "keep", "existing line, aging and breaks continue",
                                None, keep, keep_h, keep)]
        for opt in self.states:
            fl, hyd = self.cash_flows(opt.name, variations=var)
            frames.append(_long_frame(opt.name, fl))
            summary.append(_summary_row(opt.name, opt.kind, opt.description, opt.year, fl,
                                        hyd, keep))
        cash = pd.concat(frames, ignore_index=True)
        table = pd.DataFrame(summary)
        best = table.loc[table["pv_cost"].idxmin()]
        return UpgradeResult(self, cash, table, best, dict(inputs or {}))

    def best_year(self, option: str) -> BestYear:
        """The year of action of ``option`` that minimizes the present value, scanning them all.

        Every year 0 … N − 1 is evaluated at once (the hydraulics of acting in each year form
        one array). Returns a :class:`BestYear` with the PV of each year.
        """
        self._option(option)
        years = np.arange(self.economics.horizon)
        pv = self.cash_flows(option, action_years=years)[0].present_value[0]
        keep_pv = float(self.cash_flows(None)[0].present_value[0, 0])
        table = pd.DataFrame({"year": years, "pv_cost": pv, "npv_vs_keep": keep_pv - pv})
        k = int(np.argmin(pv))
        return BestYear(option, int(years[k]), float(pv[k]), keep_pv, table,
                        self.currency)

    def monte_carlo(self, distributions: dict | None = None, n: int | None = None,
                    seed: int | None = None, progress: bool | None = None):
        """NPV of each option against keep under uncertainty
        (:func:`pipeopt.uncertainty.upgrade_monte_carlo`); without arguments, the study
        file's ``[uncertainty]`` section."""
        from .uncertainty import upgrade_monte_carlo

        cfg = self.uncertainty or {}
        dists = distributions if distributions is not None else cfg.get("distributions")
        if not dists:
            raise InputError("monte_carlo: give distributions, or an [uncertainty] section in "
                             "the study file")
        return upgrade_monte_carlo(self, dists, n if n is not None else cfg.get("samples", 2000),
                                   seed if seed is not None else cfg.get("seed", 0), progress)

    def tornado(self, ranges: dict[str, tuple[float, float]] | None = None):
        """One-way sensitivity of the options' present values
        (:func:`pipeopt.uncertainty.tornado`)."""
        from .uncertainty import tornado

        return tornado(self, ranges)

    def _option(self, option: str) -> _Option:
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
                + html_table(opts) + "</div>")


def _long_frame(name: str, fl: Any) -> pd.DataFrame:
    frame = fl.frame(0, 0, option=name)
    return frame[["option", "year", *ROWS, "total", "discount_factor", "discounted"]]


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


def _summary_row(name: str, kind: str, description: str, year: int | None, fl: Any,
                 hyd: dict, keep: Any) -> dict[str, Any]:
    n = int(fl.timeline.horizon[0])
    pv = float(fl.present_value[0, 0])
    keep_pv = float(keep.present_value[0, 0])
    row: dict[str, Any] = {"option": name, "kind": kind, "year": year,
                           "description": description, "pv_cost": pv,
                           "npv_vs_keep": keep_pv - pv,
                           "energy_kwh_year1": float(hyd["energy_kwh"][0, 0, 0]),
                           "velocity_peak_m_s": float(hyd["velocity_max"][0, 0]),
                           "pump_head_max_m": float(hyd["head_max"][0, 0])}
    if kind == "keep":
        row.update(irr=None, irr_note="baseline", simple_payback_year=None,
                   discounted_payback_year=None, benefit_cost_ratio=None)
        return row
    savings = (keep.total[0, 0] - fl.total[0, 0])[: n + 1]            # t = 0 … N, + = saved
    disc = fl.timeline.factor[0, : n + 1]
    irr = internal_rate_of_return(savings)
    running = ("energy_cost", "breaks", "leakage", "maintenance")
    capital = ("capital", "cleaning", "station", "residual")
    benefit = sum(float((keep.rows[k][0, 0] - fl.rows[k][0, 0])[: n + 1] @ disc)
                  for k in running)
    extra_capital = sum(float((fl.rows[k][0, 0] - keep.rows[k][0, 0])[: n + 1] @ disc)
                        for k in capital)
    row.update(irr=irr.rate, irr_note=irr.message, simple_payback_year=_payback(savings),
               discounted_payback_year=_payback(savings * disc),
               benefit_cost_ratio=benefit / extra_capital if extra_capital > 0 else None)
    return row


# --------------------------------------------------------------------------------------------
# results
# --------------------------------------------------------------------------------------------
@dataclass(repr=False)
class BestYear(StudyResult):
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
    currency: str = ""
    success: bool = True
    message: str = "every year of action evaluated"

    def headline(self) -> str:
        return (f"{self.option!r}: act in year {self.year}, PV {self.pv_cost:,.0f} against "
                f"{self.keep_pv_cost:,.0f} for keeping the line")

    def text(self) -> str:
        cur = f" {self.currency}" if self.currency else ""
        lines = [f"Best year of action of {self.option}: year {self.year}",
                 f"  present value of costs {self.pv_cost:,.0f}{cur} (keeping the line: "
                 f"{self.keep_pv_cost:,.0f}{cur}; NPV against keeping "
                 f"{self.keep_pv_cost - self.pv_cost:,.0f}{cur})"]
        return "\n".join(lines)

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Present value by year of action": self.table}


@dataclass(repr=False)
class UpgradeResult(StudyResult):
    """What an upgrade study found.

    Attributes
    ----------
    study : UpgradeStudy
        The study.
    cash_flows : pandas.DataFrame
        Long table: option, year (0 … N), capital, cleaning, station, energy_cost, breaks,
        leakage, maintenance, residual (a credit, negative), total, discount_factor,
        discounted (total × discount factor; it adds up to the option's ``pv_cost``).
    summary : pandas.DataFrame
        Per option: PV of costs, NPV against keeping the line (positive = the option saves),
        IRR of the incremental cash flows (None with a note when there is no unique rate),
        simple and discounted payback years (the study year from which cumulative savings stay
        non-negative), benefit–cost ratio (PV of running-cost savings over PV of the extra net
        capital).
    best : pandas.Series
        The summary row with the least PV.
    inputs : dict
        The named inputs this run used in place of the study's own.
    """

    study: UpgradeStudy
    cash_flows: pd.DataFrame
    summary: pd.DataFrame
    best: pd.Series
    inputs: dict = field(default_factory=dict)
    success: bool = True
    message: str = "every option compared with keeping the line"

    def headline(self) -> str:
        cur = f" {self.study.currency}" if self.study.currency else ""
        return (f"{self.study.name}: least present value {self.best['option']} "
                f"({self.best['pv_cost']:,.0f}{cur})")

    def tables(self) -> dict[str, pd.DataFrame]:
        return {"Options against keeping the line": self.summary}

    def text(self) -> str:
        """A plain-text summary."""
        s = self.study
        cur = f" {s.currency}" if s.currency else ""
        c = s.condition
        lines = [f"pipeopt upgrade study: {s.name}"]
        if s.illustrative:
            lines.append("ILLUSTRATIVE: the scenario and its cost figures are invented.")
        horizon = int(self.cash_flows["year"].max())
        lines += [
            f"existing line: {s.existing.length / 1000:.2f} km, bore {c['bore_m'] * 1e3:.1f} mm; "
            f"roughness {c['roughness_m'] * 1e3:.3g} mm, equivalent C {c['hazen_williams_c']:.0f}"
            f" ({c['source']})",
            f"horizon {horizon} years at "
            f"{self.inputs.get('discount_rate', s.economics.discount_rate) * 100:g} % real",
        ]
        if self.inputs:
            lines.append("What-if inputs: " + ", ".join(f"{k} = {v:g}" for k, v in
                                                        self.inputs.items()))
        lines += [
            "",
            f"{'option':<16}{'year':>5}{'PV of costs':>16}{'NPV vs keep':>15}{'IRR':>9}"
            f"{'simple payback':>16}{'B/C':>7}",
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
                         f"{r['npv_vs_keep']:>15,.0f}{irr:>9}{pb:>16}{bc:>7}")
        notes = [f"  {r['option']}: IRR {r['irr_note']}" for _, r in self.summary.iterrows()
                 if r["kind"] != "keep" and r["irr_note"] != "unique"]
        if notes:
            lines += ["", "IRR not given:", *notes]
        lines += ["", f"Least present value: {self.best['option']} ({self.best['description']})"
                  f", {self.best['pv_cost']:,.0f}{cur}", "", "Caution: " + CAUTION]
        return "\n".join(lines)
