"""Saved and new flights analysed together, numbered by date (issue 13 sections 1 and 2)."""

import json
import shutil
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, main
from trimlog.history import programme, service
from trimlog.history.store import open_store
from trimlog.pipeline import chain

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
NAMES = ("flight1_points.csv", "flight2.csv", "flight3.csv", "flight4.csv", "flight5.csv")


@pytest.fixture()
def demo(tmp_path, monkeypatch):
    for path in (p for p in SAMPLES.iterdir() if p.is_file()):
        shutil.copy(path, tmp_path / path.name)
    monkeypatch.chdir(tmp_path)  # bare file names: the JSON then names the same sources
    return tmp_path


def _json(path):
    return json.loads(Path(path).read_text())


def test_saved_plus_new_equals_all_at_once(demo):
    # save four flights out of date order, with saved point choices (two of flight3 left out)
    assert main(["import", "flight5.csv", "flight3.csv", "flight2.csv", "flight4.csv",
                 "--aircraft", "tinkerfinch_tf2.toml", "--db", "h.sqlite",
                 "--exclude", "flight3:4", "--exclude", "flight3:5"]) == 0
    code_db = main(["analyze", "flight1_points.csv", "--db", "h.sqlite",
                    "--aircraft", "tinkerfinch_tf2.toml", "--json", "db.json", "--quiet"])
    code_all = main(["analyze", *NAMES, "--aircraft", "tinkerfinch_tf2.toml",
                     "--exclude", "flight3:4", "--exclude", "flight3:5",
                     "--json", "all.json", "--quiet"])
    with_db, at_once = _json("db.json"), _json("all.json")
    block = with_db.pop("programme")
    assert at_once.pop("programme") is None
    assert code_db == code_all
    assert with_db == at_once  # every number, point, warning and flight, key for key
    assert [s["flight"] for s in block["saved"]] == ["flight2", "flight3", "flight4", "flight5"]
    assert block["new"] == ["flight1_points"]
    excluded = {(p["flight"], p["point"]) for p in with_db["points"] if not p["included"]}
    assert {("flight3", 4), ("flight3", 5)} <= excluded


def test_aircraft_by_name_and_a_file_already_saved_is_used_once(demo, capsys):
    main(["import", "flight2.csv", "flight3.csv", "flight4.csv", "--aircraft",
          "tinkerfinch_tf2.toml", "--db", "h.sqlite"])
    name = "Tinkerfinch TF-2 DEMO-1 (invented demo aircraft)"
    main(["analyze", "flight5.csv", "flight4.csv", "--db", "h.sqlite", "--aircraft-name", name,
          "--json", "db.json"])
    out = capsys.readouterr().out
    result = _json("db.json")
    assert "saved flights flight2 (id 1), flight3 (id 2), flight4 (id 3)" in out
    assert [f["flight"] for f in result["flights"]] == ["flight2", "flight3", "flight4", "flight5"]
    assert result["programme"]["already_saved"] == [{"source": "flight4.csv", "history_id": 3}]
    assert any(f["code"] == "history.programme.already_saved"
               and f["values"]["history_id"] == 3 for f in result["findings"])
    # --aircraft NAME works too when it is no file
    assert main(["analyze", "flight5.csv", "--db", "h.sqlite", "--aircraft", name,
                 "--quiet"]) in (0, 1)


def test_history_numbers_flights_by_date(demo):
    with open_store(demo / "h.sqlite") as store:
        text = (demo / "tinkerfinch_tf2.toml").read_text()
        late = service.import_log(store, "flight5.csv", profile_text=text, profile_source="p")
        early = service.import_log(store, "flight2.csv", profile_text=text, profile_source="p")
        assert "stored as flight 1 of 1" in late.message
        assert "stored as flight 1 of 2" in early.message and "2026-05-16" in early.message
        records = store.flights(store.aircraft_list()[0].id)
        assert [r.filename for r in records] == ["flight2.csv", "flight5.csv"]
        trend = service.trend(store)
        assert [f["filename"] for f in trend.flights] == ["flight2.csv", "flight5.csv"]


def test_edit_changes_the_date_and_renumbers(demo, capsys):
    main(["import", "flight2.csv", "flight3.csv", "--aircraft", "tinkerfinch_tf2.toml",
          "--db", "h.sqlite"])
    assert main(["edit", "--db", "h.sqlite", "--flight", "1", "--date", "2026-06-30"]) == 0
    assert "flight 2 of 2 by date" in capsys.readouterr().out
    with open_store(demo / "h.sqlite") as store:
        assert [r.id for r in store.flights(1)] == [2, 1]
    assert main(["edit", "--db", "h.sqlite", "--flight", "1", "--date", "30/06/2026"]) \
        == EXIT_BAD_INPUT


def test_programme_without_saved_flights_says_so(demo):
    profile = chain.load_profile("tinkerfinch_tf2.toml")
    new = chain.load_flight_file("flight2.csv", profile)
    with open_store(demo / "empty.sqlite") as store:
        prog = programme.programme_flights(store, new, profile=profile)
    assert prog.inputs.saved == () and prog.inputs.new == ("flight2",)
    assert [f.code for f in prog.findings] == ["history.programme.no_saved_flights"]
