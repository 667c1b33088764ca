"""Tests of reportgen.stats.longrun: least squares, Newey-West covariance and dynamic OLS."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from arch.unitroot.cointegration import DynamicOLS
from scipy import stats as scipy_stats
from statsmodels.regression.linear_model import OLS

from reportgen.errors import InsufficientDataError
from reportgen.stats.longrun import (
    dynamic_ols,
    dynamic_ols_max_leads_lags,
    dynamic_ols_specification,
    lead_lag_name,
    least_squares,
    newey_west_covariance,
    newey_west_lags,
)
from reportgen.stats.regression import assess_regression
from reportgen.stats.types import StatsSettings


def _frame(columns: dict[str, np.ndarray]) -> pd.DataFrame:
    length = len(next(iter(columns.values())))
    return pd.DataFrame(columns, index=pd.period_range("2000-01", periods=length, freq="M"))


def _endogenous_pair(seed: int, nobs: int = 200, slope: float = 2.0) -> pd.DataFrame:
    """y = 1 + slope x + u, x a random walk whose innovations e1 enter u now and one period back.

    u_t = e2_t + 0.6 e1_t + 0.4 e1_(t-1): the static regression is biased by the correlation of u with
    the regressor's innovations; the current difference and one lag of it remove that correlation,
    so dynamic OLS is correctly specified (Stock and Watson 1993, section 2).
    """
    rng = np.random.default_rng(seed)
    shocks = rng.standard_normal((nobs + 1, 2))
    x = np.cumsum(shocks[1:, 0])
    u = shocks[1:, 1] + 0.6 * shocks[1:, 0] + 0.4 * shocks[:-1, 0]
    return _frame({"y": 1.0 + slope * x + u, "x": x})


def _three_variables(seed: int, nobs: int = 240) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    shocks = rng.standard_normal((nobs, 3))
    x = np.cumsum(shocks[:, 0])
    w = np.cumsum(shocks[:, 1])
    u = np.zeros(nobs)
    for t in range(1, nobs):
        u[t] = 0.3 * u[t - 1] + shocks[t, 2] + 0.5 * shocks[t, 0]
    return _frame({"y": 0.5 + 1.5 * x - 0.7 * w + u, "x": x, "w": w})


# --- building blocks ----------------------------------------------------------------------------


def test_least_squares_residuals_equal_statsmodels() -> None:
    rng = np.random.default_rng(1)
    design = np.column_stack([np.ones(150), rng.standard_normal(150) * 1e4, np.cumsum(rng.standard_normal(150))])
    endog = design @ np.array([1.0, 2e-4, -3.0]) + rng.standard_normal(150)
    solution = least_squares(design, endog)
    library = OLS(endog, design).fit()
    assert solution.coefficients == pytest.approx(np.asarray(library.params), rel=1e-10)
    assert solution.residuals == pytest.approx(np.asarray(library.resid), abs=1e-10)
    assert solution.residuals == pytest.approx(endog - design @ solution.coefficients, abs=0)
    assert solution.inverse_moment == pytest.approx(np.linalg.inv(design.T @ design), rel=1e-8)


def test_newey_west_covariance_equals_statsmodels_hac_with_correction() -> None:
    # statsmodels' cov_type="HAC" with use_correction=True is Newey-West with Bartlett weights
    # 1 - j/(L+1) times T/(T-k) (statsmodels sandwich_covariance.cov_hac; common practice).
    rng = np.random.default_rng(2)
    nobs = 180
    x = np.cumsum(rng.standard_normal(nobs))
    design = np.column_stack([np.ones(nobs), x, rng.standard_normal(nobs)])
    errors = np.zeros(nobs)
    for t in range(1, nobs):
        errors[t] = 0.5 * errors[t - 1] + rng.standard_normal()
    endog = design @ np.array([1.0, 0.5, -1.0]) + errors
    solution = least_squares(design, endog)
    for lags in (0, 3, newey_west_lags(nobs)):
        ours = newey_west_covariance(design, solution.residuals, lags)
        library = OLS(endog, design).fit(cov_type="HAC", cov_kwds={"maxlags": lags, "use_correction": True})
        assert ours == pytest.approx(np.asarray(library.cov_params()), rel=1e-9)
    uncorrected = newey_west_covariance(design, solution.residuals, 4, small_sample_correction=False)
    assert uncorrected * nobs / (nobs - 3) == pytest.approx(newey_west_covariance(design, solution.residuals, 4))


def test_newey_west_covariance_by_hand() -> None:
    # The Newey and West (1987) formula written out with explicit sums (from memory of the paper).
    rng = np.random.default_rng(3)
    nobs, lags = 40, 2
    design = np.column_stack([np.ones(nobs), rng.standard_normal(nobs)])
    residuals = rng.standard_normal(nobs)
    meat = np.zeros((2, 2))
    for t in range(nobs):
        meat += residuals[t] ** 2 * np.outer(design[t], design[t])
    for j in range(1, lags + 1):
        weight = 1.0 - j / (lags + 1.0)
        for t in range(j, nobs):
            cross = residuals[t] * residuals[t - j] * np.outer(design[t], design[t - j])
            meat += weight * (cross + cross.T)
    bread = np.linalg.inv(design.T @ design)
    expected = bread @ meat @ bread * nobs / (nobs - 2)
    assert newey_west_covariance(design, residuals, lags) == pytest.approx(expected, rel=1e-12)


def test_bandwidth_rules() -> None:
    # int(4 (T/100)^(2/9)) (Newey and West 1994; REFERENCES §7), by hand: T=50 3.43, T=250 4.90.
    assert [newey_west_lags(t) for t in (50, 100, 250, 1000)] == [3, 4, 4, 6]
    # int(T^(1/3)), by hand: 100^(1/3) = 4.64, 125^(1/3) = 5 exactly, 200^(1/3) = 5.85, 1000^(1/3) = 10.
    assert [dynamic_ols_max_leads_lags(t) for t in (100, 125, 200, 1000)] == [4, 5, 5, 10]


def test_specification_terms_and_sample() -> None:
    data = _endogenous_pair(4, nobs=100)
    specification = dynamic_ols_specification(data, "y", ["x"], leads_lags=2)
    assert specification.terms == ("const", "x", "d.x(-2)", "d.x(-1)", "d.x", "d.x(+1)", "d.x(+2)")
    assert specification.long_run_terms == ("const", "x")
    assert specification.criterion == "fixed"
    assert specification.rule == "fixed at 2 leads and lags"
    assert specification.equation == "y ~ const + x + d.x(-2) + d.x(-1) + d.x + d.x(+1) + d.x(+2)"
    frame = specification.frame
    assert len(frame) == 100 - 1 - 2 * 2
    assert str(frame.index[0]) == "2000-04"  # one observation lost to differencing, two to the lags
    assert str(frame.index[-1]) == str(data.index[-3])  # two to the leads
    x = data["x"].to_numpy()
    assert frame["d.x(+2)"].iloc[0] == pytest.approx(x[5] - x[4])
    assert frame["d.x(-2)"].iloc[0] == pytest.approx(x[1] - x[0])
    assert lead_lag_name("x", -3) == "d.x(-3)"
    assert lead_lag_name("x", 0) == "d.x"


def test_too_short_for_dynamic_ols() -> None:
    # By hand: 3 parameters without leads and lags, plus 10, plus 1 lost to differencing: 14; with
    # 3 leads and lags 9 parameters, plus 10, plus 7 lost: 26.
    specification = dynamic_ols_specification(_endogenous_pair(5, nobs=14), "y", ["x"])
    assert specification.leads_lags == 0
    assert specification.max_leads_lags == 0
    assert "AIC over 0 to 0 leads and lags (int(T^(1/3)) at T=14, lowered from 2" in specification.rule
    with pytest.raises(InsufficientDataError) as caught:
        dynamic_ols_specification(_endogenous_pair(5, nobs=13), "y", ["x"])
    assert str(caught.value) == (
        "dynamic OLS of y on x needs at least 14 observations even without leads and lags (3 parameters "
        "plus 10, and 1 lost to differencing); the sample has 13"
    )
    with pytest.raises(InsufficientDataError, match="with 3 leads and lags needs at least 26 observations"):
        dynamic_ols_specification(_endogenous_pair(5, nobs=25), "y", ["x"], leads_lags=3)


# --- agreement with arch ------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("data", "regressors"),
    [(_endogenous_pair(6), ["x"]), (_three_variables(7), ["x", "w"])],
    ids=["one regressor", "two regressors"],
)
def test_dynamic_ols_matches_arch(data: pd.DataFrame, regressors: list[str]) -> None:
    # arch 8 DynamicOLS(trend="c", lags=p, leads=p) fits the same regression (the current
    # difference always included); fit(cov_type="kernel", kernel="bartlett", bandwidth=L,
    # df_adjust=True) is the sandwich T/(T-k) (X'X)^-1 S (X'X)^-1 with S the Bartlett-weighted
    # long-run covariance of x_t e_t, weights 1 - j/(L+1), autocovariances not centred
    # (arch/unitroot/cointegration.py DynamicOLS._cov and arch/covariance/kernel.py Bartlett,
    # read in the installed package): reportgen's convention exactly.
    estimate = dynamic_ols(data, "y", regressors)
    p = estimate.specification.leads_lags
    model = DynamicOLS(data["y"], data[regressors], trend="c", lags=p, leads=p)
    result = model.fit(cov_type="kernel", kernel="bartlett", bandwidth=estimate.hac_lags, df_adjust=True)
    for term in ("const", *regressors):
        assert estimate.estimates[term] == pytest.approx(float(result.params[term]), rel=1e-8, abs=1e-10)
        assert estimate.std_errors[term] == pytest.approx(float(result.std_errors[term]), rel=1e-6)
    assert estimate.residuals == pytest.approx(np.asarray(result.resid), abs=1e-10)
    assert estimate.nobs == len(result.resid)
    # The lead/lag choice: AIC over common p = 0..int(T^(1/3)) on the common sample, smallest p on
    # a tie, as arch's common=True search with method="aic".
    largest = estimate.specification.max_leads_lags
    chosen = DynamicOLS(
        data["y"], data[regressors], trend="c", common=True, max_lag=largest, max_lead=largest, method="aic"
    ).fit()
    assert (chosen.lags, chosen.leads) == (p, p)


def test_bic_choice_matches_arch() -> None:
    data = _three_variables(8)
    specification = dynamic_ols_specification(data, "y", ["x", "w"], criterion="bic")
    largest = specification.max_leads_lags
    chosen = DynamicOLS(
        data["y"], data[["x", "w"]], trend="c", common=True, max_lag=largest, max_lead=largest, method="bic"
    ).fit()
    assert chosen.lags == specification.leads_lags
    assert sorted(specification.criterion_values) == list(range(largest + 1))


def test_long_run_fit_of_an_assessment_is_the_dynamic_ols_estimate() -> None:
    data = _endogenous_pair(9)
    assessment = assess_regression("r1", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert assessment.verdict == "cointegrated"
    fit = assessment.long_run
    assert fit is not None
    estimate = dynamic_ols(data, "y", ["x"])
    assert fit.equation == estimate.specification.equation
    assert fit.nobs == estimate.nobs
    assert fit.hac_bandwidth == estimate.hac_lags
    for coefficient in fit.coefficients:
        assert coefficient.estimate == pytest.approx(estimate.estimates[coefficient.term], rel=1e-12)
        assert coefficient.std_error == pytest.approx(estimate.std_errors[coefficient.term], rel=1e-12)
        assert coefficient.pvalue == pytest.approx(estimate.pvalues[coefficient.term], rel=1e-9, abs=1e-300)
    assert np.asarray(fit.residuals) == pytest.approx(np.asarray(estimate.residuals), abs=1e-12)


# --- statistical behaviour ----------------------------------------------------------------------


def test_dynamic_ols_slope_is_close_and_its_interval_covers_about_95_percent() -> None:
    # Common practice (Stock and Watson 1993): with the endogeneity absorbed by the leads and lags
    # the t-statistic of the long-run slope is asymptotically normal, so the 95% interval covers the
    # true slope in about 95% of 200 seeded samples (binomial sd 1.5 points; interval [0.88, 0.99]).
    # The static regression's slope is biased by the endogeneity; dynamic OLS must be closer on average.
    # The HAC sandwich covers a little below 95% at this T (0.905 with these seeds, computed here).
    nobs, replications, slope = 250, 200, 2.0
    covered = 0
    dols_errors, static_errors = [], []
    for seed in range(replications):
        data = _endogenous_pair(1000 + seed, nobs=nobs, slope=slope)
        estimate = dynamic_ols(data, "y", ["x"])
        critical = scipy_stats.t.ppf(0.975, estimate.degrees_of_freedom)
        error = estimate.estimates["x"] - slope
        covered += abs(error) <= critical * estimate.std_errors["x"]
        dols_errors.append(abs(error))
        static = least_squares(np.column_stack([np.ones(nobs), data["x"]]), data["y"].to_numpy())
        static_errors.append(abs(static.coefficients[1] - slope))
    assert 0.88 <= covered / replications <= 0.99
    assert np.median(dols_errors) < 0.02
    assert np.mean(dols_errors) < np.mean(static_errors)
