"""The maneuvering points kept at import give the trend the numbers of reading every log again.

The trend and plan of a history used to read every stored log again to find its
maneuvering points; they are now kept with each flight at import
(``maneuver_choices.FOUND_KEY``) and found again from the log only where none are
kept under the present terms.  Every check here compares the two paths: the kept
copy must be a shortcut to the same numbers, exactly (regression of the path
itself; no published value is involved).  Logs: the invented demo programme of
sample_logs/ and synthetic point tables with wind-up turns (invented numbers).
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from tests.history.test_maneuver_plan import CGS, DEMO_LOGS, PROFILE, _point_table
from trimlog.history import maneuver_choices as choices
from trimlog.history import service as history
from trimlog.history.store import open_store
from trimlog.input.profile import parse_profile


def _strip_kept(store) -> None:
    """Make the store look like one from before the points were kept."""
    for aircraft in store.aircraft_list():
        for r in store.flights(aircraft.id):
            loading = {k: v for k, v in (r.loading or {}).items() if k != choices.FOUND_KEY}
            store.update_flight(r.id, loading=loading or None)


@pytest.fixture(scope="module")
def programme(tmp_path_factory):
    """A history of the demo's time-series logs and synthetic tables with turns."""
    directory = tmp_path_factory.mktemp("kept")
    rng = np.random.default_rng(5)
    logs = list(DEMO_LOGS[:3])  # a point table and two time-series logs with turns
    for k, h in enumerate(CGS[:2], 1):
        path = directory / f"turns{k}.csv"
        path.write_text(_point_table(h, rng))
        logs.append(path)
    db = directory / "history.sqlite"
    with open_store(db) as store:
        for log in logs:
            history.import_log(store, log, profile_text=PROFILE.read_text(),
                               profile_source="profile")
    return db


def test_import_keeps_the_points_found_in_each_log(programme):
    with open_store(programme) as store:
        aircraft = store.aircraft_list()[0]
        profile = parse_profile(aircraft.profile_text)
        records = store.flights(aircraft.id)
        names = history._flight_names(records)
        with_turns = 0
        for r in records:
            kept = choices.found_points(r, profile, names[r.id])
            assert kept is not None, r.filename
            again = history._found_from_log(store, r, profile, names[r.id])
            pd.testing.assert_frame_equal(kept, again)
            with_turns += bool(len(kept))
    assert with_turns >= 3  # the synthetic tables' wind-up turns at least


def test_trend_from_kept_points_equals_trend_from_every_log(programme, tmp_path):
    copy = tmp_path / "copy.sqlite"
    copy.write_bytes(Path(programme).read_bytes())
    with open_store(programme) as store:
        kept = history.trend(store, min_margin_pct_mac=5.0).to_dict()
    assert any(step["maneuver_point"] for step in kept["trend"])
    with open_store(copy) as store:
        _strip_kept(store)
        profile = parse_profile(store.aircraft_list()[0].profile_text)
        names = history._flight_names(store.flights(1))
        assert not any(choices.found_kept(r, profile, names[r.id]) for r in store.flights(1))
        # every log read again: the same trend, plan and maneuver points, exactly
        assert history.trend(store, min_margin_pct_mac=5.0).to_dict() == kept
        # the one-time catch-up keeps them for every flight, and only once
        assert history.keep_found_points(store) == len(store.flights(1))
        assert history.keep_found_points(store) == 0
        assert all(choices.found_kept(r, profile, names[r.id]) for r in store.flights(1))


def test_kept_points_are_not_used_under_other_terms(programme):
    with open_store(programme) as store:
        aircraft = store.aircraft_list()[0]
        profile = parse_profile(aircraft.profile_text)
        r = store.flights(aircraft.id)[0]
        name = history._flight_names([r])[r.id]
        assert choices.found_kept(r, profile, name)
        # a flight renamed to keep names unique; other sign flips; other logger columns
        assert choices.found_points(r, profile, name + "#1") is None
        flipped = replace(profile, inverted_columns=(*profile.inverted_columns, "nz_g"))
        assert choices.found_points(r, flipped, name) is None
        mapped = replace(profile, column_map={**profile.column_map, "NZ": "nz_g"})
        assert choices.found_points(r, mapped, name) is None


def test_a_damaged_kept_record_falls_back_to_the_log(programme, tmp_path):
    copy = tmp_path / "damaged.sqlite"
    copy.write_bytes(Path(programme).read_bytes())
    with open_store(programme) as store:
        expected = history._maneuvering_points(store, history._load(store, None))
    with open_store(copy) as store:
        for r in store.flights(1):
            record = dict(r.loading[choices.FOUND_KEY])
            record["rows"] = [["not", "a", "row", "at all"]]
            store.set_flight_detail(r.id, choices.FOUND_KEY, record)
        r = store.flights(1)[0]
        profile = parse_profile(store.aircraft_list()[0].profile_text)
        assert choices.found_points(r, profile, history._flight_names([r])[r.id]) is None
        again = history._maneuvering_points(store, history._load(store, None))
    assert len(again) == len(expected)
    for a, b in zip(again, expected, strict=True):
        pd.testing.assert_frame_equal(a, b)


def test_set_flight_detail_keeps_the_other_keys(programme, tmp_path):
    copy = tmp_path / "detail.sqlite"
    copy.write_bytes(Path(programme).read_bytes())
    with open_store(copy) as store:
        r = store.flights(1)[-1]
        before = dict(r.loading)
        store.set_flight_detail(r.id, "extra", {"a": 1})
        after = store.flight(r.id).loading
        assert after == {**before, "extra": {"a": 1}}


def test_catch_up_and_detail_on_either_engine(location, tmp_path):
    """The catch-up writes one key per flight and keeps the others (SQLite and PostgreSQL)."""
    rng = np.random.default_rng(11)
    with open_store(location) as store:
        for k, h in enumerate(CGS[:2], 1):
            path = tmp_path / f"either{k}.csv"
            path.write_text(_point_table(h, rng))
            history.import_log(store, path, profile_text=PROFILE.read_text(),
                               profile_source="profile")
        expected = history._maneuvering_points(store, history._load(store, None))
        assert history.keep_found_points(store) == 0  # kept at import already
        _strip_kept(store)
        store.set_flight_detail(store.flights(1)[0].id, "extra", {"a": 1})
        assert history.keep_found_points(store) == 2
        first = store.flights(1)[0]
        assert first.loading["extra"] == {"a": 1} and choices.FOUND_KEY in first.loading
        again = history._maneuvering_points(store, history._load(store, None))
    for a, b in zip(again, expected, strict=True):
        pd.testing.assert_frame_equal(a, b)
