"""History page: save flights, follow the neutral point, plan the next CG."""

from __future__ import annotations

import json

import pandas as pd
import streamlit as st

from trimlog import cautions
from trimlog.dashboard import blocks, common, compute, session
from trimlog.dashboard.common import interval, num
from trimlog.errors import LoadingSheetChangedError, TrimlogError
from trimlog.history import maneuver_choices
from trimlog.input.profile import profile_key


def save_flights(replace_sheets: bool = False) -> None:
    """Import every readable flight in use, then apply this session's point choices to them.

    A flight saved already with another loading sheet is refused (the message names what
    differs) and offered for replacement; ``replace_sheets`` replaces those sheets.
    """
    ss = st.session_state
    inputs = session.inputs()
    messages: list[tuple[str, str]] = []
    ss.sheet_conflicts = 0
    try:
        with compute.open_history() as store:
            for log, sheet in inputs.logs:
                try:
                    outcome = compute.import_flight(store, log, sheet, inputs,
                                                    ss.labels.get(log.digest) or None,
                                                    ss.notes.get(log.digest) or None,
                                                    replace_sheet=replace_sheets)
                except LoadingSheetChangedError as exc:
                    messages.append(("error", str(exc)))
                    ss.sheet_conflicts += 1
                    continue
                except TrimlogError as exc:
                    messages.append(("error", str(exc)))
                    continue
                messages.append(("ok" if outcome.created else "info", outcome.message))
                for choices, used in ((inputs.exclusions, False), (inputs.inclusions, True)):
                    for flight, point in choices:
                        if flight == log.stem:
                            store.set_point_included(outcome.flight_id, point, used)
                for flight, point, reason in inputs.exclusion_reasons:
                    if flight == log.stem:
                        maneuver_choices.set_exclusion_reason(store, outcome.flight_id,
                                                              point, reason)
    except TrimlogError as exc:
        messages.append(("error", str(exc)))
    ss.history_messages = messages


def _store_choices(flight_id: int, points: list[int], before: list[bool],
                   after: list[bool]) -> bool:
    """Save the ticks that changed; True when something was written."""
    changes = [(p, u) for p, b, u in zip(points, before, after, strict=True) if b != u]
    if not changes:
        return False
    try:
        with compute.open_history() as store:
            for point, used in changes:
                store.set_point_included(flight_id, point, used)
    except TrimlogError as exc:
        st.session_state.history_messages = [("error", str(exc))]
    return True


def _store_reasons(flight_id: int, saved: dict[int, str], now: dict[int, str]) -> bool:
    """Save the reasons that changed; True when something was written."""
    changes = {p: r for p, r in now.items() if saved.get(p, "") != r}
    if not changes:
        return False
    try:
        with compute.open_history() as store:
            for point, reason in changes.items():
                maneuver_choices.set_exclusion_reason(store, flight_id, point, reason)
    except TrimlogError as exc:
        st.session_state.history_messages = [("error", str(exc))]
    return True


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("History")
    st.caption(
        "Saved flights keep their raw logs byte for byte and your point choices. "
        f"History in use: {compute.history_description()}"
    )
    try:
        p = compute.profile(ss.profile_text, ss.profile_source)
    except TrimlogError as exc:
        common.show_error(exc, "The aircraft profile has a problem (see Aircraft)")
        return
    n_logs = len(session.logs())
    st.button(f"Save the {n_logs} flight(s) in use to the history of {common.esc_label(p.name)}",
              type="primary", on_click=save_flights, disabled=not n_logs)
    for kind, text in ss.pop("history_messages", []):
        {"ok": st.success, "info": st.info, "error": st.error}[kind](common.esc(text))
    if ss.get("sheet_conflicts"):
        st.button(f"Replace the saved loading sheet of {ss.sheet_conflicts} flight(s) with "
                  "the one in use (the earlier sheet is kept in the flight's record)",
                  key="replace_sheets", on_click=save_flights, args=(True,))

    try:
        listing = compute.flight_listing(p.name)
    except TrimlogError as exc:
        st.info(common.esc(f"Nothing saved for this aircraft yet ({exc})."))
        common.caution_box(cautions.CG_EXPANSION, key="_history")
        return
    common.caution_box(key="_history")
    _listing(listing)
    _trend(p)
    _current_shim(p)


def _current_shim(p) -> None:
    """The shim recommendation from every saved flight, beside the trend."""
    try:
        a = compute.history_analysis(p.name)
    except TrimlogError as exc:
        common.show_error(exc, "No shim recommendation from the saved flights")
        return
    st.caption("From every saved flight, the latest stabilizer setting by date being the "
               "one the shim corrects from.")
    blocks.shim_block(a)


def _listing(listing: list[dict]) -> None:
    st.subheader(f"Saved flights ({len(listing)})")
    st.dataframe(
        pd.DataFrame([
            {"Id": f["id"], "Flight": f["label"], "File": f["filename"], "Date": f["date"],
             "CG [%MAC]": num(f["cg_pct_mac"]), "Points": f["n_points"],
             "Used": f["n_included"], "Stabilizer": f["stab_setting"]}
            for f in listing
        ]),
        hide_index=True, width="stretch",
    )
    with st.expander("Change which points of a saved flight are used"):
        ids = [f["id"] for f in listing]
        names = {f["id"]: f"{f['id']}: {f['label']}" for f in listing}
        fid = st.selectbox("Saved flight", ids, format_func=names.__getitem__,
                           key="history_flight")
        pts = compute.stored_points(fid)
        numbers = [int(x) for x in pts["point"]]
        before = [bool(x) for x in pts["included"]]
        flags = [f if isinstance(f, str) else "" for f in pts.get("flags", [""] * len(pts))]
        after = blocks.points_used("Points used in the fits (click a point to leave it out "
                                   "or use it again; saved at once)", numbers, before,
                                   f"history_used_{fid}", flags)
        saved = compute.stored_reasons(fid)
        reasons = {p: blocks.exclusion_reason(p, f"history_why_{fid}_{p}", saved.get(p, ""))
                   for p, used in zip(numbers, after, strict=True) if not used}
        table = blocks.points_table(pts, blocks.units())
        table.insert(0, "Used", after)
        table.insert(1, "Why left out", [reasons.get(p, "") for p in numbers])
        st.dataframe(table, hide_index=True, width="stretch",
                     column_config={"Used": st.column_config.CheckboxColumn("Used"),
                                    **blocks.point_formats(table)})
        changed = _store_choices(fid, numbers, before, after)
        if _store_reasons(fid, saved, reasons) or changed:
            st.rerun()


def _trend(p) -> None:
    st.subheader("Neutral point, flight by flight")
    c1, c2 = st.columns(2)
    # the same ranges as the profile's keys (trimlog.input.profile.PROFILE_KEYS)
    m_key, s_key = profile_key("limits.min_static_margin"), profile_key("limits.cg_step_max")
    margin = c1.number_input("Minimum static margin for the next flight [%MAC]",
                             min_value=m_key.low, max_value=m_key.high,
                             value=float(p.min_static_margin_pct_mac), step=0.5,
                             key="policy_margin")
    step = c2.number_input("Largest step aft of the most aft CG flown [%MAC]",
                           min_value=s_key.low, max_value=s_key.high,
                           value=float(p.cg_step_max_pct_mac),
                           step=0.5, key="policy_step")
    try:
        trend = compute.trend(p.name, margin, step)
    except TrimlogError as exc:
        common.show_error(exc, "No trend")
        return
    records = trend["trend"]
    common.show_png(st, compute.trend_figure(p.name, margin, step),
                    "Estimates of the neutral and maneuver points as flights were added, "
                    "with their 95 % intervals, and the CG of each flight added")
    st.dataframe(
        pd.DataFrame([
            {"After flight": f"{r['n_flights']}: {r['label']}", "CG [%MAC]": num(r["cg_pct_mac"]),
             "Stick-fixed [%MAC]": num(r["stick_fixed_pct_mac"]),
             "95 % interval": interval(r["ci95_pct_mac"]),
             "Stick-free [%MAC]": num(r["stick_free_pct_mac"]),
             "Stick-free 95 %": interval(r["stick_free_ci95_pct_mac"]),
             "Maneuver pt, stick-fixed [%MAC]": num(_mp(r, "stick_fixed")),
             "Maneuver pt, stick-free [%MAC]": num(_mp(r, "stick_free")),
             "Note": r["reason"] or ""}
            for r in records
        ]),
        hide_index=True, width="stretch",
    )
    for w in trend["warnings"]:
        common.warn(w)
    nxt = trend["next_step"]
    st.subheader("Next flight: how far aft")
    with st.container(border=True, key="next_step"):
        if nxt["max_cg_pct_mac"] is None:
            st.markdown("**No step aft is supported yet.**")
        else:
            cols = st.columns(3)
            cols[0].metric("Most aft CG for the next flight",
                           f"{nxt['max_cg_pct_mac']:.1f} %MAC")
            cols[1].metric("As a station", num(nxt["max_cg_station_in"], ".1f", "in"))
            cols[2].metric("Limited by", nxt["limited_by"])
        st.markdown(common.esc(nxt["reason"]))
        # the estimate statement leads the page's caution box already: each caution once
        common.caution_list([c for c in nxt["cautions"] if c != cautions.ESTIMATE_STATEMENT])
    left, right = st.columns(2)
    left.download_button("Trend (JSON)", json.dumps(trend, indent=2, allow_nan=False),
                         file_name="trimlog-trend.json", mime="application/json")
    if right.toggle("Prepare the PDF report of the whole history", key="want_history_pdf"):
        try:
            pdf = compute.history_report_pdf(p.name, margin, step)
        except TrimlogError as exc:
            common.show_error(exc, "No report")
            return
        right.download_button("History report (PDF)", pdf, file_name="trimlog-history.pdf",
                              mime="application/pdf")


def _mp(record: dict, kind: str) -> float | None:
    """A trend step's maneuver point [%MAC] (None before it can be said)."""
    return ((record.get("maneuver_point") or {}).get(kind) or {}).get("pct_mac")
