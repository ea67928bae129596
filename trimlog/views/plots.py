"""Figures of an analysis: trim curves, gradients against CG, stick forces, logs, trend.

Every function draws on the Axes it is given (``ax=None`` makes a new
:class:`matplotlib.figure.Figure`) and returns the Axes.  Figures are built
without :mod:`matplotlib.pyplot`, so nothing here changes the caller's
backend or opens a window; the dashboard and the PDF report both use them.

The functions draw what :mod:`trimlog.pipeline.chain` found; the only numbers
drawn are fit lines and their 95 % bands, computed by the package's fits
(:meth:`trimlog.statistics.fits.LinearFit.confidence_band`, the interval of
:func:`trimlog.stability.margins.predict_elevator` at many points at once).

Colours are the Okabe-Ito palette (safe for the common colour-vision
deficiencies), yellow last because it is faint on white paper; each flight
also gets its own marker and line style, so a greyscale print still tells
the flights apart.

References
----------
.. [1] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make
   figures and presentations that are friendly to colorblind people", 2008
   (the eight-colour palette).
.. [2] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   ch. 5, 1990: trim curves, gradients against CG extrapolated to zero, and
   stick force against speed as the standard presentations of the
   stabilized-trim method.
"""

from __future__ import annotations

import math
import textwrap
from collections.abc import Mapping, Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Patch

from trimlog.errors import TrimlogError
from trimlog.stability.critical import step_limit_words
from trimlog.views.formatting import number

if TYPE_CHECKING:
    from trimlog.pipeline.chain import Analysis, FlightData
    from trimlog.stability.results import PooledFit

#: Okabe-Ito colours [1]_, yellow last (low contrast on white paper).
PALETTE = ("#0072B2", "#D55E00", "#009E73", "#CC79A7", "#E69F00", "#56B4E9", "#000000",
           "#F0E442")
MARKERS = ("o", "s", "^", "D", "v", "P", "X", "*")
LINESTYLES = ("-", "--", "-.", ":")
#: Excluded points and reference lines.
GREY = "#7f7f7f"
LABEL_SIZE = 10
TICK_SIZE = 9
LEGEND_SIZE = 8
#: Points on each drawn fit line.
LINE_POINTS = 20
#: Most vertices drawn per trace of a log: well above the pixel columns of any figure
#: here, so the min/max envelope looks like the full trace.
LOG_VERTICES = 4000

TREND_KEYS = ("n_flights", "label", "stick_fixed_pct_mac", "ci95_pct_mac",
              "stick_free_pct_mac", "stick_free_ci95_pct_mac", "cg_pct_mac")


def flight_styles(flights: Sequence[str]) -> dict[str, dict[str, Any]]:
    """Colour, marker and line style of each flight, in the order given.

    Parameters
    ----------
    flights : sequence of str
        Flight identifiers; the same order gives the same styles in every
        figure.

    Returns
    -------
    dict
        ``{flight: {"color", "marker", "linestyle"}}``.
    """
    out: dict[str, dict[str, Any]] = {}
    for i, flight in enumerate(dict.fromkeys(flights)):
        out[flight] = {"color": PALETTE[i % len(PALETTE)],
                       "marker": MARKERS[i % len(MARKERS)],
                       "linestyle": LINESTYLES[i % len(LINESTYLES)]}
    return out


# --------------------------------------------------------------------------- helpers


def _new_axes(ax: Axes | None, size: tuple[float, float] = (7.0, 5.0)) -> Axes:
    if ax is not None:
        return ax
    return Figure(figsize=size, layout="constrained").add_subplot()


def _finish(ax: Axes, xlabel: str, ylabel: str, title: str) -> None:
    ax.set_xlabel(xlabel, fontsize=LABEL_SIZE)
    ax.set_ylabel(ylabel, fontsize=LABEL_SIZE)
    ax.set_title(title, fontsize=LABEL_SIZE + 1)
    ax.tick_params(labelsize=TICK_SIZE)
    ax.grid(True, color="#d9d9d9", linewidth=0.6)
    ax.set_axisbelow(True)


#: Text sizes for a figure shown on a screen (the dashboard) rather than printed [pt].
SCREEN_SIZES = {"legend": 11, "tick": 11, "label": 12, "title": 13}


def for_screen(fig: Figure) -> Figure:
    """Enlarge a figure's legend, tick, label and title text for a screen.

    The dashboard shows a 7 in wide figure in a column a few hundred pixels
    wide, where the print sizes (:data:`LEGEND_SIZE` 8 pt) are too small to
    read; :data:`SCREEN_SIZES` are applied instead.  Returns ``fig``.
    """
    for ax in fig.axes:
        legend = ax.get_legend()
        if legend is not None:
            for text in legend.get_texts():
                text.set_fontsize(SCREEN_SIZES["legend"])
        ax.tick_params(labelsize=SCREEN_SIZES["tick"])
        ax.xaxis.label.set_fontsize(SCREEN_SIZES["label"])
        ax.yaxis.label.set_fontsize(SCREEN_SIZES["label"])
        ax.title.set_fontsize(SCREEN_SIZES["title"])
    return fig


def _note(ax: Axes, text: str, *, y: float = 0.5, width: int = 60) -> None:
    """A boxed statement across the Axes (no data, not identifiable...)."""
    lines = [textwrap.fill(part, width) for part in text.split("\n")]
    ax.text(0.5, y, "\n".join(lines), transform=ax.transAxes, ha="center", va="center",
            fontsize=LABEL_SIZE - 1,
            bbox={"boxstyle": "round", "facecolor": "white", "edgecolor": GREY})


def _primary_points(analysis: Analysis) -> pd.DataFrame:
    pts = analysis.points
    return pts.loc[pts["config"].astype(str) == analysis.primary.config]


def _styles(analysis: Analysis) -> dict[str, dict[str, Any]]:
    return flight_styles([f.flight for f in analysis.flights]
                         + list(analysis.points["flight"].astype(str)))


def _scatter(ax: Axes, frame: pd.DataFrame, x: str, y: str, style: Mapping[str, Any],
             label: str) -> bool:
    """Included points filled in the flight's style, excluded ones hollow grey.

    Returns whether any excluded point was drawn.
    """
    used = frame.loc[frame["included"].astype(bool)]
    left = frame.loc[~frame["included"].astype(bool)]
    ax.plot(used[x], used[y], linestyle="none", marker=style["marker"], color=style["color"],
            markersize=6, label=label)
    if len(left):
        ax.plot(left[x], left[y], linestyle="none", marker=style["marker"], markersize=6,
                markerfacecolor="none", markeredgecolor=GREY)
    return bool(len(left))


def _excluded_handle(style_marker: str = "o") -> Line2D:
    return Line2D([], [], linestyle="none", marker=style_marker, markerfacecolor="none",
                  markeredgecolor=GREY, label="excluded point (not fitted)")


def _band_handle() -> Patch:
    return Patch(facecolor=GREY, alpha=0.25, label="fit, 95 % confidence band")


def _flight_label(flight: str, cg: float | None, setting: str | None = None) -> str:
    parts = ([] if cg is None else [f"CG {cg:.1f} %MAC"]) + ([setting] if setting else [])
    return f"{flight} ({', '.join(parts)})" if parts else flight


def _cg_of(analysis: Analysis) -> dict[str, float]:
    return {g.flight: g.cg_pct_mac for g in analysis.primary.stability.gradients}


def _cl_grid(frame: pd.DataFrame) -> np.ndarray:
    lo, hi = float(frame["cl"].min()), float(frame["cl"].max())
    return np.linspace(lo, hi, LINE_POINTS)


def _pooled_band(fit: PooledFit, group: str, h: float, cl: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """Line and 95 % band of a pooled fit for one group (its ``a[...]`` intercept) at CG h.

    The numbers are the fit's (:meth:`trimlog.statistics.fits.LinearFit.confidence_band`).
    """
    return fit.linear.confidence_band(
        pd.DataFrame({f"a[{group}]": 1.0, "cl": cl, "h_cl": h * cl}))


# --------------------------------------------------------------------------- figures


def trim_curves(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Elevator to trim against CL for each flight, with the pooled fit and its 95 % band.

    Parameters
    ----------
    analysis : Analysis
        The headline (primary) configuration is drawn.
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    Each flight's line is the pooled stick-fixed model at that flight's mean
    CG and stabilizer setting, drawn over the CL the flight covered; the
    band is the 95 % confidence interval of the line
    (:func:`trimlog.stability.margins.predict_elevator`).
    """
    ax = _new_axes(ax)
    pts = _primary_points(analysis)
    fit = analysis.primary.stability.stick_fixed
    styles, cgs = _styles(analysis), _cg_of(analysis)
    several = pts["stab_setting"].nunique() > 1
    any_excluded = False
    for flight, frame in pts.groupby("flight", sort=False):
        style = styles[str(flight)]
        cg = cgs.get(str(flight))
        # the trim lines of another stabilizer setting are offset: say which setting
        settings = ", ".join(map(str, frame["stab_setting"].unique())) if several else None
        label = _flight_label(str(flight), cg, settings)
        any_excluded |= _scatter(ax, frame, "cl", "elevator_deg", style, label)
        used = frame.loc[frame["included"].astype(bool)]
        if fit.linear is None or len(used) < 2:
            continue
        h = used["h"].mean() if cg is None else cg / 100.0
        for setting, part in used.groupby("stab_setting", sort=False):
            cl = _cl_grid(part)
            line, lo, hi = _pooled_band(fit, str(setting), float(h), cl)
            ax.plot(cl, line, color=style["color"], linestyle=style["linestyle"], linewidth=1.4)
            if lo is not None and hi is not None:
                ax.fill_between(cl, lo, hi, color=style["color"], alpha=0.2, linewidth=0)
    handles, _ = ax.get_legend_handles_labels()
    if fit.linear is not None:
        handles.append(_band_handle())
    else:
        _note(ax, "no trim model could be fitted: " + fit.neutral_point.reason, y=0.1)
    if any_excluded:
        handles.append(_excluded_handle())
    ax.legend(handles=handles, fontsize=LEGEND_SIZE, loc="best")
    _finish(ax, "lift coefficient $C_L$ [-]",
            "elevator to trim $\\delta_e$ [deg, trailing edge down +]",
            f"Trim curves ({analysis.primary.config})")
    return ax


def gradient_vs_cg(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Per-flight dδe/dCL against CG, extrapolated to zero: the stick-fixed neutral point.

    Parameters
    ----------
    analysis : Analysis
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    Error bars are each flight's 95 % interval of the gradient; the line and
    band are the two-stage weighted fit of gradient against ``h`` and its
    95 % confidence band.  On the zero line: the pooled and the two-stage
    neutral points with their Fieller 95 % intervals.  Dotted verticals:
    the CG limits of the profile.
    """
    ax = _new_axes(ax)
    s = analysis.primary.stability
    styles = _styles(analysis)
    fwd, aft = analysis.profile.cg_forward_pct_mac, analysis.profile.cg_aft_pct_mac
    xs = [fwd, aft]
    for g in s.gradients:
        if g.delev_dcl_deg is None:
            continue
        xs.append(g.cg_pct_mac)
        style = styles[g.flight]
        yerr = None
        if g.delev_dcl_ci95_deg is not None:
            lo, hi = g.delev_dcl_ci95_deg
            yerr = [[g.delev_dcl_deg - lo], [hi - g.delev_dcl_deg]]
        ax.errorbar([g.cg_pct_mac], [g.delev_dcl_deg], yerr=yerr, marker=style["marker"],
                    color=style["color"], linestyle="none", capsize=3, markersize=6,
                    label=_flight_label(g.flight, g.cg_pct_mac))
    # Black and dark grey: no flight colour is reused for the fit or the neutral points.
    nps = [(s.stick_fixed.neutral_point, "pooled", "D", "#555555"),
           (s.stick_fixed_two_stage.neutral_point, "two-stage", "o", "black")]
    for np_, _, _, _ in nps:
        if np_.identifiable:
            xs.extend([np_.pct_mac, *np_.ci95_pct_mac])
    x_lo, x_hi = min(xs) - 2.0, max(xs) + 2.0
    ts = s.stick_fixed_two_stage
    if ts.linear is not None:
        x = np.linspace(x_lo, x_hi, LINE_POINTS)
        y, lo, hi = ts.linear.confidence_band(pd.DataFrame({"const": 1.0, "h": x / 100.0}))
        ax.plot(x, y, color="black", linewidth=1.2, label="two-stage weighted fit")
        if lo is not None and hi is not None:
            ax.fill_between(x, lo, hi, color=GREY, alpha=0.3, linewidth=0,
                            label="its 95 % confidence band")
    ax.axhline(0.0, color="black", linewidth=0.8)
    ymin, ymax = ax.get_ylim()
    step = 0.03 * (ymax - ymin)
    reasons = []
    for offset, (np_, name, marker, color) in zip((step, -step), nps, strict=True):
        if not np_.identifiable:
            reasons.append(f"{name}: {np_.reason}")
            continue
        lo, hi = np_.ci95_pct_mac
        ax.errorbar([np_.pct_mac], [offset], xerr=[[np_.pct_mac - lo], [hi - np_.pct_mac]],
                    marker=marker, color=color, markerfacecolor="white", capsize=4,
                    linestyle="none", markersize=7, elinewidth=2,
                    label=f"neutral point, {name}: {np_.pct_mac:.1f} %MAC "
                          f"[{lo:.1f}, {hi:.1f}]")
    for value, name in ((fwd, "forward CG limit"), (aft, "aft CG limit")):
        ax.axvline(value, color=GREY, linestyle=":", linewidth=1.2)
        ax.text(value, 0.98, f" {name}", transform=ax.get_xaxis_transform(), rotation=90,
                va="top", ha="right", fontsize=LEGEND_SIZE, color="#555555")
    ax.set_xlim(x_lo, x_hi)
    if reasons:
        _note(ax, "Neutral point not identifiable\n" + "\n".join(reasons), y=0.6)
    ax.legend(fontsize=LEGEND_SIZE, loc="lower right")
    _finish(ax, "CG [%MAC]", "trim gradient $d\\delta_e/dC_L$ [deg per unit $C_L$]",
            "Elevator gradient against CG (zero gradient = stick-fixed neutral point)")
    return ax


def stick_force_per_q(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Stick force over dynamic pressure, Fs/q, against CL for each flight.

    Parameters
    ----------
    analysis : Analysis
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    Lines: the pooled stick-free model (an intercept per flight) at each
    flight's mean CG, with its 95 % confidence band.  A rising line (more
    pull per unit q as CL grows) is stick-free stable.
    """
    ax = _new_axes(ax)
    pts = _primary_points(analysis)
    pts = pts.loc[pts["fs_over_q_ft2"].notna()]
    fit = analysis.primary.stability.stick_free
    styles, cgs = _styles(analysis), _cg_of(analysis)
    any_excluded = False
    for flight, frame in pts.groupby("flight", sort=False):
        style = styles[str(flight)]
        cg = cgs.get(str(flight))
        any_excluded |= _scatter(ax, frame, "cl", "fs_over_q_ft2", style,
                                 _flight_label(str(flight), cg))
        used = frame.loc[frame["included"].astype(bool)]
        if fit is None or fit.linear is None or len(used) < 2 or str(flight) not in fit.groups:
            continue
        h = used["h"].mean() if cg is None else cg / 100.0
        cl = _cl_grid(used)
        line, lo, hi = _pooled_band(fit, str(flight), float(h), cl)
        ax.plot(cl, line, color=style["color"], linestyle=style["linestyle"], linewidth=1.4)
        if lo is not None and hi is not None:
            ax.fill_between(cl, lo, hi, color=style["color"], alpha=0.2, linewidth=0)
    ax.axhline(0.0, color="black", linewidth=0.8)
    handles, _ = ax.get_legend_handles_labels()
    if not len(pts):
        _note(ax, "no stick force was logged")
    elif fit is not None and fit.linear is not None:
        handles.append(_band_handle())
    if any_excluded:
        handles.append(_excluded_handle())
    if handles:
        ax.legend(handles=handles, fontsize=LEGEND_SIZE, loc="best")
    _finish(ax, "lift coefficient $C_L$ [-]", "$F_s/q$ [ft$^2$], pull +",
            f"Stick force per dynamic pressure ({analysis.primary.config})")
    return ax


def stick_force_vs_speed(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Stick force against equivalent airspeed for each flight, trim speed marked.

    Parameters
    ----------
    analysis : Analysis
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    The open marker on the zero-force line is each flight's fitted trim
    speed; the short line through it has the fitted gradient dFs/dV there
    (negative is stable: a pull is needed to slow down).
    """
    ax = _new_axes(ax)
    pts = _primary_points(analysis)
    pts = pts.loc[pts["stick_force_lbf"].notna()]
    styles, cgs = _styles(analysis), _cg_of(analysis)
    any_excluded = False
    for flight, frame in pts.groupby("flight", sort=False):
        style = styles[str(flight)]
        any_excluded |= _scatter(ax, frame.sort_values("eas_kt"), "eas_kt", "stick_force_lbf",
                                 style, _flight_label(str(flight), cgs.get(str(flight))))
    span = (float(pts["eas_kt"].max() - pts["eas_kt"].min()) if len(pts) else 0.0) or 20.0
    for g in analysis.primary.stability.gradients:
        if g.trim_eas_kt is None or g.flight not in styles:
            continue
        style = styles[g.flight]
        if g.dfs_dv_lbf_per_kt is not None:
            dv = np.array([-0.12, 0.12]) * span
            ax.plot(g.trim_eas_kt + dv, g.dfs_dv_lbf_per_kt * dv, color=style["color"],
                    linestyle=style["linestyle"], linewidth=1.4)
        ax.plot([g.trim_eas_kt], [0.0], marker=style["marker"], markersize=9,
                markerfacecolor="white", markeredgecolor=style["color"], markeredgewidth=1.6,
                linestyle="none")
    ax.axhline(0.0, color="black", linewidth=0.8)
    handles, _ = ax.get_legend_handles_labels()
    if not len(pts):
        _note(ax, "no stick force was logged")
    else:
        handles.append(Line2D([], [], marker="o", markerfacecolor="white",
                              markeredgecolor="black", linestyle="-", color="black",
                              label="trim speed and gradient there"))
    if any_excluded:
        handles.append(_excluded_handle())
    ax.legend(handles=handles, fontsize=LEGEND_SIZE, loc="best")
    _finish(ax, "equivalent airspeed EAS [kt] (the points tables list IAS and EAS)",
            "stick force $F_s$ [lbf, pull +]",
            f"Stick force against speed ({analysis.primary.config})")
    return ax


def min_max_envelope(t: np.ndarray, y: np.ndarray, max_points: int = LOG_VERTICES
                     ) -> tuple[np.ndarray, np.ndarray]:
    """A long trace thinned for drawing: the lowest and highest sample of each bin.

    Consecutive samples are grouped into ``max_points // 2`` bins; each bin
    keeps its minimum and maximum in time order, so a one-sample spike still
    shows.  A bin with no finite value keeps one NaN, so the drawn line
    still breaks where the log has no data.  Only samples of the log are
    returned; nothing is interpolated.

    Parameters
    ----------
    t : ndarray
        Time of each sample, increasing [s].
    y : ndarray
        The signal (any unit; NaN where missing).
    max_points : int
        Most samples returned; traces this short or shorter are returned as
        they are.

    Returns
    -------
    tuple of ndarray
        ``(t, y)`` of the samples kept.
    """
    n = len(y)
    bins = max(max_points // 2, 1)
    if n <= max_points:
        return t, y
    size = math.ceil(n / bins)
    bins = math.ceil(n / size)
    padded = np.full(bins * size, np.nan)
    padded[:n] = y
    padded = padded.reshape(bins, size)
    finite = np.isfinite(padded)
    low = np.argmin(np.where(finite, padded, np.inf), axis=1)
    high = np.argmax(np.where(finite, padded, -np.inf), axis=1)
    start = np.arange(bins) * size
    index = np.column_stack([start + np.minimum(low, high),
                             start + np.maximum(low, high)]).ravel()
    empty = ~finite.any(axis=1)
    # An empty bin keeps one NaN sample (its first), not two.
    keep = ~np.repeat(empty, 2) | (np.arange(2 * bins) % 2 == 0)
    index = index[keep]
    values = np.asarray(y, dtype=float)[index]
    values[np.repeat(empty, 2)[keep]] = np.nan
    return np.asarray(t)[index], values


def _windows(points: pd.DataFrame) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    """``(start, width)`` of the included and of the excluded points' windows [s]."""
    used: list[tuple[float, float]] = []
    left_out: list[tuple[float, float]] = []
    for row in points.itertuples():
        if math.isfinite(row.t_start_s) and math.isfinite(row.t_end_s):
            span = (float(row.t_start_s), float(row.t_end_s - row.t_start_s))
            (used if bool(row.included) else left_out).append(span)
    return used, left_out


def shade_windows(axes: Sequence[Axes], points: pd.DataFrame) -> list[Any]:
    """Shade the points' windows on each Axes: fitted ones filled, excluded ones hatched.

    Parameters
    ----------
    axes : sequence of Axes
        Time on the x axis [s].
    points : DataFrame
        ``t_start_s``, ``t_end_s`` [s] and ``included`` of each point.

    Returns
    -------
    list of matplotlib artists
        The collections added (the dashboard redraws only these when a point
        is ticked).
    """
    used, left_out = _windows(points)
    added = []
    for ax in axes:
        # One collection per kind, not one patch per point: a long log has many points.
        if len(used):
            added.append(ax.broken_barh(used, (0.0, 1.0), transform=ax.get_xaxis_transform(),
                                        color=PALETTE[2], alpha=0.18, linewidth=0))
        if len(left_out):
            added.append(ax.broken_barh(left_out, (0.0, 1.0),
                                        transform=ax.get_xaxis_transform(), facecolor="none",
                                        edgecolor=GREY, hatch="///", linewidth=0.5))
    return added


def log_overview(flight_data: FlightData, axes: Sequence[Axes] | None = None, *,
                 points: pd.DataFrame | None = None) -> tuple[Axes, ...]:
    """Airspeed, elevator, stick force and load factor against time, point windows shaded.

    Long logs are drawn through :func:`min_max_envelope` (at most
    :data:`LOG_VERTICES` vertices per trace, spikes kept); the shaded windows
    are the points' own.

    Parameters
    ----------
    flight_data : FlightData
        A flight read from a time-series log.
    axes : sequence of 4 Axes, optional
        Drawn top to bottom; default a new figure with a shared time axis.
    points : DataFrame, optional
        The flight's points to shade (``t_start_s``, ``t_end_s``, ``point``,
        ``included``); default ``flight_data.points``.  Pass the flight's rows
        of ``Analysis.points`` to show the exclusions applied there.

    Returns
    -------
    tuple of matplotlib.axes.Axes

    Raises
    ------
    TrimlogError
        The flight is a point table (no time history), or ``axes`` does not
        hold four Axes.
    """
    samples = flight_data.samples
    if samples is None:
        raise TrimlogError(f"flight '{flight_data.flight}' ({flight_data.source}) is a table "
                           "of points: it has no time history to draw")
    if axes is None:
        fig = Figure(figsize=(8.0, 8.0), layout="constrained")
        axes = tuple(fig.subplots(4, 1, sharex=True))
    axes = tuple(axes)
    if len(axes) != 4:
        raise TrimlogError(f"log_overview: expected 4 Axes, found {len(axes)}")
    speed = "ias_kt" if "ias_kt" in samples else "cas_kt"
    channels = ((speed, f"{'IAS' if speed == 'ias_kt' else 'CAS'} [kt]"),
                ("elevator_deg", "elevator [deg, TE down +]"),
                ("stick_force_lbf", "stick force [lbf, pull +]"),
                ("nz_g", "load factor $n_z$ [g]"))
    pts = flight_data.points if points is None else points
    t = samples["time_s"]
    shade_windows(axes, pts)
    for ax, (column, label) in zip(axes, channels, strict=True):
        if column in samples and samples[column].notna().any():
            ax.plot(*min_max_envelope(t.to_numpy(float), samples[column].to_numpy(float)),
                    color=PALETTE[0], linewidth=0.6)
        else:
            _note(ax, f"{label.split(' [')[0]} not logged")
        ax.set_ylabel(label, fontsize=TICK_SIZE)
        ax.tick_params(labelsize=TICK_SIZE)
        ax.grid(True, color="#d9d9d9", linewidth=0.6)
    top = axes[0]
    for row in pts.itertuples():
        if math.isfinite(row.t_start_s) and math.isfinite(row.t_end_s):
            top.text(0.5 * (row.t_start_s + row.t_end_s), 1.0, str(row.point),
                     transform=top.get_xaxis_transform(), ha="center", va="bottom",
                     fontsize=LEGEND_SIZE)
    top.set_title(f"{flight_data.flight} ({flight_data.source}): stabilized points numbered",
                  fontsize=LABEL_SIZE + 1, pad=14)
    top.legend(handles=[Patch(color=PALETTE[2], alpha=0.3, label="stabilized point"),
                        Patch(facecolor="none", edgecolor=GREY, hatch="///",
                              label="excluded point")],
               fontsize=LEGEND_SIZE, loc="upper right")
    axes[-1].set_xlabel("time [s]", fontsize=LABEL_SIZE)
    return axes


def _maneuver_trend(ax: Axes, x: np.ndarray, trend_steps: Sequence[Mapping[str, Any]]) -> None:
    """Both maneuver points after each flight, open markers, where a step has one."""
    for kind, label, marker, color, dx in (
            ("stick_fixed", "stick-fixed maneuver point", "D", PALETTE[0], -0.2),
            ("stick_free", "stick-free maneuver point", "^", PALETTE[1], 0.2)):
        xs, ys, lo, hi = [], [], [], []
        for xi, rec in zip(x, trend_steps, strict=True):
            point = (rec.get("maneuver_point") or {}).get(kind) or {}
            value, ci = point.get("pct_mac"), point.get("ci95_pct_mac")
            if value is None or not math.isfinite(value):
                continue
            xs.append(xi + dx)
            ys.append(value)
            lo.append(value - ci[0] if ci else 0.0)
            hi.append(ci[1] - value if ci else 0.0)
        if xs:
            ax.errorbar(xs, ys, yerr=[lo, hi], marker=marker, color=color, capsize=3,
                        markerfacecolor="none", linestyle=":", linewidth=1.0,
                        label=f"{label}, 95 % interval")


def neutral_point_trend(trend_steps: Sequence[Mapping[str, Any]], ax: Axes | None = None,
                        *, next_step: Mapping[str, Any] | None = None,
                        aft_limit_pct_mac: float | None = None,
                        maneuver_point_pct_mac: float | None = None) -> Axes:
    """Neutral points and their 95 % intervals after each successive flight.

    Parameters
    ----------
    trend_steps : sequence of mappings
        One record per step, in flight order, with the keys
        ``n_flights`` (flights analysed so far), ``label`` (the flight added),
        ``stick_fixed_pct_mac`` and ``stick_free_pct_mac`` [%MAC] (None when
        not identifiable), ``ci95_pct_mac`` and ``stick_free_ci95_pct_mac``
        ((lo, hi) [%MAC] or None), and ``cg_pct_mac`` (CG of the flight added)
        [%MAC].
    ax : matplotlib.axes.Axes, optional
    next_step : mapping, optional
        The ``next_step`` block of ``--json`` (``max_cg_pct_mac``,
        ``limited_by``, ``most_aft_flown_pct_mac``, ``step_max_pct_mac``):
        the proposed most aft CG of the next flight (or "no step aft") and the
        policy step beyond the most aft CG flown.
    aft_limit_pct_mac : float, optional
        The aircraft's aft CG limit [%MAC].
    maneuver_point_pct_mac : float, optional
        The stick-fixed maneuver point [%MAC], when known.

    Returns
    -------
    matplotlib.axes.Axes

    Raises
    ------
    TrimlogError
        A record lacks one of the keys.
    """
    for i, rec in enumerate(trend_steps):
        missing = [k for k in TREND_KEYS if k not in rec]
        if missing:
            raise TrimlogError(f"neutral_point_trend: step {i + 1} lacks "
                               + ", ".join(f"'{k}'" for k in missing)
                               + "; expected the keys " + ", ".join(TREND_KEYS))
    ax = _new_axes(ax)
    x = np.arange(1, len(trend_steps) + 1, dtype=float)
    series = (("stick_fixed_pct_mac", "ci95_pct_mac", "stick-fixed neutral point", "o",
               PALETTE[0], -0.1),
              ("stick_free_pct_mac", "stick_free_ci95_pct_mac", "stick-free neutral point",
               "s", PALETTE[1], 0.1))
    unknown: list[list[str]] = [[] for _ in trend_steps]
    for key, ci_key, label, marker, color, dx in series:
        xs, ys, lo, hi = [], [], [], []
        for i, (xi, rec) in enumerate(zip(x, trend_steps, strict=True)):
            value, ci = rec[key], rec[ci_key]
            if value is None or not math.isfinite(value):
                unknown[i].append(label.split()[0].removeprefix("stick-"))
                continue
            xs.append(xi + dx)
            ys.append(value)
            lo.append(value - ci[0] if ci else 0.0)
            hi.append(ci[1] - value if ci else 0.0)
        if xs:
            ax.errorbar(xs, ys, yerr=[lo, hi], marker=marker, color=color, capsize=3,
                        linestyle="-", linewidth=1.0, label=f"{label}, 95 % interval")
    _maneuver_trend(ax, x, trend_steps)
    cgs = [(xi, rec["cg_pct_mac"]) for xi, rec in zip(x, trend_steps, strict=True)
           if rec["cg_pct_mac"] is not None]
    if cgs:
        ax.plot([c[0] for c in cgs], [c[1] for c in cgs], marker="v", color=PALETTE[2],
                linestyle="none", markersize=7, label="CG of the flight added")
    _trend_limits(ax, next_step, aft_limit_pct_mac, maneuver_point_pct_mac)
    if not len(trend_steps):
        _note(ax, "no flights in the history")
    # A step without an estimate says so under its flight, clear of the data.
    ticks = [f"{rec['n_flights']}: {rec['label']}"
             + (f"\nnot identifiable:\n{', '.join(kinds)}" if kinds else "")
             for rec, kinds in zip(trend_steps, unknown, strict=True)]
    few = len(trend_steps) <= 6
    ax.set_xticks(x, ticks, rotation=0 if few else 30, ha="center" if few else "right")
    ax.set_xlim(0.5, len(trend_steps) + 0.5)
    if ax.get_legend_handles_labels()[0]:
        ax.legend(fontsize=LEGEND_SIZE, loc="best")
    _finish(ax, "flights analysed [count]: the flight added", "CG and neutral point [%MAC]",
            "Neutral point after each flight")
    return ax


def _trend_limits(ax: Axes, next_step: Mapping[str, Any] | None, aft_limit: float | None,
                  maneuver_point: float | None) -> None:
    """Horizontal lines of the trend: limits, margin-policy bound, next CG, maneuver point."""
    if aft_limit is not None:
        ax.axhline(aft_limit, color="black", linestyle=":", linewidth=1.2,
                   label=f"aft CG limit {aft_limit:.1f} %MAC")
    if maneuver_point is not None:
        ax.axhline(maneuver_point, color=PALETTE[3], linestyle="-.", linewidth=1.2,
                   label=f"stick-fixed maneuver point {maneuver_point:.1f} %MAC")
    if not next_step:
        return
    aft, step = next_step.get("most_aft_flown_pct_mac"), next_step.get("step_max_pct_mac")
    if aft is not None and step is not None:
        ax.axhline(aft + step, color=GREY, linestyle="--", linewidth=1.0,
                   label=f"policy step: {step:g} %MAC beyond the most aft CG flown")
    bound, minimum = next_step.get("margin_bound_pct_mac"), next_step.get(
        "min_static_margin_pct_mac")
    if bound is not None:
        ax.axhline(bound, color=PALETTE[1], linestyle=(0, (5, 2, 1, 2)), linewidth=1.4,
                   label=f"margin policy: {bound:.1f} %MAC keeps the lower 95 % bound of the "
                   f"margin at {number(minimum, 'g')} %MAC")
    nxt = next_step.get("max_cg_pct_mac")
    if nxt is not None:
        why = step_limit_words(next_step.get("limited_by"))
        ax.axhline(nxt, color=PALETTE[2], linestyle="-", linewidth=2.0,
                   label=f"next flight: CG at most {nxt:.1f} %MAC ({why})")
    else:
        ax.text(0.02, 0.02, "next flight: no step aft is supported yet", color=PALETTE[2],
                transform=ax.transAxes, fontsize=LEGEND_SIZE + 1, va="bottom")
