"""Explorer responsiveness: time from a control change to the updated figure and table.

Run: ``cd benchmarks && python bench_explorer.py``. Builds the explorer of the sizing benchmark
study (394 candidates, 3 duty points, 40 years) without debounce, moves the energy-price slider
21 times and reports the median time of the whole update (re-evaluation, table, redrawn figure)
and of its parts, measured side by side in this run. Not a test.
"""

from __future__ import annotations

import os
import statistics
import time

os.environ.setdefault("MPLBACKEND", "Agg")

from bench_sizing import benchmark_study  # noqa: E402

import pipeopt  # noqa: E402


def main(repeat: int = 21) -> float:
    study = benchmark_study()
    ex = pipeopt.explore(study, debounce=0)
    slider = ex.controls["energy_price"]
    values = [slider.value * (1.0 + 0.02 * (k % 10)) for k in range(repeat)]
    total = []
    for v in values:
        slider.value = v if v != slider.value else v * 1.001
        total.append(ex.last_update_seconds)
    run_t = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        study.run(ex.scenario())
        run_t.append(time.perf_counter() - t0)
    med, med_run = statistics.median(total), statistics.median(run_t)
    print(f"explorer of the sizing benchmark study ({len(study.candidates)} candidates), "
          f"median of {repeat}")
    print(f"  control change -> updated figure and table {med * 1e3:8.1f} ms")
    print(f"    of which the study's run()              {med_run * 1e3:8.1f} ms "
          f"({med_run / med:.0%})")
    print(f"    drawing, table and display               {(med - med_run) * 1e3:8.1f} ms")
    return med


if __name__ == "__main__":
    main()
