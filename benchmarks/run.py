"""Run every benchmark of the project in one go and print a table of figures and targets.

Run: ``cd benchmarks && python run.py [--quick]``. Each benchmark also prints its own detailed
figures and ratios. ``--quick`` uses fewer points and samples (for a smoke run). Not a test:
nothing fails on a slow machine; the table says which targets this run met.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
sys.path.insert(0, str(Path(__file__).resolve().parent))

import bench_explorer  # noqa: E402
import bench_friction  # noqa: E402
import bench_longline  # noqa: E402
import bench_sizing  # noqa: E402
import bench_uncertainty  # noqa: E402


def main(quick: bool) -> None:
    rows = []
    print("=" * 78)
    rates = bench_friction.run(200_000 if quick else 1_000_000, 3 if quick else 7)
    rows.append(("friction factors", "pipeopt M evaluations/s", rates["pipeopt"] / 1e6,
                 ">= 100", rates["pipeopt"] >= 100e6))
    rows.append(("friction factors", "x straightforward numpy",
                 rates["pipeopt"] / rates["numpy straightforward"], "about 2", None))
    print("=" * 78)
    sizing = bench_sizing.run()
    t = sizing["run() with continuous optimum"] * 1e3
    rows.append(("sizing study", "median run() [ms]", t, "< 20", t < 20))
    print("=" * 78)
    n = 2000 if quick else 10_000
    mc = bench_uncertainty.main(n)
    a = mc[("(a) economic inputs", 1)] * 10_000 / n
    b = mc[("(b) + flows and growth", 2)] * 10_000 / n
    rows.append(("Monte Carlo", "10,000 samples, economic inputs [s]", a, "< 5", a < 5))
    rows.append(("Monte Carlo", "10,000 samples, + flows, growth, 2 threads [s]", b, "< 5",
                 b < 5))
    print("=" * 78)
    ll = bench_longline.run(3 if quick else 7)["long-line demo: demo('longline').run()"]
    rows.append(("long line", "demo with up to 3 stations [s]", ll, "< 1", ll < 1.0))
    print("=" * 78)
    ex = bench_explorer.main(7 if quick else 21) * 1e3
    rows.append(("explorer", "control change to redrawn figure [ms]", ex, "< 150", ex < 150))
    print("=" * 78)
    print(f"{'benchmark':<18}{'figure':<48}{'value':>12}  {'target':<8} met")
    for bench, figure, value, target, met in rows:
        flag = "" if met is None else ("yes" if met else "NO")
        print(f"{bench:<18}{figure:<48}{value:>12.2f}  {target:<8} {flag}")


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    main(parser.parse_args().quick)
