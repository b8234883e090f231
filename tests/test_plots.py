"""Each plotting function runs on the demo results and draws the expected artists with units."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import pytest  # noqa: E402

from pipeopt import SizingStudy, UpgradeStudy, plots  # noqa: E402
from pipeopt.uncertainty import Triangular, Uniform  # noqa: E402


@pytest.fixture(scope="module")
def demo():
    study = SizingStudy.demo()
    result = study.run()
    mc = study.monte_carlo({"energy_price": Triangular(0.1, 0.14, 0.22),
                            "discount_rate": Uniform(0.03, 0.08)}, n=300, seed=1)
    return study, result, mc


def _has_unit(label: str) -> bool:
    return "[" in label and "]" in label


def test_cost_curves(demo):
    _, result, _ = demo
    ax = plots.cost_curves(result)
    assert _has_unit(ax.get_xlabel()) and "EUR/yr" in ax.get_ylabel()
    labels = [line.get_label() for line in ax.get_lines()]
    assert any("total EAC" in x for x in labels) and any("chosen" in x for x in labels)
    assert any("infeasible" in x for x in labels)
    plt.close(ax.figure)


def test_breakdown_velocity_friction(demo):
    _, result, _ = demo
    ax = plots.cost_breakdown(result)
    assert len(ax.patches) >= 5 and "EUR" in ax.get_ylabel()
    plt.close(ax.figure)
    ax = plots.velocity_head(result)
    assert ax.get_ylabel() == "velocity [m/s]" and _has_unit(ax.get_xlabel())
    assert any(line.get_linestyle() == "--" for line in ax.get_lines())  # the limits
    plt.close(ax.figure)
    ax = plots.friction_chart(result)
    assert ax.get_xscale() == "log" and ax.get_yscale() == "log"
    assert _has_unit(ax.get_xlabel()) and _has_unit(ax.get_ylabel())
    assert len(ax.get_lines()) >= 9
    plt.close(ax.figure)


def test_uncertainty_figures(demo):
    study, _, mc = demo
    ax = plots.tornado_chart(study.tornado({"energy_price": (0.1, 0.2),
                                            "discount_rate": (0.03, 0.07)}))
    assert len(ax.patches) == 4 and "EUR/yr" in ax.get_xlabel()
    plt.close(ax.figure)
    ax = plots.probability_cheapest(mc)
    assert ax.get_ylim() == (0, 1) and _has_unit(ax.get_ylabel())
    plt.close(ax.figure)
    ax = plots.eac_distributions(mc)
    assert len(ax.patches) >= 1 and "EUR/yr" in ax.get_xlabel()
    plt.close(ax.figure)


def test_cumulative_cash_flow():
    res = UpgradeStudy.demo().run()
    ax = plots.cumulative_cash_flow(res)
    assert len(ax.get_lines()) >= 3 and "EUR" in ax.get_ylabel()
    assert ax.get_xlabel() == "study year [yr]"
    assert any("pays back" in t.get_text() for t in ax.texts)
    plt.close(ax.figure)


def test_profile_of_a_long_line():
    result = SizingStudy.demo("longline").run()
    ax = plots.profile(result)
    assert _has_unit(ax.get_xlabel()) and _has_unit(ax.get_ylabel())
    labels = [line.get_label() for line in ax.get_lines()]
    for word in ("pipe axis", "highest grade line", "lowest grade line", "PFA", "least head",
                 "stations"):
        assert any(word in x for x in labels), word
    legend = ax.get_legend()
    assert legend is not None and legend.get_bbox_to_anchor().x0 > ax.bbox.x1 - 1  # off data
    plt.close(ax.figure)
    tables, fig = plots.profile_section(result)
    assert set(tables) == {"Grade line along the line", "Stations",
                           "Best design with each number of boosters"}
    assert list(tables["Best design with each number of boosters"]["boosters"]) == [0, 1, 2]
    plt.close(fig)
    with pytest.raises(ValueError, match="long line"):
        plots.profile(SizingStudy.demo().run())
