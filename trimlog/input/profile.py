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

import math
import tomllib
from collections.abc import Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from trimlog.errors import ProfileError, TrimlogError
from trimlog.input.units import is_compatible, parse_quantity, parse_unit, unit_factor
from trimlog.physics.mass_balance import pct_mac_to_station, station_to_pct_mac

DEFAULT_CRUISE_PRESSURE_ALT_FT = 5000.0
DEFAULT_CRUISE_WEIGHT_FRACTION = 0.9
DEFAULT_MIN_STATIC_MARGIN_PCT_MAC = 5.0
DEFAULT_CG_STEP_MAX_PCT_MAC = 2.0
DEFAULT_ELEVATOR_RESERVE_DEG = 3.0
DEFAULT_FUEL_DENSITY_LB_PER_GAL = 6.0

_SECTIONS = (
    "aircraft", "tail", "limits", "cruise", "fuel", "airspeed_calibration", "logger",
)


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


class _Reader:
    """Pulls typed values out of the parsed TOML, naming the key in every error."""

    def __init__(self, data: Mapping[str, Any], source: str) -> None:
        self.data = data
        self.source = source

    def fail(self, key: str, message: str) -> ProfileError:
        return ProfileError(f"{self.source}: [{key.split('.')[0]}] {key}: {message}")

    def _raw(self, key: str, required: bool) -> Any:
        section, name = key.split(".", 1)
        table = self.data.get(section, {})
        if not isinstance(table, Mapping):
            raise self.fail(key, f"[{section}] must be a table, found {type(table).__name__}")
        if name not in table:
            if required:
                raise ProfileError(
                    f"{self.source}: missing key '{name}' in [{section}] "
                    f"(required; see the profile format in trimlog.input.profile)"
                )
            return None
        return table[name]

    def quantity(self, key: str, unit: str, *, required: bool = True) -> float | None:
        raw = self._raw(key, required)
        if raw is None:
            return None
        try:
            return parse_quantity(raw, unit, key=f"{self.source}: {key}")
        except TrimlogError as exc:
            raise ProfileError(str(exc)) from None

    def number(self, key: str, *, required: bool = False) -> float | None:
        raw = self._raw(key, required)
        if raw is None:
            return None
        if isinstance(raw, bool) or not isinstance(raw, int | float) or not math.isfinite(raw):
            raise self.fail(key, f"expected a plain finite number, found {raw!r}")
        return float(raw)

    def text(self, key: str, *, required: bool = False) -> str | None:
        raw = self._raw(key, required)
        if raw is None:
            return None
        if not isinstance(raw, str) or not raw.strip():
            raise self.fail(key, f"expected a non-empty string, found {raw!r}")
        return raw.strip()


def parse_profile(text: str, source: str = "<profile>") -> AircraftProfile:
    """Parse and validate the text of a profile TOML.

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
        Malformed TOML, a missing key, a unit of the wrong dimension, or an
        implausible value; the message names the key.
    """
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{source}: not valid TOML: {exc}") from None
    unknown = sorted(set(data) - set(_SECTIONS))
    warnings: list[str] = []
    if unknown:
        warnings.append(
            f"{source}: sections not used by trimlog (ignored, check the spelling): "
            + ", ".join(f"[{name}]" for name in unknown)
        )
    r = _Reader(data, source)
    defaults: list[str] = []

    name = r.text("aircraft.name", required=True)
    wing_area = _positive(r, "aircraft.wing_area", r.quantity("aircraft.wing_area", "ft^2"))
    mac = _positive(r, "aircraft.mac", r.quantity("aircraft.mac", "in"))
    lemac = r.quantity("aircraft.lemac", "in")
    spacing = _positive(
        r, "tail.stabilizer_attach_spacing", r.quantity("tail.stabilizer_attach_spacing", "in")
    )
    up_stop = abs(r.quantity("tail.elevator_up_stop", "deg"))
    down_stop = abs(r.quantity("tail.elevator_down_stop", "deg"))
    for key, stop in (("tail.elevator_up_stop", up_stop), ("tail.elevator_down_stop", down_stop)):
        if not 0.0 < stop <= 60.0:
            raise r.fail(key, f"expected an elevator stop between 0 and 60 deg, found {stop:g} deg")
    cg_fwd = r.quantity("limits.cg_forward", "in")
    cg_aft = r.quantity("limits.cg_aft", "in")
    max_weight = _positive(r, "limits.max_weight", r.quantity("limits.max_weight", "lb"))
    if cg_fwd >= cg_aft:
        raise r.fail(
            "limits.cg_forward",
            f"the forward limit ({cg_fwd:g} in) must lie forward of (less than) "
            f"the aft limit ({cg_aft:g} in)",
        )
    for key, station in (("limits.cg_forward", cg_fwd), ("limits.cg_aft", cg_aft)):
        pct = 100.0 * (station - lemac) / mac
        if not -25.0 <= pct <= 75.0:
            raise r.fail(
                key,
                f"{station:g} in is {pct:.0f} %MAC (MAC {lemac:g} to {lemac + mac:g} in); "
                "expected a CG limit within -25..75 %MAC: check lemac, mac and the datum",
            )

    tau = r.number("tail.tau")
    if tau is not None and not 0.0 < tau <= 1.0:
        raise r.fail("tail.tau", f"expected elevator effectiveness between 0 and 1, found {tau:g}")
    chord_ratio = r.number("tail.elevator_chord_ratio")
    if chord_ratio is not None and not 0.0 < chord_ratio < 1.0:
        raise r.fail(
            "tail.elevator_chord_ratio",
            f"expected elevator chord / tail chord between 0 and 1, found {chord_ratio:g}",
        )
    if tau is None and chord_ratio is None:
        warnings.append(
            f"{source}: neither tail.tau nor tail.elevator_chord_ratio is given; the shim "
            "needs a flight-calibrated tau (flights before and after an incidence change)"
        )

    cruise_cas = _positive(r, "cruise.cas", r.quantity("cruise.cas", "kt"))
    cruise_alt = r.quantity("cruise.pressure_altitude", "ft", required=False)
    if cruise_alt is None:
        cruise_alt = DEFAULT_CRUISE_PRESSURE_ALT_FT
        defaults.append(f"cruise pressure altitude {cruise_alt:g} ft")
    cruise_weight = r.quantity("cruise.weight", "lb", required=False)
    if cruise_weight is None:
        cruise_weight = DEFAULT_CRUISE_WEIGHT_FRACTION * max_weight
        defaults.append(f"cruise weight {cruise_weight:g} lb (90 % of max weight)")
    cruise_cg = r.quantity("cruise.cg", "in", required=False)
    if cruise_cg is None:
        cruise_cg = 0.5 * (cg_fwd + cg_aft)
        defaults.append(f"cruise CG {cruise_cg:g} in (mid-envelope)")

    min_sm = r.number("limits.min_static_margin")
    if min_sm is None:
        min_sm = DEFAULT_MIN_STATIC_MARGIN_PCT_MAC
        defaults.append(f"minimum static margin {min_sm:g} %MAC (a policy choice, not a rule)")
    elif not 0.0 <= min_sm <= 40.0:
        raise r.fail("limits.min_static_margin", f"expected 0..40 %MAC, found {min_sm:g}")
    step_max = r.number("limits.cg_step_max")
    if step_max is None:
        step_max = DEFAULT_CG_STEP_MAX_PCT_MAC
    elif not 0.0 < step_max <= 20.0:
        raise r.fail("limits.cg_step_max", f"expected 0..20 %MAC, found {step_max:g}")
    reserve = r.quantity("limits.elevator_reserve", "deg", required=False)
    if reserve is None:
        reserve = DEFAULT_ELEVATOR_RESERVE_DEG

    fuel_density = r.quantity("fuel.density", "lb/gal", required=False)
    if fuel_density is None:
        fuel_density = DEFAULT_FUEL_DENSITY_LB_PER_GAL

    ias_table, cas_table = _position_error_table(r)
    column_map, inverted = _logger_mapping(r)

    values: dict[str, float | None] = {}
    for attr, key, unit in (
        ("current_incidence_deg", "tail.current_incidence", "deg"),
        ("wing_span_in", "aircraft.wing_span", "in"),
        ("htail_area_ft2", "tail.horizontal_area", "ft^2"),
        ("htail_span_in", "tail.horizontal_span", "in"),
        ("htail_arm_in", "tail.horizontal_arm", "in"),
        ("vtail_area_ft2", "tail.vertical_area", "ft^2"),
        ("vtail_height_in", "tail.vertical_height", "in"),
        ("vtail_arm_in", "tail.vertical_arm", "in"),
        ("fuel_arm_in", "fuel.arm", "in"),
    ):
        values[attr] = r.quantity(key, unit, required=False)
    for attr in ("wing_span_in", "htail_area_ft2", "htail_span_in", "htail_arm_in",
                 "vtail_area_ft2", "vtail_height_in", "vtail_arm_in"):
        if values[attr] is not None:
            _positive(r, attr, values[attr])
    clmax = {}
    for key in ("aircraft.clmax_clean", "aircraft.clmax_landing"):
        value = r.number(key)
        if value is not None and not 0.3 <= value <= 4.0:
            raise r.fail(key, f"expected a maximum lift coefficient of 0.3..4, found {value:g}")
        clmax[key] = value

    return AircraftProfile(
        name=name,
        wing_area_ft2=wing_area,
        mac_in=mac,
        lemac_in=lemac,
        stabilizer_attach_spacing_in=spacing,
        elevator_up_stop_deg=up_stop,
        elevator_down_stop_deg=down_stop,
        cg_forward_in=cg_fwd,
        cg_aft_in=cg_aft,
        max_weight_lb=max_weight,
        cruise_cas_kt=cruise_cas,
        cruise_pressure_alt_ft=cruise_alt,
        cruise_weight_lb=cruise_weight,
        cruise_cg_in=cruise_cg,
        tau=tau,
        elevator_chord_ratio=chord_ratio,
        clmax_clean=clmax["aircraft.clmax_clean"],
        clmax_landing=clmax["aircraft.clmax_landing"],
        min_static_margin_pct_mac=min_sm,
        cg_step_max_pct_mac=step_max,
        elevator_reserve_deg=reserve,
        fuel_density_lb_per_gal=fuel_density,
        position_error_ias_kt=ias_table,
        position_error_cas_kt=cas_table,
        column_map=column_map,
        inverted_columns=inverted,
        defaults_used=tuple(defaults),
        warnings=tuple(warnings),
        source=source,
        text=text,
        **values,
    )


def load_profile(path: str | Path) -> AircraftProfile:
    """Read and validate a profile TOML file (see :func:`parse_profile`)."""
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise ProfileError(f"{path}: cannot read the aircraft profile: {exc.strerror}") from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        raise ProfileError(f"{path}: the aircraft profile is not UTF-8 text") from None
    return parse_profile(text, source=str(path))


def _positive(r: _Reader, key: str, value: float) -> float:
    if not value > 0.0:
        raise r.fail(key, f"expected a positive value, found {value:g}")
    return value


def _position_error_table(r: _Reader) -> tuple[tuple[float, ...] | None, tuple[float, ...] | None]:
    table = r.data.get("airspeed_calibration")
    if table is None:
        return None, None
    key = "airspeed_calibration"
    if not isinstance(table, Mapping) or "ias" not in table or "cas" not in table:
        raise r.fail(f"{key}.ias", "expected arrays 'ias' and 'cas' and a 'unit'")
    unit_text = table.get("unit", "kt")
    try:
        unit = parse_unit(str(unit_text))
    except TrimlogError:
        unit = None
    if unit is None or not is_compatible(unit, "kt"):
        raise r.fail(f"{key}.unit", f"expected a speed unit such as 'kt', found {unit_text!r}")
    scale, offset = unit_factor(unit, "kt")
    columns = []
    for name in ("ias", "cas"):
        values = table[name]
        if not isinstance(values, list) or not all(
            isinstance(v, int | float) and not isinstance(v, bool) and math.isfinite(v)
            for v in values
        ):
            raise r.fail(f"{key}.{name}", f"expected a list of finite numbers, found {values!r}")
        columns.append(tuple(scale * float(v) + offset for v in values))
    ias, cas = columns
    if len(ias) != len(cas) or len(ias) < 2:
        raise r.fail(
            f"{key}.ias",
            f"expected two lists of equal length (at least 2), found {len(ias)} and {len(cas)}",
        )
    if any(b <= a for a, b in zip(ias, ias[1:], strict=False)):
        raise r.fail(f"{key}.ias", "expected indicated airspeeds in strictly increasing order")
    return ias, cas


def _logger_mapping(r: _Reader) -> tuple[dict[str, str], tuple[str, ...]]:
    table = r.data.get("logger", {})
    if not isinstance(table, Mapping):
        raise r.fail("logger.columns", "[logger] must be a table")
    columns = table.get("columns", {})
    if not isinstance(columns, Mapping) or not all(
        isinstance(k, str) and isinstance(v, str) for k, v in columns.items()
    ):
        raise r.fail("logger.columns", "expected a table of logger header = canonical name")
    inverted = table.get("inverted", [])
    if not isinstance(inverted, list) or not all(isinstance(v, str) for v in inverted):
        raise r.fail("logger.inverted", "expected a list of canonical column names")
    return dict(columns), tuple(inverted)
