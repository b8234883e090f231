"""Generate the README's output blocks from the code, or check that they are up to date.

Run from the repository root: ``python scripts/readme.py`` rewrites every generated block of
README.md; ``python scripts/readme.py --check`` exits 1 when a block differs from what the code
prints today (tests/test_readme.py runs the same check). A generated block is a fenced block
right after a marker line ``<!-- generated: NAME -->``; NAME is one of :data:`GENERATORS`.
"""

from __future__ import annotations

import argparse
import re
import sys
from importlib import resources
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"
MARK = re.compile(r"^<!-- generated: (?P<name>[\w-]+) -->\n(?P<fence>```[^\n]*)\n"
                  r"(?P<body>(?:.*?\n)??)```$", re.S | re.M)


def _demo_file(name: str) -> str:
    text = resources.files("pipeopt").joinpath("data", name).read_text("utf-8")
    lines = text.splitlines()
    while lines and (lines[0].startswith("#") or not lines[0].strip()):
        lines.pop(0)   # the file's header comment: the README says the same in its words
    return "\n".join(lines).rstrip()


def _sizing_text() -> str:
    from pipeopt import SizingStudy

    return SizingStudy.demo().run().text()


def _between(text: str, first: str, stop: str) -> str:
    lines = text.splitlines()
    i = next(k for k, x in enumerate(lines) if x.startswith(first))
    j = next(k for k in range(i + 1, len(lines)) if lines[k].startswith(stop))
    return "\n".join(lines[i:j]).rstrip()


def demo_sizing_study() -> str:
    return _demo_file("demo_sizing.toml")


def demo_sizing_output() -> str:
    return _between(_sizing_text(), "Best:", "Best two")


def _optimum_lines(text: str) -> str:
    lines = text.splitlines()
    i = next(k for k, x in enumerate(lines) if x.startswith("Continuous optimum"))
    out = [lines[i]]
    for x in lines[i + 1:]:
        if not x.startswith("  "):
            break
        out.append(x)
    return "\n".join(out)


def demo_upgrade_study() -> str:
    text = _demo_file("demo_upgrade.toml")
    keep = []
    take = False
    for line in text.splitlines():
        if line.startswith("["):
            take = line.startswith(("[existing", "[[option]]"))
        if take:
            keep.append(line)
    return "\n".join(keep).rstrip()


def demo_programme_study() -> str:
    """The programme's own sections of its demo file, [economics] and the first material."""
    keep: list[str] = []
    take, materials = False, 0
    for line in _demo_file("demo_programme.toml").splitlines():
        if line.startswith("["):
            material = line.startswith("[[material]]")
            materials += material
            take = (line.startswith(("[economics]", "[breaks]", "[replacement]", "[programme]"))
                    or (material and materials == 1))
        if take:
            keep.append(line)
    return "\n".join(keep).rstrip()


def _table_lines(text: str) -> str:
    lines = text.splitlines()
    i = next(k for k, x in enumerate(lines) if x.startswith("option "))
    out = []
    for x in lines[i:]:
        if not x.strip():
            break
        out.append(x.rstrip())
    return "\n".join(out)


def demo_best_year() -> str:
    from pipeopt import UpgradeStudy

    return UpgradeStudy.demo().best_year("replace DN 300").text()


def demo_tornado() -> str:
    from pipeopt import SizingStudy

    return SizingStudy.demo().tornado().text()


def physics_output() -> str:
    from pipeopt import Fluid, Quantity, catalog, friction

    water = Fluid.water("15 degC")
    pipe = catalog.lookup("ductile-iron", "DN 300 C40")
    d = pipe["inner_diameter_m"]
    re_ = friction.reynolds_number_from_flow(Quantity(360, "m^3/h"), d, water.density,
                                             water.viscosity)
    f = friction.friction_factor(re_, 0.1e-3 / d)
    return f"bore {d * 1000:.1f} mm, Re {re_:,.0f}, f {f:.10f}"


def error_example() -> str:
    from pipeopt import SizingStudy
    from pipeopt.errors import InputError

    mapping = {"fluid": {"kind": "water", "temperature": "15 degC"},
               "line": {"length": 3200, "static_head": "24 m"}}
    try:
        SizingStudy.from_dict(mapping)
    except InputError as exc:
        return f"pipeopt: error: {exc}"
    raise AssertionError("the example should fail")


def demo_network_study() -> str:
    """An excerpt of the demo network: one table of each kind, in the file's order."""
    wanted = [("[network]", None), ("[[duty]]", "peak hour"), ("[[source]]", None),
              ("[[node]]", "Glimmerhythe"), ("[[pipe]]", "cross link"),
              ("[[pipe]]", "old Ombrellin main"), ("[[diameter_option]]", "DN 200")]
    keep = []
    for block in _demo_file("demo_network.toml").split("\n\n"):
        lines = [x for x in block.splitlines() if not x.startswith("#")]
        if not lines:
            continue
        name = next((x for x in lines if x.startswith("name = ")), "")
        if any(lines[0] == head and (want is None or name.startswith(f'name = "{want}"'))
               for head, want in wanted):
            keep.append("\n".join(lines))
    return "\n\n".join(keep)


def network_demo() -> str:
    import contextlib
    import io

    from pipeopt.cli import main

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        main(["network", "--demo", "--quiet"])
    return buf.getvalue().rstrip("\n")


def programme_demo() -> str:
    import contextlib
    import io

    from pipeopt.cli import main

    buf = io.StringIO()
    with contextlib.redirect_stdout(buf):
        main(["programme", "--demo", "--quiet"])
    return buf.getvalue().rstrip("\n")


def demo_longline_study() -> str:
    """The long-line demo without its study labels, fluid, profile points and money tables."""
    text = _demo_file("demo_longline.toml")
    keep, take, points = [], False, 0
    for line in text.splitlines():
        if line.startswith("["):
            take = line.startswith(("[line]", "[[section]]", "[[duty]]", "[pumping]",
                                    "[boosters]", "[[equipment]]", "[fittings]", "[[profile]]"))
            if line.startswith("[[profile]]"):
                points += 1
                if points == 3:
                    keep.append("# ... one [[profile]] table per point of the ground profile")
                take = points <= 2
        if take:
            keep.append(line)
    return "\n".join(keep).rstrip()


def _longline_text() -> str:
    from pipeopt import SizingStudy

    return SizingStudy.demo("longline").run().text()


def demo_longline_output() -> str:
    return _between(_longline_text(), "Best:", "Best two")


def demo_longline_stations() -> str:
    from pipeopt import SizingStudy

    result = SizingStudy.demo("longline").run()
    return result.stations.round(2).to_string(index=False)


GENERATORS = {
    "programme-demo-study": demo_programme_study,
    "programme-demo": programme_demo,
    "network-demo-study": demo_network_study,
    "network-demo": network_demo,
    "demo-sizing-study": demo_sizing_study,
    "demo-sizing-output": demo_sizing_output,
    "demo-sizing-optimum": lambda: _optimum_lines(_sizing_text()),
    "demo-upgrade-study": demo_upgrade_study,
    "demo-upgrade-output": lambda: _table_lines(_upgrade_text()),
    "demo-best-year": demo_best_year,
    "demo-tornado": demo_tornado,
    "physics-output": physics_output,
    "demo-longline-study": demo_longline_study,
    "demo-longline-output": demo_longline_output,
    "demo-longline-stations": demo_longline_stations,
    "error-example": error_example,
}


def _upgrade_text() -> str:
    from pipeopt import UpgradeStudy

    return UpgradeStudy.demo().run().text()


def render(readme: str) -> str:
    """The README with every generated block rewritten from the code."""
    def block(m: re.Match) -> str:
        name = m.group("name")
        if name not in GENERATORS:
            raise KeyError(f"README: unknown generated block {name!r}")
        return f"<!-- generated: {name} -->\n{m.group('fence')}\n{GENERATORS[name]()}\n```"

    return MARK.sub(block, readme)


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--check", action="store_true", help="exit 1 if a block is stale")
    args = parser.parse_args()
    text = README.read_text(encoding="utf-8")
    new = render(text)
    if args.check:
        if new != text:
            print("README.md: generated blocks differ from what the code prints; run "
                  "python scripts/readme.py", file=sys.stderr)
            return 1
        return 0
    README.write_text(new, encoding="utf-8")
    return 0


if __name__ == "__main__":
    sys.exit(main())
