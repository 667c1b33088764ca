"""Tests of reportgen.stats.cointegration: the Engle-Granger test and its critical values."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest
from arch.unitroot import engle_granger as arch_engle_granger
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.datasets import danish_data
from statsmodels.tsa import adfvalues
from statsmodels.tsa.stattools import coint

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats import cointegration
from reportgen.stats.cointegration import (
    ENGLE_GRANGER_CRITICAL_VALUES_SOURCE,
    engle_granger,
    engle_granger_all,
    engle_granger_critical_values,
    engle_granger_pvalue,
    schwert_max_lags,
)


def _frame(columns: dict[str, np.ndarray], start: str = "2000-01", freq: str = "M") -> pd.DataFrame:
    length = len(next(iter(columns.values())))
    return pd.DataFrame(columns, index=pd.period_range(start, periods=length, freq=freq))


def _cointegrated_pair(seed: int, nobs: int = 200) -> pd.DataFrame:
    """y = 1 + 2x + u with x a random walk and u AR(1) with coefficient 0.5."""
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.standard_normal(nobs))
    shocks = rng.standard_normal(nobs)
    noise = np.zeros(nobs)
    for t in range(1, nobs):
        noise[t] = 0.5 * noise[t - 1] + shocks[t]
    return _frame({"y": 1.0 + 2.0 * x + noise, "x": x})


def _independent_walks(seed: int, nobs: int = 200) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return _frame({"y": np.cumsum(rng.standard_normal(nobs)), "x": np.cumsum(rng.standard_normal(nobs))})


# --- critical values -----------------------------------------------------------------------------

# MacKinnon (2010), asymptotic values b_inf, as listed in REFERENCES §2 (read in statsmodels
# tsa/adfvalues.py; the b_inf column is not affected by the transcription errors of issue #10271).
ASYMPTOTIC_MACKINNON_2010 = {
    (2, "constant"): (-3.89644, -3.33613, -3.04445),
    (3, "constant"): (-4.29374, -3.74066, -3.45218),
    (4, "constant"): (-4.64332, -4.09600, -3.81020),
    (2, "constant-trend"): (-4.32762, -3.78057, -3.49631),
    (3, "constant-trend"): (-4.66305, -4.11890, -3.83511),
    (4, "constant-trend"): (-4.96940, -4.42871, -4.14633),
    # N = 1 is the Dickey-Fuller case: MacKinnon (2010), REFERENCES §1.
    (1, "constant"): (-3.43035, -2.86154, -2.56677),
    (1, "constant-trend"): (-3.95877, -3.41049, -3.12705),
}


@pytest.mark.parametrize(("key", "expected"), ASYMPTOTIC_MACKINNON_2010.items())
def test_asymptotic_critical_values_match_mackinnon_2010(key: tuple[int, str], expected: tuple) -> None:
    n_variables, deterministic = key
    values = engle_granger_critical_values(n_variables, deterministic, math.inf)
    assert list(values) == ["1%", "5%", "10%"]
    assert tuple(values.values()) == pytest.approx(expected, abs=1e-9)


def test_large_sample_critical_values_approach_the_asymptotic_ones() -> None:
    # MacKinnon (2010): C(T) -> b_inf as T grows; at T = 1e7 the 1/T terms are below 1e-5.
    for (n_variables, deterministic), expected in ASYMPTOTIC_MACKINNON_2010.items():
        values = engle_granger_critical_values(n_variables, deterministic, 10_000_000)
        assert tuple(values.values()) == pytest.approx(expected, abs=1e-5)


def test_corrected_coefficient_n2_one_percent_at_t25() -> None:
    # REFERENCES §2 (statsmodels issue #10271): MacKinnon (2010) Table 2 prints b2 = -22.527 for
    # N = 2, 1%, giving -4.37056 at T = 25; the statsmodels/arch copy (-33.527) gives -4.38816.
    ours = engle_granger_critical_values(2, "constant", 25)["1%"]
    assert ours == pytest.approx(-4.37056, abs=5e-6)
    library = float(adfvalues.mackinnoncrit(N=2, regression="c", nobs=25)[0])
    assert library == pytest.approx(-4.38816, abs=5e-6)


def test_table_differs_from_library_copy_exactly_where_issue_10271_says() -> None:
    # statsmodels issue #10271 lists five cells of MacKinnon (2010) Table 2 where statsmodels'
    # tau_c_2010 differs from the paper; it reports no difference for the constant-and-trend table.
    paper_values = {
        (2, "1%", 2): -22.527,
        (3, "5%", 1): -8.5631,
        (5, "5%", 1): -14.0406,
        (7, "10%", 2): -6.922,
        (7, "10%", 3): 67.721,
    }
    levels = ("1%", "5%", "10%")
    differences = {}
    for n in range(1, 13):
        for level_index, level in enumerate(levels):
            for coefficient in range(4):
                ours = cointegration._TABLE_CONSTANT[n - 1][level_index][coefficient]
                library = float(adfvalues.tau_c_2010[n - 1, level_index, coefficient])
                if ours != library:
                    differences[(n, level, coefficient)] = ours
                ours_trend = cointegration._TABLE_CONSTANT_TREND[n - 1][level_index][coefficient]
                assert ours_trend == float(adfvalues.tau_ct_2010[n - 1, level_index, coefficient])
    assert differences == paper_values


def test_critical_values_reject_unsupported_cases() -> None:
    with pytest.raises(ValueError, match="no residual-test tables without a constant"):
        engle_granger_critical_values(2, "none", 100)
    with pytest.raises(ValueError, match="1 to 12 variables, not 13"):
        engle_granger_critical_values(13, "constant", 100)


def test_source_constant_names_the_paper_and_the_correction() -> None:
    assert "MacKinnon (2010)" in ENGLE_GRANGER_CRITICAL_VALUES_SOURCE
    assert "#10271" in ENGLE_GRANGER_CRITICAL_VALUES_SOURCE


# --- p-values ------------------------------------------------------------------------------------


@pytest.mark.parametrize("n_variables", [1, 2, 3, 4, 5, 6])
@pytest.mark.parametrize("deterministic", ["constant", "constant-trend"])
def test_pvalue_at_asymptotic_critical_values_is_the_level(n_variables: int, deterministic: str) -> None:
    # MacKinnon (1994) and MacKinnon (2010) describe the same asymptotic distribution; REFERENCES §1
    # [COMP] finds agreement within 0.0002 for N = 1. We allow 0.0005 for N up to 6.
    values = engle_granger_critical_values(n_variables, deterministic, math.inf)
    for level, value in values.items():
        pvalue, bound = engle_granger_pvalue(value, n_variables, deterministic)
        assert bound is None
        assert pvalue == pytest.approx(float(level.rstrip("%")) / 100, abs=5e-4)


def test_pvalue_bounds_beyond_the_surface() -> None:
    # MacKinnon (1994): the surface is fitted on a bounded range of statistics (statsmodels
    # tau_min_c / tau_max_c); beyond it the p-value is a bound, not a value.
    low_p, low_bound = engle_granger_pvalue(-40.0, 2, "constant")
    assert low_bound == "<"
    assert 0.0 < low_p < 1e-6
    high_p, high_bound = engle_granger_pvalue(5.0, 2, "constant")
    assert high_bound == ">"
    assert 0.9 < high_p < 1.0
    inside = [engle_granger_pvalue(stat, 2, "constant")[0] for stat in (-6.0, -4.0, -3.0, -2.0, 0.0)]
    assert inside == sorted(inside)


# --- the test ------------------------------------------------------------------------------------


@pytest.mark.parametrize("seed", [3, 4])
@pytest.mark.parametrize("lags", [0, 1, 3])
@pytest.mark.parametrize(("deterministic", "trend"), [("constant", "c"), ("constant-trend", "ct")])
@pytest.mark.parametrize("maker", [_cointegrated_pair, _independent_walks])
def test_statistic_agrees_with_arch_and_statsmodels_at_fixed_lags(
    seed: int, lags: int, deterministic: str, trend: str, maker
) -> None:
    # REFERENCES §9: statsmodels coint and arch engle_granger compute the same statistic.
    data = maker(seed)
    result = engle_granger(
        data, "y", ["x"], significance=0.05, deterministic=deterministic, lags=lags
    )
    reference = arch_engle_granger(data["y"].to_numpy(), data["x"].to_numpy(), trend=trend, lags=lags)
    assert result.statistic == pytest.approx(reference.stat, abs=1e-8)
    assert result.lags == lags
    assert result.nobs == len(data) - lags - 1  # arch: residuals - lags - 1
    statsmodels_stat = coint(data["y"], data["x"], trend=trend, maxlag=lags, autolag=None)[0]
    assert result.statistic == pytest.approx(statsmodels_stat, abs=1e-8)


@pytest.mark.parametrize("seed", [0, 1, 5])
@pytest.mark.parametrize("criterion", ["aic", "bic"])
def test_lag_search_agrees_with_arch(seed: int, criterion: str) -> None:
    # REFERENCES §9: identical statistics for information-criterion lag choices.
    data = _independent_walks(seed, nobs=150)
    result = engle_granger(data, "y", ["x"], significance=0.05, lag_criterion=criterion)
    reference = arch_engle_granger(
        data["y"].to_numpy(), data["x"].to_numpy(), trend="c",
        max_lags=schwert_max_lags(150), method=criterion,
    )
    assert result.lags == reference.lags
    assert result.statistic == pytest.approx(reference.stat, abs=1e-8)


@pytest.mark.parametrize("criterion", ["aic", "bic", "t-stat"])
def test_lag_search_agrees_with_statsmodels_coint(criterion: str) -> None:
    data = _independent_walks(5, nobs=150)
    result = engle_granger(data, "y", ["x"], significance=0.05, lag_criterion=criterion)
    reference = coint(data["y"], data["x"], trend="c", maxlag=schwert_max_lags(150), autolag=criterion)
    assert result.statistic == pytest.approx(reference[0], abs=1e-8)


def test_schwert_rule_rounds_down_and_is_stated() -> None:
    # Schwert (1989) int[12 (T/100)^(1/4)], floor (REFERENCES §7: T = 250 gives 15, ceil gives 16).
    assert schwert_max_lags(250) == 15
    assert schwert_max_lags(100) == 12
    result = engle_granger(_independent_walks(2, nobs=250), "y", ["x"], significance=0.05)
    assert result.lag_rule == "AIC, at most 15 (Schwert 1989, floor of 12(T/100)^(1/4) at T=250)"
    assert 0 <= result.lags <= 15


def test_cointegrated_pair_rejects_and_records_everything() -> None:
    data = _cointegrated_pair(0)
    result = engle_granger(data, "y", ["x"], significance=0.05)
    assert result.method == "Engle-Granger"
    assert result.variables == ("y", "x")
    assert result.dependent == "y"
    assert result.rejects
    assert result.pvalue < 0.05
    assert result.statistic < result.critical_values["5%"]
    assert result.critical_values == engle_granger_critical_values(2, "constant", result.nobs)
    assert f"N=2, at T={result.nobs}" in result.critical_values_source
    assert "Table 2" in result.critical_values_source
    assert any("2000-01 to 2016-08" in note for note in result.notes)


def test_independent_walks_do_not_reject() -> None:
    result = engle_granger(_independent_walks(0), "y", ["x"], significance=0.05)
    assert not result.rejects
    assert result.pvalue > 0.05
    assert result.pvalue_bound is None


def test_constant_trend_uses_the_trend_table() -> None:
    data = _cointegrated_pair(1)
    result = engle_granger(data, "y", ["x"], significance=0.10, deterministic="constant-trend", lags=1)
    assert result.deterministic == "constant-trend"
    assert result.critical_values == engle_granger_critical_values(2, "constant-trend", result.nobs)
    assert "Table 3" in result.critical_values_source


def test_more_than_six_variables_decides_by_critical_value() -> None:
    # MacKinnon (1994) p-value surfaces stop at N = 6 (statsmodels mackinnonp); MacKinnon (2010)
    # critical values go to N = 12.
    rng = np.random.default_rng(7)
    nobs = 200
    walks = {f"x{i}": np.cumsum(rng.standard_normal(nobs)) for i in range(6)}
    walks["y"] = sum(walks.values()) + rng.standard_normal(nobs)
    result = engle_granger(_frame(walks), "y", [f"x{i}" for i in range(6)], significance=0.05)
    assert result.pvalue is None  # no surface: recorded as missing, never NaN
    assert result.rejects == (result.statistic < result.critical_values["5%"])
    assert result.rejects  # the residual is white noise
    assert any("at most 6 variables" in note for note in result.notes)


def test_too_few_observations_raises_with_the_numbers() -> None:
    data = _independent_walks(0, nobs=21)
    with pytest.raises(InsufficientDataError) as caught:
        engle_granger(data, "y", ["x"], significance=0.05)
    assert str(caught.value) == (
        "the Engle-Granger test of y on x with a constant needs at least 22 observations "
        "(20 plus 2 parameters in the cointegrating regression); the sample has 21"
    )
    engle_granger(_independent_walks(0, nobs=22), "y", ["x"], significance=0.05)


def test_collinear_regressors_raise_data_error() -> None:
    data = _independent_walks(0)
    data["x2"] = 3.0 * data["x"] - 1.0
    with pytest.raises(DataError) as caught:
        engle_granger(data, "y", ["x", "x2"], significance=0.05)
    assert str(caught.value) == (
        "Engle-Granger test of y on x, x2: the regressors are perfectly collinear: "
        "x2 is an exact linear combination of const, x"
    )


def test_invalid_settings_are_refused() -> None:
    data = _independent_walks(0)
    with pytest.raises(ValueError, match="significance"):
        engle_granger(data, "y", ["x"], significance=0.2)
    with pytest.raises(ValueError, match="lag_criterion"):
        engle_granger(data, "y", ["x"], significance=0.05, lag_criterion="hqic")
    with pytest.raises(DataError, match="no column named z"):
        engle_granger(data, "y", ["z"], significance=0.05)


@settings(derandomize=True, max_examples=15, deadline=None)
@given(
    scale_y=st.floats(min_value=1e-3, max_value=1e3),
    scale_x=st.floats(min_value=1e-3, max_value=1e3),
    shift=st.floats(min_value=-1e3, max_value=1e3),
)
def test_statistic_is_invariant_to_rescaling(scale_y: float, scale_x: float, shift: float) -> None:
    # Common practice: the residual t-statistic does not depend on the units of the variables.
    data = _independent_walks(11, nobs=120)
    base = engle_granger(data, "y", ["x"], significance=0.05, lags=2)
    scaled = data.assign(y=data["y"] * scale_y + shift, x=data["x"] * scale_x)
    other = engle_granger(scaled, "y", ["x"], significance=0.05, lags=2)
    assert other.statistic == pytest.approx(base.statistic, rel=1e-7, abs=1e-7)


def test_danish_money_demand_smoke() -> None:
    # Johansen and Juselius (1990) data shipped with statsmodels; REFERENCES §9: statsmodels coint
    # computes the same statistic.
    raw = danish_data.load_pandas().data
    data = raw.set_index(raw.index.to_period("Q"))
    result = engle_granger(data, "lrm", ["lry", "ibo", "ide"], significance=0.05)
    assert math.isfinite(result.statistic)
    assert 0.0 <= result.pvalue <= 1.0
    assert all(math.isfinite(value) for value in result.critical_values.values())
    assert result.variables == ("lrm", "lry", "ibo", "ide")
    assert result.nobs == len(data) - result.lags - 1
    fixed = coint(data["lrm"], data[["lry", "ibo", "ide"]], trend="c", maxlag=result.lags, autolag=None)
    assert result.statistic == pytest.approx(fixed[0], abs=1e-8)
    searched = coint(
        data["lrm"], data[["lry", "ibo", "ide"]], trend="c", maxlag=schwert_max_lags(len(data)), autolag="aic"
    )
    assert result.statistic == pytest.approx(searched[0], abs=1e-8)


def test_library_warnings_are_kept_in_the_notes(monkeypatch: pytest.MonkeyPatch) -> None:
    # STYLE.md: library warnings are captured and stored, never silenced or let through.
    import warnings

    original = cointegration.dickey_fuller_t_statistic

    def warning_statistic(*args, **kwargs):
        warnings.warn("a library remark", UserWarning, stacklevel=2)
        return original(*args, **kwargs)

    monkeypatch.setattr(cointegration, "dickey_fuller_t_statistic", warning_statistic)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = engle_granger(_cointegrated_pair(0), "y", ["x"], significance=0.05)
    assert "UserWarning: a library remark" in result.notes


# --- every normalisation -------------------------------------------------------------------------


@pytest.mark.parametrize("lags", [None, 2])
def test_every_normalisation_of_a_pair_agrees_with_statsmodels(lags: int | None) -> None:
    # REFERENCES §2: Engle-Granger results depend on which variable is on the left; statsmodels
    # coint(y0, y1) puts its first argument on the left and computes the same statistic (§9).
    data = _cointegrated_pair(6, nobs=150)
    results = engle_granger_all(data, ["y", "x"], significance=0.05, lags=lags)
    assert [result.dependent for result in results] == ["y", "x"]
    assert [result.variables for result in results] == [("y", "x"), ("x", "y")]
    for result, (left, right) in zip(results, [("y", "x"), ("x", "y")], strict=True):
        # MacKinnon (2010) N = 2 for both directions, at each regression's own T.
        assert result.critical_values == engle_granger_critical_values(2, "constant", result.nobs)
        assert "N=2" in result.critical_values_source
        if lags is None:
            reference = coint(data[left], data[right], trend="c", maxlag=schwert_max_lags(150), autolag="aic")
        else:
            reference = coint(data[left], data[right], trend="c", maxlag=lags, autolag=None)
        assert result.statistic == pytest.approx(reference[0], abs=1e-8)
    assert results[0].statistic != pytest.approx(results[1].statistic, abs=1e-6)  # the directions differ


def test_every_normalisation_of_three_variables_keeps_the_order_and_n() -> None:
    rng = np.random.default_rng(12)
    nobs = 160
    a = np.cumsum(rng.standard_normal(nobs))
    b = np.cumsum(rng.standard_normal(nobs))
    data = _frame({"a": a, "b": b, "c": a - 0.5 * b + rng.standard_normal(nobs)})
    results = engle_granger_all(data, ["b", "a", "c"], significance=0.10, deterministic="constant-trend", lags=1)
    assert [result.variables for result in results] == [("b", "a", "c"), ("a", "b", "c"), ("c", "b", "a")]
    for result in results:
        # MacKinnon (2010) N = 3, Table 3 (constant and trend).
        assert result.critical_values == engle_granger_critical_values(3, "constant-trend", result.nobs)
        single = engle_granger(
            data, result.dependent, list(result.variables[1:]), significance=0.10,
            deterministic="constant-trend", lags=1,
        )
        assert single == result
        reference = coint(data[result.dependent], data[list(result.variables[1:])], trend="ct", maxlag=1, autolag=None)
        assert result.statistic == pytest.approx(reference[0], abs=1e-8)
        assert result.rejects  # c = a - 0.5 b + white noise cointegrates the three


def test_every_normalisation_refuses_fewer_than_two_or_repeated_variables() -> None:
    data = _independent_walks(0)
    with pytest.raises(ValueError, match="at least two variables, not 1"):
        engle_granger_all(data, ["y"], significance=0.05)
    with pytest.raises(DataError, match="a variable appears twice in y, x, y"):
        engle_granger_all(data, ["y", "x", "y"], significance=0.05)
