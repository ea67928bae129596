"""The dashboard's router: the sidebar and the pages of :mod:`trimlog.dashboard`.

Streamlit runs this file as a script (``trimlog dashboard`` starts it on
localhost with an explicit upload limit; the top-level ``app.py`` of a source
checkout runs it too).
"""

import importlib

import streamlit as st

from trimlog.dashboard import aircraft, common, session
from trimlog.errors import TrimlogError
from trimlog.views.formatting import DISPLAY_SYSTEMS

#: Page name -> module of :mod:`trimlog.dashboard` that draws it.  A page's module is
#: imported when the page is first shown: a cold start's first page does not wait for
#: the imports of the others (the history store's database layer, the calibration's
#: figures).
PAGES = {
    "Results": "results",
    "Aircraft": "aircraft",
    "Flights": "flights",
    "Points": "points",
    "History": "history_page",
    "Calibration": "calibration_page",
}
CAPTIONS = [
    "neutral points, margins, shim",
    "profile of the airplane",
    "upload logs and loading sheets",
    "check the stabilized points",
    "saved flights, trend, next CG",
    "airspeed from GPS legs",
]
UNIT_WORDS = {"US": "lb, kt, lbf", "SI": "kg, m/s, N"}
SCROLL_TO_TOP = (
    "<script>for (const e of document.querySelectorAll("
    "'[data-testid=stMain], [data-testid=stAppScrollToBottomContainer], "
    "[data-testid=stAppViewContainer]')) e.scrollTo(0, 0); window.scrollTo(0, 0);</script>"
)

#: Nothing is cut short (issue 20): tile values shrink with the window and, like tile and
#: widget labels, wrap onto a second line rather than end in an ellipsis.
NO_CLIPPING = """<style>
[data-testid="stMetricValue"] { font-size: clamp(1.2rem, 2.3vw, 2.25rem); }
[data-testid="stMetricValue"], [data-testid="stMetricValue"] *,
[data-testid="stMetricLabel"], [data-testid="stMetricLabel"] *,
[data-testid="stMetricDelta"], [data-testid="stMetricDelta"] *,
[data-testid="stWidgetLabel"], [data-testid="stWidgetLabel"] * {
  white-space: normal !important; overflow: visible !important;
  text-overflow: clip !important; overflow-wrap: break-word; }
</style>"""

st.set_page_config(page_title="trimlog", page_icon="\u2708\ufe0f", layout="wide")
st.html(NO_CLIPPING)
# Never a traceback in the page, whichever way the app was started (issue 19).
st.set_option("client.showErrorDetails", "none")
session.init()
aircraft.restore_saved_aircraft()
st.session_state.setdefault("page", "Results")
with st.sidebar:
    st.markdown("### trimlog")
    st.caption("Stabilized-trim flight-test analysis. Estimates from your data, never an approval.")
    st.radio("Page", list(PAGES), captions=CAPTIONS, key="page")
    st.session_state.setdefault("display_units", "US")
    st.segmented_control("Display units", DISPLAY_SYSTEMS, key="display_units",
                         format_func=UNIT_WORDS.__getitem__,
                         help="Weights, speeds and forces in the tables: lb, kt, lbf or kg, "
                         "m/s, N. Only what is shown changes; trimlog computes the same.")
if st.session_state.get("page_shown") != st.session_state.page:
    # A page opened from a button at the bottom of another starts at its top, where its
    # headline numbers and the estimate statement are, not where the last one was scrolled.
    st.session_state.page_shown = st.session_state.page
    st.html(SCROLL_TO_TOP, unsafe_allow_javascript=True)
try:
    importlib.import_module(f"trimlog.dashboard.{PAGES[st.session_state.page]}").render()
except TrimlogError as exc:  # a page that did not catch a user's mistake itself
    common.show_error(exc, "This input cannot be used")
except Exception as exc:  # noqa: BLE001 - the page shows a clear message, not a traceback
    st.error(
        f"Internal error in trimlog ({type(exc).__name__}). This is a bug in trimlog, not a "
        "problem with your files as far as trimlog can tell; nothing was saved by the failed "
        "step. Please report it with the files you used.", icon=":material/error:")
