"""Confidence bands at many points at once: the same numbers as the point-by-point predictions.

The plots draw these bands; they used to compute them one point at a time in
the views.  Synthetic data of known truth (tests/synthetic_flights.py).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from synthetic_flights import Truth, make_points

from trimlog.stability.margins import predict_elevator
from trimlog.stability.neutral_points import (
    analyze_stability,
    flight_gradients,
    two_stage_neutral_point,
)
from trimlog.statistics.fits import fit_matrix, t_quantile


@pytest.fixture(scope="module")
def stability():
    return analyze_stability(make_points(Truth(), sigma_elev_deg=0.2))


def test_trim_line_band_is_predict_elevator_point_by_point(stability):
    fit = stability.stick_fixed
    cl = np.linspace(*fit.cl_range, 25)
    h = 0.27
    setting = fit.latest_group
    value, lo, hi = fit.linear.confidence_band(
        pd.DataFrame({f"a[{setting}]": 1.0, "cl": cl, "h_cl": h * cl}))
    preds = [predict_elevator(fit, float(c), h, setting) for c in cl]
    # the point-by-point prediction is the reference (Montgomery, Peck and Vining sec. 2.4.2)
    np.testing.assert_allclose(value, [p.elevator_deg for p in preds], rtol=0, atol=1e-12)
    np.testing.assert_allclose(lo, [p.ci95_deg[0] for p in preds], rtol=0, atol=1e-12)
    np.testing.assert_allclose(hi, [p.ci95_deg[1] for p in preds], rtol=0, atol=1e-12)


def test_stick_free_and_two_stage_bands_match_predict(stability):
    free = stability.stick_free.linear
    group = stability.stick_free.groups[0]
    cl = np.linspace(0.2, 0.9, 7)
    value, lo, hi = free.confidence_band(
        pd.DataFrame({f"a[{group}]": 1.0, "cl": cl, "h_cl": 0.3 * cl}))
    t = t_quantile(free.df_resid)
    for c, v, low, high in zip(cl, value, lo, hi, strict=True):
        ref, se, _ = free.predict(pd.Series({f"a[{group}]": 1.0, "cl": c, "h_cl": 0.3 * c}))
        assert v == pytest.approx(ref, abs=1e-12)
        assert (low, high) == pytest.approx((ref - t * se, ref + t * se), abs=1e-12)
    two = two_stage_neutral_point(flight_gradients(make_points(Truth(), sigma_elev_deg=0.2))).linear
    h = np.linspace(0.1, 0.5, 5)
    value, lo, hi = two.confidence_band(pd.DataFrame({"const": 1.0, "h": h}))
    for x, v, low in zip(h, value, lo, strict=True):
        ref, se, _ = two.predict(pd.Series({"const": 1.0, "h": x}))
        assert v == pytest.approx(ref, abs=1e-12)
        assert low == pytest.approx(ref - t_quantile(two.df_resid) * se, abs=1e-12)


def test_no_degree_of_freedom_gives_the_line_without_a_band():
    # two points, two coefficients: the line is exact and has no interval
    fit = fit_matrix(np.array([1.0, 3.0]), np.column_stack([np.ones(2), [0.0, 1.0]]),
                     ["const", "x"])
    value, lo, hi = fit.confidence_band(pd.DataFrame({"const": 1.0, "x": [0.0, 0.5, 1.0]}))
    np.testing.assert_allclose(value, [1.0, 2.0, 3.0])  # y = 1 + 2 x through both points
    assert lo is None and hi is None
