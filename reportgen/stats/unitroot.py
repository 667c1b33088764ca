"""Unit-root and stationarity tests, each returning a frozen :class:`TestResult`.

The arithmetic is reportgen's own (:mod:`reportgen.stats.engine`, the same functions a simulation
runs on a block of series at once): ADF and DF-GLS regressions and their lag searches from one
factorisation of the regression's cross products, Phillips-Perron and KPSS from explicit
residuals, MacKinnon's p-value surface evaluated as statsmodels evaluates it. statsmodels and arch
are the references the tests compare with (and statsmodels supplies the published tables); none
of their estimators runs here. Every lag search (ADF, DF-GLS, Zivot-Andrews) applies
``adfuller``'s ``autolag`` rule to all candidates from one factorisation (:func:`adf_lag_search`);
``adfuller`` refits each candidate, which takes minutes on 100,000 observations. This module pins
the choices the libraries leave open or make differently from reportgen, and reports them in the
result:

* the maximum lag follows Schwert (1989) rounded *down*, ``int(12 (T/100)^(1/4))``
  (statsmodels and arch round up), reduced when the regression would otherwise be infeasible;
* the Phillips-Perron bandwidth is Newey and West's (1994) automatic choice for the Bartlett
  kernel (:func:`newey_west_bandwidth`), computed scale-free;
* DF-GLS critical values are Elliott, Rothenberg and Stock's (1996) Table I with constant and
  trend and the Dickey-Fuller distribution without deterministic terms with constant; its p-value
  is interpolated between the critical values, and decisions use the critical values;
* the Zivot-Andrews break date is the last period before the break (``T_B`` of Zivot and Andrews
  1992); its critical values are the paper's, its p-value statsmodels' simulated distribution;
* p-values that lie beyond the range of the table or response surface they come from are reported
  as bounds (``pvalue_bound`` ``"<"`` or ``">"``), never as exact values;
* library warnings are captured into ``notes`` instead of being printed;
* a series that is constant, or varies only beyond its 10th significant digit, is refused
  (:data:`~reportgen.stats.checks.VARIATION_LIMIT`), and so is an ADF-type regression that is
  singular, fits exactly or has no residual degree of freedom: each has no t-statistic.

Long series: the ADF-type regressions cost ``O(T p)`` however long the series, and the
Zivot-Andrews break search is an exact rank update (:func:`_za_search`) rather than one regression
per candidate break, so the whole battery on 100,000 observations takes seconds.

Rescaling a series (multiplying it by a positive or negative constant) leaves every statistic,
lag choice and bandwidth unchanged. To keep that true in floating point as well, each series is
divided by its largest absolute value before any regression: a change of units then changes the
computed statistics by a few units in the last place at most, instead of by the rounding error of
a badly scaled least-squares problem.
"""

from __future__ import annotations

import functools
import hashlib
import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Final

import numpy as np
import pandas as pd
from statsmodels.tools.sm_exceptions import InterpolationWarning
from statsmodels.tsa.stattools import zivot_andrews as _statsmodels_zivot_andrews

from reportgen.errors import SampleTooShortError, StatsInputError
from reportgen.periods import period_label
from reportgen.stats import engine
from reportgen.stats.capture import warning_texts
from reportgen.stats.checks import VARIATION_LIMIT, relative_spread
from reportgen.stats.numerics import LARGE_SAMPLE, _by_qr, _column_scaled, orthonormal_factor
from reportgen.stats.types import TestResult
from reportgen.vocabulary import Deterministic

__all__ = [
    "ADF_CRITERIA",
    "DFGLS_CBAR",
    "TERMS_TEXT",
    "ZA_MODEL_TEXT",
    "adf",
    "adf_feasible_max_lags",
    "adf_lag_search",
    "adf_trend_t_statistic",
    "dfgls",
    "dfgls_trend_critical_values",
    "dickey_fuller_t_statistic",
    "kpss",
    "newey_west_bandwidth",
    "phillips_perron",
    "schwert_max_lags",
    "zivot_andrews",
]

#: statsmodels' code for each deterministic specification.
_REGRESSION: Final[dict[str, str]] = {"none": "n", "constant": "c", "constant-trend": "ct"}
#: Number of deterministic regressors of each specification.
_TREND_COUNT: Final[dict[str, int]] = {"none": 0, "constant": 1, "constant-trend": 2}
#: How each specification is named in messages: "ADF with constant and trend".
TERMS_TEXT: Final[dict[str, str]] = {
    "none": "without deterministic terms",
    "constant": "with constant",
    "constant-trend": "with constant and trend",
}
#: Lag criteria accepted by :func:`adf`, with the name shown in ``lag_rule``; ``"fixed"`` uses
#: exactly ``max_lags`` lagged differences.
ADF_CRITERIA: Final[dict[str, str]] = {"aic": "AIC", "bic": "BIC", "t-stat": "t-stat", "fixed": "fixed"}
#: Significance levels of KPSS (1992) Table 1, keyed by the table's column labels.
_KPSS_LEVELS: Final[dict[float, str]] = {0.10: "10%", 0.05: "5%", 0.025: "2.5%", 0.01: "1%"}
#: Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1, asymptotic critical values (10% to 1%).
_KPSS_1992: Final[dict[str, dict[str, float]]] = engine.KPSS_TABLE
#: Significance levels of the three-column tables (DF-GLS, Zivot-Andrews), keyed by column label.
_TABLE_LEVELS: Final[dict[float, str]] = {0.01: "1%", 0.05: "5%", 0.10: "10%"}
_MACKINNON_PVALUE_SOURCE: Final[str] = "MacKinnon (1994) response surface; a bound beyond its range"

#: Local-to-unity parameter c-bar of the GLS quasi-differences (Elliott, Rothenberg and Stock 1996).
DFGLS_CBAR: Final[dict[str, float]] = engine.DFGLS_CBAR
#: Zivot and Andrews (1992), asymptotic critical values for trim 0.15, from memory
#: (REFERENCES.md section 6): model A (break in the intercept) and model C (intercept and trend).
_ZA_1992: Final[dict[str, dict[str, float]]] = {
    "constant": {"1%": -5.34, "5%": -4.80, "10%": -4.58},
    "constant-trend": {"1%": -5.57, "5%": -5.08, "10%": -4.82},
}
#: How the two Zivot-Andrews models are named in messages and sources.
ZA_MODEL_TEXT: Final[dict[str, str]] = {
    "constant": "with a break in the intercept (model A)",
    "constant-trend": "with breaks in the intercept and the trend (model C)",
}
#: statsmodels' code for each Zivot-Andrews model (its table of simulated quantiles is keyed by it).
_ZA_REGRESSION: Final[dict[str, str]] = {"constant": "c", "constant-trend": "ct"}
#: Columns of the Zivot-Andrews regression besides the lagged differences: constant, trend,
#: intercept dummy, (trend dummy,) lagged level.
_ZA_COLUMNS: Final[dict[str, int]] = {"constant": 4, "constant-trend": 5}


def schwert_max_lags(nobs: int) -> int:
    """Schwert's (1989) maximum number of lagged differences, rounded down.

    Parameters
    ----------
    nobs : int
        Number of observations of the series being tested.

    Returns
    -------
    int
        ``int(12 * (nobs / 100) ** 0.25)``.

    References
    ----------
    Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. *Journal of Business
    and Economic Statistics* 7(2), 147-159.
    """
    return int(12.0 * (nobs / 100.0) ** 0.25)


def adf_feasible_max_lags(nobs: int, deterministic: Deterministic) -> int:
    """The largest number of lagged differences statsmodels accepts for an ADF regression.

    statsmodels requires ``max_lags <= nobs // 2 - k - 1`` with ``k`` deterministic regressors, so
    that the lag search leaves at least as many observations as it uses. A negative result means
    no ADF regression is feasible.
    """
    return nobs // 2 - _TREND_COUNT[deterministic] - 1


def _lags_text(lags: int) -> str:
    return f"{lags} lagged difference" + ("" if lags == 1 else "s")


def _as_array(values: pd.Series, test: str, level: int) -> np.ndarray:
    array = np.asarray(values, dtype=float)
    if array.ndim != 1:
        raise StatsInputError(
            problem=f"{test} needs a single series; got an array of shape {array.shape} at level {level}"
        )
    if not np.all(np.isfinite(array)):
        raise StatsInputError(
            problem=f"{test} needs a series without missing or infinite values; level {level} has some"
        )
    return array


def _label(values: pd.Series, position: int) -> str:
    item = values.index[position]
    return period_label(item) if isinstance(item, pd.Period) else str(item)


def _check_not_constant(array: np.ndarray, test: str, level: int) -> None:
    """Refuse a constant series, or one whose relative spread is at most ``VARIATION_LIMIT``.

    The second case (see :func:`reportgen.stats.checks.check_variation`) leaves only rounding
    error for the regressions to fit; the comparison is with the largest magnitude, so it is
    scale-free.
    """
    if not array.size:
        return
    spread = relative_spread(array)
    if spread == 0.0:
        raise StatsInputError(
            problem=f"{test} cannot be run: the series is constant at level {level}",
            hint="a constant series has no variation to test; check the data and the transforms",
        )
    if spread <= VARIATION_LIMIT:
        raise StatsInputError(
            problem=(
                f"{test} cannot be run: the series is numerically constant at level {level} (relative "
                f"spread {spread:.1g}, at most {VARIATION_LIMIT:g})"
            ),
            hint="a series that varies only in its last digits has no variation to test; check the data",
        )


def _normalised(array: np.ndarray) -> np.ndarray:
    """The series divided by its largest absolute value (statistics are scale invariant)."""
    largest = float(np.max(np.abs(array)))
    return array / largest if largest > 0.0 else array


def _warning_notes(caught: Sequence[warnings.WarningMessage]) -> tuple[str, ...]:
    return warning_texts(caught)


def _mackinnon_pvalue(statistic: float, regression: str) -> tuple[float, str | None, str | None]:
    """MacKinnon's (1994) p-value of a Dickey-Fuller t-statistic, a bound beyond the surface's range.

    Returns the p-value, the bound (``"<"``, ``">"`` or ``None``) and a note for the result when the
    value is a bound. The surface is evaluated as statsmodels' ``mackinnonp`` evaluates it
    (:func:`~reportgen.stats.engine.mackinnon_pvalues`).
    """
    values, bounds = engine.mackinnon_pvalues(np.array([statistic]), regression)
    pvalue, bound = float(values[0]), int(bounds[0])
    if bound < 0:
        edge = float(engine._tau_mins[regression][0])
        return pvalue, "<", (
            f"statistic {statistic:.4g} lies below the range of the MacKinnon (1994) p-value surface "
            f"(which ends at {edge:g}); the p-value is smaller than {pvalue:.3g}, its value there"
        )
    if bound > 0:
        edge = float(engine._tau_maxs[regression][0])
        return pvalue, ">", (
            f"statistic {statistic:.4g} lies above the range of the MacKinnon (1994) p-value surface "
            f"(which ends at {edge:g}); the p-value is larger than {pvalue:.3g}, its value there"
        )
    return pvalue, None, None


def _mackinnon_critical_values(regression: str, nobs: int) -> dict[str, float]:
    """MacKinnon's (2010) response surface at ``nobs`` (MacKinnon 1996 without deterministic terms)."""
    one, five, ten = engine.mackinnon_critical_values(regression, nobs)
    return {"1%": one, "5%": five, "10%": ten}


def _significance_key(significance: float) -> str:
    for level, key in _KPSS_LEVELS.items():
        if math.isclose(significance, level, rel_tol=0.0, abs_tol=1e-12):
            return key
    allowed = ", ".join(f"{level:g}" for level in sorted(_KPSS_LEVELS))
    raise ValueError(f"KPSS significance must be one of {allowed}; got {significance!r}")


def _lag_search(test: str, nobs_series: int, *, level: int, deterministic: Deterministic, criterion: str,
                max_lags: int | None, min_observations: int) -> tuple[int, str]:
    """The largest lag an ADF-type search may try, and its rule in words; refuse too-short series.

    The default is Schwert's floor rule, reduced when the regression would not be feasible.
    """
    feasible = adf_feasible_max_lags(nobs_series, deterministic)
    if max_lags is None:
        rule_lags = schwert_max_lags(nobs_series)
        search_lags = min(rule_lags, feasible)
        if search_lags < rule_lags:
            rule_text = f"Schwert 1989, floor rule, reduced from {rule_lags} so the regression stays feasible"
        else:
            rule_text = "Schwert 1989, floor rule"
    else:
        search_lags = max_lags
        rule_text = "maximum set by the caller"
    shown_lags = max(search_lags, 0)
    needed = max(min_observations, 2 * (shown_lags + _TREND_COUNT[deterministic] + 1))
    if nobs_series < needed:
        up_to = "" if criterion == "fixed" else "up to "
        raise SampleTooShortError(
            problem=(
                f"{test} {TERMS_TEXT[deterministic]} and {up_to}{_lags_text(shown_lags)} needs at least "
                f"{needed} observations; the series has {nobs_series} at level {level}"
            )
        )
    return search_lags, rule_text


def _check_residual_freedom(
    test: str, deterministic: Deterministic, lags: int, trend_count: int, nobs_series: int, level: int
) -> None:
    """Refuse an ADF-type regression without a residual degree of freedom (its t-statistic is undefined).

    The regression has ``T - 1 - p`` observations and ``trend_count + 1 + p`` regressors.
    """
    needed = 2 * lags + trend_count + 3
    if nobs_series < needed:
        raise SampleTooShortError(
            problem=(
                f"{test} {TERMS_TEXT[deterministic]} and {_lags_text(lags)} needs at least {needed} "
                f"observations to leave a residual degree of freedom; the series has {nobs_series} at "
                f"level {level}"
            )
        )


def adf(
    values: pd.Series,
    *,
    level: int,
    deterministic: Deterministic,
    lag_criterion: str,
    significance: float,
    max_lags: int | None = None,
    min_observations: int = 20,
) -> TestResult:
    """Augmented Dickey-Fuller test of the null hypothesis of a unit root.

    The regression is ``dy_t = rho y_{t-1} + sum_{j=1..p} phi_j dy_{t-j} + deterministic + e_t``
    and the statistic is the t-statistic of ``rho``. The number of lagged differences ``p`` is
    chosen by AIC, BIC or a general-to-specific t-statistic rule (statsmodels' ``adfuller``
    convention: every candidate is fitted on the common sample of the largest lag, the chosen
    lag is refitted on its own full sample), or fixed.

    Parameters
    ----------
    values : pandas.Series
        The series at differencing level ``level`` (the caller differences), float, indexed by a
        ``PeriodIndex``, without missing values.
    level : int
        Differencing level of ``values`` (0 = as transformed); recorded in the result and messages.
    deterministic : {"none", "constant", "constant-trend"}
        Deterministic terms of the test regression.
    lag_criterion : {"aic", "bic", "t-stat", "fixed"}
        How the number of lagged differences is chosen; ``"fixed"`` uses exactly ``max_lags``.
    significance : float
        Level at which ``rejects`` is decided (``pvalue < significance``).
    max_lags : int, optional
        Largest number of lagged differences searched. Default: Schwert (1989) rounded down,
        ``int(12 (T/100)^(1/4))``, reduced to :func:`adf_feasible_max_lags` if needed.
    min_observations : int, default 20
        Fewer observations raise :class:`~reportgen.errors.SampleTooShortError`.

    Returns
    -------
    TestResult
        ``lags`` is the number of lagged differences used, ``nobs`` the observations of the
        test regression. Critical values are MacKinnon's (2010) response surface at ``nobs``
        (MacKinnon 1996 without deterministic terms); the p-value is MacKinnon's (1994)
        approximation. When the statistic lies outside that approximation's range the p-value
        is the surface's value at the edge of its range and ``pvalue_bound`` says on which side
        the true value lies.

    Raises
    ------
    SampleTooShortError
        When the series has fewer than ``min_observations`` observations or the regression with
        the requested lags is infeasible.
    StatsInputError
        When the series is constant or has missing values.

    References
    ----------
    Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time
    series with a unit root. *Journal of the American Statistical Association* 74, 427-431.

    Said, S. E. and Dickey, D. A. (1984). Testing for unit roots in autoregressive-moving average
    models of unknown order. *Biometrika* 71, 599-607.

    MacKinnon, J. G. (1994). Approximate asymptotic distribution functions for unit-root and
    cointegration tests. *Journal of Business and Economic Statistics* 12, 167-176.

    MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's Economics Department
    Working Paper 1227.

    Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. *Journal of Business
    and Economic Statistics* 7(2), 147-159.
    """
    if deterministic not in _REGRESSION:
        raise ValueError(f"deterministic must be one of {', '.join(_REGRESSION)}; got {deterministic!r}")
    criterion = lag_criterion.lower()
    if criterion not in ADF_CRITERIA:
        raise ValueError(f"lag_criterion must be one of {', '.join(ADF_CRITERIA)}; got {lag_criterion!r}")
    if criterion == "fixed" and max_lags is None:
        raise ValueError("lag_criterion 'fixed' needs max_lags, the number of lagged differences")
    if max_lags is not None and max_lags < 0:
        raise ValueError(f"max_lags must be 0 or more; got {max_lags}")
    if not 0.0 < significance < 1.0:
        raise ValueError(f"significance must lie strictly between 0 and 1; got {significance!r}")

    array = _as_array(values, "ADF", level)
    nobs_series = array.size
    regression = _REGRESSION[deterministic]
    search_lags, rule_text = _lag_search(
        "ADF", nobs_series, level=level, deterministic=deterministic, criterion=criterion,
        max_lags=max_lags, min_observations=min_observations,
    )
    _check_not_constant(array, "ADF", level)

    normalised = _normalised(array)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if criterion == "fixed":
            chosen = search_lags
            _check_residual_freedom("ADF", deterministic, chosen, _TREND_COUNT[deterministic], nobs_series, level)
            statistic, nobs = dickey_fuller_t_statistic(normalised, chosen, deterministic, test="ADF", level=level)
        else:
            if nobs_series - 1 - search_lags < _TREND_COUNT[deterministic] + 2:
                raise ValueError(f"{nobs_series} observations are too few for an ADF regression")
            chosen, statistic, status = _adf_fit(_Series(normalised), search_lags, _TREND_COUNT[deterministic])[
                criterion
            ]
            _check_residual_freedom("ADF", deterministic, chosen, _TREND_COUNT[deterministic], nobs_series, level)
            _refuse(status, "ADF", level)
            nobs = nobs_series - 1 - chosen
    notes = list(_warning_notes(caught))

    critical_values = _mackinnon_critical_values(regression, nobs)
    surface = "MacKinnon (1996)" if regression == "n" else "MacKinnon (2010)"

    pvalue, bound, note = _mackinnon_pvalue(statistic, regression)
    if note is not None:
        notes.append(note)

    if criterion == "fixed":
        lag_rule = f"fixed by the caller at {_lags_text(search_lags)}"
    else:
        lag_rule = f"{ADF_CRITERIA[criterion]}, searched 0 to {_lags_text(search_lags)} ({rule_text})"

    return TestResult(
        test="ADF",
        null_hypothesis="unit root",
        level=level,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=critical_values,
        critical_values_source=f"{surface} response surface, T={nobs}",
        lags=chosen,
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, nobs_series - nobs),
        sample_end=_label(values, nobs_series - 1),
        rejects=bound == "<" or (bound is None and pvalue < significance),
        significance=significance,
        notes=tuple(notes),
        pvalue_source=_MACKINNON_PVALUE_SOURCE,
        lag_criterion=criterion,
    )


def adf_trend_t_statistic(values: pd.Series, *, lags: int) -> float:
    """t-statistic of the trend coefficient in the ADF regression with constant and trend.

    The regression is the one :func:`adf` runs at ``lags`` lagged differences on its full sample
    (``T - 1 - lags`` observations). When the series is trend stationary the statistic is
    asymptotically standard normal, which is what the deterministic-terms rule of
    :mod:`reportgen.stats.order` uses.

    Parameters
    ----------
    values : pandas.Series
        The series at the differencing level tested, without missing values.
    lags : int
        Number of lagged differences, usually the one :func:`adf` chose.

    Returns
    -------
    float
        Classical (homoskedastic) OLS t-statistic of the linear trend term.

    References
    ----------
    Dickey, D. A. and Fuller, W. A. (1981). Likelihood ratio statistics for autoregressive time
    series with a unit root. *Econometrica* 49, 1057-1072.

    Sims, C. A., Stock, J. H. and Watson, M. W. (1990). Inference in linear time series models with
    some unit roots. *Econometrica* 58, 113-144.
    """
    array = _as_array(values, "ADF", 0)
    _check_not_constant(array, "ADF", 0)
    array = _normalised(array)
    differences = np.diff(array)
    nobs = differences.size - lags
    if lags < 0 or nobs <= lags + 3:
        raise SampleTooShortError(
            problem=(
                f"the ADF regression with constant, trend and {_lags_text(lags)} is infeasible with "
                f"{array.size} observations"
            )
        )
    columns = [array[lags:-1]]
    columns.extend(differences[lags - j : differences.size - j] for j in range(1, lags + 1))
    columns.append(np.ones(nobs))
    columns.append(np.arange(1.0, nobs + 1.0))
    design = np.column_stack(columns)
    fit = _by_qr(_column_scaled(design), differences[lags:])
    return float(fit.last_t_statistics(nobs)[-1])


def kpss(
    values: pd.Series,
    *,
    level: int,
    deterministic: Deterministic,
    significance: float,
    lags: int | None = None,
    min_observations: int = 20,
) -> TestResult:
    """KPSS test of the null hypothesis of level or trend stationarity.

    The statistic is ``sum_t S_t^2 / (T^2 s^2)`` with ``S_t`` the partial sums of the residuals
    from a regression on a constant (level stationarity) or a constant and trend (trend
    stationarity), and ``s^2`` their long-run variance estimated with Bartlett weights
    ``1 - j/(L+1)``.

    Parameters
    ----------
    values : pandas.Series
        The series at differencing level ``level``, float, indexed by a ``PeriodIndex``.
    level : int
        Differencing level of ``values``; recorded in the result and messages.
    deterministic : {"constant", "constant-trend"}
        Stationarity around a constant or around a linear trend.
    significance : float
        One of 0.01, 0.025, 0.05, 0.10 (the columns of KPSS 1992, Table 1); ``rejects`` is
        ``statistic > critical value`` at that level.
    lags : int, optional
        Bartlett bandwidth ``L``. Default: chosen automatically by the method of Hobijn, Franses and
        Ooms (1998).
    min_observations : int, default 20
        Fewer observations raise :class:`~reportgen.errors.SampleTooShortError`.

    Returns
    -------
    TestResult
        Critical values of Kwiatkowski et al. (1992), Table 1; the p-value is interpolated linearly
        between the table's entries. Beyond the table the p-value is a bound: ``pvalue_bound``
        ``"<"`` with ``pvalue`` 0.01, or ``">"`` with ``pvalue`` 0.10.

    Raises
    ------
    SampleTooShortError
        When the series has fewer than ``min_observations`` observations or the bandwidth is not
        below the number of observations.
    StatsInputError
        When the series is constant or has missing values.

    References
    ----------
    Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null
    hypothesis of stationarity against the alternative of a unit root. *Journal of Econometrics*
    54, 159-178.

    Hobijn, B., Franses, P. H. and Ooms, M. (1998). Generalisations of the KPSS-test for
    stationarity. Econometric Institute Report 9802/A, Erasmus University Rotterdam (published
    2004 in *Statistica Neerlandica* 58, 483-502).
    """
    if deterministic not in ("constant", "constant-trend"):
        raise ValueError(f"KPSS deterministic must be 'constant' or 'constant-trend'; got {deterministic!r}")
    key = _significance_key(significance)
    if lags is not None and lags < 0:
        raise ValueError(f"lags must be 0 or more; got {lags}")

    array = _as_array(values, "KPSS", level)
    nobs = array.size
    needed = max(min_observations, 3 if lags is None else lags + 1)
    if nobs < needed:
        bandwidth = "" if lags is None else f" and a bandwidth of {lags}"
        raise SampleTooShortError(
            problem=(
                f"KPSS {TERMS_TEXT[deterministic]}{bandwidth} needs at least {needed} observations; "
                f"the series has {nobs} at level {level}"
            )
        )
    _check_not_constant(array, "KPSS", level)

    statistics, bandwidths = engine.kpss_arrays(_normalised(array)[None, :], _TREND_COUNT[deterministic], lags)
    statistic, bandwidth = float(statistics[0]), int(bandwidths[0])
    table = dict(_KPSS_1992[deterministic])
    interpolated = float(np.interp(statistic, list(table.values()), list(_KPSS_LEVELS)))
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if interpolated in (0.01, 0.10):
            # The note earlier releases kept from statsmodels' kpss, in its words.
            direction = "smaller" if interpolated == 0.01 else "greater"
            warnings.warn(
                "The test statistic is outside of the range of p-values available in the look-up table. "
                f"The actual p-value is {direction} than the p-value returned.",
                InterpolationWarning,
                stacklevel=2,
            )
    notes = list(_warning_notes(caught))

    bound: str | None = None
    if statistic > table["1%"]:
        bound, pvalue = "<", 0.01
    elif statistic < table["10%"]:
        bound, pvalue = ">", 0.10
    else:
        pvalue = interpolated
    if bound is not None:
        side = "above" if bound == "<" else "below"
        notes.append(
            f"statistic {statistic:.4g} lies {side} the range of KPSS (1992) Table 1; "
            f"the p-value is reported as a bound (p {bound} {pvalue:.2f})"
        )

    if lags is None:
        lag_rule = "automatic bandwidth (Hobijn, Franses and Ooms 1998), Bartlett weights"
    else:
        lag_rule = "bandwidth fixed by the caller, Bartlett weights"

    return TestResult(
        test="KPSS",
        null_hypothesis="stationarity",
        level=level,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=table,
        critical_values_source=(
            "Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1 (asymptotic); "
            "p-value interpolated linearly between its entries"
        ),
        lags=bandwidth,
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, 0),
        sample_end=_label(values, nobs - 1),
        rejects=statistic > table[key],
        significance=significance,
        notes=tuple(notes),
        pvalue_source=(
            "interpolated linearly between the entries of KPSS (1992) Table 1; a bound beyond the table"
        ),
        bandwidth=bandwidth,
        bandwidth_rule=lag_rule,
    )


# --- Phillips-Perron, DF-GLS, Zivot-Andrews -----------------------------------------------------------


def _table_significance_key(significance: float, test: str) -> str:
    for level, key in _TABLE_LEVELS.items():
        if math.isclose(significance, level, rel_tol=0.0, abs_tol=1e-12):
            return key
    allowed = ", ".join(f"{level:g}" for level in sorted(_TABLE_LEVELS))
    raise ValueError(f"{test} significance must be one of {allowed}; got {significance!r}")


def _interpolated_pvalue(
    statistic: float, critical_values: dict[str, float], table: str
) -> tuple[float, str | None, str | None]:
    """p-value interpolated linearly between the 1%, 5% and 10% critical values; a bound outside.

    Returns the p-value, the bound (``"<"``, ``">"`` or ``None``) and a note when it is a bound.
    Because the interpolation passes through the critical values, ``pvalue < significance`` holds
    exactly when the statistic lies below the critical value at that significance.
    """
    points = [critical_values["1%"], critical_values["5%"], critical_values["10%"]]
    if statistic < points[0]:
        return 0.01, "<", (
            f"statistic {statistic:.4g} lies below the 1% critical value {points[0]:.4g} of {table}; "
            "the p-value is reported as a bound (p < 0.01)"
        )
    if statistic > points[2]:
        return 0.10, ">", (
            f"statistic {statistic:.4g} lies above the 10% critical value {points[2]:.4g} of {table}; "
            "the p-value is reported as a bound (p > 0.10)"
        )
    return float(engine.table_pvalues(np.array([statistic]), points, (0.01, 0.05, 0.10))[0][0]), None, None


def newey_west_bandwidth(residuals: np.ndarray) -> int:
    """Newey and West's (1994) automatic bandwidth for the Bartlett kernel, as a number of lags.

    With ``sigma_j = sum_t u_t u_{t-j}`` over a pilot of ``n = int(4 (T/100)^(2/9))`` lags,
    ``s0 = sigma_0 + 2 sum_{j=1..n} sigma_j`` and ``s1 = 2 sum_{j=1..n} j sigma_j``, the bandwidth
    is ``int(1.1447 ((s1/s0)^2)^(1/3) T^(1/3))``, at most ``T - 1``. It is used with the weights
    ``1 - j/(L+1)``. Only the ratio ``s1/s0`` enters, so the bandwidth does not depend on the units
    of the residuals (arch's ``auto_bandwidth`` rounds the sums to integers and so does).

    Parameters
    ----------
    residuals : numpy.ndarray
        Residuals (or any mean-zero series) whose long-run variance is to be estimated; at least two.

    Returns
    -------
    int
        The number of autocovariances ``L`` in the Bartlett estimator.

    References
    ----------
    Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation.
    *Review of Economic Studies* 61, 631-653.
    """
    series = np.asarray(residuals, dtype=float)
    nobs = series.size
    if nobs < 2:
        raise ValueError(f"the automatic bandwidth needs at least 2 residuals; got {nobs}")
    return int(engine.newey_west_bandwidths(series[None, :])[0])


def _bartlett_long_run_variance(residuals: np.ndarray, bandwidth: int) -> float:
    """``gamma_0 + 2 sum_{j=1..L} (1 - j/(L+1)) gamma_j`` with autocovariances divided by ``T``."""
    return float(engine.bartlett_long_run_variance(np.asarray(residuals, dtype=float)[None, :], bandwidth)[0])


def phillips_perron(
    values: pd.Series,
    *,
    level: int,
    deterministic: Deterministic,
    significance: float,
    bandwidth: int | None = None,
    min_observations: int = 20,
) -> TestResult:
    """Phillips-Perron ``Z_t`` test of the null hypothesis of a unit root.

    The Dickey-Fuller regression ``y_t = rho y_{t-1} + deterministic + u_t`` is fitted by OLS on
    ``T - 1`` observations and the t-statistic of ``rho - 1`` is corrected for serial correlation in
    ``u_t``::

        Z_t = sqrt(gamma_0 / lambda^2) (rho - 1) / se(rho)
              - (lambda^2 - gamma_0) / (2 lambda) * T se(rho) / s

    with ``gamma_0 = sum u_t^2 / T``, ``s^2 = sum u_t^2 / (T - k)`` and ``lambda^2`` the Bartlett
    (Newey-West) long-run variance of ``u_t`` with weights ``1 - j/(L+1)``.

    Parameters
    ----------
    values : pandas.Series
        The series at differencing level ``level``, float, indexed by a ``PeriodIndex``.
    level : int
        Differencing level of ``values``; recorded in the result and messages.
    deterministic : {"none", "constant", "constant-trend"}
        Deterministic terms of the Dickey-Fuller regression.
    significance : float
        Level at which ``rejects`` is decided (``pvalue < significance``).
    bandwidth : int, optional
        Bartlett bandwidth ``L``. Default: :func:`newey_west_bandwidth` of the regression's
        residuals (Newey and West 1994).
    min_observations : int, default 20
        Fewer observations raise :class:`~reportgen.errors.SampleTooShortError`.

    Returns
    -------
    TestResult
        ``lags`` and ``bandwidth`` both hold ``L``; ``nobs`` is ``T - 1``. ``Z_t`` has the
        Dickey-Fuller distribution, so the critical values and p-value are those of :func:`adf`:
        MacKinnon's (2010) response surface at ``nobs`` (MacKinnon 1996 without deterministic
        terms) and MacKinnon's (1994) p-value, a bound beyond its range.

    Raises
    ------
    SampleTooShortError
        When the series has fewer than ``min_observations`` observations, too few for the
        regression, or not more than ``bandwidth + 1``.
    StatsInputError
        When the series is constant, has missing values, or the regression fits it exactly.

    References
    ----------
    Phillips, P. C. B. and Perron, P. (1988). Testing for a unit root in time series regression.
    *Biometrika* 75, 335-346.

    Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation.
    *Review of Economic Studies* 61, 631-653.

    Hamilton, J. D. (1994). *Time Series Analysis*. Princeton University Press, section 17.6.

    MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's Economics Department
    Working Paper 1227.
    """
    if deterministic not in _REGRESSION:
        raise ValueError(f"deterministic must be one of {', '.join(_REGRESSION)}; got {deterministic!r}")
    if bandwidth is not None and bandwidth < 0:
        raise ValueError(f"bandwidth must be 0 or more; got {bandwidth}")
    if not 0.0 < significance < 1.0:
        raise ValueError(f"significance must lie strictly between 0 and 1; got {significance!r}")

    array = _as_array(values, "Phillips-Perron", level)
    nobs_series = array.size
    trend_count = _TREND_COUNT[deterministic]
    needed = max(min_observations, trend_count + 3, 0 if bandwidth is None else bandwidth + 2)
    if nobs_series < needed:
        with_bandwidth = "" if bandwidth is None else f" and a bandwidth of {bandwidth}"
        raise SampleTooShortError(
            problem=(
                f"Phillips-Perron {TERMS_TEXT[deterministic]}{with_bandwidth} needs at least {needed} "
                f"observations; the series has {nobs_series} at level {level}"
            )
        )
    _check_not_constant(array, "Phillips-Perron", level)

    normalised = _normalised(array)
    nobs = nobs_series - 1
    computed = engine.phillips_perron_arrays(normalised[None, :], trend_count, bandwidth)
    status = int(computed.status[0])
    if status == engine.COLLINEAR:  # nearly: the rank test decides, on the explicit design
        statistic, chosen = _phillips_perron_explicit(normalised, trend_count, bandwidth, level)
    elif status == engine.EXACT_FIT:
        raise _pp_exact_fit(level)
    else:
        statistic, chosen = float(computed.statistic[0]), int(computed.bandwidth[0])
    notes: list[str] = []

    if bandwidth is None:
        bandwidth_rule = (
            "Newey and West (1994) automatic bandwidth, Bartlett kernel with weights 1 - j/(L+1), "
            "pilot int(4 (T/100)^(2/9)), L = int(1.1447 (s1/s0)^(2/3) T^(1/3))"
        )
        if chosen == nobs - 1:
            bandwidth_rule += ", capped at T - 1"
    else:
        bandwidth_rule = "bandwidth fixed by the caller, Bartlett kernel with weights 1 - j/(L+1)"

    regression = _REGRESSION[deterministic]
    critical_values = _mackinnon_critical_values(regression, nobs)
    surface = "MacKinnon (1996)" if regression == "n" else "MacKinnon (2010)"
    pvalue, bound, note = _mackinnon_pvalue(statistic, regression)
    if note is not None:
        notes.append(note)

    return TestResult(
        test="PP",
        null_hypothesis="unit root",
        level=level,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=critical_values,
        critical_values_source=f"{surface} response surface (Dickey-Fuller t distribution), T={nobs}",
        lags=chosen,
        lag_rule=bandwidth_rule,
        nobs=nobs,
        sample_start=_label(values, 1),
        sample_end=_label(values, nobs_series - 1),
        rejects=bound == "<" or (bound is None and pvalue < significance),
        significance=significance,
        notes=tuple(notes),
        pvalue_source=_MACKINNON_PVALUE_SOURCE,
        bandwidth=chosen,
        bandwidth_rule=bandwidth_rule,
        lag_criterion=None,
    )


def _pp_exact_fit(level: int) -> StatsInputError:
    return StatsInputError(
        problem=(
            f"Phillips-Perron cannot be run: the Dickey-Fuller regression fits the series exactly at "
            f"level {level}"
        ),
        hint="a series without noise has no long-run variance to estimate; check the data",
    )


def _phillips_perron_explicit(normalised: np.ndarray, trend_count: int, bandwidth: int | None,
                              level: int) -> tuple[float, int]:
    """``Z_t`` from the explicit design by pseudo-inverse, for a lagged level nearly collinear with the terms.

    Refuses a design of deficient rank (numpy's ``matrix_rank``) and an exact fit.
    """
    nobs = normalised.size - 1
    columns = [normalised[:-1]]
    if trend_count >= 1:
        columns.append(np.ones(nobs))
    if trend_count == 2:
        columns.append(np.arange(1.0, nobs + 1.0) / nobs)
    design = np.column_stack(columns)
    response = normalised[1:]
    if np.linalg.matrix_rank(design) < design.shape[1]:
        raise StatsInputError(
            problem=(
                f"Phillips-Perron cannot be run: the lagged series is collinear with the deterministic "
                f"terms at level {level}"
            ),
            hint="the series is (nearly) a constant or a straight line over the regression sample",
        )
    inverse = np.linalg.pinv(design)
    coefficients = inverse @ response
    residuals = response - design @ coefficients
    sum_of_squares = float(residuals @ residuals)
    if sum_of_squares <= (1e-13) ** 2 * float(response @ response):
        raise _pp_exact_fit(level)
    chosen = newey_west_bandwidth(residuals) if bandwidth is None else bandwidth
    parameters = design.shape[1]
    gamma0 = sum_of_squares / nobs
    residual_scale = math.sqrt(sum_of_squares / (nobs - parameters))
    long_run = _bartlett_long_run_variance(residuals, chosen)
    standard_error = residual_scale * math.sqrt(float(inverse[0] @ inverse[0]))
    statistic = math.sqrt(gamma0 / long_run) * (float(coefficients[0]) - 1.0) / standard_error - 0.5 * (
        (long_run - gamma0) / math.sqrt(long_run)
    ) * (nobs * standard_error / residual_scale)
    return statistic, chosen


def adf_lag_search(series: np.ndarray, max_lags: int, criterion: str, deterministic: Deterministic) -> int:
    """The number of lagged differences an ADF-type lag search chooses, from 0 to ``max_lags``.

    The candidates are ``dy_t = deterministic + rho y_{t-1} + sum_{j<=p} phi_j dy_{t-j} + e_t`` for
    ``p = 0..max_lags``, the rule statsmodels' ``adfuller`` applies with ``autolag``: every candidate
    is fitted on the common sample of ``max_lags``; AIC ``-2 llf + 2 k`` and BIC
    ``-2 llf + k log n``, with the Gaussian log-likelihood at ``SSR/n`` and ``k`` the number of
    regressors, are minimised (the smallest lag on ties); the t-stat rule takes the largest lag
    whose last coefficient has ``|t| >= 1.6449`` (classical t with ``SSR/(n - k)``), or 0.

    The candidates are nested, so one factorisation of the largest design gives every
    candidate's residual sum of squares and last t-statistic (:func:`~reportgen.stats.engine.adf_lags`:
    cross products in ``O(T max_lags)``, Householder QR where they cannot be trusted): the search
    costs less than one least-squares fit instead of ``max_lags + 1`` (statsmodels refits each
    candidate by a singular value decomposition, which takes minutes at 100,000 observations and
    67 lags).

    Parameters
    ----------
    series : numpy.ndarray
        The series in levels, finite, at least ``max_lags + 3`` plus the deterministic terms long.
    max_lags : int
        Largest number of lagged differences, 0 or more.
    criterion : {"aic", "bic", "t-stat"}
        The selection rule.
    deterministic : {"none", "constant", "constant-trend"}
        Deterministic terms of every candidate regression.

    Returns
    -------
    int
        The chosen number of lagged differences.

    References
    ----------
    Ng, S. and Perron, P. (1995). Unit root tests in ARMA models with data-dependent methods for
    the selection of the truncation lag. *Journal of the American Statistical Association* 90,
    268-281.

    Golub, G. H. and Van Loan, C. F. (2013). *Matrix Computations*, 4th ed. Johns Hopkins
    University Press, section 5.3 (least squares by QR).
    """
    if criterion not in ("aic", "bic", "t-stat"):
        raise ValueError(f"criterion must be aic, bic or t-stat; got {criterion!r}")
    if max_lags < 0:
        raise ValueError(f"max_lags must be 0 or more; got {max_lags}")
    series = np.asarray(series, dtype=float)
    trend_count = _TREND_COUNT[deterministic]
    if series.size - 1 - max_lags < trend_count + 2:
        raise ValueError(f"{series.size} observations are too few for an ADF regression")
    return _searched_lags(_Series(series), max_lags, trend_count)[criterion]


@dataclass(frozen=True, slots=True, eq=False)
class _Series:
    """A series as a cache key: equal when the values are (a digest of their bytes)."""

    values: np.ndarray
    digest: bytes = field(init=False)

    def __post_init__(self) -> None:
        object.__setattr__(self, "digest", hashlib.blake2b(self.values.tobytes(), digest_size=20).digest())

    def __eq__(self, other: object) -> bool:
        return isinstance(other, _Series) and other.digest == self.digest and other.values.size == self.values.size

    def __hash__(self) -> int:
        return hash(self.digest)


@functools.lru_cache(maxsize=64)
def _searched_lags(series: _Series, max_lags: int, trend_count: int) -> dict[str, int]:
    """Every criterion's choice in one lag search, kept for the next criterion searching the same regression.

    The decision rule and its robustness grid search the same series with the same terms by AIC,
    BIC and t-stat; the three share one factorisation. The cache holds results, not state: a hit
    returns the numbers a recomputation would.
    """
    chosen = engine.adf_lags(series.values[None, :], max_lags, trend_count, engine.CRITERIA)
    return {criterion: int(values[0]) for criterion, values in chosen.items()}


@functools.lru_cache(maxsize=64)
def _adf_fit(series: _Series, max_lags: int, trend_count: int) -> dict[str, tuple[int, float, int]]:
    """Every criterion's lag, statistic and refusal status (:func:`~reportgen.stats.engine.adf_arrays`):
    one search and its refits, kept for the next criterion (the decision rule and the grid ask for
    all three)."""
    fitted = engine.adf_arrays(series.values[None, :], max_lags, trend_count, engine.CRITERIA)
    return {criterion: (int(lags[0]), float(statistics[0]), int(status[0]))
            for criterion, (lags, statistics, status) in fitted.items()}


@functools.lru_cache(maxsize=128)
def _refitted(series: _Series, lags: int, trend_count: int) -> tuple[float, int]:
    """The lagged level's t-statistic and the refusal status of one regression (kept like the searches)."""
    statistics, status = engine.dickey_fuller_statistics(series.values[None, :], lags, trend_count)
    return float(statistics[0]), int(status[0])


#: The ADF regressors on the sample of ``lags`` (constant, trend / n, then the lagged level and the
#: lagged differences, or the differences first and the level last): kept for the tests.
_df_design = engine._design


def dickey_fuller_t_statistic(
    series: np.ndarray, lags: int, deterministic: Deterministic, *, test: str = "ADF", level: int = 0
) -> tuple[float, int]:
    """The t-statistic of the lagged level in the ADF regression with ``lags`` lagged differences.

    The statistic is read off the factorisation of the regression's cross products
    (:func:`~reportgen.stats.engine.dickey_fuller_statistics`); a regression the cross products
    cannot vouch for is factorised by Householder QR of its column-scaled design (the lagged level
    last), which also refuses what has no t-statistic: a design whose lagged level or a lagged
    difference is a linear combination of the regressors before it (the diagonal of ``R`` at most
    1e-10), or residuals at most 1e-13 of the dependent variable's length (an exact fit). The fast
    arithmetic is trusted only far from both thresholds, so it never reports a statistic the exact
    arithmetic would refuse; the two agree to about 1e-11 (relative) where both are run, and with
    statsmodels' ``adfuller`` (``autolag=None``) to the same order.

    Parameters
    ----------
    series : numpy.ndarray
        The series in levels, finite, with at least ``2 lags + terms + 3`` observations.
    lags : int
        Number of lagged differences.
    deterministic : {"none", "constant", "constant-trend"}
        Deterministic terms of the regression.
    test, level : str, int
        Name of the test and differencing level, for messages.

    Returns
    -------
    tuple of (float, int)
        The statistic and the number of observations of the regression, ``T - 1 - lags``.

    Raises
    ------
    StatsInputError
        When the regression is singular or fits the series exactly.

    References
    ----------
    Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time
    series with a unit root. *Journal of the American Statistical Association* 74, 427-431.
    """
    series = np.asarray(series, dtype=float)
    statistic, status = _refitted(_Series(series), lags, _TREND_COUNT[deterministic])
    _refuse(status, test, level)
    return statistic, series.size - 1 - lags


def _refuse(status: int, test: str, level: int) -> None:
    """Raise the error of a refused regression (:data:`~reportgen.stats.engine.COLLINEAR` or
    :data:`~reportgen.stats.engine.EXACT_FIT`); nothing for a computed one."""
    if status == engine.COLLINEAR:
        raise StatsInputError(
            problem=(
                f"{test} cannot be run: the lagged series is collinear with the deterministic terms and "
                f"lagged differences at level {level}"
            ),
            hint="the series is (nearly) a constant or a straight line over the regression sample",
        )
    if status == engine.EXACT_FIT:
        raise StatsInputError(
            problem=f"{test} cannot be run: the Dickey-Fuller regression fits the series exactly at level {level}",
            hint="a series without noise has no unit root to test; check the data",
        )


#: DF-GLS critical values with constant and trend (Elliott, Rothenberg and Stock 1996, Table I).
dfgls_trend_critical_values = engine.dfgls_trend_critical_values


def dfgls(
    values: pd.Series,
    *,
    level: int,
    deterministic: Deterministic,
    lag_criterion: str,
    significance: float,
    max_lags: int | None = None,
    min_observations: int = 20,
) -> TestResult:
    """Elliott, Rothenberg and Stock's DF-GLS test of the null hypothesis of a unit root.

    The series is GLS-detrended: ``y_t`` and the deterministic terms ``z_t`` (1, or 1 and ``t``)
    are quasi-differenced with ``alpha = 1 + c/T`` (``c = -7`` with constant, ``-13.5`` with
    constant and trend), the quasi-differenced ``y`` is regressed on the quasi-differenced ``z``,
    and ``y_t - z_t' beta`` is tested with an ADF regression without deterministic terms. The
    number of lagged differences is chosen by AIC, BIC or the t-statistic rule in the ADF
    regression of the *OLS*-detrended series (Perron and Qu 2007; arch's convention), every
    candidate on the common sample of the largest lag, or fixed.

    Parameters
    ----------
    values : pandas.Series
        The series at differencing level ``level``, float, indexed by a ``PeriodIndex``.
    level : int
        Differencing level of ``values``; recorded in the result and messages.
    deterministic : {"constant", "constant-trend"}
        Deterministic terms removed by the GLS detrending.
    lag_criterion : {"aic", "bic", "t-stat", "fixed"}
        How the number of lagged differences is chosen; ``"fixed"`` uses exactly ``max_lags``.
    significance : float
        One of 0.01, 0.05, 0.10; ``rejects`` is ``statistic < critical value`` at that level.
    max_lags : int, optional
        Largest number of lagged differences searched. Default: Schwert (1989) rounded down,
        reduced to :func:`adf_feasible_max_lags` if needed.
    min_observations : int, default 20
        Fewer observations raise :class:`~reportgen.errors.SampleTooShortError`.

    Returns
    -------
    TestResult
        Critical values: with constant, the Dickey-Fuller distribution without deterministic
        terms (MacKinnon's 1996 response surface at ``nobs``), as Elliott, Rothenberg and Stock
        show; with constant and trend, their Table I interpolated in ``1/T``
        (:func:`dfgls_trend_critical_values`). Neither source gives a p-value surface: the
        p-value is interpolated linearly between the 1%, 5% and 10% critical values and is a
        bound (``"<"`` 0.01, ``">"`` 0.10) beyond them, so it is a rough guide only; the decision
        uses the critical value. The no-constant Dickey-Fuller values are asymptotically right for
        the constant case; in simulations with random walks of T = 250 the 5% test rejected about
        6.5% of the time (arch's own simulated DF-GLS values are slightly more negative).

    Raises
    ------
    SampleTooShortError
        When the series has fewer than ``min_observations`` observations or the regression with
        the requested lags is infeasible.
    StatsInputError
        When the series is constant, has missing values, or is removed entirely by the detrending.

    References
    ----------
    Elliott, G., Rothenberg, T. J. and Stock, J. H. (1996). Efficient tests for an autoregressive
    unit root. *Econometrica* 64, 813-836.

    Perron, P. and Qu, Z. (2007). A simple modification to improve the finite sample properties of
    Ng and Perron's unit root tests. *Economics Letters* 94, 12-19.

    MacKinnon, J. G. (1996). Numerical distribution functions for unit root and cointegration
    tests. *Journal of Applied Econometrics* 11, 601-618.

    Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. *Journal of Business
    and Economic Statistics* 7(2), 147-159.
    """
    if deterministic not in DFGLS_CBAR:
        raise ValueError(f"DF-GLS deterministic must be 'constant' or 'constant-trend'; got {deterministic!r}")
    criterion = lag_criterion.lower()
    if criterion not in ADF_CRITERIA:
        raise ValueError(f"lag_criterion must be one of {', '.join(ADF_CRITERIA)}; got {lag_criterion!r}")
    if criterion == "fixed" and max_lags is None:
        raise ValueError("lag_criterion 'fixed' needs max_lags, the number of lagged differences")
    if max_lags is not None and max_lags < 0:
        raise ValueError(f"max_lags must be 0 or more; got {max_lags}")
    key = _table_significance_key(significance, "DF-GLS")

    array = _as_array(values, "DF-GLS", level)
    nobs_series = array.size
    search_lags, rule_text = _lag_search(
        "DF-GLS", nobs_series, level=level, deterministic=deterministic, criterion=criterion,
        max_lags=max_lags, min_observations=min_observations,
    )
    _check_not_constant(array, "DF-GLS", level)

    normalised = _normalised(array)
    gls_rows, ols_rows = engine.dfgls_detrended(normalised[None, :], deterministic)
    detrended, ols_detrended = gls_rows[0], ols_rows[0]
    if float(np.max(np.abs(detrended))) <= 1e-12:
        raise StatsInputError(
            problem=(
                f"DF-GLS cannot be run: nothing is left of the series after removing its "
                f"{'trend' if deterministic == 'constant-trend' else 'mean'} at level {level}"
            ),
            hint="the series is an exact straight line; check the data and the transforms",
        )

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        lags = search_lags if criterion == "fixed" else adf_lag_search(
            ols_detrended, search_lags, criterion, "none"
        )
        _check_residual_freedom("DF-GLS", deterministic, lags, 0, nobs_series, level)
        statistic, nobs = dickey_fuller_t_statistic(detrended, lags, "none", test="DF-GLS", level=level)
    notes = list(_warning_notes(caught))

    if deterministic == "constant":
        critical_values = _mackinnon_critical_values("n", nobs)
        source = (
            f"MacKinnon (1996) response surface without deterministic terms, T={nobs} (the DF-GLS "
            "statistic with constant has that distribution; Elliott, Rothenberg and Stock 1996)"
        )
        table = "the Dickey-Fuller distribution without deterministic terms"
    else:
        critical_values = dfgls_trend_critical_values(nobs_series)
        source = (
            f"Elliott, Rothenberg and Stock (1996), Table I, trend case, interpolated linearly in 1/T "
            f"at T={nobs_series}"
        )
        table = "Elliott, Rothenberg and Stock (1996) Table I"
        if nobs_series < 50:
            notes.append(
                f"Elliott, Rothenberg and Stock (1996) Table I starts at T=50; its T=50 row is used for "
                f"T={nobs_series}, which makes the test somewhat too ready to reject"
            )
    pvalue, bound, note = _interpolated_pvalue(statistic, critical_values, table)
    if note is not None:
        notes.append(note)

    if criterion == "fixed":
        lag_rule = f"fixed by the caller at {_lags_text(search_lags)}"
    else:
        lag_rule = (
            f"{ADF_CRITERIA[criterion]} in the ADF regression of the OLS-detrended series "
            f"(Perron and Qu 2007), searched 0 to {_lags_text(search_lags)} ({rule_text})"
        )

    return TestResult(
        test="DF-GLS",
        null_hypothesis="unit root",
        level=level,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=critical_values,
        critical_values_source=source,
        lags=lags,
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, nobs_series - nobs),
        sample_end=_label(values, nobs_series - 1),
        rejects=statistic < critical_values[key],
        significance=significance,
        notes=tuple(notes),
        pvalue_source=(
            "interpolated linearly between the 1%, 5% and 10% critical values (no published p-value "
            "surface); a bound beyond them"
        ),
        lag_criterion=criterion,
    )


def _za_feasible(nobs: int, lags: int, deterministic: str, trim: float) -> bool:
    """Whether every candidate Zivot-Andrews regression has full rank and a residual degree of freedom.

    Each regime needs one observation in the regression sample for an intercept break (model A),
    two for intercept and trend breaks (model C); the regression has ``T - 1 - p`` observations and
    ``columns + p`` regressors.
    """
    trimmed = int(nobs * trim)
    per_regime = 1 if deterministic == "constant" else 2
    return (
        lags >= 0
        and trimmed - lags >= per_regime
        and (nobs - 1 - lags) - (_ZA_COLUMNS[deterministic] + lags) >= 1
    )


def _za_feasible_max_lags(nobs: int, deterministic: str, trim: float) -> int:
    """The largest number of lagged differences :func:`zivot_andrews` can use; negative if none."""
    per_regime = 1 if deterministic == "constant" else 2
    return min(int(nobs * trim) - per_regime, (nobs - 2 - _ZA_COLUMNS[deterministic]) // 2)


def _za_needed_observations(lags: int, deterministic: str, trim: float) -> int:
    nobs = 1
    while not _za_feasible(nobs, lags, deterministic, trim):
        nobs += 1
    return nobs


def zivot_andrews(
    values: pd.Series,
    *,
    level: int,
    deterministic: Deterministic,
    significance: float,
    lag_criterion: str = "aic",
    max_lags: int | None = None,
    trim: float = 0.15,
    min_observations: int = 30,
) -> TestResult:
    """Zivot-Andrews test of a unit root against stationarity with one break at an unknown date.

    For every candidate break ``T_B`` (the last period of the old regime) in the middle
    ``1 - 2 trim`` of the sample, the regression

    ``dy_t = mu + beta t + theta DU_t (+ gamma DT_t) + alpha y_{t-1} + sum_{j=1..p} c_j dy_{t-j} + e_t``

    is fitted, with ``DU_t = 1`` and ``DT_t = t - T_B`` for ``t > T_B`` (zero before); the
    statistic is the smallest t-statistic of ``alpha`` over the candidates and the break is where
    it is attained. The number of lagged differences ``p`` is chosen once, in the ADF regression
    with constant and trend and no break terms (Baum's 2004 approximation, also statsmodels' and
    arch's), or fixed.

    Parameters
    ----------
    values : pandas.Series
        The series at differencing level ``level``, float, indexed by a ``PeriodIndex``.
    level : int
        Differencing level of ``values``; recorded in the result and messages.
    deterministic : {"constant", "constant-trend"}
        ``"constant"``: a break in the intercept (model A; the regression has a linear trend
        without a break). ``"constant-trend"``: breaks in the intercept and the trend (model C).
    significance : float
        One of 0.01, 0.05, 0.10; ``rejects`` is ``statistic < critical value`` at that level.
    lag_criterion : {"aic", "bic", "t-stat", "fixed"}, default "aic"
        How the number of lagged differences is chosen; ``"fixed"`` uses exactly ``max_lags``.
    max_lags : int, optional
        Largest number of lagged differences searched. Default: Schwert (1989) rounded down,
        reduced so that every candidate regression is feasible.
    trim : float, default 0.15
        Share of the sample excluded at each end from the candidate breaks, in (0, 1/3]: the
        candidates ``T_B`` run from ``int(trim T)`` to ``T - int(trim T) - 1`` (0-based).
    min_observations : int, default 30
        Fewer observations raise :class:`~reportgen.errors.SampleTooShortError`.

    Returns
    -------
    TestResult
        ``break_date`` is the label of ``T_B``, the **last period before the break** (Zivot and
        Andrews' convention and the position statsmodels' ``zivot_andrews`` returns); the notes
        name the first period of the new regime as well, which is what some programs report.
        Critical values are Zivot and Andrews' (1992) asymptotic values, tabulated for trim 0.15.
        The p-value is interpolated in statsmodels' simulated distribution of the statistic and is
        a bound beyond its range; when it and the critical value disagree, the decision follows
        the critical value and a note says so.

    Raises
    ------
    SampleTooShortError
        When the series has fewer than ``min_observations`` observations or the candidate
        regressions with the requested lags are infeasible.
    StatsInputError
        When the series is constant, has missing values, or a candidate regression is singular.

    References
    ----------
    Zivot, E. and Andrews, D. W. K. (1992). Further evidence on the great crash, the oil-price
    shock, and the unit-root hypothesis. *Journal of Business and Economic Statistics* 10,
    251-270.

    Baum, C. F. (2004). ZANDREWS: module to calculate the Zivot-Andrews unit root test in the
    presence of a structural break. Statistical Software Components S437301, Boston College.

    Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. *Journal of Business
    and Economic Statistics* 7(2), 147-159.
    """
    if deterministic not in _ZA_COLUMNS:
        raise ValueError(
            f"Zivot-Andrews deterministic must be 'constant' or 'constant-trend'; got {deterministic!r}"
        )
    criterion = lag_criterion.lower()
    if criterion not in ADF_CRITERIA:
        raise ValueError(f"lag_criterion must be one of {', '.join(ADF_CRITERIA)}; got {lag_criterion!r}")
    if criterion == "fixed" and max_lags is None:
        raise ValueError("lag_criterion 'fixed' needs max_lags, the number of lagged differences")
    if max_lags is not None and max_lags < 0:
        raise ValueError(f"max_lags must be 0 or more; got {max_lags}")
    if not 0.0 < trim <= 1.0 / 3.0:
        raise ValueError(f"trim must lie in (0, 1/3]; got {trim!r}")
    key = _table_significance_key(significance, "Zivot-Andrews")

    array = _as_array(values, "Zivot-Andrews", level)
    nobs_series = array.size
    feasible = _za_feasible_max_lags(nobs_series, deterministic, trim)
    if max_lags is None:
        rule_lags = schwert_max_lags(nobs_series)
        search_lags = min(rule_lags, feasible)
        if search_lags < rule_lags:
            rule_text = f"Schwert 1989, floor rule, reduced from {rule_lags} so the regressions stay feasible"
        else:
            rule_text = "Schwert 1989, floor rule"
    else:
        search_lags = max_lags
        rule_text = "maximum set by the caller"

    shown_lags = max(search_lags, 0)
    needed = max(min_observations, _za_needed_observations(shown_lags, deterministic, trim))
    if nobs_series < needed:
        up_to = "" if criterion == "fixed" else "up to "
        raise SampleTooShortError(
            problem=(
                f"Zivot-Andrews {ZA_MODEL_TEXT[deterministic]}, trim {trim:g} and {up_to}"
                f"{_lags_text(shown_lags)} needs at least {needed} observations; the series has "
                f"{nobs_series} at level {level}"
            )
        )
    _check_not_constant(array, "Zivot-Andrews", level)

    normalised = _normalised(array)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        lags = search_lags if criterion == "fixed" else adf_lag_search(
            normalised, search_lags, criterion, "constant-trend"
        )
    notes = list(_warning_notes(caught))

    statistic, last_before = _za_search(normalised, lags, deterministic, trim, values, level)

    critical_values = dict(_ZA_1992[deterministic])
    pvalue, bound = _za_pvalue(statistic, deterministic)
    if bound is not None:
        side = "below" if bound == "<" else "above"
        notes.append(
            f"statistic {statistic:.4g} lies {side} the range of statsmodels' simulated Zivot-Andrews "
            f"distribution; the p-value is reported as a bound (p {bound} {pvalue:g})"
        )
    rejects = statistic < critical_values[key]
    if rejects != (pvalue < significance):
        notes.append(
            f"the p-value {pvalue:.3g} (statsmodels' simulated distribution) and the {key} critical value "
            f"{critical_values[key]:g} (Zivot and Andrews 1992) disagree; the decision follows the "
            "critical value"
        )
    if not math.isclose(trim, 0.15, rel_tol=0.0, abs_tol=1e-12):
        notes.append(f"the critical values are tabulated for trim 0.15; this test used trim {trim:g}")

    break_date = _label(values, last_before)
    first_after = _label(values, last_before + 1)
    notes.append(
        f"break date {break_date} is the last period before the break (Zivot and Andrews' T_B); "
        f"the break terms are nonzero from {first_after} on, which some programs report as the break date"
    )

    if criterion == "fixed":
        lag_rule = f"fixed by the caller at {_lags_text(search_lags)}"
    else:
        lag_rule = (
            f"{ADF_CRITERIA[criterion]} in the ADF regression with constant and trend and no break terms "
            f"(Baum 2004), searched 0 to {_lags_text(search_lags)} ({rule_text})"
        )
    nobs = nobs_series - 1 - lags

    return TestResult(
        test="Zivot-Andrews",
        null_hypothesis="unit root",
        level=level,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=critical_values,
        critical_values_source=(
            f"Zivot and Andrews (1992), asymptotic critical values, model "
            f"{'A (break in the intercept)' if deterministic == 'constant' else 'C (breaks in intercept and trend)'}"
            ", tabulated for trim 0.15"
        ),
        lags=lags,
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, lags + 1),
        sample_end=_label(values, nobs_series - 1),
        rejects=rejects,
        significance=significance,
        notes=tuple(notes),
        pvalue_source=(
            "interpolated linearly in statsmodels' simulated quantiles of the Zivot-Andrews statistic "
            "(100,000 replications of 2,000 observations); a bound beyond their range"
        ),
        break_date=break_date,
        lag_criterion=criterion,
    )


def _za_pvalue(statistic: float, deterministic: str) -> tuple[float, str | None]:
    """p-value in statsmodels' simulated Zivot-Andrews quantiles, linear between them; a bound beyond.

    The table (``zivot_andrews._za_critical_values`` in statsmodels, percentiles 0.001 to 99.9) is
    the one statsmodels' own ``zivot_andrews`` interpolates; statsmodels clamps beyond its ends,
    reportgen reports the end as a bound instead.
    """
    table = _statsmodels_zivot_andrews._za_critical_values[_ZA_REGRESSION[deterministic]]
    quantiles, points = table[:, 0] / 100.0, table[:, 1]
    if statistic < points[0]:
        return float(quantiles[0]), "<"
    if statistic > points[-1]:
        return float(quantiles[-1]), ">"
    return float(np.interp(statistic, points, quantiles)), None


@dataclass(frozen=True, slots=True)
class _ZaRegression:
    """The parts of every candidate Zivot-Andrews regression that do not depend on the break."""

    times: np.ndarray  # 0-based period of each regression row
    response: np.ndarray  # dy_t
    fixed: np.ndarray  # constant, trend / T, lagged differences
    level: np.ndarray  # y_{t-1}
    breaks: int  # 1 (model A) or 2 (model C)
    nobs_series: int


def _za_regression(series: np.ndarray, lags: int, deterministic: str) -> _ZaRegression:
    nobs_series = series.size
    differences = np.diff(series)
    nobs = nobs_series - 1 - lags
    times = np.arange(lags + 1, nobs_series, dtype=float)
    columns = [np.ones(nobs), times / nobs_series]
    columns.extend(differences[lags - j : lags - j + nobs] for j in range(1, lags + 1))
    return _ZaRegression(
        times=times,
        response=differences[lags:],
        fixed=np.column_stack(columns),
        level=series[lags : nobs_series - 1],
        breaks=1 if deterministic == "constant" else 2,
        nobs_series=nobs_series,
    )


def _za_candidate(
    regression: _ZaRegression, last_before: int, values: pd.Series, level: int
) -> float:
    """The t-statistic of the lagged level with a break after ``last_before``, by a QR of the whole design.

    Raises StatsInputError when that regression is singular or fits the series exactly.
    """
    fixed, times = regression.fixed, regression.times
    design = np.empty((fixed.shape[0], fixed.shape[1] + regression.breaks + 1))
    design[:, : fixed.shape[1]] = fixed
    design[:, -1] = regression.level
    after = times > last_before
    design[:, fixed.shape[1]] = after
    if regression.breaks == 2:
        design[:, fixed.shape[1] + 1] = np.where(after, (times - last_before) / regression.nobs_series, 0.0)
    q, r = np.linalg.qr(design)
    diagonal = np.abs(np.diag(r))
    if diagonal.min() <= 1e-10 * diagonal.max():
        raise StatsInputError(
            problem=(
                f"Zivot-Andrews cannot be run: the regression with a break after "
                f"{_label(values, last_before)} is singular at level {level}"
            ),
            hint="the series may have long stretches of constant values; try fewer lags",
        )
    response = regression.response
    projection = q.T @ response
    residuals = response - q @ projection
    sum_of_squares = float(residuals @ residuals)
    if sum_of_squares <= (1e-13) ** 2 * float(response @ response):
        raise StatsInputError(
            problem=f"Zivot-Andrews cannot be run: the regression fits the series exactly at level {level}",
            hint="a series without noise cannot be tested; check the data",
        )
    scale = math.sqrt(sum_of_squares / (design.shape[0] - design.shape[1]))
    return float(math.copysign(1.0, r[-1, -1]) * projection[-1] / scale)


def _suffix_sums(array: np.ndarray) -> np.ndarray:
    """``out[s] = sum(array[s:])`` along the first axis, for ``s = 0..n`` (``out[n]`` is zero)."""
    out = np.zeros((array.shape[0] + 1, *array.shape[1:]))
    out[:-1] = np.cumsum(array[::-1], axis=0)[::-1]
    return out


#: A candidate whose partialled-out break terms, lagged level or residuals keep at most this share
#: of their squared length is recomputed by a QR of its whole design (see :func:`_za_search`).
_ZA_RECHECK: Final[float] = 1e-8


def _za_search(
    series: np.ndarray, lags: int, deterministic: str, trim: float, values: pd.Series, level: int
) -> tuple[float, int]:
    """Smallest t-statistic of the lagged level over the candidate breaks, and its ``T_B`` (0-based).

    Every candidate regression shares the constant, the trend and the lagged differences (``F``);
    only the break terms ``D`` change. By the Frisch-Waugh-Lovell theorem the t-statistic of the
    lagged level ``z`` is that of the regression of ``M_F dy`` on ``M_F D`` and ``M_F z``, where
    ``M_F`` removes the projection on ``F``. With ``Q`` an orthonormal basis of ``F`` (one QR
    decomposition), every inner product that regression needs is a suffix sum over the rows after
    the break: ``Q'D`` is the sum of the rows of ``Q`` after ``T_B`` (weighted by ``t - T_B`` for
    the trend break), and ``D'M_F dy``, ``D'M_F z`` likewise. The search therefore costs
    ``O(T k)`` instead of one ``O(T k^2)`` QR decomposition per candidate, and it is exact: the
    statistic is the same number up to rounding, for every T.

    Candidates whose break terms, lagged level or residuals are nearly removed by the other
    regressors (less than ``1e-8`` of their squared length left, where the subtractions of the update
    would lose digits) are recomputed by a QR decomposition of their whole design, which also
    refuses singular regressions and exact fits; so is the winning candidate below
    :data:`~reportgen.stats.numerics.LARGE_SAMPLE` observations, whose statistic is then reported
    from that decomposition (from there on the update's value is reported: the two agree to about
    1e-10, and the decomposition would cost as much as the whole search).
    """
    regression = _za_regression(series, lags, deterministic)
    nobs_series = regression.nobs_series
    trimmed = int(nobs_series * trim)
    candidates = np.arange(trimmed, nobs_series - trimmed)

    fixed = regression.fixed
    q, r = orthonormal_factor(fixed)
    if np.abs(np.diag(r)).min() <= 1e-10:  # the shared regressors alone are singular
        _za_candidate(regression, int(candidates[0]), values, level)  # raises with the first candidate
    response, lagged = regression.response, regression.level
    y = response - q @ (q.T @ response)
    z = lagged - q @ (q.T @ lagged)
    yy, zz, zy = float(y @ y), float(z @ z), float(z @ y)

    nobs = response.size
    first_row = candidates - lags  # first regression row after the break: times[i] > T_B
    after = (nobs - first_row).astype(float)
    q_sums = _suffix_sums(q)[first_row]
    y_sums = _suffix_sums(y)[first_row]
    z_sums = _suffix_sums(z)[first_row]
    # Break-term Gram matrix B = D' M_F D and the vectors D' M_F y, D' M_F z, one per candidate.
    if regression.breaks == 1:
        b00 = after - np.einsum("ij,ij->i", q_sums, q_sums)
        h_y, h_z = y_sums, z_sums
        z_perp = zz - h_z**2 / b00
        zy_perp = zy - h_z * h_y / b00
        y_perp = yy - h_y**2 / b00
        break_left = b00 / after
    else:
        weights = np.arange(1.0, nobs + 1.0)  # row i + 1
        scale = float(nobs_series)
        shift = first_row.astype(float)
        q_trend = (_suffix_sums(q * weights[:, None])[first_row] - shift[:, None] * q_sums) / scale
        y_trend = (_suffix_sums(y * weights)[first_row] - shift * y_sums) / scale
        z_trend = (_suffix_sums(z * weights)[first_row] - shift * z_sums) / scale
        trend_trend = after * (after + 1.0) * (2.0 * after + 1.0) / 6.0 / scale**2
        step_trend = after * (after + 1.0) / 2.0 / scale
        b00 = after - np.einsum("ij,ij->i", q_sums, q_sums)
        b01 = step_trend - np.einsum("ij,ij->i", q_sums, q_trend)
        b11 = trend_trend - np.einsum("ij,ij->i", q_trend, q_trend)
        determinant = b00 * b11 - b01**2

        def quadratic(u0: np.ndarray, u1: np.ndarray, v0: np.ndarray, v1: np.ndarray) -> np.ndarray:
            """``u' B^-1 v`` for every candidate."""
            return (u0 * (b11 * v0 - b01 * v1) + u1 * (b00 * v1 - b01 * v0)) / determinant

        z_perp = zz - quadratic(z_sums, z_trend, z_sums, z_trend)
        zy_perp = zy - quadratic(z_sums, z_trend, y_sums, y_trend)
        y_perp = yy - quadratic(y_sums, y_trend, y_sums, y_trend)
        break_left = np.minimum(b00 / after, determinant / b00 / trend_trend)
    sums_of_squares = y_perp - zy_perp**2 / z_perp
    freedom = nobs - (fixed.shape[1] + regression.breaks + 1)
    with np.errstate(divide="ignore", invalid="ignore"):
        statistics = zy_perp / np.sqrt(z_perp * sums_of_squares / freedom)
    doubtful = (
        ~np.isfinite(statistics)
        | (break_left <= _ZA_RECHECK)
        | (z_perp <= _ZA_RECHECK * float(lagged @ lagged))
        | (sums_of_squares <= _ZA_RECHECK * float(response @ response))
    )
    for position in np.flatnonzero(doubtful):
        statistics[position] = _za_candidate(regression, int(candidates[position]), values, level)
    best = int(np.argmin(statistics))
    last_before = int(candidates[best])
    if nobs_series >= LARGE_SAMPLE and not doubtful[best]:
        return float(statistics[best]), last_before
    return _za_candidate(regression, last_before, values, level), last_before
