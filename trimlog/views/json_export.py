"""The machine-readable result: :class:`~trimlog.pipeline.chain.Analysis` as JSON-ready data.

The top-level keys ``points``, ``gradients``, ``neutral_point``,
``elevator_power_per_rad``, ``static_margin``, ``warnings`` and ``incidence``
(and the keys inside them listed in the README) are a contract that users'
scripts rely on: they are never renamed.  Other keys may be added.

Every number is a finite float or ``null``; a ``null`` comes with a reason
next to it.  No NaN or infinity is ever written.

The whole shape is pinned by the JSON Schema shipped beside this module,
``trimlog/views/result.schema.json`` (draft 2020-12; every key listed there is
required and keeps its type, new keys may be added), and
``tests/views/test_json_schema.py`` validates real results against it.  Every
block is built from explicit keys here, never from ``dataclasses.asdict``.
``findings`` carries ``{code, severity, subject, message, values}`` beside the
``warnings`` strings.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from trimlog.history.codec import clean

if TYPE_CHECKING:
    from trimlog.pipeline.chain import Analysis, ConfigurationResult
    from trimlog.stability.results import NeutralPoint, PooledFit

POINT_KEYS = (
    "flight", "point", "cas_kt", "eas_kt", "cl", "elevator_deg", "stick_force_lbf",
    "weight_lb", "cg_pct_mac", "t_start_s", "t_end_s", "included",
)
POINT_EXTRAS = (
    "ias_kt", "tas_kt", "pressure_alt_ft", "oat_c", "nz_g", "q_psf", "fs_over_q_ft2",
    "cg_in", "duration_s", "vs_fpm", "stab_setting", "stab_incidence_deg", "config", "flags",
    "exclusion_reason",
)


# Every block is built from these explicit keys, never from ``dataclasses.asdict``,
# so renaming an internal field fails a test instead of changing a public key
# (the schema, trimlog/views/result.schema.json, pins the whole contract).
TAIL_KEYS = (
    "aircraft_class", "htail_volume", "htail_volume_typical", "vtail_volume",
    "vtail_volume_typical", "htail_aspect_ratio", "vtail_aspect_ratio", "wing_aspect_ratio",
    "wing_lift_slope_per_rad", "tail_lift_slope_per_rad", "downwash_gradient",
    "tail_efficiency", "predicted_neutral_point_pct_mac", "measured_neutral_point_pct_mac",
    "measured_minus_predicted_pct_mac", "findings", "not_computed", "assumptions",
)
AUTHORITY_KEYS = (
    "cases", "reserve_deg", "most_forward_cg_pct_mac", "most_forward_cg_conservative_pct_mac",
    "most_forward_cg_station_in", "reason", "warnings",
)
AUTHORITY_CASE_KEYS = (
    "case", "clmax", "cg_pct_mac", "setting", "elevator_deg", "ci95_deg", "pi95_deg",
    "up_stop_deg", "margin_deg", "margin_conservative_deg", "extrapolated", "verdict", "notes",
)
CURVATURE_KEYS = ("tested", "cl2_coef", "p_value", "significant", "cl_max_linear", "note")
NEXT_CG_KEYS = (
    "cg_pct_mac", "station_in", "criterion", "current_se_pct_mac", "predicted_se_pct_mac",
    "search_range_pct_mac", "reason",
)
NEXT_STEP_KEYS = (
    "max_cg_pct_mac", "max_cg_station_in", "min_static_margin_pct_mac", "step_max_pct_mac",
    "most_aft_flown_pct_mac", "limited_by", "reason", "margin_bound_pct_mac",
)
TAU_CALIBRATION_KEYS = (
    "tau", "ci95", "identifiable", "reason", "intercept_shift_deg", "shift_se_deg",
    "incidence_change_deg", "incidence_change_se_deg", "df", "shift_t_ratio",
)
INCIDENCE_KEYS = (  # the contract keys first, then the extras
    "cruise_cl", "cruise_cg_pct_mac", "elevator_at_cruise_deg", "elevator_at_cruise_ci95_deg",
    "tau", "tau_source", "change_deg", "change_ci95_deg", "shim_thickness_in",
    "shim_thickness_mm", "shim_location", "tau_ci95", "tau_explanation", "change_method",
    "shim_recommended", "shim_stock", "shim_stock_sheets", "shim_stock_thickness_in",
    "shim_stock_thickness_mm", "shim_stock_change_deg", "residual_elevator_deg",
    "current_incidence_deg", "new_incidence_deg", "words", "warnings", "cautions",
    "shim_thickness_ci95_in", "shim_decimals_in", "shim_decimals_mm", "shim_steps",
    "residual_elevator_ci95_deg", "elevator_at_cruise_words", "change_words",
    "shim_step_thickness_in",
)
BEFORE_AFTER_KEYS = (
    "setting_before", "setting_after", "incidence_before_deg", "incidence_after_deg",
    "incidence_change_deg", "cruise_cl", "cruise_cg_pct_mac", "elevator_before_deg",
    "elevator_before_ci95_deg", "elevator_after_deg", "elevator_after_ci95_deg",
    "elevator_change_deg", "elevator_change_ci95_deg", "implied_tau", "implied_tau_ci95",
    "df", "method", "reason",
)
REQUIREMENT_KEYS = (
    "control", "limit_load_factor_g", "force_to_limit_lbf", "per_g_23_155_lbf",
    "per_g_common_practice_lbf", "minimum_per_g_lbf", "assumed",
)


def _record(obj: Any, keys: tuple[str, ...]) -> dict[str, Any] | None:
    """``{key: obj.key}`` for the listed keys (tuples as lists); None for None."""
    if obj is None:
        return None
    out = {}
    for key in keys:
        value = getattr(obj, key)
        out[key] = list(value) if isinstance(value, tuple) else value
    return out


def analysis_to_dict(analysis: Analysis) -> dict[str, Any]:
    """The ``trimlog analyze --json`` object."""
    primary = analysis.primary
    payload = {
        "software": {"name": "trimlog", "version": analysis.software_version},
        "aircraft": {
            "name": analysis.profile.name,
            "profile": analysis.profile.source,
            "cg_forward_pct_mac": analysis.profile.cg_forward_pct_mac,
            "cg_aft_pct_mac": analysis.profile.cg_aft_pct_mac,
            "assumed": list(analysis.profile.defaults_used),
        },
        "flights": [
            {
                "flight": f.flight,
                "source": f.source,
                "sha256": f.sha256,
                "date": f.when.iso(),
                "date_from": f.when.origin,
                "kind": f.log.kind,
                "kind_reason": f.log.kind_reason,
                "n_points": int(len(f.points)),
                "columns": [
                    {"header": c.header, "canonical": c.canonical, "unit": c.unit,
                     "conversion": c.conversion, "inverted": c.inverted}
                    for c in f.log.columns
                ],
            }
            for f in analysis.flights
        ],
        "configuration": primary.config,
        "points": points_records(analysis.points),
        **configuration_dict(primary, analysis),
        "other_configurations": [
            {"configuration": other.config, **configuration_dict(other, analysis)}
            for other in analysis.others
        ],
        "tail_geometry": _record(analysis.tail, TAIL_KEYS),
        "warnings": list(analysis.warnings),
        "findings": [f.to_dict() for f in analysis.findings],
        "cautions": list(analysis.cautions),
        "maneuvering": maneuvering_dict(analysis.maneuvering),
        "programme": None if analysis.programme is None else analysis.programme.to_dict(),
    }
    return clean(payload)


_MANEUVER_POINT_KEYS = ("flight", "point", "nz_g", "eas_kt", "elevator_deg", "stick_force_lbf",
                        "cg_pct_mac", "t_start_s", "t_end_s", "included", "flags", "source")


def maneuvering_dict(result: Any) -> dict[str, Any] | None:
    """The ``maneuvering`` block (issue 14 contract keys first); None without maneuvering points."""
    if result is None:
        return None
    frame = result.points[[c for c in _MANEUVER_POINT_KEYS if c in result.points.columns]]
    points = _records(frame)

    def point(p: NeutralPoint | None) -> dict[str, Any] | None:
        if p is None:
            return None
        out = neutral_point_dict(p)
        out["method"] = ("two-stage: gradient per g (normalised) against CG, OLS over flights, "
                         "Fieller 95 % interval")
        return out

    req = result.requirement
    return {
        "points": points,
        "per_flight": [
            {"flight": g.flight, "cg_pct_mac": g.cg_pct_mac,
             "elevator_per_g_deg": g.elevator_per_g_deg,
             "elevator_per_g_ci95_deg": g.elevator_per_g_ci95_deg,
             "stick_force_per_g_lbf": g.stick_force_per_g_lbf,
             "stick_force_per_g_ci95_lbf": g.stick_force_per_g_ci95_lbf,
             "n_points": g.n_points, "nz_range": g.nz_range,
             "eas_kt": g.eas_kt, "weight_lb": g.weight_lb,
             "force_top_ratio": g.force_top_ratio, "lightening": g.lightening,
             "reason": g.reason or None}
            for g in result.gradients
        ],
        "maneuver_point": {"stick_fixed": point(result.stick_fixed),
                           "stick_free": point(result.stick_free)},
        "hm_minus_hn_pct_mac": result.hm_minus_hn_pct_mac,
        "hm_free_minus_hn_free_pct_mac": result.hm_free_minus_hn_free_pct_mac,
        "requirement": _record(req, REQUIREMENT_KEYS),
        "aft_limit_stick_force_per_g_lbf": result.aft_limit_force_per_g_lbf,
        "aft_limit_stick_force_per_g_ci95_lbf": result.aft_limit_force_per_g_ci95_lbf,
        "aft_cg_pct_mac": result.aft_cg_pct_mac,
        "limited_by": result.limited_by or None,
        "warnings": list(result.warnings),
    }


def points_records(points: pd.DataFrame) -> list[dict[str, Any]]:
    """One record per point, contract keys first."""
    columns = [c for c in (*POINT_KEYS, *POINT_EXTRAS) if c in points.columns]
    missing = [key for key in POINT_KEYS if key not in points]
    return _records(points[columns], missing)


def _records(frame: pd.DataFrame, missing: list[str] | None = None) -> list[dict[str, Any]]:
    """One JSON-safe record per row: ``included`` as bool, missing and non-finite values None.

    Column by column (a float, integer or bool column straight from its numpy
    values), the same as ``clean`` of each record of ``frame.astype(object)
    .where(frame.notna(), None).to_dict(orient="records")``; the ``missing``
    keys come last, None.
    """
    names = [str(c) for c in frame.columns]
    values = []
    for name in frame.columns:
        column = frame[name].astype(bool) if name == "included" else frame[name]
        kind = column.dtype.kind if isinstance(column.dtype, np.dtype) else ""
        if kind == "f":
            values.append([v if math.isfinite(v) else None for v in column.to_numpy().tolist()])
        elif kind in "biu" and kind:
            values.append(column.to_numpy().tolist())
        else:
            values.append([clean(v) for v in
                           column.astype(object).where(column.notna(), None).tolist()])
    for name in missing or ():
        names.append(name)
        values.append([None] * len(frame))
    return [dict(zip(names, row, strict=True)) for row in zip(*values, strict=True)]


# long: one literal of the configuration block of the JSON contract, key by key
def configuration_dict(result: ConfigurationResult, analysis: Analysis) -> dict[str, Any]:
    """The stability, margin, authority and incidence blocks of one configuration."""
    s = result.stability
    fixed_np = s.stick_fixed.neutral_point
    return {
        "gradients": [
            {
                "flight": g.flight,
                "cg_pct_mac": g.cg_pct_mac,
                "delev_dcl_deg": g.delev_dcl_deg,
                "delev_dcl_ci95_deg": g.delev_dcl_ci95_deg,
                "n_points": g.n_points,
                "elevator_verdict": g.elevator_verdict,
                "dfsq_dcl_ft2": g.dfsq_dcl_ft2,
                "dfsq_dcl_ci95_ft2": g.dfsq_dcl_ci95_ft2,
                "trim_eas_kt": g.trim_eas_kt,
                "dfs_dv_lbf_per_kt": g.dfs_dv_lbf_per_kt,
                "dfs_dv_ci95_lbf_per_kt": g.dfs_dv_ci95_lbf_per_kt,
                "stick_force_verdict": g.stick_force_verdict,
            }
            for g in s.gradients
        ],
        "neutral_point": {
            "stick_fixed": neutral_point_dict(fixed_np, s.stick_fixed),
            "stick_fixed_two_stage": neutral_point_dict(s.stick_fixed_two_stage.neutral_point),
            "stick_free": (
                None if s.stick_free is None
                else neutral_point_dict(s.stick_free.neutral_point, s.stick_free)
            ),
            "critical": (
                None if s.critical is None
                else {"kind": s.critical.kind, "pct_mac": s.critical.pct_mac,
                      "ci95_pct_mac": s.critical.ci95_pct_mac,
                      "station_in": s.critical.station_in, "reason": s.critical.reason}
            ),
        },
        "elevator_power_per_rad": (
            s.stick_fixed.elevator_power_per_rad if fixed_np.identifiable else None
        ),
        "elevator_power_ci95_per_rad": (
            s.stick_fixed.elevator_power_ci95_per_rad if fixed_np.identifiable else None
        ),
        "static_margin": [
            {
                "flight": m.flight,
                "label": m.label,
                "cg_pct_mac": m.cg_pct_mac,
                "stick_fixed_pct_mac": m.stick_fixed_pct_mac,
                "stick_fixed_ci95_pct_mac": m.stick_fixed_ci95_pct_mac,
                "stick_free_pct_mac": m.stick_free_pct_mac,
                "stick_free_ci95_pct_mac": m.stick_free_ci95_pct_mac,
                "meets_minimum": m.meets_minimum,
                "stick_fixed_lower95_pct_mac": m.stick_fixed_lower95_pct_mac,
                "stick_free_lower95_pct_mac": m.stick_free_lower95_pct_mac,
                "limited_by": m.limited_by,
            }
            for m in s.margins
        ],
        "min_static_margin_pct_mac": analysis.profile.min_static_margin_pct_mac,
        "elevator_authority": (
            None if s.authority is None else {
                **_record(s.authority, AUTHORITY_KEYS),
                "cases": [_record(c, AUTHORITY_CASE_KEYS) for c in s.authority.cases],
            }
        ),
        "fit_checks": {
            "outliers": [
                {"model": o.model, "flight": o.flight, "point": o.point,
                 "studentized_residual": o.studentized_residual,
                 "bonferroni_p": o.bonferroni_p}
                for fit in (s.stick_fixed, s.stick_free) if fit is not None
                for o in fit.outliers
            ],
            "robust_stick_fixed_pct_mac": (
                None if s.stick_fixed.robust is None else s.stick_fixed.robust.pct_mac
            ),
            "curvature": _record(s.stick_fixed.curvature, CURVATURE_KEYS),
            "stop_flags": _stop_flags(analysis, result.config),
            "n_excluded": s.n_excluded,
        },
        "next_cg_for_precision": _record(s.next_cg, NEXT_CG_KEYS),
        "next_step": _record(s.next_step, NEXT_STEP_KEYS),
        "incidence": _record(result.incidence, INCIDENCE_KEYS),
        "incidence_reason": result.incidence_reason or None,
        "tau_calibration": _record(result.tau_calibration, TAU_CALIBRATION_KEYS),
        "before_after": _record(result.before_after, BEFORE_AFTER_KEYS),
    }


def _stop_flags(analysis: Analysis, config: str) -> list[dict[str, Any]]:
    """Points of ``config`` whose elevator sat at a stop (from :attr:`Analysis.at_stop`)."""
    return [{"flight": s.flight, "point": s.point, "elevator_deg": s.elevator_deg,
             "stop": s.stop, "included": s.included}
            for s in analysis.at_stop if s.config == config]


def neutral_point_dict(np_: NeutralPoint, fit: PooledFit | None = None) -> dict[str, Any]:
    """A neutral point: contract keys, then the interval details and the reason."""
    identifiable = bool(np_.identifiable)
    out = {
        "pct_mac": np_.pct_mac if identifiable else None,
        "ci95_pct_mac": np_.ci95_pct_mac if identifiable else None,
        "station_in": np_.station_in if identifiable else None,
        "identifiable": identifiable,
        "method": _method_text(np_),
        "delta_ci95_pct_mac": np_.delta_ci95_pct_mac if identifiable else None,
        "se_pct_mac": np_.se_pct_mac if identifiable else None,
        "ci95_station_in": np_.ci95_station_in if identifiable else None,
        "reason": np_.reason or None,
        "cg_spread_pct_mac": np_.cg_spread_pct_mac,
        "n_points": np_.n_points,
        "n_flights": np_.n_flights,
    }
    if fit is not None:
        out["intercept_by"] = fit.intercept_by
        out["groups"] = list(fit.groups)
    return out


def _method_text(np_: NeutralPoint) -> str:
    if np_.method == "two_stage":
        return "two-stage: gradients against CG (WLS), Fieller 95 % interval"
    if np_.method == "flight_level":
        by = "stabilizer setting" if np_.kind == "stick_fixed" else "flight, weighted by q^2"
        return (f"pooled: intercept per {by}, random slope per flight for errors shared by a "
                "flight (CG, force zero), Fieller 95 % interval")
    by = "stabilizer setting" if np_.kind == "stick_fixed" else "flight"
    return f"pooled: intercept per {by}, Fieller 95 % interval"
