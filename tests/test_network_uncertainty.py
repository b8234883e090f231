"""Tests of pipeopt.network.uncertainty: Monte Carlo of a network design's life-cycle cost."""

from __future__ import annotations

import dataclasses
import tomllib
from importlib import resources

import numpy as np
import pytest
from scipy import stats

import pipeopt.network.uncertainty as nu
from pipeopt.costs import EnergyTariff, PowerLawPipeCost
from pipeopt.errors import InputError
from pipeopt.inputs import Economics, Pumping
from pipeopt.network import NetworkStudy
from pipeopt.network.design import evaluate
from pipeopt.network.inputs import DutyPoint
from pipeopt.studyfile import StudyFileError
from pipeopt.uncertainty import Normal, Triangular, Uniform


def demo_dict() -> dict:
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    return tomllib.loads(text)


@pytest.fixture(scope="module")
def demo():
    study = NetworkStudy.demo()
    return study, study.run(progress=False)


EVERY_INPUT = {"energy_price": Uniform(0.08, 0.25), "escalation": Uniform(-0.01, 0.03),
               "demand_charge": Uniform(20, 90), "discount_rate": Uniform(0.02, 0.08),
               "horizon": Uniform(15, 45), "efficiency": Uniform(0.55, 0.85),
               "flow_factor": Uniform(0.8, 1.2), "hours_factor": Uniform(0.8, 1.0),
               "growth": Uniform(-0.01, 0.015), "station_cost_factor": Uniform(0.7, 1.4),
               "pipe_cost_factor": Uniform(0.9, 1.2)}
# large, growing demands: the velocity limit of 2.5 m/s fails in some samples' later years
GROWING = {**EVERY_INPUT, "flow_factor": Uniform(1.2, 1.5), "growth": Uniform(0.0, 0.03),
           "horizon": Uniform(3, 40)}


@pytest.mark.parametrize("dist", [EVERY_INPUT, GROWING], ids=["every-input", "growing"])
def test_each_sample_equals_the_study_built_with_its_inputs(demo, dist):
    # every sample's PV and feasibility against the study rebuilt with that sample's values
    # (tariff, economics, pumping, demand factors, growth, cost coefficients scaled by the
    # cost factors) and each design evaluated there
    study, result = demo
    mc = study.monte_carlo(dist, n=4, seed=11, designs=3, result=result)
    if dist is GROWING:
        assert not mc.feasible.all() and mc.feasible.any()
    choices, _ = nu.runner_up_designs(study.problem, result.outcome.choice, 3)
    assert mc.pv.shape == (4, 3)
    e, ps = study.economics, study.pump_station
    for s in range(4):
        v = mc.inputs.iloc[s]
        other = study.replace(
            tariff=EnergyTariff(v["energy_price"], v["escalation"], v["demand_charge"]),
            economics=Economics(v["discount_rate"], int(v["horizon"]), e.pipe_life,
                                e.pipe_maintenance),
            pumping=Pumping(v["efficiency"]), growth=v["growth"],
            duties=tuple(DutyPoint(d.name, d.hours * v["hours_factor"],
                                   d.demand_factor * v["flow_factor"])
                         for d in study.duties),
            pump_station=dataclasses.replace(
                ps, coefficient=ps.coefficient * v["station_cost_factor"]),
            options=tuple(dataclasses.replace(o, cost=PowerLawPipeCost(
                o.cost.coefficient * v["pipe_cost_factor"], o.cost.exponent))
                for o in study.diameter_options))
        ev = evaluate(other.problem, choices)
        np.testing.assert_allclose(mc.pv[s], ev.cost, rtol=1e-9)
        np.testing.assert_array_equal(mc.feasible[s], ev.feasible)


def test_the_chosen_design_first_and_its_runners_up_by_cost(demo):
    study, result = demo
    choices, costs = nu.runner_up_designs(study.problem, result.outcome.choice, 4)
    np.testing.assert_array_equal(choices[0], result.outcome.choice)
    assert costs[0] == pytest.approx(result.total_cost, rel=1e-12)
    assert list(costs[1:]) == sorted(costs[1:])
    # each runner-up differs from the chosen design in one pipe, by one allowed size
    diff = choices[1:] != choices[0]
    assert np.all(diff.sum(axis=1) == 1)
    assert np.all(np.abs(choices[1:][diff] - choices[0][diff.argmax(axis=1)]) == 1)


def test_same_seed_same_results_whatever_the_batches(demo, monkeypatch):
    study, result = demo
    dist = {"flow_factor": Normal(1.0, 0.1, 0.7, 1.3), "growth": Uniform(0.0, 0.02),
            "horizon": Uniform(10, 30), "energy_price": Triangular(0.1, 0.14, 0.22)}
    a = study.monte_carlo(dist, n=40, seed=5, result=result)
    monkeypatch.setattr(nu, "MAX_CASES", 300)
    b = study.monte_carlo(dist, n=40, seed=5, result=result)
    np.testing.assert_array_equal(a.pv, b.pv)
    np.testing.assert_array_equal(a.feasible, b.feasible)
    c = study.monte_carlo(dist, n=40, seed=6, result=result)
    assert not np.array_equal(a.pv, c.pv)


@pytest.mark.reference
def test_the_summary_by_hand(demo):
    # the summary's definitions written out: the probability of being the cheapest feasible
    # design, the median and the 5th/95th percentiles (linear interpolation between order
    # statistics, Hyndman & Fan 1996 definition 7), the expected regret (mean excess over the
    # cheapest feasible design of each sample) and Spearman's rank correlation (Spearman 1904:
    # Pearson's correlation of the ranks)
    study, result = demo
    mc = study.monte_carlo({"energy_price": stats.uniform(0.1, 0.1),
                            "discount_rate": Uniform(0.03, 0.07)}, n=500, seed=3,
                           result=result)
    pv, feas = mc.pv, mc.feasible
    best = np.where(feas, pv, np.inf)
    cheapest = best.argmin(axis=1)

    def percentile(x, p):
        x = sorted(x)
        h = (len(x) - 1) * p
        lo = int(np.floor(h))
        return x[lo] + (h - lo) * (x[min(lo + 1, len(x) - 1)] - x[lo])

    table = mc.designs
    for b in range(pv.shape[1]):
        assert table["prob_cheapest"].iloc[b] == sum(cheapest == b) / 500
        assert table["pv_p50"].iloc[b] == pytest.approx(percentile(pv[:, b], 0.5), rel=1e-12)
        assert table["pv_p05"].iloc[b] == pytest.approx(percentile(pv[:, b], 0.05), rel=1e-12)
        assert table["pv_p95"].iloc[b] == pytest.approx(percentile(pv[:, b], 0.95), rel=1e-12)
        regret = sum(pv[s, b] - best[s].min() for s in range(500)) / 500
        assert table["expected_regret"].iloc[b] == pytest.approx(regret, rel=1e-9)

    def ranks(x):
        r = np.empty(len(x))
        r[np.argsort(x)] = np.arange(1, len(x) + 1)
        return r

    rank_pv = ranks(pv[:, 0])
    corr = mc.correlation.set_index("input")["spearman"]
    for name in ("energy_price", "discount_rate"):
        rank_x = ranks(mc.inputs[name].to_numpy())
        a, b = rank_x - rank_x.mean(), rank_pv - rank_pv.mean()
        rho = (a * b).sum() / np.sqrt((a * a).sum() * (b * b).sum())
        assert corr[name] == pytest.approx(rho, rel=1e-12)
    assert corr["discount_rate"] < 0 < corr["energy_price"]
    assert "Monte Carlo of the life-cycle cost" in mc.text()
    assert "\n" not in repr(mc)


@pytest.mark.reference
def test_sampled_inputs_follow_their_distributions(demo):
    # the samples against scipy.stats by Kolmogorov-Smirnov (2,000 draws, seed fixed):
    # uniform, triangular (scipy.stats.triang, mode at c of the width) and the normal
    # truncated to its bounds (scipy.stats.truncnorm)
    study, result = demo
    mc = study.monte_carlo({"energy_price": Triangular(0.1, 0.14, 0.22),
                            "flow_factor": Normal(1.0, 0.1, 0.7, 1.3),
                            "escalation": Uniform(-0.01, 0.03)}, n=2000, seed=8, designs=1,
                           result=result)
    x = mc.inputs
    tri = stats.triang((0.14 - 0.1) / 0.12, loc=0.1, scale=0.12)
    assert stats.kstest(x["energy_price"], tri.cdf).pvalue > 1e-3
    tn = stats.truncnorm(-3.0, 3.0, loc=1.0, scale=0.1)
    assert stats.kstest(x["flow_factor"], tn.cdf).pvalue > 1e-3
    assert stats.kstest(x["escalation"], stats.uniform(-0.01, 0.04).cdf).pvalue > 1e-3
    # and not against a wrong one (the test can fail)
    assert stats.kstest(x["energy_price"], stats.uniform(0.1, 0.12).cdf).pvalue < 1e-3


@pytest.mark.reference
def test_samples_of_the_economic_inputs_priced_by_hand(demo):
    # Price, horizon and discount rate move no hydraulics: each sample's PV of the chosen
    # design, written out as an explicit sum in mpmath from the file's inputs and the demo's
    # two pump heads (P = rho g Q H / eta, rho from iapws at 12 degC; energy at the sampled
    # price escalating 1 %; 60 per kW of peak; the station 9000 (1.5 P)^0.68 bought every 20
    # years before the horizon, its last purchase credited 1 - age/20; maintenance 0.3 % of
    # the pipes and 1.5 % of the station; pipe residual 1 - n/80; capital of the pipes as the
    # study prices them). Present value at the sampled rate (common practice).
    import iapws
    import mpmath

    mpmath.mp.dps = 30
    study, result = demo
    mc = study.monte_carlo({"energy_price": Uniform(0.08, 0.25), "horizon": Uniform(10, 45),
                            "discount_rate": Uniform(0.02, 0.08)}, n=6, seed=2, designs=1,
                           result=result)
    rho = mpmath.mpf(iapws.IAPWS95(T=285.15, P=0.101325).rho)
    cases = result.cases
    power = [rho * mpmath.mpf("9.80665") * mpmath.mpf(q) * mpmath.mpf(h) / mpmath.mpf("0.72")
             / 1000 for q, h in zip(cases["total_demand_m3_s"], cases["pump_head_m"],
                                    strict=True)]
    energy, peak = power[0] * 7300 + power[1] * 1460, max(power)
    pipe = mpmath.mpf(result.costs["capex_pipe"])
    station = 9000 * (mpmath.mpf("1.5") * peak) ** mpmath.mpf("0.68")
    horizons = mc.inputs["horizon"]
    assert horizons.min() < 20 < horizons.max()      # with and without the renewal at 20
    for s in range(6):
        price = mpmath.mpf(mc.inputs["energy_price"].iloc[s])
        n = int(mc.inputs["horizon"].iloc[s])
        i = 1 + mpmath.mpf(mc.inputs["discount_rate"].iloc[s])
        buys = list(range(0, n, 20))
        pv = pipe + sum(station / i**t for t in buys)
        for t in range(1, n + 1):
            pv += (energy * price * mpmath.mpf("1.01") ** (t - 1) + 60 * peak
                   + mpmath.mpf("0.003") * pipe + mpmath.mpf("0.015") * station) / i**t
        pv -= (pipe * (1 - mpmath.mpf(n) / 80)
               + station * (1 - mpmath.mpf(n - buys[-1]) / 20)) / i**n
        assert mc.pv[s, 0] == pytest.approx(float(pv), rel=1e-11)


@pytest.mark.reference
def test_samples_of_flows_hours_and_costs_priced_by_an_independent_solution(demo):
    # Samples that move the demands: each sample's pump heads from the test's own solution of
    # the looped demo (tests/network_reference.py: flows and heads by MINPACK, Darcy-Weisbach
    # with Colebrook-White, water at 12 degC from iapws; new pipe 0.1 mm as the bundled
    # ductile-iron lining, the old main 1.5 mm, K 6 on the rising main). With one source the
    # flows do not depend on its head, so the free pump lifts the source from its 31 m level
    # to the least head that keeps every node at its minimum. Then the PV of the chosen design
    # as an explicit sum (present value, common practice): P = rho g Q H / eta at the sampled
    # efficiency, hours x the sampled factor, station 9000 x factor (1.5 P)^0.68 at 0 and 20,
    # pipes x factor, 40 years at 5 %, residual 1 - 40/80 of the pipes; and the 2.5 m/s limit.
    import iapws

    from tests.network_reference import dw_head_loss, pipe_flows_and_heads

    study, result = demo
    mc = study.monte_carlo({"flow_factor": Uniform(0.8, 1.7), "hours_factor": Uniform(0.7, 1.0),
                            "efficiency": Uniform(0.6, 0.85),
                            "station_cost_factor": Uniform(0.7, 1.4),
                            "pipe_cost_factor": Uniform(0.9, 1.2)}, n=4, seed=5, designs=1,
                           result=result)
    d = demo_dict()
    names = [n["name"] for n in d["node"]] + [s["name"] for s in d["source"]]
    idx = {n: i for i, n in enumerate(names)}
    pipes = result.pipes
    start = [idx[n] for n in pipes["from"]]
    end = [idx[n] for n in pipes["to"]]
    length = pipes["length_m"].to_numpy()
    diam = pipes["inner_diameter_m"].to_numpy()
    new = (pipes["status"] == "new").to_numpy()
    rough = np.where(new, 1e-4, 1.5e-3)
    k = np.where(pipes["pipe"] == "rising main", 6.0, 0.0)
    w = iapws.IAPWS95(T=285.15, P=0.101325)
    rho, nu, g = w.rho, w.mu / w.rho, 9.80665
    elevation = np.array([float(n["elevation"].split()[0]) for n in d["node"]])
    minimum = np.array([float(n.get("min_pressure_head", "25 m").split()[0]) for n in d["node"]])
    base = np.array([float(n["demand"].split()[0]) / 1000.0 for n in d["node"]])
    t = np.arange(1, 41)
    disc = 1.05**-t
    for s in range(4):
        v = mc.inputs.iloc[s]
        power, fast = [], False
        for hours, factor in ((7300.0, 1.0), (1460.0, 1.9)):
            demand = base * factor * v["flow_factor"]
            q, h = pipe_flows_and_heads(
                7, start, end, lambda q: dw_head_loss(q, length, diam, rough, nu, k), demand,
                100.0, 0.01, 90.0)
            lift = 100.0 + (minimum + elevation - h).max() - 31.0
            power.append((rho * g * demand.sum() * lift / v["efficiency"] / 1000.0,
                          hours * v["hours_factor"]))
            fast |= bool(np.any(np.abs(q[new]) / (np.pi * diam[new] ** 2 / 4) > 2.5))
        energy = sum(p * hrs for p, hrs in power)
        peak = max(p for p, _ in power)
        pipe = result.costs["capex_pipe"] * v["pipe_cost_factor"]
        station = 9000.0 * v["station_cost_factor"] * (1.5 * peak) ** 0.68
        pv = (pipe + station * (1 + 1.05**-20)
              + ((energy * 0.14 * 1.01 ** (t - 1) + 60.0 * peak + 0.003 * pipe
                  + 0.015 * station) * disc).sum()
              - pipe * 0.5 * 1.05**-40)
        assert mc.pv[s, 0] == pytest.approx(pv, rel=1e-8)
        assert bool(mc.feasible[s, 0]) == (not fast)
    assert mc.feasible[:, 0].any() and not mc.feasible[:, 0].all()   # both outcomes checked


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"distributions": {"aging_factor": Uniform(0.5, 2)}},
         r"unknown network input 'aging_factor'; inputs: energy_price"),
        ({"distributions": {"energy_price": 0.13}},
         r"uncertainty\.energy_price: expected a distribution"),
        ({"distributions": {}}, r"give at least one input distribution"),
        ({"n": 1}, r"n must be a whole number from 2"),
        ({"seed": -1}, r"seed must be a whole number from 0"),
        ({"designs": 0}, r"designs must be a whole number from 1 to 20"),
        ({"distributions": {"horizon": Uniform(0.1, 0.4)}},
         r"uncertainty\.horizon: sampled horizon must be a whole number from 1 to 200; got 0"),
        ({"distributions": {"efficiency": Uniform(0.5, 1.5)}},
         r"uncertainty\.efficiency: sampled efficiency must be > 0 and <= 1"),
    ],
)
def test_inputs_are_checked_as_in_a_sizing_study(demo, kwargs, match):
    study, result = demo
    args = {"distributions": {"energy_price": Uniform(0.1, 0.2)}, "n": 10, "seed": 0,
            "designs": 2, "result": result, **kwargs}
    with pytest.raises(InputError, match=match):
        study.monte_carlo(**args)


def test_a_gravity_network_is_refused():
    d = demo_dict()
    for key in ("pumping", "energy", "pump_station", "economics"):
        d.pop(key)
    d["source"] = [{"name": "Quillmere works", "head": "120 m"}]
    study = NetworkStudy.from_dict(d)
    with pytest.raises(InputError, match="needs a pumped source"):
        study.monte_carlo({"energy_price": Uniform(0.1, 0.2)}, n=10)
    d["uncertainty"] = {"energy_price": {"distribution": "uniform", "low": 0.1, "high": 0.2}}
    with pytest.raises(StudyFileError, match="needs a pumped source"):
        NetworkStudy.from_dict(d)


def test_the_study_file_section_runs_with_the_study(tmp_path):
    d = demo_dict()
    d["optimizer"]["evaluations"] = 3000
    d["uncertainty"] = {"samples": 300, "seed": 4, "designs": 2,
                        "energy_price": {"distribution": "triangular", "low": 0.1,
                                         "mode": 0.14, "high": 0.22},
                        "horizon": {"distribution": "uniform", "low": 30, "high": 50}}
    result = NetworkStudy.from_dict(d).run(progress=False)
    mc = result.monte_carlo
    assert mc.n == 300 and mc.seed == 4 and len(mc.designs) == 2
    assert list(mc.inputs.columns) == ["energy_price", "horizon"]
    assert "Monte Carlo of the life-cycle cost: 300 samples (seed 4)" in result.text()
    from pipeopt.network.report import write_network_report

    write_network_report(result, tmp_path / "out")
    assert (tmp_path / "out" / "monte_carlo.csv").is_file()
    assert (tmp_path / "out" / "monte_carlo_correlation.csv").is_file()


@pytest.mark.parametrize(
    ("table", "match"),
    [
        ({"aging_factor": {"distribution": "uniform", "low": 0.5, "high": 2}},
         r"uncertainty\.aging_factor: unknown network input"),
        ({"energy_price": {"distribution": "uniform", "low": 0.2, "high": 0.1}},
         r"uncertainty\.energy_price: uniform: low \(0\.2\) must be below high"),
        ({"designs": 50, "energy_price": {"distribution": "uniform", "low": 0.1,
                                          "high": 0.2}},
         r"uncertainty\.designs: must be <= 20"),
        ({"samples": 100}, r"uncertainty: give at least one input distribution"),
    ],
)
def test_study_file_errors_name_the_key(table, match):
    d = demo_dict()
    d["uncertainty"] = table
    with pytest.raises(StudyFileError, match=match):
        NetworkStudy.from_dict(d)
