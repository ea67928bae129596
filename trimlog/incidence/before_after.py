"""Before and after an incidence change: the elevator at cruise under both, and the tau they imply.

When flights were made before and after a stabilizer incidence change, the
stick-fixed pooled fit gives the elevator to trim at the cruise condition
under each setting.  Their difference is the intercept shift
``delta(delta_e0)`` (the model's slopes are common to both settings), so the
tau they imply is the flight-calibrated one,
``tau = -delta_i_t / (delta_e_after - delta_e_before)``.

The incidence change still needed is then ``tau * delta_e_after =
-delta_i_t * delta_e_after / (delta_e_after - delta_e_before)``: one ratio of
two contrasts of the *same* fit, which share the intercept of the latest
setting and the slopes.  Its interval is Fieller's for that ratio with the
covariance of the two contrasts (:func:`joint_incidence_change`), not the
product of two intervals taken as independent.

References
----------
.. [1] E. C. Fieller, "Some problems in interval estimation", *J. Royal
   Statistical Society B* 16 (1954) 175-185 (ratio of two correlated
   normal estimates).
.. [2] B. Etkin and L. D. Reid, *Dynamics of Flight: Stability and Control*,
   3rd ed., Wiley, 1996, ch. 2 (tail lift linear in ``i_t + tau delta_e``).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from trimlog.errors import TrimlogError
from trimlog.incidence.shim import IncidenceChange
from trimlog.incidence.tau import TauCalibration, _finite, calibrate_tau
from trimlog.stability.results import CruiseElevators
from trimlog.statistics import fits

__all__ = ["BeforeAfter", "before_after", "joint_incidence_change", "joint_residual_interval"]


@dataclass(frozen=True)
class BeforeAfter:
    """The elevator at cruise before and after an incidence change, and the tau they imply.

    Attributes
    ----------
    setting_before, setting_after : str
        The first and the latest stabilizer setting flown.
    incidence_before_deg, incidence_after_deg : float
        Their incidences [deg, leading-edge up positive].
    incidence_change_deg : float
        After minus before [deg].
    cruise_cl : float
        Lift coefficient of the cruise condition [-].
    cruise_cg_pct_mac : float
        Cruise CG [%MAC].
    elevator_before_deg, elevator_after_deg : float
        Elevator to trim at cruise under each setting [deg, trailing-edge down
        positive], from one fit.
    elevator_before_ci95_deg, elevator_after_ci95_deg : (float, float)
        Their 95 % intervals [deg].
    elevator_change_deg : float
        After minus before [deg] (the intercept shift).
    elevator_change_ci95_deg : (float, float)
        Its 95 % interval [deg].
    implied_tau : float or None
        ``-incidence_change / elevator_change`` [-]; None with ``reason``
        when the change in elevator is not clearly non-zero or has the sign
        no elevator can give.
    implied_tau_ci95 : (float, float) or None
        Fieller's 95 % interval [-].
    df : float
        Degrees of freedom of the t quantile.
    method : str
        ``"flight_level"`` or ``"independent"`` (see
        :class:`trimlog.stability.results.CruiseElevators`).
    reason : str or None
        Why ``implied_tau`` is None.
    """

    setting_before: str
    setting_after: str
    incidence_before_deg: float
    incidence_after_deg: float
    incidence_change_deg: float
    cruise_cl: float
    cruise_cg_pct_mac: float
    elevator_before_deg: float
    elevator_before_ci95_deg: tuple[float, float]
    elevator_after_deg: float
    elevator_after_ci95_deg: tuple[float, float]
    elevator_change_deg: float
    elevator_change_ci95_deg: tuple[float, float]
    implied_tau: float | None
    implied_tau_ci95: tuple[float, float] | None
    df: float
    method: str
    reason: str | None = None

    def calibration(self) -> TauCalibration:
        """The same numbers as a :class:`~trimlog.incidence.tau.TauCalibration`."""
        half = 0.5 * (self.elevator_change_ci95_deg[1] - self.elevator_change_ci95_deg[0])
        return calibrate_tau(self.elevator_change_deg, half / fits.t_quantile(self.df),
                             self.incidence_change_deg, self.df)


def before_after(elevators: CruiseElevators, setting_before: str, setting_after: str,
                 incidence_before_deg: float, incidence_after_deg: float) -> BeforeAfter:
    """Compare the elevator at cruise before and after an incidence change.

    Parameters
    ----------
    elevators : CruiseElevators
        From :func:`trimlog.stability.margins.cruise_elevators`, holding both
        settings.
    setting_before, setting_after : str
        The two settings (first and latest flown).
    incidence_before_deg, incidence_after_deg : float
        Their stabilizer incidences [deg].

    Returns
    -------
    BeforeAfter

    Raises
    ------
    TrimlogError
        A setting not in ``elevators``, equal or non-finite incidences.

    Examples
    --------
    Two settings 0.6 deg apart whose elevators at cruise differ by 1.2 deg
    imply tau = 0.5 (synthetic numbers):

    >>> import numpy as np
    >>> ce = CruiseElevators(("old", "new"), 0.32, 24.0, (-2.2, -1.0),
    ...                      np.array([[0.01, 0.004], [0.004, 0.01]]), 40.0, "flight_level")
    >>> ba = before_after(ce, "old", "new", -1.0, -1.6)
    >>> round(ba.implied_tau, 3), [round(x, 2) for x in ba.implied_tau_ci95]
    (0.5, [0.42, 0.61])
    """
    i_b = _finite("incidence_before_deg", incidence_before_deg)
    i_a = _finite("incidence_after_deg", incidence_after_deg)
    if i_a == i_b:
        raise TrimlogError("before_after: the two settings have the same incidence "
                           f"({i_a:g} deg); nothing changed between them")
    try:
        jb, ja = elevators.settings.index(setting_before), elevators.settings.index(setting_after)
    except ValueError:
        raise TrimlogError(
            f"before_after: settings '{setting_before}' and '{setting_after}' expected among "
            + ", ".join(f"'{s}'" for s in elevators.settings)) from None
    cov = np.asarray(elevators.cov, dtype=float)
    t = fits.t_quantile(elevators.df)
    e_b, e_a = elevators.elevator_deg[jb], elevators.elevator_deg[ja]
    var_d = float(cov[ja, ja] + cov[jb, jb] - 2.0 * cov[ja, jb])
    shift, se_shift = e_a - e_b, math.sqrt(max(var_d, 0.0))
    tau = implied = None
    reason = None
    if se_shift > 0.0:
        cal = calibrate_tau(shift, se_shift, i_a - i_b, elevators.df)
        tau, implied, reason = cal.tau, cal.ci95, cal.reason
    else:
        reason = "the elevator change between the two settings has no spread to judge it by"
    return BeforeAfter(
        setting_before=setting_before, setting_after=setting_after,
        incidence_before_deg=i_b, incidence_after_deg=i_a, incidence_change_deg=i_a - i_b,
        cruise_cl=elevators.cl, cruise_cg_pct_mac=elevators.cg_pct_mac,
        elevator_before_deg=e_b, elevator_before_ci95_deg=elevators.ci95(setting_before),
        elevator_after_deg=e_a, elevator_after_ci95_deg=elevators.ci95(setting_after),
        elevator_change_deg=shift,
        elevator_change_ci95_deg=(shift - t * se_shift, shift + t * se_shift),
        implied_tau=tau, implied_tau_ci95=implied, df=elevators.df, method=elevators.method,
        reason=reason)


def joint_incidence_change(ba: BeforeAfter, elevators: CruiseElevators) -> IncidenceChange | None:
    """The incidence change still needed, with the correlation of tau and the elevator kept.

    Parameters
    ----------
    ba : BeforeAfter
        From :func:`before_after` (``implied_tau`` not None).
    elevators : CruiseElevators
        The same contrasts (their covariance).

    Returns
    -------
    IncidenceChange or None
        ``change = -delta_i_t * E_after / (E_after - E_before)`` [deg] with
        Fieller's 95 % interval of the ratio ``E_after / (E_after -
        E_before)`` (their covariance from the fit), scaled by
        ``-delta_i_t``; None when the implied tau is not identifiable or
        Fieller's set is unbounded.

    Notes
    -----
    Fieller's set of ``r = N/D`` solves ``(N - r D)^2 <= t^2 Var(N - r D)``
    with ``Var(N - r D) = Var N - 2 r Cov(N, D) + r^2 Var D``; here
    ``N = E_after`` and ``D = E_after - E_before`` share ``E_after``, so
    ``Cov(N, D) = Var E_after - Cov(E_after, E_before)`` (Fieller 1954).
    Checked against a joint Monte Carlo of the two contrasts in the tests.

    Examples
    --------
    >>> import numpy as np
    >>> ce = CruiseElevators(("old", "new"), 0.32, 24.0, (-2.2, -1.0),
    ...                      np.array([[0.01, 0.004], [0.004, 0.01]]), 40.0, "flight_level")
    >>> ch = joint_incidence_change(before_after(ce, "old", "new", -1.0, -1.6), ce)
    >>> round(ch.change_deg, 2), [round(x, 2) for x in ch.ci95_deg]
    (-0.5, [-0.7, -0.35])
    """
    if ba.implied_tau is None:
        return None
    cov = np.asarray(elevators.cov, dtype=float)
    jb = elevators.settings.index(ba.setting_before)
    ja = elevators.settings.index(ba.setting_after)
    var_n = float(cov[ja, ja])
    var_d = float(cov[ja, ja] + cov[jb, jb] - 2.0 * cov[ja, jb])
    cov_nd = float(cov[ja, ja] - cov[ja, jb])
    ratio = fits.ratio_interval(ba.elevator_after_deg, ba.elevator_change_deg, var_n, var_d,
                                cov_nd, fits.t_quantile(ba.df))
    if ratio.estimate is None or ratio.fieller_ci is None:
        return None
    scale = -ba.incidence_change_deg
    lo, hi = sorted((scale * ratio.fieller_ci[0], scale * ratio.fieller_ci[1]))
    return IncidenceChange(
        change_deg=scale * ratio.estimate, ci95_deg=(lo, hi),
        method=("Fieller, joint: the elevator at cruise and the shift that calibrates tau "
                "from one fit, with their covariance (errors shared by a flight)"
                if ba.method == "flight_level" else
                "Fieller, joint: the elevator at cruise and the shift that calibrates tau "
                "from one fit, with their covariance"))


def joint_residual_interval(ba: BeforeAfter, elevators: CruiseElevators
                            ) -> Callable[[float], tuple[float, float]]:
    """The residual elevator's 95 % interval after a cut, tau calibrated from the same fit.

    Parameters
    ----------
    ba : BeforeAfter
        From :func:`before_after` (``implied_tau`` not None).
    elevators : CruiseElevators
        The same contrasts (their covariance).

    Returns
    -------
    callable
        ``f(stock_change_deg) -> (lo, hi)`` [deg]: the t interval of
        ``E_after - s / tau = E_after + s (E_after - E_before) / delta_i_t``,
        which is linear in the two contrasts, so exact under the fit's model.

    Examples
    --------
    >>> import numpy as np
    >>> ce = CruiseElevators(("old", "new"), 0.32, 24.0, (-2.2, -1.0),
    ...                      np.array([[0.01, 0.004], [0.004, 0.01]]), 40.0, "flight_level")
    >>> f = joint_residual_interval(before_after(ce, "old", "new", -1.0, -1.6), ce)
    >>> [round(x, 2) for x in f(-0.5)]
    [-0.34, 0.34]
    """
    cov = np.asarray(elevators.cov, dtype=float)
    jb = elevators.settings.index(ba.setting_before)
    ja = elevators.settings.index(ba.setting_after)
    var_n = float(cov[ja, ja])
    var_d = float(cov[ja, ja] + cov[jb, jb] - 2.0 * cov[ja, jb])
    cov_nd = float(cov[ja, ja] - cov[ja, jb])
    t = fits.t_quantile(ba.df)

    def interval(stock_change_deg: float) -> tuple[float, float]:
        k = float(stock_change_deg) / ba.incidence_change_deg
        value = ba.elevator_after_deg + k * ba.elevator_change_deg
        half = t * math.sqrt(max(var_n + k * k * var_d + 2.0 * k * cov_nd, 0.0))
        return (value - half, value + half)

    return interval
