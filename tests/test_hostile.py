"""Hostile input and faults (issue 19): no traceback, no hang, no silent wrong answer,
no file damaged.

Each case runs the real command line (in this process, or in a subprocess where
a limit such as ``ulimit -f`` or a signal is needed) and asserts: the exit
status (2 for bad input, 3 for an internal error), no traceback, no user file
changed, and a time budget that a hang would blow.  Every case here failed
before its fix.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_INTERNAL, EXIT_OK, main
from trimlog.files import OutputFileError, write_atomically, write_files_atomically
from trimlog.history import store
from trimlog.terminal_text import printable

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
POINT_TABLE = SAMPLES / "flight1_points.csv"
#: Seconds any one refused input may take in this process (a hang blows it by far).
BUDGET_S = 20.0


def digest(folder: Path) -> dict[str, str]:
    """SHA-256 of every file under ``folder``: proves that no user file changed."""
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file() and not p.is_symlink()}


def run(args: list[str], capsys) -> tuple[int, str, str, float]:
    start = time.monotonic()
    try:
        code = main(args)
    except SystemExit as exc:  # argparse
        code = exc.code
    elapsed = time.monotonic() - start
    out, err = capsys.readouterr()
    return code, out, err, elapsed


def assert_refused(args: list[str], capsys, folder: Path | None = None,
                   match: str = "") -> str:
    before = digest(folder) if folder is not None else None
    code, out, err, elapsed = run(args, capsys)
    assert code == EXIT_BAD_INPUT, (code, err[-1500:])
    assert "Traceback" not in err + out, err[-1500:]
    assert elapsed < BUDGET_S, elapsed
    if match:
        assert match in err, err[-1500:]
    if folder is not None:
        assert digest(folder) == before, "a user file changed"
    return err


@pytest.fixture
def work(tmp_path, monkeypatch):
    """A folder with the demo's point table, flight 2 and its sheet, and the profile."""
    for name in ("flight1_points.csv", "flight2.csv", "flight2.loading.toml",
                 "tinkerfinch_tf2.toml"):
        shutil.copy(SAMPLES / name, tmp_path / name)
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "default.sqlite"))
    monkeypatch.setenv("NO_COLOR", "1")
    return tmp_path


@contextlib.contextmanager
def fifo(path: Path):
    """A named pipe; a writer opens it after BUDGET_S so a blocked reader is freed."""
    os.mkfifo(path)
    done = threading.Event()

    def release() -> None:
        if not done.wait(BUDGET_S + 5):
            with contextlib.suppress(OSError):
                fd = os.open(path, os.O_WRONLY | os.O_NONBLOCK)
                os.close(fd)

    thread = threading.Thread(target=release, daemon=True)
    thread.start()
    try:
        yield path
    finally:
        done.set()


# --------------------------------------------------------------------------- exit codes


def test_an_internal_error_exits_3_without_a_traceback(work, capsys, monkeypatch):
    from trimlog.history import service

    def broken(*args, **kwargs):
        raise ZeroDivisionError("float division by zero")

    monkeypatch.setattr(service, "flight_listing", broken)
    store.open_store(work / "h.sqlite").close()
    code, out, err, _ = run(["flights", "--db", str(work / "h.sqlite")], capsys)
    assert code == EXIT_INTERNAL == 3
    assert "Traceback" not in err and "internal error (ZeroDivisionError" in err
    assert "bug in trimlog" in err


def test_internal_error_with_debug_shows_the_traceback(work, capsys, monkeypatch):
    from trimlog.history import service

    monkeypatch.setattr(service, "flight_listing", lambda *a, **k: 1 / 0)
    monkeypatch.setenv("TRIMLOG_DEBUG", "1")
    store.open_store(work / "h.sqlite").close()
    code, _, err, _ = run(["flights", "--db", str(work / "h.sqlite")], capsys)
    assert code == EXIT_INTERNAL and "Traceback" in err


@pytest.mark.parametrize("flight", ["99999999999999999999999", "0", "-1", "9" * 5000])
def test_huge_flight_ids_are_refused(flight, work, capsys):
    err = assert_refused(["exclude", "--db", str(work / "h.sqlite"), "--flight", flight,
                          "--point", "1"], capsys, work)
    assert "--flight" in err


# --------------------------------------------------------------------------- FIFOs


def test_a_named_pipe_as_a_log_is_refused(work, capsys):
    with fifo(work / "pipe.csv") as pipe:
        assert_refused(["analyze", str(pipe), "--aircraft", str(work / "tinkerfinch_tf2.toml")],
                       capsys, match="named pipe")


def test_a_named_pipe_as_the_profile_is_refused(work, capsys):
    with fifo(work / "pipe.toml") as pipe:
        assert_refused(["analyze", str(work / "flight1_points.csv"), "--aircraft", str(pipe)],
                       capsys, match="named pipe")


def test_a_named_pipe_as_a_loading_sheet_is_refused(work, capsys):
    with fifo(work / "pipe.loading.toml") as pipe:
        assert_refused(["analyze", str(work / "flight2.csv"), "--aircraft",
                        str(work / "tinkerfinch_tf2.toml"), "--loading",
                        f"{work / 'flight2.csv'}={pipe}"], capsys, match="named pipe")


@pytest.mark.parametrize("command", [["flights"], ["trend"], ["plan"], ["export", "out"]])
def test_a_named_pipe_as_the_database_is_refused(command, work, capsys):
    with fifo(work / "pipe.sqlite") as pipe:
        args = [command[0], "--db", str(pipe), *[str(work / c) for c in command[1:]]]
        assert_refused(args, capsys, match="named pipe")


def test_a_device_as_a_log_is_refused(work, capsys):
    assert_refused(["analyze", "/dev/zero", "--aircraft", str(work / "tinkerfinch_tf2.toml")],
                   capsys, match="device")


# --------------------------------------------------------------------------- outputs


def test_report_through_a_symlink_writes_the_target(work, capsys):
    target = work / "real.html"
    target.write_text("old")
    link = work / "link.html"
    link.symlink_to(target)
    code, _, err, _ = run(["report", str(work / "flight1_points.csv"), "--aircraft",
                           str(work / "tinkerfinch_tf2.toml"), "-o", str(link)], capsys)
    assert code in (0, 1), err
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert target.read_text().startswith("<!DOCTYPE html") or "<html" in target.read_text()


def test_report_onto_a_named_pipe_is_refused(work, capsys):
    with fifo(work / "pipe.pdf") as pipe:
        assert_refused(["report", str(work / "flight1_points.csv"), "--aircraft",
                        str(work / "tinkerfinch_tf2.toml"), "-o", str(pipe)], capsys,
                       match="named pipe")
        assert Path(pipe).exists() and not Path(pipe).is_file()


def test_json_onto_a_named_pipe_is_refused_and_through_a_link_written(work, capsys):
    with fifo(work / "pipe.json") as pipe:
        assert_refused(["analyze", str(work / "flight1_points.csv"), "--aircraft",
                        str(work / "tinkerfinch_tf2.toml"), "--quiet", "--json", str(pipe)],
                       capsys, match="named pipe")
    target = work / "result.json"
    target.write_text("{}")
    (work / "link.json").symlink_to(target)
    code, _, _, _ = run(["analyze", str(work / "flight1_points.csv"), "--aircraft",
                         str(work / "tinkerfinch_tf2.toml"), "--quiet", "--json",
                         str(work / "link.json")], capsys)
    assert code in (0, 1)
    assert (work / "link.json").is_symlink() and "points" in json.loads(target.read_text())


def test_atomic_write_keeps_the_old_file_on_failure(tmp_path):
    target = tmp_path / "a.json"
    target.write_text("previous")
    os.chmod(target, 0o640)

    def fails(fh):
        fh.write(b"half")
        raise OSError(28, "No space left on device")

    with pytest.raises(OutputFileError, match="disk is full; no JSON result was written"):
        write_atomically(target, fails, what="JSON result")
    assert target.read_text() == "previous"
    assert [p.name for p in tmp_path.iterdir()] == ["a.json"]
    write_atomically(target, "new", what="JSON result")
    assert target.read_text() == "new" and (target.stat().st_mode & 0o777) == 0o640


def test_atomic_write_of_several_files_renames_none_before_all_are_written(tmp_path):
    (tmp_path / "b").write_text("old b")
    calls = []

    def second(fh):
        calls.append(1)
        raise OSError(27, "File too large")

    with pytest.raises(OutputFileError, match="file-size limit"):
        write_files_atomically([(tmp_path / "a", "new a"), (tmp_path / "b", second)],
                               what="export")
    assert calls and not (tmp_path / "a").exists() and (tmp_path / "b").read_text() == "old b"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["b"]


def test_atomic_write_refuses_devices_and_folders(tmp_path):
    for target, kind in (("/dev/null", "device"), (str(tmp_path), "folder")):
        with pytest.raises(OutputFileError, match=kind):
            write_atomically(target, "x", what="report")


# --------------------------------------------------------------------------- loading sheets


def test_loading_is_matched_by_resolved_path(work, capsys):
    sheet = (work / "flight2.loading.toml").read_text()
    other = work / "heavy.loading.toml"
    other.write_text(_with_weight(sheet, 1391))
    os.chdir(work)
    out = work / "r.json"
    code, _, err, _ = run(["analyze", "flight2.csv", "--aircraft", "tinkerfinch_tf2.toml",
                           "--loading", f"./flight2.csv={other.name}", "--quiet",
                           "--json", str(out)], capsys)
    assert code in (0, 1), err
    weights = {round(p["weight_lb"]) for p in json.loads(out.read_text())["points"]}
    assert max(weights) <= 1391, weights


def _with_weight(sheet: str, weight: int) -> str:
    lines = []
    in_takeoff = False
    for line in sheet.splitlines():
        if line.strip().startswith("["):
            in_takeoff = line.strip() == "[takeoff]"
        if in_takeoff and line.strip().startswith("weight"):
            line = f'weight = "{weight} lb"'
        lines.append(line)
    return "\n".join(lines) + "\n"


def test_a_loading_that_matches_no_log_is_an_error(work, capsys):
    assert_refused(["analyze", str(work / "flight2.csv"), "--aircraft",
                    str(work / "tinkerfinch_tf2.toml"), "--loading",
                    f"{work / 'flight3.csv'}={work / 'flight2.loading.toml'}"], capsys, work,
                   match="is none of the logs given")


# --------------------------------------------------------------------------- history


@pytest.fixture
def history_db(work, capsys):
    db = work / "h.sqlite"
    code, _, err, _ = run(["import", str(work / "flight1_points.csv"), str(work / "flight2.csv"),
                           "--aircraft", str(work / "tinkerfinch_tf2.toml"), "--db", str(db)],
                          capsys)
    assert code == EXIT_OK, err
    return db


@pytest.mark.parametrize(("option", "value"), [
    ("--min-margin", "-10"), ("--min-margin", "nan"), ("--min-margin", "1e308"),
    ("--min-margin", "inf"), ("--min-margin", "41"), ("--max-step", "inf"),
    ("--max-step", "-3"), ("--max-step", "21"), ("--max-step", "nan"),
])
def test_plan_policies_are_finite_and_in_range(option, value, history_db, capsys):
    err = assert_refused(["plan", "--db", str(history_db), f"{option}={value}"], capsys,
                         history_db.parent)
    assert option in err


def test_plan_margin_zero_is_a_value(history_db, capsys):
    out = history_db.parent / "plan.json"
    code, _, err, _ = run(["plan", "--db", str(history_db), "--min-margin", "0",
                           "--json", str(out)], capsys)
    assert "Traceback" not in err
    assert json.loads(out.read_text())["min_static_margin_pct_mac"] == 0.0


def test_flights_are_listed_when_the_stored_profile_no_longer_parses(history_db, capsys):
    import sqlite3

    with contextlib.closing(sqlite3.connect(history_db)) as conn:
        conn.execute("UPDATE aircraft_profiles SET profile_text = profile_text || "
                     "'\n[cruse]\ncas = \"100 kt\"\n'")
        conn.commit()
    code, out, err, _ = run(["flights", "--db", str(history_db)], capsys)
    assert code == EXIT_OK, err
    assert "flight1_points" in out and "flight 2" in out, out


# --------------------------------------------------------------------------- terminal


def test_control_characters_are_stripped_from_terminal_output(work, capsys):
    evil = "\x1b]0;owned\x07\x1b[2J\x1b[8mhidden\r\x07name"
    text = (work / "tinkerfinch_tf2.toml").read_text()
    start = text.index('name = "') + len('name = "')
    end = text.index('"', start)
    escaped = json.dumps(evil)[1:-1]
    (work / "evil.toml").write_text(text[:start] + escaped + text[end:])
    code, out, err, _ = run(["analyze", str(work / "flight1_points.csv"), "--aircraft",
                             str(work / "evil.toml")], capsys)
    assert code in (0, 1), err
    assert "hiddenname" in out
    for char in out + err:
        assert char in "\n\t" or 32 <= ord(char) < 127 or ord(char) > 159, repr(char)


def test_printable_keeps_only_own_colours():
    assert printable("\x1b[1mbold\x1b[0m", keep_colour=True) == "\x1b[1mbold\x1b[0m"
    assert printable("\x1b[8mconceal\x1b[0m", keep_colour=True) == "conceal\x1b[0m"
    assert printable("a\x9bb\x00c\x7fd") == "abcd"


# --------------------------------------------------------------------------- export CSV


def test_semicolon_fields_cannot_smuggle_a_formula(work, capsys):
    db = work / "h.sqlite"
    code, _, err, _ = run(["import", str(work / "flight1_points.csv"), "--aircraft",
                           str(work / "tinkerfinch_tf2.toml"), "--db", str(db),
                           "--label", "x;=1+2;@SUM(A1)", "--notes", "a,+1\t-2"], capsys)
    assert code == EXIT_OK, err
    assert main(["export", "--db", str(db), str(work / "out")]) == 0
    for path in (work / "out").glob("*.csv"):
        text = path.read_text(encoding="utf-8")
        for sep in (";", ",", "\t"):
            for line in text.splitlines():
                for cell in line.split(sep):
                    cell = cell.strip('"')
                    if cell[:1] in ("=", "+", "@"):
                        pytest.fail(f"{path.name}: split on {sep!r}: live formula {cell!r}")


def test_an_unfinished_export_does_not_block_the_next(history_db, capsys):
    out = history_db.parent / "out"
    out.mkdir()
    (out / "points.csv").write_text("half a tab")  # left by a killed export, no JSON document
    code, _, err, _ = run(["export", "--db", str(history_db), str(out)], capsys)
    assert code == EXIT_OK, err
    assert (out / "trimlog-history.json").exists()
    assert (out / "points.csv").read_text() != "half a tab"
    assert_refused(["export", "--db", str(history_db), str(out)], capsys, out,
                   match="already holds")


# --------------------------------------------------------------------------- dashboard


def test_dashboard_escapes_markdown_in_labels():
    from trimlog.dashboard.common import esc_label

    assert esc_label("[click](http://x) ![img](y) :red[z]") == (
        r"\[click\](http\://x) !\[img\](y) \:red\[z\]")


def test_dashboard_router_hides_error_details():
    text = (ROOT / "trimlog" / "dashboard" / "app.py").read_text()
    assert 'st.set_option("client.showErrorDetails", "none")' in text
    cli_text = (ROOT / "trimlog" / "cli.py").read_text()
    assert '"--client.showErrorDetails", "none"' in cli_text


def test_dashboard_page_error_is_a_clear_message():
    from streamlit.testing.v1 import AppTest

    import trimlog.dashboard.results as results

    original = results.render
    try:  # the router itself, with the Results page broken
        app = AppTest.from_function(_router_with_broken_page)
        app.run(timeout=60)
    finally:
        results.render = original
    assert not app.exception, app.exception
    assert any("Internal error in trimlog (KeyError)" in e.value for e in app.error)


def _router_with_broken_page():
    import runpy

    import trimlog.dashboard.results as results

    def boom():
        raise KeyError("secret detail")

    results.render = boom
    runpy.run_module("trimlog.dashboard.app", run_name="__main__")


@pytest.mark.slow  # starts the streamlit server
def test_sigterm_to_the_dashboard_stops_the_server(tmp_path):
    import socket

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    env = {**os.environ, "PYTHONPATH": str(ROOT), "TRIMLOG_DB": str(tmp_path / "h.sqlite")}
    parent = subprocess.Popen([sys.executable, "-m", "trimlog.cli", "dashboard", "--port",
                               str(port)], env=env, cwd=tmp_path, stdout=subprocess.DEVNULL,
                              stderr=subprocess.DEVNULL)
    try:
        deadline = time.monotonic() + 60
        while time.monotonic() < deadline:
            with socket.socket() as s:
                if s.connect_ex(("127.0.0.1", port)) == 0:
                    break
            time.sleep(0.3)
        else:
            pytest.fail("the dashboard did not start within 60 s")
        parent.terminate()
        parent.wait(timeout=30)
        time.sleep(1.0)
        with socket.socket() as s:
            assert s.connect_ex(("127.0.0.1", port)) != 0, "the server is still listening"
    finally:
        if parent.poll() is None:
            parent.kill()


# --------------------------------------------------------------------------- unit cache


def test_unit_cache_is_private_to_the_user(tmp_path, monkeypatch):
    from trimlog.input import units

    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    folder = units.cache_folder()
    assert folder is not None and folder.is_relative_to(tmp_path)
    assert (folder.stat().st_mode & 0o777) == 0o700
    os.chmod(folder, 0o777)
    assert units.cache_folder() is None, "a world-writable cache folder must not be used"


# --------------------------------------------------------------------------- disk full


def _limited(args: list[str], cwd: Path, blocks: int) -> subprocess.CompletedProcess:
    """The command line with a file-size limit of ``blocks`` x 512 bytes (a full disk)."""
    env = {**os.environ, "PYTHONPATH": str(ROOT), "NO_COLOR": "1",
           "TRIMLOG_DB": str(cwd / "default.sqlite")}
    command = " ".join(["ulimit -f", str(blocks), ";", "exec", sys.executable, "-m",
                        "trimlog.cli", *[f"'{a}'" for a in args]])
    return subprocess.run(["bash", "-c", command], capture_output=True, text=True, env=env,
                          cwd=cwd, timeout=240)


@pytest.mark.slow  # interpreters under a file-size limit
def test_disk_full_during_json_and_report_keeps_the_previous_files(work):
    result = work / "result.json"
    result.write_text('{"previous": true}\n')
    report = work / "report.pdf"
    report.write_bytes(b"%PDF previous")
    base = ["analyze", str(work / "flight1_points.csv"), "--aircraft",
            str(work / "tinkerfinch_tf2.toml"), "--quiet", "--json", str(result)]
    done = _limited(base, work, 8)
    assert done.returncode == EXIT_BAD_INPUT, done.stderr[-1500:]
    assert "Traceback" not in done.stderr and "file-size limit" in done.stderr
    assert json.loads(result.read_text()) == {"previous": True}
    done = _limited(["report", str(work / "flight1_points.csv"), "--aircraft",
                     str(work / "tinkerfinch_tf2.toml"), "-o", str(report)], work, 8)
    assert done.returncode == EXIT_BAD_INPUT, done.stderr[-1500:]
    assert "Traceback" not in done.stderr
    assert report.read_bytes() == b"%PDF previous"
    assert sorted(p.name for p in work.iterdir() if p.name.startswith(".")) == []


@pytest.mark.slow  # interpreters under a file-size limit
def test_disk_full_during_export_leaves_no_export_and_the_next_one_works(history_db):
    out = history_db.parent / "exported"
    # 200 blocks: room for SQLite's 32 KB shared-memory file, not for the 600 KB export
    done = _limited(["export", "--db", str(history_db), str(out)], history_db.parent, 200)
    assert done.returncode == EXIT_BAD_INPUT, done.stderr[-1500:]
    assert "Traceback" not in done.stderr
    assert not (out / "trimlog-history.json").exists()
    done = _limited(["export", "--db", str(history_db), str(out)], history_db.parent,
                    1_000_000)
    assert done.returncode == EXIT_OK, done.stderr[-1500:]
    assert (out / "trimlog-history.json").exists()
