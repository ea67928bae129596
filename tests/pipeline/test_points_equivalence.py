"""Point detection gives exactly the stored Points tables for a set of varied logs.

The expectations in ``tests/data/points_expectations.json`` (beside, not in,
``tests/data/logs``, whose every file the reader's equivalence test reads) were written
by the point detection as it was before its speed work (commit 703e4a5): for
each case every column of the Points table bit for bit (``float.hex``, as a
digest per column), its dtypes, the flags and times of every point in full,
any warning raised, or the error and its message.  ``points_from_log`` gives
no findings of its own: the flags are its findings.  A change that makes the
detection faster must leave all of them as they are.  After a deliberate change
of what the detection gives, write them again with
``python tests/pipeline/test_points_equivalence.py --write`` and say why in the
commit.

The cases: the sample logs (read with their profile) and the point table, every
readable file of ``tests/data/logs``, synthetic logs of the benchmark generator
(``benchmarks/bench.py``, several lengths, seeds and rates, read back from
CSV) and of ``tests/synthetic_logs.py``, each with one awkwardness (gaps short
and long, dropouts, spikes, NaN, a quantised sensor, duplicated time stamps,
missing stick force, load factor or vertical speed, calibrated airspeed, event
markers, two flights, other settings), the maneuvering points
(:func:`trimlog.pipeline.maneuvers.find_maneuvering_points`, which shares the
summaries) and the steady legs of an airspeed calibration (``steady_signals``).
All of the numbers are synthetic.
"""

from __future__ import annotations

import functools
import sys
import tempfile
import warnings
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trimlog.errors import TrimlogError
from trimlog.input.logs import read_log
from trimlog.pipeline import chain
from trimlog.pipeline.maneuvers import find_maneuvering_points
from trimlog.pipeline.points import PointSettings, find_stabilized_points, points_from_log

ROOT = Path(__file__).resolve().parents[2]
LOGS = ROOT / "tests" / "data" / "logs"
SAMPLES = ROOT / "sample_logs"
EXPECTED = ROOT / "tests" / "data" / "points_expectations.json"
MAP = {"ELEV_POS": "elevator_deg", "FSTK": "stick_force_N"}

sys.path[:0] = [str(ROOT / "benchmarks"), str(ROOT / "tests")]  # also when run as a script
import bench  # noqa: E402  (the generator of the benchmark's logs)
from stored_results import assert_same, bits, digest, load, write_when_asked  # noqa: E402
from synthetic_logs import Hold, make_log, standard_flight  # noqa: E402


@functools.cache
def _profile():
    return chain.load_profile(SAMPLES / "tinkerfinch_tf2.toml")


def _read(raw: bytes, name: str, *, mapped: bool = True):
    p = _profile()
    if mapped:
        return read_log(raw, name=name, column_map=p.column_map, inverted=p.inverted_columns)
    return read_log(raw, name=name)


@functools.cache
def _bench_samples(minutes: float, seed: int, rate_hz: float = 50.0) -> pd.DataFrame:
    """A benchmark log written as CSV and read back as the benchmark reads it."""
    frame = bench.synthetic_log(minutes, rate_hz=rate_hz, seed=seed)
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"bench_{minutes:g}_{seed}.csv"
        bench.write_csv(frame, path)  # every float written exactly, so read back exactly
        return _read(path.read_bytes(), path.name).data


def _edited(samples: pd.DataFrame, edit: Callable[[pd.DataFrame], pd.DataFrame | None]):
    out = samples.copy()
    changed = edit(out)
    return out if changed is None else changed


def _rows_between(frame: pd.DataFrame, t0: float, t1: float) -> np.ndarray:
    time = frame["time_s"].to_numpy()
    return (time >= t0) & (time < t1)


def _gaps(s: pd.DataFrame) -> pd.DataFrame:
    # a 3 s hole inside the first hold, a 0.6 s one, and a 5-minute pause later on
    drop = _rows_between(s, 15.0, 18.0) | _rows_between(s, 140.0, 140.6)
    s = s.loc[~drop].copy()
    late = s["time_s"] > 200.0
    s.loc[late, "time_s"] = s.loc[late, "time_s"] + 300.0
    return s.reset_index(drop=True)


def _dropouts(s: pd.DataFrame) -> None:
    rng = np.random.default_rng(3)
    for column, share in (("elevator_deg", 0.2), ("ias_kt", 0.05), ("stick_force_lbf", 0.15)):
        blank = rng.random(len(s)) < share
        s.loc[blank, column] = np.nan
    s.loc[_rows_between(s, 30.0, 34.0), "nz_g"] = np.nan
    s.loc[_rows_between(s, 60.0, 75.0), "pressure_alt_ft"] = np.nan


def _spikes(s: pd.DataFrame) -> None:
    rng = np.random.default_rng(4)
    for column, size in (("ias_kt", 30.0), ("elevator_deg", 6.0), ("stick_force_lbf", 12.0),
                         ("pressure_alt_ft", 400.0), ("nz_g", 0.8)):
        where = rng.choice(len(s), size=max(len(s) // 200, 1), replace=False)
        s.loc[where, column] = s[column].to_numpy()[where] + size * rng.choice([-1.0, 1.0],
                                                                               where.size)


def _quantised(s: pd.DataFrame) -> None:
    s["elevator_deg"] = np.round(s["elevator_deg"] * 2.0) / 2.0
    s["stick_force_lbf"] = np.round(s["stick_force_lbf"])
    s["ias_kt"] = np.round(s["ias_kt"])


def _duplicated_times(s: pd.DataFrame) -> None:
    time = s["time_s"].to_numpy().copy()
    time[100:400:7] = time[99:399:7]
    s["time_s"] = time


def _events(s: pd.DataFrame) -> None:
    time = s["time_s"].to_numpy()
    text = np.full(len(s), "", dtype=object)
    for k, (t0, t1) in enumerate(((5.0, 25.0), (45.0, 47.0), (95.0, 130.0), (400.0, 420.0),
                                  (300.0, 302.0))):
        text[(time >= t0) & (time < t1)] = f"TP{k + 1}"
    s["event"] = text


def _two_flights(s: pd.DataFrame) -> None:
    s["flight"] = np.where(s["time_s"].to_numpy() < 150.0, "A", "B")


def _cas(s: pd.DataFrame) -> pd.DataFrame:
    return s.rename(columns={"ias_kt": "cas_kt"})


def _nan_rows(s: pd.DataFrame) -> None:
    rows = np.zeros(len(s), dtype=bool)
    rows[50:2000:37] = True
    s.loc[rows, [c for c in s.columns if c not in ("time_s", "source_line")]] = np.nan


def _track(s: pd.DataFrame) -> None:
    time = s["time_s"].to_numpy()
    s["gps_track_deg"] = 90.0 + 0.02 * np.sin(time / 30.0) * 50.0 + np.where(
        (time % 120.0) < 60.0, 0.0, 180.0)


def _frame_cases() -> dict[str, tuple[pd.DataFrame, dict]]:
    cases: dict[str, tuple[pd.DataFrame, dict]] = {}
    b3, b5 = _bench_samples(3.0, 1), _bench_samples(5.0, 2)
    for minutes, seed, rate in ((1.0, 3, 50.0), (3.0, 1, 50.0), (5.0, 2, 50.0), (8.0, 7, 50.0),
                                (6.0, 4, 10.0), (4.0, 5, 20.0), (0.3, 6, 50.0)):
        cases[f"bench {minutes:g} min seed {seed} {rate:g} Hz"] = (
            _bench_samples(minutes, seed, rate), {})
    edits = {
        "gaps": _gaps, "dropouts": _dropouts, "spikes": _spikes, "quantised": _quantised,
        "duplicated times": _duplicated_times, "events": _events, "two flights": _two_flights,
        "cas": _cas, "nan rows": _nan_rows,
        "no force": lambda s: s.drop(columns=["stick_force_lbf"]),
        "force all nan": lambda s: s.assign(stick_force_lbf=np.nan),
        "no nz": lambda s: s.drop(columns=["nz_g"]),
        "no vs": lambda s: s.drop(columns=["vs_fpm"]),
        "no optional": lambda s: s.drop(columns=["stick_force_lbf", "nz_g", "vs_fpm", "oat_c",
                                                 "fuel_gal"]),
    }
    for name, edit in edits.items():
        cases[f"bench 3 min {name}"] = (_edited(b3, edit), {})
    cases["bench 5 min spikes dropouts"] = (_edited(_edited(b5, _spikes), _dropouts), {})
    cases["bench 5 min events gaps"] = (_edited(_edited(b5, _gaps), _events), {})
    for name, settings in {
        "fine bins": PointSettings(bin_s=0.01), "short holds": PointSettings(min_duration_s=4.0),
        "long smoothing": PointSettings(smooth_s=5.0, merge_gap_s=12.0),
        "tight": PointSettings(ias_tol_kt=0.8, elevator_tol_deg=0.2, force_tol_lbf=0.5,
                               spike_sigma=2.5, max_gap_s=0.05, alt_scatter_ft=3.0,
                               turbulence_ias_kt=0.3, nz_tol_g=0.03, event_search_s=3.0),
        "loose": PointSettings(ias_tol_kt=6.0, elevator_tol_deg=2.0, force_tol_lbf=5.0,
                               min_airspeed_kt=100.0),
    }.items():
        cases[f"bench 5 min {name}"] = (b5, {"settings": settings})
        cases[f"bench 3 min events {name}"] = (_edited(b3, _events), {"settings": settings})
    for seed in (1, 2, 3):
        cases[f"synthetic flight seed {seed}"] = (standard_flight(seed)[0], {})
    cases["synthetic flight no nz"] = (standard_flight(4, with_nz=False)[0], {})
    cases["synthetic flight 10 Hz"] = (standard_flight(5, rate_hz=10.0)[0], {})
    cases["synthetic flight noisy"] = (standard_flight(6, noise=3.0)[0], {})
    cases["synthetic quiet drift"] = (make_log(
        [Hold(60, 100.0, 1.0, 0.0), Hold(120, 90.0, 1.5, 1.0), Hold(20, 80.0, 2.0, 2.0)],
        noise=0.0, seed=7)[0], {})
    cases["synthetic leg signals"] = (_edited(standard_flight(8)[0], _track), {"signals": {
        "ias_kt": 3.0, "pressure_alt_ft": 60.0, "gps_track_deg": 4.0}})
    cases["bench 3 min leg signals"] = (_edited(b3, _track), {"signals": {
        "ias_kt": 2.0, "pressure_alt_ft": 40.0, "gps_track_deg": 3.0}})
    backwards = standard_flight(9)[0]
    backwards.loc[500, "time_s"] = 1.0
    cases["error time backwards"] = (backwards, {})
    cases["error no elevator"] = (standard_flight(9)[0].drop(columns=["elevator_deg"]), {})
    cases["two samples"] = (standard_flight(9)[0].iloc[:2], {})
    cases["one time stamp"] = (standard_flight(9)[0].iloc[:20].assign(time_s=3.0), {})
    return cases


@functools.cache
def _cases() -> dict[str, Callable[[], pd.DataFrame]]:
    """Case name -> a call giving the Points table (or raising)."""
    cases: dict[str, Callable[[], pd.DataFrame]] = {}
    for path in sorted(SAMPLES.glob("flight*.csv")):
        log = _read(path.read_bytes(), path.name)
        cases[f"sample {path.name}"] = functools.partial(points_from_log, log, flight=path.stem)
        cases[f"sample {path.name} maneuvers"] = functools.partial(
            find_maneuvering_points, log.data, flight=path.stem)
    for path in sorted(LOGS.iterdir()):
        if path.suffix not in (".csv", ".tsv"):
            continue
        for mapped in (False, True):
            try:
                if mapped:
                    log = read_log(path.read_bytes(), name=path.name, column_map=MAP)
                else:
                    log = read_log(path.read_bytes(), name=path.name)
            except TrimlogError:
                continue
            name = f"file {path.name}" + (" mapped" if mapped else "")
            cases[name] = functools.partial(points_from_log, log, flight=path.stem)
    for name, (samples, kw) in _frame_cases().items():
        settings = kw.get("settings")
        cases[name] = functools.partial(find_stabilized_points, samples, flight="F",
                                        settings=settings, steady_signals=kw.get("signals"))
        if "signals" not in kw and not name.startswith("error"):
            cases[f"{name} maneuvers"] = functools.partial(find_maneuvering_points, samples,
                                                           flight="F")
    return cases


def describe(call: Callable[[], pd.DataFrame]) -> dict:
    """Everything a detection gives, as JSON-able values (floats bit for bit)."""
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            table = call()
        except TrimlogError as exc:
            return {"error": type(exc).__name__, "message": str(exc)}
    out = {
        "warnings": sorted({f"{w.category.__name__}: {w.message}" for w in caught}),
        "columns": list(map(str, table.columns)),
        "dtypes": [str(d) for d in table.dtypes],
        "index": [bits(v) for v in table.index],
        "values": {str(c): digest([bits(v) for v in table[c].tolist()]) for c in table.columns},
    }
    for c in ("flags", "event", "t_start_s", "t_end_s"):
        if c in table:
            out[c] = [bits(v) for v in table[c].tolist()]
    return out


def _all() -> dict[str, dict]:
    return {name: describe(call) for name, call in _cases().items()}


@pytest.fixture(scope="module")
def expected() -> dict[str, dict]:
    return load(EXPECTED)


def test_the_cases_are_the_stored_ones(expected):
    assert sorted(_cases()) == sorted(expected)


@pytest.mark.parametrize("name", sorted(_cases()))
def test_detection_gives_the_stored_points(name, expected):
    assert_same(name, describe(_cases()[name]), expected[name])


if __name__ == "__main__":
    write_when_asked(EXPECTED, _all, "tests/pipeline/test_points_equivalence.py", sys.argv[1:])
