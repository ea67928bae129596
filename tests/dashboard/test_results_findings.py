"""Dashboard Results through AppTest: findings before notes, cautions once, the landing case.

The demo flights are invented (sample_logs/README.md); what the page must show is taken from
:func:`trimlog.pipeline.chain.analyze` run here on the same files.
"""

from __future__ import annotations

import re
from pathlib import Path

from streamlit.testing.v1 import AppTest

from trimlog import cautions, findings
from trimlog.findings import Severity
from trimlog.pipeline import chain as analysis

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"


def _plain(markdown: str) -> str:
    return re.sub(r"\\(.)", r"\1", markdown)


def _page_text(at: AppTest) -> str:
    """Everything a reader sees (markdown, captions, alerts, expander text)."""
    kinds = ("markdown", "caption", "warning", "info", "error", "success", "text")
    return _plain("\n".join(str(e.value) for kind in kinds for e in getattr(at, kind)))


def test_results_page_orders_findings_and_shows_each_caution_once():
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = []
    for log in sorted(p for p in SAMPLES.glob("flight*.csv") if p.is_file()):
        flights.extend(analysis.load_flight_file(log, profile))
    a = analysis.analyze(flights, profile)
    at = AppTest.from_file(APP, default_timeout=180)
    at.run()
    assert not at.exception, at.exception

    # the findings block: warnings before cautions, none of them a reading note
    assert not at.error  # st.error is for the user's mistakes only
    errors = [_plain(e.value) for e in at.warning if _plain(e.value).startswith("Warning: ")]
    warns = [_plain(e.value) for e in at.warning if _plain(e.value).startswith("Caution: ")]
    shown, reading = findings.split_for_display(a.findings, drop=a.cautions)
    def in_order(alerts: list[str], severity: Severity) -> bool:
        expected = list(dict.fromkeys(f.message for f in shown if f.severity is severity))
        return len(alerts) == len(expected) and all(
            m in a for a, m in zip(alerts, expected, strict=True))

    assert in_order(errors, Severity.WARNING) and errors
    assert in_order(warns, Severity.CAUTION) and warns
    assert any(f.code == "stability.authority.up_stop_reached" for f in shown)
    assert any("the up stop is reached before CLmax" in e for e in errors)  # the landing case
    assert all(not findings.is_reading_note(f) for f in shown)

    # reading notes: collapsed, in one expander, every one of them
    reading_boxes = [x for x in at.expander if "notes from reading the files" in x.label]
    assert len(reading_boxes) == 1
    inside = _plain("\n".join(t.value for t in reading_boxes[0].text))
    for f in reading:  # the page names the file without its folder
        assert f.message in inside

    # every caution of the result once on the page, the estimate statement included
    text = _page_text(at)
    from trimlog.views.shim_text import before_after_text

    assert before_after_text(a.primary.before_after) in text  # the elevator before/after
    for c in (*a.cautions, cautions.ESTIMATE_STATEMENT):
        assert text.count(c) == 1, (text.count(c), c)


def _go(at: AppTest, page: str) -> AppTest:
    at.sidebar.radio(key="page").set_value(page)
    at.run()
    assert not at.exception, at.exception
    return at


def test_history_and_calibration_pages_show_each_caution_once():
    at = AppTest.from_file(APP, default_timeout=180)
    at.run()
    _go(at, "History")
    next(b for b in at.button if b.label.startswith("Save the")).click()
    at.run()
    assert not at.exception, at.exception
    text = _page_text(at)
    shown = (cautions.ESTIMATE_STATEMENT, *cautions.GENERAL, *cautions.CG_EXPANSION,
             *cautions.INCIDENCE)
    for c in shown:
        assert text.count(c) == 1, (text.count(c), c)
    _go(at, "Calibration")
    assert _page_text(at).count(cautions.ESTIMATE_STATEMENT) == 1
