"""The log reader gives exactly the stored LogRead for a set of awkward files.

The expectations in ``tests/data/logs/read_expectations.json`` were written by
the reader as it was before its speed work of issue 17 (commit c8f904d): every
frame value bit for bit (``float.hex``), every dtype, source line, column
description, finding, dropped count and error message.  A change that makes
the reader faster must leave all of them as they are.  After a deliberate
change of what the reader gives, write them again with
``python tests/input/test_read_equivalence.py --write`` and say why in the
commit.

The cases: every file of ``tests/data/logs`` (read plainly and with the demo
profile's column map and sign flips) and a generated 10 Hz log with one
awkwardness each (decimal comma, semicolons, tabs, unit row, preamble, missing
markers in used and unused columns, infinities and overflow, lines with extra
fields, a partial last line, a byte-order mark, CR LF and lone CR breaks,
blank lines, spaces after delimiters, quotes, code page 1252, text cells,
clock and ISO time, glitches, a flight column, a point table) and some errors.
"""

from __future__ import annotations

import functools
import sys
from pathlib import Path

import numpy as np
import pytest

from trimlog.errors import TrimlogError
from trimlog.input.logs import read_log

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))  # also when run as a script
from stored_results import assert_same, bits, digest, load, write_when_asked  # noqa: E402

LOGS = Path(__file__).resolve().parents[1] / "data" / "logs"
EXPECTED = LOGS / "read_expectations.json"
MAP = {"ELEV_POS": "elevator_deg", "FSTK": "stick_force_N"}
INVERTED = ("elevator_deg",)

_HEADER = ["time_s", "ias_kt", "pressure_alt_ft", "oat_c", "ELEV_POS", "FSTK", "nz_g", "rpm"]


def _rows(n: int = 120, seed: int = 5) -> list[list[str]]:
    rng = np.random.default_rng(seed)
    rows = []
    for k in range(n):
        rows.append([
            f"{k * 0.1:.2f}", f"{95 + rng.normal(0, 0.4):.1f}", f"{5500 + rng.normal(0, 3):.0f}",
            f"{11 + rng.normal(0, 0.1):.1f}", f"{3.7 + rng.normal(0, 0.05):.2f}",
            f"{2 + rng.normal(0, 0.5):.1f}", f"{1 + rng.normal(0, 0.005):.3f}",
            f"{2450 + rng.integers(-10, 10)}",
        ])
    return rows


def _text(rows: list[list[str]], header: list[str] = _HEADER, sep: str = ",",
          eol: str = "\n", decimal: str = ".") -> str:
    lines = [sep.join(header)]
    for row in rows:
        cells = [c.replace(".", decimal) for c in row]
        lines.append(sep.join(cells))
    return eol.join(lines) + eol


def _edit(rows: list[list[str]], edits: dict[tuple[int, int], str]) -> list[list[str]]:
    rows = [list(r) for r in rows]
    for (i, j), value in edits.items():
        rows[i][j] = value
    return rows


@functools.cache
def _cases() -> dict[str, tuple[bytes, dict]]:  # noqa: PLR0915 - one line per case
    base = _rows()
    text = _text(base)
    mapped = {"column_map": MAP, "inverted": INVERTED}
    cases: dict[str, tuple[bytes, dict]] = {}

    def add(name: str, data: str | bytes, **kwargs) -> None:
        raw = data.encode("utf-8") if isinstance(data, str) else data
        cases[name] = (raw, {**mapped, **kwargs})

    add("plain", text)
    add("plain unmapped", text, column_map=None, inverted=())
    add("crlf", _text(base, eol="\r\n"))
    add("lone cr", _text(base, eol="\r"))
    add("bom", "\ufeff" + text)
    add("bom crlf", "\ufeff" + _text(base, eol="\r\n"))
    add("semicolon decimal comma", _text(base, sep=";", decimal=","))
    add("tab decimal comma", _text(base, sep="\t", decimal=","))
    add("semicolon decimal point", _text(base, sep=";"))
    add("tab", _text(base, sep="\t"))
    add("pipe", _text(base, sep="|"))
    units = ["s", "kt", "ft", "degC", "deg", "N", "g", "rpm"]
    plain = ["time", "ias", "palt", "oat", "ELEV_POS", "FSTK", "nz", "rpm"]
    add("unit row", "\n".join([",".join(plain), ",".join(units)]) + "\n"
        + text.split("\n", 1)[1])
    add("unit row mph m", "time,airspeed,alt,temp,ELEV_POS,FSTK,nz\ns,mph,m,degF,deg,N,g\n"
        + "\n".join(",".join(r[:7]) for r in base) + "\n")
    add("bracket units", "time [ms],airspeed [km/h],palt (m),OAT (F),ELEV_POS,FSTK,nz\n"
        + "\n".join(",".join(r[:7]) for r in base) + "\n")
    add("preamble", "Logger XY-3 v1.2\nDate: 2026-05-01\nPilot: A. Test\n\n" + text)
    na = {(3, 1): "---", (4, 2): "NaN", (5, 3): "N/A", (6, 5): "?", (7, 6): "nan",
          (8, 1): "", (9, 4): "NULL", (10, 6): "-", (11, 3): "*", (12, 5): "None",
          (13, 2): "#N/A", (14, 1): "ERR", (15, 4): "NA"}
    add("na markers used", _text(_edit(base, na)))
    add("na markers unused", _text(_edit(base, {(3, 7): "---", (4, 7): "N/A", (9, 7): "?"})))
    add("na markers semicolon comma", _text(_edit(base, na), sep=";", decimal=","))
    add("infinities", _text(_edit(base, {(3, 1): "inf", (4, 2): "-inf", (5, 3): "1e999",
                                         (6, 5): "-1e400", (7, 7): "inf", (8, 6): "Infinity",
                                         (9, 4): "INF"})))
    add("infinity unused only", _text(_edit(base, {(3, 7): "inf", (4, 7): "1e999"})))
    add("text cells", _text(_edit(base, {(3, 1): "ERR32", (20, 5): "abc", (21, 7): "x"})))
    add("text in unused column", _text(_edit(base, {(21, 7): "x", (22, 7): "y"})))
    add("huge integer", _text(_edit(base, {(21, 1): "9" * 400})))
    lines = text.split("\n")
    extra = lines[:10] + [lines[10] + ",1,2"] + lines[11:40] + [lines[40] + ",7"] + lines[41:]
    add("extra fields", "\n".join(extra))
    add("partial tail", text + "12.00,95.1,55")
    add("partial tail no newline", text.rstrip("\n"))
    add("partial tail crlf", _text(base, eol="\r\n") + "12.00,95.1")
    blank = lines[:5] + [""] + lines[5:30] + ["", ""] + lines[30:] + ["", ""]
    add("blank lines", "\n".join(blank))
    add("blank lines crlf", "\r\n".join(blank))
    add("whitespace line", "\n".join(lines[:5] + ["   "] + lines[5:]))
    add("empty used row", _text(_edit(base, {(4, j): "" for j in range(1, 7)})))
    add("infinity in an otherwise blank row",
        _text(_edit(base, {**{(4, j): "" for j in range(7)}, (4, 7): "inf",
                           **{(6, j): "" for j in range(7)}, (6, 7): "-1e999",
                           **{(8, j): "" for j in range(7)}, (8, 7): "5"})))
    add("infinity in an otherwise blank row, marker reparse",
        _text(_edit(base, {**{(4, j): "" for j in range(7)}, (4, 7): "1e999",
                           (9, 1): "---", (10, 1): "x"})))
    add("comma-only row", "\n".join(lines[:6] + [",,,,,,,"] + lines[6:]))
    add("spaces after delimiter", _text(base, sep=", "))
    add("spaces semicolon comma", _text(base, sep="; ", decimal=","))
    add("leading space", " " + text)
    add("quoted header", '"time_s","ias_kt","pressure_alt_ft","oat_c","ELEV_POS","FSTK",'
        '"nz_g","rpm"\n' + text.split("\n", 1)[1])
    add("quoted cells", _text([[f'"{c}"' if j in (1, 7) else c for j, c in enumerate(r)]
                               for r in base]))
    add("cp1252", ("time_s,ias_kt,pressure_alt_ft,OAT (°C),ELEV_POS,FSTK,nz_g,rpm\n"
                   + text.split("\n", 1)[1]).encode("cp1252"))
    add("utf8 header", "time_s,ias_kt,pressure_alt_ft,OAT (°C),ELEV_POS,FSTK,nz_g,rpm\n"
        + text.split("\n", 1)[1])
    clock = [[f"10:{k // 600:02d}:{(k / 10) % 60:06.3f}", *r[1:]] for k, r in enumerate(base)]
    add("clock time", _text(clock))
    iso = [[f"2026-05-01T10:{k // 600:02d}:{(k / 10) % 60:06.3f}Z", *r[1:]]
           for k, r in enumerate(base)]
    add("iso time", _text(iso))
    add("glitch", _text(_edit(base, {(30, 4): "99"})))
    add("duplicate time", _text(_edit(base, {(31, 0): base[30][0]})))
    add("gap", _text([[f"{float(r[0]) + (8 if k > 60 else 0):.2f}", *r[1:]]
                      for k, r in enumerate(base)]))
    flights = [[*r, "F1" if k < 60 else "F2"] for k, r in enumerate(base)]
    add("flight column", _text(flights, header=[*_HEADER, "flight"]))
    add("event column", _text([[*r, str(k % 3) if k % 7 else ""] for k, r in enumerate(base)],
                              header=[*_HEADER, "event"]))
    add("point table", _text([[str(k * 60), *r[1:]] for k, r in enumerate(base[:6])]))
    add("forced point table", text, kind="point_table")
    add("no time", _text([r[1:] for r in base], header=_HEADER[1:]))
    add("ignored column", text, column_map={**MAP, "rpm": "-"})
    add("constant force", _text(_edit(base, {(k, 5): "0" for k in range(len(base))})))
    add("duplicate header", _text([[*r, r[1]] for r in base], header=[*_HEADER, "ias_kt"]),
        column_map={**MAP, "ias_kt": "-"})
    add("empty header cell", _text([[*r, "1"] for r in base], header=[*_HEADER, ""]))
    long = _rows(4000, seed=9)
    add("long crlf partial", _text(long, eol="\r\n") + "400.00,95.1,5500")
    add("long lone cr partial", _text(long, eol="\r") + "400.00,95.1,5500\r")
    add("long semicolon comma blanks", _text(_edit(long, {(3000, 1): "---", (3500, 2): "inf"}),
                                             sep=";", decimal=",") + "\n\n")
    add("error time backwards", _text(_edit(base, {(50, 0): "1.00"})))
    add("error header only", _text([]))
    add("error implausible", _text(_edit(base, {(k, 1): "400" for k in range(20)})))
    add("error empty", b"")
    for path in sorted(LOGS.iterdir()):
        if path.suffix in (".csv", ".tsv", ".bin", ".html", ".json") and path != EXPECTED:
            add(f"file {path.name}", path.read_bytes(), column_map=None, inverted=())
            add(f"file {path.name} mapped", path.read_bytes())
    return cases


def describe(raw: bytes, name: str, kwargs: dict) -> dict:
    """Everything read_log gives for these bytes, as JSON-able values (floats bit for bit)."""
    try:
        log = read_log(raw, name=name, **kwargs)
    except TrimlogError as exc:
        return {"error": type(exc).__name__, "message": str(exc)}
    frame = log.data
    return {
        "kind": log.kind,
        "kind_reason": log.kind_reason,
        "source": log.source,
        "columns": [list(map(str, (c.header, c.canonical, c.unit, c.conversion, c.inverted)))
                    for c in log.columns],
        "findings": [repr(f) for f in log.findings],
        "warnings": list(log.warnings),
        "dropped": [[d.reason, d.count, list(d.lines)] for d in log.dropped],
        "n_rows_read": log.n_rows_read,
        "started_at": log.started_at,
        "frame_columns": list(frame.columns),
        "dtypes": [str(d) for d in frame.dtypes],
        "index": [bits(v) for v in frame.index],
        # Each column's values bit for bit, as a digest (the file stays small).
        "values": {c: digest([bits(v) for v in frame[c].tolist()]) for c in frame.columns},
        "first_row": [bits(v) for v in frame.iloc[0].tolist()] if len(frame) else [],
    }


def _all() -> dict[str, dict]:
    return {name: describe(raw, f"{name}.csv", kwargs) for name, (raw, kwargs) in
            _cases().items()}


@pytest.fixture(scope="module")
def expected() -> dict[str, dict]:
    return load(EXPECTED)


def test_the_cases_are_the_stored_ones(expected):
    assert sorted(_cases()) == sorted(expected)


@pytest.mark.parametrize("name", sorted(_cases()))
def test_read_log_gives_the_stored_read(name, expected):
    raw, kwargs = _cases()[name]
    assert_same(name, describe(raw, f"{name}.csv", kwargs), expected[name])


if __name__ == "__main__":
    write_when_asked(EXPECTED, _all, "tests/input/test_read_equivalence.py", sys.argv[1:])
