"""Steps every AppTest of the dashboard takes: start the app, change page."""

from __future__ import annotations

from pathlib import Path

from streamlit.testing.v1 import AppTest

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
#: Seconds an AppTest run may take: a loaded 2-core machine needs well over the default.
TIMEOUT = 180


def start() -> AppTest:
    """The dashboard run once, with no exception."""
    at = AppTest.from_file(APP, default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, at.exception
    return at


def go(at: AppTest, page: str) -> AppTest:
    """Change to ``page`` in the sidebar and run, with no exception."""
    at.sidebar.radio(key="page").set_value(page)
    at.run()
    assert not at.exception, at.exception
    return at
