"""The loading sheet of a flight: takeoff weight, CG and fuel, and the configuration flown.

One small TOML file per flight (see :func:`read_loading_sheet` for the
format); quantities are strings with a unit, parsed once here.
"""

from __future__ import annotations

import datetime as dt
import difflib
import re
import tomllib
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from trimlog.errors import InputFileError, UnitError
from trimlog.input.logs import load_source
from trimlog.input.units import parse_quantity

__all__ = ["LoadingSheet", "read_loading_sheet"]


_SHEET_KEYS: dict[str, tuple[str, ...]] = {
    "": ("flight", "date", "label", "notes", "takeoff", "fuel", "config"),
    "takeoff": ("weight", "cg", "fuel"),
    "fuel": ("flow",),
    "config": ("flap", "stab_setting", "stab_incidence"),
}


@dataclass(frozen=True)
class LoadingSheet:
    """The loading of one flight, from a loading sheet.

    Parameters
    ----------
    source : str
        File name.
    flight : str
        Flight label (matches the log's ``flight`` column or the flight
        given when importing the log).
    date : datetime.date or None
        Date flown.
    label, notes : str
        Free text.
    takeoff_weight_lb : float
        Weight at takeoff [lb].
    takeoff_cg_in : float or None
        CG station at takeoff [in aft of datum], when given as a station.
    takeoff_cg_pct_mac : float or None
        CG at takeoff [% MAC], when given in %MAC.
    takeoff_fuel_gal : float
        Fuel on board at takeoff [US gal].
    fuel_flow_gph : float or None
        Constant fuel flow [US gal/h]; None to rely on the log's ``fuel_gal``
        (or no burn when the log has none).
    flap_deg : float or None
        Flap setting flown [deg].
    stab_setting : str or None
        Label of the stabilizer incidence setting flown.
    stab_incidence_deg : float or None
        That incidence [deg, leading edge up positive].
    """

    source: str
    flight: str
    date: dt.date | None
    label: str
    notes: str
    takeoff_weight_lb: float
    takeoff_cg_in: float | None
    takeoff_cg_pct_mac: float | None
    takeoff_fuel_gal: float
    fuel_flow_gph: float | None
    flap_deg: float | None
    stab_setting: str | None
    stab_incidence_deg: float | None


def read_loading_sheet(
    source: str | Path | bytes | Any, *, name: str | None = None
) -> LoadingSheet:
    """Read the loading sheet of one flight (a small TOML file).

    The format, one file per flight; quantities are strings with a unit::

        flight = "3"                 # the log's flight label
        date = 2026-06-14            # optional (TOML date)
        label = "aft CG, original stab"   # optional
        notes = "calm air, 2 on board"    # optional

        [takeoff]
        weight = "1520 lb"           # any mass unit
        cg = "78.4 in"               # station aft of datum, or "27.5 %MAC"
        fuel = "24 gal"              # US gallons, or litres ("91 l")

        [fuel]                       # optional
        flow = "7.5 gal/h"           # constant burn; without it the log's fuel_gal is used

        [config]                     # optional
        flap = "0 deg"
        stab_setting = "original"    # label of the incidence setting flown
        stab_incidence = "0 deg"     # its incidence, leading edge up positive

    Parameters
    ----------
    source : str, pathlib.Path, bytes or file-like
        The sheet.
    name : str, optional
        File name for messages.

    Returns
    -------
    LoadingSheet

    Raises
    ------
    InputFileError
        Not TOML, an unknown key (with the nearest known ones), a missing
        takeoff value, a value without a unit or with a unit of the wrong
        kind, or an implausible value.
    """
    raw, label = load_source(source, name)
    try:
        text = raw.decode("utf-8-sig")
        table = tomllib.loads(text)
    except UnicodeDecodeError as exc:
        raise InputFileError("a loading sheet must be UTF-8 text (TOML)", file=label) from exc
    except tomllib.TOMLDecodeError as exc:
        where = re.search(r"line (\d+)", str(exc))
        raise InputFileError(
            f"not a valid TOML loading sheet: {exc}",
            file=label,
            line=int(where.group(1)) if where else None,
        ) from exc
    _check_sheet_keys(table, label)
    takeoff = table.get("takeoff")
    if not isinstance(takeoff, dict):
        raise InputFileError(
            "missing [takeoff] table with weight, cg and fuel (e.g. weight = \"1520 lb\")",
            file=label,
        )
    for key in _SHEET_KEYS["takeoff"]:
        if key not in takeoff:
            raise InputFileError(f"missing key 'takeoff.{key}'", file=label)
    fuel = table.get("fuel", {})
    config = table.get("config", {})
    weight = _sheet_quantity(takeoff["weight"], "lb", "takeoff.weight", label, (1.0, 1e5))
    cg_in, cg_pct = _sheet_cg(takeoff["cg"], label)
    fuel_gal = _sheet_quantity(takeoff["fuel"], "gal", "takeoff.fuel", label, (0.0, 5000.0))
    flow = fuel.get("flow")
    date = table.get("date")
    if date is not None and not isinstance(date, dt.date):
        raise InputFileError(
            f"key 'date': expected a TOML date such as 2026-06-14, found {date!r}", file=label
        )
    if isinstance(date, dt.datetime):
        date = date.date()
    return LoadingSheet(
        source=label,
        flight=_sheet_text(table, "flight", label, required=True),
        date=date,
        label=_sheet_text(table, "label", label),
        notes=_sheet_text(table, "notes", label),
        takeoff_weight_lb=weight,
        takeoff_cg_in=cg_in,
        takeoff_cg_pct_mac=cg_pct,
        takeoff_fuel_gal=fuel_gal,
        fuel_flow_gph=None
        if flow is None
        else _sheet_quantity(flow, "gal/h", "fuel.flow", label, (1e-6, 200.0)),
        flap_deg=None
        if "flap" not in config
        else _sheet_quantity(config["flap"], "deg", "config.flap", label, (-20.0, 60.0)),
        stab_setting=_sheet_text(config, "stab_setting", label) or None,
        stab_incidence_deg=None
        if "stab_incidence" not in config
        else _sheet_quantity(
            config["stab_incidence"], "deg", "config.stab_incidence", label, (-15.0, 15.0)
        ),
    )


def _check_sheet_keys(table: dict[str, Any], label: str) -> None:
    for section, allowed in _SHEET_KEYS.items():
        part = table if not section else table.get(section, {})
        if not isinstance(part, dict):
            raise InputFileError(f"'{section}' must be a table ([{section}])", file=label)
        for key in part:
            if key in allowed:
                continue
            near = difflib.get_close_matches(key, allowed, n=2, cutoff=0.5)
            full = f"{section}.{key}" if section else key
            hint = f"; did you mean {' or '.join(repr(n) for n in near)}?" if near else ""
            raise InputFileError(
                f"unknown key '{full}'; expected one of {', '.join(allowed)}{hint}", file=label
            )


def _sheet_text(table: dict[str, Any], key: str, label: str, *, required: bool = False) -> str:
    value = table.get(key, "")
    if isinstance(value, int) and not isinstance(value, bool):
        value = str(value)
    if not isinstance(value, str):
        raise InputFileError(f"key '{key}': expected text, found {value!r}", file=label)
    if required and not value.strip():
        raise InputFileError(f"missing key '{key}' (e.g. {key} = \"3\")", file=label)
    return value.strip()


def _sheet_quantity(
    value: Any, unit: str, key: str, label: str, bounds: tuple[float, float]
) -> float:
    try:
        number = parse_quantity(value, unit, key=key)
    except UnitError as exc:
        raise InputFileError(str(exc), file=label) from exc
    low, high = bounds
    if not low <= number <= high:
        raise InputFileError(
            f"key '{key}': {value!r} is outside the plausible range {low:g}...{high:g} {unit}",
            file=label,
        )
    return number


def _sheet_cg(value: Any, label: str) -> tuple[float | None, float | None]:
    """Return the takeoff CG as a station [in] or as %MAC, decided by its unit."""
    if isinstance(value, str) and ("%" in value or "mac" in value.lower() or "pct" in value):
        return None, _sheet_quantity(value, "percent", "takeoff.cg", label, (-50.0, 150.0))
    if not isinstance(value, str):
        raise InputFileError(
            f"key 'takeoff.cg': expected a station such as \"78.4 in\" or \"27.5 %MAC\", "
            f"found the bare value {value!r}",
            file=label,
        )
    return _sheet_quantity(value, "in", "takeoff.cg", label, (-1000.0, 1000.0)), None
