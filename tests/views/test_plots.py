"""Figures of trimlog.views.plots, drawn headless on the demo programme in sample_logs/.

The demo data are synthetic flights of known truth (sample_logs/README.md);
these tests check that each figure draws what the analysis found, with units
on its axes, not the statistics themselves (tests/test_stability.py does).
"""

from __future__ import annotations

from types import SimpleNamespace

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pandas as pd
import pytest
from matplotlib.collections import PolyCollection
from matplotlib.container import ErrorbarContainer
from matplotlib.figure import Figure

from trimlog.errors import TrimlogError
from trimlog.pipeline import chain as analysis
from trimlog.stability.margins import predict_elevator
from trimlog.views import plots
from trimlog.views.json_export import analysis_to_dict


@pytest.fixture(scope="module")
def demo(demo_profile, demo_flights, demo_analysis):
    return demo_profile, list(demo_flights), demo_analysis  # once per session (conftest.py)


@pytest.fixture(scope="module")
def full(demo):
    return demo[2]


@pytest.fixture(scope="module")
def one_flight(demo):
    profile, flights, _ = demo
    return analysis.analyze([f for f in flights if f.flight == "flight1_points"], profile)


def _labels(ax):
    return [t.get_text() for t in ax.get_legend().get_texts()]


def _has_units(ax):
    return "[" in ax.get_xlabel() and "]" in ax.get_xlabel() and "[" in ax.get_ylabel()


def _texts(ax):
    return " ".join(t.get_text() for t in ax.texts)


def test_styles_differ_in_colour_and_marker():
    styles = plots.flight_styles([f"f{i}" for i in range(8)])
    assert len({s["color"] for s in styles.values()}) == 8
    assert len({s["marker"] for s in styles.values()}) == 8
    # Okabe-Ito yellow is kept for the eighth flight: faint on white paper
    assert styles["f7"]["color"] == "#F0E442"
    assert plots.flight_styles(["b", "a", "b"]) == plots.flight_styles(["b", "a"])


def test_trim_curves_points_lines_and_bands(full):
    ax = plots.trim_curves(full)
    assert isinstance(ax.figure, Figure) and _has_units(ax)
    assert "deg" in ax.get_ylabel()
    labels = _labels(ax)
    for g in full.primary.stability.gradients:
        assert any(label.startswith(g.flight + " (CG") for label in labels)
    bands = [c for c in ax.collections if isinstance(c, PolyCollection)]
    assert len(bands) == len(full.primary.stability.gradients)
    # The drawn line of flight 4 is the package's prediction, not a local re-fit.
    fit = full.primary.stability.stick_fixed
    g4 = next(g for g in full.primary.stability.gradients if g.flight == "flight4")
    cl_lo = float(full.points.loc[full.points["flight"] == "flight4", "cl"].min())
    expected = predict_elevator(fit, cl_lo, g4.h, "as rigged").elevator_deg
    starts = [(line.get_xdata()[0], line.get_ydata()[0]) for line in ax.lines
              if line.get_linestyle() != "None" and len(line.get_xdata()) == plots.LINE_POINTS]
    assert any(x == pytest.approx(cl_lo) and y == pytest.approx(expected) for x, y in starts)


def test_trim_curves_show_excluded_points_hollow(demo):
    profile, flights, _ = demo
    result = analysis.analyze(flights, profile, exclusions=[("flight2", 3)])
    ax = plots.trim_curves(result)
    hollow = [line for line in ax.lines if line.get_markerfacecolor() == "none"]
    assert len(hollow) == 1 and len(hollow[0].get_xdata()) == 1
    row = result.points.loc[(result.points["flight"] == "flight2") & (result.points["point"] == 3)]
    assert hollow[0].get_xdata()[0] == pytest.approx(float(row["cl"].iloc[0]))
    assert "excluded point (not fitted)" in _labels(ax)


def test_gradient_vs_cg_line_reaches_zero_at_the_two_stage_neutral_point(full):
    ax = plots.gradient_vs_cg(full)
    assert _has_units(ax) and "%MAC" in ax.get_xlabel()
    bars = [c for c in ax.containers if isinstance(c, ErrorbarContainer)]
    assert len(bars) == len(full.primary.stability.gradients) + 2
    fit_line = next(line for line in ax.lines if line.get_label() == "two-stage weighted fit")
    x, y = np.asarray(fit_line.get_xdata()), np.asarray(fit_line.get_ydata())
    assert np.all(np.diff(y) > 0)  # gradient rises to zero as the CG moves aft
    crossing = float(np.interp(0.0, y, x))
    two_stage = full.primary.stability.stick_fixed_two_stage.neutral_point
    assert crossing == pytest.approx(two_stage.pct_mac, abs=1e-6)
    d = analysis_to_dict(full)["neutral_point"]["stick_fixed"]
    lo, hi = d["ci95_pct_mac"]
    assert (f"neutral point, pooled: {d['pct_mac']:.1f} %MAC [{lo:.1f}, {hi:.1f}]"
            in _labels(ax))
    verticals = {round(line.get_xdata()[0], 6) for line in ax.lines
                 if len(set(line.get_xdata())) == 1}
    assert round(full.profile.cg_forward_pct_mac, 6) in verticals
    assert round(full.profile.cg_aft_pct_mac, 6) in verticals
    assert "not identifiable" not in _texts(ax)


def test_gradient_vs_cg_states_not_identifiable(one_flight):
    ax = plots.gradient_vs_cg(one_flight)
    text = _texts(ax)
    assert "Neutral point not identifiable" in text
    assert "0.2 %MAC" in text  # the reason: the CG spread flown
    assert not any("neutral point" in label for label in _labels(ax))


def test_stick_force_per_q(full):
    ax = plots.stick_force_per_q(full)
    assert _has_units(ax) and "ft$^2$" in ax.get_ylabel()
    # one clean unit: Fs/q is lbf over lbf/ft^2, i.e. ft^2, written once
    assert ax.get_ylabel() == "$F_s/q$ [ft$^2$], pull +"
    bands = [c for c in ax.collections if isinstance(c, PolyCollection)]
    assert len(bands) == 5
    # stick-free stable forward of the neutral point: every fitted line rises with CL
    fitted = [line for line in ax.lines if len(line.get_xdata()) == plots.LINE_POINTS]
    assert len(fitted) == 5
    assert all(line.get_ydata()[-1] > line.get_ydata()[0] for line in fitted)


def test_stick_force_vs_speed_marks_trim_speed(full):
    ax = plots.stick_force_vs_speed(full)
    assert _has_units(ax) and "EAS [kt]" in ax.get_xlabel() and "lbf" in ax.get_ylabel()
    assert "IAS and EAS" in ax.get_xlabel()  # the speed is named against the tables'
    big = plots.for_screen(ax.figure).axes[0]
    assert all(t.get_fontsize() == plots.SCREEN_SIZES["legend"]
               for t in big.get_legend().get_texts())
    assert big.xaxis.label.get_fontsize() == plots.SCREEN_SIZES["label"] > plots.LABEL_SIZE
    marks = [(line.get_xdata()[0], line.get_ydata()[0]) for line in ax.lines
             if len(line.get_xdata()) == 1 and line.get_markerfacecolor() == "white"]
    for g in full.primary.stability.gradients:
        assert (pytest.approx(g.trim_eas_kt), 0.0) in marks


def _spans(ax) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    """(start, end) of the shaded and of the hatched windows of one log axis [s]."""
    shaded, hatched = [], []
    for coll in ax.collections:
        for path in coll.get_paths():
            x = path.vertices[:, 0]
            (hatched if coll.get_hatch() else shaded).append((float(x.min()), float(x.max())))
    return sorted(shaded), sorted(hatched)


def _expected_spans(points) -> tuple[list[tuple[float, float]], list[tuple[float, float]]]:
    def of(rows):
        return sorted((float(a), float(b)) for a, b in zip(rows["t_start_s"], rows["t_end_s"],
                                                             strict=True))
    used = points["included"].astype(bool)
    return of(points.loc[used]), of(points.loc[~used])


def test_log_overview_shades_windows(full):
    f3 = next(f for f in full.flights if f.flight == "flight3")
    mine = full.points.loc[full.points["flight"] == "flight3"].copy()
    mine.loc[mine["point"] == 2, "included"] = False
    axes = plots.log_overview(f3, points=mine)
    assert len(axes) == 4
    assert all("[" in ax.get_ylabel() for ax in axes)
    assert axes[-1].get_xlabel() == "time [s]"
    shaded, hatched = _expected_spans(mine)
    assert len(hatched) == 1
    for ax in axes:
        assert len(ax.lines) == 1 and len(ax.lines[0].get_xdata()) <= plots.LOG_VERTICES
        got_shaded, got_hatched = _spans(ax)
        assert np.allclose(got_shaded, shaded) and np.allclose(got_hatched, hatched)
    numbers = {t.get_text() for t in axes[0].texts}
    assert numbers == {str(p) for p in mine["point"]}


def test_min_max_envelope_keeps_spikes_and_gaps():
    # synthetic signal: a slow sine with one single-sample spike and a stretch of NaN
    t = np.arange(100_000) * 0.02
    y = np.sin(t / 30.0)
    y[31_234] = 9.0
    y[50_000:52_000] = np.nan
    tt, yy = plots.min_max_envelope(t, y, max_points=1000)
    assert len(tt) <= 1000
    assert np.nanmax(yy) == 9.0 and np.nanmin(yy) == pytest.approx(np.nanmin(y), abs=1e-6)
    assert np.all(np.diff(tt) > 0)
    index = np.rint(tt / 0.02).astype(int)
    finite = np.isfinite(yy)
    assert np.array_equal(yy[finite], y[index[finite]])  # only samples of the log, none made up
    assert np.isnan(yy[(tt > 1000.0) & (tt < 1040.0)]).any()  # the line still breaks there
    short_t, short_y = plots.min_max_envelope(t[:500], y[:500], max_points=1000)
    assert np.array_equal(short_t, t[:500]) and np.array_equal(short_y, y[:500])


def test_a_one_hour_log_draws_a_bounded_number_of_vertices():
    # synthetic one-hour 50 Hz log (a stand-in for FlightData: log_overview reads its
    # samples, points, flight and source) with windows known by construction
    rng = np.random.default_rng(5)
    t = np.arange(180_000) * 0.02
    samples = pd.DataFrame({
        "time_s": t, "ias_kt": 100.0 + rng.normal(0.0, 0.5, t.size),
        "elevator_deg": rng.normal(-2.0, 0.2, t.size),
        "stick_force_lbf": rng.normal(0.0, 0.3, t.size), "nz_g": rng.normal(1.0, 0.02, t.size),
    })
    samples.loc[123_457, "nz_g"] = 2.5  # one spike, to be seen
    starts = np.arange(60.0, 3500.0, 57.0)
    points = pd.DataFrame({"point": np.arange(1, starts.size + 1), "t_start_s": starts,
                           "t_end_s": starts + 20.0, "included": np.arange(starts.size) % 4 != 0})
    flight = SimpleNamespace(flight="long", source="long.csv", samples=samples, points=points)
    axes = plots.log_overview(flight)
    shaded, hatched = _expected_spans(points)
    for ax, column in zip(axes, ("ias_kt", "elevator_deg", "stick_force_lbf", "nz_g"),
                          strict=True):
        (line,) = ax.lines
        assert len(line.get_xdata()) <= plots.LOG_VERTICES
        drawn = np.asarray(line.get_ydata())
        assert drawn.max() == samples[column].max() and drawn.min() == samples[column].min()
        got_shaded, got_hatched = _spans(ax)
        assert np.allclose(got_shaded, shaded) and np.allclose(got_hatched, hatched)
    assert len(axes[0].texts) == len(points)


def test_log_overview_refuses_a_point_table(full):
    table = next(f for f in full.flights if f.samples is None)
    with pytest.raises(TrimlogError, match="table of points"):
        plots.log_overview(table)
    with pytest.raises(TrimlogError, match="expected 4 Axes"):
        plots.log_overview(full.flights[1], axes=[Figure().add_subplot()])


def _trend_records():
    # synthetic records in the shape the history module produces (no real flights)
    return [
        {"n_flights": 1, "label": "one", "stick_fixed_pct_mac": None, "ci95_pct_mac": None,
         "stick_free_pct_mac": None, "stick_free_ci95_pct_mac": None, "cg_pct_mac": 16.0},
        {"n_flights": 2, "label": "two", "stick_fixed_pct_mac": 39.5,
         "ci95_pct_mac": [36.0, 44.0], "stick_free_pct_mac": None,
         "stick_free_ci95_pct_mac": None, "cg_pct_mac": 22.0},
        {"n_flights": 3, "label": "three", "stick_fixed_pct_mac": 38.2,
         "ci95_pct_mac": [37.5, 39.0], "stick_free_pct_mac": 34.1,
         "stick_free_ci95_pct_mac": [33.0, 35.3], "cg_pct_mac": 27.0},
    ]


def test_neutral_point_trend():
    ax = plots.neutral_point_trend(_trend_records())
    assert "%MAC" in ax.get_ylabel() and "[" in ax.get_xlabel()
    bars = [c for c in ax.containers if isinstance(c, ErrorbarContainer)]
    assert len(bars) == 2
    fixed = bars[0].lines[0]
    assert list(fixed.get_ydata()) == [39.5, 38.2]
    seg = bars[0].lines[2][0].get_segments()
    assert seg[0][0][1] == pytest.approx(36.0) and seg[0][1][1] == pytest.approx(44.0)
    assert [t.get_text() for t in ax.get_xticklabels()] == [
        "1: one\nnot identifiable:\nfixed, free", "2: two\nnot identifiable:\nfree", "3: three"]
    cg = next(line for line in ax.lines if line.get_label() == "CG of the flight added")
    assert list(cg.get_ydata()) == [16.0, 22.0, 27.0]


def test_neutral_point_trend_shows_the_maneuver_points():
    records = _trend_records()
    records[2]["maneuver_point"] = {
        "stick_fixed": {"pct_mac": 42.0, "ci95_pct_mac": [40.0, 45.0], "identifiable": True},
        "stick_free": {"pct_mac": None, "ci95_pct_mac": None, "identifiable": False}}
    ax = plots.neutral_point_trend(records)
    bars = [c for c in ax.containers if isinstance(c, ErrorbarContainer)]
    assert len(bars) == 3
    assert list(bars[2].lines[0].get_ydata()) == [42.0]
    assert "stick-fixed maneuver point, 95 % interval" in ax.get_legend_handles_labels()[1]


def test_neutral_point_trend_names_a_missing_key():
    records = _trend_records()
    del records[1]["cg_pct_mac"]
    with pytest.raises(TrimlogError, match="step 2 lacks 'cg_pct_mac'"):
        plots.neutral_point_trend(records)


def test_figures_draw_on_a_given_axes(full):
    fig = Figure()
    ax = fig.add_subplot()
    assert plots.stick_force_vs_speed(full, ax=ax) is ax


def test_neutral_point_trend_shows_limits_and_the_next_cg():
    step = {"max_cg_pct_mac": 29.4, "limited_by": "stick_free_np",
            "most_aft_flown_pct_mac": 27.0, "step_max_pct_mac": 2.0}
    ax = plots.neutral_point_trend(_trend_records(), next_step=step, aft_limit_pct_mac=31.1,
                                   maneuver_point_pct_mac=38.2)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert "aft CG limit 31.1 %MAC" in labels
    assert "next flight: CG at most 29.4 %MAC (stick-free neutral point)" in labels
    assert "policy step: 2 %MAC beyond the most aft CG flown" in labels
    assert "stick-fixed maneuver point 38.2 %MAC" in labels
    levels = {round(float(line.get_ydata()[0]), 1) for line in ax.lines
              if len(set(line.get_ydata())) == 1 and len(line.get_ydata()) == 2}
    assert {31.1, 29.4, 29.0, 38.2} <= levels
    none = plots.neutral_point_trend(_trend_records(), next_step=dict(step, max_cg_pct_mac=None))
    assert any("no step aft" in t.get_text() for t in none.texts)
