"""Monte Carlo speed and memory: 10,000 samples of the sizing benchmark study.

Run: ``python benchmarks/bench_uncertainty.py [--samples N]``. Two sets of uncertain inputs,
measured in this one run:

(a) economic inputs only (energy price, escalation, discount rate, horizon, efficiency, hours,
    pipe cost factor per material, station cost factor): the hydraulics are shared by every
    sample and evaluated once;
(b) the same plus flows and demand growth, which change the hydraulics of every sample: the
    friction factor of every candidate x year x duty point is fitted once as a Chebyshev series
    in the flow multiplier (pipeopt.surrogate) and the energy sums are matrix products.

(c) the upgrade demo's Monte Carlo, economic inputs and then flows, growth and aging as well
    (every sample's hydraulics solved directly).

The reference, measured in the same run: (b) by the direct path (Colebrook-White solved for
every sample, ``friction_series=False``) on a subsample of the same samples, scaled to the full
count, and the largest relative EAC difference between the two paths on that subsample.

Prints the wall time with one and with two threads (after one small untimed run for the imports),
the samples per second, and the peak of memory traced by tracemalloc (numpy's arrays included)
in a second, untimed run of each case (tracing slows numpy), with the ratios. Not a test.
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

import numpy as np
from bench_sizing import benchmark_study

from pipeopt import UpgradeStudy
from pipeopt.uncertainty import (
    LogNormal,
    Normal,
    Triangular,
    Uniform,
    monte_carlo,
    upgrade_monte_carlo,
)

ECONOMIC = {
    "energy_price": Triangular(0.09, 0.13, 0.22),
    "escalation": Uniform(-0.005, 0.025),
    "discount_rate": Uniform(0.03, 0.08),
    "horizon": Uniform(30, 50),
    "efficiency": Normal(0.72, 0.04, 0.6, 0.82),
    "hours_factor": Uniform(0.85, 1.1),
    "pipe_cost_factor:ductile-iron": LogNormal(1.0, 0.12),
    "pipe_cost_factor:pe100": LogNormal(1.0, 0.15),
    "pipe_cost_factor:steel": LogNormal(1.0, 0.12),
    "station_cost_factor": Triangular(0.8, 1.0, 1.3),
}
HYDRAULIC = {**ECONOMIC, "flow_factor": Normal(1.0, 0.1, 0.7, 1.3),
             "growth": Uniform(0.0, 0.03)}
# the upgrade demo: economic inputs, then flows, growth and the old line's aging as well
UPGRADE_ECONOMIC = {
    "energy_price": Triangular(0.09, 0.13, 0.22),
    "discount_rate": Uniform(0.03, 0.07),
    "horizon": Uniform(30, 50),
    "efficiency": Normal(0.72, 0.04, 0.6, 0.82),
    "capital_factor": LogNormal(1.0, 0.15),
    "break_growth": Uniform(0.02, 0.08),
}
UPGRADE_HYDRAULIC = {**UPGRADE_ECONOMIC, "flow_factor": Uniform(0.85, 1.15),
                     "growth": Uniform(0.0, 0.02), "aging_factor": Uniform(0.5, 2.0)}


def measure_upgrade(study, dists, n: int) -> tuple[float, float]:
    def run():
        return upgrade_monte_carlo(study, dists, n=n, seed=1, progress=False)

    t0 = time.perf_counter()
    run()
    dt = time.perf_counter() - t0
    return dt, _peak(run)


def _peak(run) -> float:
    """Peak traced memory [bytes] of a second run (tracing slows numpy: not timed)."""
    tracemalloc.start()
    run()
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return peak


def measure(study, dists, n: int, workers: int, **kw) -> tuple[float, float, object]:
    def run():
        return monte_carlo(study, dists, n=n, seed=1, progress=False, workers=workers, **kw)

    t0 = time.perf_counter()
    mc = run()
    dt = time.perf_counter() - t0
    return dt, _peak(run), mc


def main(n: int) -> dict:
    study = benchmark_study()
    print(f"Monte Carlo of the sizing benchmark study ({len(study.candidates)} candidates, "
          f"3 duty points, 40 years), {n:,} samples")
    results = {}
    fast = None
    monte_carlo(study, HYDRAULIC, n=200, seed=1, progress=False)  # imports and caches, not timed
    for name, dists in (("(a) economic inputs", ECONOMIC), ("(b) + flows and growth", HYDRAULIC)):
        for workers in (1, 2):
            dt, peak, mc = measure(study, dists, n, workers)
            results[(name, workers)] = dt
            results[("peak MiB", name, workers)] = peak / 2**20
            fast = mc if name.startswith("(b)") else fast
            print(f"  {name:<26}{workers} thread(s) {dt:8.2f} s  {n / dt:10,.0f} samples/s  "
                  f"peak traced memory {peak / 2**20:7.0f} MiB")
    # the reference: the direct path on the first samples of the same batch (same seed, so the
    # same values); the series are fitted to the whole batch's range either way
    sub = max(2, n // 20)
    dt, peak, ref = measure(study, HYDRAULIC, sub, 1, friction_series=False)
    direct = dt * n / sub
    results["direct path, scaled"] = direct
    same = monte_carlo(study, HYDRAULIC, n=sub, seed=1, progress=False)
    diff = float(np.max(np.abs(same.eac / ref.eac - 1.0)))
    results["largest relative EAC difference"] = diff
    print(f"  (b) by the direct path      {sub:,} samples {dt:8.2f} s, scaled to {n:,}: "
          f"{direct:8.2f} s; peak traced memory {peak / 2**20:7.0f} MiB")
    feas = "identical" if np.array_equal(same.feasible, ref.feasible) else "DIFFERS"
    print(f"  series against direct path on {sub:,} samples: largest relative EAC difference "
          f"{diff:.1e}, feasibility {feas}")
    a = results[("(a) economic inputs", 1)]
    b = results[("(b) + flows and growth", 1)]
    print(f"  ratio (b)/(a), one thread: {b / a:.1f}; direct path / series path: "
          f"{direct / b:.1f}; two threads against one: "
          f"(a) {a / results[('(a) economic inputs', 2)]:.2f}, "
          f"(b) {b / results[('(b) + flows and growth', 2)]:.2f}")
    # (c) the upgrade demo's Monte Carlo (every sample's hydraulics solved directly)
    up = UpgradeStudy.demo()
    measure_upgrade(up, UPGRADE_ECONOMIC, 200)                  # imports and caches, not timed
    print(f"Monte Carlo of the upgrade demo ({len(up.options)} options besides keeping the "
          f"line, action now), {n:,} samples")
    for name, dists in (("(c) economic inputs", UPGRADE_ECONOMIC),
                        ("(c) + flows, growth, aging", UPGRADE_HYDRAULIC)):
        dt, peak = measure_upgrade(up, dists, n)
        results[name] = dt
        print(f"  {name:<28}{dt:8.2f} s  {n / dt:10,.0f} samples/s  peak traced memory "
              f"{peak / 2**20:7.0f} MiB")
    print(f"  ratio (c) with hydraulics / economic: "
          f"{results['(c) + flows, growth, aging'] / results['(c) economic inputs']:.1f}")
    return results


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000)
    main(parser.parse_args().samples)
