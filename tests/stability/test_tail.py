import math

import pytest

from trimlog.errors import TrimlogError
from trimlog.input.profile import parse_profile
from trimlog.stability.tail import (
    TYPICAL_TAIL_VOLUMES,
    aspect_ratio,
    check_tail_geometry,
    downwash_gradient,
    horizontal_tail_volume,
    lift_curve_slope_per_rad,
    predicted_neutral_point,
    vertical_tail_volume,
)

BASE = """
[aircraft]
name = "Test two-seater"
wing_area = "118 ft^2"
mac = "51 in"
lemac = "60 in"
{span}
[tail]
tau = 0.5
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "18 deg"
{tail}
[limits]
cg_forward = "69 in"
cg_aft = "76 in"
max_weight = "1750 lb"
[cruise]
cas = "120 kt"
"""
FULL_TAIL = """
horizontal_area = "22 ft^2"
horizontal_span = "8.5 ft"
horizontal_arm = "150 in"
vertical_area = "9 ft^2"
vertical_height = "4 ft"
vertical_arm = "155 in"
"""


def test_typical_volumes_are_raymer_table():
    # Raymer, Aircraft Design: A Conceptual Approach, table 6.4
    assert TYPICAL_TAIL_VOLUMES["homebuilt"] == (0.50, 0.04)
    assert TYPICAL_TAIL_VOLUMES["general aviation single"] == (0.70, 0.04)
    assert TYPICAL_TAIL_VOLUMES["general aviation twin"] == (0.80, 0.07)
    assert TYPICAL_TAIL_VOLUMES["sailplane"] == (0.50, 0.02)


def test_tail_volumes_hand_computed():
    # hand-computed (no textbook example found): 22 ft^2 x 12.5 ft / (118 ft^2 x 4.25 ft)
    assert horizontal_tail_volume(22.0, 150.0, 118.0, 51.0) == pytest.approx(
        22 * 12.5 / (118 * 4.25), rel=1e-12
    )
    assert horizontal_tail_volume(22.0, 150.0, 118.0, 51.0) == pytest.approx(0.54835, abs=1e-5)
    # 9 ft^2 x 155/12 ft / (118 ft^2 x 28 ft) = 0.035185 (hand-computed)
    assert vertical_tail_volume(9.0, 155.0, 118.0, 336.0) == pytest.approx(0.035185, abs=1e-6)
    with pytest.raises(TrimlogError, match="htail_area_ft2"):
        horizontal_tail_volume(0.0, 150.0, 118.0, 51.0)


def test_aspect_ratio():
    assert aspect_ratio(8.5 * 12, 22.0) == pytest.approx(8.5**2 / 22.0)


def test_lift_curve_slope_limits_and_value():
    # hand-computed: A = 6, eta = 1: 12 pi / (2 + sqrt(40)) = 37.69911 / 8.32456 = 4.52866
    assert lift_curve_slope_per_rad(6.0, section_efficiency=1.0) == pytest.approx(4.52866,
                                                                                   abs=1e-5)
    # slender-wing limit pi A / 2 (R. T. Jones, NACA Report 835, 1946)
    assert lift_curve_slope_per_rad(0.01) == pytest.approx(math.pi * 0.01 / 2, rel=1e-3)
    # infinite aspect ratio: the section slope 2 pi eta (thin-airfoil theory)
    assert lift_curve_slope_per_rad(1e6, section_efficiency=0.95) == pytest.approx(
        2 * math.pi * 0.95, rel=1e-4
    )
    # elliptic lifting line 2 pi A / (A + 2) (Prandtl) is within 5 % at A = 6..10 (hand-computed)
    for a in (6.0, 8.0, 10.0):
        prandtl = 2 * math.pi * a / (a + 2)
        assert lift_curve_slope_per_rad(a, section_efficiency=1.0) == pytest.approx(prandtl,
                                                                                     rel=0.05)
    swept = lift_curve_slope_per_rad(6.0, sweep_half_chord_deg=30.0)
    assert swept < lift_curve_slope_per_rad(6.0)


def test_downwash_and_neutral_point_hand_computed():
    a_w = 2 * math.pi * 7 / 9  # Prandtl elliptic wing, A = 7 (hand-computed)
    # 2 a_w / (pi A) = 4/9 for that wing (hand-computed)
    assert downwash_gradient(a_w, 7.0) == pytest.approx(4.0 / 9.0)
    hn = predicted_neutral_point(0.6, 4.0, 5.0, 0.4, tail_efficiency=0.9)
    assert hn == pytest.approx(0.25 + 0.9 * 0.6 * 0.8 * 0.6)  # 0.5092, hand-computed
    with pytest.raises(TrimlogError, match="downwash"):
        predicted_neutral_point(0.6, 4.0, 5.0, 1.2)


def test_check_full_profile():
    profile = parse_profile(BASE.format(span='wing_span = "28 ft"', tail=FULL_TAIL))
    check = check_tail_geometry(profile, measured_neutral_point_pct_mac=38.0)
    assert check.htail_volume == pytest.approx(0.54835, abs=1e-5)
    assert check.htail_aspect_ratio == pytest.approx(8.5**2 / 22)
    assert check.vtail_aspect_ratio == pytest.approx(16 / 9)
    assert not check.not_computed
    assert 30.0 < check.predicted_neutral_point_pct_mac < 60.0
    assert check.measured_minus_predicted_pct_mac == pytest.approx(
        38.0 - check.predicted_neutral_point_pct_mac
    )
    assert any("Raymer table 6.4" in f for f in check.findings)
    assert any("assumed" in a for a in check.assumptions)


def test_check_missing_keys_gives_none_and_reason():
    profile = parse_profile(BASE.format(span="", tail='horizontal_area = "22 ft^2"'))
    check = check_tail_geometry(profile, "general aviation single")
    assert check.htail_volume is None and check.predicted_neutral_point_pct_mac is None
    assert check.htail_volume_typical == 0.70
    assert any("htail_arm_in" in m for m in check.not_computed)
    assert any("predicted neutral point" in m for m in check.not_computed)
    with pytest.raises(TrimlogError, match="aircraft class"):
        check_tail_geometry(profile, "airliner")
