import csv
import hashlib
import json
import os
import signal
import sqlite3
import subprocess
import sys
import textwrap
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
import sqlalchemy as sa
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trimlog.errors import StoreError, TrimlogError
from trimlog.history import store as store_mod
from trimlog.history.store import KEEP, open_store

PROFILE = '[aircraft]\nname = "Demo two-seater"\nwing_area = "118 ft^2"\n'


def make_points(n: int = 4, flight: str = "F1", seed: int = 0) -> pd.DataFrame:
    """A Points table shaped like the points contract (synthetic values)."""
    rng = np.random.default_rng(seed)
    ias = rng.uniform(60.0, 130.0, n)
    force = rng.normal(0.0, 5.0, n)
    force[0] = np.nan  # a point without force logged
    return pd.DataFrame(
        {
            "flight": [flight] * n,
            "point": np.arange(1, n + 1),
            "ias_kt": ias,
            "pressure_alt_ft": rng.uniform(3000.0, 6000.0, n),
            "oat_c": rng.uniform(-5.0, 15.0, n),
            "elevator_deg": -rng.uniform(0.5, 6.0, n),
            "elevator_deg_std": rng.uniform(0.05, 0.2, n),
            "stick_force_lbf": force,
            "t_start_s": np.arange(n) * 60.0,
            "t_end_s": np.arange(n) * 60.0 + 20.0,
            "duration_s": np.full(n, 20.0),
            "n_samples": np.full(n, 200),
            "vs_fpm": rng.normal(0.0, 50.0, n),
            "flags": ["", "gust;vs"] + [""] * (n - 2),
            "included": [True, False] + [True] * (n - 2),
        }
    )


@pytest.fixture
def db(tmp_path: Path) -> Path:
    """An SQLite file (for the tests of SQLite's own behaviour)."""
    return tmp_path / "history.sqlite"


@pytest.fixture
def store(location):
    """A new empty store, on each engine (``location`` is in conftest.py)."""
    with open_store(location) as s:
        yield s


@pytest.fixture
def aircraft(store):
    return store.upsert_aircraft("Demo two-seater", PROFILE)


def profiles_of(store, aircraft_id: int) -> list[dict]:
    """Every stored profile version of an aircraft, read through the export document."""
    with store.reading():
        doc = store._export_document()
    return next(a["profiles"] for a in doc["aircraft"] if a["id"] == aircraft_id)


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def run_script(code: str, *args: str, **kw) -> subprocess.Popen:
    return subprocess.Popen(
        [sys.executable, "-c", textwrap.dedent(code), *args],
        stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True, **kw,
    )


# -- opening --------------------------------------------------------------------


def test_new_database_is_wal_with_foreign_keys_and_current_schema(db):
    with open_store(db) as store:
        assert store.schema_version == store_mod.SCHEMA_VERSION
        pragma = lambda name: store._conn.exec_driver_sql(f"PRAGMA {name}").scalar_one()  # noqa: E731
        assert pragma("journal_mode") == "wal"
        assert pragma("foreign_keys") == 1
        assert pragma("busy_timeout") == 30000
        assert pragma("application_id") == store_mod.APPLICATION_ID
        store._conn.rollback()


def test_creates_missing_parent_folders(tmp_path):
    path = tmp_path / "a" / "b" / "h.sqlite"
    with open_store(path) as s:
        assert s.path == path
    assert path.is_file()


def test_location_from_environment_then_user_data_dir(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "env" / "h.sqlite"))
    assert store_mod.default_path() == tmp_path / "env" / "h.sqlite"
    with open_store() as s:
        assert s.path == tmp_path / "env" / "h.sqlite"
    monkeypatch.delenv("TRIMLOG_DB")
    monkeypatch.setattr(store_mod.platformdirs, "user_data_dir", lambda app: str(tmp_path / app))
    assert store_mod.default_path() == tmp_path / "trimlog" / "history.sqlite"


def test_argument_wins_over_environment(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "env.sqlite"))
    with open_store(tmp_path / "arg.sqlite") as s:
        assert s.path == tmp_path / "arg.sqlite"
    assert not (tmp_path / "env.sqlite").exists()


def test_store_error_is_a_trimlog_error():
    assert issubclass(StoreError, TrimlogError)


# -- aircraft and profile versions ------------------------------------------------------


def test_profile_text_change_makes_a_new_version_and_keeps_old(store, aircraft):
    assert aircraft.profile_version == 1
    assert store.upsert_aircraft("Demo two-seater", PROFILE).profile_version == 1
    changed = PROFILE + 'mac = "51 in"\n'
    again = store.upsert_aircraft("Demo two-seater", changed)
    assert (again.id, again.profile_version, again.profile_text) == (aircraft.id, 2, changed)
    versions = profiles_of(store, aircraft.id)
    assert [(v["version"], v["text"]) for v in versions] == [(1, PROFILE), (2, changed)]
    assert versions[0]["sha256"] == hashlib.sha256(PROFILE.encode()).hexdigest()
    assert store.find_aircraft("Demo two-seater") == again
    assert store.find_aircraft("Nobody") is None
    assert [a.name for a in store.aircraft_list()] == ["Demo two-seater"]


def test_flight_remembers_profile_version_in_force(store, aircraft):
    first = store.import_flight(aircraft.id, b"one", "one.csv", make_points())
    store.upsert_aircraft(aircraft.name, PROFILE + "# edited\n")
    second = store.import_flight(aircraft.id, b"two", "two.csv", make_points())
    assert store.flight(first.flight_id).profile_version == 1
    assert store.flight(second.flight_id).profile_version == 2


def test_bad_aircraft_arguments(store):
    with pytest.raises(StoreError, match="aircraft name"):
        store.upsert_aircraft("  ", PROFILE)
    with pytest.raises(StoreError, match="no aircraft with id 99"):
        store.get_aircraft(99)


# -- import ---------------------------------------------------------------------------


def test_import_keeps_bytes_details_and_points(store, aircraft):
    pts = make_points(5)
    raw = b"time_s,ias_kt\r\n0,80\r\n\x00\xff binary tail"
    out = store.import_flight(
        aircraft.id, raw, "../../etc/log 1.csv", pts, label="CG 30 %", date="2026-05-02",
        notes="smooth air", loading={"pilot_lb": 180.0, "items": [{"arm_in": 85.5}]},
        incidence_label="shim 0", incidence_deg=-1.0, config="flaps 0",
    )
    assert out.created and out.flight_id == 1
    assert "stored as flight 1" in out.message and "5 points" in out.message
    assert store.raw_bytes(out.flight_id) == raw
    (f,) = store.flights(aircraft.id)
    assert f.sha256 == hashlib.sha256(raw).hexdigest()
    assert f.filename == "../../etc/log 1.csv" and f.size_bytes == len(raw)
    assert f.date.isoformat() == "2026-05-02" and f.label == "CG 30 %"
    assert f.loading == {"pilot_lb": 180.0, "items": [{"arm_in": 85.5}]}
    assert (f.incidence_label, f.incidence_deg, f.config) == ("shim 0", -1.0, "flaps 0")
    assert (f.flight_order, f.n_points, f.n_included) == (1, 5, 4)
    pd.testing.assert_frame_equal(store.flight_points(out.flight_id), pts)


def test_points_round_trip_keeps_dtypes(store, aircraft):
    pts = make_points(3)
    pts["count32"] = np.array([1, 2, 3], dtype="int32")
    pts["maybe"] = pd.array([1, None, 3], dtype="Int64")
    pts["note"] = ["a", None, "=1+1"]
    store.import_flight(aircraft.id, b"x", "x.csv", pts)
    back = store.flight_points(1)
    assert back["included"].dtype == bool and back["point"].dtype == np.int64
    assert back["ias_kt"].dtype == np.float64
    assert pd.api.types.is_string_dtype(back["flags"])
    assert pd.api.types.is_string_dtype(back["flight"])
    pd.testing.assert_frame_equal(back, pts)


@settings(max_examples=40, deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(
    floats=st.lists(st.floats(allow_infinity=False, width=64), min_size=1, max_size=6),
    text=st.text(st.characters(blacklist_characters="\x00"), max_size=8),
    data=st.data(),
)
def test_points_round_trip_any_values(store, aircraft, floats, text, data):
    n = len(floats)
    pts = pd.DataFrame({
        "point": data.draw(st.permutations(range(1, n + 1))),
        "x_deg": floats,
        "k": data.draw(st.lists(st.integers(-2**63, 2**63 - 1), min_size=n, max_size=n)),
        "flags": data.draw(st.lists(st.one_of(st.none(), st.text(max_size=5)),
                                    min_size=n, max_size=n)),
        "included": data.draw(st.lists(st.booleans(), min_size=n, max_size=n)),
    })
    out = store.import_flight(aircraft.id, f"{text!r}{pts.to_dict()!r}".encode("utf-8", "replace"),
                              text, pts)
    back = store.flight_points(out.flight_id)
    expected = pts.sort_values("point", ignore_index=True)
    pd.testing.assert_frame_equal(back, expected)
    assert store.flight(out.flight_id).filename == text


def test_nul_in_text_is_refused_on_both_engines(store, aircraft):
    # Inside points it is JSON-escaped and kept; as a name, label or note it is refused.
    with pytest.raises(StoreError, match=r"label: .* holds a NUL character"):
        store.import_flight(aircraft.id, b"x", "x.csv", make_points(), label="a\x00b")
    with pytest.raises(StoreError, match="file name: .* holds a NUL"):
        store.import_flight(aircraft.id, b"x", "x\x00.csv", make_points())
    pts = make_points()
    pts["flags"] = ["nul\x00inside"] + [""] * 3
    out = store.import_flight(aircraft.id, b"x", "x.csv", pts)
    assert store.flight_points(out.flight_id)["flags"][0] == "nul\x00inside"


def test_undecodable_text_is_refused_not_a_traceback(store, aircraft):
    with pytest.raises(StoreError, match="file name: .* is not valid Unicode"):
        store.import_flight(aircraft.id, b"x", "log\udcff.csv", make_points())


def test_points_sorted_by_number_and_default_included(store, aircraft):
    pts = pd.DataFrame({"point": [3, 1, 2], "ias_kt": [90.0, 70.0, 80.0]})
    store.import_flight(aircraft.id, b"x", "x.csv", pts)
    back = store.flight_points(1)
    assert back["point"].tolist() == [1, 2, 3] and back["ias_kt"].tolist() == [70.0, 80.0, 90.0]
    assert back["included"].tolist() == [True, True, True]


def test_empty_points_table_is_stored(store, aircraft):
    pts = make_points(2).iloc[0:0]
    out = store.import_flight(aircraft.id, b"x", "x.csv", pts)
    assert store.flight(out.flight_id).n_points == 0
    assert list(store.flight_points(out.flight_id).columns) == list(pts.columns)


def test_reimport_same_bytes_is_one_flight_and_says_so(store, aircraft):
    first = store.import_flight(aircraft.id, b"same bytes", "a.csv", make_points())
    again = store.import_flight(aircraft.id, b"same bytes", "renamed.csv", make_points(2),
                                label="new label")
    assert not again.created and again.flight_id == first.flight_id
    assert "already stored as flight 1" in again.message and "nothing changed" in again.message
    assert "label" in again.message and "not applied" in again.message
    (f,) = store.flights(aircraft.id)
    assert (f.filename, f.label, f.n_points) == ("a.csv", None, 4)
    other = store.upsert_aircraft("Other", PROFILE)
    assert store.import_flight(other.id, b"same bytes", "a.csv", make_points()).created


@pytest.mark.parametrize(
    ("points", "match"),
    [
        (pd.DataFrame({"ias_kt": [1.0]}), "no 'point' column"),
        (pd.DataFrame({"point": [1, 1]}), "unique numbers from 1"),
        (pd.DataFrame({"point": [0]}), "unique numbers from 1"),
        (pd.DataFrame({"point": [1.0]}), "whole numbers"),
        (pd.DataFrame({"point": [1], "included": ["yes"]}), "'included' must be True/False"),
        (pd.DataFrame({"point": [1], "ias_kt": [np.inf]}), "column 'ias_kt': holds an infinite"),
        (pd.DataFrame({"point": [1], "t": pd.to_datetime(["2026-01-01"])}), "column 't': dtype"),
        (pd.DataFrame({"point": [1], "x": pd.Series([{"a": 1}], dtype=object)}), "column 'x'"),
        (pd.DataFrame({"point": [1], "flight_id": [3]}), "reserved"),
        ({"point": [1]}, "expected a points DataFrame"),
    ],
)
def test_unstorable_points_are_refused_and_nothing_stored(store, aircraft, points, match):
    with pytest.raises(StoreError, match=match):
        store.import_flight(aircraft.id, b"x", "log.csv", points)
    assert store.flights(aircraft.id) == []


@pytest.mark.parametrize(
    ("kwargs", "match"),
    [
        ({"date": "2026-13-01"}, "log.csv, date: expected a date"),
        ({"date": pd.Timestamp("2026-01-01 10:00").to_pydatetime()}, "date and time"),
        ({"incidence_deg": float("nan")}, "incidence_deg: expected a finite"),
        ({"incidence_deg": "minus one"}, "incidence_deg"),
        ({"loading": {"fuel_gal": float("nan")}}, r"loading\.fuel_gal: nan cannot be stored"),
        ({"loading": {"when": object()}}, r"loading\.when: a object cannot be stored"),
        ({"label": 5}, "label: expected text"),
    ],
)
def test_bad_flight_details_are_refused(store, aircraft, kwargs, match):
    with pytest.raises(StoreError, match=match):
        store.import_flight(aircraft.id, b"x", "log.csv", make_points(), **kwargs)


def test_bad_raw_and_unknown_aircraft(store, aircraft):
    with pytest.raises(StoreError, match="empty"):
        store.import_flight(aircraft.id, b"", "log.csv", make_points())
    with pytest.raises(StoreError, match="as bytes"):
        store.import_flight(aircraft.id, "text", "log.csv", make_points())
    with pytest.raises(StoreError, match="no aircraft with id 42"):
        store.import_flight(42, b"x", "log.csv", make_points())


# -- editing ------------------------------------------------------------------------


def test_point_choice_is_kept(store, aircraft):
    fid = store.import_flight(aircraft.id, b"x", "x.csv", make_points()).flight_id
    store.set_point_included(fid, 1, False)
    store.set_point_included(fid, 2, True)
    assert store.flight_points(fid)["included"].tolist() == [False, True, True, True]
    assert store.flight(fid).n_included == 3
    with pytest.raises(StoreError, match="has no point 9"):
        store.set_point_included(fid, 9, True)
    with pytest.raises(StoreError, match="True or False"):
        store.set_point_included(fid, 1, 1)


def test_update_flight_changes_only_what_is_given(store, aircraft):
    fid = store.import_flight(aircraft.id, b"x", "x.csv", make_points(), label="a",
                              notes="keep me").flight_id
    f = store.update_flight(fid, label="b", incidence_deg=0.5, date=None)
    assert (f.label, f.notes, f.incidence_deg) == ("b", "keep me", 0.5)
    f = store.update_flight(fid, notes=None, loading={"pilot_lb": 170})
    assert (f.label, f.notes, f.loading) == ("b", None, {"pilot_lb": 170})
    assert store.update_flight(fid, label=KEEP) == f
    with pytest.raises(StoreError, match="no flight with id 77"):
        store.update_flight(77, label="x")
    with pytest.raises(StoreError, match="flight_order"):
        store.update_flight(fid, flight_order=1.5)


def test_flights_listed_in_flight_order(store, aircraft):
    ids = [store.import_flight(aircraft.id, bytes([i + 1]), f"{i}.csv", make_points()).flight_id
           for i in range(3)]
    assert [f.flight_order for f in store.flights(aircraft.id)] == [1, 2, 3]
    store.update_flight(ids[0], flight_order=10)
    assert [f.id for f in store.flights(aircraft.id)] == [ids[1], ids[2], ids[0]]


def test_all_points_in_flight_order_with_flight_id(store, aircraft):
    a = store.import_flight(aircraft.id, b"a", "a.csv", make_points(3, "A")).flight_id
    b_pts = make_points(2, "B").drop(columns=["stick_force_lbf"]).assign(extra=[1, 2])
    b = store.import_flight(aircraft.id, b"b", "b.csv", b_pts).flight_id
    store.update_flight(a, flight_order=5)
    allp = store.all_points(aircraft.id)
    assert list(allp.columns[:3]) == ["flight_id", "flight", "point"]
    assert allp["flight_id"].tolist() == [b, b, a, a, a]
    assert allp["flight"].tolist() == ["B", "B", "A", "A", "A"]
    assert allp["included"].dtype == bool and allp["n_samples"].dtype == np.int64
    # columns a flight lacks are missing there; whole numbers become floats
    assert allp["stick_force_lbf"].iloc[:2].isna().all()
    assert allp["extra"].dtype == np.float64 and allp["extra"].tolist()[:2] == [1.0, 2.0]
    assert allp["extra"].iloc[2:].isna().all()
    assert store.all_points(999).empty


# -- faults ---------------------------------------------------------------------------


STALLING_IMPORT = """
    import sys, time
    import pandas as pd
    from trimlog.history.store import open_store

    class Stall:
        '''Connection stand-in that stops for good inside the import transaction.'''
        def __init__(self, conn):
            self._conn = conn
        def __getattr__(self, name):
            return getattr(self._conn, name)
        def execute(self, statement, *args):
            result = self._conn.execute(statement, *args)
            if str(statement).startswith("INSERT INTO points"):
                print("inside the transaction", flush=True)
                time.sleep(120)
            return result

    store = open_store(sys.argv[1])
    aircraft = store.upsert_aircraft("Demo two-seater", "x")
    store._conn = Stall(store._conn)
    store.import_flight(aircraft.id, b"big log " * 200_000, "killed.csv",
                        pd.DataFrame({"point": [1, 2, 3], "ias_kt": [70.0, 80.0, 90.0]}))
"""


def test_import_killed_mid_transaction_leaves_database_as_before(db):
    with open_store(db) as s:
        a = s.upsert_aircraft("Demo two-seater", "x")
        s.import_flight(a.id, b"earlier flight", "earlier.csv", make_points())
    proc = run_script(STALLING_IMPORT, str(db))
    try:
        line = proc.stdout.readline()
        assert line.strip() == "inside the transaction", proc.stderr.read()
        os.kill(proc.pid, signal.SIGKILL)
        assert proc.wait(timeout=30) == -signal.SIGKILL
    finally:
        if proc.poll() is None:
            proc.kill()
        proc.stdout.close()
        proc.stderr.close()
    with sqlite3.connect(db) as raw:
        assert raw.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
        assert raw.execute("SELECT COUNT(*) FROM raw_logs").fetchone()[0] == 1
        assert raw.execute("SELECT COUNT(*) FROM points").fetchone()[0] == 4
    with open_store(db) as s:
        assert s.check() == []
        assert [f.filename for f in s.flights(a.id)] == ["earlier.csv"]
        out = s.import_flight(a.id, b"big log " * 200_000, "killed.csv",
                              pd.DataFrame({"point": [1, 2, 3], "ias_kt": [70.0, 80.0, 90.0]}))
        assert out.created
        assert [f.n_points for f in s.flights(a.id)] == [4, 3]


CONCURRENT_IMPORTER = """
    import sys, time
    from pathlib import Path
    import pandas as pd
    from trimlog.history.store import open_store

    db, tag, n = sys.argv[1], sys.argv[2], int(sys.argv[3])
    ready = Path(db).parent
    with open_store(db) as store:
        aircraft = store.upsert_aircraft("Demo two-seater", "x")
        (ready / f"ready-{tag}").touch()
        while len(list(ready.glob("ready-*"))) < 2:
            time.sleep(0.01)
        for i in range(n):
            points = pd.DataFrame({"flight": [f"{tag}{i}"] * 3, "point": [1, 2, 3],
                                   "ias_kt": [70.0, 80.0, 90.0]})
            out = store.import_flight(aircraft.id, f"{tag} flight {i}".encode() * 100,
                                      f"{tag}-{i}.csv", points, label=f"{tag}{i}")
            assert out.created, out.message
"""


def test_two_concurrent_importers_lose_nothing(tmp_path):
    db = tmp_path / "shared.sqlite"
    procs = [run_script(CONCURRENT_IMPORTER, str(db), tag, "20") for tag in ("A", "B")]
    for p in procs:
        out, err = p.communicate(timeout=120)
        assert p.returncode == 0, err
    with open_store(db) as s:
        (a,) = s.aircraft_list()
        flights = s.flights(a.id)
        assert a.profile_version == 1
        assert sorted(f.label for f in flights) == sorted(
            f"{t}{i}" for t in "AB" for i in range(20))
        assert sorted(f.flight_order for f in flights) == list(range(1, 41))
        assert len(s.all_points(a.id)) == 120
        assert s.check() == []


def test_not_sqlite_file_is_refused_and_untouched(tmp_path):
    path = tmp_path / "notes.sqlite"
    path.write_bytes(b"these are my notes, not a database\n" * 10)
    before = sha(path)
    with pytest.raises(StoreError, match=r"notes\.sqlite: not an SQLite database.*untouched"):
        open_store(path)
    assert sha(path) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["notes.sqlite"]


def test_damaged_sqlite_file_is_refused_and_untouched(tmp_path):
    path = tmp_path / "damaged.sqlite"
    with open_store(path) as s:
        s.upsert_aircraft("Demo two-seater", PROFILE)
    data = bytearray(path.read_bytes())
    data[100:] = b"\xa5" * (len(data) - 100)  # keep the header, garble every page
    path.write_bytes(bytes(data))
    for side in ("-wal", "-shm"):
        Path(f"{path}{side}").unlink(missing_ok=True)
    before = sha(path)
    with pytest.raises(StoreError, match=r"damaged\.sqlite: damaged or not an SQLite database"):
        open_store(path)
    assert sha(path) == before


def test_short_file_is_refused(tmp_path):
    path = tmp_path / "short.sqlite"
    path.write_bytes(b"SQLite format 3\x00abc")
    with pytest.raises(StoreError, match="not an SQLite database"):
        open_store(path)


def test_foreign_sqlite_database_is_refused_and_untouched(tmp_path):
    path = tmp_path / "other.db"
    with sqlite3.connect(path) as other:
        other.execute("CREATE TABLE customers (id INTEGER PRIMARY KEY, name TEXT)")
        other.execute("INSERT INTO customers (name) VALUES ('x')")
    other.close()
    before = sha(path)
    with pytest.raises(StoreError, match=r"other\.db: an SQLite database of another program "
                                         r"\(tables: customers.*untouched"):
        open_store(path)
    assert sha(path) == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["other.db"]


def test_foreign_empty_sqlite_with_application_id_is_refused(tmp_path):
    path = tmp_path / "tagged.db"
    with sqlite3.connect(path) as other:
        other.execute("PRAGMA application_id = 1234")
    other.close()
    before = sha(path)
    with pytest.raises(StoreError, match="application id 0x4d2"):
        open_store(path)
    assert sha(path) == before


def test_empty_file_becomes_a_new_database(tmp_path):
    path = tmp_path / "empty.sqlite"
    path.touch()
    with open_store(path) as s:
        assert s.schema_version == store_mod.SCHEMA_VERSION


def test_unwritable_location_gives_clear_error(tmp_path):
    # A file where a folder should be blocks creation even for root, unlike chmod.
    blocker = tmp_path / "not-a-folder"
    blocker.write_text("x")
    with pytest.raises(StoreError, match=r"cannot create the folder .*not-a-folder.*TRIMLOG_DB"):
        open_store(blocker / "sub" / "history.sqlite")
    with pytest.raises(StoreError, match="is a folder"):
        open_store(tmp_path)
    assert blocker.read_text() == "x"


def test_read_only_database_gives_clear_error(tmp_path, monkeypatch):
    # Opening read-only through SQLite works as root too, unlike chmod.
    path = tmp_path / "h.sqlite"
    with open_store(path) as s:
        s.upsert_aircraft("Demo two-seater", PROFILE)
    before = sha(path)
    real_connect = sqlite3.connect

    def read_only(db, **kw):
        return real_connect(f"file:{db}?mode=ro", uri=True, **kw)

    monkeypatch.setattr(sqlite3, "connect", read_only)
    monkeypatch.setattr(sqlite3.dbapi2, "connect", read_only)  # what SQLAlchemy calls
    with pytest.raises(StoreError, match=r"h\.sqlite: the history database cannot be written "
                                         r"\(attempt to write a readonly database.*TRIMLOG_DB"):
        open_store(path)
    with pytest.raises(StoreError, match=r"new\.sqlite: cannot open the history database"):
        open_store(tmp_path / "new.sqlite")
    monkeypatch.undo()
    assert sha(path) == before


@pytest.mark.skipif(os.name != "posix" or os.geteuid() == 0,
                    reason="root ignores permission bits")
def test_read_only_folder_and_file_give_clear_error(tmp_path):
    ro = tmp_path / "ro"
    ro.mkdir()
    existing = ro / "old.sqlite"
    with open_store(existing) as s:
        s.upsert_aircraft("Demo two-seater", PROFILE)
    for side in ("-wal", "-shm"):
        Path(f"{existing}{side}").unlink(missing_ok=True)
    existing.chmod(0o444)
    ro.chmod(0o555)
    try:
        with pytest.raises(StoreError, match="new.sqlite"):
            open_store(ro / "new.sqlite")
        with pytest.raises(StoreError, match="old.sqlite.*(read-only|cannot)"):
            open_store(existing)
    finally:
        ro.chmod(0o755)


# -- migrations ---------------------------------------------------------------------


def older_database(location, version: int):
    """A database of schema ``version`` as an earlier trimlog left it, with one flight."""
    real = store_mod._MIGRATIONS
    store_mod._MIGRATIONS = real[:version]
    store_mod.SCHEMA_VERSION = version
    try:
        with open_store(location) as old:
            a = old.upsert_aircraft("Demo two-seater", PROFILE)
            old.import_flight(a.id, b"log", "log.csv", make_points())
            assert old.schema_version == version
    finally:
        store_mod._MIGRATIONS = real
        store_mod.SCHEMA_VERSION = len(real)
    return a


@pytest.mark.parametrize("version", [1, 2])
def test_older_schema_is_migrated_keeping_data(location, version):
    a = older_database(location, version)
    with open_store(location) as s:
        assert s.schema_version == store_mod.SCHEMA_VERSION == 3
        assert "analyses" not in sa.inspect(s._conn).get_table_names()
        assert [f.filename for f in s.flights(a.id)] == ["log.csv"]
        pd.testing.assert_frame_equal(s.flight_points(1), make_points())
        assert s.check() == []


def test_newer_schema_is_refused(db):
    with open_store(db):
        pass
    with sqlite3.connect(db) as conn:
        conn.execute(f"PRAGMA user_version = {store_mod.SCHEMA_VERSION + 1}")
    conn.close()
    before = sha(db)
    with pytest.raises(StoreError, match="newer trimlog .*upgrade trimlog"):
        open_store(db)
    assert sha(db) == before


def test_trimlog_file_missing_tables_is_damaged(db):
    with open_store(db) as s:
        s._conn.exec_driver_sql("DROP TABLE points")
    with pytest.raises(StoreError, match=r"damaged trimlog database.*\['points'\]"):
        open_store(db)


# -- export, restore, backup ------------------------------------------------------------


def fill(store) -> None:
    a = store.upsert_aircraft("Demo two-seater", PROFILE)
    store.upsert_aircraft("Demo two-seater", PROFILE + "# v2\n")
    b = store.upsert_aircraft("Second demo", "[aircraft]\n")
    for i in range(3):
        store.import_flight(a.id, f"log {i}".encode() + bytes(range(256)), f"f{i}.csv",
                            make_points(4, f"F{i}", seed=i), label=f"flight {i}",
                            date=f"2026-05-0{i + 1}", loading={"pilot_lb": 170.0 + i},
                            incidence_label="shim 0", incidence_deg=-1.0)
    store.import_flight(b.id, b"other", "o.csv", make_points(2, "O"), notes="=SUM(A1:A9)")
    store.set_point_included(2, 3, False)


def snapshot(store) -> dict:
    out = {"aircraft": store.aircraft_list()}
    for a in out["aircraft"]:
        out[a.name] = {
            "profiles": profiles_of(store, a.id),
            "flights": store.flights(a.id),
            "raw": [store.raw_bytes(f.id) for f in store.flights(a.id)],
            "points": [store.flight_points(f.id) for f in store.flights(a.id)],
        }
    return out


def assert_same(x: dict, y: dict) -> None:
    assert x.keys() == y.keys()
    for key in x:
        if key == "aircraft":
            assert x[key] == y[key]
            continue
        for part in ("profiles", "flights", "raw"):
            assert x[key][part] == y[key][part]
        for p, q in zip(x[key]["points"], y[key]["points"], strict=True):
            pd.testing.assert_frame_equal(p, q)


def test_export_then_restore_reproduces_everything(store, tmp_path, new_location):
    fill(store)
    files = store.export(tmp_path / "export")
    assert sorted(f.name for f in files) == sorted(
        ["trimlog-history.json", "aircraft.csv", "flights.csv", "points.csv", "analyses.csv"])
    with open_store(new_location()) as fresh:
        summary = fresh.import_export(tmp_path / "export")
        assert summary == store_mod.RestoreSummary(2, 4, 14, 0)
        assert_same(snapshot(store), snapshot(fresh))
        assert fresh.check() == []
        fresh.export(tmp_path / "again")
    first = json.loads((tmp_path / "export" / "trimlog-history.json").read_text())
    second = json.loads((tmp_path / "again" / "trimlog-history.json").read_text())
    first.pop("exported_at"), second.pop("exported_at")
    assert first == second


def test_restore_refuses_non_empty_database_and_damaged_export(store, tmp_path, new_location):
    fill(store)
    store.export(tmp_path / "export")
    with pytest.raises(StoreError, match="already holds aircraft"):
        store.import_export(tmp_path / "export")
    doc_path = tmp_path / "export" / "trimlog-history.json"
    doc = json.loads(doc_path.read_text())
    doc["flights"][1]["raw_base64"] = "AAAA"
    doc_path.write_text(json.dumps(doc))
    with open_store(new_location()) as fresh:
        with pytest.raises(StoreError, match=r"flight 2\)?: the log bytes do not match"):
            fresh.import_export(tmp_path / "export")
        assert fresh.aircraft_list() == []
        del doc["flights"][0]["sha256"]
        doc_path.write_text(json.dumps(doc))
        with pytest.raises(StoreError, match="'sha256' is missing"):
            fresh.import_export(tmp_path / "export")
        doc_path.write_text("{}")
        with pytest.raises(StoreError, match="not a trimlog history export"):
            fresh.import_export(tmp_path / "export")


def test_export_never_overwrites(store, tmp_path):
    fill(store)
    store.export(tmp_path / "export")
    with pytest.raises(StoreError, match="already holds"):
        store.export(tmp_path / "export")


def test_csv_export_neutralises_formulas_but_keeps_numbers(store, tmp_path):
    a = store.upsert_aircraft("=evil()", PROFILE)
    pts = make_points(3)
    pts["flags"] = ["=HYPERLINK(\"http://x\")", "+1", "@SUM(1)"]
    pts["note"] = ["-minus text", "\tTAB", "plain"]
    pts["elevator_deg"] = [-1.5, -2.0, 3.0]
    store.import_flight(a.id, b"x", "@file.csv", pts, label="-2", notes="+notes")
    store.export(tmp_path / "out")
    rows = list(csv.DictReader((tmp_path / "out" / "points.csv").open(encoding="utf-8")))
    assert [r["flags"] for r in rows] == ["'=HYPERLINK(\"http://x\")", "'+1", "'@SUM(1)"]
    assert [r["note"] for r in rows] == ["'-minus text", "'\tTAB", "plain"]
    assert [r["elevator_deg"] for r in rows] == ["-1.5", "-2.0", "3.0"]
    assert rows[0]["aircraft"] == "'=evil()"
    (flight,) = csv.DictReader((tmp_path / "out" / "flights.csv").open(encoding="utf-8"))
    assert (flight["filename"], flight["label"]) == ("'@file.csv", "'-2")
    assert flight["notes"] == "'+notes"
    # the lossless JSON keeps the text exactly
    doc = json.loads((tmp_path / "out" / "trimlog-history.json").read_text(encoding="utf-8"))
    assert doc["flights"][0]["label"] == "-2" and doc["aircraft"][0]["name"] == "=evil()"


def test_backup_is_a_valid_complete_copy(store, tmp_path):
    fill(store)
    dest = store.backup(tmp_path / "backups" / "copy.sqlite")
    with sqlite3.connect(dest) as raw:
        assert raw.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    raw.close()
    with open_store(dest) as copy:
        assert_same(snapshot(store), snapshot(copy))
    before = sha(dest)
    with pytest.raises(StoreError, match="never overwrites"):
        store.backup(dest)
    assert sha(dest) == before
