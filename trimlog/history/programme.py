"""The aircraft's programme: saved flights and new logs analysed together, in date order.

``trimlog analyze NEW.csv --db DB`` and the dashboard's Results page build
the same list of flights here: every flight saved for the aircraft, read
again from its stored bytes with its saved point choices, plus the new logs
not yet saved.  The analysis of that list equals the analysis of all the
same files given at once with the same choices (tested), because both go
through :func:`trimlog.pipeline.chain.analyze`, which orders flights by date.

The history's flight numbers follow the date too: after every import the
flights of the aircraft are renumbered in the order flown.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace

import pandas as pd

from trimlog.errors import StoreError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.history.codec import FlightRecord
from trimlog.history.maneuver_choices import with_choices
from trimlog.history.store import AircraftRecord, Store
from trimlog.input.loading_sheet import LoadingSheet, read_loading_sheet
from trimlog.input.profile import AircraftProfile, parse_profile
from trimlog.pipeline import chain, ordering
from trimlog.pipeline.ordering import ProgrammeInputs
from trimlog.progress import SILENT, Progress

__all__ = ["Programme", "ProgrammeInputs", "analyze_programme", "programme_flights",
           "renumber_by_date", "in_date_order", "flight_number"]

#: Keys of the loading JSON the history keeps beside the sheet text.
SHEET_TEXT, SHEET_NAME, FLOWN_AT = "sheet_text", "sheet_name", "flown_at"


@dataclass(frozen=True, eq=False)
class Programme:
    """Everything :func:`trimlog.pipeline.chain.analyze` needs for the whole programme."""

    profile: AircraftProfile
    flights: tuple[chain.FlightData, ...]
    exclusions: tuple[tuple[str, int], ...]
    inclusions: tuple[tuple[str, int], ...]
    inputs: ProgrammeInputs
    findings: tuple[Finding, ...]


def find_aircraft(store: Store, name: str | None) -> AircraftRecord | None:
    """The aircraft of this name (or the only one when no name is given); None when absent."""
    if name is not None:
        return store.find_aircraft(name)
    records = store.aircraft_list()
    if len(records) > 1:
        names = ", ".join(f"'{a.name}'" for a in records)
        raise StoreError(f"the history holds several aircraft ({names}): name one")
    return records[0] if records else None


def stored_sheet(record: FlightRecord) -> LoadingSheet | None:
    """The loading sheet saved with a flight, read again."""
    if not record.loading or SHEET_TEXT not in record.loading:
        return None
    return read_loading_sheet(
        record.loading[SHEET_TEXT].encode("utf-8"), name=record.loading.get(SHEET_NAME))


def programme_flights(
    store: Store,
    new_flights: Sequence[chain.FlightData],
    *,
    profile: AircraftProfile | None = None,
    aircraft: str | None = None,
    min_hold_s: float | None = None,
) -> Programme:
    """The saved flights of the aircraft (with their saved choices) plus the new ones.

    Parameters
    ----------
    store : Store
    new_flights : sequence of FlightData
        Logs not saved yet (read with the same profile).  A file whose bytes
        are already saved is used once, as the saved flight, and said so.
    profile : AircraftProfile, optional
        The profile to analyse with; the aircraft is its name.  Without it,
        the profile saved for ``aircraft`` is used.
    aircraft : str, optional
        The aircraft's name in the history (needed without ``profile`` when
        the history holds several aircraft).
    min_hold_s : float, optional
        Minimum hold [s], as for the new logs.

    Returns
    -------
    Programme

    Raises
    ------
    StoreError
        No such aircraft and no profile given.
    """
    found: list[Finding] = []
    record = find_aircraft(store, aircraft if profile is None else profile.name)
    if record is None and profile is None:
        names = ", ".join(a.name for a in store.aircraft_list()) or "none"
        raise StoreError(
            f"no aircraft named '{aircraft}' in {store.path} (found: {names}); give its "
            "profile with --aircraft PROFILE.toml")
    if profile is None:
        profile = parse_profile(record.profile_text, source=f"history: {record.name}")
    elif record is None:
        found.append(finding("history.programme.no_saved_flights", Severity.CAUTION,
                             aircraft=profile.name, database=str(store.path)))
    elif record.profile_text != profile.text:
        found.append(finding("history.programme.profile_differs", Severity.CAUTION,
                             profile=profile.source, aircraft=record.name))
    saved, exclusions, inclusions = [], [], []
    ids: list[int] = []
    records = store.flights(record.id) if record is not None else []
    for r in records:
        flight, out, back = _saved_flight(store, r, profile, min_hold_s, found)
        saved.append(flight)
        ids.append(r.id)
        exclusions.extend(out)
        inclusions.extend(back)
    saved = _unique_names(saved, ids)
    by_digest = {r.sha256: r.id for r in records}
    new, already = [], []
    for f in new_flights:
        if f.sha256 in by_digest:
            already.append((f.source, by_digest[f.sha256]))
            continue
        new.append(f)
    for source, fid in dict.fromkeys(already):
        found.append(finding("history.programme.already_saved", Severity.NOTE,
                             Subject(source=source), history_id=fid))
    ordered, _ = ordering.order_by_date([*saved, *new])
    saved_ids = {id(f): i for f, i in zip(saved, ids, strict=True)}
    inputs = ProgrammeInputs(
        database=str(store.path),
        aircraft=profile.name if record is None else record.name,
        saved=tuple((f.flight, saved_ids[id(f)]) for f in ordered if id(f) in saved_ids),
        new=tuple(dict.fromkeys(f.flight for f in ordered if id(f) not in saved_ids)),
        already_saved=tuple(dict.fromkeys(already)),
    )
    return Programme(profile, tuple(ordered), tuple(exclusions), tuple(inclusions), inputs,
                     tuple(found))


def _saved_flight(
    store: Store, record: FlightRecord, profile: AircraftProfile, min_hold_s: float | None,
    found: list[Finding],
) -> tuple[chain.FlightData, list[tuple[str, int]], list[tuple[str, int]]]:
    """A saved flight read again from its bytes, and its saved choices as exclusions/inclusions."""
    found = chain.load_flight_bytes(store.raw_bytes(record.id), record.filename, profile,
                                    loading=stored_sheet(record), min_hold_s=min_hold_s)
    flight = found[0]
    fresh = flight.points
    stored = store.flight_points(record.id)
    same = len(fresh) == len(stored) and (
        "t_start_s" not in stored or fresh["t_start_s"].astype(float).round(6).tolist()
        == stored["t_start_s"].astype(float).round(6).tolist())
    if not same:
        found.append(finding("history.programme.points_differ", Severity.CAUTION,
                             Subject(source=record.filename), history_id=record.id,
                             n_saved=len(stored)))
        points = stored.copy()
        points["flight"] = flight.flight
        points["source"] = record.filename
        return with_choices(replace(flight, points=points), record), [], []
    out, back = [], []
    for point, now, then in zip(fresh["point"].astype(int), fresh["included"].astype(bool),
                                stored["included"].astype(bool), strict=True):
        if now and not then:
            out.append((flight.flight, int(point)))
        elif then and not now:
            back.append((flight.flight, int(point)))
    return with_choices(flight, record), out, back


def _unique_names(flights: list[chain.FlightData], ids: list[int]) -> list[chain.FlightData]:
    """Saved flights of the same name get the history id appended (``flight2#7``)."""
    counts = pd.Series([f.flight for f in flights], dtype=object).value_counts()
    out = []
    for f, fid in zip(flights, ids, strict=True):
        if counts.get(f.flight, 0) > 1:
            name = f"{f.flight}#{fid}"
            points = f.points.copy()
            points["flight"] = name
            turns = f.maneuvers
            if turns is not None:
                turns = turns.copy()
                turns["flight"] = name
            f = replace(f, flight=name, points=points, maneuvers=turns)
        out.append(f)
    return out


def analyze_programme(
    store: Store,
    new_flights: Sequence[chain.FlightData],
    *,
    profile: AircraftProfile | None = None,
    aircraft: str | None = None,
    exclusions: Iterable[tuple[str, int]] = (),
    inclusions: Iterable[tuple[str, int]] = (),
    min_hold_s: float | None = None,
    progress: Progress = SILENT,
    drop_unknown_choices: bool = False,
    maneuver_exclusions: Iterable[tuple[str, int]] = (),
    maneuver_inclusions: Iterable[tuple[str, int]] = (),
    exclusion_reasons: Mapping[tuple[str, int], str] | None = None,
) -> chain.Analysis:
    """Analyse the saved flights with their choices plus the new ones.

    See :func:`programme_flights` for how the flights are gathered.  The
    result's ``programme`` says which flights went in.  ``exclusions`` and
    ``inclusions`` are the user's choices now, on top of the saved ones;
    with ``drop_unknown_choices`` a choice naming no point is dropped (the
    dashboard keeps choices of logs since removed) instead of refused.
    ``maneuver_exclusions`` and ``maneuver_inclusions`` are the same for the
    maneuvering points (their saved choices travel with the flights).
    ``exclusion_reasons`` says why points are left out now (the saved
    flights' reasons travel with them).
    """
    prog = programme_flights(store, new_flights, profile=profile, aircraft=aircraft,
                             min_hold_s=min_hold_s)
    exclusions, inclusions = list(exclusions), list(inclusions)
    if drop_unknown_choices:
        present = {(f.flight, int(p)) for f in prog.flights for p in f.points.get("point", [])}
        exclusions = [c for c in exclusions if c in present]
        inclusions = [c for c in inclusions if c in present]
    left_out = {*prog.exclusions, *exclusions}
    reasons = {c: r for c, r in (exclusion_reasons or {}).items() if c in left_out}
    result = chain.analyze(list(prog.flights), prog.profile,
                           exclusions=[*prog.exclusions, *exclusions],
                           inclusions=[*prog.inclusions, *inclusions], progress=progress,
                           maneuver_exclusions=maneuver_exclusions,
                           maneuver_inclusions=maneuver_inclusions,
                           exclusion_reasons=reasons)
    return replace(result, findings=(*prog.findings, *result.findings), programme=prog.inputs)


# --------------------------------------------------------------------------- numbering


def record_when(record: FlightRecord) -> dt.datetime | None:
    """When a saved flight was flown: the date-time kept at import, else its date."""
    loading = record.loading or {}
    return ordering.as_datetime(loading.get(FLOWN_AT)) or ordering.as_datetime(record.date)


def in_date_order(records: Sequence[FlightRecord]) -> list[FlightRecord]:
    """The flights in the order flown (a :data:`trimlog.history.store.FlightOrder`).

    Undated flights keep their relative order and come first, as in the
    analysis (:func:`trimlog.pipeline.ordering.order_by_date`); flights of one
    date keep their stored order.
    """
    keyed = [(record_when(r), i, r) for i, r in enumerate(records)]
    undated = [r for w, _, r in keyed if w is None]
    dated = [r for _, _, r in sorted(((w, i, r) for w, i, r in keyed if w is not None),
                                     key=lambda item: (item[0], item[1]))]
    return undated + dated


def renumber_by_date(store: Store, aircraft_id: int) -> list[FlightRecord]:
    """Renumber the aircraft's flights in the order flown; return them in that order.

    One store transaction under the aircraft's lock (:meth:`Store.renumber`), so two
    people importing dated flights at once never get duplicate or shuffled numbers.
    """
    return store.renumber(aircraft_id, in_date_order)


def flight_number(records: Sequence[FlightRecord], flight_id: int) -> int:
    """The 1-based place of a flight in the programme (records in the order flown)."""
    for number, r in enumerate(records, start=1):
        if r.id == flight_id:
            return number
    raise StoreError(f"no flight with id {flight_id} in this programme")
