"""Progress on the terminal: per file and stage, on stderr, and only when it is a terminal."""

from __future__ import annotations

import io
import sys
from pathlib import Path

from trimlog.cli import main
from trimlog.progress import SILENT, TerminalProgress

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
LOGS = [str(SAMPLES / "flight2.csv"), str(SAMPLES / "flight3.csv")]
PROFILE = str(SAMPLES / "tinkerfinch_tf2.toml")


class FakeTerminal(io.StringIO):
    def isatty(self) -> bool:
        return True


def test_bar_names_each_stage_and_file_and_counts_to_the_total():
    out = FakeTerminal()
    with TerminalProgress(3, stream=out) as bar:
        bar.step("reading", "a.csv")
        bar.step("points", "a.csv")
        bar.step("fits")
    text = out.getvalue()
    assert "reading a.csv" in text and "points a.csv" in text and "fits" in text
    assert "2/3" in text
    assert text.endswith("\r")  # the bar leaves no line behind


def test_nothing_is_drawn_or_imported_when_stderr_is_not_a_terminal():
    out = io.StringIO()
    with TerminalProgress(3, stream=out) as bar:
        bar.step("reading", "a.csv")
    assert out.getvalue() == "" and bar._bar is None
    SILENT.step("reading")  # the library default does nothing


def test_report_on_a_terminal_shows_every_stage(tmp_path, monkeypatch, capsys):
    fake = FakeTerminal()
    monkeypatch.setattr(sys, "stderr", fake)
    main(["report", *LOGS, "--aircraft", PROFILE, "-o", str(tmp_path / "r.pdf")])
    text = fake.getvalue()
    for stage in ("reading flight2.csv", "points flight3.csv", "fits", "figures Trim curves",
                  "pages"):
        assert stage in text.replace(str(SAMPLES) + "/", ""), stage
    assert (tmp_path / "r.pdf").exists()


def test_analyze_in_a_pipe_prints_no_progress(tmp_path, capsys):
    main(["analyze", *LOGS, "--aircraft", PROFILE, "--quiet"])
    assert capsys.readouterr().err == ""
