"""Reports: the files a client reads, their contents, determinism, and safe writing."""

from __future__ import annotations

import hashlib
import re
from pathlib import Path

import openpyxl
import pytest

from pipeopt import SizingStudy, UpgradeStudy
from pipeopt.cli import main
from pipeopt.report import CAUTIONS, write_report

DATA = Path(__file__).parent / "data"


@pytest.fixture(scope="module")
def sizing_report(tmp_path_factory):
    out = tmp_path_factory.mktemp("report")
    write_report(SizingStudy.demo().run(), out)
    return out


def test_sizing_report_contents(sizing_report):
    out = sizing_report
    html = (out / "report.html").read_text(encoding="utf-8")
    md = (out / "report.md").read_text(encoding="utf-8")
    for text in (html, md):
        assert "ILLUSTRATIVE" in text            # the demo's figures are invented, and say so
        assert "Model assumptions" in text and "Data sources" in text
        assert "reference checks passed" in text
        assert "EN 545" in text or "ISO 4427" in text      # catalog provenance
        assert "qualified engineer" in text
    assert all(c.split(".")[0][:40] in html for c in CAUTIONS)
    # self-contained: figures embedded, nothing fetched from the network
    assert "data:image/png;base64," in html
    assert not re.search(r"(src|href)=['\"]https?://", html)
    assert (out / "figures" / "cost_curves.png").is_file()
    book = openpyxl.load_workbook(out / "workbook.xlsx")
    assert {"candidates", "optimum", "inputs", "verification"} <= set(book.sheetnames)
    units = [c.value for c in book["inputs"]["D"]]
    assert "m" in units and "m³/h" in units
    assert not list(out.rglob("*.tmp"))


def test_reports_are_deterministic(tmp_path):
    res = SizingStudy.demo().run()
    a, b = tmp_path / "a", tmp_path / "b"
    write_report(res, a, verification=False)
    write_report(SizingStudy.demo().run(), b, verification=False)
    for f in sorted(a.rglob("*.csv")) + sorted(a.rglob("*.md")) + sorted(a.rglob("*.png")):
        rel = f.relative_to(a)
        assert hashlib.sha256(f.read_bytes()).digest() == \
            hashlib.sha256((b / rel).read_bytes()).digest(), rel


def test_upgrade_report(tmp_path):
    write_report(UpgradeStudy.demo().run(), tmp_path, verification=False)
    book = openpyxl.load_workbook(tmp_path / "workbook.xlsx")
    assert {"summary", "cash_flows", "inputs"} <= set(book.sheetnames)
    assert "cumulative_cash_flow" in (tmp_path / "report.html").read_text(encoding="utf-8")


def test_out_folder_is_not_overwritten_without_force(tmp_path, capsys):
    out = tmp_path / "res"
    out.mkdir()
    (out / "keep.txt").write_text("old result")
    assert main(["upgrade", str(DATA / "tullomere_booster.toml"), "--out", str(out)]) == 2
    assert "not empty; use --force" in capsys.readouterr().err
    assert (out / "keep.txt").read_text() == "old result"
    assert not (out / "report.html").exists()
    assert main(["upgrade", str(DATA / "tullomere_booster.toml"), "--out", str(out),
                 "--force"]) == 0
    assert (out / "report.html").is_file()


def test_init_writes_a_starter_that_runs(tmp_path, capsys):
    f = tmp_path / "mine.toml"
    assert main(["init", str(f)]) == 0
    assert main(["run", str(f)]) in (0, 1)
    assert main(["init", str(f)]) == 2                     # never overwritten silently
    g = tmp_path / "main.toml"
    assert main(["init", str(g), "--kind", "upgrade"]) == 0
    assert main(["upgrade", str(g)]) == 0
    assert "Caution" in capsys.readouterr().out


def test_report_opens_in_a_headless_browser(sizing_report):
    # the HTML report renders offline: every figure is decoded and shown, nothing is fetched
    import shutil

    chromium = shutil.which("chromium")
    if chromium is None:
        pytest.skip("no Chromium browser on this machine (Debian package 'chromium')")
    sync_api = pytest.importorskip("playwright.sync_api", reason="Playwright is not installed")
    fetched = []
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=chromium, headless=True,
                                     args=["--no-sandbox", "--disable-gpu",
                                           "--disable-background-networking"])
        page = browser.new_page()
        page.on("request", lambda r: fetched.append(r.url))
        page.goto((sizing_report / "report.html").as_uri(), wait_until="load")
        widths = page.eval_on_selector_all("img", "els => els.map(e => e.naturalWidth)")
        title = page.title()
        browser.close()
    assert title.startswith("pipeopt sizing study")
    assert widths and all(wd > 100 for wd in widths)
    assert all(u.startswith(("file:", "data:")) for u in fetched), fetched
