import json
import subprocess
import sys
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, EXIT_REFUSED, main
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
PROFILE = str(SAMPLES / "tinkerfinch_tf2.toml")
LOGS = [str(p) for p in sorted(SAMPLES.glob("flight*.csv"))]

CONTRACT_POINT_KEYS = {"flight", "cas_kt", "eas_kt", "cl", "elevator_deg", "stick_force_lbf",
                       "weight_lb", "cg_pct_mac", "t_start_s", "t_end_s", "included"}
CONTRACT_NP_KEYS = {"pct_mac", "ci95_pct_mac", "station_in", "identifiable", "method"}
CONTRACT_INCIDENCE_KEYS = {
    "cruise_cl", "cruise_cg_pct_mac", "elevator_at_cruise_deg", "elevator_at_cruise_ci95_deg",
    "tau", "tau_source", "change_deg", "change_ci95_deg", "shim_thickness_in",
    "shim_thickness_mm", "shim_location"}


@pytest.fixture(scope="module")
def analyzed(tmp_path_factory):
    out = tmp_path_factory.mktemp("cli") / "result.json"
    code = main(["analyze", *LOGS, "--aircraft", PROFILE, "--json", str(out), "--quiet"])
    return code, json.loads(out.read_text())


def test_analyze_writes_the_json_contract(analyzed):
    code, data = analyzed
    assert code == EXIT_OK
    assert set(data) >= {"points", "gradients", "neutral_point", "elevator_power_per_rad",
                         "static_margin", "warnings", "incidence"}
    assert all(CONTRACT_POINT_KEYS <= set(p) for p in data["points"])
    assert all({"flight", "cg_pct_mac", "delev_dcl_deg", "delev_dcl_ci95_deg", "n_points"}
               <= set(g) for g in data["gradients"])
    assert CONTRACT_NP_KEYS <= set(data["neutral_point"]["stick_fixed"])
    assert CONTRACT_NP_KEYS <= set(data["neutral_point"]["stick_free"])
    assert all({"flight", "cg_pct_mac", "stick_fixed_pct_mac", "stick_free_pct_mac"}
               <= set(m) for m in data["static_margin"])
    assert CONTRACT_INCIDENCE_KEYS <= set(data["incidence"])
    assert data["incidence"]["tau_source"] in ("flight-calibrated", "profile",
                                               "chord-ratio estimate")
    assert isinstance(data["elevator_power_per_rad"], float)


def test_point_tables_have_no_time_window(analyzed):
    _, data = analyzed
    card = [p for p in data["points"] if p["flight"] == "flight1_points"]
    assert card and all(p["t_start_s"] is None and p["t_end_s"] is None for p in card)
    logged = [p for p in data["points"] if p["flight"] == "flight2"]
    assert all(p["t_end_s"] > p["t_start_s"] for p in logged)


def test_analyze_summary_is_readable(capsys):
    code = main(["analyze", *LOGS, "--aircraft", PROFILE])
    out = capsys.readouterr().out
    assert code == EXIT_OK
    flat = " ".join(out.split())  # the shim's words wrap at the terminal width
    # the stack is a regression value (the demo's joint tau/elevator interval, 2026-12-02)
    for text in ("stick-fixed (pooled)", "Static margins", "raise the rear attach points",
                 "Cautions", "approval", "Shim: stack 0.025 in + 0.090 in = 0.115 in",
                 "trailing edge up", "leading edge down"):
        assert text in flat, text
    assert "\033[" not in out  # no colour when not on a terminal


def test_not_identifiable_is_refused_but_the_json_is_written(tmp_path, capsys):
    out = tmp_path / "r.json"
    code = main(["analyze", LOGS[1], "--aircraft", PROFILE, "--json", str(out)])
    assert code == EXIT_REFUSED
    data = json.loads(out.read_text())
    fixed = data["neutral_point"]["stick_fixed"]
    assert fixed["identifiable"] is False
    assert fixed["pct_mac"] is None and fixed["ci95_pct_mac"] is None
    assert fixed["station_in"] is None
    assert "NOT IDENTIFIABLE" in capsys.readouterr().out


def test_exclude_option_keeps_the_point_listed(tmp_path):
    out = tmp_path / "r.json"
    main(["analyze", *LOGS, "--aircraft", PROFILE, "--json", str(out), "--quiet",
          "--exclude", "flight2:3"])
    data = json.loads(out.read_text())
    point = [p for p in data["points"] if p["flight"] == "flight2" and p["point"] == 3]
    assert len(point) == 1 and point[0]["included"] is False


@pytest.mark.parametrize(
    ("argv", "message"),
    [
        (["analyze", "nonexistent.csv", "--aircraft", PROFILE], "cannot read the file"),
        (["analyze", LOGS[0], "--aircraft", "nonexistent.toml"], "cannot read the aircraft"),
        (["analyze", LOGS[0], "--aircraft", PROFILE, "--exclude", "flight1_points:x"],
         "whole number"),
        (["analyze", LOGS[0], "--aircraft", PROFILE, "--exclude", "nope:1"], "no such point"),
        (["analyze", PROFILE, "--aircraft", PROFILE], PROFILE),
        (["import", "nonexistent.csv", "--aircraft", PROFILE, "--db", "{db}"],
         "cannot read the file"),
        (["flights", "--db", "{empty}"], "history is empty"),
        (["trend", "--db", "{empty}"], "history is empty"),
        (["plan", "--db", "{empty}"], "history is empty"),
        (["report", "-o", "{tmp}/r.pdf"], "give LOG files"),
        (["trend", "--db", "{corrupt}"], "not"),
        (["exclude", "--db", "{empty}", "--flight", "99", "--point", "1"], "99"),
        (["restore", "{tmp}/missing", "--db", "{db}"], "missing"),
    ],
)
def test_bad_input_exits_2_with_a_message(argv, message, tmp_path, capsys):
    corrupt = tmp_path / "corrupt.sqlite"
    corrupt.write_bytes(b"this is not a database" * 50)
    empty = tmp_path / "empty.sqlite"
    open_store(empty).close()  # reading commands refuse a database that does not exist
    argv = [a.format(db=tmp_path / "h.sqlite", tmp=tmp_path, corrupt=corrupt, empty=empty)
            for a in argv]
    assert main(argv) == EXIT_BAD_INPUT
    err = capsys.readouterr().err
    assert err.startswith("trimlog: error:") and message in err
    assert "Traceback" not in err


def test_history_commands_end_to_end(tmp_path, capsys, new_location):
    # On both engines (new_location: an SQLite file or a PostgreSQL URL, see conftest.py).
    db = str(new_location())
    assert main(["import", *LOGS[:3], "--aircraft", PROFILE, "--db", db]) == EXIT_OK
    assert main(["import", LOGS[1], "--aircraft", PROFILE, "--db", db]) == EXIT_OK
    assert "already stored" in capsys.readouterr().out
    assert main(["flights", "--db", db, "--json", str(tmp_path / "f.json")]) == EXIT_OK
    assert len(json.loads((tmp_path / "f.json").read_text())) == 3
    assert main(["trend", "--db", db, "--json", str(tmp_path / "t.json")]) == EXIT_OK
    trend = json.loads((tmp_path / "t.json").read_text())
    assert [s["n_flights"] for s in trend["trend"]] == [1, 2, 3]
    # after the demo's first three flights the light stick force per g allows no step aft
    # (the plan keeps the maneuvering limits, as analyze does)
    assert trend["next_step"]["max_cg_pct_mac"] is None
    assert trend["next_step"]["limited_by"] == "min_stick_force_per_g"
    assert main(["plan", "--db", db, "--min-margin", "10", "--json",
                 str(tmp_path / "p.json")]) == EXIT_OK
    plan = json.loads((tmp_path / "p.json").read_text())
    assert plan["min_static_margin_pct_mac"] == 10.0
    assert main(["exclude", "--db", db, "--flight", "2", "--point", "1"]) == EXIT_OK
    assert main(["exclude", "--db", db, "--flight", "2", "--point", "1", "--include"]) == EXIT_OK
    assert main(["export", "--db", db, str(tmp_path / "exp")]) == EXIT_OK
    assert main(["restore", str(tmp_path / "exp"), "--db", str(new_location())]) == 0
    assert main(["backup", "--db", db, str(tmp_path / "b.sqlite")]) == EXIT_OK
    assert main(["trend", "--db", str(tmp_path / "b.sqlite"), "--json",
                 str(tmp_path / "t2.json")]) == EXIT_OK
    assert json.loads((tmp_path / "t2.json").read_text())["trend"] == trend["trend"]


def test_demo_writes_the_sample_files(tmp_path, capsys):
    assert main(["demo", str(tmp_path / "demo")]) == EXIT_OK
    written = sorted(p.name for p in (tmp_path / "demo").iterdir())
    assert written == sorted(p.name for p in SAMPLES.iterdir())


def test_every_subcommand_has_help_with_an_example(capsys):
    for command in ("analyze", "report", "import", "flights", "trend", "plan", "exclude",
                    "export", "restore", "backup", "demo", "dashboard", "bench"):
        with pytest.raises(SystemExit) as exit_info:
            main([command, "--help"])
        assert exit_info.value.code == 0
        assert "example:" in capsys.readouterr().out


def test_analyze_path_imports_neither_plotting_nor_the_dashboard(tmp_path):
    # nor statsmodels, scipy.stats or scipy.optimize: together about 2 s of start-up;
    # they load only inside the diagnostics that need them
    out = tmp_path / "r.json"
    code = (
        "import sys; from trimlog.cli import main; "
        f"rc = main(['analyze', {LOGS[0]!r}, {LOGS[1]!r}, '--aircraft', {PROFILE!r}, "
        f"'--json', {str(out)!r}, '--quiet']); "
        "heavy = [m for m in ('matplotlib', 'streamlit', 'statsmodels', 'scipy.stats', "
        "'scipy.optimize') if m in sys.modules]; "
        "print(rc, heavy)"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            check=True)
    assert result.stdout.split()[1:] == ["[]"], result.stdout
    assert out.exists()


def test_the_console_script_leaves_the_end_of_the_process_to_the_system(tmp_path):
    # trimlog.cli.command: main's status, then the collector frozen so that Python does
    # not search every object of a finished command for cycles before the process ends;
    # the report it wrote is complete (a whole PDF, ending in %%EOF)
    out = tmp_path / "r.pdf"
    code = (
        "import gc, sys; from trimlog import cli; "
        f"sys.argv = ['trimlog', 'report', *{LOGS!r}, '--aircraft', {PROFILE!r}, "
        f"'-o', {str(out)!r}]; "
        "rc = cli.command(); "
        "print(rc, gc.isenabled(), gc.get_freeze_count() > 0)"
    )
    result = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True,
                            check=True)
    assert result.stdout.split()[-3:] == [str(EXIT_OK), "False", "True"], result.stdout
    assert out.read_bytes().rstrip().endswith(b"%%EOF")
    # in-process callers of main keep their collector
    assert main(["demo", str(tmp_path / "demo")]) == EXIT_OK
    import gc

    assert gc.isenabled()


def test_the_installed_script_is_the_console_entry_point():
    import tomllib

    project = tomllib.loads((SAMPLES.parent / "pyproject.toml").read_text(encoding="utf-8"))
    assert project["project"]["scripts"] == {"trimlog": "trimlog.cli:command"}
