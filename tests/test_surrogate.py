"""Tests of pipeopt.surrogate and the friction-series path of pipeopt.lifecycle.

The series path is an acceleration, not a model: whatever it returns must be what the direct
path (every sample's Colebrook-White solved) returns, to rounding. So the checks are

- the series against the 40-digit Colebrook-White root of mpmath (Colebrook 1939, the 3.7 /
  2.51 form; tests/conftest.py), at points between the interpolation nodes;
- the Chebyshev helpers against identities any text on them states (T_k(cos θ) = cos kθ;
  Trefethen, Approximation Theory and Approximation Practice, 2013, ch. 3; from memory) and
  against numpy.polynomial.chebyshev (an independent implementation: chebvander,
  chebinterpolate at the first-kind points);
- a Monte Carlo on the series path against each sample's EAC worked by hand (the model of
  DEVELOPERS.md#the-sizing-model-in-words year by year, friction by the mpmath root);
- the life-cycle figures of the series path against the direct path (property tests over
  growth, flow factor, static head, demand charge and carbon price);
- feasibility identical, chunking immaterial (bitwise), and the fall-back of candidates whose
  series cannot meet the bound (laminar and transitional flow) to the direct path.
"""

from __future__ import annotations

import copy
import math
import tomllib
from dataclasses import replace
from importlib import resources

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st_

from pipeopt import SizingStudy
from pipeopt import friction as fr
from pipeopt.lifecycle import BLOCK
from pipeopt.surrogate import (
    TOLERANCE,
    chebyshev_basis,
    chebyshev_coefficients,
    chebyshev_points,
    friction_series,
)
from pipeopt.uncertainty import Normal, Triangular, Uniform, _decision, monte_carlo

from .conftest import colebrook_mpmath

DEMO = SizingStudy.demo()
#: The demo's study file as a mapping, to vary (invented, illustrative numbers).
DEMO_MAP = tomllib.loads(resources.files("pipeopt").joinpath("data", "demo_sizing.toml")
                         .read_text("utf-8"))


# --- the Chebyshev helpers -------------------------------------------------------------------

@pytest.mark.reference
def test_basis_is_cos_k_theta():
    # T_k(cos θ) = cos(k θ): the definition of the Chebyshev polynomials (Trefethen 2013, ch. 3)
    theta = np.linspace(0.0, np.pi, 17)
    got = chebyshev_basis(np.cos(theta), 9)
    want = np.cos(np.outer(theta, np.arange(9)))
    np.testing.assert_allclose(got, want, atol=1e-13)


@pytest.mark.reference
def test_coefficients_recover_a_polynomial_exactly():
    # interpolation at n points reproduces any polynomial of degree < n (Trefethen 2013, ch. 3)
    rng = np.random.default_rng(4)
    a = rng.normal(size=7)
    x = chebyshev_points(10)
    values = chebyshev_basis(x, 7) @ a
    got = chebyshev_coefficients(values)
    np.testing.assert_allclose(got[:7], a, atol=1e-13)
    np.testing.assert_allclose(got[7:], 0.0, atol=1e-13)


@pytest.mark.reference
def test_basis_and_coefficients_against_numpy_chebyshev():
    # numpy.polynomial.chebyshev: chebvander is T_0 ... T_{n-1}; chebinterpolate(f, n - 1)
    # interpolates at the n first-kind points, so the coefficients of one function agree
    from numpy.polynomial import chebyshev as npc

    x = np.linspace(-1.0, 1.0, 23)
    np.testing.assert_allclose(chebyshev_basis(x, 14), npc.chebvander(x, 13), atol=1e-13)

    def func(t):
        return np.exp(0.7 * t) + np.log(2.5 + t)

    for n in (12, 20, 28):
        got = chebyshev_coefficients(func(chebyshev_points(n)))
        np.testing.assert_allclose(got, npc.chebinterpolate(func, n - 1), atol=1e-14)
    assert sorted(chebyshev_points(9)) == pytest.approx(npc.chebpts1(9).tolist(), abs=1e-15)


# --- the friction series against Colebrook-White --------------------------------------------

class _S:
    """The two fields of a Scenario the series read."""

    friction_method = "colebrook"
    constant_friction_factor = 0.02


@pytest.mark.reference
@pytest.mark.parametrize("re0, rr", [(8e3, 0.0), (2e5, 1e-5), (1.5e6, 2e-4), (4e7, 0.01)])
def test_series_matches_mpmath_colebrook_between_nodes(re0, rr):
    # the 40-digit root of Colebrook (1939), solved by mpmath (tests/conftest.py)
    lo, hi = np.array([0.6]), np.array([1.9])
    ser = friction_series(_S(), np.array([[re0]]), np.array([[rr]]), lo, hi)
    assert ser.accurate.all() and ser.bound.max() <= TOLERANCE
    m = np.linspace(0.6, 1.9, 11)[:, None]            # mostly not Chebyshev nodes
    f = chebyshev_basis(((np.log(m) - ser.centre) / ser.half_width)[:, 0],
                        ser.coefficients.shape[-1]) @ ser.coefficients[0, 0, 0]
    want = np.array([colebrook_mpmath(re0 * x, rr) for x in m[:, 0]])
    np.testing.assert_allclose(f, want, rtol=5e-14)


@pytest.mark.reference
@settings(max_examples=12, deadline=None)
@given(log_re=st_.floats(np.log10(8e3), 7.5), rr=st_.sampled_from([0.0, 1e-6, 3e-5, 1e-3, 0.02]),
       lo=st_.floats(0.5, 1.0), span=st_.floats(1.0, 3.0), x=st_.floats(-1.0, 1.0))
def test_series_against_mpmath_colebrook_over_random_ranges(log_re, rr, lo, span, x):
    # anywhere in a turbulent range (Re >= 4000 throughout), the series evaluated at a random
    # point of ln m agrees with the 40-digit Colebrook (1939) root (tests/conftest.py)
    re0 = 10.0**log_re
    hi = lo * span
    assert re0 * lo >= 4000.0
    ser = friction_series(_S(), np.array([[re0]]), np.array([[rr]]), np.array([lo]),
                          np.array([hi]))
    assert ser.accurate.all()
    ln_m = ser.centre[0] + x * ser.half_width[0]
    f = chebyshev_basis(np.array([x]), ser.coefficients.shape[-1]) @ ser.coefficients[0, 0, 0]
    want = colebrook_mpmath(re0 * float(np.exp(ln_m)), rr)
    assert f[0] == pytest.approx(want, rel=5e-14)


def test_series_marks_laminar_and_transitional_ranges_inaccurate():
    # the friction factor is not smooth across the laminar and transitional branches:
    # such a range must be left to the direct path (common practice: Re < 4000 is not turbulent)
    lo, hi = np.array([0.5]), np.array([2.0])
    ser = friction_series(_S(), np.array([[1500.0], [3e4]]), np.array([[1e-4], [1e-4]]), lo, hi)
    assert ser.accurate.tolist() == [False, True]


def test_narrow_range_needs_fewer_terms():
    # a year whose multiplier is the same in every sample: the first degree tried suffices
    ser = friction_series(_S(), np.array([[1e5]]), np.array([[1e-4]]), np.array([1.0]),
                          np.array([1.0]))
    assert ser.coefficients.shape[-1] == 12 and ser.accurate.all()


# --- the series path of the life-cycle evaluation against the direct path -------------------

def _both(study, values):
    """The life-cycle figures of a batch by the series path and by the direct path."""
    d = _decision(study)
    n_years = int(d.base_value("horizon"))
    rng = d.series_range(values, n_years)
    assert rng is not None, "the series path should apply to this batch"
    var = study.variations(values)
    fast = study.evaluate(variations=replace(var, n_years=n_years, m_range=rng), yearly=False)
    slow = study.evaluate(variations=replace(var, n_years=n_years), yearly=False)
    return fast, slow


FIELDS = ("eac", "pv_energy", "pv_total", "pv_pump_station", "pv_carbon", "installed_power",
          "capex_pump_station", "velocity_max", "pump_head_max", "velocity_design",
          "friction_factor_design", "pump_head_design", "pump_power_peak_year1",
          "energy_year1")


def _assert_same(fast, slow, rtol=1e-12):
    for name in FIELDS:
        a, b = np.asarray(getattr(fast, name)), np.asarray(getattr(slow, name))
        np.testing.assert_allclose(a, b, rtol=rtol, atol=1e-9, err_msg=name)


@settings(max_examples=25, deadline=None)
@given(seed=st_.integers(0, 2**32 - 1), g_hi=st_.floats(0.0, 0.04),
       ff=st_.floats(0.0, 0.3), static=st_.floats(0.0, 60.0),
       demand=st_.sampled_from([0.0, 60.0]), carbon=st_.sampled_from([0.0, 90.0]))
def test_series_path_equals_direct_path(seed, g_hi, ff, static, demand, carbon):
    m = copy.deepcopy(DEMO_MAP)
    m["line"]["static_head"] = f"{static} m"
    m["energy"]["demand_charge"] = demand
    m.setdefault("carbon", {}).update({"grid_factor": "0.3 kg/kWh", "price": carbon})
    st = SizingStudy.from_dict(m)
    rng = np.random.default_rng(seed)
    n = 7
    values = {"growth": rng.uniform(0.0, g_hi, n) if g_hi else np.zeros(n),
              "flow_factor": rng.uniform(1.0 - ff, 1.0 + ff, n),
              "energy_price": rng.uniform(0.08, 0.2, n)}
    fast, slow = _both(st, values)
    _assert_same(fast, slow)
    assert np.array_equal(st.check(fast)["feasible"], st.check(slow)["feasible"])


def test_candidates_outside_turbulent_flow_fall_back_to_the_direct_path():
    # a small flow in the largest sizes is laminar or transitional: those candidates are
    # solved directly, and the figures agree with the direct path all the same
    m = copy.deepcopy(DEMO_MAP)
    for point in m["duty"]:
        point["flow"] = "0.6 m^3/h"
    st = SizingStudy.from_dict(m)
    values = {"flow_factor": np.linspace(0.8, 1.2, 5), "growth": np.full(5, 0.01)}
    d = _decision(st)
    rng = d.series_range(values, int(d.base_value("horizon")))
    s = st.scenario
    c = st.candidates
    d_in = c["inner_diameter_m"].to_numpy()
    re0 = s.density * (s.duty.flow_array[None, :] / (np.pi * d_in[:, None] ** 2 / 4)) \
        * d_in[:, None] / s.viscosity
    assert (re0 < fr.TURBULENT_LIMIT).any()     # some candidates really are not turbulent
    fast, slow = _both(st, values)
    _assert_same(fast, slow)
    assert rng is not None


def test_series_path_is_not_used_where_it_does_not_hold():
    d = _decision(DEMO)
    n = int(d.base_value("horizon"))
    assert d.series_range({"energy_price": np.ones(3)}, n) is None          # flows shared
    assert d.series_range({"flow_factor": np.ones(3), "aging_factor": np.ones(3)}, n) is None
    assert d.series_range({"growth": np.array([-0.01, 0.0])}, n) is None    # falling flows


# --- whole Monte Carlo runs ------------------------------------------------------------------

def test_monte_carlo_chunks_and_workers_do_not_matter_on_the_series_path():
    d = {"flow_factor": Normal(1.0, 0.1, 0.7, 1.3), "growth": Uniform(0.0, 0.02),
         "energy_price": Triangular(0.08, 0.12, 0.2)}
    n = BLOCK + 37                                  # more than one block, not a multiple
    a = monte_carlo(DEMO, d, n=n, seed=9)
    b = monte_carlo(DEMO, d, n=n, seed=9, memory=1.0)
    c = monte_carlo(DEMO, d, n=n, seed=9, memory=1.0, workers=2)
    assert np.array_equal(a.eac, b.eac) and np.array_equal(a.eac, c.eac)
    assert np.array_equal(a.feasible, b.feasible) and a.candidates.equals(c.candidates)


def test_monte_carlo_samples_equal_one_sample_at_a_time_on_the_series_path():
    d = {"flow_factor": Uniform(0.75, 1.25), "growth": Uniform(0.0, 0.03)}
    mc = monte_carlo(DEMO, d, n=4, seed=21)
    for k in range(mc.n):
        inputs = {name: float(mc.inputs[name].iloc[k]) for name in d}
        res = DEMO.run(inputs=inputs, optimum=False)
        np.testing.assert_allclose(mc.eac[k], res.candidates["eac"].to_numpy(), rtol=1e-12)
        assert np.array_equal(mc.feasible[k], res.candidates["feasible"].to_numpy())


def test_monte_carlo_reference_path_agrees_with_the_series_path(monkeypatch):
    # friction_series=False solves Colebrook-White for every sample: the reference path
    import pipeopt.lifecycle as lifecycle

    calls = []
    real = lifecycle._series_hydraulics
    monkeypatch.setattr(lifecycle, "_series_hydraulics",
                        lambda *a, **k: calls.append(1) or real(*a, **k))
    d = {"flow_factor": Normal(1.0, 0.12, 0.7, 1.3), "growth": Uniform(0.0, 0.03),
         "energy_price": Uniform(0.08, 0.2)}
    fast = monte_carlo(DEMO, d, n=40, seed=2)
    used = len(calls)
    slow = monte_carlo(DEMO, d, n=40, seed=2, friction_series=False)
    assert used > 0 and len(calls) == used      # the series on the first run only
    np.testing.assert_allclose(fast.eac, slow.eac, rtol=1e-12)
    assert np.array_equal(fast.feasible, slow.feasible)


# --- a series-path Monte Carlo worked by hand ------------------------------------------------

# Water at 15 degC, 1 atm (IAPWS-95, R12-08; docs/references.md#water-properties), printed to 7
# and 6 figures: hand figures built on them are held to 1e-5; PE roughness 0.007 mm (Moody 1944,
# docs/references.md#materials)
RHO_15, MU_15, PE_EPS = 999.1026, 1.13757e-3, 0.007e-3
GROWING_TWO = {
    "study": {"name": "two growing candidates (test, illustrative)", "currency": "EUR"},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "3 km", "static_head": "20 m", "minor_loss_k": 4.0},
    "duty": [{"flow": "0.12 m^3/s", "hours": 6000}],
    "pumping": {"efficiency": 0.7},
    "energy": {"price": 0.12},
    "economics": {"discount_rate": 0.05, "horizon": 30, "pipe_life": 30},
    "material": [{"name": "pe100", "sizes": ["400 SDR 17", "450 SDR 17"],
                  "cost": {"coefficient": 1500.0, "exponent": 1.4}}],
}


@pytest.mark.reference
def test_series_path_monte_carlo_against_each_sample_by_hand(monkeypatch):
    # DEVELOPERS.md#the-sizing-model-in-words, year by year: Q_t = 0.12 f (1 + g)^(t - 1),
    # h = (f_D L/D + 4) V^2/2g with f_D the 40-digit mpmath Colebrook root, energy cost
    # rho g Q (20 + h)/0.7 x 6000 h / 1000 x 0.12, PV = 1500 OD^1.4 x 3000 + sum cost_t 1.05^-t,
    # EAC = PV x CRF (pipe life = horizon: no residual; no station or maintenance)
    import pipeopt.lifecycle as lifecycle

    calls = []
    real = lifecycle._series_hydraulics
    monkeypatch.setattr(lifecycle, "_series_hydraulics",
                        lambda *a, **k: calls.append(1) or real(*a, **k))
    st = SizingStudy.from_dict(copy.deepcopy(GROWING_TWO))
    mc = monte_carlo(st, {"flow_factor": Uniform(0.8, 1.2), "growth": Uniform(0.0, 0.03)},
                     n=2, seed=5)
    assert calls                                      # the series path was taken
    with mp.workdps(30):
        crf = float(mp.mpf("0.05") * mp.mpf("1.05") ** 30 / (mp.mpf("1.05") ** 30 - 1))
    c = st.candidates
    for k in range(mc.n):
        ff = float(mc.inputs["flow_factor"].iloc[k])
        g = float(mc.inputs["growth"].iloc[k])
        for j in range(len(c)):
            bore, od = c["inner_diameter_m"].iloc[j], c["outside_diameter_m"].iloc[j]
            pv = 1500.0 * od**1.4 * 3000.0
            for t in range(1, 31):
                q = 0.12 * ff * (1 + g) ** (t - 1)
                v = q / (math.pi * bore * bore / 4)
                f = colebrook_mpmath(RHO_15 * v * bore / MU_15, PE_EPS / bore, digits=20)
                head = 20.0 + (f * 3000.0 / bore + 4.0) * v * v / (2 * 9.80665)
                pv += RHO_15 * 9.80665 * q * head / 0.7 * 6000.0 / 1000.0 * 0.12 / 1.05**t
            assert mc.eac[k, j] == pytest.approx(pv * crf, rel=1e-5)
