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


def test_the_weighing_arithmetic_matches_published_worked_examples():
    from trimlog.dashboard.weighing_form import weigh

    # EASA ECQB mass-and-balance question (tricycle aircraft weighed on jacks): nose jack
    # 6,488 kg at 161 in, each main jack 17,783 kg at 775 in -> 42,054 kg, CG 680.3 in aft of
    # the datum (atplquestions.com, "easa-ecqb-2020-atpl-question/mass-balance/7"; printed
    # to 1 kg and 0.1 in). The CG does not depend on the weight unit, so kg go in as typed.
    result, errors = weigh({"nose": (6488.0, None, 161.0), "left": (17783.0, None, 775.0),
                            "right": (17783.0, None, 775.0)}, {}, (None, None), 6.0)
    assert errors == {}
    assert result.weighing.empty.weight_lb == pytest.approx(42054.0, abs=0.5)
    assert result.weighing.empty.cg_in == pytest.approx(680.3, abs=0.05)
    # FAA nosewheel example: nosewheel F = 340 lb at L = -78 in from the main-wheel weighing
    # points, total W = 2,006 lb -> CG -13.2 in (13.2 in ahead of the mains). FAA weight-and-
    # balance handbook, "Electronic calculator" section (figure numbers from memory; values as
    # reproduced at flight-study.com, 2021); printed to 0.1 in. Here with a 12 lb chock tare.
    mains = (2006.0 - 340.0) / 2.0
    result, errors = weigh({"nose": (352.0, 12.0, -78.0), "left": (mains, 0.0, 0.0),
                            "right": (mains, None, 0.0)},
                           {"pilot": (170.0, 10.0)}, (20.0, 15.0), 6.0)
    assert errors == {}
    assert result.weighing.empty.cg_in == pytest.approx(-13.2, abs=0.05)
    # items on top, by the basic equation (FAA-H-8083-1B ch. 2), checked by hand:
    # (340 * -78 + 170 * 10 + 20 gal * 6 lb/gal * 15) / (2006 + 170 + 120)
    assert result.weighing.loaded.weight_lb == pytest.approx(2296.0)
    assert result.weighing.loaded.cg_in == pytest.approx(
        (340.0 * -78.0 + 1700.0 + 1800.0) / 2296.0)
    assert result.fuel_lb == pytest.approx(120.0)


def test_weighing_entries_that_cannot_be_used_are_named_by_field():
    from trimlog.dashboard.weighing_form import weigh

    result, errors = weigh({"nose": (340.0, 400.0, -78.0), "left": (None, None, 0.0),
                            "right": (830.0, 0.0, None)},
                           {"pilot": (None, 10.0), "baggage": (40.0, None)}, (12.0, None), 6.0)
    assert result is None
    assert set(errors) == {"nose.tare", "left.reading", "right.arm", "pilot.weight",
                           "baggage.arm", "fuel.arm"}
    assert "tare (400 lb)" in errors["nose.tare"]


def test_scale_readings_on_the_page_fill_the_loading_sheet(tmp_path):
    at = _go(_run(AppTest.from_file(APP, default_timeout=180)), "Flights")
    at.toggle(key="use_demo").set_value(False)
    at.file_uploader[0].set_value([
        ("flight2.csv", (SAMPLES / "flight2.csv").read_bytes(), "text/csv")])
    _run(at)
    d = at.session_state["user_logs"]["flight2.csv"].digest
    # invented weighing of the demo aircraft; a tare above its reading first
    for key, (reading, tare, arm) in {"nose": (300.0, 320.0, 20.0), "left": (560.0, 4.0, 75.0),
                                      "right": (556.0, 0.0, 75.0)}.items():
        at.number_input(key=f"wf_{key}_r_{d}").set_value(reading)
        at.number_input(key=f"wf_{key}_t_{d}").set_value(tare)
        at.number_input(key=f"wf_{key}_a_{d}").set_value(arm)
    at.number_input(key=f"wf_pilot_w_{d}").set_value(190.0)
    at.number_input(key=f"wf_pilot_a_{d}").set_value(72.0)
    at.number_input(key=f"wf_fuel_w_{d}").set_value(24.0)
    next(b for b in at.button if b.label == "Compute weight and CG").click()
    _run(at)
    errors = [e.value.replace("\\", "") for e in at.error]
    assert any("Nose or tail wheel: the tare (320 lb)" in e for e in errors), errors
    at.number_input(key=f"wf_nose_t_{d}").set_value(8.0)
    next(b for b in at.button if b.label == "Compute weight and CG").click()
    _run(at)
    assert not at.error, [e.value for e in at.error]
    # by hand: net 292 + 556 + 556 = 1404 lb; + 190 lb pilot + 24 gal * 6.0 lb/gal at the
    # profile's fuel arm of 62 in (sample_logs/tinkerfinch_tf2.toml, [fuel])
    weight = 292.0 + 556.0 + 556.0 + 190.0 + 144.0
    cg = (292.0 * 20.0 + 1112.0 * 75.0 + 190.0 * 72.0 + 144.0 * 62.0) / weight
    metrics = {m.label: m.value for m in at.metric}
    assert metrics["Takeoff, with the items"] == f"{weight:,.1f} lb"
    at.button(key=f"wf_use_{d}").click()
    _run(at)
    assert at.session_state[f"sf_w_{d}"] == pytest.approx(round(weight, 1))
    assert at.session_state[f"sf_cg_{d}"] == f"{cg:.2f} in"
    next(b for b in at.button if b.label == "Use this loading sheet").click()
    _run(at)
    from trimlog.input.loading_sheet import read_loading_sheet

    made = read_loading_sheet(at.session_state["user_sheets"]["flight2.loading.toml"].raw)
    assert made.takeoff_cg_in == pytest.approx(round(cg, 2))
    assert made.takeoff_fuel_gal == pytest.approx(24.0)
