"""The flight-history store: every SQL statement of trimlog lives here.

One SQLite file per user keeps, for each aircraft, the profile text as
imported (a new version each time the text changes, old versions kept), each
flight with its raw log bytes exactly as uploaded and their SHA-256, the
stabilized points with the user's include/exclude choices, and each analysis
result with the software version that made it.  An analysis can always be
recomputed from what is kept.

The rest of the package talks to :class:`Store` only; nothing else writes
SQL, so a shared server database could later sit behind the same methods.
The record types, the checks of given values, the points' JSON and the
export file formats are in :mod:`trimlog.history.codec` (no SQL there).

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

import datetime as dt
import json
import os
import sqlite3
from collections.abc import Iterator, Mapping, Sequence
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Final, Literal

import numpy as np
import pandas as pd
import platformdirs

import trimlog
from trimlog.errors import StoreError
from trimlog.history.codec import (
    EXPORT_FORMAT,  # noqa: F401 (moved to store_codec; still importable from here)
    EXPORT_FORMAT_VERSION,  # noqa: F401
    EXPORT_JSON,  # noqa: F401
    KEEP,
    AircraftRecord,
    AnalysisRecord,
    FlightRecord,
    ImportOutcome,
    Keep,
    ProfileVersion,
    RestoreSummary,
    analysis_record,
    check_export_folder,
    check_log,
    decode_points,
    decode_raw,
    dumps_json,
    encode_details,
    encode_points,
    export_document,
    export_tables,
    flight_record,
    opt_text,
    read_export,
    sha256_hex,
    write_export,
)

ENV_VAR: Final = "TRIMLOG_DB"
BUSY_TIMEOUT_S: Final = 30.0
# "TRML": marks the file as trimlog's, so a foreign SQLite file is never taken for ours.
APPLICATION_ID: Final = 0x54524D4C
_SQLITE_MAGIC: Final = b"SQLite format 3\x00"

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
        if not opt_text(name, "aircraft name") or not name.strip():
            raise StoreError(f"aircraft name: expected non-empty text, found {name!r}")
        if opt_text(profile_text, f"profile of '{name}'") is None:
            raise StoreError(f"profile of '{name}': expected TOML text, found None")
        digest = sha256_hex(profile_text)
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
        raw = check_log(raw, filename)
        schema, rows = encode_points(points, f"{filename}, points")
        details = {
            "label": label, "notes": notes, "date": date, "loading": loading,
            "incidence_label": incidence_label, "incidence_deg": incidence_deg, "config": config,
        }
        values = encode_details(details, filename)
        digest = sha256_hex(raw)
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
        return flight_record(row)

    def flights(self, aircraft_id: int) -> list[FlightRecord]:
        """Return the flights of an aircraft in flight order (one query)."""
        with self._read(f"list the flights of aircraft {aircraft_id}") as c:
            rows = c.execute(
                f"{_FLIGHT_SELECT} WHERE f.aircraft_id = ? "
                "GROUP BY f.id ORDER BY f.flight_order, f.id",
                (aircraft_id,),
            ).fetchall()
        return [flight_record(r) for r in rows]

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
        return decode_points({flight_id: json.loads(row[0])}, rows, with_flight_id=False)

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
        return decode_points(schemas, rows, with_flight_id=True)

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
        label: str | None | Literal[Keep.KEEP] = KEEP,
        notes: str | None | Literal[Keep.KEEP] = KEEP,
        date: dt.date | str | None | Literal[Keep.KEEP] = KEEP,
        loading: Mapping[str, Any] | None | Literal[Keep.KEEP] = KEEP,
        incidence_label: str | None | Literal[Keep.KEEP] = KEEP,
        incidence_deg: float | None | Literal[Keep.KEEP] = KEEP,
        config: str | None | Literal[Keep.KEEP] = KEEP,
        flight_order: int | Literal[Keep.KEEP] = KEEP,
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
        changes = encode_details(given, where)
        if flight_order is not KEEP:
            if not isinstance(flight_order, int | np.integer) or isinstance(flight_order, bool):
                raise StoreError(f"{where}, flight_order: not a whole number: {flight_order!r}")
            changes["flight_order"] = int(flight_order)
        if changes:
            # Column names come from FLIGHT_FIELDS, never from the caller.
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
        text = dumps_json(result, "analysis result")
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
        return analysis_record(row) if row else None

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
        check_export_folder(out)
        with self._read("read the history for export") as c:
            doc = self._export_document(c)
            aircraft = self.aircraft_list()
            flights = [f for a in aircraft for f in self.flights(a.id)]
            points = [self.all_points(a.id) for a in aircraft]
        return write_export(out, doc, export_tables(aircraft, flights, points, doc["analyses"]))

    def _export_document(self, c: sqlite3.Connection) -> dict[str, Any]:
        """Everything in the database as one JSON-ready dict."""
        return export_document(
            aircraft=c.execute("SELECT id, name, created_at FROM aircraft ORDER BY id"),
            profiles=c.execute(
                "SELECT aircraft_id, version, profile_text, sha256, imported_at "
                "FROM aircraft_profiles ORDER BY aircraft_id, version"),
            flights=c.execute(
                f"SELECT {', '.join('f.' + k for k in _FLIGHT_COLUMNS)}, r.raw "
                "FROM flights f JOIN raw_logs r ON r.flight_id = f.id ORDER BY f.id"),
            points=c.execute(
                "SELECT flight_id, point, included, values_json FROM points "
                "ORDER BY flight_id, point"),
            analyses=map(analysis_record, c.execute(
                "SELECT id, aircraft_id, created_at, software_version, profile_version, "
                "flight_ids_json, result_json FROM analyses ORDER BY id")),
            flight_columns=_FLIGHT_COLUMNS, schema_version=SCHEMA_VERSION,
            software_version=trimlog.__version__, exported_at=_now(),
        )

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
        src, doc = read_export(directory)
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
                    raw = decode_raw(f, src)
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
