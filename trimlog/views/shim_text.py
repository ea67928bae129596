"""The shim in words for every view (terminal, report, dashboard).

Every number comes from the ``incidence`` block of the result
(:meth:`trimlog.incidence.shim.IncidenceRecommendation.to_json`): the sheets
to stack, their total, the exact thickness with its interval and the
decimals that interval supports, the steps, the residual elevator.  This
module only formats them, so the three views say the same thing.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from trimlog.incidence.shim import ELEVATOR_WORDS, INCIDENCE_WORDS, angle_words


def _unit(inc: Mapping[str, Any]) -> tuple[str, str]:
    return ("mm", ".1f") if inc.get("shim_stock") == "metric" else ("in", ".3f")


def sheets_text(inc: Mapping[str, Any]) -> str:
    """The sheets to stack and their total, e.g. ``0.050 in + 0.063 in = 0.113 in / 2.87 mm``.

    Examples
    --------
    >>> sheets_text({"shim_stock": "inch", "shim_stock_sheets": [0.05, 0.063],
    ...              "shim_stock_thickness_in": 0.113, "shim_stock_thickness_mm": 2.8702})
    '0.050 in + 0.063 in = 0.113 in / 2.87 mm'
    >>> sheets_text({"shim_stock_sheets": []})
    'none'
    """
    sheets = list(inc.get("shim_stock_sheets") or [])
    if not sheets:
        return "none"
    unit, spec = _unit(inc)
    parts = " + ".join(f"{s:{spec}} {unit}" for s in sheets)
    return (f"{parts} = {inc['shim_stock_thickness_in']:.3f} in / "
            f"{inc['shim_stock_thickness_mm']:.2f} mm")


def exact_text(inc: Mapping[str, Any]) -> str:
    """The computed thickness, rounded to what its interval supports, with the interval.

    Examples
    --------
    >>> exact_text({"shim_thickness_in": 0.5821, "shim_thickness_mm": 14.785,
    ...             "shim_thickness_ci95_in": [0.105, 1.055], "shim_decimals_in": 1,
    ...             "shim_decimals_mm": 0})
    '0.6 in / 15 mm (95 %: 0.1 to 1.1 in)'
    """
    d_in = int(inc.get("shim_decimals_in", 3))
    d_mm = int(inc.get("shim_decimals_mm", 2))
    text = f"{inc['shim_thickness_in']:.{d_in}f} in / {inc['shim_thickness_mm']:.{d_mm}f} mm"
    ci = inc.get("shim_thickness_ci95_in")
    if ci:
        text += f" (95 %: {ci[0]:.{d_in}f} to {ci[1]:.{d_in}f} in)"
    return text


def where_text(inc: Mapping[str, Any]) -> str:
    """Which fitting gets the shim and which way the leading edge goes."""
    return str(inc.get("shim_location") or "")


def residual_text(inc: Mapping[str, Any]) -> str:
    """The elevator at cruise expected after the cut (after step 1, when stepped)."""
    steps = int(inc.get("shim_steps", 1))
    after = f"step 1 of {steps}" if steps > 1 else "the shim"
    ci = inc.get("residual_elevator_ci95_deg")
    words = angle_words(inc["residual_elevator_deg"], *ELEVATOR_WORDS, 2,
                        tuple(ci) if ci else None)
    return f"elevator at cruise after {after}: {words}"


def steps_text(inc: Mapping[str, Any]) -> str:
    """'' for one cut, else how many steps (the cut shown is the first)."""
    steps = int(inc.get("shim_steps", 1))
    if steps <= 1:
        return ""
    return (f"one cut is too much: {steps} steps, each about "
            f"{inc['shim_step_thickness_in']:.3f} in; cut step 1, fly, and measure again")


def headline(inc: Mapping[str, Any]) -> str:
    """One sentence: what to cut, where, the exact thickness, the steps, the residual.

    Examples
    --------
    >>> inc = {"shim_recommended": True, "shim_stock": "inch",
    ...        "shim_stock_sheets": [0.05, 0.063], "shim_stock_thickness_in": 0.113,
    ...        "shim_stock_thickness_mm": 2.8702, "shim_thickness_in": 0.1134,
    ...        "shim_thickness_mm": 2.88, "shim_thickness_ci95_in": [0.101, 0.130],
    ...        "shim_decimals_in": 2, "shim_decimals_mm": 1,
    ...        "shim_location": "rear attach points (leading edge down)", "shim_steps": 1,
    ...        "residual_elevator_deg": -0.001, "residual_elevator_ci95_deg": None}
    >>> headline(inc)  # doctest: +NORMALIZE_WHITESPACE
    'stack 0.050 in + 0.063 in = 0.113 in / 2.87 mm under the rear attach points (leading
     edge down); computed 0.11 in / 2.9 mm (95 %: 0.10 to 0.13 in); elevator at cruise
     after the shim: 0.00 deg'
    """
    if not inc.get("shim_recommended"):
        return "none recommended"
    parts = [f"stack {sheets_text(inc)} under the {where_text(inc)}",
             f"computed {exact_text(inc)}"]
    if steps_text(inc):
        parts.append(steps_text(inc))
    parts.append(residual_text(inc))
    return "; ".join(parts)


def before_after_text(ba: Any) -> str:
    """The elevator at cruise before and after an incidence change, and the tau they imply.

    Parameters
    ----------
    ba : trimlog.incidence.before_after.BeforeAfter
        ``ConfigurationResult.before_after`` (numbers from the core).

    Returns
    -------
    str
        One paragraph: the two settings and the change between them, the
        elevator at cruise under each with its 95 % interval, and the tau
        they imply with its interval, or why it cannot be said yet.

    Examples
    --------
    >>> from types import SimpleNamespace
    >>> ba = SimpleNamespace(setting_before="as rigged", setting_after="shim",
    ...     incidence_before_deg=-1.0, incidence_after_deg=-1.6, incidence_change_deg=-0.6,
    ...     cruise_cl=0.32, cruise_cg_pct_mac=23.6, elevator_before_deg=-2.38,
    ...     elevator_before_ci95_deg=(-2.5, -2.26), elevator_after_deg=-1.04,
    ...     elevator_after_ci95_deg=(-1.15, -0.94), elevator_change_deg=1.34,
    ...     elevator_change_ci95_deg=(1.2, 1.48), implied_tau=0.45,
    ...     implied_tau_ci95=(0.4, 0.5), reason=None)  # synthetic numbers
    >>> print(before_after_text(ba))  # doctest: +NORMALIZE_WHITESPACE
    Before and after the incidence change from 'as rigged' (-1.00 deg) to 'shim' (-1.60 deg),
    0.60 deg leading edge down: elevator at cruise (CL 0.32, CG 23.6 %MAC) 2.38 deg trailing
    edge up (95 %: 2.26 to 2.50 deg) before, 1.04 deg trailing edge up (95 %: 0.94 to 1.15
    deg) after; it moved 1.34 deg trailing edge down (95 %: 1.20 to 1.48 deg), which implies
    tau 0.45 (95 %: 0.40 to 0.50).
    """
    up, down = INCIDENCE_WORDS

    def elevator(value: float, ci: tuple[float, float] | None) -> str:
        return angle_words(value, *ELEVATOR_WORDS, 2, ci)

    text = (f"Before and after the incidence change from '{ba.setting_before}' "
            f"({ba.incidence_before_deg:+.2f} deg) to '{ba.setting_after}' "
            f"({ba.incidence_after_deg:+.2f} deg), "
            f"{angle_words(ba.incidence_change_deg, up, down)}: elevator at cruise (CL "
            f"{ba.cruise_cl:.2f}, CG {ba.cruise_cg_pct_mac:.1f} %MAC) "
            f"{elevator(ba.elevator_before_deg, ba.elevator_before_ci95_deg)} before, "
            f"{elevator(ba.elevator_after_deg, ba.elevator_after_ci95_deg)} after; it moved "
            f"{elevator(ba.elevator_change_deg, ba.elevator_change_ci95_deg)}")
    if ba.implied_tau is None:
        return text + f"; the tau it implies cannot be said yet: {ba.reason or 'no interval'}."
    return (text + f", which implies tau {ba.implied_tau:.2f} (95 %: "
            + (f"{ba.implied_tau_ci95[0]:.2f} to {ba.implied_tau_ci95[1]:.2f})."
               if ba.implied_tau_ci95 is not None else "unbounded)."))
