"""The aircraft profile: geometry, limits and the cruise condition of one aircraft.

A profile is a TOML file.  The keys below are a contract that other tools
rely on; new keys may be added, these are never renamed.  Dimensional values
are strings with units (``"118 ft^2"``, ``"51 in"``, ``"25 deg"``).

.. code-block:: toml

    [aircraft]
    name = "Demo two-seater"
    wing_area = "118 ft^2"
    mac = "51 in"                 # mean aerodynamic chord
    lemac = "60 in"               # station of the MAC leading edge, aft of the datum
    wing_span = "28 ft"           # optional
    clmax_clean = 1.45            # optional, for elevator authority
    clmax_landing = 1.95          # optional, landing flaps

    [tail]
    tau = 0.5                     # optional if elevator_chord_ratio is given
    elevator_chord_ratio = 0.35   # optional
    stabilizer_attach_spacing = "14 in"
    elevator_up_stop = "25 deg"
    elevator_down_stop = "18 deg"
    current_incidence = "-1.0 deg"  # optional, to the waterline, leading-edge up positive
    horizontal_area = "22 ft^2"   # optional tail geometry, for the tail-volume check
    horizontal_span = "8.5 ft"
    horizontal_arm = "150 in"     # wing quarter-MAC to tail quarter-MAC
    vertical_area = "9 ft^2"
    vertical_height = "4 ft"
    vertical_arm = "155 in"

    [limits]
    cg_forward = "69 in"
    cg_aft = "76 in"
    max_weight = "1750 lb"
    min_static_margin = 5.0       # optional, %MAC: a policy choice, not a rule
    cg_step_max = 2.0             # optional, %MAC beyond the most aft CG flown
    elevator_reserve = "3 deg"    # optional, up elevator to keep in hand at CLmax

    [cruise]
    cas = "120 kt"
    pressure_altitude = "5000 ft" # optional (default 5000 ft)
    weight = "1600 lb"            # optional (default 90 % of max weight)
    cg = "72.5 in"                # optional (default mid-envelope)

    [measurement]                 # optional: errors shared by every point of a flight, 1 sigma
    cg_uncertainty = 0.3          # %MAC (default 0.3); a loading sheet may give its own
    stick_force_zero_uncertainty = "0.3 lbf"   # force-gauge zero (default 0.3 lbf)

    [trim]                        # optional: how the pilot trims pitch
    system = "tab"                # tab, spring, stabilator, trimmable_stabilizer or none
    friction = "0.5 lbf"          # half-width of the stick-force friction band (free return)

    [fuel]                        # optional, for fuel burn through a flight
    arm = "68 in"
    density = "6.0 lb/gal"        # avgas, US gallon

    [airspeed_calibration]        # optional position-error table
    ias = [50, 70, 90, 110, 130]
    cas = [53, 71, 90, 109, 128]
    unit = "kt"

    [logger]                      # optional: how this aircraft's logger names things
    columns = { "IAS" = "ias_kt", "ELEV_POS" = "elevator_deg" }
    inverted = ["elevator_deg"]   # columns the logger records with the opposite sign
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trimlog.errors import ProfileError, TrimlogError
from trimlog.files import read_regular_file
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.schema import Key, check_keys, check_range, load_toml, read_key
from trimlog.input.units import is_compatible, parse_unit, unit_factor
from trimlog.physics.mass_balance import pct_mac_to_station, station_to_pct_mac

DEFAULT_CRUISE_PRESSURE_ALT_FT = 5000.0
DEFAULT_CRUISE_WEIGHT_FRACTION = 0.9
DEFAULT_MIN_STATIC_MARGIN_PCT_MAC = 5.0
DEFAULT_CG_STEP_MAX_PCT_MAC = 2.0
DEFAULT_ELEVATOR_RESERVE_DEG = 3.0
DEFAULT_FUEL_DENSITY_LB_PER_GAL = 6.0
#: Per-flight CG uncertainty, 1 sigma [%MAC]: weighing on platform scales (about 0.1 % of
#: the reading each) and a fuel quantity known to about a gallon give 0.1-0.2 in on a light
#: aircraft, about 0.3 %MAC of a 50 in chord.  # common practice, no source
DEFAULT_CG_UNCERTAINTY_PCT_MAC = 0.3
#: Per-flight stick-force gauge zero uncertainty, 1 sigma [lbf]: zeroed on the ground, it
#: drifts with temperature and the pilot's hand position.  # common practice, no source
DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF = 0.3

#: Pitch trim systems a profile may declare (``trim.system``): an elevator trim tab (also a
#: servo or anti-servo tab), a spring or bungee on the control circuit, an all-moving tail
#: with its own tab, a stabilizer whose incidence the trim moves, or no trim at all.
TRIM_SYSTEMS = ("tab", "spring", "stabilator", "trimmable_stabilizer", "none")

#: Band around the MAC [%MAC] inside which every CG station of the profile
#: must lie (limits and cruise CG); outside it lemac, mac or the datum is wrong.
CG_BAND_PCT_MAC = (-25.0, 75.0)
# A cruise weight above this multiple of the maximum weight is a unit mistake (kg vs lb is 2.2).
MAX_CRUISE_WEIGHT_FACTOR = 1.25

# Ranges: generous bounds for light aircraft and UAVs (common practice, no source);
# they catch unit and typing mistakes, not design choices.
PROFILE_KEYS: tuple[Key, ...] = (
    Key("aircraft.name", "text", required=True, description="aircraft name"),
    Key("aircraft.wing_area", "quantity", "ft^2", required=True, low=0.1, high=5000.0,
        attr="wing_area_ft2", description="reference wing area"),
    Key("aircraft.mac", "quantity", "in", required=True, low=0.5, high=600.0, attr="mac_in",
        description="mean aerodynamic chord"),
    Key("aircraft.lemac", "quantity", "in", required=True, low=-5000.0, high=5000.0,
        attr="lemac_in", description="station of the MAC leading edge, aft of the datum"),
    Key("aircraft.wing_span", "quantity", "in", low=0.0, high=3600.0, low_open=True,
        attr="wing_span_in", description="wing span"),
    Key("aircraft.clmax_clean", "number", low=0.3, high=4.0,
        description="maximum lift coefficient, clean"),
    Key("aircraft.clmax_landing", "number", low=0.3, high=4.0,
        description="maximum lift coefficient, landing flaps"),
    Key("tail.tau", "number", low=0.0, high=1.0, low_open=True,
        description="elevator effectiveness"),
    Key("tail.elevator_chord_ratio", "number", low=0.0, high=1.0, low_open=True,
        high_open=True, description="elevator chord / tail chord"),
    Key("tail.stabilizer_attach_spacing", "quantity", "in", required=True, low=0.0,
        high=600.0, low_open=True, attr="stabilizer_attach_spacing_in",
        description="spacing of the stabilizer attachments (front to rear)"),
    Key("tail.elevator_up_stop", "quantity", "deg", required=True, low=0.0, high=60.0,
        low_open=True, absolute=True, attr="elevator_up_stop_deg",
        description="elevator travel to the up stop"),
    Key("tail.elevator_down_stop", "quantity", "deg", required=True, low=0.0, high=60.0,
        low_open=True, absolute=True, attr="elevator_down_stop_deg",
        description="elevator travel to the down stop"),
    Key("tail.current_incidence", "quantity", "deg", low=-15.0, high=15.0,
        attr="current_incidence_deg",
        description="stabilizer incidence as rigged, leading edge up positive"),
    Key("tail.horizontal_area", "quantity", "ft^2", low=0.0, high=2000.0, low_open=True,
        attr="htail_area_ft2", description="horizontal tail area"),
    Key("tail.horizontal_span", "quantity", "in", low=0.0, high=1200.0, low_open=True,
        attr="htail_span_in", description="horizontal tail span"),
    Key("tail.horizontal_arm", "quantity", "in", low=0.0, high=2400.0, low_open=True,
        attr="htail_arm_in", description="wing quarter-MAC to tail quarter-MAC"),
    Key("tail.vertical_area", "quantity", "ft^2", low=0.0, high=2000.0, low_open=True,
        attr="vtail_area_ft2", description="vertical tail area"),
    Key("tail.vertical_height", "quantity", "in", low=0.0, high=1200.0, low_open=True,
        attr="vtail_height_in", description="vertical tail height"),
    Key("tail.vertical_arm", "quantity", "in", low=0.0, high=2400.0, low_open=True,
        attr="vtail_arm_in", description="wing quarter-MAC to fin quarter-MAC"),
    Key("limits.cg_forward", "quantity", "in", required=True, low=-5000.0, high=5000.0,
        attr="cg_forward_in", description="forward CG limit, station"),
    Key("limits.cg_aft", "quantity", "in", required=True, low=-5000.0, high=5000.0,
        attr="cg_aft_in", description="aft CG limit, station"),
    Key("limits.max_weight", "quantity", "lb", required=True, low=1.0, high=1.0e5,
        attr="max_weight_lb", description="maximum weight"),
    Key("limits.min_static_margin", "number", "%MAC", low=0.0, high=40.0,
        default=DEFAULT_MIN_STATIC_MARGIN_PCT_MAC, attr="min_static_margin_pct_mac",
        description="minimum static margin to keep, a policy choice"),
    Key("limits.cg_step_max", "number", "%MAC", low=0.0, high=20.0,
        default=DEFAULT_CG_STEP_MAX_PCT_MAC, attr="cg_step_max_pct_mac",
        description="largest CG step beyond the most aft CG flown"),
    Key("limits.elevator_reserve", "quantity", "deg", low=0.0, high=30.0,
        default=DEFAULT_ELEVATOR_RESERVE_DEG, attr="elevator_reserve_deg",
        description="up elevator to keep in hand at CLmax"),
    Key("cruise.cas", "quantity", "kt", required=True, low=5.0, high=500.0,
        attr="cruise_cas_kt", description="cruise calibrated airspeed"),
    Key("cruise.pressure_altitude", "quantity", "ft", low=-2000.0, high=60000.0,
        attr="cruise_pressure_alt_ft", description="cruise pressure altitude"),
    Key("cruise.weight", "quantity", "lb", low=1.0, high=1.0e5, attr="cruise_weight_lb",
        description="cruise weight"),
    Key("cruise.cg", "quantity", "in", low=-5000.0, high=5000.0, attr="cruise_cg_in",
        description="cruise CG station"),
    Key("fuel.arm", "quantity", "in", low=-5000.0, high=5000.0, attr="fuel_arm_in",
        description="fuel tank arm"),
    Key("fuel.density", "quantity", "lb/gal", low=3.0, high=10.0,
        default=DEFAULT_FUEL_DENSITY_LB_PER_GAL, attr="fuel_density_lb_per_gal",
        description="fuel density (avgas 6.0 lb/US gal)"),
    Key("measurement.cg_uncertainty", "number", "%MAC", low=0.0, high=10.0,
        default=DEFAULT_CG_UNCERTAINTY_PCT_MAC, attr="cg_uncertainty_pct_mac",
        description="1-sigma CG uncertainty of each flight, shared by all its points "
                    "(default for flights whose loading sheet gives none)"),
    Key("measurement.stick_force_zero_uncertainty", "quantity", "lbf", low=0.0, high=20.0,
        default=DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF,
        attr="stick_force_zero_uncertainty_lbf",
        description="1-sigma zero error of the stick-force gauge on each flight"),
    Key("trim.system", "text", choices=TRIM_SYSTEMS, attr="trim_system",
        description="pitch trim: tab, spring (or bungee), stabilator (all-moving tail), "
                    "trimmable_stabilizer or none; sets what the stick-force results mean"),
    Key("trim.friction", "quantity", "lbf", low=0.0, high=20.0, attr="trim_friction_lbf",
        description="half-width of the stick-force friction band: the force that does not "
                    "yet move the stick (for the free-return check)"),
    Key("airspeed_calibration.ias", "numbers", description="indicated airspeeds of the table"),
    Key("airspeed_calibration.cas", "numbers", description="calibrated airspeeds of the table"),
    Key("airspeed_calibration.unit", "text", default="kt",
        description="speed unit of the table"),
    Key("logger.columns", "mapping", attr="column_map",
        description="logger header = canonical column name"),
    Key("logger.inverted", "texts", attr="inverted_columns",
        description="canonical columns the logger records with the opposite sign"),
)

#: Keys whose station must lie inside :data:`CG_BAND_PCT_MAC` of the MAC.
_CG_STATION_KEYS = ("limits.cg_forward", "limits.cg_aft", "cruise.cg")
# Keys read by their own code (calibration table) or only checked (text defaults).
_OWN_CODE = ("airspeed_calibration.ias", "airspeed_calibration.cas",
             "airspeed_calibration.unit")
_BY_KEY = {k.key: k for k in PROFILE_KEYS}
# Position-error table speeds [kt], after conversion (common practice, no source).
_CALIBRATION_RANGE_KT = (1.0, 600.0)


@dataclass(frozen=True)
class AircraftProfile:
    """One aircraft, in the package's declared units (see DEVELOPERS.md)."""

    name: str
    wing_area_ft2: float
    mac_in: float
    lemac_in: float
    stabilizer_attach_spacing_in: float
    elevator_up_stop_deg: float
    elevator_down_stop_deg: float
    cg_forward_in: float
    cg_aft_in: float
    max_weight_lb: float
    cruise_cas_kt: float
    cruise_pressure_alt_ft: float
    cruise_weight_lb: float
    cruise_cg_in: float
    tau: float | None = None
    elevator_chord_ratio: float | None = None
    current_incidence_deg: float | None = None
    wing_span_in: float | None = None
    clmax_clean: float | None = None
    clmax_landing: float | None = None
    htail_area_ft2: float | None = None
    htail_span_in: float | None = None
    htail_arm_in: float | None = None
    vtail_area_ft2: float | None = None
    vtail_height_in: float | None = None
    vtail_arm_in: float | None = None
    min_static_margin_pct_mac: float = DEFAULT_MIN_STATIC_MARGIN_PCT_MAC
    cg_step_max_pct_mac: float = DEFAULT_CG_STEP_MAX_PCT_MAC
    elevator_reserve_deg: float = DEFAULT_ELEVATOR_RESERVE_DEG
    fuel_arm_in: float | None = None
    fuel_density_lb_per_gal: float = DEFAULT_FUEL_DENSITY_LB_PER_GAL
    cg_uncertainty_pct_mac: float = DEFAULT_CG_UNCERTAINTY_PCT_MAC
    stick_force_zero_uncertainty_lbf: float = DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF
    trim_system: str | None = None
    trim_friction_lbf: float | None = None
    position_error_ias_kt: tuple[float, ...] | None = None
    position_error_cas_kt: tuple[float, ...] | None = None
    column_map: Mapping[str, str] = field(default_factory=dict)
    inverted_columns: tuple[str, ...] = ()
    defaults_used: tuple[str, ...] = ()
    warnings: tuple[str, ...] = ()
    source: str = "<profile>"
    text: str = ""

    def pct_mac(self, station_in: float) -> float:
        """CG station [in] as percent of the MAC from its leading edge."""
        return station_to_pct_mac(station_in, self.lemac_in, self.mac_in)

    def station(self, pct_mac: float) -> float:
        """Station [in] of a point given in percent of the MAC."""
        return pct_mac_to_station(pct_mac, self.lemac_in, self.mac_in)

    @property
    def cg_forward_pct_mac(self) -> float:
        """Forward CG limit [%MAC]."""
        return self.pct_mac(self.cg_forward_in)

    @property
    def cg_aft_pct_mac(self) -> float:
        """Aft CG limit [%MAC]."""
        return self.pct_mac(self.cg_aft_in)


def profile_key(key: str) -> Key:
    """The schema row of one profile key (for options that set the same value).

    Examples
    --------
    >>> profile_key("limits.min_static_margin").range_text()
    '0..40 %MAC'
    """
    return _BY_KEY[key]


def check_policy(key: str, value: float, *, source: str = "option") -> float:
    """Check a value typed outside the profile (CLI option, dashboard) by the profile's rule.

    Parameters
    ----------
    key : str
        The profile key whose rule applies, e.g. ``"limits.min_static_margin"``.
    value : float
        In the key's unit.
    source : str
        Where the value was typed, for the message (``"--min-margin"``).

    Returns
    -------
    float

    Raises
    ------
    ProfileError
        Not finite or outside the plausible range.

    Examples
    --------
    >>> check_policy("limits.min_static_margin", 0.0)
    0.0
    >>> check_policy("limits.min_static_margin", -10.0, source="--min-margin")
    ... # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    trimlog.errors.ProfileError: --min-margin: limits.min_static_margin: -10 is outside ...
    """
    def fail(_key: str, message: str) -> ProfileError:
        return ProfileError(f"{source}: {message}")

    try:
        number = float(value)
    except (TypeError, ValueError, OverflowError):
        raise fail(key, f"{key}: expected a number, found {value!r}") from None
    return check_range(_BY_KEY[key], number, fail)


def profile_findings(tau: float | None, elevator_chord_ratio: float | None,
                     source: str) -> tuple[Finding, ...]:
    """What a profile leaves the analysis without (the rule behind ``AircraftProfile.warnings``).

    Parameters
    ----------
    tau : float or None
        ``tail.tau`` [-].
    elevator_chord_ratio : float or None
        ``tail.elevator_chord_ratio`` [-].
    source : str
        The profile's file name, for the subject.

    Examples
    --------
    >>> [f.code for f in profile_findings(None, None, "a.toml")]
    ['input.profile.no_tau_source']
    >>> profile_findings(0.45, None, "a.toml")
    ()
    """
    if tau is None and elevator_chord_ratio is None:
        return (finding("input.profile.no_tau_source", Severity.CAUTION,
                        Subject(source=source, quantity="tau")),)
    return ()


def parse_profile(text: str, source: str = "<profile>") -> AircraftProfile:
    """Parse and validate the text of a profile TOML.

    Every key is declared once in :data:`PROFILE_KEYS` (kind, unit,
    required or default, plausible range); unknown keys and sections are
    refused with the nearest valid key.

    Parameters
    ----------
    text : str
        The TOML document.
    source : str
        Name used in error messages (the file name).

    Returns
    -------
    AircraftProfile

    Raises
    ------
    ProfileError
        Malformed TOML, an unknown or missing key, a unit of the wrong
        dimension, or an implausible value; the message names the key.
    """
    def fail(key: str, message: str) -> ProfileError:
        return ProfileError(f"{source}: {message}")

    data = load_toml(text, source, fail)
    check_keys(data, PROFILE_KEYS, fail)
    values: dict[str, Any] = {}
    for spec in PROFILE_KEYS:
        if spec.key not in _OWN_CODE:
            values[spec.field] = read_key(data, spec, fail)
    defaults: list[str] = []
    _check_cross_keys(values, fail)
    warnings = [f.line() for f in profile_findings(values["tau"], values["elevator_chord_ratio"],
                                                   source)]
    _fill_defaults(data, values, defaults)
    _check_cg_band(values, fail)
    ias_table, cas_table = _position_error_table(data, fail)
    values["column_map"] = values["column_map"] or {}
    values["inverted_columns"] = values["inverted_columns"] or ()
    return AircraftProfile(
        **values,
        position_error_ias_kt=ias_table,
        position_error_cas_kt=cas_table,
        defaults_used=tuple(defaults),
        warnings=tuple(warnings),
        source=source,
        text=text,
    )


def _short(value: float) -> str:
    """A station or weight for a message, to 0.1: ``78.9`` (not ``78.8661``), ``77``."""
    return f"{round(value, 1):g}"


def _check_cross_keys(values: dict[str, Any], fail: Any) -> None:
    cg_fwd, cg_aft = values["cg_forward_in"], values["cg_aft_in"]
    if cg_fwd >= cg_aft:
        raise fail(
            "limits.cg_forward",
            f"limits.cg_forward: the forward limit ({_short(cg_fwd)} in) must lie forward "
            f"of (less than) the aft limit ({_short(cg_aft)} in)",
        )
    weight = values["cruise_weight_lb"]
    if weight is not None and weight > MAX_CRUISE_WEIGHT_FACTOR * values["max_weight_lb"]:
        raise fail(
            "cruise.weight",
            f"cruise.weight: {_short(weight)} lb is more than "
            f"{MAX_CRUISE_WEIGHT_FACTOR:g} x the maximum weight "
            f"({_short(values['max_weight_lb'])} lb);"
            " check the units (kg against lb is a factor 2.2)",
        )


def _fill_defaults(data: Mapping[str, Any], values: dict[str, Any], defaults: list[str]) -> None:
    """The defaults that depend on other keys, each recorded in words."""
    if values["cruise_pressure_alt_ft"] is None:
        values["cruise_pressure_alt_ft"] = DEFAULT_CRUISE_PRESSURE_ALT_FT
        defaults.append(f"cruise pressure altitude {DEFAULT_CRUISE_PRESSURE_ALT_FT:g} ft")
    if values["cruise_weight_lb"] is None:
        values["cruise_weight_lb"] = DEFAULT_CRUISE_WEIGHT_FRACTION * values["max_weight_lb"]
        defaults.append(f"cruise weight {values['cruise_weight_lb']:g} lb (90 % of max weight)")
    if values["cruise_cg_in"] is None:
        values["cruise_cg_in"] = 0.5 * (values["cg_forward_in"] + values["cg_aft_in"])
        defaults.append(f"cruise CG {values['cruise_cg_in']:g} in (mid-envelope)")
    measurement = data.get("measurement", {})
    if "cg_uncertainty" not in measurement:
        defaults.append(f"CG uncertainty {DEFAULT_CG_UNCERTAINTY_PCT_MAC:g} %MAC per flight "
                        "(1 sigma; common practice)")
    if "stick_force_zero_uncertainty" not in measurement:
        defaults.append(f"stick-force zero uncertainty {DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF:g}"
                        " lbf per flight (1 sigma; common practice)")
    if "min_static_margin" not in data.get("limits", {}):
        defaults.append(
            f"minimum static margin {DEFAULT_MIN_STATIC_MARGIN_PCT_MAC:g} %MAC "
            "(a policy choice, not a rule)"
        )


def _check_cg_band(values: dict[str, Any], fail: Any) -> None:
    lemac, mac = values["lemac_in"], values["mac_in"]
    low, high = CG_BAND_PCT_MAC
    for key in _CG_STATION_KEYS:
        station = values[_BY_KEY[key].field]
        pct = station_to_pct_mac(station, lemac, mac)
        if not low <= pct <= high:
            raise fail(
                key,
                f"{key}: {_short(station)} in is {pct:.0f} %MAC (MAC {_short(lemac)} "
                f"to {_short(lemac + mac)} in); expected a CG station within "
                f"{low:g}..{high:g} %MAC: "
                "check lemac, mac and the datum",
            )


def load_profile(path: str | Path) -> AircraftProfile:
    """Read and validate a profile TOML file (see :func:`parse_profile`)."""
    path = Path(path)
    try:
        raw = read_regular_file(path, "aircraft profile")
    except TrimlogError as exc:
        raise ProfileError(f"cannot read the aircraft profile: {exc}") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ProfileError(f"{path}: the aircraft profile is not UTF-8 text") from None
    return parse_profile(text, source=str(path))


def _position_error_table(
    data: Mapping[str, Any], fail: Any
) -> tuple[tuple[float, ...] | None, tuple[float, ...] | None]:
    table = data.get("airspeed_calibration")
    if table is None:
        return None, None
    key = "airspeed_calibration"
    if "ias" not in table or "cas" not in table:
        raise fail(f"{key}.ias", f"{key}.ias: expected arrays 'ias' and 'cas' and a 'unit'")
    unit_text = read_key(data, _BY_KEY[f"{key}.unit"], fail)
    try:
        unit = parse_unit(str(unit_text)) if unit_text else None
    except TrimlogError:
        unit = None
    if unit is None or not is_compatible(unit, "kt"):
        raise fail(f"{key}.unit",
                   f"{key}.unit: expected a speed unit such as 'kt', found {unit_text!r}")
    scale, offset = unit_factor(unit, "kt")
    columns = []
    low, high = _CALIBRATION_RANGE_KT
    for name in ("ias", "cas"):
        values = read_key(data, _BY_KEY[f"{key}.{name}"], fail)
        converted = tuple(scale * v + offset for v in values)
        if any(not low <= v <= high for v in converted):
            raise fail(f"{key}.{name}", f"{key}.{name}: expected speeds within {low:g}..{high:g}"
                                        f" kt, found {list(values)!r} {unit_text}")
        columns.append(converted)
    ias, cas = columns
    if len(ias) != len(cas) or len(ias) < 2:
        raise fail(
            f"{key}.ias",
            f"{key}.ias: expected two lists of equal length (at least 2), found {len(ias)} "
            f"and {len(cas)}",
        )
    if any(b <= a for a, b in zip(ias, ias[1:], strict=False)):
        raise fail(f"{key}.ias", f"{key}.ias: expected indicated airspeeds in strictly "
                                 "increasing order")
    return ias, cas


def with_policy(profile: AircraftProfile, **changes: float) -> AircraftProfile:
    """A copy of ``profile`` with policy values changed, each checked by its key's rule.

    Parameters
    ----------
    profile : AircraftProfile
    **changes : float
        Attribute names (``min_static_margin_pct_mac``, ``cg_step_max_pct_mac``,
        ``elevator_reserve_deg``) and values in their units.
    """
    by_attr = {k.field: k for k in PROFILE_KEYS}
    checked = {attr: check_policy(by_attr[attr].key, value) for attr, value in changes.items()}
    return dataclasses.replace(profile, **checked)
