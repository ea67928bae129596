"""Tests of trimlog.views.maneuver_plots and the report's maneuvering section (demo data)."""

from pathlib import Path

import pytest

from trimlog.demo.model import DEMO_TRUTH
from trimlog.pipeline import chain
from trimlog.views import maneuver_plots
from trimlog.views.report import report_blocks

SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"


@pytest.fixture(scope="module")
def analysis():
    profile = chain.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = [f for d in DEMO_TRUTH.flights
               for f in chain.load_flight_file(SAMPLES / d.log_file, profile)]
    return chain.analyze(flights, profile)


def test_stick_force_against_n_draws_every_flight_and_the_minimum(analysis):
    ax = maneuver_plots.stick_force_vs_n(analysis)
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert sum("lbf/g" in t for t in labels) == len(analysis.maneuvering.gradients) + 1
    assert "load factor" in ax.get_xlabel() and "[lbf]" in ax.get_ylabel()


def test_gradients_against_cg_show_both_maneuver_and_both_neutral_points(analysis):
    ax = maneuver_plots.maneuver_gradients_vs_cg(analysis)
    labels = " ".join(t.get_text() for t in ax.get_legend().get_texts())
    for name in ("hm ", "hm' ", "hn ", "hn' "):
        assert name in labels
    assert "%MAC" in ax.get_xlabel()


def test_report_has_the_maneuvering_section(analysis):
    titles = [getattr(b, "title", None) or getattr(b, "text", "") for b in report_blocks(
        analysis, None, "now")]
    joined = " ".join(str(t) for t in titles)
    assert "Maneuvering" in joined and "Stick force against load factor" in joined
    assert "hm - hn" in joined and "23.155" in joined
