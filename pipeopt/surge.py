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

__all__ = ["RESTRAINTS", "WALL_THEORIES", "wave_speed", "joukowsky_head"]

#: Restraint cases of the Korteweg formula (Wylie & Streeter 1993, from memory), with the
#: factor psi of each: expansion joints throughout psi = 1; anchored at the upstream end only
#: psi = 1 - nu/2; anchored throughout against axial movement psi = 1 - nu^2.
RESTRAINTS = ("expansion-joints", "anchored-one-end", "anchored-throughout")
#: Wall theories: "thick" (Wylie & Streeter's thick-walled factor, right for any wall) and
#: "thin" (Korteweg's thin-walled form, its limit for D/e large).
WALL_THEORIES = ("thick", "thin")


def wave_speed(bulk_modulus: Any, density: Any, diameter: Any, wall: Any, elastic_modulus: Any,
               poisson_ratio: Any = 0.3, restraint: str = "expansion-joints",
               wall_theory: str = "thick") -> Any:
    """Pressure-wave speed in a liquid-filled elastic pipe, Korteweg's formula.

    .. math:: a = \\frac{\\sqrt{K/\\rho}}{\\sqrt{1 + c_1 K D / (E e)}}

    Parameters
    ----------
    bulk_modulus : float or array_like
        Bulk modulus of the liquid K [Pa] (about 2.19 GPa for water at 20 °C).
    density : float or array_like
        Liquid density ρ [kg/m³].
    diameter : float or array_like
        Mean diameter of the wall D_m = outside diameter − wall [m]. The thin-wall form uses
        it as D; the thick-wall form uses the inner diameter D = D_m − e.
    wall : float or array_like
        Wall thickness e [m].
    elastic_modulus : float or array_like
        Young's modulus of the wall E [Pa] (short-term modulus for plastics).
    poisson_ratio : float or array_like, optional
        Poisson's ratio ν of the wall [-].
    restraint : {"expansion-joints", "anchored-one-end", "anchored-throughout"}
        Axial restraint of the pipe (see :data:`RESTRAINTS`).
    wall_theory : {"thick", "thin"}
        ``"thick"`` (default): :math:`c_1 = 2 (e/D)(1 + ν) + ψ D/(D + e)` with D the inner
        diameter, Wylie & Streeter's factor for thick-walled conduits; it tends to the thin
        form as e/D → 0 and matters for plastic pipe (PE 100 SDR 11: 4.5 % slower than the
        thin form on the mean diameter). ``"thin"``: :math:`c_1 = ψ`, D the mean diameter,
        the thin-walled form (D/e above about 25).

    Returns
    -------
    float, ndarray or Series
        Wave speed [m/s].

    Notes
    -----
    ψ is the restraint factor: 1 (expansion joints), 1 − ν/2 (anchored at one end),
    1 − ν² (anchored throughout).

    References
    ----------
    .. [1] E. B. Wylie, V. L. Streeter, Fluid Transients in Systems, Prentice Hall, 1993,
       chapter 2: the thin-walled restraint factors and the factors c1 for thick-walled
       elastic conduits (from memory).
    .. [2] D. J. Korteweg, "Ueber die Fortpflanzungsgeschwindigkeit des Schalles in elastischen
       Röhren", Ann. Phys. Chem. 241(12), 525–542, 1878.

    Examples
    --------
    >>> round(wave_speed(2.19e9, 998.2, 30.0, 1.0, 207e9, wall_theory="thin"), 2)  # steel
    1290.49
    >>> round(wave_speed(2.19e9, 998.2, 30.0, 1.0, 207e9), 2)
    1287.22
    """
    if restraint not in RESTRAINTS:
        raise InputError(f"restraint must be one of {', '.join(RESTRAINTS)}; got {restraint!r}")
    if wall_theory not in WALL_THEORIES:
        raise InputError(f"wall_theory must be one of {', '.join(WALL_THEORIES)}; "
                         f"got {wall_theory!r}")
    (k, rho, d, e, emod, nu), tpl = as_float_arrays(bulk_modulus, density, diameter, wall,
                                                    elastic_modulus, poisson_ratio)
    for name, arr in (("bulk_modulus", k), ("density", rho), ("diameter", d), ("wall", e),
                      ("elastic_modulus", emod)):
        if np.any(~(arr > 0)):
            raise InputError(f"{name} must be positive; got {arr.ravel()[np.argmin(arr)]!r}")
    if np.any((nu < 0) | (nu >= 0.5)):
        raise InputError("poisson_ratio must be in [0, 0.5)")
    psi = {"expansion-joints": np.ones_like(nu), "anchored-one-end": 1.0 - nu / 2.0,
           "anchored-throughout": 1.0 - nu * nu}[restraint]
    if wall_theory == "thin":
        c1 = psi
    else:  # thick-walled conduit: D is the inner diameter
        if np.any(~(d > e)):
            raise InputError("diameter (the mean diameter) must exceed the wall")
        d = d - e
        c1 = 2.0 * e / d * (1.0 + nu) + psi * d / (d + e)
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
