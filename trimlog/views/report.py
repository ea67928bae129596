"""The flight-test report: a multi-page PDF (or a self-contained HTML page).

:func:`write_report` lays out, in order: a title page (aircraft, date,
software version, the headline results, the estimate statement and every
caution, once), a summary (neutral points or the reason there is none, static
margins, stick-force verdicts, elevator authority, the shim in words with its
uncertainty, the next CG step), the findings most severe first with the
tail-geometry check, the loading and points tables (with any units assumed),
the figures of :mod:`trimlog.views.plots`, the time histories of the logged
flights, and an appendix of the routine notes from reading the files.

Every number in the text is read from the typed result
(:class:`~trimlog.pipeline.chain.Analysis`, the same object the terminal, the
dashboard and the ``--json`` export read), never from the JSON dict, so the
report and the JSON never disagree.  The PDF is drawn with
:class:`matplotlib.backends.backend_pdf.PdfPages` (no other PDF library); the
file is written to a temporary name in the target folder and renamed only
when complete, so a full disk never leaves half a report behind.
"""

from __future__ import annotations

import base64
import dataclasses
import datetime as dt
import html
import io
import math
import os
from collections.abc import Callable, Mapping, Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

import pandas as pd
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from trimlog import cautions, findings
from trimlog.errors import TrimlogError
from trimlog.files import check_output_target, write_atomically
from trimlog.findings import Severity
from trimlog.history.codec import clean
from trimlog.progress import SILENT, Progress
from trimlog.stability.critical import step_limit_words
from trimlog.views import maneuver_plots, plots, shim_drawing
from trimlog.views import shim_text as shim_words
from trimlog.views.advice import ASSUMED_NOTE, assumed_units, precision_sentence
from trimlog.views.formatting import incidence_words, interval, number, with_interval
from trimlog.views.pdf_layout import Break, Heading, Para, Plot, Table, render_pdf, save_pdf

if TYPE_CHECKING:
    from trimlog.pipeline.chain import Analysis, ConfigurationResult
    from trimlog.stability.results import NeutralPoint

DASH = "-"


# --------------------------------------------------------------------------- formatting


def _sentence(text: str) -> str:
    return text[:1].upper() + text[1:] + ("" if text.endswith(".") else ".")


def _f(value: float | None) -> float | None:
    """A number as the JSON has it: None for a missing or non-finite value."""
    return None if value is None or not math.isfinite(value) else float(value)


def _pair(pair: Sequence[float] | None) -> tuple[float, float] | None:
    if pair is None or _f(pair[0]) is None or _f(pair[1]) is None:
        return None
    return (float(pair[0]), float(pair[1]))


def neutral_point_text(np_: NeutralPoint | None) -> str:
    """One neutral point: estimate and interval, or the verdict.

    Parameters
    ----------
    np_ : NeutralPoint or None
        None when no stick force was logged (stick-free).

    Returns
    -------
    str
        ``"37.6 %MAC, 95 % interval [37.4, 37.8] %MAC"`` or
        ``"not identifiable: <reason>"``.
    """
    if np_ is None:
        return "not available: no stick force was logged"
    if not np_.identifiable:
        return f"not identifiable: {np_.reason or None}"
    return f"{np_.pct_mac:.1f} %MAC, 95 % interval {interval(np_.ci95_pct_mac)} %MAC"


def _inc(result: ConfigurationResult) -> dict[str, Any] | None:
    """The shim recommendation as its own ``to_json`` gives it (what the shim words read)."""
    return None if result.incidence is None else clean(result.incidence.to_json())


# --------------------------------------------------------------------------- content


def _title_blocks(a: Analysis, generated: str) -> list[Any]:
    fixed, free = _neutral_points(a.primary)[0], _neutral_points(a.primary)[2]
    n_points = len(a.points)
    used = int(a.points["included"].astype(bool).sum()) if n_points else 0
    statement = cautions.ESTIMATE_STATEMENT
    others = [c for c in a.cautions if c != statement]
    blocks: list[Any] = [
        Heading("Flight-test report: longitudinal static stability", 0),
        Para(f"Aircraft: {a.profile.name}"),
        Para(f"Aircraft profile: {a.profile.source}"),
        Para(f"Flights: {len(a.flights)}, stabilized points: {n_points} "
              f"({used} used in the fits, {n_points - used} excluded); headline "
              f"configuration '{a.primary.config}'"),
        Para(f"Generated {generated} by trimlog {a.software_version}"),
        Heading("Headline results", 2),
        Para(f"Stick-fixed neutral point: {neutral_point_text(fixed)}", "strong"),
        Para("Stick-free neutral point: " + neutral_point_text(free), "strong"),
        Para("Stabilizer shim: " + _shim_headline(a), "strong"),
        Para(statement if statement in a.cautions else a.cautions[0], "box"),
        Heading("Cautions", 2),
    ]
    blocks += [Para(c, "bullet") for c in others]
    if a.profile.defaults_used:
        blocks.append(Para("Profile values assumed (not given): "
                            + ", ".join(a.profile.defaults_used), "small"))
    blocks.append(Break())
    return blocks


def _neutral_points(result: ConfigurationResult
                    ) -> tuple[NeutralPoint, NeutralPoint, NeutralPoint | None]:
    s = result.stability
    return (s.stick_fixed.neutral_point, s.stick_fixed_two_stage.neutral_point,
            None if s.stick_free is None else s.stick_free.neutral_point)


def _shim_headline(a: Analysis) -> str:
    inc = _inc(a.primary)
    if inc is None:
        return "no recommendation: " + (a.primary.incidence_reason or "no trim model")
    if not inc["shim_recommended"]:
        return (f"none recommended (computed change {incidence_words(inc['change_deg'])}, 95 % "
                f"interval {interval(inc['change_ci95_deg'], '+.2f')} deg, leading edge up +)")
    return (f"{shim_words.headline(inc)} (attach points "
            f"{a.profile.stabilizer_attach_spacing_in:g} in apart), for an incidence change of "
            f"{inc['change_words'] or format(inc['change_deg'], '+.2f') + ' deg'}")


def _neutral_blocks(a: Analysis) -> list[Any]:
    fixed, two, free = _neutral_points(a.primary)
    rows = []
    named = (("stick-fixed, pooled (headline)", fixed), ("stick-fixed, two-stage (check)", two),
             ("stick-free, pooled", free))
    for name, np_ in named:
        if np_ is None:
            rows.append((name, "no stick force logged", DASH, DASH))
        elif np_.identifiable:
            rows.append((name, number(_f(np_.pct_mac), ".1f", "%MAC"),
                         interval(_pair(np_.ci95_pct_mac)) + " %MAC",
                         number(_f(np_.station_in), ".2f", "in")))
        else:
            rows.append((name, "not identifiable", DASH, DASH))
    blocks: list[Any] = [Heading("Neutral points", 2),
                         Table(("estimate", "neutral point", "95 % interval (Fieller)",
                                 "station aft of datum"), tuple(rows))]
    for (name, np_), kind in zip((("Stick-fixed", fixed), ("Two-stage", two),
                                  ("Stick-free", free)), ("box", "body", "body"), strict=True):
        if np_ is not None and not np_.identifiable:
            blocks.append(Para(f"{name} neutral point not identifiable: {np_.reason or None}",
                               kind))
    fit = a.primary.stability.stick_fixed
    power = _f(fit.elevator_power_per_rad) if fixed.identifiable else None
    if power is not None:
        ci = _pair(fit.elevator_power_ci95_per_rad)
        blocks.append(Para(f"Elevator power Cm_de: {with_interval(power, ci, '.2f')}"
                           " per rad (95 % interval)."))
    return blocks


def _margin_blocks(a: Analysis) -> list[Any]:
    minimum = a.profile.min_static_margin_pct_mac
    rows = []
    for m in a.primary.stability.margins:
        meets = {True: "yes", False: "NO", None: DASH}[m.meets_minimum]
        rows.append((m.label, number(_f(m.cg_pct_mac)),
                     with_interval(_f(m.stick_fixed_pct_mac), _pair(m.stick_fixed_ci95_pct_mac)),
                     with_interval(_f(m.stick_free_pct_mac), _pair(m.stick_free_ci95_pct_mac)),
                     _LIMITS.get(m.limited_by, DASH), meets))
    critical = a.primary.stability.critical
    return [
        Heading("Static margins (%MAC, 95 % interval)", 2),
        Table(("at", "CG %MAC", "stick-fixed", "stick-free", "limits",
                f"every lower bound >= {minimum:g} %MAC"), tuple(rows)),
        *([Para(critical.reason + ".")] if critical else []),
    ]


_LIMITS = {"stick_fixed_np": "stick-fixed", "stick_free_np": "stick-free"}


def _gradient_blocks(a: Analysis) -> list[Any]:
    gradients = a.primary.stability.gradients
    elevator = tuple(
        (g.flight, number(_f(g.cg_pct_mac)), str(g.n_points),
         with_interval(_f(g.delev_dcl_deg), _pair(g.delev_dcl_ci95_deg), ".2f"),
         g.elevator_verdict)
        for g in gradients)
    force = tuple(
        (g.flight, number(_f(g.cg_pct_mac)),
         with_interval(_f(g.dfsq_dcl_ft2), _pair(g.dfsq_dcl_ci95_ft2), ".2f"),
         number(_f(g.trim_eas_kt), ".1f"),
         with_interval(_f(g.dfs_dv_lbf_per_kt), _pair(g.dfs_dv_ci95_lbf_per_kt), ".3f"),
         g.stick_force_verdict)
        for g in gradients)
    return [
        Heading("Elevator trim gradient per flight (95 % interval)", 2),
        Table(("flight", "CG %MAC", "points", "dde/dCL deg", "elevator verdict"), elevator),
        Heading("Stick force per flight (95 % interval)", 2),
        Table(("flight", "CG %MAC", "d(Fs/q)/dCL ft^2", "trim EAS kt", "dFs/dV lbf/kt",
                "stick-force verdict"), force),
    ]


def _authority_blocks(a: Analysis) -> list[Any]:
    auth = a.primary.stability.authority
    blocks: list[Any] = [Heading("Elevator authority at the forward CG limit", 2)]
    if auth is None:
        return blocks + [Para("not assessed (no aircraft profile)")]
    rows = [(c.case, f"{c.clmax:g}", number(_f(c.cg_pct_mac)),
             with_interval(_f(c.elevator_deg), _pair(c.pi95_deg), "+.1f"),
             number(_f(c.up_stop_deg), "+.1f"),
             number(_f(c.margin_conservative_deg), ".1f"), c.verdict) for c in auth.cases]
    if rows:
        blocks.append(Table(("case", "CLmax", "CG %MAC", "elevator deg [95 % PI]",
                              "up stop deg", "up left deg (cons.)", "verdict"), tuple(rows)))
    forward = _f(auth.most_forward_cg_conservative_pct_mac)
    if forward is not None:
        blocks.append(Para(
            f"Most forward CG that keeps {auth.reserve_deg:g} deg of up elevator in reserve "
            f"at CLmax (clean): {forward:.1f} %MAC "
            f"({number(_f(auth.most_forward_cg_station_in), '.2f', 'in')}), from the "
            "conservative end of the prediction interval."))
    if auth.reason:
        blocks.append(Para(_sentence(auth.reason)))
    blocks += [Para(f"{c.case}: {n}", "small") for c in auth.cases for n in c.notes]
    return blocks


def _incidence_blocks(a: Analysis) -> list[Any]:
    inc = _inc(a.primary)
    blocks: list[Any] = [Heading("Stabilizer incidence and shim", 2)]
    if inc is None:
        return blocks + [Para("No recommendation: "
                               + _sentence(a.primary.incidence_reason or "no trim model"))]
    if inc["shim_recommended"]:
        head = f"Recommended shim: {_shim_headline(a)}."
    else:
        head = f"Shim: {_shim_headline(a)}."
    ba = a.primary.before_after
    return blocks + [
        Para(head, "box"),
        Para(inc["words"]),
        *([Para(shim_words.before_after_text(ba))] if ba is not None else []),
        Para(f"Elevator effectiveness tau: {inc['tau']:.2f} {interval(inc['tau_ci95'], '.2f')} "
              f"({inc['tau_source']}): {inc['tau_explanation']}. Interval method: "
              f"{inc['change_method']}.", "small"),
        Plot("Stabilizer shim: side view",
             lambda fig, rect: shim_drawing.shim_side_view(
                 inc, a.profile.stabilizer_attach_spacing_in, ax=fig.add_axes(rect)),
             "Schematic side view, nose to the left, angles exaggerated by the factor shown: "
             "the stabilizer before (dashed) and after the shim (solid), the shim (orange) "
             "under the fitting that gets it with the sheets to stack, the direction the "
             "leading edge tilts, and the elevator at cruise before and expected after. "
             "Check the drawing against the aircraft before cutting."),
    ]


def _next_cg_blocks(a: Analysis) -> list[Any]:
    s = a.primary.stability
    step = s.next_step
    out: list[Any] = []
    if step is not None:
        aft = _f(step.max_cg_pct_mac)
        head = ("No step aft is supported" if aft is None else
                f"Most aft CG for the next flight: {aft:.1f} %MAC, limited by the "
                + step_limit_words(step.limited_by))
        out = [Heading("Next CG step", 2), Para(f"{head}: {step.reason}.")]
    advice = precision_sentence(s.next_cg)
    if advice is None:  # no suggestion, or one that would add nothing
        return out
    return [*out, Heading("To tighten the estimate", 2), Para(advice)]


def _summary_blocks(a: Analysis) -> list[Any]:
    return [
        Heading(f"Summary: configuration '{a.primary.config}'", 1),
        *_neutral_blocks(a), *_margin_blocks(a), *_gradient_blocks(a),
        *_authority_blocks(a), *_incidence_blocks(a), *_next_cg_blocks(a),
        *_other_config_blocks(a),
        Break(),
    ]


def _other_config_blocks(a: Analysis) -> list[Any]:
    if not a.others:
        return []
    blocks: list[Any] = [Heading("Other configurations (analysed separately)", 2)]
    for other in a.others:
        blocks.append(Para(f"'{other.config}': stick-fixed neutral point "
                            + neutral_point_text(_neutral_points(other)[0])))
    return blocks


def _cell(row: Mapping[str, Any], column: str) -> Any:
    """A value of a points row as the JSON has it: None when missing or not a number."""
    value = row.get(column)
    if value is None or (isinstance(value, float) and not math.isfinite(value)):
        return None
    try:
        if value is pd.NA or value is pd.NaT:
            return None
    except TypeError:
        pass
    return value.item() if hasattr(value, "item") else value


def _point_rows(a: Analysis) -> list[dict[str, Any]]:
    """The points table's rows as plain values (the typed table, not the JSON)."""
    return [{k: _cell(r, k) for k in r} for r in a.points.to_dict(orient="records")]


def _loading_blocks(a: Analysis, points: Sequence[Mapping[str, Any]]) -> list[Any]:
    rows = []
    for f in a.flights:
        mine = [p for p in points if p["flight"] == f.flight]
        sheet = f.loading
        weights = [p["weight_lb"] for p in mine if p.get("weight_lb") is not None]
        cgs = [p["cg_pct_mac"] for p in mine if p.get("cg_pct_mac") is not None]
        rows.append((
            f.flight, Path(f.source).name, "log" if f.log.kind == "time_series" else "table",
            DASH if sheet is None or sheet.date is None else sheet.date.isoformat(),
            DASH if sheet is None else f"{sheet.takeoff_weight_lb:.0f}",
            DASH if sheet is None else (number(sheet.takeoff_cg_in, ".1f", "in")
                                        if sheet.takeoff_cg_in is not None
                                        else number(sheet.takeoff_cg_pct_mac, ".1f", "%MAC")),
            f"{min(weights):.0f}-{max(weights):.0f}" if weights else DASH,
            f"{min(cgs):.1f}-{max(cgs):.1f}" if cgs else DASH,
            str(mine[0].get("stab_setting")) if mine else DASH,
            f"{sum(bool(p['included']) for p in mine)}/{len(mine)}",
        ))
    return [
        Heading("Loading and flights", 1),
        Table(("flight", "file", "kind", "date", "T/O lb", "T/O CG", "points lb",
                "points CG %MAC", "stabilizer", "used/pts"), tuple(rows)),
        Para("T/O: takeoff loading from the loading sheet; points: range over the "
              "stabilized points (fuel burn included).", "small"),
        _assumed_units_para(a),
    ]


def _assumed_units_para(a: Analysis) -> Para:
    """Which flights had a column without a unit, and what was assumed."""
    assumed = [(f.flight, assumed_units(f.log.findings)) for f in a.flights]
    assumed = [(flight, units) for flight, units in assumed if units]
    if not assumed:
        return Para("Units: every column header carried its unit; none was assumed.", "small")
    return Para("Units assumed (" + ASSUMED_NOTE + "): "
                + "; ".join(f"{flight}: {units}" for flight, units in assumed) + ".", "box")


def _maneuver_blocks(a: Analysis) -> list[Any]:
    """Gradients per g per flight, the maneuver points, hm - hn and the 23.155 minimum."""
    m = a.maneuvering
    if m is None:
        return []
    rows = tuple(
        (g.flight, number(_f(g.cg_pct_mac)), str(g.n_points),
         f"{g.nz_range[0]:.2f}-{g.nz_range[1]:.2f}",
         with_interval(_f(g.elevator_per_g_deg), _pair(g.elevator_per_g_ci95_deg), ".2f"),
         with_interval(_f(g.stick_force_per_g_lbf), _pair(g.stick_force_per_g_ci95_lbf)),
         "lightens" if g.lightening else (g.reason or DASH))
        for g in m.gradients)
    req = m.requirement
    lines = [f"Stick-fixed maneuver point hm: {neutral_point_text(m.stick_fixed)}",
             f"Stick-free maneuver point hm': {neutral_point_text(m.stick_free)}"]
    if _f(m.hm_minus_hn_pct_mac) is not None:
        free_diff = _f(m.hm_free_minus_hn_free_pct_mac)
        lines.append(f"Measured hm - hn = {m.hm_minus_hn_pct_mac:+.1f} %MAC"
                     + (f", hm' - hn' = {free_diff:+.1f} %MAC" if free_diff is not None else "")
                     + "; in a steady pull-up theory gives hm - hn = -Cmq/(2 mu), in a level "
                       "turn (1 + 1/n^2) times that (Etkin and Reid, ch. 3; see the "
                       "contributor guide).")
    lines.append(
        f"Minimum stick force per g {req.minimum_per_g_lbf:.1f} lbf/g: 14 CFR 23.155(a) "
        f"(pre-2017 text) asks {req.force_to_limit_lbf:.0f} lbf to reach "
        f"{req.limit_load_factor_g:.2f} g with a {req.control} "
        f"({req.per_g_23_155_lbf:.1f} lbf/g); common practice, no source: "
        f"{req.per_g_common_practice_lbf:.1f} lbf/g.")
    if _f(m.aft_limit_force_per_g_lbf) is not None:
        aft = with_interval(m.aft_limit_force_per_g_lbf, _pair(m.aft_limit_force_per_g_ci95_lbf))
        lines.append(f"Stick force per g predicted at the aft CG limit: {aft} lbf/g.")
    if _f(m.aft_cg_pct_mac) is not None:
        lines.append(f"Most aft CG the maneuvering results allow: {m.aft_cg_pct_mac:.1f} %MAC "
                     f"(limited by the {m.limited_by or None}).")
    return [
        Heading("Maneuvering: elevator and stick force per g (95 % interval)", 2),
        Table(("flight", "CG %MAC", "points", "n g", "dde/dn deg/g", "dFs/dn lbf/g", ""), rows),
        *[Para(line) for line in lines],
    ]


def _left_out(point: Mapping[str, Any]) -> str:
    """``NO``, with the user's reason for leaving the point out when one was given."""
    reason = str(point.get("exclusion_reason") or "").strip()
    return f"NO ({reason})" if reason else "NO"


def _points_blocks(points: Sequence[Mapping[str, Any]]) -> list[Any]:
    rows = []
    for p in points:
        window = (DASH if p.get("t_start_s") is None
                  else f"{p['t_start_s']:.0f}-{p['t_end_s']:.0f}")
        rows.append((
            p["flight"], str(p["point"]), window, number(p.get("ias_kt")), number(p["eas_kt"]),
            number(p.get("pressure_alt_ft"), ".0f"), number(p["elevator_deg"], "+.2f"),
            number(p.get("stick_force_lbf"), "+.1f"), number(p.get("nz_g"), ".2f"),
            number(p.get("weight_lb"), ".0f"), number(p.get("cg_pct_mac")),
            number(p["cl"], ".3f"), number(p.get("fs_over_q_ft2"), "+.3f"),
            "yes" if p["included"] else _left_out(p), p.get("flags") or "",
        ))
    return [
        Heading("Stabilized points", 1),
        Para("Units: time s, IAS and EAS kt, pressure altitude ft, elevator deg (trailing edge "
              "down +), stick force lbf (pull +), load factor g, weight lb, CG %MAC, Fs/q ft^2. "
              "Excluded points (used = NO, with the reason when one was given) are kept in the "
              "table, not fitted.", "small"),
        Table(("flight", "pt", "window s", "IAS", "EAS", "alt ft", "elev", "Fs", "nz",
                "W lb", "CG", "CL", "Fs/q", "used", "flags"), tuple(rows)),
        Break(),
    ]


def _trend_lines(a: Analysis) -> dict[str, Any]:
    """The trend figure's limits, from the result (numbers from the core)."""
    s = a.primary.stability
    aft = next((m.cg_pct_mac for m in s.margins if m.label == "aft CG limit"), None)
    man = a.maneuvering
    fixed = None if man is None else man.stick_fixed
    step = None if s.next_step is None else dataclasses.asdict(s.next_step)
    return {"next_step": step, "aft_limit_pct_mac": _f(aft),
            "maneuver_point_pct_mac": _f(fixed.pct_mac) if fixed is not None
            and fixed.identifiable else None}


def _figure_blocks(a: Analysis, trend: Sequence[Mapping[str, Any]] | None) -> list[Any]:
    def one(fn: Callable[..., Axes]) -> Callable[[Figure, tuple], Axes]:
        return lambda fig, rect: fn(a, ax=fig.add_axes(rect))

    blocks: list[Any] = [
        Plot("Trim curves", one(plots.trim_curves),
              "Elevator to trim against lift coefficient for each flight. Filled markers are "
              "the points fitted, hollow grey ones are excluded. Lines: the pooled stick-fixed "
              "model at each flight's CG and stabilizer setting, with its 95 % confidence "
              "band. The lines flatten as the CG moves aft; a flat line means the "
              "stick-fixed neutral point."),
        Plot("Gradient against CG", one(plots.gradient_vs_cg),
              "Each flight's elevator gradient dde/dCL with its 95 % interval, against the "
              "flight's CG. The two-stage weighted line is extrapolated to zero gradient, "
              "where the CG is at the stick-fixed neutral point; the markers on the zero line "
              "are the pooled and the two-stage estimates with their Fieller 95 % intervals. "
              "Dotted lines: the CG limits of the profile. Anything aft of the CGs flown is "
              "an extrapolation."),
        Plot("Stick force per dynamic pressure", one(plots.stick_force_per_q),
              "Stick force divided by dynamic pressure against lift coefficient (pull "
              "positive). A rising line is stick-free stable; its slope shrinks to zero at "
              "the stick-free neutral point. Lines: the pooled stick-free model (an intercept "
              "per flight) at each flight's CG, with its 95 % band."),
        Plot("Stick force against speed", one(plots.stick_force_vs_speed),
              "Stick force against equivalent airspeed. The open marker on the zero line is "
              "each flight's fitted trim speed; the short line through it has the fitted "
              "gradient there. A stable aircraft needs a pull to fly slower than trim and a "
              "push to fly faster: the curves slope down through the trim speed."),
    ]
    if a.maneuvering is not None:
        blocks += [
            Plot("Stick force against load factor", one(maneuver_plots.stick_force_vs_n),
                 "Stick force against load factor at each flight's turn speed (steady turns "
                 "and the steps of a wind-up turn). The slope is the stick force per g; it "
                 "falls as the CG moves aft. A slope that flattens at high load factor is a "
                 "lightening stick force per g. Dashed: the minimum stick force per g."),
            Plot("Gradients per g against CG", one(maneuver_plots.maneuver_gradients_vs_cg),
                 "Elevator per g over the 1-g lift coefficient (left) and stick force per g "
                 "over the wing loading (right), against CG, extrapolated to zero: the "
                 "stick-fixed and stick-free maneuver points hm and hm' (filled), with the "
                 "neutral points hn and hn' (open), each with its 95 % interval. Pitch "
                 "damping puts the maneuver points aft of the neutral points."),
        ]
    if trend:
        blocks.append(Plot(
            "Neutral point after each flight",
            lambda fig, rect: plots.neutral_point_trend(trend, ax=fig.add_axes(rect),
                                                        **_trend_lines(a)),
            "The neutral-point estimates and their 95 % intervals after each successive "
            "flight, with the CG of the flight added, the aft CG limit, the policy step, the "
            "most aft CG proposed for the next flight and the maneuver point when known. The "
            "intervals should shrink as flights at different CGs are added; an estimate that "
            "jumps points at a flight to check."))
    return blocks


def _history_blocks(a: Analysis) -> list[Any]:
    blocks: list[Any] = []
    for f in a.flights:
        if f.samples is None:
            continue
        mine = a.points.loc[a.points["flight"] == f.flight]
        blocks.append(Plot(
            f"Time history: {f.flight}",
            lambda fig, rect, f=f, mine=mine: plots.log_overview(
                f, _stacked_axes(fig, rect), points=mine),
            "The logged channels with the stabilized-point windows found (numbered, shaded); "
            "hatched windows are excluded points. Check that each window sits on a steady "
            "stretch of airspeed, elevator and stick force, at 1 g.", tall=True))
    return blocks


def _stacked_axes(fig: Figure, rect: tuple[float, float, float, float]) -> list[Axes]:
    left, bottom, width, height = rect
    gap = 0.012
    h = (height - 3 * gap) / 4
    axes: list[Axes] = []
    for i in range(4):
        y = bottom + (3 - i) * (h + gap)
        axes.append(fig.add_axes((left, y, width, h), sharex=axes[0] if axes else None))
    for ax in axes[:-1]:
        ax.tick_params(labelbottom=False)
    return axes


_LABEL = {Severity.WARNING: "WARNING", Severity.CAUTION: "Caution", Severity.NOTE: "Note"}


def _warning_blocks(a: Analysis) -> list[Any]:
    """Findings that matter, most severe first and labelled (reading notes: the appendix)."""
    shown, _ = findings.split_for_display(a.findings, drop=a.cautions)
    show_config = bool(a.others)
    items = dict.fromkeys(f"{_LABEL[f.severity]}: {f.line(show_config=show_config)}"
                          for f in shown)
    blocks: list[Any] = [Heading("Warnings and other findings (most severe first)", 1)]
    blocks += [Para(w, "bullet") for w in items] or [Para("No warnings from the analysis.")]
    reading = findings.lines([f for f in a.findings if findings.is_reading_note(f)])
    if reading:
        blocks.append(Para(f"{len(reading)} routine notes from reading the files (lines "
                           "skipped, signs inverted as declared, missing values) are listed "
                           "in the appendix.", "small"))
    tail = a.tail
    if tail is not None:
        blocks.append(Heading("Tail-geometry check (paper estimate, not a flight result)", 2))
        blocks += [Para(t, "bullet") for t in tail.findings]
        if tail.not_computed:
            blocks.append(Para("Not computed: " + "; ".join(tail.not_computed), "small"))
        blocks.append(Para("Assumptions: " + "; ".join(tail.assumptions), "small"))
    return blocks


def _appendix_blocks(a: Analysis) -> list[Any]:
    """The routine reading notes, in full, last."""
    _, reading = findings.for_display(a.findings, show_config=bool(a.others))
    if not reading:
        return []
    return [Heading("Appendix: notes from reading the files", 1),
            Para("How each file was read: lines skipped before the header, signs inverted as "
                 "the profile declares, values not used. Routine; check them once per logger "
                 "set-up.", "small"),
            *[Para(w, "bullet") for w in reading]]


def report_blocks(a: Analysis, trend: Sequence[Mapping[str, Any]] | None, generated: str
                  ) -> list[Any]:
    """The report's content in reading order (shared by the PDF and the HTML writers).

    Everything is read from the typed result (``a`` and the trend records); the
    JSON export is not consulted, so the report cannot drift from the core by way
    of it.
    """
    points = _point_rows(a)
    return [*_title_blocks(a, generated), *_summary_blocks(a), *_warning_blocks(a),
            Break(), *_loading_blocks(a, points), *_points_blocks(points),
            *_maneuver_blocks(a), *_figure_blocks(a, trend), *_history_blocks(a),
            *_appendix_blocks(a)]


# --------------------------------------------------------------------------- HTML


def _render_html(blocks: Sequence[Any], title: str, footer: str) -> str:
    out = ["<!DOCTYPE html>", '<html lang="en"><head><meta charset="utf-8">',
           f"<title>{html.escape(title)}</title>",
           "<style>body{font-family:sans-serif;max-width:60em;margin:2em auto;padding:0 1em;"
           "line-height:1.4}table{border-collapse:collapse;font-size:90%;margin:.5em 0}"
           "th,td{border-bottom:1px solid #ccc;padding:.15em .6em;text-align:left;"
           "vertical-align:top}tr:nth-child(even){background:#f2f2f2}"
           ".box{border:2px solid #000;background:#f2f2f2;padding:.6em;font-weight:bold}"
           ".strong{font-weight:bold}.small{font-size:85%;color:#333}img{max-width:100%}</style></head><body>"]
    bullets: list[str] = []

    def flush() -> None:
        if bullets:
            out.append("<ul>" + "".join(f"<li>{b}</li>" for b in bullets) + "</ul>")
            bullets.clear()

    for block in blocks:
        if isinstance(block, Para) and block.kind == "bullet":
            bullets.append(html.escape(block.text))
            continue
        flush()
        if isinstance(block, Heading):
            level = block.level + 1
            out.append(f"<h{level}>{html.escape(block.text)}</h{level}>")
        elif isinstance(block, Para):
            cls = f' class="{block.kind}"' if block.kind in ("box", "small", "strong") else ""
            out.append(f"<p{cls}>{html.escape(block.text)}</p>")
        elif isinstance(block, Table):
            head = "".join(f"<th>{html.escape(h)}</th>" for h in block.headers)
            rows = "".join("<tr>" + "".join(f"<td>{html.escape(c)}</td>" for c in row)
                           + "</tr>" for row in block.rows)
            out.append(f"<table><thead><tr>{head}</tr></thead><tbody>{rows}</tbody></table>")
        elif isinstance(block, Plot):
            fig = Figure(figsize=(8.0, 9.0 if block.tall else 5.6))
            block.draw(fig, (0.11, 0.09, 0.85, 0.82))
            buf = io.BytesIO()
            fig.savefig(buf, format="png", dpi=110)
            data = base64.b64encode(buf.getvalue()).decode("ascii")
            out.append(f"<h2>{html.escape(block.title)}</h2>"
                       f'<img alt="{html.escape(block.title)}" '
                       f'src="data:image/png;base64,{data}">'
                       f"<p>{html.escape(block.caption)}</p>")
    flush()
    out.append(f'<hr><p class="small">{html.escape(footer)}</p></body></html>')
    return "\n".join(out)


# --------------------------------------------------------------------------- writing


def _announcing(blocks: list[Any], progress: Progress) -> list[Any]:
    """The blocks, each figure telling ``progress`` as it is drawn."""
    plots_ = [b for b in blocks if isinstance(b, Plot)]
    progress.expect(len(plots_) + 1)  # the figures, then the pages

    def announced(block: Plot) -> Plot:
        def draw(fig: Figure, rect: tuple[float, float, float, float]) -> Any:
            progress.step("figures", block.title)
            return block.draw(fig, rect)
        return dataclasses.replace(block, draw=draw)

    return [announced(b) if isinstance(b, Plot) else b for b in blocks]


def write_report(analysis: Analysis, path: str | os.PathLike[str], *,
                 trend: Sequence[Mapping[str, Any]] | None = None,
                 progress: Progress = SILENT) -> Path:
    """Write the flight-test report of an analysis.

    Parameters
    ----------
    analysis : Analysis
        From :func:`trimlog.pipeline.chain.analyze` (or the flight history).
    path : str or path-like
        Output file: ``.html`` or ``.htm`` writes one self-contained HTML page
        (figures embedded as PNG); any other name writes a PDF.
    trend : sequence of mappings, optional
        The neutral point after each successive flight: the records of
        :meth:`trimlog.history.service.Trend.records`, as
        :func:`trimlog.views.plots.neutral_point_trend` draws them; adds the
        trend figure.
    progress : trimlog.progress.Progress, optional
        Told as each figure is drawn and as the pages are written.

    Returns
    -------
    pathlib.Path
        The file written.

    Raises
    ------
    TrimlogError
        The file cannot be written (folder missing, permission, disk full);
        no partial file is left behind.
    """
    path = Path(path)
    if path.is_dir():
        raise TrimlogError(f"cannot write the report to {path}: it is a folder; give a file "
                           "name such as report.pdf")
    check_output_target(path, "report")  # before spending time on drawing
    now = dt.datetime.now(dt.UTC)
    generated = now.strftime("%Y-%m-%d %H:%M UTC")
    blocks = _announcing(report_blocks(analysis, trend, generated), progress)
    title = f"trimlog flight-test report: {analysis.profile.name}"
    footer = (f"trimlog {analysis.software_version} | {analysis.profile.name} | "
              f"generated {generated}")
    if path.suffix.lower() in (".html", ".htm"):
        data = _render_html(blocks, title, footer).encode("utf-8")
        progress.step("pages", path.name)
        write_atomically(path, data, what="report")
    else:
        pages = render_pdf(blocks, footer)
        progress.step("pages", f"{len(pages)} pages")
        write_atomically(path, lambda fh: save_pdf(pages, fh, title), what="report")
    return path
