"""Reports (presentation layer): HTML, Markdown, an Excel workbook, figures and CSV tables.

:func:`write_report` turns a sizing or an upgrade result into files a client or a reviewer can
read: ``report.html`` (self-contained, figures embedded), ``report.md``, ``workbook.xlsx``, the
figures as PNG and every table as CSV. Each report states the job, the inputs with their units,
the model's assumptions, where every data source comes from (and which figures are
illustrative), the verification status, and the cautions.

The files are built in memory (:func:`report_files`) and handed whole to
:func:`pipeopt.outputs.write_result_set`, which swaps the set in at once with a manifest, so
that an interrupted run leaves either the old results or the new, never a mixture. Tables are
formatted with fixed rules and the workbook carries fixed dates, so that the same inputs give
the same files, byte for byte (on one set of library versions).

Text from a study (names, designations, reasons) cannot act in the files: CSV cells that a
spreadsheet would read as a formula (a leading ``=``, ``+``, ``-``, ``@``, tab or carriage
return) get a leading apostrophe, workbook text cells are text (never formulas) without the
control characters the format forbids, the Markdown report escapes HTML, links and code fences,
and the HTML report escapes everything.
"""

from __future__ import annotations

import base64
import datetime
import html
import io
import re
import zipfile
from pathlib import Path
from typing import Any

import matplotlib

matplotlib.use("Agg", force=False)

import matplotlib.pyplot as plt  # noqa: E402
import pandas as pd  # noqa: E402

from . import __version__ as _version  # noqa: E402
from . import plots  # noqa: E402
from .outputs import printable, write_atomic, write_result_set  # noqa: E402

__all__ = ["write_report", "report_files", "write_atomic", "SET_PATTERNS", "CAUTIONS",
           "ASSUMPTIONS_SIZING", "ASSUMPTIONS_UPGRADE"]

#: Every file a report set may hold (besides ``manifest.json``), for the check that no study
#: input is among them before a study is computed.
SET_PATTERNS = ("report.html", "report.md", "workbook.xlsx",
                *(f"{t}.csv" for t in ("candidates", "optimum", "yearly_best", "tornado",
                                       "switching_values", "monte_carlo",
                                       "monte_carlo_correlation", "summary", "cash_flows",
                                       "inputs", "verification")),
                *(f"figures/{f}.png" for f in ("cost_curves", "cost_breakdown", "velocity_head",
                                               "friction_chart", "tornado",
                                               "probability_cheapest", "cumulative_cash_flow")))

CAUTIONS = [
    "This is a study aid, not a design. Its results depend on inputs (roughness, aging, costs, "
    "tariffs, duty) that the user must justify.",
    "The pressure check (highest pump head plus a Joukowsky surge screen against the nominal "
    "rating of the class) does not replace a transient analysis, the ratings of joints and "
    "fittings, temperature derating or structural design.",
    "Pressure, surge and structural questions need a qualified engineer; local codes, "
    "standards and licensed engineering practice govern every design decision.",
]

ASSUMPTIONS_SIZING = [
    "Steady flow at each duty point; each duty flow grows by the same compound rate every year.",
    "Friction by Darcy-Weisbach with the Colebrook-White factor solved to machine precision "
    "(64/Re when laminar; the turbulent value in the transition band 2000 <= Re < 4000); "
    "minor losses from the sum of K referred to the line velocity.",
    "Roughness grows linearly with age at the material's rate when aging is set.",
    "Pump head = static head + friction and minor losses; electrical power = rho g Q H / eta.",
    "Energy cost = energy x price escalated yearly + demand charge x peak demand.",
    "Pipe and pump station bought at year 0; the station again at the end of each of its lives "
    "within the horizon; straight-line residual values credited at the horizon.",
    "All money real (constant prices), discounted at the real rate; EAC = PV x CRF.",
    "Feasibility: velocity_max against the largest flow of any year, velocity_min against the "
    "largest year-1 duty, pressure: highest pump head + surge against the class rating.",
]

ASSUMPTIONS_UPGRADE = [
    "Hydraulics of every option as in a sizing study (Darcy-Weisbach, Colebrook-White).",
    "The existing line keeps aging at its rate; its break rate grows exponentially (Shamir & "
    "Howard 1979) and the breaks of a year are that rate integrated over the year.",
    "A duplicate line shares the flow with the old one at equal head loss in every year.",
    "Capital of an option is spent in its year of action; the new state serves from the next "
    "year; residual values straight-line at the horizon.",
    "NPV against keeping the line is the present value of the savings; the IRR is given only "
    "when unique.",
]


_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?|[-+]?(?:inf|nan)",
                           re.IGNORECASE)


def _csv_cell(value: Any) -> Any:
    """A text cell without terminal controls; one a spreadsheet would take for a formula gets
    a leading apostrophe (a lone sign, the unit column's "-", is no formula)."""
    if not isinstance(value, str):
        return value
    value = printable(value)
    if (len(value) > 1 and value.startswith(_FORMULA_START)
            and not _PLAIN_NUMBER.fullmatch(value)):
        return "'" + value
    return value


def _text_columns(frame: pd.DataFrame) -> list:
    return [c for c in frame.columns if frame[c].dtype == object
            or isinstance(frame[c].dtype, pd.StringDtype)]


def _csv(frame: pd.DataFrame) -> str:
    safe = frame.copy()
    for c in _text_columns(safe):
        safe[c] = safe[c].map(_csv_cell)
    safe.columns = [_csv_cell(str(c)) for c in safe.columns]
    return safe.to_csv(index=False, float_format="%.10g", lineterminator="\n")


_MD_SPECIAL = re.compile(r"([\\`\[\]|])")


def _md(text: Any) -> str:
    """Study text for Markdown: one line, HTML, links, code spans and table bars escaped."""
    text = _MD_SPECIAL.sub(r"\\\1", printable(str(text), one_line=True))
    return html.escape(text, quote=False)


def _md_code(text: str) -> list[str]:
    """A fenced code block that no backticks in ``text`` can close early."""
    text = printable(text)
    longest = max((len(run) for run in re.findall(r"`+", text)), default=0)
    fence = "`" * max(3, longest + 1)
    return [fence, text, fence]


def _png(ax) -> bytes:
    png = plots.figure_png(ax.figure, dpi=110, everything=True)  # one draw, no layout passes
    plt.close(ax.figure)
    return png


def _inputs_sizing(study) -> pd.DataFrame:
    s = study.scenario
    rows = [
        ("fluid", "name", study.fluid.name, ""), ("fluid", "density", s.density, "kg/m³"),
        ("fluid", "viscosity", s.viscosity, "Pa·s"),
        ("line", "length", s.length, "m"), ("line", "static_head", s.static_head, "m"),
        ("line", "minor_loss_k", s.minor_loss_k, "-"), ("line", "parallel", s.parallel, "-"),
        *[(f"duty[{k}]", "flow", q * 3600.0, "m³/h") for k, q in enumerate(s.duty.flows)],
        *[(f"duty[{k}]", "hours", h, "h/yr") for k, h in enumerate(s.duty.hours)],
        ("growth", "flow_per_year", s.duty.growth, "1/yr"),
        ("pumping", "efficiency", s.efficiency, "-"),
        ("energy", "price", s.tariff.price, f"{study.currency}/kWh"),
        ("energy", "escalation", s.tariff.escalation, "1/yr"),
        ("energy", "demand_charge", s.tariff.demand_charge, f"{study.currency}/(kW·yr)"),
        ("economics", "discount_rate", s.discount_rate, "1/yr"),
        ("economics", "horizon", s.horizon, "yr"), ("economics", "pipe_life", s.pipe_life, "yr"),
        ("economics", "pipe_maintenance", s.pipe_maintenance, "1/yr"),
    ]
    if s.pump_station is not None:
        ps = s.pump_station
        rows += [("pump_station", "cost_coefficient", ps.coefficient, f"{study.currency}/kW^b"),
                 ("pump_station", "cost_exponent", ps.exponent, "-"),
                 ("pump_station", "standby_fraction", ps.standby_fraction, "-"),
                 ("pump_station", "life", ps.life, "yr"),
                 ("pump_station", "maintenance", ps.maintenance, "1/yr")]
    for m in study.materials:
        rows.append((f"material {m.name}", "cost", study.pipe_costs[m.name].describe(),
                     f"{study.currency}/m"))
    con = study.constraints
    for name in ("velocity_min", "velocity_max"):
        v = getattr(con, name)
        if v is not None:
            rows.append(("constraints", name, v, "m/s"))
    rows.append(("constraints", "surge_allowance",
                 "Joukowsky" if con.surge_allowance is None else con.surge_allowance, "m"))
    return pd.DataFrame(rows, columns=["section", "input", "value", "unit"]).astype(
        {"value": str})


def _inputs_upgrade(study) -> pd.DataFrame:
    s = study.scenario
    c = study.condition
    ex = study.existing
    rows = [("existing", "length", s.length, "m"), ("existing", "bore", c["bore_m"], "m"),
            ("existing", "roughness", c["roughness_m"], "m"),
            ("existing", "hazen_williams_c", c["hazen_williams_c"], "-"),
            ("existing", "condition source", c["source"], ""),
            ("existing", "aging", ex.aging, "m/yr"),
            ("existing", "breaks_per_year", ex.breaks_per_year, "1/yr"),
            ("existing", "break_growth", ex.break_growth, "1/yr"),
            ("existing", "break_cost", ex.break_cost, study.currency),
            *[(f"duty[{k}]", "flow", q * 3600.0, "m³/h") for k, q in enumerate(s.duty.flows)],
            *[(f"duty[{k}]", "hours", h, "h/yr") for k, h in enumerate(s.duty.hours)],
            ("energy", "price", s.tariff.price, f"{study.currency}/kWh"),
            ("economics", "discount_rate", s.discount_rate, "1/yr"),
            ("economics", "horizon", s.horizon, "yr")]
    for st in study.states:
        rows.append((f"option {st.name}", st.kind, f"{st.description}; capital "
                     f"{st.capital:,.0f} in year {st.year}", study.currency))
    return pd.DataFrame(rows, columns=["section", "input", "value", "unit"]).astype(
        {"value": str})


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


def _verification() -> tuple[str, pd.DataFrame]:
    from .verification import run_checks

    table = run_checks()
    n, ok = len(table), int(table["passed"].sum())
    status = (f"{ok} of {n} published reference checks passed (pipeopt {_version}; run "
              f"'pipeopt verify' for the table).")
    return status, table


def _md_table(frame: pd.DataFrame, floatfmt: str = "{:,.4g}") -> str:
    cols = [_md(c) for c in frame.columns]
    lines = ["| " + " | ".join(cols) + " |", "|" + "---|" * len(cols)]
    for _, r in frame.iterrows():
        cells = [floatfmt.format(v) if isinstance(v, float) else _md(v) for v in r]
        lines.append("| " + " | ".join(cells) + " |")
    return "\n".join(lines)


def write_report(result: Any, out: str | Path, extra: dict[str, Any] | None = None,
                 verification: bool = True) -> list[Path]:
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
        MonteCarloResult}`` when the study ran them.
    verification : bool
        Run the verification checks and state their status (default True).

    Returns
    -------
    list of Path
        The files written, ``manifest.json`` last.
    """
    return write_result_set(out, report_files(result, extra, verification))


def report_files(result: Any, extra: dict[str, Any] | None = None,
                 verification: bool = True) -> dict[str, bytes | str]:
    """The files of the report of a sizing or an upgrade result, built in memory.

    Parameters are those of :func:`write_report`.

    Returns
    -------
    dict of str to bytes or str
        File name (``"report.html"``, ``"figures/cost_curves.png"``, ...) to content, ready
        for :func:`pipeopt.outputs.write_result_set`.
    """
    from .sizing import SizingResult

    extra = extra or {}
    sizing = isinstance(result, SizingResult)
    study = result.study
    figures: dict[str, bytes] = {}
    tables: dict[str, pd.DataFrame] = {}
    if sizing:
        summary_text = result.text()
        inputs = _inputs_sizing(study)
        assumptions = ASSUMPTIONS_SIZING
        tables["candidates"] = result.candidates
        tables["optimum"] = result.optimum
        if result.best is not None:
            tables["yearly_best"] = result.yearly()
            figures["cost_curves"] = _png(plots.cost_curves(result))
            figures["cost_breakdown"] = _png(plots.cost_breakdown(result))
        figures["velocity_head"] = _png(plots.velocity_head(result))
        figures["friction_chart"] = _png(plots.friction_chart(result))
        if "tornado" in extra:
            tables["tornado"] = extra["tornado"].table
            figures["tornado"] = _png(plots.tornado_chart(extra["tornado"]))
        if "switching" in extra:
            tables["switching_values"] = extra["switching"].table
        if "monte_carlo" in extra:
            tables["monte_carlo"] = extra["monte_carlo"].candidates
            tables["monte_carlo_correlation"] = extra["monte_carlo"].correlation
            figures["probability_cheapest"] = _png(plots.probability_cheapest(extra["monte_carlo"]))
    else:
        summary_text = result.text()
        inputs = _inputs_upgrade(study)
        assumptions = ASSUMPTIONS_UPGRADE
        tables["summary"] = result.summary
        tables["cash_flows"] = result.cash_flows
        figures["cumulative_cash_flow"] = _png(plots.cumulative_cash_flow(result))
        if "best_year" in extra:
            tables["best_year"] = pd.DataFrame(
                [{"option": b.option, "best_year": b.year, "pv_cost": b.pv_cost,
                  "npv_vs_keep": b.keep_pv_cost - b.pv_cost} for b in extra["best_year"]])
        if "monte_carlo" in extra:
            tables["monte_carlo"] = extra["monte_carlo"].summary
    tables["inputs"] = inputs
    status, checks = (_verification() if verification
                      else ("verification not run", pd.DataFrame()))
    if verification:
        tables["verification"] = checks
    provenance = _provenance(study)
    title = f"pipeopt {'sizing' if sizing else 'upgrade'} study: {study.name}"

    files: dict[str, bytes | str] = {f"{name}.csv": _csv(t) for name, t in tables.items()}
    files.update({f"figures/{name}.png": png for name, png in figures.items()})
    files["report.md"] = printable(_markdown(title, summary_text, inputs, assumptions,
                                             provenance, status, figures, tables, sizing))
    files["report.html"] = printable(_html(title, summary_text, inputs, assumptions, provenance,
                                           status, figures, tables, sizing,
                                           study.currency or "currency"))
    files["workbook.xlsx"] = _workbook(tables)
    return files


def _markdown(title, summary_text, inputs, assumptions, provenance, status, figures, tables,
              sizing) -> str:
    parts = [f"# {_md(title)}", "", "## Cautions", "", *[f"- {c}" for c in CAUTIONS], "",
             "## Summary", "", *_md_code(summary_text), "", "## Inputs", "",
             _md_table(inputs), "", "## Model assumptions", "",
             *[f"- {a}" for a in assumptions], "", "## Data sources", "",
             *[f"- {_md(p)}" for p in provenance], "", "## Verification", "", _md(status), ""]
    main = "optimum" if sizing else "summary"
    if main in tables and not tables[main].empty:
        parts += [f"## {'Continuous optimum' if sizing else 'Options'}", "",
                  _md_table(tables[main]), ""]
    parts += ["## Figures", "", *[f"![{n}](figures/{n}.png)" for n in figures], ""]
    return "\n".join(parts)


def _html(title, summary_text, inputs, assumptions, provenance, status, figures, tables,
          sizing, currency) -> str:
    esc = html.escape
    fig_html = "".join(
        f"<figure><img alt='{esc(n)}' src='data:image/png;base64,"
        f"{base64.b64encode(png).decode()}'/><figcaption>{esc(n.replace('_', ' '))}"
        f"</figcaption></figure>" for n, png in figures.items())
    main = tables.get("optimum" if sizing else "summary", pd.DataFrame())
    top = ""
    if sizing and "candidates" in tables:
        c = tables["candidates"]
        top = (c[c["feasible"]].nsmallest(10, "eac")
               [["material", "size", "inner_diameter_m", "velocity_m_s", "head_loss_m",
                 "electrical_power_kw", "capex_pipe", "pv_energy", "eac"]]
               .to_html(index=False, border=0, float_format=lambda x: f"{x:,.4g}"))
    style = ("body{font-family:sans-serif;max-width:70em;margin:2em auto;color:#222}"
             "table{border-collapse:collapse;font-size:0.85em}td,th{padding:2px 8px;"
             "border-bottom:1px solid #ddd;text-align:right}pre{background:#f6f6f6;padding:1em;"
             "overflow-x:auto}.caution{border-left:4px solid #D55E00;padding:0.5em 1em;"
             "background:#fff4ec}figure{display:inline-block;margin:0.5em}img{max-width:100%}")
    return (f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>{esc(title)}</title>"
            f"<style>{style}</style></head><body><h1>{esc(title)}</h1>"
            f"<div class='caution'><b>Cautions</b><ul>"
            + "".join(f"<li>{esc(c)}</li>" for c in CAUTIONS) + "</ul></div>"
            f"<h2>Summary</h2><pre>{esc(summary_text)}</pre>"
            + (f"<h2>Best candidates</h2><p>Money in {esc(currency)}; EAC per year.</p>{top}"
               if top else "")
            + (f"<h2>{'Continuous optimum' if sizing else 'Options'}</h2>"
               + main.to_html(index=False, border=0, float_format=lambda x: f"{x:,.4g}")
               if not main.empty else "")
            + f"<h2>Figures</h2>{fig_html}<h2>Inputs</h2>"
            + inputs.to_html(index=False, border=0)
            + "<h2>Model assumptions</h2><ul>" + "".join(f"<li>{esc(a)}</li>"
                                                          for a in assumptions)
            + "</ul><h2>Data sources</h2><ul>" + "".join(f"<li>{esc(p)}</li>"
                                                         for p in provenance)
            + f"</ul><h2>Verification</h2><p>{esc(status)}</p></body></html>")


_FIXED_DATE = datetime.datetime(2000, 1, 1)
_ZIP_DATE = (2000, 1, 1, 0, 0, 0)


def _workbook(tables: dict[str, pd.DataFrame]) -> bytes:
    """The workbook: text cells as text, fixed dates, fixed zip entry times."""
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    buf = io.BytesIO()
    with pd.ExcelWriter(buf, engine="openpyxl") as writer:
        for name, frame in tables.items():
            safe = frame.copy()
            text = set(_text_columns(safe))
            columns = [j + 1 for j, c in enumerate(safe.columns) if c in text]
            for c in text:
                safe[c] = safe[c].map(lambda v: ILLEGAL_CHARACTERS_RE.sub("", v)
                                      if isinstance(v, str) else v)
            safe.columns = [ILLEGAL_CHARACTERS_RE.sub("", str(c)) for c in safe.columns]
            safe.to_excel(writer, sheet_name=name[:31], index=False)
            sheet = writer.sheets[name[:31]]
            for j in sorted(set(columns)):
                for (cell,) in sheet.iter_rows(min_row=2, min_col=j, max_col=j):
                    if isinstance(cell.value, str) and cell.data_type != "s":
                        cell.data_type = "s"  # '=...' would be a formula, '#N/A' an error
            for cell in next(sheet.iter_rows(min_row=1, max_row=1), ()):
                if isinstance(cell.value, str) and cell.data_type != "s":
                    cell.data_type = "s"
        props = writer.book.properties
        props.created = props.modified = _FIXED_DATE
        props.creator = f"pipeopt {_version}"
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
