"""Tests of reportgen.stats.johansen: the reduced-rank regression, its five cases and critical values."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import linalg
from statsmodels.datasets import danish_data
from statsmodels.regression.linear_model import OLS
from statsmodels.tsa.coint_tables import c_sja, c_sjt
from statsmodels.tsa.vector_ar.vecm import coint_johansen

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats import johansen as johansen_module
from reportgen.stats.johansen import (
    JOHANSEN_CASES,
    johansen,
    johansen_critical_values,
    johansen_critical_values_source,
    johansen_default_max_order,
)
from reportgen.stats.types import JohansenResult


def _frame(values: np.ndarray, names: str = "abcdefghijkl", start: str = "2000-01", freq: str = "M") -> pd.DataFrame:
    return pd.DataFrame(
        values, columns=list(names[: values.shape[1]]), index=pd.period_range(start, periods=len(values), freq=freq)
    )


def _walks(seed: int, nobs: int = 200, n: int = 3) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return _frame(np.cumsum(rng.standard_normal((nobs, n)), axis=0))


def _cointegrated_pair(seed: int, nobs: int = 200) -> pd.DataFrame:
    """y = 1 + 2x + u with x a random walk and u AR(1) with coefficient 0.5."""
    rng = np.random.default_rng(seed)
    x = np.cumsum(rng.standard_normal(nobs))
    shocks = rng.standard_normal(nobs)
    noise = np.zeros(nobs)
    for t in range(1, nobs):
        noise[t] = 0.5 * noise[t - 1] + shocks[t]
    return _frame(np.column_stack([1.0 + 2.0 * x + noise, x]), names="yx")


def _danish() -> pd.DataFrame:
    raw = danish_data.load_pandas().data
    return raw.set_index(raw.index.to_period("Q"))


# --- critical values -----------------------------------------------------------------------------


@pytest.mark.parametrize(("case", "det_order"), [(1, -1), (3, 0), (5, 1)])
@pytest.mark.parametrize("dimension", range(1, 13))
def test_mhm_copy_equals_the_statsmodels_table(case: int, det_order: int, dimension: int) -> None:
    # MacKinnon, Haug and Michelis (1999) quantiles as shipped in statsmodels tsa/coint_tables.py:
    # c_sjt / c_sja with p = -1 (no deterministic part), 0 (constant), 1 (constant and trend).
    trace = johansen_critical_values(case, dimension, "trace")
    maximum = johansen_critical_values(case, dimension, "max-eigenvalue")
    assert list(trace) == ["90%", "95%", "99%"]
    assert tuple(trace.values()) == tuple(float(value) for value in c_sjt(dimension, det_order))
    assert tuple(maximum.values()) == tuple(float(value) for value in c_sja(dimension, det_order))


# REFERENCES §4 [SEEN statsmodels tsa/coint_tables.py]: MacKinnon, Haug and Michelis (1999) 95%
# values, trace / max-eigenvalue, by n - r.
MHM_1999_95 = {
    1: ((4.1296, 4.1296), (12.3212, 11.2246), (24.2761, 17.7961), (40.1749, 24.1592)),
    3: ((3.8415, 3.8415), (15.4943, 14.2639), (29.7961, 21.1314), (47.8545, 27.5858)),
    5: ((3.8415, 3.8415), (18.3985, 17.1481), (35.0116, 24.2522), (55.2459, 30.8151)),
}


@pytest.mark.parametrize("case", [1, 3, 5])
def test_mhm_95_percent_values_of_the_references(case: int) -> None:
    for dimension, (trace, maximum) in enumerate(MHM_1999_95[case], start=1):
        assert johansen_critical_values(case, dimension, "trace")["95%"] == trace
        assert johansen_critical_values(case, dimension, "max-eigenvalue")["95%"] == maximum
    assert "MacKinnon, Haug and Michelis (1999)" in johansen_critical_values_source(case)


def test_restricted_case_tables_are_near_osterwald_lenum() -> None:
    # Osterwald-Lenum (1992) Table 1* (restricted constant), 95% trace, n - r = 1..4: 9.24, 19.96,
    # 34.91, 53.12; Table 2* (restricted trend), n - r = 2..4: 25.32, 42.44, 62.99 (from memory,
    # REFERENCES §4). reportgen's own simulation (T = 1000) lies within 3% of them.
    ours = [johansen_critical_values(2, d, "trace")["95%"] for d in range(1, 5)]
    assert ours == pytest.approx([9.24, 19.96, 34.91, 53.12], rel=0.03)
    ours = [johansen_critical_values(4, d, "trace")["95%"] for d in range(2, 5)]
    assert ours == pytest.approx([25.32, 42.44, 62.99], rel=0.03)
    assert "reportgen's own simulation for case 2" in johansen_critical_values_source(2)
    assert "reportgen's own simulation for case 4" in johansen_critical_values_source(4)


def test_the_simulation_computes_the_same_statistics_as_the_test() -> None:
    # The table's generator and johansen() must compute the same statistic on the same walks.
    import importlib.util
    from pathlib import Path

    path = Path(__file__).resolve().parents[2] / "tools" / "johansen_restricted_cases.py"
    spec = importlib.util.spec_from_file_location("johansen_restricted_cases", path)
    assert spec is not None
    assert spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    walks = np.cumsum(np.random.default_rng(5).standard_normal((3, 201, 2)), axis=1)
    for case in (2, 4):
        trace, maximum = module.statistics(walks, case)
        for batch in range(3):
            frame = pd.DataFrame(walks[batch], columns=["a", "b"],
                                 index=pd.period_range("2000-01", periods=201, freq="M"))
            result = johansen(frame, ["a", "b"], significance=0.05, case=case, lags=0)
            assert result.trace[0].statistic == pytest.approx(trace[batch], rel=1e-8)
            assert result.max_eigenvalue[0].statistic == pytest.approx(maximum[batch], rel=1e-8)


def test_restricted_case_tables_are_near_mhm_for_the_same_case() -> None:
    # MacKinnon, Haug and Michelis (1999), 95% trace, cases 2 and 4, n - r = 1..3 (from memory,
    # REFERENCES §4): the two simulations agree within 3%, while the neighbouring unrestricted
    # cases (3 and 5) are more than 15% away at n - r = 3, so a table assigned to the wrong case
    # would fail here.
    mhm = {2: (9.1645, 20.2618, 35.1928), 4: (12.5180, 25.8721, 42.9153)}
    for case, values in mhm.items():
        for dimension, value in enumerate(values, start=1):
            assert johansen_critical_values(case, dimension, "trace")["95%"] == pytest.approx(value, rel=0.03)
        neighbour = johansen_critical_values(case + 1, 3, "trace")["95%"]
        assert abs(neighbour / values[2] - 1) > 0.15


@pytest.mark.parametrize("case", list(JOHANSEN_CASES))
def test_tables_are_ordered_and_agree_where_the_statistics_coincide(case: int) -> None:
    # Common practice: quantiles increase with the level and with n - r; for n - r = 1 the trace
    # and maximum-eigenvalue statistics are the same number, so their quantiles are equal.
    largest = 6 if case in (2, 4) else 12
    previous = {"trace": 0.0, "max-eigenvalue": 0.0}
    for dimension in range(1, largest + 1):
        for statistic in ("trace", "max-eigenvalue"):
            values = list(johansen_critical_values(case, dimension, statistic).values())
            assert values == sorted(values)
            assert values[1] > previous[statistic]
            previous[statistic] = values[1]
    assert johansen_critical_values(case, 1, "trace") == johansen_critical_values(case, 1, "max-eigenvalue")
    with pytest.raises(ValueError, match=f"cover n - r = 1 to {largest}, not {largest + 1}"):
        johansen_critical_values(case, largest + 1, "trace")


def test_critical_values_refuse_unknown_cases_and_statistics() -> None:
    with pytest.raises(ValueError, match="case must be one of"):
        johansen_critical_values(6, 1, "trace")
    with pytest.raises(ValueError, match="statistic must be"):
        johansen_critical_values(3, 1, "lambda")  # type: ignore[arg-type]


@pytest.mark.parametrize("case", [2, 4])
def test_restricted_case_tables_give_the_nominal_size(case: int) -> None:
    # Common practice: under the null (two independent random walks, rank 0) the 5% trace test
    # rejects in about 5% of samples. 800 seeded samples of T = 300 give a standard error of 0.008;
    # using the unrestricted case's table instead (15.49 for n - r = 2 in case 3, 18.40 in case 5)
    # would reject far more often than the upper limit (T = 300 here, against the table's 1000, so
    # the rate may run slightly above 5%).
    rejections = 0
    replications = 800
    for seed in range(replications):
        data = _walks(10_000 + seed, nobs=300, n=2)
        result = johansen(data, ["a", "b"], significance=0.05, case=case, lags=0)
        rejections += result.trace[0].rejects
    assert 0.025 <= rejections / replications <= 0.08


# --- the reduced-rank regression -----------------------------------------------------------------


def test_danish_money_demand_johansen_juselius_1990() -> None:
    # Johansen and Juselius (1990), Danish money demand: lrm, lry, ibo, ide, 1974Q1-1987Q3, VAR(2)
    # (one lagged difference), constant restricted to the cointegrating space, three centred
    # seasonal dummies, T = 53. Values from REFERENCES §4 [COMP, matching memory of the paper].
    data = _danish()
    assert len(data) == 55
    result = johansen(data, ["lrm", "lry", "ibo", "ide"], significance=0.05, case=2, lags=1, seasonal=True)
    assert isinstance(result, JohansenResult)
    assert result.nobs == 53
    assert result.eigenvalues == pytest.approx((0.4332, 0.1776, 0.1128, 0.0434), abs=5e-5)
    trace = [test.statistic for test in result.trace]
    maximum = [test.statistic for test in result.max_eigenvalue]
    assert [trace[0], trace[1], trace[3]] == pytest.approx([49.14, 19.06, 2.35], abs=5e-3)
    # The published 8.70 is not recalled reliably (REFERENCES §4); the statistic is 8.695, which
    # prints as 8.69 or 8.70 depending on the digits carried.
    assert trace[2] == pytest.approx(8.695, abs=6e-3)
    assert maximum == pytest.approx([30.09, 10.36, 6.34, 2.35], abs=5e-3)
    assert [test.rank for test in result.trace] == [0, 1, 2, 3]
    # Against the case 2 95% value for n - r = 4 (54.16; Osterwald-Lenum's is 53.12, from memory) the
    # trace test does not reject rank 0; the maximum-eigenvalue test (28.66) does, and a note says so.
    assert result.trace[0].critical_values["95%"] == 54.16
    assert not result.trace[0].rejects
    assert result.max_eigenvalue[0].rejects
    assert result.rank == 0
    assert any("maximum-eigenvalue sequence would choose rank 1" in note for note in result.notes)
    assert result.case == 2
    assert result.case_description == JOHANSEN_CASES[2]
    assert result.lag_rule == "fixed at 1"
    assert "Reduced-rank regression on 53 observations, 1974Q3 to 1987Q3" in result.notes[-2]
    assert result.notes[-1] == "3 centred seasonal dummies enter unrestricted."
    assert "reportgen's own simulation for case 2" in result.critical_values_source


def test_danish_lag_search_chooses_the_var2_of_johansen_and_juselius() -> None:
    # Johansen and Juselius (1990) use a VAR(2); AIC over orders 1..min(8, 55 // 16) = 3 agrees.
    result = johansen(_danish(), ["lrm", "lry", "ibo", "ide"], significance=0.05, case=2, seasonal=True)
    assert result.lags == 1
    assert result.lag_rule == (
        "AIC of the VAR in levels (with constant and 3 centred seasonal dummies) over orders 1 to 3 "
        "(min(8, T/(4n)) at T=55, n=4) on the common sample of 52; order 2 chosen, so 1 lagged differences"
    )
    assert johansen_default_max_order(55, 4) == 3


@pytest.mark.parametrize(("case", "det_order"), [(1, -1), (3, 0)])
@pytest.mark.parametrize("lags", [1, 2, 4])
@pytest.mark.parametrize("seed", [0, 1])
def test_cases_1_and_3_agree_with_statsmodels(case: int, det_order: int, lags: int, seed: int) -> None:
    # REFERENCES §4: statsmodels coint_johansen with det_order -1 is case 1 and det_order 0 is
    # case 3 exactly; its critical values are MacKinnon, Haug and Michelis (1999).
    rng = np.random.default_rng(seed)
    levels = np.cumsum(rng.standard_normal((150, 3)), axis=0)
    levels[:, 2] = levels[:, 0] - 0.5 * levels[:, 1] + rng.standard_normal(150)  # one relation
    levels += np.array([0.1, -0.05, 0.02]) * np.arange(150)[:, None] if case == 3 else 0.0
    data = _frame(levels)
    result = johansen(data, ["a", "b", "c"], significance=0.05, case=case, lags=lags)
    reference = coint_johansen(levels, det_order, lags)
    assert result.nobs == len(levels) - lags - 1
    np.testing.assert_allclose(result.eigenvalues, reference.eig, atol=1e-8, rtol=0)
    np.testing.assert_allclose([test.statistic for test in result.trace], reference.lr1, atol=1e-8, rtol=0)
    np.testing.assert_allclose([test.statistic for test in result.max_eigenvalue], reference.lr2, atol=1e-8, rtol=0)
    trace_values = [list(test.critical_values.values()) for test in result.trace]
    max_values = [list(test.critical_values.values()) for test in result.max_eigenvalue]
    np.testing.assert_array_equal(trace_values, reference.cvt)
    np.testing.assert_array_equal(max_values, reference.cvm)


def _textbook(data: pd.DataFrame, case: int, lags: int, seasonal_dummies: np.ndarray | None = None) -> np.ndarray:
    """Eigenvalues of S11^-1 S10 S00^-1 S01 from statsmodels OLS residuals (Johansen 1995, ch. 6)."""
    levels = data.to_numpy()
    nobs = len(levels)
    differences = np.diff(levels, axis=0)
    z0 = differences[lags:]
    z1 = levels[lags:-1]
    time = np.arange(lags + 1, nobs, dtype=float)
    short = [differences[lags - i : len(differences) - i] for i in range(1, lags + 1)]
    constant = np.ones((len(z0), 1))
    if case == 2:
        z1 = np.column_stack([z1, constant])
    if case == 4:
        z1 = np.column_stack([z1, time])
    if case in (3, 4, 5):
        short.append(constant)
    if case == 5:
        short.append(time[:, None])
    if seasonal_dummies is not None:
        short.append(seasonal_dummies[lags + 1 :])
    if short:
        z2 = np.column_stack(short)
        r0 = np.asarray(OLS(z0, z2).fit().resid)
        r1 = np.asarray(OLS(z1, z2).fit().resid)
    else:
        r0, r1 = z0, z1
    s00, s01, s11 = r0.T @ r0 / len(r0), r0.T @ r1 / len(r0), r1.T @ r1 / len(r0)
    product = linalg.solve(s11, s01.T) @ linalg.solve(s00, s01)
    return np.sort(np.linalg.eigvals(product).real)[::-1][: levels.shape[1]]


@pytest.mark.parametrize("case", list(JOHANSEN_CASES))
@pytest.mark.parametrize("lags", [0, 2])
def test_eigenvalues_match_the_textbook_formula_in_every_case(case: int, lags: int) -> None:
    # Johansen (1995), chapter 6: the eigenvalues solve |λ S11 - S10 S00^-1 S01| = 0, with the
    # restricted constant (case 2) or trend (case 4) in the level term and the unrestricted terms
    # concentrated out. Here built from statsmodels OLS residuals and a general eigen-solver.
    rng = np.random.default_rng(40 + case)
    levels = np.cumsum(rng.standard_normal((120, 3)) + np.array([0.2, 0.0, -0.1]), axis=0)
    levels[:, 1] = 0.5 * levels[:, 0] + rng.standard_normal(120) + 3.0
    data = _frame(levels)
    result = johansen(data, ["a", "b", "c"], significance=0.05, case=case, lags=lags)
    np.testing.assert_allclose(result.eigenvalues, _textbook(data, case, lags), atol=1e-10, rtol=0)


@pytest.mark.parametrize("case", list(JOHANSEN_CASES))
def test_trace_at_rank_zero_is_the_likelihood_ratio_of_pi_equal_zero(case: int) -> None:
    # Johansen (1988): trace(0) is the Gaussian likelihood-ratio statistic of Π = 0 (and of the
    # restricted deterministic term) against an unrestricted VAR in error-correction form,
    # T log(det Σ_restricted / det Σ_unrestricted), here with both VARs fitted by statsmodels OLS.
    rng = np.random.default_rng(7 + case)
    levels = np.cumsum(rng.standard_normal((100, 2)) + 0.1, axis=0)
    data = _frame(levels)
    lags = 1
    result = johansen(data, ["a", "b"], significance=0.05, case=case, lags=lags)
    differences = np.diff(levels, axis=0)
    target = differences[lags:]
    time = np.arange(lags + 1, len(levels), dtype=float)
    short = [differences[: len(differences) - 1]]
    short += {1: [], 2: [], 3: [np.ones(len(target))], 4: [np.ones(len(target))],
              5: [np.ones(len(target)), time]}[case]
    level_term = [levels[lags:-1], *{2: [np.ones(len(target))], 4: [time]}.get(case, [])]
    restricted = OLS(target, np.column_stack(short)).fit().resid
    unrestricted = OLS(target, np.column_stack([*level_term, *short])).fit().resid

    def log_det(residuals: np.ndarray) -> float:
        return float(np.linalg.slogdet(residuals.T @ residuals / len(residuals))[1])

    expected = len(target) * (log_det(restricted) - log_det(unrestricted))
    assert result.trace[0].statistic == pytest.approx(expected, rel=1e-9)
    assert result.max_eigenvalue[-1].statistic == pytest.approx(result.trace[-1].statistic, rel=1e-12)


def test_no_lagged_differences_use_the_lagged_level() -> None:
    # statsmodels issue #7459 (open): coint_johansen with k_ar_diff = 0 regresses Δy_t on y_t
    # instead of y_{t-1}. Our case 1 with no lags matches the textbook formula, not statsmodels.
    data = _walks(1, nobs=200)
    ours = johansen(data, ["a", "b", "c"], significance=0.05, case=1, lags=0)
    np.testing.assert_allclose(ours.eigenvalues, _textbook(data, 1, 0), atol=1e-12, rtol=0)
    library = coint_johansen(data.to_numpy(), -1, 0)
    assert np.max(np.abs(np.asarray(ours.eigenvalues) - library.eig)) > 1e-3


def test_case_5_is_not_statsmodels_det_order_1() -> None:
    # REFERENCES §4 (statsmodels issue #6168): det_order = 1 detrends the data first, which is not
    # Johansen's case 5 (unrestricted constant and trend in the error-correction model).
    data = _walks(3, nobs=150)
    ours = johansen(data, ["a", "b", "c"], significance=0.05, case=5, lags=1)
    np.testing.assert_allclose(ours.eigenvalues, _textbook(data, 5, 1), atol=1e-10, rtol=0)
    library = coint_johansen(data.to_numpy(), 1, 1)
    assert np.max(np.abs(np.asarray(ours.eigenvalues) - library.eig)) > 1e-3


def test_seasonal_dummies_with_an_unrestricted_constant() -> None:
    # Common practice: with an unrestricted constant (case 3), centred and plain 0/1 seasonal
    # dummies span the same space, so the eigenvalues agree; the textbook check uses plain dummies
    # for the first three quarters.
    rng = np.random.default_rng(5)
    nobs = 120
    quarters = np.arange(nobs) % 4
    season = np.array([0.0, 2.0, -1.0, 0.5])[quarters]
    levels = np.cumsum(rng.standard_normal((nobs, 2)), axis=0) + season[:, None]
    data = _frame(levels, start="1990Q1", freq="Q")
    plain = np.column_stack([(quarters == q).astype(float) for q in range(3)])
    result = johansen(data, ["a", "b"], significance=0.05, case=3, lags=2, seasonal=True)
    np.testing.assert_allclose(result.eigenvalues, _textbook(data, 3, 2, plain), atol=1e-10, rtol=0)
    without = johansen(data, ["a", "b"], significance=0.05, case=3, lags=2)
    assert np.max(np.abs(np.asarray(without.eigenvalues) - np.asarray(result.eigenvalues))) > 1e-3


def test_seasonal_dummies_need_quarterly_or_monthly_periods() -> None:
    data = _walks(0, nobs=60, n=2)
    assert johansen(data, ["a", "b"], significance=0.05, lags=1, seasonal=True).notes[-1] == (
        "11 centred seasonal dummies enter unrestricted."
    )
    annual = _frame(data.to_numpy(), start="1900", freq="Y")
    with pytest.raises(ValueError, match="seasonal dummies need quarterly or monthly data"):
        johansen(annual, ["a", "b"], significance=0.05, lags=1, seasonal=True)
    with pytest.raises(ValueError, match="PeriodIndex"):
        johansen(data.reset_index(drop=True), ["a", "b"], significance=0.05, lags=1, seasonal=True)


# --- decisions on simulated systems (common practice) --------------------------------------------


def _drifting_walks(seed: int, nobs: int = 200) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    return _frame(np.cumsum(rng.standard_normal((nobs, 2)) + np.array([0.3, -0.2]), axis=0))


def test_independent_walks_have_rank_zero() -> None:
    # Common practice: the 5% trace test on two independent random walks (case 3) keeps rank 0 in
    # at least 90% of seeded samples. The walks drift: the case 3 quantiles assume the unrestricted
    # constant produces linear trends (Johansen 1995, chapter 6); driftless walks belong to case 2.
    ranks = [johansen(_drifting_walks(seed), ["a", "b"], significance=0.05).rank for seed in range(100)]
    assert sum(rank == 0 for rank in ranks) >= 90


def test_cointegrated_pair_has_rank_one() -> None:
    # Common practice: y = 1 + 2x + AR(0.5) noise with x a driftless random walk has one
    # cointegrating relation with a constant in it and no trend in the data: case 2. The 5%
    # sequential trace test finds rank 1 in at least 90% of seeded samples.
    ranks = [
        johansen(_cointegrated_pair(seed), ["y", "x"], significance=0.05, case=2).rank for seed in range(100)
    ]
    assert sum(rank == 1 for rank in ranks) >= 90


def test_the_wrong_case_overstates_the_rank() -> None:
    # Johansen (1995), chapter 6: without a trend in the data the case 3 quantiles are too small
    # at the last step (n - r = 1 is compared with chi-squared(1), 3.84), so the same driftless
    # pair is given full rank far more often than 5% of the time.
    ranks = [johansen(_cointegrated_pair(seed), ["y", "x"], significance=0.05).rank for seed in range(100)]
    assert sum(rank == 2 for rank in ranks) > 15


def test_result_records_the_procedure() -> None:
    data = _cointegrated_pair(0)
    data["x"] += 0.3 * np.arange(len(data))  # a drift in x, so case 3 applies
    data["y"] = 1.0 + 2.0 * data["x"] + (data["y"] - 1.0 - 2.0 * _cointegrated_pair(0)["x"])
    result = johansen(data, ["y", "x"], significance=0.10)
    assert result.variables == ("y", "x")
    assert result.case == 3
    assert result.significance == 0.10
    assert [test.rank for test in result.trace] == [0, 1]
    assert result.trace[0].rejects == (result.trace[0].statistic > result.trace[0].critical_values["90%"])
    assert result.rank == 1
    assert result.rank_rule == (
        "sequential trace tests at 10% (Johansen 1988): the first r whose null hypothesis 'rank <= r' is not rejected"
    )
    assert result.critical_values_source == (
        "MacKinnon, Haug and Michelis (1999), asymptotic quantiles (johdist), as shipped in statsmodels "
        "tsa/coint_tables.py; asymptotic quantiles, case 3, n - r = 1 to 2"
    )
    assert result.lag_rule.startswith("AIC of the VAR in levels (with constant) over orders 1 to 8 ")
    assert result.nobs == 200 - result.lags - 1
    assert result.eigenvalues[0] >= result.eigenvalues[1] >= 0.0


def test_stationary_system_has_full_rank_and_says_so() -> None:
    rng = np.random.default_rng(2)
    data = _frame(rng.standard_normal((200, 2)))
    result = johansen(data, ["a", "b"], significance=0.05, lags=1)
    assert result.rank == 2
    assert (
        "Every trace null hypothesis is rejected at 5%: the VAR has full rank 2, which means the variables "
        "are stationary in levels and contradicts their being integrated."
    ) in result.notes


@settings(derandomize=True, max_examples=12, deadline=None)
@given(
    scale_a=st.floats(min_value=1e-3, max_value=1e3),
    scale_b=st.floats(min_value=1e-3, max_value=1e3),
    shift=st.floats(min_value=-1e3, max_value=1e3),
    case=st.sampled_from([2, 3, 4, 5]),
)
def test_statistics_are_invariant_to_units(scale_a: float, scale_b: float, shift: float, case: int) -> None:
    # Common practice: with a constant in the model, the canonical correlations do not depend on
    # the units or the origin of the variables.
    data = _walks(11, nobs=120, n=2)
    base = johansen(data, ["a", "b"], significance=0.05, case=case, lags=2)
    scaled = data.assign(a=data["a"] * scale_a + shift, b=data["b"] * scale_b)
    other = johansen(scaled, ["a", "b"], significance=0.05, case=case, lags=2)
    np.testing.assert_allclose(other.eigenvalues, base.eigenvalues, rtol=1e-6, atol=1e-9)


# --- errors and notes ----------------------------------------------------------------------------


def test_minimum_sample_is_exact() -> None:
    # Case 3, 3 variables, 2 lagged differences: 3 + 6 + 1 = 10 parameters per equation, so
    # 10 + 10 + 3 = 23 observations are needed.
    johansen(_walks(0, nobs=23, n=3), ["a", "b", "c"], significance=0.05, lags=2)
    with pytest.raises(InsufficientDataError) as caught:
        johansen(_walks(0, nobs=22, n=3), ["a", "b", "c"], significance=0.05, lags=2)
    assert str(caught.value) == (
        "the Johansen test of a, b, c in case 3 with 2 lagged differences needs at least 23 observations "
        "(10 more than the 10 parameters per equation, plus 3 lost to differencing and lags); the sample has 22"
    )
    # Two variables, no lagged differences: 2 + 1 = 3 parameters, 10 + 3 + 1 = 14 observations.
    with pytest.raises(InsufficientDataError, match="with 0 lagged differences needs at least 14 observations"):
        johansen(_walks(0, nobs=13, n=2), ["a", "b"], significance=0.05)


def test_lag_search_shrinks_to_fit_a_short_sample() -> None:
    # min(8, 40 // 8) = 5 orders: 4 lagged differences need 10 + (2 + 8 + 1) + 5 = 26 observations,
    # which 40 has. With 29 observations, 6 lagged differences would need 10 + 15 + 7 = 32.
    result = johansen(_walks(4, nobs=40, n=2), ["a", "b"], significance=0.05)
    assert "over orders 1 to 5 (min(8, T/(4n)) at T=40, n=2)" in result.lag_rule
    with pytest.raises(InsufficientDataError, match="searching up to 6 lagged differences needs at least 32"):
        johansen(_walks(4, nobs=29, n=2), ["a", "b"], significance=0.05, max_lags=6)


def test_collinear_variables_raise_data_error() -> None:
    data = _walks(0, n=2)
    data["c"] = 3.0 * data["a"] - 1.0
    with pytest.raises(DataError) as caught:
        johansen(data, ["a", "b", "c"], significance=0.05, lags=1)
    assert str(caught.value) == (
        "Johansen test of a, b, c: the variables are perfectly collinear: c is an exact linear combination of const, a"
    )
    data["d"] = 2.0
    with pytest.raises(DataError, match="d is constant"):
        johansen(data, ["a", "d"], significance=0.05, lags=1)


def test_invalid_requests_are_refused() -> None:
    data = _walks(0)
    with pytest.raises(ValueError, match="significance"):
        johansen(data, ["a", "b"], significance=0.2)
    with pytest.raises(ValueError, match="case must be one of"):
        johansen(data, ["a", "b"], significance=0.05, case=0)
    with pytest.raises(ValueError, match="at least 2 variables, not 1"):
        johansen(data, ["a"], significance=0.05, case=2)
    wide = pd.DataFrame({f"v{i}": data["a"].to_numpy() + i for i in range(7)}, index=data.index)
    with pytest.raises(InsufficientDataError, match="cover at most 6 variables; the system has 7"):
        johansen(wide, list(wide.columns), significance=0.05, case=2)
    with pytest.raises(DataError, match="no column named z"):
        johansen(data, ["a", "z"], significance=0.05)
    with pytest.raises(DataError, match="appears twice"):
        johansen(data, ["a", "a"], significance=0.05)
    data.iloc[3, 0] = math.nan
    with pytest.raises(DataError, match="missing or infinite"):
        johansen(data, ["a", "b"], significance=0.05)


def test_numerical_warnings_are_kept_in_the_notes(monkeypatch: pytest.MonkeyPatch) -> None:
    # STYLE.md: warnings are captured and stored, never silenced or let through.
    original = johansen_module._residuals

    def warning_residuals(values: np.ndarray, regressors: np.ndarray) -> np.ndarray:
        warnings.warn("a numerical remark", RuntimeWarning, stacklevel=2)
        return original(values, regressors)

    monkeypatch.setattr(johansen_module, "_residuals", warning_residuals)
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = johansen(_walks(0), ["a", "b"], significance=0.05, lags=1)
    assert result.notes[0] == "RuntimeWarning: a numerical remark"
