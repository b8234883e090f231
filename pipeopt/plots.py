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
from matplotlib.text import Text
from PIL import Image

from . import friction as fr

__all__ = ["PALETTE", "FIXED_MARGINS", "figure_png", "cost_curves", "cost_breakdown",
           "velocity_head", "friction_chart", "tornado_chart", "probability_cheapest",
           "eac_distributions", "cumulative_cash_flow", "network"]

#: Okabe & Ito colour-blind-safe palette.
PALETTE = ["#0072B2", "#E69F00", "#009E73", "#D55E00", "#CC79A7", "#56B4E9", "#F0E442",
           "#000000"]
_GREY = "#9a9a9a"


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
        ax.set_title(title, loc="left", fontsize=11, fontweight="bold")


def cost_curves(result, materials: list[str] | None = None, ax=None):
    """Equivalent annual cost against inner diameter, per material.

    For each material: the total EAC of every candidate (markers; hollow grey where infeasible),
    its capital charge and its energy cost (thin lines), the continuous optimum (dashed
    vertical line) and the best feasible size (filled diamond).

    Parameters
    ----------
    result : SizingResult
    materials : list of str, optional
        Materials to draw (default: all).
    ax : matplotlib Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    c = result.candidates
    mats = materials or list(dict.fromkeys(c["material"]))
    for j, mat in enumerate(mats):
        colour = PALETTE[j % len(PALETTE)]
        rows = c[c["material"] == mat].sort_values("inner_diameter_m")
        d_mm = rows["inner_diameter_m"] * 1e3
        capital = rows["eac_capital"]
        energy = rows["eac_energy"]
        ax.plot(d_mm, capital, color=colour, linewidth=0.9, linestyle=":",
                label=f"{mat}: capital charge")
        ax.plot(d_mm, energy, color=colour, linewidth=0.9, linestyle="--",
                label=f"{mat}: energy")
        feas = rows["feasible"]
        ax.plot(d_mm[feas], rows.loc[feas, "eac"], "o-", color=colour, markersize=4,
                linewidth=1.6, label=f"{mat}: total EAC")
        ax.plot(d_mm[~feas], rows.loc[~feas, "eac"], "o", markerfacecolor="none",
                markeredgecolor=_GREY, markersize=4, linestyle="none")
        opt = result.optimum[result.optimum["material"] == mat] if not result.optimum.empty \
            else pd.DataFrame()
        if not opt.empty:
            ax.axvline(opt["inner_diameter_m"].iloc[0] * 1e3, color=colour, linestyle="--",
                       linewidth=0.8, alpha=0.7)
    if result.best is not None:
        b = result.best
        ax.plot(b["inner_diameter_m"] * 1e3, b["eac"], "D", color="#000000", markersize=8,
                label=f"chosen: {b['material']} {b['size']}")
    ax.plot([], [], "o", markerfacecolor="none", markeredgecolor=_GREY, label="infeasible")
    feasible_eac = c.loc[c["feasible"], "eac"]
    if not feasible_eac.empty:
        ax.set_ylim(0, float(feasible_eac.min()) * 3.0)
    ax.set_xlabel("inner diameter [mm]")
    ax.set_ylabel(f"equivalent annual cost [{_money(result)}/yr]")
    _style(ax, "Life-cycle cost against diameter")
    ax.legend(fontsize=7, ncol=2, frameon=False)
    return ax


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
    ax.plot(x, b["pv_total"], "_", color="#000000", markersize=30, markeredgewidth=2,
            label="present value, net")
    ax.set_xticks(x, labels, fontsize=8)
    ax.set_ylabel(f"present value [{_money(result)}]")
    _style(ax, f"Cost breakdown of the {len(b)} best candidates")
    ax.legend(fontsize=7, frameon=False, ncol=2)
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
            ax.annotate(f"{name} {value:g} m/s", (d_mm.max(), value), fontsize=7,
                        ha="right", va="bottom", color=PALETTE[3])
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
    ax.legend(lines[0] + more[0], lines[1] + more[1], fontsize=7, frameon=False)
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
    ax.legend(fontsize=7, frameon=False, ncol=2)
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
    _style(ax, "Sensitivity (* the best candidate changes within the range)")
    ax.legend(fontsize=7, frameon=False)
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
    _style(ax, "Distribution of the EAC")
    ax.legend(fontsize=7, frameon=False)
    return ax


def cumulative_cash_flow(upgrade_result, ax=None):
    """Cumulative discounted savings of each option against keeping the line, by year.

    The discounted payback year of each option (where the curve crosses zero for good) is
    marked.

    Returns
    -------
    matplotlib.axes.Axes
    """
    ax = _axes(ax)
    cf = upgrade_result.cash_flows
    keep = cf[cf["option"] == "keep"].set_index("year")["discounted"]
    summary = upgrade_result.summary.set_index("option")
    for j, opt in enumerate(o for o in cf["option"].unique() if o != "keep"):
        d = cf[cf["option"] == opt].set_index("year")["discounted"]
        cum = (keep - d).cumsum()
        colour = PALETTE[j % len(PALETTE)]
        ax.plot(cum.index, cum.values, color=colour, linewidth=1.6, label=opt)
        pb = summary.loc[opt, "discounted_payback_year"]
        if pb is not None and not pd.isna(pb):
            ax.plot(pb, float(cum.loc[int(pb)]), "o", color=colour, markersize=7)
            ax.annotate(f"pays back, year {int(pb)}", (pb, float(cum.loc[int(pb)])),
                        textcoords="offset points", xytext=(5, 5), fontsize=7, color=colour)
    ax.axhline(0, color="#000000", linewidth=1)
    ax.set_xlabel("study year [yr]")
    ax.set_ylabel(f"cumulative discounted saving against keep [{_money(upgrade_result)}]")
    _style(ax, "Upgrade options: cumulative discounted cash flow")
    ax.legend(fontsize=7, frameon=False)
    return ax


# --------------------------------------------------------------------------------------------
# PNG bytes at low cost: one Agg draw with fixed margins, text bitmaps kept between draws
# --------------------------------------------------------------------------------------------
#: Margins (fractions of the figure) that leave room for seven-character tick labels, the axis
#: labels and the title; :func:`figure_png` widens them where a figure needs more.
FIXED_MARGINS = {"left": 0.115, "right": 0.975, "bottom": 0.115, "top": 0.925}


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
    if not _fit_margins(canvas, everything):
        canvas.draw()
    image = Image.frombuffer("RGBA", canvas.get_width_height(physical=True),
                             canvas.buffer_rgba(), "raw", "RGBA", 0, 1).convert("RGB")
    buffer = io.BytesIO()
    image.save(buffer, format="png", compress_level=1)
    return buffer.getvalue()


def _fit_margins(canvas: FigureCanvasAgg, everything: bool, pad: float = 4.0) -> bool:
    """Widen the margins where the last draw put something outside the figure; True when
    everything fitted."""
    figure = canvas.figure
    width, height = canvas.get_width_height(physical=True)
    renderer = canvas.get_renderer()
    if everything:  # axes, tick labels, titles, legends; data never leaves its axes
        boxes = [ax.get_tightbbox(renderer, bbox_extra_artists=[]) for ax in figure.axes]
    else:
        boxes = []
        for ax in figure.axes:
            titles = [c for c in ax.get_children() if isinstance(c, Text)]  # the three titles
            boxes += [text.get_window_extent(renderer)
                      for text in (*titles, ax.xaxis.label, ax.yaxis.label)
                      if text.get_visible() and text.get_text()]
    grow = [0.0, 0.0, 0.0, 0.0]  # left, right, bottom, top [px]
    for box in boxes:
        grow = [max(grow[0], pad - box.x0), max(grow[1], box.x1 - width + pad),
                max(grow[2], pad - box.y0), max(grow[3], box.y1 - height + pad)]
    if max(grow) <= 0.0:
        return True
    p = figure.subplotpars
    figure.subplots_adjust(left=p.left + grow[0] / width, right=p.right - grow[1] / width,
                           bottom=p.bottom + grow[2] / height, top=p.top - grow[3] / height)
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
