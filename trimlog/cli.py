"""The ``trimlog`` command.

Every subcommand reads its inputs, calls the package and prints or writes the
result.  Exit status: 0 results, 1 analysis refused (e.g. a neutral point the
data cannot identify yet), 2 bad input, 3 internal error (a bug in trimlog).
A :class:`~trimlog.errors.TrimlogError` becomes one clear message on stderr,
never a traceback; any other error is reported in one paragraph as a bug
(``TRIMLOG_DEBUG=1`` prints its traceback too).

Heavy libraries load only inside the subcommand that needs them:
``trimlog analyze --json`` imports neither matplotlib nor streamlit.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
from collections.abc import Callable, Sequence
from pathlib import Path
from typing import Any, TextIO

from trimlog import __version__
from trimlog.errors import TrimlogError
from trimlog.progress import SILENT, Progress, TerminalProgress

EXIT_OK, EXIT_REFUSED, EXIT_BAD_INPUT, EXIT_INTERNAL = 0, 1, 2, 3

_EPILOG_EXAMPLE = "example:\n  {0}\n"


def main(argv: Sequence[str] | None = None) -> int:
    """Run the command line; return the exit status."""
    parser = _build_parser()
    args = parser.parse_args(argv)
    if not hasattr(args, "run"):
        parser.print_help()
        return EXIT_BAD_INPUT
    try:
        return args.run(args)
    except TrimlogError as exc:
        _print(f"trimlog: error: {exc}", file=sys.stderr)
        return EXIT_BAD_INPUT
    except KeyboardInterrupt:
        _print("trimlog: interrupted", file=sys.stderr)
        return 130
    except BrokenPipeError:
        return EXIT_OK
    except Exception as exc:  # noqa: BLE001 - the one place an unforeseen error is reported
        return _internal_error(exc)


def command() -> int:
    """The ``trimlog`` console script: :func:`main` on ``sys.argv``, then a quick exit.

    When a command is done the process ends, and everything it made goes
    with it.  Python would first search all of it for reference cycles to
    free (0.2 s after an analysis, 0.6 s after a report with its figures,
    measured on the demo); :func:`gc.freeze` leaves those objects to the
    operating system instead.  Files are closed, databases committed and
    ``atexit`` handlers run before this as before, so nothing written is
    lost.  Only for the console script: a caller of :func:`main` keeps its
    collector.
    """
    import gc

    status = main()
    gc.disable()
    gc.freeze()
    return status


def _print(*parts: object, file: TextIO | None = None, flush: bool = False,
           colour: bool = False) -> None:
    """Print without control characters or escape sequences from the user's files."""
    from trimlog.terminal_text import printable

    print(printable(" ".join(str(p) for p in parts), keep_colour=colour),
          file=sys.stdout if file is None else file, flush=flush)


def _internal_error(exc: BaseException) -> int:
    """Report a bug in trimlog in one paragraph (the traceback only with TRIMLOG_DEBUG=1)."""
    if os.environ.get("TRIMLOG_DEBUG"):
        import traceback

        traceback.print_exception(exc, file=sys.stderr)
    text = str(exc).splitlines()[0][:300] if str(exc) else ""
    _print(
        f"trimlog: internal error ({type(exc).__name__}{': ' + text if text else ''}). "
        "This is a bug in trimlog, not a problem with your files as far as trimlog can tell; "
        "no file was changed by the failed step. Please report it with the command you ran "
        "(run again with TRIMLOG_DEBUG=1 to see the details).",
        file=sys.stderr,
    )
    return EXIT_INTERNAL


# long: the one declarative table of every command and option, read top to bottom
def _build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="trimlog",
        description=(
            "Flight-test trim analysis for light aircraft: neutral points, static margins, "
            "stick-force stability, elevator authority and the stabilizer shim. Results are "
            "estimates from your data, never an approval."
        ),
        formatter_class=argparse.RawDescriptionHelpFormatter,
        epilog=(
            "start here:\n"
            "  trimlog demo demo_data          write the invented demo aircraft and flights\n"
            "  trimlog analyze demo_data/*.csv --aircraft demo_data/tinkerfinch_tf2.toml\n"
            "  trimlog dashboard               the web dashboard, demo preloaded"
        ),
    )
    parser.add_argument("--version", action="version", version=f"trimlog {__version__}")
    sub = parser.add_subparsers(title="commands", metavar="COMMAND")

    def command(
        name: str, run: Callable[[argparse.Namespace], int], help_text: str, example: str
    ) -> argparse.ArgumentParser:
        p = sub.add_parser(
            name,
            help=help_text,
            description=help_text,
            epilog=_EPILOG_EXAMPLE.format(example),
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        p.set_defaults(run=run)
        return p

    p = command(
        "analyze",
        _run_analyze,
        "Analyse one or more logs or point tables together (each file one flight), in the "
        "order flown; with --db, together with every flight saved for the aircraft.",
        "trimlog analyze flight1.csv flight2.csv --aircraft plane.toml --json result.json\n"
        "  trimlog analyze today.csv --db history.sqlite --aircraft-name 'My plane'",
    )
    _add_log_inputs(p, with_db=True)
    _add_maneuver_choices(p)
    p.add_argument("--json", metavar="OUT.json", help="write the machine-readable result")
    p.add_argument("--quiet", action="store_true", help="no terminal summary")
    p.add_argument("--calibrate-from", action="append", default=[], metavar="CAL_LOG",
                   help="airspeed-calibration log (GPS legs; repeatable): calibrate first and "
                        "analyse with that position-error table instead of the profile's")

    p = command(
        "calibrate",
        _run_calibrate,
        "Airspeed calibration from GPS legs: TAS and wind per speed, the position error "
        "CAS - IAS, and a profile with the table filled.",
        "trimlog calibrate cal_flight.csv --aircraft plane.toml --json cal.json "
        "--write-profile plane_calibrated.toml",
    )
    p.add_argument("logs", nargs="+", metavar="LOG",
                   help="calibration logs or leg tables (CSV with IAS, pressure altitude, "
                        "GPS ground speed and track)")
    p.add_argument("--aircraft", required=True, metavar="PROFILE.toml", help="aircraft profile")
    p.add_argument("--json", metavar="OUT.json", help="write the machine-readable result")
    p.add_argument("--write-profile", metavar="NEW.toml",
                   help="write a copy of the profile with the airspeed-calibration table "
                        "filled (everything else byte for byte)")
    p.add_argument("--report", metavar="CAL.pdf",
                   help="write the calibration report (PDF, or HTML for a .html name): the "
                        "circle fit per speed and the position error against IAS")
    p.add_argument("--min-leg", type=float, metavar="SECONDS",
                   help="shortest steady leg in a time-series log (default 20 s)")
    p.add_argument("--db", metavar="DB",
                   help="also keep the calibration with the aircraft in this flight history "
                        "(its profile's next version); later recomputes use it")
    p.add_argument("--quiet", action="store_true", help="no terminal summary")

    p = command(
        "report",
        _run_report,
        "Write a PDF flight-test report from logs or from the flight history (with --db and "
        "logs: the saved flights and the new logs together).",
        "trimlog report flight*.csv --aircraft plane.toml -o report.pdf",
    )
    p.add_argument("logs", nargs="*", metavar="LOG", help="logs or point tables (CSV)")
    p.add_argument("--aircraft", metavar="PROFILE.toml", help="aircraft profile")
    p.add_argument("--db", metavar="DB", help="make the report from this flight history "
                   "(it must exist)")
    p.add_argument("--aircraft-name", metavar="NAME",
                   help="with --db: which aircraft (needed when the history holds several)")
    p.add_argument("-o", "--output", required=True, metavar="REPORT.pdf", help="PDF to write")
    _add_detection_options(p)
    _add_maneuver_choices(p)

    p = command(
        "import",
        _run_import,
        "Add flights to the aircraft's history (re-importing a file changes nothing).",
        "trimlog import flight3.csv --aircraft plane.toml --db history.sqlite",
    )
    _add_log_inputs(p)
    _add_db(p)
    p.add_argument("--label", help="label for the flight (one file only)")
    p.add_argument("--notes", help="notes for the flight (one file only)")
    p.add_argument("--replace-sheet", action="store_true",
                   help="a flight saved already with another loading sheet takes the one given "
                   "now (the earlier sheet is kept in its record); without it such a file is "
                   "refused, naming what differs")

    p = command(
        "edit",
        _run_edit,
        "Change the label, notes or date of a saved flight.",
        "trimlog edit --db history.sqlite --flight 3 --label 'aft CG, new shim'",
    )
    _add_db(p)
    p.add_argument("--flight", type=int, required=True, help="history id (see 'trimlog flights')")
    p.add_argument("--label", help="new label")
    p.add_argument("--notes", help="new notes")
    p.add_argument("--date", metavar="YYYY-MM-DD", help="date flown (the programme is "
                   "renumbered in date order)")

    p = command(
        "flights",
        _run_flights,
        "List the flights in the history.",
        "trimlog flights --db history.sqlite",
    )
    _add_db(p, choose_aircraft=True)
    p.add_argument("--json", metavar="OUT.json", help="write the list as JSON")

    p = command(
        "trend",
        _run_trend,
        "Neutral point after each successive flight, and the next CG step.",
        "trimlog trend --db history.sqlite --json trend.json",
    )
    _add_db(p, choose_aircraft=True)
    p.add_argument("--json", metavar="OUT.json", help="write the trend as JSON")

    p = command(
        "plan",
        _run_plan,
        "Suggest how far aft the next flight may go, with the reasoning.",
        "trimlog plan --db history.sqlite --min-margin 5 --max-step 2",
    )
    _add_db(p, choose_aircraft=True)
    p.add_argument("--min-margin", type=float, metavar="PCT_MAC",
                   help="minimum static margin policy [%%MAC] (default: the profile's)")
    p.add_argument("--max-step", type=float, metavar="PCT_MAC",
                   help="largest step beyond the most aft CG flown [%%MAC]")
    p.add_argument("--json", metavar="OUT.json", help="write the plan as JSON")

    p = command(
        "exclude",
        _run_exclude,
        "Exclude (or --include again) a point of a stored flight; the choice is kept.",
        "trimlog exclude --db history.sqlite --flight 3 --point 5",
    )
    _add_db(p)
    p.add_argument("--flight", type=_record_id, required=True,
                   help="flight id (see 'trimlog flights')")
    p.add_argument("--point", type=_record_id, required=True,
                   help="point number within the flight")
    p.add_argument("--include", action="store_true", help="include the point again")
    p.add_argument("--maneuver", action="store_true",
                   help="the point is a maneuvering point (numbered on their own; see the "
                   "'maneuvering' points of analyze)")
    p.add_argument("--reason", metavar="TEXT",
                   help="why the point is left out (e.g. turbulence, 'not stabilized', "
                   "'wrong configuration'); kept in the history, shown in the report and "
                   "--json (trim points only)")

    p = command(
        "export",
        _run_export,
        "Export every flight, point and result as CSV and JSON.",
        "trimlog export --db history.sqlite exported/",
    )
    _add_db(p)
    p.add_argument("directory", help="folder to write into")

    p = command(
        "restore",
        _run_restore,
        "Import an export folder into an empty history database.",
        "trimlog restore exported/ --db new.sqlite",
    )
    _add_db(p)
    p.add_argument("directory", help="a folder written by 'trimlog export'")

    p = command(
        "backup",
        _run_backup,
        "Copy the history database safely while it may be in use.",
        "trimlog backup --db history.sqlite backup.sqlite",
    )
    _add_db(p)
    p.add_argument("destination", help="backup file to write")

    p = command(
        "demo",
        _run_demo,
        "Write the invented demo aircraft profile and its flights.",
        "trimlog demo demo_data",
    )
    p.add_argument("directory", nargs="?", default="demo_data", help="folder (default demo_data)")

    p = command(
        "dashboard",
        _run_dashboard,
        "Start the web dashboard on this computer (http://127.0.0.1:8501).",
        "trimlog dashboard --port 8501",
    )
    p.add_argument("--port", type=int, default=8501, metavar="PORT",
                   help="TCP port the dashboard listens on (default 8501); open "
                        "http://127.0.0.1:PORT in a browser")
    p.add_argument("--address", default="127.0.0.1", help="listen address (default localhost)")

    p = command(
        "bench",
        _run_bench,
        "Measure speed on generated logs and print the figures and ratios.",
        "trimlog bench --quick",
    )
    p.add_argument("--quick", action="store_true", help="smaller sizes, for a first look")
    p.add_argument("--section", action="append", default=[], metavar="NAME",
                   help="run only this section (repeatable): chain, season, startup, report, "
                        "growth, history, dashboard, browser, memory")
    return parser


def _record_id(text: str) -> int:
    """A flight id or point number: a whole number 1..2**63-1 (what the database can hold)."""
    try:
        value = int(text)
    except ValueError:
        raise argparse.ArgumentTypeError(f"expected a whole number, found {text!r}") from None
    if not 1 <= value <= 2**63 - 1:
        raise argparse.ArgumentTypeError(
            f"expected a number from 1 to {2**63 - 1}, found {text[:40]!r}"
            f"{'...' if len(text) > 40 else ''}")
    return value


def _add_log_inputs(p: argparse.ArgumentParser, *, with_db: bool = False) -> None:
    p.add_argument("logs", nargs="+", metavar="LOG", help="logs or point tables (CSV)")
    if not with_db:
        p.add_argument("--aircraft", required=True, metavar="PROFILE.toml",
                       help="aircraft profile")
    else:
        p.add_argument("--aircraft", metavar="PROFILE.toml",
                       help="aircraft profile (with --db: or the aircraft's name in the history)")
        p.add_argument("--db", metavar="DB",
                       help="also analyse every flight saved for the aircraft in this history "
                       "(with its saved point choices); the database must exist")
        p.add_argument("--aircraft-name", metavar="NAME",
                       help="with --db: the aircraft in the history (its saved profile is used)")
    _add_detection_options(p)


def _add_detection_options(p: argparse.ArgumentParser) -> None:
    p.add_argument(
        "--loading",
        action="append",
        default=[],
        metavar="LOG=SHEET",
        help="loading sheet for a log (default: LOG's name with .loading.toml beside it)",
    )
    p.add_argument(
        "--exclude",
        action="append",
        default=[],
        metavar="FLIGHT:POINT",
        help="leave a point out of the fits (repeatable); it stays listed",
    )
    p.add_argument(
        "--min-hold",
        type=float,
        metavar="SECONDS",
        help="minimum duration of a stabilized point in a time-series log",
    )


def _add_maneuver_choices(p: argparse.ArgumentParser) -> None:
    p.add_argument("--exclude-maneuver", action="append", default=[], metavar="FLIGHT:POINT",
                   help="leave a maneuvering point out of the gradients per g (repeatable); "
                   "it stays listed")
    p.add_argument("--include-maneuver", action="append", default=[], metavar="FLIGHT:POINT",
                   help="fit a maneuvering point trimlog left out (an off-speed turn; "
                   "repeatable)")


def _maneuver_choices(args: argparse.Namespace) -> dict[str, list[tuple[str, int]]]:
    """The ``maneuver_exclusions``/``maneuver_inclusions`` keywords of the analysis."""
    excluded = _exclusions(args.exclude_maneuver, "--exclude-maneuver")
    included = _exclusions(args.include_maneuver, "--include-maneuver")
    both = sorted(set(excluded) & set(included))
    if both:
        flight, point = both[0]
        raise TrimlogError(f"--exclude-maneuver and --include-maneuver both name {flight}:{point}")
    return {"maneuver_exclusions": excluded, "maneuver_inclusions": included}


def _add_db(p: argparse.ArgumentParser, *, choose_aircraft: bool = False) -> None:
    p.add_argument(
        "--db",
        metavar="DB",
        help="history database: a file (SQLite), or postgresql://user@host:port/dbname for a "
        "shared server (password from PGPASSWORD, ~/.pgpass or a service file, never here); "
        "default: $TRIMLOG_DB, else the user data directory",
    )
    if choose_aircraft:
        p.add_argument(
            "--aircraft-name",
            metavar="NAME",
            help="which aircraft of the history (needed when it holds several)",
        )


def _progress(message: str) -> None:
    """Progress on stderr when it is a terminal; quiet in pipes and CI logs."""
    if sys.stderr.isatty():
        _print(message, file=sys.stderr, flush=True)


def _write_json(path: str, payload: object) -> None:
    from trimlog.files import write_atomically

    text = json.dumps(payload, indent=2, allow_nan=False) + "\n"
    write_atomically(path, text, what="JSON result")


def _load_inputs(  # -> (profile, flights)
    args: argparse.Namespace, progress: Progress = SILENT, profile=None,
):
    from trimlog.pipeline import chain as analysis

    if profile is None:
        profile = analysis.load_profile(args.aircraft)
    if getattr(args, "calibrate_from", None):
        profile = _calibrated_profile(profile, args.calibrate_from)
    loading_overrides = _loading_sheets(args.logs, args.loading)
    flights = []
    for log in args.logs:
        flights.extend(
            analysis.load_flight_file(
                log,
                profile,
                loading_path=loading_overrides.get(log),
                min_hold_s=args.min_hold,
                progress=progress,
            )
        )
    return profile, flights


def _calibrated_profile(profile, logs: list[str]):
    from trimlog.pipeline import calibration

    _progress("calibrating airspeed from " + ", ".join(logs))
    result = calibration.calibrate(
        [calibration.read_calibration_log(log, profile) for log in logs])
    return calibration.with_calibration(profile, result)


def _loading_sheets(logs: Sequence[str], values: list[str]) -> dict[str, str]:
    """``--loading LOG=SHEET`` by log as typed; LOG matched by resolved path, never ignored."""
    by_path: dict[Path, str] = {}
    for log in logs:
        by_path.setdefault(Path(log).resolve(), log)
    out: dict[str, str] = {}
    for value in values:
        left, found, right = value.rpartition("=")
        if not found or not left or not right:
            raise TrimlogError(f"--loading: expected LOG=SHEET, found {value!r}")
        log = by_path.get(Path(left).resolve())
        if log is None:
            raise TrimlogError(
                f"--loading {value}: {left} is none of the logs given "
                f"({', '.join(logs)}); name the log as one of them")
        if log in out and out[log] != right:
            raise TrimlogError(f"--loading: two loading sheets for {log} ({out[log]} and "
                               f"{right}); give one")
        out[log] = right
    return out


def _exclusions(values: list[str], option: str = "--exclude") -> list[tuple[str, int]]:
    """Every ``--exclude FLIGHT:POINT`` given (several points of one flight are all kept)."""
    out: list[tuple[str, int]] = []
    for value in values:
        flight, found, point = value.rpartition(":")
        if not found or not flight or not point:
            raise TrimlogError(f"{option}: expected FLIGHT:POINT, found {value!r}")
        try:
            number = int(point)
        except ValueError:
            raise TrimlogError(
                f"{option}: point must be a whole number, found {point!r}"
            ) from None
        if (flight, number) not in out:
            out.append((flight, number))
    return out


def _db_profile(args: argparse.Namespace, st):  # -> (profile or None, aircraft name or None)
    """With --db: ``--aircraft`` is a profile file, or else the aircraft's name in the history."""
    from trimlog.pipeline import chain as analysis

    name = getattr(args, "aircraft_name", None)
    given = args.aircraft
    if given is None:
        return None, name
    if Path(given).is_file() or given.lower().endswith(".toml") or name is not None:
        return analysis.load_profile(given), name
    if st.find_aircraft(given) is not None:
        return None, given
    known = ", ".join(f"'{a.name}'" for a in st.aircraft_list()) or "none"
    raise TrimlogError(
        f"--aircraft {given!r}: neither a profile file nor an aircraft of {st.path} "
        f"(aircraft there: {known})")


def _analyze_with_db(args: argparse.Namespace, progress: Progress = SILENT):  # -> Analysis
    from trimlog.history import programme

    with _open_store(args.db, must_exist=True, read_only=True) as st:
        profile, name = _db_profile(args, st)
        if profile is None:
            record = programme.find_aircraft(st, name)
            if record is None:
                raise TrimlogError(f"{args.db}: no aircraft named {name!r} in the history")
            from trimlog.input.profile import parse_profile

            profile = parse_profile(record.profile_text, source=f"history: {record.name}")
            name = record.name
        profile, flights = _load_inputs(args, progress, profile)
        return programme.analyze_programme(
            st, flights, profile=profile, aircraft=name,
            exclusions=_exclusions(args.exclude), min_hold_s=args.min_hold, progress=progress,
            **_maneuver_choices(args))


def _run_analyze(args: argparse.Namespace) -> int:
    from trimlog.pipeline import chain as analysis
    from trimlog.views import terminal as summary

    # reading and points per file, then the fits: a bar on a terminal's stderr
    with TerminalProgress(2 * len(args.logs) + 1) as progress:
        if args.db:
            result = _analyze_with_db(args, progress)
        else:
            if args.aircraft is None:
                raise TrimlogError("analyze: give --aircraft PROFILE.toml (or --db DB with the "
                                   "aircraft saved there)")
            profile, flights = _load_inputs(args, progress)
            result = analysis.analyze(flights, profile, exclusions=_exclusions(args.exclude),
                                      progress=progress, **_maneuver_choices(args))
    if args.json:
        from trimlog.views.json_export import analysis_to_dict

        _write_json(args.json, analysis_to_dict(result))
    if not args.quiet:
        if result.programme is not None:
            _print(result.programme.describe() + "\n")
        colour = _use_color()
        _print(summary.render(result, color=colour), colour=colour)
    return _analysis_status(result)


def _analysis_status(result: Any) -> int:
    """Exit 0, or 1 with the reason on stderr (printed even with --quiet)."""
    if result.identifiable:
        return EXIT_OK
    reason = result.primary.stability.stick_fixed.neutral_point.reason
    return _refused(f"the stick-fixed neutral point is not identifiable: {reason}")


def _refused(reason: str) -> int:
    """Exit status 1 (a result the data cannot support), with its reason on stderr."""
    _print(f"trimlog: exit 1 (no supported result): {reason}", file=sys.stderr)
    return EXIT_REFUSED


def _trend_status(trend: Any) -> int:
    """Exit 0, or 1 with the reason on stderr, for trend and plan."""
    if trend.identifiable:
        return EXIT_OK
    if not trend.steps:
        return _refused("no flight with stabilized points is saved for this aircraft yet")
    return _refused("the latest stick-fixed neutral point is not identifiable: "
                    + trend.steps[-1].stick_fixed.reason)


def _run_calibrate(args: argparse.Namespace) -> int:
    from trimlog.input.profile import load_profile
    from trimlog.pipeline import calibration
    from trimlog.views.calibration import calibration_to_dict, render_calibration

    profile = load_profile(args.aircraft)
    settings = calibration.LegSettings(
        **({} if args.min_leg is None else {"min_leg_s": args.min_leg}))
    logs = []
    for number, log in enumerate(args.logs, start=1):
        _progress(f"reading {log} ({number}/{len(args.logs)})")
        logs.append(calibration.read_calibration_log(log, profile))
    result = calibration.calibrate(logs, settings=settings)
    if args.json:
        _write_json(args.json, calibration_to_dict(result))
    if not args.quiet:
        _print(render_calibration(result))
    if args.report:
        from trimlog.views.calibration_report import write_calibration_report

        write_calibration_report(result, args.report, aircraft=profile.name)
    if args.write_profile:
        if len(result.table_ias_kt) < 2:
            _print(f"trimlog: {args.write_profile} not written: a position-error table needs "
                  "at least two calibrated speeds", file=sys.stderr)
            return EXIT_REFUSED
        _write_calibrated_profile(args.aircraft, args.write_profile, result)
    if args.db:
        if len(result.table_ias_kt) < 2:
            _print(f"trimlog: nothing stored in {args.db}: a position-error table needs at "
                  "least two calibrated speeds", file=sys.stderr)
            return EXIT_REFUSED
        from trimlog.history.service import store_calibration

        with _open_store(args.db) as store:
            record = store_calibration(store, profile, result)
        _print(f"kept with '{record.name}' in {args.db} as profile version "
              f"{record.profile_version}", file=sys.stderr)
    if result.determinable:
        return EXIT_OK
    return _refused(next((f.message for f in result.findings
                          if f.code == "pipeline.calibration.not_determinable"),
                         "the position error cannot be determined from these data"))


def _write_calibrated_profile(source: str, target: str, result) -> None:
    from datetime import UTC, datetime

    from trimlog.files import read_regular_file, write_atomically
    from trimlog.input.profile_writer import replace_calibration

    raw = read_regular_file(source, "aircraft profile")
    bom = raw.startswith(b"\xef\xbb\xbf")
    text = raw.decode("utf-8-sig")
    stamp = datetime.now(UTC).strftime("%Y-%m-%d")
    comment = (f"written by trimlog calibrate {stamp} from "
               f"{', '.join(Path(s).name for s in result.sources)} (GPS legs); an estimate, "
               "confirm it before relying on it")
    new = replace_calibration(text, result.table_ias_kt, result.table_cas_kt,
                              comment=comment, source=source)
    data = (b"\xef\xbb\xbf" if bom else b"") + new.encode("utf-8")
    write_atomically(target, data, what="aircraft profile")


def _run_report(args: argparse.Namespace) -> int:
    from trimlog.views.report_worker import start_report_worker

    # forked first: it imports the drawing stack while this process analyses
    worker = start_report_worker()
    try:
        return _report(args, worker)
    finally:
        if worker is not None:
            worker.close()


def _report(args: argparse.Namespace, worker: Any) -> int:
    from trimlog.pipeline import chain as analysis

    if worker is not None:
        write_report = worker.write
    else:
        from trimlog.views.report import write_report
    with TerminalProgress(2 * len(args.logs or ()) + 1) as progress:
        if args.db and args.logs:
            result = _analyze_with_db(args, progress)
            trend = None
        elif args.db:
            if args.exclude_maneuver or args.include_maneuver:
                raise TrimlogError("report --db: keep maneuvering-point choices in the history "
                                   "with 'trimlog exclude --db DB --flight ID --point N "
                                   "--maneuver' (or give LOG files as well)")
            progress.step("reading", args.db)
            result, trend = _history_analysis(args.db, args.aircraft_name)
        else:
            if not args.logs or not args.aircraft:
                raise TrimlogError("report: give LOG files with --aircraft, or --db DB")
            profile, flights = _load_inputs(args, progress)
            result = analysis.analyze(flights, profile, exclusions=_exclusions(args.exclude),
                                      progress=progress, **_maneuver_choices(args))
            trend = None
        path = write_report(result, args.output,
                            trend=trend.records() if trend is not None else None,
                            progress=progress)
    _print(f"report written to {path}")
    return _analysis_status(result)


def _open_store(db: str | None, *, must_exist: bool = False, read_only: bool = False):
    """Open the history; a command that only reads refuses a database that does not exist.

    ``read_only``: the command only reads, so the database is opened read-only
    (a read-only file or folder, or an archived copy, works; nothing is written).
    """
    from trimlog.files import check_input_file
    from trimlog.history import store

    if "://" not in str(db or ""):
        # A named pipe or device as the database would block or be damaged: regular files only.
        check_input_file(Path(db).expanduser() if db else store.default_path(),
                         "history database", missing_ok=True)
    if must_exist:
        where = db if db is not None else store.default_location()
        path = where if store.is_server_url(where) else Path(where).expanduser()
        if isinstance(path, Path) and not path.exists():
            raise TrimlogError(
                f"{path}: no such history database (this command only reads one): check the "
                "path, or create it by saving flights with 'trimlog import'")
    return store.open_store(db, read_only=read_only)


def _history_analysis(db: str, aircraft: str | None):
    from trimlog.history import service as history

    with _open_store(db, must_exist=True, read_only=True) as st:
        return history.analyze_history(st, aircraft), history.trend(st, aircraft)


def _run_import(args: argparse.Namespace) -> int:
    from trimlog.history import service as history

    if (args.label or args.notes) and len(args.logs) > 1:
        raise TrimlogError("import: --label and --notes apply to one file at a time")
    from trimlog.input.profile import load_profile

    profile_text = load_profile(args.aircraft).text
    loading_overrides = _loading_sheets(args.logs, args.loading)
    exclusions = _exclusions(args.exclude)
    with _open_store(args.db) as st:
        saved = []
        for number, log in enumerate(args.logs, start=1):
            _progress(f"importing {log} ({number}/{len(args.logs)})")
            outcome = history.import_log(
                st,
                log,
                profile_text=profile_text,
                profile_source=args.aircraft,
                loading_path=loading_overrides.get(log),
                label=args.label,
                notes=args.notes,
                min_hold_s=args.min_hold,
                replace_sheet=args.replace_sheet,
            )
            saved.append(outcome.flight_id)
            _print(outcome.message)
        for line in history.apply_exclusions(st, saved, exclusions):
            _print(line)
    return EXIT_OK


def _run_edit(args: argparse.Namespace) -> int:
    from trimlog.history import service as history

    with _open_store(args.db, must_exist=True) as st:
        _print(history.edit_flight(st, args.flight, label=args.label, notes=args.notes,
                                  date=args.date))
    return EXIT_OK


def _run_flights(args: argparse.Namespace) -> int:
    from trimlog.history import service as history
    from trimlog.views import terminal as summary

    with _open_store(args.db, must_exist=True, read_only=True) as st:
        listing = history.flight_listing(st, args.aircraft_name)
        where = st.location
    if args.json:
        _write_json(args.json, listing)
    _print(f"history: {where}")
    _print(summary.render_flights(listing))
    return EXIT_OK


def _run_trend(args: argparse.Namespace) -> int:
    from trimlog.history import service as history
    from trimlog.views import terminal as summary

    with _open_store(args.db, must_exist=True, read_only=True) as st:
        trend = history.trend(st, args.aircraft_name)
    if args.json:
        _write_json(args.json, trend.to_dict())
    colour = _use_color()
    _print(summary.render_trend(trend, color=colour), colour=colour)
    return _trend_status(trend)


def _run_plan(args: argparse.Namespace) -> int:
    from trimlog.history import service as history
    from trimlog.input.profile import check_policy
    from trimlog.views import terminal as summary

    if args.min_margin is not None:
        check_policy("limits.min_static_margin", args.min_margin, source="--min-margin")
    if args.max_step is not None:
        check_policy("limits.cg_step_max", args.max_step, source="--max-step")
    with _open_store(args.db, must_exist=True, read_only=True) as st:
        trend = history.trend(st, args.aircraft_name, min_margin_pct_mac=args.min_margin,
                              max_step_pct_mac=args.max_step)
    if args.json:
        _write_json(args.json, trend.to_dict()["next_step"])
    colour = _use_color()
    _print(summary.render_plan(trend, color=colour), colour=colour)
    return _trend_status(trend)


def _run_exclude(args: argparse.Namespace) -> int:
    reason = (args.reason or "").strip()
    if args.reason is not None and (args.include or args.maneuver or not reason):
        raise TrimlogError(
            "--reason: " + ("give the reason in words" if not reason else
                            "a reason goes with a trim point being excluded, not with "
                            + ("--include" if args.include else "--maneuver"))
            + "; nothing was changed")
    if args.maneuver:
        from trimlog.history.maneuver_choices import set_maneuver_included

        with _open_store(args.db, must_exist=True) as st:
            print(set_maneuver_included(st, args.flight, args.point, args.include))
        return EXIT_OK
    with _open_store(args.db, must_exist=True) as st:
        st.set_point_included(args.flight, args.point, args.include)
        if reason:
            from trimlog.history.maneuver_choices import set_exclusion_reason

            set_exclusion_reason(st, args.flight, args.point, reason)
    state = "included" if args.include else "excluded"
    _print(f"flight {args.flight} point {args.point}: {state}"
           + (f" (reason: {reason})" if reason else ""))
    return EXIT_OK


def _run_export(args: argparse.Namespace) -> int:
    with _open_store(args.db, must_exist=True, read_only=True) as st:
        written = st.export(Path(args.directory))
    _print(f"{len(written)} files written to {args.directory}")
    return EXIT_OK


def _run_restore(args: argparse.Namespace) -> int:
    from trimlog.history import store
    from trimlog.history.restore_check import load_export

    # The whole export is checked before the target is opened: a refused restore
    # creates no database and leaves an existing one as it was.
    src, doc = load_export(Path(args.directory), store.SCHEMA_VERSION)
    where = args.db if args.db is not None else store.default_location()
    new_file = None if store.is_server_url(where) else Path(where).expanduser()
    if new_file is not None and new_file.exists():
        new_file = None
    try:
        with _open_store(args.db) as st:
            done = st.restore_document(doc, src)
            where = st.location
    except BaseException:
        if new_file is not None:  # created for this restore: leave nothing behind
            for leftover in (new_file, *(new_file.with_name(new_file.name + s)
                                         for s in ("-wal", "-shm", "-journal"))):
                leftover.unlink(missing_ok=True)
        raise
    _print(f"restored {args.directory} into {where}: {done.n_aircraft} aircraft, "
          f"{done.n_flights} flights, {done.n_points} points")
    if done.n_analyses:
        _print(f"note: {done.n_analyses} saved analysis result(s) of the export were not restored; "
              "trimlog recomputes results from the flights")
    return EXIT_OK


def _run_backup(args: argparse.Namespace) -> int:
    with _open_store(args.db, must_exist=True, read_only=True) as st:
        st.backup(Path(args.destination))
    _print(f"backup written to {args.destination}")
    return EXIT_OK


def _run_demo(args: argparse.Namespace) -> int:
    from trimlog.demo import files as demo

    try:
        written = demo.write_demo(Path(args.directory))
    except OSError as exc:
        raise TrimlogError(
            f"{args.directory}: cannot write the demo files: {exc.strerror or exc}"
        ) from None
    for path in written:
        _print(path)
    return EXIT_OK


def _run_dashboard(args: argparse.Namespace) -> int:
    import subprocess

    # the server process loads the analysis stack before it answers (dashboard.serve)
    command = [
        sys.executable, "-m", "trimlog.dashboard.serve",
        "--server.headless", "true",
        "--server.address", args.address,
        "--server.port", str(args.port),
        "--server.maxUploadSize", "200",
        "--browser.gatherUsageStats", "false",
        "--client.toolbarMode", "viewer",
        "--client.showErrorDetails", "none",
    ]
    _print(f"trimlog dashboard on http://{args.address}:{args.port} (Ctrl-C to stop)")
    return _run_child(subprocess.Popen(command))


def _run_child(child: Any) -> int:
    """Wait for the server, forwarding SIGTERM/SIGINT/SIGHUP to it: no server is left behind."""
    import signal

    def forward(signum: int, _frame: object) -> None:
        try:
            child.send_signal(signum)
        except (OSError, ProcessLookupError):
            pass  # already gone

    previous = {}
    for name in ("SIGTERM", "SIGINT", "SIGHUP"):
        if hasattr(signal, name):
            sig = getattr(signal, name)
            previous[sig] = signal.signal(sig, forward)
    try:
        while True:
            try:
                code = child.wait()
                break
            except KeyboardInterrupt:
                continue  # forwarded; wait for the server to stop
    finally:
        for sig, handler in previous.items():
            signal.signal(sig, handler)
    return 0 if code in (0, -2, -15) else code


def _run_bench(args: argparse.Namespace) -> int:
    bench_dir = Path(__file__).resolve().parent.parent / "benchmarks"
    if not (bench_dir / "bench.py").is_file():
        raise TrimlogError(
            f"the benchmark harness {bench_dir / 'bench.py'} is not installed: "
            "run 'trimlog bench' from a source checkout (pip install -e .)"
        )
    sys.path.insert(0, str(bench_dir))
    import bench  # the harness of the source checkout, outside the package

    return bench.run(quick=args.quick, sections=tuple(args.section) or None)


def _use_color() -> bool:
    return sys.stdout.isatty() and os.environ.get("NO_COLOR") is None and (
        os.environ.get("TERM") not in (None, "dumb")
    )


if __name__ == "__main__":
    raise SystemExit(command())
