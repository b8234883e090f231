"""Sizing-study speed: median ``run()`` time of a study with every catalog size of three materials.

Run: ``python benchmarks/bench_sizing.py``. The bundled demo study, and the benchmark study:
ductile iron, PE 100 and carbon steel with all their catalog sizes and classes, 3 duty points,
1.5 %/yr flow growth, typical aging of every material, 40 years. Prints the median time of
``run()`` (with and without the continuous optimum), of the model-layer evaluation alone, and
how the evaluation time grows with the number of candidates and years, measured side by side in
this one run. Not a test.
"""

from __future__ import annotations

import copy
import statistics
import time

import numpy as np

from pipeopt import SizingStudy
from pipeopt.lifecycle import evaluate

BENCH = {
    "study": {"name": "benchmark (illustrative)", "currency": "EUR", "illustrative": True},
    "fluid": {"kind": "water", "temperature": "15 degC"},
    "line": {"length": "5 km", "static_head": "30 m", "minor_loss_k": 8.0},
    "duty": [{"flow": "250 m^3/h", "hours": 4000}, {"flow": "450 m^3/h", "hours": 3000},
             {"flow": "700 m^3/h", "hours": 800}],
    "growth": {"flow_per_year": 0.015},
    "pumping": {"efficiency": 0.72},
    "energy": {"price": 0.13, "escalation": 0.01, "demand_charge": 50.0},
    "pump_station": {"cost_coefficient": 9000.0, "cost_exponent": 0.7, "standby_fraction": 0.5,
                     "life": 20, "maintenance": 0.015},
    "economics": {"discount_rate": 0.05, "horizon": 40, "pipe_life": 80,
                  "pipe_maintenance": 0.003},
    "material": [
        {"name": "ductile-iron", "cost": {"coefficient": 2100.0, "exponent": 1.3},
         "aging": "typical"},
        {"name": "pe100", "cost": {"coefficient": 1500.0, "exponent": 1.45}, "aging": "typical"},
        {"name": "steel", "cost": {"coefficient": 2400.0, "exponent": 1.2}, "aging": "typical"},
    ],
    "constraints": {"velocity_min": "0.3 m/s", "velocity_max": "3 m/s"},
}


def benchmark_study(horizon: int = 40) -> SizingStudy:
    m = copy.deepcopy(BENCH)
    m["economics"]["horizon"] = horizon
    return SizingStudy.from_dict(m)


def median_time(fn, repeat: int = 21) -> float:
    fn()
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        times.append(time.perf_counter() - t0)
    return statistics.median(times)


def run() -> dict[str, float]:
    study = benchmark_study()
    n = len(study.candidates)
    demo = SizingStudy.demo()
    figures = {
        "demo run() with continuous optimum": median_time(demo.run),
        "demo run() without optimum": median_time(lambda: demo.run(optimum=False)),
        "run() with continuous optimum": median_time(study.run),
        "run() without optimum": median_time(lambda: study.run(optimum=False)),
        "evaluate() only": median_time(study.evaluate),
    }
    print(f"sizing: the demo study ({len(demo.candidates)} candidates) and the benchmark study "
          f"({n} candidates x 3 duty points x 40 years), median of 21")
    for name, t in figures.items():
        print(f"  {name:<32}{t * 1e3:8.2f} ms")
    print("evaluate() scaling (model layer; ratio to the benchmark size):")
    base = figures["evaluate() only"]
    s = study.scenario
    c = study.candidates
    for factor in (0.25, 1, 4, 16):
        idx = np.resize(np.arange(n), max(1, int(n * factor)))
        args = (c["inner_diameter_m"].to_numpy()[idx], c["roughness_m"].to_numpy()[idx],
                c["aging_m_per_year"].to_numpy()[idx], c["cost_per_metre"].to_numpy()[idx])
        t = median_time(lambda a=args: evaluate(s, *a), repeat=7)
        print(f"  {idx.size:6d} candidates, 40 years: {t * 1e3:8.2f} ms  ({t / base:5.2f} x)")
    for years in (10, 40, 100):
        st_ = benchmark_study(years)
        t = median_time(st_.evaluate, repeat=7)
        print(f"  {n:6d} candidates, {years:3d} years: {t * 1e3:8.2f} ms  ({t / base:5.2f} x)")
    return figures


if __name__ == "__main__":
    run()
