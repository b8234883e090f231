"""Tests of pipeopt.uncertainty: tornado, switching values, Monte Carlo.

Checks with known answers (sources: the model's linearity in the energy price,
DEVELOPERS.md#the-sizing-model-in-words, with each candidate's EAC worked by hand here:
Darcy-Weisbach with a 40-digit mpmath Colebrook root, the CRF formula of
docs/references.md#economics; the distributions' CDFs written out from their textbook forms
(uniform (x - a)/(b - a); triangular (x - a)^2/((b - a)(c - a)) below the mode; the normal
through mpmath's erfc; N. L. Johnson, S. Kotz, N. Balakrishnan, Continuous Univariate
Distributions, Wiley, from memory); the 1/sqrt(N) law of Monte Carlo error, any statistics
text, common practice).
"""

from __future__ import annotations

import copy
import math

import mpmath as mp
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st_
from scipy import stats

from pipeopt import SizingStudy, UpgradeStudy
from pipeopt.errors import InputError
from pipeopt.uncertainty import LogNormal, Normal, Triangular, Uniform, monte_carlo

from .conftest import colebrook_mpmath

TWO = {
    "study": {"name": "two candidates (test, illustrative)", "currency": "EUR"},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "3 km", "static_head": "20 m", "minor_loss_k": 4.0},
    "duty": [{"flow": "0.12 m^3/s", "hours": 6000}],
    "pumping": {"efficiency": 0.7},
    "energy": {"price": 0.12},
    "economics": {"discount_rate": 0.05, "horizon": 30, "pipe_life": 30},
    "material": [{"name": "pe100", "sizes": ["400 SDR 17", "450 SDR 17"],
                  "cost": {"coefficient": 1500.0, "exponent": 1.4}}],
}


def two_study(**over) -> SizingStudy:
    m = copy.deepcopy(TWO)
    m.update(over)
    return SizingStudy.from_dict(m)


# Water at 15 degC, 1 atm (IAPWS-95, R12-08; docs/references.md#water-properties); PE roughness
# 0.007 mm (Moody 1944, docs/references.md#materials)
RHO_15, MU_15, PE_EPS = 999.1026, 1.13757e-3, 0.007e-3


def hand_parts(study, rate=0.05):
    """EAC_c(p) = A_c + B_c p of the two candidates of TWO, by hand (DEVELOPERS.md model
    section): A = 1500 OD^1.4 x 3000 m x CRF (pipe life = horizon: no residual; no station,
    maintenance or escalation); B = rho g Q (20 + (f L/D + 4) V^2/2g) / 0.7 x 6000 h / 1000."""
    a, b = [], []
    for size in ("400 SDR 17", "450 SDR 17"):
        row = study.candidates.set_index("size").loc[size]   # catalog dimensions (inputs)
        bore, od = row["inner_diameter_m"], row["outside_diameter_m"]
        v = 0.12 / (math.pi * bore * bore / 4)
        f = colebrook_mpmath(RHO_15 * v * bore / MU_15, PE_EPS / bore)
        head = 20.0 + (f * 3000.0 / bore + 4.0) * v * v / (2 * 9.80665)
        with mp.workdps(30):
            i = mp.mpf(rate)
            crf = float(i * (1 + i) ** 30 / ((1 + i) ** 30 - 1)) if rate else 1 / 30
        a.append(1500.0 * od**1.4 * 3000.0 * crf)
        b.append(RHO_15 * 9.80665 * 0.12 * head / 0.7 * 6000.0 / 1000.0)
    return np.array(a), np.array(b)


def hand_break_even(study) -> float:
    a, b = hand_parts(study)
    return float((a[1] - a[0]) / (b[0] - b[1]))


def uniform_cdf(x, lo, hi):
    return (x - lo) / (hi - lo)


def triangular_cdf(x, lo, mode, hi):
    if x <= mode:
        return (x - lo) ** 2 / ((hi - lo) * (mode - lo))
    return 1 - (hi - x) ** 2 / ((hi - lo) * (hi - mode))


def break_even_price(study) -> float:
    """EAC is linear in the energy price p (DEVELOPERS.md): EAC_c(p) = A_c + B_c p. Two evaluations
    give A and B of each candidate; the break-even price is (A_1 - A_0) / (B_0 - B_1)."""
    e1 = study.evaluate().eac
    s2 = study.scenario.__class__(**{**study.scenario.__dict__,
                                     "tariff": type(study.scenario.tariff)(0.24)})
    e2 = study.evaluate(s2).eac
    b = (e2 - e1) / 0.12
    a = e1 - b * 0.12
    return float((a[1] - a[0]) / (b[0] - b[1]))


@pytest.mark.reference
def test_probability_cheapest_matches_cdf_at_break_even():
    st = two_study()
    p_star = hand_break_even(st)
    assert p_star == pytest.approx(break_even_price(st), rel=1e-5)
    dist = Uniform(0.05, 0.40)
    assert dist.support[0] < p_star < dist.support[1]
    mc = monte_carlo(st, {"energy_price": dist}, n=40000, seed=11)
    small = mc.candidates.set_index("size").loc["400 SDR 17", "prob_cheapest"]
    # the smaller pipe is cheapest below the break-even price: P = F(p*), F written out here
    want = uniform_cdf(p_star, 0.05, 0.40)
    sigma = np.sqrt(want * (1 - want) / 40000)
    assert abs(small - want) < 4 * sigma  # statistical test: 4 standard errors


@pytest.mark.reference
def test_switching_value_is_equal_eac_and_the_break_even_price():
    st = two_study()
    res = st.switching_values({"energy_price": (0.05, 0.40)})
    rows = res.table[res.table["how"] == "equal EAC"]
    assert len(rows) == 1
    row = rows.iloc[0]
    assert row["relative_eac_gap"] <= 1e-9
    assert row["switching_value"] == pytest.approx(break_even_price(st), rel=1e-9)
    # the break-even price of the hand EACs (water properties to 7 and 6 figures: 1e-5)
    assert row["switching_value"] == pytest.approx(hand_break_even(st), rel=1e-5)


@pytest.mark.reference
def test_monte_carlo_error_shrinks_like_one_over_sqrt_n():
    st = two_study()
    p_star = hand_break_even(st)
    dist = Triangular(0.05, 0.12, 0.40)
    want = triangular_cdf(p_star, 0.05, 0.12, 0.40)
    errors = {}
    for n in (400, 6400):
        est = []
        for seed in range(12):
            mc = monte_carlo(st, {"energy_price": dist}, n=n, seed=seed)
            est.append(mc.candidates.set_index("size").loc["400 SDR 17", "prob_cheapest"])
        errors[n] = np.sqrt(np.mean((np.array(est) - want) ** 2))
    ratio = errors[400] / errors[6400]  # 1/sqrt(N): 16x the samples -> 4x smaller error
    assert 2.0 < ratio < 8.0


def test_same_seed_same_bits_and_chunks_do_not_matter():
    st = SizingStudy.demo()
    d = {"energy_price": Triangular(0.1, 0.14, 0.22), "flow_factor": Normal(1.0, 0.1, 0.7, 1.3)}
    a = monte_carlo(st, d, n=60, seed=5)
    b = monte_carlo(st, d, n=60, seed=5, memory=1.0)  # one sample per chunk
    assert np.array_equal(a.eac, b.eac) and a.candidates.equals(b.candidates)
    c = monte_carlo(st, d, n=60, seed=6)
    assert not np.array_equal(a.eac, c.eac)


def test_monte_carlo_result_contents():
    st = SizingStudy.demo()
    mc = st.monte_carlo({"discount_rate": Uniform(0.03, 0.08),
                         "pipe_cost_factor:pe100": LogNormal(1.0, 0.1)}, n=300, seed=1)
    assert mc.candidates["prob_cheapest"].sum() + mc.prob_none_feasible == pytest.approx(1.0)
    assert (mc.candidates["eac_p05"] <= mc.candidates["eac_p95"]).all()
    assert set(mc.correlation["input"]) == {"discount_rate", "pipe_cost_factor:pe100"}
    assert (mc.candidates["expected_regret"].dropna() >= 0).all()
    assert "Monte Carlo" in mc.text() and "<table" in mc._repr_html_()
    # the printed table shows each candidate's share of infeasible samples beside its regret
    # (regret counts only the samples in which the candidate is feasible)
    top = mc.candidates.iloc[0]
    row = next(line for line in mc.text().splitlines()
               if line.startswith(f"{top['material']} {top['size']} "))
    assert "P(infeasible)" in mc.text()
    assert row[30:].split()[1] == f"{top['prob_infeasible']:.3f}"
    # the chosen design's EAC rises with the pipe cost factor of its material
    rho = mc.correlation.set_index("input").loc["pipe_cost_factor:pe100", "spearman"]
    assert rho > 0


def test_tornado_table():
    st = SizingStudy.demo()
    tr = st.tornado({"energy_price": (0.1, 0.2), "pipe_cost_factor:steel": (0.8, 1.2)})
    t = tr.table
    assert list(t["input"]) == ["energy_price", "pipe_cost_factor:steel"]  # sorted by swing
    assert t["swing"].iloc[0] > 0 and t["swing"].iloc[1] == 0  # steel is not the choice
    assert t["eac_high"].iloc[0] > t["eac_low"].iloc[0]
    assert "Tornado" in tr.text()


@pytest.mark.reference
def test_distributions_and_errors():
    rng = np.random.default_rng(0)
    x = Normal(1.0, 0.2, 0.8, 1.1).sample(rng, 5000)
    assert x.min() >= 0.8 and x.max() <= 1.1

    # the truncated normal's CDF written out with mpmath's erfc: Kolmogorov-Smirnov at 1 %
    def phi(z):
        return float(mp.erfc(-mp.mpf(z) / mp.sqrt(2)) / 2)

    lo, hi = phi((0.8 - 1.0) / 0.2), phi((1.1 - 1.0) / 0.2)
    ks = stats.kstest(x, lambda v: (np.vectorize(phi)((v - 1.0) / 0.2) - lo) / (hi - lo))
    assert ks.pvalue > 0.01
    # lognormal median: the sample median approaches it (scipy.stats.lognorm definition)
    assert np.median(LogNormal(2.0, 0.3).sample(rng, 20000)) == pytest.approx(2.0, rel=0.02)
    # one sigma above the median of the log: median e^sigma at Phi(1) (definition)
    assert LogNormal(2.0, 0.3).ppf(phi(1.0)) == pytest.approx(2.0 * math.exp(0.3), rel=1e-9)
    assert Triangular(0, 1, 2).cdf(1.0) == pytest.approx(0.5)
    for v in (0.05, 0.1, 0.12, 0.2, 0.39):
        assert Triangular(0.05, 0.12, 0.40).cdf(v) == pytest.approx(
            triangular_cdf(v, 0.05, 0.12, 0.40), rel=1e-12)
    assert Uniform(0, 4).cdf(1.0) == pytest.approx(uniform_cdf(1.0, 0, 4), rel=1e-15)
    with pytest.raises(InputError, match="triangular"):
        Triangular(1, 0, 2)
    st = two_study()
    with pytest.raises(InputError, match="unknown input 'price'"):
        monte_carlo(st, {"price": Uniform(0.1, 0.2)}, n=10)
    with pytest.raises(InputError, match="names no material"):
        monte_carlo(st, {"pipe_cost_factor:steel": Uniform(0.8, 1.2)}, n=10)


def test_uncertainty_section_in_study_file():
    m = copy.deepcopy(TWO)
    m["uncertainty"] = {"samples": 200, "seed": 3,
                        "energy_price": {"distribution": "triangular", "low": 0.08,
                                         "mode": 0.12, "high": 0.2},
                        "discount_rate": {"distribution": "uniform", "low": 0.03,
                                          "high": 0.07}}
    st = SizingStudy.from_dict(m)
    mc = st.monte_carlo()
    assert mc.n == 200 and mc.seed == 3
    bad = copy.deepcopy(m)
    bad["uncertainty"]["energy_price"]["sd"] = 1.0
    with pytest.raises(InputError, match=r"uncertainty\.energy_price: triangular takes"):
        SizingStudy.from_dict(bad)
    bad = copy.deepcopy(m)
    bad["uncertainty"]["energy_price"]["distribution"] = "gamma"
    with pytest.raises(InputError, match="distribution: must be one of"):
        SizingStudy.from_dict(bad)


@pytest.mark.reference
def test_each_monte_carlo_sample_by_hand():
    # every sample's EAC is A_c(i) + B_c p of that sample's discount rate i and price p, by
    # hand; the cheapest of the hand EACs, counted over the samples, is prob_cheapest
    st = two_study()
    mc = monte_carlo(st, {"energy_price": Uniform(0.05, 0.4),
                          "discount_rate": Uniform(0.0, 0.1)}, n=12, seed=7)
    labels = st.candidates["size"].tolist()
    order = [labels.index(s) for s in ("400 SDR 17", "450 SDR 17")]
    hand = []
    for k in range(mc.n):
        a, b = hand_parts(st, float(mc.inputs["discount_rate"].iloc[k]))
        hand.append(a + b * float(mc.inputs["energy_price"].iloc[k]))
    hand = np.array(hand)
    np.testing.assert_allclose(mc.eac[:, order], hand, rtol=1e-5)
    wins = np.bincount(np.argmin(hand, axis=1), minlength=2) / mc.n
    got = mc.candidates.set_index("size")["prob_cheapest"]
    assert [got["400 SDR 17"], got["450 SDR 17"]] == pytest.approx(wins.tolist(), abs=1e-12)


@pytest.mark.reference
def test_tornado_ends_by_hand():
    # the EAC of the chosen candidate at each end of the price range, and the best there, by
    # hand (linear in the price, DEVELOPERS.md model section)
    st = two_study()
    tr = st.tornado({"energy_price": (0.06, 0.30)})
    row = tr.table.iloc[0]
    a, b = hand_parts(st)
    sizes = ["400 SDR 17", "450 SDR 17"]
    chosen = sizes.index(tr.chosen.split(" ", 1)[1])
    assert chosen == int(np.argmin(a + b * 0.12))          # the base price's best
    for end, p in (("low", 0.06), ("high", 0.30)):
        assert row[f"eac_{end}"] == pytest.approx(a[chosen] + b[chosen] * p, rel=1e-5)
        assert row[f"best_{end}"] == "pe100 " + sizes[int(np.argmin(a + b * p))]
    assert row["swing"] == pytest.approx(b[chosen] * 0.24, rel=1e-5)


@pytest.mark.reference
def test_monte_carlo_summary_from_hand_eacs():
    # the per-candidate summary from the hand EACs of the sampled inputs: the mean, the
    # regret E[EAC_c - min EAC] (its definition in the result's docstring), every sample
    # feasible (no limits set)
    st = two_study()
    mc = monte_carlo(st, {"energy_price": Triangular(0.05, 0.12, 0.40)}, n=50, seed=3)
    a, b = hand_parts(st)
    p = mc.inputs["energy_price"].to_numpy()
    hand = a[None, :] + b[None, :] * p[:, None]
    got = mc.candidates.set_index("size")
    for j, size in enumerate(("400 SDR 17", "450 SDR 17")):
        assert got.loc[size, "eac_mean"] == pytest.approx(hand[:, j].mean(), rel=1e-5)
        regret = np.mean(hand[:, j] - hand.min(axis=1))
        assert got.loc[size, "expected_regret"] == pytest.approx(regret, rel=1e-3,
                                                                 abs=1e-5 * hand.mean())
        assert got.loc[size, "prob_infeasible"] == 0.0


@pytest.mark.reference
def test_switching_discount_rate_against_brentq_on_hand_eacs():
    # the discount rate at which the two candidates cost the same: scipy's brentq on the
    # difference of the hand EACs (A_c(i) + B_c p). At 0.403 per kWh, 15 % above the
    # break-even price at 5 %, the larger pipe wins at 5 % and the smaller above some rate
    from scipy.optimize import brentq

    price = 0.403
    assert price > hand_break_even(two_study())
    st = two_study(energy={"price": price})

    def gap(i):
        a, b = hand_parts(st, i)
        return (a[0] + b[0] * price) - (a[1] + b[1] * price)

    assert gap(0.05) > 0 > gap(0.30)          # one sign change above the base rate
    root = brentq(gap, 0.05, 0.30, xtol=1e-12)
    sw = st.switching_values({"discount_rate": (0.0, 0.30)})
    assert sw.chosen == "pe100 450 SDR 17"
    rows = sw.table[sw.table["how"] == "equal EAC"]
    assert len(rows) == 1 and rows.iloc[0]["direction"] == "above"
    assert rows.iloc[0]["switches_to"] == "pe100 400 SDR 17"
    assert rows.iloc[0]["switching_value"] == pytest.approx(root, rel=1e-4)


@pytest.mark.reference
def test_upgrade_monte_carlo_npv_by_hand():
    # each sample's NPV of replacing against keeping, with the energy price sampled: the
    # explicit sum of the savings (keep's energy - the new bore's energy at that price, the
    # capital at 0, the residual 1 - 5/80 at 5) at 4 % (hand study of tests/test_upgrade.py;
    # Darcy-Weisbach with a 40-digit mpmath Colebrook root)
    from .test_upgrade import dw_head, hand_energy_cost, hand_upgrade_study

    st = hand_upgrade_study()
    mc = st.monte_carlo({"energy_price": Uniform(0.05, 0.25)}, n=6, seed=8)
    keep = hand_energy_cost(lambda q: dw_head(q, 0.3, 2000.0, 1e-3)) / 0.1   # per unit price
    new = hand_energy_cost(lambda q: dw_head(q, 0.35, 2000.0, 1e-5)) / 0.1
    for k in range(mc.n):
        price = float(mc.inputs["energy_price"].iloc[k])
        savings = [-800000.0] + [(keep - new) * price] * 5
        savings[5] += 800000.0 * (1 - 5 / 80)
        npv = sum(c / 1.04**t for t, c in enumerate(savings))
        assert mc.npv["replace"].iloc[k] == pytest.approx(npv, rel=1e-4)


@pytest.mark.reference
def test_monte_carlo_with_the_horizon_sampled_by_hand():
    # each sample's own horizon N (whole years, at most the 30-year pipe life): PV = capital +
    # sum_{t<=N} B p 1.05^-t - capital (1 - N/30) 1.05^-N (straight-line residual), EAC = PV x
    # CRF(5 %, N) (DEVELOPERS.md model section; docs/references.md#economics), in mpmath
    st = two_study()
    mc = monte_carlo(st, {"horizon": Uniform(4.5, 30.49)}, n=6, seed=12)
    a30, b = hand_parts(st)
    with mp.workdps(30):
        i = mp.mpf("0.05")
        capital = [mp.mpf(x) / (i * (1 + i) ** 30 / ((1 + i) ** 30 - 1)) for x in a30]
        for k in range(mc.n):
            n = int(mc.inputs["horizon"].iloc[k])
            assert 5 <= n <= 30
            for j in range(2):
                pv = capital[j] + mp.fsum(mp.mpf(b[j]) * mp.mpf("0.12") / (1 + i) ** t
                                          for t in range(1, n + 1))
                pv -= capital[j] * (1 - mp.mpf(n) / 30) / (1 + i) ** n
                eac = pv * i * (1 + i) ** n / ((1 + i) ** n - 1)
                assert mc.eac[k, j] == pytest.approx(float(eac), rel=1e-5)


@pytest.mark.reference
def test_tornado_of_the_discount_rate_by_hand():
    # the chosen candidate's EAC at 2 % and 10 %, and the best there, from the hand parts
    # A_c(i) + B_c p at p = 0.12
    st = two_study()
    tr = st.tornado({"discount_rate": (0.02, 0.10)})
    row = tr.table.iloc[0]
    sizes = ["400 SDR 17", "450 SDR 17"]
    chosen = sizes.index(tr.chosen.split(" ", 1)[1])
    for end, i in (("low", 0.02), ("high", 0.10)):
        a, b = hand_parts(st, i)
        eac = a + b * 0.12
        assert row[f"eac_{end}"] == pytest.approx(eac[chosen], rel=1e-5)
        assert row[f"best_{end}"] == "pe100 " + sizes[int(np.argmin(eac))]


def test_upgrade_monte_carlo():
    st = UpgradeStudy.demo()
    d = {"energy_price": Uniform(0.1, 0.2), "break_cost_factor": LogNormal(1.0, 0.3),
         "flow_factor": Uniform(0.9, 1.1), "capital_factor": Triangular(0.8, 1.0, 1.4)}
    mc = st.monte_carlo(d, n=400, seed=2)
    s = mc.summary.set_index("option")
    assert s["prob_best"].sum() == pytest.approx(1.0)
    # the share of samples whose NPV against keeping is positive (its definition)
    assert s.loc["replace DN 300", "prob_positive"] == pytest.approx(
        float((mc.npv["replace DN 300"] > 0).mean()), abs=1e-15)
    # with the base values in every sample, the NPV equals the deterministic one (definition)
    one = {"energy_price": Uniform(0.15 - 1e-12, 0.15 + 1e-12)}
    mc1 = st.monte_carlo(one, n=3, seed=0)
    summary = st.run().summary.set_index("option")
    det = summary["npv_vs_keep"]
    scale = summary.loc["keep", "pv_cost"]   # NPVs are differences of PVs of this size
    for opt in mc1.npv.columns:
        np.testing.assert_allclose(mc1.npv[opt], det[opt], rtol=0, atol=1e-9 * scale)
    with pytest.raises(InputError, match="unknown upgrade input 'pipe_cost_factor'"):
        st.monte_carlo({"pipe_cost_factor": Uniform(0.9, 1.1)}, n=10)


# ------------------------------------------------------------------------------------------
# every sample with its own horizon: a batch equals the samples evaluated one at a time
# ------------------------------------------------------------------------------------------
GROWING = {
    "study": {"name": "growing rising main (test, illustrative)", "currency": "EUR"},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "5 km", "static_head": "30 m", "minor_loss_k": 6.0},
    "duty": [{"flow": "300 m^3/h", "hours": 5000}, {"flow": "420 m^3/h", "hours": 2000}],
    "growth": {"flow_per_year": 0.02},
    "pumping": {"efficiency": 0.7},
    "energy": {"price": 0.12, "demand_charge": 40.0},
    "pump_station": {"cost_coefficient": 8000.0, "cost_exponent": 0.7, "life": 15},
    "economics": {"discount_rate": 0.05, "horizon": 30, "pipe_life": 60},
    "material": [{"name": "pe100", "sizes": ["355 SDR 17", "400 SDR 17", "450 SDR 17",
                                             "500 SDR 17", "560 SDR 17", "630 SDR 17"],
                  "cost": {"coefficient": 1500.0, "exponent": 1.4}}],
    "constraints": {"velocity_max": "1.25 m/s"},
}


def growing_study() -> SizingStudy:
    return SizingStudy.from_dict(copy.deepcopy(GROWING))


def _one_at_a_time(st, inputs):
    res = st.run(inputs=inputs, optimum=False)
    return res.candidates["eac"].to_numpy(), res.candidates["feasible"].to_numpy(), res


@settings(max_examples=200, deadline=None)
@given(seed=st_.integers(0, 2**32 - 1), lo=st_.integers(5, 40), span=st_.integers(0, 40))
def test_monte_carlo_with_horizon_equals_one_sample_at_a_time(seed, lo, span):
    st = GROWING_STUDY
    d = {"horizon": Uniform(lo - 0.5, lo + span + 0.49), "energy_price": Uniform(0.08, 0.2)}
    mc = monte_carlo(st, d, n=3, seed=seed)
    for k in range(mc.n):
        inputs = {name: float(mc.inputs[name].iloc[k]) for name in d}
        eac, feas, _ = _one_at_a_time(st, inputs)
        np.testing.assert_allclose(mc.eac[k], eac, rtol=1e-12)
        assert np.array_equal(mc.feasible[k], feas)


def test_tornado_and_switching_with_horizon_equal_one_sample_at_a_time():
    st = growing_study()
    tr = st.tornado({"horizon": (10, 45), "energy_price": (0.06, 0.3),
                     "station_cost_factor": (0.8, 1.2)})
    chosen = tr.chosen
    for _, row in tr.table.iterrows():
        for end in ("low", "high"):
            eac, feas, res = _one_at_a_time(st, {row["input"]: row[end]})
            labels = (res.candidates["material"] + " " + res.candidates["size"]).tolist()
            assert row[f"eac_{end}"] == pytest.approx(eac[labels.index(chosen)], rel=1e-12)
            best = res.best
            want = "none feasible" if best is None else f"{best['material']} {best['size']}"
            assert row[f"best_{end}"] == want
    # a row whose swing is zero cannot change the best unless feasibility does
    sw = st.switching_values({"horizon": (10, 45)})
    for _, row in sw.table[sw.table["switching_value"].notna()].iterrows():
        n = int(row["switching_value"])
        _, _, res = _one_at_a_time(st, {"horizon": n})
        got = "none feasible" if res.best is None else f"{res.best['material']} " \
                                                        f"{res.best['size']}"
        assert got == row["switches_to"]
        prev = n - 1 if row["direction"] == "above" else n + 1
        _, _, res = _one_at_a_time(st, {"horizon": prev})
        assert f"{res.best['material']} {res.best['size']}" == sw.chosen


def test_monte_carlo_chunking_with_horizon_sampled():
    # the guide promises results independent of chunking; with the horizon sampled too
    st = growing_study()
    d = {"horizon": Uniform(9.5, 45.49), "flow_factor": Normal(1.0, 0.1, 0.7, 1.3),
         "energy_price": Triangular(0.08, 0.12, 0.2)}
    a = monte_carlo(st, d, n=40, seed=3)
    b = monte_carlo(st, d, n=40, seed=3, memory=1.0)   # one sample per chunk
    c = monte_carlo(st, d, n=40, seed=3, workers=2, memory=5e5)
    assert np.array_equal(a.eac, b.eac) and np.array_equal(a.eac, c.eac)
    assert a.candidates.equals(b.candidates) and a.candidates.equals(c.candidates)


def test_uncertainty_inputs_are_checked_with_clear_messages():
    st = two_study()
    with pytest.raises(InputError, match=r"uncertainty\.energy_price: expected a distribution"):
        monte_carlo(st, {"energy_price": 0.13}, n=10)
    with pytest.raises(InputError, match=r"ranges\.energy_price: needs \(low, high\) values"):
        st.tornado({"energy_price": (0.1,)})
    with pytest.raises(InputError, match=r"ranges\.discount_rate: discount_rate must be >= 0 "
                                         r"and <= 1; got -0\.1$"):
        st.tornado({"discount_rate": (-0.1, 0.1)})
    with pytest.raises(InputError, match=r"n must be a whole number from 2 to 1,000,000"):
        monte_carlo(st, {"energy_price": Uniform(0.1, 0.2)}, n=10_000_001)
    with pytest.raises(InputError, match=r"sampled horizon must be a whole number from 1 to 200"):
        monte_carlo(st, {"horizon": Uniform(100, 1e6)}, n=10)
    with pytest.raises(InputError, match="seed must be a whole number"):
        monte_carlo(st, {"energy_price": Uniform(0.1, 0.2)}, n=10, seed=2**64)
    # any frozen scipy.stats distribution is accepted (sampled through its ppf)
    mc = monte_carlo(st, {"energy_price": stats.uniform(0.1, 0.1)}, n=50, seed=1)
    assert mc.inputs["energy_price"].between(0.1, 0.2).all()
    ours = monte_carlo(st, {"energy_price": Uniform(0.1, 0.2)}, n=50, seed=1)
    np.testing.assert_array_equal(mc.eac, ours.eac)   # the same draws through the same ppf


def test_upgrade_study_file_takes_an_uncertainty_section():
    import tomllib
    from pathlib import Path

    base = tomllib.loads((Path(__file__).parents[1] / "pipeopt" / "data" /
                          "demo_upgrade.toml").read_text())
    base["uncertainty"] = {"samples": 50, "seed": 4,
                           "energy_price": {"distribution": "uniform", "low": 0.1,
                                            "high": 0.2},
                           "horizon": {"distribution": "uniform", "low": 30, "high": 50}}
    st = UpgradeStudy.from_dict(base)
    mc = st.monte_carlo()
    assert mc.n == 50
    # each sample's NPV equals the deterministic run with that sample's inputs
    for k in (0, 17):
        inputs = {"energy_price": float(mc.inputs["energy_price"].iloc[k]),
                  "horizon": float(mc.inputs["horizon"].iloc[k])}
        det = st.run(inputs=inputs).summary.set_index("option")["npv_vs_keep"]
        for opt in mc.npv.columns:
            assert mc.npv[opt].iloc[k] == pytest.approx(det[opt], rel=1e-11)
    bad = copy.deepcopy(base)
    bad["uncertainty"]["pipe_cost_factor"] = {"distribution": "uniform", "low": 0.9,
                                              "high": 1.1}
    with pytest.raises(InputError, match="unknown upgrade input 'pipe_cost_factor'"):
        UpgradeStudy.from_dict(bad)


GROWING_STUDY = growing_study()
