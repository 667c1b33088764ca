"""Tests of reportgen.stats.regression: fits, diagnostics and the verdict on a regression."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from hypothesis import example, given, settings
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
    for word in (
        "stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive", "flagged", "fragile",
        "every normalisation", "Johansen", "bounds test", "dynamic OLS", "RESET", "Breusch-Pagan", "1e10",
    ):
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
    assert long_run.role == "long-run (dynamic OLS)"
    assert [c.term for c in long_run.coefficients] == ["const", "x"]
    assert long_run.equation.startswith("y ~ const + x + ")
    assert "d.x" in long_run.equation
    assert _term(long_run, "x").estimate == pytest.approx(2.0, abs=0.1)
    assert any("Dynamic OLS (Stock and Watson 1993)" in note for note in long_run.notes)
    assert assessment.levels is not None
    assert any("dynamic OLS long-run fit gives valid ones" in note for note in assessment.levels.notes)
    # Every normalisation, the regression as written first; Johansen on the same pair.
    assert [test.dependent for test in assessment.engle_granger] == ["y", "x"]
    assert assessment.engle_granger[0] == assessment.cointegration
    assert assessment.johansen is not None
    assert assessment.johansen.variables == ("y", "x")
    assert assessment.johansen.case == 2  # a driftless pair: constant restricted to the relation
    assert assessment.johansen.rank == 1
    assert not assessment.fragile
    assert assessment.fragile_reason is None
    assert assessment.bounds_test is None
    ecm = assessment.error_correction
    assert ecm is not None
    assert ecm.role == "error-correction"
    assert ecm.equation == "d.y ~ const + ec(-1) + d.x + d.y(-1) + d.x(-1)"
    assert ecm.nobs == len(data) - 2
    assert ecm.residual_dates[0] == "2000-03"
    alpha = _term(ecm, "ec(-1)")
    assert -0.8 < alpha.estimate < -0.25
    assert alpha.pvalue < 0.05
    assert assessment.adjustment_speed == alpha.estimate
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
    assert "Engle-Granger (x on y, constant): statistic" in trail
    assert "Johansen's trace test confirms cointegration (rank 1)." in assessment.trail
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


def test_mixed_regressors_with_a_levels_relation_are_cointegrated_by_the_bounds_test() -> None:
    # DGP: y = 1 + 2x + 0.5z + u with x a random walk, z and u stationary: a levels relation, so
    # the bounds test (Pesaran, Shin and Smith 2001) must find F above the I(1) bound (design).
    rng = np.random.default_rng(16)
    nobs = 200
    x = np.cumsum(rng.standard_normal(nobs))
    z = rng.standard_normal(nobs)
    data = _frame({"y": 1.0 + 2.0 * x + 0.5 * z + _ar1(rng, nobs, 0.4), "x": x, "z": z})
    assessment = _assess(data, "y", ["x", "z"], {"y": 1, "x": 1, "z": 0})
    assert assessment.verdict == "cointegrated"
    assert assessment.cointegrated is True
    bounds = assessment.bounds_test
    assert bounds is not None
    assert bounds.decision == "levels relation"
    assert bounds.regressors == ("x", "z")
    assert bounds.case == 3
    assert bounds.f_statistic > bounds.critical_values["95%"][1]
    assert assessment.cointegration is None
    assert assessment.engle_granger == ()
    assert assessment.johansen is None
    assert assessment.long_run is not None
    assert assessment.long_run.role == "long-run (dynamic OLS)"
    assert [c.term for c in assessment.long_run.coefficients] == ["const", "x"]
    assert _term(assessment.long_run, "x").estimate == pytest.approx(2.0, abs=0.1)
    assert assessment.levels is not None
    assert assessment.levels.equation == "y ~ const + x + z"
    assert assessment.error_correction is not None
    assert assessment.error_correction.equation == "d.y ~ const + ec(-1) + d.x + z + d.y(-1) + d.x(-1)"
    trail = _trail(assessment)
    assert "the ARDL bounds test, valid for either order, decides" in trail
    assert "Bounds test (Pesaran, Shin and Smith 2001, case III; y on x, z" in trail
    assert "z enters the error-correction model in levels" in trail


def test_mixed_regressors_without_a_levels_relation_are_spurious_risk() -> None:
    # y and x independent random walks, z white noise: no levels relation (design).
    rng = np.random.default_rng(0)
    nobs = 200
    data = _frame({
        "y": np.cumsum(rng.standard_normal(nobs)),
        "x": np.cumsum(rng.standard_normal(nobs)),
        "z": rng.standard_normal(nobs),
    })
    assessment = _assess(data, "y", ["x", "z"], {"y": 1, "x": 1, "z": 0})
    assert assessment.bounds_test is not None
    assert assessment.bounds_test.decision == "no levels relation"
    assert assessment.verdict == "spurious-risk"
    assert assessment.cointegrated is False
    assert assessment.flagged
    assert assessment.long_run is None
    assert assessment.differences is not None
    assert assessment.differences.equation == "d.y ~ const + d.x + z"
    assert "Verdict spurious-risk: the bounds test finds no levels relation at 5%" in _trail(assessment)


def test_bounds_test_inside_the_bounds_is_inconclusive(monkeypatch: pytest.MonkeyPatch) -> None:
    # The combination logic: an F statistic between the bounds leaves the verdict open.
    import dataclasses

    from reportgen.stats import regression

    original = regression.bounds_test

    def inside(*args, **kwargs):
        return dataclasses.replace(original(*args, **kwargs), decision="inside the bounds")

    monkeypatch.setattr(regression, "bounds_test", inside)
    rng = np.random.default_rng(16)
    nobs = 200
    x = np.cumsum(rng.standard_normal(nobs))
    z = rng.standard_normal(nobs)
    data = _frame({"y": 1.0 + 2.0 * x + 0.5 * z + _ar1(rng, nobs, 0.4), "x": x, "z": z})
    assessment = _assess(data, "y", ["x", "z"], {"y": 1, "x": 1, "z": 0})
    assert assessment.verdict == "inconclusive"
    assert assessment.flagged
    assert assessment.cointegrated is None
    assert assessment.long_run is None
    assert assessment.differences is None
    assert "Verdict inconclusive: the F statistic lies between the bounds" in _trail(assessment)


def test_i2_with_stationary_regressor_is_inconclusive() -> None:
    rng = np.random.default_rng(18)
    nobs = 150
    x = np.cumsum(np.cumsum(rng.standard_normal(nobs)))
    z = rng.standard_normal(nobs)
    data = _frame({"y": x + z + rng.standard_normal(nobs), "x": x, "z": z})
    assessment = _assess(data, "y", ["x", "z"], {"y": 2, "x": 2, "z": 0})
    assert assessment.verdict == "inconclusive"
    assert assessment.bounds_test is None
    assert assessment.engle_granger == ()
    assert (
        "Verdict inconclusive: y and x are I(2) while z is I(0); the bounds test assumes no I(2) variable"
        in _trail(assessment)
    )


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


def _fits(assessment: RegressionAssessment) -> list[Fit]:
    return [
        fit
        for fit in (assessment.levels, assessment.differences, assessment.long_run, assessment.error_correction)
        if fit is not None
    ]


_SCALES = st.sampled_from([1e-6, 1e-3, 0.37, 1.0, 42.0, 1e3, 1e6])


def _rescaling_case(case: str) -> tuple[pd.DataFrame, list[str], dict[str, int]]:
    if case == "walks":
        rng = np.random.default_rng(31)
        data = _frame({"y": np.cumsum(rng.standard_normal(120)), "x": np.cumsum(rng.standard_normal(120))})
        return data, ["x"], {"y": 1, "x": 1}
    if case == "mixed":
        rng = np.random.default_rng(32)
        x = np.cumsum(rng.standard_normal(150))
        z = rng.standard_normal(150)
        data = _frame({"y": 3.0 + 0.8 * x + 0.5 * z + _ar1(rng, 150, 0.3), "x": x, "z": z})
        return data, ["x", "z"], {"y": 1, "x": 1, "z": 0}
    return _cointegrated_pair(6, nobs=120), ["x"], {"y": 1, "x": 1}


@settings(derandomize=True, max_examples=12, deadline=None)
@given(scale_y=_SCALES, scale_x=_SCALES, case=st.sampled_from(["pair", "walks", "mixed"]))
@example(scale_y=1e6, scale_x=1e-6, case="pair")
@example(scale_y=1e-6, scale_x=1e6, case="walks")
@example(scale_y=1e6, scale_x=1e6, case="mixed")
def test_rescaling_leaves_statistics_and_verdict_unchanged(scale_y: float, scale_x: float, case: str) -> None:
    # Common practice: t-statistics, p-values, R², DW, residual diagnostics and the cointegration
    # statistics do not depend on the units of the variables; neither does the verdict.
    data, regressors, orders = _rescaling_case(case)
    base = _assess(data, "y", regressors, orders)
    scaled_data = data.assign(y=data["y"] * scale_y, x=data["x"] * scale_x)
    if "z" in data:
        scaled_data["z"] = data["z"] * scale_x * 1e-3
    scaled = _assess(scaled_data, "y", regressors, orders)
    assert scaled.verdict == base.verdict
    assert scaled.fragile == base.fragile
    assert [t.statistic for t in scaled.engle_granger] == pytest.approx(
        [t.statistic for t in base.engle_granger], rel=1e-7
    )
    if base.johansen is not None:
        assert scaled.johansen is not None
        assert [step.statistic for step in scaled.johansen.trace] == pytest.approx(
            [step.statistic for step in base.johansen.trace], rel=1e-6
        )
    if base.bounds_test is not None:
        assert scaled.bounds_test is not None
        assert scaled.bounds_test.f_statistic == pytest.approx(base.bounds_test.f_statistic, rel=1e-6)
        assert scaled.bounds_test.lags == base.bounds_test.lags
    base_fits, scaled_fits = _fits(base), _fits(scaled)
    assert [fit.role for fit in scaled_fits] == [fit.role for fit in base_fits]
    assert len(base_fits) >= 2
    for before, after in zip(base_fits, scaled_fits, strict=True):
        assert after.equation == before.equation
        assert [c.t_statistic for c in after.coefficients] == pytest.approx(
            [c.t_statistic for c in before.coefficients], rel=1e-6
        )
        assert [c.pvalue for c in after.coefficients] == pytest.approx(
            [c.pvalue for c in before.coefficients], rel=1e-6, abs=1e-300
        )
        assert after.r_squared == pytest.approx(before.r_squared, rel=1e-9)
        assert after.durbin_watson == pytest.approx(before.durbin_watson, rel=1e-9)
        assert [d.name for d in after.diagnostics] == [d.name for d in before.diagnostics]
        assert [d.statistic for d in after.diagnostics] == pytest.approx(
            [d.statistic for d in before.diagnostics], rel=1e-6
        )
        assert [d.pvalue for d in after.diagnostics] == pytest.approx(
            [d.pvalue for d in before.diagnostics], rel=1e-6, abs=1e-12
        )


def test_residuals_are_computed_from_the_fitted_equation_and_equal_the_librarys() -> None:
    # reportgen computes y - X b itself; statsmodels' OLS residuals on the same design must agree.
    from statsmodels.regression.linear_model import OLS

    data = _cointegrated_pair(0)
    assessment = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    fits = _fits(assessment)
    assert [fit.role for fit in fits] == ["levels", "long-run (dynamic OLS)", "error-correction"]
    ecm = assessment.error_correction
    assert ecm is not None
    X = np.column_stack([np.ones(len(data)), data["x"].to_numpy()])
    library = OLS(data["y"].to_numpy(), X).fit()
    assert assessment.levels is not None
    assert np.asarray(assessment.levels.residuals) == pytest.approx(np.asarray(library.resid), abs=1e-10)
    # The error-correction model rebuilt by hand from its equation.
    y, x = data["y"].to_numpy(), data["x"].to_numpy()
    ec = np.asarray(library.resid)
    dy, dx = np.diff(y), np.diff(x)
    design = np.column_stack([np.ones(len(dy) - 1), ec[1:-1], dx[1:], dy[:-1], dx[:-1]])
    library_ecm = OLS(dy[1:], design).fit()
    assert np.asarray(ecm.residuals) == pytest.approx(np.asarray(library_ecm.resid), abs=1e-10)
    assert [c.estimate for c in ecm.coefficients] == pytest.approx(np.asarray(library_ecm.params), rel=1e-9)


def test_every_fit_records_its_covariance_settings() -> None:
    data = _cointegrated_pair(0)
    for fit in _fits(_assess(data, "y", ["x"], {"y": 1, "x": 1})):
        assert fit.hac_kernel == "Bartlett"
        assert fit.hac_bandwidth == newey_west_lags(fit.nobs)
        assert fit.hac_bandwidth_rule == "int(4 (T/100)^(2/9))"
        assert fit.small_sample_correction is True
        k = fit.equation.count(" + ") + 1
        assert f"T/(T-k) = {fit.nobs}/{fit.nobs - k}" in fit.covariance
        assert f"t distribution with {fit.nobs - k} degrees of freedom" in fit.covariance


def test_near_singular_design_raises_data_error_naming_the_columns() -> None:
    # x2 differs from x by about 1e-12 of its length: full rank, condition number far above 1e10.
    data = _cointegrated_pair(3)
    rng = np.random.default_rng(5)
    data["x2"] = data["x"] + 1e-11 * rng.standard_normal(len(data))
    data["w"] = rng.standard_normal(len(data))
    with pytest.raises(DataError) as caught:
        _assess(data, "y", ["x", "w", "x2"], {"y": 0, "x": 0, "w": 0, "x2": 0})
    message = str(caught.value)
    assert message.startswith(
        "regression 'r1': the regressors of the levels fit are nearly collinear: x, x2 (condition number "
    )
    assert message.endswith("after scaling each column to unit length, above 1e+10)")
    assert caught.value.hint == "drop one of these regressors or change its transform"


# --- combining the cointegration tests ---------------------------------------------------------


def _tests_and_johansen(seed: int = 0):
    from reportgen.stats.cointegration import engle_granger_all
    from reportgen.stats.johansen import johansen

    data = _cointegrated_pair(seed)
    tests = engle_granger_all(data, ["y", "x"], significance=0.05)
    return tests, johansen(data, ["y", "x"], significance=0.05)


def test_cointegration_decision_agreement_is_not_fragile() -> None:
    from reportgen.stats.regression import _cointegration_decision

    tests, rank_test = _tests_and_johansen()
    assert [test.rejects for test in tests] == [True, True]
    assert rank_test.rank == 1
    cointegrated, sentences, reasons = _cointegration_decision(tests, rank_test)
    assert cointegrated is True
    assert reasons == []
    assert "Johansen's trace test confirms cointegration (rank 1)." in sentences


def test_cointegration_decision_names_each_disagreement() -> None:
    import dataclasses

    from reportgen.stats.regression import _cointegration_decision

    tests, rank_test = _tests_and_johansen()
    disagreeing = (tests[0], dataclasses.replace(tests[1], rejects=False))
    cointegrated, _, reasons = _cointegration_decision(disagreeing, rank_test)
    assert cointegrated is True  # the regression as written still decides
    assert reasons == [
        "the Engle-Granger normalisations disagree: with y on the left the test finds cointegration, "
        "with x on the left it finds none"
    ]
    not_first = (dataclasses.replace(tests[0], rejects=False), tests[1])
    cointegrated, _, reasons = _cointegration_decision(not_first, dataclasses.replace(rank_test, rank=0))
    assert cointegrated is False
    assert reasons == [
        "the Engle-Granger normalisations disagree: with y on the left the test finds none, with x on the "
        "left it finds cointegration"
    ]
    cointegrated, _, reasons = _cointegration_decision(tests, dataclasses.replace(rank_test, rank=0))
    assert cointegrated is True
    assert reasons == [
        "Johansen's trace test finds rank 0 while the Engle-Granger test of the regression as written "
        "finds cointegration"
    ]
    _, _, reasons = _cointegration_decision(tests, dataclasses.replace(rank_test, rank=2))
    assert reasons == [
        "Johansen's trace test finds full rank 2, which says every variable is stationary, at odds with "
        "their orders of integration"
    ]


def test_disagreeing_normalisations_mark_the_assessment_fragile(monkeypatch: pytest.MonkeyPatch) -> None:
    import dataclasses

    from reportgen.stats import regression

    original = regression.engle_granger_all

    def disagreeing(*args, **kwargs):
        first, *others = original(*args, **kwargs)
        return (first, *(dataclasses.replace(test, rejects=False) for test in others))

    monkeypatch.setattr(regression, "engle_granger_all", disagreeing)
    assessment = _assess(_cointegrated_pair(0), "y", ["x"], {"y": 1, "x": 1})
    assert assessment.verdict == "cointegrated"
    assert assessment.fragile
    assert assessment.fragile_reason == (
        "the Engle-Granger normalisations disagree: with y on the left the test finds cointegration, "
        "with x on the left it finds none"
    )
    assert (
        "Fragile: the Engle-Granger normalisations disagree: with y on the left the test finds "
        "cointegration, with x on the left it finds none. The Engle-Granger test of the regression as "
        "written still decides."
    ) in assessment.trail


def test_fragile_orders_mark_the_assessment_fragile() -> None:
    data = _cointegrated_pair(0)
    assessment = assess_regression(
        "r1", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, SETTINGS,
        fragile_orders={"x": "ADF with BIC lags gives I(0)", "unrelated": "not in this regression"},
    )
    assert assessment.verdict == "cointegrated"
    assert assessment.fragile
    assert assessment.fragile_reason == "the order of integration of x is fragile (ADF with BIC lags gives I(0))"
    assert (
        "Fragile: the order of integration of x is fragile (ADF with BIC lags gives I(0)). The verdict uses "
        "the orders as decided."
    ) in assessment.trail
    plain = _assess(data, "y", ["x"], {"y": 1, "x": 1})
    assert not plain.fragile


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


def test_johansen_case_follows_the_drift() -> None:
    # Common practice: a drifting random walk calls for an unrestricted constant (case 3),
    # driftless walks for a constant restricted to the cointegrating relation (case 2).
    from reportgen.stats.regression import johansen_case

    rng = np.random.default_rng(31)
    index = pd.period_range("2000-01", periods=300, freq="M")
    still = pd.DataFrame({"a": np.cumsum(rng.standard_normal(300)), "b": np.cumsum(rng.standard_normal(300))},
                         index=index)
    case, reason = johansen_case(still, ["a", "b"], 0.05)
    assert case == 2
    assert reason.startswith("Johansen case 2 (constant restricted to the cointegrating relation)")
    drifting = still.assign(a=still["a"] + 0.5 * np.arange(300))
    case, reason = johansen_case(drifting, ["a", "b"], 0.05)
    assert (case, reason.split(":")[1].strip().split(" ")[0]) == (3, "a")
