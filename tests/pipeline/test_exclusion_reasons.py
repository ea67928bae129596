"""Why a point is left out: kept with the point, in the history and in the JSON (demo data)."""

from __future__ import annotations

import json
from importlib import resources
from pathlib import Path

import jsonschema
import pytest

from trimlog.errors import InputFileError
from trimlog.history import service as history
from trimlog.history.maneuver_choices import REASONS_KEY, set_exclusion_reason
from trimlog.history.store import open_store
from trimlog.pipeline import chain
from trimlog.views.json_export import analysis_to_dict

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"


@pytest.fixture(scope="module")
def two_flights():
    profile = chain.load_profile(PROFILE)
    flights = [f for n in ("flight2.csv", "flight3.csv")
               for f in chain.load_flight_file(SAMPLES / n, profile)]
    return profile, flights


def _reason(a: chain.Analysis, flight: str, point: int) -> str:
    row = a.points.loc[(a.points["flight"] == flight) & (a.points["point"] == point)]
    return str(row["exclusion_reason"].iloc[0])


def test_a_reason_goes_with_the_point_left_out_and_into_the_json(two_flights):
    profile, flights = two_flights
    a = chain.analyze(flights, profile, exclusions=[("flight2", 1), ("flight3", 2)],
                      exclusion_reasons={("flight2", 1): "turbulence"})
    assert _reason(a, "flight2", 1) == "turbulence"
    assert _reason(a, "flight3", 2) == ""  # left out without a reason
    assert _reason(a, "flight2", 2) == ""  # used
    out = analysis_to_dict(a)
    schema = json.loads(resources.files("trimlog.views").joinpath("result.schema.json")
                        .read_text("utf-8"))
    jsonschema.validate(out, schema)
    (p,) = [p for p in out["points"] if (p["flight"], p["point"]) == ("flight2", 1)]
    assert p["exclusion_reason"] == "turbulence" and p["included"] is False


@pytest.mark.parametrize("point, words", [(2, "is used in the fits"), (99, "no such point")])
def test_a_reason_for_a_point_used_or_missing_is_refused(two_flights, point, words):
    profile, flights = two_flights
    with pytest.raises(InputFileError, match=words):
        chain.analyze(flights, profile, exclusions=[("flight2", 1)],
                      exclusion_reasons={("flight2", point): "turbulence"})


def test_a_reason_is_kept_in_the_history_and_read_back(tmp_path):
    db = tmp_path / "h.sqlite"
    with open_store(db) as store:
        outcome = history.import_log(store, SAMPLES / "flight2.csv",
                                     profile_text=PROFILE.read_text(), profile_source="demo")
        fid = outcome.flight_id
        store.set_point_included(fid, 3, False)
        set_exclusion_reason(store, fid, 3, "not stabilized")
        assert store.flight(fid).loading[REASONS_KEY] == {"3": "not stabilized"}
        a = history.analyze_history(store)
        name = a.flights[0].flight
        assert _reason(a, name, 3) == "not stabilized"
        # the point used again: the reason no longer shows
        store.set_point_included(fid, 3, True)
        assert _reason(history.analyze_history(store), name, 3) == ""
        set_exclusion_reason(store, fid, 3, "")
        assert store.flight(fid).loading[REASONS_KEY] == {}


def test_a_reason_survives_export_and_restore(tmp_path):
    with open_store(tmp_path / "a.sqlite") as store:
        fid = history.import_log(store, SAMPLES / "flight2.csv", profile_text=PROFILE.read_text(),
                                 profile_source="demo").flight_id
        store.set_point_included(fid, 2, False)
        set_exclusion_reason(store, fid, 2, "wrong configuration")
        store.export(tmp_path / "out")
    with open_store(tmp_path / "b.sqlite") as store:
        store.import_export(tmp_path / "out")
        (record,) = store.flights(store.aircraft_list()[0].id)
        assert record.loading[REASONS_KEY] == {"2": "wrong configuration"}


def test_the_command_line_keeps_a_reason_and_refuses_one_that_cannot_apply(tmp_path, capsys):
    from trimlog.cli import main

    db = tmp_path / "h.sqlite"
    with open_store(db) as store:
        fid = history.import_log(store, SAMPLES / "flight2.csv", profile_text=PROFILE.read_text(),
                                 profile_source="demo").flight_id
    assert main(["exclude", "--db", str(db), "--flight", str(fid), "--point", "4",
                 "--reason", "turbulence"]) == 0
    assert "(reason: turbulence)" in capsys.readouterr().out
    for extra, words in ((["--include"], "not with --include"),
                         (["--maneuver"], "not with --maneuver"), ([], "in words")):
        reason = "  " if not extra else "gust"
        assert main(["exclude", "--db", str(db), "--flight", str(fid), "--point", "5",
                     "--reason", reason, *extra]) == 2
        assert words in capsys.readouterr().err
    with open_store(db) as store:
        assert store.flight(fid).loading[REASONS_KEY] == {"4": "turbulence"}
        assert bool(store.flight_points(fid).set_index("point").loc[5, "included"])
