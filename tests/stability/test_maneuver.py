"""Tests of trimlog.stability.maneuver: gradients per g and the maneuver points.

Synthetic data of known truth (invented numbers, no real aircraft) unless a
line says otherwise; published checks carry their source.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from trimlog.demo.model import DEMO_PROFILE
from trimlog.stability import maneuver

S_FT2 = 120.0
CM_DELTA_PER_RAD = -1.0
HM, HM_FREE = 0.40, 0.36          # synthetic truth [fraction of MAC]
K_FREE_FT2 = 7.0                  # (dFs/dn)/(W/S) = K (hm' - h) [ft^2], synthetic
STEPS_G = (1.2, 1.4, 1.6, 1.8, 2.0)


def _flight(label: str, h_true: float, *, weight: float = 1550.0, eas: float = 95.0,
            rng: np.random.Generator | None = None, cg_error: float = 0.0,
            elev_sd: float = 0.0, force_sd: float = 0.0, bias: tuple[float, float] = (0.0, 0.0)
            ) -> pd.DataFrame:
    """One flight's wind-up turn in steps, from the linear truth model (synthetic)."""
    q = eas**2 / 295.37
    cl1 = weight / (q * S_FT2)
    n = np.array(STEPS_G)
    de = 1.5 + (np.degrees(cl1 * (h_true - HM) / -CM_DELTA_PER_RAD) + bias[0]) * (n - 1.0)
    fs = (K_FREE_FT2 * (HM_FREE - h_true) * weight / S_FT2 + bias[1]) * (n - 1.0)
    if rng is not None:
        de = de + elev_sd * rng.standard_normal(n.size)
        fs = fs + force_sd * rng.standard_normal(n.size)
    h_logged = h_true + cg_error
    return pd.DataFrame({
        "flight": label, "point": np.arange(1, n.size + 1), "included": True, "flags": "maneuver",
        "nz_g": n, "elevator_deg": de, "stick_force_lbf": fs, "eas_kt": eas, "q_psf": q,
        "weight_lb": weight, "h": h_logged, "cg_pct_mac": 100.0 * h_logged,
    })


def _programme(cgs, **kwargs) -> pd.DataFrame:
    return pd.concat([_flight(str(i + 1), h, **kwargs) for i, h in enumerate(cgs)],
                     ignore_index=True)


def test_noise_free_wind_up_turns_recover_the_maneuver_points_exactly():
    pts = _programme((0.18, 0.22, 0.26, 0.30))
    result = maneuver.analyze_maneuvering(pts, DEMO_PROFILE)
    assert result.stick_fixed.identifiable and result.stick_free.identifiable
    assert result.stick_fixed.pct_mac == pytest.approx(100 * HM, abs=1e-9)
    assert result.stick_free.pct_mac == pytest.approx(100 * HM_FREE, abs=1e-9)
    g = result.gradients[0]
    q = 95.0**2 / 295.37
    assert g.elevator_per_g_deg == pytest.approx(
        math.degrees(1550.0 / (q * S_FT2) * (0.18 - HM)), rel=1e-12)
    assert g.stick_force_per_g_lbf == pytest.approx(K_FREE_FT2 * (HM_FREE - 0.18) * 1550 / 120)
    assert g.n_points == 5 and g.nz_range == (1.2, 2.0)
    assert not g.lightening
    assert result.stick_fixed.station_in == pytest.approx(
        DEMO_PROFILE.lemac_in + HM * DEMO_PROFILE.mac_in)


def test_weight_and_speed_are_normalised_out():
    # Different weights and speeds per flight: the normalised lines still cross zero at hm, hm'.
    pts = pd.concat([_flight("1", 0.20, weight=1450, eas=90), _flight("2", 0.25, weight=1650,
                     eas=105), _flight("3", 0.31, weight=1550, eas=95)], ignore_index=True)
    result = maneuver.analyze_maneuvering(pts, DEMO_PROFILE)
    assert result.stick_fixed.pct_mac == pytest.approx(100 * HM, abs=1e-9)
    assert result.stick_free.pct_mac == pytest.approx(100 * HM_FREE, abs=1e-9)


def test_too_few_flights_or_cg_spread_is_not_identifiable():
    two = maneuver.analyze_maneuvering(_programme((0.20, 0.28)), DEMO_PROFILE)
    assert not two.stick_fixed.identifiable and "3 flights" in two.stick_fixed.reason
    close = maneuver.analyze_maneuvering(_programme((0.25, 0.26, 0.27)), DEMO_PROFILE)
    assert not close.stick_fixed.identifiable
    assert "maneuver point" in close.stick_fixed.reason
    assert close.stick_fixed.pct_mac is None


def test_a_light_stick_force_per_g_is_a_warning():
    # At h = 0.33 the synthetic truth gives 7*0.03*12.9 = 2.7 lbf/g, under 23.155's 5.4 lbf/g.
    pts = _programme((0.20, 0.27, 0.33))
    result = maneuver.analyze_maneuvering(pts, DEMO_PROFILE)
    assert any("flight '3'" in w and "below the minimum" in w for w in result.warnings)
    assert result.aft_cg_pct_mac is not None
    assert result.limited_by in ("minimum stick force per g", "stick-free maneuver margin")
    # The aft limit must keep the lower bound of Fs/g at the minimum: ahead of where Fs/g = 5.36.
    h_min = HM_FREE - result.requirement.minimum_per_g_lbf / (K_FREE_FT2 * 1550 / 120)
    assert result.aft_cg_pct_mac <= 100 * h_min + 1e-6


def test_lightening_stick_force_is_a_warning():
    rng = np.random.default_rng(3)
    pts = _programme((0.20, 0.25, 0.30))
    n = pts["nz_g"].to_numpy()
    # Force that flattens at high n: 12 (n - 1) - 5 (n - 1)^2 (synthetic), a little noise.
    pts["stick_force_lbf"] = 12.0 * (n - 1) - 5.0 * (n - 1) ** 2 + 0.02 * rng.standard_normal(
        n.size)
    result = maneuver.analyze_maneuvering(pts, DEMO_PROFILE)
    assert all(g.lightening for g in result.gradients)
    assert any("lightens" in w for w in result.warnings)


def test_off_speed_points_are_left_out_and_can_be_reincluded():
    pts = _programme((0.20, 0.25, 0.30))
    pts.loc[2, "eas_kt"] = 115.0
    marked = maneuver.mark_off_speed(pts)
    assert not marked.loc[2, "included"] and "off_speed" in marked.loc[2, "flags"]
    assert marked["included"].sum() == len(pts) - 1


def test_23_155_limits_by_control_type():
    # 14 CFR 23.155(a)(2), 1-1-2014 edition: stick, W/140 or 15 lb, need not exceed 35 lb.
    assert maneuver.stick_force_requirement(1650.0).force_to_limit_lbf == 15.0
    assert maneuver.stick_force_requirement(3500.0).force_to_limit_lbf == 25.0
    assert maneuver.stick_force_requirement(7000.0).force_to_limit_lbf == 35.0
    # 14 CFR 23.155(a)(1): wheel, W/100 or 20 lb, need not exceed 50 lb.
    assert maneuver.stick_force_requirement(1650.0, control="wheel").force_to_limit_lbf == 20.0
    assert maneuver.stick_force_requirement(3500.0, control="wheel").force_to_limit_lbf == 35.0
    assert maneuver.stick_force_requirement(9000.0, control="wheel").force_to_limit_lbf == 50.0
    # 14 CFR 23.337(a)(1): n = 2.1 + 24000/(W + 10000), need not exceed 3.8.
    assert maneuver.stick_force_requirement(6000.0).limit_load_factor_g == pytest.approx(3.6)
    r = maneuver.stick_force_requirement(1650.0, limit_load_factor_g=4.4)
    assert r.per_g_23_155_lbf == pytest.approx(15.0 / 3.4) and not r.assumed


def test_pull_up_maneuver_point_shift_textbook_values():
    # hm - hn = -Cmq/(2 mu), mu = 2m/(rho S c): Etkin & Reid, Dynamics of Flight, ch. 3 (from
    # memory); light-aircraft values rho 0.0020 slug/ft^3, S 118 ft^2, c 4.25 ft, m 51 slug,
    # Cmq -12 /rad give mu = 101.7 and a shift of about 6 %MAC (from memory).
    shift = maneuver.pull_up_maneuver_shift(-12.0, 51.0, 0.0020, 118.0, 4.25)
    mu = 2 * 51.0 / (0.0020 * 118.0 * 4.25)
    assert mu == pytest.approx(101.7, abs=0.05)
    assert shift == pytest.approx(0.059, abs=0.0005)


def _coverage(seeds: int) -> tuple[float, float]:
    """Coverage of the 95 % intervals of hm and hm' under per-flight errors (synthetic)."""
    hit_fixed = hit_free = total = 0
    for seed in range(seeds):
        rng = np.random.default_rng([14, seed])
        cgs = (0.17, 0.21, 0.25, 0.28, 0.31)
        # Per-flight errors shared by all points of a flight: the weighed CG (0.4 %MAC) and
        # the gradient's own offset from that day's rigging and air (0.1 deg/g, 0.3 lbf/g);
        # plus per-point reading noise (0.1 deg, 0.3 lbf).
        pts = pd.concat([
            _flight(str(i + 1), h, rng=rng, cg_error=0.004 * rng.standard_normal(),
                    bias=(0.1 * rng.standard_normal(), 0.3 * rng.standard_normal()),
                    elev_sd=0.1, force_sd=0.3)
            for i, h in enumerate(cgs)], ignore_index=True)
        gradients = maneuver.maneuver_gradients(pts, S_FT2)
        fixed = maneuver.maneuver_point(gradients, "stick_fixed")
        free = maneuver.maneuver_point(gradients, "stick_free")
        total += 1
        hit_fixed += bool(fixed.identifiable and fixed.ci95_pct_mac[0] <= 100 * HM
                          <= fixed.ci95_pct_mac[1])
        hit_free += bool(free.identifiable and free.ci95_pct_mac[0] <= 100 * HM_FREE
                         <= free.ci95_pct_mac[1])
    return hit_fixed / total, hit_free / total


@pytest.mark.slow
def test_maneuver_point_intervals_cover_the_truth():
    # Measured over 400 seeds (per-flight CG and gradient errors): 93.0 % stick fixed,
    # 96.5 % stick free.
    fixed, free = _coverage(400)
    assert 0.93 <= fixed <= 0.97, fixed
    assert 0.93 <= free <= 0.97, free


def test_the_next_cg_step_keeps_the_maneuvering_limits():
    from trimlog.stability.critical import tighten_next_step
    from trimlog.stability.results import NextStep

    result = maneuver.analyze_maneuvering(_programme((0.20, 0.27, 0.33)), DEMO_PROFILE)
    limits = result.next_step_limits()
    assert set(limits) <= {"stick_fixed_mp", "stick_free_mp", "min_stick_force_per_g"}
    assert min(v for v, _ in limits.values()) == result.aft_cg_pct_mac
    wide = NextStep(40.0, None, 5.0, 3.0, 20.0, "aft_limit", "the neutral-point rule")
    step = tighten_next_step(wide, limits, DEMO_PROFILE.station)
    assert step.max_cg_pct_mac == pytest.approx(result.aft_cg_pct_mac)
    assert step.limited_by in limits and "sets the limit" in step.reason
    assert step.max_cg_station_in == pytest.approx(DEMO_PROFILE.station(step.max_cg_pct_mac))
    # Not aft of what was flown: no step at all (never a number the data cannot support).
    flown_aft = NextStep(40.0, None, 5.0, 3.0, result.aft_cg_pct_mac + 1.0, "aft_limit", "rule")
    assert tighten_next_step(flown_aft, limits).max_cg_pct_mac is None
    # A limit aft of the rule's step changes nothing.
    tight = NextStep(15.0, None, 5.0, 3.0, 12.0, "stick_free_np", "rule")
    assert tighten_next_step(tight, limits) is tight


def test_maneuvering_findings_are_typed_with_their_values():
    from trimlog.findings import CATALOGUE, Severity

    # A light stick force per g (synthetic, flight 3 at h = 0.33): a warning with its numbers.
    result = maneuver.analyze_maneuvering(_programme((0.20, 0.27, 0.33)), DEMO_PROFILE)
    light = [f for f in result.findings if f.code == "stability.maneuver.light_force"]
    assert light and all(f.severity is Severity.WARNING for f in light)
    third = next(f for f in light if f.subject.flight == "3")
    g3 = next(g for g in result.gradients if g.flight == "3")
    assert third.values["per_g_lbf"] == pytest.approx(g3.stick_force_per_g_lbf)
    assert third.values["lower95_lbf"] == pytest.approx(g3.stick_force_per_g_ci95_lbf[0])
    assert third.values["minimum_lbf"] == pytest.approx(result.requirement.minimum_per_g_lbf)
    assert third.values["verb"] == "is"
    # the warnings are the findings' messages, one for one
    assert result.warnings == tuple(f.message for f in result.findings)
    assert all(f.code in CATALOGUE for f in result.findings)
    # Lightening: a warning naming the top load factor.
    rng = np.random.default_rng(3)
    pts = _programme((0.20, 0.25, 0.30))
    n = pts["nz_g"].to_numpy()
    pts["stick_force_lbf"] = 12.0 * (n - 1) - 5.0 * (n - 1) ** 2 + 0.02 * rng.standard_normal(
        n.size)
    lightening = [f for f in maneuver.analyze_maneuvering(pts, DEMO_PROFILE).findings
                  if f.code == "stability.maneuver.lightening"]
    assert len(lightening) == 3 and all(f.severity is Severity.WARNING for f in lightening)
    assert all(f.values["nz_top_g"] == pytest.approx(2.0) for f in lightening)
    # Too few flights: cautions, not warnings, for maneuver points that cannot be said yet.
    two = maneuver.analyze_maneuvering(_programme((0.20, 0.28)), DEMO_PROFILE)
    unknown = [f for f in two.findings if f.code == "stability.maneuver.not_identifiable"]
    assert {f.values["kind"] for f in unknown} == {"stick-fixed", "stick-free"}
    assert all(f.severity is Severity.CAUTION for f in unknown)
