"""A saved flight imported again with another loading sheet (issue 13): never silent.

The same log with a different sheet is refused, naming what differs, unless the user asks for
the new sheet; then the new sheet is used from now on, the earlier one is kept in the
flight's record, the point choices stay and the programme is renumbered by date.
Runs on both engines.  Data: the invented demo flights of sample_logs/.
"""

import shutil
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, main
from trimlog.errors import LoadingSheetChangedError
from trimlog.history import maneuver_choices, reimport, service
from trimlog.history.store import open_store
from trimlog.input.loading_sheet import read_loading_sheet
from trimlog.input.profile import parse_profile
from trimlog.pipeline import chain

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE_TEXT = (SAMPLES / "tinkerfinch_tf2.toml").read_text()
LOG = (SAMPLES / "flight2.csv").read_bytes()
SHEET = (SAMPLES / "flight2.loading.toml").read_text()
MAC_IN = 53.0  # sample_logs/tinkerfinch_tf2.toml, [geometry] mac


def _import(store, sheet: str | None, **kw):
    return service.import_flight(
        store, LOG, "flight2.csv", PROFILE_TEXT, profile_source="demo profile",
        loading_raw=None if sheet is None else sheet.encode(),
        loading_name=None if sheet is None else "flight2.loading.toml", **kw)


def _moved(text: str) -> str:
    """The demo sheet re-weighed: 15 lb heavier, CG 1.2 in further aft, flown a day later."""
    assert 'weight = "1585 lb"' in text and 'cg = "69.7 in"' in text
    return (text.replace('weight = "1585 lb"', 'weight = "1600 lb"')
            .replace('cg = "69.7 in"', 'cg = "70.9 in"')
            .replace("date = 2026-05-16", "date = 2026-05-17"))


def test_a_changed_sheet_is_refused_then_replaced_on_request(location, tmp_path):
    with open_store(location) as s:
        first = _import(s, SHEET)
        s.set_point_included(first.flight_id, 2, False)  # a choice the replacement must keep
        maneuver_choices.set_exclusion_reason(s, first.flight_id, 2, "turbulence")
        cg_before = service.flight_listing(s)[0]["cg_pct_mac"]
        with pytest.raises(LoadingSheetChangedError) as refused:
            _import(s, _moved(SHEET))
        text = str(refused.value)
        for change in ("takeoff weight from 1585 lb to 1600 lb",
                       "takeoff CG from 69.7 in to 70.9 in",
                       "date flown from 2026-05-16 to 2026-05-17", "--replace-sheet",
                       "Nothing changed"):
            assert change in text
        record = s.flight(first.flight_id)
        assert record.loading["sheet_text"] == SHEET  # nothing changed

        done = _import(s, _moved(SHEET), replace_sheet=True)
        assert not done.created and done.flight_id == first.flight_id
        assert "replaced" in done.message and "1600 lb" in done.message
        record = s.flight(first.flight_id)
        assert record.loading["sheet_text"] == _moved(SHEET)
        assert [e["sheet_text"] for e in record.loading[reimport.REPLACED]] == [SHEET]
        assert record.date.isoformat() == "2026-05-17"
        assert s.flight_points(first.flight_id)["included"].tolist()[1] is False
        assert maneuver_choices.reasons_of(record) == {2: "turbulence"}
        # the analyses use the new sheet: the flight's CG moved by the 1.2 in typed, in %MAC
        # of the 53 in MAC (less the share of the 15 lb added, which sits at the new CG)
        cg_after = service.flight_listing(s)[0]["cg_pct_mac"]
        assert cg_after - cg_before == pytest.approx(1.2 / MAC_IN * 100.0, abs=0.05)
        # the same sheet again: nothing to replace, said as before
        again = _import(s, _moved(SHEET))
        assert "nothing changed" in again.message
        exported = s.export(tmp_path / "export")
    # an export carries the earlier sheet, and a restore accepts it
    with open_store(tmp_path / "restored.sqlite") as r:
        r.import_export(tmp_path / "export")
        (back,) = r.flights(r.aircraft_list()[0].id)
        assert back.loading[reimport.REPLACED][0]["sheet_text"] == SHEET
    assert exported


def test_same_values_or_no_sheet_change_nothing_and_say_so(location):
    with open_store(location) as s:
        _import(s, SHEET)
        reformatted = "# weighed again, same figures\n" + SHEET.replace('"24.0 gal"',
                                                                          '"24 gal"')
        assert "nothing changed" in _import(s, reformatted).message
        bare = _import(s, None)
        assert "nothing changed" in bare.message
        assert "saved loading sheet 'flight2.loading.toml' stays" in bare.message


def test_a_later_date_renumbers_and_the_points_are_those_found_with_the_new_sheet(location):
    with open_store(location) as s:
        _import(s, SHEET)
        service.import_flight(s, (SAMPLES / "flight3.csv").read_bytes(), "flight3.csv",
                              PROFILE_TEXT, loading_raw=(SAMPLES / "flight3.loading.toml")
                              .read_bytes(), loading_name="flight3.loading.toml")
        aircraft = s.aircraft_list()[0].id
        assert [r.filename for r in s.flights(aircraft)] == ["flight2.csv", "flight3.csv"]
        fid = s.flights(aircraft)[0].id
        later = SHEET.replace("date = 2026-05-16", "date = 2026-07-01") + \
            '\n[fuel]\nflow = "30 gal/h"\n'
        done = _import(s, later, replace_sheet=True)
        assert (done.number, done.of) == (2, 2)
        assert [r.filename for r in s.flights(aircraft)] == ["flight3.csv", "flight2.csv"]
        # the stored points are those the new sheet gives (a fuel flow sets the fuel of each
        # point when the log has no fuel channel), point numbers unchanged
        fresh = chain.load_flight_bytes(LOG, "flight2.csv", parse_profile(PROFILE_TEXT),
                                        loading=read_loading_sheet(later.encode()))[0].points
        stored = s.flight_points(fid)
        assert stored["point"].tolist() == fresh["point"].tolist()
        assert stored["fuel_gal"].tolist() == pytest.approx(fresh["fuel_gal"].tolist())
        assert s.check() == []


def test_cli_refuses_with_exit_2_and_replaces_with_the_option(tmp_path, capsys):
    for name in ("flight2.csv", "flight2.loading.toml", "tinkerfinch_tf2.toml"):
        shutil.copy(SAMPLES / name, tmp_path / name)
    log, db = str(tmp_path / "flight2.csv"), str(tmp_path / "h.sqlite")
    profile = str(tmp_path / "tinkerfinch_tf2.toml")
    assert main(["import", log, "--aircraft", profile, "--db", db]) == EXIT_OK
    changed = tmp_path / "reweighed.loading.toml"
    changed.write_text(_moved(SHEET))
    capsys.readouterr()
    args = ["import", log, "--aircraft", profile, "--db", db, "--loading", f"{log}={changed}"]
    assert main(args) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert "takeoff CG from 69.7 in to 70.9 in" in err and "Traceback" not in err
    assert main([*args, "--replace-sheet"]) == EXIT_OK
    assert "replaced by 'reweighed.loading.toml'" in capsys.readouterr().out
