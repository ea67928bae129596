"""Hostile exports given to ``trimlog restore`` (issue 19): refused as a whole.

A real export of the demo history (two flights) is damaged, truncated, made
foreign, given another schema version or edited by hand in one place each.
Every case asserts: exit 2, no traceback, the message names the first
problem (table, row, column), the target is untouched (an existing empty
database keeps its SHA-256; a new target leaves no file behind), within a
time budget.  The control case restores and lists both flights.
"""

from __future__ import annotations

import base64
import copy
import hashlib
import json
import shutil
import time
from collections.abc import Callable
from pathlib import Path

import pytest

from trimlog.cli import EXIT_BAD_INPUT, EXIT_OK, main
from trimlog.history import store

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "sample_logs"
BUDGET_S = 20.0


@pytest.fixture(scope="module")
def exported(tmp_path_factory) -> dict:
    """The export document of a two-flight demo history (point table + flight 2 with sheet)."""
    folder = tmp_path_factory.mktemp("history")
    db = folder / "h.sqlite"
    code = main(["import", str(SAMPLES / "flight1_points.csv"), str(SAMPLES / "flight2.csv"),
                 "--aircraft", str(SAMPLES / "tinkerfinch_tf2.toml"), "--db", str(db)])
    assert code == EXIT_OK
    assert main(["export", str(folder / "ex"), "--db", str(db)]) == EXIT_OK
    return json.loads((folder / "ex" / "trimlog-history.json").read_text(encoding="utf-8"))


def sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


def write(folder: Path, doc_or_text) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    text = doc_or_text if isinstance(doc_or_text, str | bytes) else json.dumps(doc_or_text)
    target = folder / "trimlog-history.json"
    if isinstance(text, bytes):
        target.write_bytes(text)
    else:
        target.write_text(text, encoding="utf-8")
    return folder


def refused(args: list[str], capsys) -> str:
    start = time.monotonic()
    code = main(args)
    elapsed = time.monotonic() - start
    out, err = capsys.readouterr()
    assert code == EXIT_BAD_INPUT, (code, err[-1500:])
    assert "Traceback" not in out + err
    assert "nothing was restored" in err, err
    assert elapsed < BUDGET_S
    return err


def _flight(doc: dict, i: int = 1) -> dict:
    return doc["flights"][i]


def _point_value(doc: dict, column: str, value, point: int = 2) -> None:
    f = _flight(doc)
    names = [n for n, _ in f["points_columns"] if n not in ("point", "included")]
    f["points"][point][2][names.index(column)] = value


def _nest(depth: int):
    value: list = []
    for _ in range(depth):
        value = [value]
    return value


def _raw(doc: dict, data: bytes) -> None:
    _flight(doc)["raw_base64"] = base64.b64encode(data).decode()


# name -> (edit of the document, or the whole text; what the message must name)
EDITS: dict[str, tuple[Callable[[dict], object], str]] = {
    "text in a numeric point column": (
        lambda d: _point_value(d, "weight_lb", "heavy") if "weight_lb" in str(
            _flight(d)["points_columns"]) else _point_value(d, "ias_kt", "heavy"),
        "point 3, column"),
    "airspeed outside the plausible range": (
        lambda d: _point_value(d, "ias_kt", 5000.0), "column 'ias_kt'"),
    "elevator beyond 45 deg": (lambda d: _point_value(d, "elevator_deg", -90.0),
                               "column 'elevator_deg'"),
    "number in a text column": (lambda d: _point_value(d, "flags", 7), "column 'flags'"),
    "huge integer in a float column": (lambda d: _point_value(d, "oat_c", 10**300),
                                       "column 'oat_c'"),
    "float in an integer column": (lambda d: _point_value(d, "n_samples", 3.5),
                                   "column 'n_samples'"),
    "point row too short": (lambda d: _flight(d)["points"][0][2].pop(), "point 1: holds"),
    "duplicate point number": (lambda d: _flight(d)["points"][1].__setitem__(0, 1),
                               "point 1 appears twice"),
    "point number zero": (lambda d: _flight(d)["points"][0].__setitem__(0, 0), "points[0], point"),
    "included flag as a number": (lambda d: _flight(d)["points"][0].__setitem__(1, 1),
                                  "column 'included'"),
    "included flag as text": (lambda d: _flight(d)["points"][0].__setitem__(1, "yes"),
                              "column 'included'"),
    "unknown point dtype": (lambda d: _flight(d)["points_columns"][2].__setitem__(1, "complex128"),
                            "points_columns"),
    "point columns without 'point'": (
        lambda d: _flight(d)["points_columns"].__setitem__(1, ["pt", "int64"]), "points_columns"),
    "flight naming a missing aircraft": (lambda d: _flight(d).__setitem__("aircraft_id", 9),
                                         "aircraft_id"),
    "flight naming a missing profile version": (
        lambda d: _flight(d).__setitem__("profile_version", 4), "profile_version"),
    "flight order with a gap": (lambda d: _flight(d).__setitem__("flight_order", 5),
                                "flight order of aircraft 1"),
    "flight order repeated": (lambda d: _flight(d).__setitem__("flight_order", 1),
                              "flight order of aircraft 1"),
    "duplicate flight id": (lambda d: _flight(d).__setitem__("id", d["flights"][0]["id"]),
                            "appears twice"),
    "negative flight id": (lambda d: _flight(d).__setitem__("id", -3), "flights[1], id"),
    "huge flight id": (lambda d: _flight(d).__setitem__("id", 10**30), "flights[1], id"),
    "date not ISO": (lambda d: _flight(d).__setitem__("flight_date", "16/05/2026"),
                     "flight_date"),
    "label not text": (lambda d: _flight(d).__setitem__("label", {"x": 1}), "label"),
    "incidence out of range": (lambda d: _flight(d).__setitem__("incidence_deg", 400.0),
                               "incidence_deg"),
    "incidence as text": (lambda d: _flight(d).__setitem__("incidence_deg", "-1"),
                          "incidence_deg"),
    "loading sheet that does not parse": (
        lambda d: _flight(d)["loading_json"].__setitem__(
            "sheet_text", '[takeoff]\nweight = "1585 parsecs"\n'), "loading_json"),
    "loading sheet weight out of range": (
        lambda d: _flight(d)["loading_json"].__setitem__(
            "sheet_text", _flight(d)["loading_json"]["sheet_text"].replace(
                '"1585 lb"', '"999999999 lb"')), "loading_json"),
    "unknown key in the loading record": (
        lambda d: _flight(d)["loading_json"].__setitem__("script", "rm -rf"), "script"),
    "log bytes changed": (lambda d: _raw(d, b"time,ias\n1,2\n"), "SHA-256"),
    "log not base64": (lambda d: _flight(d).__setitem__("raw_base64", "!!not base64!!"),
                       "raw_base64"),
    "sha256 not hex": (lambda d: _flight(d).__setitem__("sha256", "x" * 64), "sha256"),
    "unknown flight key": (lambda d: _flight(d).__setitem__("owner", "someone"), "'owner'"),
    "missing flight key": (lambda d: _flight(d).pop("filename"), "'filename' is missing"),
    "profile text edited (sha mismatch)": (
        lambda d: d["aircraft"][0]["profiles"][0].__setitem__(
            "text", d["aircraft"][0]["profiles"][0]["text"] + "\n# edited\n"),
        "aircraft[0] (id 1), profiles[0], sha256"),
    "profile that breaks a range, sha updated": (
        lambda d: _profile(d, lambda t: t.replace("min_static_margin = 5.0",
                                                   "min_static_margin = -50.0", 1)),
        "limits.min_static_margin"),
    "profile versions out of order": (
        lambda d: d["aircraft"][0]["profiles"][0].__setitem__("version", 2), "version"),
    "aircraft without profiles": (lambda d: d["aircraft"][0].__setitem__("profiles", []),
                                  "profiles"),
    "two aircraft with one name": (
        lambda d: d["aircraft"].append({**copy.deepcopy(d["aircraft"][0]), "id": 2}),
        "appears twice"),
    "empty aircraft name": (lambda d: d["aircraft"][0].__setitem__("name", "  "), "name"),
    "analysis naming a missing flight": (
        lambda d: d.__setitem__("analyses", [{
            "id": 1, "aircraft_id": 1, "created_at": "2026-01-01T00:00:00+00:00",
            "software_version": "0.1", "profile_version": 1, "flight_ids": [1, 77],
            "result": {}}]), "flight_ids"),
    "newer schema version": (lambda d: d.__setitem__("schema_version", 99), "newer trimlog"),
    "schema version as text": (lambda d: d.__setitem__("schema_version", "3"), "schema_version"),
    "other format version": (lambda d: d.__setitem__("format_version", 2),
                             "export format version"),
    "foreign JSON": (lambda d: {"rows": [1, 2, 3]}, "not a trimlog history export"),
    "unknown top-level key": (lambda d: d.__setitem__("extra", 1), "'extra'"),
    "flights not a list": (lambda d: d.__setitem__("flights", {"1": {}}), "flights"),
    "deep nesting inside a label": (lambda d: _flight(d).__setitem__("label", _nest(200)),
                                    "nested deeper"),
}

TEXTS: dict[str, tuple[Callable[[str], str | bytes], str]] = {
    "truncated at half": (lambda t: t[: len(t) // 2], "not valid JSON"),
    "truncated to nothing": (lambda t: "", "not valid JSON"),
    "NaN as a number": (lambda t: t.replace('"incidence_deg": -1.0', '"incidence_deg": NaN'),
                        "not valid JSON"),
    "1e999 as a number": (lambda t: t.replace('"incidence_deg": -1.0', '"incidence_deg": 1e999'),
                          "too large for a float"),
    "10,000 digits": (lambda t: t.replace('"incidence_deg": -1.0',
                                          '"incidence_deg": ' + "9" * 10000), "not valid JSON"),
    "nested 100,000 deep": (lambda t: "[" * 100_000 + "]" * 100_000, "nested"),
    "not UTF-8": (lambda t: b"\xff\xfe" + t.encode("utf-16-le"), "not valid JSON"),
    "binary noise": (lambda t: bytes(range(256)) * 40, "not valid JSON"),
}


def _profile(doc: dict, change: Callable[[str], str]) -> None:
    from trimlog.history.codec import sha256_hex

    p = doc["aircraft"][0]["profiles"][0]
    p["text"] = change(p["text"])
    p["sha256"] = sha256_hex(p["text"])


def _cases(exported: dict) -> dict[str, object]:
    text = json.dumps(exported, indent=1)
    out: dict[str, object] = {}
    for name, (edit, _) in EDITS.items():
        doc = copy.deepcopy(exported)
        changed = edit(doc)
        out[name] = changed if isinstance(changed, dict) else doc
    for name, (change, _) in TEXTS.items():
        out[name] = change(text)
    return out


MATCH = {**{k: v[1] for k, v in EDITS.items()}, **{k: v[1] for k, v in TEXTS.items()}}


def test_the_control_export_restores(exported, tmp_path, capsys):
    folder = write(tmp_path / "ex", exported)
    assert main(["restore", str(folder), "--db", str(tmp_path / "new.sqlite")]) == EXIT_OK
    with store.open_store(tmp_path / "new.sqlite") as st:
        (aircraft,) = st.aircraft_list()
        assert len(st.flights(aircraft.id)) == 2
        assert st.check() == []


@pytest.mark.parametrize("case", list(MATCH))
def test_a_hostile_export_is_refused_into_a_new_target(case, exported, tmp_path, capsys):
    folder = write(tmp_path / "ex", _cases(exported)[case])
    target = tmp_path / "new.sqlite"
    err = refused(["restore", str(folder), "--db", str(target)], capsys)
    assert MATCH[case] in err, err
    assert sorted(p.name for p in tmp_path.iterdir()) == ["ex"], "a file was left behind"


@pytest.mark.parametrize("case", ["text in a numeric point column", "truncated at half",
                                  "newer schema version", "flight order with a gap",
                                  "loading sheet that does not parse"])
def test_a_hostile_export_leaves_an_existing_target_untouched(case, exported, tmp_path, capsys):
    target = tmp_path / "empty.sqlite"
    store.open_store(target).close()
    before = sha(target)
    folder = write(tmp_path / "ex", _cases(exported)[case])
    refused(["restore", str(folder), "--db", str(target)], capsys)
    assert sha(target) == before
    with store.open_store(target) as st:
        assert st.aircraft_list() == []


def test_a_poisoned_export_cannot_block_the_history(exported, tmp_path, capsys):
    """Before: text in a point column restored (exit 0) and then every read failed."""
    doc = copy.deepcopy(exported)
    _point_value(doc, "ias_kt", "heavy")
    folder = write(tmp_path / "ex", doc)
    refused(["restore", str(folder), "--db", str(tmp_path / "h.sqlite")], capsys)
    assert not (tmp_path / "h.sqlite").exists()


def test_restore_into_a_folder_that_holds_no_export(tmp_path, capsys):
    (tmp_path / "ex").mkdir()
    refused(["restore", str(tmp_path / "ex"), "--db", str(tmp_path / "h.sqlite")], capsys)
    assert not (tmp_path / "h.sqlite").exists()


def test_restore_of_a_folder_given_as_the_export_file(tmp_path, capsys):
    (tmp_path / "ex" / "trimlog-history.json").mkdir(parents=True)
    refused(["restore", str(tmp_path / "ex"), "--db", str(tmp_path / "h.sqlite")], capsys)


def test_the_store_api_refuses_the_same_exports(exported, tmp_path):
    from trimlog.errors import StoreError

    doc = copy.deepcopy(exported)
    _point_value(doc, "elevator_deg", "up")
    folder = write(tmp_path / "ex", doc)
    with store.open_store(tmp_path / "h.sqlite") as st:
        with pytest.raises(StoreError, match=r"point 3, column 'elevator_deg': expected a number"):
            st.import_export(folder)
        assert st.aircraft_list() == []
    shutil.rmtree(folder)


def test_the_restore_check_knows_every_key_a_flight_record_is_written_with():
    """A key the import writes but the restore check does not know would refuse real exports."""
    from trimlog.history import maneuver_choices, programme, reimport, restore_check

    written = {programme.SHEET_TEXT, programme.SHEET_NAME, programme.FLOWN_AT,
               maneuver_choices.KEY, maneuver_choices.REASONS_KEY, maneuver_choices.FOUND_KEY,
               reimport.REPLACED}
    assert written <= restore_check._LOADING_KEYS
