"""Pressure ratings of pipe (physics layer): Barlow's formula for steel, PN from SDR for plastics.

These give the rating a sizing study checks the highest pump head plus a surge allowance against.
They are screening values: the rating of a real line also depends on the joints, fittings,
temperature derating, the governing code and the manufacturer's data. A qualified engineer and
the local code decide.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import InputError

__all__ = ["STEEL_DEFAULTS", "STAINLESS_DEFAULTS", "barlow_pressure", "pn_from_sdr",
           "derating_factor"]

#: Barlow defaults for carbon steel: allowable stress 137.9 MPa (20 ksi: ASME B31.3 Table A-1,
#: A106 Gr B and API 5L Gr B at ambient, from memory, verify), joint factor 1.0 (seamless),
#: corrosion allowance 1.5 mm (common practice for water service), mill under-tolerance 12.5 %
#: (ASTM A106 / A53, from memory).
STEEL_DEFAULTS = {"allowable_stress": 137.9e6, "joint_factor": 1.0,
                  "corrosion_allowance": 1.5e-3, "mill_tolerance": 0.125}
#: Barlow defaults for stainless steel: 115 MPa (16.7 ksi, ASME B31.3 Table A-1 for 304L at
#: ambient, from memory, verify), joint factor 1.0, no corrosion allowance, 12.5 % under-tolerance.
STAINLESS_DEFAULTS = {"allowable_stress": 115.0e6, "joint_factor": 1.0,
                      "corrosion_allowance": 0.0, "mill_tolerance": 0.125}


def barlow_pressure(outside_diameter: Any, wall: Any, allowable_stress: Any,
                    joint_factor: Any = 1.0, corrosion_allowance: Any = 0.0,
                    mill_tolerance: Any = 0.125) -> Any:
    """Allowable internal pressure of a pipe by Barlow's formula.

    .. math:: p = \\frac{2 S E\\, t}{D_o}, \\qquad t = e (1 - m) - c

    Parameters
    ----------
    outside_diameter : float or array_like
        Outside diameter D_o [m].
    wall : float or array_like
        Nominal wall thickness e [m].
    allowable_stress : float or array_like
        Allowable hoop stress S [Pa].
    joint_factor : float or array_like, optional
        Longitudinal weld joint factor E [-], 0 < E <= 1 (1.0 for seamless pipe).
    corrosion_allowance : float or array_like, optional
        Thickness c lost to corrosion and erosion over the life [m].
    mill_tolerance : float or array_like, optional
        Fractional under-tolerance m of the nominal wall [-].

    Returns
    -------
    float, ndarray or Series
        Allowable internal pressure [Pa] (gauge); 0 where the allowances consume the wall.

    References
    ----------
    .. [1] Barlow's formula as used in ASME B31.3, para. 304.1.2, eq. (3a), thin-wall form with
       Y = 0 (from memory).

    Examples
    --------
    >>> round(barlow_pressure(0.1143, 6.02e-3, 137.9e6, corrosion_allowance=0.0,
    ...                       mill_tolerance=0.0) / 1e5, 1)
    145.3
    """
    (do, e, s, ej, c, m), tpl = as_float_arrays(outside_diameter, wall, allowable_stress,
                                                joint_factor, corrosion_allowance,
                                                mill_tolerance)
    if np.any(do <= 0) or np.any(e <= 0):
        raise InputError("outside_diameter and wall must be positive")
    if np.any(2 * e >= do):
        raise InputError("wall must be less than half the outside diameter")
    if np.any(s <= 0):
        raise InputError(f"allowable_stress must be positive; got {s.ravel()[0]!r}")
    if np.any((ej <= 0) | (ej > 1)):
        raise InputError("joint_factor must be in (0, 1]")
    if np.any(c < 0) or np.any((m < 0) | (m >= 1)):
        raise InputError("corrosion_allowance must be >= 0 and mill_tolerance in [0, 1)")
    t = np.maximum(e * (1.0 - m) - c, 0.0)
    return restore(2.0 * s * ej * t / do, tpl)


def pn_from_sdr(sdr: Any, mrs: Any, design_coefficient: Any = 1.25) -> Any:
    """Nominal pressure of a plastic pipe from its SDR, MRS and design coefficient.

    .. math:: p = \\frac{2\\, \\mathrm{MRS}}{C\\,(\\mathrm{SDR} - 1)}

    which is PN = 20 MRS / (C (SDR − 1)) with MRS in MPa and PN in bar (ISO 4427-1 / EN 12201-1,
    from memory). The standards then round PN down to the R10 series.

    Parameters
    ----------
    sdr : float or array_like
        Standard dimension ratio, outside diameter over wall [-], > 1.
    mrs : float or array_like
        Minimum required strength [Pa] (10 MPa for PE 100, 8 MPa for PE 80).
    design_coefficient : float or array_like, optional
        Overall service (design) coefficient C [-], 1.25 for PE in water at 20 °C.

    Returns
    -------
    float, ndarray or Series
        Allowable operating pressure [Pa] before R10 rounding.

    Examples
    --------
    >>> pn_from_sdr(11, 10e6) / 1e5   # PE 100 SDR 11 is PN 16
    16.0
    """
    (d, m, c), tpl = as_float_arrays(sdr, mrs, design_coefficient)
    if np.any(d <= 1):
        raise InputError(f"sdr must be greater than 1; got {d.ravel()[np.argmin(d)]!r}")
    if np.any(m <= 0) or np.any(c <= 0):
        raise InputError("mrs and design_coefficient must be positive")
    return restore(2.0 * m / (c * (d - 1.0)), tpl)


def derating_factor(temperature: Any, table_temperature: Any, table_factor: Any) -> Any:
    """Temperature derating factor of a pressure rating from a published table.

    Linear between the table's points; the first factor below the first point (the rating's
    reference temperature). Above the last point the rating is not defined: NaN (the caller
    treats it as outside the material's service range).

    Parameters
    ----------
    temperature : float or array_like
        Service temperature [K].
    table_temperature : array_like
        The table's temperatures [K], increasing.
    table_factor : array_like
        The table's factors f = PFA(T) / PN [-].

    Returns
    -------
    float, ndarray or Series
        f(T) [-].

    Examples
    --------
    >>> t = [293.15, 303.15, 313.15]                # 20, 30, 40 degC
    >>> round(derating_factor(308.15, t, [1.0, 0.87, 0.74]), 3)
    0.805
    """
    (tt,), tpl = as_float_arrays(temperature)
    tx = np.asarray(table_temperature, dtype=float)
    fx = np.asarray(table_factor, dtype=float)
    out = np.interp(tt, tx, fx, left=fx[0], right=np.nan)
    return restore(np.where(tt > tx[-1] + 1e-9, np.nan, out), tpl)
