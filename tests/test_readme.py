"""The README shows only what the code does today.

- Every generated block (after a ``<!-- generated: NAME -->`` marker) equals what the code
  prints now (scripts/readme.py renders them from the code).
- Every Python block runs, in a fresh process, with its printed output compared where the
  README shows it.
- Every ``pipeopt`` command the README shows runs and ends with exit status 0.
"""

from __future__ import annotations

import importlib.util
import os
import re
import shlex
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
README = (ROOT / "README.md").read_text(encoding="utf-8")


def _readme_module():
    spec = importlib.util.spec_from_file_location("readme_gen", ROOT / "scripts" / "readme.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_generated_blocks_are_what_the_code_prints():
    gen = _readme_module()
    assert gen.render(README) == README, "run: python scripts/readme.py"
    assert len(gen.MARK.findall(README)) >= 8


def _python_blocks() -> list[str]:
    return re.findall(r"```python\n(.*?)\n```", README, re.S)


@pytest.fixture()
def workdir(tmp_path):
    data = ROOT / "pipeopt" / "data"
    for name in ("study.toml", "my-line.toml"):
        shutil.copy(data / "demo_sizing.toml", tmp_path / name)
    for name in ("main.toml", "my-main.toml"):
        shutil.copy(data / "demo_upgrade.toml", tmp_path / name)
    shutil.copy(data / "demo_programme.toml", tmp_path / "programme.toml")
    shutil.copy(data / "demo_network.toml", tmp_path / "town.toml")
    from pipeopt.register import invented_register

    register = invented_register()
    register.to_csv(tmp_path / "mains.csv", index=False)
    register.to_parquet(tmp_path / "mains.parquet", index=False)
    shutil.copy(data / "demo_longline.toml", tmp_path / "longline.toml")
    return tmp_path


@pytest.mark.parametrize("index", range(len(_python_blocks())))
def test_python_blocks_run(index, workdir):
    code = _python_blocks()[index]
    env = {**os.environ, "MPLBACKEND": "Agg"}
    run = subprocess.run([sys.executable, "-c", code], cwd=workdir, capture_output=True,
                         text=True, timeout=300, env=env)
    assert run.returncode == 0, run.stderr[-2000:]
    # where the README shows the block's output right after it, the output matches
    after = README.split(code, 1)[1]
    shown = re.match(r"\n```\n\n<!-- generated: [\w-]+ -->\n```text\n(.*?)\n```", after, re.S)
    if shown:
        assert run.stdout.strip() == shown.group(1).strip()


def _commands() -> list[str]:
    verbs = "init|run|upgrade|demo|catalog|verify|network|programme"
    found = re.findall(rf"`(pipeopt (?:{verbs})[^`]*)`", README)
    for block in re.findall(r"```bash\n(.*?)\n```", README, re.S):
        found += re.findall(rf"^(pipeopt (?:{verbs}).*)$", block, re.M)
    # an inline command wrapped over two lines of the Markdown reads as one line
    return sorted({" ".join(c.split()) for c in found if "[" not in c and "..." not in c})


@pytest.mark.slow
@pytest.mark.parametrize("command", _commands())
def test_commands_shown_run(command, workdir):
    # run as a shell would (redirections, comments), with a fresh folder for --out and a new
    # file for init, in a folder holding the files the README names
    exe = shutil.which("pipeopt") or str(Path(sys.executable).parent / "pipeopt")
    line = re.sub(r"--out \S+", lambda m: f"--out {shlex.quote(str(workdir / 'out'))}", command)
    line = re.sub(r"^pipeopt init \S+", "pipeopt init new.toml", line)
    line = shlex.quote(exe) + line[len("pipeopt"):]
    run = subprocess.run(["bash", "-c", line], cwd=workdir, capture_output=True, text=True,
                         timeout=600, env={**os.environ, "MPLBACKEND": "Agg"})
    assert run.returncode == 0, f"{command}: {run.stderr[-2000:]}"
