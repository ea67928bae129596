"""A saved flight imported again with another loading sheet: say what changed, and replace it.

The same log bytes are one flight of the history (its SHA-256).  Importing them
again with a loading sheet that differs from the saved one is never silent: the
differences are named field by field (takeoff weight, CG, fuel, date, stabilizer
setting, ...), and nothing changes unless the user asks for the new sheet
(``trimlog import --replace-sheet``; the History page's "Replace" button).  The
CG of every point of the flight comes from its sheet, so a corrected sheet moves
the neutral point, the margins and the next CG: the engineer must mean it.

On replacement the earlier sheet is kept in the flight's record (``replaced_sheets``
of its loading, with the time it was replaced), the points' fuel-dependent values
are recomputed with the user's point choices kept, and the programme is renumbered
by date in the same transaction (a corrected date moves the flight).
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

from trimlog.errors import LoadingSheetChangedError
from trimlog.history import programme
from trimlog.history.codec import KEEP, FlightRecord
from trimlog.history.store import Store
from trimlog.input.loading_sheet import LoadingSheet
from trimlog.pipeline import chain

#: Loading-sheet fields compared on a re-import: (attribute, words, unit).
SHEET_FIELDS: tuple[tuple[str, str, str], ...] = (
    ("takeoff_weight_lb", "takeoff weight", "lb"),
    ("takeoff_cg_in", "takeoff CG", "in"),
    ("takeoff_cg_pct_mac", "takeoff CG", "%MAC"),
    ("takeoff_fuel_gal", "takeoff fuel", "US gal"),
    ("fuel_flow_gph", "fuel flow", "US gal/h"),
    ("cg_uncertainty_in", "CG uncertainty", "in"),
    ("cg_uncertainty_pct_mac", "CG uncertainty", "%MAC"),
    ("flap_deg", "flap", "deg"),
    ("stab_setting", "stabilizer setting", ""),
    ("stab_incidence_deg", "stabilizer incidence", "deg"),
    ("flight", "flight label", ""),
    ("label", "label", ""),
    ("notes", "notes", ""),
)

REPLACED = "replaced_sheets"


def _shown(value: Any, unit: str) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "none"
    if isinstance(value, float):
        return f"{value:g} {unit}".strip()
    return repr(str(value))


def _same(a: Any, b: Any) -> bool:
    if isinstance(a, float) and isinstance(b, float):
        return math.isclose(a, b, rel_tol=1e-9, abs_tol=1e-9)
    return a == b


def _when(sheet: LoadingSheet) -> str | None:
    if sheet.flown_at is not None:
        return sheet.flown_at.isoformat()
    return None if sheet.date is None else sheet.date.isoformat()


def sheet_changes(old: LoadingSheet | None, new: LoadingSheet) -> list[str]:
    r"""What a new loading sheet changes against the saved one, in words; empty when nothing.

    Parameters
    ----------
    old : LoadingSheet or None
        The sheet saved with the flight (None when it was saved without one).
    new : LoadingSheet
        The sheet given now.

    Returns
    -------
    list of str
        One item per changed field (``"takeoff CG from 78.4 in to 77.9 in"``).
        A CG given as a station on one sheet and in %MAC on the other shows both.

    Examples
    --------
    >>> from trimlog.input.loading_sheet import read_loading_sheet
    >>> a = read_loading_sheet(b'flight = "3"\n[takeoff]\nweight = "1520 lb"\n'
    ...                        b'cg = "78.4 in"\nfuel = "24 gal"\n', name="a")
    >>> b = read_loading_sheet(b'flight = "3"\n[takeoff]\nweight = "1535 lb"\n'
    ...                        b'cg = "77.9 in"\nfuel = "24 gal"\n', name="b")
    >>> sheet_changes(a, b)
    ['takeoff weight from 1520 lb to 1535 lb', 'takeoff CG from 78.4 in to 77.9 in']
    """
    if old is None:
        return [f"a loading sheet ('{new.source}') where the saved flight has none (its "
                "weight and CG came from the log)"]
    changes = []
    if _when(old) != _when(new):
        changes.append(f"date flown from {_when(old) or 'none'} to {_when(new) or 'none'}")
    for attr, words, unit in SHEET_FIELDS:
        before, after = getattr(old, attr), getattr(new, attr)
        if not _same(before, after):
            changes.append(f"{words} from {_shown(before, unit)} to {_shown(after, unit)}")
    return changes


def saved_again(
    store: Store,
    record: FlightRecord,
    flight: chain.FlightData,
    name: str,
    *,
    sheet: LoadingSheet | None,
    loading: dict[str, Any] | None,
    replace_sheet: bool,
) -> tuple[str, int | None, int | None] | None:
    """Handle the loading sheet of bytes already saved as ``record``.

    Returns None when the sheet given (if any) says what the saved one says;
    else replaces the saved sheet when ``replace_sheet`` and returns the words
    of what was done with the flight's new place and the number of flights.

    Raises
    ------
    LoadingSheetChangedError
        The sheet differs and ``replace_sheet`` is False; nothing was changed.
    """
    if sheet is None:
        return None
    old = programme.stored_sheet(record)
    changes = sheet_changes(old, sheet)
    if not changes:
        return None
    listed = "; ".join(changes)
    if not replace_sheet:
        was = "" if old is None else f" ('{old.source}')"
        raise LoadingSheetChangedError(
            f"{name}: already stored as history flight id {record.id} (flight "
            f"{record.flight_order} of the programme) with another loading sheet{was}; the "
            "sheet given now differs: "
            f"{listed}. Nothing changed. To analyse this flight with the new sheet, import it "
            "again replacing the saved one ('trimlog import --replace-sheet ...', or "
            "'Replace the saved loading sheet' on the dashboard's History page); the earlier "
            "sheet is then kept in the flight's record")
    kept = list((record.loading or {}).get(REPLACED, []))
    if record.loading and programme.SHEET_TEXT in record.loading:
        kept.append({k: record.loading.get(k)
                     for k in (programme.SHEET_NAME, programme.SHEET_TEXT, programme.FLOWN_AT)}
                    | {"replaced_at": dt.datetime.now(dt.UTC).isoformat(timespec="seconds")})
    when = flight.when
    # Other keys kept with the flight's details (maneuvering choices, reasons for points
    # left out) stay; only the sheet's own keys change.
    sheet_keys = (programme.SHEET_NAME, programme.SHEET_TEXT, programme.FLOWN_AT, REPLACED)
    others = {k: v for k, v in (record.loading or {}).items() if k not in sheet_keys}
    details: dict[str, Any] = {
        "loading": {**others, **(loading or {}), REPLACED: kept},
        "date": None if when.when is None else when.when.date(),
        "incidence_label": sheet.stab_setting,
        "incidence_deg": sheet.stab_incidence_deg,
        "config": None if sheet.flap_deg is None else f"flaps {sheet.flap_deg:g}",
        # a label or notes the user typed stay; those that came from the old sheet follow it
        "label": sheet.label or None if _from_sheet(record.label, old, "label") else KEEP,
        "notes": sheet.notes or None if _from_sheet(record.notes, old, "notes") else KEEP,
    }
    store.update_flight(record.id, **details, points=flight.points,
                        order=programme.in_date_order)
    records = store.flights(record.aircraft_id)
    number = programme.flight_number(records, record.id)
    text = (f"{name}: already stored as history flight id {record.id}; its loading sheet is "
            f"replaced by '{sheet.source}': {listed}. The earlier sheet is kept in the "
            "flight's record; the history's analyses, trend and plan use the new one from now "
            f"on (flight {number} of {len(records)} by date)")
    return text, number, len(records)


def _from_sheet(stored: str | None, old: LoadingSheet | None, attr: str) -> bool:
    """Whether a stored label or notes is the old sheet's own (or empty), not typed apart."""
    return not stored or (old is not None and stored == (getattr(old, attr) or None))
