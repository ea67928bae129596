"""Figures of the maneuvering analysis: stick force against n, gradients per g against CG.

Like :mod:`trimlog.views.plots`: each function draws on the Axes it is given
(``ax=None`` makes a new Figure, no pyplot) and returns it; the only numbers
computed here are the straight fit lines drawn through the plotted values.

References
----------
.. [1] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   ch. 6: stick force against load factor per CG, and stick force per g
   against CG extrapolated to zero at the maneuver point (from memory).
"""

from __future__ import annotations

from typing import TYPE_CHECKING

import numpy as np
from matplotlib.axes import Axes

from trimlog.views.plots import (
    GREY,
    LEGEND_SIZE,
    _finish,
    _flight_label,
    _new_axes,
    _note,
    flight_styles,
)

if TYPE_CHECKING:
    from trimlog.pipeline.chain import Analysis


def stick_force_vs_n(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Stick force against load factor for each flight, with its fitted force per g.

    Parameters
    ----------
    analysis : Analysis
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes

    Notes
    -----
    Filled markers: maneuvering points used; hollow grey: excluded.  Lines:
    each flight's straight line of force against n (slope dFs/dn).  The
    dashed line is the minimum stick force per g from 1 g.
    """
    ax = _new_axes(ax)
    m = analysis.maneuvering
    if m is None or not len(m.points):
        _note(ax, "no maneuvering point (steady turn at 1.1 g or more) was found")
        _finish(ax, "load factor n [g]", "stick force $F_s$ [lbf] (pull +)",
                "Stick force against load factor")
        return ax
    pts = m.points
    styles = flight_styles(list(pts["flight"].astype(str)))
    grads = {g.flight: g for g in m.gradients}
    for flight, frame in pts.groupby(pts["flight"].astype(str), sort=False):
        style = styles[flight]
        used = frame.loc[frame["included"].astype(bool)]
        left = frame.loc[~frame["included"].astype(bool)]
        g = grads.get(flight)
        label = _flight_label(flight, None if g is None else g.cg_pct_mac)
        if g is not None and g.stick_force_per_g_lbf is not None:
            label += f": {g.stick_force_per_g_lbf:.1f} lbf/g"
        ax.plot(used["nz_g"], used["stick_force_lbf"], linestyle="none", marker=style["marker"],
                color=style["color"], markersize=6, label=label)
        if len(left):
            ax.plot(left["nz_g"], left["stick_force_lbf"], linestyle="none",
                    marker=style["marker"], markerfacecolor="none", markeredgecolor=GREY)
        if g is not None and g.stick_force_per_g_lbf is not None and len(used) >= 2:
            n = used["nz_g"].to_numpy(dtype=float)
            fs = used["stick_force_lbf"].to_numpy(dtype=float)
            x = np.linspace(1.0, max(2.0, float(n.max())), 10)
            intercept = float(np.mean(fs) - g.stick_force_per_g_lbf * np.mean(n))
            ax.plot(x, intercept + g.stick_force_per_g_lbf * x, color=style["color"],
                    linestyle=style["linestyle"], linewidth=1.2)
    minimum = m.requirement.minimum_per_g_lbf
    x = np.array([1.0, 2.0])
    ax.plot(x, minimum * (x - 1.0), color="black", linestyle="--", linewidth=1.0,
            label=f"minimum {minimum:.1f} lbf/g (23.155 / common practice)")
    ax.axhline(0.0, color="black", linewidth=0.8)
    ax.legend(fontsize=LEGEND_SIZE, loc="upper left")
    _finish(ax, "load factor n [g]", "stick force $F_s$ [lbf] (pull +)",
            "Stick force against load factor (steady turns, wind-up steps)")
    return ax


def maneuver_gradients_vs_cg(analysis: Analysis, ax: Axes | None = None) -> Axes:
    """Normalised gradients per g against CG: both maneuver points and both neutral points.

    Parameters
    ----------
    analysis : Analysis
    ax : matplotlib.axes.Axes, optional

    Returns
    -------
    matplotlib.axes.Axes
        The left axis; the stick force per g is on a twin right axis whose
        zero is level with the left one's.

    Notes
    -----
    Left (circles): ``-(dδe/dn)/CL1`` [deg per unit CL], the up elevator per
    g, zero at hm.  Right
    (squares): ``(dFs/dn)/(W/S)`` [ft^2], zero at hm'.  Straight lines: fits
    through the plotted values.  On the zero line: hm, hm' (filled) and hn,
    hn' (open) with their 95 % intervals.
    """
    ax = _new_axes(ax)
    m = analysis.maneuvering
    title = "Gradients per g against CG (zero = maneuver point)"
    if m is None:
        _note(ax, "no maneuvering point (steady turn at 1.1 g or more) was found")
        _finish(ax, "CG [%MAC]", "$(d\\delta_e/dn)/C_{L1}$ [deg]", title)
        return ax
    right = ax.twinx()
    # Up elevator per g (trailing-edge up), so both gradients fall to zero going aft.
    fixed = [(g.cg_pct_mac, -g.elevator_per_g_deg / g.cl_1g) for g in m.gradients
             if g.elevator_per_g_deg is not None]
    free = [(g.cg_pct_mac, g.stick_force_per_g_lbf / g.wing_loading_psf) for g in m.gradients
            if g.stick_force_per_g_lbf is not None]
    s = analysis.primary.stability
    marks = [(m.stick_fixed, "hm", "o", "black", True),
             (m.stick_free, "hm'", "s", "#D55E00", True),
             (s.stick_fixed.neutral_point, "hn", "o", "black", False),
             (None if s.stick_free is None else s.stick_free.neutral_point, "hn'", "s",
              "#D55E00", False)]
    xs = [analysis.profile.cg_forward_pct_mac, analysis.profile.cg_aft_pct_mac]
    xs += [c for c, _ in fixed + free]
    xs += [p.pct_mac for p, *_ in marks if p is not None and p.identifiable]
    x = np.linspace(min(xs) - 2.0, max(xs) + 2.0, 20)
    for axis, values, marker, color, label in (
            (ax, fixed, "o", "black", "up elevator per g / $C_{L1}$ (left)"),
            (right, free, "s", "#D55E00", "stick force per g / (W/S) (right)")):
        if not values:
            continue
        c, y = np.array(values).T
        axis.plot(c, y, linestyle="none", marker=marker, color=color, label=label)
        if len(c) >= 2 and np.ptp(c) > 0:
            slope, icept = np.polyfit(c, y, 1)
            axis.plot(x, icept + slope * x, color=color, linewidth=1.0)
    _level_zeros(ax, right)
    ax.axhline(0.0, color="black", linewidth=0.8)
    reasons = []
    for k, (p, name, marker, color, filled) in enumerate(marks):
        if p is None:
            continue
        if not p.identifiable:
            reasons.append(f"{name}: {p.reason}")
            continue
        lo, hi = p.ci95_pct_mac
        y0 = (1.5 - k) * 0.03 * float(np.ptp(ax.get_ylim()))
        ax.errorbar([p.pct_mac], [y0], xerr=[[p.pct_mac - lo], [hi - p.pct_mac]], marker=marker,
                    color=color, markerfacecolor=color if filled else "white", capsize=3,
                    linestyle="none", label=f"{name} {p.pct_mac:.1f} %MAC [{lo:.1f}, {hi:.1f}]")
    for value in (analysis.profile.cg_forward_pct_mac, analysis.profile.cg_aft_pct_mac):
        ax.axvline(value, color=GREY, linestyle=":", linewidth=1.2)
    if reasons:
        _note(ax, "Not identifiable\n" + "\n".join(reasons), y=0.75)
    handles = ax.get_legend_handles_labels()[0] + right.get_legend_handles_labels()[0]
    ax.legend(handles=handles, fontsize=LEGEND_SIZE, loc="upper right")
    right.set_ylabel("$(dF_s/dn)/(W/S)$ [ft$^2$]", fontsize=LEGEND_SIZE + 2)
    _finish(ax, "CG [%MAC]", "$-(d\\delta_e/dn)/C_{L1}$ [deg per unit $C_L$, up +]", title)
    return ax


def _level_zeros(left: Axes, right: Axes) -> None:
    """Give both y axes the same fraction below zero, so one zero line serves both."""
    spans = [(min(lo, 0.0), max(hi, 0.0)) for lo, hi in (left.get_ylim(), right.get_ylim())]
    fracs = [-lo / (hi - lo) for lo, hi in spans if hi > lo]
    frac = min(max(max(fracs, default=0.5), 0.1), 0.9)
    for axis, (lo, hi) in zip((left, right), spans, strict=True):
        r = max(-lo / frac, hi / (1.0 - frac), 1e-9)
        axis.set_ylim(-frac * r, (1.0 - frac) * r)
