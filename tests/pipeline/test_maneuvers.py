"""Tests of trimlog.pipeline.maneuvers: steady turns in logs (synthetic data of known truth)."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from trimlog.pipeline.maneuvers import find_maneuvering_points
from trimlog.pipeline.points import (
    MANEUVER_NZ_MIN_G,
    find_stabilized_points,
    point_table_to_points,
    split_point_table,
)

STEPS = (1.2, 1.4, 1.6, 1.8, 2.0)


def _wind_up_log(seed: int = 1, noise: float = 1.0) -> pd.DataFrame:
    """Trim holds at 1 g, then a wind-up turn in 15-s steps with 5-s transitions (synthetic)."""
    rng = np.random.default_rng(seed)
    dt = 0.1
    # (duration [s], load factor at the end, IAS at the end [kt]); steady segments repeat
    # the previous values, transitions ramp linearly to theirs.
    plan = [(30.0, 1.0, 100.0), (12.0, 1.0, 90.0), (30.0, 1.0, 90.0), (12.0, 1.0, 100.0),
            (30.0, 1.0, 100.0)]
    for n in STEPS:
        plan += [(5.0, n, 100.0), (15.0, n, 100.0)]
    plan += [(8.0, 1.0, 100.0), (20.0, 1.0, 100.0)]
    knots_t, knots_n, knots_v, now = [0.0], [1.0], [100.0], 0.0
    for duration, n, v in plan:
        now += duration
        knots_t.append(now)
        knots_n.append(n)
        knots_v.append(v)
    t_a = np.arange(0.0, now, dt)
    nz_a = np.interp(t_a, knots_t, knots_n)
    ias_a = np.interp(t_a, knots_t, knots_v)
    elevator = 2.0 - 1.0e4 / ias_a**2 - 3.0 * (nz_a - 1.0)
    force = 0.15 * (100.0 - ias_a) + 8.0 * (nz_a - 1.0)
    n_s = t_a.size
    return pd.DataFrame({
        "time_s": t_a,
        "ias_kt": ias_a + noise * 0.3 * rng.standard_normal(n_s),
        "pressure_alt_ft": 5000.0 + noise * 3.0 * rng.standard_normal(n_s),
        "elevator_deg": elevator + noise * 0.05 * rng.standard_normal(n_s),
        "stick_force_lbf": force + noise * 0.2 * rng.standard_normal(n_s),
        "nz_g": nz_a + noise * 0.01 * rng.standard_normal(n_s),
    })


def test_each_wind_up_step_is_one_maneuvering_point():
    samples = _wind_up_log()
    found = find_maneuvering_points(samples)
    assert len(found) == len(STEPS)
    np.testing.assert_allclose(found["nz_g"], STEPS, atol=0.01)
    np.testing.assert_allclose(found["elevator_deg"], 2.0 - 1.0 - 3.0 * (np.array(STEPS) - 1),
                               atol=0.05)
    assert (found["duration_s"] >= 6.0).all()
    assert found["flags"].str.contains("maneuver").all()
    assert not found["flags"].str.contains("nz_off").any()


def test_a_turn_is_never_a_trim_point_and_a_trim_point_never_a_maneuver():
    samples = _wind_up_log()
    trims = find_stabilized_points(samples)
    turns = find_maneuvering_points(samples)
    assert len(trims) == 4  # the three 1-g holds and the last one
    assert (np.abs(trims["nz_g"] - 1.0) < 0.1).all()
    assert (turns["nz_g"] >= MANEUVER_NZ_MIN_G).all()
    for t0, t1 in zip(turns["t_start_s"], turns["t_end_s"], strict=True):
        overlap = (trims["t_start_s"] < t1) & (trims["t_end_s"] > t0)
        assert not overlap.any()


def test_no_load_factor_means_no_maneuvering_point():
    samples = _wind_up_log().drop(columns=["nz_g"])
    assert len(find_maneuvering_points(samples)) == 0


def test_point_table_rows_at_1_1_g_or_more_are_maneuvering_points():
    table = pd.DataFrame({"ias_kt": [100.0, 100.0, 90.0, 100.0],
                          "pressure_alt_ft": 5000.0, "elevator_deg": [2.0, 0.5, 3.0, -1.0],
                          "stick_force_lbf": [0.0, 4.0, 1.5, 8.0],
                          "nz_g": [1.0, 1.5, 1.02, 2.0]})
    trim, man = split_point_table(point_table_to_points(table))
    assert list(trim["nz_g"]) == [1.0, 1.02] and list(trim["point"]) == [1, 2]
    assert list(man["nz_g"]) == [1.5, 2.0] and list(man["point"]) == [1, 2]
    assert man["flags"].str.contains("maneuver").all()


@pytest.mark.parametrize("seed", [2, 3, 4])
def test_detection_is_stable_under_noise(seed):
    found = find_maneuvering_points(_wind_up_log(seed))
    assert len(found) == len(STEPS)


def test_the_window_helpers_give_what_pandas_gives():
    """Binned medians, the running median and the rolling range, bit for bit (random data)."""
    from trimlog.pipeline import maneuvers
    from trimlog.pipeline.points import bin_medians, running_median

    rng = np.random.default_rng(3)
    for _ in range(300):
        n = int(rng.integers(3, 300))
        t = np.cumsum(rng.choice([0.0, 0.02, 0.1, 0.3, 0.7, 2.0], size=n,
                                 p=[0.05, 0.4, 0.3, 0.15, 0.07, 0.03]))
        x = np.round(rng.normal(size=n), int(rng.integers(0, 3)))
        x[rng.random(n) < rng.choice([0.0, 0.1, 0.5, 0.95])] = np.nan
        k = np.floor((t - t[0]) / 0.5).astype(np.int64)
        n_bins = int(k[-1]) + 1
        want = pd.Series(x).groupby(k).median().reindex(range(n_bins)).to_numpy()
        got = bin_medians(x[None, :], k, n_bins)[0]
        np.testing.assert_array_equal(got, want)
        w = int(rng.choice([3, 5, 13]))
        smooth = pd.Series(want).rolling(w, center=True, min_periods=1).median().to_numpy()
        np.testing.assert_array_equal(running_median(got[None, :], w)[0], smooth)
        np.testing.assert_array_equal(maneuvers._smoothed(x, k, n_bins, w), smooth)
        where = rng.random(n_bins) < rng.choice([0.0, 0.05, 0.5])
        part = maneuvers._smoothed(x, k, n_bins, w, where)
        np.testing.assert_array_equal(part[where], smooth[where])
        assert np.isnan(part[~where]).all()
        least = int(rng.integers(1, w + 1))
        rolling = pd.Series(smooth).rolling(w, center=True, min_periods=least)
        low, high = maneuvers._rolling_low_high(smooth, w, least)
        np.testing.assert_array_equal(low, rolling.min().to_numpy())
        np.testing.assert_array_equal(high, rolling.max().to_numpy())
        steps = np.diff(t)
        steps = steps[steps > 0]
        if len(steps):
            assert maneuvers._bin_width(0.1, steps) == max(0.1, float(np.median(steps)))


def test_infinite_samples_take_the_pandas_window_test():
    samples = _wind_up_log()
    plain = find_maneuvering_points(samples)
    samples.loc[5, "elevator_deg"] = np.inf  # far from every step: the same points
    pd.testing.assert_frame_equal(find_maneuvering_points(samples), plain)
