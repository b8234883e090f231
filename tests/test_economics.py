"""Tests of pipeopt.economics.

Sources (docs/references.md#economics; values held in pipeopt.verification.CRF_VALUES): CRF
values printed to 7 decimals (the CRF formula as in DeGarmo, Sullivan & Canada, Engineering
Economy, from memory), re-evaluated here in mpmath; the geometric-series present worth
A1 [1 - ((1+g)/(1+i))^n]/(i - g) (from memory), checked against an explicit year-by-year sum;
NPV and IRR in numpy-financial's convention (cash flow 0 is now), the IRR root found here by
bisection in mpmath.
"""

import mpmath as mp
import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import economics as ec
from pipeopt import verification as ref
from pipeopt.errors import InputError


def _mp_crf(i, n):  # i(1+i)^n / ((1+i)^n - 1) at 40 digits (the textbook formula)
    with mp.workdps(40):
        i = mp.mpf(i)
        return float(i * (1 + i) ** n / ((1 + i) ** n - 1))


@pytest.mark.reference
@pytest.mark.parametrize(("i", "n", "crf"), ref.CRF_VALUES)
def test_crf_reference_values(i, n, crf):
    # printed to 7 decimals: within half a unit of the 7th; and to 1e-14 against mpmath (the
    # expm1/log1p form loses no more than a few ulps)
    assert abs(ec.capital_recovery_factor(i, n) - float(crf)) <= ref.half_unit(crf)
    assert ec.capital_recovery_factor(i, n) == pytest.approx(_mp_crf(i, n), rel=1e-14)


@pytest.mark.reference
def test_crf_zero_rate_and_small_rates():
    assert ec.capital_recovery_factor(0.0, 25) == pytest.approx(1 / 25)  # straight line
    # continuity at i -> 0: CRF ~ 1/N + i/2 (series expansion of the formula, from memory)
    assert ec.capital_recovery_factor(1e-9, 25) == pytest.approx(_mp_crf(1e-9, 25), rel=1e-12)
    assert ec.capital_recovery_factor(1e-9, 25) == pytest.approx(1 / 25 + 0.5e-9, rel=1e-9)


@pytest.mark.reference
def test_crf_kinds():
    s = pd.Series([0.05, 0.08], index=["a", "b"])
    out = ec.capital_recovery_factor(s, 20)
    assert list(out.index) == ["a", "b"]
    assert isinstance(ec.capital_recovery_factor(0.05, 20), float)
    np.testing.assert_allclose(ec.capital_recovery_factor([0.05, 0.0], [20, 20]),
                               [_mp_crf(0.05, 20), 0.05], rtol=1e-14)


@pytest.mark.reference
@pytest.mark.parametrize(("i", "n", "a_p", "p_a"), [
    # compound-interest tables of engineering-economy texts, 4 or 5 decimals (from memory)
    (0.06, 10, "0.13587", "7.3601"), (0.10, 10, "0.16275", "6.1446"),
    (0.08, 20, "0.10185", "9.8181")])
def test_interest_table_values(i, n, a_p, p_a):
    assert abs(ec.capital_recovery_factor(i, n) - float(a_p)) <= ref.half_unit(a_p)
    assert abs(ec.present_worth_of_series(1.0, i, n) - float(p_a)) <= ref.half_unit(p_a)


@pytest.mark.reference
def test_numpy_financial_documentation_example():
    # numpy-financial's documented example (from memory): npv(0.281, [-100, 39, 59, 55, 20])
    # is -0.0084785916384548798 and irr of the same flows 0.28094842115996066
    flows = [-100.0, 39.0, 59.0, 55.0, 20.0]
    assert ec.net_present_value(flows, 0.281) == pytest.approx(-0.0084785916384548798,
                                                               rel=1e-9)
    assert ec.internal_rate_of_return(flows).rate == pytest.approx(0.28094842115996066,
                                                                   rel=1e-12)


@pytest.mark.reference
def test_present_worth_series_against_explicit_sum():
    # explicit sum of A1 (1+g)^(t-1) / (1+i)^t, t = 1..n (definition)
    for a1, i, n, g in [(1000.0, 0.05, 20, 0.0), (1000.0, 0.05, 20, 0.02),
                        (500.0, 0.03, 40, 0.03), (200.0, 0.0, 10, 0.0), (80.0, 0.07, 15, -0.02)]:
        t = np.arange(1, n + 1)
        want = np.sum(a1 * (1 + g) ** (t - 1) / (1 + i) ** t)
        assert ec.present_worth_of_series(a1, i, n, g) == pytest.approx(want, rel=1e-12)


@pytest.mark.reference
def test_present_worth_i_equals_g_case():
    # docs/references.md#economics: the i = g case is n A1 / (1 + i) (from memory)
    assert ec.present_worth_of_series(1000.0, 0.05, 20, 0.05) == pytest.approx(20000 / 1.05)


@pytest.mark.reference
def test_discount_and_eac():
    assert ec.discount_factor(0.05, 10) == pytest.approx(1.05**-10, rel=1e-14)
    # 100,000 x CRF(8 %, 30), the CRF recorded to 7 decimals: 8882.74 within 100,000 x 5e-8
    assert ec.equivalent_annual_cost(100000.0, 0.08, 30) == pytest.approx(8882.74, abs=0.005)
    assert ec.present_value([[100.0, 100.0]], 0.1) == pytest.approx([100 / 1.1 + 100 / 1.21])


@pytest.mark.reference
def test_npv_and_irr_worked_by_hand():
    # Worked by hand: -1000 now, then 300, 400, 500 at years 1-3.
    # NPV at 5 %: -1000 + 285.7143 + 362.8118 + 431.9188 = 80.4449
    flows = [-1000.0, 300.0, 400.0, 500.0]
    assert ec.net_present_value(flows, 0.05) == pytest.approx(80.4449, abs=1e-4)
    r = ec.internal_rate_of_return(flows)
    assert r.message == "unique"
    # numpy-financial's definition: NPV at the IRR is zero
    assert abs(ec.net_present_value(flows, r.rate)) < 1e-9
    with mp.workdps(30):  # the root by bisection in mpmath, here
        root = mp.findroot(lambda x: sum(c / (1 + x) ** t for t, c in enumerate(flows)),
                           (0.0, 0.2), solver="bisect")
    assert r.rate == pytest.approx(float(root), abs=1e-12)


@pytest.mark.reference
def test_irr_none_and_several():
    assert ec.internal_rate_of_return([100.0, 50.0]).rate is None
    # -1 + 5/(1+r) - 6/(1+r)^2 = 0 has r = 1 and r = 2 (roots of -1 + 5x - 6x^2, x = 1/(1+r))
    several = ec.internal_rate_of_return([-1.0, 5.0, -6.0])
    assert several.rate is None and "not unique" in several.message
    assert "1, 2" in several.message


def test_errors():
    with pytest.raises(InputError, match="discount_rate must be a finite fraction"):
        ec.capital_recovery_factor(-1.5, 10)
    with pytest.raises(InputError, match="years must be positive"):
        ec.capital_recovery_factor(0.05, 0)
    with pytest.raises(InputError, match="cash_flows"):
        ec.internal_rate_of_return([1.0])


@pytest.mark.reference
@settings(max_examples=200, deadline=None)
@given(i=st.floats(0.0, 0.3), n=st.integers(1, 100))
def test_crf_property_repays_one(i, n):
    # an annuity of CRF for n years has a present worth of exactly 1 (definition)
    crf = ec.capital_recovery_factor(i, n)
    assert ec.present_worth_of_series(crf, i, n) == pytest.approx(1.0, rel=1e-10)
    explicit = sum(crf / (1 + i) ** t for t in range(1, n + 1))  # the definition, summed here
    assert explicit == pytest.approx(1.0, rel=1e-10)
    assert crf >= 1.0 / n - 1e-15
