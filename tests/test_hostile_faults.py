"""Faults during import (issue 19): killed, concurrent, out of disk; the store survives.

Each importer is a forked child of this test process (the package already
imported, so a run costs milliseconds rather than an interpreter start):

* **kills**: 60 seeded SIGKILLs of an importing child: 20 at a random moment of
  a whole ``trimlog import`` (reading, points, storing; the moment drawn over
  the measured length of one import; about half land before it ends), 40 at a
  chosen SQL statement of
  ``history.service.import_flight`` (every statement of the import in turn,
  so every stage of the write transaction and the renumbering is hit; the
  log's reading is done once beforehand, as it writes nothing).  After every
  kill the store opens, passes its own check (SQLite integrity and foreign
  keys, every log against its SHA-256), every flight is whole (its points
  and log all there) or absent, and the flight order has no gap; at the end
  killed flights import and none is stored twice;
* **concurrent**: 4 children import 3 flights each into one store at once:
  all 12 stored, order 1..12, check clean;
* **disk full**: a child under a file-size limit (``RLIMIT_FSIZE``, as
  ``ulimit -f``) imports a long log: exit 2 with a clear message, no
  traceback, and the store holds what it held.
"""

from __future__ import annotations

import os
import random
import resource
import signal
import sqlite3
import sys
import time
from pathlib import Path

import pytest

import trimlog.history.service  # noqa: F401 - imported before forking: children inherit it
from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, main
from trimlog.history import store

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
N_TIMED_KILLS = 20
N_STATEMENT_KILLS = 40
N_IMPORTERS, FLIGHTS_EACH = 4, 3

pytestmark = pytest.mark.skipif(not hasattr(os, "fork"), reason="needs os.fork (POSIX)")


def point_table(folder: Path, k: int) -> Path:
    """The demo point table, made a distinct flight ``k`` (one temperature changed)."""
    lines = (SAMPLES / "flight1_points.csv").read_text(encoding="utf-8").splitlines()
    first = next(i for i, line in enumerate(lines) if line.startswith("TP"))
    cells = lines[first].split(",")
    cells[3] = f"{10 + k * 0.01:.2f}"  # oat_c: the bytes (and the SHA-256) differ
    lines[first] = ",".join(cells)
    path = folder / f"f{k:03d}.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def child(args: list[str], out: Path, *, file_limit: int | None = None,
          start: float | None = None) -> int:
    """Fork a child running ``trimlog ARGS`` (output to ``out``); return its pid."""
    pid = os.fork()
    if pid:
        return pid
    code = 99
    try:
        _output_to(out)
        if file_limit is not None:
            resource.setrlimit(resource.RLIMIT_FSIZE, (file_limit, file_limit))
        if start is not None:
            time.sleep(max(0.0, start - time.time()))
        code = main(args)
    except BaseException:  # noqa: BLE001 - a child never returns into pytest
        code = 98
    finally:
        sys.stdout.flush()
        os._exit(code if isinstance(code, int) else 97)


def _output_to(out: Path) -> None:
    """In a child: stdout and stderr (the file descriptors and Python's) into ``out``."""
    fd = os.open(out, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    os.dup2(fd, 1)
    os.dup2(fd, 2)
    sys.stdout = sys.stderr = os.fdopen(os.dup(fd), "w", buffering=1)


@pytest.fixture(scope="module", autouse=True)
def _warm(tmp_path_factory):
    """One import in this process first: children inherit the loaded modules and units."""
    folder = tmp_path_factory.mktemp("warm")
    assert main(import_args(point_table(folder, 999), folder / "h.sqlite")) == EXIT_OK


def reap(pid: int) -> int:
    _, status = os.waitpid(pid, 0)
    return -os.WTERMSIG(status) if os.WIFSIGNALED(status) else os.WEXITSTATUS(status)


def import_args(log: Path, db: Path) -> list[str]:
    return ["import", str(log), "--aircraft", str(PROFILE), "--db", str(db)]


def assert_consistent(db: Path) -> set[str]:
    """The store opens, checks clean, every flight whole, order gap-free; its flights' files."""
    with store.open_store(db) as st:
        assert st.check() == []
        names: set[str] = set()
        for aircraft in st.aircraft_list():
            flights = st.flights(aircraft.id)
            assert sorted(f.flight_order for f in flights) == list(range(1, len(flights) + 1))
            for f in flights:
                assert f.n_points == len(st.flight_points(f.id)) == 8, f
                assert len(st.raw_bytes(f.id)) == f.size_bytes
                names.add(f.filename)
    with sqlite3.connect(db) as raw:
        orphans = raw.execute("SELECT COUNT(*) FROM points WHERE flight_id NOT IN "
                              "(SELECT id FROM flights)").fetchone()[0]
        assert orphans == 0
    raw.close()
    return names


def _kill_at(n: int) -> list[int]:
    """In the child: SIGKILL itself when the n-th SQL statement is about to run (0: never).

    Returns the running count (one number in a list).
    """
    import sqlalchemy as sa

    count = [0]
    real_execute, real_driver = sa.Connection.execute, sa.Connection.exec_driver_sql

    def counted(real):
        def run(self, *a, **k):
            count[0] += 1
            if count[0] == n:
                os.kill(os.getpid(), signal.SIGKILL)
            return real(self, *a, **k)
        return run

    sa.Connection.execute = counted(real_execute)
    sa.Connection.exec_driver_sql = counted(real_driver)
    return count


def write_child(log: Path, db: Path, read, out: Path, kill_at: int) -> int:
    """Fork a child running the import's write path for ``log``; 0: report the statements."""
    from trimlog.history import service

    pid = os.fork()
    if pid:
        return pid
    try:
        _output_to(out)
        service.chain.load_flight_bytes = lambda *a, **k: read  # read once, beforehand
        count = _kill_at(kill_at)
        with store.open_store(db) as st:
            service.import_flight(st, log.read_bytes(), log.name, PROFILE.read_text(),
                                  profile_source=str(PROFILE))
        print(f"STATEMENTS={count[0]}")
    finally:
        sys.stdout.flush()
        os._exit(0)


@pytest.mark.slow  # 60 forked importers killed, each followed by a full store check
def test_sixty_seeded_kills_during_import_leave_whole_flights_or_none(tmp_path):
    db = tmp_path / "h.sqlite"
    logs = [point_table(tmp_path, k) for k in range(N_TIMED_KILLS + N_STATEMENT_KILLS + 2)]
    # One import measured whole: its length and its statements (the kill points).
    start = time.monotonic()
    assert reap(child(import_args(logs[0], db), tmp_path / "o.txt")) == EXIT_OK
    length_s = time.monotonic() - start
    from trimlog.input.profile import load_profile
    from trimlog.pipeline import chain

    read = chain.load_flight_bytes(logs[1].read_bytes(), logs[1].name, load_profile(PROFILE))
    assert reap(write_child(logs[1], db, read, tmp_path / "o.txt", 0)) == 0
    text = (tmp_path / "o.txt").read_text()
    n_statements = int(text.rpartition("STATEMENTS=")[2])
    assert n_statements > 10, text
    rng = random.Random(19)  # seeded: the same kill points on every run
    outcomes = {"killed": 0, "finished": 0}
    for k in range(N_TIMED_KILLS):
        pid = child(import_args(logs[2 + k], db), tmp_path / "o.txt")
        time.sleep(rng.uniform(0.0, length_s))
        os.kill(pid, signal.SIGKILL)
        outcomes["killed" if reap(pid) == -signal.SIGKILL else "finished"] += 1
        assert_consistent(db)
    for k in range(N_STATEMENT_KILLS):
        at = 1 + k % n_statements  # every statement, then again from the first
        pid = write_child(logs[2 + N_TIMED_KILLS + k], db, read, tmp_path / "o.txt", at)
        assert reap(pid) == -signal.SIGKILL, (tmp_path / "o.txt").read_text()[-1500:]
        assert_consistent(db)
    print(f"timed kills: {outcomes}, statement kills: {N_STATEMENT_KILLS}")  # shown with -s
    assert outcomes["killed"] >= N_TIMED_KILLS // 2, outcomes
    # Afterwards a killed flight imports (four of them, spread), and none is stored twice.
    missing = sorted({p.name for p in logs} - assert_consistent(db))
    again = missing[:: max(1, len(missing) // 4)][:4]
    assert main(["import", *(str(tmp_path / n) for n in again), "--aircraft", str(PROFILE),
                 "--db", str(db)]) == EXIT_OK
    with store.open_store(db) as st:
        names = [f.filename for a in st.aircraft_list() for f in st.flights(a.id)]
    assert len(names) == len(set(names)) and set(again) <= set(names)


@pytest.mark.slow  # four forked importers at once
def test_four_concurrent_importers_store_every_flight_once(tmp_path):
    db = tmp_path / "h.sqlite"
    store.open_store(db).close()
    logs = [point_table(tmp_path, k) for k in range(N_IMPORTERS * FLIGHTS_EACH)]
    go = time.time() + 0.5
    pids = [child(["import", *map(str, logs[i::N_IMPORTERS]), "--aircraft", str(PROFILE),
                   "--db", str(db)], tmp_path / f"o{i}.txt", start=go)
            for i in range(N_IMPORTERS)]
    codes = [reap(pid) for pid in pids]
    assert codes == [EXIT_OK] * N_IMPORTERS, [
        (tmp_path / f"o{i}.txt").read_text()[-800:] for i in range(N_IMPORTERS)]
    assert assert_consistent(db) == {p.name for p in logs}


@pytest.mark.slow  # a forked importer under a file-size limit
def test_disk_full_during_import_is_a_clear_error_and_the_store_is_intact(tmp_path):
    db = tmp_path / "h.sqlite"
    assert main(import_args(point_table(tmp_path, 0), db)) == EXIT_OK
    before = assert_consistent(db)
    size = db.stat().st_size + sum(p.stat().st_size for p in tmp_path.glob("h.sqlite-*"))
    big = tmp_path / "flight2.csv"
    big.write_bytes((SAMPLES / "flight2.csv").read_bytes())  # 455 KB of log to store
    (tmp_path / "flight2.loading.toml").write_bytes(
        (SAMPLES / "flight2.loading.toml").read_bytes())
    out = tmp_path / "o.txt"
    code = reap(child(import_args(big, db), out, file_limit=size + 64 * 1024))
    text = out.read_text()
    assert code == EXIT_BAD_INPUT, text[-1500:]
    assert "Traceback" not in text
    assert "the disk may be full or a file-size limit reached" in text, text[-800:]
    assert assert_consistent(db) == before
