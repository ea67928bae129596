"""Command-line wording: every option has help, and exit 1 always says why on stderr."""

from __future__ import annotations

from pathlib import Path

import pytest

from tests import synthetic_calibration as synth
from trimlog.cli import EXIT_OK, EXIT_REFUSED, _build_parser, main

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
PROFILE = str(SAMPLES / "tinkerfinch_tf2.toml")
LOGS = [str(p) for p in sorted(SAMPLES.glob("flight*.csv")) if p.is_file()]


def _subparsers():
    parser = _build_parser()
    action = next(a for a in parser._actions if a.__class__.__name__ == "_SubParsersAction")
    return action.choices


def test_every_option_of_every_command_has_help():
    for name, sub in _subparsers().items():
        for action in sub._actions:
            if action.option_strings and action.dest != "help":
                assert action.help, f"trimlog {name} {action.option_strings[0]} has no help"


def test_dashboard_port_help(capsys):
    with pytest.raises(SystemExit):
        main(["dashboard", "--help"])
    flat = " ".join(capsys.readouterr().out.split())
    assert "--port PORT" in flat and "default 8501" in flat


def test_quiet_refusal_prints_the_reason_on_stderr(capsys):
    # flight 2 alone: one CG, so the stick-fixed neutral point cannot be identified
    code = main(["analyze", LOGS[1], "--aircraft", PROFILE, "--quiet"])
    out, err = capsys.readouterr()
    assert code == EXIT_REFUSED
    assert out == ""
    assert "exit 1" in err and "not identifiable" in err
    assert "CG" in err  # the reason itself, not only the verdict


def test_quiet_success_prints_nothing(capsys):
    code = main(["analyze", *LOGS[:3], "--aircraft", PROFILE, "--quiet"])
    out, err = capsys.readouterr()
    assert code == EXIT_OK and out == "" and "exit 1" not in err


def test_calibrate_refusal_says_why_on_stderr(tmp_path, capsys):
    legs = tmp_path / "legs.csv"
    legs.write_bytes(synth.csv_text(synth.legs((70.0,), (0.0, 180.0))))  # two legs: too few
    code = main(["calibrate", str(legs), "--aircraft", PROFILE, "--quiet"])
    out, err = capsys.readouterr()
    assert code == EXIT_REFUSED and out == ""
    assert "exit 1" in err and "position error cannot be determined" in err


def test_trend_refusal_on_an_empty_history_says_why(tmp_path, capsys):
    db = tmp_path / "h.sqlite"
    assert main(["import", LOGS[1], "--aircraft", PROFILE, "--db", str(db)]) == EXIT_OK
    capsys.readouterr()
    code = main(["plan", "--db", str(db)])
    err = capsys.readouterr().err
    assert code == EXIT_REFUSED
    assert "exit 1" in err and "not identifiable" in err
