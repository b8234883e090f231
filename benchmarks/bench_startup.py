"""Command-line start-up: what a user waits for, as whole processes, against ``python -c pass``.

Run: ``python benchmarks/bench_startup.py [--repeat N]``. Times four commands as separate
processes, each in turns with the reference ``python -c pass`` (A B A B ...), and prints for each
the median wall time, the median CPU time (user + system of the child, from the operating
system's accounting) and the median of the pair-by-pair ratios to the reference:

- ``pipeopt --help``;
- ``pipeopt run`` on a study file with an error (a length without its unit), answered with one
  message and exit status 2;
- ``pipeopt run`` of the bundled demo study (the one the README shows);
- the same with ``--out`` (report, workbook, figures, verification record).

The children run with bytecode caches allowed (``PYTHONDONTWRITEBYTECODE`` removed from their
environment), as a user's do: ``pip install`` compiles the package's bytecode, and an editable
install writes it on first import. With the variable set (as on the development machine), every
process compiles every module it imports again, about 0.15 s of each command here.

Not a test: nothing fails on a slow machine. On a machine shared with other work, quote the
medians and the pair ratios, not single runs.
"""

from __future__ import annotations

import argparse
import os
import resource
import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

DEMO = Path(__file__).resolve().parents[1] / "pipeopt" / "data" / "demo_sizing.toml"

INVALID = """[study]
name = "Invalid on purpose (illustrative)"
illustrative = true
[fluid]
kind = "water"
temperature = "12 degC"
[line]
length = 3200
static_head = "38 m"
"""


def _pipeopt() -> list[str]:
    script = Path(sys.executable).with_name("pipeopt")
    if script.exists():
        return [str(script)]
    found = shutil.which("pipeopt")
    return [found] if found else [sys.executable, "-m", "pipeopt.cli"]


#: The children's environment: this one without PYTHONDONTWRITEBYTECODE (see above).
_ENV = {k: v for k, v in os.environ.items() if k != "PYTHONDONTWRITEBYTECODE"}


def _run(cmd: list[str]) -> tuple[float, float, int]:
    """Wall and CPU seconds of one child process, and its exit status."""
    before = resource.getrusage(resource.RUSAGE_CHILDREN)
    t0 = time.perf_counter()
    done = subprocess.run(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL,
                          timeout=300, check=False, env=_ENV)
    wall = time.perf_counter() - t0
    after = resource.getrusage(resource.RUSAGE_CHILDREN)
    cpu = (after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime)
    return wall, cpu, done.returncode


def measure(cmd: list[str], repeat: int) -> dict[str, float]:
    reference = [sys.executable, "-c", "pass"]
    _run(cmd)  # warm-up: file caches, pint's definition cache, compiled bytecode
    _run(reference)
    walls, cpus, refs, ratios, codes = [], [], [], [], set()
    for _ in range(repeat):
        wall, cpu, code = _run(cmd)
        ref_wall, _, _ = _run(reference)
        walls.append(wall)
        cpus.append(cpu)
        refs.append(ref_wall)
        ratios.append(wall / ref_wall)
        codes.add(code)
    return {"wall": statistics.median(walls), "cpu": statistics.median(cpus),
            "reference": statistics.median(refs), "ratio": statistics.median(ratios),
            "exit": min(codes) if len(codes) == 1 else -1}


def main(repeat: int = 7) -> dict[str, dict[str, float]]:
    pipeopt = _pipeopt()
    results = {}
    with tempfile.TemporaryDirectory(prefix="pipeopt-bench-") as tmp:
        invalid = Path(tmp) / "invalid.toml"
        invalid.write_text(INVALID, encoding="utf-8")
        out = Path(tmp) / "report"
        commands = {
            "pipeopt --help": [*pipeopt, "--help"],
            "run, invalid study file": [*pipeopt, "run", str(invalid)],
            "run, demo study": [*pipeopt, "run", str(DEMO)],
            "run --out, demo study": [*pipeopt, "run", str(DEMO), "--out", str(out), "--force"],
        }
        print(f"command-line start-up, whole processes, median of {repeat} in turns with "
              f"'python -c pass' (bytecode caches allowed"
              f"{'; PYTHONDONTWRITEBYTECODE was set here' if len(_ENV) < len(os.environ) else ''})")
        print(f"  {'command':<26}{'wall [s]':>10}{'CPU [s]':>10}{'reference [s]':>15}"
              f"{'x reference':>13}{'exit':>6}")
        for name, cmd in commands.items():
            r = measure(cmd, repeat)
            results[name] = r
            print(f"  {name:<26}{r['wall']:>10.3f}{r['cpu']:>10.3f}{r['reference']:>15.3f}"
                  f"{r['ratio']:>13.1f}{r['exit']:>6d}")
    return results


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeat", type=int, default=7)
    main(parser.parse_args().repeat)
