"""The one unit registry of trimlog, and parsing of quantities at the edges.

Dimensional inputs (profile values such as ``"118 ft^2"``, CSV header unit
tokens such as ``kt`` or ``km/h``, command-line options) are parsed here once
and converted to the plain floats in declared units used everywhere inside
the package.
"""

from __future__ import annotations

import math
import os
import re
import stat
from pathlib import Path

import pint

from trimlog.errors import UnitError


def cache_folder() -> Path | None:
    """The folder of pint's definition cache (trimlog's own), or None when it is not safe.

    pint's cache holds pickles, which run code when loaded, so the folder must
    belong to this user and be writable by nobody else: it is created with
    mode 0700 under the per-user cache directory, and a folder owned by
    another user, or writable by group or others, is not used.
    """
    if os.environ.get("TRIMLOG_NO_UNIT_CACHE"):
        return None
    import platformdirs

    folder = Path(platformdirs.user_cache_dir("trimlog")) / "pint"
    try:
        folder.mkdir(mode=0o700, parents=True, exist_ok=True)
        info = folder.lstat()
    except OSError:
        return None
    getuid = getattr(os, "getuid", None)
    if stat.S_ISLNK(info.st_mode) or not stat.S_ISDIR(info.st_mode):
        return None
    if getuid is not None and (info.st_uid != getuid() or info.st_mode & 0o022):
        return None
    return folder


def _registry() -> pint.UnitRegistry:
    # pint parses its definitions file on every start (~0.3 s); its on-disk cache cuts that
    # to a few tens of ms. A cache that is unsafe (see cache_folder), cannot be written or
    # read (read-only home, a half-written file from a concurrent start) means no cache.
    folder = cache_folder()
    if folder is not None:
        try:
            return pint.UnitRegistry(autoconvert_offset_to_baseunit=True, cache_folder=folder)
        except Exception:  # noqa: BLE001 - any cache failure falls back to parsing
            pass
    return pint.UnitRegistry(autoconvert_offset_to_baseunit=True)


ureg = _registry()
Q_ = ureg.Quantity

# Spellings that loggers and pilots use but pint does not know, mapped to pint's.
_UNIT_ALIASES = {
    "kt": "knot",
    "kts": "knot",
    "knots": "knot",
    "kias": "knot",
    "kcas": "knot",
    "keas": "knot",
    "ktas": "knot",
    "kph": "km/h",
    "kmh": "km/h",
    "km/hr": "km/h",
    "fpm": "ft/min",
    "ft/m": "ft/min",
    "c": "degC",
    "°c": "degC",
    "degc": "degC",
    "deg_c": "degC",
    "celsius": "degC",
    "f": "degF",
    "°f": "degF",
    "degf": "degF",
    "deg_f": "degF",
    "fahrenheit": "degF",
    "k": "kelvin",
    "deg": "degree",
    "degs": "degree",
    "degrees": "degree",
    "°": "degree",
    "rad": "radian",
    "lbs": "lb",
    "lbf": "lbf",
    "n": "newton",
    "dan": "decanewton",
    "kgf": "kilogram_force",
    "g": "standard_gravity",
    "gs": "standard_gravity",
    "pct": "percent",
    "%": "percent",
    "%mac": "percent",
    "pct_mac": "percent",
    "s": "second",
    "sec": "second",
    "ms": "millisecond",
    "gal": "gallon",
    "usgal": "gallon",
    "us_gal": "gallon",
    "l": "liter",
    "ltr": "liter",
    "in": "inch",
    "inch": "inch",
    "mm": "millimeter",
    "cm": "centimeter",
    "m": "meter",
    "ft": "foot",
    "mph": "mile/hour",
    "m/s": "meter/second",
    "inhg": "inch_Hg",
    "hpa": "hectopascal",
    "mbar": "millibar",
}

_TOKEN_RE = re.compile(r"^\s*([-+0-9.eE]+)\s*(.*?)\s*$")


def parse_unit(token: str) -> pint.Unit:
    """Understand a unit token as written in a header or profile.

    Parameters
    ----------
    token : str
        A unit such as ``"kt"``, ``"km/h"``, ``"degC"``, ``"lbf"``, ``"g"``.
        Load factor ``g`` is understood as standard gravity (dimensionless
        load factor), never as the gram.

    Returns
    -------
    pint.Unit

    Raises
    ------
    UnitError
        When the token is not a unit pint or trimlog knows.
    """
    text = token.strip()
    alias = _UNIT_ALIASES.get(text.lower())
    try:
        return ureg.parse_units(alias if alias is not None else text)
    except Exception as exc:  # pint raises several unrelated types here
        raise UnitError(f"unknown unit '{token}'") from exc


def convert_value(value: float, from_unit: pint.Unit, to_unit: str) -> float:
    """Convert a plain number from one unit to another (offset units allowed)."""
    return float(Q_(value, from_unit).to(to_unit).magnitude)


def unit_factor(from_unit: pint.Unit, to_unit: str) -> tuple[float, float]:
    """Linear map ``to = scale * from + offset`` between two units.

    Converting whole columns this way costs one multiply-add instead of a
    pint call per value.
    """
    zero = convert_value(0.0, from_unit, to_unit)
    one = convert_value(1.0, from_unit, to_unit)
    return one - zero, zero


def is_compatible(unit: pint.Unit, to_unit: str) -> bool:
    """Whether ``unit`` has the dimension of ``to_unit``."""
    return Q_(1.0, unit).is_compatible_with(parse_unit(to_unit))


def parse_quantity(text: str | float | int, to_unit: str, *, key: str) -> float:
    """Parse ``"118 ft^2"`` and return its magnitude in ``to_unit``.

    Parameters
    ----------
    text : str or number
        Number followed by a unit.  A bare number is accepted only when
        ``to_unit`` is dimensionless.
    to_unit : str
        The declared unit wanted inside the package, e.g. ``"ft^2"``.
    key : str
        Name of the input (profile key, option) for error messages.

    Returns
    -------
    float
        The magnitude in ``to_unit``.

    Raises
    ------
    UnitError
        Missing or unknown unit, or a unit of the wrong dimension.

    Examples
    --------
    >>> parse_quantity("51 in", "in", key="aircraft.mac")
    51.0
    >>> round(parse_quantity("1.3 m", "in", key="aircraft.mac"), 3)
    51.181
    """
    target = parse_unit(to_unit)
    target_dim = Q_(1.0, target).dimensionality
    if isinstance(text, bool):
        raise UnitError(f"{key}: expected a quantity in {to_unit}, found {text!r}")
    if isinstance(text, int | float):
        try:
            text = float(text)
        except OverflowError:  # an integer too large for a float
            raise UnitError(f"{key}: expected a finite number, found an integer of about "
                            f"{int(text.bit_length() * math.log10(2)) + 1} digits") from None
        if not math.isfinite(text):
            raise UnitError(f"{key}: expected a finite number, found {text!r}")
        if target_dim:
            raise UnitError(
                f"{key}: expected a value with a unit of {_describe(target_dim)} "
                f"(e.g. '{text} {to_unit}'), found the bare number {text!r}"
            )
        return float(text)
    if not isinstance(text, str):
        raise UnitError(f"{key}: expected a string such as '10 {to_unit}', found {text!r}")
    match = _TOKEN_RE.match(text)
    if match is None:
        raise UnitError(f"{key}: expected a number followed by a unit, found {text!r}")
    number_text, unit_text = match.groups()
    try:
        number = float(number_text)
    except ValueError as exc:
        raise UnitError(f"{key}: '{number_text}' is not a number (in {text!r})") from exc
    if not math.isfinite(number):
        raise UnitError(f"{key}: expected a finite number, found '{number_text}' (in {text!r})")
    if not unit_text:
        if target_dim:
            raise UnitError(
                f"{key}: '{text}' has no unit; expected {_describe(target_dim)} such as "
                f"'{number_text} {to_unit}'"
            )
        return number
    try:
        unit = parse_unit(unit_text)
    except UnitError as exc:
        raise UnitError(f"{key}: unknown unit '{unit_text}' in {text!r}") from exc
    quantity = Q_(number, unit)
    if not quantity.is_compatible_with(target):
        raise UnitError(
            f"{key}: '{text}' is {_describe(quantity.dimensionality)}; "
            f"expected {_describe(target_dim)} (e.g. {to_unit})"
        )
    value = float(quantity.to(target).magnitude)
    if not math.isfinite(value):
        raise UnitError(f"{key}: {text!r} is too large to convert to {to_unit}")
    return value


_DIMENSION_WORDS = {
    "[length]": "a length",
    "[length] ** 2": "an area",
    "[mass]": "a mass (weight)",
    "[length] / [time]": "a speed",
    "[temperature]": "a temperature",
    "[length] * [mass] / [time] ** 2": "a force",
    "[mass] / [length] / [time] ** 2": "a pressure",
    "[length] ** 3": "a volume",
    "[time]": "a time",
    "[mass] / [length] ** 3": "a density",
    "dimensionless": "a plain number or angle",
}


def _describe(dimensionality: object) -> str:
    text = str(dimensionality)
    return _DIMENSION_WORDS.get(text, f"of dimension {text}")
