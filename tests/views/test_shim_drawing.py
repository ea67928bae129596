"""The shim's side view and its words: which fitting, how thick, which way, before and after."""

from __future__ import annotations

import math

import pytest
from matplotlib.patches import Rectangle

from trimlog.incidence.shim import recommend_incidence
from trimlog.incidence.tau import TauChoice
from trimlog.views import shim_text
from trimlog.views.shim_drawing import shim_side_view

ORANGE = (0.8352941176470589, 0.3686274509803922, 0.0, 1.0)  # Okabe-Ito vermillion


def _rec(elevator_deg: float, ci: tuple[float, float], spacing_in: float = 14.0,
         source: str = "profile"):
    tau = TauChoice(tau=0.45, tau_source=source, ci95=(0.40, 0.50), explanation="given",
                    notes=())
    return recommend_incidence(cruise_cl=0.3, cruise_cg_pct_mac=25.0,
                               elevator_cruise_deg=elevator_deg, elevator_ci95_deg=ci, tau=tau,
                               spacing_in=spacing_in, current_incidence_deg=-1.0).to_json()


def _texts(ax) -> str:
    legend = ax.get_legend()
    extra = [t.get_text() for t in legend.get_texts()] if legend else []
    return " | ".join([t.get_text() for t in ax.texts] + extra)


def test_rear_shim_drawn_with_sheets_direction_and_elevators():
    inc = _rec(-1.04, (-1.15, -0.94))  # trailing edge up: leading edge down, rear shim
    assert inc["shim_recommended"] and inc["shim_location"].startswith("rear")
    ax = shim_side_view(inc, 14.0)
    text = _texts(ax)
    assert "shim under the rear fitting" in text
    assert shim_text.sheets_text(inc) in text  # the sheets to stack and their total
    assert "leading edge down" in text
    assert "before: elevator 1.04 deg trailing edge up" in text
    assert "after: elevator" in text and "fittings 14 in apart" in text
    shims = [p for p in ax.patches if isinstance(p, Rectangle)
             and p.get_facecolor() == pytest.approx(ORANGE)]
    assert len(shims) == 1
    # the shim sits at the rear fitting (62 % of the drawn chord), aft of the front one
    assert shims[0].get_x() + shims[0].get_width() / 2 == pytest.approx(0.62)


def test_front_shim_and_no_shim():
    inc = _rec(+1.6, (1.3, 1.9))  # trailing edge down: leading edge up, front shim
    text = _texts(shim_side_view(inc, 14.0))
    assert "shim under the front fitting" in text and "leading edge up" in text
    none = _rec(-0.2, (-0.9, 0.5))  # interval includes zero: nothing to cut
    assert not none["shim_recommended"]
    text = _texts(shim_side_view(none, 14.0))
    assert "no shim recommended" in text and "shim under" not in text


def test_words_say_what_to_cut_with_steps():
    # 1.3 deg trailing edge down x tau 0.45 ~ 0.59 deg on 40 in: 0.41 in, more than two
    # 0.125 in sheets, so two steps (right-triangle identity: 40 tan 0.585 deg = 0.408 in)
    inc = _rec(+1.3, (1.2, 1.4), spacing_in=40.0, source="flight-calibrated")  # full change
    assert inc["shim_thickness_in"] == pytest.approx(40 * math.tan(math.radians(0.585)),
                                                     rel=1e-3)
    assert inc["shim_steps"] == 2
    words = shim_text.headline(inc)
    assert words.startswith("stack " + shim_text.sheets_text(inc))
    assert "2 steps, each about 0.204 in" in words
    assert "elevator at cruise after step 1 of 2: " in words
    assert inc["shim_stock_thickness_in"] < 0.25  # the first step, not the 0.250 in cap
