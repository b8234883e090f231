"""Tests of pipeopt.water (IAPWS-95 and IAPWS R12-08 computed in the package).

References:
- IAPWS R6-95(2018), Table 7 (single-phase states) and Table 8 (saturation states), values
  from memory, each agreeing with CoolProp and the iapws package to the digits given;
- CoolProp (Bell et al. 2014), an independent implementation of both formulations, the
  reference the package used before;
- a 40-digit mpmath evaluation of IAPWS-95 written in this file, with its coefficients read from
  CoolProp's own copy of the IAPWS-95 tables (not from pipeopt);
- the iapws package (J. J. Pena-Lamas), a second independent implementation.
"""

from __future__ import annotations

import json

import iapws
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import Fluid, water
from pipeopt.errors import FluidStateError, InputError

CP = pytest.importorskip("CoolProp.CoolProp")

# The liquid states of pumped lines: 0.01-200 degC, up to 500 bar (the module's range).
_T_GRID = np.concatenate([np.linspace(273.16, 473.15, 41), [283.15, 285.15, 288.15, 293.15,
                                                            298.15, 323.15, 373.15, 423.15]])
_P_GRID = [1.01325e5, 2e5, 5e5, 1e6, 1.6e6, 2.5e6, 4e6, 1e7, 2.5e7, 5e7]


def _liquid_grid():
    for t in _T_GRID:
        psat = CP.PropsSI("P", "T", t, "Q", 0, "Water")
        for p in _P_GRID:
            if p > psat * 1.001:
                yield float(t), p


@pytest.mark.reference
def test_density_and_viscosity_agree_with_coolprop_to_1e_12():
    states = list(_liquid_grid())
    t, p = np.array(states).T
    props = water.liquid_water_properties(t, p)  # the whole grid in one vectorized call
    rho_cp = np.array([CP.PropsSI("D", "T", a, "P", b, "Water") for a, b in states])
    mu_cp = np.array([CP.PropsSI("V", "T", a, "P", b, "Water") for a, b in states])
    assert len(states) > 250
    np.testing.assert_allclose(props["density"], rho_cp, rtol=1e-12, atol=0)
    np.testing.assert_allclose(props["viscosity"], mu_cp, rtol=1e-12, atol=0)
    # the scalar functions give the same numbers as the combined call
    assert water.iapws95_density(t[7], p[7]) == props["density"][7]
    assert water.iapws2008_viscosity(t[7], props["density"][7]) == props["viscosity"][7]


@pytest.mark.reference
def test_sound_speed_and_vapour_pressure_agree_with_coolprop():
    # CoolProp 7+ takes saturation from a Chebyshev fit of the IAPWS-95 phase boundary, which
    # is within about 1e-10 of the exact solution near the triple point (see the mpmath test
    # below); its speed of sound is within about 2e-11 of the 40-digit value.
    states = list(_liquid_grid())
    t, p = np.array(states).T
    props = water.liquid_water_properties(t, p)
    psat_cp = np.array([CP.PropsSI("P", "T", a, "Q", 0, "Water") for a in t])
    w_cp = np.array([CP.PropsSI("A", "T", a, "P", b, "Water") for a, b in states])
    np.testing.assert_allclose(props["saturation_pressure"], psat_cp, rtol=3e-10, atol=0)
    np.testing.assert_allclose(props["speed_of_sound"], w_cp, rtol=5e-11, atol=0)
    np.testing.assert_allclose(props["bulk_modulus"], props["density"] * w_cp ** 2, rtol=1e-10)


@pytest.mark.reference  # CoolProp (Bell et al. 2014), an independent implementation
@settings(max_examples=60, deadline=None)
@given(t=st.floats(273.16, 473.15), p_bar=st.floats(1.0, 500.0))
def test_random_states_agree_with_coolprop(t, p_bar):
    p = p_bar * 1e5
    if p <= CP.PropsSI("P", "T", t, "Q", 0, "Water") * 1.001:
        return  # vapour: covered by the refusal test
    props = water.liquid_water_properties(t, p)
    assert props["density"] == pytest.approx(CP.PropsSI("D", "T", t, "P", p, "Water"),
                                             rel=1e-12, abs=0)
    # the IAPWS 2008 viscosity correlation evaluated by two double-precision codes (the exponential
    # of a 21-term double sum times the 4-term dilute part, at a density each solved itself):
    # 1.01e-12 was seen at 385 K, 449 bar, so the bound is 5e-12, still some nine orders below the
    # correlation's own uncertainty (of order 1 % in the liquid, from memory)
    assert props["viscosity"] == pytest.approx(CP.PropsSI("V", "T", t, "P", p, "Water"),
                                               rel=5e-12, abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("t_k", "p_mpa", "rho_l"), [
    # IAPWS R6-95(2018) Table 8, saturation states (from memory; CoolProp agrees to 9 digits);
    # the table's vapour densities are not used: the package computes only the liquid
    (275.0, 0.698451167e-3, 0.999887406e3),
    (450.0, 0.932203564, 0.890341250e3),
])
def test_saturation_table_8(t_k, p_mpa, rho_l):
    assert water.iapws95_saturation_pressure(t_k) == pytest.approx(p_mpa * 1e6, rel=2e-9)
    # the saturated liquid is the limit of the compressed liquid at the saturation pressure
    assert water.iapws95_density(t_k, p_mpa * 1e6 * (1 + 1e-9)) == pytest.approx(rho_l,
                                                                                  rel=2e-9)


@pytest.mark.reference
@pytest.mark.parametrize(("t_k", "rho", "p_mpa", "w"), [
    # IAPWS R6-95(2018) Table 7, single-phase states (from memory; CoolProp agrees)
    (300.0, 0.9965560e3, 0.992418352e-1, 0.150151914e4),
    (300.0, 0.1005308e4, 0.200022515e2, 0.153492501e4),
])
def test_single_phase_table_7(t_k, rho, p_mpa, w):
    assert water.iapws95_density(t_k, p_mpa * 1e6) == pytest.approx(rho, rel=2e-9)
    assert water.iapws95_speed_of_sound(t_k, rho) == pytest.approx(w, rel=2e-9)


@pytest.mark.reference
@pytest.mark.parametrize(("t_k", "rho", "mu_upas"), [
    # IAPWS R12-08, Table 4 verification values, liquid states
    (298.15, 998.0, 889.735100), (298.15, 1200.0, 1437.649467), (373.15, 1000.0, 307.883622),
    (433.15, 1000.0, 217.685358)])
def test_viscosity_r12_08_table_4(t_k, rho, mu_upas):
    assert water.iapws2008_viscosity(t_k, rho) * 1e6 == pytest.approx(mu_upas, rel=2e-9)


@pytest.mark.reference
def test_against_the_iapws_package():
    # iapws.IAPWS95 (independent implementation; its own solver tolerance is about 1e-9)
    for t_c in (0.01, 12.0, 40.0, 95.0, 140.0):
        props = water.liquid_water_properties(273.15 + t_c, 8e5)
        ref = iapws.IAPWS95(T=273.15 + t_c, P=0.8)
        assert props["density"] == pytest.approx(ref.rho, rel=1e-8)
        assert props["viscosity"] == pytest.approx(ref.mu, rel=1e-8)
        assert props["speed_of_sound"] == pytest.approx(ref.w, rel=1e-8)


# -------------------------------------------------------------------------------------------
# A 40-digit evaluation of IAPWS-95, coefficients from CoolProp's copy of Tables 1 and 2.
# -------------------------------------------------------------------------------------------
def _mp_iapws95():
    mp = pytest.importorskip("mpmath")
    eos = json.loads(CP.get_fluid_param_string("Water", "JSON"))[0]["EOS"][0]
    power, gauss = eos["alphar"][0], eos["alphar"][1]
    assert eos["alphar"][2]["type"] == "ResidualHelmholtzNonAnalytic"  # < 1e-40 here: omitted
    ctx = mp.mp.clone()
    ctx.dps = 40

    def f(x):
        return ctx.mpf(repr(float(x)))

    terms = [(f(n), int(c), int(d), f(t)) for n, c, d, t in
             zip(power["n"], power["l"], power["d"], power["t"], strict=True)]
    bells = [(f(n), int(d), f(t), f(a), f(b), f(e), f(g)) for n, d, t, a, b, e, g in
             zip(gauss["n"], gauss["d"], gauss["t"], gauss["eta"], gauss["beta"],
                 gauss["epsilon"], gauss["gamma"], strict=True)]

    def phir(tau, delta):
        s = ctx.mpf(0)
        for n, c, d, t in terms:
            s += n * delta ** d * tau ** t * (ctx.exp(-delta ** c) if c else 1)
        for n, d, t, a, b, e, g in bells:
            s += n * delta ** d * tau ** t * ctx.exp(-a * (delta - e) ** 2 - b * (tau - g) ** 2)
        return s

    r_gas, tc, rhoc = ctx.mpf("461.51805"), ctx.mpf("647.096"), ctx.mpf(322)

    def z(tau, delta):  # p / (rho_c R T)
        return delta * (1 + delta * ctx.diff(lambda x: phir(tau, x), delta))

    def saturation_pressure(t_k, dl0, dv0):
        tau = tc / ctx.mpf(t_k)

        def g(delta):
            return phir(tau, delta) + delta * ctx.diff(lambda x: phir(tau, x), delta) \
                + ctx.log(delta)
        dl, dv = ctx.findroot(lambda a, b: [z(tau, a) - z(tau, b), g(a) - g(b)],
                              (ctx.mpf(dl0), ctx.mpf(dv0)))
        return z(tau, dv) * rhoc * r_gas * ctx.mpf(t_k)

    def density(t_k, p):
        tau = tc / ctx.mpf(t_k)
        target = ctx.mpf(p) / (rhoc * r_gas * ctx.mpf(t_k))
        return rhoc * ctx.findroot(lambda d: z(tau, d) - target, ctx.mpf(3.1))

    return saturation_pressure, density


@pytest.mark.reference
@pytest.mark.parametrize("t_k", [273.16, 373.15, 473.15])
def test_saturation_and_density_against_40_digits(t_k):
    saturation_pressure, density = _mp_iapws95()
    rho_l = water.iapws95_density(t_k, 1.6e6)
    psat = water.iapws95_saturation_pressure(t_k)
    # Starting values near the answer; the root is found by mpmath to 40 digits.
    ref_psat = saturation_pressure(t_k, rho_l / 322.0, psat / (461.51805 * t_k * 322.0))
    ref_rho = density(t_k, 1.6e6)
    assert psat == pytest.approx(float(ref_psat), rel=1e-13, abs=0)
    assert rho_l == pytest.approx(float(ref_rho), rel=1e-14, abs=0)


def test_input_kinds_and_refusals():
    rho = water.iapws95_density(pd.Series([288.15, 293.15], index=["a", "b"]), 101325.0)
    assert list(rho.index) == ["a", "b"]
    assert isinstance(water.iapws95_density(288.15, 101325.0), float)
    assert water.iapws95_density([288.15, 293.15], 101325.0).shape == (2,)
    with pytest.raises(FluidStateError, match=r"water is not liquid at 150\.00 degC"):
        water.iapws95_density(423.15, 101325.0)
    with pytest.raises(InputError, match=r"temperature must be within 273\.16 K"):
        water.iapws95_saturation_pressure(250.0)
    with pytest.raises(InputError, match=r"pressure must be at most"):
        water.iapws95_density(300.0, 6e7)
    with pytest.raises(InputError, match=r"density must be positive"):
        water.iapws2008_viscosity(300.0, -1.0)


@pytest.mark.reference
def test_fluid_water_uses_the_package_formulation_and_coolprop_beyond():
    w = Fluid.water("12 degC", "3 bar")
    assert w.source == "IAPWS-95 and IAPWS R12-08"
    assert w.density == pytest.approx(CP.PropsSI("D", "T", 285.15, "P", 3e5, "Water"),
                                      rel=1e-12, abs=0)
    hot = Fluid.water("250 degC", "60 bar")  # beyond 200 degC: CoolProp
    assert "CoolProp" in hot.source
    assert hot.density == CP.PropsSI("D", "T", 523.15, "P", 6e6, "Water")
    with pytest.raises(FluidStateError, match=r"fluid: water is not liquid at 150\.00 degC"):
        Fluid.water("150 degC")
