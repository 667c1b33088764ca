"""Residual-based cointegration testing: the Engle-Granger two-step test.

Step 1 regresses the dependent variable on deterministic terms and the other variables of the
relation by OLS; step 2 runs an augmented Dickey-Fuller regression, without deterministic terms, on
the step-1 residuals. The statistic is judged against MacKinnon's (2010) response-surface critical
values for the number of integrated variables in the relation, evaluated at the number of
observations of the residual ADF regression, and given a p-value from MacKinnon's (1994) asymptotic
surface. :func:`engle_granger_all` runs the test under every normalisation (each variable on the
left in turn), since its result depends on that choice.

The critical-value coefficients are reportgen's own copy of MacKinnon (2010). They were taken from
statsmodels' ``tsa/adfvalues.py`` (``tau_c_2010``, ``tau_ct_2010``) and then corrected in the five
places where that copy differs from the paper (statsmodels issue #10271; the same copy is in arch).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Final

import numpy as np
import pandas as pd
from statsmodels.tsa import adfvalues

from reportgen.errors import CollinearRegressorsError, SampleTooShortError, StatsInputError
from reportgen.periods import index_labels
from reportgen.stats.capture import warning_texts
from reportgen.stats.checks import VARIATION_LIMIT
from reportgen.stats.longrun import least_squares
from reportgen.stats.types import CointegrationTest
from reportgen.stats.unitroot import adf_lag_search, dickey_fuller_t_statistic
from reportgen.vocabulary import SIGNIFICANCE_LEVELS, Deterministic

__all__ = [
    "ENGLE_GRANGER_CRITICAL_VALUES_SOURCE",
    "ENGLE_GRANGER_MIN_EXTRA_OBSERVATIONS",
    "ENGLE_GRANGER_PVALUE_SOURCE",
    "engle_granger",
    "engle_granger_all",
    "engle_granger_critical_values",
    "engle_granger_pvalue",
    "schwert_max_lags",
]

#: Where the critical values come from, for the methods appendix.
ENGLE_GRANGER_CRITICAL_VALUES_SOURCE: Final[str] = (
    "MacKinnon (2010), Critical Values for Cointegration Tests, Queen's Economics Department "
    "Working Paper 1227: response surfaces C(T) = b_inf + b1/T + b2/T^2 + b3/T^3, Table 2 "
    "(constant) and Table 3 (constant and linear trend), with the paper's coefficients where the "
    "statsmodels and arch copies differ (statsmodels issue #10271)"
)
#: Where the p-values come from, for the methods appendix.
ENGLE_GRANGER_PVALUE_SOURCE: Final[str] = (
    "MacKinnon (1994), Approximate Asymptotic Distribution Functions for Unit-Root and "
    "Cointegration Tests, Journal of Business and Economic Statistics 12, 167-176 "
    "(asymptotic surface, as implemented by statsmodels' mackinnonp)"
)
#: The test needs at least this many observations more than the cointegrating regression has
#: parameters.
ENGLE_GRANGER_MIN_EXTRA_OBSERVATIONS: Final[int] = 20

# MacKinnon (2010) response-surface coefficients (b_inf, b1, b2, b3), indexed [N - 1][level],
# levels in the order 1%, 5%, 10%. N is the number of variables in the cointegrating relation
# (N = 1 is the Dickey-Fuller case).
_LEVELS: Final[tuple[str, ...]] = ("1%", "5%", "10%")

_TABLE_CONSTANT: Final[tuple[tuple[tuple[float, float, float, float], ...], ...]] = (
    # N = 1
    ((-3.43035, -6.5393, -16.786, -79.433), (-2.86154, -2.8903, -4.234, -40.040),
     (-2.56677, -1.5384, -2.809, 0.0)),
    # N = 2. Correction: 1% b2 is -22.527 in the paper; statsmodels/arch have -33.527.
    ((-3.89644, -10.9519, -22.527, 0.0), (-3.33613, -6.1101, -6.823, 0.0),
     (-3.04445, -4.2412, -2.720, 0.0)),
    # N = 3. Correction: 5% b1 is -8.5631 in the paper; statsmodels/arch have -8.5632.
    ((-4.29374, -14.4354, -33.195, 47.433), (-3.74066, -8.5631, -10.852, 27.982),
     (-3.45218, -6.2143, -3.718, 0.0)),
    # N = 4
    ((-4.64332, -18.1031, -37.972, 0.0), (-4.09600, -11.2349, -11.175, 0.0),
     (-3.81020, -8.3931, -4.137, 0.0)),
    # N = 5. Correction: 5% b1 is -14.0406 in the paper; statsmodels/arch have -14.0405.
    ((-4.95756, -21.8883, -45.142, 0.0), (-4.41519, -14.0406, -12.575, 0.0),
     (-4.13157, -10.7417, -3.784, 0.0)),
    # N = 6
    ((-5.24568, -25.6688, -57.737, 88.639), (-4.70693, -16.9178, -17.492, 60.007),
     (-4.42501, -13.1875, -5.104, 27.877)),
    # N = 7. Correction: 10% b2 is -6.922 and b3 is 67.721 in the paper; statsmodels/arch repeat
    # N = 6's -5.104 and 27.877.
    ((-5.51233, -29.5760, -69.398, 164.295), (-4.97684, -19.9021, -22.045, 110.761),
     (-4.69648, -15.7315, -6.922, 67.721)),
    # N = 8
    ((-5.76202, -33.5258, -82.189, 256.289), (-5.22924, -23.0023, -24.646, 144.479),
     (-4.95007, -18.3959, -7.344, 94.872)),
    # N = 9
    ((-5.99742, -37.6572, -87.365, 248.316), (-5.46697, -26.2057, -26.627, 176.382),
     (-5.18897, -21.1377, -9.484, 172.704)),
    # N = 10
    ((-6.22103, -41.7154, -102.680, 389.33), (-5.69244, -29.4521, -30.994, 251.016),
     (-5.41533, -24.0006, -7.514, 163.049)),
    # N = 11
    ((-6.43377, -46.0084, -106.809, 352.752), (-5.90714, -32.8336, -30.275, 249.994),
     (-5.63086, -26.9693, -4.083, 151.427)),
    # N = 12
    ((-6.63790, -50.2095, -124.156, 579.622), (-6.11279, -36.2681, -32.505, 314.802),
     (-5.83724, -29.9864, -2.686, 184.116)),
)

# Constant and linear trend: the statsmodels copy agrees with the paper (statsmodels issue #10271
# reports no difference for this table).
_TABLE_CONSTANT_TREND: Final[tuple[tuple[tuple[float, float, float, float], ...], ...]] = (
    # N = 1
    ((-3.95877, -9.0531, -28.428, -134.155), (-3.41049, -4.3904, -9.036, -45.374),
     (-3.12705, -2.5856, -3.925, -22.380)),
    # N = 2
    ((-4.32762, -15.4387, -35.679, 0.0), (-3.78057, -9.5106, -12.074, 0.0),
     (-3.49631, -7.0815, -7.538, 21.892)),
    # N = 3
    ((-4.66305, -18.7688, -49.793, 104.244), (-4.11890, -11.8922, -19.031, 77.332),
     (-3.83511, -9.0723, -8.504, 35.403)),
    # N = 4
    ((-4.96940, -22.4694, -52.599, 51.314), (-4.42871, -14.5876, -18.228, 39.647),
     (-4.14633, -11.2500, -9.873, 54.109)),
    # N = 5
    ((-5.25276, -26.2183, -59.631, 50.646), (-4.71537, -17.3569, -22.660, 91.359),
     (-4.43422, -13.6078, -10.238, 76.781)),
    # N = 6
    ((-5.51727, -29.9760, -75.222, 202.253), (-4.98228, -20.3050, -25.224, 132.03),
     (-4.70233, -16.1253, -9.836, 94.272)),
    # N = 7
    ((-5.76537, -33.9165, -84.312, 245.394), (-5.23299, -23.3328, -28.955, 182.342),
     (-4.95405, -18.7352, -10.168, 120.575)),
    # N = 8
    ((-6.00003, -37.8892, -96.428, 335.92), (-5.46971, -26.4771, -31.034, 220.165),
     (-5.19183, -21.4328, -10.726, 157.955)),
    # N = 9
    ((-6.22288, -41.9496, -109.881, 466.068), (-5.69447, -29.7152, -33.784, 273.002),
     (-5.41738, -24.2882, -8.584, 169.891)),
    # N = 10
    ((-6.43551, -46.1151, -120.814, 566.823), (-5.90887, -33.0251, -37.208, 346.189),
     (-5.63255, -27.2042, -6.792, 177.666)),
    # N = 11
    ((-6.63894, -50.4287, -128.997, 642.781), (-6.11404, -36.4610, -36.246, 348.554),
     (-5.83850, -30.1995, -5.163, 210.338)),
    # N = 12
    ((-6.83488, -54.7119, -139.800, 736.376), (-6.31127, -39.9676, -37.021, 406.051),
     (-6.03650, -33.2381, -6.606, 317.776)),
)

_TABLES: Final[dict[str, tuple[tuple[tuple[float, float, float, float], ...], ...]]] = {
    "constant": _TABLE_CONSTANT,
    "constant-trend": _TABLE_CONSTANT_TREND,
}
_TABLE_NAMES: Final[dict[str, str]] = {
    "constant": "Table 2 (constant)",
    "constant-trend": "Table 3 (constant and linear trend)",
}
_MACKINNON_1994_CODES: Final[dict[str, str]] = {"constant": "c", "constant-trend": "ct"}
#: Range (lowest, highest statistic) of MacKinnon's (1994) p-value surfaces, per N.
_PVALUE_RANGES: Final[dict[str, tuple[Sequence[float], Sequence[float]]]] = {
    "c": (adfvalues.tau_min_c, adfvalues.tau_max_c),
    "ct": (adfvalues.tau_min_ct, adfvalues.tau_max_ct),
}
#: MacKinnon's (1994) p-value surfaces cover N = 1..6.
_PVALUE_MAX_VARIABLES: Final[int] = 6
_LAG_CRITERIA: Final[dict[str, str]] = {"aic": "AIC", "bic": "BIC", "t-stat": "t-stat"}


def _check_deterministic(deterministic: str) -> None:
    if deterministic not in _TABLES:
        raise ValueError(
            f"deterministic must be 'constant' or 'constant-trend' for the Engle-Granger test, "
            f"not {deterministic!r} (MacKinnon 2010 gives no residual-test tables without a constant)"
        )


def _check_variables(n_variables: int) -> None:
    if not 1 <= n_variables <= len(_TABLE_CONSTANT):
        raise ValueError(
            f"MacKinnon (2010) tables cover 1 to {len(_TABLE_CONSTANT)} variables, not {n_variables}"
        )


def engle_granger_critical_values(
    n_variables: int, deterministic: Deterministic, nobs: float
) -> dict[str, float]:
    """Critical values of the Engle-Granger residual test at the 1%, 5% and 10% levels.

    Parameters
    ----------
    n_variables : int
        Number of variables in the cointegrating relation, the dependent variable included
        (MacKinnon's N, 1 to 12; N = 1 is the Dickey-Fuller case).
    deterministic : {"constant", "constant-trend"}
        Deterministic terms of the cointegrating (step-1) regression.
    nobs : float
        Sample size T at which the response surface is evaluated; ``math.inf`` gives the
        asymptotic values ``b_inf``.

    Returns
    -------
    dict of str to float
        Keys ``"1%"``, ``"5%"``, ``"10%"``.

    Notes
    -----
    Evaluates C(T) = b_inf + b1/T + b2/T^2 + b3/T^3 with reportgen's copy of the paper's
    coefficients, which corrects five transcription errors of the statsmodels/arch copy
    (statsmodels issue #10271).

    References
    ----------
    MacKinnon, J. G. (2010). Critical Values for Cointegration Tests. Queen's Economics
    Department Working Paper No. 1227, Tables 2 and 3.
    """
    _check_deterministic(deterministic)
    _check_variables(n_variables)
    if not nobs > 0:
        raise ValueError(f"nobs must be positive, not {nobs}")
    rows = _TABLES[deterministic][n_variables - 1]
    inverse = 0.0 if math.isinf(nobs) else 1.0 / float(nobs)
    values: dict[str, float] = {}
    for level, (b_inf, b1, b2, b3) in zip(_LEVELS, rows, strict=True):
        values[level] = b_inf + inverse * (b1 + inverse * (b2 + inverse * b3))
    return values


def engle_granger_pvalue(
    statistic: float, n_variables: int, deterministic: Deterministic
) -> tuple[float, str | None]:
    """Asymptotic p-value of an Engle-Granger statistic, with a bound beyond the surface's range.

    Parameters
    ----------
    statistic : float
        The residual ADF t-statistic.
    n_variables : int
        Number of variables in the cointegrating relation (1 to 6).
    deterministic : {"constant", "constant-trend"}
        Deterministic terms of the cointegrating regression.

    Returns
    -------
    pvalue : float
        The p-value; when the statistic lies beyond the surface's range, the p-value at the edge
        of that range.
    bound : {"<", ">"} or None
        ``"<"`` when the true p-value is below ``pvalue`` (statistic left of the range), ``">"``
        when it is above (statistic right of the range), None inside the range.

    References
    ----------
    MacKinnon, J. G. (1994). Approximate Asymptotic Distribution Functions for Unit-Root and
    Cointegration Tests. Journal of Business and Economic Statistics, 12(2), 167-176.
    """
    _check_deterministic(deterministic)
    if not 1 <= n_variables <= _PVALUE_MAX_VARIABLES:
        raise ValueError(
            f"MacKinnon (1994) p-value surfaces cover 1 to {_PVALUE_MAX_VARIABLES} variables, "
            f"not {n_variables}"
        )
    code = _MACKINNON_1994_CODES[deterministic]
    low_edges, high_edges = _PVALUE_RANGES[code]
    low = float(low_edges[n_variables - 1])
    high = float(high_edges[n_variables - 1])
    if statistic < low:
        return float(adfvalues.mackinnonp(low, regression=code, N=n_variables)), "<"
    if statistic > high:
        return float(adfvalues.mackinnonp(high, regression=code, N=n_variables)), ">"
    return float(adfvalues.mackinnonp(statistic, regression=code, N=n_variables)), None


def schwert_max_lags(nobs: int) -> int:
    """Schwert's (1989) maximum lag, ``floor(12 (T/100)^(1/4))``.

    References
    ----------
    Schwert, G. W. (1989). Tests for Unit Roots: A Monte Carlo Investigation. Journal of
    Business and Economic Statistics, 7(2), 147-159.
    """
    return int(12.0 * (nobs / 100.0) ** 0.25)


def _deterministic_phrase(deterministic: str) -> str:
    return "a constant" if deterministic == "constant" else "a constant and a linear trend"


def _collinear_columns(design: np.ndarray, names: Sequence[str]) -> tuple[str, tuple[str, ...]] | None:
    """The first column that adds nothing to the rank of the ones before it, and those it depends on."""
    norms = np.linalg.norm(design, axis=0)
    scaled = design / np.where(norms > 0, norms, 1.0)
    for column in range(scaled.shape[1]):
        if norms[column] == 0 or np.linalg.matrix_rank(scaled[:, : column + 1]) <= column:
            if column == 0 or norms[column] == 0:
                return names[column], ()
            coefficients, *_ = np.linalg.lstsq(scaled[:, :column], scaled[:, column], rcond=None)
            used = tuple(name for name, value in zip(names[:column], coefficients, strict=True)
                         if abs(value) > 1e-8)
            return names[column], used
    return None


def engle_granger(
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    *,
    significance: float,
    lag_criterion: str = "aic",
    deterministic: Deterministic = "constant",
    max_lags: int | None = None,
    lags: int | None = None,
) -> CointegrationTest:
    """Engle-Granger two-step test of the null hypothesis of no cointegration.

    Parameters
    ----------
    data : pandas.DataFrame
        Float columns named by series, indexed by a ``PeriodIndex``, aligned, no missing values.
    dependent : str
        The variable on the left of the cointegrating regression.
    regressors : sequence of str
        The other integrated variables of the relation (at least one).
    significance : float
        Significance level, one of 0.01, 0.05, 0.10.
    lag_criterion : {"aic", "bic", "t-stat"}
        How the number of lagged differences in the residual ADF regression is chosen among
        0..max_lags (statsmodels ``adfuller``: every candidate fitted on the common sample of the
        largest, the chosen one refitted on its full sample).
    deterministic : {"constant", "constant-trend"}
        Deterministic terms of the cointegrating regression. The residual ADF regression has none.
    max_lags : int, optional
        Largest number of lagged differences searched; by default Schwert's (1989)
        ``floor(12 (T/100)^(1/4))``, and never more than ``T//2 - 1``.
    lags : int, optional
        Fix the number of lagged differences instead of searching.

    Returns
    -------
    CointegrationTest
        ``nobs`` is the number of observations of the residual ADF regression, ``T - 1 - lags``;
        the critical values are evaluated at that T.

    Raises
    ------
    SampleTooShortError
        When the sample has fewer than 20 observations more than the cointegrating regression has
        parameters, or fewer than the lags ask for.
    CollinearRegressorsError
        When the regressors (with the deterministic terms) are perfectly collinear.
    StatsInputError
        When columns are missing or not finite, or the cointegrating regression fits exactly.

    Notes
    -----
    ``rejects`` is true when the p-value is below ``significance`` (a ``"<"`` bound counts as
    below). With more than six variables MacKinnon's (1994) surfaces give no p-value: ``pvalue``
    is None, a note says so and the critical value decides. The p-value is asymptotic while the
    critical values are for the residual ADF regression's sample size; when they disagree about the
    decision a note says so.

    References
    ----------
    Engle, R. F. and Granger, C. W. J. (1987). Co-integration and Error Correction:
    Representation, Estimation, and Testing. Econometrica, 55(2), 251-276.

    MacKinnon, J. G. (1994). Approximate Asymptotic Distribution Functions for Unit-Root and
    Cointegration Tests. Journal of Business and Economic Statistics, 12(2), 167-176.

    MacKinnon, J. G. (2010). Critical Values for Cointegration Tests. Queen's Economics
    Department Working Paper No. 1227.

    Schwert, G. W. (1989). Tests for Unit Roots: A Monte Carlo Investigation. Journal of
    Business and Economic Statistics, 7(2), 147-159.
    """
    _check_deterministic(deterministic)
    if not any(math.isclose(significance, level) for level in SIGNIFICANCE_LEVELS):
        raise ValueError(f"significance must be one of {SIGNIFICANCE_LEVELS}, not {significance}")
    if lag_criterion not in _LAG_CRITERIA:
        raise ValueError(f"lag_criterion must be one of {tuple(_LAG_CRITERIA)}, not {lag_criterion!r}")
    regressors = tuple(regressors)
    if not regressors:
        raise ValueError("the Engle-Granger test needs at least one regressor")
    variables = (dependent, *regressors)
    if len(set(variables)) != len(variables):
        raise StatsInputError(problem=f"Engle-Granger test: a variable appears twice in {', '.join(variables)}")
    missing = [name for name in variables if name not in data.columns]
    if missing:
        raise StatsInputError(problem=f"Engle-Granger test: no column named {', '.join(missing)} in the data")
    n_variables = len(variables)
    _check_variables(n_variables)

    frame = data.loc[:, list(variables)].astype(float)
    values = frame.to_numpy()
    if not np.all(np.isfinite(values)):
        raise StatsInputError(
            problem=f"Engle-Granger test of {dependent}: the data contain missing or infinite values"
        )
    nobs = values.shape[0]
    relation = f"{dependent} on {', '.join(regressors)}"
    n_parameters = (1 if deterministic == "constant" else 2) + len(regressors)
    needed = ENGLE_GRANGER_MIN_EXTRA_OBSERVATIONS + n_parameters
    if nobs < needed:
        raise SampleTooShortError(
            problem=(
                f"the Engle-Granger test of {relation} with {_deterministic_phrase(deterministic)} needs "
                f"at least {needed} observations ({ENGLE_GRANGER_MIN_EXTRA_OBSERVATIONS} plus "
                f"{n_parameters} parameters in the cointegrating regression); the sample has {nobs}"
            )
        )

    # Step 1: the cointegrating regression.
    columns = [np.ones(nobs)]
    names = ["const"]
    if deterministic == "constant-trend":
        columns.append(np.arange(1.0, nobs + 1.0))
        names.append("trend")
    design = np.column_stack([*columns, values[:, 1:]])
    names.extend(regressors)
    collinear = _collinear_columns(design, names)
    if collinear is not None:
        column, used = collinear
        depends = f" is an exact linear combination of {', '.join(used)}" if used else " is zero"
        raise CollinearRegressorsError(
            problem=f"Engle-Granger test of {relation}: the regressors are perfectly collinear: {column}{depends}"
        )

    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        # Each variable divided by its largest magnitude: the residuals change by the dependent
        # variable's factor only, which the residual ADF t-statistic does not see.
        scaled = values / np.max(np.abs(values), axis=0)
        step1 = least_squares(design, scaled[:, 0])
        residuals = step1.residuals
        # Exact when the residuals are rounding error: a root mean square at most VARIATION_LIMIT
        # of the dependent variable's largest magnitude (1 after the scaling), as for every fit.
        if math.sqrt(float(residuals @ residuals) / nobs) <= VARIATION_LIMIT:
            raise StatsInputError(
                problem=(
                    f"Engle-Granger test of {relation}: the cointegrating regression fits exactly "
                    f"(R² = 1), so the residual test is undefined"
                )
            )

        # Step 2: ADF without deterministic terms on the residuals.
        largest = nobs // 2 - 1  # statsmodels adfuller's limit with no deterministic terms
        if lags is not None:
            if lags < 0:
                raise ValueError(f"lags must be non-negative, not {lags}")
            if lags > largest:
                raise SampleTooShortError(
                    problem=(
                        f"the Engle-Granger test of {relation} with {lags} lagged differences needs at "
                        f"least {2 * (lags + 1)} observations; the sample has {nobs}"
                    )
                )
            used_lags = lags
            lag_rule = f"fixed at {lags}"
        else:
            if max_lags is not None:
                if max_lags < 0:
                    raise ValueError(f"max_lags must be non-negative, not {max_lags}")
                if max_lags > largest:
                    raise SampleTooShortError(
                        problem=(
                            f"the Engle-Granger test of {relation} searching up to {max_lags} lagged "
                            f"differences needs at least {2 * (max_lags + 1)} observations; the sample "
                            f"has {nobs}"
                        )
                    )
                maxlag = max_lags
                lag_rule = f"{_LAG_CRITERIA[lag_criterion]}, at most {max_lags} (set by the caller)"
            else:
                schwert = schwert_max_lags(nobs)
                maxlag = min(schwert, largest)
                lag_rule = (
                    f"{_LAG_CRITERIA[lag_criterion]}, at most {maxlag} "
                    f"(Schwert 1989, floor of 12(T/100)^(1/4) at T={nobs}"
                )
                lag_rule += ", capped at T/2 - 1)" if maxlag < schwert else ")"
            used_lags = adf_lag_search(residuals, maxlag, lag_criterion, "none")
        statistic, test_nobs = dickey_fuller_t_statistic(
            residuals, used_lags, "none", test=f"Engle-Granger test of {relation}", level=0
        )
    notes.extend(warning_texts(caught))

    critical_values = engle_granger_critical_values(n_variables, deterministic, test_nobs)
    level_key = f"{round(significance * 100):d}%"
    if n_variables <= _PVALUE_MAX_VARIABLES:
        pvalue, bound = engle_granger_pvalue(statistic, n_variables, deterministic)
        rejects = bound == "<" or (bound is None and pvalue < significance)
        by_critical_value = statistic < critical_values[level_key]
        if by_critical_value != rejects:
            notes.append(
                f"The asymptotic p-value ({pvalue:.3f}) and the critical value at T={test_nobs} "
                f"({critical_values[level_key]:.3f}) disagree about rejection at {level_key}; "
                "the decision follows the p-value."
            )
    else:
        pvalue, bound = None, None
        rejects = statistic < critical_values[level_key]
        notes.append(
            f"MacKinnon (1994) p-value surfaces cover at most {_PVALUE_MAX_VARIABLES} variables; "
            f"the decision compares the statistic with the {level_key} critical value."
        )

    labels = index_labels(frame.index) if isinstance(frame.index, pd.PeriodIndex) else tuple(
        str(label) for label in frame.index
    )
    notes.append(
        f"Cointegrating regression of {relation} with {_deterministic_phrase(deterministic)} on {nobs} "
        f"observations, {labels[0]} to {labels[-1]}; residual ADF regression without deterministic "
        f"terms on {test_nobs}."
    )
    source = (
        f"MacKinnon (2010), {_TABLE_NAMES[deterministic]} response surface, N={n_variables}, at "
        f"T={test_nobs} (paper's coefficients; statsmodels issue #10271); p-value MacKinnon (1994) "
        "asymptotic"
    )
    return CointegrationTest(
        method="Engle-Granger",
        dependent=dependent,
        variables=variables,
        deterministic=deterministic,
        statistic=statistic,
        pvalue=pvalue,
        pvalue_bound=bound,
        critical_values=critical_values,
        critical_values_source=source,
        lags=used_lags,
        lag_rule=lag_rule,
        nobs=test_nobs,
        rejects=bool(rejects),
        significance=float(significance),
        notes=tuple(notes),
    )


def engle_granger_all(
    data: pd.DataFrame,
    variables: Sequence[str],
    *,
    significance: float,
    lag_criterion: str = "aic",
    deterministic: Deterministic = "constant",
    max_lags: int | None = None,
    lags: int | None = None,
) -> tuple[CointegrationTest, ...]:
    """Engle-Granger tests of one relation under every normalisation.

    Each variable in turn is put on the left of the cointegrating regression, with the others, in
    the order given, on the right; each test is :func:`engle_granger` with the same settings.

    Parameters
    ----------
    data : pandas.DataFrame
        Float columns named by series, indexed by a ``PeriodIndex``, aligned, no missing values.
    variables : sequence of str
        The integrated variables of the relation, at least two, each once.
    significance : float
        Significance level, one of 0.01, 0.05, 0.10.
    lag_criterion : {"aic", "bic", "t-stat"}
        How the lagged differences of each residual ADF regression are chosen.
    deterministic : {"constant", "constant-trend"}
        Deterministic terms of the cointegrating regressions.
    max_lags : int, optional
        Largest number of lagged differences searched (Schwert's rule by default).
    lags : int, optional
        Fix the number of lagged differences instead of searching.

    Returns
    -------
    tuple of CointegrationTest
        One test per variable, in the order of ``variables``; ``dependent`` names the variable on
        the left. Every test uses MacKinnon's (2010) critical values for N = ``len(variables)``.

    Raises
    ------
    StatsInputError
        When a variable appears twice or a column is missing or not finite.
    CollinearRegressorsError
        When the variables are perfectly collinear.
    SampleTooShortError
        When the sample is too short for the test (see :func:`engle_granger`).

    Notes
    -----
    The residual-based test is not invariant to the normalisation: in finite samples the
    statistics, and sometimes the decisions, differ with the variable on the left. Reporting every
    normalisation shows whether the conclusion depends on that choice.

    References
    ----------
    Engle, R. F. and Granger, C. W. J. (1987). Co-integration and Error Correction:
    Representation, Estimation, and Testing. Econometrica, 55(2), 251-276.

    MacKinnon, J. G. (2010). Critical Values for Cointegration Tests. Queen's Economics
    Department Working Paper No. 1227.
    """
    variables = tuple(variables)
    if len(variables) < 2:
        raise ValueError(
            f"the Engle-Granger test needs at least two variables, not {len(variables)}"
        )
    if len(set(variables)) != len(variables):
        raise StatsInputError(problem=f"Engle-Granger test: a variable appears twice in {', '.join(variables)}")
    return tuple(
        engle_granger(
            data,
            dependent,
            [name for name in variables if name != dependent],
            significance=significance,
            lag_criterion=lag_criterion,
            deterministic=deterministic,
            max_lags=max_lags,
            lags=lags,
        )
        for dependent in variables
    )
