"""The history's flight numbers follow the date, and renumbering is one locked transaction.

Runs on both engines (SQLite file and the PostgreSQL server of ``tests/pg_server.py``).
The flights are tiny synthetic point tables: only their dates and bytes matter here.
"""

import datetime as dt
import random
import threading

import pandas as pd
import pytest

from trimlog.errors import StoreError
from trimlog.history import programme
from trimlog.history.store import open_store

FIRST_DAY = dt.date(2026, 4, 1)


def _points() -> pd.DataFrame:
    return pd.DataFrame({"point": [1, 2], "ias_kt": [70.0, 90.0]})


def _import(store, aircraft_id: int, day: int):
    return store.import_flight(
        aircraft_id, f"log of day {day}".encode(), f"day{day:02d}.csv", _points(),
        date=FIRST_DAY + dt.timedelta(days=day), order=programme.in_date_order)


def _check_numbering(records) -> None:
    """Numbers 1..n without a gap or a repeat, and the dates never go backwards."""
    assert [r.flight_order for r in records] == list(range(1, len(records) + 1))
    dates = [r.date for r in records]
    assert dates == sorted(dates), [r.filename for r in records]


def test_an_import_is_numbered_by_date_in_its_own_transaction(location):
    with open_store(location) as s:
        a = s.upsert_aircraft("Demo two-seater", "[aircraft]\n")
        late = _import(s, a.id, 20)
        early = _import(s, a.id, 3)
        assert (late.number, late.of) == (1, 1)
        assert (early.number, early.of) == (1, 2)
        records = s.flights(a.id)
        assert [r.filename for r in records] == ["day03.csv", "day20.csv"]
        _check_numbering(records)
        # a changed date renumbers in the same transaction as the change
        s.update_flight(early.flight_id, date=FIRST_DAY + dt.timedelta(days=30),
                        order=programme.in_date_order)
        assert [r.filename for r in s.flights(a.id)] == ["day20.csv", "day03.csv"]


def test_an_order_that_loses_a_flight_is_refused_and_nothing_changes(location):
    with open_store(location) as s:
        a = s.upsert_aircraft("Demo two-seater", "[aircraft]\n")
        for day in (5, 1, 9):
            _import(s, a.id, day)
        before = [(r.id, r.flight_order) for r in s.flights(a.id)]
        with pytest.raises(StoreError, match="each of its flights once"):
            s.renumber(a.id, lambda records: list(reversed(records))[:-1])
        assert [(r.id, r.flight_order) for r in s.flights(a.id)] == before


def test_concurrent_importers_of_dated_flights_never_duplicate_or_shuffle_numbers(location):
    # Four people import ten dated flights each, in a shuffled order, at the same moment,
    # while a fifth keeps reading the list. Every list read, at any moment, must be numbered
    # 1..n in date order (a reader never sees a new flight before its renumbering), and the
    # end state holds all 40 flights numbered by date.
    with open_store(location) as s:
        aircraft_id = s.upsert_aircraft("Demo two-seater", "[aircraft]\n").id
    days = list(range(40))
    random.Random(13).shuffle(days)
    shares = [days[k::4] for k in range(4)]
    start = threading.Barrier(5)
    done = threading.Event()
    errors: list[BaseException] = []
    seen: list[list] = []

    def importer(share):
        try:
            with open_store(location) as s:
                start.wait(timeout=60)
                for day in share:
                    _import(s, aircraft_id, day)
        except BaseException as exc:  # reported below, with the others
            errors.append(exc)

    def reader():
        try:
            with open_store(location) as s:
                start.wait(timeout=60)
                while not done.is_set():
                    seen.append(s.flights(aircraft_id))
        except BaseException as exc:
            errors.append(exc)

    workers = [threading.Thread(target=importer, args=(share,)) for share in shares]
    watcher = threading.Thread(target=reader)
    for t in (*workers, watcher):
        t.start()
    for t in workers:
        t.join(timeout=240)
    done.set()
    watcher.join(timeout=60)
    assert not errors, errors
    assert len(seen) > 1
    for records in seen:
        _check_numbering(records)
    with open_store(location) as s:
        records = s.flights(aircraft_id)
        assert len(records) == 40
        _check_numbering(records)
        assert [r.filename for r in records] == [f"day{d:02d}.csv" for d in range(40)]
        assert s.check() == []
