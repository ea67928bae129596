"""The flight-history store: every SQL statement of trimlog lives here.

One database keeps, for each aircraft, the profile text as imported (a new
version each time the text changes, old versions kept), each flight with its
raw log bytes exactly as uploaded and their SHA-256, and the stabilized
points with the user's include/exclude choices.  Any analysis is recomputed
from what is kept.

Two engines, one schema and one set of statements (SQLAlchemy Core):

* **SQLite** (the default): one file, nothing to install.
* **PostgreSQL**: a server database shared by a test team, named by a URL
  ``postgresql://user@host:port/dbname``.  The password never appears in
  trimlog's files or arguments: libpq finds it (``PGPASSWORD``,
  ``~/.pgpass``, a service file named by ``PGSERVICE`` or ``?service=``).

The rest of the package talks to :class:`Store` only; nothing else writes
SQL.  The record types, the checks of given values, the points' JSON and the
export file formats are in :mod:`trimlog.history.codec` (no SQL there).

Guarantees
----------
* Importing the same bytes twice for one aircraft gives one flight, and the
  outcome says so: ``UNIQUE (aircraft_id, sha256)`` with an insert that does
  nothing on conflict, so two importers at once still make one flight.
* Every write is one transaction: interrupted at any moment, it leaves the
  database as it was.  SQLite: ``BEGIN IMMEDIATE`` (writers queue, 30 s busy
  timeout, WAL journal).  PostgreSQL: READ COMMITTED, and an import or
  profile change first locks its aircraft row, so imports of one aircraft
  queue (flight order stays gap-free and in commit order).
* Reads of several tables (a trend, a listing, an export) run in one snapshot
  (:meth:`Store.reading`): SQLite's WAL read transaction, PostgreSQL's
  REPEATABLE READ READ ONLY.  A flight being imported is seen whole or not.
* A file that is not a trimlog database (not SQLite, or SQLite holding other
  tables), and a PostgreSQL database holding another program's tables, are
  reported and never modified.
* A role without write rights reads; its writes are refused with a clear
  message.

Location: the path or URL given to :func:`open_store` (the command line's
``--db``), else the ``TRIMLOG_DB`` environment variable, else
``history.sqlite`` in ``platformdirs.user_data_dir("trimlog")``.

A :class:`Store` holds one connection and is meant for one thread; opening
another is cheap.

This module is longer than the others on purpose: every SQL statement of
trimlog stays in it (issue 18), so it is kept whole rather than split.

References
----------
SQLite documentation: "Write-Ahead Logging", "Atomic Commit In SQLite",
"The SQLite Online Backup API" (https://sqlite.org/docs.html).
PostgreSQL 15 documentation, 13.2 "Transaction Isolation" and INSERT
"ON CONFLICT Clause" (https://www.postgresql.org/docs/15/).
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import json
import os
import re
import sqlite3
import urllib.parse
from collections.abc import Callable, Iterator, Mapping
from contextlib import contextmanager
from pathlib import Path
from typing import Any, Final, Literal

import numpy as np
import pandas as pd
import platformdirs
import sqlalchemy as sa
from sqlalchemy.dialects import postgresql as pg_dialect
from sqlalchemy.dialects import sqlite as sqlite_dialect
from sqlalchemy.pool import NullPool

import trimlog
from trimlog.errors import StoreError
from trimlog.history.codec import (
    EXPORT_FORMAT,  # noqa: F401 (moved to store_codec; still importable from here)
    EXPORT_FORMAT_VERSION,  # noqa: F401
    EXPORT_JSON,  # noqa: F401
    FLIGHT_FIELDS,
    KEEP,
    AircraftRecord,
    FlightRecord,
    ImportOutcome,
    Keep,
    RestoreSummary,
    check_export_folder,
    check_log,
    decode_points,
    decode_raw,
    encode_details,
    encode_points,
    export_document,
    export_tables,
    flight_record,
    opt_text,
    sha256_hex,
    write_export,
)

ENV_VAR: Final = "TRIMLOG_DB"
BUSY_TIMEOUT_S: Final = 30.0
# "TRML": marks the file as trimlog's, so a foreign SQLite file is never taken for ours.
APPLICATION_ID: Final = 0x54524D4C
_SQLITE_MAGIC: Final = b"SQLite format 3\x00"
_URL_SCHEME: Final = re.compile(r"^([A-Za-z][A-Za-z0-9+.\-]*)://")

#: How a caller orders an aircraft's flights: given them as stored (by flight order, then
#: id), it returns the same records in the programme's order (e.g. the order flown).
FlightOrder = Callable[[list[FlightRecord]], list[FlightRecord]]
_PG_SCHEMES: Final = ("postgresql", "postgres", "postgresql+psycopg")
# On PostgreSQL the schema version sits in this table (SQLite uses its header).
_PG_VERSION_TABLE: Final = "trimlog_schema"
_PG_MIGRATION_LOCK: Final = APPLICATION_ID  # pg_advisory_xact_lock key
_PERMISSION_DENIED: Final = "42501"  # SQLSTATE insufficient_privilege

# -- schema -------------------------------------------------------------------------

_meta = sa.MetaData()
aircraft_t = sa.Table(
    "aircraft", _meta,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("name", sa.Text, nullable=False, unique=True),
    sa.Column("created_at", sa.Text, nullable=False),
)
profiles_t = sa.Table(
    "aircraft_profiles", _meta,
    sa.Column("aircraft_id", sa.Integer, sa.ForeignKey("aircraft.id"), primary_key=True),
    sa.Column("version", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("profile_text", sa.Text, nullable=False),
    sa.Column("sha256", sa.Text, nullable=False),
    sa.Column("imported_at", sa.Text, nullable=False),
)
flights_t = sa.Table(
    "flights", _meta,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("aircraft_id", sa.Integer, sa.ForeignKey("aircraft.id"), nullable=False),
    sa.Column("flight_order", sa.Integer, nullable=False),
    sa.Column("sha256", sa.Text, nullable=False),
    sa.Column("filename", sa.Text, nullable=False),
    sa.Column("size_bytes", sa.Integer, nullable=False),
    sa.Column("flight_date", sa.Text),
    sa.Column("label", sa.Text),
    sa.Column("notes", sa.Text),
    sa.Column("loading_json", sa.Text),
    sa.Column("incidence_label", sa.Text),
    sa.Column("incidence_deg", sa.Float(precision=53)),
    sa.Column("config", sa.Text),
    sa.Column("profile_version", sa.Integer, nullable=False),
    sa.Column("points_columns", sa.Text, nullable=False),
    sa.Column("imported_at", sa.Text, nullable=False),
    sa.UniqueConstraint("aircraft_id", "sha256"),
    sa.Index("flights_in_order", "aircraft_id", "flight_order", "id"),
)
# Raw bytes apart from the flight rows, so listing flights never reads them.
raw_logs_t = sa.Table(
    "raw_logs", _meta,
    sa.Column("flight_id", sa.Integer, sa.ForeignKey("flights.id"), primary_key=True,
              autoincrement=False),
    sa.Column("raw", sa.LargeBinary, nullable=False),
)
points_t = sa.Table(
    "points", _meta,
    sa.Column("flight_id", sa.Integer, sa.ForeignKey("flights.id"), primary_key=True,
              autoincrement=False),
    sa.Column("point", sa.Integer, primary_key=True, autoincrement=False),
    sa.Column("included", sa.Integer, sa.CheckConstraint("included IN (0, 1)"), nullable=False),
    sa.Column("values_json", sa.Text, nullable=False),
    sqlite_with_rowid=False,
)
# Schema version 2 kept analysis results that nothing read back; version 3 drops them.
_legacy = sa.MetaData()
_analyses_v2 = sa.Table(
    "analyses", _legacy,
    sa.Column("id", sa.Integer, primary_key=True),
    sa.Column("aircraft_id", sa.Integer, nullable=False),
    sa.Column("created_at", sa.Text, nullable=False),
    sa.Column("software_version", sa.Text, nullable=False),
    sa.Column("profile_version", sa.Integer, nullable=False),
    sa.Column("flight_ids_json", sa.Text, nullable=False),
    sa.Column("result_json", sa.Text, nullable=False),
    sa.Index("analyses_by_aircraft", "aircraft_id", "id"),
)

# Forward migrations: step k (1-based) takes a database from schema version k-1 to k:
# (tables created, tables dropped).  Steps are only ever appended, never edited.
_V1_TABLES: Final = (aircraft_t, profiles_t, flights_t, raw_logs_t, points_t)
_MIGRATIONS: Final[tuple[tuple[tuple[sa.Table, ...], tuple[sa.Table, ...]], ...]] = (
    (_V1_TABLES, ()),
    ((_analyses_v2,), ()),
    ((), (_analyses_v2,)),
)
SCHEMA_VERSION: Final = len(_MIGRATIONS)

_FLIGHT_COLUMNS: Final = tuple(c.name for c in flights_t.columns)


def _tables_at(version: int) -> set[str]:
    """The table names a database of schema ``version`` holds."""
    names: set[str] = set()
    for created, dropped in _MIGRATIONS[:version]:
        names |= {t.name for t in created}
        names -= {t.name for t in dropped}
    return names


# -- locations ------------------------------------------------------------------------


def default_location() -> Path | str:
    """Return the history location used when none is given.

    Returns
    -------
    Path or str
        ``$TRIMLOG_DB`` when that environment variable is set and not empty
        (a file path, or a ``postgresql://`` URL as text), else
        ``history.sqlite`` in the per-user data directory
        (``platformdirs.user_data_dir("trimlog")``, e.g.
        ``~/.local/share/trimlog`` on Linux).
    """
    env = os.environ.get(ENV_VAR, "").strip()
    if env:
        return env if _URL_SCHEME.match(env) else Path(env).expanduser()
    return Path(platformdirs.user_data_dir("trimlog")) / "history.sqlite"


def default_path() -> Path | str:
    """Same as :func:`default_location` (the older name)."""
    return default_location()


def is_server_url(location: str | Path | None) -> bool:
    """Whether ``location`` names a database server by URL (not a file)."""
    return isinstance(location, str) and bool(_URL_SCHEME.match(location.strip()))


def _server_url(text: str) -> sa.URL:
    """Check a server URL: PostgreSQL, no password; return it for the psycopg driver."""
    scheme = _URL_SCHEME.match(text).group(1).lower()
    if scheme not in _PG_SCHEMES:
        raise StoreError(
            f"{text}: unknown kind of database {scheme!r}; give a file path (SQLite) or "
            "postgresql://user@host:port/dbname")
    try:
        url = sa.make_url(text)
    except (sa.exc.ArgumentError, ValueError) as exc:
        raise StoreError(f"{_no_password(text)}: not a valid database URL ({exc})") from None
    if url.password is not None:
        raise StoreError(
            f"{_no_password(text)}: the URL holds a password; never put it in the URL (it lands "
            "in shell history and process lists). Give postgresql://user@host:port/dbname and let "
            "libpq find the password: the PGPASSWORD environment variable, ~/.pgpass, or a "
            "service file (PGSERVICE)")
    return url.set(drivername="postgresql+psycopg")


def describe_location(location: str | Path | None = None) -> str:
    """Say which store a location names, for people (nothing is opened).

    Examples
    --------
    >>> describe_location("postgresql://pilot@db.example:5432/flighttest")
    'PostgreSQL database flighttest on db.example:5432 as pilot'
    >>> describe_location("history.sqlite")
    'SQLite file history.sqlite'
    """
    where = location if location is not None else default_location()
    if not is_server_url(where):
        return f"SQLite file {Path(where).expanduser()}"
    try:
        url = sa.make_url(str(where).strip())
    except (sa.exc.ArgumentError, ValueError):
        return f"database server {_no_password(str(where))}"
    server = (url.host or "local socket") + (f":{url.port}" if url.port else "")
    who = f" as {url.username}" if url.username else ""
    return f"PostgreSQL database {url.database or '(default)'} on {server}{who}"


def _no_password(text: str) -> str:
    return re.sub(r"(://[^:/@]*:)[^@/]*@", r"\1***@", text)


def open_store(path: str | Path | None = None, *, read_only: bool = False) -> Store:
    """Open (creating or migrating if needed) the flight-history database.

    Parameters
    ----------
    path : str or Path, optional
        A database file (SQLite; missing parent folders are created), or a
        server URL ``postgresql://user@host:port/dbname`` (text; no password
        in it).  When not given: the environment variable ``TRIMLOG_DB``,
        else ``history.sqlite`` in the per-user data directory (see
        :func:`default_location`).
    read_only : bool
        Open an existing SQLite file for reading only (SQLite's ``mode=ro``):
        nothing is created, migrated or written, so a read-only file, a
        read-only folder or an archived copy can be listed, trended,
        reported, exported and backed up; any write is refused with a clear
        error.  On a server the role's rights decide (see ``Roles``).

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
        permission is denied; the URL holds a password or the server cannot
        be reached; the server database holds another program's tables.
    """
    where = path if path is not None else default_location()
    if is_server_url(where):
        return _open_server(str(where).strip())
    if read_only:
        return _open_file_read_only(Path(where).expanduser())
    return _open_file(Path(where).expanduser())


def _open_file(db: Path) -> Store:
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
    if db.exists() and not (os.access(db, os.W_OK) and os.access(db.parent, os.W_OK)):
        raise StoreError(
            f"{db}: the history database cannot be written (a read-only file or folder), and "
            "this command changes it; commands that only read it (flights, trend, plan, "
            f"analyze/report --db, export, backup) open it read-only and work; {hint}")
    engine = sa.create_engine(
        f"sqlite:///{db}", poolclass=NullPool,
        # Transactions are explicit (BEGIN IMMEDIATE for writes), so the driver's own is off.
        connect_args={"timeout": BUSY_TIMEOUT_S, "isolation_level": None},
    )
    store = _connect(engine, db, str(db), "sqlite", hint)
    try:
        c = store._conn
        c.exec_driver_sql(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        c.exec_driver_sql("PRAGMA foreign_keys = ON")
        app_id, version = store._inspect()
        c.rollback()  # ends SQLAlchemy's implicit transaction (nothing was written)
        if app_id != APPLICATION_ID or version != SCHEMA_VERSION:
            c.exec_driver_sql("PRAGMA journal_mode = WAL")
            c.rollback()
            store._initialise_or_migrate()
        store._check_writable(hint)
    except BaseException:
        store.close()
        raise
    return store


def _open_file_read_only(db: Path) -> Store:
    """Open an existing trimlog SQLite file with ``mode=ro`` (see :func:`open_store`)."""
    hint = "check the path (a read-only database is opened, never created)"
    if db.is_dir():
        raise StoreError(f"{db}: is a folder, expected a history database file; {hint}")
    if not db.exists():
        raise StoreError(f"{db}: no such history database; {hint}")
    _check_header(db, hint)
    wal, shm = (db.with_name(db.name + s) for s in ("-wal", "-shm"))
    # A WAL database needs its -shm file; in a folder that cannot be written
    # SQLite cannot create it, and the file can only be read as immutable, which
    # is right only when no -wal file holds changes not yet in the database.
    immutable = not shm.exists() and not os.access(db.parent, os.W_OK)
    if immutable and wal.exists() and wal.stat().st_size > 0:
        raise StoreError(
            f"{db}: its changes in {wal.name} cannot be read from a folder that cannot be "
            "written (the -shm file is missing); copy the database with its -wal file to a "
            "writable folder and read it there")
    uri = "file:" + urllib.parse.quote(str(db.resolve())) + "?mode=ro" + (
        "&immutable=1" if immutable else "")
    engine = sa.create_engine(
        "sqlite://", poolclass=NullPool,
        creator=lambda: sqlite3.connect(uri, uri=True, timeout=BUSY_TIMEOUT_S,
                                        isolation_level=None, check_same_thread=False))
    store = _connect(engine, db, str(db), "sqlite", hint)
    store.read_only = True
    try:
        c = store._conn
        c.exec_driver_sql(f"PRAGMA busy_timeout = {int(BUSY_TIMEOUT_S * 1000)}")
        app_id, version = store._inspect()
        c.rollback()
        if app_id != APPLICATION_ID or version == 0:
            raise StoreError(f"{db}: holds no trimlog history yet (an empty database); {hint}")
    except BaseException:
        store.close()
        raise
    return store


def _open_server(text: str) -> Store:
    url = _server_url(text)
    shown = url.render_as_string(hide_password=True).replace("postgresql+psycopg", "postgresql")
    hint = ("check the server, the database name and the role; the password comes from "
            "PGPASSWORD, ~/.pgpass or a service file")
    engine = sa.create_engine(url, poolclass=NullPool)
    store = _connect(engine, shown, shown, "postgresql", hint)
    try:
        # The tables and the version row are read by two statements, each seeing what was
        # committed when it began: a first import creating the schema between them would look
        # like a damaged database. Creators hold this lock exclusively (see
        # _initialise_or_migrate); sharing it here waits for one to commit.
        store._conn.execute(sa.text("SELECT pg_advisory_xact_lock_shared(:k)"),
                            {"k": _PG_MIGRATION_LOCK})
        _, version = store._inspect()
        store._conn.rollback()
        if version != SCHEMA_VERSION:
            store._initialise_or_migrate()
    except BaseException:
        store.close()
        raise
    return store


def _connect(engine: sa.Engine, path: Path | str, shown: str, kind: str, hint: str) -> Store:
    try:
        conn = engine.connect()
    except sa.exc.DBAPIError as exc:
        engine.dispose()
        raise StoreError(
            f"{shown}: cannot open the history database ({_reason(exc)}); {hint}") from None
    return Store(path, conn, kind=kind)


def _reason(exc: sa.exc.DBAPIError) -> str:
    """The driver's own message, on one line."""
    return " ".join(str(exc.orig).split()) or type(exc.orig).__name__


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


def _now() -> str:
    return dt.datetime.now(dt.UTC).isoformat(timespec="seconds")


def _latest_profile() -> sa.ColumnElement[bool]:
    inner = profiles_t.alias("newer")
    return profiles_t.c.version == (
        sa.select(sa.func.max(inner.c.version))
        .where(inner.c.aircraft_id == aircraft_t.c.id).scalar_subquery()
    )


_AIRCRAFT_SELECT: Final = (
    sa.select(aircraft_t.c.id, aircraft_t.c.name, aircraft_t.c.created_at, profiles_t.c.version,
              profiles_t.c.profile_text, profiles_t.c.sha256, profiles_t.c.imported_at)
    .join(profiles_t, profiles_t.c.aircraft_id == aircraft_t.c.id)
    .where(_latest_profile())
)

_FLIGHT_SELECT: Final = (
    sa.select(
        *(flights_t.c[k] for k in _FLIGHT_COLUMNS if k not in ("points_columns", "imported_at")),
        sa.func.count(points_t.c.point),
        sa.func.coalesce(sa.func.sum(points_t.c.included), 0),
        flights_t.c.imported_at,
    )
    .select_from(flights_t.outerjoin(points_t, points_t.c.flight_id == flights_t.c.id))
    .group_by(flights_t.c.id)
)

_POINT_COLUMNS: Final = (
    points_t.c.flight_id, points_t.c.point, points_t.c.included, points_t.c.values_json)


class Store:
    """The open flight-history database; get one from :func:`open_store`.

    Parameters
    ----------
    path : Path or str
        The database file, or the server URL (without password).
    conn : sqlalchemy.Connection
        An open connection; transactions are explicit.
    kind : {"sqlite", "postgresql"}
        The engine.
    """

    def __init__(self, path: Path | str, conn: sa.Connection, *, kind: str = "sqlite") -> None:
        self.path = path
        self.kind = kind
        #: Opened for reading only (``open_store(..., read_only=True)``): writes are refused.
        self.read_only = False
        self._conn = conn
        self._insert: Callable[..., Any] = (
            pg_dialect.insert if kind == "postgresql" else sqlite_dialect.insert)

    def __repr__(self) -> str:
        return f"Store({str(self.path)!r})"

    def __enter__(self) -> Store:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    def close(self) -> None:
        """Close the connection (the database stays as last committed)."""
        engine = self._conn.engine
        self._conn.close()
        engine.dispose()

    @property
    def location(self) -> str:
        """Which store this is, for people: ``SQLite file ...`` or ``PostgreSQL database ...``."""
        return describe_location(self.path)

    @property
    def schema_version(self) -> int:
        """Schema version of the open database (always :data:`SCHEMA_VERSION`)."""
        with self._read("read the schema version"):
            return self._inspect()[1]

    # -- opening, migrating ------------------------------------------------------

    def _inspect(self) -> tuple[int, int]:
        """Read the application id (SQLite) and schema version, writing nothing.

        Refuses a database of another program, a damaged one and a newer one.
        """
        c = self._conn
        try:
            tables = set(sa.inspect(c).get_table_names()) - {_PG_VERSION_TABLE}
            if self.kind == "sqlite":
                app_id = c.exec_driver_sql("PRAGMA application_id").scalar_one()
                version = c.exec_driver_sql("PRAGMA user_version").scalar_one()
                tables = {t for t in tables if not t.startswith("sqlite_")}
            else:
                app_id, version = self._pg_version(c)
        except sa.exc.DBAPIError as exc:
            if c.in_transaction():
                c.rollback()
            what = "an SQLite database" if self.kind == "sqlite" else "a trimlog database"
            raise StoreError(
                f"{self.path}: damaged or not {what} ({_reason(exc)}); it was left untouched"
            ) from None
        if app_id == APPLICATION_ID:
            if version > SCHEMA_VERSION:
                raise StoreError(
                    f"{self.path}: written by a newer trimlog (schema version {version}; this "
                    f"trimlog {trimlog.__version__} reads up to {SCHEMA_VERSION}); upgrade trimlog"
                )
            if missing := _tables_at(version) - tables:
                raise StoreError(
                    f"{self.path}: damaged trimlog database: schema version {version} but tables "
                    f"{sorted(missing)} are missing; it was left untouched"
                )
        elif tables or version or app_id:
            shown = ", ".join(sorted(tables)[:8]) + (", ..." if len(tables) > 8 else "")
            what = "an SQLite database" if self.kind == "sqlite" else "a database"
            raise StoreError(
                f"{self.path}: {what} of another program (tables: {shown or 'none'}; "
                f"application id {app_id:#x}, user version {version}), not a trimlog history; "
                "it was left untouched"
            )
        return app_id, version

    @staticmethod
    def _pg_version(c: sa.Connection) -> tuple[int, int]:
        if not sa.inspect(c).has_table(_PG_VERSION_TABLE):
            return 0, 0
        row = c.execute(sa.text(f"SELECT application, version FROM {_PG_VERSION_TABLE}")).first()
        if row is None:
            return 0, 0
        return (APPLICATION_ID if row[0] == "trimlog" else -1), int(row[1])

    def _initialise_or_migrate(self) -> None:
        """Create a new database or bring an older one to :data:`SCHEMA_VERSION`."""
        with self._write("create or migrate the history database") as c:
            if self.kind == "postgresql":
                c.execute(sa.text("SELECT pg_advisory_xact_lock(:k)"), {"k": _PG_MIGRATION_LOCK})
            # Another process may have initialised or migrated it meanwhile: look again.
            _, version = self._inspect()
            for created, dropped in _MIGRATIONS[version:SCHEMA_VERSION]:
                for table in created:
                    table.create(c)
                for table in dropped:
                    table.drop(c)
            if self.kind == "sqlite":
                c.exec_driver_sql(f"PRAGMA application_id = {APPLICATION_ID}")
                c.exec_driver_sql(f"PRAGMA user_version = {SCHEMA_VERSION}")
            else:
                c.execute(sa.text(f"CREATE TABLE IF NOT EXISTS {_PG_VERSION_TABLE} "
                                  "(application TEXT NOT NULL, version INTEGER NOT NULL)"))
                c.execute(sa.text(f"DELETE FROM {_PG_VERSION_TABLE}"))
                c.execute(sa.text(f"INSERT INTO {_PG_VERSION_TABLE} VALUES ('trimlog', :v)"),
                          {"v": SCHEMA_VERSION})

    def _check_writable(self, hint: str) -> None:
        """SQLite: fail now, not at the first import, when the file cannot be written."""
        # BEGIN IMMEDIATE alone succeeds on a read-only file; a rolled-back header write does not.
        c = self._conn
        try:
            c.exec_driver_sql("BEGIN IMMEDIATE")
            c.exec_driver_sql(f"PRAGMA user_version = {SCHEMA_VERSION}")
            c.rollback()
        except sa.exc.DBAPIError as exc:
            c.rollback()
            raise StoreError(
                f"{self.path}: the history database cannot be written ({_reason(exc)}: read-only "
                f"location or permission denied); {hint}"
            ) from None

    # -- transactions -------------------------------------------------------------

    def _failure(self, exc: sa.exc.SQLAlchemyError, what: str, *, wrote: bool) -> StoreError:
        orig = getattr(exc, "orig", None)
        if getattr(orig, "sqlstate", None) == _PERMISSION_DENIED:
            user = sa.make_url(str(self.path)).username if self.kind == "postgresql" else None
            return StoreError(
                f"{self.location}: permission denied: the role {user or '(default)'} may read "
                f"this history but not {what} (importing, excluding points and restoring need a "
                "role with write rights; see 'Roles' in DEVELOPERS.md); nothing changed")
        reason = _reason(exc) if isinstance(exc, sa.exc.DBAPIError) else str(exc)
        if any(t in reason for t in ("disk I/O error", "disk is full", "No space left")):
            reason += ": the disk may be full or a file-size limit reached; free some space"
        tail = "; nothing changed" if wrote else ""
        return StoreError(f"{self.path}: failed to {what} ({reason}){tail}")

    @contextmanager
    def _write(self, what: str) -> Iterator[sa.Connection]:
        """One write transaction: all of it is committed, or none."""
        c = self._conn
        if self.read_only:
            raise StoreError(
                f"{self.path}: opened read-only (for a command that only reads); cannot {what}: "
                "nothing changed")
        if c.in_transaction():
            raise StoreError(f"{self.path}: cannot {what} inside a read snapshot")
        try:
            if self.kind == "sqlite":
                c.exec_driver_sql("BEGIN IMMEDIATE")
            else:
                c.begin()
        except sa.exc.DBAPIError as exc:
            c.rollback()
            raise StoreError(f"{self.path}: cannot start to {what} ({_reason(exc)})") from None
        try:
            yield c
            c.commit()
        except BaseException as exc:
            c.rollback()
            if isinstance(exc, sa.exc.SQLAlchemyError):
                raise self._failure(exc, what, wrote=True) from None
            raise

    @contextmanager
    def reading(self, what: str = "read the history") -> Iterator[Store]:
        """Run several reads in one consistent snapshot (or in the transaction already open).

        A flight committed by another process while the block runs is not
        seen in it, so a trend or listing never sees part of an import.

        Examples
        --------
        >>> with open_store(":memory:") as s, s.reading():   # doctest: +SKIP
        ...     flights, points = s.flights(1), s.all_points(1)
        """
        with self._read(what):
            yield self

    @contextmanager
    def _read(self, what: str) -> Iterator[sa.Connection]:
        c = self._conn
        if c.in_transaction():
            yield c
            return
        try:
            if self.kind == "sqlite":
                c.exec_driver_sql("BEGIN")
            else:
                c.exec_driver_sql("SET TRANSACTION ISOLATION LEVEL REPEATABLE READ, READ ONLY")
            yield c
        except BaseException as exc:
            c.rollback()
            if isinstance(exc, sa.exc.SQLAlchemyError):
                raise self._failure(exc, what, wrote=False) from None
            raise
        else:
            try:
                c.commit()
            except sa.exc.SQLAlchemyError as exc:
                raise self._failure(exc, what, wrote=False) from None

    def _lock_aircraft(self, c: sa.Connection, aircraft_id: int) -> None:
        """Queue writers of one aircraft (PostgreSQL row lock; SQLite's writers queue anyway)."""
        row = c.execute(
            sa.select(aircraft_t.c.id).where(aircraft_t.c.id == aircraft_id).with_for_update()
        ).first()
        if row is None:
            raise StoreError(f"{self.path}: no aircraft with id {aircraft_id!r}")

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
            now = _now()
            c.execute(self._insert(aircraft_t).values(name=name, created_at=now)
                      .on_conflict_do_nothing(index_elements=["name"]))
            aircraft_id = c.execute(
                sa.select(aircraft_t.c.id).where(aircraft_t.c.name == name).with_for_update()
            ).scalar_one()
            latest = c.execute(
                sa.select(profiles_t.c.version, profiles_t.c.sha256)
                .where(profiles_t.c.aircraft_id == aircraft_id)
                .order_by(profiles_t.c.version.desc()).limit(1)
            ).first() or (0, None)
            if latest[1] != digest:
                c.execute(sa.insert(profiles_t).values(
                    aircraft_id=aircraft_id, version=latest[0] + 1, profile_text=profile_text,
                    sha256=digest, imported_at=now))
        return self.get_aircraft(aircraft_id)

    def aircraft_list(self) -> list[AircraftRecord]:
        """Return every aircraft with its current profile, by name."""
        with self._read("list the aircraft") as c:
            rows = c.execute(_AIRCRAFT_SELECT.order_by(aircraft_t.c.name)).all()
        return [AircraftRecord(*r) for r in rows]

    def find_aircraft(self, name: str) -> AircraftRecord | None:
        """Return the aircraft of this name, or None."""
        with self._read(f"find aircraft '{name}'") as c:
            row = c.execute(_AIRCRAFT_SELECT.where(aircraft_t.c.name == name)).first()
        return AircraftRecord(*row) if row else None

    def get_aircraft(self, aircraft_id: int) -> AircraftRecord:
        """Return aircraft ``aircraft_id``; StoreError if there is none."""
        with self._read(f"read aircraft {aircraft_id}") as c:
            row = c.execute(_AIRCRAFT_SELECT.where(aircraft_t.c.id == aircraft_id)).first()
        if row is None:
            raise StoreError(f"{self.path}: no aircraft with id {aircraft_id!r}")
        return AircraftRecord(*row)

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
        order: FlightOrder | None = None,
    ) -> ImportOutcome:
        """Store one flight: its raw log bytes, its points and what is known of it.

        Idempotent: bytes already stored for this aircraft (same SHA-256) are
        not stored again; the outcome names the flight that holds them.  Two
        processes importing the same bytes at once make one flight (a unique
        constraint and an insert that does nothing on conflict).  The import
        is one transaction: interrupted at any moment, it leaves the database
        as it was.

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
        order : callable, optional
            Renumbers the aircraft's flights in the same transaction, under the
            aircraft's lock (see :meth:`renumber`): no reader ever sees the new
            flight out of order, and two importers cannot interleave numbers.

        Returns
        -------
        ImportOutcome
            ``created`` False when the bytes were already stored; with ``order``,
            ``number`` and ``of`` give the flight's place in the new numbering.

        Raises
        ------
        StoreError
            Unknown aircraft, empty bytes, points or details that cannot be
            stored, a role without write rights.
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
        f = flights_t.c
        numbered: list[FlightRecord] = []
        with self._write(f"import {filename}") as c:
            self._lock_aircraft(c, aircraft_id)
            version = c.execute(sa.select(sa.func.max(profiles_t.c.version))
                                .where(profiles_t.c.aircraft_id == aircraft_id)).scalar_one()
            last = c.execute(sa.select(sa.func.coalesce(sa.func.max(f.flight_order), 0) + 1)
                              .where(f.aircraft_id == aircraft_id)).scalar_one()
            flight_id = c.execute(
                self._insert(flights_t).values(
                    aircraft_id=aircraft_id, flight_order=last, sha256=digest,
                    filename=filename, size_bytes=len(raw), **values, profile_version=version,
                    points_columns=json.dumps(schema), imported_at=_now(),
                ).on_conflict_do_nothing(index_elements=["aircraft_id", "sha256"]).returning(f.id)
            ).scalar_one_or_none()
            if flight_id is None:
                old = c.execute(sa.select(f.id, f.filename, f.imported_at).where(
                    f.aircraft_id == aircraft_id, f.sha256 == digest)).one()
            else:
                c.execute(sa.insert(raw_logs_t).values(flight_id=flight_id, raw=raw))
                if rows:
                    c.execute(sa.insert(points_t), [
                        {"flight_id": flight_id, "point": p, "included": inc, "values_json": v}
                        for p, inc, v in rows])
                if order is not None:
                    numbered = self._renumber(c, aircraft_id, order)
        if flight_id is None:
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
        place = next((n for n, r in enumerate(numbered, start=1) if r.id == flight_id), None)
        return ImportOutcome(
            flight_id, True,
            f"{filename}: stored as flight {flight_id} of '{aircraft.name}' "
            f"({len(rows)} points, {len(raw)} bytes, SHA-256 {digest[:12]})",
            number=place, of=len(numbered) if numbered else None,
        )

    def renumber(self, aircraft_id: int, order: FlightOrder) -> list[FlightRecord]:
        """Renumber an aircraft's flights 1..n in the order ``order`` gives, in one transaction.

        The transaction first takes the aircraft's lock (PostgreSQL ``SELECT ... FOR
        UPDATE``; SQLite's ``BEGIN IMMEDIATE`` writer), then reads every flight and writes
        the numbers that changed: an import or another renumbering of the same aircraft
        waits, so numbers are never duplicated or computed from a stale list.

        Parameters
        ----------
        aircraft_id : int
        order : callable
            Given the flights as stored, returns the same records in the new order.

        Returns
        -------
        list of FlightRecord
            The flights in their new order, ``flight_order`` 1..n.
        """
        with self._write(f"renumber the flights of aircraft {aircraft_id}") as c:
            self._lock_aircraft(c, aircraft_id)
            return self._renumber(c, aircraft_id, order)

    def _renumber(self, c: sa.Connection, aircraft_id: int,
                  order: FlightOrder) -> list[FlightRecord]:
        """Inside a write transaction holding the aircraft's lock: number the flights 1..n."""
        records = [flight_record(r) for r in c.execute(
            _FLIGHT_SELECT.where(flights_t.c.aircraft_id == aircraft_id)
            .order_by(flights_t.c.flight_order, flights_t.c.id)).all()]
        ordered = list(order(list(records)))
        if sorted(r.id for r in ordered) != sorted(r.id for r in records):
            raise StoreError(f"{self.path}: renumbering aircraft {aircraft_id}: the order must "
                             "list each of its flights once")
        out = []
        for number, r in enumerate(ordered, start=1):
            if r.flight_order != number:
                c.execute(sa.update(flights_t).values(flight_order=number)
                          .where(flights_t.c.id == r.id))
                r = dataclasses.replace(r, flight_order=number)
            out.append(r)
        return out

    def flight(self, flight_id: int) -> FlightRecord:
        """Return flight ``flight_id``; StoreError if there is none."""
        with self._read(f"read flight {flight_id}") as c:
            row = c.execute(_FLIGHT_SELECT.where(flights_t.c.id == flight_id)).first()
        if row is None:
            raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
        return flight_record(row)

    def flights(self, aircraft_id: int) -> list[FlightRecord]:
        """Return the flights of an aircraft in flight order (one query)."""
        with self._read(f"list the flights of aircraft {aircraft_id}") as c:
            rows = c.execute(
                _FLIGHT_SELECT.where(flights_t.c.aircraft_id == aircraft_id)
                .order_by(flights_t.c.flight_order, flights_t.c.id)
            ).all()
        return [flight_record(r) for r in rows]

    def flight_points(self, flight_id: int) -> pd.DataFrame:
        """Return a flight's points as imported, with the current ``included`` choices.

        Columns, their order and dtypes are those given to :meth:`import_flight`
        (text columns as pandas' text dtype); rows by point number, on a
        fresh RangeIndex.
        """
        with self._read(f"read the points of flight {flight_id}") as c:
            cols = c.execute(sa.select(flights_t.c.points_columns)
                             .where(flights_t.c.id == flight_id)).scalar_one_or_none()
            if cols is None:
                raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
            rows = c.execute(sa.select(*_POINT_COLUMNS).where(points_t.c.flight_id == flight_id)
                             .order_by(points_t.c.point)).all()
        return decode_points({flight_id: json.loads(cols)}, rows, with_flight_id=False)

    def all_points(self, aircraft_id: int) -> pd.DataFrame:
        """Return the points of every flight of an aircraft, in flight order.

        A ``flight_id`` column comes first.  A column some flights lack is
        missing (NaN/NA) there, and whole numbers then become floats.
        """
        f = flights_t.c
        with self._read(f"read the points of aircraft {aircraft_id}") as c:
            texts = dict(c.execute(
                sa.select(f.id, f.points_columns).where(f.aircraft_id == aircraft_id)).all())
            rows = c.execute(
                sa.select(*_POINT_COLUMNS).join(flights_t, f.id == points_t.c.flight_id)
                .where(f.aircraft_id == aircraft_id)
                .order_by(f.flight_order, f.id, points_t.c.point)
            ).all()
        # most flights share one column schema: each distinct text is parsed once
        parsed = {text: json.loads(text) for text in set(texts.values())}
        schemas = {fid: parsed[text] for fid, text in texts.items()}
        return decode_points(schemas, rows, with_flight_id=True)

    def set_point_included(self, flight_id: int, point: int, included: bool) -> None:
        """Record the user's choice to include or exclude one point (kept, never deleted)."""
        if not isinstance(included, bool | np.bool_):
            raise StoreError(f"flight {flight_id}, point {point}: included must be True or False")
        state = "include" if included else "exclude"
        with self._write(f"{state} point {point} of flight {flight_id}") as c:
            n = c.execute(
                sa.update(points_t).values(included=int(included))
                .where(points_t.c.flight_id == flight_id, points_t.c.point == point)
            ).rowcount
            if n == 0:
                raise StoreError(f"{self.path}: flight {flight_id!r} has no point {point!r}")

    def raw_bytes(self, flight_id: int) -> bytes:
        """Return the log of a flight exactly as uploaded."""
        with self._read(f"read the log of flight {flight_id}") as c:
            raw = c.execute(sa.select(raw_logs_t.c.raw)
                            .where(raw_logs_t.c.flight_id == flight_id)).scalar_one_or_none()
        if raw is None:
            raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
        return bytes(raw)

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
        order: FlightOrder | None = None,
        points: pd.DataFrame | None = None,
    ) -> FlightRecord:
        """Change what is known of a flight; arguments not given are left as they are.

        Parameters are those of :meth:`import_flight` (None clears a field),
        plus ``flight_order``, the flight's place in the programme (flights
        are listed by it, then by id).  With ``order``, the aircraft's flights
        are renumbered in the same transaction, under its lock (a changed
        date moves the flight at once; see :meth:`renumber`).  ``points``
        replaces the values of the stored points (the same point numbers,
        e.g. found again with a corrected loading sheet); the user's
        include/exclude choices stay as they are.

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
        new_points = None if points is None else encode_points(points, f"{where}, points")
        if changes or order is not None or new_points is not None:
            # Column names come from FLIGHT_FIELDS, never from the caller.
            with self._write(f"update {where}") as c:
                aircraft_id = c.execute(sa.select(flights_t.c.aircraft_id)
                                        .where(flights_t.c.id == flight_id)).scalar_one_or_none()
                if aircraft_id is None:
                    raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
                if order is not None:
                    self._lock_aircraft(c, aircraft_id)
                if new_points is not None:
                    self._replace_point_values(c, flight_id, *new_points)
                if changes:
                    c.execute(sa.update(flights_t).values(**changes)
                              .where(flights_t.c.id == flight_id))
                if order is not None:
                    self._renumber(c, aircraft_id, order)
        return self.flight(flight_id)

    def set_flight_detail(self, flight_id: int, key: str, value: Any) -> None:
        """Set one key of a flight's ``loading`` record, leaving its other keys as they are.

        Read and written in one write transaction with the flight's row locked
        (SQLite's writers queue anyway), so a key another process sets meanwhile
        is kept.
        """
        where = f"flight {flight_id}"
        with self._write(f"update {where}") as c:
            row = c.execute(sa.select(flights_t.c.loading_json).where(flights_t.c.id == flight_id)
                            .with_for_update()).first()
            if row is None:
                raise StoreError(f"{self.path}: no flight with id {flight_id!r}")
            loading = json.loads(row[0]) if row[0] is not None else {}
            loading[key] = value
            changes = encode_details({**dict.fromkeys(FLIGHT_FIELDS, KEEP), "loading": loading},
                                     where)
            c.execute(sa.update(flights_t).values(**changes).where(flights_t.c.id == flight_id))

    def _replace_point_values(self, c: sa.Connection, flight_id: int, schema: list,
                              rows: list[tuple]) -> None:
        """New values for a flight's stored points, point by point; the choices are kept."""
        stored = [p for (p,) in c.execute(sa.select(points_t.c.point)
                                          .where(points_t.c.flight_id == flight_id)
                                          .order_by(points_t.c.point))]
        given = sorted(p for p, _, _ in rows)
        if given != stored:
            raise StoreError(
                f"{self.path}: flight {flight_id}: the points given ({len(given)}) are not the "
                f"stored ones ({len(stored)}, numbered 1..{len(stored)}); nothing changed")
        c.execute(sa.update(flights_t).values(points_columns=json.dumps(schema))
                  .where(flights_t.c.id == flight_id))
        for p, _, values in rows:
            c.execute(sa.update(points_t).values(values_json=values)
                      .where(points_t.c.flight_id == flight_id, points_t.c.point == p))

    def change_token(self) -> tuple:
        """A cheap value that changes when flights, points choices or profiles change.

        For caches (the dashboard): counts and sums, not a full read.  Edits of
        a flight's details alone do not change it.
        """
        with self._read("look for changes") as c:
            flights = c.execute(sa.select(sa.func.count(), sa.func.max(flights_t.c.id),
                                          sa.func.sum(flights_t.c.flight_order))).one()
            points = c.execute(sa.select(sa.func.count(), sa.func.sum(points_t.c.included))).one()
            profiles = c.execute(sa.select(sa.func.count()).select_from(profiles_t)).scalar_one()
        return (*flights, *points, profiles)

    # -- export, restore, backup ------------------------------------------------

    def export(self, directory: str | Path) -> list[Path]:
        """Write everything as CSV (for people and spreadsheets) and JSON (lossless).

        Files: ``trimlog-history.json`` (all aircraft with every profile
        version, flights with their raw bytes in base64, points; what
        :meth:`import_export` reads), and ``aircraft.csv``, ``flights.csv``,
        ``points.csv``, ``analyses.csv`` (empty: results are recomputed, not
        stored; kept for scripts reading the export).  Text cells of the
        CSVs starting with ``=``, ``+``, ``-``, ``@``, tab or carriage return
        get a leading apostrophe so a spreadsheet shows them instead of
        running them; numbers are written as numbers.  The same on both
        engines, from one snapshot.

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
        with self._read("read the history for export"):
            doc = self._export_document()
            aircraft = self.aircraft_list()
            flights = [f for a in aircraft for f in self.flights(a.id)]
            points = [self.all_points(a.id) for a in aircraft]
        return write_export(out, doc, export_tables(aircraft, flights, points, doc["analyses"]))

    def _export_document(self) -> dict[str, Any]:
        """Everything in the database as one JSON-ready dict (inside a read transaction)."""
        c, p, f = self._conn, profiles_t.c, flights_t.c
        return export_document(
            aircraft=c.execute(sa.select(aircraft_t).order_by(aircraft_t.c.id)),
            profiles=c.execute(sa.select(p.aircraft_id, p.version, p.profile_text, p.sha256,
                                         p.imported_at).order_by(p.aircraft_id, p.version)),
            flights=c.execute(
                sa.select(*(f[k] for k in _FLIGHT_COLUMNS), raw_logs_t.c.raw)
                .join(raw_logs_t, raw_logs_t.c.flight_id == f.id).order_by(f.id)),
            points=c.execute(sa.select(*_POINT_COLUMNS)
                             .order_by(points_t.c.flight_id, points_t.c.point)),
            flight_columns=_FLIGHT_COLUMNS, schema_version=SCHEMA_VERSION,
            software_version=trimlog.__version__, exported_at=_now(),
        )

    def import_export(self, directory: str | Path) -> RestoreSummary:
        """Bring an :meth:`export` into this database, which must be empty.

        Ids, profile versions, raw bytes, points with their choices and
        timestamps come back exactly, on either engine; each log's SHA-256
        is checked against its bytes.  All in one transaction.  Analysis
        results of older exports are not restored (results are recomputed
        from the flights); their number is reported in ``n_analyses``.

        Parameters
        ----------
        directory : str or Path
            The folder holding ``trimlog-history.json``.

        Returns
        -------
        RestoreSummary

        Raises
        ------
        StoreError
            The export is damaged, truncated, foreign, of another schema
            version or edited so that it breaks a rule of a fresh import; the
            first problem is named (table, row, column) and nothing is written
            (:func:`trimlog.history.restore_check.load_export`).
        """
        from trimlog.history.restore_check import load_export

        src, doc = load_export(directory, SCHEMA_VERSION, import_rules=False)
        return self.restore_document(doc, src)

    def restore_document(self, doc: Mapping[str, Any], src: Path | str) -> RestoreSummary:
        """Restore an export document already checked by ``restore_check.load_export``."""
        return self._restore(doc, src)

    def _restore(self, doc: Mapping[str, Any], src: Path | str) -> RestoreSummary:
        n_points = 0
        with self._write(f"restore {src}") as c:
            if c.execute(sa.select(sa.func.count()).select_from(aircraft_t)).scalar_one():
                raise StoreError(
                    f"{self.path}: already holds aircraft; restore {src} into an empty database")
            try:
                for a in doc["aircraft"]:
                    c.execute(sa.insert(aircraft_t).values(
                        id=a["id"], name=a["name"], created_at=a["created_at"]))
                    c.execute(sa.insert(profiles_t), [
                        {"aircraft_id": a["id"], "version": p["version"],
                         "profile_text": p["text"], "sha256": p["sha256"],
                         "imported_at": p["imported_at"]} for p in a["profiles"]])
                for f in doc["flights"]:
                    raw = decode_raw(f, src)
                    loading = f["loading_json"]
                    c.execute(sa.insert(flights_t).values({
                        **{k: f[k] for k in _FLIGHT_COLUMNS},
                        "points_columns": json.dumps(f["points_columns"]),
                        "loading_json": None if loading is None else json.dumps(loading),
                    }))
                    c.execute(sa.insert(raw_logs_t).values(flight_id=f["id"], raw=raw))
                    if f["points"]:
                        c.execute(sa.insert(points_t), [
                            {"flight_id": f["id"], "point": p, "included": int(bool(inc)),
                             "values_json": json.dumps(v)} for p, inc, v in f["points"]])
                    n_points += len(f["points"])
                n_analyses = len(doc.get("analyses") or ())
            except (KeyError, TypeError, ValueError) as exc:
                if isinstance(exc, StoreError):
                    raise
                raise StoreError(
                    f"{src}: malformed export ({type(exc).__name__}: {exc}); nothing was restored"
                ) from exc
            if self.kind == "postgresql":
                # Explicit ids do not move the id sequences: bring them past the restored ids.
                for table in ("aircraft", "flights"):
                    c.execute(sa.text(
                        f"SELECT setval(pg_get_serial_sequence('{table}', 'id'), "
                        f"COALESCE(MAX(id), 0) + 1, false) FROM {table}"))
        return RestoreSummary(len(doc["aircraft"]), len(doc["flights"]), n_points, n_analyses)

    def backup(self, dest: str | Path) -> Path:
        """Copy the whole history to a new SQLite file.

        SQLite: the online backup API (safe while other processes write).
        PostgreSQL: everything, read in one snapshot, written into a new
        trimlog SQLite file (the server's own ``pg_dump`` remains the
        administrator's tool).  Either way the copy is a complete database
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
        if self.kind == "postgresql":
            with self._read("read the history for backup"):
                doc = self._export_document()
            try:
                with _open_file(target) as copy:
                    copy._restore(doc, str(self.path))
            except BaseException:
                for leftover in (target, *(target.with_name(target.name + s)
                                           for s in ("-wal", "-shm"))):
                    leftover.unlink(missing_ok=True)
                raise
            return target
        try:
            target.parent.mkdir(parents=True, exist_ok=True)
            copy = sqlite3.connect(target)
        except (OSError, sqlite3.Error) as exc:
            raise StoreError(f"{target}: cannot create the backup ({exc})") from exc
        try:
            self._conn.connection.dbapi_connection.backup(copy)
        except sqlite3.Error as exc:
            copy.close()
            target.unlink(missing_ok=True)
            raise StoreError(f"{target}: backup of {self.path} failed ({exc})") from exc
        copy.close()
        return target

    def check(self) -> list[str]:
        """Check the database; return the problems (none: []).

        Every stored log is checked against its SHA-256 and size; on SQLite
        also the integrity and foreign-key checks (PostgreSQL enforces its
        foreign keys itself).
        """
        problems: list[str] = []
        with self._read("check the database") as c:
            if self.kind == "sqlite":
                problems += [r[0] for r in c.exec_driver_sql("PRAGMA integrity_check")
                             if r[0] != "ok"]
                problems += [f"table {r[0]} row {r[1]} refers to a missing {r[2]} row"
                             for r in c.exec_driver_sql("PRAGMA foreign_key_check")]
            f = flights_t.c
            for fid, digest, size, raw in c.execute(
                    sa.select(f.id, f.sha256, f.size_bytes, raw_logs_t.c.raw)
                    .join(raw_logs_t, raw_logs_t.c.flight_id == f.id)):
                if sha256_hex(bytes(raw)) != digest or len(raw) != size:
                    problems.append(f"flight {fid}: the stored log does not match its SHA-256")
        return problems
