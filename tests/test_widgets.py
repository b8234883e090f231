"""Explorer behaviour as a user meets it: change a control, the table and the figure follow."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np  # noqa: E402

import pipeopt  # noqa: E402
from pipeopt import SizingStudy, UpgradeStudy  # noqa: E402


def _lines(ax):
    return [np.asarray(line.get_ydata(), dtype=float).copy() for line in ax.get_lines()]


def test_sizing_explorer_follows_the_energy_price():
    ex = pipeopt.explore(SizingStudy.demo(), debounce=0)
    assert ex.updates == 1 and ex.best is not None
    before_lines = _lines(ex.ax)
    before_table = ex.table.value
    d_before = ex.result.optimum.set_index("material")["inner_diameter_m"]
    ex.controls["energy_price"].value = 3 * ex.controls["energy_price"].value / 2
    assert ex.updates == 2
    assert ex.table.value != before_table
    after_lines = _lines(ex.ax)
    assert any(a.shape != b.shape or not np.allclose(a, b)
               for a, b in zip(before_lines, after_lines, strict=False))
    d_after = ex.result.optimum.set_index("material")["inner_diameter_m"]
    # a higher energy price never gives a smaller optimum (the law of the model)
    assert (d_after >= d_before - 1e-6).all()
    assert np.isfinite(ex.last_update_seconds)


def test_sizing_explorer_material_filter():
    ex = pipeopt.explore(SizingStudy.demo(), debounce=0)
    ex.controls["materials"].value = ("steel",)
    assert ex.best["material"] == "steel"
    assert "steel" in ex.table.value and "pe100" not in ex.table.value


def test_upgrade_explorer():
    ex = pipeopt.explore(UpgradeStudy.demo(), debounce=0)
    first = ex.result.best["option"]
    ex.controls["capital_factor"].value = 2.0
    assert ex.updates == 2
    npv = ex.result.summary.set_index("option")["npv_vs_keep"]
    assert npv.drop("keep").max() < ex.result.summary.set_index("option")["pv_cost"].max()
    assert first in set(ex.result.summary["option"])  # a best option was shown before
    assert "Options against keeping the line" in ex.table.value


def test_debounced_updates_without_an_event_loop_still_happen():
    ex = pipeopt.explore(SizingStudy.demo(), debounce=0.5)
    ex.controls["discount_rate"].value = 0.07  # no running loop here: updates at once
    assert ex.updates == 2
