"""Ground profile and hydraulic grade line along a long line (model layer).

A long line is described by points along its route, i = 0 … P − 1, at chainage x_i with ground
elevation g_i; the pipe follows the ground at a stated cover, its axis at
z_i = g_i − cover − OD/2. Between two points (a *stretch*) the pipe is one pipe (one size and
class), so friction is uniform there and the grade line, the pipe and hence the pressure vary
linearly: the highest and lowest pressure of a stretch are at its ends.

Stations sit at points: the head station at point 0 and boosters at some of the others. A
station holds its discharge at the least head that keeps every point of its own *segment* (up to
the next station or the delivery) at or above its requirement, and delivers the next station at
least its own least suction head:

    G_j = max( max_{s_j <= y < s_{j+1}} (r_y + F_y),  e_{j+1} + F_{s_{j+1}} ),
    H(y) = G_j − F_y  for y in segment j,

with F_y the cumulative head loss from the start to point y (friction, distributed local losses
and fixed equipment), r_y = z_y + p_min,y / (ρ g) the least head at point y and e the least head
at the next station's suction (or the delivery head at the end). The head a station adds is the
difference of two consecutive G: ΔH_0 = G_0 − H_in (the head at the first suction) and
ΔH_j = G_j − G_{j−1}. Where it is not positive the station stands and a valve at it holds its
discharge (no energy). This rule makes each segment's grade line depend on its own segment
only, which is what lets :mod:`pipeopt.stations` place stations by dynamic programming.

Everything works on arrays whose last axis runs over the points (or stretches) and whose leading
axes are samples, candidates, years and duty points.
"""

from __future__ import annotations

import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from .errors import InputError
from .fields import InputSection, quantities, text
from .friction import GRAVITY
from .hydraulics import pipe_hydraulics
from .pumps import standard_atmosphere_pressure
from .units import to_si

__all__ = ["GroundProfile", "pipe_axis", "least_heads", "stretch_losses", "cumulative",
           "segment_heads", "grade_lines", "stretches_below"]


@dataclass(frozen=True)
class GroundProfile(InputSection):
    """Points of the route: chainage and ground elevation (study file ``[[profile]]``).

    Parameters
    ----------
    chainage : sequence of str or Quantity
        Distance along the route of each point, increasing, e.g. ``["0 km", "3.5 km", ...]``.
    elevation : sequence of str or Quantity
        Ground elevation at each point, e.g. ``["84 m", "121 m", ...]``.
    source : str
        Where the points came from (a file name), for reports.

    Examples
    --------
    >>> p = GroundProfile(["0 km", "2 km", "5 km"], ["80 m", "140 m", "120 m"])
    >>> p.length, p.ground.tolist()
    (5000.0, [80.0, 140.0, 120.0])
    >>> GroundProfile(["0 km", "2 km", "1 km"], ["80 m", "140 m", "120 m"])
    Traceback (most recent call last):
    ...
    pipeopt.errors.InputError: profile[2].chainage: chainages must increase; got 1000 m after 2000 m
    """

    SECTION = "profile"
    chainage: tuple = quantities("length", element="chainage")
    elevation: tuple = quantities("head", element="elevation")
    source: str = text(default="")

    def _check(self, path: str) -> None:
        x = np.asarray(self.chainage, dtype=float)
        if x.size != len(self.elevation):
            raise InputError(f"{path}: {x.size} chainages but {len(self.elevation)} elevations")
        if x.size < 2:
            raise InputError(f"{path}: at least two points (chainage, elevation) are needed")
        bad = np.flatnonzero(np.diff(x) <= 0)
        if bad.size:
            i = int(bad[0]) + 1
            where = path.split(".")[0] if "." in path else path
            raise InputError(f"{where}[{i}].chainage: chainages must increase; got "
                             f"{x[i]:g} m after {x[i - 1]:g} m")

    @property
    def x(self) -> np.ndarray:
        """Chainage of every point [m], shape (P,)."""
        return np.asarray(self.chainage, dtype=float)

    @property
    def ground(self) -> np.ndarray:
        """Ground elevation of every point [m], shape (P,)."""
        return np.asarray(self.elevation, dtype=float)

    @property
    def length(self) -> float:
        """Route length [m]: last chainage less the first (pipe length along the chainage)."""
        return float(self.x[-1] - self.x[0])

    def with_points(self, chainages: Any) -> tuple[np.ndarray, np.ndarray]:
        """The points with more chainages added (ground interpolated linearly), sorted, unique.

        Returns
        -------
        chainage, ground : ndarray
            [m], [m].
        """
        extra = np.asarray(chainages, dtype=float).reshape(-1)
        x = np.unique(np.concatenate([self.x, extra]))
        x = x[(x >= self.x[0]) & (x <= self.x[-1])]
        return x, np.interp(x, self.x, self.ground)

    @classmethod
    def read_csv(cls, source: Any, name: str = "profile file") -> GroundProfile:
        """Points from a CSV file (or CSV text): columns ``chainage`` and ``elevation``, each
        with its unit in the column name (``chainage_km``, ``elevation_m``) or in every cell
        (``"12.5 km"``)."""
        import pandas as pd

        try:
            if isinstance(source, (str, Path)) and "\n" not in str(source):
                path = Path(source)
                if not path.is_file():
                    raise InputError(f"{name}: no such file {str(path)!r}")
                raw = pd.read_csv(path, comment="#", dtype=str, keep_default_na=False,
                                  skipinitialspace=True)
            else:
                raw = pd.read_csv(io.StringIO(str(source)), comment="#", dtype=str,
                                  keep_default_na=False, skipinitialspace=True)
        except (pd.errors.ParserError, UnicodeDecodeError, pd.errors.EmptyDataError) as exc:
            raise InputError(f"{name}: not a readable CSV file ({exc})") from None
        raw.columns = [str(c).strip().lower() for c in raw.columns]
        values = {}
        for base, kind in (("chainage", "length"), ("elevation", "head")):
            cols = [c for c in raw.columns if c == base or c.startswith(base + "_")]
            if not cols:
                raise InputError(f"{name}: missing column {base!r} (write e.g. {base}_m, or "
                                 f"put the unit in every cell); columns: {list(raw.columns)}")
            col = cols[0]
            unit = col[len(base) + 1:] if col != base else ""
            out = []
            for i, cell in enumerate(raw[col], start=1):
                where = f"{name}: row {i}, column {col}"
                text_ = str(cell).strip()
                out.append(to_si(f"{text_} {unit}" if unit else text_, kind, where))
            values[base] = tuple(float(v) for v in out)
        return cls.from_si(chainage=values["chainage"], elevation=values["elevation"],
                           source=str(Path(source).name) if isinstance(source, (str, Path))
                           and "\n" not in str(source) else "")


def pipe_axis(ground: Any, cover: float, outside_diameter: Any) -> np.ndarray:
    """Elevation of the pipe axis [m]: ground − cover over the crown − OD / 2.

    Parameters
    ----------
    ground : array_like
        Ground elevation [m].
    cover : float
        Depth of cover over the pipe crown [m].
    outside_diameter : array_like
        Outside diameter of the pipe [m], broadcasting against ``ground``.
    """
    return np.asarray(ground, dtype=float) - cover - 0.5 * np.asarray(outside_diameter,
                                                                        dtype=float)


def least_heads(ground: Any, density: float, vapour_pressure: float | None,
                pressure_min: float | None, vapour_margin: float) -> np.ndarray:
    """The least gauge pressure head allowed at each point [m of liquid].

    p_min / (ρ g), with p_min the stated minimum gauge pressure, or else the vapour pressure plus
    ρ g × margin, less the barometric pressure of the standard atmosphere at the point's
    elevation (:func:`pipeopt.pumps.standard_atmosphere_pressure`), which is negative: a
    sub-atmospheric pressure allowed down to the margin above the vapour pressure.

    Parameters
    ----------
    ground : array_like
        Elevation [m] of the points (for the barometric pressure).
    density : float
        Liquid density [kg/m³].
    vapour_pressure : float or None
        Vapour pressure [Pa] (None: 0).
    pressure_min : float or None
        Least gauge pressure [Pa], or None for the vapour basis.
    vapour_margin : float
        Head above the vapour pressure [m].
    """
    z = np.asarray(ground, dtype=float)
    rho_g = density * GRAVITY
    if pressure_min is not None:
        return np.full(z.shape, pressure_min / rho_g)
    p_abs = (vapour_pressure or 0.0) + rho_g * vapour_margin
    return (p_abs - np.asarray(standard_atmosphere_pressure(z))) / rho_g


def stretch_losses(s: Any, lengths: np.ndarray, diameter: np.ndarray, roughness: np.ndarray,
                   aging: np.ndarray, minor_k: np.ndarray, equipment: np.ndarray,
                   flow_total: np.ndarray, parallel: int, aging_factor: np.ndarray
                   ) -> dict[str, np.ndarray]:
    """Head loss of every stretch at every state.

    h = (f ℓ / D + K) V² / (2 g) on each stretch (:func:`pipeopt.hydraulics.pipe_hydraulics`,
    roughness ε₀ + α f_α (t − 1)) plus the fixed equipment at the stretch's start, c Q² of the
    total flow.

    Parameters
    ----------
    s : Scenario
        Fluid and friction method.
    lengths : ndarray, shape (P − 1,)
        Stretch lengths [m].
    diameter, roughness, aging, minor_k : ndarray, shape (C, P − 1)
        Bore [m], new roughness [m], aging rate [m/yr] and local-loss coefficient [-] of each
        candidate's stretches.
    equipment : ndarray, shape (P − 1,)
        Equipment coefficient c [s²/m⁵] at the start of each stretch.
    flow_total : ndarray, shape (S_h, T, K)
        Total flow of each sample, year and duty point [m³/s].
    parallel : int
        Lines in parallel sharing the flow.
    aging_factor : ndarray, shape (S_h,)

    Returns
    -------
    dict of ndarray
        ``loss`` [m] and ``velocity`` [m/s], ``reynolds``, ``friction_factor``, flags
        ``capped`` and ``transitional``, each (S_h, C, T, K, P − 1).
    """
    years = np.arange(flow_total.shape[1])
    q = flow_total[:, None, :, :, None]                                   # (S_h,1,T,K,1)
    eps = (roughness[None, :, None, :] + aging[None, :, None, :]
           * aging_factor[:, None, None, None] * years[None, None, :, None])  # (S_h,C,T,P-1)
    hyd = pipe_hydraulics(s, diameter[None, :, None, None, :], eps[:, :, :, None, :],
                          q / parallel, length=lengths,
                          minor_loss_k=minor_k[None, :, None, None, :])
    hyd["loss"] = hyd.pop("head_loss") + equipment * q * q
    return hyd


def cumulative(loss: np.ndarray) -> np.ndarray:
    """F_y: cumulative head loss from the start to each point, (..., P) from (..., P − 1)."""
    zero = np.zeros(loss.shape[:-1] + (1,))
    return np.concatenate([zero, np.cumsum(loss, axis=-1)], axis=-1)


def segment_heads(g: np.ndarray, end_head: np.ndarray, starts: np.ndarray, ends: np.ndarray
                  ) -> np.ndarray:
    """G_j of segments [starts_j, ends_j): the discharge head measured from the start.

    Parameters
    ----------
    g : ndarray, shape (..., P)
        r_y + F_y: each point's least head plus the loss from the start [m].
    end_head : ndarray, shape (..., P)
        e_y + F_y: the least head at a station's suction or the delivery, at each point [m].
    starts, ends : ndarray of int, shape (J,) or (C, J)
        First point and end point of each segment (ends > starts).

    Returns
    -------
    ndarray, shape (..., J)
        max(max_{starts ≤ y < ends} g_y, end_head[ends]).
    """
    p = g.shape[-1]
    y = np.arange(p)
    st = np.asarray(starts)
    en = np.asarray(ends)
    inside = (y >= st[..., None]) & (y < en[..., None])                       # (..J, P)
    gin = np.where(inside, g[..., None, :], -np.inf).max(axis=-1)
    gend = np.take_along_axis(end_head, np.broadcast_to(en, g.shape[:-1] + en.shape[-1:]),
                              axis=-1)
    return np.maximum(gin, gend)


def grade_lines(segment_g: np.ndarray, cum: np.ndarray, stations: np.ndarray,
                exists: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """The grade line at every point on the discharge and the arrival side of the stations.

    Parameters
    ----------
    segment_g : ndarray, shape (..., C, J)
        G_j of each candidate's segments.
    cum : ndarray, shape (..., C, P)
        F_y.
    stations : ndarray of int, shape (C, J)
        Point of each station (padded rows: any value, with ``exists`` False).
    exists : ndarray of bool, shape (C, J)

    Returns
    -------
    discharge, arrival : ndarray, shape (..., C, P)
        H(y) = G_seg(y) − F_y, with seg(y) the last station at or before y; on the arrival side
        of a booster, the segment before it.
    """
    c, j = stations.shape
    p = cum.shape[-1]
    y = np.arange(p)
    at_or_before = exists[..., None] & (stations[..., None] <= y)             # (C, J, P)
    seg = at_or_before.sum(axis=-2) - 1                                       # (C, P)
    is_station = (exists[..., None] & (stations[..., None] == y)).any(axis=-2)
    seg_in = np.where(is_station & (seg > 0), seg - 1, seg)
    shape = segment_g.shape[:-1] + (p,)
    dis = np.take_along_axis(segment_g, np.broadcast_to(seg, shape), axis=-1) - cum
    arr = np.take_along_axis(segment_g, np.broadcast_to(seg_in, shape), axis=-1) - cum
    return dis, arr


def stretches_below(chainage: np.ndarray, pressure: np.ndarray, limit: float = 0.0
                    ) -> list[tuple[float, float]]:
    """Chainage ranges [m] where ``pressure`` (at the points, linear between them) is below
    ``limit``: a list of (start, end), each end found by linear interpolation.

    Examples
    --------
    >>> stretches_below(np.array([0.0, 100.0, 200.0, 300.0]), np.array([1.0, -1.0, -1.0, 1.0]))
    [(50.0, 250.0)]
    """
    x = np.asarray(chainage, dtype=float)
    p = np.asarray(pressure, dtype=float) - limit
    out = []
    start = x[0] if p[0] < 0 else None
    for i in range(1, x.size):  # the points of one profile (a report, not a hot loop)
        a, b = p[i - 1], p[i]
        if (a < 0) != (b < 0):
            cross = x[i - 1] + (x[i] - x[i - 1]) * a / (a - b)
            if b < 0:
                start = float(cross)
            else:
                out.append((float(start), float(cross)))
                start = None
    if start is not None:
        out.append((float(start), float(x[-1])))
    return out
