"""The loading sheet of a flight: takeoff weight, CG and fuel, and the configuration flown.

One small TOML file per flight (see :func:`read_loading_sheet` for the
format); quantities are strings with a unit, parsed once here.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from trimlog.errors import InputFileError
from trimlog.input.logs import load_source
from trimlog.input.schema import Key, check_keys, load_toml, read_key

__all__ = ["SHEET_KEYS", "LoadingSheet", "read_loading_sheet"]


# Ranges: generous bounds for light aircraft and UAVs (common practice, no source).
SHEET_KEYS: tuple[Key, ...] = (
    Key("flight", "text", required=True, description="the log's flight label"),
    Key("date", "date", description="date flown"),
    Key("label", "text", default="", description="free text"),
    Key("notes", "text", default="", description="free text"),
    Key("takeoff.weight", "quantity", "lb", required=True, low=1.0, high=1.0e5,
        attr="takeoff_weight_lb", description="weight at takeoff"),
    Key("takeoff.cg", "quantity", "in", required=True, low=-1000.0, high=1000.0,
        attr="takeoff_cg_in", description='CG at takeoff, station ("78.4 in") or "27.5 %MAC"'),
    Key("takeoff.fuel", "quantity", "gal", required=True, low=0.0, high=5000.0,
        attr="takeoff_fuel_gal", description="fuel on board at takeoff"),
    Key("fuel.flow", "quantity", "gal/h", low=0.0, high=200.0, low_open=True,
        attr="fuel_flow_gph", description="constant fuel flow"),
    Key("config.flap", "quantity", "deg", low=-20.0, high=60.0, attr="flap_deg",
        description="flap setting flown"),
    Key("takeoff.cg_uncertainty", "quantity", "in", low=0.0, high=10.0,
        attr="cg_uncertainty_in",
        description="1-sigma uncertainty of this flight's CG, shared by all its points"),
    Key("config.stab_setting", "text", description="label of the stabilizer setting flown"),
    Key("config.stab_incidence", "quantity", "deg", low=-15.0, high=15.0,
        attr="stab_incidence_deg", description="its incidence, leading edge up positive"),
    Key("trim.speed", "quantity", "kt", low=5.0, high=500.0, attr="trim_speed_kt",
        description="indicated airspeed at which the stick force was trimmed to zero hands "
                    "off before the stick-force points (fits the force-gauge zero)"),
)
_BY_KEY = {k.key: k for k in SHEET_KEYS}
# The takeoff CG given in %MAC instead of as a station.
_CG_PCT_MAC = Key("takeoff.cg", "quantity", "percent", low=-50.0, high=150.0,
                  attr="takeoff_cg_pct_mac", description="CG at takeoff [%MAC]")
# Its uncertainty given in %MAC instead of as a length.
_CG_SIGMA_PCT_MAC = Key("takeoff.cg_uncertainty", "quantity", "percent", low=0.0, high=10.0,
                        attr="cg_uncertainty_pct_mac",
                        description="1-sigma CG uncertainty of this flight [%MAC]")


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
    cg_uncertainty_in, cg_uncertainty_pct_mac : float or None
        Optional ``takeoff.cg_uncertainty``: 1-sigma uncertainty of this
        flight's CG, shared by all its points, as a length [in] or in %MAC
        (``"0.15 in"``, ``"0.3 %MAC"``); None for the profile's default.
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
    cg_uncertainty_in: float | None = None
    cg_uncertainty_pct_mac: float | None = None
    #: Optional ``trim.speed`` [kt, indicated]: where the force was trimmed to zero.
    trim_speed_kt: float | None = None
    #: The date and time flown, when ``date`` is a TOML date-time (``2026-06-14T09:30:00Z``);
    #: ``date`` then holds its day. Flights of one day are ordered by it.
    flown_at: dt.datetime | None = None


def read_loading_sheet(
    source: str | Path | bytes | Any, *, name: str | None = None
) -> LoadingSheet:
    """Read the loading sheet of one flight (a small TOML file).

    The format, one file per flight; quantities are strings with a unit::

        flight = "3"                 # the log's flight label
        date = 2026-06-14            # optional (TOML date, or date-time 2026-06-14T09:30:00Z)
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

        [trim]                       # optional
        speed = "95 kt"              # IAS where the stick force was trimmed to zero

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

    def fail(key: str, message: str) -> InputFileError:
        return InputFileError(message, file=label)

    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise InputFileError("a loading sheet must be UTF-8 text (TOML)", file=label) from exc
    table = load_toml(text, label, fail, "a valid TOML loading sheet")
    check_keys(table, SHEET_KEYS, fail)
    if not isinstance(table.get("takeoff"), dict):
        raise InputFileError(
            "missing [takeoff] table with weight, cg and fuel (e.g. weight = \"1520 lb\")",
            file=label,
        )
    flight = table.get("flight")
    if isinstance(flight, int) and not isinstance(flight, bool) and abs(flight) < 10**18:
        table["flight"] = str(flight)  # flight = 3 is the flight "3"
    # the flight label last, so that a malformed value is named before a missing label
    values = {spec.field: read_key(table, spec, fail) for spec in SHEET_KEYS[1:]
              if spec.key not in ("takeoff.cg", "takeoff.cg_uncertainty")}
    sigma = table["takeoff"].get("cg_uncertainty")
    values["cg_uncertainty_in"] = values["cg_uncertainty_pct_mac"] = None
    if isinstance(sigma, str) and ("%" in sigma or "mac" in sigma.lower() or "pct" in sigma):
        values["cg_uncertainty_pct_mac"] = read_key(table, _CG_SIGMA_PCT_MAC, fail)
    elif sigma is not None:
        values["cg_uncertainty_in"] = read_key(table, _BY_KEY["takeoff.cg_uncertainty"], fail)
    values["flight"] = read_key(table, SHEET_KEYS[0], fail)
    cg = table["takeoff"].get("cg")
    if cg is None:
        raise InputFileError("missing key 'takeoff.cg'", file=label)
    if isinstance(cg, str) and ("%" in cg or "mac" in cg.lower() or "pct" in cg):
        values["takeoff_cg_in"], values["takeoff_cg_pct_mac"] = None, read_key(
            {"takeoff": {"cg": cg}}, _CG_PCT_MAC, fail)
    elif not isinstance(cg, str):
        raise InputFileError(
            f"key 'takeoff.cg': expected a station such as \"78.4 in\" or \"27.5 %MAC\", "
            f"found the bare value {cg!r}",
            file=label,
        )
    else:
        values["takeoff_cg_in"] = read_key(table, _BY_KEY["takeoff.cg"], fail)
        values["takeoff_cg_pct_mac"] = None
    values["stab_setting"] = values["stab_setting"] or None
    when = table.get("date")
    values["flown_at"] = when if isinstance(when, dt.datetime) else None
    return LoadingSheet(source=label, **values)
