"""Calibration page: airspeed calibration from GPS legs, and one click to use its table.

Upload calibration logs or leg tables (IAS, pressure altitude, GPS ground speed
and track); the demo's calibration flight is shown to start with.  The page
shows each speed's TAS, wind, CAS and position error with their intervals, the
circle fit per speed and ΔV against IAS, every warning, and a button that puts
the table into the profile in use, so that every other page re-analyses the
flights with it.
"""

from __future__ import annotations

import pandas as pd
import streamlit as st
from matplotlib.figure import Figure

from trimlog import cautions
from trimlog.dashboard import common, compute, session
from trimlog.demo import calibration as democal
from trimlog.errors import TrimlogError
from trimlog.findings import Severity, by_severity
from trimlog.input.profile_writer import replace_calibration
from trimlog.pipeline import calibration as cal
from trimlog.views.calibration_report import circle_fits, position_error_plot

_DEMO_FILE = session.DEMO_DIR / democal.CALIBRATION_FILE


@st.cache_resource(max_entries=8, show_spinner="Finding the legs and fitting the circles...")
def _calibrate(files: tuple[tuple[str, bytes], ...], profile_text: str,
               source: str) -> cal.CalibrationResult:
    profile = compute.profile(profile_text, source)
    logs = [cal.read_calibration_log(raw, profile, name=name) for name, raw in files]
    return cal.calibrate(logs)


def _files() -> tuple[tuple[str, bytes], ...]:
    ss = st.session_state
    if ss.get("cal_files"):
        return tuple(ss.cal_files.items())
    if ss.get("use_demo") and _DEMO_FILE.is_file():
        return ((_DEMO_FILE.name, _DEMO_FILE.read_bytes()),)
    return ()


def _take_uploads() -> None:
    ss = st.session_state
    ups = ss.get("cal_upload") or []
    ss.cal_files = {u.name: u.getvalue() for u in ups}


def _use_table(result: cal.CalibrationResult) -> None:
    ss = st.session_state
    try:
        text = replace_calibration(
            ss.profile_text, result.table_ias_kt, result.table_cas_kt,
            comment="from the dashboard's airspeed calibration of "
                    + ", ".join(result.sources), source=ss.profile_source)
    except TrimlogError as exc:
        ss.cal_error = str(exc)
        return
    ss.cal_error = ""
    source = ss.profile_source
    ss.profile_text = text
    ss.profile_source = source if source.endswith(" (calibrated)") else source + " (calibrated)"
    ss.profile_editor = text
    ss.cal_used = True


def _speeds_table(result: cal.CalibrationResult) -> pd.DataFrame:
    return pd.DataFrame([{
        "KIAS": round(s.ias_kt, 1), "Hp ft": round(s.pressure_alt_ft),
        "legs": s.fit.n_legs, "KTAS": round(s.fit.tas_kt, 1),
        "wind kt": round(s.fit.wind_kt, 1), "from deg": round(s.fit.wind_from_deg),
        "KCAS": round(s.cas_kt, 1), "KCAS 95 %": common.interval(s.cas_ci95_kt),
        "dV kt": round(s.delta_v_kt, 2), "dV 95 %": common.interval(s.delta_v_ci95_kt, "+.1f"),
        "altitude correction ft": round(s.altitude_correction_ft),
    } for s in result.speeds])


def render() -> None:
    """Draw the page."""
    ss = st.session_state
    st.header("Airspeed calibration")
    st.caption("Fly three or more straight legs on headings 90-120 deg apart at each indicated "
               "speed and altitude; the GPS ground velocities give the true airspeed and the "
               "wind, and so the position error CAS − IAS.")
    common.estimate_note()
    st.file_uploader("Calibration logs or leg tables (CSV)", type=["csv", "txt"],
                     accept_multiple_files=True, key="cal_upload", on_change=_take_uploads)
    files = _files()
    if not files:
        st.info("Upload a log with IAS, pressure altitude, GPS ground speed and track.")
        return
    st.caption("Calibrating from: " + common.esc(", ".join(name for name, _ in files)))
    try:
        result = _calibrate(files, ss.profile_text, ss.profile_source)
    except TrimlogError as exc:
        common.show_error(exc, "Cannot read the calibration")
        return
    if ss.get("cal_error"):
        common.show_error(ss.cal_error, "Profile not changed")
    if not result.speeds:
        st.error("Cannot say yet: no speed had three or more steady legs on spread headings.")
    else:
        st.dataframe(_speeds_table(result), hide_index=True, key="cal_speeds")
        fig = Figure(figsize=(8.0, 3.6))
        position_error_plot(result, fig.add_axes((0.1, 0.15, 0.86, 0.8)))
        st.pyplot(fig)
        rows = -(-len(result.speeds) // 3)
        fig = Figure(figsize=(8.0, 2.8 * rows))
        circle_fits(result, fig, (0.02, 0.02, 0.96, 0.96))
        st.pyplot(fig)
    for f in by_severity(result.findings):
        if f.severity.rank >= Severity.CAUTION.rank:
            common.warn(f.line())
        else:
            st.caption(common.esc(f.line()))
    if result.table_ias_kt:
        st.subheader("Position-error table")
        st.dataframe(pd.DataFrame({"IAS kt": result.table_ias_kt,
                                   "CAS kt": result.table_cas_kt}), hide_index=True,
                     key="cal_table")
        st.button("Use this table in the profile and re-analyse", type="primary",
                  on_click=_use_table, args=(result,), key="cal_use")
        if ss.get("cal_used"):
            st.success("The profile in use now carries this table; the Results page "
                       "re-analyses the flights with it.")
    common.caution_list(cautions.AIRSPEED_CALIBRATION)
