"""Dashboard screens (issue 20 "Screens", issue 13 Aircraft form), through Streamlit's AppTest.

Expected numbers come from calling the package on the same demo files
(sample_logs/, invented data of known truth) or from the page's own inputs; the page must
show exactly those.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from streamlit.testing.v1 import AppTest

from trimlog.pipeline import chain as analysis
from trimlog.views import shim_drawing

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"
TIMEOUT = 180


@pytest.fixture(autouse=True)
def _history_db(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIMLOG_DB", str(tmp_path / "history.sqlite"))


@pytest.fixture(scope="module")
def demo_analysis():
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = [f for log in sorted(SAMPLES.glob("flight*.csv"))
               for f in analysis.load_flight_file(log, profile)]
    return profile, flights, analysis.analyze(flights, profile)


def _app() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=TIMEOUT)
    at.run()
    assert not at.exception, at.exception
    return at


def _go(at: AppTest, page: str) -> AppTest:
    at.sidebar.radio(key="page").set_value(page)
    at.run()
    assert not at.exception, at.exception
    return at


def _block(at: AppTest, key: str):
    """The container drawn with ``st.container(key=key)`` (its id ends with the key)."""
    def walk(node):
        for child in getattr(node, "children", {}).values():
            yield child
            yield from walk(child)

    found = [b for b in walk(at.main) if b.type == "flex_container"
             and str(getattr(b.proto, "id", "")).endswith(f"-{key}")]
    assert len(found) == 1, f"one container keyed {key!r} expected, found {len(found)}"
    return found[0], list(walk(found[0]))


def test_the_results_page_draws_the_shim_side_view_of_the_demo(demo_analysis, monkeypatch):
    _, _, a = demo_analysis
    rec = a.primary.incidence
    assert rec is not None and rec.shim_recommended  # the demo needs a shim (invented data)
    drawn = []
    original = shim_drawing.shim_side_view

    def recording(inc, spacing_in, ax=None):
        out = original(inc, spacing_in, ax)
        drawn.append((inc, spacing_in, out))
        return out

    monkeypatch.setattr(shim_drawing, "shim_side_view", recording)
    at = _app()
    _, inside = _block(at, "shim")
    images = [e for e in inside if e.type == "image"]
    assert len(images) == 1, "the shim block shows one figure: the side view"
    (inc, spacing, ax), = drawn
    assert inc == rec.to_json()  # drawn from the analysis' own numbers, not recomputed
    assert spacing == a.profile.stabilizer_attach_spacing_in
    texts = " ".join(t.get_text() for t in ax.texts)
    where = "rear" if rec.shim_location.startswith("rear") else "front"
    assert f"shim under the {where} fitting" in texts
    assert f"{rec.shim_stock_thickness_in:.3f} in" in texts  # the sheets' total
    sense = "down" if rec.shim_stock_change_deg < 0 else "up"
    assert f"leading edge {sense}" in texts
    legend = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(t.startswith("before: elevator") for t in legend)
    assert any(t.startswith("after: elevator") for t in legend)
