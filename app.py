"""Thin launcher of the trimlog dashboard for a source checkout.

``streamlit run app.py`` runs the router that ships inside the package
(:mod:`trimlog.dashboard.app`); ``trimlog dashboard`` does the same from an
installed wheel.
"""

import runpy

runpy.run_module("trimlog.dashboard.app", run_name="__main__")
