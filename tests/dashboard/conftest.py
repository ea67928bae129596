"""Shared set-up of the dashboard tests: every test gets its own history database."""

from __future__ import annotations

import pytest


@pytest.fixture(autouse=True)
def _history_db(tmp_path, monkeypatch):
    """A history of the test's own (TRIMLOG_DB), so no test sees another's saved flights."""
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "history.sqlite"))
