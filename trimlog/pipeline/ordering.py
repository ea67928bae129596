"""Flights in the order they were flown.

A flight's date (and time, when known) comes from its loading sheet's
``date`` (an ISO 8601 date or date-time), else from the log's own clock when
its time column holds ISO 8601 date-time stamps.  Every analysis, the trend
and the history order flights by it, never by file or import order: the
stabilizer setting that a shim corrects from is the latest flight's, and an
ordinary shell glob sorts ``flight10`` before ``flight2``.

Flights without a date keep the order they were given in (command line,
upload or import) and come *before* the dated ones; a warning names them and
says so, because the latest flight, whose stabilizer setting the shim
corrects from, must be a flight whose date is known.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, Protocol, TypeVar

from trimlog.findings import Finding, Severity, finding

__all__ = ["FlightWhen", "ProgrammeInputs", "flight_when", "order_by_date", "undated_finding"]


class _Dated(Protocol):
    flight: str
    source: str
    loading: Any
    log: Any


T = TypeVar("T", bound=_Dated)


@dataclass(frozen=True)
class FlightWhen:
    """When a flight was flown, and where that came from.

    Attributes
    ----------
    when : datetime.datetime or None
        Date and time flown (naive; UTC when the source gave a zone).
    origin : {"loading sheet", "log clock", "none"}
    has_time : bool
        False when only the date is known.
    """

    when: dt.datetime | None
    origin: str
    has_time: bool = False

    def iso(self) -> str | None:
        """ISO 8601 text: a bare date when only the date is known."""
        if self.when is None:
            return None
        return self.when.isoformat() if self.has_time else self.when.date().isoformat()


def as_datetime(value: dt.date | dt.datetime | str | None) -> dt.datetime | None:
    """A date, date-time or ISO 8601 text as a naive date-time (aware ones in UTC).

    Examples
    --------
    >>> as_datetime(dt.date(2026, 5, 16))
    datetime.datetime(2026, 5, 16, 0, 0)
    >>> as_datetime("2026-05-16T09:30:00+02:00")
    datetime.datetime(2026, 5, 16, 7, 30)
    >>> as_datetime(None) is None
    True
    """
    if value is None:
        return None
    if isinstance(value, str):
        text = value.strip().replace("Z", "+00:00")
        try:
            value = dt.datetime.fromisoformat(text)
        except ValueError:
            return None
    if isinstance(value, dt.datetime):
        if value.tzinfo is not None:
            value = value.astimezone(dt.UTC).replace(tzinfo=None)
        return value
    if isinstance(value, dt.date):
        return dt.datetime(value.year, value.month, value.day)
    return None


def flight_when(loading: Any, log: Any) -> FlightWhen:
    """When a flight was flown: its loading sheet's date, else the log's own clock.

    Parameters
    ----------
    loading : LoadingSheet or None
        Its ``flown_at`` (date-time) or ``date`` is used when present.
    log : LogRead or None
        Its ``started_at`` (first ISO 8601 stamp) is used otherwise.

    Returns
    -------
    FlightWhen
    """
    if loading is not None:
        flown_at = as_datetime(getattr(loading, "flown_at", None))
        if flown_at is not None:
            return FlightWhen(flown_at, "loading sheet", True)
        day = as_datetime(getattr(loading, "date", None))
        if day is not None:
            return FlightWhen(day, "loading sheet", False)
    started = as_datetime(getattr(log, "started_at", None)) if log is not None else None
    if started is not None:
        return FlightWhen(started, "log clock", True)
    return FlightWhen(None, "none")


def order_by_date(flights: Sequence[T]) -> tuple[list[T], list[Finding]]:
    """Flights in the order flown, and a finding naming any flight without a date.

    Dated flights are sorted by date and time (a tie keeps the order given);
    undated flights keep the order given and come first.

    Parameters
    ----------
    flights : sequence of FlightData (anything with ``flight``, ``source``,
        ``loading`` and ``log``)

    Returns
    -------
    (list, list of Finding)
        The flights in date order, and the ``pipeline.order.undated`` finding
        (none when every flight has a date).

    Examples
    --------
    >>> from types import SimpleNamespace as NS
    >>> a = NS(flight="10", source="flight10.csv", loading=NS(date=dt.date(2026, 6, 2)), log=None)
    >>> b = NS(flight="2", source="flight2.csv", loading=NS(date=dt.date(2026, 5, 1)), log=None)
    >>> [f.flight for f in order_by_date([a, b])[0]]
    ['2', '10']
    """
    whens = [flight_when(f.loading, f.log) for f in flights]
    undated = [f for f, w in zip(flights, whens, strict=True) if w.when is None]
    dated = sorted(
        ((w.when, i, f) for i, (f, w) in enumerate(zip(flights, whens, strict=True))
         if w.when is not None),
        key=lambda item: (item[0], item[1]),
    )
    ordered = undated + [f for _, _, f in dated]
    found = [undated_finding([f.flight for f in undated], len(dated))] if undated else []
    return ordered, found


def undated_finding(names: Sequence[str], n_dated: int) -> Finding:
    """The finding naming flights without a date and the order used for them."""
    listed = ", ".join(f"'{n}'" for n in dict.fromkeys(names))
    order = (
        "they are taken as flown before the dated flights, in the order given"
        if n_dated else "the flights are taken in the order given"
    )
    return finding("pipeline.order.undated", Severity.CAUTION, flights=listed, order=order,
                   n_undated=len(dict.fromkeys(names)), n_dated=n_dated)


@dataclass(frozen=True)
class ProgrammeInputs:
    """Which flights went into a programme analysis.

    Attributes
    ----------
    database : str
        The history database read.
    aircraft : str
        The aircraft's name in it.
    saved : tuple of (flight, history id)
        Saved flights, in the order flown.
    new : tuple of str
        New flights (not saved yet), by flight name.
    already_saved : tuple of (source, history id)
        New files whose bytes were already saved: used once, as the saved flight.
    """

    database: str
    aircraft: str
    saved: tuple[tuple[str, int], ...]
    new: tuple[str, ...]
    already_saved: tuple[tuple[str, int], ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """The ``programme`` object of the JSON result."""
        return {
            "database": self.database,
            "aircraft": self.aircraft,
            "saved": [{"flight": f, "history_id": i} for f, i in self.saved],
            "new": list(self.new),
            "already_saved": [{"source": s, "history_id": i} for s, i in self.already_saved],
        }

    def describe(self) -> str:
        """One line for the terminal and the report."""
        saved = ", ".join(f"{f} (id {i})" for f, i in self.saved) or "none"
        new = ", ".join(self.new) or "none"
        text = f"programme of '{self.aircraft}': saved flights {saved}; new flights {new}"
        if self.already_saved:
            text += "; already saved, used once: " + ", ".join(
                f"{s} (id {i})" for s, i in self.already_saved)
        return text


def rank_configurations(included: Mapping[str, int]) -> list[str]:
    """Configurations, the headline (primary) one first: most included points, clean first.

    The one rule ``trimlog analyze`` and the history's trend use to choose the
    configuration the headline numbers come from.  A tie in points goes to
    ``"clean"``, then to the configuration met first (the mapping's order).

    Parameters
    ----------
    included : mapping of str to int
        Included points per configuration, in the order first met.

    Returns
    -------
    list of str

    Examples
    --------
    >>> rank_configurations({"flaps 20 deg": 6, "clean": 6, "flaps 10 deg": 9})
    ['flaps 10 deg', 'clean', 'flaps 20 deg']
    """
    return sorted(included, key=lambda config: (-included[config], config != "clean"))

