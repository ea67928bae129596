"""Robustness of the whole program: numerical edge cases, faults, no tracebacks.

Numerical edge cases are point tables built here as CSV bytes from the
linear trim theory of ``tests/synthetic_flights.py`` (synthetic data of
known truth: stick-fixed neutral point 40 %MAC, stick-free 36 %MAC) plus
seeded Gaussian noise.  Each goes through the command line (``main`` with
``--json``, the whole chain ``load_flight_file -> analyze -> to_dict``) and
must give a clear verdict: a neutral point whose interval holds the truth,
"not identifiable" with a reason and no number, or a specific error; never
NaN or infinity, in the JSON or on the terminal.

Faults run the real ``trimlog`` command in subprocesses: an import killed
with SIGKILL, a database location that cannot be written, a corrupt
database, two writers at once.  Every subprocess gets ``TRIMLOG_DB`` in the
test's temporary folder, so no test can touch a user's history.
"""

from __future__ import annotations

import json
import math
import os
import re
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from synthetic_flights import Q_PSF_PER_KT2, Truth

from trimlog.cli import EXIT_BAD_INPUT, EXIT_REFUSED, main
from trimlog.errors import TrimlogError
from trimlog.history import service as history
from trimlog.history import store
from trimlog.input.profile import parse_profile
from trimlog.pipeline import chain as analysis

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
SAMPLE_PROFILE = SAMPLES / "tinkerfinch_tf2.toml"

# An invented aircraft; values chosen only to be plausible for a light two-seater.
PROFILE_TEXT = """\
[aircraft]
name = "Robustness test aircraft (invented)"
wing_area = "118 ft^2"
mac = "51 in"
lemac = "60 in"
clmax_clean = 1.5

[tail]
elevator_chord_ratio = 0.35
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "18 deg"
current_incidence = "-1.0 deg"

[limits]
cg_forward = "66 in"
cg_aft = "76 in"
max_weight = "1700 lb"

[cruise]
cas = "115 kt"
"""
PROFILE = parse_profile(PROFILE_TEXT, "robust.toml")
TRUTH = Truth()  # hn 40 %MAC, hn' 36 %MAC
WEIGHT_LB = 1500.0
SPEEDS = (65.0, 75.0, 85.0, 95.0, 110.0, 125.0)
HEADER = "flight,ias_kt,pressure_alt_ft,oat_c,elevator_deg,stick_force_lbf,weight_lb,cg_pct_mac"
_NOT_A_NUMBER = re.compile(r"\b(nan|inf|infinity)\b", re.IGNORECASE)


def point_table(flights, *, seed=0, sigma_elev_deg=0.1, sigma_force_lbf=0.3, force=True,
                elevator=None) -> str:
    """CSV text of a point table, one row per (flight, CG, speed).

    Sea-level standard day, so IAS = CAS = EAS (no calibration table in
    the profile) and q = K EAS^2.  ``elevator`` optionally replaces the
    elevator of a point: ``elevator(flight, speed, value) -> value``.
    """
    rng = np.random.default_rng(seed)
    cl_trim = WEIGHT_LB / (Q_PSF_PER_KT2 * 95.0**2 * PROFILE.wing_area_ft2)
    lines = [HEADER]
    for flight, cg, speeds in flights:
        h = cg / 100.0
        a_f = -TRUTH.dfsq_dcl_ft2(h) * cl_trim
        for v in speeds:
            q = Q_PSF_PER_KT2 * v * v
            cl = WEIGHT_LB / (q * PROFILE.wing_area_ft2)
            de = TRUTH.elevator_deg(cl, h) + sigma_elev_deg * rng.standard_normal()
            if elevator is not None:
                de = elevator(flight, v, de)
            fs = q * (a_f + TRUTH.dfsq_dcl_ft2(h) * cl) + sigma_force_lbf * rng.standard_normal()
            cell = f"{fs:.2f}" if force else ""
            lines.append(f"{flight},{v:g},0,15,{de:.3f},{cell},{WEIGHT_LB:g},{cg:g}")
    return "\n".join(lines) + "\n"


def three_flights(speeds=SPEEDS, cgs=(15.0, 22.0, 29.0)):
    return [(f"F{i + 1}", cg, speeds) for i, cg in enumerate(cgs)]


def walk(value, path=""):
    """Every (path, leaf) of a JSON document."""
    if isinstance(value, dict):
        for k, v in value.items():
            yield from walk(v, f"{path}.{k}")
    elif isinstance(value, list):
        for i, v in enumerate(value):
            yield from walk(v, f"{path}[{i}]")
    else:
        yield path, value


def assert_honest(payload: dict) -> None:
    """No non-finite number, and no neutral-point number where none is identifiable."""
    json.dumps(payload, allow_nan=False)
    for path, leaf in walk(payload):
        if isinstance(leaf, float):
            assert math.isfinite(leaf), path
    for key in ("stick_fixed", "stick_fixed_two_stage", "stick_free"):
        block = payload["neutral_point"][key]
        if block is None or block["identifiable"]:
            continue
        assert block["pct_mac"] is None and block["ci95_pct_mac"] is None
        assert block["station_in"] is None
        assert block["reason"], f"{key}: not identifiable without a reason"
    fixed = payload["neutral_point"]["stick_fixed"]
    free = payload["neutral_point"]["stick_free"]
    for margin in payload["static_margin"]:
        if not fixed["identifiable"]:
            assert margin["stick_fixed_pct_mac"] is None, margin
        if free is None or not free["identifiable"]:
            assert margin["stick_free_pct_mac"] is None, margin
    if not fixed["identifiable"]:
        assert payload["elevator_power_per_rad"] is None


def assert_no_collapsed_interval(payload: dict) -> None:
    """A 95 % interval of zero width from noisy data is a number the data cannot support."""
    for path, value in _intervals(payload):
        lo, hi = value
        assert hi - lo > 1e-6 * max(1.0, abs(lo), abs(hi)), f"{path} = {value}: zero width"


def _intervals(value, path=""):
    if isinstance(value, dict):
        for k, v in value.items():
            if "ci95" in k and isinstance(v, list) and len(v) == 2 and all(
                    isinstance(x, float) for x in v):
                yield f"{path}.{k}", v
            else:
                yield from _intervals(v, f"{path}.{k}")
    elif isinstance(value, list):
        for i, v in enumerate(value):
            yield from _intervals(v, f"{path}[{i}]")


def run_cli(tmp_path: Path, csv_text: str, capsys) -> tuple[int, dict | None, str, str]:
    log = tmp_path / "points.csv"
    log.write_text(csv_text, encoding="utf-8")
    profile = tmp_path / "robust.toml"
    profile.write_text(PROFILE_TEXT, encoding="utf-8")
    out = tmp_path / "result.json"
    code = main(["analyze", str(log), "--aircraft", str(profile), "--json", str(out)])
    captured = capsys.readouterr()
    payload = json.loads(out.read_text(encoding="utf-8")) if out.exists() else None
    return code, payload, captured.out, captured.err


@pytest.fixture(autouse=True)
def _private_history(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "default-history.sqlite"))


# --------------------------------------------------------------------------- edge cases


def test_control_case_is_identified_and_holds_the_truth(tmp_path, capsys):
    """The same builder with a good design: the edge cases below are not artefacts of it."""
    code, payload, out, _ = run_cli(tmp_path, point_table(three_flights()), capsys)
    assert code == 0
    assert_honest(payload)
    fixed = payload["neutral_point"]["stick_fixed"]
    free = payload["neutral_point"]["stick_free"]
    # Synthetic data of known truth: hn = 40 %MAC, hn' = 36 %MAC.
    assert fixed["identifiable"] and fixed["ci95_pct_mac"][0] < 40.0 < fixed["ci95_pct_mac"][1]
    assert free["identifiable"] and free["ci95_pct_mac"][0] < 36.0 < free["ci95_pct_mac"][1]
    assert not _NOT_A_NUMBER.search(out)


REFUSED = {
    "all points at one speed": (three_flights(speeds=(95.0,) * 4), r"one speed|CL spans"),
    "all points at one CG": (three_flights(cgs=(22.0, 22.0, 22.0)), r"one CG"),
    "two points, one flight": ([("F1", 15.0, (70.0, 110.0))], r"one CG|points"),
    "two points, two flights": ([("F1", 15.0, (90.0,)), ("F2", 29.0, (90.0,))],
                                r"one speed|CL spans|points"),
    "a single flight": ([("F1", 22.0, SPEEDS)], r"one CG"),
    "CGs less than 3 %MAC apart": (three_flights(cgs=(20.0, 21.5, 22.5)), r"3 %MAC"),
    # Each flight at a single speed of its own: the gradient with CL is never
    # measured at any CG, so CG and CL effects cannot be told apart.
    "collinear CG and CL, one speed per flight": (
        [("F1", 15.0, (70.0,) * 3), ("F2", 22.0, (90.0,) * 3), ("F3", 29.0, (120.0,) * 3)],
        r"vary together|one speed|CL spans|gradient"),
}


@pytest.mark.parametrize("case", list(REFUSED))
def test_unidentifiable_data_is_refused_with_a_reason(case, tmp_path, capsys):
    flights, reason = REFUSED[case]
    code, payload, out, err = run_cli(tmp_path, point_table(flights), capsys)
    assert code == EXIT_REFUSED, err
    assert payload is not None, "the JSON is written whenever the input could be read"
    assert_honest(payload)
    fixed = payload["neutral_point"]["stick_fixed"]
    assert not fixed["identifiable"]
    assert re.search(reason, fixed["reason"]), fixed["reason"]
    assert not _NOT_A_NUMBER.search(out)
    assert "Traceback" not in err


def test_collinear_cg_and_speed_bands_give_an_honest_verdict(tmp_path, capsys):
    """Each flight at its own CG and its own narrow speed band (CG and CL vary together)."""
    flights = [("F1", 15.0, (62.0, 66.0, 70.0)), ("F2", 22.0, (86.0, 90.0, 94.0)),
               ("F3", 29.0, (115.0, 120.0, 125.0))]
    code, payload, out, _ = run_cli(tmp_path, point_table(flights, seed=3), capsys)
    assert_honest(payload)
    assert_no_collapsed_interval(payload)
    fixed = payload["neutral_point"]["stick_fixed"]
    if fixed["identifiable"]:
        assert code == 0
        # Synthetic data of known truth: hn = 40 %MAC.
        assert fixed["ci95_pct_mac"][0] < 40.0 < fixed["ci95_pct_mac"][1]
    else:
        assert code == EXIT_REFUSED and fixed["reason"]
    assert not _NOT_A_NUMBER.search(out)


@pytest.mark.parametrize("speed", ["0", "0.0", "-10"])
def test_zero_or_negative_airspeed_is_a_specific_error(speed, tmp_path, capsys):
    text = point_table(three_flights()) + f"F1,{speed},0,15,5.0,0.0,1500,15\n"
    bad_line = text.count("\n")
    code, payload, _, err = run_cli(tmp_path, text, capsys)
    assert code == EXIT_BAD_INPUT
    assert err.startswith("trimlog: error:") and "Traceback" not in err
    assert "points.csv" in err, err
    assert f"line {bad_line}" in err, err  # the user can find the point


def test_zero_airspeed_through_the_chain_names_file_and_line():
    raw = (point_table(three_flights()) + "F1,0,0,15,5.0,0.0,1500,15\n").encode()
    with pytest.raises(TrimlogError) as caught:
        analysis.analyze(analysis.load_flight_bytes(raw, "zero_q.csv", PROFILE), PROFILE)
    assert "zero_q.csv" in str(caught.value)
    assert "line 20" in str(caught.value)


def _stuck_up(flight, speed, value):
    return -PROFILE.elevator_up_stop_deg


def _stuck_up_when_slow(flight, speed, value):
    return -PROFILE.elevator_up_stop_deg if speed <= 75.0 else value


def test_elevator_stuck_at_the_up_stop(tmp_path, capsys):
    text = point_table(three_flights(), elevator=_stuck_up)
    code, payload, out, _ = run_cli(tmp_path, text, capsys)
    assert code == EXIT_REFUSED
    assert_honest(payload)
    assert not payload["neutral_point"]["stick_fixed"]["identifiable"]
    flagged = {(f["flight"], f["point"]) for f in payload["fit_checks"]["stop_flags"]}
    assert len(flagged) == 18  # every point sits at the stop, and each is said to
    assert any("stop" in w for w in payload["warnings"]), payload["warnings"]
    # An elevator prediction from points that all sit at the stop is not a measurement.
    assert_no_collapsed_interval(payload)
    assert not _NOT_A_NUMBER.search(out)


def test_elevator_at_the_stop_for_the_slow_points_is_flagged(tmp_path, capsys):
    text = point_table(three_flights(), elevator=_stuck_up_when_slow)
    code, payload, out, _ = run_cli(tmp_path, text, capsys)
    assert_honest(payload)
    flagged = {(f["flight"], f["point"]) for f in payload["fit_checks"]["stop_flags"]}
    assert flagged == {(f, p) for f in ("F1", "F2", "F3") for p in (1, 2)}
    # the up stop is at negative elevator, and the JSON says which stop (from the result)
    assert {f["stop"] for f in payload["fit_checks"]["stop_flags"]} == {"up"}
    assert not any(f["included"] for f in payload["fit_checks"]["stop_flags"])
    fixed = payload["neutral_point"]["stick_fixed"]
    if fixed["identifiable"]:
        # Synthetic data of known truth: hn = 40 %MAC.
        assert fixed["ci95_pct_mac"][0] < 40.0 < fixed["ci95_pct_mac"][1]
    assert not _NOT_A_NUMBER.search(out)


@pytest.mark.parametrize("layout", ["no force column", "force column left empty"])
def test_stick_force_never_recorded(layout, tmp_path, capsys):
    text = point_table(three_flights(), force=False)
    if layout == "no force column":
        text = "\n".join(",".join(c for i, c in enumerate(line.split(",")) if i != 5)
                         for line in text.splitlines()) + "\n"
    code, payload, out, _ = run_cli(tmp_path, text, capsys)
    assert code == 0  # the stick-fixed result does not need the force
    assert_honest(payload)
    free = payload["neutral_point"]["stick_free"]
    assert free is None or (not free["identifiable"] and free["reason"])
    assert all(m["stick_free_pct_mac"] is None for m in payload["static_margin"])
    assert any("stick" in w.lower() and "force" in w.lower() for w in payload["warnings"])
    assert not _NOT_A_NUMBER.search(out)


# --------------------------------------------------------------------------- faults


def cli(*args: str, env_db: Path, timeout: float = 300.0) -> subprocess.CompletedProcess:
    env = {**os.environ, "TRIMLOG_DB": str(env_db), "NO_COLOR": "1"}
    return subprocess.run([sys.executable, "-m", "trimlog.cli", *args], capture_output=True,
                          text=True, timeout=timeout, env=env, cwd=env_db.parent)


def copy_flight(tmp_path: Path, number: int) -> Path:
    """A demo log with its loading sheet beside it, in the test's folder."""
    log = shutil.copy(SAMPLES / f"flight{number}.csv", tmp_path / f"flight{number}.csv")
    shutil.copy(SAMPLES / f"flight{number}.loading.toml", tmp_path / f"flight{number}.loading.toml")
    return Path(log)


def stored_flights(db: Path) -> list[store.FlightRecord]:
    with store.open_store(db) as st:
        assert st.check() == []
        return [f for a in st.aircraft_list() for f in st.flights(a.id)]


@pytest.mark.slow  # two interpreters start and read the longest demo log
def test_import_killed_midway_leaves_a_usable_database(tmp_path):
    db = tmp_path / "history.sqlite"
    log = copy_flight(tmp_path, 3)  # the longest demo log
    env = {**os.environ, "TRIMLOG_DB": str(db)}
    proc = subprocess.Popen(
        [sys.executable, "-m", "trimlog.cli", "import", str(log), "--aircraft",
         str(SAMPLE_PROFILE), "--db", str(db)],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=env, cwd=tmp_path)
    deadline = time.monotonic() + 120.0
    while not db.exists() and proc.poll() is None and time.monotonic() < deadline:
        time.sleep(0.01)  # the store is open: the log is being read, points found, stored
    time.sleep(0.2)
    proc.send_signal(signal.SIGKILL)
    proc.communicate(timeout=60)
    flights = stored_flights(db) if db.exists() else []
    assert len(flights) <= 1
    for f in flights:  # if the transaction committed, it committed whole
        assert f.n_points > 0
    again = cli("import", str(log), "--aircraft", str(SAMPLE_PROFILE), "--db", str(db),
                env_db=db)
    assert again.returncode == 0, again.stderr
    flights = stored_flights(db)
    assert len(flights) == 1 and flights[0].n_points > 0
    assert flights[0].filename == "flight3.csv"


def test_database_location_that_cannot_be_written(tmp_path, capsys):
    blocker = tmp_path / "not_a_folder"
    blocker.write_bytes(b"a regular file where a folder should be\n")
    before = blocker.read_bytes()
    db = blocker / "history.sqlite"
    log = copy_flight(tmp_path, 2)
    code = main(["import", str(log), "--aircraft", str(SAMPLE_PROFILE), "--db", str(db)])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT
    assert err.startswith("trimlog: error:") and "not_a_folder" in err
    assert blocker.read_bytes() == before
    with pytest.raises(TrimlogError, match="not_a_folder"):
        store.open_store(db)


@pytest.fixture(scope="module")
def real_history(tmp_path_factory) -> bytes:
    """The bytes of a history database holding one demo flight."""
    folder = tmp_path_factory.mktemp("history")
    db = folder / "real.sqlite"
    with store.open_store(db) as st:
        history.import_log(st, copy_flight(folder, 2),
                           profile_text=SAMPLE_PROFILE.read_text(encoding="utf-8"),
                           profile_source=SAMPLE_PROFILE.name)
    return db.read_bytes()


@pytest.mark.parametrize("damage", ["not SQLite at all", "truncated", "scrambled pages"])
def test_corrupt_database_given_to_trend(damage, real_history, tmp_path, capsys):
    db = tmp_path / "broken.sqlite"
    if damage == "not SQLite at all":
        db.write_bytes(b"flight,ias_kt\n1,90\n" * 50)
    elif damage == "truncated":
        db.write_bytes(real_history[: len(real_history) // 3])
    else:
        rng = np.random.default_rng(5)
        body = bytearray(real_history)
        body[4096:] = rng.integers(0, 256, len(body) - 4096, dtype=np.uint8).tobytes()
        db.write_bytes(bytes(body))
    before = db.read_bytes()
    code = main(["trend", "--db", str(db), "--json", str(tmp_path / "trend.json")])
    err = capsys.readouterr().err
    assert code == EXIT_BAD_INPUT
    assert err.startswith("trimlog: error:") and "broken.sqlite" in err, err
    assert db.read_bytes() == before, "a damaged database is never modified"


@pytest.mark.slow  # three interpreters
def test_two_imports_at_once_keep_every_flight(tmp_path):
    db = tmp_path / "history.sqlite"
    logs = [copy_flight(tmp_path, n) for n in (4, 5)]
    env = {**os.environ, "TRIMLOG_DB": str(db)}
    procs = [
        subprocess.Popen([sys.executable, "-m", "trimlog.cli", "import", str(log), "--aircraft",
                          str(SAMPLE_PROFILE), "--db", str(db)],
                         stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, env=env,
                         cwd=tmp_path)
        for log in logs
    ]
    outcomes = [p.communicate(timeout=300) for p in procs]
    for p, (_, err) in zip(procs, outcomes, strict=True):
        assert p.returncode == 0, err
    flights = stored_flights(db)
    assert sorted(f.filename for f in flights) == ["flight4.csv", "flight5.csv"]
    assert all(f.n_points > 0 for f in flights)
    with sqlite3.connect(db) as conn:
        assert conn.execute("PRAGMA integrity_check").fetchone()[0] == "ok"


# --------------------------------------------------------------------------- no traceback


def _cli_cases(tmp_path: Path) -> dict[str, list[str]]:
    """One bad-input command line per subcommand (see COMMANDS)."""
    corrupt = tmp_path / "corrupt.sqlite"
    corrupt.write_bytes(b"this is not a database\n" * 20)
    empty = tmp_path / "empty.sqlite"
    store.open_store(empty).close()
    existing = tmp_path / "existing.bin"
    existing.write_bytes(b"already here")
    blocker = tmp_path / "a_file"
    blocker.write_bytes(b"x")
    profile, missing = str(SAMPLE_PROFILE), str(tmp_path / "missing.csv")
    return {
        "analyze": ["analyze", missing, "--aircraft", profile],
        "report": ["report", missing, "--aircraft", profile, "-o", str(tmp_path / "r.pdf")],
        "import": ["import", str(SAMPLES / "flight1_points.csv"), "--aircraft",
                   str(tmp_path / "no_profile.toml"), "--db", str(empty)],
        "flights": ["flights", "--db", str(corrupt)],
        "trend": ["trend", "--db", str(corrupt)],
        "plan": ["plan", "--db", str(corrupt)],
        "exclude": ["exclude", "--db", str(empty), "--flight", "99", "--point", "1"],
        "export": ["export", "--db", str(corrupt), str(tmp_path / "out")],
        "restore": ["restore", str(tmp_path / "no_export"), "--db", str(empty)],
        "backup": ["backup", "--db", str(empty), str(existing)],
        "demo": ["demo", str(blocker / "demo_data")],
        "dashboard": ["dashboard", "--port", "not-a-port"],
        "bench": ["bench", "--no-such-option"],
    }


COMMANDS = ("analyze", "report", "import", "flights", "trend", "plan", "exclude", "export",
            "restore", "backup", "demo", "dashboard", "bench")


@pytest.mark.slow  # one interpreter start per subcommand
@pytest.mark.parametrize("command", COMMANDS)
def test_bad_input_never_shows_a_traceback(command, tmp_path):
    args = _cli_cases(tmp_path)[command]
    result = cli(*args, env_db=tmp_path / "default.sqlite", timeout=120)
    assert result.returncode == EXIT_BAD_INPUT, (result.returncode, result.stderr[-2000:])
    assert "Traceback" not in result.stderr, result.stderr[-2000:]
    assert re.search(r"^trimlog( \w+)?: error: \S", result.stderr, re.MULTILINE), result.stderr
