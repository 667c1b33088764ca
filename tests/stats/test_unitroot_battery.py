"""Tests of the unit-root battery in reportgen.stats.unitroot: Phillips-Perron, DF-GLS, Zivot-Andrews.

Every check against an outside value names its source beside it (author, year, table; "common
practice"; or "from memory" for the values REFERENCES.md tags [MEM]). Simulated series come from
``numpy.random.default_rng`` with fixed seeds.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd
import pytest
from arch import unitroot as arch_unitroot
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.datasets import nile
from statsmodels.tsa.stattools import zivot_andrews as statsmodels_zivot_andrews

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats.unitroot import (
    adf,
    adf_feasible_max_lags,
    dfgls,
    dfgls_trend_critical_values,
    kpss,
    newey_west_bandwidth,
    phillips_perron,
    schwert_max_lags,
    zivot_andrews,
)
from reportgen.vocabulary import Deterministic

CODES: dict[str, str] = {"none": "n", "constant": "c", "constant-trend": "ct"}
SEEDS: tuple[int, ...] = tuple(range(20))
LENGTHS: tuple[int, ...] = (50, 200, 500)

# Elliott, Rothenberg and Stock (1996), Table I, DF-GLS with constant and trend, 1%, 5%, 10%; from
# memory (REFERENCES.md section 6, tagged [MEM]).
ERS_1996_TABLE_I_TREND: dict[float, tuple[float, float, float]] = {
    50: (-3.77, -3.19, -2.89),
    100: (-3.58, -3.03, -2.74),
    200: (-3.46, -2.93, -2.64),
    math.inf: (-3.48, -2.89, -2.57),
}
# The Dickey-Fuller distribution without deterministic terms, asymptotic 1%, 5%, 10%, which the
# DF-GLS statistic with constant shares (Elliott, Rothenberg and Stock 1996); from memory
# (REFERENCES.md section 6, tagged [MEM]).
DF_NO_CONSTANT_ASYMPTOTIC: tuple[float, float, float] = (-2.5657, -1.9410, -1.6168)
# MacKinnon (1996) no-constant row, (b_inf, b1, b2, b3) for 1%, 5%, 10% (REFERENCES.md section 1,
# seen in statsmodels tsa/adfvalues.py).
MACKINNON_NO_CONSTANT: dict[str, tuple[float, float, float, float]] = {
    "1%": (-2.56574, -2.2358, -3.627, 0.0),
    "5%": (-1.94100, -0.2686, -3.365, 31.223),
    "10%": (-1.61682, 0.2656, -2.714, 25.364),
}
# Zivot and Andrews (1992), asymptotic critical values for trim 0.15, 1%, 5%, 10%; from memory
# (REFERENCES.md section 6, tagged [MEM]). Model A: break in the intercept; model C: both.
ZIVOT_ANDREWS_1992: dict[str, dict[str, float]] = {
    "constant": {"1%": -5.34, "5%": -4.80, "10%": -4.58},
    "constant-trend": {"1%": -5.57, "5%": -5.08, "10%": -4.82},
}


def as_series(values: np.ndarray, freq: str = "M", start: str = "2000-01") -> pd.Series:
    """A float series on a period index, as reportgen's transforms hand it over."""
    index = pd.period_range(start=start, periods=len(values), freq=freq)
    return pd.Series(np.asarray(values, dtype=float), index=index)


def random_walk(seed: int, length: int) -> np.ndarray:
    return np.random.default_rng(seed).standard_normal(length).cumsum()


def ar1(seed: int, length: int, coefficient: float) -> np.ndarray:
    shocks = np.random.default_rng(seed).standard_normal(length)
    values = np.empty(length)
    values[0] = shocks[0] / np.sqrt(1.0 - coefficient**2)
    for t in range(1, length):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def mixed_series(seed: int, length: int) -> np.ndarray:
    """A random walk plus a persistent AR(1): serially correlated differences, so lags matter."""
    return random_walk(seed, length) + 2.0 * ar1(seed + 1000, length, 0.6)


def default_max_lags(length: int, deterministic: Deterministic) -> int:
    # reportgen's documented default: Schwert (1989) floor rule, reduced to the feasible maximum.
    return min(schwert_max_lags(length), adf_feasible_max_lags(length, deterministic))


# --- Published critical values ------------------------------------------------------------------------


@pytest.mark.parametrize("sample_size", [50, 100, 200])
def test_dfgls_trend_critical_values_reproduce_ers_table_i(sample_size: int) -> None:
    # Source: Elliott, Rothenberg and Stock (1996), Table I, constant and trend; from memory
    # (REFERENCES.md section 6). The interpolation passes through the tabulated rows exactly.
    expected = dict(zip(("1%", "5%", "10%"), ERS_1996_TABLE_I_TREND[sample_size], strict=True))
    assert dfgls_trend_critical_values(sample_size) == pytest.approx(expected, abs=1e-12)
    result = dfgls(as_series(random_walk(1, sample_size)), level=0, deterministic="constant-trend",
                   lag_criterion="aic", significance=0.05)
    assert result.critical_values == pytest.approx(expected, abs=1e-12)
    assert result.critical_values_source == (
        "Elliott, Rothenberg and Stock (1996), Table I, trend case, interpolated linearly in 1/T "
        f"at T={sample_size}"
    )


def test_dfgls_trend_critical_values_interpolate_in_inverse_sample_size() -> None:
    # Elliott, Rothenberg and Stock (1996), Table I (from memory): between the rows the values are
    # linear in 1/T; beyond T=200 they approach the asymptotic row; below T=50 the T=50 row holds.
    weight = (1 / 150 - 1 / 200) / (1 / 100 - 1 / 200)
    for column, key in enumerate(("1%", "5%", "10%")):
        low, high = ERS_1996_TABLE_I_TREND[100][column], ERS_1996_TABLE_I_TREND[200][column]
        assert dfgls_trend_critical_values(150)[key] == pytest.approx(high + weight * (low - high), abs=1e-12)
        assert dfgls_trend_critical_values(10**9)[key] == pytest.approx(ERS_1996_TABLE_I_TREND[math.inf][column],
                                                                       abs=1e-6)
        assert dfgls_trend_critical_values(30)[key] == ERS_1996_TABLE_I_TREND[50][column]
    short = dfgls(as_series(random_walk(2, 30)), level=0, deterministic="constant-trend", lag_criterion="bic",
                  significance=0.05)
    assert "Elliott, Rothenberg and Stock (1996) Table I starts at T=50; its T=50 row is used for T=30, " \
           "which makes the test somewhat too ready to reject" in short.notes


def test_dfgls_constant_case_uses_the_no_constant_dickey_fuller_distribution() -> None:
    # Source: Elliott, Rothenberg and Stock (1996): with a constant the DF-GLS statistic has the
    # Dickey-Fuller distribution without deterministic terms. Asymptotic values from memory
    # (REFERENCES.md section 6); finite-T values on MacKinnon's (1996) surface (section 1).
    long = dfgls(as_series(random_walk(3, 20_001), freq="D", start="1900-01-01"), level=0,
                 deterministic="constant", lag_criterion="fixed", significance=0.05, max_lags=0)
    assert long.nobs == 20_000
    for key, expected in zip(("1%", "5%", "10%"), DF_NO_CONSTANT_ASYMPTOTIC, strict=True):
        assert long.critical_values[key] == pytest.approx(expected, abs=2e-4)
    short = dfgls(as_series(random_walk(4, 80)), level=0, deterministic="constant", lag_criterion="fixed",
                  significance=0.05, max_lags=2)
    nobs = 80 - 1 - 2
    assert short.nobs == nobs
    for key, (b_inf, b1, b2, b3) in MACKINNON_NO_CONSTANT.items():
        assert short.critical_values[key] == pytest.approx(b_inf + b1 / nobs + b2 / nobs**2 + b3 / nobs**3,
                                                           abs=1e-9)
    assert short.critical_values_source.startswith(
        f"MacKinnon (1996) response surface without deterministic terms, T={nobs}"
    )


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_zivot_andrews_critical_values_are_the_published_asymptotic_values(deterministic: Deterministic) -> None:
    # Source: Zivot and Andrews (1992), asymptotic critical values for models A and C, trim 0.15;
    # from memory (REFERENCES.md section 6).
    result = zivot_andrews(as_series(random_walk(5, 120)), level=0, deterministic=deterministic,
                           significance=0.05)
    assert result.critical_values == ZIVOT_ANDREWS_1992[deterministic]
    model = "A (break in the intercept)" if deterministic == "constant" else "C (breaks in intercept and trend)"
    assert result.critical_values_source == (
        f"Zivot and Andrews (1992), asymptotic critical values, model {model}, tabulated for trim 0.15"
    )


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_zivot_andrews_pvalue_table_agrees_with_the_published_values_at_5_and_10_percent(
    deterministic: Deterministic,
) -> None:
    # Two sources side by side: statsmodels' simulated quantiles (100,000 replications of 2,000
    # observations, tsa/stattools zivot_andrews) and Zivot and Andrews (1992), from memory. At the
    # published 5% and 10% values the simulated p-value is within 0.01 of nominal. (At 1% they
    # differ more for model A: the simulated 1% quantile is -5.28 against the published -5.34.)
    from reportgen.stats.unitroot import _za_pvalue

    for key, nominal in (("5%", 0.05), ("10%", 0.10)):
        pvalue, bound = _za_pvalue(ZIVOT_ANDREWS_1992[deterministic][key], deterministic)
        assert bound is None
        assert pvalue == pytest.approx(nominal, abs=0.01)


# --- Agreement with arch (REFERENCES.md section 9) ------------------------------------------------------


@pytest.mark.parametrize("length", LENGTHS)
@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
def test_phillips_perron_matches_arch_at_a_fixed_bandwidth(length: int, deterministic: Deterministic) -> None:
    # Cross-library check: arch.unitroot.PhillipsPerron(y, lags=L, trend=..., test_type="tau"),
    # with the same Bartlett bandwidth L (REFERENCES.md section 9).
    for seed in SEEDS:
        raw = mixed_series(seed, length)
        for bandwidth in (0, 5, 12):
            result = phillips_perron(as_series(raw), level=0, deterministic=deterministic, significance=0.05,
                                     bandwidth=bandwidth)
            reference = arch_unitroot.PhillipsPerron(raw, lags=bandwidth, trend=CODES[deterministic],
                                                     test_type="tau")
            assert (result.lags, result.bandwidth, result.nobs) == (bandwidth, bandwidth, length - 1)
            assert result.statistic == pytest.approx(reference.stat, abs=1e-8)
            for key, value in result.critical_values.items():
                assert value == pytest.approx(reference.critical_values[key], abs=1e-10)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_phillips_perron_automatic_bandwidth_matches_arch_auto_bandwidth(deterministic: Deterministic) -> None:
    # Cross-library check: arch.unitroot.auto_bandwidth(u, "ba") (Newey and West 1994, Bartlett;
    # REFERENCES.md section 7). arch rounds its autocovariance sums to integers, so its input is
    # scaled up to make that rounding negligible; the statistic then matches arch at that bandwidth.
    for seed in SEEDS:
        for length in LENGTHS:
            raw = mixed_series(seed, length)
            result = phillips_perron(as_series(raw), level=0, deterministic=deterministic, significance=0.05)
            residuals = arch_unitroot.PhillipsPerron(raw, lags=0, trend=CODES[deterministic]).regression.resid
            scaled = np.asarray(residuals) / np.std(residuals) * 1e6
            assert result.bandwidth == int(arch_unitroot.auto_bandwidth(scaled, kernel="ba"))
            reference = arch_unitroot.PhillipsPerron(raw, lags=result.bandwidth, trend=CODES[deterministic])
            assert result.statistic == pytest.approx(reference.stat, abs=1e-8)
            assert result.bandwidth_rule.startswith("Newey and West (1994) automatic bandwidth, Bartlett kernel")


def test_phillips_perron_matches_the_textbook_formula() -> None:
    # Source: Hamilton (1994), Time Series Analysis, eq. 17.6.8 (Phillips and Perron 1988), computed
    # here with plain least squares: Z_t = sqrt(g0/l2) t - (l2 - g0) T se / (2 sqrt(l2) s).
    raw = mixed_series(7, 150)
    bandwidth = 4
    response, lagged = raw[1:], raw[:-1]
    nobs = response.size
    design = np.column_stack([np.ones(nobs), np.arange(1.0, nobs + 1.0), lagged])
    coefficients, *_ = np.linalg.lstsq(design, response, rcond=None)
    residuals = response - design @ coefficients
    s2 = residuals @ residuals / (nobs - 3)
    standard_error = math.sqrt(s2 * np.linalg.inv(design.T @ design)[2, 2])
    gamma0 = residuals @ residuals / nobs
    long_run = gamma0 + 2 * sum((1 - j / (bandwidth + 1)) * (residuals[j:] @ residuals[:-j]) / nobs
                                for j in range(1, bandwidth + 1))
    t_statistic = (coefficients[2] - 1) / standard_error
    expected = math.sqrt(gamma0 / long_run) * t_statistic - (long_run - gamma0) * nobs * standard_error / (
        2 * math.sqrt(long_run) * math.sqrt(s2))
    result = phillips_perron(as_series(raw), level=0, deterministic="constant-trend", significance=0.05,
                             bandwidth=bandwidth)
    assert result.statistic == pytest.approx(expected, abs=1e-9)


@pytest.mark.parametrize("length", LENGTHS)
@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
@pytest.mark.parametrize("criterion", ["aic", "bic"])
def test_dfgls_statistic_and_lag_choice_match_arch(length: int, deterministic: Deterministic,
                                                    criterion: str) -> None:
    # Cross-library check: arch.unitroot.DFGLS(y, trend=..., max_lags=same, method=...), which
    # chooses the lag on the OLS-detrended series (REFERENCES.md section 9).
    max_lags = default_max_lags(length, deterministic)
    for seed in SEEDS:
        raw = mixed_series(seed, length)
        result = dfgls(as_series(raw), level=0, deterministic=deterministic, lag_criterion=criterion,
                       significance=0.05)
        reference = arch_unitroot.DFGLS(raw, trend=CODES[deterministic], max_lags=max_lags, method=criterion)
        assert result.lags == reference.lags
        assert result.nobs == length - 1 - result.lags
        assert result.statistic == pytest.approx(reference.stat, abs=1e-8)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_dfgls_matches_arch_with_fixed_lags(deterministic: Deterministic) -> None:
    # Cross-library check: arch.unitroot.DFGLS(y, lags=p, trend=...) (REFERENCES.md section 9).
    for seed in SEEDS[:5]:
        raw = mixed_series(seed, 200)
        for lags in (0, 3, 9):
            result = dfgls(as_series(raw), level=0, deterministic=deterministic, lag_criterion="fixed",
                           significance=0.05, max_lags=lags)
            reference = arch_unitroot.DFGLS(raw, lags=lags, trend=CODES[deterministic])
            assert (result.lags, result.nobs) == (lags, 200 - 1 - lags)
            assert result.statistic == pytest.approx(reference.stat, abs=1e-8)


def test_dfgls_t_stat_lag_rule_is_general_to_specific_with_classical_t_statistics() -> None:
    # Common practice (Ng and Perron 1995's general-to-specific rule, as statsmodels' adfuller
    # applies it): the largest lag whose last coefficient has |t| >= 1.645 (two-sided 10%), every
    # candidate on the common sample of the largest lag, t from the degrees-of-freedom-corrected
    # variance. (arch's rule uses the ML variance, so its choice can be one lag longer or more.)
    for seed in SEEDS[:8]:
        raw = mixed_series(seed, 120)
        result = dfgls(as_series(raw), level=0, deterministic="constant", lag_criterion="t-stat",
                       significance=0.05, max_lags=8)
        demeaned = raw / np.max(np.abs(raw))
        demeaned = demeaned - demeaned.mean()
        differences = np.diff(demeaned)
        rows = differences.size - 8
        response = differences[8:]
        expected = 0
        for lags in range(8, 0, -1):
            columns = [demeaned[8:-1]] + [differences[8 - j: 8 - j + rows] for j in range(1, lags + 1)]
            design = np.column_stack(columns)
            coefficients, *_ = np.linalg.lstsq(design, response, rcond=None)
            residuals = response - design @ coefficients
            variance = residuals @ residuals / (rows - design.shape[1])
            t_last = coefficients[-1] / math.sqrt(variance * np.linalg.inv(design.T @ design)[-1, -1])
            if abs(t_last) >= 1.6448536269514722:
                expected = lags
                break
        assert result.lags == expected


@pytest.mark.parametrize("length", LENGTHS)
@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_zivot_andrews_matches_arch_with_fixed_lags(length: int, deterministic: Deterministic) -> None:
    # Cross-library check: arch.unitroot.ZivotAndrews(y, lags=p, trend=..., trim=0.15)
    # (REFERENCES.md section 9: identical statistics expected).
    for seed in SEEDS:
        raw = mixed_series(seed, length)
        lags = 1 + seed % 4
        result = zivot_andrews(as_series(raw), level=0, deterministic=deterministic, significance=0.05,
                               lag_criterion="fixed", max_lags=lags)
        reference = arch_unitroot.ZivotAndrews(raw, lags=lags, trend=CODES[deterministic], trim=0.15)
        assert (result.lags, result.nobs) == (lags, length - 1 - lags)
        assert result.statistic == pytest.approx(reference.stat, abs=1e-8)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_zivot_andrews_break_and_lag_choice_match_statsmodels(deterministic: Deterministic) -> None:
    # Cross-library check: statsmodels.tsa.stattools.zivot_andrews returns bpidx, the 0-based
    # position of the last period before the break (its source: the dummies start at bpidx + 1),
    # and chooses the lag with adfuller(..., regression="ct", autolag=...). (statsmodels treats
    # maxlag=0 with autolag=None as "use the default", so fixed lags here start at 1.)
    for seed in SEEDS[:6]:
        raw = mixed_series(seed, 160)
        values = as_series(raw, freq="Q", start="1970Q1")
        result = zivot_andrews(values, level=0, deterministic=deterministic, significance=0.05,
                               lag_criterion="fixed", max_lags=2)
        statistic, _, _, lags, position = statsmodels_zivot_andrews(raw, trim=0.15, maxlag=2,
                                                                    regression=CODES[deterministic], autolag=None)
        assert lags == 2
        assert result.statistic == pytest.approx(statistic, abs=1e-8)
        assert result.break_date == str(values.index[position])
        chosen = zivot_andrews(values, level=0, deterministic=deterministic, significance=0.05,
                               lag_criterion="aic", max_lags=8)
        reference = arch_unitroot.ZivotAndrews(raw, trend=CODES[deterministic], max_lags=8, method="aic")
        assert chosen.lags == reference.lags
        assert chosen.statistic == pytest.approx(reference.stat, abs=1e-8)


# --- Size and power (common practice) -----------------------------------------------------------------


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_phillips_perron_and_dfgls_size_and_power(deterministic: Deterministic) -> None:
    # Common practice: at the 5% level a unit-root test should rarely reject a random walk and
    # almost always reject a stationary AR(1) with coefficient 0.5 at T=250; 200 seeds each, default
    # bandwidth (PP) and AIC lags (DF-GLS).
    def rejections(make: object, test: str) -> float:
        count = 0
        for seed in range(200):
            values = as_series(make(seed))  # type: ignore[operator]
            if test == "PP":
                result = phillips_perron(values, level=0, deterministic=deterministic, significance=0.05)
            else:
                result = dfgls(values, level=0, deterministic=deterministic, lag_criterion="aic",
                               significance=0.05)
            count += result.rejects
        return count / 200

    for test in ("PP", "DF-GLS"):
        assert rejections(lambda seed: random_walk(20_000 + seed, 250), test) <= 0.15
        assert rejections(lambda seed: ar1(30_000 + seed, 250, 0.5), test) >= 0.90


# --- Nile and the break-date convention --------------------------------------------------------------


@pytest.mark.parametrize("criterion", ["aic", "bic"])
def test_zivot_andrews_dates_the_nile_level_shift(criterion: str) -> None:
    # Source: statsmodels.datasets.nile (Cobb 1978), annual Nile flow 1871-1970; the classic level
    # shift is around 1898 (from memory, REFERENCES.md section 8). reportgen's break date is the last
    # year of the old regime.
    data = nile.load_pandas().data
    index = pd.period_range(str(int(data["year"].iloc[0])), periods=len(data), freq="Y")
    flow = pd.Series(data["volume"].to_numpy(dtype=float), index=index)
    result = zivot_andrews(flow, level=0, deterministic="constant", significance=0.05, lag_criterion=criterion)
    assert result.break_date is not None
    year = int(result.break_date)
    assert 1896 <= year <= 1902
    assert (
        f"break date {year} is the last period before the break (Zivot and Andrews' T_B); the break terms "
        f"are nonzero from {year + 1} on, which some programs report as the break date"
    ) in result.notes
    assert result.rejects  # the flow is stationary around a shifted mean


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
@pytest.mark.parametrize(("length", "first_new"), [(60, 25), (100, 40), (200, 130)])
def test_zivot_andrews_break_date_is_the_last_period_before_a_known_shift(
    deterministic: Deterministic, length: int, first_new: int
) -> None:
    # A stationary AR(1) that jumps by 10 standard deviations from position first_new on: the
    # break date must be the period just before, the notes must name first_new as the new regime.
    raw = ar1(41 + length, length, 0.5) + np.where(np.arange(length) >= first_new, 10.0, 0.0)
    values = as_series(raw, freq="Y", start="1900")
    result = zivot_andrews(values, level=0, deterministic=deterministic, significance=0.05,
                           lag_criterion="fixed", max_lags=1)
    assert result.break_date == str(1900 + first_new - 1)
    assert any(f"nonzero from {1900 + first_new} on" in note for note in result.notes)


# --- p-value policies -----------------------------------------------------------------------------------


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_dfgls_pvalue_interpolates_critical_values_and_agrees_with_the_decision(
    deterministic: Deterministic,
) -> None:
    seen: set[str | None] = set()
    for seed in range(40):
        raw = ar1(500 + seed, 150, 0.85) if seed % 2 else random_walk(500 + seed, 150)
        for significance in (0.01, 0.05, 0.10):
            result = dfgls(as_series(raw), level=0, deterministic=deterministic, lag_criterion="bic",
                           significance=significance)
            seen.add(result.pvalue_bound)
            points = [result.critical_values[key] for key in ("1%", "5%", "10%")]
            key = {0.01: "1%", 0.05: "5%", 0.10: "10%"}[significance]
            assert result.rejects == (result.statistic < result.critical_values[key])
            if result.statistic < points[0]:
                assert (result.pvalue_bound, result.pvalue) == ("<", 0.01)
            elif result.statistic > points[2]:
                assert (result.pvalue_bound, result.pvalue) == (">", 0.10)
            else:
                assert result.pvalue_bound is None
                assert result.pvalue == pytest.approx(np.interp(result.statistic, points, [0.01, 0.05, 0.10]))
                assert result.rejects == (result.pvalue < significance)
            assert result.pvalue_source.startswith("interpolated linearly between the 1%, 5% and 10% critical")
    assert {"<", ">", None} <= seen


def test_zivot_andrews_pvalue_beyond_the_simulated_range_is_a_bound() -> None:
    # statsmodels' simulated quantiles for model A run from -6.78442 (0.001%) to -1.88932 (99.9%)
    # (tsa/stattools zivot_andrews). White noise gives a statistic far below; an explosive AR(1)
    # one above.
    noise = np.random.default_rng(61).standard_normal(400)
    low = zivot_andrews(as_series(noise), level=0, deterministic="constant", significance=0.05)
    assert low.statistic < -6.78442
    assert (low.pvalue_bound, low.pvalue) == ("<", pytest.approx(1e-5))
    assert low.rejects
    shocks = np.random.default_rng(62).standard_normal(150)
    explosive = np.empty(150)
    explosive[0] = shocks[0]
    for t in range(1, 150):
        explosive[t] = 1.03 * explosive[t - 1] + shocks[t]
    high = zivot_andrews(as_series(explosive), level=0, deterministic="constant", significance=0.05,
                         lag_criterion="fixed", max_lags=1)
    assert high.statistic > -1.88932
    assert (high.pvalue_bound, high.pvalue) == (">", pytest.approx(0.999))
    assert not high.rejects


def test_phillips_perron_pvalue_is_mackinnons_like_adf() -> None:
    # The PP Z_t shares the Dickey-Fuller distribution (Phillips and Perron 1988): at bandwidth 0
    # it is the DF t-statistic, so its critical values and p-value equal those of adf with no lags.
    raw = mixed_series(63, 180)
    for deterministic in ("none", "constant", "constant-trend"):
        pp = phillips_perron(as_series(raw), level=0, deterministic=deterministic, significance=0.05, bandwidth=0)
        df = adf(as_series(raw), level=0, deterministic=deterministic, lag_criterion="fixed", significance=0.05,
                 max_lags=0)
        assert pp.statistic == pytest.approx(df.statistic, abs=1e-10)
        assert pp.pvalue == pytest.approx(df.pvalue, abs=1e-10)
        assert pp.critical_values == pytest.approx(df.critical_values, abs=1e-12)
        assert pp.pvalue_source == df.pvalue_source == (
            "MacKinnon (1994) response surface; a bound beyond its range"
        )


def test_result_fields_record_the_conventions() -> None:
    values = as_series(mixed_series(64, 150))
    pp = phillips_perron(values, level=0, deterministic="constant", significance=0.05)
    assert (pp.test, pp.null_hypothesis, pp.lag_criterion, pp.lags) == ("PP", "unit root", None, pp.bandwidth)
    assert pp.bandwidth_rule == pp.lag_rule == (
        "Newey and West (1994) automatic bandwidth, Bartlett kernel with weights 1 - j/(L+1), "
        "pilot int(4 (T/100)^(2/9)), L = int(1.1447 (s1/s0)^(2/3) T^(1/3))"
    )
    assert (pp.sample_start, pp.sample_end, pp.nobs) == ("2000-02", "2012-06", 149)
    gls = dfgls(values, level=1, deterministic="constant-trend", lag_criterion="bic", significance=0.10)
    assert (gls.test, gls.level, gls.lag_criterion, gls.bandwidth) == ("DF-GLS", 1, "bic", None)
    assert gls.lag_rule == (
        "BIC in the ADF regression of the OLS-detrended series (Perron and Qu 2007), searched 0 to "
        "13 lagged differences (Schwert 1989, floor rule)"
    )
    za = zivot_andrews(values, level=0, deterministic="constant", significance=0.05)
    assert (za.test, za.null_hypothesis, za.lag_criterion) == ("Zivot-Andrews", "unit root", "aic")
    assert za.lag_rule == (
        "AIC in the ADF regression with constant and trend and no break terms (Baum 2004), searched 0 to "
        "13 lagged differences (Schwert 1989, floor rule)"
    )
    assert za.sample_start == values.index[za.lags + 1].strftime("%Y-%m")
    assert za.pvalue_source.startswith("interpolated linearly in statsmodels' simulated quantiles")
    first = adf(values, level=0, deterministic="constant", lag_criterion="aic", significance=0.05)
    assert (first.lag_criterion, first.bandwidth) == ("aic", None)
    second = kpss(values, level=0, deterministic="constant", significance=0.05)
    assert second.bandwidth == second.lags
    assert second.bandwidth_rule == second.lag_rule


# --- Rescaling ----------------------------------------------------------------------------------------


@settings(derandomize=True, max_examples=15, deadline=None)
@given(
    seed=st.integers(min_value=0, max_value=10_000),
    scale=st.sampled_from([1e-6, 1e6]),
    deterministic=st.sampled_from(["constant", "constant-trend"]),
    criterion=st.sampled_from(["aic", "bic", "t-stat"]),
)
def test_rescaling_leaves_battery_statistics_unchanged(seed: int, scale: float, deterministic: Deterministic,
                                                       criterion: str) -> None:
    # STYLE.md: rescaling a series leaves every test statistic (and lag and bandwidth) unchanged.
    raw = random_walk(seed, 140) + ar1(seed + 1, 140, 0.4)
    original, rescaled = as_series(raw), as_series(raw * scale)
    pp_a = phillips_perron(original, level=0, deterministic=deterministic, significance=0.05)
    pp_b = phillips_perron(rescaled, level=0, deterministic=deterministic, significance=0.05)
    assert pp_b.bandwidth == pp_a.bandwidth
    assert pp_b.statistic == pytest.approx(pp_a.statistic, rel=1e-10, abs=1e-12)
    gls_a = dfgls(original, level=0, deterministic=deterministic, lag_criterion=criterion, significance=0.05)
    gls_b = dfgls(rescaled, level=0, deterministic=deterministic, lag_criterion=criterion, significance=0.05)
    assert gls_b.lags == gls_a.lags
    assert gls_b.statistic == pytest.approx(gls_a.statistic, rel=1e-10, abs=1e-12)
    za_a = zivot_andrews(original, level=0, deterministic=deterministic, significance=0.05, lag_criterion=criterion)
    za_b = zivot_andrews(rescaled, level=0, deterministic=deterministic, significance=0.05, lag_criterion=criterion)
    assert (za_b.lags, za_b.break_date) == (za_a.lags, za_a.break_date)
    assert za_b.statistic == pytest.approx(za_a.statistic, rel=1e-10, abs=1e-12)


def test_newey_west_bandwidth_does_not_depend_on_units() -> None:
    # Newey and West (1994): only the ratio s1/s0 enters. arch's auto_bandwidth rounds its sums to
    # integers (REFERENCES.md section 7), so at small scales its answer changes; reportgen's must not.
    residuals = ar1(65, 300, 0.7)
    bandwidths = {newey_west_bandwidth(residuals * scale) for scale in (1e-9, 1e-3, 1.0, 1e3, 1e9)}
    assert len(bandwidths) == 1
    assert bandwidths.pop() >= 1


# --- Feasibility grid, messages and bad input -----------------------------------------------------------


def _battery_results(values: pd.Series, deterministic: Deterministic, min_observations: int | None) -> list[float]:
    """Run every new test; return the statistics of those that ran (InsufficientDataError skips)."""
    extra = {} if min_observations is None else {"min_observations": min_observations}
    runs = [lambda: phillips_perron(values, level=0, deterministic=deterministic, significance=0.05, **extra)]
    runs.append(lambda: phillips_perron(values, level=0, deterministic=deterministic, significance=0.05,
                                        bandwidth=2, **extra))
    if deterministic != "none":
        for criterion in ("aic", "bic", "t-stat"):
            runs.append(lambda criterion=criterion: dfgls(values, level=0, deterministic=deterministic,
                                                          lag_criterion=criterion, significance=0.05, **extra))
            runs.append(lambda criterion=criterion: zivot_andrews(values, level=0, deterministic=deterministic,
                                                                  significance=0.05, lag_criterion=criterion,
                                                                  **extra))
        runs.append(lambda: dfgls(values, level=0, deterministic=deterministic, lag_criterion="fixed",
                                  significance=0.05, max_lags=2, **extra))
        runs.append(lambda: zivot_andrews(values, level=0, deterministic=deterministic, significance=0.05,
                                          lag_criterion="fixed", max_lags=0, **extra))
    statistics: list[float] = []
    for run in runs:
        try:
            statistics.append(run().statistic)
        except InsufficientDataError:
            continue
    return statistics


@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
def test_feasibility_grid_gives_a_statistic_or_the_insufficient_data_error(deterministic: Deterministic) -> None:
    # STYLE.md "feasibility grid": every test x deterministic choice x tiny sample gives a finite
    # statistic or the dedicated error, nothing else: at the default minimum sample sizes, and with
    # the minimum lowered to 3 so that the structural limits of each regression are reached.
    ran = 0
    for length in (5, 10, 19, 20, 30):
        statistics = _battery_results(as_series(random_walk(70 + length, length)), deterministic, None)
        assert all(np.isfinite(statistics))
        ran += len(statistics)
    for length in range(2, 41):
        statistics = _battery_results(as_series(random_walk(170 + length, length)), deterministic, 3)
        assert all(np.isfinite(statistics))
        ran += len(statistics)
    assert ran > 0


def test_phillips_perron_too_short_series_messages() -> None:
    with pytest.raises(InsufficientDataError) as caught:
        phillips_perron(as_series(random_walk(80, 12)), level=1, deterministic="constant", significance=0.05)
    assert caught.value.message == (
        "Phillips-Perron with constant needs at least 20 observations; the series has 12 at level 1"
    )
    assert caught.value.category == "Insufficient data"
    with pytest.raises(InsufficientDataError) as caught:
        phillips_perron(as_series(random_walk(81, 25)), level=0, deterministic="constant-trend",
                        significance=0.05, bandwidth=30)
    assert caught.value.message == (
        "Phillips-Perron with constant and trend and a bandwidth of 30 needs at least 32 observations; "
        "the series has 25 at level 0"
    )


def test_dfgls_too_short_series_message() -> None:
    with pytest.raises(InsufficientDataError) as caught:
        dfgls(as_series(random_walk(82, 16)), level=0, deterministic="constant-trend", lag_criterion="aic",
              significance=0.05, max_lags=4)
    assert caught.value.message == (
        "DF-GLS with constant and trend and up to 4 lagged differences needs at least 20 observations; "
        "the series has 16 at level 0"
    )
    with pytest.raises(InsufficientDataError) as caught:
        dfgls(as_series(random_walk(83, 30)), level=0, deterministic="constant", lag_criterion="fixed",
              significance=0.05, max_lags=14)
    assert caught.value.message == (
        "DF-GLS with constant and 14 lagged differences needs at least 32 observations; "
        "the series has 30 at level 0"
    )


def test_zivot_andrews_too_short_series_messages() -> None:
    with pytest.raises(InsufficientDataError) as caught:
        zivot_andrews(as_series(random_walk(84, 24)), level=0, deterministic="constant", significance=0.05)
    assert caught.value.message == (
        "Zivot-Andrews with a break in the intercept (model A), trim 0.15 and up to 2 lagged differences "
        "needs at least 30 observations; the series has 24 at level 0"
    )
    # With 40 observations int(0.15 * 40) = 6 periods are trimmed at each end; model C needs two
    # periods of each regime inside the regression sample, so 5 lags need int(0.15 T) >= 7: T >= 47.
    with pytest.raises(InsufficientDataError) as caught:
        zivot_andrews(as_series(random_walk(85, 40)), level=2, deterministic="constant-trend",
                      significance=0.05, lag_criterion="fixed", max_lags=5)
    assert caught.value.message == (
        "Zivot-Andrews with breaks in the intercept and the trend (model C), trim 0.15 and 5 lagged "
        "differences needs at least 47 observations; the series has 40 at level 2"
    )


def test_default_zivot_andrews_lags_are_reduced_to_stay_feasible() -> None:
    # T=30: Schwert's floor rule gives int(12 * 0.3**0.25) = 8, but int(0.15 * 30) = 4 trimmed periods
    # leave room for at most 3 lagged differences with an intercept break.
    result = zivot_andrews(as_series(random_walk(86, 30)), level=0, deterministic="constant", significance=0.05,
                           lag_criterion="bic")
    assert result.lag_rule == (
        "BIC in the ADF regression with constant and trend and no break terms (Baum 2004), searched 0 to "
        "3 lagged differences (Schwert 1989, floor rule, reduced from 8 so the regressions stay feasible)"
    )


def test_constant_series_is_a_data_error_for_every_battery_test() -> None:
    values = as_series(np.full(60, 2.5))
    with pytest.raises(DataError) as caught:
        phillips_perron(values, level=0, deterministic="constant", significance=0.05)
    assert caught.value.message == "Phillips-Perron cannot be run: the series is constant at level 0"
    with pytest.raises(DataError) as caught:
        dfgls(values, level=1, deterministic="constant", lag_criterion="aic", significance=0.05)
    assert caught.value.message == "DF-GLS cannot be run: the series is constant at level 1"
    with pytest.raises(DataError) as caught:
        zivot_andrews(values, level=2, deterministic="constant-trend", significance=0.05)
    assert caught.value.message == "Zivot-Andrews cannot be run: the series is constant at level 2"


def test_exact_straight_line_is_a_data_error() -> None:
    line = as_series(3.0 + 0.5 * np.arange(60.0))
    with pytest.raises(DataError) as caught:
        dfgls(line, level=0, deterministic="constant-trend", lag_criterion="aic", significance=0.05)
    assert caught.value.message == (
        "DF-GLS cannot be run: nothing is left of the series after removing its trend at level 0"
    )
    with pytest.raises(DataError, match="Phillips-Perron cannot be run"):
        phillips_perron(line, level=0, deterministic="constant-trend", significance=0.05)


def test_table_based_tests_reject_unknown_significance() -> None:
    values = as_series(random_walk(87, 80))
    with pytest.raises(ValueError, match=re.escape("DF-GLS significance must be one of 0.01, 0.05, 0.1; got 0.025")):
        dfgls(values, level=0, deterministic="constant", lag_criterion="aic", significance=0.025)
    message = "Zivot-Andrews significance must be one of 0.01, 0.05, 0.1; got 0.2"
    with pytest.raises(ValueError, match=re.escape(message)):
        zivot_andrews(values, level=0, deterministic="constant", significance=0.2)
    with pytest.raises(ValueError, match="Zivot-Andrews deterministic must be"):
        zivot_andrews(values, level=0, deterministic="none", significance=0.05)
    with pytest.raises(ValueError, match="trim must lie in"):
        zivot_andrews(values, level=0, deterministic="constant", significance=0.05, trim=0.4)
