"""Tests of pipeopt.fluid against IAPWS verification values and the independent iapws package.

Sources:
- IAPWS R12-08 (2008 viscosity release), verification values (REFERENCES.md, T in K, rho in
  kg/m^3, mu in uPa s);
- IAPWS-95 / R12-08 ambient values at 0.101325 MPa (REFERENCES.md, "computed");
- the iapws package (J. J. Pena-Lamas), an independent implementation of IAPWS-95 and R12-08.
"""

import iapws
import numpy as np
import pytest

from pipeopt import Fluid
from pipeopt.errors import FluidStateError, InputError


@pytest.mark.parametrize(
    ("t_c", "rho", "mu"),
    [  # REFERENCES.md: liquid water at 0.101325 MPa, IAPWS-95 and R12-08 ("computed")
        (15.0, 999.1026, 1.13757e-3),
        (20.0, 998.2072, 1.00160e-3),
        (25.0, 997.0476, 0.890022e-3),
    ],
)
def test_water_ambient_iapws95(t_c, rho, mu):
    w = Fluid.water(f"{t_c} degC")
    assert w.density == pytest.approx(rho, abs=5e-5)  # table given to 4 decimals
    assert w.viscosity == pytest.approx(mu, rel=1e-5)  # table given to 6 digits


@pytest.mark.parametrize(
    ("t_k", "rho", "mu_upas"),
    [  # IAPWS R12-08, Table 4 verification values (as listed in REFERENCES.md); liquid states
        (298.15, 998.0, 889.735100),
        (298.15, 1200.0, 1437.649467),
        (373.15, 1000.0, 307.883622),
        (433.15, 1000.0, 217.685358),
    ],
)
def test_coolprop_viscosity_is_r12_08(t_k, rho, mu_upas):
    # The viscosity formulation the water fluid uses, checked at R12-08's own (T, rho) points.
    import CoolProp.CoolProp as CP

    mu = CP.PropsSI("V", "T", t_k, "Dmass", rho, "Water") * 1e6
    assert mu == pytest.approx(mu_upas, rel=1e-6)


def test_water_against_independent_iapws_package():
    # iapws.IAPWS95 (independent implementation of IAPWS-95 with R12-08 viscosity), 5-95 degC.
    for t_c in np.arange(5.0, 96.0, 10.0):
        w = Fluid.water(f"{t_c} degC", "1 atm")
        ref = iapws.IAPWS95(T=273.15 + t_c, P=0.101325)
        assert w.density == pytest.approx(ref.rho, rel=2e-6)
        assert w.viscosity == pytest.approx(ref.mu, rel=2e-5)
        ref_sat = iapws.IAPWS95(T=273.15 + t_c, x=0)
        assert w.vapour_pressure == pytest.approx(ref_sat.P * 1e6, rel=1e-5)


def test_water_bulk_modulus_near_handbook_value():
    # Isentropic bulk modulus of water near 20 degC about 2.2 GPa (common practice; the 2.19 GPa
    # used for wave speeds in REFERENCES.md).
    assert Fluid.water("20 degC").bulk_modulus == pytest.approx(2.2e9, rel=0.02)


def test_water_refuses_vapour_and_bare_numbers():
    with pytest.raises(FluidStateError, match=r"not liquid at 150\.00 degC"):
        Fluid.water("150 degC")
    assert Fluid.water("150 degC", "10 bar").density > 900  # liquid under pressure
    with pytest.raises(InputError, match=r"fluid\.temperature: expected a temperature such as"):
        Fluid.water(15)
    with pytest.raises(InputError, match=r"fluid\.temperature: expected a temperature .* kg"):
        Fluid.water("15 kg")


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
