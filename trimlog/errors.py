"""Error types of trimlog.

Every error a user can cause is a :class:`TrimlogError` (a ``ValueError``)
whose message names where the problem is (file, line, column or key), what
was expected and what was found.  The command line turns these into a
one-paragraph message and exit status 2; it never shows a traceback.
"""

from __future__ import annotations


class TrimlogError(ValueError):
    """Base class of every error trimlog raises on purpose."""


class InputFileError(TrimlogError):
    """A log, point table or loading sheet that cannot be read as asked.

    Parameters
    ----------
    message : str
        What was expected and what was found.
    file : str, optional
        Name of the file (as the user gave it).
    line : int, optional
        1-based line number in the file.
    column : str, optional
        Column header (or 1-based column number as text).
    """

    def __init__(
        self,
        message: str,
        *,
        file: str | None = None,
        line: int | None = None,
        column: str | None = None,
    ) -> None:
        self.file = file
        self.line = line
        self.column = column
        self.detail = message
        where = []
        if file is not None:
            where.append(str(file))
        if line is not None:
            where.append(f"line {line}")
        if column is not None:
            where.append(f"column '{column}'")
        prefix = ", ".join(where)
        super().__init__(f"{prefix}: {message}" if prefix else message)


class ProfileError(TrimlogError):
    """An aircraft profile (TOML) with a missing, malformed or implausible key."""


class UnitError(TrimlogError):
    """A quantity whose unit is unknown or of the wrong dimension."""


class NotIdentifiableError(TrimlogError):
    """The data cannot support the estimate that was asked for."""


class StoreError(TrimlogError):
    """The flight-history database cannot be opened, read or written."""


class LoadingSheetChangedError(StoreError):
    """A saved flight imported again with a loading sheet that differs from the saved one."""
