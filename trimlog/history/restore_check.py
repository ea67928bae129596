"""Check a history export completely before any of it is restored.

``trimlog restore`` brings a folder written by ``trimlog export`` (or a copy
that was edited by hand, damaged, truncated, or made by another program) into
an empty history.  Everything in it is checked here first, with the rules of
a fresh import, and the first problem is named by table, row and column:

* the document: valid JSON (no ``NaN``/``Infinity``, no number too large for
  a float, nesting no deeper than :data:`MAX_DEPTH`), this export format and
  version, a schema version this trimlog knows, no unknown keys;
* aircraft: unique positive ids, non-empty names, profile versions numbered
  1, 2, ... whose text parses as a profile (every key, unit and range of
  :mod:`trimlog.input.profile`) and matches its SHA-256;
* flights: unique ids naming a stored aircraft and one of its profile
  versions, a flight order that is a gap-free 1..n per aircraft, ISO dates,
  the loading sheet text parsed as a loading sheet, the incidence inside the
  loading sheet's range, the log bytes matching their SHA-256 and size;
* points: unique point numbers from 1, ``included`` True or False, one value
  per declared column of the declared type (a number where the column is
  numeric, never text such as ``"heavy"``), finite, and the canonical
  quantities inside the plausible ranges of a fresh log import
  (:data:`trimlog.input.headers.PLAUSIBLE_RANGES`);
* analyses (older exports): each names an aircraft and flights that exist.

Examples
--------
>>> check_json_number("1e999", "x.json")
Traceback (most recent call last):
...
trimlog.errors.StoreError: x.json: the number 1e999 is too large for a float; nothing was restored
"""

from __future__ import annotations

import datetime as dt
import json
import math
import re
from collections.abc import Mapping
from pathlib import Path
from typing import Any, Final

from trimlog.errors import StoreError, TrimlogError
from trimlog.history.codec import (
    EXPORT_FORMAT,
    EXPORT_FORMAT_VERSION,
    EXPORT_JSON,
    decode_raw,
    sha256_hex,
)
from trimlog.input.headers import PLAUSIBLE_RANGES
from trimlog.input.loading_sheet import SHEET_KEYS, read_loading_sheet
from trimlog.input.profile import parse_profile

#: Deepest nesting of lists and objects an export may hold (a real one needs 5).
MAX_DEPTH: Final = 32

_TOP_KEYS: Final = frozenset({"format", "format_version", "schema_version", "software_version",
                              "exported_at", "aircraft", "flights", "analyses"})
_AIRCRAFT_KEYS: Final = frozenset({"id", "name", "created_at", "profiles"})
_PROFILE_KEYS: Final = frozenset({"version", "text", "sha256", "imported_at"})
_FLIGHT_KEYS: Final = frozenset({
    "id", "aircraft_id", "flight_order", "sha256", "filename", "size_bytes", "flight_date",
    "label", "notes", "loading_json", "incidence_label", "incidence_deg", "config",
    "profile_version", "points_columns", "imported_at", "points", "raw_base64"})
# The user's choices kept with a flight (trimlog.history.maneuver_choices): maneuvering
# points included or not, and why trim points were left out; and the maneuvering points
# found at import (a shortcut that is found again from the log when it does not read back);
# the loading sheets a later one replaced (trimlog.history.reimport).
_LOADING_KEYS: Final = frozenset({"sheet_name", "sheet_text", "flown_at", "maneuver_included",
                                  "exclusion_reasons", "maneuver_points_found",
                                  "replaced_sheets"})
_ANALYSIS_KEYS: Final = frozenset({"id", "aircraft_id", "created_at", "software_version",
                                   "profile_version", "flight_ids", "result"})
#: Point column dtypes the store writes, and what a value of each must be.
_NUMBER_DTYPES: Final = frozenset({"float64", "float32", "Float64", "Float32"})
_INT_DTYPES: Final = frozenset({"int64", "int32", "Int64", "Int32", "int8", "int16", "uint8"})
_BOOL_DTYPES: Final = frozenset({"bool", "boolean"})
_TEXT_DTYPES: Final = frozenset({"str", "string", "object"})
_FIXED: Final = ("point", "included")
_SHA: Final = re.compile(r"[0-9a-f]{64}\Z")
_INT64: Final = 2**63


def check_json_number(text: str, where: str) -> float:
    """A JSON number as a finite float; refuse ``1e999`` and friends.

    Parameters
    ----------
    text : str
        The number as written in the JSON text.
    where : str
        The file, named in the error.
    """
    value = float(text)
    if not math.isfinite(value):
        raise StoreError(f"{where}: the number {text[:40]} is too large for a float; "
                         "nothing was restored")
    return value


def _refuse_constant(text: str) -> None:
    raise ValueError(f"{text} is not a number JSON allows")


def load_export(directory: str | Path, schema_version: int, *, import_rules: bool = True
                ) -> tuple[Path, dict[str, Any]]:
    """Read an export's JSON document and check all of it (see the module notes).

    Parameters
    ----------
    directory : str or Path
        The folder holding ``trimlog-history.json``.
    schema_version : int
        The newest database schema version this trimlog knows.
    import_rules : bool
        Also apply the rules of a fresh import (profiles and loading sheets
        parse, point quantities in their plausible ranges), as ``trimlog
        restore`` does; False checks the structure only (the store's own API,
        which stores any profile text and loading record).

    Returns
    -------
    tuple of (Path, dict)
        The document's file and its checked content.

    Raises
    ------
    StoreError
        Naming the first problem (table, row, column); nothing was restored.
    """
    from trimlog.files import read_regular_file

    src = Path(directory) / EXPORT_JSON
    try:
        raw = read_regular_file(src, "history export")
    except TrimlogError as exc:
        raise StoreError(f"{exc}; nothing was restored") from None
    try:
        doc = json.loads(raw.decode("utf-8"), parse_constant=_refuse_constant,
                         parse_float=lambda t: check_json_number(t, str(src)))
    except RecursionError:
        raise StoreError(f"{src}: nested too deeply to be a trimlog export; "
                         "nothing was restored") from None
    except (UnicodeDecodeError, ValueError) as exc:
        if isinstance(exc, TrimlogError):
            raise
        raise StoreError(f"{src}: not valid JSON ({exc}); nothing was restored") from None
    check_document(doc, src, schema_version, import_rules=import_rules)
    return src, doc


def _depth(value: Any, limit: int) -> int:
    """Nesting depth of lists and dicts, stopping beyond ``limit``."""
    stack, deepest = [(value, 1)], 0
    while stack:
        item, level = stack.pop()
        if isinstance(item, dict | list):
            deepest = max(deepest, level)
            if deepest > limit:
                return deepest
            stack.extend((v, level + 1) for v in (item.values() if isinstance(item, dict)
                                                  else item))
    return deepest


class _Problem(Exception):
    """The first problem found, with where it is."""


def _fail(where: str, message: str) -> None:
    raise _Problem(f"{where}: {message}")


def _keys(item: Any, allowed: frozenset[str], where: str,
          optional: frozenset[str] = frozenset()) -> Mapping[str, Any]:
    if not isinstance(item, dict):
        _fail(where, f"expected an object, found {type(item).__name__}")
    if unknown := sorted(set(item) - allowed):
        _fail(where, f"unknown key {unknown[0]!r} (an export holds {', '.join(sorted(allowed))})")
    if missing := sorted(allowed - optional - set(item)):
        _fail(where, f"the key {missing[0]!r} is missing")
    return item


def _int(value: Any, where: str, low: int = 1) -> int:
    if isinstance(value, bool) or not isinstance(value, int):
        _fail(where, f"expected a whole number, found {_shown(value)}")
    if not low <= value < _INT64:
        _fail(where, f"expected a whole number from {low}, found {_shown(value)}")
    return value


def _text(value: Any, where: str, *, optional: bool = False, empty: bool = True) -> str | None:
    if value is None and optional:
        return None
    if not isinstance(value, str) or (not empty and not value.strip()):
        _fail(where, f"expected {'non-empty ' if not empty else ''}text, found {_shown(value)}")
    return value


def _iso(value: Any, where: str, *, date_only: bool = False, optional: bool = False) -> None:
    if _text(value, where, optional=optional) is None:
        return
    try:
        (dt.date if date_only else dt.datetime).fromisoformat(value)
    except ValueError:
        kind = "an ISO date (2026-06-14)" if date_only else "an ISO date-time"
        _fail(where, f"expected {kind}, found {_shown(value)}")


def _shown(value: Any) -> str:
    if isinstance(value, str):
        return f"text {value[:40]!r}"
    if isinstance(value, bool) or value is None:
        return repr(value)
    if isinstance(value, int | float):
        return f"the number {str(value)[:40]}"
    return f"a {type(value).__name__}"


def check_document(doc: Any, src: Path | str, schema_version: int, *,
                   import_rules: bool = True) -> None:
    """Check a whole export document; raise naming the first problem.

    Parameters
    ----------
    doc : object
        The parsed JSON document.
    src : Path or str
        Its file, named in the error.
    schema_version : int
        The newest database schema version this trimlog knows.
    import_rules : bool
        Also apply the rules of a fresh import (see :func:`load_export`).

    Raises
    ------
    StoreError
        ``"<src>: flights[1] (flight 2), point 3, column 'ias_kt': expected a
        number, found text 'heavy'; nothing was restored"``.
    """
    try:
        if _depth(doc, MAX_DEPTH) > MAX_DEPTH:
            _fail("document", f"nested deeper than {MAX_DEPTH} levels; not a trimlog export")
        if not isinstance(doc, dict) or doc.get("format") != EXPORT_FORMAT:
            _fail("document", f"not a trimlog history export (no format {EXPORT_FORMAT!r})")
        if doc.get("format_version") != EXPORT_FORMAT_VERSION:
            _fail("document", f"export format version {_shown(doc.get('format_version'))}; "
                              f"this trimlog reads version {EXPORT_FORMAT_VERSION}")
        _keys(doc, _TOP_KEYS, "document", optional=frozenset({"analyses"}))
        version = _int(doc["schema_version"], "document, schema_version")
        if version > schema_version:
            _fail("document", f"written by a newer trimlog (schema version {version}; this "
                              f"trimlog reads up to {schema_version}); upgrade trimlog")
        _text(doc["software_version"], "document, software_version")
        _iso(doc["exported_at"], "document, exported_at")
        profiles = _check_aircraft(doc["aircraft"], import_rules)
        flights = _check_flights(doc["flights"], profiles, src, import_rules)
        _check_analyses(doc.get("analyses") or [], profiles, flights)
    except _Problem as problem:
        raise StoreError(f"{src}: {problem}; nothing was restored") from None


def _check_aircraft(items: Any, import_rules: bool) -> dict[int, set[int]]:
    """The aircraft table; returns each aircraft id's profile versions."""
    if not isinstance(items, list):
        _fail("aircraft", f"expected a list, found {_shown(items)}")
    versions: dict[int, set[int]] = {}
    names: set[str] = set()
    for i, a in enumerate(items):
        where = f"aircraft[{i}]"
        _keys(a, _AIRCRAFT_KEYS, where)
        aid = _int(a["id"], f"{where}, id")
        name = _text(a["name"], f"{where}, name", empty=False)
        if aid in versions or name in names:
            _fail(where, f"aircraft id {aid} or name {name!r} appears twice")
        names.add(name)
        where = f"aircraft[{i}] (id {aid})"
        _iso(a["created_at"], f"{where}, created_at")
        if not isinstance(a["profiles"], list) or not a["profiles"]:
            _fail(f"{where}, profiles", "expected a non-empty list of profile versions")
        for k, p in enumerate(a["profiles"]):
            at = f"{where}, profiles[{k}]"
            _keys(p, _PROFILE_KEYS, at)
            if _int(p["version"], f"{at}, version") != k + 1:
                _fail(f"{at}, version", f"expected version {k + 1} (1, 2, ... in order), "
                                        f"found {p['version']}")
            text = _text(p["text"], f"{at}, text")
            if sha256_hex(text) != p["sha256"]:
                _fail(f"{at}, sha256", "does not match the profile text (edited or damaged)")
            _iso(p["imported_at"], f"{at}, imported_at")
            if not import_rules:
                continue
            try:
                parse_profile(text, source=f"{at}, text")
            except TrimlogError as exc:
                _fail(at, f"the profile does not pass the checks of an import: {exc}")
        versions[aid] = set(range(1, len(a["profiles"]) + 1))
    return versions


def _check_flights(items: Any, profiles: Mapping[int, set[int]], src: Path | str,
                   import_rules: bool) -> dict[int, int]:
    """The flights table and their points; returns each flight id's aircraft id."""
    if not isinstance(items, list):
        _fail("flights", f"expected a list, found {_shown(items)}")
    owner: dict[int, int] = {}
    orders: dict[int, list[int]] = {}
    for i, f in enumerate(items):
        where = f"flights[{i}]"
        _keys(f, _FLIGHT_KEYS, where)
        fid = _int(f["id"], f"{where}, id")
        if fid in owner:
            _fail(f"{where}, id", f"flight id {fid} appears twice")
        where = f"flights[{i}] (flight {fid})"
        aid = _int(f["aircraft_id"], f"{where}, aircraft_id")
        if aid not in profiles:
            _fail(f"{where}, aircraft_id", f"names aircraft {aid}, which the export does not hold")
        if _int(f["profile_version"], f"{where}, profile_version") not in profiles[aid]:
            _fail(f"{where}, profile_version",
                  f"names profile version {f['profile_version']} of aircraft {aid}, which the "
                  "export does not hold")
        orders.setdefault(aid, []).append(_int(f["flight_order"], f"{where}, flight_order"))
        _check_flight_fields(f, where, import_rules)
        try:
            decode_raw(f, src)
        except (TypeError, ValueError) as exc:
            if isinstance(exc, StoreError):
                _fail(where, "the log bytes do not match their SHA-256 and size (damaged)")
            _fail(f"{where}, raw_base64", f"not valid base64 ({exc})")
        _check_points(f, where, import_rules)
        owner[fid] = aid
    for aid, order in orders.items():
        if sorted(order) != list(range(1, len(order) + 1)):
            _fail("flights", f"the flight order of aircraft {aid} is {sorted(order)}, expected "
                             f"1..{len(order)} without gaps or repeats")
    return owner


def _check_flight_fields(f: Mapping[str, Any], where: str, import_rules: bool) -> None:
    """One flight row's own fields (not its points)."""
    if not isinstance(f["sha256"], str) or not _SHA.match(f["sha256"]):
        _fail(f"{where}, sha256", f"expected 64 lower-case hex digits, found {_shown(f['sha256'])}")
    _text(f["filename"], f"{where}, filename", empty=False)
    _int(f["size_bytes"], f"{where}, size_bytes")
    _iso(f["flight_date"], f"{where}, flight_date", date_only=True, optional=True)
    for key in ("label", "notes", "incidence_label", "config"):
        _text(f[key], f"{where}, {key}", optional=True)
    _iso(f["imported_at"], f"{where}, imported_at")
    _text(f["raw_base64"], f"{where}, raw_base64")
    incidence = f["incidence_deg"]
    if incidence is not None and (isinstance(incidence, bool)
                                  or not isinstance(incidence, int | float)):
        _fail(f"{where}, incidence_deg", f"expected a number of degrees, found {_shown(incidence)}")
    loading = f["loading_json"]
    if loading is not None and not isinstance(loading, dict):
        _fail(f"{where}, loading_json", f"expected an object, found {_shown(loading)}")
    if not import_rules:
        return
    if incidence is not None:
        key = next(k for k in SHEET_KEYS if k.key == "config.stab_incidence")
        if not key.low <= incidence <= key.high:
            _fail(f"{where}, incidence_deg", f"expected a number of degrees from {key.low:g} to "
                                             f"{key.high:g}, found {_shown(incidence)}")
    if loading is not None:
        _keys(loading, _LOADING_KEYS, f"{where}, loading_json", optional=_LOADING_KEYS)
        _iso(loading.get("flown_at"), f"{where}, loading_json.flown_at", optional=True)
        replaced = loading.get("replaced_sheets", [])
        if not isinstance(replaced, list) or not all(isinstance(e, dict) for e in replaced):
            _fail(f"{where}, loading_json.replaced_sheets",
                  f"expected a list of earlier sheets, found {_shown(replaced)}")
        if "sheet_text" in loading or "sheet_name" in loading:
            text = _text(loading.get("sheet_text"), f"{where}, loading_json.sheet_text")
            name = _text(loading.get("sheet_name"), f"{where}, loading_json.sheet_name") or "sheet"
            try:
                read_loading_sheet(text.encode("utf-8"), name=f"{where}, loading sheet {name}")
            except TrimlogError as exc:
                _fail(f"{where}, loading_json",
                      f"the loading sheet does not pass the checks of an import: {exc}")


def _point_columns(spec: Any, where: str) -> list[tuple[str, str]]:
    """The declared point columns ``[[name, dtype], ...]``, checked."""
    if not isinstance(spec, list) or not all(
            isinstance(c, list) and len(c) == 2 and all(isinstance(x, str) for x in c)
            for c in spec):
        _fail(f"{where}, points_columns", "expected a list of [name, dtype] pairs of text")
    names = [c[0] for c in spec]
    if len(set(names)) != len(names) or not set(_FIXED) <= set(names):
        _fail(f"{where}, points_columns", "expected unique column names including 'point' "
                                          "and 'included'")
    known = _NUMBER_DTYPES | _INT_DTYPES | _BOOL_DTYPES | _TEXT_DTYPES
    for name, dtype in spec:
        if dtype not in known:
            _fail(f"{where}, points_columns", f"column {name!r} has the type {dtype!r}, which "
                                              "the store never writes")
    return [(n, d) for n, d in spec if n not in _FIXED]


def _check_points(f: Mapping[str, Any], where: str, import_rules: bool) -> None:
    """Every point row of one flight against its declared columns."""
    columns = _point_columns(f["points_columns"], where)
    if not isinstance(f["points"], list):
        _fail(f"{where}, points", f"expected a list, found {_shown(f['points'])}")
    seen: set[int] = set()
    for k, row in enumerate(f["points"]):
        at = f"{where}, points[{k}]"
        if not isinstance(row, list) or len(row) != 3 or not isinstance(row[2], list):
            _fail(at, "expected [point, included, [values...]]")
        number = _int(row[0], f"{at}, point")
        if number in seen:
            _fail(f"{at}, point", f"point {number} appears twice")
        seen.add(number)
        at = f"{where}, point {number}"
        if not isinstance(row[1], bool):
            _fail(f"{at}, column 'included'", f"expected true or false, found {_shown(row[1])}")
        if len(row[2]) != len(columns):
            _fail(at, f"holds {len(row[2])} values for {len(columns)} declared columns")
        for (name, dtype), value in zip(columns, row[2], strict=True):
            _check_value(value, dtype, f"{at}, column {name!r}",
                         name if import_rules else "")


def _check_value(value: Any, dtype: str, where: str, name: str) -> None:
    """One point value against its column's type and, for a canonical quantity, its range.

    ``name`` is the column's name, or "" to skip the range check.
    """
    if value is None:
        return
    if dtype in _TEXT_DTYPES:
        _text(value, where)
        return
    if dtype in _BOOL_DTYPES:
        if not isinstance(value, bool):
            _fail(where, f"expected true or false, found {_shown(value)}")
        return
    if isinstance(value, bool) or not isinstance(value, int | float):
        _fail(where, f"expected a number ({dtype}), found {_shown(value)}")
    if dtype in _INT_DTYPES and (not isinstance(value, int) or abs(value) >= _INT64):
        _fail(where, f"expected a whole number ({dtype}), found {_shown(value)}")
    if isinstance(value, int) and abs(value) > 2**53 and dtype in _NUMBER_DTYPES:
        _fail(where, f"expected a number a float holds exactly, found {_shown(value)}")
    if name in PLAUSIBLE_RANGES:
        low, high = PLAUSIBLE_RANGES[name]
        if not low <= value <= high:
            _fail(where, f"{value:g} is outside the plausible range {low:g}...{high:g} of a "
                         "fresh import")


def _check_analyses(items: Any, profiles: Mapping[int, set[int]],
                    flights: Mapping[int, int]) -> None:
    """Saved results of older exports: they must name what the export holds."""
    if not isinstance(items, list):
        _fail("analyses", f"expected a list, found {_shown(items)}")
    for i, a in enumerate(items):
        where = f"analyses[{i}]"
        _keys(a, _ANALYSIS_KEYS, where)
        if _int(a["aircraft_id"], f"{where}, aircraft_id") not in profiles:
            _fail(f"{where}, aircraft_id", f"names aircraft {a['aircraft_id']}, which the "
                                           "export does not hold")
        if not isinstance(a["flight_ids"], list):
            _fail(f"{where}, flight_ids", "expected a list of flight ids")
        for fid in a["flight_ids"]:
            if _int(fid, f"{where}, flight_ids") not in flights:
                _fail(f"{where}, flight_ids", f"names flight {fid}, which the export does not "
                                              "hold")
