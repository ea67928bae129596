"""Statistical building blocks of the stability fits.

Ordinary least squares on a named design matrix, the ratio of two fitted
coefficients with its Fieller and delta-method intervals, and the outlier
test by externally studentized residuals.  Nothing here knows about
aircraft; :mod:`trimlog.stability` gives the numbers their meaning.

Every number leaving this module is finite or ``None``.

References
----------
.. [1] E. C. Fieller, "Some problems in interval estimation", *J. R. Stat.
   Soc. B* 16(2):175-185, 1954 (the confidence set of a ratio of two
   normally distributed estimates).
.. [2] D. C. Montgomery, E. A. Peck and G. G. Vining, *Introduction to Linear
   Regression Analysis*, 5th ed., Wiley, 2012: sec. 4.2 (externally
   studentized residuals), sec. 2.4 (prediction intervals).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
import statsmodels.api as sm
from scipy import stats

#: Two-sided confidence level of every interval trimlog reports.
CONFIDENCE = 0.95
#: Family-wise false-alarm rate of the outlier test (Bonferroni over all points).
OUTLIER_ALPHA = 0.05


def finite(value: float | None) -> float | None:
    """Return ``value`` as a float, or ``None`` when it is missing, NaN or infinite."""
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def finite_pair(lo: float | None, hi: float | None) -> tuple[float, float] | None:
    """Return ``(lo, hi)`` as finite floats, or ``None`` if either end is not finite."""
    lo, hi = finite(lo), finite(hi)
    if lo is None or hi is None:
        return None
    return (min(lo, hi), max(lo, hi))


@functools.lru_cache(maxsize=1024)
def t_quantile(df: float) -> float:
    """Two-sided Student-t quantile for :data:`CONFIDENCE` with ``df`` degrees of freedom."""
    return float(stats.t.ppf(0.5 + CONFIDENCE / 2.0, df))


@dataclass(frozen=True)
class RatioInterval:
    """The ratio ``num/den`` of two estimates and its 95 % intervals.

    Attributes
    ----------
    estimate : float or None
        ``num/den``; None when ``den`` is zero.
    fieller_ci : (float, float) or None
        Fieller's interval; None when it is unbounded (``den`` is not
        clearly non-zero: ``den**2 <= t**2 * var_den``).
    delta_ci : (float, float) or None
        First-order (delta-method) interval ``estimate +- t*se``.
    delta_se : float or None
        Delta-method standard error.
    bounded : bool
        Whether Fieller's set is a finite interval.
    """

    estimate: float | None
    fieller_ci: tuple[float, float] | None
    delta_ci: tuple[float, float] | None
    delta_se: float | None
    bounded: bool


def ratio_interval(
    num: float,
    den: float,
    var_num: float,
    var_den: float,
    cov_num_den: float,
    t_crit: float,
) -> RatioInterval:
    """Fieller and delta-method intervals of the ratio of two estimates.

    Parameters
    ----------
    num, den : float
        The two estimates (numerator, denominator).
    var_num, var_den, cov_num_den : float
        Their variances and covariance (from the fit's covariance matrix).
    t_crit : float
        Critical value, e.g. :func:`t_quantile` of the residual degrees of freedom.

    Returns
    -------
    RatioInterval

    Notes
    -----
    Fieller's set is every r with ``(num - r*den)**2 <= t**2 * Var(num -
    r*den)``, i.e. the roots of ``A r^2 - 2 B r + C <= 0`` with
    ``A = den^2 - t^2 var_den``, ``B = num*den - t^2 cov``,
    ``C = num^2 - t^2 var_num``.  It is a finite interval exactly when
    ``A > 0``; otherwise it is the whole line or the outside of an interval
    and no finite interval exists [1]_.  The delta-method variance is
    ``(var_num - 2 r cov + r^2 var_den) / den^2``.

    References
    ----------
    .. [1] Fieller (1954), J. R. Stat. Soc. B 16:175, sec. 3.
    """
    if den == 0.0 or not all(
        math.isfinite(x) for x in (num, den, var_num, var_den, cov_num_den, t_crit)
    ):
        return RatioInterval(None, None, None, None, False)
    r = num / den
    t2 = t_crit * t_crit
    var_lin = max(var_num - 2.0 * r * cov_num_den + r * r * var_den, 0.0)
    se = math.sqrt(var_lin) / abs(den)
    delta = finite_pair(r - t_crit * se, r + t_crit * se)
    a = den * den - t2 * var_den
    b = num * den - t2 * cov_num_den
    c = num * num - t2 * var_num
    # A relative floor: a denominator whose t-ratio only equals t_crit is not "clearly" non-zero.
    if a <= 1e-12 * den * den:
        return RatioInterval(finite(r), None, delta, finite(se), False)
    disc = max(b * b - a * c, 0.0)
    root = math.sqrt(disc)
    fieller = finite_pair((b - root) / a, (b + root) / a)
    return RatioInterval(finite(r), fieller, delta, finite(se), fieller is not None)


@dataclass(frozen=True, eq=False)
class LinearFit:
    """An ordinary (or weighted) least-squares fit on a named design.

    Attributes
    ----------
    params : pandas.Series
        Coefficients by column name of the design.
    cov : pandas.DataFrame
        Their covariance matrix (classical, scaled by the residual variance).
    df_resid : int
        Residual degrees of freedom.
    residual_std : float
        Residual standard deviation (root mean square error), in the
        response's unit.
    r_squared : float or None
        Coefficient of determination; None when the response does not vary.
    n : int
        Number of observations.
    result : object
        The statsmodels results object, for diagnostics (not part of the
        stable API).
    """

    params: pd.Series
    cov: pd.DataFrame
    df_resid: int
    residual_std: float
    r_squared: float | None
    n: int
    result: object

    def coef_ci(self, name: str) -> tuple[float, float] | None:
        """95 % confidence interval of one coefficient, None when it cannot be had."""
        if self.df_resid < 1:
            return None
        se = math.sqrt(max(float(self.cov.loc[name, name]), 0.0))
        t = t_quantile(self.df_resid)
        value = float(self.params[name])
        return finite_pair(value - t * se, value + t * se)

    def coef_se(self, name: str) -> float | None:
        """Return the standard error of one coefficient."""
        if self.df_resid < 1:
            return None
        return finite(math.sqrt(max(float(self.cov.loc[name, name]), 0.0)))

    def p_value(self, name: str) -> float | None:
        """Two-sided p-value of the t test of one coefficient against zero."""
        se = self.coef_se(name)
        if se is None:
            return None
        value = float(self.params[name])
        if se == 0.0:
            return 0.0 if value != 0.0 else 1.0
        return finite(2.0 * stats.t.sf(abs(value / se), self.df_resid))

    def predict(self, row: pd.Series) -> tuple[float, float, float]:
        """Prediction at one design row: value, its standard error, the residual std.

        Parameters
        ----------
        row : pandas.Series
            Design values by column name (missing columns count as 0).
        """
        x = row.reindex(self.params.index).fillna(0.0).to_numpy(dtype=float)
        value = float(x @ self.params.to_numpy())
        var = float(x @ self.cov.to_numpy() @ x)
        return value, math.sqrt(max(var, 0.0)), self.residual_std


def is_full_rank(design: pd.DataFrame) -> bool:
    """Whether the columns of a design are linearly independent (after scaling each column)."""
    x = design.to_numpy(dtype=float)
    if x.shape[0] < x.shape[1]:
        return False
    scale = np.sqrt((x * x).sum(axis=0))
    if np.any(scale == 0.0):
        return False
    return int(np.linalg.matrix_rank(x / scale, tol=1e-9)) == x.shape[1]


def fit_linear(
    y: pd.Series, design: pd.DataFrame, weights: np.ndarray | None = None
) -> LinearFit:
    """Least-squares fit of ``y`` on ``design`` (no constant added).

    Parameters
    ----------
    y : pandas.Series
        Response, in its own unit.
    design : pandas.DataFrame
        Regressors by name, full column rank (check with :func:`is_full_rank`).
    weights : numpy.ndarray, optional
        Weights proportional to 1/variance (weighted least squares).

    Returns
    -------
    LinearFit

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), ch. 3 and sec. 5.5 (weighted
       least squares).
    """
    yv = y.to_numpy(dtype=float)
    xv = design.to_numpy(dtype=float)
    if weights is None:
        res = sm.OLS(yv, xv).fit()
    else:
        res = sm.WLS(yv, xv, weights=weights).fit()
    params = pd.Series(np.asarray(res.params, dtype=float), index=design.columns)
    cov = pd.DataFrame(np.asarray(res.cov_params(), dtype=float),
                       index=design.columns, columns=design.columns)
    resid = np.asarray(res.resid, dtype=float)
    w = np.ones_like(yv) if weights is None else np.asarray(weights, dtype=float)
    df_resid = int(round(res.df_resid))
    ss_res = float(np.sum(w * resid**2))
    residual_std = math.sqrt(ss_res / df_resid) if df_resid > 0 else 0.0
    ybar = float(np.sum(w * yv) / np.sum(w))
    ss_tot = float(np.sum(w * (yv - ybar) ** 2))
    r2 = 1.0 - ss_res / ss_tot if ss_tot > 1e-12 * max(1.0, float(np.sum(w * yv**2))) else None
    if df_resid < 1:
        cov = cov * 0.0
    return LinearFit(params, cov, df_resid, residual_std, finite(r2), len(yv), res)


@dataclass(frozen=True)
class StudentizedOutlier:
    """One observation flagged by the outlier test.

    Attributes
    ----------
    position : int
        0-based position in the fitted data.
    studentized_residual : float
        Externally studentized residual [-].
    bonferroni_p : float
        Two-sided p-value times the number of observations (capped at 1).
    """

    position: int
    studentized_residual: float
    bonferroni_p: float


def studentized_outliers(fit: LinearFit, alpha: float = OUTLIER_ALPHA) -> list[StudentizedOutlier]:
    """Observations whose externally studentized residual fails a Bonferroni test.

    Rule: an observation is flagged when ``n * 2 * P(T > |r|) < alpha`` for
    ``T ~ t(df_resid - 1)``, ``r`` its externally studentized residual and
    ``n`` the number of observations (for 40 points and alpha 0.05 this is
    about ``|r| > 3.6``).  Nothing is dropped; the caller lists the flags.

    Parameters
    ----------
    fit : LinearFit
        An ordinary least-squares fit.
    alpha : float
        Family-wise false-alarm rate.

    Returns
    -------
    list of StudentizedOutlier
        Empty when the fit is exact or has fewer than 2 residual degrees of freedom.

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), sec. 4.2.2 (R-student) and
       sec. 6.2 (Bonferroni-adjusted outlier test).
    """
    if fit.df_resid < 2 or fit.residual_std <= 1e-12:
        return []
    x = np.asarray(fit.result.model.exog, dtype=float)
    e = np.asarray(fit.result.resid, dtype=float)
    # leverages h_ii = diag(X (X'X)^-1 X'); s_(i)^2 is the residual variance without point i
    lev = np.einsum("ij,jk,ik->i", x, np.linalg.pinv(x.T @ x), x)
    one_minus = np.clip(1.0 - lev, 1e-12, None)
    s2_i = (fit.df_resid * fit.residual_std**2 - e**2 / one_minus) / (fit.df_resid - 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = e / np.sqrt(np.clip(s2_i, 0.0, None) * one_minus)
    flagged = []
    for i, ri in enumerate(r):
        if not math.isfinite(ri):
            continue
        p = min(1.0, fit.n * 2.0 * float(stats.t.sf(abs(ri), fit.df_resid - 1)))
        if p < alpha:
            flagged.append(StudentizedOutlier(i, float(ri), p))
    return flagged


def robust_params(y: pd.Series, design: pd.DataFrame) -> pd.Series | None:
    """Huber M-estimate of the coefficients (statsmodels RLM, HuberT), None if it fails.

    References
    ----------
    .. [1] P. J. Huber, *Robust Statistics*, Wiley, 1981, ch. 7.
    """
    try:
        res = sm.RLM(y.to_numpy(dtype=float), design.to_numpy(dtype=float),
                     M=sm.robust.norms.HuberT()).fit()
    except (ValueError, np.linalg.LinAlgError, ZeroDivisionError):
        return None
    params = pd.Series(np.asarray(res.params, dtype=float), index=design.columns)
    if not np.all(np.isfinite(params.to_numpy())):
        return None
    return params


def trim_design(frame: pd.DataFrame, group_col: str, groups: list[str], *, cg_term: bool,
                cl2: bool = False) -> pd.DataFrame:
    """Design of the trim model: an intercept per group, ``cl``, optionally ``h*cl`` and ``cl^2``.

    Parameters
    ----------
    frame : pandas.DataFrame
        Points with columns ``cl``, ``h`` and ``group_col``.
    group_col : str
        Column whose labels each get their own intercept (``a[<label>]``).
    groups : list of str
        The labels, in the order the columns should have.
    cg_term, cl2 : bool
        Whether to include ``h_cl`` and ``cl2``.

    Returns
    -------
    pandas.DataFrame
        On the index of ``frame``.
    """
    cols = {f"a[{g}]": (frame[group_col] == g).astype(float) for g in groups}
    cols["cl"] = frame["cl"].astype(float)
    if cg_term:
        cols["h_cl"] = frame["h"].astype(float) * frame["cl"].astype(float)
    if cl2:
        cols["cl2"] = frame["cl"].astype(float) ** 2
    return pd.DataFrame(cols, index=frame.index)
