"""The Points page's log figure: drawn once, only the point windows drawn again on a tick."""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
from PIL import Image

from trimlog.dashboard.compute import LogCanvas
from trimlog.pipeline import chain

SAMPLES = Path(__file__).resolve().parent.parent.parent / "sample_logs"


def _pixels(png: bytes) -> np.ndarray:
    return np.asarray(Image.open(io.BytesIO(png)).convert("RGB"), dtype=int)


def test_a_tick_redraws_only_the_windows_and_the_same_choice_gives_the_same_image():
    profile = chain.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    data = chain.load_flight_file(SAMPLES / "flight2.csv", profile)[0]
    canvas = LogCanvas(data)
    points = data.points.copy()
    first = canvas.png(points)
    points.loc[points.index[0], "included"] = False  # the pilot unticks point 1
    ticked = canvas.png(points)
    again = canvas.png(data.points)
    assert first == again  # nothing of the previous choice is left on the canvas
    diff = np.abs(_pixels(first) - _pixels(ticked)).sum(axis=2) > 0
    assert diff.any()
    # the change lies within the first point's window, in time
    columns = np.flatnonzero(diff.any(axis=0))
    ax = canvas.axes[0]
    bbox = ax.get_window_extent()
    t0, t1 = ax.get_xlim()
    start, end = (float(points.iloc[0][c]) for c in ("t_start_s", "t_end_s"))
    x = bbox.x0 + (np.array([start, end]) - t0) / (t1 - t0) * bbox.width
    assert columns.min() >= x[0] - 3 and columns.max() <= x[1] + 3
