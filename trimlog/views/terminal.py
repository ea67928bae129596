"""Plain-text views of results for the terminal.

The texts are built from the same typed results (and JSON dicts) as every
other view; nothing is computed here but formatting.  Colour (ANSI) only
when asked for, i.e. when the caller has checked that the terminal takes it.
"""

from __future__ import annotations

import dataclasses
import textwrap
from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

from trimlog import cautions, findings
from trimlog.findings import Severity
from trimlog.stability.critical import step_limit_words
from trimlog.views.advice import ASSUMED_NOTE, assumed_units, precision_sentence
from trimlog.views.formatting import elevator_words, interval, number

if TYPE_CHECKING:
    from trimlog.history.service import Trend
    from trimlog.pipeline.chain import Analysis, ConfigurationResult
    from trimlog.stability.results import NeutralPoint

WIDTH = 88


class _Style:
    def __init__(self, color: bool) -> None:
        self.color = color

    def _wrap(self, code: str, text: str) -> str:
        return f"\033[{code}m{text}\033[0m" if self.color else text

    def head(self, text: str) -> str:
        return self._wrap("1", text)

    def warn(self, text: str) -> str:
        return self._wrap("33", text)

    def bad(self, text: str) -> str:
        return self._wrap("31", text)


def table(headers: Sequence[str], rows: Sequence[Sequence[str]]) -> str:
    """Align columns: text left, everything else right."""
    widths = [len(h) for h in headers]
    for row in rows:
        widths = [max(w, len(c)) for w, c in zip(widths, row, strict=True)]
    numeric = [
        all(_looks_numeric(r[i]) for r in rows) if rows else False for i in range(len(headers))
    ]

    def line(cells: Sequence[str]) -> str:
        return "  ".join(
            c.rjust(w) if num else c.ljust(w)
            for c, w, num in zip(cells, widths, numeric, strict=True)
        ).rstrip()

    return "\n".join([line(headers), line(["-" * w for w in widths]), *map(line, rows)])


def _looks_numeric(text: str) -> bool:
    return text.replace(".", "", 1).replace("-", "", 1).replace("+", "", 1).isdigit() or (
        text == "-"
    )


def _bullets(items: Sequence[str], style_fn=None) -> str:
    out = []
    for item in items:
        wrapped = textwrap.fill(item, WIDTH, initial_indent="  - ", subsequent_indent="    ")
        out.append(style_fn(wrapped) if style_fn else wrapped)
    return "\n".join(out)


def neutral_point_line(name: str, np_: NeutralPoint | None) -> str:
    """One line: the estimate with its interval, or why there is none."""
    if np_ is None:
        return f"{name}: not available (no stick force logged)"
    if not np_.identifiable:
        return f"{name}: NOT IDENTIFIABLE - {np_.reason}"
    station = f", station {np_.station_in:.2f} in" if np_.station_in is not None else ""
    return (
        f"{name}: {np_.pct_mac:.1f} %MAC, 95 % interval "
        f"{interval(np_.ci95_pct_mac)} %MAC{station}"
    )


def render(analysis: Analysis, *, color: bool = False) -> str:
    """The whole terminal summary of an analysis."""
    s = _Style(color)
    parts = [
        s.head(f"trimlog {analysis.software_version} - {analysis.profile.name}"),
        _flights_block(analysis),
        _configuration_block(analysis.primary, analysis, s),
    ]
    for other in analysis.others:
        parts.append(s.head(f"== configuration '{other.config}' (analysed separately) =="))
        parts.append(_configuration_block(other, analysis, s))
    if analysis.maneuvering is not None:
        parts.append(_maneuvering_block(analysis.maneuvering, s))
    parts.append(_findings_block(analysis, s))
    parts.append(s.head("Cautions") + "\n" + _bullets(analysis.cautions))
    reading = findings.reading_summary(analysis.findings)
    if reading:
        parts.append(s.head("Reading notes (how the files were read; in full in --json and "
                            "the report)") + "\n" + _bullets(reading))
    return "\n\n".join(parts) + "\n"


_LABEL = {Severity.WARNING: "WARNING", Severity.CAUTION: "caution", Severity.NOTE: "note"}


def _findings_block(analysis: Analysis, s: _Style) -> str:
    """Findings that matter, most severe first, each labelled; reading notes come later."""
    shown, _ = findings.split_for_display(analysis.findings, drop=analysis.cautions)
    show_config = bool(analysis.others)
    head = s.head("Findings (warnings first, then cautions and notes)")
    if not shown:
        return head + "\n  none from the analysis"
    items, styles = [], []
    for f in shown:
        line = f"{_LABEL[f.severity]}: {f.line(show_config=show_config)}"
        if line not in items:
            items.append(line)
            styles.append(s.bad if f.severity is Severity.WARNING else s.warn)
    out = [textwrap.fill(item, WIDTH, initial_indent="  - ", subsequent_indent="    ")
           for item in items]
    return head + "\n" + "\n".join(style(t) for style, t in zip(styles, out, strict=True))


def _maneuvering_block(m: Any, s: _Style) -> str:
    """Gradients per g per flight, the maneuver points, hm - hn and the 23.155 minimum."""
    used = int(m.points["included"].astype(bool).sum())
    lines = [s.head(f"Maneuvering ({len(m.points)} maneuvering points, {used} used)")]
    rows = [[g.flight, number(g.cg_pct_mac), str(g.n_points),
             f"{g.nz_range[0]:.2f}-{g.nz_range[1]:.2f}", number(g.elevator_per_g_deg, ".2f"),
             interval(g.elevator_per_g_ci95_deg, ".2f"), number(g.stick_force_per_g_lbf),
             interval(g.stick_force_per_g_ci95_lbf), "lightens" if g.lightening else ""]
            for g in m.gradients]
    lines.append(table(["flight", "CG %MAC", "pts", "n (g)", "de/dn deg/g", "95 %",
                        "Fs/n lbf/g", "95 %", ""], rows))
    lines.append("  " + neutral_point_line("stick-fixed maneuver point hm", m.stick_fixed))
    lines.append("  " + neutral_point_line("stick-free maneuver point hm'", m.stick_free))
    if m.hm_minus_hn_pct_mac is not None:
        lines.append(f"  hm - hn = {m.hm_minus_hn_pct_mac:+.1f} %MAC (pitch damping)")
    if m.hm_free_minus_hn_free_pct_mac is not None:
        lines.append(f"  hm' - hn' = {m.hm_free_minus_hn_free_pct_mac:+.1f} %MAC")
    r = m.requirement
    lines.append(
        f"  minimum stick force per g {r.minimum_per_g_lbf:.1f} lbf/g: 14 CFR 23.155(a) "
        f"{r.force_to_limit_lbf:.0f} lbf to {r.limit_load_factor_g:.2f} g with a {r.control} "
        f"({r.per_g_23_155_lbf:.1f} lbf/g); common practice {r.per_g_common_practice_lbf:.1f} "
        "lbf/g (no source)")
    if m.aft_limit_force_per_g_lbf is not None:
        lines.append(f"  predicted at the aft CG limit: {m.aft_limit_force_per_g_lbf:.1f} lbf/g, "
                     f"95 % {interval(m.aft_limit_force_per_g_ci95_lbf)}")
    if m.aft_cg_pct_mac is not None:
        lines.append(f"  most aft CG the maneuvering results allow: {m.aft_cg_pct_mac:.1f} %MAC "
                     f"(limited by the {m.limited_by})")
    return "\n".join(lines)


def _flights_block(analysis: Analysis) -> str:
    rows = []
    table_points = analysis.points
    for f in analysis.flights:
        mine = table_points.loc[table_points["flight"] == f.flight]
        cg = mine["cg_pct_mac"].mean() if len(mine) else None
        rows.append([
            f.flight,
            "log" if f.log.kind == "time_series" else "table",
            str(len(mine)),
            str(int(mine["included"].sum())) if len(mine) else "0",
            number(cg),
            str(mine["stab_setting"].iloc[0]) if len(mine) else "-",
            assumed_units(f.log.findings) or "-",
        ])
    text = table(["flight", "kind", "points", "used", "CG %MAC", "stabilizer setting",
                  "units assumed"], rows)
    if any(r[-1] != "-" for r in rows):
        text += "\n" + textwrap.fill("units assumed: " + ASSUMED_NOTE, WIDTH,
                                     initial_indent="  ", subsequent_indent="  ")
    return text


def _configuration_block(result: ConfigurationResult, analysis: Analysis, s: _Style) -> str:
    st = result.stability
    lines = [s.head(f"Neutral points (configuration '{result.config}')")]
    lines.append("  " + neutral_point_line("stick-fixed (pooled)", st.stick_fixed.neutral_point))
    lines.append("  " + neutral_point_line(
        "stick-fixed (two-stage)", st.stick_fixed_two_stage.neutral_point))
    lines.append("  " + neutral_point_line(
        "stick-free  (pooled)", None if st.stick_free is None else st.stick_free.neutral_point))
    if st.stick_fixed.neutral_point.identifiable and st.stick_fixed.elevator_power_per_rad:
        lines.append(
            f"  elevator power Cm_de: {st.stick_fixed.elevator_power_per_rad:.2f} per rad "
            f"{interval(st.stick_fixed.elevator_power_ci95_per_rad, '.2f')}"
        )
    blocks = ["\n".join(lines)]

    rows = [
        [
            g.flight,
            number(g.cg_pct_mac),
            str(g.n_points),
            number(g.delev_dcl_deg, ".2f"),
            interval(g.delev_dcl_ci95_deg, ".2f"),
            number(g.dfs_dv_lbf_per_kt, ".2f"),
            g.stick_force_verdict,
        ]
        for g in st.gradients
    ]
    blocks.append(s.head("Trim gradients per flight") + "\n" + table(
        ["flight", "CG %MAC", "n", "dde/dCL deg", "95 % interval", "dFs/dV lbf/kt",
         "stick force with speed"], rows))

    min_sm = analysis.profile.min_static_margin_pct_mac
    margin_rows = []
    limiting = {"stick_fixed_np": "stick-fixed", "stick_free_np": "stick-free", None: "-"}
    for m in st.margins:
        flag = "" if m.meets_minimum is not False else s.bad(f"below {min_sm:g} %MAC?")
        margin_rows.append([
            m.label, number(m.cg_pct_mac), number(m.stick_fixed_pct_mac),
            interval(m.stick_fixed_ci95_pct_mac), number(m.stick_free_pct_mac),
            interval(m.stick_free_ci95_pct_mac), limiting.get(m.limited_by, "-"), flag,
        ])
    margin_block = s.head(f"Static margins (%MAC; policy minimum {min_sm:g} %MAC)") + "\n" + table(
        ["at", "CG", "stick-fixed", "95 %", "stick-free", "95 %", "limits", ""], margin_rows)
    if st.critical is not None:
        margin_block += "\n" + textwrap.fill(st.critical.reason, WIDTH, initial_indent="  ",
                                             subsequent_indent="  ")
    blocks.append(margin_block)

    if st.authority is not None:
        auth = [s.head("Elevator authority at the forward CG limit")]
        for case in st.authority.cases:
            auth.append(textwrap.fill(
                f"{case.case}: CLmax {case.clmax:g} needs "
                f"{elevator_words(case.elevator_deg, '.1f')} elevator (95 % "
                f"{interval(case.pi95_deg)} deg, trailing edge down +) against the up stop at "
                f"{elevator_words(case.up_stop_deg, '.1f')}: {case.verdict}", WIDTH,
                initial_indent="  ", subsequent_indent="    "))
        if st.authority.most_forward_cg_conservative_pct_mac is not None:
            auth.append(
                f"  most forward CG keeping {st.authority.reserve_deg:g} deg up elevator in "
                f"reserve: {st.authority.most_forward_cg_conservative_pct_mac:.1f} %MAC"
            )
        if st.authority.reason:
            auth.append("  " + st.authority.reason)
        blocks.append("\n".join(auth))

    blocks.append(_incidence_block(result, s))
    if st.next_step is not None:
        blocks.append(_next_step_block(dataclasses.asdict(st.next_step), s))
    advice = precision_sentence(st.next_cg)
    if advice is not None:
        blocks.append(s.head("To tighten the estimate") + "\n" + textwrap.fill(
            advice, WIDTH, initial_indent="  ", subsequent_indent="  "))
    return "\n\n".join(blocks)


def _incidence_block(result: ConfigurationResult, s: _Style) -> str:
    head = s.head("Stabilizer incidence and shim")
    rec = result.incidence
    if rec is None:
        return head + "\n  no recommendation: " + (result.incidence_reason or "not computed")
    from trimlog.views import shim_text

    inc = rec.to_json()
    lines = [textwrap.fill("Shim: " + shim_text.headline(inc), WIDTH, initial_indent="  ",
                           subsequent_indent="    ")]
    lines.append(textwrap.fill(rec.words, WIDTH, initial_indent="  ", subsequent_indent="  "))
    if result.before_after is not None:
        lines.append(textwrap.fill(shim_text.before_after_text(result.before_after), WIDTH,
                                   initial_indent="  ", subsequent_indent="  "))
    return head + "\n" + "\n".join(lines)


def render_flights(listing: list[dict[str, Any]]) -> str:
    """The flights stored in the history."""
    if not listing:
        return "no flights in the history yet: add some with 'trimlog import'"
    rows = [
        [str(f["id"]), str(f.get("label") or ""), str(f.get("date") or ""),
         number(f.get("cg_pct_mac")), str(f["n_points"]), str(f.get("stab_setting") or ""),
         f["sha256"][:12]]
        for f in listing
    ]
    return table(["id", "label", "date", "CG %MAC", "points", "stabilizer", "sha256"], rows)


def render_trend(trend: Trend, *, color: bool = False) -> str:
    """Neutral point after each successive flight, then the plan."""
    s = _Style(color)
    data = trend.to_dict()
    rows = [
        [str(step["n_flights"]), str(step.get("label") or ""), number(step.get("cg_pct_mac")),
         number(step["stick_fixed_pct_mac"]), interval(step["ci95_pct_mac"]),
         number(step.get("stick_free_pct_mac")), interval(step.get("stick_free_ci95_pct_mac"))]
        for step in data["trend"]
    ]
    out = [s.head("Neutral point after each flight (%MAC)"), table(
        ["flights", "latest", "its CG", "stick-fixed", "95 %", "stick-free", "95 %"], rows)]
    out.append(render_plan(trend, color=color))
    return "\n".join(out)


def render_plan(trend: Trend, *, color: bool = False) -> str:
    """The next-CG suggestion with its reasoning and the cautions."""
    s = _Style(color)
    lines = [_next_step_block(trend.to_dict()["next_step"], s)]
    lines.append(_bullets((cautions.ESTIMATE_STATEMENT, *cautions.CG_EXPANSION,
                           *cautions.GENERAL)))
    return "\n".join(lines)


def _next_step_block(step: dict[str, Any], s: _Style) -> str:
    """The most aft CG for the next flight (the one next-CG rule), naming what limits it."""
    lines = [s.head("Next CG step")]
    if step["max_cg_pct_mac"] is None:
        lines.append(textwrap.fill("no step aft: " + step["reason"], WIDTH,
                                   initial_indent="  ", subsequent_indent="  "))
    else:
        station = step.get("max_cg_station_in")
        where = "" if station is None else f" (station {station:.2f} in)"
        lines.append(textwrap.fill(
            f"most aft CG for the next flight: {step['max_cg_pct_mac']:.1f} %MAC{where}, "
            f"limited by the {step_limit_words(step['limited_by'])}, keeping the 95 % "
            f"lower bound of every known static margin at or above "
            f"{step['min_static_margin_pct_mac']:g} %MAC", WIDTH, initial_indent="  ",
            subsequent_indent="  "))
        lines.append(textwrap.fill(step["reason"], WIDTH, initial_indent="  ",
                                   subsequent_indent="  "))
    return "\n".join(lines)
