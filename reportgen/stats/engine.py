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
lag distance, corrects the shifted windows by the few products at their ends, gets the lagged
level's products from ``y_s = y_{s-j} + dy_{s-1} + .. + dy_{s-j}`` and every column's sum from
telescoping, and :func:`_partialled` removes the constant and trend analytically (they are the same
for every column). A Cholesky factor of the result gives every nested lag order's residual sum of
squares and last t-statistic (the projections ``(Q'y)_j`` are the last row of the factor). The lag
search costs ``lags + 4`` passes over the data instead of ``lags + 1`` regressions of
``O(T lags^2)`` each. The chosen lag is refitted on its own, longer sample from the same cross
products plus the few rows the common sample left out (:func:`adf_arrays`), or, for a lag given
by the caller, from its own cross products (:func:`dickey_fuller_statistics`); the two agree to
about 1e-13.

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
#: Kwiatkowski, Phillips, Schmidt and Shin (1992), Table 1, asymptotic critical values (10% to 1%).
KPSS_TABLE: Final[dict[str, dict[str, float]]] = {
    "constant": {"10%": 0.347, "5%": 0.463, "2.5%": 0.574, "1%": 0.739},
    "constant-trend": {"10%": 0.119, "5%": 0.146, "2.5%": 0.176, "1%": 0.216},
}
#: Elliott, Rothenberg and Stock (1996), Table I, DF-GLS with constant and trend (1%, 5%, 10%), by
#: sample size; ``math.inf`` is the asymptotic row. Transcribed from memory (REFERENCES.md section 6).
ERS_TREND_TABLE: Final[dict[float, tuple[float, float, float]]] = {
    50.0: (-3.77, -3.19, -2.89),
    100.0: (-3.58, -3.03, -2.74),
    200.0: (-3.46, -2.93, -2.64),
    math.inf: (-3.48, -2.89, -2.57),
}
#: Autocovariances are summed directly up to this many lags, taken from an FFT beyond.
DIRECT_AUTOCOVARIANCE_LAGS: Final[int] = 128

_TINY: Final[float] = float(np.finfo(float).tiny)
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


def _windows(values: np.ndarray, width: int) -> np.ndarray:
    """Read-only view ``[:, t, :] = values[:, t : t + width]`` (``sliding_window_view`` without its checks)."""
    rows, length = values.shape
    row_stride, column_stride = values.strides
    return np.lib.stride_tricks.as_strided(values, shape=(rows, length - width + 1, width),
                                           strides=(row_stride, column_stride, column_stride), writeable=False)


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


@dataclass(frozen=True, slots=True)
class _Shift:
    """Rows with their least-squares mean or line removed: ``rows = shifted + offset + slope * x``."""

    shifted: np.ndarray
    offset: np.ndarray
    slope: np.ndarray


def _remove_terms(values: np.ndarray, trend_count: int) -> _Shift:
    """The rows minus their least-squares mean (1) or line (2), ``x = 0 .. T-1``, and the line removed.

    Differences of the result are those of the rows less the slope. No statistic depends on the
    shift (the deterministic terms absorb it); it only keeps the cross products well scaled.
    """
    rows, length = values.shape
    zero = np.zeros(rows)
    if trend_count == 0:
        return _Shift(values, zero, zero)
    mean = values.mean(axis=1)
    if trend_count == 1:
        return _Shift(values - mean[:, None], mean, zero)
    centred = np.arange(length) - (length - 1.0) / 2.0
    slope = np.einsum("ij,j->i", values, centred) / float(centred @ centred)
    line = slope[:, None] * centred
    line += mean[:, None]
    return _Shift(values - line, mean - slope * ((length - 1.0) / 2.0), slope)


@dataclass(frozen=True, slots=True)
class _Factor:
    """The Cholesky factor of one block of ADF regressions (the deterministic terms removed).

    Columns are ordered as the caller asked, the response last. ``lower[:, -1, :-1]`` are the
    projections ``(Q'y)_j``, ``lower[:, -1, -1]**2`` the full model's residual sum of squares;
    ``trusted`` the rows whose columns (and response) all keep at least :data:`FAST_SHARE` of their
    raw squared length and whose factorisation succeeded.
    """

    lower: np.ndarray
    trusted: np.ndarray


@functools.lru_cache(maxsize=256)
def _gram_layout(lags: int) -> tuple[np.ndarray, ...]:
    """Index arrays that place the lag-distance sums into the Gram matrix of :func:`_regression_gram`.

    Pair ``(i, j = i + h)`` of lags (lag 0 is the response) is base sum ``h`` corrected by the ``i``
    products at each end of the window; lag ``j >= 1`` is column ``j``, the response column
    ``lags + 1``, the lagged level column 0.
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
    def column(lag: np.ndarray) -> np.ndarray:
        return np.where(lag == 0, lags + 1, lag)

    return distance_index, corrected, position, column(shift_index), column(shift_index + distance_index), upper


@functools.lru_cache(maxsize=1024)
def _end_indices(start: int, end: int, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """Positions of ``dy_{v-h}`` for the last ``lags`` rows ``v`` before ``start`` and ``end`` (latest
    first), ``h = 0 .. lags`` (clipped at 0 where never used)."""
    offsets = np.arange(lags + 1)
    head = np.maximum(np.arange(start - 1, start - lags - 1, -1)[:, None] - offsets, 0)
    tail = np.arange(end - 1, end - lags - 1, -1)[:, None] - offsets
    return head, tail


def _running_sums(values: np.ndarray) -> None:
    """Cumulative sums along axis 1, in place, adding in order (the bits of ``numpy.cumsum``)."""
    if values.shape[0] < 64:
        np.cumsum(values, axis=1, out=values)
        return
    for position in range(1, values.shape[1]):
        values[:, position] += values[:, position - 1]


def _end_sums(values: np.ndarray, start: int, end: int, lags: int) -> tuple[np.ndarray, np.ndarray]:
    """``sum(values[start - k : start])`` and ``sum(values[end - k : end])`` for ``k = 1 .. lags``."""
    if not lags:
        empty = np.zeros((values.shape[0], 0))
        return empty, empty
    head = np.cumsum(values[:, start - lags : start][:, ::-1], axis=1)
    tail = np.cumsum(values[:, end - lags : end][:, ::-1], axis=1)
    return head, tail


#: Rows per block of :func:`_regression_gram`: its temporaries stay small (in cache, and reused by
#: the allocator instead of being mapped afresh). A row's numbers do not depend on the block.
GRAM_BLOCK_ROWS: Final[int] = 128


@dataclass(frozen=True, slots=True)
class _Products:
    """Cross products of the centred ADF columns over a window of ``nobs`` rows (deterministic terms
    not yet removed), with each column's sum and ``1..n``-weighted sum (None without terms)."""

    raw: np.ndarray
    sums: np.ndarray | None
    weighted: np.ndarray | None
    nobs: int

    def diagonal(self) -> np.ndarray:
        return np.diagonal(self.raw, axis1=1, axis2=2)


def _partialled(raw: np.ndarray, sums: np.ndarray | None, weighted: np.ndarray | None, nobs: int,
                trend_count: int) -> np.ndarray:
    """The cross products with the constant (and the trend ``1..n``) projected out, analytically."""
    if trend_count == 0 or sums is None or weighted is None:
        return raw
    constant_part = sums / math.sqrt(nobs)
    gram = raw - constant_part[:, :, None] * constant_part[:, None, :]
    if trend_count == 2:
        mean_trend = (nobs + 1.0) / 2.0
        spread = math.sqrt(nobs * (nobs * nobs - 1.0) / 12.0) if nobs > 1 else 1.0
        trend_part = (weighted - mean_trend * sums) / spread
        gram -= trend_part[:, :, None] * trend_part[:, None, :]
    return gram


def _regression_gram(levels: np.ndarray, start: int, lags: int, trend_count: int) -> _Products:
    """:func:`_block_gram` on blocks of at most :data:`GRAM_BLOCK_ROWS` rows."""
    rows = levels.shape[0]
    nobs = levels.shape[1] - 1 - start
    if rows <= GRAM_BLOCK_ROWS:
        return _Products(*_block_gram(levels, start, lags, trend_count), nobs=nobs)
    parts = [_block_gram(levels[first : first + GRAM_BLOCK_ROWS], start, lags, trend_count)
             for first in range(0, rows, GRAM_BLOCK_ROWS)]
    raw, sums, weighted = zip(*parts, strict=True)
    if trend_count == 0:
        return _Products(np.concatenate(raw), None, None, nobs)
    return _Products(np.concatenate(raw), np.concatenate(sums), np.concatenate(weighted), nobs)


def _block_gram(levels: np.ndarray, start: int, lags: int, trend_count: int
                ) -> tuple[np.ndarray, np.ndarray | None, np.ndarray | None]:
    """Cross products of ``[y_s, dy_{s-1}, .., dy_{s-lags}, dy_s]`` over ``s = start .. T-2``.

    Column 0 is the lagged level, column ``j`` the difference at lag ``j``, the last column the
    response ``dy_s``. ``levels`` are already centred or detrended (:func:`_remove_terms`); ``start >= lags``. The
    deterministic terms of ``trend_count`` (a constant; a constant and the trend ``1..n``) are removed
    from every cross product analytically. Returns the Gram matrix after that removal, its
    diagonal before it, and (with deterministic terms) every column's sum and ``1..n``-weighted sum.

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
    response = lags + 1

    window = differences[:, start:end]
    view = _windows(differences, nobs)  # view[:, t] = dy[t : t + n]
    base = np.einsum("rhs,rs->rh", view[:, start - lags : start + 1][:, ::-1], window)  # sum_s dy_s dy_{s-h}
    values = base[:, distance_index]
    if lags:
        # D_h(v) = dy_{v-h} dy_v for the last `lags` rows before the start and before the end of the
        # window; the pair (i, i + h) adds sum_{v=start-i..start-1} D_h(v) and removes the same at the end.
        # (Entries with v - h < 0 are never used: they would need i > lags - h.)
        head_index, tail_index = _end_indices(start, end, lags)
        head = differences[:, head_index]
        tail = differences[:, tail_index]
        ends = head * head[:, :, :1]
        ends -= tail * tail[:, :, :1]  # [v, h], v from the window's edge backwards
        _running_sums(ends)  # [k - 1, h]: the last k rows
        values += np.where(corrected, ends[:, position, distance_index], 0.0)
    gram = np.empty((rows, size, size))
    gram[:, first, second] = values
    gram[:, second, first] = values

    # The lagged level: sum_s y_s dy_{s-j} = sum_s y_{s-j} dy_{s-j} + sum_{i=1..j} sum_s dy_{s-i} dy_{s-j}.
    level = levels[:, start:end]
    gram[:, 0, 0] = _rowdot(level, level)
    own = _rowdot(level, window)
    cross = np.empty((rows, lags + 1))
    cross[:, 0] = own
    if lags:
        entering = levels[:, start - lags : start] * differences[:, start - lags : start]
        leaving = levels[:, end - lags : end] * differences[:, end - lags : end]
        shifted_own = entering[:, ::-1] - leaving[:, ::-1]
        _running_sums(shifted_own)
        cross[:, 1:] = own[:, None] + shifted_own + np.where(upper, gram[:, 1:response, 1:response], 0.0).sum(axis=1)
    gram[:, 0, 1:response] = cross[:, 1:]
    gram[:, 1:response, 0] = cross[:, 1:]
    gram[:, 0, response] = cross[:, 0]
    gram[:, response, 0] = cross[:, 0]
    if trend_count == 0:
        return gram, None, None

    # Window sums: sum_s dy_{s-j} = y_{end-j} - y_{start-j}; sum_s r dy_{s-j} = n y_{end-j} - sum_s y_{s-j}
    # with r = 1..n (summation by parts); the level's directly.
    lag_numbers = np.arange(lags + 1)
    level_sum = level.sum(axis=1)
    sums = np.empty((rows, size))
    weighted = np.empty((rows, size))
    sums[:, 0] = level_sum
    difference_sums = levels[:, end - lag_numbers] - levels[:, start - lag_numbers]
    sums[:, 1:response] = difference_sums[:, 1:]
    sums[:, response] = difference_sums[:, 0]
    shifted_level_sums = np.empty((rows, lags + 1))  # sum of y_{s-j} over the window, j = 0..lags
    shifted_level_sums[:, 0] = level_sum
    if lags:
        head_level, tail_level = _end_sums(levels, start, end, lags)
        shifted_level_sums[:, 1:] = level_sum[:, None] + head_level - tail_level
    weighted[:, 0] = np.einsum("ij,j->i", level, np.arange(1.0, nobs + 1.0))
    difference_weighted = nobs * levels[:, end - lag_numbers] - shifted_level_sums
    weighted[:, 1:response] = difference_weighted[:, 1:]
    weighted[:, response] = difference_weighted[:, 0]
    return gram, sums, weighted


def _factor(gram: np.ndarray, raw_diagonal: np.ndarray, order: Sequence[int] | None = None) -> _Factor:
    """Cholesky factor of the Gram matrix with its columns in ``order`` (response last; None: as they are).

    Cholesky's rounding does not depend on the scale of the columns (its error bound is invariant
    under diagonal scaling), so the matrix is factored as it is; each column's share of its raw
    squared length left after the columns before it is ``L_jj^2 / raw_j``.
    """
    if order is None:
        permuted, raw = gram, raw_diagonal
    else:
        index = np.asarray(order)
        permuted = gram[:, index[:, None], index[None, :]]
        raw = raw_diagonal[:, index]
    size = permuted.shape[1]
    usable = np.all(raw > 0.0, axis=1) & np.all(np.isfinite(permuted), axis=(1, 2))
    if not usable.all():
        permuted = permuted.copy()
        permuted[~usable] = np.eye(size)
    try:
        lower = np.linalg.cholesky(permuted)
        factored = np.ones(permuted.shape[0], dtype=bool)
    except np.linalg.LinAlgError:
        lower = np.zeros_like(permuted)
        factored = np.zeros(permuted.shape[0], dtype=bool)
        for row in range(permuted.shape[0]):
            try:
                lower[row] = np.linalg.cholesky(permuted[row])
                factored[row] = True
            except np.linalg.LinAlgError:
                lower[row] = np.eye(size)
    with np.errstate(divide="ignore", invalid="ignore"):
        shares = np.diagonal(lower, axis1=1, axis2=2) ** 2 / raw
    trusted = usable & factored & np.all(shares >= FAST_SHARE, axis=1)
    return _Factor(lower=lower, trusted=trusted)


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
    sums = np.maximum(sums, _TINY)  # an exact fit ranks first, not as NaN
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
    return _search(levels, _remove_terms(levels, trend_count), max_lags, trend_count, criteria)


def _search(levels: np.ndarray, shift: _Shift, max_lags: int, trend_count: int,
            criteria: Sequence[str]) -> dict[str, np.ndarray]:
    return _searched(levels, shift, max_lags, trend_count, criteria)[0]


def _searched(levels: np.ndarray, shift: _Shift, max_lags: int, trend_count: int,
              criteria: Sequence[str]) -> tuple[dict[str, np.ndarray], _Products]:
    rows, length = levels.shape
    nobs = length - 1 - max_lags
    first = trend_count
    largest = min(max_lags, nobs - first - 2)  # candidates without a residual degree of freedom are left out
    if largest < 0:
        raise ValueError(f"{length} observations are too few for an ADF regression with {max_lags} lags")
    products = _regression_gram(shift.shifted, max_lags, max_lags, trend_count)
    gram = _partialled(products.raw, products.sums, products.weighted, nobs, trend_count)
    factor = _factor(gram, products.diagonal())  # level, lags 1..max, response
    projections = factor.lower[:, -1, :-1]
    residual_sum = factor.lower[:, -1, -1] ** 2
    beyond = np.cumsum((projections**2)[:, ::-1], axis=1)[:, ::-1]
    # the model on columns 0..j leaves the full model's residuals and the projections after j
    sums = residual_sum[:, None] + np.concatenate([beyond[:, 1:], np.zeros((rows, 1))], axis=1)
    freedom = nobs - first - np.arange(1, max_lags + 2)
    with np.errstate(divide="ignore", invalid="ignore"):
        t_statistics = projections / np.sqrt(sums / freedom)
    chosen = {
        criterion: _choose(sums[:, : largest + 1], t_statistics, nobs, trend_count, largest, criterion)
        for criterion in criteria
    }
    for row in np.flatnonzero(~factor.trusted):
        exact_sums, exact_t, _ = _exact_search(levels[row], max_lags, trend_count)
        candidates = exact_sums[first : first + largest + 1][None, :]
        for criterion in criteria:
            chosen[criterion][row] = _choose(candidates, exact_t[None, first:], nobs, trend_count, largest,
                                             criterion)[0]
    return {criterion: np.asarray(values, dtype=int) for criterion, values in chosen.items()}, products


def _original_lengths(raw: np.ndarray, sums: np.ndarray | None, weighted: np.ndarray | None, shift: _Shift,
                      start: int, end: int, level: int = 0) -> np.ndarray:
    """Squared lengths of the columns of :func:`_regression_gram` as given (not centred) over
    ``s = start .. end-1``: the scale on which the refusals are judged.

    The level column (``level``) is the centred one plus ``a + b s``, each difference column plus ``b``; the
    lengths follow from the centred columns' lengths, sums and weighted sums. They are only compared
    with thresholds far from the refusals', so the rounding of the sums does not matter.
    """
    if sums is None or weighted is None:
        return raw
    nobs = end - start
    slope = shift.slope[:, None]
    lengths = raw + 2.0 * slope * sums + nobs * slope**2
    index_sum = nobs * (start + end - 1) / 2.0
    last, first = end - 1, start - 1
    square_sum = (last * (last + 1) * (2 * last + 1) - first * (first + 1) * (2 * first + 1)) / 6.0
    length = raw[:, level] + 2.0 * shift.offset * sums[:, level]
    length += 2.0 * shift.slope * (weighted[:, level] + (start - 1.0) * sums[:, level])
    length += nobs * shift.offset**2 + 2.0 * shift.offset * shift.slope * index_sum + shift.slope**2 * square_sum
    lengths[:, level] = length
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
    return _refit(levels, _remove_terms(levels, trend_count), lags, trend_count)


def _refit(levels: np.ndarray, shift: _Shift, lags: np.ndarray | int, trend_count: int
           ) -> tuple[np.ndarray, np.ndarray]:
    rows, length = levels.shape
    lags = np.broadcast_to(np.asarray(lags, dtype=int), (rows,))
    statistics = np.full(rows, math.nan)
    status = np.full(rows, OK)
    distinct = np.unique(lags) if rows > 1 else lags[:1]
    for lag in distinct:
        members = np.flatnonzero(lags == lag) if distinct.size > 1 else np.arange(rows)
        lag = int(lag)
        nobs = length - 1 - lag
        freedom = nobs - trend_count - lag - 1
        part = shift if members.size == rows else _Shift(shift.shifted[members], shift.offset[members],
                                                         shift.slope[members])
        products = _regression_gram(part.shifted, lag, lag, trend_count)
        gram = _partialled(products.raw, products.sums, products.weighted, nobs, trend_count)
        raw, sums, weighted = products.diagonal(), products.sums, products.weighted
        order = [*range(1, lag + 1), 0, lag + 1]  # lagged differences, the level, the response
        factor = _factor(gram, raw, order)
        original = _original_lengths(raw, sums, weighted, part, lag, length - 1)[:, order]
        _keep_trusted(factor, original, freedom, members, levels, lag, trend_count, statistics, status)
    return statistics, status


def adf_arrays(levels: np.ndarray, max_lags: int, trend_count: int, criteria: Sequence[str] = CRITERIA
               ) -> dict[str, tuple[np.ndarray, np.ndarray, np.ndarray]]:
    """ADF with automatic lags on every row: for each criterion the lags, statistics and status.

    The lag search of :func:`adf_lags`; each chosen lag ``p`` is then refitted on its own sample from
    the search's cross products, adding the ``max_lags - p`` rows the search's common sample left
    out (:func:`_refit_from_search`), so the refits cost no further pass over the data. The numbers
    are those of :func:`dickey_fuller_statistics` up to rounding (the sums are added in another order).
    """
    levels = np.atleast_2d(np.asarray(levels, dtype=float))
    shift = _remove_terms(levels, trend_count)
    chosen, products = _searched(levels, shift, max_lags, trend_count, criteria)
    return {
        criterion: (lags, *_refit_from_search(levels, shift, products, max_lags, lags, trend_count))
        for criterion, lags in chosen.items()
    }


def _refit_from_search(levels: np.ndarray, shift: _Shift, products: _Products, max_lags: int, lags: np.ndarray,
                       trend_count: int) -> tuple[np.ndarray, np.ndarray]:
    """Each row's ADF regression with its own lag ``p`` on its own sample ``s = p .. T-2``.

    The search's cross products cover ``s = max_lags .. T-2`` for the level, lags ``1..max_lags``
    and the response; the regression with ``p`` lags uses the level, lags ``1..p`` and the response,
    and the rows ``s = p .. max_lags - 1`` are added explicitly (at most ``max_lags`` of them). Column
    sums and weighted sums are carried the same way, then the deterministic terms are removed for
    the longer sample. The same checks as :func:`dickey_fuller_statistics` decide which rows go to
    Householder QR.
    """
    rows, length = levels.shape
    end = length - 1
    statistics = np.full(rows, math.nan)
    status = np.full(rows, OK)
    centred = shift.shifted
    differences = np.diff(centred[:, : max_lags + 1], axis=1)  # dy_s for s < max_lags
    anchored = None
    if products.sums is not None and products.weighted is not None:
        # sum over the search window of s * column_s: the weights r = s - max_lags + 1 shifted back
        anchored = products.weighted + (max_lags - 1.0) * products.sums
    distinct = np.unique(lags) if rows > 1 else lags[:1]
    for lag in distinct:
        members = np.flatnonzero(lags == lag) if distinct.size > 1 else np.arange(rows)
        lag = int(lag)
        nobs = end - lag
        freedom = nobs - trend_count - lag - 1
        order = np.array([*range(1, lag + 1), 0, max_lags + 1])  # lags 1..p, the level, the response
        raw = products.raw[members][:, order[:, None], order[None, :]]
        sums = products.sums[members][:, order] if products.sums is not None else None
        weighted = anchored[members][:, order] if anchored is not None else None
        extra = np.arange(lag, max_lags)  # the rows the search's common sample left out
        if extra.size:
            added = np.empty((members.size, extra.size, lag + 2))
            added[:, :, :lag] = differences[members[:, None, None], extra[:, None] - np.arange(1, lag + 1)]
            added[:, :, lag] = centred[members[:, None], extra]
            added[:, :, lag + 1] = differences[members[:, None], extra]
            for position, row in enumerate(extra):  # in order of the rows: the sums do not depend on the block
                values = added[:, position]
                raw = raw + values[:, :, None] * values[:, None, :]
                if sums is not None and weighted is not None:
                    sums = sums + values
                    weighted = weighted + float(row) * values
        if sums is not None and weighted is not None:
            weighted = weighted - (lag - 1.0) * sums  # back to r = s - p + 1
        part = _Shift(centred[members], shift.offset[members], shift.slope[members])
        gram = _partialled(raw, sums, weighted, nobs, trend_count)
        diagonal = np.diagonal(raw, axis1=1, axis2=2)
        factor = _factor(gram, diagonal)
        original = _original_lengths(diagonal, sums, weighted, part, lag, end, level=lag)
        _keep_trusted(factor, original, freedom, members, levels, lag, trend_count, statistics, status)
    return statistics, status


def _keep_trusted(factor: _Factor, original: np.ndarray, freedom: int | np.ndarray, members: np.ndarray,
                  levels: np.ndarray, lag: int, trend_count: int, statistics: np.ndarray, status: np.ndarray) -> None:
    """Write the t-statistics of ``members`` read off ``factor`` where the factorisation can be trusted,
    and refit the others exactly (see :func:`_exact_statistic`).

    Trusted: finite, with degrees of freedom left, and every column (and the fit) keeping a fair
    share of its length after the columns before it, on the scale of the columns as given
    (``original``), so that cancellation has not eaten the digits.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        values = factor.lower[:, -1, -2] / np.sqrt(factor.lower[:, -1, -1] ** 2 / freedom)
    kept = np.diagonal(factor.lower, axis1=1, axis2=2) ** 2
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
    if clipped.size == 1:  # the same arithmetic, one polynomial
        polynomial = np.polyval(small if float(clipped.flat[0]) <= star else large, clipped)
    else:
        polynomial = np.where(clipped <= star, np.polyval(small, clipped), np.polyval(large, clipped))
    return scipy.special.ndtr(polynomial), bound


@functools.lru_cache(maxsize=4096)
def mackinnon_critical_values(regression: str, nobs: int) -> tuple[float, float, float]:
    """MacKinnon's (2010) 1%, 5% and 10% critical values at ``nobs`` (N = 1), as statsmodels' ``mackinnoncrit``."""
    coefficients = tau_2010s[regression][0, :, ::-1]
    values = np.polyval(coefficients.T, 1.0 / nobs)
    return float(values[0]), float(values[1]), float(values[2])


def dfgls_trend_critical_values(nobs: int) -> dict[str, float]:
    """DF-GLS critical values with constant and trend: Elliott, Rothenberg and Stock (1996), Table I.

    The table's rows (T = 50, 100, 200 and infinity) are interpolated linearly in ``1/T``; below
    T = 50 the T = 50 row is used.

    Parameters
    ----------
    nobs : int
        Number of observations of the series (the sample that is GLS-detrended).

    Returns
    -------
    dict
        ``{"1%": ..., "5%": ..., "10%": ...}``.

    References
    ----------
    Elliott, G., Rothenberg, T. J. and Stock, J. H. (1996). Efficient tests for an autoregressive
    unit root. *Econometrica* 64, 813-836.
    """
    if nobs < 1:
        raise ValueError(f"nobs must be positive; got {nobs}")
    inverse = [0.0 if math.isinf(size) else 1.0 / size for size in ERS_TREND_TABLE]
    order = np.argsort(inverse)
    positions = np.asarray(inverse)[order]
    rows = np.asarray(list(ERS_TREND_TABLE.values()))[order]
    return {
        key: float(np.interp(1.0 / nobs, positions, rows[:, column]))
        for column, key in enumerate(("1%", "5%", "10%"))
    }


def table_pvalues(statistics: np.ndarray, points: Sequence[float], levels: Sequence[float],
                  ) -> tuple[np.ndarray, np.ndarray]:
    """p-values interpolated linearly in a table of critical values (``numpy.interp``), a bound beyond.

    ``points`` increase; ``levels`` are their significance levels. Returns the p-values and the
    bounds: ``-1`` where the p-value is below the table's smallest level (reported as that level, an
    upper bound), ``+1`` above its largest, ``0`` inside.
    """
    statistics = np.asarray(statistics, dtype=float)
    below, above = statistics < points[0], statistics > points[-1]
    first_is_smallest = levels[0] < levels[-1]
    bound = np.where(below, -1 if first_is_smallest else 1, np.where(above, 1 if first_is_smallest else -1, 0))
    pvalues = np.where(below, levels[0], np.where(above, levels[-1], np.interp(statistics, points, levels)))
    return pvalues, bound


# --- long-run variances -------------------------------------------------------------------------------


def _autocovariances(residuals: np.ndarray, lags: int) -> np.ndarray:
    """``sum_t u_t u_{t-j}`` for ``j = 0 .. lags`` of every row, ``(rows, lags + 1)``.

    Each sum is one reduction over a zero-padded window of the row's own length, so a row's sums
    do not depend on the other rows or on how many lags are asked for.
    """
    rows, nobs = residuals.shape
    padded = np.zeros((rows, nobs + lags))
    padded[:, :nobs] = residuals
    view = _windows(padded, nobs)[:, : lags + 1]
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
    lagged_left = _remove_terms(lagged, trend_count).shifted
    differences_left = _remove_terms(differences, trend_count).shifted
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
    residuals = _remove_terms(levels, trend_count).shifted
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


def dfgls_pvalues(statistics: np.ndarray, lags: np.ndarray, deterministic: str, length: int
                  ) -> tuple[np.ndarray, np.ndarray]:
    """DF-GLS p-values interpolated between the 1%, 5% and 10% critical values, a bound beyond.

    With constant the critical values are MacKinnon's (1996) without deterministic terms at the
    regression's ``T - 1 - lags`` observations; with constant and trend Elliott, Rothenberg and
    Stock's (1996) Table I at ``T`` (:func:`dfgls_trend_critical_values`).
    """
    pvalues = np.full(statistics.shape, math.nan)
    bounds = np.zeros(statistics.shape, dtype=int)
    if deterministic == "constant-trend":
        table = dfgls_trend_critical_values(length)
        return table_pvalues(statistics, [table["1%"], table["5%"], table["10%"]], (0.01, 0.05, 0.10))
    for lag in np.unique(lags):
        members = np.flatnonzero(lags == lag)
        points = mackinnon_critical_values("n", length - 1 - int(lag))
        pvalues[members], bounds[members] = table_pvalues(statistics[members], points, (0.01, 0.05, 0.10))
    return pvalues, bounds


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
            for criterion, (chosen, statistic, status) in adf_arrays(rows, max_lags, trend_count, criteria).items():
                pvalue, bound = mackinnon_pvalues(statistic, regression)
                tests[(level, "ADF", deterministic, criterion)] = TestArrays(statistic, pvalue, bound, chosen, status)
            pp = phillips_perron_arrays(rows, trend_count)
            pvalue, bound = mackinnon_pvalues(pp.statistic, regression)
            tests[(level, "PP", deterministic, None)] = TestArrays(pp.statistic, pvalue, bound, pp.bandwidth,
                                                                   pp.status)
            statistics, gls_lags, statuses, _ = dfgls_arrays(rows, deterministic, criteria, max_lags)
            for criterion in criteria:
                pvalue, bound = dfgls_pvalues(statistics[criterion], gls_lags[criterion], deterministic, length)
                tests[(level, "DF-GLS", deterministic, criterion)] = TestArrays(
                    statistics[criterion], pvalue, bound, gls_lags[criterion], statuses[criterion])
            bandwidth = kpss_short_bandwidth(length) if kpss_lags == "short" else None
            statistic, used = kpss_arrays(rows, trend_count, bandwidth)
            table = KPSS_TABLE[deterministic]
            pvalue, bound = table_pvalues(statistic, list(table.values()), (0.10, 0.05, 0.025, 0.01))
            tests[(level, "KPSS", deterministic, None)] = TestArrays(statistic, pvalue, bound, used,
                                                                     np.full(len(rows), OK))
    return BatteryArrays(tests=tests, lengths=lengths)
