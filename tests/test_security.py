"""Security: logs, profiles and loading sheets are data only.

* The package source never evaluates text, unpickles, loads YAML, runs a
  shell or ``os.system`` (an AST scan of ``trimlog/**/*.py`` and ``app.py``,
  with a short allow-list of subprocesses that run a fixed argument list).
  The one pickle channel is the report worker's pipe (``multiprocessing``
  connections pickle what they carry): an anonymous pipe made before the
  command forks, between its own two processes, carrying only objects this
  process built; nothing a user wrote reaches it as bytes to unpickle.
* TOML is read with the standard library's ``tomllib`` only, and text in a
  profile or loading sheet stays text.
* CSV files written by ``trimlog export`` neutralise cells a spreadsheet
  would run as a formula (OWASP, "CSV Injection": leading ``=``, ``+``,
  ``-``, ``@``, tab, carriage return).
* A file name from an upload is a label, never a path: importing or
  analysing bytes named ``../../etc/passwd`` opens and writes no file
  outside the history database.
"""

from __future__ import annotations

import ast
import csv
import os
import sys
from pathlib import Path

import pytest

from trimlog.cli import main
from trimlog.errors import TrimlogError
from trimlog.history import service as history
from trimlog.history import store
from trimlog.input.loading_sheet import read_loading_sheet
from trimlog.input.profile import parse_profile
from trimlog.pipeline import chain as analysis

ROOT = Path(__file__).resolve().parent.parent
PACKAGE = ROOT / "trimlog"
SAMPLES = ROOT / "sample_logs"
PROFILE_PATH = SAMPLES / "tinkerfinch_tf2.toml"
PROFILE_TEXT = PROFILE_PATH.read_text(encoding="utf-8")
POINTS = SAMPLES / "flight1_points.csv"

# (file, function) pairs allowed to start a subprocess: each passes a fixed
# argument list built from sys.executable, never a shell command line.
SUBPROCESS_ALLOWED = {
    ("trimlog/cli.py", "_run_dashboard"),  # the dashboard server (dashboard.serve)
    ("benchmarks/bench.py", "_process_time"),  # timing `trimlog analyze` start-up
    ("benchmarks/bench.py", "once"),
    ("benchmarks/bench.py", "_importtime"),  # python -X importtime
    ("benchmarks/bench.py", "_peak_rss"),  # python -c <benchmark code>
    ("benchmarks/bench.py", "bench_report"),  # trimlog demo / analyze / report, timed
    ("benchmarks/bench.py", "bench_browser"),  # streamlit run, for the first-page time
    ("benchmarks/bench.py", "process_env"),  # python -m compileall of trimlog's own folder
}
# Modules allowed to use a multiprocessing connection (it unpickles what it receives):
# each only between the command's own processes, over a pipe made before its fork.
PICKLING_PIPE_ALLOWED = {"trimlog/views/report_worker.py"}
PICKLING_PIPE_MODULES = {"multiprocessing"}
FORBIDDEN_MODULES = {"pickle", "cPickle", "dill", "shelve", "marshal", "yaml", "toml", "tomli",
                     "cloudpickle", "joblib"}
FORBIDDEN_CALLS = {"eval", "exec", "compile", "__import__"}
FORBIDDEN_ATTRIBUTES = {
    ("os", "system"), ("os", "popen"), ("os", "execv"), ("os", "execl"), ("os", "spawnl"),
    ("yaml", "load"), ("yaml", "unsafe_load"), ("pickle", "load"), ("pickle", "loads"),
    ("pd", "read_pickle"), ("pandas", "read_pickle"), ("np", "load"), ("numpy", "load"),
}


def _dotted(node: ast.AST) -> str:
    if isinstance(node, ast.Name):
        return node.id
    if isinstance(node, ast.Attribute):
        return f"{_dotted(node.value)}.{node.attr}"
    return ""


def scan(source: str, filename: str) -> list[str]:
    """Every use of code execution, unpickling or shells in one module's source."""
    tree = ast.parse(source, filename=filename)
    found: list[str] = []
    function_of: dict[ast.AST, str] = {}
    for node in ast.walk(tree):
        if isinstance(node, ast.FunctionDef | ast.AsyncFunctionDef):
            for inner in ast.walk(node):
                function_of[inner] = node.name  # innermost wins: walk goes outer first
    for node in ast.walk(tree):
        where = f"{filename}:{getattr(node, 'lineno', '?')}"
        if isinstance(node, ast.Import | ast.ImportFrom):
            names = [a.name for a in node.names] if isinstance(node, ast.Import) else [
                node.module or ""]
            for name in names:
                if name.split(".")[0] in FORBIDDEN_MODULES:
                    found.append(f"{where}: imports {name}")
                if (name.split(".")[0] in PICKLING_PIPE_MODULES
                        and filename not in PICKLING_PIPE_ALLOWED):
                    found.append(f"{where}: imports {name} (its connections unpickle)")
                if name.split(".")[0] == "subprocess" and (
                        filename, function_of.get(node)) not in SUBPROCESS_ALLOWED:
                    found.append(f"{where}: imports subprocess outside the allow-list")
        if not isinstance(node, ast.Call):
            continue
        name = _dotted(node.func)
        if name in FORBIDDEN_CALLS:
            found.append(f"{where}: calls {name}()")
        parts = tuple(name.split("."))
        if len(parts) >= 2 and parts[-2:] in FORBIDDEN_ATTRIBUTES:
            found.append(f"{where}: calls {name}()")
        for keyword in node.keywords:
            if keyword.arg == "shell" and not (
                    isinstance(keyword.value, ast.Constant) and keyword.value.value is False):
                found.append(f"{where}: {name}(shell=...)")
        if parts[0] == "subprocess":
            if (filename, function_of.get(node)) not in SUBPROCESS_ALLOWED:
                found.append(f"{where}: {name}() outside the allow-list")
            elif node.args and isinstance(node.args[0], ast.Constant | ast.JoinedStr):
                found.append(f"{where}: {name}() with a command string")
    return found


def package_sources() -> list[Path]:
    bench = sorted((ROOT / "benchmarks").glob("*.py"))
    return sorted(PACKAGE.rglob("*.py")) + bench + [ROOT / "app.py"]


def test_the_scan_finds_what_it_looks_for():
    """The scanner itself: each forbidden pattern is caught (so the real scan can fail)."""
    bad = (
        "import pickle\nimport yaml\nimport os, subprocess\n"
        "def f(text):\n"
        "    eval(text)\n    exec(text)\n    os.system(text)\n    yaml.load(text)\n"
        "    subprocess.run(text, shell=True)\n    subprocess.call('ls')\n"
    )
    found = scan(bad, "trimlog/evil.py")
    for what in ("imports pickle", "imports yaml", "calls eval()", "calls exec()",
                 "calls os.system()", "calls yaml.load()", "shell=...",
                 "subprocess.call() outside the allow-list", "imports subprocess"):
        assert any(what in f for f in found), (what, found)
    assert scan("import tomllib\ntomllib.loads('a = 1')\n", "trimlog/ok.py") == []
    pipe = "from multiprocessing import Pipe\n"
    assert any("its connections unpickle" in f for f in scan(pipe, "trimlog/other.py"))
    assert scan(pipe, "trimlog/views/report_worker.py") == []


@pytest.mark.parametrize("path", package_sources(), ids=lambda p: p.relative_to(ROOT).as_posix())
def test_package_source_never_runs_user_text(path):
    relative = path.relative_to(ROOT).as_posix()
    assert scan(path.read_text(encoding="utf-8"), relative) == []


def test_allow_list_names_functions_that_exist():
    """A stale allow-list entry would silently allow a future subprocess elsewhere."""
    for filename, function in SUBPROCESS_ALLOWED:
        tree = ast.parse((ROOT / filename).read_text(encoding="utf-8"))
        names = {n.name for n in ast.walk(tree) if isinstance(n, ast.FunctionDef)}
        assert function in names, (filename, function)


def test_toml_is_read_with_tomllib_only():
    """Profiles and loading sheets go through tomllib.loads, in the one schema module that
    reads both (other TOML libraries are refused by the scan above)."""
    parsers = set()
    for path in package_sources():
        tree = ast.parse(path.read_text(encoding="utf-8"))
        if any(isinstance(n, ast.Call) and _dotted(n.func) == "tomllib.loads"
               for n in ast.walk(tree)):
            parsers.add(path.name)
    assert parsers == {"schema.py"}


PAYLOADS = [
    "__import__('os').system('touch PWNED')",
    "{{ config.__class__ }}",
    "!!python/object/apply:os.system ['touch PWNED']",
    "=cmd|' /C calc'!A0",
]


@pytest.mark.parametrize("payload", PAYLOADS)
def test_profile_and_loading_sheet_text_stays_text(payload, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    quoted = payload.replace("\\", "\\\\").replace('"', '\\"')
    profile = parse_profile(
        PROFILE_TEXT.replace('name = "Tinkerfinch TF-2 DEMO-1 (invented demo aircraft)"',
                             f'name = "{quoted}"'), "evil.toml")
    assert profile.name == payload
    sheet = read_loading_sheet(
        (SAMPLES / "flight2.loading.toml").read_text(encoding="utf-8").replace(
            'notes = "invented demo flight; smooth morning air, two on board plus ballast"',
            f'notes = "{quoted}"').encode("utf-8"), name="evil.loading.toml")
    assert sheet.notes == payload
    assert list(tmp_path.iterdir()) == []


# --------------------------------------------------------------------------- export


FORMULA_STARTS = ("=", "+", "-", "@", "\t", "\r")


def _is_number(cell: str) -> bool:
    try:
        float(cell)
    except ValueError:
        return False
    return True


def test_export_neutralises_spreadsheet_formulas(tmp_path):
    db = tmp_path / "history.sqlite"
    log = tmp_path / "=HYPERLINK(evil).csv"
    log.write_text(POINTS.read_text(encoding="utf-8").replace("TP1,", "=1+2,").replace(
        "TP2,", "@SUM(A1),"), encoding="utf-8")
    profile = tmp_path / "evil.toml"
    profile.write_text(PROFILE_TEXT.replace(
        'name = "Tinkerfinch TF-2 DEMO-1 (invented demo aircraft)"',
        'name = "-2+3 invented aircraft"'), encoding="utf-8")
    code = main(["import", str(log), "--aircraft", str(profile), "--db", str(db),
                 "--label", "+cmd|' /C calc'!A0", "--notes", "@SUM(1+1)*cmd"])
    assert code == 0
    out = tmp_path / "exported"
    assert main(["export", "--db", str(db), str(out)]) == 0
    seen = set()
    for path in sorted(out.glob("*.csv")):
        with path.open(encoding="utf-8", newline="") as handle:
            for row in csv.reader(handle):
                for cell in row:
                    seen.add(cell)
                    if cell.startswith(FORMULA_STARTS):
                        assert _is_number(cell), f"{path.name}: live formula {cell!r}"
    # The text is kept, only made inert.
    for expected in ("'+cmd|' /C calc'!A0", "'@SUM(1+1)*cmd", "'-2+3 invented aircraft",
                     "'=HYPERLINK(evil).csv"):
        assert expected in seen, expected
    assert any(c.startswith("'=1+2") or c.startswith("'@SUM(A1)") for c in seen), \
        "the point labels from the log are exported and neutralised"


# --------------------------------------------------------------------------- file names


class FileAudit:
    """Records files opened for writing and files created, moved or removed."""

    EVENTS = {"open", "os.mkdir", "os.rename", "os.remove", "os.rmdir", "os.symlink",
              "os.link", "shutil.copyfile", "shutil.move", "os.truncate", "os.chmod"}

    def __init__(self) -> None:
        self.active = False
        self.events: list[tuple[str, str, str]] = []
        sys.addaudithook(self._hook)

    def _hook(self, event: str, args: tuple) -> None:
        if not self.active or event not in self.EVENTS or not args:
            return
        path = str(args[0])
        mode = str(args[1]) if event == "open" and len(args) > 1 else ""
        self.events.append((event, path, mode))

    def __enter__(self) -> FileAudit:
        self.events.clear()
        self.active = True
        return self

    def __exit__(self, *exc: object) -> None:
        self.active = False


@pytest.fixture(scope="module")
def audit() -> FileAudit:
    return FileAudit()  # audit hooks cannot be removed; this one is idle outside `with`


BAD_NAMES = ["../../etc/passwd", "/etc/passwd", "..\\..\\windows\\win.ini", "../x.csv",
             "sub/../../escape.csv", "~/evil.csv", "\x00null.csv", "CON", ""]


def _writes(events) -> list[tuple[str, str, str]]:
    return [e for e in events if e[0] != "open" or any(m in e[2] for m in "wax+")]


_CODE_DIRS = tuple(str(Path(p).resolve()) for p in {sys.prefix, sys.base_prefix, ROOT / "trimlog"})


def _data_files(events) -> list[tuple[str, str, str]]:
    """Files opened that are not Python code or library data (lazy imports open those)."""
    return [e for e in events if e[0] == "open" and not os.path.abspath(e[1]).startswith(
        _CODE_DIRS)]


def _opened(events, fragment: str) -> list[tuple[str, str, str]]:
    return [e for e in events if fragment in e[1]]


def test_the_audit_sees_reads_and_writes(audit, tmp_path):
    with audit:
        (tmp_path / "seen.txt").write_text("x")
        (tmp_path / "seen.txt").read_bytes()
    assert _writes(audit.events) and len(_data_files(audit.events)) == 2


@pytest.mark.parametrize("name", BAD_NAMES)
def test_analysis_file_name_is_a_label_not_a_path(name, audit, tmp_path, monkeypatch):
    work = tmp_path / "a" / "b"
    work.mkdir(parents=True)
    monkeypatch.chdir(work)
    decoy = tmp_path / "a" / "x.csv"
    decoy.write_text("not a log\n")
    profile = parse_profile(PROFILE_TEXT, "profile.toml")
    raw = POINTS.read_bytes()
    with audit:
        try:
            flights = analysis.load_flight_bytes(raw, name, profile)
        except Exception as exc:  # noqa: BLE001 - an odd name may be refused, clearly
            assert isinstance(exc, TrimlogError), exc
            flights = None
    assert _writes(audit.events) == []
    assert _data_files(audit.events) == [], "the name was used as a path"
    if flights is not None:
        assert len(flights[0].points) == 8  # read from the bytes given, not the decoy


@pytest.mark.parametrize("name", BAD_NAMES[:5])
def test_history_import_file_name_writes_nothing_outside_the_db(name, audit, tmp_path,
                                                                 monkeypatch):
    work = tmp_path / "a" / "b"
    work.mkdir(parents=True)
    monkeypatch.chdir(work)
    db = tmp_path / "db" / "history.sqlite"
    db.parent.mkdir()
    before = set(tmp_path.rglob("*"))
    with store.open_store(db) as st, audit:
        outcome = history.import_flight(st, POINTS.read_bytes(), name, PROFILE_TEXT)
        assert outcome.created
        assert st.flight(outcome.flight_id).filename == name
    allowed = {str(db), f"{db}-wal", f"{db}-shm", f"{db}-journal"}
    stray = [e for e in _writes(audit.events) if os.path.abspath(e[1]) not in allowed]
    assert stray == []
    after = set(tmp_path.rglob("*"))
    assert {str(p) for p in after - before} <= allowed
    assert not _opened(audit.events, "passwd") and not _opened(audit.events, "win.ini")
