"""Airspeed calibration from GPS legs: legs -> TAS and wind per speed -> CAS -> position error.

The chain of ``trimlog calibrate``:

1. **Legs.**  A log with indicated airspeed, pressure altitude, GPS ground
   speed and GPS track (``read_log(..., purpose="airspeed_calibration")``).
   In a time series the steady legs are found with the stabilized-point
   machinery of :mod:`trimlog.pipeline.points`, testing airspeed, pressure
   altitude and track (a constant track means wings level: a turn at a
   quarter of a degree per second already breaks the track tolerance); in a
   typed table each row is a leg.
2. **Speeds.**  Legs are grouped by indicated airspeed (and by pressure
   altitude, since the TAS of one IAS changes with it).
3. **TAS and wind** of each speed from the circle through the ground-velocity
   vectors (:func:`trimlog.physics.wind_triangle.fit_circle`): exact for three
   legs, least squares with a 95 % interval for four or more, with the
   heading-spread and wind-change checks.
4. **CAS** from TAS at the legs' pressure altitude and OAT through the
   compressible relations of :mod:`trimlog.physics.airspeed`; the position
   error ΔV = CAS − IAS with its interval.  The interval adds, in quadrature,
   the effect of an OAT error of :data:`OAT_UNCERTAINTY_95_C` (the probe's
   calibration is shared by every leg of the flight, so the residuals cannot
   see it).
5. **Curve**: a polynomial in IAS through the ΔV of the speeds (cubic from
   six speeds, quadratic from four, straight line from two), evaluated at the
   speeds flown: the profile's ``[airspeed_calibration]`` table.
6. **Altimeter**: the static-source error as an altitude correction, under
   the usual assumption that the pitot (total-pressure) error is nil, so the
   whole ΔV comes from the static source.  Where that assumption fails (a
   pitot in the propeller wash or at high angle of attack) the method cannot
   separate the two, and the views say so.

References
----------
.. [1] G. V. Lewis, *Using GPS to determine pitot-static errors*, National
   Test Pilot School, 2003.
.. [2] W. Gracey, *Measurement of Aircraft Speed and Altitude*, NASA RP-1046,
   1980: position error, and the static-pressure error as an altitude error
   ΔHpc = Δp/(ρ·g) when the total pressure is free of error.
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from trimlog.errors import NotIdentifiableError, TrimlogError
from trimlog.files import file_stem
from trimlog.findings import Finding, Severity, Subject, finding, lines
from trimlog.input.logs import LogRead, read_log
from trimlog.input.profile import AircraftProfile
from trimlog.input.profile_writer import replace_calibration
from trimlog.physics import airspeed, atmosphere
from trimlog.physics.wind_triangle import (
    GOOD_HEADING_ARC_DEG,
    WIND_CHANGE_LEVEL,
    CircleFit,
    fit_circle,
)
from trimlog.pipeline.points import PointSettings, find_stabilized_points

#: Legs whose mean IAS differ by at most this belong to one speed [kt].
#: Common practice, no source: a pilot holds a target speed within about 1 kt.
GROUP_IAS_KT = 3.0
#: Legs whose pressure altitudes differ by more than this are different speeds [ft].
#: Common practice, no source.
GROUP_ALT_FT = 500.0
#: 95 % uncertainty of the logged OAT, shared by the legs of a flight [degC].
#: Common practice, no source: a light-aircraft OAT probe reads within about 1 degC.
OAT_UNCERTAINTY_95_C = 1.0
#: The same when no OAT is logged and ISA is assumed [degC]. Common practice, no source.
ISA_ASSUMED_UNCERTAINTY_95_C = 15.0
_FT_PER_M = 1.0 / 0.3048


@dataclass(frozen=True)
class LegSettings:
    """Tuning of leg detection in a time series.

    Parameters
    ----------
    min_leg_s : float
        Shortest steady leg accepted [s].
    ias_tol_kt : float
        Largest range of smoothed IAS within a leg [kt].
    alt_tol_ft : float
        Largest range of smoothed pressure altitude within a leg [ft].
    track_tol_deg : float
        Largest range of smoothed GPS track within a leg [deg].

    Notes
    -----
    Common practice, no source: calibration legs are flown for 30-60 s at
    constant IAS (±1 kt), altitude (±20-30 ft) and heading.
    """

    min_leg_s: float = 20.0
    ias_tol_kt: float = 2.0
    alt_tol_ft: float = 60.0
    track_tol_deg: float = 5.0

    def __post_init__(self) -> None:
        for name in ("min_leg_s", "ias_tol_kt", "alt_tol_ft", "track_tol_deg"):
            value = getattr(self, name)
            if not (isinstance(value, int | float) and np.isfinite(value) and value > 0):
                raise TrimlogError(f"leg settings: {name} must be a positive number, "
                                   f"found {value!r}")


@dataclass(frozen=True)
class SpeedCalibration:
    """The calibration at one indicated airspeed.

    Attributes
    ----------
    ias_kt : float
        Mean indicated airspeed of the legs [kt].
    pressure_alt_ft, oat_c : float
        Mean pressure altitude [ft] and OAT [degC] of the legs (OAT: ISA when not logged).
    fit : CircleFit
        TAS and wind of the legs.
    cas_kt : float
        Calibrated airspeed from the TAS [kt].
    cas_ci95_kt : tuple of float or None
        95 % interval of the CAS (residuals and OAT uncertainty) [kt]; None for
        three legs (an exact solution says nothing about its own error).
    delta_v_kt : float
        Position error ΔV = CAS − IAS [kt].
    delta_v_ci95_kt : tuple of float or None
        Its 95 % interval [kt].
    altitude_correction_ft : float
        Static-source error as the correction to add to the indicated pressure
        altitude [ft], assuming no total-pressure error.
    legs : tuple of int
        Row numbers (0-based) in the legs table of the legs used.
    """

    ias_kt: float
    pressure_alt_ft: float
    oat_c: float
    fit: CircleFit
    cas_kt: float
    cas_ci95_kt: tuple[float, float] | None
    delta_v_kt: float
    delta_v_ci95_kt: tuple[float, float] | None
    altitude_correction_ft: float
    legs: tuple[int, ...]


@dataclass(frozen=True, eq=False)
class CalibrationResult:
    """Everything ``trimlog calibrate`` found: legs, speeds, the table, the findings.

    Attributes
    ----------
    legs : pandas.DataFrame
        One row per leg: ``source``, ``flight``, ``leg``, ``t_start_s``,
        ``t_end_s``, ``duration_s``, ``source_line_start``, ``source_line_end``,
        ``ias_kt``, ``pressure_alt_ft``, ``oat_c``, ``gps_groundspeed_kt``,
        ``gps_track_deg`` (0..360), ``flags``, ``included``, ``speed`` (index
        into ``speeds``, -1 for none).
    speeds : tuple of SpeedCalibration
        In order of IAS.
    table_ias_kt, table_cas_kt : tuple of float
        The smooth curve at the speeds flown, for the profile (empty with
        fewer than two speeds).
    curve_coefficients : tuple of float
        ΔV = c0 + c1·IAS + c2·IAS² + c3·IAS³ [kt], as many terms as fitted.
    findings : tuple of Finding
        Warnings and notes, the log readers' included.
    sources : tuple of str
        The files read.
    """

    legs: pd.DataFrame
    speeds: tuple[SpeedCalibration, ...]
    table_ias_kt: tuple[float, ...]
    table_cas_kt: tuple[float, ...]
    curve_coefficients: tuple[float, ...]
    findings: tuple[Finding, ...]
    sources: tuple[str, ...] = field(default=())

    @property
    def determinable(self) -> bool:
        """Whether at least one speed was solved."""
        return bool(self.speeds)

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings' words (from the catalogue), for views that list plain text."""
        return lines(self.findings)

    def delta_v_at(self, ias_kt: float | np.ndarray) -> float | np.ndarray:
        """The smooth position-error curve ΔV [kt] at ``ias_kt`` (within the speeds flown)."""
        return np.polynomial.polynomial.polyval(ias_kt, self.curve_coefficients)


# --------------------------------------------------------------------- reading


def read_calibration_log(
    source: str | Path | bytes | Any, profile: AircraftProfile, *, name: str | None = None
) -> LogRead:
    """Read a calibration log or typed leg table with the profile's logger mapping.

    Parameters
    ----------
    source : path, bytes or file-like
        The log (time series) or leg table (one row per leg).
    profile : AircraftProfile
        Its ``[logger]`` column map and inverted columns apply.
    name : str, optional
        File name for messages.

    Returns
    -------
    LogRead

    Raises
    ------
    InputFileError
        A required column missing (indicated airspeed, pressure altitude, GPS
        ground speed, GPS track), or any reading error, naming file, line and column.
    """
    inverted = [c for c in profile.inverted_columns if c != "elevator_deg"]
    return read_log(source, name=name, column_map=profile.column_map, inverted=inverted,
                    purpose="airspeed_calibration")


def find_legs(log: LogRead, settings: LegSettings | None = None) -> pd.DataFrame:
    """Return the legs of one calibration log (see :class:`CalibrationResult` for columns).

    Parameters
    ----------
    log : LogRead
        From :func:`read_calibration_log`.
    settings : LegSettings, optional
        Leg detection tolerances (time series only).

    Returns
    -------
    pandas.DataFrame
        One row per leg, excluded ones kept with ``included=False``.
    """
    settings = settings or LegSettings()
    data = log.data
    if log.kind == "time_series":
        samples = data.copy()
        track = samples["gps_track_deg"].to_numpy(dtype=float)
        ok = np.isfinite(track)
        unwrapped = track.copy()
        unwrapped[ok] = np.degrees(np.unwrap(np.radians(track[ok])))
        samples["gps_track_deg"] = unwrapped
        point_settings = PointSettings(min_duration_s=settings.min_leg_s,
                                       ias_tol_kt=settings.ias_tol_kt)
        points = find_stabilized_points(
            samples, flight=file_stem(log.source), settings=point_settings,
            steady_signals={"ias_kt": settings.ias_tol_kt,
                            "pressure_alt_ft": settings.alt_tol_ft,
                            "gps_track_deg": settings.track_tol_deg})
        legs = pd.DataFrame({
            "flight": points["flight"].astype(str),
            "leg": points["point"].astype(np.int64),
            "t_start_s": points["t_start_s"], "t_end_s": points["t_end_s"],
            "duration_s": points["duration_s"],
            "source_line_start": points["source_line_start"],
            "source_line_end": points["source_line_end"],
        })
        for c in ("ias_kt", "pressure_alt_ft", "oat_c", "gps_groundspeed_kt", "gps_track_deg"):
            legs[c] = points[c] if c in points else np.nan
        flags = points["flags"].astype(str).map(
            lambda f: ";".join(x for x in f.split(";") if x and x not in ("no_force", "no_nz")))
        legs["flags"] = flags
        legs["included"] = points["included"].astype(bool)
    else:
        n = len(data)
        legs = pd.DataFrame({
            "flight": data["flight"].astype(str) if "flight" in data
            else pd.Series([file_stem(log.source)] * n, dtype=str),
            "leg": np.arange(1, n + 1, dtype=np.int64),
            "t_start_s": data["time_s"] if "time_s" in data else np.nan,
            "t_end_s": data["time_s"] if "time_s" in data else np.nan,
            "duration_s": np.nan,
            "source_line_start": data["source_line"].astype(np.int64),
            "source_line_end": data["source_line"].astype(np.int64),
        })
        for c in ("ias_kt", "pressure_alt_ft", "oat_c", "gps_groundspeed_kt", "gps_track_deg"):
            legs[c] = data[c].to_numpy(dtype=float) if c in data else np.nan
        need = legs[["ias_kt", "pressure_alt_ft", "gps_groundspeed_kt", "gps_track_deg"]]
        complete = np.isfinite(need.to_numpy(dtype=float)).all(axis=1)
        legs["flags"] = np.where(complete, "table", "table;incomplete")
        legs["included"] = complete
    legs["gps_track_deg"] = np.mod(legs["gps_track_deg"].to_numpy(dtype=float), 360.0)
    legs.insert(0, "source", log.source)
    return legs.reset_index(drop=True)


# --------------------------------------------------------------------- solving


def group_legs(legs: pd.DataFrame) -> list[np.ndarray]:
    """Row indices of the included legs of each speed, in order of IAS.

    Legs are sorted by IAS and cut where consecutive ones differ by more than
    :data:`GROUP_IAS_KT`; each group is cut again where pressure altitudes
    differ by more than :data:`GROUP_ALT_FT`.
    """
    rows = np.flatnonzero(legs["included"].to_numpy(dtype=bool))
    if not rows.size:
        return []
    ias = legs["ias_kt"].to_numpy(dtype=float)
    alt = legs["pressure_alt_ft"].to_numpy(dtype=float)
    rows = rows[np.argsort(ias[rows], kind="stable")]
    groups = np.split(rows, np.flatnonzero(np.diff(ias[rows]) > GROUP_IAS_KT) + 1)
    out = []
    for g in groups:
        g = g[np.argsort(alt[g], kind="stable")]
        out.extend(np.split(g, np.flatnonzero(np.diff(alt[g]) > GROUP_ALT_FT) + 1))
    return sorted(out, key=lambda g: (float(ias[g].mean()), float(alt[g].mean())))


def tas_to_cas(tas_kt: float, pressure_alt_ft: float, oat_c: float) -> float:
    """Calibrated airspeed [kt] from true airspeed, pressure altitude [ft] and OAT [degC].

    Examples
    --------
    >>> round(tas_to_cas(174.1, 10000.0, -4.81), 1)
    150.0
    """
    eas = airspeed.tas_to_eas(tas_kt, pressure_alt_ft, oat_c)
    return float(airspeed.eas_to_cas(eas, pressure_alt_ft))


def altitude_correction_ft(ias_kt: float, cas_kt: float, pressure_alt_ft: float,
                           oat_c: float) -> float:
    """Static-source error as the correction to add to indicated pressure altitude [ft].

    Notes
    -----
    With no total-pressure error, the static port reads ps' = ps + Δp with
    Δp = qc(CAS) − qc(IAS); the altimeter then shows Δp/(ρ·g) too low, so the
    correction is ΔH = +Δp/(ρ·g) (Gracey, NASA RP-1046).

    Examples
    --------
    >>> round(altitude_correction_ft(70.0, 72.0, 5000.0, 5.0))
    15
    """
    dp = float(airspeed.impact_pressure_pa(cas_kt)) - float(airspeed.impact_pressure_pa(ias_kt))
    rho = float(atmosphere.density_kgm3(pressure_alt_ft, oat_c))
    return dp / (rho * atmosphere.G0_MPS2) * _FT_PER_M


def _solve_speed(legs: pd.DataFrame, rows: np.ndarray, oat_logged: bool,
                 findings: list[Finding]) -> SpeedCalibration | None:
    part = legs.iloc[rows]
    ias = float(part["ias_kt"].mean())
    alt = float(part["pressure_alt_ft"].mean())
    oat_values = part["oat_c"].to_numpy(dtype=float)
    have_oat = oat_logged and np.isfinite(oat_values).any()
    oat = float(np.nanmean(oat_values)) if have_oat else float(
        atmosphere.isa_temperature_k(alt) - atmosphere.KELVIN_OFFSET)
    at = {"ias_kt": ias, "pressure_alt_ft": alt}
    try:
        fit = fit_circle(part["gps_groundspeed_kt"].to_numpy(dtype=float),
                         part["gps_track_deg"].to_numpy(dtype=float))
    except NotIdentifiableError as exc:
        code = ("pipeline.calibration.too_few_legs" if len(rows) < 3
                else "pipeline.calibration.headings_not_spread")
        findings.append(finding(code, Severity.WARNING, reason=str(exc), **at))
        return None
    cas = tas_to_cas(fit.tas_kt, alt, oat)
    ci = None
    if fit.tas_ci95_kt is not None:
        lo, hi = (tas_to_cas(v, alt, oat) for v in fit.tas_ci95_kt)
        u_oat = OAT_UNCERTAINTY_95_C if have_oat else ISA_ASSUMED_UNCERTAINTY_95_C
        oat_half = abs(tas_to_cas(fit.tas_kt, alt, oat + u_oat) - cas)
        half_lo, half_hi = np.hypot(cas - lo, oat_half), np.hypot(hi - cas, oat_half)
        ci = (cas - float(half_lo), cas + float(half_hi))
    else:
        findings.append(finding("pipeline.calibration.three_legs_exact", Severity.CAUTION, **at))
    if not fit.headings_well_spread:
        findings.append(finding("pipeline.calibration.headings_poorly_spread", Severity.CAUTION,
                                arc_deg=fit.heading_arc_deg, good_deg=GOOD_HEADING_ARC_DEG, **at))
    if fit.wind_changed:
        findings.append(finding("pipeline.calibration.wind_changed", Severity.WARNING,
                                residual_sd_kt=fit.residual_sd_kt, p=fit.wind_change_p,
                                level=WIND_CHANGE_LEVEL, **at))
    return SpeedCalibration(
        ias_kt=ias, pressure_alt_ft=alt, oat_c=oat, fit=fit, cas_kt=cas, cas_ci95_kt=ci,
        delta_v_kt=cas - ias,
        delta_v_ci95_kt=None if ci is None else (ci[0] - ias, ci[1] - ias),
        altitude_correction_ft=altitude_correction_ft(ias, cas, alt, oat),
        legs=tuple(int(r) for r in rows),
    )


def _curve(speeds: list[SpeedCalibration]) -> tuple[float, ...]:
    """Least-squares polynomial ΔV(IAS) through the speeds' ΔV, equal weights.

    Cubic from six distinct speeds, quadratic from four, a straight line from
    two, a constant for one.  Equal weights: each speed's own interval rests on
    as few as one degree of freedom, too noisy to weight by.
    """
    x = np.array([s.ias_kt for s in speeds])
    y = np.array([s.delta_v_kt for s in speeds])
    distinct = len(np.unique(np.round(x, 1)))
    degree = 3 if distinct >= 6 else 2 if distinct >= 4 else min(1, distinct - 1)
    coef = np.polynomial.polynomial.polyfit(x, y, degree)
    return tuple(float(c) for c in coef)


def calibrate(
    logs: list[LogRead], *, settings: LegSettings | None = None
) -> CalibrationResult:
    """Solve the position error from the legs of one or more calibration logs.

    Parameters
    ----------
    logs : list of LogRead
        From :func:`read_calibration_log`.
    settings : LegSettings, optional
        Leg detection tolerances.

    Returns
    -------
    CalibrationResult
        ``determinable`` is False when no speed could be solved (for example
        two legs only); the findings say why.

    Raises
    ------
    TrimlogError
        No logs.
    """
    if not logs:
        raise TrimlogError("calibrate: expected at least one calibration log")
    findings: list[Finding] = []
    frames = []
    oat_logged = True
    for log in logs:
        findings.extend(log.findings)
        oat_logged &= "oat_c" in log.data
        legs = find_legs(log, settings)
        if not len(legs):
            findings.append(finding("pipeline.calibration.no_legs", Severity.CAUTION,
                                    Subject(source=log.source)))
        frames.append(legs)
    legs = pd.concat(frames, ignore_index=True) if frames else pd.DataFrame()
    if not oat_logged:
        findings.append(finding("pipeline.calibration.no_oat", Severity.CAUTION,
                                oat_uncertainty_c=ISA_ASSUMED_UNCERTAINTY_95_C))
    legs["speed"] = -1
    speeds: list[SpeedCalibration] = []
    for rows in group_legs(legs):
        solved = _solve_speed(legs, rows, oat_logged, findings)
        if solved is not None:
            legs.loc[rows, "speed"] = len(speeds)
            speeds.append(solved)
    excluded = legs.loc[~legs["included"].astype(bool)]
    if len(excluded):
        findings.append(finding(
            "pipeline.calibration.legs_excluded", Severity.NOTE, count=len(excluded),
            legs="; ".join(f"{r.source} leg {r.leg} ({r.flags})" for r in excluded.itertuples())))
    coef: tuple[float, ...] = ()
    table_ias: tuple[float, ...] = ()
    table_cas: tuple[float, ...] = ()
    if speeds:
        coef = _curve(speeds)
        findings.append(finding("pipeline.calibration.altimeter_assumption", Severity.NOTE))
    if len(speeds) >= 2:
        x = sorted({round(s.ias_kt, 1) for s in speeds})
        table_ias = tuple(x)
        table_cas = tuple(round(v + float(np.polynomial.polynomial.polyval(v, coef)), 1)
                          for v in x)
    elif speeds:
        findings.append(finding("pipeline.calibration.one_speed", Severity.CAUTION))
    if not speeds:
        findings.append(finding("pipeline.calibration.not_determinable", Severity.WARNING))
    return CalibrationResult(
        legs=legs, speeds=tuple(speeds), table_ias_kt=table_ias, table_cas_kt=table_cas,
        curve_coefficients=coef, findings=tuple(findings),
        sources=tuple(log.source for log in logs))


def with_calibration(profile: AircraftProfile, result: CalibrationResult) -> AircraftProfile:
    """The profile with its position-error table replaced by the calibration's.

    Parameters
    ----------
    profile : AircraftProfile
        As loaded; its ``text`` is rewritten too (only the
        ``[airspeed_calibration]`` section changes), so a history stores it as
        a new profile version.
    result : CalibrationResult
        With a table (two or more speeds).

    Returns
    -------
    AircraftProfile

    Raises
    ------
    NotIdentifiableError
        The calibration gave no table.
    """
    if len(result.table_ias_kt) < 2:
        raise NotIdentifiableError(
            "the calibration gave no position-error table (fewer than two speeds solved)")
    names = ", ".join(Path(s).name for s in result.sources)
    text = replace_calibration(
        profile.text, result.table_ias_kt, result.table_cas_kt, source=profile.source,
        comment=f"from trimlog calibrate of {names} (GPS legs, {len(result.speeds)} speeds)")
    return replace(profile, position_error_ias_kt=result.table_ias_kt,
                   position_error_cas_kt=result.table_cas_kt, text=text)


def calibrate_files(
    paths: list[str | Path], profile: AircraftProfile, *, settings: LegSettings | None = None
) -> CalibrationResult:
    """Read calibration logs from files and :func:`calibrate` them."""
    logs = [read_calibration_log(path, profile) for path in paths]
    return calibrate(logs, settings=settings)


__all__ = [
    "CalibrationResult", "LegSettings", "SpeedCalibration",
    "altitude_correction_ft", "calibrate", "calibrate_files", "find_legs", "group_legs",
    "read_calibration_log", "tas_to_cas", "with_calibration",
]
