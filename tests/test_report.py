"""Reports: the files a client reads, their contents, determinism, and safe writing."""

from __future__ import annotations

import hashlib
import math
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
    header = [c.value for c in book["inputs"][1]]
    assert header == ["key", "value", "unit"]
    rows = {r[0]: r[1:] for r in book["inputs"].iter_rows(min_row=2, values_only=True)}
    # inputs are numbers in the units people read, beside their unit (demo_sizing.toml)
    assert rows["line.length"] == (4.6, "km") and rows["duty[1].flow"] == (520, "m³/h")
    assert rows["fluid.temperature"] == (12, "°C")
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
    assert {"summary", "cash_flows", "inputs", "derived", "tornado"} <= set(book.sheetnames)
    page = (tmp_path / "report.html").read_text(encoding="utf-8")
    assert "cumulative_cash_flow" in page and "figure-tornado" in page
    rows = {r[0]: r[1:] for r in book["inputs"].iter_rows(min_row=2, values_only=True)}
    # the upgrade study's own inputs, as demo_upgrade.toml gives them
    assert rows["existing.static_head"] == (22, "m")
    assert rows["existing.field_test.upstream_pressure"] == (4.6, "bar")
    assert rows["existing.field_test.length"] == (1.2, "km")
    assert rows["pumping.efficiency"][0] > 0 and rows["energy.escalation"][1] == "1/yr"
    assert rows["energy.demand_charge"][1] == "EUR/(kW yr)"
    assert rows["growth.flow_per_year"][1] == "1/yr"
    assert rows["existing.leakage_cost"] == (12000, "EUR/yr")
    assert rows["option[1].cost_per_metre"] == (520, "EUR/m")
    assert rows["option[0].liner_thickness"] == (6, "mm")
    derived = {r[0]: r[1:3] for r in book["derived"].iter_rows(min_row=2, values_only=True)}
    # back-calculated, so a derived value, not an input
    assert derived["existing roughness now"][1] == "mm"
    assert "existing.roughness" not in rows or rows["existing.roughness"][0] is None


def test_workbook_numbers_formats_units_and_frozen_headers(sizing_report):
    book = openpyxl.load_workbook(sizing_report / "workbook.xlsx")
    sheet = book["candidates"]
    names = [c.value for c in sheet[1]]
    units = dict(zip(names, [c.value for c in sheet[2]], strict=True))
    assert sheet.freeze_panes == "A3"                       # names and units stay in view
    assert units["eac"] == "EUR/yr" and units["capex_pipe"] == "EUR"
    assert units["inner_diameter_m"] == "m" and units["mdp_bar"] == "bar"
    assert units["material"] is None                        # text has no unit
    row = dict(zip(names, sheet[3], strict=True))
    assert isinstance(row["eac"].value, float) and row["eac"].number_format == "#,##0"
    assert isinstance(row["velocity_m_s"].value, float)
    widths = [sheet.column_dimensions[c].width for c in ("A", "B", "D")]
    assert all(w >= 8 for w in widths)
    yearly = book["yearly_best"]
    assert [c.value for c in yearly[1]][:2] == ["year", "flow_multiplier"]
    assert "energy_cost" in [c.value for c in yearly[1]]
    inputs = book["inputs"]
    assert inputs.freeze_panes == "A2" and [c.value for c in inputs[1]] == ["key", "value",
                                                                           "unit"]


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


# ------------------------------------------------------------------------------------------
# the printed report: PDF export (WeasyPrint) and the HTML printed by headless Chromium
# ------------------------------------------------------------------------------------------
#: Seconds for any one printing test (a hard deadline: faulthandler ends a hung process).
PRINT_DEADLINE = 600
#: Page sizes [pt]: ISO 216 A4 210 x 297 mm, US Letter 8.5 x 11 in (by definition).
PAPER_POINTS = {"A4": (595.28, 841.89), "Letter": (612.0, 792.0)}


@pytest.fixture()
def deadline():
    import faulthandler

    faulthandler.dump_traceback_later(PRINT_DEADLINE, exit=True)
    try:
        yield
    finally:
        faulthandler.cancel_dump_traceback_later()


def _needs_pdf():
    pytest.importorskip("pypdfium2", reason="pypdfium2 is not installed (the test extra)")
    from pipeopt.errors import InputError
    from pipeopt.report import check_pdf

    try:
        check_pdf()
    except InputError as exc:  # the Pango library is missing: .ci/run installs it
        pytest.skip(str(exc))


def _squash(text: str) -> str:
    return re.sub(r"\s+", "", text)


def _tables(page: str) -> list[tuple[str, list[str], list[str]]]:
    """(title, column headers, first cells of the last row) of every table of the report."""
    import html as _html

    out = []
    for body in re.findall(r"<section class='block[^']*'[^>]*>(.*?)</section>", page, re.S):
        title = _html.unescape(re.search(r"<h3>(.*?)</h3>", body, re.S).group(1))
        head = re.search(r"<thead><tr>(.*?)</tr></thead>", body, re.S).group(1)
        headers = [_html.unescape(h) for h in re.findall(r"<th[^>]*>(.*?)</th>", head, re.S)]
        last = re.findall(r"<tr[^>]*>(.*?)</tr>", body.split("<tbody>")[1], re.S)[-1]
        cells = [_html.unescape(c) for c in re.findall(r"<td[^>]*>(.*?)</td>", last, re.S)]
        out.append((title, headers, cells[:1]))
    return out


def _check_printed(pdf: bytes, page: str, paper: str) -> list[str]:
    """The checks of a printed report; returns the text of its pages."""
    import numpy as np
    import pypdfium2 as pdfium

    doc = pdfium.PdfDocument(pdf)
    n = len(doc)
    texts, squashed = [], []
    for i in range(n):
        p = doc[i]
        w, h = p.get_size()
        # within 0.5 mm (Chromium sizes A4 as 8.27 x 11.7 in)
        assert (w, h) == pytest.approx(PAPER_POINTS[paper], abs=1.5), (paper, w, h)
        text = p.get_textpage().get_text_range()
        texts.append(text)
        squashed.append(_squash(text))
        # rendered at 72 dpi (1 px per pt): the side margins (14 mm, 39.7 pt) hold nothing,
        # so no table or figure runs past the printable width and nothing is clipped
        image = np.asarray(p.render(scale=1).to_pil().convert("L"))
        assert image[:, :30].min() >= 245 and image[:, -30:].min() >= 245, (paper, i + 1)
        # page numbers from the print stylesheet
        assert f"Page{i + 1}of{n}" in squashed[i], (paper, i + 1)
    # a sensible length: title, results, figures, inputs (10 to 12 pages for the demos)
    assert 6 <= n <= 20, n
    everything = "".join(squashed)
    for title, headers, last in _tables(page):
        where = [i for i, t in enumerate(squashed) if _squash(title) in t]
        assert where, title
        near = "".join(squashed[where[0]:where[0] + 2])
        missing = [h for h in headers if _squash(h) not in near]
        assert not missing, (paper, title, missing)          # every column on the page
        assert _squash(last[0]) in everything, (paper, title)  # the table ends in the file
    words = " ".join(texts)
    assert not re.search(r"\bnan\b", words, re.IGNORECASE)     # "-" where nothing is known
    assert not re.search(r"\d\.\d{7,}", words)                   # no raw floats
    return texts


@pytest.fixture(scope="module")
def printed(tmp_path_factory):
    """The sizing demo with a title block, and the upgrade demo, written with --pdf."""
    _needs_pdf()
    folder = tmp_path_factory.mktemp("printed")
    study = SizingStudy.demo().replace(author="A. Engineer", revision="C",
                                       date="2026-03-01")
    write_report(study.run(), folder / "sizing", pdf=True)
    write_report(UpgradeStudy.demo().run(), folder / "upgrade", verification=False,
                 pdf=True, paper="Letter")
    return folder


@pytest.mark.slow
def test_pdf_export_prints_every_table_whole(printed, deadline):
    from pipeopt.report import CAUTIONS

    texts = {}
    for kind, paper in (("sizing", "A4"), ("upgrade", "Letter")):
        page = (printed / kind / "report.html").read_text(encoding="utf-8")
        texts[kind] = _check_printed((printed / kind / "report.pdf").read_bytes(), page, paper)
        first = _squash(texts[kind][0])
        assert _squash(CAUTIONS[0][:60]) in first and "ILLUSTRATIVE" in texts[kind][0]
        assert "studyaid" not in _squash("".join(texts[kind])).lower()
    sizing = texts["sizing"]
    first = _squash(sizing[0])
    # the title block: study, author, revision, date from the [study] keys
    assert "AuthorA.Engineer" in first and "RevisionC" in first and "Date2026-03-01" in first
    assert "Rev.C-2026-03-01" in first                     # the running head
    # money with thousands separators and the currency
    assert "215,028" in "".join(sizing) and "[EUR/yr]" in "".join(sizing)


@pytest.mark.slow
def test_pdf_export_is_reproducible(printed):
    from pipeopt.report import pdf_from_html

    page = (printed / "upgrade" / "report.html").read_text(encoding="utf-8")
    assert pdf_from_html(page, "Letter") == (printed / "upgrade" / "report.pdf").read_bytes()


@pytest.mark.slow
def test_html_report_printed_by_chromium(printed, deadline):
    # the HTML itself, printed as a reader would print it from a browser, on A4 and Letter
    import shutil

    chromium = shutil.which("chromium")
    if chromium is None:
        pytest.skip("no Chromium browser on this machine (Debian package 'chromium')")
    sync_api = pytest.importorskip("playwright.sync_api", reason="Playwright is not installed")
    scrolling = ("() => Array.from(document.querySelectorAll('*')).filter(e => {"
                 "const s = getComputedStyle(e); return ['auto', 'scroll'].includes(s.overflowX)"
                 " || ['auto', 'scroll'].includes(s.overflowY)}).map(e => e.tagName)")
    timeout = PRINT_DEADLINE * 1000 / 4
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=chromium, headless=True, timeout=timeout,
                                     args=["--no-sandbox", "--disable-gpu",
                                           "--disable-background-networking"])
        try:
            for kind in ("sizing", "upgrade"):
                html_file = printed / kind / "report.html"
                page = browser.new_page(viewport={"width": 1000, "height": 800})
                page.set_default_timeout(timeout)
                page.goto(html_file.as_uri(), wait_until="load", timeout=timeout)
                on_screen = page.evaluate(scrolling)
                wide = page.evaluate("() => document.documentElement.scrollWidth")
                page.emulate_media(media="print")
                in_print = page.evaluate(scrolling)
                pdfs = {paper: page.pdf(format=paper, prefer_css_page_size=False)
                        for paper in ("A4", "Letter")}
                page.close()
                # no scroll boxes, on screen or in print, and nothing wider than the window
                assert on_screen == [] and in_print == [] and wide <= 1000, kind
                for paper, pdf in pdfs.items():
                    _check_printed(pdf, html_file.read_text(encoding="utf-8"), paper)
        finally:
            browser.close()


# ------------------------------------------------------------------------------------------
# the yearly cash flows of the report reconcile to the present value
# ------------------------------------------------------------------------------------------
@pytest.mark.reference
def test_yearly_cash_flows_reconcile_to_the_present_value():
    import numpy as np

    from pipeopt.report import yearly_check

    res = SizingStudy.demo().run()
    rate = res.study.economics.discount_rate
    for index, row in res.candidates.iterrows():           # every candidate, not only the best
        y = res.yearly(index)
        money = ["capital_pipe", "capital_station", "station_renewal", "energy_cost",
                 "maintenance", "carbon", "residual"]
        np.testing.assert_allclose(y[money].sum(axis=1), y["total"], rtol=1e-12, atol=1e-6)
        # discounting written out here: (1 + i)^-t at the study's real rate (by definition)
        pv = float((y["total"] / (1.0 + rate) ** y["year"]).sum())
        assert pv == pytest.approx(row["pv_total"], rel=1e-9)
        check = yearly_check(y, row["pv_total"])
        assert abs(check["difference"]) <= 1e-9 * abs(row["pv_total"])
        assert y["capital_pipe"].iloc[0] == pytest.approx(row["capex_pipe"], rel=1e-12)
        assert y["residual"].iloc[-1] <= 0 and (y["capital_pipe"].iloc[1:] == 0).all()
    up = UpgradeStudy.demo().run()
    rate = up.study.economics.discount_rate
    for option, g in up.cash_flows.groupby("option"):
        pv = float((g["total"] / (1.0 + rate) ** g["year"]).sum())
        expected = float(up.summary.set_index("option").loc[option, "pv_cost"])
        assert pv == pytest.approx(expected, rel=1e-9)
        assert abs(yearly_check(g, expected)["difference"]) <= 1e-9 * expected


def test_report_shows_the_check_rows():
    from pipeopt.report import report_html

    res = SizingStudy.demo().run()
    page = report_html(res)
    pv = f"{res.best['pv_total']:,.0f}"
    block = page.split("id='yearly'")[1].split("</section>")[0]
    sums = re.findall(r"<tr class='check'>(.*?)</tr>", block)
    assert len(sums) == 3
    cells = re.findall(r"<td[^>]*>(.*?)</td>", sums[0])
    assert cells[0] == "sum" and cells[-1] == pv                  # the discounted column
    assert re.findall(r"<td[^>]*>(.*?)</td>", sums[1])[-1] == pv   # the present value
    difference = float(re.findall(r"<td[^>]*>(.*?)</td>", sums[2])[-1])
    assert abs(difference) <= 1e-9 * res.best["pv_total"]


# ------------------------------------------------------------------------------------------
# the report's numbers for the chosen pipe, recomputed by hand from the study's printed inputs
# (pipeopt/data/demo_sizing.toml: 4.6 km, static head 38 m, K = 9, largest duty 520 m^3/h,
# 310 m^3/h for 5200 h and 520 m^3/h for 2400 h, efficiency 0.72, 0.14 EUR/kWh, demand charge
# 60 EUR/(kW yr), 5 % over 40 years, flow growth 1.2 %/yr, water at 12 degC, restraint
# anchored throughout)
# ------------------------------------------------------------------------------------------
G_N = 9.80665   # standard gravity (3rd CGPM, 1901)


def _workbook_rows(folder, sheet):
    book = openpyxl.load_workbook(folder / "workbook.xlsx", read_only=True)
    rows = list(book[sheet].iter_rows(values_only=True))
    return [dict(zip(rows[0], r, strict=True)) for r in rows[2:]]


@pytest.fixture(scope="module")
def chosen(sizing_report):
    rows = _workbook_rows(sizing_report, "candidates")
    best = [r for r in rows if r["rank"] == 1]
    assert len(best) == 1
    return best[0]


@pytest.fixture(scope="module")
def water_12c():
    import iapws

    # the independent iapws package (IAPWS-95 and the 2008 viscosity release), 12 degC, 1 atm
    return iapws.IAPWS95(T=285.15, P=0.101325)


def _head_loss(q, d, rough, water):
    from .conftest import colebrook_mpmath

    v = q / (math.pi * d * d / 4)
    re = water.rho * v * d / water.mu
    f = colebrook_mpmath(re, rough / d)                # Colebrook (1939), 40-digit root
    return v, re, f, (f * 4600.0 / d + 9.0) * v * v / (2 * G_N)   # Darcy-Weisbach + K


@pytest.mark.reference
def test_report_hydraulics_of_the_chosen_pipe_by_hand(chosen, water_12c):
    # velocity Q/(pi D^2/4), Re = rho V D / mu, f from an mpmath Colebrook root, head loss by
    # Darcy-Weisbach with the fittings' K, pump head = static head + head loss
    v, re, f, h = _head_loss(520 / 3600, chosen["inner_diameter_m"], chosen["roughness_m"],
                             water_12c)
    assert chosen["velocity_m_s"] == pytest.approx(v, rel=1e-12)
    assert chosen["reynolds"] == pytest.approx(re, rel=1e-7)        # iapws solver ~1e-9
    assert chosen["friction_factor"] == pytest.approx(f, rel=1e-7)
    assert chosen["head_loss_m"] == pytest.approx(h, rel=1e-7)
    assert chosen["pump_head_m"] == pytest.approx(38.0 + h, rel=1e-8)
    # the largest flow of any year: 1.2 %/yr compound growth to year 40 (year 1 at 1.0)
    assert chosen["velocity_peak_m_s"] == pytest.approx(v * 1.012 ** 39, rel=1e-12)
    h_max = _head_loss(520 / 3600 * 1.012 ** 39, chosen["inner_diameter_m"],
                       chosen["roughness_m"], water_12c)[3]
    assert chosen["pump_head_max_m"] == pytest.approx(38.0 + h_max, rel=1e-7)


@pytest.mark.reference
def test_report_power_energy_and_eac_of_the_chosen_pipe_by_hand(sizing_report, chosen,
                                                                 water_12c):
    # hydraulic power rho g Q H over the wire-to-water efficiency; yearly energy the sum of
    # power x hours over the duties; year-1 energy cost = price x energy + demand charge x
    # peak power; EAC = PV x CRF, CRF = r (1+r)^n / ((1+r)^n - 1) (any engineering-economics
    # text; common practice)
    d, rough = chosen["inner_diameter_m"], chosen["roughness_m"]
    power = {}
    for q_h in (310.0, 520.0):
        q = q_h / 3600
        h = 38.0 + _head_loss(q, d, rough, water_12c)[3]
        power[q_h] = water_12c.rho * G_N * q * h / 0.72 / 1e3      # kW
    assert chosen["electrical_power_kw"] == pytest.approx(power[520.0], rel=1e-7)
    energy = power[310.0] * 5200 + power[520.0] * 2400
    assert chosen["energy_kwh_year1"] == pytest.approx(energy, rel=1e-7)
    year1 = [r for r in _workbook_rows(sizing_report, "yearly_best") if r["year"] == 1][0]
    assert year1["energy_cost"] == pytest.approx(0.14 * energy + 60.0 * power[520.0],
                                                 rel=1e-7)
    r, n = 0.05, 40
    crf = r * (1 + r) ** n / ((1 + r) ** n - 1)
    assert crf == pytest.approx(0.0582782, abs=5e-8)   # compound-interest tables, 5 %, 40 yr
    assert chosen["eac"] == pytest.approx(chosen["pv_total"] * crf, rel=1e-12)
    assert chosen["eac_capital"] == pytest.approx(
        (chosen["capex_pipe"] + chosen["capex_pump_station"]) * crf, rel=1e-12)


@pytest.mark.reference
def test_report_surge_and_pressures_of_the_chosen_pipe_by_hand(chosen, water_12c):
    # Korteweg's wave speed with Wylie & Streeter's thick-wall factor (psi = 1 - nu^2 anchored
    # throughout; D inner diameter), K_s = rho w^2 from iapws; Joukowsky dH = a dV / g on the
    # largest velocity; MDP = rho g (largest pump head + surge); PE 100 SDR 17 is PN 10
    # (ISO 4427-1: 20 x 10 / (1.25 x 16) = 10 bar) with no derating at 12 degC
    from pipeopt import catalog

    row = catalog.lookup(chosen["material"], chosen["size"])
    mat = catalog.get_material(chosen["material"])
    e, d, nu = row["wall_m"], chosen["inner_diameter_m"], mat.poisson_ratio
    k = water_12c.rho * water_12c.w ** 2
    c1 = 2 * e / d * (1 + nu) + (1 - nu * nu) * d / (d + e)
    a = math.sqrt(k / water_12c.rho) / math.sqrt(1 + c1 * k * d / (mat.elastic_modulus * e))
    surge = a * chosen["velocity_peak_m_s"] / G_N
    assert chosen["surge_head_m"] == pytest.approx(surge, rel=1e-7)
    assert chosen["operating_pressure_bar"] == pytest.approx(
        water_12c.rho * G_N * chosen["pump_head_max_m"] / 1e5, rel=1e-8)
    assert chosen["mdp_bar"] == pytest.approx(
        water_12c.rho * G_N * (chosen["pump_head_max_m"] + surge) / 1e5, rel=1e-7)
    assert chosen["pressure_rating_bar"] == pytest.approx(20 * 10 / (1.25 * (17 - 1)),
                                                          rel=1e-12)


# ------------------------------------------------------------------------------------------
# the tables printed in report.md, recomputed by hand from the study's inputs (the demo file
# pipeopt/data/demo_sizing.toml, listed above) and the published dimension tables
# ------------------------------------------------------------------------------------------
def _md_table(md: str, heading: str) -> list[dict]:
    """The rows of the first Markdown table under ``heading`` (cells as text)."""
    lines = md.split(heading, 1)[1].splitlines()
    first = next(i for i, ln in enumerate(lines) if ln.startswith("|"))
    table = []
    for ln in lines[first:]:                       # the contiguous run of table lines
        if not ln.startswith("|"):
            break
        table.append([c.strip() for c in ln.strip("|").split("|")])
    header = table[0]
    return [dict(zip(header, cells, strict=True)) for cells in table[2:]]


def _num(cell: str) -> float:
    return float(cell.replace(",", ""))


def _pe_power_kw(q, od_mm, wall_mm, water):
    """(head loss, pump head, electrical power) of PE at flow q: static 38 m, Darcy-Weisbach
    with the fittings' K 9 (_head_loss), P = rho g Q H / 0.72."""
    d = (od_mm - 2 * wall_mm) / 1000.0
    h = _head_loss(q, d, 0.007e-3, water)[3]       # PE 0.007 mm (Moody range, from memory)
    return h, 38.0 + h, water.rho * G_N * q * (38.0 + h) / 0.72 / 1e3


@pytest.mark.reference
def test_printed_cash_flows_of_the_chosen_pipe_by_hand(sizing_report, water_12c):
    # the chosen PE 100 500 SDR 17 (EN 12201-2: OD 500 mm, wall 29.7 mm; PE 960 kg/m3, common
    # practice): pipe 4600 m x (2.6 EUR/kg x mass + 380 OD^1.05); the station 9000 (1.5
    # P_max)^0.68 for the largest peak of the 40 years, bought again at year 20 (life 20);
    # flows 1.012^(t-1); energy cost E_t 0.14 x 1.01^(t-1) + 60 x peak; maintenance 0.3 % of
    # the pipe and 1.5 % of the station; residual of the pipe 1 - 40/80 at year 40; discount
    # factor 1.05^-t. Every printed cell within half its last printed unit.
    md = (sizing_report / "report.md").read_text(encoding="utf-8")
    assert "### Cash flows by year: pe100 500 SDR 17" in md
    rows = _md_table(md, "### Cash flows by year: pe100 500 SDR 17")
    assert [r["year"] for r in rows[:41]] == [str(t) for t in range(41)]
    mass = math.pi / 4 * (0.5**2 - 0.4406**2) * 960.0
    pipe = 4600.0 * (2.6 * mass + 380.0 * 0.5**1.05)
    peak = {t: _pe_power_kw(520 / 3600 * 1.012 ** (t - 1), 500, 29.7, water_12c)[2]
            for t in range(1, 41)}
    station = 9000.0 * (1.5 * max(peak.values())) ** 0.68
    pv = 0.0
    for t, row in enumerate(rows[:41]):
        energy = cost = 0.0
        if t:
            energy = sum(_pe_power_kw(q / 3600 * 1.012 ** (t - 1), 500, 29.7, water_12c)[2] * h
                         for q, h in ((310, 5200), (520, 2400)))
            cost = 0.14 * 1.01 ** (t - 1) * energy + 60.0 * peak[t]
        hand = {"energy \\[MWh\\]": energy / 1e3,
                "capital pipe \\[EUR\\]": pipe if t == 0 else 0.0,
                "capital station \\[EUR\\]": station if t == 0 else 0.0,
                "station renewal \\[EUR\\]": station if t == 20 else 0.0,
                "energy cost \\[EUR\\]": cost,
                "maintenance \\[EUR\\]": (0.003 * pipe + 0.015 * station) if t else 0.0,
                "residual \\[EUR\\]": -pipe * (1 - 40 / 80) if t == 40 else 0.0}
        hand["total \\[EUR\\]"] = sum(hand.values()) - energy / 1e3
        hand["discounted \\[EUR\\]"] = hand["total \\[EUR\\]"] / 1.05**t
        pv += hand["discounted \\[EUR\\]"]
        for col, value in hand.items():
            assert abs(_num(row[col]) - value) <= 0.5 + 1e-7 * abs(value), (t, col)
        assert abs(_num(row["discount factor"]) - 1.05**-t) <= 0.5e-4
    assert abs(_num(rows[41]["discounted \\[EUR\\]"]) - pv) <= 0.5 + 1e-7 * pv   # the sum row


@pytest.mark.reference
def test_printed_hydraulics_and_pressures_of_the_pe_rows_by_hand(sizing_report, water_12c):
    # the PE rows of "hydraulics and pressure" (EN 12201-2 walls, from memory: 500 SDR 17
    # 29.7, 560 SDR 17 33.2, 630 SDR 17 37.4, 500 SDR 11 45.4, 560 SDR 11 50.8 mm):
    # V = Q / (pi D^2/4) at 520 m3/h and, peak, at 520 x 1.012^39; head loss and pump head by
    # Darcy-Weisbach (mpmath Colebrook); power rho g Q H / 0.72; operating = rho g x the
    # largest pump head; MDP adds rho g a V_peak / g with Korteweg's a (thick wall, anchored
    # throughout, E 1.1 GPa, nu 0.45, K = rho w^2 of iapws; docs/references.md#surge);
    # PFA = PN = 20 x 10 / (1.25 (SDR - 1)) rounded down to the R10 series: 10 and 16 bar
    # (ISO 4427-1), PMA = PFA for PE (no surge allowance above PN, conservative)
    md = (sizing_report / "report.md").read_text(encoding="utf-8")
    rows = _md_table(md, "### Best feasible candidates: hydraulics and pressure")
    walls = {"500 SDR 17": 29.7, "560 SDR 17": 33.2, "630 SDR 17": 37.4, "500 SDR 11": 45.4,
             "560 SDR 11": 50.8}
    rho_g = water_12c.rho * G_N
    bulk = water_12c.rho * water_12c.w ** 2
    checked = 0
    for row in rows:
        if row["material"] != "pe100":
            continue
        od, e = float(row["size"].split()[0]), walls[row["size"]]
        sdr = int(row["size"].split()[-1])
        d = (od - 2 * e) / 1000.0
        q, q_peak = 520 / 3600, 520 / 3600 * 1.012 ** 39
        h, head, power = _pe_power_kw(q, od, e, water_12c)
        head_max = _pe_power_kw(q_peak, od, e, water_12c)[1]
        v_peak = q_peak / (math.pi * d * d / 4)
        ee, dd, nu = e / 1000.0, d, 0.45
        c1 = 2 * ee / dd * (1 + nu) + (1 - nu * nu) * dd / (dd + ee)
        a = math.sqrt(bulk / water_12c.rho) / math.sqrt(1 + c1 * bulk * dd / (1.1e9 * ee))
        pn = {17: 20 * 10 / (1.25 * 16), 11: 20 * 10 / (1.25 * 10)}[sdr]   # 10.0, 16.0
        hand = {"velocity \\[m/s\\]": (q / (math.pi * d * d / 4), 2),
                "peak velocity \\[m/s\\]": (v_peak, 2), "head loss \\[m\\]": (h, 2),
                "pump head \\[m\\]": (head, 1), "electrical power \\[kW\\]": (power, 1),
                "operating \\[bar\\]": (rho_g * head_max / 1e5, 1),
                "PFA \\[bar\\]": (pn, 1),
                "MDP \\[bar\\]": (rho_g * (head_max + a * v_peak / G_N) / 1e5, 1),
                "PMA \\[bar\\]": (pn, 1)}
        for col, (value, places) in hand.items():
            assert abs(_num(row[col]) - value) <= 0.5 * 10**-places + 1e-9, (row["size"], col)
        checked += 1
    assert checked == 5


@pytest.mark.reference
def test_printed_summary_of_the_chosen_pipe_by_hand(sizing_report):
    # the summary's line "EAC ...; present value ... = pipe ..., pump station ..., energy ...,
    # maintenance ..., station renewals ..., residual value ..." against the chosen pipe's
    # present values written out by hand (tests/test_plots.py, _hand_pv_of_the_chosen_pipe:
    # EN 12201-2 dimensions, iapws water, mpmath Colebrook, explicit discounted sums, the
    # capital recovery factor), each printed to the unit
    from .test_plots import _hand_pv_of_the_chosen_pipe

    md = (sizing_report / "report.md").read_text(encoding="utf-8")
    m = re.search(r"EAC ([\d,]+) EUR/yr; present value ([\d,]+) EUR = pipe ([\d,]+), pump "
                  r"station ([\d,]+), energy ([\d,]+), maintenance ([\d,]+), station renewals "
                  r"([\d,]+), residual value (-[\d,]+)", md)
    assert m is not None
    hand = _hand_pv_of_the_chosen_pipe()
    want = [hand["eac"], hand["pv_total"], hand["capex_pipe"], hand["pv_pump_station"],
            hand["pv_energy"], hand["pv_maintenance"], hand["pv_replacement"],
            -hand["pv_residual"]]
    for printed, value in zip(m.groups(), want, strict=True):
        assert abs(float(printed.replace(",", "")) - value) <= 0.5 + 1e-7 * abs(value)
    assert "Best: pe100 500 SDR 17 (inner diameter 440.6 mm)" in md
