"""Results page: neutral points, margins, stick forces, authority, the shim, the figures."""

from __future__ import annotations

import dataclasses
import functools

import pandas as pd
import streamlit as st

from trimlog import cautions, findings
from trimlog.dashboard import blocks, common, compute, session
from trimlog.dashboard.common import interval, num, with_interval
from trimlog.errors import TrimlogError
from trimlog.findings import Severity
from trimlog.pipeline.chain import Analysis
from trimlog.stability.critical import step_limit_words
from trimlog.views.advice import ASSUMED_NOTE, assumed_units, precision_sentence

FIGURES = (
    ("trim_curves", "Elevator to trim against CL, one line per flight"),
    ("gradient_vs_cg", "Trim gradient against CG: where it reaches zero is the neutral point"),
    ("stick_force_per_q", "Fs/q against CL (stick-free)"),
    ("stick_force_vs_speed", "Stick force against airspeed"),
)
#: Figures of the maneuvering points, drawn when asked for (each costs a few tenths of a
#: second to draw on a new analysis, and the page's numbers need not wait for them).
MANEUVER_FIGURES = (
    ("stick_force_vs_n", "Stick force against load factor (maneuvering points)"),
    ("maneuver_gradients_vs_cg", "Gradients per g against CG: maneuver and neutral points"),
)


def _readable(inputs: session.Inputs) -> tuple[list[str], list[tuple[str, TrimlogError]]]:
    ok, bad = [], []
    for log, sheet in inputs.logs:
        try:
            compute.flight_data(log, sheet, inputs.profile_text, inputs.profile_source,
                                inputs.min_hold_s)
        except TrimlogError as exc:
            bad.append((log.name, exc))
        else:
            ok.append(log.name)
    return ok, bad


def render() -> None:
    """Draw the page."""
    st.header("Results")
    common.estimate_note()
    everything = session.inputs()
    try:
        aircraft = compute.profile(everything.profile_text, everything.profile_source).name
    except TrimlogError as exc:
        common.show_error(exc, "The aircraft profile has a problem (see Aircraft)")
        return
    saved = compute.programme_state(aircraft)
    if not everything.logs and saved is None:
        st.info("No flights yet. Add logs on the Flights page (or switch the demo flights on).")
        st.button("Go to Flights", on_click=common.go_to, args=("Flights",))
        common.caution_box(statement=False)
        return
    ok, bad = _readable(everything)
    for name, exc in bad:
        common.show_error(exc, f"{name} is left out of the analysis")
    inputs = session.inputs(readable=ok)
    # Saved flights of this aircraft join the flights in use: the programme's result.
    inputs = dataclasses.replace(inputs, programme=saved)
    if not inputs.logs and inputs.programme is None:
        common.caution_box(statement=False)
        return
    try:
        a = compute.analysis_with_status(inputs)
    except TrimlogError as exc:
        common.show_error(exc, "No analysis")
        common.caution_box(statement=False)
        return
    _banner(a)
    _neutral_points(a)
    _warnings(a)
    blocks.shim_block(a, with_cautions=False)
    # Every caution of the result once, complete, beside the results (the estimate
    # statement is at the top of the page).
    common.caution_box(_result_cautions(a), statement=False)
    _next_step(a)
    _margins(a)
    _stick_forces(a)
    _maneuvering(a)
    _authority(a)
    _figures(inputs)
    _next_cg(a)
    _downloads(inputs)


def precompute_first_page() -> None:
    """Compute what a new session's Results page shows, into the caches the page reads.

    The server runs this once, as soon as it starts (:mod:`trimlog.dashboard.serve`): the
    first visitor then waits for the page to be sent, not for the demo flights to be read,
    fitted and drawn.  The inputs are the page's own (:func:`session.first_inputs`, the
    saved programme of the demo aircraft if the history holds one).
    """
    inputs = session.first_inputs()
    aircraft = compute.profile(inputs.profile_text, inputs.profile_source).name
    # As render() does: saved flights of this aircraft join the flights in use.
    inputs = dataclasses.replace(inputs, programme=compute.programme_state(aircraft))
    a = compute.precompute(inputs)
    if a.primary.incidence is not None:  # the shim block's side view
        compute.shim_png(a.primary.incidence.to_json(), a.profile.stabilizer_attach_spacing_in)
    for kind, _ in FIGURES:
        try:
            compute.figure(kind, inputs)
        except TrimlogError:
            continue  # the page says why it is not drawn, when it asks


def _result_cautions(a: Analysis) -> list[str]:
    """The analysis's cautions that the general box does not already hold."""
    shown = {cautions.ESTIMATE_STATEMENT, *cautions.GENERAL}
    return [c for c in a.cautions if c not in shown]


def _banner(a: Analysis) -> None:
    ss = st.session_state
    s = a.primary.stability
    demo_digests = {f.digest for f in ss.demo_logs.values()} if ss.use_demo else set()
    demo = any(f.sha256 in demo_digests for f in a.flights)
    st.markdown(
        f"**{common.esc(a.profile.name)}**: {len(a.flights)} flight(s), {s.n_included} points used"
        + (f", {s.n_excluded} left out" if s.n_excluded else "")
        + f"; configuration '{a.primary.config}'. Flights in the order flown: "
        + common.esc(", ".join(f"{f.flight} ({f.when.iso() or 'no date'})" for f in a.flights))
        + "."
    )
    _left_out(a)
    assumed = [(f.flight, assumed_units(f.log.findings)) for f in a.flights]
    assumed = [(flight, units) for flight, units in assumed if units]
    if assumed:
        common.warn("Units assumed (no unit in the header): "
                    + "; ".join(f"{flight}: {units}" for flight, units in assumed)
                    + f". {ASSUMED_NOTE[:1].upper()}{ASSUMED_NOTE[1:]}.")
    prog = a.programme
    new = list(prog.new) if prog is not None else [f.flight for f in a.flights]
    with st.container(border=True, key="programme"):
        if prog is not None:
            st.markdown(
                f"**The programme's result**: {len(prog.saved)} saved flight(s) from the history "
                f"({common.esc(', '.join(f for f, _ in prog.saved))}) and {len(new)} new "
                f"({common.esc(', '.join(new) or 'none')}).")
        else:
            st.markdown("Nothing of this aircraft is saved in the history yet: these are the "
                        "flights in use only.")
        if new:
            from trimlog.dashboard import history_page

            st.button(f"Save the new flight(s) to the history of {a.profile.name}",
                      key="save_from_results", on_click=history_page.save_flights,
                      type="primary")
        for kind, text in ss.pop("history_messages", []):
            {"ok": st.success, "info": st.info, "error": st.error}[kind](common.esc(text))
    if demo:
        st.info("Showing the invented demo aircraft and its demo flights. To analyse your "
                "own: set up the airplane on **Aircraft**, then upload logs on **Flights**.")


def _times(factor: float, value):
    """A number or a (low, high) pair times a display-unit factor (None stays None)."""
    if value is None:
        return None
    if isinstance(value, tuple | list):
        return tuple(factor * v for v in value)
    return factor * value


def _left_out(a: Analysis) -> None:
    """The points the user left out, with their reasons (the analysis' own column)."""
    pts = a.points
    if "exclusion_reason" not in pts or not len(pts):
        return
    # A point left out with a reason, or without any flag of trimlog's, was left out by the user.
    flagged = pts["flags"].fillna("").astype(str) != "" if "flags" in pts else False
    mine = pts.loc[~pts["included"].astype(bool) & ((pts["exclusion_reason"] != "") | ~flagged)]
    if not len(mine):
        return
    st.caption(common.esc("Left out by you: " + "; ".join(
        f"{r.flight} point {int(r.point)} ({r.exclusion_reason or 'no reason given'})"
        for r in mine.itertuples())))


def _np_metric(col, title: str, np_, help_text: str) -> None:
    if np_.identifiable:
        col.metric(title, f"{np_.pct_mac:.1f} %MAC", help=help_text)
        col.caption(f"95 %: {interval(np_.ci95_pct_mac)} %MAC; station "
                    f"{num(np_.station_in, '.2f', 'in')}")
    else:
        col.metric(title, "not identifiable yet", help=help_text)
        col.caption(common.esc(np_.reason))


def _neutral_points(a: Analysis) -> None:
    s = a.primary.stability
    st.subheader("Neutral points")
    cols = st.columns(4)
    _np_metric(cols[0], "Stick-fixed neutral point", s.stick_fixed.neutral_point,
               s.stick_fixed.neutral_point.method + " fit over every point, Fieller interval")
    if s.stick_free is None:
        cols[1].metric("Stick-free neutral point", "no force logged")
    else:
        _np_metric(cols[1], "Stick-free neutral point", s.stick_free.neutral_point,
                   "from Fs/q against CL, Fieller interval")
    two = s.stick_fixed_two_stage.neutral_point
    _np_metric(cols[2], "Stick-fixed, two-stage check", two,
               "per-flight gradients against CG; should agree with the pooled value")
    aft = next((m for m in s.margins if m.label == "aft CG limit"), None)
    if aft is not None and aft.stick_fixed_pct_mac is not None:
        # The headline is the margin that limits (the smaller lower 95 % bound), named.
        free_limits = aft.limited_by == "stick_free_np" and aft.stick_free_pct_mac is not None
        kind, value, ci, other, other_value = (
            ("stick-free", aft.stick_free_pct_mac, aft.stick_free_ci95_pct_mac,
             "stick-fixed", aft.stick_fixed_pct_mac) if free_limits else
            ("stick-fixed", aft.stick_fixed_pct_mac, aft.stick_fixed_ci95_pct_mac,
             "stick-free", aft.stick_free_pct_mac))
        cols[3].metric("Static margin at the aft limit", f"{value:.1f} %MAC",
                       help=f"{kind} (the margin that limits); minimum wanted "
                       f"{a.profile.min_static_margin_pct_mac:.1f} %MAC")
        cols[3].caption(f"{kind}, the one that limits; 95 %: {interval(ci)} %MAC; "
                        f"{other} {num(other_value)} %MAC")
    cols = st.columns(4)
    cols[0].caption(f"CG spread flown {s.stick_fixed.neutral_point.cg_spread_pct_mac:.1f} %MAC "
                    f"over {s.stick_fixed.neutral_point.n_flights} flight(s).")


def _next_step(a: Analysis) -> None:
    nxt = a.primary.stability.next_step
    if nxt is None:
        return
    st.subheader("Next flight: how far aft")
    with st.container(border=True, key="next_step_results"):
        if nxt.max_cg_pct_mac is None:
            st.markdown("**No step aft is supported yet.**")
        else:
            cols = st.columns(3)
            cols[0].metric("Most aft CG for the next flight", f"{nxt.max_cg_pct_mac:.1f} %MAC")
            cols[1].metric("As a station", num(nxt.max_cg_station_in, ".1f", "in"))
            cols[2].metric("Limited by", step_limit_words(nxt.limited_by))
        st.markdown(common.esc(nxt.reason))


def _margins(a: Analysis) -> None:
    s = a.primary.stability
    st.subheader("Static margins")
    rows = [
        {
            "At": m.label,
            "CG [%MAC]": num(m.cg_pct_mac),
            "Stick-fixed [%MAC]": with_interval(m.stick_fixed_pct_mac,
                                                m.stick_fixed_ci95_pct_mac),
            "Stick-free [%MAC]": with_interval(m.stick_free_pct_mac, m.stick_free_ci95_pct_mac),
            "Limited by": {"stick_fixed_np": "stick-fixed", "stick_free_np": "stick-free"}.get(
                m.limited_by, "cannot say"),
            f"Lower bound >= {a.profile.min_static_margin_pct_mac:.1f} %MAC": {
                True: "yes", False: "NO", None: "cannot say"}[m.meets_minimum],
        }
        for m in s.margins
    ]
    st.table(pd.DataFrame(rows), hide_index=True)
    if s.critical is not None:
        st.caption(common.esc(s.critical.reason))
    # The next step and its reason are shown once, in the box above the margins.


def _stick_forces(a: Analysis) -> None:
    s = a.primary.stability
    st.subheader("Trim gradients and stick force, per flight")
    system = blocks.units()
    grad_title, grad_k = blocks.titled("Force gradient", "lbf/kt", system)
    speed_title, speed_k = blocks.titled("Trim speed, EAS", "kt", system)
    rows = [
        {
            "Flight": g.flight,
            "CG [%MAC]": num(g.cg_pct_mac),
            "Points": g.n_points,
            "d(elevator)/dCL [deg]": with_interval(g.delev_dcl_deg, g.delev_dcl_ci95_deg, ".2f"),
            "Elevator verdict": g.elevator_verdict,
            grad_title: with_interval(_times(grad_k, g.dfs_dv_lbf_per_kt),
                                      _times(grad_k, g.dfs_dv_ci95_lbf_per_kt), ".3f"),
            speed_title: num(_times(speed_k, g.trim_eas_kt), ".0f"),
            "Stick-force verdict": g.stick_force_verdict,
        }
        for g in s.gradients
    ]
    st.table(pd.DataFrame(rows), hide_index=True)


def _maneuvering(a: Analysis) -> None:
    m = a.maneuvering
    st.subheader("Maneuvering: stick force per g and the maneuver points")
    if m is None:
        st.info("No maneuvering point: no steady turn at 1.1 g or more was found (log the "
                "load factor and hold each step of a wind-up turn for 10 s or more).")
        return
    cols = st.columns(2)
    _np_metric(cols[0], "Stick-fixed maneuver point hm", m.stick_fixed,
               "Elevator per g (over the 1-g CL) against CG, extrapolated to zero.")
    if m.stick_free is None:
        cols[1].metric("Stick-free maneuver point hm'", "no stick force logged")
    else:
        _np_metric(cols[1], "Stick-free maneuver point hm'", m.stick_free,
                   "Stick force per g (over the wing loading) against CG, extrapolated to zero.")
    per_g_title, per_g_k = blocks.titled("stick force per g", "lbf/g", blocks.units())
    rows = [{"Flight": g.flight, "CG [%MAC]": num(g.cg_pct_mac), "Points": g.n_points,
             "n [g]": f"{g.nz_range[0]:.2f}-{g.nz_range[1]:.2f}",
             "elevator per g [deg/g]": with_interval(g.elevator_per_g_deg,
                                                     g.elevator_per_g_ci95_deg, ".2f"),
             per_g_title: with_interval(_times(per_g_k, g.stick_force_per_g_lbf),
                                        _times(per_g_k, g.stick_force_per_g_ci95_lbf), ".1f"),
             "note": "lightens at high n" if g.lightening else g.reason}
            for g in m.gradients]
    st.table(pd.DataFrame(rows), hide_index=True)
    r = m.requirement
    text = (f"Minimum stick force per g {r.minimum_per_g_lbf:.1f} lbf/g: 14 CFR 23.155(a) "
            f"(pre-2017 text) {r.force_to_limit_lbf:.0f} lbf to {r.limit_load_factor_g:.2f} g "
            f"with a {r.control}; common practice (no source) {r.per_g_common_practice_lbf:.1f}"
            " lbf/g.")
    if m.hm_minus_hn_pct_mac is not None:
        text += f" Measured hm - hn = {m.hm_minus_hn_pct_mac:+.1f} %MAC (pitch damping)."
    if m.aft_cg_pct_mac is not None:
        text += (f" Most aft CG the maneuvering results allow: {m.aft_cg_pct_mac:.1f} %MAC "
                 f"(limited by the {m.limited_by}).")
    st.caption(common.esc(text))


def _authority(a: Analysis) -> None:
    auth = a.primary.stability.authority
    st.subheader("Elevator authority at the forward CG limit")
    if auth is None:
        st.caption("Not computed: no profile.")
        return
    if not auth.cases:
        common.warn(f"Not computed: {auth.reason}")
    for case in auth.cases:
        text = (f"**{case.case} (CLmax {case.clmax:.2f}) at {case.cg_pct_mac:.1f} %MAC:** "
                f"{case.verdict}. Elevator to trim {case.elevator_deg:+.1f} deg against the up "
                f"stop at {case.up_stop_deg:+.1f} deg.")
        if case.extrapolated:
            text += " *Extrapolated beyond the CL or configuration flown.*"
        st.markdown(text)
        for n in case.notes:
            st.caption(n)
    if auth.most_forward_cg_conservative_pct_mac is not None:
        st.markdown(
            f"Most forward CG keeping {auth.reserve_deg:.1f} deg of up elevator in reserve: "
            f"{auth.most_forward_cg_conservative_pct_mac:.1f} %MAC "
            f"({num(auth.most_forward_cg_station_in, '.1f', 'in')}), conservative."
        )


def _warnings(a: Analysis) -> None:
    """Findings that matter first, most severe first; the reading notes collapsed below."""
    shown, reading = findings.split_for_display(a.findings, drop=a.cautions)
    show_config = bool(a.others)
    lines = list(dict.fromkeys((f.severity, f.line(show_config=show_config)) for f in shown))
    n_warn = sum(1 for sev, _ in lines if sev is Severity.WARNING)
    st.subheader(f"Findings ({n_warn} warning(s), {len(lines) - n_warn} other)")
    with st.container(key="findings"):
        for sev, text in lines:
            # st.error is kept for the user's mistakes (bad files): a finding is a warning box
            if sev is Severity.WARNING:
                st.warning(common.esc(f"Warning: {text}"), icon=":material/warning:")
            elif sev is Severity.CAUTION:
                st.warning(common.esc(f"Caution: {text}"), icon=":material/info:")
            else:
                st.info(common.esc(f"Note: {text}"))
        if not lines:
            st.caption("None from the analysis.")
    notes = findings.lines(reading, show_config=show_config)
    if notes:
        with st.expander(f"{len(notes)} notes from reading the files (missing cells, sign "
                         "flips, skipped lines)"):
            st.text("\n".join(notes))


def _figures(inputs: session.Inputs) -> None:
    st.subheader("Figures")
    kinds = list(FIGURES)
    if st.toggle("Draw the maneuvering figures too (stick force per g, gradients per g "
                 "against CG)", key="want_maneuver_figures"):
        kinds.extend(MANEUVER_FIGURES)
    cols = st.columns(2)
    for i, (kind, caption) in enumerate(kinds):
        try:
            png = compute.figure(kind, inputs)
        except TrimlogError as exc:
            cols[i % 2].info(common.esc(f"{caption}: not drawn ({exc})"))
            continue
        common.show_png(cols[i % 2], png, caption)


def _next_cg(a: Analysis) -> None:
    sentence = precision_sentence(a.primary.stability.next_cg)
    if sentence is None:  # no suggestion, or one that would add nothing
        return
    st.subheader("To tighten the estimate")
    st.markdown(common.esc(sentence))


def _downloads(inputs: session.Inputs) -> None:
    st.subheader("Take the results with you")
    cols = st.columns(3)
    # Written when the button is pressed (a callable), not on every rerun of the page.
    cols[0].download_button("Results (JSON)", functools.partial(compute.json_text, inputs),
                            file_name="trimlog-result.json", mime="application/json")
    cols[1].download_button("Points (CSV)", functools.partial(compute.points_csv, inputs),
                            file_name="trimlog-points.csv", mime="text/csv")
    if cols[2].toggle("Prepare the PDF report", key="want_pdf"):
        try:
            pdf = compute.report_pdf(inputs)
        except TrimlogError as exc:
            common.show_error(exc, "No report")
            return
        cols[2].download_button("Report (PDF)", pdf, file_name="trimlog-report.pdf",
                                mime="application/pdf")
