"""The flight-history store: every SQL statement of trimlog lives here.

One SQLite file per user keeps, for each aircraft, the profile text as
imported (a new version each time the text changes, old versions kept), each
flight with its raw log bytes exactly as uploaded and their SHA-256, the
stabilized points with the user's include/exclude choices, and each analysis
result with the software version that made it.  An analysis can always be
recomputed from what is kept.

The rest of the package talks to :class:`Store` only; nothing else writes
SQL, so a shared server database could later sit behind the same methods.

Guarantees
----------
* Importing the same bytes twice for one aircraft gives one flight, and the
  outcome says so.
* Every write is one ``BEGIN IMMEDIATE`` transaction: a write interrupted at
  any moment leaves the database as it was before.
* Several processes may write at once (WAL journal, 30 s busy timeout).
* A file that is not a trimlog database (not SQLite, or SQLite holding other
  tables) is reported and never modified.

Location: the path given to :func:`open_store` (the command line's
``--db``), else the ``TRIMLOG_DB`` environment variable, else
``history.sqlite`` in ``platformdirs.user_data_dir("trimlog")``.

A :class:`Store` holds one SQLite connection and is meant for one thread;
opening another is cheap.

References
----------
SQLite documentation: "Write-Ahead Logging", "Atomic Commit In SQLite",
"The SQLite Online Backup API" (https://sqlite.org/docs.html).
"""

from __future__ import annotations

import base64
import datetime as dt
import enum
import hashlib
import json
import math
import os
import sqlite3
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from dataclasses import asdict, dataclass
from pathlib import Path
from typing import Any, Final, Literal

import numpy as np
import pandas as pd
import platformdirs

import trimlog
from trimlog.errors import StoreError

ENV_VAR: Final = "TRIMLOG_DB"
BUSY_TIMEOUT_S: Final = 30.0
# "TRML": marks the file as trimlog's, so a foreign SQLite file is never taken for ours.
APPLICATION_ID: Final = 0x54524D4C
_SQLITE_MAGIC: Final = b"SQLite format 3\x00"

EXPORT_JSON: Final = "trimlog-history.json"
EXPORT_FORMAT: Final = "trimlog-history-export"
EXPORT_FORMAT_VERSION: Final = 1

# Forward migrations: step k (1-based) takes a database from schema version k-1
# to k.  Steps are only ever appended; a released step is never edited.
_MIGRATIONS: Final[tuple[tuple[str, ...], ...]] = (
    (
        """CREATE TABLE aircraft (
            id INTEGER PRIMARY KEY,
            name TEXT NOT NULL UNIQUE,
            created_at TEXT NOT NULL)""",
        """CREATE TABLE aircraft_profiles (
            aircraft_id INTEGER NOT NULL REFERENCES aircraft(id),
            version INTEGER NOT NULL,
            profile_text TEXT NOT NULL,
            sha256 TEXT NOT NULL,
            imported_at TEXT NOT NULL,
            PRIMARY KEY (aircraft_id, version))""",
        """CREATE TABLE flights (
            id INTEGER PRIMARY KEY,
            aircraft_id INTEGER NOT NULL REFERENCES aircraft(id),
            flight_order INTEGER NOT NULL,
            sha256 TEXT NOT NULL,
            filename TEXT NOT NULL,
            size_bytes INTEGER NOT NULL,
            flight_date TEXT,
            label TEXT,
            notes TEXT,
            loading_json TEXT,
            incidence_label TEXT,
            incidence_deg REAL,
            config TEXT,
            profile_version INTEGER NOT NULL,
            points_columns TEXT NOT NULL,
            imported_at TEXT NOT NULL,
            UNIQUE (aircraft_id, sha256))""",
        "CREATE INDEX flights_in_order ON flights (aircraft_id, flight_order, id)",
        # Raw bytes apart from the flight rows, so listing flights never reads them.
        """CREATE TABLE raw_logs (
            flight_id INTEGER PRIMARY KEY REFERENCES flights(id),
            raw BLOB NOT NULL)""",
        """CREATE TABLE points (
            flight_id INTEGER NOT NULL REFERENCES flights(id),
            point INTEGER NOT NULL,
            included INTEGER NOT NULL CHECK (included IN (0, 1)),
            values_json TEXT NOT NULL,
            PRIMARY KEY (flight_id, point)) WITHOUT ROWID""",
    ),
    (
        """CREATE TABLE analyses (
            id INTEGER PRIMARY KEY,
            aircraft_id INTEGER NOT NULL REFERENCES aircraft(id),
            created_at TEXT NOT NULL,
            software_version TEXT NOT NULL,
            profile_version INTEGER NOT NULL,
            flight_ids_json TEXT NOT NULL,
            result_json TEXT NOT NULL)""",
        "CREATE INDEX analyses_by_aircraft ON analyses (aircraft_id, id)",
    ),
)
SCHEMA_VERSION: Final = len(_MIGRATIONS)
_RESERVED_POINT_COLUMNS: Final = frozenset({"flight_id"})
_FIXED_POINT_COLUMNS: Final = ("point", "included")  # stored as columns, not in values_json


class _Keep(enum.Enum):
    KEEP = 0


KEEP: Final = _Keep.KEEP
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
class ProfileVersion:
    """One stored version of an aircraft's profile text."""

    aircraft_id: int
    version: int
    text: str
    sha256: str
    imported_at: str


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


@dataclass(frozen=True)
class AnalysisRecord:
    """One saved analysis result."""

    id: int
    aircraft_id: int
    created_at: str
    software_version: str
    profile_version: int
    flight_ids: tuple[int, ...]
    result: dict[str, Any]


@dataclass(frozen=True)
class RestoreSummary:
    """Counts of what :meth:`Store.import_export` brought in."""

    n_aircraft: int
    n_flights: int
    n_points: int
    n_analyses: int


def default_path() -> Path:
    """Return where the history database lives when no path is given.

    Returns
    -------
    Path
        ``$TRIMLOG_DB`` when that environment variable is set and not empty,
        else ``history.sqlite`` in the per-user data directory
        (``platformdirs.user_data_dir("trimlog")``, e.g.
        ``~/.local/share/trimlog`` on Linux).
    """
    env = os.environ.get(ENV_VAR, "").strip()
    if env:
        return Path(env).expanduser()
    return Path(platformdirs.user_data_dir("trimlog")) / "history.sqlite"


def open_store(path: str | Path | None = None) -> Store:
    """Open (creating or migrating if needed) the flight-history database.

    Parameters
    ----------
    path : str or Path, optional
        The database file.  When not given: the environment variable
        ``TRIMLOG_DB``, else ``history.sqlite`` in the per-user data directory
        (see :func:`default_path`).  Missing parent folders are created.

    Returns
    -------
    Store
        Usable as a context manager (``with open_store() as store: ...``).

    Raises
    ------
    StoreError
        The path is a folder; the file is not SQLite, is damaged, or is an
        SQLite database of another program (it is then left untouched); the
        database was written by a newer trimlog; the location is read-only or
        permission is denied.
    """
    db = Path(path).expanduser() if path is not None else default_path()
    hint = f"choose another location (the --db option or the {ENV_VAR} environment variable)"
    if db.is_dir():
        raise StoreError(f"{db}: is a folder, expected a history database file; {hint}")
    try:
        db.parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise StoreError(
            f"{db}: cannot create the folder {db.parent} for the history database "
            f"({exc.strerror or exc}); {hint}"
        ) from exc
    _check_header(db, hint)
    try:
        conn = sqlite3.connect(db, timeout=BUSY_TIMEOUT_S, isolation_level=None)
    except sqlite3.Error as exc:
        raise StoreError(f"{db}: cannot open the history database ({exc}); {hint}") from exc
    try:
        conn.execute(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        conn.execute("PRAGMA foreign_keys = ON")
        app_id, version, tables = _inspect(conn, db)
        if app_id != APPLICATION_ID or version != SCHEMA_VERSION:
            _initialise_or_migrate(conn, db, hint)
        _check_writable(conn, db, hint)
    except BaseException:
        conn.close()
        raise
    return Store(db, conn)


def _check_header(db: Path, hint: str) -> None:
    """Refuse a non-empty file that does not start with the SQLite header."""
    try:
        with db.open("rb") as fh:
            head = fh.read(100)
    except FileNotFoundError:
        return
    except OSError as exc:
        raise StoreError(f"{db}: cannot read it ({exc.strerror or exc}); {hint}") from exc
    if head and not (len(head) == 100 and head.startswith(_SQLITE_MAGIC)):
        raise StoreError(
            f"{db}: not an SQLite database (its first bytes are {head[:16]!r}, expected "
            f"{_SQLITE_MAGIC!r}); the file was left untouched; {hint}"
        )


def _inspect(conn: sqlite3.Connection, db: Path) -> tuple[int, int, set[str]]:
    """Read the application id, schema version and table names, writing nothing."""
    try:
        app_id = conn.execute("PRAGMA application_id").fetchone()[0]
        version = conn.execute("PRAGMA user_version").fetchone()[0]
        tables = {
            r[0]
            for r in conn.execute(
                "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'"
            )
        }
    except sqlite3.DatabaseError as exc:
        raise StoreError(
            f"{db}: damaged or not an SQLite database ({exc}); the file was left untouched"
        ) from exc
    if app_id == APPLICATION_ID:
        if version > SCHEMA_VERSION:
            raise StoreError(
                f"{db}: written by a newer trimlog (schema version {version}; this trimlog "
                f"{trimlog.__version__} reads up to {SCHEMA_VERSION}); upgrade trimlog"
            )
        expected = set().union(*(_tables_of(s) for s in _MIGRATIONS[:version]))
        if not expected <= tables:
            raise StoreError(
                f"{db}: damaged trimlog database: schema version {version} but tables "
                f"{sorted(expected - tables)} are missing; the file was left untouched"
            )
    elif tables or version or app_id:
        shown = ", ".join(sorted(tables)[:8]) + (", ..." if len(tables) > 8 else "")
        raise StoreError(
            f"{db}: an SQLite database of another program (tables: {shown or 'none'}; "
            f"application id {app_id:#x}, user version {version}), not a trimlog history; "
            "the file was left untouched"
        )
    return app_id, version, tables


def _tables_of(step: Sequence[str]) -> set[str]:
    return {s.split()[2] for s in step if s.startswith("CREATE TABLE")}


def _initialise_or_migrate(conn: sqlite3.Connection, db: Path, hint: str) -> None:
    """Create a new database or bring an older one to :data:`SCHEMA_VERSION`."""
    try:
        conn.execute("PRAGMA journal_mode = WAL")
        conn.execute("BEGIN IMMEDIATE")
    except sqlite3.Error as exc:
        raise StoreError(f"{db}: cannot write to the history database ({exc}); {hint}") from exc
    try:
        # Another process may have initialised or migrated it meanwhile: look again.
        _, version, _ = _inspect(conn, db)
        _migrate(conn, version, SCHEMA_VERSION)
        conn.execute("COMMIT")
    except BaseException as exc:
        if conn.in_transaction:
            conn.execute("ROLLBACK")
        if isinstance(exc, sqlite3.Error):
            raise StoreError(f"{db}: migration of the history database failed ({exc})") from exc
        raise


def _migrate(conn: sqlite3.Connection, start: int, target: int) -> None:
    """Apply migration steps ``start+1 .. target`` inside the caller's transaction."""
    for step in _MIGRATIONS[start:target]:
        for statement in step:
            conn.execute(statement)
    conn.execute(f"PRAGMA application_id = {APPLICATION_ID}")
    conn.execute(f"PRAGMA user_version = {int(target)}")


def _check_writable(conn: sqlite3.Connection, db: Path, hint: str) -> None:
    """Fail now, not at the first import, when the file cannot be written."""
    # BEGIN IMMEDIATE alone succeeds on a read-only file; a rolled-back header write does not.
    try:
        conn.execute("BEGIN IMMEDIATE")
        conn.execute(f"PRAGMA user_version = {SCHEMA_VERSION}")
        conn.execute("ROLLBACK")
    except sqlite3.Error as exc:
        if conn.in_transaction:
            conn.execute("ROLLBACK")
        raise StoreError(
            f"{db}: the history database cannot be written ({exc}: read-only location or "
            f"permission denied); {hint}"
        ) from exc


def _now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="seconds")


def _sha256(data: bytes | str) -> str:
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


def _dumps(obj: Any, where: str) -> str:
    # ASCII escapes keep any text, even lone surrogates from undecodable file names.
    return json.dumps(_plain(obj, where), allow_nan=False)


def _opt_text(value: Any, key: str) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str):
        raise StoreError(f"{key}: expected text or None, found {type(value).__name__} {value!r}")
    try:
        value.encode("utf-8")
    except UnicodeEncodeError:
        raise StoreError(f"{key}: {value!r} is not valid Unicode text") from None
    return value


def _opt_deg(value: Any, key: str) -> float | None:
    if value is None:
        return None
    try:
        deg = float(value)
    except (TypeError, ValueError):
        raise StoreError(f"{key}: expected a number of degrees or None, found {value!r}") from None
    if not math.isfinite(deg):
        raise StoreError(f"{key}: expected a finite number of degrees, found {value!r}")
    return deg


def _opt_date(value: Any, key: str) -> str | None:
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


def _point_columns(points: pd.DataFrame, where: str) -> tuple[list[list[str]], list[tuple]]:
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
        (int(p), int(inc), _dumps([col[i] for col in columns], f"{where}, point {p}"))
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


def _points_frame(
    schemas: Mapping[int, list[list[str]]], rows: list[tuple], with_flight_id: bool
) -> pd.DataFrame:
    """Build a Points DataFrame from stored rows ``(flight_id, point, included, values_json)``."""
    union: dict[str, set[str]] = {}
    for schema in schemas.values():
        for name, dtype in schema:
            union.setdefault(name, set()).add(dtype)
    names = [n for n in union if n not in _FIXED_POINT_COLUMNS]
    # For each flight, where each column of the union sits in its stored values (None: absent).
    slots = {}
    for fid, schema in schemas.items():
        own = {n: i for i, n in enumerate(n for n, _ in schema if n not in _FIXED_POINT_COLUMNS)}
        slots[fid] = [own.get(n) for n in names]
    identity = list(range(len(names)))
    values = json.loads("[" + ",".join(r[3] for r in rows) + "]")
    padded = [
        v if slots[r[0]] == identity else [None if i is None else v[i] for i in slots[r[0]]]
        for r, v in zip(rows, values, strict=True)
    ]
    columns = dict(zip(names, zip(*padded, strict=True) if padded else [()] * len(names),
                       strict=True))
    columns["point"] = [r[1] for r in rows]
    columns["included"] = [bool(r[2]) for r in rows]
    own_names = [{n for n, _ in s} for s in schemas.values()]
    data = {"flight_id": pd.Series([r[0] for r in rows], dtype="int64")} if with_flight_id else {}
    for name, dtypes in union.items():
        missing = any(name not in o for o in own_names)
        data[name] = pd.Series(columns[name], dtype=_common_dtype(dtypes, missing))
    return pd.DataFrame(data, index=pd.RangeIndex(len(rows)))


_FORMULA_STARTS: Final = ("=", "+", "-", "@", "\t", "\r")


def _neutralise(frame: pd.DataFrame) -> pd.DataFrame:
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
            out[name] = col.map(
                lambda v: "'" + v if isinstance(v, str) and v[:1] in _FORMULA_STARTS else v
            ).astype(object)
    return out


_AIRCRAFT_SELECT: Final = """
    SELECT a.id, a.name, a.created_at, p.version, p.profile_text, p.sha256, p.imported_at
    FROM aircraft a JOIN aircraft_profiles p ON p.aircraft_id = a.id
    WHERE p.version = (SELECT MAX(version) FROM aircraft_profiles WHERE aircraft_id = a.id)"""

_FLIGHT_SELECT: Final = """
    SELECT f.id, f.aircraft_id, f.flight_order, f.sha256, f.filename, f.size_bytes,
           f.flight_date, f.label, f.notes, f.loading_json, f.incidence_label,
           f.incidence_deg, f.config, f.profile_version,
           COUNT(p.point), COALESCE(SUM(p.included), 0), f.imported_at
    FROM flights f LEFT JOIN points p ON p.flight_id = f.id"""

_FLIGHT_COLUMNS: Final = (
    "id", "aircraft_id", "flight_order", "sha256", "filename", "size_bytes", "flight_date",
    "label", "notes", "loading_json", "incidence_label", "incidence_deg", "config",
    "profile_version", "points_columns", "imported_at",
)

_INSERT_FLIGHT: Final = (
    f"INSERT INTO flights ({', '.join(_FLIGHT_COLUMNS)}) "
    f"VALUES ({', '.join(':' + c for c in _FLIGHT_COLUMNS)})"
)

_INSERT_POINT: Final = (
    "INSERT INTO points (flight_id, point, included, values_json) VALUES (?, ?, ?, ?)"
)

# Fields update_flight may change, each with its column and its check.
_EDITABLE: Final = {
    "label": ("label", _opt_text),
    "notes": ("notes", _opt_text),
    "date": ("flight_date", _opt_date),
    "loading": ("loading_json", lambda v, k: None if v is None else _dumps(v, k)),
    "incidence_label": ("incidence_label", _opt_text),
    "incidence_deg": ("incidence_deg", _opt_deg),
    "config": ("config", _opt_text),
}


def _flight(row: Sequence[Any]) -> FlightRecord:
    return FlightRecord(
        id=row[0], aircraft_id=row[1], flight_order=row[2], sha256=row[3], filename=row[4],
        size_bytes=row[5], date=dt.date.fromisoformat(row[6]) if row[6] else None,
        label=row[7], notes=row[8], loading=json.loads(row[9]) if row[9] is not None else None,
        incidence_label=row[10], incidence_deg=row[11], config=row[12],
        profile_version=row[13], n_points=row[14], n_included=row[15], imported_at=row[16],
    )


def _analysis(row: Sequence[Any]) -> AnalysisRecord:
    return AnalysisRecord(
        id=row[0], aircraft_id=row[1], created_at=row[2], software_version=row[3],
        profile_version=row[4], flight_ids=tuple(json.loads(row[5])), result=json.loads(row[6]),
    )


class Store:
    """The open flight-history database; get one from :func:`open_store`.

    Parameters
    ----------
    path : Path
        The database file.
    conn : sqlite3.Connection
        An open connection in autocommit mode (transactions are explicit).
    """

    def __init__(self, path: Path, conn: sqlite3.Connection) -> None:
        self.path = path
        self._conn = conn

    def __repr__(self) -> str:
        return f"Store({str(self.path)!r})"

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the connection (the database stays as last committed)."""
        self._conn.close()

    @property
    def schema_version(self) -> int:
        """Schema version of the open database (always :data:`SCHEMA_VERSION`)."""
        return int(self._conn.execute("PRAGMA user_version").fetchone()[0])

    @contextmanager
    def _write(self, what: str) -> Iterator[sqlite3.Connection]:
        """One ``BEGIN IMMEDIATE`` transaction: all of it is committed, or none."""
        try:
            self._conn.execute("BEGIN IMMEDIATE")
        except sqlite3.Error as exc:
            raise StoreError(f"{self.path}: cannot start to {what} ({exc})") from exc
        try:
            yield self._conn
            self._conn.execute("COMMIT")
        except BaseException as exc:
            if self._conn.in_transaction:
                self._conn.execute("ROLLBACK")
            if isinstance(exc, sqlite3.Error):
                raise StoreError(f"{self.path}: failed to {what} ({exc}); nothing changed") from exc
            raise

    @contextmanager
    def _read(self, what: str) -> Iterator[sqlite3.Connection]:
        """Run several queries in one read transaction (or in the one already open)."""
        outer = self._conn.in_transaction
        try:
            if not outer:
                self._conn.execute("BEGIN")
            yield self._conn
        except BaseException as exc:
            if not outer and self._conn.in_transaction:
                self._conn.rollback()
            if isinstance(exc, sqlite3.Error):
                raise StoreError(f"{self.path}: failed to {what} ({exc})") from exc
            raise
        else:
            if not outer and self._conn.in_transaction:
                try:
                    self._conn.execute("COMMIT")
                except sqlite3.Error as exc:
                    raise StoreError(f"{self.path}: failed to {what} ({exc})") from exc

    # -- aircraft ---------------------------------------------------------------

    def upsert_aircraft(self, name: str, profile_text: str) -> AircraftRecord:
        """Add an aircraft, or record a new profile version when its text changed.

        Parameters
        ----------
        name : str
            The aircraft's name (the profile's ``aircraft.name``); the key.
        profile_text : str
            The profile TOML exactly as imported.  Identical text keeps the
            current version; different text becomes version n+1 and the older
            versions are kept.

        Returns
        -------
        AircraftRecord
        """
        if not _opt_text(name, "aircraft name") or not name.strip():
            raise StoreError(f"aircraft name: expected non-empty text, found {name!r}")
        if _opt_text(profile_text, f"profile of '{name}'") is None:
            raise StoreError(f"profile of '{name}': expected TOML text, found None")
        digest = _sha256(profile_text)
        with self._write(f"store the profile of '{name}'") as c:
            row = c.execute("SELECT id FROM aircraft WHERE name = ?", (name,)).fetchone()
            now = _now()
            if row is None:
                aircraft_id = c.execute(
                    "INSERT INTO aircraft (name, created_at) VALUES (?, ?)", (name, now)
                ).lastrowid
                latest = (0, None)
            else:
                aircraft_id = row[0]
                latest = c.execute(
                    "SELECT version, sha256 FROM aircraft_profiles WHERE aircraft_id = ? "
                    "ORDER BY version DESC LIMIT 1", (aircraft_id,),
                ).fetchone()
            if latest[1] != digest:
                c.execute(
                    "INSERT INTO aircraft_profiles (aircraft_id, version, profile_text, sha256, "
                    "imported_at) VALUES (?, ?, ?, ?, ?)",
                    (aircraft_id, latest[0] + 1, profile_text, digest, now),
                )
        return self.get_aircraft(aircraft_id)

    def aircraft_list(self) -> list[AircraftRecord]:
        """Return every aircraft with its current profile, by name."""
        with self._read("list the aircraft") as c:
            rows = c.execute(_AIRCRAFT_SELECT + " ORDER BY a.name").fetchall()
        return [AircraftRecord(*r) for r in rows]

    def find_aircraft(self, name: str) -> AircraftRecord | None:
        """Return the aircraft of this name, or None."""
        with self._read(f"find aircraft '{name}'") as c:
            row = c.execute(_AIRCRAFT_SELECT + " AND a.name = ?", (name,)).fetchone()
        return AircraftRecord(*row) if row else None

    def get_aircraft(self, aircraft_id: int) -> AircraftRecord:
        """Return aircraft ``aircraft_id``; StoreError if there is none."""
        with self._read(f"read aircraft {aircraft_id}") as c:
            row = c.execute(_AIRCRAFT_SELECT + " AND a.id = ?", (aircraft_id,)).fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no aircraft with id {aircraft_id!r}")
        return AircraftRecord(*row)

    def profile_versions(self, aircraft_id: int) -> list[ProfileVersion]:
        """Return every stored profile version of an aircraft, oldest first."""
        self.get_aircraft(aircraft_id)
        with self._read(f"read the profiles of aircraft {aircraft_id}") as c:
            rows = c.execute(
                "SELECT aircraft_id, version, profile_text, sha256, imported_at "
                "FROM aircraft_profiles WHERE aircraft_id = ? ORDER BY version", (aircraft_id,),
            ).fetchall()
        return [ProfileVersion(*r) for r in rows]

    # -- flights ----------------------------------------------------------------

    def import_flight(
        self,
        aircraft_id: int,
        raw: bytes,
        filename: str,
        points: pd.DataFrame,
        *,
        label: str | None = None,
        date: dt.date | str | None = None,
        notes: str | None = None,
        loading: Mapping[str, Any] | None = None,
        incidence_label: str | None = None,
        incidence_deg: float | None = None,
        config: str | None = None,
    ) -> ImportOutcome:
        """Store one flight: its raw log bytes, its points and what is known of it.

        Idempotent: bytes already stored for this aircraft (same SHA-256) are
        not stored again; the outcome names the flight that holds them.  The
        import is one transaction: interrupted at any moment, it leaves the
        database as it was.

        Parameters
        ----------
        aircraft_id : int
            From :meth:`upsert_aircraft`.
        raw : bytes
            The log file exactly as uploaded.
        filename : str
            The file's original name, kept as data (never used as a path).
        points : pandas.DataFrame
            The flight's stabilized points (the Points contract): a whole-number
            ``point`` column, unique from 1; ``included`` (bool; all True when
            absent); other columns numbers, True/False or text.  The index is
            not kept; rows are stored by point number.
        label, notes, config, incidence_label : str, optional
            Free text; ``config`` names the configuration (flap setting etc.),
            ``incidence_label`` the stabilizer incidence setting.
        date : datetime.date or str, optional
            Date of the flight (``YYYY-MM-DD``).
        loading : mapping, optional
            The loading sheet, stored as JSON.
        incidence_deg : float, optional
            Stabilizer incidence of the setting [deg], leading-edge up positive.

        Returns
        -------
        ImportOutcome
            ``created`` False when the bytes were already stored.

        Raises
        ------
        StoreError
            Unknown aircraft, empty bytes, points or details that cannot be stored.
        """
        if not isinstance(raw, bytes | bytearray | memoryview):
            raise StoreError(f"{filename}: expected the log as bytes, found {type(raw).__name__}")
        raw = bytes(raw)
        if _opt_text(filename, "file name") is None:
            raise StoreError("file name: expected text, found None")
        if not raw:
            raise StoreError(f"{filename}: the log is empty (0 bytes); nothing to store")
        schema, rows = _point_columns(points, f"{filename}, points")
        details = {
            "label": label, "notes": notes, "date": date, "loading": loading,
            "incidence_label": incidence_label, "incidence_deg": incidence_deg, "config": config,
        }
        values = {col: ok(details[k], f"{filename}, {k}") for k, (col, ok) in _EDITABLE.items()}
        digest = _sha256(raw)
        aircraft = self.get_aircraft(aircraft_id)
        with self._write(f"import {filename}") as c:
            old = c.execute(
                "SELECT id, filename, imported_at FROM flights "
                "WHERE aircraft_id = ? AND sha256 = ?",
                (aircraft_id, digest),
            ).fetchone()
            if old is None:
                version = c.execute(
                    "SELECT MAX(version) FROM aircraft_profiles WHERE aircraft_id = ?",
                    (aircraft_id,),
                ).fetchone()[0]
                order = c.execute(
                    "SELECT COALESCE(MAX(flight_order), 0) + 1 FROM flights WHERE aircraft_id = ?",
                    (aircraft_id,),
                ).fetchone()[0]
                flight_id = c.execute(
                    _INSERT_FLIGHT,
                    {
                        "id": None, "aircraft_id": aircraft_id, "flight_order": order,
                        "sha256": digest, "filename": filename, "size_bytes": len(raw), **values,
                        "profile_version": version, "points_columns": json.dumps(schema),
                        "imported_at": _now(),
                    },
                ).lastrowid
                c.execute("INSERT INTO raw_logs (flight_id, raw) VALUES (?, ?)", (flight_id, raw))
                c.executemany(
                    _INSERT_POINT, [(flight_id, *r) for r in rows],
                )
        if old is not None:
            given = [k for k, v in details.items() if v is not None]
            ignored = (
                f"; the details given now ({', '.join(given)}) were not applied: "
                "change them with update_flight" if given else ""
            )
            return ImportOutcome(
                old[0], False,
                f"{filename}: already stored as flight {old[0]} of '{aircraft.name}' (same SHA-256 "
                f"{digest[:12]}, from '{old[1]}' imported {old[2]}); nothing changed{ignored}",
            )
        return ImportOutcome(
            flight_id, True,
            f"{filename}: stored as flight {flight_id} of '{aircraft.name}' "
            f"({len(rows)} points, {len(raw)} bytes, SHA-256 {digest[:12]})",
        )

    def flight(self, flight_id: int) -> FlightRecord:
        """Return flight ``flight_id``; StoreError if there is none."""
        with self._read(f"read flight {flight_id}") as c:
            row = c.execute(f"{_FLIGHT_SELECT} WHERE f.id = ? GROUP BY f.id", (flight_id,))
            row = row.fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
        return _flight(row)

    def flights(self, aircraft_id: int) -> list[FlightRecord]:
        """Return the flights of an aircraft in flight order (one query)."""
        with self._read(f"list the flights of aircraft {aircraft_id}") as c:
            rows = c.execute(
                f"{_FLIGHT_SELECT} WHERE f.aircraft_id = ? "
                "GROUP BY f.id ORDER BY f.flight_order, f.id",
                (aircraft_id,),
            ).fetchall()
        return [_flight(r) for r in rows]

    def flight_points(self, flight_id: int) -> pd.DataFrame:
        """Return a flight's points as imported, with the current ``included`` choices.

        Columns, their order and dtypes are those given to :meth:`import_flight`
        (text columns as pandas' text dtype); rows by point number, on a
        fresh RangeIndex.
        """
        with self._read(f"read the points of flight {flight_id}") as c:
            row = c.execute(
                "SELECT points_columns FROM flights WHERE id = ?", (flight_id,)
            ).fetchone()
            if row is None:
                raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
            rows = c.execute(
                "SELECT flight_id, point, included, values_json FROM points WHERE flight_id = ? "
                "ORDER BY point", (flight_id,),
            ).fetchall()
        return _points_frame({flight_id: json.loads(row[0])}, rows, with_flight_id=False)

    def all_points(self, aircraft_id: int) -> pd.DataFrame:
        """Return the points of every flight of an aircraft, in flight order.

        A ``flight_id`` column comes first.  A column some flights lack is
        missing (NaN/NA) there, and whole numbers then become floats.
        """
        with self._read(f"read the points of aircraft {aircraft_id}") as c:
            schemas = {
                fid: json.loads(cols)
                for fid, cols in c.execute(
                    "SELECT id, points_columns FROM flights WHERE aircraft_id = ?", (aircraft_id,)
                )
            }
            rows = c.execute(
                "SELECT p.flight_id, p.point, p.included, p.values_json "
                "FROM points p JOIN flights f ON f.id = p.flight_id WHERE f.aircraft_id = ? "
                "ORDER BY f.flight_order, f.id, p.point", (aircraft_id,),
            ).fetchall()
        return _points_frame(schemas, rows, with_flight_id=True)

    def set_point_included(self, flight_id: int, point: int, included: bool) -> None:
        """Record the user's choice to include or exclude one point (kept, never deleted)."""
        if not isinstance(included, bool | np.bool_):
            raise StoreError(f"flight {flight_id}, point {point}: included must be True or False")
        with self._write(f"change point {point} of flight {flight_id}") as c:
            n = c.execute(
                "UPDATE points SET included = ? WHERE flight_id = ? AND point = ?",
                (int(included), flight_id, point),
            ).rowcount
            if n == 0:
                raise StoreError(f"{self.path}: flight {flight_id!r} has no point {point!r}")

    def raw_bytes(self, flight_id: int) -> bytes:
        """Return the log of a flight exactly as uploaded."""
        with self._read(f"read the log of flight {flight_id}") as c:
            row = c.execute("SELECT raw FROM raw_logs WHERE flight_id = ?", (flight_id,)).fetchone()
        if row is None:
            raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
        return bytes(row[0])

    def update_flight(
        self,
        flight_id: int,
        *,
        label: str | None | Literal[_Keep.KEEP] = KEEP,
        notes: str | None | Literal[_Keep.KEEP] = KEEP,
        date: dt.date | str | None | Literal[_Keep.KEEP] = KEEP,
        loading: Mapping[str, Any] | None | Literal[_Keep.KEEP] = KEEP,
        incidence_label: str | None | Literal[_Keep.KEEP] = KEEP,
        incidence_deg: float | None | Literal[_Keep.KEEP] = KEEP,
        config: str | None | Literal[_Keep.KEEP] = KEEP,
        flight_order: int | Literal[_Keep.KEEP] = KEEP,
    ) -> FlightRecord:
        """Change what is known of a flight; arguments not given are left as they are.

        Parameters are those of :meth:`import_flight` (None clears a field),
        plus ``flight_order``, the flight's place in the programme (flights
        are listed by it, then by id).

        Returns
        -------
        FlightRecord
            The flight as now stored.
        """
        given = {
            "label": label, "notes": notes, "date": date, "loading": loading,
            "incidence_label": incidence_label, "incidence_deg": incidence_deg, "config": config,
        }
        where = f"flight {flight_id}"
        changes = {
            col: check(given[key], f"{where}, {key}")
            for key, (col, check) in _EDITABLE.items()
            if given[key] is not KEEP
        }
        if flight_order is not KEEP:
            if not isinstance(flight_order, int | np.integer) or isinstance(flight_order, bool):
                raise StoreError(f"{where}, flight_order: not a whole number: {flight_order!r}")
            changes["flight_order"] = int(flight_order)
        if changes:
            # Column names come from _EDITABLE, never from the caller.
            assignments = ", ".join(f"{col} = :{col}" for col in changes)
            with self._write(f"update {where}") as c:
                n = c.execute(
                    f"UPDATE flights SET {assignments} WHERE id = :flight_id",
                    {**changes, "flight_id": flight_id},
                ).rowcount
                if n == 0:
                    raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
        return self.flight(flight_id)

    # -- analyses ---------------------------------------------------------------

    def save_analysis(
        self, aircraft_id: int, flight_ids: Sequence[int], result: Mapping[str, Any]
    ) -> int:
        """Keep an analysis result with the software and profile version that made it.

        Parameters
        ----------
        aircraft_id : int
            The aircraft analysed.
        flight_ids : sequence of int
            The stored flights used, all of this aircraft.
        result : mapping
            JSON-serialisable result (numpy scalars and arrays are accepted);
            NaN or infinity is refused (give None for a missing number).

        Returns
        -------
        int
            The id of the saved analysis.
        """
        ids = [int(i) for i in flight_ids]
        if not isinstance(result, Mapping):
            raise StoreError(f"analysis result: expected a mapping, found {type(result).__name__}")
        text = _dumps(result, "analysis result")
        version = self.get_aircraft(aircraft_id).profile_version
        with self._write(f"save an analysis of aircraft {aircraft_id}") as c:
            known = {r[0] for r in c.execute("SELECT id FROM flights WHERE aircraft_id = ?",
                                             (aircraft_id,))}
            if foreign := sorted(set(ids) - known):
                raise StoreError(
                    f"{self.path}: flights {foreign} are not flights of aircraft {aircraft_id}"
                )
            return c.execute(
                "INSERT INTO analyses (aircraft_id, created_at, software_version, profile_version, "
                "flight_ids_json, result_json) VALUES (?, ?, ?, ?, ?, ?)",
                (aircraft_id, _now(), trimlog.__version__, version, json.dumps(ids), text),
            ).lastrowid

    def latest_analysis(self, aircraft_id: int) -> AnalysisRecord | None:
        """Return the most recently saved analysis of an aircraft, or None."""
        with self._read(f"read the analyses of aircraft {aircraft_id}") as c:
            row = c.execute(
                "SELECT id, aircraft_id, created_at, software_version, profile_version, "
                "flight_ids_json, result_json FROM analyses WHERE aircraft_id = ? "
                "ORDER BY id DESC LIMIT 1", (aircraft_id,),
            ).fetchone()
        return _analysis(row) if row else None

    # -- export, restore, backup ------------------------------------------------

    def export(self, directory: str | Path) -> list[Path]:
        """Write everything as CSV (for people and spreadsheets) and JSON (lossless).

        Files: ``trimlog-history.json`` (all aircraft with every profile
        version, flights with their raw bytes in base64, points, analyses;
        what :meth:`import_export` reads), and ``aircraft.csv``,
        ``flights.csv``, ``points.csv``, ``analyses.csv``.  Text cells of the
        CSVs starting with ``=``, ``+``, ``-``, ``@``, tab or carriage return
        get a leading apostrophe so a spreadsheet shows them instead of
        running them; numbers are written as numbers.

        Parameters
        ----------
        directory : str or Path
            Created if missing; existing export files there are not overwritten.

        Returns
        -------
        list of Path
            The files written.
        """
        out = Path(directory)
        names = (EXPORT_JSON, "aircraft.csv", "flights.csv", "points.csv", "analyses.csv")
        if clash := [n for n in names if (out / n).exists()]:
            raise StoreError(f"{out}: already holds {', '.join(clash)}; export to an empty folder")
        with self._read("read the history for export") as c:
            doc = self._export_document(c)
            aircraft = self.aircraft_list()
            flights = [f for a in aircraft for f in self.flights(a.id)]
            points = [self.all_points(a.id) for a in aircraft]
        names_by_id = {a.id: a.name for a in aircraft}
        for a, frame in zip(aircraft, points, strict=True):
            frame.insert(0, "aircraft", a.name)
        tables = {
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
                 for a in doc["analyses"]],
                columns=["id", "aircraft_id", "created_at", "software_version", "profile_version",
                         "flight_ids", "result"],
            ),
        }
        try:
            out.mkdir(parents=True, exist_ok=True)
            written = [out / EXPORT_JSON]
            written[0].write_text(json.dumps(doc, indent=1), encoding="utf-8")
            for name, frame in tables.items():
                _neutralise(frame).to_csv(
                    out / name, index=False, encoding="utf-8", errors="backslashreplace")
                written.append(out / name)
        except OSError as exc:
            raise StoreError(f"{out}: cannot write the export ({exc.strerror or exc})") from exc
        return written

    def _export_document(self, c: sqlite3.Connection) -> dict[str, Any]:
        """Everything in the database as one JSON-ready dict."""
        profiles: dict[int, list[dict[str, Any]]] = {}
        for aid, version, text, digest, when in c.execute(
            "SELECT aircraft_id, version, profile_text, sha256, imported_at FROM aircraft_profiles "
            "ORDER BY aircraft_id, version"
        ):
            profiles.setdefault(aid, []).append(
                {"version": version, "text": text, "sha256": digest, "imported_at": when}
            )
        points: dict[int, list[list[Any]]] = {}
        for fid, point, included, values in c.execute(
            "SELECT flight_id, point, included, values_json FROM points ORDER BY flight_id, point"
        ):
            points.setdefault(fid, []).append([point, bool(included), json.loads(values)])
        flights = []
        for row in c.execute(
            f"SELECT {', '.join('f.' + k for k in _FLIGHT_COLUMNS)}, r.raw "
            "FROM flights f JOIN raw_logs r ON r.flight_id = f.id ORDER BY f.id"
        ):
            item = dict(zip(_FLIGHT_COLUMNS, row[:-1], strict=True))
            item["points_columns"] = json.loads(item["points_columns"])
            if item["loading_json"] is not None:
                item["loading_json"] = json.loads(item["loading_json"])
            item["points"] = points.get(item["id"], [])
            item["raw_base64"] = base64.b64encode(row[-1]).decode("ascii")
            flights.append(item)
        return {
            "format": EXPORT_FORMAT,
            "format_version": EXPORT_FORMAT_VERSION,
            "schema_version": SCHEMA_VERSION,
            "software_version": trimlog.__version__,
            "exported_at": _now(),
            "aircraft": [
                {"id": aid, "name": name, "created_at": when, "profiles": profiles.get(aid, [])}
                for aid, name, when in c.execute(
                    "SELECT id, name, created_at FROM aircraft ORDER BY id")
            ],
            "flights": flights,
            "analyses": [
                {
                    "id": a.id, "aircraft_id": a.aircraft_id, "created_at": a.created_at,
                    "software_version": a.software_version, "profile_version": a.profile_version,
                    "flight_ids": list(a.flight_ids), "result": a.result,
                }
                for a in map(_analysis, c.execute(
                    "SELECT id, aircraft_id, created_at, software_version, profile_version, "
                    "flight_ids_json, result_json FROM analyses ORDER BY id"
                ))
            ],
        }

    def import_export(self, directory: str | Path) -> RestoreSummary:
        """Bring an :meth:`export` into this database, which must be empty.

        Ids, profile versions, raw bytes, points with their choices, analyses
        and timestamps come back exactly; each log's SHA-256 is checked
        against its bytes.  All in one transaction.

        Parameters
        ----------
        directory : str or Path
            The folder holding ``trimlog-history.json``.

        Returns
        -------
        RestoreSummary
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
        n_points = 0
        with self._write(f"restore {src}") as c:
            if c.execute("SELECT COUNT(*) FROM aircraft").fetchone()[0]:
                raise StoreError(
                    f"{self.path}: already holds aircraft; restore {src} into an empty database")
            try:
                for a in doc["aircraft"]:
                    c.execute("INSERT INTO aircraft (id, name, created_at) VALUES (?, ?, ?)",
                              (a["id"], a["name"], a["created_at"]))
                    c.executemany(
                        "INSERT INTO aircraft_profiles (aircraft_id, version, profile_text, "
                        "sha256, imported_at) VALUES (?, ?, ?, ?, ?)",
                        [(a["id"], p["version"], p["text"], p["sha256"], p["imported_at"])
                         for p in a["profiles"]],
                    )
                for f in doc["flights"]:
                    raw = base64.b64decode(f["raw_base64"], validate=True)
                    if _sha256(raw) != f["sha256"] or len(raw) != f["size_bytes"]:
                        raise StoreError(
                            f"{src}: flight {f['id']}: the log bytes do not match their SHA-256 "
                            "and size; the export is damaged, nothing was restored"
                        )
                    loading = f["loading_json"]
                    c.execute(_INSERT_FLIGHT, {
                        **{k: f[k] for k in _FLIGHT_COLUMNS},
                        "points_columns": json.dumps(f["points_columns"]),
                        "loading_json": None if loading is None else json.dumps(loading),
                    })
                    c.execute("INSERT INTO raw_logs (flight_id, raw) VALUES (?, ?)", (f["id"], raw))
                    c.executemany(
                        _INSERT_POINT,
                        [(f["id"], p, int(bool(inc)), json.dumps(v))
                         for p, inc, v in f["points"]],
                    )
                    n_points += len(f["points"])
                c.executemany(
                    "INSERT INTO analyses (id, aircraft_id, created_at, software_version, "
                    "profile_version, flight_ids_json, result_json) VALUES (?, ?, ?, ?, ?, ?, ?)",
                    [(a["id"], a["aircraft_id"], a["created_at"], a["software_version"],
                      a["profile_version"], json.dumps(a["flight_ids"]),
                      json.dumps(a["result"]))
                     for a in doc["analyses"]],
                )
            except (KeyError, TypeError, ValueError) as exc:
                if isinstance(exc, StoreError):
                    raise
                raise StoreError(
                    f"{src}: malformed export ({type(exc).__name__}: {exc}); nothing was restored"
                ) from exc
        return RestoreSummary(
            len(doc["aircraft"]), len(doc["flights"]), n_points, len(doc["analyses"]))

    def backup(self, dest: str | Path) -> Path:
        """Copy the whole database to a new file with SQLite's online backup.

        Safe while other processes write; the copy is a complete database
        that :func:`open_store` opens.

        Parameters
        ----------
        dest : str or Path
            The new file; refused if it exists.

        Returns
        -------
        Path
        """
        target = Path(dest)
        if target.exists():
            raise StoreError(f"{target}: already exists; a backup never overwrites a file")
        try:
            target.parent.mkdir(parents=True, exist_ok=True)
            copy = sqlite3.connect(target)
        except (OSError, sqlite3.Error) as exc:
            raise StoreError(f"{target}: cannot create the backup ({exc})") from exc
        try:
            self._conn.backup(copy)
        except sqlite3.Error as exc:
            copy.close()
            target.unlink(missing_ok=True)
            raise StoreError(f"{target}: backup of {self.path} failed ({exc})") from exc
        copy.close()
        return target

    def check(self) -> list[str]:
        """Run SQLite's integrity and foreign-key checks; return the problems (none: [])."""
        with self._read("check the database") as c:
            problems = [r[0] for r in c.execute("PRAGMA integrity_check") if r[0] != "ok"]
            problems += [
                f"table {r[0]} row {r[1]} refers to a missing {r[2]} row"
                for r in c.execute("PRAGMA foreign_key_check")
            ]
        return problems
