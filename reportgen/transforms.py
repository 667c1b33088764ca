"""Series transforms: small named functions over period-indexed series, each with its lineage.

A manifest's ``transform`` chain is applied left to right. Each step drops the observations it
cannot define (the first ``k`` after a lag or a difference) and says so in the lineage, e.g.
``diff(log(containers))``. Logs and growth rates need positive values; the first offending
period is named.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from reportgen.errors import (
    Location,
    NonPositiveValuesError,
    NoSeasonError,
    TransformExhaustsError,
    TransformOverflowError,
)
from reportgen.periods import period_label
from reportgen.vocabulary import PERIODS_PER_YEAR


@dataclass(frozen=True, slots=True)
class Step:
    """One transform step: its name and whole-number parameter (None for the default)."""

    name: str
    parameter: int | None = None


def _positive(values: pd.Series, step: str, where: Location) -> None:
    bad = values[values <= 0]
    if len(bad):
        first = bad.index[0]
        more = f" ({len(bad)} non-positive values in all)" if len(bad) > 1 else ""
        raise NonPositiveValuesError(location=where, step=step, value=float(bad.iloc[0]), period=period_label(first),
                                     more=more)


def _log(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    _positive(values, "log", where)
    return np.log(values)


def _diff(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    result = values
    for _ in range(parameter or 1):
        result = result.diff().iloc[1:]
    return result


def _log_diff(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    return _diff(_log(values, None, frequency, where), None, frequency, where)


def _growth(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    _positive(values, "growth", where)
    return (100.0 * (values / values.shift(1) - 1.0)).iloc[1:]


def _seasonal_diff(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    period = parameter or PERIODS_PER_YEAR[frequency]
    if period < 2 and parameter is None:
        raise NoSeasonError(location=where)
    return (values - values.shift(period)).iloc[period:]


def _lag(values: pd.Series, parameter: int | None, frequency: str, where: Location) -> pd.Series:
    k = parameter or 1
    return values.shift(k).iloc[k:]


_STEPS: dict[str, Callable[[pd.Series, int | None, str, Location], pd.Series]] = {
    "log": _log,
    "diff": _diff,
    "log-diff": _log_diff,
    "growth": _growth,
    "seasonal-diff": _seasonal_diff,
    "lag": _lag,
}


def lineage_of(column: str, steps: Sequence[Step], frequency: str) -> str:
    """The transform chain as a readable composition, e.g. ``diff(log(containers))``."""
    text = column
    for step in steps:
        if step.name in {"log", "log-diff", "growth"}:
            text = f"{step.name}({text})"
        elif step.name == "seasonal-diff":
            text = f"seasonal-diff({text}, {step.parameter or PERIODS_PER_YEAR[frequency]})"
        else:
            text = f"{step.name}({text}, {step.parameter})" if step.parameter else f"{step.name}({text})"
    return text


def apply_transforms(values: pd.Series, steps: Sequence[Step], frequency: str, where: Location) -> pd.Series:
    """Apply a chain of steps left to right; errors name the step's manifest location."""
    result = values.astype(float)
    for step in steps:
        result = _STEPS[step.name](result, step.parameter, frequency, where)
        if result.empty:
            raise TransformExhaustsError(location=where, step=step.name)
        infinite = result[~np.isfinite(result.to_numpy())]
        if len(infinite):
            raise TransformOverflowError(location=where, step=step.name, period=period_label(infinite.index[0]),
                                         count=len(infinite))
    return result.rename(values.name)
