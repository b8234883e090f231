"""A real-browser test: the explorer served by Voilà on loopback, driven in headless Chromium.

Skips, with the reason, only when no browser (Debian's chromium) or no Playwright/Voilà can be
had. The screenshot is kept in ``test-artifacts/explorer_browser.png``.

Hard overall deadline: the whole test, server start included, has :data:`DEADLINE` seconds.
Every wait takes what is left of it; a watchdog thread kills the Voilà server and its kernels
when it runs out (so a hung read fails instead of hanging), and ``faulthandler`` dumps every
thread's stack a minute later and ends the process as a last resort. The server and its
kernels are always killed in a ``finally``, by process group and by walking /proc for children.
"""

from __future__ import annotations

import faulthandler
import os
import shutil
import signal
import socket
import subprocess
import sys
import threading
import time
import urllib.request
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
NOTEBOOK = ROOT / "tests" / "data" / "explorer_browser.ipynb"
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM = shutil.which("chromium") or shutil.which("chromium-browser")

#: seconds for the whole test: a first render takes half a minute on an idle machine and several
#: minutes on a loaded one (a fresh environment pays its first imports then)
DEADLINE = float(os.environ.get("PIPEOPT_BROWSER_DEADLINE", "900"))

pytestmark = [pytest.mark.slow,
              pytest.mark.skipif(CHROMIUM is None,
                                 reason="no Chromium browser on this machine (Debian package "
                                        "'chromium'; .ci/run installs it)")]


class Budget:
    """What is left of the overall deadline."""

    def __init__(self, seconds: float) -> None:
        self.end = time.monotonic() + seconds

    def left(self, floor: float = 1.0) -> float:
        remaining = self.end - time.monotonic()
        if remaining <= 0:
            pytest.fail(f"the browser test ran past its {DEADLINE:g} s deadline")
        return max(remaining, floor)


def _descendants(pid: int) -> list[int]:
    """Every process below ``pid`` (children, grandchildren, ...), read from /proc."""
    children: dict[int, list[int]] = {}
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
            children.setdefault(int(fields[1]), []).append(int(stat.parent.name))
        except (OSError, IndexError, ValueError):
            continue
    out, todo = [], [pid]
    while todo:
        for child in children.get(todo.pop(), []):
            out.append(child)
            todo.append(child)
    return out


def _kill_server(proc: subprocess.Popen) -> None:
    """Kill the Voila server, its process group and every process below it (its kernels)."""
    pids = _descendants(proc.pid)
    for kill in (lambda: os.killpg(proc.pid, signal.SIGKILL),
                 *[(lambda p=p: os.kill(p, signal.SIGKILL)) for p in pids]):
        try:
            kill()
        except (ProcessLookupError, PermissionError):
            pass
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        pass


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture()
def budget():
    """The overall deadline, with a watchdog and a last-resort stack dump."""
    b = Budget(DEADLINE)
    faulthandler.dump_traceback_later(DEADLINE + 60, exit=True)
    try:
        yield b
    finally:
        faulthandler.cancel_dump_traceback_later()


@pytest.fixture()
def voila_url(tmp_path, budget):
    pytest.importorskip("voila", reason="Voila is not installed (pip install voila)")
    port = _free_port()
    env = {**os.environ, "MPLBACKEND": "module://matplotlib_inline.backend_inline"}
    log = tmp_path / "voila.log"
    proc = subprocess.Popen(
        [sys.executable, "-m", "voila", "--no-browser", f"--port={port}",
         "--Voila.ip=127.0.0.1", "--VoilaConfiguration.show_tracebacks=True", str(NOTEBOOK)],
        stdout=log.open("w"), stderr=subprocess.STDOUT, env=env, cwd=tmp_path,
        start_new_session=True)  # its own process group, killed as one
    watchdog = threading.Timer(DEADLINE, _kill_server, args=(proc,))
    watchdog.daemon = True
    watchdog.start()
    try:
        url = f"http://127.0.0.1:{port}/"
        while True:  # wait for the port to listen (a GET would start a notebook run each time)
            try:
                socket.create_connection(("127.0.0.1", port), timeout=2).close()
                break
            except OSError:
                if proc.poll() is not None:
                    pytest.fail("Voila stopped: " + log.read_text())
                budget.left()
                time.sleep(0.5)
        # one full render first: a fresh environment pays its first-import costs here, once;
        # in a thread, so that the wait is bounded by the deadline, not by each socket read
        result: dict = {}

        def render() -> None:
            try:
                urllib.request.urlopen(url, timeout=budget.left()).read()
                result["ok"] = True
            except OSError as exc:
                result["error"] = exc

        reader = threading.Thread(target=render, daemon=True)
        reader.start()
        reader.join(budget.left())
        if not result.get("ok"):
            pytest.fail(f"Voila did not render the notebook within the deadline: "
                        f"{result.get('error', 'timed out')}; " + log.read_text()[-3000:])
        yield url
    finally:
        watchdog.cancel()
        _kill_server(proc)


def test_explorer_responds_in_a_real_browser(voila_url, budget):
    sync_api = pytest.importorskip("playwright.sync_api",
                                   reason="Playwright is not installed (pip install playwright)")

    def ms() -> float:  # every Playwright wait takes what is left of the deadline
        return budget.left() * 1000.0

    with sync_api.sync_playwright() as pw:
        browser = pw.chromium.launch(
            executable_path=CHROMIUM, headless=True, timeout=ms(),
            args=["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update",
                  "--disable-sync"])
        try:
            page = browser.new_page(viewport={"width": 1500, "height": 1000})
            # offline by design: anything not on loopback is refused at once, never waited for
            page.route("**/*", lambda route: route.continue_()
                       if route.request.url.startswith(("http://127.0.0.1", "ws://127.0.0.1"))
                       else route.abort())
            page.set_default_timeout(ms())
            page.goto(voila_url, timeout=ms(), wait_until="domcontentloaded")
            image = page.locator(".widget-output img").first
            image.wait_for(timeout=ms())
            before = image.get_attribute("src", timeout=ms())
            status_before = page.locator(".widget-html", has_text="Best:").first.inner_text(
                timeout=ms())
            # every control's label whole: none cut off with an ellipsis
            cut = page.evaluate("() => Array.from(document.querySelectorAll('.widget-label'))"
                                ".filter(e => e.scrollWidth > e.clientWidth + 1)"
                                ".map(e => e.textContent)")
            labels = page.evaluate("() => Array.from(document.querySelectorAll("
                                   "'.widget-label')).map(e => e.textContent)")
            readout = page.locator(".widget-readout").first      # the energy-price control
            value_before = readout.inner_text(timeout=ms())
            handle = page.locator(".noUi-handle").first
            handle.click(timeout=ms())      # the slider takes the keyboard, as a user's would
            for _ in range(5):
                page.keyboard.press("PageUp")
            deadline = min(time.monotonic() + 60, budget.end)
            after = before
            while time.monotonic() < deadline and after == before:
                page.wait_for_timeout(250)
                current = page.locator(".widget-output img").first
                after = current.get_attribute("src", timeout=ms()) if current.count() else before
            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / "explorer_browser.png"), full_page=True,
                            timeout=ms())
            value_after = page.locator(".widget-readout").first.inner_text(timeout=ms())
        finally:
            browser.close()
    # the page showed the explorer's status line, and moving the control changed the figure
    assert "EAC" in status_before and "/yr" in status_before
    assert "wire-to-water efficiency [-]" in labels and cut == [], cut
    assert value_after != value_before, "the energy-price slider did not move"
    assert after != before, "the figure did not change after the energy price was moved"
