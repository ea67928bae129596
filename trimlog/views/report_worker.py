"""The report written by a process forked before the analysis starts.

A command-line report spends about a third of a second importing matplotlib
and its PDF writer, and about as long again analysing the files: work that
does not depend on each other.  :func:`start_report_worker` forks a process
at the start of the command; it imports the drawing stack while this process
reads and analyses, then receives the analysis (pickled, through a pipe),
draws and writes the report, and tells each stage back so that the one
progress bar of this process shows it.

Everything the user sees is the same as when this process writes the report
itself: the same file (written atomically by :func:`trimlog.views.report.write_report`),
the same progress, the same error message.  Where the worker cannot be used
(see :func:`trimlog.views.forking.fork_may_help`) :func:`start_report_worker`
gives None; where it fails for any reason other than a user's error (the
analysis does not pickle, the process dies), :meth:`ReportWorker.write` writes
the report in this process instead, so the result never depends on the worker.

The pipe is the one place trimlog unpickles (``multiprocessing`` connections
pickle what they carry): an anonymous pipe made before the fork, between the
command's own two processes, carrying only objects this process built.  No
file or text a user gives reaches it as bytes (``tests/test_security.py``
holds it to this module).
"""

from __future__ import annotations

import contextlib
import os
import signal
import sys
import time
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from trimlog.errors import TrimlogError
from trimlog.progress import SILENT, Progress
from trimlog.views.forking import fork_may_help

if TYPE_CHECKING:
    from multiprocessing.connection import Connection

    from trimlog.pipeline.chain import Analysis

#: How long the worker is given to leave on its own (it saw the same Ctrl-C) [s].
LEAVE_S = 2.0


class _Relay(Progress):
    """The worker's progress: each stage is sent to the process that shows the bar."""

    def __init__(self, conn: Connection) -> None:
        self._conn = conn

    def expect(self, steps: int) -> None:
        self._conn.send(("expect", steps))

    def step(self, stage: str, detail: str = "") -> None:
        self._conn.send(("step", stage, detail))


def _error_message(exc: TrimlogError) -> tuple[str, str, str]:
    """What crosses the pipe of a user's error: its class (module, name) and message."""
    return type(exc).__module__, type(exc).__qualname__, str(exc)


def _error_from(module: str, name: str, message: str) -> TrimlogError:
    """The error again, of its own class where that is a trimlog error, with its message."""
    import importlib

    cls: Any = TrimlogError
    if module.split(".")[0] == "trimlog":
        found = getattr(importlib.import_module(module), name, None)
        if isinstance(found, type) and issubclass(found, TrimlogError):
            cls = found
    exc = cls.__new__(cls)
    Exception.__init__(exc, message)  # the message as given; no constructor reformats it
    return exc


def _serve(conn: Connection) -> None:
    """The worker: import, wait for the job, write the report, tell how it went."""
    # Before the analysis arrives: the drawing stack, and what unpickling the analysis
    # imports anyway.  Not pypdf (~0.1 s here, while this process is the one waited
    # for): the join of the PDF's two parts imports it once the second writer is drawing.
    import trimlog.pipeline.chain  # noqa: F401
    from trimlog.views import report
    try:
        job = conn.recv()
    except (EOFError, OSError):
        return  # the analysis failed or was interrupted: nothing to write
    analysis, path, trend = job
    try:
        written = report.write_report(analysis, path, trend=trend, progress=_Relay(conn))
    except TrimlogError as exc:
        conn.send(("error", *_error_message(exc)))
        return
    conn.send(("done", str(written)))


class ReportWorker:
    """A forked process that will write one report; see :func:`start_report_worker`."""

    def __init__(self, pid: int, conn: Connection) -> None:
        self._pid = pid
        self._conn = conn
        self._reaped = False
        self._sent = False

    def write(self, analysis: Analysis, path: str | os.PathLike[str], *,
              trend: Sequence[Mapping[str, Any]] | None = None,
              progress: Progress = SILENT) -> Path:
        """Have the worker write the report, as :func:`trimlog.views.report.write_report` does.

        Raises
        ------
        TrimlogError
            As :func:`~trimlog.views.report.write_report` (the worker's error,
            with its message).
        """
        try:
            try:
                self._conn.send((analysis, str(path), trend))
                self._sent = True
            except Exception:  # noqa: BLE001 - it does not pickle, the worker is gone: here
                return self._here(analysis, path, trend, progress)
            while True:
                message = self._receive()
                if message is None:
                    return self._here(analysis, path, trend, progress)
                kind = message[0]
                if kind == "expect":
                    progress.expect(message[1])
                elif kind == "step":
                    progress.step(message[1], message[2])
                elif kind == "error":
                    raise _error_from(*message[1:])
                else:
                    return Path(message[1])
        finally:
            self.close()

    def _receive(self) -> tuple[Any, ...] | None:
        """The worker's next message, or None once it has gone without a word."""
        while not self._conn.poll(0.2):
            if self._gone():
                if not self._conn.poll(0):  # its last words, if any, are still readable
                    return None
                break
        try:
            return self._conn.recv()
        except (EOFError, OSError):
            return None

    def _gone(self) -> bool:
        """Whether the worker has left (it is reaped here if so)."""
        if not self._reaped:
            try:
                done, _status = os.waitpid(self._pid, os.WNOHANG)
            except ChildProcessError:
                done = self._pid
            self._reaped = bool(done)
        return self._reaped

    def _here(self, analysis: Analysis, path: str | os.PathLike[str],
              trend: Sequence[Mapping[str, Any]] | None, progress: Progress) -> Path:
        """The report written by this process: the worker could not."""
        self.close()
        from trimlog.views import report

        return report.write_report(analysis, path, trend=trend, progress=progress)

    def close(self) -> None:
        """Let the worker go and reap it.

        A worker given no report is stopped at once (it only imports); one
        writing is given :data:`LEAVE_S` to finish or leave on its own, so
        that it removes its temporary file.
        """
        with contextlib.suppress(OSError):
            self._conn.close()
        deadline = time.monotonic() + (LEAVE_S if self._sent else 0.0)
        while not self._gone():
            if time.monotonic() >= deadline:
                with contextlib.suppress(OSError):
                    os.kill(self._pid, signal.SIGKILL)
                    os.waitpid(self._pid, 0)
                self._reaped = True
                return
            time.sleep(0.01)


def start_report_worker() -> ReportWorker | None:
    """Fork the report's worker now, or None where it would not help or is not safe.

    Call it before the analysis (and before any database is opened or thread
    started): the worker then imports the drawing stack while the analysis
    runs.  Only where :func:`trimlog.views.forking.fork_may_help` says so.

    Returns
    -------
    ReportWorker or None
        Use :meth:`ReportWorker.write` once, or :meth:`ReportWorker.close`
        to let it go unused.
    """
    if not fork_may_help():
        return None
    from multiprocessing import Pipe

    ours, theirs = Pipe()
    for stream in (sys.stdout, sys.stderr):  # nothing buffered is written twice
        with contextlib.suppress(Exception):
            stream.flush()
    pid = os.fork()
    if pid == 0:  # the worker: it never returns into the caller's code
        code = 1
        try:
            ours.close()
            _serve(theirs)
            code = 0
        except BaseException:  # noqa: BLE001 - a bug or Ctrl-C: the caller writes it itself
            code = 1
        finally:
            os._exit(code)
    theirs.close()
    return ReportWorker(pid, ours)
