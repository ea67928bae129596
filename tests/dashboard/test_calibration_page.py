"""Dashboard: the Calibration page shows the demo's calibration and puts its table to use."""

from __future__ import annotations

from pathlib import Path

from streamlit.testing.v1 import AppTest

from trimlog.input.profile import parse_profile

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
TIMEOUT = 180


def test_calibration_page_and_one_click_to_use_the_table():
    at = AppTest.from_file(APP, default_timeout=TIMEOUT)
    at.run()
    at.sidebar.radio(key="page").set_value("Calibration").run()
    assert not at.exception, at.exception
    speeds = at.dataframe[0].value
    assert list(speeds["KIAS"].round()) == [55, 65, 75, 85, 95, 105, 115, 125, 135]
    assert any("Estimates, not an approval" in w.value for w in at.warning)
    # a different profile table in use, then one click puts the calibration's in
    text = at.session_state.profile_text
    start, end = text.index("[airspeed_calibration]"), text.index("[logger]")
    at.session_state.profile_text = text[:start] + text[end:]
    at.run()
    at.button(key="cal_use").click().run()
    assert not at.exception, at.exception
    profile = parse_profile(at.session_state.profile_text, source="dashboard")
    table = at.dataframe[1].value
    assert list(profile.position_error_ias_kt) == list(table["IAS kt"])
    assert at.session_state.profile_source.endswith("(calibrated)")
    assert any("re-analyses" in s.value for s in at.success)
