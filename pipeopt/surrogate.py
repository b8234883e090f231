"""Friction factors of many samples at once, by Chebyshev series in the flow multiplier (model).

In a Monte Carlo where the flows vary (a flow factor, demand growth), every sample has its own
Reynolds numbers, so the friction loss of every candidate, year and duty point is solved again
for every sample: 10,000 samples of a study with 400 candidates, 40 years and 3 duty points is
about 5e8 Colebrook solutions. The structure of the problem makes that unnecessary:

- the friction factor depends only on Re and ε/D;
- ε/D depends only on the candidate and the year (the samples share the aging);
- Re = Re0[c, k] m[s, t]: the year-1 Reynolds number of candidate c at duty point k times the
  sample's flow multiplier of that year.

So for each (candidate, year, duty point), f is a smooth function of x = ln m over the range of
the batch's multipliers of that year. :class:`FrictionSeries` interpolates it at J Chebyshev
points of the first kind (the exact friction factor, by the study's method, at each point) and
keeps the coefficients of the series. The error of a series of an analytic function falls
geometrically with the degree; the size of the last two coefficients bounds it (a posteriori),
and a (candidate, year, duty point) whose bound is above the tolerance is marked, so the
caller can compute those exactly.

Everything the money needs is then linear in the series' basis T_j(x[s, t]): sums over years
and duty points of energy and demand become one matrix product per block of samples
(:mod:`pipeopt.lifecycle` does that).

References
----------
.. [1] L. N. Trefethen, Approximation Theory and Approximation Practice, SIAM, 2013,
   chapters 3 and 8 (Chebyshev interpolants, geometric convergence for analytic functions;
   the size of the trailing coefficients as an error estimate), from memory.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

import numpy as np

__all__ = ["DEGREES", "TOLERANCE", "chebyshev_points", "chebyshev_coefficients",
           "chebyshev_basis", "FrictionSeries", "friction_series"]

#: Numbers of Chebyshev points (degree + 1) tried in turn: the first whose every series meets
#: :data:`TOLERANCE` is kept (a narrow range of flows needs fewer terms).
DEGREES = (12, 16, 20, 24, 28)
#: Largest a-posteriori error bound accepted, relative to the friction factor.
TOLERANCE = 1e-14


def chebyshev_points(n: int) -> np.ndarray:
    """The n Chebyshev points of the first kind on [−1, 1], x_j = cos(π (j + ½) / n).

    >>> chebyshev_points(2).round(6).tolist()
    [0.707107, -0.707107]
    """
    return np.cos(np.pi * (np.arange(n) + 0.5) / n)


def chebyshev_coefficients(values: np.ndarray) -> np.ndarray:
    """Coefficients a_k of Σ a_k T_k(x) through ``values`` at :func:`chebyshev_points`.

    The discrete cosine transform a_k = (2/n) Σ_j v_j cos(π k (j + ½)/n), a_0 halved, along
    the last axis.

    >>> x = chebyshev_points(4)
    >>> (chebyshev_coefficients(2 * x**2 - 1).round(12) + 0.0).tolist()   # T_2 itself
    [0.0, 0.0, 1.0, 0.0]
    """
    v = np.asarray(values, dtype=float)
    n = v.shape[-1]
    j = np.arange(n)
    cos = np.cos(np.pi * np.outer(np.arange(n), j + 0.5) / n)       # (k, j)
    a = (2.0 / n) * np.einsum("...j,kj->...k", v, cos)
    a[..., 0] *= 0.5
    return a


def chebyshev_basis(x: Any, n: int) -> np.ndarray:
    """T_0(x) … T_{n−1}(x) along a new last axis, by the three-term recurrence.

    >>> chebyshev_basis(0.5, 4).round(12).tolist()
    [1.0, 0.5, -0.5, -1.0]
    """
    x = np.asarray(x, dtype=float)
    out = np.empty(x.shape + (n,))
    out[..., 0] = 1.0
    if n > 1:
        out[..., 1] = x
    for k in range(2, n):
        out[..., k] = 2.0 * x * out[..., k - 1] - out[..., k - 2]
    return out


@dataclass(frozen=True)
class FrictionSeries:
    """Chebyshev series of the friction factor in ln m, per (candidate, year, duty point).

    Attributes
    ----------
    coefficients : ndarray, shape (C, T, K, J)
        Coefficients of f(x) = Σ_j a_j T_j(x).
    centre, half_width : ndarray, shape (T,)
        x = (ln m − centre) / half_width maps the year's range of ln m onto [−1, 1].
    bound : ndarray, shape (C, T, K)
        |a_{J−1}| + |a_{J−2}| over |f|: the a-posteriori error bound, relative.
    accurate : ndarray of bool, shape (C,)
        Candidates whose every (year, duty point) is within :data:`TOLERANCE`.
    """

    coefficients: np.ndarray
    centre: np.ndarray
    half_width: np.ndarray
    bound: np.ndarray
    accurate: np.ndarray

    def basis(self, multipliers: np.ndarray) -> np.ndarray:
        """T_j(x[s, t]) of multipliers (S, T): an array (S, T, J)."""
        x = (np.log(multipliers) - self.centre) / self.half_width
        return chebyshev_basis(np.clip(x, -1.0, 1.0), self.coefficients.shape[-1])


def friction_series(s: Any, re0: np.ndarray, relative_roughness: np.ndarray,
                    m_low: np.ndarray, m_high: np.ndarray,
                    n: int | None = None) -> FrictionSeries:
    """Fit the friction factor of every (candidate, year, duty point) over a range of m.

    Parameters
    ----------
    s : Scenario
        The friction method (``s.friction_method``; anything smooth in Re).
    re0 : ndarray, shape (C, K)
        Reynolds number at the year-1 flow of each candidate and duty point (m = 1).
    relative_roughness : ndarray, shape (C, T)
        ε/D of each candidate in each year (capped at 0.05).
    m_low, m_high : ndarray, shape (T,)
        The smallest and largest flow multiplier of each year over the batch.
    n : int, optional
        Number of Chebyshev points; by default the first of :data:`DEGREES` whose every series
        meets :data:`TOLERANCE` (or the last).

    Returns
    -------
    FrictionSeries
    """
    if n is None:
        for n_try in DEGREES:
            out = friction_series(s, re0, relative_roughness, m_low, m_high, n_try)
            if np.all(out.accurate):
                return out
        return out
    from . import friction as fr

    lo = np.log(np.asarray(m_low, dtype=float))
    hi = np.log(np.asarray(m_high, dtype=float))
    centre = 0.5 * (lo + hi)
    # a year whose multiplier is the same in every sample: a tiny interval around it
    half = np.maximum(0.5 * (hi - lo), 1e-9)
    x = chebyshev_points(n)
    m = np.exp(centre[:, None] + half[:, None] * x[None, :])                  # (T, J)
    re = re0[:, None, :, None] * m[None, :, None, :]                         # (C, T, K, J)
    rr = np.broadcast_to(relative_roughness[:, :, None, None], re.shape)
    if s.friction_method == "constant":
        f = np.full(re.shape, float(s.constant_friction_factor))
    else:
        f = np.asarray(fr.friction_factor(re, rr, method=s.friction_method,
                                          transition="ignore"))
    a = chebyshev_coefficients(f)
    bound = (np.abs(a[..., -1]) + np.abs(a[..., -2])) / np.abs(a[..., 0])
    # turbulent over the whole range (no laminar or transitional branch inside it)
    turbulent = re0[:, None, :] * np.exp(lo)[None, :, None] >= fr.TURBULENT_LIMIT
    ok = (bound <= TOLERANCE) & turbulent
    if s.friction_method == "constant":
        ok = np.ones_like(ok)
    return FrictionSeries(a, centre, half, bound, np.all(ok, axis=(1, 2)))
