from pathlib import Path

import pytest
from pg_server import make_location

from trimlog.errors import InputFileError, StoreError
from trimlog.history import service as history
from trimlog.history.store import open_store

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
PROFILE = SAMPLES / "tinkerfinch_tf2.toml"
LOGS = sorted(SAMPLES.glob("flight*.csv"))


def _import_all(store, logs=LOGS):
    text = PROFILE.read_text()
    return [history.import_log(store, log, profile_text=text, profile_source=str(PROFILE))
            for log in logs]


@pytest.fixture(scope="module")
def filled(engine, tmp_path_factory, request):
    db = make_location(engine, tmp_path_factory.mktemp("hist"), request)
    with open_store(db) as store:
        outcomes = _import_all(store)
    return db, outcomes


def test_import_stores_each_file_once(filled):
    db, outcomes = filled
    assert all(o.created for o in outcomes)
    with open_store(db) as store:
        again = history.import_log(store, LOGS[1], profile_text=PROFILE.read_text(),
                                   profile_source=str(PROFILE))
        assert not again.created and "already stored" in again.message
        assert len(store.flights(store.aircraft_list()[0].id)) == len(LOGS)


def test_loading_sheets_travel_with_the_flight(filled):
    db, _ = filled
    with open_store(db) as store:
        listing = history.flight_listing(store)
    by_file = {f["filename"]: f for f in listing}
    assert by_file["flight5.csv"]["stab_setting"] == "shim 0.6 deg LE down"
    assert all(f["cg_pct_mac"] is not None for f in listing)
    # the CG of the flight from its sheet and fuel burn, not a default
    assert by_file["flight4.csv"]["cg_pct_mac"] > by_file["flight2.csv"]["cg_pct_mac"] + 5


def test_trend_ends_at_the_full_history_analysis(filled):
    db, _ = filled
    with open_store(db) as store:
        trend = history.trend(store)
        full = history.analyze_history(store)
    last = trend.steps[-1].stick_fixed
    # the trend table accumulates the ordinary pooled model ...
    independent = full.primary.stability.stick_fixed.independent_neutral_point
    assert last.identifiable and independent.identifiable
    assert last.pct_mac == pytest.approx(independent.pct_mac, abs=1e-9)
    assert last.ci95_pct_mac == pytest.approx(independent.ci95_pct_mac, abs=1e-9)
    assert not trend.steps[0].stick_fixed.identifiable  # one CG cannot give a neutral point
    # ... and the plan uses the same headline and the same rule as the full analysis
    plan, analysed = trend.next_step, full.primary.stability.next_step
    assert plan.limited_by == analysed.limited_by
    assert plan.max_cg_pct_mac == pytest.approx(analysed.max_cg_pct_mac, abs=1e-9)
    assert plan.most_aft_flown_pct_mac == pytest.approx(analysed.most_aft_flown_pct_mac)


def test_trend_json_contract(filled):
    db, _ = filled
    with open_store(db) as store:
        data = history.trend(store).to_dict()
    assert set(data) >= {"flights", "trend", "next_step"}
    for f in data["flights"]:
        assert set(f) >= {"id", "label", "sha256", "cg_pct_mac", "n_points"}
    for step in data["trend"]:
        assert set(step) >= {"n_flights", "stick_fixed_pct_mac", "ci95_pct_mac"}
        if step["stick_fixed_pct_mac"] is None:
            assert step["ci95_pct_mac"] is None
    assert set(data["next_step"]) >= {"max_cg_pct_mac", "max_cg_station_in",
                                      "min_static_margin_pct_mac", "reason"}


def test_exclusions_are_kept_and_change_the_result(new_location):
    with open_store(new_location()) as store:
        outcomes = _import_all(store)
        before = history.trend(store).steps[-1].stick_fixed.pct_mac
        store.set_point_included(outcomes[3].flight_id, 2, False)
        after_trend = history.trend(store)
        after = history.analyze_history(store)
    assert after_trend.steps[-1].stick_fixed.pct_mac != pytest.approx(before, abs=1e-6)
    excluded = after.points.loc[~after.points["included"]]
    assert len(excluded) == 1 and int(excluded["point"].iloc[0]) == 2


def test_export_and_restore_reproduce_the_neutral_point_exactly(filled, new_location, tmp_path):
    db, _ = filled
    with open_store(db) as store:
        original = history.trend(store).to_dict()["trend"]
        store.export(tmp_path / "export")
    with open_store(new_location()) as store:
        store.import_export(tmp_path / "export")
        restored = history.trend(store).to_dict()["trend"]
    assert restored == original


def test_empty_history_and_unknown_aircraft_are_clear(new_location):
    with open_store(new_location()) as store:
        with pytest.raises(StoreError, match="history is empty"):
            history.trend(store)
        _import_all(store, LOGS[:1])
        with pytest.raises(StoreError, match="no aircraft named 'nope'"):
            history.trend(store, "nope")


def test_a_file_with_several_flights_is_refused(new_location):
    text = PROFILE.read_text()
    raw = (b"flight,ias_kt,pressure_alt_ft,ELEV_POS,weight_lb,cg_in\n"
           b"a,100,5000,3,1500,68\na,90,5000,4,1500,68\nb,100,5000,3,1500,70\n")
    with open_store(new_location()) as store:
        with pytest.raises(InputFileError, match="one flight per file"):
            history.import_flight(store, raw, "two.csv", text)


def test_a_zero_margin_or_step_is_a_choice_not_unset(tmp_path):
    # a climb with no stabilized point: the plan says why, with the policy as given
    rows = ["time_s,ias_kt,palt_ft,oat_c,elevator_deg,stick_force_lbf,weight_lb,cg_in"] + [
        f"{t},{80 + t},{4500 + 30 * t},10,{-2 + 0.1 * t},0.5,1500,70" for t in range(60)]
    log = tmp_path / "climb.csv"
    log.write_text("\n".join(rows) + "\n")
    with open_store(tmp_path / "h.sqlite") as store:
        history.import_log(store, log, profile_text=PROFILE.read_text(),
                           profile_source=str(PROFILE))
        plan = history.trend(store, min_margin_pct_mac=0.0, max_step_pct_mac=0.0).next_step
        default = history.trend(store).next_step
    assert plan.max_cg_pct_mac is None and plan.limited_by == "none"
    assert plan.min_static_margin_pct_mac == 0.0 and plan.step_max_pct_mac == 0.0
    assert default.min_static_margin_pct_mac > 0.0  # the profile's policy when not given
