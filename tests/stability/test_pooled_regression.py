"""Regression values of the pooled fit: its fast (block) paths must change no number.

The values below were written from the dense-design code (one dummy column per intercept,
statsmodels-style pseudo-inverse) before the fast path replaced it: regression values, not
published ones.  The programme is synthetic, of known truth (hn 0.40 stick-fixed, 0.36
stick-free), seven flights of eight points with per-flight CG and force-zero errors and two
stabilizer settings.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from trimlog.stability.neutral_points import pooled_fit
from trimlog.statistics import fits

HN, HN_FREE, CMDE_PER_DEG = 0.40, 0.36, -1.3 * np.pi / 180.0  # synthetic truth
Q_PSF_PER_KT2 = 0.5 * 0.0023769 * 1.687810**2  # q = rho0 V^2 / 2, V in kt (sea-level density)


def _programme() -> pd.DataFrame:
    rng = np.random.default_rng(20261202)
    cgs = np.array([15.0, 18.0, 21.0, 24.0, 27.0, 29.0, 31.0]) / 100.0
    eas = np.linspace(65.0, 125.0, 8)
    k, m = len(cgs), len(eas)
    q = np.tile(Q_PSF_PER_KT2 * eas**2, k)
    cl = 1500.0 / (q * 118.0)
    h = np.repeat(cgs, m)
    setting = np.repeat(np.where(np.arange(k) % 2 == 0, "s0", "s1"), m)
    offset = np.where(setting == "s0", 0.0, 0.8)
    elev = -(0.06 + (h - HN) * cl) / CMDE_PER_DEG + offset + 0.2 * rng.standard_normal(k * m)
    cl_trim = 1500.0 / (Q_PSF_PER_KT2 * 95.0**2 * 118.0)
    fs = (q * 15.0 * (HN_FREE - h) * (cl - cl_trim) + 0.4 * rng.standard_normal(k * m)
          + np.repeat(0.5 * rng.standard_normal(k), m))
    logged_h = h + np.repeat(0.005 * rng.standard_normal(k), m)
    return pd.DataFrame({"flight": np.repeat([f"F{i}" for i in range(k)], m),
                         "point": np.tile(np.arange(m), k), "included": True, "cl": cl,
                         "elevator_deg": elev, "h": logged_h, "stab_setting": setting,
                         "fs_over_q_ft2": fs / q, "q_psf": q, "cg_uncertainty_pct_mac": 0.5})


def _summary(fit) -> dict[str, float]:
    level, head, ind = fit.flight_level, fit.neutral_point, fit.independent_neutral_point
    out = {"np": head.pct_mac, "np_lo": head.ci95_pct_mac[0], "np_hi": head.ci95_pct_mac[1],
           "ind": ind.pct_mac, "ind_lo": ind.ci95_pct_mac[0], "ind_hi": ind.ci95_pct_mac[1],
           "b": level.b, "c": level.c, "var_b": level.cov_bc[0, 0],
           "var_c": level.cov_bc[1, 1], "cov_bc": level.cov_bc[0, 1], "df": level.df,
           "sigma2": level.sigma2, "tau2_excess": level.tau2_excess,
           "robust": fit.robust.pct_mac, "curv_p": fit.curvature.p_value,
           "resid_std": fit.linear.residual_std}
    if fit.intercept_check is not None:
        out["icpt_p"] = fit.intercept_check.p_value
    return {k: float(v) for k, v in out.items()}


# regression values: written from the dense-design code before the fast path (not published)
REGRESSION = {
    'stick_fixed': {
        'np': 39.445919548504705,
        'np_lo': 38.02165920244549,
        'np_hi': 41.10454800590089,
        'ind': 39.45424896508876,
        'ind_lo': 38.54577250659562,
        'ind_hi': 40.42927345408616,
        'b': -18.251939966253875,
        'c': 46.27079346904402,
        'var_b': 0.23934931980036392,
        'var_c': 3.846552492288058,
        'cov_bc': -0.9057811978597574,
        'df': 42.0,
        'sigma2': 0.04539604433435597,
        'tau2_excess': 0.0,
        'robust': 39.21747505408151,
        'curv_p': 0.32149316438188663,
        'resid_std': 0.21585814025390632,
        'icpt_p': 0.2267437642071307,
    },
    'stick_free': {
        'np': 35.95853332638422,
        'np_lo': 34.34036372502505,
        'np_hi': 38.03598264398199,
        'ind': 36.00044963943128,
        'ind_lo': 35.40700100993245,
        'ind_hi': 36.64612597615458,
        'b': 5.427348304656754,
        'c': -15.093352822247871,
        'var_b': 0.05384187936902897,
        'var_c': 0.9248709585507087,
        'cov_bc': -0.21778741519353276,
        'df': 16.43167498281606,
        'sigma2': 0.00013742446918441916,
        'tau2_excess': 0.009872032635794916,
        'robust': 35.87984368696303,
        'curv_p': 0.544009822837883,
        'resid_std': 0.028396357496060304,
    },
}


@pytest.mark.parametrize("blocks", [False, True], ids=["default", "blocks-forced"])
@pytest.mark.parametrize("kind", ["stick_fixed", "stick_free"])
def test_pooled_fit_equals_the_dense_design_values(kind, blocks, monkeypatch):
    # forced: the intercepts are removed first even for seven flights (two settings)
    if blocks:
        monkeypatch.setattr(fits, "MIN_INTERCEPTS_FOR_BLOCKS", 1)
    fit = pooled_fit(_programme(), kind, stick_force_zero_uncertainty_lbf=0.5)
    got, want = _summary(fit), REGRESSION[kind]
    assert got.keys() == want.keys()
    for key, value in want.items():
        assert got[key] == pytest.approx(value, rel=1e-9, abs=1e-12), key
    assert fit.outliers == ()


def test_block_least_squares_equals_the_dense_one(monkeypatch):
    # fit_matrix with many intercepts (one per flight, weighted) against its dense path
    rng = np.random.default_rng(7)
    flight = np.repeat(np.arange(20), 6)
    cl = rng.uniform(0.2, 1.0, len(flight))
    h = np.repeat(rng.uniform(0.15, 0.30, 20), 6)
    y = rng.standard_normal(20)[flight] + 3.0 * cl - 8.0 * h * cl + 0.1 * rng.standard_normal(
        len(flight))
    x, names = fits.trim_matrix(flight.astype(str), [str(i) for i in range(20)], cl, h)
    w = rng.uniform(0.5, 2.0, len(flight))
    fast = fits.fit_matrix(y, x, names, w)
    monkeypatch.setattr(fits, "MIN_INTERCEPTS_FOR_BLOCKS", 10**9)
    dense = fits.fit_matrix(y, x, names, w)
    assert fast.df_resid == dense.df_resid
    np.testing.assert_allclose(fast.params, dense.params, rtol=1e-9, atol=1e-12)
    np.testing.assert_allclose(fast.cov, dense.cov, rtol=1e-9, atol=1e-15)
    assert fast.residual_std == pytest.approx(dense.residual_std, rel=1e-12)
