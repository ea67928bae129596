"""Static margins, elevator prediction and authority, and the next CG to fly.

These take the fits of :mod:`trimlog.stability.neutral_points` and the aircraft profile.

References
----------
.. [1] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, sec. 2.3 (static margin), 2.5 (elevator angle to
   trim) and 2.6 (control-fixed forward CG limit from elevator travel).
.. [2] R. C. Nelson, *Flight Stability and Automatic Control*, 2nd ed.,
   McGraw-Hill, 1998, sec. 2.5 (elevator angle to trim, forward CG limit).
.. [3] D. C. Montgomery, E. A. Peck and G. G. Vining, *Introduction to Linear
   Regression Analysis*, 5th ed., Wiley, 2012, sec. 2.4 and 3.4 (confidence and
   prediction intervals).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from trimlog import cautions
from trimlog.errors import TrimlogError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import AircraftProfile
from trimlog.stability.critical import MIN_CG_SPREAD_PCT_MAC, margin_limit
from trimlog.stability.results import (
    AuthorityCase,
    CruiseElevators,
    ElevatorAuthority,
    ElevatorPrediction,
    NeutralPoint,
    NextCg,
    PooledFit,
    StaticMargin,
    StopFlag,
)
from trimlog.statistics.fits import finite, finite_pair, t_quantile, trim_design
from trimlog.statistics.roots import brent_root

#: A point within this of an elevator stop is flagged [deg].
STOP_TOLERANCE_DEG = 0.5
#: Typical light-aircraft elevator travel [deg].  # common practice, no source
TYPICAL_UP_STOP_DEG = (20.0, 25.0)
TYPICAL_DOWN_STOP_DEG = (15.0, 20.0)
#: Step of the candidate CGs searched for the next flight [%MAC].
NEXT_CG_STEP_PCT_MAC = 0.25

#: Widest half of a 95 % interval of a predicted elevator still shown as a number [deg]:
#: beyond it the number cannot be acted on.  # common practice, no source
MAX_AUTHORITY_HALF_WIDTH_DEG = 5.0
MAX_CRUISE_ELEVATOR_HALF_WIDTH_DEG = 1.5
#: Farthest a prediction may reach beyond the CGs flown, as a fraction of their spread.
MAX_CG_EXTRAPOLATION_FRACTION = 0.5


def cannot_say_yet(fit: PooledFit, cg_pct_mac: float, what: str) -> str:
    """Why a prediction from the stick-fixed model at a CG cannot be acted on yet ("" if it can).

    Parameters
    ----------
    fit : PooledFit
        The stick-fixed pooled fit.
    cg_pct_mac : float
        Where the prediction is wanted [%MAC].
    what : str
        What is predicted, for the words ("the elevator at CLmax at the forward CG limit").

    Returns
    -------
    str
        The reason and the flight that would settle it, or "".

    Notes
    -----
    Cannot say yet when the CG effect is not identified and the CG wanted is
    more than 1 %MAC from the CG flown, or when it lies beyond the CGs flown by
    more than :data:`MAX_CG_EXTRAPOLATION_FRACTION` of their spread.
    """
    if fit.linear is None or fit.cg_range_pct_mac is None:
        return f"cannot say yet: no trim model ({fit.neutral_point.reason})"
    lo, hi = fit.cg_range_pct_mac
    cg_effect_known = fit.has_cg_term and hi - lo >= MIN_CG_SPREAD_PCT_MAC
    if not cg_effect_known and abs(cg_pct_mac - 0.5 * (lo + hi)) > 1.0:
        return (f"cannot say yet: {what} is at {cg_pct_mac:.1f} %MAC, but only one CG "
                f"({0.5 * (lo + hi):.1f} %MAC) has been flown, so the effect of the CG is not "
                "known; a flight over the same range of speeds at a CG at least 3 %MAC from "
                f"it, towards {cg_pct_mac:.1f} %MAC, would settle it")
    reach = MAX_CG_EXTRAPOLATION_FRACTION * (hi - lo)
    if not lo - reach <= cg_pct_mac <= hi + reach:
        return (f"cannot say yet: {what} is at {cg_pct_mac:.1f} %MAC, far beyond the CGs flown "
                f"({lo:.1f}-{hi:.1f} %MAC); a flight nearer {cg_pct_mac:.1f} %MAC would "
                "settle it")
    return ""


#: The ground-effect caution every authority result carries (text owned by cautions.py).
GROUND_EFFECT_NOTE = cautions.AUTHORITY[0]


def static_margins(
    cgs: list[tuple[str, str | None, float]],
    stick_fixed: NeutralPoint,
    stick_free: NeutralPoint | None,
    min_static_margin_pct_mac: float | None = None,
) -> tuple[StaticMargin, ...]:
    """Give the static margins ``hn - h`` [%MAC] at some CGs, with Fieller bounds shifted.

    Parameters
    ----------
    cgs : list of (label, flight or None, cg_pct_mac)
        CGs [%MAC] at which to give the margins.
    stick_fixed, stick_free : NeutralPoint
        Neutral points; no margin is given for one that is not identifiable.
    min_static_margin_pct_mac : float, optional
        The profile's minimum [%MAC] for ``meets_minimum``.

    Returns
    -------
    tuple of StaticMargin
        ``meets_minimum`` and ``limited_by`` from
        :func:`trimlog.stability.critical.margin_limit`: both neutral points,
        the limiting one named.

    References
    ----------
    .. [1] Etkin and Reid (1996), sec. 2.3 (static margin ``Kn = hn - h``).
    """
    def margin(np_: NeutralPoint | None, cg: float):
        if np_ is None or not np_.identifiable:
            return None, None
        return np_.pct_mac - cg, (np_.ci95_pct_mac[0] - cg, np_.ci95_pct_mac[1] - cg)

    out = []
    for label, flight, cg in cgs:
        fixed, fixed_ci = margin(stick_fixed, cg)
        free, free_ci = margin(stick_free, cg)
        fixed_lo, free_lo, meets, limited_by = margin_limit(
            cg, stick_fixed, stick_free, min_static_margin_pct_mac)
        out.append(StaticMargin(label, flight, cg, fixed, fixed_ci, free, free_ci, meets,
                                fixed_lo, free_lo, limited_by))
    return tuple(out)


def predict_elevator(fit: PooledFit, cl: float, h: float, setting: str | None = None
                     ) -> ElevatorPrediction:
    """Elevator to trim at a CL, CG and stabilizer setting, from the pooled model.

    Parameters
    ----------
    fit : PooledFit
        The stick-fixed pooled fit.
    cl : float
        Lift coefficient [-].
    h : float
        CG as a fraction of the MAC [-].
    setting : str, optional
        Stabilizer setting label; default the latest one flown.

    Returns
    -------
    ElevatorPrediction
        Value with its 95 % confidence interval (the trim line) and 95 %
        prediction interval (one new point); warnings when extrapolating.

    Raises
    ------
    NotIdentifiableError
        When no model could be fitted.
    TrimlogError
        An unknown setting, a stick-free fit, or a non-finite input.

    References
    ----------
    .. [1] Etkin and Reid (1996), sec. 2.5 (elevator angle to trim);
       Montgomery, Peck and Vining (2012), sec. 2.4 (confidence and
       prediction intervals from the covariance matrix).
    """
    if fit.kind != "stick_fixed":
        raise TrimlogError("predict_elevator: expected the stick-fixed fit, found the "
                           f"{fit.kind} one")
    fit._require()
    if not (math.isfinite(cl) and math.isfinite(h)):
        raise TrimlogError(f"predict_elevator: expected finite cl and h, found {cl!r}, {h!r}")
    setting = fit.latest_group if setting is None else str(setting)
    if setting not in fit.groups:
        raise TrimlogError(f"predict_elevator: stabilizer setting '{setting}' was not flown; "
                           "expected one of " + ", ".join(f"'{g}'" for g in fit.groups))
    row = pd.Series({f"a[{setting}]": 1.0, "cl": cl, "h_cl": h * cl})
    value, se, sigma = fit.linear.predict(row)
    warnings = []
    ci = pi = None
    if fit.linear.df_resid >= 1:
        t = t_quantile(fit.linear.df_resid)
        ci = finite_pair(value - t * se, value + t * se)
        half = t * math.sqrt(se * se + sigma * sigma)
        pi = finite_pair(value - half, value + half)
    lo, hi = fit.cl_range
    if not lo <= cl <= hi:
        warnings.append(f"CL {cl:.2f} is outside the CL flown ({lo:.2f}-{hi:.2f}): extrapolated")
    cg_lo, cg_hi = fit.cg_range_pct_mac
    if not fit.has_cg_term and abs(100.0 * h - cg_lo) > 1.0:
        warnings.append(f"the CG effect is not identified (one CG, {cg_lo:.1f} %MAC, flown): the "
                        f"prediction at {100.0 * h:.1f} %MAC ignores the CG change")
    elif not cg_lo - 1.0 <= 100.0 * h <= cg_hi + 1.0:
        warnings.append(f"CG {100.0 * h:.1f} %MAC is outside the CGs flown "
                        f"({cg_lo:.1f}-{cg_hi:.1f} %MAC): extrapolated")
    return ElevatorPrediction(float(value), ci, pi, float(cl), 100.0 * h, setting,
                              tuple(warnings))


def cruise_elevators(fit: PooledFit, cl: float, h: float,
                     settings: tuple[str, ...] | None = None) -> CruiseElevators:
    """Elevator to trim at one CL and CG under several settings, with their joint covariance.

    Parameters
    ----------
    fit : PooledFit
        The stick-fixed pooled fit.
    cl : float
        Lift coefficient [-] (the cruise CL).
    h : float
        CG as a fraction of the MAC [-].
    settings : tuple of str, optional
        Stabilizer settings flown; default every setting of the fit.

    Returns
    -------
    CruiseElevators
        From the flight-level model (errors shared by a flight, the
        headline) when its full covariance is available, else from the
        ordinary pooled fit.

    Raises
    ------
    TrimlogError
        A stick-free fit, a setting not flown, non-finite input.
    NotIdentifiableError
        No model could be fitted.

    Notes
    -----
    ``delta_e(s) = a[s] + b CL + c h CL``; each value is the contrast
    ``x_s' beta`` and the covariance ``X' V X`` of the model's coefficient
    covariance ``V`` (Montgomery, Peck and Vining (2012), sec. 3.4).

    Examples
    --------
    >>> import numpy as np, pandas as pd
    >>> from trimlog.stability.neutral_points import pooled_fit
    >>> cl = np.tile([0.3, 0.5, 0.7, 0.9], 4)
    >>> h = np.repeat([0.15, 0.22, 0.29, 0.22], 4)
    >>> s = np.repeat(["a", "a", "a", "b"], 4)
    >>> de = 2.0 + (0.40 - h) * cl / -0.0227 + np.where(s == "b", 1.2, 0.0)
    >>> de = de + 0.01 * np.tile([1, -1, -1, 1], 4)
    >>> pts = pd.DataFrame({"flight": np.repeat(["1", "2", "3", "4"], 4), "point": 1,
    ...                     "included": True, "cl": cl, "elevator_deg": de, "h": h,
    ...                     "stab_setting": s})
    >>> ce = cruise_elevators(pooled_fit(pts), 0.3, 0.22)
    >>> round(ce.elevator_deg[1] - ce.elevator_deg[0], 2), ce.method
    (1.2, 'flight_level')
    """
    if fit.kind != "stick_fixed":
        raise TrimlogError("cruise_elevators: expected the stick-fixed fit, found the "
                           f"{fit.kind} one")
    fit._require()
    if not (math.isfinite(cl) and math.isfinite(h)):
        raise TrimlogError(f"cruise_elevators: expected finite cl and h, found {cl!r}, {h!r}")
    settings = tuple(fit.groups) if settings is None else tuple(str(s) for s in settings)
    for s in settings:
        if s not in fit.groups:
            raise TrimlogError(f"cruise_elevators: stabilizer setting '{s}' was not flown; "
                               "expected one of " + ", ".join(f"'{g}'" for g in fit.groups))
    rows = [{f"a[{s}]": 1.0, "cl": cl, "h_cl": h * cl} for s in settings]
    level = fit.flight_level
    if level is not None and level.cov_full is not None and fit.has_cg_term:
        names = [f"a[{g}]" for g in level.group_labels] + ["cl", "h_cl"]
        x = np.array([[r.get(n, 0.0) for n in names] for r in rows])
        values, cov, df, method = x @ level.coef_full, x @ level.cov_full @ x.T, level.df, \
            "flight_level"
    else:
        names = list(fit.linear.params.index)
        x = np.array([[r.get(n, 0.0) for n in names] for r in rows])
        values = x @ fit.linear.params.to_numpy()
        cov = x @ fit.linear.cov.to_numpy() @ x.T
        df, method = float(fit.linear.df_resid), "independent"
    return CruiseElevators(settings, float(cl), 100.0 * float(h),
                           tuple(float(v) for v in values), np.asarray(cov, dtype=float),
                           float(df), method)


def elevator_stop_flags(points: pd.DataFrame, up_stop_deg: float, down_stop_deg: float
                        ) -> tuple[StopFlag, ...]:
    """Included points whose elevator is within :data:`STOP_TOLERANCE_DEG` of a stop.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced points.
    up_stop_deg, down_stop_deg : float
        Stop magnitudes [deg]; the up stop is at ``-up_stop_deg``.

    Returns
    -------
    tuple of StopFlag
        A trim point at a stop is not a trim the elevator chose; offer it for exclusion.
    """
    frame = points.loc[points["included"].astype(bool)]
    elevator = frame["elevator_deg"].to_numpy(dtype=float)
    up = elevator <= -abs(up_stop_deg) + STOP_TOLERANCE_DEG
    down = elevator >= abs(down_stop_deg) - STOP_TOLERANCE_DEG
    out = []
    for i in np.flatnonzero(up | down).tolist():  # only the points at a stop are visited
        out.append(StopFlag(str(frame["flight"].iloc[i]), int(frame["point"].iloc[i]),
                            frame.index[i], float(elevator[i]), "up" if up[i] else "down"))
    return tuple(out)


def stop_travel_findings(profile: AircraftProfile) -> list[Finding]:
    """Cautions when the profile's elevator stops are outside typical light-aircraft travel.

    Typical travel is about 20-25 deg up and 15-20 deg down (common practice,
    no source); a value outside is not wrong, but worth a second look at the
    profile and the rigging.
    """
    out = []
    for stop, value, (low, high) in (
            ("up", profile.elevator_up_stop_deg, TYPICAL_UP_STOP_DEG),
            ("down", profile.elevator_down_stop_deg, TYPICAL_DOWN_STOP_DEG)):
        if not low <= value <= high:
            out.append(finding("stability.authority.stop_travel_unusual", Severity.CAUTION,
                               Subject(quantity=f"elevator_{stop}_stop_deg"), stop=stop,
                               stop_deg=value, low_deg=low, high_deg=high))
    return out


def _most_forward_cg(fit: PooledFit, clmax: float, target_deg: float, setting: str
                     ) -> tuple[float | None, float | None]:
    """CG [fraction] where the elevator at CLmax equals ``target_deg``: estimate, conservative.

    ``a + b CL + c h CL = target`` gives ``h = (target - a - b CL)/(c CL)``.
    The conservative CG is where the more-up end of the 95 % prediction
    interval reaches the target (found by bracketing root search).
    """
    if fit.elevator_power_per_rad is None:
        return None, None
    p = fit.linear.params
    a, b, c = float(p[f"a[{setting}]"]), float(p["cl"]), float(p["h_cl"])
    h_est = (target_deg - a - b * clmax) / (c * clmax)

    def lower_bound(h: float) -> float:
        pi = predict_elevator(fit, clmax, h, setting).pi95_deg
        return (pi[0] if pi else math.nan) - target_deg

    h_cons = None
    lo, hi = h_est - 1.0, h_est + 1.0
    f_lo, f_hi = lower_bound(lo), lower_bound(hi)
    if math.isfinite(f_lo) and math.isfinite(f_hi) and f_lo < 0.0 < f_hi:
        h_cons = brent_root(lower_bound, lo, hi, xtol=1e-6)
    return finite(h_est), finite(h_cons)


def elevator_authority(fit: PooledFit, profile: AircraftProfile, *, setting: str | None = None,
                       flap_config: str = "clean") -> ElevatorAuthority:
    """Elevator at CLmax at the forward CG limit against the up stop, and the reserve CG.

    Parameters
    ----------
    fit : PooledFit
        Pooled stick-fixed fit of this configuration.
    profile : AircraftProfile
        Supplies ``clmax_clean``, ``clmax_landing``, the forward CG limit, the
        stops and ``elevator_reserve_deg``.
    setting : str, optional
        Stabilizer setting; default the latest flown.
    flap_config : {"clean", "landing"}
        What the data of ``fit`` are.  Clean data give the clean case and the
        landing case as an extrapolation (landing flaps are another
        configuration); landing data give the landing case only.

    Returns
    -------
    ElevatorAuthority

    Notes
    -----
    Margin = predicted elevator - up stop (``-elevator_up_stop_deg``), in
    degrees of up elevator still in hand; the conservative margin uses the
    more-up end of the 95 % prediction interval.  The most forward CG for the
    reserve solves ``de(CLmax, h) = -up_stop + reserve`` [1]_.

    References
    ----------
    .. [1] Etkin and Reid (1996), sec. 2.6 (forward CG limit set by elevator
       travel); Nelson (1998), sec. 2.5.
    """
    if flap_config not in ("clean", "landing"):
        raise TrimlogError(f"elevator_authority: flap_config expected 'clean' or 'landing', "
                           f"found {flap_config!r}")
    found = [finding("stability.authority.ground_effect", Severity.CAUTION),
             *stop_travel_findings(profile)]
    warnings = [f.message for f in found]
    reserve = profile.elevator_reserve_deg
    if fit.linear is None:
        return ElevatorAuthority((), reserve, None, None, None,
                                 f"no stick-fixed model: {fit.neutral_point.reason}",
                                 tuple(warnings), tuple(found))
    setting = fit.latest_group if setting is None else str(setting)
    specs: list[tuple[str, float, bool, tuple[str, ...]]] = []
    reasons = []
    if flap_config == "clean":
        if profile.clmax_clean is not None:
            specs.append(("clean", profile.clmax_clean, False, ()))
        if profile.clmax_landing is not None:
            specs.append(("landing", profile.clmax_landing, True, (
                "landing flaps are a different configuration: this value is an extrapolation "
                "from the clean data; fly landing-flap trim points to check it",)))
    else:
        if profile.clmax_landing is not None:
            specs.append(("landing", profile.clmax_landing, False, ()))
        if profile.clmax_clean is not None:
            reasons.append("the clean CLmax needs the analysis of the clean configuration")
    if not specs:
        reasons.append("the profile gives no CLmax for this configuration (aircraft.clmax_clean"
                       " / clmax_landing)")
    up = -profile.elevator_up_stop_deg
    h_fwd = profile.cg_forward_pct_mac / 100.0
    why_not = cannot_say_yet(fit, 100.0 * h_fwd, "the forward CG limit")
    if why_not:
        return ElevatorAuthority((), reserve, None, None, None, why_not, tuple(warnings),
                                 tuple(found))
    cases = []
    for case, clmax, other_config, notes in specs:
        pred = predict_elevator(fit, clmax, h_fwd, setting)
        if pred.pi95_deg is None or (
                pred.pi95_deg[1] - pred.pi95_deg[0]) > 2.0 * MAX_AUTHORITY_HALF_WIDTH_DEG:
            reasons.append(f"{case}: cannot say yet: the elevator at CLmax {clmax:g} is known "
                           f"only to within more than +-{MAX_AUTHORITY_HALF_WIDTH_DEG:g} deg; "
                           "trim points nearer CLmax (slow, with altitude for recovery) at a "
                           "forward CG would settle it")
            continue
        margin = pred.elevator_deg - up
        cons = None if pred.pi95_deg is None else pred.pi95_deg[0] - up
        check = margin if cons is None else cons
        if margin <= 0.0:
            code, verdict = ("up_stop_reached",
                             "the up stop is reached before CLmax at the forward CG limit")
        elif check <= 0.0:
            code, verdict = ("up_stop_may_be_reached", "the up stop may be reached before "
                             "CLmax (within the prediction interval)")
        elif check < reserve:
            code, verdict = ("reserve_short", f"less than the {reserve:g} deg reserve remains "
                             f"at CLmax ({check:.1f} deg at the conservative end)")
        else:
            code, verdict = ("reserve_kept",
                             f"at least {check:.1f} deg of up elevator remains at CLmax")
        extrapolated = other_config or clmax > fit.cl_range[1]
        cases.append(AuthorityCase(case, clmax, 100.0 * h_fwd, setting, pred.elevator_deg,
                                   pred.ci95_deg, pred.pi95_deg, up, margin, finite(cons),
                                   extrapolated, verdict, notes + pred.warnings, code))
    h_est = h_cons = None
    if cases:
        h_est, h_cons = _most_forward_cg(fit, specs[0][1], up + reserve, setting)
        if h_est is None:
            reasons.append("the most forward CG needs the elevator power (CG effect) identified")
    station = None if h_cons is None else profile.station(100.0 * h_cons)
    return ElevatorAuthority(
        tuple(cases), reserve, None if h_est is None else 100.0 * h_est,
        None if h_cons is None else 100.0 * h_cons, station, "; ".join(reasons), tuple(warnings),
        tuple(found))


#: Authority verdicts that are findings: code of the case's verdict -> (finding code, severity).
_AUTHORITY_FINDINGS = {
    "up_stop_reached": ("stability.authority.up_stop_reached", Severity.WARNING),
    "up_stop_may_be_reached": ("stability.authority.up_stop_may_be_reached", Severity.WARNING),
    "reserve_short": ("stability.authority.reserve_short", Severity.CAUTION),
}


def authority_findings(authority: ElevatorAuthority) -> list[Finding]:
    """The authority cases that matter before the next flight, as findings.

    An up stop reached (or possibly reached, within the prediction interval)
    before CLmax at the forward CG limit is a warning, whichever case it is
    (the landing-flap case included); a reserve short of the profile's is a
    caution.  The verdict is the case's own (:func:`elevator_authority`).

    Parameters
    ----------
    authority : ElevatorAuthority

    Returns
    -------
    list of Finding
        Subject quantity ``elevator_authority``; values case, clmax,
        cg_pct_mac [%MAC], elevator_deg and up_stop_deg [deg], margin_deg
        (conservative end) [deg], reserve_deg [deg] and basis (words:
        whether the case is an extrapolation).
    """
    out = []
    for c in authority.cases:
        code = _AUTHORITY_FINDINGS.get(c.verdict_code)
        if code is None:
            continue
        basis = ("an extrapolation beyond the CL or configuration flown" if c.extrapolated
                 else "within the CL flown")
        out.append(finding(
            code[0], code[1], Subject(quantity="elevator_authority"), case=c.case,
            clmax=c.clmax, cg_pct_mac=c.cg_pct_mac, elevator_deg=c.elevator_deg,
            up_stop_deg=c.up_stop_deg,
            margin_deg=c.margin_deg if c.margin_conservative_deg is None
            else c.margin_conservative_deg,
            reserve_deg=authority.reserve_deg, basis=basis))
    return out


def plan_next_cg(points: pd.DataFrame, fit: PooledFit, profile: AircraftProfile | None,
                 most_aft_allowed_pct_mac: float | None = None) -> NextCg:
    """Find the CG for the next flight that most reduces the predicted variance of hn.

    Parameters
    ----------
    points : pandas.DataFrame
        The reduced points that ``fit`` was fitted to (included rows are used).
    fit : PooledFit
        Pooled stick-fixed fit.
    profile : AircraftProfile or None
        CG limits, ``cg_step_max_pct_mac`` and ``min_static_margin_pct_mac``.
    most_aft_allowed_pct_mac : float, optional
        The most aft CG the next flight may be flown at, from the one next-CG
        rule (:func:`trimlog.stability.critical.next_cg_limit`, which uses
        both neutral points); None searches only up to the most aft CG flown.

    Returns
    -------
    NextCg

    Notes
    -----
    The planned flight is assumed to repeat the CL schedule of the flight with
    the most points, at the latest stabilizer setting, with the present
    residual scatter.  For each candidate CG (steps of 0.25 %MAC) the
    covariance after the flight is ``s^2 (X'X + Xn'Xn)^-1``, and the candidate
    with the smallest delta-method variance of ``hn = -b/c`` wins (or the
    smallest variance of ``c`` while hn is not identifiable).  Candidates run
    from the forward limit to the most aft CG allowed by the one next-CG rule
    (both neutral points' forward 95 % bounds less the minimum margin, the
    profile's step beyond the most aft CG flown, the aft limit).  A larger CG
    spread is the lever; the step limit keeps the expansion gradual.

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), sec. 3.4 (variance of
       estimates from ``(X'X)^-1``); FAA AC 90-89B (2015) on expanding the CG
       envelope in steps.
    """
    def no(reason: str, rng: tuple[float, float] | None = None) -> NextCg:
        return NextCg(None, None, "", fit.neutral_point.se_pct_mac, None, rng, reason)

    if profile is None:
        return no("needs the aircraft profile (CG limits)")
    if fit.linear is None:
        return no(f"no stick-fixed model yet: {fit.neutral_point.reason}")
    frame = points.loc[points["included"].astype(bool)].copy()
    frame["stab_setting"] = frame["stab_setting"].astype(str)
    frame["flight"] = frame["flight"].astype(str)
    groups = list(fit.groups)
    x = trim_design(frame, "stab_setting", groups, cg_term=True).to_numpy(dtype=float)
    schedule = frame.loc[frame["flight"] == frame["flight"].value_counts().idxmax(), "cl"]
    np_ = fit.neutral_point
    # Never aft of what the one next-CG rule allows (both neutral points, step, aft limit).
    hi = min(profile.cg_aft_pct_mac, fit.cg_range_pct_mac[1]
             if most_aft_allowed_pct_mac is None else most_aft_allowed_pct_mac)
    lo = profile.cg_forward_pct_mac
    if hi < lo:
        return no("no CG inside the limits keeps the minimum static margin ahead of the "
                  "critical neutral point's forward bound", (lo, hi))
    sigma2 = fit.linear.residual_std ** 2
    scale = sigma2 if sigma2 > 0.0 else 1.0
    use_hn = np_.identifiable
    if use_hn:
        b, c = float(fit.linear.params["cl"]), float(fit.linear.params["h_cl"])
        theta = -b / c
    xtx = x.T @ x
    k = groups.index(fit.latest_group)
    best = None
    for cg in np.unique(np.append(np.arange(lo, hi, NEXT_CG_STEP_PCT_MAC), hi)):
        xn = np.zeros((len(schedule), len(groups) + 2))
        xn[:, k] = 1.0
        xn[:, -2] = schedule.to_numpy()
        xn[:, -1] = cg / 100.0 * schedule.to_numpy()
        m = xtx + xn.T @ xn
        if np.linalg.cond(m) > 1e12:
            continue
        cov = scale * np.linalg.inv(m)
        if use_hn:
            var = (cov[-2, -2] + 2 * theta * cov[-2, -1] + theta**2 * cov[-1, -1]) / c**2
        else:
            var = cov[-1, -1]
        if best is None or var < best[1] - 1e-15 * abs(best[1]):
            best = (float(cg), float(var))
    if best is None:
        return no("no candidate CG makes the CG term estimable", (lo, hi))
    predicted = (100.0 * math.sqrt(best[1]) if use_hn and sigma2 > 0.0 else None)
    return NextCg(best[0], profile.station(best[0]),
                  "variance of hn" if use_hn else "variance of the CG term",
                  np_.se_pct_mac, finite(predicted), finite_pair(lo, hi), "")
