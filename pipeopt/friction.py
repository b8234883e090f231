"""Pipe friction: Reynolds number, Darcy friction factor, head loss (physics layer).

Every function takes SI floats or arrays (or lists, or pandas Series), broadcasts its arguments
like numpy and returns the same kind: a plain ``float`` for scalar input, a Series (keeping the
index) when any argument is a Series, an ndarray otherwise.

Flow regimes
------------
``Re < 2000``
    laminar: every method except Churchill's returns the Hagen–Poiseuille value ``64/Re``.
``2000 <= Re < 4000``
    transitional: no correlation is valid here. The methods return their *turbulent* formula
    (for ``"colebrook"`` the Colebrook–White root), which lies above ``64/Re`` across the whole
    band and so over-estimates head loss: the conservative choice for sizing a pump. The points
    are flagged: :func:`friction_factor` warns with
    :class:`~pipeopt.errors.TransitionalFlowWarning` (``transition="ignore"`` silences it,
    ``transition="raise"`` makes it an error), and :func:`flow_regime` labels each point.
``Re >= 4000``
    turbulent: the method's formula.

Invalid input (``Re <= 0``, infinite or NaN values, negative roughness, relative roughness above
:data:`MAX_RELATIVE_ROUGHNESS`) raises :class:`~pipeopt.errors.InputError` (a ``ValueError``)
naming the parameter, the rule and the offending value. No function returns a silent NaN.
"""

from __future__ import annotations

import functools
import warnings
from typing import Any, Literal

import numpy as np

from ._arrays import as_float_arrays, restore, series_type
from .errors import InputError, RangeWarning, TransitionalFlowWarning

__all__ = [
    "GRAVITY",
    "LAMINAR_LIMIT",
    "TURBULENT_LIMIT",
    "MAX_RELATIVE_ROUGHNESS",
    "METHODS",
    "reynolds_number",
    "reynolds_number_from_flow",
    "flow_regime",
    "friction_factor",
    "colebrook_white",
    "swamee_jain",
    "haaland",
    "serghides",
    "churchill",
    "darcy_weisbach_head_loss",
    "minor_head_loss",
    "line_head_loss",
    "hazen_williams_head_loss",
    "hazen_williams_c_from_roughness",
    "roughness_from_hazen_williams_c",
    "roughness_from_head_loss",
    "hazen_williams_c_from_head_loss",
]

#: Standard acceleration of gravity [m/s²] (CGPM 1901, exact by definition).
GRAVITY = 9.80665
#: Below this Reynolds number the flow is taken as laminar (common practice).
LAMINAR_LIMIT = 2000.0
#: From this Reynolds number on the flow is taken as fully turbulent (common practice).
TURBULENT_LIMIT = 4000.0
#: Largest relative roughness accepted: the upper edge of Moody's (1944) chart.
MAX_RELATIVE_ROUGHNESS = 0.05
#: Hazen–Williams SI coefficient for h = k L Q^1.852 / (C^1.852 D^4.8704), Q in m³/s, D in m.
HAZEN_WILLIAMS_SI_K = 10.67

METHODS = ("colebrook", "swamee-jain", "haaland", "serghides", "churchill")

# Constants of Clamond's (2009) formulation of Colebrook–White (3.7 / 2.51 form).
_CL_X1 = 0.123968186335417556  # ln(10) / 18.574, 18.574 = 2 * 3.7 * 2.51
_CL_X2 = 0.779397488455682028  # -ln(ln(10) / 5.02), 5.02 = 2 * 2.51
_CL_OUT = 1.151292546497022842  # ln(10) / 2
_CHUNK = 32768  # elements per in-place block: the work arrays stay in the L2 cache

# The first guess of the fast kernel: ln of the Wright omega function, one straight line per
# cell of a table indexed by the float32 bits of its argument z' (exponent and the first
# _OMEGA_BITS bits of the mantissa: 2**_OMEGA_BITS cells per octave), z' from 4 to 2**44.
_OMEGA_BITS = 7
_OMEGA_OCTAVES = (2, 44)
#: Largest Reynolds number the fast kernel takes (its table covers X1 + ln Re up to 2**44);
#: arrays with a larger one are solved by Clamond's iteration alone.
_FAST_RE_MAX = 1e15


# --------------------------------------------------------------------------------------------
# validation
# --------------------------------------------------------------------------------------------
def _first_bad(arr: np.ndarray, bad: np.ndarray) -> str:
    idx = np.flatnonzero(bad.ravel())[0]
    where = "" if arr.ndim == 0 else f" at position {np.unravel_index(idx, arr.shape)}"
    if arr.ndim == 1:
        where = f" at position {idx}"
    return f"{float(arr.ravel()[idx])!r}{where}"


def _check_positive(arr: np.ndarray, name: str) -> tuple[float, float]:
    """Raise unless every value is positive and finite; return (min, max) for reuse."""
    if arr.size == 0:
        return np.inf, -np.inf
    lo, hi = arr.min(), arr.max()
    if lo > 0 and np.isfinite(hi):
        return float(lo), float(hi)
    if np.isnan(arr).any():
        raise InputError(f"{name} must not be NaN; got {_first_bad(arr, np.isnan(arr))}")
    if not np.isfinite(arr).all():
        raise InputError(f"{name} must be finite; got {_first_bad(arr, ~np.isfinite(arr))}")
    raise InputError(f"{name} must be positive; got {_first_bad(arr, arr <= 0)}")


def _check_nonnegative(arr: np.ndarray, name: str) -> tuple[float, float]:
    """Raise unless every value is >= 0 and finite; return (min, max) for reuse."""
    if arr.size == 0:
        return np.inf, -np.inf
    lo, hi = arr.min(), arr.max()
    if lo >= 0 and np.isfinite(hi):
        return float(lo), float(hi)
    if np.isnan(arr).any():
        raise InputError(f"{name} must not be NaN; got {_first_bad(arr, np.isnan(arr))}")
    if not np.isfinite(arr).all():
        raise InputError(f"{name} must be finite; got {_first_bad(arr, ~np.isfinite(arr))}")
    raise InputError(f"{name} must be >= 0; got {_first_bad(arr, arr < 0)}")


def _check_friction_inputs(re: np.ndarray, rr: np.ndarray) -> tuple[float, float]:
    """Validate Reynolds numbers and relative roughness; return the least and largest Re."""
    re_range = _check_positive(re, "reynolds")
    if _check_nonnegative(rr, "relative_roughness")[1] > MAX_RELATIVE_ROUGHNESS:
        raise InputError(
            f"relative_roughness must not exceed {MAX_RELATIVE_ROUGHNESS} (the upper edge of "
            f"Moody's chart and of the data behind Colebrook-White); got "
            f"{_first_bad(rr, rr > MAX_RELATIVE_ROUGHNESS)}")
    return re_range


# --------------------------------------------------------------------------------------------
# Reynolds number and regime
# --------------------------------------------------------------------------------------------
def reynolds_number(velocity: Any, diameter: Any, density: Any, viscosity: Any) -> Any:
    """Reynolds number of pipe flow, Re = ρ V D / μ.

    Parameters
    ----------
    velocity : float or array_like
        Mean velocity [m/s]; its sign is ignored (Re is a magnitude).
    diameter : float or array_like
        Inner diameter [m].
    density : float or array_like
        Fluid density [kg/m³].
    viscosity : float or array_like
        Dynamic viscosity [Pa·s].

    Returns
    -------
    float, ndarray or Series
        Reynolds number [-].

    Examples
    --------
    >>> round(reynolds_number(1.5, 0.3, 998.2, 1.0016e-3))
    448472
    """
    (v, d, rho, mu), tpl = as_float_arrays(velocity, diameter, density, viscosity)
    _check_positive(d, "diameter")
    _check_positive(rho, "density")
    _check_positive(mu, "viscosity")
    if not np.all(np.isfinite(v)):
        raise InputError(f"velocity must be finite; got {_first_bad(v, ~np.isfinite(v))}")
    return restore(rho * np.abs(v) * d / mu, tpl)


def reynolds_number_from_flow(flow: Any, diameter: Any, density: Any, viscosity: Any) -> Any:
    """Reynolds number from a volumetric flow, Re = 4 ρ Q / (π μ D).

    Parameters
    ----------
    flow : float or array_like
        Volumetric flow in the pipe [m³/s].
    diameter : float or array_like
        Inner diameter [m].
    density : float or array_like
        Fluid density [kg/m³].
    viscosity : float or array_like
        Dynamic viscosity [Pa·s].

    Returns
    -------
    float, ndarray or Series
        Reynolds number [-].

    Examples
    --------
    >>> round(reynolds_number_from_flow(0.1, 0.3, 998.2, 1.0016e-3))
    422972
    """
    (q, d, rho, mu), tpl = as_float_arrays(flow, diameter, density, viscosity)
    _check_positive(d, "diameter")
    if not np.all(np.isfinite(q)):
        raise InputError(f"flow must be finite; got {_first_bad(q, ~np.isfinite(q))}")
    return restore(reynolds_number(q / (np.pi * d * d / 4.0), d, rho, mu), tpl)


def flow_regime(reynolds: Any) -> Any:
    """Label each Reynolds number ``"laminar"``, ``"transitional"`` or ``"turbulent"``.

    Uses :data:`LAMINAR_LIMIT` (2000) and :data:`TURBULENT_LIMIT` (4000).

    Examples
    --------
    >>> flow_regime([1500, 3000, 1e5]).tolist()
    ['laminar', 'transitional', 'turbulent']
    """
    (re,), tpl = as_float_arrays(reynolds)
    _check_positive(re, "reynolds")
    out = np.where(re < LAMINAR_LIMIT, "laminar",
                   np.where(re < TURBULENT_LIMIT, "transitional", "turbulent"))
    if tpl is None:
        return str(out)
    if isinstance(tpl, series_type()):
        return type(tpl)(out, index=tpl.index, name=tpl.name)
    return out


# --------------------------------------------------------------------------------------------
# Colebrook-White, solved to machine precision
# --------------------------------------------------------------------------------------------
def _wright_omega(z: np.ndarray) -> np.ndarray:
    """The Wright omega function, the root w of w + ln(w) = z, for z >= 1 (Halley's method)."""
    w = z - np.log(z) + np.log(z) / z
    for _ in range(4):  # cubic convergence from within 3 %: four steps reach the last digit
        g = w + np.log(w) - z
        w = w - 2.0 * g * w * (w + 1.0) / (2.0 * (w + 1.0) ** 2 + g)
    return w


@functools.cache
def _omega_table() -> tuple[np.ndarray, np.ndarray]:
    """Intercept and slope tables of ln(omega(z' + c)) - c in z', c = ln(ln10 / 5.02).

    Each cell [lo, hi) of :data:`_OMEGA_BITS` mantissa bits gets the least-squares line through
    five Chebyshev points; the largest deviation is about 5e-6 (the Halley step that follows
    needs 4e-5). The tables are indexed directly by ``z'.view(int32) >> (23 - bits)``, so
    they start with unused zeros below the first octave.
    """
    bits = _OMEGA_BITS
    lo_e, hi_e = _OMEGA_OCTAVES
    cell = np.arange(lo_e << bits, hi_e << bits)
    exponent, mantissa = cell >> bits, cell & ((1 << bits) - 1)
    lo = np.ldexp(1.0 + mantissa / (1 << bits), exponent)
    width = np.ldexp(1.0 / (1 << bits), exponent)
    nodes = 0.5 + 0.5 * np.cos(np.pi * (np.arange(5) + 0.5) / 5)
    z = lo[:, None] + width[:, None] * nodes
    shift = -_CL_X2  # ln(ln10 / 5.02): z' = z - shift with z = X1 + X2
    ln_omega = np.log(_wright_omega(z + shift)) - shift
    zm, lm = z.mean(axis=1), ln_omega.mean(axis=1)
    slope = (((z - zm[:, None]) * (ln_omega - lm[:, None])).sum(axis=1)
             / ((z - zm[:, None]) ** 2).sum(axis=1))
    table = np.zeros((2, (127 + hi_e) << bits), dtype=np.float32)
    table[0, (127 + lo_e) << bits:] = lm - slope * zm
    table[1, (127 + lo_e) << bits:] = slope
    return table[0], table[1]


@functools.cache
def _omega_pairs() -> np.ndarray:
    """:func:`_omega_table` as rows (intercept, slope), so that the kernel gathers a cell's
    line in one pass (one 8-byte read per point instead of two 4-byte ones)."""
    c0, c1 = _omega_table()
    return np.ascontiguousarray(np.stack([c0, c1], axis=1))


def _colebrook_fast_kernel(re: np.ndarray, rr: np.ndarray, out: np.ndarray) -> np.ndarray:
    """Colebrook-White with one float64 logarithm per point, in place, block by block.

    ``re`` and ``rr`` are contiguous 1-D float64 arrays of one length with 2000 <= ``re`` <=
    :data:`_FAST_RE_MAX` (no checks here). In Clamond's variables the equation is
    F + ln(X1 + F) = X2; with a = X1 + F it reads a + ln(a) = X1 + X2 = z, so a = omega(z),
    the Wright omega function, and F = X2 - ln(omega(z)) exactly (Brkic & Praks 2019). The
    first guess F0 takes ln(omega) from a small table (float32, within about 6e-6) at z
    computed in float32; one Halley step on g(F) = F + ln((X1 + F) / (Re ln10 / 5.02)), the
    only float64 logarithm, then reaches the last digit: the step leaves an error of about
    err0**3 / (3 a**3), below 1e-17.
    """
    n = re.size
    m0 = min(_CHUNK, n)
    w64 = np.empty((3, m0))
    w32 = np.empty((4, m0), dtype=np.float32)
    wi = np.empty(m0, dtype=np.int32)
    w_pair = np.empty((m0, 2), dtype=np.float32)
    shift = np.int32(23 - _OMEGA_BITS)
    pairs = _omega_pairs()
    for start in range(0, n, _CHUNK):
        stop = min(start + _CHUNK, n)
        m = stop - start
        r, k, o = re[start:stop], rr[start:stop], out[start:stop]
        f, a, g = w64[:, :m]
        r32, x2, z, t = w32[:, :m]
        idx, pair = wi[:m], w_pair[:m]
        np.multiply(k, r, out=a)
        a *= _CL_X1                       # X1
        # first guess in float32: z' = X1 + ln Re, F0 = ln Re - (ln omega(z' + c) - c)
        np.copyto(r32, r, casting="unsafe")
        np.log(r32, out=x2)
        np.copyto(z, a, casting="unsafe")
        z += x2
        np.right_shift(z.view(np.int32), shift, out=idx)
        np.take(pairs, idx, axis=0, out=pair, mode="clip")  # one gather: the cell's line
        np.multiply(pair[:, 1], z, out=t)
        t += pair[:, 0]
        x2 -= t
        np.copyto(f, x2)                  # F0 in float64
        # one Halley step on g(F) = F + ln(a / (Re ln10/5.02)), a = X1 + F:
        # g' = (a + 1)/a, g'' = -1/a^2, step = g a (a + 1) / ((a + 1)^2 + g/2)
        a += f                            # a = X1 + F0
        np.divide(a, r, out=g)
        np.log(g, out=g)
        g += f
        g += _CL_X2                       # g = F0 + ln(a / Re) - ln(ln10/5.02)
        np.multiply(g, a, out=o)
        a += 1.0
        o *= a
        a *= a
        g *= 0.5
        a += g
        o /= a
        f -= o                            # F
        np.multiply(f, f, out=o)          # f = (ln10 / (2 F))^2
        np.divide(_CL_OUT * _CL_OUT, o, out=o)
    return out


def _colebrook_kernel(re: np.ndarray, rr: np.ndarray, out: np.ndarray) -> np.ndarray:
    """Clamond's two-step solution of Colebrook-White, in place, block by block.

    ``re`` and ``rr`` are contiguous 1-D float64 arrays of one length with ``re`` >= 2000 (no
    checks here). The arithmetic is the algorithm of Clamond (2009), rearranged to reuse six work
    arrays of :data:`_CHUNK` elements so that every pass stays in
    cache and no temporary is allocated per block.
    """
    n = re.size
    m0 = min(_CHUNK, n)
    work = np.empty((6, m0))
    for start in range(0, n, _CHUNK):
        stop = min(start + _CHUNK, n)
        m = stop - start
        r = re[start:stop]
        o = out[start:stop]
        x1, x2, f, a, b, e = work[:, :m]
        np.multiply(rr[start:stop], r, out=x1)
        x1 *= _CL_X1                      # X1 = K R ln(10)/18.574
        np.log(r, out=x2)
        x2 -= _CL_X2                      # X2 = ln(R ln(10)/5.02)
        np.subtract(x2, 0.2, out=f)       # initial guess F0 = X2 - 1/5
        for step in (1, 2):
            np.add(x1, f, out=a)          # a = X1 + F
            np.log(a, out=e)
            if step == 1:                 # residual ln(X1+F) + F - X2, with F = X2 - 0.2
                e -= 0.2
            else:
                e += f
                e -= x2
            np.add(a, 1.0, out=b)         # b = 1 + X1 + F
            e /= b                        # E = residual / (1 + X1 + F)
            np.multiply(e, 0.5, out=o)    # numerator (b + E/2) E a
            o += b
            o *= e
            o *= a
            np.multiply(e, 1.0 / 3.0, out=a)  # denominator b + E (1 + E/3)
            a += 1.0
            a *= e
            a += b
            o /= a
            f -= o
        np.divide(_CL_OUT, f, out=o)      # 1/sqrt(f) = 2 F / ln(10)
        o *= o
    return out


def colebrook_white(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor from the Colebrook–White equation, solved to machine precision.

    Solves

    .. math:: \\frac{1}{\\sqrt f} = -2 \\log_{10}\\left(\\frac{\\varepsilon/D}{3.7}
              + \\frac{2.51}{Re \\sqrt f}\\right)

    for every point, with no laminar branch (use :func:`friction_factor` for that).

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-], at least :data:`LAMINAR_LIMIT` (2000).
    relative_roughness : float or array_like
        Absolute roughness over inner diameter, ε/D [-], 0 to 0.05.

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    In Clamond's (2009) variables, :math:`X_1 = (\\varepsilon/D) Re \\ln 10 / 18.574`,
    :math:`X_2 = \\ln(Re \\ln 10 / 5.02)` and :math:`F = \\ln 10 / (2\\sqrt f)`, the
    equation is :math:`F + \\ln(X_1 + F) = X_2`, so :math:`X_1 + F = \\omega(X_1 + X_2)`
    with :math:`\\omega` the Wright omega function and
    :math:`F = X_2 - \\ln \\omega(X_1 + X_2)` exactly (Brkić & Praks 2019). The first guess
    takes :math:`\\ln \\omega` from a small table (within about 6e-6, in single precision);
    one Halley step on :math:`F + \\ln((X_1 + F) \\cdot 5.02 / (Re \\ln 10))`, the one
    double-precision logarithm per point, then gives the root to about 1e-15 relative. For Re
    above 1e15 (beyond the table) two steps of Clamond's third-order iteration from
    :math:`F_0 = X_2 - 1/5` are used instead, to about 2e-15. The tests check a worst relative
    error below 4e-15 against 40-digit mpmath roots for Re 4e3–1e8 and ε/D 0, 1e-7–0.05.
    Accuracy holds down to Re = 2000.

    References
    ----------
    .. [1] C. F. Colebrook, "Turbulent flow in pipes, with particular reference to the
       transition region between the smooth and rough pipe laws", J. Inst. Civil Eng. 11(4),
       133–156, 1939.
    .. [2] D. Clamond, "Efficient resolution of the Colebrook equation", Ind. Eng. Chem. Res.
       48(7), 3665–3671, 2009. doi:10.1021/ie801626g
    .. [3] D. Brkić, P. Praks, "Accurate and efficient explicit approximations of the
       Colebrook flow friction equation based on the Wright ω-function", Mathematics 7(1), 34,
       2019. doi:10.3390/math7010034

    Examples
    --------
    >>> round(colebrook_white(1e5, 1e-4), 10)
    0.0185138661
    """
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    re_min, re_max = _check_friction_inputs(re, rr)
    if re_min < LAMINAR_LIMIT:
        raise InputError(f"reynolds must be >= {LAMINAR_LIMIT:g} for Colebrook-White (use "
                         f"friction_factor for laminar flow); got "
                         f"{_first_bad(re, re < LAMINAR_LIMIT)}")
    return restore(_colebrook(re, rr, re_max), tpl)


def _colebrook(re: np.ndarray, rr: np.ndarray, re_max: float | None = None) -> np.ndarray:
    """Colebrook–White on validated, broadcast arrays of any shape (Re >= 2000).

    ``re_max``, the largest Reynolds number when the caller knows it, saves a pass.
    """
    shape = re.shape
    r = np.ascontiguousarray(re, dtype=float).ravel()
    k = np.ascontiguousarray(rr, dtype=float).ravel()
    out = np.empty(r.size)
    if r.size and (r.max() if re_max is None else re_max) <= _FAST_RE_MAX:
        _colebrook_fast_kernel(r, k, out)
    else:  # beyond the fast kernel's table (Re above 1e15): Clamond's iteration
        _colebrook_kernel(r, k, out)
    return out.reshape(shape)


# --------------------------------------------------------------------------------------------
# explicit approximations, each exactly its published formula
# --------------------------------------------------------------------------------------------
def swamee_jain(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor, Swamee & Jain (1976) explicit approximation of Colebrook–White.

    .. math:: f = \\frac{0.25}{\\left[\\log_{10}\\left(\\frac{\\varepsilon/D}{3.7}
              + \\frac{5.74}{Re^{0.9}}\\right)\\right]^2}

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-].
    relative_roughness : float or array_like
        ε/D [-].

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    Stated range 1e-6 <= ε/D <= 1e-2, 5e3 <= Re <= 1e8, with about ±1 % claimed; measured here
    against the exact root the worst case in that range is 2.8 % (Re 5e3, ε/D 1e-2).

    References
    ----------
    .. [1] P. K. Swamee, A. K. Jain, "Explicit equations for pipe-flow problems",
       J. Hydraul. Div. ASCE 102(HY5), 657–664, 1976 (equation number not checked).

    Examples
    --------
    >>> round(swamee_jain(1e5, 1e-4), 5)
    0.01845
    """
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    _check_friction_inputs(re, rr)
    return restore(_swamee_jain(re, rr), tpl)


def _swamee_jain(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    return 0.25 / np.log10(rr / 3.7 + 5.74 / re**0.9) ** 2


def haaland(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor, Haaland (1983) explicit formula.

    .. math:: \\frac{1}{\\sqrt f} = -1.8 \\log_{10}\\left[\\left(\\frac{\\varepsilon/D}{3.7}
              \\right)^{1.11} + \\frac{6.9}{Re}\\right]

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-].
    relative_roughness : float or array_like
        ε/D [-].

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    Measured worst deviation from Colebrook–White 1.42 % for Re 4e3–1e8, ε/D 0–0.05.

    References
    ----------
    .. [1] S. E. Haaland, "Simple and explicit formulas for the friction factor in turbulent
       pipe flow", J. Fluids Eng. 105(1), 89–90, 1983 (equation number not checked).

    Examples
    --------
    >>> round(haaland(1e5, 1e-4), 5)
    0.01827
    """
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    _check_friction_inputs(re, rr)
    return restore(_haaland(re, rr), tpl)


def _haaland(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    x = -1.8 * np.log10((rr / 3.7) ** 1.11 + 6.9 / re)
    return 1.0 / (x * x)


def serghides(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor, Serghides (1984) three-term Steffensen acceleration.

    .. math::
        A = -2\\log_{10}\\left(\\frac{\\varepsilon/D}{3.7} + \\frac{12}{Re}\\right),\\quad
        B = -2\\log_{10}\\left(\\frac{\\varepsilon/D}{3.7} + \\frac{2.51 A}{Re}\\right),\\quad
        C = -2\\log_{10}\\left(\\frac{\\varepsilon/D}{3.7} + \\frac{2.51 B}{Re}\\right)

    .. math:: f = \\left[A - \\frac{(B - A)^2}{C - 2B + A}\\right]^{-2}

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-].
    relative_roughness : float or array_like
        ε/D [-].

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    Measured worst deviation from Colebrook–White about 0.003 % for Re 4e3–1e8.

    References
    ----------
    .. [1] T. K. Serghides, "Estimate friction factor accurately", Chem. Eng. 91(5), 63–64,
       1984 (citation from memory).

    Examples
    --------
    >>> round(serghides(1e5, 1e-4), 7)
    0.0185136
    """
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    _check_friction_inputs(re, rr)
    return restore(_serghides(re, rr), tpl)


def _serghides(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    k = rr / 3.7
    a = -2.0 * np.log10(k + 12.0 / re)
    b = -2.0 * np.log10(k + 2.51 * a / re)
    c = -2.0 * np.log10(k + 2.51 * b / re)
    x = a - (b - a) ** 2 / (c - 2.0 * b + a)
    return 1.0 / (x * x)


def churchill(reynolds: Any, relative_roughness: Any) -> Any:
    """Darcy friction factor, Churchill (1977) single formula for all regimes.

    .. math:: f = 8\\left[\\left(\\frac{8}{Re}\\right)^{12} + (A + B)^{-3/2}\\right]^{1/12}

    with :math:`A = \\{2.457 \\ln[1/((7/Re)^{0.9} + 0.27\\,\\varepsilon/D)]\\}^{16}` and
    :math:`B = (37530/Re)^{16}`.

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-], any positive value (laminar, transitional and turbulent).
    relative_roughness : float or array_like
        ε/D [-].

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    Tends to 64/Re in laminar flow and to Colebrook–White in turbulent flow (measured worst
    3.1 % for Re >= 4e3); it interpolates smoothly through the transition band, where no
    formula is validated.

    References
    ----------
    .. [1] S. W. Churchill, "Friction-factor equation spans all fluid-flow regimes",
       Chem. Eng. 84(24), 91–92, 1977.

    Examples
    --------
    >>> round(churchill(1000, 0.0), 6)
    0.064
    """
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    _check_friction_inputs(re, rr)
    return restore(_churchill(re, rr), tpl)


def _churchill(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    with np.errstate(over="ignore"):
        a = (2.457 * np.log(1.0 / ((7.0 / re) ** 0.9 + 0.27 * rr))) ** 16
        b = (37530.0 / re) ** 16
        return 8.0 * ((8.0 / re) ** 12 + (a + b) ** -1.5) ** (1.0 / 12.0)


_TURBULENT = {
    "colebrook": _colebrook,
    "swamee-jain": _swamee_jain,
    "haaland": _haaland,
    "serghides": _serghides,
}


def friction_factor(
    reynolds: Any,
    relative_roughness: Any,
    method: str = "colebrook",
    transition: Literal["warn", "ignore", "raise"] = "warn",
) -> Any:
    """Darcy friction factor of pipe flow, in every regime.

    Parameters
    ----------
    reynolds : float or array_like
        Reynolds number [-], positive.
    relative_roughness : float or array_like
        Absolute roughness over inner diameter, ε/D [-], 0 to 0.05.
    method : {"colebrook", "swamee-jain", "haaland", "serghides", "churchill"}
        ``"colebrook"`` (default) solves Colebrook–White to machine precision
        (:func:`colebrook_white`); the others are the explicit formulas of the same names.
    transition : {"warn", "ignore", "raise"}
        What to do when points fall in the transition band 2000 <= Re < 4000 (see the module
        notes): warn with :class:`~pipeopt.errors.TransitionalFlowWarning` (default), say
        nothing, or raise :class:`~pipeopt.errors.InputError`. Ignored by ``"churchill"``,
        which is defined through the band.

    Returns
    -------
    float, ndarray or Series
        Darcy friction factor [-].

    Notes
    -----
    Laminar points (Re < 2000) get the Hagen–Poiseuille value 64/Re for every method except
    ``"churchill"``. Transitional points get the method's turbulent formula, which is above
    64/Re there (conservative for pump sizing).

    Explicit methods are used as published even outside their authors' ranges; a
    :class:`~pipeopt.errors.RangeWarning` says so for Swamee–Jain outside 5e3 <= Re <= 1e8 or
    1e-6 <= ε/D <= 1e-2 (ε/D = 0 is accepted without a warning).

    Examples
    --------
    >>> round(friction_factor(1e5, 1e-4), 10)
    0.0185138661
    >>> friction_factor(1000, 1e-3)
    0.064
    """
    if method not in METHODS:
        raise InputError(f"method must be one of {', '.join(METHODS)}; got {method!r}")
    if transition not in ("warn", "ignore", "raise"):
        raise InputError(f"transition must be 'warn', 'ignore' or 'raise'; got {transition!r}")
    (re, rr), tpl = as_float_arrays(reynolds, relative_roughness)
    lowest, highest = _check_friction_inputs(re, rr)
    if method == "churchill":
        return restore(_churchill(re, rr), tpl)
    if method == "swamee-jain":
        _warn_swamee_jain_range(re, rr)
    if re.size == 0:
        return restore(np.empty(re.shape), tpl)
    if lowest >= TURBULENT_LIMIT:  # the common case: every point turbulent
        if method == "colebrook":
            return restore(_colebrook(re, rr, highest), tpl)
        return restore(_TURBULENT[method](re, rr), tpl)
    laminar = re < LAMINAR_LIMIT
    n_transition = int(np.count_nonzero((re >= LAMINAR_LIMIT) & (re < TURBULENT_LIMIT)))
    if n_transition:
        msg = (f"{n_transition} point(s) have 2000 <= Re < 4000 (transitional flow); the "
               f"turbulent {method} value is used there, which over-estimates friction "
               f"relative to laminar flow")
        if transition == "raise":
            raise InputError(f"reynolds: {msg}")
        if transition == "warn":
            warnings.warn(msg, TransitionalFlowWarning, stacklevel=2)
    out = _TURBULENT[method](np.maximum(re, LAMINAR_LIMIT), rr)
    out = np.where(laminar, 64.0 / re, out)
    return restore(out, tpl)


def _warn_swamee_jain_range(re: np.ndarray, rr: np.ndarray) -> None:
    turbulent = re >= TURBULENT_LIMIT
    outside = turbulent & ((re < 5e3) | (re > 1e8) | ((rr != 0) & ((rr < 1e-6) | (rr > 1e-2))))
    if outside.any():
        warnings.warn(f"{int(outside.sum())} point(s) lie outside Swamee-Jain's stated range "
                      f"(5e3 <= Re <= 1e8, 1e-6 <= relative roughness <= 1e-2)",
                      RangeWarning, stacklevel=3)


# --------------------------------------------------------------------------------------------
# head loss
# --------------------------------------------------------------------------------------------
def darcy_weisbach_head_loss(friction_factor: Any, length: Any, diameter: Any,
                             velocity: Any) -> Any:
    """Friction head loss of a straight pipe, Darcy–Weisbach: h = f (L/D) V² / (2 g).

    Parameters
    ----------
    friction_factor : float or array_like
        Darcy friction factor [-].
    length : float or array_like
        Pipe length [m].
    diameter : float or array_like
        Inner diameter [m].
    velocity : float or array_like
        Mean velocity [m/s].

    Returns
    -------
    float, ndarray or Series
        Head loss [m of the flowing liquid].

    Examples
    --------
    >>> round(darcy_weisbach_head_loss(0.02, 1000.0, 0.3, 1.5), 4)
    7.6479
    """
    (f, length_, d, v), tpl = as_float_arrays(friction_factor, length, diameter, velocity)
    _check_positive(d, "diameter")
    _check_nonnegative(length_, "length")
    _check_nonnegative(f, "friction_factor")
    return restore(f * length_ / d * v * v / (2.0 * GRAVITY), tpl)


def minor_head_loss(k_sum: Any, velocity: Any) -> Any:
    """Head loss of fittings and valves from a sum of loss coefficients: h = ΣK V² / (2 g).

    Parameters
    ----------
    k_sum : float or array_like
        Sum of minor-loss coefficients referred to ``velocity`` [-].
    velocity : float or array_like
        Mean velocity [m/s].

    Returns
    -------
    float, ndarray or Series
        Head loss [m].

    Examples
    --------
    >>> round(minor_head_loss(6.5, 1.5), 4)
    0.7457
    """
    (k, v), tpl = as_float_arrays(k_sum, velocity)
    _check_nonnegative(k, "k_sum")
    return restore(k * v * v / (2.0 * GRAVITY), tpl)


def line_head_loss(flow: Any, diameter: Any, length: Any, roughness: Any, density: Any,
                   viscosity: Any, k_sum: Any = 0.0, method: str = "colebrook",
                   transition: Literal["warn", "ignore", "raise"] = "warn") -> Any:
    """Total head loss of a line: pipe friction (Darcy–Weisbach) plus minor losses.

    Parameters
    ----------
    flow : float or array_like
        Volumetric flow in the pipe [m³/s], positive.
    diameter : float or array_like
        Inner diameter [m].
    length : float or array_like
        Pipe length [m].
    roughness : float or array_like
        Absolute roughness [m].
    density : float or array_like
        Fluid density [kg/m³].
    viscosity : float or array_like
        Dynamic viscosity [Pa·s].
    k_sum : float or array_like, optional
        Sum of minor-loss coefficients [-] referred to the pipe velocity. Default 0.
    method, transition
        As in :func:`friction_factor`.

    Returns
    -------
    float, ndarray or Series
        Head loss [m].

    Examples
    --------
    >>> round(line_head_loss(0.1, 0.3, 1000.0, 4.5e-5, 998.2, 1.0016e-3, k_sum=6.5), 3)
    5.842
    """
    (q, d, length_, eps, rho, mu, k), tpl = as_float_arrays(
        flow, diameter, length, roughness, density, viscosity, k_sum)
    _check_positive(q, "flow")
    _check_positive(d, "diameter")
    _check_nonnegative(eps, "roughness")
    _check_nonnegative(length_, "length")
    _check_nonnegative(k, "k_sum")
    area = np.pi * d * d / 4.0
    v = q / area
    re = reynolds_number(v, d, rho, mu)
    f = friction_factor(re, eps / d, method=method, transition=transition)
    return restore((f * length_ / d + k) * v * v / (2.0 * GRAVITY), tpl)


# --------------------------------------------------------------------------------------------
# Hazen-Williams
# --------------------------------------------------------------------------------------------
def _hw_validity(v: np.ndarray, d: np.ndarray) -> None:
    if np.any(d < 0.05) or np.any(v > 3.0):
        warnings.warn("Hazen-Williams is outside its usual range (water near ambient "
                      "temperature, D >= 50 mm, V <= 3 m/s)", RangeWarning, stacklevel=3)


def hazen_williams_head_loss(flow: Any, diameter: Any, length: Any, c_factor: Any) -> Any:
    """Friction head loss of water by the Hazen–Williams formula, SI form.

    .. math:: h = 10.67\\, L\\, Q^{1.852} / (C^{1.852} D^{4.8704})

    Parameters
    ----------
    flow : float or array_like
        Volumetric flow [m³/s].
    diameter : float or array_like
        Inner diameter [m].
    length : float or array_like
        Pipe length [m].
    c_factor : float or array_like
        Hazen–Williams coefficient C [-] (about 150 for new plastic, 140 for new lined ductile
        iron, 100 or less for old unlined cast iron).

    Returns
    -------
    float, ndarray or Series
        Head loss [m].

    Notes
    -----
    An empirical formula for water only: fully turbulent flow of water near ambient
    temperature (about 5–25 °C), pipes of 50 mm and larger, velocities up to about 3 m/s.
    C is not a property of the pipe alone; it drifts with diameter and velocity. Outside that
    range use Darcy–Weisbach. A :class:`~pipeopt.errors.RangeWarning` is issued for D < 50 mm or
    V > 3 m/s.

    References
    ----------
    .. [1] A. Hazen, G. S. Williams, Hydraulic Tables, 3rd ed., Wiley, New York, 1920.
    .. [2] The SI coefficient 10.67 as in common water-engineering texts, e.g. L. W. Mays,
       Water Resources Engineering, Wiley (from memory).

    Examples
    --------
    >>> round(hazen_williams_head_loss(0.1, 0.3, 1000.0, 130.0), 3)
    6.423
    """
    (q, d, length_, c), tpl = as_float_arrays(flow, diameter, length, c_factor)
    _check_nonnegative(q, "flow")
    _check_positive(d, "diameter")
    _check_positive(c, "c_factor")
    _check_nonnegative(length_, "length")
    _hw_validity(q / (np.pi * d * d / 4.0), d)
    return restore(HAZEN_WILLIAMS_SI_K * length_ * q**1.852 / (c**1.852 * d**4.8704), tpl)


def hazen_williams_c_from_roughness(roughness: Any, diameter: Any, velocity: Any,
                                    density: Any, viscosity: Any) -> Any:
    """Hazen–Williams C that gives the same head loss as Colebrook–White at (D, V).

    Equates the Hazen–Williams and Darcy–Weisbach slopes at one diameter and velocity:
    :math:`C = [10.67\\, Q^{1.852} / (S\\, D^{4.8704})]^{1/1.852}` with
    :math:`S = f V^2 / (2 g D)` and f from Colebrook–White.

    Parameters
    ----------
    roughness : float or array_like
        Absolute roughness [m].
    diameter : float or array_like
        Inner diameter [m].
    velocity : float or array_like
        Mean velocity [m/s], positive.
    density : float or array_like
        Fluid density [kg/m³].
    viscosity : float or array_like
        Dynamic viscosity [Pa·s].

    Returns
    -------
    float, ndarray or Series
        Equivalent C [-], valid only near this diameter and velocity.

    Examples
    --------
    >>> round(hazen_williams_c_from_roughness(4.5e-5, 0.3, 1.5, 998.2, 1.0016e-3), 1)
    145.9
    """
    (eps, d, v, rho, mu), tpl = as_float_arrays(roughness, diameter, velocity, density,
                                                viscosity)
    _check_positive(v, "velocity")
    _check_positive(d, "diameter")
    _check_nonnegative(eps, "roughness")
    re = reynolds_number(v, d, rho, mu)
    f = friction_factor(re, eps / d, transition="raise")
    slope = f * v * v / (2.0 * GRAVITY * d)
    q = v * np.pi * d * d / 4.0
    return restore((HAZEN_WILLIAMS_SI_K * q**1.852 / (slope * d**4.8704)) ** (1 / 1.852), tpl)


def roughness_from_hazen_williams_c(c_factor: Any, diameter: Any, velocity: Any,
                                    density: Any, viscosity: Any) -> Any:
    """Absolute roughness that gives the Hazen–Williams head loss of C at (D, V).

    The Darcy friction factor implied by the Hazen–Williams slope is
    :math:`f = 2 g D S / V^2`; Colebrook–White is then solved for the roughness in closed form,
    :math:`\\varepsilon = 3.7 D\\,[10^{-1/(2\\sqrt f)} - 2.51/(Re\\sqrt f)]`.

    Parameters
    ----------
    c_factor : float or array_like
        Hazen–Williams C [-].
    diameter : float or array_like
        Inner diameter [m].
    velocity : float or array_like
        Mean velocity [m/s], positive.
    density : float or array_like
        Fluid density [kg/m³].
    viscosity : float or array_like
        Dynamic viscosity [Pa·s].

    Returns
    -------
    float, ndarray or Series
        Equivalent absolute roughness [m].

    Raises
    ------
    InputError
        When C implies less friction than a hydraulically smooth pipe at that Reynolds number
        (no roughness can reproduce it), or the flow is not turbulent.

    Examples
    --------
    >>> round(roughness_from_hazen_williams_c(100.0, 0.3, 1.0, 998.2, 1.0016e-3) * 1e3, 3)
    1.785
    """
    (c, d, v, rho, mu), tpl = as_float_arrays(c_factor, diameter, velocity, density, viscosity)
    _check_positive(c, "c_factor")
    _check_positive(v, "velocity")
    _check_positive(d, "diameter")
    re = reynolds_number(v, d, rho, mu)
    if np.min(re) < TURBULENT_LIMIT:
        raise InputError(f"velocity: Hazen-Williams needs turbulent flow (Re >= 4000); got "
                         f"Re = {_first_bad(re, re < TURBULENT_LIMIT)}")
    q = v * np.pi * d * d / 4.0
    slope = HAZEN_WILLIAMS_SI_K * q**1.852 / (c**1.852 * d**4.8704)
    f = 2.0 * GRAVITY * d * slope / (v * v)
    sf = np.sqrt(f)
    eps = 3.7 * d * (10.0 ** (-1.0 / (2.0 * sf)) - 2.51 / (re * sf))
    if np.any(eps < 0):
        raise InputError(f"c_factor: C = {_first_bad(c, eps < 0)} implies less friction than "
                         f"a smooth pipe at this diameter and velocity; no roughness matches it")
    return restore(eps, tpl)


def roughness_from_head_loss(flow: float, diameter: float, length: float, head_loss: float,
                             density: float, viscosity: float, k_sum: float = 0.0) -> float:
    """Effective absolute roughness that reproduces a measured friction head loss.

    Inverts Darcy–Weisbach with Colebrook–White: finds ε such that
    ``line_head_loss(flow, diameter, length, ε, ...) == head_loss`` with Brent's method
    (:func:`scipy.optimize.brentq`) on ε between 0 and the Moody-chart bound 0.05 D. The
    section may include fittings (``k_sum``), which is why the root is found numerically rather
    than from the closed-form inverse.

    Parameters
    ----------
    flow : float
        Measured flow [m³/s], positive.
    diameter : float
        Inner diameter of the section [m].
    length : float
        Length between the pressure taps [m].
    head_loss : float
        Measured friction head loss between the taps [m].
    density, viscosity : float
        Fluid properties [kg/m³], [Pa·s].
    k_sum : float, optional
        Minor-loss coefficients of fittings between the taps [-].

    Returns
    -------
    float
        Effective absolute roughness [m].

    Raises
    ------
    InputError
        When the measured loss is not positive, is below that of a smooth pipe (the test
        implies less friction than is physically possible: check the gauges, elevations and
        flow), or needs a roughness beyond 0.05 D (beyond the Moody chart: the bore is probably
        smaller than assumed, or the section holds a partly closed valve or an obstruction).
        The flow must be turbulent (Re >= 4000).

    Examples
    --------
    >>> eps = roughness_from_head_loss(0.06, 0.3, 1000.0, 3.0, 999.1, 1.1376e-3)
    >>> round(line_head_loss(0.06, 0.3, 1000.0, eps, 999.1, 1.1376e-3), 9)
    3.0
    """
    from scipy import optimize

    for name, value in (("flow", flow), ("diameter", diameter), ("length", length)):
        if not (np.isfinite(value) and value > 0):
            raise InputError(f"field test: {name} must be positive; got {value!r}")
    if not np.isfinite(head_loss) or head_loss <= 0:
        raise InputError(f"field test: the measured friction loss is {head_loss:.4g} m; it must "
                         f"be positive (check the pressures, the elevations and the flow "
                         f"direction)")
    v = flow / (np.pi * diameter**2 / 4.0)
    re = density * v * diameter / viscosity
    if re < TURBULENT_LIMIT:
        raise InputError(f"field test: Re = {re:.0f} is not turbulent; a roughness cannot be "
                         f"inferred from laminar or transitional flow")

    def excess(eps: float) -> float:
        return line_head_loss(flow, diameter, length, eps, density, viscosity, k_sum) - head_loss

    smooth = excess(0.0) + head_loss
    if excess(0.0) > 0:
        raise InputError(f"field test: the measured loss {head_loss:.4g} m is below the "
                         f"{smooth:.4g} m of a hydraulically smooth pipe of this bore; the test "
                         f"implies an implausible negative roughness (check gauges, elevations, "
                         f"flow and bore)")
    eps_max = MAX_RELATIVE_ROUGHNESS * diameter
    if excess(eps_max) < 0:
        raise InputError(f"field test: the measured loss {head_loss:.4g} m needs a roughness "
                         f"above 0.05 of the bore ({eps_max * 1e3:.3g} mm), beyond the Moody "
                         f"chart: the bore is probably smaller than assumed, or a valve or "
                         f"obstruction is in the section")
    return float(optimize.brentq(excess, 0.0, eps_max, xtol=1e-15, rtol=1e-13, maxiter=200))


def hazen_williams_c_from_head_loss(flow: Any, diameter: Any, length: Any,
                                    head_loss: Any) -> Any:
    """Hazen–Williams C that reproduces a measured head loss (the formula solved for C).

    .. math:: C = \\left(\\frac{10.67\\, L\\, Q^{1.852}}{h\\, D^{4.8704}}\\right)^{1/1.852}

    Parameters
    ----------
    flow : float or array_like
        Flow [m³/s].
    diameter : float or array_like
        Inner diameter [m].
    length : float or array_like
        Length of the section [m].
    head_loss : float or array_like
        Friction head loss over the section [m], positive.

    Returns
    -------
    float, ndarray or Series
        C [-].

    Examples
    --------
    >>> h = hazen_williams_head_loss(0.1, 0.3, 1000.0, 110.0)
    >>> round(hazen_williams_c_from_head_loss(0.1, 0.3, 1000.0, h), 9)
    110.0
    """
    (q, d, length_, h), tpl = as_float_arrays(flow, diameter, length, head_loss)
    _check_positive(q, "flow")
    _check_positive(d, "diameter")
    _check_positive(length_, "length")
    _check_positive(h, "head_loss")
    return restore((HAZEN_WILLIAMS_SI_K * length_ * q**1.852 / (h * d**4.8704)) ** (1 / 1.852),
                   tpl)
