"""The flight history of an aircraft: import flights, recompute, follow the trend.

This module joins the store (:mod:`trimlog.history.store`, every SQL statement) and
the analysis chain.  The store keeps the raw bytes of every log, its loading
sheet, the points found with the user's include/exclude choices, and each
analysis result; everything here can be recomputed from those.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import pandas as pd

from trimlog import cautions
from trimlog.errors import InputFileError, StoreError, TrimlogError
from trimlog.files import file_stem
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.findings import lines as finding_lines
from trimlog.history import programme, reimport
from trimlog.history.codec import clean
from trimlog.history.maneuver_choices import (
    FOUND_KEY,
    apply_choices,
    found_kept,
    found_points,
    found_record,
    kept_none,
    with_choices,
)
from trimlog.history.store import AircraftRecord, FlightRecord, ImportOutcome, Store
from trimlog.input.loading_sheet import LoadingSheet, read_loading_sheet
from trimlog.input.logs import load_source, read_log
from trimlog.input.profile import AircraftProfile, check_policy, parse_profile, with_policy
from trimlog.pipeline import calibration, chain
from trimlog.pipeline.ordering import rank_configurations
from trimlog.pipeline.reduction import reduce_points
from trimlog.stability.critical import aft_flight_clearly_stable
from trimlog.stability.trend import NextStep, TrendStep, neutral_point_sequence, plan_next_step

_SHEET_TEXT = "sheet_text"
_SHEET_NAME = "sheet_name"


# --------------------------------------------------------------------------- import


def import_flight(
    store: Store,
    raw: bytes,
    name: str,
    profile_text: str,
    *,
    profile_source: str = "<profile>",
    loading_raw: bytes | None = None,
    loading_name: str | None = None,
    label: str | None = None,
    notes: str | None = None,
    min_hold_s: float | None = None,
    replace_sheet: bool = False,
) -> ImportOutcome:
    """Read one log, find its points and add it to the aircraft's history.

    Parameters
    ----------
    store : Store
    raw : bytes
        The log exactly as the logger wrote it (kept byte for byte).
    name : str
        Its file name (data only, never used as a path).
    profile_text : str
        The aircraft profile TOML; the aircraft is the profile's name.
    profile_source : str
        Where the profile came from, for messages.
    loading_raw, loading_name : bytes and str, optional
        The flight's loading sheet.
    label, notes : str, optional
        Default to the loading sheet's.
    min_hold_s : float, optional
        Minimum duration of a stabilized point [s].
    replace_sheet : bool
        When the same bytes are saved already with another loading sheet:
        replace the saved sheet by this one (the earlier one is kept in the
        flight's record; see :mod:`trimlog.history.reimport`).

    Returns
    -------
    ImportOutcome
        ``created`` False when the same bytes were imported before (nothing
        changes, or only the loading sheet with ``replace_sheet``).

    Raises
    ------
    LoadingSheetChangedError
        The bytes are saved already with a loading sheet that says something
        else, and ``replace_sheet`` is False (the message names every change).
    TrimlogError
        A bad profile, log or loading sheet, or a log holding several flights.
    """
    profile = parse_profile(profile_text, source=profile_source)
    sheet = (
        read_loading_sheet(loading_raw, name=loading_name or "loading sheet")
        if loading_raw is not None else None
    )
    flights = chain.load_flight_bytes(raw, name, profile, loading=sheet, min_hold_s=min_hold_s)
    if len(flights) != 1:
        raise InputFileError(
            f"holds {len(flights)} flights (a 'flight' column); the history takes one flight "
            "per file: split the file",
            file=name,
        )
    flight = flights[0]
    aircraft = store.upsert_aircraft(profile.name, profile_text)
    loading: dict[str, Any] | None = None
    if loading_raw is not None:
        loading = {_SHEET_NAME: loading_name, _SHEET_TEXT: loading_raw.decode("utf-8-sig")}
    when = flight.when
    if when.has_time:
        loading = {**(loading or {}), programme.FLOWN_AT: when.iso()}
    stem = Path(name).name.split(".")[0]
    if stem and flight.maneuvers is not None:
        # kept with the flight, so that a trend need not read the log again
        loading = {**(loading or {}), FOUND_KEY: found_record(flight.maneuvers, profile, stem)}
    outcome = store.import_flight(
        aircraft.id,
        raw,
        name,
        flight.points,
        label=label or (sheet.label if sheet is not None and sheet.label else None),
        date=None if when.when is None else when.when.date(),
        notes=notes or (sheet.notes if sheet is not None and sheet.notes else None),
        loading=loading,
        incidence_label=sheet.stab_setting if sheet is not None else None,
        incidence_deg=sheet.stab_incidence_deg if sheet is not None else None,
        config=None if sheet is None or sheet.flap_deg is None else f"flaps {sheet.flap_deg:g}",
        # renumbered in date order in the import's own transaction, under the aircraft's lock
        order=programme.in_date_order,
    )
    if not outcome.created:
        record = store.flight(outcome.flight_id)
        again = reimport.saved_again(store, record, flight, name, sheet=sheet, loading=loading,
                                     replace_sheet=replace_sheet)
        if again is not None:
            text, number, count = again
            return ImportOutcome(outcome.flight_id, False,
                                 text + _not_applied(record.id, label=label, notes=notes),
                                 number=number, of=count)
        return _already_saved(store, outcome, name, label=label, notes=notes)
    keep_found_points(store, aircraft.name)
    number, count = outcome.number, outcome.of
    dated = "" if when.when is None else f", flown {when.iso()}"
    undated = "" if when.when is not None else (
        ", no date (add a 'date' to its loading sheet: undated flights are taken as flown "
        "before the dated ones)")
    return replace(outcome, message=(
        f"{name}: stored as flight {number} of {count} of '{aircraft.name}' in date "
        f"order{dated}{undated} (history id {outcome.flight_id}, "
        f"{len(flight.points)} points, SHA-256 {flight.sha256[:12]})"))


def _already_saved(
    store: Store, outcome: ImportOutcome, name: str, *, label: str | None, notes: str | None
) -> ImportOutcome:
    """The outcome of importing bytes already saved: nothing changes, and the user is told how."""
    record = store.flight(outcome.flight_id)
    text = (f"{name}: already stored as history flight id {record.id} of this aircraft (same "
            f"SHA-256 {record.sha256[:12]}, from '{record.filename}' imported "
            f"{record.imported_at}); nothing changed")
    if record.loading and _SHEET_TEXT in record.loading:
        text += f"; its saved loading sheet '{record.loading.get(_SHEET_NAME)}' stays"
    return replace(outcome, message=text + _not_applied(record.id, label=label, notes=notes))


def _not_applied(flight_id: int, *, label: str | None, notes: str | None) -> str:
    """The words for a label or notes given with bytes already saved (they are not applied)."""
    given = [k for k, v in (("label", label), ("notes", notes)) if v is not None]
    if not given:
        return ""
    options = " ".join(f"--{k} ..." for k in given)
    return (f"; the {' and '.join(given)} given now {'was' if len(given) == 1 else 'were'} "
            f"not applied: change them with 'trimlog edit --db DB --flight {flight_id} "
            f"{options}'")


def import_log(
    store: Store,
    path: str | Path,
    *,
    profile_text: str,
    profile_source: str,
    loading_path: str | Path | None = None,
    label: str | None = None,
    notes: str | None = None,
    min_hold_s: float | None = None,
    replace_sheet: bool = False,
) -> ImportOutcome:
    """:func:`import_flight` for a file on disk, its loading sheet found beside it."""
    path = Path(path)
    raw, _ = load_source(path, str(path))  # regular files only: a named pipe would block
    sheet_path = Path(loading_path) if loading_path else chain.sibling_sheet(path)
    loading_raw = None
    if sheet_path is not None:
        loading_raw, _ = load_source(sheet_path, str(sheet_path))
    return import_flight(
        store, raw, path.name, profile_text, profile_source=profile_source,
        loading_raw=loading_raw, loading_name=None if sheet_path is None else sheet_path.name,
        label=label, notes=notes, min_hold_s=min_hold_s, replace_sheet=replace_sheet,
    )


# --------------------------------------------------------------------------- reading back


def store_calibration(store: Store, profile: AircraftProfile,
                      result: calibration.CalibrationResult) -> AircraftRecord:
    """Keep an airspeed calibration with the aircraft: its profile with the new table.

    The profile text with the ``[airspeed_calibration]`` section replaced (a
    comment names the calibration logs) becomes the aircraft's next profile
    version; earlier versions are kept.  Every later recompute of the history
    (``trimlog report --db``, ``trimlog trend``, the dashboard) then reduces
    the stored flights with it: re-analysing is that one command.

    Parameters
    ----------
    store : Store
    profile : AircraftProfile
        The profile the calibration was run with.
    result : CalibrationResult
        With a table (two or more speeds).

    Returns
    -------
    AircraftRecord
        The aircraft with its new current profile version.

    Raises
    ------
    NotIdentifiableError
        The calibration gave no table.
    """
    calibrated = calibration.with_calibration(profile, result)
    return store.upsert_aircraft(calibrated.name, calibrated.text)


def _aircraft(store: Store, aircraft: str | None) -> AircraftRecord:
    if aircraft is not None:
        record = store.find_aircraft(aircraft)
        if record is None:
            names = ", ".join(a.name for a in store.aircraft_list()) or "none"
            raise StoreError(f"no aircraft named '{aircraft}' in the history (found: {names})")
        return record
    records = store.aircraft_list()
    if not records:
        raise StoreError("the history is empty: add flights with 'trimlog import'")
    if len(records) > 1:
        names = ", ".join(f"'{a.name}'" for a in records)
        raise StoreError(f"the history holds several aircraft ({names}): name one")
    return records[0]


def _sheet(record: FlightRecord) -> LoadingSheet | None:
    if not record.loading or _SHEET_TEXT not in record.loading:
        return None
    return read_loading_sheet(
        record.loading[_SHEET_TEXT].encode("utf-8"), name=record.loading.get(_SHEET_NAME)
    )


def _flight_names(records: list[FlightRecord]) -> dict[int, str]:
    """Flight names as the analysis shows them: the file's stem, made unique by the id."""
    stems = {r.id: file_stem(r.filename) or f"flight{r.id}" for r in records}
    counts = pd.Series(list(stems.values())).value_counts()
    return {fid: stem if counts[stem] == 1 else f"{stem}#{fid}" for fid, stem in stems.items()}


@dataclass(frozen=True, eq=False)
class _Stored:
    aircraft: AircraftRecord
    profile: AircraftProfile
    records: list[FlightRecord]
    names: dict[int, str]
    points: pd.DataFrame
    sheets: dict[str, LoadingSheet]


def _load(store: Store, aircraft: str | None) -> _Stored:
    # One snapshot: a flight another user imports meanwhile is seen whole or not at all.
    with store.reading():
        record = _aircraft(store, aircraft)
        records = store.flights(record.id)
        points = store.all_points(record.id)
    profile = parse_profile(record.profile_text, source=f"history: {record.name}")
    names = _flight_names(records)
    if len(points):
        points["flight"] = points["flight_id"].map(names)
        points = points.drop(columns=["flight_id"])
    sheets = {names[r.id]: s for r in records if (s := _sheet(r)) is not None}
    return _Stored(record, profile, records, names, points, sheets)


def analyze_history(store: Store, aircraft: str | None = None) -> chain.Analysis:
    """Recompute the full analysis of every stored flight (the user's exclusions kept)."""
    with store.reading():
        stored = _load(store, aircraft)
        raw = {r.id: store.raw_bytes(r.id) for r in stored.records}
    if not stored.records:
        raise StoreError(f"no flights stored for '{stored.aircraft.name}' yet")
    flights = []
    for r in stored.records:
        name = stored.names[r.id]
        read = chain.load_flight_bytes(raw[r.id], r.filename, stored.profile,
                                       loading=stored.sheets.get(name))[0]
        mine = stored.points.loc[stored.points["flight"] == name].reset_index(drop=True)
        flights.append(with_choices(chain.FlightData(name, r.filename, read.sha256, read.log,
                                                     mine, read.loading), r))
    return chain.analyze(flights, stored.profile)


# --------------------------------------------------------------------------- trend


@dataclass(frozen=True, eq=False)
class Trend:
    """The neutral point flight by flight and the next-CG plan."""

    aircraft: str
    flights: tuple[dict[str, Any], ...]
    steps: tuple[TrendStep, ...]
    next_step: NextStep
    configuration: str
    warnings: tuple[str, ...]
    #: Both maneuver points after each flight, by flight name (a record of
    #: :func:`_maneuver_record`, or None before any maneuvering point).
    maneuver_points: dict[str, dict[str, Any] | None] = field(default_factory=dict)

    @property
    def identifiable(self) -> bool:
        """Whether the latest stick-fixed estimate is supported by the data."""
        return bool(self.steps) and self.steps[-1].stick_fixed.identifiable

    def records(self) -> list[dict[str, Any]]:
        """One plain record per step (for plots and tables)."""
        out = []
        for step in self.steps:
            fixed, free = step.stick_fixed, step.stick_free
            out.append({
                "n_flights": step.n_flights,
                "label": step.flight,
                "cg_pct_mac": step.cg_pct_mac,
                "stick_fixed_pct_mac": fixed.pct_mac if fixed.identifiable else None,
                "ci95_pct_mac": list(fixed.ci95_pct_mac) if fixed.identifiable else None,
                "identifiable": fixed.identifiable,
                "reason": fixed.reason or None,
                "stick_free_pct_mac": (
                    free.pct_mac if free is not None and free.identifiable else None),
                "stick_free_ci95_pct_mac": (
                    list(free.ci95_pct_mac) if free is not None and free.identifiable else None),
                "maneuver_point": self.maneuver_points.get(step.flight),
            })
        return out

    def to_dict(self) -> dict[str, Any]:
        """The ``trimlog trend --json`` object (a contract: keys are never renamed)."""
        n = self.next_step
        return clean({
            "aircraft": self.aircraft,
            "configuration": self.configuration,
            "flights": list(self.flights),
            "trend": self.records(),
            "next_step": {
                "max_cg_pct_mac": n.max_cg_pct_mac,
                "max_cg_station_in": n.max_cg_station_in,
                "min_static_margin_pct_mac": n.min_static_margin_pct_mac,
                "reason": n.reason,
                "limited_by": n.limited_by,
                "step_max_pct_mac": n.step_max_pct_mac,
                "most_aft_flown_pct_mac": n.most_aft_flown_pct_mac,
                "margin_bound_pct_mac": n.margin_bound_pct_mac,
                "cautions": [cautions.ESTIMATE_STATEMENT, *cautions.CG_EXPANSION],
            },
            "warnings": list(self.warnings),
        })


def flight_listing(store: Store, aircraft: str | None = None) -> list[dict[str, Any]]:
    """The stored flights with their mean CG and point counts.

    Listing never depends on analysing: when the stored profile or a flight
    cannot be reduced, the flights are still listed (their CG left empty), so
    the ids needed to fix or exclude them can be seen.
    """
    record = _aircraft(store, aircraft)
    try:
        stored = _load(store, aircraft)
    except TrimlogError:
        records = store.flights(record.id)
        return list(_listing_rows(records, _flight_names(records), {}))
    try:  # the flights as read for the reduction (one snapshot), not read a second time
        reduced, _, config = _reduce(stored)
        cg_by_flight = _cg_by_flight(reduced, config)
    except TrimlogError:
        cg_by_flight = {}
    return list(_listing_rows(stored.records, stored.names, cg_by_flight))


def _reduce(stored: _Stored) -> tuple[pd.DataFrame | None, list[Finding], str]:
    """Reduced points of the history, its findings and the primary configuration."""
    if not len(stored.points):
        return None, [], "clean"
    result = reduce_points(stored.points, stored.profile, stored.sheets)
    found = list(result.findings)
    used = result.points.loc[result.points["included"].astype(bool)]
    counts = used.groupby("config", sort=False).size()
    config = "clean"
    if len(counts):
        config = str(rank_configurations({str(k): int(v) for k, v in counts.items()})[0])
        if len(counts) > 1:
            found.append(finding("history.trend.one_configuration", Severity.CAUTION,
                                 Subject(config=config)))
    return result.points, found, config


def _cg_by_flight(reduced: pd.DataFrame | None, config: str) -> dict[str, float]:
    if reduced is None:
        return {}
    used = reduced.loc[(reduced["config"] == config) & reduced["included"].astype(bool)]
    return used.groupby("flight")["cg_pct_mac"].mean().to_dict()


def _listing(stored: _Stored, cg_by_flight: dict[str, float]) -> tuple[dict[str, Any], ...]:
    return _listing_rows(stored.records, stored.names, cg_by_flight)


def _listing_rows(records: Sequence[FlightRecord], names: Mapping[int, str],
                  cg_by_flight: Mapping[str, float]) -> tuple[dict[str, Any], ...]:
    return tuple(
        {
            "id": r.id,
            "label": r.label or names[r.id],
            "name": names[r.id],
            "filename": r.filename,
            "sha256": r.sha256,
            "date": None if r.date is None else r.date.isoformat(),
            "cg_pct_mac": _finite_or_none(cg_by_flight.get(names[r.id])),
            "n_points": r.n_points,
            "n_included": r.n_included,
            "stab_setting": r.incidence_label,
        }
        for r in records
    )


def trend(
    store: Store,
    aircraft: str | None = None,
    *,
    min_margin_pct_mac: float | None = None,
    max_step_pct_mac: float | None = None,
) -> Trend:
    """Neutral point after each successive flight, and the next-CG plan.

    The trend uses the primary configuration (the one with most included
    points, clean first), as the full analysis does.
    """
    # A policy typed anywhere obeys the profile's rule for it (0 is a value, not "not given").
    if min_margin_pct_mac is not None:
        min_margin_pct_mac = check_policy("limits.min_static_margin", min_margin_pct_mac,
                                          source="minimum static margin")
    if max_step_pct_mac is not None:
        max_step_pct_mac = check_policy("limits.cg_step_max", max_step_pct_mac,
                                        source="largest CG step")
    stored = _load(store, aircraft)
    profile = stored.profile
    reduced, findings, config = _reduce(stored)
    cg_by_flight = _cg_by_flight(reduced, config)
    steps: tuple[TrendStep, ...] = ()
    if reduced is not None:
        order = [stored.names[r.id] for r in stored.records]
        steps = neutral_point_sequence(reduced.loc[reduced["config"] == config], order, profile)
    latest, latest_free = _latest_flight_level(reduced, config, profile) if steps else (None, None)
    if latest is None:
        # an explicit 0 is a choice, not "unset": compare with None
        next_step = NextStep(
            None, None,
            profile.min_static_margin_pct_mac if min_margin_pct_mac is None else min_margin_pct_mac,
            profile.cg_step_max_pct_mac if max_step_pct_mac is None else max_step_pct_mac,
            None, "none", "no flight with usable points yet")
    else:
        next_step = plan_next_step(
            latest, list(cg_by_flight.values()), profile, min_margin_pct_mac=min_margin_pct_mac,
            step_max_pct_mac=max_step_pct_mac,
            aft_gradient_clearly_stable=_aft_flight_clearly_stable(reduced, config, cg_by_flight),
            stick_free=latest_free,
        )
    # The maneuvering limits, as `trimlog analyze` applies them (the same policy margin).
    policy = profile if min_margin_pct_mac is None else with_policy(
        profile, min_static_margin_pct_mac=float(min_margin_pct_mac))
    found = _maneuvering_points(store, stored) if stored.records else []
    maneuvering = chain.analyze_maneuver_points(found, policy, loadings=stored.sheets)
    next_step = chain.with_maneuver_limits(next_step, maneuvering, profile)
    order = [stored.names[r.id] for r in stored.records]
    return Trend(stored.aircraft.name, _listing(stored, cg_by_flight), steps, next_step, config,
                 finding_lines(findings),
                 _maneuver_sequence(order, found, policy, stored.sheets) if maneuvering else {})


def _maneuvering_points(store: Store, stored: _Stored) -> list[pd.DataFrame]:
    """Each stored flight's maneuvering points, with the user's choices, in flight order.

    Those kept at import are used as kept; a flight without them (stored
    before they were kept, or under other terms) has them found again from its
    log, with the same result.
    """
    profile = stored.profile
    out: list[pd.DataFrame] = []
    none = pd.DataFrame()  # one empty table for every flight without turns (only read)
    for r in stored.records:
        name = stored.names[r.id]
        if kept_none(r, profile, name):
            out.append(none)
            continue
        found = found_points(r, profile, name)
        if found is None:
            found = _found_from_log(store, r, profile, name)
        out.append(apply_choices(found, r))
    return out


def _found_from_log(store: Store, record: FlightRecord, profile: AircraftProfile,
                    name: str) -> pd.DataFrame:
    """A stored flight's maneuvering points found again from its log (before choices)."""
    log = read_log(store.raw_bytes(record.id), name=record.filename,
                   column_map=profile.column_map, inverted=profile.inverted_columns)
    return chain.FlightData(name, record.filename, record.sha256, log,
                            pd.DataFrame()).maneuvering_points()


def keep_found_points(store: Store, aircraft: str | None = None) -> int:
    """Keep the maneuvering points of every stored flight that has none kept yet.

    The one-time step that brings a history from before they were kept (or
    kept under other terms: another version of the search, other logger
    columns) up to date, run after each import; each flight is its own
    transaction, so an interrupted run loses nothing and the next one goes on.

    Returns
    -------
    int
        The number of flights whose maneuvering points were found and kept.
    """
    record = _aircraft(store, aircraft)
    profile = parse_profile(record.profile_text, source=f"history: {record.name}")
    records = store.flights(record.id)
    names = _flight_names(records)
    kept = 0
    for r in records:
        if found_kept(r, profile, names[r.id]):
            continue
        try:
            found = _found_from_log(store, r, profile, names[r.id])
        except TrimlogError:
            continue  # a log the current profile cannot read: the trend says so itself
        store.set_flight_detail(r.id, FOUND_KEY, found_record(found, profile, names[r.id]))
        kept += 1
    return kept


def _maneuver_sequence(order: list[str], found: list[pd.DataFrame], profile: AircraftProfile,
                       sheets: dict[str, LoadingSheet]) -> dict[str, dict[str, Any] | None]:
    """Both maneuver points from the first k flights, for each k (the trend's added column).

    A flight without maneuvering points adds nothing: the analysis of the flights
    before it stands (the same input gives the same result), so only flights with
    turns cost an analysis.
    """
    out: dict[str, dict[str, Any] | None] = {}
    result = None
    for k, name in enumerate(order, start=1):
        if k == 1 or len(found[k - 1]):
            result = chain.analyze_maneuver_points(found[:k], profile, loadings=sheets)
        out[name] = None if result is None else _maneuver_record(result)
    return out


def _maneuver_record(result) -> dict[str, Any]:
    """The trend's ``maneuver_point`` of one step: each maneuver point, or None."""
    def one(point) -> dict[str, Any] | None:
        if point is None:
            return None
        known = bool(point.identifiable)
        return {"pct_mac": _finite_or_none(point.pct_mac) if known else None,
                "ci95_pct_mac": list(point.ci95_pct_mac) if known else None,
                "identifiable": known, "reason": point.reason or None}
    n = int(result.points["included"].astype(bool).sum()) if len(result.points) else 0
    return {"stick_fixed": one(result.stick_fixed), "stick_free": one(result.stick_free),
            "n_points": n}


def _latest_flight_level(reduced: pd.DataFrame, config: str, profile: AircraftProfile):
    """Both neutral points of every flight so far by the headline (flight-level) model.

    The trend table accumulates the ordinary pooled model flight by flight (fast); the
    plan rests on the same model as ``trimlog analyze``, which allows for errors shared by
    a whole flight (CG, force zero), so the two commands give the same next step.
    """
    from trimlog.stability.neutral_points import headline_neutral_point

    part = reduced.loc[reduced["config"] == config]
    errors = {"lemac_in": profile.lemac_in, "mac_in": profile.mac_in,
              "cg_uncertainty_pct_mac": profile.cg_uncertainty_pct_mac,
              "stick_force_zero_uncertainty_lbf": profile.stick_force_zero_uncertainty_lbf}
    return (headline_neutral_point(part, "stick_fixed", **errors),
            headline_neutral_point(part, "stick_free", **errors))


def _aft_flight_clearly_stable(
    reduced: pd.DataFrame | None, config: str, cg_by_flight: dict[str, float]
) -> bool:
    """Whether the most aft flight's elevator-to-trim gradient is negative with its whole CI."""
    if reduced is None or not cg_by_flight:
        return False
    from trimlog.stability.neutral_points import flight_gradients

    aft = max(cg_by_flight, key=cg_by_flight.get)
    part = reduced.loc[(reduced["config"] == config) & (reduced["flight"] == aft)]
    try:
        gradients = flight_gradients(part)
    except TrimlogError:
        return False
    return aft_flight_clearly_stable(gradients)


def _finite_or_none(value: float | None) -> float | None:
    return None if value is None or not math.isfinite(value) else float(value)


# --------------------------------------------------------------------------- choices and edits


def apply_exclusions(
    store: Store, flight_ids: list[int], exclusions: list[tuple[str, int]]
) -> list[str]:
    """Exclude points of flights just imported (``import --exclude``), saved or not before.

    ``FLIGHT`` names a flight by its label in the log (the file's stem) or by
    its history id.  Every exclusion is checked before any is applied.

    Returns
    -------
    list of str
        One line per point excluded (or already excluded).

    Raises
    ------
    StoreError
        An exclusion names no flight of those given, or no point of it.
    """
    if not exclusions:
        return []
    by_name: dict[str, int] = {}
    points: dict[int, pd.DataFrame] = {}
    for fid in dict.fromkeys(flight_ids):
        record = store.flight(fid)
        frame = store.flight_points(fid)
        points[fid] = frame
        names = {str(fid), file_stem(record.filename)}
        if "flight" in frame and len(frame):
            names.update(str(v) for v in frame["flight"].unique())
        for n in names:
            by_name.setdefault(n, fid)
    plan = []
    for flight, point in exclusions:
        fid = by_name.get(flight)
        if fid is None:
            raise StoreError(
                f"--exclude {flight}:{point}: no flight '{flight}' among the files given "
                f"(flights: {', '.join(sorted(by_name))}); the flights were saved, no point "
                "was excluded")
        if point not in set(points[fid]["point"].astype(int)):
            raise StoreError(
                f"--exclude {flight}:{point}: flight '{flight}' (history id {fid}) has no point "
                f"{point} (points 1..{len(points[fid])}); no point was excluded")
        plan.append((flight, fid, point))
    lines = []
    for flight, fid, point in plan:
        frame = points[fid]
        was = bool(frame.loc[frame["point"].astype(int) == point, "included"].iloc[0])
        store.set_point_included(fid, point, False)
        state = "excluded" if was else "already excluded"
        lines.append(f"flight '{flight}' (history id {fid}) point {point}: {state}")
    return lines


def edit_flight(
    store: Store, flight_id: int, *, label: str | None = None, notes: str | None = None,
    date: str | None = None,
) -> str:
    """Change what is known of a saved flight (``trimlog edit``); return what was done.

    A new date renumbers the programme in date order.
    """
    import datetime as dt

    if label is None and notes is None and date is None:
        raise StoreError("edit: give --label, --notes or --date")
    record = store.flight(flight_id)
    changes: dict[str, Any] = {}
    if label is not None:
        changes["label"] = label
    if notes is not None:
        changes["notes"] = notes
    if date is not None:
        try:
            changes["date"] = dt.date.fromisoformat(date.strip())
        except ValueError:
            raise StoreError(f"--date: expected YYYY-MM-DD, found {date!r}") from None
        if record.loading and programme.FLOWN_AT in record.loading:
            changes["loading"] = {k: v for k, v in record.loading.items()
                                  if k != programme.FLOWN_AT}
    # the change and the renumbering in date order are one transaction
    store.update_flight(flight_id, **changes, order=programme.in_date_order)
    records = store.flights(record.aircraft_id)
    number = programme.flight_number(records, flight_id)
    return (f"history flight id {flight_id} ({record.filename}): "
            f"{', '.join(sorted(changes))} changed; flight {number} of {len(records)} by date")
