"""A real-browser test: the explorer served by Voilà on loopback, driven in headless Chromium.

Skips, with the reason, only when no browser (Debian's chromium) or no Playwright/Voilà can be
had. The screenshot is kept in ``test-artifacts/explorer_browser.png``.
"""

from __future__ import annotations

import os
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "tests" / "data" / "explorer_browser.ipynb"
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

pytestmark = pytest.mark.skipif(CHROMIUM is None,
                                reason="no Chromium browser on this machine (Debian package "
                                       "'chromium'; .ci/run installs it)")


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture()
def voila_url(tmp_path):
    pytest.importorskip("voila", reason="Voila is not installed (pip install voila)")
    port = _free_port()
    env = {**os.environ, "MPLBACKEND": "module://matplotlib_inline.backend_inline"}
    proc = subprocess.Popen(
        [sys.executable, "-m", "voila", "--no-browser", f"--port={port}",
         "--Voila.ip=127.0.0.1", "--VoilaConfiguration.show_tracebacks=True", str(NOTEBOOK)],
        stdout=(tmp_path / "voila.log").open("w"), stderr=subprocess.STDOUT, env=env,
        cwd=tmp_path)
    url = f"http://127.0.0.1:{port}/"
    deadline = time.monotonic() + 120
    while True:  # wait for the port to listen (a GET would start a notebook run each time)
        try:
            socket.create_connection(("127.0.0.1", port), timeout=2).close()
            break
        except OSError:
            if proc.poll() is not None:
                pytest.fail("Voila stopped: " + (tmp_path / "voila.log").read_text())
            if time.monotonic() > deadline:
                proc.kill()
                pytest.fail("Voila did not listen within 120 s")
            time.sleep(0.5)
    # one full render first: a fresh environment pays its first-import costs here, once
    try:
        urllib.request.urlopen(url, timeout=900).read()
    except OSError as exc:
        proc.kill()
        pytest.fail(f"Voila did not render the notebook: {exc}; "
                    + (tmp_path / "voila.log").read_text())
    yield url
    proc.terminate()
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        proc.kill()


def test_explorer_responds_in_a_real_browser(voila_url):
    sync_api = pytest.importorskip("playwright.sync_api",
                                   reason="Playwright is not installed (pip install playwright)")
    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(
            executable_path=CHROMIUM, headless=True,
            args=["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update",
                  "--disable-sync"])
        page = browser.new_page(viewport={"width": 1500, "height": 1000})
        # offline by design: anything not on loopback is refused at once, never waited for
        page.route("**/*", lambda route: route.continue_()
                   if route.request.url.startswith(("http://127.0.0.1", "ws://127.0.0.1"))
                   else route.abort())
        page.goto(voila_url, timeout=600_000, wait_until="domcontentloaded")
        image = page.locator(".widget-output img").first
        image.wait_for(timeout=600_000)
        before = image.get_attribute("src")
        status_before = page.locator(".widget-html").first.inner_text()
        readout = page.locator(".widget-readout").first      # the energy-price control
        value_before = readout.inner_text()
        handle = page.locator(".noUi-handle").first
        handle.click()                  # the slider takes the keyboard, as a user's would
        for _ in range(5):
            page.keyboard.press("PageUp")
        deadline = time.monotonic() + 60
        after = before
        while time.monotonic() < deadline and after == before:
            page.wait_for_timeout(250)
            current = page.locator(".widget-output img").first
            after = current.get_attribute("src") if current.count() else before
        ARTIFACTS.mkdir(exist_ok=True)
        page.screenshot(path=str(ARTIFACTS / "explorer_browser.png"), full_page=True)
        value_after = page.locator(".widget-readout").first.inner_text()
        browser.close()
    assert value_after != value_before, "the energy-price slider did not move"
    assert after != before, "the figure did not change after the energy price was moved"
    assert status_before
