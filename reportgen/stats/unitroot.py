"""Unit-root (ADF) and stationarity (KPSS) tests, each returning a frozen :class:`TestResult`.

The statistics come from statsmodels (``adfuller`` and ``kpss``); this module pins the choices
statsmodels leaves open or makes differently from reportgen, and reports them in the result:

* the ADF maximum lag follows Schwert (1989) rounded *down*, ``int(12 (T/100)^(1/4))``
  (statsmodels and arch round up), reduced when the regression would otherwise be infeasible;
* p-values that lie beyond the range of the table or response surface they come from are reported
  as bounds (``pvalue_bound`` ``"<"`` or ``">"``), never as exact values;
* library warnings are captured into ``notes`` instead of being printed.

Rescaling a series (multiplying it by a positive or negative constant) leaves every statistic,
lag choice and bandwidth unchanged. To keep that true in floating point as well, each series is
divided by its largest absolute value before any regression: a change of units then changes the
computed statistics by a few units in the last place at most, instead of by the rounding error of
a badly scaled least-squares problem.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Final

import numpy as np
import pandas as pd
from statsmodels.regression.linear_model import OLS
from statsmodels.tsa.adfvalues import _tau_maxs, _tau_mins, mackinnoncrit, mackinnonp
from statsmodels.tsa.stattools import adfuller
from statsmodels.tsa.stattools import kpss as statsmodels_kpss

from reportgen.errors import DataError, InsufficientDataError
from reportgen.periods import period_label
from reportgen.stats.types import TestResult
from reportgen.vocabulary import Deterministic

__all__ = [
    "ADF_CRITERIA",
    "TERMS_TEXT",
    "adf",
    "adf_feasible_max_lags",
    "adf_trend_t_statistic",
    "kpss",
    "schwert_max_lags",
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
        raise DataError(f"{test} needs a single series; got an array of shape {array.shape} at level {level}")
    if not np.all(np.isfinite(array)):
        raise DataError(f"{test} needs a series without missing or infinite values; level {level} has some")
    return array


def _label(values: pd.Series, position: int) -> str:
    item = values.index[position]
    return period_label(item) if isinstance(item, pd.Period) else str(item)


def _check_not_constant(array: np.ndarray, test: str, level: int) -> None:
    if array.size and float(np.ptp(array)) == 0.0:
        raise DataError(
            f"{test} cannot be run: the series is constant at level {level}",
            hint="a constant series has no variation to test; check the data and the transforms",
        )


def _normalised(array: np.ndarray) -> np.ndarray:
    """The series divided by its largest absolute value (statistics are scale invariant)."""
    largest = float(np.max(np.abs(array)))
    return array / largest if largest > 0.0 else array


def _warning_notes(caught: Sequence[warnings.WarningMessage]) -> tuple[str, ...]:
    notes: list[str] = []
    for item in caught:
        text = f"{item.category.__name__}: {item.message}"
        if text not in notes:
            notes.append(text)
    return tuple(notes)


def _significance_key(significance: float) -> str:
    for level, key in _KPSS_LEVELS.items():
        if math.isclose(significance, level, rel_tol=0.0, abs_tol=1e-12):
            return key
    allowed = ", ".join(f"{level:g}" for level in sorted(_KPSS_LEVELS))
    raise ValueError(f"KPSS significance must be one of {allowed}; got {significance!r}")


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
        Fewer observations raise :class:`~reportgen.errors.InsufficientDataError`.

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
    InsufficientDataError
        When the series has fewer than ``min_observations`` observations or the regression with
        the requested lags is infeasible.
    DataError
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
        raise InsufficientDataError(
            f"ADF {TERMS_TEXT[deterministic]} and {up_to}{_lags_text(shown_lags)} needs at least "
            f"{needed} observations; the series has {nobs_series} at level {level}"
        )
    _check_not_constant(array, "ADF", level)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = adfuller(
            _normalised(array),
            maxlag=search_lags,
            regression=regression,
            autolag=None if criterion == "fixed" else criterion,
            result_object=True,
        )
    notes = list(_warning_notes(caught))

    statistic = float(result.statistic)
    nobs = int(result.nobs)
    critical = mackinnoncrit(N=1, regression=regression, nobs=nobs)
    critical_values = {"1%": float(critical[0]), "5%": float(critical[1]), "10%": float(critical[2])}
    surface = "MacKinnon (1996)" if regression == "n" else "MacKinnon (2010)"

    tau_min = float(_tau_mins[regression][0])
    tau_max = float(_tau_maxs[regression][0])
    bound: str | None = None
    if statistic < tau_min:
        bound = "<"
        pvalue = float(mackinnonp(tau_min, regression=regression, N=1))
        notes.append(
            f"statistic {statistic:.4g} lies below the range of the MacKinnon (1994) p-value surface "
            f"(which ends at {tau_min:g}); the p-value is smaller than {pvalue:.3g}, its value there"
        )
    elif statistic > tau_max:
        bound = ">"
        pvalue = float(mackinnonp(tau_max, regression=regression, N=1))
        notes.append(
            f"statistic {statistic:.4g} lies above the range of the MacKinnon (1994) p-value surface "
            f"(which ends at {tau_max:g}); the p-value is larger than {pvalue:.3g}, its value there"
        )
    else:
        pvalue = float(mackinnonp(statistic, regression=regression, N=1))

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
        lags=int(result.lags),
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, nobs_series - nobs),
        sample_end=_label(values, nobs_series - 1),
        rejects=bound == "<" or (bound is None and pvalue < significance),
        significance=significance,
        notes=tuple(notes),
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
        raise InsufficientDataError(
            f"the ADF regression with constant, trend and {_lags_text(lags)} is infeasible with "
            f"{array.size} observations"
        )
    columns = [array[lags:-1]]
    columns.extend(differences[lags - j : differences.size - j] for j in range(1, lags + 1))
    columns.append(np.ones(nobs))
    columns.append(np.arange(1.0, nobs + 1.0))
    design = np.column_stack(columns)
    fit = OLS(differences[lags:], design).fit()
    return float(fit.tvalues[-1])


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
        Fewer observations raise :class:`~reportgen.errors.InsufficientDataError`.

    Returns
    -------
    TestResult
        Critical values of Kwiatkowski et al. (1992), Table 1; the p-value is interpolated linearly
        between the table's entries. Beyond the table the p-value is a bound: ``pvalue_bound``
        ``"<"`` with ``pvalue`` 0.01, or ``">"`` with ``pvalue`` 0.10.

    Raises
    ------
    InsufficientDataError
        When the series has fewer than ``min_observations`` observations or the bandwidth is not
        below the number of observations.
    DataError
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
        raise InsufficientDataError(
            f"KPSS {TERMS_TEXT[deterministic]}{bandwidth} needs at least {needed} observations; "
            f"the series has {nobs} at level {level}"
        )
    _check_not_constant(array, "KPSS", level)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        result = statsmodels_kpss(
            _normalised(array),
            regression=_REGRESSION[deterministic],
            nlags="auto" if lags is None else lags,
            result_object=True,
        )
    notes = list(_warning_notes(caught))

    statistic = float(result.statistic)
    table = {name: float(result.critical_values[name]) for name in ("10%", "5%", "2.5%", "1%")}
    bound: str | None = None
    if statistic > table["1%"]:
        bound, pvalue = "<", 0.01
    elif statistic < table["10%"]:
        bound, pvalue = ">", 0.10
    else:
        pvalue = float(result.pvalue)
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
        lags=int(result.lags),
        lag_rule=lag_rule,
        nobs=nobs,
        sample_start=_label(values, 0),
        sample_end=_label(values, nobs - 1),
        rejects=statistic > table[key],
        significance=significance,
        notes=tuple(notes),
    )
