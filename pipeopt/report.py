"""Reports (presentation layer): HTML (printable), PDF, Markdown, an Excel workbook, figures, CSV.

:func:`write_report` turns a sizing or an upgrade result into files a client or a reviewer can
read: ``report.html`` (self-contained, figures embedded, with a print stylesheet: A4 or Letter,
page numbers, a title block), ``report.pdf`` on request (the same page printed by WeasyPrint),
``report.md``, ``workbook.xlsx`` (numbers as numbers, a units row, frozen headers), the figures
as PNG and every table as CSV. Each report states the job (study, author, revision, date), the
cautions, the result, the yearly cash flows with a check row that reconciles them to the
present value, a one-way sensitivity (tornado), the inputs as the user gave them with their
units, the values derived from them, the model's assumptions, where every data source comes
from (and which figures are illustrative), and the verification status.

The files are built in memory (:func:`report_files`) and handed whole to
:func:`pipeopt.outputs.write_result_set`, which swaps the set in at once with a manifest, so
that an interrupted run leaves either the old results or the new, never a mixture. Tables are
formatted with fixed rules and the workbook carries fixed dates, so that the same inputs give
the same files, byte for byte (on one set of library versions).

Text from a study (names, designations, reasons) cannot act in the files: CSV cells that a
spreadsheet would read as a formula (a leading ``=``, ``+``, ``-``, ``@``, tab or carriage
return) get a leading apostrophe, workbook text cells are text (never formulas) without the
control characters the format forbids, the Markdown report escapes HTML, links and code fences,
the HTML report escapes everything (text in the page margins is a CSS string of hexadecimal
escapes), and the PDF export fetches nothing but the page's own embedded images.
"""

from __future__ import annotations

import base64
import dataclasses
import datetime
import html
import io
import math
import os
import re
import threading
import zipfile
from collections.abc import Callable
from pathlib import Path
from typing import Any

import matplotlib

matplotlib.use("Agg", force=False)

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pandas as pd  # noqa: E402

from . import __version__ as _version  # noqa: E402
from . import plots  # noqa: E402
from .errors import InputError  # noqa: E402
from .outputs import (  # noqa: E402
    csv_text,
    markdown_code,
    markdown_text,
    printable,
    text_columns,
    write_atomic,
    write_result_set,
)
from .results import CAUTION  # noqa: E402
from .units import display  # noqa: E402

__all__ = ["write_report", "report_files", "report_html", "pdf_from_html", "check_pdf",
           "write_atomic",
           "SET_PATTERNS", "CAUTIONS", "ASSUMPTIONS_SIZING", "ASSUMPTIONS_UPGRADE", "PAPERS"]

#: Every file a report set may hold (besides ``manifest.json``), for the check that no study
#: input is among them before a study is computed.
SET_PATTERNS = ("report.html", "report.md", "report.pdf", "workbook.xlsx",
                *(f"{t}.csv" for t in ("candidates", "optimum", "yearly_best", "tornado",
                                       "switching_values", "monte_carlo",
                                       "monte_carlo_correlation", "summary", "cash_flows",
                                       "best_year", "inputs", "derived", "verification")),
                *(f"figures/{f}.png" for f in ("cost_curves", "cost_breakdown", "velocity_head",
                                               "friction_chart", "tornado",
                                               "probability_cheapest", "cumulative_cash_flow")))

#: Paper sizes of the PDF export (CSS page-size keywords: ISO 216 A4, 210 x 297 mm; US Letter,
#: 8.5 x 11 in). The HTML report names none: a browser prints it on the paper of its dialog.
PAPERS = ("A4", "Letter")

CAUTIONS = [
    CAUTION,
    "Its results depend on inputs (roughness, aging, costs, tariffs, duty) that the user must "
    "justify; the figures of an illustrative study are invented.",
    "The pressure check compares the operating pressure with PFA and the maximum design "
    "pressure MDP (with a Joukowsky surge screen) with PMA, at the service temperature (EN 805 "
    "terms); it does not replace a transient analysis, the ratings of joints and fittings, or "
    "structural design.",
    "Pressure, surge and structural questions need a qualified engineer; local codes, "
    "standards and licensed engineering practice govern every design decision.",
]

ASSUMPTIONS_SIZING = [
    "Steady flow at each duty point; each duty flow grows by the same compound rate every year "
    "(until the design year or the flow cap, when given).",
    "Friction by Darcy-Weisbach with the Colebrook-White factor solved to machine precision "
    "(64/Re when laminar; the turbulent value in the transition band 2000 <= Re < 4000); "
    "minor losses from the sum of K referred to the line velocity.",
    "Roughness grows linearly with age at the material's rate when aging is set.",
    "Pump head = static head + friction and minor losses; electrical power = rho g Q H / eta "
    "(eta wire to water).",
    "Energy cost = energy x price escalated yearly + demand charge x peak electrical demand.",
    "Pipe bought at year 0; the pump station in its stages, again at the end of each of its "
    "lives within the horizon; maintenance a fixed fraction of the capital in service; "
    "straight-line residual values credited at the horizon.",
    "All money real (constant prices), discounted at the real rate to year 0; EAC = PV x CRF. "
    "The yearly cash flows add up to the present value (the check row of the table).",
    "Feasibility: velocity_max against the largest flow of any year, velocity_min against the "
    "largest year-1 duty; operating pressure against PFA, MDP (with surge) against PMA.",
]

ASSUMPTIONS_UPGRADE = [
    "Hydraulics of every option as in a sizing study (Darcy-Weisbach, Colebrook-White).",
    "The existing line keeps aging at its rate; its break rate grows exponentially (Shamir & "
    "Howard 1979) and the breaks of a year are that rate integrated over the year.",
    "A reline cleans the bore back to the bore as laid, then loses twice the liner; a "
    "duplicate line shares the flow with the old one at equal head loss in every year.",
    "Capital of an option is spent in its year of action; the new state serves from the next "
    "year; residual values straight-line at the horizon.",
    "NPV against keeping the line is the present value of the savings; the IRR is given only "
    "when unique; the simple payback counts undiscounted savings, the discounted payback "
    "discounted ones (the year from which the cumulative savings stay >= 0).",
    "All money real (constant prices), discounted at the real rate to year 0. The yearly cash "
    "flows of each option add up to its present value (the check rows).",
]


# --------------------------------------------------------------------------------------------
# text made inert
# --------------------------------------------------------------------------------------------
def _css_string(text: str) -> str:
    """Text as a CSS string: every character but letters, digits and a few marks escaped in
    hexadecimal (CSS Syntax Level 3, 4.3.7), so that no text ends the string or the style."""
    safe = printable(str(text), one_line=True)
    return '"' + "".join(ch if (ch.isascii() and (ch.isalnum() or ch in " ,.:;()_-"))
                         else f"\\{ord(ch):x} " for ch in safe) + '"'


# --------------------------------------------------------------------------------------------
# numbers for people: separators, significant figures, "-" for nothing
# --------------------------------------------------------------------------------------------
def _blank(value: Any) -> bool:
    if value is None or value is pd.NA:
        return True
    if isinstance(value, (float, np.floating)):
        return not math.isfinite(float(value))
    return False


def sig(value: Any, digits: int = 4) -> str:
    """A number to ``digits`` significant figures, with thousands separators and no trailing
    zeros; ``-`` for None or NaN (no raw floats in a report).

    >>> sig(999.6079276226715), sig(4600.0), sig(0.000123456), sig(float("nan"))
    ('999.6', '4,600', '0.0001235', '-')
    """
    if _blank(value):
        return "-"
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    v = float(value)
    if v == 0:
        return "0"
    magnitude = math.floor(math.log10(abs(v)))
    if magnitude >= digits - 1:
        return f"{round(v):,}"
    decimals = digits - 1 - magnitude
    if decimals > 9:
        return f"{v:.{digits - 1}e}"
    text = f"{v:,.{decimals}f}"
    return text.rstrip("0").rstrip(".") if "." in text else text


def _fixed(decimals: int) -> Callable[[Any], str]:
    def fmt(value: Any) -> str:
        if _blank(value):
            return "-"
        text = f"{float(value):,.{decimals}f}"
        return text[1:] if text.startswith("-") and not text.strip("-0.,") else text  # no -0
    return fmt


_money = _fixed(0)


def _scaled(factor: float, decimals: int) -> Callable[[Any], str]:
    inner = _fixed(decimals)
    return lambda v: "-" if _blank(v) else inner(float(v) * factor)


def _percent(value: Any) -> str:
    return "-" if _blank(value) else f"{float(value) * 100:.1f} %"


def _yes_no(value: Any) -> str:
    return "-" if _blank(value) else ("yes" if bool(value) else "no")


def _words(value: Any) -> str:
    return "-" if _blank(value) or value == "" else str(value)


def _whole(value: Any) -> str:
    return "-" if _blank(value) else f"{int(round(float(value))):d}"


# --------------------------------------------------------------------------------------------
# the report's content: tables, figures, texts, rendered to HTML and Markdown alike
# --------------------------------------------------------------------------------------------
@dataclasses.dataclass
class _Table:
    """A table of the report: raw rows and how each column is shown."""

    key: str
    title: str
    frame: pd.DataFrame
    columns: list  # (source column, header, formatter, "l" or "r")
    note: str = ""
    #: rows of text under the body: a cell per column, or (label, value) for a label over
    #: every column but the last
    checks: list = dataclasses.field(default_factory=list)

    @property
    def headers(self) -> list[str]:
        return [c[1] for c in self.columns]

    def rows(self) -> list[list[str]]:
        out = []
        for rec in self.frame.to_dict("records"):
            out.append([fmt(rec.get(col)) for col, _, fmt, _ in self.columns])
        return out


def _col(column: str, header: str, fmt: Callable[[Any], str] = _words, align: str = ""):
    """A column: source, header, formatter, alignment ("r" numbers, "l" labels, "w" long text
    that wraps; default "l" for text, "r" for the rest)."""
    return (column, header, fmt, align or ("l" if fmt is _words else "r"))


def _present(frame: pd.DataFrame, columns: list) -> list:
    return [c for c in columns if c[0] in frame.columns]


def _yearly_table(frame: pd.DataFrame, pv: float, title: str, key: str, money: str,
                  energy: bool) -> _Table:
    """Cash flows by year with the check rows: the sum of each column and the present value
    the discounted column must add up to."""
    rows = [c for c in frame.columns if c not in ("option", "year", "flow_multiplier",
                                                  "energy_kwh", "peak_kw", "total",
                                                  "discount_factor", "discounted")]
    shown = [r for r in rows if np.any(np.abs(frame[r].to_numpy(dtype=float)) > 0)]
    left_out = [r for r in rows if r not in shown]
    cols = [_col("year", "year", _whole)]
    if energy and "energy_kwh" in frame.columns:
        cols.append(_col("energy_kwh", "energy [MWh]", _scaled(1e-3, 0)))
    cols += [_col(r, f"{r.replace('_', ' ')} [{money}]", _money) for r in shown]
    cols += [_col("total", f"total [{money}]", _money),
             _col("discount_factor", "discount factor", _fixed(4)),
             _col("discounted", f"discounted [{money}]", _money)]
    total = float(frame["discounted"].sum())
    sums = ["sum", *([""] if energy and "energy_kwh" in frame.columns else []),
            *[_money(frame[r].sum()) for r in shown], _money(frame["total"].sum()), "",
            _money(total)]
    checks = [sums, ["present value of the candidate or option (what the sum must equal)",
                     _money(pv)],
              ["difference (sum - present value)", f"{total - pv:+.1e}"]]
    note = ("Costs positive, credits (residual value) negative; each row's total times its "
            "discount factor is its discounted value, and the discounted column adds up to the "
            "present value (check row).")
    if left_out:
        note += " Columns zero in every year are left out: " + ", ".join(left_out) + "."
    return _Table(key, title, frame, cols, note, checks)


def yearly_check(frame: pd.DataFrame, pv: float) -> dict[str, float]:
    """The reconciliation of a yearly cash-flow table with its present value.

    Returns the sum of the ``discounted`` column, the present value it must equal and their
    difference (what the check row of the report's table shows).
    """
    total = float(frame["discounted"].sum())
    return {"sum_discounted": total, "present_value": float(pv), "difference": total - pv}


# ----- the inputs as the user gave them ---------------------------------------------------------
def _unit_text(spec: Any, currency: str) -> str:
    return spec.unit.replace("{currency}", currency or "currency") if spec.unit else "-"


def _input_value(value: Any, spec: Any, currency: str) -> tuple[Any, str]:
    """(value in its display unit, unit) of one input field."""
    if value is None:
        return None, ""
    if spec.what == "quantity":
        return display(float(value), spec.kind)
    if spec.what in ("number", "whole"):
        return value, _unit_text(spec, currency)
    if spec.what == "flag":
        return ("true" if value else "false"), ""
    if spec.what == "texts":
        return ", ".join(str(v) for v in value), ""
    if spec.what == "quantities":
        shown = [display(float(v), spec.kind) for v in value]
        return ", ".join(sig(v, 6) for v, _ in shown), shown[0][1] if shown else ""
    if spec.what == "numbers":
        return ", ".join(sig(v, 6) for v in value), _unit_text(spec, currency)
    return str(value), ""


def _section_rows(obj: Any, path: str, currency: str) -> list[tuple[str, Any, str]]:
    """(key path, value, unit) of every field of an input section, nested sections included,
    list elements one row each (``duty[1].flow``), in the study file's units for people."""
    rows: list[tuple[str, Any, str]] = []
    elements: list[tuple[int, str, Any, str]] = []
    for f in dataclasses.fields(obj):
        spec = f.metadata.get("spec")
        if spec is None:
            continue
        value = getattr(obj, f.name)
        key = spec.key or f.name
        where = key if "." in key else f"{path}.{key}" if path else key
        if spec.what == "section":
            if value is not None:
                rows += _section_rows(value, where, currency)
            continue
        if spec.element and value is not None:
            single = dataclasses.replace(spec, what={"quantities": "quantity",
                                                      "numbers": "number",
                                                      "texts": "text"}[spec.what])
            for i, v in enumerate(value):
                elements.append((i, f"{path}[{i}].{spec.element}",
                                 *_input_value(v, single, currency)))
            continue
        rows.append((where, *_input_value(value, spec, currency)))
    elements.sort(key=lambda e: e[0])  # duty[0].flow, duty[0].hours, duty[0].name, duty[1]...
    return [(k, v, u) for _, k, v, u in elements] + rows


def _cost_rows(cost: Any, path: str, currency: str) -> list[tuple[str, Any, str]]:
    """The rows of a pipe cost model: its fields, or its table by designation."""
    if dataclasses.is_dataclass(cost) and any("spec" in f.metadata
                                              for f in dataclasses.fields(cost)):
        rows = _section_rows(cost, path, currency)
        table = getattr(cost, "laying_table", None)
        if table:
            rows += [(f"{path}.laying_table.{k}", v, f"{currency or 'currency'}/m")
                     for k, v in dict(table).items()]
        return rows
    pairs = getattr(cost, "rows", None)
    if pairs:
        return [(f"{path}.table.{d}", c, f"{currency or 'currency'}/m") for d, c in pairs]
    return [(path, cost.describe(), f"{currency or 'currency'}/m")]


def _fluid_rows(fluid: Any, given: bool) -> list[tuple[str, Any, str]]:
    rows: list[tuple[str, Any, str]] = [("fluid.name", fluid.name, "")]
    if fluid.temperature is not None:
        rows.append(("fluid.temperature", *display(fluid.temperature, "temperature")))
    if fluid.pressure is not None:
        v, u = display(fluid.pressure, "pressure")
        rows.append(("fluid.pressure", v, f"{u} (absolute)"))
    if given:  # a custom fluid: its properties are inputs
        rows += [("fluid.density", *display(fluid.density, "density")),
                 ("fluid.viscosity", *display(fluid.viscosity, "viscosity"))]
    return rows


def _catalog_rows(study: Any) -> list[tuple[str, Any, str]]:
    from .catalog import default_catalog

    if study.catalog is default_catalog():
        return [("catalog", "bundled sizes and materials", "")]
    return [("catalog", "the study's own sizes or materials file (see Data sources)", "")]


def inputs_table(study: Any) -> pd.DataFrame:
    """Every input of a sizing or an upgrade study, as given, in the units people read.

    Columns ``key`` (the study-file key path, e.g. ``line.length``, ``duty[1].flow``,
    ``material[0].cost.price_per_kg``), ``value`` (a number in the display unit, or text;
    None when not given) and ``unit`` (m³/h for flows, km or m for lengths, mm for diameters
    and roughness, °C, bar, the study currency for money, ``-`` for a pure number).
    """
    cur = study.currency
    given = study.fluid.source == "given by the user"
    rows = _section_rows(study.info, "study", cur)
    rows += _fluid_rows(study.fluid, given)
    upgrade = hasattr(study, "existing")
    if upgrade:
        rows += _section_rows(study.existing, "existing", cur)
    else:
        rows += _section_rows(study.line, "line", cur)
    rows += _section_rows(study.duty, "duty", cur)
    rows += _section_rows(study.pumping, "pumping", cur)
    rows += _section_rows(study.tariff, "energy", cur)
    if study.pump_station is not None:
        rows += _section_rows(study.pump_station, "pump_station", cur)
    rows += _section_rows(study.economics, "economics", cur)
    if upgrade:
        for i, o in enumerate(study.options):
            path = f"option[{i}]"
            rows += [r for r in _section_rows(o, path, cur) if not r[0].startswith(
                f"{path}.cost.")]
            if o.cost is not None:
                rows += _cost_rows(o.cost, f"{path}.cost", cur)
    else:
        for i, m in enumerate(study.materials):
            path = f"material[{i}]"
            rows += _section_rows(m, path, cur)
            rows += _cost_rows(m.cost, f"{path}.cost", cur)
            if m.aging == "typical":
                rows.append((f"{path}.aging", "typical", ""))
            elif m.aging is not None:
                rows.append((f"{path}.aging", *display(float(m.aging), "aging_rate")))
        rows += _section_rows(study.constraints, "constraints", cur)
        if study.carbon is not None:
            rows += _section_rows(study.carbon, "carbon", cur)
        rows += _section_rows(study.hydraulics, "hydraulics", cur)
    rows += _catalog_rows(study)
    if study.uncertainty:
        cfg = study.uncertainty
        rows += [("uncertainty.samples", cfg.get("samples"), "-"),
                 ("uncertainty.seed", cfg.get("seed"), "-")]
        rows += [(f"uncertainty.{k}", str(v), "") for k, v in
                 (cfg.get("distributions") or {}).items()]
    return pd.DataFrame(rows, columns=["key", "value", "unit"])


def _input_cell(value: Any) -> str:
    if isinstance(value, str):
        return value if value else "-"
    if isinstance(value, (bool, np.bool_)):
        return "true" if value else "false"
    return sig(value, 6)


# ----- the values derived from them -------------------------------------------------------------
def derived_table(result: Any) -> pd.DataFrame:
    """Values the study derived from its inputs (not inputs themselves): fluid properties from
    their formulation, the service temperature and each material's derating, roughness and
    aging taken from the catalog, the capital recovery factor; for an upgrade study the
    existing line's bore, roughness and Hazen-Williams C (back-calculated when a field test or
    a C was given) and each option's resolved bore, roughness and capital.

    Columns ``quantity``, ``value`` (display unit), ``unit``, ``basis`` (where it comes from).
    """
    study = result.study
    cur = study.currency or "currency"
    f = study.fluid
    rows: list[tuple[str, Any, str, str]] = []
    if f.source != "given by the user":
        rows += [("fluid density", *display(f.density, "density"), f.source),
                 ("fluid dynamic viscosity", *display(f.viscosity, "viscosity"), f.source)]
        if f.vapour_pressure is not None:
            v, u = display(f.vapour_pressure, "pressure")
            rows.append(("fluid vapour pressure", v, f"{u} (absolute)", f.source))
    if f.bulk_modulus is not None:
        rows.append(("fluid bulk modulus", *display(f.bulk_modulus, "modulus"), f.source))
    if hasattr(study, "existing"):
        c = study.condition
        rows.append(("existing bore now", *display(c["bore_m"], "diameter"),
                     "existing.inner_diameter, or the catalog bore of existing.size less "
                     "existing.bore_loss"))
        if c.get("bore_as_laid_m") is not None:
            rows.append(("existing bore as laid", *display(c["bore_as_laid_m"], "diameter"),
                         "existing.bore_as_laid or the catalog bore of existing.size"))
        rows.append(("existing roughness now", *display(c["roughness_m"], "roughness"),
                     c["source"]))
        rows.append(("existing Hazen-Williams C (equivalent)", c["hazen_williams_c"], "-",
                     "from the roughness at the largest year-1 duty"))
        if c.get("field_test_friction_loss_m") is not None:
            rows.append(("field test friction loss", c["field_test_friction_loss_m"], "m",
                         "pressure difference / (rho g) + elevation difference"))
        for st in study.states:
            s = st.state
            rows += [(f"option {st.name}: bore", *display(s.diameter, "diameter"),
                      st.description),
                     (f"option {st.name}: roughness", *display(s.roughness, "roughness"),
                      "option roughness, liner roughness or the catalog material's"),
                     (f"option {st.name}: capital", s.capital, cur,
                      "cost per metre x length (or the option's cost model)")]
            if s.cleaning:
                rows.append((f"option {st.name}: cleaning", s.cleaning, cur,
                             "cleaning_cost_per_metre x length"))
            rows.append((f"option {st.name}: life", s.life, "yr",
                         "option life or economics.pipe_life"))
    else:
        t = study.service_temperature
        rows.append(("service temperature", *display(t, "temperature"),
                     "fluid temperature" if f.temperature is not None
                     else "not given: 20 degC taken for the ratings"))
        crf = float(np.asarray(result.lifecycle.crf).reshape(-1)[0])
        rows.append(("capital recovery factor", crf, "1/yr",
                     f"i (1 + i)^N / ((1 + i)^N - 1) at i = {study.economics.discount_rate:g}, "
                     f"N = {result.horizon}"))
        c = study.candidates
        for mat, g in c.groupby("material", sort=False):
            rough = g["roughness_m"].unique()
            rows.append((f"{mat}: roughness new", *display(float(rough[0]), "roughness"),
                         "the study's roughness or the catalog's (pipeopt catalog)"))
            rows.append((f"{mat}: aging rate", *display(float(g["aging_m_per_year"].iloc[0]),
                                                          "aging_rate"),
                         "the study's aging, the catalog's typical rate, or none"))
            factor = g["temperature_factor"].to_numpy(dtype=float)
            rows.append((f"{mat}: temperature derating factor",
                         float(np.nanmin(factor)) if np.isfinite(factor).any() else None, "-",
                         "PFA = factor x rating at the service temperature (1: no derating; "
                         "'-': above the material's limit)"))
            wave = g["wave_speed_m_s"].to_numpy(dtype=float)
            rows.append((f"{mat}: wave speed", f"{sig(wave.min(), 4)} to {sig(wave.max(), 4)}",
                         "m/s", "Korteweg, from the wall, the modulus and the liquid"))
    return pd.DataFrame(rows, columns=["quantity", "value", "unit", "basis"])


# ----- tables of results ------------------------------------------------------------------------
def _sizing_tables(result: Any, money: str) -> list[_Table]:
    c = result.candidates
    top = c[c["feasible"]].nsmallest(10, "eac")
    mm = _scaled(1e3, 1)
    out = [
        _Table("best-cost", f"Best feasible candidates: cost ({money})", top, _present(top, [
            _col("material", "material"), _col("size", "size"), _col("class", "class"),
            _col("inner_diameter_m", "inner diameter [mm]", mm),
            _col("capex_pipe", f"pipe [{money}]", _money),
            _col("pv_pump_station", f"pump station, PV [{money}]", _money),
            _col("pv_energy", f"energy, PV [{money}]", _money),
            _col("pv_total", f"PV total [{money}]", _money),
            _col("eac", f"EAC [{money}/yr]", _money)]),
               "The ten feasible candidates with the least equivalent annual cost (EAC); PV: "
               "present value at year 0."),
        _Table("best-hydraulics", "Best feasible candidates: hydraulics and pressure", top,
               _present(top, [
                   _col("material", "material"), _col("size", "size"),
                   _col("velocity_m_s", "velocity [m/s]", _fixed(2)),
                   _col("velocity_peak_m_s", "peak velocity [m/s]", _fixed(2)),
                   _col("head_loss_m", "head loss [m]", _fixed(2)),
                   _col("pump_head_m", "pump head [m]", _fixed(1)),
                   _col("electrical_power_kw", "electrical power [kW]", _fixed(1)),
                   _col("operating_pressure_bar", "operating [bar]", _fixed(1)),
                   _col("pfa_bar", "PFA [bar]", _fixed(1)),
                   _col("mdp_bar", "MDP [bar]", _fixed(1)),
                   _col("pma_bar", "PMA [bar]", _fixed(1))]),
               "Velocity, head loss, pump head and electrical input power at the largest duty "
               "of year 1; peak velocity at the largest flow of any year. Operating pressure "
               "against PFA, MDP (with surge) against PMA (EN 805)."),
    ]
    if not result.optimum.empty:
        o = result.optimum
        out.append(_Table("optimum", "Continuous optimum of each material", o, _present(o, [
            _col("material", "material"), _col("class", "class"),
            _col("inner_diameter_m", "inner diameter [mm]", mm),
            _col("eac", f"EAC [{money}/yr]", _money),
            _col("velocity_m_s", "velocity [m/s]", _fixed(2)),
            _col("limited_by", "limit that binds"),
            _col("unconstrained_inner_diameter_m", "unconstrained diameter [mm]", mm),
            _col("lower_size", "size below"), _col("upper_size", "size above"),
            _col("pressure_ok", "pressure holds", _yes_no)]),
            "The inner diameter of least EAC of each material when the diameter varies "
            "continuously within the velocity limits, between the sizes of its class."))
    if result.best is not None:
        b = result.best
        out.append(_yearly_table(result.yearly(), float(b["pv_total"]),
                                 f"Cash flows by year: {b['material']} {b['size']}",
                                 "yearly", money, energy=True))
    return out


def _upgrade_tables(result: Any, money: str) -> list[_Table]:
    s = result.summary
    out = [_Table("options", "Options against keeping the line", s, _present(s, [
        _col("option", "option"), _col("year", "year of action", _whole),
        _col("pv_cost", f"PV of costs [{money}]", _money),
        _col("npv_vs_keep", f"NPV vs keep [{money}]", _money),
        _col("irr", "IRR", _percent),
        _col("simple_payback_year", "simple payback [yr]", _whole),
        _col("discounted_payback_year", "discounted payback [yr]", _whole),
        _col("benefit_cost_ratio", "B/C", _fixed(2)),
        _col("velocity_peak_m_s", "peak velocity [m/s]", _fixed(2)),
        _col("pump_head_max_m", "highest pump head [m]", _fixed(1))]),
        "NPV: present value of the savings against keeping the line (positive: the option "
        "saves). Payback: the study year from which the cumulative savings stay >= 0, "
        "undiscounted (simple) or discounted. B/C: PV of running-cost savings over PV of the "
        "extra net capital."),
        _Table("option-words", "What each option does", s, _present(s, [
            _col("option", "option"), _col("kind", "kind"),
            _col("description", "description", _words, "w"),
            _col("irr_note", "IRR note", _words, "w")]))]
    cf = result.cash_flows
    rows = [c for c in cf.columns if c not in ("option", "year", "total", "discount_factor",
                                               "discounted")]
    parts = []
    for opt, g in cf.groupby("option", sort=False):
        factor = g["discount_factor"].to_numpy(dtype=float)
        rec = {"option": opt, **{r: float(g[r].to_numpy() @ factor) for r in rows}}
        rec["sum"] = float(g["discounted"].sum())
        rec["pv_cost"] = float(s.loc[s["option"] == opt, "pv_cost"].iloc[0])
        rec["difference"] = rec["sum"] - rec["pv_cost"]
        parts.append(rec)
    pv = pd.DataFrame(parts)
    shown = [r for r in rows if np.any(np.abs(pv[r].to_numpy(dtype=float)) > 0)]
    out.append(_Table("pv-parts", "Present value of each option from its yearly rows", pv, [
        _col("option", "option"),
        *[_col(r, f"{r.replace('_', ' ')} [{money}]", _money) for r in shown],
        _col("sum", f"sum [{money}]", _money), _col("pv_cost", f"PV of costs [{money}]", _money),
        _col("difference", "check: difference", lambda v: f"{float(v):+.2e}")],
        "Each row's yearly cash flows discounted to year 0 and summed; the sum equals the "
        "option's present value of costs (check column)" + (
            "; columns zero for every option are left out: " + ", ".join(
                r for r in rows if r not in shown) if len(shown) < len(rows) else "") + "."))
    best = result.best["option"]
    for name in dict.fromkeys([best, "keep"]):
        g = cf[cf["option"] == name].reset_index(drop=True)
        pvc = float(s.loc[s["option"] == name, "pv_cost"].iloc[0])
        out.append(_yearly_table(g, pvc, f"Cash flows by year: {name}",
                                 f"yearly-{'keep' if name == 'keep' else 'best'}", money,
                                 energy=False))
    return out


def _extra_tables(extra: dict, money: str, sizing: bool) -> list[_Table]:
    out = []
    if "tornado" in extra:
        t = extra["tornado"]
        m = t.metric
        unit = f"{money}/yr" if m == "eac" else money
        what = "EAC" if m == "eac" else "PV"
        out.append(_Table("tornado", f"Sensitivity: {what} of {t.chosen}", t.table, [
            _col("input", "input"), _col("low", "low", sig), _col("high", "high", sig),
            _col(f"{m}_low", f"{what} at low [{unit}]", _money),
            _col(f"{m}_high", f"{what} at high [{unit}]", _money),
            _col("swing", f"swing [{unit}]", _money),
            _col("best_low", "best at low", _words, "w"),
            _col("best_high", "best at high", _words, "w"),
            _col("changes", "best changes", _yes_no)],
            f"Each input at a low and a high value, the others at base (base {what} "
            f"{_money(t.base_value)} {unit}); factors scale the study's own values."))
    if "switching" in extra:
        sw = extra["switching"].table
        out.append(_Table("switching", "Switching values", sw, _present(sw, [
            _col("input", "input"), _col("direction", "direction"),
            _col("base", "base", sig), _col("switching_value", "switching value", sig),
            _col("switches_to", "switches to"), _col("how", "how", _words, "w")]),
            "The value of each input, below or above its base, at which another candidate "
            "becomes the best ('-': none within the range)."))
    if "monte_carlo" in extra:
        mc = extra["monte_carlo"]
        if sizing:
            top = mc.candidates.head(10)
            out.append(_Table("monte-carlo", f"Monte Carlo, {mc.n:,} samples (seed {mc.seed})",
                              top, _present(top, [
                                  _col("material", "material"), _col("size", "size"),
                                  _col("eac_mean", f"EAC mean [{money}/yr]", _money),
                                  _col("eac_p05", f"EAC p05 [{money}/yr]", _money),
                                  _col("eac_p50", f"EAC p50 [{money}/yr]", _money),
                                  _col("eac_p95", f"EAC p95 [{money}/yr]", _money),
                                  _col("prob_cheapest", "P(cheapest)", _percent),
                                  _col("prob_infeasible", "P(infeasible)", _percent),
                                  _col("expected_regret", f"expected regret [{money}/yr]",
                                       _money)]),
                              "The ten candidates most often the cheapest feasible one."))
        else:
            sm = mc.summary
            out.append(_Table("monte-carlo", f"Monte Carlo, {mc.n:,} samples (seed {mc.seed})",
                              sm, _present(sm, [
                                  _col("option", "option"),
                                  _col("npv_mean", f"NPV mean [{money}]", _money),
                                  _col("npv_p05", f"NPV p05 [{money}]", _money),
                                  _col("npv_p50", f"NPV p50 [{money}]", _money),
                                  _col("npv_p95", f"NPV p95 [{money}]", _money),
                                  _col("prob_positive", "P(NPV > 0)", _percent),
                                  _col("prob_best", "P(best)", _percent)])))
    if "best_year" in extra:
        by = pd.DataFrame([{"option": b.option, "best_year": b.year, "pv_cost": b.pv_cost,
                            "npv_vs_keep": b.keep_pv_cost - b.pv_cost}
                           for b in extra["best_year"]])
        out.append(_Table("best-year", "Best year of action of each option", by, [
            _col("option", "option"), _col("best_year", "best year", _whole),
            _col("pv_cost", f"PV of costs [{money}]", _money),
            _col("npv_vs_keep", f"NPV vs keep [{money}]", _money)]))
    return out


def _inputs_block(inputs: pd.DataFrame) -> _Table:
    return _Table("inputs", "Inputs as given", inputs, [
        _col("key", "key"), _col("value", "value", _input_cell, "w"),
        _col("unit", "unit", _unit_cell)],
        "Every key of the study, in the study file's terms; dimensional values in the units "
        "shown (the study may have written them in others), defaults included.")


def _derived_block(derived: pd.DataFrame) -> _Table:
    return _Table("derived", "Values derived from the inputs", derived, [
        _col("quantity", "quantity", _words, "w"), _col("value", "value", _input_cell_4, "l"),
        _col("unit", "unit", _unit_cell), _col("basis", "basis", _words, "w")])


def _unit_cell(value: Any) -> str:
    return value if isinstance(value, str) else ""


def _input_cell_4(value: Any) -> str:
    return value if isinstance(value, str) else sig(value, 4)


# --------------------------------------------------------------------------------------------
# figures
# --------------------------------------------------------------------------------------------
def _png(ax) -> bytes:
    png = plots.figure_png(ax.figure, dpi=110, everything=True)  # one draw, no layout passes
    plt.close(ax.figure)
    return png


FIGURE_CAPTIONS = {
    "cost_curves": "Equivalent annual cost of every candidate against its inner diameter, and "
                   "the parts of the EAC of the chosen material, which add up to its total.",
    "cost_breakdown": "Present value of the best candidates in parts; the residual value is a "
                      "credit.",
    "velocity_head": "Velocity and head loss against inner diameter, with the velocity limits.",
    "friction_chart": "Darcy friction factor against Reynolds number (Colebrook-White), with "
                      "the candidates' design points.",
    "tornado": "Sensitivity of the chosen design's figure to each input, one at a time.",
    "probability_cheapest": "Probability that each candidate is the cheapest feasible one.",
    "cumulative_cash_flow": "Cumulative discounted savings of each option against keeping the "
                            "line; the dot marks the discounted payback year.",
}


# --------------------------------------------------------------------------------------------
# the report
# --------------------------------------------------------------------------------------------
def write_report(result: Any, out: str | Path, extra: dict[str, Any] | None = None,
                 verification: bool = True, pdf: bool = False,
                 paper: str = "A4") -> list[Path]:
    """Write the report files of a sizing or an upgrade result into the folder ``out``.

    The whole set replaces the set ``out`` held before (see :mod:`pipeopt.outputs`): files of
    an earlier set that this one does not have are removed, files pipeopt did not write stay.

    Parameters
    ----------
    result : SizingResult or UpgradeResult
    out : path
        Output folder (created when missing).
    extra : dict, optional
        ``{"tornado": TornadoResult, "switching": SwitchingResult, "monte_carlo":
        MonteCarloResult, "best_year": [BestYear, ...]}`` when the study ran them. Without a
        tornado, the study's default one is computed (a result of what-if inputs has none).
    verification : bool
        Run the verification checks and state their status (default True).
    pdf : bool
        Also write ``report.pdf`` (:func:`pdf_from_html`).
    paper : {"A4", "Letter"}
        Paper of the PDF.

    Returns
    -------
    list of Path
        The files written, ``manifest.json`` last.
    """
    return write_result_set(out, report_files(result, extra, verification, pdf, paper))


def report_files(result: Any, extra: dict[str, Any] | None = None,
                 verification: bool = True, pdf: bool = False,
                 paper: str = "A4") -> dict[str, bytes | str]:
    """The files of the report of a sizing or an upgrade result, built in memory.

    Parameters are those of :func:`write_report`.

    Returns
    -------
    dict of str to bytes or str
        File name (``"report.html"``, ``"figures/cost_curves.png"``, ...) to content, ready
        for :func:`pipeopt.outputs.write_result_set`.
    """
    if pdf:
        check_pdf(paper)
    content = _content(result, dict(extra or {}), verification)
    files: dict[str, bytes | str] = {f"{name}.csv": csv_text(t)
                                     for name, t in content["data"].items()}
    files.update({f"figures/{name}.png": png for name, png, _ in content["figures"]})
    files["report.md"] = printable(_markdown(content))
    page = printable(_html(content))
    files["report.html"] = page
    files["workbook.xlsx"] = _workbook(content["data"], result.study.currency)
    if pdf:
        files["report.pdf"] = pdf_from_html(page, paper)
    return files


def report_html(result: Any, extra: dict[str, Any] | None = None,
                verification: bool = False) -> str:
    """The HTML report of a result alone (what ``report.html`` holds)."""
    return printable(_html(_content(result, dict(extra or {}), verification)))


def _content(result: Any, extra: dict, verification: bool) -> dict[str, Any]:
    """Everything a report shows, once, for every format."""
    from .sizing import SizingResult

    sizing = isinstance(result, SizingResult)
    study = result.study
    money = study.currency or "currency"
    if "tornado" not in extra and not result.inputs and (not sizing or result.best is not None):
        extra["tornado"] = study.tornado()     # a sensitivity in every report
    data: dict[str, pd.DataFrame] = {}
    figures: list[tuple[str, bytes, str]] = []
    if sizing:
        data["candidates"] = result.candidates
        data["optimum"] = result.optimum
        tables = _sizing_tables(result, money)
        if result.best is not None:
            data["yearly_best"] = result.yearly()
            figures.append(("cost_curves", _png(plots.cost_curves(result)), ""))
            figures.append(("cost_breakdown", _png(plots.cost_breakdown(result)), ""))
        figures.append(("velocity_head", _png(plots.velocity_head(result)), ""))
        figures.append(("friction_chart", _png(plots.friction_chart(result)), ""))
    else:
        data["summary"] = result.summary
        data["cash_flows"] = result.cash_flows
        tables = _upgrade_tables(result, money)
        figures.append(("cumulative_cash_flow", _png(plots.cumulative_cash_flow(result)), ""))
    if "tornado" in extra:
        data["tornado"] = extra["tornado"].table
        figures.append(("tornado", _png(plots.tornado_chart(extra["tornado"])), ""))
    if "switching" in extra:
        data["switching_values"] = extra["switching"].table
    if "monte_carlo" in extra:
        mc = extra["monte_carlo"]
        if sizing:
            data["monte_carlo"] = mc.candidates
            data["monte_carlo_correlation"] = mc.correlation
            figures.append(("probability_cheapest", _png(plots.probability_cheapest(mc)), ""))
        else:
            data["monte_carlo"] = mc.summary
    if "best_year" in extra:
        data["best_year"] = pd.DataFrame(
            [{"option": b.option, "best_year": b.year, "pv_cost": b.pv_cost,
              "npv_vs_keep": b.keep_pv_cost - b.pv_cost} for b in extra["best_year"]])
    tables += _extra_tables(extra, money, sizing)
    inputs = inputs_table(study)
    derived = derived_table(result)
    data["inputs"] = inputs
    data["derived"] = derived
    status = "verification not run"
    if verification:
        from .verification import run_checks

        checks = run_checks()
        data["verification"] = checks
        status = (f"{int(checks['passed'].sum())} of {len(checks)} published reference checks "
                  f"passed (pipeopt {_version}; run 'pipeopt verify' for the table).")
    figures = [(n, png, FIGURE_CAPTIONS.get(n, "")) for n, png, _ in figures]
    return {"sizing": sizing, "study": study, "kind": "sizing" if sizing else "upgrade",
            "title": f"pipeopt {'sizing' if sizing else 'upgrade'} study: {study.name}",
            "summary": result.text(), "tables": tables, "figures": figures,
            "inputs": _inputs_block(inputs), "derived": _derived_block(derived),
            "assumptions": ASSUMPTIONS_SIZING if sizing else ASSUMPTIONS_UPGRADE,
            "provenance": _provenance(study), "status": status, "data": data,
            "money": money}


def _provenance(study) -> list[str]:
    out = []
    if getattr(study, "illustrative", False):
        out.append("The scenario and its cost figures are ILLUSTRATIVE (invented), as the study "
                   "file says.")
    out.append(f"Fluid properties: {study.fluid.source}.")
    cands = getattr(study, "candidates", None)
    if cands is not None:
        for mat, rows in cands.groupby("material", sort=False):
            sources = sorted(set(rows["provenance"]))
            out.append(f"Sizes of {mat}: {sources[0]}" + (f" (and {len(sources) - 1} more row "
                                                          f"source(s))" if len(sources) > 1
                                                          else ""))
    out.append("Material roughness, aging and mechanical data: pipeopt's materials table, each "
               "value with its source (pipeopt catalog).")
    out.append("Costs and tariffs: inputs of the study file, not pipeopt data.")
    return out


def _title_rows(study: Any) -> list[tuple[str, str]]:
    info = study.info

    def given(value: str, key: str) -> str:
        return value if value else f"not given ([study] {key})"

    return [("Author", given(info.author, "author")),
            ("Revision", given(info.revision, "revision")),
            ("Date", given(info.date, "date")),
            ("Currency", info.currency or "not given ([study] currency)"),
            ("Prepared with", f"pipeopt {_version}"),
            ("Numbers", "ILLUSTRATIVE (invented)" if info.illustrative else "as given by the "
                                                                             "study")]


# ----- Markdown ---------------------------------------------------------------------------------
def _md_table(table: _Table) -> list[str]:
    lines = ["| " + " | ".join(markdown_text(h) for h in table.headers) + " |",
             "|" + "".join("---:|" if c[3] == "r" else "---|" for c in table.columns)]
    n = len(table.columns)
    for row in table.rows() + list(table.checks):
        row = list(row) if len(row) == n else [row[0], *[""] * (n - 2), row[1]]
        lines.append("| " + " | ".join(markdown_text(x) for x in row) + " |")
    return lines


def _markdown(c: dict) -> str:
    study = c["study"]
    parts = [f"# {markdown_text(c['title'])}", ""]
    if study.info.description:
        parts += [markdown_text(study.info.description), ""]
    parts += [f"- {k}: {markdown_text(v)}" for k, v in _title_rows(study)] + [""]
    parts += ["## Cautions", "", *[f"- {markdown_text(x)}" for x in CAUTIONS], "",
              "## Summary", "", *markdown_code(c["summary"]), ""]
    for heading, tables in (("Results", c["tables"]), ("Inputs", [c["inputs"], c["derived"]])):
        parts += [f"## {heading}", ""]
        for t in tables:
            parts += [f"### {markdown_text(t.title)}", ""]
            if t.note:
                parts += [markdown_text(t.note), ""]
            parts += [*_md_table(t), ""]
    parts += ["## Model assumptions", "", *[f"- {a}" for a in c["assumptions"]], "",
              "## Data sources", "", *[f"- {markdown_text(p)}" for p in c["provenance"]], "",
              "## Verification", "", markdown_text(c["status"]), "",
              "## Figures", "",
              *[f"![{n}](figures/{n}.png)\n\n{markdown_text(cap)}\n" for n, _, cap in c["figures"]]]
    return "\n".join(parts)


# ----- HTML -------------------------------------------------------------------------------------
STYLE = """
:root { color-scheme: light; }
body { font-family: "Liberation Sans", Arial, "Helvetica Neue", Helvetica, sans-serif;
       font-size: 10pt; line-height: 1.35; color: #1d1d1d; max-width: 62rem;
       margin: 1.5rem auto; padding: 0 1rem; }
h1 { font-size: 16pt; margin: 0.1em 0 0.25em; }
h2 { font-size: 12.5pt; margin: 1.3em 0 0.4em; padding-bottom: 2px;
     border-bottom: 1px solid #999; break-after: avoid; page-break-after: avoid; }
h3 { font-size: 10.5pt; margin: 1em 0 0.3em; break-after: avoid; page-break-after: avoid; }
p.note { font-size: 8.5pt; color: #444; margin: 0.2em 0 0.4em; break-after: avoid; }
.kind { font-size: 9pt; letter-spacing: 0.04em; text-transform: uppercase; color: #555;
        margin: 0; }
.title-block { border-top: 3px solid #0072B2; padding-top: 0.4em; margin-bottom: 0.8em; }
table { border-collapse: collapse; margin: 0.2em 0 0.9em; font-size: 8pt; max-width: 100%; }
table.data { width: 100%; }
th, td { padding: 2px 4px; border-bottom: 1px solid #d6d6d6; vertical-align: top;
         overflow-wrap: break-word; }
thead th { border-bottom: 1.4px solid #555; background: #f2f2f2; text-align: left;
           font-weight: bold; overflow-wrap: normal; }
thead { display: table-header-group; }
tr { break-inside: avoid; page-break-inside: avoid; }
td.r { text-align: right; white-space: nowrap; }
th.r { text-align: right; }
td.l { white-space: nowrap; }
tr.check td { border-top: 1.4px solid #555; font-weight: bold; background: #f7f7f7; }
table.meta { font-size: 9pt; }
table.meta th { text-align: left; padding-right: 1em; background: none; border: none; }
table.meta td { border: none; }
pre { font-family: "DejaVu Sans Mono", "Liberation Mono", monospace; font-size: 7.6pt;
      background: #f6f6f6; padding: 0.6em 0.8em; white-space: pre-wrap;
      overflow-wrap: anywhere; overflow: visible; }
.caution { border-left: 4px solid #D55E00; padding: 0.3em 1em; background: #fff4ec;
           break-inside: avoid; page-break-inside: avoid; }
.caution ul { margin: 0.2em 0; padding-left: 1.2em; }
section.short { break-inside: avoid; page-break-inside: avoid; }
figure { margin: 0.6em 0; break-inside: avoid; page-break-inside: avoid; }
figure img { display: block; max-width: 100%; height: auto; }
figcaption { font-size: 8.5pt; color: #444; }
@page { margin: 17mm 14mm 17mm 14mm; }
@media print {
  body { max-width: none; margin: 0; padding: 0; font-size: 9.5pt; }
  h2 { break-before: auto; }
  h2.page { break-before: page; page-break-before: always; }
  figure img { max-height: 205mm; width: auto; }
  a { color: inherit; text-decoration: none; }
}
"""


def _page_margins(study: Any) -> str:
    """The running heads and page numbers of the printed report (CSS Paged Media margin
    boxes); study text only as escaped CSS strings."""
    info = study.info
    right = " - ".join(x for x in (f"Rev. {info.revision}" if info.revision else "",
                                   info.date) if x) or f"pipeopt {_version}"
    left = f"pipeopt {_version}" + (" - ILLUSTRATIVE" if info.illustrative else "")
    small = "font-size: 7.5pt; color: #555;"
    boxes = {"top-left": _css_string(info.name), "top-right": _css_string(right),
             "bottom-left": _css_string(left),
             "bottom-right": '"Page " counter(page) " of " counter(pages)'}
    return "@page { " + " ".join(f"@{box} {{ content: {text}; {small} }}"
                                 for box, text in boxes.items()) + " }"


def _html_table(table: _Table) -> str:
    esc = html.escape
    head = "".join(f"<th class='{c[3]}'>{esc(c[1])}</th>" for c in table.columns)
    body = []
    for row in table.rows():
        body.append("<tr>" + "".join(f"<td class='{c[3]}'>{esc(x)}</td>"
                                     for c, x in zip(table.columns, row, strict=True)) + "</tr>")
    for row in table.checks:
        if len(row) == len(table.columns):
            cells = "".join(f"<td class='{c[3]}'>{esc(x)}</td>"
                            for c, x in zip(table.columns, row, strict=True))
        else:
            cells = (f"<td class='l' colspan='{len(table.columns) - 1}'>{esc(row[0])}</td>"
                     f"<td class='r'>{esc(row[1])}</td>")
        body.append(f"<tr class='check'>{cells}</tr>")
    note = f"<p class='note'>{esc(table.note)}</p>" if table.note else ""
    short = " short" if len(table.frame) + len(table.checks) <= 24 else ""
    return (f"<section class='block{short}' id='{esc(table.key)}'><h3>{esc(table.title)}</h3>"
            f"{note}"
            f"<table class='data'><thead><tr>{head}</tr></thead><tbody>{''.join(body)}"
            f"</tbody></table></section>")


def _html(c: dict) -> str:
    esc = html.escape
    study = c["study"]
    info = study.info
    kind = ("Life-cycle cost sizing study" if c["sizing"] else
            "Upgrade study of an existing line")
    meta = "".join(f"<tr><th>{esc(k)}</th><td>{esc(v)}</td></tr>" for k, v in
                   _title_rows(study))
    description = f"<p>{esc(info.description)}</p>" if info.description else ""
    figures = "".join(
        f"<figure id='figure-{esc(n)}'><img alt='{esc(n.replace('_', ' '))}' "
        f"src='data:image/png;base64,{base64.b64encode(png).decode()}'/>"
        f"<figcaption>{esc(cap)}</figcaption></figure>" for n, png, cap in c["figures"])
    results = "".join(_html_table(t) for t in c["tables"])
    author = f"<meta name='author' content='{esc(info.author)}'>" if info.author else ""
    return (
        "<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
        f"<title>{esc(c['title'])}</title>{author}"
        "<meta name='generator' content='pipeopt'>"
        f"<style>{STYLE}{_page_margins(study)}</style></head><body>"
        f"<header class='title-block'><p class='kind'>pipeopt &middot; {esc(kind)}</p>"
        f"<h1>{esc(info.name)}</h1>{description}<table class='meta'>{meta}</table></header>"
        "<div class='caution'><b>Cautions</b><ul>"
        + "".join(f"<li>{esc(x)}</li>" for x in CAUTIONS) + "</ul></div>"
        f"<h2>Summary</h2><pre>{esc(c['summary'])}</pre>"
        f"<h2 class='page'>Results</h2>{results}"
        f"<h2 class='page'>Figures</h2>{figures}"
        f"<h2 class='page'>Inputs</h2>{_html_table(c['inputs'])}{_html_table(c['derived'])}"
        "<h2>Model assumptions</h2><ul>" + "".join(f"<li>{esc(a)}</li>"
                                                   for a in c["assumptions"])
        + "</ul><h2>Data sources</h2><ul>" + "".join(f"<li>{esc(p)}</li>"
                                                     for p in c["provenance"])
        + f"</ul><h2>Verification</h2><p>{esc(c['status'])}</p></body></html>")


# ----- PDF --------------------------------------------------------------------------------------
def _data_only_fetcher() -> Any:
    """WeasyPrint's URL fetcher for the report: its own embedded images (data: URLs), nothing
    from the network or the disk."""
    try:
        from weasyprint.urls import URLFetcher
    except ImportError:  # WeasyPrint before its URLFetcher class: a function fetches
        from weasyprint import default_url_fetcher

        def fetch(url: str, *args: Any, **kwargs: Any) -> dict:
            if not url.startswith("data:"):
                raise ValueError(f"the report fetches nothing: {url[:40]!r}")
            return default_url_fetcher(url, *args, **kwargs)

        return fetch
    return URLFetcher(allowed_protocols=("data",))


def check_pdf(paper: str = "A4") -> Any:
    """Whether a PDF can be made, before anything is computed: the paper is known and
    WeasyPrint loads (with the Pango library it draws text with). Returns the module.

    Raises
    ------
    InputError
        Naming the paper sizes, or what to install.
    """
    if paper not in PAPERS:
        raise InputError(f"--paper: must be one of {', '.join(PAPERS)}; got {paper!r}")
    try:
        import weasyprint
    except (ImportError, OSError) as exc:  # OSError: the Pango library is missing
        raise InputError(f"--pdf: the PDF export needs WeasyPrint and the Pango library "
                         f"(pip install weasyprint; on Debian or Ubuntu apt-get install "
                         f"libpango-1.0-0 libpangoft2-1.0-0): {exc}") from None
    return weasyprint


_PDF_LOCK = threading.Lock()
#: 2000-01-01T00:00:00Z, the fixed date of every result set's binary files (Unix time [s]).
_FIXED_EPOCH = 946684800


def pdf_from_html(page: str, paper: str = "A4") -> bytes:
    """The printed report as PDF bytes, by WeasyPrint (CSS Paged Media: the page's running
    heads and page numbers, tables split across pages with their headers repeated).

    Parameters
    ----------
    page : str
        The HTML report (:func:`report_html`).
    paper : {"A4", "Letter"}
        ISO 216 A4 (210 x 297 mm) or US Letter (8.5 x 11 in).

    Raises
    ------
    InputError
        When WeasyPrint or the Pango library it draws text with cannot be loaded (the message
        says what to install).
    """
    weasyprint = check_pdf(paper)
    size = weasyprint.CSS(string=f"@page {{ size: {paper}; }}")
    document = weasyprint.HTML(string=page, url_fetcher=_data_only_fetcher())
    # the embedded font subsets carry a 'modified' time (fontTools stamps the clock, to the
    # second, unless SOURCE_DATE_EPOCH is set): a fixed date, as in the workbook, so that one
    # report gives the same bytes whenever it is printed
    with _PDF_LOCK:
        before = os.environ.get("SOURCE_DATE_EPOCH")
        os.environ["SOURCE_DATE_EPOCH"] = before or str(_FIXED_EPOCH)
        try:
            return document.write_pdf(stylesheets=[size])
        finally:
            if before is None:
                del os.environ["SOURCE_DATE_EPOCH"]


# --------------------------------------------------------------------------------------------
# workbook
# --------------------------------------------------------------------------------------------
_FIXED_DATE = datetime.datetime(2000, 1, 1)
_ZIP_DATE = (2000, 1, 1, 0, 0, 0)

_MONEY_COLUMNS = re.compile(
    r"^(capex_\w+|pv_\w+|eac(_\w+)?|npv_\w+|cost_per_metre|capital(_\w+)?|station(_\w+)?|"
    r"cleaning|energy_cost|breaks|leakage|maintenance|carbon|residual|total|discounted|"
    r"swing|expected_regret|base_eac|best_feasible_eac|lower_eac|upper_eac|"
    r"unconstrained_eac|sum|difference)$")
_UNIT_SUFFIXES = (("_kg_per_m", "kg/m", "0.0"), ("_m_per_year", "m/yr", "0.000000"),
                  ("_m_s", "m/s", "0.00"), ("_kwh_year1", "kWh", "#,##0"),
                  ("_kwh", "kWh", "#,##0"), ("_kw", "kW", "#,##0.0"), ("_bar", "bar", "0.00"),
                  ("_pa", "Pa", "#,##0"), ("_mm", "mm", "0.0"), ("_m", "m", "0.0000"),
                  ("_k", "K", "0.00"), ("_year", "yr", "0"))
_PERCENT_COLUMNS = {"irr", "prob_cheapest", "prob_infeasible", "prob_positive", "prob_best",
                    "relative_eac_gap"}


def _column_format(name: str, currency: str, sheet: str, columns: list[str]) -> tuple[str, str]:
    """(unit, Excel number format) of a result column, from its name."""
    money = currency or "currency"
    if sheet in ("inputs", "derived"):
        return "", "General"
    if name in _PERCENT_COLUMNS:
        return "-", "0.0%"
    if name in ("year", "best_year", "simple_payback_year", "discounted_payback_year"):
        return "yr", "0"
    if name in ("rank", "candidate_index"):
        return "-", "0"
    per_year = name.startswith("eac") or name == "expected_regret" or (
        name == "swing" and "eac_low" in columns)
    if per_year:
        return f"{money}/yr", "#,##0"
    if _MONEY_COLUMNS.match(name):
        return (f"{money}/m" if name == "cost_per_metre" else money), "#,##0"
    if name.startswith("roughness") or name.endswith("roughness_m"):
        return "m", "0.000000"
    for suffix, unit, fmt in _UNIT_SUFFIXES:
        if name.endswith(suffix):
            return unit, fmt
    if name == "reynolds":
        return "-", "#,##0"
    if name in ("friction_factor", "discount_factor", "temperature_factor", "spearman",
                "flow_multiplier", "benefit_cost_ratio"):
        return "-", "0.0000"
    return "-", "General"


def _workbook(tables: dict[str, pd.DataFrame], currency: str = "") -> bytes:
    """The workbook: a names row and a units row (frozen; no units row on a sheet of text
    and its own unit column, such as the inputs), numbers as numbers with number formats, text
    cells as text, column widths, fixed dates and zip entry times."""
    from openpyxl import Workbook
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE
    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    def clean(v: Any) -> Any:
        if isinstance(v, str):
            return ILLEGAL_CHARACTERS_RE.sub("", v)
        if isinstance(v, (np.bool_, bool)):
            return bool(v)
        if isinstance(v, (np.integer,)):
            return int(v)
        if isinstance(v, (float, np.floating)):
            return None if not math.isfinite(float(v)) else float(v)
        if v is None or v is pd.NA:
            return None
        return v

    book = Workbook()
    book.remove(book.active)
    bold, italic = Font(bold=True), Font(italic=True, color="555555")
    for name, frame in tables.items():
        sheet = book.create_sheet(name[:31])
        columns = [str(c) for c in frame.columns]
        text = set(text_columns(frame))
        formats = [("", "General") if c in text else _column_format(c, currency, name, columns)
                   for c in columns]
        units = any(u for u, _ in formats)    # a units row where the columns have units
        first = 3 if units else 2
        sheet.append([clean(c) for c in columns])
        if units:
            sheet.append([u for u, _ in formats])
        widths = [max(len(c), len(u)) for c, (u, _) in zip(columns, formats, strict=True)]
        for rec in frame.itertuples(index=False, name=None):
            sheet.append([clean(v) for v in rec])
        for j, (_, fmt) in enumerate(formats, start=1):
            for (cell,) in sheet.iter_rows(min_row=first, min_col=j, max_col=j):
                if isinstance(cell.value, str):
                    cell.data_type = "s"  # '=...' would be a formula, '#N/A' an error
                    widths[j - 1] = max(widths[j - 1], min(len(cell.value), 60))
                elif isinstance(cell.value, (int, float)) and not isinstance(cell.value, bool):
                    cell.number_format = fmt
                    widths[j - 1] = max(widths[j - 1], 12)
        for row in range(1, first):
            for cell in sheet[row]:
                if isinstance(cell.value, str):
                    cell.data_type = "s"
                cell.font = bold if row == 1 else italic
                cell.alignment = Alignment(wrap_text=False)
        for j, w in enumerate(widths, start=1):
            sheet.column_dimensions[get_column_letter(j)].width = min(max(w + 2, 8), 62)
        sheet.freeze_panes = f"A{first}"
    props = book.properties
    props.created = props.modified = _FIXED_DATE
    props.creator = f"pipeopt {_version}"
    buf = io.BytesIO()
    book.save(buf)
    return _fixed_zip(buf.getvalue())


def _fixed_zip(data: bytes) -> bytes:
    """The same zip with fixed entry times and document dates (openpyxl uses the clock)."""
    stamp = _FIXED_DATE.strftime("%Y-%m-%dT%H:%M:%SZ").encode()
    out = io.BytesIO()
    with zipfile.ZipFile(io.BytesIO(data)) as src, \
            zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED) as dst:
        for info in src.infolist():
            content = src.read(info.filename)
            if info.filename == "docProps/core.xml":
                content = re.sub(rb"(<dcterms:(?:created|modified)[^>]*>)[^<]*(</dcterms:)",
                                 rb"\g<1>" + stamp + rb"\2", content)
            entry = zipfile.ZipInfo(info.filename, date_time=_ZIP_DATE)
            entry.compress_type = zipfile.ZIP_DEFLATED
            entry.create_system = 0
            entry.external_attr = 0
            dst.writestr(entry, content)
    return out.getvalue()
