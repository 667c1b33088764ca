"""Tests of reportgen.stats.fanchart and of the fan chart integration_order attaches to integrated series."""

from __future__ import annotations

import dataclasses
import hashlib
import json

import numpy as np
import pandas as pd
import pytest
from scipy.stats import norm

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats.fanchart import FAN_QUANTILES, random_walk_fan, series_seed
from reportgen.stats.order import integration_order
from reportgen.stats.types import StatsSettings

LENGTH = 250
STREAM = 20240601


def as_series(values: np.ndarray, freq: str = "M", start: str = "1990-01") -> pd.Series:
    index = pd.period_range(start=start, periods=len(values), freq=freq)
    return pd.Series(np.asarray(values, dtype=float), index=index)


def walk(seed: int, drift: float = 0.0) -> pd.Series:
    return as_series(10.0 + (drift + np.random.default_rng([STREAM, 40, seed]).standard_normal(LENGTH)).cumsum())


def test_same_inputs_give_the_same_bytes() -> None:
    values = walk(0)
    first = json.dumps(dataclasses.asdict(random_walk_fan(values, seed=123)), sort_keys=True)
    second = json.dumps(dataclasses.asdict(random_walk_fan(values, seed=123)), sort_keys=True)
    assert first == second
    other = json.dumps(dataclasses.asdict(random_walk_fan(values, seed=124)), sort_keys=True)
    assert other != first


def test_shape_labels_and_calibration() -> None:
    values = as_series(np.random.default_rng([STREAM, 41]).standard_normal(40).cumsum(), freq="Q", start="2001Q1")
    fan = random_walk_fan(values, seed=5, replications=200)
    assert fan.dates[0] == "2001Q1"
    assert fan.dates[-1] == "2010Q4"
    assert len(fan.dates) == 40
    assert list(fan.bands) == ["5%", "25%", "50%", "75%", "95%"]
    assert all(len(path) == 40 for path in fan.bands.values())
    assert all(path[0] == values.iloc[0] for path in fan.bands.values())
    # Calibration as specified: drift = mean of first differences, spread = their standard deviation (ddof=1).
    differences = np.diff(values.to_numpy())
    assert fan.drift == pytest.approx(differences.mean(), rel=1e-12)
    assert fan.innovation_std == pytest.approx(differences.std(ddof=1), rel=1e-12)
    assert (fan.replications, fan.seed) == (200, 5)


def test_bands_are_ordered_in_every_period() -> None:
    fan = random_walk_fan(walk(1, drift=0.2), seed=7)
    paths = np.array([fan.bands[key] for key in FAN_QUANTILES])
    assert np.all(np.diff(paths, axis=0) >= 0.0)


def test_bands_match_the_normal_quantiles_of_a_gaussian_walk() -> None:
    # Common practice: a Gaussian random walk with drift mu and spread sigma is normal at step t with mean
    # x0 + mu t and standard deviation sigma sqrt(t). With 2000 replications the standard error of an
    # estimated quantile is about 1.25 sigma sqrt(t) / sqrt(2000) (median) to 2.1 sigma sqrt(t) / sqrt(2000)
    # (5% and 95%); the tolerance is four of the larger.
    values = walk(2, drift=0.5)
    fan = random_walk_fan(values, seed=11, replications=2000)
    x0 = values.iloc[0]
    for step in (10, 100, LENGTH - 1):
        scale = fan.innovation_std * np.sqrt(step)
        tolerance = 4 * 2.1 * scale / np.sqrt(2000)
        for key, probability in FAN_QUANTILES.items():
            expected = x0 + fan.drift * step + norm.ppf(probability) * scale
            assert fan.bands[key][step] == pytest.approx(expected, abs=tolerance)


def test_share_outside_counts_periods_beyond_the_5_to_95_band() -> None:
    values = walk(3)
    fan = random_walk_fan(values, seed=13)
    observed = values.to_numpy()[1:]
    lower, upper = np.array(fan.bands["5%"][1:]), np.array(fan.bands["95%"][1:])
    assert fan.share_outside == np.mean((observed < lower) | (observed > upper))
    assert fan.description.endswith(
        f"outside which lie {fan.share_outside:.0%} of the observed periods after the first."
    )


# A random walk compared with walks of its own drift and spread mostly stays inside the 5%-95% band.
# Measured on another seed stream (200 walks of length 250): mean share outside 0.034, below 0.3 in
# 98.5% of walks. The bar: below 0.3 in at least 90% of 50 seeded walks.
def test_a_random_walk_mostly_stays_inside_the_band() -> None:
    shares = [random_walk_fan(walk(seed), seed=seed).share_outside for seed in range(50)]
    assert sum(share < 0.3 for share in shares) >= 45


# An I(2) series against walks of its own drift leaves the band: measured on another stream (200 series),
# share outside above 0.3 in 99% of them. The bar: above 0.3 in at least 90% of 50 seeded series.
def test_an_i2_series_leaves_the_band() -> None:
    shares = []
    for seed in range(50):
        values = as_series(np.random.default_rng([STREAM, 42, seed]).standard_normal(LENGTH).cumsum().cumsum())
        shares.append(random_walk_fan(values, seed=seed, order=2).share_outside)
    assert sum(share > 0.3 for share in shares) >= 45


def test_rescaling_scales_the_fan_and_keeps_the_share_outside() -> None:
    # A change of units (a positive factor) scales every simulated path by the same factor, so the bands
    # scale and the share outside is unchanged. A negative factor changes the sign of the drift but not
    # of the draws, so the fan is then only the same in distribution; that is not asserted.
    values = walk(4, drift=0.1)
    base = random_walk_fan(values, seed=17)
    scaled = random_walk_fan(values * 250.0, seed=17)
    assert scaled.drift == pytest.approx(250.0 * base.drift, rel=1e-12)
    assert scaled.innovation_std == pytest.approx(250.0 * base.innovation_std, rel=1e-12)
    assert scaled.share_outside == base.share_outside
    for key in FAN_QUANTILES:
        np.testing.assert_allclose(scaled.bands[key], 250.0 * np.array(base.bands[key]), rtol=1e-9)


def test_series_seed_is_a_stable_sha256_digest() -> None:
    expected = int.from_bytes(hashlib.sha256(b"20240601:fuel").digest()[:8], "big")
    assert series_seed(20240601, "fuel") == expected
    assert series_seed(20240601, "boxes") != expected
    assert series_seed(20240602, "fuel") != expected


def test_descriptions_and_errors() -> None:
    values = walk(5)
    plain = random_walk_fan(values, seed=3, replications=50, name="fuel")
    assert plain.description.startswith("50 random walks started at the first value of fuel, with the mean (")
    assert "(seed 3)" in plain.description
    assert "I(2)" not in plain.description
    second = random_walk_fan(values, seed=3, replications=50, name="fuel", order=2)
    assert second.description.endswith(
        "; an I(2) series compared with a random walk of its own drift is expected to leave the band, which is "
        "the point of the comparison."
    )
    with pytest.raises(InsufficientDataError) as short:
        random_walk_fan(as_series(np.array([1.0, 2.0])), seed=1, name="tiny")
    assert short.value.message == "the fan chart needs at least 3 observations (2 first differences); tiny has 2"
    with pytest.raises(DataError) as missing:
        random_walk_fan(as_series(np.array([1.0, np.nan, 2.0, 3.0])), seed=1, name="gap")
    assert missing.value.message == "the fan chart needs a series without missing or infinite values; gap has some"
    with pytest.raises(ValueError, match="replications must be 1 or more; got 0"):
        random_walk_fan(values, seed=1, replications=0)


# --- Through integration_order --------------------------------------------------------------------


def test_integrated_series_get_a_fan_chart_and_stationary_ones_none() -> None:
    settings = StatsSettings(seed=99, fan_replications=300)
    integrated = integration_order("fuel", walk(6), settings, grid=False, break_check=False)
    assert integrated.order == 1  # a driftless walk (seed 6 of its stream) that the rule finds I(1)
    assert integrated.fan_chart is not None
    assert integrated.fan_chart.seed == series_seed(99, "fuel")
    assert integrated.fan_chart.replications == 300
    assert integrated.fan_chart == random_walk_fan(walk(6), seed=series_seed(99, "fuel"), replications=300,
                                                   name="fuel", order=1)
    trend = as_series(1.0 + 0.05 * np.arange(LENGTH) + np.random.default_rng([STREAM, 43]).standard_normal(LENGTH))
    stationary = integration_order("trend", trend, settings, grid=False, break_check=False)
    assert stationary.order == 0
    assert stationary.fan_chart is None


def test_an_i2_series_gets_the_level_series_walk_and_says_why_it_leaves_the_band() -> None:
    values = as_series(np.random.default_rng([STREAM, 44]).standard_normal(LENGTH).cumsum().cumsum())
    verdict = integration_order("stock", values, StatsSettings(), grid=False, break_check=False)
    assert verdict.order == 2  # doubly integrated noise (one fixed seed) that the rule finds I(2)
    assert verdict.fan_chart is not None
    assert verdict.fan_chart.bands["50%"][0] == values.iloc[0]
    assert "an I(2) series compared with a random walk of its own drift" in verdict.fan_chart.description
