"""Finding stabilized trim points in time-series logs.

A stabilized point is a stretch of at least ``min_duration_s`` in which
airspeed, elevator and (when logged) stick force stay within a tolerance, in
1-g flight when the load factor is logged.  Altitude may change at a steady
rate (off-trim points flown at fixed power climb or descend); it is not part
of the steadiness test, but its scatter about a straight line is flagged.

Method (all vectorised over the log)
------------------------------------
1. Each signal is reduced to medians over short time bins (``bin_s``, at
   least the sampling interval): a single-sample spike never reaches the
   test, and uneven sampling or gaps give empty bins instead of distortion.
2. The bin medians are smoothed by a running median (``smooth_s``, at least
   3 bins), which damps turbulence without blurring the edges of a hold.
3. A bin is *steady* when, over the window of ``min_duration_s`` centred on
   it, the range (max - min) of every smoothed signal is within its
   tolerance and, with ``nz_g`` logged, the smoothed load factor stays within
   ``nz_tol_g`` of 1 g (turns and pull-ups are excluded).  At least 80 % of
   the window's bins must hold data.
4. A point is the union of the windows of a run of steady bins.  A run
   whose straight-line trend exceeds a tolerance (a slow drift: each window
   steady, the whole run not) is halved until each piece passes; those
   pieces are flagged ``drift``.  End bins off the piece's median by more
   than half a tolerance (the tail of a transition) are trimmed.  Two pieces
   split by a burst of turbulence of at most ``merge_gap_s`` at 1 g, with
   medians within half a tolerance and no trend together, are joined.
5. Each point is summarised from the raw samples: samples further than
   ``spike_sigma`` robust standard deviations (1.4826 x MAD) from the median
   are left out (flag ``spike``), then mean and standard deviation.  The
   vertical speed is the mean of ``vs_fpm`` when logged, otherwise the slope
   of a straight line fitted to pressure altitude.

Event markers
-------------
When the samples have an ``event`` column with markers (any value other
than empty, ``0``, ``false``, ``off`` or ``no``), the markers are the
pilot's word on where the points are.  Consecutive rows with the same marker
form one mark.  Each mark claims the detected point that overlaps it (the
largest overlap); a mark that overlaps none then claims the first unclaimed
point starting within ``event_search_s`` after it (the button pressed just
before the hold settled); when
the mark spans at least ``min_duration_s`` and overlaps the point by that
much, the point is clipped to the mark.  The point's ``event`` column
carries the marker text.  A detected point that no mark claims is kept with
flag ``unmarked`` and ``included=False``; a mark that claims no steady
point becomes a point over the mark (at least ``min_duration_s`` from its
start) with flag ``marker_unsteady`` and ``included=False``.  Nothing is
deleted: the user can include either kind on review.

Quality flags
-------------
:data:`FLAG_TEXT` maps each code to the same one-line explanation, for the
views (a test checks that it and this table agree):

``spike``            samples left out of the means as spikes
``drift``            cut out of a slowly drifting stretch
``gap``              a gap in the time stamps longer than max_gap_s
``dropout``          more than 10 % of a core signal's samples missing
``alt_unsteady``     altitude scatter about a steady climb/descent > alt_scatter_ft
``turbulent``        airspeed standard deviation > turbulence_ias_kt
``nz_off``           mean load factor more than half nz_tol_g from 1 g
``no_nz``            load factor not logged: a steady turn cannot be told apart
``no_force``         stick force not logged
``unmarked``         markers are used but none marks this point (excluded)
``marker_unsteady``  marked by the pilot but not steady (excluded)
``table``            a row of a point table: no window statistics
``incomplete``       a point-table row missing airspeed, altitude or elevator (excluded)
``too_slow``         a hold below min_airspeed_kt: on the ground or taxiing (excluded)
``at_stop``          elevator at a stop: not a free trim (excluded)
``maneuver``         a maneuvering point: load factor held steady at 1.1 g or more
``off_speed``        a maneuvering point away from its flight's turn speed (excluded)

The analysis (:mod:`trimlog.pipeline.chain`) adds ``at_stop``; this module never does.
The flags for maneuvering points (:mod:`trimlog.pipeline.maneuvers`,
:mod:`trimlog.stability.maneuver`) are in the table too; a
point-table row at 1.1 g or more is a maneuvering point, never a trim point.

References
----------
.. [1] P. J. Huber and E. M. Ronchetti, *Robust Statistics*, 2nd ed., Wiley,
   2009, sec. 5.1: the median absolute deviation, scaled by 1/0.6745 = 1.4826
   to estimate the standard deviation of a normal sample.
.. [2] P. J. Rousseeuw and C. Croux, "Alternatives to the median absolute
   deviation", *J. Amer. Statist. Assoc.* 88 (1993) 1273-1283.
.. [3] The mean absolute deviation of a normal sample is sigma*sqrt(2/pi), so
   sigma = 1.2533 x mean absolute deviation (any statistics handbook, e.g.
   M. Abramowitz and I. Stegun, *Handbook of Mathematical Functions*, 26.2).
"""

from __future__ import annotations

import bisect
from collections.abc import Mapping
from dataclasses import dataclass, fields

import numpy as np
import pandas as pd

from trimlog.errors import InputFileError, TrimlogError
from trimlog.input.headers import QUANTITIES, TEXT_COLUMNS
from trimlog.input.logs import LogRead

__all__ = [
    "FLAG_TEXT", "MANEUVER_NZ_MIN_G", "PointSettings", "find_stabilized_points",
    "point_table_to_points", "points_from_log", "split_point_table",
]

#: Flag code -> one-line plain explanation, for every view of the Points table.
FLAG_TEXT: dict[str, str] = {
    "spike": "samples left out of the means as spikes",
    "drift": "cut out of a slowly drifting stretch",
    "gap": "a gap in the time stamps longer than max_gap_s",
    "dropout": "more than 10 % of a core signal's samples missing",
    "alt_unsteady": "altitude scatter about a steady climb/descent > alt_scatter_ft",
    "turbulent": "airspeed standard deviation > turbulence_ias_kt",
    "nz_off": "mean load factor more than half nz_tol_g from 1 g",
    "no_nz": "load factor not logged: a steady turn cannot be told apart",
    "no_force": "stick force not logged",
    "unmarked": "markers are used but none marks this point (excluded)",
    "marker_unsteady": "marked by the pilot but not steady (excluded)",
    "table": "a row of a point table: no window statistics",
    "incomplete": "a point-table row missing airspeed, altitude or elevator (excluded)",
    "too_slow": "a hold below min_airspeed_kt: on the ground or taxiing (excluded)",
    "at_stop": "elevator at a stop: not a free trim (excluded)",
    "maneuver": "a maneuvering point: load factor held steady at 1.1 g or more",
    "off_speed": "a maneuvering point away from its flight's turn speed (excluded)",
}

#: Smallest load factor of a maneuvering point [g] ("above about 1.1 g").  A trim
#: point is within ``PointSettings.nz_tol_g`` (0.1 g) of 1 g, so the two never meet.
MANEUVER_NZ_MIN_G = 1.1

_NO_MARK = frozenset({"", "0", "0.0", "false", "off", "no", "none", "nan"})
_MAD_TO_SIGMA = 1.4826  # MAD of a normal sample times this estimates its sigma
_STAT_EXCLUDE = ("time_s",)
_REQUIRED = ("pressure_alt_ft", "elevator_deg")


@dataclass(frozen=True)
class PointSettings:
    """Tuning of stabilized-point detection.

    Parameters
    ----------
    min_duration_s : float
        Shortest hold accepted as a point [s].
    bin_s : float
        Time bin for the first median [s] (raised to the sampling interval).
    smooth_s : float
        Running-median length over the bins [s] (at least 3 bins).
    ias_tol_kt : float
        Largest range of smoothed airspeed within a point [kt].
    elevator_tol_deg : float
        Largest range of smoothed elevator within a point [deg].
    force_tol_lbf : float
        Largest range of smoothed stick force within a point [lbf].
    nz_tol_g : float
        Largest departure of smoothed load factor from 1 g [g].
    max_gap_s : float
        Time-stamp gap inside a point that raises flag ``gap`` [s].
    spike_sigma : float
        Robust standard deviations beyond which a sample is a spike.
    event_search_s : float
        How long after a mark a point may start and still be claimed by it [s].
    alt_scatter_ft : float
        Altitude scatter about a straight line that raises ``alt_unsteady`` [ft].
    turbulence_ias_kt : float
        Airspeed standard deviation that raises ``turbulent`` [kt].
    min_airspeed_kt : float
        Holds slower than this are not flying trim points (taxi, run-up,
        ground): flagged ``too_slow`` and excluded [kt].
    merge_gap_s : float
        Longest unsteady burst between two pieces of equal values that are
        joined into one point [s].

    Notes
    -----
    The default tolerances are common practice, no source: a stabilized
    trim point is usually accepted within about ±1 kt and a few tenths of a
    degree of elevator.
    """

    min_duration_s: float = 10.0
    bin_s: float = 0.5
    smooth_s: float = 2.0
    ias_tol_kt: float = 2.0
    elevator_tol_deg: float = 0.5
    force_tol_lbf: float = 1.5
    nz_tol_g: float = 0.1
    max_gap_s: float = 2.0
    spike_sigma: float = 5.0
    event_search_s: float = 30.0
    alt_scatter_ft: float = 30.0
    turbulence_ias_kt: float = 2.0
    min_airspeed_kt: float = 30.0
    merge_gap_s: float = 5.0

    def __post_init__(self) -> None:
        for f in fields(self):
            value = getattr(self, f.name)
            if not (isinstance(value, int | float) and np.isfinite(value) and value > 0):
                raise TrimlogError(
                    f"point settings: {f.name} must be a positive number, found {value!r}"
                )


# --------------------------------------------------------------------- public


def points_from_log(
    log: LogRead, *, flight: str = "1", settings: PointSettings | None = None
) -> pd.DataFrame:
    """Return the Points table of a log as read, whichever its kind.

    Parameters
    ----------
    log : LogRead
        From :func:`trimlog.input.logs.read_log`.
    flight : str, optional
        Flight label where the log has no ``flight`` column.
    settings : PointSettings, optional
        Detection settings (time series only).

    Returns
    -------
    pandas.DataFrame
        The Points contract of ``DEVELOPERS.md``.
    """
    if log.kind == "point_table":
        # Rows at 1.1 g or more are maneuvering points (trimlog.pipeline.maneuvers), not trims.
        return split_point_table(point_table_to_points(log.data, flight=flight))[0]
    return find_stabilized_points(log.data, flight=flight, settings=settings or PointSettings())


def find_stabilized_points(
    samples: pd.DataFrame, *, flight: str = "1", settings: PointSettings | None = None,
    steady_signals: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    """Find the stabilized trim points of a time-series log.

    Parameters
    ----------
    samples : pandas.DataFrame
        The Samples contract (``LogRead.data``).  Without ``time_s`` each row
        is taken as a point (:func:`point_table_to_points`).
    flight : str, optional
        Flight label where there is no ``flight`` column; with one, each
        flight is searched separately.
    settings : PointSettings, optional
        Detection settings.
    steady_signals : mapping of str to float, optional
        Canonical column -> largest range [its unit] within a point, tested
        instead of airspeed, elevator and force (e.g. the legs of an airspeed
        calibration: airspeed, pressure altitude and GPS track).  The load
        factor is still held near 1 g when logged; no elevator is needed.

    Returns
    -------
    pandas.DataFrame
        One row per point (the Points contract of ``DEVELOPERS.md``) plus
        ``event`` (when the samples have markers) and ``source_line_start``,
        ``source_line_end``.  See the module notes for the method and flags.

    Raises
    ------
    InputFileError
        Samples without an airspeed, pressure altitude or elevator column.
    """
    settings = settings or PointSettings()
    if "time_s" not in samples:
        return point_table_to_points(samples, flight=flight)
    _check_columns(samples, steady_signals)
    frames = [
        _points_of_flight(piece, label, settings, steady_signals)
        for label, part in _by_flight(samples, flight)
        for piece in _split_at_long_gaps(part, settings)
    ]
    return _assemble(frames, samples)


def point_table_to_points(samples: pd.DataFrame, *, flight: str = "1") -> pd.DataFrame:
    """Turn a point table (one row per point) into the Points table.

    Parameters
    ----------
    samples : pandas.DataFrame
        The Samples contract of a point table.
    flight : str, optional
        Flight label where there is no ``flight`` column.

    Returns
    -------
    pandas.DataFrame
        The Points contract; spreads are NaN (not known), ``n_samples`` is 1,
        ``duration_s`` NaN, ``t_start_s``/``t_end_s`` the row's time when a
        time column exists.  A row missing airspeed, pressure altitude or
        elevator is kept with flag ``incomplete`` and ``included=False``.
    """
    _check_columns(samples)
    frames = []
    for label, part in _by_flight(samples, flight):
        out = pd.DataFrame(index=range(len(part)))
        for name in _numeric_names(part):
            out[name] = part[name].to_numpy(dtype=float)
            out[f"{name}_std"] = np.nan
        time = part["time_s"].to_numpy(dtype=float) if "time_s" in part else np.nan
        out["t_start_s"] = time
        out["t_end_s"] = time
        out["duration_s"] = np.nan
        out["n_samples"] = 1
        if "vs_fpm" not in out:
            out["vs_fpm"] = np.nan
        speed = _speed_name(part)
        complete = np.all(
            np.isfinite(part[[speed, *_REQUIRED]].to_numpy(dtype=float)), axis=1
        )
        base = "table" + ("" if "stick_force_lbf" in part else ";no_force")
        out["flags"] = np.where(complete, base, base + ";incomplete")
        out["included"] = complete
        if "event" in part:
            out["event"] = part["event"].to_numpy(dtype=object)
        lines = part["source_line"].to_numpy() if "source_line" in part else np.zeros(len(part))
        out["source_line_start"] = lines
        out["source_line_end"] = lines
        out["flight"] = label
        frames.append(out)
    return _assemble(frames, samples)


def split_point_table(table: pd.DataFrame) -> tuple[pd.DataFrame, pd.DataFrame]:
    """Split a point table's points into trim points and maneuvering points.

    Parameters
    ----------
    table : pandas.DataFrame
        The Points table of a point table (:func:`point_table_to_points`).

    Returns
    -------
    (pandas.DataFrame, pandas.DataFrame)
        Trim points (``nz_g`` missing or below :data:`MANEUVER_NZ_MIN_G`) and
        maneuvering points (flag ``maneuver`` added), each renumbered 1, 2, ...
        within its flight in the table's order.
    """
    if "nz_g" not in table:
        return table, table.iloc[0:0].copy()
    turn = table["nz_g"].to_numpy(dtype=float) >= MANEUVER_NZ_MIN_G
    trim = table.loc[~turn].reset_index(drop=True)
    man = table.loc[turn].reset_index(drop=True)
    man["flags"] = [_join(str(f), "maneuver") for f in man["flags"]]
    for part in (trim, man):
        if len(part):
            part["point"] = part.groupby("flight", sort=False).cumcount() + 1
    return trim, man


# --------------------------------------------------------------------- helpers


def _check_columns(samples: pd.DataFrame, signals: Mapping[str, float] | None = None) -> None:
    required = _REQUIRED if signals is None else ("pressure_alt_ft", *signals)
    missing = [c for c in dict.fromkeys(required) if c not in samples]
    if "ias_kt" not in samples and "cas_kt" not in samples:
        missing.insert(0, "ias_kt or cas_kt")
    if missing:
        raise InputFileError(
            f"samples lack {', '.join(missing)}; expected the Samples table of read_log"
        )


def _speed_name(samples: pd.DataFrame) -> str:
    return "ias_kt" if "ias_kt" in samples else "cas_kt"


def _numeric_names(samples: pd.DataFrame) -> list[str]:
    return [
        c for c in QUANTITIES
        if c in samples and c not in TEXT_COLUMNS and c not in _STAT_EXCLUDE
    ]


def _by_flight(samples: pd.DataFrame, default: str) -> list[tuple[str, pd.DataFrame]]:
    if "flight" not in samples:
        return [(str(default), samples)]
    labels = samples["flight"].astype(str).replace("", str(default))
    return [(str(k), part) for k, part in samples.groupby(labels.to_numpy(), sort=False)]


def _split_at_long_gaps(samples: pd.DataFrame, settings: PointSettings) -> list[pd.DataFrame]:
    """Cut a flight where the log stops for a long time, so each piece is binned alone.

    No point can span such a gap, and binning across it (a logger left off
    for an hour, or two days in one file) would only cost memory.
    """
    time = samples["time_s"].to_numpy(dtype=float)
    limit = max(60.0, 10.0 * settings.min_duration_s)
    cuts = np.flatnonzero(np.diff(time) > limit) + 1
    if not len(cuts):
        return [samples]
    edges = [0, *cuts.tolist(), len(samples)]
    return [samples.iloc[a:b] for a, b in zip(edges[:-1], edges[1:], strict=True)]


def _assemble(frames: list[pd.DataFrame], samples: pd.DataFrame) -> pd.DataFrame:
    names = _numeric_names(samples)
    head = ["flight", "point", "t_start_s", "t_end_s", "duration_s", "n_samples"]
    stats = names + [f"{n}_std" for n in names]
    if "vs_fpm" not in stats:
        stats.append("vs_fpm")
    tail = ["flags", "included"] + (["event"] if "event" in samples else [])
    tail += ["source_line_start", "source_line_end"]
    columns = head + stats + tail
    frames = [f for f in frames if len(f)]
    if not frames:
        return pd.DataFrame({c: pd.Series(dtype=_dtype(c)) for c in columns})
    table = pd.concat(frames, ignore_index=True)
    table = table.sort_values(["flight", "t_start_s"], kind="stable", ignore_index=True)
    table["point"] = table.groupby("flight", sort=False).cumcount() + 1
    table["included"] = table["included"].astype(bool)
    table["n_samples"] = table["n_samples"].astype(np.int64)
    for c in ("source_line_start", "source_line_end"):
        table[c] = table[c].astype(np.int64)
    for c in ("flight", "flags", "event"):
        if c in table:
            table[c] = table[c].astype(str)
    return table[columns]


def _dtype(column: str) -> str:
    if column in ("flight", "flags", "event"):
        return "str"
    if column == "included":
        return "bool"
    if column in ("point", "n_samples", "source_line_start", "source_line_end"):
        return "int64"
    return "float64"


# --------------------------------------------------------------------- detection


def _tolerances(
    samples: pd.DataFrame, settings: PointSettings, signals: Mapping[str, float] | None = None
) -> dict[str, float]:
    if signals is not None:
        return dict(signals)
    tolerances = {
        _speed_name(samples): settings.ias_tol_kt,
        "elevator_deg": settings.elevator_tol_deg,
    }
    if "stick_force_lbf" in samples and samples["stick_force_lbf"].notna().any():
        tolerances["stick_force_lbf"] = settings.force_tol_lbf
    return tolerances


def _points_of_flight(
    samples: pd.DataFrame, flight: str, settings: PointSettings,
    signals: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    samples = samples[np.isfinite(samples["time_s"].to_numpy(dtype=float))]
    time = samples["time_s"].to_numpy(dtype=float)
    if len(time) < 3:
        return pd.DataFrame()
    steps = np.diff(time)
    if (steps < 0).any():
        raise InputFileError(
            f"flight {flight}: time_s decreases after sample {int(np.argmax(steps < 0))}; "
            "expected samples in time order (as read_log gives them)"
        )
    positive = steps[steps > 0]
    if not len(positive):
        return pd.DataFrame()
    bin_s = max(settings.bin_s, float(np.median(positive)))
    tolerances = _tolerances(samples, settings, signals)
    tested = list(tolerances) + (["nz_g"] if "nz_g" in samples else [])
    smooth = _smoothed_bins(samples, tested, time, bin_s, settings)
    n_bins = len(smooth)
    half = max(1, int(round(settings.min_duration_s / bin_s)) // 2)
    window = 2 * half + 1
    min_periods = int(np.ceil(0.8 * window))
    steady = np.ones(n_bins, dtype=bool)
    for name, tol in tolerances.items():
        rolling = smooth[name].rolling(window, center=True, min_periods=min_periods)
        spread = (rolling.max() - rolling.min()).to_numpy()
        steady &= np.nan_to_num(spread, nan=np.inf) <= tol
    if "nz_g" in smooth:
        off = (smooth["nz_g"] - 1.0).abs().rolling(window, center=True, min_periods=min_periods)
        steady &= np.nan_to_num(off.max().to_numpy(), nan=np.inf) <= settings.nz_tol_g
    values = smooth[list(tolerances)].to_numpy()
    tol = np.array(list(tolerances.values()))
    pieces = []
    for a, b in _merge_spans(_runs(steady), half, n_bins):
        a, b = _trim_edges(values[a : b + 1], tol, a)
        for p0, p1, flag in _split_trend(values, a, b, tol, window, drifted=False):
            p0, p1 = _trim_edges(values[p0 : p1 + 1], tol, p0)
            if p1 - p0 + 1 >= window:
                pieces.append((p0, p1, flag))
    one_g = (
        np.ones(n_bins, dtype=bool) if "nz_g" not in smooth
        else ((smooth["nz_g"] - 1.0).abs() <= settings.nz_tol_g).to_numpy()
    )
    pieces = _rejoin(pieces, values, tol, one_g, int(round(settings.merge_gap_s / bin_s)), window)
    windows = [(time[0] + a * bin_s, time[0] + (b + 1) * bin_s, drift) for a, b, drift in pieces]
    marks = _marks(samples)
    rows = _match_marks(windows, marks, settings) if marks is not None else [
        (t0, t1, flags, "", True) for t0, t1, flags in windows
    ]
    return _summaries(samples, rows, flight, settings, signals)


def _smoothed_bins(
    samples: pd.DataFrame, names: list[str], time: np.ndarray, bin_s: float,
    settings: PointSettings,
) -> pd.DataFrame:
    """Medians of ``names`` over time bins, smoothed by a running median (steps 1 and 2).

    The same numbers as ``samples[names].groupby(bin).median()`` reindexed to
    every bin, then ``.rolling(smooth_bins, center=True, min_periods=1).median()``
    (pandas' own, taken when a value is infinite): both medians are order
    statistics (the middle value, or the two middle ones added and halved, NaN
    left out), found here by sorting bins of equal length side by side.  Where
    the middle two are 0.0 and -0.0 the sign of the zero may differ, which
    nothing downstream can see (every use is a comparison, a range or an abs).
    """
    k = np.floor((time - time[0]) / bin_s).astype(np.int64)
    n_bins = int(k[-1]) + 1
    smooth_bins = max(3, int(round(settings.smooth_s / bin_s)) | 1)
    columns = np.array([samples[n].to_numpy(dtype=float) for n in names]).reshape(
        len(names), len(time))
    if np.isinf(columns).any():  # pandas' running median takes infinity for its end marker
        binned = samples[names].groupby(k).median().reindex(range(n_bins))
        return binned.rolling(smooth_bins, center=True, min_periods=1).median()
    smooth = running_median(bin_medians(columns, k, n_bins), smooth_bins)
    return pd.DataFrame(dict(zip(names, smooth, strict=True)), columns=names)


def running_median(binned: np.ndarray, window: int) -> np.ndarray:
    """Centred running median of each row over ``window`` (odd) places, NaN left out.

    As pandas' ``rolling(window, center=True, min_periods=1).median()`` of each
    row (no infinities; the sign of a zero may differ, see :func:`_smoothed_bins`).
    Shared with the maneuvering search (:mod:`trimlog.pipeline.maneuvers`).
    """
    h = window // 2
    n_bins = binned.shape[1]
    padded = np.full((len(binned), n_bins + 2 * h), np.nan)
    padded[:, h : h + n_bins] = binned
    windows = np.sort(np.lib.stride_tricks.sliding_window_view(padded, window, axis=1), axis=2)
    smooth = windows[:, :, h].copy()  # windows without NaN: the middle one
    holes = np.isnan(padded).any(axis=0).astype(np.int64)
    touched = np.convolve(holes, np.ones(window, dtype=np.int64), mode="valid") > 0
    if touched.any():
        smooth[:, touched] = _middle(windows[:, touched])
    return smooth


def bin_medians(columns: np.ndarray, k: np.ndarray, n_bins: int) -> np.ndarray:
    """Median of each row of ``columns`` in each time bin ``k`` (sorted), NaN left out.

    As pandas' ``groupby(k).median().reindex(range(n_bins))`` of each row (no
    infinities); shared with the maneuvering search.
    """
    starts = np.searchsorted(k, np.arange(n_bins + 1))
    return _stretch_medians(columns, starts, np.unique(k[np.isnan(columns).any(axis=0)]))


def _stretch_medians(columns: np.ndarray, starts: np.ndarray, gappy: np.ndarray) -> np.ndarray:
    """Median of each row of ``columns`` over each stretch ``starts[i]:starts[i + 1]``.

    NaN is left out (NaN for a stretch without a value); ``gappy`` are the
    stretches that hold NaN.  Consecutive stretches of one length are sorted as
    one block (a reshaped view); lone ones are gathered by length.
    """
    m = len(columns)
    lengths = np.diff(starts)
    out = np.full((m, len(lengths)), np.nan)
    edges = np.flatnonzero(np.diff(lengths)) + 1
    runs = zip([0, *edges.tolist()], [*edges.tolist(), len(lengths)], strict=True)
    scattered: dict[int, list[np.ndarray]] = {}
    for a, b in runs:
        length = int(lengths[a])
        if length == 0:
            continue
        if b - a < 16:
            scattered.setdefault(length, []).append(np.arange(a, b))
            continue
        block = columns[:, starts[a] : starts[b]].reshape(m, b - a, length)
        out[:, a:b] = _middle_of_full(np.sort(block, axis=2))
    for length, parts in scattered.items():
        where = np.concatenate(parts)
        block = columns[:, starts[where][:, None] + np.arange(length)]
        block.sort(axis=2)
        out[:, where] = _middle_of_full(block)
    for length in np.unique(lengths[gappy]).tolist():  # with NaN: count what is there
        where = gappy[lengths[gappy] == length]
        block = columns[:, starts[where][:, None] + np.arange(length)]
        block.sort(axis=2)
        out[:, where] = _middle(block)
    return out


def _middle_of_full(ordered: np.ndarray) -> np.ndarray:
    """Median over the last axis of values sorted there, none NaN, as pandas' (see _middle)."""
    n = ordered.shape[-1]
    if n % 2:
        return ordered[..., n // 2].copy()
    return (ordered[..., n // 2] + ordered[..., n // 2 - 1]) / 2


def _middle(ordered: np.ndarray) -> np.ndarray:
    """Median over the last axis of values sorted there (NaN last, left out), as pandas'.

    The middle value, or ``(upper + lower) / 2`` of the middle two; NaN where
    there is no value.
    """
    count = ordered.shape[-1] - np.isnan(ordered).sum(axis=-1)
    upper = np.take_along_axis(ordered, (count // 2)[..., None], axis=-1)[..., 0]
    lower = np.take_along_axis(ordered, np.maximum(count // 2 - 1, 0)[..., None], axis=-1)[..., 0]
    out = np.where(count % 2 == 1, upper, (upper + lower) / 2)
    return np.where(count > 0, out, np.nan)


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Return (first, last) indices of each run of True."""
    edges = np.diff(np.concatenate(([0], mask.astype(np.int8), [0])))
    starts = np.flatnonzero(edges == 1)
    ends = np.flatnonzero(edges == -1) - 1
    return list(zip(starts.tolist(), ends.tolist(), strict=True))


def _merge_spans(runs: list[tuple[int, int]], half: int, n_bins: int) -> list[tuple[int, int]]:
    """Widen each run of steady centres by half a window and merge what overlaps."""
    spans: list[tuple[int, int]] = []
    for first, last in runs:
        a, b = max(first - half, 0), min(last + half, n_bins - 1)
        if spans and a <= spans[-1][1] + 1:
            spans[-1] = (spans[-1][0], max(b, spans[-1][1]))
        else:
            spans.append((a, b))
    return spans


def _split_trend(
    values: np.ndarray, a: int, b: int, tol: np.ndarray, window: int, *, drifted: bool
) -> list[tuple[int, int, str]]:
    """Halve bins a..b until the straight-line change over each piece is within tolerance.

    A trend, unlike the range, is barely moved by turbulence, so a long
    turbulent hold stays one point while a slow drift is cut (flag ``drift``).
    Pieces come out in time order.
    """
    out: list[tuple[int, int, str]] = []
    todo = [(a, b, drifted)]  # a stack: the right half waits under the left one
    while todo:
        a, b, drifted = todo.pop()
        if b - a + 1 < window:
            continue
        if _within_trend(values[a : b + 1], tol):
            out.append((a, b, "drift" if drifted else ""))
            continue
        mid = (a + b) // 2
        todo += [(mid + 1, b, True), (a, mid, True)]
    return out


def _within_trend(part: np.ndarray, tol: np.ndarray) -> bool:
    """Tell whether the least-squares change of each column over ``part`` is within ``tol``."""
    x = np.arange(len(part), dtype=float)[:, None]
    ok = np.isfinite(part)
    n = ok.sum(axis=0)
    xm = np.where(ok, x, 0.0).sum(axis=0) / np.maximum(n, 1)
    ym = np.where(ok, part, 0.0).sum(axis=0) / np.maximum(n, 1)
    dx = np.where(ok, x - xm, 0.0)
    slope = (dx * np.where(ok, part - ym, 0.0)).sum(axis=0) / np.maximum((dx**2).sum(axis=0), 1e-12)
    return bool(np.all(np.abs(slope) * len(part) <= tol))


def _rejoin(
    pieces: list[tuple[int, int, str]],
    values: np.ndarray,
    tol: np.ndarray,
    one_g: np.ndarray,
    max_gap: int,
    window: int,
) -> list[tuple[int, int, str]]:
    """Join neighbouring pieces that a short burst of turbulence split.

    Two pieces are one point when the bins between them are at most
    ``max_gap``, stayed at 1 g, their medians agree within half a tolerance,
    and the joined span still has no trend beyond the tolerance.  The tests
    run in that order, cheapest first, each only when the ones before pass.
    """
    out: list[tuple[int, int, str]] = []
    for piece in pieces:
        if out:
            a0, a1, flag_a = out[-1]
            b0, b1, flag_b = piece
            if (
                b0 - a1 - 1 <= max_gap
                and bool(one_g[a1 : b0 + 1].all())
                and np.all(
                    np.abs(
                        _column_median(values[a0 : a1 + 1]) - _column_median(values[b0 : b1 + 1])
                    )
                    <= 0.5 * tol
                )
                and len(_split_trend(values, a0, b1, tol, window, drifted=False)) == 1
            ):
                out[-1] = (a0, b1, _join(flag_a, flag_b))
                continue
        out.append(piece)
    return out


def _trim_edges(part: np.ndarray, tol: np.ndarray, offset: int) -> tuple[int, int]:
    """Drop end bins whose smoothed value is off the piece's median by over half a tolerance.

    The window test admits up to a tolerance of the entry or exit transition
    at each end; this keeps it out of the means.
    """
    off = np.abs(part - _column_median(part)) > 0.5 * tol
    good = np.flatnonzero(~np.any(off, axis=1))
    if not len(good):
        return offset, offset - 1
    return offset + int(good[0]), offset + int(good[-1])


def _marks(samples: pd.DataFrame) -> list[tuple[float, float, str]] | None:
    if "event" not in samples:
        return None
    text = samples["event"].astype(str).str.strip()
    marked = ~text.str.lower().isin(_NO_MARK).to_numpy()
    if not marked.any():
        return None
    labels = text.to_numpy(dtype=object)
    change = np.ones(len(labels), dtype=bool)
    change[1:] = (labels[1:] != labels[:-1]) | (marked[1:] != marked[:-1])
    time = samples["time_s"].to_numpy(dtype=float)
    group = np.cumsum(change)
    marks = []
    for g in np.unique(group[marked]):
        idx = np.flatnonzero(group == g)
        marks.append((float(time[idx[0]]), float(time[idx[-1]]), str(labels[idx[0]])))
    return marks


def _match_marks(
    windows: list[tuple[float, float, str]],
    marks: list[tuple[float, float, str]],
    settings: PointSettings,
) -> list[tuple[float, float, str, str, bool]]:
    """Pair marks with detected windows; see the module notes."""
    claimed: dict[int, tuple[float, float, str]] = {}
    pending = []
    for m0, m1, label in marks:
        overlaps = [
            (min(w1, m1) - max(w0, m0), i)
            for i, (w0, w1, _) in enumerate(windows)
            if i not in claimed and min(w1, m1) >= max(w0, m0)
        ]
        if overlaps:
            claimed[max(overlaps)[1]] = (m0, m1, label)
        else:
            pending.append((m0, m1, label))
    orphans = []
    for m0, m1, label in pending:
        # The button pressed just before the hold settled: the next point soon after.
        after = [
            (w0, i) for i, (w0, _, _) in enumerate(windows)
            if i not in claimed and m1 < w0 <= m1 + settings.event_search_s
        ]
        if after:
            claimed[min(after)[1]] = (m0, m1, label)
        else:
            orphans.append((m0, max(m1, m0 + settings.min_duration_s), label))
    rows = []
    for i, (w0, w1, flags) in enumerate(windows):
        if i not in claimed:
            rows.append((w0, w1, _join(flags, "unmarked"), "", False))
            continue
        m0, m1, label = claimed[i]
        overlap = min(w1, m1) - max(w0, m0)
        if m1 - m0 >= settings.min_duration_s and overlap >= settings.min_duration_s:
            w0, w1 = max(w0, m0), min(w1, m1)
        rows.append((w0, w1, flags, label, True))
    rows.extend((m0, m1, "marker_unsteady", label, False) for m0, m1, label in orphans)
    return rows


def _join(*flags: str) -> str:
    return ";".join(f for f in flags if f)


# --------------------------------------------------------------------- summaries


def _column_median(block: np.ndarray) -> np.ndarray:
    """Return the median of each column, ignoring NaN (NaN for an all-NaN column)."""
    return _row_median(np.ascontiguousarray(block.T))


def _row_median(rows: np.ndarray) -> np.ndarray:
    """Return the median of each row, ignoring NaN (NaN for an all-NaN row)."""
    gappy = np.isnan(rows).any(axis=1)
    if not gappy.any():
        return _median_of_finite_rows(rows)
    out = np.empty(len(rows))
    if not gappy.all():
        out[~gappy] = _median_of_finite_rows(rows[~gappy])
    # Only the rows with gaps need the full sort (NaN sorts last); both ways give
    # the mean of the middle two values, bit for bit.
    ordered = np.sort(rows[gappy], axis=1)
    count = np.isfinite(ordered).sum(axis=1)
    low = np.take_along_axis(ordered, np.maximum((count - 1) // 2, 0)[:, None], axis=1)[:, 0]
    high = np.take_along_axis(ordered, np.maximum(count // 2, 0)[:, None], axis=1)[:, 0]
    out[gappy] = np.where(count > 0, 0.5 * (low + high), np.nan)
    return out


def _median_of_finite_rows(rows: np.ndarray) -> np.ndarray:
    """``np.median(rows, axis=1)`` of rows without NaN, bit for bit, at a quarter of the cost.

    numpy's median also partitions at the last element to look for NaN, which the
    caller has ruled out; the middle pair is then averaged as numpy does, (a + b) / 2.
    """
    n = rows.shape[1]
    if n == 0:
        return np.median(rows, axis=1)
    half = n // 2
    if n % 2:
        return np.partition(rows, half, axis=1)[:, half] / 1.0
    part = np.partition(rows, half, axis=1)
    # the lower middle value is the largest of those partitioned below the upper one
    return (part[:, :half].max(axis=1) + part[:, half]) / 2.0


def _robust_stats(
    rows: np.ndarray, spike_sigma: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """Per quantity (row) of one window: mean, std, spikes left out, missing count.

    Samples beyond ``spike_sigma`` robust standard deviations (1.4826 x MAD,
    [1]_, [2]_) from the median are left out of mean and std.  Where the MAD
    is zero (a quantised sensor), 1.2533 x the mean absolute deviation [3]_
    is used instead, so that a lone spike is still seen.

    The medians are order statistics, taken from the rows and their deviations
    sorted (NaN last), with no row-by-row steps; the sums are masked only where
    a row has gaps or spikes.  Every value is the same bit for bit as
    :func:`_robust_stats_general`'s, which takes rows with infinities or
    values beyond 1e307 (whose middle two could overflow when added).
    """
    n_rows, n = rows.shape
    if n == 0:
        return _robust_stats_general(rows, spike_sigma)
    gaps = np.isnan(rows)
    if not gaps.any():
        spread = _middle_and_spread(rows)
        if spread is None:
            return _robust_stats_general(rows, spike_sigma)
        median, sigma, widest = spread
        count, gaps = np.full(n_rows, n), None
    else:
        ordered = np.sort(rows, axis=1)  # NaN last
        count = n - gaps.sum(axis=1)
        at = np.arange(n_rows)
        last = np.maximum(count - 1, 0)
        if (np.abs(ordered[:, 0]) >= 1e307).any() or (np.abs(ordered[at, last]) >= 1e307).any():
            return _robust_stats_general(rows, spike_sigma)
        low, high = np.maximum((count - 1) // 2, 0), count // 2
        # as _row_median: (a + b) / 2 of the middle two, the middle one alone when odd
        median = 0.5 * (ordered[at, low] + ordered[at, high])  # NaN without values
        deviation = np.sort(np.abs(ordered - median[:, None]), axis=1)
        sigma = _MAD_TO_SIGMA * (0.5 * (deviation[at, low] + deviation[at, high]))
        widest = deviation[at, last]
    with np.errstate(invalid="ignore", divide="ignore"):
        zero = ~(sigma > 0)
        if zero.any():  # 1.2533 x the mean absolute deviation instead
            away = np.abs(rows[zero] - median[zero, None])
            if gaps is not None:
                np.copyto(away, 0.0, where=gaps[zero])
            sigma[zero] = 1.2533 * np.nan_to_num(away.sum(axis=1) / count[zero])
        limit = spike_sigma * sigma
        spiky = (sigma > 0) & (widest > limit)
        out = gaps
        if spiky.any():
            out = gaps.copy() if gaps is not None else np.zeros(rows.shape, dtype=bool)
            out[spiky] = ~(np.abs(rows[spiky] - median[spiky, None]) <= limit[spiky, None])
        n_kept = count if out is None else n - out.sum(axis=1)
        mean = (rows if out is None else np.where(out, 0.0, rows)).sum(axis=1) / n_kept
        square = rows - mean[:, None]
        np.multiply(square, square, out=square)
        if out is not None:
            np.copyto(square, 0.0, where=out)
        std = np.where(n_kept > 1, np.sqrt(square.sum(axis=1) / (n_kept - 1)), np.nan)
    mean = np.where(n_kept > 0, mean, np.nan)
    return mean, std, count - n_kept, n - count


def _middle_and_spread(rows: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray] | None:
    """Median, 1.4826 x MAD and widest deviation of rows without NaN.

    :func:`_median_of_finite_rows` of the rows and of their deviations: the
    same order statistics as a full sort, in linear time.  None for rows with
    infinities or values beyond 1e307, which need :func:`_robust_stats_general`.
    """
    if max(-rows.min(), rows.max()) >= 1e307:  # NaN-free, so both are numbers
        return None
    median = _median_of_finite_rows(rows)
    deviation = np.abs(rows - median[:, None])
    return median, _MAD_TO_SIGMA * _median_of_finite_rows(deviation), deviation.max(axis=1)


def _robust_stats_general(
    rows: np.ndarray, spike_sigma: float
) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """:func:`_robust_stats` of any rows, infinities too: every step on every row."""
    finite = np.isfinite(rows)
    median = _row_median(rows)
    deviation = np.abs(rows - median[:, None])
    sigma = _MAD_TO_SIGMA * _row_median(deviation)
    count = finite.sum(axis=1)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_dev = np.where(finite, deviation, 0.0).sum(axis=1) / count
        sigma = np.where(sigma > 0, sigma, 1.2533 * np.nan_to_num(mean_dev))
        kept = finite & ((sigma[:, None] == 0) | (deviation <= spike_sigma * sigma[:, None]))
        n_kept = kept.sum(axis=1)
        mean = np.where(kept, rows, 0.0).sum(axis=1) / n_kept
        square = np.where(kept, (rows - mean[:, None]) ** 2, 0.0).sum(axis=1)
        std = np.where(n_kept > 1, np.sqrt(square / (n_kept - 1)), np.nan)
    mean = np.where(n_kept > 0, mean, np.nan)
    return mean, std, count - n_kept, (~finite).sum(axis=1)


def _summaries(
    samples: pd.DataFrame,
    rows: list[tuple[float, float, str, str, bool]],
    flight: str,
    settings: PointSettings,
    signals: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    time = samples["time_s"].to_numpy(dtype=float)
    names = _numeric_names(samples)
    arrays = {n: samples[n].to_numpy(dtype=float) for n in names}
    by_row = np.array([arrays[n] for n in names]).reshape(len(names), len(time))
    # steps over max_gap_s: a window i0:i1 has one when one starts in i0 .. i1 - 2
    long_steps = np.flatnonzero(np.diff(time) > settings.max_gap_s).tolist()
    lines = samples["source_line"].to_numpy() if "source_line" in samples else np.zeros(len(time))
    core = set(_tolerances(samples, settings, signals))
    speed = _speed_name(samples)
    out = []
    bounds = np.searchsorted(time, [(t0, t1) for t0, t1, *_ in rows]).reshape(len(rows), 2)
    for (i0, i1), (_, _, flags, label, included) in zip(bounds.tolist(), rows, strict=True):
        if i1 - i0 < 2:
            continue
        record: dict[str, object] = {"flight": flight, "event": label, "included": included}
        flag_set = [f for f in flags.split(";") if f]
        means, stds, spikes, missing = (
            a.tolist() for a in _robust_stats(by_row[:, i0:i1], settings.spike_sigma))
        for j, name in enumerate(names):
            record[name], record[f"{name}_std"] = means[j], stds[j]
            if name in core and spikes[j]:
                flag_set.append("spike")
            if name in core and missing[j] > 0.1 * (i1 - i0):
                flag_set.append("dropout")
        t = time[i0:i1]
        record.update(
            t_start_s=float(t[0]), t_end_s=float(t[-1]), duration_s=float(t[-1] - t[0]),
            n_samples=int(i1 - i0), source_line_start=int(lines[i0]),
            source_line_end=int(lines[i1 - 1]),
        )
        slope, scatter = _altitude_trend(t, arrays["pressure_alt_ft"][i0:i1])
        if "vs_fpm" not in arrays:
            record["vs_fpm"] = slope
        if scatter > settings.alt_scatter_ft:
            flag_set.append("alt_unsteady")
        if bisect.bisect_left(long_steps, i0) < bisect.bisect_left(long_steps, i1 - 1):
            flag_set.append("gap")
        if record.get(f"{speed}_std", 0.0) > settings.turbulence_ias_kt:
            flag_set.append("turbulent")
        if "nz_g" in arrays:
            if abs(float(record["nz_g"]) - 1.0) > 0.5 * settings.nz_tol_g:
                flag_set.append("nz_off")
        else:
            flag_set.append("no_nz")
        if "stick_force_lbf" not in arrays:
            flag_set.append("no_force")
        if not float(record[speed]) >= settings.min_airspeed_kt:
            flag_set.append("too_slow")
            record["included"] = False
        record["flags"] = ";".join(dict.fromkeys(flag_set))
        out.append(record)
    return pd.DataFrame(out)


def _altitude_trend(t: np.ndarray, altitude: np.ndarray) -> tuple[float, float]:
    """Return climb rate [ft/min] of a straight-line fit, and scatter about it [ft]."""
    ok = np.isfinite(altitude)
    if not ok.all():
        t, altitude = t[ok], altitude[ok]
    # t is in time order, so its range (np.ptp) is its last minus its first
    if len(t) < 3 or t[-1] - t[0] == 0:
        return np.nan, 0.0
    tc = t - t.mean()
    offset = altitude - altitude.mean()
    slope = float(np.dot(tc, offset) / np.dot(tc, tc))
    residual = offset - slope * tc
    return slope * 60.0, float(np.std(residual))
