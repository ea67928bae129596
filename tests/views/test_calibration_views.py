"""The calibration's views: terminal, report (PDF and HTML), figures."""

from __future__ import annotations

from pathlib import Path

import matplotlib
import pytest
from matplotlib.figure import Figure
from pypdf import PdfReader

from trimlog import cautions
from trimlog.input.profile import load_profile
from trimlog.pipeline.calibration import calibrate_files
from trimlog.views.calibration import calibration_to_dict, render_calibration
from trimlog.views.calibration_report import (
    circle_fits,
    position_error_plot,
    write_calibration_report,
)

matplotlib.use("Agg")
SAMPLES = Path(__file__).resolve().parents[2] / "sample_logs"
CAL = SAMPLES / "calibration" / "calibration_flight.csv"


@pytest.fixture(scope="module")
def result():
    return calibrate_files([CAL], load_profile(SAMPLES / "tinkerfinch_tf2.toml"))


def test_terminal_shows_every_speed_the_table_and_the_cautions(result):
    text = render_calibration(result)
    for s in result.speeds:
        assert f"{s.cas_kt:.1f}" in text and f"{s.delta_v_kt:+.1f}" in text
    assert "ias = [55, 65" in text
    assert cautions.AIRSPEED_CALIBRATION[0][:40] in text.replace("\n    ", " ")


def test_json_carries_codes_and_cautions(result):
    d = calibration_to_dict(result)
    assert d["cautions"][0] == cautions.ESTIMATE_STATEMENT
    assert all({"code", "severity", "message"} <= set(f) for f in d["findings"])
    assert len(d["legs"]) == len(result.legs)


def test_figures_have_labels_and_one_panel_per_speed(result):
    fig = Figure(figsize=(8, 9))
    axes = circle_fits(result, fig, (0.05, 0.05, 0.9, 0.9))
    assert len(axes) == len(result.speeds)
    assert all(ax.get_aspect() == 1.0 for ax in axes)
    assert axes[-1].get_xlabel() == "east [kt]" and axes[0].get_ylabel() == "north [kt]"
    ax = position_error_plot(result, Figure().add_axes((0.1, 0.1, 0.8, 0.8)))
    assert "[kt]" in ax.get_xlabel() and "CAS" in ax.get_ylabel()
    assert ax.get_legend() is not None


def test_report_pdf_and_html(result, tmp_path):
    pdf = write_calibration_report(result, tmp_path / "cal.pdf", aircraft="invented aircraft")
    text = " ".join(p.extract_text() for p in PdfReader(pdf).pages)
    assert cautions.ESTIMATE_STATEMENT[:60] in " ".join(text.split())
    assert "Position error against indicated airspeed" in text
    assert f"{result.speeds[0].cas_kt:.1f}" in text
    html = write_calibration_report(result, tmp_path / "cal.html", aircraft="invented")
    body = html.read_text()
    assert "<img" in body and "Position-error table for the profile" in body
