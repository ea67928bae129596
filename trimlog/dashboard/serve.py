"""The dashboard's server process, with the analysis stack loaded before it answers.

``trimlog dashboard`` starts ``python -m trimlog.dashboard.serve`` followed by
Streamlit's options.  Streamlit imports what a page needs only when the first
page is asked for, so the first user of a fresh server would wait for numpy,
pandas, matplotlib and the pages' modules to load and for matplotlib to find
its fonts (about 2.5 s on a 2-core machine).  Here that is done once, before
the server listens.  Once Streamlit's runtime exists, a thread also reads, fits and
draws what a new visitor's Results page shows (the demo flights) into the caches the
page reads, while the browser is still loading Streamlit's scripts.

Examples
--------
>>> from trimlog.dashboard import serve
>>> serve.streamlit_argv(["--server.port", "8601"])[:2]
['streamlit', 'run']
"""

from __future__ import annotations

import importlib
import logging
import sys
import threading
import time
from collections.abc import Sequence
from pathlib import Path

#: The script Streamlit runs for each page view (the router of :mod:`trimlog.dashboard`).
APP = Path(__file__).resolve().with_name("app.py")

#: Modules the first Results page needs, imported before the server listens.  The
#: dashboard's own modules are left to the first page: those that define Streamlit caches
#: must be imported once the server's runtime exists (their caches belong to it).
WARM_MODULES = (
    "streamlit",
    # Streamlit's own, loaded by a first page's elements: the emoji table checks the page
    # icon and the warning boxes' icons (~0.15 s to import), the icon names, and Arrow's
    # pandas conversion for the tables.
    "streamlit.emojis",
    "streamlit.material_icon_names",
    "pyarrow.pandas_compat",
    "trimlog.history.service",
    "trimlog.pipeline.chain",
    "trimlog.views.json_export",
    "trimlog.views.plots",
)


def warm() -> None:
    """Import the first page's modules and lay out one line of text with matplotlib.

    Pillow's common image plugins are loaded too (matplotlib and Streamlit use
    Pillow).  The text layout makes matplotlib load its font list and the default
    font, which the first figure would otherwise do while the user waits.
    """
    for name in WARM_MODULES:
        importlib.import_module(name)
    from PIL import Image

    Image.preinit()  # the image plugins st.image's first figure would load
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    figure = Figure(figsize=(2, 1), dpi=50)
    figure.text(0.5, 0.5, "trimlog")
    FigureCanvasAgg(figure).draw()


def precompute_when_serving(timeout_s: float = 120.0) -> None:
    """Once Streamlit's runtime exists, compute the first Results page into its caches.

    Runs in a thread of the server beside Streamlit's own (started by :func:`main`).
    The caches must be the runtime's, so this waits for it; a page that asks meanwhile
    waits for the value being computed (Streamlit holds one lock per cached value).
    """
    from streamlit import runtime

    deadline = time.monotonic() + timeout_s
    while not runtime.exists():
        if time.monotonic() > deadline:
            return
        time.sleep(0.05)
    # Cached calls outside a page log "missing ScriptRunContext" (harmless, Streamlit says);
    # quiet only while this runs.
    context_log = logging.getLogger("streamlit.runtime.scriptrunner_utils.script_run_context")
    level = context_log.level
    context_log.setLevel(logging.ERROR)
    try:
        importlib.import_module("trimlog.dashboard.results").precompute_first_page()
    except Exception:  # noqa: BLE001 - only a warm-up: the page computes and reports it itself
        return
    finally:
        context_log.setLevel(level)


def streamlit_argv(options: Sequence[str]) -> list[str]:
    """Streamlit's command line that runs the dashboard with ``options``."""
    return ["streamlit", "run", str(APP), *options]


def main(options: Sequence[str] | None = None) -> None:
    """Load the stack, then run Streamlit's server on the dashboard (does not return)."""
    warm()
    from streamlit.web import cli

    threading.Thread(target=precompute_when_serving, name="trimlog-first-page",
                     daemon=True).start()

    sys.argv = streamlit_argv(sys.argv[1:] if options is None else options)
    cli.main()


if __name__ == "__main__":
    main()
