"""Page blocks shown on more than one page.

The shim (Results, History), tables of points and the choice of points (Points, History).
"""

from __future__ import annotations

import pandas as pd
import streamlit as st

from trimlog import cautions
from trimlog.dashboard import common, compute
from trimlog.dashboard.common import interval
from trimlog.pipeline.chain import Analysis
from trimlog.views import shim_text
from trimlog.views.formatting import (
    DISPLAY_SYSTEMS,
    display_unit,
    elevator_words,
    incidence_words,
    rounded,
)


def shim_block(a: Analysis, *, with_cautions: bool = True) -> None:
    """The shim recommendation of an analysis (Results, and History for the saved flights).

    ``with_cautions=False`` when the page shows every caution in one box already.
    """
    st.subheader("Stabilizer incidence and shim")
    rec = a.primary.incidence
    with st.container(border=True, key="shim"):
        if rec is None:
            st.markdown("**No shim recommendation yet.** "
                        + common.esc(a.primary.incidence_reason or ""))
        else:
            inc = rec.to_json()
            if rec.shim_recommended:
                st.markdown(f"**Shim: {shim_text.sheets_text(inc)} under the "
                            f"{shim_text.where_text(inc)}.**")
            else:
                st.markdown("**No shim recommended from these data** (the reason is below).")
            cols = st.columns(4)
            cols[0].metric("Elevator at cruise", f"{rec.elevator_at_cruise_deg:+.2f} deg",
                           help="trailing edge down positive")
            cols[0].caption(f"**{elevator_words(rec.elevator_at_cruise_deg)}**; 95 %: "
                            f"{interval(rec.elevator_at_cruise_ci95_deg, '+.2f')} deg")
            cols[1].metric("Incidence change", f"{rec.change_deg:+.2f} deg",
                           help="leading edge up positive")
            cols[1].caption(f"**{incidence_words(rec.change_deg)}**; 95 %: "
                            f"{interval(rec.change_ci95_deg, '+.2f')} deg")
            if rec.shim_recommended:
                cols[2].metric("Cut: sheets stacked", f"{rec.shim_stock_thickness_in:.3f} in",
                               help=f"{rec.shim_stock} stock; the total of the sheets listed")
                cols[2].caption(shim_text.sheets_text(inc))
            cols[3].metric("Elevator effectiveness tau", f"{rec.tau:.2f}")
            cols[3].caption(f"{rec.tau_source}; 95 %: {interval(rec.tau_ci95, '.2f')}")
            if rec.shim_recommended:
                st.markdown("Computed shim " + shim_text.exact_text(inc) + "; "
                            + shim_text.residual_text(inc) + ".")
                if shim_text.steps_text(inc):
                    common.warn(shim_text.steps_text(inc))
            st.markdown(rec.words)
            if a.primary.before_after is not None:
                st.markdown(common.esc(shim_text.before_after_text(a.primary.before_after)))
            st.image(compute.shim_png(inc, a.profile.stabilizer_attach_spacing_in),
                     output_format="PNG", width="stretch")
            st.caption(rec.tau_explanation + ". " + rec.change_method + ".")
            for w in rec.warnings:
                common.warn(w)
        if with_cautions:
            common.caution_list(cautions.INCIDENCE)


#: Point columns shown in the tables of points (Points page, History editor): readable
#: names, the package's unit, and the decimals each is rounded to (what the measurement
#: supports).  Speeds and forces follow the display units (kt or m/s, lbf or N).
POINT_COLUMNS: dict[str, tuple[str, str, int | None]] = {
    "point": ("Point", "", None),
    "t_start_s": ("From", "s", 1),
    "t_end_s": ("To", "s", 1),
    "duration_s": ("Held", "s", 1),
    "ias_kt": ("IAS", "kt", 1),
    "cas_kt": ("CAS", "kt", 1),
    "pressure_alt_ft": ("Altitude", "ft", 0),
    "elevator_deg": ("Elevator", "deg", 2),
    "stick_force_lbf": ("Stick force", "lbf", 1),
    "nz_g": ("Load factor", "g", 2),
    "vs_fpm": ("Vertical speed", "ft/min", 0),
    "flags": ("Flags", "", None),
}


def units() -> str:
    """The display units chosen in the sidebar ("US" or "SI"); computation is unchanged."""
    # a segmented control clicked twice holds no choice: the package's own units then
    return "SI" if st.session_state.get("display_units") == "SI" else "US"


def titled(name: str, unit: str, system: str) -> tuple[str, float]:
    """A column title with its display unit, and the factor from the package's unit."""
    shown, factor = display_unit(unit, system)
    return (f"{name} [{shown}]" if shown else name), factor


#: The reasons offered for leaving a point out (free text after "other").
EXCLUSION_REASONS = ("turbulence", "not stabilized", "wrong configuration")
NO_REASON = "(no reason given)"
OTHER_REASON = "other (type it)"


def points_table(points: pd.DataFrame, system: str = "US") -> pd.DataFrame:
    """The points as shown: readable names with units, rounded, never ``-0``.

    Columns the points lack are left out; text columns are shown as they are
    (an empty flags cell read back as NaN shows as empty).  ``system`` "SI"
    shows speeds in m/s and forces in N (the values converted, nothing else).
    """
    out = pd.DataFrame(index=points.index)
    for column, (name, unit, decimals) in POINT_COLUMNS.items():
        if column not in points.columns:
            continue
        title, factor = titled(name, unit, system)
        values = points[column]
        if decimals is not None:
            values = rounded(factor * pd.to_numeric(values, errors="coerce").astype(float),
                             decimals)
        elif column == "flags":
            values = values.map(lambda v: v if isinstance(v, str) else "")
        out[title] = values
    return out.reset_index(drop=True)


def point_formats(table: pd.DataFrame) -> dict[str, object]:
    """Column settings of :func:`points_table`'s columns: each number at its decimals."""
    out = {}
    for name, unit, decimals in POINT_COLUMNS.values():
        for system in DISPLAY_SYSTEMS:
            title, _ = titled(name, unit, system)
            if decimals is not None and title in table.columns:
                out[title] = st.column_config.NumberColumn(title, format=f"%.{decimals}f")
    return out


def points_used(label: str, numbers: list[int], used: list[bool], key: str,
                flags: list[str] | None = None) -> list[bool]:
    """One click per point: the points fitted, as toggle buttons (a point number each).

    Parameters
    ----------
    label : str
        The widget's label.
    numbers : list of int
        The points' numbers, in order.
    used : list of bool
        Whether each point is used now (the state the widget opens with).
    key : str
        Widget key (one per flight).
    flags : list of str, optional
        Each point's flags, shown beside its number (``3 at_stop``).

    Returns
    -------
    list of bool
        Whether each point is used after the user's clicks.
    """
    ss = st.session_state
    if key not in ss:
        ss[key] = [p for p, u in zip(numbers, used, strict=True) if u]
    names = {p: f"{p}" + (f" ({f.replace(';', ', ')})" if f else "")
             for p, f in zip(numbers, flags or [""] * len(numbers), strict=True)}
    picked = st.pills(label, numbers, selection_mode="multi", key=key,
                      format_func=names.__getitem__,
                      help="Click a point to leave it out of the fits, click again to use it. "
                      "Highlighted points are used.")
    chosen = set(picked or [])
    return [p in chosen for p in numbers]


def exclusion_reason(point: int, key: str, current: str = "") -> str:
    """Ask why a point is left out; the reason in words ("" when none is given).

    Offers :data:`EXCLUSION_REASONS` and "other" with a text box; the answer is
    kept in the session under ``key`` (and ``key + "_text"`` for other).
    """
    ss = st.session_state
    options = [NO_REASON, *EXCLUSION_REASONS, OTHER_REASON]
    if key not in ss:
        ss[key] = (current if current in EXCLUSION_REASONS else
                   OTHER_REASON if current else NO_REASON)
        if ss[key] == OTHER_REASON:
            ss[f"{key}_text"] = current
    left, right = st.columns([1, 2])
    choice = left.selectbox(f"Why point {point} is left out", options, key=key)
    if choice == OTHER_REASON:
        return right.text_input(f"Reason for point {point}", key=f"{key}_text",
                                max_chars=200).strip()
    return "" if choice == NO_REASON else choice
