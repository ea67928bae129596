"""Tests of trimlog.demo.files: the demo's file formats (synthetic data of known truth)."""

import numpy as np

from trimlog.demo.files import _cells, _dropouts, loading_sheet_toml
from trimlog.demo.model import DEMO_TRUTH
from trimlog.input.loading_sheet import read_loading_sheet


def test_cells_round_to_the_resolution_and_leave_missing_empty():
    values = np.array([1.26, -0.04, np.nan, 12.4])
    assert _cells(values, 1) == ["1.3", "0.0", "", "12.4"]  # no "-0.0"
    assert _cells(values, 1, 0.5) == ["1.5", "0.0", "", "12.5"]
    assert _cells(np.array([5537.0]), 0, 10.0) == ["5540"]


def test_dropouts_blank_short_runs_only():
    values = np.zeros(20000)
    _dropouts(np.random.default_rng(1), values, 1 / 150, 0.1)
    blank = np.isnan(values)
    assert blank.any()
    edges = np.flatnonzero(np.diff(np.r_[0, blank.astype(int), 0]))
    runs = edges[1::2] - edges[::2]
    assert runs.max() <= 10  # runs of 1-5 samples, two may touch


def test_loading_sheet_is_read_back_as_written():
    flight = DEMO_TRUTH.flights[1]
    sheet = read_loading_sheet(loading_sheet_toml(flight).encode("utf-8"), name="x.toml")
    assert sheet.flight == str(flight.number)
    assert sheet.takeoff_weight_lb == flight.takeoff_weight_lb
    assert sheet.takeoff_cg_in == flight.takeoff_cg_in
    assert sheet.takeoff_fuel_gal == flight.takeoff_fuel_gal
