"""Tests of reportgen.stats.unitroot: ADF and KPSS against published tables and against arch.

Every check against an outside value names its source beside it. Simulated series come from
``numpy.random.default_rng`` with fixed seeds.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from arch import unitroot as arch_unitroot
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.tsa.adfvalues import mackinnonp

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats.unitroot import adf, adf_trend_t_statistic, kpss, schwert_max_lags
from reportgen.vocabulary import Deterministic

CODES: dict[str, str] = {"none": "n", "constant": "c", "constant-trend": "ct"}

# MacKinnon (2010), Tables 2-4, N=1 rows (the no-constant row is MacKinnon 1996), as transcribed in
# /work/shared/REFERENCES.md section 1 from statsmodels tsa/adfvalues.py and arch
# unitroot/critical_values/dickey_fuller.py: (b_inf, b1, b2, b3) for 1%, 5%, 10%.
MACKINNON_2010: dict[str, dict[str, tuple[float, float, float, float]]] = {
    "none": {
        "1%": (-2.56574, -2.2358, -3.627, 0.0),
        "5%": (-1.94100, -0.2686, -3.365, 31.223),
        "10%": (-1.61682, 0.2656, -2.714, 25.364),
    },
    "constant": {
        "1%": (-3.43035, -6.5393, -16.786, -79.433),
        "5%": (-2.86154, -2.8903, -4.234, -40.040),
        "10%": (-2.56677, -1.5384, -2.809, 0.0),
    },
    "constant-trend": {
        "1%": (-3.95877, -9.0531, -28.428, -134.155),
        "5%": (-3.41049, -4.3904, -9.036, -45.374),
        "10%": (-3.12705, -2.5856, -3.925, -22.380),
    },
}

# Fuller (1976), Table 8.5.2, as reprinted in Hamilton (1994), Table B.6; from memory (REFERENCES.md
# section 1, tagged [MEM]): sample size -> (1%, 5%, 10%).
FULLER_1976: dict[str, dict[int, tuple[float, float, float]]] = {
    "constant": {
        25: (-3.75, -3.00, -2.62),
        50: (-3.58, -2.93, -2.60),
        100: (-3.51, -2.89, -2.58),
        500: (-3.44, -2.87, -2.57),
    },
    "constant-trend": {
        25: (-4.38, -3.60, -3.24),
        50: (-4.15, -3.50, -3.18),
        100: (-4.04, -3.45, -3.15),
        500: (-3.98, -3.42, -3.13),
    },
}

# Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1 (REFERENCES.md section 3, seen in
# statsmodels' kpss): 10%, 5%, 2.5%, 1%.
KPSS_1992: dict[str, dict[str, float]] = {
    "constant": {"10%": 0.347, "5%": 0.463, "2.5%": 0.574, "1%": 0.739},
    "constant-trend": {"10%": 0.119, "5%": 0.146, "2.5%": 0.176, "1%": 0.216},
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


# --- Critical values against the published tables -------------------------------------------------


@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
def test_adf_critical_values_reach_mackinnon_asymptotic_values(deterministic: Deterministic) -> None:
    # Source: MacKinnon (2010), Tables 2-4, b_inf column (REFERENCES.md section 1); the
    # no-constant row is MacKinnon (1996). At nobs = 200,000 the finite-sample terms add at most
    # |b1|/T ~ 5e-5.
    values = as_series(random_walk(11, 200_001), freq="D", start="1500-01-01")
    result = adf(values, level=0, deterministic=deterministic, lag_criterion="fixed", significance=0.05,
                 max_lags=0)
    assert result.nobs == 200_000
    for key, coefficients in MACKINNON_2010[deterministic].items():
        assert result.critical_values[key] == pytest.approx(coefficients[0], abs=1e-4)


@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
@pytest.mark.parametrize(("length", "lags"), [(40, 0), (101, 3), (300, 5)])
def test_adf_critical_values_follow_mackinnon_response_surface(
    deterministic: Deterministic, length: int, lags: int
) -> None:
    # Source: MacKinnon (2010), Tables 2-4 (no constant: MacKinnon 1996), response surface
    # C(T) = b_inf + b1/T + b2/T^2 + b3/T^3 evaluated at the regression's observations
    # (REFERENCES.md section 1).
    values = as_series(random_walk(12, length))
    result = adf(values, level=0, deterministic=deterministic, lag_criterion="fixed", significance=0.05,
                 max_lags=lags)
    nobs = length - 1 - lags
    assert result.nobs == nobs
    for key, (b_inf, b1, b2, b3) in MACKINNON_2010[deterministic].items():
        expected = b_inf + b1 / nobs + b2 / nobs**2 + b3 / nobs**3
        assert result.critical_values[key] == pytest.approx(expected, abs=1e-9)
    assert result.critical_values_source.endswith(f"response surface, T={nobs}")


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
@pytest.mark.parametrize("sample_size", [25, 50, 100, 500])
def test_adf_critical_values_close_to_fuller_table(deterministic: Deterministic, sample_size: int) -> None:
    # Source: Fuller (1976), Table 8.5.2 (Hamilton 1994, Table B.6), from memory; tolerance from
    # REFERENCES.md section 1: within 0.03 at T=25 and 0.015 for T>=50.
    tolerance = 0.03 if sample_size == 25 else 0.015
    values = as_series(random_walk(13, sample_size + 1))
    result = adf(values, level=0, deterministic=deterministic, lag_criterion="fixed", significance=0.05,
                 max_lags=0, min_observations=20)
    assert result.nobs == sample_size
    for key, expected in zip(("1%", "5%", "10%"), FULLER_1976[deterministic][sample_size], strict=True):
        assert result.critical_values[key] == pytest.approx(expected, abs=tolerance)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_kpss_critical_values_are_kpss_table_1(deterministic: Deterministic) -> None:
    # Source: Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1 (REFERENCES.md section 3).
    result = kpss(as_series(random_walk(14, 120)), level=0, deterministic=deterministic, significance=0.05)
    assert result.critical_values == KPSS_1992[deterministic]
    assert result.critical_values_source.startswith("Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1")


# --- Agreement with arch (REFERENCES.md section 9: identical statistics expected) -----------------


@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
@pytest.mark.parametrize("lags", [0, 3, 7])
@pytest.mark.parametrize("seed", [21, 22])
def test_adf_matches_arch_with_fixed_lags(deterministic: Deterministic, lags: int, seed: int) -> None:
    # Cross-library check: arch.unitroot.ADF(y, lags=p, trend=...) (REFERENCES.md section 9).
    raw = random_walk(seed, 240) + ar1(seed + 100, 240, 0.5)
    result = adf(as_series(raw), level=0, deterministic=deterministic, lag_criterion="fixed",
                 significance=0.05, max_lags=lags)
    reference = arch_unitroot.ADF(raw, lags=lags, trend=CODES[deterministic])
    assert result.lags == lags
    assert result.nobs == 240 - 1 - lags
    assert result.statistic == pytest.approx(reference.stat, abs=1e-10)
    assert result.pvalue == pytest.approx(reference.pvalue, abs=1e-10)
    for key, value in result.critical_values.items():
        assert value == pytest.approx(reference.critical_values[key], abs=1e-10)


@pytest.mark.parametrize("deterministic", ["none", "constant", "constant-trend"])
@pytest.mark.parametrize(("criterion", "arch_method"), [("aic", "aic"), ("bic", "bic"), ("t-stat", "t-stat")])
@pytest.mark.parametrize("seed", [31, 32, 33])
def test_adf_lag_choice_matches_arch(deterministic: Deterministic, criterion: str, arch_method: str,
                                     seed: int) -> None:
    # Cross-library check: arch.unitroot.ADF(y, method=..., max_lags=same) (REFERENCES.md section 9).
    raw = random_walk(seed, 260) + 2.0 * ar1(seed + 100, 260, 0.7)
    result = adf(as_series(raw), level=0, deterministic=deterministic, lag_criterion=criterion,
                 significance=0.05, max_lags=12)
    reference = arch_unitroot.ADF(raw, trend=CODES[deterministic], method=arch_method, max_lags=12)
    assert result.lags == reference.lags
    assert result.statistic == pytest.approx(reference.stat, abs=1e-10)


def test_adf_trend_t_statistic_matches_arch_regression() -> None:
    # Cross-library check: the trend coefficient's t-statistic of arch's ADF regression.
    raw = 0.05 * np.arange(200) + ar1(41, 200, 0.5)
    for lags in (0, 2, 5):
        reference = arch_unitroot.ADF(raw, lags=lags, trend="ct").regression.tvalues["trend"]
        assert adf_trend_t_statistic(as_series(raw), lags=lags) == pytest.approx(reference, abs=1e-10)


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
@pytest.mark.parametrize("seed", [51, 52, 53])
def test_kpss_matches_arch(deterministic: Deterministic, seed: int) -> None:
    # Cross-library check: arch.unitroot.KPSS(y, lags=L, trend=...) (REFERENCES.md section 9), at a
    # fixed bandwidth and at the bandwidth reportgen chose automatically.
    raw = ar1(seed, 220, 0.6) + 0.3 * random_walk(seed + 100, 220)
    for bandwidth in (0, 4, 11):
        result = kpss(as_series(raw), level=0, deterministic=deterministic, significance=0.05, lags=bandwidth)
        reference = arch_unitroot.KPSS(raw, lags=bandwidth, trend=CODES[deterministic])
        assert result.lags == bandwidth
        assert result.statistic == pytest.approx(reference.stat, abs=1e-10)
    automatic = kpss(as_series(raw), level=0, deterministic=deterministic, significance=0.05)
    reference = arch_unitroot.KPSS(raw, lags=automatic.lags, trend=CODES[deterministic])
    assert automatic.statistic == pytest.approx(reference.stat, abs=1e-10)


# --- p-values beyond their tables are bounds ---------------------------------------------------------


@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_kpss_pvalue_beyond_table_is_a_bound(deterministic: Deterministic) -> None:
    # KPSS (1992) Table 1 spans 10% to 1% (REFERENCES.md section 3); beyond it the p-value must be a
    # bound, never the clipped value passed off as exact. Inside it, it is the linear interpolation
    # of the table (statsmodels' convention).
    table = KPSS_1992[deterministic]
    seen_bounds: set[str | None] = set()
    for seed in range(20):
        for raw in (random_walk(60 + seed, 400), np.random.default_rng(90 + seed).standard_normal(400)):
            result = kpss(as_series(raw), level=0, deterministic=deterministic, significance=0.05)
            seen_bounds.add(result.pvalue_bound)
            if result.statistic > table["1%"]:
                assert (result.pvalue_bound, result.pvalue) == ("<", 0.01)
                assert result.rejects
                assert any(note.startswith("InterpolationWarning") for note in result.notes)
            elif result.statistic < table["10%"]:
                assert (result.pvalue_bound, result.pvalue) == (">", 0.10)
                assert not result.rejects
            else:
                assert result.pvalue_bound is None
                expected = np.interp(result.statistic, list(table.values()), [0.10, 0.05, 0.025, 0.01])
                assert result.pvalue == pytest.approx(expected, abs=1e-12)
    assert {"<", ">"} <= seen_bounds


def test_adf_pvalue_below_surface_range_is_a_bound() -> None:
    # MacKinnon (1994) surface for N=1 with constant ends at tau_min = -18.83 (statsmodels
    # tsa/adfvalues.py, tau_min_c); white noise with T=1000 gives a DF statistic near -sqrt(T).
    noise = np.random.default_rng(71).standard_normal(1000)
    result = adf(as_series(noise, freq="D", start="2001-01-01"), level=0, deterministic="constant",
                 lag_criterion="fixed", significance=0.05, max_lags=0)
    assert result.statistic < -18.83
    assert result.pvalue_bound == "<"
    assert result.pvalue == pytest.approx(mackinnonp(-18.83, regression="c"))
    assert 0.0 < result.pvalue < 1e-20
    assert result.rejects


def test_adf_pvalue_above_surface_range_is_a_bound() -> None:
    # MacKinnon (1994) surface for N=1 with constant ends at tau_max = 2.74 (statsmodels
    # tsa/adfvalues.py, tau_max_c); an explosive AR(1) gives a large positive statistic.
    shocks = np.random.default_rng(72).standard_normal(200)
    explosive = np.empty(200)
    explosive[0] = shocks[0]
    for t in range(1, 200):
        explosive[t] = 1.03 * explosive[t - 1] + shocks[t]
    result = adf(as_series(explosive), level=0, deterministic="constant", lag_criterion="fixed",
                 significance=0.05, max_lags=1)
    assert result.statistic > 2.74
    assert result.pvalue_bound == ">"
    assert result.pvalue == pytest.approx(mackinnonp(2.74, regression="c"))
    assert not result.rejects


# --- Size, lag rule, invariance ---------------------------------------------------------------------


def test_adf_size_under_a_unit_root() -> None:
    # Common practice (REFERENCES.md section 7): under a unit root the 5% ADF test rejects close to
    # 5% of the time; 1000 seeded walks of T=200, constant, one fixed lagged difference. The band
    # [0.03, 0.07] is about +-2.9 binomial standard errors.
    rejections = 0
    for seed in range(1000):
        values = as_series(random_walk(10_000 + seed, 200))
        result = adf(values, level=0, deterministic="constant", lag_criterion="fixed", significance=0.05,
                     max_lags=1)
        rejections += result.rejects
    assert 0.03 <= rejections / 1000 <= 0.07


def test_default_max_lag_is_schwert_floor_rule() -> None:
    # Schwert (1989): int[12 (T/100)^(1/4)], rounded down; at T=250 that is 15 where statsmodels'
    # ceiling gives 16 (REFERENCES.md section 7, from memory for the rule).
    assert schwert_max_lags(250) == 15
    assert schwert_max_lags(100) == 12
    result = adf(as_series(random_walk(81, 250)), level=0, deterministic="constant", lag_criterion="aic",
                 significance=0.05)
    assert result.lag_rule == "AIC, searched 0 to 15 lagged differences (Schwert 1989, floor rule)"
    assert 0 <= result.lags <= 15


def test_default_max_lag_is_reduced_when_infeasible() -> None:
    # T=20: the floor rule gives int(12 * 0.2**0.25) = 8, but statsmodels allows at most
    # 20 // 2 - 2 - 1 = 7 lagged differences with constant and trend.
    result = adf(as_series(random_walk(82, 20)), level=0, deterministic="constant-trend",
                 lag_criterion="bic", significance=0.05)
    assert result.lag_rule == (
        "BIC, searched 0 to 7 lagged differences "
        "(Schwert 1989, floor rule, reduced from 8 so the regression stays feasible)"
    )


def test_sample_labels_follow_the_regression_sample() -> None:
    values = as_series(random_walk(83, 100), freq="M", start="2000-01")
    result = adf(values, level=0, deterministic="constant", lag_criterion="fixed", significance=0.05,
                 max_lags=2)
    # 100 observations, one lost to differencing and two to lags: the regression starts at 2000-04.
    assert (result.nobs, result.sample_start, result.sample_end) == (97, "2000-04", "2008-04")
    quarterly = as_series(random_walk(84, 40), freq="Q", start="1990Q1")
    stationarity = kpss(quarterly, level=1, deterministic="constant", significance=0.10)
    assert (stationarity.sample_start, stationarity.sample_end, stationarity.level) == ("1990Q1", "1999Q4", 1)


@settings(derandomize=True, max_examples=25, deadline=None)
@given(
    seed=st.integers(min_value=0, max_value=10_000),
    scale=st.sampled_from([1e-6, 1e6]),
    deterministic=st.sampled_from(["constant", "constant-trend"]),
    criterion=st.sampled_from(["aic", "bic", "t-stat"]),
)
def test_rescaling_leaves_statistics_unchanged(seed: int, scale: float, deterministic: Deterministic,
                                               criterion: str) -> None:
    raw = random_walk(seed, 150) + ar1(seed + 1, 150, 0.4)
    original, rescaled = as_series(raw), as_series(raw * scale)
    adf_a = adf(original, level=0, deterministic=deterministic, lag_criterion=criterion, significance=0.05)
    adf_b = adf(rescaled, level=0, deterministic=deterministic, lag_criterion=criterion, significance=0.05)
    assert adf_b.lags == adf_a.lags
    assert adf_b.nobs == adf_a.nobs
    assert adf_b.statistic == pytest.approx(adf_a.statistic, rel=1e-11, abs=1e-12)
    assert adf_b.pvalue == pytest.approx(adf_a.pvalue, rel=1e-11, abs=1e-14)
    kpss_a = kpss(original, level=0, deterministic=deterministic, significance=0.05)
    kpss_b = kpss(rescaled, level=0, deterministic=deterministic, significance=0.05)
    assert kpss_b.lags == kpss_a.lags
    assert kpss_b.statistic == pytest.approx(kpss_a.statistic, rel=1e-11)
    trend_a = adf_trend_t_statistic(original, lags=adf_a.lags)
    assert adf_trend_t_statistic(rescaled, lags=adf_a.lags) == pytest.approx(trend_a, rel=1e-11, abs=1e-12)


# --- Too little data and bad input -------------------------------------------------------------------


def test_adf_too_short_series_message() -> None:
    values = as_series(random_walk(91, 12))
    with pytest.raises(InsufficientDataError) as caught:
        adf(values, level=1, deterministic="constant-trend", lag_criterion="aic", significance=0.05, max_lags=4)
    assert caught.value.message == (
        "ADF with constant and trend and up to 4 lagged differences needs at least 20 observations; "
        "the series has 12 at level 1"
    )
    assert caught.value.category == "Insufficient data"


def test_adf_infeasible_lags_message() -> None:
    values = as_series(random_walk(92, 30))
    with pytest.raises(InsufficientDataError) as caught:
        adf(values, level=0, deterministic="constant-trend", lag_criterion="fixed", significance=0.05,
            max_lags=14)
    assert caught.value.message == (
        "ADF with constant and trend and 14 lagged differences needs at least 34 observations; "
        "the series has 30 at level 0"
    )


def test_kpss_too_short_series_message() -> None:
    values = as_series(random_walk(93, 12))
    with pytest.raises(InsufficientDataError) as caught:
        kpss(values, level=1, deterministic="constant", significance=0.05)
    assert caught.value.message == (
        "KPSS with constant needs at least 20 observations; the series has 12 at level 1"
    )


def test_constant_series_is_a_data_error() -> None:
    values = as_series(np.full(40, 3.5))
    with pytest.raises(DataError) as caught:
        adf(values, level=0, deterministic="constant", lag_criterion="aic", significance=0.05)
    assert caught.value.message == "ADF cannot be run: the series is constant at level 0"
    with pytest.raises(DataError) as caught:
        kpss(values, level=2, deterministic="constant", significance=0.05)
    assert caught.value.message == "KPSS cannot be run: the series is constant at level 2"


def test_feasibility_grid_gives_a_statistic_or_the_insufficient_data_error() -> None:
    # Every test x deterministic choice x tiny sample: a finite statistic or the dedicated error.
    for length in range(2, 26):
        values = as_series(random_walk(94 + length, length))
        for deterministic in ("none", "constant", "constant-trend"):
            for criterion in ("aic", "bic", "t-stat"):
                try:
                    result = adf(values, level=0, deterministic=deterministic, lag_criterion=criterion,
                                 significance=0.05, min_observations=3)
                except InsufficientDataError:
                    continue
                assert np.isfinite(result.statistic)
        for deterministic in ("constant", "constant-trend"):
            try:
                result = kpss(values, level=0, deterministic=deterministic, significance=0.05,
                              min_observations=3)
            except InsufficientDataError:
                continue
            assert np.isfinite(result.statistic)


def test_kpss_rejects_unknown_significance() -> None:
    with pytest.raises(ValueError, match="KPSS significance must be one of"):
        kpss(as_series(random_walk(95, 50)), level=0, deterministic="constant", significance=0.2)
