"""The PDF export: WeasyPrint (what ``--pdf`` uses) against headless Chromium, side by side.

Prints, for the demo sizing report, the time to make the PDF with WeasyPrint in the process
(import apart, then each print) and with Debian's headless Chromium as a whole process
(``chromium --headless --print-to-pdf``, what the export would cost a user with a browser and
no WeasyPrint), the pages and the bytes of each, and whether two prints give the same bytes.
Median of ``REPEATS`` runs taken in turns. Chromium is skipped, saying so, when not installed.

Run: ``python benchmarks/bench_pdf.py``
"""

from __future__ import annotations

import shutil
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

REPEATS = 5


def main() -> int:
    from pipeopt import SizingStudy
    from pipeopt.report import report_html

    page = report_html(SizingStudy.demo().run())
    t0 = time.perf_counter()
    from pipeopt.report import check_pdf, pdf_from_html

    check_pdf()
    imported = time.perf_counter() - t0
    chromium = shutil.which("chromium") or shutil.which("chromium-browser")
    weasy, chrome, outputs = [], [], {}
    with tempfile.TemporaryDirectory() as tmp:
        html_file = Path(tmp) / "report.html"
        html_file.write_text(page, encoding="utf-8")
        for _ in range(REPEATS):
            t0 = time.perf_counter()
            outputs.setdefault("weasyprint", []).append(pdf_from_html(page, "A4"))
            weasy.append(time.perf_counter() - t0)
            if chromium:
                out = Path(tmp) / "chromium.pdf"
                t0 = time.perf_counter()
                subprocess.run([chromium, "--headless", "--no-sandbox", "--disable-gpu",
                                "--no-pdf-header-footer", f"--print-to-pdf={out}",
                                html_file.as_uri()], capture_output=True, timeout=300,
                               check=True)
                chrome.append(time.perf_counter() - t0)
                outputs.setdefault("chromium", []).append(out.read_bytes())

    def pages(pdf: bytes) -> int:
        try:
            import pypdfium2
        except ImportError:
            return -1
        return len(pypdfium2.PdfDocument(pdf))

    print(f"demo sizing report, {len(page) / 1e6:.2f} MB of HTML; median of {REPEATS} runs")
    print(f"{'engine':<34}{'time':>10}{'pages':>8}{'bytes':>10}  same bytes twice")
    print(f"{'WeasyPrint, import (once)':<34}{imported:>9.2f}s")
    w = outputs["weasyprint"]
    print(f"{'WeasyPrint, print (in process)':<34}{statistics.median(weasy):>9.2f}s"
          f"{pages(w[0]):>8}{len(w[0]):>10}  {w[0] == w[1]}")
    if chromium:
        c = outputs["chromium"]
        print(f"{'Chromium, whole process':<34}{statistics.median(chrome):>9.2f}s"
              f"{pages(c[0]):>8}{len(c[0]):>10}  {c[0] == c[1]}")
        print(f"ratio Chromium / WeasyPrint print: "
              f"{statistics.median(chrome) / statistics.median(weasy):.2f}")
    else:
        print("Chromium: not installed (Debian package 'chromium'); skipped")
    return 0


if __name__ == "__main__":
    sys.exit(main())
