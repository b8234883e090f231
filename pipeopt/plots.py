"""Figures (presentation layer): matplotlib plots of study results. Each returns its Axes.

Every axis carries its unit; money axes carry the study's currency. The palette is the
colour-blind-safe set of Okabe & Ito (2008), "Color universal design"; infeasible candidates are
drawn hollow and grey, the chosen design as a filled diamond, the continuous optimum as a
vertical dashed line.

These functions only read result objects; they compute nothing that is not in them.
"""

from __future__ import annotations

import io
import math
from collections import OrderedDict
from typing import Any

import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
from matplotlib import ticker
from matplotlib.backends.backend_agg import FigureCanvasAgg, RendererAgg, get_hinting_flag
from matplotlib.font_manager import fontManager, get_font
from matplotlib.text import Text
from PIL import Image

from . import friction as fr

__all__ = ["PALETTE", "EAC_PARTS", "FIXED_MARGINS", "figure_png", "cost_curves",
           "update_cost_curves", "update_cumulative_cash_flow", "clear_data",
           "cost_breakdown",
           "velocity_head", "friction_chart", "tornado_chart", "probability_cheapest",
           "eac_distributions", "cumulative_cash_flow", "network", "yearly_capital",
           "profile", "profile_section"]

#: Okabe & Ito colour-blind-safe palette.
PALETTE = ["#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442",
           "#000000"]
_GREY = "#9a9a9a"
#: gid of the titles this module sets (figure_png keeps them whole within the figure).
TITLE_GID = "pipeopt-title"


def _axes(ax: Any, figsize: tuple[float, float] = (7.5, 4.5)):
    if ax is None:
        _, ax = plt.subplots(figsize=figsize, layout="constrained")
    return ax


def _money(result_or_study: Any) -> str:
    study = getattr(result_or_study, "study", result_or_study)
    return study.currency or "currency"


_SUPERSCRIPT = str.maketrans("-0123456789", "⁻⁰¹²³⁴⁵⁶⁷⁸⁹")


class _LogTickLabels(ticker.Formatter):
    """Log-axis tick labels as plain text (10³; 0.2, 5 or 2×10⁻⁵ between decades), drawn
    without building matplotlib's math-text parser (a few tenths of a second the first time).

    Decades are always labelled; within a view of less than about one decade the multiples 2, 3
    and 5 are too (every multiple below half a decade), as matplotlib's own log labels do.
    """

    def __call__(self, x: float, pos: int | None = None) -> str:
        if not (x > 0 and math.isfinite(x)):
            return ""
        exponent = math.floor(math.log10(x) + 1e-9)
        mantissa = round(x / 10.0 ** exponent, 6)
        decade = "10" + str(exponent).translate(_SUPERSCRIPT)
        low, high = sorted(self.axis.get_view_interval()) if self.axis else (x, x)
        span = math.log10(high / low) if low > 0 else math.inf
        if mantissa != 1 and not (span < 0.5 or (span < 1.2 and mantissa in (2, 3, 5))):
            return ""
        if span < 1.2 and -3 <= exponent <= 3:  # a short view: plain numbers read best
            return f"{x:g}"
        return decade if mantissa == 1 else f"{mantissa:g}×{decade}"


def _log_labels(*axes) -> None:
    """:class:`_LogTickLabels` on the major and minor ticks of log-scaled axes."""
    for axis in axes:
        axis.set_major_formatter(_LogTickLabels())
        axis.set_minor_formatter(_LogTickLabels())


def _style(ax, title: str | None = None) -> None:
    ax.grid(True, which="major", color="#dddddd", linewidth=0.8)
    ax.spines[["top", "right"]].set_visible(False)
    if title:
        ax.set_title(title, loc="left", fontsize=11, fontweight="bold").set_gid(TITLE_GID)


def _legend_outside(ax, below: bool = False, **kwargs: Any):
    """The legend off the data: to the right of the axes (or below them, where a twin axis
    holds the right side), never over the plotted points."""
    kwargs.setdefault("fontsize", 7)
    kwargs.setdefault("frameon", False)
    if below:
        return ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.17), borderaxespad=0.0,
                         **kwargs)
    return ax.legend(loc="upper left", bbox_to_anchor=(1.02, 1.0), borderaxespad=0.0,
                     **kwargs)


def _money_ticks(axis) -> None:
    """Money ticks as whole numbers with thousands separators (no 1e6 offset)."""
    axis.set_major_formatter(ticker.FuncFormatter(lambda v, _pos: f"{v:,.0f}"))


#: The parts of an EAC in the candidate table, in the order they are drawn, with their labels.
EAC_PARTS = (("eac_capital", "capital charge"), ("eac_energy", "energy"),
             ("eac_maintenance", "maintenance"), ("eac_renewal", "station renewals"),
             ("eac_carbon", "carbon"), ("eac_residual", "residual value (credit)"))


def _cost_curve_layers(result, materials: list[str] | None, parts: Any) -> dict[str, Any]:
    """What :func:`cost_curves` draws, as data: every line by its ``gid`` with its points,
    label and style, the y limits and whether the zero line is drawn.

    Worked out on the table's columns as arrays (an explorer does it on every update; boolean
    indexing of the candidate frame cost ten times as much)."""
    c = result.candidates
    mat, d_all = c["material"].to_numpy(), c["inner_diameter_m"].to_numpy()
    eac_all, feas_all = c["eac"].to_numpy(), c["feasible"].to_numpy(dtype=bool)
    mats = materials or list(dict.fromkeys(mat))
    if isinstance(parts, str) and parts == "best":
        b = result.best
        parts = None if b is None or b["material"] not in mats else (b["material"], b["class"])
    lines: dict[str, tuple] = {}   # gid -> (x, y, format (None: a line), label, style)
    lowest = 0.0
    if parts is not None:
        rows = np.flatnonzero((mat == parts[0]) & (c["class"].to_numpy() == parts[1]))
        rows = rows[np.argsort(d_all[rows], kind="quicksort")]   # as sort_values
        d_mm = d_all[rows] * 1e3
        lines[f"total:{parts[0]}:{parts[1]}"] = (
            d_mm, eac_all[rows], None, f"{parts[0]} {parts[1]}: total EAC",
            {"color": "#000000", "linewidth": 1.3, "alpha": 0.8})
        styles = ("-", "--", "-.", ":", (0, (5, 1, 1, 1)), (0, (1, 1)))
        for j, (col, name) in enumerate(EAC_PARTS):
            y = c[col].to_numpy()[rows]
            if not np.any(y != 0):
                continue
            lines[f"part:{col}"] = (d_mm, y, None, f"  {name}",
                                    {"color": PALETTE[(j + len(mats)) % len(PALETTE)],
                                     "linewidth": 0.9, "linestyle": styles[j]})
            lowest = min(lowest, float(y.min()))
    optima = {}
    opt_mat = (result.optimum["material"].to_numpy() if not result.optimum.empty
               else np.array([], dtype=object))
    for j, m in enumerate(mats):
        colour = PALETTE[j % len(PALETTE)]
        rows = mat == m
        d_mm = d_all[rows] * 1e3
        eac = eac_all[rows]
        feas = feas_all[rows]
        lines[f"sizes:{m}"] = (d_mm[feas], eac[feas], "o", f"{m}: EAC of each size",
                               {"color": colour, "markersize": 4})
        lines[f"infeasible:{m}"] = (d_mm[~feas], eac[~feas], "o", None,
                                    {"markerfacecolor": "none", "markeredgecolor": _GREY,
                                     "markersize": 4, "linestyle": "none"})
        at = np.flatnonzero(opt_mat == m)
        if at.size:
            optima[f"optimum:{m}"] = (
                result.optimum["inner_diameter_m"].to_numpy()[at[0]] * 1e3, colour)
    chosen = None
    if result.best is not None:
        b = result.best
        chosen = (b["inner_diameter_m"] * 1e3, b["eac"], f"chosen: {b['material']} {b['size']}")
    ylim = None
    if feas_all.any():
        top = float(eac_all[feas_all].min()) * 3.0
        ylim = (min(0.0, 1.15 * lowest) if lowest < 0 else 0.0, top)
    return {"lines": lines, "optima": optima, "chosen": chosen, "ylim": ylim,
            "zero_line": lowest < 0}


def cost_curves(result, materials: list[str] | None = None, parts: Any = "best", ax=None):
    """Equivalent annual cost against inner diameter, per material, and the parts of one class.

    For each material: the total EAC of every candidate (markers; hollow grey where infeasible)
    and its continuous optimum (dashed vertical line); the best feasible size (filled diamond).
    For one material and class (default: the best candidate's), the total EAC as a line and
    its parts as thin lines: capital charge, energy, maintenance, station renewals, carbon and
    the residual value (a credit, below zero), which add up to the total at every diameter.
    Lines carry ``gid`` ``"total:<material>:<class>"`` and ``"part:<column>"``, the markers
    ``"sizes:<material>"`` and ``"infeasible:<material>"``, the optima
    ``"optimum:<material>"`` and the chosen size ``"chosen"``.

    Parameters
    ----------
    result : SizingResult
    materials : list of str, optional
        Materials to draw (default: all).
    parts : "best", (material, class) or None
        Whose EAC is drawn in parts (None: no parts).
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    _draw_cost_curves(ax, result, _cost_curve_layers(result, materials, parts))
    return ax


def _draw_cost_curves(ax, result, lay: dict[str, Any]) -> None:
    """Draw the layers of :func:`_cost_curve_layers` into ``ax`` (:func:`cost_curves`)."""
    for gid, (x, y, fmt, label, style) in lay["lines"].items():
        if gid.startswith("sizes:"):  # each material's optimum after its markers
            ax.plot(x, y, fmt, label=label, gid=gid, **style)
            continue
        if gid.startswith("infeasible:"):
            ax.plot(x, y, fmt, gid=gid, **style)
            mat = gid.split(":", 1)[1]
            if f"optimum:{mat}" in lay["optima"]:
                x_opt, colour = lay["optima"][f"optimum:{mat}"]
                ax.axvline(x_opt, color=colour, linestyle="--", linewidth=0.8, alpha=0.7,
                           gid=f"optimum:{mat}")
            continue
        ax.plot(x, y, label=label, gid=gid, **style)   # the total and its parts: lines
    ax.plot([], [], "o", markerfacecolor="none", markeredgecolor=_GREY, label="infeasible")
    ax.plot([], [], "--", color=_GREY, linewidth=0.8, label="continuous optimum")
    if lay["chosen"] is not None:
        x, y, label = lay["chosen"]
        ax.plot(x, y, "D", color="#000000", markersize=8, label=label, gid="chosen")
    if lay["ylim"] is not None:
        ax.set_ylim(*lay["ylim"])
    if lay["zero_line"]:
        ax.axhline(0, color="#000000", linewidth=0.6, gid="zero")
    ax.set_xlabel("inner diameter [mm]")
    ax.set_ylabel(f"equivalent annual cost [{_money(result)}/yr]")
    _money_ticks(ax.yaxis)
    _style(ax, "Life-cycle cost against diameter")
    _legend_outside(ax)


def clear_data(ax) -> None:
    """Remove what this module's plotting functions drew into ``ax`` (lines, texts,
    collections, patches, images, the legend), keeping the axes with its ticks.

    ``ax.clear()`` also discards the tick objects, and the next draw builds them again (about a
    third of redrawing an explorer's figure); the functions set the title, axis labels,
    formatters and limits again when they draw. Limits go back to autoscaling.
    """
    for artist in [*ax.lines, *ax.texts, *ax.collections, *ax.patches, *ax.images]:
        artist.remove()
    if ax.get_legend() is not None:
        ax.get_legend().remove()
    ax.set_autoscale_on(True)
    ax.relim()


def update_cost_curves(ax, result, materials: list[str] | None = None,
                       redraw: bool = False) -> bool:
    """Move the points of a :func:`cost_curves` figure to another result of the same study, in
    place (no new lines, legend or ticks: what an explorer redraws while a slider moves).

    Returns True when it could. When the figure would differ in more than its points and
    limits (other materials, another class drawn in parts, other parts, another chosen size or
    a zero line appearing or going) it returns False; without ``redraw`` it has then changed
    nothing (draw it anew), with ``redraw`` it has emptied the axes (:func:`clear_data`) and
    drawn the figure anew from the data it had worked out.
    """
    lay = _cost_curve_layers(result, materials, "best")
    return _moved_or_redrawn(ax, _move_cost_curves(ax, lay), redraw,
                             lambda: _draw_cost_curves(ax, result, lay))


def _moved_or_redrawn(ax, moved: bool, redraw: bool, draw: Any) -> bool:
    """The end of an in-place update: ``moved`` as it is, else, with ``redraw``, the axes
    emptied (:func:`clear_data`) and ``draw()`` called with the data already worked out."""
    if not moved and redraw:
        clear_data(ax)
        draw()
    return moved


def _move_cost_curves(ax, lay: dict[str, Any]) -> bool:
    """The in-place part of :func:`update_cost_curves`: False, changing nothing, when the
    figure would differ in more than its points and limits."""
    drawn = {ln.get_gid(): ln for ln in ax.get_lines() if ln.get_gid()}
    want = (set(lay["lines"]) | set(lay["optima"]) | ({"chosen"} if lay["chosen"] else set())
            | ({"zero"} if lay["zero_line"] else set()))
    if set(drawn) != want or (lay["ylim"] is None) != ax.get_autoscaley_on():
        return False
    if lay["chosen"] is not None and drawn["chosen"].get_label() != lay["chosen"][2]:
        # another size chosen: its legend entry says so
        legend = ax.get_legend()
        old = [t for t in (legend.get_texts() if legend else [])
               if t.get_text() == drawn["chosen"].get_label()]
        if len(old) != 1:
            return False
        old[0].set_text(lay["chosen"][2])
        drawn["chosen"].set_label(lay["chosen"][2])
    for gid, (x, y, *_rest) in lay["lines"].items():
        drawn[gid].set_data(x, y)
    for gid, (x_opt, _colour) in lay["optima"].items():
        drawn[gid].set_xdata([x_opt, x_opt])
    if lay["chosen"] is not None:
        drawn["chosen"].set_data([lay["chosen"][0]], [lay["chosen"][1]])
    ax.relim()
    ax.autoscale_view(scaley=lay["ylim"] is None)
    if lay["ylim"] is not None:
        ax.set_ylim(*lay["ylim"])
    return True


def cost_breakdown(result, n: int = 5, ax=None):
    """Stacked present-value breakdown of the ``n`` best feasible candidates.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    b = result.breakdown(n)
    labels = (b["material"] + "\n" + b["size"]).tolist()
    parts = [("capex_pipe", "pipe"), ("pv_pump_station", "pump station"),
             ("pv_energy", "energy"), ("pv_maintenance", "maintenance"),
             ("pv_replacement", "station renewal"), ("pv_carbon", "carbon")]
    bottom = np.zeros(len(b))
    x = np.arange(len(b))
    for j, (col, name) in enumerate(parts):
        vals = b[col].to_numpy()
        if not np.any(vals):
            continue
        ax.bar(x, vals, bottom=bottom, color=PALETTE[j], label=name, width=0.6)
        bottom += vals
    resid = b["pv_residual"].to_numpy()
    if np.any(resid):
        ax.bar(x, -resid, color="#ffffff", edgecolor=_GREY, hatch="//", width=0.6,
               label="residual value (credit)")
    ax.plot(x, b["pv_total"], "_", color="#000000", markersize=30, markeredgewidth=2)
    ax.plot([], [], "-", color="#000000", linewidth=2, label="present value, net")
    ax.set_xticks(x, labels, fontsize=8)
    ax.set_ylabel(f"present value [{_money(result)}]")
    _money_ticks(ax.yaxis)
    _style(ax, f"Cost breakdown of the {len(b)} best candidates")
    _legend_outside(ax)
    return ax


def velocity_head(result, ax=None):
    """Velocity (largest duty, year 1) and head loss against inner diameter, with the limits.

    Returns
    -------
    matplotlib.axes.Axes
        The velocity axes; the head-loss axes is its twin.
    """
    ax = _axes(ax)
    c = result.candidates.sort_values("inner_diameter_m")
    d_mm = c["inner_diameter_m"] * 1e3
    ax.plot(d_mm, c["velocity_m_s"], "o", color=PALETTE[0], markersize=3,
            label="velocity, largest duty, year 1")
    ax.plot(d_mm, c["velocity_peak_m_s"], ".", color=PALETTE[5], markersize=3,
            label="velocity, largest flow of any year")
    con = result.study.constraints
    for value, name in ((con.velocity_min, "velocity_min"), (con.velocity_max, "velocity_max")):
        if value is not None:
            ax.axhline(value, color=PALETTE[3], linestyle="--", linewidth=1)
            # at the small-diameter end, where the velocities are high above either limit
            ax.annotate(f"{name} {value:g} m/s", (d_mm.min(), value), fontsize=7,
                        ha="left", va="bottom", color=PALETTE[3])
    ax.set_xlabel("inner diameter [mm]")
    ax.set_ylabel("velocity [m/s]")
    ax.set_yscale("log")
    twin = ax.twinx()
    twin.plot(d_mm, c["head_loss_m"], "s", color=PALETTE[1], markersize=3,
              label="head loss, largest duty, year 1")
    twin.set_yscale("log")
    _log_labels(ax.yaxis, twin.yaxis)
    twin.set_ylabel("head loss [m]")
    _style(ax, "Velocity and head loss against diameter")
    lines = ax.get_legend_handles_labels()
    more = twin.get_legend_handles_labels()
    _legend_outside(ax, below=True, handles=lines[0] + more[0], labels=lines[1] + more[1],
                    ncol=3)
    return ax


def friction_chart(result=None, relative_roughness=(0.0, 1e-5, 1e-4, 1e-3, 5e-3, 0.02, 0.05),
                   ax=None):
    """Darcy friction factor against Reynolds number (Colebrook–White, exact), log–log.

    With a :class:`~pipeopt.sizing.SizingResult`, its candidates' design points are marked.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax, (7.5, 5.0))
    re_lam = np.geomspace(600, fr.LAMINAR_LIMIT, 30)
    ax.plot(re_lam, 64 / re_lam, color="#000000", linewidth=1.4, label="laminar, 64/Re")
    ax.axvspan(fr.LAMINAR_LIMIT, fr.TURBULENT_LIMIT, color="#eeeeee", label="transition band")
    re = np.geomspace(fr.LAMINAR_LIMIT, 1e8, 300)
    for j, rr in enumerate(relative_roughness):
        f = fr.friction_factor(re, rr, transition="ignore")
        ax.plot(re, f, color=PALETTE[j % len(PALETTE)], linewidth=1.1,
                label=f"ε/D = {rr:g}")
    if result is not None:
        c = result.candidates
        ax.plot(c["reynolds"], c["friction_factor"], "x", color="#000000", markersize=4,
                label="candidates (largest duty, year 1)")
        if result.best is not None:
            ax.plot(result.best["reynolds"], result.best["friction_factor"], "D",
                    color=PALETTE[3], markersize=8, label="chosen")
    ax.set_xscale("log")
    ax.set_yscale("log")
    _log_labels(ax.xaxis, ax.yaxis)
    ax.set_xlabel("Reynolds number Re [-]")
    ax.set_ylabel("Darcy friction factor f [-]")
    _style(ax, "Friction factor (Colebrook–White, solved exactly)")
    _legend_outside(ax)
    return ax


def tornado_chart(tornado_result, ax=None):
    """Bars of the chosen design's EAC (or present value) at each input's low and high value.

    Returns
    -------
    matplotlib.axes.Axes
    """
    t = tornado_result.table.iloc[::-1]
    ax = _axes(ax, (7.5, 0.35 * len(t) + 1.5))
    base = tornado_result.base_value
    m = tornado_result.metric
    y = np.arange(len(t))
    ax.barh(y, t[f"{m}_low"] - base, left=base, color=PALETTE[0], label="at the low value")
    ax.barh(y, t[f"{m}_high"] - base, left=base, color=PALETTE[1], label="at the high value")
    labels = [f"{r['input']} ({r['low']:.3g} – {r['high']:.3g})"
              + ("  *" if r["changes"] else "") for _, r in t.iterrows()]
    ax.set_yticks(y, labels, fontsize=8)
    ax.axvline(base, color="#000000", linewidth=1)
    money = tornado_result.currency or "currency"
    ax.set_xlabel(f"EAC of {tornado_result.chosen} [{money}/yr]" if m == "eac" else
                  f"present value of costs of {tornado_result.chosen} [{money}]")
    _money_ticks(ax.xaxis)
    ax.plot([], [], " ", label="* the best choice changes\n  within the range")
    _style(ax, "Sensitivity, one input at a time")
    _legend_outside(ax)
    return ax


def probability_cheapest(mc_result, n: int = 8, ax=None):
    """Bars of the probability that each candidate is the cheapest feasible one.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    top = mc_result.candidates.head(n)
    labels = (top["material"] + "\n" + top["size"]).tolist()
    ax.bar(np.arange(len(top)), top["prob_cheapest"], color=PALETTE[2], width=0.6)
    ax.set_xticks(np.arange(len(top)), labels, fontsize=8)
    ax.set_ylim(0, 1)
    ax.set_ylabel("probability of being cheapest [-]")
    _style(ax, f"Monte Carlo, {mc_result.n:,} samples")
    return ax


def eac_distributions(mc_result, n: int = 5, ax=None):
    """Histograms (as outlines) of the EAC of the ``n`` most likely cheapest candidates.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    top = mc_result.candidates.head(n)
    for j, (_, r) in enumerate(top.iterrows()):
        ax.hist(mc_result.eac[:, int(r["candidate_index"])], bins=50, histtype="step",
                linewidth=1.4, color=PALETTE[j % len(PALETTE)],
                label=f"{r['material']} {r['size']}")
    ax.set_xlabel(f"equivalent annual cost [{mc_result.currency or 'currency'}/yr]")
    ax.set_ylabel("samples [-]")
    _money_ticks(ax.xaxis)
    _style(ax, "Distribution of the EAC")
    _legend_outside(ax)
    return ax


def _cash_flow_layers(upgrade_result) -> dict[str, Any]:
    """What :func:`cumulative_cash_flow` draws, as data: each option's curve and its
    discounted payback point (None without one), by option (worked out on arrays: an
    explorer does it on every update)."""
    cf = upgrade_result.cash_flows
    option, year = cf["option"].to_numpy(), cf["year"].to_numpy()
    discounted = cf["discounted"].to_numpy(dtype=float)
    keep = option == "keep"
    keep_years, keep_flows = year[keep], discounted[keep]
    summary = upgrade_result.summary
    payback_of = dict(zip(summary["option"].to_numpy(),
                          summary["discounted_payback_year"].to_numpy(), strict=True))
    curves = {}
    for opt in dict.fromkeys(option[~keep]):
        rows = option == opt
        if not np.array_equal(year[rows], keep_years):
            raise ValueError(f"cash flows of option {opt!r} and of 'keep' cover other years")
        cum = np.cumsum(keep_flows - discounted[rows])
        pb = payback_of[opt]
        payback = (None if pb is None or pd.isna(pb) else
                   (pb, float(cum[np.flatnonzero(keep_years == int(pb))[0]]),
                    f"discounted payback, year {int(pb)}"))
        curves[opt] = (keep_years, cum, payback)
    return curves


def cumulative_cash_flow(upgrade_result, ax=None):
    """Cumulative discounted savings of each option against keeping the line, by year.

    The discounted payback year of each option (where the curve crosses zero for good) is
    marked. The curves carry ``gid`` ``"saving:<option>"``, the payback points
    ``"payback:<option>"`` and their notes ``"payback-note:<option>"``.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    _draw_cash_flow(ax, upgrade_result, _cash_flow_layers(upgrade_result))
    return ax


def _draw_cash_flow(ax, upgrade_result, curves: dict[str, Any]) -> None:
    """Draw the layers of :func:`_cash_flow_layers` into ``ax`` (:func:`cumulative_cash_flow`)."""
    for j, (opt, (x, y, payback)) in enumerate(curves.items()):
        colour = PALETTE[j % len(PALETTE)]
        ax.plot(x, y, color=colour, linewidth=1.6, label=opt, gid=f"saving:{opt}")
        if payback is not None:
            pb, at, note = payback
            ax.plot(pb, at, "o", color=colour, markersize=7, gid=f"payback:{opt}")
            ax.annotate(note, (pb, at), textcoords="offset points", xytext=(5, -11),
                        fontsize=7, color=colour).set_gid(f"payback-note:{opt}")
    ax.plot([], [], "o", color=_GREY, markersize=6, label="discounted payback year")
    ax.axhline(0, color="#000000", linewidth=1)
    ax.set_xlabel("study year [yr]")
    ax.set_ylabel(f"cumulative discounted saving against keep [{_money(upgrade_result)}]")
    _money_ticks(ax.yaxis)
    _style(ax, "Upgrade options: cumulative discounted cash flow")
    _legend_outside(ax)


def update_cumulative_cash_flow(ax, upgrade_result, redraw: bool = False) -> bool:
    """Move the curves, payback points and notes of a :func:`cumulative_cash_flow` figure to
    another result of the same study, in place; True when it could.

    When the figure would differ in more (other options, a payback appearing or going) it
    returns False; without ``redraw`` it has then changed nothing (draw it anew), with
    ``redraw`` it has emptied the axes (:func:`clear_data`) and drawn the figure anew from the
    data it had worked out.
    """
    curves = _cash_flow_layers(upgrade_result)
    return _moved_or_redrawn(ax, _move_cash_flow(ax, curves), redraw,
                             lambda: _draw_cash_flow(ax, upgrade_result, curves))


def _move_cash_flow(ax, curves: dict[str, Any]) -> bool:
    """The in-place part of :func:`update_cumulative_cash_flow`."""
    lines = {ln.get_gid(): ln for ln in ax.get_lines() if ln.get_gid()}
    notes = {t.get_gid(): t for t in ax.texts if t.get_gid()}
    want = {f"saving:{o}" for o in curves} | {f"payback:{o}" for o, c in curves.items() if c[2]}
    if set(lines) != want or set(notes) != {f"payback-note:{o}" for o, c in curves.items()
                                            if c[2]}:
        return False
    for opt, (x, y, payback) in curves.items():
        lines[f"saving:{opt}"].set_data(x, y)
        if payback is not None:
            pb, at, note = payback
            lines[f"payback:{opt}"].set_data([pb], [at])
            notes[f"payback-note:{opt}"].xy = (pb, at)
            notes[f"payback-note:{opt}"].set_text(note)
    ax.relim()
    ax.autoscale_view()
    return True


# --------------------------------------------------------------------------------------------
# PNG bytes at low cost: one Agg draw with fixed margins, text bitmaps kept between draws
# --------------------------------------------------------------------------------------------
#: Margins (fractions of the figure) that leave room for seven-character tick labels, the axis
#: labels and the title; :func:`figure_png` widens them where a figure needs more.
FIXED_MARGINS = {"left": 0.115, "right": 0.975, "bottom": 0.115, "top": 0.925}


def _font_height_metrics(prop, dpi: float) -> tuple:
    """Ascent, descent and line gap [px] of the font of ``prop`` at ``dpi`` from its 'OS/2'
    (else 'hhea') table, scaled as matplotlib's text layout scales them (``Text._get_layout``
    of matplotlib 3.11); (None, None, None) without either table or on any failure."""
    try:
        font = get_font(fontManager._find_fonts_by_props(prop))
        for table_name, gap_key, ascent_key, descent_key in (
                ("OS/2", "sTypoLineGap", "sTypoAscender", "sTypoDescender"),
                ("hhea", "lineGap", "ascent", "descent")):
            table = font.get_sfnt_table(table_name)
            if table is None:
                continue
            scale = 1 / font.get_sfnt_table("head")["unitsPerEm"] * prop.get_size_in_points() \
                * dpi / 72
            return table[ascent_key] * scale, -table[descent_key] * scale, table[gap_key] * scale
    except Exception:  # noqa: BLE001 - another matplotlib or font: matplotlib measures itself
        pass
    return None, None, None


class _TextCachingRenderer(RendererAgg):
    """The Agg renderer, keeping the bitmap of every text it has rasterised.

    matplotlib rasterises each text glyph by glyph on every draw (about a tenth of a millisecond
    per character here), which is most of the cost of redrawing a figure whose lines change but
    whose labels mostly do not. This renderer rasterises a (text, font, size, dpi) once, keeps
    the bitmap (least recently used first out) and places it as Agg's own text path does; the
    first failure of that path (a matplotlib version without these methods) switches it off
    and every text goes through matplotlib's own code.
    """

    _bitmaps: OrderedDict = OrderedDict()   # shared by every figure of the process
    _max_bitmaps = 1024  # a few kB each
    _enabled = True
    _font_heights: dict = {}   # (font properties, size, dpi) -> (ascent, descent, line gap)

    def _get_font_height_metrics(self, prop):
        """A font's ascent, descent and line gap at this resolution [px], read from its
        tables as matplotlib's text layout reads them, and kept.

        matplotlib (3.11) asks a renderer for these when it has this method and otherwise
        finds the font and reads two of its tables for every text of every draw (about a
        fifth of an explorer's draw: tick labels and a legend are measured several times).
        The figures drawn here have this renderer's resolution. (None, None, None) makes
        matplotlib measure the text itself, as without this method.
        """
        key = (hash(prop), prop.get_size_in_points(), self.dpi)
        hit = self._font_heights.get(key)
        if hit is None:
            hit = _font_height_metrics(prop, self.dpi)
            self._font_heights[key] = hit
        return hit

    def draw_text(self, gc, x, y, s, prop, angle, ismath=False, mtext=None):
        if ismath or not _TextCachingRenderer._enabled:
            return super().draw_text(gc, x, y, s, prop, angle, ismath, mtext)
        flags = get_hinting_flag()
        key = (s, hash(prop), self.dpi, bool(gc.get_antialiased()), flags)
        try:
            hit = self._bitmaps.get(key)
            if hit is None:
                font = self._prepare_font(prop)
                font.set_text(s, 0, flags=flags)
                font.draw_glyphs_to_bitmap(antialiased=gc.get_antialiased())
                xo, yo = font.get_bitmap_offset()
                hit = (np.array(font.get_image()), font.get_descent() / 64.0, xo / 64.0,
                       yo / 64.0)
                self._bitmaps[key] = hit
                if len(self._bitmaps) > self._max_bitmaps:
                    self._bitmaps.popitem(last=False)
            else:
                self._bitmaps.move_to_end(key)
            bitmap, descent, xo, yo = hit
            px = round(x + xo + descent * math.sin(math.radians(angle)))
            py = round(y + yo + descent * math.cos(math.radians(angle)))
            self._renderer.draw_text_image(bitmap, px, py + 1, angle, gc)
        except (AttributeError, TypeError, ValueError):  # another matplotlib: its own path
            _TextCachingRenderer._enabled = False
            super().draw_text(gc, x, y, s, prop, angle, ismath, mtext)


class _PngCanvas(FigureCanvasAgg):
    """An Agg canvas drawing with :class:`_TextCachingRenderer`."""

    _renderer_key: Any = None

    def get_renderer(self):
        size = (*self.get_width_height(physical=True), self.figure.dpi)
        if self._renderer_key != size:
            self.renderer = _TextCachingRenderer(*size)
            self._renderer_key = size
        return self.renderer


def figure_png(figure, dpi: float | None = None, everything: bool = False) -> bytes:
    """PNG bytes of a figure, drawn once by Agg with fixed margins and fast compression.

    A figure with a layout engine (the ``layout="constrained"`` of this module's figures) is
    switched to :data:`FIXED_MARGINS`: constrained layout measures every text before each draw
    and ``savefig`` draws such a figure twice. After the draw, whatever fell outside the figure
    widens the margins and the figure is drawn once more (rare; the margins then stay).

    Parameters
    ----------
    figure : matplotlib.figure.Figure
    dpi : float, optional
        Resolution [dots per inch]; default the figure's own.
    everything : bool
        Check the extent of the axes' decorations (tick labels, titles, axis labels, legends:
        for one-off figures such as a report's) rather than only the titles and axis labels
        (cheaper: for figures redrawn while a user waits, whose tick labels stay within the
        fixed margins).

    Returns
    -------
    bytes
        The PNG file (RGB, zlib level 1, no metadata: the same figure gives the same bytes).
    """
    if dpi is not None and dpi != figure.dpi:
        figure.set_dpi(dpi)
    if figure.get_layout_engine() is not None:
        figure.set_layout_engine(None)
        margins = dict(FIXED_MARGINS)
        if any(ax.yaxis.get_label_position() == "right" for ax in figure.axes):
            margins["right"] = 0.9  # a twin axis: room for its labels, saves a second draw
        figure.subplots_adjust(**margins)
    canvas = figure.canvas if isinstance(figure.canvas, _PngCanvas) else _PngCanvas(figure)
    canvas.draw()
    for _ in range(3):  # margins, then a title moved or wrapped: a few draws at most
        fitted = _fit_margins(canvas, everything)
        fitted = _fit_titles(canvas) and fitted
        if fitted:
            break
        canvas.draw()
    image = Image.frombuffer("RGBA", canvas.get_width_height(physical=True),
                             canvas.buffer_rgba(), "raw", "RGBA", 0, 1).convert("RGB")
    buffer = io.BytesIO()
    image.save(buffer, format="png", compress_level=1)
    return buffer.getvalue()


def _fit_titles(canvas: FigureCanvasAgg, pad: float = 4.0) -> bool:
    """Keep this module's titles whole: a title running past the right edge of the figure
    moves left (down to the figure's left edge), then wraps; True when every title fitted."""
    import textwrap

    figure = canvas.figure
    width = canvas.get_width_height(physical=True)[0]
    renderer = canvas.get_renderer()
    fitted = True
    for ax in figure.axes:
        for text in ax.get_children():
            if not (isinstance(text, Text) and text.get_gid() == TITLE_GID
                    and text.get_visible() and text.get_text()):
                continue
            box = text.get_window_extent(renderer)
            over = box.x1 - (width - pad)
            if over <= 0 and box.x0 >= pad:
                continue
            fitted = False
            axes_box = ax.get_window_extent(renderer)
            shift = min(max(over, 0.0), box.x0 - pad) if over > 0 else box.x0 - pad
            x, y = text.get_position()
            text.set_position((x - shift / max(axes_box.width, 1.0), y))
            if over - shift > 0:  # still too long: wrap it at the width there is
                chars = max(12, int(len(text.get_text()) * (width - 2 * pad) / box.width) - 2)
                text.set_text(textwrap.fill(" ".join(text.get_text().split()), chars))
    return fitted


def _fit_margins(canvas: FigureCanvasAgg, everything: bool, pad: float = 4.0) -> bool:
    """Widen the margins where the last draw put something outside the figure; True when
    everything fitted."""
    figure = canvas.figure
    width, height = canvas.get_width_height(physical=True)
    renderer = canvas.get_renderer()
    if everything:  # axes, tick labels, titles, legends; data never leaves its axes
        # titles count upwards only (for_layout_only: a long title moves left or wraps in
        # _fit_titles; narrowing the axes would not help it)
        boxes = [ax.get_tightbbox(renderer, bbox_extra_artists=[], for_layout_only=True)
                 for ax in figure.axes]
        boxes += [ax.get_legend().get_window_extent(renderer) for ax in figure.axes
                  if ax.get_legend() is not None]  # legends sit outside the axes
    else:
        boxes = []
        for ax in figure.axes:
            titles = [c for c in ax.get_children() if isinstance(c, Text)]  # the three titles
            boxes += [text.get_window_extent(renderer)
                      for text in (*titles, ax.xaxis.label, ax.yaxis.label)
                      if text.get_visible() and text.get_text()]
            if ax.get_legend() is not None:  # outside the axes: the margins make room once
                boxes.append(ax.get_legend().get_window_extent(renderer))
    grow = [0.0, 0.0, 0.0, 0.0]  # left, right, bottom, top [px]
    for box in boxes:
        grow = [max(grow[0], pad - box.x0), max(grow[1], box.x1 - width + pad),
                max(grow[2], pad - box.y0), max(grow[3], box.y1 - height + pad)]
    if max(grow) <= 0.5:  # within half a pixel: fitted (a margin widened to exactly the pad
        return True       # can come back 1e-15 px short, and would be widened forever)
    p = figure.subplotpars
    left, right = p.left + grow[0] / width, p.right - grow[1] / width
    bottom, top = p.bottom + grow[2] / height, p.top - grow[3] / height
    if right - left < 0.2 or top - bottom < 0.2:  # too little figure left: keep what fits best
        return True
    figure.subplots_adjust(left=left, right=right, bottom=bottom, top=top)
    return False


def network(result, ax=None, labels: bool = True):
    """Map of a designed network: pipe width by diameter, node colour by pressure margin.

    The figure of a :class:`~pipeopt.network.NetworkResult`; see
    :func:`pipeopt.network.plots.network`.

    Returns
    -------
    matplotlib.axes.Axes
    """
    from .network.plots import network as _network

    return _network(result, ax=ax, labels=labels)


# --------------------------------------------------------------------------------------------
# renewal programme
# --------------------------------------------------------------------------------------------
def yearly_capital(programme_result, ax=None):
    """Capital of a renewal programme by year, against the budget.

    Bars: the capital of the mains renewed in each year (the number of mains inside each bar);
    steps: the year's budget. The legend sits beside the axes, off the data.

    Parameters
    ----------
    programme_result : ProgrammeResult

    Returns
    -------
    matplotlib.axes.Axes
    """
    from matplotlib.ticker import FuncFormatter

    ax = _axes(ax)
    sc = programme_result.schedule
    years = sc["calendar_year"].to_numpy()
    money = _money(programme_result)
    bars = ax.bar(years, sc["capital"].to_numpy(), color=PALETTE[0], width=0.7,
                  label="capital of the mains renewed")
    ax.step(np.concatenate([years - 0.5, [years[-1] + 0.5]]),
            np.concatenate([sc["budget"].to_numpy(), [sc["budget"].to_numpy()[-1]]]),
            where="post", color="#000000", linewidth=1.4, linestyle="--", label="budget")
    for rect, n in zip(bars, sc["mains"].to_numpy(), strict=True):
        if rect.get_height() > 0:
            ax.annotate(f"{int(n)}", (rect.get_x() + rect.get_width() / 2, rect.get_height()),
                        textcoords="offset points", xytext=(0, -10), ha="center", fontsize=7,
                        color="#ffffff")
    ax.set_xticks(years)
    ax.tick_params(axis="x", labelrotation=45, labelsize=8)
    ax.yaxis.set_major_formatter(FuncFormatter(lambda v, _: f"{v:,.0f}"))
    ax.set_xlabel("year of renewal [calendar year]")
    ax.set_ylabel(f"capital [{money}]")
    ax.set_ylim(0, max(float(sc["budget"].max()), float(sc["capital"].max()), 1.0) * 1.1)
    _style(ax, "Renewal programme: capital by year (mains renewed inside each bar)")
    ax.legend(fontsize=7, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return ax


# --------------------------------------------------------------------------------------------
# long lines
# --------------------------------------------------------------------------------------------
def profile(result, ax=None, index: int | None = None):
    """The long line along its route: ground, pipe, grade lines, rating and stations.

    Draws, against chainage, the ground and the pipe axis, the highest and the lowest grade
    line over every duty point and year (the band between them shaded), the head at which each
    stretch's class reaches its PFA (the grade line must stay below it), the least head allowed
    (the grade line must stay above it) and the stations.

    Parameters
    ----------
    result : SizingResult
        Of a long-line study (a ground profile, sections or boosters).
    ax : matplotlib Axes, optional
    index : int, optional
        Row of the design to draw (default: the best).

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax, (9.0, 4.8))
    p = result.profile if index is None else result.profile_of(index)
    km = p["chainage_m"] / 1000.0
    ax.fill_between(km, p["ground_m"], p["ground_m"].min() - 10.0, color="#d9c7a7",
                    alpha=0.5, linewidth=0, label="ground")
    ax.plot(km, p["pipe_m"], color="#6b4e2e", linewidth=1.2, label="pipe axis")
    ax.fill_between(km, p["head_min_m"], p["head_max_m"], color=PALETTE[5], alpha=0.25,
                    linewidth=0)
    ax.plot(km, p["head_max_m"], color=PALETTE[3], linewidth=1.6,
            label="highest grade line (every duty, every year)")
    ax.plot(km, p["head_min_m"], color=PALETTE[0], linewidth=1.6,
            label="lowest grade line")
    # each stretch's PFA as a head above its pipe: from one point to the next, broken between
    above = (p["pfa_head_m"] - p["pipe_m"]).to_numpy()[:-1]
    xs = np.column_stack([km[:-1], km[1:], np.full(above.size, np.nan)]).ravel()
    ys = np.column_stack([p["pipe_m"].to_numpy()[:-1] + above,
                          p["pipe_m"].to_numpy()[1:] + above,
                          np.full(above.size, np.nan)]).ravel()
    ax.plot(xs, ys, color="#000000", linestyle="--", linewidth=0.9,
            label="PFA of the class laid (as head)")
    ax.plot(km, p["least_head_m"], color=PALETTE[2], linestyle=":", linewidth=1.2,
            label="least head allowed")
    st = p[(p["station"] != "") & ~p["station"].str.endswith("suction")]
    ax.plot(st["chainage_m"] / 1000.0, st["head_max_m"], "^", color="#000000", markersize=8,
            linestyle="none", label="stations (discharge)")
    for _, r in st.iterrows():
        ax.annotate(r["station"], (r["chainage_m"] / 1000.0, r["head_max_m"]),
                    textcoords="offset points", xytext=(4, 6), fontsize=7)
    changes = p["size"].ne(p["size"].shift())
    for _, r in p[changes].iterrows():
        ax.annotate(r["size"], (r["chainage_m"] / 1000.0, r["pfa_head_m"]),
                    textcoords="offset points", xytext=(2, 3), fontsize=6)
    ax.set_ylim(bottom=float(p["ground_m"].min()) - 10.0)
    ax.set_xlabel("chainage [km]")
    ax.set_ylabel("elevation and head [m]")
    best = result.best
    _style(ax, "Long line: grade lines, pipe and rating" + (
        f" ({best['size']})" if best is not None and index is None else ""))
    ax.legend(fontsize=7, frameon=False, loc="upper left", bbox_to_anchor=(1.01, 1.0))
    return ax


def profile_section(result):
    """A report section for a long line: its tables and its figure.

    Returns
    -------
    tables : dict of str to pandas.DataFrame
        ``"Grade line along the line"`` (:attr:`SizingResult.profile`), ``"Stations"``
        (:attr:`SizingResult.stations`) and ``"Best design with each number of boosters"``.
    figure : matplotlib.figure.Figure
        :func:`profile` of the best design.
    """
    c = result.candidates
    feas = c[c["feasible"]]
    cols = ["boosters", "size", "class", "classes_along", "highest_pressure_bar",
            "capex_pipe", "capex_pump_station", "pv_energy", "eac"]
    by_n = (feas.loc[feas.groupby("boosters")["eac"].idxmin(), cols] if not feas.empty
            else feas[cols])
    ax = profile(result)
    return ({"Grade line along the line": result.profile, "Stations": result.stations,
             "Best design with each number of boosters": by_n.reset_index(drop=True)},
            ax.figure)
