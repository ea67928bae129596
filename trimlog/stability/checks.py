"""Checks on the pooled trim model: a robust refit, common intercepts, curvature.

Split from :mod:`trimlog.stability.neutral_points`, which calls them; see there for the model.

References
----------
.. [1] P. J. Huber, *Robust Statistics*, Wiley, 1981, ch. 7.
.. [2] D. C. Montgomery, E. A. Peck and G. G. Vining, *Introduction to Linear
   Regression Analysis*, 5th ed., Wiley, 2012, sec. 3.3.2.
.. [3] F. G. Irving, *An Introduction to the Longitudinal Static Stability of
   Low-Speed Aircraft*, Pergamon, 1966, ch. 5.
"""

from __future__ import annotations

from collections.abc import Callable

import numpy as np
import pandas as pd

from trimlog.stability.results import Curvature, InterceptCheck, NeutralPoint, RobustCheck
from trimlog.statistics import fits
from trimlog.statistics.fits import (
    LinearFit,
    f_sf,
    finite,
    fit_matrix,
    is_full_rank,
    robust_params,
    trim_matrix,
)

#: Significance level of the common-intercept test.
INTERCEPT_P = 0.01
#: Significance level at which a CL^2 term counts as curvature of the trim curve.
CURVATURE_P = 0.01


def intercept_check(frame: pd.DataFrame, linear: LinearFit, has_cg_term: bool) -> InterceptCheck:
    """F test of an intercept per flight against the pooled model's intercept per setting.

    Parameters
    ----------
    frame : pandas.DataFrame
        The included points the pooled stick-fixed model was fitted to.
    linear : LinearFit
        That fit (intercept per ``stab_setting``).
    has_cg_term : bool
        Whether it has the ``h_cl`` term.

    Returns
    -------
    InterceptCheck

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), sec. 3.3.2 (extra-sum-of-squares F
       test); Irving (1966), ch. 5 (trim lines of one tail setting meet at CL = 0).
    """
    shared = frame.groupby("stab_setting")["flight"].nunique()
    if not (shared >= 2).any():
        return InterceptCheck(False, None, None, False, None, None,
                              "no stabilizer setting was flown on two or more flights")
    key = (frame["flight"] + "\x1f" + frame["stab_setting"]).to_numpy(dtype=object)
    cells = list(dict.fromkeys(key))
    h = frame["h"].to_numpy(dtype=float) if has_cg_term else None
    x, names = trim_matrix(key, cells, frame["cl"].to_numpy(dtype=float), h)
    fit_r = linear
    if not is_full_rank(x) or len(frame) - x.shape[1] < 1:
        return InterceptCheck(False, None, None, False, None, None,
                              "too few points to test one intercept per flight")
    fit_f = fit_matrix(frame["elevator_deg"].to_numpy(dtype=float), x, names)
    df_num = fit_r.df_resid - fit_f.df_resid
    rss_r, rss_f = fit_r.residual_std**2 * fit_r.df_resid, fit_f.residual_std**2 * fit_f.df_resid
    # Each flight's own intercept against the median of its setting's flights: robust to
    # the pooled fit tilting towards an offset flight at an extreme CG.
    cell_a = pd.Series(fit_f.params.to_numpy()[:len(cells)], index=cells)
    cell_setting = pd.Series({c: c.split("\x1f", 1)[1] for c in cell_a.index})
    cell_flight = pd.Series({c: c.split("\x1f", 1)[0] for c in cell_a.index})
    shared_cells = cell_setting.map(cell_setting.value_counts()) >= 2
    dev = (cell_a - cell_a.groupby(cell_setting).transform("median"))[shared_cells]
    worst_cell = str(dev.abs().idxmax())
    worst, offset = str(cell_flight[worst_cell]), float(dev[worst_cell])
    if rss_f <= 1e-24 * max(rss_r, 1.0):
        significant = rss_r > 1e-20
        return InterceptCheck(True, None, 0.0 if significant else 1.0, significant, worst,
                              offset, _intercept_note(significant, worst, offset, None))
    f = (rss_r - rss_f) / df_num / (rss_f / fit_f.df_resid)
    p = f_sf(f, df_num, fit_f.df_resid)
    significant = p < INTERCEPT_P
    return InterceptCheck(True, finite(f), finite(p), significant, worst, offset,
                          _intercept_note(significant, worst, offset, p))


def _intercept_note(significant: bool, worst: str, offset: float, p: float | None) -> str:
    if not significant:
        return "the trim lines of each stabilizer setting meet at CL = 0, as the model assumes"
    return (f"the trim lines of flights with the same stabilizer setting do not meet at CL = 0"
            f"{'' if p is None else f' (F test p = {p:.2g})'}; the line of flight '{worst}' sits "
            f"{offset:+.2f} deg off the others of its setting: an elevator zero offset, a "
            "rigging change or a mislabelled setting biases the pooled neutral point (the "
            "two-stage one does not depend on it)")


def robust_check(linear: LinearFit, np_pct_mac: float | None) -> RobustCheck:
    """Huber M-estimate of the pooled neutral point beside the least-squares one.

    Parameters
    ----------
    linear : LinearFit
        The least-squares fit of the pooled model (with the ``h_cl`` term);
        its points and design are refitted.
    np_pct_mac : float or None
        Its neutral point [%MAC] when identifiable.

    Returns
    -------
    RobustCheck

    References
    ----------
    .. [1] P. J. Huber, *Robust Statistics*, Wiley, 1981, ch. 7.
    """
    if linear.residual_std <= 1e-12:
        return RobustCheck(None, None, "exact fit: no robust check needed")
    # the pooled design: an intercept per group, then cl and h_cl
    params = robust_params(linear, len(linear.params) - 2)
    if params is None or params["h_cl"] == 0.0:
        return RobustCheck(None, None, "the robust (Huber) fit did not converge")
    est = finite(-100.0 * params["cl"] / params["h_cl"])
    shift = None
    if est is not None and np_pct_mac is not None:
        shift = est - np_pct_mac
    return RobustCheck(est, shift, "Huber M-estimate (statsmodels RLM, HuberT); a check, "
                                   "no interval")


#: A step of the curvature search is refitted unless the linear-time screen puts its p
#: below this fraction of CURVATURE_P: the screen's rounding (a few digits of sums of
#: squares) is far smaller than the margin, so the search stops where it always did.
_SCREEN_BELOW = 0.8


def _screen(columns: tuple[np.ndarray, np.ndarray, np.ndarray | None, np.ndarray],
            top: int) -> np.ndarray:
    """The CL^2 p of the curvature search's steps, screened in linear time (NaN: refit).

    Refitting every step costs the points squared (a third of them may be left
    out one by one); the screen is the same model (one intercept per group, the
    dense and the block fit alike), so only the steps near the test's level are
    refitted, and the step the search stops at always is.
    """
    labels, cl, h, y = columns
    slopes = np.column_stack([cl] + ([] if h is None else [h * cl]) + [cl**2])
    return fits.last_slope_screen(labels, slopes, y, top)


def curvature_check(frame: pd.DataFrame, response: str, group_col: str, has_cg_term: bool,
                    restricted_np: Callable[[pd.DataFrame], NeutralPoint]) -> Curvature:
    """Test the pooled trim model for a CL^2 term and find where the points stay linear.

    Parameters
    ----------
    frame : pandas.DataFrame
        The included points of the pooled fit.
    response, group_col : str
        Response column and intercept grouping column of the pooled model.
    has_cg_term : bool
        Whether the pooled model has the ``h_cl`` term.
    restricted_np : callable
        Neutral point of the pooled model fitted to a subset of the points.

    Returns
    -------
    Curvature

    Notes
    -----
    When the CL^2 term is significant (p < :data:`CURVATURE_P`) the
    highest-CL points are left out one at a time (up to a third of them)
    until it is not.

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), sec. 7.2 (polynomial terms
       tested by their t statistic).
    """
    def arrays(sub: pd.DataFrame
               ) -> tuple[np.ndarray, np.ndarray, np.ndarray | None, np.ndarray]:
        h = sub["h"].to_numpy(dtype=float) if has_cg_term else None
        return (sub[group_col].to_numpy(dtype=object), sub["cl"].to_numpy(dtype=float), h,
                sub[response].to_numpy(dtype=float))

    def quad_p(labels: np.ndarray, cl: np.ndarray, h: np.ndarray | None, y: np.ndarray
               ) -> tuple[float | None, float | None]:
        groups = list(dict.fromkeys(labels))
        if len(groups) >= fits.MIN_INTERCEPTS_FOR_BLOCKS:  # many intercepts: by blocks
            slopes = np.column_stack([cl] + ([] if h is None else [h * cl]) + [cl**2])
            fitted, value, p_value = fits.last_slope_test(labels, slopes, y)
            return (value, p_value) if fitted else (None, None)
        x, names = trim_matrix(labels, groups, cl, h, cl2=True)
        if not is_full_rank(x) or len(cl) - x.shape[1] < 2:
            return None, None
        fit = fit_matrix(y, x, names)
        return finite(fit.params["cl2"]), fit.p_value("cl2")

    coef, p = quad_p(*arrays(frame))
    if p is None:
        return Curvature(False, None, None, False, None, None,
                         "too few points or CL values to test for curvature")
    if p >= CURVATURE_P:
        return Curvature(True, coef, p, False, None, None,
                         f"no significant curvature (CL^2 term p = {p:.2g})")
    ordered = frame.sort_values("cl")
    # The search drops the highest-CL points one at a time: slices of one set of arrays.
    columns = arrays(ordered)
    top = len(frame) // 3
    screen = _screen(columns, top)
    for k in range(1, top + 1):
        if screen[k - 1] < _SCREEN_BELOW * CURVATURE_P:
            continue  # clearly still curved (the step a refit would take, without refitting)
        m = len(frame) - k
        _, p_sub = quad_p(*(None if c is None else c[:m] for c in columns))
        if p_sub is None:
            break
        if p_sub >= CURVATURE_P:
            sub = ordered.iloc[:m]
            cl_max = float(sub["cl"].max())
            restricted = restricted_np(sub)
            return Curvature(True, coef, p, True, cl_max, restricted,
                             f"the trim curve bends (CL^2 term p = {p:.2g}); the points are "
                             f"linear up to CL = {cl_max:.2f}: consider excluding points above it")
    return Curvature(True, coef, p, True, None, None,
                     f"the trim curve bends (CL^2 term p = {p:.2g}) and leaving out the "
                     "highest-CL points does not remove it: look at the points before trusting "
                     "a linear fit")
