"""Tests of the pipeopt command line, as a user meets it (a subprocess and in-process)."""

from __future__ import annotations

import contextlib
import io
import math
import re
import subprocess
import sys
from pathlib import Path

import mpmath as mp
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


# ------------------------------------------------------------------------------------------
# what `pipeopt catalog` prints, against the published tables
# (docs/references.md#pipe-dimensions; the values also in pipeopt/data/standard_tables.csv)
# ------------------------------------------------------------------------------------------
def catalog_rows(capsys, *args: str) -> dict[str, list[float]]:
    """The printed catalog table: designation and class -> [OD, wall, lining, bore] in mm and
    the rating in bar (NaN where none is printed)."""
    assert main(["catalog", *args]) == 0
    rows = {}
    text = capsys.readouterr().out
    for line in text[:text.index("\n\n")].splitlines()[1:]:    # the table, then its sources
        tokens = line.split()
        rows[" ".join(tokens[:-5])] = [float("nan") if t == "-" else float(t)
                                       for t in tokens[-5:]]
    return rows


def printed(rows: dict, designation: str) -> list[float]:
    (row,) = [v for k, v in rows.items() if k.startswith(designation + " ")]
    return row


def check_walls_and_bores(rows, table, lining=None):
    for designation, (od, wall) in table.items():
        got = printed(rows, designation)
        s = (lining or {}).get(designation, 0.0)
        assert got[:3] == [od, wall, s], designation
        # bore = OD - 2 wall - 2 lining (the tables' definitions of the three dimensions)
        assert got[3] == pytest.approx(od - 2 * wall - 2 * s, abs=1e-9), designation


@pytest.mark.reference
def test_catalog_pe100_sdr11_walls_and_rating(capsys):
    # EN 12201-2:2011 Table 2 (PE 100 minimum walls; = ISO 4065 by SDR), OD and wall in mm
    table = {"110 SDR 11": (110, 10.0), "160 SDR 11": (160, 14.6), "200 SDR 11": (200, 18.2),
             "250 SDR 11": (250, 22.7), "315 SDR 11": (315, 28.6), "400 SDR 11": (400, 36.3),
             "500 SDR 11": (500, 45.4), "630 SDR 11": (630, 57.2)}
    rows = catalog_rows(capsys, "pe100", "--class", "SDR 11")
    check_walls_and_bores(rows, table)
    # ISO 4427-1: PN = 20 MRS / (C (SDR - 1)) with MRS 10 MPa and C = 1.25: 20 x 10 / (1.25 x
    # 10) = 16 bar
    assert {r[4] for r in rows.values()} == {20 * 10 / (1.25 * (11 - 1))}


@pytest.mark.reference
def test_catalog_pe100_sdr17_walls_and_rating(capsys):
    # EN 12201-2:2011 Table 2 (PE 100, SDR 17), OD and wall in mm
    table = {"110 SDR 17": (110, 6.6), "160 SDR 17": (160, 9.5), "200 SDR 17": (200, 11.9),
             "250 SDR 17": (250, 14.8), "315 SDR 17": (315, 18.7), "400 SDR 17": (400, 23.7),
             "500 SDR 17": (500, 29.7), "630 SDR 17": (630, 37.4)}
    rows = catalog_rows(capsys, "pe100", "--class", "SDR 17", "--min-diameter", "90 mm")
    check_walls_and_bores(rows, table)
    # ISO 4427-1: 20 MRS / (C (SDR - 1)) = 20 x 10 / (1.25 x 16) = 10 bar
    assert {r[4] for r in rows.values()} == {20 * 10 / (1.25 * (17 - 1))}


@pytest.mark.reference
def test_catalog_pvc_u_pn10_is_sdr26_from_110_mm(capsys):
    # EN 1452-2 (from memory): PVC-U PN 10 at dn >= 110 is SDR 26 (MRS 25 MPa, C = 2.0:
    # 20 x 25 / (2.0 x 25) = 10 bar); walls of SDR 26 from the ISO 4065 table
    # (docs/references.md#pipe-dimensions)
    table = {"110 PN 10": (110, 4.2), "200 PN 10": (200, 7.7), "315 PN 10": (315, 12.1),
             "400 PN 10": (400, 15.3), "630 PN 10": (630, 24.1)}
    rows = catalog_rows(capsys, "pvc-u", "--class", "PN 10")
    check_walls_and_bores(rows, table)
    assert {printed(rows, d)[4] for d in table} == {20 * 25 / (2.0 * (26 - 1))}


@pytest.mark.reference
def test_catalog_ductile_iron_dimensions(capsys):
    # EN 545:2010 / ISO 2531 outside diameter DE and the nominal walls of the preferred
    # classes (from memory); cement-mortar lining EN 545 / ISO 4179, 3 mm to DN 300 and 5 mm
    # from DN 350 to DN 600 (from memory)
    c40 = {"DN 150 C40": (170, 4.5), "DN 200 C40": (222, 4.7), "DN 300 C40": (326, 6.2)}
    c30 = {"DN 400 C30": (429, 6.5), "DN 500 C30": (532, 7.5), "DN 600 C30": (635, 8.7)}
    check_walls_and_bores(catalog_rows(capsys, "ductile-iron", "--class", "C40"), c40,
                          lining=dict.fromkeys(c40, 3.0))
    rows = catalog_rows(capsys, "ductile-iron", "--class", "C30")
    check_walls_and_bores(rows, c30, lining=dict.fromkeys(c30, 5.0))
    assert {printed(rows, d)[4] for d in c30} == {30.0}       # class C30: PFA 30 bar (EN 545)


@pytest.mark.reference
def test_catalog_ductile_iron_k9_walls(capsys):
    # ISO 2531:1998 K9 nominal walls (from memory), DE as EN 545, lining 3 mm (ISO 4179)
    table = {"DN 100 K9": (118, 6.0), "DN 200 K9": (222, 6.3), "DN 300 K9": (326, 7.2)}
    check_walls_and_bores(catalog_rows(capsys, "ductile-iron-k", "--class", "K9"), table,
                          lining=dict.fromkeys(table, 3.0))


@pytest.mark.reference
def test_catalog_steel_pipe_schedules(capsys):
    # ASME B36.10M Table 1 (carbon steel) and B36.19M Table 1 (stainless), from memory
    check_walls_and_bores(catalog_rows(capsys, "steel", "--class", "Sch 40"),
                          {"NPS 2 Sch 40": (60.3, 3.91), "NPS 4 Sch 40": (114.3, 6.02),
                           "NPS 6 Sch 40": (168.3, 7.11), "NPS 8 Sch 40": (219.1, 8.18),
                           "NPS 12 Sch 40": (323.8, 10.31)})
    check_walls_and_bores(catalog_rows(capsys, "steel", "--class", "STD"),
                          {"NPS 12 STD": (323.8, 9.53)})
    check_walls_and_bores(catalog_rows(capsys, "stainless-steel", "--class", "Sch 10S"),
                          {"NPS 4 Sch 10S": (114.3, 3.05)})


# ------------------------------------------------------------------------------------------
# what `pipeopt run` prints and writes, against a hand computation
# ------------------------------------------------------------------------------------------
# An invented line (illustrative): 0.2 m^3/s for 8000 h a year through 2 km of PE 100 SDR 17
# against a 10 m lift; energy at 0.1 escalating 1 % a year; 6 % real over 30 years; pipe life
# 50 years (straight-line residual at the horizon); no pump station cost.
HAND_STUDY = """\
[study]
name = "Quarnhollow check line (invented, illustrative)"
currency = "EUR"
illustrative = true
[fluid]
kind = "water"
temperature = "15 degC"
[line]
length = "2 km"
static_head = "10 m"
[[duty]]
flow = "0.2 m^3/s"
hours = 8000
[pumping]
efficiency = 0.75
[energy]
price = 0.1
escalation = 0.01
[economics]
discount_rate = 0.06
horizon = 30
pipe_life = 50
[[material]]
name = "pe100"
classes = ["SDR 17"]
min_diameter = "350 mm"
max_diameter = "600 mm"
cost = { coefficient = 1500.0, exponent = 1.4 }
"""
# EN 12201-2:2011 Table 2, PE 100 SDR 17 walls [mm] (450 and 560 from memory)
SDR17_WALLS = {400: 23.7, 450: 26.7, 500: 29.7, 560: 33.2, 630: 37.4}
PE_ROUGHNESS = 0.007e-3       # PE, Moody (1944) chart range for plastics (docs/references.md)
G = 9.80665                   # standard gravity (CGPM 1901)


def hand_figures(od_mm: float) -> dict:
    """One candidate of HAND_STUDY by hand: Darcy-Weisbach with a 40-digit mpmath Colebrook
    root (Colebrook 1939), water at 15 degC from the iapws package (IAPWS-95), P = rho g Q H /
    eta, and the present value as the explicit year-by-year sum of the discounted energy bills
    p (1 + e)^(t - 1) E / (1 + i)^t, less the residual (1 - 30/50) of the pipe at year 30;
    EAC = PV i (1 + i)^n / ((1 + i)^n - 1) (docs/references.md#economics)."""
    from iapws import IAPWS95

    from tests.conftest import colebrook_mpmath

    water = IAPWS95(T=288.15, P=0.101325)
    d = (od_mm - 2 * SDR17_WALLS[od_mm]) / 1000
    q, length = 0.2, 2000.0
    v = q / (math.pi * d * d / 4)
    f = colebrook_mpmath(water.rho * v * d / water.mu, PE_ROUGHNESS / d)
    h = f * length / d * v * v / (2 * G)
    p_kw = water.rho * G * q * (10.0 + h) / 0.75 / 1000
    capital = 1500.0 * (od_mm / 1000) ** 1.4 * length
    with mp.workdps(30):
        i, e = mp.mpf("0.06"), mp.mpf("0.01")
        energy = sum(p_kw * 8000 * mp.mpf("0.1") * (1 + e) ** (t - 1) / (1 + i) ** t
                     for t in range(1, 31))
        residual = capital * (1 - mp.mpf(30) / 50) / (1 + i) ** 30
        pv = capital + energy - residual
        crf = i * (1 + i) ** 30 / ((1 + i) ** 30 - 1)
        return {"bore_mm": d * 1000, "velocity": v, "head_loss": h, "pump_head": 10.0 + h,
                "power_kw": p_kw, "capital": capital, "pv_energy": float(energy),
                "pv": float(pv), "eac": float(pv * crf)}


@pytest.fixture(scope="module")
def hand_file(tmp_path_factory):
    f = tmp_path_factory.mktemp("hand-run") / "study.toml"
    f.write_text(HAND_STUDY, encoding="utf-8")
    return f


@pytest.fixture(scope="module")
def hand_stdout(hand_file):
    with contextlib.redirect_stdout(io.StringIO()) as buffer:
        assert main(["run", str(hand_file)]) == 0
    return buffer.getvalue()


def _number(pattern: str, text: str) -> float:
    return float(re.search(pattern, text).group(1).replace(",", ""))


@pytest.mark.reference
def test_run_prints_the_best_eac_of_the_hand_computation(hand_stdout):
    # the best by brute force over the hand EACs of the five sizes (all within the limits)
    stdout = hand_stdout
    hand = {od: hand_figures(od) for od in SDR17_WALLS}
    best = min(hand, key=lambda od: hand[od]["eac"])
    want = hand[best]
    assert f"Best: pe100 {best} SDR 17 (inner diameter {want['bore_mm']:.1f} mm)" in stdout
    # printed to the unit: within half a unit of the hand figure
    assert _number(r"EAC ([\d,]+) EUR/yr; present", stdout) == pytest.approx(want["eac"],
                                                                               abs=0.5 + 1e-3)
    assert _number(r"present value ([\d,]+) EUR", stdout) == pytest.approx(want["pv"],
                                                                            abs=0.5 + 1e-2)
    assert _number(r"energy ([\d,]+), resid", stdout) == pytest.approx(want["pv_energy"],
                                                                       abs=0.5)
    assert _number(r"pipe ([\d,]+), energy", stdout) == pytest.approx(want["capital"], abs=0.5)
    # the residual credit, (1 - 30/50) of the capital at year 30, discounted at 6 %
    assert -_number(r"residual value (-[\d,]+)", stdout) == pytest.approx(
        want["capital"] * 0.4 / 1.06**30, abs=0.5)


@pytest.mark.reference
def test_run_prints_the_hydraulics_of_the_hand_computation(hand_stdout):
    stdout = hand_stdout
    want = hand_figures(int(re.search(r"Best: pe100 (\d+) SDR 17", stdout).group(1)))
    assert _number(r"velocity ([\d.]+) m/s, head", stdout) == pytest.approx(
        want["velocity"], abs=0.005)
    assert _number(r"head loss ([\d.]+) m", stdout) == pytest.approx(want["head_loss"],
                                                                      abs=0.005)
    assert _number(r"pump head ([\d.]+) m, elec", stdout) == pytest.approx(want["pump_head"],
                                                                           abs=0.05)
    assert _number(r"electrical power ([\d.]+) kW", stdout) == pytest.approx(want["power_kw"],
                                                                             abs=0.05)
    # operating pressure rho g H at the pump, in bar (1 bar = 1e5 Pa; water at 15 degC,
    # IAPWS-95 999.10 kg/m^3, docs/references.md#water-properties)
    assert _number(r"operating ([\d.]+) bar", stdout) == pytest.approx(
        999.10 * G * want["pump_head"] / 1e5, abs=0.05)


@pytest.mark.slow
@pytest.mark.reference
def test_run_writes_every_candidate_as_the_hand_computation(hand_file, tmp_path):
    # the CSV carries 10 significant figures: every row against the hand figures; 1e-6
    # covers the water properties (two implementations of IAPWS-95) and the Colebrook root
    assert main(["run", str(hand_file), "--out", str(tmp_path / "res"), "--quiet"]) == 0
    df = pd.read_csv(tmp_path / "res" / "candidates.csv")
    assert sorted(int(s.split()[0]) for s in df["size"]) == sorted(SDR17_WALLS)
    for _, row in df.iterrows():
        want = hand_figures(int(row["size"].split()[0]))
        assert row["inner_diameter_m"] * 1000 == pytest.approx(want["bore_mm"], rel=1e-9)
        assert row["velocity_m_s"] == pytest.approx(want["velocity"], rel=1e-9)
        assert row["head_loss_m"] == pytest.approx(want["head_loss"], rel=1e-6)
        assert row["capex_pipe"] == pytest.approx(want["capital"], rel=1e-9)
        assert row["pv_energy"] == pytest.approx(want["pv_energy"], rel=1e-6)
        assert row["pv_total"] == pytest.approx(want["pv"], rel=1e-6)
        assert row["eac"] == pytest.approx(want["eac"], rel=1e-6)
    assert df.loc[df["eac"].idxmin(), "rank"] == 1


def run_text(tmp_path, text: str, *args: str) -> str:
    f = tmp_path / "study.toml"
    f.write_text(text, encoding="utf-8")
    with contextlib.redirect_stdout(io.StringIO()) as buffer:
        assert main(["run", str(f), *args]) == 0
    return buffer.getvalue()


@pytest.mark.reference
def test_run_with_swamee_jain_prints_its_explicit_friction(tmp_path):
    # Swamee & Jain (1976): f = 0.25 / log10(k/(3.7 D) + 5.74 / Re^0.9)^2 (docs/references.md
    # #friction), h = f L/D V^2/2g; water at 15 degC from the iapws package (IAPWS-95)
    from iapws import IAPWS95

    text = HAND_STUDY.replace("[economics]", "[hydraulics]\nfriction_method = \"swamee-jain\"\n"
                              "[economics]")
    stdout = run_text(tmp_path, text)
    od = int(re.search(r"Best: pe100 (\d+) SDR 17", stdout).group(1))
    water = IAPWS95(T=288.15, P=0.101325)
    d = (od - 2 * SDR17_WALLS[od]) / 1000
    v = 0.2 / (math.pi * d * d / 4)
    re_ = water.rho * v * d / water.mu
    f = 0.25 / math.log10(PE_ROUGHNESS / (3.7 * d) + 5.74 / re_**0.9) ** 2
    h = f * 2000.0 / d * v * v / (2 * G)
    assert _number(r"head loss ([\d.]+) m", stdout) == pytest.approx(h, abs=0.005 + 1e-9)
    assert _number(r"pump head ([\d.]+) m, elec", stdout) == pytest.approx(10 + h, abs=0.05)


@pytest.mark.reference
def test_run_with_two_duty_points_prints_the_energy_by_hand(tmp_path):
    # two duty points, 0.2 m^3/s for 5000 h and 0.12 m^3/s for 3000 h, and a demand charge of
    # 40 a kW of the year's peak: E = sum P_k h_k, bill_t = E p (1 + e)^(t - 1) + 40 P_peak,
    # the year-by-year mpmath sum as hand_figures (docs/references.md#economics)
    from iapws import IAPWS95

    from tests.conftest import colebrook_mpmath

    text = (HAND_STUDY.replace("flow = \"0.2 m^3/s\"\nhours = 8000",
                               "flow = \"0.2 m^3/s\"\nhours = 5000\n[[duty]]\n"
                               "flow = \"0.12 m^3/s\"\nhours = 3000")
            .replace("escalation = 0.01", "escalation = 0.01\ndemand_charge = 40.0"))
    stdout = run_text(tmp_path, text)
    od = int(re.search(r"Best: pe100 (\d+) SDR 17", stdout).group(1))
    water = IAPWS95(T=288.15, P=0.101325)
    d = (od - 2 * SDR17_WALLS[od]) / 1000

    def kw(q):
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(water.rho * v * d / water.mu, PE_ROUGHNESS / d)
        return water.rho * G * q * (10.0 + f * 2000.0 / d * v * v / (2 * G)) / 0.75 / 1000

    energy_kwh = kw(0.2) * 5000 + kw(0.12) * 3000
    with mp.workdps(30):
        pv = sum((energy_kwh * mp.mpf("0.1") * mp.mpf("1.01") ** (t - 1) + 40 * kw(0.2))
                 / mp.mpf("1.06") ** t for t in range(1, 31))
    assert _number(r"energy ([\d,]+), resid", stdout) == pytest.approx(float(pv), abs=0.5 + 1e-3)
    assert _number(r"electrical power ([\d.]+) kW", stdout) == pytest.approx(kw(0.2), abs=0.05)


@pytest.mark.reference
def test_run_prints_genereaux_continuous_optimum(tmp_path):
    # constant friction f = 0.015 and a cost a D^m per metre of the bore (a table by
    # designation, a = 1500, m = 1.4, over the EN 12201-2 bores): the optimum of
    # C(D) = A D^m + B D^-5, A = a CRF, B = 8 f rho Q^3 tau p / (pi^2 eta), is
    # D* = (5B/(mA))^(1/(m+5)) (Genereaux 1937; docs/references.md#economics); no lift, no
    # escalation, pipe life = horizon
    from iapws import IAPWS95

    bores = {od: (od - 2 * w) / 1000 for od, w in SDR17_WALLS.items()}
    table = ", ".join(f'"{od} SDR 17" = {1500.0 * b**1.4!r}' for od, b in bores.items())
    text = (HAND_STUDY.replace("static_head = \"10 m\"", "static_head = \"0 m\"")
            .replace("escalation = 0.01\n", "")
            .replace("pipe_life = 50", "pipe_life = 30")
            .replace("[economics]", "[hydraulics]\nfriction_method = \"constant\"\n"
                     "friction_factor = 0.015\n[economics]")
            .replace("cost = { coefficient = 1500.0, exponent = 1.4 }",
                     f"cost = {{ table = {{ {table} }} }}"))
    stdout = run_text(tmp_path, text)
    rho = IAPWS95(T=288.15, P=0.101325).rho
    i, n = 0.06, 30
    crf = i * (1 + i) ** n / ((1 + i) ** n - 1)
    big_a = 1500.0 * crf
    big_b = 8 * 0.015 * rho * 0.2**3 * 8000 * 0.1 / (math.pi**2 * 0.75 * 1000)
    d_star = (5 * big_b / (1.4 * big_a)) ** (1 / 6.4)
    line = stdout[stdout.index("Continuous optimum"):].splitlines()[1]
    assert "between 450 SDR 17 and 500 SDR 17" in line       # inside the sizes, not at an end
    assert float(re.search(r"SDR 17\s+([\d.]+) mm", line).group(1)) == pytest.approx(
        d_star * 1000, abs=0.05 + 1e-9)
    eac = big_a * d_star**1.4 * 2000.0 + big_b * d_star**-5 * 2000.0
    assert float(re.search(r"EAC\s+([\d,]+) EUR", line).group(1).replace(",", "")) == \
        pytest.approx(eac, abs=0.5 + 1e-3)


@pytest.mark.reference
def test_catalog_pe80_ratings_round_down_to_r10(capsys):
    # ISO 4427-1: PN = 20 MRS / (C (SDR - 1)), MRS 8 MPa for PE 80, C = 1.25, rounded down to
    # the R10 series (ISO 3, preferred numbers): SDR 11 gives 12.8 -> PN 12.5; SDR 17 gives 8.0
    # -> PN 8; walls as the ISO 4065 table (EN 12201-2 Table 2)
    sdr11 = catalog_rows(capsys, "pe80", "--class", "SDR 11")
    assert {r[4] for r in sdr11.values()} == {12.5}
    check_walls_and_bores(sdr11, {"160 SDR 11": (160, 14.6), "250 SDR 11": (250, 22.7)})
    sdr17 = catalog_rows(capsys, "pe80", "--class", "SDR 17")
    assert {r[4] for r in sdr17.values()} == {20 * 8 / (1.25 * 16)}
    check_walls_and_bores(sdr17, {"200 SDR 17": (200, 11.9), "315 SDR 17": (315, 18.7)})


@pytest.mark.reference
def test_catalog_diameter_filter_in_inches(capsys):
    # --min-diameter "12 in" is 304.8 mm (NIST SP 811 (2008), B.9: 1 in = 0.0254 m exactly):
    # every listed bore reaches it, and the largest bore below it, NPS 12 STD's 304.74 mm
    # (ASME B36.10M: OD 323.8, wall 9.53, from memory), is left out
    rows = catalog_rows(capsys, "steel", "--min-diameter", "12 in", "--max-diameter", "20 in")
    bores = [r[3] for r in rows.values()]
    assert bores and min(bores) >= 12 * 25.4 and max(bores) <= 20 * 25.4
    assert not [k for k in rows if k.startswith("NPS 12 STD ")]
    assert 323.8 - 2 * 9.53 < 12 * 25.4


@pytest.mark.reference
def test_run_with_growing_flow_prints_the_yearly_sum_by_hand(tmp_path):
    # [growth] 2 % a year to the design year 10, then level: Q_t = 0.2 x 1.02^(min(t, 10) - 1)
    # (DEVELOPERS.md, the sizing model, step 1); each year's energy by Darcy-Weisbach with the
    # mpmath Colebrook root, discounted year by year in mpmath; the velocity printed is year 1's
    from iapws import IAPWS95

    from tests.conftest import colebrook_mpmath

    text = HAND_STUDY.replace("[pumping]", "[growth]\nflow_per_year = 0.02\ndesign_year = 10\n"
                              "[pumping]")
    stdout = run_text(tmp_path, text)
    od = int(re.search(r"Best: pe100 (\d+) SDR 17", stdout).group(1))
    water = IAPWS95(T=288.15, P=0.101325)
    d = (od - 2 * SDR17_WALLS[od]) / 1000

    def kw(q):
        v = q / (math.pi * d * d / 4)
        f = colebrook_mpmath(water.rho * v * d / water.mu, PE_ROUGHNESS / d)
        return water.rho * G * q * (10.0 + f * 2000.0 / d * v * v / (2 * G)) / 0.75 / 1000

    power = {k: kw(0.2 * 1.02 ** (k - 1)) for k in range(1, 11)}
    with mp.workdps(30):
        pv = sum(power[min(t, 10)] * 8000 * mp.mpf("0.1") * mp.mpf("1.01") ** (t - 1)
                 / mp.mpf("1.06") ** t for t in range(1, 31))
    assert _number(r"energy ([\d,]+), resid", stdout) == pytest.approx(float(pv), abs=0.5 + 1e-3)
    assert _number(r"velocity ([\d.]+) m/s, head", stdout) == pytest.approx(
        0.2 / (math.pi * d * d / 4), abs=0.005)
    assert _number(r"electrical power ([\d.]+) kW", stdout) == pytest.approx(power[1], abs=0.05)


@pytest.mark.parametrize("command", ["programme", "network"])
def test_commands_without_a_pdf_refuse_the_option_and_promise_no_workbook(command, capsys):
    # their reports have no PDF: --pdf is refused (argparse's exit 2), never silently ignored
    with pytest.raises(SystemExit) as stop:
        main([command, "--demo", "--pdf"])
    assert stop.value.code == 2
    assert "unrecognized arguments: --pdf" in capsys.readouterr().err
    with pytest.raises(SystemExit):
        main([command, "--help"])
    text = " ".join(capsys.readouterr().out.split())
    assert "figures, CSV tables" in text and "workbook" not in text
