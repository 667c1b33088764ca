"""Tests of reportgen.stats.regression: fits, diagnostics and the verdict on a regression."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import stats as scipy_stats

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats.regression import (
    VERDICT_RULE,
    assess_regression,
    diagnostic_lags,
    newey_west_lags,
)
from reportgen.stats.types import Fit, RegressionAssessment, StatsSettings

SETTINGS = StatsSettings()


def _frame(columns: dict[str, np.ndarray], start: str = "2000-01", freq: str = "M") -> pd.DataFrame:
    length = len(next(iter(columns.values())))
    return pd.DataFrame(columns, index=pd.period_range(start, periods=length, freq=freq))


def _ar1(rng: np.random.Generator, nobs: int, coefficient: float) -> np.ndarray:
    shocks = rng.standard_normal(nobs)
    values = np.zeros(nobs)
    for t in range(1, nobs):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def _cointegrated_pair(seed: int = 0, nobs: int = 200) -> pd.DataFrame:
    """y = 1 + 2x + u, x a random walk, u AR(1) with coefficient 0.5."""
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.standard_normal(nobs))
    return _frame({"y": 1.0 + 2.0 * x + _ar1(rng, nobs, 0.5), "x": x})


def _assess(data: pd.DataFrame, dependent: str, regressors: list[str], orders: dict) -> RegressionAssessment:
    formula = f"{dependent} ~ {' + '.join(regressors)}"
    return assess_regression("r1", formula, dependent, regressors, data, orders, SETTINGS)


def _term(fit: Fit, term: str):
    return next(coefficient for coefficient in fit.coefficients if coefficient.term == term)


def _trail(assessment: RegressionAssessment) -> str:
    return " ".join(assessment.trail)


# --- reference implementations used by the checks ---------------------------------------------


def _ols(y: np.ndarray, X: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    coefficients, *_ = np.linalg.lstsq(X, y, rcond=None)
    residuals = y - X @ coefficients
    inverse = np.linalg.inv(X.T @ X)
    return coefficients, residuals, inverse


def _classical_t(y: np.ndarray, X: np.ndarray) -> np.ndarray:
    coefficients, residuals, inverse = _ols(y, X)
    scale = residuals @ residuals / (len(y) - X.shape[1])
    return coefficients / np.sqrt(np.diag(inverse) * scale)


def _newey_west_t(y: np.ndarray, X: np.ndarray, lags: int) -> np.ndarray:
    """Newey and West (1987) HAC t-statistics, Bartlett weights 1 - l/(L+1), times T/(T-k)."""
    coefficients, residuals, inverse = _ols(y, X)
    scores = X * residuals[:, None]
    meat = scores.T @ scores
    for lag in range(1, lags + 1):
        weight = 1.0 - lag / (lags + 1.0)
        cross = scores[lag:].T @ scores[:-lag]
        meat += weight * (cross + cross.T)
    nobs, k = X.shape
    covariance = inverse @ meat @ inverse * nobs / (nobs - k)
    return coefficients / np.sqrt(np.diag(covariance))


# --- the rule text ------------------------------------------------------------------------------


def test_verdict_rule_covers_every_verdict_in_sentences() -> None:
    text = " ".join(VERDICT_RULE)
    for word in ("stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive", "flagged"):
        assert word in text
    assert all(sentence[0].isupper() and sentence.endswith(".") for sentence in VERDICT_RULE)


def test_lag_rules() -> None:
    # Newey and West (1994) pilot bandwidth floor(4 (T/100)^(2/9)) (REFERENCES §7), values by hand:
    # T=50: 4 * 0.857 = 3.43; T=100: 4; T=250: 4 * 1.226 = 4.90; T=1000: 4 * 1.668 = 6.67.
    assert [newey_west_lags(t) for t in (50, 100, 250, 1000)] == [3, 4, 4, 6]
    assert [diagnostic_lags(t) for t in (3, 24, 50, 300)] == [1, 4, 10, 10]


# --- Granger and Newbold (1974) -----------------------------------------------------------------


def test_granger_newbold_spurious_regression_rates() -> None:
    # Granger and Newbold (1974); REFERENCES §7 [COMP]: two independent random walks, T = 100,
    # the 5% two-sided t-test on the slope rejects about 0.76 of the time with classical standard
    # errors; HAC errors lower that but leave it far above 0.05; in differences it is near 0.05.
    rng = np.random.default_rng(20240501)
    nobs, replications = 100, 1000
    lags = newey_west_lags(nobs)
    critical = scipy_stats.t.ppf(0.975, nobs - 2)
    critical_diff = scipy_stats.t.ppf(0.975, nobs - 3)
    classical = hac = classical_diff = hac_diff = 0
    for _ in range(replications):
        y = np.cumsum(rng.standard_normal(nobs))
        x = np.cumsum(rng.standard_normal(nobs))
        X = np.column_stack([np.ones(nobs), x])
        classical += abs(_classical_t(y, X)[1]) > critical
        hac += abs(_newey_west_t(y, X, lags)[1]) > critical
        dX = np.column_stack([np.ones(nobs - 1), np.diff(x)])
        classical_diff += abs(_classical_t(np.diff(y), dX)[1]) > critical_diff
        hac_diff += abs(_newey_west_t(np.diff(y), dX, newey_west_lags(nobs - 1))[1]) > critical_diff
    assert 0.70 <= classical / replications <= 0.82
    assert hac / replications > 0.3
    assert 0.02 <= classical_diff / replications <= 0.09
    assert 0.02 <= hac_diff / replications <= 0.09


def test_granger_newbold_pairs_get_spurious_risk_verdicts() -> None:
    # Independent random walks with orders (1, 1): the Engle-Granger test has size about 5%
    # (MacKinnon 1994, 2010), so at least 90% of such pairs must be flagged spurious-risk. With
    # AIC lags and the asymptotic p-value the size at T = 100 is nearer 7% (simulated here, 1000
    # replications), so 300 replications keep the 90% bound clear of sampling noise.
    # The levels HAC t-statistics must equal a textbook Newey-West computation.
    rng = np.random.default_rng(7)
    nobs, replications = 100, 300
    verdicts = []
    levels_rejections = differences_rejections = 0
    for replication in range(replications):
        data = _frame({"y": np.cumsum(rng.standard_normal(nobs)), "x": np.cumsum(rng.standard_normal(nobs))})
        assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
        verdicts.append(assessment.verdict)
        slope = _term(assessment.levels, "x")
        levels_rejections += slope.pvalue < 0.05
        if replication < 5:
            X = np.column_stack([np.ones(nobs), data["x"].to_numpy()])
            expected = _newey_west_t(data["y"].to_numpy(), X, newey_west_lags(nobs))
            assert slope.t_statistic == pytest.approx(expected[1], rel=1e-8)
            assert slope.pvalue == pytest.approx(2 * scipy_stats.t.sf(abs(expected[1]), nobs - 2), rel=1e-8)
        if assessment.verdict == "spurious-risk":
            assert assessment.flagged
            assert assessment.cointegrated is False
            assert assessment.differences is not None
            assert assessment.differences.equation == "d.y ~ const + d.x"
            differences_rejections += _term(assessment.differences, "d.x").pvalue < 0.05
    assert verdicts.count("spurious-risk") >= 0.9 * replications
    assert set(verdicts) <= {"spurious-risk", "cointegrated"}
    assert levels_rejections / replications > 0.3
    assert differences_rejections / verdicts.count("spurious-risk") < 0.15


# --- verdict paths ------------------------------------------------------------------------------


def test_cointegrated_pair_gives_error_correction_model() -> None:
    # DGP: y = 1 + 2x + u, u_t = 0.5 u_(t-1) + e_t, so the error-correction coefficient is
    # 0.5 - 1 = -0.5, the short-run effect of d.x is 2 and the half-life is ln 0.5 / ln 0.5 = 1
    # (Engle and Granger 1987 representation; values from the design, common practice).
    data = _cointegrated_pair(0)
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    assert assessment.verdict == "cointegrated"
    assert assessment.cointegrated is True
    assert not assessment.flagged
    assert assessment.cointegration is not None
    assert assessment.cointegration.rejects
    assert assessment.differences is None
    long_run = assessment.long_run
    assert long_run is not None
    assert long_run.role == "long-run"
    assert _term(long_run, "x").estimate == pytest.approx(2.0, abs=0.1)
    assert any("dynamic OLS" in note for note in long_run.notes)
    ecm = assessment.error_correction
    assert ecm is not None
    assert ecm.role == "error-correction"
    assert ecm.equation == "d.y ~ const + ec(-1) + d.x + d.y(-1) + d.x(-1)"
    assert ecm.nobs == len(data) - 2
    assert ecm.residual_dates[0] == "2000-03"
    alpha = _term(ecm, "ec(-1)")
    assert -0.8 < alpha.estimate < -0.25
    assert alpha.pvalue < 0.05
    assert _term(ecm, "d.x").estimate == pytest.approx(2.0, abs=0.2)
    half_life = assessment.adjustment_half_life
    assert half_life is not None
    assert math.isfinite(half_life)
    assert half_life == pytest.approx(math.log(0.5) / math.log(1.0 + alpha.estimate))
    trail = _trail(assessment)
    assert "Orders: y I(1), x I(1)." in assessment.trail
    assert "Engle-Granger (y on x, constant): statistic" in trail
    assert "cointegration at 5%" in trail
    assert "Verdict cointegrated" in trail
    assert "half of a deviation" in trail


def test_independent_walks_give_spurious_risk_and_differences() -> None:
    rng = np.random.default_rng(3)
    data = _frame({"y": np.cumsum(rng.standard_normal(150)), "x": np.cumsum(rng.standard_normal(150))})
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    assert assessment.verdict == "spurious-risk"
    assert assessment.flagged
    assert assessment.long_run is None
    assert assessment.error_correction is None
    differences = assessment.differences
    assert differences is not None
    assert differences.nobs == 149
    assert differences.residual_dates[0] == "2000-02"
    assert len(differences.residuals) == 149
    trail = _trail(assessment)
    assert "no cointegration at 5%" in trail
    assert "Verdict spurious-risk: the levels fit is re-estimated in first differences." in assessment.trail
    assert any(sentence.startswith("Levels fit: R²") for sentence in assessment.trail)


def test_stationary_variables() -> None:
    rng = np.random.default_rng(11)
    x = _ar1(rng, 120, 0.3)
    data = _frame({"y": 0.5 * x + rng.standard_normal(120), "x": x}, start="1990Q1", freq="Q")
    assessment = _assess(data, "y", ["x"], {"y": 0, "x": 0})
    assert assessment.verdict == "stationary"
    assert not assessment.flagged
    assert assessment.cointegrated is None
    assert assessment.cointegration is None
    assert assessment.differences is None
    assert assessment.levels is not None
    assert assessment.levels.equation == "y ~ const + x"
    assert assessment.sample_start == "1990Q1"
    assert assessment.sample_end == "2019Q4"
    assert "Verdict stationary" in _trail(assessment)


def test_stationary_dependent_on_integrated_regressor_is_unbalanced() -> None:
    rng = np.random.default_rng(12)
    data = _frame({"y": rng.standard_normal(120), "x": np.cumsum(rng.standard_normal(120))})
    assessment = _assess(data, "y", ["x"], {"y": 0, "x": 1})
    assert assessment.verdict == "unbalanced"
    assert assessment.flagged
    assert assessment.cointegrated is None
    assert assessment.differences is not None
    assert assessment.differences.equation == "y ~ const + d.x"
    trail = _trail(assessment)
    assert "Verdict unbalanced: y is I(0) but x is I(1)" in trail
    assert "could cointegrate among themselves" not in trail


def test_stationary_dependent_on_two_integrated_regressors_mentions_their_cointegration() -> None:
    rng = np.random.default_rng(13)
    data = _frame({
        "y": rng.standard_normal(120),
        "x": np.cumsum(rng.standard_normal(120)),
        "w": np.cumsum(rng.standard_normal(120)),
    })
    assessment = _assess(data, "y", ["x", "w"], {"y": 0, "x": 1, "w": 1})
    assert assessment.verdict == "unbalanced"
    assert "x and w are both I(1) and could cointegrate among themselves" in _trail(assessment)
    assert assessment.differences is not None
    assert assessment.differences.equation == "y ~ const + d.x + d.w"


def test_integrated_dependent_on_stationary_regressor_is_unbalanced() -> None:
    rng = np.random.default_rng(14)
    data = _frame({"y": np.cumsum(rng.standard_normal(120)), "z": rng.standard_normal(120)})
    assessment = _assess(data, "y", ["z"], {"y": 1, "z": 0})
    assert assessment.verdict == "unbalanced"
    assert "every regressor is I(0)" in _trail(assessment)
    assert assessment.differences is not None
    assert assessment.differences.equation == "d.y ~ const + z"


@pytest.mark.parametrize(
    ("orders", "equation", "phrase"),
    [
        ({"y": 1, "x": 2}, "d.y ~ const + d2.x", "x is I(2), of higher order than y (I(1))"),
        ({"y": 2, "x": 1}, "d2.y ~ const + d.x", "x is I(1), of lower order than y (I(2))"),
    ],
)
def test_different_integration_orders_are_unbalanced(orders: dict, equation: str, phrase: str) -> None:
    rng = np.random.default_rng(15)
    data = _frame({"y": np.cumsum(rng.standard_normal(120)), "x": np.cumsum(rng.standard_normal(120))})
    assessment = _assess(data, "y", ["x"], orders)
    assert assessment.verdict == "unbalanced"
    assert assessment.differences is not None
    assert assessment.differences.equation == equation
    assert phrase in _trail(assessment)


def test_undetermined_order_is_inconclusive() -> None:
    data = _cointegrated_pair(1)
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": None})
    assert assessment.verdict == "inconclusive"
    assert assessment.flagged
    assert assessment.cointegrated is None
    assert assessment.cointegration is None
    assert assessment.differences is None
    assert assessment.levels is not None
    assert assessment.orders == {"y": 1, "x": None}
    assert "Orders: y I(1), x undetermined." in assessment.trail
    assert "the order of integration of x is undetermined" in _trail(assessment)


def test_too_short_for_engle_granger_is_inconclusive() -> None:
    data = _cointegrated_pair(2, nobs=18)
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    assert assessment.verdict == "inconclusive"
    assert "needs at least 22 observations" in _trail(assessment)


def test_stationary_regressor_enters_error_correction_model_in_levels() -> None:
    rng = np.random.default_rng(16)
    nobs = 200
    x = np.cumsum(rng.standard_normal(nobs))
    z = rng.standard_normal(nobs)
    data = _frame({"y": 1.0 + 2.0 * x + 0.5 * z + _ar1(rng, nobs, 0.4), "x": x, "z": z})
    assessment = _assess(data, "y", ["x", "z"], {"y": 1, "x": 1, "z": 0})
    assert assessment.verdict == "cointegrated"
    assert assessment.cointegration is not None
    assert assessment.cointegration.variables == ("y", "x")
    assert assessment.long_run is not None
    assert assessment.long_run.equation == "y ~ const + x"
    assert assessment.levels is not None
    assert assessment.levels.equation == "y ~ const + x + z"
    assert assessment.error_correction is not None
    assert assessment.error_correction.equation == "d.y ~ const + ec(-1) + d.x + z + d.y(-1) + d.x(-1)"
    assert "The I(0) regressor z is left out of the cointegrating regression." in assessment.trail


def test_i2_cointegration_uses_second_differences() -> None:
    rng = np.random.default_rng(17)
    nobs = 200
    x = np.cumsum(np.cumsum(rng.standard_normal(nobs)))
    data = _frame({"y": 3.0 + 0.5 * x + rng.standard_normal(nobs), "x": x})
    assessment = _assess(data, "y", ["x"], {"y": 2, "x": 2})
    assert assessment.verdict == "cointegrated"
    ecm = assessment.error_correction
    assert ecm is not None
    assert ecm.equation == "d2.y ~ const + ec(-1) + d2.x + d2.y(-1) + d2.x(-1)"
    assert ecm.nobs == nobs - 3
    assert any("multi-cointegration" in note for note in ecm.notes)
    assert "only indicative" in _trail(assessment)


def test_no_adjustment_gives_no_half_life() -> None:
    # A positive coefficient on ec(-1) (deviations grow) must not produce a half-life.
    from reportgen.stats.regression import _half_life

    value, sentence = _half_life(0.05)
    assert value is None
    assert "no adjustment" in sentence
    value, sentence = _half_life(-2.5)
    assert value is None
    value, _ = _half_life(-1.5)
    assert value == pytest.approx(1.0)  # |1 - 1.5| = 0.5 per period: half-life 1 (by hand)


# --- fit contents ------------------------------------------------------------------------------


def test_levels_fit_statistics_match_textbook_formulas() -> None:
    # Durbin and Watson (1950), Ljung and Box (1978) and Jarque and Bera (1980) formulas,
    # computed here from the residuals.
    rng = np.random.default_rng(21)
    nobs = 80
    x = rng.standard_normal(nobs)
    data = _frame({"y": 1.0 + x + _ar1(rng, nobs, 0.4), "x": x})
    fit = _assess(data, "y", ["x"], {"y": 0, "x": 0}).levels
    assert fit is not None
    X = np.column_stack([np.ones(nobs), x])
    y = data["y"].to_numpy()
    coefficients, residuals, _ = _ols(y, X)
    assert [c.estimate for c in fit.coefficients] == pytest.approx(coefficients, rel=1e-10)
    assert np.asarray(fit.residuals) == pytest.approx(residuals, abs=1e-10)
    assert fit.residual_dates == tuple(str(p) for p in data.index)
    assert fit.sample_start == "2000-01"
    assert fit.sample_end == str(data.index[-1])
    total = np.sum((y - y.mean()) ** 2)
    r_squared = 1 - residuals @ residuals / total
    assert fit.r_squared == pytest.approx(r_squared, rel=1e-10)
    assert fit.adj_r_squared == pytest.approx(1 - (1 - r_squared) * (nobs - 1) / (nobs - 2), rel=1e-10)
    assert fit.durbin_watson == pytest.approx(np.sum(np.diff(residuals) ** 2) / (residuals @ residuals))
    assert fit.residual_std_error == pytest.approx(math.sqrt(residuals @ residuals / (nobs - 2)))
    lags = min(10, nobs // 5)
    centred = residuals - residuals.mean()
    autocorrelations = [centred[k:] @ centred[:-k] / (centred @ centred) for k in range(1, lags + 1)]
    q = nobs * (nobs + 2) * sum(r**2 / (nobs - k) for k, r in enumerate(autocorrelations, start=1))
    diagnostics = {test.name: test for test in fit.diagnostics}
    ljung_box = diagnostics[f"Ljung-Box (Q, {lags} lags)"]
    assert ljung_box.statistic == pytest.approx(q, rel=1e-10)
    assert ljung_box.pvalue == pytest.approx(scipy_stats.chi2.sf(q, lags), rel=1e-8)
    skewness = scipy_stats.skew(residuals)
    kurtosis = scipy_stats.kurtosis(residuals, fisher=False)
    jb = nobs / 6 * (skewness**2 + (kurtosis - 3) ** 2 / 4)
    assert diagnostics["Jarque-Bera"].statistic == pytest.approx(jb, rel=1e-8)
    assert f"Breusch-Godfrey (LM, {lags} lags)" in diagnostics
    assert fit.covariance.startswith(f"HAC (Newey-West, Bartlett kernel, {newey_west_lags(nobs)} lags")


def test_r2_exceeding_dw_is_reported() -> None:
    rng = np.random.default_rng(5)
    data = _frame({"y": np.cumsum(rng.standard_normal(200)), "x": np.cumsum(rng.standard_normal(200))})
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    levels = assessment.levels
    assert levels is not None
    assert assessment.r2_exceeds_dw == (levels.r_squared > levels.durbin_watson)
    word = "exceeds" if assessment.r2_exceeds_dw else "does not exceed"
    assert any(sentence.startswith(f"Levels fit: R² {levels.r_squared:.2f} {word}") for sentence in assessment.trail)


# --- feasibility -------------------------------------------------------------------------------


def test_collinear_regressors_raise_data_error() -> None:
    data = _cointegrated_pair(3)
    data["x2"] = 2.0 * data["x"] + 1.0
    with pytest.raises(DataError) as caught:
        _assess(data, "y", ["x", "x2"], {"y": 1, "x": 1, "x2": 1})
    assert str(caught.value) == (
        "regression 'r1': the regressors of the levels fit are perfectly collinear: "
        "x2 is an exact linear combination of const, x"
    )


def test_constant_regressor_is_collinear_with_the_constant() -> None:
    data = _cointegrated_pair(3)
    data["c"] = 5.0
    with pytest.raises(DataError, match="c is an exact linear combination of const"):
        _assess(data, "y", ["x", "c"], {"y": 1, "x": 1, "c": 0})


def test_tiny_sample_raises_insufficient_data() -> None:
    data = _cointegrated_pair(4, nobs=11)
    with pytest.raises(InsufficientDataError) as caught:
        _assess(data, "y", ["x"], {"y": 1, "x": 1})
    assert str(caught.value) == (
        "regression 'r1': the levels fit (2 parameters) needs at least 12 observations "
        "(2 parameters plus 10); the sample has 11"
    )


def test_dependent_among_regressors_is_refused() -> None:
    data = _cointegrated_pair(4)
    with pytest.raises(DataError, match="appears on both sides"):
        _assess(data, "y", ["y"], {"y": 1})


@settings(derandomize=True, max_examples=10, deadline=None)
@given(
    scale_y=st.floats(min_value=1e-2, max_value=1e2),
    scale_x=st.floats(min_value=1e-2, max_value=1e2),
)
def test_rescaling_leaves_statistics_and_verdict_unchanged(scale_y: float, scale_x: float) -> None:
    # Common practice: t-statistics, R², DW and the Engle-Granger statistic do not depend on units.
    data = _cointegrated_pair(6, nobs=120)
    base = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    scaled = _assess(data.assign(y=data["y"] * scale_y, x=data["x"] * scale_x), "y", ["x"], {"y": 1, "x": 1})
    assert scaled.verdict == base.verdict
    assert scaled.cointegration is not None
    assert base.cointegration is not None
    assert scaled.cointegration.statistic == pytest.approx(base.cointegration.statistic, rel=1e-7)
    assert scaled.levels is not None
    assert base.levels is not None
    assert _term(scaled.levels, "x").t_statistic == pytest.approx(_term(base.levels, "x").t_statistic, rel=1e-7)
    assert scaled.levels.r_squared == pytest.approx(base.levels.r_squared, rel=1e-9)


def test_library_warnings_are_kept_in_the_notes(monkeypatch: pytest.MonkeyPatch) -> None:
    # STYLE.md: library warnings are captured and stored, never silenced or let through.
    import warnings

    from reportgen.stats import regression

    original = regression.jarque_bera

    def warning_jarque_bera(residuals):
        warnings.warn("a library remark", UserWarning, stacklevel=2)
        return original(residuals)

    monkeypatch.setattr(regression, "jarque_bera", warning_jarque_bera)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a warning escaping the fit would fail the test
        assessment = _assess(_cointegrated_pair(8), "y", ["x"], {"y": 0, "x": 0})
    assert assessment.levels is not None
    assert "UserWarning: a library remark" in assessment.levels.notes
