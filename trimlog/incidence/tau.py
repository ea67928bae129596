"""Elevator effectiveness tau: from the chord ratio, from flight, and which to use.

``tau = d(alpha)/d(delta_e)`` turns an elevator deflection into the equivalent
change of tail angle of attack; :mod:`trimlog.incidence.shim` uses it to turn the
elevator at cruise into a stabilizer incidence change.  Three sources, in
order of preference (:data:`TAU_SOURCES`):

* flight-calibrated: the trim-line intercept moves by
  ``delta_delta_e0 = -delta_i_t / tau`` between two incidence settings, so
  flights before and after a change give tau with a Fieller interval;
* the profile's ``tail.tau``, with an assumed interval;
* an estimate from the elevator chord ratio: thin-airfoil flap theory times
  an empirical correction, checked against a published chart.

All functions take plain numbers (estimates, standard errors, degrees of
freedom), not fit objects, so the stability fit and this module stay
independent.

References
----------
.. [1] H. Glauert, *The Elements of Aerofoil and Airscrew Theory*, 2nd ed.,
   Cambridge University Press, 1947, ch. 7 (the hinged flap in thin-aerofoil
   theory).
.. [2] H. Schlichting and E. Truckenbrodt, *Aerodynamics of the Airplane*,
   McGraw-Hill, 1979, eq. 12.7 (flap effectiveness of a thin profile).
.. [3] J. Roskam, *Airplane Design, Part VI*, DARcorporation, 1987, fig. 8.15
   (empirical correction to the theoretical plain-flap lift effectiveness,
   taken from USAF DATCOM fig. 6.1.1.1-39b).
.. [4] M. H. Sadraey, *Aircraft Design: A Systems Engineering Approach*,
   Wiley, 2012, fig. 12.12 (control-surface angle-of-attack effectiveness
   against chord ratio).
.. [5] E. C. Fieller, "Some problems in interval estimation", *J. Royal
   Statistical Society B* 16 (1954) 175-185.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any, Literal

import numpy as np
import pandas as pd

from trimlog.errors import NotIdentifiableError, ProfileError, TrimlogError
from trimlog.findings import Finding, Severity, finding
from trimlog.statistics import fits

TAU_SOURCES = ("flight-calibrated", "profile", "chord-ratio estimate")
TauSource = Literal["flight-calibrated", "profile", "chord-ratio estimate"]

#: Relative uncertainty given to a profile ``tau`` (an assumption, not a measurement).
PROFILE_TAU_RELATIVE_UNCERTAINTY = 0.10

#: Section lift-curve slope over its thin-airfoil value assumed for a tail airfoil.
DEFAULT_SECTION_LIFT_SLOPE_RATIO = 0.90

# Sadraey [4] fig. 12.12, readings to about +/-0.02 (taken from a digitization of
# the printed figure, not re-read from the book here).
_CHART_CHORD_RATIO = (0.05, 0.10, 0.15, 0.20, 0.25, 0.30, 0.35, 0.40, 0.45, 0.50, 0.55,
                      0.60, 0.70)
_CHART_TAU = (0.16, 0.26, 0.35, 0.41, 0.47, 0.52, 0.56, 0.60, 0.64, 0.67, 0.71, 0.74, 0.80)
CHART_READING_PRECISION = 0.02

# What the chord-ratio methods leave out, each a fraction by which the elevator
# of a real light-aircraft tail can be LESS effective than the 2-D estimate.
# The methods assume a full-span, sealed, unbalanced plain flap; a profile does
# not say which of these hold, so the near end of the range allows for all
# three.  None of them makes an elevator more effective than the estimate, so
# the far end is unchanged.
#: Elevator short of the full tail span (rudder cut-out, tips, a hinge-line
#: fairing): tau scales with about the spanned fraction of the tail, 0.85-0.95 on
#: light aircraft (DATCOM sec. 6.1.4.1 span factor K_b; values from memory).
SPAN_RATIO_ALLOWANCE = 0.10
#: Unsealed hinge gap: flow through the gap costs roughly 10-20 % of the plain
#: flap's effectiveness (NACA wind-tunnel tests of sealed and unsealed
#: control-surface gaps, summarised in Hoerner, *Fluid-Dynamic Lift*, 1985,
#: ch. 5; from memory).
UNSEALED_GAP_ALLOWANCE = 0.15
#: Horn or overhang balance: the unshielded horn area carries less than its share
#: of the elevator's lift, about 5 % of tau (Hoerner, *Fluid-Dynamic Lift*,
#: ch. 5; from memory).
HORN_BALANCE_ALLOWANCE = 0.05
#: Flight-calibrated tau of light aircraft are often this much or more below
#: handbook chord-ratio estimates (common practice, no source); the three
#: allowances above, compounded, give about this.
REAL_TAIL_ALLOWANCES = (
    ("elevator span ratio", SPAN_RATIO_ALLOWANCE),
    ("hinge gap or seal", UNSEALED_GAP_ALLOWANCE),
    ("horn balance", HORN_BALANCE_ALLOWANCE),
)

# Roskam [3] fig. 8.15: Cl_delta / Cl_delta,theory read at cf/c = 0.05 and 0.50
# (nearly straight lines in between), one row per Cl_alpha / Cl_alpha,theory.
_CORRECTION_SLOPE_RATIO = (0.70, 0.80, 0.90, 1.00)
_CORRECTION_AT_005 = (0.36, 0.575, 0.78, 1.00)
_CORRECTION_AT_050 = (0.55, 0.733, 0.87, 1.00)


def _finite(name: str, value: Any) -> float:
    # Shared with trimlog.incidence.shim (which imports it) so both give the same message.
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise TrimlogError(f"{name}: expected a number, found {value!r}") from None
    if not math.isfinite(number):
        raise TrimlogError(f"{name}: expected a finite number, found {value!r}")
    return number



def elevator_effectiveness_thin_airfoil(chord_ratio: Any) -> Any:
    r"""Elevator effectiveness of a thin airfoil with a hinged flap (Glauert).

    Parameters
    ----------
    chord_ratio : float, array or Series
        Elevator chord over the chord of the whole tail section, cf/c [-],
        0 to 1.

    Returns
    -------
    float, array or Series
        tau = d(alpha)/d(delta_e) [-]; a Series in gives a Series out on the
        same index.

    Raises
    ------
    TrimlogError
        A chord ratio outside 0..1.

    Notes
    -----
    With the hinge at ``x = c (1 - cf/c)`` and ``x = c/2 (1 - cos theta)``,

    .. math:: \cos\theta_f = 2 c_f/c - 1, \qquad
              \tau = 1 - (\theta_f - \sin\theta_f)/\pi .

    References
    ----------
    Glauert, *The Elements of Aerofoil and Airscrew Theory*, ch. 7;
    Schlichting & Truckenbrodt, *Aerodynamics of the Airplane*, eq. 12.7.

    Examples
    --------
    >>> round(float(elevator_effectiveness_thin_airfoil(0.25)), 4)
    0.609
    """
    values = np.asarray(chord_ratio, dtype=float)
    if not np.all((values >= 0.0) & (values <= 1.0)):
        raise TrimlogError(
            f"elevator chord ratio: expected values between 0 and 1, found {chord_ratio!r}"
        )
    theta = np.arccos(2.0 * values - 1.0)
    tau = 1.0 - (theta - np.sin(theta)) / np.pi
    if isinstance(chord_ratio, pd.Series):
        return pd.Series(tau, index=chord_ratio.index, name="tau")
    return tau if tau.ndim else float(tau)


def _chart_tau(ratio: float) -> float:
    """Tau read from Sadraey (2012) fig. 12.12, linear between the readings."""
    return float(np.interp(ratio, _CHART_CHORD_RATIO, _CHART_TAU))


def _correction_factor(ratio: float, section_lift_slope_ratio: float) -> float:
    """Cl_delta / Cl_delta,theory from Roskam Part VI fig. 8.15, held beyond cf/c = 0.5."""
    k = _finite("section_lift_slope_ratio", section_lift_slope_ratio)
    if not _CORRECTION_SLOPE_RATIO[0] <= k <= _CORRECTION_SLOPE_RATIO[-1]:
        raise TrimlogError(
            f"section_lift_slope_ratio: expected 0.70..1.00 (the chart's range), found {k:g}"
        )
    at_005 = float(np.interp(k, _CORRECTION_SLOPE_RATIO, _CORRECTION_AT_005))
    at_050 = float(np.interp(k, _CORRECTION_SLOPE_RATIO, _CORRECTION_AT_050))
    return at_005 + (min(max(ratio, 0.05), 0.50) - 0.05) / 0.45 * (at_050 - at_005)


def _chord_ratio_in_range(chord_ratio: float) -> float:
    ratio = _finite("tail.elevator_chord_ratio", chord_ratio)
    lo, hi = _CHART_CHORD_RATIO[0], _CHART_CHORD_RATIO[-1]
    if not lo <= ratio <= hi:
        raise ProfileError(
            f"tail.elevator_chord_ratio: the published charts cover cf/c = {lo:g} to {hi:g}, "
            f"found {ratio:g}; give tail.tau instead"
        )
    return ratio


@dataclass(frozen=True)
class TauEstimate:
    """Tau estimated from the elevator chord ratio, with its range."""

    chord_ratio: float
    thin_airfoil: float
    correction_factor: float
    section_lift_slope_ratio: float
    value: float
    chart_value: float
    ci95: tuple[float, float]
    warnings: tuple[str, ...] = ()
    #: The fraction the near end allows for span ratio, gap and horn together.
    real_tail_allowance: float = 0.0
    #: ``warnings`` coded (``incidence.tau.*``).
    findings: tuple[Finding, ...] = ()


def real_tail_factor() -> float:
    """Worst-case factor on tau for span ratio, gap and horn balance, compounded.

    Returns
    -------
    float
        ``prod(1 - a)`` over :data:`REAL_TAIL_ALLOWANCES` [-] (0.727 with the
        values from memory: 0.90 x 0.85 x 0.95).

    Examples
    --------
    >>> round(real_tail_factor(), 3)
    0.727
    """
    return float(np.prod([1.0 - a for _, a in REAL_TAIL_ALLOWANCES]))


def elevator_effectiveness_estimate(
    chord_ratio: float, section_lift_slope_ratio: float = DEFAULT_SECTION_LIFT_SLOPE_RATIO
) -> TauEstimate:
    """Tau of a real hinged elevator: thin-airfoil theory times an empirical correction.

    Parameters
    ----------
    chord_ratio : float
        Elevator chord over tail chord [-], 0.05 to 0.70.
    section_lift_slope_ratio : float
        Cl_alpha / Cl_alpha,theory of the tail section [-], 0.70 to 1.00 (0.90
        assumed: a symmetric tail section at light-aircraft Reynolds numbers).

    Returns
    -------
    TauEstimate
        ``value`` = thin-airfoil tau x correction factor; ``ci95`` spans that
        value and the independent chart reading, widened by the chart's
        reading precision (the spread between two published methods), and
        its near end is further lowered by :func:`real_tail_factor` for what
        the methods leave out (elevator span ratio, hinge gap or seal, horn
        balance).  It is a range, not a statistical interval; it is not
        flight-calibrated and an incidence change sized from it must be made
        in a first step from its near end.

    Notes
    -----
    The correction (Cl_delta / Cl_delta,theory, read at cf/c = 0.05 and 0.50
    and straight between, held at its 0.50 value beyond) accounts for gaps,
    thickness and viscous effects that make a real plain flap less effective
    than thin-airfoil theory; it holds for small deflections (below about
    10 deg), as in cruise trim.  The chart (Sadraey) is read linearly between
    its readings, each good to about +/-0.02.

    References
    ----------
    Glauert (1947) ch. 7; Schlichting & Truckenbrodt (1979) eq. 12.7;
    Roskam, *Airplane Design Part VI* (1987) fig. 8.15 (DATCOM
    fig. 6.1.1.1-39b); Sadraey (2012) fig. 12.12.

    Examples
    --------
    >>> est = elevator_effectiveness_estimate(0.35)
    >>> round(est.value, 2), est.chart_value
    (0.59, 0.56)
    >>> [round(x, 2) for x in est.ci95]
    [0.39, 0.61]
    """
    ratio = _chord_ratio_in_range(chord_ratio)
    found = []
    if ratio > 0.50:
        found.append(finding("incidence.tau.chord_ratio_beyond_chart", Severity.CAUTION,
                             chord_ratio=ratio))
    thin = float(elevator_effectiveness_thin_airfoil(ratio))
    factor = _correction_factor(ratio, section_lift_slope_ratio)
    value = thin * factor
    chart = _chart_tau(ratio)
    margin = CHART_READING_PRECISION
    real = real_tail_factor()
    ci95 = (min(value, chart) * real - margin, max(value, chart) + margin)
    return TauEstimate(
        chord_ratio=ratio, thin_airfoil=thin, correction_factor=factor,
        section_lift_slope_ratio=float(section_lift_slope_ratio), value=value,
        chart_value=chart, ci95=ci95, warnings=tuple(f.message for f in found),
        real_tail_allowance=1.0 - real, findings=tuple(found),
    )


@dataclass(frozen=True)
class TauCalibration:
    """Tau from the trim-line intercept shift across an incidence change."""

    tau: float | None
    ci95: tuple[float, float] | None
    identifiable: bool
    reason: str | None
    intercept_shift_deg: float
    shift_se_deg: float
    incidence_change_deg: float
    incidence_change_se_deg: float
    df: float
    shift_t_ratio: float


def calibrate_tau(
    intercept_shift_deg: float,
    shift_se_deg: float,
    incidence_change_deg: float,
    df: float,
    incidence_change_se_deg: float = 0.0,
) -> TauCalibration:
    """Tau from flights before and after a stabilizer incidence change.

    Parameters
    ----------
    intercept_shift_deg : float
        Elevator intercept after minus before, delta(delta_e0) [deg], from the
        pooled fit with one intercept per incidence setting.
    shift_se_deg : float
        Standard error of that shift [deg].
    incidence_change_deg : float
        Incidence after minus before, delta_i_t [deg], leading-edge up positive.
    df : float
        Residual degrees of freedom of the fit (for the t quantile).
    incidence_change_se_deg : float
        Standard error of the measured incidence change [deg]; 0 when the
        change is taken as exact (a shim of known thickness).

    Returns
    -------
    TauCalibration
        ``tau = -delta_i_t / delta(delta_e0)`` with its 95 % Fieller interval;
        ``tau`` and ``ci95`` are None, with the reason, when the shift is not
        clearly non-zero (the interval would be unbounded) or has the sign
        that no elevator can produce.

    Raises
    ------
    TrimlogError
        Non-finite input, a non-positive standard error or df, or a zero
        incidence change.

    Notes
    -----
    Fieller's theorem for N/D with independent N = -delta_i_t and D = shift:
    the 95 % set of tau solves ``(N - tau D)^2 <= t^2 (var_N + tau^2 var_D)``.
    It is a bounded interval only when D is significant at the 5 % level,
    ``|D| / se_D > t``.  With an exact incidence change it reduces to
    ``-delta_i_t / (D -/+ t se_D)``.  The quadratic is solved by
    :func:`trimlog.statistics.fits.ratio_interval` with zero covariance.

    References
    ----------
    Fieller, *J. R. Stat. Soc. B* 16 (1954) 175-185.
    """
    shift = _finite("intercept_shift_deg", intercept_shift_deg)
    se = _finite("shift_se_deg", shift_se_deg)
    change = _finite("incidence_change_deg", incidence_change_deg)
    se_change = _finite("incidence_change_se_deg", incidence_change_se_deg)
    dof = _finite("df", df)
    if se <= 0.0 or se_change < 0.0:
        raise TrimlogError(
            f"shift_se_deg must be positive and incidence_change_se_deg non-negative, "
            f"found {se:g} and {se_change:g}"
        )
    if dof < 1.0:
        raise TrimlogError(f"df: expected at least 1 residual degree of freedom, found {dof:g}")
    if change == 0.0:
        raise TrimlogError(
            "incidence_change_deg: the two settings have the same incidence; tau cannot be "
            "calibrated from them"
        )
    t = fits.t_quantile(dof)
    numerator = -change
    # Independent numerator and denominator: the shim is measured apart from the fit.
    fieller = fits.ratio_interval(numerator, shift, se_change**2, se**2, 0.0, t)
    ratio = shift / se
    common = dict(
        intercept_shift_deg=shift, shift_se_deg=se, incidence_change_deg=change,
        incidence_change_se_deg=se_change, df=dof, shift_t_ratio=ratio,
    )
    if not fieller.bounded:
        return TauCalibration(
            tau=None, ci95=None, identifiable=False,
            reason=(
                f"the elevator intercept shift {shift:+.2f} deg (SE {se:.2f}) across the "
                f"{change:+.2f} deg incidence change is not clearly non-zero "
                f"(|t| = {abs(ratio):.2f} <= {t:.2f}); the interval for tau would be unbounded"
            ),
            **common,
        )
    tau = numerator / shift
    if tau <= 0.0:
        return TauCalibration(
            tau=None, ci95=None, identifiable=False,
            reason=(
                f"the elevator intercept moved {shift:+.2f} deg for a {change:+.2f} deg "
                "incidence change, the same direction as the change; a working elevator "
                "moves it the other way: check the sign of the incidence settings and of "
                "the elevator channel"
            ),
            **common,
        )
    return TauCalibration(
        tau=tau, ci95=fieller.fieller_ci, identifiable=True, reason=None, **common
    )


@dataclass(frozen=True)
class TauChoice:
    """The tau used for the incidence change, where it came from and its interval."""

    tau: float
    ci95: tuple[float, float]
    tau_source: TauSource
    explanation: str
    notes: tuple[str, ...] = ()
    #: ``notes`` coded (``incidence.tau.*``).
    findings: tuple[Finding, ...] = ()


def choose_tau(
    calibration: TauCalibration | None = None,
    profile_tau: float | None = None,
    chord_ratio: float | None = None,
    *,
    profile_tau_relative_uncertainty: float = PROFILE_TAU_RELATIVE_UNCERTAINTY,
    section_lift_slope_ratio: float = DEFAULT_SECTION_LIFT_SLOPE_RATIO,
) -> TauChoice:
    """Pick tau: flight-calibrated, else the profile's, else from the chord ratio.

    Parameters
    ----------
    calibration : TauCalibration or None
        From :func:`calibrate_tau`; used when identifiable.
    profile_tau : float or None
        The profile's ``tail.tau`` [-].
    chord_ratio : float or None
        The profile's ``tail.elevator_chord_ratio`` [-].
    profile_tau_relative_uncertainty : float
        Half-width of the interval given to a profile tau, as a fraction of
        it (0.10 by default: an assumption, stated in the explanation).
    section_lift_slope_ratio : float
        Passed to :func:`elevator_effectiveness_estimate`.

    Returns
    -------
    TauChoice
        ``tau_source`` is exactly one of :data:`TAU_SOURCES`.

    Raises
    ------
    NotIdentifiableError
        No usable source: no identifiable calibration, no profile tau and no
        chord ratio.

    References
    ----------
    See :func:`calibrate_tau` and :func:`elevator_effectiveness_estimate`.
    """
    notes: list[Finding] = []
    if calibration is not None:
        if calibration.identifiable and calibration.tau is not None and calibration.ci95:
            lo, hi = calibration.ci95
            if profile_tau is not None and not lo <= profile_tau <= hi:
                notes.append(finding("incidence.tau.profile_outside_calibrated",
                                     Severity.CAUTION, profile_tau=profile_tau, lo=lo, hi=hi))
            return TauChoice(
                tau=calibration.tau, ci95=calibration.ci95, tau_source="flight-calibrated",
                explanation=(
                    f"tau {calibration.tau:.2f} calibrated from the elevator intercept shift "
                    f"{calibration.intercept_shift_deg:+.2f} deg across the "
                    f"{calibration.incidence_change_deg:+.2f} deg incidence change "
                    "(95 % Fieller interval)"
                ),
                notes=tuple(f.message for f in notes), findings=tuple(notes),
            )
        notes.append(finding("incidence.tau.calibration_not_used", Severity.CAUTION,
                             reason=calibration.reason))
    if profile_tau is not None:
        tau = _finite("tail.tau", profile_tau)
        if not 0.0 < tau <= 1.0:
            raise ProfileError(f"tail.tau: expected 0 < tau <= 1, found {tau:g}")
        half = profile_tau_relative_uncertainty * tau
        return TauChoice(
            tau=tau, ci95=(tau - half, tau + half), tau_source="profile",
            explanation=(
                f"tau {tau:g} from the profile; its +/-{100 * profile_tau_relative_uncertainty:g} "
                "% interval is assumed, not measured"
            ),
            notes=tuple(f.message for f in notes), findings=tuple(notes),
        )
    if chord_ratio is not None:
        est = elevator_effectiveness_estimate(chord_ratio, section_lift_slope_ratio)
        return TauChoice(
            tau=est.value, ci95=est.ci95, tau_source="chord-ratio estimate",
            explanation=(
                f"tau {est.value:.2f} estimated from the elevator chord ratio {est.chord_ratio:g}: "
                f"thin-airfoil theory {est.thin_airfoil:.3f} (Glauert) x empirical correction "
                f"{est.correction_factor:.2f} (Roskam Part VI fig. 8.15 / DATCOM); "
                f"Sadraey's chart (2012, fig. 12.12) reads {est.chart_value:.2f}; the range "
                f"{est.ci95[0]:.2f} to {est.ci95[1]:.2f} spans both and allows "
                f"{100 * est.real_tail_allowance:.0f} % less for the elevator span ratio, "
                "hinge gap or seal and horn balance (allowances from memory); not "
                "flight-calibrated"
            ),
            notes=tuple(f.message for f in (*notes, *est.findings)),
            findings=(*notes, *est.findings),
        )
    raise NotIdentifiableError(
        "elevator effectiveness tau: no flight calibration (flights before and after an "
        "incidence change), no tail.tau and no tail.elevator_chord_ratio in the profile; "
        "add one of the two keys to get a shim"
    )
