"""Maneuvering points chosen from the command line and kept in the history (demo data)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from trimlog.cli import main
from trimlog.errors import InputFileError
from trimlog.history import service as history
from trimlog.history.maneuver_choices import KEY, set_maneuver_included
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
LOGS = sorted(p for p in SAMPLES.glob("flight*.csv") if p.is_file())


def _maneuvers(path: Path) -> dict[tuple[str, int], bool]:
    points = json.loads(path.read_text())["maneuvering"]["points"]
    return {(p["flight"], int(p["point"])): bool(p["included"]) for p in points}


@pytest.fixture(scope="module")
def analysed(tmp_path_factory):
    out = tmp_path_factory.mktemp("cli") / "all.json"
    assert main(["analyze", *map(str, LOGS), "--aircraft", str(PROFILE), "--json", str(out),
                 "--quiet"]) in (0, 3)
    return _maneuvers(out)


def test_cli_excludes_maneuvering_points(analysed, tmp_path):
    chosen = sorted(k for k, included in analysed.items() if included)[:2]
    assert len(chosen) == 2
    out = tmp_path / "r.json"
    args = [a for flight, point in chosen for a in ("--exclude-maneuver", f"{flight}:{point}")]
    assert main(["analyze", *map(str, LOGS), "--aircraft", str(PROFILE), "--json", str(out),
                 "--quiet", *args]) in (0, 3)
    now = _maneuvers(out)
    assert all(not now[k] for k in chosen)
    assert {k: v for k, v in now.items() if k not in chosen} == {
        k: v for k, v in analysed.items() if k not in chosen}
    # and included again
    again = tmp_path / "a.json"
    flight, point = chosen[0]
    assert main(["analyze", *map(str, LOGS), "--aircraft", str(PROFILE), "--json", str(again),
                 "--quiet", "--exclude-maneuver", f"{flight}:{point}", "--include-maneuver",
                 f"{chosen[1][0]}:{chosen[1][1]}"]) in (0, 3)
    assert not _maneuvers(again)[chosen[0]] and _maneuvers(again)[chosen[1]]


@pytest.mark.parametrize("value, words", [
    ("flight2:99", "no such point"), ("flight2", "expected FLIGHT:POINT"),
    ("flight2:x", "whole number")])
def test_cli_refuses_a_bad_maneuver_choice(value, words, capsys):
    assert main(["analyze", *map(str, LOGS), "--aircraft", str(PROFILE), "--quiet",
                 "--exclude-maneuver", value]) == 2
    assert words in capsys.readouterr().err


def test_stored_maneuver_choice_is_kept_and_used_everywhere(analysed, tmp_path):
    db = tmp_path / "h.sqlite"
    text = PROFILE.read_text()
    with open_store(db) as store:
        ids = {log.name.split(".")[0]: history.import_log(
            store, log, profile_text=text, profile_source=str(PROFILE)).flight_id for log in LOGS}
        before = history.trend(store).to_dict()["trend"][-1]["maneuver_point"]
    flight, point = sorted(k for k, v in analysed.items() if v)[0]
    assert main(["exclude", "--db", str(db), "--flight", str(ids[flight]), "--point",
                 str(point), "--maneuver"]) == 0
    with open_store(db) as store:
        record = store.flight(ids[flight])
        assert record.loading[KEY] == {str(point): False}
        full = history.analyze_history(store)
        after = history.trend(store).to_dict()["trend"][-1]["maneuver_point"]
        with pytest.raises(InputFileError, match="no maneuvering point 99"):
            set_maneuver_included(store, ids[flight], 99, False)
    m = full.maneuvering.points
    row = m.loc[(m["flight"] == flight) & (m["point"] == point)]
    assert len(row) == 1 and not bool(row["included"].iloc[0])
    assert after["n_points"] == before["n_points"] - 1
    # analyze --db (the saved flights read again) sees the same choice
    out = tmp_path / "db.json"
    assert main(["analyze", str(LOGS[0]), "--db", str(db), "--aircraft-name",
                 full.profile.name, "--json", str(out), "--quiet"]) in (0, 3)
    assert not _maneuvers(out)[(flight, point)]
    # ... and it can be taken back
    assert main(["exclude", "--db", str(db), "--flight", str(ids[flight]), "--point",
                 str(point), "--maneuver", "--include"]) == 0
    with open_store(db) as store:
        assert history.trend(store).to_dict()["trend"][-1]["maneuver_point"] == before
