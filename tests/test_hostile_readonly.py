"""Read-only history databases (issue 19 §4): read commands open them read-only.

An archived copy on a read-only medium, a file without write permission or a
folder that cannot be written must still be listed, trended, planned,
exported and backed up; a command that writes is refused with a clear error
and nothing changes.  Before: ``flights`` and ``export`` of a read-only
database failed.

The real read-only medium is a tmpfs remounted read-only inside a private
mount namespace (``unshare --mount``, as root, which ignores permission
bits); without root, permission bits make the file and folder read-only.
"""

from __future__ import annotations

import hashlib
import json
import os
import shutil
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, main
from trimlog.errors import StoreError
from trimlog.history import store

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"


@pytest.fixture(scope="module")
def history(tmp_path_factory) -> Path:
    """A two-flight demo history, closed cleanly (no -wal or -shm file left)."""
    db = tmp_path_factory.mktemp("ro") / "h.sqlite"
    assert main(["import", str(SAMPLES / "flight1_points.csv"), str(SAMPLES / "flight2.csv"),
                 "--aircraft", str(SAMPLES / "tinkerfinch_tf2.toml"), "--db", str(db)]) == 0
    assert not db.with_name("h.sqlite-wal").exists()
    return db


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def test_read_commands_do_not_change_the_file(history, tmp_path, capsys):
    db = tmp_path / "h.sqlite"
    shutil.copy(history, db)
    before, mtime = sha(db), db.stat().st_mtime_ns
    for args in (["flights"], ["trend"], ["plan"], ["export", str(tmp_path / "ex")],
                 ["backup", str(tmp_path / "copy.sqlite")]):
        code = main([*args, "--db", str(db)])
        out, err = capsys.readouterr()
        assert code in (EXIT_OK, 1), (args, err)
        assert "Traceback" not in err
    assert (sha(db), db.stat().st_mtime_ns) == (before, mtime)
    with store.open_store(tmp_path / "copy.sqlite", read_only=True) as st:
        assert [len(st.flights(a.id)) for a in st.aircraft_list()] == [2]


def test_a_store_opened_read_only_refuses_every_write(history, tmp_path):
    db = tmp_path / "h.sqlite"
    shutil.copy(history, db)
    before = sha(db)
    with store.open_store(db, read_only=True) as st:
        assert st.read_only
        (aircraft,) = st.aircraft_list()
        flights = st.flights(aircraft.id)
        for write in (lambda: st.set_point_included(flights[0].id, 1, False),
                      lambda: st.upsert_aircraft("Other", "[aircraft]\n"),
                      lambda: st.update_flight(flights[0].id, label="x"),
                      lambda: st.import_flight(aircraft.id, b"x", "x.csv",
                                               st.flight_points(flights[0].id))):
            with pytest.raises(StoreError, match="opened read-only.*nothing changed"):
                write()
    assert sha(db) == before


@pytest.mark.parametrize(("content", "match"), [
    (None, "no such history database"),
    (b"", "holds no trimlog history yet"),
    (b"not a database at all" * 10, "not an SQLite database"),
])
def test_read_only_open_never_creates_or_accepts_a_non_history(content, match, tmp_path):
    db = tmp_path / "h.sqlite"
    if content is not None:
        db.write_bytes(content)
    with pytest.raises(StoreError, match=match):
        store.open_store(db, read_only=True)
    assert sorted(p.name for p in tmp_path.iterdir()) == ([] if content is None else ["h.sqlite"])


def test_read_only_open_of_a_folder_is_refused(tmp_path):
    with pytest.raises(StoreError, match="is a folder"):
        store.open_store(tmp_path, read_only=True)


# What runs on the read-only medium: one interpreter, every command in process.
_ON_MEDIUM = textwrap.dedent("""
    import json, sys
    from trimlog.cli import main
    db, out = sys.argv[1], sys.argv[2]
    codes = {}
    for name, args in {
        "flights": ["flights"], "trend": ["trend"], "plan": ["plan"],
        "export": ["export", out + "/ex"], "backup": ["backup", out + "/copy.sqlite"],
        "exclude": ["exclude", "--flight", "1", "--point", "2"],
        "edit": ["edit", "--flight", "1", "--label", "x"],
        "import": ["import", sys.argv[3], "--aircraft", sys.argv[4]],
    }.items():
        codes[name] = main([*args, "--db", db])
    print("CODES=" + json.dumps(codes))
""")


def _run_on_read_only_medium(history: Path, tmp_path: Path, *, wal: bytes | None = None
                             ) -> subprocess.CompletedProcess:
    medium, out = tmp_path / "medium", tmp_path / "out"
    medium.mkdir()
    out.mkdir()
    env = {**os.environ, "PYTHONPATH": str(ROOT), "NO_COLOR": "1"}
    args = [sys.executable, "-c", _ON_MEDIUM, str(medium / "h.sqlite"), str(out),
            str(SAMPLES / "flight3.csv"), str(SAMPLES / "tinkerfinch_tf2.toml")]
    if os.geteuid() != 0:
        shutil.copy(history, medium / "h.sqlite")
        if wal is not None:
            (medium / "h.sqlite-wal").write_bytes(wal)
        (medium / "h.sqlite").chmod(0o444)
        medium.chmod(0o555)
        try:
            return subprocess.run(args, capture_output=True, text=True, env=env, timeout=120)
        finally:
            medium.chmod(0o755)
    if shutil.which("unshare") is None:
        pytest.skip("unshare (util-linux) is missing: cannot make a read-only medium as root")
    extra = f"printf '%s' {wal.decode()!r} > {medium}/h.sqlite-wal && " if wal else ""
    script = (f"mount -t tmpfs -o size=16m tmpfs {medium} && cp {history} {medium}/ && {extra}"
              f"mount -o remount,ro {medium} && exec \"$@\"")
    done = subprocess.run(["unshare", "--mount", "sh", "-c", script, "sh", *args],
                          capture_output=True, text=True, env=env, timeout=120)
    if "mount:" in done.stderr and "CODES=" not in done.stdout:
        pytest.skip(f"cannot mount a read-only tmpfs here: {done.stderr.strip()[:200]}")
    return done


def _codes(done: subprocess.CompletedProcess) -> dict[str, int]:
    line = next((x for x in done.stdout.splitlines() if x.startswith("CODES=")), None)
    assert line is not None, done.stderr[-2000:]
    return json.loads(line.removeprefix("CODES="))


@pytest.mark.slow  # one interpreter on a read-only medium
def test_a_database_on_a_read_only_medium_is_read_and_never_written(history, tmp_path):
    done = _run_on_read_only_medium(history, tmp_path)
    codes = _codes(done)
    assert "Traceback" not in done.stderr
    for read in ("flights", "trend", "plan", "export", "backup"):
        assert codes[read] in (EXIT_OK, 1), (read, done.stderr[-2000:])  # 1: plan says not yet
    assert codes["flights"] == EXIT_OK and codes["export"] == EXIT_OK
    for write in ("exclude", "edit", "import"):
        assert codes[write] == EXIT_BAD_INPUT, (write, done.stderr[-2000:])
    assert done.stderr.count("cannot be written (a read-only file or folder)") == 3
    assert (tmp_path / "out" / "ex" / "trimlog-history.json").is_file()
    with store.open_store(tmp_path / "out" / "copy.sqlite", read_only=True) as st:
        assert [len(st.flights(a.id)) for a in st.aircraft_list()] == [2]


@pytest.mark.slow  # one interpreter on a read-only medium
def test_unapplied_changes_on_a_read_only_medium_are_named_not_ignored(history, tmp_path):
    done = _run_on_read_only_medium(history, tmp_path, wal=b"x" * 64)
    codes = _codes(done)
    assert codes["flights"] == EXIT_BAD_INPUT
    assert "h.sqlite-wal cannot be read from a folder that cannot be written" in done.stderr
    assert "Traceback" not in done.stderr
