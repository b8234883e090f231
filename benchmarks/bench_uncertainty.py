"""Monte Carlo speed and memory: 10,000 samples of the sizing benchmark study.

Run: ``python benchmarks/bench_uncertainty.py [--samples N]``. Two sets of uncertain inputs,
measured in this one run:

(a) economic inputs only (energy price, escalation, discount rate, horizon, efficiency, hours,
    pipe cost factor per material, station cost factor): the hydraulics are shared by every
    sample and evaluated once;
(b) the same plus flows and demand growth, which change the hydraulics of every sample, so the
    friction loss of every candidate x year x duty point is solved again for every sample.

Prints the wall time with one and with two threads, the samples per second, and the peak of
memory traced by tracemalloc (numpy's arrays included), with the ratios. Not a test.
"""

from __future__ import annotations

import argparse
import time
import tracemalloc

from bench_sizing import benchmark_study

from pipeopt.uncertainty import LogNormal, Normal, Triangular, Uniform, monte_carlo

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


def measure(study, dists, n: int, workers: int) -> tuple[float, float]:
    tracemalloc.start()
    t0 = time.perf_counter()
    monte_carlo(study, dists, n=n, seed=1, progress=False, workers=workers)
    dt = time.perf_counter() - t0
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    return dt, peak


def main(n: int) -> dict:
    study = benchmark_study()
    print(f"Monte Carlo of the sizing benchmark study ({len(study.candidates)} candidates, "
          f"3 duty points, 40 years), {n:,} samples")
    results = {}
    for name, dists in (("(a) economic inputs", ECONOMIC), ("(b) + flows and growth", HYDRAULIC)):
        for workers in (1, 2):
            dt, peak = measure(study, dists, n, workers)
            results[(name, workers)] = dt
            print(f"  {name:<26}{workers} thread(s) {dt:8.2f} s  {n / dt:10,.0f} samples/s  "
                  f"peak traced memory {peak / 2**20:7.0f} MiB")
    a = results[("(a) economic inputs", 1)]
    b = results[("(b) + flows and growth", 1)]
    print(f"  ratio (b)/(a), one thread: {b / a:.1f}; two threads against one: "
          f"(a) {a / results[('(a) economic inputs', 2)]:.2f}, "
          f"(b) {b / results[('(b) + flows and growth', 2)]:.2f}")
    return results


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--samples", type=int, default=10_000)
    main(parser.parse_args().samples)
