"""An airspeed calibration kept with the aircraft in the history, and used by recomputes."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from trimlog.cli import EXIT_OK, EXIT_REFUSED, main
from trimlog.history import service as history
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
CAL = SAMPLES / "calibration" / "calibration_flight.csv"
LOGS = sorted(SAMPLES.glob("flight*.csv"))[1:3]  # two logged flights keep it quick


def _without_table(tmp_path: Path) -> Path:
    text = PROFILE.read_text()
    start, end = text.index("[airspeed_calibration]"), text.index("[logger]")
    path = tmp_path / "bare.toml"
    path.write_text(text[:start] + text[end:])
    return path


def test_calibrate_db_keeps_the_table_as_the_next_profile_version(tmp_path, capsys):
    bare = _without_table(tmp_path)
    db = tmp_path / "history.sqlite"
    with open_store(db) as store:
        for log in LOGS:
            history.import_log(store, log, profile_text=bare.read_text(),
                               profile_source=str(bare))
        before = store.aircraft_list()[0]
        cas_before = history.analyze_history(store).points["cas_kt"].to_numpy()
    assert main(["calibrate", str(CAL), "--aircraft", str(bare), "--db", str(db),
                 "--quiet"]) == EXIT_OK
    assert "profile version 2" in capsys.readouterr().err
    with open_store(db) as store:
        after = store.aircraft_list()[0]
        assert after.profile_version == before.profile_version + 1
        assert "[airspeed_calibration]" in after.profile_text
        assert "calibration_flight.csv" in after.profile_text
        # the recompute of the stored flights now reduces IAS with the calibrated table
        result = history.analyze_history(store)
    assert result.profile.position_error_ias_kt[0] == pytest.approx(55.0)
    assert (result.points["cas_kt"].to_numpy() != cas_before).any()
    assert not any("no airspeed calibration" in w for w in result.warnings)


def test_calibrate_db_without_a_table_stores_nothing(tmp_path, capsys):
    db = tmp_path / "history.sqlite"
    legs = tmp_path / "legs.csv"
    legs.write_text("ias_kt,pressure_alt_ft,gps_groundspeed_kt,gps_track_deg\n"
                    "70,3000,80,0\n70,3000,60,180\n")
    assert main(["calibrate", str(legs), "--aircraft", str(PROFILE), "--db", str(db),
                 "--quiet"]) == EXIT_REFUSED
    assert "nothing stored" in capsys.readouterr().err


def test_analyze_calibrate_from_is_one_command(tmp_path):
    bare = _without_table(tmp_path)
    one, two = tmp_path / "one.json", tmp_path / "two.json"
    written = tmp_path / "written.toml"
    assert main(["analyze", *map(str, LOGS), "--aircraft", str(bare), "--calibrate-from",
                 str(CAL), "--json", str(one), "--quiet"]) in (EXIT_OK, EXIT_REFUSED)
    assert main(["calibrate", str(CAL), "--aircraft", str(bare), "--write-profile",
                 str(written), "--quiet"]) == EXIT_OK
    main(["analyze", *map(str, LOGS), "--aircraft", str(written), "--json", str(two),
          "--quiet"])
    a, b = json.loads(one.read_text()), json.loads(two.read_text())
    assert [p["cas_kt"] for p in a["points"]] == [p["cas_kt"] for p in b["points"]]
    assert a["neutral_point"] == b["neutral_point"]
