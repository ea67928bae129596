import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from tests.synthetic_flights import Truth, make_points
from trimlog.input.profile import parse_profile
from trimlog.stability.neutral_points import pooled_fit
from trimlog.stability.trend import neutral_point_sequence, plan_next_step

PROFILE = parse_profile(
    """
    [aircraft]
    name = "synthetic"
    wing_area = "118 ft^2"
    mac = "51 in"
    lemac = "60 in"
    [tail]
    tau = 0.5
    stabilizer_attach_spacing = "14 in"
    elevator_up_stop = "25 deg"
    elevator_down_stop = "18 deg"
    [limits]
    cg_forward = "67 in"
    cg_aft = "79 in"
    max_weight = "1750 lb"
    min_static_margin = 5.0
    cg_step_max = 2.0
    [cruise]
    cas = "120 kt"
    """,
    "synthetic.toml",
)


def _points(seed=1, cgs=(15.0, 20.0, 25.0, 29.0), **kw):
    # synthetic flights of known truth (hn = 40 %MAC, hn' = 36 %MAC)
    return make_points(Truth(), cgs_pct_mac=cgs, sigma_elev_deg=0.15, sigma_force_lbf=0.5,
                       seed=seed, **kw)


def test_last_step_equals_the_pooled_fit_exactly():
    points = _points(settings={3: ("shim", -0.5)})
    steps = neutral_point_sequence(points, ["F1", "F2", "F3", "F4"], PROFILE)
    for kind, step_np in (("stick_fixed", steps[-1].stick_fixed),
                          ("stick_free", steps[-1].stick_free)):
        full = pooled_fit(points, kind, lemac_in=PROFILE.lemac_in, mac_in=PROFILE.mac_in)
        # the trend accumulates the independent-points model (the plan refits the flight-level one)
        full_np = full.independent_neutral_point
        assert step_np.identifiable and full_np.identifiable
        assert step_np.pct_mac == pytest.approx(full_np.pct_mac, abs=1e-9)
        assert step_np.ci95_pct_mac == pytest.approx(full_np.ci95_pct_mac, abs=1e-9)
        assert step_np.station_in == pytest.approx(full_np.station_in, abs=1e-9)


def test_every_prefix_equals_a_fresh_fit_of_that_prefix():
    points = _points(seed=4)
    order = ["F1", "F2", "F3", "F4"]
    steps = neutral_point_sequence(points, order, PROFILE)
    for k in range(1, 5):
        prefix = points.loc[points["flight"].isin(order[:k])]
        fresh = pooled_fit(prefix, "stick_fixed").independent_neutral_point
        assert steps[k - 1].stick_fixed.identifiable == fresh.identifiable
        if fresh.identifiable:
            assert steps[k - 1].stick_fixed.pct_mac == pytest.approx(fresh.pct_mac, abs=1e-9)


def test_one_flight_is_not_identifiable_and_says_why():
    steps = neutral_point_sequence(_points(cgs=(20.0,)), ["F1"], PROFILE)
    assert not steps[0].stick_fixed.identifiable
    assert steps[0].stick_fixed.pct_mac is None
    assert "CG" in steps[0].stick_fixed.reason


def test_excluded_points_are_left_out():
    points = _points(seed=2)
    points.loc[0, "elevator_deg"] += 5.0  # a gross error...
    points.loc[0, "included"] = False  # ...that the user excluded
    clean = _points(seed=2).drop(index=0)
    a = neutral_point_sequence(points, ["F1", "F2", "F3", "F4"], PROFILE)[-1].stick_fixed
    b = pooled_fit(clean, "stick_fixed").independent_neutral_point
    assert a.pct_mac == pytest.approx(b.pct_mac, abs=1e-9)


def test_interval_narrows_as_the_programme_moves_aft():
    # synthetic programme of known truth, one flight per CG step aft
    cgs = (14.0, 17.0, 20.0, 23.0, 26.0, 29.0)
    widths = []
    for seed in range(20):
        points = _points(seed=seed, cgs=cgs)
        steps = neutral_point_sequence(points, [f"F{i + 1}" for i in range(len(cgs))], PROFILE)
        w = [np.diff(s.stick_fixed.ci95_pct_mac)[0] if s.stick_fixed.identifiable else np.inf
             for s in steps]
        widths.append(w)
    median = np.median(np.array(widths), axis=0)
    assert np.all(np.diff(median[1:]) < 0), median


@settings(max_examples=60)
@given(seed=st.integers(0, 10_000), n_flights=st.integers(1, 6),
       min_sm=st.floats(2.0, 15.0), step=st.floats(0.5, 5.0))
def test_planner_never_proposes_a_cg_below_the_margin_policy(seed, n_flights, min_sm, step):
    # synthetic flights of known truth; the property is the planner's own guarantee
    cgs = tuple(14.0 + 3.0 * i for i in range(n_flights))
    points = _points(seed=seed, cgs=cgs)
    steps = neutral_point_sequence(points, [f"F{i + 1}" for i in range(n_flights)], PROFILE)
    latest = steps[-1].stick_fixed
    plan = plan_next_step(latest, list(cgs), PROFILE, min_margin_pct_mac=min_sm,
                          step_max_pct_mac=step, aft_gradient_clearly_stable=True)
    if plan.max_cg_pct_mac is None:
        return
    assert plan.max_cg_pct_mac <= max(cgs) + step + 1e-9
    assert plan.max_cg_pct_mac <= PROFILE.cg_aft_pct_mac + 1e-9
    if latest.identifiable:
        assert latest.ci95_pct_mac[0] - plan.max_cg_pct_mac >= min_sm - 1e-9
    else:
        assert plan.limited_by in ("policy_step", "aft_limit")
    assert plan.max_cg_station_in == pytest.approx(PROFILE.station(plan.max_cg_pct_mac))


def test_planner_refuses_to_step_aft_without_evidence():
    steps = neutral_point_sequence(_points(cgs=(20.0,)), ["F1"], PROFILE)
    plan = plan_next_step(steps[0].stick_fixed, [20.0], PROFILE,
                          aft_gradient_clearly_stable=False)
    assert plan.max_cg_pct_mac is None and "do not move aft" in plan.reason


def test_planner_is_limited_by_margin_near_the_neutral_point():
    points = _points(cgs=(15.0, 22.0, 30.0, 33.0))
    steps = neutral_point_sequence(points, ["F1", "F2", "F3", "F4"], PROFILE)
    plan = plan_next_step(steps[-1].stick_fixed, [15.0, 22.0, 30.0, 33.0], PROFILE,
                          min_margin_pct_mac=5.0, step_max_pct_mac=5.0)
    # hn = 40 %MAC (truth): 33 + 5 = 38 would leave 2 %MAC; the margin must limit it
    assert plan.limited_by in ("stick_fixed_np", "aft_limit")
    assert plan.max_cg_pct_mac is None or plan.max_cg_pct_mac <= 35.5
