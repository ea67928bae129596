"""The standard atmosphere: troposphere and lower stratosphere up to 20 km.

The model is the U.S. Standard Atmosphere 1976, identical to the ICAO
standard atmosphere below 20 km (geopotential).  Pressure altitude, as an
altimeter set to 1013.25 hPa shows it, is a geopotential altitude in this
model, so no geometric conversion is made anywhere here.

Every function takes numbers, numpy arrays or pandas Series.  A Series in
gives a Series out on the same index; a scalar in gives a float out.  NaN
inputs (a missing sample) give NaN outputs for that element only; infinite
or out-of-range inputs raise :class:`~trimlog.errors.TrimlogError`.

References
----------
.. [1] NOAA, NASA and USAF, *U.S. Standard Atmosphere, 1976*, NOAA-S/T 76-1562,
   U.S. Government Printing Office, Washington D.C., 1976: eqs. 23 (temperature),
   33a/33b (pressure), 42 (density) and 50 (speed of sound); Table 4
   (layer base values).
.. [2] ICAO, *Manual of the ICAO Standard Atmosphere*, Doc 7488/3, 1993.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from trimlog.physics.arrays import (
    Numeric,
    as_float_array,
    check_range,
    check_shapes,
    like_input,
    series_template,
)

#: Sea-level standard pressure [Pa] (U.S. Standard Atmosphere 1976, Table 2).
P0_PA = 101325.0
#: Sea-level standard temperature [K].
T0_K = 288.15
#: Temperature lapse rate of the troposphere [K/m] (geopotential).
LAPSE_RATE_K_PER_M = 0.0065
#: Specific gas constant of dry air [J/(kg K)] (R* / M0 of the 1976 standard).
R_AIR_J_PER_KG_K = 287.05287
#: Standard acceleration of gravity [m/s^2].
G0_MPS2 = 9.80665
#: Ratio of specific heats of air [-].
GAMMA = 1.4
#: Sea-level standard density [kg/m^3].
RHO0_KGM3 = 1.225
#: Sea-level standard speed of sound [m/s].
A0_MPS = 340.294
#: Base of the isothermal layer (tropopause), geopotential [m].
TROPOPAUSE_M = 11000.0
#: Temperature of the isothermal layer 11-20 km [K].
T_TROPOPAUSE_K = 216.65

FT_TO_M = 0.3048
#: Lowest pressure altitude accepted [ft].
ALT_MIN_FT = -5000.0
#: Highest pressure altitude accepted [ft]: the top of the isothermal layer, 20 km.
ALT_MAX_FT = 65617.0
#: Outside air temperatures accepted [degC]; anything outside is a logging fault
#: (coldest air ever measured near the ground is about -89 degC).
OAT_MIN_C = -100.0
OAT_MAX_C = 70.0

KELVIN_OFFSET = 273.15

#: What the physics functions take and give: a number, a numpy array or a pandas Series

# Exponent g0/(L R) of the troposphere pressure law, 5.25588 (ref. [1], eq. 33a).
_PRESSURE_EXPONENT = G0_MPS2 / (LAPSE_RATE_K_PER_M * R_AIR_J_PER_KG_K)
# Pressure and density at the tropopause follow from the troposphere law so that
# the two layers join without a step.
P_TROPOPAUSE_PA = P0_PA * (T_TROPOPAUSE_K / T0_K) ** _PRESSURE_EXPONENT
_RHO_TROPOPAUSE_KGM3 = P_TROPOPAUSE_PA / (R_AIR_J_PER_KG_K * T_TROPOPAUSE_K)
# p0/(R T0); equals RHO0_KGM3 to 7 digits, used where an exact inverse is needed.
_RHO0_EXACT_KGM3 = P0_PA / (R_AIR_J_PER_KG_K * T0_K)
# Scale height of the isothermal layer R T11 / g0 [m].
_SCALE_HEIGHT_M = R_AIR_J_PER_KG_K * T_TROPOPAUSE_K / G0_MPS2


def _altitude_m(pressure_alt_ft: Any) -> np.ndarray:
    """Validate pressure altitudes [ft] and return them in metres."""
    alt_ft = as_float_array(pressure_alt_ft, "pressure_alt_ft")
    check_range(alt_ft, ALT_MIN_FT, ALT_MAX_FT, "pressure_alt_ft", "ft",
                 series_template(pressure_alt_ft))
    return alt_ft * FT_TO_M


def _oat_k(oat_c: Any) -> np.ndarray:
    """Validate outside air temperatures [degC] and return them in kelvin."""
    oat = as_float_array(oat_c, "oat_c")
    check_range(oat, OAT_MIN_C, OAT_MAX_C, "oat_c", "degC", series_template(oat_c))
    return oat + KELVIN_OFFSET


# --------------------------------------------------------------------------
# Public functions.
# --------------------------------------------------------------------------


def _isa_temperature_from_m(h_m: np.ndarray) -> np.ndarray:
    return np.where(h_m <= TROPOPAUSE_M, T0_K - LAPSE_RATE_K_PER_M * h_m, T_TROPOPAUSE_K)


def _static_pressure_from_m(h_m: np.ndarray) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        troposphere = P0_PA * (1.0 - LAPSE_RATE_K_PER_M * h_m / T0_K) ** _PRESSURE_EXPONENT
    stratosphere = P_TROPOPAUSE_PA * np.exp(-(h_m - TROPOPAUSE_M) / _SCALE_HEIGHT_M)
    return np.where(h_m <= TROPOPAUSE_M, troposphere, stratosphere)


def isa_temperature_k(pressure_alt_ft: Numeric) -> Numeric:
    """Standard-day temperature at a pressure altitude.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.

    Returns
    -------
    float, array or Series
        ISA temperature [K].

    Raises
    ------
    TrimlogError
        An altitude outside -5,000 ... 65,617 ft.

    Notes
    -----
    T = T0 - L·H below 11 km geopotential, T = 216.65 K from 11 to 20 km.

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eq. 23 and Table 4.

    Examples
    --------
    >>> round(isa_temperature_k(10000.0), 2)
    268.34
    """
    return like_input(_isa_temperature_from_m(_altitude_m(pressure_alt_ft)), pressure_alt_ft,
                       name="isa_temperature_k")


def static_pressure_pa(pressure_alt_ft: Numeric) -> Numeric:
    """Return the static pressure at a pressure altitude.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.

    Returns
    -------
    float, array or Series
        Static pressure [Pa].

    Raises
    ------
    TrimlogError
        An altitude outside -5,000 ... 65,617 ft.

    Notes
    -----
    Troposphere: p = p0·(1 - L·H/T0)^(g0/(L·R)); isothermal layer:
    p = p11·exp(-g0·(H - 11 km)/(R·T11)).

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eqs. 33a and 33b.

    Examples
    --------
    >>> round(static_pressure_pa(5000.0))
    84307
    """
    return like_input(_static_pressure_from_m(_altitude_m(pressure_alt_ft)), pressure_alt_ft,
                       name="static_pressure_pa")


def pressure_ratio(pressure_alt_ft: Numeric) -> Numeric:
    """Pressure ratio δ = p/p0 at a pressure altitude.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.

    Returns
    -------
    float, array or Series
        δ [-].

    Raises
    ------
    TrimlogError
        An altitude outside -5,000 ... 65,617 ft.

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eqs. 33a and 33b.

    Examples
    --------
    >>> round(pressure_ratio(10000.0), 4)
    0.6877
    """
    delta = _static_pressure_from_m(_altitude_m(pressure_alt_ft)) / P0_PA
    return like_input(delta, pressure_alt_ft, name="pressure_ratio")


def _density(pressure_alt_ft: Any, oat_c: Any) -> np.ndarray:
    check_shapes(pressure_alt_ft=pressure_alt_ft, oat_c=oat_c)
    h_m = _altitude_m(pressure_alt_ft)
    temperature = _isa_temperature_from_m(h_m) if oat_c is None else _oat_k(oat_c)
    return _static_pressure_from_m(h_m) / (R_AIR_J_PER_KG_K * temperature)


def density_kgm3(pressure_alt_ft: Numeric, oat_c: Numeric | None = None) -> Numeric:
    """Air density from pressure altitude and (optionally) outside air temperature.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.
    oat_c : float, array, Series or None
        Outside (static) air temperature [degC], -100 to +70.  None takes the
        ISA temperature of the altitude.

    Returns
    -------
    float, array or Series
        Density [kg/m^3].

    Raises
    ------
    TrimlogError
        An altitude or temperature out of range.

    Notes
    -----
    ρ = p / (R·T): the static pressure is fixed by the pressure altitude,
    the temperature is the measured one (ideal gas, dry air).

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eq. 42.

    Examples
    --------
    >>> round(density_kgm3(0.0), 5)
    1.225
    >>> round(density_kgm3(0.0, oat_c=30.0), 4)
    1.1644
    """
    return like_input(_density(pressure_alt_ft, oat_c), pressure_alt_ft, oat_c,
                       name="density_kgm3")


def density_ratio(pressure_alt_ft: Numeric, oat_c: Numeric | None = None) -> Numeric:
    """Density ratio σ = ρ/ρ0.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.
    oat_c : float, array, Series or None
        Outside air temperature [degC]; None for a standard day.

    Returns
    -------
    float, array or Series
        σ [-], with ρ0 = 1.225 kg/m^3.

    Raises
    ------
    TrimlogError
        An altitude or temperature out of range.

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eq. 42.

    Examples
    --------
    >>> round(density_ratio(5000.0), 4)
    0.8617
    """
    return like_input(_density(pressure_alt_ft, oat_c) / RHO0_KGM3, pressure_alt_ft, oat_c,
                       name="density_ratio")


def speed_of_sound_mps(temperature_k: Numeric) -> Numeric:
    """Speed of sound in air at a temperature.

    Parameters
    ----------
    temperature_k : float, array or Series
        Static air temperature [K], 173.15 to 343.15 (the accepted OAT range).

    Returns
    -------
    float, array or Series
        Speed of sound [m/s].

    Raises
    ------
    TrimlogError
        A temperature outside the accepted range.

    Notes
    -----
    a = sqrt(γ·R·T).

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eq. 50.

    Examples
    --------
    >>> round(speed_of_sound_mps(288.15), 3)
    340.294
    """
    temp = as_float_array(temperature_k, "temperature_k")
    check_range(temp, OAT_MIN_C + KELVIN_OFFSET, OAT_MAX_C + KELVIN_OFFSET, "temperature_k",
                 "K", series_template(temperature_k))
    return like_input(np.sqrt(GAMMA * R_AIR_J_PER_KG_K * temp), temperature_k,
                       name="speed_of_sound_mps")


def density_altitude_ft(pressure_alt_ft: Numeric, oat_c: Numeric) -> Numeric:
    """Density altitude: the standard-atmosphere altitude that has the air's density.

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.
    oat_c : float, array or Series
        Outside air temperature [degC].

    Returns
    -------
    float, array or Series
        Density altitude [ft].  A cold day at low altitude may give a value
        below -5,000 ft; the troposphere law is used there unchanged.

    Raises
    ------
    TrimlogError
        An input out of range, or a density altitude above 65,617 ft (outside
        the modelled layers).

    Notes
    -----
    The ISA density law is inverted exactly in each layer:
    troposphere, ρ/ρ0 = (T/T0)^(g0/(L·R) - 1); isothermal layer,
    ρ = ρ11·exp(-g0·(H - 11 km)/(R·T11)).

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eqs. 23, 33a, 33b and 42.

    Examples
    --------
    >>> round(density_altitude_ft(5000.0, oat_c=5.095))
    5000
    """
    rho = _density(pressure_alt_ft, oat_c)
    with np.errstate(invalid="ignore", divide="ignore"):
        theta = (rho / _RHO0_EXACT_KGM3) ** (1.0 / (_PRESSURE_EXPONENT - 1.0))
        troposphere_m = (T0_K / LAPSE_RATE_K_PER_M) * (1.0 - theta)
        stratosphere_m = TROPOPAUSE_M + _SCALE_HEIGHT_M * np.log(_RHO_TROPOPAUSE_KGM3 / rho)
    h_ft = np.where(rho >= _RHO_TROPOPAUSE_KGM3, troposphere_m, stratosphere_m) / FT_TO_M
    template = series_template(pressure_alt_ft, oat_c)
    check_range(h_ft, -np.inf, ALT_MAX_FT, "density altitude (from pressure_alt_ft, oat_c)",
                 "ft", template)
    return like_input(h_ft, pressure_alt_ft, oat_c, name="density_altitude_ft")


def isa_deviation_c(pressure_alt_ft: Numeric, oat_c: Numeric) -> Numeric:
    """Deviation of the outside air temperature from the standard day (ISA + x).

    Parameters
    ----------
    pressure_alt_ft : float, array or Series
        Pressure (geopotential) altitude [ft], -5,000 to 65,617.
    oat_c : float, array or Series
        Outside air temperature [degC].

    Returns
    -------
    float, array or Series
        OAT minus ISA temperature [degC] (positive: warmer than standard).

    Raises
    ------
    TrimlogError
        An input out of range.

    References
    ----------
    U.S. Standard Atmosphere 1976, NOAA-S/T 76-1562, eq. 23.

    Examples
    --------
    >>> round(isa_deviation_c(0.0, 25.0), 2)
    10.0
    """
    check_shapes(pressure_alt_ft=pressure_alt_ft, oat_c=oat_c)
    isa_k = _isa_temperature_from_m(_altitude_m(pressure_alt_ft))
    return like_input(_oat_k(oat_c) - isa_k, pressure_alt_ft, oat_c, name="isa_deviation_c")
