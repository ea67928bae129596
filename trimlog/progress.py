"""Progress of long commands, stage by stage, for whoever shows it.

The pipeline and the report call :meth:`Progress.step` as each stage of each
file starts (reading, points, fits, figures, pages); the terminal shows a
bar on stderr (:class:`TerminalProgress`, only when stderr is a terminal) and
the dashboard its own status box.  :data:`SILENT` does nothing, so library
callers need not care.

The terminal bar is tqdm's: small, well kept, and imported only when a bar
is shown, so that piped and scripted runs pay nothing for it.
"""

from __future__ import annotations

import sys
from typing import IO, Any

from trimlog.terminal_text import printable

#: The stages, in the order a command meets them.
STAGES = ("reading", "points", "fits", "figures", "pages")


class Progress:
    """Receives the stages of a command; this base class shows nothing."""

    def expect(self, steps: int) -> None:
        """Announce ``steps`` more steps (a report adds its figures and pages)."""

    def step(self, stage: str, detail: str = "") -> None:
        """One step starts: ``stage`` (one of :data:`STAGES`) of ``detail`` (a file name)."""

    def close(self) -> None:
        """The command is done (or failed): clear whatever is shown."""

    def __enter__(self) -> Progress:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()


#: Shows nothing.
SILENT = Progress()


class TerminalProgress(Progress):
    """A progress bar on a terminal's stderr naming the stage and the file.

    Parameters
    ----------
    steps : int
        Steps expected so far (more can be announced with :meth:`expect`).
    stream : file, optional
        Where to draw (stderr).  Nothing is drawn unless it is a terminal.

    Examples
    --------
    >>> import io
    >>> with TerminalProgress(2, stream=io.StringIO()) as bar:  # not a terminal: silent
    ...     bar.step("reading", "flight1.csv")
    """

    def __init__(self, steps: int, stream: IO[str] | None = None) -> None:
        self._stream = sys.stderr if stream is None else stream
        self._bar: Any = None
        self._done = 0
        self._total = steps
        self._started = False
        isatty = getattr(self._stream, "isatty", None)
        self.enabled = bool(isatty and isatty())

    def expect(self, steps: int) -> None:
        """Grow the bar's total by ``steps``."""
        self._total += steps
        if self._bar is not None:
            self._bar.total = self._total
            self._bar.refresh()

    def step(self, stage: str, detail: str = "") -> None:
        """Count the previous step done and name the one starting."""
        if not self.enabled:
            return
        if self._bar is None:
            from tqdm import tqdm  # only when a bar is shown: nothing to import in pipes

            class Bar(tqdm):
                # No monitor thread: the bar is refreshed at each step, and a second
                # thread would keep the report from drawing pages in two processes.
                monitor_interval = 0

            self._bar = Bar(total=self._total, file=self._stream, unit="step",
                             leave=False, dynamic_ncols=True,
                             bar_format="{desc} {bar} {n_fmt}/{total_fmt} [{elapsed}]")
        elif self._started:
            self._bar.update(1)
        self._started = True
        # file names come from the user: no escape sequences reach the terminal
        self._bar.set_description_str(printable(f"{stage} {detail}".strip()), refresh=True)

    def close(self) -> None:
        """Count the last step done and clear the bar (it leaves no line behind)."""
        if self._bar is not None:
            self._bar.update(1)
            self._bar.close()
            self._bar = None
