"""Renewal of existing mains (model layer): break growth and the optimal replacement time.

Breaks of an ageing main grow exponentially (Shamir & Howard 1979): the break rate is
N(t) = N(t0) e^{A (t − t0)}. pipeopt counts study years t = 1 … N from now (t0 = 0); the expected
breaks of year t are the rate integrated over that year, N0 e^{A (t − 1)} (e^A − 1) / A (N0 when
A = 0), so that yearly counts and the continuous model of Shamir & Howard agree.

A register of mains gives counts of breaks over past windows of years rather than a rate:
:func:`break_rate_from_count` turns the count of the last ``w`` years into the rate now under
the same exponential law, and :func:`break_growth_from_counts` fits the growth rate A from the
counts of two successive windows.

References
----------
.. [1] U. Shamir, C. D. D. Howard, "An analytic approach to scheduling pipe replacement",
   J. AWWA 71(5), 248–258, 1979 (from memory, re-derived).
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError

__all__ = ["break_counts", "shamir_howard_replacement_time", "break_rate_from_count",
           "break_growth_from_counts"]


def break_counts(breaks_now: float, growth: float | np.ndarray, years: int) -> np.ndarray:
    """Expected breaks in each study year t = 1 … N: ∫ N0 e^{A s} ds over year t.

    That is N0 e^{A (t − 1)} (e^A − 1) / A, and N0 every year when A = 0.

    Parameters
    ----------
    breaks_now : float
        Break rate now, N0 [breaks per year], >= 0.
    growth : float or ndarray, shape (S,)
        Exponential growth rate A [1/yr] (0.05 means about 5 % more breaks every year); an
        array gives one row per value.
    years : int
        Number of study years N.

    Returns
    -------
    ndarray, shape (N,) or (S, N)
        Breaks per year [1/yr].

    Examples
    --------
    >>> break_counts(2.0, 0.1, 3).round(4).tolist()
    [2.1034, 2.3246, 2.5691]
    """
    if not (math.isfinite(breaks_now) and breaks_now >= 0):
        raise InputError(f"breaks_per_year must be >= 0; got {breaks_now!r}")
    a = np.asarray(growth, dtype=float)
    if not (np.all(np.isfinite(a)) and np.all(np.abs(a) < 1)):
        raise InputError(f"break_growth must be a rate per year between -1 and 1; got {growth!r}")
    # special case: no growth, the integral over a year is the rate itself
    safe = np.where(a == 0, 1.0, a)
    per_year = np.where(a == 0, 1.0, np.expm1(safe) / safe)
    return breaks_now * (per_year[..., None] * np.exp(a[..., None] * np.arange(years)))


def shamir_howard_replacement_time(breaks_now: float, growth: float, break_cost: float,
                                   replacement_cost: float, discount_rate: float) -> float:
    """Optimal time to replace a main whose breaks grow exponentially (Shamir & Howard 1979).

    Minimizing the present value of repairs until T plus the replacement at T,
    ∫₀ᵀ C_b N0 e^{A t} e^{−r t} dt + C_r e^{−r T} with r = ln(1 + R), gives

    .. math:: T^* = \\frac{1}{A} \\ln\\frac{\\ln(1 + R)\\, C_r}{C_b N_0}

    (0 when the logarithm is negative: replace now). It ignores the breaks of the new pipe.

    Parameters
    ----------
    breaks_now : float
        Breaks per year now, N0 [1/yr], > 0.
    growth : float
        Break growth rate A [1/yr], > 0.
    break_cost : float
        Cost of one repair C_b [currency].
    replacement_cost : float
        Cost of replacing the main C_r [currency].
    discount_rate : float
        Discount rate R [1/yr].

    Returns
    -------
    float
        Years from now until the optimal replacement [yr].

    Examples
    --------
    >>> round(shamir_howard_replacement_time(2.0, 0.08, 10000.0, 1.5e6, 0.05), 2)
    16.22
    """
    if not (breaks_now > 0 and growth > 0 and break_cost > 0 and replacement_cost > 0
            and discount_rate > 0):
        raise InputError("Shamir-Howard needs positive breaks, growth, costs and discount rate")
    x = math.log1p(discount_rate) * replacement_cost / (break_cost * breaks_now)
    return max(0.0, math.log(x) / growth)


def break_rate_from_count(count: Any, window: float, growth: Any) -> Any:
    """Break rate now from the breaks counted over the last ``window`` years.

    Under N(s) = N0 e^{A s} (s in years, 0 = now), the breaks of the last w years are
    ∫_{−w}^{0} N0 e^{A s} ds = N0 (1 − e^{−A w}) / A, so

    .. math:: N_0 = \\frac{n A}{1 - e^{-A w}}, \\qquad N_0 = n / w \\text{ when } A = 0

    Parameters
    ----------
    count : float or array_like
        Breaks counted over the last ``window`` years, n [-], >= 0.
    window : float
        Length of the counting window, w [yr], > 0.
    growth : float or array_like
        Break growth rate A [1/yr].

    Returns
    -------
    float, ndarray or Series
        Break rate now, N0 [1/yr].

    References
    ----------
    .. [1] U. Shamir, C. D. D. Howard, "An analytic approach to scheduling pipe replacement",
       J. AWWA 71(5), 248–258, 1979 (the exponential break law; the window integral is ours).

    Examples
    --------
    >>> round(break_rate_from_count(10.0, 5.0, 0.0), 6)
    2.0
    >>> round(break_rate_from_count(10.0, 5.0, 0.1), 6)
    2.541494
    """
    (n, a), tpl = as_float_arrays(count, growth)
    if not (math.isfinite(window) and window > 0):
        raise InputError(f"window must be a positive number of years; got {window!r}")
    if not np.all(np.isfinite(n)) or np.any(n < 0):
        raise InputError(f"count must be a number of breaks >= 0; got {n.ravel()[np.argmin(n)]!r}")
    if not np.all(np.isfinite(a)):
        raise InputError("growth must be finite")
    # special case: no growth, the rate is the mean count per year
    safe = np.where(a == 0, 1.0, a)
    fraction = np.where(a == 0, window, -np.expm1(-safe * window) / safe)
    return restore(n / fraction, tpl)


def break_growth_from_counts(recent: Any, prior: Any, window: float) -> Any:
    """Break growth rate A fitted from the counts of two successive windows of years.

    Under N(s) = N0 e^{A s}, the count of the last w years over the count of the w years before
    them is e^{A w}, so A = ln(n_recent / n_prior) / w. Both counts must be positive; small
    counts give a noisy rate (a count of n has a Poisson spread of about √n), so callers should
    fit only where both windows hold enough breaks.

    Parameters
    ----------
    recent : float or array_like
        Breaks of the last ``window`` years [-], > 0.
    prior : float or array_like
        Breaks of the ``window`` years before those [-], > 0.
    window : float
        Length of each window, w [yr], > 0.

    Returns
    -------
    float, ndarray or Series
        Growth rate A [1/yr].

    References
    ----------
    .. [1] U. Shamir, C. D. D. Howard, "An analytic approach to scheduling pipe replacement",
       J. AWWA 71(5), 248–258, 1979.

    Examples
    --------
    >>> round(break_growth_from_counts(12.0, 8.0, 5.0), 6)
    0.081093
    """
    (r, p), tpl = as_float_arrays(recent, prior)
    if not (math.isfinite(window) and window > 0):
        raise InputError(f"window must be a positive number of years; got {window!r}")
    bad = ~(np.isfinite(r) & np.isfinite(p) & (r > 0) & (p > 0))
    if np.any(bad):
        k = int(np.flatnonzero(bad.ravel())[0])
        raise InputError(f"recent and prior break counts must be positive to fit a growth rate; "
                         f"got {r.ravel()[k]!r} and {p.ravel()[k]!r}")
    return restore(np.log(r / p) / window, tpl)
