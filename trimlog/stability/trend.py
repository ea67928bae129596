"""The neutral point after each successive flight, and how far aft the next flight may go.

Each flight at a new CG adds a trim line and sharpens the pooled estimate.
:func:`neutral_point_sequence` gives the pooled stick-fixed and stick-free
neutral points (the same models, identifiability rules and Fieller intervals
as :func:`trimlog.stability.neutral_points.pooled_fit`) for the first 1, 2, ... N flights.
It accumulates per-group cross-product sums instead of refitting, so a season
of hundreds of flights costs milliseconds: by the Frisch-Waugh-Lovell theorem
the coefficients of ``CL`` and ``h*CL`` in a model with one intercept per
group are those of the regression on the group-demeaned variables, and the
demeaned cross products of a group follow from its raw sums.

:func:`plan_next_step` turns the latest estimates into the most aft CG for the
next flight by the one next-CG rule of :mod:`trimlog.stability.critical`: the
95 % lower bound of every known static margin (stick-fixed and stick-free) at
or above a minimum (a policy choice, not a rule), capped by a step beyond the
most aft CG flown and by the aft limit.

References
----------
Frisch, R. and Waugh, F. V. (1933), Econometrica 1:387-401; Lovell, M. C.
(1963), J. Am. Stat. Assoc. 58:993-1010 (partialling out group intercepts).
Fieller, E. C. (1954), J. R. Stat. Soc. B 16:175-185.
USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1, ch. 5
(1990): stabilized-trim method and incremental CG expansion.
FAA AC 90-89B (2015), *Amateur-Built Aircraft and Ultralight Flight Testing
Handbook*: expand the CG envelope in small steps.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trimlog.input.profile import AircraftProfile
from trimlog.stability.critical import next_cg_limit
from trimlog.stability.neutral_points import (
    MIN_CG_SPREAD_PCT_MAC,
    MIN_CL_SPREAD,
    MIN_FLIGHTS_WITH_SPEED_RANGE,
    neutral_point_from_coefficients,
    too_few_speed_ranges,
)
from trimlog.stability.results import NeutralPoint, NextStep

__all__ = ["NextStep", "TrendStep", "neutral_point_sequence", "plan_next_step"]

#: Relative size of the smallest eigenvalue of the demeaned 2x2 cross-product
#: matrix below which CL and h*CL are taken as collinear.
_COLLINEAR = 1e-10


@dataclass(frozen=True)
class TrendStep:
    """Neutral points estimated from the first ``n_flights`` flights.

    Attributes
    ----------
    n_flights : int
    flight : str
        The flight added at this step.
    cg_pct_mac : float
        Mean CG of that flight's included points [%MAC].
    stick_fixed, stick_free : NeutralPoint or None
        None for stick-free when no force was logged so far.
    """

    n_flights: int
    flight: str
    cg_pct_mac: float | None
    stick_fixed: NeutralPoint
    stick_free: NeutralPoint | None


class _WithinSums:
    """Group-demeaned cross products of (CL, h*CL, y), kept as a running total.

    A group's demeaned cross-product matrix is ``M - m m'/n`` from its raw
    sums ``M`` of ``z z'`` with ``z = (1, CL, h*CL, y)``.  Groups that can grow
    later (stabilizer settings, shared by several flights) keep their raw sums;
    groups that are complete when added (flights) go straight into the total.
    """

    def __init__(self) -> None:
        self.open: dict[str, np.ndarray] = {}
        self.closed = np.zeros((4, 4))
        self.n = 0
        self.n_groups = 0

    @staticmethod
    def _raw(y: np.ndarray, x: np.ndarray) -> np.ndarray:
        z = np.empty((len(y), 4))  # (1, CL, h*CL, y), filled in place: called per flight
        z[:, 0] = 1.0
        z[:, 1:3] = x
        z[:, 3] = y
        return z.T @ z

    @staticmethod
    def _demeaned(m: np.ndarray) -> np.ndarray:
        return m - np.outer(m[0], m[0]) / m[0, 0]

    def add_open(self, groups: np.ndarray, y: np.ndarray, x: np.ndarray) -> None:
        if len(groups) and bool((groups == groups[0]).all()):  # a flight at one setting
            self._open(groups[0])[...] += self._raw(y, x)
        else:
            for g in dict.fromkeys(groups):
                mask = groups == g
                self._open(g)[...] += self._raw(y[mask], x[mask])
        self.n += len(y)

    def _open(self, group: str) -> np.ndarray:
        """The raw sums of a group that can grow (new: zeros, and one more group)."""
        if group not in self.open:
            self.open[group] = np.zeros((4, 4))
            self.n_groups += 1
        return self.open[group]

    def add_closed(self, y: np.ndarray, x: np.ndarray) -> None:
        self.closed += self._demeaned(self._raw(y, x))
        self.n += len(y)
        self.n_groups += 1

    def within(self) -> np.ndarray:
        total = self.closed.copy()
        for m in self.open.values():
            total += self._demeaned(m)
        return total


class _Ranges:
    """Running extremes of h and CL."""

    def __init__(self) -> None:
        self.h = [np.inf, -np.inf]
        self.cl = [np.inf, -np.inf]
        self.swept_flights = 0

    def add(self, h: np.ndarray, cl: np.ndarray) -> None:
        self.h = [min(self.h[0], h.min()), max(self.h[1], h.max())]
        self.cl = [min(self.cl[0], cl.min()), max(self.cl[1], cl.max())]
        self.swept_flights += int(np.ptp(cl) >= MIN_CL_SPREAD)

    @property
    def cg_spread_pct_mac(self) -> float:
        return max(100.0 * float(self.h[1] - self.h[0]), 0.0) if np.isfinite(self.h[0]) else 0.0

    @property
    def cl_spread(self) -> float:
        return max(float(self.cl[1] - self.cl[0]), 0.0) if np.isfinite(self.cl[0]) else 0.0


def _solve_2x2(total: np.ndarray) -> tuple[float, float, float, tuple[float, float, float]] | None:
    """Least squares of y on (CL, h*CL) from the demeaned cross products, in closed form.

    ``total`` holds the sums of ``(1, CL, h*CL, y)``; returns the coefficients
    ``b, c``, the residual sum of squares and the inverse of the 2x2 matrix
    ``X'X`` (entries 00, 11, 01), or None when its smaller eigenvalue is below
    :data:`_COLLINEAR` times the larger (CL and h*CL collinear).  Written out
    because the trend solves one such system per flight and step, where
    numpy's general routines cost ten times more than the arithmetic.
    """
    a, d, o = float(total[1, 1]), float(total[2, 2]), float(total[1, 2])
    ya, yd, yy = float(total[1, 3]), float(total[2, 3]), float(total[3, 3])
    half, det = 0.5 * (a + d), a * d - o * o
    large = half + math.sqrt(max(half * half - det, 0.0))
    small = det / large if large > 0.0 else 0.0  # the product of the two is det
    if not small > _COLLINEAR * max(large, 1e-300):
        return None
    inv = (d / det, a / det, -o / det)
    b = inv[0] * ya + inv[2] * yd
    c = inv[2] * ya + inv[1] * yd
    return b, c, max(yy - (b * ya + c * yd), 0.0), inv


def _pooled_from_sums(
    sums: _WithinSums, ranges: _Ranges, *, kind: str, n_flights: int, profile: AircraftProfile,
) -> NeutralPoint:
    spread, cl_spread = ranges.cg_spread_pct_mac, ranges.cl_spread
    if (ranges.swept_flights < MIN_FLIGHTS_WITH_SPEED_RANGE
            and spread >= MIN_CG_SPREAD_PCT_MAC and cl_spread >= MIN_CL_SPREAD):
        reason = too_few_speed_ranges(ranges.swept_flights)
        return NeutralPoint(kind, "pooled", False, None, None, None, None, None, None, reason,
                            spread, sums.n, n_flights)
    total = sums.within()
    n = sums.n
    df = n - sums.n_groups - 2
    solved = _solve_2x2(total) if cl_spread >= MIN_CL_SPREAD and df >= 1 else None
    if solved is not None:
        b, c, rss, (vbb, vcc, vbc) = solved
        s2 = rss / df
        return neutral_point_from_coefficients(
            b, c, s2 * vbb, s2 * vcc, s2 * vbc, df,
            kind=kind, method="pooled", spread=spread, n=n, n_flights=n_flights,
            lemac_in=profile.lemac_in, mac_in=profile.mac_in,
        )
    if cl_spread < MIN_CL_SPREAD:
        reason = f"CL spans only {cl_spread:.3f} over all points: no trim gradient"
    elif df < 1:
        reason = f"{n} points for {sums.n_groups + 2} coefficients: more points are needed"
    else:
        reason = ("all points were flown at one CG, or CG and CL vary together: a neutral "
                  "point needs flights at several CGs, each over a range of speeds")
    return NeutralPoint(kind, "pooled", False, None, None, None, None, None, None, reason,
                        spread, n, n_flights)


def neutral_point_sequence(
    points: pd.DataFrame, flight_order: Sequence[str], profile: AircraftProfile
) -> tuple[TrendStep, ...]:
    """Pooled neutral points after each successive flight.

    Parameters
    ----------
    points : DataFrame
        Reduced points of one configuration (the Reduced-points contract);
        only ``included`` rows count.
    flight_order : sequence of str
        Flights in the order they were flown.
    profile : AircraftProfile
        MAC and its leading edge, for stations.

    Returns
    -------
    tuple of TrendStep
        One per flight in ``flight_order``.
    """
    used = points.loc[points["included"].astype(bool)]
    flight = used["flight"].astype(str).to_numpy()
    setting = used["stab_setting"].astype(str).to_numpy()
    cl = used["cl"].to_numpy(dtype=float)
    h = used["h"].to_numpy(dtype=float)
    elevator = used["elevator_deg"].to_numpy(dtype=float)
    fsq = used["fs_over_q_ft2"].to_numpy(dtype=float)
    x = np.column_stack([cl, h * cl])
    rows_of = pd.Series(np.arange(len(flight))).groupby(flight, sort=False).indices

    fixed, free = _WithinSums(), _WithinSums()
    fixed_range, free_range = _Ranges(), _Ranges()
    steps = []
    flights_with_points = flights_with_force = 0
    for k, name in enumerate(flight_order, start=1):
        rows = rows_of.get(str(name))
        cg = None
        if rows is not None and len(rows):
            flights_with_points += 1
            cg = 100.0 * float(h[rows].mean())
            fixed.add_open(setting[rows], elevator[rows], x[rows])
            fixed_range.add(h[rows], cl[rows])
            forced = rows[np.isfinite(fsq[rows])]
            if len(forced):
                flights_with_force += 1
                free.add_closed(fsq[forced], x[forced])
                free_range.add(h[forced], cl[forced])
        fixed_np = _pooled_from_sums(fixed, fixed_range, kind="stick_fixed",
                                     n_flights=flights_with_points, profile=profile)
        free_np = None
        if flights_with_force:
            free_np = _pooled_from_sums(free, free_range, kind="stick_free",
                                        n_flights=flights_with_force, profile=profile)
        steps.append(TrendStep(k, str(name), cg, fixed_np, free_np))
    return tuple(steps)


def plan_next_step(
    latest: NeutralPoint,
    flown_cg_pct_mac: Sequence[float],
    profile: AircraftProfile,
    *,
    min_margin_pct_mac: float | None = None,
    step_max_pct_mac: float | None = None,
    aft_gradient_clearly_stable: bool = False,
    stick_free: NeutralPoint | None = None,
) -> NextStep:
    """Most aft CG for the next flight: the profile's policy over :func:`next_cg_limit`.

    Parameters
    ----------
    latest : NeutralPoint
        The current stick-fixed estimate (all flights so far).
    flown_cg_pct_mac : sequence of float
        CGs flown so far [%MAC].
    profile : AircraftProfile
        Aft limit, default margin policy and step.
    min_margin_pct_mac, step_max_pct_mac : float, optional
        Override the profile's minimum static margin and largest step [%MAC].
    aft_gradient_clearly_stable : bool
        Whether the trim gradients at the most aft CG flown are stable with
        their whole 95 % interval; used only while neither neutral point is
        identifiable.
    stick_free : NeutralPoint, optional
        The current stick-free estimate; None when no stick force was logged
        (the reason then says the step rests on the stick-fixed point alone).

    Returns
    -------
    NextStep

    Notes
    -----
    The rule itself is :func:`trimlog.stability.critical.next_cg_limit`, the
    same one ``trimlog analyze`` uses: the smallest of ``hn_lo - SM_min`` for
    each identifiable neutral point, the most aft CG flown plus the step, and
    the aft limit.
    """
    min_sm = profile.min_static_margin_pct_mac if min_margin_pct_mac is None else (
        min_margin_pct_mac)
    step = profile.cg_step_max_pct_mac if step_max_pct_mac is None else step_max_pct_mac
    return next_cg_limit(latest, stick_free, flown_cg_pct_mac,
                         aft_limit_pct_mac=profile.cg_aft_pct_mac, min_margin_pct_mac=min_sm,
                         step_max_pct_mac=step, station=profile.station,
                         aft_gradient_clearly_stable=aft_gradient_clearly_stable)
