"""Run every benchmark of the project in one go and print a table of figures and targets.

Run: ``cd benchmarks && python run.py [--quick]``. Each benchmark prints its own detailed
figures first; the closing table gives each figure beside the reference it was measured against
in this same run (``python -c pass``, one ``np.log`` over the same array, a kernel round trip
that draws nothing). ``--quick`` uses fewer points, samples and repeats (a smoke run). Not a
test: nothing fails on a slow machine; the table says which targets this run met. On a machine
shared with other work, compare the ratios and CPU times rather than single wall times.
"""

from __future__ import annotations

import argparse
import os
import sys
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent))

import bench_explorer  # noqa: E402
import bench_friction  # noqa: E402
import bench_longline  # noqa: E402
import bench_sizing  # noqa: E402
import bench_startup  # noqa: E402
import bench_uncertainty  # noqa: E402


def main(quick: bool) -> None:
    rows = []  # (benchmark, figure, value, reference, target, met)
    print("=" * 78)
    start = bench_startup.main(3 if quick else 7)
    for name, limit in (("pipeopt --help", 0.2), ("run, invalid study file", 0.5),
                        ("run, demo study", 1.5), ("run --out, demo study", 3.0)):
        r = start[name]
        rows.append(("start-up", f"{name}: wall [s]", r["wall"],
                     f"python -c pass {r['reference']:.3f} s", f"<= {limit}",
                     r["wall"] <= limit))
        rows.append(("start-up", f"{name}: CPU [s]", r["cpu"], "", f"<= {limit}",
                     r["cpu"] <= limit))
    print("=" * 78)
    # the figures below run in this process: keep the plotting backend off any screen
    os.environ.setdefault("MPLBACKEND", "Agg")
    rates = bench_friction.run(200_000 if quick else 1_000_000, 3 if quick else 7)
    rows.append(("friction factors", "friction_factor, x one np.log", rates["x np.log"],
                 "np.log, same array", "<= 3", rates["x np.log"] <= 3))
    rows.append(("friction factors", "fast / reference kernel speed",
                 rates["reference kernel / fast kernel"], "Clamond's two steps", "", None))
    print("=" * 78)
    sizing = bench_sizing.run()
    t = sizing["demo run() with continuous optimum"] * 1e3
    t0 = sizing["demo run() without optimum"] * 1e3
    rows.append(("sizing study", "demo run() [ms]", t, f"without optimum {t0:.1f} ms", "<= 8",
                 t <= 8))
    t = sizing["run() with continuous optimum"] * 1e3
    rows.append(("sizing study", "benchmark study run() [ms]", t, "", "< 20", t < 20))
    print("=" * 78)
    n = 2000 if quick else 10_000
    mc = bench_uncertainty.main(n)
    a = mc[("(a) economic inputs", 1)] * 10_000 / n
    b = mc[("(b) + flows and growth", 1)] * 10_000 / n
    peak = mc[("peak MiB", "(b) + flows and growth", 1)]
    direct = mc["direct path, scaled"] * 10_000 / n
    rows.append(("Monte Carlo", "10,000 samples, economic inputs [s]", a, "", "< 5", a < 5))
    rows.append(("Monte Carlo", "10,000 samples, + flows and growth [s]", b,
                 f"direct path {direct:.1f} s", "<= 3", b <= 3))
    rows.append(("Monte Carlo", "  peak traced memory [MiB]", peak, "", "<= 1024",
                 peak <= 1024))
    up = mc["(c) + flows, growth, aging"] * 10_000 / n
    rows.append(("Monte Carlo", "upgrade demo, + flows, growth, aging [s]", up,
                 f"economic only {mc['(c) economic inputs'] * 10_000 / n:.1f} s", "<= 3",
                 up <= 3))
    diff = mc["largest relative EAC difference"]
    rows.append(("Monte Carlo", "  EAC, series against direct [rel.]", diff, "", "<= 1e-12",
                 diff <= 1e-12))
    print("=" * 78)
    lines = bench_longline.run(3 if quick else 7)
    ll = lines["long-line demo: demo('longline').run()"]
    rows.append(("long line", "demo with up to 3 stations [s]", ll,
                 f"uniform demo {lines['uniform demo: demo().run()']:.3f} s", "< 1", ll < 1.0))
    print("=" * 78)
    ex = bench_explorer.measure("SizingStudy", 7 if quick else 21)
    rows.append(("explorer", "slider change to new image, kernel [ms]", ex["slider"] * 1e3,
                 f"round trip {ex['idle'] * 1e3:.1f} ms", "<= 150", ex["slider"] <= 0.150))
    rows.append(("explorer", "CPU time of the update in the kernel [ms]",
                 ex["kernel_cpu"] * 1e3, "", "", None))
    print("=" * 78)
    print(f"{'benchmark':<18}{'figure':<46}{'value':>10}  {'reference':<28}{'target':<8} met")
    for bench, figure, value, reference, target, met in rows:
        flag = "" if met is None else ("yes" if met else "NO")
        shown = f"{value:>10.3g}" if abs(value) < 1e-3 else f"{value:>10.3f}"
        print(f"{bench:<18}{figure:<46}{shown}  {reference:<28}{target:<8} {flag}")


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    main(parser.parse_args().quick)
