"""Page blocks shown on more than one page (Results, and History for the saved flights)."""

from __future__ import annotations

import streamlit as st

from trimlog import cautions
from trimlog.dashboard import common
from trimlog.dashboard.common import interval
from trimlog.pipeline.chain import Analysis
from trimlog.views.formatting import elevator_words, incidence_words


def shim_block(a: Analysis) -> None:
    """The shim recommendation of an analysis (Results, and History for the saved flights)."""
    st.subheader("Stabilizer incidence and shim")
    rec = a.primary.incidence
    with st.container(border=True, key="shim"):
        if rec is None:
            st.markdown("**No shim recommendation yet.** "
                        + common.esc(a.primary.incidence_reason or ""))
        else:
            if rec.shim_recommended:
                from trimlog.views import report

                st.markdown(f"**Shim: {rec.shim_thickness_in:.3f} in "
                            f"({rec.shim_thickness_mm:.2f} mm) under the {rec.shim_location}.**")
            else:
                st.markdown("**No shim recommended from these data** (the reason is below).")
            cols = st.columns(4)
            cols[0].metric("Elevator at cruise", f"{rec.elevator_at_cruise_deg:+.2f} deg",
                           help="trailing edge down positive")
            cols[0].caption(f"**{elevator_words(rec.elevator_at_cruise_deg)}**; 95 %: "
                            f"{interval(rec.elevator_at_cruise_ci95_deg, '+.2f')} deg")
            cols[1].metric("Incidence change", f"{rec.change_deg:+.2f} deg",
                           help="leading edge up positive")
            cols[1].caption(f"**{incidence_words(rec.change_deg)}**; 95 %: "
                            f"{interval(rec.change_ci95_deg, '+.2f')} deg")
            if rec.shim_recommended:
                cols[2].metric("Nearest shim stock", f"{rec.shim_stock_thickness_in:.3f} in",
                               help=f"{rec.shim_stock} stock")
                cols[2].caption(" + ".join(f"{t:.3f}" for t in rec.shim_stock_sheets)
                                + f" in = {rec.shim_stock_thickness_mm:.2f} mm")
            cols[3].metric("Elevator effectiveness tau", f"{rec.tau:.2f}")
            cols[3].caption(f"{rec.tau_source}; 95 %: {interval(rec.tau_ci95, '.2f')}")
            st.markdown(rec.words)
            if rec.shim_recommended:
                from trimlog.views import report

                st.markdown("Shim with its uncertainty: " + report.shim_text(
                    rec.to_json(), a.profile.stabilizer_attach_spacing_in) + ".")
            st.caption(rec.tau_explanation + ". " + rec.change_method + ".")
            for w in rec.warnings:
                common.warn(w)
        common.caution_list(cautions.INCIDENCE)
