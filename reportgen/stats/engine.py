"""The unit-root battery's arithmetic, on one series or on many series of equal length at once.

Every function here takes a 2-D array with one series per row (all rows of the same length,
already free of missing values) and returns one entry per row. :mod:`reportgen.stats.unitroot`
calls them with a single row and wraps the numbers into :class:`~reportgen.stats.types.TestResult`;
:func:`battery` runs the whole default battery on a block of series, which is how a simulation or a
benchmark should call it. A row's numbers do not depend on the other rows of the block: every
reduction runs along the row, so a series gives the same bits alone or in a block of a thousand.

ADF and DF-GLS regressions from one set of cross products
----------------------------------------------------------
The ADF regression of ``dy_s`` on the lagged level ``y_s``, the lagged differences
``dy_{s-1} .. dy_{s-p}`` and the deterministic terms has a Gram matrix whose difference block is
Toeplitz up to the ends of the sample: ``sum_s dy_{s-i} dy_{s-j}`` is the same sum of lag-``|i-j|``
products on a window shifted by ``min(i, j)``. :func:`_regression_gram` computes one dot product per
lag distance and per lag of the level, corrects the shifted windows by the few products at their
ends, and removes the constant and trend analytically (they are the same for every column); a
Cholesky factor of the column-scaled result then gives every nested lag order's residual sum of
squares and last t-statistic (the projections ``(Q'y)_j`` are the last row of the factor). The
lag search costs ``O(T p)`` instead of ``p + 1`` regressions of ``O(T p^2)`` each, and the chosen
lag is refitted on its own sample the same way.

Before any cross product the series is centred (constant) or detrended by least squares (constant
and trend). That changes no statistic (the shift is absorbed by the deterministic terms) but keeps
the analytic removal of the deterministic terms from cancelling digits. Cross products square the
condition number, so each row's factor is checked: when a column keeps less than
:data:`FAST_SHARE` of its squared length after the columns before it (or the residuals keep less
than that share of the response), the row is recomputed by Householder QR of its explicit design
(:func:`_exact_search`, :func:`_exact_statistic`), which is also where a singular regression or an
exact fit is refused. The checks are far above the refusal thresholds, so the fast arithmetic never
reports a statistic the exact arithmetic would refuse.

Conventions are statsmodels' ``adfuller`` with ``autolag``: candidates ``p = 0 .. max_lags`` are
compared on the common sample of ``max_lags``, AIC ``-2 llf + 2k`` and BIC ``-2 llf + k log n``
(``k`` regressors) minimised with ties to the smaller lag, the t-stat rule takes the largest lag
whose last coefficient has ``|t| >= 1.6448536269514722``; the chosen lag is refitted on its own
``T - 1 - p`` observations. p-values are MacKinnon's (1994) surface evaluated exactly as statsmodels'
``mackinnonp`` does (same coefficients, same polynomial evaluation, the normal distribution function
``ndtr``), so they agree to the last bit for the same statistic.

Phillips-Perron and KPSS
------------------------
Both need the residuals themselves, computed explicitly (``O(T)`` per row). Their Bartlett long-run
variances sum the autocovariances directly up to :data:`DIRECT_AUTOCOVARIANCE_LAGS` lags (``O(T L)``)
and take them from a zero-padded FFT beyond that (``O(T log T)``; over-differenced series get
automatic bandwidths in the hundreds).

References
----------
Golub, G. H. and Van Loan, C. F. (2013). *Matrix Computations*, 4th ed. Johns Hopkins University
Press, sections 4.2 (Cholesky), 4.7 (Toeplitz systems) and 5.3 (least squares, the normal equations).

Higham, N. J. (2002). *Accuracy and Stability of Numerical Algorithms*, 2nd ed. SIAM, chapters 10
(Cholesky) and 20 (least squares).
"""

from __future__ import annotations

import functools
import math
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Final

import numpy as np
import scipy.fft
import scipy.linalg
import scipy.special
from statsmodels.tsa.adfvalues import _tau_largeps, _tau_maxs, _tau_mins, _tau_smallps, _tau_stars, tau_2010s

from reportgen.stats.numerics import _by_qr, _column_scaled, nested_least_squares, single_threaded_blas

__all__ = [
    "CRITERIA",
    "DFGLS_CBAR",
    "DIRECT_AUTOCOVARIANCE_LAGS",
    "FAST_SHARE",
    "TREND_COUNT",
    "T_STAT_THRESHOLD",
    "BatteryArrays",
    "TestArrays",
    "adf_lags",
    "bartlett_long_run_variance",
    "battery",
    "dfgls_arrays",
    "dickey_fuller_statistics",
    "kpss_arrays",
    "kpss_short_bandwidth",
    "mackinnon_critical_values",
    "mackinnon_pvalues",
    "newey_west_bandwidths",
    "normalised_rows",
    "phillips_perron_arrays",
    "schwert_max_lags",
    "statsmodels_max_lags",
]

#: Number of deterministic regressors of each specification.
TREND_COUNT: Final[dict[str, int]] = {"none": 0, "constant": 1, "constant-trend": 2}
#: statsmodels' code for each specification (the MacKinnon tables are keyed by it).
_REGRESSION: Final[dict[str, str]] = {"none": "n", "constant": "c", "constant-trend": "ct"}
#: Lag criteria of the ADF-type searches.
CRITERIA: Final[tuple[str, ...]] = ("aic", "bic", "t-stat")
#: The t-stat rule's threshold: the 95% quantile of the standard normal (statsmodels' and arch's value).
T_STAT_THRESHOLD: Final[float] = 1.6448536269514722
#: Local-to-unity parameter c-bar of the GLS quasi-differences (Elliott, Rothenberg and Stock 1996).
DFGLS_CBAR: Final[dict[str, float]] = {"constant": -7.0, "constant-trend": -13.5}
#: Smallest share of a column's squared length (after the columns before it and the deterministic
#: terms), and of the response's, for which the cross-product arithmetic is trusted; below it the row
#: is recomputed by Householder QR. Rounding error in the cross products is then at most about
#: ``1e-16 / FAST_SHARE`` relative.
FAST_SHARE: Final[float] = 1e-6
#: Autocovariances are summed directly up to this many lags, taken from an FFT beyond.
DIRECT_AUTOCOVARIANCE_LAGS: Final[int] = 128

#: Status codes of a row: computed, singular regression, exact fit, nothing left after detrending.
OK: Final[int] = 0
COLLINEAR: Final[int] = 1
EXACT_FIT: Final[int] = 2
DETRENDED_AWAY: Final[int] = 3
#: Thresholds of the refusals (the same as the exact arithmetic of reportgen.stats.unitroot): a
#: diagonal element of the column-scaled R at most 1e-10, residuals at most 1e-13 of the response.
_COLLINEAR_DIAGONAL: Final[float] = 1e-10
_EXACT_FIT_SHARE: Final[float] = (1e-13) ** 2


def schwert_max_lags(nobs: int) -> int:
    """Schwert's (1989) maximum lag rounded down, ``int(12 (T/100)^(1/4))`` (reportgen's rule)."""
    return int(12.0 * (nobs / 100.0) ** 0.25)


def statsmodels_max_lags(nobs: int, trend_count: int) -> int:
    """statsmodels' ``adfuller`` default maximum lag: ``ceil(12 (T/100)^(1/4))``, at most ``T//2 - k - 1``."""
    return min(nobs // 2 - trend_count - 1, int(np.ceil(12.0 * np.power(nobs / 100.0, 1 / 4.0))))


def kpss_short_bandwidth(nobs: int) -> int:
    """The short KPSS bandwidth ``int(4 (T/100)^(1/4))`` of reportgen's decision rule."""
    return int(4.0 * (nobs / 100.0) ** 0.25)


def _rowdot(first: np.ndarray, second: np.ndarray) -> np.ndarray:
    """``sum_t first[i, t] * second[i, t]`` for every row ``i`` (each row reduced on its own)."""
    return np.einsum("ij,ij->i", first, second)


def normalised_rows(values: np.ndarray) -> np.ndarray:
    """Each row divided by its largest absolute value (every statistic here is scale invariant)."""
    values = np.asarray(values, dtype=float)
    largest = np.max(np.abs(values), axis=1, keepdims=True)
    return values / np.where(largest > 0.0, largest, 1.0)


@functools.lru_cache(maxsize=64)
def _line_basis(length: int) -> tuple[np.ndarray, np.ndarray]:
    """Orthonormal basis of the constant and the linear trend on ``length`` points."""
    constant = np.full(length, 1.0 / math.sqrt(length))
    trend = np.arange(1.0, length + 1.0) - (length + 1.0) / 2.0
    norm = math.sqrt(float(trend @ trend)) if length > 1 else 1.0
    return constant, trend / norm


def _remove_terms(values: np.ndarray, trend_count: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The rows minus their least-squares mean (1) or line (2); also the removed line's level and slope.

    The slope is per observation, so the differences of the result are those of the rows less the slope.
    """
    rows, length = values.shape
    zero = np.zeros(rows)
    if trend_count == 0:
        return values, zero, zero
    constant, trend = _line_basis(length)
    mean_part = np.einsum("ij,j->i", values, constant)
    result = values - mean_part[:, None] * constant
    if trend_count == 1:
        return result, mean_part * constant[0], zero
    trend_part = np.einsum("ij,j->i", values, trend)
    result = result - trend_part[:, None] * trend
    slope = trend_part * (trend[1] - trend[0]) if length > 1 else zero
    return result, mean_part * constant[0] + trend_part * trend[0], slope


@dataclass(frozen=True, slots=True)
class _Factor:
    """The Cholesky factor of one block of column-scaled ADF regressions (the deterministic terms removed).

    Columns are ordered as the caller asked, the response last. ``lower[:, -1, :-1]`` are the
    projections ``(Q'y)_j``, ``lower[:, -1, -1]**2`` the full model's residual share of the response;
    ``response_sum`` the response's squared length after the deterministic terms; ``trusted`` rows
    whose shares all reach :data:`FAST_SHARE` and whose Cholesky factorisation succeeded.
    """

    lower: np.ndarray
    response_sum: np.ndarray
    trusted: np.ndarray


@functools.lru_cache(maxsize=256)
def _gram_layout(lags: int) -> tuple[np.ndarray, ...]:
    """Index arrays that place the lag-distance sums into the Gram matrix of :func:`_regression_gram`.

    Pair ``(i, j = i + h)`` of lags (lag 0 is the response) is base sum ``h`` corrected by the ``i``
    products at each end of the window; lag ``j`` is column ``1 + j``, the lagged level column 0.
    """
    distances, shifts = [], []
    for distance in range(lags + 1):
        for shift in range(lags - distance + 1):
            distances.append(distance)
            shifts.append(shift)
    distance_index = np.asarray(distances, dtype=np.intp)
    shift_index = np.asarray(shifts, dtype=np.intp)
    corrected = shift_index > 0
    position = np.maximum(shift_index - 1, 0)
    upper = np.triu(np.ones((lags, lags), dtype=bool))
    return distance_index, corrected, position, 1 + shift_index, 1 + shift_index + distance_index, upper


def _end_sums(values: np.ndarray, start: int, end: int, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """``sum(values[start - k : start])`` and ``sum(values[end - k : end])`` for ``k = 1 .. lags``."""
    if not lags:
        empty = np.zeros((values.shape[0], 0))
        return empty, empty
    head = np.cumsum(values[:, start - lags : start][:, ::-1], axis=1)
    tail = np.cumsum(values[:, end - lags : end][:, ::-1], axis=1)
    return head, tail


def _regression_gram(levels: np.ndarray, start: int, lags: int, trend_count: int) -> tuple[np.ndarray, np.ndarray]:
    """Cross products of ``[y_s, dy_s, dy_{s-1}, .., dy_{s-lags}]`` over ``s = start .. T-2``.

    Column 0 is the lagged level, column ``1 + j`` the difference at lag ``j`` (lag 0, column 1, is the
    response). ``levels`` are already centred or detrended (:func:`_remove_terms`); ``start >= lags``. The
    deterministic terms of ``trend_count`` (a constant; a constant and the trend ``1..n``) are removed
    from every cross product analytically. Returns the Gram matrix after that removal and its
    diagonal before it.

    One dot product per lag distance ``h`` gives ``sum_s dy_s dy_{s-h}``; the pair of lags
    ``(i, i + h)`` sums the same products on the window shifted by ``i``, which is that sum plus the
    ``i`` products entering at the start and less the ``i`` leaving at the end. The lagged level's
    products follow from ``y_s = y_{s-j} + dy_{s-1} + .. + dy_{s-j}``, and the window sums of every
    column (for the constant and the trend) from telescoping and summation by parts, so the whole
    matrix costs ``lags + 4`` passes over the data.
    """
    rows, length = levels.shape
    differences = np.diff(levels, axis=1)
    end = length - 1  # one past the last regression row
    nobs = end - start
    size = lags + 2
    distance_index, corrected, position, first, second, upper = _gram_layout(lags)

    window = differences[:, start:end]
    view = np.lib.stride_tricks.sliding_window_view(differences, nobs, axis=1)  # view[:, t] = dy[t : t + n]
    base = np.einsum("rhs,rs->rh", view[:, start - lags : start + 1][:, ::-1], window)  # sum_s dy_s dy_{s-h}
    values = base[:, distance_index]
    if lags:
        # D_h(v) = dy_{v-h} dy_v for the last `lags` rows before the start and before the end of the
        # window; the pair (i, i + h) adds sum_{v=start-i..start-1} D_h(v) and removes the same at the end.
        # (Entries with v - h < 0 are never used: they would need i > lags - h.)
        offsets = np.arange(lags + 1)
        head = differences[:, np.maximum(np.arange(start - lags, start)[:, None] - offsets, 0)]
        tail = differences[:, np.arange(end - lags, end)[:, None] - offsets]
        ends = head * head[:, :, :1] - tail * tail[:, :, :1]  # [v, h]
        ends = np.cumsum(ends[:, ::-1], axis=1)  # [k - 1, h]: the last k rows
        values = values + np.where(corrected, ends[:, position, distance_index], 0.0)
    gram = np.empty((rows, size, size))
    gram[:, first, second] = values
    gram[:, second, first] = values

    # The lagged level: sum_s y_s dy_{s-j} = sum_s y_{s-j} dy_{s-j} + sum_{i=1..j} sum_s dy_{s-i} dy_{s-j}.
    level = levels[:, start:end]
    gram[:, 0, 0] = _rowdot(level, level)
    products = levels[:, :end] * differences
    own = products[:, start:end].sum(axis=1)
    cross = np.empty((rows, lags + 1))
    cross[:, 0] = own
    if lags:
        head_own, tail_own = _end_sums(products, start, end, lags)
        cross[:, 1:] = own[:, None] + head_own - tail_own + np.where(upper, gram[:, 2:, 2:], 0.0).sum(axis=1)
    gram[:, 0, 1:] = cross
    gram[:, 1:, 0] = cross
    raw_diagonal = np.diagonal(gram, axis1=1, axis2=2).copy()
    if trend_count == 0:
        return gram, raw_diagonal

    # Window sums: sum_s dy_{s-j} = y_{end-j} - y_{start-j}; sum_s r dy_{s-j} = n y_{end-j} - sum_s y_{s-j}
    # with r = 1..n (summation by parts); the level's directly.
    lag_numbers = np.arange(lags + 1)
    level_sum = level.sum(axis=1)
    sums = np.empty((rows, size))
    weighted = np.empty((rows, size))
    sums[:, 0] = level_sum
    sums[:, 1:] = levels[:, end - lag_numbers] - levels[:, start - lag_numbers]
    shifted_level_sums = np.empty((rows, lags + 1))  # sum of y_{s-j} over the window, j = 0..lags
    shifted_level_sums[:, 0] = level_sum
    if lags:
        head_level, tail_level = _end_sums(levels, start, end, lags)
        shifted_level_sums[:, 1:] = level_sum[:, None] + head_level - tail_level
    weighted[:, 0] = np.einsum("ij,j->i", level, np.arange(1.0, nobs + 1.0))
    weighted[:, 1:] = nobs * levels[:, end - lag_numbers] - shifted_level_sums
    constant_part = sums / math.sqrt(nobs)
    gram -= constant_part[:, :, None] * constant_part[:, None, :]
    if trend_count == 2:
        mean_trend = (nobs + 1.0) / 2.0
        spread = math.sqrt(nobs * (nobs * nobs - 1.0) / 12.0) if nobs > 1 else 1.0
        trend_part = (weighted - mean_trend * sums) / spread
        gram -= trend_part[:, :, None] * trend_part[:, None, :]
    return gram, raw_diagonal


def _factor(gram: np.ndarray, raw_diagonal: np.ndarray, order: Sequence[int]) -> _Factor:
    """Cholesky factor of the Gram matrix in ``order`` (response last), each column scaled by its raw length."""
    index = np.asarray(order)
    permuted = gram[:, index[:, None], index[None, :]]
    scale = np.sqrt(raw_diagonal[:, index])
    usable = np.all(scale > 0.0, axis=1) & np.all(np.isfinite(permuted), axis=(1, 2))
    scale = np.where(scale > 0.0, scale, 1.0)
    scaled = permuted / (scale[:, :, None] * scale[:, None, :])
    scaled[~usable] = np.eye(index.size)
    try:
        lower = np.linalg.cholesky(scaled)
        factored = np.ones(scaled.shape[0], dtype=bool)
    except np.linalg.LinAlgError:
        lower = np.zeros_like(scaled)
        factored = np.zeros(scaled.shape[0], dtype=bool)
        for row in range(scaled.shape[0]):
            try:
                lower[row] = np.linalg.cholesky(scaled[row])
                factored[row] = True
            except np.linalg.LinAlgError:
                lower[row] = np.eye(index.size)
    shares = np.diagonal(lower, axis1=1, axis2=2) ** 2
    trusted = usable & factored & np.all(shares >= FAST_SHARE, axis=1)
    response = index[-1]
    return _Factor(lower=lower, response_sum=gram[:, response, response], trusted=trusted)


def _shifted_rows(levels: np.ndarray, trend_count: int) -> np.ndarray:
    return _remove_terms(levels, trend_count)[0]


# --- exact arithmetic for the rows the cross products cannot vouch for ---------------------------------


def _design(series: np.ndarray, lags: int, trend_count: int, *, level_last: bool) -> np.ndarray:
    """The ADF regressors on the sample of ``lags``: constant, trend / n, then the lagged level and the
    lagged differences (or the differences first and the level last)."""
    differences = np.diff(series)
    nobs = differences.size - lags
    columns: list[np.ndarray] = []
    if trend_count >= 1:
        columns.append(np.ones(nobs))
    if trend_count == 2:
        columns.append(np.arange(1.0, nobs + 1.0) / nobs)
    level = series[lags:-1]
    if not level_last:
        columns.append(level)
    columns.extend(differences[lags - j : lags - j + nobs] for j in range(1, lags + 1))
    if level_last:
        columns.append(level)
    return np.column_stack(columns) if columns else np.empty((nobs, 0))


def _exact_search(series: np.ndarray, max_lags: int, trend_count: int) -> tuple[np.ndarray, np.ndarray, int]:
    """Every candidate's residual sum of squares and last t-statistic by Householder QR (one row)."""
    design = _design(series, max_lags, trend_count, level_last=False)
    fit = nested_least_squares(design, np.diff(series)[max_lags:])
    nobs = design.shape[0]
    return fit.sums_of_squares(), fit.last_t_statistics(nobs), nobs


def _exact_statistic(series: np.ndarray, lags: int, trend_count: int) -> tuple[float, int]:
    """The lagged level's t-statistic by Householder QR of the explicit design, with the refusals (one row)."""
    design = _design(series, lags, trend_count, level_last=True)
    response = np.diff(series)[lags:]
    fit = _by_qr(_column_scaled(design), response)
    if float(np.min(np.abs(np.diag(fit.r_factor)))) <= _COLLINEAR_DIAGONAL:
        return math.nan, COLLINEAR
    if fit.residual_sum <= _EXACT_FIT_SHARE * float(response @ response):
        return math.nan, EXACT_FIT
    return float(fit.last_t_statistics(design.shape[0])[-1]), OK


# --- ADF lag search and statistic -------------------------------------------------------------------


def _choose(sums: np.ndarray, t_statistics: np.ndarray, nobs: int, trend_count: int, largest: int,
            criterion: str) -> np.ndarray:
    """The chosen lag per row from the candidates' sums of squares ``(rows, largest + 1)`` and last t's."""
    if criterion == "t-stat":
        significant = np.abs(t_statistics[:, 1 : largest + 1]) >= T_STAT_THRESHOLD
        positions = np.arange(1, largest + 1)
        return np.max(np.where(significant, positions, 0), axis=1, initial=0)
    sums = np.maximum(sums, np.finfo(float).tiny)  # an exact fit ranks first, not as NaN
    log_likelihood = -nobs / 2.0 * (math.log(2.0 * math.pi) + np.log(sums / nobs) + 1.0)
    penalty = 2.0 if criterion == "aic" else math.log(nobs)
    regressors = np.arange(trend_count + 1, trend_count + largest + 2)
    return np.argmin(-2.0 * log_likelihood + penalty * regressors, axis=1)


def adf_lags(levels: np.ndarray, max_lags: int, trend_count: int,
             criteria: Sequence[str] = CRITERIA) -> dict[str, np.ndarray]:
    """The lagged differences each criterion chooses for each row, from 0 to ``max_lags``.

    Parameters
    ----------
    levels : numpy.ndarray
        Series in levels, one per row, finite, at least ``max_lags + trend_count + 3`` long.
    max_lags : int
        Largest number of lagged differences, 0 or more.
    trend_count : int
        0 (no deterministic terms), 1 (constant) or 2 (constant and trend).
    criteria : sequence of {"aic", "bic", "t-stat"}
        The rules to apply; the candidates are fitted once for all of them.

    Returns
    -------
    dict
        Criterion to an integer array of chosen lags, one per row.
    """
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    rows, length = levels.shape
    nobs = length - 1 - max_lags
    first = trend_count
    largest = min(max_lags, nobs - first - 2)  # candidates without a residual degree of freedom are left out
    if largest < 0:
        raise ValueError(f"{length} observations are too few for an ADF regression with {max_lags} lags")
    gram, raw = _regression_gram(_shifted_rows(levels, trend_count), max_lags, max_lags, trend_count)
    factor = _factor(gram, raw, [0, *range(2, max_lags + 2), 1])  # level, lags 1..max, response
    projections = factor.lower[:, -1, :-1]
    residual_share = factor.lower[:, -1, -1] ** 2
    beyond = np.cumsum((projections**2)[:, ::-1], axis=1)[:, ::-1]
    # share of model on columns 0..j = residual share + sum of the squared projections after j
    shares = residual_share[:, None] + np.concatenate([beyond[:, 1:], np.zeros((rows, 1))], axis=1)
    sums = shares * factor.response_sum[:, None]
    freedom = nobs - first - np.arange(1, max_lags + 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_statistics = projections / np.sqrt(shares / freedom)
    trusted = factor.trusted & (residual_share >= FAST_SHARE)
    chosen = {
        criterion: _choose(sums[:, : largest + 1], t_statistics, nobs, trend_count, largest, criterion)
        for criterion in criteria
    }
    for row in np.flatnonzero(~trusted):
        exact_sums, exact_t, _ = _exact_search(levels[row], max_lags, trend_count)
        candidates = exact_sums[first : first + largest + 1][None, :]
        for criterion in criteria:
            chosen[criterion][row] = _choose(candidates, exact_t[None, first:], nobs, trend_count, largest,
                                             criterion)[0]
    return {criterion: np.asarray(values, dtype=int) for criterion, values in chosen.items()}


def _original_lengths(levels: np.ndarray, start: int, lags: int) -> np.ndarray:
    """Squared lengths of ``[y_s, dy_s, dy_{s-1}, .., dy_{s-lags}]`` over ``s = start .. T-2`` as given
    (not centred; the columns of :func:`_regression_gram`): the scale on which the refusals are judged."""
    end = levels.shape[1] - 1
    level = levels[:, start:end]
    squares = np.diff(levels, axis=1) ** 2
    response = squares[:, start:end].sum(axis=1)
    lengths = np.empty((levels.shape[0], lags + 2))
    lengths[:, 0] = _rowdot(level, level)
    lengths[:, 1] = response
    if lags:
        head, tail = _end_sums(squares, start, end, lags)
        lengths[:, 2:] = response[:, None] + head - tail
    return lengths


#: Margin of the fast rows over the refusals: a column-scaled diagonal element of R of at least
#: 1e-8 (the refusal is at 1e-10) and residuals of at least 1e-12 of the response (refused at 1e-13).
_KEPT_DIAGONAL: Final[float] = 1e-8
_KEPT_FIT_SHARE: Final[float] = (1e-12) ** 2


def dickey_fuller_statistics(levels: np.ndarray, lags: np.ndarray | int, trend_count: int
                             ) -> tuple[np.ndarray, np.ndarray]:
    """The lagged level's t-statistic in each row's ADF regression with its own number of lags.

    Each row is fitted on its own sample, ``T - 1 - lags`` observations. Returns the statistics and
    a status per row: :data:`OK`, :data:`COLLINEAR` (the lagged level or a lagged difference is a
    linear combination of the regressors before it: a diagonal element of the column-scaled R at
    most 1e-10) or :data:`EXACT_FIT` (residuals at most 1e-13 of the response's length); the
    statistic is NaN for a refused row.
    """
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    rows, length = levels.shape
    lags = np.broadcast_to(np.asarray(lags, dtype=int), (rows,))
    statistics = np.full(rows, math.nan)
    status = np.full(rows, OK)
    shifted = _shifted_rows(levels, trend_count)
    for lag in np.unique(lags):
        members = np.flatnonzero(lags == lag)
        lag = int(lag)
        nobs = length - 1 - lag
        freedom = nobs - trend_count - lag - 1
        gram, raw = _regression_gram(shifted[members], lag, lag, trend_count)
        order = [*range(2, lag + 2), 0, 1]  # lagged differences, the level, the response
        factor = _factor(gram, raw, order)
        residual_share = factor.lower[:, -1, -1] ** 2
        with np.errstate(divide="ignore", invalid="ignore"):
            values = factor.lower[:, -1, -2] / np.sqrt(residual_share / freedom)
        # What each column keeps after the ones before it, on the scale of the columns as given.
        kept = np.diagonal(factor.lower, axis1=1, axis2=2) ** 2 * raw[:, order]
        original = _original_lengths(levels[members], lag, lag)[:, order]
        trusted = (
            factor.trusted
            & np.isfinite(values)
            & (freedom > 0)
            & np.all(kept[:, :-1] >= _KEPT_DIAGONAL**2 * original[:, :-1], axis=1)
            & (kept[:, -1] >= _KEPT_FIT_SHARE * original[:, -1])
        )
        statistics[members] = np.where(trusted, values, math.nan)
        for position in np.flatnonzero(~trusted):
            row = int(members[position])
            statistics[row], status[row] = _exact_statistic(levels[row], lag, trend_count)
    return statistics, status


# --- p-values and critical values -------------------------------------------------------------------


def mackinnon_pvalues(statistics: np.ndarray, regression: str) -> tuple[np.ndarray, np.ndarray]:
    """MacKinnon's (1994) p-value of Dickey-Fuller t-statistics (N = 1), a bound beyond the surface.

    Evaluated exactly as statsmodels' ``mackinnonp``: the same coefficients, ``numpy.polyval``, and
    the normal distribution function (``scipy.special.ndtr``, which ``scipy.stats.norm.cdf`` calls).
    Returns the p-values and the bounds: ``-1`` where the statistic lies below the surface's range
    (the p-value is then the surface's value at its lower end, an upper bound), ``+1`` above it (a
    lower bound), ``0`` inside.
    """
    statistics = np.asarray(statistics, dtype=float)
    tau_min = float(_tau_mins[regression][0])
    tau_max = float(_tau_maxs[regression][0])
    star = float(_tau_stars[regression][0])
    small = np.asarray(_tau_smallps[regression][0])[::-1]
    large = np.asarray(_tau_largeps[regression][0])[::-1]
    bound = np.where(statistics < tau_min, -1, np.where(statistics > tau_max, 1, 0))
    clipped = np.clip(statistics, tau_min, tau_max)
    clipped = np.where(np.isfinite(clipped), clipped, 0.0)
    polynomial = np.where(clipped <= star, np.polyval(small, clipped), np.polyval(large, clipped))
    return scipy.special.ndtr(polynomial), bound


@functools.lru_cache(maxsize=4096)
def mackinnon_critical_values(regression: str, nobs: int) -> tuple[float, float, float]:
    """MacKinnon's (2010) 1%, 5% and 10% critical values at ``nobs`` (N = 1), as statsmodels' ``mackinnoncrit``."""
    coefficients = tau_2010s[regression][0, :, ::-1]
    values = np.polyval(coefficients.T, 1.0 / nobs)
    return float(values[0]), float(values[1]), float(values[2])


# --- long-run variances -------------------------------------------------------------------------------


def _autocovariances(residuals: np.ndarray, lags: int) -> np.ndarray:
    """``sum_t u_t u_{t-j}`` for ``j = 0 .. lags`` of every row, ``(rows, lags + 1)``.

    Each sum is one reduction over a zero-padded window of the row's own length, so a row's sums
    do not depend on the other rows or on how many lags are asked for.
    """
    rows, nobs = residuals.shape
    padded = np.zeros((rows, nobs + lags))
    padded[:, :nobs] = residuals
    view = np.lib.stride_tricks.sliding_window_view(padded, nobs, axis=1)[:, : lags + 1]
    return np.einsum("rjs,rs->rj", view, residuals)


def _fft_autocovariances(residuals: np.ndarray, lags: int) -> np.ndarray:
    """The same sums for one row by a zero-padded FFT (``O(T log T)``, for many lags)."""
    nobs = residuals.size
    size = scipy.fft.next_fast_len(2 * nobs, real=True)
    spectrum = scipy.fft.rfft(residuals, size)
    return scipy.fft.irfft(spectrum.real**2 + spectrum.imag**2, size)[: lags + 1]


def bartlett_long_run_variance(residuals: np.ndarray, bandwidths: np.ndarray | int) -> np.ndarray:
    """``(gamma_0 + 2 sum_{j=1..L} (1 - j/(L+1)) gamma_j) / T`` per row, each with its own bandwidth ``L``.

    The autocovariance sums are divided by ``T`` at the end (statsmodels' ``_sigma_est_kpss`` and
    arch's ``cov_nw`` give the same number). Up to :data:`DIRECT_AUTOCOVARIANCE_LAGS` lags they are
    summed directly (``O(T L)``), beyond by FFT.
    """
    residuals = np.atleast_2d(residuals)
    rows, nobs = residuals.shape
    bandwidths = np.broadcast_to(np.asarray(bandwidths, dtype=int), (rows,))
    result = np.empty(rows)
    direct = bandwidths <= DIRECT_AUTOCOVARIANCE_LAGS
    # Rows grouped by bandwidth (up to 8, 16, .. lags) so that few lags cost little; a row's numbers
    # do not depend on its group.
    group = np.where(direct, np.ceil(np.log2(np.maximum(bandwidths, 8))).astype(int), -1)
    for size in np.unique(group[direct]):
        members = np.flatnonzero(group == size)
        part = residuals[members] if members.size < rows else residuals
        widths = bandwidths[members]
        most = int(widths.max())
        sums = _autocovariances(part, most)
        values = sums[:, 0].copy()
        for lag in range(1, most + 1):  # in order of lag, row by row: adding 0 beyond a row's bandwidth
            weight = np.where(widths >= lag, 1.0 - lag / (widths + 1.0), 0.0)
            values += 2.0 * weight * sums[:, lag]
        result[members] = values
    for row in np.flatnonzero(~direct):
        bandwidth = int(bandwidths[row])
        row_sums = _fft_autocovariances(residuals[row], bandwidth)
        value = float(row_sums[0])
        for lag in range(1, bandwidth + 1):
            value += 2.0 * (1.0 - lag / (bandwidth + 1.0)) * float(row_sums[lag])
        result[row] = value
    return result / nobs


def newey_west_bandwidths(residuals: np.ndarray) -> np.ndarray:
    """Newey and West's (1994) automatic Bartlett bandwidth per row, scale free.

    Pilot ``n = int(4 (T/100)^(2/9))`` lags; ``s0 = sigma_0 + 2 sum sigma_j``, ``s1 = 2 sum j sigma_j``;
    ``L = int(1.1447 ((s1/s0)^2)^(1/3) T^(1/3))``, at most ``T - 1`` (and ``T - 1`` when ``s0`` is 0).
    """
    residuals = np.atleast_2d(residuals)
    nobs = residuals.shape[1]
    pilot = min(int(4.0 * (nobs / 100.0) ** (2.0 / 9.0)), nobs - 1)
    autocovariances = _autocovariances(residuals, pilot)
    s0 = autocovariances[:, 0] + 2.0 * autocovariances[:, 1:].sum(axis=1)
    s1 = 2.0 * (np.arange(1.0, pilot + 1.0) * autocovariances[:, 1:]).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        gamma = 1.1447 * ((s1 / s0) ** 2) ** (1.0 / 3.0)
        chosen = np.floor(gamma * nobs ** (1.0 / 3.0))
    chosen = np.where(np.isfinite(chosen), chosen, nobs - 1)
    chosen = np.where(s0 == 0.0, nobs - 1, np.minimum(chosen, nobs - 1))
    return chosen.astype(int)


# --- Phillips-Perron ----------------------------------------------------------------------------------


@dataclass(frozen=True, slots=True)
class PhillipsPerronArrays:
    """Per row: ``Z_t``, the bandwidth, the status, and the regression's pieces for the wrapper."""

    statistic: np.ndarray
    bandwidth: np.ndarray
    status: np.ndarray
    residuals: np.ndarray = field(repr=False)


def phillips_perron_arrays(levels: np.ndarray, trend_count: int,
                           bandwidth: int | np.ndarray | None = None) -> PhillipsPerronArrays:
    """Phillips-Perron ``Z_t`` for each row: the Dickey-Fuller regression ``y_t = rho y_{t-1} + terms``.

    Fitted as ``dy_t = (rho - 1) y_{t-1} + terms`` with the terms removed by projection; the residuals
    are computed explicitly. ``bandwidth`` None: Newey and West's (1994) automatic choice per row
    (:func:`newey_west_bandwidths`). Status :data:`COLLINEAR` when the lagged level keeps less than
    1e-12 of its squared length after the terms (the wrapper then decides with a rank test),
    :data:`EXACT_FIT` when the residuals are at most 1e-13 of the response's length (in levels).
    """
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    rows, length = levels.shape
    nobs = length - 1
    lagged = levels[:, :-1]
    differences = np.diff(levels, axis=1)
    lagged_left, _, _ = _remove_terms(lagged, trend_count)
    differences_left, _, _ = _remove_terms(differences, trend_count)
    lagged_sum = _rowdot(lagged_left, lagged_left)
    with np.errstate(divide="ignore", invalid="ignore"):
        coefficient = _rowdot(lagged_left, differences_left) / lagged_sum
    residuals = differences_left - coefficient[:, None] * lagged_left
    sum_of_squares = _rowdot(residuals, residuals)
    status = np.full(rows, OK)
    status[~(lagged_sum > 1e-12 * _rowdot(lagged, lagged))] = COLLINEAR
    response = levels[:, 1:]
    status[(status == OK) & (sum_of_squares <= _EXACT_FIT_SHARE * _rowdot(response, response))] = EXACT_FIT
    good = status == OK
    if bandwidth is None:
        chosen = np.zeros(rows, dtype=int)
        if good.any():
            chosen[good] = newey_west_bandwidths(residuals[good])
    else:
        chosen = np.broadcast_to(np.asarray(bandwidth, dtype=int), (rows,)).copy()
    statistic = np.full(rows, math.nan)
    if good.any():
        parameters = trend_count + 1
        ssr = sum_of_squares[good]
        gamma0 = ssr / nobs
        scale = np.sqrt(ssr / (nobs - parameters))
        long_run = bartlett_long_run_variance(residuals[good], chosen[good])
        standard_error = scale / np.sqrt(lagged_sum[good])
        statistic[good] = np.sqrt(gamma0 / long_run) * coefficient[good] / standard_error - 0.5 * (
            (long_run - gamma0) / np.sqrt(long_run)
        ) * (nobs * standard_error / scale)
    return PhillipsPerronArrays(statistic=statistic, bandwidth=chosen, status=status, residuals=residuals)


# --- KPSS ---------------------------------------------------------------------------------------------


def _hobijn_bandwidths(residuals: np.ndarray) -> np.ndarray:
    """Hobijn, Franses and Ooms' (1998) automatic KPSS bandwidth per row, as statsmodels' ``_kpss_autolag``."""
    rows, nobs = residuals.shape
    pilot = min(int(np.power(nobs, 2.0 / 9.0)), nobs - 1)
    autocovariances = _autocovariances(residuals, pilot)
    s0 = autocovariances[:, 0] / nobs
    s1 = np.zeros(rows)
    for lag in range(1, pilot + 1):
        products = autocovariances[:, lag] / (nobs / 2.0)
        s0 = s0 + products
        s1 = s1 + lag * products
    with np.errstate(divide="ignore", invalid="ignore"):
        ratio = s1 / s0
        gamma = 1.1447 * np.power(ratio * ratio, 1.0 / 3.0)
        chosen = gamma * np.power(nobs, 1.0 / 3.0)
    chosen = np.where(np.isfinite(chosen), np.trunc(chosen), nobs - 1)
    return np.minimum(chosen, nobs - 1).astype(int)


def kpss_arrays(levels: np.ndarray, trend_count: int, lags: int | np.ndarray | None) -> tuple[np.ndarray, np.ndarray]:
    """The KPSS statistic ``sum S_t^2 / (T^2 s^2)`` per row and the bandwidth used.

    The residuals are from the least-squares mean (1) or line (2); ``s^2`` is their Bartlett
    long-run variance with weights ``1 - j/(L+1)``. ``lags`` None: Hobijn, Franses and Ooms' (1998)
    automatic bandwidth, at most ``T - 1`` (statsmodels' ``nlags="auto"``).
    """
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    rows, nobs = levels.shape
    residuals, _, _ = _remove_terms(levels, trend_count)
    if lags is None:
        chosen = _hobijn_bandwidths(residuals)
    else:
        chosen = np.broadcast_to(np.asarray(lags, dtype=int), (rows,)).copy()
    partial = np.cumsum(residuals, axis=1)
    eta = _rowdot(partial, partial) / nobs**2
    with np.errstate(divide="ignore", invalid="ignore"):
        return eta / bartlett_long_run_variance(residuals, chosen), chosen


# --- DF-GLS -------------------------------------------------------------------------------------------


@functools.lru_cache(maxsize=64)
def _gls_projectors(length: int, deterministic: str) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """The deterministic terms ``z`` (1 and t/T), the pseudo-inverse of their quasi-differences, and
    the pseudo-inverse of ``z`` itself (OLS detrending), each of shape (terms, T)."""
    terms = [np.ones(length)]
    if deterministic == "constant-trend":
        terms.append(np.arange(1.0, length + 1.0) / length)
    trend_terms = np.column_stack(terms)
    alpha = 1.0 + DFGLS_CBAR[deterministic] / length
    quasi = trend_terms.copy()
    quasi[1:] -= alpha * trend_terms[:-1]
    return trend_terms.T.copy(), np.linalg.pinv(quasi), np.linalg.pinv(trend_terms)


def _fitted(values: np.ndarray, terms: np.ndarray, projector: np.ndarray) -> np.ndarray:
    """``z beta`` with ``beta = projector @ row`` for every row (row by row: no cross-row arithmetic)."""
    fitted = np.zeros_like(values)
    for term, weights in zip(terms, projector, strict=True):
        fitted += np.einsum("ij,j->i", values, weights)[:, None] * term
    return fitted


def dfgls_detrended(levels: np.ndarray, deterministic: str) -> tuple[np.ndarray, np.ndarray]:
    """The GLS-detrended rows (Elliott, Rothenberg and Stock 1996) and the OLS-detrended rows."""
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    length = levels.shape[1]
    terms, gls_projector, ols_projector = _gls_projectors(length, deterministic)
    alpha = 1.0 + DFGLS_CBAR[deterministic] / length
    quasi = levels.copy()
    quasi[:, 1:] -= alpha * levels[:, :-1]
    gls = levels - _fitted(quasi, terms, gls_projector)
    ols = levels - _fitted(levels, terms, ols_projector)
    return gls, ols


def dfgls_arrays(levels: np.ndarray, deterministic: str, criteria: Sequence[str], max_lags: int
                 ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray], dict[str, np.ndarray], np.ndarray]:
    """DF-GLS statistics per criterion: lags chosen in the ADF regression of the OLS-detrended rows
    (no deterministic terms), statistic of the ADF regression without terms of the GLS-detrended rows.

    Returns (statistics, lags, status) keyed by criterion and the detrended status
    (:data:`DETRENDED_AWAY` where nothing is left after detrending).
    """
    gls, ols = dfgls_detrended(levels, deterministic)
    away = np.max(np.abs(gls), axis=1) <= 1e-12
    lags = adf_lags(ols, max_lags, 0, criteria) if criteria else {}
    statistics: dict[str, np.ndarray] = {}
    status: dict[str, np.ndarray] = {}
    for criterion, chosen in lags.items():
        values, codes = dickey_fuller_statistics(gls, chosen, 0)
        codes = np.where(away, DETRENDED_AWAY, codes)
        statistics[criterion] = np.where(away, math.nan, values)
        status[criterion] = codes
    return statistics, lags, status, np.where(away, DETRENDED_AWAY, OK)


# --- the whole battery on a block of series -----------------------------------------------------------


@dataclass(frozen=True, slots=True)
class TestArrays:
    """One test with one specification on every row: statistic, p-value (and bound), lags, status."""

    __test__ = False  # not a pytest class

    statistic: np.ndarray
    pvalue: np.ndarray
    bound: np.ndarray
    lags: np.ndarray
    status: np.ndarray


@dataclass(frozen=True, slots=True)
class BatteryArrays:
    """The default battery on a block of series: ``tests[(level, test, deterministic, criterion)]``.

    ``criterion`` is None for PP and KPSS, which search no lags.
    """

    tests: dict[tuple[int, str, str, str | None], TestArrays]
    lengths: dict[int, int]


def battery(values: np.ndarray, *, max_order: int = 2, terms: Sequence[str] = ("constant", "constant-trend"),
            criteria: Sequence[str] = ("aic",), kpss_lags: str = "short") -> BatteryArrays:
    """ADF, Phillips-Perron, DF-GLS and KPSS at every differencing level 0..max_order of every row.

    The settings are those of reportgen's decision rule (:func:`~reportgen.stats.order.integration_order`):
    ADF and DF-GLS lags searched from 0 to Schwert's floor rule (reduced when infeasible) by each
    criterion, the Phillips-Perron bandwidth by Newey and West (1994), the KPSS bandwidth the short
    rule ``int(4 (T/100)^(1/4))`` (``kpss_lags="auto"``: Hobijn et al. 1998). Each row is divided by
    its largest absolute value first. Statistics of refused rows are NaN with their status code.
    BLAS runs single-threaded inside (:func:`~reportgen.stats.numerics.single_threaded_blas`).

    Parameters
    ----------
    values : numpy.ndarray
        One series per row, in levels, all of the same length, finite.
    max_order : int, default 2
        Highest differencing level tested.
    terms : sequence of {"constant", "constant-trend"}
        Deterministic terms, each run at every level.
    criteria : sequence of {"aic", "bic", "t-stat"}
        Lag criteria of ADF and DF-GLS (the grid uses all three).
    kpss_lags : {"short", "auto"}
        KPSS bandwidth rule.

    Returns
    -------
    BatteryArrays
    """
    with single_threaded_blas():
        return _battery(np.atleast_2d(np.asarray(values, dtype=float)), max_order, terms, criteria, kpss_lags)


def _battery(values: np.ndarray, max_order: int, terms: Sequence[str], criteria: Sequence[str],
             kpss_lags: str) -> BatteryArrays:
    tests: dict[tuple[int, str, str, str | None], TestArrays] = {}
    lengths: dict[int, int] = {}
    current = values
    for level in range(max_order + 1):
        if level:
            current = np.diff(current, axis=1)
        length = current.shape[1]
        lengths[level] = length
        rows = normalised_rows(current)
        for deterministic in terms:
            trend_count = TREND_COUNT[deterministic]
            regression = _REGRESSION[deterministic]
            max_lags = min(schwert_max_lags(length), length // 2 - trend_count - 1)
            lags = adf_lags(rows, max_lags, trend_count, criteria)
            for criterion, chosen in lags.items():
                statistic, status = dickey_fuller_statistics(rows, chosen, trend_count)
                pvalue, bound = mackinnon_pvalues(statistic, regression)
                tests[(level, "ADF", deterministic, criterion)] = TestArrays(statistic, pvalue, bound, chosen, status)
            pp = phillips_perron_arrays(rows, trend_count)
            pvalue, bound = mackinnon_pvalues(pp.statistic, regression)
            tests[(level, "PP", deterministic, None)] = TestArrays(pp.statistic, pvalue, bound, pp.bandwidth,
                                                                   pp.status)
            statistics, gls_lags, statuses, _ = dfgls_arrays(rows, deterministic, criteria, max_lags)
            for criterion in criteria:
                tests[(level, "DF-GLS", deterministic, criterion)] = TestArrays(
                    statistics[criterion], np.full(len(rows), math.nan), np.zeros(len(rows), dtype=int),
                    gls_lags[criterion], statuses[criterion])
            bandwidth = kpss_short_bandwidth(length) if kpss_lags == "short" else None
            statistic, used = kpss_arrays(rows, trend_count, bandwidth)
            tests[(level, "KPSS", deterministic, None)] = TestArrays(
                statistic, np.full(len(rows), math.nan), np.zeros(len(rows), dtype=int), used,
                np.full(len(rows), OK))
    return BatteryArrays(tests=tests, lengths=lengths)
