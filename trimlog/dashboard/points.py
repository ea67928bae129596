"""Points page: the stabilized points of each flight, on its log, to keep or leave out."""

from __future__ import annotations

import streamlit as st

from trimlog.dashboard import common, compute, session
from trimlog.errors import TrimlogError
from trimlog.pipeline.points import FLAG_TEXT

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


def _text(cell: object) -> str:
    """A flags cell as text (an empty cell may be read back as NaN)."""
    return cell if isinstance(cell, str) else ""


def _keep_choices(flight: str, numbers: list[int], fitted: list[bool], ticked: list[bool]) -> bool:
    """Keep the ticks that differ from trimlog's own choice; True when they changed."""
    ss = st.session_state
    out = {e for e in ss.exclusions if e[0] != flight}
    into = {i for i in ss.inclusions if i[0] != flight}
    for p, own, used in zip(numbers, fitted, ticked, strict=True):
        if used != own:
            (into if used else out).add((flight, p))
    changed = (out, into) != (ss.exclusions, ss.inclusions)
    ss.exclusions, ss.inclusions = out, into
    return changed


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Points")
    st.caption(
        "Each stabilized point trimlog found, on the log it came from (shaded windows). "
        "Untick a point to leave it out of the fits (a turn, a gust, a bad hold), or tick one "
        "trimlog left out to fit it; every point stays listed, and the choice is kept for "
        "this session and saved with the flight."
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
    if ss.get("points_flight") not in range(len(choices)):
        ss.points_flight = first_log  # the first visit, or a log was removed since
    picked = st.selectbox("Flight", range(len(choices)), format_func=labels.__getitem__,
                          key="points_flight")
    flight, name, data = choices[picked]
    log, sheet = pairs[name]
    if data.log.kind == "time_series":
        png = compute.log_figure(log, sheet, inputs, flight)
        if png is None:
            st.info("The log plot appears here once trimlog.views.plots is installed.")
        else:
            st.image(png, caption=f"{flight}: airspeed, elevator, stick force and load factor "
                     "against time; stabilized points shaded and numbered")
    else:
        st.caption("A typed point table: one row per point, no time history to show.")

    _maneuvering_points(data)
    if not len(data.points):
        st.warning("No stabilized point in this flight.")
        return
    table = data.points[[c for c in SHOWN if c in data.points.columns]].copy()
    numbers = [int(p) for p in table["point"]]
    # trimlog's own choice, from the points as found: detection flags and a stop both
    # leave a point out there, so a tick differing from it is the user's choice.
    fitted = [bool(v) for v in data.points["included"]]
    flags = [_text(f) for f in data.points["flags"]]
    table["flags"] = flags
    table.insert(0, "included", [
        (own or (flight, p) in ss.inclusions) and (flight, p) not in ss.exclusions
        for own, p in zip(fitted, numbers, strict=True)])
    edited = st.data_editor(
        table.rename(columns=SHOWN),
        key=f"editor_{flight}",
        hide_index=True,
        disabled=list(SHOWN.values()),
        column_config={
            "included": st.column_config.CheckboxColumn(
                "Use", help="Ticked points are fitted; untick to leave one out, tick to "
                "fit one trimlog left out"),
            **{SHOWN[c]: st.column_config.NumberColumn(format=f) for c, f in FORMATS.items()},
        },
        width="stretch",
    )
    if _keep_choices(flight, numbers, fitted, [bool(u) for u in edited["included"]]):
        st.rerun()  # redraw the log with the new choices shaded
    used = int(table["included"].sum())
    st.caption(f"{used} of {len(numbers)} points used.")
    auto = [p for own, p in zip(fitted, numbers, strict=True) if not own]
    if auto:
        st.caption("trimlog left out point(s) " + ", ".join(map(str, auto)) + " itself (see "
                   "their flags). Tick one to fit it if you judge the hold good; it keeps its "
                   "flags.")
    present = sorted({f for cell in flags for f in cell.split(";") if f})
    if present:
        st.caption("Flags: " + "; ".join(f"**{f}**: {common.esc(FLAG_TEXT.get(f, f))}"
                                         for f in present))
    st.button("See the results", type="primary", on_click=common.go_to, args=("Results",))


#: Columns of the maneuvering points shown (read only: choose them with the analysis).
MANEUVER_SHOWN = {"point": "point", "nz_g": "n [g]", "eas_kt": "EAS [kt]",
                  "ias_kt": "IAS [kt]", "cas_kt": "CAS [kt]", "elevator_deg": "elevator [deg]",
                  "stick_force_lbf": "stick force [lbf]", "t_start_s": "from [s]",
                  "t_end_s": "to [s]", "flags": "flags"}


def _maneuvering_points(data) -> None:
    """The flight's maneuvering points (steady turns at 1.1 g or more): never trim points."""
    found = data.maneuvering_points()
    if not len(found):
        return
    with st.expander(f"Maneuvering points of this flight ({len(found)}): steady turns at "
                     "1.1 g or more, used for stick force per g, never as trim points"):
        shown = found[[c for c in MANEUVER_SHOWN if c in found.columns]]
        st.dataframe(shown.rename(columns=MANEUVER_SHOWN), hide_index=True, width="stretch")
        st.caption("They are numbered on their own. Points away from the flight's turn "
                   "speed are left out of its gradients (flag off_speed); see Results.")

