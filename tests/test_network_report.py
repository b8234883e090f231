"""The network report: its files, the cautions, the map, and safe writing."""

from __future__ import annotations

import math
import tomllib
from fractions import Fraction
from importlib import resources

import mpmath as mp
import numpy as np
import pandas as pd
import pytest

from pipeopt.network import NetworkStudy
from pipeopt.network.report import write_network_report
from pipeopt.network.study import NETWORK_CAUTION
from pipeopt.results import CAUTION


@pytest.fixture(scope="module")
def report(tmp_path_factory):
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    d = tomllib.loads(text)
    d["optimizer"]["evaluations"] = 3000
    result = NetworkStudy.from_dict(d).run(progress=False)
    out = tmp_path_factory.mktemp("network-report")
    return result, out, write_network_report(result, out)


def test_files_are_written(report):
    result, out, written = report
    names = {p.relative_to(out).as_posix() for p in written}
    assert names == {"manifest.json", "pipes.csv", "nodes.csv", "cases.csv", "cash_flows.csv",
                     "figures/network.png", "report.md", "report.html"}
    assert not list(out.rglob("*.tmp"))
    pipes = pd.read_csv(out / "pipes.csv")
    assert list(pipes["pipe"]) == list(result.pipes["pipe"])
    assert (out / "figures" / "network.png").read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"


def test_reports_carry_the_cautions_summary_and_sources(report):
    result, out, _ = report
    md = (out / "report.md").read_text(encoding="utf-8")
    html = (out / "report.html").read_text(encoding="utf-8")
    for text in (md, html):
        # the shared caution, then the network's own sentence
        assert CAUTION.split(":")[0] in text and NETWORK_CAUTION.split(":")[0] in text
        assert "study aid" not in text.lower()
        assert "ILLUSTRATIVE" in text
        assert "EN 545" in text            # the catalog's source of the candidate bores
    assert result.text().splitlines()[0] in md
    assert "data:image/png;base64," in html  # self-contained


@pytest.mark.reference
def test_cash_flows_file_reconciles_to_the_present_value(report):
    result, out, _ = report
    cash = pd.read_csv(out / "cash_flows.csv")
    # the rows, discounted at 5 % by the test's own factor (1 + i)^-t, sum to the life-cycle
    # cost: NPV as the explicit sum of C_t / (1 + i)^t (docs/references.md#economics)
    factor = 1.05 ** -cash["year"].to_numpy(dtype=float)
    rows = cash.drop(columns=["year", "total", "discount_factor", "discounted"])
    assert (rows.sum(axis=1) * factor).sum() == pytest.approx(result.total_cost, rel=1e-9)


def test_same_result_same_tables(report, tmp_path):
    result, out, _ = report
    write_network_report(result, tmp_path)
    for name in ("pipes.csv", "nodes.csv", "cases.csv", "cash_flows.csv", "report.md"):
        assert (tmp_path / name).read_bytes() == (out / name).read_bytes()


def test_hostile_names_are_inert_in_every_file(tmp_path):
    # names from a network file reach the CSV files and the Markdown: a spreadsheet must not
    # take one for a formula, nor Markdown for HTML, a link or the end of a code block
    # (common practice: OWASP's advice on CSV injection, a leading apostrophe)
    from pipeopt.network.report import network_report_files

    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    d = tomllib.loads(text)
    d["optimizer"]["evaluations"] = 500
    hostile = '=HYPERLINK("http://example.invalid") <b>x</b> ``` [l](javascript:1)'
    old = "Sorvantle Quay"
    for table in ("node", "pipe"):
        for t in d[table]:
            for key in ("name", "from", "to"):
                if t.get(key) == old:
                    t[key] = hostile
    d["study"]["name"] = "Vexholt ``` test <i>net</i>"   # in the summary too
    files = network_report_files(NetworkStudy.from_dict(d).run(progress=False))
    nodes = files["nodes.csv"]
    assert "'=HYPERLINK" in nodes and "\n=HYPERLINK" not in nodes
    assert ",=HYPERLINK" not in nodes
    md = files["report.md"]
    fence = [line for line in md.splitlines() if line and set(line) == {"`"}]
    assert len(fence) == 2 and len(fence[0]) > 3  # longer than any run of backticks inside
    start, stop = md.index(fence[0]), md.rindex(fence[1])
    outside = md[:start] + md[stop:]            # a code block shows its text as it is
    assert "<b>" not in outside and "<i>" not in outside and "&lt;b&gt;" in outside
    assert "\\[l\\](javascript:1)" in outside


# ------------------------------------------------------------------------------------------
# an independent solution of the demo network (Quillmere, invented, illustrative), written
# from the published equations only; used here and by the network CLI and plot tests
# ------------------------------------------------------------------------------------------
G = 9.80665                  # standard gravity (CGPM 1901)


def en545_c_wall(dn: int, de: int, pfa: int) -> float:
    """Nominal wall [mm] of class C<PFA> by the EN 545:2010 design rule (from memory;
    docs/references.md#pipe-dimensions): e_min = PFA SF DE / (20 Rm + PFA SF), SF = 3,
    Rm = 420 MPa, at least 3.0 mm; e = e_min + 1.3 + 0.001 DN, rounded up to 0.1 mm (exact
    rational arithmetic)."""
    e_min = max(Fraction(pfa * 3 * de, 20 * 420 + pfa * 3), Fraction(3))
    return math.ceil((e_min + Fraction(13, 10) + Fraction(dn, 1000)) * 10) / 10


# EN 545:2010 outside diameter DE, nominal wall of class C40 (the demo's class) and the
# cement-mortar lining of EN 545 / ISO 4179 (all from memory; docs/references.md#pipe-
# dimensions, pipeopt/data/standard_tables.csv): DE, wall, lining [mm]. To DN 300 C40 is the
# preferred class and its table wall is recorded; DN 350 and 400 C40 by the design rule.
EN545 = {"DN 100": (118, 4.4, 3), "DN 125": (144, 4.5, 3), "DN 150": (170, 4.5, 3),
         "DN 200": (222, 4.7, 3), "DN 250": (274, 5.5, 3), "DN 300": (326, 6.2, 3),
         "DN 350": (378, en545_c_wall(350, 378, 40), 5),
         "DN 400": (429, en545_c_wall(400, 429, 40), 5)}
DI_ROUGHNESS = 0.1e-3        # cement-mortar lined ductile iron (common practice, from memory)
OLD_MAIN = (0.15, 1.5e-3)    # the existing main's bore and roughness, as the file gives them


@pytest.mark.reference
def test_the_en545_rule_reproduces_the_preferred_class_walls():
    # the rule above against the remembered table walls of the C40 preferred class (EN 545:2010
    # from memory; pipeopt/data/standard_tables.csv) from DN 150 to DN 300, where the two
    # agree; then the bundled catalog's DN 350 and DN 400 C40 (no table wall recorded) against
    # the rule
    from pipeopt import catalog

    for dn, de, wall in ((150, 170, 4.5), (200, 222, 4.7), (250, 274, 5.5), (300, 326, 6.2)):
        assert en545_c_wall(dn, de, 40) == wall, dn
    sizes = catalog.list_sizes("ductile-iron", classes="C40").set_index("designation")
    for dn, de in ((350, 378), (400, 429)):
        assert sizes.loc[f"DN {dn} C40", "wall_m"] * 1000 == pytest.approx(
            en545_c_wall(dn, de, 40), abs=1e-9)


def en545_bore(size: str) -> float:
    """Bore [m] = DE - 2 wall - 2 lining of the EN 545 table above."""
    de, wall, lining = EN545[size]
    return (de - 2 * wall - 2 * lining) / 1000.0


def demo_network() -> dict:
    text = resources.files("pipeopt").joinpath("data", "demo_network.toml").read_text("utf-8")
    return tomllib.loads(text)


def _length(text: str) -> float:
    value, unit = text.split()
    return float(value) * {"m": 1.0, "km": 1000.0}[unit]


def quillmere_reference(sizes: dict[str, str]) -> dict:
    """Node heads and pipe flows of the demo network with the given sizes, per demand case.

    Water at 12 degC from the iapws package (IAPWS-95, R12-08). The rising main carries the
    whole demand (a tree branch): its head loss by Darcy-Weisbach with a 40-digit mpmath
    Colebrook root, plus K V^2/2g. The ring: junction heads as unknowns, each pipe's flow from
    its head drop by Colebrook-White rearranged for the velocity (substituting f = 2 g D J /
    V^2: V = -2 sqrt(2 g D J) log10(k/(3.7 D) + 2.51 nu / (D sqrt(2 g D J)))), mass balance at
    each junction solved by scipy.optimize.root (MINPACK hybrid Powell). The source lifts just
    enough (the file says so): in each case the source head is the least that keeps every node
    at its minimum, max_j (z_j + p_min,j + drop_j), since the flows do not depend on it.

    Returns {case: {"source_head", "heads" (by node), "flows" (by pipe)}}.
    """
    from iapws import IAPWS95

    from tests.conftest import colebrook_mpmath
    from tests.network_reference import node_heads

    d = demo_network()
    water = IAPWS95(T=285.15, P=0.101325)
    nu = water.mu / water.rho
    nodes = d["node"]
    names = [n["name"] for n in nodes]
    z = np.array([_length(n["elevation"]) for n in nodes])
    pmin = np.array([_length(n.get("min_pressure_head", d["network"]["min_pressure_head"]))
                     for n in nodes])
    demand = np.array([float(n["demand"].split()[0]) / 1000.0 for n in nodes])   # L/s
    main, *ring = d["pipe"]
    # the ring and spur: Quillmere Cross (node 0) fixed, the other six unknown
    idx = {n: k - 1 for k, n in enumerate(names)}
    idx[names[0]] = len(names) - 1
    start = np.array([idx[p["from"]] for p in ring])
    end = np.array([idx[p["to"]] for p in ring])
    length = np.array([_length(p["length"]) for p in ring])
    bore = np.array([OLD_MAIN[0] if "inner_diameter" in p else en545_bore(sizes[p["name"]])
                     for p in ring])
    rough = np.array([OLD_MAIN[1] if "inner_diameter" in p else DI_ROUGHNESS for p in ring])

    def flow_of_drop(drop):
        s = np.sqrt(2 * G * bore * np.abs(drop) / length)
        with np.errstate(divide="ignore", invalid="ignore"):
            v = -2 * s * np.log10(rough / (3.7 * bore) + 2.51 * nu / (bore * s))
        return np.where(drop == 0, 0.0, np.sign(drop) * v * np.pi * bore**2 / 4)

    d_main = en545_bore(sizes[main["name"]])
    out = {}
    for duty in d["duty"]:
        q = demand * duty["demand_factor"]
        v = q.sum() / (np.pi * d_main**2 / 4)
        f = colebrook_mpmath(v * d_main / nu, DI_ROUGHNESS / d_main)
        loss = (f * _length(main["length"]) / d_main + main["minor_loss_k"]) * v * v / (2 * G)
        # heads relative to the Cross, then the whole picture relative to the source
        rel = node_heads(len(names) - 1, start, end, flow_of_drop, q[1:], [0.0],
                         np.full(len(names) - 1, -5.0))
        drop = np.concatenate([[loss], loss - rel])          # source head minus node head
        source = float(np.max(z + pmin + drop))
        heads = source - drop
        full = np.concatenate([rel, [0.0]])
        flows = {main["name"]: float(q.sum())}
        flows.update(zip([p["name"] for p in ring],
                         flow_of_drop(full[start] - full[end]).tolist(), strict=True))
        out[duty["name"]] = {"source_head": source, "heads": dict(zip(names, heads, strict=True)),
                             "flows": flows, "demand": dict(zip(names, q, strict=True))}
    return out


@pytest.fixture(scope="module")
def reference(report):
    result, _, _ = report
    return quillmere_reference(dict(zip(result.pipes["pipe"], result.pipes["size"],
                                        strict=True)))


@pytest.mark.reference
def test_node_heads_file_against_an_independent_solution(report, reference):
    # each node is reported in the case of its least margin; the heads of that case
    _, out, _ = report
    nodes = pd.read_csv(out / "nodes.csv")
    for _, row in nodes.iterrows():
        case = reference[row["case"]]
        want = case["source_head"] if row["kind"] == "source" else case["heads"][row["node"]]
        assert row["head_m"] == pytest.approx(want, abs=1e-6), row["node"]


@pytest.mark.reference
def test_pipe_flows_file_against_an_independent_solution(report, reference):
    # the pipes table is the peak hour case; velocity V = 4 Q / (pi D^2) with the EN 545 bore
    _, out, _ = report
    pipes = pd.read_csv(out / "pipes.csv")
    peak = reference["peak hour"]["flows"]
    for _, row in pipes.iterrows():
        assert row["flow_m3_s"] == pytest.approx(peak[row["pipe"]], rel=1e-7, abs=1e-12)
        bore = OLD_MAIN[0] if row["status"] == "existing" else en545_bore(row["size"])
        assert row["inner_diameter_m"] == pytest.approx(bore, rel=1e-12)
        assert row["velocity_m_s"] == pytest.approx(peak[row["pipe"]] / (np.pi * bore**2 / 4),
                                                    rel=1e-7)


@pytest.mark.reference
def test_pipe_head_losses_by_darcy_weisbach(report):
    # h = (f L/D + K) V^2 / 2g with f the 40-digit mpmath Colebrook root at the pipe's own flow
    # and water at 12 degC from the iapws package (IAPWS-95, R12-08)
    from iapws import IAPWS95

    from tests.conftest import colebrook_mpmath

    _, out, _ = report
    water = IAPWS95(T=285.15, P=0.101325)
    for _, row in pd.read_csv(out / "pipes.csv").iterrows():
        d = row["inner_diameter_m"]
        v = abs(row["flow_m3_s"]) / (np.pi * d * d / 4)
        k = OLD_MAIN[1] if row["status"] == "existing" else DI_ROUGHNESS
        f = colebrook_mpmath(v * d * water.rho / water.mu, k / d)
        minor = 6.0 if row["pipe"] == "rising main" else 0.0    # the file's minor_loss_k
        h = (f * row["length_m"] / d + minor) * v * v / (2 * G)
        assert abs(row["head_loss_m"]) == pytest.approx(h, rel=1e-6), row["pipe"]
        assert np.sign(row["head_loss_m"]) == np.sign(row["flow_m3_s"])


@pytest.mark.reference
def test_pipe_flows_balance_every_node_demand(report):
    # conservation of mass, checked by summing: at each junction the pipes' inflow less their
    # outflow equals the peak hour demand, 1.9 x the node's demand in the file (the CSV holds
    # 10 significant figures: 1e-10 m^3/s)
    _, out, _ = report
    pipes = pd.read_csv(out / "pipes.csv")
    for node in demo_network()["node"]:
        inflow = pipes.loc[pipes["to"] == node["name"], "flow_m3_s"].sum()
        outflow = pipes.loc[pipes["from"] == node["name"], "flow_m3_s"].sum()
        want = 1.9 * float(node["demand"].split()[0]) / 1000.0
        assert inflow - outflow == pytest.approx(want, abs=1e-10), node["name"]


@pytest.mark.reference
def test_cases_file_pump_head_and_power(report, reference):
    # the pumps lift just enough: head = the least source head of the independent solution
    # less the source level 31 m; power = rho g Q H / eta with eta = 0.72 (the file) and rho of
    # water at 12 degC from the iapws package (IAPWS-95)
    from iapws import IAPWS95

    _, out, _ = report
    rho = IAPWS95(T=285.15, P=0.101325).rho
    cases = pd.read_csv(out / "cases.csv").set_index("case")
    for name, ref in reference.items():
        head = ref["source_head"] - 31.0
        q = sum(ref["demand"].values())
        assert cases.loc[name, "total_demand_m3_s"] == pytest.approx(q, rel=1e-12)
        assert cases.loc[name, "pump_head_m"] == pytest.approx(head, abs=1e-6)
        assert cases.loc[name, "power_kw"] == pytest.approx(rho * G * q * head / 0.72 / 1000,
                                                            rel=1e-6)


@pytest.mark.reference
def test_report_eac_and_pipe_costs_by_hand(report):
    # EAC = PV x CRF, CRF = i (1 + i)^n / ((1 + i)^n - 1) at 5 % over 40 years in mpmath
    # (docs/references.md#economics); each new pipe's capital = 2100 DE^1.3 per metre (the
    # file's cost model on the outside diameter, DE of EN 545) times its length
    result, out, _ = report
    md = (out / "report.md").read_text(encoding="utf-8")
    import re

    pv, eac = (float(x.replace(",", "")) for x in re.search(
        r"Life-cycle cost ([\d,]+) EUR present value \(EAC ([\d,]+) EUR/yr\)", md).groups())
    with mp.workdps(30):
        i = mp.mpf("0.05")
        crf = float(i * (1 + i) ** 40 / ((1 + i) ** 40 - 1))
    assert eac == pytest.approx(pv * crf, abs=0.5 + pv * crf * 1e-6)
    assert pv == pytest.approx(result.total_cost, abs=0.5)
    pipes = pd.read_csv(out / "pipes.csv")
    for _, row in pipes[pipes["status"] == "new"].iterrows():
        de = EN545[row["size"]][0] / 1000.0
        assert row["cost"] == pytest.approx(2100.0 * de**1.3 * row["length_m"], rel=1e-9)
