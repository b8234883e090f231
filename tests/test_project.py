"""Checks on the project itself: the README's commands and what CI runs."""

import re
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def _readme_commands() -> list[str]:
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    setup = text.split("## Set up", 1)[1].split("\n## ", 1)[0]
    return re.findall(r"```bash\n(.+?)\n```", setup)


def test_readme_has_exactly_two_one_line_setup_commands():
    cmds = _readme_commands()
    assert len(cmds) == 2 and all("\n" not in c for c in cmds)
    assert cmds[0].endswith("pipeopt demo")
    assert "pytest" in cmds[1]


def test_ci_runs_the_readme_test_command_exactly():
    ci = (ROOT / ".ci" / "run").read_text(encoding="utf-8")
    assert _readme_commands()[1] in ci.splitlines()
