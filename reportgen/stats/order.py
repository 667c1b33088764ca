"""The order of integration of a series: reportgen's decision procedure, its trail and its grid.

Decision rule
-------------
The series is examined at levels d = 0, 1, ..., max_order (the highest order set in the manifest),
where level d is the series differenced d times.
If the highest level has fewer observations than the manifest's minimum (min_observations), no test
is run and the order is left undetermined.
At every level four tests are run with the same deterministic terms, chosen by the deterministic-terms
rule unless the manifest fixes them: the ADF, Phillips-Perron (PP) and DF-GLS tests, whose
null hypothesis is a unit root, and the KPSS test, whose null hypothesis is stationarity.
Each unit-root test that rejects a unit root, and the KPSS test when it does not reject
stationarity, counts as a vote for stationarity: with three or four votes the level is stationary,
with none or one it is not.
Two votes are a split, which the unit-root presumption settles: the level counts as not stationary,
the conservative choice against spurious regression.
When the terms are a constant only, the four tests are run again with a constant and trend and the
smaller of the two vote counts decides: a series stationary around a constant is also stationary
around a flat trend, and the tests with a trend keep their size, so a finding of stationarity that
disappears once a trend is allowed for is not relied on.
The levels are read from the top down, as Dickey and Pantula (1987) recommend: if the highest level
is not stationary the order is left undetermined; otherwise the order is one more than the highest
level that is not stationary, or 0 when every level is stationary.
Levels below a level that is not stationary are reported but not relied on, because a test for one
unit root is unreliable when the series has more (Dickey and Pantula 1987).
Every test uses the manifest's significance level; the ADF and DF-GLS lagged differences are chosen
by the manifest's criterion (AIC by default) from 0 up to Schwert's (1989) maximum int(12
(T/100)^(1/4)), rounded down and reduced when the sample is too short for it; the PP bandwidth is
Newey and West's (1994) automatic choice and the KPSS bandwidth the short rule int(4 (T/100)^(1/4))
that Kwiatkowski, Phillips, Schmidt and Shin (1992) use, both with Bartlett weights.
The KPSS bandwidth is short on purpose: an automatic bandwidth grows with the persistence of the
series and so takes much of the test's power against a unit root, while the vote absorbs the extra
false rejections of stationarity a short bandwidth brings whenever all three unit-root tests reject.
The Zivot-Andrews test, which allows one break at an unknown date, is run at levels 0 and 1 with the
level's terms (a break in the intercept with a constant only, breaks in intercept and trend with
constant and trend) and is reported, but it does not vote: when it rejects a unit root at a level
found not stationary, the trail and the notes say that a real break could make the order overstated.

Deterministic-terms rule
------------------------
At each level, ADF is first run with a constant and a linear trend, with the manifest's lag
criterion.
If it rejects a unit root, the trend coefficient of that regression is tested: the terms are a
constant and a trend (trend stationarity) if the absolute value of its t-statistic exceeds the
two-sided critical value at the significance level of that t-statistic's distribution under a unit root
(Dickey and Fuller 1981; about 3.1 at 5%), otherwise a constant only.
That critical value is larger than the normal one, which holds only if the series is in fact
stationary, so a trend is accepted only if it is significant whichever hypothesis holds, and a false
rejection of the unit root does not bring a false trend with it.
If it does not reject, the mean of the series differenced once more is tested with a t-statistic
whose standard error is heteroskedasticity and autocorrelation consistent (Newey-West, Bartlett
kernel, int(4 (T/100)^(2/9)) lags) against the two-sided normal critical value at the significance
level: a significant mean is a drift, which makes the levels trend, so the terms are a constant and
a trend; otherwise a constant only.
This is a simplified sequential strategy in the spirit of Dolado, Jenkinson and Sosvilla-Rivero
(1990) and Elder and Kennedy (2001), not either procedure exactly: like both it starts from the
regression with constant and trend and judges that regression's trend with Dickey and Fuller's
(1981) distribution, but when the unit root is not rejected it looks for a drift in the mean of the
differences instead of testing again with fewer deterministic terms.
When the manifest fixes the deterministic terms, for all series or for one series, the rule is
skipped and the fixed terms are used at every level; the decision rule's second vote with a constant
and trend still applies when the fixed terms are a constant only.

Robustness grid
---------------
The robustness grid repeats the analysis for each lag criterion (AIC, BIC, t-stat) with each
choice of deterministic terms (a constant only; a constant and trend), the terms fixed at every
level, six combinations in all.
For each combination it shows the order each of ADF, PP, DF-GLS and KPSS implies on its own: the
number of differences needed before that test finds stationarity (rejects a unit root; for KPSS,
does not reject stationarity), undetermined if it does not by the highest order tested or cannot
be run; PP and KPSS search no lags, so they show the same order for every criterion.
For each combination it also shows the order the decision rule gives with those terms and that
criterion.
The order is fragile when the decision rule's order in some combination differs from the
reported order; the reason names every combination that changes it and the order it gives there.

Every test run is kept in :attr:`OrderVerdict.tests`; those run only for the robustness grid are
marked ``auxiliary=True``. The tests are ordered by level, then decision tests before auxiliary
ones, the level's chosen terms first, then ADF, PP, DF-GLS, KPSS, Zivot-Andrews, then AIC, BIC,
t-stat.
"""

from __future__ import annotations

import dataclasses
import math
from typing import Final

import numpy as np
import pandas as pd
from scipy.stats import norm

from reportgen.errors import DataError, InsufficientDataError, ReportgenError
from reportgen.stats.capture import collecting_warnings
from reportgen.stats.checks import check_variation
from reportgen.stats.fanchart import random_walk_fan, series_seed
from reportgen.stats.types import GridCell, OrderVerdict, StatsSettings, TestResult
from reportgen.stats.unitroot import (
    ADF_CRITERIA,
    TERMS_TEXT,
    ZA_MODEL_TEXT,
    adf,
    adf_trend_t_statistic,
    dfgls,
    kpss,
    phillips_perron,
    zivot_andrews,
)
from reportgen.vocabulary import Deterministic

__all__ = [
    "BATTERY",
    "DECISION_RULE",
    "DETERMINISTIC_RULE",
    "GRID_CRITERIA",
    "GRID_RULE",
    "GRID_TERMS",
    "TREND_CRITICAL_VALUES",
    "check_variation",
    "difference",
    "integration_order",
    "kpss_bandwidth",
    "mean_hac_t_statistic",
    "newey_west_lags",
    "pvalue_text",
    "trend_critical_value",
]

#: reportgen's order-of-integration rule in plain sentences (quoted by the methods appendix).
DECISION_RULE: Final[tuple[str, ...]] = (
    "The series is examined at levels d = 0, 1, ..., max_order (the highest order set in the manifest), "
    "where level d is the series differenced d times.",
    "If the highest level has fewer observations than the manifest's minimum (min_observations), no test "
    "is run and the order is left undetermined.",
    "At every level four tests are run with the same deterministic terms, chosen by the "
    "deterministic-terms rule unless the manifest fixes them: the ADF, Phillips-Perron (PP) and DF-GLS "
    "tests, whose null hypothesis is a unit root, and the KPSS test, whose null hypothesis is "
    "stationarity.",
    "Each unit-root test that rejects a unit root, and the KPSS test when it does not reject "
    "stationarity, counts as a vote for stationarity: with three or four votes the level is stationary, "
    "with none or one it is not.",
    "Two votes are a split, which the unit-root presumption settles: the level counts as not stationary, "
    "the conservative choice against spurious regression.",
    "When the terms are a constant only, the four tests are run again with a constant and trend and the "
    "smaller of the two vote counts decides: a series stationary around a constant is also stationary "
    "around a flat trend, and the tests with a trend keep their size, so a finding of stationarity that "
    "disappears once a trend is allowed for is not relied on.",
    "The levels are read from the top down, as Dickey and Pantula (1987) recommend: if the highest level "
    "is not stationary the order is left undetermined; otherwise the order is one more than the highest "
    "level that is not stationary, or 0 when every level is stationary.",
    "Levels below a level that is not stationary are reported but not relied on, because a test for one "
    "unit root is unreliable when the series has more (Dickey and Pantula 1987).",
    "Every test uses the manifest's significance level; the ADF and DF-GLS lagged differences are chosen "
    "by the manifest's criterion (AIC by default) from 0 up to Schwert's (1989) maximum int(12 "
    "(T/100)^(1/4)), rounded down and reduced when the sample is too short for it; the PP bandwidth is "
    "Newey and West's (1994) automatic choice and the KPSS bandwidth the short rule int(4 (T/100)^(1/4)) "
    "that Kwiatkowski, Phillips, Schmidt and Shin (1992) use, both with Bartlett weights.",
    "The KPSS bandwidth is short on purpose: an automatic bandwidth grows with the persistence of the "
    "series and so takes much of the test's power against a unit root, while the vote absorbs the extra "
    "false rejections of stationarity a short bandwidth brings whenever all three unit-root tests reject.",
    "The Zivot-Andrews test, which allows one break at an unknown date, is run at levels 0 and 1 with the "
    "level's terms (a break in the intercept with a constant only, breaks in intercept and trend with "
    "constant and trend) and is reported, but it does not vote: when it rejects a unit root at a level "
    "found not stationary, the trail and the notes say that a real break could make the order overstated.",
)

#: How the deterministic terms are chosen at each level, in plain sentences.
DETERMINISTIC_RULE: Final[tuple[str, ...]] = (
    "At each level, ADF is first run with a constant and a linear trend, with the manifest's lag criterion.",
    "If it rejects a unit root, the trend coefficient of that regression is tested: the terms are a "
    "constant and a trend (trend stationarity) if the absolute value of its t-statistic exceeds the "
    "two-sided critical value at the significance level of that t-statistic's distribution under a unit "
    "root (Dickey and Fuller 1981; about 3.1 at 5%), otherwise a constant only.",
    "That critical value is larger than the normal one, which holds only if the series is in fact "
    "stationary, so a trend is accepted only if it is significant whichever hypothesis holds, and a false "
    "rejection of the unit root does not bring a false trend with it.",
    "If it does not reject, the mean of the series differenced once more is tested with a t-statistic "
    "whose standard error is heteroskedasticity and autocorrelation consistent (Newey-West, Bartlett "
    "kernel, int(4 (T/100)^(2/9)) lags) against the two-sided normal critical value at the significance "
    "level: a significant mean is a drift, which makes the levels trend, so the terms are a constant and "
    "a trend; otherwise a constant only.",
    "This is a simplified sequential strategy in the spirit of Dolado, Jenkinson and Sosvilla-Rivero "
    "(1990) and Elder and Kennedy (2001), not either procedure exactly: like both it starts from the "
    "regression with constant and trend and judges that regression's trend with Dickey and Fuller's "
    "(1981) distribution, but when the unit root is not rejected it looks for a drift in the mean of the "
    "differences instead of testing again with fewer deterministic terms.",
    "When the manifest fixes the deterministic terms, for all series or for one series, the rule is "
    "skipped and the fixed terms are used at every level; the decision rule's second vote with a constant "
    "and trend still applies when the fixed terms are a constant only.",
)

#: How the robustness grid is built and when an order is fragile, in plain sentences.
GRID_RULE: Final[tuple[str, ...]] = (
    "The robustness grid repeats the analysis for each lag criterion (AIC, BIC, t-stat) with each choice "
    "of deterministic terms (a constant only; a constant and trend), the terms fixed at every level, six "
    "combinations in all.",
    "For each combination it shows the order each of ADF, PP, DF-GLS and KPSS implies on its own: the "
    "number of differences needed before that test finds stationarity (rejects a unit root; for KPSS, "
    "does not reject stationarity), undetermined if it does not by the highest order tested or cannot "
    "be run; PP and KPSS search no lags, so they show the same order for every criterion.",
    "For each combination it also shows the order the decision rule gives with those terms and that criterion.",
    "The order is fragile when the decision rule's order in some combination differs from the reported "
    "order; the reason names every combination that changes it and the order it gives there.",
)

#: The tests that vote, in the order they are reported.
BATTERY: Final[tuple[str, ...]] = ("ADF", "PP", "DF-GLS", "KPSS")
#: Lag criteria and deterministic terms of the robustness grid, in the grid's order.
GRID_CRITERIA: Final[tuple[str, ...]] = ("aic", "bic", "t-stat")
GRID_TERMS: Final[tuple[Deterministic, ...]] = ("constant", "constant-trend")
#: Name of the combined procedure in the grid.
COMBINED: Final[str] = "combined"

_BREAK_TEST: Final[str] = "Zivot-Andrews"
_BREAK_LEVELS: Final[tuple[int, ...]] = (0, 1)
_TEST_RANK: Final[dict[str, int]] = {"ADF": 0, "PP": 1, "DF-GLS": 2, "KPSS": 3, _BREAK_TEST: 4}
_LAG_SEARCH: Final[frozenset[str]] = frozenset({"ADF", "DF-GLS", _BREAK_TEST})
_POLICIES: Final[tuple[str, ...]] = ("auto", "constant", "constant-trend")
_ORDINALS: Final[dict[int, str]] = {1: "first", 2: "second", 3: "third", 4: "fourth"}
_TERMS_CHOSEN: Final[dict[str, str]] = {"constant": "constant only", "constant-trend": "constant and trend"}
_GRID_TERMS_TEXT: Final[dict[str, str]] = {"constant": "a constant only", "constant-trend": "constant and trend"}

_STATIONARY: Final[str] = "stationary"
_NOT_STATIONARY: Final[str] = "not stationary"
_SPLIT: Final[str] = "split"

_Key = tuple[int, str, str, str | None]


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


def kpss_bandwidth(nobs: int) -> int:
    """The short KPSS bandwidth ``int(4 (T/100)^(1/4))`` used in the decision rule.

    References
    ----------
    Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null
    hypothesis of stationarity against the alternative of a unit root. *Journal of Econometrics*
    54, 159-178.

    Schwert, G. W. (1989). Tests for unit roots: a Monte Carlo investigation. *Journal of Business
    and Economic Statistics* 7(2), 147-159.
    """
    return int(4.0 * (nobs / 100.0) ** 0.25)


#: Two-sided critical values of the trend coefficient's t-statistic in the Dickey-Fuller regression
#: with constant and trend when the series is a random walk, by regression sample size (``math.inf``
#: is the simulation at T=1000). Simulated for reportgen (100,000 replications per size, 50,000 at
#: T=1000, numpy ``default_rng(20240601)``, no lagged differences); the 10% and 5% rows agree within
#: 0.01 with the one-sided 95% and 97.5% columns of Dickey and Fuller (1981), Table III, as recalled.
TREND_CRITICAL_VALUES: Final[dict[float, dict[float, float]]] = {
    0.10: {25: 2.85, 50: 2.82, 100: 2.79, 250: 2.78, 500: 2.78, math.inf: 2.79},
    0.05: {25: 3.25, 50: 3.18, 100: 3.14, 250: 3.11, 500: 3.11, math.inf: 3.11},
    0.01: {25: 4.07, 50: 3.90, 100: 3.80, 250: 3.74, 500: 3.72, math.inf: 3.71},
}


def trend_critical_value(nobs: int, significance: float) -> float:
    """Two-sided critical value of the trend's t-statistic under a unit root (Dickey-Fuller regression).

    Parameters
    ----------
    nobs : int
        Observations in the test regression; :data:`TREND_CRITICAL_VALUES` is interpolated linearly
        in ``1/nobs``, and its T=25 row is used below 25.
    significance : float
        0.01, 0.05 or 0.10.

    Returns
    -------
    float
        ``c`` with ``P(|t| > c) = significance`` for a random walk.

    References
    ----------
    Dickey, D. A. and Fuller, W. A. (1981). Likelihood ratio statistics for autoregressive time
    series with a unit root. *Econometrica* 49, 1057-1072.
    """
    table = next(
        (row for level, row in TREND_CRITICAL_VALUES.items() if math.isclose(level, significance, abs_tol=1e-12)),
        None,
    )
    if table is None:
        allowed = ", ".join(f"{level:g}" for level in sorted(TREND_CRITICAL_VALUES))
        raise ValueError(f"significance must be one of {allowed}; got {significance!r}")
    inverse = np.array([0.0 if math.isinf(size) else 1.0 / size for size in table])
    values = np.array(list(table.values()))
    order = np.argsort(inverse)
    return float(np.interp(1.0 / max(nobs, 25), inverse[order], values[order]))


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


# --- Wording -----------------------------------------------------------------------------------------


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


def _join(words: list[str], conjunction: str = "and") -> str:
    if len(words) <= 1:
        return "".join(words)
    return f"{', '.join(words[:-1])} {conjunction} {words[-1]}"


def _lags_phrase(result: TestResult) -> str:
    if result.test in ("PP", "KPSS"):
        return f"bandwidth {result.lags}"
    lags = f"{result.lags} lagged difference" + ("" if result.lags == 1 else "s")
    criterion = result.lag_criterion or "fixed"
    how = "fixed" if criterion == "fixed" else f"by {ADF_CRITERIA.get(criterion, criterion)}"
    return f"{lags} {how}"


def _finding(result: TestResult) -> str:
    """``ADF rejects a unit root (statistic -3.2, p = 0.021, 2 lagged differences by AIC)``."""
    verb = "rejects" if result.rejects else "does not reject"
    if result.test == "KPSS":
        kind = "level" if result.deterministic == "constant" else "trend"
        null = f"{kind} stationarity"
    else:
        null = "a unit root"
    return (
        f"{result.test} {verb} {null} (statistic {_statistic_text(result.statistic)}, {pvalue_text(result)}, "
        f"{_lags_phrase(result)})"
    )


def _short_finding(result: TestResult) -> str:
    """``ADF rejects a unit root (p = 0.021)``: for reasons."""
    verb = "rejects" if result.rejects else "does not reject"
    if result.test == "KPSS":
        null = ("level" if result.deterministic == "constant" else "trend") + " stationarity"
    else:
        null = "a unit root"
    return f"{result.test} {verb} {null} ({pvalue_text(result)})"


def _votes_for_stationarity(result: TestResult) -> bool:
    return (not result.rejects) if result.test == "KPSS" else result.rejects


# --- Votes and levels --------------------------------------------------------------------------------


@dataclasses.dataclass(frozen=True, slots=True)
class _Vote:
    """The four tests at one level with one set of terms and one lag criterion."""

    level: int
    deterministic: Deterministic
    results: tuple[TestResult, ...]  # in BATTERY order

    @property
    def agreeing(self) -> list[str]:
        return [result.test for result in self.results if _votes_for_stationarity(result)]

    @property
    def dissenting(self) -> list[str]:
        return [result.test for result in self.results if not _votes_for_stationarity(result)]

    @property
    def count(self) -> int:
        return len(self.agreeing)

    @property
    def outcome(self) -> str:
        return _outcome(self.count)

    def summary(self) -> str:
        """``ADF, PP and KPSS find stationarity, DF-GLS does not (3 of 4)``."""
        agreeing, dissenting = self.agreeing, self.dissenting
        if not dissenting:
            return "all four tests find stationarity"
        if not agreeing:
            return "no test finds stationarity"
        if len(agreeing) == 2:
            return f"the tests split 2-2: {_join(agreeing)} find stationarity, {_join(dissenting)} do not"
        verb_for = "finds" if len(agreeing) == 1 else "find"
        verb_against = "does not" if len(dissenting) == 1 else "do not"
        only = "only " if len(agreeing) == 1 else ""
        return (
            f"{only}{_join(agreeing)} {verb_for} stationarity, {_join(dissenting)} {verb_against} "
            f"({len(agreeing)} of 4)"
        )

    def details(self) -> str:
        """Every test's decision with its p-value, for reasons."""
        return ", ".join(_short_finding(result) for result in self.results)


def _outcome(count: int) -> str:
    if count >= 3:
        return _STATIONARY
    if count <= 1:
        return _NOT_STATIONARY
    return _SPLIT


@dataclasses.dataclass(frozen=True, slots=True)
class _Level:
    """One level's votes (chosen terms first) and its verdict before and after settling a split."""

    level: int
    votes: tuple[_Vote, ...]
    raw: str  # _STATIONARY, _NOT_STATIONARY or _SPLIT: the outcome of the smaller vote count
    verdict: str  # _STATIONARY or _NOT_STATIONARY (a split counts as not stationary)


class _Runner:
    """Runs each test once per (level, test, terms, criterion) and keeps every result or error."""

    def __init__(self, values: pd.Series, settings: StatsSettings) -> None:
        self.values = values
        self.settings = settings
        self._levels: dict[int, pd.Series] = {}
        self._results: dict[_Key, TestResult | ReportgenError] = {}

    def series(self, level: int) -> pd.Series:
        if level not in self._levels:
            self._levels[level] = difference(self.values, level)
        return self._levels[level]

    @staticmethod
    def key(level: int, test: str, deterministic: str, criterion: str | None) -> _Key:
        return (level, test, deterministic, criterion if test in _LAG_SEARCH else None)

    def run(self, level: int, test: str, deterministic: Deterministic, criterion: str) -> TestResult:
        key = self.key(level, test, deterministic, criterion)
        if key not in self._results:
            try:
                self._results[key] = self._compute(level, test, deterministic, criterion)
            except (InsufficientDataError, DataError) as error:
                self._results[key] = error
        outcome = self._results[key]
        if isinstance(outcome, ReportgenError):
            raise outcome
        return outcome

    def _compute(self, level: int, test: str, deterministic: Deterministic, criterion: str) -> TestResult:
        values = self.series(level)
        significance = self.settings.significance
        minimum = self.settings.min_observations
        if test == "ADF":
            return adf(
                values,
                level=level,
                deterministic=deterministic,
                lag_criterion=criterion,
                significance=significance,
                min_observations=minimum,
            )
        if test == "PP":
            return phillips_perron(
                values, level=level, deterministic=deterministic, significance=significance, min_observations=minimum
            )
        if test == "DF-GLS":
            return dfgls(
                values,
                level=level,
                deterministic=deterministic,
                lag_criterion=criterion,
                significance=significance,
                min_observations=minimum,
            )
        if test == "KPSS":
            bandwidth = kpss_bandwidth(len(values))
            result = kpss(
                values,
                level=level,
                deterministic=deterministic,
                significance=significance,
                lags=bandwidth,
                min_observations=minimum,
            )
            rule = (
                f"int(4 (T/100)^(1/4)) = {bandwidth} at T={len(values)} (the decision rule's short bandwidth), "
                "Bartlett weights"
            )
            return dataclasses.replace(result, lag_rule=rule, bandwidth_rule=rule)
        if test == _BREAK_TEST:
            return zivot_andrews(
                values,
                level=level,
                deterministic=deterministic,
                significance=significance,
                lag_criterion=criterion,
                min_observations=max(minimum, 30),
            )
        raise ValueError(f"unknown test {test!r}")

    def vote(self, level: int, deterministic: Deterministic, criterion: str) -> _Vote:
        return _Vote(
            level=level,
            deterministic=deterministic,
            results=tuple(self.run(level, test, deterministic, criterion) for test in BATTERY),
        )

    def level_of(self, error: ReportgenError, default: int) -> int:
        """The lowest level at which a test raised ``error``; ``default`` if no cached test did."""
        levels = [key[0] for key, outcome in self._results.items() if outcome is error]
        return min(levels, default=default)

    def results(self) -> dict[_Key, TestResult]:
        return {key: value for key, value in self._results.items() if isinstance(value, TestResult)}


@dataclasses.dataclass(frozen=True, slots=True)
class _Decision:
    order: int | None
    reason: str | None
    levels: tuple[_Level, ...]  # level 0 first
    keys: frozenset[_Key]  # the tests the decision used


def _level_votes(runner: _Runner, level: int, terms: Deterministic, criterion: str) -> tuple[_Vote, ...]:
    chosen = runner.vote(level, terms, criterion)
    if terms == "constant":
        return (chosen, runner.vote(level, "constant-trend", criterion))
    return (chosen,)


def _decide(runner: _Runner, terms: dict[int, Deterministic], criterion: str) -> _Decision:
    """The decision rule on cached tests; raises the first test's error at the lowest level."""
    top = max(terms)
    votes = {level: _level_votes(runner, level, terms[level], criterion) for level in range(top + 1)}
    keys = frozenset(
        runner.key(level, result.test, vote.deterministic, criterion)
        for level, level_votes in votes.items()
        for vote in level_votes
        for result in vote.results
    )

    levels: list[_Level] = []
    for level in range(top + 1):
        level_votes = votes[level]
        raw = min(level_votes, key=lambda vote: vote.count).outcome
        verdict = _STATIONARY if raw == _STATIONARY else _NOT_STATIONARY
        levels.append(_Level(level=level, votes=level_votes, raw=raw, verdict=verdict))

    top_level = levels[top]
    if top_level.verdict != _STATIONARY:
        decisive = min(top_level.votes, key=lambda vote: vote.count)
        if top == 0:
            opening = "not stationary in levels (the highest order tested is 0)"
        else:
            differences = f"{top} difference" + ("" if top == 1 else "s")
            opening = f"still not stationary after {differences} (the highest order tested)"
        reason = f"{opening}: {TERMS_TEXT[decisive.deterministic]}, {decisive.details()}"
        return _Decision(order=None, reason=reason, levels=tuple(levels), keys=keys)
    non_stationary = [item.level for item in levels if item.verdict != _STATIONARY]
    order = 0 if not non_stationary else max(non_stationary) + 1
    return _Decision(order=order, reason=None, levels=tuple(levels), keys=keys)


def _single_test_order(
    runner: _Runner, test: str, deterministic: Deterministic, criterion: str, top: int
) -> int | None:
    """Differences needed before ``test`` alone finds stationarity; None if never or infeasible."""
    for level in range(top + 1):
        try:
            result = runner.run(level, test, deterministic, criterion)
        except (InsufficientDataError, DataError):
            return None
        if _votes_for_stationarity(result):
            return level
    return None


# --- Deterministic terms -----------------------------------------------------------------------------


def _choose_terms(name: str, runner: _Runner, level: int, settings: StatsSettings) -> tuple[Deterministic, str]:
    """Apply the deterministic-terms rule at one level: the terms and the reason."""
    values = runner.series(level)
    label = _level_label(name, level)
    trend_adf = runner.run(level, "ADF", "constant-trend", settings.lag_criterion.lower())
    opening = f"{label}: ADF with constant and trend"
    if trend_adf.rejects:
        t_trend = adf_trend_t_statistic(values, lags=trend_adf.lags)
        critical = trend_critical_value(trend_adf.nobs, settings.significance)
        significant = abs(t_trend) > critical
        comparison = ">" if significant else "<="
        reason = (
            f"{opening} rejects a unit root ({pvalue_text(trend_adf)}) and its trend coefficient has "
            f"t = {_statistic_text(t_trend)} (|t| {comparison} {critical:.3g}, the two-sided critical value at "
            f"{_percent(settings.significance)} under a unit root, Dickey and Fuller 1981), so "
            + ("constant and trend (trend stationarity)." if significant else "constant only.")
        )
    else:
        critical = float(norm.ppf(1.0 - settings.significance / 2.0))
        mean, t_mean, bandwidth = mean_hac_t_statistic(np.diff(np.asarray(values, dtype=float)))
        significant = abs(t_mean) > critical
        comparison = ">" if significant else "<="
        reason = (
            f"{opening} does not reject a unit root ({pvalue_text(trend_adf)}); the "
            f"{_differences_text(name, level + 1)} have mean {mean:.3g} with HAC t = "
            f"{_statistic_text(t_mean)} (Newey-West, Bartlett kernel, {bandwidth} lags; |t| {comparison} "
            f"{critical:.3g}, the two-sided normal critical value at {_percent(settings.significance)}), so "
            + (
                "constant and trend (a unit root with drift, which makes the levels trend)."
                if significant
                else "constant only (no drift)."
            )
        )
    choice: Deterministic = "constant-trend" if significant else "constant"
    return choice, reason


# --- Trail sentences ---------------------------------------------------------------------------------


def _vote_sentence(name: str, vote: _Vote, significance: float, second: bool) -> str:
    terms = TERMS_TEXT[vote.deterministic]
    again = " (the second vote, which a constant only requires)" if second else ""
    findings = "; ".join(_finding(result) for result in vote.results)
    return (
        f"{_level_label(name, vote.level)}, tests at {_percent(significance)} {terms}{again}: {findings}; "
        f"{vote.summary()}."
    )


_PRESUMPTION: Final[str] = (
    "which the unit-root presumption settles (the conservative choice against spurious regression)"
)


def _level_sentence(name: str, item: _Level, not_stationary_above: int | None) -> str:
    """The level's verdict; ``not_stationary_above`` is the higher level that overrides it, if any."""
    label = _level_label(name, item.level)
    outcome = "stationary" if item.verdict == _STATIONARY else "not stationary"
    if len(item.votes) == 2:
        first, second = item.votes
        counts = (
            f"{first.count} of 4 votes with a constant only and {second.count} of 4 with constant and trend; "
            "the smaller count decides"
        )
    else:
        counts = f"{item.votes[0].count} of 4 votes"
    if item.raw == _SPLIT:
        sentence = f"{label}: {counts}; a 2-2 split, {_PRESUMPTION}: {outcome}."
    else:
        sentence = f"{label}: {counts}: {outcome}."
    if not_stationary_above is not None and item.verdict == _STATIONARY:
        sentence += (
            f" Not relied on: level {not_stationary_above} is not stationary, and a test for one unit root is "
            "unreliable when the series has more (Dickey and Pantula 1987)."
        )
    return sentence


def _break_sentence(name: str, result: TestResult, verdict: str | None) -> tuple[str, str | None]:
    """The trail sentence on a Zivot-Andrews run, and a note when it questions the order."""
    label = _level_label(name, result.level)
    verb = "rejects" if result.rejects else "does not reject"
    sentence = (
        f"{label}: Zivot-Andrews {ZA_MODEL_TEXT[result.deterministic]} {verb} a unit root at "
        f"{_percent(result.significance)} allowing one break (statistic {_statistic_text(result.statistic)}, "
        f"{pvalue_text(result)}, {_lags_phrase(result)}, last period before the break {result.break_date}); "
        "it does not vote"
    )
    note = None
    if result.rejects and verdict == _NOT_STATIONARY:
        note = (
            f"Zivot-Andrews rejects a unit root at level {result.level} once one break is allowed for (last "
            f"period before the break {result.break_date}), although the battery finds the level not "
            "stationary: if the break is real, the order may be overstated"
        )
        sentence += f"; {note}"
    return sentence + ".", note


# --- Grid ----------------------------------------------------------------------------------------------


def _order_text(order: int | None) -> str:
    return "undetermined" if order is None else str(order)


def _fragile_reason(cells: list[GridCell], reported: int | None) -> str | None:
    changed = [cell for cell in cells if cell.test == COMBINED and cell.order != reported]
    if not changed:
        return None
    groups: dict[tuple[str, int | None], list[str]] = {}
    for cell in changed:
        groups.setdefault((cell.deterministic, cell.order), []).append(ADF_CRITERIA[cell.lag_criterion])
    parts = [
        f"with {_GRID_TERMS_TEXT[terms]} and {_join(criteria, 'or')} lags the order is {_order_text(order)}, "
        f"not {_order_text(reported)}"
        for (terms, order), criteria in groups.items()
    ]
    return "; ".join(parts)


def _grid(runner: _Runner, top: int) -> list[GridCell]:
    cells: list[GridCell] = []
    for criterion in GRID_CRITERIA:
        for terms in GRID_TERMS:
            for test in BATTERY:
                order = _single_test_order(runner, test, terms, criterion, top)
                cells.append(GridCell(test=test, lag_criterion=criterion, deterministic=terms, order=order))
            try:
                combined = _decide(runner, dict.fromkeys(range(top + 1), terms), criterion).order
            except (InsufficientDataError, DataError):
                combined = None
            cells.append(GridCell(test=COMBINED, lag_criterion=criterion, deterministic=terms, order=combined))
    return cells


# --- The procedure -------------------------------------------------------------------------------------


def integration_order(
    name: str,
    values: pd.Series,
    settings: StatsSettings,
    deterministic_override: str | None = None,
    *,
    grid: bool = True,
    break_check: bool = True,
) -> OrderVerdict:
    """The order of integration of one series by reportgen's decision rule, with its grid and fan chart.

    The rules are the module docstring's, also available as :data:`DECISION_RULE`,
    :data:`DETERMINISTIC_RULE` and :data:`GRID_RULE`.

    Parameters
    ----------
    name : str
        Name of the series, used in the trail and to derive the fan chart's seed.
    values : pandas.Series
        The series as transformed, float, indexed by a ``PeriodIndex``, without missing values.
    settings : StatsSettings
        Significance, highest order, lag criterion, deterministic policy, minimum sample, seed and
        fan-chart replications.
    deterministic_override : {"constant", "constant-trend"}, optional
        Terms fixed for this series (a manifest entry's override); takes precedence over
        ``settings.deterministic``.
    grid : bool, default True
        Compute the robustness grid and the fragility flag. The order does not depend on it;
        switching it off only saves time (simulations).
    break_check : bool, default True
        Run the Zivot-Andrews test at levels 0 and 1. It does not vote, so the order does not
        depend on it either.

    Returns
    -------
    OrderVerdict
        The order (0, 1, 2, or None with a reason), the terms and their reason per level, every
        test run, the trail in plain sentences, the grid with the fragility flag and, for an order
        of 1 or more, a fan chart of calibrated random walks. ``notes`` holds every warning a
        library raised anywhere in the procedure (tests, grid, Zivot-Andrews, fan chart), as
        ``"Category: message"`` once each in order of appearance; none reaches the terminal.

    Raises
    ------
    ConstantSeriesError
        When the series is constant or varies only in its last significant digits
        (:func:`~reportgen.stats.checks.check_variation`), before any test is run.

    References
    ----------
    Dickey, D. A. and Pantula, S. G. (1987). Determining the order of differencing in
    autoregressive processes. *Journal of Business and Economic Statistics* 5, 455-461.

    Dickey, D. A. and Fuller, W. A. (1979). Distribution of the estimators for autoregressive time
    series with a unit root. *Journal of the American Statistical Association* 74, 427-431.

    Phillips, P. C. B. and Perron, P. (1988). Testing for a unit root in time series regression.
    *Biometrika* 75, 335-346.

    Elliott, G., Rothenberg, T. J. and Stock, J. H. (1996). Efficient tests for an autoregressive
    unit root. *Econometrica* 64, 813-836.

    Kwiatkowski, D., Phillips, P. C. B., Schmidt, P. and Shin, Y. (1992). Testing the null
    hypothesis of stationarity against the alternative of a unit root. *Journal of Econometrics*
    54, 159-178.

    Zivot, E. and Andrews, D. W. K. (1992). Further evidence on the great crash, the oil-price
    shock, and the unit-root hypothesis. *Journal of Business and Economic Statistics* 10,
    251-270.

    Dolado, J. J., Jenkinson, T. and Sosvilla-Rivero, S. (1990). Cointegration and unit roots.
    *Journal of Economic Surveys* 4, 249-273.

    Elder, J. and Kennedy, P. E. (2001). Testing for unit roots: what should students be taught?
    *Journal of Economic Education* 32, 137-146.

    Granger, C. W. J. and Newbold, P. (1974). Spurious regressions in econometrics. *Journal of
    Econometrics* 2, 111-120.
    """
    check_variation(name, values)
    with collecting_warnings() as captured:
        verdict = _integration_order(
            name, values, settings, deterministic_override, grid=grid, break_check=break_check
        )
    # The tests' own warnings are already in the notes with the test named; the others join them.
    stated = " ".join(verdict.notes)
    extra = [text for text in captured if text not in stated]
    if not extra:
        return verdict
    return dataclasses.replace(verdict, notes=tuple(dict.fromkeys([*verdict.notes, *extra])))


def _integration_order(
    name: str,
    values: pd.Series,
    settings: StatsSettings,
    deterministic_override: str | None,
    *,
    grid: bool,
    break_check: bool,
) -> OrderVerdict:
    """The body of :func:`integration_order`, run with library warnings recorded."""
    if deterministic_override is not None and deterministic_override not in ("constant", "constant-trend"):
        raise ValueError(
            f"deterministic_override must be 'constant' or 'constant-trend'; got {deterministic_override!r}"
        )
    if settings.deterministic not in _POLICIES:
        raise ValueError(
            f"settings.deterministic must be one of {', '.join(_POLICIES)}; got {settings.deterministic!r}"
        )
    criterion = settings.lag_criterion.lower()
    if criterion not in GRID_CRITERIA:
        raise ValueError(f"settings.lag_criterion must be one of aic, bic, t-stat; got {settings.lag_criterion!r}")
    if settings.max_order < 0:
        raise ValueError(f"settings.max_order must be 0 or more; got {settings.max_order}")
    policy = deterministic_override or settings.deterministic
    policy_source = "the series' manifest entry" if deterministic_override else "the manifest's settings"
    top = settings.max_order
    runner = _Runner(values, settings)

    chosen: dict[int, Deterministic] = {}
    reasons: dict[int, str] = {}
    trail: list[str] = []

    def finish(
        order: int | None,
        reason: str | None,
        decision_keys: frozenset[_Key] = frozenset(),
        extra_notes: tuple[str, ...] = (),
        cells: tuple[GridCell, ...] = (),
    ) -> OrderVerdict:
        fragile_reason = _fragile_reason(list(cells), order) if cells else None
        if cells:
            grid_intro = (
                "Robustness grid (lag criterion AIC, BIC or t-stat, with a constant only or constant and trend "
                "at every level)"
            )
            if fragile_reason is None:
                trail.append(f"{grid_intro}: the decision rule gives order {_order_text(order)} in every combination.")
            else:
                trail.append(f"{grid_intro}: the order is fragile: {fragile_reason}.")
        trail.append(f"Order {order}." if order is not None else f"Order not determined: {reason}.")
        tests = _collect_tests(runner, decision_keys, chosen)
        notes = list(extra_notes)
        for result in tests:
            if result.auxiliary:
                continue
            for note in result.notes:
                text = f"{result.test} {TERMS_TEXT[result.deterministic]} at level {result.level}: {note}"
                if text not in notes:
                    notes.append(text)
        fan = None
        if order is not None and order >= 1:
            fan = random_walk_fan(
                values,
                seed=series_seed(settings.seed, name),
                replications=settings.fan_replications,
                name=name,
                order=order,
            )
        return OrderVerdict(
            series=name,
            order=order,
            deterministic=dict(sorted(chosen.items())),
            deterministic_reasons=dict(sorted(reasons.items())),
            tests=tests,
            trail=tuple(trail),
            reason=reason,
            nobs=len(values),
            notes=tuple(notes),
            grid=cells,
            fragile=fragile_reason is not None,
            fragile_reason=fragile_reason,
            fan_chart=fan,
        )

    count = len(values) - top
    if count < settings.min_observations:
        differences = "difference" if top == 1 else "differences"
        reason = (
            f"too few observations: the series has {len(values)}, {max(count, 0)} after {top} {differences} "
            f"(the highest order tested); at least {settings.min_observations} are needed at every level"
        )
        trail.append(f"{_level_label(name, top)}: {reason}; no test run.")
        return finish(None, reason)

    # Terms per level, lowest level first, so that an error names the lowest level it occurs at.
    current = 0
    try:
        for current in range(top + 1):
            if policy == "auto":
                terms, reason = _choose_terms(name, runner, current, settings)
            else:
                terms = "constant-trend" if policy == "constant-trend" else "constant"
                reason = (
                    f"{_level_label(name, current)}: {_TERMS_CHOSEN[terms]}, fixed by {policy_source} "
                    f"(deterministic: {policy}); the rule that chooses the terms was skipped."
                )
            chosen[current] = terms
            reasons[current] = reason
        decision = _decide(runner, chosen, criterion)
    except (InsufficientDataError, DataError) as error:
        failed = runner.level_of(error, default=current)
        for level in sorted(reasons, reverse=True):
            trail.append(reasons[level])
        trail.append(f"{_level_label(name, failed)}: {error.message}; no decision possible.")
        return finish(None, error.message, decision_keys=frozenset(runner.results()))

    break_keys: set[_Key] = set()
    break_notes: list[str] = []
    break_sentences: dict[int, str] = {}
    if break_check:
        for level in _BREAK_LEVELS:
            if level > top:
                continue
            try:
                result = runner.run(level, _BREAK_TEST, chosen[level], criterion)
            except (InsufficientDataError, DataError) as error:
                break_sentences[level] = f"{_level_label(name, level)}: Zivot-Andrews not run: {error.message}."
                continue
            break_keys.add(runner.key(level, _BREAK_TEST, chosen[level], criterion))
            sentence, note = _break_sentence(name, result, decision.levels[level].verdict)
            break_sentences[level] = sentence
            if note is not None:
                break_notes.append(note)

    highest_not_stationary: int | None = None
    for item in reversed(decision.levels):
        trail.append(reasons[item.level])
        for position, vote in enumerate(item.votes):
            trail.append(_vote_sentence(name, vote, settings.significance, second=position == 1))
        trail.append(_level_sentence(name, item, highest_not_stationary))
        if item.verdict != _STATIONARY and highest_not_stationary is None:
            highest_not_stationary = item.level
        if item.level in break_sentences:
            trail.append(break_sentences[item.level])

    cells = tuple(_grid(runner, top)) if grid else ()
    return finish(
        decision.order,
        decision.reason,
        decision_keys=decision.keys | frozenset(break_keys),
        extra_notes=tuple(break_notes),
        cells=cells,
    )


def _collect_tests(
    runner: _Runner, decision_keys: frozenset[_Key], chosen: dict[int, Deterministic]
) -> tuple[TestResult, ...]:
    """Every test run, auxiliary ones marked, in the module docstring's stable order."""
    entries = []
    for key, result in runner.results().items():
        level, test, deterministic, criterion = key
        auxiliary = key not in decision_keys
        terms_rank = 0 if chosen.get(level) == deterministic else 1
        criterion_rank = GRID_CRITERIA.index(criterion) if criterion in GRID_CRITERIA else -1
        rank = (level, auxiliary, terms_rank, _TEST_RANK[test], criterion_rank)
        entries.append((rank, dataclasses.replace(result, auxiliary=auxiliary) if auxiliary else result))
    entries.sort(key=lambda entry: entry[0])
    return tuple(result for _, result in entries)
