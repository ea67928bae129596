import doctest

import numpy as np
import pandas as pd
import pytest
from hypothesis import given
from hypothesis import strategies as st

from trimlog.errors import TrimlogError
from trimlog.physics import airspeed as asp
from trimlog.physics import atmosphere as atm

# --- sea-level standard day and constants --------------------------------------------------


@pytest.mark.parametrize("cas", [0.0, 50.0, 120.0, 250.0, 400.0])
def test_sea_level_standard_cas_eas_tas_agree(cas):
    eas = asp.cas_to_eas(cas, 0.0)
    assert eas == pytest.approx(cas, rel=1e-9, abs=1e-12)
    # rho0 = 1.225 is the standard's rounding of p0/(R T0) (7 digits): 1e-8
    assert asp.eas_to_tas(eas, 0.0, 15.0) == pytest.approx(cas, rel=1e-7, abs=1e-12)
    assert asp.cas_to_tas(cas, 0.0) == pytest.approx(cas, rel=1e-7, abs=1e-12)
    assert asp.cas_to_mach(cas, 0.0) == pytest.approx(cas / 661.48, rel=1e-5)


def test_sea_level_speed_of_sound_in_knots():
    # U.S. Standard Atmosphere 1976: a0 = 340.294 m/s = 661.48 kt (printed to 5 significant figures)
    assert asp.A0_KT == pytest.approx(661.48, abs=0.005)


# --- compressibility correction -----


@pytest.mark.parametrize(
    ("cas", "alt_ft", "eas"),
    [(100.0, 5000.0, 99.94), (150.0, 10000.0, 149.57), (200.0, 10000.0, 199.00),
     (250.0, 20000.0, 245.22), (300.0, 30000.0, 285.0)],
)
def test_eas_at_altitude(cas, alt_ft, eas):
    # regression value: the isentropic relations (Gracey, NASA RP-1046) evaluated on a
    # standard day, printed to 0.01 kt (0.1 kt at 30,000 ft)
    assert asp.cas_to_eas(cas, alt_ft) == pytest.approx(eas, abs=0.006)


def test_compressibility_correction_chart_300_kcas_30000_ft():
    # from memory: the compressibility-correction chart of pilot and flight-test handbooks
    # reads close to 15 kt to subtract at 300 KCAS and 30,000 ft (chart reading, +-1 kt)
    assert 300.0 - asp.cas_to_eas(300.0, 30000.0) == pytest.approx(15.0, abs=1.0)


def test_flight_computer_worked_example():
    # CRP-5 flight-computer worked example in a pilot navigation text: 250 KCAS at FL400,
    # OAT -56.5 degC gives 470 KTAS after the compressibility correction; slide-rule reading,
    # taken as +-5 kt
    assert asp.cas_to_tas(250.0, 40000.0, -56.5) == pytest.approx(470.0, abs=5.0)


@pytest.mark.parametrize(("mach", "p_over_pt"), [(0.5, 0.8430), (0.8, 0.6560)])
def test_isentropic_pitot_relation_against_naca_1135(mach, p_over_pt):
    # NACA Report 1135 (1953), Table I, isentropic flow for gamma = 1.4: p/pt at M = 0.5 and
    # 0.8, printed to 4 decimals (from memory).  The CAS whose impact pressure gives that
    # p/pt at 30,000 ft must read that Mach number; 0.5e-4 in p/pt is about 1e-4 in M.
    delta = atm.pressure_ratio(30000.0)
    qc_over_p0 = delta * (1.0 / p_over_pt - 1.0)
    cas = asp.A0_KT * np.sqrt(5.0 * ((qc_over_p0 + 1.0) ** (2.0 / 7.0) - 1.0))
    assert asp.cas_to_mach(cas, 30000.0) == pytest.approx(mach, abs=2e-4)


def test_below_10000_ft_and_200_kt_eas_is_within_a_knot_of_cas():
    # common practice, no source: "below 10,000 ft and 200 kt take EAS = CAS"
    cas = np.linspace(40.0, 200.0, 17)
    for alt_ft in (0.0, 5000.0, 10000.0):
        assert np.all(np.abs(asp.cas_to_eas(cas, alt_ft) - cas) <= 1.0)


def test_eas_is_below_cas_above_sea_level():
    cas = np.array([60.0, 120.0, 180.0])
    assert np.all(asp.cas_to_eas(cas, 8000.0) < cas)
    assert np.all(asp.cas_to_eas(cas, -2000.0) > cas)


# --- TAS and density altitude -----------------------------------------------------------------


@pytest.mark.parametrize(("alt_ft", "oat_c"), [(0.0, 35.0), (5000.0, 25.0), (8500.0, -10.0),
                                               (12000.0, 0.0), (3000.0, -30.0)])
def test_tas_follows_density_altitude(alt_ft, oat_c):
    # TAS = EAS / sqrt(sigma), and sigma is the standard-day sigma at the density altitude
    eas = asp.cas_to_eas(110.0, alt_ft)
    sigma = atm.density_ratio(atm.density_altitude_ft(alt_ft, oat_c))
    assert asp.cas_to_tas(110.0, alt_ft, oat_c) == pytest.approx(eas / np.sqrt(sigma), rel=1e-9)


def test_tas_rule_of_thumb():
    # common practice, no source: TAS is about 2 % above CAS per 1,000 ft of density altitude
    for alt_ft in (2000.0, 5000.0, 8000.0):
        tas = asp.cas_to_tas(100.0, alt_ft)
        assert tas == pytest.approx(100.0 * (1 + 0.02 * alt_ft / 1000.0), rel=0.03)


def test_hot_day_gives_higher_tas():
    assert asp.cas_to_tas(100.0, 5000.0, 30.0) > asp.cas_to_tas(100.0, 5000.0) > asp.cas_to_tas(
        100.0, 5000.0, -20.0)


def test_tas_equals_mach_times_speed_of_sound():
    for alt_ft, oat_c in [(0.0, 15.0), (10000.0, 10.0), (25000.0, -50.0)]:
        mach = asp.cas_to_mach(180.0, alt_ft)
        a_kt = atm.speed_of_sound_mps(oat_c + 273.15) / asp.KT_TO_MPS
        # a0 = 340.294 m/s is the standard's rounding of sqrt(gamma R T0): 1e-7
        assert asp.cas_to_tas(180.0, alt_ft, oat_c) == pytest.approx(mach * a_kt, rel=1e-7)


# --- round trips -----

alt = st.floats(min_value=-5000.0, max_value=40000.0)
speed = st.floats(min_value=0.0, max_value=250.0)  # stays below Mach 0.9 up to 40,000 ft
dev = st.floats(min_value=-30.0, max_value=30.0)


@given(speed, alt)
def test_cas_eas_round_trip(cas, alt_ft):
    assert asp.eas_to_cas(asp.cas_to_eas(cas, alt_ft), alt_ft) == pytest.approx(cas, rel=1e-10,
                                                                                 abs=1e-9)


@given(speed, alt, dev)
def test_eas_tas_round_trip(eas, alt_ft, deviation):
    oat = atm.isa_temperature_k(alt_ft) - 273.15 + deviation
    assert asp.tas_to_eas(asp.eas_to_tas(eas, alt_ft, oat), alt_ft, oat) == pytest.approx(
        eas, rel=1e-10, abs=1e-9)


@given(st.floats(min_value=1.0, max_value=250.0), alt)
def test_eas_never_exceeds_cas_above_sea_level(cas, alt_ft):
    if alt_ft > 0.0:
        assert asp.cas_to_eas(cas, alt_ft) <= cas * (1.0 + 1e-12)


# --- q and CL ---------------------------------------------------------------------------------


def test_dynamic_pressure():
    # q = 1/2 rho0 V^2, rho0 = 0.0023769 slug/ft^3 (U.S. Standard Atmosphere 1976),
    # 100 kt = 168.781 ft/s: 33.855 psf (printed to 5 significant figures)
    assert asp.dynamic_pressure_psf(100.0) == pytest.approx(0.5 * 0.0023769 * 168.781**2, rel=1e-4)
    assert asp.dynamic_pressure_psf(0.0) == 0.0


def test_lift_coefficient_worked_example():
    # CL = 2 W / (rho0 V^2 S), rho0 = 0.0023769 slug/ft^3 (U.S. Standard Atmosphere 1976):
    # 1500 lb, 120 ft^2, 100 KEAS -> 0.3692 (4 decimals)
    assert asp.lift_coefficient(1500.0, 100.0, 120.0) == pytest.approx(0.3692, abs=5e-5)
    assert asp.lift_coefficient(1500.0, 100.0, 120.0, nz_g=2.0) == pytest.approx(0.7384, abs=1e-4)


def test_lift_coefficient_series_and_errors():
    w = pd.Series([1500.0, 1400.0], index=["a", "b"])
    cl = asp.lift_coefficient(w, pd.Series([100.0, 120.0], index=["a", "b"]), 120.0)
    assert list(cl.index) == ["a", "b"]
    assert cl["b"] == pytest.approx(295.37 * 1400.0 / (120.0**2 * 120.0), rel=1e-4)
    with pytest.raises(TrimlogError, match="eas_kt.*found 0 kt"):
        asp.lift_coefficient(1500.0, 0.0, 120.0)
    with pytest.raises(TrimlogError, match="wing_area_ft2"):
        asp.lift_coefficient(1500.0, 100.0, -1.0)
    with pytest.raises(TrimlogError, match="weight_lb.*found -5 lb"):
        asp.lift_coefficient(-5.0, 100.0, 120.0)


# --- input kinds and errors -----


def test_series_in_series_out():
    cas = pd.Series([100.0, 150.0, np.nan], index=[3, 4, 5])
    alt = pd.Series([5000.0, 10000.0, 8000.0], index=[3, 4, 5])
    eas = asp.cas_to_eas(cas, alt)
    assert isinstance(eas, pd.Series) and list(eas.index) == [3, 4, 5]
    assert eas[4] == pytest.approx(149.57, abs=0.006)
    assert np.isnan(eas[5])
    tas = asp.cas_to_tas(cas, 8000.0, oat_c=5.0)
    assert isinstance(tas, pd.Series) and tas.name == "tas_kt"
    arr = asp.eas_to_cas(np.array([100.0, 200.0]), 10000.0)
    assert isinstance(arr, np.ndarray) and arr.shape == (2,)
    assert isinstance(asp.cas_to_mach(100, 0), float)


def test_negative_and_supersonic_speeds_are_refused():
    with pytest.raises(TrimlogError, match=r"cas_kt: expected .*found -3 kt"):
        asp.cas_to_eas(-3.0, 5000.0)
    with pytest.raises(TrimlogError, match=r"cas_kt: 600 kt is Mach 1\.\d+"):
        asp.cas_to_eas(600.0, 20000.0)
    with pytest.raises(TrimlogError, match=r"cas_kt: 700 kt is Mach"):
        asp.cas_to_mach(700.0, 0.0)
    with pytest.raises(TrimlogError, match=r"eas_kt: 400 kt at position 1 is Mach"):
        asp.eas_to_tas(np.array([100.0, 400.0]), 40000.0)
    with pytest.raises(TrimlogError, match=r"tas_kt: 700 kt is Mach"):
        asp.tas_to_eas(700.0, 0.0)
    with pytest.raises(TrimlogError, match=r"pressure_alt_ft"):
        asp.cas_to_eas(100.0, 99000.0)


# --- position error -----

TABLE_IAS = [50.0, 70.0, 90.0, 110.0, 130.0]
TABLE_CAS = [54.0, 72.0, 91.0, 110.0, 128.5]


def test_position_error_interpolates_the_correction():
    r = asp.ias_to_cas([50.0, 60.0, 100.0, 130.0], TABLE_IAS, TABLE_CAS)
    np.testing.assert_allclose(r.cas_kt, [54.0, 63.0, 100.5, 128.5])
    assert r.n_outside_table == 0 and r.warnings == ()


def test_position_error_series_and_nan():
    ias = pd.Series([80.0, np.nan], index=["p1", "p2"])
    r = asp.ias_to_cas(ias, TABLE_IAS, TABLE_CAS)
    assert list(r.cas_kt.index) == ["p1", "p2"]
    assert r.cas_kt["p1"] == pytest.approx(81.5)
    assert np.isnan(r.cas_kt["p2"])
    assert isinstance(asp.ias_to_cas(80.0, TABLE_IAS, TABLE_CAS).cas_kt, float)


def test_position_error_outside_table_raises_with_range():
    with pytest.raises(TrimlogError,
                       match=r"1 of 2 IAS values lie outside .*\(50-130 kt\), the first 140 kt"):
        asp.ias_to_cas([100.0, 140.0], TABLE_IAS, TABLE_CAS)


def test_position_error_clamp_holds_the_end_correction():
    r = asp.ias_to_cas(pd.Series([40.0, 100.0, 150.0]), TABLE_IAS, TABLE_CAS, extrapolate="clamp")
    # end corrections: +4.0 kt at 50 KIAS and -1.5 kt at 130 KIAS, held (not the CAS)
    np.testing.assert_allclose(r.cas_kt.to_numpy(), [44.0, 100.5, 148.5])
    assert r.n_outside_table == 2
    assert len(r.warnings) == 1 and "2 of 3 IAS values" in r.warnings[0]
    assert "at index 0" in r.warnings[0]
    (f,) = r.findings
    assert f.code == "physics.airspeed.outside_table" and f.message == r.warnings[0]
    assert (f.values["count"], f.values["total"], f.values["first_kt"]) == (2, 3, 40.0)


def test_position_error_clamp_cannot_make_cas_negative():
    with pytest.raises(TrimlogError, match="CAS from ias_kt"):
        asp.ias_to_cas(1.0, [50.0, 60.0], [40.0, 52.0], extrapolate="clamp")


@pytest.mark.parametrize(
    ("ias", "cas", "match"),
    [([50.0, 70.0], [54.0], "as many CAS as IAS values, found 2 IAS and 1 CAS"),
     ([50.0], [54.0], "at least 2 rows, found 1"),
     ([50.0, 50.0, 90.0], [54.0, 55.0, 91.0], "row 2: expected IAS to increase"),
     ([50.0, 90.0, 70.0], [54.0, 91.0, 72.0], "found 70 kt after 90 kt"),
     ([50.0, np.nan], [54.0, 60.0], "table_ias_kt row 2"),
     ([50.0, 70.0], [54.0, -1.0], "table_cas_kt row 2")],
)
def test_position_error_table_validation(ias, cas, match):
    with pytest.raises(TrimlogError, match=match):
        asp.ias_to_cas(60.0, ias, cas)


def test_position_error_bad_options():
    with pytest.raises(TrimlogError, match="extrapolate: expected 'error' or 'clamp'"):
        asp.ias_to_cas(60.0, TABLE_IAS, TABLE_CAS, extrapolate="linear")
    with pytest.raises(TrimlogError, match="ias_kt: expected"):
        asp.ias_to_cas(-60.0, TABLE_IAS, TABLE_CAS)


def test_position_error_result_is_frozen():
    r = asp.ias_to_cas(60.0, TABLE_IAS, TABLE_CAS)
    with pytest.raises(AttributeError):
        r.n_outside_table = 3


def test_inputs_of_different_lengths_are_refused():
    with pytest.raises(TrimlogError, match="found lengths cas_kt 3, pressure_alt_ft 2"):
        asp.cas_to_eas(np.array([90.0, 100.0, 110.0]), np.array([0.0, 10.0]))
    with pytest.raises(TrimlogError, match="one length"):
        asp.lift_coefficient(np.array([1500.0, 1400.0]), np.array([90.0, 95.0, 99.0]), 120.0)


def test_docstring_examples_run():
    assert doctest.testmod(asp, raise_on_error=False).failed == 0
