"""Johansen's reduced-rank tests for the cointegrating rank of a VAR, in all five deterministic cases.

The VAR in error-correction form is

    Δy_t = Π y_{t-1} + Γ_1 Δy_{t-1} + ... + Γ_k Δy_{t-k} + deterministic terms + ε_t,

with k lagged differences (a VAR of order k + 1 in levels). The rank of Π is the number of
cointegrating relations. Following Johansen (1988, 1991), Δy_t and the level term are each
regressed on the unrestricted regressors (lagged differences, unrestricted deterministic terms,
centred seasonal dummies); the squared canonical correlations of the two sets of residuals are the
eigenvalues λ_1 >= ... >= λ_n of S11^-1 S10 S00^-1 S01, and

    trace(r)          = -T Σ_{i=r+1}^{n} log(1 - λ_i)       (H0: rank <= r against rank n),
    max-eigenvalue(r) = -T log(1 - λ_{r+1})                 (H0: rank = r against rank r + 1).

The five cases differ in where the constant and trend enter (Johansen 1995, section 5.7):

1. no deterministic terms;
2. a constant restricted to the cointegrating space (it enters the level term, not the short run);
3. an unrestricted constant (linear trends in the levels, none in the cointegrating relations);
4. a linear trend restricted to the cointegrating space, with an unrestricted constant;
5. an unrestricted constant and linear trend (quadratic trends in the levels).

statsmodels' ``coint_johansen`` covers cases 1 and 3 exactly; its ``det_order=1`` detrends the data
first and is not case 5 (statsmodels issue #6168), and it has neither restricted terms nor seasonal
dummies, so the regression is computed here.

Critical values: MacKinnon, Haug and Michelis (1999) for cases 1, 3 and 5 (90%, 95%, 99%;
n - r = 1..12), copied from the table statsmodels ships; for cases 2 and 4, reportgen's own seeded
simulation (tools/johansen_restricted_cases.py; 90%, 95%, 99%; n - r = 1..6).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Final, Literal

import numpy as np
import pandas as pd

from reportgen.errors import CollinearRegressorsError, SampleTooShortError, StatsInputError
from reportgen.periods import index_labels
from reportgen.stats.capture import warning_texts
from reportgen.stats.types import JohansenResult, RankTest
from reportgen.vocabulary import SIGNIFICANCE_LEVELS

__all__ = [
    "JOHANSEN_CASES",
    "JOHANSEN_MIN_EXTRA_OBSERVATIONS",
    "RankStatistic",
    "johansen",
    "johansen_critical_values",
    "johansen_critical_values_source",
    "johansen_default_max_order",
]

#: Which statistic a critical value is for.
RankStatistic = Literal["trace", "max-eigenvalue"]

#: The five deterministic cases, in the usual numbering (Johansen 1995, section 5.7).
JOHANSEN_CASES: Final[dict[int, str]] = {
    1: "case 1: no deterministic terms",
    2: "case 2: constant restricted to the cointegrating space, no linear trend in the data",
    3: "case 3: unrestricted constant (linear trends in the data, none in the cointegrating relations)",
    4: "case 4: linear trend restricted to the cointegrating space, unrestricted constant",
    5: "case 5: unrestricted constant and linear trend (quadratic trends in the data)",
}

#: The reduced-rank regression needs at least this many observations more than it has parameters
#: per equation.
JOHANSEN_MIN_EXTRA_OBSERVATIONS: Final[int] = 10

_LEVELS: Final[tuple[str, ...]] = ("90%", "95%", "99%")
_Row = tuple[float, float, float]

# MacKinnon, Haug and Michelis (1999), asymptotic quantiles (90%, 95%, 99%) by n - r = 1..12,
# computed with MacKinnon's johdist program. Copied from statsmodels tsa/coint_tables.py (arrays
# tjcp0/ejcp0 for det_order -1 = case 1, tjcp1/ejcp1 for det_order 0 = case 3, tjcp2/ejcp2 for
# det_order 1 = case 5); tests/stats/test_johansen.py checks the copy against that file.
_MHM_TRACE: Final[dict[int, tuple[_Row, ...]]] = {
    1: (
        (2.9762, 4.1296, 6.9406), (10.4741, 12.3212, 16.364), (21.7781, 24.2761, 29.5147),
        (37.0339, 40.1749, 46.5716), (56.2839, 60.0627, 67.6367), (79.5329, 83.9383, 92.7136),
        (106.7351, 111.7797, 121.7375), (137.9954, 143.6691, 154.7977),
        (173.2292, 179.5199, 191.8122), (212.4721, 219.4051, 232.8291),
        (255.6732, 263.2603, 277.9962), (302.9054, 311.1288, 326.9716),
    ),
    3: (
        (2.7055, 3.8415, 6.6349), (13.4294, 15.4943, 19.9349), (27.0669, 29.7961, 35.4628),
        (44.4929, 47.8545, 54.6815), (65.8202, 69.8189, 77.8202), (91.109, 95.7542, 104.9637),
        (120.3673, 125.6185, 135.9825), (153.6341, 159.529, 171.0905),
        (190.8714, 197.3772, 210.0366), (232.103, 239.2468, 253.2526),
        (277.374, 285.1402, 300.2821), (326.5354, 334.9795, 351.215),
    ),
    5: (
        (2.7055, 3.8415, 6.6349), (16.1619, 18.3985, 23.1485), (32.0645, 35.0116, 41.0815),
        (51.6492, 55.2459, 62.5202), (75.1027, 79.3422, 87.7748), (102.4674, 107.3429, 116.9829),
        (133.7852, 139.278, 150.0778), (169.0618, 175.1584, 187.1891),
        (208.3582, 215.1268, 228.2226), (251.6293, 259.0267, 273.3838),
        (298.8836, 306.8988, 322.4264), (350.1125, 358.719, 375.3203),
    ),
}
_MHM_MAX_EIGENVALUE: Final[dict[int, tuple[_Row, ...]]] = {
    1: (
        (2.9762, 4.1296, 6.9406), (9.4748, 11.2246, 15.0923), (15.7175, 17.7961, 22.2519),
        (21.837, 24.1592, 29.0609), (27.916, 30.4428, 35.7359), (33.9271, 36.6301, 42.2333),
        (39.9085, 42.7679, 48.6606), (45.893, 48.8795, 55.0335), (51.8528, 54.9629, 61.3449),
        (57.7954, 61.0404, 67.6415), (63.7248, 67.0756, 73.8856), (69.6513, 73.0946, 80.0937),
    ),
    3: (
        (2.7055, 3.8415, 6.6349), (12.2971, 14.2639, 18.52), (18.8928, 21.1314, 25.865),
        (25.1236, 27.5858, 32.7172), (31.2379, 33.8777, 39.3693), (37.2786, 40.0763, 45.8662),
        (43.2947, 46.2299, 52.3069), (49.2855, 52.3622, 58.6634), (55.2412, 58.4332, 64.996),
        (61.2041, 64.504, 71.2525), (67.1307, 70.5392, 77.4877), (73.0563, 76.5734, 83.7105),
    ),
    5: (
        (2.7055, 3.8415, 6.6349), (15.0006, 17.1481, 21.7465), (21.8731, 24.2522, 29.2631),
        (28.2398, 30.8151, 36.193), (34.4202, 37.1646, 42.8612), (40.5244, 43.4183, 49.4095),
        (46.5583, 49.5875, 55.8171), (52.5858, 55.7302, 62.1741), (58.5316, 61.8051, 68.503),
        (64.5292, 67.904, 74.7434), (70.463, 73.9355, 81.0678), (76.4081, 79.9878, 87.2395),
    ),
}

# Cases 2 (constant restricted to the cointegrating relation) and 4 (trend restricted to it):
# reportgen's own simulation, tools/johansen_restricted_cases.py (20,000 replications of n - r
# driftless Gaussian random walks of length T = 1000, no lagged differences, seed 20261201),
# quantiles (90%, 95%, 99%) by n - r = 1..6. The 95% trace values agree with MacKinnon, Haug and
# Michelis (1999) for these cases within 0.15 (tests/stats/test_johansen.py).
_SIMULATED_TRACE: Final[dict[int, tuple[_Row, ...]]] = {
    2: (
        (7.48, 9.05, 12.5), (17.98, 20.19, 24.99), (32.42, 35.29, 41.1), (50.59, 54.16, 61.16),
        (72.93, 76.97, 84.96), (99.44, 104.15, 113.74),
    ),
    4: (
        (10.59, 12.49, 16.34), (23.31, 25.8, 30.87), (39.75, 42.94, 49.06), (60.33, 64.2, 71.9),
        (84.49, 89.01, 97.98), (112.69, 118.22, 127.7),
    ),
}
_SIMULATED_MAX_EIGENVALUE: Final[dict[int, tuple[_Row, ...]]] = {
    2: (
        (7.48, 9.05, 12.5), (13.95, 15.91, 20.21), (20.17, 22.33, 26.97), (26.21, 28.66, 33.91),
        (32.3, 34.89, 40.25), (38.25, 41.02, 46.98),
    ),
    4: (
        (10.59, 12.49, 16.34), (17.23, 19.26, 23.76), (23.56, 25.89, 30.46), (29.69, 32.18, 37.7),
        (35.73, 38.41, 44.0), (41.81, 44.65, 50.91),
    ),
}

_TABLES: Final[dict[str, dict[int, tuple[_Row, ...]]]] = {
    "trace": {**_MHM_TRACE, **_SIMULATED_TRACE},
    "max-eigenvalue": {**_MHM_MAX_EIGENVALUE, **_SIMULATED_MAX_EIGENVALUE},
}
_MHM_SOURCE: Final[str] = (
    "MacKinnon, Haug and Michelis (1999), asymptotic quantiles (johdist), as shipped in statsmodels "
    "tsa/coint_tables.py"
)
_SIMULATED_SOURCE: Final[str] = (
    "reportgen's own simulation for case {case} (20,000 replications, T=1000, seed 20261201; "
    "tools/johansen_restricted_cases.py), within 0.15 of MacKinnon, Haug and Michelis (1999) at 95%"
)

# Deterministic columns of each case: (restricted to the level term, unrestricted).
_CASE_TERMS: Final[dict[int, tuple[tuple[str, ...], tuple[str, ...]]]] = {
    1: ((), ()),
    2: (("constant",), ()),
    3: ((), ("constant",)),
    4: (("trend",), ("constant",)),
    5: ((), ("constant", "trend")),
}
_SEASONS: Final[dict[str, int]] = {"Q": 4, "M": 12}


def _check_case(case: int) -> None:
    if case not in JOHANSEN_CASES:
        raise ValueError(f"case must be one of {tuple(JOHANSEN_CASES)}, not {case!r}")


def johansen_critical_values(case: int, dimension: int, statistic: RankStatistic) -> dict[str, float]:
    """Asymptotic critical values of a Johansen rank statistic.

    Parameters
    ----------
    case : {1, 2, 3, 4, 5}
        Deterministic case (see :data:`JOHANSEN_CASES`).
    dimension : int
        n - r, the number of common stochastic trends under the null hypothesis: 1 to 12 for
        cases 1, 3, 5; 1 to 6 for cases 2 and 4.
    statistic : {"trace", "max-eigenvalue"}
        Which statistic.

    Returns
    -------
    dict of str to float
        Keys ``"90%"``, ``"95%"``, ``"99%"`` (the quantiles; the test at 5% rejects above the
        ``"95%"`` value).

    References
    ----------
    MacKinnon, J. G., Haug, A. A. and Michelis, L. (1999). Numerical Distribution Functions of
    Likelihood Ratio Tests for Cointegration. Journal of Applied Econometrics, 14(5), 563-577.

    Osterwald-Lenum, M. (1992). A Note with Quantiles of the Asymptotic Distribution of the
    Maximum Likelihood Cointegration Rank Test Statistics. Oxford Bulletin of Economics and
    Statistics, 54(3), 461-472.
    """
    _check_case(case)
    if statistic not in _TABLES:
        raise ValueError(f"statistic must be 'trace' or 'max-eigenvalue', not {statistic!r}")
    rows = _TABLES[statistic][case]
    if not 1 <= dimension <= len(rows):
        raise ValueError(
            f"Johansen critical values for case {case} cover n - r = 1 to {len(rows)}, not {dimension}"
        )
    return dict(zip(_LEVELS, rows[dimension - 1], strict=True))


def johansen_critical_values_source(case: int) -> str:
    """Where the critical values of a case come from, for the methods appendix."""
    _check_case(case)
    if case in _SIMULATED_TRACE:
        return _SIMULATED_SOURCE.format(case=case)
    return _MHM_SOURCE


def johansen_default_max_order(nobs: int, n_variables: int) -> int:
    """Largest VAR order searched by default: ``min(8, T // (4 n))``, at least 1.

    Notes
    -----
    A rule of thumb (common practice): each equation of a VAR of order p has n p lag
    coefficients, so the cap keeps at least four observations per lag coefficient and never
    searches beyond two years of quarterly lags.
    """
    return max(1, min(8, nobs // (4 * n_variables)))


def _seasonal_dummies(index: pd.Index) -> tuple[np.ndarray, int]:
    """Centred seasonal dummies (1 - 1/s in the season, -1/s elsewhere) for all but the last season."""
    if not isinstance(index, pd.PeriodIndex):
        raise ValueError("seasonal dummies need data indexed by a quarterly or monthly PeriodIndex")
    code = index.freqstr[:1].upper()
    if code not in _SEASONS:
        raise ValueError(
            f"seasonal dummies need quarterly or monthly data, not frequency {index.freqstr!r}"
        )
    seasons = _SEASONS[code]
    position = np.asarray(index.quarter if code == "Q" else index.month) - 1
    dummies = np.column_stack([(position == s) - 1.0 / seasons for s in range(seasons - 1)])
    return dummies, seasons


def _deterministic_columns(names: Sequence[str], time: np.ndarray) -> list[np.ndarray]:
    return [np.ones_like(time) if name == "constant" else time for name in names]


def _residuals(values: np.ndarray, regressors: np.ndarray) -> np.ndarray:
    if regressors.shape[1] == 0:
        return values
    norms = np.linalg.norm(regressors, axis=0)
    scaled = regressors / np.where(norms > 0.0, norms, 1.0)  # the residuals do not depend on column scales
    coefficients, *_ = np.linalg.lstsq(scaled, values, rcond=None)
    return values - scaled @ coefficients


def _full_column_rank(matrix: np.ndarray) -> bool:
    if matrix.shape[1] == 0:
        return True
    norms = np.linalg.norm(matrix, axis=0)
    if np.any(norms == 0):
        return False
    return int(np.linalg.matrix_rank(matrix / norms)) == matrix.shape[1]


def _var_aic(levels: np.ndarray, order: int, largest: int, deterministic: np.ndarray) -> float:
    """AIC of a VAR(order) in levels fitted by OLS on the common sample of the largest order."""
    nobs, n = levels.shape
    target = levels[largest:]
    lagged = [levels[largest - lag : nobs - lag] for lag in range(1, order + 1)]
    design = np.column_stack([deterministic[largest:], *lagged])
    residuals = _residuals(target, design)
    covariance = residuals.T @ residuals / target.shape[0]
    sign, log_determinant = np.linalg.slogdet(covariance)
    if sign <= 0:
        return math.inf
    return float(log_determinant + 2.0 * n * design.shape[1] / target.shape[0])


def _collinear_variable(levels: np.ndarray, names: Sequence[str]) -> tuple[str, tuple[str, ...]] | None:
    design = np.column_stack([np.ones(levels.shape[0]), levels])
    labels = ["const", *names]
    norms = np.linalg.norm(design, axis=0)
    scaled = design / np.where(norms > 0, norms, 1.0)
    for column in range(1, design.shape[1]):
        if norms[column] == 0 or np.linalg.matrix_rank(scaled[:, : column + 1]) <= column:
            coefficients, *_ = np.linalg.lstsq(scaled[:, :column], scaled[:, column], rcond=None)
            used = tuple(
                label for label, value in zip(labels[:column], coefficients, strict=True) if abs(value) > 1e-8
            )
            return labels[column], used
    return None


def johansen(
    data: pd.DataFrame,
    variables: Sequence[str],
    *,
    significance: float,
    case: int = 3,
    lags: int | None = None,
    max_lags: int | None = None,
    seasonal: bool = False,
) -> JohansenResult:
    """Johansen's trace and maximum-eigenvalue tests of the cointegrating rank.

    Parameters
    ----------
    data : pandas.DataFrame
        Float columns named by series, indexed by a ``PeriodIndex``, aligned, no missing values.
    variables : sequence of str
        The variables of the VAR (2 to 12; 2 to 11 for cases 2 and 4), each once.
    significance : float
        Significance level of every test in the sequence, one of 0.01, 0.05, 0.10 (compared with
        the 99%, 95% and 90% quantiles).
    case : {1, 2, 3, 4, 5}
        Deterministic case (see :data:`JOHANSEN_CASES`); 3, an unrestricted constant, by default.
    lags : int, optional
        Number of lagged differences k in the error-correction form (the VAR in levels has order
        k + 1). By default chosen by AIC: the VAR in levels, with the case's constant and trend
        unrestricted (and the seasonal dummies when asked for), is fitted for orders 1 to
        ``max_lags + 1`` on the common sample of the largest, and k is the chosen order minus one.
    max_lags : int, optional
        Largest number of lagged differences searched; by default
        ``johansen_default_max_order(T, n) - 1``, that is a VAR order of ``min(8, T // (4 n))``.
    seasonal : bool
        Add centred seasonal dummies (three for quarterly, eleven for monthly data), unrestricted.

    Returns
    -------
    JohansenResult
        ``nobs`` is the number of observations T of the reduced-rank regression (the sample minus
        ``lags + 1``); ``trace`` and ``max_eigenvalue`` hold one :class:`RankTest` for each
        r = 0..n-1; ``rank`` is chosen by the sequential trace procedure.

    Raises
    ------
    SampleTooShortError
        When the regression would have fewer than 10 observations more than parameters per
        equation, or the system has more variables than the critical-value tables cover.
    StatsInputError
        When a variable appears twice, or columns are missing or not finite.
    CollinearRegressorsError
        When a variable is constant or an exact linear combination of the others, or the
        regressors of the reduced-rank regression are collinear.

    Notes
    -----
    The rank is the first r, counting from 0, whose null hypothesis "rank <= r" the trace test
    does not reject at ``significance``; if every null is rejected the rank is n (the VAR is
    stationary in levels), which a note points out. Seasonal dummies are centred so that they
    do not shift the mean of the data (Johansen 1995, section 5.7): adding them leaves the
    restricted constant of case 2 the only constant. Both the trace and the maximum-eigenvalue
    sequences are reported; only the trace sequence decides.

    References
    ----------
    Akaike, H. (1974). A New Look at the Statistical Model Identification. IEEE Transactions on
    Automatic Control, 19(6), 716-723.

    Johansen, S. (1988). Statistical Analysis of Cointegration Vectors. Journal of Economic
    Dynamics and Control, 12(2-3), 231-254.

    Johansen, S. (1991). Estimation and Hypothesis Testing of Cointegration Vectors in Gaussian
    Vector Autoregressive Models. Econometrica, 59(6), 1551-1580.

    Johansen, S. (1995). Likelihood-Based Inference in Cointegrated Vector Autoregressive Models.
    Oxford University Press.

    Johansen, S. and Juselius, K. (1990). Maximum Likelihood Estimation and Inference on
    Cointegration, with Applications to the Demand for Money. Oxford Bulletin of Economics and
    Statistics, 52(2), 169-210.

    MacKinnon, J. G., Haug, A. A. and Michelis, L. (1999). Numerical Distribution Functions of
    Likelihood Ratio Tests for Cointegration. Journal of Applied Econometrics, 14(5), 563-577.

    Osterwald-Lenum, M. (1992). A Note with Quantiles of the Asymptotic Distribution of the
    Maximum Likelihood Cointegration Rank Test Statistics. Oxford Bulletin of Economics and
    Statistics, 54(3), 461-472.
    """
    _check_case(case)
    if not any(math.isclose(significance, level) for level in SIGNIFICANCE_LEVELS):
        raise ValueError(f"significance must be one of {SIGNIFICANCE_LEVELS}, not {significance}")
    variables = tuple(variables)
    n = len(variables)
    largest_dimension = len(_TABLES["trace"][case])
    if n < 2:
        raise ValueError(f"the Johansen test takes at least 2 variables, not {n}")
    if n > largest_dimension:
        raise SampleTooShortError(
            problem=(
                f"reportgen's critical values for Johansen case {case} cover at most {largest_dimension} "
                f"variables; the system has {n}"
            ),
            hint=f"test at most {largest_dimension} variables in one system",
        )
    if len(set(variables)) != n:
        raise StatsInputError(problem=f"Johansen test: a variable appears twice in {', '.join(variables)}")
    missing = [name for name in variables if name not in data.columns]
    if missing:
        raise StatsInputError(problem=f"Johansen test: no column named {', '.join(missing)} in the data")
    system = ", ".join(variables)
    frame = data.loc[:, list(variables)].astype(float)
    levels = frame.to_numpy()
    if not np.all(np.isfinite(levels)):
        raise StatsInputError(problem=f"Johansen test of {system}: the data contain missing or infinite values")
    collinear = _collinear_variable(levels, variables)
    if collinear is not None:
        column, used = collinear
        depends = f"an exact linear combination of {', '.join(used)}" if used else "zero"
        if used == ("const",):
            depends = "constant"
        raise CollinearRegressorsError(
            problem=f"Johansen test of {system}: the variables are perfectly collinear: {column} is {depends}"
        )
    # Each variable divided by its largest magnitude: the canonical correlations, and so every
    # statistic, do not change when a variable is rescaled, and the regressions stay well scaled.
    levels = levels / np.max(np.abs(levels), axis=0)

    nobs = levels.shape[0]
    restricted_terms, unrestricted_terms = _CASE_TERMS[case]
    seasonal_columns = np.empty((nobs, 0))
    seasons = 0
    if seasonal:
        seasonal_columns, seasons = _seasonal_dummies(frame.index)
    time = np.arange(1.0, nobs + 1.0)
    n_restricted = len(restricted_terms)
    n_unrestricted = len(unrestricted_terms) + seasonal_columns.shape[1]

    def needed(lag_count: int) -> int:
        parameters = n + n_restricted + n * lag_count + n_unrestricted
        return parameters + JOHANSEN_MIN_EXTRA_OBSERVATIONS + lag_count + 1

    def too_short(lag_count: int, searching: bool) -> SampleTooShortError:
        parameters = n + n_restricted + n * lag_count + n_unrestricted
        what = "searching up to" if searching else "with"
        return SampleTooShortError(
            problem=(
                f"the Johansen test of {system} in case {case} {what} {lag_count} lagged differences needs "
                f"at least {needed(lag_count)} observations ({JOHANSEN_MIN_EXTRA_OBSERVATIONS} more than the "
                f"{parameters} parameters per equation, plus {lag_count + 1} lost to differencing and lags); "
                f"the sample has {nobs}"
            )
        )

    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        if lags is not None:
            if lags < 0:
                raise ValueError(f"lags must be non-negative, not {lags}")
            if nobs < needed(lags):
                raise too_short(lags, searching=False)
            chosen = lags
            lag_rule = f"fixed at {lags}"
        else:
            if max_lags is not None:
                if max_lags < 0:
                    raise ValueError(f"max_lags must be non-negative, not {max_lags}")
                if nobs < needed(max_lags):
                    raise too_short(max_lags, searching=True)
                largest_order = max_lags + 1
                cap_text = "set by the caller"
            else:
                rule_order = johansen_default_max_order(nobs, n)
                largest_order = rule_order
                while largest_order > 1 and nobs < needed(largest_order - 1):
                    largest_order -= 1
                if nobs < needed(0):
                    raise too_short(0, searching=False)
                cap_text = f"min(8, T/(4n)) at T={nobs}, n={n}"
                if largest_order < rule_order:
                    cap_text += f", reduced from {rule_order} to fit the sample"
            var_terms = [term for term in ("constant", "trend") if term in restricted_terms + unrestricted_terms]
            deterministic = np.column_stack(
                [*_deterministic_columns(var_terms, time), seasonal_columns]
            ) if var_terms or seasons else np.empty((nobs, 0))
            criteria = [
                _var_aic(levels, order, largest_order, deterministic) for order in range(1, largest_order + 1)
            ]
            chosen = int(np.argmin(criteria))  # order - 1
            terms_text = " and ".join(var_terms) if var_terms else "no deterministic terms"
            if seasons:
                terms_text += f" and {seasons - 1} centred seasonal dummies"
            lag_rule = (
                f"AIC of the VAR in levels (with {terms_text}) over orders 1 to {largest_order} "
                f"({cap_text}) on the common sample of {nobs - largest_order}; order {chosen + 1} chosen, "
                f"so {chosen} lagged differences"
            )

        # The reduced-rank regression on observations lags + 1 .. T - 1 (0-based) of the levels.
        differences = np.diff(levels, axis=0)
        start = chosen  # first usable row of the differences
        z0 = differences[start:]
        effective = z0.shape[0]
        rows = slice(start + 1, nobs)  # rows of the levels that the differences z0 end at
        level_term = [levels[start : nobs - 1]]
        level_term.extend(_deterministic_columns(restricted_terms, time[rows] - 1.0))
        z1 = np.column_stack(level_term)
        short_run = [differences[start - lag : differences.shape[0] - lag] for lag in range(1, chosen + 1)]
        short_run.extend(_deterministic_columns(unrestricted_terms, time[rows]))
        if seasons:
            short_run.append(seasonal_columns[rows])
        z2 = np.column_stack(short_run) if short_run else np.empty((effective, 0))
        if not _full_column_rank(z2) or not _full_column_rank(np.column_stack([z1, z2])):
            raise CollinearRegressorsError(
                problem=(
                    f"Johansen test of {system}: the regressors of the reduced-rank regression are "
                    "perfectly collinear (lagged differences, level terms and deterministic terms)"
                )
            )
        r0 = _residuals(z0, z2)
        r1 = _residuals(z1, z2)
        if not _full_column_rank(r0):
            raise CollinearRegressorsError(
                problem=(
                    f"Johansen test of {system}: the differenced variables are perfectly collinear once "
                    "the short-run terms are removed"
                )
            )
        q0, _ = np.linalg.qr(r0)
        q1, _ = np.linalg.qr(r1)
        correlations = np.linalg.svd(q0.T @ q1, compute_uv=False)
    notes.extend(warning_texts(caught))

    eigenvalues = np.clip(np.sort(correlations**2)[::-1][:n], 0.0, 1.0 - np.finfo(float).eps)
    log_terms = np.log1p(-eigenvalues)
    level_key = f"{round((1.0 - significance) * 100):d}%"
    trace: list[RankTest] = []
    maximum: list[RankTest] = []
    for rank in range(n):
        trace_statistic = float(-effective * log_terms[rank:].sum())
        max_statistic = float(-effective * log_terms[rank])
        trace_values = johansen_critical_values(case, n - rank, "trace")
        max_values = johansen_critical_values(case, n - rank, "max-eigenvalue")
        trace.append(RankTest(rank, trace_statistic, trace_values, trace_statistic > trace_values[level_key]))
        maximum.append(RankTest(rank, max_statistic, max_values, max_statistic > max_values[level_key]))

    chosen_rank = next((test.rank for test in trace if not test.rejects), n)
    percent = f"{significance * 100:g}%"
    rank_rule = (
        f"sequential trace tests at {percent} (Johansen 1988): the first r whose null hypothesis "
        "'rank <= r' is not rejected"
    )
    if chosen_rank == n:
        notes.append(
            f"Every trace null hypothesis is rejected at {percent}: the VAR has full rank {n}, which means "
            "the variables are stationary in levels and contradicts their being integrated."
        )
    max_rank = next((test.rank for test in maximum if not test.rejects), n)
    if max_rank != chosen_rank:
        notes.append(
            f"The maximum-eigenvalue sequence would choose rank {max_rank}, the trace sequence "
            f"{chosen_rank}; the trace sequence decides."
        )
    labels = index_labels(frame.index) if isinstance(frame.index, pd.PeriodIndex) else tuple(
        str(label) for label in frame.index
    )
    notes.append(
        f"Reduced-rank regression on {effective} observations, {labels[start + 1]} to {labels[-1]} "
        f"(sample {labels[0]} to {labels[-1]}, {chosen} lagged differences)."
    )
    if seasons:
        notes.append(f"{seasons - 1} centred seasonal dummies enter unrestricted.")
    source = (
        f"{johansen_critical_values_source(case)}; asymptotic quantiles, case {case}, n - r = 1 to {n}"
    )
    return JohansenResult(
        variables=variables,
        case=case,
        case_description=JOHANSEN_CASES[case],
        lags=chosen,
        lag_rule=lag_rule,
        nobs=effective,
        eigenvalues=tuple(float(value) for value in eigenvalues),
        trace=tuple(trace),
        max_eigenvalue=tuple(maximum),
        rank=chosen_rank,
        rank_rule=rank_rule,
        critical_values_source=source,
        significance=float(significance),
        notes=tuple(notes),
    )
