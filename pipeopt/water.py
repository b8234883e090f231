"""Liquid water from the IAPWS formulations, computed here (physics layer).

IAPWS-95 [1]_ gives the Helmholtz energy of water as a function of density and temperature;
everything else follows from its derivatives: the pressure (so the density at a temperature and
pressure, by Newton's method), the speed of sound (so the isentropic bulk modulus) and the
saturation pressure (equal pressure and Gibbs energy of liquid and vapour). IAPWS R12-08 [2]_
gives the viscosity as a function of density and temperature. These functions need numpy only,
so a study with water loads no fluid library (:meth:`pipeopt.fluid.Fluid.water` calls them; other
fluids still go through CoolProp).

Range
-----
:data:`T_MIN` to :data:`T_MAX` (0.01–200 °C) and pressures up to :data:`P_MAX` (500 bar): the
liquid states of pumped lines. The two non-analytic terms of IAPWS-95 (Table 2, i = 55, 56) are
left out: they carry a factor exp(−700 (τ − 1)²) < 1e-40 over this range, far below the last
digit of a double. Outside the range the functions raise :class:`~pipeopt.errors.InputError`.

Every function takes SI floats or arrays (or lists, or Series), broadcasts them like numpy and
gives back the same kind.

References
----------
.. [1] IAPWS R6-95(2018), Revised Release on the IAPWS Formulation 1995 for the Thermodynamic
   Properties of Ordinary Water Substance for General and Scientific Use; W. Wagner, A. Pruß,
   "The IAPWS formulation 1995 for the thermodynamic properties of ordinary water substance
   for general and scientific use", J. Phys. Chem. Ref. Data 31(2):387–535, 2002.
   doi:10.1063/1.1461829. Tables 1, 2 (coefficients), 4, 5 (derivatives), 3 (relations).
.. [2] IAPWS R12-08, Release on the IAPWS Formulation 2008 for the Viscosity of Ordinary Water
   Substance, 2008; M. L. Huber et al., "New international formulation for the viscosity of
   H2O", J. Phys. Chem. Ref. Data 38(2):101–125, 2009. doi:10.1063/1.3088050. Eqs. (10)–(21),
   Tables 1–3.
.. [3] W. Wagner, A. Pruß, "International equations for the saturation properties of ordinary
   water substance. Revised according to the International Temperature Scale of 1990",
   J. Phys. Chem. Ref. Data 22(3):783–787, 1993 (IAPWS SR1-86(1992)), eqs. (1), (2): the
   starting values of the saturation solve.

Examples
--------
>>> round(iapws95_density(293.15, 101325.0), 4)
998.2072
>>> round(iapws2008_viscosity(298.15, 998.0) * 1e6, 6)   # R12-08 verification value
889.7351
"""

from __future__ import annotations

from typing import Any

import numpy as np

from ._arrays import as_float_arrays, restore
from .errors import FluidStateError, InputError

__all__ = ["T_MIN", "T_MAX", "P_MAX", "T_CRITICAL", "RHO_CRITICAL", "P_CRITICAL",
           "GAS_CONSTANT", "iapws95_density", "iapws95_saturation_pressure",
           "iapws95_speed_of_sound", "iapws2008_viscosity", "liquid_water_properties"]

#: Lowest temperature accepted [K]: the triple point, 0.01 °C (written as pint converts it).
T_MIN = 273.15 + 0.01
#: Highest temperature accepted [K] (200 °C).
T_MAX = 473.15
#: Highest pressure accepted [Pa] (500 bar).
P_MAX = 50.0e6
#: Critical temperature [K], density [kg/m³] and pressure [Pa] (IAPWS-95, eqs. 2.1-2.3).
T_CRITICAL = 647.096
RHO_CRITICAL = 322.0
P_CRITICAL = 22.064e6
#: Specific gas constant of IAPWS-95 [J/(kg K)] (eq. 2.4).
GAS_CONSTANT = 461.51805

# IAPWS-95 Table 1: ideal-gas part, phi0 = ln(delta) + n1 + n2 tau + n3 ln(tau)
# + sum n_i ln(1 - exp(-gamma_i tau)), i = 4..8.
_N0_3 = 3.00632
_N0 = np.array([0.012436, 0.97315, 1.2795, 0.96956, 0.24873])
_G0 = np.array([1.28728967, 3.53734222, 7.74073708, 9.24437796, 27.5075105])

# IAPWS-95 Table 2, i = 1..51: n_i delta^d_i tau^t_i exp(-delta^c_i) (c_i = 0: no exponential).
_C = np.array([0] * 7 + [1] * 15 + [2] * 20 + [3] * 4 + [4] + [6] * 4, dtype=float)
_D = np.array([1, 1, 1, 2, 2, 3, 4, 1, 1, 1, 2, 2, 3, 4, 4, 5, 7, 9, 10, 11, 13, 15, 1, 2, 2, 2,
               3, 4, 4, 4, 5, 6, 6, 7, 9, 9, 9, 9, 9, 10, 10, 12, 3, 4, 4, 5, 14, 3, 6, 6, 6],
              dtype=float)
_T = np.array([-0.5, 0.875, 1, 0.5, 0.75, 0.375, 1, 4, 6, 12, 1, 5, 4, 2, 13, 9, 3, 4, 11, 4, 13,
               1, 7, 1, 9, 10, 10, 3, 7, 10, 10, 6, 10, 10, 1, 2, 3, 4, 8, 6, 9, 8, 16, 22, 23,
               23, 10, 50, 44, 46, 50])
_N = np.array([
    0.12533547935523e-1, 0.78957634722828e1, -0.87803203303561e1, 0.31802509345418,
    -0.26145533859358, -0.78199751687981e-2, 0.88089493102134e-2, -0.66856572307965,
    0.20433810950965, -0.66212605039687e-4, -0.19232721156002, -0.25709043003438,
    0.16074868486251, -0.40092828925807e-1, 0.39343422603254e-6, -0.75941377088144e-5,
    0.56250979351888e-3, -0.15608652257135e-4, 0.11537996422951e-8, 0.36582165144204e-6,
    -0.13251180074668e-11, -0.62639586912454e-9, -0.10793600908932, 0.17611491008752e-1,
    0.22132295167546, -0.40247669763528, 0.58083399985759, 0.49969146990806e-2,
    -0.31358700712549e-1, -0.74315929710341, 0.47807329915480, 0.20527940895948e-1,
    -0.13636435110343, 0.14180634400617e-1, 0.83326504880713e-2, -0.29052336009585e-1,
    0.38615085574206e-1, -0.20393486513704e-1, -0.16554050063734e-2, 0.19955571979541e-2,
    0.15870308324157e-3, -0.16388568342530e-4, 0.43613615723811e-1, 0.34994005463765e-1,
    -0.76788197844621e-1, 0.22446277332006e-1, -0.62689710414685e-4, -0.55711118565645e-9,
    -0.19905718354408, 0.31777497330738, -0.11841182425981])
_EXP = _C > 0
# IAPWS-95 Table 2, i = 52..54: n delta^3 tau^t exp(-20 (delta - 1)^2 - beta (tau - gamma)^2).
_GN = np.array([-0.31306260323435e2, 0.31546140237781e2, -0.25213154341695e4])
_GT = np.array([0.0, 1.0, 4.0])
_GB = np.array([150.0, 150.0, 250.0])
_GG = np.array([1.21, 1.21, 1.25])
_GD, _GA, _GE = 3.0, 20.0, 1.0

# IAPWS R12-08 eq. (11) and Table 2 (H_ij, i the power of 1/Tbar - 1, j of rhobar - 1).
_H0 = np.array([1.67752, 2.20462, 0.6366564, -0.241605])
_H1 = np.array([
    [5.20094e-1, 2.22531e-1, -2.81378e-1, 1.61913e-1, -3.25372e-2, 0.0, 0.0],
    [8.50895e-2, 9.99115e-1, -9.06851e-1, 2.57399e-1, 0.0, 0.0, 0.0],
    [-1.08374, 1.88797, -7.72479e-1, 0.0, 0.0, 0.0, 0.0],
    [-2.89555e-1, 1.26613, -4.89837e-1, 0.0, 6.98452e-2, 0.0, -4.35673e-3],
    [0.0, 0.0, -2.57040e-1, 0.0, 0.0, 8.72102e-3, 0.0],
    [0.0, 1.20573e-1, 0.0, 0.0, 0.0, 0.0, -5.93264e-4]])
# R12-08 Table 3: critical-region constants (lengths in nm).
_X_MU, _QC, _QD, _NU, _GAMMA, _XI0, _GAMMA0, _TBAR_R = 0.068, 1 / 1.9, 1 / 1.1, 0.630, 1.239, \
    0.13, 0.06, 1.5

# IAPWS SR1-86(1992) eqs. (1), (2): saturation pressure and saturated-liquid density, used only
# as starting values of the Newton solves below.
_SAT_A = np.array([-7.85951783, 1.84408259, -11.7866497, 22.6807411, -15.9618719, 1.80122502])
_SAT_AE = np.array([1.0, 1.5, 3.0, 3.5, 4.0, 7.5])
_SAT_B = np.array([1.99274064, 1.09965342, -0.510839303, -1.75493479, -45.5170352,
                   -6.74694450e5])
_SAT_BE = np.array([1, 2, 5, 16, 43, 110]) / 3.0
_SAT_C = np.array([-2.03150240, -2.68302940, -5.38626492, -17.2991605, -44.7586581,
                   -63.9201063])
_SAT_CE = np.array([2, 4, 8, 18, 37, 71]) / 6.0

_NEWTON_STEPS = 30  # a bound only: the solves below converge in 3-6 steps over the range


# --------------------------------------------------------------------------------------------
# IAPWS-95 residual Helmholtz energy and its derivatives (Table 5)
# --------------------------------------------------------------------------------------------
def _residual(tau: np.ndarray, delta: np.ndarray) -> tuple[np.ndarray, ...]:
    """phi_r and its derivatives d, dd, tt, dt at flat arrays ``tau``, ``delta``."""
    t = tau[:, None]
    d = delta[:, None]
    dc = np.where(_EXP, d ** _C, 0.0)              # delta^c_i (0 where no exponential)
    base = _N * d ** _D * t ** _T * np.exp(-dc)    # exp(-0) = 1 for the polynomial terms
    a = _D - _C * dc                               # delta * d/d(delta) of each term, over it
    phi = base.sum(axis=1)
    phi_d = (base * a).sum(axis=1) / delta
    phi_dd = (base * (a * (a - 1.0) - _C * _C * dc)).sum(axis=1) / (delta * delta)
    phi_tt = (base * (_T * (_T - 1.0))).sum(axis=1) / (tau * tau)
    phi_dt = (base * (a * _T)).sum(axis=1) / (delta * tau)
    # Gaussian bell-shaped terms
    gb = _GN * d ** _GD * t ** _GT * np.exp(-_GA * (d - _GE) ** 2 - _GB * (t - _GG) ** 2)
    ga = _GD / d - 2.0 * _GA * (d - _GE)
    gt = _GT / t - 2.0 * _GB * (t - _GG)
    phi = phi + gb.sum(axis=1)
    phi_d = phi_d + (gb * ga).sum(axis=1)
    phi_dd = phi_dd + (gb * (ga * ga - _GD / (d * d) - 2.0 * _GA)).sum(axis=1)
    phi_tt = phi_tt + (gb * (gt * gt - _GT / (t * t) - 2.0 * _GB)).sum(axis=1)
    phi_dt = phi_dt + (gb * ga * gt).sum(axis=1)
    return phi, phi_d, phi_dd, phi_tt, phi_dt


def _ideal_tt(tau: np.ndarray) -> np.ndarray:
    """tau^2 d^2 phi0 / d tau^2 (IAPWS-95 Table 4)."""
    t = tau[:, None]
    e = np.exp(-_G0 * t)
    return -_N0_3 - tau * tau * (_N0 * _G0 * _G0 * e / (1.0 - e) ** 2).sum(axis=1)


def _pressure_terms(tau: np.ndarray, delta: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """p / (rho_c R T) = delta (1 + delta phi_d) and its delta-derivative."""
    _, phi_d, phi_dd, _, _ = _residual(tau, delta)
    return delta * (1.0 + delta * phi_d), 1.0 + delta * (2.0 * phi_d + delta * phi_dd)


# --------------------------------------------------------------------------------------------
# validation
# --------------------------------------------------------------------------------------------
def _check_temperature(t: np.ndarray) -> None:
    bad = ~((t >= T_MIN) & (t <= T_MAX))
    if bad.any():
        raise InputError(f"temperature must be within {T_MIN:.2f} K to {T_MAX:.2f} K (0.01 to "
                         f"200 degC) for the IAPWS water functions; got {float(t[bad][0])!r} K")


def _check_pressure(p: np.ndarray, t: np.ndarray, psat: np.ndarray) -> None:
    if not np.all(np.isfinite(p) & (p <= P_MAX)):
        bad = ~(np.isfinite(p) & (p <= P_MAX))
        raise InputError(f"pressure must be at most {P_MAX:g} Pa for the IAPWS water functions; "
                         f"got {float(p[bad][0])!r} Pa")
    vapour = ~(p > psat)
    if vapour.any():
        i = np.flatnonzero(vapour)[0]
        raise FluidStateError(
            f"water is not liquid at {float(t[i]) - 273.15:.2f} degC and {float(p[i]) / 1e5:.4g} "
            f"bar (saturation pressure {float(psat[i]) / 1e5:.4g} bar); raise the pressure or "
            f"lower the temperature")


# --------------------------------------------------------------------------------------------
# saturation
# --------------------------------------------------------------------------------------------
def _saturation(t: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Saturation pressure [Pa] and reduced liquid, vapour densities at flat ``t`` [K].

    Newton's method on the two conditions of phase equilibrium, equal pressure and equal Gibbs
    energy of liquid (delta_l) and vapour (delta_v) at the same temperature, with the Jacobian
    from the pressure derivative (IAPWS-95 Table 3 relations), starting from IAPWS SR1-86.
    """
    tau = T_CRITICAL / t
    theta = 1.0 - t / T_CRITICAL
    th = theta[:, None]
    dl = 1.0 + (_SAT_B * th ** _SAT_BE).sum(axis=1)
    dv = np.exp((_SAT_C * th ** _SAT_CE).sum(axis=1))
    both_tau = np.concatenate([tau, tau])
    n = len(t)
    for _ in range(_NEWTON_STEPS):
        phi, phi_d, phi_dd, _, _ = _residual(both_tau, np.concatenate([dl, dv]))
        delta = np.concatenate([dl, dv])
        z = delta * (1.0 + delta * phi_d)                 # p / (rho_c R T)
        jz = 1.0 + delta * (2.0 * phi_d + delta * phi_dd)  # d z / d delta
        g = phi + delta * phi_d + np.log(delta)           # (g - g0(T)) / (R T)
        f1 = z[:n] - z[n:]
        f2 = g[:n] - g[n:]
        a, b = jz[:n], -jz[n:]                            # d f1 / d (dl, dv)
        c, d = jz[:n] / dl, -jz[n:] / dv                  # d f2 / d (dl, dv)
        det = a * d - b * c
        step_l = (d * f1 - b * f2) / det
        step_v = (a * f2 - c * f1) / det
        dl = dl - step_l
        dv = dv - step_v
        if np.all(np.abs(step_l) <= 1e-15 * dl) and np.all(np.abs(step_v) <= 1e-15 * dv):
            break
    _, phi_d, _, _, _ = _residual(tau, dv)
    p = dv * (1.0 + dv * phi_d) * RHO_CRITICAL * GAS_CONSTANT * t
    return p, dl, dv


def iapws95_saturation_pressure(temperature: Any) -> Any:
    """Saturation (vapour) pressure of water from IAPWS-95.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K], :data:`T_MIN` to :data:`T_MAX`.

    Returns
    -------
    float, ndarray or Series
        Saturation pressure [Pa].

    Notes
    -----
    The Maxwell conditions p(ρ', T) = p(ρ'', T) and g(ρ', T) = g(ρ'', T) solved by Newton's
    method on the IAPWS-95 Helmholtz energy (Wagner & Pruß 2002, section 6.3), from the
    starting values of IAPWS SR1-86(1992) eqs. (1)–(3).

    References
    ----------
    See the module references [1]_ and [3]_.

    Examples
    --------
    >>> round(iapws95_saturation_pressure(373.15) / 1e3, 2)   # steam tables: 101.42 kPa
    101.42
    """
    (t,), tpl = as_float_arrays(temperature)
    flat = np.ascontiguousarray(t, dtype=float).ravel()
    _check_temperature(flat)
    p, _, _ = _saturation(flat)
    return restore(p.reshape(t.shape), tpl)


# --------------------------------------------------------------------------------------------
# density, speed of sound
# --------------------------------------------------------------------------------------------
def _liquid_density(t: np.ndarray, p: np.ndarray, delta0: np.ndarray) -> np.ndarray:
    """Reduced liquid density at flat ``t`` [K], ``p`` [Pa] by Newton from ``delta0``."""
    tau = T_CRITICAL / t
    target = p / (RHO_CRITICAL * GAS_CONSTANT * t)
    delta = delta0.copy()
    for _ in range(_NEWTON_STEPS):
        z, jz = _pressure_terms(tau, delta)
        step = (z - target) / jz
        delta -= step
        if np.all(np.abs(step) <= 1e-15 * delta):
            break
    return delta


def iapws95_density(temperature: Any, pressure: Any) -> Any:
    """Density of liquid water from IAPWS-95.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K], :data:`T_MIN` to :data:`T_MAX`.
    pressure : float or array_like
        Absolute pressure [Pa], above the saturation pressure and at most :data:`P_MAX`.

    Returns
    -------
    float, ndarray or Series
        Density [kg/m³].

    Notes
    -----
    The root of p = ρ R T (1 + δ ∂φʳ/∂δ) (IAPWS-95 Table 3) on the liquid branch, by Newton's
    method from the saturated-liquid density at the same temperature, to the last digit.

    References
    ----------
    See the module reference [1]_.

    Examples
    --------
    >>> round(iapws95_density(298.15, 101325.0), 4)
    997.0476
    """
    (t, p), tpl = as_float_arrays(temperature, pressure)
    tf, pf, psat, dl = _liquid_state(t, p)
    rho = _liquid_density(tf, pf, dl) * RHO_CRITICAL
    return restore(rho.reshape(t.shape), tpl)


def _liquid_state(t: np.ndarray, p: np.ndarray) -> tuple[np.ndarray, ...]:
    """Validated flat T, p, saturation pressure and saturated-liquid reduced density."""
    tf = np.ascontiguousarray(t, dtype=float).ravel()
    pf = np.ascontiguousarray(p, dtype=float).ravel()
    _check_temperature(tf)
    psat, dl, _ = _saturation(tf)
    _check_pressure(pf, tf, psat)
    return tf, pf, psat, dl


def liquid_water_properties(temperature: Any, pressure: Any) -> dict[str, Any]:
    """Density, viscosity, speed of sound, bulk modulus and vapour pressure of liquid water.

    One call for everything a line needs, sharing the saturation and density solves.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K], :data:`T_MIN` to :data:`T_MAX`.
    pressure : float or array_like
        Absolute pressure [Pa], above the saturation pressure and at most :data:`P_MAX`.

    Returns
    -------
    dict
        ``density`` [kg/m³] (IAPWS-95), ``viscosity`` [Pa·s] (IAPWS R12-08),
        ``speed_of_sound`` [m/s], ``bulk_modulus`` (isentropic, ρ w²) [Pa] and
        ``saturation_pressure`` [Pa] (IAPWS-95), each of the kind of the input.

    Raises
    ------
    FluidStateError
        Where the pressure is not above the saturation pressure (not liquid).
    InputError
        Outside the range of this module.

    Examples
    --------
    >>> props = liquid_water_properties(288.15, 101325.0)
    >>> round(props["density"], 4), round(props["viscosity"] * 1e3, 5)
    (999.1026, 1.13757)
    """
    (t, p), tpl = as_float_arrays(temperature, pressure)
    tf, pf, psat, dl = _liquid_state(t, p)
    rho = _liquid_density(tf, pf, dl) * RHO_CRITICAL
    w = _speed_of_sound(tf, rho / RHO_CRITICAL)
    out = {"density": rho, "viscosity": _viscosity(tf, rho), "speed_of_sound": w,
           "bulk_modulus": rho * w * w, "saturation_pressure": psat}
    return {k: restore(v.reshape(t.shape), tpl) for k, v in out.items()}


def iapws95_speed_of_sound(temperature: Any, density: Any) -> Any:
    """Speed of sound in water from IAPWS-95, at a temperature and density.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K], :data:`T_MIN` to :data:`T_MAX`.
    density : float or array_like
        Density [kg/m³] of the liquid (e.g. from :func:`iapws95_density`).

    Returns
    -------
    float, ndarray or Series
        Speed of sound [m/s]. The isentropic bulk modulus is ρ w².

    Notes
    -----
    w² / (R T) = 1 + 2δφʳ_δ + δ²φʳ_δδ − (1 + δφʳ_δ − δτφʳ_δτ)² / (τ²(φ⁰_ττ + φʳ_ττ))
    (IAPWS-95 Table 3).

    References
    ----------
    See the module reference [1]_.

    Examples
    --------
    >>> round(iapws95_speed_of_sound(298.15, iapws95_density(298.15, 101325.0)), 2)
    1496.7
    """
    tf, rf, shape, tpl = _temperature_density(temperature, density)
    return restore(_speed_of_sound(tf, rf / RHO_CRITICAL).reshape(shape), tpl)


def _temperature_density(temperature: Any, density: Any) -> tuple[Any, ...]:
    """Validated flat T and density arrays, the broadcast shape and the result template."""
    (t, rho), tpl = as_float_arrays(temperature, density)
    tf = np.ascontiguousarray(t, dtype=float).ravel()
    rf = np.ascontiguousarray(rho, dtype=float).ravel()
    _check_temperature(tf)
    if not np.all((rf > 0) & np.isfinite(rf)):
        raise InputError(f"density must be positive and finite; got {float(rf.min())!r}")
    return tf, rf, t.shape, tpl


def _speed_of_sound(t: np.ndarray, delta: np.ndarray) -> np.ndarray:
    tau = T_CRITICAL / t
    _, phi_d, phi_dd, phi_tt, phi_dt = _residual(tau, delta)
    num = 1.0 + delta * phi_d - delta * tau * phi_dt
    w2 = (1.0 + 2.0 * delta * phi_d + delta * delta * phi_dd
          - num * num / (_ideal_tt(tau) + tau * tau * phi_tt))
    return np.sqrt(w2 * GAS_CONSTANT * t)


# --------------------------------------------------------------------------------------------
# viscosity
# --------------------------------------------------------------------------------------------
def iapws2008_viscosity(temperature: Any, density: Any) -> Any:
    """Dynamic viscosity of water from IAPWS R12-08, at a temperature and density.

    Parameters
    ----------
    temperature : float or array_like
        Temperature [K], :data:`T_MIN` to :data:`T_MAX`.
    density : float or array_like
        Density [kg/m³], positive.

    Returns
    -------
    float, ndarray or Series
        Dynamic viscosity [Pa·s].

    Notes
    -----
    μ = μ* μ̄₀(T̄) μ̄₁(T̄, ρ̄) μ̄₂(T̄, ρ̄), μ* = 1 µPa·s (eqs. 10–12), with the critical
    enhancement μ̄₂ of eqs. (14)–(21), whose compressibilities come from IAPWS-95 at T and at
    T_R = 1.5 T_c. Away from the critical region μ̄₂ = 1 exactly (Δχ̄ < 0).

    References
    ----------
    See the module references [1]_ and [2]_.

    Examples
    --------
    >>> round(iapws2008_viscosity(373.15, 1000.0) * 1e6, 6)   # R12-08 verification value
    307.883622
    """
    tf, rf, shape, tpl = _temperature_density(temperature, density)
    return restore(_viscosity(tf, rf).reshape(shape), tpl)


def _viscosity(t: np.ndarray, rho: np.ndarray) -> np.ndarray:
    tbar = t / T_CRITICAL
    rbar = rho / RHO_CRITICAL
    mu0 = 100.0 * np.sqrt(tbar) / (_H0 / tbar[:, None] ** np.arange(4)).sum(axis=1)
    x = (1.0 / tbar - 1.0)[:, None] ** np.arange(6)
    y = (rbar - 1.0)[:, None] ** np.arange(7)
    mu1 = np.exp(rbar * np.einsum("ni,ij,nj->n", x, _H1, y))
    return 1e-6 * mu0 * mu1 * _critical_enhancement(t, rbar)


def _critical_enhancement(t: np.ndarray, rbar: np.ndarray) -> np.ndarray:
    """mu2 of R12-08 eqs. (14)-(21)."""
    delta = rbar
    both_t = np.concatenate([t, np.full_like(t, _TBAR_R * T_CRITICAL)])
    _, jz = _pressure_terms(T_CRITICAL / both_t, np.concatenate([delta, delta]))
    # zeta = (d rhobar / d pbar)_T = P_c / (rho_c R T jz)
    zeta = P_CRITICAL / (RHO_CRITICAL * GAS_CONSTANT * both_t * jz)
    n = len(t)
    tbar = t / T_CRITICAL
    dchi = np.maximum(rbar * (zeta[:n] - zeta[n:] * _TBAR_R / tbar), 0.0)
    xi = _XI0 * (dchi / _GAMMA0) ** (_NU / _GAMMA)
    y = np.zeros_like(xi)
    small = xi <= 0.3817016416
    qcx, qdx = _QC * xi, _QD * xi
    y = np.where(small, 0.2 * qcx * qdx ** 5 * (1.0 - qcx + qcx * qcx - 765.0 / 504.0 * qdx * qdx),
                 y)
    if np.any(~small):
        with np.errstate(divide="ignore", invalid="ignore"):
            psi = np.arccos(1.0 / np.sqrt(1.0 + qdx * qdx))
            w = np.sqrt(np.abs((qcx - 1.0) / (qcx + 1.0))) * np.tan(psi / 2.0)
            lw = np.where(qcx > 1.0, np.log((1.0 + w) / (1.0 - w)), 2.0 * np.arctan(np.abs(w)))
            big = (np.sin(3.0 * psi) / 12.0 - np.sin(2.0 * psi) / (4.0 * qcx)
                   + (1.0 - 1.25 * qcx * qcx) / (qcx * qcx) * np.sin(psi)
                   - ((1.0 - 1.5 * qcx * qcx) * psi - np.abs(qcx * qcx - 1.0) ** 1.5 * lw)
                   / qcx ** 3)
        y = np.where(small, y, big)
    return np.exp(_X_MU * y)
