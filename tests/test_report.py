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


# ------------------------------------------------------------------------------------------
# text from a study cannot act in the files; the set is whole and reproducible
# ------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def hostile_report(tmp_path_factory):
    import warnings

    from tests.conftest import write_hostile_study

    folder = tmp_path_factory.mktemp("hostile")
    study = SizingStudy.from_toml(write_hostile_study(folder, control=False))
    out = folder / "out"
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", "Glyph", UserWarning)  # the control character
        write_report(study.run(), out, verification=False)
    return out


def test_csv_cells_cannot_become_formulas(hostile_report):
    import csv

    with open(hostile_report / "candidates.csv", newline="", encoding="utf-8") as fh:
        rows = list(csv.DictReader(fh))
    sizes = {r["size"] for r in rows}
    # OWASP, "CSV Injection": a cell starting with = + - @ tab or CR gets a leading apostrophe
    assert "'=HYPERLINK(\"http://example.invalid\",\"x\")" in sizes
    assert "'-2+3" in sizes
    cells = [v for r in rows for v in r.values()]
    assert not [c for c in cells if c[:1] in ("=", "+", "@", "\t", "\r")]
    numbers = [float(r["inner_diameter_m"]) for r in rows]      # numbers stay numbers
    assert min(numbers) > 0.2 and all(not r["eac"].startswith("'") for r in rows)


def test_workbook_text_is_text_never_a_formula(hostile_report):
    import zipfile

    book = openpyxl.load_workbook(hostile_report / "workbook.xlsx")
    cells = [c for row in book["candidates"].iter_rows() for c in row]
    formula = [c for c in cells if isinstance(c.value, str) and c.value.startswith("=HYPER")]
    assert formula and all(c.data_type == "s" for c in formula)
    with zipfile.ZipFile(hostile_report / "workbook.xlsx") as z:
        sheets = [n for n in z.namelist() if n.startswith("xl/worksheets/")]
        assert sheets and not any(b"<f>" in z.read(n) or b"<f " in z.read(n) for n in sheets)


def test_markdown_escapes_html_links_and_fences(hostile_report):
    md = (hostile_report / "report.md").read_text(encoding="utf-8")
    assert "\x1b" not in md and "\x07" not in md and "\x01" not in md
    # the summary sits in a fence longer than any run of backticks inside it
    # (CommonMark 0.31, 4.5 "Fenced code blocks"); inside it, text is literal
    lines = md.splitlines()
    start = lines.index("## Summary") + 2
    fence = lines[start]
    assert set(fence) == {"`"} and len(fence) > 3
    end = lines.index(fence, start + 1)
    inside = "\n".join(lines[start + 1:end])
    assert "```" in inside and fence not in inside
    assert "## Inputs" in lines[end + 1:]
    outside = "\n".join(lines[:start] + lines[end + 1:])
    for raw in ("<img", "<script>", "<b>"):
        assert raw not in outside
    assert "&lt;img" in lines[0] and "&lt;b&gt;bold" in outside
    assert not re.search(r"(?<!\\)\]\(javascript:", outside)       # no live link


def test_html_escapes_everything(hostile_report):
    page = (hostile_report / "report.html").read_text(encoding="utf-8")
    for raw in ("<img src=x", "<script>alert", "<b>bold", "\x1b", "\x07"):
        assert raw not in page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page


def test_workbook_is_byte_identical_for_identical_inputs(tmp_path):
    import time
    import zipfile

    res = UpgradeStudy.from_toml(DATA / "tullomere_booster.toml").run()
    write_report(res, tmp_path / "a", verification=False)
    time.sleep(2.1)  # zip entry times have a 2-second resolution (PKWARE APPNOTE 4.4.6)
    write_report(res, tmp_path / "b", verification=False)
    a, b = (tmp_path / "a" / "workbook.xlsx").read_bytes(), (tmp_path / "b" / "workbook.xlsx")
    assert a == b.read_bytes()
    with zipfile.ZipFile(tmp_path / "a" / "workbook.xlsx") as z:
        assert {i.date_time for i in z.infolist()} == {(2000, 1, 1, 0, 0, 0)}
        assert b"2000-01-01T00:00:00Z</dcterms:modified>" in z.read("docProps/core.xml")


def test_report_writes_a_whole_set_with_a_manifest(tmp_path):
    from pipeopt.outputs import read_manifest

    out = tmp_path / "res"
    written = write_report(UpgradeStudy.from_toml(DATA / "tullomere_booster.toml").run(), out,
                           verification=False)
    assert written[-1] == out / "manifest.json"
    manifest = read_manifest(out)
    assert [out / n for n in manifest.names] == written[:-1]
    assert not [p for p in tmp_path.iterdir() if p.name != "res"]


def test_set_patterns_name_every_file_a_report_may_write(sizing_report, tmp_path):
    import fnmatch

    from pipeopt.report import SET_PATTERNS

    write_report(UpgradeStudy.from_toml(DATA / "tullomere_booster.toml").run(), tmp_path,
                 verification=False)
    names = [p.relative_to(folder).as_posix() for folder in (sizing_report, tmp_path)
             for p in folder.rglob("*") if p.is_file() and p.name != "manifest.json"]
    assert names and all(any(fnmatch.fnmatchcase(n, p) for p in SET_PATTERNS) for n in names)
