"""Command line of pipeopt (presentation layer).

Subcommands: ``run`` (a sizing study file), ``upgrade`` (an upgrade study file), ``demo`` (the
bundled demonstrations), ``catalog`` (list materials and sizes). Exit status: 0 success, 1 a
sizing study with no feasible candidate, 2 bad input (one readable message naming the key,
never a traceback), 3 an internal error (``--debug`` shows its traceback).
"""

from __future__ import annotations

import argparse
import os
import sys
import tempfile
import traceback
from collections.abc import Sequence
from pathlib import Path

import pandas as pd

from .errors import InputError

DEMO_NOTE = ("Demo scenario and numbers are invented for illustration only; they describe no "
             "real place, line or price.")


def _write_atomic(path: Path, text: str) -> None:
    """Write ``text`` to ``path`` through a temporary file and a rename (never half-written)."""
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "w", encoding="utf-8", newline="") as fh:
            fh.write(text)
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise


def _write_tables(result, out: Path) -> list[Path]:
    files = {"candidates.csv": result.candidates, "optimum.csv": result.optimum}
    written = []
    texts = {name: frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")
             for name, frame in files.items()}
    for name, text in texts.items():  # every table is formatted before the first is written
        _write_atomic(out / name, text)
        written.append(out / name)
    return written


def _frames_csv(frames: dict[str, pd.DataFrame]) -> dict[str, str]:
    return {name: frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")
            for name, frame in frames.items()}


def _cmd_run(args: argparse.Namespace) -> int:
    from .sizing import SizingStudy

    study = SizingStudy.from_toml(args.study)
    result = study.run()
    extra: dict[str, pd.DataFrame] = {}
    print(result.summary())
    if study.uncertainty and result.success:
        tornado = study.tornado()
        switching = study.switching_values()
        mc = study.monte_carlo(progress=False if args.quiet else None)
        print()
        print(tornado)
        print()
        print(switching)
        print()
        print(mc)
        extra = {"tornado.csv": tornado.table, "switching_values.csv": switching.table,
                 "monte_carlo.csv": mc.candidates, "monte_carlo_correlation.csv": mc.correlation}
    if args.out:
        written = _write_tables(result, Path(args.out))
        for name, text in _frames_csv(extra).items():
            _write_atomic(Path(args.out) / name, text)
            written.append(Path(args.out) / name)
        for p in written:
            print(f"wrote {p}")
    return 0 if result.success else 1


def _write_upgrade_tables(result, out: Path) -> list[Path]:
    texts = {name: frame.to_csv(index=False, float_format="%.10g", lineterminator="\n")
             for name, frame in (("cash_flows.csv", result.cash_flows),
                                 ("summary.csv", result.summary))}
    for name, text in texts.items():
        _write_atomic(out / name, text)
    return [out / name for name in texts]


def _cmd_upgrade(args: argparse.Namespace) -> int:
    from .upgrade import UpgradeStudy

    study = UpgradeStudy.from_toml(args.study)
    result = study.run()
    print(result.text())
    if args.out:
        for p in _write_upgrade_tables(result, Path(args.out)):
            print(f"wrote {p}")
    return 0


def _cmd_demo(args: argparse.Namespace) -> int:
    from .sizing import SizingStudy
    from .upgrade import UpgradeStudy

    print(DEMO_NOTE)
    print()
    result = SizingStudy.demo().run()
    print(result.summary())
    upgrade = UpgradeStudy.demo().run()
    print()
    print(upgrade.text())
    if args.out:
        written = _write_tables(result, Path(args.out) / "sizing")
        written += _write_upgrade_tables(upgrade, Path(args.out) / "upgrade")
        for p in written:
            print(f"wrote {p}")
    return 0


def _cmd_catalog(args: argparse.Namespace) -> int:
    from . import catalog

    if not args.material:
        mats = catalog.list_materials()
        view = pd.DataFrame({"material": mats["material"], "sizes": mats["sizes"],
                             "roughness_mm": mats["roughness_m"] * 1e3,
                             "description": mats["description"]})
        print(view.to_string(index=False))
        return 0
    sizes = catalog.list_sizes(args.material, args.min_diameter, args.max_diameter,
                               args.pressure_class)
    view = pd.DataFrame({
        "designation": sizes["designation"], "OD_mm": sizes["outside_diameter_m"] * 1e3,
        "wall_mm": sizes["wall_m"] * 1e3, "lining_mm": sizes["lining_m"] * 1e3,
        "ID_mm": sizes["inner_diameter_m"] * 1e3,
        "rating_bar": sizes["pressure_rating_pa"] / 1e5})
    print(view.to_string(index=False, float_format=lambda x: f"{x:.1f}"))
    print(f"\nsource: {sizes['provenance'].iloc[0]}")
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="pipeopt",
        description="Life-cycle cost sizing of pumped liquid lines.",
        epilog="Results support engineering studies; they are not a design. Pressure, surge and "
               "structural questions need a qualified engineer; local codes govern.",
    )
    parser.add_argument("--debug", action="store_true", help="show tracebacks of internal errors")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")

    run = sub.add_parser("run", help="run a sizing study file",
                         description="Run a sizing study (TOML) and print its summary.",
                         epilog="example: pipeopt run study.toml --out results")
    run.add_argument("study", help="the study file (TOML)")
    run.add_argument("--out", help="folder for candidates.csv, optimum.csv and, with an "
                                   "[uncertainty] section, the sensitivity tables")
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    run.set_defaults(func=_cmd_run)

    upg = sub.add_parser("upgrade", help="run an upgrade study file (keep, reline, replace, "
                                         "duplicate)",
                         description="Run an upgrade study (TOML) and print its comparison.",
                         epilog="example: pipeopt upgrade main.toml --out results")
    upg.add_argument("study", help="the upgrade study file (TOML)")
    upg.add_argument("--out", help="folder for cash_flows.csv and summary.csv")
    upg.set_defaults(func=_cmd_upgrade)

    demo = sub.add_parser("demo", help="run the bundled demonstration study",
                          description="Run the bundled demonstration (an invented scenario).",
                          epilog="example: pipeopt demo --out demo-results")
    demo.add_argument("--out", help="folder for the result tables")
    demo.set_defaults(func=_cmd_demo)

    cat = sub.add_parser("catalog", help="list catalog materials or the sizes of one",
                         description="List the materials, or the sizes of one material.",
                         epilog='example: pipeopt catalog pe100 --min-diameter "0.2 m" '
                                '--class "SDR 17"')
    cat.add_argument("material", nargs="?", help="a material key, e.g. ductile-iron")
    cat.add_argument("--min-diameter", help='smallest inner diameter, e.g. "150 mm"')
    cat.add_argument("--max-diameter", help='largest inner diameter, e.g. "0.6 m"')
    cat.add_argument("--class", dest="pressure_class", help='a pressure class, e.g. "C40"')
    cat.set_defaults(func=_cmd_catalog)
    return parser


def main(argv: Sequence[str] | None = None) -> int:
    """Entry point of the ``pipeopt`` console script; returns the exit status."""
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "func", None):
        parser.print_help()
        return 2
    try:
        return int(args.func(args))
    except InputError as exc:
        print(f"pipeopt: error: {exc}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("pipeopt: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # noqa: BLE001 - the last line of defence: no traceback for users
        if args.debug:
            traceback.print_exc()
        print(f"pipeopt: internal error ({type(exc).__name__}: {exc}); please report it, with "
              f"--debug for details", file=sys.stderr)
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
