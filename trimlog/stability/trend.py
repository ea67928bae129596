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

:func:`plan_next_step` turns the latest estimate into the most aft CG for the
next flight that keeps the 95 % lower bound of the static margin at or above a
minimum (a policy choice, not a rule), capped by a step beyond the most aft CG
flown and by the aft limit.

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

from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trimlog.input.profile import AircraftProfile
from trimlog.stability.neutral_points import (
    MIN_CG_SPREAD_PCT_MAC,
    MIN_CL_SPREAD,
    MIN_FLIGHTS_WITH_SPEED_RANGE,
    neutral_point_from_coefficients,
    too_few_speed_ranges,
)
from trimlog.stability.results import NeutralPoint

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


@dataclass(frozen=True)
class NextStep:
    """The most aft CG for the next flight, with the reasoning.

    Attributes
    ----------
    max_cg_pct_mac, max_cg_station_in : float or None
        None when no step aft can be supported.
    min_static_margin_pct_mac : float
        The margin policy used [%MAC].
    step_max_pct_mac : float
        Largest step beyond the most aft CG flown [%MAC].
    most_aft_flown_pct_mac : float or None
    limited_by : str
        ``"margin"``, ``"step"``, ``"aft limit"``, ``"policy step only"`` or ``"none"``.
    reason : str
        The reasoning in plain words.
    """

    max_cg_pct_mac: float | None
    max_cg_station_in: float | None
    min_static_margin_pct_mac: float
    step_max_pct_mac: float
    most_aft_flown_pct_mac: float | None
    limited_by: str
    reason: str


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
        z = np.column_stack([np.ones(len(y)), x, y])
        return z.T @ z

    @staticmethod
    def _demeaned(m: np.ndarray) -> np.ndarray:
        return m - np.outer(m[0], m[0]) / m[0, 0]

    def add_open(self, groups: np.ndarray, y: np.ndarray, x: np.ndarray) -> None:
        for g in dict.fromkeys(groups):
            mask = groups == g
            if g not in self.open:
                self.open[g] = np.zeros((4, 4))
                self.n_groups += 1
            self.open[g] += self._raw(y[mask], x[mask])
        self.n += len(y)

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
    xx, xy, yy = total[1:3, 1:3], total[1:3, 3], float(total[3, 3])
    n = sums.n
    df = n - sums.n_groups - 2
    ok = cl_spread >= MIN_CL_SPREAD and df >= 1
    eig = np.linalg.eigvalsh(xx) if ok else np.zeros(2)
    if ok and eig[0] > _COLLINEAR * max(eig[1], 1e-300):
        (b, c) = np.linalg.solve(xx, xy)
        rss = max(yy - float(b * xy[0] + c * xy[1]), 0.0)
        cov = rss / df * np.linalg.inv(xx)
        return neutral_point_from_coefficients(
            float(b), float(c), float(cov[0, 0]), float(cov[1, 1]), float(cov[0, 1]), df,
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
) -> NextStep:
    """Most aft CG for the next flight that keeps the static margin's lower bound above a minimum.

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
        Whether the elevator-to-trim gradient at the most aft CG flown is
        negative with its whole 95 % interval; used only while the neutral
        point is not yet identifiable.

    Returns
    -------
    NextStep

    Notes
    -----
    The static margin at CG ``h`` is ``hn - h``; its lower 95 % bound is
    ``hn_lo - h`` with ``hn_lo`` the lower Fieller bound, so the largest CG
    keeping that bound at or above ``SM_min`` is ``hn_lo - SM_min``.  The
    suggestion is the smallest of that, the most aft CG flown plus the step,
    and the aft limit.
    """
    min_sm = profile.min_static_margin_pct_mac if min_margin_pct_mac is None else (
        min_margin_pct_mac)
    step = profile.cg_step_max_pct_mac if step_max_pct_mac is None else step_max_pct_mac
    aft_limit = profile.cg_aft_pct_mac
    flown = [c for c in flown_cg_pct_mac if c is not None and np.isfinite(c)]
    if not flown:
        return NextStep(None, None, min_sm, step, None, "none",
                        "no flight with usable points yet: start at a forward CG within the "
                        "aircraft's limits, as the programme plan says")
    most_aft = max(flown)
    by_step = most_aft + step

    def result(value: float, limited_by: str, reason: str) -> NextStep:
        return NextStep(value, profile.station(value), min_sm, step, most_aft, limited_by, reason)

    if not latest.identifiable:
        if not aft_gradient_clearly_stable:
            return NextStep(
                None, None, min_sm, step, most_aft, "none",
                "the neutral point is not identifiable yet and the trim gradient at the most aft "
                f"CG flown ({most_aft:.1f} %MAC) is not clearly stable: do not move aft; re-fly "
                "or add a flight at a more forward CG to spread the data",
            )
        value = min(by_step, aft_limit)
        return result(
            value, "policy step only",
            f"the neutral point is not identifiable yet ({latest.reason}); the trim gradient at "
            f"{most_aft:.1f} %MAC is clearly stable, so the suggestion is only the policy step of "
            f"{step:g} %MAC beyond the most aft CG flown"
            + (", held at the aft limit" if value < by_step else "")
            + "; it is not backed by a neutral-point estimate",
        )
    lo = latest.ci95_pct_mac[0]
    by_margin = lo - min_sm
    candidates = {"margin": by_margin, "step": by_step, "aft limit": aft_limit}
    limited_by = min(candidates, key=candidates.get)
    value = candidates[limited_by]
    basis = (
        f"neutral point {latest.pct_mac:.1f} %MAC, lower 95 % bound {lo:.1f} %MAC; keeping the "
        f"lower bound of the static margin at or above {min_sm:g} %MAC allows up to "
        f"{by_margin:.1f} %MAC; the step limit allows {by_step:.1f} %MAC "
        f"({step:g} %MAC beyond the most aft CG flown, {most_aft:.1f} %MAC); the aft limit is "
        f"{aft_limit:.1f} %MAC"
    )
    if value <= most_aft:
        return NextStep(
            None, None, min_sm, step, most_aft, limited_by,
            basis + ": no step aft of the CGs already flown is supported; tighten the estimate "
            "first (more points, a flight at a forward CG) or accept the present envelope",
        )
    return result(value, limited_by, basis + f": the {limited_by} sets the suggestion")
