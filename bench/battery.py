"""Benchmark: reportgen's unit-root battery against the same tests run with statsmodels and arch.

The battery is what :func:`reportgen.stats.order.integration_order` runs with the default settings
(grid off, Zivot-Andrews off: it does not vote): at every differencing level 0, 1, 2 and with a
constant and with constant and trend,

* ADF, lags by AIC from 0 to Schwert's floor rule ``int(12 (T/100)^(1/4))`` (reduced when infeasible),
* Phillips-Perron ``Z_t``, Newey-West (1994) automatic bandwidth,
* DF-GLS, lags by AIC in the ADF regression of the OLS-detrended series, same maximum,
* KPSS, the decision rule's short bandwidth ``int(4 (T/100)^(1/4))``,

24 tests per series, each with its p-value. reportgen runs them with
:func:`reportgen.stats.engine.battery` on the whole block of series; the reference is the loop one
would write by hand with the same settings: ``statsmodels.tsa.stattools.adfuller(x, maxlag=M,
regression=..., autolag="AIC")``, ``statsmodels.tsa.stattools.kpss(x, regression=..., nlags=L)``,
``arch.unitroot.PhillipsPerron(x, lags=L, trend=...)`` with reportgen's bandwidth (so the reference
does not pay for choosing it) and ``arch.unitroot.DFGLS(x, trend=..., max_lags=M, method="aic")``
(which also runs an ADF lag search of its own that it then discards: that is arch's cost).

Both sides run with BLAS pinned to one thread. To be fair under noise the reference loop is split
into rounds, and the engine's whole block is timed once before every round; each round gives a
ratio of the two per-series times measured next to each other, and the median over the rounds is
reported (with the range). Timings are printed per series, as medians over the rounds.
"""

from __future__ import annotations

import argparse
import math
import statistics
import sys
import time
import warnings
from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
from arch.unitroot import DFGLS, PhillipsPerron
from statsmodels.tsa.stattools import adfuller, kpss

from reportgen.stats import engine
from reportgen.stats.numerics import single_threaded_blas

TERMS: dict[str, str] = {"constant": "c", "constant-trend": "ct"}
TESTS: tuple[str, ...] = ("ADF", "PP", "DF-GLS", "KPSS")
ADF_TARGET: float = 150.0
BATTERY_TARGET: float = 50.0


def simulated(count: int, length: int, seed: int) -> np.ndarray:
    """Random walks, AR(1) with 0.5 and 0.9, trend-stationary series and walks with drift, in turn."""
    rng = np.random.default_rng(seed)
    shocks = rng.standard_normal((count, length))
    block = np.empty((count, length))
    for row in range(count):
        kind = row % 5
        if kind == 0:
            block[row] = 10.0 + shocks[row].cumsum()
        elif kind == 4:
            block[row] = (0.2 + shocks[row]).cumsum()
        elif kind == 3:
            block[row] = 0.02 * np.arange(length) + shocks[row]
        else:
            coefficient = 0.5 if kind == 1 else 0.9
            values = np.empty(length)
            values[0] = shocks[row, 0] / math.sqrt(1.0 - coefficient**2)
            for position in range(1, length):
                values[position] = coefficient * values[position - 1] + shocks[row, position]
            block[row] = values
    return block


@dataclass
class Reference:
    """The reference loop's numbers for one series: (level, test, terms) -> (statistic, lags)."""

    numbers: dict[tuple[int, str, str], tuple[float, int]]
    seconds: dict[str, float]


def reference_battery(series: np.ndarray, bandwidths: dict[tuple[int, str], int]) -> Reference:
    """The 24 tests of one series with statsmodels and arch, timed per test."""
    numbers: dict[tuple[int, str, str], tuple[float, int]] = {}
    seconds = dict.fromkeys(TESTS, 0.0)
    current = series
    for level in range(3):
        if level:
            current = np.diff(current)
        length = current.size
        for deterministic, code in TERMS.items():
            trend_count = engine.TREND_COUNT[deterministic]
            max_lags = min(engine.schwert_max_lags(length), length // 2 - trend_count - 1)
            started = time.perf_counter()
            result = adfuller(current, maxlag=max_lags, regression=code, autolag="AIC", result_object=True)
            seconds["ADF"] += time.perf_counter() - started
            numbers[(level, "ADF", deterministic)] = (float(result.statistic), int(result.lags))

            started = time.perf_counter()
            pp = PhillipsPerron(current, lags=bandwidths[(level, deterministic)], trend=code, test_type="tau")
            statistic, _ = pp.stat, pp.pvalue
            seconds["PP"] += time.perf_counter() - started
            numbers[(level, "PP", deterministic)] = (float(statistic), int(pp.lags))

            started = time.perf_counter()
            gls = DFGLS(current, trend=code, max_lags=max_lags, method="aic")
            statistic, _ = gls.stat, gls.pvalue
            seconds["DF-GLS"] += time.perf_counter() - started
            numbers[(level, "DF-GLS", deterministic)] = (float(statistic), int(gls.lags))

            bandwidth = engine.kpss_short_bandwidth(length)
            started = time.perf_counter()
            stationarity = kpss(current, regression=code, nlags=bandwidth, result_object=True)
            seconds["KPSS"] += time.perf_counter() - started
            numbers[(level, "KPSS", deterministic)] = (float(stationarity.statistic), int(stationarity.lags))
    return Reference(numbers=numbers, seconds=seconds)


def engine_adf_only(block: np.ndarray) -> None:
    """ADF with AIC lags at every level and both terms, p-values included (the engine's part of the battery)."""
    current = block
    for level in range(3):
        if level:
            current = np.diff(current, axis=1)
        rows = engine.normalised_rows(current)
        length = current.shape[1]
        for deterministic, code in TERMS.items():
            trend_count = engine.TREND_COUNT[deterministic]
            max_lags = min(engine.schwert_max_lags(length), length // 2 - trend_count - 1)
            lags = engine.adf_lags(rows, max_lags, trend_count, ("aic",))["aic"]
            statistic, _ = engine.dickey_fuller_statistics(rows, lags, trend_count)
            engine.mackinnon_pvalues(statistic, code)


def timed(function: Callable[[], object]) -> tuple[float, object]:
    started = time.perf_counter()
    result = function()
    return time.perf_counter() - started, result


def run(count: int, length: int, rounds: int, seed: int) -> int:
    block = simulated(count, length, seed)
    print(
        f"battery: ADF (AIC) + Phillips-Perron + DF-GLS (AIC) + KPSS (short bandwidth) at levels 0, 1, 2 with "
        f"constant and with constant and trend: {len(TESTS) * 6} tests per series; grid off, Zivot-Andrews off"
    )
    print(f"series: {count} seeded (seed {seed}), T={length}; BLAS threads: 1 on both sides; {rounds} rounds")
    engine_battery: list[float] = []
    engine_adf: list[float] = []
    reference_rounds: list[dict[str, float]] = []  # per round: seconds per series of each test
    references: list[Reference] = []
    result = None
    with single_threaded_blas(), warnings.catch_warnings():
        warnings.simplefilter("ignore")  # statsmodels' KPSS InterpolationWarning at the table's ends
        engine.battery(block[: min(count, 8)])  # first-call costs (imports, caches) on neither side's clock
        bounds = np.linspace(0, count, rounds + 1).astype(int)
        for round_number in range(rounds):
            seconds, result = timed(lambda: engine.battery(block))
            engine_battery.append(seconds / count)
            engine_adf.append(timed(lambda: engine_adf_only(block))[0] / count)
            spent = dict.fromkeys(TESTS, 0.0)
            chunk = range(bounds[round_number], bounds[round_number + 1])
            for row in chunk:
                bandwidths = {
                    (level, deterministic): int(result.tests[(level, "PP", deterministic, None)].lags[row])
                    for level in range(3)
                    for deterministic in TERMS
                }
                reference = reference_battery(block[row], bandwidths)
                references.append(reference)
                for test, value in reference.seconds.items():
                    spent[test] += value
            reference_rounds.append({test: value / len(chunk) for test, value in spent.items()})
    assert result is not None

    largest_difference = 0.0
    largest_relative = 0.0
    by_test = dict.fromkeys(TESTS, 0.0)
    mismatches = 0
    for row, reference in enumerate(references):
        for (level, test, deterministic), (statistic, lags) in reference.numbers.items():
            arrays = result.tests[(level, test, deterministic, "aic" if test in ("ADF", "DF-GLS") else None)]
            ours = float(arrays.statistic[row])
            difference = abs(ours - statistic)
            largest_difference = max(largest_difference, difference)
            by_test[test] = max(by_test[test], difference)
            largest_relative = max(largest_relative, difference / max(1.0, abs(statistic)))
            mismatches += int(int(arrays.lags[row]) != lags)

    # Each round's ratio compares the engine and the reference timed next to each other.
    battery_ratios = [sum(spent.values()) / ours for spent, ours in zip(reference_rounds, engine_battery, strict=True)]
    adf_ratios = [spent["ADF"] / ours for spent, ours in zip(reference_rounds, engine_adf, strict=True)]
    battery_ratio, adf_ratio = statistics.median(battery_ratios), statistics.median(adf_ratios)
    engine_series, engine_adf_series = statistics.median(engine_battery), statistics.median(engine_adf)
    reference_series = {test: statistics.median(spent[test] for spent in reference_rounds) for test in TESTS}
    print(f"{'medians over the rounds':26s}{'reportgen':>14s}{'statsmodels/arch':>18s}{'ratio':>9s}")
    print(f"{'ADF (AIC lags), 6 tests':26s}{engine_adf_series * 1e6:11.1f} us"
          f"{reference_series['ADF'] * 1e3:15.2f} ms{adf_ratio:9.0f}")
    for test in TESTS[1:]:
        print(f"{test + ', 6 tests':26s}{'':14s}{reference_series[test] * 1e3:15.2f} ms")
    print(f"{'whole battery, 24 tests':26s}{engine_series * 1e6:11.1f} us"
          f"{sum(reference_series.values()) * 1e3:15.2f} ms{battery_ratio:9.0f}")
    print(f"ratio, whole battery: {battery_ratio:.0f} (rounds {min(battery_ratios):.0f} to {max(battery_ratios):.0f}; "
          f"target {BATTERY_TARGET:.0f}: {'reached' if battery_ratio >= BATTERY_TARGET else 'not reached'})")
    print(f"ratio, ADF with automatic lags: {adf_ratio:.0f} (rounds {min(adf_ratios):.0f} to {max(adf_ratios):.0f}; "
          f"target {ADF_TARGET:.0f}: {'reached' if adf_ratio >= ADF_TARGET else 'not reached'})")
    print(f"engine per series by round (us): battery {', '.join(f'{value * 1e6:.0f}' for value in engine_battery)}; "
          f"ADF {', '.join(f'{value * 1e6:.0f}' for value in engine_adf)}")
    print(f"max statistic difference: {largest_difference:.3g} (relative {largest_relative:.3g}); by test: "
          + ", ".join(f"{test} {value:.2g}" for test, value in by_test.items()))
    print(f"lag mismatches: {mismatches}")
    return 0 if mismatches == 0 else 1


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--series", type=int, default=1000, help="number of series (default 1000)")
    parser.add_argument("--length", type=int, default=500, help="observations per series (default 500)")
    parser.add_argument("--rounds", type=int, default=10, help="rounds the reference loop is split into (default 10)")
    parser.add_argument("--seed", type=int, default=20240601, help="seed of the simulated series")
    parser.add_argument("--quick", action="store_true", help="a smoke run: 20 series of 200 observations, 2 rounds")
    options = parser.parse_args(argv)
    if options.quick:
        options.series, options.length, options.rounds = 20, 200, 2
    return run(options.series, options.length, max(1, min(options.rounds, options.series)), options.seed)


if __name__ == "__main__":
    sys.exit(main())
