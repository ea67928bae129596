import doctest

import numpy as np
import pandas as pd
import pytest
from ambiance import Atmosphere
from fluids.atmosphere import ATMOSPHERE_1976
from hypothesis import assume, given
from hypothesis import strategies as st

from trimlog.errors import TrimlogError
from trimlog.physics import atmosphere as atm

FT = 0.3048
EARTH_RADIUS_M = 6356766.0  # U.S. Standard Atmosphere 1976, r0 for geopotential altitude


def geometric_m(geopotential_m):
    """Geometric altitude of a geopotential altitude (U.S. Standard Atmosphere 1976, eq. 18)."""
    return EARTH_RADIUS_M * geopotential_m / (EARTH_RADIUS_M - geopotential_m)


# --- published values -----
# U.S. Standard Atmosphere 1976 (NOAA-S/T 76-1562), identical to ICAO Doc 7488/3 below
# 20 km, at geopotential pressure altitude (the ICAO tables are by geopotential altitude);
# printed to 0.01 K, 1 Pa, 5 decimals of kg/m^3 and 4 decimals of the ratios.  The
# tolerance is half a unit of the last printed digit.  The table was not re-read for this
# test; the geometric-altitude English-units table is checked separately below.
TABLE = [
    # alt_ft, T_K, p_Pa, rho_kgm3, sigma, delta
    (0.0, 288.15, 101325.0, 1.22500, 1.0000, 1.0000),
    (2000.0, 284.19, 94213.0, 1.15490, 0.9428, 0.9298),
    (5000.0, 278.24, 84307.0, 1.05555, 0.8617, 0.8320),
    (8000.0, 272.30, 75262.0, 0.96287, 0.7860, 0.7428),
    (10000.0, 268.34, 69682.0, 0.90464, 0.7385, 0.6877),
    (11000.0 / FT, 216.65, 22632.0, 0.36392, 0.2971, 0.2234),
]


@pytest.mark.parametrize(("alt_ft", "t_k", "p_pa", "rho", "sigma", "delta"), TABLE)
def test_published_table(alt_ft, t_k, p_pa, rho, sigma, delta):
    assert atm.isa_temperature_k(alt_ft) == pytest.approx(t_k, abs=0.005)
    assert atm.static_pressure_pa(alt_ft) == pytest.approx(p_pa, abs=0.5)
    assert atm.density_kgm3(alt_ft) == pytest.approx(rho, abs=5e-6)
    assert atm.density_ratio(alt_ft) == pytest.approx(sigma, abs=5e-5)
    assert atm.pressure_ratio(alt_ft) == pytest.approx(delta, abs=5e-5)


def test_tropopause_in_feet():
    # U.S. Standard Atmosphere 1976: 36,089 ft is the 11 km tropopause, 216.65 K, 22632 Pa
    # (printed to 5 significant figures)
    assert atm.isa_temperature_k(36089.0) == pytest.approx(216.65, abs=0.005)
    assert atm.static_pressure_pa(36089.0) == pytest.approx(22632.0, abs=0.5)


def test_top_of_isothermal_layer():
    # U.S. Standard Atmosphere 1976, layer base at 20 km geopotential: 5474.9 Pa, 216.65 K
    # (as tabulated in NASA TM-X-74335; printed to 5 significant figures)
    top_ft = 20000.0 / FT
    assert atm.static_pressure_pa(top_ft) == pytest.approx(5474.9, abs=0.05)
    assert atm.isa_temperature_k(top_ft) == 216.65


@pytest.mark.parametrize(("geometric_ft", "sigma", "delta"),
                         [(5000.0, 0.8617, 0.8321), (10000.0, 0.7386, 0.6878)])
def test_english_units_table_is_by_geometric_altitude(geometric_ft, sigma, delta):
    # U.S. Standard Atmosphere 1976, English-units table (by geometric altitude);
    # printed to 4 decimals.  Converting to geopotential reproduces its last digit.
    z_m = geometric_ft * FT
    h_ft = EARTH_RADIUS_M * z_m / (EARTH_RADIUS_M + z_m) / FT
    assert atm.density_ratio(h_ft) == pytest.approx(sigma, abs=5e-5)
    assert atm.pressure_ratio(h_ft) == pytest.approx(delta, abs=5e-5)


def test_constants_agree_with_each_other():
    # U.S. Standard Atmosphere 1976: rho0 = p0/(R T0), a0 = sqrt(gamma R T0),
    # g0/(L R) = 5.25588 (printed to 6 significant figures)
    assert atm.P0_PA / (atm.R_AIR_J_PER_KG_K * atm.T0_K) == pytest.approx(atm.RHO0_KGM3, abs=5e-7)
    assert atm.speed_of_sound_mps(atm.T0_K) == pytest.approx(atm.A0_MPS, abs=5e-4)
    assert atm._PRESSURE_EXPONENT == pytest.approx(5.25588, abs=5e-6)


# --- independent implementations -----

SWEEP_FT = np.linspace(-5000.0, 20000.0 / FT, 143)


def test_against_ambiance():
    # ambiance (ICAO 1993) takes geometric altitude, and starts the isothermal layer from
    # the printed 22632.0 Pa where ours continues the troposphere law (22632.04 Pa): 2e-6
    geometric = Atmosphere.geop2geom_height(SWEEP_FT * FT)
    ref = Atmosphere(geometric)
    np.testing.assert_allclose(atm.isa_temperature_k(SWEEP_FT), ref.temperature, rtol=1e-9)
    np.testing.assert_allclose(atm.static_pressure_pa(SWEEP_FT), ref.pressure, rtol=2e-6)
    np.testing.assert_allclose(atm.density_kgm3(SWEEP_FT), ref.density, rtol=2e-6)
    np.testing.assert_allclose(
        atm.speed_of_sound_mps(atm.isa_temperature_k(SWEEP_FT)), ref.speed_of_sound, rtol=1e-7
    )


def test_density_altitude_against_ambiance():
    alt_ft = np.array([0.0, 3000.0, 7000.0, 12000.0, 30000.0, 45000.0])
    oat_c = np.array([-30.0, 35.0, 10.0, -20.0, -30.0, -70.0])
    ref = Atmosphere.from_density(atm.density_kgm3(alt_ft, oat_c))
    np.testing.assert_allclose(atm.density_altitude_ft(alt_ft, oat_c), ref.H / FT, atol=0.05)


@pytest.mark.parametrize("alt_ft", np.linspace(0.0, 65617.0, 31))
def test_against_fluids(alt_ft):
    # fluids.atmosphere.ATMOSPHERE_1976 takes geometric altitude
    ref = ATMOSPHERE_1976(geometric_m(alt_ft * FT))
    assert atm.isa_temperature_k(alt_ft) == pytest.approx(ref.T, rel=1e-6)
    assert atm.static_pressure_pa(alt_ft) == pytest.approx(ref.P, rel=1e-5)
    assert atm.density_kgm3(alt_ft) == pytest.approx(ref.rho, rel=1e-5)


# --- density with a measured temperature -----


def test_density_uses_measured_temperature():
    # ideal gas at fixed static pressure: rho scales as 1/T
    rho_std = atm.density_kgm3(5000.0)
    rho_hot = atm.density_kgm3(5000.0, oat_c=atm.isa_temperature_k(5000.0) - 273.15 + 20.0)
    assert rho_hot == pytest.approx(rho_std * 278.244 / 298.244, rel=1e-6)
    assert atm.density_ratio(0.0, oat_c=15.0) == pytest.approx(1.0, abs=1e-7)


def test_density_altitude_rule_of_thumb():
    # common practice, no source: density altitude rises about 120 ft per degC above ISA
    for alt_ft, dev_c in [(0.0, 10.0), (5000.0, 20.0), (8000.0, -15.0)]:
        isa_c = atm.isa_temperature_k(alt_ft) - 273.15
        gain = atm.density_altitude_ft(alt_ft, isa_c + dev_c) - alt_ft
        assert gain == pytest.approx(120.0 * dev_c, rel=0.10)


def test_density_altitude_of_a_cold_day_goes_below_the_input_range():
    # -40 degC at sea level is ISA-55: far below sea level in density terms, still finite
    assert -8000.0 < atm.density_altitude_ft(0.0, -40.0) < -7000.0


def test_density_altitude_above_20_km_is_refused():
    with pytest.raises(TrimlogError, match="density altitude"):
        atm.density_altitude_ft(64000.0, 40.0)


def test_isa_deviation():
    assert atm.isa_deviation_c(0.0, 25.0) == pytest.approx(10.0)
    # ISA at 10,000 ft is -4.81 degC (U.S. Standard Atmosphere 1976, 268.34 K; 0.01 K)
    assert atm.isa_deviation_c(10000.0, -4.81) == pytest.approx(0.0, abs=0.005)
    assert atm.isa_deviation_c(40000.0, -56.5) == pytest.approx(0.0, abs=1e-9)


# --- properties -----

altitudes = st.floats(min_value=-5000.0, max_value=65617.0, allow_nan=False)


@given(altitudes, altitudes)
def test_density_decreases_with_altitude(a, b):
    lo, hi = sorted((a, b))
    if hi - lo > 1e-6:
        assert atm.density_kgm3(lo) > atm.density_kgm3(hi)
        assert atm.density_kgm3(lo, 0.0) > atm.density_kgm3(hi, 0.0)


@given(st.floats(min_value=-5000.0, max_value=60000.0), st.floats(min_value=-40.0, max_value=40.0))
def test_density_altitude_round_trip(alt_ft, deviation_c):
    oat_c = atm.isa_temperature_k(alt_ft) - 273.15 + deviation_c
    dens_alt = atm.density_altitude_ft(alt_ft, oat_c)
    assume(dens_alt >= atm.ALT_MIN_FT)  # below that the ISA functions refuse the altitude
    assert atm.density_kgm3(dens_alt) == pytest.approx(atm.density_kgm3(alt_ft, oat_c), rel=1e-10)


@given(altitudes)
def test_density_altitude_of_a_standard_day_is_pressure_altitude(alt_ft):
    isa_c = atm.isa_temperature_k(alt_ft) - 273.15
    assert atm.density_altitude_ft(alt_ft, isa_c) == pytest.approx(alt_ft, abs=1e-6)


# --- input kinds and errors -----


def test_scalar_array_series():
    assert isinstance(atm.density_kgm3(5000), float)
    arr = atm.density_kgm3(np.array([0.0, 5000.0]))
    assert isinstance(arr, np.ndarray) and arr.shape == (2,)
    s = pd.Series([0.0, 5000.0, np.nan], index=[10, 20, 30])
    out = atm.density_kgm3(s, oat_c=15.0)
    assert isinstance(out, pd.Series)
    assert list(out.index) == [10, 20, 30]
    assert out.iloc[0] == pytest.approx(1.225, abs=5e-6)
    assert np.isnan(out.iloc[2])  # a missing sample stays missing, and only that one
    oat = pd.Series([15.0, 5.0, 0.0], index=[10, 20, 30])
    out2 = atm.density_altitude_ft(3000.0, oat)
    assert isinstance(out2, pd.Series) and list(out2.index) == [10, 20, 30]
    assert atm.speed_of_sound_mps(pd.Series([288.15], index=["a"])).index.tolist() == ["a"]


def test_series_with_different_indexes_are_refused():
    with pytest.raises(TrimlogError, match="share one index"):
        atm.density_kgm3(pd.Series([0.0, 1.0]), pd.Series([15.0, 15.0], index=[5, 6]))


@pytest.mark.parametrize("bad_ft", [70000.0, -5001.0, np.inf])
def test_altitude_out_of_range_names_the_value(bad_ft):
    with pytest.raises(TrimlogError, match=r"pressure_alt_ft: expected .* \[-5000, 65617\]"):
        atm.static_pressure_pa(bad_ft)
    with pytest.raises(TrimlogError, match=f"found {bad_ft:g} ft"):
        atm.density_kgm3(bad_ft)


def test_error_points_at_the_series_label_and_counts():
    s = pd.Series([1000.0, 80000.0, 90000.0], index=["p1", "p2", "p3"])
    with pytest.raises(TrimlogError, match=r"80000 ft at index 'p2'; 2 of 3 values are outside"):
        atm.isa_temperature_k(s)


def test_bad_temperatures():
    with pytest.raises(TrimlogError, match="oat_c.*found 150 degC"):
        atm.density_kgm3(0.0, 150.0)
    with pytest.raises(TrimlogError, match="temperature_k.*found -5 K"):
        atm.speed_of_sound_mps(-5.0)
    with pytest.raises(TrimlogError, match="expected a number"):
        atm.density_kgm3("high")


def test_error_shows_a_numeric_label_as_written():
    with pytest.raises(TrimlogError, match=r"found 70000 ft at index 4;"):
        atm.density_kgm3(pd.Series([1000.0, 70000.0], index=[3, 4]))


def test_inputs_of_different_lengths_are_refused():
    with pytest.raises(TrimlogError, match="found lengths pressure_alt_ft 3, oat_c 2"):
        atm.density_kgm3(np.array([0.0, 1.0, 2.0]), np.array([15.0, 15.0]))
    with pytest.raises(TrimlogError, match="one length"):
        atm.isa_deviation_c([0.0, 1.0, 2.0], [15.0, 15.0])


def test_docstring_examples_run():
    assert doctest.testmod(atm, raise_on_error=False).failed == 0
