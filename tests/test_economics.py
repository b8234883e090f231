"""Tests of pipeopt.economics.

Sources: CRF check values of the project's REFERENCES.md ("computed"; the CRF formula as in
DeGarmo, Sullivan & Canada, Engineering Economy, from memory); the geometric-series present
worth A1 [1 - ((1+g)/(1+i))^n]/(i - g) (REFERENCES.md, from memory), checked here also against
an explicit year-by-year sum; NPV and IRR in numpy-financial's convention (cash flow 0 is now).
"""

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from pipeopt import economics as ec
from pipeopt.errors import InputError


@pytest.mark.parametrize(
    ("i", "n", "crf"),
    [(0.05, 20, 0.0802426), (0.08, 30, 0.0888274), (0.03, 50, 0.0388655)],  # REFERENCES.md
)
def test_crf_reference_values(i, n, crf):
    assert ec.capital_recovery_factor(i, n) == pytest.approx(crf, abs=5e-8)


def test_crf_zero_rate_and_small_rates():
    assert ec.capital_recovery_factor(0.0, 25) == pytest.approx(1 / 25)  # straight line
    # continuity at i -> 0: CRF ~ 1/N + i/2 (series expansion of the formula, from memory)
    assert ec.capital_recovery_factor(1e-9, 25) == pytest.approx(1 / 25 + 0.5e-9, rel=1e-9)


def test_crf_kinds():
    s = pd.Series([0.05, 0.08], index=["a", "b"])
    out = ec.capital_recovery_factor(s, 20)
    assert list(out.index) == ["a", "b"]
    assert isinstance(ec.capital_recovery_factor(0.05, 20), float)
    np.testing.assert_allclose(ec.capital_recovery_factor([0.05, 0.0], [20, 20]),
                               [0.0802425872, 0.05], rtol=1e-9)


def test_present_worth_series_against_explicit_sum():
    # explicit sum of A1 (1+g)^(t-1) / (1+i)^t, t = 1..n (definition)
    for a1, i, n, g in [(1000.0, 0.05, 20, 0.0), (1000.0, 0.05, 20, 0.02),
                        (500.0, 0.03, 40, 0.03), (200.0, 0.0, 10, 0.0), (80.0, 0.07, 15, -0.02)]:
        t = np.arange(1, n + 1)
        want = np.sum(a1 * (1 + g) ** (t - 1) / (1 + i) ** t)
        assert ec.present_worth_of_series(a1, i, n, g) == pytest.approx(want, rel=1e-12)


def test_present_worth_i_equals_g_case():
    # REFERENCES.md: the i = g case is n A1 / (1 + i)
    assert ec.present_worth_of_series(1000.0, 0.05, 20, 0.05) == pytest.approx(20000 / 1.05)


def test_discount_and_eac():
    assert ec.discount_factor(0.05, 10) == pytest.approx(1.05**-10)
    assert ec.equivalent_annual_cost(100000.0, 0.08, 30) == pytest.approx(8882.74, abs=0.01)
    assert ec.present_value([[100.0, 100.0]], 0.1) == pytest.approx([100 / 1.1 + 100 / 1.21])


def test_npv_and_irr_worked_by_hand():
    # Worked by hand: -1000 now, then 300, 400, 500 at years 1-3.
    # NPV at 5 %: -1000 + 285.7143 + 362.8118 + 431.9188 = 80.4449
    flows = [-1000.0, 300.0, 400.0, 500.0]
    assert ec.net_present_value(flows, 0.05) == pytest.approx(80.4449, abs=1e-4)
    r = ec.internal_rate_of_return(flows)
    assert r.message == "unique"
    # numpy-financial's definition: NPV at the IRR is zero
    assert abs(ec.net_present_value(flows, r.rate)) < 1e-9
    assert r.rate == pytest.approx(0.0889633947, abs=1e-9)  # by bisection in mpmath, computed


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


@settings(max_examples=200, deadline=None)
@given(i=st.floats(0.0, 0.3), n=st.integers(1, 100))
def test_crf_property_repays_one(i, n):
    # an annuity of CRF for n years has a present worth of exactly 1 (definition)
    crf = ec.capital_recovery_factor(i, n)
    assert ec.present_worth_of_series(crf, i, n) == pytest.approx(1.0, rel=1e-10)
    assert crf >= 1.0 / n - 1e-15
