"""The dashboard's server process, with the analysis stack loaded before it answers.

``trimlog dashboard`` starts ``python -m trimlog.dashboard.serve`` followed by
Streamlit's options.  Streamlit imports what a page needs only when the first
page is asked for, so the first user of a fresh server would wait for numpy,
pandas, matplotlib and the pages' modules to load and for matplotlib to find
its fonts (about 2.5 s on a 2-core machine).  Here that is done once, before
the server listens; the page then only computes.

Examples
--------
>>> from trimlog.dashboard import serve
>>> serve.streamlit_argv(["--server.port", "8601"])[:2]
['streamlit', 'run']
"""

from __future__ import annotations

import importlib
import sys
from collections.abc import Sequence
from pathlib import Path

#: The script Streamlit runs for each page view (the router of :mod:`trimlog.dashboard`).
APP = Path(__file__).resolve().with_name("app.py")

#: Modules the first Results page needs, imported before the server listens.  The
#: dashboard's own modules are left to the first page: those that define Streamlit caches
#: must be imported once the server's runtime exists (their caches belong to it).
WARM_MODULES = (
    "streamlit",
    "trimlog.history.service",
    "trimlog.pipeline.chain",
    "trimlog.views.json_export",
    "trimlog.views.plots",
)


def warm() -> None:
    """Import the first page's modules and lay out one line of text with matplotlib.

    The text layout makes matplotlib load its font list and the default font,
    which the first figure would otherwise do while the user waits.
    """
    for name in WARM_MODULES:
        importlib.import_module(name)
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    figure = Figure(figsize=(2, 1), dpi=50)
    figure.text(0.5, 0.5, "trimlog")
    FigureCanvasAgg(figure).draw()


def streamlit_argv(options: Sequence[str]) -> list[str]:
    """Streamlit's command line that runs the dashboard with ``options``."""
    return ["streamlit", "run", str(APP), *options]


def main(options: Sequence[str] | None = None) -> None:
    """Load the stack, then run Streamlit's server on the dashboard (does not return)."""
    warm()
    from streamlit.web import cli

    sys.argv = streamlit_argv(sys.argv[1:] if options is None else options)
    cli.main()


if __name__ == "__main__":
    main()
