"""Interactive explorer (presentation layer): ipywidgets controls, a live figure and a table.

``pipeopt.explore(study)`` returns an :class:`Explorer`; display it as the last expression of a
notebook cell. Moving a control re-evaluates the study with the changed inputs (the catalog,
candidates and everything that does not depend on the control are re-used) after a short pause
(``debounce`` seconds, so that dragging a slider does not queue many evaluations), then redraws
the figure and the table. ``explorer.update_now()`` does the same at once (tests, scripts).

The figure reaches the screen as a PNG in an ``ipywidgets.Image`` (sent to the browser as binary
bytes: no base64, no output clearing), drawn once per update by :func:`pipeopt.plots.figure_png`
(fixed margins, no constrained layout, no tight bounding box, text bitmaps kept between draws,
fast PNG compression): an update redraws the lines and markers and rasterises only the texts
that changed.
"""

from __future__ import annotations

import abc
import asyncio
import html
import time
from typing import Any

import ipywidgets as w
import numpy as np
from IPython.display import display
from matplotlib.figure import Figure

from . import plots

__all__ = ["explore", "SizingExplorer", "UpgradeExplorer"]


def explore(study, debounce: float = 0.15):
    """An interactive explorer of a sizing or an upgrade study.

    Parameters
    ----------
    study : SizingStudy or UpgradeStudy
    debounce : float
        Seconds to wait after the last control change before re-evaluating (0: at once).

    Returns
    -------
    SizingExplorer or UpgradeExplorer
        An ipywidgets application (``explorer.widget``); it displays itself in a notebook.
    """
    from .sizing import SizingStudy
    from .upgrade import UpgradeStudy

    if isinstance(study, SizingStudy):
        return SizingExplorer(study, debounce)
    if isinstance(study, UpgradeStudy):
        return UpgradeExplorer(study, debounce)
    raise TypeError(f"explore needs a SizingStudy or an UpgradeStudy; got {type(study).__name__}")


class _Explorer(abc.ABC):
    """Shared machinery: controls, debounced updates, the figure as an image widget."""

    #: Figure size [in] and resolution [dpi] of the picture.
    figsize = (7.5, 4.3)
    dpi = 100
    #: Width of the controls' labels: the longest ("wire-to-water efficiency [-]") whole.
    label_width = "17em"

    #: Keep what can be kept of the figure between updates: its axes and ticks, and in the
    #: sizing explorer its lines, whose points move in place when only they change (False:
    #: clear the axes and draw everything anew, the reference the tests compare with).
    reuse = True

    def _clear(self) -> None:
        """Empty the axes for a new drawing (keeping its ticks when ``reuse``)."""
        if self.reuse:
            plots.clear_data(self.ax)
        else:
            self.ax.clear()

    def __init__(self, debounce: float) -> None:
        self.debounce = float(debounce)
        self._pending: Any = None
        self.last_update_seconds = float("nan")
        self.updates = 0
        self.output = w.Output()
        self.table = w.HTML()
        self.status = w.HTML()
        # A figure of its own (not pyplot's): drawn only when the explorer asks for a picture.
        self.figure = Figure(figsize=self.figsize, dpi=self.dpi)
        self.ax = self.figure.add_subplot()
        self.figure.subplots_adjust(**plots.FIXED_MARGINS)
        self.image = w.Image(format="png")
        # the picture sits in the Output area, as a widget whose bytes each update replaces
        self.output.outputs = ({"output_type": "display_data",
                                "data": self.image._repr_mimebundle_(), "metadata": {}},)

    def _slider(self, description: str, value: float, low: float, high: float, step: float,
                fmt: str = ".3g", integer: bool = False) -> w.Widget:
        cls = w.IntSlider if integer else w.FloatSlider
        kwargs = {} if integer else {"readout_format": fmt}
        s = cls(value=value, min=low, max=high, step=step, description=description,
                continuous_update=True, style={"description_width": self.label_width},
                layout=w.Layout(width="36em"), **kwargs)
        s.observe(self._changed, names="value")
        return s

    def _changed(self, _change: dict) -> None:
        if self.debounce <= 0:
            self.update_now()
            return
        try:
            loop = asyncio.get_running_loop()
        except RuntimeError:  # no event loop (a plain script): update at once
            self.update_now()
            return
        if self._pending is not None:
            self._pending.cancel()
        self._pending = loop.call_later(self.debounce, self.update_now)

    def update_now(self) -> None:
        """Re-evaluate with the controls' values and redraw (measures the time taken)."""
        self._pending = None
        t0 = time.perf_counter()
        self._update()
        self.image.value = plots.figure_png(self.figure)  # the one draw of this update
        self.last_update_seconds = time.perf_counter() - t0
        self.updates += 1

    @abc.abstractmethod
    def _update(self) -> None:
        """Re-evaluate and redraw into ``self.ax`` and ``self.table``."""

    def _money_controls(self, s, currency: str) -> dict[str, w.Widget]:
        """The energy price, escalation and discount-rate sliders both explorers have."""
        return {
            "energy_price": self._slider(f"energy price [{currency or 'money'}/kWh]",
                                         s.tariff.price, 0.2 * s.tariff.price,
                                         3.0 * s.tariff.price, s.tariff.price / 100),
            "escalation": self._slider("escalation [1/yr]", s.tariff.escalation, -0.02, 0.06,
                                       0.0025),
            "discount_rate": self._slider("discount rate [1/yr]", s.discount_rate, 0.0, 0.15,
                                          0.0025),
        }

    def _layout(self) -> w.Widget:
        """Controls on the left (fixed width), figure and table on the right."""
        left = w.VBox(list(self.controls.values()) + [self.status],
                      layout=w.Layout(flex="0 0 auto", min_width="37em"))
        right = w.VBox([self.output, self.table], layout=w.Layout(flex="1 1 auto"))
        return w.HBox([left, right], layout=w.Layout(align_items="flex-start"))

    def _ipython_display_(self) -> None:
        display(self.widget)


def _money(value: float) -> str:
    return f"{value:,.0f}"


def _shown(frame, columns) -> str:
    """A table for people: headers with units, numbers formatted, "-" where there is none."""
    import pandas as pd

    def cell(fmt, value) -> str:
        if value is None or (isinstance(value, float) and value != value) or value is pd.NA:
            return "-"
        return html.escape(fmt(value))

    head = "".join(f"<th>{html.escape(h)}</th>" for _, h, _ in columns)
    # the shown columns only, as arrays (the records of the whole frame cost ten times more)
    shown = [(frame[c].to_numpy(), f) for c, _, f in columns]
    rows = "".join("<tr>" + "".join(f"<td style='white-space:nowrap'>{cell(f, values[i])}</td>"
                                    for values, f in shown)
                   + "</tr>" for i in range(len(frame)))
    return f"<table><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table>"


class SizingExplorer(_Explorer):
    """Explorer of a :class:`~pipeopt.sizing.SizingStudy`: cost curves and the best candidates.

    Attributes
    ----------
    controls : dict of str to widget
        ``energy_price``, ``escalation``, ``discount_rate``, ``horizon``, ``flow_factor``,
        ``hours_factor``, ``efficiency``, ``materials``.
    result : SizingResult
        The result drawn now.
    widget : ipywidgets.Widget
        The application.
    """

    def __init__(self, study, debounce: float = 0.15) -> None:
        super().__init__(debounce)
        self.study = study
        s = study.scenario
        hours_max = max(1.0, 8760.0 / sum(s.duty.hours))
        self.controls = {
            **self._money_controls(s, study.currency),
            "horizon": self._slider("horizon [yr]", s.horizon, 5, 100, 1, integer=True),
            "flow_factor": self._slider("flow scale [-]", 1.0, 0.4, 2.0, 0.01),
            "hours_factor": self._slider("operating hours scale [-]", 1.0, 0.2,
                                         min(2.0, hours_max), 0.01),
            "efficiency": self._slider("wire-to-water efficiency [-]", s.efficiency, 0.3, 1.0,
                                       0.01),
        }
        names = [m.name for m in study.materials]
        mats = w.SelectMultiple(options=names, value=tuple(names), description="materials",
                                rows=min(6, len(names)),
                                style={"description_width": self.label_width})
        mats.observe(self._changed, names="value")
        self.controls["materials"] = mats
        self.result = None
        self.widget = self._layout()
        self.update_now()

    def inputs(self) -> dict[str, float]:
        """The named inputs the controls set (see :data:`pipeopt.variations.INPUTS`)."""
        return {k: float(v.value) for k, v in self.controls.items() if k != "materials"}

    def _update(self) -> None:
        result = self.study.run(inputs=self.inputs())
        self.result = result
        chosen = list(self.controls["materials"].value) or [m.name for m in self.study.materials]
        cand = result.candidates
        # the 8 feasible candidates of the chosen materials with the least EAC, the first of
        # equal EACs first (as nsmallest, on arrays: a tenth of the cost)
        rows = np.flatnonzero(np.isin(cand["material"].to_numpy(), chosen)
                              & cand["feasible"].to_numpy(dtype=bool))
        rows = rows[np.argsort(cand["eac"].to_numpy()[rows], kind="stable")[:8]]
        sel = cand.iloc[rows]
        self.best = sel.iloc[0] if not sel.empty else None
        # the same lines with new points where it can (no new legend, ticks or lines: half
        # the cost of an update), else drawn anew
        if self.reuse:  # drawn anew from the same data when the points alone cannot say it
            plots.update_cost_curves(self.ax, result, materials=chosen, redraw=True)
        else:
            self._clear()
            plots.cost_curves(result, materials=chosen, ax=self.ax)
        money = self.study.currency or "currency"
        shown = _shown(sel, [("material", "material", str), ("size", "size", str),
                             ("inner_diameter_m", "inner diameter [mm]",
                              lambda v: f"{v * 1e3:.1f}"),
                             ("velocity_m_s", "velocity [m/s]", lambda v: f"{v:.2f}"),
                             ("head_loss_m", "head loss [m]", lambda v: f"{v:.2f}"),
                             ("electrical_power_kw", "electrical power [kW]",
                              lambda v: f"{v:.1f}"),
                             ("capex_pipe", f"pipe [{money}]", _money),
                             ("pv_energy", f"energy, PV [{money}]", _money),
                             ("eac", f"EAC [{money}/yr]", _money)])
        self.table.value = "<b>Best feasible candidates</b>" + shown
        if self.best is None:
            self.status.value = "<b>No feasible candidate</b> with these values."
        else:
            self.status.value = (f"Best: <b>{html.escape(self.best['material'])} "
                                 f"{html.escape(self.best['size'])}</b>, EAC "
                                 f"{self.best['eac']:,.0f}/yr")


class UpgradeExplorer(_Explorer):
    """Explorer of an :class:`~pipeopt.upgrade.UpgradeStudy`: NPV of each option and the
    cumulative discounted cash flow.

    Attributes
    ----------
    controls : dict of str to widget
        ``energy_price``, ``escalation``, ``discount_rate``, ``flow_factor``,
        ``break_cost_factor``, ``capital_factor``.
    result : UpgradeResult
    """

    def __init__(self, study, debounce: float = 0.15) -> None:
        super().__init__(debounce)
        self.study = study
        s = study.scenario
        self.controls = {
            **self._money_controls(s, study.currency),
            "flow_factor": self._slider("flow scale [-]", 1.0, 0.5, 1.6, 0.01),
            "break_cost_factor": self._slider("break cost scale [-]", 1.0, 0.0, 3.0, 0.05),
            "capital_factor": self._slider("option capital scale [-]", 1.0, 0.5, 2.0, 0.01),
        }
        self.result = None
        self.widget = self._layout()
        self.update_now()

    def _update(self) -> None:
        inputs = {k: float(v.value) for k, v in self.controls.items()}
        result = self.study.run(inputs=inputs)
        self.result = result
        if self.reuse:  # drawn anew from the same data when the points alone cannot say it
            plots.update_cumulative_cash_flow(self.ax, result, redraw=True)
        else:
            self._clear()
            plots.cumulative_cash_flow(result, ax=self.ax)
        money = self.study.currency or "currency"
        shown = _shown(result.summary, [
            ("option", "option", str), ("pv_cost", f"PV of costs [{money}]", _money),
            ("npv_vs_keep", f"NPV vs keep [{money}]", _money),
            ("irr", "IRR", lambda v: f"{v * 100:.1f} %"),
            ("simple_payback_year", "simple payback [yr]", lambda v: f"{v:.0f}"),
            ("discounted_payback_year", "discounted payback [yr]", lambda v: f"{v:.0f}"),
            ("benefit_cost_ratio", "B/C", lambda v: f"{v:.2f}")])
        self.table.value = "<b>Options against keeping the line</b>" + shown
        self.status.value = (f"Least PV: <b>{html.escape(result.best['option'])}</b>, "
                             f"{result.best['pv_cost']:,.0f}")
