"""A loading sheet made on the page, per flight: date, weight and CG, fuel, stabilizer setting.

The form writes the same TOML a loading sheet file holds
(:func:`trimlog.input.loading_sheet.read_loading_sheet` reads it back, so every rule of
a sheet applies) and pairs it with the log.
"""

from __future__ import annotations

import datetime as dt
import json

import streamlit as st

from trimlog.dashboard import common, session
from trimlog.errors import TrimlogError
from trimlog.input.loading_sheet import read_loading_sheet


def sheet_text(flight: str, *, date: dt.date | None, weight_lb: float, cg: str, fuel_gal: float,
               stab_setting: str, stab_incidence_deg: float | None,
               cg_uncertainty: str) -> str:
    """The TOML of a loading sheet from the form's values (strings quoted as JSON)."""
    lines = [f"flight = {json.dumps(flight)}"]
    if date is not None:
        lines.append(f"date = {date.isoformat()}")
    lines += ["", "[takeoff]", f'weight = "{weight_lb:g} lb"', f"cg = {json.dumps(cg)}",
              f'fuel = "{fuel_gal:g} gal"']
    if cg_uncertainty.strip():
        lines.append(f"cg_uncertainty = {json.dumps(cg_uncertainty.strip())}")
    config = []
    if stab_setting.strip():
        config.append(f"stab_setting = {json.dumps(stab_setting.strip())}")
    if stab_incidence_deg is not None:
        config.append(f'stab_incidence = "{stab_incidence_deg:g} deg"')
    if config:
        lines += ["", "[config]", *config]
    return "\n".join(lines) + "\n"


def _blank(key: str) -> dict:
    """``value=None`` unless the field was filled already (e.g. from the scale readings)."""
    return {} if key in st.session_state else {"value": None}


def render(log: session.FileBytes, flight: str) -> None:
    """An expander with the form for one log's loading sheet."""
    with st.expander("Make a loading sheet for this flight"):
        with st.form(key=f"sheet_form_{log.digest}"):
            c1, c2, c3 = st.columns(3)
            date = c1.date_input("Date flown", value=None, key=f"sf_date_{log.digest}")
            weight = c2.number_input("Takeoff weight [lb]", min_value=1.0,
                                     key=f"sf_w_{log.digest}", **_blank(f"sf_w_{log.digest}"))
            cg = c3.text_input("Takeoff CG (\"72.3 in\" or \"27 %MAC\")", key=f"sf_cg_{log.digest}")
            c4, c5, c6 = st.columns(3)
            fuel = c4.number_input("Fuel at takeoff [US gal]", min_value=0.0,
                                   key=f"sf_f_{log.digest}", **_blank(f"sf_f_{log.digest}"))
            setting = c5.text_input("Stabilizer setting (label)", key=f"sf_s_{log.digest}")
            incidence = c6.number_input("Stabilizer incidence [deg, leading edge up +]",
                                        value=None, key=f"sf_i_{log.digest}")
            sigma = st.text_input("CG uncertainty, 1 sigma (\"0.5 in\" or \"0.3 %MAC\"; "
                                  "optional)", key=f"sf_u_{log.digest}")
            made = st.form_submit_button("Use this loading sheet")
        if not made:
            return
        if weight is None or fuel is None or not cg.strip():
            st.error("Give the takeoff weight, CG and fuel.")
            return
        text = sheet_text(flight, date=date, weight_lb=weight, cg=cg.strip(), fuel_gal=fuel,
                          stab_setting=setting, stab_incidence_deg=incidence,
                          cg_uncertainty=sigma)
        name = f"{log.stem}.loading.toml"
        try:
            read_loading_sheet(text.encode("utf-8"), name=name)
        except TrimlogError as exc:
            common.show_error(exc, "Loading sheet not made")
            return
        session.add_uploads([(name, text.encode("utf-8"))])
        st.session_state.sheet_for[log.digest] = name
        st.rerun()
