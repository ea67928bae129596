"""The curvature search's linear-time screen stops where refitting every step stops.

The search for the CL range over which the trim points stay linear leaves out the
highest-CL points one at a time and refits; with many flights it now screens the
steps by downdated sums (``fits.last_slope_screen``) and refits only the steps the
screen cannot rule out.  These tests compare the whole Curvature result with the
search that refits every step, on synthetic programmes of known truth (invented
numbers), and the screen's p with the fit's.  Regression of the search path itself:
no published value is involved.
"""

from __future__ import annotations

import numpy as np
import pytest
from synthetic_flights import Truth, make_points

from trimlog.stability import checks
from trimlog.stability.neutral_points import pooled_fit
from trimlog.statistics import fits

TRUTH = Truth()


def _programme(seed: int, n_flights: int, bend_deg: float):
    rng = np.random.default_rng(seed)
    cgs = tuple(np.linspace(15.0, 30.0, n_flights))
    return make_points(TRUTH, cgs_pct_mac=cgs, sigma_elev_deg=0.05, seed=rng,
                       curvature_deg=bend_deg, curvature_from_cl=rng.uniform(0.55, 0.8),
                       eas_kt=tuple(np.linspace(62.0, 125.0, 8)))


def test_screened_search_gives_the_result_of_refitting_every_step(monkeypatch):
    reached = 0
    for seed in range(12):
        pts = _programme(seed, n_flights=18 + seed % 6, bend_deg=-(4.0 + 1.5 * (seed % 8)))
        screened = pooled_fit(pts).curvature
        with monkeypatch.context() as m:
            m.setattr(checks, "_screen", lambda columns, top: np.full(top, np.nan))
            every = pooled_fit(pts).curvature
        assert screened == every, seed  # the same dataclass, field by field (floats exactly)
        reached += screened.significant and screened.cl_max_linear is not None
    assert reached >= 4  # the search ran past its first steps in most of them


@pytest.mark.parametrize("seed", range(10))
def test_screen_matches_the_fit_by_blocks_step_by_step(seed):
    rng = np.random.default_rng(seed)
    groups = int(rng.integers(16, 30))
    per = rng.integers(2, 9, groups)
    labels = np.repeat([f"F{g}" for g in range(groups)], per)
    n = len(labels)
    cl = rng.uniform(0.2, 1.2, n)
    h = np.repeat(rng.uniform(0.15, 0.3, groups), per)
    slopes = np.column_stack([cl, h * cl, cl**2])
    y = (np.repeat(rng.normal(0, 1, groups), per) + slopes @ [-5.0, 12.0, rng.normal(0, 2)]
         + 0.1 * rng.standard_normal(n))
    order = np.argsort(cl)
    labels, slopes, y = labels[order], slopes[order], y[order]
    drops = n // 3
    screen = fits.last_slope_screen(labels, slopes, y, drops, min_groups=16)
    for j in range(1, drops + 1):
        kept = np.unique(labels[:-j])
        fitted, _, p = fits.last_slope_test(labels[:-j], slopes[:-j], y[:-j])
        if not np.isfinite(screen[j - 1]):
            continue  # the screen abstains: the search refits this step
        assert len(kept) >= 16 and fitted
        assert screen[j - 1] == pytest.approx(p, rel=1e-6, abs=1e-12)
