"""Report of a network study (presentation layer): tables, a map, Markdown and HTML.

:func:`write_network_report` writes, into one folder, ``pipes.csv``, ``nodes.csv``,
``cases.csv``, ``cash_flows.csv``, ``figures/network.png``, ``report.md`` and ``report.html``
(self-contained,
the map embedded). Each report states the job, the summary, the model's assumptions, where the
data come from (and which figures are illustrative) and the cautions. Every file is built first
and then written as one result set through :func:`pipeopt.outputs.write_result_set`.
"""

from __future__ import annotations

import base64
import html
import io
from pathlib import Path

import matplotlib

matplotlib.use("Agg", force=False)

import matplotlib.pyplot as plt  # noqa: E402
import pandas as pd  # noqa: E402

from ..outputs import csv_text, markdown_code, markdown_text, printable  # noqa: E402
from ..report import STYLE  # noqa: E402
from ..results import CAUTION  # noqa: E402
from .plots import network  # noqa: E402
from .study import NETWORK_CAUTION  # noqa: E402

__all__ = ["write_network_report", "ASSUMPTIONS_NETWORK"]

ASSUMPTIONS_NETWORK = [
    "Steady flow at each demand case (duty point, and year when demands grow); demands are "
    "taken at the nodes.",
    "Hydraulics by the global gradient method (Todini & Pilati 1988): mass balance at every "
    "node and energy balance along every pipe, each to 1e-9.",
    "Head loss by Darcy-Weisbach with the Colebrook-White factor (64/Re when laminar, bridged "
    "linearly across 2000 <= Re < 4000), or by Hazen-Williams with the stated coefficient; "
    "minor losses from each pipe's sum of K.",
    "A pumped source without a set head delivers, in each case, the least head that keeps every "
    "node at its minimum pressure.",
    "Where pumped: pipe capital, pump station (built in stages, one by default, each sized on "
    "the peak demand until the next stage with standby, renewed at the end of each life), "
    "energy at the escalated price plus the demand charge, maintenance, straight-line residual "
    "values; all real, discounted to year 0, year by year in cash_flows.csv. Gravity-fed: pipe "
    "capital only.",
    "Branched networks are designed exactly (mixed-integer programming over the sizes, gap "
    "stated); looped networks by a seeded local search whose result is the best design found, "
    "not a proven optimum.",
]


def _figure_png(result) -> bytes:
    ax = network(result)
    buf = io.BytesIO()
    ax.figure.savefig(buf, format="png", dpi=110, metadata={"Software": None})
    plt.close(ax.figure)
    return buf.getvalue()


def _provenance(result) -> list[str]:
    study = result.study
    out = []
    if study.illustrative:
        out.append("The network and its cost figures are ILLUSTRATIVE (invented), as the study "
                   "file says.")
    out.append(f"Fluid properties: {study.fluid.source}.")
    sources = sorted({o.source for o in study.options})
    for s in sources:
        out.append(f"Candidate sizes: {s}.")
    out.append("Demands, levels, lengths, costs and tariffs: inputs of the study file, not "
               "pipeopt data.")
    return out


def write_network_report(result, out: str | Path) -> list[Path]:
    """Write the tables, the map and the reports of a network result into the folder ``out``
    as one result set (:func:`pipeopt.outputs.write_result_set`).

    Parameters
    ----------
    result : NetworkResult
    out : path
        Output folder (created when missing).

    Returns
    -------
    list of Path
        The files written.
    """
    from ..outputs import write_result_set

    return write_result_set(Path(out), network_report_files(result))


def network_report_files(result) -> dict[str, str | bytes]:
    """The files of a network report (tables, map, Markdown and HTML), built in memory."""
    title = f"pipeopt network study: {result.study.name}"
    summary = result.text()
    png = _figure_png(result)
    tables = {"pipes": result.pipes, "nodes": result.nodes, "cases": result.cases,
              "cash_flows": result.cash_flows}
    if result.monte_carlo is not None:
        tables["monte_carlo"] = result.monte_carlo.designs
        tables["monte_carlo_correlation"] = result.monte_carlo.correlation
    provenance = _provenance(result)
    cautions = [CAUTION, NETWORK_CAUTION]
    md = "\n".join([
        f"# {markdown_text(title)}", "", "## Cautions", "", *[f"- {c}" for c in cautions], "",
        "## Summary", "", *markdown_code(summary), "", "## Pipes", "", _md_table(result.pipes), "",
        "## Nodes", "", _md_table(result.nodes.drop(columns=["x_m", "y_m"])), "",
        "## Demand cases", "", _md_table(result.cases), "",
        f"## Cash flows (money in {result.currency or 'currency'})", "",
        _md_table(result.cash_flows), "", "## Model assumptions", "",
        *[f"- {a}" for a in ASSUMPTIONS_NETWORK], "", "## Data sources", "",
        *[f"- {markdown_text(p)}" for p in provenance], "", "## Figures", "",
        "![network](figures/network.png)", ""])
    esc = html.escape
    fmt = {"float_format": lambda x: f"{x:,.4g}", "index": False, "border": 0}
    # the print stylesheet of the sizing and upgrade reports: no scroll boxes, pages numbered
    style = STYLE + ('@page { @bottom-right { content: "Page " counter(page) " of " '
                     'counter(pages); font-size: 7.5pt; color: #555; } }'
                     "td, th { text-align: right; } img { max-width: 100%; }")
    page = (f"<!DOCTYPE html><html><head><meta charset='utf-8'><title>{esc(title)}</title>"
            f"<style>{style}</style></head><body><h1>{esc(title)}</h1>"
            "<div class='caution'><b>Cautions</b><ul>"
            + "".join(f"<li>{esc(c)}</li>" for c in cautions) + "</ul></div>"
            f"<h2>Summary</h2><pre>{esc(printable(summary))}</pre>"
            f"<h2>Map</h2><img alt='network map' src='data:image/png;base64,"
            f"{base64.b64encode(png).decode()}'/>"
            f"<h2>Pipes</h2><p>Money in {esc(result.currency or 'currency')}.</p>"
            + result.pipes.to_html(**fmt)
            + "<h2>Nodes</h2>" + result.nodes.drop(columns=["x_m", "y_m"]).to_html(**fmt)
            + "<h2>Demand cases</h2>" + result.cases.to_html(**fmt)
            + f"<h2>Cash flows</h2><p>Money in {esc(result.currency or 'currency')}; the "
              "discounted column sums to the present value.</p>"
            + result.cash_flows.to_html(**fmt)
            + "<h2>Model assumptions</h2><ul>"
            + "".join(f"<li>{esc(a)}</li>" for a in ASSUMPTIONS_NETWORK)
            + "</ul><h2>Data sources</h2><ul>"
            + "".join(f"<li>{esc(p)}</li>" for p in provenance) + "</ul></body></html>")
    files: dict[str, str | bytes] = {f"{k}.csv": csv_text(v) for k, v in tables.items()}
    files["figures/network.png"] = png
    files["report.md"] = md
    files["report.html"] = page
    return files


def _md_table(frame: pd.DataFrame) -> str:
    cols = [markdown_text(c) for c in frame.columns]
    lines = ["| " + " | ".join(cols) + " |", "|" + "---|" * len(cols)]
    for row in frame.itertuples(index=False):
        cells = [f"{v:,.4g}" if isinstance(v, float) else markdown_text(v) for v in row]
        lines.append("| " + " | ".join(cells) + " |")
    return "\n".join(lines)
