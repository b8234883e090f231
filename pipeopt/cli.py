"""Command line of pipeopt (presentation layer).

``pipeopt demo`` runs the bundled demonstration. Exit status 0 on success, 2 on bad input (one
readable message, never a traceback).
"""

from __future__ import annotations

import argparse
import sys
from collections.abc import Sequence

from .errors import InputError

DEMO_NOTE = ("Demo scenario and numbers are invented for illustration only; they describe no "
             "real plant or line.")


def _demo_friction() -> str:
    """Friction and fluid-property demonstration on an invented line (illustrative numbers)."""
    import numpy as np

    from . import friction as fr
    from .fluid import Fluid
    from .units import to_si

    water = Fluid.water("15 degC")
    flow = to_si("380 m^3/h", "flow", "demo.flow")
    length = to_si("3.2 km", "length", "demo.length")
    roughness = to_si("0.1 mm", "roughness", "demo.roughness")
    diameters = np.array([0.25, 0.30, 0.35, 0.40, 0.45])
    velocity = flow / (np.pi * diameters**2 / 4)
    re = fr.reynolds_number(velocity, diameters, water.density, water.viscosity)
    rows = [f"{'D [m]':>7} {'V [m/s]':>8} {'Re':>10} " + " ".join(f"{m:>12}" for m in fr.METHODS)
            + f" {'h_f [m]':>8}"]
    for d, v, r in zip(diameters, velocity, re, strict=True):
        fs = [fr.friction_factor(r, roughness / d, method=m) for m in fr.METHODS]
        h = fr.darcy_weisbach_head_loss(fs[0], length, d, v)
        rows.append(f"{d:7.3f} {v:8.3f} {r:10.4g} " + " ".join(f"{f:12.8f}" for f in fs)
                    + f" {h:8.3f}")
    return "\n".join([
        "pipeopt demo: friction loss of the Tarn Hollow raw-water transfer line",
        DEMO_NOTE,
        "",
        f"fluid: {water!r}",
        "line: 3.2 km, 380 m^3/h, absolute roughness 0.1 mm; friction by Colebrook-White "
        "(exact) and explicit formulas; h_f by Darcy-Weisbach with the exact factor",
        "",
        *rows,
    ])


def _cmd_demo(args: argparse.Namespace) -> int:
    print(_demo_friction())
    return 0


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="pipeopt",
        description="Life-cycle cost sizing of pumped liquid lines.",
        epilog="Results support engineering studies; they are not a design. Pressure, surge and "
               "structural questions need a qualified engineer; local codes govern.",
    )
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    demo = sub.add_parser("demo", help="run the bundled demonstration study",
                          description="Run the bundled demonstration (an invented scenario).",
                          epilog="example: pipeopt demo")
    demo.set_defaults(func=_cmd_demo)
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


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
