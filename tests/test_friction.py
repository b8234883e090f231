"""Tests of pipeopt.friction against sources outside the project.

Sources, named beside each check (values recorded in docs/references.md#friction and held in
pipeopt.verification, the one home of the reference data):
- Colebrook (1939) equation solved independently with mpmath to 40 digits (tests/conftest.py);
- the printed 40-digit roots of pipeopt.verification.COLEBROOK_ROOTS;
- each explicit formula re-implemented here in mpmath straight from its paper;
- the accuracy bands of the explicit formulas, measured against the mpmath root here;
- Hazen-Williams: the US customary form (4.727) and the SI velocity form (0.849), and the
  worked example of The Engineering ToolBox, "Hazen-Williams Friction Loss Equation" (200
  gal/min, 3.048 in inner diameter, C = 140: 9 ft per 100 ft of pipe, one significant figure).
"""

from __future__ import annotations

import warnings

import mpmath as mp
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import friction as fr
from pipeopt import verification as ref
from pipeopt.errors import InputError, RangeWarning, TransitionalFlowWarning

from .conftest import colebrook_mpmath

# ------------------------------------------------------------------------------------------
# Colebrook-White to machine precision
# ------------------------------------------------------------------------------------------


@pytest.mark.reference
def test_colebrook_matches_40_digit_roots_on_wide_grid(colebrook_grid):
    # Reference: Colebrook (1939) eq. solved with mpmath at 40 digits (conftest).
    re, rr, f_ref = colebrook_grid
    f = fr.friction_factor(re, rr)
    worst = np.max(np.abs(f / f_ref - 1.0))
    assert worst <= 1e-13, worst


@pytest.mark.reference
def test_colebrook_random_points_against_mpmath():
    # Reference: mpmath 40-digit root (conftest); random points over Re 4e3-1e8, rr 1e-7-0.05.
    rng = np.random.default_rng(12)
    re = 10 ** rng.uniform(np.log10(4e3), 8, 200)
    rr = 10 ** rng.uniform(-7, np.log10(0.05), 200)
    f_ref = np.array([colebrook_mpmath(a, b) for a, b in zip(re, rr, strict=True)])
    assert np.max(np.abs(fr.colebrook_white(re, rr) / f_ref - 1)) <= 1e-13


@pytest.mark.reference
@pytest.mark.parametrize(("re", "rr", "f_ref"), ref.COLEBROOK_ROOTS)
def test_colebrook_reference_table(re, rr, f_ref):
    # Colebrook (1939) roots printed to 10 decimals (pipeopt.verification.COLEBROOK_ROOTS):
    # the solver (about 1e-15 relative) must round to the printed value, so it is within half
    # a unit of the 10th decimal
    assert abs(fr.friction_factor(re, rr) - float(f_ref)) <= ref.half_unit(f_ref)
    # and the printed value is the rounded 40-digit mpmath root (conftest), so the record
    # itself is checked
    assert abs(colebrook_mpmath(re, rr) - float(f_ref)) <= ref.half_unit(f_ref)
    # the solver at its claimed precision against the 40-digit root itself
    assert fr.friction_factor(re, rr) == pytest.approx(colebrook_mpmath(re, rr), rel=1e-13)


@pytest.mark.reference
def test_colebrook_accurate_down_to_laminar_limit():
    # Reference: mpmath root (conftest) in the transition band where the turbulent value is used.
    for re in (2000.0, 2500.0, 3500.0):
        for rr in (0.0, 1e-3, 0.05):
            assert fr.colebrook_white(re, rr) == pytest.approx(colebrook_mpmath(re, rr),
                                                               rel=1e-13)


def test_colebrook_large_arrays_span_several_blocks():
    # Consistency across the kernel's block boundaries: same values as element-wise calls.
    rng = np.random.default_rng(3)
    n = fr._CHUNK * 2 + 17
    re = 10 ** rng.uniform(3.7, 8, n)
    rr = 10 ** rng.uniform(-7, -1.4, n)
    f = fr.colebrook_white(re, rr)
    idx = [0, fr._CHUNK - 1, fr._CHUNK, 2 * fr._CHUNK, n - 1]
    for i in idx:
        assert f[i] == fr.colebrook_white(float(re[i]), float(rr[i]))


@pytest.mark.reference
def test_colebrook_wide_grid_to_machine_precision(colebrook_grid):
    # Reference: 40-digit mpmath roots (conftest). The fast kernel (one Halley step from a
    # tabulated Wright-omega guess) keeps the last digits, not just the 1e-13 of the contract.
    re, rr, f_ref = colebrook_grid
    assert np.max(np.abs(fr.colebrook_white(re, rr) / f_ref - 1.0)) <= 4e-15


@pytest.mark.reference
@settings(max_examples=150, deadline=None)
@given(re=st.floats(4e3, 1e8),
       rr=st.one_of(st.just(0.0), st.floats(1e-7, 0.05)))
def test_colebrook_random_points_hypothesis(re, rr):
    # Reference: 40-digit mpmath root (conftest), Colebrook (1939).
    assert fr.friction_factor(re, rr) == pytest.approx(colebrook_mpmath(re, rr), rel=1e-13,
                                                       abs=0)


@pytest.mark.reference
@pytest.mark.parametrize(("re", "rr"), [
    (2000.0, 0.0), (2000.0, 0.05), (4000.0, 0.05), (1e8, 1e-7), (1e8, 0.05), (1e15, 0.0),
    (1e15, 0.05), (1e16, 0.05), (1e20, 1e-3), (1e30, 0.0)])
def test_colebrook_edges_of_both_kernels(re, rr):
    # Reference: mpmath root (conftest). Re above 1e15 leaves the fast kernel's table and is
    # solved by Clamond's iteration; both sides of the switch are exact.
    assert fr.colebrook_white(re, rr) == pytest.approx(colebrook_mpmath(re, rr), rel=4e-15,
                                                       abs=0)


def test_fast_kernel_agrees_with_clamond_reference_kernel():
    # The fast path against the reference path kept beside it (Clamond 2009, two steps), on
    # random points over the whole fast range and the edges, across several blocks.
    rng = np.random.default_rng(7)
    n = 3 * fr._CHUNK + 5
    re = 10 ** rng.uniform(np.log10(2e3), 15, n)
    rr = np.where(rng.random(n) < 0.1, 0.0, 10 ** rng.uniform(-7, np.log10(0.05), n))
    re[:4], rr[:4] = [2e3, 2e3, 1e15, 1e15], [0.0, 0.05, 0.0, 0.05]
    fast, ref = np.empty(n), np.empty(n)
    fr._colebrook_fast_kernel(re, rr, fast)
    fr._colebrook_kernel(re, rr, ref)
    assert np.max(np.abs(fast / ref - 1.0)) <= 8e-15  # each within about 4e-15 of the root


@pytest.mark.reference
def test_wright_omega_table_is_a_close_first_guess():
    # Reference: mpmath's Lambert W, omega(z) = W(e^z) (the Wright omega function; Corless &
    # Jeffrey 2002, from memory). The table's lines must be within 4e-5 of ln(omega) for one
    # Halley step to reach 1e-16 (error about err**3 / (3 a**3), a >= 5); they are within 6e-6.
    c0, c1 = fr._omega_table()
    rng = np.random.default_rng(5)
    z = np.exp(rng.uniform(np.log(4.0), np.log(2.0 ** 44), 300)).astype(np.float32)
    idx = z.view(np.int32) >> (23 - fr._OMEGA_BITS)
    guess = (c1[idx] * z + c0[idx]).astype(float)
    shift = -fr._CL_X2   # ln(ln10 / 5.02), as in the kernel
    with mp.workdps(30):
        exact = np.array([float(mp.log(mp.lambertw(mp.exp(mp.mpf(float(v)) + shift))) - shift)
                          for v in z])
    assert np.max(np.abs(guess - exact)) <= 1e-5


# ------------------------------------------------------------------------------------------
# explicit methods: exactly the published formula, and within the measured accuracy band
# ------------------------------------------------------------------------------------------


def _mp_swamee_jain(re, rr):  # Swamee & Jain (1976), J. Hydraul. Div. 102(HY5)
    return mp.mpf("0.25") / mp.log10(rr / mp.mpf("3.7") + mp.mpf("5.74") / re ** mp.mpf("0.9")) ** 2


def _mp_haaland(re, rr):  # Haaland (1983), J. Fluids Eng. 105(1)
    x = mp.mpf("-1.8") * mp.log10((rr / mp.mpf("3.7")) ** mp.mpf("1.11") + mp.mpf("6.9") / re)
    return 1 / x**2


def _mp_serghides(re, rr):  # Serghides (1984), Chem. Eng. 91(5) (from memory), Steffensen form
    k = rr / mp.mpf("3.7")
    a = -2 * mp.log10(k + 12 / re)
    b = -2 * mp.log10(k + mp.mpf("2.51") * a / re)
    c = -2 * mp.log10(k + mp.mpf("2.51") * b / re)
    return (a - (b - a) ** 2 / (c - 2 * b + a)) ** -2


def _mp_churchill(re, rr):  # Churchill (1977), Chem. Eng. 84(24), 91-92
    a = (mp.mpf("2.457") * mp.log(1 / ((7 / re) ** mp.mpf("0.9") + mp.mpf("0.27") * rr))) ** 16
    b = (mp.mpf(37530) / re) ** 16
    return 8 * ((8 / re) ** 12 + (a + b) ** mp.mpf("-1.5")) ** (mp.mpf(1) / 12)


FORMULAS = {
    "swamee-jain": (fr.swamee_jain, _mp_swamee_jain),
    "haaland": (fr.haaland, _mp_haaland),
    "serghides": (fr.serghides, _mp_serghides),
    "churchill": (fr.churchill, _mp_churchill),
}


@pytest.mark.reference
@pytest.mark.parametrize("method", sorted(FORMULAS))
def test_explicit_method_is_its_published_formula(method):
    fn, ref = FORMULAS[method]
    rng = np.random.default_rng(5)
    re = 10 ** rng.uniform(np.log10(5e3), 8, 50)
    rr = 10 ** rng.uniform(-6, -2, 50)
    got = fn(re, rr)
    with mp.workdps(30):
        want = np.array([float(ref(mp.mpf(a), mp.mpf(b))) for a, b in zip(re, rr, strict=True)])
    np.testing.assert_allclose(got, want, rtol=1e-11)
    # and through the dispatcher, for turbulent points
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RangeWarning)
        np.testing.assert_allclose(fr.friction_factor(re, rr, method=method), got, rtol=0)


@pytest.mark.slow
@pytest.mark.reference
@pytest.mark.parametrize(
    ("method", "re_range", "rr_range", "band"),
    [  # Accuracy bands against the exact root (docs/references.md#friction, worst cases
        # computed against 40-digit roots; the band is checked against the mpmath root here):
        # Swamee-Jain 2.8 % over its stated range (5e3-1e8, 1e-6-1e-2), Swamee & Jain 1976;
        ("swamee-jain", (5e3, 1e8), (1e-6, 1e-2), 0.029),
        # Haaland 1.42 % for Re 4e3-1e8, rr 0-0.05 (Haaland 1983 claims about 1.5 %);
        ("haaland", (4e3, 1e8), (1e-7, 0.05), 0.0143),
        # Serghides 0.0031 % (Serghides 1984, from memory; computed worst case);
        ("serghides", (4e3, 1e8), (1e-7, 0.05), 3.2e-5),
        # Churchill 3.1 % for Re >= 4e3 (Churchill 1977; computed worst case).
        ("churchill", (4e3, 1e8), (1e-7, 0.05), 0.032),
    ],
)
def test_explicit_method_within_its_band_of_colebrook(method, re_range, rr_range, band):
    re = np.logspace(np.log10(re_range[0]), np.log10(re_range[1]), 60)
    rr = np.concatenate([[0.0], np.logspace(np.log10(rr_range[0]), np.log10(rr_range[1]), 30)])
    if method == "swamee-jain":
        rr = rr[1:]
    R, K = np.meshgrid(re, rr)
    fn = FORMULAS[method][0]
    exact = np.vectorize(colebrook_mpmath)(R, K)  # Colebrook (1939), 40-digit mpmath roots
    err = np.abs(fn(R, K) / exact - 1)
    assert err.max() <= band
    assert err.max() >= band / 3  # the band is real, not vacuous: the worst case is near it


# ------------------------------------------------------------------------------------------
# regimes
# ------------------------------------------------------------------------------------------


@pytest.mark.reference
@pytest.mark.parametrize("method", ["colebrook", "swamee-jain", "haaland", "serghides"])
def test_laminar_is_hagen_poiseuille(method):
    # Hagen-Poiseuille: f = 64/Re (any fluid-mechanics text; common practice).
    re = np.array([1.0, 100.0, 1999.0])
    np.testing.assert_allclose(fr.friction_factor(re, 1e-3, method=method), 64 / re, rtol=1e-15)


@pytest.mark.reference
def test_churchill_tends_to_laminar_law():
    # Churchill (1977) reduces to 64/Re for Re << 2000 (the paper's design intent).
    assert fr.churchill(100.0, 0.0) == pytest.approx(0.64, rel=1e-6)


@pytest.mark.reference
def test_transition_band_warns_and_is_conservative():
    re = np.array([1500.0, 2500.0, 3900.0, 1e5])
    with pytest.warns(TransitionalFlowWarning, match="2 point"):
        f = fr.friction_factor(re, 0.0)
    assert f[1] > 64 / re[1] and f[2] > 64 / re[2]  # above the laminar value: conservative
    assert f[1] == pytest.approx(colebrook_mpmath(2500.0, 0.0), rel=1e-13)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        fr.friction_factor(re, 0.0, transition="ignore")
        fr.friction_factor(re, 0.0, method="churchill")
    with pytest.raises(InputError, match="transitional"):
        fr.friction_factor(re, 0.0, transition="raise")


def test_flow_regime_labels():
    assert fr.flow_regime(1999.0) == "laminar"
    assert fr.flow_regime(2000.0) == "transitional"
    assert fr.flow_regime(4000.0) == "turbulent"
    s = fr.flow_regime(pd.Series([100.0, 3000.0], index=["a", "b"]))
    assert list(s.index) == ["a", "b"] and list(s) == ["laminar", "transitional"]


# ------------------------------------------------------------------------------------------
# input kinds
# ------------------------------------------------------------------------------------------


def test_input_kinds_agree():
    re = [1e4, 1e5, 1e6]
    rr = 1e-4
    scalar = [fr.friction_factor(r, rr) for r in re]
    assert all(type(x) is float for x in scalar)
    as_list = fr.friction_factor(re, rr)
    as_array = fr.friction_factor(np.array(re), rr)
    as_series = fr.friction_factor(pd.Series(re, index=list("xyz"), name="re"), rr)
    assert isinstance(as_list, np.ndarray) and isinstance(as_array, np.ndarray)
    assert isinstance(as_series, pd.Series) and list(as_series.index) == list("xyz")
    np.testing.assert_array_equal(as_list, scalar)
    np.testing.assert_array_equal(as_array, scalar)
    np.testing.assert_array_equal(as_series.to_numpy(), scalar)


def test_broadcasting_like_numpy():
    re = np.array([[1e4], [1e6]])
    rr = np.array([0.0, 1e-4, 1e-2])
    f = fr.friction_factor(re, rr)
    assert f.shape == (2, 3)
    assert f[1, 2] == fr.friction_factor(1e6, 1e-2)


def test_empty_input():
    assert fr.friction_factor(np.array([]), 0.0).shape == (0,)


# ------------------------------------------------------------------------------------------
# errors
# ------------------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("re", "rr", "match"),
    [
        (0.0, 1e-4, r"reynolds must be positive; got 0\.0"),
        (-5.0, 1e-4, r"reynolds must be positive; got -5\.0"),
        ([1e5, np.nan], 1e-4, r"reynolds must not be NaN; got nan at position 1"),
        (np.inf, 1e-4, r"reynolds must be finite; got inf"),
        (1e5, np.nan, r"relative_roughness must not be NaN"),
        (1e5, -1e-4, r"relative_roughness must be >= 0; got -0\.0001"),
        (1e5, 0.08, r"relative_roughness must not exceed 0\.05 .*got 0\.08"),
    ],
)
@pytest.mark.parametrize("method", fr.METHODS)
def test_invalid_inputs_raise_with_message(re, rr, match, method):
    with pytest.raises(InputError, match=match):
        fr.friction_factor(re, rr, method=method)
    with pytest.raises(ValueError):  # an InputError is a ValueError
        fr.friction_factor(re, rr, method=method)


def test_unknown_method_and_transition_option():
    with pytest.raises(InputError, match="method must be one of colebrook"):
        fr.friction_factor(1e5, 0.0, method="moody")
    with pytest.raises(InputError, match="transition must be"):
        fr.friction_factor(1e5, 0.0, transition="loud")


def test_colebrook_white_refuses_laminar():
    with pytest.raises(InputError, match="reynolds must be >= 2000"):
        fr.colebrook_white(500.0, 0.0)


def test_swamee_jain_out_of_range_warns():
    with pytest.warns(RangeWarning, match="Swamee-Jain"):
        fr.friction_factor(1e5, 0.03, method="swamee-jain")


# ------------------------------------------------------------------------------------------
# head loss
# ------------------------------------------------------------------------------------------


@pytest.mark.reference
def test_fully_rough_limit_is_von_karman_nikuradse():
    # Fully rough law 1/sqrt(f) = 1.14 - 2 log10(eps/D) (von Karman's fit to Nikuradse's 1933
    # sand-grain data, from memory; Colebrook's 3.7 gives 2 log10 3.7 = 1.1364): at Re 1e8 and
    # eps/D 0.05 the viscous term is below 1e-6 of the rough one, so the only difference is
    # the rounding of 1.14 (+-0.005 on 1/sqrt(f) = 3.74, 0.27 %, so 0.54 % in f)
    f = fr.friction_factor(1e8, 0.05)
    assert f == pytest.approx((1.14 - 2 * np.log10(0.05)) ** -2, rel=0.0054)
    assert f == pytest.approx((2 * np.log10(3.7) - 2 * np.log10(0.05)) ** -2, rel=1e-5)


@pytest.mark.reference
@pytest.mark.parametrize("re", [4e3, 1e4, 3e4, 1e5])
def test_smooth_pipe_near_blasius(re):
    # Blasius (1913): f = 0.316 / Re^0.25 for smooth pipes, 4e3 < Re < 1e5, a fit within about
    # 3 % of the smooth-pipe law there (common practice, from memory)
    assert fr.friction_factor(re, 0.0) == pytest.approx(0.316 / re**0.25, rel=0.03)


@pytest.mark.reference
def test_moody_chart_reading():
    # Moody (1944) chart: at Re 1e5 and eps/D 0.001 the chart reads f = 0.022 (from memory); a
    # chart reading is good to a few per cent (docs/references.md#friction), so hold 3 %
    assert fr.friction_factor(1e5, 1e-3) == pytest.approx(0.022, rel=0.03)


@pytest.mark.reference
def test_darcy_weisbach_by_hand():
    # Darcy-Weisbach h = f L/D V^2/(2g), g = 9.80665 m/s^2 (CGPM 1901); worked by hand:
    # 0.02 * 1000/0.3 * 1.5^2 / 19.6133 = 7.64787...
    assert fr.darcy_weisbach_head_loss(0.02, 1000.0, 0.3, 1.5) == pytest.approx(
        0.02 * 1000 / 0.3 * 2.25 / 19.6133, rel=1e-14)
    assert fr.minor_head_loss(6.5, 1.5) == pytest.approx(6.5 * 2.25 / 19.6133, rel=1e-14)


@pytest.mark.reference
def test_line_head_loss_is_friction_plus_minor():
    q, d, length, eps, rho, mu, k = 0.1, 0.3, 1000.0, 4.5e-5, 998.2, 1.0016e-3, 6.5
    v = q / (np.pi * d * d / 4)
    re = rho * v * d / mu
    f = colebrook_mpmath(re, eps / d)  # Colebrook (1939), mpmath root
    want = (f * length / d + k) * v * v / (2 * 9.80665)
    assert fr.line_head_loss(q, d, length, eps, rho, mu, k_sum=k) == pytest.approx(want, rel=1e-12)


@pytest.mark.reference
def test_hazen_williams_engineering_toolbox_example():
    # Source: The Engineering ToolBox, "Hazen-Williams Friction Loss Equation", worked example:
    # 200 gal/min in a 3 in PE DR 15 pipe of 3.048 in inner diameter, C = 140: "9 ft H2O per
    # 100 ft", one significant figure, so the true value of its formula lies in [8.5, 9.5).
    # Its gpm-inch form (0.2083, d^4.8655) is not an exact conversion of the SI and US forms
    # and gives 1.4 % more than they do here (docs/references.md#friction): 8.88 against 9.01.
    q = 200 * 3.785411784e-3 / 60  # US gallon = 3.785411784 L exactly (NIST SP 811)
    d = 3.048 * 0.0254
    h100 = fr.hazen_williams_head_loss(q, d, 100 * 0.3048, 140.0) / 0.3048  # 2.7 m/s
    assert 8.5 <= h100 < 9.5


@pytest.mark.reference
def test_hazen_williams_is_the_published_si_form():
    # h = 10.67 L Q^1.852 / (C^1.852 D^4.8704), the SI form as printed (docs/references.md#
    # friction), evaluated here by hand: pipeopt must be exactly this form, constant included
    for q, d, length, c in [(0.1, 0.3, 1000.0, 130.0), (0.02, 0.1, 250.0, 150.0)]:
        want = 10.67 * length * q**1.852 / (c**1.852 * d**4.8704)
        assert fr.hazen_williams_head_loss(q, d, length, c) == pytest.approx(want, rel=1e-14)


@pytest.mark.reference
def test_hazen_williams_si_matches_us_customary_form():
    # US customary form h = 4.727 L Q^1.852 / (C^1.852 D^4.8704), ft and ft^3/s (Williams &
    # Hazen's form as quoted in water-supply handbooks, docs/references.md#friction). 10.67 is
    # the exact conversion 10.674 rounded: the tolerance is the sum of the roundings of the two
    # published constants (4.7e-4 + 1.1e-4), pipeopt.verification.HAZEN_WILLIAMS.
    k_us = ref.HAZEN_WILLIAMS["us_k"]
    for q_cfs, d_ft, l_ft, c in [(3.0, 1.5, 5000.0, 120.0), (0.2, 0.5, 800.0, 140.0),
                                 (20.0, 4.0, 10000.0, 100.0)]:
        h_us = k_us * l_ft * q_cfs**1.852 / (c**1.852 * d_ft**4.8704)
        h_si = fr.hazen_williams_head_loss(q_cfs * 0.3048**3, d_ft * 0.3048, l_ft * 0.3048, c)
        assert h_si / 0.3048 == pytest.approx(h_us, rel=ref.HAZEN_WILLIAMS["us_tolerance"])
    # the SI constant: the exact conversion of 4.727, to the 4 figures printed
    assert fr.HAZEN_WILLIAMS_SI_K == pytest.approx(k_us * 0.3048 ** (4.8704 - 3 * 1.852),
                                                   abs=0.005)


@pytest.mark.reference
@pytest.mark.parametrize(("q", "d", "c"), [(0.1, 0.3, 130.0), (0.01, 0.1, 140.0),
                                          (1.0, 1.0, 110.0), (0.3, 0.5, 100.0)])
def test_hazen_williams_si_matches_the_si_velocity_form(q, d, c):
    # The SI velocity form V = 0.849 C R^0.63 S^0.54 (R = D/4), solved for S here by hand
    # (docs/references.md#friction). Tolerance from the roundings of 0.849 (1.1e-3 in h),
    # 10.67 (4.7e-4) and of the exponents 1.852 ~ 1/0.54, 4.8704 ~ 2.63/0.54 (under 1e-3 over
    # these flows and diameters): 2.5e-3, pipeopt.verification.HAZEN_WILLIAMS.
    v = q / (np.pi * d * d / 4)
    slope = (v / (ref.HAZEN_WILLIAMS["si_velocity_k"] * c * (d / 4) ** 0.63)) ** (1 / 0.54)
    h = fr.hazen_williams_head_loss(q, d, 1000.0, c)
    assert h == pytest.approx(1000.0 * slope, rel=ref.HAZEN_WILLIAMS["si_tolerance"])


@pytest.mark.reference
def test_c_factor_roughness_round_trip():
    # The C that gives the same head loss as Colebrook-White at this D and V, computed here
    # from the published SI form (10.67, docs/references.md#friction) and an mpmath root
    d, v, rho, mu, eps = 0.4, 1.2, 999.1, 1.1376e-3, 0.26e-3
    f = colebrook_mpmath(rho * v * d / mu, eps / d)
    slope = f / d * v * v / (2 * 9.80665)
    q = v * np.pi * d * d / 4
    c_ref = (10.67 * q**1.852 / (slope * d**4.8704)) ** (1 / 1.852)
    assert fr.hazen_williams_c_from_roughness(eps, d, v, rho, mu) == pytest.approx(c_ref,
                                                                                   rel=1e-12)
    # and the two conversions are inverse at fixed D, V
    for c in (80.0, 110.0, 140.0):
        eps = fr.roughness_from_hazen_williams_c(c, 0.4, 1.2, 999.1, 1.1376e-3)
        back = fr.hazen_williams_c_from_roughness(eps, 0.4, 1.2, 999.1, 1.1376e-3)
        assert back == pytest.approx(c, rel=1e-10)


def test_c_factor_smoother_than_smooth_is_refused():
    with pytest.raises(InputError, match="less friction than a smooth pipe"):
        fr.roughness_from_hazen_williams_c(170.0, 0.6, 0.3, 999.1, 1.1376e-3)


@pytest.mark.reference
def test_reynolds_number_by_hand():
    # Re = rho V D / mu = 4 rho Q / (pi mu D) (Reynolds 1883; common practice), by hand:
    # 998.2 * 1.5 * 0.3 / 1.0016e-3 = 448 472.44...; the sign of V is ignored
    rho, v, d, mu = 998.2, 1.5, 0.3, 1.0016e-3
    want = rho * v * d / mu
    assert want == pytest.approx(448472.44, abs=0.01)
    assert fr.reynolds_number(v, d, rho, mu) == pytest.approx(want, rel=1e-15)
    assert fr.reynolds_number(-v, d, rho, mu) == pytest.approx(want, rel=1e-15)
    q = v * mp.pi * d * d / 4
    want_q = float(4 * rho * q / (mp.pi * mu * d))
    assert fr.reynolds_number_from_flow(float(q), d, rho, mu) == pytest.approx(want_q, rel=1e-14)
    assert want_q == pytest.approx(want, rel=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("eps", "k"), [(0.05e-3, 0.0), (0.5e-3, 0.0), (1.5e-3, 4.0)])
def test_roughness_from_head_loss_recovers_the_roughness_of_a_hand_loss(eps, k):
    # The "measured" loss is computed here: Darcy-Weisbach h = (f L/D + K) V^2 / (2 g) with f
    # the 40-digit Colebrook (1939) root (mpmath, conftest), g = 9.80665 m/s^2; the inverse
    # must give back the roughness the loss was made with
    q, d, length, rho, mu = 0.06, 0.3, 1000.0, 999.1, 1.1376e-3
    v = q / (np.pi * d * d / 4)
    f = colebrook_mpmath(rho * v * d / mu, eps / d)
    h = (f * length / d + k) * v * v / (2 * 9.80665)
    got = fr.roughness_from_head_loss(q, d, length, h, rho, mu, k_sum=k)
    assert got == pytest.approx(eps, rel=1e-9)


@pytest.mark.reference
def test_hazen_williams_c_from_head_loss_is_the_si_form_solved_for_c():
    # C = (10.67 L Q^1.852 / (h D^4.8704))^(1/1.852), the published SI form
    # (docs/references.md#friction) solved for C by hand; then that C in the form gives h back
    for q, d, length, h in [(0.1, 0.3, 1000.0, 3.0), (0.02, 0.15, 400.0, 2.2)]:
        c_ref = (10.67 * length * q**1.852 / (h * d**4.8704)) ** (1 / 1.852)
        c = fr.hazen_williams_c_from_head_loss(q, d, length, h)
        assert c == pytest.approx(c_ref, rel=1e-14)
        assert 10.67 * length * q**1.852 / (c**1.852 * d**4.8704) == pytest.approx(h, rel=1e-13)


# ------------------------------------------------------------------------------------------
# properties (hypothesis)
# ------------------------------------------------------------------------------------------

re_turbulent = st.floats(min_value=4e3, max_value=1e8)
rough = st.floats(min_value=0.0, max_value=0.05)


@settings(max_examples=300, deadline=None)
@given(a=re_turbulent, b=re_turbulent)
def test_smooth_f_non_increasing_in_reynolds(a, b):
    lo, hi = min(a, b), max(a, b)
    assert fr.friction_factor(hi, 0.0) <= fr.friction_factor(lo, 0.0)


@settings(max_examples=300, deadline=None)
@given(re=re_turbulent, a=rough, b=rough)
def test_f_non_decreasing_in_roughness(re, a, b):
    lo, hi = min(a, b), max(a, b)
    assert fr.friction_factor(re, hi) >= fr.friction_factor(re, lo)


@settings(max_examples=200, deadline=None)
@given(q1=st.floats(1e-3, 5.0), q2=st.floats(1e-3, 5.0), eps=st.floats(0.0, 2e-3),
       d=st.floats(0.05, 2.0))
def test_head_loss_increasing_in_flow(q1, q2, eps, d):
    lo, hi = min(q1, q2), max(q1, q2)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", TransitionalFlowWarning)
        h_lo = fr.line_head_loss(lo, d, 1000.0, eps, 998.2, 1.0016e-3, k_sum=3.0)
        h_hi = fr.line_head_loss(hi, d, 1000.0, eps, 998.2, 1.0016e-3, k_sum=3.0)
    assert h_hi >= h_lo


@settings(max_examples=100, deadline=None)
@given(st.lists(st.tuples(re_turbulent, rough), min_size=1, max_size=20))
def test_kinds_agree_property(points):
    re = [p[0] for p in points]
    rr = [p[1] for p in points]
    arr = fr.friction_factor(np.array(re), np.array(rr))
    ser = fr.friction_factor(pd.Series(re), rr)
    np.testing.assert_array_equal(fr.friction_factor(re, rr), arr)
    np.testing.assert_array_equal(ser.to_numpy(), arr)
    assert fr.friction_factor(re[0], rr[0]) == arr[0]
