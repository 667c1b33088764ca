"""The order of integration of a series: reportgen's decision procedure and its trail.

Decision rule
-------------
The series is tested at levels d = 0, 1, ..., up to the highest order set in the manifest
(max_order), where level d is the series differenced d times.
If level d has fewer observations than the manifest's minimum (min_observations), no test is run
and the order is left undetermined.
At each level the ADF test (null hypothesis: a unit root) and the KPSS test (null hypothesis:
stationarity) are run with the same deterministic terms, chosen by the deterministic-terms rule
unless the manifest fixes them.
If ADF rejects a unit root and KPSS does not reject stationarity, the tests agree and the order
is d.
If ADF does not reject a unit root and KPSS rejects stationarity, the series is not stationary at
level d and is differenced once more.
If neither test rejects, the data cannot tell; reportgen keeps the unit-root presumption, the
conservative choice against spurious regression, and differences once more.
If both tests reject, they conflict; the order is left undetermined and the reason names both
tests, the level and their p-values.
If the series is still not shown to be stationary at the highest order tested, the order is left
undetermined.
Both tests use the manifest's significance level; the ADF lagged differences are chosen by the
manifest's criterion (AIC by default) from 0 up to Schwert's (1989) maximum int(12 (T/100)^(1/4)),
rounded down and reduced when the sample is too short for it, and the KPSS bandwidth is chosen
automatically (Hobijn, Franses and Ooms 1998) with Bartlett weights.

Deterministic-terms rule
------------------------
At each level, ADF is first run with a constant and a linear trend.
If it rejects a unit root, the series is stationary around its deterministic terms and the
t-statistic of the trend coefficient in that regression is asymptotically normal: if its absolute
value exceeds the two-sided normal critical value at the significance level, the terms are a
constant and a trend (trend stationarity), otherwise a constant only.
If it does not reject, the mean of the series differenced once more is tested with a t-statistic
whose standard error is heteroskedasticity and autocorrelation consistent (Newey-West, Bartlett
kernel, int(4 (T/100)^(2/9)) lags) against the same normal critical value: a significant mean is
a drift, which makes the levels trend, so the terms are a constant and a trend; otherwise a
constant only.
When the manifest fixes the deterministic terms, for all series or for one series, the rule is
skipped and the fixed terms are used at every level.

Every test run is kept in :attr:`OrderVerdict.tests` in the order it was run; an ADF run only to
choose the deterministic terms (when the chosen terms are a constant only) carries the note
``"auxiliary: used to choose deterministic terms"``.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Final

import numpy as np
import pandas as pd
from scipy.stats import norm

from reportgen.errors import DataError, InsufficientDataError
from reportgen.stats.types import OrderVerdict, StatsSettings, TestResult
from reportgen.stats.unitroot import ADF_CRITERIA, adf, adf_trend_t_statistic, kpss
from reportgen.vocabulary import Deterministic

__all__ = [
    "AUXILIARY_NOTE",
    "DECISION_RULE",
    "DETERMINISTIC_RULE",
    "difference",
    "integration_order",
    "mean_hac_t_statistic",
    "newey_west_lags",
    "pvalue_text",
]

#: reportgen's order-of-integration rule in plain sentences (quoted by the methods appendix).
DECISION_RULE: Final[tuple[str, ...]] = (
    "The series is tested at levels d = 0, 1, ..., up to the highest order set in the manifest "
    "(max_order), where level d is the series differenced d times.",
    "If level d has fewer observations than the manifest's minimum (min_observations), no test is "
    "run and the order is left undetermined.",
    "At each level the ADF test (null hypothesis: a unit root) and the KPSS test (null hypothesis: "
    "stationarity) are run with the same deterministic terms, chosen by the deterministic-terms rule "
    "unless the manifest fixes them.",
    "If ADF rejects a unit root and KPSS does not reject stationarity, the tests agree and the order "
    "is d.",
    "If ADF does not reject a unit root and KPSS rejects stationarity, the series is not stationary at "
    "level d and is differenced once more.",
    "If neither test rejects, the data cannot tell; reportgen keeps the unit-root presumption, the "
    "conservative choice against spurious regression, and differences once more.",
    "If both tests reject, they conflict; the order is left undetermined and the reason names both "
    "tests, the level and their p-values.",
    "If the series is still not shown to be stationary at the highest order tested, the order is left "
    "undetermined.",
    "Both tests use the manifest's significance level; the ADF lagged differences are chosen by the "
    "manifest's criterion (AIC by default) from 0 up to Schwert's (1989) maximum int(12 (T/100)^(1/4)), "
    "rounded down and reduced when the sample is too short for it, and the KPSS bandwidth is chosen "
    "automatically (Hobijn, Franses and Ooms 1998) with Bartlett weights.",
)

#: How the deterministic terms are chosen at each level, in plain sentences.
DETERMINISTIC_RULE: Final[tuple[str, ...]] = (
    "At each level, ADF is first run with a constant and a linear trend.",
    "If it rejects a unit root, the series is stationary around its deterministic terms and the "
    "t-statistic of the trend coefficient in that regression is asymptotically normal: if its absolute "
    "value exceeds the two-sided normal critical value at the significance level, the terms are a "
    "constant and a trend (trend stationarity), otherwise a constant only.",
    "If it does not reject, the mean of the series differenced once more is tested with a t-statistic "
    "whose standard error is heteroskedasticity and autocorrelation consistent (Newey-West, Bartlett "
    "kernel, int(4 (T/100)^(2/9)) lags) against the same normal critical value: a significant mean is "
    "a drift, which makes the levels trend, so the terms are a constant and a trend; otherwise a "
    "constant only.",
    "When the manifest fixes the deterministic terms, for all series or for one series, the rule is "
    "skipped and the fixed terms are used at every level.",
)

#: Note carried by an ADF result that was run only to choose the deterministic terms.
AUXILIARY_NOTE: Final[str] = "auxiliary: used to choose deterministic terms"

_POLICIES: Final[tuple[str, ...]] = ("auto", "constant", "constant-trend")
_ORDINALS: Final[dict[int, str]] = {1: "first", 2: "second", 3: "third", 4: "fourth"}
_TERMS_CHOSEN: Final[dict[str, str]] = {"constant": "constant only", "constant-trend": "constant and trend"}
_ADF_TERMS: Final[dict[str, str]] = {"constant": "with constant", "constant-trend": "with constant and trend"}


def difference(values: pd.Series, times: int) -> pd.Series:
    """The series differenced ``times`` times, without the leading missing values.

    Parameters
    ----------
    values : pandas.Series
        The series, indexed by period.
    times : int
        Number of first differences to take (0 returns a float copy).

    Returns
    -------
    pandas.Series
        ``len(values) - times`` observations (none when ``times`` exceeds the length), float,
        with the periods of the observations they end at.
    """
    if times < 0:
        raise ValueError(f"times must be 0 or more; got {times}")
    result = values.astype(float)
    for _ in range(times):
        result = result.diff()
    return result.iloc[times:]


def newey_west_lags(nobs: int) -> int:
    """Newey and West's (1994) rule-of-thumb bandwidth for the Bartlett kernel, ``int(4 (T/100)^(2/9))``.

    References
    ----------
    Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation.
    *Review of Economic Studies* 61, 631-653.
    """
    return int(4.0 * (nobs / 100.0) ** (2.0 / 9.0))


def mean_hac_t_statistic(values: pd.Series | np.ndarray, lags: int | None = None) -> tuple[float, float, int]:
    """The mean of a series and its t-statistic with a Newey-West (HAC) standard error.

    The long-run variance is ``gamma_0 + 2 sum_{j=1..L} (1 - j/(L+1)) gamma_j`` with
    autocovariances of the demeaned series divided by ``T``; the standard error of the mean is
    ``sqrt(long-run variance / T)``. Bartlett weights keep the estimate non-negative.

    Parameters
    ----------
    values : pandas.Series or numpy.ndarray
        The series, without missing values.
    lags : int, optional
        Bandwidth ``L``; default :func:`newey_west_lags` of the length.

    Returns
    -------
    tuple of (float, float, int)
        The mean, its t-statistic and the bandwidth used. The t-statistic is infinite when the
        series is constant and non-zero, and 0 when it is constant zero.

    References
    ----------
    Newey, W. K. and West, K. D. (1987). A simple, positive semi-definite, heteroskedasticity and
    autocorrelation consistent covariance matrix. *Econometrica* 55, 703-708.

    Newey, W. K. and West, K. D. (1994). Automatic lag selection in covariance matrix estimation.
    *Review of Economic Studies* 61, 631-653.
    """
    array = np.asarray(values, dtype=float)
    nobs = array.size
    bandwidth = newey_west_lags(nobs) if lags is None else lags
    bandwidth = min(bandwidth, nobs - 1)
    mean = float(array.mean())
    centred = array - mean
    variance = float(centred @ centred) / nobs
    for j in range(1, bandwidth + 1):
        variance += 2.0 * (1.0 - j / (bandwidth + 1.0)) * float(centred[j:] @ centred[:-j]) / nobs
    if variance <= 0.0:
        return mean, (math.copysign(math.inf, mean) if mean != 0.0 else 0.0), bandwidth
    return mean, mean / math.sqrt(variance / nobs), bandwidth


def _level_label(name: str, level: int) -> str:
    if level == 0:
        return f"Level 0 ({name})"
    return f"Level {level} ({_differences_text(name, level)})"


def _differences_text(name: str, level: int) -> str:
    ordinal = _ORDINALS.get(level, f"{level}th")
    return f"{ordinal} differences of {name}"


def _percent(significance: float) -> str:
    return f"{significance * 100:g}%"


def _statistic_text(value: float) -> str:
    if not math.isfinite(value):
        return str(value)
    if abs(value) >= 1000:
        return f"{value:.0f}"
    return f"{value:.3g}"


def _bound_number(value: float) -> str:
    if value < 0.001:
        return "0.001"
    if value > 0.999:
        return "0.999"
    return f"{value:.2f}" if round(value, 2) == value else f"{value:.3f}"


def pvalue_text(result: TestResult) -> str:
    """``"p = 0.640"``, or a bound such as ``"p < 0.01"``, for sentences and tables."""
    if result.pvalue_bound is not None:
        return f"p {result.pvalue_bound} {_bound_number(result.pvalue)}"
    if result.pvalue < 0.001:
        return "p < 0.001"
    if result.pvalue > 0.999:
        return "p > 0.999"
    return f"p = {result.pvalue:.3f}"


def _adf_text(result: TestResult, criterion: str) -> str:
    verb = "rejects" if result.rejects else "does not reject"
    lags = f"{result.lags} lagged difference" + ("" if result.lags == 1 else "s")
    how = "fixed" if criterion == "fixed" else f"by {ADF_CRITERIA[criterion]}"
    return (
        f"ADF {_ADF_TERMS[result.deterministic]} {verb} a unit root at {_percent(result.significance)} "
        f"(statistic {_statistic_text(result.statistic)}, {pvalue_text(result)}, {lags} {how})"
    )


def _kpss_text(result: TestResult) -> str:
    verb = "rejects" if result.rejects else "does not reject"
    kind = "level" if result.deterministic == "constant" else "trend"
    return (
        f"KPSS {verb} {kind} stationarity at {_percent(result.significance)} "
        f"(statistic {_statistic_text(result.statistic)}, {pvalue_text(result)}, bandwidth {result.lags})"
    )


def _choose_terms(
    name: str, values: pd.Series, level: int, settings: StatsSettings
) -> tuple[Deterministic, str, TestResult]:
    """Apply the deterministic-terms rule at one level: the terms, the reason, the ADF-ct run."""
    label = _level_label(name, level)
    trend_adf = adf(
        values,
        level=level,
        deterministic="constant-trend",
        lag_criterion=settings.lag_criterion,
        significance=settings.significance,
        min_observations=settings.min_observations,
    )
    critical = float(norm.ppf(1.0 - settings.significance / 2.0))
    at = f"the two-sided normal critical value at {_percent(settings.significance)}"
    opening = f"{label}: ADF with constant and trend"
    if trend_adf.rejects:
        t_trend = adf_trend_t_statistic(values, lags=trend_adf.lags)
        significant = abs(t_trend) > critical
        comparison = ">" if significant else "<="
        reason = (
            f"{opening} rejects a unit root ({pvalue_text(trend_adf)}) and its trend coefficient has "
            f"t = {_statistic_text(t_trend)} (|t| {comparison} {critical:.3g}, {at}), so "
            + ("constant and trend (trend stationarity)." if significant else "constant only.")
        )
    else:
        mean, t_mean, bandwidth = mean_hac_t_statistic(np.diff(np.asarray(values, dtype=float)))
        significant = abs(t_mean) > critical
        comparison = ">" if significant else "<="
        reason = (
            f"{opening} does not reject a unit root ({pvalue_text(trend_adf)}); the "
            f"{_differences_text(name, level + 1)} have mean {mean:.3g} with HAC t = "
            f"{_statistic_text(t_mean)} (Newey-West, Bartlett kernel, {bandwidth} lags; |t| {comparison} "
            f"{critical:.3g}, {at}), so "
            + (
                "constant and trend (a unit root with drift, which makes the levels trend)."
                if significant
                else "constant only (no drift)."
            )
        )
    choice: Deterministic = "constant-trend" if significant else "constant"
    return choice, reason, trend_adf


def integration_order(
    name: str,
    values: pd.Series,
    settings: StatsSettings,
    deterministic_override: str | None = None,
) -> OrderVerdict:
    """The order of integration of one series by reportgen's decision rule.

    The rule is the module docstring's, also available as :data:`DECISION_RULE` and
    :data:`DETERMINISTIC_RULE`.

    Parameters
    ----------
    name : str
        Name of the series, used in the trail.
    values : pandas.Series
        The series as transformed, float, indexed by a ``PeriodIndex``, without missing values.
    settings : StatsSettings
        Significance, highest order, lag criterion, deterministic policy and minimum sample.
    deterministic_override : {"constant", "constant-trend"}, optional
        Terms fixed for this series (a manifest entry's override); takes precedence over
        ``settings.deterministic``.

    Returns
    -------
    OrderVerdict
        The order (0, 1, 2, or None with a reason), the terms and their reason per level, every
        test run in order, the trail in plain sentences and captured library warnings.

    References
    ----------
    Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time
    series with a unit root. *Journal of the American Statistical Association* 74, 427-431.

    Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null
    hypothesis of stationarity against the alternative of a unit root. *Journal of Econometrics*
    54, 159-178.

    Granger, C. W. J. and Newbold, P. (1974). Spurious regressions in econometrics. *Journal of
    Econometrics* 2, 111-120.
    """
    if deterministic_override is not None and deterministic_override not in ("constant", "constant-trend"):
        raise ValueError(
            f"deterministic_override must be 'constant' or 'constant-trend'; got {deterministic_override!r}"
        )
    if settings.deterministic not in _POLICIES:
        raise ValueError(
            f"settings.deterministic must be one of {', '.join(_POLICIES)}; got {settings.deterministic!r}"
        )
    if settings.lag_criterion.lower() not in ("aic", "bic", "t-stat"):
        raise ValueError(
            f"settings.lag_criterion must be one of aic, bic, t-stat; got {settings.lag_criterion!r}"
        )
    if settings.max_order < 0:
        raise ValueError(f"settings.max_order must be 0 or more; got {settings.max_order}")
    policy = deterministic_override or settings.deterministic
    policy_source = "the series' manifest entry" if deterministic_override else "the manifest's settings"
    criterion = settings.lag_criterion.lower()

    tests: list[TestResult] = []
    trail: list[str] = []
    notes: list[str] = []
    chosen: dict[int, Deterministic] = {}
    reasons: dict[int, str] = {}

    def finish(order: int | None, reason: str | None) -> OrderVerdict:
        trail.append(f"Order {order}." if order is not None else f"Order not determined: {reason}.")
        for result in tests:
            for note in result.notes:
                if note != AUXILIARY_NOTE:
                    text = f"{result.test} at level {result.level}: {note}"
                    if text not in notes:
                        notes.append(text)
        return OrderVerdict(
            series=name,
            order=order,
            deterministic=dict(chosen),
            deterministic_reasons=dict(reasons),
            tests=tuple(tests),
            trail=tuple(trail),
            reason=reason,
            nobs=len(values),
            notes=tuple(notes),
        )

    last_outcome = ""
    for level in range(settings.max_order + 1):
        current = difference(values, level)
        label = _level_label(name, level)
        count = len(current)
        if count < settings.min_observations:
            reason = (
                f"too few observations: {count} at level {level}; "
                f"at least {settings.min_observations} are needed"
            )
            trail.append(f"{label}: {reason}; no test run.")
            return finish(None, reason)

        try:
            if policy == "auto":
                terms, reason, trend_adf = _choose_terms(name, current, level, settings)
                if terms == "constant-trend":
                    adf_result = trend_adf
                else:
                    tests.append(dataclasses.replace(trend_adf, notes=(*trend_adf.notes, AUXILIARY_NOTE)))
                    adf_result = adf(
                        current,
                        level=level,
                        deterministic=terms,
                        lag_criterion=criterion,
                        significance=settings.significance,
                        min_observations=settings.min_observations,
                    )
            else:
                terms = "constant-trend" if policy == "constant-trend" else "constant"
                reason = (
                    f"{label}: {_TERMS_CHOSEN[terms]}, fixed by {policy_source} "
                    f"(deterministic: {policy}); the rule that chooses the terms was skipped."
                )
                adf_result = adf(
                    current,
                    level=level,
                    deterministic=terms,
                    lag_criterion=criterion,
                    significance=settings.significance,
                    min_observations=settings.min_observations,
                )
            chosen[level] = terms
            reasons[level] = reason
            trail.append(reason)
            tests.append(adf_result)
            kpss_result = kpss(
                current,
                level=level,
                deterministic=terms,
                significance=settings.significance,
                min_observations=settings.min_observations,
            )
            tests.append(kpss_result)
        except (InsufficientDataError, DataError) as error:
            trail.append(f"{label}: {error.message}; no decision possible.")
            return finish(None, error.message)

        findings = f"{label}: {_adf_text(adf_result, criterion)}; {_kpss_text(kpss_result)}"
        if adf_result.rejects and not kpss_result.rejects:
            trail.append(f"{findings}; the tests agree: stationary at level {level}.")
            return finish(level, None)
        if adf_result.rejects and kpss_result.rejects:
            trail.append(f"{findings}; the tests conflict.")
            kind = "level" if terms == "constant" else "trend"
            reason = (
                f"the tests conflict at level {level}: ADF rejects a unit root ({pvalue_text(adf_result)}) "
                f"and KPSS rejects {kind} stationarity ({pvalue_text(kpss_result)})"
            )
            return finish(None, reason)
        if kpss_result.rejects:
            trail.append(f"{findings}; not stationary.")
            last_outcome = "non-stationary"
        else:
            trail.append(
                f"{findings}; neither test rejects, so the data cannot tell: reportgen keeps the "
                "unit-root presumption (the conservative choice against spurious regression)."
            )
            last_outcome = "undecided"

    top = settings.max_order
    differences = f"{top} difference" + ("" if top == 1 else "s")
    if last_outcome == "non-stationary":
        reason = f"still non-stationary after {differences} (the highest order tested)"
    else:
        reason = (
            f"still not shown to be stationary after {differences} (the highest order tested): "
            f"neither test rejects at level {top}"
        )
    return finish(None, reason)
