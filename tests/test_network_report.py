"""The network report: its files, the cautions, the map, and safe writing."""

from __future__ import annotations

import tomllib
from importlib import resources

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


def test_cash_flows_file_reconciles_to_the_present_value(report):
    result, out, _ = report
    cash = pd.read_csv(out / "cash_flows.csv")
    # the rows, discounted at 5 % by the test's own factor, sum to the life-cycle cost
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
