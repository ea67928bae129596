"""The whole chain, from log files to one frozen :class:`Analysis`.

``load_flight_file`` / ``load_flight_bytes`` read a log or point table (and
its loading sheet) and find its stabilized points; :func:`analyze` reduces
the points of every flight given, separates configurations, runs the
stability analysis of each, the incidence recommendation and the
tail-geometry check, and returns one :class:`Analysis`.  The terminal
summary, the JSON export, the PDF report, the dashboard and the history all
read that one object, so they cannot disagree.
"""

from __future__ import annotations

import dataclasses
import functools
import hashlib
import math
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from trimlog import __version__, cautions
from trimlog.errors import InputFileError, NotIdentifiableError, TrimlogError
from trimlog.files import file_stem
from trimlog.findings import Finding, Severity, Subject, finding, lines
from trimlog.incidence import before_after as beforeafter
from trimlog.incidence import shim as incidence
from trimlog.incidence import tau
from trimlog.input.loading_sheet import LoadingSheet, read_loading_sheet
from trimlog.input.logs import LogRead, load_source, read_log
from trimlog.input.profile import AircraftProfile, profile_findings
from trimlog.input.profile import load_profile as load_profile
from trimlog.pipeline import ordering
from trimlog.pipeline.maneuvers import maneuvers_from_log
from trimlog.pipeline.points import PointSettings, points_from_log
from trimlog.pipeline.reduction import ReducedPoints, reduce_points
from trimlog.progress import SILENT, Progress
from trimlog.stability import maneuver, margins
from trimlog.stability import neutral_points as stability
from trimlog.stability import tail as tailgeometry
from trimlog.stability.critical import tighten_next_step
from trimlog.stability.results import FlightGradient, NeutralPoint, NextStep, StabilityResult

LOADING_SHEET_SUFFIX = ".loading.toml"


@dataclass(frozen=True, eq=False)
class FlightData:
    """One flight as read: the log, its points and its loading sheet.

    Attributes
    ----------
    flight : str
        Flight identifier (the file's stem, or the log's ``flight`` value).
    source : str
        File name as the user gave it.
    sha256 : str
        Of the raw bytes, to recognise the same file again.
    log : LogRead
        Reader result (kind, columns understood, warnings, dropped rows).
    points : DataFrame
        The Points table of this flight.
    loading : LoadingSheet or None
        Takeoff loading and incidence setting, when a sheet was given.
    maneuvers : DataFrame or None
        The maneuvering points of this flight (the Points contract, flag
        ``maneuver``); None: found from the log when analysed.
    """

    flight: str
    source: str
    sha256: str
    log: LogRead
    points: pd.DataFrame
    loading: LoadingSheet | None = None
    maneuvers: pd.DataFrame | None = None

    def maneuvering_points(self) -> pd.DataFrame:
        """The maneuvering points of this flight (found from the log when not given).

        Found once per FlightData and kept; the table is shared: read it, or copy it.
        """
        if self.maneuvers is not None:
            return self.maneuvers
        return self._found_maneuvers

    @functools.cached_property
    def _found_maneuvers(self) -> pd.DataFrame:
        found = maneuvers_from_log(self.log, flight=self.flight)
        found = found.loc[found["flight"].astype(str) == self.flight].reset_index(drop=True)
        found["source"] = self.source
        return found

    @property
    def when(self) -> ordering.FlightWhen:
        """When the flight was flown (loading-sheet date, else the log's own clock)."""
        return ordering.flight_when(self.loading, self.log)

    @property
    def samples(self) -> pd.DataFrame | None:
        """The time-series samples of this flight (None for a point table)."""
        if self.log.kind != "time_series":
            return None
        data = self.log.data
        if "flight" in data.columns:
            return data.loc[data["flight"].astype(str) == self.flight]
        return data


@dataclass(frozen=True, eq=False)
class ConfigurationResult:
    """Stability and incidence results of one configuration (never pooled with another)."""

    config: str
    stability: StabilityResult
    incidence: incidence.IncidenceRecommendation | None
    incidence_reason: str
    tau: tau.TauChoice | None
    tau_calibration: tau.TauCalibration | None
    #: The elevator at cruise before and after an incidence change and the tau they
    #: imply (None without two settings of known incidence, or no CG term).
    before_after: beforeafter.BeforeAfter | None = None


@dataclass(frozen=True)
class PointAtStop:
    """A point flagged ``at_stop``: its elevator sat at a stop, so it is not a free trim.

    Attributes
    ----------
    flight : str
    point : int
    config : str
        The configuration the point belongs to.
    elevator_deg : float
        Mean elevator of the point [deg, trailing edge down +].
    stop : {"up", "down"}
        Which stop: the up stop is at negative elevator, the down stop at positive.
    included : bool
        False unless the user chose to include it again.
    """

    flight: str
    point: int
    config: str
    elevator_deg: float
    stop: str
    included: bool


@dataclass(frozen=True, eq=False)
class Analysis:
    """Everything trimlog found from a set of flights of one aircraft.

    Attributes
    ----------
    profile : AircraftProfile
    flights : tuple of FlightData
        In the order flown (by date; see :mod:`trimlog.pipeline.ordering`).
    points : DataFrame
        Reduced points of every flight (the Reduced-points contract),
        excluded ones included with ``included`` False.
    primary : ConfigurationResult
        The configuration the headline numbers come from (the one with the
        most included points, clean first).
    others : tuple of ConfigurationResult
    tail : TailGeometryCheck or None
    findings : tuple of Finding
        Every warning and verdict, typed (code, severity, subject, values);
        :mod:`trimlog.findings` puts them into words.
    cautions : tuple of str
    maneuvering : ManeuverResult or None
        Gradients per g and maneuver points; None when no maneuvering point
        was found.
    programme : ProgrammeInputs or None
        Which saved and new flights went in, when the analysis is of a
        programme kept in a history database (``trimlog analyze --db``).
    at_stop : tuple of PointAtStop
        Every point whose elevator sat at a stop, in every configuration.
    """

    profile: AircraftProfile
    flights: tuple[FlightData, ...]
    points: pd.DataFrame
    primary: ConfigurationResult
    others: tuple[ConfigurationResult, ...]
    tail: tailgeometry.TailGeometryCheck | None
    findings: tuple[Finding, ...]
    cautions: tuple[str, ...] = field(default_factory=cautions.all_cautions)
    software_version: str = __version__
    maneuvering: maneuver.ManeuverResult | None = None
    programme: ordering.ProgrammeInputs | None = None
    at_stop: tuple[PointAtStop, ...] = ()

    @property
    def identifiable(self) -> bool:
        """Whether the stick-fixed neutral point of the primary configuration is supported."""
        return self.primary.stability.stick_fixed.neutral_point.identifiable

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings as lines of text, each once (kept for compatibility)."""
        return lines(self.findings, show_config=bool(self.others))



# --------------------------------------------------------------------------- reading


def load_flight_bytes(
    raw: bytes,
    name: str,
    profile: AircraftProfile,
    *,
    loading: LoadingSheet | None = None,
    min_hold_s: float | None = None,
    progress: Progress = SILENT,
) -> list[FlightData]:
    """Read one log or point table given as bytes and find its points.

    Parameters
    ----------
    raw : bytes
        The file's contents.
    name : str
        The file's name, for messages and the flight identifier (its stem);
        never used as a path.
    profile : AircraftProfile
        Supplies the logger's column mapping and sign flips.
    loading : LoadingSheet, optional
        Takeoff loading for logs without weight and CG per row.
    min_hold_s : float, optional
        Minimum duration of a stabilized point [s].
    progress : trimlog.progress.Progress, optional
        Told as reading and point finding start (shows nothing by default).

    Returns
    -------
    list of FlightData
        One per flight in the file (a ``flight`` column may hold several).
    """
    progress.step("reading", name)
    log = read_log(raw, name=name, column_map=profile.column_map,
                   inverted=profile.inverted_columns)
    settings = PointSettings() if min_hold_s is None else PointSettings(min_duration_s=min_hold_s)
    stem = file_stem(name)
    progress.step("points", name)
    points = points_from_log(log, flight=stem, settings=settings)
    points["source"] = name
    _exclude_points_at_a_stop(points, profile)
    if loading is not None and loading.fuel_flow_gph is not None:
        _fuel_from_constant_flow(points, log, loading)
    digest = hashlib.sha256(raw).hexdigest()
    turns = maneuvers_from_log(log, flight=stem)
    turns["source"] = name
    flights = []
    for flight, part in points.groupby("flight", sort=False):
        mine = turns.loc[turns["flight"].astype(str) == str(flight)].reset_index(drop=True)
        flights.append(FlightData(str(flight), name, digest, log,
                                  part.reset_index(drop=True), loading, mine))
    for flight, part in turns.groupby("flight", sort=False):
        if str(flight) not in {f.flight for f in flights}:  # turns only, no trim point
            flights.append(FlightData(str(flight), name, digest, log, points.iloc[0:0].copy(),
                                      loading, part.reset_index(drop=True)))
    if not flights:
        flights.append(FlightData(stem, name, digest, log, points, loading, turns))
    return flights


def _fuel_from_constant_flow(points: pd.DataFrame, log: LogRead, sheet: LoadingSheet) -> None:
    """Fuel at each point from the sheet's constant burn rate, when the log has no fuel quantity.

    The burn runs from the log's first time stamp (taken as takeoff) to the
    middle of each point's window.
    """
    if "fuel_gal" in points and points["fuel_gal"].notna().any():
        return
    if log.kind != "time_series" or "time_s" not in log.data:
        return
    start = float(log.data["time_s"].min())
    middle = 0.5 * (points["t_start_s"] + points["t_end_s"])
    fuel = sheet.takeoff_fuel_gal - sheet.fuel_flow_gph * (middle - start) / 3600.0
    if (fuel < 0).any():
        raise InputFileError(
            f"the loading sheet's fuel flow {sheet.fuel_flow_gph:g} gal/h burns more than the "
            f"{sheet.takeoff_fuel_gal:g} gal on board before the last point",
            file=sheet.source,
        )
    points["fuel_gal"] = fuel


def load_flight_file(
    path: str | Path,
    profile: AircraftProfile,
    *,
    loading_path: str | Path | None = None,
    min_hold_s: float | None = None,
    progress: Progress = SILENT,
) -> list[FlightData]:
    """Read a log file (and its loading sheet) and find its points.

    The loading sheet is ``loading_path`` when given, else a file named like
    the log with ``.loading.toml`` in place of its extension, when present.
    """
    path = Path(path)
    raw, _ = load_source(path, str(path))  # regular files only: a named pipe would block
    sheet_path = Path(loading_path) if loading_path else sibling_sheet(path)
    sheet = read_loading_sheet(sheet_path) if sheet_path is not None else None
    return load_flight_bytes(raw, str(path), profile, loading=sheet, min_hold_s=min_hold_s,
                             progress=progress)


def sibling_sheet(path: Path) -> Path | None:
    """The loading sheet beside a log (``flight3.csv`` -> ``flight3.loading.toml``), if any.

    Named by the log's stem (:func:`trimlog.files.file_stem`, up to the first dot), as
    the flight is and as the dashboard pairs them.
    """
    candidate = path.with_name(file_stem(path) + LOADING_SHEET_SUFFIX)
    return candidate if candidate.is_file() else None


# --------------------------------------------------------------------------- analysis


@dataclass(frozen=True, eq=False)
class PreparedFlights:
    """The part of an analysis that no choice of points changes.

    The flights in the order flown, their stabilized points reduced (EAS,
    CL, Fs/q, CG) and their maneuvering points found and reduced, from
    :func:`prepare`.  :func:`analyze_prepared` takes it with the user's
    choices of points; a caller that tries choice after choice on the same
    flights (the dashboard's tick boxes) prepares them once.  Its tables are
    not changed by an analysis (each works on a copy).

    Attributes
    ----------
    profile : AircraftProfile
    flights : tuple of FlightData
        In the order flown.
    order_findings : tuple of Finding
        What ordering the flights by date found.
    reduced : ReducedPoints
        The stabilized points of every flight, before any choice.
    maneuver_points : DataFrame or None
        The maneuvering points, reduced and marked off speed
        (:func:`trimlog.stability.maneuver.mark_off_speed`); None without any.
    """

    profile: AircraftProfile
    flights: tuple[FlightData, ...]
    order_findings: tuple[Finding, ...]
    reduced: ReducedPoints
    maneuver_points: pd.DataFrame | None


def prepare(flights: Sequence[FlightData], profile: AircraftProfile, *,
            progress: Progress = SILENT) -> PreparedFlights:
    """Order the flights and reduce their points: what :func:`analyze` does before any choice.

    Parameters
    ----------
    flights : sequence of FlightData
        As for :func:`analyze`.
    profile : AircraftProfile
    progress : trimlog.progress.Progress, optional
        Told when the fits' stage begins.

    Returns
    -------
    PreparedFlights

    Raises
    ------
    InputFileError
        No points at all, two files giving the same flight, or a loading
        problem found by the reduction.
    """
    if not flights:
        raise InputFileError("no flights given: expected at least one log or point table")
    _check_unique(flights)
    ordered, order_findings = ordering.order_by_date(flights)
    progress.step("fits")
    frames = [f.points for f in ordered if len(f.points)]
    if not frames:
        names = ", ".join(sorted({f.source for f in ordered}))
        raise InputFileError(
            "no stabilized points were found: check the logs, or shorten the minimum hold",
            file=names,
        )
    points = pd.concat(frames, ignore_index=True)
    points["flight"] = points["flight"].astype(str)
    loadings = {f.flight: f.loading for f in ordered if f.loading is not None}
    return PreparedFlights(
        profile=profile, flights=tuple(ordered), order_findings=tuple(order_findings),
        reduced=reduce_points(points, profile, loadings),
        maneuver_points=_reduced_maneuvers([f.maneuvering_points() for f in ordered],
                                           profile, loadings))


def analyze(
    flights: Sequence[FlightData],
    profile: AircraftProfile,
    *,
    exclusions: Iterable[tuple[str, int]] = (),
    inclusions: Iterable[tuple[str, int]] = (),
    maneuver_exclusions: Iterable[tuple[str, int]] = (),
    maneuver_inclusions: Iterable[tuple[str, int]] = (),
    progress: Progress = SILENT,
    exclusion_reasons: Mapping[tuple[str, int], str] | None = None,
) -> Analysis:
    """Analyse a set of flights of one aircraft together.

    :func:`prepare`, then :func:`analyze_prepared` with the choices.

    Parameters
    ----------
    flights : sequence of FlightData
        Every flight to analyse (any mix of CGs, weights, altitudes and
        stabilizer settings), in any order: they are analysed in the order
        flown (:func:`trimlog.pipeline.ordering.order_by_date`), so the
        latest stabilizer setting is the latest flight's.
    profile : AircraftProfile
    exclusions : iterable of (flight, point)
        Points to leave out of the fits; they stay in the tables with
        ``included`` False.
    inclusions : iterable of (flight, point)
        Points to fit although trimlog left them out (a hold it flagged, or
        an elevator at a stop); they keep their flags.
    maneuver_exclusions, maneuver_inclusions : iterable of (flight, point)
        The same for the maneuvering points (numbered on their own).
    exclusion_reasons : mapping of (flight, point) to str, optional
        Why the user left a point out ("turbulence", "not stabilized", ...),
        on top of the reasons the flights' points carry already (a saved
        flight's, column ``exclusion_reason``); kept in the points table's
        ``exclusion_reason`` column ("" for none).

    Returns
    -------
    Analysis

    Raises
    ------
    InputFileError
        No points at all, two files giving the same flight, an exclusion that
        names no point, or a loading problem found by the reduction.
    """
    return analyze_prepared(
        prepare(flights, profile, progress=progress), exclusions=exclusions,
        inclusions=inclusions, maneuver_exclusions=maneuver_exclusions,
        maneuver_inclusions=maneuver_inclusions, exclusion_reasons=exclusion_reasons)


def analyze_prepared(
    prepared: PreparedFlights,
    *,
    exclusions: Iterable[tuple[str, int]] = (),
    inclusions: Iterable[tuple[str, int]] = (),
    maneuver_exclusions: Iterable[tuple[str, int]] = (),
    maneuver_inclusions: Iterable[tuple[str, int]] = (),
    exclusion_reasons: Mapping[tuple[str, int], str] | None = None,
) -> Analysis:
    """:func:`analyze` of flights already prepared, with these choices of points.

    The parameters after ``prepared`` are :func:`analyze`'s; ``prepared``
    is not changed.

    Raises
    ------
    InputFileError
        A choice or a reason that names no point.
    """
    profile, flights = prepared.profile, prepared.flights
    table = prepared.reduced.points.copy()
    _set_included(table, exclusions, False)
    _set_included(table, inclusions, True)
    set_exclusion_reasons(table, exclusion_reasons or {})

    found: list[Finding] = list(profile_findings(profile.tau, profile.elevator_chord_ratio,
                                                 profile.source))
    found += prepared.order_findings
    found += _reading_findings(flights)
    found += prepared.reduced.findings
    at_stop = _points_at_a_stop(table)
    found += _stop_findings(at_stop)

    results = []
    for config, part in table.groupby("config", sort=False):
        results.append(_analyze_configuration(str(config), part, profile))
    by_config = {r.config: r for r in results}
    ranked = ordering.rank_configurations({r.config: r.stability.n_included for r in results})
    primary, others = by_config[ranked[0]], tuple(by_config[c] for c in ranked[1:])
    if others:
        found.append(finding(
            "pipeline.configurations_separate", Severity.CAUTION,
            counts=", ".join(f"'{r.config}' ({r.stability.n_included} points)" for r in results),
            primary=primary.config))
    for r in results:
        subject = Subject(config=r.config)
        found += [f.about(config=r.config) for f in r.stability.findings]
        found += _incidence_findings(r, profile, subject)
        found += [f.about(config=r.config) for f in light_stick_force(r.stability.gradients)]
    measured = primary.stability.stick_fixed.neutral_point.pct_mac
    tail = tailgeometry.check_tail_geometry(profile, measured_neutral_point_pct_mac=measured)
    s = primary.stability
    maneuvering = _maneuvers_chosen(
        prepared.maneuver_points, profile, neutral_fixed=s.stick_fixed.neutral_point,
        neutral_free=s.stick_free.neutral_point if s.stick_free is not None else None,
        exclusions=maneuver_exclusions, inclusions=maneuver_inclusions)
    if maneuvering is not None:
        primary = _with_maneuver_limits(primary, maneuvering, profile)
        # typed by the analysis: a light or lightening stick force per g is a warning
        found += list(maneuvering.findings)
    return Analysis(
        profile=profile,
        flights=flights,
        points=table,
        primary=primary,
        others=others,
        tail=tail,
        findings=tuple(found),
        maneuvering=maneuvering,
        at_stop=at_stop,
    )


def _with_maneuver_limits(result: ConfigurationResult, maneuvering: maneuver.ManeuverResult,
                          profile: AircraftProfile) -> ConfigurationResult:
    """The next-CG step also keeps the maneuver margins and the minimum stick force per g."""
    step = result.stability.next_step
    if step is None:
        return result
    tighter = with_maneuver_limits(step, maneuvering, profile)
    if tighter is step:
        return result
    return dataclasses.replace(result, stability=dataclasses.replace(result.stability,
                                                                     next_step=tighter))


def with_maneuver_limits(step: NextStep, maneuvering: maneuver.ManeuverResult | None,
                         profile: AircraftProfile) -> NextStep:
    """The next-CG step kept behind the maneuvering limits (the one rule of analyze and plan).

    Parameters
    ----------
    step : NextStep
        From the neutral-point rule.
    maneuvering : ManeuverResult or None
        From :func:`analyze_maneuver_points` (or an analysis); None leaves the step as it is.
    profile : AircraftProfile
        For the station of the new limit.

    Returns
    -------
    NextStep
        See :func:`trimlog.stability.critical.tighten_next_step`.
    """
    if maneuvering is None:
        return step
    return tighten_next_step(step, maneuvering.next_step_limits(), profile.station)


def analyze_maneuver_points(
    found: Sequence[pd.DataFrame],
    profile: AircraftProfile,
    *,
    loadings: dict[str, LoadingSheet],
    neutral_fixed: NeutralPoint | None = None,
    neutral_free: NeutralPoint | None = None,
    exclusions: Iterable[tuple[str, int]] = (),
    inclusions: Iterable[tuple[str, int]] = (),
) -> maneuver.ManeuverResult | None:
    """The maneuvering analysis of points already found (None when there are none).

    For callers that keep the points found (the history) and need not read a
    log again; :func:`analyze` takes them from :func:`prepare`.

    Parameters
    ----------
    found : sequence of DataFrame
        Each flight's maneuvering points (:meth:`FlightData.maneuvering_points`).
    profile : AircraftProfile
    loadings : dict of str to LoadingSheet
        Each flight's loading sheet.
    neutral_fixed, neutral_free : NeutralPoint, optional
        The neutral points, for hm - hn only (the limits do not use them).
    exclusions, inclusions : iterable of (flight, point)
        The user's choices of maneuvering points (numbered on their own).

    Returns
    -------
    ManeuverResult or None

    Raises
    ------
    InputFileError
        A choice names no maneuvering point.
    """
    return _maneuvers_chosen(_reduced_maneuvers(found, profile, loadings), profile,
                             neutral_fixed=neutral_fixed, neutral_free=neutral_free,
                             exclusions=exclusions, inclusions=inclusions)


def _reduced_maneuvers(found: Sequence[pd.DataFrame], profile: AircraftProfile,
                       loadings: Mapping[str, LoadingSheet]) -> pd.DataFrame | None:
    """The maneuvering points of every flight reduced and marked off speed (None: none)."""
    frames = [m for m in found if len(m)]
    if not frames:
        return None
    points = pd.concat(frames, ignore_index=True)
    points["flight"] = points["flight"].astype(str)
    return maneuver.mark_off_speed(reduce_points(points, profile, loadings).points)


def _maneuvers_chosen(
    reduced: pd.DataFrame | None,
    profile: AircraftProfile,
    *,
    neutral_fixed: NeutralPoint | None,
    neutral_free: NeutralPoint | None,
    exclusions: Iterable[tuple[str, int]],
    inclusions: Iterable[tuple[str, int]],
) -> maneuver.ManeuverResult | None:
    """The maneuvering analysis of reduced points (not changed) with the user's choices."""
    exclusions, inclusions = list(exclusions), list(inclusions)
    if reduced is None:
        if exclusions or inclusions:
            raise InputFileError("cannot choose maneuvering points: none was found")
        return None
    table = reduced.copy()
    _set_included(table, exclusions, False)
    _set_included(table, inclusions, True)
    return maneuver.analyze_maneuvering(table, profile, neutral_fixed=neutral_fixed,
                                        neutral_free=neutral_free)


def set_exclusion_reasons(points: pd.DataFrame, reasons: Mapping[tuple[str, int], str]) -> None:
    """Write why points are left out into ``points["exclusion_reason"]`` ("" for none).

    A reason already in the column (a saved flight's) is kept unless ``reasons``
    gives a new one; a reason on a point that is used is cleared (it no longer
    applies).

    Raises
    ------
    InputFileError
        A reason names no point, or a point that is used in the fits.
    """
    if "exclusion_reason" in points:
        column = points["exclusion_reason"].astype(object).where(
            points["exclusion_reason"].notna(), "").astype(str)
    else:
        column = pd.Series("", index=points.index, dtype=object)
    for (flight, point), reason in reasons.items():
        mask = (points["flight"] == str(flight)) & (points["point"] == int(point))
        if not mask.any():
            raise InputFileError(f"cannot keep a reason for point {point} of flight '{flight}': "
                                 "no such point")
        if points.loc[mask, "included"].astype(bool).any():
            raise InputFileError(f"cannot keep a reason for leaving out point {point} of flight "
                                 f"'{flight}': the point is used in the fits")
        column[mask] = str(reason).strip()
    column[points["included"].astype(bool).to_numpy()] = ""
    points["exclusion_reason"] = column.astype(str)


def _check_unique(flights: Sequence[FlightData]) -> None:
    seen: dict[str, str] = {}
    for f in flights:
        if f.flight in seen and seen[f.flight] != f.source:
            raise InputFileError(
                f"flight '{f.flight}' is given twice (also in {seen[f.flight]}): rename one "
                "file or give the logs distinct 'flight' values",
                file=f.source,
            )
        seen[f.flight] = f.source


def _set_included(points: pd.DataFrame, choices: Iterable[tuple[str, int]], value: bool) -> None:
    for flight, point in choices:
        mask = (points["flight"] == str(flight)) & (points["point"] == int(point))
        if not mask.any():
            known = ", ".join(sorted(points["flight"].unique()))
            verb = "include" if value else "exclude"
            raise InputFileError(
                f"cannot {verb} point {point} of flight '{flight}': no such point "
                f"(flights: {known})"
            )
        points.loc[mask, "included"] = value


def _exclude_points_at_a_stop(points: pd.DataFrame, profile: AircraftProfile) -> None:
    """Flag points with the elevator at a stop and leave them out: they are not free trims.

    Done once, when the points are found, so that a user's later choice to
    include such a point again (stored in the history) is kept.
    """
    flags = stability.elevator_stop_flags(
        points, profile.elevator_up_stop_deg, profile.elevator_down_stop_deg)
    for flag in flags:
        points.loc[flag.row, "included"] = False
        points.loc[flag.row, "flags"] = ";".join(
            f for f in (str(points.loc[flag.row, "flags"] or ""), "at_stop") if f)


def _reading_findings(flights: Sequence[FlightData]) -> list[Finding]:
    """What reading each log found: its notes, values not used, and no points at all."""
    found: list[Finding] = []
    seen_logs: set[int] = set()
    for f in flights:
        if id(f.log) in seen_logs:
            continue
        seen_logs.add(id(f.log))
        source = Subject(source=f.source)
        found += [x.about(source=f.source) for x in f.log.findings]
        dropped = [d for d in f.log.dropped if d.count]
        if dropped:
            found.append(finding(
                "input.log.values_not_used", Severity.NOTE, source,
                total=sum(d.count for d in dropped),
                reasons="; ".join(f"{d.count} {d.reason.split(':')[0]}" for d in dropped)))
        if f.log.kind == "time_series" and not len(f.points):
            found.append(finding("pipeline.no_points_in_log", Severity.CAUTION, source))
    return found


def _points_at_a_stop(points: pd.DataFrame) -> tuple[PointAtStop, ...]:
    """The points flagged ``at_stop`` (when found, or as stored in the history)."""
    at_stop = points.loc[points["flags"].astype(str).str.contains("at_stop", regex=False)]
    return tuple(
        PointAtStop(flight=str(r.flight), point=int(r.point), config=str(r.config),
                    elevator_deg=float(r.elevator_deg),
                    stop="up" if r.elevator_deg < 0 else "down", included=bool(r.included))
        for r in at_stop.itertuples()
    )


def _stop_findings(at_stop: Iterable[PointAtStop]) -> list[Finding]:
    return [
        finding("pipeline.at_stop.included" if s.included else "pipeline.at_stop.left_out",
                Severity.WARNING, Subject(flight=s.flight, point=s.point,
                                          quantity="elevator_deg"),
                elevator_deg=s.elevator_deg)
        for s in at_stop
    ]


def _analyze_configuration(
    config: str, points: pd.DataFrame, profile: AircraftProfile
) -> ConfigurationResult:
    flap_config = "landing" if config.startswith("flaps") and not config.startswith(
        "flaps 0 ") else "clean"
    result = stability.analyze_stability(points, profile, flap_config=flap_config)
    if profile.trim_system in NO_FIXED_INCIDENCE:
        reason = finding("incidence.not_applicable.trim_system", Severity.NOTE,
                         system=profile.trim_system.replace("_", " ")).message
        return ConfigurationResult(config, result, None, reason, None, None)
    joint = _before_after(result, points, profile)
    calibration = joint[0].calibration() if joint is not None else _calibrate_tau(result, points)
    try:
        choice = tau.choose_tau(calibration, profile.tau, profile.elevator_chord_ratio)
    except NotIdentifiableError as exc:
        return ConfigurationResult(config, result, None, str(exc), None, calibration,
                                   joint[0] if joint else None)
    recommendation, reason = _recommend(result, points, profile, choice, joint)
    return ConfigurationResult(config, result, recommendation, reason, choice, calibration,
                               joint[0] if joint else None)


def _incidence_findings(r: ConfigurationResult, profile: AircraftProfile,
                        subject: Subject) -> list[Finding]:
    """The shim's findings, or why there is no shim."""
    if r.incidence is not None:
        return [f.about(config=r.config) for f in r.incidence.findings]
    if profile.trim_system in NO_FIXED_INCIDENCE:
        return [finding("incidence.not_applicable.trim_system", Severity.NOTE, subject,
                        system=profile.trim_system.replace("_", " "))]
    if r.incidence_reason:
        return [finding("incidence.no_recommendation", Severity.CAUTION, subject,
                        reason=r.incidence_reason)]
    return []


#: Trim systems that move the stabilizer's incidence: no fixed incidence, so no shim.
NO_FIXED_INCIDENCE = ("stabilator", "trimmable_stabilizer")


def _two_settings(result: StabilityResult, points: pd.DataFrame
                  ) -> tuple[str, str, float, float] | None:
    """The first and latest stabilizer settings and their incidences, when they differ."""
    fit = result.stick_fixed
    if fit.linear is None or not fit.has_cg_term or len(fit.groups) < 2:
        return None
    first, latest = fit.groups[0], fit.latest_group
    settings = points.groupby("stab_setting")["stab_incidence_deg"].first()
    i_first, i_latest = settings.get(first), settings.get(latest)
    if i_first is None or i_latest is None or not (
        math.isfinite(i_first) and math.isfinite(i_latest)
    ) or i_first == i_latest:
        return None
    return str(first), str(latest), float(i_first), float(i_latest)


def _before_after(result: StabilityResult, points: pd.DataFrame, profile: AircraftProfile
                  ) -> tuple[beforeafter.BeforeAfter, margins.CruiseElevators] | None:
    """The elevator at cruise under the first and latest settings, from one flight-level fit."""
    pair = _two_settings(result, points)
    if pair is None or result.stick_fixed.flight_level is None or \
            result.stick_fixed.flight_level.cov_full is None:
        return None
    first, latest, i_first, i_latest = pair
    cruise_cl = incidence.cruise_lift_coefficient(profile)
    h_cruise = (profile.cruise_cg_in - profile.lemac_in) / profile.mac_in
    elevators = margins.cruise_elevators(result.stick_fixed, cruise_cl, h_cruise,
                                         (first, latest))
    return beforeafter.before_after(elevators, first, latest, i_first, i_latest), elevators


def _calibrate_tau(result: StabilityResult, points: pd.DataFrame) -> tau.TauCalibration | None:
    """τ from the intercept shift of the independent-points fit (no flight-level fit)."""
    pair = _two_settings(result, points)
    if pair is None:
        return None
    fit = result.stick_fixed
    first, latest, i_first, i_latest = pair
    intercepts, cov = fit.intercepts(), fit.intercept_cov()
    shift = float(intercepts[latest] - intercepts[first])
    variance = float(cov.loc[first, first] + cov.loc[latest, latest] - 2.0 * cov.loc[first, latest])
    return tau.calibrate_tau(shift, math.sqrt(max(variance, 0.0)), float(i_latest - i_first),
                             fit.linear.df_resid)


#: Smallest stable stick-force gradient a pilot can be relied on to feel,
#: 1 lbf per 6 kt [lbf/kt]: the figure of 14 CFR 25.173(c), used for small
#: airplanes as common practice (from memory); 14 CFR 23.173(c) before
#: amendment 23-64 states the rule only in words ("clearly perceptible").
PERCEPTIBLE_STICK_FORCE_GRADIENT_LBF_PER_KT = 1.0 / 6.0


def light_stick_force(gradients: Iterable[FlightGradient]) -> list[Finding]:
    """A caution for each flight whose stable stick-force gradient is too small to feel.

    Parameters
    ----------
    gradients : iterable of FlightGradient
        Per-flight trim-line fits (``dfs_dv_lbf_per_kt`` negative is stable).

    Returns
    -------
    list of Finding
        ``pipeline.stick_force.too_light`` for each flight whose gradient is
        stable but smaller in magnitude than
        :data:`PERCEPTIBLE_STICK_FORCE_GRADIENT_LBF_PER_KT`.

    References
    ----------
    14 CFR 23.173(c) (before amendment 23-64): "The stick force must vary with
    speed so that any substantial speed change results in a stick force
    clearly perceptible to the pilot." 14 CFR 25.173(c): "not less than 1 pound
    for each 6 knots".
    """
    floor = PERCEPTIBLE_STICK_FORCE_GRADIENT_LBF_PER_KT
    out = []
    for g in gradients:
        grad, ci = g.dfs_dv_lbf_per_kt, g.dfs_dv_ci95_lbf_per_kt
        if grad is None or ci is None or not -floor < grad < 0.0:
            continue
        out.append(finding(
            "pipeline.stick_force.too_light", Severity.CAUTION,
            Subject(flight=str(g.flight), quantity="dfs_dv_lbf_per_kt"),
            flight=str(g.flight), cg_pct_mac=g.cg_pct_mac, gradient_lbf_per_kt=grad,
            lo=ci[0], hi=ci[1], kt_per_lbf=-1.0 / grad, floor_lbf_per_kt=floor))
    return out


def _latest_incidence(
    points: pd.DataFrame, setting: str | None, profile: AircraftProfile
) -> float | None:
    """Absolute incidence of the latest setting when logged, else the profile's current one."""
    logged = points.loc[points["stab_setting"] == setting, "stab_incidence_deg"].dropna()
    return float(logged.iloc[-1]) if len(logged) else profile.current_incidence_deg


def _recommend(
    result: StabilityResult,
    points: pd.DataFrame,
    profile: AircraftProfile,
    choice: tau.TauChoice,
    joint: tuple[beforeafter.BeforeAfter, margins.CruiseElevators] | None = None,
) -> tuple[incidence.IncidenceRecommendation | None, str]:
    fit = result.stick_fixed
    if fit.linear is None:
        return None, "no trim model could be fitted"
    cruise_cl = incidence.cruise_lift_coefficient(profile)
    h_cruise = (profile.cruise_cg_in - profile.lemac_in) / profile.mac_in
    try:
        prediction = stability.predict_elevator(fit, cruise_cl, h_cruise)
    except TrimlogError as exc:
        return None, str(exc)
    if prediction.ci95_deg is None:
        return None, "the elevator at cruise has no interval"
    elevator, elevator_ci = prediction.elevator_deg, prediction.ci95_deg
    if fit.flight_level is not None and fit.flight_level.cov_full is not None:
        # the headline model (errors shared by a flight), as for the neutral points
        level = margins.cruise_elevators(fit, cruise_cl, h_cruise, (prediction.setting,))
        elevator, elevator_ci = level.elevator_deg[0], level.ci95(prediction.setting)
    why_not = margins.cannot_say_yet(fit, 100.0 * h_cruise, "the cruise CG")
    half = 0.5 * (elevator_ci[1] - elevator_ci[0])
    if not why_not and half > margins.MAX_CRUISE_ELEVATOR_HALF_WIDTH_DEG:
        why_not = (f"cannot say yet: the elevator at cruise is known only to +-{half:.1f} deg "
                   "(95 %); more cruise-speed trim points near the cruise CG would settle it")
    if why_not:
        return None, why_not
    change = residual = None
    if joint is not None and choice.tau_source == "flight-calibrated":
        # tau and the elevator at cruise come from the same intercepts: one joint interval
        ba, elevators = joint
        elevator, elevator_ci = ba.elevator_after_deg, ba.elevator_after_ci95_deg
        change = beforeafter.joint_incidence_change(ba, elevators)
        residual = beforeafter.joint_residual_interval(ba, elevators) if change else None
    recommendation = incidence.recommend_incidence(
        cruise_cl=cruise_cl,
        cruise_cg_pct_mac=100.0 * h_cruise,
        elevator_cruise_deg=elevator,
        elevator_ci95_deg=elevator_ci,
        tau=choice,
        spacing_in=profile.stabilizer_attach_spacing_in,
        current_incidence_deg=_latest_incidence(points, fit.latest_group, profile),
        change=change, residual_ci95=residual,
    )
    return recommendation, ""
