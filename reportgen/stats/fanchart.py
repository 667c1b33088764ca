"""Fan charts: how an integrated series compares with random walks calibrated to it.

A series found to be integrated (order 1 or more) is set against ``replications`` simulated random
walks that start at its first value and have its own drift (the mean of its first differences)
and innovation spread (the standard deviation of its first differences). The 5%, 25%, 50%, 75%
and 95% quantiles of the simulated paths, period by period, form the fan; the share of observed
periods outside the 5%-95% band says how much the series looks like such a walk. An I(1) series
should mostly stay inside; an I(2) series, compared with a random walk of its own drift, drifts
out of the band, which is the point of showing it.

The simulation is reproducible by construction: the generator is numpy's ``default_rng`` seeded
with a number derived from the manifest's seed and the series' name by SHA-256
(:func:`series_seed`), never Python's per-process ``hash()``; the same inputs give identical
floats.
"""

from __future__ import annotations

import hashlib
import math
from typing import Final

import numpy as np
import pandas as pd

from reportgen.errors import SampleTooShortError, StatsInputError
from reportgen.periods import period_label
from reportgen.stats.types import FanChart

__all__ = ["FAN_QUANTILES", "random_walk_fan", "series_seed"]

#: The quantiles of the simulated paths drawn as the fan, keyed by their labels.
FAN_QUANTILES: Final[dict[str, float]] = {"5%": 0.05, "25%": 0.25, "50%": 0.50, "75%": 0.75, "95%": 0.95}
#: Walks built per step and periods summarised per step (bounds the working memory on long series).
_BLOCK_ROWS: Final[int] = 50
_BLOCK_COLUMNS: Final[int] = 4096


def series_seed(seed: int, name: str) -> int:
    """A per-series seed: the first 8 bytes of ``SHA-256("<seed>:<name>")`` as an unsigned integer.

    Every series gets its own stream of random numbers, the same on every run and machine, and
    changing the manifest's seed changes all of them.

    Parameters
    ----------
    seed : int
        The manifest's seed (``settings.seed``).
    name : str
        The series' name.

    Returns
    -------
    int
        A number in ``[0, 2**64)``, suitable for :func:`numpy.random.default_rng`.
    """
    digest = hashlib.sha256(f"{int(seed)}:{name}".encode()).digest()
    return int.from_bytes(digest[:8], "big")


def _labels(index: pd.Index) -> tuple[str, ...]:
    return tuple(period_label(item) if isinstance(item, pd.Period) else str(item) for item in index)


def random_walk_fan(
    values: pd.Series,
    *,
    seed: int,
    replications: int = 500,
    name: str | None = None,
    order: int = 1,
) -> FanChart:
    """Quantile bands of random walks calibrated to a series' drift and innovation spread.

    The walks are ``x_0 + sum_{s=1..t} (drift + innovation_std * e_s)`` for ``t = 1, ..., T - 1``
    with ``e_s`` independent standard normal draws, ``x_0`` the series' first value, ``drift`` the
    mean of its first differences and ``innovation_std`` their standard deviation (``ddof=1``).
    The bands are the 5%, 25%, 50%, 75% and 95% quantiles across the walks in each period
    (numpy's default linear interpolation between order statistics); every band starts at
    ``x_0``.

    Parameters
    ----------
    values : pandas.Series
        The series in levels, float, indexed by period, without missing values.
    seed : int
        Seed of numpy's ``default_rng``, used as given (derive a per-series seed with
        :func:`series_seed`) and recorded in the result.
    replications : int, default 500
        Number of simulated walks.
    name : str, optional
        Name of the series in the description; default the series' own name, else "the series".
    order : int, default 1
        The series' order of integration, for the description only: for an order of 2 or more
        it says that leaving the band is expected.

    Returns
    -------
    FanChart
        ``bands`` maps "5%" ... "95%" to paths as long as ``dates``; ``share_outside`` is the
        share of the periods after the first (where walks and series coincide by construction)
        in which the observed value lies strictly below the 5% band or strictly above the 95%
        band.

    Raises
    ------
    SampleTooShortError
        With fewer than 3 observations (two first differences are needed for their spread).
    StatsInputError
        When the series has missing or infinite values.
    ValueError
        When ``replications`` is less than 1.

    References
    ----------
    Britton, E., Fisher, P. and Whitley, J. (1998). The Inflation Report projections:
    understanding the fan chart. *Bank of England Quarterly Bulletin* 38, 30-37.

    Granger, C. W. J. and Newbold, P. (1974). Spurious regressions in econometrics. *Journal of
    Econometrics* 2, 111-120.
    """
    if replications < 1:
        raise ValueError(f"replications must be 1 or more; got {replications}")
    array = np.asarray(values, dtype=float)
    label = name if name is not None else (str(values.name) if values.name is not None else "the series")
    if array.ndim != 1:
        raise StatsInputError(problem=f"the fan chart needs a single series; got an array of shape {array.shape}")
    if array.size < 3:
        raise SampleTooShortError(
            problem=f"the fan chart needs at least 3 observations (2 first differences); {label} has {array.size}"
        )
    if not np.all(np.isfinite(array)):
        raise StatsInputError(
            problem=f"the fan chart needs a series without missing or infinite values; {label} has some"
        )

    differences = np.diff(array)
    drift = float(differences.mean())
    innovation_std = float(differences.std(ddof=1))
    periods = array.size
    generator = np.random.default_rng(seed)
    # One array of walks, built in place a block of walks at a time, and its quantiles a block of
    # periods at a time: on 100,000 periods the walks alone take 400 MB, so no second copy is made.
    # The numbers are those of the direct formula x_0 + cumsum(drift + std * e), in the same order.
    paths = generator.standard_normal((replications, periods - 1))
    for start in range(0, replications, _BLOCK_ROWS):
        block = paths[start : start + _BLOCK_ROWS]
        block[...] = array[0] + np.cumsum(drift + innovation_std * block, axis=1)
    levels = list(FAN_QUANTILES.values())
    quantiles = np.empty((len(levels), periods))
    quantiles[:, 0] = array[0]  # exact, whatever the interpolation does with identical values
    for start in range(0, periods - 1, _BLOCK_COLUMNS):
        stop = min(start + _BLOCK_COLUMNS, periods - 1)
        quantiles[:, start + 1 : stop + 1] = np.quantile(paths[:, start:stop], levels, axis=0)
    bands = {key: tuple(float(value) for value in row) for key, row in zip(FAN_QUANTILES, quantiles, strict=True)}

    lower, upper = quantiles[0, 1:], quantiles[-1, 1:]
    observed = array[1:]
    share_outside = float(np.mean((observed < lower) | (observed > upper)))

    walks = "random walk" if replications == 1 else "random walks"
    description = (
        f"{replications} {walks} started at the first value of {label}, with the mean ({_number(drift)}) "
        f"and standard deviation ({_number(innovation_std)}) of its first differences as drift and "
        f"innovation spread (seed {seed}), give the 5%-95% band, outside which lie "
        f"{share_outside:.0%} of the observed periods after the first"
    )
    if order >= 2:
        description += (
            f"; an I({order}) series compared with a random walk of its own drift is expected to leave "
            "the band, which is the point of the comparison"
        )
    return FanChart(
        dates=_labels(values.index),
        bands=bands,
        drift=drift,
        innovation_std=innovation_std,
        replications=replications,
        seed=int(seed),
        share_outside=share_outside,
        description=description + ".",
    )


def _number(value: float) -> str:
    if value == 0.0 or not math.isfinite(value):
        return str(value) if not math.isfinite(value) else "0"
    return f"{value:.3g}"
