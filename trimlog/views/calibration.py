"""Views of an airspeed calibration: the JSON contract of ``trimlog calibrate`` and the terminal.

JSON contract (keys only grow; never renamed or dropped)::

    speeds:   [ {ias_kt, cas_kt, cas_ci95_kt, delta_v_kt, tas_kt, wind_kt, wind_from_deg,
                 n_legs, pressure_alt_ft, ...} ]
    table:    { ias_kt: [...], cas_kt: [...] }
    warnings: [ "...", ... ]

beside them ``findings`` (code, severity, message, ias_kt), ``legs``,
``curve``, ``sources``, ``determinable``, ``cautions`` and ``trimlog_version``.
Intervals are ``[low, high]`` or null where the data cannot give one (three legs).
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from trimlog import __version__, cautions
from trimlog.findings import by_severity
from trimlog.history.codec import clean
from trimlog.views.formatting import interval
from trimlog.views.terminal import _bullets, table

if TYPE_CHECKING:
    from trimlog.pipeline.calibration import CalibrationResult, SpeedCalibration

_LEG_KEYS = ("source", "flight", "leg", "t_start_s", "t_end_s", "duration_s",
             "source_line_start", "source_line_end", "ias_kt", "pressure_alt_ft", "oat_c",
             "gps_groundspeed_kt", "gps_track_deg", "flags", "included", "speed")


def speed_dict(s: SpeedCalibration) -> dict[str, Any]:
    """One speed of the calibration: the contract keys first, then the rest."""
    f = s.fit
    return {
        "ias_kt": s.ias_kt, "cas_kt": s.cas_kt,
        "cas_ci95_kt": None if s.cas_ci95_kt is None else list(s.cas_ci95_kt),
        "delta_v_kt": s.delta_v_kt, "tas_kt": f.tas_kt, "wind_kt": f.wind_kt,
        "wind_from_deg": f.wind_from_deg, "n_legs": f.n_legs,
        "pressure_alt_ft": s.pressure_alt_ft,
        "delta_v_ci95_kt": None if s.delta_v_ci95_kt is None else list(s.delta_v_ci95_kt),
        "tas_ci95_kt": None if f.tas_ci95_kt is None else list(f.tas_ci95_kt),
        "oat_c": s.oat_c, "exact": f.exact, "residual_sd_kt": f.residual_sd_kt,
        "residuals_kt": list(f.residuals_kt), "headings_deg": list(f.headings_deg),
        "heading_arc_deg": f.heading_arc_deg, "wind_change_p": f.wind_change_p,
        "wind_changed": f.wind_changed, "altitude_correction_ft": s.altitude_correction_ft,
        "legs": [int(i) for i in s.legs],
    }


def calibration_to_dict(result: CalibrationResult) -> dict[str, Any]:
    """The JSON document of ``trimlog calibrate --json`` (NaN becomes null)."""
    legs = result.legs
    records = [
        {k: row[k] for k in _LEG_KEYS if k in row}
        for row in legs.to_dict(orient="records")
    ] if len(legs) else []
    payload = {
        "trimlog_version": __version__,
        "determinable": result.determinable,
        "speeds": [speed_dict(s) for s in result.speeds],
        "table": {"ias_kt": list(result.table_ias_kt), "cas_kt": list(result.table_cas_kt)},
        "curve": {
            "delta_v_coefficients_kt": list(result.curve_coefficients),
            "form": "delta_v_kt = c0 + c1*ias_kt + c2*ias_kt^2 + c3*ias_kt^3 (terms as given)",
            "ias_range_kt": ([min(result.table_ias_kt), max(result.table_ias_kt)]
                             if result.table_ias_kt else None),
        },
        "warnings": list(result.warnings),
        "findings": [{"code": f.code, "severity": f.severity.value, "message": f.line(),
                      "ias_kt": f.values.get("ias_kt"), "values": dict(f.values)}
                     for f in result.findings],
        "legs": records,
        "sources": list(result.sources),
        "cautions": [cautions.ESTIMATE_STATEMENT, *cautions.AIRSPEED_CALIBRATION],
    }
    return clean(payload)


def render_calibration(result: CalibrationResult) -> str:
    """The terminal view: per speed TAS, wind, CAS and ΔV with intervals; the table; warnings."""
    lines = ["Airspeed calibration from GPS legs", ""]
    n_used = sum(s.fit.n_legs for s in result.speeds)
    lines.append(f"{len(result.legs)} legs found, {n_used} used at {len(result.speeds)} speeds "
                 f"({', '.join(result.sources)})")
    if result.speeds:
        rows = [
            [f"{s.ias_kt:.1f}", f"{s.pressure_alt_ft:.0f}", str(s.fit.n_legs),
             f"{s.fit.tas_kt:.1f}",
             f"{s.fit.wind_kt:.1f}/{s.fit.wind_from_deg:03.0f}", f"{s.cas_kt:.1f}",
             interval(s.cas_ci95_kt), f"{s.delta_v_kt:+.1f}", f"{s.altitude_correction_ft:+.0f}"]
            for s in result.speeds
        ]
        lines += ["", table(["KIAS", "Hp ft", "legs", "KTAS", "wind kt/from", "KCAS",
                             "KCAS 95 %", "dV kt", "dH ft"], rows)]
    if result.table_ias_kt:
        lines += ["", "Position-error table (smooth curve at the speeds flown):",
                  "  ias = [" + ", ".join(f"{v:g}" for v in result.table_ias_kt) + "]",
                  "  cas = [" + ", ".join(f"{v:g}" for v in result.table_cas_kt) + "]"]
    else:
        lines += ["", "No position-error table: cannot say yet (see the warnings)."]
    if result.findings:
        lines += ["", "Warnings and notes:",
                  _bullets([f.line() for f in by_severity(result.findings)])]
    lines += ["", "Cautions:", _bullets([cautions.ESTIMATE_STATEMENT,
                                         *cautions.AIRSPEED_CALIBRATION])]
    return "\n".join(lines)
