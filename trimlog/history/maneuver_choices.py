"""The user's include/exclude choices of maneuvering points, kept in the history.

A flight's maneuvering points are found from its stored log.  Those found at
import are kept with the flight's details, in its ``loading`` record under
:data:`FOUND_KEY` (the Points table in the store's own row encoding, with what
the search depended on: the log's label, the profile's logger columns and sign
flips, the search's version and settings), so that the trend and plan of a
long programme need not read every log again (:func:`found_points`).  Where
the record is missing (a history from before it was kept) or was made under
other terms, the points are found again from the log, as before: the kept
copy is a shortcut to the same numbers, never a different answer.

The user's choices are kept beside them, under :data:`KEY` (point number ->
included): no new table, and a backup or export carries them.  A stored
flight read back gets its maneuvering points with these choices applied
(:func:`with_choices`, :func:`apply_choices`), so every path that reads the
history (analyze ``--db``, report ``--db``, trend, plan, dashboard) sees the
same choice.

Why the user left a trim point out (turbulence, not stabilized, ...) is kept
the same way, under :data:`REASONS_KEY` (point number -> reason), and
:func:`with_choices` puts it in the flight's ``exclusion_reason`` column.
"""

from __future__ import annotations

import functools
import json
from collections.abc import Mapping
from dataclasses import replace
from typing import Any

import pandas as pd

import trimlog
from trimlog.errors import InputFileError, StoreError
from trimlog.history.codec import decode_points, encode_points
from trimlog.history.store import FlightRecord, Store
from trimlog.input.logs import read_log
from trimlog.input.profile import AircraftProfile, parse_profile
from trimlog.pipeline import chain
from trimlog.pipeline.maneuvers import DETECTION_VERSION, MANEUVER_SETTINGS, maneuvers_from_log

__all__ = ["FOUND_KEY", "KEY", "REASONS_KEY", "apply_choices", "choices_of",
           "found_kept", "found_points", "found_record", "reasons_of",
           "set_exclusion_reason", "set_maneuver_included", "with_choices"]

#: Key of the choices in a flight's ``loading`` record: {"point number": included}.
KEY = "maneuver_included"
#: Key of the reasons for leaving trim points out: {"point number": reason}.
REASONS_KEY = "exclusion_reasons"

#: Key of the maneuvering points found in the flight's log, in its ``loading`` record.
FOUND_KEY = "maneuver_points_found"


def choices_of(record: FlightRecord) -> dict[int, bool]:
    """The stored choices of a flight's maneuvering points (point number -> included)."""
    raw = (record.loading or {}).get(KEY) or {}
    return {int(point): bool(value) for point, value in raw.items()}


def apply_choices(points: pd.DataFrame, record: FlightRecord) -> pd.DataFrame:
    """A copy of a flight's maneuvering points with the stored choices applied.

    A flight without points or without choices gives back ``points`` itself
    (nothing to change; a long history has hundreds of such flights).
    """
    choices = choices_of(record)
    if not choices or not len(points):
        return points
    points = points.copy()
    numbers = points["point"].astype(int)
    for point, included in choices.items():
        mask = numbers == point
        if mask.any():
            points.loc[mask, "included"] = included
    return points


def kept_none(record: FlightRecord, profile: AircraftProfile, label: str) -> bool:
    """Whether the points kept for a flight under the terms given now say it has none."""
    return found_kept(record, profile, label) and not record.loading[FOUND_KEY].get("rows")


def reasons_of(record: FlightRecord) -> dict[int, str]:
    """Why the user left trim points of a flight out (point number -> reason)."""
    raw = (record.loading or {}).get(REASONS_KEY) or {}
    return {int(point): str(reason) for point, reason in raw.items()}


def with_choices(flight: chain.FlightData, record: FlightRecord) -> chain.FlightData:
    """The flight with its maneuvering points found and the stored choices applied.

    The stored reasons for leaving trim points out go into its points'
    ``exclusion_reason`` column (only on points that are left out).
    """
    points = apply_choices(flight.maneuvering_points(), record)
    reasons = reasons_of(record)
    trim = flight.points
    if reasons and len(trim):
        trim = trim.copy()
        numbers = trim["point"].astype(int)
        left_out = ~trim["included"].astype(bool)
        trim["exclusion_reason"] = [reasons.get(int(p), "") if out else ""
                                    for p, out in zip(numbers, left_out, strict=True)]
    return replace(flight, maneuvers=points, points=trim)


def set_exclusion_reason(store: Store, flight_id: int, point: int, reason: str) -> None:
    """Keep why a trim point of a stored flight is left out ("" forgets the reason).

    The reason is kept with the flight's details (backed up and exported with
    them); it is shown only while the point is left out.
    """
    record = store.flight(flight_id)
    loading: dict[str, Any] = dict(record.loading or {})
    reasons = {str(k): str(v) for k, v in (loading.get(REASONS_KEY) or {}).items()}
    text = str(reason).strip()
    if text:
        reasons[str(int(point))] = text
    else:
        reasons.pop(str(int(point)), None)
    if reasons == (loading.get(REASONS_KEY) or {}):
        return
    # one key of the details: a choice another process keeps meanwhile is not undone
    store.set_flight_detail(flight_id, REASONS_KEY, reasons)


def _terms(profile: AircraftProfile, label: str) -> dict[str, Any]:
    """What the maneuvering points found in a stored log depend on, besides its bytes."""
    return {
        "trimlog": trimlog.__version__,
        "detection": DETECTION_VERSION,
        "settings": repr(MANEUVER_SETTINGS),
        "columns": {str(k): str(v) for k, v in profile.column_map.items()},
        "inverted": sorted(str(c) for c in profile.inverted_columns),
        "label": str(label),
    }


def found_record(found: pd.DataFrame, profile: AircraftProfile, label: str) -> dict[str, Any]:
    """The maneuvering points found in a log, as kept under :data:`FOUND_KEY`.

    Parameters
    ----------
    found : pandas.DataFrame
        ``maneuvers_from_log(log, flight=label)`` of the flight's log (or a
        part of it holding every row labelled ``label``), without the user's
        choices; a ``source`` column is left out (it is the file name).
    profile : AircraftProfile
        The profile the log was read with.
    label : str
        The flight's name in the history (the search's default label): only
        its rows are kept, as ``FlightData.maneuvering_points()`` keeps them.

    Returns
    -------
    dict
        JSON-ready: the terms of the search, the column schema and the rows.
    """
    mine = found.loc[found["flight"].astype(str) == str(label)] if len(found) else found
    table = mine.drop(columns=["source"], errors="ignore").reset_index(drop=True)
    schema, rows = encode_points(table, f"maneuvering points of '{label}'")
    return {"terms": _terms(profile, label), "schema": schema,
            "rows": [list(row) for row in rows]}


@functools.lru_cache(maxsize=16)
def _empty_table(schema: str) -> pd.DataFrame:
    """The table of a flight without maneuvering points, for one column schema (JSON)."""
    columns = json.loads(schema)
    return _with_source(decode_points({0: columns}, [], with_flight_id=False), columns, "")


def found_kept(record: FlightRecord, profile: AircraftProfile, label: str) -> bool:
    """Whether maneuvering points are kept for a flight under the terms given now."""
    kept = (record.loading or {}).get(FOUND_KEY)
    return isinstance(kept, Mapping) and kept.get("terms") == _terms(profile, label)


def found_points(record: FlightRecord, profile: AircraftProfile,
                 label: str) -> pd.DataFrame | None:
    """The maneuvering points kept for a stored flight, or None where they must be found again.

    None when nothing is kept (a flight stored before they were), or they were
    found under other terms than ``profile`` and ``label`` now give (another
    version of the search, other logger columns or sign flips, a flight renamed
    to keep names unique), or the record cannot be read back.  The table is
    what ``FlightData.maneuvering_points()`` gives (``source`` is the file name),
    before the user's choices.
    """
    if not found_kept(record, profile, label):
        return None
    kept = record.loading[FOUND_KEY]
    try:
        rows = [(record.id, int(p), int(inc), str(values)) for p, inc, values in kept["rows"]]
        if not rows:  # most flights have no turn: their empty table is built once
            return _empty_table(json.dumps(kept["schema"])).copy()
        table = decode_points({record.id: kept["schema"]}, rows, with_flight_id=False)
    except (KeyError, TypeError, ValueError, StoreError):
        return None  # found again from the log: the same numbers, only slower
    return _with_source(table, kept["schema"], record.filename)


def _with_source(table: pd.DataFrame, schema: list, source: str) -> pd.DataFrame:
    table = table[[name for name, _ in schema]]
    table["source"] = source
    return table


def set_maneuver_included(store: Store, flight_id: int, point: int, included: bool) -> str:
    """Keep the choice to include or exclude one maneuvering point of a stored flight.

    Parameters
    ----------
    store : Store
    flight_id : int
        The flight's history id.
    point : int
        The maneuvering point's number (maneuvering points are numbered on their own).
    included : bool

    Returns
    -------
    str
        One line saying what was done.

    Raises
    ------
    InputFileError
        The flight has no such maneuvering point (nothing is changed).
    """
    record = store.flight(flight_id)
    profile = parse_profile(store.get_aircraft(record.aircraft_id).profile_text,
                            source="history")
    log = read_log(store.raw_bytes(flight_id), name=record.filename,
                   column_map=profile.column_map, inverted=profile.inverted_columns)
    found = maneuvers_from_log(log, flight=str(flight_id))
    numbers = sorted(int(p) for p in found.get("point", []))
    if int(point) not in numbers:
        listed = f"points 1..{len(numbers)}" if numbers else "none was found"
        raise InputFileError(
            f"flight {flight_id} ({record.filename}) has no maneuvering point {point} "
            f"({listed}); nothing was changed")
    loading: dict[str, Any] = dict(record.loading or {})
    choices = {str(k): bool(v) for k, v in (loading.get(KEY) or {}).items()}
    choices[str(int(point))] = bool(included)
    loading[KEY] = choices
    store.update_flight(flight_id, loading=loading)
    state = "included" if included else "excluded"
    return f"flight {flight_id}: maneuvering point {point} {state} (kept in the history)"

