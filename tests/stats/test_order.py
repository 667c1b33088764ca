"""Tests of reportgen.stats.order: the order-of-integration rule, its trail and its reasons.

Classification tests are rate-based over 50 seeded series per case: each step of the rule makes
errors at about the tests' size (5%), so requiring every seed to pass would test luck, not code.
Each threshold sits roughly 2.5 binomial standard errors or more below the rate the rule's error
sources lead one to expect; the expected rate is stated beside it.
"""

from __future__ import annotations

import re
import sys
from collections.abc import Callable

import numpy as np
import pandas as pd
import pytest
import statsmodels.api as sm
from hypothesis import assume, given, settings
from hypothesis import strategies as st

from reportgen.stats import order as order_module
from reportgen.stats.order import (
    AUXILIARY_NOTE,
    DECISION_RULE,
    DETERMINISTIC_RULE,
    difference,
    integration_order,
    mean_hac_t_statistic,
)
from reportgen.stats.types import OrderVerdict, StatsSettings
from reportgen.stats.types import TestResult as UnitRootResult  # not "Test*": pytest would collect it

LENGTH = 300
SEEDS = range(50)


def as_series(values: np.ndarray, freq: str = "M", start: str = "1990-01") -> pd.Series:
    index = pd.period_range(start=start, periods=len(values), freq=freq)
    return pd.Series(np.asarray(values, dtype=float), index=index)


def ar1(rng: np.random.Generator, length: int, coefficient: float) -> np.ndarray:
    shocks = rng.standard_normal(length)
    values = np.empty(length)
    values[0] = shocks[0] / np.sqrt(1.0 - coefficient**2)
    for t in range(1, length):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def random_walk(rng: np.random.Generator) -> np.ndarray:
    return rng.standard_normal(LENGTH).cumsum()


def white_noise(rng: np.random.Generator) -> np.ndarray:
    # The first difference of a random walk.
    return np.diff(rng.standard_normal(LENGTH + 1).cumsum())


def stationary_ar(rng: np.random.Generator) -> np.ndarray:
    return ar1(rng, LENGTH, 0.5)


def trend_stationary(rng: np.random.Generator) -> np.ndarray:
    return 1.0 + 0.05 * np.arange(LENGTH) + ar1(rng, LENGTH, 0.5)


def walk_with_drift(rng: np.random.Generator) -> np.ndarray:
    return (0.3 + rng.standard_normal(LENGTH)).cumsum()


def doubly_cumulated(rng: np.random.Generator) -> np.ndarray:
    return rng.standard_normal(LENGTH).cumsum().cumsum()


def verdicts(case: int, generate: Callable[[np.random.Generator], np.ndarray]) -> list[OrderVerdict]:
    stats_settings = StatsSettings()
    return [
        integration_order(generate.__name__, as_series(generate(np.random.default_rng([case, seed]))),
                          stats_settings)
        for seed in SEEDS
    ]


# --- Classification (common practice) ---------------------------------------------------------------


# Common practice: a random walk is I(1). Expected rate about 0.90: ADF's 5% size at level 0 and the
# KPSS test's size at level 1 each misclassify about one walk in twenty.
def test_random_walk_is_order_one() -> None:
    results = verdicts(1, random_walk)
    assert sum(verdict.order == 1 for verdict in results) >= 40


# Common practice: white noise (the difference of a random walk) is I(0). Expected rate above 0.95:
# only KPSS's size (a spurious conflict) stands in the way; ADF's power is essentially 1 here.
def test_difference_of_random_walk_is_order_zero() -> None:
    results = verdicts(2, white_noise)
    assert sum(verdict.order == 0 for verdict in results) >= 45


# Common practice: an AR(1) with coefficient 0.5 is I(0). Expected rate above 0.95, as above.
def test_stationary_ar1_is_order_zero() -> None:
    results = verdicts(3, stationary_ar)
    assert sum(verdict.order == 0 for verdict in results) >= 45


# Common practice: a + b t + AR(1) 0.5 is trend stationary: I(0) with constant and trend. Expected
# rate about 0.90 (KPSS-trend's size, inflated a little by the AR(1) errors).
def test_trend_stationary_series_is_order_zero_with_trend() -> None:
    results = verdicts(4, trend_stationary)
    hits = [verdict for verdict in results if verdict.order == 0 and verdict.deterministic[0] == "constant-trend"]
    assert len(hits) >= 40
    assert all("trend stationarity" in verdict.deterministic_reasons[0] for verdict in hits)


# Common practice: a random walk with drift is I(1), its levels trend. Expected rate about 0.95.
def test_random_walk_with_drift_is_order_one() -> None:
    results = verdicts(5, walk_with_drift)
    hits = [verdict for verdict in results if verdict.order == 1]
    assert len(hits) >= 42
    assert sum(verdict.deterministic[0] == "constant-trend" for verdict in hits) >= 42
    assert all("drift" in verdict.deterministic_reasons[0] for verdict in hits
               if verdict.deterministic[0] == "constant-trend")


# Common practice: doubly cumulated white noise is I(2). Expected rate about 0.80: besides the
# tests' size at levels 0 and 1, testing for one unit root when there are two rejects more often
# than its nominal size (Dickey and Pantula 1987, from memory), which the KPSS check turns into a
# conflict (order None), not into a wrong order 0.
def test_doubly_cumulated_noise_is_order_two() -> None:
    results = verdicts(6, doubly_cumulated)
    assert sum(verdict.order == 2 for verdict in results) >= 35
    assert sum(verdict.order == 0 for verdict in results) <= 1


# --- Structure of the verdict ------------------------------------------------------------------------


def test_verdict_records_every_test_in_order_and_marks_auxiliary_runs() -> None:
    verdict = integration_order("walk", as_series(random_walk(np.random.default_rng(7))), StatsSettings())
    assert verdict.nobs == LENGTH
    assert verdict.trail[-1] == (f"Order {verdict.order}." if verdict.order is not None
                                 else f"Order not determined: {verdict.reason}.")
    levels = sorted(verdict.deterministic)
    assert levels == list(range(len(levels)))
    for level in levels:
        at_level = [result for result in verdict.tests if result.level == level]
        deciding = [result for result in at_level if AUXILIARY_NOTE not in result.notes]
        auxiliary = [result for result in at_level if AUXILIARY_NOTE in result.notes]
        assert [result.test for result in deciding] == ["ADF", "KPSS"]
        assert all(result.deterministic == verdict.deterministic[level] for result in deciding)
        if verdict.deterministic[level] == "constant":
            # The constant-and-trend ADF that chose the terms comes first and is marked.
            assert at_level[0] is auxiliary[0]
            assert auxiliary[0].deterministic == "constant-trend"
        else:
            assert auxiliary == []
        assert verdict.deterministic_reasons[level].startswith(f"Level {level} (")
    pattern = re.compile(
        r"^Level \d \([^)]*\): ADF with constant( and trend)? (rejects|does not reject) a unit root at 5% "
        r"\(statistic -?[\d.]+(e[+-]\d+)?, p (=|<|>) [\d.]+, \d+ lagged differences? by AIC\); "
        r"KPSS (rejects|does not reject) (level|trend) stationarity at 5% "
        r"\(statistic [\d.]+(e[+-]\d+)?, p (=|<|>) [\d.]+, bandwidth \d+\); .+\.$"
    )
    findings = [sentence for sentence in verdict.trail if "KPSS" in sentence]
    assert len(findings) == len(levels)
    assert all(pattern.match(sentence) for sentence in findings), findings


def test_too_few_observations_gives_no_order() -> None:
    verdict = integration_order("short", as_series(random_walk(np.random.default_rng(8))[:16]), StatsSettings())
    assert verdict.order is None
    assert verdict.reason == "too few observations: 16 at level 0; at least 20 are needed"
    assert verdict.trail == (
        "Level 0 (short): too few observations: 16 at level 0; at least 20 are needed; no test run.",
        "Order not determined: too few observations: 16 at level 0; at least 20 are needed.",
    )
    assert verdict.tests == ()
    assert verdict.nobs == 16


def test_constant_series_gives_no_order_with_reason() -> None:
    verdict = integration_order("flat", as_series(np.full(40, 2.0)), StatsSettings())
    assert verdict.order is None
    assert verdict.reason == "ADF cannot be run: the series is constant at level 0"


def test_fixed_policy_skips_the_rule() -> None:
    values = as_series(walk_with_drift(np.random.default_rng(9)))
    fixed = integration_order("fuel", values, StatsSettings(deterministic="constant"))
    assert set(fixed.deterministic.values()) == {"constant"}
    assert fixed.deterministic_reasons[0] == (
        "Level 0 (fuel): constant only, fixed by the manifest's settings (deterministic: constant); "
        "the rule that chooses the terms was skipped."
    )
    assert all(AUXILIARY_NOTE not in result.notes for result in fixed.tests)
    overridden = integration_order("fuel", values, StatsSettings(deterministic="constant"),
                                   deterministic_override="constant-trend")
    assert set(overridden.deterministic.values()) == {"constant-trend"}
    assert overridden.deterministic_reasons[0] == (
        "Level 0 (fuel): constant and trend, fixed by the series' manifest entry (deterministic: "
        "constant-trend); the rule that chooses the terms was skipped."
    )


def test_difference_drops_leading_missing_values() -> None:
    raw = np.random.default_rng(10).standard_normal(30).cumsum().cumsum()
    values = as_series(raw, freq="Q", start="2001Q1")
    twice = difference(values, 2)
    assert len(twice) == 28
    assert str(twice.index[0]) == "2001Q3"
    np.testing.assert_allclose(twice.to_numpy(), np.diff(raw, n=2), rtol=0, atol=1e-12)
    assert difference(values, 0).equals(values)


def test_mean_hac_t_statistic_matches_statsmodels() -> None:
    # Cross-library check: statsmodels OLS on a constant with a Newey-West (HAC) covariance, Bartlett
    # kernel, no small-sample correction.
    values = 0.2 + ar1(np.random.default_rng(11), 250, 0.6)
    mean, t_statistic, lags = mean_hac_t_statistic(values)
    assert lags == int(4 * (250 / 100) ** (2 / 9))  # Newey and West (1994) rule of thumb (common practice)
    reference = sm.OLS(values, np.ones(250)).fit(cov_type="HAC", cov_kwds={"maxlags": lags,
                                                                          "use_correction": False})
    assert mean == pytest.approx(reference.params[0], abs=1e-12)
    assert t_statistic == pytest.approx(reference.tvalues[0], rel=1e-10)


def test_decision_rule_is_the_module_docstring() -> None:
    docstring = " ".join((sys.modules[integration_order.__module__].__doc__ or "").split())
    for sentence in (*DECISION_RULE, *DETERMINISTIC_RULE):
        assert sentence in docstring


# --- The decision table, with the tests replaced by stand-ins ------------------------------------


def stand_in(test: str, level: int, rejects: bool, pvalue: float, bound: str | None) -> UnitRootResult:
    return UnitRootResult(
        test=test, null_hypothesis="unit root" if test == "ADF" else "stationarity", level=level,
        deterministic="constant", statistic=-1.0, pvalue=pvalue, pvalue_bound=bound,
        critical_values={}, critical_values_source="stand-in", lags=1, lag_rule="stand-in", nobs=100,
        sample_start="", sample_end="", rejects=rejects, significance=0.05,
    )


@pytest.fixture
def scripted(monkeypatch: pytest.MonkeyPatch) -> Callable[[dict[int, tuple[bool, bool]]], OrderVerdict]:
    """Run the rule with ADF and KPSS outcomes scripted per level: {level: (adf_rejects, kpss_rejects)}."""

    def run(outcomes: dict[int, tuple[bool, bool]]) -> OrderVerdict:
        def fake_adf(values: pd.Series, *, level: int, **_: object) -> UnitRootResult:
            rejects = outcomes[level][0]
            return stand_in("ADF", level, rejects, 0.012 if rejects else 0.4, None)

        def fake_kpss(values: pd.Series, *, level: int, **_: object) -> UnitRootResult:
            rejects = outcomes[level][1]
            return stand_in("KPSS", level, rejects, 0.01 if rejects else 0.10, "<" if rejects else ">")

        monkeypatch.setattr(order_module, "adf", fake_adf)
        monkeypatch.setattr(order_module, "kpss", fake_kpss)
        values = as_series(np.arange(60.0) ** 1.5)
        return integration_order("x", values, StatsSettings(deterministic="constant"))

    return run


def test_both_tests_rejecting_is_a_conflict(scripted: Callable[..., OrderVerdict]) -> None:
    verdict = scripted({0: (False, True), 1: (True, True)})
    assert verdict.order is None
    assert verdict.reason == (
        "the tests conflict at level 1: ADF rejects a unit root (p = 0.012) "
        "and KPSS rejects level stationarity (p < 0.01)"
    )
    assert verdict.trail[-1] == f"Order not determined: {verdict.reason}."


def test_neither_test_rejecting_keeps_the_unit_root(scripted: Callable[..., OrderVerdict]) -> None:
    verdict = scripted({0: (False, False), 1: (True, False)})
    assert verdict.order == 1
    assert verdict.trail[1].endswith(
        "; neither test rejects, so the data cannot tell: reportgen keeps the unit-root presumption "
        "(the conservative choice against spurious regression)."
    )
    assert verdict.trail[-2].endswith("; the tests agree: stationary at level 1.")
    assert verdict.trail[-1] == "Order 1."


def test_never_stationary_up_to_max_order(scripted: Callable[..., OrderVerdict]) -> None:
    verdict = scripted({0: (False, True), 1: (False, True), 2: (False, True)})
    assert verdict.order is None
    assert verdict.reason == "still non-stationary after 2 differences (the highest order tested)"
    undecided = scripted({0: (False, True), 1: (False, True), 2: (False, False)})
    assert undecided.reason == (
        "still not shown to be stationary after 2 differences (the highest order tested): "
        "neither test rejects at level 2"
    )


# --- Properties ----------------------------------------------------------------------------------------


@settings(derandomize=True, max_examples=12, deadline=None)
@given(seed=st.integers(min_value=0, max_value=100_000), scale=st.sampled_from([1e-6, 1e6]))
def test_rescaling_leaves_the_verdict_unchanged(seed: int, scale: float) -> None:
    raw = walk_with_drift(np.random.default_rng(seed))
    original = integration_order("x", as_series(raw), StatsSettings())
    rescaled = integration_order("x", as_series(raw * scale), StatsSettings())
    assert rescaled.order == original.order
    assert rescaled.deterministic == original.deterministic
    assert len(rescaled.tests) == len(original.tests)
    for left, right in zip(original.tests, rescaled.tests, strict=True):
        assert (left.test, left.level, left.deterministic, left.lags) == (
            right.test, right.level, right.deterministic, right.lags)
        assert right.statistic == pytest.approx(left.statistic, rel=1e-9, abs=1e-12)


@settings(derandomize=True, max_examples=12, deadline=None)
@given(seed=st.integers(min_value=0, max_value=100_000))
def test_differencing_an_integrated_series_lowers_its_order(seed: int) -> None:
    raw = doubly_cumulated(np.random.default_rng(seed))
    values = as_series(raw)
    verdict = integration_order("x", values, StatsSettings())
    assume(verdict.order is not None and verdict.order >= 1)
    differenced = integration_order("x", difference(values, 1), StatsSettings())
    assert differenced.order == verdict.order - 1


def test_nile_smoke() -> None:
    # Smoke check on an open dataset shipped with statsmodels: annual Nile flow 1871-1970 (Cobb 1978).
    # No published order is asserted; the rule must run and give a complete verdict.
    from statsmodels.datasets import nile

    data = nile.load_pandas().data
    index = pd.PeriodIndex([pd.Period(str(int(year)), freq="Y") for year in data["year"]])
    values = pd.Series(np.log(data["volume"].to_numpy(dtype=float)), index=index)
    verdict = integration_order("log Nile flow", values, StatsSettings())
    assert verdict.nobs == 100
    assert verdict.order in (0, 1, None)
    assert verdict.tests[0].sample_end == "1970"
    assert verdict.trail[-1].startswith("Order")
