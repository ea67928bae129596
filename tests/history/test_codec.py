"""Tests of trimlog.history.codec: the store's values without a database."""

import json

import numpy as np
import pandas as pd
import pytest

from trimlog.errors import StoreError
from trimlog.history.codec import (
    EXPORT_FORMAT,
    KEEP,
    decode_points,
    decode_raw,
    dumps_json,
    encode_details,
    encode_points,
    export_document,
    neutralise,
    read_export,
    sha256_hex,
)


def test_points_encode_then_decode_is_the_same_frame():
    points = pd.DataFrame({
        "flight": pd.array(["2", "2", "2"], dtype="string"),
        "point": [3, 1, 2],
        "ias_kt": [91.5, np.nan, 70.25],
        "n_samples": [200, 180, 150],
        "included": [True, False, True],
    })
    schema, rows = encode_points(points, "test")
    assert [name for name, _ in schema] == list(points.columns)
    back = decode_points({7: schema}, [(7, *r) for r in rows], with_flight_id=False)
    pd.testing.assert_frame_equal(back, points)


def test_points_of_flights_with_different_columns_are_padded():
    a = pd.DataFrame({"point": [1], "fs_lbf": [2.5]})
    b = pd.DataFrame({"point": [1], "nz_g": [1.02]})
    (sa, ra), (sb, rb) = encode_points(a, "a"), encode_points(b, "b")
    frame = decode_points({1: sa, 2: sb}, [(1, *ra[0]), (2, *rb[0])], with_flight_id=True)
    assert frame["flight_id"].tolist() == [1, 2]
    assert frame["fs_lbf"].iloc[0] == 2.5 and np.isnan(frame["fs_lbf"].iloc[1])
    assert np.isnan(frame["nz_g"].iloc[0]) and frame["nz_g"].iloc[1] == 1.02
    assert frame["included"].tolist() == [True, True]  # absent means included


def test_json_refuses_non_finite_numbers_naming_the_key():
    assert json.loads(dumps_json({"a": np.float64(1.5), "b": [np.int64(2)]}, "r")) == {
        "a": 1.5, "b": [2]}
    with pytest.raises(StoreError, match=r"r\.x\[1\]: nan"):
        dumps_json({"x": [1.0, float("nan")]}, "r")


def test_details_left_at_keep_are_skipped_and_bad_ones_named():
    given = dict.fromkeys(("label", "notes", "date", "loading", "incidence_label",
                           "incidence_deg", "config"), KEEP)
    assert encode_details({**given, "date": "2026-05-13", "notes": None}, "f") == {
        "flight_date": "2026-05-13", "notes": None}
    with pytest.raises(StoreError, match="f, incidence_deg: expected a finite number"):
        encode_details({**given, "incidence_deg": float("inf")}, "f")


def test_neutralise_prefixes_formula_text_and_leaves_numbers():
    frame = pd.DataFrame({"text": ["=1+1", "-x", "@a", "plain", None], "n": [-1.5] * 5})
    out = neutralise(frame)
    assert out["text"].tolist()[:4] == ["'=1+1", "'-x", "'@a", "plain"]
    assert pd.isna(out["text"].iloc[4])
    assert out["n"].tolist() == [-1.5] * 5
    assert frame["text"].iloc[0] == "=1+1"  # the input is not changed


def test_export_document_is_read_back_and_damage_is_found(tmp_path):
    raw = b"t,ias\n0,90\n"
    columns = ("id", "sha256", "size_bytes", "points_columns", "loading_json")
    doc = export_document(
        aircraft=[(1, "A", "2026-01-01")],
        profiles=[(1, 1, "x = 1", sha256_hex("x = 1"), "2026-01-01")],
        flights=[(5, sha256_hex(raw), len(raw), json.dumps([["point", "int64"]]), None, raw)],
        points=[(5, 1, 0, "[]")],
        flight_columns=columns, schema_version=2, software_version="0.1",
        exported_at="2026-01-03",
    )
    assert doc["format"] == EXPORT_FORMAT
    assert doc["flights"][0]["points"] == [[1, False, []]]
    assert doc["analyses"] == []  # results are recomputed, never stored
    (tmp_path / "trimlog-history.json").write_text(json.dumps(doc), encoding="utf-8")
    src, back = read_export(tmp_path)
    assert decode_raw(back["flights"][0], src) == raw
    damaged = {**back["flights"][0], "size_bytes": len(raw) + 1}
    with pytest.raises(StoreError, match="flight 5: the log bytes do not match"):
        decode_raw(damaged, src)


def test_read_export_refuses_another_format(tmp_path):
    (tmp_path / "trimlog-history.json").write_text('{"format": "other"}', encoding="utf-8")
    with pytest.raises(StoreError, match="not a trimlog history export"):
        read_export(tmp_path)
