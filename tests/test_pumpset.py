"""Tests of pipeopt.pumpset: electrical power of a station from its hydraulic duty.

Sources: the affinity laws (Gulich, Centrifugal Pumps, 2014, section 3.4, from memory): on a
system of friction only, a variable-speed pump runs along a similarity parabola, stays at its
best efficiency and its power goes as Q^3; a fixed-speed pump with a control valve runs on its
own curve; worked by hand in this file (docs/references.md#long-lines).
"""

from __future__ import annotations

import numpy as np
import pytest

from pipeopt.errors import InputError
from pipeopt.pumpset import EFFICIENCY_FLOOR, PumpSet


@pytest.mark.reference
def test_variable_speed_on_friction_only_follows_the_cubic_law():
    # H = c Q^2: similar points; efficiency stays at the best point, P ~ Q^3 (affinity laws)
    pump = PumpSet(0.8, curve=True, control="variable-speed")
    q = np.array([[0.04, 0.06, 0.1]])
    h = 3000.0 * q**2
    t = pump.power_terms(q, h)
    np.testing.assert_allclose(t["factor"], 1.0, rtol=1e-12)
    power = q * t["head"] / t["factor"]
    np.testing.assert_allclose(power / power[0, -1], (q / q[0, -1]) ** 3, rtol=1e-12)
    np.testing.assert_allclose(t["speed"], q / q[0, -1], rtol=1e-12)


@pytest.mark.reference
def test_throttled_pump_runs_on_its_curve():
    # by hand: design at the largest flow 0.1 m3/s and its head 50 m, r = 1.2:
    # H(Q) = 50 (1.2 - 0.2 (Q/0.1)^2); at 0.05: 57.5 m; efficiency x(2 - x), x = Q/Q_bep
    pump = PumpSet(0.8, curve=True, control="throttle", shutoff_ratio=1.2, bep_flow=0.08)
    q = np.array([[0.05, 0.1]])
    h = np.array([[30.0, 50.0]])            # the system asks 30 m at 0.05
    t = pump.power_terms(q, h)
    np.testing.assert_allclose(t["head"], [[57.5, 50.0]], rtol=1e-14)
    x = q / 0.08
    np.testing.assert_allclose(t["factor"], x * (2 - x), rtol=1e-14)
    # the design head is the least that reaches every state
    h2 = np.array([[60.0, 50.0]])            # 60 m asked at half the flow
    t2 = pump.power_terms(q, h2)
    design = 60.0 / (1.2 - 0.2 * 0.25)       # the half-flow state governs: 52.17 m > 50 m
    np.testing.assert_allclose(t2["head"], [[60.0, design]], rtol=1e-13)


@pytest.mark.reference
def test_variable_speed_with_static_head_loses_efficiency_at_low_flow():
    # by hand, with the affinity laws and the Ulanicki et al. (2008) efficiency curve (module
    # docstring): system H = 40 + 1000 Q^2; design at the largest flow 0.1 m3/s, 50 m; r = 1.2:
    # full-speed curve H = 60 - 1000 Q^2 (H0 = r H_d = 60 m, k = (r - 1) H_d / Q_d^2 = 1000).
    # At 0.05 m3/s the system asks 42.5 m: n^2 60 - 1000 * 0.05^2 = 42.5 gives n = sqrt(0.75);
    # x = Q / (n Q_bep) = 0.5 / sqrt(0.75), efficiency ratio x (2 - x).
    pump = PumpSet(0.8, curve=True, control="variable-speed")
    q = np.array([[0.05, 0.1]])
    h = 40.0 + 1000.0 * q**2                 # mostly static
    t = pump.power_terms(q, h)
    n = np.sqrt(0.75)
    x = 0.5 / n
    np.testing.assert_allclose(t["speed"], [[n, 1.0]], rtol=1e-13)
    np.testing.assert_allclose(t["factor"], [[x * (2 - x), 1.0]], rtol=1e-13)
    np.testing.assert_allclose(t["head"], [[42.5, 50.0]], rtol=1e-14)
    assert t["factor"][0, 0] < 0.83          # 0.8214: the static head keeps the speed up


@pytest.mark.reference
def test_variable_speed_saves_power_against_throttling_by_hand():
    # The same system and pump, throttled and with a drive: electrical power in proportion to
    # Q H / phi (P = rho g Q H / eta, common practice). By hand at 0.05 m3/s: throttled, the
    # pump runs on its curve at 60 - 1000 * 0.05^2 = 57.5 m with x = 0.5, phi = 0.75; with the
    # drive, 42.5 m at phi = x (2 - x), x = 0.5 / sqrt(0.75) (affinity laws).
    q = np.array([[0.05, 0.1]])
    h = 40.0 + 1000.0 * q**2
    thr = PumpSet(0.8, curve=True, control="throttle").power_terms(q, h)
    vsd = PumpSet(0.8, curve=True, control="variable-speed").power_terms(q, h)
    x = 0.5 / np.sqrt(0.75)
    p_thr = 0.05 * 57.5 / 0.75
    p_vsd = 0.05 * 42.5 / (x * (2 - x))
    got_thr = (q * thr["head"] / thr["factor"])[0, 0]
    got_vsd = (q * vsd["head"] / vsd["factor"])[0, 0]
    assert got_thr == pytest.approx(p_thr, rel=1e-13)
    assert got_vsd == pytest.approx(p_vsd, rel=1e-13)
    assert got_vsd / got_thr == pytest.approx(0.6749, abs=1e-4)   # a third saved at half flow


def test_per_duty_ratios_and_standing_stations():
    pump = PumpSet(0.8, duty_ratios=(1.0, 0.9))
    t = pump.power_terms(np.array([[0.1, 0.05]]), np.array([[20.0, -3.0]]))
    np.testing.assert_allclose(t["factor"], [[1.0, 0.9]])
    np.testing.assert_allclose(t["head"], [[20.0, 0.0]])     # no head to add: it stands
    far = PumpSet(0.8, curve=True, bep_flow=0.01).power_terms(np.array([[0.1]]),
                                                             np.array([[10.0]]))
    assert far["factor"][0, 0] == EFFICIENCY_FLOOR and far["outside"][0, 0]


def test_rules():
    with pytest.raises(InputError, match="efficiency must be in"):
        PumpSet(1.2)
    with pytest.raises(InputError, match="control must be"):
        PumpSet(0.8, curve=True, control="eddy")
    with pytest.raises(InputError, match="shutoff_head_ratio must be > 1"):
        PumpSet(0.8, curve=True, shutoff_ratio=1.0)
