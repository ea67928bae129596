"""The dashboard in a real browser: Debian's chromium driven by Python playwright.

Starts ``streamlit run app.py`` on a free loopback port, uploads the demo logs and
loading sheets through the page's file input, waits for the neutral point and the
shim recommendation, checks that the estimate statement is on screen without scrolling
at 1366x768 and the flight-test cautions are on the page, and keeps a screenshot in
test-artifacts/.  The expected neutral point comes from calling the
package on the same files (invented demo data).
"""

from __future__ import annotations

import os
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

from trimlog import cautions
from trimlog.pipeline import chain as analysis

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_logs"
ARTIFACTS = ROOT / "test-artifacts"
CHROMIUM = Path("/usr/bin/chromium")
CHROMIUM_ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
                 "--disable-component-update", "--disable-sync", "--no-first-run"]
WAIT_MS = 120_000

pytestmark = pytest.mark.browser


def _need_chromium() -> None:
    if CHROMIUM.exists():
        return
    reason = f"{CHROMIUM} not found (install Debian's chromium: tests/install_system_packages.sh)"
    if os.environ.get("CI"):
        pytest.fail(f"in CI the browser test must run: {reason}")
    print(f"skipping the browser test: {reason}")
    pytest.skip(reason)


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture()
def server(tmp_path):
    _need_chromium()
    port = _free_port()
    env = {**os.environ, "TRIMLOG_DB": str(tmp_path / "history.sqlite")}
    log = (tmp_path / "streamlit.log").open("wb")
    proc = subprocess.Popen(
        [sys.executable, "-m", "streamlit", "run", str(ROOT / "app.py"),
         "--server.headless", "true", "--server.address", "127.0.0.1",
         "--server.port", str(port), "--server.maxUploadSize", "200",
         "--browser.gatherUsageStats", "false", "--server.fileWatcherType", "none"],
        cwd=ROOT, env=env, stdout=log, stderr=subprocess.STDOUT,
    )
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 90
        while True:
            try:
                with urllib.request.urlopen(f"{url}/_stcore/health", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if proc.poll() is not None or time.monotonic() > deadline:
                log.close()
                pytest.fail("the dashboard did not start:\n"
                            + (tmp_path / "streamlit.log").read_text(errors="replace"))
            time.sleep(0.5)
        yield url
    finally:
        proc.terminate()
        try:
            proc.wait(timeout=20)
        except subprocess.TimeoutExpired:
            proc.kill()
            proc.wait()
        log.close()


def _expected_neutral_point() -> str:
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = [f for log in sorted(SAMPLES.glob("flight*.csv"))
               for f in analysis.load_flight_file(log, profile)]
    fixed = analysis.analyze(flights, profile).primary.stability.stick_fixed.neutral_point
    return f"{fixed.pct_mac:.1f} %MAC"


def test_upload_logs_and_see_the_neutral_point_the_shim_and_the_cautions(server):
    from playwright.sync_api import expect, sync_playwright

    files = sorted(str(p) for p in SAMPLES.glob("flight*") if p.suffix in (".csv", ".toml"))
    expected = _expected_neutral_point()
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), headless=True,
                                     args=CHROMIUM_ARGS)
        try:
            # A common laptop screen: the estimate statement must be seen without scrolling.
            page = browser.new_page(viewport={"width": 1366, "height": 768})
            page.goto(server)
            sidebar = page.get_by_test_id("stSidebar")
            sidebar.get_by_text("Flights", exact=True).click()
            started = time.perf_counter()
            page.locator("input[type=file]").first.set_input_files(files)
            # The uploaded copies replace the demo flights.
            card = page.get_by_role("strong").filter(has_text="flight5.csv")
            expect(card).to_be_visible(timeout=WAIT_MS)
            expect(page.get_by_text("(demo)")).to_have_count(0, timeout=WAIT_MS)
            page.get_by_role("button", name="See the results").click()

            metric = page.get_by_test_id("stMetric").filter(has_text="Stick-fixed neutral point")
            expect(metric.first).to_contain_text(expected, timeout=WAIT_MS)
            # measured, not asserted (speed lives in the benchmarks)
            print(f"browser: upload of the demo logs to the neutral point on screen "
                  f"{time.perf_counter() - started:.1f} s")
            note = page.locator(".st-key-estimate")
            expect(note).to_contain_text(cautions.ESTIMATE_STATEMENT)
            ARTIFACTS.mkdir(exist_ok=True)
            page.screenshot(path=str(ARTIFACTS / "dashboard-results-1366x768.png"))
            expect(note).to_be_in_viewport()
            shim = page.locator(".st-key-shim")
            expect(shim).to_contain_text("Shim:", timeout=WAIT_MS)
            expect(shim).to_contain_text("Incidence change")
            cautions_box = page.locator(".st-key-cautions")
            expect(cautions_box).to_be_visible()
            for text in cautions.GENERAL:
                expect(cautions_box).to_contain_text(text)
            expect(page.get_by_text("Showing the invented demo aircraft")).to_have_count(0)
        finally:
            browser.close()
