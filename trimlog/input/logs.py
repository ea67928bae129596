"""Reading flight logs and point tables into the canonical samples table.

:func:`read_log` takes whatever a data logger, a panel display or a typed
knee-board table produced and returns a :class:`LogRead`: a DataFrame with the
canonical columns of ``DEVELOPERS.md`` (plus ``source_line``), what kind of
input it was and why, how every column was understood, warnings, and every
row or cell that was dropped or blanked, counted, with line numbers.

What the reader copes with
--------------------------
* Delimiters comma, semicolon and tab (chosen from the layout of the first
  lines); decimal comma with ``;`` or tab; a UTF-8 byte-order mark; Windows
  code page 1252 when the bytes are not UTF-8 (warned).
* Metadata lines before the header (skipped, and said so); units on a
  second header row; quoted headers.
* Missing values: empty cells, ``NaN``, ``---``, ``N/A`` and the like are
  counted per column as dropouts; cells that are not numbers at all are
  counted separately.  Blank lines and a partial last line (the logger was
  switched off mid-line) are dropped and counted; a line with *more* fields
  than the header is dropped and counted.
* Time as seconds (any time unit in the header), as clock time
  ``hh:mm:ss[.sss]`` (crossing midnight is unwrapped) or as ISO 8601 date
  and time.  Clock and ISO stamps become seconds since midnight of the first
  stamp's day, so a point's ``t_start_s`` can be read back on the logger's
  clock.
* Not a CSV at all (binary, HTML/XML, JSON, PDF, a zipped spreadsheet), an
  empty file, a header without data: a specific :class:`InputFileError`.

Decisions
---------
* **Time going backwards** (within one flight) is an error naming the line:
  it means a concatenated file or a clock reset, which only the user can sort
  out (split the file or add a ``flight`` column).  Duplicated time stamps
  are a warning with their lines; both rows are kept.
* **Implausible values** (airspeed outside 0…300 kt, elevator beyond ±45°,
  OAT outside −70…+60 °C, pressure altitude outside −2,000…40,000 ft, load
  factor outside −5…+10 g, weight not positive) are an error naming line and
  column in a point table, where each row is a test point.  In a time series
  a few isolated bad samples (at most 3, or 0.1 % of the rows) are taken as
  sensor glitches: they are blanked (set missing), counted in ``dropped`` and
  named in a loud warning; more than that is an error, since it usually means
  a wrong unit or a wrong column.  Values are never clipped.
* The profile's ``inverted`` list flips the sign only of columns mapped
  through its column map (the logger's own channel names); a column headed
  by a canonical name or a synonym (a hand-typed table) is taken to follow
  the package's sign convention and is not flipped (warned).
* A column whose header is not understood is kept out of the samples table
  and listed in a warning.  A column map entry whose target is ``""`` or
  ``"-"`` tells the reader to ignore that column (also listed).
* Required: an airspeed (``ias_kt`` or ``cas_kt``), ``pressure_alt_ft`` and
  ``elevator_deg``.  Without ``oat_c`` ISA is assumed downstream (warned);
  without ``stick_force_lbf`` there is no stick-free result (warned).
* Kind: a time column with at least 30 rows, a median interval of at most
  10 s and at least 60 % of intervals within half to twice the median is a
  time series; anything else is a point table.  ``kind=`` forces the
  choice.  In a point table a time column, if any, is kept.
"""

from __future__ import annotations

import csv
import functools
import io
import re
import tempfile
import warnings
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from trimlog.errors import InputFileError, TrimlogError
from trimlog.files import read_regular_file
from trimlog.findings import Finding, Severity
from trimlog.input.headers import (
    NA_TOKENS,
    NUMBER,
    PLAUSIBLE_RANGES,
    QUANTITIES,
    TEXT_COLUMNS,
    Dropped,
    HeaderMeaning,
    Kind,
    Notes,
    Purpose,
    check_constant,
    check_plausible,
    check_time,
    clock_seconds,
    conversion_text,
    decide_kind,
    is_unit_row,
    looks_like_header,
    map_columns,
    numeric_values,
    require_columns,
    split_fields,
    text_values,
    unique_headers,
)

__all__ = [
    "ColumnInfo",
    "Dropped",
    "LogRead",
    "PLAUSIBLE_RANGES",
    "load_source",
    "read_log",
]


_DELIMITERS = {"\t": "tab", ";": "semicolon", ",": "comma", "|": "pipe"}
_LINE_SPLIT = re.compile(r"\r\n|\r|\n")
_SNIFF_BYTES = 65536
#: Lines the layout is sniffed from (at least; more when they fit in _SNIFF_BYTES).
_SNIFF_LINES = 40
#: Longest stretch read to find the header and the first data lines [bytes]: a
#: header line longer than this is refused rather than read short.
MAX_HEADER_BYTES = 4 * 1024 * 1024
#: Most columns a log may have (a wide logger export has a few hundred).
MAX_COLUMNS = 10_000


@dataclass(frozen=True)
class ColumnInfo:
    """How one column of the file was understood.

    Parameters
    ----------
    header : str
        The header as written in the file.
    canonical : str
        Canonical column name it became.
    unit : str
        The unit understood (``"assumed kt"`` when none was written).
    conversion : str
        The conversion applied, e.g. ``"mph -> kt: x 0.868976"`` or ``"none"``.
    inverted : bool
        Whether the sign was flipped (declared in the aircraft profile).
    """

    header: str
    canonical: str
    unit: str
    conversion: str
    inverted: bool


@dataclass(frozen=True)
class LogRead:
    """A log or point table as read.

    Parameters
    ----------
    data : pandas.DataFrame
        Canonical columns in canonical units, plus ``source_line`` (int,
        1-based file line of each row).
    kind : {"point_table", "time_series"}
        What the input was taken to be.
    kind_reason : str
        Why.
    source : str
        The file name as given.
    columns : tuple of ColumnInfo
        How each used column was understood.
    findings : tuple of Finding
        Everything the user should know about the file (``warnings`` gives
        them in words).
    dropped : tuple of Dropped
        Every dropped or blanked row or cell, counted, with line numbers.
    n_rows_read : int
        Data lines read from the file (before anything was dropped).
    started_at : str or None
        The log's own date and time of its first sample (ISO 8601, UTC),
        when its time column holds ISO 8601 date-time stamps; else None.
    """

    data: pd.DataFrame
    kind: Kind
    kind_reason: str
    source: str
    columns: tuple[ColumnInfo, ...]
    findings: tuple[Finding, ...]
    dropped: tuple[Dropped, ...]
    n_rows_read: int
    started_at: str | None = None

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings in words (from the catalogue)."""
        return tuple(f.message for f in self.findings)


@dataclass(frozen=True)
class _Layout:
    encoding: str
    delimiter: str
    decimal: str
    header_line: int  # 0-based index of the header line
    data_start: int  # 0-based index of the first data line
    headers: tuple[str, ...]
    units: tuple[str, ...]  # from a second header row; "" where none


# --------------------------------------------------------------------- loading


def load_source(source: Any, name: str | None) -> tuple[bytes, str]:
    """The bytes of a path, bytes or file-like source, and the name to use in messages."""
    if isinstance(source, bytes | bytearray | memoryview):
        return bytes(source), name or "<uploaded file>"
    if hasattr(source, "read"):
        data = source.read()
        label = name or str(getattr(source, "name", "<uploaded file>"))
        if isinstance(data, str):
            data = data.encode("utf-8")
        return bytes(data), label
    if isinstance(source, str | Path):
        path = Path(source)
        label = name or path.name
        if path.is_dir():
            raise InputFileError("expected a CSV file, found a folder", file=str(source))
        if not path.exists() and not path.is_symlink():
            raise InputFileError("cannot read the file: file not found", file=str(source))
        try:
            return read_regular_file(path, "input file"), label
        except TrimlogError as exc:
            raise InputFileError(str(exc).removeprefix(f"{path}: "), file=str(source)) from None
    raise InputFileError(
        f"expected a file path or the file's bytes, found {type(source).__name__}",
        file=name,
    )


_SIGNATURES = (
    (b"%PDF", "a PDF document"),
    (b"PK\x03\x04", "a zip archive (an .xlsx/.ods spreadsheet?)"),
    (b"\xd0\xcf\x11\xe0", "an old Office document (.xls?)"),
    (b"\x89PNG", "a PNG image"),
    (b"\xff\xd8\xff", "a JPEG image"),
    (b"SQLite format 3", "an SQLite database"),
    (b"\x1f\x8b", "a gzip archive"),
)


def _encoding(raw: bytes, label: str, notes: Notes) -> str:
    """Refuse what is plainly not a text table; choose the text encoding."""
    if not raw[:_SNIFF_BYTES].strip() and not raw.strip():
        raise InputFileError("the file is empty; expected a CSV log or point table", file=label)
    for signature, what in _SIGNATURES:
        if raw.startswith(signature):
            raise InputFileError(
                f"this is {what}, not a CSV text file; export the data as CSV", file=label
            )
    head = raw[:_SNIFF_BYTES]
    if head.startswith((b"\xff\xfe", b"\xfe\xff")) or b"\x00" in head:
        raise InputFileError(
            "this is a binary file (or UTF-16 text), not a CSV text file; "
            "export the data as CSV in UTF-8",
            file=label,
        )
    try:
        if not raw.isascii():  # ASCII is UTF-8: a scan instead of a decode of the whole file
            raw.decode("utf-8")
        encoding = "utf-8-sig"
    except UnicodeDecodeError:
        encoding = "cp1252"
        notes.add("input.log.cp1252", Severity.NOTE)
    text = head.decode(encoding, errors="replace").lstrip("\ufeff \t\r\n")
    first = text[:1]
    if first == "<":
        raise InputFileError(
            "this looks like an HTML or XML page, not a CSV file (was a web page saved "
            "instead of the download?)",
            file=label,
        )
    if first and first in "{[" and text.rstrip().endswith(("}", "]")) or text.startswith(
        ("{\"", "[{")
    ):
        raise InputFileError("this looks like a JSON file, not a CSV file", file=label)
    return encoding


# --------------------------------------------------------------------- layout


def _sniff_window(raw: bytes, label: str) -> int:
    """Bytes to sniff: at least the first :data:`_SNIFF_LINES` whole lines (however long).

    A header longer than 64 KiB (thousands of columns) used to be cut and read
    short, which shifted every column; now the window grows to hold whole
    lines, up to :data:`MAX_HEADER_BYTES`, beyond which the file is refused.
    """
    if len(raw) <= _SNIFF_BYTES:
        return len(raw)
    breaks = re.compile(rb"\r\n|\r|\n")
    end, seen = 0, 0
    for match in breaks.finditer(raw, 0, MAX_HEADER_BYTES + 1):
        end, seen = match.end(), seen + 1
        if seen >= _SNIFF_LINES:
            break
    if seen == 0 and len(raw) > MAX_HEADER_BYTES:
        raise InputFileError(
            f"line 1 is longer than {MAX_HEADER_BYTES // 1024 // 1024} MiB without a line break; "
            "expected a CSV table (one header line, then one line per sample)",
            file=label, line=1)
    return max(_SNIFF_BYTES, end) if seen else len(raw)


def _sniff(raw: bytes, encoding: str, label: str, notes: Notes) -> _Layout:
    """Find delimiter, header line, unit row and decimal mark from the first lines."""
    window = _sniff_window(raw, label)
    head = raw[:window].decode(encoding, errors="replace")
    lines = _LINE_SPLIT.split(head)
    if len(raw) > window and len(lines) > 1:
        lines = lines[:-1]  # cut mid-line
    lines = lines[:300]
    if lines:
        lines[0] = lines[0].lstrip("\ufeff")
    best: tuple[tuple[float, int], str, int, int] | None = None
    for priority, delimiter in enumerate(reversed(list(_DELIMITERS))):
        split = [split_fields(line, delimiter) for line in lines]
        counts = [len(f) for f in split]
        nonblank = [i for i, c in enumerate(counts) if c]
        tail = [counts[i] for i in nonblank[-50:]]
        if not tail:
            continue
        values, freq = np.unique(tail, return_counts=True)
        width = int(values[freq == freq.max()].max())
        if width < 2:
            continue
        header = next(
            (i for i in nonblank if counts[i] == width and looks_like_header(split[i])), None
        )
        if header is None:
            continue
        after = [counts[i] for i in nonblank if i > header]
        fit = sum(c == width for c in after) / len(after) if after else 1.0
        key = (round(fit, 1), priority)
        if best is None or key > best[0]:
            best = (key, delimiter, header, width)
    if best is None:
        first = next((line for line in lines if line.strip()), "")[:60]
        raise InputFileError(
            "found no header row of column names separated by comma, semicolon or tab "
            f"(the first line reads '{first}'); expected a CSV log or point table",
            file=label,
            line=1,
        )
    _, delimiter, header, width = best
    if width > MAX_COLUMNS:
        raise InputFileError(
            f"the header has {width:,} columns; trimlog reads at most {MAX_COLUMNS:,} "
            "(export only the channels needed: airspeed, altitude, temperature, elevator, "
            "stick force, time)",
            file=label, line=header + 1)
    headers = [h.strip() for h in split_fields(lines[header], delimiter)]
    if header > 0:
        notes.add("input.log.preamble_skipped", Severity.NOTE, count=header)
    units = [""] * width
    data_start = header + 1
    if data_start < len(lines):
        second = split_fields(lines[data_start], delimiter)
        if second and len(second) <= width and is_unit_row(second):
            units = [u.strip() for u in second] + [""] * (width - len(second))
            data_start += 1
    return _Layout(
        encoding=encoding,
        delimiter=delimiter,
        decimal=_decimal_mark(lines[data_start : data_start + 200], delimiter),
        header_line=header,
        data_start=data_start,
        headers=tuple(unique_headers(headers)),
        units=tuple(units),
    )


def _decimal_mark(lines: list[str], delimiter: str) -> str:
    if delimiter == ",":
        return "."
    comma = point = 0
    for line in lines:
        for cell in split_fields(line, delimiter):
            cell = cell.strip()
            if NUMBER.match(cell):
                comma += "," in cell
                point += "." in cell
    return "," if comma > point else "."


# --------------------------------------------------------------------- parsing


def _parse(
    raw: bytes, layout: _Layout, used: Iterable[int], label: str, notes: Notes
) -> tuple[pd.DataFrame, np.ndarray, int, frozenset[int]]:
    """Read the data lines: the frame, each row's file line, the last line, lazy infinities.

    The fourth value names the columns whose infinities are still to be taken
    as missing (see below).

    The frame is what pandas gives with ``skipinitialspace`` and the missing
    markers of :data:`~trimlog.input.headers.NA_TOKENS` (infinities included), but
    it is got the cheap way where that changes nothing: ``skipinitialspace``
    only when some cell starts with a space, and the markers applied to the
    parsed arrays afterwards.  Only when a marker sits in a text-typed column
    that is used (where pandas would have typed the rest differently) is the
    file parsed again with the markers given to pandas.

    Infinities are blanked in the used columns only; in the others they matter
    only to tell a blank line, so :func:`_drop_empty_rows` takes them as missing
    there (in the rows it asks about, usually none) instead of a pass over
    every unused column here.
    """
    width = len(layout.headers)
    used = set(used)
    spaced = _cell_starts_with_space(raw, layout.delimiter)
    frame, caught = _read_table(raw, layout, label, skipinitialspace=spaced, na_values=None)
    # Column by column only where needed: a log of 10,000 columns stays linear and quick.
    dtypes = frame.dtypes
    markers = {
        i: frame[i].isin(NA_TOKENS).to_numpy()
        for i, dtype in dtypes.items()
        if not pd.api.types.is_numeric_dtype(dtype)
    }
    infinite_missing: frozenset[int] = frozenset()
    if any(markers[i].any() for i in used if i in markers):
        frame, caught = _read_table(
            raw, layout, label, skipinitialspace=spaced, na_values=NA_TOKENS
        )
    else:
        for i, mask in markers.items():
            if mask.any():
                frame[i] = frame[i].mask(mask)
        floats = [i for i, dtype in dtypes.items() if dtype.kind == "f"]
        # Column by column: the frame's one float block is not copied whole.
        for i in floats:
            if i in used:
                values = frame[i].to_numpy()
                if np.isinf(values).any():
                    frame[i] = np.where(np.isinf(values), np.nan, values)
        infinite_missing = frozenset(i for i in floats if i not in used)
    bad = sorted(
        int(m.group(1))
        for w in caught
        for m in re.finditer(r"line (\d+)", str(w.message))
    )
    if bad:
        notes.drop(f"line with more than the header's {width} fields", np.asarray(bad))
    lines = np.arange(layout.data_start + 1, layout.data_start + 1 + len(frame) + len(bad))
    last_line = int(lines[-1]) if len(lines) else layout.data_start
    if bad:
        lines = lines[~_member(lines, np.asarray(bad, dtype=np.int64))]
    return frame, lines[: len(frame)], last_line, infinite_missing


def _cell_starts_with_space(raw: bytes, delimiter: str) -> bool:
    """Tell whether a space follows a delimiter or a line break anywhere in the file."""
    if b" " not in raw:  # one quick scan (memchr) settles most logs
        return False
    codes = np.frombuffer(raw, dtype=np.uint8)
    spaces = np.flatnonzero(codes == ord(" "))
    if not len(spaces):
        return False
    if spaces[0] == 0:
        return True
    return bool(np.isin(codes[spaces - 1], [ord(delimiter), ord("\n"), ord("\r")]).any())


def _read_table(
    raw: bytes, layout: _Layout, label: str, *, skipinitialspace: bool,
    na_values: list[str] | None,
) -> tuple[pd.DataFrame, list[warnings.WarningMessage]]:
    """One pandas parse of the data lines; the parser's warnings (lines skipped).

    A large file is first parsed by pandas' parallel reader (see
    :func:`_parallel_read`); the serial parse below, which reports each line
    with more fields than the header, is the rule, and the fallback whenever
    the parallel one does not apply or meets such a line.
    """
    width = len(layout.headers)
    options: dict[str, Any] = dict(
        sep=layout.delimiter,
        decimal=layout.decimal,
        # The line before the data stands in as the header row to be renamed:
        # pandas skips it and all before much faster than with an integer skiprows.
        header=layout.data_start - 1,
        names=list(range(width)),
        skip_blank_lines=False,
        skipinitialspace=skipinitialspace,
        encoding=_parse_encoding(raw, layout.encoding),
        encoding_errors="replace",
        na_values=na_values,
        engine="c",
    )
    frame = _parallel_read(raw, options)
    if frame is not None:
        return frame, []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", pd.errors.ParserWarning)
        try:
            frame = pd.read_csv(io.BytesIO(raw), on_bad_lines="warn", **options)
        except pd.errors.EmptyDataError:
            frame = pd.DataFrame(columns=list(range(width)))
        except (pd.errors.ParserError, ValueError, OverflowError, csv.Error) as exc:
            if isinstance(exc, TrimlogError):
                raise
            raise InputFileError(f"cannot be read as a table: {exc}", file=label) from exc
    return frame, list(caught)


#: Smallest file handed to pandas' parallel reader: the size below which pandas
#: itself reads serially (``pandas.io.parsers.readers._PARALLEL_READ_MIN_BYTES``).
PARALLEL_READ_BYTES = 5 * 1024 * 1024


def _parallel_read(raw: bytes, options: dict[str, Any]) -> pd.DataFrame | None:
    """The frame from pandas' parallel reader, or None where the serial parse must run.

    pandas (3.1 and later) splits a large local UTF-8 file at line breaks and
    parses the parts in threads (the one-hour 50 Hz log: ~75 ms instead of
    ~125 ms on 2 cores), but only from a path and only when lines with more
    fields than the header raise instead of being reported.  So the bytes go
    to a temporary file and the parse raises on such a line; then (and on
    anything else that goes wrong) None is returned and the serial parse of
    :func:`_read_table` runs, which reports the lines and drops them.  Every
    other rule (blank lines, short lines, markers, types) is pandas' own, the
    same in both; ``tests/input/test_read_parallel.py`` compares the two.
    """
    if len(raw) < PARALLEL_READ_BYTES or options["encoding"] not in ("utf-8", "utf-8-sig"):
        return None
    try:
        with tempfile.TemporaryDirectory(prefix="trimlog-") as folder:
            path = Path(folder) / "log.csv"
            path.write_bytes(raw)
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # type warnings: the serial parse's too
                return pd.read_csv(path, on_bad_lines="error", **options)
    except (pd.errors.ParserError, pd.errors.EmptyDataError, ValueError, OverflowError,
            csv.Error, OSError):
        return None


def _parse_encoding(raw: bytes, encoding: str) -> str:
    """The encoding to hand pandas: ``utf-8`` for UTF-8 text without a byte-order mark.

    Then pandas' C reader takes the bytes as they are; for ``utf-8-sig`` it
    decodes the whole file through a text wrapper and encodes it back to UTF-8
    (14 MB: ~5 ms).  Without a mark the two decode alike, and ``_encoding``
    has checked that the bytes are valid UTF-8, so nothing is replaced.
    """
    if encoding == "utf-8-sig" and not raw.startswith(b"\xef\xbb\xbf"):
        return "utf-8"
    return encoding


def _member(sorted_lines: np.ndarray, wanted: np.ndarray) -> np.ndarray:
    """Return a mask of the elements of ``sorted_lines`` that are in ``wanted`` (small)."""
    mask = np.zeros(len(sorted_lines), dtype=bool)
    if len(wanted) and len(sorted_lines):
        at = np.clip(np.searchsorted(sorted_lines, wanted), 0, len(sorted_lines) - 1)
        at = at[sorted_lines[at] == wanted]
        mask[at] = True
    return mask


def _last_break(raw: bytes, end: int) -> int:
    """Position of the last CR or LF before ``end``, or -1.

    Searched back in growing windows, with the answer of one ``rfind`` of each
    from the start: a file without any CR (or LF) is not scanned whole for it
    (that took 12 ms of a 14 MB log).
    """
    size = 4096
    low = max(end - size, 0)
    while True:
        found = max(raw.rfind(b"\n", low, end), raw.rfind(b"\r", low, end))
        if found >= 0 or low == 0:
            return found
        size *= 4
        end, low = low, max(low - size, 0)


def _partial_tail(raw: bytes, layout: _Layout, last_line: int) -> np.ndarray:
    """File lines among the last three that have fewer fields than the header.

    ``last_line`` is the number of the file's last line: with blank lines
    kept, pandas gives one row per line, so it is the last row's line.
    """
    # Back far enough for three whole lines however long they are (a fixed 4 KiB
    # cut a line over ~1.4 KB short, and a valid row was dropped as partial).
    start = len(raw)
    for _ in range(8):  # a CR LF break counts twice
        start = _last_break(raw, start)
        if start <= 0:
            start = 0
            break
    tail = _LINE_SPLIT.split(raw[start:].decode(layout.encoding, errors="replace"))
    if raw.endswith((b"\n", b"\r")):
        tail = tail[:-1]
    width = len(layout.headers)
    partial = []
    for back, line in enumerate(reversed(tail[-3:])):
        count = len(split_fields(line, layout.delimiter))
        if 0 < count < width:
            partial.append(last_line - back)
    return np.asarray(sorted(partial), dtype=np.int64)


# --------------------------------------------------------------------- public


def read_log(
    source: str | Path | bytes | Any,
    *,
    name: str | None = None,
    column_map: Mapping[str, str] | None = None,
    inverted: Iterable[str] = (),
    kind: Kind | None = None,
    purpose: Purpose = "trim",
) -> LogRead:
    """Read a data-logger CSV or a typed table of trim points.

    Parameters
    ----------
    source : str, pathlib.Path, bytes or file-like
        A path, the file's bytes (e.g. a dashboard upload), or an object
        with ``read()``.
    name : str, optional
        The file name to use in messages (default: the path's name).
    column_map : mapping of str to str, optional
        Logger header -> canonical name, which may carry another unit
        (``{"AS_IND": "ias_mph"}``); ``""`` or ``"-"`` ignores the column.
        From the aircraft profile's ``[logger] columns``.
    inverted : iterable of str, optional
        Canonical names whose sign the logger records opposite to the
        package convention (e.g. ``"elevator_deg"`` when up is positive).
        Only a column that reached that name through ``column_map`` (the
        logger's own channel name) is multiplied by -1; a column headed by
        the canonical name or a synonym follows the package convention by
        contract and is left as it is, with a warning saying so.
    kind : {"point_table", "time_series"}, optional
        Force the kind of input instead of detecting it.
    purpose : {"trim", "airspeed_calibration"}, optional
        Which columns are required: airspeed, pressure altitude and elevator
        for trim points; indicated airspeed, pressure altitude, GPS ground
        speed and track for the legs of an airspeed calibration.

    Returns
    -------
    LogRead
        The samples table and everything learnt while reading it.

    Raises
    ------
    InputFileError
        Not a CSV table, no data, a required column missing (with the nearest
        column names found), a unit of the wrong kind, time going backwards,
        implausible values (see the module notes).
    """
    notes = Notes()
    raw, label = load_source(source, name)
    encoding = _encoding(raw, label, notes)
    layout = _sniff(raw, encoding, label, notes)
    found, unknown, ignored = map_columns(
        layout.headers, layout.units, layout.header_line, dict(column_map or {}), label, notes
    )
    inverted = _check_inverted(inverted, label)
    require_columns(found, layout.headers, layout.header_line, label, notes, purpose)
    if unknown:
        notes.add("input.log.columns_not_understood", Severity.CAUTION,
                  headers=", ".join(f"'{h}'" for h in unknown))
    if ignored:
        notes.add("input.log.columns_ignored", Severity.NOTE,
                  headers=", ".join(f"'{h}'" for h in ignored))

    frame, lines, last_line, infinite_missing = _parse(raw, layout, found, label, notes)
    n_rows_read = len(frame) + sum(d.count for d in notes.dropped)
    data, missing, headers, infos = _convert(frame, found, layout, inverted, lines, label, notes)

    keep = _drop_empty_rows(data, frame, infinite_missing, raw, layout, lines, last_line, notes)
    if not keep.any():
        raise InputFileError(
            "has a header but no data rows with values in the columns used; expected at "
            "least one row of values",
            file=label,
            line=layout.data_start + 1,
        )
    decided, reason, every = _decide_kind(data, keep, kind, headers, lines, label, notes)
    # The kept rows of the numeric columns go straight into the table's one float
    # block (a copy that is writable: glitches are blanked in it below).
    block, data = _kept_rows(data, keep, every)
    if not every:
        missing = {k: v[keep] for k, v in missing.items()}
        lines = lines[keep]
    if decided == "time_series":
        check_time(data["time_s"], data.get("flight"), lines, label, headers["time_s"], notes)
    for canonical, mask in missing.items():
        notes.drop(
            f"missing value in '{headers[canonical]}' ({canonical}): empty cell, NaN, '---', "
            "inf, overflow or similar",
            lines[mask],
        )
    check_plausible(data, decided, lines, headers, label, notes)
    check_constant(data, decided, headers, notes)

    order = [c for c in QUANTITIES if c in data]
    table = pd.DataFrame(block.T, columns=[c for c in order if c not in TEXT_COLUMNS],
                         copy=False)
    for c in TEXT_COLUMNS:
        if c in data:
            table[c] = data[c]
            table[c] = table[c].astype(str)
    table["source_line"] = lines.astype(np.int64)
    return LogRead(
        data=table,
        kind=decided,
        kind_reason=reason,
        source=label,
        columns=tuple(sorted(infos, key=lambda c: order.index(c.canonical))),
        findings=tuple(notes.findings),
        dropped=tuple(notes.dropped),
        n_rows_read=n_rows_read,
        started_at=notes.started_at,
    )


def _decide_kind(
    data: dict[str, np.ndarray], keep: np.ndarray, kind: Kind | None, headers: dict[str, str],
    lines: np.ndarray, label: str, notes: Notes,
) -> tuple[Kind, str, bool]:
    """Kind and reason; in a time series rows without a time stamp leave ``keep`` (in place).

    The third value says whether every row is still kept.
    """
    time = data.get("time_s")
    every = bool(keep.all())
    decided, reason = decide_kind(
        None if time is None else time if every else time[keep], kind, label)
    if decided == "time_series":
        no_time = keep & ~np.isfinite(time)
        if no_time.any():
            notes.drop(
                f"row without a usable time stamp in '{headers['time_s']}'", lines[no_time]
            )
            keep &= ~no_time
            every = False
    return decided, reason, every


def _kept_rows(
    data: dict[str, np.ndarray], keep: np.ndarray, every: bool
) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """The kept rows: the numeric columns in one new 2-D float array, and every column by name.

    The numeric columns are its rows, in :data:`QUANTITIES` order; the text
    columns are kept as they are.
    """
    numeric = [c for c in QUANTITIES if c in data and c not in TEXT_COLUMNS]
    block = np.empty((len(numeric), len(keep) if every else int(np.count_nonzero(keep))))
    kept: dict[str, np.ndarray] = {}
    for row, c in zip(block, numeric, strict=True):
        if every:
            row[:] = data[c]
        else:
            np.compress(keep, data[c], out=row)
        kept[c] = row
    for c in TEXT_COLUMNS:
        if c in data:
            kept[c] = data[c] if every else data[c][keep]
    return block, kept


def _check_inverted(inverted: Iterable[str], label: str) -> tuple[str, ...]:
    """The declared sign-inverted columns, each a numeric canonical name."""
    inverted = tuple(inverted)
    for canonical in inverted:
        if canonical not in QUANTITIES or canonical in TEXT_COLUMNS:
            raise InputFileError(
                f"'{canonical}' is declared inverted but is not a numeric canonical column name",
                file=label,
            )
    return inverted


def _convert(
    frame: pd.DataFrame, found: dict[int, HeaderMeaning], layout: _Layout,
    inverted: tuple[str, ...], lines: np.ndarray, label: str, notes: Notes,
) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray], dict[str, str], list[ColumnInfo]]:
    """Each understood column in canonical units, once and vectorised.

    Returns the values, the cells the file left empty (per numeric column),
    the header of each canonical name, and the column descriptions.
    """
    data: dict[str, np.ndarray] = {}
    missing: dict[str, np.ndarray] = {}
    headers: dict[str, str] = {}
    infos: list[ColumnInfo] = []
    for i, meaning in found.items():
        header, canonical, column = layout.headers[i], meaning.canonical, frame[i]
        headers[canonical] = header
        if canonical in TEXT_COLUMNS:
            data[canonical] = text_values(column)
            infos.append(ColumnInfo(header, canonical, "text", "none", False))
            continue
        unit = ("assumed " if meaning.unit_assumed else "") + meaning.unit_text
        missing[canonical] = column.isna().to_numpy()
        if canonical == "time_s" and not pd.api.types.is_numeric_dtype(column):
            values, conversion = clock_seconds(column, header, lines, label, notes)
            missing[canonical] = ~np.isfinite(values)
            unit = "clock"
        else:
            values = numeric_values(column, header, lines, notes)
            conversion = conversion_text(meaning)
            if conversion != "none":
                values = values * meaning.scale
                values += meaning.offset  # in place: the same numbers, one array fewer
            if meaning.unit_assumed:
                notes.add("input.log.unit_assumed", Severity.CAUTION, canonical, header=header,
                          unit=meaning.unit_text)
        # The profile's inversion describes the logger's own channels: a column
        # under a standard name follows the package's sign convention by contract.
        flip = canonical in inverted and meaning.from_map
        if flip:
            values = -values
            notes.add("input.log.sign_inverted", Severity.NOTE, canonical, header=header)
        elif canonical in inverted:
            notes.add("input.log.not_inverted_standard_name", Severity.WARNING, canonical,
                      header=header)
        data[canonical] = values
        infos.append(ColumnInfo(header, canonical, unit, conversion, flip))
    for canonical in inverted:
        if canonical not in data:
            notes.add("input.log.inverted_not_in_file", Severity.CAUTION, canonical)
    return data, missing, headers, infos


def _drop_empty_rows(
    data: dict[str, np.ndarray], frame: pd.DataFrame, infinite_missing: frozenset[int],
    raw: bytes, layout: _Layout, lines: np.ndarray, last_line: int, notes: Notes,
) -> np.ndarray:
    """Mask of rows to keep: drop blank lines, rows without values, a partial tail.

    A blank line has every cell missing (an infinity counts as missing in the
    columns of ``infinite_missing``).  The columns are asked in turn about
    the rows still blank, the used ones first (they rule out most rows).
    """
    keep = np.ones(len(lines), dtype=bool)
    if not len(lines):
        return keep

    def missing(rows: np.ndarray | None, i: int) -> np.ndarray:
        column = frame[i] if rows is None else frame[i].take(rows)
        gone = column.isna().to_numpy()
        if i in infinite_missing:
            gone = gone | np.isinf(column.to_numpy())
        return gone

    order = sorted(frame.columns, key=lambda i: i in infinite_missing)
    blank = _rows_where_all(functools.partial(missing, i=i) for i in order)
    notes.drop("blank line", lines[blank])
    numeric = [v for k, v in data.items() if k not in TEXT_COLUMNS]
    if numeric:
        valueless = _rows_where_all(
            (lambda rows, values=values: ~np.isfinite(values if rows is None else values[rows]))
            for values in numeric)
        empty = ~blank & valueless
        notes.drop("row without any value in the columns used", lines[empty])
        keep &= ~empty
    keep &= ~blank
    partial = _member(lines, _partial_tail(raw, layout, last_line)) & keep
    notes.drop("partial line at the end of the file (fewer fields than the header)", lines[partial])
    return keep & ~partial


def _rows_where_all(tests: Iterable[Any]) -> np.ndarray:
    """Mask of the rows for which every test holds (each test: rows or None -> mask).

    The first test sees every row; each later one only the rows still in,
    usually none: one pass over one column instead of one over each.
    """
    rows: np.ndarray | None = None
    size = 0
    for test in tests:
        if rows is None:
            first = test(None)
            size = len(first)
            rows = np.flatnonzero(first)
        elif len(rows):
            rows = rows[test(rows)]
        else:
            break
    mask = np.zeros(size, dtype=bool)
    if rows is not None:
        mask[rows] = True
    return mask
