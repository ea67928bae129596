import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from trimlog.errors import TrimlogError
from trimlog.physics import mass_balance as ld

# --- published worked examples -----


def test_handbook_computational_loading_example():
    # FAA-H-8083-25A, Pilot's Handbook of Aeronautical Knowledge (2008), ch. 9, fig. 9-5
    # (computational method): total 3,320 lb and CG 84.8 in, printed to 0.1 in.  The
    # weights follow from the text (front 340 lb, rear 350 lb, 75 gal avgas at 6 lb/gal,
    # baggage 80 lb); the empty weight and the item arms are from memory.
    items = [(2100.0, 78.3), (340.0, 85.0), (350.0, 121.0), (75 * 6.0, 75.0), (80.0, 150.0)]
    result = ld.weight_and_cg(items)
    assert result.weight_lb == pytest.approx(3320.0)
    assert result.cg_in == pytest.approx(84.8, abs=0.05)
    assert result.moment_lb_in == pytest.approx(281430.0)  # from memory, printed to 1 lb-in


def test_ground_school_example_and_an_added_bag():
    # worked example of a private-pilot ground-school text (web): 1,646 lb, 21,798.1 lb-in,
    # CG 13.24 in; a 35 lb bag at 42.1 in gives 1,681 lb and 13.84 in (printed to 0.01 in)
    items = [(1150.0, 13.0), (190.0, 12.6), (135.0, 12.6), (15.0, 42.1), (156.0, 13.6)]
    before = ld.weight_and_cg(items)
    assert before.weight_lb == pytest.approx(1646.0)
    assert before.moment_lb_in == pytest.approx(21798.1, abs=0.05)
    assert before.cg_in == pytest.approx(13.24, abs=0.005)
    after = ld.weight_and_cg(items + [(35.0, 42.1)])
    assert after.weight_lb == pytest.approx(1681.0)
    assert after.cg_in == pytest.approx(13.84, abs=0.005)


def test_handbook_percent_mac_example():
    # FAA-H-8083-1A, ch. 3, CG relative to the MAC: CG 35.5 in, LEMAC 29.3 in, MAC 58.0 in
    # -> 10.7 % MAC (from memory; printed to 0.1 %)
    assert ld.station_to_pct_mac(35.5, 29.3, 58.0) == pytest.approx(10.7, abs=0.05)


def test_weight_shift_formula():
    # FAA-H-8083-1A, ch. 2 (shifting the CG): dCG = w * d / W
    items = [(1200.0, 80.0), (170.0, 85.0), (50.0, 110.0)]
    base = ld.weight_and_cg(items)
    shifted = ld.weight_and_cg([(1200.0, 80.0), (170.0, 85.0), (50.0, 70.0)])
    assert shifted.cg_in - base.cg_in == pytest.approx(-50.0 * 40.0 / base.weight_lb, rel=1e-12)


# --- weight_and_cg inputs -----


def test_dataframe_items_and_removed_weight():
    df = pd.DataFrame({"weight_lb": [1000.0, 200.0, -20.0], "arm_in": [80.0, 95.0, 100.0],
                       "name": ["empty", "pilot", "removed ballast"]})
    result = ld.weight_and_cg(df)
    assert result.weight_lb == pytest.approx(1180.0)
    assert result.cg_in == pytest.approx((80000.0 + 19000.0 - 2000.0) / 1180.0)


def test_loading_is_frozen():
    result = ld.weight_and_cg([(1000.0, 80.0)])
    with pytest.raises(AttributeError):
        result.cg_in = 1.0


@pytest.mark.parametrize(
    ("items", "match"),
    [([], "at least one"),
     ([(100.0, 80.0), (-100.0, 90.0)], "positive total weight, found 0 lb from 2 items"),
     ([(100.0, 80.0), (50.0,)], r"loading item 2: expected a \(weight_lb, arm_in\) pair"),
     ([(100.0, 80.0), (50.0, float("nan"))], "loading item 2, arm_in: expected a number"),
     (pd.DataFrame({"weight_lb": [1.0]}), "missing 'arm_in'"),
     (pd.DataFrame({"weight_lb": [1.0, np.inf], "arm_in": [1.0, 2.0]}, index=["a", "b"]),
      "loading item 'b', weight_lb"),
     (42, "found int"),
     ([("heavy", 80.0)], "weight_lb: expected a number")],
)
def test_bad_items(items, match):
    with pytest.raises(TrimlogError, match=match):
        ld.weight_and_cg(items)


@given(st.lists(st.tuples(st.floats(min_value=0.1, max_value=3000.0),
                          st.floats(min_value=-50.0, max_value=300.0)), min_size=1, max_size=12))
def test_cg_lies_between_the_extreme_arms(items):
    cg = ld.weight_and_cg(items).cg_in
    arms = [a for _, a in items]
    slack = 1e-9 * max(1.0, max(abs(a) for a in arms))
    assert min(arms) - slack <= cg <= max(arms) + slack


# --- %MAC ---------------------------------------------------------------------------------------


def test_pct_mac_kinds_and_limits():
    assert ld.station_to_pct_mac(60.0, 60.0, 48.0) == 0.0
    assert ld.station_to_pct_mac(108.0, 60.0, 48.0) == 100.0
    s = pd.Series([66.0, 72.0], index=[7, 8])
    out = ld.station_to_pct_mac(s, 60.0, 48.0)
    assert isinstance(out, pd.Series) and list(out.index) == [7, 8] and out[8] == 25.0
    assert isinstance(ld.pct_mac_to_station(np.array([0.0, 50.0]), 60.0, 48.0), np.ndarray)
    with pytest.raises(TrimlogError, match="mac_in: expected a value in \\(0, inf\\]"):
        ld.station_to_pct_mac(70.0, 60.0, 0.0)


@given(st.floats(min_value=-200.0, max_value=400.0), st.floats(min_value=-100.0, max_value=300.0),
       st.floats(min_value=5.0, max_value=200.0))
def test_pct_mac_round_trip(station, lemac, mac):
    pct = ld.station_to_pct_mac(station, lemac, mac)
    assert ld.pct_mac_to_station(pct, lemac, mac) == pytest.approx(station, abs=1e-9)


# --- fuel burn -----


def test_cg_through_flight_example():
    fuel = pd.Series([30.0, 20.0, 10.0, 0.0], index=[0, 10, 20, 30])
    result = ld.cg_through_flight(1200.0, 80.0, fuel, 90.0, 6.0)
    assert list(result.cg_in.index) == [0, 10, 20, 30]
    assert result.weight_lb.tolist() == [1380.0, 1320.0, 1260.0, 1200.0]
    assert result.cg_in[0] == pytest.approx((96000.0 + 180.0 * 90.0) / 1380.0)
    assert result.cg_in[30] == pytest.approx(80.0)
    # fuel aft of the zero-fuel CG: burning it moves the CG forward
    assert np.all(np.diff(result.cg_in.to_numpy()) < 0.0)
    weight, cg = result
    assert weight is result.weight_lb and cg is result.cg_in


@given(st.floats(min_value=500.0, max_value=3000.0), st.floats(min_value=60.0, max_value=100.0),
       st.floats(min_value=40.0, max_value=120.0), st.floats(min_value=0.0, max_value=80.0),
       st.floats(min_value=0.1, max_value=40.0))
def test_fuel_burn_moves_cg_toward_zero_fuel_cg(zfw, zf_cg, fuel_arm, fuel_full, burn):
    full = ld.cg_through_flight(zfw, zf_cg, fuel_full + burn, fuel_arm, 6.0).cg_in
    less = ld.cg_through_flight(zfw, zf_cg, fuel_full, fuel_arm, 6.0).cg_in
    lo, hi = sorted((zf_cg, fuel_arm))
    assert lo - 1e-9 <= less <= hi + 1e-9 and lo - 1e-9 <= full <= hi + 1e-9
    # burning fuel takes the CG away from the fuel arm, toward the zero-fuel CG
    assert abs(less - zf_cg) <= abs(full - zf_cg) + 1e-9
    assert abs(less - fuel_arm) >= abs(full - fuel_arm) - 1e-9


@given(st.floats(min_value=500.0, max_value=3000.0), st.floats(min_value=60.0, max_value=100.0),
       st.floats(min_value=40.0, max_value=120.0), st.floats(min_value=0.0, max_value=80.0))
def test_zero_fuel_loading_inverts_cg_through_flight(zfw, zf_cg, fuel_arm, fuel):
    takeoff = ld.cg_through_flight(zfw, zf_cg, fuel, fuel_arm, 6.0)
    back = ld.zero_fuel_loading(takeoff.weight_lb, takeoff.cg_in, fuel, fuel_arm, 6.0)
    assert back.weight_lb == pytest.approx(zfw, rel=1e-12)
    assert back.cg_in == pytest.approx(zf_cg, abs=1e-9)


def test_fuel_errors():
    with pytest.raises(TrimlogError, match=r"fuel_gal: .*found -1 gal at position 1"):
        ld.cg_through_flight(1200.0, 80.0, np.array([5.0, -1.0]), 90.0, 6.0)
    with pytest.raises(TrimlogError, match="fuel_density_lb_per_gal"):
        ld.cg_through_flight(1200.0, 80.0, 5.0, 90.0, 0.0)
    with pytest.raises(TrimlogError, match="not less than the takeoff weight 500 lb"):
        ld.zero_fuel_loading(500.0, 80.0, 100.0, 90.0, 6.0)


# --- fuel from fuel flow -----


def test_fuel_from_constant_and_ramped_flow():
    t = np.arange(0.0, 3601.0, 60.0)
    np.testing.assert_allclose(ld.fuel_from_flow(t, np.full(t.size, 9.0), 30.0),
                               30.0 - 9.0 * t / 3600.0, atol=1e-12)
    # the trapezoidal rule is exact for a flow that is linear in time
    flow = 6.0 + 4.0 * t / 3600.0
    expected = 30.0 - (6.0 * t + 2.0 * t**2 / 3600.0) / 3600.0
    np.testing.assert_allclose(ld.fuel_from_flow(t, flow, 30.0), expected, atol=1e-12)


def test_fuel_from_flow_series_and_repeated_time():
    t = pd.Series([0.0, 10.0, 10.0, 20.0], index=[5, 6, 7, 8])
    fuel = ld.fuel_from_flow(t, [36.0, 36.0, 36.0, 36.0], 10.0)
    assert isinstance(fuel, pd.Series) and list(fuel.index) == [5, 6, 7, 8]
    np.testing.assert_allclose(fuel.to_numpy(), [10.0, 9.9, 9.9, 9.8])


def test_fuel_from_flow_can_end_exactly_empty():
    assert ld.fuel_from_flow([0.0, 3600.0], [10.0, 10.0], 10.0).tolist() == [10.0, 0.0]


@pytest.mark.parametrize(
    ("time", "flow", "start", "match"),
    [([0.0, 3600.0, 7200.0], [10.0, 10.0, 10.0], 15.0,
      r"below zero at t = 7200 s at position 2 \(-5 gal from a start of 15 gal\)"),
     ([0.0, 20.0, 10.0], [8.0, 8.0, 8.0], 15.0, "found 10 s after 20 s at position 2"),
     ([0.0, np.nan], [8.0, 8.0], 15.0, r"time_s: .*missing value at position 1 \(1 missing\)"),
     ([0.0, 1.0], [8.0, np.nan], 15.0, "fuel_flow_gph: .*missing value"),
     ([0.0, 1.0], [8.0, -2.0], 15.0, "fuel_flow_gph: .*found -2 gal/h"),
     ([0.0, 1.0], [8.0], 15.0, "found 1 values for 2 times"),
     ([], [], 15.0, "at least one sample"),
     ([0.0, 1.0], [8.0, 8.0], -1.0, "start_fuel_gal")],
)
def test_fuel_from_flow_errors(time, flow, start, match):
    with pytest.raises(TrimlogError, match=match):
        ld.fuel_from_flow(time, flow, start)


def test_fuel_from_flow_error_names_series_label():
    t = pd.Series([0.0, 3600.0], index=["a", "b"])
    with pytest.raises(TrimlogError, match="t = 3600 s at index 'b'"):
        ld.fuel_from_flow(t, pd.Series([20.0, 20.0], index=["a", "b"]), 5.0)


def test_docstring_examples_run():
    assert doctest.testmod(ld, raise_on_error=False).failed == 0


def test_weighing_on_three_wheels_matches_the_faa_worked_example():
    # FAA weight-and-balance worked example (nosewheel airplane, datum at the main-wheel
    # weighing points): nosewheel F = 340 lb at L = -78 in, total W = 2,006 lb ->
    # CG = -13.2 in, i.e. 13.2 in ahead of the main wheels. FAA Pilot's Handbook of
    # Aeronautical Knowledge / FAA-H-8083-1 weight-and-balance chapter, "Electronic
    # calculator", figure "Weight and balance data of a typical nosewheel airplane"
    # (figure numbers from memory; values as reproduced at flight-study.com, 2021);
    # printed to 0.1 in.
    mains = (2006.0 - 340.0) / 2.0
    w = ld.weighed_loading([(340.0, 0.0, -78.0), (mains + 5.0, 5.0, 0.0), (mains, 0.0, 0.0)])
    assert w.empty.weight_lb == pytest.approx(2006.0)
    assert w.empty.cg_in == pytest.approx(-13.2, abs=0.05)
    # items on top: the basic equation (FAA-H-8083-1B ch. 2), checked by hand:
    # (2006 * -13.22 + 170 * 10 + 120 * 20) / 2296
    loaded = ld.weighed_loading([(340.0, 0.0, -78.0), (mains, 0.0, 0.0), (mains, 0.0, 0.0)],
                                [(170.0, 10.0), (120.0, 20.0)]).loaded
    assert loaded.weight_lb == pytest.approx(2296.0)
    assert loaded.cg_in == pytest.approx((340.0 * -78.0 + 1700.0 + 2400.0) / 2296.0)


def test_weighing_refuses_a_tare_above_its_reading():
    with pytest.raises(TrimlogError, match="tare 400 lb"):
        ld.weighed_loading([(340.0, 400.0, -78.0), (800.0, 0.0, 0.0)])
