"""Least squares for long series: one decomposition for nested candidate regressions.

Lag searches (ADF, DF-GLS, Zivot-Andrews, Engle-Granger, dynamic OLS) compare regressions whose
columns are nested: each candidate adds columns to the one before. One decomposition of the
largest design gives every candidate's residual sum of squares: with ``X = Q R`` and
``p = Q'y``, the model on the first ``j`` columns leaves ``SSR_full + sum_{i >= j} p_i^2``.

Every decomposition works on the design with its columns scaled to unit length, so none depends
on the units of the variables. Below :data:`LARGE_SAMPLE` observations it is Householder QR
(LAPACK ``geqrf``), backward stable whatever the conditioning, so short series get the most
accurate arithmetic there is. From :data:`LARGE_SAMPLE` observations on, where Householder QR of a
100,000 x 70 design takes seconds, two cheaper routes are taken when the design is well
enough conditioned for them, and Householder QR otherwise:

* :func:`nested_least_squares` solves the normal equations (Cholesky of ``X'X``), whose error
  grows with the square of the condition number: used up to a condition number of
  :data:`NORMAL_EQUATIONS_CONDITION_LIMIT`.
* :func:`orthonormal_factor`, which must return ``Q`` itself, uses CholeskyQR2: ``Q_1 = X R_1^-1``
  from the Cholesky factor of ``X'X``, and a second pass on ``Q_1`` that restores orthogonality to
  machine precision; as accurate as Householder QR up to a condition number of
  :data:`CHOLESKY_CONDITION_LIMIT`.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from typing import Final

import numpy as np
import scipy.linalg
from threadpoolctl import threadpool_limits

__all__ = [
    "CHOLESKY_CONDITION_LIMIT",
    "LARGE_SAMPLE",
    "NORMAL_EQUATIONS_CONDITION_LIMIT",
    "NestedFit",
    "nested_least_squares",
    "orthonormal_factor",
    "single_threaded_blas",
]

#: From this many observations on, CholeskyQR2 is tried before Householder QR.
LARGE_SAMPLE: Final[int] = 10_000
#: Largest condition number of the column-scaled design for which CholeskyQR2 is used.
CHOLESKY_CONDITION_LIMIT: Final[float] = 1e6
#: Largest condition number of the column-scaled design for which the normal equations are used.
NORMAL_EQUATIONS_CONDITION_LIMIT: Final[float] = 1e4


@dataclass(frozen=True, slots=True)
class NestedFit:
    """The triangular factor of a column-scaled least-squares problem.

    ``projections[j]`` is ``(Q'y)_j``, the share of ``y`` the ``j``-th column adds to the columns
    before it; ``r_diagonal`` the diagonal of ``R`` (positive); ``residual_sum`` the residual sum
    of squares of the full model; ``method`` ``"qr"`` or ``"gram"``.
    """

    projections: np.ndarray
    r_factor: np.ndarray
    residual_sum: float
    method: str

    def sums_of_squares(self) -> np.ndarray:
        """Residual sum of squares of the model on columns ``0..j``, for every ``j``.

        Summing the squared projections beyond the model's columns, not subtracting from the total,
        keeps every term positive.
        """
        squares = self.projections**2
        beyond = np.concatenate([np.cumsum(squares[::-1])[::-1][1:], [0.0]])
        return self.residual_sum + beyond

    def last_t_statistics(self, nobs: int) -> np.ndarray:
        """Classical t-statistic of the last column of the model on columns ``0..j``, for every ``j``.

        The last coefficient of a nested model is ``p_j / R_jj`` and its standard error
        ``s / R_jj``, so the t-statistic is ``p_j / s`` with ``s^2 = SSR_j / (n - j - 1)``.
        """
        sums = self.sums_of_squares()
        freedom = nobs - np.arange(1, sums.size + 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            return self.projections / np.sqrt(sums / freedom)


def _column_scaled(design: np.ndarray) -> np.ndarray:
    norms = np.sqrt(np.einsum("ij,ij->j", design, design))
    return design / np.where(norms > 0.0, norms, 1.0)


def _householder(scaled: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    q_factor, r_factor = np.linalg.qr(scaled, mode="reduced")
    signs = np.where(np.diag(r_factor) < 0.0, -1.0, 1.0)
    return q_factor * signs, signs[:, None] * r_factor


def _cholesky_qr2(scaled: np.ndarray) -> tuple[np.ndarray, np.ndarray] | None:
    """CholeskyQR2 (Fukaya et al. 2014); None when the design is too ill-conditioned for it."""
    try:
        first = scipy.linalg.cholesky(scaled.T @ scaled, lower=False, check_finite=False)
    except np.linalg.LinAlgError:
        return None
    singular_values = np.linalg.svd(first, compute_uv=False)
    if not singular_values[-1] > 0.0 or singular_values[0] / singular_values[-1] > CHOLESKY_CONDITION_LIMIT:
        return None
    q_first = scipy.linalg.solve_triangular(first, scaled.T, trans="T", lower=False, check_finite=False).T
    try:
        second = scipy.linalg.cholesky(q_first.T @ q_first, lower=False, check_finite=False)
    except np.linalg.LinAlgError:
        return None
    q_factor = scipy.linalg.solve_triangular(second, q_first.T, trans="T", lower=False, check_finite=False).T
    return q_factor, second @ first


def orthonormal_factor(design: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """``Q`` (T x k, orthonormal columns) and ``R`` (upper triangular, positive diagonal) of the
    column-scaled design: ``design / norms = Q R``.

    Householder QR below :data:`LARGE_SAMPLE` observations, CholeskyQR2 from there on when the
    scaled design's condition number is at most :data:`CHOLESKY_CONDITION_LIMIT`.

    References
    ----------
    Fukaya, T., Nakatsukasa, Y., Yanagisawa, Y. and Yamamoto, Y. (2014). CholeskyQR2: a simple and
    communication-avoiding algorithm for computing a tall-skinny QR factorization on a large-scale
    parallel system. *Proceedings of the 5th Workshop on Latest Advances in Scalable Algorithms for
    Large-Scale Systems*, 31-38.
    """
    scaled = _column_scaled(np.asarray(design, dtype=float))
    if scaled.shape[0] >= LARGE_SAMPLE:
        factors = _cholesky_qr2(scaled)
        if factors is not None:
            return factors
    return _householder(scaled)


def _by_qr(scaled: np.ndarray, response: np.ndarray) -> NestedFit:
    augmented = np.column_stack([scaled, response])
    r_augmented = scipy.linalg.qr(augmented, mode="r", check_finite=False)[0]
    columns = scaled.shape[1]
    r_factor = r_augmented[:columns, :columns]
    signs = np.where(np.diag(r_factor) < 0.0, -1.0, 1.0)
    projections = signs * r_augmented[:columns, columns]
    residual = float(r_augmented[columns, columns]) if r_augmented.shape[0] > columns else 0.0
    return NestedFit(
        projections=projections,
        r_factor=signs[:, None] * r_factor,
        residual_sum=residual**2,
        method="qr",
    )


def _by_normal_equations(scaled: np.ndarray, response: np.ndarray) -> NestedFit | None:
    """Cholesky of ``X'X``, ``p = R^-T X'y``, the residuals computed from the fitted equation.

    None when the scaled design's condition number exceeds :data:`NORMAL_EQUATIONS_CONDITION_LIMIT`.
    """
    try:
        upper = scipy.linalg.cholesky(scaled.T @ scaled, lower=False, check_finite=False)
    except np.linalg.LinAlgError:
        return None
    singular_values = np.linalg.svd(upper, compute_uv=False)
    if not singular_values[-1] > 0.0 or singular_values[0] / singular_values[-1] > NORMAL_EQUATIONS_CONDITION_LIMIT:
        return None
    projections = scipy.linalg.solve_triangular(upper, scaled.T @ response, trans="T", lower=False,
                                                check_finite=False)
    coefficients = scipy.linalg.solve_triangular(upper, projections, lower=False, check_finite=False)
    residuals = response - scaled @ coefficients
    return NestedFit(
        projections=projections,
        r_factor=upper,
        residual_sum=float(residuals @ residuals),
        method="normal-equations",
    )


def nested_least_squares(design: np.ndarray, response: np.ndarray) -> NestedFit:
    """Factor a least-squares problem once for all its nested sub-models (columns ``0..j``).

    Below :data:`LARGE_SAMPLE` observations by Householder QR of ``[X y]``; from there on by the
    normal equations (Cholesky of ``X'X``, one matrix product; the residual sum of squares from the
    residuals of the fitted equation, not by subtraction) when the scaled design's condition number
    is at most :data:`NORMAL_EQUATIONS_CONDITION_LIMIT`, so that the error, which grows with its
    square, stays below about 2e-8; by Householder QR otherwise.

    Parameters
    ----------
    design : numpy.ndarray
        T x k regressors, finite; the candidates are its leading columns.
    response : numpy.ndarray
        The length-T dependent variable.

    Returns
    -------
    NestedFit
        On the design with unit-length columns (the projections do not depend on column scaling).

    References
    ----------
    Golub, G. H. and Van Loan, C. F. (2013). *Matrix Computations*, 4th ed. Johns Hopkins
    University Press, section 5.3 (least squares by QR and by the normal equations) and 5.3.7
    (column scaling).

    Higham, N. J. (2002). *Accuracy and Stability of Numerical Algorithms*, 2nd ed. SIAM,
    chapter 20 (the normal equations' error grows with the squared condition number).
    """
    design = np.asarray(design, dtype=float)
    response = np.asarray(response, dtype=float)
    scaled = _column_scaled(design)
    if design.shape[0] >= LARGE_SAMPLE:
        fit = _by_normal_equations(scaled, response)
        if fit is not None:
            return fit
    return _by_qr(scaled, response)


@contextmanager
def single_threaded_blas() -> Iterator[None]:
    """Run the enclosed block with every BLAS and OpenMP thread pool limited to one thread.

    reportgen's least squares works on many small matrices, where a multi-threaded BLAS spends
    more time waking and synchronising threads than computing; with several worker processes each
    running a battery, the pools also compete for the same cores (on two busy cores a battery took
    five to twenty times longer with OpenBLAS' default two threads). Wrap bulk work in this block,
    once per worker: ``with single_threaded_blas(): ...`` (entering costs about a millisecond). The
    previous limits are restored on exit. The engine's own reductions never use BLAS threads; a BLAS
    or LAPACK call may round differently with another number of threads, so runs that must agree to
    the last bit should use the same setting.

    Uses threadpoolctl, which changes the limits of the BLAS libraries already loaded (numpy's and
    scipy's OpenBLAS) at run time; environment variables such as ``OPENBLAS_NUM_THREADS`` only act
    when set before numpy is first imported.
    """
    with threadpool_limits(limits=1):
        yield
