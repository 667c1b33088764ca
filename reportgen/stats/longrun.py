"""Long-run relations: least squares on a column-scaled design, Newey-West covariance, dynamic OLS.

Three layers, each usable on its own:

* :func:`least_squares` solves an OLS problem on the design with every column scaled to unit
  length (so that the units of a variable cannot change any statistic) and returns the residuals
  computed from the fitted equation, ``y - X b``.
* :func:`newey_west_covariance` is the heteroskedasticity and autocorrelation consistent (HAC)
  covariance of the coefficients: a Bartlett-kernel estimate of the long-run covariance of the
  regression scores ``x_t e_t``, sandwiched between ``(X'X)^-1``, with the small-sample factor
  ``T/(T-k)``.
* :func:`dynamic_ols_specification` and :func:`dynamic_ols` give Stock and Watson's (1993) dynamic
  OLS estimate of a cointegrating relation: the dependent variable on a constant, the integrated
  regressors in levels and ``p`` leads and lags of their first differences, whose standard errors
  are valid for the long-run coefficients (those of the static cointegrating regression are not).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass
from typing import Final

import numpy as np
import pandas as pd
import scipy.linalg
from scipy import stats

from reportgen.errors import SampleTooShortError, StatsInputError
from reportgen.stats.numerics import nested_least_squares

__all__ = [
    "DYNAMIC_OLS_MIN_EXTRA_OBSERVATIONS",
    "NEWEY_WEST_KERNEL",
    "NEWEY_WEST_RULE",
    "DynamicOLSEstimate",
    "DynamicOLSSpecification",
    "LeastSquaresSolution",
    "dynamic_ols",
    "dynamic_ols_max_leads_lags",
    "dynamic_ols_specification",
    "lead_lag_name",
    "least_squares",
    "newey_west_covariance",
    "newey_west_lags",
]

#: The kernel of every HAC covariance reportgen computes.
NEWEY_WEST_KERNEL: Final[str] = "Bartlett"
#: The bandwidth rule of every HAC covariance (Newey and West 1994 rule of thumb, floor).
NEWEY_WEST_RULE: Final[str] = "int(4 (T/100)^(2/9))"
#: The dynamic OLS regression needs at least this many observations more than it has parameters.
DYNAMIC_OLS_MIN_EXTRA_OBSERVATIONS: Final[int] = 10

_CRITERIA: Final[dict[str, str]] = {"aic": "AIC", "bic": "BIC"}


def newey_west_lags(nobs: int) -> int:
    """Bartlett-kernel truncation lag ``int(4 (T/100)^(2/9))`` of the HAC covariance.

    Parameters
    ----------
    nobs : int
        Observations of the regression, T.

    Returns
    -------
    int
        The number of autocovariances of the scores given non-zero weight.

    References
    ----------
    Newey, W. K. and West, K. D. (1987). A Simple, Positive Semi-Definite, Heteroskedasticity and
    Autocorrelation Consistent Covariance Matrix. Econometrica, 55(3), 703-708.

    Newey, W. K. and West, K. D. (1994). Automatic Lag Selection in Covariance Matrix Estimation.
    Review of Economic Studies, 61(4), 631-653.
    """
    return int(4.0 * (nobs / 100.0) ** (2.0 / 9.0))


def _triangular_inverse(upper: np.ndarray) -> np.ndarray:
    """Inverse of an upper-triangular matrix (LAPACK ``trtri``); singular matrices raise ValueError."""
    inverse, info = scipy.linalg.lapack.dtrtri(upper, lower=0)
    if info != 0:
        raise ValueError("least_squares: the design is rank deficient")
    return np.triu(inverse)


@dataclass(frozen=True, slots=True)
class LeastSquaresSolution:
    """An OLS solution: coefficients, ``y - X b`` residuals and ``(X'X)^-1`` in the design's units.

    ``condition_number`` is the 2-norm condition number of the design after each column has been
    scaled to unit length; it does not depend on the units of the variables.
    """

    coefficients: np.ndarray
    residuals: np.ndarray
    fitted: np.ndarray
    inverse_moment: np.ndarray
    column_norms: np.ndarray
    condition_number: float


def least_squares(design: np.ndarray, endog: np.ndarray) -> LeastSquaresSolution:
    """Ordinary least squares through a QR decomposition of the column-scaled design.

    Parameters
    ----------
    design : numpy.ndarray
        T x k regressor matrix of full column rank, no zero column.
    endog : numpy.ndarray
        Length-T dependent variable.

    Returns
    -------
    LeastSquaresSolution
        Residuals are computed from the fitted equation, ``endog - design @ coefficients``.

    Notes
    -----
    Scaling every column to unit Euclidean length before the decomposition makes the solution
    equivariant to the units of each variable: multiplying a regressor by ``c`` divides its
    coefficient by ``c`` and changes nothing else, to rounding.

    References
    ----------
    Golub, G. H. and Van Loan, C. F. (2013). Matrix Computations, 4th ed. Johns Hopkins University
    Press, section 5.3 (the QR approach to least squares) and 5.3.7 (column scaling).
    """
    design = np.asarray(design, dtype=float)
    endog = np.asarray(endog, dtype=float)
    norms = np.linalg.norm(design, axis=0)
    if np.any(norms == 0):
        raise ValueError("least_squares: the design has a zero column")
    scaled = design / norms
    q_factor, r_factor = np.linalg.qr(scaled, mode="reduced")
    r_inverse = _triangular_inverse(r_factor)
    scaled_coefficients = r_inverse @ (q_factor.T @ endog)
    coefficients = scaled_coefficients / norms
    fitted = design @ coefficients
    residuals = endog - fitted
    scaled_inverse = r_inverse @ r_inverse.T
    inverse_moment = scaled_inverse / np.outer(norms, norms)
    singular_values = np.linalg.svd(r_factor, compute_uv=False)
    condition = math.inf if singular_values[-1] == 0 else float(singular_values[0] / singular_values[-1])
    return LeastSquaresSolution(
        coefficients=coefficients,
        residuals=residuals,
        fitted=fitted,
        inverse_moment=inverse_moment,
        column_norms=norms,
        condition_number=condition,
    )


def newey_west_covariance(
    design: np.ndarray,
    residuals: np.ndarray,
    lags: int,
    *,
    small_sample_correction: bool = True,
) -> np.ndarray:
    """HAC covariance of OLS coefficients with Bartlett weights ``1 - j/(L+1)``.

    Parameters
    ----------
    design : numpy.ndarray
        T x k regressor matrix.
    residuals : numpy.ndarray
        Length-T OLS residuals.
    lags : int
        Truncation lag L (the bandwidth); 0 gives White's heteroskedasticity-consistent covariance.
    small_sample_correction : bool, default True
        Multiply by ``T/(T-k)``.

    Returns
    -------
    numpy.ndarray
        ``c (X'X)^-1 S (X'X)^-1`` with ``S = sum_t s_t s_t' + sum_{j=1}^{L} (1 - j/(L+1))
        sum_t (s_t s_{t-j}' + s_{t-j} s_t')``, ``s_t = x_t e_t`` and ``c = T/(T-k)`` or 1.

    References
    ----------
    Newey, W. K. and West, K. D. (1987). A Simple, Positive Semi-Definite, Heteroskedasticity and
    Autocorrelation Consistent Covariance Matrix. Econometrica, 55(3), 703-708.
    """
    if lags < 0:
        raise ValueError(f"lags must be non-negative, not {lags}")
    design = np.asarray(design, dtype=float)
    residuals = np.asarray(residuals, dtype=float)
    nobs, n_parameters = design.shape
    norms = np.linalg.norm(design, axis=0)
    scaled = design / np.where(norms > 0, norms, 1.0)
    scores = scaled * residuals[:, None]
    meat = scores.T @ scores
    for lag in range(1, min(lags, nobs - 1) + 1):
        weight = 1.0 - lag / (lags + 1.0)
        cross = scores[lag:].T @ scores[:-lag]
        meat += weight * (cross + cross.T)
    _, r_factor = np.linalg.qr(scaled, mode="reduced")
    r_inverse = _triangular_inverse(r_factor)
    bread = r_inverse @ r_inverse.T
    covariance = bread @ meat @ bread
    if small_sample_correction:
        covariance *= nobs / (nobs - n_parameters)
    return covariance / np.outer(norms, norms)


def lead_lag_name(variable: str, shift: int) -> str:
    """Name of a lead (``shift > 0``) or lag (``shift < 0``) of a first difference: ``d.x(+1)``."""
    if shift == 0:
        return f"d.{variable}"
    return f"d.{variable}({shift:+d})"


def dynamic_ols_max_leads_lags(nobs: int) -> int:
    """Largest number of leads and lags searched by default: ``int(T^(1/3))``.

    The cube root is rounded to 10 decimals before the floor, so that a perfect cube such as
    T = 125 gives 5 rather than 4.

    References
    ----------
    Stock, J. H. and Watson, M. W. (1993). A Simple Estimator of Cointegrating Vectors in Higher
    Order Integrated Systems. Econometrica, 61(4), 783-820 (leads and lags growing slower than
    T^(1/3)).
    """
    return int(round(nobs ** (1.0 / 3.0), 10))


@dataclass(frozen=True, slots=True)
class DynamicOLSSpecification:
    """The dynamic OLS regression chosen for one relation, before estimation.

    ``frame`` holds the dependent variable and every term on the rows where all leads and lags
    exist (the first ``p + 1`` and last ``p`` observations are lost). ``criterion_values`` maps each
    candidate ``p`` to its information criterion on the common sample of the largest candidate
    (empty when ``p`` was fixed).
    """

    dependent: str
    regressors: tuple[str, ...]
    leads_lags: int
    max_leads_lags: int
    criterion: str  # "aic", "bic" or "fixed"
    criterion_values: dict[int, float]
    rule: str
    frame: pd.DataFrame
    terms: tuple[str, ...]
    long_run_terms: tuple[str, ...]
    lead_lag_terms: tuple[str, ...]

    @property
    def equation(self) -> str:
        """The regression as estimated, leads and lags included."""
        return f"{self.dependent} ~ {' + '.join(self.terms)}"


def _design(
    data: pd.DataFrame, dependent: str, regressors: Sequence[str], leads_lags: int
) -> tuple[pd.DataFrame, list[str], list[str]]:
    columns: dict[str, pd.Series] = {dependent: data[dependent], "const": pd.Series(1.0, index=data.index)}
    for variable in regressors:
        columns[variable] = data[variable]
    lead_lag_terms: list[str] = []
    for variable in regressors:
        difference = data[variable].diff()
        for shift in range(-leads_lags, leads_lags + 1):
            name = lead_lag_name(variable, shift)
            columns[name] = difference.shift(-shift)
            lead_lag_terms.append(name)
    frame = pd.DataFrame(columns, index=data.index)
    return frame, ["const", *regressors], lead_lag_terms


def _parameters(n_regressors: int, leads_lags: int) -> int:
    return 1 + n_regressors + n_regressors * (2 * leads_lags + 1)


def _rows(nobs: int, leads_lags: int) -> int:
    return nobs - 1 - 2 * leads_lags


def _information_criterion(residual_sum: float, nobs: int, n_parameters: int, criterion: str) -> float:
    penalty = 2.0 if criterion == "aic" else math.log(nobs)
    return math.log(max(residual_sum, np.finfo(float).tiny) / nobs) + n_parameters * penalty / nobs


def dynamic_ols_specification(
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    *,
    leads_lags: int | None = None,
    criterion: str = "aic",
    max_leads_lags: int | None = None,
) -> DynamicOLSSpecification:
    """Choose the leads and lags of a dynamic OLS regression and build its design.

    Parameters
    ----------
    data : pandas.DataFrame
        Float columns without missing values, in time order.
    dependent : str
        The variable on the left of the cointegrating relation.
    regressors : sequence of str
        The integrated regressors; each enters in levels and with ``p`` leads and lags of its first
        difference (the current difference included).
    leads_lags : int, optional
        Fix ``p`` instead of choosing it.
    criterion : {"aic", "bic"}, default "aic"
        Information criterion ``ln(RSS/n) + c k/n`` (``c = 2`` or ``ln n``) minimised over
        ``p = 0, ..., max_leads_lags``; every candidate is fitted on the common sample of the
        largest one, and the smallest ``p`` wins a tie.
    max_leads_lags : int, optional
        Largest candidate; default ``int(T^(1/3))``, lowered until the largest candidate has at
        least 10 observations more than parameters on the common sample.

    Returns
    -------
    DynamicOLSSpecification

    Raises
    ------
    SampleTooShortError
        When even ``p = 0`` (or the fixed ``p``) leaves fewer than 10 observations more than
        parameters.
    StatsInputError
        When a column is missing or not finite.

    References
    ----------
    Stock, J. H. and Watson, M. W. (1993). A Simple Estimator of Cointegrating Vectors in Higher
    Order Integrated Systems. Econometrica, 61(4), 783-820.

    Saikkonen, P. (1991). Asymptotically Efficient Estimation of Cointegration Regressions.
    Econometric Theory, 7(1), 1-21.
    """
    regressors = tuple(regressors)
    if not regressors:
        raise ValueError("dynamic OLS needs at least one regressor")
    if criterion not in _CRITERIA:
        raise ValueError(f"criterion must be one of {tuple(_CRITERIA)}, not {criterion!r}")
    variables = (dependent, *regressors)
    missing = [name for name in variables if name not in data.columns]
    if missing:
        raise StatsInputError(problem=f"dynamic OLS: no column named {', '.join(missing)} in the data")
    frame = data.loc[:, list(variables)].astype(float)
    if not np.all(np.isfinite(frame.to_numpy())):
        raise StatsInputError(problem=f"dynamic OLS of {dependent}: the data contain missing or infinite values")
    nobs = len(frame)
    n_regressors = len(regressors)
    relation = f"{dependent} on {', '.join(regressors)}"

    def needed(p: int) -> int:
        return _parameters(n_regressors, p) + DYNAMIC_OLS_MIN_EXTRA_OBSERVATIONS + 1 + 2 * p

    values: dict[int, float] = {}
    if leads_lags is not None:
        if leads_lags < 0:
            raise ValueError(f"leads_lags must be non-negative, not {leads_lags}")
        if nobs < needed(leads_lags):
            raise SampleTooShortError(
                problem=(
                    f"dynamic OLS of {relation} with {leads_lags} leads and lags needs at least "
                    f"{needed(leads_lags)} observations ({_parameters(n_regressors, leads_lags)} parameters "
                    f"plus {DYNAMIC_OLS_MIN_EXTRA_OBSERVATIONS}, and {1 + 2 * leads_lags} lost to "
                    f"differencing, leads and lags); the sample has {nobs}"
                )
            )
        chosen, largest = leads_lags, leads_lags
        rule = f"fixed at {leads_lags} leads and lags"
        used_criterion = "fixed"
    else:
        default = max_leads_lags is None
        largest = dynamic_ols_max_leads_lags(nobs) if max_leads_lags is None else max_leads_lags
        if largest < 0:
            raise ValueError(f"max_leads_lags must be non-negative, not {largest}")
        requested = largest
        while largest >= 0 and nobs < needed(largest):
            largest -= 1
        if largest < 0:
            raise SampleTooShortError(
                problem=(
                    f"dynamic OLS of {relation} needs at least {needed(0)} observations even without "
                    f"leads and lags ({_parameters(n_regressors, 0)} parameters plus "
                    f"{DYNAMIC_OLS_MIN_EXTRA_OBSERVATIONS}, and 1 lost to differencing); the sample has {nobs}"
                )
            )
        full, long_run_terms, _ = _design(frame, dependent, regressors, largest)
        common = full.dropna()
        endog = common[dependent].to_numpy()
        # The candidates are nested once the columns are ordered by |shift|: the long-run terms, the
        # current differences, then lag and lead 1, 2, ...; one factorisation gives every
        # candidate's residual sum of squares (each candidate refitted would cost a QR apiece).
        nested = [*long_run_terms, *(lead_lag_name(variable, 0) for variable in regressors)]
        for shift in range(1, largest + 1):
            for variable in regressors:
                nested.extend((lead_lag_name(variable, -shift), lead_lag_name(variable, shift)))
        sums_of_squares = nested_least_squares(common.loc[:, nested].to_numpy(), endog).sums_of_squares()
        for p in range(largest + 1):
            columns = len(long_run_terms) + n_regressors * (2 * p + 1)
            values[p] = _information_criterion(float(sums_of_squares[columns - 1]), len(common), columns, criterion)
        chosen = min(values, key=lambda p: (values[p], p))
        source = f"int(T^(1/3)) at T={nobs}" if default else "set by the caller"
        rule = (
            f"{_CRITERIA[criterion]} over 0 to {largest} leads and lags ({source}"
            + (f", lowered from {requested} so that the largest candidate is estimable" if largest < requested else "")
            + f"), every candidate on the common sample of {len(common)} observations; the chosen "
            "number refitted on its own sample"
        )
        used_criterion = criterion
    design, long_run_terms, lead_lag_terms = _design(frame, dependent, regressors, chosen)
    design = design.dropna()
    return DynamicOLSSpecification(
        dependent=dependent,
        regressors=regressors,
        leads_lags=chosen,
        max_leads_lags=largest,
        criterion=used_criterion,
        criterion_values=dict(values),
        rule=rule,
        frame=design,
        terms=(*long_run_terms, *lead_lag_terms),
        long_run_terms=tuple(long_run_terms),
        lead_lag_terms=tuple(lead_lag_terms),
    )


@dataclass(frozen=True, slots=True)
class DynamicOLSEstimate:
    """Dynamic OLS estimates of every term, with HAC standard errors.

    ``estimates`` and ``std_errors`` cover every term of the regression; only the
    ``specification.long_run_terms`` are of interest, the leads and lags are nuisance parameters.
    """

    specification: DynamicOLSSpecification
    estimates: dict[str, float]
    std_errors: dict[str, float]
    t_statistics: dict[str, float]
    pvalues: dict[str, float]
    residuals: tuple[float, ...]
    nobs: int
    hac_lags: int
    degrees_of_freedom: int


def dynamic_ols(
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    *,
    leads_lags: int | None = None,
    criterion: str = "aic",
    max_leads_lags: int | None = None,
    hac_lags: int | None = None,
) -> DynamicOLSEstimate:
    """Stock and Watson's (1993) dynamic OLS estimate of a cointegrating relation.

    Parameters
    ----------
    data, dependent, regressors, leads_lags, criterion, max_leads_lags
        As for :func:`dynamic_ols_specification`.
    hac_lags : int, optional
        Bandwidth of the Newey-West covariance; default ``int(4 (T/100)^(2/9))`` at the dynamic
        OLS regression's T.

    Returns
    -------
    DynamicOLSEstimate
        Coefficients by OLS; standard errors from :func:`newey_west_covariance` with the
        ``T/(T-k)`` correction (k counts every term, leads and lags included); p-values from
        Student's t with ``T-k`` degrees of freedom.

    Notes
    -----
    The leads and lags of the regressors' differences absorb the correlation between the
    regressors' innovations and the equilibrium error, so that the t-statistics of the long-run
    coefficients are asymptotically normal once the long-run variance of the error is estimated
    consistently, which the HAC covariance does.

    References
    ----------
    Stock, J. H. and Watson, M. W. (1993). A Simple Estimator of Cointegrating Vectors in Higher
    Order Integrated Systems. Econometrica, 61(4), 783-820.

    Newey, W. K. and West, K. D. (1987). A Simple, Positive Semi-Definite, Heteroskedasticity and
    Autocorrelation Consistent Covariance Matrix. Econometrica, 55(3), 703-708.
    """
    specification = dynamic_ols_specification(
        data, dependent, regressors, leads_lags=leads_lags, criterion=criterion, max_leads_lags=max_leads_lags
    )
    frame = specification.frame
    design = frame.loc[:, list(specification.terms)].to_numpy()
    solution = least_squares(design, frame[dependent].to_numpy())
    nobs, n_parameters = design.shape
    bandwidth = newey_west_lags(nobs) if hac_lags is None else hac_lags
    covariance = newey_west_covariance(design, solution.residuals, bandwidth)
    std_errors = np.sqrt(np.diag(covariance))
    t_statistics = solution.coefficients / std_errors
    freedom = nobs - n_parameters
    pvalues = 2.0 * stats.t.sf(np.abs(t_statistics), freedom)
    terms = specification.terms

    def by_term(values: np.ndarray) -> dict[str, float]:
        return {term: float(value) for term, value in zip(terms, values, strict=True)}

    return DynamicOLSEstimate(
        specification=specification,
        estimates=by_term(solution.coefficients),
        std_errors=by_term(std_errors),
        t_statistics=by_term(t_statistics),
        pvalues=by_term(pvalues),
        residuals=tuple(float(value) for value in solution.residuals),
        nobs=nobs,
        hac_lags=bandwidth,
        degrees_of_freedom=freedom,
    )
