"""Dashboard screens (issue 20 "Screens", issue 13 Aircraft form), through Streamlit's AppTest.

Expected numbers come from calling the package on the same demo files
(sample_logs/, invented data of known truth) or from the page's own inputs; the page must
show exactly those.
"""

from __future__ import annotations

from pathlib import Path

import pytest
from apptest_steps import go as _go
from apptest_steps import start as _app
from streamlit.testing.v1 import AppTest

from trimlog.dashboard import compute
from trimlog.pipeline import chain as analysis
from trimlog.views import shim_drawing

ROOT = Path(__file__).resolve().parents[2]
APP = str(ROOT / "trimlog" / "dashboard" / "app.py")
SAMPLES = ROOT / "sample_logs"
TIMEOUT = 180


@pytest.fixture(scope="module")
def demo_analysis():
    profile = analysis.load_profile(SAMPLES / "tinkerfinch_tf2.toml")
    flights = [f for log in sorted(SAMPLES.glob("flight*.csv"))
               for f in analysis.load_flight_file(log, profile)]
    return profile, flights, analysis.analyze(flights, profile)


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
    compute.shim_png.clear()  # drawn once per recommendation: draw it again here
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


def test_the_shim_side_view_is_sent_as_drawn(demo_analysis):
    # Wider than Streamlit's content limit, st.image would decode, shrink and encode the
    # PNG again on every run of the Results page (0.3-0.6 s each, measured).
    import io

    from PIL import Image
    from streamlit.elements.lib.image_utils import MAXIMUM_CONTENT_WIDTH

    _, _, a = demo_analysis
    png = compute.shim_png(a.primary.incidence.to_json(), a.profile.stabilizer_attach_spacing_in)
    image = Image.open(io.BytesIO(png))
    assert image.format == "PNG"
    assert 1000 < image.size[0] <= MAXIMUM_CONTENT_WIDTH  # fine enough for the page's width


def _texts(at: AppTest) -> str:
    import re

    parts = [e.value for kind in ("markdown", "caption", "warning", "info", "error", "success")
             for e in getattr(at, kind)]
    return re.sub(r"\\(.)", r"\1", "\n".join(str(p) for p in parts))


def test_one_click_leaves_a_point_out_and_its_reason_goes_to_json_and_history(tmp_path):
    from trimlog.history import service as history
    from trimlog.history.store import open_store

    at = _go(_app(), "Points")
    assert at.selectbox(key="points_flight").value == 1  # flight2, the first time series
    (used,) = at.pills
    assert 1 in used.value
    used.unselect(1).run()  # one click
    assert not at.exception, at.exception
    assert at.session_state["exclusions"] == {("flight2", 1)}
    why = next(b for b in at.selectbox if b.label == "Why point 1 is left out")
    assert why.value == "(no reason given)"
    why.set_value("other (type it)").run()
    next(t for t in at.text_input if t.label == "Reason for point 1").input(
        "  gust at the start  ").run()
    assert at.session_state["exclusion_reasons"] == {("flight2", 1): "gust at the start"}
    table = next(d.value for d in at.dataframe if "Why left out" in d.value.columns)
    assert table.loc[0, "Why left out"] == "gust at the start" and not table.loc[0, "Used"]
    # the analysis, its JSON download and the saved flight carry it
    _go(at, "Results")
    assert "59 points used, 1 left out" in _texts(at)
    assert "Left out by you: flight2 point 1 (gust at the start)" in _texts(at)
    _go(at, "History")
    next(b for b in at.button if b.label.startswith("Save the")).click().run()
    assert not at.exception, at.exception
    with open_store(tmp_path / "history.sqlite") as store:
        a = history.analyze_history(store)
    row = a.points.loc[(a.points["flight"] == "flight2") & (a.points["point"] == 1)]
    assert row["exclusion_reason"].iloc[0] == "gust at the start"


def test_tables_of_points_have_readable_names_with_units_rounded_and_never_minus_zero():
    import numpy as np
    import pandas as pd

    from trimlog.dashboard import blocks

    raw = pd.DataFrame({"point": [1, 2], "t_start_s": [12.34567, 40.0],
                        "ias_kt": [95.12345, 80.0], "elevator_deg": [-0.0012, -2.34567],
                        "stick_force_lbf": [-0.04, 3.21], "flags": ["", np.nan],
                        "values_json_only": [1.0, 2.0]})
    table = blocks.points_table(raw)
    assert list(table.columns) == ["Point", "From [s]", "IAS [kt]", "Elevator [deg]",
                                   "Stick force [lbf]", "Flags"]
    assert not [c for c in table.columns if "_" in c]  # no raw names like t_start_s
    assert table["IAS [kt]"].tolist() == [95.1, 80.0]
    assert table["Elevator [deg]"].tolist() == [0.0, -2.35]
    # a rounded zero has no sign: a table would print -0.0 as "-0.00"
    assert not np.signbit(table["Elevator [deg]"].iloc[0])
    assert not np.signbit(table["Stick force [lbf]"].iloc[0])
    assert table["Flags"].tolist() == ["", ""]
    formats = blocks.point_formats(table)
    assert set(formats) == {"From [s]", "IAS [kt]", "Elevator [deg]", "Stick force [lbf]"}


def test_the_history_editor_shows_readable_names_and_one_click_choices(tmp_path):
    from trimlog.history.store import open_store

    at = _go(_app(), "History")
    next(b for b in at.button if b.label.startswith("Save the")).click().run()
    fid = at.selectbox(key="history_flight").value
    editor = next(d.value for d in at.dataframe if "Why left out" in d.value.columns)
    assert {"Point", "From [s]", "IAS [kt]", "Elevator [deg]"} <= set(editor.columns)
    assert not [c for c in editor.columns if "_" in c]
    assert editor["Used"].all()
    at.pills(key=f"history_used_{fid}").unselect(2).run()
    next(b for b in at.selectbox if b.label == "Why point 2 is left out").set_value(
        "turbulence").run()
    assert not at.exception, at.exception
    with open_store(tmp_path / "history.sqlite") as store:
        assert store.flight(fid).loading["exclusion_reasons"] == {"2": "turbulence"}
    editor = next(d.value for d in at.dataframe if "Why left out" in d.value.columns)
    assert editor.loc[1, "Why left out"] == "turbulence" and not editor.loc[1, "Used"]


def test_display_factors_are_the_exact_definitions():
    from trimlog.input.units import ureg
    from trimlog.views.formatting import display_unit

    # NIST SP 811 (2008), appendix B.8/B.9: exact by definition
    assert display_unit("lb", "SI") == ("kg", 0.45359237)
    assert display_unit("lbf", "SI") == ("N", 4.4482216152605)
    assert display_unit("kt", "SI")[1] == pytest.approx(1852 / 3600, rel=1e-15)
    # and the same as the package's unit registry says
    for unit, si in (("lb", "kg"), ("kt", "m/s"), ("lbf", "N")):
        assert display_unit(unit, "SI")[1] == pytest.approx(
            ureg.Quantity(1.0, unit).to(si).magnitude, rel=1e-12)
    assert display_unit("deg", "SI") == ("deg", 1.0)  # only weights, speeds, forces change


def test_si_display_units_change_what_is_shown_not_what_is_computed(demo_analysis):
    _, flights, a = demo_analysis
    at = _app()
    before = {m.label: m.value for m in at.metric}
    at.session_state["display_units"] = "SI"
    at.run()
    assert not at.exception, at.exception
    after = {m.label: m.value for m in at.metric}
    assert after == before  # the headline numbers (%MAC, deg, in) do not move
    gradients = next(d.value for d in at.table if "Stick-force verdict" in d.value.columns)
    assert "Force gradient [N per m/s]" in gradients.columns
    assert "Trim speed, EAS [m/s]" in gradients.columns
    g = a.primary.stability.gradients[0]
    assert gradients["Trim speed, EAS [m/s]"].iloc[0] == f"{g.trim_eas_kt * 1852 / 3600:.0f}"
    _go(at, "Points")
    table = next(d.value for d in at.dataframe if "Why left out" in d.value.columns)
    assert {"IAS [m/s]", "Stick force [N]"} <= set(table.columns)
    (flight2,) = [f.points for f in flights if f.flight == "flight2"]
    assert table["Stick force [N]"].iloc[0] == pytest.approx(
        round(flight2["stick_force_lbf"].iloc[0] * 4.4482216152605, 1))
