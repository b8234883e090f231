"""Engineering economics (model layer): discounting, annuities, present worth, NPV and IRR.

All rates are real (net of general inflation) fractions per year; years are study years counted
from the start of operation, with capital spent at t = 0 and each year's running costs at its
end (t = 1 … N). Functions are vectorized and give back the kind they receive.

References
----------
.. [1] E. P. DeGarmo, W. G. Sullivan, J. R. Canada, Engineering Economy, Macmillan (any
   edition): capital recovery factor and geometric-gradient present worth (from memory).
.. [2] Hydraulic Institute, Europump, Pump Life Cycle Costs: A Guide to LCC Analysis for
   Pumping Systems, 2001.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError

__all__ = [
    "capital_recovery_factor",
    "discount_factor",
    "present_worth_of_series",
    "present_value",
    "equivalent_annual_cost",
    "net_present_value",
    "internal_rate_of_return",
    "IRRResult",
    "straight_line_residual",
    "growth_factors",
]


def _check_rate(rate: np.ndarray, name: str = "discount_rate") -> None:
    if not np.all(np.isfinite(rate)) or np.any(rate <= -1):
        raise InputError(f"{name} must be a finite fraction greater than -1 (0.05 for 5 %); got "
                         f"{rate.ravel()[0]!r}")


def _check_years(years: np.ndarray, name: str = "years") -> None:
    if not np.all(np.isfinite(years)) or np.any(years <= 0):
        raise InputError(f"{name} must be positive; got {years.ravel()[np.argmin(years)]!r}")


def capital_recovery_factor(rate: Any, years: Any) -> Any:
    """Capital recovery factor: the annuity that repays 1 over ``years`` at ``rate``.

    .. math:: \\mathrm{CRF} = \\frac{i (1+i)^N}{(1+i)^N - 1}, \\qquad \\mathrm{CRF} = 1/N
              \\text{ when } i = 0

    Parameters
    ----------
    rate : float or array_like
        Discount rate i [1/yr] (0.05 for 5 %).
    years : float or array_like
        Number of years N [yr].

    Returns
    -------
    float, ndarray or Series
        CRF [1/yr].

    Examples
    --------
    >>> round(capital_recovery_factor(0.05, 20), 7)
    0.0802426
    >>> capital_recovery_factor(0.0, 25)
    0.04
    """
    (i, n), tpl = as_float_arrays(rate, years)
    _check_rate(i)
    _check_years(n)
    zero = np.abs(i) < 1e-12
    safe = np.where(zero, 1.0, i)
    with np.errstate(divide="ignore", invalid="ignore"):
        # -expm1(-N log1p(i)) = 1 - (1+i)^-N, accurate for small i
        crf = safe / -np.expm1(-n * np.log1p(safe))
    # special case: zero rate, straight-line repayment
    return restore(np.where(zero, 1.0 / n, crf), tpl)


def discount_factor(rate: Any, year: Any) -> Any:
    """Present worth of 1 paid at ``year``: (1 + i)^−t.

    Parameters
    ----------
    rate : float or array_like
        Discount rate i [1/yr].
    year : float or array_like
        Time of payment t [yr] (0 for now).

    Returns
    -------
    float, ndarray or Series
        Discount factor [-].

    Examples
    --------
    >>> round(discount_factor(0.05, 10), 6)
    0.613913
    """
    (i, t), tpl = as_float_arrays(rate, year)
    _check_rate(i)
    return restore(np.exp(-t * np.log1p(i)), tpl)


def growth_factors(rate: Any, years: int) -> np.ndarray:
    """(1 + r)^(t − 1) for study years t = 1 … N: an amount of year 1 escalating at ``rate``.

    Parameters
    ----------
    rate : float or array_like, shape (S,)
        Yearly growth or escalation r [1/yr], greater than −1; an array gives one row per value.
    years : int
        Number of study years N.

    Returns
    -------
    ndarray, shape (N,) or (S, N)
        Factors on the year-1 amount [-].

    Examples
    --------
    >>> growth_factors(0.1, 3).round(4).tolist()
    [1.0, 1.1, 1.21]
    """
    r = np.asarray(rate, dtype=float)
    _check_rate(r, "rate")
    return np.exp(np.arange(years, dtype=float) * np.log1p(r)[..., None])


def straight_line_residual(age: Any, life: Any) -> Any:
    """Share of an asset's capital still owed to it at ``age``: max(0, 1 − age / life).

    Parameters
    ----------
    age : float or array_like
        Years the asset has served at the end of the analysis [yr].
    life : float or array_like
        Its service life [yr], positive.

    Returns
    -------
    float, ndarray or Series
        Residual value as a fraction of its capital [-].

    Examples
    --------
    >>> straight_line_residual(40, 80)
    0.5
    >>> straight_line_residual(30, 20)
    0.0
    """
    (a, life_), tpl = as_float_arrays(age, life)
    if not np.all(life_ > 0):
        raise InputError(f"life must be positive; got {life_.ravel()[np.argmin(life_)]!r}")
    return restore(np.maximum(0.0, 1.0 - a / life_), tpl)


def present_worth_of_series(first_amount: Any, rate: Any, years: Any, growth: Any = 0.0) -> Any:
    """Present worth of a yearly amount that grows geometrically, paid at the ends of years 1…N.

    .. math:: PW = A_1 \\frac{1 - \\left(\\frac{1+g}{1+i}\\right)^N}{i - g}, \\qquad
              PW = \\frac{N A_1}{1 + i} \\text{ when } i = g

    Parameters
    ----------
    first_amount : float or array_like
        Amount in year 1, A₁ [currency].
    rate : float or array_like
        Discount rate i [1/yr].
    years : float or array_like
        Number of payments N.
    growth : float or array_like, optional
        Growth (escalation) of the amount g [1/yr].

    Returns
    -------
    float, ndarray or Series
        Present worth at t = 0 [currency].

    Examples
    --------
    >>> round(present_worth_of_series(1000.0, 0.05, 20), 2)
    12462.21
    >>> round(present_worth_of_series(1000.0, 0.05, 20, growth=0.05), 2)
    19047.62
    """
    (a, i, n, g), tpl = as_float_arrays(first_amount, rate, years, growth)
    _check_rate(i)
    _check_rate(g, "growth")
    _check_years(n)
    equal = np.abs(i - g) < 1e-12
    with np.errstate(divide="ignore", invalid="ignore"):
        # -expm1(x) = 1 - ((1+g)/(1+i))^N without cancellation when i is close to g
        pw = a * -np.expm1(n * (np.log1p(g) - np.log1p(i))) / np.where(equal, 1.0, i - g)
    # special case: growth equal to the discount rate, every term is A1 / (1 + i)
    return restore(np.where(equal, n * a / (1.0 + i), pw), tpl)


def present_value(cash_flows: Any, rate: float, start_year: int = 1) -> Any:
    """Present value of yearly cash flows along the last axis (years start_year, start_year+1, …).

    Parameters
    ----------
    cash_flows : array_like
        Amounts [currency]; the last axis is the year.
    rate : float
        Discount rate i [1/yr].
    start_year : int, optional
        Year of the first entry (1: end of the first year; 0: now).

    Returns
    -------
    float or ndarray
        Present value, the year axis summed away [currency].

    Examples
    --------
    >>> round(present_value([100.0, 100.0], 0.1), 4)
    173.5537
    """
    c = np.asarray(cash_flows, dtype=float)
    i = np.asarray(rate, dtype=float)
    _check_rate(i)
    t = np.arange(start_year, start_year + c.shape[-1])
    out = (c * np.exp(-t * np.log1p(float(i)))).sum(axis=-1)
    return float(out) if np.ndim(out) == 0 else out


def equivalent_annual_cost(present: Any, rate: Any, years: Any) -> Any:
    """Equivalent annual cost: a present value spread evenly over N years, PV · CRF(i, N).

    Examples
    --------
    >>> round(equivalent_annual_cost(100000.0, 0.08, 30), 2)
    8882.74
    """
    (pv, i, n), tpl = as_float_arrays(present, rate, years)
    return restore(pv * np.asarray(capital_recovery_factor(i, n)), tpl)


def net_present_value(cash_flows: Any, rate: float) -> float:
    """NPV of cash flows at years 0, 1, 2, … (the first entry is not discounted).

    Follows numpy-financial's ``npv`` convention.

    Examples
    --------
    >>> round(net_present_value([-1000.0, 300.0, 400.0, 500.0], 0.05), 4)
    80.4449
    """
    return float(present_value(cash_flows, rate, start_year=0))


class IRRResult:
    """Internal rate of return, or the reason there is none.

    Attributes
    ----------
    rate : float or None
        The IRR [1/yr], None when it is not defined.
    message : str
        ``"unique"``, or why no single rate is given (no sign change, several roots).
    """

    def __init__(self, rate: float | None, message: str) -> None:
        self.rate = rate
        self.message = message

    def __repr__(self) -> str:
        if self.rate is None:
            return f"IRRResult(None: {self.message})"
        return f"IRRResult({self.rate:.6g})"


def internal_rate_of_return(cash_flows: Any, low: float = -0.99, high: float = 10.0) -> IRRResult:
    """Internal rate of return of cash flows at years 0, 1, 2, … (numpy-financial convention).

    The rate r where :func:`net_present_value` is zero, found with Brent's method
    (:func:`scipy.optimize.brentq`) on every sign change of the NPV over a fine grid of rates in
    (``low``, ``high``). When the cash flows never change sign, or the NPV has no root or several
    roots in the range, no rate is given and the message says why (an IRR is then not a sound
    basis for a decision: use the NPV).

    Examples
    --------
    >>> r = internal_rate_of_return([-1000.0, 300.0, 400.0, 500.0])
    >>> round(r.rate, 6), r.message
    (0.088963, 'unique')
    >>> internal_rate_of_return([100.0, 50.0]).message
    'no sign change in the cash flows: no IRR'
    """
    c = np.asarray(cash_flows, dtype=float)
    if c.ndim != 1 or c.size < 2 or not np.all(np.isfinite(c)):
        raise InputError("cash_flows must be a finite 1-D sequence of at least two amounts")
    signs = np.sign(c[c != 0])
    if signs.size == 0 or np.all(signs == signs[0]):
        return IRRResult(None, "no sign change in the cash flows: no IRR")
    t = np.arange(c.size)
    from scipy.optimize import brentq  # imported where used: it costs a tenth of a second

    def npv(r: float) -> float:
        return float(np.sum(c * np.exp(-t * np.log1p(r))))

    grid = np.concatenate([np.linspace(low, -0.5, 50, endpoint=False),
                           np.linspace(-0.5, 1.0, 1500, endpoint=False),
                           np.geomspace(1.0, high, 200)])
    values = np.sum(c[None, :] * np.exp(-t[None, :] * np.log1p(grid)[:, None]), axis=1)
    roots = []
    for k in np.flatnonzero(np.sign(values[:-1]) * np.sign(values[1:]) <= 0):
        a, b = grid[k], grid[k + 1]
        if values[k] == 0:
            roots.append(a)
            continue
        roots.append(brentq(npv, a, b, xtol=1e-14, rtol=1e-14, maxiter=200))
    roots = sorted({round(r, 10): r for r in roots}.values())
    if not roots:
        return IRRResult(None, f"the NPV has no root between {low:g} and {high:g}: no IRR")
    if len(roots) > 1:
        shown = ", ".join(f"{r:.4g}" for r in roots)
        return IRRResult(None, f"several rates give zero NPV ({shown}): IRR not unique")
    return IRRResult(float(roots[0]), "unique")
