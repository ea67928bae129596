"""The critical neutral point and the one rule for how far aft the next flight may go.

Two neutral points come out of trim data: stick-fixed ``hn`` (elevator to
trim) and stick-free ``hn'`` (stick force to trim).  The stick-free one is
usually further forward, and stick-force stability is what the airworthiness
rules ask for, so a margin, a verdict or a step aft must use whichever of the
two is *critical*: the one whose lower 95 % bound lies further forward [1]_
[2]_.  When no stick force was logged the stick-free margin is unknown, and
every conclusion says that it rests on the stick-fixed point alone.

:func:`next_cg_limit` is the only next-CG rule of the package: ``trimlog
analyze`` (through :func:`trimlog.stability.neutral_points.analyze_stability`)
and ``trimlog plan`` (through :func:`trimlog.stability.trend.plan_next_step`)
both call it, and the precision planner
(:func:`trimlog.stability.margins.plan_next_cg`) searches only forward of
the CG it allows.

References
----------
.. [1] R. C. Nelson, *Flight Stability and Automatic Control*, 2nd ed.,
   McGraw-Hill, 1998, sec. 2.7 (stick-free neutral point forward of the
   stick-fixed one with a free elevator floating).
.. [2] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   ch. 5, 1990 (DTIC ADA319976): stick-fixed and stick-free neutral points,
   incremental CG expansion.
.. [3] FAA AC 90-89B (2015), *Amateur-Built Aircraft and Ultralight Flight
   Testing Handbook*: expand the CG envelope in small steps.
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence

from trimlog.stability.results import (
    STEP_LIMIT_WORDS,
    CriticalNeutralPoint,
    FlightGradient,
    NeutralPoint,
    NextStep,
    step_limit_words,
)

__all__ = [
    "KIND_CODE",
    "MIN_CG_SPREAD_PCT_MAC",
    "STEP_LIMIT_WORDS",
    "aft_flight_clearly_stable",
    "critical_neutral_point",
    "margin_limit",
    "next_cg_limit",
    "step_limit_words",
    "tighten_next_step",
]

#: Smallest spread of CG over the flights for a neutral point [%MAC].  With
#: less, the extrapolation to zero gradient multiplies the scatter of the
#: gradients by (distance to hn)/(CG spread) and the estimate is mostly noise.
MIN_CG_SPREAD_PCT_MAC = 3.0
#: The ``limited_by`` code of each neutral point kind (JSON contract values).
KIND_CODE = {"stick_fixed": "stick_fixed_np", "stick_free": "stick_free_np"}
_WORDS = {"stick_fixed": "stick-fixed", "stick_free": "stick-free"}


def _known(np_: NeutralPoint | None) -> bool:
    return np_ is not None and bool(np_.identifiable) and np_.ci95_pct_mac is not None


def stick_free_unknown_text(stick_free: NeutralPoint | None) -> str:
    """Why the stick-free margin is unknown, in words ("" when it is known)."""
    if stick_free is None:
        return ("no stick force was logged, so the stick-free margin is unknown and this "
                "rests on the stick-fixed neutral point alone")
    if not _known(stick_free):
        return ("the stick-free neutral point is not identifiable yet"
                + (f" ({stick_free.reason})" if stick_free.reason else "")
                + ", so the stick-free margin is unknown and this rests on the stick-fixed "
                "neutral point alone")
    return ""


def critical_neutral_point(stick_fixed: NeutralPoint | None,
                           stick_free: NeutralPoint | None) -> CriticalNeutralPoint | None:
    """The neutral point whose lower 95 % bound is further forward.

    Parameters
    ----------
    stick_fixed, stick_free : NeutralPoint or None
        The estimates; None (or not identifiable) when unknown.

    Returns
    -------
    CriticalNeutralPoint or None
        None when neither is identifiable.  On a tie the stick-free point is
        taken (the one the airworthiness rules are about).

    Examples
    --------
    >>> from trimlog.stability.results import NeutralPoint
    >>> def np_(kind, est, lo, hi):
    ...     return NeutralPoint(kind, "pooled", True, est, (lo, hi), None, None, None, None,
    ...                         "", 10.0, 30, 4)
    >>> critical_neutral_point(np_("stick_fixed", 40, 38, 42), np_("stick_free", 33, 31, 35)).kind
    'stick_free'
    """
    known = [n for n in (stick_free, stick_fixed) if _known(n)]
    if not known:
        return None
    best = min(known, key=lambda n: n.ci95_pct_mac[0])
    if len(known) == 2:
        other = stick_fixed if best is stick_free else stick_free
        reason = (f"the {_WORDS[best.kind]} neutral point limits: its lower 95 % bound "
                  f"{best.ci95_pct_mac[0]:.1f} %MAC is forward of the {_WORDS[other.kind]} one "
                  f"({other.ci95_pct_mac[0]:.1f} %MAC)")
    elif best.kind == "stick_fixed":
        reason = "the stick-fixed neutral point limits: " + stick_free_unknown_text(stick_free)
    else:
        reason = ("the stick-free neutral point limits: the stick-fixed one is not identifiable"
                  + (f" ({stick_fixed.reason})" if stick_fixed is not None and stick_fixed.reason
                     else ""))
    return CriticalNeutralPoint(best.kind, float(best.pct_mac),
                                (float(best.ci95_pct_mac[0]), float(best.ci95_pct_mac[1])),
                                best.station_in, reason)


def margin_limit(cg_pct_mac: float, stick_fixed: NeutralPoint | None,
                 stick_free: NeutralPoint | None, min_static_margin_pct_mac: float | None
                 ) -> tuple[float | None, float | None, bool | None, str | None]:
    """Lower 95 % bounds of both margins at one CG, the verdict, and the limiting point.

    Parameters
    ----------
    cg_pct_mac : float
        CG [%MAC].
    stick_fixed, stick_free : NeutralPoint or None
    min_static_margin_pct_mac : float or None
        Policy minimum [%MAC]; None gives no verdict.

    Returns
    -------
    (fixed_lower, free_lower, meets_minimum, limited_by)
        Bounds [%MAC] (None when unknown); ``meets_minimum`` True only when
        every known bound is at or above the minimum, None when none is
        known; ``limited_by`` ``"stick_fixed_np"``/``"stick_free_np"`` or None.

    Examples
    --------
    >>> from trimlog.stability.results import NeutralPoint
    >>> free = NeutralPoint("stick_free", "pooled", True, 33.0, (31.0, 35.0), None, None,
    ...                     None, None, "", 10.0, 30, 4)
    >>> margin_limit(28.0, None, free, 5.0)
    (None, 3.0, False, 'stick_free_np')
    """
    fixed_lo = (stick_fixed.ci95_pct_mac[0] - cg_pct_mac) if _known(stick_fixed) else None
    free_lo = (stick_free.ci95_pct_mac[0] - cg_pct_mac) if _known(stick_free) else None
    bounds = {k: v for k, v in (("stick_free_np", free_lo), ("stick_fixed_np", fixed_lo))
              if v is not None}
    if not bounds:
        return None, None, None, None
    limited_by = min(bounds, key=bounds.get)
    meets = None
    if min_static_margin_pct_mac is not None:
        meets = all(v >= min_static_margin_pct_mac for v in bounds.values())
    return fixed_lo, free_lo, meets, limited_by


def aft_flight_clearly_stable(gradients: Sequence[FlightGradient]) -> bool:
    """Whether the most aft flight is stable with the whole 95 % interval of its gradients.

    The elevator-to-trim gradient must be negative, and when stick force was
    logged on that flight ``d(Fs/q)/dCL`` must be positive (pull positive),
    each with its whole 95 % interval.  Used only while neither neutral point
    is identifiable.
    """
    usable = [g for g in gradients if g.cg_pct_mac is not None and math.isfinite(g.cg_pct_mac)]
    if not usable:
        return False
    aft = max(usable, key=lambda g: g.cg_pct_mac)
    ci = aft.delev_dcl_ci95_deg
    if ci is None or not ci[1] < 0.0:
        return False
    if aft.n_force_points:
        fci = aft.dfsq_dcl_ci95_ft2
        return fci is not None and fci[0] > 0.0
    return True


def next_cg_limit(
    stick_fixed: NeutralPoint | None,
    stick_free: NeutralPoint | None,
    flown_cg_pct_mac: Sequence[float | None],
    *,
    aft_limit_pct_mac: float,
    min_margin_pct_mac: float,
    step_max_pct_mac: float,
    station=None,
    aft_gradient_clearly_stable: bool = False,
    extra_limits: Mapping[str, tuple[float, str]] | None = None,
) -> NextStep:
    """Most aft CG for the next flight: the one next-CG rule of the package.

    Parameters
    ----------
    stick_fixed, stick_free : NeutralPoint or None
        Latest estimates (None for stick-free when no force was logged).
    flown_cg_pct_mac : sequence of float
        Mean CGs of the flights so far [%MAC].
    aft_limit_pct_mac : float
        The aircraft's aft CG limit [%MAC].
    min_margin_pct_mac : float
        Policy minimum static margin [%MAC] (a policy choice, not a rule).
    step_max_pct_mac : float
        Largest step beyond the most aft CG flown [%MAC].
    station : callable, optional
        ``%MAC -> station [in]`` (the profile's ``station``).
    aft_gradient_clearly_stable : bool
        See :func:`aft_flight_clearly_stable`; used only while neither
        neutral point is identifiable.
    extra_limits : mapping of str to (float, str), optional
        Further most-aft CGs [%MAC] by ``limited_by`` code, with their words
        (the maneuvering limits of :mod:`trimlog.stability.maneuver`); see
        :func:`tighten_next_step`.

    Returns
    -------
    NextStep

    Notes
    -----
    For each identifiable neutral point the largest CG keeping the lower 95 %
    bound of its margin at or above ``SM_min`` is ``hn_lo - SM_min``; the
    suggestion is the smallest of those, the most aft CG flown plus the
    step, and the aft limit, and ``limited_by`` names which.  While neither
    point is identifiable only the policy step is allowed, and only when the
    most aft flight is clearly stable.

    Examples
    --------
    >>> from trimlog.stability.results import NeutralPoint
    >>> def np_(kind, est, lo, hi):
    ...     return NeutralPoint(kind, "pooled", True, est, (lo, hi), None, None, None, None,
    ...                         "", 10.0, 30, 4)
    >>> s = next_cg_limit(np_("stick_fixed", 40, 39, 41), np_("stick_free", 33, 32, 34),
    ...                   [20, 23, 25], aft_limit_pct_mac=38, min_margin_pct_mac=5,
    ...                   step_max_pct_mac=3)
    >>> s.max_cg_pct_mac, s.limited_by, s.margin_bound_pct_mac
    (27.0, 'stick_free_np', 27.0)
    """
    result = _next_cg_limit(stick_fixed, stick_free, flown_cg_pct_mac,
                            aft_limit_pct_mac=aft_limit_pct_mac,
                            min_margin_pct_mac=min_margin_pct_mac,
                            step_max_pct_mac=step_max_pct_mac, station=station,
                            aft_gradient_clearly_stable=aft_gradient_clearly_stable)
    return tighten_next_step(result, extra_limits or {}, station)


def tighten_next_step(step: NextStep, limits: Mapping[str, tuple[float, str]],
                      station=None) -> NextStep:
    """The hook for further limits on the next CG (maneuver margins, stick force per g).

    Parameters
    ----------
    step : NextStep
        From the neutral-point rule.
    limits : mapping of str to (float, str)
        ``limited_by`` code -> (most aft CG it allows [%MAC], its words).
    station : callable, optional
        ``%MAC -> station [in]``.

    Returns
    -------
    NextStep
        The same step when no limit is more forward; else the most forward
        limit, named in ``limited_by`` and the reason, or no step at all when
        it is not aft of the most aft CG flown.

    Examples
    --------
    >>> s = NextStep(27.0, None, 5.0, 3.0, 25.0, "stick_free_np", "the rule")
    >>> t = tighten_next_step(s, {"min_stick_force_per_g": (26.0, "minimum stick force per g")})
    >>> t.max_cg_pct_mac, t.limited_by
    (26.0, 'min_stick_force_per_g')
    """
    if step.max_cg_pct_mac is None or not limits:
        return step
    code = min(limits, key=lambda k: limits[k][0])
    value, words = float(limits[code][0]), limits[code][1]
    if value >= step.max_cg_pct_mac:
        return step
    reason = f"{step.reason}; the {words} allows up to {value:.1f} %MAC and sets the limit"
    most_aft = step.most_aft_flown_pct_mac
    if most_aft is not None and value <= most_aft:
        return dataclasses.replace(
            step, max_cg_pct_mac=None, max_cg_station_in=None, limited_by=code,
            reason=reason + ", which allows no step aft of the CGs already flown")
    where = None if station is None else float(station(value))
    return dataclasses.replace(step, max_cg_pct_mac=value, max_cg_station_in=where,
                               limited_by=code, reason=reason)


def _next_cg_limit(
    stick_fixed: NeutralPoint | None,
    stick_free: NeutralPoint | None,
    flown_cg_pct_mac: Sequence[float | None],
    *,
    aft_limit_pct_mac: float,
    min_margin_pct_mac: float,
    step_max_pct_mac: float,
    station=None,
    aft_gradient_clearly_stable: bool = False,
) -> NextStep:
    """The neutral-point part of :func:`next_cg_limit` (see there)."""
    min_sm, step = float(min_margin_pct_mac), float(step_max_pct_mac)
    flown = [float(c) for c in flown_cg_pct_mac if c is not None and math.isfinite(c)]

    def out(value: float | None, most_aft: float | None, limited_by: str, reason: str,
            bound: float | None = None) -> NextStep:
        where = None if value is None or station is None else float(station(value))
        return NextStep(value, where, min_sm, step, most_aft, limited_by, reason, bound)

    if not flown:
        return out(None, None, "none", "no flight with usable points yet: start at a forward CG "
                   "within the aircraft's limits, as the programme plan says")
    most_aft = max(flown)
    by_step = most_aft + step
    unknown_free = stick_free_unknown_text(stick_free)
    critical = critical_neutral_point(stick_fixed, stick_free)
    if critical is None:
        why = "; ".join(f"{_WORDS[n.kind]}: {n.reason}" for n in (stick_fixed, stick_free)
                        if n is not None and n.reason)
        if not aft_gradient_clearly_stable:
            return out(None, most_aft, "none",
                       "neither neutral point is identifiable yet"
                       + (f" ({why})" if why else "")
                       + f" and the trim gradients at the most aft CG flown ({most_aft:.1f} "
                       "%MAC) are not clearly stable: do not move aft; re-fly or add a flight "
                       "at a more forward CG to spread the data")
        value = min(by_step, aft_limit_pct_mac)
        return out(value, most_aft, "policy_step" if value == by_step else "aft_limit",
                   "neither neutral point is identifiable yet" + (f" ({why})" if why else "")
                   + f"; the trim gradients at {most_aft:.1f} %MAC are clearly stable, so only "
                   f"the profile's policy step of {step:g} %MAC beyond the most aft CG flown is "
                   "allowed" + (", held at the aft limit" if value < by_step else "")
                   + "; it is not backed by a neutral-point estimate")
    candidates: dict[str, float] = {}
    parts = []
    for n in (stick_free, stick_fixed):
        if _known(n):
            lo = float(n.ci95_pct_mac[0])
            candidates[KIND_CODE[n.kind]] = lo - min_sm
            parts.append(f"{_WORDS[n.kind]} neutral point {n.pct_mac:.1f} %MAC (lower 95 % "
                         f"bound {lo:.1f}) allows up to {lo - min_sm:.1f} %MAC")
    candidates["policy_step"] = by_step
    candidates["aft_limit"] = float(aft_limit_pct_mac)
    limited_by = min(candidates, key=candidates.get)
    value = candidates[limited_by]
    basis = (f"keeping the lower 95 % bound of every known static margin at or above "
             f"{min_sm:g} %MAC: " + "; ".join(parts)
             + f"; the policy step allows {by_step:.1f} %MAC ({step:g} %MAC beyond the most "
             f"aft CG flown, {most_aft:.1f} %MAC); the aft limit is {aft_limit_pct_mac:.1f} %MAC"
             + (f"; {unknown_free}" if unknown_free else ""))
    names = STEP_LIMIT_WORDS
    bound = min((v for k, v in candidates.items() if k in ("stick_free_np", "stick_fixed_np")),
                default=None)
    if value <= most_aft:
        return out(None, most_aft, limited_by,
                   basis + f": the {names[limited_by]} allows no step aft of the CGs already "
                   "flown; tighten the estimate first (more points, a flight at a forward CG) "
                   "or accept the present envelope", bound)
    return out(value, most_aft, limited_by, basis + f": the {names[limited_by]} sets the limit",
               bound)
