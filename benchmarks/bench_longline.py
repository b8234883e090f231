"""Long-line speed: the bundled long-line demo, and how the station optimizer scales.

Run: ``python benchmarks/bench_longline.py``. Prints the median wall time of what a user waits
for, ``SizingStudy.demo("longline").run()`` (reading the file, the dynamic programme over the
booster sites, the class telescoping and the exact evaluation of every design, then the
run), beside the same figure for the uniform sizing demo measured in this run, the split
between building the study and running it, and how the time grows when the optimizer may put
up to three boosters at any point of a finer profile (M candidate points: the work grows as
M^3). Target: the long-line demo (up to 3 stations: the head station and 2 boosters) in under
1 s. Not a test.
"""

from __future__ import annotations

import copy
import tomllib
from importlib import resources

import numpy as np
from bench_sizing import median_time  # noqa: E402  (the benchmarks' folder is on the path)

from pipeopt import Fluid, SizingStudy

DEMO = tomllib.loads(resources.files("pipeopt").joinpath("data", "demo_longline.toml")
                     .read_text("utf-8"))


def free_positions(spacing_km: float | None) -> dict:
    """The demo with up to 3 boosters anywhere on the profile (refined every ``spacing_km``)."""
    d = copy.deepcopy(DEMO)
    d["boosters"] = {k: v for k, v in d["boosters"].items() if k != "sites"}
    d["boosters"]["max_count"] = 3
    if spacing_km:
        x = [float(p["chainage"].split()[0]) for p in d["profile"]]
        z = [float(p["elevation"].split()[0]) for p in d["profile"]]
        xs = np.unique(np.concatenate([np.arange(0.0, x[-1], spacing_km), x]))
        d["profile"] = [{"chainage": f"{a:g} km", "elevation": f"{b:.2f} m"}
                        for a, b in zip(xs, np.interp(xs, x, z), strict=True)]
    return d


def run(repeat: int = 7) -> dict[str, float]:
    Fluid.water("12 degC")  # load the property library once (not part of any figure)
    out = {}
    out["uniform demo: demo().run()"] = median_time(lambda: SizingStudy.demo().run(), repeat)
    out["long-line demo: demo('longline').run()"] = median_time(
        lambda: SizingStudy.demo("longline").run(), repeat)
    out["  of which building the study"] = median_time(
        lambda: SizingStudy.demo("longline"), repeat)
    study = SizingStudy.demo("longline")
    out["  of which run()"] = median_time(study.run, repeat)
    for spacing in (None, 2.0, 1.0):
        d = free_positions(spacing)
        st = SizingStudy.from_dict(d)
        m = st.layout.model.sites.size
        out[f"up to 3 boosters at any of {m} points"] = median_time(
            lambda d=d: SizingStudy.from_dict(d).run(), max(3, repeat // 2))
    ref = out["uniform demo: demo().run()"]
    print(f"{'figure':<52}{'median [s]':>12}{'x uniform demo':>16}")
    for name, t in out.items():
        print(f"{name:<52}{t:>12.3f}{t / ref:>16.1f}")
    t = out["long-line demo: demo('longline').run()"]
    print(f"target: the long-line demo in under 1 s: {'met' if t < 1.0 else 'NOT met'} "
          f"({t:.3f} s)")
    return out


if __name__ == "__main__":
    run()
