"""Command line of pipeopt (presentation layer).

Subcommands: ``run`` (a sizing study file), ``upgrade`` (an upgrade study file), ``demo`` (the
bundled demonstrations), ``catalog`` (list materials and sizes), ``init`` (a starter study
file), ``verify`` (the verification record). Exit status: 0 success, 1 a
sizing study with no feasible candidate, 2 bad input (one readable message naming the key,
never a traceback), 3 an internal error (``--debug`` shows its traceback).
"""

from __future__ import annotations

import argparse
import os
import sys
import traceback
from collections.abc import Sequence
from pathlib import Path

import pandas as pd

from .errors import InputError

DEMO_NOTE = ("Demo scenario and numbers are invented for illustration only; they describe no "
             "real place, line or price.")


STARTER_SIZING = """# pipeopt sizing study: edit every value for your line.
# Dimensional values carry units.
# The numbers below are starting values to replace, not recommendations.
[study]
name = "my line"
currency = "EUR"

[fluid]
kind = "water"              # "water", "coolprop" (with name = "INCOMP::MEG-30%"), or "custom"
temperature = "15 degC"

[line]
length = "2 km"
static_head = "20 m"        # lift plus the residual head required at delivery
minor_loss_k = 5.0
parallel = 1

[[duty]]
flow = "300 m^3/h"
hours = 6000

[growth]
flow_per_year = 0.0

[pumping]
efficiency = 0.70           # wire to water

[energy]
price = 0.12                # per kWh in year 1
escalation = 0.0
demand_charge = 0.0

[economics]
discount_rate = 0.05
horizon = 30
pipe_life = 60
pipe_maintenance = 0.0

[[material]]
name = "ductile-iron"       # see: pipeopt catalog
min_diameter = "0.15 m"
max_diameter = "0.6 m"
cost = { coefficient = 2000.0, exponent = 1.3 }   # per metre, a * D^n with D in m

[constraints]
velocity_min = "0.5 m/s"
velocity_max = "2.5 m/s"
"""

STARTER_UPGRADE = """# pipeopt upgrade study: edit every value for your main.
# Dimensional values carry units.
# The numbers below are starting values to replace, not recommendations.
[study]
name = "my main"
currency = "EUR"

[fluid]
kind = "water"
temperature = "12 degC"

[existing]
material = "cast-iron-aged"
inner_diameter = "0.28 m"
length = "3 km"
static_head = "20 m"
hazen_williams_c = 90       # or roughness = "1.5 mm", or an [existing.field_test] table
breaks_per_year = 2.0
break_growth = 0.05
break_cost = 8000.0

[[duty]]
flow = "250 m^3/h"
hours = 6000

[pumping]
efficiency = 0.70

[energy]
price = 0.15

[economics]
discount_rate = 0.04
horizon = 40
pipe_life = 80

[[option]]
kind = "reline"
liner_thickness = "6 mm"
cost_per_metre = 250.0

[[option]]
kind = "replace"
material = "ductile-iron"
size = "DN 300 C40"
cost_per_metre = 500.0
"""


def _prepare_out(out: str | None, force: bool) -> Path | None:
    """Refuse a non-empty output folder unless --force (nothing is written yet)."""
    if not out:
        return None
    path = Path(out)
    if path.exists() and not path.is_dir():
        raise InputError(f"--out: {out!r} exists and is not a folder")
    if path.is_dir() and any(path.iterdir()) and not force:
        raise InputError(f"--out: the folder {out!r} is not empty; use --force to overwrite "
                         f"its results")
    return path


def _progress(args: argparse.Namespace) -> bool | None:
    return False if args.quiet else None  # None: a bar only when stderr is a terminal


def _cmd_run(args: argparse.Namespace) -> int:
    from .sizing import SizingStudy

    out = _prepare_out(args.out, args.force)
    study = SizingStudy.from_toml(args.study)
    result = study.run()
    extra: dict = {}
    print(result.summary())
    if study.uncertainty and result.success:
        extra = {"tornado": study.tornado(), "switching": study.switching_values(),
                 "monte_carlo": study.monte_carlo(progress=_progress(args))}
        for item in extra.values():
            print()
            print(item)
    if out is not None:
        from .report import write_report

        for p in write_report(result, out, extra):
            print(f"wrote {p}")
    return 0 if result.success else 1


def _cmd_upgrade(args: argparse.Namespace) -> int:
    from .upgrade import UpgradeStudy

    out = _prepare_out(args.out, args.force)
    result = UpgradeStudy.from_toml(args.study).run()
    print(result.text())
    if out is not None:
        from .report import write_report

        for p in write_report(result, out):
            print(f"wrote {p}")
    return 0


def _cmd_demo(args: argparse.Namespace) -> int:
    from .sizing import SizingStudy
    from .upgrade import UpgradeStudy

    out = _prepare_out(args.out, args.force)
    print(DEMO_NOTE)
    print()
    result = SizingStudy.demo().run()
    print(result.summary())
    upgrade = UpgradeStudy.demo().run()
    print()
    print(upgrade.text())
    if out is not None:
        from .report import write_report

        written = write_report(result, out / "sizing")
        written += write_report(upgrade, out / "upgrade", verification=False)
        for p in written:
            print(f"wrote {p}")
    return 0


def _cmd_init(args: argparse.Namespace) -> int:
    path = Path(args.file)
    if path.exists() and not args.force:
        raise InputError(f"{args.file}: the file exists; use --force to replace it")
    from .report import write_atomic

    write_atomic(path, STARTER_UPGRADE if args.kind == "upgrade" else STARTER_SIZING)
    print(f"wrote {path}: edit it, then run: pipeopt "
          f"{'upgrade' if args.kind == 'upgrade' else 'run'} {path}")
    return 0


def _cmd_verify(args: argparse.Namespace) -> int:
    from .verification import run_checks

    table = run_checks()
    view = table[["area", "check", "expected", "computed", "tolerance", "passed", "source"]]
    with pd.option_context("display.max_colwidth", 60, "display.width", 250):
        print(view.to_string(index=False, float_format=lambda x: f"{x:.10g}"))
    failed = int((~table["passed"]).sum())
    print(f"\n{len(table) - failed} of {len(table)} reference checks passed")
    return 1 if failed else 0


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


def _add_out(sub: argparse.ArgumentParser) -> None:
    sub.add_argument("--out", help="folder for the report (HTML, Markdown, workbook, figures, "
                                   "CSV tables)")
    sub.add_argument("--force", action="store_true", help="overwrite a non-empty --out folder")


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
    _add_out(run)
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    run.set_defaults(func=_cmd_run)

    upg = sub.add_parser("upgrade", help="run an upgrade study file (keep, reline, replace, "
                                         "duplicate)",
                         description="Run an upgrade study (TOML) and print its comparison.",
                         epilog="example: pipeopt upgrade main.toml --out results")
    upg.add_argument("study", help="the upgrade study file (TOML)")
    _add_out(upg)
    upg.set_defaults(func=_cmd_upgrade)

    demo = sub.add_parser("demo", help="run the bundled demonstration study",
                          description="Run the bundled demonstration (an invented scenario).",
                          epilog="example: pipeopt demo --out demo-results")
    _add_out(demo)
    demo.set_defaults(func=_cmd_demo)

    ini = sub.add_parser("init", help="write a starter study file to edit",
                         description="Write a starter study file with example values to edit.",
                         epilog="example: pipeopt init my-line.toml  (or --kind upgrade)")
    ini.add_argument("file", help="the study file to create")
    ini.add_argument("--kind", choices=("sizing", "upgrade"), default="sizing")
    ini.add_argument("--force", action="store_true", help="replace an existing file")
    ini.set_defaults(func=_cmd_init)

    ver = sub.add_parser("verify", help="run the published reference checks and print them",
                         description="Run every published reference check pipeopt relies on "
                                     "and print the verification record; exit 1 if any fails.",
                         epilog="example: pipeopt verify")
    ver.set_defaults(func=_cmd_verify)

    cat = sub.add_parser("catalog", help="list catalog materials or the sizes of one",
                         description="List the materials, or the sizes of one material.",
                         epilog='example: pipeopt catalog pe100 --min-diameter "0.2 m" '
                                '--class "SDR 17"')
    cat.add_argument("material", nargs="?", help="a material key, e.g. ductile-iron")
    cat.add_argument("--min-diameter", help='smallest inner diameter, e.g. "150 mm"')
    cat.add_argument("--max-diameter", help='largest inner diameter, e.g. "0.6 m"')
    cat.add_argument("--class", dest="pressure_class", help='a pressure class, e.g. "C40"')
    cat.set_defaults(func=_cmd_catalog)
    _add_programme(sub)
    return parser


# ----- renewal programme: `pipeopt programme` ---------------------------------------------------
def _cmd_programme(args: argparse.Namespace) -> int:
    """Value every main of a register, schedule the renewals within the budgets, report."""
    from .programme import ProgrammeStudy
    from .register import INVENTED_UTILITY

    out = _prepare_out(args.out, args.force)
    if args.demo:
        if args.register:
            raise InputError("programme: give a REGISTER file or --demo, not both")
        study = ProgrammeStudy.from_toml(args.study) if args.study else ProgrammeStudy.demo()
        register = ProgrammeStudy.demo_register()
        source = f"the invented register of {INVENTED_UTILITY}"
        print(DEMO_NOTE)
        print()
    else:
        if not args.register or not args.study:
            raise InputError("programme: give a REGISTER file (CSV or Parquet) and --study "
                             "FILE, or --demo")
        study = ProgrammeStudy.from_toml(args.study)
        register, source = args.register, None
    dask = None if args.dask is None else (True if args.dask == "local" else args.dask)
    progress = False if args.quiet else (True if args.progress else None)
    result = study.run(register, dask=dask, partition_rows=args.partition_rows,
                       progress=progress, source=source)
    print(result.text())
    if out is not None:
        from .programme_report import write_programme_report
        from .report import write_atomic

        written = write_programme_report(result, out)
        if args.demo:  # the register and the study file, as templates for a planner's own
            from importlib import resources

            write_atomic(out / "register.csv", register.to_csv(index=False, lineterminator="\n"))
            text = resources.files("pipeopt").joinpath("data", "demo_programme.toml").read_text(
                "utf-8") if not args.study else Path(args.study).read_text("utf-8")
            write_atomic(out / "study.toml", text)
            written += [out / "register.csv", out / "study.toml"]
        for p in written:
            print(f"wrote {p}")
    return 0 if result.success else 1


def _add_programme(sub) -> None:
    prog = sub.add_parser(
        "programme", help="a budgeted renewal programme over a register of mains",
        description="Value replacing every main of a register (CSV or Parquet) in every year, "
                    "then choose the year of renewal of each within the yearly budgets of the "
                    "study file (TOML).",
        epilog="examples: pipeopt programme mains.csv --study programme.toml --out results; "
               "pipeopt programme --demo --out demo-programme")
    prog.add_argument("register", nargs="?", help="the register of mains (.csv or .parquet)")
    prog.add_argument("--study", help="the programme study file (TOML)")
    prog.add_argument("--demo", action="store_true",
                      help="the bundled invented register and demo study (illustrative)")
    prog.add_argument("--dask", nargs="?", const="local", metavar="ADDRESS",
                      help="value the mains on Dask: a local cluster, or the scheduler at "
                           "ADDRESS (e.g. tcp://10.0.0.5:8786)")
    prog.add_argument("--partition-rows", type=int, default=50_000,
                      help="rows per Dask partition (default 50000)")
    _add_out(prog)
    prog.add_argument("--quiet", action="store_true", help="no progress bar")
    prog.add_argument("--progress", action="store_true",
                      help="a progress bar even when stderr is not a terminal")
    prog.set_defaults(func=_cmd_programme)


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
    except BrokenPipeError:  # the reader of our output went away (| head): not an error
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except Exception as exc:  # noqa: BLE001 - the last line of defence: no traceback for users
        if args.debug:
            traceback.print_exc()
        print(f"pipeopt: internal error ({type(exc).__name__}: {exc}); please report it, with "
              f"--debug for details", file=sys.stderr)
        return 3


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
