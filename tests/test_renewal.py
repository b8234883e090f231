"""Tests of pipeopt.renewal.

Source: U. Shamir, C. D. D. Howard, "An analytic approach to scheduling pipe replacement",
J. AWWA 71(5):248-258, 1979: N(t) = N(t0) e^{A(t - t0)} and
t* = t0 + (1/A) ln[ln(1+R) C_r / (C_b N(t0))] (from memory, re-derived;
docs/references.md#renewal).
"""

import math

import mpmath as mp
import numpy as np
import pytest

from pipeopt.errors import InputError
from pipeopt.renewal import break_counts, shamir_howard_replacement_time


@pytest.mark.reference
def test_breaks_grow_exponentially():
    # the integral of N0 e^{A s} over year t (Shamir & Howard's rate, integrated by hand)
    n = break_counts(3.0, 0.06, 5)
    assert n[0] == pytest.approx(3.0 * (math.exp(0.06) - 1) / 0.06, rel=1e-14)
    assert n[4] == pytest.approx(3.0 * (math.exp(0.30) - math.exp(0.24)) / 0.06, rel=1e-13)
    assert break_counts(3.0, 0.0, 2).tolist() == [3.0, 3.0]
    with mp.workdps(30):  # the same integral by quadrature in mpmath
        year3 = mp.quad(lambda s: 3 * mp.exp(mp.mpf("0.06") * s), [2, 3])
    assert n[2] == pytest.approx(float(year3), rel=1e-13)


@pytest.mark.reference
def test_shamir_howard_closed_form():
    # t* = (1/A) ln(ln(1+R) C_r / (C_b N0)); evaluated by hand for N0 2, A 0.08, Cb 1e4,
    # Cr 1.5e6, R 5 %: ln(0.04879 * 150 / 2) / 0.08 = 16.216 years
    t = shamir_howard_replacement_time(2.0, 0.08, 1e4, 1.5e6, 0.05)
    assert t == pytest.approx(math.log(math.log(1.05) * 1.5e6 / 2e4) / 0.08, rel=1e-14)
    assert t == pytest.approx(16.216, abs=5e-4)  # printed to 3 decimals above
    # the closed form is where the present worth of the repairs' growth equals the interest
    # on the replacement (Shamir & Howard's condition, re-derived): C_b N(t*) = ln(1+R) C_r
    assert 1e4 * 2.0 * math.exp(0.08 * t) == pytest.approx(math.log(1.05) * 1.5e6, rel=1e-12)
    # breaks already costly enough: replace now
    assert shamir_howard_replacement_time(50.0, 0.08, 1e4, 1e5, 0.05) == 0.0


@pytest.mark.reference
def test_shamir_howard_by_brute_force():
    # The present value of repairs until T plus the replacement at T, with continuous
    # discounting at r = ln(1+R) (Shamir & Howard 1979): PV(T) = int_0^T Cb N0 e^{(A-r)t} dt
    # + Cr e^{-rT}, here in closed form and minimised over a 0.001-year grid by enumeration
    n0, a, cb, cr, rate = 2.0, 0.08, 1e4, 1.5e6, 0.05
    r = math.log1p(rate)
    grid = [k / 1000 for k in range(0, 40001)]
    pv = [cb * n0 * math.expm1((a - r) * t) / (a - r) + cr * math.exp(-r * t) for t in grid]
    best = grid[pv.index(min(pv))]
    assert shamir_howard_replacement_time(n0, a, cb, cr, rate) == pytest.approx(best, abs=1e-3)


def test_errors():
    with pytest.raises(InputError, match="breaks_per_year"):
        break_counts(-1.0, 0.05, 3)
    with pytest.raises(InputError, match="positive"):
        shamir_howard_replacement_time(0.0, 0.05, 1.0, 1.0, 0.05)


@pytest.mark.reference
def test_break_rate_from_a_window_count():
    # the count of the last w years is the integral of N0 e^{A s} over (-w, 0) (Shamir & Howard
    # 1979's law); scipy's quad integrates it independently
    from scipy.integrate import quad

    from pipeopt.renewal import break_rate_from_count

    for n0, a in ((2.0, 0.06), (0.4, -0.03), (3.0, 0.0)):
        count = quad(lambda s, n0=n0, a=a: n0 * math.exp(a * s), -5.0, 0.0)[0]
        assert break_rate_from_count(count, 5.0, a) == pytest.approx(n0, rel=1e-12)
    out = break_rate_from_count([10.0, 0.0], 5.0, [0.1, 0.1])
    assert out.tolist()[1] == 0.0


@pytest.mark.reference
def test_break_growth_from_two_windows():
    # the counts of two successive windows under N0 e^{A s} (Shamir & Howard 1979's law) are in
    # the ratio e^{A w}; scipy's quad integrates the rate over each window independently
    from scipy.integrate import quad

    from pipeopt.renewal import break_growth_from_counts

    a = 0.045
    recent = quad(lambda s: 2.0 * math.exp(a * s), -5.0, 0.0)[0]
    prior = quad(lambda s: 2.0 * math.exp(a * s), -10.0, -5.0)[0]
    assert break_growth_from_counts(recent, prior, 5.0) == pytest.approx(a, rel=1e-12)
    with pytest.raises(InputError, match="must be positive to fit a growth rate"):
        break_growth_from_counts(3.0, 0.0, 5.0)


@pytest.mark.reference
@pytest.mark.parametrize(("n0", "a"), [(0.7, 0.05), (2.4, -0.03), (1.5, 0.0)])
def test_rate_from_a_poisson_count_is_unbiased(n0, a):
    # breaks of a window counted as a Poisson variable of mean mu = int_{-5}^{0} N0 e^{A s} ds
    # (Shamir & Howard 1979's law); the expectation of the rate inferred from the count,
    # summed over scipy.stats.poisson's probabilities, is the true rate N0, and its variance
    # is N0^2 / mu (the Poisson variance mu times (N0 / mu)^2)
    from scipy import stats
    from scipy.integrate import quad

    from pipeopt.renewal import break_rate_from_count

    mu = quad(lambda s: n0 * math.exp(a * s), -5.0, 0.0)[0]
    k = np.arange(0, 120)
    p = stats.poisson.pmf(k, mu)
    rate = break_rate_from_count(k.astype(float), 5.0, a)
    assert p.sum() == pytest.approx(1.0, abs=1e-14)
    assert float(p @ rate) == pytest.approx(n0, rel=1e-12)
    mean = float(p @ rate)
    assert float(p @ (rate - mean) ** 2) == pytest.approx(n0 * n0 / mu, rel=1e-10)
