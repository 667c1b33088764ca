"""Tests of reportgen.stats.bounds: the PSS (2001) bounds test and its critical values."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from statsmodels.tsa.ardl import UECM, pss_critical_values

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats import bounds as bounds_module
from reportgen.stats.bounds import (
    BOUNDS_CASES,
    BOUNDS_CRITICAL_VALUES_SOURCE,
    bounds_critical_values,
    bounds_test,
)
from reportgen.stats.types import BoundsTestResult

_TREND = {1: "n", 2: "c", 3: "c", 4: "ct", 5: "ct"}


def _frame(columns: dict[str, np.ndarray], start: str = "2000-01", freq: str = "M") -> pd.DataFrame:
    length = len(next(iter(columns.values())))
    return pd.DataFrame(columns, index=pd.period_range(start, periods=length, freq=freq))


def _ar1(rng: np.random.Generator, nobs: int, coefficient: float) -> np.ndarray:
    shocks = rng.standard_normal(nobs)
    values = np.zeros(nobs)
    for t in range(1, nobs):
        values[t] = coefficient * values[t - 1] + shocks[t]
    return values


def _levels_relation(seed: int, nobs: int = 200) -> pd.DataFrame:
    """y = 1 + 2x + 0.5z + u: x a random walk (I(1)), z and u AR(1) with coefficient 0.5 (I(0))."""
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.standard_normal(nobs))
    z = _ar1(rng, nobs, 0.5)
    return _frame({"y": 1.0 + 2.0 * x + 0.5 * z + _ar1(rng, nobs, 0.5), "x": x, "z": z})


def _independent_walks(seed: int, nobs: int = 200) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return _frame({"y": np.cumsum(rng.standard_normal(nobs)), "x": np.cumsum(rng.standard_normal(nobs))})


# --- critical values -----------------------------------------------------------------------------


@pytest.mark.parametrize("case", list(BOUNDS_CASES))
@pytest.mark.parametrize("k", range(1, 11))
def test_copy_equals_the_statsmodels_table_keyed_by_number_of_regressors(case: int, k: int) -> None:
    # statsmodels tsa/ardl/pss_critical_values.py: crit_vals[(k, case, I1)], k = "the number of x
    # variables", percentiles (90, 95, 99, 99.9); we keep the first three.
    ours = bounds_critical_values(k, case)
    assert list(ours) == ["90%", "95%", "99%"]
    assert pss_critical_values.crit_percentiles[:3] == (90, 95, 99)
    lower = pss_critical_values.crit_vals[(k, case, False)][:3]
    upper = pss_critical_values.crit_vals[(k, case, True)][:3]
    assert [bound[0] for bound in ours.values()] == lower
    assert [bound[1] for bound in ours.values()] == upper


# PSS (2001) Table CI(iii), case III: REFERENCES §5. "library" = statsmodels pss_critical_values.py
# [SEEN], to the three decimals listed there; "paper" = PSS's printed values, from memory.
PSS_CASE_III = {
    1: {"library": ((4.044, 4.777), (4.923, 5.722), (6.861, 7.782)),
        "paper": ((4.04, 4.78), (4.94, 5.73), (6.84, 7.84))},
    2: {"library": ((3.174, 4.108), (3.802, 4.812), (5.172, 6.322)),
        "paper": ((3.17, 4.14), (3.79, 4.85), (5.15, 6.36))},
    3: {"library": ((2.730, 3.747), (3.229, 4.322), (4.311, 5.543)),
        "paper": ((2.72, 3.77), (3.23, 4.35), (4.29, 5.61))},
}


@pytest.mark.parametrize("k", [1, 2, 3])
def test_case_iii_values_of_pss_2001(k: int) -> None:
    ours = list(bounds_critical_values(k, 3).values())
    for (lower, upper), (library_lower, library_upper), (paper_lower, paper_upper) in zip(
        ours, PSS_CASE_III[k]["library"], PSS_CASE_III[k]["paper"], strict=True
    ):
        assert lower == pytest.approx(library_lower, abs=5e-4)
        assert upper == pytest.approx(library_upper, abs=5e-4)
        assert lower == pytest.approx(paper_lower, abs=0.1)
        assert upper == pytest.approx(paper_upper, abs=0.1)
        assert lower < upper


def test_case_iii_k4_is_ordered_between_k3_and_k5() -> None:
    # PSS (2001), Table CI(iii): the bounds fall as k grows (more restrictions share the F).
    for level in ("90%", "95%", "99%"):
        for bound in (0, 1):
            k3, k4, k5 = (bounds_critical_values(k, 3)[level][bound] for k in (3, 4, 5))
            assert k3 > k4 > k5


def test_critical_values_refuse_what_the_table_lacks() -> None:
    with pytest.raises(ValueError, match="1 to 10 regressors, not 11"):
        bounds_critical_values(11)
    with pytest.raises(ValueError, match="PSS cases I-V"):
        bounds_critical_values(1, 6)


def test_one_regressor_uses_the_k1_bounds_not_the_library_k_plus_1() -> None:
    # REFERENCES §5 [COMP]: statsmodels 0.15 UECMResults.bounds_test(case=3, asymptotic=True)
    # looks its table up at k + 1, so with one regressor it reports the k = 2 bounds (3.174 /
    # 4.108 at 90%). PSS (2001) Table CI(iii) gives 4.04 / 4.78 for k = 1, which we must use.
    data = _independent_walks(3)
    result = bounds_test(data, "y", ["x"], significance=0.10)
    assert result.critical_values["90%"] == pytest.approx((4.044, 4.777), abs=5e-4)
    assert result.critical_values["90%"] == pytest.approx((4.04, 4.78), abs=0.01)  # PSS (2001), from memory
    library = UECM(data["y"], result.lags["y"], data[["x"]], {"x": result.lags["x"]}, trend="c").fit()
    reported = library.bounds_test(case=3).critical_values
    assert (float(reported.loc[90, "lower"]), float(reported.loc[90, "upper"])) == pytest.approx(
        (3.174, 4.108), abs=5e-4
    )
    assert "not at the k + 1" in BOUNDS_CRITICAL_VALUES_SOURCE
    assert "k=1 regressors" in result.critical_values_source


# --- the test ------------------------------------------------------------------------------------


@pytest.mark.parametrize("case", list(BOUNDS_CASES))
@pytest.mark.parametrize("seed", [0, 1, 2])
def test_f_statistic_agrees_with_statsmodels_uecm(case: int, seed: int) -> None:
    # statsmodels UECMResults.bounds_test: the F statistic (Wald form / restrictions) of the same
    # conditional ECM; only its critical-value lookup is defective.
    rng = np.random.default_rng(seed)
    nobs = 180
    data = _frame({
        "y": np.cumsum(rng.standard_normal(nobs)),
        "x": np.cumsum(rng.standard_normal(nobs)),
        "z": _ar1(rng, nobs, 0.3),
    })
    result = bounds_test(data, "y", ["x", "z"], significance=0.05, case=case)
    lags = result.lags
    library = UECM(data["y"], lags["y"], data[["x", "z"]], {"x": lags["x"], "z": lags["z"]}, trend=_TREND[case]).fit()
    assert result.f_statistic == pytest.approx(library.bounds_test(case=case).statistic, rel=1e-9)
    assert result.nobs == len(library.resid)
    assert result.case == case
    assert result.case_description == BOUNDS_CASES[case]
    assert result.critical_values == bounds_critical_values(2, case)


@pytest.mark.parametrize("seed", range(20))
def test_levels_relation_with_an_i1_and_an_i0_regressor(seed: int) -> None:
    # PSS (2001): the bounds test allows a mix of I(0) and I(1) regressors; with a true levels
    # relation the F statistic exceeds the I(1) bound (common practice).
    result = bounds_test(_levels_relation(seed), "y", ["x", "z"], significance=0.05)
    assert result.decision == "levels relation"
    assert result.f_statistic > result.critical_values["95%"][1]


def test_independent_walks_mostly_show_no_levels_relation() -> None:
    # Common practice: for two independent random walks the F statistic is below the 5% I(0)
    # bound in most seeded samples and above the I(1) bound rarely (nominally 5%; the AIC lag
    # search raises it a little: 7.8% in 400 seeds).
    decisions = [bounds_test(_independent_walks(seed), "y", ["x"], significance=0.05).decision for seed in range(100)]
    assert decisions.count("no levels relation") >= 75
    assert decisions.count("levels relation") < 15


def test_decisions_follow_the_bounds() -> None:
    assert bounds_module._decision(5.8, (4.9, 5.7)) == "levels relation"
    assert bounds_module._decision(4.8, (4.9, 5.7)) == "no levels relation"
    assert bounds_module._decision(5.0, (4.9, 5.7)) == "inside the bounds"


def test_result_records_the_procedure() -> None:
    data = _levels_relation(0)
    result = bounds_test(data, "y", ["x", "z"], significance=0.05)
    assert isinstance(result, BoundsTestResult)
    assert result.dependent == "y"
    assert result.regressors == ("x", "z")
    assert result.case == 3
    assert result.case_description == "case III: unrestricted intercept, no trend"
    assert list(result.lags) == ["y", "x", "z"]
    assert all(1 <= order <= 4 for order in result.lags.values())
    assert result.nobs == len(data) - max(result.lags.values())
    assert result.lag_rule == (
        "AIC over ARDL lags 0 to 4 of every variable on the common sample of 196 (statsmodels "
        "ardl_select_order), chosen model refitted on its full sample"
    )
    assert result.critical_values_source == (
        "Pesaran, Shin and Smith (2001), case III: unrestricted intercept, no trend, k=2 regressors, "
        "asymptotic (statsmodels pss_critical_values.py crit_vals at k, not k+1)"
    )
    assert any("F tests y(-1), x(-1), z(-1) = 0 (3 restrictions" in note for note in result.notes)


def test_orders_of_zero_are_raised_to_one_and_noted() -> None:
    # With white-noise differences AIC typically keeps ARDL(1, 0): the conditional ECM needs the
    # regressor's lagged level and current difference, so ARDL(1, 1) is estimated.
    data = _independent_walks(0)
    result = bounds_test(data, "y", ["x"], significance=0.05, lag_criterion="bic")
    assert result.lags == {"y": 1, "x": 1}
    assert any(note.endswith("so ARDL(1, 1) is estimated.") for note in result.notes)


@settings(derandomize=True, max_examples=12, deadline=None)
@given(
    scale_y=st.floats(min_value=1e-3, max_value=1e3),
    scale_x=st.floats(min_value=1e-3, max_value=1e3),
    shift=st.floats(min_value=-1e3, max_value=1e3),
)
def test_f_statistic_is_invariant_to_units(scale_y: float, scale_x: float, shift: float) -> None:
    # Common practice: with an intercept in the model neither the lag choice nor the F statistic
    # depends on the units of the variables.
    data = _levels_relation(5, nobs=120)
    base = bounds_test(data, "y", ["x", "z"], significance=0.05, max_lags=2)
    scaled = data.assign(y=data["y"] * scale_y + shift, x=data["x"] * scale_x)
    other = bounds_test(scaled, "y", ["x", "z"], significance=0.05, max_lags=2)
    assert other.lags == base.lags  # rescaling shifts every log-variance in the criterion alike
    assert other.f_statistic == pytest.approx(base.f_statistic, rel=1e-6)


# --- errors and notes ----------------------------------------------------------------------------


def test_too_few_observations_raise_with_the_numbers() -> None:
    # Case III, one regressor, lags up to 4: 1 + 4 + 5 = 10 parameters, 4 + 10 + 10 = 24 observations.
    bounds_test(_independent_walks(0, nobs=24), "y", ["x"], significance=0.05)
    with pytest.raises(InsufficientDataError) as caught:
        bounds_test(_independent_walks(0, nobs=23), "y", ["x"], significance=0.05)
    assert str(caught.value) == (
        "the bounds test of y on x searching ARDL lags up to 4 needs at least 24 observations (4 lags, 10 plus "
        "the 10 parameters of the largest ARDL); the sample has 23"
    )


def test_collinear_variables_raise_data_error() -> None:
    data = _independent_walks(0)
    data["w"] = 3.0 * data["x"] - 1.0
    with pytest.raises(DataError) as caught:
        bounds_test(data, "y", ["x", "w"], significance=0.05)
    assert str(caught.value) == (
        "bounds test of y on x, w: the variables are perfectly collinear: w is an exact linear combination of const, x"
    )


def test_invalid_requests_are_refused() -> None:
    data = _independent_walks(0)
    with pytest.raises(ValueError, match="significance"):
        bounds_test(data, "y", ["x"], significance=0.2)
    with pytest.raises(ValueError, match="lag_criterion must be one of"):
        bounds_test(data, "y", ["x"], significance=0.05, lag_criterion="t-stat")
    with pytest.raises(ValueError, match="max_lags must be at least 1"):
        bounds_test(data, "y", ["x"], significance=0.05, max_lags=0)
    with pytest.raises(ValueError, match="1 to 10 regressors, not 0"):
        bounds_test(data, "y", [], significance=0.05)
    with pytest.raises(DataError, match="no column named q"):
        bounds_test(data, "y", ["q"], significance=0.05)
    with pytest.raises(DataError, match="appears twice"):
        bounds_test(data, "y", ["y"], significance=0.05)
    data.iloc[0, 1] = math.inf
    with pytest.raises(DataError, match="missing or infinite"):
        bounds_test(data, "y", ["x"], significance=0.05)


def test_library_warnings_are_kept_in_the_notes(monkeypatch: pytest.MonkeyPatch) -> None:
    # STYLE.md: library warnings are captured and stored, never silenced or let through.
    original = bounds_module.ardl_select_order

    def warning_selection(*args, **kwargs):
        warnings.warn("a library remark", UserWarning, stacklevel=2)
        return original(*args, **kwargs)

    monkeypatch.setattr(bounds_module, "ardl_select_order", warning_selection)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = bounds_test(_levels_relation(0), "y", ["x", "z"], significance=0.05)
    assert "UserWarning: a library remark" in result.notes
