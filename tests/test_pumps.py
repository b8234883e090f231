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


def test_head_curve_and_speed_are_inverse():
    q = np.array([0.02, 0.05, 0.08])
    h0, k = 60.0, 2000.0
    for n in (0.6, 0.9, 1.0):
        h = quadratic_pump_head(q, h0, k, n)
        np.testing.assert_allclose(speed_for_head(q, h, h0, k), n, rtol=1e-13)
    # affinity: the curve at speed n is the full-speed curve moved along H ~ Q^2
    q1 = 0.05
    h1 = quadratic_pump_head(q1, h0, k)
    assert quadratic_pump_head(0.7 * q1, h0, k, 0.7) == pytest.approx(0.49 * h1, rel=1e-14)


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
