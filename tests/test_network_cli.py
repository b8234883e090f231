"""The `pipeopt network` command as a user meets it (subprocesses with a deadline)."""

from __future__ import annotations

import re
import subprocess
import sys
import tomllib
from importlib import resources

import pytest

from pipeopt.cli import main

TIMEOUT = 300  # seconds: a command may fail, never hang


def run_cli(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "pipeopt.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=TIMEOUT)


def quick_file(tmp_path, evaluations=2000):
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    f = tmp_path / "town.toml"
    f.write_text(text.replace("evaluations = 40000", f"evaluations = {evaluations}"),
                 encoding="utf-8")
    assert tomllib.loads(f.read_text(encoding="utf-8"))["optimizer"]["evaluations"] == evaluations
    return f


def _mask_residuals(text: str) -> str:
    """The hydraulic residuals are rounding-level numbers that differ between machines."""
    return re.sub(r"imbalance [0-9.e+-]+", "imbalance ~", text)


def test_network_demo_prints_its_summary():
    # the README shows this output through a generated block (tests/test_readme.py)
    out = run_cli("network", "--demo")
    assert out.returncode == 0, out.stderr
    assert "invented for illustration" in out.stdout
    assert "Sizes chosen" in out.stdout and "Caution:" in out.stdout
    assert "mass and energy balance to 1e-9 held" in out.stdout
    assert "Traceback" not in out.stderr


def test_network_file_writes_the_report(tmp_path):
    f = quick_file(tmp_path)
    code = main(["network", str(f), "--out", str(tmp_path / "res"), "--quiet"])
    assert code == 0
    for name in ("pipes.csv", "nodes.csv", "cases.csv", "report.md", "report.html",
                 "figures/network.png"):
        assert (tmp_path / "res" / name).is_file()


def test_a_network_file_with_uncertainty_prints_and_writes_its_monte_carlo(tmp_path, capsys):
    f = quick_file(tmp_path)
    f.write_text(f.read_text(encoding="utf-8") + "\n[uncertainty]\nsamples = 200\nseed = 3\n"
                 "energy_price = { distribution = \"uniform\", low = 0.1, high = 0.2 }\n",
                 encoding="utf-8")
    code = main(["network", str(f), "--out", str(tmp_path / "res")])
    assert code == 0
    out = capsys.readouterr().out
    assert "Monte Carlo of the life-cycle cost: 200 samples (seed 3)" in out
    assert (tmp_path / "res" / "monte_carlo.csv").is_file()


def test_a_full_output_folder_is_kept_without_force(tmp_path, capsys):
    f = quick_file(tmp_path)
    res = tmp_path / "res"
    res.mkdir()
    (res / "keep.txt").write_text("mine")
    assert main(["network", str(f), "--out", str(res)]) == 2
    assert "not empty" in capsys.readouterr().err
    assert main(["network", str(f), "--out", str(res), "--force", "--quiet"]) == 0
    assert (res / "keep.txt").read_text() == "mine"


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("[[node]]\nname = \"a\"\nelevation = 12\n", "node[0].elevation"),
        ("[netwrk]\n", "did you mean 'network'"),
        ("[[source]]\nname = \"s\"\nhead = \"50 m\"\n", "node: required"),
    ],
)
def test_bad_network_file_exit_2_one_line(tmp_path, text, match):
    f = tmp_path / "bad.toml"
    f.write_text(text)
    out = run_cli("network", str(f), "--out", str(tmp_path / "out"))
    assert out.returncode == 2
    assert match in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert "Traceback" not in out.stderr
    assert not (tmp_path / "out").exists()


def test_file_and_demo_together_are_refused(tmp_path, capsys):
    assert main(["network", str(tmp_path / "x.toml"), "--demo"]) == 2
    assert "give a network study file, or --demo" in capsys.readouterr().err
    assert main(["network"]) == 2
