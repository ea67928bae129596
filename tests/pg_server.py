"""A throw-away PostgreSQL cluster for the tests of the server store.

The session fixture ``pg_server`` starts Debian's (or any) PostgreSQL
server binaries in a temporary folder on a free loopback port, with ``trust``
authentication for loopback only, and removes it all at the end.  When
the process runs as root the server runs as the unprivileged ``postgres``
user (PostgreSQL refuses to run as root).

``TRIMLOG_TEST_PG=postgresql://user@host:port/db`` uses an existing server
instead (a role that may create databases).  Without either, the PostgreSQL
tests are skipped with the reason, except when ``CI=true``: there a skip is
a failure.
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
import uuid
from collections.abc import Iterator
from dataclasses import dataclass, field
from pathlib import Path

import pytest

ENV_SERVER = "TRIMLOG_TEST_PG"


def in_ci() -> bool:
    return os.environ.get("CI", "").strip().lower() in ("1", "true", "yes")


def _bindir() -> Path | None:
    found = shutil.which("initdb")
    if found:
        return Path(found).parent
    versions = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"),
                      key=lambda p: int(Path(p).parts[-3]) if Path(p).parts[-3].isdigit() else 0)
    return Path(versions[-1]).parent if versions else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@dataclass
class Server:
    """A running server: ``url(db)`` names one of its databases as the admin role."""

    host: str
    port: int
    user: str
    admin_db: str
    _stop: list = field(default_factory=list)
    _shared: list = field(default_factory=list)

    def url(self, database: str, user: str | None = None) -> str:
        return f"postgresql://{user or self.user}@{self.host}:{self.port}/{database}"

    def admin(self, sql: str, database: str | None = None) -> list[tuple]:
        """Run one statement as the admin role in autocommit; return any rows."""
        import psycopg

        with psycopg.connect(host=self.host, port=self.port, user=self.user,
                             dbname=database or self.admin_db, autocommit=True) as conn:
            cur = conn.execute(sql)
            return cur.fetchall() if cur.description else []

    def new_database(self) -> str:
        name = f"trimlog_test_{uuid.uuid4().hex[:12]}"
        self.admin(f"CREATE DATABASE {name}")
        return name

    def drop_database(self, name: str) -> None:
        self.admin(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)")

    def new_location(self, user: str | None = None) -> str:
        """A URL naming a new empty schema of the shared test database.

        A schema per test (chosen by libpq's ``options=-csearch_path=...``)
        isolates tests like a database per test at a fraction of the cost
        of ``CREATE DATABASE`` on a busy machine.
        """
        if not self._shared:
            self._shared.append(self.new_database())
        schema = f"t_{uuid.uuid4().hex[:12]}"
        self.admin(f"CREATE SCHEMA {schema}", self._shared[0])
        return f"{self.url(self._shared[0], user)}?options=-csearch_path%3D{schema}"

    def drop_location(self, url: str) -> None:
        schema = url.rsplit("%3D", 1)[1]
        self.admin(f"DROP SCHEMA IF EXISTS {schema} CASCADE", self._shared[0])


def _as_postgres() -> list[str]:
    """Prefix that runs a command as the unprivileged postgres user when we are root."""
    if os.geteuid() != 0:
        return []
    try:
        pwd.getpwnam("postgres")
    except KeyError:
        raise RuntimeError("running as root, but no postgres user to run the server") from None
    return ["runuser", "-u", "postgres", "--"]


def start_cluster() -> Server:
    """initdb + pg_ctl start in a new temporary folder; raises RuntimeError with the reason."""
    bindir = _bindir()
    if bindir is None:
        raise FileNotFoundError("no PostgreSQL server binaries (initdb) on this machine")
    prefix = _as_postgres()
    top = Path(tempfile.mkdtemp(prefix="trimlog-pg-"))
    if prefix:
        shutil.chown(top, "postgres", "postgres")
    data, log, port = top / "data", top / "server.log", _free_port()

    def run(*args: str) -> None:
        proc = subprocess.run([*prefix, *args], capture_output=True, text=True, timeout=120)
        if proc.returncode:
            raise RuntimeError(f"{args[0]} failed: {proc.stderr.strip() or proc.stdout.strip()}")

    run(str(bindir / "initdb"), "-D", str(data), "-A", "trust", "-U", "postgres",
        "--no-sync", "-E", "UTF8", "--locale=C")
    # A throw-away cluster: durability off for speed, loopback only, socket in the temp folder.
    opts = (f"-p {port} -k {top} -c listen_addresses=127.0.0.1 -c fsync=off "
            "-c synchronous_commit=off -c full_page_writes=off -c max_connections=60")
    run(str(bindir / "pg_ctl"), "-D", str(data), "-l", str(log), "-w", "-o", opts, "start")
    server = Server("127.0.0.1", port, "postgres", "postgres")

    def stop() -> None:
        subprocess.run([*prefix, str(bindir / "pg_ctl"), "-D", str(data), "-m", "immediate",
                        "stop"], capture_output=True, timeout=60)
        shutil.rmtree(top, ignore_errors=True)

    server._stop.append(stop)
    return server


def _from_env(text: str) -> Server:
    from sqlalchemy import make_url

    url = make_url(text)
    return Server(url.host or "127.0.0.1", url.port or 5432, url.username or "postgres",
                  url.database or "postgres")


@pytest.fixture(scope="session")
def pg_server() -> Iterator[Server]:
    """The PostgreSQL server of the test session (skipped without one, failed in CI)."""
    try:
        server = _from_env(os.environ[ENV_SERVER]) if os.environ.get(ENV_SERVER) \
            else start_cluster()
        server.admin("SELECT 1")
    except (OSError, RuntimeError, subprocess.SubprocessError, ImportError) as exc:
        reason = (f"PostgreSQL tests need a server: {exc} (install Debian's 'postgresql' "
                  f"package, or set {ENV_SERVER}=postgresql://user@host:port/db)")
        if in_ci():
            pytest.fail(f"CI=true: {reason}", pytrace=False)
        pytest.skip(reason)
    try:
        yield server
    finally:
        for stop in server._stop:
            stop()


@pytest.fixture
def pg_url(pg_server: Server) -> Iterator[str]:
    """A new empty store location on the test server, dropped afterwards."""
    url = pg_server.new_location()
    try:
        yield url
    finally:
        pg_server.drop_location(url)


def make_location(engine: str, folder: Path, request, name: str = "history"):
    """A new empty store location: an SQLite file in ``folder``, or a server URL."""
    if engine == "sqlite":
        return folder / f"{name}.sqlite"
    return request.getfixturevalue("pg_server").new_location()
