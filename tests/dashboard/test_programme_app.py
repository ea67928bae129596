"""The dashboard analyses the aircraft's programme (issue 13): saved flights plus a new upload,
the aircraft kept across sessions, a flight's facts keyed by its content.

Expected numbers come from :func:`trimlog.pipeline.chain.analyze` on the same demo files
(sample_logs/, invented data); the pages must show exactly those.
"""

from __future__ import annotations

import re
from pathlib import Path

from apptest_steps import go as _go
from apptest_steps import start as _app
from streamlit.testing.v1 import AppTest

from trimlog.history import service
from trimlog.history.store import open_store
from trimlog.pipeline import chain

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"


def _upload(at: AppTest, names: list[str]) -> AppTest:
    at.file_uploader[0].set_value(
        [(n, (SAMPLES / n).read_bytes(), "text/csv") for n in names])
    at.run()
    assert not at.exception, at.exception
    return at


def _texts(at: AppTest) -> str:
    parts = [e.value for kind in ("markdown", "caption", "info", "success")
             for e in getattr(at, kind)]
    return re.sub(r"\\(.)", r"\1", "\n".join(str(p) for p in parts))


def _metrics(at: AppTest) -> dict[str, str]:
    return {m.label: m.value for m in at.metric}


def _save_first(tmp_path, names):
    with open_store(tmp_path / "history.sqlite") as store:
        for n in names:
            service.import_log(store, SAMPLES / n, profile_text=PROFILE.read_text(),
                               profile_source=str(PROFILE))


def test_one_new_upload_gives_the_programme_result(tmp_path):
    _save_first(tmp_path, ["flight2.csv", "flight3.csv", "flight4.csv"])
    at = _upload(_go(_app(), "Flights"), ["flight5.csv", "flight5.loading.toml"])
    _go(at, "Results")
    assert not at.error, [e.value for e in at.error]
    profile = chain.load_profile(PROFILE)
    flights = [f for n in ("flight2.csv", "flight3.csv", "flight4.csv", "flight5.csv")
               for f in chain.load_flight_file(SAMPLES / n, profile)]
    expected = chain.analyze(flights, profile)
    np_ = expected.primary.stability.stick_fixed.neutral_point
    assert _metrics(at)["Stick-fixed neutral point"] == f"{np_.pct_mac:.1f} %MAC"
    text = _texts(at)
    assert "3 saved flight(s) from the history (flight2, flight3, flight4) and 1 new (flight5)" \
        in text
    rec = expected.primary.incidence
    assert _metrics(at)["Incidence change"] == f"{rec.change_deg:+.2f} deg"
    from trimlog.views.formatting import elevator_words, incidence_words

    # the sign in words beside the headline angles
    assert incidence_words(rec.change_deg) in text
    assert elevator_words(rec.elevator_at_cruise_deg) in text
    assert "Stabilizer incidence and shim" in [s.value for s in at.subheader]
    assert "Static margins" in [s.value for s in at.subheader]
    # one click saves the new flight
    next(b for b in at.button if b.label.startswith("Save the new flight")).click()
    at.run()
    with open_store(tmp_path / "history.sqlite") as store:
        assert len(store.flights(store.aircraft_list()[0].id)) == 4
    _go(at, "History")
    assert _metrics(at)["Incidence change"] == f"{rec.change_deg:+.2f} deg"  # shim on History


def test_the_aircraft_survives_a_new_session(tmp_path):
    text = PROFILE.read_text().replace("Tinkerfinch TF-2 DEMO-1", "Homebuilt X-9 (invented)")
    assert "Homebuilt X-9" in text
    at = _go(_app(), "Aircraft")
    at.text_area(key="profile_editor").set_value(text)
    next(b for b in at.button if b.label.startswith("Apply the edited text")).click()
    at.run()
    assert not at.exception
    fresh = _go(_app(), "Aircraft")  # a reload: a new session
    assert "Homebuilt X-9" in fresh.session_state["profile_text"]
    assert fresh.session_state["use_demo"] is False
    assert any("Homebuilt X-9" in s.value for s in fresh.subheader)


def test_first_visit_shows_the_demo(tmp_path):
    at = _app()
    assert at.session_state["use_demo"] is True
    assert not (tmp_path / "history.sqlite").exists()  # looking does not create a database


def test_a_flights_facts_are_keyed_by_its_content_not_its_name():
    at = _go(_app(), "Flights")  # the demo flights with their labels
    demo_label = at.session_state["labels"][
        at.session_state["demo_logs"]["flight2.csv"].digest]
    assert demo_label.startswith("flight 2:")
    # a flight of your own (not a demo file: other bytes), named like the demo's flight 2
    own = (SAMPLES / "flight3.csv").read_bytes().replace(b"flight 3", b"flight 7")
    at.file_uploader[0].set_value([("flight2.csv", own, "text/csv")])
    at.run()
    assert not at.exception
    values = [t.value for t in (*at.text_input, *at.text_area)]
    assert demo_label not in values
    assert not any("invented demo flight" in v for v in values)


def test_an_installed_wheel_without_sample_logs_still_opens_on_the_demo(tmp_path, monkeypatch):
    # an installed wheel has no sample_logs/ beside the package: the demo files are written
    from trimlog.dashboard import session

    monkeypatch.setattr(session, "DEMO_DIR", tmp_path / "no-such-folder")
    at = _app()
    assert sorted(at.session_state["demo_logs"]) == sorted(
        p.name for p in SAMPLES.glob("flight*.csv"))
    assert "Stick-fixed neutral point" in _metrics(at)


def test_declared_dependencies_and_floors():
    import tomllib

    project = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
    deps = {re.split(r"[<>=]", d)[0]: d for d in project["dependencies"]}
    assert "scipy" in deps  # imported by statistics/ (scipy.special, scipy.stats lazily)
    # st.html(unsafe_allow_javascript=...) first appears in streamlit 1.52.0 (absent in 1.51.0);
    # 1.56.0 is the first release whose requirements accept pandas 3 (the pandas floor; pip
    # refuses pandas 3.0.0 with streamlit 1.55.0), so the floor is 1.56
    assert deps["streamlit"] == "streamlit>=1.56"


def test_a_loading_sheet_made_on_the_page_is_read_like_a_file(tmp_path):
    import datetime as dt

    from trimlog.dashboard.loading_form import sheet_text
    from trimlog.input.loading_sheet import read_loading_sheet

    text = sheet_text("2", date=dt.date(2026, 5, 16), weight_lb=1585.0, cg="66.3 in",
                      fuel_gal=24.0, stab_setting="as rigged", stab_incidence_deg=-1.0,
                      cg_uncertainty="0.3 %MAC")
    sheet = read_loading_sheet(text.encode(), name="form")
    assert (sheet.date, sheet.takeoff_weight_lb, sheet.takeoff_cg_in) == (
        dt.date(2026, 5, 16), 1585.0, 66.3)
    assert (sheet.stab_setting, sheet.stab_incidence_deg, sheet.cg_uncertainty_pct_mac) == (
        "as rigged", -1.0, 0.3)
    at = _upload(_go(_app(), "Flights"), ["flight2.csv"])  # a log without its sheet
    digest = at.session_state["user_logs"]["flight2.csv"].digest
    at.date_input(key=f"sf_date_{digest}").set_value(dt.date(2026, 5, 16))
    at.number_input(key=f"sf_w_{digest}").set_value(1585.0)
    at.text_input(key=f"sf_cg_{digest}").set_value("66.3 in")
    at.number_input(key=f"sf_f_{digest}").set_value(24.0)
    at.text_input(key=f"sf_s_{digest}").set_value("as rigged")
    next(b for b in at.button if b.label == "Use this loading sheet").click()
    at.run()
    assert not at.exception, at.exception
    assert at.session_state["sheet_for"][digest] == "flight2.loading.toml"
    made = read_loading_sheet(at.session_state["user_sheets"]["flight2.loading.toml"].raw)
    assert made.date == dt.date(2026, 5, 16) and made.takeoff_cg_in == 66.3
