"""Longitudinal static stability from stabilized trim points.

Input is the *reduced points* table of DEVELOPERS.md (one configuration per
call; only rows with ``included`` True are fitted).  Output is frozen
dataclasses whose numbers are finite floats or ``None`` with a reason.

Theory (stick-fixed).  At trim ``Cm = Cm0 + (h - hn) CL + Cmde de = 0``, so
``de = -[Cm0 + (h - hn) CL] / Cmde`` and ``d de / d CL = (hn - h) / Cmde``:
negative when stable because ``Cmde < 0``, shrinking to zero as the CG ``h``
moves aft to the neutral point ``hn``; all trim lines of one stabilizer
setting meet at ``CL = 0`` in ``de0 = -Cm0/Cmde`` [1]_ [2]_ [4]_.  Pooled over
every point, ``de = a_setting + b CL + c (h CL)`` with ``b = hn/Cmde'`` and
``c = -1/Cmde'`` (``Cmde'`` per degree), so ``hn = -b/c`` and
``Cmde = -(180/pi)/c`` per radian [3]_.

Stick-free.  ``Fs/q = a_flight + b' CL + c' (h CL)`` with an intercept per
flight (the pilot re-trims between flights); ``hn' = -b'/c'``.  With pull
positive a stable aircraft needs more pull when slower: ``d(Fs/q)/dCL > 0``
forward of ``hn'`` [3]_ [5]_.

Sign conventions: elevator trailing-edge down positive, stick force pull
positive, ``h`` the CG aft of the MAC leading edge as a fraction of the MAC.

References
----------
.. [1] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, sec. 2.3-2.5 (trim, elevator angle to trim, neutral
   point).
.. [2] R. C. Nelson, *Flight Stability and Automatic Control*, 2nd ed.,
   McGraw-Hill, 1998, ch. 2 (sec. 2.4 stick-fixed neutral point, 2.5
   elevator angle to trim, 2.7 stick forces, 2.8 flight-test measurement).
.. [3] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   ch. 5 "Longitudinal Static Stability", 1990 (DTIC ADA319976): the
   stabilized-trim method, gradients against CG extrapolated to zero.
.. [4] F. G. Irving, *An Introduction to the Longitudinal Static Stability of
   Low-Speed Aircraft*, Pergamon, 1966, ch. 5 (trim curves of one tail
   setting pass through one point at CL = 0).
.. [5] R. D. Kimberlin, *Flight Testing of Fixed-Wing Aircraft*, AIAA
   Education Series, 2003, ch. on longitudinal static stability.
.. [6] E. C. Fieller, J. R. Stat. Soc. B 16:175-185, 1954.
"""

# About 880 lines, over the ~800 aim: the pooled fit, its identifiability rules and the
# flight-level headline share private helpers (_Core, _column); splitting them would
# create an import cycle with the trend module.  To be split with the findings work.
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd

from trimlog.errors import TrimlogError
from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import (
    DEFAULT_CG_UNCERTAINTY_PCT_MAC,
    DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF,
    AircraftProfile,
)
from trimlog.stability import stick_force
from trimlog.stability.checks import CURVATURE_P, curvature_check, intercept_check, robust_check
from trimlog.stability.critical import (
    MIN_CG_SPREAD_PCT_MAC,
    aft_flight_clearly_stable,
    critical_neutral_point,
    next_cg_limit,
)
from trimlog.stability.margins import (
    authority_findings,
    elevator_authority,
    elevator_stop_flags,
    plan_next_cg,
    predict_elevator,
    static_margins,
)
from trimlog.stability.results import (
    FlightGradient,
    NeutralPoint,
    Outlier,
    PooledFit,
    StabilityResult,
    TwoStageFit,
)
from trimlog.statistics.fits import (
    MIN_INTERCEPTS_FOR_BLOCKS,
    LinearFit,
    RatioInterval,
    finite,
    finite_pair,
    fit_linear,
    fit_matrix,
    is_full_rank,
    ratio_interval,
    studentized_outliers,
    t_quantile,
    trim_design,
    trim_matrix,
    within_fit,
)
from trimlog.statistics.flight_effects import FlightLevelFit, fit_flight_level

__all__ = [
    "CURVATURE_P",
    "analyze_stability",
    "elevator_authority",
    "elevator_stop_flags",
    "flight_gradients",
    "included_points",
    "plan_next_cg",
    "pooled_fit",
    "predict_elevator",
    "static_margins",
    "neutral_point_from_coefficients",
    "neutral_point_from_fit",
    "two_stage_neutral_point",
]

#: Fewest points for a per-flight gradient with an interval.
MIN_POINTS_PER_FLIGHT = 3
#: Smallest range of CL that makes a trim gradient: below it the points are
#: all at nearly one speed.
MIN_CL_SPREAD = 0.05
#: Fewest flights that must each cover a range of speeds (CL spread of at
#: least MIN_CL_SPREAD) for a pooled neutral point: the stabilized-trim method
#: measures a trim gradient at each CG; single points at different CGs and
#: speeds cannot tell the CG effect from the speed effect.
MIN_FLIGHTS_WITH_SPEED_RANGE = 2
#: Widest 95 % interval of a neutral point still reported as a number [%MAC].
MAX_NP_CI_WIDTH_PCT_MAC = 20.0
#: Half the sea-level standard density times one knot squared [psf per kt^2]:
#: q = K * EAS^2 (rho0 = 0.0023769 slug/ft^3, 1 kt = 1.687810 ft/s; 1/K = 295.37).
HALF_RHO0_PSF_PER_KT2 = 0.5 * 0.00237689 * 1.6878099**2
_RAD = 180.0 / math.pi

_REQUIRED = ("flight", "point", "included", "cl", "elevator_deg", "h", "stab_setting")


# --------------------------------------------------------------------------- input


def included_points(points: pd.DataFrame) -> pd.DataFrame:
    """Validate the reduced-points table and return its included rows.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced points (contract in DEVELOPERS.md), one configuration.

    Returns
    -------
    pandas.DataFrame
        The rows with ``included`` True, ``flight`` and ``stab_setting`` as str.

    Raises
    ------
    TrimlogError
        A missing column, several configurations, or a missing CL, elevator
        or CG in an included point (named by flight and point).
    """
    missing = [c for c in _REQUIRED if c not in points.columns]
    if missing:
        raise TrimlogError(
            "reduced points: missing column(s) " + ", ".join(f"'{c}'" for c in missing)
            + " (expected the reduced-points contract of DEVELOPERS.md)"
        )
    if "config" in points.columns:
        configs = sorted({str(c) for c in points["config"].dropna().unique()})
        if len(configs) > 1:
            raise TrimlogError(
                "reduced points: one configuration per stability analysis, found "
                + ", ".join(configs) + " (separate them first; they are never pooled)"
            )
    included = points["included"]
    if included.dtype != bool:
        values = set(included.dropna().tolist())
        # 0 and 1 compare equal to False and True, so this set admits both spellings.
        bad = sorted(repr(v) for v in values - {True, False})
        if included.isna().any() or bad:
            raise TrimlogError(
                "reduced points: column 'included' expected True/False for every point, found "
                + (", ".join(bad[:5]) if bad else "a missing value"))
    frame = points.loc[included.astype(bool)].copy()
    frame["flight"] = frame["flight"].astype(str)
    frame["stab_setting"] = frame["stab_setting"].astype(str)
    for column in ("cl", "elevator_deg", "h"):
        values = pd.to_numeric(frame[column], errors="coerce")
        bad = ~np.isfinite(values.to_numpy(dtype=float))
        if bad.any():
            row = frame.loc[bad].iloc[0]
            raise TrimlogError(
                f"reduced points: flight '{row['flight']}' point {row['point']}: column "
                f"'{column}' expected a finite number in an included point, found "
                f"{row[column]!r} ({int(bad.sum())} such point(s); exclude them or fix the input)"
            )
        frame[column] = values.astype(float)
    return frame


# --------------------------------------------------------------------------- per flight


def _verdict_from_ci(ci: tuple[float, float] | None, value: float, words: dict[str, str]) -> str:
    if ci is None:
        key = "stable" if value < 0 else "unstable" if value > 0 else "neutral"
        return words[key] + " (sign only: too few points for an interval)"
    if ci[1] < 0.0:
        return words["stable"]
    if ci[0] > 0.0:
        return words["unstable"]
    return words["neutral"]


_ELEV_WORDS = {
    "stable": "stable: more up elevator is needed to trim at higher CL (slower)",
    "neutral": "neutral within the scatter: the 95 % interval of the gradient includes zero",
    "unstable": "unstable: more down elevator is needed to trim at higher CL",
}
_FORCE_WORDS = {
    "stable": "stable: a pull is needed to slow down",
    "neutral": "neutral within the scatter: the 95 % interval of dFs/dV includes zero",
    "unstable": "unstable: a push is needed to slow down",
}


def _line(cl: np.ndarray, y: np.ndarray, settings: np.ndarray) -> tuple[LinearFit | None, str]:
    """Fit y = a[setting] + slope*cl on one flight's points, or say why not."""
    n = len(cl)
    if n < MIN_POINTS_PER_FLIGHT:
        return None, (f"only {n} point(s): at least {MIN_POINTS_PER_FLIGHT} are needed for a "
                      "gradient with an interval")
    spread = float(cl.max() - cl.min())
    if spread < MIN_CL_SPREAD:
        return None, (f"CL spans only {spread:.3f} (all points at nearly one speed; at least "
                      f"{MIN_CL_SPREAD} is needed): no gradient")
    x, names = trim_matrix(settings, list(dict.fromkeys(settings)), cl)
    if not is_full_rank(x) or n - x.shape[1] < 1:
        return None, "the stabilizer settings and CL values of this flight cannot be separated"
    return fit_matrix(y, x, names), ""


def _stick_force_gradient(
    fit: LinearFit, cl: np.ndarray, q: np.ndarray | None, eas: np.ndarray | None,
    flight: str = "",
) -> tuple[float | None, float | None, tuple[float, float] | None, str, list[Finding]]:
    """Trim speed and dFs/dV there from Fs/q = A + B*CL of one flight.

    With ``CL = n W/(q S)``, ``Fs = q (A + B CL) = A q + B nW/S``; the speed
    enters only through ``q = K V^2`` (EAS), so ``dFs/dV = 2 A K V``.  At the
    trim speed ``Fs = 0``: ``CL_t = -A/B``, ``q_t = (nW/S)/CL_t``,
    ``V_t = sqrt(q_t/K)``, and ``dFs/dV = 2 A q_t / V_t
    = sign(A) * 2 sqrt(K (nW/S) (-A B))``.  ``nW/S`` is the mean of ``q*CL``
    over the flight's points (``q`` [psf], ``eas`` [kt] None when not in the points).
    """
    warnings: list[Finding] = []
    if len(fit.params) != 2:
        return None, None, None, ("not available: several stabilizer settings in one flight, "
                                  "so no single trim speed"), warnings
    a = float(fit.params.iloc[0])
    b = float(fit.params["cl"])
    if q is None or np.isnan(q).all():
        return None, None, None, "not available: no dynamic pressure in the points", warnings
    w = float(np.nanmean(q * cl))
    if a == 0.0 or b == 0.0 or a * b >= 0.0 or not w > 0.0:
        return None, None, None, (
            "not available: the fitted stick force does not cross zero at a positive CL (no "
            "trim speed); judge stick-free stability by d(Fs/q)/dCL"), warnings
    k = HALF_RHO0_PSF_PER_KT2
    cl_t = -a / b
    v_t = math.sqrt(w / cl_t / k)
    u = -a * b
    sign = math.copysign(1.0, a)
    grad = sign * 2.0 * math.sqrt(k * w * u)
    ci = None
    if fit.df_resid >= 1:
        root = math.sqrt(k * w) / math.sqrt(u)
        jac = np.array([-sign * root * b, -sign * root * a])
        cov = fit.cov.to_numpy()
        se = math.sqrt(max(float(jac @ cov @ jac), 0.0))
        t = t_quantile(fit.df_resid)
        ci = finite_pair(grad - t * se, grad + t * se)
    if eas is not None and not np.isnan(eas).all():
        lo, hi = float(np.nanmin(eas)), float(np.nanmax(eas))
        if not 0.9 * lo <= v_t <= 1.1 * hi:
            warnings.append(finding("stability.gradient.trim_speed_extrapolated",
                                    Severity.CAUTION, Subject(flight=flight,
                                                              quantity="dfs_dv_lbf_per_kt"),
                                    trim_eas_kt=v_t, low_kt=lo, high_kt=hi))
    return finite(v_t), finite(grad), ci, _verdict_from_ci(ci, grad, _FORCE_WORDS), warnings


def flight_gradients(points: pd.DataFrame) -> tuple[FlightGradient, ...]:
    """Per-flight trim lines: elevator and Fs/q against CL, and dFs/dV at trim.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced points of one configuration.

    Returns
    -------
    tuple of FlightGradient
        One per flight with included points, in order of first appearance.

    Notes
    -----
    ``de = a + (dde/dCL) CL`` (one intercept per stabilizer setting) and
    ``Fs/q = A + B CL`` by least squares; 95 % intervals from Student's t with
    the residual degrees of freedom.

    Stick-force gradient: with ``CL = nW/(qS)``, ``Fs = q (A + B CL) = A q +
    B nW/S`` and ``q = K V^2`` (EAS, ``K = rho0/2``), so ``dFs/dV = 2 A K V``.
    The trim speed is where ``Fs = 0``: ``CL_t = -A/B``, ``q_t = (nW/S)/CL_t``,
    ``V_t = sqrt(q_t/K)``, and there ``dFs/dV = 2 A q_t/V_t = sign(A) 2
    sqrt(K (nW/S)(-A B))`` [lbf/kt]; ``nW/S`` is the mean ``q CL`` of the
    flight.  With pull positive, negative is stable (a pull is needed to slow
    down); its interval is by the delta method from the covariance of A and B.
    No trim speed exists when A and B have the same sign.

    References
    ----------
    .. [1] Nelson (1998), sec. 2.5 and 2.7; USAF TPS (1990), ch. 5.
    """
    return _flight_gradients(included_points(points))


def _column(frame: pd.DataFrame, name: str) -> np.ndarray | None:
    """A numeric column as floats (missing values NaN), None when the table has none."""
    if name not in frame.columns:
        return None
    return frame[name].to_numpy(dtype=float, na_value=np.nan)


def _flight_gradients(frame: pd.DataFrame) -> tuple[FlightGradient, ...]:
    """:func:`flight_gradients` of already validated included points."""
    # Plain arrays split once by flight: per-flight tables and fits on named tables cost far
    # more than the arithmetic of these 2-3 column fits.
    codes, flights = pd.factorize(frame["flight"], sort=False)
    order = np.argsort(codes, kind="stable")
    starts = np.searchsorted(codes[order], np.arange(len(flights) + 1))
    cl_all, h_all = frame["cl"].to_numpy(dtype=float), frame["h"].to_numpy(dtype=float)
    elev_all = frame["elevator_deg"].to_numpy(dtype=float)
    settings_all = frame["stab_setting"].to_numpy(dtype=object)
    fsq_all = None
    if "fs_over_q_ft2" in frame.columns:
        fsq_all = pd.to_numeric(frame["fs_over_q_ft2"], errors="coerce").to_numpy(
            dtype=float, na_value=np.nan)
    q_all, eas_all = _column(frame, "q_psf"), _column(frame, "eas_kt")
    out = []
    for k, flight in enumerate(flights):
        rows = order[starts[k]:starts[k + 1]]
        cl, settings = cl_all[rows], settings_all[rows]
        h = float(h_all[rows].mean())
        warnings: list[Finding] = []
        fit, why = _line(cl, elev_all[rows], settings)
        if fit is None:
            slope = ci = se = d0 = r2 = rstd = None
            verdict = why
        else:
            slope = finite(fit.params["cl"])
            ci = fit.coef_ci("cl")
            se = fit.coef_se("cl")
            d0 = finite(fit.params.iloc[0]) if len(fit.params) == 2 else None
            r2, rstd = fit.r_squared, finite(fit.residual_std)
            verdict = _verdict_from_ci(ci, slope, _ELEV_WORDS)
        force = rows[np.isfinite(fsq_all[rows])] if fsq_all is not None else rows[:0]
        fslope = fci = fr2 = frstd = vt = dfdv = dfdv_ci = None
        if len(force) == 0:
            fverdict = "not available: no stick force logged"
        else:
            ffit, fwhy = _line(cl_all[force], fsq_all[force], settings_all[force])
            if ffit is None:
                fverdict = "stick force: " + fwhy
            else:
                fslope, fci = finite(ffit.params["cl"]), ffit.coef_ci("cl")
                fr2, frstd = ffit.r_squared, finite(ffit.residual_std)
                vt, dfdv, dfdv_ci, fverdict, more = _stick_force_gradient(
                    ffit, cl_all[force], None if q_all is None else q_all[force],
                    None if eas_all is None else eas_all[force], str(flight))
                warnings.extend(more)
        out.append(FlightGradient(
            flight=str(flight), cg_pct_mac=100.0 * h, h=h, n_points=len(rows),
            stab_settings=tuple(dict.fromkeys(settings)),
            cl_range=(float(cl.min()), float(cl.max())),
            delev_dcl_deg=slope, delev_dcl_ci95_deg=ci, delev_dcl_se_deg=se, delev0_deg=d0,
            elev_r_squared=r2, elev_residual_std_deg=rstd, elevator_verdict=verdict,
            n_force_points=len(force), dfsq_dcl_ft2=fslope, dfsq_dcl_ci95_ft2=fci,
            fsq_r_squared=fr2, fsq_residual_std_ft2=frstd, trim_eas_kt=vt,
            dfs_dv_lbf_per_kt=dfdv, dfs_dv_ci95_lbf_per_kt=dfdv_ci,
            stick_force_verdict=fverdict, warnings=tuple(f.message for f in warnings),
            findings=tuple(warnings),
        ))
    return tuple(out)


# --------------------------------------------------------------------------- neutral points


def _not_identifiable(kind: str, method: str, reason: str, spread: float, n: int,
                      n_flights: int) -> NeutralPoint:
    return NeutralPoint(kind, method, False, None, None, None, None, None, None, reason,
                        spread, n, n_flights)


def neutral_point_from_fit(
    fit: LinearFit, b_name: str, c_name: str, *, kind: str, method: str, spread: float,
    n: int, n_flights: int, lemac_in: float | None, mac_in: float | None,
) -> NeutralPoint:
    """Neutral point hn = -b/c of a fitted model; see :func:`neutral_point_from_coefficients`."""
    cov = fit.cov
    return neutral_point_from_coefficients(
        float(fit.params[b_name]), float(fit.params[c_name]),
        float(cov.loc[b_name, b_name]), float(cov.loc[c_name, c_name]),
        float(cov.loc[b_name, c_name]), fit.df_resid, kind=kind, method=method,
        spread=spread, n=n, n_flights=n_flights, lemac_in=lemac_in, mac_in=mac_in,
    )


def neutral_point_from_coefficients(
    b: float, c: float, vbb: float, vcc: float, vbc: float, df_resid: int, *, kind: str,
    method: str, spread: float, n: int, n_flights: int, lemac_in: float | None,
    mac_in: float | None,
) -> NeutralPoint:
    """Neutral point hn = -b/c with Fieller's interval, after the identifiability checks.

    ``b`` and ``c`` are the coefficients of CL and h*CL (or of the constant and
    h in the two-stage line), ``vbb``, ``vcc``, ``vbc`` their covariances and
    ``df_resid`` the residual degrees of freedom of the fit.
    """
    def no(reason: str) -> NeutralPoint:
        return _not_identifiable(kind, method, reason, spread, n, n_flights)

    if df_resid < 1:
        return no("no residual degrees of freedom: more points are needed for an interval")
    t = t_quantile(df_resid)
    ratio: RatioInterval = ratio_interval(-b, c, vbb, vcc, -vbc, t)
    # c > 0 stick-fixed (Cm_de < 0); c < 0 stick-free (more pull when slower forward of hn').
    expected = 1.0 if kind == "stick_fixed" else -1.0
    if spread < MIN_CG_SPREAD_PCT_MAC:
        return no(f"the CGs flown span only {spread:.1f} %MAC; at least "
                  f"{MIN_CG_SPREAD_PCT_MAC:g} %MAC is needed to extrapolate to a neutral point")
    if not ratio.bounded:
        return no(
            "the change of the trim gradient with CG is not clearly different from zero "
            f"(t = {c / math.sqrt(vcc) if vcc > 0 else 0.0:.2f} against {t:.2f} needed): the "
            "95 % interval of the neutral point is unbounded; fly a CG further from the others"
        )
    if c * expected < 0.0:
        what = ("elevator sign convention (trailing-edge down positive)" if kind == "stick_fixed"
                else "stick-force sign convention (pull positive)")
        return no(f"the trim gradients change with CG in the physically wrong direction: check "
                  f"the {what} and the CG values")
    lo, hi = ratio.fieller_ci
    width = 100.0 * (hi - lo)
    if width > MAX_NP_CI_WIDTH_PCT_MAC:
        return no(f"the 95 % interval is {width:.0f} %MAC wide (more than "
                  f"{MAX_NP_CI_WIDTH_PCT_MAC:g} %MAC): not yet a usable estimate")
    est = 100.0 * ratio.estimate
    ci = (100.0 * lo, 100.0 * hi)
    dci = None if ratio.delta_ci is None else (100.0 * ratio.delta_ci[0], 100.0 * ratio.delta_ci[1])
    se = None if ratio.delta_se is None else 100.0 * ratio.delta_se
    station = station_ci = None
    if lemac_in is not None and mac_in is not None:
        station = lemac_in + est / 100.0 * mac_in
        station_ci = (lemac_in + ci[0] / 100.0 * mac_in, lemac_in + ci[1] / 100.0 * mac_in)
    return NeutralPoint(kind, method, True, est, ci, dci, se, station, station_ci, "",
                        spread, n, n_flights)


def _power(fit: LinearFit, c_name: str) -> tuple[float | None, tuple[float, float] | None]:
    """Cm_de [per rad] = -(180/pi)/c and the image of c's 95 % interval (when it excludes 0)."""
    c = float(fit.params[c_name])
    ci = fit.coef_ci(c_name)
    if ci is None or not ci[0] > 0.0:
        return None, None
    return finite(-_RAD / c), finite_pair(-_RAD / ci[0], -_RAD / ci[1])


def too_few_speed_ranges(swept: int) -> str:
    """Why a neutral point needs trim curves, not single points, at several CGs."""
    return (f"only {swept} flight(s) cover a range of speeds (CL spread of at least "
            f"{MIN_CL_SPREAD}): a neutral point needs a trim curve at each of at least "
            f"{MIN_FLIGHTS_WITH_SPEED_RANGE} CGs; with one speed per CG, CG and CL vary together")


def flights_with_speed_range(frame: pd.DataFrame) -> int:
    """How many flights span a CL range of at least :data:`MIN_CL_SPREAD`."""
    by_flight = frame.groupby("flight")["cl"]
    return int(((by_flight.max() - by_flight.min()) >= MIN_CL_SPREAD).sum())


@dataclass(frozen=True)
class _Core:
    linear: LinearFit | None
    has_cg_term: bool
    neutral_point: NeutralPoint


def _core_before_fit(frame: pd.DataFrame, kind: str) -> tuple[float, int, int, _Core | None]:
    """The CG spread, points and flights, and the answer when no fit is possible at all."""
    n, n_flights = len(frame), frame["flight"].nunique()
    spread = 100.0 * float(frame["h"].max() - frame["h"].min()) if n else 0.0

    def no(reason: str) -> _Core:
        return _Core(None, False, _not_identifiable(kind, "pooled", reason, spread, n, n_flights))

    if n == 0:
        return spread, n, n_flights, no("no included points")
    cl_spread = float(frame["cl"].max() - frame["cl"].min())
    if cl_spread < MIN_CL_SPREAD:
        return spread, n, n_flights, no(
            f"CL spans only {cl_spread:.3f} over all points (all at nearly one speed): "
            "no trim gradient can be fitted")
    swept = flights_with_speed_range(frame)
    if swept < MIN_FLIGHTS_WITH_SPEED_RANGE and spread >= MIN_CG_SPREAD_PCT_MAC:
        return spread, n, n_flights, no(too_few_speed_ranges(swept))
    return spread, n, n_flights, None


def _no_cg_term_reason(spread: float, n: int, n_coefficients: int) -> str:
    """Why the CG term of the pooled model cannot be fitted."""
    if spread < 1e-9:
        return "all points were flown at one CG: a neutral point needs flights at several CGs"
    if n - n_coefficients < 1:
        return f"{n} points for {n_coefficients} coefficients: more points are needed"
    return ("the CG and CL of the points vary together (the CG term cannot be separated "
            "from CL): fly each CG over a range of speeds")


def _core(frame: pd.DataFrame, response: str, group_col: str, kind: str,
          lemac_in: float | None, mac_in: float | None) -> _Core:
    """Fit the pooled model (the reduced one when the CG term is inestimable) and its hn."""
    spread, n, n_flights, none = _core_before_fit(frame, kind)
    if none is not None:
        return none
    groups = list(dict.fromkeys(frame[group_col]))
    full = trim_design(frame, group_col, groups, cg_term=True)
    if is_full_rank(full) and n - full.shape[1] >= 1:
        fit = fit_linear(frame[response], full)
        return _Core(fit, True, neutral_point_from_fit(
            fit, "cl", "h_cl", kind=kind, method="pooled", spread=spread, n=n,
            n_flights=n_flights, lemac_in=lemac_in, mac_in=mac_in))
    reduced = trim_design(frame, group_col, groups, cg_term=False)
    why = _no_cg_term_reason(spread, n, full.shape[1])
    fit = None
    if is_full_rank(reduced) and n - reduced.shape[1] >= 1:
        fit = fit_linear(frame[response], reduced)
    return _Core(fit, False, _not_identifiable(kind, "pooled", why, spread, n, n_flights))


def _core_within(frame: pd.DataFrame, response: str, group_col: str, kind: str,
                 lemac_in: float | None, mac_in: float | None) -> _Core:
    """:func:`_core`'s neutral point without its fit: the intercepts removed as groups.

    The coefficients of CL and h*CL, their covariance and the residual degrees
    of freedom are those of the dense fit (Frisch-Waugh-Lovell); the design of
    one intercept per flight is never built.  ``linear`` is None.
    """
    spread, n, n_flights, none = _core_before_fit(frame, kind)
    if none is not None:
        return none
    codes, uniques = pd.factorize(frame[group_col])
    cl = frame["cl"].to_numpy(dtype=float)
    x = np.column_stack([cl, frame["h"].to_numpy(dtype=float) * cl])
    fit = within_fit(frame[response].to_numpy(dtype=float), x, codes, len(uniques))
    if fit is None:
        why = _no_cg_term_reason(spread, n, len(uniques) + 2)
        return _Core(None, False, _not_identifiable(kind, "pooled", why, spread, n, n_flights))
    cov = fit.cov
    return _Core(None, True, neutral_point_from_coefficients(
        float(fit.coef[0]), float(fit.coef[1]), float(cov[0, 0]), float(cov[1, 1]),
        float(cov[0, 1]), fit.df_resid, kind=kind, method="pooled", spread=spread, n=n,
        n_flights=n_flights, lemac_in=lemac_in, mac_in=mac_in))


def pooled_fit(points: pd.DataFrame, kind: str = "stick_fixed", *,
               lemac_in: float | None = None, mac_in: float | None = None,
               cg_uncertainty_pct_mac: float = DEFAULT_CG_UNCERTAINTY_PCT_MAC,
               stick_force_zero_uncertainty_lbf: float = DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF,
               ) -> PooledFit | None:
    """Pooled trim model over every included point, neutral point and fit checks.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced points of one configuration.
    kind : {"stick_fixed", "stick_free"}
        Elevator (intercept per stabilizer setting) or Fs/q (intercept per flight).
    lemac_in, mac_in : float, optional
        MAC leading-edge station and MAC [in], to give the neutral point as a station.
    cg_uncertainty_pct_mac : float
        Per-flight CG uncertainty (1 sigma) [%MAC] where the points have no
        ``cg_uncertainty_pct_mac`` column (from the loading sheet).
    stick_force_zero_uncertainty_lbf : float
        Per-flight force-gauge zero uncertainty (1 sigma) [lbf].

    Returns
    -------
    PooledFit or None
        None for ``"stick_free"`` when no included point has a stick force.

    Notes
    -----
    The headline ``neutral_point`` is ``hn = -b/c`` of the flight-level
    model (:func:`trimlog.statistics.flight_effects.fit_flight_level`: a
    random slope per flight for errors shared by a whole flight, stick-free
    weighted by q^2), with Fieller's 95 % interval; the ordinary pooled fit
    that treats every point as independent is kept as
    ``independent_neutral_point`` (t quantile on df_resid) with the
    delta-method interval beside it.  Not identifiable (no number) when
    Fieller's set is unbounded (``c^2 <= t^2 Var(c)``), when c has the wrong
    sign, when the CGs span less than :data:`MIN_CG_SPREAD_PCT_MAC`, or when
    the interval is wider than :data:`MAX_NP_CI_WIDTH_PCT_MAC`.  Checks: the
    Bonferroni outlier test on externally studentized residuals, a Huber
    M-estimate of hn beside the least-squares one, and a CL^2 term.

    References
    ----------
    .. [1] Etkin and Reid (1996), sec. 2.5; Nelson (1998), sec. 2.8; USAF TPS
       (1990), ch. 5; Fieller (1954).
    """
    if kind not in ("stick_fixed", "stick_free"):
        raise TrimlogError(
            f"stability: kind expected 'stick_fixed' or 'stick_free', found {kind!r}")
    return _pooled_fit(included_points(points), kind, lemac_in, mac_in,
                       (cg_uncertainty_pct_mac, stick_force_zero_uncertainty_lbf))


def _flight_level_np(frame: pd.DataFrame, response: str, group_col: str, kind: str,
                     core: _Core, errors: tuple[float, float], lemac_in: float | None,
                     mac_in: float | None, anchor: stick_force.TrimAnchor | None = None,
                     ) -> tuple[NeutralPoint, FlightLevelFit | None]:
    """The headline neutral point: the pooled model with errors shared by each flight.

    Stick-free points are weighted by ``q^2`` (force noise about constant in
    lbf, so the scatter of Fs/q grows as 1/q); a force-zero uncertainty
    ``F0`` adds ``F0/(q CL) = F0 S/(nW)`` to each flight's Fs/q gradient.
    A flight trimmed at a declared speed (``anchor``) is fitted as
    ``F0/q + B (CL - CL_trim)``: its gauge zero is a parameter, and the
    declared force uncertainty then stands for the force left at the trim
    speed (friction), which acts the same way.
    """
    independent = core.neutral_point
    if not core.has_cg_term:  # (a fit with the CG term always has its linear fit)
        return independent, None
    cg_pct, force_zero_lbf = errors
    cl = frame["cl"].to_numpy(dtype=float)
    h = frame["h"].to_numpy(dtype=float)
    cg_sigma = np.full(len(frame), cg_pct / 100.0)
    if "cg_uncertainty_pct_mac" in frame.columns:
        given = pd.to_numeric(frame["cg_uncertainty_pct_mac"], errors="coerce").to_numpy(
            dtype=float, na_value=np.nan) / 100.0
        cg_sigma = np.where(np.isfinite(given), given, cg_sigma)
    weights, slope_sigma, zx, cl_fit = None, 0.0, None, cl
    if kind == "stick_free":
        q = _column(frame, "q_psf")
        if q is not None and np.all(np.isfinite(q) & (q > 0.0)):
            weights = (q / q.mean()) ** 2
            slope_sigma = force_zero_lbf / (q * cl)
            if anchor is not None and anchor.flights:
                zx = np.where(anchor.anchored, anchor.q_ref_psf / q, 1.0)
                cl_fit = np.where(anchor.anchored, cl - anchor.cl_trim, cl)
    fit = fit_flight_level(frame[response].to_numpy(dtype=float), cl_fit, h,
                           frame[group_col].to_numpy(), frame["flight"].to_numpy(),
                           weights=weights, cg_sigma=cg_sigma, slope_sigma=slope_sigma,
                           intercept_x=zx)
    if fit is None:
        return independent, None
    np_ = neutral_point_from_coefficients(
        fit.b, fit.c, float(fit.cov_bc[0, 0]), float(fit.cov_bc[1, 1]),
        float(fit.cov_bc[0, 1]), fit.df, kind=kind, method="flight_level",
        spread=independent.cg_spread_pct_mac, n=independent.n_points,
        n_flights=independent.n_flights, lemac_in=lemac_in, mac_in=mac_in)
    return np_, fit


@dataclass(frozen=True, eq=False)
class _Headline:
    """The pooled model's points, fit and headline neutral point (before the checks)."""

    frame: pd.DataFrame
    response: str
    group_col: str
    core: _Core
    anchor: stick_force.TrimAnchor | None
    neutral_point: NeutralPoint
    level: FlightLevelFit | None


def _headline(frame: pd.DataFrame, kind: str, lemac_in: float | None, mac_in: float | None,
              errors: tuple[float, float] | None, *, light: bool = False) -> _Headline | None:
    """The pooled fit and its headline neutral point; None when stick-free has no force.

    ``light``: the neutral point alone is wanted (``core.linear`` may be None).
    """
    if kind == "stick_free":
        if "fs_over_q_ft2" not in frame.columns:
            return None
        fsq = pd.to_numeric(frame["fs_over_q_ft2"], errors="coerce")
        frame = frame.loc[np.isfinite(fsq.to_numpy(dtype=float))].copy()
        frame["fs_over_q_ft2"] = fsq.loc[frame.index].astype(float)
        if frame.empty:
            return None
        response, group_col = "fs_over_q_ft2", "flight"
    else:
        response, group_col = "elevator_deg", "stab_setting"
    many = frame[group_col].nunique() >= MIN_INTERCEPTS_FOR_BLOCKS
    core = (_core_within if light and many else _core)(
        frame, response, group_col, kind, lemac_in, mac_in)
    anchor = stick_force.trim_anchor(frame) if kind == "stick_free" else None
    headline, level = _flight_level_np(
        frame, response, group_col, kind, core,
        errors or (DEFAULT_CG_UNCERTAINTY_PCT_MAC, DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF),
        lemac_in, mac_in, anchor)
    return _Headline(frame, response, group_col, core, anchor, headline, level)


def headline_neutral_point(
    points: pd.DataFrame, kind: str = "stick_fixed", *,
    lemac_in: float | None = None, mac_in: float | None = None,
    cg_uncertainty_pct_mac: float = DEFAULT_CG_UNCERTAINTY_PCT_MAC,
    stick_force_zero_uncertainty_lbf: float = DEFAULT_STICK_FORCE_ZERO_UNCERTAINTY_LBF,
) -> NeutralPoint | None:
    """The neutral point of :func:`pooled_fit`, without its fit checks.

    For a caller that needs the number and its interval alone (the history's
    plan, step after step): the same model and the same result as
    ``pooled_fit(...).neutral_point``, without the outlier test, the Huber
    refit, the CL^2 term and the intercept test, which cost most of the time
    on a long programme.

    Parameters
    ----------
    points, kind, lemac_in, mac_in, cg_uncertainty_pct_mac, stick_force_zero_uncertainty_lbf
        As for :func:`pooled_fit`.

    Returns
    -------
    NeutralPoint or None
        None for ``"stick_free"`` when no included point has a stick force.

    References
    ----------
    .. [1] Etkin and Reid (1996), sec. 2.5; Fieller (1954).
    """
    if kind not in ("stick_fixed", "stick_free"):
        raise TrimlogError(
            f"stability: kind expected 'stick_fixed' or 'stick_free', found {kind!r}")
    head = _headline(included_points(points), kind, lemac_in, mac_in,
                     (cg_uncertainty_pct_mac, stick_force_zero_uncertainty_lbf), light=True)
    return None if head is None else head.neutral_point


def _pooled_fit(frame: pd.DataFrame, kind: str, lemac_in: float | None,
                mac_in: float | None, errors: tuple[float, float] | None = None
                ) -> PooledFit | None:
    """:func:`pooled_fit` of already validated included points."""
    head = _headline(frame, kind, lemac_in, mac_in, errors)
    if head is None:
        return None
    frame, response, group_col, core = head.frame, head.response, head.group_col, head.core
    anchor, headline, level = head.anchor, head.neutral_point, head.level
    groups = tuple(dict.fromkeys(frame[group_col]))
    latest = str(frame[group_col].iloc[-1]) if len(frame) else None
    ranges = {}
    if len(frame):
        ranges = {"cl_range": (float(frame["cl"].min()), float(frame["cl"].max())),
                  "cg_range_pct_mac": (100.0 * float(frame["h"].min()),
                                       100.0 * float(frame["h"].max()))}
    base = {"kind": kind, "intercept_by": group_col, "groups": groups, "latest_group": latest,
            "n_points": len(frame), "cl_range": ranges.get("cl_range"),
            "cg_range_pct_mac": ranges.get("cg_range_pct_mac"),
            "has_cg_term": core.has_cg_term, "linear": core.linear,
            "neutral_point": headline, "independent_neutral_point": core.neutral_point,
            "flight_level": level, "trim_anchor": anchor,
            "force_zeros": () if anchor is None or not anchor.flights
            else stick_force.force_zeros(level, anchor)}
    if core.linear is None:
        return PooledFit(**base)
    power = _power(core.linear, "h_cl") if kind == "stick_fixed" and core.has_cg_term else (
        None, None)
    outliers = tuple(
        Outlier(kind, str(frame["flight"].iloc[o.position]), int(frame["point"].iloc[o.position]),
                frame.index[o.position], float(core.linear.resid[o.position]),
                o.studentized_residual, o.bonferroni_p)
        for o in studentized_outliers(core.linear)
    )
    words = kind.replace("_", "-")
    warnings = [finding("stability.fit.outlier", Severity.CAUTION,
                        Subject(flight=o.flight, point=o.point, quantity=kind),
                        kind_words=words, studentized_residual=o.studentized_residual)
                for o in outliers]
    robust = None
    if core.has_cg_term:
        robust = robust_check(core.linear, core.neutral_point.pct_mac)
    if robust is not None and robust.shift_pct_mac is not None and core.neutral_point.se_pct_mac:
        if abs(robust.shift_pct_mac) > 2.0 * core.neutral_point.se_pct_mac:
            warnings.append(finding("stability.fit.robust_shift", Severity.CAUTION,
                                    Subject(quantity=kind), kind_words=words,
                                    shift_pct_mac=robust.shift_pct_mac))
    curvature = curvature_check(
        frame, response, group_col, core.has_cg_term,
        lambda sub: _core(sub, response, group_col, kind, lemac_in, mac_in).neutral_point)
    if curvature.significant:
        warnings.append(finding(
            "stability.fit.curvature" + ("" if curvature.cl_max_linear is not None
                                         else ".not_removed"),
            Severity.CAUTION, Subject(quantity=kind), kind_words=words,
            p=curvature.p_value, cl_max_linear=curvature.cl_max_linear))
    intercepts = (intercept_check(frame, core.linear, core.has_cg_term)
                  if kind == "stick_fixed" else None)
    if intercepts is not None and intercepts.significant:
        warnings.append(finding(
            "stability.fit.intercepts_differ" + ("" if intercepts.f_statistic is not None
                                                 else ".exact"),
            Severity.CAUTION, Subject(flight=intercepts.worst_flight, quantity=kind),
            p=intercepts.p_value, offset_deg=intercepts.worst_offset_deg))
    return PooledFit(**base, elevator_power_per_rad=power[0], elevator_power_ci95_per_rad=power[1],
                     robust=robust, outliers=outliers, curvature=curvature,
                     intercept_check=intercepts, warnings=tuple(f.message for f in warnings),
                     findings=tuple(warnings))


def two_stage_neutral_point(gradients: tuple[FlightGradient, ...], *,
                            lemac_in: float | None = None,
                            mac_in: float | None = None) -> TwoStageFit:
    """Stick-fixed neutral point by the classic two-stage method.

    Parameters
    ----------
    gradients : tuple of FlightGradient
        From :func:`flight_gradients`.
    lemac_in, mac_in : float, optional
        MAC leading-edge station and MAC [in].

    Returns
    -------
    TwoStageFit

    Notes
    -----
    The per-flight gradients ``g_i`` are fitted against the flights' mean CG
    ``h_i`` by weighted least squares, ``g = alpha + beta h``, weighted by
    ``1/Var(g_i)`` with ``Var(g_i) = sigma^2/Sxx_i`` (``Sxx_i`` the CL spread
    of flight i; sigma common to all flights and estimated by the WLS fit from
    the scatter of the gradients about the line); equal weights if any
    gradient is exact.  The gradient is zero at
    ``hn = -alpha/beta`` (Fieller interval from the WLS covariance, t on
    ``n_flights - 2`` degrees of freedom); ``beta = -1/Cm_de'``.

    Each flight is placed at its mean CG.  Fuel burn moving the CG during a
    flight tilts that flight's gradient slightly (0.1 %MAC on noise-free
    points with typical burn); the pooled model, which uses each point's CG,
    does not have this bias.

    References
    ----------
    .. [1] USAF TPS (1990), ch. 5 (gradients plotted against CG, extrapolated
       to zero); Nelson (1998), sec. 2.8; Fieller (1954).
    """
    usable = [g for g in gradients
              if g.delev_dcl_deg is not None and g.delev_dcl_se_deg is not None]
    n_points = sum(g.n_points for g in usable)
    hs = np.array([g.h for g in usable], dtype=float)
    spread = 100.0 * float(hs.max() - hs.min()) if len(usable) else 0.0
    names = tuple(g.flight for g in usable)
    if len(usable) < 3:
        return TwoStageFit(_not_identifiable(
            "stick_fixed", "two_stage", f"{len(usable)} flight(s) with a gradient: at least 3 are "
            "needed for a two-stage neutral point with an interval", spread, n_points,
            len(usable)), None, None, None, names, "none")
    se = np.array([g.delev_dcl_se_deg for g in usable], dtype=float)
    s = np.array([g.elev_residual_std_deg or 0.0 for g in usable], dtype=float)
    # Var(g_i) = sigma^2 / Sxx_i with one sigma for all flights (same instruments): weights
    # Sxx_i = (s_i/se_i)^2.  Weights from each flight's own 3-6 point variance would be
    # noisy themselves and make the interval too short (measured: 89.5 % coverage).
    weighting = "1/variance" if np.all(se > 0.0) and np.all(s > 0.0) else "equal"
    weights = (s / se) ** 2 if weighting == "1/variance" else None
    design = pd.DataFrame({"const": np.ones(len(usable)), "h": hs})
    if not is_full_rank(design):
        return TwoStageFit(_not_identifiable(
            "stick_fixed", "two_stage", "all flights were flown at one CG", spread, n_points,
            len(usable)), None, None, None, names, weighting)
    y = pd.Series([g.delev_dcl_deg for g in usable], dtype=float)
    fit = fit_linear(y, design, weights)
    np_ = neutral_point_from_fit(fit, "const", "h", kind="stick_fixed", method="two_stage",
                         spread=spread, n=n_points, n_flights=len(usable),
                         lemac_in=lemac_in, mac_in=mac_in)
    power = _power(fit, "h")
    return TwoStageFit(np_, power[0], power[1], fit, names, weighting)


# --------------------------------------------------------------------------- everything


# long: assembles the stability result in order (fits, margins, critical, next step, stops)
def analyze_stability(points: pd.DataFrame, profile: AircraftProfile | None = None, *,
                      setting: str | None = None, flap_config: str = "clean"
                      ) -> StabilityResult:
    """Run the whole longitudinal static-stability analysis of one configuration.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced points (DEVELOPERS.md), one configuration; rows with
        ``included`` False are counted and kept out of every fit.
    profile : AircraftProfile, optional
        Needed for stations, margins at the CG limits, elevator authority,
        stop flags and the next-CG advice.
    setting : str, optional
        Stabilizer setting for the authority prediction (default: latest flown).
    flap_config : {"clean", "landing"}
        What configuration the points are (for the authority cases).

    Returns
    -------
    StabilityResult

    Raises
    ------
    TrimlogError
        Malformed input (see :func:`included_points`).

    References
    ----------
    .. [1] Etkin and Reid (1996), ch. 2; Nelson (1998), ch. 2; USAF TPS
       (1990), ch. 5; Fieller (1954).
    """
    frame = included_points(points)
    n_excluded = len(points) - len(frame)
    lemac, mac = (profile.lemac_in, profile.mac_in) if profile is not None else (None, None)
    found: list[Finding] = []

    if n_excluded:
        found.append(finding("stability.points_excluded", Severity.NOTE, count=n_excluded))
    gradients = _flight_gradients(frame)
    errors = None if profile is None else (profile.cg_uncertainty_pct_mac,
                                           profile.stick_force_zero_uncertainty_lbf)
    fixed = _pooled_fit(frame, "stick_fixed", lemac, mac, errors)
    two = two_stage_neutral_point(gradients, lemac_in=lemac, mac_in=mac)
    free = _pooled_fit(frame, "stick_free", lemac, mac, errors)
    n_without_force = len(frame) - (0 if free is None else free.n_points)
    if not fixed.neutral_point.identifiable:
        found.append(finding("stability.np_not_identifiable", Severity.WARNING,
                             Subject(quantity="neutral_point.stick_fixed"), kind="stick-fixed",
                             reason=fixed.neutral_point.reason))
    if free is None:
        found.append(finding("stability.no_stick_force", Severity.CAUTION,
                             Subject(quantity="neutral_point.stick_free")))
    else:
        if n_without_force:
            found.append(finding("stability.points_without_force", Severity.NOTE,
                                 count=n_without_force))
        if not free.neutral_point.identifiable:
            found.append(stick_force.stick_free_not_identifiable(
                None if profile is None else profile.trim_system, free.neutral_point))
    pooled_np, staged_np = fixed.neutral_point, two.neutral_point
    if pooled_np.identifiable and staged_np.identifiable and (
            pooled_np.ci95_pct_mac[1] < staged_np.ci95_pct_mac[0]
            or staged_np.ci95_pct_mac[1] < pooled_np.ci95_pct_mac[0]):
        found.append(finding("stability.np_methods_disagree", Severity.WARNING,
                             Subject(quantity="neutral_point.stick_fixed"),
                             pooled_pct_mac=pooled_np.pct_mac, two_stage_pct_mac=staged_np.pct_mac))
    found.extend(fixed.findings)
    if free is not None:
        found.extend(free.findings)
    for g in gradients:
        found.extend(g.findings)
    cgs = [(g.flight, g.flight, g.cg_pct_mac) for g in gradients]
    min_sm = None
    if profile is not None:
        cgs += [("forward CG limit", None, profile.cg_forward_pct_mac),
                ("aft CG limit", None, profile.cg_aft_pct_mac)]
        min_sm = profile.min_static_margin_pct_mac
    free_np = None if free is None else free.neutral_point
    margins = static_margins(cgs, pooled_np, free_np, min_sm)
    for m in margins:
        if m.meets_minimum is False:
            kind = "stick-free" if m.limited_by == "stick_free_np" else "stick-fixed"
            low = (m.stick_free_lower95_pct_mac if m.limited_by == "stick_free_np"
                   else m.stick_fixed_lower95_pct_mac)
            found.append(finding(
                "stability.margin_below_minimum", Severity.WARNING,
                Subject(flight=m.flight, quantity="static_margin"),
                where=m.label if m.flight is None else "CG of flight " + m.label,
                cg_pct_mac=m.cg_pct_mac, kind=kind, min_pct_mac=min_sm, lower95_pct_mac=low))
    critical = critical_neutral_point(pooled_np, free_np)
    next_step = None
    if profile is not None:
        next_step = next_cg_limit(
            pooled_np, free_np, [g.cg_pct_mac for g in gradients],
            aft_limit_pct_mac=profile.cg_aft_pct_mac,
            min_margin_pct_mac=profile.min_static_margin_pct_mac,
            step_max_pct_mac=profile.cg_step_max_pct_mac, station=profile.station,
            aft_gradient_clearly_stable=aft_flight_clearly_stable(gradients))
    authority = stops = None
    if profile is not None:
        authority = elevator_authority(fixed, profile, setting=setting, flap_config=flap_config)
        found.extend(authority.findings)
        found += authority_findings(authority)
        stops = elevator_stop_flags(points, profile.elevator_up_stop_deg,
                                    profile.elevator_down_stop_deg)
        found += [finding("stability.at_stop", Severity.WARNING,
                          Subject(flight=str(s.flight), point=int(s.point),
                                  quantity="elevator_deg"),
                          elevator_deg=s.elevator_deg, stop=s.stop) for s in stops]
    if profile is not None:  # what the stick-force numbers mean for this trim; free return
        found += stick_force.trim_system_findings(profile.trim_system, free is not None)
        found += stick_force.free_return_findings(gradients, profile.trim_friction_lbf,
                                                  free is not None)
        found += stick_force.force_zero_findings(free, None if free is None else free.trim_anchor)
    config = None
    if "config" in points.columns and points["config"].notna().any():
        config = str(points["config"].dropna().iloc[0])
    return StabilityResult(
        config=config, n_points=len(points), n_included=len(frame), n_excluded=n_excluded,
        n_without_force=n_without_force, gradients=gradients, stick_fixed=fixed,
        stick_fixed_two_stage=two, stick_free=free, margins=margins, authority=authority,
        next_cg=plan_next_cg(points, fixed, profile, None if next_step is None
                             else next_step.max_cg_pct_mac),
        stop_flags=stops or (), findings=tuple(found),
        critical=critical, next_step=next_step,
    )
