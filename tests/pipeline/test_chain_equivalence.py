"""The whole chain gives exactly the stored result for a set of varied inputs.

The expectations in ``tests/pipeline/data/chain_expectations.json`` were
written by the chain as it was before the speed work on what grows with the
log's length (branch growth-speed, from commit 703e4a5): for each case the
complete JSON result (:func:`trimlog.views.json_export.analysis_to_dict`, every
float by its ``repr``), and every column of every table behind it (the reduced
points, each flight's points and maneuvering points, the maneuvering analysis'
points) bit for bit (``float.hex``, as digests), or the error a case ends in.
A change that makes the chain faster must leave all of them as they are.
After a deliberate change of a result, write them again with
``python tests/pipeline/test_chain_equivalence.py --write`` and say why in the
commit.

The cases (all data invented; the synthetic logs are of known truth, from the
benchmark's generator ``benchmarks/bench.py`` and the demo's model):

* the demo programme of ``sample_logs/`` (a typed card and four logs with
  loading sheets, level turns and wind-up turns), together and two flights alone;
* the demo programme written with another seed (``trimlog demo``);
* every file of ``tests/data/logs`` analysed alone, with the test loading sheet
  when it cannot be without (or the error it ends in), and all that can be read
  together beside demo flight 2;
* synthetic 50 Hz logs of several seeds and CGs (a level turn each), alone and
  together, with point and maneuvering-point choices and reasons; a 9-minute
  20 Hz log (two turns); a log without fuel quantity and a sheet's constant
  fuel flow; a shorter minimum hold.
"""

from __future__ import annotations

import functools
import hashlib
import json
import sys
from collections.abc import Callable
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from trimlog.demo.files import write_demo
from trimlog.errors import TrimlogError
from trimlog.pipeline import chain as analysis
from trimlog.views.json_export import analysis_to_dict

ROOT = Path(__file__).resolve().parents[2]
SAMPLES = ROOT / "sample_logs"
LOGS = ROOT / "tests" / "data" / "logs"
EXPECTED = Path(__file__).resolve().parent / "data" / "chain_expectations.json"

sys.path.insert(0, str(ROOT / "benchmarks"))
import bench  # noqa: E402  (the generator of synthetic logs lives beside the benchmark)

#: The synthetic flights: (name, minutes, rate [Hz], seed, takeoff CG [in]).
SYNTHETIC = (("syn1", 4.0, 50.0, 21, 66.5), ("syn2", 4.0, 50.0, 22, 69.0),
             ("syn3", 4.0, 50.0, 23, 71.5), ("syn4", 4.0, 50.0, 24, 74.0))


def _hex(value: object) -> object:
    if isinstance(value, float | np.floating):
        return None if np.isnan(value) else float(value).hex()
    if isinstance(value, np.integer | np.bool_):
        return value.item()
    if value is None or isinstance(value, bool | int | str):
        return value
    return repr(value)


def _frame(frame: pd.DataFrame | None, roots: tuple[Path, ...]) -> object:
    """Columns, dtypes, index and each column's values bit for bit (as digests)."""
    if frame is None:
        return None
    values = {str(c): hashlib.sha256(_local(json.dumps([_hex(v) for v in frame[c].tolist()]),
                                            roots).encode()).hexdigest()[:32]
              for c in frame.columns}
    return {"columns": [str(c) for c in frame.columns], "dtypes": [str(d) for d in frame.dtypes],
            "index": [_hex(v) for v in frame.index], "values": values}


def _outcome(make: Callable[[], object], roots: tuple[Path, ...]) -> dict:
    """What a case gives: the JSON result and its tables, or the error it ends in."""
    try:
        result = make()
    except TrimlogError as exc:
        return {"error": type(exc).__name__, "message": _local(str(exc), roots)}
    text = json.dumps(analysis_to_dict(result), sort_keys=True)  # floats by repr
    tables = {"points": _frame(result.points, roots),
              "maneuvering": _frame(None if result.maneuvering is None
                                    else result.maneuvering.points, roots)}
    for f in result.flights:
        tables[f"flight {f.flight} points"] = _frame(f.points, roots)
        tables[f"flight {f.flight} maneuvers"] = _frame(f.maneuvers, roots)
    return {"json": json.loads(_local(text, roots)), "tables": tables}


def _local(text: str, roots: tuple[Path, ...]) -> str:
    """``text`` with the cases' folders (the checkout, a temporary folder) named alike."""
    for k, root in enumerate(roots):
        text = text.replace(str(root), f"<{k}>")
    return text


def _synthetic(folder: Path, name: str, minutes: float, rate: float, seed: int, cg: float,
               *, fuel_flow: bool = False) -> Path:
    """Write a synthetic log (pandas' writer: the same bytes wherever) and its loading sheet."""
    frame = bench.synthetic_log(minutes, rate_hz=rate, loading=bench.Loading(cg_in=cg),
                                seed=seed)
    sheet = bench.Loading(cg_in=cg).sheet(name)
    if fuel_flow:
        frame = frame.drop(columns=["fuel_gal"])
        sheet = sheet.replace("\n[config]", '\n[fuel]\nflow = "8 gal/h"\n\n[config]')
    path = folder / f"{name}.csv"
    path.write_bytes(frame.to_csv(index=False, na_rep="", lineterminator="\n").encode())
    path.with_name(f"{name}.loading.toml").write_text(sheet, encoding="utf-8")
    return path


@functools.cache
def _folders() -> tuple[Path, Path]:
    """The generated inputs (once per session): the demo of another seed, synthetic logs."""
    import atexit
    import shutil
    import tempfile

    folder = Path(tempfile.mkdtemp(prefix="trimlog-chain-"))
    atexit.register(shutil.rmtree, folder, ignore_errors=True)
    write_demo(folder / "demo7", seed=7)
    syn = folder / "syn"
    syn.mkdir()
    for case in SYNTHETIC:
        _synthetic(syn, *case)
    _synthetic(syn, "long20", 9.0, 20.0, 25, 70.5)
    _synthetic(syn, "flow", 4.0, 50.0, 26, 68.0, fuel_flow=True)
    return folder / "demo7", syn


def _profile():
    return analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")


def _load(*paths: Path, **kwargs) -> list:
    return [f for p in paths for f in analysis.load_flight_file(p, _profile(), **kwargs)]


def _demo(folder: Path) -> list[Path]:
    return sorted(p for p in folder.glob("flight*.csv"))


def _with_choices(paths: list[Path]) -> analysis.Analysis:
    """The synthetic flights with a point left out (and why), one put back, a turn left out."""
    profile = _profile()
    flights = _load(*paths)
    first = analysis.analyze(flights, profile)
    used = first.points.loc[first.points["included"].astype(bool)]
    left = first.points.loc[~first.points["included"].astype(bool)]
    out = (str(used["flight"].iloc[0]), int(used["point"].iloc[0]))
    back = [(str(left["flight"].iloc[0]), int(left["point"].iloc[0]))] if len(left) else []
    turns = first.maneuvering.points if first.maneuvering is not None else None
    turn_out = [] if turns is None or not len(turns) else [
        (str(turns["flight"].iloc[0]), int(turns["point"].iloc[0]))]
    return analysis.analyze(flights, profile, exclusions=[out], inclusions=back,
                            maneuver_exclusions=turn_out,
                            exclusion_reasons={out: "turbulence"})


def _messy(path: Path) -> analysis.Analysis:
    """A messy file analysed alone, with the test loading sheet when it cannot be without."""
    profile = _profile()
    try:
        return analysis.analyze(_load(path), profile)
    except TrimlogError:
        return analysis.analyze(_load(path, loading_path=LOGS / "loading_sheet.toml"), profile)


def _messy_together() -> analysis.Analysis:
    """Every messy file that can be read, with the test loading sheet, beside demo flight 2."""
    flights = _load(SAMPLES / "flight2.csv")
    for path in sorted(LOGS.iterdir()):
        if path.suffix in (".csv", ".tsv"):
            try:
                flights += _load(path, loading_path=LOGS / "loading_sheet.toml")
            except TrimlogError:
                continue
    return analysis.analyze(flights, _profile())


def _cases() -> dict[str, Callable[[], object]]:
    """Each case's analysis, made when called (the inputs are generated then, once)."""
    profile = _profile()

    def syn(*names: str) -> list[Path]:
        return [_folders()[1] / f"{n}.csv" for n in names]

    synthetic = tuple(c[0] for c in SYNTHETIC)
    cases: dict[str, Callable[[], object]] = {
        "demo programme": lambda: analysis.analyze(_load(*_demo(SAMPLES)), profile),
        "demo flight 3 alone": lambda: analysis.analyze(_load(SAMPLES / "flight3.csv"), profile),
        "demo card alone": lambda: analysis.analyze(_load(SAMPLES / "flight1_points.csv"),
                                                    profile),
        "demo seed 7 programme": lambda: analysis.analyze(_load(*_demo(_folders()[0])), profile),
        "synthetic together": lambda: analysis.analyze(_load(*syn(*synthetic)), profile),
        "synthetic with choices": lambda: _with_choices(syn(*synthetic)),
        "synthetic 20 Hz 9 min": lambda: analysis.analyze(_load(*syn("long20")), profile),
        "synthetic fuel flow": lambda: analysis.analyze(_load(*syn("flow")), profile),
        "synthetic short holds": lambda: analysis.analyze(
            _load(*syn(*synthetic[:2]), min_hold_s=12.0), profile),
    }
    for name in synthetic[:2]:
        cases[f"synthetic {name} alone"] = (
            lambda n=name: analysis.analyze(_load(*syn(n)), profile))
    for path in sorted(LOGS.iterdir()):
        if path.suffix in (".csv", ".tsv", ".bin", ".html", ".json"):
            cases[f"messy {path.name}"] = lambda p=path: _messy(p)
    cases["messy logs together"] = _messy_together
    return cases


def _roots() -> tuple[Path, ...]:
    return (_folders()[0].parent, ROOT)


def describe(name: str) -> dict:
    """The outcome of one case, as JSON-able values."""
    return json.loads(json.dumps(_outcome(_cases()[name], _roots())))


@pytest.fixture(scope="module")
def expected() -> dict[str, dict]:
    return json.loads(EXPECTED.read_text(encoding="utf-8"))


def test_the_cases_are_the_stored_ones(expected):
    assert sorted(_cases()) == sorted(expected)


def _first_difference(got: object, want: object, where: str = "") -> str:
    if isinstance(want, dict) and isinstance(got, dict):
        for key in sorted(set(want) | set(got)):
            if got.get(key, "<missing>") != want.get(key, "<missing>"):
                return _first_difference(got.get(key), want.get(key), f"{where}/{key}")
    if isinstance(want, list) and isinstance(got, list) and len(want) == len(got):
        for k, (g, w) in enumerate(zip(got, want, strict=True)):
            if g != w:
                return _first_difference(g, w, f"{where}[{k}]")
    return f"{where}: {got!r} != {want!r}"


@pytest.mark.parametrize("name", sorted(_cases()))
def test_the_chain_gives_the_stored_result(name, expected):
    got, want = describe(name), expected[name]
    assert got == want, _first_difference(got, want)


if __name__ == "__main__":
    if sys.argv[1:] != ["--write"]:
        sys.exit("usage: python tests/pipeline/test_chain_equivalence.py --write")
    EXPECTED.parent.mkdir(exist_ok=True)
    rows = [f"{json.dumps(k)}: {json.dumps(describe(k), sort_keys=True, separators=(',', ':'))}"
            for k in sorted(_cases())]
    EXPECTED.write_text("{\n" + ",\n".join(rows) + "\n}\n", encoding="utf-8")
    print(f"wrote {EXPECTED}")
