"""True airspeed and wind from GPS legs: the circle through the ground-velocity vectors.

On a steady, wings-level leg at one indicated airspeed and altitude, the GPS
ground velocity is the vector sum of the air velocity (magnitude TAS,
direction the heading) and the wind: ``Vg = Va + W``.  With the tails of the
ground-velocity vectors at one point, their tips lie on a circle whose centre
is the wind vector and whose radius is the true airspeed.  Three legs on
different tracks fix the circle exactly; four or more give a least-squares
circle whose residuals measure how well the legs agree.

Coordinates: ``x`` east, ``y`` north [kt]; tracks and headings in degrees
clockwise from north (the GPS gives true track; a track referred to magnetic
north turns every vector by the same angle, which changes the wind direction
but neither the wind speed nor the TAS).  The wind is reported, as
meteorologists and pilots do, by the direction it blows *from*.

References
----------
.. [1] G. V. Lewis, *Using GPS to determine pitot-static errors*, National
   Test Pilot School, Mojave CA, 14 August 2003: three or more legs at one
   airspeed and altitude, ground speed and track from the GPS, the circle
   through the vector tips (after D. Gray, 1998).
.. [2] F. L. Thompson, *The measurement of air speed of airplanes*, NACA
   TN 616, 1937: the several-heading method.
.. [3] N. Chernov, *Circular and Linear Regression: Fitting Circles and Lines
   by Least Squares*, CRC Press, 2010, ch. 4-5: the algebraic (Kasa) fit as a
   start and the geometric fit by Gauss-Newton, with its covariance.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from trimlog.errors import NotIdentifiableError, TrimlogError

#: Smallest arc of air headings (degrees of the circle the legs cover) that
#: gives a result at all; below it the circle is a guess [deg].
#: Common practice, no source: legs about 90-120 deg apart are recommended.
MIN_HEADING_ARC_DEG = 60.0
#: Arc below which the result carries a "headings poorly spread" warning [deg].
#: Common practice, no source.
GOOD_HEADING_ARC_DEG = 120.0
#: Leg-to-leg scatter of the radius the data are expected to show [kt]: GPS
#: ground speed (about 0.1-0.2 kt averaged over a leg) and holding the
#: indicated airspeed to a few tenths of a knot.  Common practice, no source.
EXPECTED_LEG_SCATTER_KT = 0.5
#: Probability beyond which the residual scatter is "too large for the noise"
#: (one-sided chi-square test of the residual variance against the expected one).
WIND_CHANGE_LEVEL = 0.99

_MAX_ITER = 50


@dataclass(frozen=True)
class CircleFit:
    """True airspeed and wind from the ground-velocity vectors of the legs at one speed.

    Attributes
    ----------
    tas_kt : float
        True airspeed: the circle's radius [kt].
    wind_east_kt, wind_north_kt : float
        Wind vector (the direction it blows towards), east and north [kt].
    wind_kt : float
        Wind speed [kt].
    wind_from_deg : float
        Direction the wind blows from, degrees true (0..360).
    n_legs : int
        Legs used.
    exact : bool
        True for three legs: the circle passes through every tip and the data
        say nothing about their scatter (no interval, no wind-change check).
    residuals_kt : tuple of float
        Per leg, distance of the tip from the circle minus the radius [kt]
        (all zero for three legs).
    residual_sd_kt : float or None
        sqrt(RSS/(n-3)) [kt]; None for three legs.
    tas_se_kt : float or None
        Standard error of the TAS from the residuals (linearised) [kt].
    tas_ci95_kt : tuple of float or None
        95 % interval of the TAS, t quantile on n-3 degrees of freedom [kt].
    headings_deg : tuple of float
        Air headings of the legs (from the centre to each tip), degrees true.
    heading_arc_deg : float
        Arc of the circle the headings cover: 360 minus the largest gap [deg].
    wind_change_p : float or None
        Probability, under the expected leg scatter, of a residual variance at
        most this large (close to 1: the legs disagree more than noise explains,
        typically because the wind changed between them); None for three legs.
    """

    tas_kt: float
    wind_east_kt: float
    wind_north_kt: float
    wind_kt: float
    wind_from_deg: float
    n_legs: int
    exact: bool
    residuals_kt: tuple[float, ...]
    residual_sd_kt: float | None
    tas_se_kt: float | None
    tas_ci95_kt: tuple[float, float] | None
    headings_deg: tuple[float, ...]
    heading_arc_deg: float
    wind_change_p: float | None

    @property
    def headings_well_spread(self) -> bool:
        """Whether the headings cover at least :data:`GOOD_HEADING_ARC_DEG`."""
        return self.heading_arc_deg >= GOOD_HEADING_ARC_DEG

    @property
    def wind_changed(self) -> bool:
        """Whether the residual scatter is too large for the expected noise."""
        return self.wind_change_p is not None and self.wind_change_p > WIND_CHANGE_LEVEL


def ground_vectors(ground_speed_kt: np.ndarray, track_deg: np.ndarray) -> np.ndarray:
    """East and north components [kt] of ground velocities given as speed and track.

    Examples
    --------
    >>> ground_vectors(np.array([100.0]), np.array([90.0])).round(6).tolist()
    [[100.0, 0.0]]
    """
    angle = np.radians(np.asarray(track_deg, dtype=float))
    speed = np.asarray(ground_speed_kt, dtype=float)
    return np.column_stack([speed * np.sin(angle), speed * np.cos(angle)])


def _circle_through_three(p: np.ndarray) -> tuple[float, float, float]:
    """Centre and radius of the circle through three points (raises when collinear)."""
    a = 2.0 * (p[1:] - p[0])
    b = (p[1:] ** 2).sum(axis=1) - (p[0] ** 2).sum()
    scale = max(1.0, float(np.abs(p).max()))
    if abs(np.linalg.det(a)) < 1e-9 * scale**2:
        raise NotIdentifiableError(
            "the three ground-velocity vectors lie on a straight line: no circle (fly "
            "legs on tracks about 90-120 deg apart)"
        )
    cx, cy = np.linalg.solve(a, b)
    return float(cx), float(cy), float(np.hypot(*(p[0] - (cx, cy))))


def _kasa(p: np.ndarray) -> tuple[float, float, float]:
    """Algebraic circle fit: least squares of x² + y² + D·x + E·y + F (a starting value)."""
    design = np.column_stack([p, np.ones(len(p))])
    rhs = -(p**2).sum(axis=1)
    (d, e, f), *_ = np.linalg.lstsq(design, rhs, rcond=None)
    cx, cy = -d / 2.0, -e / 2.0
    r2 = cx * cx + cy * cy - f
    if not r2 > 0.0:
        raise NotIdentifiableError("the ground-velocity vectors do not outline a circle")
    return float(cx), float(cy), float(np.sqrt(r2))


def _geometric(p: np.ndarray, start: tuple[float, float, float]) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Newton on r_i = |p_i - c| - R; return (cx, cy, R) and the Jacobian at the end."""
    theta = np.array(start, dtype=float)
    for _ in range(_MAX_ITER):
        d = p - theta[:2]
        dist = np.hypot(d[:, 0], d[:, 1])
        resid = dist - theta[2]
        jac = np.column_stack([-d[:, 0] / dist, -d[:, 1] / dist, -np.ones(len(p))])
        step, *_ = np.linalg.lstsq(jac, -resid, rcond=None)
        theta += step
        if np.abs(step).max() < 1e-10 * max(1.0, theta[2]):
            break
    d = p - theta[:2]
    dist = np.hypot(d[:, 0], d[:, 1])
    jac = np.column_stack([-d[:, 0] / dist, -d[:, 1] / dist, -np.ones(len(p))])
    return theta, jac


def heading_arc_deg(headings_deg: np.ndarray) -> float:
    """Arc of a circle covered by directions: 360 deg minus the largest gap between them.

    Examples
    --------
    >>> heading_arc_deg(np.array([0.0, 120.0, 240.0]))
    240.0
    >>> heading_arc_deg(np.array([350.0, 10.0]))
    20.0
    """
    h = np.sort(np.mod(np.asarray(headings_deg, dtype=float), 360.0))
    if h.size < 2:
        return 0.0
    gaps = np.diff(np.concatenate([h, [h[0] + 360.0]]))
    return float(360.0 - gaps.max())


def fit_circle(
    ground_speed_kt: np.ndarray | list[float],
    track_deg: np.ndarray | list[float],
    *,
    expected_scatter_kt: float = EXPECTED_LEG_SCATTER_KT,
) -> CircleFit:
    """Solve TAS and wind from three or more legs flown at one indicated airspeed.

    Parameters
    ----------
    ground_speed_kt : array-like
        GPS ground speed of each leg [kt].
    track_deg : array-like
        GPS ground track of each leg [deg true].
    expected_scatter_kt : float
        Leg-to-leg scatter of the radius the data should show [kt], for the
        wind-change check.

    Returns
    -------
    CircleFit

    Raises
    ------
    NotIdentifiableError
        Fewer than three legs, collinear vectors, or headings covering less
        than :data:`MIN_HEADING_ARC_DEG` of the circle.
    TrimlogError
        Inputs of unequal length, not finite, or a negative ground speed.

    Notes
    -----
    Three legs: the circle through the three tips.  Four or more: the
    geometric least-squares circle (minimise Σ(|p_i − c| − R)², Gauss-Newton
    from the algebraic fit); the covariance is s²·(JᵀJ)⁻¹ with
    s² = RSS/(n − 3), and the 95 % interval uses Student's t on n − 3 degrees
    of freedom.  A leg's error in holding the airspeed moves its tip along the
    radius, so the residuals measure exactly the scatter that matters.

    References
    ----------
    Lewis, NTPS 2003 (the method); Chernov 2010, ch. 4-5 (the fit).

    Examples
    --------
    Wind 20 kt from the west, TAS 100 kt, headings north, east, south:

    >>> fit = fit_circle([101.98, 120.0, 101.98], [11.31, 90.0, 168.69])
    >>> round(fit.tas_kt, 1), round(fit.wind_kt, 1), round(fit.wind_from_deg)
    (100.0, 20.0, 270)
    """
    gs = np.ravel(np.asarray(ground_speed_kt, dtype=float))
    trk = np.ravel(np.asarray(track_deg, dtype=float))
    if gs.size != trk.size:
        raise TrimlogError(
            f"legs: expected as many tracks as ground speeds, found {gs.size} and {trk.size}"
        )
    if not (np.isfinite(gs).all() and np.isfinite(trk).all()) or (gs < 0.0).any():
        raise TrimlogError("legs: ground speeds and tracks must be finite, speeds not negative")
    n = gs.size
    if n < 3:
        raise NotIdentifiableError(
            f"{n} leg{'s' if n != 1 else ''} at this speed: TAS and wind need at least three "
            "legs on different tracks"
        )
    p = ground_vectors(gs, trk)
    if n == 3:
        cx, cy, radius = _circle_through_three(p)
        jac = None
    else:
        theta, jac = _geometric(p, _kasa(p))
        cx, cy, radius = (float(v) for v in theta)
    d = p - (cx, cy)
    headings = np.mod(np.degrees(np.arctan2(d[:, 0], d[:, 1])), 360.0)
    arc = heading_arc_deg(headings)
    if arc < MIN_HEADING_ARC_DEG:
        raise NotIdentifiableError(
            f"the {n} legs' headings cover only {arc:.0f} deg of the circle (at least "
            f"{MIN_HEADING_ARC_DEG:g} deg needed, {GOOD_HEADING_ARC_DEG:g} deg or more "
            "recommended): fly legs on tracks further apart"
        )
    residuals = np.hypot(d[:, 0], d[:, 1]) - radius
    sd = se = ci = p_change = None
    if jac is not None:
        from scipy.special import chdtr, stdtrit  # lazily: scipy.special only

        dof = n - 3
        sd = float(np.sqrt((residuals**2).sum() / dof))
        cov = np.linalg.inv(jac.T @ jac) * sd**2
        se = float(np.sqrt(cov[2, 2]))
        half = float(stdtrit(dof, 0.975)) * se
        ci = (radius - half, radius + half)
        p_change = float(chdtr(dof, dof * sd**2 / expected_scatter_kt**2))
    wind = float(np.hypot(cx, cy))
    wind_from = float(np.mod(np.degrees(np.arctan2(cx, cy)) + 180.0, 360.0)) if wind > 0 else 0.0
    return CircleFit(
        tas_kt=radius, wind_east_kt=cx, wind_north_kt=cy, wind_kt=wind,
        wind_from_deg=wind_from, n_legs=n, exact=jac is None,
        residuals_kt=tuple(float(r) for r in residuals), residual_sd_kt=sd, tas_se_kt=se,
        tas_ci95_kt=ci, headings_deg=tuple(float(h) for h in headings), heading_arc_deg=arc,
        wind_change_p=p_change,
    )
