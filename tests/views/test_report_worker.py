"""The report written by a worker forked before the analysis: the same file, stages and errors.

The demo programme (sample_logs/, synthetic flights of known truth) is written
once by this process and once by the worker; everything the user sees must be
the same, and every way the worker can fail must leave the report to this
process rather than to chance.
"""

from __future__ import annotations

import os
import pickle
import re
import signal
import threading
import time

import pytest
from pypdf import PdfReader

from trimlog import findings
from trimlog.cli import main
from trimlog.errors import TrimlogError
from trimlog.files import OutputFileError
from trimlog.progress import Progress
from trimlog.views import report, report_worker
from trimlog.views.forking import fork_may_help
from trimlog.views.report_worker import ReportWorker, start_report_worker

pytestmark = pytest.mark.skipif(not fork_may_help(),
                                reason="needs os.fork, two free CPUs and one thread")

GENERATED = re.compile(r"generated \d{4}-\d\d-\d\d \d\d:\d\d UTC")


class Recorder(Progress):
    """Every stage it is told, in order."""

    def __init__(self) -> None:
        self.events: list[tuple] = []

    def expect(self, steps: int) -> None:
        self.events.append(("expect", steps))

    def step(self, stage: str, detail: str = "") -> None:
        self.events.append(("step", stage, detail))


def _pages(path) -> list[str]:
    return [GENERATED.sub("generated <time>", page.extract_text())
            for page in PdfReader(path).pages]


def _reaped(worker: ReportWorker) -> bool:
    """Whether the worker's process is gone and reaped (no zombie is left)."""
    try:
        os.waitpid(worker._pid, os.WNOHANG)
    except ChildProcessError:
        return True
    return False


def test_the_worker_writes_the_report_this_process_would(demo_analysis, tmp_path):
    here, there = Recorder(), Recorder()
    report.write_report(demo_analysis, tmp_path / "here.pdf", progress=here)
    worker = start_report_worker()
    assert isinstance(worker, ReportWorker)
    written = worker.write(demo_analysis, tmp_path / "there.pdf", progress=there)
    assert written == tmp_path / "there.pdf"
    assert _pages(written) == _pages(tmp_path / "here.pdf")
    assert there.events == here.events and ("step", "figures", "Trim curves") in here.events
    assert _reaped(worker)


def test_an_error_of_the_worker_is_raised_here_with_its_message(demo_analysis, tmp_path):
    target = tmp_path / "no such folder" / "r.pdf"
    with pytest.raises(TrimlogError) as here:
        report.write_report(demo_analysis, target)
    worker = start_report_worker()
    with pytest.raises(TrimlogError) as there:
        worker.write(demo_analysis, target)
    assert str(there.value) == str(here.value) and type(there.value) is type(here.value)
    assert isinstance(there.value, OutputFileError)
    assert _reaped(worker)


def test_a_worker_that_died_leaves_the_report_to_this_process(demo_analysis, tmp_path):
    worker = start_report_worker()
    os.kill(worker._pid, signal.SIGKILL)
    time.sleep(0.1)
    steps = Recorder()
    path = worker.write(demo_analysis, tmp_path / "r.pdf", progress=steps)
    assert len(_pages(path)) > 10 and ("step", "pages", f"{len(_pages(path))} pages") in \
        steps.events
    assert _reaped(worker)


def test_an_analysis_that_cannot_be_sent_is_written_here(demo_analysis, tmp_path, monkeypatch):
    worker = start_report_worker()

    class Refusing:
        def __init__(self, conn):
            self.conn = conn

        def send(self, _obj):
            raise pickle.PicklingError("cannot pickle this")

        def __getattr__(self, name):
            return getattr(self.conn, name)

    worker._conn = Refusing(worker._conn)
    path = worker.write(demo_analysis, tmp_path / "r.pdf")
    assert len(_pages(path)) > 10
    assert _reaped(worker)


def test_a_worker_given_nothing_is_stopped_at_once():
    worker = start_report_worker()
    start = time.monotonic()
    worker.close()
    assert time.monotonic() - start < 1.0  # not the grace given to a worker that writes
    assert _reaped(worker)


def test_a_failed_analysis_leaves_no_worker_behind(tmp_path, capsys, monkeypatch):
    started = []

    def start():
        started.append(start_report_worker())
        return started[-1]

    monkeypatch.setattr(report_worker, "start_report_worker", start)
    bad = tmp_path / "bad.csv"
    bad.write_text("time_s,nothing\n0,1\n")
    profile = os.path.join(os.path.dirname(__file__), "..", "..", "sample_logs",
                           "tinkerfinch_tf2.toml")
    code = main(["report", str(bad), "--aircraft", profile, "-o", str(tmp_path / "r.pdf")])
    assert code == 2 and "bad.csv" in capsys.readouterr().err
    assert not (tmp_path / "r.pdf").exists()
    assert len(started) == 1 and _reaped(started[0])


def test_no_worker_while_another_thread_runs():
    release = threading.Event()
    other = threading.Thread(target=release.wait)
    other.start()
    try:
        assert start_report_worker() is None
    finally:
        release.set()
        other.join()


def test_findings_survive_the_pipe():
    f = findings.finding("pipeline.no_points_in_log", findings.Severity.NOTE).about(
        source="a.csv")
    back = pickle.loads(pickle.dumps(f))
    assert back == f and back.message == f.message and back.line() == f.line()
    with pytest.raises(TypeError):
        back.values["x"] = 1  # still read-only
