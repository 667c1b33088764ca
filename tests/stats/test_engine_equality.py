"""reportgen's own unit-root arithmetic (reportgen.stats.engine) against the reference libraries.

Seeded series of five kinds (random walk, AR(1) with 0.5 and 0.9, trend stationary, random walk
with drift) at 25 lengths spread log-evenly from 20 to 2,000. The split keeps the run modest (the
reference loops are most of its time, about half a minute on two cores):

* ADF, 500 series x lag criteria AIC / BIC / t-stat x constant / constant and trend, against
  statsmodels ``adfuller(autolag=...)`` with its default maximum lag ``ceil(12 (T/100)^(1/4))``
  (at most ``T//2 - k - 1``): the same lag, the statistic within 1e-8 (relative where larger than 1),
  the same MacKinnon p-value within 1e-10;
* KPSS, Phillips-Perron and DF-GLS, 150 of the series x constant / constant and trend: KPSS against
  statsmodels ``kpss`` with the same ``nlags`` (the decision rule's short bandwidth, and ``"auto"``);
  Phillips-Perron against arch ``PhillipsPerron`` with the same lags (reportgen's Newey-West
  bandwidth) and trend; DF-GLS against arch ``DFGLS`` with the same maximum lag and method (for
  the t-stat rule, whose arch version uses the maximum-likelihood variance, the lag against
  statsmodels' rule and the statistic against arch at that lag).

The engine works on a block of series of equal length at once; each length's series are one block.
Nothing is precomputed or stored: every reference value is computed in the test.
"""

from __future__ import annotations

import math
import os
import pathlib
import subprocess
import sys
import warnings

import numpy as np
import pytest
from arch import unitroot as arch_unitroot
from statsmodels.tsa.stattools import adfuller
from statsmodels.tsa.stattools import kpss as statsmodels_kpss

from reportgen.stats import engine

KINDS: tuple[str, ...] = ("random walk", "AR(0.5)", "AR(0.9)", "trend stationary", "drift")
LENGTHS: tuple[int, ...] = tuple(round(float(value)) for value in np.geomspace(20, 2000, 25))
SEEDS_PER_CELL: int = 4  # 5 kinds x 25 lengths x 4 = 500 series
CODES: dict[str, str] = {"constant": "c", "constant-trend": "ct"}
ADF_CRITERIA: dict[str, str] = {"aic": "AIC", "bic": "BIC", "t-stat": "t-stat"}


def _simulated(kind: str, length: int, seed: int) -> np.ndarray:
    rng = np.random.default_rng([20260421, KINDS.index(kind), length, seed])
    shocks = rng.standard_normal(length)
    if kind == "random walk":
        return 5.0 + shocks.cumsum()
    if kind == "drift":
        return (0.3 + shocks).cumsum()
    if kind == "trend stationary":
        return 2.0 + 0.05 * np.arange(length) + shocks
    coefficient = 0.5 if kind == "AR(0.5)" else 0.9
    values = np.empty(length)
    values[0] = shocks[0] / math.sqrt(1.0 - coefficient**2)
    for position in range(1, length):
        values[position] = coefficient * values[position - 1] + shocks[position]
    return values


def _blocks() -> dict[int, np.ndarray]:
    """Every length's series as one block (rows: kind-major, seed-minor)."""
    return {
        length: np.array([_simulated(kind, length, seed) for kind in KINDS for seed in range(SEEDS_PER_CELL)])
        for length in LENGTHS
    }


BLOCKS: dict[int, np.ndarray] = _blocks()


def _other_subset(block: np.ndarray) -> np.ndarray:
    """150 of the 500 series for KPSS, PP and DF-GLS: six of each length's twenty (all five kinds)."""
    return block[[0, 5, 10, 15, 2, 13]]


def test_the_series_are_as_described() -> None:
    assert sum(block.shape[0] for block in BLOCKS.values()) == 500
    assert sum(_other_subset(block).shape[0] for block in BLOCKS.values()) == 150
    assert (min(LENGTHS), max(LENGTHS)) == (20, 2000)


def _close(ours: float, reference: float, tolerance: float) -> bool:
    return abs(ours - reference) <= tolerance * max(1.0, abs(reference))


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_adf_lags_statistics_and_pvalues_match_statsmodels_adfuller(deterministic: str) -> None:
    # Reference library: statsmodels adfuller(x, regression=..., autolag=...), default maxlag.
    trend_count = engine.TREND_COUNT[deterministic]
    mismatches: list[str] = []
    compared = 0
    for length, block in BLOCKS.items():
        max_lags = engine.statsmodels_max_lags(length, trend_count)
        rows = engine.normalised_rows(block)
        fitted = engine.adf_arrays(rows, max_lags, trend_count, engine.CRITERIA)  # what the battery runs
        for criterion, (lags, statistics, status) in fitted.items():
            assert np.array_equal(lags, engine.adf_lags(rows, max_lags, trend_count, (criterion,))[criterion])
            pvalues, bounds = engine.mackinnon_pvalues(statistics, CODES[deterministic])
            assert np.all(status == engine.OK)
            for row, series in enumerate(block):
                reference = adfuller(series, regression=CODES[deterministic], autolag=ADF_CRITERIA[criterion],
                                     result_object=True)
                compared += 1
                where = f"T={length} row={row} {criterion}"
                if int(lags[row]) != int(reference.lags):
                    mismatches.append(f"{where}: lag {lags[row]} vs {reference.lags}")
                    continue
                if not _close(float(statistics[row]), float(reference.statistic), 1e-8):
                    mismatches.append(f"{where}: statistic {statistics[row]!r} vs {reference.statistic!r}")
                if bounds[row] == 0:
                    if abs(float(pvalues[row]) - float(reference.pvalue)) > 1e-10:
                        mismatches.append(f"{where}: p-value {pvalues[row]!r} vs {reference.pvalue!r}")
                else:  # statsmodels clips to 0 below the surface's range and to 1 above it
                    assert float(reference.pvalue) == (0.0 if bounds[row] < 0 else 1.0), where
    assert compared == 1500
    assert mismatches == []


def test_adf_with_reportgen_maximum_lag_matches_statsmodels_given_the_same_maxlag() -> None:
    # Reference library: statsmodels adfuller with maxlag set to reportgen's Schwert floor rule; the
    # statistic refitted on its own (dickey_fuller_statistics, the fixed-lag route).
    mismatches = []
    for length, block in BLOCKS.items():
        if length % 3:  # a third of the lengths keeps this short
            continue
        for deterministic in ("constant", "constant-trend"):
            trend_count = engine.TREND_COUNT[deterministic]
            max_lags = min(engine.schwert_max_lags(length), length // 2 - trend_count - 1)
            rows = engine.normalised_rows(block)
            lags = engine.adf_lags(rows, max_lags, trend_count, ("aic",))["aic"]
            statistics, _ = engine.dickey_fuller_statistics(rows, lags, trend_count)
            for row, series in enumerate(block):
                reference = adfuller(series, maxlag=max_lags, regression=CODES[deterministic], autolag="AIC",
                                     result_object=True)
                if int(lags[row]) != int(reference.lags) or not _close(
                    float(statistics[row]), float(reference.statistic), 1e-8
                ):
                    mismatches.append((length, deterministic, row))
    assert mismatches == []


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_kpss_matches_statsmodels_kpss_with_the_same_nlags(deterministic: str) -> None:
    # Reference library: statsmodels kpss(x, regression=..., nlags=L) and nlags="auto".
    trend_count = engine.TREND_COUNT[deterministic]
    for length, block in BLOCKS.items():
        series = _other_subset(block)
        rows = engine.normalised_rows(series)
        bandwidth = engine.kpss_short_bandwidth(length)
        short, _ = engine.kpss_arrays(rows, trend_count, bandwidth)
        automatic, automatic_lags = engine.kpss_arrays(rows, trend_count, None)
        for row, values in enumerate(series):
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")  # InterpolationWarning at the table's ends
                fixed = statsmodels_kpss(values, regression=CODES[deterministic], nlags=bandwidth, result_object=True)
                auto = statsmodels_kpss(values, regression=CODES[deterministic], nlags="auto", result_object=True)
            assert short[row] == pytest.approx(float(fixed.statistic), rel=1e-10), (length, row)
            assert int(automatic_lags[row]) == int(auto.lags), (length, row)
            assert automatic[row] == pytest.approx(float(auto.statistic), rel=1e-10), (length, row)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_phillips_perron_matches_arch_with_the_same_lags_and_trend(deterministic: str) -> None:
    # Reference library: arch.unitroot.PhillipsPerron(x, lags=L, trend=..., test_type="tau").
    trend_count = engine.TREND_COUNT[deterministic]
    for length, block in BLOCKS.items():
        series = _other_subset(block)
        computed = engine.phillips_perron_arrays(engine.normalised_rows(series), trend_count)
        pvalues, bounds = engine.mackinnon_pvalues(computed.statistic, CODES[deterministic])
        assert np.all(computed.status == engine.OK)
        for row, values in enumerate(series):
            reference = arch_unitroot.PhillipsPerron(
                values, lags=int(computed.bandwidth[row]), trend=CODES[deterministic], test_type="tau"
            )
            assert _close(float(computed.statistic[row]), float(reference.stat), 1e-8), (length, row)
            if bounds[row] == 0:
                assert float(pvalues[row]) == pytest.approx(float(reference.pvalue), abs=1e-10), (length, row)


@pytest.mark.parametrize("criterion", ["aic", "bic", "t-stat"])
@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_dfgls_matches_arch_with_the_same_maximum_lag_and_method(deterministic: str, criterion: str) -> None:
    # Reference library: arch.unitroot.DFGLS(x, trend=..., max_lags=M, method=...) for AIC and BIC:
    # the same lag (chosen in the ADF regression of the OLS-detrended series) and the same statistic.
    # arch's t-stat rule uses the maximum-likelihood variance, reportgen's (like statsmodels'
    # adfuller) the degrees-of-freedom-corrected one; for t-stat the lag is checked against
    # statsmodels adfuller(OLS-detrended series, regression="n", maxlag=M, autolag="t-stat") and
    # the statistic against arch DFGLS with that lag fixed.
    trend_count = engine.TREND_COUNT[deterministic]
    for length, block in BLOCKS.items():
        series = _other_subset(block)
        max_lags = min(engine.schwert_max_lags(length), length // 2 - trend_count - 1)
        rows = engine.normalised_rows(series)
        statistics, lags, status, _ = engine.dfgls_arrays(rows, deterministic, (criterion,), max_lags)
        _, ols_detrended = engine.dfgls_detrended(rows, deterministic)
        assert np.all(status[criterion] == engine.OK)
        for row, values in enumerate(series):
            if criterion == "t-stat":
                expected = int(adfuller(ols_detrended[row], maxlag=max_lags, regression="n", autolag="t-stat",
                                        result_object=True).lags)
                reference = arch_unitroot.DFGLS(values, trend=CODES[deterministic], lags=expected)
            else:
                reference = arch_unitroot.DFGLS(values, trend=CODES[deterministic], max_lags=max_lags, method=criterion)
                expected = int(reference.lags)
            assert int(lags[criterion][row]) == expected, (length, row)
            assert _close(float(statistics[criterion][row]), float(reference.stat), 1e-8), (length, row)


def test_a_block_gives_every_row_the_numbers_it_gets_alone() -> None:
    # The engine's rows are independent: the battery of a block equals the battery of each row
    # alone, bit for bit (common practice for vectorised statistics: no cross-row arithmetic).
    block = np.vstack([BLOCKS[LENGTHS[12]][::3], 7.0 * BLOCKS[LENGTHS[12]][1::5]])
    together = engine.battery(block, criteria=engine.CRITERIA)
    for row in range(block.shape[0]):
        alone = engine.battery(block[row : row + 1], criteria=engine.CRITERIA)
        for key, arrays in together.tests.items():
            single = alone.tests[key]
            for name in ("statistic", "pvalue", "bound", "lags", "status"):
                assert np.array_equal(getattr(arrays, name)[row : row + 1], getattr(single, name), equal_nan=True), (
                    row, key, name)


def _same_numbers(result: object, arrays: engine.TestArrays, row: int) -> bool:
    bound = {None: 0, "<": -1, ">": 1}[result.pvalue_bound]
    return (result.statistic, result.lags, result.pvalue, bound) == (
        arrays.statistic[row], arrays.lags[row], arrays.pvalue[row], arrays.bound[row])


def test_the_battery_gives_the_numbers_of_the_single_series_tests() -> None:
    # reportgen.stats.unitroot runs the same arithmetic one series at a time: identical numbers,
    # p-values and bounds included.
    import pandas as pd

    from reportgen.stats.unitroot import adf, dfgls, kpss, phillips_perron

    length = LENGTHS[10]
    block = BLOCKS[length][::4]
    battery = engine.battery(block, max_order=1, criteria=engine.CRITERIA)
    index = pd.period_range("2001-01", periods=length, freq="M")
    for row, values in enumerate(block):
        for level in (0, 1):
            series = pd.Series(np.diff(values, level) if level else values, index=index[level:])
            for deterministic in ("constant", "constant-trend"):
                for criterion in engine.CRITERIA:
                    result = adf(series, level=level, deterministic=deterministic, lag_criterion=criterion,
                                 significance=0.05)
                    assert _same_numbers(result, battery.tests[(level, "ADF", deterministic, criterion)], row)
                    result = dfgls(series, level=level, deterministic=deterministic, lag_criterion=criterion,
                                   significance=0.05)
                    assert _same_numbers(result, battery.tests[(level, "DF-GLS", deterministic, criterion)], row)
                result = phillips_perron(series, level=level, deterministic=deterministic, significance=0.05)
                assert _same_numbers(result, battery.tests[(level, "PP", deterministic, None)], row)
                short = engine.kpss_short_bandwidth(series.size)
                result = kpss(series, level=level, deterministic=deterministic, significance=0.05, lags=short)
                assert _same_numbers(result, battery.tests[(level, "KPSS", deterministic, None)], row)


def test_the_battery_benchmark_runs_and_finds_no_lag_mismatch() -> None:
    # A smoke run of bench/battery.py: it finishes and agrees with statsmodels and arch on every
    # lag. Its timings are not checked.
    root = pathlib.Path(__file__).resolve().parents[2]
    completed = subprocess.run(
        [sys.executable, str(root / "bench" / "battery.py"), "--quick"],
        capture_output=True, text=True, timeout=300, check=False, cwd=root,
        env={**os.environ, "PYTHONPATH": str(root)},
    )
    assert completed.returncode == 0, completed.stdout + completed.stderr
    assert "lag mismatches: 0" in completed.stdout
