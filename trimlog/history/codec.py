"""What the flight-history store keeps, as values: records, checks, points JSON, exports.

:mod:`trimlog.history.store` holds every SQL statement; this module holds the rest
of what it needs, none of it touching the database:

* the record types the store returns (:class:`AircraftRecord`,
  :class:`FlightRecord`, ...), also importable from :mod:`trimlog.history.store`;
* checks of the values given to the store (text, dates, angles, JSON), each
  failure a :class:`~trimlog.errors.StoreError` naming the key;
* a Points DataFrame to its column schema and JSON rows and back, with its
  column order and dtypes;
* the export files: the lossless JSON document's format, the CSV tables,
  with cells a spreadsheet would run as a formula neutralised.

References
----------
OWASP, "CSV Injection" (https://owasp.org/www-community/attacks/CSV_Injection).
"""

from __future__ import annotations

import base64
import csv
import datetime as dt
import enum
import hashlib
import json
import math
import re
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any, Final

import numpy as np
import pandas as pd

from trimlog.errors import StoreError
from trimlog.files import os_reason, write_files_atomically

EXPORT_JSON: Final = "trimlog-history.json"
EXPORT_FORMAT: Final = "trimlog-history-export"
EXPORT_FORMAT_VERSION: Final = 1
EXPORT_FILES: Final = (EXPORT_JSON, "aircraft.csv", "flights.csv", "points.csv", "analyses.csv")
_RESERVED_POINT_COLUMNS: Final = frozenset({"flight_id"})
_FIXED_POINT_COLUMNS: Final = ("point", "included")  # stored as columns, not in values_json


class Keep(enum.Enum):
    """The type of :data:`KEEP`."""

    KEEP = 0


KEEP: Final = Keep.KEEP
"""Default of :meth:`Store.update_flight` arguments: leave the field as it is."""


@dataclass(frozen=True)
class AircraftRecord:
    """One aircraft and its current profile version."""

    id: int
    name: str
    created_at: str
    profile_version: int
    profile_text: str
    profile_sha256: str
    profile_imported_at: str


@dataclass(frozen=True)
class FlightRecord:
    """One stored flight (without its raw bytes and points)."""

    id: int
    aircraft_id: int
    flight_order: int
    sha256: str
    filename: str
    size_bytes: int
    date: dt.date | None
    label: str | None
    notes: str | None
    loading: dict[str, Any] | None
    incidence_label: str | None
    incidence_deg: float | None
    config: str | None
    profile_version: int
    n_points: int
    n_included: int
    imported_at: str


@dataclass(frozen=True)
class ImportOutcome:
    """What :meth:`Store.import_flight` did: a new flight, or the one already stored."""

    flight_id: int
    created: bool
    message: str
    #: The flight's place in the programme and the number of flights, when the import
    #: renumbered them (``order=``); None otherwise.
    number: int | None = None
    of: int | None = None


@dataclass(frozen=True)
class RestoreSummary:
    """Counts of what :meth:`Store.import_export` brought in."""

    n_aircraft: int
    n_flights: int
    n_points: int
    n_analyses: int


# -- values -----------------------------------------------------------------------


def sha256_hex(data: bytes | str) -> str:
    """SHA-256 of bytes, or of text as UTF-8, in hexadecimal."""
    return hashlib.sha256(data.encode() if isinstance(data, str) else data).hexdigest()


def _plain(obj: Any, where: str) -> Any:
    """Return ``obj`` as plain JSON types, or raise naming the offending key."""
    if obj is None or isinstance(obj, bool | str):
        return obj
    if isinstance(obj, np.generic):
        return _plain(obj.item(), where)
    if isinstance(obj, int):
        return obj
    if isinstance(obj, float):
        if not math.isfinite(obj):
            raise StoreError(f"{where}: {obj} cannot be stored; give None for a missing number")
        return obj
    if isinstance(obj, np.ndarray):
        return _plain(obj.tolist(), where)
    if isinstance(obj, Mapping):
        out = {}
        for key, value in obj.items():
            if not isinstance(key, str):
                raise StoreError(f"{where}: key {key!r} is not text; JSON keys must be text")
            out[key] = _plain(value, f"{where}.{key}")
        return out
    if isinstance(obj, list | tuple):
        return [_plain(v, f"{where}[{i}]") for i, v in enumerate(obj)]
    raise StoreError(f"{where}: a {type(obj).__name__} cannot be stored as JSON")


def dumps_json(obj: Any, where: str) -> str:
    """Return ``obj`` as JSON text; StoreError naming the key under ``where`` if it cannot be."""
    # ASCII escapes keep any text, even lone surrogates from undecodable file names.
    return json.dumps(_plain(obj, where), allow_nan=False)


def opt_text(value: Any, key: str) -> str | None:
    """Check optional text: valid Unicode or None; StoreError naming ``key`` otherwise."""
    if value is None:
        return None
    if not isinstance(value, str):
        raise StoreError(f"{key}: expected text or None, found {type(value).__name__} {value!r}")
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        raise StoreError(f"{key}: {value!r} is not valid Unicode text") from None
    if "\x00" in value:
        # PostgreSQL text cannot hold NUL; refused on both engines so both keep the same things.
        raise StoreError(f"{key}: {value!r} holds a NUL character (\\x00), which the history "
                         "cannot keep; remove it")
    return value


def opt_deg(value: Any, key: str) -> float | None:
    """Check an optional angle [deg]: a finite number or None; StoreError naming ``key``."""
    if value is None:
        return None
    try:
        deg = float(value)
    except (TypeError, ValueError):
        raise StoreError(f"{key}: expected a number of degrees or None, found {value!r}") from None
    if not math.isfinite(deg):
        raise StoreError(f"{key}: expected a finite number of degrees, found {value!r}")
    return deg


def opt_date(value: Any, key: str) -> str | None:
    """Check an optional date (``date`` or ``YYYY-MM-DD``); return it as ISO text or None."""
    if value is None:
        return None
    if isinstance(value, dt.datetime):
        raise StoreError(f"{key}: expected a date, found a date and time {value!r}")
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, str):
        try:
            return dt.date.fromisoformat(value.strip()).isoformat()
        except ValueError:
            pass
    raise StoreError(f"{key}: expected a date (YYYY-MM-DD), found {value!r}")


# Fields of a flight the user gives and may change, each with its column and its check.
FLIGHT_FIELDS: Final = {
    "label": ("label", opt_text),
    "notes": ("notes", opt_text),
    "date": ("flight_date", opt_date),
    "loading": ("loading_json", lambda v, k: None if v is None else dumps_json(v, k)),
    "incidence_label": ("incidence_label", opt_text),
    "incidence_deg": ("incidence_deg", opt_deg),
    "config": ("config", opt_text),
}


def encode_details(given: Mapping[str, Any], where: str) -> dict[str, Any]:
    """Check a flight's details and return them by column; fields left at KEEP are skipped.

    Parameters
    ----------
    given : mapping
        A value (None clears) or :data:`KEEP` for every key of :data:`FLIGHT_FIELDS`.
    where : str
        Named in error messages, before the key.
    """
    return {
        col: check(given[key], f"{where}, {key}")
        for key, (col, check) in FLIGHT_FIELDS.items()
        if given[key] is not KEEP
    }


def check_log(raw: Any, filename: Any) -> bytes:
    """Check a log as given to the store: non-empty bytes with a text file name."""
    if not isinstance(raw, bytes | bytearray | memoryview):
        raise StoreError(f"{filename}: expected the log as bytes, found {type(raw).__name__}")
    raw = bytes(raw)
    if opt_text(filename, "file name") is None:
        raise StoreError("file name: expected text, found None")
    if not raw:
        raise StoreError(f"{filename}: the log is empty (0 bytes); nothing to store")
    return raw


def flight_record(row: Sequence[Any]) -> FlightRecord:
    """A flight from a row of the store's flight query (the fields of FlightRecord in order)."""
    return FlightRecord(
        id=row[0], aircraft_id=row[1], flight_order=row[2], sha256=row[3], filename=row[4],
        size_bytes=row[5], date=dt.date.fromisoformat(row[6]) if row[6] else None,
        label=row[7], notes=row[8], loading=json.loads(row[9]) if row[9] is not None else None,
        incidence_label=row[10], incidence_deg=row[11], config=row[12],
        profile_version=row[13], n_points=row[14], n_included=row[15], imported_at=row[16],
    )


def encode_points(points: pd.DataFrame, where: str) -> tuple[list[list[str]], list[tuple]]:
    """Check a Points DataFrame and turn it into its column schema and rows.

    Returns ``([[name, dtype], ...], [(point, included, values_json), ...])``;
    ``values_json`` holds the other columns in schema order, missing as null.
    """
    if not isinstance(points, pd.DataFrame):
        raise StoreError(f"{where}: expected a points DataFrame, found {type(points).__name__}")
    names = list(points.columns)
    bad = [c for c in names if not isinstance(c, str)]
    if bad or len(set(names)) != len(names):
        raise StoreError(f"{where}: point columns must be unique text names, found {names!r}")
    if reserved := _RESERVED_POINT_COLUMNS & set(names):
        raise StoreError(f"{where}: column name(s) {sorted(reserved)} are reserved by the store")
    if "point" not in names:
        raise StoreError(f"{where}: the points have no 'point' column (1-based point number)")
    point = points["point"]
    if not pd.api.types.is_integer_dtype(point) or point.isna().any():
        raise StoreError(f"{where}: column 'point' must be whole numbers, found {point.dtype}")
    if (point < 1).any() or point.duplicated().any():
        raise StoreError(f"{where}: 'point' must be unique numbers from 1, found {point.tolist()}")
    included_dtype = "bool"
    if "included" in names:
        inc = points["included"]
        if not pd.api.types.is_bool_dtype(inc) or inc.isna().any():
            raise StoreError(f"{where}: column 'included' must be True/False, found {inc.dtype}")
        included = [bool(v) for v in inc]
        included_dtype = str(inc.dtype)
    else:
        included = [True] * len(points)
        names.append("included")
    fixed = {"point": str(point.dtype), "included": included_dtype}
    schema = [
        [c, fixed[c] if c in fixed else _dtype_name(points[c], f"{where}, column '{c}'")]
        for c in names
    ]
    columns = [
        [None if pd.isna(v) else v for v in points[c].tolist()] for c in names if c not in fixed
    ]
    rows = [
        (int(p), int(inc), dumps_json([col[i] for col in columns], f"{where}, point {p}"))
        for i, (p, inc) in enumerate(zip(point.tolist(), included, strict=True))
    ]
    return schema, rows


def _dtype_name(col: pd.Series, where: str) -> str:
    """Name of a storable column dtype (numbers, True/False, text); refuse anything else."""
    if pd.api.types.is_float_dtype(col):
        if np.isinf(col.to_numpy(dtype=float, na_value=np.nan)).any():
            raise StoreError(f"{where}: holds an infinite value; give NaN for a missing number")
    elif isinstance(col.dtype, pd.StringDtype) or col.dtype == object:
        if odd := [v for v in col.dropna() if not isinstance(v, str)]:
            raise StoreError(f"{where}: text column holds a {type(odd[0]).__name__} {odd[0]!r}")
    elif not (pd.api.types.is_bool_dtype(col) or pd.api.types.is_integer_dtype(col)):
        raise StoreError(f"{where}: dtype {col.dtype} cannot be stored (numbers, True/False, text)")
    return str(col.dtype)


def _common_dtype(dtypes: set[str], missing: bool) -> str | None:
    """Dtype for a column gathered from several flights (None: let pandas choose)."""
    if len(dtypes) == 1:
        (only,) = dtypes
        if not missing or pd.api.types.pandas_dtype(only).kind == "O":
            return only
    kinds = {pd.api.types.pandas_dtype(d).kind for d in dtypes}
    if kinds <= {"i", "u", "f"}:
        return "float64"
    if kinds == {"b"}:
        return "boolean"
    return None


def decode_points(
    schemas: Mapping[int, list[list[str]]], rows: list[tuple], with_flight_id: bool
) -> pd.DataFrame:
    """Build a Points DataFrame from stored rows ``(flight_id, point, included, values_json)``."""
    # Most flights share one schema: each distinct one is looked at once, in first-seen order.
    distinct: dict[tuple[tuple[str, str], ...], None] = {}
    key_of = {}
    for fid, schema in schemas.items():
        key_of[fid] = key = tuple((str(n), str(d)) for n, d in schema)
        distinct.setdefault(key, None)
    union: dict[str, set[str]] = {}
    for key in distinct:
        for name, dtype in key:
            union.setdefault(name, set()).add(dtype)
    names = [n for n in union if n not in _FIXED_POINT_COLUMNS]
    # For each schema, where each column of the union sits in its stored values (None:
    # absent); None for a schema that holds the union's columns in the union's order.
    identity = list(range(len(names)))
    placed = {}
    for key in distinct:
        own = {n: i for i, n in enumerate(n for n, _ in key if n not in _FIXED_POINT_COLUMNS)}
        where = [own.get(n) for n in names]
        placed[key] = None if where == identity else where
    slots = {fid: placed[key] for fid, key in key_of.items()}
    values = json.loads("[" + ",".join(r[3] for r in rows) + "]")
    padded = [
        v if (where := slots[r[0]]) is None else [None if i is None else v[i] for i in where]
        for r, v in zip(rows, values, strict=True)
    ]
    columns = dict(zip(names, zip(*padded, strict=True) if padded else [()] * len(names),
                       strict=True))
    columns["point"] = [r[1] for r in rows]
    columns["included"] = [bool(r[2]) for r in rows]
    own_names = [{n for n, _ in key} for key in distinct]
    data = {"flight_id": pd.Series([r[0] for r in rows], dtype="int64")} if with_flight_id else {}
    for name, dtypes in union.items():
        missing = any(name not in o for o in own_names)
        data[name] = pd.Series(columns[name], dtype=_common_dtype(dtypes, missing))
    return pd.DataFrame(data, index=pd.RangeIndex(len(rows)))


_FORMULA_STARTS: Final = ("=", "+", "-", "@", "\t", "\r")


_AFTER_SEPARATOR = re.compile(r"([;,\t|])([=+\-@\t\r])")


def neutralise(frame: pd.DataFrame) -> pd.DataFrame:
    """Prefix text cells a spreadsheet would run as a formula with an apostrophe.

    Numeric columns are left alone, so ``-1.5`` stays a number.

    References
    ----------
    OWASP, "CSV Injection" (leading ``=``, ``+``, ``-``, ``@``, tab, carriage return).
    """
    out = frame.copy()
    for name in out.columns:
        col = out[name]
        if isinstance(col.dtype, pd.StringDtype) or col.dtype == object:
            out[name] = col.map(_neutral_cell).astype(object)
    return out


def _neutral_cell(value: Any) -> Any:
    """One text cell made inert, also where a separator inside it starts a field.

    A spreadsheet that splits the file on ``;`` (or tabs) sees ``x;=1+2`` as
    two fields, the second a formula: every part after a separator gets the
    apostrophe too (``x;'=1+2``).
    """
    if not isinstance(value, str):
        return value
    if value[:1] in _FORMULA_STARTS:
        value = "'" + value
    return _AFTER_SEPARATOR.sub(r"\1'\2", value)


# -- export files -----------------------------------------------------------------


def check_export_folder(out: Path) -> None:
    """Refuse a folder that already holds an export (an export never overwrites one).

    The export's JSON document is renamed into place last, so a folder without
    it holds at most the CSV tables of an export that did not finish; those
    are replaced.
    """
    if (out / EXPORT_JSON).exists() or (out / EXPORT_JSON).is_symlink():
        clash = [n for n in EXPORT_FILES if (out / n).exists()]
        raise StoreError(f"{out}: already holds {', '.join(clash)}; export to an empty folder")


def export_document(
    *, aircraft: Iterable[Sequence[Any]], profiles: Iterable[Sequence[Any]],
    flights: Iterable[Sequence[Any]], points: Iterable[Sequence[Any]],
    flight_columns: Sequence[str], schema_version: int,
    software_version: str, exported_at: str,
) -> dict[str, Any]:
    """Assemble the lossless JSON document of an export from the stored rows.

    Parameters
    ----------
    aircraft : iterable of rows
        ``(id, name, created_at)``.
    profiles : iterable of rows
        ``(aircraft_id, version, text, sha256, imported_at)``, by aircraft and version.
    flights : iterable of rows
        The flight columns ``flight_columns`` in order, then the raw log bytes.
    points : iterable of rows
        ``(flight_id, point, included, values_json)``, by flight and point.
    flight_columns : sequence of str
        Names of the stored flight columns.
    schema_version : int
        Schema version of the database.
    software_version, exported_at : str
        Written into the document.

    Returns
    -------
    dict
        What :func:`read_export` reads back; raw bytes as base64 text.
    """
    by_aircraft: dict[int, list[dict[str, Any]]] = {}
    for aid, version, text, digest, when in profiles:
        by_aircraft.setdefault(aid, []).append(
            {"version": version, "text": text, "sha256": digest, "imported_at": when}
        )
    by_flight: dict[int, list[list[Any]]] = {}
    for fid, point, included, values in points:
        by_flight.setdefault(fid, []).append([point, bool(included), json.loads(values)])
    items = []
    for row in flights:
        item = dict(zip(flight_columns, row[:-1], strict=True))
        item["points_columns"] = json.loads(item["points_columns"])
        if item["loading_json"] is not None:
            item["loading_json"] = json.loads(item["loading_json"])
        item["points"] = by_flight.get(item["id"], [])
        item["raw_base64"] = base64.b64encode(row[-1]).decode("ascii")
        items.append(item)
    return {
        "format": EXPORT_FORMAT,
        "format_version": EXPORT_FORMAT_VERSION,
        "schema_version": schema_version,
        "software_version": software_version,
        "exported_at": exported_at,
        "aircraft": [
            {"id": aid, "name": name, "created_at": when, "profiles": by_aircraft.get(aid, [])}
            for aid, name, when in aircraft
        ],
        "flights": items,
        # Kept, empty, for the export format: results are recomputed from the flights, never
        # stored (the analyses table of schema 2 is gone); a restore counts an old file's.
        "analyses": [],
    }


def export_tables(
    aircraft: Sequence[AircraftRecord], flights: Sequence[FlightRecord],
    points: Sequence[pd.DataFrame], analyses: Sequence[Mapping[str, Any]],
) -> dict[str, pd.DataFrame]:
    """Return the CSV tables of an export, by file name.

    Parameters
    ----------
    aircraft, flights : sequence of records
        Every aircraft and every flight.
    points : sequence of pandas.DataFrame
        The points of each aircraft (:meth:`trimlog.history.store.Store.all_points`),
        in the order of ``aircraft``; an ``aircraft`` column is inserted.
    analyses : sequence of mapping
        The ``analyses`` of the export document.

    Returns
    -------
    dict of str to pandas.DataFrame
        ``aircraft.csv`` (without the profile text), ``flights.csv``,
        ``points.csv`` and ``analyses.csv``; JSON-valued cells as JSON text.
    """
    names_by_id = {a.id: a.name for a in aircraft}
    for a, frame in zip(aircraft, points, strict=True):
        frame.insert(0, "aircraft", a.name)
    return {
        "aircraft.csv": pd.DataFrame(
            [asdict(a) for a in aircraft], columns=list(AircraftRecord.__dataclass_fields__)
        ).drop(columns="profile_text"),
        "flights.csv": pd.DataFrame(
            [{"aircraft": names_by_id[f.aircraft_id], **asdict(f),
              "loading": None if f.loading is None else json.dumps(f.loading)}
             for f in flights],
            columns=["aircraft", *FlightRecord.__dataclass_fields__],
        ),
        "points.csv": (
            pd.concat(points, ignore_index=True) if points
            else pd.DataFrame(columns=["aircraft", "flight_id"])
        ),
        "analyses.csv": pd.DataFrame(
            [{**a, "flight_ids": json.dumps(a["flight_ids"]), "result": json.dumps(a["result"])}
             for a in analyses],
            columns=["id", "aircraft_id", "created_at", "software_version", "profile_version",
                     "flight_ids", "result"],
        ),
    }


def write_export(out: Path, doc: Mapping[str, Any], tables: Mapping[str, pd.DataFrame]
                 ) -> list[Path]:
    """Write the export document and its CSV tables (neutralised) into ``out``.

    Returns
    -------
    list of Path
        The files written, the JSON document first.
    """
    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(f"{out}: cannot write the export ({os_reason(exc)})") from exc
    items: list[tuple[Path, bytes | str]] = []
    for name, frame in tables.items():
        # Every text cell quoted: a spreadsheet splitting on ';' (or tabs) cannot see a
        # formula inside a cell such as "x;=1+2"; numbers stay unquoted numbers.
        text = neutralise(frame).to_csv(None, index=False, quoting=csv.QUOTE_NONNUMERIC)
        items.append((out / name, text.encode("utf-8", errors="backslashreplace")))
    # The JSON document last: a folder holding it holds a complete export.
    items.append((out / EXPORT_JSON, json.dumps(doc, indent=1)))
    written = write_files_atomically(items, what="export")
    return [written[-1], *written[:-1]]


def read_export(directory: str | Path) -> tuple[Path, dict[str, Any]]:
    """Read and check the JSON document of an export.

    Returns
    -------
    tuple of (Path, dict)
        The document's file and its content, of this format and version.
    """
    src = Path(directory) / EXPORT_JSON
    try:
        doc = json.loads(src.read_text(encoding="utf-8"))
    except OSError as exc:
        raise StoreError(f"{src}: cannot read the export ({exc.strerror or exc})") from exc
    except ValueError as exc:
        raise StoreError(f"{src}: not valid JSON ({exc})") from exc
    if not isinstance(doc, dict) or doc.get("format") != EXPORT_FORMAT:
        raise StoreError(f"{src}: not a trimlog history export (no format {EXPORT_FORMAT!r})")
    if doc.get("format_version") != EXPORT_FORMAT_VERSION:
        raise StoreError(
            f"{src}: export format version {doc.get('format_version')!r}; this trimlog reads "
            f"version {EXPORT_FORMAT_VERSION}"
        )
    return src, doc


def decode_raw(flight: Mapping[str, Any], src: Path) -> bytes:
    """A flight's log bytes from the export document, checked against their SHA-256 and size."""
    raw = base64.b64decode(flight["raw_base64"], validate=True)
    if sha256_hex(raw) != flight["sha256"] or len(raw) != flight["size_bytes"]:
        raise StoreError(
            f"{src}: flight {flight['id']}: the log bytes do not match their SHA-256 "
            "and size; the export is damaged, nothing was restored"
        )
    return raw


def clean(value: Any) -> Any:
    """JSON-safe copy: numpy scalars to Python, tuples to lists, non-finite floats to None."""
    if isinstance(value, dict):
        if all(type(k) is str for k in value) and all(
            v is None or type(v) is int or type(v) is str or type(v) is bool
            or (type(v) is float and math.isfinite(v)) for v in value.values()
        ):
            return dict(value)  # plain already (a record of a table): no call per value
        return {str(k): clean(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        if all(type(v) is int or type(v) is str or (type(v) is float and math.isfinite(v))
               for v in value):
            return list(value)  # plain already (line numbers, names): no call per item
        return [clean(v) for v in value]
    if isinstance(value, np.bool_ | bool):
        return bool(value)
    if isinstance(value, np.integer):
        return int(value)
    if isinstance(value, float | np.floating):
        value = float(value)
        return value if math.isfinite(value) else None
    if value is pd.NA or value is pd.NaT:
        return None
    return value
