import numpy as np
import pandas as pd
import pytest

from trimlog.errors import InputFileError
from trimlog.input.loading_sheet import LoadingSheet
from trimlog.input.profile import parse_profile
from trimlog.pipeline.reduction import reduce_points

PROFILE_TEXT = """
[aircraft]
name = "reduction test"
wing_area = "120 ft^2"
mac = "50 in"
lemac = "60 in"
[tail]
tau = 0.5
stabilizer_attach_spacing = "14 in"
elevator_up_stop = "25 deg"
elevator_down_stop = "18 deg"
[limits]
cg_forward = "67 in"
cg_aft = "76 in"
max_weight = "1750 lb"
[cruise]
cas = "120 kt"
[fuel]
arm = "62 in"
density = "6 lb/gal"
"""
PROFILE = parse_profile(PROFILE_TEXT, "test.toml")


def _points(**columns):
    base = {"flight": "f1", "point": [1, 2], "cas_kt": [100.0, 80.0],
            "pressure_alt_ft": [0.0, 0.0], "oat_c": [15.0, 15.0],
            "elevator_deg": [-2.0, -4.0], "stick_force_lbf": [0.0, 3.0],
            "included": True, "flap_deg": 0.0}
    base.update(columns)
    return pd.DataFrame(base)


def _sheet(**kw):
    values = dict(source="f1.loading.toml", flight="f1", date=None, label="", notes="",
                  takeoff_weight_lb=1500.0, takeoff_cg_in=70.0, takeoff_cg_pct_mac=None,
                  takeoff_fuel_gal=20.0, fuel_flow_gph=None, flap_deg=None,
                  stab_setting=None, stab_incidence_deg=None)
    values.update(kw)
    return LoadingSheet(**values)


def test_lift_coefficient_at_sea_level_standard():
    out = reduce_points(_points(weight_lb=1500.0, cg_in=70.0), PROFILE).points
    # CL = 295.37 W / (V^2 S) in US units (rho0 = 0.0023769 slug/ft^3, U.S. Standard
    # Atmosphere 1976); EAS = CAS at sea level standard
    assert out["eas_kt"].tolist() == pytest.approx([100.0, 80.0], rel=1e-9)
    assert out["cl"].iloc[0] == pytest.approx(295.37 * 1500 / (100**2 * 120), rel=1e-4)
    assert out["fs_over_q_ft2"].iloc[1] == pytest.approx(3.0 / out["q_psf"].iloc[1])
    assert out["h"].iloc[0] == pytest.approx(0.2)
    assert out["cg_pct_mac"].iloc[0] == pytest.approx(20.0)


def test_load_factor_scales_cl_and_defaults_to_one_with_a_warning():
    logged = reduce_points(_points(weight_lb=1500.0, cg_in=70.0, nz_g=[2.0, 1.0]), PROFILE)
    assumed = reduce_points(_points(weight_lb=1500.0, cg_in=70.0), PROFILE)
    assert logged.points["cl"].iloc[0] == pytest.approx(2 * assumed.points["cl"].iloc[0])
    assert any(f.code == "pipeline.reduction.nz_assumed" for f in assumed.findings)


def test_cg_in_percent_mac_is_converted_to_a_station():
    out = reduce_points(_points(weight_lb=1500.0, cg_pct_mac=25.0), PROFILE).points
    assert out["cg_in"].iloc[0] == pytest.approx(72.5)


def test_loading_sheet_with_fuel_burn_moves_the_cg_toward_the_fuel_arm():
    sheet = _sheet()
    out = reduce_points(_points(fuel_gal=[20.0, 10.0]), PROFILE, {"f1": sheet}).points
    assert out["weight_lb"].tolist() == pytest.approx([1500.0, 1440.0])
    # 10 gal x 6 lb/gal removed at 62 in from 1500 lb at 70 in:
    # moment 105000 - 3720 = 101280 over 1440 lb = 70.333 in (hand-computed)
    assert out["cg_in"].iloc[1] == pytest.approx(101280 / 1440)


def test_loading_sheet_cg_in_percent_mac():
    sheet = _sheet(takeoff_cg_in=None, takeoff_cg_pct_mac=30.0)
    out = reduce_points(_points(), PROFILE, {"f1": sheet})
    assert out.points["cg_in"].tolist() == pytest.approx([75.0, 75.0])
    assert any(f.code == "pipeline.reduction.no_fuel_burn" and f.subject.flight == "f1"
               for f in out.findings)


def test_missing_loading_is_an_error_naming_what_is_needed():
    with pytest.raises(InputFileError, match="weight and CG are needed"):
        reduce_points(_points(), PROFILE)


def test_cg_far_outside_the_limits_is_an_error():
    with pytest.raises(InputFileError, match="far outside the profile's limits"):
        reduce_points(_points(weight_lb=1500.0, cg_in=110.0), PROFILE)


def test_cg_just_outside_the_limits_is_a_warning():
    out = reduce_points(_points(weight_lb=1500.0, cg_in=77.0), PROFILE)
    (outside,) = [f for f in out.findings if f.code == "pipeline.reduction.cg_outside_limits"]
    assert outside.severity == "warning"
    assert outside.values["max_pct_mac"] > outside.values["aft_pct_mac"]


def test_incidence_setting_and_configuration_labels():
    points = pd.concat([
        _points(flight="a", weight_lb=1500.0, cg_in=70.0),
        _points(flight="b", weight_lb=1500.0, cg_in=70.0, flap_deg=20.0),
        _points(flight="c", weight_lb=1500.0, cg_in=70.0, flap_deg=np.nan),
    ], ignore_index=True)
    sheets = {"a": _sheet(flight="a", stab_setting="shim 1", stab_incidence_deg=-1.5)}
    out = reduce_points(points, PROFILE, sheets)
    by_flight = out.points.groupby("flight").first()
    assert by_flight.loc["a", "stab_setting"] == "shim 1"
    assert by_flight.loc["a", "stab_incidence_deg"] == -1.5
    assert by_flight.loc["b", "stab_setting"] == "as rigged"
    assert by_flight.loc["b", "config"] == "flaps 20 deg"
    assert by_flight.loc["c", "config"] == "clean"
    (clean,) = [f for f in out.findings if f.code == "pipeline.reduction.flaps_assumed_clean"]
    assert clean.values["flights"] == "c"


def test_position_error_table_is_applied():
    text = PROFILE_TEXT + "\n[airspeed_calibration]\nias = [50, 150]\ncas = [55, 145]\n"
    profile = parse_profile(text, "cal.toml")
    points = _points(weight_lb=1500.0, cg_in=70.0).drop(columns=["cas_kt"])
    points["ias_kt"] = [100.0, 80.0]
    out = reduce_points(points, profile).points
    assert out["cas_kt"].tolist() == pytest.approx([100.0, 82.0])  # linear in the table
