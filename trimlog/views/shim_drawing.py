"""Side view of the stabilizer on its attach fittings, with the shim to cut.

A schematic (nose to the left, not to scale): the stabilizer section before
(dashed) and after the shim (solid), the two attach fittings, the shim under
the fitting that gets it with its sheets and total, an arrow at the leading
edge for the direction of tilt, and the elevator before (the fitted
elevator at cruise) and after (the residual).  Real changes are fractions of
a degree, so the angles are drawn exaggerated by one stated factor.

Every number comes from the ``incidence`` JSON block
(:meth:`trimlog.incidence.shim.IncidenceRecommendation.to_json`); the only
numbers computed here are the drawing's coordinates.  Built without
:mod:`matplotlib.pyplot`, like :mod:`trimlog.views.plots`.

References
----------
.. [1] I. H. Abbott and A. E. von Doenhoff, *Theory of Wing Sections*, Dover,
   1959, sec. 6.4 (the NACA four-digit thickness distribution, used for the
   section's outline).
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure
from matplotlib.patches import FancyArrowPatch, Rectangle

from trimlog.incidence.shim import ELEVATOR_WORDS, angle_words
from trimlog.views import shim_text

#: Drawn size of the tilt [deg]: the real change is scaled to this (clipped).
DRAWN_TILT_DEG = 6.0
#: Largest drawn elevator deflection [deg].
DRAWN_ELEVATOR_MAX_DEG = 25.0
_FRONT_X, _REAR_X = 0.22, 0.62  # fittings, fraction of the stabilizer chord
_HINGE_X = 0.72  # elevator hinge, fraction of the chord
_BLUE, _ORANGE, _GREY = "#0072B2", "#D55E00", "#7f7f7f"  # Okabe-Ito


def _section(x: np.ndarray, t: float = 0.09) -> np.ndarray:
    """NACA four-digit half-thickness [1]_ (chord 1)."""
    return 5 * t * (0.2969 * np.sqrt(x) - 0.1260 * x - 0.3516 * x**2 + 0.2843 * x**3
                    - 0.1036 * x**4)


def _rotate(x: np.ndarray, y: np.ndarray, deg: float, cx: float, cy: float
            ) -> tuple[np.ndarray, np.ndarray]:
    """Rotate points by ``deg`` (positive = nose up, counter-clockwise) about (cx, cy)."""
    a = np.radians(deg)
    dx, dy = x - cx, y - cy
    return cx + dx * np.cos(a) - dy * np.sin(a), cy + dx * np.sin(a) + dy * np.cos(a)


def _outline(tilt_deg: float, elevator_deg: float, pivot: tuple[float, float], base: float
             ) -> tuple[np.ndarray, np.ndarray]:
    """Closed outline of stabilizer + elevator: stabilizer tilted, elevator deflected.

    ``tilt_deg`` is leading edge up positive; ``elevator_deg`` trailing edge down
    positive.  The section sits with its chord line at height ``base``.
    """
    x = np.linspace(0.0, 1.0, 121)
    half = _section(x)
    upper_x, upper_y = x.copy(), base + half
    lower_x, lower_y = x.copy(), base - half
    aft = x > _HINGE_X
    for xs, ys in ((upper_x, upper_y), (lower_x, lower_y)):
        # elevator: trailing edge down positive is a clockwise (negative) rotation
        xs[aft], ys[aft] = _rotate(xs[aft], ys[aft], -elevator_deg, _HINGE_X, base)
    xs = np.concatenate([upper_x, lower_x[::-1]])
    ys = np.concatenate([upper_y, lower_y[::-1]])
    # leading edge up is a counter-clockwise rotation seen with the nose to the left:
    # the nose is at x = 0, so "nose up" is a clockwise turn in these axes (x to the right)
    return _rotate(xs, ys, -tilt_deg, *pivot)


def shim_side_view(inc: Mapping[str, Any] | None, spacing_in: float,
                   ax: Axes | None = None) -> Axes:
    """Draw the stabilizer on its fittings with the shim, before and after.

    Parameters
    ----------
    inc : mapping or None
        The ``incidence`` block of the ``--json`` result; None draws a note.
    spacing_in : float
        Fore-aft distance between the attach fittings [in] (labelled).
    ax : Axes, optional
        Axes to draw on; a new figure when None.

    Returns
    -------
    Axes

    Examples
    --------
    >>> ax = shim_side_view(None, 14.0)
    >>> "no shim" in ax.texts[0].get_text()
    True
    """
    if ax is None:
        ax = Figure(figsize=(7.5, 3.6), layout="constrained").add_subplot()
    ax.set_axis_off()
    ax.set_aspect("equal")
    if inc is None:
        ax.text(0.5, 0.5, "no shim recommendation: no incidence result", ha="center",
                va="center", transform=ax.transAxes)
        return ax
    stock_change = float(inc.get("shim_stock_change_deg") or 0.0)
    scale = min(DRAWN_TILT_DEG / abs(stock_change), 40.0) if stock_change else 10.0
    base = 0.16
    rear = inc.get("shim_location", "").startswith("rear") and stock_change != 0.0
    pivot = (_FRONT_X, base) if rear else (_REAR_X, base)

    def drawn(deg: float) -> float:
        return float(np.clip(deg * scale, -DRAWN_ELEVATOR_MAX_DEG, DRAWN_ELEVATOR_MAX_DEG))

    before_e = float(inc["elevator_at_cruise_deg"])
    after_e = float(inc["residual_elevator_deg"])
    # fuselage top (the fittings' base) and the fittings
    ax.plot([-0.1, 1.15], [0.0, 0.0], color=_GREY, lw=3, solid_capstyle="butt")
    fittings = {"front": _FRONT_X, "rear": _REAR_X}
    for x0 in fittings.values():
        ax.add_patch(Rectangle((x0 - 0.025, 0.0), 0.05, base - 0.03, color="#444444"))
    # before (dashed) and after (solid)
    bx, by = _outline(0.0, drawn(before_e), pivot, base)
    ax.plot(bx, by, color=_GREY, ls="--", lw=1.2,
            label="before: elevator " + angle_words(before_e, *ELEVATOR_WORDS))
    if stock_change:
        ax_, ay_ = _outline(drawn(stock_change), drawn(after_e), pivot, base)
        ax.fill(ax_, ay_, color=_BLUE, alpha=0.15)
        ax.plot(ax_, ay_, color=_BLUE, lw=1.6,
                label="after: elevator " + angle_words(after_e, *ELEVATOR_WORDS))
        where = "rear" if rear else "front"
        x0 = fittings[where]
        _, lifted = _rotate(np.array([x0]), np.array([base]), -drawn(stock_change), *pivot)
        height = max(float(lifted[0] - base), 0.012)
        ax.add_patch(Rectangle((x0 - 0.04, base - 0.03), 0.08, height, color=_ORANGE))
        ax.annotate(
            f"shim under the {where} fitting:\n{shim_text.sheets_text(inc)}",
            xy=(x0, base - 0.03 + height / 2), xytext=(x0 + (0.1 if rear else -0.1), -0.17),
            ha="left" if rear else "right", fontsize=9, color=_ORANGE,
            arrowprops={"arrowstyle": "->", "color": _ORANGE})
        le_x, le_y = _outline(drawn(stock_change), 0.0, pivot, base)
        sense = "down" if stock_change < 0 else "up"
        tip = (float(le_x[0]) - 0.06, float(le_y[0]) + (-0.09 if sense == "down" else 0.09))
        ax.add_patch(FancyArrowPatch((float(le_x[0]) - 0.06, float(le_y[0])), tip,
                                     arrowstyle="-|>", mutation_scale=14, color=_BLUE))
        ax.text(tip[0] - 0.02, tip[1], f"leading edge {sense}\n"
                f"{abs(stock_change):.2f} deg", ha="right", va="center", fontsize=9,
                color=_BLUE)
    else:
        ax.text(0.5, 0.42, "no shim recommended from these data", ha="center", fontsize=9)
    ax.annotate("", xy=(_FRONT_X, -0.05), xytext=(_REAR_X, -0.05),
                arrowprops={"arrowstyle": "<->", "color": _GREY})
    ax.text((_FRONT_X + _REAR_X) / 2, -0.09, f"fittings {spacing_in:g} in apart",
            ha="center", va="top", fontsize=8, color=_GREY)
    ax.text(-0.1, 0.46, f"nose to the left; schematic, angles drawn x{scale:.0f}",
            fontsize=8, color=_GREY)
    ax.legend(loc="lower right", fontsize=8, frameon=False, bbox_to_anchor=(1.0, -0.02))
    ax.set_xlim(-0.35, 1.2)
    ax.set_ylim(-0.3, 0.5)
    return ax
