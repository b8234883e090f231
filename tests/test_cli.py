"""Tests of the pipeopt command line, as a user meets it (a subprocess and in-process)."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pandas as pd
import pytest

from pipeopt.cli import main

DATA = Path(__file__).parent / "data"


def run_cli(*args: str, cwd: Path | None = None) -> subprocess.CompletedProcess:
    return subprocess.run([sys.executable, "-m", "pipeopt.cli", *args], capture_output=True,
                          text=True, cwd=cwd, timeout=300)


def test_demo_prints_a_readable_summary():
    out = run_cli("demo")
    assert out.returncode == 0, out.stderr
    assert "invented for illustration" in out.stdout
    assert "Best:" in out.stdout and "Continuous optimum" in out.stdout
    assert "Caution" in out.stdout
    assert "Traceback" not in out.stderr


def test_run_writes_candidates(tmp_path):
    code = main(["run", str(DATA / "marrowin_flats.toml"), "--out", str(tmp_path / "res"),
                 "--quiet"])
    assert code == 0
    df = pd.read_csv(tmp_path / "res" / "candidates.csv")
    for col in ("material", "size", "inner_diameter_m", "velocity_m_s", "eac", "feasible",
                "reasons"):
        assert col in df.columns
    assert (tmp_path / "res" / "optimum.csv").is_file()
    # the study file has an [uncertainty] section: its tables are written too
    for name in ("tornado.csv", "switching_values.csv", "monte_carlo.csv",
                 "monte_carlo_correlation.csv"):
        assert (tmp_path / "res" / name).is_file()
    mc = pd.read_csv(tmp_path / "res" / "monte_carlo.csv")
    assert mc["prob_cheapest"].sum() == pytest.approx(1.0)
    assert not list((tmp_path / "res").glob("*.tmp"))


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("[line]\nlength = 3200\n", "error: "),
        ("this is not toml", "TOML syntax error"),
        ("[study]\nnmae = \"x\"\n", "did you mean 'study.name'"),
    ],
)
def test_bad_study_file_exit_2_one_message_no_outputs(tmp_path, text, match):
    f = tmp_path / "study.toml"
    f.write_text(text)
    before = f.read_bytes()
    out = run_cli("run", str(f), "--out", str(tmp_path / "out"))
    assert out.returncode == 2
    assert match in out.stderr and "Traceback" not in out.stderr
    assert len(out.stderr.strip().splitlines()) == 1
    assert not (tmp_path / "out").exists()
    assert f.read_bytes() == before  # the study file is never modified


def test_missing_file_and_catalog_listing(capsys):
    assert main(["run", "no-such-file.toml"]) == 2
    assert "not found" in capsys.readouterr().err
    assert main(["catalog"]) == 0
    assert "ductile-iron" in capsys.readouterr().out
    assert main(["catalog", "pe100", "--min-diameter", "0.2 m", "--class", "SDR 11"]) == 0
    out = capsys.readouterr().out
    assert "SDR 11" in out and "ISO 4427" in out
    assert main(["catalog", "pe100", "--min-diameter", "0.2"]) == 2


def test_no_command_prints_help(capsys):
    assert main([]) == 2
    assert "usage" in capsys.readouterr().out


def test_output_cut_short_is_not_an_error():
    # `pipeopt demo | head -1`: the reader closes the pipe; no traceback, no internal error
    proc = subprocess.run(f"{sys.executable} -m pipeopt.cli demo | head -1", shell=True,
                          capture_output=True, text=True, timeout=300)
    assert "internal error" not in proc.stderr and "Traceback" not in proc.stderr


# ------------------------------------------------------------------------------------------
# standard input, byte-order mark, checks before computing, the demo's one set
# ------------------------------------------------------------------------------------------
def test_dash_reads_the_study_from_standard_input(tmp_path):
    text = (DATA / "tullomere_booster.toml").read_text(encoding="utf-8")
    out = subprocess.run([sys.executable, "-m", "pipeopt.cli", "upgrade", "-", "--out",
                          str(tmp_path / "res")], input=text, capture_output=True, text=True,
                         timeout=300)
    assert out.returncode == 0, out.stderr
    assert "keep" in out.stdout and "NPV vs keep" in out.stdout
    from pipeopt.outputs import read_manifest

    assert "summary.csv" in read_manifest(tmp_path / "res").names


def test_a_study_file_with_a_byte_order_mark_runs(tmp_path, capsys):
    f = tmp_path / "bom.toml"
    f.write_bytes(b"\xef\xbb\xbf" + (DATA / "tullomere_booster.toml").read_bytes())
    assert main(["upgrade", str(f)]) == 0
    assert "NPV vs keep" in capsys.readouterr().out


def test_out_is_checked_before_computing(tmp_path, capsys, monkeypatch):
    from collections import namedtuple

    from pipeopt import outputs

    usage = namedtuple("usage", "total used free")
    monkeypatch.setattr(outputs.shutil, "disk_usage", lambda p: usage(10**9, 10**9, 10**5))
    assert main(["upgrade", str(DATA / "tullomere_booster.toml"), "--out",
                 str(tmp_path / "res")]) == 2
    captured = capsys.readouterr()
    assert "--out" in captured.err and "res" in captured.err and "MB free" in captured.err
    assert captured.out == ""                       # nothing computed, nothing printed
    assert not (tmp_path / "res").exists()


def test_demo_writes_one_set_with_both_studies(tmp_path):
    from pipeopt.outputs import read_manifest

    out = run_cli("demo", "--out", str(tmp_path / "demo"))
    assert out.returncode == 0, out.stderr
    names = read_manifest(tmp_path / "demo").names
    assert {"sizing/report.html", "sizing/candidates.csv", "upgrade/report.html",
            "upgrade/summary.csv"} <= set(names)
    assert f"wrote {tmp_path / 'demo' / 'manifest.json'}" in out.stdout
