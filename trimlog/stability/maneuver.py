"""Maneuvering stability: elevator and stick force per g, and the maneuver points.

Per flight, the maneuvering points flown at one speed (a wind-up turn in
steps, or several steady turns) give the elevator per g, dδe/dn, and the
stick force per g, dFs/dn, as the slopes of straight lines against the load
factor n, with Student-t 95 % intervals.  Across flights, each gradient
normalised for the flight's weight and speed falls linearly as the CG moves
aft and is zero at a maneuver point:

* stick fixed: ``(dδe/dn) / CL1 = (h - hm)/(-Cmδ)`` with ``CL1 = W/(q·S)`` the
  1-g lift coefficient at the turn speed, zero at ``hm``;
* stick free: ``(dFs/dn) / (W/S)`` is proportional to ``hm' - h`` (stick force
  per g is proportional to wing loading and, apart from pitch damping,
  independent of speed), zero at ``hm'``.

Each line is a straight-line fit over the flights (one value per flight, so
per-flight errors such as a CG error are in its residual scatter), and the
maneuver point its zero crossing with Fieller's interval on the residual
degrees of freedom, under the same "not identifiable" rules as the neutral
points (:func:`trimlog.stability.neutral_points.neutral_point_from_coefficients`).

References
----------
.. [1] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, ch. 3 (maneuvering flight: elevator angle per g,
   the maneuver point, pitch damping in a pull-up) (from memory).
.. [2] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1,
   1988 (DTIC ADA319976), ch. 6: maneuvering stability, stick force per g
   against CG extrapolated to zero, steady turns and pull-ups (from memory).
.. [3] 14 CFR 23.155, Elevator control force in maneuvers (1-1-2014 edition,
   the text before amendment 23-64 of 2017).
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
from scipy import special

from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import AircraftProfile
from trimlog.stability.neutral_points import neutral_point_from_coefficients
from trimlog.stability.results import MANEUVER_LIMIT_WORDS as LIMIT_WORDS
from trimlog.stability.results import NeutralPoint
from trimlog.statistics.fits import fit_matrix, t_quantile

__all__ = [
    "LIGHTENING_RATIO", "MIN_NZ_RANGE_G", "MIN_STICK_FORCE_PER_G_LBF", "ManeuverGradient",
    "ManeuverResult", "StickForceRequirement", "analyze_maneuvering", "maneuver_gradients",
    "maneuver_point", "mark_off_speed", "pull_up_maneuver_shift", "stick_force_requirement",
]

#: Maneuvering points further than this from their flight's turn speed (the median
#: equivalent airspeed of its maneuvering points) are left out of its gradients [kt]:
#: at another speed the 1-g stick force is not zero (common practice, no source).
MANEUVER_SPEED_TOL_KT = 5.0
#: Smallest range of load factor for a gradient per g [g].
MIN_NZ_RANGE_G = 0.2
#: Fewest maneuvering points for a gradient per g (one residual degree of freedom).
MIN_POINTS = 3
#: A stick force per g at the top of the flown range below this fraction of the mean
#: gradient, with a curvature significant at 5 %, is a lightening gradient (common
#: practice, no source; 14 CFR 23.155(c) asks for "no excessive decrease").
LIGHTENING_RATIO = 0.8
#: Smallest stick force per g of common practice for a light aircraft with a centre
#: stick [lbf/g] (common practice, no source; a floor of about 3 lbf/g is often quoted
#: from the military flying-qualities specifications, from memory).
MIN_STICK_FORCE_PER_G_LBF = 3.0
#: Positive limit maneuvering load factor assumed when the profile gives none [g]:
#: 14 CFR 23.337(a)(1), normal category, 2.1 + 24000/(W + 10000) but not more than 3.8.
NORMAL_CATEGORY_MAX_LIMIT_G = 3.8

_WORDS = (("neutral point", "maneuver point"), ("trim gradients", "gradients per g"),
          ("trim gradient", "gradient per g"))


@dataclass(frozen=True)
class ManeuverGradient:
    """Elevator and stick force per g of one flight, at its turn speed and loading.

    Attributes
    ----------
    flight : str
    cg_pct_mac, h : float
        Mean CG of the points used [%MAC], [fraction of MAC].
    eas_kt, weight_lb : float
        Mean equivalent airspeed [kt] and weight [lb] of the points used.
    cl_1g : float
        1-g lift coefficient at that speed and weight, ``W/(q·S)`` [-].
    wing_loading_psf : float
        ``W/S`` [lbf/ft^2].
    n_points : int
    nz_range : (float, float)
        Smallest and largest load factor used [g].
    elevator_per_g_deg, elevator_per_g_ci95_deg, elevator_per_g_se_deg
        dδe/dn [deg/g] (trailing-edge down positive: negative when stable),
        its 95 % interval and standard error; None with ``reason``.
    stick_force_per_g_lbf, stick_force_per_g_ci95_lbf, stick_force_per_g_se_lbf
        dFs/dn [lbf/g] (pull positive), its interval and standard error; None
        without a logged force.
    force_top_ratio : float or None
        Stick force per g at the top of the range over the mean gradient, from a
        quadratic fit (needs four points); below 1 the gradient lightens.
    force_curvature_p : float or None
        Two-sided p-value of the quadratic term.
    lightening : bool
        ``force_curvature_p < 0.05`` and ``force_top_ratio < LIGHTENING_RATIO``.
    reason : str
        Why no gradient (empty when there is one).
    """

    flight: str
    cg_pct_mac: float
    h: float
    eas_kt: float
    weight_lb: float
    cl_1g: float
    wing_loading_psf: float
    n_points: int
    nz_range: tuple[float, float]
    elevator_per_g_deg: float | None
    elevator_per_g_ci95_deg: tuple[float, float] | None
    elevator_per_g_se_deg: float | None
    stick_force_per_g_lbf: float | None
    stick_force_per_g_ci95_lbf: tuple[float, float] | None
    stick_force_per_g_se_lbf: float | None
    force_top_ratio: float | None
    force_curvature_p: float | None
    lightening: bool
    reason: str


@dataclass(frozen=True)
class StickForceRequirement:
    """The stick force per g a flight-test engineer would want, and where it comes from.

    Attributes
    ----------
    control : str
        ``"stick"`` or ``"wheel"``.
    limit_load_factor_g : float
        Positive limit maneuvering load factor used [g].
    force_to_limit_lbf : float
        14 CFR 23.155(a): the least force to reach the limit load factor [lbf].
    per_g_23_155_lbf : float
        That force spread over ``limit_load_factor_g - 1`` [lbf/g].
    per_g_common_practice_lbf : float
        :data:`MIN_STICK_FORCE_PER_G_LBF` [lbf/g] (common practice, marked).
    minimum_per_g_lbf : float
        The larger of the two [lbf/g]: a lower bound below it is a warning.
    assumed : tuple of str
        What was assumed because the profile does not say.
    """

    control: str
    limit_load_factor_g: float
    force_to_limit_lbf: float
    per_g_23_155_lbf: float
    per_g_common_practice_lbf: float
    minimum_per_g_lbf: float
    assumed: tuple[str, ...]


@dataclass(frozen=True, eq=False)
class ManeuverResult:
    """Everything the maneuvering analysis found.

    Attributes
    ----------
    points : pandas.DataFrame
        The reduced maneuvering points, excluded ones with ``included`` False.
    gradients : tuple of ManeuverGradient
    stick_fixed, stick_free : NeutralPoint
        The maneuver points hm and hm' (``kind`` as for neutral points,
        ``method`` ``"two_stage"``); ``stick_free`` is None without a logged force.
    hm_minus_hn_pct_mac, hm_free_minus_hn_free_pct_mac : float or None
        Measured maneuver point less the neutral point [%MAC], when both exist.
    requirement : StickForceRequirement
    aft_limit_force_per_g_lbf, aft_limit_force_per_g_ci95_lbf
        Stick force per g predicted at the aft CG limit and the lightest weight
        flown [lbf/g], and its 95 % interval.
    aft_cg_pct_mac : float or None
        Most aft CG [%MAC] that keeps the minimum margin ahead of both maneuver
        points' forward bounds and the lower 95 % bound of the stick force per
        g at or above the minimum; None when nothing limits.
    limited_by : str
        What sets ``aft_cg_pct_mac``: ``"stick-fixed maneuver margin"``,
        ``"stick-free maneuver margin"`` or ``"minimum stick force per g"``.
    warnings : tuple of str
        The messages of ``findings``, in order.
    cg_limits : dict of str to float
        Most aft CG [%MAC] each maneuvering limit allows, by ``limited_by``
        code (``stick_fixed_mp``, ``stick_free_mp``, ``min_stick_force_per_g``).
    """

    points: pd.DataFrame
    gradients: tuple[ManeuverGradient, ...]
    stick_fixed: NeutralPoint
    stick_free: NeutralPoint | None
    hm_minus_hn_pct_mac: float | None
    hm_free_minus_hn_free_pct_mac: float | None
    requirement: StickForceRequirement
    aft_limit_force_per_g_lbf: float | None
    aft_limit_force_per_g_ci95_lbf: tuple[float, float] | None
    aft_cg_pct_mac: float | None
    limited_by: str
    warnings: tuple[str, ...]
    cg_limits: dict[str, float] = field(default_factory=dict)
    #: What the analysis found, typed (codes ``stability.maneuver.*``, with their values):
    #: a light or lightening stick force per g is a warning, the rest cautions.
    findings: tuple[Finding, ...] = ()

    def next_step_limits(self) -> dict[str, tuple[float, str]]:
        """Limits for the next-CG hook, :func:`trimlog.stability.critical.tighten_next_step`."""
        return {code: (value, LIMIT_WORDS[code]) for code, value in self.cg_limits.items()}


# ------------------------------------------------------------------ per flight


def mark_off_speed(points: pd.DataFrame) -> pd.DataFrame:
    """Leave out maneuvering points away from their flight's turn speed (flag ``off_speed``).

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced maneuvering points (``flight``, ``eas_kt``, ``included``, ``flags``).

    Returns
    -------
    pandas.DataFrame
        A copy; points more than :data:`MANEUVER_SPEED_TOL_KT` from the median
        equivalent airspeed of their flight's included points are excluded.
    """
    out = points.copy()
    for _, part in out.loc[out["included"].astype(bool)].groupby("flight", sort=False):
        ref = float(part["eas_kt"].median())
        far = part.index[(part["eas_kt"] - ref).abs() > MANEUVER_SPEED_TOL_KT]
        out.loc[far, "included"] = False
        out.loc[far, "flags"] = [
            ";".join(f for f in (str(x), "off_speed") if f) for x in out.loc[far, "flags"]
        ]
    return out


def _slope(n: np.ndarray, y: np.ndarray) -> tuple[float, float, int]:
    """Slope of y on n, its standard error and residual degrees of freedom."""
    fit = fit_matrix(y, np.column_stack([np.ones_like(n), n]), ["a", "b"])
    return float(fit.params["b"]), math.sqrt(max(float(fit.cov.loc["b", "b"]), 0.0)), fit.df_resid


def _curvature(n: np.ndarray, y: np.ndarray, slope: float) -> tuple[float | None, float | None]:
    """Top-of-range gradient ratio and p-value of a quadratic term (four points or more)."""
    if len(n) < 4 or slope == 0.0:
        return None, None
    fit = fit_matrix(y, np.column_stack([np.ones_like(n), n, n * n]), ["a", "b", "c"])
    if fit.df_resid < 1:
        return None, None
    b, c = float(fit.params["b"]), float(fit.params["c"])
    se = math.sqrt(max(float(fit.cov.loc["c", "c"]), 0.0))
    p = 1.0 if se == 0.0 and c == 0.0 else (
        0.0 if se == 0.0 else float(2.0 * special.stdtr(fit.df_resid, -abs(c / se))))
    return (b + 2.0 * c * float(n.max())) / slope, p


def maneuver_gradients(points: pd.DataFrame, wing_area_ft2: float) -> tuple[ManeuverGradient, ...]:
    """Elevator and stick force per g of each flight.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced maneuvering points: ``flight``, ``included``, ``nz_g``,
        ``elevator_deg``, ``stick_force_lbf``, ``eas_kt``, ``q_psf``,
        ``weight_lb``, ``h``.
    wing_area_ft2 : float
        Wing area S [ft^2].

    Returns
    -------
    tuple of ManeuverGradient
        One per flight with included points, in the table's order.

    Examples
    --------
    >>> import pandas as pd
    >>> pts = pd.DataFrame({"flight": "2", "included": True, "nz_g": [1.3, 1.6, 2.0],
    ...     "elevator_deg": [1.1, 0.2, -1.0], "stick_force_lbf": [2.4, 4.8, 8.0],
    ...     "eas_kt": 95.0, "q_psf": 30.56, "weight_lb": 1550.0, "h": 0.27})
    >>> g = maneuver_gradients(pts, 120.0)[0]
    >>> round(g.elevator_per_g_deg, 2), round(g.stick_force_per_g_lbf, 2)
    (-3.0, 8.0)
    """
    used = points.loc[points["included"].astype(bool)]
    out = []
    for flight, part in used.groupby(used["flight"].astype(str), sort=False):
        n = part["nz_g"].to_numpy(dtype=float)
        weight = float(part["weight_lb"].mean())
        h = float(part["h"].mean())
        q = float(part["q_psf"].mean())
        base = dict(
            flight=str(flight), cg_pct_mac=100.0 * h, h=h, eas_kt=float(part["eas_kt"].mean()),
            weight_lb=weight, cl_1g=weight / (q * wing_area_ft2),
            wing_loading_psf=weight / wing_area_ft2, n_points=len(part),
            nz_range=(float(n.min()), float(n.max())),
        )
        empty = dict(elevator_per_g_deg=None, elevator_per_g_ci95_deg=None,
                     elevator_per_g_se_deg=None, stick_force_per_g_lbf=None,
                     stick_force_per_g_ci95_lbf=None, stick_force_per_g_se_lbf=None,
                     force_top_ratio=None, force_curvature_p=None, lightening=False)
        if len(part) < MIN_POINTS:
            out.append(ManeuverGradient(**base, **empty, reason=(
                f"{len(part)} maneuvering point(s); at least {MIN_POINTS} are needed")))
            continue
        if np.ptp(n) < MIN_NZ_RANGE_G:
            out.append(ManeuverGradient(**base, **empty, reason=(
                f"the load factors span only {np.ptp(n):.2f} g; at least {MIN_NZ_RANGE_G:g} g "
                "is needed")))
            continue
        de, se_de, df = _slope(n, part["elevator_deg"].to_numpy(dtype=float))
        t = t_quantile(df)
        values = dict(empty, elevator_per_g_deg=de, elevator_per_g_se_deg=se_de,
                      elevator_per_g_ci95_deg=(de - t * se_de, de + t * se_de))
        force = part["stick_force_lbf"].to_numpy(dtype=float)
        if np.isfinite(force).all():
            fs, se_fs, _ = _slope(n, force)
            ratio, p = _curvature(n, force, fs)
            values.update(stick_force_per_g_lbf=fs, stick_force_per_g_se_lbf=se_fs,
                          stick_force_per_g_ci95_lbf=(fs - t * se_fs, fs + t * se_fs),
                          force_top_ratio=ratio, force_curvature_p=p,
                          lightening=bool(p is not None and p < 0.05
                                          and ratio < LIGHTENING_RATIO))
        out.append(ManeuverGradient(**base, **values, reason=""))
    return tuple(out)


# ------------------------------------------------------------------ maneuver points


def _line(gradients: tuple[ManeuverGradient, ...], kind: str
          ) -> tuple[np.ndarray, np.ndarray, list[ManeuverGradient]]:
    if kind == "stick_fixed":
        use = [g for g in gradients if g.elevator_per_g_deg is not None]
        y = np.array([g.elevator_per_g_deg / g.cl_1g for g in use])
    else:
        use = [g for g in gradients if g.stick_force_per_g_lbf is not None]
        y = np.array([g.stick_force_per_g_lbf / g.wing_loading_psf for g in use])
    return np.array([g.h for g in use]), y, use


def maneuver_point(gradients: tuple[ManeuverGradient, ...], kind: str, *,
                   lemac_in: float | None = None, mac_in: float | None = None) -> NeutralPoint:
    """The maneuver point: normalised gradient per g against CG, extrapolated to zero.

    Parameters
    ----------
    gradients : tuple of ManeuverGradient
        From :func:`maneuver_gradients`.
    kind : {"stick_fixed", "stick_free"}
        ``(dδe/dn)/CL1`` or ``(dFs/dn)/(W/S)`` against h.
    lemac_in, mac_in : float, optional
        Leading edge and length of the MAC [in], for the station.

    Returns
    -------
    NeutralPoint
        ``pct_mac`` is hm (or hm') with Fieller's 95 % interval, or the reason
        it cannot be said yet (fewer than three flights, a CG spread under
        3 %MAC, an unbounded or too-wide interval, the wrong sign).

    Examples
    --------
    Synthetic gradients of known truth, hm = 40 %MAC, exactly on the line:

    >>> gs = tuple(ManeuverGradient(str(i), 100 * h, h, 95.0, 1550.0, 0.42, 12.9, 4,
    ...     (1.3, 2.0), 0.42 * (h - 0.40) * 57.3, None, None, None, None, None, None,
    ...     None, False, "") for i, h in enumerate((0.20, 0.25, 0.30)))
    >>> round(maneuver_point(gs, "stick_fixed").pct_mac, 6)
    40.0
    """
    h, y, use = _line(gradients, kind)
    spread = 100.0 * float(np.ptp(h)) if len(h) else 0.0
    n_points = sum(g.n_points for g in use)
    if len(use) < 3:
        return _reworded(NeutralPoint(kind, "two_stage", False, None, None, None, None, None,
                                      None, f"gradients per g from {len(use)} flight(s); at least "
                                      "3 flights at different CGs are needed", spread,
                                      n_points, len(use)))
    fit = fit_matrix(y, np.column_stack([np.ones_like(h), h]), ["a", "b"])
    cov = fit.cov
    point = neutral_point_from_coefficients(
        float(fit.params["a"]), float(fit.params["b"]), float(cov.loc["a", "a"]),
        float(cov.loc["b", "b"]), float(cov.loc["a", "b"]), fit.df_resid, kind=kind,
        method="two_stage", spread=spread, n=n_points, n_flights=len(use), lemac_in=lemac_in,
        mac_in=mac_in)
    return _reworded(point)


def _reworded(point: NeutralPoint) -> NeutralPoint:
    reason = point.reason
    for old, new in _WORDS:
        reason = reason.replace(old, new)
    return NeutralPoint(**{**point.__dict__, "reason": reason})


def _predict(gradients: tuple[ManeuverGradient, ...], h_at: float | np.ndarray
             ) -> tuple[np.ndarray, np.ndarray, int] | None:
    """Normalised stick force per g at ``h_at`` from the stick-free line: value, se, df."""
    h, y, use = _line(gradients, "stick_free")
    if len(use) < 3 or np.ptp(h) == 0.0:
        return None
    fit = fit_matrix(y, np.column_stack([np.ones_like(h), h]), ["a", "b"])
    x = np.column_stack([np.ones_like(np.atleast_1d(h_at)), np.atleast_1d(h_at)])
    value = x @ fit.params.to_numpy()
    var = np.einsum("ij,jk,ik->i", x, fit.cov.to_numpy(), x)
    return value, np.sqrt(np.maximum(var, 0.0)), fit.df_resid


# ------------------------------------------------------------------ requirements


def stick_force_requirement(max_weight_lb: float, *, control: str = "stick",
                            limit_load_factor_g: float | None = None) -> StickForceRequirement:
    """The least stick force per g: 14 CFR 23.155(a) and common practice.

    Parameters
    ----------
    max_weight_lb : float
        Maximum weight W [lb].
    control : {"stick", "wheel"}
        Pitch control type.
    limit_load_factor_g : float, optional
        Positive limit maneuvering load factor [g]; default the normal-category
        value of 14 CFR 23.337(a)(1).

    Returns
    -------
    StickForceRequirement

    Notes
    -----
    14 CFR 23.155(a) (1-1-2014 edition, before amendment 23-64): the elevator
    force to reach the positive limit maneuvering load factor may not be less
    than, for wheel controls, W/100 or 20 pounds, whichever is greater, but
    need not exceed 50 pounds; for stick controls, W/140 or 15 pounds,
    whichever is greater, but need not exceed 35 pounds.  23.155(c) (from
    memory): no excessive decrease of the gradient of stick force against
    load factor with increasing load factor.  Since 2017 the numbers live in
    the consensus standards accepted as means of compliance.

    Examples
    --------
    >>> r = stick_force_requirement(1650.0)        # W/140 = 11.8 lb -> 15 lb floor
    >>> r.force_to_limit_lbf, r.limit_load_factor_g, round(r.per_g_23_155_lbf, 2)
    (15.0, 3.8, 5.36)
    >>> stick_force_requirement(6000.0, control="wheel").force_to_limit_lbf  # W/100 = 60 -> 50
    50.0
    """
    assumed = []
    if control not in ("stick", "wheel"):
        raise ValueError(f"control must be 'stick' or 'wheel', found {control!r}")
    if limit_load_factor_g is None:
        # 14 CFR 23.337(a)(1): n >= 2.1 + 24000/(W + 10000), need not exceed 3.8.
        limit_load_factor_g = min(NORMAL_CATEGORY_MAX_LIMIT_G,
                                  2.1 + 24000.0 / (max_weight_lb + 10000.0))
        assumed.append(f"normal category, limit load factor {limit_load_factor_g:.2f} g "
                       "(14 CFR 23.337(a)(1))")
    if control == "stick":
        force = min(max(max_weight_lb / 140.0, 15.0), 35.0)  # 14 CFR 23.155(a)(2)
    else:
        force = min(max(max_weight_lb / 100.0, 20.0), 50.0)  # 14 CFR 23.155(a)(1)
    per_g = force / (limit_load_factor_g - 1.0)
    return StickForceRequirement(control, limit_load_factor_g, force, per_g,
                                 MIN_STICK_FORCE_PER_G_LBF,
                                 max(per_g, MIN_STICK_FORCE_PER_G_LBF), tuple(assumed))


# ------------------------------------------------------------------ the whole analysis


def analyze_maneuvering(points: pd.DataFrame, profile: AircraftProfile, *,
                        neutral_fixed: NeutralPoint | None = None,
                        neutral_free: NeutralPoint | None = None,
                        control: str = "stick") -> ManeuverResult:
    """Gradients per g, maneuver points, the 23.155 check and the aft CG they allow.

    Parameters
    ----------
    points : pandas.DataFrame
        Reduced maneuvering points (see :func:`maneuver_gradients`), already
        through :func:`mark_off_speed` and the user's choices.
    profile : AircraftProfile
        Wing area, MAC, CG limits, maximum weight, ``min_static_margin_pct_mac``
        (the least margin kept ahead of each maneuver point's forward bound).
    neutral_fixed, neutral_free : NeutralPoint, optional
        The neutral points, for hm - hn.
    control : {"stick", "wheel"}
        Pitch control type (a stick is assumed until the profile says).

    Returns
    -------
    ManeuverResult
    """
    gradients = maneuver_gradients(points, profile.wing_area_ft2)
    fixed = maneuver_point(gradients, "stick_fixed", lemac_in=profile.lemac_in,
                           mac_in=profile.mac_in)
    has_force = any(g.stick_force_per_g_lbf is not None for g in gradients)
    free = (maneuver_point(gradients, "stick_free", lemac_in=profile.lemac_in,
                           mac_in=profile.mac_in) if has_force else None)
    requirement = stick_force_requirement(profile.max_weight_lb, control=control)
    minimum = requirement.minimum_per_g_lbf
    found = _gradient_findings(gradients, requirement)
    light = min((g.weight_lb for g in gradients), default=profile.max_weight_lb)
    aft_value, aft_ci = None, None
    predicted = _predict(gradients, profile.cg_aft_pct_mac / 100.0)
    if predicted is not None and predicted[2] >= 1:
        value, se, df = float(predicted[0][0]), float(predicted[1][0]), predicted[2]
        t = t_quantile(df)
        scale = light / profile.wing_area_ft2
        aft_value, aft_ci = value * scale, ((value - t * se) * scale, (value + t * se) * scale)
        if aft_ci[0] < minimum:
            found.append(finding(
                "stability.maneuver.aft_limit_light", Severity.WARNING,
                Subject(quantity="stick_force_per_g"), aft_cg_pct_mac=profile.cg_aft_pct_mac,
                weight_lb=light, per_g_lbf=aft_value, lower95_lbf=aft_ci[0],
                upper95_lbf=aft_ci[1], minimum_lbf=minimum))
    limits = _aft_cg(gradients, fixed, free, profile, minimum, light)
    code = min(limits, key=limits.get) if limits else ""
    aft_cg, limited_by = (limits[code], LIMIT_WORDS[code]) if code else (None, "")
    for point, name in ((fixed, "stick-fixed"), (free, "stick-free")):
        if point is not None and not point.identifiable:
            found.append(finding("stability.maneuver.not_identifiable", Severity.CAUTION,
                                 Subject(quantity=f"maneuver_point.{point.kind}"), kind=name,
                                 reason=point.reason))
    return ManeuverResult(
        points=points, gradients=gradients, stick_fixed=fixed, stick_free=free,
        hm_minus_hn_pct_mac=_difference(fixed, neutral_fixed),
        hm_free_minus_hn_free_pct_mac=_difference(free, neutral_free),
        requirement=requirement, aft_limit_force_per_g_lbf=aft_value,
        aft_limit_force_per_g_ci95_lbf=aft_ci, aft_cg_pct_mac=aft_cg, limited_by=limited_by,
        warnings=tuple(f.message for f in found), cg_limits=limits, findings=tuple(found))


def _gradient_findings(gradients: tuple[ManeuverGradient, ...],
                       requirement: StickForceRequirement) -> list[Finding]:
    """Each flight's findings: no gradient, a lightening or a light stick force per g."""
    minimum = requirement.minimum_per_g_lbf
    found = [finding("stability.maneuver.no_gradient", Severity.CAUTION,
                     Subject(flight=g.flight), n_points=g.n_points, reason=g.reason)
             for g in gradients if g.reason]
    for g in gradients:
        if g.lightening:
            found.append(finding(
                "stability.maneuver.lightening", Severity.WARNING, Subject(flight=g.flight),
                nz_top_g=g.nz_range[1], top_ratio_pct=100 * g.force_top_ratio))
        ci = g.stick_force_per_g_ci95_lbf
        if ci is not None and ci[0] < minimum:
            found.append(finding(
                "stability.maneuver.light_force", Severity.WARNING, Subject(flight=g.flight),
                cg_pct_mac=g.cg_pct_mac, per_g_lbf=g.stick_force_per_g_lbf, lower95_lbf=ci[0],
                upper95_lbf=ci[1], verb="is" if g.stick_force_per_g_lbf < minimum else "may be",
                minimum_lbf=minimum, basis=_minimum_words(requirement)))
    return found


def _minimum_words(r: StickForceRequirement) -> str:
    if r.per_g_23_155_lbf >= r.per_g_common_practice_lbf:
        return (f"14 CFR 23.155(a), {r.force_to_limit_lbf:.0f} lbf to reach "
                f"{r.limit_load_factor_g:.2f} g with a {r.control}")
    return "common practice, no source"


def _difference(point: NeutralPoint | None, hn: NeutralPoint | None) -> float | None:
    if point is None or hn is None or not (point.identifiable and hn.identifiable):
        return None
    return float(point.pct_mac - hn.pct_mac)




def _aft_cg(gradients: tuple[ManeuverGradient, ...], fixed: NeutralPoint,
            free: NeutralPoint | None, profile: AircraftProfile, minimum: float,
            weight_lb: float) -> dict[str, float]:
    """Most aft CG each maneuvering limit allows, by ``limited_by`` code (conservative side).

    The policy minimum static margin is kept ahead of each maneuver point's
    forward 95 % bound; the stick force per g must keep its lower 95 %
    prediction bound at or above the minimum (on a 0.25 %MAC grid, the last
    CG that does).
    """
    margin = profile.min_static_margin_pct_mac
    limits: dict[str, float] = {}
    if fixed.identifiable:
        limits["stick_fixed_mp"] = float(fixed.ci95_pct_mac[0] - margin)
    if free is not None and free.identifiable:
        limits["stick_free_mp"] = float(free.ci95_pct_mac[0] - margin)
    # The CG where the lower 95 % bound of the predicted stick force per g meets the minimum.
    scale = weight_lb / profile.wing_area_ft2
    grid = np.arange(profile.cg_forward_pct_mac, profile.cg_aft_pct_mac + 1e-9, 0.25)
    p = _predict(gradients, grid / 100.0)
    if p is not None and p[2] >= 1:
        ok = (p[0] - t_quantile(p[2]) * p[1]) * scale >= minimum
        if not ok.all():
            first_bad = int(np.argmin(ok))
            cg = float(grid[first_bad - 1]) if first_bad > 0 else float(grid[0])
            limits["min_stick_force_per_g"] = cg
    return limits


def pull_up_maneuver_shift(cm_q_per_rad: float, mass_slug: float, density_slug_ft3: float,
                           wing_area_ft2: float, mac_ft: float) -> float:
    """Stick-fixed maneuver point aft of the neutral point in pull-ups, ``hm - hn`` [fraction].

    Parameters
    ----------
    cm_q_per_rad : float
        Pitch damping derivative Cmq, per unit ``q·c/(2V)`` [1/rad] (negative).
    mass_slug : float
        Aircraft mass [slug].
    density_slug_ft3 : float
        Air density [slug/ft^3].
    wing_area_ft2, mac_ft : float
        Wing area [ft^2] and mean aerodynamic chord [ft].

    Returns
    -------
    float
        ``-Cmq/(2·μ)`` with ``μ = 2m/(ρ·S·c)`` [fraction of MAC].

    Notes
    -----
    In a steady pull-up the pitch rate is ``q = g(n - 1)/V``; in a steady
    level turn ``q = (g/V)(n - 1/n)``, whose slope ``(g/V)(1 + 1/n²)`` is
    larger, so a turn at the same n needs more elevator per g and its
    maneuver point is further aft by the factor ``(1 + 1/n²)``.

    References
    ----------
    .. [1] B. Etkin and L. D. Reid, *Dynamics of Flight*, 3rd ed., 1996, ch. 3
       (the maneuver point in a pull-up) (from memory).

    Examples
    --------
    >>> round(pull_up_maneuver_shift(-12.0, 51.0, 0.0020, 118.0, 4.25), 3)
    0.059
    """
    mu = 2.0 * mass_slug / (density_slug_ft3 * wing_area_ft2 * mac_ft)
    return -cm_q_per_rad / (2.0 * mu)
