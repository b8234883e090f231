"""Pumps (physics layer): affinity laws, efficiency and head against flow, NPSH, the atmosphere.

Pure, vectorized functions on SI floats and arrays, each named after the law it implements:

- :func:`affinity_laws`: flow, head and power of a centrifugal pump at another speed;
- :func:`bep_efficiency_curve`: pump efficiency against flow from the best-efficiency point,
  at any speed (a parabola through the origin that obeys the affinity laws);
- :func:`quadratic_pump_head`: the head curve of a pump, shut-off head less a term in flow
  squared, at any speed;
- :func:`speed_for_head`: the speed ratio at which that pump meets a given flow and head;
- :func:`npsh_available`: net positive suction head available at a pump inlet;
- :func:`standard_atmosphere_pressure`: the barometric pressure of the standard atmosphere at
  an elevation (for absolute pressures along a line and at a pump inlet).

References
----------
.. [1] J. F. Gülich, *Centrifugal Pumps*, 3rd ed., Springer, 2014, section 3.4, "Similarity
   laws" (from memory).
.. [2] B. Ulanicki, J. Kahler, B. Coulbeck, "Modeling the efficiency and power characteristics
   of a pump group", J. Water Resour. Plann. Manage. 134(1):88–93, 2008,
   doi:10.1061/(ASCE)0733-9496(2008)134:1(88) (from memory).
.. [3] ISO 9906:2012, *Rotodynamic pumps — Hydraulic performance acceptance tests*: the
   definition of NPSH as the total head at the inlet less the vapour-pressure head.
.. [4] ISO 2533:1975, *Standard Atmosphere* (the same constants as the ICAO standard
   atmosphere).
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError
from .friction import GRAVITY

__all__ = ["affinity_laws", "bep_efficiency_curve", "quadratic_pump_head", "speed_for_head",
           "npsh_available", "standard_atmosphere_pressure", "SEA_LEVEL_PRESSURE"]

#: Standard sea-level pressure [Pa] (ISO 2533).
SEA_LEVEL_PRESSURE = 101325.0
_T0 = 288.15          # K, sea-level temperature of the standard atmosphere
_LAPSE = 0.0065       # K/m, temperature gradient of the troposphere
_MOLAR_MASS = 0.0289644    # kg/mol, dry air
_GAS_CONSTANT = 8.3144598  # J/(mol K)


def affinity_laws(flow: Any, head: Any, power: Any, speed_ratio: Any) -> tuple[Any, Any, Any]:
    """Flow, head and shaft power of a centrifugal pump at another speed (the affinity laws).

    Q₂ = Q₁ n,  H₂ = H₁ n²,  P₂ = P₁ n³,  with n = n₂ / n₁; the efficiency is the same at the
    two similar points.

    Parameters
    ----------
    flow : float or array_like
        Flow at the first speed [m³/s].
    head : float or array_like
        Head at the first speed [m].
    power : float or array_like
        Shaft power at the first speed [W].
    speed_ratio : float or array_like
        n = n₂ / n₁ [-], positive.

    Returns
    -------
    flow, head, power
        At the second speed [m³/s], [m], [W], of the kind given.

    Notes
    -----
    The laws hold between similar operating points of one pump (the same impeller, the same
    flow coefficient); they neglect the change of the Reynolds number, which lowers the
    efficiency a little at much reduced speed.

    References
    ----------
    .. [1] J. F. Gülich, *Centrifugal Pumps*, 3rd ed., Springer, 2014, section 3.4 (from
       memory).

    Examples
    --------
    >>> [round(x, 9) for x in affinity_laws(0.1, 40.0, 50e3, 0.8)]
    [0.08, 25.6, 25600.0]
    """
    (q, h, p, n), tpl = as_float_arrays(flow, head, power, speed_ratio)
    if np.any(n <= 0):
        raise InputError(f"speed_ratio must be positive; got {float(np.min(n))!r}")
    return restore(q * n, tpl), restore(h * n * n, tpl), restore(p * n**3, tpl)


def bep_efficiency_curve(flow: Any, bep_flow: Any, bep_efficiency: Any,
                         speed_ratio: Any = 1.0) -> Any:
    """Pump efficiency against flow from the best-efficiency point, at any speed.

    η = η_BEP x (2 − x),  x = Q / (n Q_BEP):

    a parabola that is zero at no flow, equal to η_BEP at the best-efficiency flow and zero
    again at twice that flow. Written with Q / n, it obeys the affinity laws: similar points at
    another speed have the same efficiency.

    Parameters
    ----------
    flow : float or array_like
        Flow [m³/s].
    bep_flow : float or array_like
        Flow at the best-efficiency point at full speed, Q_BEP [m³/s], positive.
    bep_efficiency : float or array_like
        Efficiency at that point, η_BEP [-], in (0, 1].
    speed_ratio : float or array_like
        Speed over full speed, n [-], positive.

    Returns
    -------
    float or ndarray
        Pump efficiency [-]; zero or negative beyond x = 2 (the caller decides what that means).

    Notes
    -----
    The two-coefficient form η = E₁ (Q/n) + E₂ (Q/n)² of Ulanicki et al. (2008), with E₁ and E₂
    fixed by a zero at Q = 0 and the maximum η_BEP at Q_BEP: E₁ = 2 η_BEP / Q_BEP,
    E₂ = −η_BEP / Q_BEP². Good near the best point (within about 50–130 % of Q_BEP);
    a real pump's curve should replace it for a final selection.

    References
    ----------
    .. [1] B. Ulanicki, J. Kahler, B. Coulbeck, "Modeling the efficiency and power
       characteristics of a pump group", J. Water Resour. Plann. Manage. 134(1):88–93, 2008
       (from memory).

    Examples
    --------
    >>> round(bep_efficiency_curve(0.08, 0.1, 0.8), 6)
    0.768
    >>> round(bep_efficiency_curve(0.064, 0.1, 0.8, speed_ratio=0.8), 6)  # a similar point
    0.768
    """
    (q, qb, eb, n), tpl = as_float_arrays(flow, bep_flow, bep_efficiency, speed_ratio)
    if np.any(qb <= 0) or np.any(n <= 0):
        raise InputError("bep_flow and speed_ratio must be positive")
    if np.any((eb <= 0) | (eb > 1)):
        raise InputError(f"bep_efficiency must be in (0, 1]; got {float(np.max(eb))!r}")
    x = q / (n * qb)
    return restore(eb * x * (2.0 - x), tpl)


def quadratic_pump_head(flow: Any, shutoff_head: Any, curve_coefficient: Any,
                        speed_ratio: Any = 1.0) -> Any:
    """Head of a pump with a quadratic head curve, at any speed.

    H = n² H₀ − k Q²  (the affinity laws applied to H = H₀ − k Q² at full speed).

    Parameters
    ----------
    flow : float or array_like
        Flow [m³/s].
    shutoff_head : float or array_like
        Head at no flow and full speed, H₀ [m].
    curve_coefficient : float or array_like
        k [s²/m⁵] (head falls by k Q² at flow Q).
    speed_ratio : float or array_like
        n [-].

    Returns
    -------
    float or ndarray
        Head [m].

    References
    ----------
    .. [1] J. F. Gülich, *Centrifugal Pumps*, 3rd ed., Springer, 2014, section 3.4 (from
       memory).

    Examples
    --------
    >>> quadratic_pump_head(0.1, 60.0, 2000.0)
    40.0
    """
    (q, h0, k, n), tpl = as_float_arrays(flow, shutoff_head, curve_coefficient, speed_ratio)
    return restore(n * n * h0 - k * q * q, tpl)


def speed_for_head(flow: Any, head: Any, shutoff_head: Any, curve_coefficient: Any) -> Any:
    """Speed ratio at which a pump of curve H = n² H₀ − k Q² delivers ``flow`` at ``head``.

    n = √((H + k Q²) / H₀).

    Parameters
    ----------
    flow : float or array_like
        Flow [m³/s].
    head : float or array_like
        Head required [m], not negative.
    shutoff_head : float or array_like
        H₀ [m], positive.
    curve_coefficient : float or array_like
        k [s²/m⁵].

    Returns
    -------
    float or ndarray
        n [-]; above 1 when the pump cannot deliver the point at full speed.

    Examples
    --------
    >>> round(speed_for_head(0.1, 40.0, 60.0, 2000.0), 12)
    1.0
    """
    (q, h, h0, k), tpl = as_float_arrays(flow, head, shutoff_head, curve_coefficient)
    if np.any(h0 <= 0):
        raise InputError("shutoff_head must be positive")
    return restore(np.sqrt(np.maximum(h + k * q * q, 0.0) / h0), tpl)


def npsh_available(pressure: Any, vapour_pressure: Any, density: Any,
                   velocity: Any = 0.0) -> Any:
    """Net positive suction head available at a pump inlet.

    NPSHA = (p_abs − p_v) / (ρ g) + V² / (2 g): the total head at the inlet, absolute, less the
    vapour-pressure head of the liquid.

    Parameters
    ----------
    pressure : float or array_like
        Absolute static pressure at the pump inlet (at the impeller eye level) [Pa].
    vapour_pressure : float or array_like
        Vapour pressure of the liquid at its temperature [Pa].
    density : float or array_like
        Liquid density [kg/m³].
    velocity : float or array_like
        Mean velocity in the inlet [m/s] (0 leaves out the velocity head, which is
        conservative).

    Returns
    -------
    float or ndarray
        NPSHA [m].

    References
    ----------
    .. [1] ISO 9906:2012, Rotodynamic pumps — Hydraulic performance acceptance tests
       (definition of NPSH, from memory).

    Examples
    --------
    >>> round(npsh_available(101325.0 - 2.0 * 998.2 * 9.80665, 2339.0, 998.2), 4)
    8.112
    """
    (p, pv, rho, v), tpl = as_float_arrays(pressure, vapour_pressure, density, velocity)
    return restore((p - pv) / (rho * GRAVITY) + v * v / (2.0 * GRAVITY), tpl)


def standard_atmosphere_pressure(elevation: Any) -> Any:
    """Barometric pressure of the standard atmosphere at an elevation (troposphere).

    p = p₀ (1 − L z / T₀)^(g M / (R L)),  p₀ = 101 325 Pa, T₀ = 288.15 K, L = 0.0065 K/m,
    M = 0.0289644 kg/mol, R = 8.3144598 J/(mol K), g = 9.80665 m/s².

    Parameters
    ----------
    elevation : float or array_like
        Elevation above mean sea level [m], from −5000 to 11 000.

    Returns
    -------
    float or ndarray
        Pressure [Pa].

    References
    ----------
    .. [1] ISO 2533:1975, Standard Atmosphere (from memory).

    Examples
    --------
    >>> round(standard_atmosphere_pressure(1000.0), 0)
    89875.0
    """
    (z,), tpl = as_float_arrays(elevation)
    if np.any((z < -5000.0) | (z > 11000.0)):
        raise InputError(f"elevation must be within -5000 to 11000 m for the standard "
                         f"atmosphere; got {float(z[(z < -5000) | (z > 11000)][0])!r}")
    exponent = GRAVITY * _MOLAR_MASS / (_GAS_CONSTANT * _LAPSE)
    return restore(SEA_LEVEL_PRESSURE * (1.0 - _LAPSE * z / _T0) ** exponent, tpl)
