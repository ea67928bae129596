"""Finding maneuvering points: steady turns held at a constant load factor.

A maneuvering point is a stretch of at least ``min_duration_s`` in which the
load factor is held steady above :data:`MANEUVER_NZ_MIN_G` (a level turn, or
one step of a wind-up turn flown in steps) while airspeed, elevator and stick
force stay within their tolerances.  It is the complement of a trim point:
:mod:`trimlog.pipeline.points` accepts a trim point only within ``nz_tol_g``
of 1 g, so no stretch of a log is ever both.  A row of a typed point table
with ``nz_g`` of at least :data:`MANEUVER_NZ_MIN_G` is a maneuvering point
and not a trim point (:func:`split_point_table`).

Method: the same binned, smoothed window test as the trim points (bins of
medians, a running median, the range of each signal over a window), with the
load factor as one more steady signal and the window's smallest load factor
at least :data:`MANEUVER_NZ_MIN_G`.  Each window is summarised from the raw
samples with the trim points' robust statistics and flags; a maneuvering
point carries the flag ``maneuver`` instead of ``nz_off``.

Steady pull-ups and push-overs hold their load factor for a second or two
only; they are not found here (their load factor is not steady over a
window long enough to average the noise).

The Maneuvering-points table has the columns of the Points contract.
"""

from __future__ import annotations

import numpy as np
import pandas as pd

from trimlog.input.logs import LogRead
from trimlog.pipeline import points as trim_points
from trimlog.pipeline.points import MANEUVER_NZ_MIN_G, PointSettings, split_point_table

__all__ = [
    "DETECTION_VERSION", "MANEUVER_NZ_MIN_G", "MANEUVER_SETTINGS", "find_maneuvering_points",
    "maneuvers_from_log", "split_point_table",
]

#: Version of the search for maneuvering points (and of the log reading it rests
#: on).  The history keeps the points found at import with this number and finds
#: them again from the log when it differs: raise it with any change that can move
#: a maneuvering point (``trimlog.history.maneuver_choices``).
DETECTION_VERSION = 1

#: Detection settings of maneuvering points.  Shorter holds than a trim point
#: (a wind-up step is flown for 10-20 s) and a little more room for airspeed
#: and force, which are harder to hold in a turn (common practice, no source).
MANEUVER_SETTINGS = PointSettings(
    min_duration_s=6.0, ias_tol_kt=3.0, elevator_tol_deg=0.6, force_tol_lbf=2.0, nz_tol_g=0.1,
)


def maneuvers_from_log(
    log: LogRead, *, flight: str = "1", settings: PointSettings | None = None
) -> pd.DataFrame:
    """Return the maneuvering points of a log as read, whichever its kind.

    Parameters
    ----------
    log : LogRead
        From :func:`trimlog.input.logs.read_log`.
    flight : str, optional
        Flight label where the log has no ``flight`` column.
    settings : PointSettings, optional
        Detection settings (default :data:`MANEUVER_SETTINGS`).

    Returns
    -------
    pandas.DataFrame
        The Points contract, one row per maneuvering point (possibly none).
    """
    if log.kind == "point_table":
        table = trim_points.point_table_to_points(log.data, flight=flight)
        return split_point_table(table)[1]
    return find_maneuvering_points(log.data, flight=flight, settings=settings)


def find_maneuvering_points(
    samples: pd.DataFrame, *, flight: str = "1", settings: PointSettings | None = None
) -> pd.DataFrame:
    """Find the steady turns of a time-series log.

    Parameters
    ----------
    samples : pandas.DataFrame
        The Samples contract (``LogRead.data``).  Without ``time_s`` (a point
        table) see :func:`split_point_table`; without ``nz_g`` no turn can be
        told from a trim point and the table is empty.
    flight : str, optional
        Flight label where there is no ``flight`` column.
    settings : PointSettings, optional
        Detection settings (default :data:`MANEUVER_SETTINGS`); ``nz_tol_g``
        is the largest range of the smoothed load factor within a point.

    Returns
    -------
    pandas.DataFrame
        One row per maneuvering point, the Points contract, flag ``maneuver``.

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> t = np.arange(0.0, 60.0, 0.1)
    >>> nz = np.where((t > 20) & (t < 40), 1.5, 1.0)
    >>> s = pd.DataFrame({"time_s": t, "ias_kt": 100.0, "pressure_alt_ft": 5000.0,
    ...                   "elevator_deg": 2.0 - 3.0 * (nz - 1.0), "nz_g": nz})
    >>> found = find_maneuvering_points(s)
    >>> len(found), round(float(found["nz_g"].iloc[0]), 2)
    (1, 1.5)
    """
    settings = settings or MANEUVER_SETTINGS
    if "time_s" not in samples:
        return split_point_table(trim_points.point_table_to_points(samples, flight=flight))[1]
    trim_points._check_columns(samples)
    frames = []
    if "nz_g" in samples and samples["nz_g"].notna().any():
        frames = [
            _maneuvers_of_flight(piece, label, settings)
            for label, part in trim_points._by_flight(samples, flight)
            for piece in trim_points._split_at_long_gaps(part, settings)
        ]
    return trim_points._assemble(frames, samples)


def _maneuvers_of_flight(
    samples: pd.DataFrame, flight: str, settings: PointSettings
) -> pd.DataFrame:
    time = samples["time_s"].to_numpy(dtype=float)
    finite = np.isfinite(time)
    if not finite.all():
        samples, time = samples[finite], time[finite]
    steps = np.diff(time)
    positive = steps[steps > 0] if len(time) > 2 else steps[:0]
    if not len(positive) or (steps < 0).any():
        # Too short, or out of order: the trim-point search reports the order error.
        return pd.DataFrame()
    bin_s = _bin_width(settings.bin_s, positive)
    tolerances = trim_points._tolerances(samples, settings)
    core = set(tolerances)
    tolerances["nz_g"] = settings.nz_tol_g
    k = np.floor((time - time[0]) / bin_s).astype(np.int64)
    n_bins = int(k[-1]) + 1
    columns = {name: samples[name].to_numpy(dtype=float) for name in tolerances}
    if any(np.isinf(c).any() for c in columns.values()):  # the helpers below assume none
        return _maneuvers_by_pandas(samples, flight, settings, tolerances, core, k, bin_s)
    smooth_bins = max(3, int(round(settings.smooth_s / bin_s)) | 1)
    half = max(1, int(round(settings.min_duration_s / bin_s)) // 2)
    window = 2 * half + 1
    min_periods = int(np.ceil(0.8 * window))
    # The load factor first: only a bin whose window holds it steady above
    # MANEUVER_NZ_MIN_G can be steady, so the other signals are binned and
    # smoothed only where such a window reads them (NaN elsewhere, never read).
    smooth = {"nz_g": _smoothed(columns["nz_g"], k, n_bins, smooth_bins)}
    low, high = _rolling_low_high(smooth["nz_g"], window, min_periods)
    steady = (np.nan_to_num(high - low, nan=np.inf) <= tolerances["nz_g"]) & (
        np.nan_to_num(low, nan=-np.inf) >= MANEUVER_NZ_MIN_G)
    near = _widened(steady, half)
    for name, tol in tolerances.items():
        if name != "nz_g":
            smooth[name] = _smoothed(columns[name], k, n_bins, smooth_bins, near)
            low, high = _rolling_low_high(smooth[name], window, min_periods)
            steady &= np.nan_to_num(high - low, nan=np.inf) <= tol
    values = np.column_stack([smooth[name] for name in tolerances])
    return _summarise(samples, flight, settings, tolerances, core, steady, values,
                      (time[0], bin_s, half))


def _smoothed(column: np.ndarray, k: np.ndarray, n_bins: int, smooth_bins: int,
              where: np.ndarray | None = None) -> np.ndarray:
    """Running median of the bin medians of ``column``, at the bins ``where`` (default all).

    The trim search's steps 1 and 2 (:func:`trimlog.pipeline.points.bin_medians`,
    :func:`~trimlog.pipeline.points.running_median`); NaN at the bins not ``where``.
    """
    smooth = trim_points.running_median(
        trim_points.bin_medians(column[None, :], k, n_bins), smooth_bins)[0]
    return smooth if where is None else np.where(where, smooth, np.nan)


def _widened(mask: np.ndarray, reach: int) -> np.ndarray:
    """``mask`` widened by ``reach`` places each way."""
    total = np.concatenate(([0], np.cumsum(mask, dtype=np.int64)))
    n = len(mask)
    index = np.arange(n)
    return total[np.minimum(index + reach + 1, n)] - total[np.maximum(index - reach, 0)] > 0


def _maneuvers_by_pandas(
    samples: pd.DataFrame, flight: str, settings: PointSettings, tolerances: dict[str, float],
    core: set[str], k: np.ndarray, bin_s: float,
) -> pd.DataFrame:
    """The window test in pandas, for samples with infinities (the numpy helpers assume none)."""
    n_bins = int(k[-1]) + 1
    binned = samples[list(tolerances)].groupby(k).median().reindex(range(n_bins))
    smooth_bins = max(3, int(round(settings.smooth_s / bin_s)) | 1)
    smooth = binned.rolling(smooth_bins, center=True, min_periods=1).median()
    half = max(1, int(round(settings.min_duration_s / bin_s)) // 2)
    window = 2 * half + 1
    min_periods = int(np.ceil(0.8 * window))
    steady = np.ones(n_bins, dtype=bool)
    for name, tol in tolerances.items():
        rolling = smooth[name].rolling(window, center=True, min_periods=min_periods)
        spread = (rolling.max() - rolling.min()).to_numpy()
        steady &= np.nan_to_num(spread, nan=np.inf) <= tol
    low = smooth["nz_g"].rolling(window, center=True, min_periods=min_periods).min().to_numpy()
    steady &= np.nan_to_num(low, nan=-np.inf) >= MANEUVER_NZ_MIN_G
    values = smooth[list(tolerances)].to_numpy()
    time0 = float(samples["time_s"].iloc[0])
    return _summarise(samples, flight, settings, tolerances, core, steady, values,
                      (time0, bin_s, half))


def _summarise(
    samples: pd.DataFrame, flight: str, settings: PointSettings, tolerances: dict[str, float],
    core: set[str], steady: np.ndarray, values: np.ndarray, grid: tuple[float, float, int],
) -> pd.DataFrame:
    """The maneuvering points of the steady bins, summarised from the raw samples."""
    time0, bin_s, half = grid
    n_bins, window = len(steady), 2 * half + 1
    tol = np.array(list(tolerances.values()))
    rows = []
    for a, b in _spans(trim_points._runs(steady), half, n_bins):
        a, b = trim_points._trim_edges(values[a : b + 1], tol, a)
        if b - a + 1 >= window:
            rows.append((time0 + a * bin_s, time0 + (b + 1) * bin_s, "maneuver", "", True))
    out = trim_points._summaries(_rows_in(samples, rows, core, settings), rows, flight,
                                 settings)
    if len(out):
        # Every maneuvering point is off 1 g by design: its flag is "maneuver", not "nz_off".
        out["flags"] = [
            ";".join(f for f in str(flags).split(";") if f and f != "nz_off")
            for flags in out["flags"]
        ]
        if "event" not in samples:
            out = out.drop(columns=["event"])
    return out


def _rows_in(samples: pd.DataFrame, rows: list[tuple], core: set[str],
             settings: PointSettings) -> pd.DataFrame:
    """The samples within the windows of ``rows`` (all of them where that would change a flag).

    A window's summary reads only the samples from its start up to its end, so
    the rows between windows are not copied; the flight's signals that count for
    the spike and dropout flags are told from all samples, so they must come
    out the same from the rows kept.
    """
    if not rows:
        return samples.iloc[0:0]
    time = samples["time_s"].to_numpy(dtype=float)
    bounds = np.searchsorted(time, np.array([(r[0], r[1]) for r in rows], dtype=float))
    keep = np.zeros(len(time) + 1, dtype=np.int64)
    np.add.at(keep, bounds[:, 0], 1)
    np.add.at(keep, bounds[:, 1], -1)
    index = np.flatnonzero(np.cumsum(keep[:-1]) > 0)
    if len(index) == len(time):
        return samples
    part = samples.iloc[index]
    return part if set(trim_points._tolerances(part, settings)) == core else samples


def _bin_width(least_s: float, positive_steps: np.ndarray) -> float:
    """``max(least_s, median step)``, the median computed only when it can exceed ``least_s``.

    With fewer than half the steps longer than ``least_s`` both middle steps are
    at most ``least_s``, and so is the median.
    """
    if 2 * np.count_nonzero(positive_steps > least_s) < len(positive_steps) - 2:
        return least_s
    return max(least_s, float(np.median(positive_steps)))


def _rolling_low_high(values: np.ndarray, window: int,
                      min_periods: int) -> tuple[np.ndarray, np.ndarray]:
    """Centred rolling minimum and maximum, NaN ignored, NaN with under ``min_periods`` values.

    As pandas' ``rolling(window, center=True, min_periods=min_periods)`` ``min()`` and
    ``max()`` (``window`` odd): one pass over the array per place in the window.
    """
    n, pad = len(values), np.full(window // 2, np.nan)
    padded = np.concatenate((pad, values, pad))
    low, high = padded[:n].copy(), padded[:n].copy()
    count = (~np.isnan(padded[:n])).astype(np.int64)
    for shift in range(1, window):
        part = padded[shift : shift + n]
        np.fmin(low, part, out=low)
        np.fmax(high, part, out=high)
        count += ~np.isnan(part)
    enough = count >= min_periods
    return np.where(enough, low, np.nan), np.where(enough, high, np.nan)


def _spans(runs: list[tuple[int, int]], half: int, n_bins: int) -> list[tuple[int, int]]:
    """Widen each run of steady centres by half a window, never into its neighbour's.

    Unlike the trim points' merge, two runs stay two points: the steps of a
    wind-up turn are joined by transitions shorter than a window, and each
    step is its own load factor.  Where the widened runs would meet they are
    cut halfway between; the edge trimming then drops the transition's tail.
    """
    spans = [(max(first - half, 0), min(last + half, n_bins - 1)) for first, last in runs]
    for i in range(1, len(spans)):
        if spans[i][0] <= spans[i - 1][1]:
            cut = (runs[i - 1][1] + runs[i][0]) // 2
            spans[i - 1] = (spans[i - 1][0], cut)
            spans[i] = (cut + 1, spans[i][1])
    return spans
