"""Network design speed: the two-loop network to its best-known cost, one 1,000-pipe solution.

Run: ``python benchmarks/bench_network.py [--quick]`` (one core: the script pins the linear
algebra libraries to one thread before numpy loads). Prints, measured side by side in this one
run:

1. the looped search on the two-loop network of Alperovits & Shamir (1977) with the constants
   of Savic & Walters (1997), from several seeds to the best-known cost 419,000: time and
   designs evaluated; and, as the reference, the same number of designs evaluated one at a
   time instead of in batches;
2. one hydraulic solution (global gradient method, to 1e-9) of a generated looped network of
   1,000 pipes, Hazen-Williams and Darcy-Weisbach, against one sparse LU factorization of its
   matrix (the floor of any Newton step) and scipy's generic root finder on the same equations;
3. (not with ``--quick``) the hold-out Hanoi network of Fujiwara & Khang (1990) to its
   best-known 6,081,087.

Not a test: nothing fails on a slow machine.
"""

from __future__ import annotations

import os

for _var in ("OMP_NUM_THREADS", "OPENBLAS_NUM_THREADS", "MKL_NUM_THREADS"):
    os.environ.setdefault(_var, "1")

import argparse  # noqa: E402
import statistics  # noqa: E402
import time  # noqa: E402

import numpy as np  # noqa: E402
from scipy import optimize, sparse  # noqa: E402
from scipy.sparse import linalg as splinalg  # noqa: E402

from pipeopt.network.design import design_looped, evaluate  # noqa: E402
from pipeopt.network.hydraulics import (  # noqa: E402
    DarcyWeisbach,
    HazenWilliams,
    NetworkGraph,
    solve_network,
)
from pipeopt.network.published import (  # noqa: E402
    HANOI_BEST_KNOWN,
    TWO_LOOP_BEST_KNOWN,
    hanoi,
    two_loop,
)


def two_loop_runs(seeds: range) -> dict[str, float]:
    pr = two_loop()
    times, evals = [], []
    for seed in seeds:
        t0 = time.perf_counter()
        out = design_looped(pr, seed=seed, evaluations=400_000, target=TWO_LOOP_BEST_KNOWN,
                            progress=False)
        times.append(time.perf_counter() - t0)
        evals.append(out.evaluations)
        status = "reached" if out.cost <= TWO_LOOP_BEST_KNOWN else f"stopped at {out.cost:,.0f}"
        print(f"  seed {seed:2d}: {times[-1]:6.2f} s, {out.evaluations:8,d} designs, {status}")
    # reference: evaluate the median number of designs one at a time (no batching)
    n_ref = 2000
    rng = np.random.default_rng(0)
    choices = rng.integers(0, 14, size=(n_ref, 8))
    t0 = time.perf_counter()
    evaluate(pr, choices)
    batched = (time.perf_counter() - t0) / n_ref
    t0 = time.perf_counter()
    for c in choices[:200]:  # the reference: one design per call
        evaluate(pr, c)
    single = (time.perf_counter() - t0) / 200
    med_t = statistics.median(times)
    med_e = statistics.median(evals)
    print(f"  median {med_t:.2f} s, worst {max(times):.2f} s, median {med_e:,.0f} designs")
    print(f"  one design evaluated: {batched * 1e6:7.1f} us in a batch of {n_ref}, "
          f"{single * 1e6:7.1f} us alone ({single / batched:.1f} x); the median search "
          f"one design at a time would take about {med_e * single:.1f} s")
    return {"median_s": med_t, "worst_s": max(times), "median_designs": med_e,
            "batch_gain": single / batched}


def grid_network(n_pipes: int = 1000, seed: int = 0):
    """A looped grid of 20 x 26 junctions with diagonals, fed by one reservoir: n_pipes pipes."""
    rng = np.random.default_rng(seed)
    rows, cols = 20, 26
    idx = np.arange(rows * cols).reshape(rows, cols)
    s = np.concatenate([idx[:, :-1].ravel(), idx[:-1, :].ravel()])
    e = np.concatenate([idx[:, 1:].ravel(), idx[1:, :].ravel()])
    extra = n_pipes - 1 - s.size
    a, b = idx[:-1, :-1].ravel(), idx[1:, 1:].ravel()
    pick = rng.choice(a.size, extra, replace=False)
    j = rows * cols
    s = np.concatenate([[j], s, a[pick]])
    e = np.concatenate([[0], e, b[pick]])
    g = NetworkGraph(j, 1, s, e)
    length = rng.uniform(100, 400, s.size)
    d = rng.choice([0.1, 0.15, 0.2, 0.25, 0.3], s.size)
    d[0] = 0.8
    demand = rng.uniform(0.0005, 0.002, j)
    return g, length, d, demand


def median_time(fn, repeat: int) -> float:
    fn()
    ts = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        fn()
        ts.append(time.perf_counter() - t0)
    return statistics.median(ts)


def large_solution(repeat: int) -> dict[str, float]:
    g, length, d, demand = grid_network()
    print(f"  network: {g.n_pipes} pipes, {g.n_junctions} junctions, one reservoir")
    out = {}
    for name, law in (("Hazen-Williams", HazenWilliams(length, d, 120.0)),
                      ("Darcy-Weisbach", DarcyWeisbach(length, d, 1e-4, 999.1, 1.138e-3))):
        st = solve_network(g, law, demand, [100.0])
        t = median_time(lambda law=law: solve_network(g, law, demand, [100.0]), repeat)
        out[name] = t
        print(f"  {name:<15} {t * 1e3:7.2f} ms, {int(st.iterations[0])} Newton steps, "
              f"energy {float(st.energy_residual[0]):.1e} m, mass "
              f"{float(st.mass_residual[0]):.1e} m3/s")
    # references measured now: one sparse LU of the head system; scipy's generic root finder
    w = 1.0 / np.random.default_rng(1).uniform(1, 10, g.n_pipes)
    a12 = sparse.csr_matrix((np.concatenate([-np.ones(g.n_pipes), np.ones(g.n_pipes)]),
                             (np.concatenate([np.arange(g.n_pipes)] * 2),
                              np.concatenate([g.start, g.end]))),
                            shape=(g.n_pipes, g.n_nodes))[:, : g.n_junctions]
    mat = (a12.T @ sparse.diags(w) @ a12).tocsc()
    t_lu = median_time(lambda: splinalg.splu(mat, permc_spec="MMD_AT_PLUS_A"), repeat)
    print(f"  reference: one sparse LU of the {g.n_junctions}-node head system "
          f"{t_lu * 1e3:.2f} ms ({out['Hazen-Williams'] / t_lu:.1f} x of it per solution)")
    k = 10.5088 * length / (120.0**1.852 * d**4.87)

    def residual(h):
        full = np.concatenate([h, [100.0]])
        drop = full[g.start] - full[g.end]
        q = np.sign(drop) * (np.abs(drop) / k) ** (1 / 1.852)
        bal = np.zeros(g.n_nodes)
        np.add.at(bal, g.end, q)
        np.add.at(bal, g.start, -q)
        return bal[: g.n_junctions] - demand

    ref = solve_network(g, HazenWilliams(length, d, 120.0), demand, [100.0]).head[0]
    t0 = time.perf_counter()
    sol = optimize.root(residual, ref + 0.5, method="krylov", options={"fatol": 1e-9})
    t_root = time.perf_counter() - t0
    print(f"  reference: scipy.optimize.root (Newton-Krylov) on the node-head equations from "
          f"0.5 m off the solution: {t_root * 1e3:.0f} ms ({t_root / out['Hazen-Williams']:.0f} "
          f"x), success {sol.success}")
    return out


def hanoi_runs(seeds: range) -> dict[str, float]:
    pr = hanoi()
    times = []
    for seed in seeds:
        t0 = time.perf_counter()
        out = design_looped(pr, seed=seed, evaluations=800_000, target=HANOI_BEST_KNOWN,
                            progress=False)
        times.append(time.perf_counter() - t0)
        status = "reached" if out.cost <= HANOI_BEST_KNOWN * (1 + 1e-9) else \
            f"stopped at {out.cost:,.0f}"
        print(f"  seed {seed:2d}: {times[-1]:6.2f} s, {out.evaluations:8,d} designs, {status}")
    print(f"  median {statistics.median(times):.2f} s, worst {max(times):.2f} s")
    return {"median_s": statistics.median(times), "worst_s": max(times)}


def main(quick: bool = False) -> dict[str, float]:
    print("two-loop network (Alperovits & Shamir 1977) to 419,000, looped search, one core")
    tl = two_loop_runs(range(1, 4 if quick else 11))
    print("one hydraulic solution of a 1,000-pipe looped network, to 1e-9, one core")
    big = large_solution(5 if quick else 21)
    figures = {"two-loop median [s]": tl["median_s"], "two-loop worst [s]": tl["worst_s"],
               "1,000 pipes, Hazen-Williams [ms]": big["Hazen-Williams"] * 1e3,
               "1,000 pipes, Darcy-Weisbach [ms]": big["Darcy-Weisbach"] * 1e3}
    if not quick:
        print("hold-out: Hanoi network (Fujiwara & Khang 1990) to 6,081,087")
        h = hanoi_runs(range(1, 6))
        figures["Hanoi median [s]"] = h["median_s"]
    return figures


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--quick", action="store_true")
    main(parser.parse_args().quick)
