"""Airspeed reduction: position error, and CAS <-> EAS <-> TAS (compressible, subsonic).

The chain is IAS -> CAS through the aircraft's own position-error table, then
CAS -> Mach through the subsonic pitot relation (the airspeed indicator is
calibrated for the standard sea-level atmosphere), then Mach -> EAS and TAS.
None of it uses the incompressible shortcut EAS = CAS.

Inputs are numbers, numpy arrays or pandas Series (a Series in gives a Series
out on the same index).  NaN elements propagate; negative speeds and Mach 1
or more raise :class:`~trimlog.errors.TrimlogError`.

References
----------
.. [1] W. Gracey, *Measurement of Aircraft Speed and Altitude*, NASA RP-1046,
   1980: the subsonic relations of impact pressure to Mach number and to
   calibrated airspeed, and the definitions of equivalent and true airspeed.
.. [2] NOAA, NASA and USAF, *U.S. Standard Atmosphere, 1976*, NOAA-S/T 76-1562.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Literal

import numpy as np

from trimlog.errors import TrimlogError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.physics.arrays import (
    Numeric,
    as_float_array,
    check_range,
    check_shapes,
    like_input,
    series_template,
    where,
)
from trimlog.physics.atmosphere import (
    A0_MPS,
    GAMMA,
    P0_PA,
    RHO0_KGM3,
    density_ratio,
    isa_temperature_k,
    pressure_ratio,
    speed_of_sound_mps,
)

#: One knot [m/s] (international nautical mile per hour).
KT_TO_MPS = 1852.0 / 3600.0
#: Sea-level standard speed of sound [kt], 661.48.
A0_KT = A0_MPS / KT_TO_MPS
#: One lbf/ft^2 [Pa] (international pound-force and foot).
PSF_TO_PA = 4.4482216152605 / 0.3048**2

# Exponents of the isentropic pitot relation for gamma = 1.4: 3.5 and 2/7.
_EXP = GAMMA / (GAMMA - 1.0)
_HALF_GM1 = (GAMMA - 1.0) / 2.0


def _speeds(value: Any, name: str) -> np.ndarray:
    """Validate airspeeds [kt]: finite (or NaN) and not negative."""
    speed = as_float_array(value, name)
    check_range(speed, 0.0, np.inf, name, "kt", series_template(value))
    return speed


def _check_subsonic(mach: np.ndarray, speed: np.ndarray, name: str, template: Any) -> None:
    """Raise naming the first airspeed whose Mach number is 1 or more."""
    flat_m = np.atleast_1d(mach).ravel()
    bad = flat_m >= 1.0
    if bad.any():
        first = int(np.flatnonzero(bad)[0])
        flat_v = np.broadcast_arrays(speed, mach)[0].ravel()
        raise TrimlogError(
            f"{name}: {flat_v[first]:g} kt{where(first, flat_m.size, template)} is Mach "
            f"{flat_m[first]:.3f}; the airspeed relations here hold only below Mach 1"
        )


def _mach_from_impact_ratio(qc_over_p: np.ndarray) -> np.ndarray:
    """Subsonic Mach number from qc/p (Gracey, NASA RP-1046, solved for M)."""
    # expm1/log1p keep full precision at low speed, where (1 + x)^k - 1 would cancel
    return np.sqrt(np.expm1(np.log1p(qc_over_p) / _EXP) / _HALF_GM1)


def _impact_ratio_from_mach(mach: np.ndarray) -> np.ndarray:
    """qc/p of a subsonic Mach number (Gracey, NASA RP-1046)."""
    return np.expm1(_EXP * np.log1p(_HALF_GM1 * mach**2))


def cas_to_mach(cas_kt: Numeric, pressure_alt_ft: Numeric) -> Numeric:
    """Mach number from calibrated airspeed and pressure altitude.

    Parameters
    ----------
    cas_kt : float, array or Series
        Calibrated airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].

    Returns
    -------
    float, array or Series
        Mach number [-].

    Raises
    ------
    TrimlogError
        A negative airspeed, an altitude out of range, or Mach 1 or more.

    Notes
    -----
    The impact pressure the indicator reads, qc = p0·[(1 + 0.2·(Vc/a0)²)^3.5 − 1],
    is the same at altitude; there M = sqrt(5·[(qc/p + 1)^(2/7) − 1]).

    References
    ----------
    Gracey, NASA RP-1046 (1980): subsonic impact pressure, calibrated airspeed.

    Examples
    --------
    >>> round(cas_to_mach(250.0, 30000.0), 3)
    0.668
    """
    check_shapes(cas_kt=cas_kt, pressure_alt_ft=pressure_alt_ft)
    cas = _speeds(cas_kt, "cas_kt")
    _check_subsonic(cas / A0_KT, cas, "cas_kt", series_template(cas_kt))
    qc_over_p0 = _impact_ratio_from_mach(cas / A0_KT)
    delta = as_float_array(pressure_ratio(pressure_alt_ft), "pressure_alt_ft")
    mach = _mach_from_impact_ratio(qc_over_p0 / delta)
    _check_subsonic(mach, cas, "cas_kt", series_template(cas_kt, pressure_alt_ft))
    return like_input(mach, cas_kt, pressure_alt_ft, name="mach")


def cas_to_eas(cas_kt: Numeric, pressure_alt_ft: Numeric) -> Numeric:
    """Equivalent airspeed from calibrated airspeed (the compressibility correction).

    Parameters
    ----------
    cas_kt : float, array or Series
        Calibrated airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].

    Returns
    -------
    float, array or Series
        Equivalent airspeed [kt]; equal to CAS at sea level, below it above.

    Raises
    ------
    TrimlogError
        A negative airspeed, an altitude out of range, or Mach 1 or more.

    Notes
    -----
    EAS = a0·M·sqrt(δ), with M from :func:`cas_to_mach`.

    References
    ----------
    Gracey, NASA RP-1046 (1980): equivalent airspeed.

    Examples
    --------
    >>> round(cas_to_eas(300.0, 30000.0), 1)
    285.0
    """
    mach = as_float_array(cas_to_mach(cas_kt, pressure_alt_ft), "cas_kt")
    delta = as_float_array(pressure_ratio(pressure_alt_ft), "pressure_alt_ft")
    return like_input(A0_KT * mach * np.sqrt(delta), cas_kt, pressure_alt_ft, name="eas_kt")


def eas_to_cas(eas_kt: Numeric, pressure_alt_ft: Numeric) -> Numeric:
    """Calibrated airspeed from equivalent airspeed: the exact inverse of :func:`cas_to_eas`.

    Parameters
    ----------
    eas_kt : float, array or Series
        Equivalent airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].

    Returns
    -------
    float, array or Series
        Calibrated airspeed [kt].

    Raises
    ------
    TrimlogError
        A negative airspeed, an altitude out of range, or Mach 1 or more.

    Notes
    -----
    M = EAS/(a0·sqrt(δ)); qc = p·[(1 + 0.2·M²)^3.5 − 1];
    CAS = a0·sqrt(5·[(qc/p0 + 1)^(2/7) − 1]).

    References
    ----------
    Gracey, NASA RP-1046 (1980): subsonic impact pressure, calibrated airspeed.

    Examples
    --------
    >>> round(eas_to_cas(285.0, 30000.0), 1)
    300.0
    """
    check_shapes(eas_kt=eas_kt, pressure_alt_ft=pressure_alt_ft)
    eas = _speeds(eas_kt, "eas_kt")
    delta = as_float_array(pressure_ratio(pressure_alt_ft), "pressure_alt_ft")
    mach = eas / (A0_KT * np.sqrt(delta))
    _check_subsonic(mach, eas, "eas_kt", series_template(eas_kt, pressure_alt_ft))
    qc_over_p0 = _impact_ratio_from_mach(mach) * delta
    cas = A0_KT * _mach_from_impact_ratio(qc_over_p0)
    return like_input(cas, eas_kt, pressure_alt_ft, name="cas_kt")


def _temperature_k(pressure_alt_ft: Any, oat_c: Any) -> np.ndarray:
    if oat_c is None:
        return as_float_array(isa_temperature_k(pressure_alt_ft), "pressure_alt_ft")
    return as_float_array(oat_c, "oat_c") + 273.15


def eas_to_tas(eas_kt: Numeric, pressure_alt_ft: Numeric, oat_c: Numeric | None = None) -> Numeric:
    """Convert equivalent airspeed to true airspeed.

    Parameters
    ----------
    eas_kt : float, array or Series
        Equivalent airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].
    oat_c : float, array, Series or None
        Outside (static) air temperature [degC]; None for a standard day.

    Returns
    -------
    float, array or Series
        True airspeed [kt].

    Raises
    ------
    TrimlogError
        An input out of range, or Mach 1 or more.

    Notes
    -----
    TAS = EAS/sqrt(σ), σ from the static pressure and the measured temperature.

    References
    ----------
    Gracey, NASA RP-1046 (1980): true and equivalent airspeed;
    U.S. Standard Atmosphere 1976, eq. 42.

    Examples
    --------
    >>> round(eas_to_tas(100.0, 10000.0), 2)
    116.37
    """
    check_shapes(eas_kt=eas_kt, pressure_alt_ft=pressure_alt_ft, oat_c=oat_c)
    eas = _speeds(eas_kt, "eas_kt")
    sigma = as_float_array(density_ratio(pressure_alt_ft, oat_c), "pressure_alt_ft")
    tas = eas / np.sqrt(sigma)
    sound_kt = as_float_array(speed_of_sound_mps(_temperature_k(pressure_alt_ft, oat_c)),
                               "oat_c") / KT_TO_MPS
    _check_subsonic(tas / sound_kt, eas, "eas_kt",
                    series_template(eas_kt, pressure_alt_ft, oat_c))
    return like_input(tas, eas_kt, pressure_alt_ft, oat_c, name="tas_kt")


def tas_to_eas(tas_kt: Numeric, pressure_alt_ft: Numeric, oat_c: Numeric | None = None) -> Numeric:
    """Equivalent airspeed from true airspeed: the inverse of :func:`eas_to_tas`.

    Parameters
    ----------
    tas_kt : float, array or Series
        True airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].
    oat_c : float, array, Series or None
        Outside air temperature [degC]; None for a standard day.

    Returns
    -------
    float, array or Series
        Equivalent airspeed [kt].

    Raises
    ------
    TrimlogError
        An input out of range, or Mach 1 or more.

    Notes
    -----
    EAS = TAS·sqrt(σ).

    References
    ----------
    Gracey, NASA RP-1046 (1980): true and equivalent airspeed.

    Examples
    --------
    >>> round(tas_to_eas(116.37, 10000.0), 2)
    100.0
    """
    check_shapes(tas_kt=tas_kt, pressure_alt_ft=pressure_alt_ft, oat_c=oat_c)
    tas = _speeds(tas_kt, "tas_kt")
    sigma = as_float_array(density_ratio(pressure_alt_ft, oat_c), "pressure_alt_ft")
    sound_kt = as_float_array(speed_of_sound_mps(_temperature_k(pressure_alt_ft, oat_c)),
                               "oat_c") / KT_TO_MPS
    _check_subsonic(tas / sound_kt, tas, "tas_kt",
                    series_template(tas_kt, pressure_alt_ft, oat_c))
    return like_input(tas * np.sqrt(sigma), tas_kt, pressure_alt_ft, oat_c, name="eas_kt")


def cas_to_tas(cas_kt: Numeric, pressure_alt_ft: Numeric, oat_c: Numeric | None = None) -> Numeric:
    """Convert calibrated airspeed to true airspeed, given pressure altitude and temperature.

    Parameters
    ----------
    cas_kt : float, array or Series
        Calibrated airspeed [kt], not negative.
    pressure_alt_ft : float, array or Series
        Pressure altitude [ft].
    oat_c : float, array, Series or None
        Outside air temperature [degC]; None for a standard day.

    Returns
    -------
    float, array or Series
        True airspeed [kt].

    Raises
    ------
    TrimlogError
        An input out of range, or Mach 1 or more.

    Notes
    -----
    TAS = M·a with M from :func:`cas_to_mach` and a = sqrt(γ·R·T); the same
    as EAS/sqrt(σ).

    References
    ----------
    Gracey, NASA RP-1046 (1980): subsonic impact pressure, calibrated airspeed.

    Examples
    --------
    >>> round(cas_to_tas(150.0, 10000.0, oat_c=-4.81), 1)
    174.1
    """
    return eas_to_tas(cas_to_eas(cas_kt, pressure_alt_ft), pressure_alt_ft, oat_c)


def impact_pressure_pa(cas_kt: Numeric) -> Numeric:
    """Impact pressure qc = pt − ps that an airspeed indicator reads as ``cas_kt``.

    Parameters
    ----------
    cas_kt : float, array or Series
        Calibrated (or indicated) airspeed [kt], not negative.

    Returns
    -------
    float, array or Series
        Impact pressure [Pa].

    Notes
    -----
    qc = p0·[(1 + 0.2·(Vc/a0)²)^3.5 − 1], the calibration law of the indicator;
    the same at every altitude.

    References
    ----------
    Gracey, NASA RP-1046 (1980): subsonic impact pressure, calibrated airspeed.

    Examples
    --------
    >>> round(impact_pressure_pa(100.0), 1)
    1630.3
    """
    cas = _speeds(cas_kt, "cas_kt")
    _check_subsonic(cas / A0_KT, cas, "cas_kt", series_template(cas_kt))
    qc = P0_PA * _impact_ratio_from_mach(cas / A0_KT)
    return like_input(qc, cas_kt, name="qc_pa")


def dynamic_pressure_psf(eas_kt: Numeric) -> Numeric:
    """Dynamic pressure q = ½·ρ0·Ve² from equivalent airspeed.

    Parameters
    ----------
    eas_kt : float, array or Series
        Equivalent airspeed [kt], not negative.

    Returns
    -------
    float, array or Series
        Dynamic pressure [lbf/ft²].

    Raises
    ------
    TrimlogError
        A negative airspeed.

    Notes
    -----
    ρ0 = 1.225 kg/m³ (0.0023769 slug/ft³); the computation is in SI and
    converted with 1 lbf/ft² = 47.880 Pa.

    References
    ----------
    Gracey, NASA RP-1046 (1980): equivalent airspeed;
    U.S. Standard Atmosphere 1976 (ρ0).

    Examples
    --------
    >>> round(dynamic_pressure_psf(100.0), 3)
    33.855
    """
    eas = _speeds(eas_kt, "eas_kt")
    q_pa = 0.5 * RHO0_KGM3 * (eas * KT_TO_MPS) ** 2
    return like_input(q_pa / PSF_TO_PA, eas_kt, name="q_psf")


def lift_coefficient(
    weight_lb: Numeric, eas_kt: Numeric, wing_area_ft2: float, nz_g: Numeric = 1.0
) -> Numeric:
    """Lift coefficient of a point: CL = nz·W / (q·S).

    Parameters
    ----------
    weight_lb : float, array or Series
        Aircraft weight [lb], positive (taken as lbf under standard gravity).
    eas_kt : float, array or Series
        Equivalent airspeed [kt], positive.
    wing_area_ft2 : float
        Reference wing area [ft²], positive.
    nz_g : float, array or Series
        Normal load factor [g]; 1 in steady level flight.

    Returns
    -------
    float, array or Series
        Lift coefficient CL [-].

    Raises
    ------
    TrimlogError
        A weight, airspeed or area that is not positive.

    Notes
    -----
    CL = 2·nz·W / (ρ0·Ve²·S), ρ0 = 0.0023769 slug/ft³; in these units
    CL ≈ 295.37·nz·W / (Ve[kt]²·S).

    References
    ----------
    Gracey, NASA RP-1046 (1980): EAS and q; U.S. Standard Atmosphere 1976 (ρ0).

    Examples
    --------
    >>> round(lift_coefficient(1500.0, 100.0, 120.0), 4)
    0.3692
    """
    check_shapes(weight_lb=weight_lb, eas_kt=eas_kt, nz_g=nz_g)
    weight = as_float_array(weight_lb, "weight_lb")
    check_range(weight, 0.0, np.inf, "weight_lb", "lb", series_template(weight_lb),
                 low_inclusive=False)
    eas = as_float_array(eas_kt, "eas_kt")
    check_range(eas, 0.0, np.inf, "eas_kt", "kt", series_template(eas_kt), low_inclusive=False)
    area = as_float_array(wing_area_ft2, "wing_area_ft2")
    check_range(area, 0.0, np.inf, "wing_area_ft2", "ft^2", low_inclusive=False)
    nz = as_float_array(nz_g, "nz_g")
    check_range(nz, -np.inf, np.inf, "nz_g", "g", series_template(nz_g))
    q = as_float_array(dynamic_pressure_psf(eas), "eas_kt")
    return like_input(nz * weight / (q * area), weight_lb, eas_kt, nz_g, name="cl")


# --------------------------------------------------------------------------
# Position error.
# --------------------------------------------------------------------------


@dataclass(frozen=True)
class PositionErrorResult:
    """Calibrated airspeeds from indicated ones, and what the table could not cover.

    Attributes
    ----------
    cas_kt : float, array or Series
        Calibrated airspeed [kt], of the same kind as the IAS given.
    n_outside_table : int
        How many IAS values lay outside the table (0 unless clamped).
    warnings : tuple of str
        One message when values were clamped, naming the count and the range.
    findings : tuple of Finding
        ``warnings`` coded (``physics.airspeed.outside_table``).
    """

    cas_kt: Any
    n_outside_table: int
    warnings: tuple[str, ...]
    findings: tuple[Finding, ...] = ()


def _validate_table(table_ias_kt: Any, table_cas_kt: Any) -> tuple[np.ndarray, np.ndarray]:
    ias = np.ravel(as_float_array(table_ias_kt, "table_ias_kt"))
    cas = np.ravel(as_float_array(table_cas_kt, "table_cas_kt"))
    if ias.size != cas.size:
        raise TrimlogError(
            f"position-error table: expected as many CAS as IAS values, found {ias.size} IAS "
            f"and {cas.size} CAS"
        )
    if ias.size < 2:
        raise TrimlogError(
            f"position-error table: expected at least 2 rows, found {ias.size}"
        )
    for name, column in (("table_ias_kt", ias), ("table_cas_kt", cas)):
        bad = ~np.isfinite(column) | (column < 0.0)
        if bad.any():
            row = int(np.flatnonzero(bad)[0])
            raise TrimlogError(
                f"position-error table, {name} row {row + 1}: expected a speed of 0 kt or "
                f"more, found {column[row]:g}"
            )
    steps = np.diff(ias)
    if (steps <= 0.0).any():
        row = int(np.flatnonzero(steps <= 0.0)[0]) + 1
        raise TrimlogError(
            f"position-error table, table_ias_kt row {row + 1}: expected IAS to increase "
            f"row by row, found {ias[row]:g} kt after {ias[row - 1]:g} kt"
        )
    return ias, cas


def ias_to_cas(
    ias_kt: Numeric,
    table_ias_kt: Numeric,
    table_cas_kt: Numeric,
    extrapolate: Literal["error", "clamp"] = "error",
) -> PositionErrorResult:
    """Calibrated airspeed from indicated airspeed through a position-error table.

    Parameters
    ----------
    ias_kt : float, array or Series
        Indicated airspeed [kt], not negative.
    table_ias_kt, table_cas_kt : array-like
        The aircraft's calibration: IAS [kt] strictly increasing, and the CAS
        [kt] measured at each; at least 2 rows.
    extrapolate : {"error", "clamp"}
        Outside the table: "error" raises; "clamp" holds the end correction
        ΔV = CAS − IAS constant beyond each end and reports it in ``warnings``.

    Returns
    -------
    PositionErrorResult
        ``cas_kt`` of the same kind as ``ias_kt``, the count outside the table,
        and the warnings.

    Raises
    ------
    TrimlogError
        A malformed table, a negative IAS, an IAS outside the table with
        ``extrapolate="error"``, or a resulting CAS below zero.

    Notes
    -----
    The correction ΔV is interpolated linearly in IAS between rows (which is
    the same as interpolating CAS).  NaN IAS values give NaN CAS and are not
    counted as outside.

    References
    ----------
    Gracey, NASA RP-1046 (1980): position error and its flight calibration.

    Examples
    --------
    >>> r = ias_to_cas(95.0, [60.0, 90.0, 120.0], [63.0, 91.0, 119.0])
    >>> round(r.cas_kt, 2), r.n_outside_table
    (95.67, 0)
    """
    if extrapolate not in ("error", "clamp"):
        raise TrimlogError(
            f"extrapolate: expected 'error' or 'clamp', found {extrapolate!r}"
        )
    table_ias, table_cas = _validate_table(table_ias_kt, table_cas_kt)
    ias = _speeds(ias_kt, "ias_kt")
    template = series_template(ias_kt)
    lo, hi = table_ias[0], table_ias[-1]
    flat = np.atleast_1d(ias).ravel()
    outside = (flat < lo) | (flat > hi)
    n_outside = int(outside.sum())
    found: tuple[Finding, ...] = ()
    if n_outside:
        first = int(np.flatnonzero(outside)[0])
        clamped = finding("physics.airspeed.outside_table", Severity.CAUTION,
                          Subject(quantity="cas_kt"), count=n_outside, total=flat.size,
                          low_kt=float(lo), high_kt=float(hi), first_kt=float(flat[first]),
                          where=where(first, flat.size, template))
        if extrapolate == "error":
            raise TrimlogError(
                f"ias_kt: {n_outside} of {flat.size} IAS values lie outside the position-error "
                f"table ({lo:g}-{hi:g} kt), the first {flat[first]:g} kt"
                f"{where(first, flat.size, template)}; extend the calibration or pass "
                "extrapolate='clamp'"
            )
        found = (clamped,)
    correction = np.interp(ias, table_ias, table_cas - table_ias)
    cas = ias + correction
    check_range(cas, 0.0, np.inf, "CAS from ias_kt and the position-error table", "kt",
                 template)
    return PositionErrorResult(
        cas_kt=like_input(cas, ias_kt, name="cas_kt"),
        n_outside_table=n_outside,
        warnings=tuple(f.message for f in found),
        findings=found,
    )
