"""Monte Carlo checks of the battery decision rule, the ADF's size, the robustness grid and the break check.

The acceptance rates are measured on a fixed seed set declared before the rule was run on it: case
``k`` uses ``numpy.random.default_rng([20240601, k, seed])`` for ``seed in range(SEEDS)``. No seed
was chosen or dropped after looking at results.
"""

from __future__ import annotations

import dataclasses
import re
from collections.abc import Callable

import numpy as np
import pandas as pd
import pytest

from reportgen.stats import order as order_module
from reportgen.stats.order import GRID_CRITERIA, GRID_TERMS, integration_order
from reportgen.stats.types import OrderVerdict, StatsSettings
from reportgen.stats.types import TestResult as UnitRootResult  # not "Test*": pytest would collect it
from reportgen.stats.unitroot import adf

LENGTH = 250
SEEDS = 200
STREAM = 20240601


def as_series(values: np.ndarray, freq: str = "M", start: str = "1990-01") -> pd.Series:
    index = pd.period_range(start=start, periods=len(values), freq=freq)
    return pd.Series(np.asarray(values, dtype=float), index=index)


def ar1(rng: np.random.Generator, length: int, coefficient: float) -> np.ndarray:
    """A stationary AR(1) started from its stationary distribution."""
    shocks = rng.standard_normal(length)
    values = np.empty(length)
    values[0] = shocks[0] / np.sqrt(1.0 - coefficient**2)
    for t in range(1, length):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def stationary_ar(rng: np.random.Generator) -> np.ndarray:
    return ar1(rng, LENGTH, 0.5)


def random_walk(rng: np.random.Generator) -> np.ndarray:
    return rng.standard_normal(LENGTH).cumsum()


def walk_with_drift(rng: np.random.Generator) -> np.ndarray:
    return (0.3 + rng.standard_normal(LENGTH)).cumsum()


def trend_stationary(rng: np.random.Generator) -> np.ndarray:
    return 1.0 + 0.05 * np.arange(LENGTH) + ar1(rng, LENGTH, 0.5)


def doubly_integrated(rng: np.random.Generator) -> np.ndarray:
    return rng.standard_normal(LENGTH).cumsum().cumsum()


# case number, generator, true order
CASES: dict[str, tuple[int, Callable[[np.random.Generator], np.ndarray], int]] = {
    "AR(1) 0.5": (1, stationary_ar, 0),
    "random walk": (2, random_walk, 1),
    "random walk with drift": (3, walk_with_drift, 1),
    "trend stationary": (4, trend_stationary, 0),
    "I(2)": (5, doubly_integrated, 2),
}


def simulated_verdicts(case: str) -> list[OrderVerdict]:
    number, generate, _ = CASES[case]
    settings = StatsSettings()
    return [
        integration_order(
            case,
            as_series(generate(np.random.default_rng([STREAM, number, seed]))),
            settings,
            grid=False,
            break_check=False,
        )
        for seed in range(SEEDS)
    ]


# --- Acceptance: the order is right in at least 95% of seeded series of length 250 ------------------


# The acceptance criterion. The DGPs are common practice; the rates a rule at 5% can reach are
# not published. Rates measured on two other seed streams (1,000 and 600 series per DGP, so about
# +-0.6 points): AR(1) 0.5 99.3%, random walk 97.1%, random walk with drift 96.2%, trend stationary
# 99.6%, I(2) 97.1%. The errors for the integrated DGPs are the battery's size: a walk that every test
# finds (trend) stationary at 5%. With 200 seeds, a true rate of 96.2% passes the 0.95 bar about 85%
# of the time; the seed set was fixed before this test first ran.
@pytest.mark.parametrize("case", list(CASES))
def test_order_is_right_in_at_least_95_percent_of_seeds(case: str) -> None:
    _, _, truth = CASES[case]
    verdicts = simulated_verdicts(case)
    rate = sum(verdict.order == truth for verdict in verdicts) / len(verdicts)
    assert rate >= 0.95, f"{case}: order {truth} in {rate:.1%} of {len(verdicts)} seeds"
    hits = [verdict for verdict in verdicts if verdict.order == truth]
    if case == "trend stationary":
        # Common practice: a + b t + AR(1) is stationary around a trend; the rule must say so.
        with_trend = [verdict for verdict in hits if verdict.deterministic[0] == "constant-trend"]
        assert len(with_trend) >= 0.95 * len(hits)
        assert all("trend stationarity" in verdict.deterministic_reasons[0] for verdict in with_trend)
    if case == "random walk with drift":
        # Common practice: a drift makes the levels trend, so the levels are tested with a trend.
        assert sum(verdict.deterministic[0] == "constant-trend" for verdict in hits) >= 0.95 * len(hits)
    if case == "random walk":
        # No drift: the rule should mostly pick a constant only (its false trends are at most ~10%).
        assert sum(verdict.deterministic[0] == "constant" for verdict in hits) >= 0.85 * len(hits)


# --- ADF size ------------------------------------------------------------------------------------


# Common practice (REFERENCES.md section 7): under a unit root the 5% ADF test rejects about 5% of the
# time. 2000 seeded driftless walks of length 200, ADF with constant and AIC lags (the battery's
# default); the binomial standard error is 0.5 points, so [0.035, 0.065] is three of them each side.
def test_adf_size_is_close_to_five_percent() -> None:
    rejections = 0
    for seed in range(2000):
        walk = as_series(np.random.default_rng([STREAM, 99, seed]).standard_normal(200).cumsum())
        result = adf(walk, level=0, deterministic="constant", lag_criterion="aic", significance=0.05)
        rejections += result.rejects
    assert 0.035 <= rejections / 2000 <= 0.065


# --- Trend critical values under a unit root -----------------------------------------------------


def trend_t_statistics(rng: np.random.Generator, nobs: int, replications: int) -> np.ndarray:
    """t-statistics of the trend in the Dickey-Fuller regression with constant and trend, random walks."""
    walks = rng.standard_normal((replications, nobs + 1)).cumsum(axis=1)
    response = np.diff(walks, axis=1)
    design = np.stack(
        [np.ones((replications, nobs)), np.broadcast_to(np.arange(1.0, nobs + 1.0), (replications, nobs)),
         walks[:, :-1]],
        axis=2,
    )
    gram = np.einsum("rti,rtj->rij", design, design)
    coefficients = np.linalg.solve(gram, np.einsum("rti,rt->ri", design, response)[..., None])[..., 0]
    residuals = response - np.einsum("rti,ri->rt", design, coefficients)
    variance = (residuals**2).sum(axis=1) / (nobs - 3)
    return coefficients[:, 1] / np.sqrt(variance * np.linalg.inv(gram)[:, 1, 1])


def test_trend_critical_values_match_dickey_fuller_and_a_fresh_simulation() -> None:
    # Dickey and Fuller (1981), Table III, the trend coefficient's t (tau_beta_tau), one-sided 95% and
    # 97.5% points, from memory: T=100 2.79 and 3.14, T=250 2.79 and 3.12. These are reportgen's
    # two-sided 10% and 5% values.
    assert order_module.trend_critical_value(100, 0.10) == pytest.approx(2.79, abs=0.015)
    assert order_module.trend_critical_value(100, 0.05) == pytest.approx(3.14, abs=0.015)
    assert order_module.trend_critical_value(250, 0.10) == pytest.approx(2.79, abs=0.015)
    assert order_module.trend_critical_value(250, 0.05) == pytest.approx(3.12, abs=0.015)
    # A fresh seeded simulation (a different seed from the table's): 40,000 walks of 100 steps. The
    # standard error of a 95% quantile from 40,000 draws is about 0.01, of a 99% quantile about 0.025.
    statistics = np.abs(trend_t_statistics(np.random.default_rng([STREAM, 7]), 100, 40_000))
    for significance in (0.10, 0.05, 0.01):
        simulated = float(np.quantile(statistics, 1.0 - significance))
        tolerance = 0.04 if significance > 0.01 else 0.08
        assert order_module.trend_critical_value(100, significance) == pytest.approx(simulated, abs=tolerance)
    # Interpolation in 1/T between the table's rows, and the T=25 row below 25.
    assert order_module.trend_critical_value(10, 0.05) == order_module.TREND_CRITICAL_VALUES[0.05][25]
    between = order_module.trend_critical_value(150, 0.05)
    assert 3.11 < between < 3.14
    with pytest.raises(ValueError, match=r"^significance must be one of 0\.01, 0\.05, 0\.1; got 0\.2$"):
        order_module.trend_critical_value(100, 0.2)


# --- Robustness grid -------------------------------------------------------------------------------


def test_grid_has_every_criterion_terms_and_test_in_a_stable_order() -> None:
    values = as_series(random_walk(np.random.default_rng([STREAM, 20, 0])))
    verdict = integration_order("walk", values, StatsSettings())
    assert len(verdict.grid) == 3 * 2 * 5
    expected = [
        (criterion, terms, test)
        for criterion in GRID_CRITERIA
        for terms in GRID_TERMS
        for test in ("ADF", "PP", "DF-GLS", "KPSS", "combined")
    ]
    assert [(cell.lag_criterion, cell.deterministic, cell.test) for cell in verdict.grid] == expected
    # PP and KPSS search no lags: the same order under every criterion for given terms.
    for test in ("PP", "KPSS"):
        for terms in GRID_TERMS:
            orders = {cell.order for cell in verdict.grid if cell.test == test and cell.deterministic == terms}
            assert len(orders) == 1
    # The combined cell with the manifest's criterion and the chosen terms is the reported order when the
    # rule chose the same terms at every level.
    if len(set(verdict.deterministic.values())) == 1:
        terms = verdict.deterministic[0]
        cell = next(cell for cell in verdict.grid
                    if cell.test == "combined" and cell.lag_criterion == "aic" and cell.deterministic == terms)
        assert cell.order == verdict.order


FRAGILE_PATTERN = re.compile(
    r"^with (a constant only|constant and trend) and (AIC|BIC|t-stat)((, (BIC|t-stat))* or (BIC|t-stat))? "
    r"lags the order is (\d|undetermined), not (\d|undetermined)"
    r"(; with (a constant only|constant and trend) and (AIC|BIC|t-stat)((, (BIC|t-stat))* or (BIC|t-stat))? "
    r"lags the order is (\d|undetermined), not (\d|undetermined))*$"
)


# Principled construction of borderline series: an AR(1) with coefficient 0.8 at T=120 is stationary but
# near the decision rule's power boundary (the rule finds it stationary in about 65-75% of samples,
# measured on two other seed streams), where a change of lag criterion or of terms flips the order in
# about half the samples (measured 0.50 and 0.52). The first 30 seeds of a fixed stream, none dropped;
# the bar is 0.25. White noise of length 250 is a clear case: measured fragile in 0.00 and 0.10 of
# samples on two other streams, every time because the t-stat criterion keeps 9-15 lags (a
# general-to-specific search from Schwert's maximum stops at a spuriously significant long lag), which
# takes the power of ADF and DF-GLS; the bar is 0.20.
def test_near_unit_root_series_are_often_fragile_and_white_noise_rarely() -> None:
    settings = StatsSettings()
    borderline = [
        integration_order("ar8", as_series(ar1(np.random.default_rng([STREAM, 21, seed]), 120, 0.8)), settings,
                          break_check=False)
        for seed in range(30)
    ]
    noise = [
        integration_order("noise", as_series(np.random.default_rng([STREAM, 22, seed]).standard_normal(250)),
                          settings, break_check=False)
        for seed in range(30)
    ]
    assert sum(verdict.fragile for verdict in borderline) >= 0.25 * len(borderline)
    assert sum(verdict.fragile for verdict in noise) <= 0.20 * len(noise)
    for verdict in borderline + noise:
        combined = {cell.order for cell in verdict.grid if cell.test == "combined"}
        assert verdict.fragile == (combined != {verdict.order})
        if verdict.fragile:
            assert verdict.fragile_reason is not None
            assert FRAGILE_PATTERN.match(verdict.fragile_reason), verdict.fragile_reason
            assert f"the order is fragile: {verdict.fragile_reason}." in verdict.trail[-2]
        else:
            assert verdict.fragile_reason is None


# --- The break check reports but does not vote -----------------------------------------------------


def test_zivot_andrews_is_reported_at_levels_0_and_1_and_does_not_vote(monkeypatch: pytest.MonkeyPatch) -> None:
    values = as_series(random_walk(np.random.default_rng([STREAM, 23, 0])))
    plain = integration_order("walk", values, StatsSettings(), grid=False)
    breaks = [result for result in plain.tests if result.test == "Zivot-Andrews"]
    assert [result.level for result in breaks] == [0, 1]
    assert all(not result.auxiliary for result in breaks)
    assert all(result.deterministic == plain.deterministic[result.level] for result in breaks)
    assert sum("Zivot-Andrews" in sentence and "it does not vote" in sentence for sentence in plain.trail) == 2

    real = order_module.zivot_andrews

    def always_rejects(values: pd.Series, **options: object) -> UnitRootResult:
        return dataclasses.replace(real(values, **options), rejects=True)  # type: ignore[arg-type]

    monkeypatch.setattr(order_module, "zivot_andrews", always_rejects)
    questioned = integration_order("walk", values, StatsSettings(), grid=False)
    assert plain.order == 1  # this walk (seed 0 of its stream) is found I(1); the note needs level 0 non-stationary
    assert questioned.order == plain.order
    assert [result.test for result in questioned.tests] == [result.test for result in plain.tests]
    level_zero_break = next(result for result in questioned.tests
                            if result.test == "Zivot-Andrews" and result.level == 0)
    note = (
        "Zivot-Andrews rejects a unit root at level 0 once one break is allowed for (last period before "
        f"the break {level_zero_break.break_date}), although the battery finds the level not stationary: "
        "if the break is real, the order may be overstated"
    )
    assert note in questioned.notes
    assert any(sentence.endswith(f"; {note}.") for sentence in questioned.trail)
    # Level 1 is stationary, so a rejection there raises no note.
    assert not any("at level 1 once one break" in item for item in questioned.notes)


def test_break_check_and_grid_do_not_change_the_order() -> None:
    for seed in range(5):
        values = as_series(walk_with_drift(np.random.default_rng([STREAM, 24, seed])))
        full = integration_order("x", values, StatsSettings())
        bare = integration_order("x", values, StatsSettings(), grid=False, break_check=False)
        assert (full.order, full.reason, full.deterministic) == (bare.order, bare.reason, bare.deterministic)
        assert bare.grid == ()
        assert not bare.fragile
        decision = [result for result in full.tests if not result.auxiliary and result.test != "Zivot-Andrews"]
        assert decision == list(bare.tests)
