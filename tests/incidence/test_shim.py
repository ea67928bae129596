import math

import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from trimlog import cautions
from trimlog.errors import TrimlogError
from trimlog.incidence.shim import (
    ELEVATOR_WORDS,
    INCH_STOCK_IN,
    INCIDENCE_WORDS,
    angle_words,
    cruise_lift_coefficient,
    incidence_change,
    recommend_incidence,
    shim,
    shim_thickness_in,
    supported_decimals,
)
from trimlog.incidence.tau import choose_tau
from trimlog.input.profile import parse_profile

PROFILE = """
[aircraft]
name = "Test two-seater"
wing_area = "120 ft^2"
mac = "51 in"
lemac = "60 in"
[tail]
tau = 0.5
elevator_chord_ratio = 0.35
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "18 deg"
current_incidence = "-1.0 deg"
[limits]
cg_forward = "69 in"
cg_aft = "76 in"
max_weight = "1750 lb"
[cruise]
cas = "100 kt"
pressure_altitude = "0 ft"
weight = "1500 lb"
"""


# ------------------------------------------------------------- incidence change

def test_direction_trailing_edge_up_means_leading_edge_down():
    # Elevator trailing edge up at cruise (with a pull force): the tail gives too little
    # down-force; reduce the incidence, leading edge down (common practice, no source)
    change = incidence_change(-2.0, (-2.4, -1.6), 0.5, (0.45, 0.55))
    assert change.change_deg == pytest.approx(-1.0)
    assert change.ci95_deg[0] < -1.0 < change.ci95_deg[1] < 0.0
    cut = shim(change.change_deg, 14.0)
    assert cut.location == "rear"
    assert cut.verdict[0].code.startswith("incidence.shim.cut.")
    assert cut.verdict[0].values["location"] == "rear"
    assert cut.verdict[0].values["direction"] == "down"  # leading edge down


def test_direction_mirror_case():
    # Elevator trailing edge down at cruise (push force): leading edge up, raise the front
    # (common practice, no source)
    change = incidence_change(2.0, (1.6, 2.4), 0.5, (0.45, 0.55))
    assert change.change_deg == pytest.approx(1.0)
    cut = shim(change.change_deg, 14.0)
    assert cut.location == "front" and cut.verdict[0].values["location"] == "front"
    assert cut.verdict[0].values["direction"] == "up"


def test_incidence_change_interval_matches_delta_method_for_small_spreads():
    # delta method: var = tau^2 var_de + de^2 var_tau (independent inputs)
    de, se_de, tau, se_tau = -1.5, 0.1, 0.5, 0.01
    z = 1.959963984540054
    change = incidence_change(de, (de - z * se_de, de + z * se_de), tau,
                              (tau - z * se_tau, tau + z * se_tau))
    half = z * math.hypot(tau * se_de, de * se_tau)
    assert change.ci95_deg == pytest.approx((tau * de - half, tau * de + half), abs=0.003)
    again = incidence_change(de, (de - z * se_de, de + z * se_de), tau,
                             (tau - z * se_tau, tau + z * se_tau))
    assert again == change  # fixed seed: reproducible


def test_incidence_change_rejects_bad_interval():
    with pytest.raises(TrimlogError, match="elevator_ci95"):
        incidence_change(-1.0, (-0.5, 0.5), 0.5, (0.45, 0.55))


# --------------------------------------------------------------------------- shim

def test_shim_geometry_hand_computed():
    d_in = 300.0 / 25.4
    # tan identity: 300 mm x tan(0.5 deg) = 2.61806 mm; x tan(1.0 deg) = 5.23653 mm
    # (tan 0.5 deg = 0.0087269, tan 1 deg = 0.0174551, 5-figure trigonometric tables)
    assert shim_thickness_in(0.5, d_in) * 25.4 == pytest.approx(2.61806, abs=1e-4)
    assert shim_thickness_in(-1.0, d_in) * 25.4 == pytest.approx(5.23653, abs=1e-4)
    # small-angle check: d x angle[rad] within 0.01 % at 1 deg (tan x = x + x^3/3)
    assert shim_thickness_in(1.0, d_in) * 25.4 == pytest.approx(300 * math.radians(1.0),
                                                                 rel=2e-4)
    # exact at a large angle where small-angle fails: 14 in x tan(45 deg) = 14 in
    assert shim_thickness_in(45.0, 14.0) == pytest.approx(14.0)
    series = shim_thickness_in(pd.Series([0.5, -1.0], index=[3, 4]), d_in)
    assert list(series.index) == [3, 4]


def test_shim_rounding_and_residual_consistent():
    tau, de = 0.5, -0.5
    change = tau * de  # -0.25 deg
    cut = shim(change, 14.0, elevator_cruise_deg=de, tau=tau, current_incidence_deg=-1.0)
    assert cut.thickness_in == pytest.approx(14.0 * math.tan(math.radians(0.25)))  # 0.0611
    # nearest stack: 0.020 + 0.040 = 0.060 in (0.063 is farther)
    assert cut.stock_sheets == (0.020, 0.040) and cut.stock_thickness_in == pytest.approx(0.060)
    rounded_change = -math.degrees(math.atan(0.060 / 14.0))
    assert cut.stock_change_deg == pytest.approx(rounded_change)
    assert cut.residual_elevator_deg == pytest.approx(de - rounded_change / tau)
    assert cut.new_incidence_deg == pytest.approx(-1.0 + rounded_change)
    said = cut.verdict[0]
    assert said.code == "incidence.shim.cut.inch_two"
    assert said.values["thickness_mm"] == pytest.approx(cut.thickness_in * 25.4)
    assert (said.values["sheet_1_in"], said.values["sheet_2_in"]) == (0.020, 0.040)
    assert [f.code for f in cut.verdict[1:]] == ["incidence.shim.residual",
                                                 "incidence.shim.new_incidence"]
    # the words, rendered once here from the catalogue
    assert "0.061 in / 1.55 mm" in cut.words
    assert "stack two sheets, 0.020 in and 0.040 in, total 0.060 in" in cut.words


def test_shim_stacks_two_sheets_and_metric():
    cut = shim(-0.6, 14.0)  # 0.1466 in
    assert len(cut.stock_sheets) == 2 and abs(cut.stock_thickness_in - cut.thickness_in) < 0.004
    metric = shim(-0.6, 14.0, stock="metric")  # 3.72 mm -> 1.5 + 2.0 or 1.0 + 2.5 mm
    assert metric.stock_thickness_mm == pytest.approx(3.5)
    assert metric.verdict[0].code == "incidence.shim.cut.metric_two"
    one = shim(-0.2, 14.0, stock="metric")  # 1.24 mm -> one 1.0 mm sheet (nearer than 1.5)
    assert one.verdict[0].code == "incidence.shim.cut.metric_one" and one.words
    with pytest.raises(TrimlogError, match="inch"):
        shim(-0.6, 14.0, stock="furlong")


def test_no_change_recommended_when_tiny_or_uncertain():
    tiny = shim(-0.02, 14.0, elevator_cruise_deg=-0.04, tau=0.5)  # 0.005 in
    assert not tiny.recommended and tiny.stock_thickness_in == 0.0
    assert tiny.verdict[0].code == "incidence.shim.none.too_thin"
    assert tiny.residual_elevator_deg == pytest.approx(-0.04)
    uncertain = shim(-0.5, 14.0, change_ci95_deg=(-1.1, 0.1))
    assert not uncertain.recommended
    assert uncertain.verdict[0].code == "incidence.shim.none.interval_has_zero"


def test_new_incidence_outside_usual_range_warns():
    cut = shim(-1.0, 14.0, current_incidence_deg=-1.5)  # one cut (0.244 in)
    assert cut.steps == 1 and cut.new_incidence_deg < -2.0
    unusual = [f for f in cut.findings if f.code == "incidence.shim.unusual_incidence"]
    assert unusual and unusual[0].values["new_incidence_deg"] == cut.new_incidence_deg
    # the sign in words (leading edge up positive): below -2 deg is leading edge down
    assert unusual[0].values["new_incidence_words"].endswith("deg leading edge down")
    assert unusual[0].severity == "warning"
    # in steps, the warning judges the end of all the steps (-1.0 - 1.5 deg), not the first
    stepped = shim(-1.5, 14.0, current_incidence_deg=-1.0)
    assert stepped.steps == 2 and stepped.new_incidence_deg > -2.0
    unusual = [f for f in stepped.findings if f.code == "incidence.shim.unusual_incidence"]
    assert unusual and unusual[0].values["new_incidence_deg"] == pytest.approx(-2.5)
    assert not shim(-0.3, 14.0, current_incidence_deg=-1.0).findings


@given(
    a=st.floats(min_value=0.0, max_value=10.0),
    b=st.floats(min_value=0.0, max_value=10.0),
    sign=st.sampled_from([-1.0, 1.0]),
    spacing=st.floats(min_value=2.0, max_value=40.0),
)
def test_shim_monotonic_and_location_follows_sign(a, b, sign, spacing):
    small, large = sorted((a, b))
    t_small = shim(sign * small, spacing)
    t_large = shim(sign * large, spacing)
    assert t_small.thickness_in <= t_large.thickness_in
    assert t_small.steps <= t_large.steps
    if t_small.steps == t_large.steps == 1:
        assert t_small.stock_thickness_in <= t_large.stock_thickness_in
    for cut in (t_small, t_large):  # a step never exceeds two sheets of the thickest stock
        assert cut.stock_thickness_in <= 2 * INCH_STOCK_IN[-1] + 1e-12
        assert cut.steps * 2 * INCH_STOCK_IN[-1] >= cut.thickness_in - 1e-9
    for cut, size in ((t_small, small), (t_large, large)):
        if size > 0:
            assert cut.location == ("rear" if sign < 0 else "front")
        assert math.isfinite(cut.thickness_in)


def test_thick_shim_is_cut_in_steps_not_capped():
    # 0.322 in needed on 14 in: more than two 0.125 in sheets (0.250 in), so two steps
    # of 0.161 in each; the cut shown is the first step, not the 0.250 in cap.
    change = -math.degrees(math.atan(0.322 / 14.0))  # right-triangle identity
    cut = shim(change, 14.0, elevator_cruise_deg=-3.0, tau=0.5,
               elevator_ci95_deg=(-3.4, -2.6), tau_ci95=(0.45, 0.55))
    assert cut.thickness_in == pytest.approx(0.322)
    assert cut.steps == 2
    assert cut.step_thickness_in == pytest.approx(0.161)  # 0.322 / 2, given to the views
    assert cut.stock_thickness_in == pytest.approx(0.161, abs=0.002)  # 0.071 + 0.090
    assert cut.stock_sheets == (0.071, 0.090)
    codes = [f.code for f in cut.verdict]
    assert codes == ["incidence.shim.cut.inch_two", "incidence.shim.steps",
                     "incidence.shim.residual.step_one"]
    assert "2 steps of about 0.161 in" in cut.words
    assert "total 0.161 in" in cut.words and "0.250" not in cut.words
    # after the first step about half the elevator remains, with its interval
    assert cut.residual_elevator_deg == pytest.approx(-3.0 - cut.stock_change_deg / 0.5)
    lo, hi = cut.residual_elevator_ci95_deg
    assert lo < cut.residual_elevator_deg < hi < 0.0
    assert "trailing edge up (95 %:" in cut.words
    warn = [f for f in cut.findings if f.code == "incidence.shim.thicker_than_stock"]
    assert warn and "in 2 steps" in warn[0].message


def test_precision_follows_the_interval():
    # JCGM 100:2008 7.2.6 (uncertainty to its leading digits, value rounded to match):
    # 0.105-1.055 in has half-width 0.475 in, so tenths; 0.101-0.130 in gives hundredths.
    assert supported_decimals(0.105, 1.055) == 1
    assert supported_decimals(0.101, 0.130) == 2
    assert supported_decimals(0.1130, 0.1132) == 3  # capped at the finest
    assert supported_decimals(2.0, 2.0) == 3
    assert supported_decimals(0.0, 30.0, finest=2) == 0
    spacing = 14.0
    lo_deg, hi_deg = (-math.degrees(math.atan(t / spacing)) for t in (1.055, 0.105))
    mid = -math.degrees(math.atan(0.582 / spacing))
    cut = shim(mid, spacing, change_ci95_deg=(lo_deg, hi_deg))
    assert cut.thickness_ci95_in == pytest.approx((0.105, 1.055))
    assert (cut.decimals_in, cut.decimals_mm) == (1, 0)
    assert "by 0.6 in / 15 mm" in cut.words and "0.582" not in cut.words
    assert "14.78" not in cut.words


def test_angle_words_sign_in_words():
    assert angle_words(-1.05, *ELEVATOR_WORDS) == "1.05 deg trailing edge up"
    assert angle_words(0.6, *INCIDENCE_WORDS) == "0.60 deg leading edge up"
    assert angle_words(-0.004, *ELEVATOR_WORDS) == "0.00 deg"  # never '-0.00'
    both = angle_words(0.1, *ELEVATOR_WORDS, 2, (-0.2, 0.4))
    assert both == "0.10 deg trailing edge down (95 %: 0.20 deg trailing edge up to 0.40 deg " \
        "trailing edge down)"


def test_stock_list_is_sorted_and_documented():
    assert list(INCH_STOCK_IN) == sorted(INCH_STOCK_IN)


# ---------------------------------------------------------------- recommendation

def test_cruise_lift_coefficient_sea_level():
    profile = parse_profile(PROFILE)
    # 100 kt CAS at sea level is 100 kt EAS; CL = 295.37 W / (Ve^2 S) (US-units form of
    # 2W/(rho0 V^2 S), rho0 = 0.0023769 slug/ft^3, U.S. Standard Atmosphere 1976)
    assert cruise_lift_coefficient(profile) == pytest.approx(295.37 * 1500 / (100**2 * 120),
                                                            rel=1e-4)


def test_recommendation_fills_json_contract():
    profile = parse_profile(PROFILE)
    choice = choose_tau(None, profile.tau, profile.elevator_chord_ratio)
    rec = recommend_incidence(
        cruise_cl=cruise_lift_coefficient(profile), cruise_cg_pct_mac=25.0,
        elevator_cruise_deg=-1.2, elevator_ci95_deg=(-1.5, -0.9), tau=choice,
        spacing_in=profile.stabilizer_attach_spacing_in,
        current_incidence_deg=profile.current_incidence_deg,
    )
    block = rec.to_json()
    contract = ["cruise_cl", "cruise_cg_pct_mac", "elevator_at_cruise_deg",
                "elevator_at_cruise_ci95_deg", "tau", "tau_source", "change_deg",
                "change_ci95_deg", "shim_thickness_in", "shim_thickness_mm", "shim_location"]
    assert list(block)[: len(contract)] == contract
    assert block["tau_source"] == "profile" and block["change_deg"] == pytest.approx(-0.6)
    assert len(block["change_ci95_deg"]) == 2 and block["change_ci95_deg"][1] < 0
    assert "rear" in block["shim_location"]
    assert rec.cautions[0] == cautions.ESTIMATE_STATEMENT
    assert set(cautions.INCIDENCE) <= set(rec.cautions)
    assert rec.verdict[0].code == "incidence.summary"
    assert rec.verdict[1].code.startswith("incidence.shim.cut.inch_")
    assert rec.verdict[1].values["location"] == "rear"
    assert block["words"] == rec.words and block["warnings"] == list(rec.warnings)
    for value in block.values():
        if isinstance(value, float):
            assert math.isfinite(value)


def test_recommendation_with_uncertain_change_says_none():
    rec = recommend_incidence(
        cruise_cl=0.3, cruise_cg_pct_mac=25.0, elevator_cruise_deg=-0.3,
        elevator_ci95_deg=(-1.0, 0.4), tau=choose_tau(None, 0.5), spacing_in=14.0,
    )
    assert not rec.shim_recommended and rec.shim_location.startswith("none")
    assert rec.residual_elevator_deg == pytest.approx(-0.3)
    assert rec.verdict[1].code == "incidence.shim.none.interval_has_zero"
