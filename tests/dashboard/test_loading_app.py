"""Dashboard: a saved flight saved again with another loading sheet (issue 13).

The refusal names what differs and offers the replacement; one click replaces the sheet.
Data: the invented demo flights of sample_logs/.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from trimlog.history import service
from trimlog.history.store import open_store

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"


@pytest.fixture(autouse=True)
def _history_db(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "history.sqlite"))


def _run(at: AppTest) -> AppTest:
    at.run()
    assert not at.exception, at.exception
    return at


def _go(at: AppTest, page: str) -> AppTest:
    at.sidebar.radio(key="page").set_value(page)
    return _run(at)


def test_saving_a_saved_flight_with_another_sheet_is_refused_then_replaced(tmp_path):
    with open_store(tmp_path / "history.sqlite") as store:
        service.import_log(store, SAMPLES / "flight2.csv", profile_text=PROFILE.read_text(),
                           profile_source=str(PROFILE))
    sheet = (SAMPLES / "flight2.loading.toml").read_text().replace('cg = "69.7 in"',
                                                                     'cg = "70.9 in"')
    at = _go(_run(AppTest.from_file(APP, default_timeout=180)), "Flights")
    at.toggle(key="use_demo").set_value(False)
    at.file_uploader[0].set_value([
        ("flight2.csv", (SAMPLES / "flight2.csv").read_bytes(), "text/csv"),
        ("flight2.loading.toml", sheet.encode(), "application/toml")])
    _go(_run(at), "History")
    next(b for b in at.button if b.label.startswith("Save the 1 flight")).click()
    _run(at)
    errors = " ".join(e.value for e in at.error).replace("\\", "")
    assert "takeoff CG from 69.7 in to 70.9 in" in errors and "Nothing changed" in errors
    at.button(key="replace_sheets").click()
    _run(at)
    assert any("replaced by 'flight2.loading.toml'" in i.value.replace("\\", "")
               for i in at.info), [i.value for i in at.info]
    with open_store(tmp_path / "history.sqlite") as store:
        (record,) = store.flights(store.aircraft_list()[0].id)
        assert 'cg = "70.9 in"' in record.loading["sheet_text"]
