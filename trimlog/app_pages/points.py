"""Points page: the stabilized points of each flight, on its log, to keep or leave out."""

from __future__ import annotations

import streamlit as st

from trimlog.app_pages import common, compute, session
from trimlog.errors import TrimlogError

SHOWN = {
    "point": "Point",
    "t_start_s": "From [s]",
    "t_end_s": "To [s]",
    "duration_s": "Held [s]",
    "ias_kt": "IAS [kt]",
    "pressure_alt_ft": "Alt [ft]",
    "elevator_deg": "Elevator [deg]",
    "stick_force_lbf": "Force [lbf]",
    "nz_g": "nz [g]",
    "vs_fpm": "V/S [fpm]",
    "flags": "Flags",
}
FORMATS = {
    "t_start_s": "%.1f", "t_end_s": "%.1f", "duration_s": "%.1f", "ias_kt": "%.1f",
    "pressure_alt_ft": "%.0f", "elevator_deg": "%.2f", "stick_force_lbf": "%.1f",
    "nz_g": "%.2f", "vs_fpm": "%.0f",
}
FLAG_WORDS = {
    "spike": "single-sample spikes left out of the means",
    "drift": "cut out of a slowly drifting stretch",
    "gap": "a gap in the time stamps",
    "dropout": "many samples of a core signal missing",
    "alt_unsteady": "altitude not steady",
    "turbulent": "airspeed scatter high",
    "nz_off": "load factor away from 1 g",
    "no_nz": "load factor not logged (a steady turn would not show)",
    "no_force": "stick force not logged",
    "unmarked": "not marked by the pilot (left out by trimlog)",
    "marker_unsteady": "marked by the pilot but not steady (left out by trimlog)",
    "table": "typed row, no window statistics",
    "incomplete": "typed row missing airspeed, altitude or elevator (left out by trimlog)",
}


def _keep_choices(flight: str, used: list[bool], numbers: list[int]) -> bool:
    """Store the ticks of one flight's table as its exclusions; True when they changed."""
    ss = st.session_state
    now = {e for e in ss.exclusions if e[0] != flight} | {
        (flight, p) for p, u in zip(numbers, used, strict=True) if not u
    }
    changed = now != ss.exclusions
    ss.exclusions = now
    return changed


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Points")
    st.caption(
        "Each stabilized point trimlog found, on the log it came from (shaded windows). "
        "Untick a point to leave it out of the fits (a turn, a gust, a bad hold); it stays "
        "listed, and the choice is kept for this session and saved with the flight."
    )
    inputs = session.inputs()
    pairs = {log.name: (log, sheet) for log, sheet in inputs.logs}
    choices = []
    for name, (log, sheet) in pairs.items():
        try:
            found = compute.flight_data(log, sheet, inputs.profile_text, inputs.profile_source,
                                        inputs.min_hold_s)
        except TrimlogError:
            continue
        choices.extend((f.flight, name, f) for f in found)
    if not choices:
        st.info("No readable log yet: add logs on the Flights page.")
        return
    labels = [f"{flight}  ({name})" for flight, name, _ in choices]
    first_log = next((i for i, c in enumerate(choices) if c[2].log.kind == "time_series"), 0)
    picked = st.selectbox("Flight", range(len(choices)), index=first_log,
                          format_func=labels.__getitem__, key="points_flight")
    flight, name, data = choices[picked]
    log, sheet = pairs[name]
    if data.log.kind == "time_series":
        png = compute.log_figure(log, sheet, inputs, flight)
        if png is None:
            st.info("The log plot appears here once trimlog.plots is installed.")
        else:
            st.image(png, caption=f"{flight}: airspeed, elevator, stick force and load factor "
                     "against time; stabilized points shaded and numbered")
    else:
        st.caption("A typed point table: one row per point, no time history to show.")

    if not len(data.points):
        st.warning("No stabilized point in this flight.")
        return
    table = data.points[[c for c in SHOWN if c in data.points.columns]].copy()
    numbers = [int(p) for p in table["point"]]
    detected = [bool(v) for v in data.points["included"]]
    table.insert(0, "included", [d and (flight, p) not in ss.exclusions
                                 for d, p in zip(detected, numbers, strict=True)])
    edited = st.data_editor(
        table.rename(columns=SHOWN),
        key=f"editor_{flight}",
        hide_index=True,
        disabled=list(SHOWN.values()),
        column_config={
            "included": st.column_config.CheckboxColumn(
                "Use", help="Untick to leave the point out of the fits"),
            **{SHOWN[c]: st.column_config.NumberColumn(format=f) for c, f in FORMATS.items()},
        },
        width="stretch",
    )
    detected_used = [d and u for d, u in zip(detected, edited["included"], strict=True)]
    if _keep_choices(flight, [bool(u) for u in detected_used], numbers):
        st.rerun()  # redraw the log with the new exclusions hatched
    used = int(table["included"].sum())
    st.caption(f"{used} of {len(numbers)} points used.")
    auto = [p for d, p in zip(detected, numbers, strict=True) if not d]
    if auto:
        st.caption("Points " + ", ".join(map(str, auto)) + " were left out by trimlog itself "
                   "(see their flags); ticking them has no effect yet.")
    present = sorted({f for cell in table["flags"].fillna("") for f in str(cell).split(";") if f})
    if present:
        st.caption("Flags: " + "; ".join(f"**{f}**: {FLAG_WORDS.get(f, f)}" for f in present))
    st.button("See the results", type="primary", on_click=common.go_to, args=("Results",))
