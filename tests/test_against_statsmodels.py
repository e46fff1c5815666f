"""Engine results against statsmodels and scipy as reference libraries (invented data)."""

import warnings

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
import statsmodels.formula.api as smf
from scipy import stats
from statsmodels.sandbox.stats.runs import runstest_1samp
from statsmodels.stats.anova import anova_lm
from statsmodels.stats.diagnostic import het_breuschpagan
from statsmodels.stats.outliers_influence import OLSInfluence
from statsmodels.stats.stattools import durbin_watson

from degreewise import engine
from degreewise.engine.diagnostics import breusch_pagan, runs_test
from degreewise.engine.diagnostics import durbin_watson as dw_engine

RTOL = 1e-9


def _formula(order):
    return "y ~ " + " + ".join(["x"] + [f"I(x**{k})" for k in range(2, order + 1)])


def _design(x, order):
    return np.vander(x, order + 1, increasing=True)


def test_sequential_table_matches_anova_lm_type1(replicated):
    x, y = replicated
    cal = engine.Calibration(x, y, max_order=4)
    table = cal.sequential_table()
    ref = anova_lm(smf.ols(_formula(4), pd.DataFrame({"x": x, "y": y})).fit(), typ=1)
    for row, (_, r) in zip(table.terms, ref.iloc[:-1].iterrows()):
        assert row.ss == pytest.approx(r["sum_sq"], rel=RTOL)
        assert row.test.statistic == pytest.approx(r["F"], rel=RTOL)
        assert row.test.p_value == pytest.approx(r["PR(>F)"], rel=1e-7)
        assert row.test.df_num == r["df"] == 1
    assert table.ss_resid == pytest.approx(ref["sum_sq"].iloc[-1], rel=RTOL)
    assert table.df_resid == ref["df"].iloc[-1]
    assert sum(r.ss for r in table.terms) + table.ss_resid == pytest.approx(table.ss_total, rel=1e-12)


def test_forward_steps_match_nested_model_comparison(replicated):
    x, y = replicated
    cal = engine.Calibration(x, y, max_order=4)
    data = pd.DataFrame({"x": x, "y": y})
    models = [smf.ols(_formula(k), data).fit() for k in range(1, 5)]
    for k in range(2, 5):
        ref = anova_lm(models[k - 2], models[k - 1])
        step = cal.step_test(k)
        assert step.statistic == pytest.approx(ref["F"].iloc[1], rel=RTOL)
        assert step.p_value == pytest.approx(ref["Pr(>F)"].iloc[1], rel=1e-7)


@pytest.mark.parametrize("order", [1, 2, 3])
def test_lack_of_fit_matches_cell_means_comparison(replicated, order):
    x, y = replicated
    cal = engine.Calibration(x, y, max_order=4)
    data = pd.DataFrame({"x": x, "y": y, "level": pd.Categorical(x)})
    ref = anova_lm(smf.ols(_formula(order), data).fit(), smf.ols("y ~ C(level)", data).fit())
    lof = cal.stats(order).lack_of_fit
    assert lof.test.statistic == pytest.approx(ref["F"].iloc[1], rel=RTOL)
    assert lof.test.p_value == pytest.approx(ref["Pr(>F)"].iloc[1], rel=1e-7)
    assert lof.ss_pure_error == pytest.approx(ref["ssr"].iloc[1], rel=RTOL)
    assert lof.df_pure_error == ref["df_resid"].iloc[1]


def _reweighted(x, y, power, max_order=2):
    """1/y^power weights from the fitted curve: statsmodels WLS of order 2, reweighted by its
    fitted values from an unweighted start until the weights settle (Carroll & Ruppert 1988)."""
    w = np.ones_like(x)
    for _ in range(200):
        new = sm.WLS(y, _design(x, max_order), weights=w).fit().fittedvalues ** -float(power)
        if np.max(np.abs(new / w - 1)) < 1e-13:
            break
        w = new
    return new


@pytest.mark.parametrize("weights", ["1/x", "1/x^2", "1/y", "1/y^2", "values"])
def test_weighted_fit_matches_wls(replicated, weights):
    x, y = replicated
    w = {"1/x": 1 / x, "1/x^2": 1 / x**2, "1/y": _reweighted(x, y, 1), "1/y^2": _reweighted(x, y, 2),
         "values": np.linspace(0.5, 2.0, x.size)}[weights]
    arg = w if weights == "values" else weights
    cal = engine.Calibration(x, y, max_order=3, weights=arg)
    fit = cal.fit(2)
    ref = sm.WLS(y, _design(x, 2), weights=w).fit()
    np.testing.assert_allclose(fit.coefficients, ref.params, rtol=RTOL)
    np.testing.assert_allclose(fit.std_errors, ref.bse, rtol=1e-8)
    np.testing.assert_allclose(fit.p_values, ref.pvalues, rtol=1e-6)
    assert fit.residual_sd == pytest.approx(np.sqrt(ref.scale), rel=RTOL)
    assert fit.r_squared == pytest.approx(ref.rsquared, rel=RTOL)
    assert fit.df_resid == ref.df_resid
    assert cal.stats(2).overall.statistic == pytest.approx(ref.fvalue, rel=1e-8)


def test_unweighted_statistics_match_ols(replicated):
    x, y = replicated
    cal = engine.Calibration(x, y)
    ref = sm.OLS(y, _design(x, 2)).fit()
    st = cal.stats(2)
    assert st.adj_r_squared == pytest.approx(ref.rsquared_adj, rel=RTOL)
    assert st.overall.p_value == pytest.approx(ref.f_pvalue, rel=1e-6)
    # AICc and BIC with k = p + 1 parameters (coefficients and sigma): statsmodels eval_measures
    from statsmodels.tools.eval_measures import aicc, bic

    assert st.aicc == pytest.approx(aicc(ref.llf, x.size, 4), rel=RTOL)
    assert st.bic == pytest.approx(bic(ref.llf, x.size, 4), rel=RTOL)
    press = np.sum((ref.resid / (1 - OLSInfluence(ref).hat_matrix_diag)) ** 2)
    assert st.press == pytest.approx(press, rel=1e-9)
    fit = cal.fit(2)
    lo, hi = zip(*fit.interval(0.95))
    np.testing.assert_allclose(np.column_stack([lo, hi]), ref.conf_int(0.05), rtol=1e-9)


@pytest.mark.parametrize("weights", [None, "1/x^2"])
def test_prediction_intervals_match_get_prediction(replicated, weights):
    x, y = replicated
    cal = engine.Calibration(x, y, weights=weights)
    new_x = np.array([1.0, 7.5, 22.0, 49.0])
    out = engine.predict(cal, new_x, 2, level=0.9)
    w = None if weights is None else 1 / x**2
    model = sm.OLS(y, _design(x, 2)) if w is None else sm.WLS(y, _design(x, 2), weights=w)
    res = model.fit()
    kw = {} if w is None else {"weights": 1 / new_x**2}
    frame = res.get_prediction(_design(new_x, 2), **kw).summary_frame(alpha=0.1)
    got = np.array([[p.fitted, p.mean_lower, p.mean_upper, p.pred_lower, p.pred_upper] for p in out])
    ref = frame[["mean", "mean_ci_lower", "mean_ci_upper", "obs_ci_lower", "obs_ci_upper"]].to_numpy()
    np.testing.assert_allclose(got, ref, rtol=1e-10)


def test_influence_matches_olsinfluence(replicated):
    x, y = replicated
    y = y.copy()
    y[5] += 8.0  # one wild standard
    cal = engine.Calibration(x, y)
    d = engine.point_diagnostics(cal, 2)
    infl = OLSInfluence(sm.OLS(y, _design(x, 2)).fit())
    np.testing.assert_allclose(d.studentized, infl.resid_studentized_internal, rtol=1e-9)
    np.testing.assert_allclose(d.externally_studentized, infl.resid_studentized_external, rtol=1e-9)
    np.testing.assert_allclose(d.leverage, infl.hat_matrix_diag, rtol=1e-9)
    np.testing.assert_allclose(d.cooks_distance, infl.cooks_distance[0], rtol=1e-9)
    assert "outlier" in d.notes[5]


def test_curve_statistics_match_reference_functions(replicated):
    x, y = replicated
    rng = np.random.default_rng(3)
    order = rng.permutation(x.size)
    x, y = x[order], y[order]
    cal = engine.Calibration(x, y)
    res = sm.OLS(y, _design(x, 2)).fit()
    e = cal.weighted_residuals(2)
    np.testing.assert_allclose(e, res.resid, rtol=1e-9, atol=1e-12)
    by_x = np.argsort(x, kind="stable")
    assert dw_engine(e[by_x]) == pytest.approx(durbin_watson(res.resid[by_x]), rel=1e-10)
    z, _ = runs_test(e[by_x])
    z_ref, _ = runstest_1samp(res.resid[by_x], cutoff=0, correction=False)
    assert z == pytest.approx(z_ref, rel=1e-10)
    lm, lm_p = breusch_pagan(e, cal.scaled_x(x), 2)
    ref_lm, ref_p, _, _ = het_breuschpagan(res.resid, _design(x, 2))
    assert (lm, lm_p) == pytest.approx((ref_lm, ref_p), rel=1e-8)
    checks = {c.name: c for c in engine.curve_checks(cal, 2)}
    w, wp = stats.shapiro(res.resid)
    assert checks["Shapiro-Wilk"].statistic == pytest.approx(w, rel=1e-6)
    assert checks["Shapiro-Wilk"].p_value == pytest.approx(wp, rel=1e-5)
    assert checks["Breusch-Pagan"].p_value == pytest.approx(ref_p, rel=1e-8)


def test_shapiro_wilk_of_an_exact_fit_is_scale_free():
    # standards exactly on a quadratic: the refined residuals are rounding traces near 1e-32, a range
    # the algorithm takes as zero (below 1e-19, with a warning); W does not depend on scale, so it must
    # equal scipy.stats.shapiro of the same residuals scaled to a largest magnitude of 1, without warning
    x = np.repeat(np.arange(1.0, 9.0), 2)
    cal = engine.Calibration(x, 1 + 2 * x + 0.5 * x**2, max_order=3)
    e = cal.weighted_residuals(2)
    assert 0 < np.ptp(e) < 1e-19
    w, wp = stats.shapiro(e / np.abs(e).max())
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        checks = {c.name: c for c in engine.curve_checks(cal, 2)}
    assert checks["Shapiro-Wilk"].statistic == pytest.approx(w, rel=1e-12)
    assert checks["Shapiro-Wilk"].p_value == pytest.approx(wp, rel=1e-10)


@pytest.mark.parametrize("max_order", [None, 2])  # 2: the smallest calibration Mandel's test applies to
def test_mandel_is_the_quadratic_step_test(replicated, max_order):
    x, y = replicated
    cal = engine.Calibration(x, y, max_order=max_order)
    data = pd.DataFrame({"x": x, "y": y})
    ref = anova_lm(smf.ols("y ~ x", data).fit(), smf.ols("y ~ x + I(x**2)", data).fit())
    m = engine.mandel_test(cal)
    assert m.statistic == pytest.approx(ref["F"].iloc[1], rel=RTOL)
    assert (m.df_num, m.df_den) == (1, x.size - 3)
