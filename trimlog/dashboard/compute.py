"""Cached thin wrappers around the package's heavy calls.

Results are frozen objects shared between reruns and sessions with
``st.cache_resource`` (no copy; pages only read them).  Bytes that leave the
page (figures, JSON, CSV, PDF) are cached with ``st.cache_data``.  Cache keys
are the SHA-256 of the inputs (:class:`~trimlog.dashboard.session.Inputs`),
so a widget change on analysed data only redraws.

A :class:`~trimlog.errors.TrimlogError` raised inside is never cached: it
propagates to the page, which shows it.
"""

from __future__ import annotations

import io
import json
import tempfile
import threading
import time
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import streamlit as st

from trimlog.dashboard.session import FileBytes, Inputs
from trimlog.errors import TrimlogError
from trimlog.input.loading_sheet import LoadingSheet, read_loading_sheet
from trimlog.input.profile import AircraftProfile, parse_profile
from trimlog.pipeline import chain as analysis
from trimlog.pipeline.chain import Analysis, FlightData
from trimlog.views.json_export import analysis_to_dict, points_records

_HASH = {FileBytes: lambda f: f.digest, Inputs: lambda i: i.key}


@st.cache_resource(max_entries=8, show_spinner=False)
def profile(text: str, source: str) -> AircraftProfile:
    """The aircraft profile from its TOML text."""
    return parse_profile(text, source=source)


@st.cache_resource(max_entries=64, show_spinner=False, hash_funcs=_HASH)
def loading_sheet(sheet: FileBytes) -> LoadingSheet:
    """A loading sheet from its bytes."""
    return read_loading_sheet(sheet.raw, name=sheet.name)


# A one-hour 50 Hz log holds some 15 MB once read: keep a working set, not every version.
@st.cache_resource(max_entries=24, show_spinner="Reading the log and finding its points...",
                   hash_funcs=_HASH)
def flight_data(
    log: FileBytes,
    sheet: FileBytes | None,
    profile_text: str,
    profile_source: str,
    min_hold_s: float | None,
) -> tuple[FlightData, ...]:
    """The flights of one log (with its loading sheet), points found."""
    p = profile(profile_text, profile_source)
    loading = None if sheet is None else loading_sheet(sheet)
    return tuple(analysis.load_flight_bytes(log.raw, log.name, p, loading=loading,
                                            min_hold_s=min_hold_s))


def flights_of(inputs: Inputs) -> list[FlightData]:
    """Every flight of the inputs (each log read once, then cached)."""
    out: list[FlightData] = []
    for log, sheet in inputs.logs:
        out.extend(flight_data(log, sheet, inputs.profile_text, inputs.profile_source,
                               inputs.min_hold_s))
    return out


@st.cache_resource(max_entries=8, show_spinner=False)
def _prepared(data_key: str, _inputs: Inputs) -> analysis.PreparedFlights:
    """The inputs' flights ordered and reduced, whatever points are chosen (by ``data_key``)."""
    return analysis.prepare(flights_of(_inputs),
                            profile(_inputs.profile_text, _inputs.profile_source))


@st.cache_resource(max_entries=16, show_spinner="Fitting the trim lines...", hash_funcs=_HASH)
def run_analysis(inputs: Inputs) -> Analysis:
    """The analysis of the inputs.

    Choices of points that no longer exist (their log was removed, or the
    minimum hold changed) are not passed on.
    """
    flights = flights_of(inputs)
    present = {(f.flight, int(p)) for f in flights for p in f.points.get("point", [])}
    reasons = {(f, p): r for f, p, r in inputs.exclusion_reasons if (f, p) in present}
    if inputs.programme is not None:
        from trimlog.history import programme

        with open_history() as store:
            return programme.analyze_programme(
                store, flights, profile=profile(inputs.profile_text, inputs.profile_source),
                exclusions=inputs.exclusions, inclusions=inputs.inclusions,
                min_hold_s=inputs.min_hold_s, drop_unknown_choices=True,
                exclusion_reasons=reasons)
    # a new choice of points on the same files reuses their reduction (a tick box)
    return analysis.analyze_prepared(_prepared(inputs.data_key, inputs),
                                     exclusions=[e for e in inputs.exclusions if e in present],
                                     inclusions=[i for i in inputs.inclusions if i in present],
                                     exclusion_reasons=reasons)


#: Keys of the inputs whose analysis this server process has computed (and caches).
_analysed: set[str] = set()


def analysis_with_status(inputs: Inputs) -> Analysis:
    """:func:`run_analysis`, with a status box naming each stage while it computes.

    Each log is read and its points found (one cached call per log), then
    the fits run; the box names the file and the stage, and goes away when
    the analysis is done.  On cached inputs nothing is shown.
    """
    if inputs.key in _analysed:
        return run_analysis(inputs)
    slot = st.empty()
    n = len(inputs.logs)
    with slot.status("Analysing the flights...", expanded=False) as box:
        for k, (log, sheet) in enumerate(inputs.logs, start=1):
            box.update(label=f"Reading {log.name} and finding its points ({k} of {n})")
            flight_data(log, sheet, inputs.profile_text, inputs.profile_source,
                        inputs.min_hold_s)
        box.update(label="Fitting the trim lines, margins and shim")
        a = run_analysis(inputs)
        box.update(label="Analysed", state="complete")
    slot.empty()
    _analysed.add(inputs.key)
    return a


def precompute(inputs: Inputs) -> Analysis:
    """Read the logs and fit the inputs into the caches, with no page to show progress on.

    The server's warm-up (:func:`trimlog.dashboard.results.precompute_first_page`); a page
    asking meanwhile waits for these results rather than computing them again.
    """
    a = run_analysis(inputs)  # reads each log through flight_data, as the page does
    _analysed.add(inputs.key)
    return a


#: Resolution of the dashboard's figures [dots per inch].
FIGURE_DPI = 110


def _png(ax) -> bytes:
    from trimlog.views.plots import for_screen

    buf = io.BytesIO()
    # fast zlib level (lossless, same pixels): the image goes to the browser, not an archive
    for_screen(ax.figure).savefig(buf, format="png", dpi=FIGURE_DPI,
                                  pil_kwargs={"compress_level": 1})
    return buf.getvalue()


@st.cache_data(max_entries=64, show_spinner=False, hash_funcs=_HASH)
def figure(kind: str, inputs: Inputs) -> bytes:
    """PNG of a figure of :mod:`trimlog.views.plots` (or its maneuvering figures)."""
    from trimlog.views import maneuver_plots, plots

    module = plots if hasattr(plots, kind) else maneuver_plots
    return _png(getattr(module, kind)(run_analysis(inputs)))


@st.cache_data(max_entries=16, show_spinner=False)
def shim_png(inc: dict[str, Any] | None, spacing_in: float) -> bytes:
    """PNG of the shim side view (:func:`trimlog.views.shim_drawing.shim_side_view`).

    Drawn once per recommendation, not on every run of a page that shows it (the
    drawing and its 200 dpi PNG took 0.6-1.1 s of each Results page).  ``inc`` is
    the ``incidence`` block of the ``--json`` result.
    """
    from trimlog.views import shim_drawing

    buf = io.BytesIO()
    shim_drawing.shim_side_view(inc, spacing_in).figure.savefig(
        buf, format="png", dpi=SHIM_DPI, bbox_inches="tight", pil_kwargs={"compress_level": 1})
    return buf.getvalue()


#: The shim side view is shown the page's whole width: drawn finer than the figures,
#: but narrower than the 1460 px above which ``st.image`` decodes, shrinks and encodes
#: the PNG again on every run of the page (the demo's: 1431 px).
SHIM_DPI = 190


class LogCanvas:
    """One flight's log drawn once; only the point windows are drawn again on a tick.

    The traces, axes, tick labels, numbers and legend (and the constrained
    layout that places them) are rendered once to an Agg buffer and kept; a
    new set of choices restores that buffer and draws the two shading
    collections over it (matplotlib's blitting), so that ticking a point on a
    one-hour log costs a PNG encoding instead of a whole figure.  The shading
    is drawn over the traces rather than under them (translucent, so the
    traces still show).
    """

    def __init__(self, data: FlightData) -> None:
        from matplotlib.backends.backend_agg import FigureCanvasAgg

        from trimlog.views import plots

        self._plots = plots
        self.axes = plots.log_overview(data, points=data.points)
        fig = self.axes[0].figure
        fig.set_dpi(FIGURE_DPI)
        for ax in self.axes:  # the windows are drawn per choice, over the background
            for collection in list(ax.collections):
                collection.remove()
        self.canvas = FigureCanvasAgg(fig)
        self.canvas.draw()
        fig.set_layout_engine("none")  # keep the layout just computed: no second pass
        self.background = self.canvas.copy_from_bbox(fig.bbox)
        self._lock = threading.Lock()  # sessions run in threads; one canvas each time

    def png(self, points: pd.DataFrame) -> bytes:
        """PNG of the log with ``points``' windows shaded (``included`` decides the kind)."""
        from PIL import Image  # matplotlib's own PNG writer

        with self._lock:
            self.canvas.restore_region(self.background)
            added = self._plots.shade_windows(self.axes, points)
            for artist in added:
                artist.axes.draw_artist(artist)
            legend = self.axes[0].get_legend()
            if legend is not None:
                self.axes[0].draw_artist(legend)  # the key stays over the shading
            pixels = np.asarray(self.canvas.buffer_rgba()).copy()
            for artist in added:
                artist.remove()
        buf = io.BytesIO()
        # fast zlib level: the image is sent to the browser, not archived
        Image.fromarray(pixels[..., :3]).save(buf, format="png", compress_level=1,
                                              dpi=(FIGURE_DPI, FIGURE_DPI))
        return buf.getvalue()


@st.cache_resource(max_entries=8, show_spinner=False, hash_funcs=_HASH)
def _log_canvas(log: FileBytes, sheet: FileBytes | None, profile_text: str, profile_source: str,
                min_hold_s: float | None, flight: str) -> LogCanvas:
    data = next(f for f in flight_data(log, sheet, profile_text, profile_source, min_hold_s)
                if f.flight == flight)
    return LogCanvas(data)


@st.cache_data(max_entries=64, show_spinner=False, hash_funcs=_HASH)
def log_figure(
    log: FileBytes, sheet: FileBytes | None, inputs: Inputs, flight: str
) -> bytes:
    """PNG of one flight's log with its point windows (points left out hatched)."""
    canvas = _log_canvas(log, sheet, inputs.profile_text, inputs.profile_source,
                         inputs.min_hold_s, flight)
    try:
        table = run_analysis(inputs).points
        shaded = table.loc[table["flight"] == flight]
    except TrimlogError:
        # no analysis yet: shade the points as found
        shaded = next(f for f in flight_data(log, sheet, inputs.profile_text,
                                             inputs.profile_source, inputs.min_hold_s)
                      if f.flight == flight).points
    return canvas.png(shaded)


@st.cache_data(max_entries=16, show_spinner=False, hash_funcs=_HASH)
def json_text(inputs: Inputs) -> str:
    """The ``--json`` result of the analysis."""
    return json.dumps(analysis_to_dict(run_analysis(inputs)), indent=2, allow_nan=False) + "\n"


@st.cache_data(max_entries=16, show_spinner=False, hash_funcs=_HASH)
def points_csv(inputs: Inputs) -> str:
    """The reduced points (contract columns first) as CSV."""
    return pd.DataFrame(points_records(run_analysis(inputs).points)).to_csv(index=False)


@st.cache_data(max_entries=8, show_spinner="Drawing the PDF report...", hash_funcs=_HASH)
def report_pdf(inputs: Inputs) -> bytes:
    """The PDF report of the analysis.

    The report module writes to a path; it goes to a private temporary folder
    under a fixed name and is read back, never named from an upload.
    """
    from trimlog.views import report

    with tempfile.TemporaryDirectory(prefix="trimlog-report-") as tmp:
        path = report.write_report(run_analysis(inputs), Path(tmp) / "report.pdf")
        return Path(path).read_bytes()


# --------------------------------------------------------------------------- history


def history_path() -> Path | str:
    """The history database: ``$TRIMLOG_DB`` (a file or a server URL), else the per-user default."""
    from trimlog.history.store import default_location

    return default_location()


def history_description() -> str:
    """Which store the dashboard uses, for people (an SQLite file or a PostgreSQL database)."""
    from trimlog.history.store import describe_location

    return describe_location(history_path())


def open_history():
    """Open the history database (a context manager; one connection per call)."""
    from trimlog.history.store import open_store

    return open_store(history_path())


def _db_token() -> tuple:
    """Changes whenever the database is written (by this tab, another tab or the CLI)."""
    db = history_path()
    if not isinstance(db, Path):
        # A server database: ask it (counts), and look again at least every 30 s.
        with open_history() as store:
            return (str(db), int(time.time() // 30), *store.change_token())
    out = []
    for path in (db, db.with_name(db.name + "-wal")):
        try:
            stat = path.stat()
        except OSError:
            out.append(None)
        else:
            out.append((stat.st_mtime_ns, stat.st_size))
    return (str(db), *out)


@st.cache_data(max_entries=16, show_spinner=False)
def _saved_count(aircraft: str, token: tuple) -> int:
    with open_history() as store:
        record = store.find_aircraft(aircraft)
        return 0 if record is None else len(store.flights(record.id))


def programme_state(aircraft: str) -> tuple | None:
    """The database's state when the history holds flights of the aircraft, else None.

    A database that does not exist is not created here.
    """
    if not history_path().exists():
        return None
    token = _db_token()
    try:
        return (aircraft, *token) if _saved_count(aircraft, token) else None
    except TrimlogError:
        return None


def stored_aircraft() -> list:
    """Every aircraft of the history with its current profile (none when there is no database)."""
    if not history_path().exists():
        return []
    try:
        with open_history() as store:
            return store.aircraft_list()
    except TrimlogError:
        return []


def store_profile(name: str, text: str) -> None:
    """Keep the profile with the aircraft in the history (a new version when it changed)."""
    with open_history() as store:
        store.upsert_aircraft(name, text)


@st.cache_resource(max_entries=4, show_spinner="Recomputing the saved flights...")
def _history_analysis(aircraft: str, token: tuple):
    from trimlog.history import service as history

    with open_history() as store:
        return history.analyze_history(store, aircraft)


def history_analysis(aircraft: str) -> Analysis:
    """The analysis of every saved flight of the aircraft (re-done when the database changes)."""
    return _history_analysis(aircraft, _db_token())


def import_flight(store, log: FileBytes, sheet: FileBytes | None, inputs: Inputs,
                  label: str | None, notes: str | None, *, replace_sheet: bool = False):
    """Save one log (and its loading sheet) to the history; returns the store's outcome."""
    from trimlog.history import service as history

    return history.import_flight(
        store, log.raw, log.name, inputs.profile_text, profile_source=inputs.profile_source,
        loading_raw=None if sheet is None else sheet.raw,
        loading_name=None if sheet is None else sheet.name,
        label=label, notes=notes, min_hold_s=inputs.min_hold_s, replace_sheet=replace_sheet,
    )


@st.cache_data(max_entries=16, show_spinner=False)
def _listing(aircraft: str, token: tuple) -> list[dict]:
    from trimlog.history import service as history

    with open_history() as store:
        return history.flight_listing(store, aircraft)


def flight_listing(aircraft: str) -> list[dict]:
    """The stored flights of an aircraft (re-read when the database changes)."""
    return _listing(aircraft, _db_token())


def stored_points(flight_id: int) -> pd.DataFrame:
    """The points of a stored flight with the choices saved."""
    with open_history() as store:
        return store.flight_points(flight_id)


def stored_reasons(flight_id: int) -> dict[int, str]:
    """Why points of a stored flight are left out (point number -> reason)."""
    from trimlog.history.maneuver_choices import reasons_of

    with open_history() as store:
        return reasons_of(store.flight(flight_id))


@st.cache_data(max_entries=16, show_spinner="Recomputing the trend...")
def _trend(aircraft: str, margin: float | None, step: float | None, token: tuple) -> dict:
    from trimlog.history import service as history

    with open_history() as store:
        return history.trend(store, aircraft, min_margin_pct_mac=margin,
                             max_step_pct_mac=step).to_dict()


def trend(aircraft: str, margin: float | None, step: float | None) -> dict:
    """The ``trimlog trend`` object for the aircraft under the given policy."""
    return _trend(aircraft, margin, step, _db_token())


@st.cache_data(max_entries=16, show_spinner=False)
def _trend_png(aircraft: str, margin: float | None, step: float | None, token: tuple) -> bytes:
    from trimlog.views import plots

    result = _trend(aircraft, margin, step, token)
    return _png(plots.neutral_point_trend(result["trend"], next_step=result.get("next_step")))


def trend_figure(aircraft: str, margin: float | None, step: float | None) -> bytes:
    """PNG of the neutral-point trend."""
    return _trend_png(aircraft, margin, step, _db_token())


@st.cache_data(max_entries=4, show_spinner="Drawing the PDF report of the history...")
def _history_pdf(aircraft: str, margin: float | None, step: float | None, token: tuple) -> bytes:
    from trimlog.history import service as history
    from trimlog.views import report

    with open_history() as store:
        result = history.analyze_history(store, aircraft)
        steps = history.trend(store, aircraft, min_margin_pct_mac=margin,
                              max_step_pct_mac=step).records()
    with tempfile.TemporaryDirectory(prefix="trimlog-report-") as tmp:
        return Path(report.write_report(result, Path(tmp) / "report.pdf",
                                        trend=steps)).read_bytes()


def history_report_pdf(aircraft: str, margin: float | None, step: float | None) -> bytes:
    """The PDF report of every stored flight with the trend."""
    return _history_pdf(aircraft, margin, step, _db_token())
