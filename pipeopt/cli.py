"""Command line of pipeopt (presentation layer).

Subcommands: ``run`` (a sizing study file), ``upgrade`` (an upgrade study file), ``network`` (a
network study file), ``demo`` (the bundled demonstrations), ``catalog`` (list materials and
sizes), ``init`` (a starter study file), ``verify`` (the verification record). Exit status: 0
success, 1 a sizing study with no feasible candidate (or a network with no design that holds
every pressure), 2 bad input (one readable message naming the key,
never a traceback), 3 an internal error (``--debug`` shows its traceback), 128 + the signal
number when interrupted (130 for Ctrl-C, 143 for SIGTERM).

``--out`` is checked before any computation (a folder, writable, enough free space, empty
unless ``--force``, no study input among the files it would replace); the result set is then
written whole by :func:`pipeopt.outputs.write_result_set`. Everything printed passes through
:func:`pipeopt.terminal.printable`, so that text from a study cannot drive the terminal.
"""

from __future__ import annotations

import argparse
import os
import signal
import sys
import threading
import traceback
from collections.abc import Sequence
from pathlib import Path

from .errors import InputError
from .terminal import printable

DEMO_NOTE = ("Demo scenario and numbers are invented for illustration only; they describe no "
             "real place, line or price.")


STARTER_SIZING = """# pipeopt sizing study: edit every value for your line.
# Dimensional values carry units.
# The numbers below are starting values to replace, not recommendations.
[study]
name = "my line"
currency = "EUR"
# author = "A. Engineer"    # the report's title block: author, revision, date
# revision = "A"
# date = 2026-01-15

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
# price per kg of pipe (wall and lining) + laying a * OD^n per metre (OD in m)
cost = { price_per_kg = 2.0, laying_coefficient = 500.0, laying_exponent = 1.1 }

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
# author = "A. Engineer"    # the report's title block: author, revision, date
# revision = "A"
# date = 2026-01-15

[fluid]
kind = "water"
temperature = "12 degC"

[existing]
material = "cast-iron-aged"
inner_diameter = "0.28 m"      # the bore now
bore_as_laid = "0.30 m"        # the bore when laid (what cleaning before a reline restores)
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


def _say(text: object = "") -> None:
    """Print text from results (it may carry a study's names) without terminal controls."""
    print(printable(str(text)))


def _prepare_out(args: argparse.Namespace) -> Path | None:
    """Check --out before any computation: a writable folder with room, empty unless --force;
    with --pdf, that a PDF can be made."""
    if getattr(args, "pdf", False):
        if not args.out:
            raise InputError("--pdf: the PDF is written into the result set; give --out FOLDER")
        from .report import check_pdf

        check_pdf(args.paper)
    if not args.out:
        return None
    from .outputs import check_out

    return check_out(args.out, args.force, what="--out")


def _read_study(args: argparse.Namespace, out: Path | None, prefix: str = ""):
    """The study file's mapping, folder and input files; refuses inputs among the outputs."""
    from .studyfile import read_study

    mapping, base, inputs = read_study(args.study)
    if out is not None:
        from .outputs import check_inputs
        from .report import SET_PATTERNS

        check_inputs(out, inputs, [prefix + p for p in SET_PATTERNS], what="--out")
    return mapping, base, inputs


def _write(out: Path, files: dict, args: argparse.Namespace, inputs=()) -> None:
    from .outputs import write_result_set

    for p in write_result_set(out, files, force=args.force, protect=inputs, what="--out"):
        _say(f"wrote {p}")


def _progress(args: argparse.Namespace) -> bool | None:
    return False if args.quiet else None  # None: a bar only when stderr is a terminal


def _cmd_run(args: argparse.Namespace) -> int:
    from .inputs import read_sizing

    out = _prepare_out(args)
    mapping, base, inputs = _read_study(args, out)
    sections = read_sizing(mapping, base)   # every section checked before the heavy imports
    from .sizing import SizingStudy

    study = SizingStudy.from_sections(sections)
    result = study.run()
    extra: dict = {}
    _say(result.text())
    if study.uncertainty and result.success:
        extra = {"tornado": study.tornado(), "switching": study.switching_values(),
                 "monte_carlo": study.monte_carlo(progress=_progress(args))}
        for item in extra.values():
            _say()
            _say(item.text())
    if out is not None:
        from .report import report_files

        _write(out, report_files(result, extra, pdf=args.pdf, paper=args.paper), args, inputs)
    return 0 if result.success else 1


def _cmd_upgrade(args: argparse.Namespace) -> int:
    from .inputs import read_upgrade

    out = _prepare_out(args)
    mapping, base, inputs = _read_study(args, out)
    sections = read_upgrade(mapping, base)  # every section checked before the heavy imports
    from .upgrade import UpgradeStudy

    study = UpgradeStudy.from_sections(sections)
    result = study.run()
    _say(result.text())
    extra: dict = {}
    if args.best_year:
        rows = [study.best_year(o.name) for o in study.options]
        _say()
        _say("Best year of action of each option (least present value of costs):")
        for b in rows:
            _say(f"  {b.option:<20} year {b.year:>3}  PV {b.pv_cost:>14,.0f}  NPV vs keep "
                 f"{b.keep_pv_cost - b.pv_cost:>14,.0f}")
        extra["best_year"] = rows
    if study.uncertainty:
        extra["monte_carlo"] = study.monte_carlo(progress=_progress(args))
        _say()
        _say(extra["monte_carlo"].text())
    if out is not None:
        from .report import report_files

        _write(out, report_files(result, extra, pdf=args.pdf, paper=args.paper), args, inputs)
    return 0


def _cmd_network(args: argparse.Namespace) -> int:
    from .network import NetworkStudy

    if (args.study is None) == (not args.demo):
        raise InputError("network: give a network study file, or --demo for the bundled one")
    out = _prepare_out(args)
    if args.demo:
        study = NetworkStudy.demo()
        inputs = ()
        _say(DEMO_NOTE)
        _say()
    else:
        mapping, base, inputs = _read_study(args, out)
        study = NetworkStudy.from_dict(mapping, base_dir=base)
    result = study.run(progress=_progress(args))
    _say(result.text())
    if out is not None:
        from .network.report import network_report_files

        _write(out, network_report_files(result), args, inputs)
    return 0 if result.success else 1


def _cmd_demo(args: argparse.Namespace) -> int:
    from .sizing import SizingStudy
    from .upgrade import UpgradeStudy

    out = _prepare_out(args)
    _say(DEMO_NOTE)
    _say()
    result = SizingStudy.demo().run()
    _say(result.text())
    upgrade = UpgradeStudy.demo().run()
    _say()
    _say(upgrade.text())
    if out is not None:
        from .report import report_files

        pdf = {"pdf": args.pdf, "paper": args.paper}
        files = {f"sizing/{k}": v for k, v in report_files(result, **pdf).items()}
        files.update({f"upgrade/{k}": v for k, v in
                      report_files(upgrade, verification=False, **pdf).items()})
        _write(out, files, args)
    return 0


def _cmd_init(args: argparse.Namespace) -> int:
    path = Path(args.file)
    if path.is_dir():
        raise InputError(f"init: {args.file!r} is a folder; give the name of the study file to "
                         f"write, e.g. {str(path / 'my-line.toml')!r}")
    if path.exists() and not args.force:
        raise InputError(f"init: {args.file!r}: the file exists; use --force to replace it")
    from .outputs import write_atomic

    try:
        write_atomic(path, STARTER_UPGRADE if args.kind == "upgrade" else STARTER_SIZING)
    except OSError as exc:
        raise InputError(f"init: {args.file!r} cannot be written ({exc.strerror})") from None
    _say(f"wrote {path}: edit it, then run: pipeopt "
         f"{'upgrade' if args.kind == 'upgrade' else 'run'} {path}")
    return 0


def _cmd_verify(args: argparse.Namespace) -> int:
    import pandas as pd

    from .verification import run_checks

    table = run_checks()
    view = table[["area", "check", "expected", "computed", "tolerance", "passed", "source"]]
    with pd.option_context("display.max_colwidth", 60, "display.width", 250):
        _say(view.to_string(index=False, float_format=lambda x: f"{x:.10g}"))
    failed = int((~table["passed"]).sum())
    _say(f"\n{len(table) - failed} of {len(table)} reference checks passed")
    return 1 if failed else 0


def _cmd_catalog(args: argparse.Namespace) -> int:
    import pandas as pd

    from . import catalog

    if not args.material:
        mats = catalog.list_materials()
        view = pd.DataFrame({"material": mats["material"], "sizes": mats["sizes"],
                             "roughness_mm": mats["roughness_m"] * 1e3,
                             "description": mats["description"]})
        _say(view.to_string(index=False))
        return 0
    from .units import Quantity, to_si

    bounds = {}
    for name in ("min_diameter", "max_diameter"):
        text = getattr(args, name)
        flag = "--" + name.replace("_", "-")
        bounds[name] = None if text is None else Quantity(to_si(text, "diameter", flag), "m")
    sizes = catalog.list_sizes(args.material, bounds["min_diameter"], bounds["max_diameter"],
                               args.classes)
    if sizes.empty:
        given = " and ".join(f"{'--' + k.replace('_', '-')} {getattr(args, k)!r}"
                             for k in bounds if getattr(args, k) is not None)
        every = catalog.list_sizes(args.material, None, None, args.classes)
        raise InputError(f"{given}: no size of {args.material} has its inner diameter in that "
                         f"range (the sizes run from {every['inner_diameter_m'].min() * 1e3:.1f} "
                         f"to {every['inner_diameter_m'].max() * 1e3:.1f} mm)")
    # the columns of a size file (pipeopt.catalog.read_sizes), so a listing can be edited and
    # read back as one
    view = pd.DataFrame({
        "designation": sizes["designation"], "class": sizes["class"],
        "outside_diameter_mm": sizes["outside_diameter_m"] * 1e3,
        "wall_mm": sizes["wall_m"] * 1e3, "lining_mm": sizes["lining_m"] * 1e3,
        "inner_diameter_mm": sizes["inner_diameter_m"] * 1e3,
        "pressure_rating_bar": sizes["pressure_rating_pa"] / 1e5})
    def mm(x: float) -> str:  # the standards give dimensions to 0.01 mm at most
        return f"{x:.2f}".rstrip("0").rstrip(".")

    formats = {c: mm for c in view.columns if c.endswith("_mm")}
    formats["pressure_rating_bar"] = lambda x: f"{x:.1f}"
    _say(view.to_string(index=False, formatters=formats, na_rep="-"))
    _say(f"\nsource: {sizes['provenance'].iloc[0]}")
    return 0


def _add_out(sub: argparse.ArgumentParser, pdf: bool = True, workbook: bool = True) -> None:
    sub.add_argument("--out", help="folder for the report (HTML, Markdown, "
                                   + ("workbook, " if workbook else "")
                                   + "figures, CSV tables)")
    sub.add_argument("--force", action="store_true",
                     help="replace the result set in a non-empty --out folder (files pipeopt "
                          "did not write stay)")
    if pdf:
        sub.add_argument("--pdf", action="store_true",
                         help="also write report.pdf into --out (printed by WeasyPrint)")
        sub.add_argument("--paper", choices=("A4", "Letter"), default="A4",
                         help="paper of report.pdf (default A4)")


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
    run.add_argument("study", help="the study file (TOML); - reads it from standard input")
    _add_out(run)
    run.add_argument("--quiet", action="store_true", help="no progress bar")
    run.set_defaults(func=_cmd_run)

    upg = sub.add_parser("upgrade", help="run an upgrade study file (keep, reline, replace, "
                                         "duplicate)",
                         description="Run an upgrade study (TOML) and print its comparison.",
                         epilog="example: pipeopt upgrade main.toml --out results")
    upg.add_argument("study", help="the upgrade study file (TOML); - reads it from standard "
                                   "input")
    upg.add_argument("--best-year", action="store_true",
                     help="also scan every year of action of every option and print the best")
    _add_out(upg)
    upg.add_argument("--quiet", action="store_true", help="no progress bar")
    upg.set_defaults(func=_cmd_upgrade)

    net = sub.add_parser("network", help="size the pipes of a network study file",
                         description="Size the pipes of a branched or looped network (TOML) "
                                     "by least (life-cycle) cost and check every node's "
                                     "pressure.",
                         epilog="example: pipeopt network town.toml --out results  "
                                "(or: pipeopt network --demo)")
    net.add_argument("study", nargs="?", help="the network study file (TOML); - reads it from "
                                              "standard input")
    net.add_argument("--demo", action="store_true", help="run the bundled demonstration "
                                                        "network (invented)")
    _add_out(net, pdf=False, workbook=False)
    net.add_argument("--quiet", action="store_true", help="no progress bar")
    net.set_defaults(func=_cmd_network)

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
    cat.add_argument("--class", dest="classes", action="append",
                     help='a class (pressure class, SDR, PN or schedule), e.g. "C40"; may be '
                          'given more than once')
    cat.set_defaults(func=_cmd_catalog)
    _add_programme(sub)
    return parser


class _Terminated(KeyboardInterrupt):
    """SIGTERM or SIGHUP: unwinds like Ctrl-C, so that every clean-up runs."""

    def __init__(self, signum: int) -> None:
        super().__init__(signum)
        self.signum = signum


_TERMINATION = tuple(getattr(signal, n) for n in ("SIGTERM", "SIGHUP") if hasattr(signal, n))
_stopping = False


def _terminate(signum, frame) -> None:
    global _stopping
    if not _stopping:  # the first signal unwinds; a second one while unwinding is not needed
        _stopping = True
        raise _Terminated(signum)


def _on_termination() -> dict:
    """Install the SIGTERM/SIGHUP handler (main thread only); the handlers it replaced."""
    global _stopping
    _stopping = False
    old = {}
    if threading.current_thread() is threading.main_thread():
        for s in _TERMINATION:
            if signal.getsignal(s) not in (signal.SIG_IGN, None):
                old[s] = signal.signal(s, _terminate)
    return old


def _restore(old: dict) -> None:
    """Put the previous handlers back; a signal arriving meanwhile waits for them."""
    block = hasattr(signal, "pthread_sigmask") and old
    if block:
        signal.pthread_sigmask(signal.SIG_BLOCK, list(old))
    try:
        for s, h in old.items():
            signal.signal(s, h)
    finally:
        if block:
            signal.pthread_sigmask(signal.SIG_UNBLOCK, list(old))


def _run(args: argparse.Namespace) -> int:
    try:
        return int(args.func(args))
    except InputError as exc:
        print(f"pipeopt: error: {printable(str(exc), one_line=True)}", file=sys.stderr)
        return 2
    except BrokenPipeError:  # the reader of our output went away (| head): not an error
        os.dup2(os.open(os.devnull, os.O_WRONLY), sys.stdout.fileno())
        return 0
    except Exception as exc:  # noqa: BLE001 - the last line of defence: no traceback for users
        if args.debug:
            traceback.print_exc()
        print(printable(f"pipeopt: internal error ({type(exc).__name__}: {exc}); please report "
                        f"it, with --debug for details", one_line=True), file=sys.stderr)
        return 3


# ----- renewal programme: `pipeopt programme` ---------------------------------------------------
def _cmd_programme(args: argparse.Namespace) -> int:
    """Value every main of a register, schedule the renewals within the budgets, report."""
    from .programme import ProgrammeStudy
    from .register import INVENTED_UTILITY

    out = _prepare_out(args)
    inputs: tuple = ()
    if args.demo:
        if args.register:
            raise InputError("programme: give a REGISTER file or --demo, not both")
        study = ProgrammeStudy.from_toml(args.study) if args.study else ProgrammeStudy.demo()
        register = ProgrammeStudy.demo_register()
        source = f"the invented register of {INVENTED_UTILITY}"
        _say(DEMO_NOTE)
        _say()
    else:
        if not args.register or not args.study:
            raise InputError("programme: give a REGISTER file (CSV or Parquet) and --study "
                             "FILE, or --demo")
        study = ProgrammeStudy.from_toml(args.study)
        register, source = args.register, None
        inputs = (Path(args.study).resolve(), Path(args.register).resolve())
        if out is not None:
            from .outputs import check_inputs
            from .programme_report import SET_PATTERNS

            check_inputs(out, inputs, list(SET_PATTERNS), what="--out")
    dask = None if args.dask is None else (True if args.dask == "local" else args.dask)
    progress = False if args.quiet else (True if args.progress else None)
    result = study.run(register, dask=dask, partition_rows=args.partition_rows,
                       progress=progress, source=source)
    _say(result.text())
    if out is not None:
        from .programme_report import programme_report_files

        files = programme_report_files(result)
        if args.demo:  # the register and the study file, as templates for a planner's own
            from importlib import resources

            files["register.csv"] = register.to_csv(index=False, lineterminator="\n")
            files["study.toml"] = resources.files("pipeopt").joinpath(
                "data", "demo_programme.toml").read_text("utf-8") if not args.study \
                else Path(args.study).read_text("utf-8")
        _write(out, files, args, inputs)
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
    _add_out(prog, pdf=False, workbook=False)
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
    old: dict = {}
    try:
        old = _on_termination()
        return _run(args)
    except KeyboardInterrupt as exc:  # Ctrl-C, SIGTERM, SIGHUP: every clean-up has run
        signum = getattr(exc, "signum", signal.SIGINT)
        try:
            print(f"pipeopt: {'interrupted' if signum == signal.SIGINT else 'terminated'}",
                  file=sys.stderr)
        except (KeyboardInterrupt, OSError):
            pass
        return 128 + int(signum)
    finally:
        _restore(old)


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
