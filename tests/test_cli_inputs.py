"""Input bugs found when trimlog was tried as a new user would (issue 13 section 4)."""

import io
import json
import re
import shlex
import shutil
from contextlib import redirect_stdout
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, _build_parser, main
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
PROFILE = str(SAMPLES / "tinkerfinch_tf2.toml")


@pytest.fixture()
def demo(tmp_path, monkeypatch):
    for path in (p for p in SAMPLES.iterdir() if p.is_file()):
        shutil.copy(path, tmp_path / path.name)
    monkeypatch.chdir(tmp_path)
    return tmp_path


def test_repeated_exclusions_of_one_flight_are_all_kept(demo):
    main(["analyze", "flight2.csv", "flight3.csv", "flight4.csv", "--aircraft",
          "tinkerfinch_tf2.toml", "--exclude", "flight3:4", "--exclude", "flight3:5",
          "--json", "out.json", "--quiet"])
    points = json.loads(Path("out.json").read_text())["points"]
    excluded = {(p["flight"], p["point"]) for p in points if not p["included"]}
    assert {("flight3", 4), ("flight3", 5)} <= excluded


def test_help_example_names_the_profile_that_demo_writes(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    epilog = _build_parser().epilog
    folder, profile = re.search(r"--aircraft (\S+)/(\S+\.toml)", epilog).groups()
    with redirect_stdout(io.StringIO()):
        assert main(["demo", folder]) == EXIT_OK
    assert (tmp_path / folder / profile).is_file()


@pytest.mark.parametrize("argv", [
    ["plan", "--db", "typo.sqlite"],
    ["trend", "--db", "typo.sqlite"],
    ["flights", "--db", "typo.sqlite"],
    ["export", "--db", "typo.sqlite", "out"],
    ["backup", "--db", "typo.sqlite", "copy.sqlite"],
    ["exclude", "--db", "typo.sqlite", "--flight", "1", "--point", "1"],
    ["report", "--db", "typo.sqlite", "-o", "r.pdf"],
    ["analyze", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db", "typo.sqlite"],
])
def test_reading_commands_refuse_a_missing_database(demo, argv, capsys):
    assert main(argv) == EXIT_BAD_INPUT
    assert "no such history database" in capsys.readouterr().err
    assert not Path("typo.sqlite").exists()


def test_resave_message_names_a_command_that_exists(demo, capsys):
    main(["import", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db", "h.sqlite"])
    capsys.readouterr()
    assert main(["import", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db",
                 "h.sqlite", "--label", "new words"]) == EXIT_OK
    message = capsys.readouterr().out
    assert "update_flight" not in message
    command = shlex.split(re.search(r"'(trimlog edit [^']*)'", message).group(1))
    command = [("h.sqlite" if a == "DB" else a) for a in command[1:]]
    command = [("relabelled" if a == "..." else a) for a in command]
    assert main(command) == EXIT_OK
    with open_store("h.sqlite") as store:
        assert store.flight(1).label == "relabelled"


def test_import_exclude_on_a_saved_flight_is_applied_and_said(demo, capsys):
    main(["import", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db", "h.sqlite"])
    capsys.readouterr()
    assert main(["import", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db",
                 "h.sqlite", "--exclude", "flight2:3"]) == EXIT_OK
    assert "point 3: excluded" in capsys.readouterr().out
    with open_store("h.sqlite") as store:
        points = store.flight_points(1)
    assert not bool(points.loc[points["point"] == 3, "included"].iloc[0])
    # an exclusion naming a flight not given is an error, not silence
    assert main(["import", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml", "--db",
                 "h.sqlite", "--exclude", "flight9:3"]) == EXIT_BAD_INPUT
    assert "no flight 'flight9'" in capsys.readouterr().err
