"""The network map draws every pipe and node, with units, a legend and a colour bar."""

from __future__ import annotations

import tomllib
from importlib import resources

import matplotlib

matplotlib.use("Agg")

import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402

from pipeopt import plots  # noqa: E402
from pipeopt.network import NetworkStudy  # noqa: E402
from pipeopt.network.plots import layout  # noqa: E402


def small(evaluations=3000, **changes):
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    d = tomllib.loads(text)
    d["optimizer"]["evaluations"] = evaluations
    for fn in changes.values():
        fn(d)
    return NetworkStudy.from_dict(d).run(progress=False)


@pytest.fixture(scope="module")
def result():
    return small()


def _has_unit(label: str) -> bool:
    return "[" in label and "]" in label


def test_map_draws_pipes_nodes_legend_and_colour_bar(result):
    ax = plots.network(result)
    assert _has_unit(ax.get_xlabel()) and _has_unit(ax.get_ylabel())
    # one line per pipe
    pipes = ax.collections[0]
    assert len(pipes.get_segments()) == len(result.pipes)
    legend = ax.get_legend()
    texts = [t.get_text() for t in legend.get_texts()]
    assert "source" in texts and "existing pipe" in texts
    assert any("mm bore" in t for t in texts)
    bars = [a for a in ax.figure.axes if a is not ax]
    assert bars and _has_unit(bars[0].get_ylabel())
    # the legend sits below the map, off the data
    assert legend.get_bbox_to_anchor().y0 < ax.get_window_extent().y0 + 1
    # wider pipes for larger bores: the rising main is the widest line
    widths = pipes.get_linewidths()
    assert int(np.argmax(widths)) == int(np.argmax(result.pipes["inner_diameter_m"]))
    plt.close(ax.figure)


def test_map_on_given_axes_returns_them(result):
    fig, ax = plt.subplots()
    assert plots.network(result, ax=ax, labels=False) is ax
    assert not ax.texts
    plt.close(fig)


def test_map_without_coordinates_uses_a_schematic_layout():
    def drop_xy(d):
        for n in d["node"] + d["source"]:
            n.pop("x", None)
            n.pop("y", None)

    r = small(1500, drop=drop_xy)
    ax = plots.network(r)
    assert "schematic" in ax.get_xlabel()
    plt.close(ax.figure)


def test_nodes_below_their_minimum_are_marked():
    def starve(d):
        for k in ("pumping", "energy", "pump_station", "economics"):
            d.pop(k)
        d["source"] = [{"name": "Quillmere works", "head": "60 m", "x": "0 m", "y": "0 m"}]

    r = small(500, starve=starve)
    assert not r.success
    ax = plots.network(r)
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "node below its minimum" in texts
    plt.close(ax.figure)


def test_layout_spreads_nodes_apart():
    # a ring of six: every node gets its own place (spectral layout, Hall 1970)
    xy = layout(6, np.arange(6), (np.arange(6) + 1) % 6)
    dist = np.linalg.norm(xy[:, None] - xy[None], axis=2)
    assert dist[np.triu_indices(6, 1)].min() > 100.0
