"""The dashboard in a real browser: Debian's chromium driven by Python playwright.

Starts ``streamlit run app.py`` on a free loopback port, uploads the demo logs and
loading sheets through the page's file input, waits for the neutral point and the
shim recommendation, checks that the estimate statement is on screen without scrolling
at 1366x768 and the flight-test cautions are on the page, and keeps a screenshot in
test-artifacts/.  The expected neutral point comes from calling the
package on the same files (invented demo data).

Then every page at 1366x768 and at 900 px wide: no metric tile, widget label, button or
HTML table header may have its text cut short (scrollWidth over clientWidth with the
overflow hidden, or a text-overflow ellipsis engaged); a whole-page screenshot of each
page at each width is kept in test-artifacts/.  Tables drawn by Streamlit's data grid
are canvases (no text in the page to measure): their headers are kept short instead.
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


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    # One dashboard for the module's tests: the later ones find the demo analysed already.
    _need_chromium()
    tmp_path = tmp_path_factory.mktemp("dashboard")
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
            page.set_default_timeout(WAIT_MS)  # a loaded machine can take over 30 s to start
            # A hangar PC may have no network: nothing the dashboard shows may come from
            # elsewhere (a Material icon as the page icon was fetched from a font server).
            outside = []
            page.on("request", lambda r: outside.append(r.url) if r.url.split("/")[0] in
                    ("http:", "https:") and not r.url.startswith(server) else None)
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
            assert outside == [], f"requests that left the dashboard's server: {outside}"
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


#: What must never be cut short on screen: metric tiles (label, value, caption beside it),
#: button and tab texts, table headers drawn as HTML, widget labels.
CLIPPABLE = ", ".join([
    "[data-testid=stMetricLabel]", "[data-testid=stMetricValue]",
    "[data-testid=stMetricDelta]", "button", "[data-testid=stWidgetLabel]",
    "[data-testid=stTable] th", "[data-testid=stMarkdownContainer] th",
    "[data-testid=stCaptionContainer]", "[role=tab]",
])

#: JavaScript: every element (or a descendant) whose text overflows its box, or whose
#: text-overflow ellipsis is engaged; one line each: the selector hit, its text, the sizes.
FIND_CLIPPED = """(selector) => {
  const out = [];
  const clipped = (e) => {
    const style = getComputedStyle(e);
    if (style.display === 'none' || style.visibility === 'hidden') return false;
    if (e.getClientRects().length === 0) return false;
    const wide = e.scrollWidth > e.clientWidth + 1;
    const tall = e.scrollHeight > e.clientHeight + 1 && style.overflowY !== 'visible'
                 && style.overflowY !== 'auto' && style.overflowY !== 'scroll';
    const hides = style.overflowX !== 'visible' || style.textOverflow === 'ellipsis';
    return (wide && hides) || (tall && style.overflowY === 'hidden');
  };
  // a typed value cut short inside its field (the text of an input is not textContent)
  for (const e of document.querySelectorAll('input[type=text], input[type=number]')) {
    if (e.getClientRects().length && e.value && e.scrollWidth > e.clientWidth + 1) {
      out.push(`input '${e.getAttribute('aria-label') || ''}': '${e.value}' (${
        e.scrollWidth} in ${e.clientWidth})`);
    }
  }
  for (const root of document.querySelectorAll(selector)) {
    for (const e of [root, ...root.querySelectorAll('*')]) {
      if (!e.textContent.trim() || !clipped(e)) continue;
      out.push(`${root.getAttribute('data-testid') || root.tagName}: '${
        e.textContent.trim().slice(0, 60)}' (${e.scrollWidth}x${e.scrollHeight} in ${
        e.clientWidth}x${e.clientHeight})`);
      break;
    }
  }
  return out;
}"""


def _clipped(page) -> list[str]:
    return page.evaluate(FIND_CLIPPED, CLIPPABLE)


def _full_page_shot(page, path: Path) -> None:
    """A screenshot of the whole page: Streamlit scrolls its main block, not the window."""
    size = page.viewport_size
    tall = page.evaluate("() => Math.max(...[...document.querySelectorAll("
                         "'[data-testid=stMain], [data-testid=stAppViewContainer]')]"
                         ".map(e => e.scrollHeight))")
    page.set_viewport_size({"width": size["width"], "height": min(int(tall) + 40, 16000)})
    page.wait_for_timeout(1200)  # widgets drawn lazily as they come into view
    page.screenshot(path=str(path))
    page.set_viewport_size(size)


#: The widths checked: a common laptop screen and a narrow window (issue 20).
WIDTHS = ((1366, 768), (900, 900))
PAGES = ("Results", "Aircraft", "Flights", "Points", "History")


def test_nothing_is_cut_short_on_any_page_at_1366_and_900_px(server):
    """Every page of the demo at both widths: no tile, label or button text cut short.

    A screenshot of each page at each width is kept in test-artifacts/ (CI keeps them).
    """
    from playwright.sync_api import expect, sync_playwright

    found: dict[str, list[str]] = {}
    with sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=str(CHROMIUM), headless=True,
                                     args=CHROMIUM_ARGS)
        try:
            for width, height in WIDTHS:
                page = browser.new_page(viewport={"width": width, "height": height})
                page.set_default_timeout(WAIT_MS)
                page.goto(server)
                metric = page.get_by_test_id("stMetric").filter(
                    has_text="Stick-fixed neutral point")
                expect(metric.first).to_be_visible(timeout=WAIT_MS)
                ARTIFACTS.mkdir(exist_ok=True)
                for name in PAGES:
                    t0 = time.perf_counter()
                    if name != "Results":
                        page.get_by_test_id("stSidebar").get_by_text(name, exact=True).click()
                        expect(page.get_by_role("heading", name=name).first).to_be_visible(
                            timeout=WAIT_MS)
                    # the page has finished running (Streamlit's running badge is gone)
                    expect(page.get_by_test_id("stStatusWidget")).to_have_count(
                        0, timeout=WAIT_MS)
                    page.wait_for_timeout(300)
                    if clipped := _clipped(page):
                        found[f"{name} at {width} px"] = clipped
                    t1 = time.perf_counter()
                    _full_page_shot(page, ARTIFACTS / f"dashboard-{name.lower()}-{width}.png")
                    print(f"browser: {name} at {width} px shown and checked in {t1 - t0:.1f} s, "
                          f"screenshot {time.perf_counter() - t1:.1f} s")
                page.close()
        finally:
            browser.close()
    assert not found, f"text cut short: {found}"
