"""Report of a renewal programme (presentation layer): tables, a chart, Markdown and HTML.

:func:`write_programme_report` writes into a folder: every table of a
:class:`~pipeopt.programme.ProgrammeResult` as CSV and as Parquet (``mains``, ``schedule``,
``rejected``, ``growth``, ``npv_by_year``, ``inputs``), the yearly capital chart
(``figures/yearly_capital.png``) and ``report.md`` / ``report.html`` (the caution, the summary,
the inputs with units, the model's assumptions, the schedule, the chart, the ranked list, the
rejected rows, the data sources). Every file is built first, then written through
:func:`pipeopt.outputs.write_result_set` (one result set, written whole).
"""

from __future__ import annotations

import base64
import html
import io
from pathlib import Path
from typing import Any

import matplotlib

matplotlib.use("Agg", force=False)

import matplotlib.pyplot as plt  # noqa: E402
import pandas as pd  # noqa: E402

from . import plots  # noqa: E402
from .outputs import csv_text, markdown_code, markdown_text, printable  # noqa: E402
from .report import STYLE  # noqa: E402
from .results import CAUTION  # noqa: E402

__all__ = ["write_programme_report", "ASSUMPTIONS_PROGRAMME"]

ASSUMPTIONS_PROGRAMME = [
    "Study years t = 1 ... N from the programme's first year; renewing in year a spends the "
    "capital at time a and the new main serves from year a + 1 (as in an upgrade study).",
    "Breaks of each existing main grow exponentially (Shamir & Howard 1979); the rate now comes "
    "from the breaks of the last 5 years under that growth, and the breaks of a year are the "
    "rate integrated over the year. The growth rate is one per material class: the study's, or "
    "fitted from the register's pooled counts of two 5-year windows.",
    "A new main has none of the old main's breaks (or the study's break_factor of them).",
    "Pumped mains: one duty (flow, hours), roughness growing linearly with age, friction by "
    "Colebrook-White and Darcy-Weisbach plus minor losses; power = rho g Q H / eta; energy at "
    "the escalated price plus the demand charge. Mains that are not pumped have no energy term.",
    "The new main's residual value is credited at the horizon, straight line over its life; "
    "its maintenance is a fraction of its capital each year.",
    "All money real, discounted at the real rate to the first year. NPV of renewing in a year "
    "is the PV of keeping the main less the PV of renewing it then.",
    "The programme maximises the total NPV of the renewals with at most one renewal per main "
    "and the capital of each year within its budget (capital undiscounted, in the year spent).",
    "Other risks of failure (consequences, criticality, water quality, coordination with other "
    "works) are not in the model: a planner weighs them beside these figures.",
]


def _parquet(frame: pd.DataFrame) -> bytes:
    buf = io.BytesIO()
    frame.to_parquet(buf, index=False)
    return buf.getvalue()


def _png(ax) -> bytes:
    buf = io.BytesIO()
    ax.figure.savefig(buf, format="png", dpi=110, metadata={"Software": None})
    plt.close(ax.figure)
    return buf.getvalue()


def _md(frame: pd.DataFrame) -> str:
    cols = [markdown_text(c) for c in frame.columns]
    lines = ["| " + " | ".join(cols) + " |", "|" + "---|" * len(cols)]
    for row in frame.itertuples(index=False):
        cells = ["" if pd.isna(v) else f"{v:,.4g}" if isinstance(v, float) else markdown_text(v)
                 for v in row]
        lines.append("| " + " | ".join(cells) + " |")
    return "\n".join(lines)


def _inputs(result: Any) -> pd.DataFrame:
    """Every input of the study with its unit, by study-file section and key."""
    s = result.study
    sc = s.scenario
    cur = s.currency or "currency"
    r = s.replacement
    ec = s.economics
    design = s.flow_growth.design_year
    rows = [("fluid", "name", s.fluid.name, ""), ("fluid", "density", sc.density, "kg/m³"),
            ("fluid", "viscosity", sc.viscosity, "Pa·s"),
            ("pumping", "efficiency", s.pumping.efficiency, "-"),
            ("pumped_mains", "minor_loss_k", s.pumped_mains.minor_loss_k, "-"),
            ("growth", "flow_per_year", s.flow_growth.growth, "1/yr"),
            ("growth", "design_year", "" if design is None else design, "yr"),
            ("energy", "price", s.tariff.price, f"{cur}/kWh"),
            ("energy", "escalation", s.tariff.escalation, "1/yr"),
            ("energy", "demand_charge", s.tariff.demand_charge, f"{cur}/(kW·yr)"),
            ("economics", "discount_rate", ec.discount_rate, "1/yr"),
            ("economics", "horizon", ec.horizon, "yr"),
            ("economics", "pipe_life", ec.pipe_life, "yr"),
            ("economics", "pipe_maintenance", ec.pipe_maintenance, "1/yr"),
            ("breaks", "repair_cost", s.breaks.repair_cost, cur),
            ("breaks", "growth_from", s.growth_from, ""),
            ("breaks", "min_fit_breaks", s.min_fit_breaks, "breaks"),
            ("breaks", "max_fitted_growth", s.max_fitted_growth, "1/yr"),
            ("replacement", "roughness", r.roughness * 1e3, "mm"),
            ("replacement", "aging", r.aging * 1e3, "mm/yr"),
            ("replacement", "break_factor", r.break_factor, "-"),
            ("programme", "first_year", s.first_year, ""),
            ("programme", "years", s.years, "yr")]
    rows += [("programme", f"budget {y}", b, cur) for y, b in zip(s.calendar_years, s.budget,
                                                                  strict=True)]
    for name in s.material_names:
        m = s.materials[name]
        rows += [(f"material {name}", "roughness", m.roughness * 1e3, "mm"),
                 (f"material {name}", "aging", m.aging * 1e3, "mm/yr"),
                 (f"material {name}", "break_growth", m.break_growth, "1/yr")]
    so = s.solver
    rows += [("solver", "method", so.method, ""), ("solver", "max_pairs", so.max_pairs, "-"),
             ("solver", "node_limit", so.node_limit, "-"),
             ("solver", "time_limit", so.time_limit, "s"), ("solver", "mip_gap", so.mip_gap, "-")]
    # numbers to 10 significant figures: a unit conversion's last-digit noise is not an input
    rows = [(sec, key, f"{v:.10g}" if isinstance(v, float) else str(v), unit)
            for sec, key, v, unit in rows]
    return pd.DataFrame(rows, columns=["section", "input", "value", "unit"])


def _provenance(result: Any) -> list[str]:
    s = result.study
    out = []
    if s.illustrative:
        out.append("The study and its cost figures are ILLUSTRATIVE (invented), as the study "
                   "file says.")
    out += [f"Register: {result.source}.",
            f"Fluid properties: {s.fluid.source}.",
            "Break rates: the register's own counts; growth rates as in the growth table.",
            "Costs, tariffs and budgets: inputs of the study file, not pipeopt data."]
    if result.ignored_columns:
        out.append("Register columns not used: " + ", ".join(result.ignored_columns) + ".")
    return out


#: Every file name a programme report can hold (for the output layer's checks).
SET_PATTERNS = ("*.csv", "*.parquet", "figures/*.png", "report.md", "report.html",
                "study.toml")


def write_programme_report(result: Any, out: str | Path, ranked: int = 50,
                           rejected: int = 200) -> list[Path]:
    """Write the tables, the chart and the report of a renewal programme into ``out`` as one
    result set (:func:`pipeopt.outputs.write_result_set`).

    Parameters
    ----------
    result : ProgrammeResult
    out : path
        Output folder (created when missing).
    ranked : int
        Mains of the ranked list shown in the report (the tables hold them all).
    rejected : int
        Rejected rows listed in the report (``rejected.csv`` holds them all).

    Returns
    -------
    list of Path
        The files written.
    """
    from .outputs import write_result_set

    return write_result_set(Path(out), programme_report_files(result, ranked, rejected))


def programme_report_files(result: Any, ranked: int = 50,
                           rejected: int = 200) -> dict[str, bytes | str]:
    """The files of a programme report (tables as CSV and Parquet, chart, Markdown, HTML),
    built in memory."""
    growth = result.growth.reset_index()
    inputs = _inputs(result)
    tables = {"mains": result.mains, "schedule": result.schedule, "rejected": result.rejected,
              "growth": growth, "npv_by_year": result.npv_by_year, "inputs": inputs}
    figure = _png(plots.yearly_capital(result))
    files: dict[str, bytes | str] = {}
    for name, frame in tables.items():
        files[f"{name}.csv"] = csv_text(frame)
        files[f"{name}.parquet"] = _parquet(frame)
    files["figures/yearly_capital.png"] = figure
    top = result.ranked(ranked)
    rej = result.rejected.head(rejected)
    more = len(result.rejected) - len(rej)
    summary = result.text()
    title = f"pipeopt renewal programme: {result.study.name}"
    sched = result.schedule
    md = [f"# {markdown_text(title)}", "", "## Caution", "", CAUTION, "",
          "## Summary", "", *markdown_code(summary), "", "## Programme by year", "",
          _md(sched), "", "![yearly capital](figures/yearly_capital.png)", "",
          f"## Ranked list (first {len(top)} of {int(result.mains['renewal_pays'].sum())} "
          f"mains whose renewal pays)", "", _md(top), "",
          "## Break growth by material class", "", _md(growth), "",
          f"## Rejected register rows ({len(result.rejected)})", "",
          _md(rej) if len(rej) else "None.",
          *(["", f"... and {more} more in rejected.csv."] if more > 0 else []), "",
          "## Inputs", "", _md(inputs), "", "## Model assumptions", "",
          *[f"- {a}" for a in ASSUMPTIONS_PROGRAMME], "", "## Data sources", "",
          *[f"- {markdown_text(p)}" for p in _provenance(result)], ""]
    files["report.md"] = "\n".join(md)
    esc = html.escape

    def table(frame: pd.DataFrame) -> str:
        return frame.to_html(index=False, border=0, na_rep="",
                             float_format=lambda x: f"{x:,.4g}")

    # the print stylesheet of the sizing and upgrade reports: no scroll boxes, pages numbered
    style = STYLE + ('@page { @bottom-right { content: "Page " counter(page) " of " '
                     'counter(pages); font-size: 7.5pt; color: #555; } }'
                     "td, th { text-align: right; } img { max-width: 100%; }")
    png = base64.b64encode(figure).decode()
    files["report.html"] = (
        f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>{esc(title)}</title>"
        f"<style>{style}</style></head><body><h1>{esc(title)}</h1>"
        f"<div class='caution'><b>Caution</b><p>{esc(CAUTION)}</p></div>"
        f"<h2>Summary</h2><pre>{esc(printable(summary))}</pre>"
        f"<h2>Programme by year</h2>{table(sched)}"
        f"<figure><img alt='yearly capital' src='data:image/png;base64,{png}'/>"
        "<figcaption>capital by year against the budget</figcaption></figure>"
        f"<h2>Ranked list</h2><p>First {len(top)} of "
        f"{int(result.mains['renewal_pays'].sum())} mains whose renewal pays, by NPV per unit "
        f"of capital at the best year; money in {esc(result.currency or 'the study currency')}."
        f"</p>{table(top)}"
        f"<h2>Break growth by material class</h2>{table(growth)}"
        f"<h2>Rejected register rows ({len(result.rejected)})</h2>"
        + (table(rej) if len(rej) else "<p>None.</p>")
        + (f"<p>... and {more} more in rejected.csv.</p>" if more > 0 else "")
        + f"<h2>Inputs</h2>{inputs.to_html(index=False, border=0)}"
        "<h2>Model assumptions</h2><ul>"
        + "".join(f"<li>{esc(a)}</li>" for a in ASSUMPTIONS_PROGRAMME)
        + "</ul><h2>Data sources</h2><ul>"
        + "".join(f"<li>{esc(p)}</li>" for p in _provenance(result))
        + "</ul></body></html>")
    return files
