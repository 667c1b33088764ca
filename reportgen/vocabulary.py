"""Fixed vocabularies of reportgen, checked once when the manifest is loaded.

Every choice a user can make, and every verdict reportgen can give, is spelled here so that
the manifest schema, the statistics and the dossier all use the same words.
"""

from __future__ import annotations

from typing import Final, Literal, get_args

#: Deterministic terms of a unit-root or stationarity test regression.
Deterministic = Literal["none", "constant", "constant-trend"]
#: How the deterministic terms are chosen: by reportgen's documented rule, or fixed by the user.
DeterministicPolicy = Literal["auto", "constant", "constant-trend"]
#: Criterion for the number of lagged differences in the ADF regression.
LagCriterion = Literal["aic", "bic", "t-stat"]
#: Verdict on a regression (see DESIGN.md, "Contracts").
Verdict = Literal["stationary", "cointegrated", "spurious-risk", "unbalanced", "inconclusive"]
#: Sampling frequency of a dataset.
Frequency = Literal["annual", "quarterly", "monthly", "weekly", "daily"]
#: Names of transforms a series may declare, applied left to right.
TransformName = Literal["log", "diff", "log-diff", "growth", "seasonal-diff", "lag"]
#: What to do with empty cells in a column: refuse them (the default), analyse the span between the
#: first and last value, or also fill interior gaps by linear interpolation.
MissingPolicy = Literal["error", "drop-leading-trailing", "interpolate"]
#: What to do with a series or regression too short to test: refuse it (the default), or keep it in
#: the dossier with its order undetermined and its regressions inconclusive.
TooShortPolicy = Literal["error", "report"]
#: Formats a dataset may have: files (implied by the file's suffix unless declared) and, declared only,
#: ``postgresql``, a query on a database server whose URL an environment variable holds.
DataFormat = Literal["csv", "parquet", "excel", "sqlite", "postgresql"]
#: How a dataset's periods are combined into the periods of a coarser frequency.
Aggregation = Literal["mean", "sum", "last", "first"]
#: Significance levels reportgen accepts (the levels the critical-value tables carry).
SIGNIFICANCE_LEVELS: Final[tuple[float, ...]] = (0.01, 0.05, 0.10)

#: Verdicts that mark a regression as needing attention.
FLAGGED_VERDICTS: Final[frozenset[str]] = frozenset({"spurious-risk", "unbalanced", "inconclusive"})

#: Periods per year, used for seasonal differences and for display.
PERIODS_PER_YEAR: Final[dict[str, int]] = {
    "annual": 1,
    "quarterly": 4,
    "monthly": 12,
    "weekly": 52,
    "daily": 7,  # a daily series' "season" is the week
}


def allowed(vocabulary: object) -> tuple[str, ...]:
    """The allowed words of a ``Literal`` vocabulary, for error messages."""
    return tuple(str(word) for word in get_args(vocabulary))
