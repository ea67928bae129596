"""Tests of the demo generator and of the files it wrote into sample_logs/.

The demo flights are synthetic data of known truth (trimlog.demo.model.DEMO_TRUTH);
the comparisons of detected points with the truth below are statistical
checks on that synthetic data, with tolerances set from the stated noise.
"""

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from trimlog.demo import model as demo
from trimlog.demo.files import main as demo_main
from trimlog.demo.files import write_demo
from trimlog.demo.model import DEMO_TRUTH, hold_errors, truth_points
from trimlog.errors import TrimlogError
from trimlog.input.loading_sheet import read_loading_sheet
from trimlog.input.logs import read_log
from trimlog.input.profile import load_profile, parse_profile
from trimlog.physics import mass_balance as loading
from trimlog.pipeline import chain as analysis
from trimlog.pipeline.points import find_stabilized_points, points_from_log
from trimlog.pipeline.reduction import reduce_points
from trimlog.views.json_export import analysis_to_dict

SAMPLE_LOGS = Path(__file__).resolve().parents[2] / "sample_logs"
LOGGED = [f for f in DEMO_TRUTH.flights if f.kind == "time_series"]
TABLES = [f for f in DEMO_TRUTH.flights if f.kind == "point_table"]


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory):
    directory = tmp_path_factory.mktemp("demo")
    return directory, write_demo(directory)


@pytest.fixture(scope="module")
def profile():
    return load_profile(SAMPLE_LOGS / demo.PROFILE_FILE)


def _read(flight, profile):
    return read_log(SAMPLE_LOGS / flight.log_file, column_map=profile.column_map,
                    inverted=profile.inverted_columns)


# ---------------------------------------------------------------- reproducibility


def test_regeneration_is_bit_for_bit_equal_to_sample_logs(regenerated):
    directory, written = regenerated
    names = sorted(path.relative_to(directory).as_posix() for path in written)
    assert names == sorted(path.relative_to(SAMPLE_LOGS).as_posix()
                           for path in SAMPLE_LOGS.rglob("*") if path.is_file())
    for name in names:
        assert (directory / name).read_bytes() == (SAMPLE_LOGS / name).read_bytes(), name


def test_another_seed_changes_the_noise_but_not_the_profile(tmp_path, regenerated):
    directory, _ = regenerated
    write_demo(tmp_path, seed=demo.DEFAULT_SEED + 1)
    profile_name = demo.PROFILE_FILE
    assert (tmp_path / profile_name).read_bytes() == (directory / profile_name).read_bytes()
    for flight in DEMO_TRUTH.flights:
        assert (tmp_path / flight.log_file).read_bytes() != (
            directory / flight.log_file
        ).read_bytes()


def test_command_line_writes_the_files(tmp_path, capsys):
    assert demo_main([str(tmp_path / "out")]) == 0
    printed = capsys.readouterr().out.split()
    files = [p for p in (tmp_path / "out").rglob("*") if p.is_file()]
    assert len(printed) == len(files) == 12  # with calibration/calibration_flight.csv


def test_files_stay_small():
    for flight in LOGGED:
        assert (SAMPLE_LOGS / flight.log_file).stat().st_size < 1_500_000, flight.log_file


# ---------------------------------------------------------------- the profile


def test_profile_parses_with_every_optional_key_given(profile):
    assert profile.warnings == ()
    assert profile.defaults_used == ()
    assert "invented" in profile.name and "DEMO" in profile.name
    # tau is left to estimation (chord ratio) and to flight calibration
    assert profile.tau is None
    assert profile.elevator_chord_ratio == 0.30
    for attr in ("current_incidence_deg", "wing_span_in", "clmax_clean", "clmax_landing",
                 "htail_area_ft2", "htail_span_in", "htail_arm_in", "vtail_area_ft2",
                 "vtail_height_in", "vtail_arm_in", "fuel_arm_in", "position_error_ias_kt"):
        assert getattr(profile, attr) is not None, attr
    assert profile.column_map == {"ELEV_POS": "elevator_deg", "FSTK": "stick_force_N"}
    assert profile.inverted_columns == ("elevator_deg",)
    assert profile.current_incidence_deg == DEMO_TRUTH.rigged_incidence_deg
    assert parse_profile(demo.PROFILE_TOML) == parse_profile(demo.PROFILE_TOML)


def test_position_error_table_is_invertible(profile):
    cas = np.asarray(profile.position_error_cas_kt)
    assert np.all(np.diff(cas) > 0)


def test_flights_move_aft_then_reshim(profile):
    cgs = [f.takeoff_cg_pct_mac for f in DEMO_TRUTH.flights]
    assert cgs[0] < cgs[1] < cgs[2] < cgs[3]
    assert 15.0 <= cgs[0] <= 18.0 and 29.0 <= cgs[3] <= 31.0
    assert cgs[4] == pytest.approx(cgs[2])
    for f in DEMO_TRUTH.flights:
        assert profile.cg_forward_in <= f.takeoff_cg_in <= profile.cg_aft_in
        assert f.takeoff_weight_lb <= profile.max_weight_lb
    shimmed = DEMO_TRUTH.flights[4].stab_incidence_deg - DEMO_TRUTH.rigged_incidence_deg
    assert shimmed == pytest.approx(-0.6)


# ---------------------------------------------------------------- the truth model


@pytest.mark.parametrize("flight", DEMO_TRUTH.flights, ids=lambda f: f"flight{f.number}")
def test_noise_free_points_satisfy_the_trim_equation(flight):
    # Exact oracle: Cm = Cm0 + (h - hn) CL + Cmd (de + di_t / tau) = 0 at every point
    # (Etkin & Reid, Dynamics of Flight, ch. 2).
    t = DEMO_TRUTH
    pts = truth_points(flight)
    delta_it = np.radians(pts["stab_incidence_deg"] - t.rigged_incidence_deg)
    cm = (t.cm0 + (pts["h"] - t.neutral_point_fixed) * pts["cl"]
          + t.cm_delta_per_rad * (np.radians(pts["elevator_deg"]) + delta_it / t.tau))
    assert np.abs(cm).max() < 1e-12


@pytest.mark.parametrize("flight", DEMO_TRUTH.flights, ids=lambda f: f"flight{f.number}")
def test_noise_free_lift_coefficient_is_n_w_over_q_s(flight):
    pts = truth_points(flight)
    # CL = 295.37 n W / (Ve^2 S) in lb, kt, ft^2 (from rho0 = 0.0023769 slug/ft^3);
    # printed to 5 significant figures
    expected = 295.37 * pts["nz_g"] * pts["weight_lb"] / (pts["eas_kt"] ** 2 * 120.0)
    np.testing.assert_allclose(pts["cl"], expected, rtol=1e-4)


def test_elevator_gradient_and_incidence_shift_are_the_textbook_ones():
    t = DEMO_TRUTH
    for h in (0.15, 0.25, 0.35):
        slope = (t.elevator_deg(0.8, h, -1.0) - t.elevator_deg(0.3, h, -1.0)) / 0.5
        assert math.radians(slope) == pytest.approx((t.neutral_point_fixed - h)
                                                    / t.cm_delta_per_rad, rel=1e-12)
    # an incidence change moves every trim line by -di_t / tau
    shift = t.elevator_deg(0.5, 0.27, -1.6) - t.elevator_deg(0.5, 0.27, -1.0)
    assert shift == pytest.approx(0.6 / t.tau, rel=1e-12)
    # at the neutral point the elevator no longer depends on CL
    at_np = t.elevator_deg(np.array([0.2, 1.0]), t.neutral_point_fixed, -1.0)
    assert at_np[0] == pytest.approx(at_np[1], abs=1e-12)


@pytest.mark.parametrize("flight", DEMO_TRUTH.flights, ids=lambda f: f"flight{f.number}")
def test_stick_force_is_zero_at_trim_and_stable_forward_of_hn_free(flight):
    t = DEMO_TRUTH
    pts = truth_points(flight)
    trim = pts[(pts["ias_kt"] == flight.trim_ias_kt) & (pts["vs_fpm"] == 0.0)].iloc[0]
    assert abs(trim["stick_force_lbf"]) < 0.01
    slow = pts[pts["ias_kt"] < flight.trim_ias_kt - 1.0]["stick_force_lbf"]
    fast = pts[pts["ias_kt"] > flight.trim_ias_kt + 1.0]["stick_force_lbf"]
    assert (slow > 0).all() and (fast < 0).all()  # pull below trim speed, push above
    level = pts[pts["vs_fpm"] == 0.0]
    slope = np.polyfit(level["cl"], level["stick_force_lbf"] / level["q_psf"], 1)[0]
    expected = t.force_gain_ft2 * (t.neutral_point_free - level["h"].mean())
    assert slope == pytest.approx(expected, rel=0.02)  # h creeps aft as fuel burns


def test_cruise_elevator_and_shim():
    t = DEMO_TRUTH
    rigged = t.rigged_incidence_deg
    assert -3.0 < t.cruise_elevator_deg(rigged) < -2.0
    change = t.incidence_change_deg(rigged)
    assert change == pytest.approx(t.tau * t.cruise_elevator_deg(rigged))
    assert t.cruise_elevator_deg(rigged + change) == pytest.approx(0.0, abs=1e-12)
    # shim t = d tan(di_t) for attach-point spacing d
    assert t.shim_in(rigged) == pytest.approx(14.0 * math.tan(math.radians(abs(change))))
    residual = t.incidence_change_deg(rigged - 0.6)
    assert residual == pytest.approx(change + 0.6)


@pytest.mark.parametrize("flight", LOGGED, ids=lambda f: f"flight{f.number}")
def test_weight_and_cg_follow_the_package_fuel_burn(flight, profile):
    pts = truth_points(flight)
    zero_fuel = loading.zero_fuel_loading(
        flight.takeoff_weight_lb, flight.takeoff_cg_in, flight.takeoff_fuel_gal,
        profile.fuel_arm_in, profile.fuel_density_lb_per_gal,
    )
    weight, cg = loading.cg_through_flight(
        zero_fuel.weight_lb, zero_fuel.cg_in, pts["fuel_gal"], profile.fuel_arm_in,
        profile.fuel_density_lb_per_gal,
    )
    np.testing.assert_allclose(pts["weight_lb"], weight, rtol=1e-12)
    # the hold mean of the CG against the CG at the hold's mean fuel: equal to 1e-9
    np.testing.assert_allclose(pts["cg_in"], cg, rtol=1e-8)


# ---------------------------------------------------------------- the files as read


@pytest.mark.parametrize("flight", TABLES, ids=lambda f: f"flight{f.number}")
def test_point_table_reads_with_typed_values_near_the_truth(flight, profile):
    log = _read(flight, profile)
    assert log.kind == "point_table"
    # The card's trim points, then one typed row per step of the wind-up turn.
    truth = pd.concat([truth_points(flight), truth_points(flight, maneuvers=True)],
                      ignore_index=True)
    assert len(log.data) == len(truth) == flight.n_points + flight.n_windup_steps == 12
    assert log.data["ias_kt"].between(60, 130).all()
    # typed readings: 0.15 deg reading error + 0.1 deg rounding; 0.4 lbf + 0.5 lbf steps
    np.testing.assert_allclose(log.data["elevator_deg"], truth["elevator_deg"], atol=0.6)
    np.testing.assert_allclose(log.data["stick_force_lbf"], truth["stick_force_lbf"], atol=1.5)
    np.testing.assert_allclose(log.data["cg_in"], truth["cg_in"], atol=0.25)
    # the g-meter read to 0.05 g after 0.02 g of reading error
    np.testing.assert_allclose(log.data["nz_g"], truth["nz_g"], atol=0.1)
    assert log.data["weight_lb"].iloc[:8].is_monotonic_decreasing


@pytest.mark.parametrize("flight", LOGGED, ids=lambda f: f"flight{f.number}")
def test_time_series_reads_with_the_logger_mapping(flight, profile):
    log = _read(flight, profile)
    assert log.kind == "time_series"
    step = np.median(np.diff(log.data["time_s"]))
    assert step == pytest.approx(1.0 / flight.sample_rate_hz)
    duration_min = log.data["time_s"].iloc[-1] / 60.0
    assert 14.0 <= duration_min <= 25.0
    info = {c.canonical: c for c in log.columns}
    assert info["elevator_deg"].header == "ELEV_POS" and info["elevator_deg"].inverted
    assert info["stick_force_lbf"].header == "FSTK" and "N" in info["stick_force_lbf"].unit
    assert info["ias_kt"].header == "IAS (mph)"
    assert {"fuel_gal", "nz_g", "oat_c", "pressure_alt_ft"} <= set(info)
    assert sum(d.count for d in log.dropped) > 0  # the dropouts are there, and counted
    fuel = log.data["fuel_gal"].dropna()
    assert fuel.iloc[-50:].mean() < fuel.iloc[:50].mean() - 1.0


@pytest.mark.parametrize("flight", LOGGED, ids=lambda f: f"flight{f.number}")
def test_loading_sheet_reads_back_the_flight(flight):
    sheet = read_loading_sheet(SAMPLE_LOGS / flight.loading_file)
    assert sheet.flight == str(flight.number)
    assert sheet.takeoff_weight_lb == flight.takeoff_weight_lb
    assert sheet.takeoff_cg_in == pytest.approx(flight.takeoff_cg_in)
    assert sheet.takeoff_fuel_gal == flight.takeoff_fuel_gal
    assert sheet.stab_setting == flight.stab_setting
    assert sheet.stab_incidence_deg == pytest.approx(flight.stab_incidence_deg)


@pytest.mark.parametrize("flight", LOGGED, ids=lambda f: f"flight{f.number}")
def test_detection_finds_every_hold_and_nothing_else(flight, profile):
    log = _read(flight, profile)
    found = find_stabilized_points(log.data, flight=str(flight.number))
    truth = truth_points(flight)
    assert len(found) == flight.n_points == len(truth)
    middle = 0.5 * (found["t_start_s"] + found["t_end_s"]).to_numpy()
    assert ((middle > truth["t_start_s"]) & (middle < truth["t_end_s"])).all()
    assert found["included"].all()
    # Means against the noise-free holds plus each hold's own offset.  Bounds about
    # 4 standard errors of a 25-s mean of the stated turbulence, plus the edges of
    # the transitions that the detected windows take in: elevator 0.2 deg, IAS
    # 0.8 kt, force 0.4 lbf.
    held = hold_errors(flight)
    np.testing.assert_allclose(found["elevator_deg"],
                               truth["elevator_deg"] + held["elevator_deg"], atol=0.2)
    np.testing.assert_allclose(found["ias_kt"], truth["ias_kt"], atol=0.8)
    np.testing.assert_allclose(found["stick_force_lbf"],
                               truth["stick_force_lbf"] + held["stick_force_lbf"], atol=0.4)
    # Against the noise-free holds alone the hold-level error adds 4 of its
    # standard deviations to those bounds.
    np.testing.assert_allclose(found["elevator_deg"], truth["elevator_deg"],
                               atol=0.2 + 4 * demo.HOLD_ELEVATOR_SD_DEG)
    np.testing.assert_allclose(found["stick_force_lbf"], truth["stick_force_lbf"],
                               atol=0.4 + 4 * demo.HOLD_FORCE_SD_LBF)
    np.testing.assert_allclose(found["nz_g"], truth["nz_g"], atol=0.03)
    climbs = truth["vs_fpm"].abs() > 100
    assert climbs.sum() == 2
    np.testing.assert_allclose(found.loc[climbs.to_numpy(), "vs_fpm"],
                               truth.loc[climbs, "vs_fpm"], atol=100.0)


def test_truth_points_table_has_the_documented_columns():
    pts = truth_points(DEMO_TRUTH.flights[1])
    assert isinstance(pts, pd.DataFrame)
    assert list(pts["point"]) == list(range(1, DEMO_TRUTH.flights[1].n_points + 1))
    assert pts.notna().all().all()
    assert DEMO_TRUTH.flights[1].n_turns == 4


def test_all_flights_reduce_to_one_configuration_with_the_true_loading(profile):
    frames, sheets = [], {}
    for flight in DEMO_TRUTH.flights:
        frames.append(points_from_log(_read(flight, profile), flight=str(flight.number)))
        if flight.loading_file:
            sheet = read_loading_sheet(SAMPLE_LOGS / flight.loading_file)
            sheets[sheet.flight] = sheet
    reduced = reduce_points(pd.concat(frames, ignore_index=True), profile, sheets).points
    assert set(reduced["config"]) == {"clean"}
    assert set(reduced["stab_setting"]) == {"as rigged", DEMO_TRUTH.flights[4].stab_setting}
    for flight in DEMO_TRUTH.flights:
        got = reduced[reduced["flight"] == str(flight.number)].reset_index(drop=True)
        truth = truth_points(flight)
        # weight and CG from the typed card (1 lb, 0.1 in) or from the sheet and the
        # logged fuel quantity (0.1 gal resolution, 0.05 gal noise)
        np.testing.assert_allclose(got["weight_lb"], truth["weight_lb"], atol=6.0)
        np.testing.assert_allclose(got["cg_in"], truth["cg_in"], atol=0.25)
        np.testing.assert_allclose(got["cl"], truth["cl"], rtol=0.02)


# ---------------------------------------------------------------- hold-level error


def _all_hold_errors():
    return pd.concat([hold_errors(f) for f in LOGGED], ignore_index=True)


def test_hold_errors_have_the_stated_spread():
    # Synthetic data of known truth: 52 draws per channel of N(0, sd).  The sample
    # standard deviation lies within the chi-square 99.9 % bounds of its
    # distribution; the mean within 3.3 standard errors of zero.
    errors = _all_hold_errors()
    n = len(errors)
    assert n == sum(f.n_points for f in LOGGED) == 52
    low, high = (math.sqrt(stats.chi2.ppf(q, n - 1) / (n - 1)) for q in (0.0005, 0.9995))
    for column, sd in (("elevator_deg", demo.HOLD_ELEVATOR_SD_DEG),
                       ("stick_force_lbf", demo.HOLD_FORCE_SD_LBF)):
        values = errors[column]
        assert low * sd < values.std() < high * sd, column
        assert abs(values.mean()) < 3.3 * sd / math.sqrt(n), column
    # elevator and force offsets are drawn independently
    assert abs(np.corrcoef(errors["elevator_deg"], errors["stick_force_lbf"])[0, 1]) < 0.45


def test_hold_errors_depend_on_the_seed_and_not_on_a_point_table():
    flight = LOGGED[0]
    a, b = hold_errors(flight), hold_errors(flight, seed=demo.DEFAULT_SEED + 1)
    assert not np.allclose(a["elevator_deg"], b["elevator_deg"])
    pd.testing.assert_frame_equal(a, hold_errors(flight))
    with pytest.raises(TrimlogError, match="point table"):
        hold_errors(TABLES[0])


@pytest.mark.parametrize("flight", LOGGED, ids=lambda f: f"flight{f.number}")
def test_hold_error_is_steady_within_a_hold(flight):
    # The drift across a hold must stay well inside the detector's 0.5 deg and
    # 1.5 lbf ranges (trimlog.pipeline.points.PointSettings): its end-to-end standard
    # deviation is HOLD_DRIFT_SD of the offset's, so 4 of them bound it.
    series = demo._hold_error_series(flight, demo.DEFAULT_SEED)
    holds = [k for k, seg in enumerate(flight.segments) if seg.kind == "hold"]
    for column, sd in (("elevator", demo.HOLD_ELEVATOR_SD_DEG),
                       ("force", demo.HOLD_FORCE_SD_LBF)):
        for k in holds:
            values = series[column][series["seg"] == k]
            assert np.ptp(values) < 4 * demo.HOLD_DRIFT_SD * sd, (column, k)
        # continuous through the speed changes: no step between samples
        assert np.abs(np.diff(series[column])).max() < 0.05 * sd


def test_detected_points_scatter_about_the_truth_by_the_hold_error(profile):
    # Synthetic data of known truth: the detected means less the noise-free holds
    # scatter by the hold-level error (52 holds; the sensor noise averages out to
    # a few hundredths), so their spread lies within the chi-square 99.9 % bounds
    # of HOLD_ELEVATOR_SD_DEG widened by 10 % for that noise.
    misses = []
    for flight in LOGGED:
        found = find_stabilized_points(_read(flight, profile).data, flight=str(flight.number))
        misses.append(found["elevator_deg"] - truth_points(flight)["elevator_deg"])
    miss = pd.concat(misses, ignore_index=True)
    n = len(miss)
    low, high = (math.sqrt(stats.chi2.ppf(q, n - 1) / (n - 1)) for q in (0.0005, 0.9995))
    sd = demo.HOLD_ELEVATOR_SD_DEG
    assert low * sd < miss.std() < 1.1 * high * sd


def test_sample_logs_give_neutral_points_with_credible_intervals():
    # Synthetic data of known truth (hn = 38.0, hn' = 34.0 %MAC).  With the
    # hold-level error the 95 % intervals of all five flights together are about
    # a percent of MAC either side (0.5-2 %MAC: common practice, no source) and
    # hold the truth for the seed of sample_logs/.
    profile = analysis.load_profile(SAMPLE_LOGS / demo.PROFILE_FILE)
    flights = []
    for flight in DEMO_TRUTH.flights:
        flights += analysis.load_flight_file(SAMPLE_LOGS / flight.log_file, profile)
    result = analysis_to_dict(analysis.analyze(flights, profile))["neutral_point"]
    for key, truth in (("stick_fixed", 100 * DEMO_TRUTH.neutral_point_fixed),
                       ("stick_free", 100 * DEMO_TRUTH.neutral_point_free)):
        low, high = result[key]["ci95_pct_mac"]
        assert low < truth < high, key
        assert 0.5 < 0.5 * (high - low) < 2.0, key


# ---------------------------------------------------------------- maneuvering (issue 14)


def test_the_holds_keep_their_noise_when_the_wind_up_turn_is_added(profile):
    # The wind-up turn draws its own noise: the samples before it are those of a flight
    # without it (written by the same writer from the programme cut before the turn).
    import dataclasses

    from trimlog.demo import files, model

    flight = DEMO_TRUTH.flights[1]
    short = dataclasses.replace(flight, segments=flight.segments[: flight.windup_from])
    dt = model._sample_interval(flight)
    args = (dt, model.DEMO_PROFILE, np.random.default_rng([model.DEFAULT_SEED, flight.number]))
    without = files.time_series_csv(short, model._smooth_state(short, dt, DEMO_TRUTH),
                                    model._hold_error_series(short, model.DEFAULT_SEED), *args)
    shipped = (SAMPLE_LOGS / flight.log_file).read_text(encoding="utf-8").splitlines()
    lines = without.splitlines()
    last_hold = max(k for k, s in enumerate(flight.segments) if s.kind == "hold")
    state = model._smooth_state(flight, dt, DEMO_TRUTH)
    through = int(np.searchsorted(state["seg"], last_hold + 1))  # samples up to the last hold
    head = 3  # preamble and header lines
    assert shipped[: head + through] == lines[: head + through]


def test_demo_maneuver_points_cover_the_model(profile):
    # The demo model leaves out pitch damping, so hm = hn and hm' = hn' (model truth).
    from trimlog.pipeline import chain

    flights = []
    for f in DEMO_TRUTH.flights:
        flights += chain.load_flight_file(SAMPLE_LOGS / f.log_file, profile)
    result = chain.analyze(flights, profile).maneuvering
    assert result is not None and len(result.gradients) == 5
    assert all(g.n_points >= 4 for g in result.gradients)
    fixed, free = result.stick_fixed, result.stick_free
    assert fixed.identifiable and free.identifiable
    assert fixed.ci95_pct_mac[0] <= 100 * DEMO_TRUTH.neutral_point_fixed <= fixed.ci95_pct_mac[1]
    assert free.ci95_pct_mac[0] <= 100 * DEMO_TRUTH.neutral_point_free <= free.ci95_pct_mac[1]
    # The most aft flight (30 %MAC) is light in stick force per g: a warning.
    assert any("below the minimum" in w for w in result.warnings)



def test_demo_maneuvering_in_the_terminal_and_the_json_contract(profile):
    from trimlog.pipeline import chain
    from trimlog.views import terminal
    from trimlog.views.json_export import analysis_to_dict

    flights = []
    for f in DEMO_TRUTH.flights:
        flights += chain.load_flight_file(SAMPLE_LOGS / f.log_file, profile)
    analysis = chain.analyze(flights, profile)
    text = terminal.render(analysis)
    assert "stick-fixed maneuver point hm:" in text and "23.155" in text
    block = analysis_to_dict(analysis)["maneuvering"]
    # The contract of issue 14: these keys, and only more beside them.
    assert set(block["points"][0]) >= {"flight", "nz_g", "eas_kt", "elevator_deg",
                                       "stick_force_lbf", "cg_pct_mac", "t_start_s", "t_end_s",
                                       "included"}
    assert set(block["per_flight"][0]) >= {
        "flight", "cg_pct_mac", "elevator_per_g_deg", "elevator_per_g_ci95_deg",
        "stick_force_per_g_lbf", "stick_force_per_g_ci95_lbf", "n_points", "nz_range"}
    for kind in ("stick_fixed", "stick_free"):
        assert set(block["maneuver_point"][kind]) >= {"pct_mac", "ci95_pct_mac", "station_in",
                                                      "identifiable", "method"}
    # A trim point is never a maneuvering point: no time window is in both tables.
    trims = analysis.points.dropna(subset=["t_start_s"])
    for p in block["points"]:
        if p["t_start_s"] is None:
            continue
        same = trims.loc[trims["flight"] == p["flight"]]
        assert not ((same["t_start_s"] < p["t_end_s"]) & (same["t_end_s"] > p["t_start_s"])).any()


def test_no_maneuvering_point_gives_null(profile):
    from trimlog.pipeline import chain
    from trimlog.views.json_export import analysis_to_dict

    flights = chain.load_flight_bytes(
        b"ias_kt,pressure_alt_ft,elevator_deg,stick_force_lbf,weight_lb,cg_in\n"
        b"100,5000,2.0,0,1550,68\n90,5000,3.0,2,1550,68\n80,5000,4.5,4,1550,68\n",
        "typed.csv", profile)
    assert analysis_to_dict(chain.analyze(flights, profile))["maneuvering"] is None
