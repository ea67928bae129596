"""Page blocks shown on more than one page (Results, and History for the saved flights)."""

from __future__ import annotations

import streamlit as st

from trimlog import cautions
from trimlog.dashboard import common
from trimlog.dashboard.common import interval
from trimlog.pipeline.chain import Analysis
from trimlog.views import shim_drawing, shim_text
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
            inc = rec.to_json()
            if rec.shim_recommended:
                st.markdown(f"**Shim: {shim_text.sheets_text(inc)} under the "
                            f"{shim_text.where_text(inc)}.**")
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
                cols[2].metric("Cut: sheets stacked", f"{rec.shim_stock_thickness_in:.3f} in",
                               help=f"{rec.shim_stock} stock; the total of the sheets listed")
                cols[2].caption(shim_text.sheets_text(inc))
            cols[3].metric("Elevator effectiveness tau", f"{rec.tau:.2f}")
            cols[3].caption(f"{rec.tau_source}; 95 %: {interval(rec.tau_ci95, '.2f')}")
            if rec.shim_recommended:
                st.markdown("Computed shim " + shim_text.exact_text(inc) + "; "
                            + shim_text.residual_text(inc) + ".")
                if shim_text.steps_text(inc):
                    common.warn(shim_text.steps_text(inc))
            st.markdown(rec.words)
            st.pyplot(shim_drawing.shim_side_view(
                inc, a.profile.stabilizer_attach_spacing_in).figure, clear_figure=False)
            st.caption(rec.tau_explanation + ". " + rec.change_method + ".")
            for w in rec.warnings:
                common.warn(w)
        common.caution_list(cautions.INCIDENCE)
