"""What the stick-force results mean for the declared trim system, and the free-return check.

Trim systems (``trim.system`` in the profile, :data:`trimlog.input.profile.TRIM_SYSTEMS`):

* ``tab`` -- an elevator trim tab (or servo / anti-servo tab): the tab moves the hinge
  moment, so ``Fs = q (A + B CL)`` with ``A`` set by the tab.  The pilot trims the force
  to zero at any speed; ``B`` is proportional to ``h - hn'``, so the stick-free neutral
  point is where ``d(Fs/q)/dCL`` and the gradient ``dFs/dV`` at the trim speed vanish.
  This is the model the fits use.
* ``spring`` -- a spring or bungee on the control circuit: it adds a force ``F`` that does
  not grow with speed, ``Fs = F + q (A + B CL)``.  In 1 g trim points
  ``q CL = W/S`` is constant within a flight, so ``F/q = F S/(W) CL`` reads exactly as a
  part of the flight's ``Fs/q`` slope: the spring's force and the airframe's stick-free
  stability cannot be told apart from one flight, and the stick-free neutral point from
  ``Fs/q`` is the apparent one at the spring settings flown (a downspring's pull moves it
  aft).  Flying another CG does not separate them; flying every CG at one recorded
  spring setting makes the spring a constant of the programme.
* ``stabilator`` -- an all-moving tail with its own (anti-servo) tab: the logged elevator
  is the tail's angle and the tab trims the force as a trim tab does; there is no fixed
  stabilizer incidence, so no shim applies.
* ``trimmable_stabilizer`` -- the trim moves the stabilizer's incidence: the elevator at
  trim stays near neutral whatever the CG, so the trim lines are in the stabilizer angle,
  which must be logged point by point; no shim applies.
* ``none`` -- no pitch trim: nothing moves ``A`` between flights, the force is zero only
  at the one speed the aircraft trims itself, and a pilot holds a force everywhere else.

The free-return check (14 CFR 23.173(b), before amendment 23-64, from memory): when the
stick force is slowly released from a speed away from trim, the speed must return to within
10 % of the trim speed (7.5 % in the cruise condition of commuter-category aeroplanes).  A
control circuit with friction holds the stick wherever the force is within the friction
band, so the speed returns only to the edge of the band of speeds where ``|Fs| <= f``.
With ``Fs = A q + B W/S`` and ``q = K V^2`` this band is, exactly,
``V^2 in [V_t^2 - 2 f V_t/|G|, V_t^2 + 2 f V_t/|G|]`` where ``G = dFs/dV`` at the trim speed
``V_t``.  The band is computed from the gradient's 95 % bound nearest zero (the shallowest
slope the data allow: the widest band), so the check errs on the side that hurts.

References
----------
.. [1] 14 CFR 23.173 (static longitudinal stability), text before amendment 23-64 (2017),
   paragraph (b) free return, (c) force clearly perceptible; from memory.
.. [2] B. Etkin and L. D. Reid, *Dynamics of Flight*, 3rd ed., Wiley, 1996, sec. 2.8
   (stick force to trim, ``Fs = A q + B W/S``).
.. [3] USAF Test Pilot School, *Flying Qualities Textbook*, vol. II part 1, ch. 5 (1986):
   friction band, free return, stick-force stability tests; from memory.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from dataclasses import dataclass

from trimlog.findings import Finding, Severity, Subject, finding
from trimlog.input.profile import TRIM_SYSTEMS
from trimlog.stability.results import FlightGradient, NeutralPoint

__all__ = ["FREE_RETURN_FRACTION", "FreeReturn", "free_return", "free_return_findings",
           "stick_free_not_identifiable", "trim_system_findings"]

#: 14 CFR 23.173(b) before amendment 23-64: the speed returns to within 10 % of trim when the
#: force is slowly released (7.5 % for the cruise condition of commuter aeroplanes); from memory.
FREE_RETURN_FRACTION = 0.10

#: Trim system assumed when the profile declares none: a trim tab, the commonest on light
#: aeroplanes and the one the stick-free model describes.  # common practice, no source
ASSUMED_TRIM_SYSTEM = "tab"


def trim_system_findings(system: str | None, stick_force_logged: bool) -> list[Finding]:
    """The finding that says what the stick-force results mean for this trim system.

    Parameters
    ----------
    system : str or None
        The profile's ``trim.system`` (one of :data:`TRIM_SYSTEMS`), None when not declared.
    stick_force_logged : bool
        Whether any included point has a stick force.

    Returns
    -------
    list of Finding
        One ``stability.trim.<system>`` finding (``stability.trim.assumed_tab`` when none
        is declared and a stick force was logged); none for a tab declared.

    Examples
    --------
    >>> [f.code for f in trim_system_findings("spring", True)]
    ['stability.trim.spring']
    >>> trim_system_findings("tab", True)
    []
    """
    if system is not None and system not in TRIM_SYSTEMS:
        raise ValueError(f"trim system {system!r}: expected one of {TRIM_SYSTEMS}")
    subject = Subject(quantity="trim.system")
    if system is None:
        return ([finding("stability.trim.assumed_tab", Severity.NOTE, subject)]
                if stick_force_logged else [])
    if system == "tab":
        return []
    severity = {"spring": Severity.CAUTION, "trimmable_stabilizer": Severity.CAUTION}.get(
        system, Severity.NOTE)
    return [finding(f"stability.trim.{system}", severity, subject)]


def stick_free_not_identifiable(system: str | None, np_: NeutralPoint) -> Finding:
    """The warning for a stick-free neutral point that cannot be said, in the trim system's terms.

    With a spring trim the generic advice (fly a CG further from the others) is wrong:
    the spring's force at each flight's setting, not the CG spread, is what hides the
    stick-free point.

    Parameters
    ----------
    system : str or None
        The profile's ``trim.system``.
    np_ : NeutralPoint
        The stick-free neutral point (not identifiable).

    Returns
    -------
    Finding
        ``stability.trim.spring.np_free_not_identifiable`` for a spring trim, else
        ``stability.np_not_identifiable``.
    """
    subject = Subject(quantity="neutral_point.stick_free")
    if system == "spring":
        return finding("stability.trim.spring.np_free_not_identifiable", Severity.WARNING,
                       subject, reason=np_.reason)
    return finding("stability.np_not_identifiable", Severity.WARNING, subject,
                   kind="stick-free", reason=np_.reason)


@dataclass(frozen=True)
class FreeReturn:
    """The band of speeds around trim where the stick force stays within the friction band.

    Attributes
    ----------
    flight : str
    trim_eas_kt : float
        Trim speed (stick force zero) [kt EAS].
    friction_lbf : float
        Half-width of the friction band [lbf].
    gradient_used_lbf_per_kt : float or None
        The gradient's 95 % bound nearest zero [lbf/kt], the shallowest the data allow;
        None when the gradient is not clearly stable.
    band_eas_kt : (float, float) or None
        Speeds [kt EAS] between which the stick stays where it is left; None when the
        band is unbounded (not clearly stable, or the friction exceeds the force at any
        slower speed).
    band_fraction : float or None
        Largest departure of the band from the trim speed, as a fraction of it.
    meets_rule : bool or None
        ``band_fraction <= FREE_RETURN_FRACTION``; None when cannot say.
    """

    flight: str
    trim_eas_kt: float
    friction_lbf: float
    gradient_used_lbf_per_kt: float | None
    band_eas_kt: tuple[float, float] | None
    band_fraction: float | None
    meets_rule: bool | None


def free_return(gradient: FlightGradient, friction_lbf: float) -> FreeReturn | None:
    """Free-return band of one flight from its stick-force gradient at trim.

    Parameters
    ----------
    gradient : FlightGradient
        The flight's trim-line fits (trim speed and ``dFs/dV`` with its interval).
    friction_lbf : float
        Half-width of the friction band [lbf], from the profile's ``trim.friction``.

    Returns
    -------
    FreeReturn or None
        None when the flight has no trim speed or gradient (no stick force, several
        settings, no zero crossing).

    Notes
    -----
    ``Fs(V) = (G / (2 V_t)) (V^2 - V_t^2)`` (from ``Fs = A K V^2 + B W/S``, zero at
    ``V_t``, slope ``G`` there), so ``|Fs| <= f`` for
    ``V^2 in [V_t^2 - 2 f V_t/|G|, V_t^2 + 2 f V_t/|G|]``; the slower side is the wider.
    ``G`` is the gradient's 95 % bound nearest zero.

    Examples
    --------
    A flight trimmed at 100 kt with -0.20 lbf/kt [-0.25, -0.15] and 0.5 lbf friction:

    >>> import dataclasses
    >>> blank = {f.name: None for f in dataclasses.fields(FlightGradient)}
    >>> g = FlightGradient(**{**blank, "flight": "1", "trim_eas_kt": 100.0,
    ...                       "dfs_dv_lbf_per_kt": -0.20,
    ...                       "dfs_dv_ci95_lbf_per_kt": (-0.25, -0.15), "warnings": ()})
    >>> r = free_return(g, 0.5)
    >>> [round(v, 1) for v in r.band_eas_kt], round(r.band_fraction, 3), r.meets_rule
    ([96.6, 103.3], 0.034, True)
    """
    v_t, grad, ci = gradient.trim_eas_kt, gradient.dfs_dv_lbf_per_kt, \
        gradient.dfs_dv_ci95_lbf_per_kt
    if v_t is None or grad is None or not v_t > 0.0:
        return None
    f = float(friction_lbf)
    shallow = None if ci is None or not ci[1] < 0.0 else float(ci[1])
    if shallow is None:
        return FreeReturn(gradient.flight, v_t, f, None, None, None, None)
    spread = 2.0 * f * v_t / abs(shallow)
    if spread >= v_t * v_t:
        return FreeReturn(gradient.flight, v_t, f, shallow, None, None, False)
    lo, hi = math.sqrt(v_t * v_t - spread), math.sqrt(v_t * v_t + spread)
    fraction = max(v_t - lo, hi - v_t) / v_t
    return FreeReturn(gradient.flight, v_t, f, shallow, (lo, hi), fraction,
                      fraction <= FREE_RETURN_FRACTION)


def free_return_findings(gradients: Iterable[FlightGradient], friction_lbf: float | None,
                         stick_force_logged: bool) -> list[Finding]:
    """Findings of the free-return check, one per flight with a trim speed.

    Parameters
    ----------
    gradients : iterable of FlightGradient
    friction_lbf : float or None
        The profile's ``trim.friction`` [lbf]; None: the check cannot be made (one note).
    stick_force_logged : bool
        Whether any included point has a stick force (no note without one).

    Returns
    -------
    list of Finding
        ``stability.free_return.too_wide`` (warning) when the band reaches beyond
        :data:`FREE_RETURN_FRACTION` of the trim speed, ``stability.free_return.cannot_say``
        (caution) when the gradient is not clearly stable, ``stability.free_return.band``
        (note) when within; ``stability.free_return.no_friction`` (note) without a friction.
    """
    if friction_lbf is None:
        return ([finding("stability.free_return.no_friction", Severity.NOTE,
                         Subject(quantity="trim.friction"))] if stick_force_logged else [])
    out = []
    for g in gradients:
        r = free_return(g, friction_lbf)
        if r is None:
            continue
        subject = Subject(flight=str(g.flight), quantity="free_return")
        common = dict(flight=str(g.flight), trim_eas_kt=r.trim_eas_kt,
                      friction_lbf=r.friction_lbf, rule_pct=100.0 * FREE_RETURN_FRACTION)
        if r.gradient_used_lbf_per_kt is None:
            out.append(finding("stability.free_return.cannot_say", Severity.CAUTION, subject,
                               **common))
        elif r.band_eas_kt is None or not r.meets_rule:
            lo = None if r.band_eas_kt is None else r.band_eas_kt[0]
            hi = None if r.band_eas_kt is None else r.band_eas_kt[1]
            out.append(finding(
                "stability.free_return.too_wide", Severity.WARNING, subject, **common,
                band_lo_kt=lo, band_hi_kt=hi,
                band_pct=None if r.band_fraction is None else 100.0 * r.band_fraction,
                gradient_lbf_per_kt=r.gradient_used_lbf_per_kt))
        else:
            out.append(finding(
                "stability.free_return.band", Severity.NOTE, subject, **common,
                band_lo_kt=r.band_eas_kt[0], band_hi_kt=r.band_eas_kt[1],
                band_pct=100.0 * r.band_fraction,
                gradient_lbf_per_kt=r.gradient_used_lbf_per_kt))
    return out


# ------------------------------------------------------------------ force-gauge zero

#: A declared trim speed this far outside the speeds a flight flew (fraction) is not used to
#: anchor its force zero: the trim CL would be an extrapolation.  # common practice, no source
TRIM_SPEED_MARGIN = 0.05


@dataclass(frozen=True, eq=False)
class TrimAnchor:
    """Flights whose stick force was trimmed to zero at a declared speed.

    With a trim tab the true force is zero at the trim speed, so ``Fs/q = F0/q + B (CL -
    CL_trim)``: the gauge zero ``F0`` of the flight and its stick-free gradient ``B`` are
    separable, which they are not from 1 g points alone (``q CL = W/S`` is constant in a
    flight, so ``F0/q`` is a multiple of ``CL``).

    Attributes
    ----------
    anchored : numpy.ndarray
        Per point: the point's flight is anchored.
    cl_trim : numpy.ndarray
        Per point: the flight's trim CL [-] (NaN where not anchored).
    flights : tuple of str
        The anchored flights.
    outside : tuple of (str, float)
        Flights whose declared trim speed [kt] lies outside the speeds flown (not anchored).
    q_ref_psf : float
        Scale of the ``1/q`` regressor [psf] (the mean q of the points).
    """

    anchored: object
    cl_trim: object
    flights: tuple[str, ...]
    outside: tuple[tuple[str, float], ...]
    q_ref_psf: float


def trim_anchor(frame) -> TrimAnchor | None:
    """The flights whose declared trim speed anchors their force-gauge zero.

    Parameters
    ----------
    frame : pandas.DataFrame
        Included stick-force points with ``flight``, ``cl``, ``q_psf``, ``ias_kt`` (or
        ``cas_kt``) and ``trim_ias_kt`` (the loading sheet's ``trim.speed``, NaN where
        not given).

    Returns
    -------
    TrimAnchor or None
        None when no point has a trim speed (or no speeds or q to place it).

    Notes
    -----
    The trim CL comes from a least-squares line of the flight's own CL against ``1/V^2``
    (``CL = 2W/(rho S V^2)`` at one weight and altitude), so no airspeed correction is
    repeated here.
    """
    import numpy as np

    speed_col = "ias_kt" if "ias_kt" in frame.columns else "cas_kt"
    if "trim_ias_kt" not in frame.columns or speed_col not in frame.columns or \
            "q_psf" not in frame.columns:
        return None
    trim = frame["trim_ias_kt"].to_numpy(dtype=float, na_value=np.nan)
    if not np.isfinite(trim).any():
        return None
    speed = frame[speed_col].to_numpy(dtype=float, na_value=np.nan)
    cl = frame["cl"].to_numpy(dtype=float)
    flight = frame["flight"].astype(str).to_numpy()
    anchored = np.zeros(len(frame), dtype=bool)
    cl_trim = np.full(len(frame), np.nan)
    done, outside = [], []
    for f in dict.fromkeys(flight):
        rows = flight == f
        v_t = trim[rows][np.isfinite(trim[rows])]
        v = speed[rows]
        if not len(v_t) or not np.isfinite(v).all() or rows.sum() < 3:
            continue
        v_t = float(v_t[0])
        if not (1.0 - TRIM_SPEED_MARGIN) * v.min() <= v_t <= (1.0 + TRIM_SPEED_MARGIN) * v.max():
            outside.append((str(f), v_t))
            continue
        x = 1.0 / v**2
        order = np.argsort(x)
        xs, ys = x[order], cl[rows][order]
        slope, icpt = np.polyfit(xs, ys, 1)  # CL against 1/V^2: a line through the points
        cl_trim[rows] = icpt + slope / v_t**2
        anchored[rows] = True
        done.append(str(f))
    q = frame["q_psf"].to_numpy(dtype=float)
    return TrimAnchor(anchored, cl_trim, tuple(done), tuple(outside), float(np.mean(q)))


@dataclass(frozen=True)
class ForceZero:
    """A flight's fitted stick-force gauge zero (the force read at zero true force).

    Attributes
    ----------
    flight : str
    offset_lbf : float
        Fitted zero offset [lbf], pull positive.
    ci95_lbf : (float, float)
        Its 95 % interval [lbf].
    significant : bool
        Whether the interval excludes zero.
    """

    flight: str
    offset_lbf: float
    ci95_lbf: tuple[float, float]
    significant: bool


def force_zeros(level, anchor: TrimAnchor) -> tuple[ForceZero, ...]:
    """The fitted gauge zero of each anchored flight, from the flight-level fit.

    Parameters
    ----------
    level : FlightLevelFit
        The stick-free flight-level fit with ``intercept_x = q_ref/q`` for anchored flights
        (its intercept of such a flight is ``F0 / q_ref``).
    anchor : TrimAnchor

    Returns
    -------
    tuple of ForceZero
        Empty when the fit kept no full covariance (more flights than
        :data:`trimlog.statistics.flight_effects.MAX_GROUPS_FOR_FULL_COVARIANCE`).
    """
    from trimlog.statistics.fits import t_quantile

    if level is None or level.coef_full is None:
        return ()
    t = t_quantile(level.df)
    out = []
    for f in anchor.flights:
        if f not in level.group_labels:
            continue
        value, var = level.contrast({f"a[{f}]": anchor.q_ref_psf})
        half = t * math.sqrt(max(var, 0.0))
        out.append(ForceZero(f, value, (value - half, value + half), abs(value) > half))
    return tuple(out)


def force_zero_findings(free_fit, anchor: TrimAnchor | None) -> list[Finding]:
    """What the programme shows about the stick-force gauge zero.

    Parameters
    ----------
    free_fit : PooledFit or None
        The stick-free pooled fit (with ``force_zeros``).
    anchor : TrimAnchor or None

    Returns
    -------
    list of Finding
        ``stability.force_zero.offset`` (caution) for each anchored flight whose zero
        offset is clearly not zero; ``stability.force_zero.trim_speed_outside`` (note) for
        a declared trim speed outside the speeds flown; ``stability.force_zero.not_separable``
        (note) when no flight is anchored: a constant force error of a flight then reads as
        stick-free stability.
    """
    if free_fit is None:
        return []
    out = []
    if anchor is None or not anchor.flights:
        out.append(finding("stability.force_zero.not_separable", Severity.NOTE,
                           Subject(quantity="neutral_point.stick_free")))
    for f, v in (anchor.outside if anchor is not None else ()):
        out.append(finding("stability.force_zero.trim_speed_outside", Severity.NOTE,
                           Subject(flight=f, quantity="trim.speed"), flight=f, trim_kt=v))
    for z in getattr(free_fit, "force_zeros", ()):
        if z.significant:
            out.append(finding("stability.force_zero.offset", Severity.CAUTION,
                               Subject(flight=z.flight, quantity="stick_force_lbf"),
                               flight=z.flight, offset_lbf=z.offset_lbf, lo=z.ci95_lbf[0],
                               hi=z.ci95_lbf[1]))
    return out
