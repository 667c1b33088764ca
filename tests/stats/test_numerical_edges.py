"""Numerical edge cases of the statistics: units, near-constant series, outliers, near-singular
designs, tiny and very long samples, and the library warnings they provoke.

What must hold is one rule: every statistic is correct or refused with a catalogue error, never
NaN or infinite, and no library warning reaches the terminal. Every check against an outside
value names its source beside it: a reference library (statsmodels, arch) or "common practice" for
a fact of the trade. Simulated series come from ``numpy.random.default_rng`` with fixed seeds.
"""

from __future__ import annotations

import dataclasses
import json
import math
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import jsonschema
import numpy as np
import pandas as pd
import pytest
from statsmodels.stats.diagnostic import acorr_ljungbox
from statsmodels.tools.sm_exceptions import ValueWarning
from statsmodels.tsa.stattools import adfuller

from reportgen.errors import (
    CollinearRegressorsError,
    ConstantDependentError,
    ConstantSeriesError,
    InsufficientDataError,
    NearlyCollinearError,
    SampleTooShortError,
    StatsInputError,
)
from reportgen.results import _plain
from reportgen.stats import order as order_module
from reportgen.stats import regression as regression_module
from reportgen.stats import unitroot as unitroot_module
from reportgen.stats.bounds import bounds_test
from reportgen.stats.checks import VARIATION_LIMIT, check_variation
from reportgen.stats.cointegration import engle_granger
from reportgen.stats.johansen import johansen
from reportgen.stats.longrun import dynamic_ols_specification
from reportgen.stats.numerics import LARGE_SAMPLE, _by_qr, _column_scaled, nested_least_squares
from reportgen.stats.order import integration_order
from reportgen.stats.regression import assess_regression
from reportgen.stats.types import RegressionAssessment, StatsSettings
from reportgen.stats.types import TestResult as UnitRootResult  # not "Test*": pytest would collect it
from reportgen.stats.unitroot import (
    adf,
    dfgls,
    kpss,
    phillips_perron,
    schwert_max_lags,
    zivot_andrews,
)

ROOT = Path(__file__).resolve().parents[2]
SCHEMA = ROOT / "reportgen" / "schema" / "results.schema.json"
FACTORS = (1e12, 1e-12)
STREAM = 20261202


def as_series(values: np.ndarray, freq: str = "M", start: str = "1990-01") -> pd.Series:
    index = pd.period_range(start=start, periods=len(values), freq=freq)
    return pd.Series(np.asarray(values, dtype=float), index=index)


def random_walk(seed: int, length: int) -> np.ndarray:
    return np.random.default_rng([STREAM, seed]).standard_normal(length).cumsum()


def ar1(seed: int, length: int, coefficient: float) -> np.ndarray:
    shocks = np.random.default_rng([STREAM, 1, seed]).standard_normal(length)
    values = np.empty(length)
    values[0] = shocks[0]
    for t in range(1, length):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def cointegrated_pair(seed: int, length: int = 200) -> pd.DataFrame:
    rng = np.random.default_rng([STREAM, 2, seed])
    x = 10.0 + rng.standard_normal(length).cumsum()
    y = 2.0 + 0.8 * x + rng.standard_normal(length)
    return pd.DataFrame({"y": y, "x": x}, index=pd.period_range("1990-01", periods=length, freq="M"))


def non_finite_floats(value: Any, path: str = "result") -> list[str]:
    """Where a statistics result holds NaN or an infinity, walking its fields (not its JSON form).

    results.json's writer turns a non-finite float into null without complaint (``_plain``), so a
    NaN that reached a result would pass unseen as a missing value; this walk makes it fail loudly.
    """
    found: list[str] = []
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        for item in dataclasses.fields(value):
            found.extend(non_finite_floats(getattr(value, item.name), f"{path}.{item.name}"))
    elif isinstance(value, dict):
        for key, item in value.items():
            found.extend(non_finite_floats(item, f"{path}[{key!r}]"))
    elif isinstance(value, (list, tuple)):
        for position, item in enumerate(value):
            found.extend(non_finite_floats(item, f"{path}[{position}]"))
    elif isinstance(value, (float, np.floating)) and not math.isfinite(float(value)):
        found.append(f"{path} = {value!r}")
    return found


def assert_finite(value: Any) -> None:
    found = non_finite_floats(value)
    assert not found, "non-finite numbers in a statistics result: " + "; ".join(found[:10])
    json.dumps(_plain(value), allow_nan=False)


def _test_results(verdict_tests: tuple[UnitRootResult, ...]) -> dict[tuple[Any, ...], UnitRootResult]:
    return {(t.level, t.test, t.deterministic, t.lag_criterion, t.auxiliary): t for t in verdict_tests}


# --- the finiteness check itself -----------------------------------------------------------------


def test_a_nan_in_a_stats_result_fails_loudly() -> None:
    result = adf(as_series(random_walk(0, 120)), level=0, deterministic="constant", lag_criterion="aic",
                 significance=0.05)
    assert_finite(result)
    broken = dataclasses.replace(result, pvalue=math.nan, critical_values={"5%": math.inf})
    assert non_finite_floats(broken) == ["result.pvalue = nan", "result.critical_values['5%'] = inf"]
    # results.json's writer would have written both as null: the walk above is what catches them.
    assert _plain(broken)["pvalue"] is None


# --- catalogue errors ----------------------------------------------------------------------------


def test_unit_root_refusals_are_catalogue_entries() -> None:
    values = as_series(random_walk(1, 60))
    holes = values.copy()
    holes.iloc[5] = np.nan
    with pytest.raises(StatsInputError) as caught:
        adf(holes, level=0, deterministic="constant", lag_criterion="aic", significance=0.05)
    assert caught.value.code == "stats-input"
    assert caught.value.message == "ADF needs a series without missing or infinite values; level 0 has some"
    with pytest.raises(SampleTooShortError) as short:
        kpss(values.iloc[:10], level=1, deterministic="constant", significance=0.05)
    assert isinstance(short.value, InsufficientDataError)  # the runner marks such a regression inconclusive
    assert short.value.code == "sample-too-short"
    assert short.value.message == "KPSS with constant needs at least 20 observations; the series has 10 at level 1"
    with pytest.raises(StatsInputError) as constant:
        phillips_perron(as_series(np.full(40, 3.0)), level=2, deterministic="constant", significance=0.05)
    assert constant.value.message == "Phillips-Perron cannot be run: the series is constant at level 2"
    assert constant.value.hint == "a constant series has no variation to test; check the data and the transforms"


def test_cointegration_refusals_are_catalogue_entries() -> None:
    data = cointegrated_pair(0, 120)
    data["z"] = 3.0 * data["x"] - 1.0
    with pytest.raises(CollinearRegressorsError) as caught:
        engle_granger(data, "y", ["x", "z"], significance=0.05)
    assert caught.value.message == (
        "Engle-Granger test of y on x, z: the regressors are perfectly collinear: z is an exact linear "
        "combination of const, x"
    )
    with pytest.raises(SampleTooShortError):
        engle_granger(data.iloc[:15], "y", ["x"], significance=0.05)
    with pytest.raises(StatsInputError, match="a variable appears twice"):
        johansen(data, ["y", "y"], significance=0.05)
    with pytest.raises(CollinearRegressorsError, match="perfectly collinear: z is an exact linear combination"):
        johansen(data, ["y", "x", "z"], significance=0.05)
    with pytest.raises(SampleTooShortError) as wide:
        johansen(data, ["y", "x", "a", "b", "c", "d", "e"], significance=0.05, case=2)
    assert wide.value.hint == "test at most 6 variables in one system"
    with pytest.raises(StatsInputError, match="no column named q"):
        bounds_test(data, "y", ["q"], significance=0.05)
    with pytest.raises(SampleTooShortError):
        dynamic_ols_specification(data.iloc[:12], "y", ["x"])


def test_regression_refusals_are_catalogue_entries() -> None:
    data = cointegrated_pair(1, 120)
    settings = StatsSettings()
    with pytest.raises(StatsInputError) as both:
        assess_regression("r", "y ~ y", "y", ["y"], data, {"y": 1}, settings)
    assert both.value.message == "regression 'r': y appears on both sides of the formula"
    with pytest.raises(StatsInputError) as missing:
        assess_regression("r", "y ~ q", "y", ["q"], data, {"y": 1, "q": 1}, settings)
    assert missing.value.message == "regression 'r': no column named q in the data"
    with pytest.raises(SampleTooShortError) as short:
        assess_regression("r", "y ~ x", "y", ["x"], data.iloc[:11], {"y": 1, "x": 1}, settings)
    assert short.value.message == (
        "regression 'r': the levels fit (2 parameters) needs at least 12 observations (2 parameters plus 10); "
        "the sample has 11"
    )


# --- the levels design is checked first -----------------------------------------------------------


def _refuse_any_fit(monkeypatch: pytest.MonkeyPatch) -> None:
    """Make every fit and test fail loudly, to prove the design was refused before any of them."""

    def no_fit(*args: Any, **kwargs: Any) -> Any:
        raise AssertionError("a fit ran before the design was checked")

    monkeypatch.setattr(regression_module, "_fit", no_fit)
    monkeypatch.setattr(regression_module, "engle_granger_all", no_fit)
    monkeypatch.setattr(regression_module, "bounds_test", no_fit)


@pytest.mark.parametrize(
    "orders",
    [
        {"a": 0, "b": 1, "c": 1},  # unbalanced
        {"a": 1, "b": 1, "c": 1},  # same order
        {"a": 0, "b": 0, "c": 0},  # stationary
        {"a": None, "b": 1, "c": 1},  # inconclusive
    ],
)
def test_perfectly_collinear_regressors_are_refused_on_every_route(
    orders: dict[str, int | None], monkeypatch: pytest.MonkeyPatch
) -> None:
    rng = np.random.default_rng([STREAM, 3])
    b = rng.standard_normal(120).cumsum()
    data = pd.DataFrame({"a": rng.standard_normal(120), "b": b, "c": 2.0 * b},
                        index=pd.period_range("2000-01", periods=120, freq="M"))
    _refuse_any_fit(monkeypatch)
    with pytest.raises(CollinearRegressorsError) as caught:
        assess_regression("r", "a ~ b + c", "a", ["b", "c"], data, orders, StatsSettings())
    assert caught.value.code == "collinear"
    assert caught.value.message == (
        "regression 'r': the regressors of the levels fit are perfectly collinear: c is an exact linear "
        "combination of b"
    )
    assert caught.value.hint == "drop one of the collinear regressors or change its transform"


def test_nearly_collinear_regressors_are_refused_before_the_unbalanced_route(monkeypatch: pytest.MonkeyPatch) -> None:
    rng = np.random.default_rng([STREAM, 4])
    b = rng.standard_normal(120).cumsum()
    data = pd.DataFrame({"a": rng.standard_normal(120), "b": b, "c": b + 1e-11 * rng.standard_normal(120)},
                        index=pd.period_range("2000-01", periods=120, freq="M"))
    _refuse_any_fit(monkeypatch)
    with pytest.raises(NearlyCollinearError) as caught:
        assess_regression("r", "a ~ b + c", "a", ["b", "c"], data, {"a": 0, "b": 1, "c": 1}, StatsSettings())
    assert caught.value.code == "nearly-collinear"
    assert caught.value.message.startswith(
        "regression 'r': the regressors of the levels fit are nearly collinear: b, c (condition number "
    )


def test_a_constant_dependent_variable_is_refused_first(monkeypatch: pytest.MonkeyPatch) -> None:
    b = random_walk(5, 80)
    data = pd.DataFrame({"y": np.full(80, 4.0), "b": b, "c": 2.0 * b},
                        index=pd.period_range("2000-01", periods=80, freq="M"))
    _refuse_any_fit(monkeypatch)
    with pytest.raises(ConstantDependentError) as caught:  # before the collinear regressors
        assess_regression("r", "y ~ b + c", "y", ["b", "c"], data, {"y": 0, "b": 1, "c": 1}, StatsSettings())
    assert caught.value.code == "constant-dependent"
    assert caught.value.message == "regression 'r': y is constant over the sample"
    data["y"] = 4.0 + 1e-13 * np.arange(80.0)
    with pytest.raises(ConstantDependentError) as nearly:
        assess_regression("r", "y ~ b", "y", ["b"], data, {"y": 0, "b": 1}, StatsSettings())
    assert nearly.value.message == (
        "regression 'r': y is numerically constant over the sample (relative spread 2e-12, at most 1e-10)"
    )


def test_a_numerically_constant_regressor_is_nearly_collinear_with_the_constant() -> None:
    data = cointegrated_pair(6, 120)
    data["c"] = 5.0 + 1e-13 * np.arange(120.0)
    with pytest.raises(NearlyCollinearError, match="nearly collinear: const, c"):
        assess_regression("r", "y ~ x + c", "y", ["x", "c"], data, {"y": 1, "x": 1, "c": 0}, StatsSettings())


def test_an_exact_fit_is_refused_instead_of_giving_diagnostics_of_rounding_error() -> None:
    data = cointegrated_pair(7, 120)
    data["y"] = 1.0 + 2.0 * data["x"]
    with pytest.raises(StatsInputError) as caught:
        assess_regression("r", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert caught.value.message == (
        "regression 'r': the levels fit is exact: y is a linear combination of const, x up to rounding, so no "
        "standard error or residual diagnostic is defined"
    )


def test_a_near_perfect_but_real_fit_is_assessed() -> None:
    # Residuals of 1e-7 against values near 10: nine digits of them survive the arithmetic.
    data = cointegrated_pair(8, 120)
    data["y"] = 1.0 + 2.0 * data["x"] + 1e-7 * np.random.default_rng([STREAM, 8]).standard_normal(120)
    assessment = assess_regression("r", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert assessment.verdict == "cointegrated"
    assert_finite(assessment)


# --- units ---------------------------------------------------------------------------------------


UNIT_ROOT_CALLS: dict[str, Callable[[pd.Series], UnitRootResult]] = {
    "ADF aic": lambda v: adf(v, level=0, deterministic="constant", lag_criterion="aic", significance=0.05),
    "ADF bic trend": lambda v: adf(v, level=0, deterministic="constant-trend", lag_criterion="bic", significance=0.05),
    "ADF t-stat none": lambda v: adf(v, level=0, deterministic="none", lag_criterion="t-stat", significance=0.05),
    "PP": lambda v: phillips_perron(v, level=0, deterministic="constant", significance=0.05),
    "PP trend": lambda v: phillips_perron(v, level=0, deterministic="constant-trend", significance=0.05),
    "DF-GLS": lambda v: dfgls(v, level=0, deterministic="constant", lag_criterion="aic", significance=0.05),
    "DF-GLS trend": lambda v: dfgls(v, level=0, deterministic="constant-trend", lag_criterion="t-stat",
                                    significance=0.05),
    "KPSS": lambda v: kpss(v, level=0, deterministic="constant", significance=0.05),
    "KPSS trend": lambda v: kpss(v, level=0, deterministic="constant-trend", significance=0.05, lags=4),
    "ZA": lambda v: zivot_andrews(v, level=0, deterministic="constant", significance=0.05),
    "ZA trend": lambda v: zivot_andrews(v, level=0, deterministic="constant-trend", significance=0.05,
                                        lag_criterion="bic"),
}


@pytest.mark.parametrize("factor", FACTORS)
@pytest.mark.parametrize("test", sorted(UNIT_ROOT_CALLS))
def test_rescaling_a_series_leaves_every_unit_root_test_unchanged(test: str, factor: float) -> None:
    # Common practice: the t-statistics (and KPSS's ratio) are invariant to rescaling the series.
    for values in (random_walk(10, 240), ar1(10, 240, 0.6), 50.0 + random_walk(11, 240)):
        plain = UNIT_ROOT_CALLS[test](as_series(values))
        scaled = UNIT_ROOT_CALLS[test](as_series(factor * values))
        assert scaled.statistic == pytest.approx(plain.statistic, rel=1e-6)
        assert scaled.pvalue == pytest.approx(plain.pvalue, rel=1e-6, abs=1e-12)
        assert (scaled.lags, scaled.nobs, scaled.bandwidth, scaled.break_date, scaled.rejects) == (
            plain.lags, plain.nobs, plain.bandwidth, plain.break_date, plain.rejects
        )


@pytest.mark.parametrize("factor", [1.0, *FACTORS])
def test_adf_on_rescaled_data_matches_statsmodels(factor: float) -> None:
    # statsmodels adfuller as reference library, on the series in units near 1; common practice:
    # the t-statistics are invariant to rescaling, so reportgen's ADF of the series times 1e12 or
    # 1e-12 must give the reference's numbers. (statsmodels run on the 1e-12 numbers themselves
    # drifts in the fourth digit, its pseudo-inverse then seeing a condition number near 1e13;
    # on the 1e12 numbers it still agrees.) statsmodels rounds Schwert's maximum up, reportgen
    # down, so the maximum is passed explicitly.
    for seed in range(4):
        raw = random_walk(20 + seed, 200)
        reference = adfuller(raw, maxlag=schwert_max_lags(200), regression="c", autolag="AIC", result_object=True)
        ours = adf(as_series(factor * raw), level=0, deterministic="constant", lag_criterion="aic",
                   significance=0.05)
        assert ours.lags == int(reference.lags)
        assert ours.statistic == pytest.approx(float(reference.statistic), rel=1e-6)
        assert ours.pvalue == pytest.approx(float(reference.pvalue), rel=1e-6)
        if factor > 1.0:
            direct = adfuller(factor * raw, maxlag=schwert_max_lags(200), regression="c", autolag="AIC",
                              result_object=True)
            assert ours.statistic == pytest.approx(float(direct.statistic), rel=1e-6)


@pytest.mark.parametrize("factor", FACTORS)
def test_rescaling_a_series_leaves_its_order_and_every_test_unchanged(factor: float) -> None:
    # Common practice: the order of integration does not depend on the units of the series.
    for values in (random_walk(30, 220), ar1(30, 220, 0.5)):
        plain = integration_order("s", as_series(values), StatsSettings())
        scaled = integration_order("s", as_series(factor * values), StatsSettings())
        assert (scaled.order, scaled.deterministic, scaled.fragile, scaled.grid) == (
            plain.order, plain.deterministic, plain.fragile, plain.grid
        )
        plain_tests, scaled_tests = _test_results(plain.tests), _test_results(scaled.tests)
        assert scaled_tests.keys() == plain_tests.keys()
        for key, result in plain_tests.items():
            assert scaled_tests[key].statistic == pytest.approx(result.statistic, rel=1e-6), key
            assert (scaled_tests[key].lags, scaled_tests[key].rejects) == (result.lags, result.rejects), key


def _t_statistics(assessment: RegressionAssessment) -> dict[str, float | None]:
    found: dict[str, float | None] = {}
    for fit in (assessment.levels, assessment.differences, assessment.long_run, assessment.error_correction):
        if fit is not None:
            found.update({f"{fit.role}:{c.term}": c.t_statistic for c in fit.coefficients})
    return found


@pytest.mark.parametrize("factor", FACTORS)
@pytest.mark.parametrize("sides", ["both", "dependent", "regressors"])
def test_rescaling_a_regression_leaves_its_verdict_and_t_statistics_unchanged(factor: float, sides: str) -> None:
    # Common practice: OLS t-statistics, R², the cointegration statistics and the verdict are
    # invariant to the units of the dependent variable and of each regressor.
    rng = np.random.default_rng([STREAM, 5])
    data = cointegrated_pair(9, 200)
    data["z"] = rng.standard_normal(200)
    cases = [(["x"], {"y": 1, "x": 1}), (["x", "z"], {"y": 1, "x": 1, "z": 0})]
    for regressors, orders in cases:
        plain = assess_regression("r", "f", "y", regressors, data, orders, StatsSettings())
        scaled_data = data.copy()
        if sides in ("both", "dependent"):
            scaled_data["y"] *= factor
        if sides in ("both", "regressors"):
            scaled_data[regressors] *= factor
        scaled = assess_regression("r", "f", "y", regressors, scaled_data, orders, StatsSettings())
        outcome = (scaled.verdict, scaled.cointegrated, scaled.flagged)
        assert outcome == (plain.verdict, plain.cointegrated, plain.flagged)
        plain_t, scaled_t = _t_statistics(plain), _t_statistics(scaled)
        assert scaled_t.keys() == plain_t.keys()
        for term, value in plain_t.items():
            assert scaled_t[term] == pytest.approx(value, rel=1e-6), term
        assert scaled.levels is not None
        assert plain.levels is not None
        assert scaled.levels.r_squared == pytest.approx(plain.levels.r_squared, rel=1e-9)
        for ours, reference in zip(scaled.engle_granger, plain.engle_granger, strict=True):
            assert (ours.statistic, ours.lags) == (pytest.approx(reference.statistic, rel=1e-6), reference.lags)
        if plain.johansen is not None:
            assert scaled.johansen is not None
            assert [s.statistic for s in scaled.johansen.trace] == pytest.approx(
                [s.statistic for s in plain.johansen.trace], rel=1e-6
            )
        if plain.bounds_test is not None:
            assert scaled.bounds_test is not None
            assert scaled.bounds_test.f_statistic == pytest.approx(plain.bounds_test.f_statistic, rel=1e-6)
            assert scaled.bounds_test.lags == plain.bounds_test.lags


# --- near-constant series -------------------------------------------------------------------------


def test_check_variation_says_how_constant_a_series_is() -> None:
    with pytest.raises(ConstantSeriesError) as constant:
        check_variation("flat", as_series(np.full(30, 5.0)))
    assert constant.value.message == "series 'flat' is constant (5 at every period)"
    assert constant.value.code == "constant-series"
    drifting = 5.0 + 1e-13 * np.arange(60.0)
    for factor in (1.0, *FACTORS):  # scale-free: the same words in any units
        with pytest.raises(ConstantSeriesError) as nearly:
            check_variation("faint", as_series(factor * drifting))
        assert nearly.value.message == (
            "series 'faint' is numerically constant: it varies only in the 13th significant digit "
            "(relative spread 1e-12)"
        )
    check_variation("enough", as_series(5.0 + 1e-9 * random_walk(40, 60)))  # above the limit: accepted
    check_variation("zero-crossing", as_series(random_walk(41, 60)))


def test_a_near_constant_series_is_refused_before_any_test(monkeypatch: pytest.MonkeyPatch) -> None:
    def no_test(*args: Any, **kwargs: Any) -> Any:
        raise AssertionError("a test ran on a near-constant series")

    monkeypatch.setattr(order_module, "adf", no_test)
    for values in (np.full(80, 2.5), 5.0 + 1e-13 * np.arange(80.0)):
        with pytest.raises(ConstantSeriesError):
            integration_order("faint", as_series(values), StatsSettings())


def test_unit_root_tests_refuse_a_numerically_constant_series() -> None:
    values = as_series(5.0 + 1e-13 * random_walk(42, 80))
    for test, call in UNIT_ROOT_CALLS.items():
        with pytest.raises(StatsInputError) as caught:
            call(values)
        expected = "cannot be run: the series is numerically constant at level 0 (relative spread"
        assert expected in caught.value.message, test


def test_a_series_just_above_the_variation_limit_gives_finite_statistics() -> None:
    # Relative spread about 1e-8, a hundred times the limit: 8 digits of variation.
    values = 1e6 + 1e-2 * random_walk(43, 150)
    assert (np.ptp(values) / np.max(np.abs(values))) > 10 * VARIATION_LIMIT
    verdict = integration_order("fine", as_series(values), StatsSettings())
    assert verdict.order is not None
    assert_finite(verdict)
    reference = integration_order("fine", as_series((values - 1e6) * 100.0), StatsSettings())
    assert verdict.order == reference.order


# --- outliers ------------------------------------------------------------------------------------


def test_a_single_huge_spike_gives_finite_statistics_and_a_verdict() -> None:
    values = random_walk(50, 200)
    values[120] += 1e6
    verdict = integration_order("spiky", as_series(values), StatsSettings())
    assert verdict.order in (0, 1, 2) or verdict.reason
    assert_finite(verdict)
    json.dumps(_plain(verdict), allow_nan=False)
    data = cointegrated_pair(10, 200)
    data.iloc[90, 0] += 1e6
    assessment = assess_regression("r", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert assessment.verdict in ("stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive")
    assert_finite(assessment)


# --- never NaN -----------------------------------------------------------------------------------


def test_feasibility_grid_every_test_gives_finite_statistics_or_the_insufficient_data_error() -> None:
    # STYLE.md: every test x deterministic choice x tiny sample gives a finite statistic (and
    # finite p-value and critical values) or the insufficient-data error, nothing else.
    calls: list[tuple[str, Callable[[pd.Series], UnitRootResult]]] = []
    for terms in ("none", "constant", "constant-trend"):
        for criterion in ("aic", "bic", "t-stat"):
            calls.append((f"ADF {terms} {criterion}", lambda v, d=terms, c=criterion: adf(
                v, level=0, deterministic=d, lag_criterion=c, significance=0.05, min_observations=3)))
        calls.append((f"PP {terms}", lambda v, d=terms: phillips_perron(
            v, level=0, deterministic=d, significance=0.05, min_observations=3)))
    for terms in ("constant", "constant-trend"):
        for criterion in ("aic", "bic", "t-stat"):
            calls.append((f"DF-GLS {terms} {criterion}", lambda v, d=terms, c=criterion: dfgls(
                v, level=0, deterministic=d, lag_criterion=c, significance=0.05, min_observations=3)))
            calls.append((f"ZA {terms} {criterion}", lambda v, d=terms, c=criterion: zivot_andrews(
                v, level=0, deterministic=d, lag_criterion=c, significance=0.05, min_observations=5)))
        calls.append((f"KPSS {terms}", lambda v, d=terms: kpss(
            v, level=0, deterministic=d, significance=0.05, min_observations=3)))
    outcomes = {"finite": 0, "too short": 0}
    for length in range(5, 41):
        for kind, values in (("walk", random_walk(60 + length, length)), ("noise", ar1(60 + length, length, 0.0))):
            series = as_series(values)
            for name, call in calls:
                try:
                    result = call(series)
                except InsufficientDataError:
                    outcomes["too short"] += 1
                    continue
                assert not non_finite_floats(result), (name, kind, length, non_finite_floats(result))
                outcomes["finite"] += 1
    assert outcomes["finite"] > 1000  # both sides of the grid are exercised
    assert outcomes["too short"] > 50


def test_an_adf_regression_without_a_residual_degree_of_freedom_is_refused() -> None:
    # Four observations, no deterministic terms, one lagged difference: two observations, two
    # parameters. statsmodels would return a t-statistic of -0.0 for this exact fit.
    with pytest.raises(SampleTooShortError) as caught:
        adf(as_series(random_walk(70, 4)), level=0, deterministic="none", lag_criterion="fixed", max_lags=1,
            significance=0.05, min_observations=3)
    assert caught.value.message == (
        "ADF without deterministic terms and 1 lagged difference needs at least 5 observations to leave a "
        "residual degree of freedom; the series has 4 at level 0"
    )


def test_a_zero_standard_error_is_recorded_as_missing_with_a_note(monkeypatch: pytest.MonkeyPatch) -> None:
    original = regression_module.newey_west_covariance

    def without_variance_for_the_slope(design: np.ndarray, residuals: np.ndarray, lags: int, **kwargs: Any):
        covariance = original(design, residuals, lags, **kwargs).copy()
        covariance[1, :] = covariance[:, 1] = 0.0
        return covariance

    monkeypatch.setattr(regression_module, "newey_west_covariance", without_variance_for_the_slope)
    data = cointegrated_pair(11, 120)
    assessment = assess_regression("r", "y ~ x", "y", ["x"], data, {"y": 0, "x": 0}, StatsSettings())
    assert assessment.levels is not None
    slope = assessment.levels.coefficients[1]
    assert (slope.term, slope.std_error, slope.t_statistic, slope.pvalue) == ("x", 0.0, None, None)
    assert (
        "The HAC standard error of x is zero (its scores x_t e_t vanish, as for a dummy that is non-zero only "
        "where the residual is zero), so its t-statistic and p-value are not defined."
    ) in assessment.levels.notes
    assert_finite(assessment)


def test_a_diagnostic_that_cannot_be_computed_is_left_out_with_a_note(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(regression_module, "jarque_bera", lambda residuals: (math.nan, math.nan, 0.0, 3.0))
    assessment = assess_regression("r", "y ~ x", "y", ["x"], cointegrated_pair(12, 120), {"y": 0, "x": 0},
                                   StatsSettings())
    assert assessment.levels is not None
    assert "Jarque-Bera" not in [diagnostic.name for diagnostic in assessment.levels.diagnostics]
    assert (
        "Jarque-Bera is not reported: its statistic cannot be computed on these residuals (a zero variance in "
        "its auxiliary regression)."
    ) in assessment.levels.notes
    assert_finite(assessment)


def test_ljung_box_matches_statsmodels() -> None:
    # statsmodels acorr_ljungbox as reference library (reportgen computes the same Q in O(T h)).
    for seed, lags in ((0, 1), (1, 5), (2, 10)):
        residuals = ar1(80 + seed, 150, 0.3)
        statistic, pvalue = regression_module._ljung_box(residuals, lags)
        reference = acorr_ljungbox(residuals, lags=[lags], return_df=True)
        assert statistic == pytest.approx(float(reference["lb_stat"].iloc[0]), rel=1e-12)
        assert pvalue == pytest.approx(float(reference["lb_pvalue"].iloc[0]), rel=1e-9)


# --- long series ---------------------------------------------------------------------------------


def test_zivot_andrews_update_equals_the_regression_at_every_break() -> None:
    # The break search partials the shared regressors out once (Frisch-Waugh-Lovell); each
    # candidate's t-statistic must be the one its own least-squares fit gives.
    for deterministic in ("constant", "constant-trend"):
        for seed, lags in ((0, 0), (1, 3)):
            values = as_series(random_walk(90 + seed, 160))
            normalised = np.asarray(values) / np.max(np.abs(np.asarray(values)))
            statistic, last_before = unitroot_module._za_search(normalised, lags, deterministic, 0.15, values, 0)
            regression = unitroot_module._za_regression(normalised, lags, deterministic)
            trimmed = int(160 * 0.15)
            direct = {
                candidate: unitroot_module._za_candidate(regression, candidate, values, 0)
                for candidate in range(trimmed, 160 - trimmed)
            }
            best = min(direct, key=lambda candidate: (direct[candidate], candidate))
            assert last_before == best
            assert statistic == pytest.approx(direct[best], rel=1e-10)


def test_long_sample_shortcuts_agree_with_the_exact_arithmetic() -> None:
    # From LARGE_SAMPLE observations on, the lag searches solve the normal equations and the ADF
    # statistic is read off them; statsmodels adfuller as reference library for the statistic.
    length = LARGE_SAMPLE + 2_000
    raw = ar1(95, length, 0.7).cumsum() / 50.0
    values = as_series(raw, freq="D", start="1900-01-01")
    result = adf(values, level=0, deterministic="constant", lag_criterion="fixed", max_lags=6, significance=0.05)
    reference = adfuller(raw, maxlag=6, regression="c", autolag=None, result_object=True)
    assert result.statistic == pytest.approx(float(reference.statistic), rel=1e-9)
    searched = adf(values, level=0, deterministic="constant", lag_criterion="bic", max_lags=8, significance=0.05)
    reference = adfuller(raw, maxlag=8, regression="c", autolag="BIC", result_object=True)
    assert searched.lags == int(reference.lags)
    design = unitroot_module._df_design(raw / np.max(np.abs(raw)), 8, 1, level_last=False)
    response = np.diff(raw / np.max(np.abs(raw)))[8:]
    fast, exact = nested_least_squares(design, response), _by_qr(_column_scaled(design), response)
    assert fast.method == "normal-equations"
    assert fast.sums_of_squares() == pytest.approx(exact.sums_of_squares(), rel=1e-10)
    za = zivot_andrews(values, level=0, deterministic="constant", significance=0.05, lag_criterion="fixed", max_lags=1)
    normalised = raw / np.max(np.abs(raw))
    regression = unitroot_module._za_regression(normalised, 1, "constant")
    position = values.index.get_loc(pd.Period(za.break_date, freq="D"))
    assert za.statistic == pytest.approx(unitroot_module._za_candidate(regression, position, values, 0), rel=1e-9)


def test_a_100000_point_series_and_regression_finish_with_finite_statistics() -> None:
    # The full procedure the runner uses (grid and Zivot-Andrews included) on 100,000 daily points.
    # Before the lag searches shared one factorisation and Zivot-Andrews searched by an update,
    # this took well over twenty minutes; it now takes about 10 s for the series and 5 s for the
    # regression on two cores. No time is asserted here (speed lives in bench/); a return to
    # quadratic cost would show as a suite that does not finish.
    length = 100_000
    rng = np.random.default_rng([STREAM, 100])
    x = 100.0 + rng.standard_normal(length).cumsum()
    index = pd.period_range("1800-01-01", periods=length, freq="D")
    verdict = integration_order("long", pd.Series(x, index=index), StatsSettings())
    assert verdict.order == 1
    assert {result.test for result in verdict.tests} == {"ADF", "PP", "DF-GLS", "KPSS", "Zivot-Andrews"}
    assert verdict.fan_chart is not None
    assert len(verdict.fan_chart.dates) == length
    assert_finite(dataclasses.replace(verdict, fan_chart=None))
    assert all(math.isfinite(value) for band in verdict.fan_chart.bands.values() for value in band)
    data = pd.DataFrame({"y": 3.0 + 0.5 * x + rng.standard_normal(length), "x": x}, index=index)
    assessment = assess_regression("long", "y ~ x", "y", ["x"], data, {"y": 1, "x": 1}, StatsSettings())
    assert assessment.verdict == "cointegrated"
    assert_finite(assessment)


# --- warnings ------------------------------------------------------------------------------------


def test_kpss_table_edge_warning_is_kept_in_the_notes_and_never_printed(
    recwarn: pytest.WarningsRecorder, capsys: pytest.CaptureFixture[str]
) -> None:
    # White noise gives KPSS statistics below the table's smallest entry, where statsmodels warns
    # (InterpolationWarning) that the true p-value is larger than the one returned.
    verdict = integration_order("noise", as_series(ar1(100, 300, 0.0)), StatsSettings())
    assert any("InterpolationWarning: The test statistic is outside of the range of p-values" in note
               for note in verdict.notes)
    assert len(recwarn) == 0
    assert capsys.readouterr() == ("", "")


def test_warnings_outside_the_tests_are_kept_in_the_series_notes(
    recwarn: pytest.WarningsRecorder, monkeypatch: pytest.MonkeyPatch
) -> None:
    original = order_module.random_walk_fan

    def warning_fan(*args: Any, **kwargs: Any) -> Any:
        warnings.warn("a remark from the simulation", RuntimeWarning, stacklevel=2)
        return original(*args, **kwargs)

    monkeypatch.setattr(order_module, "random_walk_fan", warning_fan)
    verdict = integration_order("walk", as_series(random_walk(101, 200)), StatsSettings())
    assert verdict.order == 1
    assert verdict.notes.count("RuntimeWarning: a remark from the simulation") == 1
    assert len(recwarn) == 0


def _warning_jarque_bera(monkeypatch: pytest.MonkeyPatch) -> str:
    """Make the Jarque-Bera diagnostic raise a statsmodels warning on every call; return its text."""
    original = regression_module.jarque_bera

    def warning_jarque_bera(residuals: np.ndarray) -> Any:
        warnings.warn("residuals look odd", ValueWarning, stacklevel=2)
        return original(residuals)

    monkeypatch.setattr(regression_module, "jarque_bera", warning_jarque_bera)
    return "ValueWarning: residuals look odd"


def test_a_statsmodels_warning_is_kept_in_the_assessment_and_never_printed(
    recwarn: pytest.WarningsRecorder, capsys: pytest.CaptureFixture[str], monkeypatch: pytest.MonkeyPatch
) -> None:
    text = _warning_jarque_bera(monkeypatch)
    assessment = assess_regression("r", "y ~ x", "y", ["x"], cointegrated_pair(13), {"y": 1, "x": 1},
                                   StatsSettings())
    assert assessment.verdict == "cointegrated"
    assert assessment.warnings == (text,)  # raised by four fits, kept once
    assert assessment.levels is not None
    assert text in assessment.levels.notes
    assert len(recwarn) == 0
    assert capsys.readouterr() == ("", "")


def test_regression_warnings_reach_results_json_and_the_dossier(
    small_project: Callable[..., Path], tmp_path: Path, monkeypatch: pytest.MonkeyPatch,
    recwarn: pytest.WarningsRecorder,
) -> None:
    from bs4 import BeautifulSoup

    from reportgen.runner import run

    text = _warning_jarque_bera(monkeypatch)
    out = tmp_path / "dossier"
    run(small_project(), out, ("html",), command=["reportgen", "run", "manifest.yaml"])
    document = json.loads((out / "results.json").read_text(encoding="utf-8"))
    jsonschema.validate(document, json.loads(SCHEMA.read_text(encoding="utf-8")))
    for body in document["regressions"].values():
        assert body["warnings"] == [text]
        assert list(body)[-2:] == ["warnings", "label"]  # appended: the other keys keep their order
    soup = BeautifulSoup((out / "dossier.html").read_text(encoding="utf-8"), "html.parser")
    sections = soup.select("article.regression .library-warnings")
    assert len(sections) == len(document["regressions"])
    assert all(text in section.get_text() for section in sections)
    assert len(recwarn) == 0
