"""Mutation check: a tiny error in a correlation, a catalog wall, the CRF or a water property must
make the test suite fail.

Copies the package, its tests and the files they read to a temporary folder, applies one small
perturbation at a time, and runs the tests that should notice it against the perturbed copy
(``PYTHONPATH`` and the working folder point at the copy; each run has a timeout). A first run
without any perturbation must pass, or the check means nothing. Prints each mutation as KILLED
(a test failed: good) or SURVIVED, and exits 1 if any survived or the baseline failed.

Run from anywhere: ``python scripts/mutation_check.py`` (about a minute on two cores).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
import tempfile
import time
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
COPIED = ("pipeopt", "tests", "scripts", "docs", "pyproject.toml", "README.md", "DEVELOPERS.md")
TIMEOUT = 300  # seconds for one pytest run


@dataclass(frozen=True)
class Mutation:
    """Replace ``old`` (which must occur exactly once) by ``new`` in ``path``; run ``tests``."""

    name: str
    path: str
    old: str
    new: str
    tests: tuple[str, ...]


MUTATIONS = [
    Mutation("Colebrook constant 2.51 -> 2.5100001 (Clamond's constants)",
             "pipeopt/friction.py",
             "_CL_X2 = 0.779397488455682028",
             "_CL_X2 = 0.779397488455682028 + float(np.log(2.5100001 / 2.51))",
             ("tests/test_friction.py", "-m", "not slow")),
    Mutation("catalog wall PE 100 110 SDR 17 6.6 -> 6.7 mm (a recorded table value)",
             "pipeopt/catalog/pe100.csv",
             "110 SDR 17,110,SDR 17,110,6.6,0,96.8,",
             "110 SDR 17,110,SDR 17,110,6.7,0,96.6,",
             ("tests/test_catalog.py",)),
    Mutation("catalog wall PE 100 280 SDR 11 25.4 -> 25.5 mm (a rule value, no table)",
             "pipeopt/catalog/pe100.csv",
             "280 SDR 11,280,SDR 11,280,25.4,0,229.2,",
             "280 SDR 11,280,SDR 11,280,25.5,0,229,",
             ("tests/test_catalog.py",)),
    Mutation("capital recovery factor x (1 + 1e-9)",
             "pipeopt/economics.py",
             "return restore(np.where(zero, 1.0 / n, crf), tpl)",
             "return restore(np.where(zero, 1.0 / n, crf * (1 + 1e-9)), tpl)",
             ("tests/test_economics.py",)),
    Mutation("water density x (1 + 1e-6) (pipeopt.water, the path of Fluid.water)",
             "pipeopt/water.py",
             "    rho = _liquid_density(tf, pf, dl) * RHO_CRITICAL\n    w = _speed_of_sound(",
             "    rho = _liquid_density(tf, pf, dl) * RHO_CRITICAL * (1 + 1e-6)\n"
             "    w = _speed_of_sound(",
             ("tests/test_fluid.py", "tests/test_water.py", "-m", "not slow")),
    Mutation("Hazen-Williams SI constant 10.67 -> 10.671",
             "pipeopt/friction.py",
             "HAZEN_WILLIAMS_SI_K = 10.67\n",
             "HAZEN_WILLIAMS_SI_K = 10.671\n",
             ("tests/test_friction.py", "-m", "not slow", "-k", "hazen")),
]


def _copy(dest: Path) -> None:
    ignore = shutil.ignore_patterns("__pycache__", "*.pyc", ".hypothesis")
    for name in COPIED:
        src = ROOT / name
        if src.is_dir():
            shutil.copytree(src, dest / name, ignore=ignore)
        else:
            shutil.copy2(src, dest / name)


def _run(folder: Path, tests: tuple[str, ...]) -> tuple[bool, str]:
    """Run pytest on the copy in ``folder``; (passed, last lines of output)."""
    env = {**os.environ, "PYTHONPATH": str(folder), "PYTHONDONTWRITEBYTECODE": "1"}
    probe = subprocess.run([sys.executable, "-c", "import pipeopt; print(pipeopt.__file__)"],
                           cwd=folder, env=env, capture_output=True, text=True, timeout=120)
    if not Path(probe.stdout.strip()).resolve().is_relative_to(folder.resolve()):
        raise SystemExit(f"the copy is not the package imported: {probe.stdout}{probe.stderr}")
    try:
        out = subprocess.run([sys.executable, "-m", "pytest", *tests, "-x", "-q",
                              "-p", "no:cacheprovider", "--no-header"],
                             cwd=folder, env=env, capture_output=True, text=True,
                             timeout=TIMEOUT)
    except subprocess.TimeoutExpired:
        return False, f"timed out after {TIMEOUT} s"
    tail = "\n".join((out.stdout + out.stderr).strip().splitlines()[-2:])
    return out.returncode == 0, tail  # the tail is printed only when the baseline fails


def main() -> int:
    start = time.monotonic()
    survived = 0
    with tempfile.TemporaryDirectory(prefix="pipeopt-mutation-") as tmp:
        base = Path(tmp) / "base"
        _copy(base)
        tests = sorted({t for m in MUTATIONS for t in m.tests if t.startswith("tests/")})
        ok, tail = _run(base, tuple(tests) + ("-m", "not slow"))
        print(f"baseline (no mutation): {'the tests pass' if ok else 'THE TESTS FAIL'}")
        if not ok:
            print(tail)
            return 1
        for i, m in enumerate(MUTATIONS):
            folder = Path(tmp) / f"m{i}"
            _copy(folder)
            target = folder / m.path
            text = target.read_text(encoding="utf-8")
            if text.count(m.old) != 1:
                print(f"cannot apply {m.name!r}: the text to replace occurs "
                      f"{text.count(m.old)} times in {m.path}")
                return 1
            target.write_text(text.replace(m.old, m.new), encoding="utf-8")
            passed, tail = _run(folder, m.tests)
            survived += passed
            print(f"{'SURVIVED' if passed else 'killed  '}  {m.name}")
            shutil.rmtree(folder)
    print(f"{len(MUTATIONS) - survived} of {len(MUTATIONS)} mutations killed in "
          f"{time.monotonic() - start:.0f} s")
    return 1 if survived else 0


if __name__ == "__main__":
    raise SystemExit(main())
