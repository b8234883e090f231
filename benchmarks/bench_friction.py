"""Friction-factor throughput: pipeopt's Colebrook-White against three other ways to solve it.

Run: ``python benchmarks/bench_friction.py [--points N]``. Prints evaluations per second for
1e6 random (Re, relative roughness) points (Re 4e3-1e8, rr 1e-7-0.05, log-uniform), all
measured in this one run on one core, and the ratios to pipeopt. Not a test: nothing fails on a
slow machine.

Contenders, all reaching the same accuracy (<= 1e-13 relative):
(a) a plain Python scalar fixed-point loop on 1/sqrt(f) (to |dx| < 1e-15), on a sample;
(b) scipy.optimize.newton on the whole arrays (vectorized Newton, tol 1e-15);
(c) a straightforward numpy version of the same algorithm (Clamond 2009), whole-array
    expressions with temporaries;
(d) pipeopt.friction.friction_factor (one float64 log per point: a tabulated Wright-omega first
    guess and one Halley step, in place on cache-sized blocks).

Then the figure of the speed issue: friction_factor against one ``np.log`` over the same array,
and the fast kernel against the reference kernel kept beside it (Clamond's two steps), each as
the median of pair-by-pair ratios of this thread's CPU time (robust on a shared machine).

Where numba is installed (it is not a dependency of pipeopt), the same pairs also time (e) the
same one-log algorithm as a compiled scalar loop, to answer whether compiling the kernel would
reach the issue's ratio: on this machine it does not (numpy's float32 log and its array passes
are vectorized; the compiled loop calls the scalar ``logf`` and ``log`` for every point).
"""

from __future__ import annotations

import argparse
import math
import os
import statistics
import time

os.environ.setdefault("OMP_NUM_THREADS", "1")

import numpy as np  # noqa: E402
from scipy import optimize  # noqa: E402

from pipeopt import friction  # noqa: E402
from pipeopt.friction import friction_factor  # noqa: E402


def points(n: int, seed: int = 0) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    re = 10 ** rng.uniform(math.log10(4e3), 8, n)
    rr = 10 ** rng.uniform(-7, math.log10(0.05), n)
    return re, rr


def python_fixed_point(re: np.ndarray, rr: np.ndarray) -> list[float]:
    out = []
    for r, k in zip(re.tolist(), rr.tolist(), strict=True):
        x = 8.0
        for _ in range(200):
            x_new = -2.0 * math.log10(k / 3.7 + 2.51 * x / r)
            if abs(x_new - x) < 1e-15 * x:
                x = x_new
                break
            x = x_new
        out.append(1.0 / (x * x))
    return out


def scipy_newton(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    ln10 = math.log(10.0)

    def g(x):
        return x + 2.0 * np.log10(rr / 3.7 + 2.51 * x / re)

    def dg(x):
        return 1.0 + 2.0 / ln10 * (2.51 / re) / (rr / 3.7 + 2.51 * x / re)

    x = optimize.newton(g, np.full_like(re, 8.0), fprime=dg, tol=1e-12, maxiter=50)
    return 1.0 / (x * x)


def numpy_clamond(re: np.ndarray, rr: np.ndarray) -> np.ndarray:
    x1 = rr * re * 0.123968186335417556
    x2 = np.log(re) - 0.779397488455682028
    f = x2 - 0.2
    e = (np.log(x1 + f) - 0.2) / (1 + x1 + f)
    f = f - (1 + x1 + f + 0.5 * e) * e * (x1 + f) / (1 + x1 + f + e * (1 + e / 3))
    e = (np.log(x1 + f) + f - x2) / (1 + x1 + f)
    f = f - (1 + x1 + f + 0.5 * e) * e * (x1 + f) / (1 + x1 + f + e * (1 + e / 3))
    f = 1.151292546497022842 / f
    return f * f


def best_rate(fn, re, rr, repeat: int) -> tuple[float, object]:
    result = fn(re, rr)
    best = math.inf
    for _ in range(repeat):
        t0 = time.perf_counter()
        result = fn(re, rr)
        best = min(best, time.perf_counter() - t0)
    return re.size / best, result


def run(n: int = 1_000_000, repeat: int = 7) -> dict[str, float]:
    re, rr = points(n)
    sample = slice(0, 20_000)
    rates = {}
    rates["pipeopt"], f_ours = best_rate(friction_factor, re, rr, repeat)
    rates["numpy straightforward"], f_np = best_rate(numpy_clamond, re, rr, repeat)
    rates["scipy newton (arrays)"], f_nt = best_rate(scipy_newton, re, rr, max(1, repeat // 3))
    rates["python fixed point"], f_py = best_rate(python_fixed_point, re[sample], rr[sample], 1)
    agree = {
        "numpy straightforward": np.max(np.abs(f_np / f_ours - 1)),
        "scipy newton (arrays)": np.max(np.abs(f_nt / f_ours - 1)),
        "python fixed point": np.max(np.abs(np.asarray(f_py) / f_ours[sample] - 1)),
    }
    print(f"friction factors, {n:,} random points, one core, best of {repeat}")
    print(f"{'method':<24}{'M evaluations/s':>18}{'pipeopt is x faster':>22}{'max rel diff':>14}")
    for name, rate in rates.items():
        ratio = rates["pipeopt"] / rate
        diff = agree.get(name, 0.0)
        print(f"{name:<24}{rate / 1e6:>18.2f}{ratio:>22.1f}{diff:>14.1e}")
    rates.update(against_log(re, rr, max(repeat, 9)))
    return rates


def compiled_kernel():
    """The fast kernel's algorithm as a numba-compiled scalar loop, or None without numba.

    Same arithmetic as :func:`pipeopt.friction._colebrook_fast_kernel`, point by point: the
    float32 first guess from the same Wright-omega table (its cell found with ``frexp``, as the
    kernel's bit shift does), then the one float64 Halley step.
    """
    try:
        import numba
    except ImportError:
        return None
    x1c, x2c, outc = friction._CL_X1, friction._CL_X2, friction._CL_OUT
    bits = friction._OMEGA_BITS
    c0, c1 = friction._omega_table()

    @numba.njit(error_model="numpy")
    def loop(re, rr, out, c0, c1):  # pragma: no cover - benchmark only
        for i in range(re.size):
            r = re[i]
            a = rr[i] * r * x1c
            x2 = np.float32(math.log(np.float32(r)))
            z = np.float32(a) + x2
            mant, expo = math.frexp(z)
            idx = ((expo + 126) << bits) + int((2.0 * mant - 1.0) * (1 << bits))
            f = np.float64(x2 - (c1[idx] * z + c0[idx]))
            a += f
            g = math.log(a / r) + f + x2c
            ap1 = a + 1.0
            f -= g * a * ap1 / (ap1 * ap1 + 0.5 * g)
            out[i] = outc * outc / (f * f)
        return out

    def kernel(re, rr, out):
        return loop(re, rr, out, c0, c1)

    kernel.version = numba.__version__
    return kernel


def _cpu(fn) -> float:
    t0 = time.thread_time()
    fn()
    return time.thread_time() - t0


def against_log(re: np.ndarray, rr: np.ndarray, pairs: int = 15) -> dict[str, float]:
    """friction_factor / np.log and fast / reference kernel, medians of paired CPU times."""
    out, ref = np.empty(re.size), np.empty(re.size)
    log_ratio, kernel_ratio, per_point, compiled_ratio = [], [], [], []
    compiled = compiled_kernel()
    if compiled is not None:
        comp_out = np.empty(re.size)
        compiled(re[:8], rr[:8], comp_out[:8])  # compile outside the timing
    for _ in range(pairs):
        t_log = _cpu(lambda: np.log(re))
        t_ff = _cpu(lambda: friction_factor(re, rr))
        t_fast = _cpu(lambda: friction._colebrook_fast_kernel(re, rr, out))
        t_ref = _cpu(lambda: friction._colebrook_kernel(re, rr, ref))
        log_ratio.append(t_ff / t_log)
        kernel_ratio.append(t_ref / t_fast)
        per_point.append(t_ff / re.size)
        if compiled is not None:
            compiled_ratio.append(_cpu(lambda: compiled(re, rr, comp_out)) / t_log)
    result = {"x np.log": statistics.median(log_ratio),
              "reference kernel / fast kernel": statistics.median(kernel_ratio),
              "ns per point": statistics.median(per_point) * 1e9}
    print(f"friction_factor over {re.size:,} points: {result['ns per point']:.1f} ns per point "
          f"(CPU), {result['x np.log']:.2f} x one np.log over the same array (median of "
          f"{pairs} pairs; target <= 3); fast kernel {result['reference kernel / fast kernel']:.2f}"
          f" x faster than the reference kernel (Clamond's two steps); max rel diff "
          f"{np.max(np.abs(out / ref - 1)):.1e}")
    if compiled is not None:
        result["compiled loop x np.log"] = statistics.median(compiled_ratio)
        print(f"(e) the same algorithm compiled with numba {compiled.version}: "
              f"{result['compiled loop x np.log']:.2f} x one np.log (median of {pairs} pairs); "
              f"max rel diff from friction_factor {np.max(np.abs(comp_out / out - 1)):.1e}")
    else:
        print("(e) compiled loop: numba is not installed here, not measured")
    return result


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--points", type=int, default=1_000_000)
    parser.add_argument("--repeat", type=int, default=7)
    args = parser.parse_args()
    run(args.points, args.repeat)
