"""The dashboard through Streamlit's AppTest: the pages run, show the package's numbers,
show a bad file's error, react to an excluded point and lose nothing on concurrent saves.

Expected numbers come from calling :func:`trimlog.pipeline.chain.analyze` here on the same demo
files (sample_logs/, invented data of known truth); the page must show exactly those.
"""

from __future__ import annotations

import re
import threading
from pathlib import Path

import pytest
from apptest_steps import go as _go
from apptest_steps import start as _app
from streamlit.testing.v1 import AppTest

from trimlog import cautions
from trimlog.errors import TrimlogError
from trimlog.history import store
from trimlog.input.logs import read_log
from trimlog.input.profile import parse_profile
from trimlog.pipeline import chain as analysis
from trimlog.pipeline.points import FLAG_TEXT

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"
TIMEOUT = 180


@pytest.fixture(scope="module")
def demo_analysis():
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = []
    for log in sorted(SAMPLES.glob("flight*.csv")):
        flights.extend(analysis.load_flight_file(log, profile))
    return profile, flights, analysis.analyze(flights, profile)


def _metrics(at: AppTest) -> dict[str, str]:
    return {m.label: m.value for m in at.metric}


def _plain(markdown: str) -> str:
    """The text a reader sees: the page escapes markdown marks in messages and names."""
    return re.sub(r"\\(.)", r"\1", markdown)


def _texts(at: AppTest) -> str:
    parts = [e.value for kind in ("markdown", "caption", "warning", "info", "error", "success")
             for e in getattr(at, kind)]
    return _plain("\n".join(str(p) for p in parts))


def _errors(at: AppTest) -> list[str]:
    return [_plain(e.value) for e in at.error]


def _upload(at: AppTest, files: list[tuple[str, bytes]]) -> AppTest:
    at.file_uploader[0].set_value([(name, raw, "text/csv") for name, raw in files])
    at.run()
    assert not at.exception, at.exception
    return at


def _table(at: AppTest, column: str):
    # Results shows its small tables as static tables (st.table), other pages as grids.
    return next(d.value for d in [*at.table, *at.dataframe] if column in d.value.columns)


def _sample(name: str) -> tuple[str, bytes]:
    return name, (SAMPLES / name).read_bytes()


def test_every_page_runs_on_the_demo_data():
    at = _app()
    for page in ("Aircraft", "Flights", "Points", "History", "Results"):
        _go(at, page)
        assert not at.error, [e.value for e in at.error]


def test_results_show_the_package_numbers(demo_analysis):
    _, _, a = demo_analysis
    s = a.primary.stability
    at = _app()
    shown = _metrics(at)
    assert shown["Stick-fixed neutral point"] == f"{s.stick_fixed.neutral_point.pct_mac:.1f} %MAC"
    assert shown["Stick-free neutral point"] == f"{s.stick_free.neutral_point.pct_mac:.1f} %MAC"
    assert shown["Stick-fixed, two-stage check"] == (
        f"{s.stick_fixed_two_stage.neutral_point.pct_mac:.1f} %MAC")
    aft = next(m for m in s.margins if m.label == "aft CG limit")
    limiting = (aft.stick_free_pct_mac if aft.limited_by == "stick_free_np"
                else aft.stick_fixed_pct_mac)
    assert aft.limited_by == "stick_free_np"  # the demo is limited by the stick-free point
    assert shown["Static margin at the aft limit"] == f"{limiting:.1f} %MAC"
    rec = a.primary.incidence
    # signed angles carry their words: the size in the tile, the sense beside it
    assert shown["Incidence change"] == f"{rec.change_deg:+.2f} deg"
    assert shown["Elevator at cruise"] == f"{rec.elevator_at_cruise_deg:+.2f} deg"
    assert rec.elevator_at_cruise_words and rec.change_words  # the core's words, in the JSON
    text = _texts(at)
    lo, hi = s.stick_fixed.neutral_point.ci95_pct_mac
    assert f"95 %: [{lo:.1f}, {hi:.1f}] %MAC" in text  # the one interval style
    assert rec.words in text
    # what to cut: the sheets to stack with their total, not a bare "nearest stock"
    sheets = " + ".join(f"{t:.3f} in" for t in rec.shim_stock_sheets)
    assert f"{sheets} = {rec.shim_stock_thickness_in:.3f} in" in text
    assert shown["Cut: sheets stacked"] == f"{rec.shim_stock_thickness_in:.3f} in"
    assert "Nearest shim stock" not in shown
    d = rec.shim_decimals_in  # the computed shim at the precision its interval supports
    assert f"Computed shim {rec.shim_thickness_in:.{d}f} in" in text
    assert "elevator at cruise after the shim: " in text
    # Every caution of the analysis is on the results page itself, not behind a click.
    for caution in a.cautions:
        assert caution in text, caution
    assert cautions.ESTIMATE_STATEMENT in text
    for w in s.warnings:
        assert w in text


def test_margin_and_gradient_tables_match(demo_analysis):
    _, _, a = demo_analysis
    at = _app()
    margins = _table(at, "At")
    labels = [m.label for m in a.primary.stability.margins]
    assert list(margins["At"]) == labels
    fixed = [f"{m.stick_fixed_pct_mac:.1f}" for m in a.primary.stability.margins]
    assert [cell.split(" ")[0] for cell in margins["Stick-fixed [%MAC]"]] == fixed
    gradients = _table(at, "Stick-force verdict")
    assert list(gradients["Stick-force verdict"]) == [
        g.stick_force_verdict for g in a.primary.stability.gradients]


def test_a_bad_file_shows_its_own_error_and_the_page_survives():
    bad = b"time_s,ias_kt\n0.0,100\n0.1,abc\n"
    with pytest.raises(TrimlogError) as expected:
        read_log(bad, name="garbled.csv")
    at = _go(_app(), "Flights")
    _upload(at, [("garbled.csv", bad)])
    errors = _errors(at)
    assert any(str(expected.value) in e for e in errors), errors
    _go(at, "Results")
    assert any(str(expected.value) in e for e in _errors(at))


def _button(at: AppTest, label: str):
    return next(b for b in at.button if b.label.startswith(label))


def test_a_bad_profile_is_refused_inline_and_the_old_one_kept():
    text = "[aircraft]\nname = 'x'\nwing_area = 'lots'\n"
    with pytest.raises(TrimlogError) as expected:
        parse_profile(text, source="x")
    at = _go(_app(), "Aircraft")
    at.text_area(key="profile_editor").set_value(text)
    _button(at, "Apply the edited text").click()
    at.run()
    assert not at.exception
    errors = _errors(at)
    assert any(e.startswith("Profile not changed") for e in errors), errors
    message = str(expected.value).split(": ", 1)[-1]  # the part after the source name
    assert any(message in e for e in errors), (message, errors)
    assert any("Tinkerfinch" in h.value for h in at.subheader)


def test_an_uploaded_profile_is_used():
    text = (SAMPLES / "tinkerfinch_tf2.toml").read_text().replace(
        "Tinkerfinch TF-2 DEMO-1", "Quillwing Q-1 (another invented aircraft)")
    at = _go(_app(), "Aircraft")
    upload = ("quillwing.toml", text.encode(), "text/plain")
    at.file_uploader(key="profile_upload").set_value(upload)
    at.run()
    _button(at, "Use the uploaded profile").click()
    at.run()
    assert not at.exception and not at.error
    assert any("Quillwing" in h.value for h in at.subheader)
    assert at.session_state["profile_source"] == "quillwing.toml"
    assert at.session_state["use_demo"] is False


def test_excluding_a_point_changes_the_result(demo_analysis):
    profile, flights, a = demo_analysis
    fewer = analysis.analyze(flights, profile, exclusions={("flight2", 1)})
    before, after = (x.primary.stability.stick_fixed.neutral_point.pct_mac for x in (a, fewer))
    assert f"{before:.2f}" != f"{after:.2f}"
    at = _go(_app(), "Points")
    assert at.selectbox(key="points_flight").value == 1  # the first time-series flight: flight2
    at.pills[0].unselect(1).run()  # one click on point 1 leaves it out
    assert not at.exception
    assert at.session_state["exclusions"] == {("flight2", 1)}
    _go(at, "Results")
    shown = _metrics(at)["Stick-fixed neutral point"]
    assert shown == f"{after:.1f} %MAC"
    assert "59 points used, 1 left out" in _texts(at)


def test_a_point_trimlog_left_out_can_be_ticked_back_in(demo_analysis, tmp_path):
    # the demo's typed card with point TP5 moved to 24.8 deg up elevator (synthetic): 0.2 deg
    # from the 25 deg up stop, so trimlog leaves it out itself (flag at_stop)
    name, raw = _sample("flight1_points.csv")
    card = raw.replace(b"TP5,60,5640,11,12.7,", b"TP5,60,5640,11,24.8,")
    assert card != raw
    profile, flights, _ = demo_analysis
    flights = [f for f in flights if f.source != str(SAMPLES / name)]
    flights += analysis.load_flight_bytes(card, name, profile)
    own = analysis.analyze(flights, profile)
    stopped = own.points.loc[own.points["flags"].str.contains("at_stop")]
    assert len(stopped) == 1
    flight, point = str(stopped["flight"].iloc[0]), int(stopped["point"].iloc[0])
    back = analysis.analyze(flights, profile, inclusions=[(flight, point)])
    assert back.primary.stability.n_included == own.primary.stability.n_included + 1

    at = _upload(_go(_app(), "Flights"), [(name, card)])  # replaces the demo's copy
    at.session_state["use_demo"] = True
    at.run()
    _go(at, "Points")
    at.selectbox(key="points_flight").set_value(
        next(i for i, label in enumerate(at.selectbox(key="points_flight").options)
             if label.startswith(flight + " ")))
    at.run()
    text = _texts(at)
    assert f"trimlog left out point(s) {point} itself" in text
    assert "cannot be ticked" not in text and "no effect" not in text
    assert f"**at_stop**: {FLAG_TEXT['at_stop']}" in "\n".join(c.value for c in at.caption)
    at.pills[0].select(point).run()  # one click fits it
    assert not at.exception, at.exception
    assert at.session_state["inclusions"] == {(flight, point)}
    assert at.session_state["exclusions"] == set()
    _go(at, "Results")
    fixed = back.primary.stability.stick_fixed.neutral_point
    # the point 12 deg off its trim line also widens the flight-level interval (it may no
    # longer be a usable estimate); the page shows what the analysis says either way
    assert _metrics(at)["Stick-fixed neutral point"] == (
        f"{fixed.pct_mac:.1f} %MAC" if fixed.identifiable else "not identifiable yet")
    assert f"{back.primary.stability.n_included} points used" in _texts(at)
    # saved with the flight (the card alone, to be quick), the choice is kept in the
    # history and used there
    at.session_state["use_demo"] = False
    _save(_go(at, "History"))
    with store.open_store(tmp_path / "history.sqlite") as st_:
        from trimlog.history import service as history

        again = history.analyze_history(st_)
    mine = again.points.loc[(again.points["flight"] == flight) & (again.points["point"] == point)]
    assert bool(mine["included"].iloc[0]) and "at_stop" in mine["flags"].iloc[0]
    at.session_state["use_demo"] = True
    # unticking it again goes back to trimlog's own choice, not to an exclusion
    _go(at, "Points")
    at.pills[0].unselect(point).run()
    assert at.session_state["inclusions"] == set() and at.session_state["exclusions"] == set()


def test_a_file_name_with_markdown_is_shown_literally():
    name = "[click](http://example.invalid) $x$.csv"
    at = _upload(_go(_app(), "Flights"), [(name, (SAMPLES / "flight1_points.csv").read_bytes())])
    cards = [m.value for m in at.markdown if "click" in m.value]
    assert cards and all("\\[click\\]" in c and "\\$x\\$" in c for c in cards), cards


def test_the_pdf_report_is_offered_for_download():
    at = _app()
    assert not [b for b in at.get("download_button") if b.proto.label == "Report (PDF)"]
    at.toggle(key="want_pdf").set_value(True)
    at.run()
    assert not at.exception and not at.error
    labels = [b.proto.label for b in at.get("download_button")]
    assert {"Results (JSON)", "Points (CSV)", "Report (PDF)"} <= set(labels)


def test_uploaded_flights_replace_the_demo_and_pair_with_their_sheets(demo_analysis):
    names = ["flight2.csv", "flight2.loading.toml", "flight4.csv", "flight4.loading.toml"]
    at = _upload(_go(_app(), "Flights"), [_sample(n) for n in names])
    assert at.session_state["use_demo"] is False
    _go(at, "Results")
    profile, _, _ = demo_analysis
    flights = [f for n in ("flight2.csv", "flight4.csv")
               for f in analysis.load_flight_file(SAMPLES / n, profile)]
    expected = analysis.analyze(flights, profile).primary.stability.stick_fixed.neutral_point
    assert _metrics(at)["Stick-fixed neutral point"] == f"{expected.pct_mac:.1f} %MAC"


def _save(at: AppTest) -> None:
    _button(at, "Save the").click()
    at.run()
    assert not at.exception, at.exception


def test_saved_flights_make_a_trend_and_a_next_step(tmp_path):
    at = _go(_app(), "History")
    at.session_state["exclusions"] = {("flight2", 1)}  # as the Points page leaves it
    at.run()
    _save(at)
    assert not at.error, [e.value for e in at.error]
    assert len(at.success) == 5
    with store.open_store(tmp_path / "history.sqlite") as st_:
        from trimlog.history import service as history

        trend = history.trend(st_).to_dict()
        (flight2,) = [f for f in trend["flights"] if f["name"] == "flight2"]
        assert flight2["n_included"] == flight2["n_points"] - 1
    steps = _table(at, "After flight")
    assert len(steps) == len(trend["trend"]) == 5
    nxt = trend["next_step"]
    if nxt["max_cg_pct_mac"] is not None:
        assert _metrics(at)["Most aft CG for the next flight"] == (
            f"{nxt['max_cg_pct_mac']:.1f} %MAC")
    assert nxt["reason"] in _texts(at)
    for caution in cautions.CG_EXPANSION:
        assert caution in _texts(at)
    _save(at)  # saving again stores nothing twice
    assert len(at.info) >= 5 and not at.success


def test_a_point_left_out_of_a_saved_flight_is_kept_in_the_history(tmp_path):
    at = _go(_app(), "History")
    _save(at)
    fid = at.selectbox(key="history_flight").value
    at.pills(key=f"history_used_{fid}").unselect(2).run()
    assert not at.exception
    with store.open_store(tmp_path / "history.sqlite") as st_:
        points = st_.flight_points(fid)
    assert list(points.loc[~points["included"].astype(bool), "point"]) == [2]
    assert _table(at, "Used").loc[0, "Used"] == len(points) - 1


def test_two_sessions_saving_at_once_lose_nothing(tmp_path):
    sessions = []
    for log in ("flight2", "flight3"):
        at = _upload(_go(_app(), "Flights"), [_sample(f"{log}.csv"),
                                               _sample(f"{log}.loading.toml")])
        sessions.append(_go(at, "History"))
    failures: list[BaseException] = []

    def save(at: AppTest) -> None:
        try:
            _save(at)
        except BaseException as exc:  # reported below, in the test's thread
            failures.append(exc)

    threads = [threading.Thread(target=save, args=(at,)) for at in sessions]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not failures, failures
    with store.open_store(tmp_path / "history.sqlite") as st_:
        (aircraft,) = st_.aircraft_list()
        stored = sorted(f.filename for f in st_.flights(aircraft.id))
    assert stored == ["flight2.csv", "flight3.csv"]


def test_results_show_the_maneuver_points(demo_analysis):
    _, _, a = demo_analysis
    m = a.maneuvering
    at = _app()
    shown = _metrics(at)
    assert shown["Stick-fixed maneuver point hm"] == f"{m.stick_fixed.pct_mac:.1f} %MAC"
    assert shown["Stick-free maneuver point hm'"] == f"{m.stick_free.pct_mac:.1f} %MAC"
    table = _table(at, "stick force per g [lbf/g]")
    assert list(table["Flight"]) == [g.flight for g in m.gradients]
    assert "23.155" in _texts(at)
