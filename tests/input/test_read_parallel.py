"""A large log read by pandas' parallel reader gives the LogRead of the serial parse.

:func:`trimlog.input.logs._parallel_read` hands files of
:data:`~trimlog.input.logs.PARALLEL_READ_BYTES` and more to pandas' parallel
reader; the serial parse is the rule.  Each case is a generated 10 Hz log of
about 6 MB with one awkwardness placed early, in the middle (where the file is
split between threads) and late, and read twice: as it comes, and with the
parallel reader switched off.  Everything read_log gives must be the same,
frame values exactly.  Synthetic data, no source needed.
"""

from __future__ import annotations

import functools

import numpy as np
import pandas as pd
import pytest

from trimlog.errors import TrimlogError
from trimlog.input import logs
from trimlog.input.logs import read_log

_HEADER = "time_s,ias_kt,pressure_alt_ft,oat_c,elevator_deg,stick_force_N,nz_g,rpm"
_ROWS = 140_000  # ~6 MB: above pandas' 5 MiB threshold with room for the header


@functools.cache
def _lines() -> tuple[str, ...]:
    rng = np.random.default_rng(17)
    n = _ROWS
    columns = [
        np.char.mod("%.1f", np.arange(n) * 0.1),
        np.char.mod("%.1f", 95 + rng.normal(0, 0.4, n)),
        np.char.mod("%.0f", 5500 + rng.normal(0, 3, n)),
        np.char.mod("%.1f", 11 + rng.normal(0, 0.1, n)),
        np.char.mod("%.2f", -3.7 + rng.normal(0, 0.05, n)),
        np.char.mod("%.1f", 2 + rng.normal(0, 0.5, n)),
        np.char.mod("%.3f", 1 + rng.normal(0, 0.005, n)),
        np.char.mod("%d", 2450 + rng.integers(-10, 10, n)),
    ]
    return tuple(",".join(cells) for cells in zip(*columns, strict=True))


def _at(edit: dict[str, str]) -> list[str]:
    """The data lines with line ``early``, ``middle`` and ``late`` replaced by ``edit``."""
    lines = list(_lines())
    places = {"early": 40, "middle": _ROWS // 2, "late": _ROWS - 30}
    for where, line in edit.items():
        lines[places[where]] = line
    return lines


def _everywhere(line: str) -> list[str]:
    return _at({"early": line, "middle": line, "late": line})


def _file(lines: list[str], *, header: str = _HEADER, eol: str = "\n",
          lead: str = "") -> bytes:
    return (lead + header + eol + eol.join(lines) + eol).encode("utf-8")


def _cases() -> dict[str, bytes]:
    lines = list(_lines())
    row = lines[7].split(",")
    return {
        "plain": _file(lines),
        "crlf": _file(lines, eol="\r\n"),
        "lone cr": _file(lines, eol="\r"),
        "bom": _file(lines, lead="\ufeff"),
        "semicolon decimal comma": _file([s.replace(",", ";").replace(".", ",") for s in lines],
                                         header=_HEADER.replace(",", ";")),
        "spaces after delimiter": _file([s.replace(",", ", ") for s in lines]),
        "preamble with a blank line": _file(lines, lead="Logger v1\n\nDate: 2026-05-01\n"),
        "unit row": _file(lines, header=_HEADER + "\ns,kt,ft,C,deg,N,g,rpm"),
        "markers in used columns": _file(_everywhere(",".join([row[0], "---", *row[2:]]))),
        "marker in an unused column, late only": _file(_at({"late": ",".join([*row[:7], "N/A"])})),
        "text in a used column, late only": _file(
            _at({"late": ",".join([row[0], "ERR", *row[2:]])})),
        "infinities": _file(_everywhere(",".join([row[0], "inf", "-inf", *row[3:]]))),
        "line with an extra field": _file(_at({"middle": lines[_ROWS // 2] + ",9"})),
        "lines with extra fields everywhere": _file(_everywhere(",".join([*row, "1", "2"]))),
        "short lines": _file(_everywhere(",".join(row[:3]))),
        "blank lines": _file(_everywhere("")),
        "comma-only lines": _file(_everywhere(",,,,,,,")),
        "quoted cells": _file([f'"{s}"' if k % 1000 == 0 else s for k, s in enumerate(lines)]),
        "quoted line break": _file(_at({"middle": f'{row[0]},"9\n5",{",".join(row[2:])}'})),
        "partial last line": _file(lines)[:-9],
        "empty column in the first part": _file(
            [",".join([*s.split(",")[:7], ""]) if k < _ROWS // 2 else s
             for k, s in enumerate(lines)]),
        "time stamps missing": _file(_everywhere("," + ",".join(row[1:]))),
    }


def _read(raw: bytes) -> object:
    try:
        return read_log(raw, name="big.csv")
    except TrimlogError as exc:
        return f"{type(exc).__name__}: {exc}"


@functools.cache
def _all_cases() -> dict[str, bytes]:
    return _cases()


@pytest.mark.parametrize("name", sorted(_all_cases()))
def test_parallel_read_gives_the_serial_logread(name, monkeypatch):
    raw = _all_cases()[name]
    assert len(raw) >= logs.PARALLEL_READ_BYTES
    parallel = _read(raw)
    monkeypatch.setattr(logs, "PARALLEL_READ_BYTES", float("inf"))
    serial = _read(raw)
    if isinstance(serial, str) or isinstance(parallel, str):
        assert parallel == serial
        return
    for field in ("kind", "kind_reason", "source", "columns", "findings", "warnings",
                  "dropped", "n_rows_read", "started_at"):
        assert getattr(parallel, field) == getattr(serial, field), f"{name}: {field}"
    pd.testing.assert_frame_equal(parallel.data, serial.data, check_exact=True)


def test_a_large_utf8_log_takes_the_parallel_reader(monkeypatch):
    calls: list[object] = []
    original = pd.read_csv

    def spy(source, *args, **kwargs):
        calls.append(source)
        return original(source, *args, **kwargs)

    monkeypatch.setattr(logs.pd, "read_csv", spy)
    read_log(_all_cases()["plain"], name="big.csv")
    assert len(calls) == 1 and not hasattr(calls[0], "read")  # a path, read once


def test_a_line_with_an_extra_field_is_still_reported():
    log = read_log(_all_cases()["line with an extra field"], name="big.csv")
    (dropped,) = [d for d in log.dropped if "more than the header" in d.reason]
    assert list(dropped.lines) == [_ROWS // 2 + 2]  # header is line 1, data from line 2
