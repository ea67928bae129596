"""Pages of the trimlog dashboard (``app.py`` routes to them).

Each page module has one ``render()`` that gathers widgets and calls the
package; nothing is computed here.  :mod:`.session` keeps what the user
gave (profile text, uploaded bytes, point choices, labels) in Streamlit's
session state, :mod:`.compute` wraps the package's heavy calls in caches,
and :mod:`.common` holds the pieces every page shows (cautions, errors,
number formatting).
"""
