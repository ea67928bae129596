"""The start-up-light statistics are the reference libraries' numbers, bit for bit.

trimlog computes t and F tail probabilities with scipy.special, the Huber
refit with its own norm and MAD, and the conservative CG's root with its own
Brent iteration, so that the analysis never imports statsmodels, scipy.stats
or scipy.optimize.  Here each is compared with the library it stands in for
(scipy.stats, statsmodels.robust, scipy.optimize.brentq: used only in tests).
"""

from __future__ import annotations

import numpy as np
import pytest
import scipy.optimize
import scipy.stats
from statsmodels.robust import norms, scale

from trimlog.statistics import fits
from trimlog.statistics.roots import brent_root


@pytest.mark.parametrize("df", [1, 2, 3, 5, 7.5, 10, 30, 100, 1e4])
def test_t_quantile_and_tail_equal_scipy_stats(df):
    assert fits.t_quantile(df) == float(scipy.stats.t.ppf(0.975, df))
    x = np.array([0.0, 0.3, 1.0, 2.0, 4.5, 40.0, np.inf])
    assert np.array_equal(fits.t_sf(x, df), scipy.stats.t.sf(x, df))


def test_t_quantile_against_a_printed_table():
    # Student t table, two-sided 95 % (e.g. Montgomery, Peck and Vining 2012, Table A.3),
    # printed to 3 decimals
    assert fits.t_quantile(10) == pytest.approx(2.228, abs=5e-4)
    assert fits.t_quantile(30) == pytest.approx(2.042, abs=5e-4)


@pytest.mark.parametrize(("dfn", "dfd"), [(1, 5), (2, 20), (7, 3), (30, 200)])
def test_f_tail_equals_scipy_stats(dfn, dfd):
    for f in (-1.0, 0.0, 0.2, 1.0, 3.0, 50.0, np.inf):
        assert fits.f_sf(f, dfn, dfd) == float(scipy.stats.f.sf(f, dfn, dfd))


def test_huber_norm_and_mad_equal_statsmodels():
    rng = np.random.default_rng(17)
    huber = norms.HuberT()
    for _ in range(200):
        z = rng.standard_t(3, size=int(rng.integers(1, 60))) * rng.uniform(0.1, 10)
        assert np.array_equal(fits.huber_rho(z), huber(z))
        assert np.array_equal(fits.huber_weights(z), huber.weights(z))
        assert fits.mad_about_zero(z) == float(scale.mad(z, center=0))


def test_robust_refit_equals_statsmodels_rlm():
    # synthetic trim data of known truth with a few gross errors; two groups' intercepts
    import statsmodels.api as sm

    rng = np.random.default_rng(3)
    for _ in range(20):
        n = 40
        group = rng.integers(0, 2, n)
        cl = rng.uniform(0.2, 1.0, n)
        y = np.where(group == 0, 1.0, -0.5) - 4.0 * cl + rng.normal(0, 0.1, n)
        y[rng.integers(0, n, 3)] += 3.0
        x = np.column_stack([group == 0, group == 1, cl]).astype(float)
        fit = fits.fit_matrix(y, x, ["a[0]", "a[1]", "cl"])
        ours = fits.robust_params(fit, 2).to_numpy()
        theirs = sm.RLM(y, x, M=sm.robust.norms.HuberT()).fit().params
        assert ours == pytest.approx(theirs, rel=1e-9, abs=1e-12)


def test_brent_root_equals_scipy_brentq():
    rng = np.random.default_rng(5)
    compared = 0
    for _ in range(300):
        a, b, c = rng.normal(size=3)
        root = rng.uniform(-2, 2)

        def f(x, a=a, b=b, c=c, root=root):
            d = x - root
            return d * (1.0 + a * a) + b * np.tanh(d) ** 3 + 0.01 * c * d**2

        lo, hi = root - rng.uniform(0.1, 3), root + rng.uniform(0.1, 3)
        if not f(lo) * f(hi) < 0:
            assert brent_root(f, lo, hi) is None
            continue
        compared += 1
        for xtol in (1e-6, 2e-12):
            assert brent_root(f, lo, hi, xtol=xtol) == scipy.optimize.brentq(f, lo, hi, xtol=xtol)
    assert compared > 250


def test_brent_root_says_none_without_a_sign_change_or_on_nan():
    assert brent_root(lambda x: x * x + 1.0, -1.0, 1.0) is None
    assert brent_root(lambda x: float("nan"), -1.0, 1.0) is None
    assert brent_root(lambda x: x, 0.0, 1.0) == 0.0


@pytest.mark.parametrize("n_groups", [2, 20])  # 20: the intercept-block path (>= 16 groups)
def test_outlier_test_equals_statsmodels_outlier_test(n_groups):
    # The analysis flags outliers without importing statsmodels (start-up time, issue 17);
    # statsmodels' OLSResults.outlier_test (Bonferroni) is the reference, here only.
    rng = np.random.default_rng(11 + n_groups)
    for _ in range(8 if n_groups < 16 else 3):  # statsmodels refits leaving each point out
        n = 4 * n_groups + 12
        # at least three points per group: a point alone in its group has leverage 1
        group = np.concatenate([np.tile(np.arange(n_groups), 3),
                                rng.integers(0, n_groups, n - 3 * n_groups)])
        cl = rng.uniform(0.2, 1.0, n)
        h = rng.uniform(0.15, 0.35, n)
        y = 0.1 * group - 4.0 * cl + 9.0 * h * cl + rng.standard_t(3, n) * 0.1
        x = np.column_stack([*(group == g for g in range(n_groups)), cl, h * cl]).astype(float)
        names = [f"a[{g}]" for g in range(n_groups)] + ["cl", "h_cl"]
        fit = fits.fit_matrix(y, x, names)
        ours = fits.studentized_outliers(fit, alpha=2.0)  # alpha 2: every point is listed
        table = np.asarray(fit.result.outlier_test(method="bonferroni"))
        assert [o.position for o in ours] == list(range(n))
        np.testing.assert_allclose([o.studentized_residual for o in ours], table[:, 0],
                                   rtol=1e-9, atol=1e-12)
        np.testing.assert_allclose([o.bonferroni_p for o in ours], table[:, 2],
                                   rtol=1e-9, atol=1e-12)
        flagged = [o.position for o in fits.studentized_outliers(fit)]
        assert flagged == [int(i) for i in np.flatnonzero(table[:, 2] < fits.OUTLIER_ALPHA)]


def test_within_fit_is_the_dense_fit_with_one_intercept_per_group():
    # Synthetic data of known truth, 40 groups: the slopes, covariance and degrees of freedom
    # of the dense least-squares fit with dummies (numpy lstsq), without building the dummies.
    from trimlog.statistics.fits import within_fit

    rng = np.random.default_rng(11)
    k, n = 40, 400
    codes = rng.permutation(np.repeat(np.arange(k), n // k))
    x = np.column_stack([rng.uniform(0.2, 1.2, n), rng.uniform(0.1, 0.4, n)])
    y = rng.normal(size=k)[codes] + x @ np.array([-3.0, 8.0]) + rng.normal(scale=0.2, size=n)
    dense = np.column_stack([np.eye(k)[codes], x])
    coef, res, *_ = np.linalg.lstsq(dense, y, rcond=None)
    df = n - k - 2
    cov = float(res[0]) / df * np.linalg.inv(dense.T @ dense)[k:, k:]
    fit = within_fit(y, x, codes, k)
    assert fit.df_resid == df
    assert np.allclose(fit.coef, coef[k:], rtol=1e-9)
    assert np.allclose(fit.cov, cov, rtol=1e-7)
    assert fit.rss == pytest.approx(float(res[0]), rel=1e-9)


def test_within_fit_refuses_a_column_constant_within_every_group():
    from trimlog.statistics.fits import within_fit

    codes = np.repeat(np.arange(5), 4)
    x = np.column_stack([np.tile([0.3, 0.5, 0.7, 0.9], 5), np.repeat(np.arange(5.0), 4) + 1.0])
    assert within_fit(np.arange(20.0), x, codes, 5) is None  # the second is the groups'
