"""A stable stick-force gradient too small to feel is flagged (14 CFR 23.173(c)).

Demo flight 4 is stable at about -0.07 lbf/kt, 1 lbf per 14 kt (issue 12 regression
value of the demo data), below the 1 lbf per 6 kt a pilot can be relied on to
feel (common practice, from memory; 14 CFR 25.173(c) sets that figure).
"""

from __future__ import annotations

import pytest

from trimlog.pipeline import chain
from trimlog.stability.results import FlightGradient


def _gradient(value, ci):
    return FlightGradient(
        flight="f", cg_pct_mac=30.0, h=0.3, n_points=8, stab_settings=("a",),
        cl_range=(0.3, 0.9), delev_dcl_deg=-5.0, delev_dcl_ci95_deg=(-6.0, -4.0),
        delev_dcl_se_deg=0.5, delev0_deg=1.0, elev_r_squared=0.9,
        elev_residual_std_deg=0.2, elevator_verdict="stable", n_force_points=8,
        dfsq_dcl_ft2=1.0, dfsq_dcl_ci95_ft2=(0.5, 1.5), fsq_r_squared=0.9,
        fsq_residual_std_ft2=0.1, trim_eas_kt=100.0, dfs_dv_lbf_per_kt=value,
        dfs_dv_ci95_lbf_per_kt=ci, stick_force_verdict="stable")


def test_threshold_is_one_pound_per_six_knots():
    # 14 CFR 25.173(c): "not less than 1 pound for each 6 knots"
    assert chain.PERCEPTIBLE_STICK_FORCE_GRADIENT_LBF_PER_KT == pytest.approx(1 / 6)
    assert chain.light_stick_force([_gradient(-0.10, (-0.14, -0.06))])
    assert not chain.light_stick_force([_gradient(-0.25, (-0.30, -0.20))])
    # unstable or missing gradients are judged elsewhere, not called "light"
    assert not chain.light_stick_force([_gradient(0.05, (0.01, 0.09))])
    assert not chain.light_stick_force([_gradient(None, None)])


def test_demo_flight_4_is_flagged_as_too_light_to_feel(demo_flights, demo_profile):
    flights = list(demo_flights[:4])  # flight1_points .. flight4, one flight per file
    analysis = chain.analyze(flights, demo_profile)
    light = [f for f in analysis.findings if f.code == "pipeline.stick_force.too_light"]
    flagged = {f.values["flight"] for f in light}
    grads = {g.flight: g.dfs_dv_lbf_per_kt for g in analysis.primary.stability.gradients}
    aft = max(analysis.primary.stability.gradients, key=lambda g: g.cg_pct_mac).flight
    assert grads[aft] == pytest.approx(-0.07, abs=0.02)  # regression value, issue 12
    assert aft in flagged
    words = " ".join(f.message for f in light)
    assert "23.173(c)" in words and "clearly perceptible" in words
    for g in analysis.primary.stability.gradients:
        if g.dfs_dv_lbf_per_kt is not None and g.dfs_dv_lbf_per_kt < -1 / 6:
            assert g.flight not in flagged
