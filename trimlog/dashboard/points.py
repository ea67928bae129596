"""Points page: the stabilized points of each flight, on its log, to keep or leave out."""

from __future__ import annotations

import streamlit as st

from trimlog.dashboard import blocks, common, compute, session
from trimlog.errors import TrimlogError
from trimlog.pipeline.points import FLAG_TEXT


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


# long: the Points page top to bottom (widgets in page order)
def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Points")
    st.caption(
        "Each stabilized point trimlog found, on the log it came from (shaded windows). "
        "Click a point to leave it out of the fits (a turn, a gust, a bad hold) and say why, "
        "or click one trimlog left out to fit it; every point stays listed, and the choice "
        "and its reason are kept for this session and saved with the flight."
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
        common.show_png(st, compute.log_figure(log, sheet, inputs, flight),
                        f"{flight}: airspeed, elevator, stick force and load factor against "
                        "time; stabilized points shaded and numbered")
    else:
        st.caption("A typed point table: one row per point, no time history to show.")

    _maneuvering_points(data)
    if not len(data.points):
        st.warning("No stabilized point in this flight.")
        return
    numbers = [int(p) for p in data.points["point"]]
    # trimlog's own choice, from the points as found: detection flags and a stop both
    # leave a point out there, so a choice differing from it is the user's.
    fitted = [bool(v) for v in data.points["included"]]
    flags = [_text(f) for f in data.points["flags"]]
    now = [(own or (flight, p) in ss.inclusions) and (flight, p) not in ss.exclusions
           for own, p in zip(fitted, numbers, strict=True)]
    # The flight's own key (its log's content), never its file name.
    key = f"used_{log.digest[:16]}_{flight}"
    ticked = blocks.points_used("Points used in the fits (click a point to leave it out or "
                                "use it again)", numbers, now, key, flags)
    if _keep_choices(flight, numbers, fitted, ticked):
        st.rerun()  # redraw the log with the new choices shaded
    reasons = ss.setdefault("exclusion_reasons", {})
    for p, used in zip(numbers, ticked, strict=True):
        if not used and (flight, p) in ss.exclusions:
            reasons[(flight, p)] = blocks.exclusion_reason(
                p, f"why_{log.digest[:16]}_{flight}_{p}", reasons.get((flight, p), ""))
    for gone in [k for k in reasons if k[0] == flight and k not in ss.exclusions]:
        del reasons[gone]
    table = blocks.points_table(data.points, blocks.units())
    table.insert(0, "Used", ticked)
    table.insert(1, "Why left out", [
        reasons.get((flight, p), "") if (flight, p) in ss.exclusions
        else ("" if used else "trimlog (flags)")
        for p, used in zip(numbers, ticked, strict=True)])
    st.dataframe(table, hide_index=True, width="stretch",
                 column_config={"Used": st.column_config.CheckboxColumn("Used"),
                                **blocks.point_formats(table)})
    used = sum(ticked)
    st.caption(f"{used} of {len(numbers)} points used.")
    auto = [p for own, p in zip(fitted, numbers, strict=True) if not own]
    if auto:
        st.caption("trimlog left out point(s) " + ", ".join(map(str, auto)) + " itself (see "
                   "their flags). Click one to fit it if you judge the hold good; it keeps its "
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

