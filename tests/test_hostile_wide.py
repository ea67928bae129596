"""Wide CSVs, long headers and long lines (issue 19 §2, §3): read right or refused.

Before: a CSV of 10,000 columns ran for more than 300 s; a header longer than
64 KiB was read short and shifted the columns by 8 (``ias_kt`` 100 read as
125, elevator -5.0 as -9.0) without a word; a line over about 1.4 KB near
the end was dropped as a partial line.  Every case asserts the values read
(never shifted), or a clear error naming the line, and a time budget that a
hang would blow by far (not a speed target: that lives in ``trimlog bench``).
The data are invented.
"""

from __future__ import annotations

import time

import numpy as np
import pytest

from trimlog.errors import InputFileError
from trimlog.input.logs import MAX_COLUMNS, MAX_HEADER_BYTES, read_log

#: Seconds a read may take before it counts as a hang (before the fix: > 300 s).
HANG_S = 60.0
NEEDED = ["ias_kt", "pressure_alt_ft", "oat_c", "elevator_deg", "stick_force_lbf"]


def point_rows(k: int) -> list[float]:
    """Invented trim point k: 100 kt + 5k, elevator -5.0 + 0.3k deg."""
    return [100.0 + 5 * k, 5000.0, 10.0, -5.0 + 0.3 * k, 1.0 + 0.1 * k]


def wide_table(n_columns: int, *, needed_last: bool, rows: int = 8, sep: str = ",",
               newline: str = "\n") -> bytes:
    extra = [f"extra_channel_{i:05d}" for i in range(n_columns - len(NEEDED))]
    heads = extra + NEEDED if needed_last else NEEDED + extra
    lines = [sep.join(heads)]
    for k in range(rows):
        filler = [0.5] * len(extra)
        values = filler + point_rows(k) if needed_last else point_rows(k) + filler
        lines.append(sep.join(f"{v:g}" for v in values))
    return (newline.join(lines) + newline).encode()


def timed_read(raw: bytes, **kwargs):
    start = time.monotonic()
    try:
        return read_log(raw, name="wide.csv", **kwargs)
    finally:
        assert time.monotonic() - start < HANG_S


def assert_points_read_right(log, rows: int = 8) -> None:
    expected = np.array([point_rows(k) for k in range(rows)])
    assert len(log.data) == rows
    for j, name in enumerate(NEEDED):
        np.testing.assert_allclose(log.data[name].to_numpy(), expected[:, j], rtol=1e-12,
                                   err_msg=name)
    assert not log.dropped


@pytest.mark.parametrize("needed_last", [False, True], ids=["needed first", "needed last"])
def test_ten_thousand_columns_are_read_without_shifting(needed_last):
    raw = wide_table(MAX_COLUMNS, needed_last=needed_last)
    assert raw.index(b"\n") > 64 * 1024  # a header longer than 64 KiB
    assert_points_read_right(timed_read(raw))


@pytest.mark.parametrize("sep", [";", "\t"])
def test_a_long_header_with_other_separators(sep):
    raw = wide_table(4000, needed_last=True, sep=sep)
    assert raw.index(b"\n") > 64 * 1024
    assert_points_read_right(timed_read(raw))


def test_a_long_header_with_crlf_line_ends():
    raw = wide_table(4000, needed_last=True, newline="\r\n")
    assert_points_read_right(timed_read(raw))


def test_more_columns_than_the_limit_are_refused_naming_the_header_line():
    raw = wide_table(MAX_COLUMNS + 1, needed_last=True, rows=2)
    with pytest.raises(InputFileError, match=r"line 1.*10,001 columns; trimlog reads at most "
                                             r"10,000"):
        timed_read(raw)


def test_a_first_line_without_a_line_break_is_refused():
    raw = b"ias_kt," * (MAX_HEADER_BYTES // 7 + 10)
    with pytest.raises(InputFileError, match=r"line 1 is longer than 4 MiB"):
        timed_read(raw)


@pytest.mark.parametrize("width", [400, 1200, 3000])
def test_long_lines_at_the_end_are_not_dropped_as_partial(width):
    """Lines of 1.5-10 KB: the last three must all be kept (before: cut at 4 KiB)."""
    raw = wide_table(width, needed_last=False)
    assert len(raw.splitlines()[-1]) > 1400
    assert_points_read_right(timed_read(raw))


def test_a_long_text_cell_in_the_last_rows_is_kept():
    header = ",".join([*NEEDED, "remark"])
    rows = [",".join([*(f"{v:g}" for v in point_rows(k)), "x" * 3000]) for k in range(6)]
    raw = ("\n".join([header, *rows]) + "\n").encode()
    assert_points_read_right(timed_read(raw), rows=6)


def test_a_really_partial_long_last_line_is_still_dropped():
    raw = wide_table(1200, needed_last=False)
    cut = raw.rstrip(b"\n")
    cut = cut[: cut.rindex(b",", 0, len(cut) - 2000)]  # the last line loses its last columns
    log = timed_read(cut)
    assert len(log.data) == 7
    assert any("partial line" in d.reason for d in log.dropped)
