"""The user's include/exclude choices of maneuvering points, kept in the history.

A flight's maneuvering points are found again from its stored log each time
(they are not stored as rows).  The user's choices are kept with the flight's
details, in its ``loading`` record under :data:`KEY` (point number -> included),
beside the loading sheet: no new table, and a backup or export carries them.
A stored flight read back gets its maneuvering points with these choices
applied (:func:`with_choices`), so every path that reads the history (analyze
``--db``, report ``--db``, trend, plan, dashboard) sees the same choice.

Why the user left a trim point out (turbulence, not stabilized, ...) is kept
the same way, under :data:`REASONS_KEY` (point number -> reason), and
:func:`with_choices` puts it in the flight's ``exclusion_reason`` column.
"""

from __future__ import annotations

from dataclasses import replace
from typing import Any

from trimlog.errors import InputFileError
from trimlog.history.store import FlightRecord, Store
from trimlog.input.logs import read_log
from trimlog.input.profile import parse_profile
from trimlog.pipeline import chain
from trimlog.pipeline.maneuvers import maneuvers_from_log

__all__ = ["KEY", "REASONS_KEY", "choices_of", "reasons_of", "set_exclusion_reason",
           "set_maneuver_included", "with_choices"]

#: Key of the choices in a flight's ``loading`` record: {"point number": included}.
KEY = "maneuver_included"
#: Key of the reasons for leaving trim points out: {"point number": reason}.
REASONS_KEY = "exclusion_reasons"


def choices_of(record: FlightRecord) -> dict[int, bool]:
    """The stored choices of a flight's maneuvering points (point number -> included)."""
    raw = (record.loading or {}).get(KEY) or {}
    return {int(point): bool(value) for point, value in raw.items()}


def reasons_of(record: FlightRecord) -> dict[int, str]:
    """Why the user left trim points of a flight out (point number -> reason)."""
    raw = (record.loading or {}).get(REASONS_KEY) or {}
    return {int(point): str(reason) for point, reason in raw.items()}


def with_choices(flight: chain.FlightData, record: FlightRecord) -> chain.FlightData:
    """The flight with its maneuvering points found and the stored choices applied.

    The stored reasons for leaving trim points out go into its points'
    ``exclusion_reason`` column (only on points that are left out).
    """
    points = flight.maneuvering_points().copy()
    for point, included in choices_of(record).items():
        mask = points["point"].astype(int) == point if len(points) else None
        if mask is not None and mask.any():
            points.loc[mask, "included"] = included
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
    loading[REASONS_KEY] = reasons
    store.update_flight(flight_id, loading=loading)


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

