"""Flights page: upload logs and loading sheets, pair them, label the flights."""

from __future__ import annotations

import streamlit as st

from trimlog.dashboard import common, compute, loading_form, session, weighing_form
from trimlog.errors import TrimlogError
from trimlog.views.advice import ASSUMED_NOTE, assumed_units

NO_SHEET = "(none: weight and CG from the log)"


def _ingest(key: str) -> None:
    files = st.session_state.get(key) or []
    session.add_uploads([(f.name, f.getvalue()) for f in files])
    # A fresh uploader: the files are kept in the session, not in the widget.
    st.session_state.uploader_round += 1


def _remove(name: str) -> None:
    session.remove_upload(name)


def _set_sheet(digest: str) -> None:
    value = st.session_state[f"sheet_{digest}"]
    st.session_state.sheet_for[digest] = None if value == NO_SHEET else value


def _set_text(store: str, digest: str) -> None:
    # Everything a flight owns is keyed by its content (SHA-256), never by its file name:
    # a file of your own named like a demo file must not take the demo flight's words.
    st.session_state[store][digest] = st.session_state[f"{store}_{digest}"]


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Flights")
    st.caption(
        "Drop the logger's CSV files (time series) or typed point tables here, with a "
        "loading sheet (*.loading.toml: takeoff weight, CG, fuel, stabilizer setting) for each "
        "log that does not record weight and CG. A sheet pairs with the log of the same name."
    )
    key = f"uploader_{ss.uploader_round}"
    st.file_uploader(
        "Logs, point tables and loading sheets",
        type=["csv", "txt", "tsv", "toml"],
        accept_multiple_files=True,
        key=key,
        on_change=_ingest,
        args=(key,),
    )
    c1, c2 = st.columns(2)
    c1.toggle("Include the demo flights", key="use_demo", disabled=not ss.demo_logs,
              help="The five invented flights of the demo aircraft.")
    c2.number_input(
        "Minimum hold of a stabilized point [s] (blank: trimlog's default)",
        min_value=3.0, max_value=600.0, step=1.0, key="min_hold_s",
    )

    logs = session.logs()
    if not logs:
        st.info("No logs yet: upload one above, or switch on the demo flights.")
    try:
        p = compute.profile(ss.profile_text, ss.profile_source)
    except TrimlogError as exc:
        common.show_error(exc, "The profile has a problem (see Aircraft)")
        return
    sheets = session.sheets()
    for name, log in logs.items():
        _log_card(name, log, sheets, p)
    for name in [n for n in ss.user_sheets if n not in {session.sheet_choice(x) for x in logs}]:
        with st.container(border=True):
            st.markdown(f"**{common.esc(name)}** (loading sheet, not paired with a log yet)")
            try:
                compute.loading_sheet(ss.user_sheets[name])
            except TrimlogError as exc:
                common.show_error(exc)
            st.button("Remove", key=f"rm_{name}", on_click=_remove, args=(name,))
    if logs:
        st.button("See the results", type="primary", on_click=common.go_to, args=("Results",))


def _log_card(name: str, log: session.FileBytes, sheets: dict, p) -> None:
    ss = st.session_state
    is_demo = name not in ss.user_logs
    chosen = session.sheet_choice(name)
    with st.container(border=True):
        head, tail = st.columns([5, 1])
        head.markdown(f"**{common.esc(name)}**" + ("  (demo)" if is_demo else ""))
        if not is_demo:
            tail.button("Remove", key=f"rm_{name}", on_click=_remove, args=(name,))
        # one field a row: the sheet's name, the label and the notes are seen whole
        options = [NO_SHEET, *sheets]
        st.selectbox("Loading sheet", options,
                            index=options.index(chosen) if chosen else 0,
                            key=f"sheet_{log.digest}", on_change=_set_sheet,
                            args=(log.digest,))
        try:
            found = compute.flight_data(log, sheets.get(chosen) if chosen else None,
                                        ss.profile_text, ss.profile_source, ss.min_hold_s)
        except TrimlogError as exc:
            common.show_error(exc)
            return
        sheet = found[0].loading
        for store, label in (("labels", "Label"), ("notes", "Notes")):
            default = ss[store].get(log.digest)
            if default is None and sheet is not None:
                default = sheet.label if store == "labels" else sheet.notes
            ss[store].setdefault(log.digest, default or "")
            # notes wrap in a text area; the label is one line
            field = st.text_input if store == "labels" else st.text_area
            field(label, value=ss[store][log.digest], key=f"{store}_{log.digest}",
                  on_change=_set_text, args=(store, log.digest),
                  help="Kept with the flight when you save it to the history",
                  **({"height": 68} if store == "notes" else {}))
        first = found[0]
        weighing_form.render(log, p)  # weight and CG from scale readings, into the sheet form
        loading_form.render(log, first.flight)
        kind = "time-series log" if first.log.kind == "time_series" else "point table"
        n_points = sum(len(f.points) for f in found)
        head.markdown(
            f"{kind}, {len(first.log.data)} rows; flight "
            + ", ".join(common.esc(f.flight) for f in found)
            + f": **{n_points} stabilized points**"
        )
        assumed = assumed_units(first.log.findings)
        if assumed:
            common.warn(f"Units assumed (no unit in the header): {assumed}. "
                        f"{ASSUMED_NOTE[:1].upper()}{ASSUMED_NOTE[1:]}.")
        if n_points == 0:
            st.warning("No stabilized point found in this log: check it, or shorten the "
                       "minimum hold.")
        notes = [*first.log.warnings, *(f"{d.count} {d.reason}" for d in first.log.dropped
                                        if d.count)]
        with st.expander(f"How it was read ({len(notes)} notes)"):
            st.caption(common.esc(first.log.kind_reason))
            st.markdown("\n".join(f"- {common.esc(n)}" for n in notes) or "Nothing to note.")
