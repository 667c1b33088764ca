"""Residual diagnostics of every fitted equation: agreement with statsmodels and power on seeded designs."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats as scipy_stats
from statsmodels.regression.linear_model import OLS
from statsmodels.stats.diagnostic import (
    acorr_breusch_godfrey,
    acorr_ljungbox,
    het_breuschpagan,
    linear_reset,
)

from reportgen.stats.regression import assess_regression, diagnostic_lags
from reportgen.stats.types import DiagnosticTest, Fit, StatsSettings


def _frame(columns: dict[str, np.ndarray]) -> pd.DataFrame:
    length = len(next(iter(columns.values())))
    return pd.DataFrame(columns, index=pd.period_range("2000Q1", periods=length, freq="Q"))


def _levels_fit(data: pd.DataFrame, regressors: list[str]) -> Fit:
    orders = dict.fromkeys(["y", *regressors], 0)
    formula = "y ~ " + " + ".join(regressors)
    assessment = assess_regression("r1", formula, "y", regressors, data, orders, StatsSettings())
    assert assessment.levels is not None
    return assessment.levels


def _diagnostic(fit: Fit, prefix: str) -> DiagnosticTest:
    return next(test for test in fit.diagnostics if test.name.startswith(prefix))


def _design(data: pd.DataFrame, regressors: list[str]) -> np.ndarray:
    return np.column_stack([np.ones(len(data)), data.loc[:, regressors].to_numpy()])


def _two_regressor_data(seed: int, nobs: int = 160) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    x = rng.standard_normal(nobs)
    w = np.cumsum(rng.standard_normal(nobs)) * 1e3  # a large-valued regressor tests the scaling
    errors = np.zeros(nobs)
    for t in range(1, nobs):
        errors[t] = 0.3 * errors[t - 1] + rng.standard_normal()
    return _frame({"y": 2.0 + x + 1e-3 * w + errors, "x": x, "w": w})


# --- agreement with statsmodels on the same design ---------------------------------------------


def test_breusch_pagan_equals_statsmodels() -> None:
    # statsmodels het_breuschpagan(resid, exog, robust=True): Koenker's studentised n R² of the
    # squared residuals on the regressors, chi-squared with k - 1 degrees of freedom.
    data = _two_regressor_data(1)
    fit = _levels_fit(data, ["x", "w"])
    design = _design(data, ["x", "w"])
    library = OLS(data["y"].to_numpy(), design).fit()
    statistic, pvalue, _, _ = het_breuschpagan(library.resid, design, robust=True)
    test = _diagnostic(fit, "Breusch-Pagan")
    assert test.name == "Breusch-Pagan (Koenker LM, on the 2 regressors)"
    assert test.null_hypothesis == "the error variance does not depend on the regressors"
    assert test.statistic == pytest.approx(statistic, rel=1e-8)
    assert test.pvalue == pytest.approx(pvalue, rel=1e-8)


def test_reset_equals_statsmodels() -> None:
    # statsmodels linear_reset(power=3, use_f=True): F test of fitted^2 and fitted^3 added to the
    # design. reportgen uses the standardised fitted values, which span the same columns.
    data = _two_regressor_data(2)
    fit = _levels_fit(data, ["x", "w"])
    design = _design(data, ["x", "w"])
    library = linear_reset(OLS(data["y"].to_numpy(), design).fit(), power=3, use_f=True)
    test = _diagnostic(fit, "Ramsey RESET")
    nobs = len(data)
    assert test.name == f"Ramsey RESET (F(2, {nobs - 5}), squares and cubes of the fitted values)"
    assert test.statistic == pytest.approx(float(library.fvalue), rel=1e-7)
    assert test.pvalue == pytest.approx(float(library.pvalue), rel=1e-7)


def test_serial_correlation_tests_equal_statsmodels() -> None:
    data = _two_regressor_data(3)
    fit = _levels_fit(data, ["x", "w"])
    library = OLS(data["y"].to_numpy(), _design(data, ["x", "w"])).fit()
    lags = diagnostic_lags(len(data))
    breusch_godfrey = acorr_breusch_godfrey(library, nlags=lags, result_object=True)
    test = _diagnostic(fit, "Breusch-Godfrey")
    assert test.name == f"Breusch-Godfrey (LM, {lags} lags)"
    assert test.statistic == pytest.approx(float(breusch_godfrey.lm), rel=1e-8)
    assert test.pvalue == pytest.approx(float(breusch_godfrey.lmpval), rel=1e-8)
    ljung_box = acorr_ljungbox(library.resid, lags=[lags], return_df=True)
    assert _diagnostic(fit, "Ljung-Box").statistic == pytest.approx(float(ljung_box["lb_stat"].iloc[0]), rel=1e-8)
    assert [d.name.split(" (")[0] for d in fit.diagnostics] == [
        "Ljung-Box", "Breusch-Godfrey", "Jarque-Bera", "Breusch-Pagan", "Ramsey RESET",
    ]


# --- power on seeded designs (common practice) --------------------------------------------------


def test_breusch_pagan_rejects_under_heteroskedasticity() -> None:
    # Error standard deviation growing linearly with a positive x: the textbook case for a test
    # that regresses the squared residuals on the regressors (common practice).
    rng = np.random.default_rng(4)
    nobs = 200
    x = rng.uniform(0.0, 3.0, nobs)
    data = _frame({"y": 1.0 + x + (0.2 + x) * rng.standard_normal(nobs), "x": x})
    test = _diagnostic(_levels_fit(data, ["x"]), "Breusch-Pagan")
    assert test.name == "Breusch-Pagan (Koenker LM, on the 1 regressor)"
    assert test.rejects
    assert test.pvalue < 0.01
    # The same design with constant error variance does not reject (seeded).
    calm = _frame({"y": 1.0 + x + rng.standard_normal(nobs), "x": x})
    assert not _diagnostic(_levels_fit(calm, ["x"]), "Breusch-Pagan").rejects


def test_reset_rejects_a_quadratic_relation_fitted_linearly() -> None:
    # y = 1 + x + 0.5 x² + e fitted as y ~ const + x omits a power of x (common practice).
    rng = np.random.default_rng(5)
    nobs = 200
    x = rng.standard_normal(nobs) + 1.0
    data = _frame({"y": 1.0 + x + 0.5 * x**2 + rng.standard_normal(nobs), "x": x})
    test = _diagnostic(_levels_fit(data, ["x"]), "Ramsey RESET")
    assert test.rejects
    assert test.pvalue < 0.001
    linear = _frame({"y": 1.0 + x + rng.standard_normal(nobs), "x": x})
    assert not _diagnostic(_levels_fit(linear, ["x"]), "Ramsey RESET").rejects


def test_reset_is_left_out_when_the_powers_are_collinear() -> None:
    # A single 0/1 regressor: the fitted values take two values, so their square and cube are
    # linear in the constant and the fitted values and the test is undefined.
    rng = np.random.default_rng(6)
    nobs = 80
    dummy = (np.arange(nobs) >= 40).astype(float)
    data = _frame({"y": 1.0 + dummy + rng.standard_normal(nobs), "dummy": dummy})
    fit = _levels_fit(data, ["dummy"])
    assert not any(test.name.startswith("Ramsey RESET") for test in fit.diagnostics)
    assert (
        "Ramsey's RESET is not reported: the powers of the fitted values are collinear with the regressors."
        in fit.notes
    )


def test_diagnostics_accompany_every_fit_of_a_cointegrated_regression() -> None:
    rng = np.random.default_rng(7)
    nobs = 200
    x = np.cumsum(rng.standard_normal(nobs))
    data = _frame({"y": 1.0 + 2.0 * x + rng.standard_normal(nobs), "x": x})
    assessment = assess_regression("r1", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert assessment.verdict == "cointegrated"
    fits = [assessment.levels, assessment.long_run, assessment.error_correction]
    for fit in fits:
        assert fit is not None
        assert len(fit.diagnostics) == 5
        for test in fit.diagnostics:
            assert 0.0 <= test.pvalue <= 1.0
            assert test.rejects == (test.pvalue < 0.05)
    jarque_bera = _diagnostic(fits[1], "Jarque-Bera")
    residuals = np.asarray(fits[1].residuals)
    # Jarque and Bera (1980): n/6 (S² + (K - 3)²/4).
    skewness = scipy_stats.skew(residuals)
    kurtosis = scipy_stats.kurtosis(residuals, fisher=False)
    expected = len(residuals) / 6 * (skewness**2 + (kurtosis - 3) ** 2 / 4)
    assert jarque_bera.statistic == pytest.approx(expected, rel=1e-8)
