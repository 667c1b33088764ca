"""Checks on the data before any statistic is computed: is there variation left to test?

A series that does not vary, or varies only in its last significant digits, has no order of
integration to find: every unit-root regression on it fits rounding error, and the statistics that
come out are numbers without meaning. :func:`check_variation` refuses such a series with a message
that says how constant it is. The check is scale-free: it compares the spread of the values with
their largest magnitude, so multiplying a series by 1e12 or 1e-12 never changes its outcome.
"""

from __future__ import annotations

import math
from typing import Final

import numpy as np
import pandas as pd

from reportgen.errors import ConstantSeriesError, SeriesScaleError

__all__ = ["MAGNITUDE_LIMIT", "VARIATION_LIMIT", "check_magnitude", "check_variation", "relative_spread",
           "varying_digit"]

#: A spread of at most this share of the largest magnitude counts as no variation (see
#: :func:`check_variation` for why 1e-10).
VARIATION_LIMIT: Final[float] = 1e-10


#: Values must lie within 1e-100 to 1e100 in magnitude (see :func:`check_magnitude`).
MAGNITUDE_LIMIT: Final[float] = 1e100


def check_magnitude(name: str, values: pd.Series) -> None:
    """Refuse a series whose values are beyond 1e100 or (apart from zeros) all below 1e-100 in magnitude.

    The tests square and multiply the values (cross-products of least squares, long-run
    variances); float64 stops at about 1.8e308 and, gradually, at 2.2e-308, so squares of numbers
    near 1e200 overflow and squares of numbers near 1e-200 vanish. The statistics themselves do not
    depend on the units, so the fix is to rescale the column; the limit leaves a margin of 1e100 in
    both directions for the squares. Values of economic or financial data, whatever their units,
    lie far inside it.

    Raises
    ------
    SeriesScaleError
        Naming the largest magnitude found and the limit.
    """
    array = np.abs(np.asarray(values, dtype=float).ravel())
    array = array[np.isfinite(array) & (array > 0)]
    if array.size == 0:
        return
    largest = float(np.max(array))
    if largest > MAGNITUDE_LIMIT or largest < 1.0 / MAGNITUDE_LIMIT:
        raise SeriesScaleError(series=name, largest=f"{largest:.3g}", limit=f"{1.0 / MAGNITUDE_LIMIT:g} to "
                                                                           f"{MAGNITUDE_LIMIT:g}")


def relative_spread(values: np.ndarray | pd.Series) -> float:
    """``(max - min) / max |value|`` over the finite values; 0 for a constant (or zero, or empty) series.

    Parameters
    ----------
    values : numpy.ndarray or pandas.Series
        The values; missing and infinite values are ignored.

    Returns
    -------
    float
        A number in ``[0, 2]``, independent of the units of the series.
    """
    array = np.asarray(values, dtype=float).ravel()
    array = array[np.isfinite(array)]
    if array.size == 0:
        return 0.0
    largest = float(np.max(np.abs(array)))
    if largest == 0.0:
        return 0.0
    return float(np.max(array) - np.min(array)) / largest


def varying_digit(largest: float, spread: float) -> int:
    """The significant digit (1-based) of numbers of magnitude ``largest`` in which a ``spread`` shows.

    With ``largest`` 5 and ``spread`` 3.5e-12 the values agree in their first 12 significant digits
    and differ from the 13th on: ``floor(log10 largest) - floor(log10 spread) + 1``.
    """
    if not (largest > 0.0 and spread > 0.0):
        raise ValueError(f"largest and spread must be positive; got {largest!r} and {spread!r}")
    return math.floor(math.log10(largest)) - math.floor(math.log10(spread)) + 1


def _ordinal(number: int) -> str:
    suffix = "th" if 10 <= number % 100 <= 20 else {1: "st", 2: "nd", 3: "rd"}.get(number % 10, "th")
    return f"{number}{suffix}"


def check_variation(name: str, values: pd.Series) -> None:
    """Refuse a series that is constant or varies only in its last significant digits.

    The series is refused when its spread, ``max - min``, is at most :data:`VARIATION_LIMIT`
    (1e-10) times its largest absolute value, that is when all its values agree in their first 10
    significant digits. Float64 numbers carry about 16 significant digits (machine epsilon
    ``2.2e-16``), so such a series keeps at most 6 digits of variation, and the tests consume more:
    each difference of nearly equal numbers cancels the digits they share, and the least-squares
    regressions of the tests lose a further ``log10`` of their condition number (easily 3 to 5
    digits with a constant, a trend and lagged differences). What is left for the residuals is then
    of the order of the rounding error, so the statistics would describe the arithmetic, not the
    data. A limit of 1e-10 keeps a margin of a thousand above that point, while any series recorded
    with up to 10 significant digits, which covers published economic and financial data, passes.
    The check depends only on a ratio, so it does not change when the series is multiplied by any
    non-zero constant.

    Parameters
    ----------
    name : str
        The series' name, used in the message.
    values : pandas.Series
        The series as it will be tested; missing and infinite values are ignored here (other
        checks refuse them).

    Raises
    ------
    ConstantSeriesError
        With ``what`` ``"constant (5 at every period)"`` for an exactly constant series, or
        ``"numerically constant: it varies only in the 13th significant digit (relative spread
        7e-13)"`` for one whose variation is below the limit.

    References
    ----------
    Higham, N. J. (2002). *Accuracy and Stability of Numerical Algorithms*, 2nd ed. SIAM,
    chapters 1-2 (cancellation, machine precision) and 20 (least squares).
    """
    array = np.asarray(values, dtype=float).ravel()
    array = array[np.isfinite(array)]
    if array.size == 0:
        return
    spread = relative_spread(array)
    if spread == 0.0:
        raise ConstantSeriesError(series=name, what=f"constant ({float(array[0]):.12g} at every period)")
    if spread <= VARIATION_LIMIT:
        largest = float(np.max(np.abs(array)))
        digit = varying_digit(largest, float(np.max(array) - np.min(array)))
        raise ConstantSeriesError(
            series=name,
            what=(
                f"numerically constant: it varies only in the {_ordinal(digit)} significant digit "
                f"(relative spread {spread:.1g})"
            ),
        )
