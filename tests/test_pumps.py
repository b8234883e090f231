"""Tests of pipeopt.pumps: affinity laws, efficiency and head curves, NPSH, the atmosphere.

Sources (docs/references.md#long-lines; values held in pipeopt.verification):
- affinity laws Q ~ n, H ~ n^2, P ~ n^3 (Gulich, Centrifugal Pumps, 3rd ed. 2014, section 3.4,
  from memory), a case worked by hand;
- the efficiency curve eta = E1 (Q/n) + E2 (Q/n)^2 of Ulanicki, Kahler & Coulbeck (2008), from
  memory, fixed by its best point and a zero at no flow;
- NPSH available, the definition of ISO 9906:2012 (from memory), worked by hand with the vapour
  pressure and density of the independent iapws package (IAPWS-95);
- ISO 2533 standard atmosphere table values (from memory).
"""

from __future__ import annotations

import iapws
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import verification as ref
from pipeopt.errors import InputError
from pipeopt.pumps import (
    affinity_laws,
    bep_efficiency_curve,
    npsh_available,
    quadratic_pump_head,
    speed_for_head,
    standard_atmosphere_pressure,
)

G = 9.80665


@pytest.mark.reference
def test_affinity_laws_worked_case():
    # 100 L/s, 40 m, 50 kW at 0.8 of the speed: 80 L/s, 25.6 m, 25.6 kW (Gulich 2014, 3.4)
    (args, expected) = ref.AFFINITY_CASE
    got = affinity_laws(*args)
    for g, e in zip(got, expected, strict=True):
        assert g == pytest.approx(float(e), rel=1e-14)


@settings(max_examples=50, deadline=None)
@given(n1=st.floats(0.3, 1.0), n2=st.floats(0.3, 1.0))
def test_affinity_laws_compose(n1, n2):
    # going to n1 then by n2 equals going by n1 n2 at once (the laws are powers of n)
    a = affinity_laws(*affinity_laws(0.1, 40.0, 5e4, n1), n2)
    b = affinity_laws(0.1, 40.0, 5e4, n1 * n2)
    np.testing.assert_allclose(a, b, rtol=1e-12)


@pytest.mark.reference
def test_efficiency_curve_best_point_zeros_and_similar_points():
    # Ulanicki et al. (2008) form: eta(Q_bep) = eta_bep, zero at 0 and 2 Q_bep (from memory)
    q = np.array([0.0, 0.05, 0.1, 0.2])
    eta = bep_efficiency_curve(q, 0.1, 0.82)
    np.testing.assert_allclose(eta, [0.0, 0.82 * 0.5 * 1.5, 0.82, 0.0], atol=1e-15)
    # similar points Q2 = n Q1 have the same efficiency (affinity laws)
    for n in (0.5, 0.8, 1.0):
        assert bep_efficiency_curve(0.07 * n, 0.1, 0.82, n) == pytest.approx(
            bep_efficiency_curve(0.07, 0.1, 0.82), rel=1e-14)


@pytest.mark.reference
def test_head_curve_and_speed_are_inverse():
    q = np.array([0.02, 0.05, 0.08])
    h0, k = 60.0, 2000.0
    for n in (0.6, 0.9, 1.0):
        h = quadratic_pump_head(q, h0, k, n)
        np.testing.assert_allclose(speed_for_head(q, h, h0, k), n, rtol=1e-13)
    # affinity (Gulich 2014, 3.4, from memory): the point (Q, H) at full speed moves to
    # (n Q, n^2 H) at speed n; by hand, 60 - 2000 * 0.05^2 = 55 m, and 0.49 * 55 = 26.95 m
    q1 = 0.05
    h1 = quadratic_pump_head(q1, h0, k)
    assert h1 == pytest.approx(55.0, rel=1e-14)
    assert quadratic_pump_head(0.7 * q1, h0, k, 0.7) == pytest.approx(26.95, rel=1e-14)
    # the speed that puts the pump on (Q, H), solved by hand from n^2 H0 - k Q^2 = H
    # (30 m at 0.05 m3/s: n = sqrt((30 + 5) / 60))
    assert speed_for_head(0.05, 30.0, h0, k) == pytest.approx(np.sqrt(35.0 / 60.0), rel=1e-14)


@pytest.mark.reference
def test_npsh_available_hand_worked_with_iapws():
    # water at 60 degC from an open tank 1.5 m above the inlet, sea level, 0.4 m suction loss;
    # ISO 9906 definition, vapour pressure and density from the iapws package (IAPWS-95)
    sat = iapws.IAPWS95(T=333.15, x=0)
    liq = iapws.IAPWS95(T=333.15, P=0.101325)
    pv, rho = sat.P * 1e6, liq.rho
    p_inlet = 101325.0 + rho * G * (1.5 - 0.4)
    expected = (101325.0 - pv) / (rho * G) + 1.5 - 0.4
    assert npsh_available(p_inlet, pv, rho) == pytest.approx(expected, rel=1e-14)
    assert expected == pytest.approx(9.54, abs=0.005)   # as docs/references.md#long-lines
    # the velocity head is added when given
    assert npsh_available(p_inlet, pv, rho, 2.0) == pytest.approx(expected + 4 / (2 * G))


@pytest.mark.reference
@pytest.mark.parametrize(("z", "printed"), ref.STANDARD_ATMOSPHERE)
def test_standard_atmosphere_table(z, printed):
    # ISO 2533 table values (from memory), to half a unit of their last printed digit
    assert abs(standard_atmosphere_pressure(z) / 1000 - float(printed)) <= \
        ref.half_unit(printed)


@pytest.mark.reference
@settings(max_examples=50, deadline=None)
@given(q=st.floats(1e-3, 2.0), h=st.floats(1.0, 300.0), p=st.floats(1e2, 1e7),
       n=st.floats(0.2, 1.5))
def test_affinity_laws_are_the_published_powers(q, h, p, n):
    # Q2 = Q1 n, H2 = H1 n^2, P2 = P1 n^3 (Gulich 2014, 3.4, from memory), written out here
    q2, h2, p2 = affinity_laws(q, h, p, n)
    assert q2 == pytest.approx(q * n, rel=1e-14)
    assert h2 == pytest.approx(h * n * n, rel=1e-14)
    assert p2 == pytest.approx(p * n * n * n, rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize("n", [0.6, 0.8, 1.0])
def test_operating_point_against_numpy_roots(n):
    # The pump H = n^2 H0 - k Q^2 (Gulich 2014, 3.4, from memory) meets the system curve
    # H = Hs + c Q^2 (static lift plus Darcy-Weisbach friction, common practice) where
    # (k + c) Q^2 + (Hs - n^2 H0) = 0: the positive root from numpy.roots.
    h0, k, hs, c = 62.0, 1800.0, 18.0, 2600.0
    roots = np.roots([k + c, 0.0, hs - n * n * h0])
    q_star = float(roots[np.isreal(roots) & (roots.real > 0)].real[0])
    h_star = hs + c * q_star**2
    assert quadratic_pump_head(q_star, h0, k, n) == pytest.approx(h_star, rel=1e-12)
    assert speed_for_head(q_star, h_star, h0, k) == pytest.approx(n, rel=1e-12)


@pytest.mark.reference
def test_npsh_available_at_altitude_by_hand_with_iapws():
    # NPSHA = p_atm/(rho g) + z - h_f - p_v/(rho g) (ISO 9906 definition, from memory): an
    # open sump 1,200 m above sea level, water at 25 degC, the pump 2.0 m above the water
    # (z = -2.0 m), 0.6 m of suction loss. The barometric pressure by the ISO 2533
    # troposphere formula written out (p0 101325 Pa, T0 288.15 K, L 0.0065 K/m,
    # M 0.0289644 kg/mol, R 8.3144598 J/(mol K); from memory); vapour pressure and density
    # from the iapws package (IAPWS-95).
    z_site, z, h_f = 1200.0, -2.0, 0.6
    p_atm = 101325.0 * (1 - 0.0065 * z_site / 288.15) ** (G * 0.0289644 / (8.3144598 * 0.0065))
    assert standard_atmosphere_pressure(z_site) == pytest.approx(p_atm, rel=1e-13)
    sat = iapws.IAPWS95(T=298.15, x=0)
    rho = iapws.IAPWS95(T=298.15, P=p_atm / 1e6).rho
    pv = sat.P * 1e6
    expected = p_atm / (rho * G) + z - h_f - pv / (rho * G)
    p_inlet = p_atm + rho * G * (z - h_f)       # absolute static pressure at the inlet
    assert npsh_available(p_inlet, pv, rho) == pytest.approx(expected, rel=1e-13)
    # about 8.96 m of barometer at 1,200 m, less 2.6 m, less 0.32 m of vapour head
    assert expected == pytest.approx(6.05, abs=0.01)


def test_input_kinds_and_errors():
    assert isinstance(standard_atmosphere_pressure(100.0), float)
    assert isinstance(standard_atmosphere_pressure([0.0, 100.0]), np.ndarray)
    s = pd.Series([0.0, 500.0], index=["a", "b"])
    out = standard_atmosphere_pressure(s)
    assert isinstance(out, pd.Series) and list(out.index) == ["a", "b"]
    with pytest.raises(InputError, match="speed_ratio must be positive"):
        affinity_laws(0.1, 10.0, 1e3, 0.0)
    with pytest.raises(InputError, match="bep_efficiency must be in"):
        bep_efficiency_curve(0.1, 0.1, 1.2)
    with pytest.raises(InputError, match="elevation must be within"):
        standard_atmosphere_pressure(20000.0)
