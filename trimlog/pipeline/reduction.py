"""Reduction of stabilized points to the quantities the stability fits need.

For each point: calibrated, equivalent and true airspeed, dynamic pressure,
load factor, weight and CG (from the log or from the flight's loading sheet
with fuel burn applied), CG as a fraction of the MAC, lift coefficient
``CL = n·W/(q·S)`` and ``Fs/q``; plus the label of the stabilizer-incidence
setting and of the configuration, which decide what may be pooled.

References
----------
Gracey, W., *Measurement of Aircraft Speed and Altitude*, NASA RP-1046 (1980):
airspeed relations.  Etkin, B. and Reid, L. D., *Dynamics of Flight*, 3rd ed.,
Wiley (1996), ch. 2: lift coefficient and trim.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Protocol

import numpy as np
import pandas as pd

from trimlog.errors import InputFileError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import AircraftProfile
from trimlog.physics import airspeed
from trimlog.physics import mass_balance as loading
from trimlog.pipeline.plausibility import check_units_plausible

#: A CG this far outside the profile's limits [%MAC] is taken as a loading error.
CG_IMPLAUSIBLE_BEYOND_LIMITS_PCT_MAC = 15.0

DEFAULT_SETTING_LABEL = "as rigged"


class FlightLoadingLike(Protocol):
    """What the reduction needs of a flight's loading sheet (see ``loading_sheet.LoadingSheet``)."""

    takeoff_weight_lb: float
    takeoff_cg_in: float | None
    takeoff_cg_pct_mac: float | None
    takeoff_fuel_gal: float
    flap_deg: float | None
    stab_setting: str | None
    stab_incidence_deg: float | None


@dataclass(frozen=True)
class ReducedPoints:
    """Reduced points of one or more flights, and what the reduction had to assume."""

    points: pd.DataFrame
    findings: tuple[Finding, ...]

    @property
    def warnings(self) -> tuple[str, ...]:
        """The findings in words (from the catalogue)."""
        return tuple(f.line() for f in self.findings)


def reduce_points(
    points: pd.DataFrame,
    profile: AircraftProfile,
    loadings: Mapping[str, FlightLoadingLike] | None = None,
) -> ReducedPoints:
    """Compute EAS, q, CL, Fs/q and h for every stabilized point.

    Parameters
    ----------
    points : DataFrame
        The Points table (see DEVELOPERS.md): one row per point with a
        ``flight`` column and canonical quantity columns.
    profile : AircraftProfile
        Wing area, MAC, position-error table, fuel arm and density.
    loadings : mapping of flight -> loading sheet, optional
        Takeoff weight, CG and fuel per flight, for logs that do not carry
        weight and CG per row; fuel burn is applied from ``fuel_gal``.

    Returns
    -------
    ReducedPoints
        The reduced table (columns of the Reduced-points contract) and the
        warnings about assumptions made.

    Raises
    ------
    InputFileError
        A flight with neither weight/CG columns nor a loading sheet, a CG
        far outside the aircraft's limits, or a weight or lift coefficient
        no aircraft can have (a unit mistake; see ``pipeline.plausibility``).
    """
    loadings = dict(loadings or {})
    out = points.copy()
    found: list[Finding] = []

    out["cas_kt"] = _calibrated_airspeed(out, profile, found)
    stopped = ~(out["cas_kt"] > 0.0)
    if stopped.any():
        where = _where(out, stopped)
        speed = out.loc[stopped, "cas_kt"].iloc[0]
        shown = "missing (the airspeed cell is empty or not a number)" if np.isnan(speed) else (
            f"{speed:g} kt")
        raise InputFileError(
            f"{where['prefix']}calibrated airspeed {shown}: a "
            "trim point needs forward speed (expected more than 0 kt)",
            file=where["file"], line=where["line"], column="cas_kt",
        )
    out["eas_kt"] = airspeed.cas_to_eas(out["cas_kt"], out["pressure_alt_ft"])
    if "oat_c" in out and out["oat_c"].notna().all():
        oat = out["oat_c"]
    else:
        oat = None
        found.append(finding("pipeline.reduction.isa_assumed", Severity.CAUTION,
                             Subject(quantity="oat_c")))
    out["tas_kt"] = airspeed.eas_to_tas(out["eas_kt"], out["pressure_alt_ft"], oat)
    out["q_psf"] = airspeed.dynamic_pressure_psf(out["eas_kt"])

    out["nz_logged"] = "nz_g" in out and out["nz_g"].notna()
    if "nz_g" not in out:
        out["nz_g"] = 1.0
        found.append(finding("pipeline.reduction.nz_assumed", Severity.CAUTION,
                             Subject(quantity="nz_g")))
    out["nz_g"] = out["nz_g"].fillna(1.0)

    weight_logged = "weight_lb" in out and bool(out["weight_lb"].notna().all())
    _weight_and_cg(out, profile, loadings, found)
    out["h"] = (out["cg_in"] - profile.lemac_in) / profile.mac_in
    out["cg_pct_mac"] = 100.0 * out["h"]
    _check_cg_plausible(out, profile, found)

    out["cl"] = airspeed.lift_coefficient(
        out["weight_lb"], out["eas_kt"], profile.wing_area_ft2, out["nz_g"]
    )
    check_units_plausible(out, profile, weight_logged, found)
    if "stick_force_lbf" in out:
        out["fs_over_q_ft2"] = out["stick_force_lbf"] / out["q_psf"]
    else:
        out["stick_force_lbf"] = np.nan
        out["fs_over_q_ft2"] = np.nan

    _incidence_and_configuration(out, loadings, found)
    _trim_speed(out, loadings)
    return ReducedPoints(points=out, findings=tuple(found))


def _trim_speed(out: pd.DataFrame, loadings: Mapping[str, FlightLoadingLike]) -> None:
    """Column ``trim_ias_kt`` from the sheets' optional ``trim.speed`` (NaN where not given)."""
    speeds = {str(f): getattr(sheet, "trim_speed_kt", None) for f, sheet in loadings.items()}
    if not any(v is not None for v in speeds.values()):
        return
    out["trim_ias_kt"] = out["flight"].astype(str).map(
        lambda f: np.nan if speeds.get(f) is None else float(speeds[f])).astype(float)


def _where(out: pd.DataFrame, mask: pd.Series | np.ndarray) -> dict[str, object]:
    """File and line of the first row under ``mask`` (for error messages)."""
    row = out.loc[np.asarray(mask, dtype=bool)].iloc[0]
    file = str(row["source"]) if "source" in out and pd.notna(row["source"]) else None
    line = None
    if "source_line_start" in out and pd.notna(row["source_line_start"]):
        line = int(row["source_line_start"])
    flight = f"flight '{row['flight']}' point {row['point']}: " if "point" in out else ""
    return {"file": file or f"flight '{row['flight']}'", "line": line, "prefix": flight}


def _calibrated_airspeed(
    out: pd.DataFrame, profile: AircraftProfile, found: list[Finding]
) -> pd.Series:
    """CAS of every point, row by row: the logged ``cas_kt``, else ``ias_kt`` corrected.

    A programme may mix point tables typed in calibrated airspeed with logs
    of indicated airspeed: each row keeps its own kind of airspeed.
    """
    cas = pd.to_numeric(out["cas_kt"], errors="coerce").astype(float) if "cas_kt" in out else (
        pd.Series(np.nan, index=out.index))
    need = ~np.isfinite(cas.to_numpy(dtype=float))
    if not need.any():
        return cas
    if "ias_kt" not in out:
        raise InputFileError("no airspeed: expected a column ias_kt or cas_kt", column="ias_kt")
    ias = pd.to_numeric(out.loc[need, "ias_kt"], errors="coerce").astype(float)
    if profile.position_error_ias_kt is None:
        found.append(finding("pipeline.reduction.no_airspeed_calibration", Severity.CAUTION,
                             Subject(quantity="cas_kt")))
        corrected = ias
    else:
        result = airspeed.ias_to_cas(
            ias,
            profile.position_error_ias_kt,
            profile.position_error_cas_kt,
            extrapolate="clamp",
        )
        found += result.findings
        corrected = pd.Series(np.asarray(result.cas_kt, dtype=float), index=ias.index)
    cas = cas.copy()
    cas.loc[need] = corrected.to_numpy(dtype=float)
    return cas


def _weight_and_cg(
    out: pd.DataFrame,
    profile: AircraftProfile,
    loadings: Mapping[str, FlightLoadingLike],
    found: list[Finding],
) -> None:
    if "cg_in" not in out and "cg_pct_mac" in out:
        out["cg_in"] = profile.lemac_in + out["cg_pct_mac"] / 100.0 * profile.mac_in
    for column in ("weight_lb", "cg_in"):
        if column not in out:
            out[column] = np.nan
    missing_rows = out[["weight_lb", "cg_in"]].isna().any(axis=1)
    flights = out["flight"].astype(str)
    for flight in dict.fromkeys(flights[missing_rows]):
        missing = missing_rows & (flights == flight)
        sheet = loadings.get(str(flight))
        if sheet is None:
            where = _where(out, missing)
            raise InputFileError(
                f"{where['prefix']}weight and CG are needed for every point: expected columns "
                "weight_lb and cg_in (or cg_pct_mac) in the log, or a loading sheet for this "
                "flight",
                file=where["file"], line=where["line"], column="weight_lb",
            )
        idx = missing[missing].index
        _sheet_cg_uncertainty(out, idx, sheet, profile)
        takeoff_cg_in = (
            sheet.takeoff_cg_in if sheet.takeoff_cg_in is not None
            else profile.station(sheet.takeoff_cg_pct_mac)
        )
        fuel = out.loc[idx, "fuel_gal"] if "fuel_gal" in out else None
        if fuel is None or fuel.isna().all():
            out.loc[idx, "weight_lb"] = sheet.takeoff_weight_lb
            out.loc[idx, "cg_in"] = takeoff_cg_in
            found.append(finding("pipeline.reduction.no_fuel_burn", Severity.CAUTION,
                                 Subject(flight=str(flight), quantity="fuel_gal")))
            continue
        if profile.fuel_arm_in is None:
            raise InputFileError(
                "fuel burn needs the fuel arm: add [fuel] arm to the aircraft profile",
                file=_where(out, missing)["file"],
                column="fuel_gal",
            )
        zero_fuel = loading.zero_fuel_loading(
            sheet.takeoff_weight_lb,
            takeoff_cg_in,
            sheet.takeoff_fuel_gal,
            profile.fuel_arm_in,
            profile.fuel_density_lb_per_gal,
        )
        weight, cg = loading.cg_through_flight(
            zero_fuel.weight_lb,
            zero_fuel.cg_in,
            fuel.astype(float),
            profile.fuel_arm_in,
            profile.fuel_density_lb_per_gal,
        )
        out.loc[idx, "weight_lb"] = weight
        out.loc[idx, "cg_in"] = cg


def _sheet_cg_uncertainty(out: pd.DataFrame, idx: pd.Index, sheet: FlightLoadingLike,
                          profile: AircraftProfile) -> None:
    """Column ``cg_uncertainty_pct_mac`` from the sheet's optional ``takeoff.cg_uncertainty``."""
    sigma_in = getattr(sheet, "cg_uncertainty_in", None)
    sigma_pct = getattr(sheet, "cg_uncertainty_pct_mac", None)
    if sigma_in is not None:
        sigma_pct = 100.0 * sigma_in / profile.mac_in
    if sigma_pct is None:
        return
    if "cg_uncertainty_pct_mac" not in out:
        out["cg_uncertainty_pct_mac"] = np.nan
    out.loc[idx, "cg_uncertainty_pct_mac"] = float(sigma_pct)


def _check_cg_plausible(out: pd.DataFrame, profile: AircraftProfile, found: list[Finding]) -> None:
    fwd, aft = profile.cg_forward_pct_mac, profile.cg_aft_pct_mac
    extremes = out.groupby("flight", sort=False)["cg_pct_mac"].agg(["min", "max"])
    far = (extremes["min"] < fwd - CG_IMPLAUSIBLE_BEYOND_LIMITS_PCT_MAC) | (
        extremes["max"] > aft + CG_IMPLAUSIBLE_BEYOND_LIMITS_PCT_MAC)
    if far.any():
        flight = extremes.index[far.to_numpy()][0]
        lo, hi = extremes.loc[flight, "min"], extremes.loc[flight, "max"]
        where = _where(out, out["flight"] == flight)
        raise InputFileError(
            f"flight '{flight}': CG {lo:.1f}..{hi:.1f} %MAC is far outside the profile's limits "
            f"({fwd:.1f}..{aft:.1f} %MAC): check the loading, the datum, lemac and mac",
            file=where["file"], line=where["line"], column="cg_in",
        )
    outside = (extremes["min"] < fwd - 1e-9) | (extremes["max"] > aft + 1e-9)
    for flight, row in extremes.loc[outside].iterrows():
        found.append(finding("pipeline.reduction.cg_outside_limits", Severity.WARNING,
                             Subject(flight=str(flight), quantity="cg_pct_mac"),
                             min_pct_mac=float(row["min"]), max_pct_mac=float(row["max"]),
                             forward_pct_mac=fwd, aft_pct_mac=aft))


def _incidence_and_configuration(
    out: pd.DataFrame, loadings: Mapping[str, FlightLoadingLike], found: list[Finding]
) -> None:
    flights = out["flight"].astype(str)
    if "stab_incidence_deg" not in out:
        out["stab_incidence_deg"] = np.nan
    logged = out["stab_incidence_deg"].astype(float)
    by_flight = logged.groupby(flights)
    spread = by_flight.max() - by_flight.min()
    for flight in spread.index[spread.to_numpy() > 0.01]:
        values = logged[flights == flight]
        found.append(finding("pipeline.reduction.incidence_varies", Severity.CAUTION,
                             Subject(flight=str(flight), quantity="stab_incidence_deg"),
                             min_deg=float(values.min()), max_deg=float(values.max())))
    has_logged = logged.notna().groupby(flights).transform("any")
    labels = logged.map(lambda v: f"{v:+.2f} deg", na_action="ignore").astype(object)

    def sheet_value(attribute: str) -> pd.Series:
        values = {f: getattr(sheet, attribute) for f, sheet in loadings.items()}
        return flights.map(lambda f: values.get(f))

    sheet_deg = pd.to_numeric(sheet_value("stab_incidence_deg"), errors="coerce")
    sheet_label = sheet_value("stab_setting")
    sheet_label = sheet_label.where(
        sheet_label.notna(), sheet_deg.map(lambda v: f"{v:+.2f} deg", na_action="ignore"))
    use_sheet = ~has_logged & sheet_label.notna()
    out["stab_incidence_deg"] = logged.where(~use_sheet, sheet_deg)
    labels = labels.where(~use_sheet, sheet_label)
    out["stab_setting"] = labels.where(labels.notna(), DEFAULT_SETTING_LABEL).astype(str)

    flap = out["flap_deg"].astype(float) if "flap_deg" in out else pd.Series(
        np.nan, index=out.index)
    flap = flap.where(flap.notna(), pd.to_numeric(sheet_value("flap_deg"), errors="coerce"))
    out["flap_deg"] = flap
    unknown = flap.isna()
    if unknown.any():
        names = ", ".join(dict.fromkeys(flights[unknown]))
        found.append(finding("pipeline.reduction.flaps_assumed_clean", Severity.CAUTION,
                             Subject(quantity="flap_deg"), flights=names))
    rounded = flap.fillna(0.0).round(0)
    out["config"] = rounded.map(lambda v: "clean" if v == 0 else f"flaps {v:g} deg").astype(str)
