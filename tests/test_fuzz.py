"""Property-based fuzzing of everything that reads user input.

Each test feeds generated input (arbitrary bytes, arbitrary headers, random
missing-value patterns, delimiters and decimal marks, truncated files, huge
numbers, unicode) to one entry point and checks the only two outcomes the
package allows: a valid result, or a :class:`~trimlog.errors.TrimlogError`
whose message is non-empty and names the input.  Any other exception fails
the test (hypothesis then shrinks it to a minimal reproducer).

The generated tables, profiles and loading sheets are invented data.
"""

from __future__ import annotations

import dataclasses
import json
import math
import re
import tomllib
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from trimlog.errors import TrimlogError
from trimlog.input.headers import TEXT_COLUMNS
from trimlog.input.loading_sheet import LoadingSheet, read_loading_sheet
from trimlog.input.logs import LogRead, read_log
from trimlog.input.profile import AircraftProfile, parse_profile
from trimlog.input.units import parse_quantity, parse_unit
from trimlog.pipeline import chain as analysis
from trimlog.views import terminal as summary
from trimlog.views.json_export import analysis_to_dict

SAMPLES = Path(__file__).resolve().parent.parent / "sample_logs"
PROFILE_TEXT = (SAMPLES / "tinkerfinch_tf2.toml").read_text(encoding="utf-8")
PROFILE = parse_profile(PROFILE_TEXT, "tinkerfinch_tf2.toml")
SHEET_TEXT = (SAMPLES / "flight2.loading.toml").read_text(encoding="utf-8")
NAME = "fuzz_input.csv"

FUZZ = settings(max_examples=150, suppress_health_check=[HealthCheck.too_slow])
# The full chain costs a few tenths of a second per table on this machine.
FUZZ_CHAIN = settings(max_examples=60, suppress_health_check=[HealthCheck.too_slow])

_NOT_A_NUMBER = re.compile(r"\b(nan|inf|infinity)\b", re.IGNORECASE)


def assert_own_error(exc: BaseException, name: str) -> None:
    """A deliberate error: the package's type, a message, the input named in it."""
    assert isinstance(exc, TrimlogError), f"{type(exc).__name__}: {exc}"
    message = str(exc)
    assert message.strip(), "empty error message"
    assert name in message, f"the message does not name {name!r}: {message}"


def assert_valid_log(log: LogRead, raw: bytes) -> None:
    """What a successful read promises: canonical finite columns, real line numbers."""
    assert log.kind in ("point_table", "time_series")
    assert log.source == NAME
    data = log.data
    assert len(data) >= 1
    n_lines = len(re.split(rb"\r\n|\r|\n", raw))
    lines = data["source_line"].to_numpy()
    assert ((lines >= 1) & (lines <= n_lines)).all()
    assert log.n_rows_read >= len(data)
    for column in data.columns:
        if column in TEXT_COLUMNS or column == "source_line":
            continue
        values = data[column].to_numpy(dtype=float)
        assert not np.isinf(values).any(), f"infinite value in {column}"
    for dropped in log.dropped:
        assert dropped.count >= 0 and dropped.reason


# --------------------------------------------------------------------------- TOML writing


def toml_value(value: object) -> str:
    """One TOML value (tomllib cannot write; the generated values are simple)."""
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, int):
        return str(value)
    if isinstance(value, float):
        if math.isnan(value):
            return "nan"
        if math.isinf(value):
            return "inf" if value > 0 else "-inf"
        return repr(value)
    if isinstance(value, str):
        return json.dumps(value, ensure_ascii=False)
    if isinstance(value, list):
        return "[" + ", ".join(toml_value(v) for v in value) + "]"
    if isinstance(value, dict):
        return "{" + ", ".join(f"{json.dumps(k)} = {toml_value(v)}" for k, v in value.items()) + "}"
    if hasattr(value, "isoformat"):
        return value.isoformat()
    raise TypeError(type(value))


def toml_dump(doc: dict) -> str:
    top = [f"{json.dumps(k)} = {toml_value(v)}" for k, v in doc.items() if not isinstance(v, dict)]
    parts = ["\n".join(top)]
    for section, table in doc.items():
        if isinstance(table, dict):
            body = "\n".join(f"{json.dumps(k)} = {toml_value(v)}" for k, v in table.items())
            parts.append(f"[{json.dumps(section)}]\n{body}")
    return "\n\n".join(parts) + "\n"


def test_toml_writer_round_trips_the_sample_profile():
    doc = tomllib.loads(PROFILE_TEXT)
    assert tomllib.loads(toml_dump(doc)) == doc


UNITS = ["in", "ft", "m", "mm", "kt", "mph", "km/h", "deg", "rad", "lb", "kg", "lbf", "N",
         "ft^2", "m^2", "gal", "l", "gal/h", "%MAC", "%", "degC", "K", "s", "g", "furlong",
         "", "in in", "1/s", "lb/gal", "°", "µm", "ft**2"]
numbers = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-(10**30), max_value=10**30),
    st.sampled_from(["1e400", "-1e400", "1e-400", "0", "-0", "nan", "inf", ".", "1e", "+-1",
                     "١٢", "1_000"]),
)
quantity_text = st.builds(lambda n, u: f"{n} {u}", numbers, st.sampled_from(UNITS))
toml_scalars = st.one_of(
    quantity_text,
    st.text(max_size=30),
    st.floats(allow_nan=True, allow_infinity=True),
    st.integers(min_value=-(2**63), max_value=2**63 - 1),
    st.booleans(),
    st.lists(st.one_of(st.floats(allow_nan=True), st.integers(-500, 500)), max_size=6),
)


def mutate(doc: dict, data: st.DataObject) -> dict:
    """Replace, add or delete a few keys of a TOML document."""
    doc = json.loads(json.dumps(doc, default=str))
    for _ in range(data.draw(st.integers(1, 3), label="n mutations")):
        sections = [k for k, v in doc.items() if isinstance(v, dict)]
        section = data.draw(st.sampled_from([None, *sections]), label="section")
        table = doc if section is None else doc[section]
        keys = [k for k in table if not isinstance(table[k], dict)]
        action = data.draw(st.sampled_from(["replace", "delete", "add"]), label="action")
        if action != "add" and keys:
            key = data.draw(st.sampled_from(keys), label="key")
            if action == "delete":
                del table[key]
                continue
        else:
            key = data.draw(st.text(min_size=1, max_size=12), label="new key")
        table[key] = data.draw(toml_scalars, label="value")
    return doc


# --------------------------------------------------------------------------- units


@FUZZ
@given(st.text(max_size=40))
def test_parse_unit_is_a_unit_or_a_unit_error(token):
    try:
        parse_unit(token)
    except Exception as exc:  # noqa: BLE001 - the point is to see which type it is
        assert isinstance(exc, TrimlogError), f"{type(exc).__name__}: {exc}"
        assert str(exc).strip()


@FUZZ
@given(st.one_of(quantity_text, st.text(max_size=40), numbers),
       st.sampled_from(["in", "kt", "ft^2", "lb", "deg", "percent", "gal/h"]))
@example("1e400 in", "in")  # overflows float to inf
@example(float("nan"), "deg")
def test_parse_quantity_is_finite_or_names_the_key(text, unit):
    try:
        value = parse_quantity(text, unit, key="fuzz.key")
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, "fuzz.key")
        return
    assert isinstance(value, float)
    assert math.isfinite(value), f"{text!r} -> {value}"


# --------------------------------------------------------------------------- CSV reader


@FUZZ
@given(st.binary(max_size=3000))
def test_read_log_of_arbitrary_bytes(raw):
    try:
        log = read_log(raw, name=NAME)
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, NAME)
        return
    assert_valid_log(log, raw)


HEADERS = [
    "time_s", "Time (s)", "clock", "ias_kt", "IAS (mph)", "airspeed [km/h]", "cas_kt",
    "pressure_alt_ft", "PALT [m]", "alt", "oat_c", "OAT (F)", "temp_K", "elevator_deg",
    "ELEV (rad)", "elev", "stick_force_lbf", "Fs [N]", "nz_g", "weight_lb", "mass [kg]",
    "cg_in", "cg_pct_mac", "flight", "event", "fuel_gal", "flap_deg", "vs_fpm",
    "stab_incidence_deg", "ias [furlong/fortnight]", "elevator [lbf]", "ias_kt",
]
REQUIRED = ["ias_kt", "pressure_alt_ft", "elevator_deg"]
NA_CELLS = ["", "NaN", "---", "N/A", "-", "null", "inf", "-inf", "#N/A"]
cells = st.one_of(
    st.floats(allow_nan=True, allow_infinity=True, width=64),
    st.floats(min_value=-300, max_value=300),
    st.sampled_from(NA_CELLS + ["1e400", "-1e999", "9" * 400, "12:30:05", "2026-06-14T10:00:00",
                                "25:61:61", "1,5", "1.5.5", "0x10", "\u00e9l\u00e9vateur",
                                "\U0001f680", '"', '""', "a\tb"]),
    st.text(max_size=8),
)


@st.composite
def csv_files(draw) -> bytes:
    """A table that looks like a CSV log, with random damage."""
    delimiter = draw(st.sampled_from([",", ";", "\t", "|"]))
    decimal = draw(st.sampled_from([".", ","])) if delimiter != "," else "."
    headers = list(REQUIRED) if draw(st.booleans()) else []
    headers += draw(st.lists(st.one_of(st.sampled_from(HEADERS), st.text(max_size=10)),
                             max_size=6))
    if not headers:
        headers = ["x"]
    n_rows = draw(st.integers(0, 40))
    rows = []
    for _ in range(n_rows):
        row = []
        for _ in headers:
            cell = draw(cells)
            if isinstance(cell, float):
                cell = repr(cell).replace(".", decimal) if math.isfinite(cell) else str(cell)
            row.append(cell)
        rows.append(row)
    lines = [delimiter.join(headers)]
    if draw(st.booleans()):
        lines.insert(0, draw(st.text(max_size=40)))  # a metadata preamble line
    if draw(st.booleans()):
        lines.append(delimiter.join(draw(st.sampled_from(["kt", "ft", "deg", "", "lbf"]))
                                    for _ in headers))
    lines += [delimiter.join(r) for r in rows]
    newline = draw(st.sampled_from(["\n", "\r\n", "\r"]))
    text = newline.join(lines) + (newline if draw(st.booleans()) else "")
    raw = text.encode(draw(st.sampled_from(["utf-8", "utf-8-sig", "cp1252"])), errors="replace")
    if draw(st.booleans()):
        raw = raw[: draw(st.integers(0, len(raw)))]  # truncated: the logger lost power
    return raw


@FUZZ
@given(csv_files(), st.sampled_from([None, "point_table", "time_series"]))
def test_read_log_of_damaged_tables(raw, kind):
    try:
        log = read_log(raw, name=NAME, kind=kind)
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, NAME)
        return
    assert_valid_log(log, raw)


@FUZZ
@given(st.dictionaries(st.text(max_size=10), st.text(max_size=20), max_size=4),
       st.lists(st.text(max_size=15), max_size=3), csv_files())
def test_read_log_with_arbitrary_column_map_and_inversions(column_map, inverted, raw):
    try:
        log = read_log(raw, name=NAME, column_map=column_map, inverted=inverted)
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, NAME)
        return
    assert_valid_log(log, raw)


@FUZZ
@given(st.text(max_size=25), st.sampled_from(HEADERS[:20]))
def test_read_log_with_arbitrary_unit_in_the_header(unit, stem):
    name = re.sub(r"[\[(].*", "", stem).strip() or "ias"
    raw = (f"{name} [{unit}],ias_kt,pressure_alt_ft,elevator_deg\n"
           "1,90,5000,-2\n2,80,5000,-3\n3,70,5000,-4\n").encode()
    try:
        log = read_log(raw, name=NAME)
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, NAME)
        return
    assert_valid_log(log, raw)


# --------------------------------------------------------------------------- profile


def assert_valid_profile(profile: AircraftProfile) -> None:
    for f in dataclasses.fields(profile):
        value = getattr(profile, f.name)
        if isinstance(value, float):
            assert math.isfinite(value), f"{f.name} = {value}"
        if isinstance(value, tuple) and value and isinstance(value[0], float):
            assert all(math.isfinite(v) for v in value), f"{f.name} = {value}"
    assert profile.mac_in > 0 and profile.wing_area_ft2 > 0
    assert profile.cg_forward_in < profile.cg_aft_in


@FUZZ
@given(st.text(max_size=400))
def test_parse_profile_of_arbitrary_text(text):
    try:
        profile = parse_profile(text, "fuzz_profile.toml")
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, "fuzz_profile.toml")
        return
    assert_valid_profile(profile)


@FUZZ
@given(st.data())
def test_parse_profile_with_mutated_keys(data):
    text = toml_dump(mutate(tomllib.loads(PROFILE_TEXT), data))
    try:
        profile = parse_profile(text, "fuzz_profile.toml")
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, "fuzz_profile.toml")
        return
    assert_valid_profile(profile)


#: The demo profile's own calibration row (its values come from the demo's calibration flight).
CALIBRATION = re.search(r"^ias = \[[^\]]*\]$", PROFILE_TEXT, re.M).group(0)
_FIRST = CALIBRATION[len("ias = ["):].split(",")[0]
_LAST = CALIBRATION[:-1].split(",")[-1]


@pytest.mark.parametrize(("old", "new", "key"), [
    ('wing_area = "120 ft^2"', 'wing_area = "1e400 ft^2"', "wing_area"),
    ('wing_span = "27 ft"', 'wing_span = "1e400 ft"', "wing_span"),
    ('current_incidence = "-1.0 deg"', 'current_incidence = "1e400 deg"', "current_incidence"),
    ('cas = "110 kt"', 'cas = "1e400 kt"', "cas"),
    ('weight = "1550 lb"', 'weight = "1e400 lb"', "weight"),
    ('arm = "62 in"', 'arm = "1e400 in"', "arm"),
    ('density = "6.0 lb/gal"', 'density = "1e400 lb/gal"', "density"),
    ('elevator_reserve = "3 deg"', 'elevator_reserve = "1e400 deg"', "elevator_reserve"),
    (CALIBRATION, CALIBRATION.replace(f"[{_FIRST},", "[nan,", 1), "ias"),
    (CALIBRATION, CALIBRATION.replace(f",{_LAST}]", ", inf]", 1), "ias"),
    ('unit = "kt"', 'unit = "ft"', "unit"),
    ('unit = "kt"', 'unit = ""', "unit"),
])
def test_profile_refuses_non_finite_or_wrong_unit_values(old, new, key):
    text = PROFILE_TEXT.replace(old, new, 1)
    assert text != PROFILE_TEXT
    with pytest.raises(TrimlogError, match=key) as caught:
        parse_profile(text, "fuzz_profile.toml")
    assert_own_error(caught.value, "fuzz_profile.toml")


# --------------------------------------------------------------------------- loading sheet


def assert_valid_sheet(sheet: LoadingSheet) -> None:
    for f in dataclasses.fields(sheet):
        value = getattr(sheet, f.name)
        if isinstance(value, float):
            assert math.isfinite(value), f"{f.name} = {value}"
    assert sheet.flight
    assert sheet.takeoff_weight_lb > 0
    assert (sheet.takeoff_cg_in is None) != (sheet.takeoff_cg_pct_mac is None)


@FUZZ
@given(st.one_of(st.binary(max_size=600), st.text(max_size=400).map(str.encode)))
def test_read_loading_sheet_of_arbitrary_bytes(raw):
    try:
        sheet = read_loading_sheet(raw, name="fuzz.loading.toml")
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, "fuzz.loading.toml")
        return
    assert_valid_sheet(sheet)


@FUZZ
@given(st.data())
def test_read_loading_sheet_with_mutated_keys(data):
    raw = toml_dump(mutate(tomllib.loads(SHEET_TEXT), data)).encode("utf-8")
    try:
        sheet = read_loading_sheet(raw, name="fuzz.loading.toml")
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, "fuzz.loading.toml")
        return
    assert_valid_sheet(sheet)


# --------------------------------------------------------------------------- whole chain

TABLE_HEADER = "flight,ias_kt,pressure_alt_ft,oat_c,ELEV_POS,stick_force_lbf,weight_lb,cg_in\n"


@st.composite
def point_tables(draw) -> bytes:
    """A point table with valid headers and random (mostly plausible) values."""
    def value(low: float, high: float) -> str:
        x = draw(st.one_of(
            st.floats(min_value=low, max_value=high),
            st.floats(allow_nan=True, allow_infinity=True),
            st.sampled_from([low, high, 0.0]),
        ))
        return "" if math.isnan(x) else repr(x)

    rows = []
    for _ in range(draw(st.integers(1, 14))):
        rows.append(",".join([
            draw(st.sampled_from(["1", "2", "3"])),
            value(40.0, 160.0), value(0.0, 12000.0), value(-30.0, 40.0),
            value(-25.0, 15.0), value(-30.0, 30.0), value(1000.0, 1650.0), value(64.0, 76.0),
        ]))
    return (TABLE_HEADER + "\n".join(rows) + "\n").encode("utf-8")


@FUZZ_CHAIN
@given(point_tables())
@example((TABLE_HEADER + "1,40.0,0.0,0.0,0.0,0.0,1000.0,0.0\n").encode())  # CG far out of limits
def test_whole_chain_on_random_point_tables(raw):
    try:
        flights = analysis.load_flight_bytes(raw, NAME, PROFILE)
        result = analysis.analyze(flights, PROFILE)
    except Exception as exc:  # noqa: BLE001
        assert_own_error(exc, NAME)
        return
    payload = analysis_to_dict(result)
    json.dumps(payload, allow_nan=False)
    for key in ("stick_fixed", "stick_fixed_two_stage", "stick_free"):
        block = payload["neutral_point"][key]
        if block is not None and not block["identifiable"]:
            assert block["pct_mac"] is None and block["ci95_pct_mac"] is None
            assert block["reason"], f"{key}: not identifiable without a reason"
    text = summary.render(result, color=False)
    assert not _NOT_A_NUMBER.search(text), _NOT_A_NUMBER.search(text)

