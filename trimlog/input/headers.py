"""Understanding log column headers: which quantity, in which unit.

A header is read as *quantity* plus an optional *unit*.  The quantity is
recognised from a small table of synonyms (``ias``, ``kias``, ``airspeed``
all mean indicated airspeed); the unit is whatever follows, in brackets
(``airspeed [km/h]``, ``Elevator (deg)``) or after a separator
(``ias_mph``, ``stick_force_N``, ``alt_m``), parsed with the package's one
unit registry (:func:`trimlog.input.units.parse_unit`).  A unit can also come from
a second header row.  The column is converted once, as a whole, to the
canonical unit of its quantity (see ``DEVELOPERS.md``).

A header whose name is a known quantity but whose remainder is not a unit
(``alt_gps``, ``elev_raw``) is *not* taken as that quantity: it is an unknown
column, listed in a warning, so that a GPS altitude is never used as a
pressure altitude by accident.

The module also holds the column-level work of :mod:`trimlog.input.logs`:
telling values from words in cells, mapping a file's columns (with the
aircraft profile's column map), converting their values, and the checks on
them (kind of input, time order and sampling, plausibility, dead sensors).
"""

from __future__ import annotations

import csv
import difflib
import functools
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass, replace
from typing import Literal, NamedTuple

import numpy as np
import pandas as pd

from trimlog.errors import InputFileError, UnitError
from trimlog.findings import Finding, Severity, Subject, Value, finding
from trimlog.input.units import Q_, parse_unit, unit_factor


@dataclass(frozen=True)
class Quantity:
    """One canonical quantity of the samples table.

    Parameters
    ----------
    canonical : str
        Canonical column name, e.g. ``"ias_kt"``.
    unit : str or None
        Canonical unit, spelt as the unit registry knows it (``"knot"``,
        ``"standard_gravity"``); None for text columns.
    description : str
        Words for messages.
    """

    canonical: str
    unit: str | None
    description: str


QUANTITIES: dict[str, Quantity] = {
    q.canonical: q
    for q in (
        Quantity("time_s", "second", "time"),
        Quantity("ias_kt", "knot", "indicated airspeed"),
        Quantity("cas_kt", "knot", "calibrated airspeed"),
        Quantity("pressure_alt_ft", "foot", "pressure altitude"),
        Quantity("oat_c", "degC", "outside air temperature"),
        Quantity("elevator_deg", "degree", "elevator deflection"),
        Quantity("stick_force_lbf", "lbf", "stick force"),
        Quantity("nz_g", "standard_gravity", "normal load factor"),
        Quantity("weight_lb", "lb", "weight"),
        Quantity("cg_in", "inch", "CG station"),
        Quantity("cg_pct_mac", "percent", "CG in %MAC"),
        Quantity("fuel_gal", "gallon", "fuel on board"),
        Quantity("flap_deg", "degree", "flap deflection"),
        Quantity("vs_fpm", "foot / minute", "vertical speed"),
        Quantity("stab_incidence_deg", "degree", "stabilizer incidence"),
        Quantity("gps_groundspeed_kt", "knot", "GPS ground speed"),
        Quantity("gps_track_deg", "degree", "GPS ground track (degrees true)"),
        Quantity("flight", None, "flight label"),
        Quantity("event", None, "event marker"),
    )
}

Kind = Literal["point_table", "time_series"]

TEXT_COLUMNS = ("flight", "event")

#: Plausible ranges of canonical columns [canonical units]; outside is an error
#: (or, for a few isolated time-series samples, a blanked cell and a loud warning).
PLAUSIBLE_RANGES: dict[str, tuple[float, float]] = {
    "ias_kt": (0.0, 300.0),
    "cas_kt": (0.0, 300.0),
    "elevator_deg": (-45.0, 45.0),
    "oat_c": (-70.0, 60.0),
    "pressure_alt_ft": (-2000.0, 40000.0),
    "nz_g": (-5.0, 10.0),  # common practice, no source: beyond any light-aircraft envelope
    "weight_lb": (1e-9, 1e6),
    "gps_groundspeed_kt": (0.0, 500.0),
    "gps_track_deg": (-360.0, 720.0),  # 0..360 or -180..180 as loggers write it
}

# Quantities that vary in flight: constant over a whole log means a dead sensor.
SHOULD_VARY = ("ias_kt", "cas_kt", "pressure_alt_ft", "elevator_deg", "stick_force_lbf", "nz_g",
                "vs_fpm")


# Quantity synonyms, as normalised header words (lower case, words joined by "_").
_SYNONYMS: dict[str, tuple[str, ...]] = {
    "time_s": ("time", "t", "timestamp", "clock", "elapsed", "elapsed_time", "utc", "time_utc",
               "date_time", "datetime", "gps_time", "log_time"),
    "ias_kt": ("ias", "kias", "airspeed", "indicated_airspeed", "air_speed", "as", "speed", "asi"),
    "cas_kt": ("cas", "kcas", "calibrated_airspeed"),
    "pressure_alt_ft": ("palt", "pressure_alt", "pressure_altitude", "press_alt", "alt",
                        "altitude", "baro_alt", "hp", "p_alt"),
    "oat_c": ("oat", "temp", "temperature", "outside_air_temp", "outside_air_temperature", "sat"),
    "elevator_deg": ("elev", "elevator", "de", "delta_e", "elevator_pos", "elev_pos",
                     "elevator_position", "elevator_angle"),
    "stick_force_lbf": ("force", "stick_force", "fs", "stick", "pull_force", "column_force",
                        "control_force", "fe"),
    "nz_g": ("nz", "load_factor", "g", "n", "normal_accel", "normal_acceleration", "accel_z",
             "g_load"),
    "weight_lb": ("weight", "gw", "gross_weight", "wt", "mass"),
    "cg_in": ("cg", "cg_station", "cg_arm", "cg_position"),
    "cg_pct_mac": ("cg_pct", "cg_mac", "cg_pct_mac", "cg_percent_mac", "mac_pct"),
    "fuel_gal": ("fuel", "fuel_qty", "fuel_quantity", "fuel_remaining", "fuel_on_board", "fob"),
    "flap_deg": ("flap", "flaps", "flap_pos", "flap_position", "flap_angle"),
    "vs_fpm": ("vs", "vsi", "vertical_speed", "climb_rate", "roc", "rate_of_climb", "vz"),
    "stab_incidence_deg": ("stab", "incidence", "stab_incidence", "stabilizer",
                           "stabilizer_incidence", "tail_incidence", "it"),
    "gps_groundspeed_kt": ("gs", "gps_gs", "groundspeed", "ground_speed", "gps_groundspeed",
                           "gps_ground_speed", "gps_speed", "gnd_speed", "gnd_spd", "sog",
                           "speed_over_ground"),
    "gps_track_deg": ("trk", "track", "gps_track", "gps_trk", "ground_track", "true_track",
                      "track_true", "gps_track_true", "cog", "course_over_ground", "gps_course"),
    "flight": ("flight", "flight_no", "flight_number", "flt", "sortie"),
    "event": ("event", "marker", "mark", "evt", "point", "test_point", "tp", "events", "leg"),
}

_WORD_TO_CANONICAL: dict[str, str] = {}
for _canonical, _words in _SYNONYMS.items():
    for _word in _words:
        _WORD_TO_CANONICAL[_word] = _canonical
# The canonical name itself, and the canonical quantity stem, are always understood.
for _canonical in QUANTITIES:
    _WORD_TO_CANONICAL.setdefault(_canonical, _canonical)

MAX_LISTED = 8
ISO_STAMP = re.compile(
    r"^\d{4}-\d{2}-\d{2}([T ]\d{1,2}:\d{2}(:\d{2}([.,]\d+)?)?)?(Z|[+-]\d{2}:?\d{2})?$"
)
_BRACKETED = re.compile(r"^(?P<name>.*?)\s*[\[(\{](?P<unit>[^\])\}]*)[\])\}]\s*$")
_SEPARATORS = re.compile(r"[\s_\-./]+")


@dataclass(frozen=True)
class HeaderMeaning:
    """What a header was understood to mean.

    Parameters
    ----------
    canonical : str
        Canonical column name.
    unit_text : str
        The unit as understood (registry spelling), empty for text columns.
    scale, offset : float
        Conversion ``canonical = scale * value + offset``.
    unit_assumed : bool
        True when no unit was written and the canonical unit was assumed.
    from_map : bool
        True when the header was sent to its quantity by the aircraft
        profile's column map (the logger's own channel name), False when it
        was understood by itself (a canonical name or a synonym).
    """

    canonical: str
    unit_text: str
    scale: float
    offset: float
    unit_assumed: bool
    from_map: bool = False


def normalise(header: str) -> str:
    """Lower-case a header and join its words with ``_`` (for matching only)."""
    return _SEPARATORS.sub("_", header.strip().lower()).strip("_")


def _unit_for(canonical: str, unit_token: str, *, file: str, header: str) -> HeaderMeaning:
    """Check ``unit_token`` against the quantity and return the conversion."""
    try:
        return _unit_meaning(canonical, unit_token)
    except _WrongUnit as exc:
        raise InputFileError(str(exc), file=file, column=header) from exc.__cause__


class _WrongUnit(Exception):
    """A unit that does not fit its quantity (the message says why)."""


@functools.lru_cache(maxsize=512)
def _unit_meaning(canonical: str, unit_token: str) -> HeaderMeaning:
    """The conversion of ``unit_token`` to the unit of ``canonical`` (cached: pint is slow).

    Raises :class:`~trimlog.errors.UnitError` for an unknown unit and
    :class:`_WrongUnit` for one of the wrong kind; errors are not cached.
    """
    quantity = QUANTITIES[canonical]
    if quantity.unit is None:
        return HeaderMeaning(canonical, "", 1.0, 0.0, unit_assumed=False)
    unit = parse_unit(unit_token)
    # %MAC and a station share the word "cg": the unit decides which one it is.
    if canonical == "cg_in" and Q_(1.0, unit).dimensionless:
        canonical, quantity = "cg_pct_mac", QUANTITIES["cg_pct_mac"]
    target = parse_unit(quantity.unit)
    if not Q_(1.0, unit).is_compatible_with(target) or not _same_kind(unit, quantity.unit):
        raise _WrongUnit(
            f"the unit '{unit_token}' is not a unit of {quantity.description} "
            f"(expected something like '{quantity.unit}')"
        )
    try:
        scale, offset = unit_factor(unit, quantity.unit)
    except Exception as exc:  # pint raises several unrelated types here
        raise _WrongUnit(f"cannot convert '{unit_token}' to {quantity.unit}") from exc
    written = unit_token.strip()
    understood = str(unit).replace("_", " ")
    text = written if written.lower() == understood.lower() else f"{written} = {understood}"
    return HeaderMeaning(canonical, text, scale, offset, unit_assumed=False)


_ANGLE_WORDS = ("degree", "radian", "arcminute", "arcsecond", "turn")


def _same_kind(unit: object, canonical_unit: str) -> bool:
    """Separate the dimensionless kinds pint lumps together: angle, percent, plain."""
    name = str(unit)
    if canonical_unit == "degree":
        return any(word in name for word in _ANGLE_WORDS)
    if canonical_unit == "percent":
        return "percent" in name
    return True


def _assumed(canonical: str) -> HeaderMeaning:
    unit = QUANTITIES[canonical].unit
    if unit is None:
        return HeaderMeaning(canonical, "", 1.0, 0.0, unit_assumed=False)
    return HeaderMeaning(canonical, unit, 1.0, 0.0, unit_assumed=True)


def understand_header(
    header: str, unit_row: str = "", *, file: str = "<log>"
) -> HeaderMeaning | None:
    """Say which canonical quantity a header means, and in which unit.

    Parameters
    ----------
    header : str
        The header as written in the file (or the target of a column map).
    unit_row : str, optional
        The cell under it on a second header row of units, if any.
    file : str, optional
        File name for messages.

    Returns
    -------
    HeaderMeaning or None
        None when the header is not a known quantity.

    Raises
    ------
    InputFileError
        A known quantity with a unit of the wrong dimension, an unknown unit
        written in brackets or on the unit row, or a header unit that
        contradicts the unit row.

    Examples
    --------
    >>> m = understand_header("ias_mph")
    >>> m.canonical, round(m.scale, 6)
    ('ias_kt', 0.868976)
    >>> understand_header("Elevator (deg)").canonical
    'elevator_deg'
    >>> understand_header("alt_gps") is None
    True
    """
    unit_row = _strip_brackets(unit_row)
    canonical, unit_token = _split_header(header, file=file)
    if canonical is None:
        return None
    if unit_token and unit_row and _unit_key(unit_token) != _unit_key(unit_row):
        raise InputFileError(
            f"the header says the unit is '{unit_token}' but the unit row says '{unit_row}'",
            file=file,
            column=header,
        )
    token = unit_token or unit_row
    if not token:
        return _assumed(canonical)
    try:
        return _unit_for(canonical, token, file=file, header=header)
    except UnitError as exc:
        raise InputFileError(
            f"unknown unit '{token}' for {QUANTITIES[canonical].description} "
            f"(expected something like '{QUANTITIES[canonical].unit}')",
            file=file,
            column=header,
        ) from exc


def _strip_brackets(text: str) -> str:
    text = text.strip()
    if len(text) >= 2 and text[0] in "[({" and text[-1] in "])}":
        text = text[1:-1].strip()
    return text


def _unit_key(token: str) -> str:
    try:
        return str(parse_unit(token))
    except UnitError:
        return token.strip().lower()


def _split_header(header: str, *, file: str) -> tuple[str | None, str]:
    """Return (canonical name or None, unit token as written, possibly empty)."""
    bracketed = _BRACKETED.match(header.strip())
    if bracketed is not None:
        canonical = _WORD_TO_CANONICAL.get(normalise(bracketed["name"]))
        if canonical is None:
            return None, ""
        return canonical, bracketed["unit"].strip()
    whole = normalise(header)
    if whole in QUANTITIES:
        return whole, _canonical_unit_token(whole)
    if whole in _WORD_TO_CANONICAL:
        return _WORD_TO_CANONICAL[whole], ""
    # Try every split of "name<sep>unit", the longest name first, keeping the
    # first whose left part is a known quantity and right part a real unit.
    raw = header.strip()
    cuts = [m.start() for m in _SEPARATORS.finditer(raw)]
    for cut in reversed(cuts):
        name, unit_token = normalise(raw[:cut]), raw[cut:].strip(" _-./")
        if name not in _WORD_TO_CANONICAL or not unit_token:
            continue
        try:
            parse_unit(unit_token)
        except UnitError:
            continue
        return _WORD_TO_CANONICAL[name], unit_token
    return None, ""


def _canonical_unit_token(canonical: str) -> str:
    """Return the unit suffix of a canonical name as written (``"kt"`` of ``"ias_kt"``)."""
    if QUANTITIES[canonical].unit is None:
        return ""
    return "pct_mac" if canonical == "cg_pct_mac" else canonical.rsplit("_", 1)[1]


def suggestions(wanted: list[str], headers: list[str], n: int = 3) -> list[str]:
    """Return the headers nearest to any of the ``wanted`` words (for messages)."""
    by_norm = {normalise(h): h for h in headers}
    found: list[str] = []
    for word in wanted:
        for match in difflib.get_close_matches(word, list(by_norm), n=n, cutoff=0.5):
            if by_norm[match] not in found:
                found.append(by_norm[match])
    return found[:n]


def synonyms_of(canonical: str) -> tuple[str, ...]:
    """Return the header words understood as ``canonical``."""
    return (canonical, *_SYNONYMS.get(canonical, ()))


# ------------------------------------------------------- cells

NA_TOKENS = ["---", "--", "-", "NaN", "nan", "NAN", "N/A", "n/a", "NA", "null", "NULL", "None",
             "#N/A", "?", "*", "ERR", "err", "inf", "-inf"]

NUMBER = re.compile(r"^[-+]?(\d+([.,]\d*)?|[.,]\d+)([eE][-+]?\d+)?$")
CLOCK = re.compile(r"^\d{1,2}:\d{2}(:\d{2}([.,]\d+)?)?$")


def split_fields(line: str, delimiter: str) -> list[str]:
    """Split one line into cells as the csv module would (empty list for a blank line)."""
    if not line.strip():
        return []
    if '"' not in line and "\x00" not in line and "\r" not in line and "\n" not in line:
        # Without quotes (and breaks, NULs) the csv module splits at every delimiter
        # and drops the spaces after it: the same cells without a reader per line.
        cells = line.split(delimiter)
        return [cell.lstrip(" ") for cell in cells] if " " in line else cells
    try:
        return next(csv.reader([line], delimiter=delimiter, skipinitialspace=True))
    except (csv.Error, StopIteration):
        return []


def is_data_cell(cell: str) -> bool:
    """Tell whether a cell reads as a value (number, clock, ISO stamp, missing marker)."""
    cell = cell.strip()
    return (
        not cell
        or cell in NA_TOKENS
        or bool(NUMBER.match(cell) or CLOCK.match(cell) or ISO_STAMP.match(cell))
    )


def looks_like_header(fields: list[str]) -> bool:
    """Tell whether at least half of a line's non-empty cells are words, not values."""
    cells = [c for c in fields if c.strip()]
    words = [c for c in cells if not is_data_cell(c)]
    return bool(cells) and len(words) * 2 >= len(cells)


def is_unit_row(fields: list[str]) -> bool:
    """Tell whether a line under the header holds only words (units), no values."""
    cells = [c.strip() for c in fields if c.strip()]
    return bool(cells) and not any(is_data_cell(c) for c in cells)


def unique_headers(headers: list[str]) -> list[str]:
    """Name empty headers by position and number repeated ones, so each is unique."""
    seen: dict[str, int] = {}
    out = []
    for i, header in enumerate(headers):
        header = header or f"column {i + 1}"
        seen[header] = seen.get(header, 0) + 1
        out.append(header if seen[header] == 1 else f"{header} ({seen[header]})")
    return out


# ------------------------------------------------------- bookkeeping and values


class Dropped(NamedTuple):
    """Rows or cells that were dropped or blanked, for one reason.

    Parameters
    ----------
    reason : str
        Why, naming the column where it is about a column.
    count : int
        How many rows or cells.
    lines : tuple of int
        The first few 1-based file lines concerned.
    """

    reason: str
    count: int
    lines: tuple[int, ...]




class Notes:
    """Findings and dropped counts collected while reading one file."""

    def __init__(self) -> None:
        self.findings: list[Finding] = []
        self.dropped: list[Dropped] = []
        #: First ISO 8601 date-time stamp of the log (UTC, ISO text), when the log has one.
        self.started_at: str | None = None

    def add(self, code: str, severity: Severity, quantity: str | None = None,
            **values: Value) -> None:
        """Record a finding about the file (``quantity``: the canonical column concerned)."""
        subject = Subject(quantity=quantity) if quantity else None
        self.findings.append(finding(code, severity, subject, **values))

    def drop(self, reason: str, lines: np.ndarray) -> None:
        """Record ``len(lines)`` rows or cells dropped for ``reason`` (nothing if none)."""
        if len(lines):
            self.dropped.append(Dropped(reason, int(len(lines)), first_lines(lines)))


def first_lines(lines: Iterable[int]) -> tuple[int, ...]:
    """Return the first few line numbers, as ints."""
    out = []
    for value in lines:
        out.append(int(value))
        if len(out) == MAX_LISTED:
            break
    return tuple(out)


def lines_text(lines: Iterable[int]) -> str:
    """Return the first few line numbers as text."""
    return ", ".join(str(v) for v in first_lines(lines))




def map_columns(
    headers: tuple[str, ...],
    units: tuple[str, ...],
    header_line: int,
    column_map: Mapping[str, str],
    label: str,
    notes: Notes,
) -> tuple[dict[int, HeaderMeaning], list[str], list[str]]:
    """Map file columns to canonical names.

    The column map is tried first (exact header, then the normalised header),
    then :func:`understand_header`.  Map entries absent from the file are not
    reported: one aircraft's map serves files of several kinds.

    Returns
    -------
    found : dict of int to HeaderMeaning
        By column position.
    unknown, ignored : list of str
        Headers not understood, and headers the map says to ignore.
    """
    by_norm = {normalise(k): v for k, v in column_map.items()}
    found: dict[int, HeaderMeaning] = {}
    unknown: list[str] = []
    ignored: list[str] = []
    for i, (header, unit) in enumerate(zip(headers, units, strict=True)):
        target = column_map.get(header, by_norm.get(normalise(header)))
        if target is not None:
            if target.strip() in ("", "-"):
                ignored.append(header)
                continue
            meaning = understand_header(target, unit, file=label)
            if meaning is None:
                raise InputFileError(
                    f"the column map sends this column to '{target}', which is not a canonical "
                    f"name; expected one of {', '.join(QUANTITIES)} (a different unit suffix, "
                    "such as 'ias_mph', is allowed)",
                    file=label,
                    column=header,
                )
            meaning = replace(meaning, from_map=True)
        else:
            meaning = understand_header(header, unit, file=label)
        if meaning is None:
            unknown.append(header)
        else:
            found[i] = meaning
    seen: dict[str, str] = {}
    for i, meaning in found.items():
        header = headers[i]
        if meaning.canonical in seen:
            raise InputFileError(
                f"both '{seen[meaning.canonical]}' and '{header}' are understood as "
                f"{meaning.canonical}; map the one not to use to \"-\" in the profile's "
                "[logger] columns",
                file=label,
                line=header_line + 1,
                column=header,
            )
        seen[meaning.canonical] = header
    return found, unknown, ignored


Purpose = Literal["trim", "airspeed_calibration"]

_REQUIRED_FOR: dict[str, tuple[tuple[tuple[str, ...], str], ...]] = {
    "trim": (
        (("ias_kt", "cas_kt"), "an airspeed column (e.g. 'ias_kt', 'cas_kt', 'airspeed [mph]')"),
        (("pressure_alt_ft",), "a pressure altitude column (e.g. 'pressure_alt_ft', 'palt [m]')"),
        (("elevator_deg",), "an elevator column (e.g. 'elevator_deg', 'Elevator (deg)')"),
    ),
    "airspeed_calibration": (
        (("ias_kt",), "an indicated airspeed column (e.g. 'ias_kt', 'airspeed [mph]')"),
        (("pressure_alt_ft",), "a pressure altitude column (e.g. 'pressure_alt_ft', 'palt [m]')"),
        (("gps_groundspeed_kt",),
         "a GPS ground speed column (e.g. 'gps_groundspeed_kt', 'ground speed [kt]')"),
        (("gps_track_deg",), "a GPS track column (e.g. 'gps_track_deg', 'track [deg]')"),
    ),
}


def require_columns(
    found: dict[int, HeaderMeaning], headers: tuple[str, ...], header_line: int, label: str,
    notes: Notes, purpose: Purpose = "trim",
) -> None:
    """Raise when a column the purpose needs is missing; warn of OAT (and force for trim).

    ``purpose="trim"`` needs airspeed, pressure altitude and elevator;
    ``"airspeed_calibration"`` needs indicated airspeed, pressure altitude,
    GPS ground speed and GPS track.
    """
    names = {m.canonical for m in found.values()}
    required = _REQUIRED_FOR[purpose]
    for options, what in required:
        if names.isdisjoint(options):
            words = [w for o in options for w in synonyms_of(o)]
            near = suggestions(words, list(headers))
            hint = (
                f"; nearest column names found: {', '.join(repr(n) for n in near)}"
                " (map one in the profile's [logger] columns if it is this quantity)"
                if near
                else f"; columns found: {', '.join(repr(h) for h in headers[:12])}"
            )
            raise InputFileError(
                f"no {what.split(' (')[0].removeprefix('an ').removeprefix('a ')} found; "
                f"expected {what}{hint}",
                file=label,
                line=header_line + 1,
            )
    if "oat_c" not in names:
        notes.add("input.log.no_oat", Severity.CAUTION, "oat_c")
    if purpose == "trim" and "stick_force_lbf" not in names:
        notes.add("input.log.no_stick_force", Severity.CAUTION, "stick_force_lbf")


def conversion_text(meaning: HeaderMeaning) -> str:
    """Say the conversion applied, e.g. ``"mi / h -> kt: x 0.868976"``, or ``"none"``."""
    if meaning.scale == 1.0 and meaning.offset == 0.0:
        return "none"
    target = QUANTITIES[meaning.canonical].unit
    text = f"{meaning.unit_text.split(' = ')[0]} -> {target}: x {meaning.scale:.6g}"
    return text + (f" {meaning.offset:+.6g}" if meaning.offset else "")


def _finite_or_nan(cell: object) -> float:
    """A cell as a finite float, else NaN (text, overflow, infinity)."""
    try:
        value = float(str(cell).strip())
    except (TypeError, ValueError, OverflowError):
        return np.nan
    return value if np.isfinite(value) else np.nan


def numeric_values(
    column: pd.Series, header: str, lines: np.ndarray, notes: Notes
) -> np.ndarray:
    """Return a column as floats; cells that are not numbers become NaN, counted."""
    if pd.api.types.is_numeric_dtype(column) and not pd.api.types.is_bool_dtype(column):
        return column.to_numpy(dtype=float, na_value=np.nan)
    try:
        values = pd.to_numeric(column, errors="coerce")
    except OverflowError:  # an integer of hundreds of digits: beyond any float, not a number
        values = pd.Series([_finite_or_nan(v) for v in column], index=column.index,
                           dtype=float)
    not_number = values.isna().to_numpy() & column.notna().to_numpy()
    if not_number.any():
        example = column[not_number].iloc[0]
        notes.drop(f"not a number in column '{header}' (e.g. '{example}')", lines[not_number])
    return values.to_numpy(dtype=float, na_value=np.nan)


def clock_seconds(
    column: pd.Series, header: str, lines: np.ndarray, label: str,
    notes: Notes | None = None,
) -> tuple[np.ndarray, str]:
    """Clock or ISO 8601 stamps -> seconds since midnight of the first stamp's day.

    A clock that drops by more than 12 h between consecutive stamps has
    passed midnight: a day is added from there on.  Stamps not understood
    become NaN; when more than half are, the column is refused.  With
    ``notes``, the first ISO 8601 date-time stamp (the log's own date and
    time, in UTC) is kept in ``notes.started_at``.
    """
    text = column.astype("string").str.strip()
    sample = text.dropna()
    first = str(sample.iloc[0]) if len(sample) else ""
    if ISO_STAMP.match(first) and "-" in first:
        stamps = pd.to_datetime(text, format="ISO8601", errors="coerce", utc=True)
        valid = stamps.notna().to_numpy()
        if not valid.any():
            seconds = np.full(len(text), np.nan)
        else:
            first_stamp = stamps[valid].iloc[0]
            midnight = first_stamp.normalize()
            if notes is not None:
                notes.started_at = first_stamp.isoformat()
            elapsed = (stamps - midnight).dt.total_seconds()
            seconds = elapsed.to_numpy(dtype=float, na_value=np.nan)
        how = "ISO 8601 date-time -> s since midnight of the first stamp's day"
    else:
        fixed = text.str.replace(",", ".", regex=False)
        fixed = fixed.where(~fixed.str.fullmatch(r"\d{1,2}:\d{2}", na=False), fixed + ":00")
        spans = pd.to_timedelta(fixed, errors="coerce")
        seconds = spans.dt.total_seconds().to_numpy(dtype=float, na_value=np.nan)
        valid = np.isfinite(seconds)
        wraps = np.zeros(len(seconds))
        finite = seconds[valid]
        # A drop of more than 12 h between consecutive stamps is the clock passing midnight.
        step = np.diff(finite, prepend=finite[:1]) < -43200.0
        wraps[valid] = np.cumsum(step) * 86400.0
        seconds = seconds + wraps
        how = "clock hh:mm:ss -> s since midnight" + (
            f" (passes midnight {int(step.sum())} time(s): +24 h from there)" if step.any() else ""
        )
    bad = ~np.isfinite(seconds) & column.notna().to_numpy()
    if bad.sum() * 2 > max(int(column.notna().sum()), 1):
        row = int(np.flatnonzero(bad)[0])
        raise InputFileError(
            f"time stamp '{column.iloc[row]}' not understood; expected seconds, hh:mm:ss[.sss] "
            "or ISO 8601 date and time",
            file=label,
            line=int(lines[row]),
            column=header,
        )
    return seconds, how


def text_values(column: pd.Series) -> np.ndarray:
    """Return a label column as text: ``1`` stays ``"1"`` (not ``"1.0"``), missing ``""``."""
    if pd.api.types.is_numeric_dtype(column):
        values = column.to_numpy(dtype=float, na_value=np.nan)
        finite = values[np.isfinite(values)]
        if np.all(finite == np.round(finite)) and np.all(np.abs(finite) < 2**53):
            column = column.astype("Int64")
    return column.astype("string").fillna("").str.strip().to_numpy(dtype=object)




# --------------------------------------------------------------------- checks




def decide_kind(
    time: np.ndarray | None, forced: Kind | None, label: str
) -> tuple[Kind, str]:
    """Decide time series or point table from the time column; say why."""
    if forced is not None:
        if forced not in ("point_table", "time_series"):
            raise InputFileError(
                f"kind must be 'point_table' or 'time_series', found {forced!r}", file=label
            )
        if forced == "time_series" and time is None:
            raise InputFileError(
                "asked to read a time series, but there is no time column "
                "(expected e.g. 'time_s', 'time [ms]' or clock stamps 'hh:mm:ss')",
                file=label,
            )
        return forced, "forced by the caller"
    if time is None:
        return "point_table", "no time column: one row per test point"
    stamped = np.isfinite(time)
    finite = time if stamped.all() else time[stamped]
    if len(finite) < 30:
        return "point_table", f"only {len(finite)} time-stamped rows: one row per test point"
    steps = np.diff(finite)
    advancing = steps > 0
    if not advancing.all():
        steps = steps[advancing]
    if not len(steps):
        return "point_table", "time stamps do not advance"
    # steps is this function's own array, and only counted below: partitioned in place.
    median = float(np.median(steps, overwrite_input=True))
    if median > 10.0:
        return "point_table", f"rows are a median {median:.0f} s apart: one row per test point"
    regular = np.mean((steps >= 0.5 * median) & (steps <= 2.0 * median))
    if regular < 0.6:
        return "point_table", (
            f"time stamps are irregular (only {regular:.0%} of intervals near the median "
            f"{median:.3g} s): one row per test point"
        )
    return "time_series", (
        f"time column with {len(finite)} rows at a median interval of {median:.3g} s "
        f"({1.0 / median:.3g} Hz)"
    )


def check_time(
    time: np.ndarray, flight: np.ndarray | None, lines: np.ndarray, label: str, header: str,
    notes: Notes,
) -> None:
    """Refuse time going backwards (within a flight); warn of duplicates, gaps, unevenness."""
    steps = np.diff(time)
    if flight is not None:
        steps = np.where(flight[1:] != flight[:-1], np.nan, steps)
    back = np.flatnonzero(steps < 0)
    if len(back):
        i = int(back[0])
        raise InputFileError(
            f"time goes backwards: {time[i + 1]:.3f} s after {time[i]:.3f} s at line "
            f"{lines[i]} ({len(back)} such step(s)); expected increasing time stamps. "
            "Was the file joined from several logs or the clock reset? Split the file, "
            "or add a 'flight' column",
            file=label,
            line=int(lines[i + 1]),
            column=header,
        )
    dup = np.flatnonzero(steps == 0) + 1
    if len(dup):
        notes.add("input.log.duplicate_times", Severity.NOTE, "time_s", count=len(dup),
                  header=header, lines=lines_text(lines[dup]))
    usable = np.isfinite(steps) & (steps > 0)
    good = steps if usable.all() else steps[usable]
    if not len(good):
        return
    # Partitioned in place when good is a copy (only its min, max and counts are used below).
    median = float(np.median(good, overwrite_input=good is not steps))
    gap = np.flatnonzero(steps > max(5.0 * median, 1.0))
    if len(gap):
        longest = int(gap[np.argmax(steps[gap])])
        notes.add("input.log.time_gaps", Severity.CAUTION, "time_s", count=len(gap),
                  longest_s=float(steps[longest]), after_line=int(lines[longest]),
                  lines=lines_text(lines[gap]))
    deviation = good - median
    uneven = np.mean(np.abs(deviation, out=deviation) > 0.25 * median)
    if uneven > 0.1:
        notes.add("input.log.uneven_sampling", Severity.NOTE, "time_s", fraction=float(uneven),
                  median_s=median, min_s=float(good.min()), max_s=float(good.max()))


def check_plausible(
    data: dict[str, np.ndarray], kind: Kind, lines: np.ndarray, headers: dict[str, str],
    label: str, notes: Notes,
) -> None:
    """Refuse implausible values, or blank a few isolated ones in a time series (loudly)."""
    for name, (low, high) in PLAUSIBLE_RANGES.items():
        if name not in data:
            continue
        values = data[name]
        if kind == "point_table" and name in ("ias_kt", "cas_kt"):
            stopped = np.flatnonzero(values <= 0.0)
            if len(stopped):
                i = int(stopped[0])
                raise InputFileError(
                    f"{name} = {values[i]:g} kt: a stabilized trim point needs forward speed "
                    f"(expected more than 0 kt; {len(stopped)} such row(s))",
                    file=label,
                    line=int(lines[i]),
                    column=headers[name],
                )
        if len(values) and low <= np.fmin.reduce(values) and np.fmax.reduce(values) <= high:
            continue  # every value inside (fmin/fmax pass over NaN, as the test below does)
        bad = np.flatnonzero((values < low) | (values > high))
        if not len(bad):
            continue
        unit = QUANTITIES[name].unit
        where = f"outside the plausible range {low:g}...{high:g} {unit}"
        isolated = len(bad) <= max(3, int(0.001 * len(values)))
        if kind == "time_series" and isolated:
            values[bad] = np.nan
            notes.drop(f"implausible value in '{headers[name]}' ({where}) blanked", lines[bad])
            notes.add("input.log.glitches_blanked", Severity.WARNING, name, count=len(bad),
                      low=low, high=high, unit=unit, lines=lines_text(lines[bad]))
            continue
        i = int(bad[0])
        raise InputFileError(
            f"{name} = {values[i]:g} {unit} is {where} ({len(bad)} such value(s)); "
            f"check the unit in the header and the column mapping",
            file=label,
            line=int(lines[i]),
            column=headers[name],
        )


def check_constant(
    data: dict[str, np.ndarray], kind: Kind, headers: dict[str, str], notes: Notes
) -> None:
    """Warn of a quantity that should vary but is constant (a dead or unplugged sensor)."""
    minimum_rows = 20 if kind == "time_series" else 3
    for name in SHOULD_VARY:
        values = data.get(name)
        if values is None:
            continue
        if len(values) and -np.inf < np.fmin.reduce(values) < np.fmax.reduce(values) < np.inf:
            continue  # two different finite values (fmin/fmax pass over NaN): it varies
        finite = values[np.isfinite(values)]
        if len(finite) >= minimum_rows and finite.min() == finite.max():
            notes.add("input.log.constant_column", Severity.CAUTION, name, header=headers[name],
                      value=float(finite[0]), rows=len(finite))
