"""The flight-level error model: coverage of the headline neutral points under errors shared
by a whole flight (issue 12 §2).

All data here are synthetic flights of known truth (the linear trim theory of Etkin & Reid,
*Dynamics of Flight*, sec. 2.5): 4 flights x 8 points at 15/20/25/30 %MAC, 65-125 kt EAS,
elevator noise 0.2 deg, force noise 0.4 lbf (constant in lbf), hn 40 and hn' 36 %MAC.  The
errors shared by a flight are drawn once per flight: its CG (the logged CG of every point is
off by the same amount) and its force-gauge zero (every force of the flight is off by the
same amount).  The model is told the 1-sigma sizes the programme declares
(``cg_uncertainty``, ``stick_force_zero_uncertainty``), which is what it would be told by
the loading sheet and the profile.

Measured on this machine, 1000 seeds per scenario (the slow tests print their figures):

| declared error, 1 sigma per flight | stick-fixed | stick-free | independent fit (400 seeds) |
|------------------------------------|-------------|------------|-----------------------------|
| none                               | 96.5 %      | 95.7 %     | 95.2 % / 86.0 %             |
| CG 0.5 %MAC                        | 96.1 %      | 96.6 %     | 79.2 % / 57.5 %             |
| CG 1.0 %MAC                        | 95.0 %      | 95.6 %     | 64.2 % / 43.8 %             |
| force zero 0.5 lbf                 | 96.5 %      | 96.5 %     | 95.2 % / 73.8 %             |

Median width with no flight-level error: stick-fixed 1.05 x the independent-points fit
(2.60 against 2.48 %MAC); stick-free 1.20 x (1.10 against 0.92 %MAC, whose 86 % coverage
shows it too short).  Not declared (the model told 0), the same errors are covered only in
part: CG 0.5 %MAC 80.3 % / 86.6 %, force zero 0.5 lbf 96.5 % / 88.4 % -- four flights
cannot reveal a flight-level error, so the declared uncertainty is what protects.  The
profile's defaults (0.3 %MAC, 0.3 lbf) on data without flight-level error cover 99.2 % /
100 %: conservative, as a default should be.
"""

from __future__ import annotations

import numpy as np
import pytest

from trimlog.stability.neutral_points import neutral_point_from_coefficients, pooled_fit
from trimlog.statistics.flight_effects import fit_flight_level

# synthetic truth, not a published value
HN, HN_FREE, CMDE_PER_DEG, FSQ_GAIN_FT2 = 0.40, 0.36, -1.3 * np.pi / 180.0, 15.0
Q_PSF_PER_KT2 = 0.5 * 0.0023769 * 1.687810**2
CGS = np.array([15.0, 20.0, 25.0, 30.0]) / 100.0
EAS = np.linspace(65.0, 125.0, 8)
WEIGHT_LB, AREA_FT2 = 1500.0, 118.0


def _flights(rng, cg_sigma, force_zero_sigma, elev_sigma=0.2, force_sigma=0.4):
    """One programme: arrays of points with per-flight CG and force-zero errors."""
    k, m = len(CGS), len(EAS)
    q = np.tile(Q_PSF_PER_KT2 * EAS**2, k)
    cl = WEIGHT_LB / (q * AREA_FT2)
    h = np.repeat(CGS, m)
    elev = -(0.06 + (h - HN) * cl) / CMDE_PER_DEG + elev_sigma * rng.standard_normal(k * m)
    cl_trim = WEIGHT_LB / (Q_PSF_PER_KT2 * 95.0**2 * AREA_FT2)
    grad = FSQ_GAIN_FT2 * (HN_FREE - h)
    fs = (q * grad * (cl - cl_trim) + force_sigma * rng.standard_normal(k * m)
          + np.repeat(force_zero_sigma * rng.standard_normal(k), m))
    logged_h = h + np.repeat(cg_sigma * rng.standard_normal(k), m)
    flight = np.repeat(np.arange(k), m)
    return logged_h, cl, q, elev, fs / q, flight


def _headline(y, cl, h, group, flight, kind, weights=None, cg=0.0, slope=0.0):
    fit = fit_flight_level(y, cl, h, group, flight, weights=weights, cg_sigma=cg,
                           slope_sigma=slope)
    np_ = neutral_point_from_coefficients(
        fit.b, fit.c, fit.cov_bc[0, 0], fit.cov_bc[1, 1], fit.cov_bc[0, 1], fit.df, kind=kind,
        method="flight_level", spread=15.0, n=len(y), n_flights=4, lemac_in=None, mac_in=None)
    return np_


def _coverage(n_seeds, cg_sigma, force_zero_sigma):
    hits = {"stick_fixed": 0, "stick_free": 0}
    widths = {"stick_fixed": [], "stick_free": []}
    for seed in range(n_seeds):
        h, cl, q, elev, fsq, flight = _flights(np.random.default_rng(seed), cg_sigma,
                                                force_zero_sigma)
        for kind, y, truth, group, weights, slope in (
            ("stick_fixed", elev, HN, np.zeros(len(h)), None, 0.0),
            ("stick_free", fsq, HN_FREE, flight, q**2, force_zero_sigma / (q * cl)),
        ):
            np_ = _headline(y, cl, h, group, flight, kind, weights, cg_sigma, slope)
            if not np_.identifiable:  # an unbounded or too-wide set contains the truth
                hits[kind] += 1
                widths[kind].append(np.inf)
                continue
            lo, hi = np_.ci95_pct_mac
            hits[kind] += lo <= 100.0 * truth <= hi
            widths[kind].append(hi - lo)
    return ({k: 100.0 * v / n_seeds for k, v in hits.items()},
            {k: float(np.median(v)) for k, v in widths.items()})


@pytest.mark.slow
@pytest.mark.parametrize("cg_sigma_pct, force_zero_lbf", [
    (0.0, 0.0),   # measured 96.5 / 95.7 % (1000 seeds)
    (0.5, 0.0),   # measured 96.1 / 96.6 %
    (1.0, 0.0),   # measured 95.0 / 95.6 %
    (0.0, 0.5),   # measured 96.5 / 96.5 %
])
def test_headline_intervals_cover_under_flight_level_errors(cg_sigma_pct, force_zero_lbf):
    cover, width = _coverage(1000, cg_sigma_pct / 100.0, force_zero_lbf)
    print(f"CG {cg_sigma_pct} %MAC, force zero {force_zero_lbf} lbf: coverage {cover}, "
          f"median width {width} %MAC")
    for kind in cover:
        assert 93.0 <= cover[kind] <= 97.0, (kind, cover, width)


def _independent_width(n_seeds):
    """Median width of the ordinary pooled fit (every point independent) on the same data."""
    import pandas as pd
    out = {"stick_fixed": [], "stick_free": []}
    for seed in range(n_seeds):
        h, cl, q, elev, fsq, flight = _flights(np.random.default_rng(seed), 0.0, 0.0)
        frame = pd.DataFrame({"flight": flight.astype(str), "point": np.arange(len(h)),
                              "included": True, "cl": cl, "elevator_deg": elev, "h": h,
                              "stab_setting": "s0", "fs_over_q_ft2": fsq, "q_psf": q})
        for kind in out:
            np_ = pooled_fit(frame, kind).independent_neutral_point
            out[kind].append(np.diff(np_.ci95_pct_mac)[0] if np_.identifiable else np.inf)
    return {k: float(np.median(v)) for k, v in out.items()}


@pytest.mark.slow
def test_no_wider_than_needed_without_flight_level_errors():
    # measured: stick-fixed 1.05 x, stick-free 1.20 x the independent-points fit (whose
    # stick-free interval covers only 86 %: it is too short, not a fair yardstick)
    _, width = _coverage(100, 0.0, 0.0)
    independent = _independent_width(100)
    assert width["stick_fixed"] <= 1.2 * independent["stick_fixed"], (width, independent)
    assert width["stick_free"] <= 1.25 * independent["stick_free"], (width, independent)


def test_headline_of_pooled_fit_is_the_flight_level_model():
    import pandas as pd
    h, cl, q, elev, fsq, flight = _flights(np.random.default_rng(3), 0.005, 0.5)
    frame = pd.DataFrame({"flight": flight.astype(str), "point": np.arange(len(h)),
                          "included": True, "cl": cl, "elevator_deg": elev, "h": h,
                          "stab_setting": "s0", "fs_over_q_ft2": fsq, "q_psf": q,
                          "cg_uncertainty_pct_mac": 0.5})
    fixed = pooled_fit(frame, "stick_fixed", stick_force_zero_uncertainty_lbf=0.5)
    free = pooled_fit(frame, "stick_free", stick_force_zero_uncertainty_lbf=0.5)
    want_fixed = _headline(elev, cl, h, np.zeros(len(h)), flight, "stick_fixed", cg=0.005)
    want_free = _headline(fsq, cl, h, flight, flight, "stick_free", (q / q.mean())**2, 0.005,
                          0.5 / (q * cl))
    assert fixed.neutral_point.method == "flight_level"
    assert fixed.neutral_point.pct_mac == pytest.approx(want_fixed.pct_mac, rel=1e-12)
    assert fixed.neutral_point.ci95_pct_mac == pytest.approx(want_fixed.ci95_pct_mac, rel=1e-12)
    assert free.neutral_point.ci95_pct_mac == pytest.approx(want_free.ci95_pct_mac, rel=1e-12)
    # the declared errors widen the interval beyond the independent-points one
    assert np.diff(free.neutral_point.ci95_pct_mac)[0] > np.diff(
        free.independent_neutral_point.ci95_pct_mac)[0]


def test_noise_free_lines_give_the_truth_and_a_declared_cg_error_only_widens():
    h, cl, q, elev, fsq, flight = _flights(np.random.default_rng(0), 0.0, 0.0, 1e-6, 1e-6)
    narrow = _headline(elev, cl, h, np.zeros(len(h)), flight, "stick_fixed")
    wide = _headline(elev, cl, h, np.zeros(len(h)), flight, "stick_fixed", cg=0.005)
    assert narrow.pct_mac == pytest.approx(100 * HN, abs=1e-4)
    # with sigma^2 ~ 1e-12 the GLS solve loses digits to cancellation; 0.02 %MAC is far below
    # anything a pilot acts on
    assert wide.pct_mac == pytest.approx(100 * HN, abs=0.02)
    assert np.diff(wide.ci95_pct_mac)[0] > 10 * np.diff(narrow.ci95_pct_mac)[0]


def test_stick_free_weighting_by_q_squared_beats_equal_weights():
    # force noise constant in lbf: Fs/q scatters as 1/q; the q^2-weighted slope is tighter
    h, cl, q, elev, fsq, flight = _flights(np.random.default_rng(5), 0.0, 0.0)
    weighted = fit_flight_level(fsq, cl, h, flight, flight, weights=q**2)
    equal = fit_flight_level(fsq, cl, h, flight, flight)
    assert weighted.cov_bc[1, 1] < equal.cov_bc[1, 1]


def test_too_little_to_fit_gives_none():
    cl = np.array([0.3, 0.5, 0.7, 0.9])
    assert fit_flight_level(cl, cl, np.full(4, 0.2), np.zeros(4), np.zeros(4)) is None
