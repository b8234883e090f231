"""Figures of network results (presentation layer): a map of the designed network.

:func:`network` draws the pipes as lines whose width follows the inner diameter (existing pipes
dashed), the junctions coloured by their pressure margin over their minimum (a colour-blind-
safe sequential scale; a node below its minimum is drawn as a hollow red ring), the sources as
squares, with a legend of widths and markers and a colour bar, all outside the map. It only
reads the result.
"""

from __future__ import annotations

import matplotlib.pyplot as plt
import numpy as np
from matplotlib.collections import LineCollection
from matplotlib.lines import Line2D

from ..plots import PALETTE

__all__ = ["network", "layout"]


def layout(n_nodes: int, start: np.ndarray, end: np.ndarray) -> np.ndarray:
    """Positions for nodes without coordinates: the spectral layout of the network graph.

    The two eigenvectors of the graph Laplacian after the constant one (Hall 1970), scaled to
    about 1,000 m; a deterministic picture of the connections, not of the ground.

    Parameters
    ----------
    n_nodes : int
    start, end : array_like of int
        The two end nodes of every pipe.

    Returns
    -------
    ndarray, shape (n_nodes, 2)
        x and y of every node [m].

    References
    ----------
    .. [1] K. M. Hall, "An r-dimensional quadratic placement algorithm", Management Science
       17(3):219-229, 1970, doi:10.1287/mnsc.17.3.219.
    """
    lap = np.zeros((n_nodes, n_nodes))
    np.add.at(lap, (start, end), -1.0)
    np.add.at(lap, (end, start), -1.0)
    lap[np.diag_indices(n_nodes)] = -lap.sum(axis=1)
    _, vec = np.linalg.eigh(lap)
    xy = vec[:, 1:3] if n_nodes > 2 else np.column_stack([np.arange(n_nodes), np.zeros(n_nodes)])
    span = np.ptp(xy, axis=0)
    return 1000.0 * (xy - xy.min(axis=0)) / np.where(span > 0, span, 1.0)


def network(result, ax=None, labels: bool = True):
    """Map of a designed network: pipe width by diameter, node colour by pressure margin.

    Parameters
    ----------
    result : NetworkResult
    ax : matplotlib Axes, optional
    labels : bool
        Write the node names beside the nodes.

    Returns
    -------
    matplotlib.axes.Axes
    """
    if ax is None:
        _, ax = plt.subplots(figsize=(8.5, 5.5), layout="constrained")
    nodes = result.nodes
    pipes = result.pipes
    names = list(nodes["node"])
    xy = nodes[["x_m", "y_m"]].to_numpy(dtype=float)
    pos = {n: i for i, n in enumerate(names)}
    start = np.array([pos[n] for n in pipes["from"]])
    end = np.array([pos[n] for n in pipes["to"]])
    drawn_from_layout = bool(np.isnan(xy).any())
    if drawn_from_layout:
        xy = layout(len(names), start, end)
    d = pipes["inner_diameter_m"].to_numpy(dtype=float)
    d_lo, d_hi = float(d.min()), float(d.max())
    width = 1.0 + 7.0 * (d - d_lo) / (d_hi - d_lo) if d_hi > d_lo else np.full(d.size, 3.0)
    new = (pipes["status"] == "new").to_numpy()
    segments = np.stack([xy[start], xy[end]], axis=1)                     # (P, 2, 2)
    lines = LineCollection(segments, linewidths=width, zorder=1, capstyle="round",
                           colors=np.where(new, PALETTE[0], "#777777").tolist(),
                           linestyles=[("-" if n else (0, (3, 2))) for n in new])
    ax.add_collection(lines)
    junction = (nodes["kind"] == "junction").to_numpy()
    margin = nodes["margin_m"].to_numpy(dtype=float)
    ok = junction & nodes["feasible"].to_numpy(dtype=bool)
    cmap = plt.get_cmap("viridis")
    vmax = max(float(np.nanmax(margin[junction])) if junction.any() else 1.0, 1.0)
    sc = ax.scatter(xy[ok, 0], xy[ok, 1], c=np.maximum(margin[ok], 0.0), cmap=cmap, vmin=0.0,
                    vmax=vmax, s=70, edgecolors="#000000", linewidths=0.6, zorder=3)
    low = junction & ~ok
    if low.any():
        ax.scatter(xy[low, 0], xy[low, 1], s=110, facecolors="none", edgecolors=PALETTE[3],
                   linewidths=2.2, zorder=4)
    src = ~junction
    ax.scatter(xy[src, 0], xy[src, 1], marker="s", s=110, color=PALETTE[1],
               edgecolors="#000000", linewidths=0.6, zorder=3)
    if labels:
        for i, n in enumerate(names):
            ax.annotate(n, xy[i], textcoords="offset points", xytext=(6, 6), fontsize=7,
                        zorder=5)
    bar = ax.figure.colorbar(sc, ax=ax, shrink=0.7, pad=0.02)
    bar.set_label("pressure margin over the minimum [m]")
    handles = [Line2D([], [], marker="s", color=PALETTE[1], linestyle="none", markersize=9,
                      markeredgecolor="#000000", label="source"),
               Line2D([], [], marker="o", color=cmap(0.6), linestyle="none", markersize=8,
                      markeredgecolor="#000000", label="node (colour: margin)")]
    if low.any():
        handles.append(Line2D([], [], marker="o", markerfacecolor="none", linestyle="none",
                              markeredgecolor=PALETTE[3], markeredgewidth=2, markersize=9,
                              label="node below its minimum"))
    shown = sorted(set(np.round(d[new] * 1000.0, 1))) if new.any() else []
    for dm in (shown[:1] + shown[-1:] if len(shown) > 1 else shown):
        w = 1.0 + 7.0 * (dm / 1000.0 - d_lo) / (d_hi - d_lo) if d_hi > d_lo else 3.0
        handles.append(Line2D([], [], color=PALETTE[0], linewidth=w,
                              label=f"new pipe, {dm:g} mm bore"))
    if (~new).any():
        handles.append(Line2D([], [], color="#777777", linewidth=2, linestyle=(0, (3, 2)),
                              label="existing pipe"))
    ax.legend(handles=handles, fontsize=7, frameon=False, loc="upper left",
              bbox_to_anchor=(0.0, -0.1), ncol=3)
    ax.autoscale_view()
    ax.set_aspect("equal", adjustable="datalim")
    ax.set_xlabel("x [m]" + (" (schematic: no coordinates given)" if drawn_from_layout else ""))
    ax.set_ylabel("y [m]")
    ax.grid(True, color="#eeeeee", linewidth=0.8)
    ax.spines[["top", "right"]].set_visible(False)
    ax.set_title(f"{result.study.name}: sizes and least pressure margins", loc="left",
                 fontsize=10, fontweight="bold")
    return ax
