"""The `pipeopt network` command as a user meets it (subprocesses with a deadline)."""

from __future__ import annotations

import math
import re
import subprocess
import sys
import tomllib
from importlib import resources

import numpy as np
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


# ------------------------------------------------------------------------------------------
# what `pipeopt network` prints and writes, against an independent solution of the demo
# network (tests/test_network_report.py: EN 545 bores, IAPWS-95 water, Colebrook-White,
# junction heads by scipy.optimize.root) and hand computations
# ------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def cli_run(tmp_path_factory):
    import contextlib
    import io

    import pandas as pd

    from tests.test_network_report import quillmere_reference

    folder = tmp_path_factory.mktemp("network-cli")
    f = quick_file(folder)
    with contextlib.redirect_stdout(io.StringIO()) as buffer:
        assert main(["network", str(f), "--out", str(folder / "res")]) == 0
    tables = {n: pd.read_csv(folder / "res" / f"{n}.csv") for n in ("pipes", "nodes", "cases",
                                                                 "cash_flows")}
    sizes = dict(zip(tables["pipes"]["pipe"], tables["pipes"]["size"], strict=True))
    return buffer.getvalue(), tables, quillmere_reference(sizes)


def _printed_rows(stdout: str, title: str) -> list[str]:
    block = stdout[stdout.index(title):]
    return block[:block.index("\n\n")].splitlines()[1:]


@pytest.mark.reference
def test_printed_pump_heads_and_peak_power(cli_run):
    # pump head = least source head of the independent solution - level 31 m, in each case;
    # peak power rho g Q H / eta, eta 0.72 (the file), rho at 12 degC (IAPWS-95, iapws package)
    from iapws import IAPWS95

    stdout, _, ref = cli_run
    heads = {k: v["source_head"] - 31.0 for k, v in ref.items()}
    low, high = (float(x) for x in re.search(r"pump head ([\d.]+)-([\d.]+) m", stdout).groups())
    assert low == pytest.approx(min(heads.values()), abs=0.05 + 1e-9)
    assert high == pytest.approx(max(heads.values()), abs=0.05 + 1e-9)
    rho = IAPWS95(T=285.15, P=0.101325).rho
    power = max(rho * 9.80665 * sum(v["demand"].values()) * heads[k] / 0.72 / 1000
                for k, v in ref.items())
    assert float(re.search(r"peak power ([\d.]+) kW", stdout).group(1)) == pytest.approx(
        power, abs=0.05 + 1e-9)


@pytest.mark.reference
def test_printed_sizes_bores_velocities_and_costs(cli_run):
    # each line: bore DE - 2 wall - 2 lining (EN 545, from memory), peak hour velocity
    # 4Q/(pi D^2) from the independent flows, capital 2100 DE^1.3 x length (the file's model)
    from tests.test_network_report import EN545, en545_bore

    stdout, _, ref = cli_run
    rows = _printed_rows(stdout, "Sizes chosen")
    assert len(rows) == 8                              # every pipe to size, not the old main
    for line in rows:
        m = re.match(r"\s*(.+?)\s+(DN \d+)\s+([\d,]+) m\s+([\d.]+) mm\s+([\d.]+) m/s\s+"
                     r"([\d,]+) EUR", line)
        pipe, size, length, bore, velocity, cost = m.groups()
        length = float(length.replace(",", ""))
        d = en545_bore(size)
        assert float(bore) == pytest.approx(d * 1000, abs=0.05 + 1e-9)
        q = abs(ref["peak hour"]["flows"][pipe])
        assert float(velocity) == pytest.approx(q / (math.pi * d * d / 4), abs=0.005 + 1e-9)
        assert float(cost.replace(",", "")) == pytest.approx(
            2100.0 * (EN545[size][0] / 1000) ** 1.3 * length, abs=0.5 + 1e-6)


@pytest.mark.reference
def test_printed_least_margins(cli_run):
    # pressure head H - z of the independent solution in the case printed, against the
    # node's minimum (20 m at Glimmerhythe, 25 m elsewhere: the file)
    from tests.test_network_report import demo_network

    stdout, _, ref = cli_run
    z = {n["name"]: float(n["elevation"].split()[0]) for n in demo_network()["node"]}
    rows = [r for r in _printed_rows(stdout, "least margins:") if " against " in r]
    assert len(rows) == 3
    for line in rows:
        node, head, minimum, case = re.match(
            r"\s*(.+?)\s+([\d.]+) m against ([\d.]+) m \((.+)\)", line).groups()
        assert float(head) == pytest.approx(ref[case]["heads"][node] - z[node], abs=0.005)
        assert float(minimum) == (20.0 if node == "Glimmerhythe" else 25.0)


@pytest.mark.reference
def test_written_node_heads_and_flows_against_the_independent_solution(cli_run):
    _, tables, ref = cli_run
    for _, row in tables["nodes"].iterrows():
        case = ref[row["case"]]
        want = case["source_head"] if row["kind"] == "source" else case["heads"][row["node"]]
        assert row["head_m"] == pytest.approx(want, abs=1e-6), row["node"]
    for _, row in tables["pipes"].iterrows():
        assert row["flow_m3_s"] == pytest.approx(ref["peak hour"]["flows"][row["pipe"]],
                                                 rel=1e-7, abs=1e-12)


@pytest.mark.reference
def test_printed_eac_is_the_present_value_times_the_crf(cli_run):
    # CRF = i (1 + i)^n / ((1 + i)^n - 1) at 5 % over 40 years, in mpmath (DeGarmo et al.;
    # docs/references.md#economics)
    import mpmath as mp

    stdout, _, _ = cli_run
    pv, eac = (float(x.replace(",", "")) for x in re.search(
        r"Life-cycle cost ([\d,]+) EUR present value \(EAC ([\d,]+) EUR/yr\)", stdout).groups())
    with mp.workdps(30):
        i = mp.mpf("0.05")
        crf = float(i * (1 + i) ** 40 / ((1 + i) ** 40 - 1))
    assert eac == pytest.approx(pv * crf, abs=0.5 + 0.5 * crf)


@pytest.mark.reference
def test_printed_pipe_capital_and_energy_present_value_by_hand(cli_run):
    # pipes: sum of 2100 DE^1.3 x length over the new pipes (DE of EN 545, the file's model);
    # energy: the year-by-year sum over 40 years of (P_avg 7300 h + P_peak 1460 h) x 0.14 x
    # 1.01^(t-1) + 60 x P_peak (the demand charge, a year), discounted by 1.05^t
    # (docs/references.md#economics), with P = rho g Q H / 0.72 from the independent solution
    import mpmath as mp
    from iapws import IAPWS95

    from tests.test_network_report import EN545

    stdout, tables, ref = cli_run
    pipes_pv, energy_pv = (float(x.replace(",", "")) for x in re.search(
        r"pipes ([\d,]+), pump station [\d,]+, energy ([\d,]+)", stdout).groups())
    new = tables["pipes"][tables["pipes"]["status"] == "new"]
    capital = sum(2100.0 * (EN545[s][0] / 1000) ** 1.3 * n
                  for s, n in zip(new["size"], new["length_m"], strict=True))
    assert pipes_pv == pytest.approx(capital, abs=0.5 + 1e-6)
    rho = IAPWS95(T=285.15, P=0.101325).rho
    kw = {k: rho * 9.80665 * sum(v["demand"].values()) * (v["source_head"] - 31.0) / 0.72 / 1000
          for k, v in ref.items()}
    with mp.workdps(30):
        energy = sum((mp.mpf(kw["average day"]) * 7300 + mp.mpf(kw["peak hour"]) * 1460)
                     * mp.mpf("0.14") * mp.mpf("1.01") ** (t - 1) / mp.mpf("1.05") ** t
                     + 60 * mp.mpf(kw["peak hour"]) / mp.mpf("1.05") ** t for t in range(1, 41))
    assert energy_pv == pytest.approx(float(energy), abs=0.5 + float(energy) * 1e-6)


def _powers(ref) -> dict[str, float]:
    """Electrical power of each case [kW], rho g Q H / 0.72 from the independent solution
    (water at 12 degC, IAPWS-95 by the iapws package)."""
    from iapws import IAPWS95

    rho = IAPWS95(T=285.15, P=0.101325).rho
    return {k: rho * 9.80665 * sum(v["demand"].values()) * (v["source_head"] - 31.0) / 0.72
            / 1000 for k, v in ref.items()}


def _pipe_capital(pipes) -> float:
    from tests.test_network_report import EN545

    new = pipes[pipes["status"] == "new"]
    return sum(2100.0 * (EN545[s][0] / 1000) ** 1.3 * n
               for s, n in zip(new["size"], new["length_m"], strict=True))


@pytest.mark.reference
def test_pump_station_installed_power_and_stages_by_hand(cli_run):
    # installed = peak power x (1 + standby 0.5); capital 9000 x installed^0.68 at year 0, bought
    # again at the end of its 20-year life (the file's [pump_station]; DEVELOPERS.md, the sizing
    # model, step 3), with the peak power of the independent solution
    stdout, tables, ref = cli_run
    installed = 1.5 * max(_powers(ref).values())
    assert _number_in(r"installed ([\d.]+) kW", stdout) == pytest.approx(installed,
                                                                         abs=0.05 + 1e-9)
    cash = tables["cash_flows"].set_index("year")
    station = 9000.0 * installed**0.68
    assert cash.loc[0, "capital_station"] == pytest.approx(station, rel=1e-6)
    assert cash.loc[20, "station_renewal"] == pytest.approx(station, rel=1e-6)
    assert (cash["station_renewal"].drop(20) == 0).all()
    assert _number_in(r"pump station ([\d,]+), energy", stdout) == pytest.approx(station,
                                                                                 abs=0.5 + 1)


def _number_in(pattern: str, text: str) -> float:
    return float(re.search(pattern, text).group(1).replace(",", ""))


@pytest.mark.reference
def test_cash_flows_file_energy_maintenance_and_residual_by_hand(cli_run):
    # every year t = 1..40: energy (P_avg 7300 h + P_peak 1460 h) x 0.14 x 1.01^(t-1) + 60 P_peak;
    # maintenance 0.003 of the pipe capital + 0.015 of the station's; at year 40 the pipes,
    # half-way through their 80-year life, are credited 1 - 40/80 of their capital
    # (straight line; the file's [economics] and [pump_station]); discount factor 1.05^-t
    _, tables, ref = cli_run
    kw = _powers(ref)
    pipes = _pipe_capital(tables["pipes"])
    station = 9000.0 * (1.5 * kw["peak hour"]) ** 0.68
    cash = tables["cash_flows"].set_index("year")
    assert list(cash.index) == list(range(41))
    for t in range(1, 41):
        energy = ((kw["average day"] * 7300 + kw["peak hour"] * 1460) * 0.14 * 1.01 ** (t - 1)
                  + 60 * kw["peak hour"])
        assert cash.loc[t, "energy"] == pytest.approx(energy, rel=1e-6), t
        assert cash.loc[t, "maintenance"] == pytest.approx(0.003 * pipes + 0.015 * station,
                                                           rel=1e-6), t
        assert cash.loc[t, "discount_factor"] == pytest.approx(1.05**-t, rel=1e-9), t
    assert cash.loc[40, "residual"] == pytest.approx(-(1 - 40 / 80) * pipes, rel=1e-9)
    assert (cash["residual"].drop(40) == 0).all()
    assert cash.loc[0, "capital_pipe"] == pytest.approx(pipes, rel=1e-9)


@pytest.mark.slow
@pytest.mark.reference
def test_hazen_williams_network_heads_against_an_independent_solution(tmp_path):
    # the demo network with head_loss = "hazen-williams": h = 10.67 L Q^1.852 / (C^1.852
    # D^4.87) (SI form, common water-engineering texts; docs/references.md#friction), C 140 for
    # the new cement-lined ductile iron (common practice, from memory) and 80 given to the old
    # main; the ring's junction heads by scipy.optimize.root (tests/network_reference.py), the
    # rising main (the whole demand) by hand with its K V^2/2g, the pumps lifting just enough
    import pandas as pd

    from tests.network_reference import hw_flow_from_drop, hw_head_loss, node_heads
    from tests.test_network_report import _length, demo_network, en545_bore

    f = quick_file(tmp_path, evaluations=500)      # any design will do: the check is of its heads
    f.write_text(f.read_text(encoding="utf-8")
                 .replace('head_loss = "darcy-weisbach"',
                          'head_loss = "hazen-williams"\nhazen_williams_coefficient = 10.67')
                 .replace('roughness = "1.5 mm"', "hazen_williams_c = 80.0"), encoding="utf-8")
    assert main(["network", str(f), "--out", str(tmp_path / "res"), "--quiet"]) == 0
    nodes = pd.read_csv(tmp_path / "res" / "nodes.csv")
    pipes = pd.read_csv(tmp_path / "res" / "pipes.csv")
    sizes = dict(zip(pipes["pipe"], pipes["size"], strict=True))
    d = demo_network()
    names = [n["name"] for n in d["node"]]
    z = np.array([_length(n["elevation"]) for n in d["node"]])
    pmin = np.array([_length(n.get("min_pressure_head", "25 m")) for n in d["node"]])
    demand = np.array([float(n["demand"].split()[0]) / 1000 for n in d["node"]])
    main_pipe, *ring = d["pipe"]
    idx = {n: k - 1 for k, n in enumerate(names)}
    idx[names[0]] = len(names) - 1                          # Quillmere Cross held fixed
    start = np.array([idx[p["from"]] for p in ring])
    end = np.array([idx[p["to"]] for p in ring])
    length = np.array([_length(p["length"]) for p in ring])
    bore = np.array([0.15 if "inner_diameter" in p else en545_bore(sizes[p["name"]])
                     for p in ring])
    c = np.array([80.0 if "inner_diameter" in p else 140.0 for p in ring])
    d_main = en545_bore(sizes[main_pipe["name"]])
    for duty in d["duty"]:
        q = demand * duty["demand_factor"]
        v = q.sum() / (math.pi * d_main**2 / 4)
        loss = hw_head_loss(q.sum(), 1600.0, d_main, 140.0, 10.67) + 6.0 * v * v / (2 * 9.80665)
        rel = node_heads(len(names) - 1, start, end,
                         lambda x: hw_flow_from_drop(x, length, bore, c, 10.67), q[1:], [0.0],
                         np.full(len(names) - 1, -5.0))
        drop = np.concatenate([[loss], loss - rel])
        source = float(np.max(z + pmin + drop))
        heads = dict(zip(names, source - drop, strict=True))
        for _, row in nodes[nodes["case"] == duty["name"]].iterrows():
            want = source if row["kind"] == "source" else heads[row["node"]]
            assert row["head_m"] == pytest.approx(want, abs=1e-6), row["node"]
