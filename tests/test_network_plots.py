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


# ------------------------------------------------------------------------------------------
# the data drawn, against independent computations
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
def test_node_colours_are_the_margins_of_an_independent_solution(result):
    # each junction is coloured by its least margin over the demand cases, H - z - p_min, with
    # H from the independent solution of tests/test_network_report.py (EN 545 bores, IAPWS-95
    # water, Colebrook-White, scipy.optimize.root); the colour bar runs from 0 to the largest
    from tests.test_network_report import demo_network, quillmere_reference

    ref = quillmere_reference(dict(zip(result.pipes["pipe"], result.pipes["size"],
                                       strict=True)))
    nodes = demo_network()["node"]
    margins = [min(case["heads"][n["name"]] - float(n["elevation"].split()[0])
                   - float(n.get("min_pressure_head", "25 m").split()[0])
                   for case in ref.values()) for n in nodes]
    ax = plots.network(result)
    drawn = ax.collections[1]                       # the junctions (the sources come after)
    np.testing.assert_allclose(drawn.get_array(), np.maximum(margins, 0.0), atol=1e-6)
    np.testing.assert_allclose(drawn.get_offsets(),
                               [[float(n["x"].split()[0]), float(n["y"].split()[0])]
                                for n in nodes], rtol=0, atol=0)
    assert drawn.norm.vmin == 0.0 and drawn.norm.vmax == pytest.approx(max(margins), abs=1e-6)
    plt.close(ax.figure)


@pytest.mark.reference
def test_legend_bores_are_the_en545_bores(result):
    # the legend names the smallest and largest new bore: DE - 2 wall - 2 lining of EN 545
    # (from memory; tests/test_network_report.py EN545)
    from tests.test_network_report import en545_bore

    new = result.pipes[result.pipes["status"] == "new"]
    bores = sorted(en545_bore(s) * 1000 for s in new["size"])
    ax = plots.network(result)
    texts = [t.get_text() for t in ax.get_legend().get_texts()]
    shown = [float(t.split(", ")[1].split()[0]) for t in texts if t.startswith("new pipe")]
    assert shown == pytest.approx([bores[0], bores[-1]], abs=1e-9)
    plt.close(ax.figure)


@pytest.mark.reference
def test_ring_layout_is_an_affine_regular_hexagon():
    # the Laplacian of a cycle of n nodes has the double eigenvalue 2 - 2 cos(2 pi / n) with
    # eigenvectors cos(2 pi k / n), sin(2 pi k / n) (the circulant spectrum; Hall 1970 uses the
    # first nontrivial pair): the layout is an affine image of the regular hexagon
    xy = layout(6, np.arange(6), (np.arange(6) + 1) % 6)
    k = np.arange(6)
    basis = np.column_stack([np.ones(6), np.cos(2 * np.pi * k / 6), np.sin(2 * np.pi * k / 6)])
    coef, *_ = np.linalg.lstsq(basis, xy, rcond=None)
    np.testing.assert_allclose(basis @ coef, xy, atol=1e-9)
    # scaled to span 0-1000 m on each axis
    np.testing.assert_allclose(xy.min(axis=0), 0.0, atol=1e-9)
    np.testing.assert_allclose(xy.max(axis=0), 1000.0, rtol=1e-12)


@pytest.mark.reference
def test_schematic_layout_against_scipy_laplacian_eigenvectors():
    # the demo network without coordinates: the layout's axes are the Fiedler vector and the
    # next (Hall 1970), computed here by scipy.sparse.csgraph.laplacian and scipy.linalg.eigh,
    # each up to its sign and scaled to 0-1000 m
    from scipy import linalg
    from scipy.sparse.csgraph import laplacian

    from tests.test_network_report import demo_network

    d = demo_network()
    names = [n["name"] for n in d["node"]] + [s["name"] for s in d["source"]]
    start = np.array([names.index(p["from"]) for p in d["pipe"]])
    end = np.array([names.index(p["to"]) for p in d["pipe"]])
    adj = np.zeros((len(names), len(names)))
    adj[start, end] = adj[end, start] = 1.0
    w, vec = linalg.eigh(laplacian(adj))
    assert w[1] < w[2] - 1e-6 and w[2] < w[3] - 1e-6        # simple eigenvalues: unique axes
    xy = layout(len(names), start, end)
    for axis in (0, 1):
        v = vec[:, axis + 1]
        for s in (v, -v):
            want = 1000.0 * (s - s.min()) / np.ptp(s)
            if np.allclose(xy[:, axis], want, atol=1e-6):
                break
        else:
            raise AssertionError(f"axis {axis} is not the eigenvector of the Laplacian")


@pytest.mark.reference
def test_nodes_circled_below_their_minimum_are_those_of_an_independent_solution():
    # the demo without pumps: the works hold a fixed 75 m head. The nodes circled are those
    # whose head in some case, from the independent solution of tests/test_network_report.py,
    # leaves less than their minimum pressure head; the others are coloured by their margin
    from tests.test_network_report import demo_network, quillmere_reference

    def starve(d):
        for k in ("pumping", "energy", "pump_station", "economics"):
            d.pop(k)
        d["source"] = [{"name": "Quillmere works", "head": "75 m", "x": "0 m", "y": "0 m"}]

    r = small(500, starve=starve)
    assert not r.success
    ref = quillmere_reference(dict(zip(r.pipes["pipe"], r.pipes["size"], strict=True)))
    nodes = demo_network()["node"]
    margin = {}
    for n in nodes:
        z = float(n["elevation"].split()[0])
        p_min = float(n.get("min_pressure_head", "25 m").split()[0])
        # heads with the source at 75 m: the solution's heads shifted by 75 - its source head
        margin[n["name"]] = min(c["heads"][n["name"]] + 75.0 - c["source_head"] - z - p_min
                                for c in ref.values())
    xy = {n["name"]: (float(n["x"].split()[0]), float(n["y"].split()[0])) for n in nodes}
    low = sorted(xy[k] for k, m in margin.items() if m < 0)
    ok = [k for k, m in margin.items() if m >= 0]
    assert low and ok                                   # both kinds are drawn
    ax = plots.network(r)
    colour, circles = ax.collections[1], ax.collections[2]
    assert sorted(map(tuple, circles.get_offsets().tolist())) == low
    np.testing.assert_allclose(colour.get_offsets(), [xy[k] for k in ok])
    np.testing.assert_allclose(colour.get_array(), [margin[k] for k in ok], atol=1e-6)
    plt.close(ax.figure)


@pytest.mark.reference
def test_path_layout_is_the_discrete_cosine_basis():
    # the Laplacian of a path of n nodes has the eigenvectors of the DCT-II, cos(pi j (k + 1/2)
    # / n) for eigenvalue 2 - 2 cos(pi j / n) (G. Strang, "The discrete cosine transform", SIAM
    # Review 41(1), 1999): the layout's x is j = 1 and its y j = 2, up to sign, scaled to 0-1000 m
    n = 7
    xy = layout(n, np.arange(n - 1), np.arange(1, n))
    k = np.arange(n)
    for axis, j in ((0, 1), (1, 2)):
        v = np.cos(np.pi * j * (k + 0.5) / n)
        candidates = [1000.0 * (s - s.min()) / np.ptp(s) for s in (v, -v)]
        assert min(np.abs(xy[:, axis] - c).max() for c in candidates) < 1e-9


@pytest.mark.reference
def test_grid_layout_is_the_product_of_two_paths():
    # a 2 x 3 grid is the Cartesian product of paths P2 and P3: its Laplacian eigenvalues are
    # the sums of theirs (0, 2 and 0, 1, 3) with product eigenvectors (M. Fiedler, "Algebraic
    # connectivity of graphs", Czech. Math. J. 23, 1973): the Fiedler vector (eigenvalue 1)
    # is P3's cos(pi (k + 1/2) / 3) along each row, the next (eigenvalue 2) P2's +-1 across
    node = np.arange(6).reshape(2, 3)                     # row r, column c
    start = np.concatenate([node[:, :-1].ravel(), node[0]])
    end = np.concatenate([node[:, 1:].ravel(), node[1]])
    xy = layout(6, start, end)
    col = np.tile(np.arange(3), 2)
    row = np.repeat(np.arange(2), 3)
    for axis, v in ((0, np.cos(np.pi * (col + 0.5) / 3)), (1, np.where(row == 0, 1.0, -1.0))):
        candidates = [1000.0 * (s - s.min()) / np.ptp(s) for s in (v, -v)]
        assert min(np.abs(xy[:, axis] - c).max() for c in candidates) < 1e-9
