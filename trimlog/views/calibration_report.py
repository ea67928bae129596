"""The airspeed-calibration report: the circle fit per speed and ΔV against IAS.

``trimlog calibrate ... --report CAL.pdf`` (or ``.html``) writes it with the
same page layout as the flight-test report: the cautions first, the table of
speeds (TAS, wind, CAS and ΔV with their 95 % intervals, the altitude
correction), the position-error table for the profile, two figures and every
warning.  The figures read the one :class:`~trimlog.pipeline.calibration.CalibrationResult`;
nothing is recomputed here.

References
----------
G. V. Lewis, *Using GPS to determine pitot-static errors*, National Test Pilot
School, 2003 (the circle of ground-velocity vectors).
"""

from __future__ import annotations

import datetime as dt
import os
from pathlib import Path
from typing import TYPE_CHECKING, Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from trimlog import __version__, cautions
from trimlog.errors import TrimlogError
from trimlog.files import check_output_target, write_atomically
from trimlog.findings import by_severity
from trimlog.views.pdf_layout import Heading, Para, Plot, Table, render_pdf, save_pdf
from trimlog.views.plots import GREY, LABEL_SIZE, LEGEND_SIZE, MARKERS, PALETTE, TICK_SIZE
from trimlog.views.report import _render_html

if TYPE_CHECKING:
    from trimlog.pipeline.calibration import CalibrationResult

_ALTIMETER_NOTE = (
    "Altitude correction: the static-source error as the amount to add to the indicated "
    "pressure altitude, assuming the pitot (total pressure) has no error. GPS legs measure "
    "only the combined position error; where the pitot sits in the propeller wash or meets "
    "the air at a large angle at low speed, this split does not hold and the altimeter "
    "needs its own check (a tower fly-by or a trailing static source).")


def circle_fits(result: CalibrationResult, fig: Figure,
                rect: tuple[float, float, float, float]) -> list[Axes]:
    """Small multiples: per speed, the ground-velocity tips, the fitted circle and the wind.

    Parameters
    ----------
    result : CalibrationResult
    fig : matplotlib.figure.Figure
    rect : tuple of float
        (left, bottom, width, height) of the area to fill, in figure fractions.

    Returns
    -------
    list of matplotlib.axes.Axes
        One per speed (east [kt] across, north [kt] up, equal scales).
    """
    speeds = result.speeds
    n = max(1, len(speeds))
    cols = min(3, n)
    rows = int(np.ceil(n / cols))
    left, bottom, width, height = rect
    w, h = width / cols, height / rows
    legs = result.legs
    axes = []
    theta = np.linspace(0.0, 2.0 * np.pi, 181)
    for k, s in enumerate(speeds):
        r, c = divmod(k, cols)
        ax = fig.add_axes((left + c * w + 0.12 * w, bottom + (rows - 1 - r) * h + 0.16 * h,
                           0.78 * w, 0.64 * h))
        f = s.fit
        rows_used = legs.iloc[list(s.legs)]
        trk = np.radians(rows_used["gps_track_deg"].to_numpy(dtype=float))
        gs = rows_used["gps_groundspeed_kt"].to_numpy(dtype=float)
        x, y = gs * np.sin(trk), gs * np.cos(trk)
        ax.plot(f.wind_east_kt + f.tas_kt * np.sin(theta),
                f.wind_north_kt + f.tas_kt * np.cos(theta), color=PALETTE[0], lw=1.0)
        for xi, yi in zip(x, y, strict=True):
            ax.plot([0.0, xi], [0.0, yi], color=GREY, lw=0.6)
        ax.plot(x, y, MARKERS[0], color=PALETTE[1], ms=4, label="leg (GPS)")
        ax.plot([0.0, f.wind_east_kt], [0.0, f.wind_north_kt], color=PALETTE[2], lw=1.5,
                label="wind")
        ax.plot([f.wind_east_kt], [f.wind_north_kt], "+", color=PALETTE[2], ms=6)
        ax.set_aspect("equal", adjustable="datalim")
        ax.set_title(f"{s.ias_kt:.0f} KIAS: TAS {f.tas_kt:.1f} kt\nwind {f.wind_kt:.0f} kt "
                     f"from {f.wind_from_deg:03.0f}", fontsize=TICK_SIZE - 1)
        ax.tick_params(labelsize=TICK_SIZE - 2)
        if r == rows - 1:
            ax.set_xlabel("east [kt]", fontsize=TICK_SIZE - 1)
        if c == 0:
            ax.set_ylabel("north [kt]", fontsize=TICK_SIZE - 1)
        if k == 0:
            ax.legend(fontsize=LEGEND_SIZE - 2, loc="lower left")
        axes.append(ax)
    return axes


def position_error_plot(result: CalibrationResult, ax: Axes) -> Axes:
    """ΔV = CAS − IAS against IAS: each speed with its 95 % interval, and the smooth curve.

    Parameters
    ----------
    result : CalibrationResult
    ax : matplotlib.axes.Axes

    Returns
    -------
    matplotlib.axes.Axes
    """
    ias = np.array([s.ias_kt for s in result.speeds])
    dv = np.array([s.delta_v_kt for s in result.speeds])
    with_ci = [s for s in result.speeds if s.delta_v_ci95_kt is not None]
    if with_ci:
        x = np.array([s.ias_kt for s in with_ci])
        y = np.array([s.delta_v_kt for s in with_ci])
        lo = y - np.array([s.delta_v_ci95_kt[0] for s in with_ci])
        hi = np.array([s.delta_v_ci95_kt[1] for s in with_ci]) - y
        ax.errorbar(x, y, yerr=[lo, hi], fmt=MARKERS[0], color=PALETTE[0], capsize=3,
                    label="speed flown, 95 % interval")
    exact = [s for s in result.speeds if s.delta_v_ci95_kt is None]
    if exact:
        ax.plot([s.ias_kt for s in exact], [s.delta_v_kt for s in exact], MARKERS[1],
                mfc="none", color=PALETTE[1], label="three legs (no interval)")
    if result.table_ias_kt:
        grid = np.linspace(min(result.table_ias_kt), max(result.table_ias_kt), 100)
        ax.plot(grid, result.delta_v_at(grid), "-", color=PALETTE[2], label="smooth curve")
    ax.axhline(0.0, color=GREY, lw=0.6)
    ax.set_xlabel("indicated airspeed [kt]", fontsize=LABEL_SIZE)
    ax.set_ylabel("position error CAS − IAS [kt]", fontsize=LABEL_SIZE)
    ax.tick_params(labelsize=TICK_SIZE)
    if len(ias):
        ax.set_xlim(ias.min() - 5.0, ias.max() + 5.0)
        ax.set_ylim(min(-1.0, float(dv.min()) - 1.5), max(1.0, float(dv.max()) + 1.5))
    ax.legend(fontsize=LEGEND_SIZE)
    return ax


def _ci(pair: Any, spec: str = ".1f") -> str:
    return "-" if pair is None else f"[{pair[0]:{spec}}, {pair[1]:{spec}}]"


def calibration_blocks(result: CalibrationResult, aircraft: str, generated: str) -> list[Any]:
    """The report's blocks (headings, paragraphs, tables, figures)."""
    blocks: list[Any] = [
        Heading(f"Airspeed calibration from GPS legs: {aircraft}"),
        Para(f"Generated {generated} by trimlog {__version__} from "
             f"{', '.join(Path(s).name for s in result.sources)}.", "small"),
        Para(cautions.ESTIMATE_STATEMENT, "box"),
        *[Para(c, "bullet") for c in cautions.AIRSPEED_CALIBRATION],
        Heading("Speeds", 2),
    ]
    if result.speeds:
        rows = tuple(
            (f"{s.ias_kt:.1f}", f"{s.pressure_alt_ft:.0f}", str(s.fit.n_legs),
             f"{s.fit.tas_kt:.1f}", _ci(s.fit.tas_ci95_kt),
             f"{s.fit.wind_kt:.1f} / {s.fit.wind_from_deg:03.0f}", f"{s.cas_kt:.1f}",
             _ci(s.cas_ci95_kt), f"{s.delta_v_kt:+.1f}", _ci(s.delta_v_ci95_kt, "+.1f"),
             f"{s.altitude_correction_ft:+.0f}")
            for s in result.speeds)
        blocks.append(Table(("KIAS", "Hp ft", "legs", "KTAS", "KTAS 95 %", "wind kt / from",
                             "KCAS", "KCAS 95 %", "dV kt", "dV 95 %", "dH ft"), rows))
        blocks.append(Para(_ALTIMETER_NOTE, "small"))
    else:
        blocks.append(Para("Cannot say yet: no speed had three or more steady legs on "
                           "spread headings (see the warnings).", "strong"))
    if result.table_ias_kt:
        blocks += [
            Heading("Position-error table for the profile", 2),
            Table(("IAS kt", "CAS kt"), tuple(
                (f"{i:g}", f"{c:g}") for i, c in zip(result.table_ias_kt, result.table_cas_kt,
                                                     strict=True))),
            Para("The smooth curve evaluated at the speeds flown; outside them the analysis "
                 "holds the end correction and says so.", "small"),
        ]
    if result.speeds:
        blocks += [
            Plot("Ground-velocity vectors and the circle per speed",
                 lambda fig, rect: circle_fits(result, fig, rect),
                 "Each leg's GPS ground velocity (grey line to the marker) and the circle "
                 "through the tips: its centre is the wind (green) and its radius the true "
                 "airspeed. Tips off the circle show how far the legs disagree.", tall=True),
            Plot("Position error against indicated airspeed",
                 lambda fig, rect: position_error_plot(result, fig.add_axes(rect)),
                 "CAS − IAS at each speed flown with its 95 % interval (residual scatter of "
                 "the legs and the OAT uncertainty), and the smooth curve written into the "
                 "profile."),
        ]
    blocks.append(Heading("Warnings and notes", 2))
    blocks += [Para(f.line(), "bullet") for f in by_severity(result.findings)] or [
        Para("None.")]
    return blocks


def write_calibration_report(result: CalibrationResult, path: str | os.PathLike[str], *,
                             aircraft: str) -> Path:
    """Write the calibration report: PDF, or one HTML page for a ``.html`` name.

    Parameters
    ----------
    result : CalibrationResult
    path : str or path-like
    aircraft : str
        The aircraft's name, for the title.

    Returns
    -------
    pathlib.Path

    Raises
    ------
    TrimlogError
        The file cannot be written; no partial file is left behind.
    """
    path = Path(path)
    if path.is_dir():
        raise TrimlogError(f"cannot write the report to {path}: it is a folder; give a file "
                           "name such as calibration.pdf")
    check_output_target(path, "report")
    generated = dt.datetime.now(dt.UTC).strftime("%Y-%m-%d %H:%M UTC")
    blocks = calibration_blocks(result, aircraft, generated)
    title = f"trimlog airspeed calibration: {aircraft}"
    footer = f"trimlog {__version__} | {aircraft} | airspeed calibration | generated {generated}"
    if path.suffix.lower() in (".html", ".htm"):
        data = _render_html(blocks, title, footer).encode("utf-8")
        write_atomically(path, data, what="report")
    else:
        pages = render_pdf(blocks, footer)
        write_atomically(path, lambda fh: save_pdf(pages, fh, title), what="report")
    return path
