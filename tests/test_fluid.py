"""Tests of pipeopt.fluid against IAPWS verification values and the independent iapws package.

Sources (values recorded in docs/references.md#water-properties, held in pipeopt.verification):
- IAPWS R12-08 (2008 viscosity release), verification values (T in K, rho in kg/m^3, mu in
  uPa s);
- IAPWS-95 / R12-08 values of liquid water at 0.101325 MPa, printed to 4 decimals (density)
  and 6 significant digits (viscosity);
- the iapws package (J. J. Pena-Lamas), an independent implementation of IAPWS-95 and R12-08.
"""

import iapws
import numpy as np
import pytest

from pipeopt import Fluid
from pipeopt import verification as ref
from pipeopt.errors import FluidStateError, InputError


@pytest.mark.reference
@pytest.mark.parametrize(("t_c", "rho", "mu"), ref.WATER_AMBIENT)
def test_water_ambient_iapws95(t_c, rho, mu):
    # IAPWS-95 / R12-08 at 1 atm (pipeopt.verification.WATER_AMBIENT): the value rounds to
    # the printed one, so it is within half a unit of the last printed digit
    w = Fluid.water(f"{t_c} degC")
    assert abs(w.density - float(rho)) <= ref.half_unit(rho)
    assert abs(w.viscosity - float(mu)) <= ref.half_unit(mu)


@pytest.mark.reference
@pytest.mark.parametrize(("t_k", "rho", "mu_upas"), ref.R12_08_VERIFICATION)
def test_coolprop_viscosity_is_r12_08(t_k, rho, mu_upas):
    # IAPWS R12-08 verification table (pipeopt.verification.R12_08_VERIFICATION), printed to
    # 6 decimals in uPa s: the formulation the water fluid uses, at R12-08's own (T, rho)
    import CoolProp.CoolProp as CP

    mu = CP.PropsSI("V", "T", t_k, "Dmass", rho, "Water") * 1e6
    assert abs(mu - float(mu_upas)) <= ref.half_unit(mu_upas)


@pytest.mark.reference
def test_water_against_independent_iapws_package():
    # iapws.IAPWS95 (independent implementation of IAPWS-95 with R12-08 viscosity), 5-95 degC.
    for t_c in np.arange(5.0, 96.0, 10.0):
        w = Fluid.water(f"{t_c} degC", "1 atm")
        ref = iapws.IAPWS95(T=273.15 + t_c, P=0.101325)
        assert w.density == pytest.approx(ref.rho, rel=2e-6)
        assert w.viscosity == pytest.approx(ref.mu, rel=2e-5)
        ref_sat = iapws.IAPWS95(T=273.15 + t_c, x=0)
        assert w.vapour_pressure == pytest.approx(ref_sat.P * 1e6, rel=1e-5)


@pytest.mark.reference
def test_water_bulk_modulus_is_rho_w_squared():
    # Isentropic bulk modulus K_s = rho w^2 with the speed of sound w of the independent iapws
    # package (IAPWS-95) at 20 degC, 1 atm (2.19 GPa is the round value used for wave speeds,
    # docs/references.md#surge); tolerance: the two IAPWS-95 implementations agree to 1e-5
    ref95 = iapws.IAPWS95(T=293.15, P=0.101325)
    assert Fluid.water("20 degC").bulk_modulus == pytest.approx(ref95.rho * ref95.w**2, rel=1e-5)


@pytest.mark.reference
def test_water_steam_table_points():
    # steam tables (IAPWS-95; values from memory): saturation pressure at 100 degC 101.418 kPa
    # (printed to 3 decimals), density maximum near 4 degC 999.975 kg/m3 (3 decimals), kinematic
    # viscosity at 20 degC 1.0034e-6 m2/s (5 significant digits)
    w100 = Fluid.water("99 degC")  # liquid at 1 atm just below boiling
    assert w100.vapour_pressure < 101325.0
    assert Fluid.water("100 degC", "2 bar").vapour_pressure == pytest.approx(101418, abs=0.5)
    assert Fluid.water("4 degC").density == pytest.approx(999.975, abs=0.0005)
    assert Fluid.water("20 degC").kinematic_viscosity == pytest.approx(1.0034e-6, abs=5e-11)


@pytest.mark.reference
def test_water_refuses_vapour_and_bare_numbers():
    with pytest.raises(FluidStateError, match=r"not liquid at 150\.00 degC"):
        Fluid.water("150 degC")
    # liquid under pressure: IAPWS-95 through the independent iapws package (to 2e-6)
    assert Fluid.water("150 degC", "10 bar").density == pytest.approx(
        iapws.IAPWS95(T=423.15, P=1.0).rho, rel=2e-6)
    with pytest.raises(InputError, match=r"fluid\.temperature: expected a temperature such as"):
        Fluid.water(15)
    with pytest.raises(InputError, match=r"fluid\.temperature: expected a temperature .* kg"):
        Fluid.water("15 kg")


@pytest.mark.reference
def test_coolprop_brine_and_unknown_name():
    # 30 % ethylene glycol at 15 degC: density about 1040 kg/m^3 and viscosity about 2.5 mPa s
    # (ASHRAE Handbook - Fundamentals, glycol tables; from memory).
    brine = Fluid.coolprop("INCOMP::MEG-30%", "15 degC")
    assert brine.density == pytest.approx(1040, rel=0.01)
    assert brine.viscosity == pytest.approx(2.5e-3, rel=0.1)
    assert brine.vapour_pressure is None
    with pytest.raises(FluidStateError, match="does not know the fluid 'Unobtainium'"):
        Fluid.coolprop("Unobtainium", "15 degC")
    with pytest.raises(InputError, match="fluid.name must be a CoolProp fluid name"):
        Fluid.coolprop("", "15 degC")


def test_custom_fluid():
    oil = Fluid(density="860 kg/m^3", viscosity="12 cP", name="oil")
    assert (oil.density, oil.viscosity) == (860.0, pytest.approx(0.012))
    assert oil.kinematic_viscosity == pytest.approx(0.012 / 860)
    assert "oil" in repr(oil)
    with pytest.raises(InputError, match="fluid.density must be a positive"):
        Fluid(density="-3 kg/m^3", viscosity="1 cP")
    with pytest.raises(InputError, match=r"fluid\.viscosity: expected a dynamic viscosity"):
        Fluid(density="998 kg/m^3", viscosity="1 m^2/s")
