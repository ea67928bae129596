"""Statistical building blocks of the stability fits.

Ordinary least squares on a named design matrix, the ratio of two fitted
coefficients with its Fieller and delta-method intervals, and the outlier
test by externally studentized residuals.  Nothing here knows about
aircraft; :mod:`trimlog.stability.neutral_points` gives the numbers their meaning.

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
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import special

# statsmodels and scipy.stats are imported only inside the diagnostics that need them
# (``LinearFit.result``): together they cost about 2 s of every command's start-up, while
# the quantiles below come from scipy.special, the same functions scipy.stats calls.

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
    # scipy.stats.t.ppf(q, df) is scipy.special.stdtrit(df, q) (scipy's t_gen._ppf)
    return float(special.stdtrit(df, 0.5 + CONFIDENCE / 2.0))


def t_sf(x: float | np.ndarray, df: float) -> float | np.ndarray:
    """Upper tail probability of Student's t, as ``scipy.stats.t.sf(x, df)``.

    Examples
    --------
    >>> round(float(t_sf(2.0, 10)), 6)
    0.036694
    """
    # scipy's t_gen._sf is scipy.special.stdtr(df, -x)
    return special.stdtr(df, -np.asarray(x, dtype=float))


def f_sf(f: float, df_num: float, df_den: float) -> float:
    """Upper tail probability of Fisher's F, as ``scipy.stats.f.sf(f, df_num, df_den)``.

    Examples
    --------
    >>> round(f_sf(3.0, 2, 20), 6)
    0.072538
    """
    # scipy's f_gen._sf is scipy.special.fdtrc(dfn, dfd, x); F is 0 below its support
    if not f > 0.0:
        return 1.0 if f <= 0.0 else math.nan
    return float(special.fdtrc(df_num, df_den, f))


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
    exog : numpy.ndarray
        The design matrix fitted, one row per observation.
    endog : numpy.ndarray
        The response fitted.
    weights : numpy.ndarray or None
        The weights of a weighted fit.
    resid : numpy.ndarray
        Residuals ``endog - exog @ params``, in the response's unit.
    """

    params: pd.Series
    cov: pd.DataFrame
    df_resid: int
    residual_std: float
    r_squared: float | None
    n: int
    exog: np.ndarray
    endog: np.ndarray
    weights: np.ndarray | None
    resid: np.ndarray

    @functools.cached_property
    def result(self) -> object:
        """The statsmodels results object of the same fit, for diagnostics (not stable API).

        Built on first use only: the fit itself is computed without
        statsmodels' model machinery, by the same pseudo-inverse.
        """
        import statsmodels.api as sm  # heavy (about 2 s): only when a diagnostic asks

        if self.weights is None:
            return sm.OLS(self.endog, self.exog).fit()
        return sm.WLS(self.endog, self.exog, weights=self.weights).fit()

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
        return finite(2.0 * float(t_sf(abs(value / se), self.df_resid)))

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

    def confidence_band(self, design: pd.DataFrame
                        ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
        """The fitted line and its 95 % confidence band at many design rows at once.

        Parameters
        ----------
        design : pandas.DataFrame
            One row per point of the line, design values by column name
            (missing columns count as 0).

        Returns
        -------
        (numpy.ndarray, numpy.ndarray or None, numpy.ndarray or None)
            Value, lower and upper end of the 95 % confidence interval of the
            mean response at each row (``value -+ t * se``); the ends are None
            when the fit has no residual degree of freedom (no interval).  The
            same numbers as :meth:`predict` row by row, as one matrix product.

        References
        ----------
        Montgomery, Peck and Vining (2012), sec. 2.4.2 (confidence interval on
        the mean response, ``x0' (X'X)^-1 x0`` scaled by the residual variance).

        Examples
        --------
        >>> import numpy as np, pandas as pd
        >>> x = np.column_stack([np.ones(4), [0.0, 1.0, 2.0, 3.0]])
        >>> fit = fit_matrix(np.array([0.1, 0.9, 2.1, 2.9]), x, ["const", "x"])
        >>> value, lo, hi = fit.confidence_band(pd.DataFrame({"const": 1.0, "x": [0.0, 3.0]}))
        >>> np.round(value, 3).tolist(), bool(np.all(lo < value) and np.all(value < hi))
        ([0.06, 2.94], True)
        """
        x = design.reindex(columns=self.params.index).fillna(0.0).to_numpy(dtype=float)
        value = x @ self.params.to_numpy()
        if self.df_resid < 1:
            return value, None, None
        var = np.einsum("ij,jk,ik->i", x, self.cov.to_numpy(), x)
        half = t_quantile(self.df_resid) * np.sqrt(np.maximum(var, 0.0))
        return value, value - half, value + half


#: Fewest one-hot intercept columns from which :func:`fit_matrix`, :func:`is_full_rank` and the
#: outlier test remove the intercepts first (Frisch-Waugh-Lovell) instead of working on the
#: dense design: below it the dense path keeps statsmodels' numbers to the last bit; above it
#: (one intercept per flight in a long programme) the dense SVD grows with points times
#: intercepts squared.  Both give the same numbers to rounding (tested to 1e-9).
MIN_INTERCEPTS_FOR_BLOCKS = 16


def _intercept_block(x: np.ndarray) -> tuple[int, np.ndarray] | None:
    """Leading one-hot columns (every row in exactly one, each non-empty): count and codes."""
    n_rows, n_cols = x.shape
    # the leading columns of zeros and ones, tested on the whole matrix at once (a column
    # at a time strides through a row-major design: five times slower at 500 flights)
    head = x[:, : n_cols - 1]
    binary = np.all((head == 0.0) | (head == 1.0), axis=0)
    k = int(binary.size if binary.all() else np.argmin(binary))
    if k < max(MIN_INTERCEPTS_FOR_BLOCKS, 1) or n_rows == 0:
        return None
    block = x[:, :k]
    if not np.all(block.sum(axis=1) == 1.0) or not np.all(block.any(axis=0)):
        return None
    # each row holds exactly one 1.0 (checked above), so its column number is the row's
    # product with 0, 1, ..., k-1: exact in floating point, ten times faster than argmax
    return k, (block @ np.arange(k, dtype=float)).astype(np.intp)


def _demeaned(z: np.ndarray, codes: np.ndarray, k: int, w: np.ndarray
              ) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Columns less their weighted group means; the group weights and means."""
    total = np.bincount(codes, weights=w, minlength=k)
    means = np.column_stack([np.bincount(codes, weights=w * col, minlength=k)
                             for col in z.T]) / total[:, None]
    return z - means[codes], total, means


@dataclass(frozen=True)
class WithinFit:
    """Least squares with one intercept per group, the intercepts removed (see :func:`within_fit`).

    Attributes
    ----------
    coef : numpy.ndarray
        Coefficients of the columns of ``x``.
    cov : numpy.ndarray
        Their covariance, ``s^2 (X'X)^-1`` of the group-demeaned columns.
    rss : float
        Residual sum of squares.
    df_resid : int
        Points less groups less columns.
    """

    coef: np.ndarray
    cov: np.ndarray
    rss: float
    df_resid: int


def within_fit(y: np.ndarray, x: np.ndarray, codes: np.ndarray, k: int) -> WithinFit | None:
    """Fit ``y`` on one intercept per group and the columns of ``x``, without the dummies.

    By the Frisch-Waugh-Lovell theorem the coefficients of ``x`` and their
    covariance are those of the regression of the group-demeaned ``y`` on the
    group-demeaned ``x`` (residual degrees of freedom ``n - k - p``).  The
    rank rule is :func:`is_full_rank`'s for a design with many intercepts.

    Parameters
    ----------
    y : numpy.ndarray
        Response, length n.
    x : numpy.ndarray
        Regressors, n x p.
    codes : numpy.ndarray
        Each point's group, 0 .. k-1 (every group non-empty).
    k : int
        Number of groups.

    Returns
    -------
    WithinFit or None
        None when the design is not of full column rank or leaves no
        residual degree of freedom.

    References
    ----------
    .. [1] Frisch and Waugh (1933), Econometrica 1:387-401; Lovell (1963),
       J. Am. Stat. Assoc. 58:993-1010.

    Examples
    --------
    >>> import numpy as np
    >>> x = np.array([[1.0], [2.0], [3.0], [1.0], [2.0], [4.0]])
    >>> y = np.array([2.0, 4.0, 6.1, 5.0, 7.0, 11.0])
    >>> fit = within_fit(y, x, np.array([0, 0, 0, 1, 1, 1]), 2)
    >>> round(float(fit.coef[0]), 3), fit.df_resid
    (2.015, 3)
    """
    n, p = x.shape
    df = n - k - p
    scale = np.sqrt((x * x).sum(axis=0))
    if df < 1 or np.any(scale == 0.0):
        return None
    z, *_ = _demeaned(np.column_stack([x, y]), codes, k, np.ones(n))
    xt, yt = z[:, :p], z[:, p]
    if int(np.linalg.matrix_rank(xt / scale, tol=1e-9)) < p:
        return None
    inv = np.linalg.inv(xt.T @ xt)
    coef = inv @ (xt.T @ yt)
    rss = float(np.sum((yt - xt @ coef) ** 2))
    return WithinFit(coef, rss / df * inv, rss, df)


def is_full_rank(design: pd.DataFrame | np.ndarray) -> bool:
    """Whether the columns of a design are linearly independent (after scaling each column)."""
    x = np.asarray(design, dtype=float)
    if x.shape[0] < x.shape[1]:
        return False
    scale = np.sqrt((x * x).sum(axis=0))
    if np.any(scale == 0.0):
        return False
    block = _intercept_block(x)
    if block is not None:  # intercepts removed first: the rank of the rest decides
        k, codes = block
        rest = _demeaned(x[:, k:], codes, k, np.ones(len(x)))[0]
        return int(np.linalg.matrix_rank(rest / scale[k:], tol=1e-9)) == x.shape[1] - k
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
    return fit_matrix(y.to_numpy(dtype=float), design.to_numpy(dtype=float), design.columns,
                      weights)


def fit_matrix(yv: np.ndarray, xv: np.ndarray, names: Sequence[str],
               weights: np.ndarray | None = None) -> LinearFit:
    """Least-squares fit of the array ``yv`` on the matrix ``xv`` with columns ``names``.

    The array form of :func:`fit_linear` (same result), for the many small fits
    that would otherwise spend their time building tables.
    """
    w = None if weights is None else np.asarray(weights, dtype=float)
    if w is None:
        wy, wx = yv, xv
    else:
        root_w = np.sqrt(w)
        wy, wx = yv * root_w, root_w[:, None] * xv
    blocks = _block_solve(yv, xv, w)
    if blocks is not None:
        beta, unscaled = blocks
        df_resid = len(yv) - xv.shape[1]
    else:
        # The operations of statsmodels' OLS/WLS fit(method="pinv"), without its per-call model
        # set-up (most of the cost of the many small fits): the same numbers to the last bit.
        pinv, singular = _pinv_extended(wx)
        beta = np.dot(pinv, wy)
        # statsmodels' rank: np.linalg.matrix_rank of diag(singular), whose singular values
        # are these
        rank = int(np.count_nonzero(singular > singular.max(initial=0.0) * len(singular)
                                    * np.finfo(float).eps))
        df_resid = len(yv) - rank
        unscaled = None
    resid = yv - np.dot(xv, beta)
    wresid = wy - np.dot(wx, beta)
    names = pd.Index(names)
    params = pd.Series(beta, index=names)
    if df_resid < 1:
        cov = pd.DataFrame(0.0, index=names, columns=names)
    else:
        scale = np.dot(wresid, wresid) / df_resid
        if unscaled is None:
            unscaled = np.dot(pinv, np.transpose(pinv))
        cov = pd.DataFrame(unscaled * scale, index=names, columns=names)
    ww = np.ones_like(yv) if w is None else w
    ss_res = float(np.sum(ww * resid**2))
    residual_std = math.sqrt(ss_res / df_resid) if df_resid > 0 else 0.0
    ybar = float(np.sum(ww * yv) / np.sum(ww))
    ss_tot = float(np.sum(ww * (yv - ybar) ** 2))
    r2 = 1.0 - ss_res / ss_tot if ss_tot > 1e-12 * max(1.0, float(np.sum(ww * yv**2))) else None
    return LinearFit(params, cov, df_resid, residual_std, finite(r2), len(yv), xv, yv, w, resid)


def _block_solve(yv: np.ndarray, xv: np.ndarray, w: np.ndarray | None
                 ) -> tuple[np.ndarray, np.ndarray] | None:
    """Least squares with the leading intercepts removed first; None to use the dense path.

    Returns the coefficients and ``(X'WX)^-1`` by blocks (Frisch-Waugh-Lovell: the slopes
    from the group-demeaned columns, the intercepts as group means of what they leave).
    """
    block = _intercept_block(xv)
    if block is None:
        return None
    k, codes = block
    ww = np.ones(len(yv)) if w is None else w
    if np.any(ww <= 0.0):
        return None
    z = xv[:, k:]
    rest, total, means = _demeaned(z, codes, k, ww)
    scale = np.sqrt((z * z).sum(axis=0))
    root = np.sqrt(ww)
    if np.any(scale == 0.0) or int(np.linalg.matrix_rank(
            root[:, None] * rest / scale, tol=1e-9)) < z.shape[1]:
        return None
    schur_inv = np.linalg.inv((rest * ww[:, None]).T @ rest)
    b = schur_inv @ ((rest * ww[:, None]).T @ yv)
    a = np.bincount(codes, weights=ww * (yv - z @ b), minlength=k) / total
    unscaled = np.empty((xv.shape[1],) * 2)
    cross = -means @ schur_inv
    unscaled[:k, :k] = -cross @ means.T
    unscaled[np.arange(k), np.arange(k)] += 1.0 / total
    unscaled[:k, k:] = cross
    unscaled[k:, :k] = cross.T
    unscaled[k:, k:] = schur_inv
    return np.concatenate([a, b]), unscaled


def last_slope_test(labels: np.ndarray, slopes: np.ndarray, y: np.ndarray
                    ) -> tuple[bool, float | None, float | None]:
    """The last slope's coefficient and t-test p of ``y = a[label] + slopes b``, by blocks.

    The numbers of :func:`trim_matrix` + :func:`is_full_rank` + :func:`fit_matrix` for the
    last column, without building the dense design: the intercepts are removed first
    (Frisch-Waugh-Lovell), so the cost is linear in the points whatever the number of
    groups.  Returns ``(fitted, coefficient, p)``; not fitted when the design is not of
    full rank or leaves fewer than two residual degrees of freedom.
    """
    codes, uniques = pd.factorize(np.asarray(labels, dtype=object))
    k, m = len(uniques), slopes.shape[1]
    scale = np.sqrt((slopes * slopes).sum(axis=0))
    if len(y) < k + m or np.any(scale == 0.0):
        return False, None, None
    rest, _, _ = _demeaned(slopes, codes, k, np.ones(len(y)))
    if int(np.linalg.matrix_rank(rest / scale, tol=1e-9)) < m or len(y) - k - m < 2:
        return False, None, None
    schur_inv = np.linalg.inv(rest.T @ rest)
    b = schur_inv @ (rest.T @ y)
    a = np.bincount(codes, weights=y - slopes @ b, minlength=k) / np.bincount(codes, minlength=k)
    resid = y - a[codes] - slopes @ b
    df = len(y) - k - m
    value = finite(float(b[-1]))
    se = finite(math.sqrt(max(float(schur_inv[-1, -1]) * float(resid @ resid) / df, 0.0)))
    if se is None:
        return True, value, None
    if se == 0.0:
        return True, value, 0.0 if b[-1] != 0.0 else 1.0
    return True, value, finite(2.0 * float(t_sf(abs(float(b[-1]) / se), df)))


def last_slope_screen(labels: np.ndarray, slopes: np.ndarray, y: np.ndarray, drops: int,
                      *, min_groups: int = 1) -> np.ndarray:
    """Approximate p of :func:`last_slope_test` with the last j rows left out, j = 1..drops.

    For a search that drops rows one at a time (the curvature check), in time
    linear in the rows: the within-group sums of squares and products are
    downdated row by row instead of refitted.  Sums of squares lose a few digits
    that a fit by blocks keeps, so the values are a screen, not the answer: the
    caller confirms any step it acts on with :func:`last_slope_test`.  NaN where
    the screen cannot tell: fewer than two residual degrees of freedom, fewer
    than ``min_groups`` groups, or a design near rank deficiency (its scaled
    smallest singular value below 1e-6, a thousand times the rank tolerance).

    Returns
    -------
    numpy.ndarray
        ``p[j - 1]`` for ``j`` rows left out from the end.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> x = rng.uniform(0, 1, (40, 2)); labels = np.repeat(np.arange(4), 10)
    >>> y = labels + x @ [1.0, 0.5] + 0.1 * rng.standard_normal(40)
    >>> screen = last_slope_screen(labels, x, y, 3)
    >>> exact = [last_slope_test(labels[:-j], x[:-j], y[:-j])[2] for j in (1, 2, 3)]
    >>> bool(np.allclose(screen, exact, rtol=1e-6))
    True
    """
    codes, uniques = pd.factorize(np.asarray(labels, dtype=object))
    k, m, n = len(uniques), slopes.shape[1], len(y)
    drops = max(min(int(drops), n - 1), 0)
    out = np.full(drops, np.nan)
    if not drops:
        return out
    x = slopes - slopes.mean(axis=0)  # within-group sums do not change with a shift
    yc = y - y.mean()
    # Each row's group sums with it and without it, counting rows up to it in file order:
    # the rows after it are the ones already left out when it is.
    order = np.argsort(codes, kind="stable")
    block = np.r_[0, np.flatnonzero(np.diff(codes[order])) + 1]
    starts = np.repeat(block, np.diff(np.r_[block, n]))
    xy = np.column_stack([x, yc])[order]
    cum = np.cumsum(xy, axis=0)
    cum -= (cum[block] - xy[block])[np.searchsorted(block, np.arange(n), side="right") - 1]
    with_row = np.empty_like(cum)
    with_row[order] = cum
    count = np.empty(n)
    count[order] = np.arange(n) - starts + 1.0
    without = with_row - np.column_stack([x, yc])  # the group's sums once the row is left out
    # Change of the between-group cross products (x and y together) when each row leaves.
    z = np.column_stack([x, yc])
    outer_with = with_row[:, :, None] * with_row[:, None, :] / count[:, None, None]
    rest = np.where(count > 1, count - 1, 1.0)[:, None, None]
    outer_without = np.where((count > 1)[:, None, None],
                             without[:, :, None] * without[:, None, :] / rest, 0.0)
    # Left out from the end: cumulative sums over rows n-1, n-2, ... (step j = first j rows).
    tail = slice(n - 1, n - 1 - drops, -1)
    sx = np.zeros((k, m + 1))
    np.add.at(sx, codes, z)
    full_count = np.bincount(codes, minlength=k).astype(float)
    between_full = (sx.T / full_count) @ sx
    between = between_full + np.cumsum((outer_without - outer_with)[tail], axis=0)
    total = z.T @ z - np.cumsum((z[:, :, None] * z[:, None, :])[tail], axis=0)
    groups = k - np.cumsum(count[tail] == 1)
    squares = (slopes * slopes).sum(axis=0) - np.cumsum((slopes * slopes)[tail], axis=0)
    kept = n - np.arange(1, drops + 1)
    df = kept - groups - m
    cross = total - between
    within, wy, yy = cross[:, :m, :m], cross[:, :m, m], cross[:, m, m]
    ok = (df >= 2) & (groups >= min_groups) & np.all(squares > 0.0, axis=1)
    if not ok.any():
        return out
    scale = np.sqrt(np.where(squares > 0.0, squares, 1.0))
    smallest = np.linalg.eigvalsh(within / (scale[:, :, None] * scale[:, None, :]))[:, 0]
    ok &= np.sqrt(np.maximum(smallest, 0.0)) >= 1e-6
    if not ok.any():
        return out
    inverse = np.linalg.inv(within[ok])
    b = np.einsum("jab,jb->ja", inverse, wy[ok])
    rss = yy[ok] - np.einsum("ja,ja->j", wy[ok], b)
    se = np.sqrt(np.maximum(inverse[:, -1, -1] * rss / df[ok], 0.0))
    with np.errstate(divide="ignore", invalid="ignore"):
        p = 2.0 * special.stdtr(df[ok], -np.abs(b[:, -1] / se))
    out[ok] = np.where((se > 0.0) & np.isfinite(se), p, np.nan)
    return out


def _pinv_extended(x: np.ndarray, rcond: float = 1e-15) -> tuple[np.ndarray, np.ndarray]:
    """Pseudo-inverse by SVD and the singular values, as statsmodels computes them."""
    u, s, vt = np.linalg.svd(x, False)
    inv = np.where(s > rcond * np.max(s), 1.0 / np.where(s > 0.0, s, 1.0), 0.0)
    return np.dot(np.transpose(vt), np.multiply(inv[:, np.newaxis], np.transpose(u))), s


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

    Notes
    -----
    The numbers of statsmodels' ``OLSResults.outlier_test(method="bonferroni")``
    (tested to 1e-9, with and without intercept blocks).  It is not called here
    because the analysis must start without importing statsmodels (start-up
    time, measured by ``trimlog bench``); ``fit.result.outlier_test()`` gives it
    for diagnostics.

    References
    ----------
    .. [1] Montgomery, Peck and Vining (2012), sec. 4.2.2 (R-student) and
       sec. 6.2 (Bonferroni-adjusted outlier test).
    """
    if fit.df_resid < 2 or fit.residual_std <= 1e-12:
        return []
    x, e = fit.exog, fit.resid
    # leverages h_ii = diag(X (X'X)^-1 X'); s_(i)^2 is the residual variance without point i
    block = _intercept_block(x)
    if block is not None:  # h_ii = 1/n_group + the demeaned slopes' part (same numbers)
        k, codes = block
        rest, total, _ = _demeaned(x[:, k:], codes, k, np.ones(len(x)))
        lev = 1.0 / total[codes] + np.einsum(
            "ij,jk,ik->i", rest, np.linalg.pinv(rest.T @ rest), rest)
    else:
        lev = np.einsum("ij,jk,ik->i", x, np.linalg.pinv(x.T @ x), x)
    one_minus = np.clip(1.0 - lev, 1e-12, None)
    s2_i = (fit.df_resid * fit.residual_std**2 - e**2 / one_minus) / (fit.df_resid - 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        r = e / np.sqrt(np.clip(s2_i, 0.0, None) * one_minus)
    ok = np.isfinite(r)
    p = np.ones_like(r)
    p[ok] = np.minimum(1.0, fit.n * 2.0 * t_sf(np.abs(r[ok]), fit.df_resid - 1))
    return [StudentizedOutlier(int(i), float(r[i]), float(p[i]))
            for i in np.flatnonzero(ok & (p < alpha))]


#: Huber's tuning constant (statsmodels' ``HuberT`` default: 95 % efficiency at the normal).
HUBER_T = 1.345
#: Normal quantile at 3/4: the MAD of a standard normal sample (``scipy.stats.norm.ppf(0.75)``).
_GAUSSIAN_3_4 = float(special.ndtri(0.75))


def huber_rho(z: np.ndarray, t: float = HUBER_T) -> np.ndarray:
    """Huber's criterion: ``z**2/2`` inside ``|z| <= t``, ``t|z| - t**2/2`` outside.

    The arithmetic of statsmodels' ``HuberT().rho``, term by term, so that
    the robust refit is bit-identical to it (tested against statsmodels).

    Examples
    --------
    >>> huber_rho(np.array([1.0, 3.0])).tolist()
    [0.5, 3.1304875]
    """
    z = np.asarray(z)
    inside = np.less_equal(np.abs(z), t)
    return inside * 0.5 * z**2 + (1 - inside) * (np.abs(z) * t - 0.5 * t**2)


def huber_weights(z: np.ndarray, t: float = HUBER_T) -> np.ndarray:
    """IRLS weights of Huber's criterion: 1 inside ``|z| <= t``, ``t/|z|`` outside.

    Examples
    --------
    >>> huber_weights(np.array([1.0, -2.69])).tolist()
    [1.0, 0.5]
    """
    z = np.atleast_1d(z)
    inside = np.less_equal(np.abs(z), t)
    absz = np.abs(z)
    absz[inside] = 1.0
    return inside + (1 - inside) * t / absz


def mad_about_zero(a: np.ndarray) -> float:
    """Median absolute deviation about 0, scaled to a normal's standard deviation.

    ``median(|a|) / 0.6745`` (statsmodels' ``mad(a, center=0)``).

    Examples
    --------
    >>> round(mad_about_zero(np.array([-1.0, 0.5, 2.0])), 4)
    1.4826
    """
    err = np.abs(np.asarray(a, dtype=float) - 0.0) / _GAUSSIAN_3_4
    return float(np.median(err)) if err.size else math.nan


#: Convergence tolerance on the Huber deviance and iteration cap (statsmodels RLM's defaults).
_HUBER_TOL, _HUBER_MAXITER = 1e-8, 50


def robust_params(fit: LinearFit, n_groups: int) -> pd.Series | None:
    """Huber M-estimate of the coefficients of a trim model's fit, None if it fails.

    Parameters
    ----------
    fit : LinearFit
        An ordinary least-squares fit of a design whose first ``n_groups``
        columns are one-hot group intercepts (as :func:`trim_design` builds).
    n_groups : int
        Number of those intercept columns.

    Returns
    -------
    pandas.Series or None
        Coefficients by name.

    Notes
    -----
    The iteration of statsmodels' ``RLM(M=HuberT()).fit()``: start from least
    squares; weights from the Huber norm of residuals over the MAD scale
    (centre 0); weighted least squares; stop when the deviance changes by at
    most 1e-8 or after 50 iterations.  Each weighted fit removes the group
    intercepts first (weighted group means; Frisch-Waugh-Lovell theorem) and
    solves for the few slopes only, so the cost grows linearly with the
    number of points instead of with points times groups squared.  The same
    numbers as ``statsmodels.robust.RLM`` (tested to 1e-9), which is not
    called because the analysis must start without importing statsmodels.

    References
    ----------
    .. [1] P. J. Huber, *Robust Statistics*, Wiley, 1981, ch. 7.
    .. [2] Montgomery, Peck and Vining (2012), sec. 15.1 (M-estimation by
       iteratively reweighted least squares).
    """
    y, x, resid = fit.endog, fit.exog, fit.resid
    codes = np.argmax(x[:, :n_groups], axis=1)
    slopes = x[:, n_groups:]
    df = len(y) - x.shape[1]
    beta = fit.params.to_numpy()
    scale = mad_about_zero(resid)
    deviance = float(huber_rho(resid / (np.dot(resid, resid) / df)).sum())
    for _ in range(2, _HUBER_MAXITER + 1):
        if scale == 0.0:
            break
        w = huber_weights(resid / scale)
        if not np.all(np.isfinite(w)):
            return None
        total = np.bincount(codes, weights=w, minlength=n_groups)
        y_mean = np.bincount(codes, weights=w * y, minlength=n_groups) / total
        s_mean = np.column_stack([np.bincount(codes, weights=w * col, minlength=n_groups)
                                  for col in slopes.T]) / total[:, None]
        root = np.sqrt(w)
        b = np.linalg.lstsq(root[:, None] * (slopes - s_mean[codes]),
                            root * (y - y_mean[codes]), rcond=None)[0]
        beta = np.concatenate([y_mean - s_mean @ b, b])
        resid = y - x @ beta
        wresid = root * resid
        scale = mad_about_zero(resid)
        previous, deviance = deviance, float(huber_rho(resid / (np.dot(wresid, wresid) / df)).sum())
        if not abs(deviance - previous) > _HUBER_TOL:
            break
    if not np.all(np.isfinite(beta)):
        return None
    return pd.Series(beta, index=fit.params.index)


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
    h = frame["h"].to_numpy(dtype=float) if cg_term else None
    x, names = trim_matrix(frame[group_col], groups, frame["cl"].to_numpy(dtype=float), h,
                           cl2=cl2)
    return pd.DataFrame(x, index=frame.index, columns=names)


def trim_matrix(labels: pd.Series | np.ndarray, groups: Sequence[str], cl: np.ndarray,
                h: np.ndarray | None = None, *, cl2: bool = False
                ) -> tuple[np.ndarray, list[str]]:
    """The matrix of :func:`trim_design` and its column names, from arrays.

    ``labels`` gives each point's group; ``h`` adds the ``h_cl`` column when given.
    """
    # One-hot intercepts by indexing: a label not in ``groups`` (or missing, code -1, which
    # picks the appended -1) gets no intercept column set.
    codes, uniques = pd.factorize(np.asarray(labels, dtype=object))
    position = {g: i for i, g in enumerate(groups)}
    codes = np.array([position.get(u, -1) for u in uniques] + [-1], dtype=np.intp)[codes]
    extra = [cl]
    names = [f"a[{g}]" for g in groups] + ["cl"]
    if h is not None:
        extra.append(h * cl)
        names.append("h_cl")
    if cl2:
        extra.append(cl**2)
        names.append("cl2")
    # Column-major like a DataFrame's values: the SVD's last bits depend on the layout.
    x = np.zeros((len(cl), len(groups) + len(extra)), order="F")
    rows = np.flatnonzero(codes >= 0)
    x[rows, codes[rows]] = 1.0
    x[:, len(groups):] = np.column_stack(extra)
    return x, names
