"""Tests of trimlog.input.logs and trimlog.input.headers: messy files, units, loading sheets.

The small files in tests/data/logs/ are invented (synthetic values), one per
messy-file case; tests/data/logs/README.md lists them.
"""

from __future__ import annotations

import datetime as dt
import io
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from trimlog.errors import InputFileError, TrimlogError
from trimlog.input.headers import normalise, understand_header
from trimlog.input.loading_sheet import read_loading_sheet
from trimlog.input.logs import LogRead, read_log

LOGS = Path(__file__).resolve().parents[1] / "data" / "logs"
CANONICAL_7 = [
    "time_s", "ias_kt", "pressure_alt_ft", "oat_c", "elevator_deg", "stick_force_lbf", "nz_g"
]


def _found(log, code):
    """The log's findings with this code."""
    return [f for f in log.findings if f.code == code]


def read(name: str, **kwargs) -> LogRead:
    return read_log(LOGS / name, **kwargs)


def reasons(log: LogRead) -> str:
    return " | ".join(d.reason for d in log.dropped)


@pytest.fixture(scope="module")
def comma() -> LogRead:
    return read("comma.csv")


# --------------------------------------------------------------------- headers and units


@pytest.mark.parametrize(
    ("header", "canonical", "value_in", "value_out"),
    [
        ("ias_kt", "ias_kt", 100.0, 100.0),
        # 1 mph = 0.868976 kt (exact definitions: 1609.344 m / 1852 m)
        ("ias_mph", "ias_kt", 100.0, 86.8976),
        ("airspeed [km/h]", "ias_kt", 185.2, 100.0),  # 1 kt = 1.852 km/h exactly
        ("KIAS", "ias_kt", 100.0, 100.0),
        ("cas (kt)", "cas_kt", 100.0, 100.0),
        ("Elevator (deg)", "elevator_deg", -3.0, -3.0),
        ("elev_rad", "elevator_deg", 1.0, 57.29578),  # 1 rad = 180/pi deg
        ("stick_force_N", "stick_force_lbf", 4.448222, 1.0),  # 1 lbf = 4.4482216152605 N exactly
        ("OAT (F)", "oat_c", 212.0, 100.0),
        ("temp_K", "oat_c", 273.15, 0.0),
        ("alt_m", "pressure_alt_ft", 0.3048, 1.0),  # 1 ft = 0.3048 m exactly
        ("palt", "pressure_alt_ft", 4500.0, 4500.0),
        ("nz_g", "nz_g", 1.0, 1.0),
        ("load factor", "nz_g", 1.2, 1.2),
        ("gw_kg", "weight_lb", 0.45359237, 1.0),  # 1 lb = 0.45359237 kg exactly
        ("cg [in]", "cg_in", 78.4, 78.4),
        ("cg [%MAC]", "cg_pct_mac", 27.5, 27.5),
        ("cg_pct_mac", "cg_pct_mac", 27.5, 27.5),
        ("fuel_l", "fuel_gal", 3.785411784, 1.0),  # 1 US gal = 3.785411784 L exactly
        ("flap", "flap_deg", 10.0, 10.0),
        ("vsi_fpm", "vs_fpm", 500.0, 500.0),
        ("vs [m/s]", "vs_fpm", 0.00508, 1.0),  # 1 ft/min = 0.00508 m/s exactly
        ("stab_incidence_deg", "stab_incidence_deg", 1.5, 1.5),
        ("time_ms", "time_s", 1500.0, 1.5),
        ("Timestamp", "time_s", 2.0, 2.0),
    ],
)
def test_header_understanding_and_conversion(header, canonical, value_in, value_out):
    meaning = understand_header(header)
    assert meaning is not None
    assert meaning.canonical == canonical
    assert meaning.scale * value_in + meaning.offset == pytest.approx(value_out, rel=1e-5, abs=1e-9)


@pytest.mark.parametrize("header", ["alt_gps", "gps_alt_ft", "elev_raw", "rpm", "aileron_deg", ""])
def test_headers_that_are_not_canonical_quantities(header):
    assert understand_header(header) is None


@pytest.mark.parametrize(
    ("header", "match"),
    [
        ("alt [kt]", "not a unit of pressure altitude"),
        ("elevator [%]", "not a unit of elevator"),
        ("cg [deg]", "not a unit of CG"),
        ("ias [zorks]", "unknown unit"),
    ],
)
def test_wrong_or_unknown_header_units_are_errors(header, match):
    with pytest.raises(InputFileError, match=match):
        understand_header(header, file="x.csv")


def test_unit_row_contradicting_header_is_an_error():
    with pytest.raises(InputFileError, match="unit row says"):
        understand_header("ias_kt", "mph")


def test_normalise():
    assert normalise("  Stick-Force (lbf) ") == "stick_force_(lbf)"
    assert normalise("IAS  KT") == "ias_kt"


# --------------------------------------------------------------------- messy files, one each


def test_comma_file_is_a_time_series(comma):
    assert comma.kind == "time_series"
    assert "median interval of 0.2 s" in comma.kind_reason
    assert list(comma.data.columns) == CANONICAL_7 + ["source_line"]
    assert len(comma.data) == comma.n_rows_read == 40
    assert comma.data["source_line"].tolist() == list(range(2, 42))
    assert comma.findings == ()
    assert comma.dropped == ()
    assert comma.source == "comma.csv"
    assert all(c.conversion == "none" and not c.inverted for c in comma.columns)


@pytest.mark.parametrize("name", ["tab.tsv", "bom.csv", "preamble.csv"])
def test_tab_bom_and_preamble_give_the_same_numbers(comma, name):
    log = read(name)
    pd.testing.assert_frame_equal(
        log.data.drop(columns="source_line"), comma.data.drop(columns="source_line")
    )


def test_preamble_is_skipped_and_said(comma):
    log = read("preamble.csv")
    assert _found(log, "input.log.preamble_skipped")[0].values["count"] == 5
    assert _found(log, "input.log.preamble_skipped")[0].severity == "note"  # a reading note
    assert log.data["source_line"].iloc[0] == 7


def test_semicolon_and_decimal_comma_point_table():
    log = read("semicolon_decimal_comma.csv")
    assert log.kind == "point_table"
    assert "no time column" in log.kind_reason
    assert log.data["ias_kt"].tolist() == [100.2, 90.1, 80.3, 110.4]
    assert log.data["elevator_deg"].iloc[2] == pytest.approx(-5.2)
    assert log.data["event"].tolist() == ["1", "2", "3", "4"]  # the "point" column
    assert log.data["cg_in"].iloc[0] == pytest.approx(78.4)


def test_units_on_a_second_header_row(comma):
    log = read("unit_row.csv")
    assert log.data["source_line"].iloc[0] == 3
    by = {c.canonical: c for c in log.columns}
    assert by["ias_kt"].unit == "mph = mile / hour"
    assert by["oat_c"].conversion.startswith("F -> degC")
    assert by["stick_force_lbf"].unit == "N = newton"
    # the file was written from the comma file's values in other units, to 2 decimals
    for name, tol in [("ias_kt", 0.01), ("pressure_alt_ft", 0.02), ("oat_c", 0.01),
                      ("stick_force_lbf", 0.003)]:
        np.testing.assert_allclose(log.data[name], comma.data[name], atol=tol)


def test_blank_lines_and_partial_trailing_line_are_counted():
    log = read("trailing_partial.csv")
    assert len(log.data) == 40
    assert log.n_rows_read == 43
    dropped = {d.reason: d for d in log.dropped}
    assert dropped["blank line"].lines == (22, 43)
    partial = dropped["partial line at the end of the file (fewer fields than the header)"]
    assert partial.count == 1 and partial.lines == (44,)


def test_clock_time_crossing_midnight():
    log = read("clock_midnight.csv")
    time = log.data["time_s"].to_numpy()
    assert log.kind == "time_series"
    assert time[0] == pytest.approx(23 * 3600 + 59 * 60 + 40)
    np.testing.assert_allclose(np.diff(time), 1.0)  # no jump back at 00:00:00
    assert time[-1] == pytest.approx(86400 + 19)
    info = next(c for c in log.columns if c.canonical == "time_s")
    assert info.unit == "clock"
    assert "passes midnight 1 time(s)" in info.conversion


def test_iso_8601_time_stamps():
    log = read("iso_time.csv")
    time = log.data["time_s"].to_numpy()
    assert time[0] == pytest.approx(10 * 3600 + 15 * 60)
    np.testing.assert_allclose(np.diff(time), 0.5)
    assert log.kind == "time_series"


def test_uneven_sampling_and_gap_are_warned_with_where():
    log = read("uneven_gaps.csv")
    assert log.kind == "time_series"
    (gap,) = _found(log, "input.log.time_gaps")
    assert gap.values["count"] == 1 and gap.values["after_line"] == 26
    assert _found(log, "input.log.uneven_sampling")


def test_dropouts_are_counted_per_column_with_lines():
    log = read("dropouts.csv")
    assert len(log.data) == 40
    by = {d.reason.split("'")[1]: d for d in log.dropped}
    assert by["ias_kt"].count == 1 and by["ias_kt"].lines == (7,)
    assert by["elevator_deg"].lines == (11,)
    assert by["stick_force_lbf"].count == 2 and by["stick_force_lbf"].lines == (16, 17)
    assert log.data["stick_force_lbf"].isna().sum() == 2


def test_single_spike_is_left_alone():
    log = read("spike.csv")
    assert log.data["ias_kt"].max() == 140.0
    assert log.dropped == ()


def test_constant_column_is_warned():
    log = read("constant_column.csv")
    assert any(f.subject.quantity == "stick_force_lbf" and f.values["value"] == 0
               for f in _found(log, "input.log.constant_column"))


def test_time_going_backwards_is_an_error_naming_the_line():
    with pytest.raises(InputFileError, match=r"line 32.*time goes backwards.*at line 31") as info:
        read("time_backwards.csv")
    assert info.value.line == 32 and info.value.column == "time_s"


def test_time_backwards_is_fine_across_flights():
    text = "flight,time_s,ias_kt,palt_ft,elevator_deg\n" + "".join(
        f"{f},{t},100,4500,-3\n" for f in ("1", "2") for t in range(35)
    )
    log = read_log(text.encode(), name="two.csv")
    assert log.kind == "time_series"
    assert sorted(set(log.data["flight"])) == ["1", "2"]


def test_duplicated_time_stamp_is_a_warning_with_line():
    log = read("time_duplicated.csv")
    assert len(log.data) == 40
    (dup,) = _found(log, "input.log.duplicate_times")
    assert dup.values["count"] == 1 and dup.values["lines"] == "14"


def test_header_only():
    with pytest.raises(InputFileError, match="header but no data rows"):
        read("header_only.csv")


@pytest.mark.parametrize(
    ("name", "match"),
    [
        ("binary.bin", "binary file"),
        ("page.html", "HTML or XML page"),
        ("data.json", "JSON file"),
    ],
)
def test_not_csv_at_all(name, match):
    with pytest.raises(InputFileError, match=match):
        read(name)


@pytest.mark.parametrize(
    ("content", "match"),
    [
        (b"", "empty"),
        (b"   \n\n", "empty"),
        (b"%PDF-1.7 ...", "PDF"),
        (b"PK\x03\x04rest", "spreadsheet"),
        (b"just one line of prose without delimiters\nand another\n", "no header row"),
        (b"\xff\xfei\x00a\x00s\x00", "UTF-16"),
    ],
)
def test_other_things_that_are_not_csv(content, match):
    with pytest.raises(InputFileError, match=match):
        read_log(content, name="upload.csv")


def test_missing_file():
    with pytest.raises(InputFileError, match="file not found"):
        read_log(LOGS / "no_such_file.csv")


def test_huge_file_reads_completely(tmp_path):
    n = 180_000
    t = np.arange(n) / 50.0
    rng = np.random.default_rng(0)
    frame = pd.DataFrame({
        "time_s": t, "ias_kt": 100 + rng.standard_normal(n), "pressure_alt_ft": 4500.0,
        "oat_c": 12.0 + 0.1 * rng.standard_normal(n),
        "elevator_deg": -3 + 0.1 * rng.standard_normal(n),
        "stick_force_lbf": rng.standard_normal(n), "nz_g": 1 + 0.01 * rng.standard_normal(n),
    })
    frame.loc[1000, "ias_kt"] = np.nan
    path = tmp_path / "huge.csv"
    frame.to_csv(path, index=False, float_format="%.4f")
    log = read_log(path)
    assert log.kind == "time_series"
    assert len(log.data) == n
    assert log.data["source_line"].iloc[-1] == n + 1
    assert [d.lines for d in log.dropped] == [(1002,)]
    np.testing.assert_allclose(log.data["time_s"], t, atol=1e-4)
    assert any(f.values["value"] == 4500 for f in _found(log, "input.log.constant_column"))


# --------------------------------------------------------------------- values and checks


def test_implausible_value_in_point_table_is_an_error():
    with pytest.raises(InputFileError, match=r"line 3, column 'ias_kt'.*350.*0\.\.\.300") as info:
        read("implausible_table.csv")
    assert info.value.line == 3


def test_isolated_implausible_sample_in_time_series_is_blanked_loudly():
    log = read("implausible_glitch.csv")
    assert np.isnan(log.data.loc[log.data["source_line"] == 19, "elevator_deg"]).all()
    (glitch,) = _found(log, "input.log.glitches_blanked")
    assert glitch.values["count"] == 1 and glitch.values["lines"] == "19"
    assert glitch.severity == "warning" and glitch.subject.quantity == "elevator_deg"
    assert any("blanked" in d.reason and d.lines == (19,) for d in log.dropped)


def test_many_implausible_samples_in_time_series_are_an_error():
    rows = "".join(f"{i * 0.1:.1f},{100 if i % 5 else 400},4500,-3\n" for i in range(50))
    with pytest.raises(InputFileError, match="ias_kt = 400"):
        read_log(("time_s,ias_kt,palt_ft,elevator_deg\n" + rows).encode(), name="x.csv")


@pytest.mark.parametrize(
    ("column", "value", "match"),
    [
        ("oat_c", "75", "oat_c = 75"),
        ("oat_c", "-80", "oat_c = -80"),
        ("elevator_deg", "46", "elevator_deg = 46"),
        ("pressure_alt_ft", "41000", "pressure_alt_ft = 41000"),
        ("pressure_alt_ft", "-2500", "pressure_alt_ft = -2500"),
        ("ias_kt", "-1", "ias_kt = -1"),
    ],
)
def test_plausibility_ranges(column, value, match):
    base = {"ias_kt": "100", "pressure_alt_ft": "4500", "oat_c": "12", "elevator_deg": "-3"}
    bad = dict(base, **{column: value})
    text = ",".join(base) + "\n" + ",".join(base.values()) + "\n" + ",".join(bad.values()) + "\n"
    with pytest.raises(InputFileError, match=match) as info:
        read_log(text.encode(), name="t.csv")
    assert info.value.line == 3 and info.value.column == column


def test_missing_required_column_names_the_nearest():
    with pytest.raises(InputFileError, match=r"no elevator column found.*'elev_pos_raw'") as info:
        read("missing_elevator.csv")
    assert info.value.line == 1


def test_missing_airspeed_lists_columns():
    with pytest.raises(InputFileError, match="no airspeed column found"):
        read_log(b"palt_ft,elevator_deg\n4500,-3\n", name="t.csv")


def test_optional_columns_missing_are_warned():
    log = read_log(b"ias_kt,palt_ft,elevator_deg\n100,4500,-3\n", name="t.csv")
    assert _found(log, "input.log.no_oat") and _found(log, "input.log.no_stick_force")


def test_not_a_number_cells_are_counted():
    log = read("not_a_number.csv")
    assert any("not a number in column 'elevator_deg'" in d.reason and "ERR32" in d.reason
               and d.lines == (2,) for d in log.dropped)
    assert np.isnan(log.data["elevator_deg"].iloc[0])


def test_overflowing_number_is_counted_not_kept_as_infinity():
    raw = b"ias_kt,palt_ft,elevator_deg,stick_force_lbf\n100,4500,-3,1e400\n"
    log = read_log(raw, name="t.csv")
    assert np.isnan(log.data["stick_force_lbf"].iloc[0])
    assert any("missing value in 'stick_force_lbf'" in d.reason and d.lines == (2,)
               for d in log.dropped)


@pytest.mark.parametrize("spaced", [False, True])
@pytest.mark.parametrize("decimal_comma", [False, True])
def test_missing_markers_with_and_without_spaces_after_the_delimiter(spaced, decimal_comma):
    # The reader parses cheaply when no cell starts with a space and no used
    # text-typed column holds a marker; the answer must not depend on it.
    sep, point = (";", ",") if decimal_comma else (",", ".")
    rows = [["0", "100.5", "4500", "-3.25", "2400"], ["1", "---", "4501", "inf", "N/A"],
            ["2", "101.5", "1e400", "-3.5", "?"], ["3", "102", "4503", "NaN", "2410"],
            ["", "", "", "", "---"]]
    gap = " " if spaced else ""
    raw = ("time_s;ias_kt;palt_ft;elevator_deg;rpm\n".replace(";", sep) + "\n".join(
        (sep + gap).join(c.replace(".", point) for c in r) for r in rows) + "\n").encode()
    log = read_log(raw, name="t.csv")
    np.testing.assert_array_equal(log.data["ias_kt"], [100.5, np.nan, 101.5, 102.0])
    np.testing.assert_array_equal(log.data["elevator_deg"], [-3.25, np.nan, -3.5, np.nan])
    np.testing.assert_array_equal(log.data["pressure_alt_ft"], [4500, 4501, np.nan, 4503])
    counted = {d.reason.split("'")[1]: d.lines for d in log.dropped if "missing" in d.reason}
    assert counted == {"ias_kt": (3,), "palt_ft": (4,), "elevator_deg": (3, 5)}
    assert any(d.reason == "blank line" and d.lines == (6,) for d in log.dropped)
    assert not any("not a number" in d.reason for d in log.dropped)


@pytest.mark.parametrize("ending", ["\n", "\r\n", "\r"])
def test_blank_lines_before_a_preamble_lose_no_data_row(ending):
    # With old Mac line ends, skipping the lines before the data once cost the
    # first data rows without a word; every row must come through, on its line.
    body = ["time_s,ias_kt,palt_ft,elevator_deg"] + [
        f"{0.2 * i:.1f},{100 + i % 3},4500,-3" for i in range(40)
    ]
    raw = ending.join(["", "", "", "logger 2.1", *body, ""]).encode()
    log = read_log(raw, name="t.csv")
    assert len(log.data) == 40 and log.n_rows_read == 40
    assert log.data["time_s"].iloc[0] == 0.0 and log.data["source_line"].iloc[0] == 6
    assert log.data["source_line"].iloc[-1] == 45


def test_line_with_extra_fields_is_dropped_and_counted():
    log = read("extra_fields.csv")
    assert len(log.data) == 39
    assert log.n_rows_read == 40
    assert 9 not in set(log.data["source_line"])
    assert any("more than the header's 7 fields" in d.reason and d.lines == (9,)
               for d in log.dropped)


def test_windows_code_page_file():
    log = read("cp1252.csv")
    assert _found(log, "input.log.cp1252")
    assert {c.canonical for c in log.columns} >= {"oat_c", "elevator_deg"}


def test_column_map_and_inverted_elevator(comma):
    log = read(
        "logger_names.csv",
        column_map={"AS_IND": "ias_mph", "ALT_BARO": "pressure_alt_ft", "temp_out": "oat_c",
                    "ELEV_POS": "elevator_deg", "RPM": "-", "NOT_THERE": "flap_deg"},
        inverted=("elevator_deg",),
    )
    np.testing.assert_allclose(log.data["ias_kt"], comma.data["ias_kt"], atol=0.01)
    np.testing.assert_allclose(log.data["elevator_deg"], comma.data["elevator_deg"], atol=1e-9)
    by = {c.canonical: c for c in log.columns}
    assert by["elevator_deg"].inverted and by["elevator_deg"].header == "ELEV_POS"
    assert _found(log, "input.log.sign_inverted")[0].values["header"] == "ELEV_POS"
    assert "'RPM'" in _found(log, "input.log.columns_ignored")[0].values["headers"]


# The logger's airspeed and altitude channels, which logger_names.csv does not name by itself.
BASE_MAP = {"AS_IND": "ias_mph", "ALT_BARO": "pressure_alt_ft"}


def test_inversion_skips_a_column_under_its_canonical_name(comma):
    # A typed point table headed 'elevator_deg' is trailing-edge down positive by
    # contract, whatever the logger of the same aircraft records.
    log = read("comma.csv", inverted=("elevator_deg",))
    np.testing.assert_array_equal(log.data["elevator_deg"], comma.data["elevator_deg"])
    assert not {c.canonical: c for c in log.columns}["elevator_deg"].inverted
    note = _found(log, "input.log.not_inverted_standard_name")
    assert len(note) == 1 and note[0].subject.quantity == "elevator_deg"
    assert "[logger] columns" in note[0].message  # the message says how to fix it


def test_inversion_skips_a_synonym_that_is_not_in_the_column_map(comma):
    # 'ELEV_POS' is understood by itself as a synonym of the elevator.
    plain = read("logger_names.csv", column_map=BASE_MAP)
    log = read("logger_names.csv", column_map=BASE_MAP,
               inverted=("elevator_deg", "stick_force_lbf"))
    for name in ("elevator_deg", "stick_force_lbf"):
        np.testing.assert_array_equal(log.data[name], plain.data[name])
    assert not any(c.inverted for c in log.columns)
    assert {(f.values["header"], f.subject.quantity)
            for f in _found(log, "input.log.not_inverted_standard_name")} == {
        ("ELEV_POS", "elevator_deg"), ("FORCE_N", "stick_force_lbf")}
    assert not _found(log, "input.log.sign_inverted")


def test_inversion_applies_to_a_mapped_column_only(comma):
    log = read("logger_names.csv",
               column_map={**BASE_MAP, "ELEV_POS": "elevator_deg"},
               inverted=("elevator_deg", "stick_force_lbf"))
    plain = read("logger_names.csv", column_map=BASE_MAP)
    np.testing.assert_array_equal(log.data["elevator_deg"], -plain.data["elevator_deg"])
    np.testing.assert_array_equal(log.data["stick_force_lbf"], plain.data["stick_force_lbf"])
    by = {c.canonical: c for c in log.columns}
    assert by["elevator_deg"].inverted and not by["stick_force_lbf"].inverted
    assert [f.values["header"] for f in _found(log, "input.log.sign_inverted")] == ["ELEV_POS"]
    assert [f.values["header"] for f in _found(log, "input.log.not_inverted_standard_name")] == [
        "FORCE_N"]


def test_unknown_columns_are_listed_not_silently_dropped():
    log = read("logger_names.csv", column_map={"AS_IND": "ias_kt", "ALT_BARO": "palt_ft"})
    (unknown,) = _found(log, "input.log.columns_not_understood")
    assert "'RPM'" in unknown.values["headers"] and "'TEMP_OUT'" in unknown.values["headers"]
    assert "RPM" not in log.data


def test_column_map_to_a_non_canonical_name_is_an_error():
    with pytest.raises(InputFileError, match="not a canonical name"):
        read("logger_names.csv", column_map={"AS_IND": "speedy"})


def test_two_columns_for_one_quantity_is_an_error():
    with pytest.raises(InputFileError, match="both 'ias_kt' and 'kias'"):
        read_log(b"ias_kt,kias,palt_ft,elevator_deg\n100,100,4500,-3\n", name="t.csv")


def test_inverted_name_must_be_canonical():
    with pytest.raises(InputFileError, match="declared inverted"):
        read("comma.csv", inverted=("elevator",))


def test_kind_can_be_forced(comma):
    assert read("comma.csv", kind="point_table").kind_reason == "forced by the caller"
    with pytest.raises(InputFileError, match="no time column"):
        read("semicolon_decimal_comma.csv", kind="time_series")


def test_flight_labels_stay_text():
    log = read_log(b"flight,ias_kt,palt_ft,elevator_deg\n3,100,4500,-3\n3,90,4500,-4\n",
                   name="t.csv")
    assert log.data["flight"].tolist() == ["3", "3"]


def test_bytes_and_file_like_sources(comma):
    raw = (LOGS / "comma.csv").read_bytes()
    from_bytes = read_log(raw, name="upload.csv")
    from_file = read_log(io.BytesIO(raw), name="upload.csv")
    assert from_bytes.source == "upload.csv"
    pd.testing.assert_frame_equal(from_bytes.data, comma.data)
    pd.testing.assert_frame_equal(from_file.data, comma.data)


# --------------------------------------------------------------------- loading sheets


def test_loading_sheet():
    sheet = read_loading_sheet(LOGS / "loading_sheet.toml")
    assert sheet.flight == "3"
    assert sheet.date == dt.date(2026, 6, 14)
    assert sheet.takeoff_weight_lb == 1520.0
    assert sheet.takeoff_cg_in == 78.4 and sheet.takeoff_cg_pct_mac is None
    assert sheet.takeoff_fuel_gal == 24.0
    assert sheet.fuel_flow_gph == pytest.approx(7.5)
    assert sheet.flap_deg == 0.0
    assert sheet.stab_setting == "original" and sheet.stab_incidence_deg == 0.0


def test_loading_sheet_in_si_and_percent_mac():
    sheet = read_loading_sheet(LOGS / "loading_sheet_mac.toml")
    assert sheet.takeoff_weight_lb == pytest.approx(700 / 0.45359237)  # exact definition of lb
    assert sheet.takeoff_cg_pct_mac == 27.5 and sheet.takeoff_cg_in is None
    assert sheet.takeoff_fuel_gal == pytest.approx(90 / 3.785411784)  # exact US gallon
    assert sheet.fuel_flow_gph is None and sheet.flap_deg is None


GOOD_SHEET = 'flight = "1"\n[takeoff]\nweight = "1500 lb"\ncg = "78 in"\nfuel = "20 gal"\n'


@pytest.mark.parametrize(
    ("text", "match"),
    [
        ("flight = \n", "not a valid TOML"),
        ('flight = "1"\n', r"missing \[takeoff\]"),
        (GOOD_SHEET.replace('fuel = "20 gal"\n', ""), "missing key 'takeoff.fuel'"),
        (GOOD_SHEET.replace('"1500 lb"', '"1500"'), "has no unit"),
        (GOOD_SHEET.replace('"1500 lb"', '"1500 ft"'), "expected a mass"),
        (GOOD_SHEET.replace('"1500 lb"', '"-5 lb"'), "outside the plausible range"),
        (GOOD_SHEET.replace('"78 in"', "78"), "bare value"),
        (GOOD_SHEET.replace("weight", "wieght"),
         "unknown key 'takeoff.wieght'; did you mean 'takeoff.weight'"),
        (GOOD_SHEET + "[fuel]\nflow = \"-1 gal/h\"\n", "fuel.flow"),
        (GOOD_SHEET + "[config]\nstab_incidence = \"40 deg\"\n", "config.stab_incidence"),
        (GOOD_SHEET + "pilot = \"x\"\n", "unknown key 'takeoff.pilot'"),
        (GOOD_SHEET.replace('flight = "1"', "date = 5"), "TOML date"),
        (GOOD_SHEET.replace('flight = "1"\n', ""), "missing key 'flight'"),
    ],
)
def test_loading_sheet_errors(text, match):
    with pytest.raises(InputFileError, match=match):
        read_loading_sheet(text.encode(), name="sheet.toml")


# --------------------------------------------------------------------- properties


def check_log(log: LogRead) -> None:
    assert isinstance(log, LogRead)
    assert log.kind in ("point_table", "time_series")
    assert "source_line" in log.data
    assert log.data["source_line"].is_monotonic_increasing
    assert len(log.data) <= log.n_rows_read
    for name in log.data.columns:
        if name in ("flight", "event", "source_line"):
            continue
        values = log.data[name].to_numpy(dtype=float)
        assert not np.isinf(values).any()


@settings(max_examples=200, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(st.binary(max_size=3000))
def test_arbitrary_bytes_give_a_log_or_a_trimlog_error(raw):
    try:
        log = read_log(raw, name="fuzz.bin")
    except TrimlogError:
        return
    check_log(log)


HEADERS = ["time_s", "t", "ias_kt", "IAS (mph)", "palt", "alt_m", "elevator_deg", "Elev [rad]",
           "oat_c", "OAT (F)", "fs_N", "nz", "flight", "event", "rpm", "", "ias [bogus]",
           "time_ms", "cg [%MAC]", "cg_in", "weight_lb"]
CELLS = st.one_of(
    st.floats(-1e5, 1e5, allow_nan=False).map(lambda v: f"{v:.3f}"),
    st.integers(-100, 500).map(str),
    st.sampled_from(["", "NaN", "---", "N/A", "abc", "12:00:01.5", "23:59:59", "1,5", "  ",
                     "2026-06-14T10:00:00Z", "1e400", "inf", '"q"']),
)


@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(
    headers=st.lists(st.sampled_from(HEADERS), min_size=1, max_size=8),
    delimiter=st.sampled_from([",", ";", "\t", "|"]),
    rows=st.lists(st.lists(CELLS, min_size=0, max_size=9), max_size=40),
    preamble=st.lists(st.text(max_size=20), max_size=3),
    unit_row=st.booleans(),
)
def test_arbitrary_tables_give_a_log_or_a_trimlog_error(
    headers, delimiter, rows, preamble, unit_row
):
    lines = [p.replace("\n", " ") for p in preamble] + [delimiter.join(headers)]
    if unit_row:
        lines.append(delimiter.join("kt" for _ in headers))
    lines += [delimiter.join(r) for r in rows]
    raw = "\n".join(lines).encode("utf-8", errors="replace")
    try:
        log = read_log(raw, name="fuzz.csv")
    except TrimlogError:
        return
    check_log(log)


@settings(max_examples=100, deadline=None)
@given(
    nan_mask=st.lists(st.booleans(), min_size=35, max_size=35),
    decimal_comma=st.booleans(),
)
def test_nan_patterns_are_counted_exactly(nan_mask, decimal_comma):
    delimiter = ";" if decimal_comma else ","
    rows = []
    for i, blank in enumerate(nan_mask):
        ias = "" if blank else f"{100 + i * 0.01:.2f}"
        cells = [f"{i * 0.2:.1f}", ias, "4500.5", "-3.25"]
        if decimal_comma:
            cells = [c.replace(".", ",") for c in cells]
        rows.append(delimiter.join(cells))
    text = delimiter.join(["time_s", "ias_kt", "palt_ft", "elevator_deg"]) + "\n" + "\n".join(rows)
    log = read_log(text.encode(), name="nan.csv")  # altitude is never empty: every row stays
    assert len(log.data) == 35
    missing = sum(nan_mask)
    counted = sum(d.count for d in log.dropped if "'ias_kt'" in d.reason)
    assert counted == missing
    assert log.data["ias_kt"].isna().sum() == missing
    assert log.data["pressure_alt_ft"].iloc[0] == 4500.5
