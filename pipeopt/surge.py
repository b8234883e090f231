"""Surge screening (physics layer): Korteweg wave speed and the Joukowsky head rise.

A screening value for the pressure check of a sizing study, not a transient analysis: the
Joukowsky rise is the largest head change of an instantaneous velocity change, before friction,
line packing, column separation or protection devices. A qualified engineer must assess surge
with a proper transient analysis before a design is fixed.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError
from .friction import GRAVITY

__all__ = ["RESTRAINTS", "wave_speed", "joukowsky_head"]

#: Restraint cases of the Korteweg formula and their factor c1 (Wylie & Streeter 1993, thin
#: walled pipe; from memory): expansion joints throughout c1 = 1; anchored at the upstream end
#: only c1 = 1 - nu/2; anchored throughout against axial movement c1 = 1 - nu^2.
RESTRAINTS = ("expansion-joints", "anchored-one-end", "anchored-throughout")


def wave_speed(bulk_modulus: Any, density: Any, diameter: Any, wall: Any, elastic_modulus: Any,
               poisson_ratio: Any = 0.3, restraint: str = "expansion-joints") -> Any:
    """Pressure-wave speed in a liquid-filled elastic pipe, Korteweg's formula.

    .. math:: a = \\frac{\\sqrt{K/\\rho}}{\\sqrt{1 + c_1 K D / (E e)}}

    Parameters
    ----------
    bulk_modulus : float or array_like
        Bulk modulus of the liquid K [Pa] (about 2.19 GPa for water at 20 °C).
    density : float or array_like
        Liquid density ρ [kg/m³].
    diameter : float or array_like
        Pipe diameter D [m]; pipeopt passes the mean diameter (outside diameter − wall), which
        is what thin-wall theory means and is also right for thicker plastic pipe.
    wall : float or array_like
        Wall thickness e [m].
    elastic_modulus : float or array_like
        Young's modulus of the wall E [Pa] (short-term modulus for plastics).
    poisson_ratio : float or array_like, optional
        Poisson's ratio ν of the wall [-].
    restraint : {"expansion-joints", "anchored-one-end", "anchored-throughout"}
        Axial restraint of the pipe (see :data:`RESTRAINTS`).

    Returns
    -------
    float, ndarray or Series
        Wave speed [m/s].

    References
    ----------
    .. [1] E. B. Wylie, V. L. Streeter, Fluid Transients in Systems, Prentice Hall, 1993,
       chapter 2, the factor c1 of the restraint cases (from memory).
    .. [2] D. J. Korteweg, "Ueber die Fortpflanzungsgeschwindigkeit des Schalles in elastischen
       Röhren", Ann. Phys. Chem. 241(12), 525–542, 1878.

    Examples
    --------
    >>> round(wave_speed(2.19e9, 998.2, 30.0, 1.0, 207e9))   # steel, D/e = 30
    1290
    """
    if restraint not in RESTRAINTS:
        raise InputError(f"restraint must be one of {', '.join(RESTRAINTS)}; got {restraint!r}")
    (k, rho, d, e, emod, nu), tpl = as_float_arrays(bulk_modulus, density, diameter, wall,
                                                    elastic_modulus, poisson_ratio)
    for name, arr in (("bulk_modulus", k), ("density", rho), ("diameter", d), ("wall", e),
                      ("elastic_modulus", emod)):
        if np.any(~(arr > 0)):
            raise InputError(f"{name} must be positive; got {arr.ravel()[np.argmin(arr)]!r}")
    if np.any((nu < 0) | (nu >= 0.5)):
        raise InputError("poisson_ratio must be in [0, 0.5)")
    c1 = {"expansion-joints": np.ones_like(nu), "anchored-one-end": 1.0 - nu / 2.0,
          "anchored-throughout": 1.0 - nu * nu}[restraint]
    return restore(np.sqrt(k / rho) / np.sqrt(1.0 + c1 * k * d / (emod * e)), tpl)


def joukowsky_head(wave_speed: Any, velocity_change: Any) -> Any:
    """Head rise of an instantaneous velocity change, Joukowsky: ΔH = a ΔV / g.

    Parameters
    ----------
    wave_speed : float or array_like
        Pressure-wave speed a [m/s].
    velocity_change : float or array_like
        Magnitude of the velocity change ΔV [m/s] (the full velocity for a sudden stop).

    Returns
    -------
    float, ndarray or Series
        Head rise [m of liquid].

    References
    ----------
    .. [1] N. Joukowsky, "Über den hydraulischen Stoss in Wasserleitungsröhren", 1900; English
       translation by O. Simin, Proc. AWWA 24, 341–424, 1904.

    Examples
    --------
    >>> round(joukowsky_head(1000.0, 1.5), 2)
    152.96
    """
    (a, dv), tpl = as_float_arrays(wave_speed, velocity_change)
    if np.any(~(a > 0)):
        raise InputError("wave_speed must be positive")
    return restore(a * np.abs(dv) / GRAVITY, tpl)
