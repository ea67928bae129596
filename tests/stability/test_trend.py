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


def test_closed_form_2x2_is_numpys_least_squares():
    # Synthetic data of known truth: the closed form against numpy's lstsq and inverse.
    from trimlog.stability.trend import _solve_2x2

    rng = np.random.default_rng(7)
    for _ in range(200):
        x = rng.normal(size=(30, 2)) * rng.uniform(0.01, 10.0, size=2)
        y = x @ rng.normal(size=2) + rng.normal(scale=0.1, size=30)
        z = np.column_stack([np.ones(30), x, y])
        total = z.T @ z
        b, c, rss, (v00, v11, v01) = _solve_2x2(total)
        coef, res, *_ = np.linalg.lstsq(x, y, rcond=None)
        inv = np.linalg.inv(x.T @ x)
        assert np.allclose([b, c], coef, rtol=1e-9, atol=1e-12)
        assert rss == pytest.approx(float(res[0]), rel=1e-7)
        assert np.allclose([v00, v11, v01], [inv[0, 0], inv[1, 1], inv[0, 1]], rtol=1e-9)


def test_closed_form_2x2_refuses_collinear_columns():
    from trimlog.stability.trend import _solve_2x2

    x = np.linspace(0.2, 1.0, 20)
    z = np.column_stack([np.ones(20), x, 0.3 * x, 2.0 * x])  # h*CL a multiple of CL
    assert _solve_2x2(z.T @ z) is None


@pytest.mark.parametrize("cgs", [(15.0, 22.0, 29.0), tuple(12.0 + 0.8 * k for k in range(20)),
                                 (20.0, 20.0)])
def test_headline_neutral_point_is_pooled_fits(cgs):
    # Synthetic points of known truth: the plan's light call gives pooled_fit's number,
    # interval and reason, with up to 20 flights (intercepts removed as blocks) and none.
    from trimlog.stability.neutral_points import headline_neutral_point

    points = make_points(Truth(), cgs_pct_mac=cgs, sigma_elev_deg=0.15, sigma_force_lbf=0.5,
                         seed=3)
    for kind in ("stick_fixed", "stick_free"):
        assert headline_neutral_point(points, kind) == pooled_fit(points, kind).neutral_point


def test_the_light_core_gives_the_dense_fits_independent_neutral_point():
    # Synthetic points of known truth, 20 flights: the intercepts removed as groups give the
    # ordinary pooled model's hn and interval (to rounding) and its reason when there is none.
    from trimlog.stability import neutral_points as npm

    for cgs in (tuple(12.0 + 0.8 * k for k in range(20)), (20.0,) * 20):
        points = npm.included_points(make_points(Truth(), cgs_pct_mac=cgs, sigma_elev_deg=0.15,
                                                 sigma_force_lbf=0.5, seed=5))
        for kind in ("stick_fixed", "stick_free"):
            light = npm._headline(points, kind, None, None, None, light=True).core.neutral_point
            dense = pooled_fit(points, kind).independent_neutral_point
            assert light.identifiable == dense.identifiable
            assert light.reason == dense.reason
            if dense.identifiable:
                assert light.pct_mac == pytest.approx(dense.pct_mac, rel=1e-9)
                assert light.ci95_pct_mac == pytest.approx(dense.ci95_pct_mac, rel=1e-9)
