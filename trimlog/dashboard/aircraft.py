"""Aircraft page: the profile in use, set up with a form, uploaded or edited as TOML text."""

from __future__ import annotations

import streamlit as st

from trimlog.dashboard import common, compute, profile_form, session
from trimlog.demo import model as demo
from trimlog.errors import TrimlogError


def _try_use(text: str, source: str, *, keep: bool = True) -> None:
    """Take a profile if it reads; otherwise keep the old one and remember why not.

    A profile taken is kept with its aircraft in the history (``keep``), so
    that a reload or a new session opens on it, not on the demo.
    """
    ss = st.session_state
    try:
        p = compute.profile(text, source)
    except TrimlogError as exc:
        ss.profile_error = str(exc)
        return
    ss.profile_error = ""
    ss.profile_text, ss.profile_source = text, source
    ss.profile_editor = text
    if keep:
        try:
            compute.store_profile(p.name, text)
        except TrimlogError as exc:
            ss.profile_error = f"the profile is used but could not be kept in the history: {exc}"


def restore_saved_aircraft() -> None:
    """On a new session: open on the aircraft kept last in the history (the demo only when none).

    Run once per session, after :func:`trimlog.dashboard.session.init`.
    """
    ss = st.session_state
    if ss.get("restore_checked"):
        return
    ss.restore_checked = True
    records = compute.stored_aircraft()
    if not records:
        return
    latest = max(records, key=lambda r: r.profile_imported_at)
    _use_stored(latest)


def _use_stored(record) -> None:
    ss = st.session_state
    _try_use(record.profile_text, f"history: {record.name}", keep=False)
    if not ss.profile_error and record.name != compute.profile(
            demo.PROFILE_TOML, session.DEMO_SOURCE).name:
        ss.use_demo = False


def _switch_aircraft() -> None:
    name = st.session_state.get("stored_aircraft_choice")
    record = next((r for r in compute.stored_aircraft() if r.name == name), None)
    if record is not None:
        _use_stored(record)
        compute.store_profile(record.name, record.profile_text)


def _apply_upload() -> None:
    st.session_state.profile_error_from = "upload"
    up = st.session_state.get("profile_upload")
    if up is None:
        return
    try:
        text = up.getvalue().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        st.session_state.profile_error = (
            f"{up.name}: not UTF-8 text (byte {exc.start}); save the profile as UTF-8"
        )
        return
    _try_use(text, up.name)
    if not st.session_state.profile_error:
        # The demo flights belong to the demo aircraft, not to an uploaded one.
        st.session_state.use_demo = False


def _apply_edit() -> None:
    st.session_state.profile_error_from = "text"
    source = st.session_state.profile_source
    if not source.endswith(" (edited)"):
        source += " (edited)"
    _try_use(st.session_state.profile_editor, source)


def _use_form(text: str, source: str) -> None:
    """Take the form's profile; a problem is shown beside the form's button."""
    ss = st.session_state
    ss.profile_error_from = "form"
    _try_use(text, source)
    if ss.profile_error:
        ss.form_error = ss.profile_error
        ss.profile_error = ""


def _back_to_demo() -> None:
    _try_use(demo.PROFILE_TOML, session.DEMO_SOURCE, keep=False)
    st.session_state.use_demo = bool(st.session_state.demo_logs)


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Aircraft")
    st.caption(
        "The profile holds the geometry, CG limits, policy and logger channel names. "
        "The invented demo aircraft is loaded to start with; fill in the form, upload a "
        "profile or edit its text."
    )
    p = compute.profile(ss.profile_text, ss.profile_source)
    st.subheader(common.esc(p.name))
    st.caption(f"Profile in use: {common.esc(ss.profile_source)}")
    cols = st.columns(4)
    cols[0].metric("Wing area", common.num(p.wing_area_ft2, ".1f", "ft²"))
    cols[1].metric("MAC", common.num(p.mac_in, ".1f", "in"),
                   help=f"leading edge at {p.lemac_in:.1f} in aft of the datum")
    cols[2].metric("CG limits [%MAC]", f"{p.cg_forward_pct_mac:.1f} to {p.cg_aft_pct_mac:.1f}",
                   help=f"{p.cg_forward_in:.1f} to {p.cg_aft_in:.1f} in aft of the datum")
    cols[3].metric("Minimum static margin", common.num(p.min_static_margin_pct_mac, ".1f",
                                                       "%MAC"))
    for w in p.warnings:
        common.warn(w)
    if p.defaults_used:
        st.info(common.esc("Assumed because the profile does not say: "
                           + "; ".join(p.defaults_used)))

    stored = compute.stored_aircraft()
    if stored:
        names = [r.name for r in stored]
        left, right = st.columns([3, 1])
        left.selectbox("Aircraft kept in the history", names, key="stored_aircraft_choice",
                       index=names.index(p.name) if p.name in names else 0)
        right.button("Use this aircraft", on_click=_switch_aircraft)
    st.subheader("Set up the aircraft")
    profile_form.render(p, _use_form)
    st.subheader("Or give the profile as a TOML file or text")
    st.file_uploader("Upload a profile (TOML)", type=["toml"], key="profile_upload")
    st.button("Use the uploaded profile", on_click=_apply_upload,
              disabled=ss.get("profile_upload") is None)
    if ss.get("profile_error") and ss.get("profile_error_from") == "upload":
        common.show_error(ss.profile_error, "Profile not changed")
    ss.setdefault("profile_editor", ss.profile_text)
    st.text_area("Profile text (TOML)", key="profile_editor", height=380)
    left, right = st.columns(2)
    left.button("Apply the edited text", type="primary", on_click=_apply_edit)
    right.button("Back to the demo aircraft", on_click=_back_to_demo)
    if ss.get("profile_error") and ss.get("profile_error_from") != "upload":
        # beside the button that was clicked, not at the top of the page out of view
        common.show_error(ss.profile_error, "Profile not changed")
