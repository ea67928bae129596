"""The whole chain on the demo programme, against the demo's known truth.

The demo flights are invented, generated from a physical model with known
truth (trimlog.demo.model.DEMO_TRUTH); comparing with it checks the chain end to
end.  Published checks of each step live in the module tests.
"""

import json

import pandas as pd
import pytest

from trimlog.demo.model import DEMO_TRUTH
from trimlog.errors import InputFileError
from trimlog.input.loading_sheet import read_loading_sheet
from trimlog.pipeline import chain as analysis
from trimlog.views.json_export import analysis_to_dict


@pytest.fixture(scope="module")
def flights(demo_flights):
    return list(demo_flights)  # read once for the session (tests/conftest.py)


@pytest.fixture(scope="module")
def result(demo_analysis):
    return demo_analysis


def _inside(value, interval):
    return interval[0] <= value <= interval[1]


def test_neutral_points_cover_the_demo_truth(result):
    fixed = result.primary.stability.stick_fixed.neutral_point
    free = result.primary.stability.stick_free.neutral_point
    assert _inside(100 * DEMO_TRUTH.neutral_point_fixed, fixed.ci95_pct_mac)
    assert _inside(100 * DEMO_TRUTH.neutral_point_free, free.ci95_pct_mac)


def test_pooled_and_two_stage_agree_within_their_intervals(result):
    pooled = result.primary.stability.stick_fixed.neutral_point
    staged = result.primary.stability.stick_fixed_two_stage.neutral_point
    assert pooled.identifiable and staged.identifiable
    assert pooled.ci95_pct_mac[0] <= staged.ci95_pct_mac[1]
    assert staged.ci95_pct_mac[0] <= pooled.ci95_pct_mac[1]


def test_tau_is_calibrated_from_the_shim_flight(result):
    rec = result.primary.incidence
    assert rec.tau_source == "flight-calibrated"
    assert _inside(DEMO_TRUTH.tau, result.primary.tau_calibration.ci95)


def test_after_the_shim_the_recommendation_is_the_residual(result):
    rec = result.primary.incidence
    after_shim = DEMO_TRUTH.flights[-1].stab_incidence_deg
    truth_elevator = DEMO_TRUTH.cruise_elevator_deg(after_shim)
    truth_change = DEMO_TRUTH.incidence_change_deg(after_shim)
    assert _inside(truth_elevator, rec.elevator_at_cruise_ci95_deg)
    assert _inside(truth_change, rec.change_ci95_deg)
    # the residual is smaller than the whole correction from the original rigging
    assert abs(rec.change_deg) < abs(DEMO_TRUTH.incidence_change_deg(
        DEMO_TRUTH.rigged_incidence_deg))
    assert rec.shim_location.startswith("rear")  # trailing edge up in cruise: leading edge down
    assert rec.new_incidence_deg == pytest.approx(after_shim + rec.shim_stock_change_deg)


def test_every_flight_is_stable_with_speed(result):
    for g in result.primary.stability.gradients:
        assert g.delev_dcl_deg < 0
        assert g.stick_force_verdict.startswith("stable")


def test_json_has_no_nan_and_names_the_assumptions(result):
    text = json.dumps(analysis_to_dict(result), allow_nan=False)
    data = json.loads(text)
    assert data["configuration"] == "clean"
    assert data["cautions"] and any("approval" in c for c in data["cautions"])
    assert {f["kind"] for f in data["flights"]} == {"point_table", "time_series"}


def test_configurations_are_never_pooled(flights, demo_profile):
    flapped = []
    for f in flights[:2]:
        points = f.points.copy()
        points["flap_deg"] = 20.0
        points["flight"] = f.flight + "_flaps"
        flapped.append(analysis.FlightData(f.flight + "_flaps", f.source + " (flaps)", f.sha256,
                                           f.log, points, f.loading))
    result = analysis.analyze([*flights, *flapped], demo_profile)
    assert result.primary.config == "clean"
    assert [o.config for o in result.others] == ["flaps 20 deg"]
    clean_flights = {g.flight for g in result.primary.stability.gradients}
    assert not any(name.endswith("_flaps") for name in clean_flights)
    separate = [f for f in result.findings if f.code == "pipeline.configurations_separate"]
    assert len(separate) == 1 and separate[0].values["primary"] == "clean"
    # per-configuration findings carry their configuration, shown as a prefix when several
    assert any(f.subject is not None and f.subject.config == "flaps 20 deg"
               for f in result.findings)
    assert any(w.startswith("[flaps 20 deg] ") for w in result.warnings)
    assert analysis_to_dict(result)["other_configurations"][0]["configuration"] == "flaps 20 deg"


def test_warnings_are_the_findings_in_words(result):
    assert result.findings, "the demo programme has findings (reading notes at least)"
    assert result.warnings == tuple(dict.fromkeys(f.line() for f in result.findings))
    assert all(f.code and f.severity for f in result.findings)


def test_a_margin_that_may_be_short_is_a_warning_with_its_numbers(result):
    # the demo's aft flights sit close to the stick-free neutral point (invented truth)
    short = [f for f in result.findings if f.code == "stability.margin_below_minimum"]
    assert short and all(f.severity == "warning" for f in short)
    assert all(f.values["lower95_pct_mac"] < f.values["min_pct_mac"] for f in short)
    assert {f.values["where"] for f in short} >= {"aft CG limit"}


def test_exclusions_keep_the_point_and_change_the_fit(flights, result, demo_profile):
    excluded = analysis.analyze(flights, demo_profile, exclusions={("flight3", 4)})
    row = excluded.points.loc[(excluded.points["flight"] == "flight3")
                              & (excluded.points["point"] == 4)]
    assert len(row) == 1 and not bool(row["included"].iloc[0])
    assert (excluded.primary.stability.stick_fixed.neutral_point.pct_mac
            != result.primary.stability.stick_fixed.neutral_point.pct_mac)


def test_the_same_flight_twice_is_refused(flights, demo_profile):
    twin = analysis.FlightData(flights[1].flight, "elsewhere/flight2.csv", flights[1].sha256,
                               flights[1].log, flights[1].points, flights[1].loading)
    with pytest.raises(InputFileError, match="given twice"):
        analysis.analyze([flights[1], twin], demo_profile)


def test_no_points_at_all_is_a_clear_error(demo_profile):
    raw = b"time_s,ias_kt,pressure_alt_ft,elevator_deg\n" + b"".join(
        f"{t / 10:.1f},{80 + t % 40},5000,{t % 7}\n".encode() for t in range(600))
    flights = analysis.load_flight_bytes(raw, "wobbly.csv", demo_profile)
    with pytest.raises(InputFileError, match="no stabilized points"):
        analysis.analyze(flights, demo_profile)


def test_constant_fuel_flow_from_the_loading_sheet_burns_fuel_through_the_flight(
        tmp_path, demo_profile, samples_dir):
    log = (samples_dir / "flight2.csv").read_bytes()
    # drop the logged fuel quantity column so the sheet's constant flow is used
    lines = log.decode().splitlines()
    header_at = next(i for i, line in enumerate(lines) if line.startswith("Time"))
    cut = [",".join(line.split(",")[:-1]) if i >= header_at else line
           for i, line in enumerate(lines)]
    sheet_text = (samples_dir / "flight2.loading.toml").read_text() + '\n[fuel]\nflow = "8 gal/h"\n'
    sheet = read_loading_sheet(sheet_text.encode(), name="flight2.loading.toml")
    flight = analysis.load_flight_bytes("\n".join(cut).encode(), "flight2.csv", demo_profile,
                                        loading=sheet)[0]
    fuel = flight.points["fuel_gal"]
    middle = 0.5 * (flight.points["t_start_s"] + flight.points["t_end_s"])
    start = flight.log.data["time_s"].min()
    # takeoff fuel minus 8 gal/h for the time since the first sample (hand-computed)
    assert fuel.tolist() == pytest.approx(
        (sheet.takeoff_fuel_gal - 8.0 * (middle - start) / 3600.0).tolist())
    assert fuel.is_monotonic_decreasing


def test_one_file_stem_rule_names_the_flight_and_finds_its_loading_sheet(tmp_path):
    # the rule (trimlog.files.file_stem): the name up to its first dot, as the
    # dashboard and the history name flights too
    from trimlog.files import file_stem

    log = tmp_path / "flight.3.csv"
    log.write_text("x\n", encoding="utf-8")
    assert analysis.sibling_sheet(log) is None
    (tmp_path / "flight.3.loading.toml").write_text("", encoding="utf-8")
    assert analysis.sibling_sheet(log) is None  # not the rule: the stem is "flight"
    sheet = tmp_path / "flight.loading.toml"
    sheet.write_text("", encoding="utf-8")
    assert analysis.sibling_sheet(log) == sheet
    assert file_stem(log) == file_stem(sheet) == "flight"


def test_a_prepared_programme_gives_the_analysis_of_each_choice(flights, demo_profile):
    # analyze = prepare + analyze_prepared; one preparation serves choice after choice
    # (the dashboard's tick boxes) and is left as it was
    prepared = analysis.prepare(flights, demo_profile)
    trim = prepared.reduced.points.copy()
    turns = prepared.maneuver_points.copy()
    assert len(turns), "the demo has maneuvering points"
    first_turn = (str(turns["flight"].iloc[0]), int(turns["point"].iloc[0]))
    choices = [{}, {"exclusions": [("flight3", 4)]},
               {"exclusions": [("flight3", 4), ("flight2", 1)], "inclusions": []},
               {"maneuver_exclusions": [first_turn]},
               {"exclusions": [("flight4", 2)],
                "exclusion_reasons": {("flight4", 2): "turbulence"}}]
    for chosen in choices:
        expected = analysis_to_dict(analysis.analyze(flights, demo_profile, **chosen))
        got = analysis_to_dict(analysis.analyze_prepared(prepared, **chosen))
        assert json.dumps(got, sort_keys=True, default=str) == json.dumps(
            expected, sort_keys=True, default=str), chosen
    pd.testing.assert_frame_equal(prepared.reduced.points, trim)
    pd.testing.assert_frame_equal(prepared.maneuver_points, turns)
    with pytest.raises(InputFileError, match="no such point"):
        analysis.analyze_prepared(prepared, exclusions=[("flight3", 99)])
