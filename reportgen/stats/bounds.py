"""The Pesaran, Shin and Smith (2001) bounds test for a levels relation in an ARDL model.

The conditional error-correction model (the unrestricted ECM of an ARDL(p, q_1, ..., q_k)) is

    Δy_t = deterministic terms + π_y y_{t-1} + Σ_j π_j x_{j,t-1}
           + Σ_{i=1}^{p-1} ψ_i Δy_{t-i} + Σ_j Σ_{i=0}^{q_j-1} φ_{j,i} Δx_{j,t-i} + u_t.

The F statistic tests that every lagged level coefficient is zero (and, in cases II and IV, the
restricted constant or trend too). Its limit distribution depends on whether the regressors are
I(0) or I(1); PSS tabulate both extremes, which bound the distribution for any mixture. Above the
I(1) bound a levels relation is accepted whatever the regressors' orders; below the I(0) bound it is
rejected; in between the test is inconclusive without knowing the orders.

Lag orders are chosen with statsmodels' ``ardl_select_order`` (every candidate on the common sample
of the largest lag); the chosen model is refitted by OLS here on its own full sample and the F
statistic is computed from restricted and unrestricted sums of squares.

Critical values are reportgen's own copy, keyed by k = the number of regressors (the dependent
variable not counted), exactly as PSS (2001) number them. statsmodels 0.15's
``UECMResults.bounds_test(asymptotic=True)`` looks its table up at k + 1 (it counts the dependent
variable), which gives the wrong bounds; this module does not call it for critical values.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from typing import Final

import numpy as np
import pandas as pd
from statsmodels.tsa.ardl import ardl_select_order

from reportgen.errors import CollinearRegressorsError, SampleTooShortError, StatsInputError
from reportgen.periods import index_labels
from reportgen.stats.capture import warning_texts
from reportgen.stats.types import BoundsTestResult
from reportgen.vocabulary import SIGNIFICANCE_LEVELS

__all__ = [
    "BOUNDS_CASES",
    "BOUNDS_CRITICAL_VALUES_SOURCE",
    "BOUNDS_MIN_EXTRA_OBSERVATIONS",
    "bounds_critical_values",
    "bounds_test",
]

#: The five PSS (2001) cases (their Roman numerals I-V).
BOUNDS_CASES: Final[dict[int, str]] = {
    1: "case I: no intercept, no trend",
    2: "case II: restricted intercept, no trend",
    3: "case III: unrestricted intercept, no trend",
    4: "case IV: unrestricted intercept, restricted trend",
    5: "case V: unrestricted intercept, unrestricted trend",
}

#: Where the critical values come from, for the methods appendix.
BOUNDS_CRITICAL_VALUES_SOURCE: Final[str] = (
    "Pesaran, Shin and Smith (2001) asymptotic bounds (Tables CI(i)-CI(v)), as re-simulated with "
    "32,000,000 replications in statsmodels tsa/ardl/pss_critical_values.py (crit_vals, keyed by "
    "k = number of regressors); looked up by reportgen at the number of regressors, not at the "
    "k + 1 that statsmodels' UECMResults.bounds_test(asymptotic=True) uses"
)

#: The lag search needs at least this many observations more than the largest ARDL has parameters.
BOUNDS_MIN_EXTRA_OBSERVATIONS: Final[int] = 10

_LEVELS: Final[tuple[str, ...]] = ("90%", "95%", "99%")
_Bounds = tuple[tuple[float, float], tuple[float, float], tuple[float, float]]

# (I(0) bound, I(1) bound) at 90%, 95%, 99%, by PSS case and k = number of regressors, 1..10.
# Copied from statsmodels tsa/ardl/pss_critical_values.py, crit_vals[(k, case, False)] (I(0)) and
# crit_vals[(k, case, True)] (I(1)), first three percentiles (90, 95, 99). The file's docstring
# defines k as "the number of x variables"; its case III, k = 1 entry (4.04/4.78 at 90%) is PSS
# (2001) Table CI(iii)'s k = 1 row. tests/stats/test_bounds.py checks the copy against the file.
_TABLE: Final[dict[int, dict[int, _Bounds]]] = {
    1: {
        1: ((2.4170317, 3.2538509), (3.119659, 4.0643748), (4.7510799, 5.8825257)),
        2: ((2.1562308, 3.1684785), (2.6846692, 3.8003954), (3.8773621, 5.177742)),
        3: ((1.998571, 3.0729965), (2.4316514, 3.6016775), (3.3919322, 4.7371358)),
        4: ((1.8897829, 2.9925753), (2.2616928, 3.4545032), (3.0771215, 4.4326745)),
        5: ((1.8104326, 2.9267613), (2.1394999, 3.3396521), (2.8541086, 4.2078599)),
        6: ((1.7483313, 2.8719403), (2.0453753, 3.2474515), (2.685931, 4.0322637)),
        7: ((1.6985327, 2.825928), (1.9707636, 3.1725169), (2.5536649, 3.8932738)),
        8: ((1.6569223, 2.7862884), (1.9092423, 3.1097259), (2.4470718, 3.7785302)),
        9: ((1.6224492, 2.7520721), (1.8578787, 3.0557346), (2.3580077, 3.6811682)),
        10: ((1.5927907, 2.7222721), (1.8145253, 3.009471), (2.2828013, 3.5990544)),
    },
    2: {
        1: ((3.0235968, 3.4943406), (3.6115364, 4.1231394), (4.9094056, 5.4961076)),
        2: ((2.6273503, 3.3084134), (3.0998243, 3.8345125), (4.1327001, 4.9642009)),
        3: ((2.3813866, 3.1778198), (2.7820412, 3.6364094), (3.6486786, 4.6114583)),
        4: ((2.2123295, 3.0796353), (2.5633388, 3.4898084), (3.3177874, 4.3536497)),
        5: ((2.0879588, 3.002768), (2.40264, 3.3764374), (3.0748083, 4.1585099)),
        6: ((1.9922451, 2.9399824), (2.2792144, 3.2851357), (2.8891314, 4.0031551)),
        7: ((1.9155946, 2.8879427), (2.1802812, 3.2093335), (2.7408759, 3.8753322)),
        8: ((1.8532862, 2.8435812), (2.0996872, 3.1459955), (2.6186041, 3.769165)),
        9: ((1.8008993, 2.8053707), (2.0320841, 3.091422), (2.5170871, 3.6784683)),
        10: ((1.756145, 2.7724339), (1.9744492, 3.0440412), (2.4313123, 3.6004793)),
    },
    3: {
        1: ((4.044319, 4.7771822), (4.9228967, 5.7217442), (6.8609106, 7.7821227)),
        2: ((3.1741284, 4.108262), (3.8022629, 4.8116858), (5.1722882, 6.3220548)),
        3: ((2.7295224, 3.7471556), (3.2290217, 4.3222818), (4.3110408, 5.5425521)),
        4: ((2.4565534, 3.516144), (2.877209, 4.0104999), (3.7798528, 5.0504684)),
        5: ((2.2702787, 3.3535243), (2.6369717, 3.7914038), (3.4203738, 4.7060983)),
        6: ((2.1343676, 3.2311014), (2.4620175, 3.6271964), (3.1585901, 4.4502999)),
        7: ((2.0305429, 3.136325), (2.3281704, 3.4999128), (2.9569345, 4.2519893)),
        8: ((1.9480198, 3.0595184), (2.2215083, 3.3969531), (2.7979659, 4.0923089)),
        9: ((1.8811231, 2.9957112), (2.1353897, 3.3114482), (2.6683796, 3.9596061)),
        10: ((1.8248841, 2.9416094), (2.0628201, 3.239357), (2.5606728, 3.8484916)),
    },
    4: {
        1: ((4.0317707, 4.4725009), (4.6921341, 5.169214), (6.1259225, 6.668854)),
        2: ((3.3668869, 4.0126604), (3.8887628, 4.5835675), (5.0115801, 5.7968684)),
        3: ((2.9636218, 3.7234883), (3.4007434, 4.2135706), (4.3358236, 5.247283)),
        4: ((2.6902225, 3.5231152), (3.0699099, 3.9578931), (3.877333, 4.867071)),
        5: ((2.4928973, 3.3756681), (2.831033, 3.7687148), (3.5478855, 4.587147)),
        6: ((2.3423792, 3.2610813), (2.6488947, 3.6218989), (3.2947623, 4.3702232)),
        7: ((2.2246175, 3.1695552), (2.5055486, 3.5051856), (3.0962182, 4.1974421)),
        8: ((2.1289147, 3.094188), (2.3893773, 3.4085297), (2.9340882, 4.0545165)),
        9: ((2.0498497, 3.0308611), (2.2930641, 3.3269185), (2.8018384, 3.9347618)),
        10: ((1.9833587, 2.9767752), (2.2124939, 3.2574924), (2.690228, 3.8317161)),
    },
    5: {
        1: ((5.5958071, 6.2656898), (6.586727, 7.3133165), (8.7355157, 9.5652229)),
        2: ((4.1863149, 5.053508), (4.8834936, 5.8168869), (6.3813095, 7.4384998)),
        3: ((3.4742551, 4.4323554), (4.0219835, 5.0480574), (5.1911046, 6.3448127)),
        4: ((3.0443998, 4.0501255), (3.5009718, 4.5739556), (4.4707539, 5.6686684)),
        5: ((2.7536425, 3.7890425), (3.149282, 4.2501858), (3.985975, 5.2074857)),
        6: ((2.5446232, 3.5984454), (2.8951601, 4.0134462), (3.633989, 4.8709448)),
        7: ((2.3861201, 3.4533491), (2.7031072, 3.8323234), (3.3680435, 4.613939)),
        8: ((2.2616596, 3.3374076), (2.5515168, 3.6880139), (3.1586476, 4.407457)),
        9: ((2.1610306, 3.2429533), (2.4296727, 3.5699095), (2.98963, 4.2401975)),
        10: ((2.0779589, 3.1649384), (2.3285481, 3.4725945), (2.8499681, 4.1003673)),
    },
}

# Deterministic terms in the model, and those tested together with the lagged levels.
_CASE_TERMS: Final[dict[int, tuple[tuple[str, ...], tuple[str, ...]]]] = {
    1: ((), ()),
    2: (("const",), ("const",)),
    3: (("const",), ()),
    4: (("const", "trend"), ("trend",)),
    5: (("const", "trend"), ()),
}
_STATSMODELS_TREND: Final[dict[int, str]] = {1: "n", 2: "c", 3: "c", 4: "ct", 5: "ct"}
_LAG_CRITERIA: Final[dict[str, str]] = {"aic": "AIC", "bic": "BIC"}


def _check_case(case: int) -> None:
    if case not in BOUNDS_CASES:
        raise ValueError(f"case must be one of {tuple(BOUNDS_CASES)} (PSS cases I-V), not {case!r}")


def bounds_critical_values(n_regressors: int, case: int = 3) -> dict[str, tuple[float, float]]:
    """Asymptotic I(0) and I(1) bounds of the PSS F statistic.

    Parameters
    ----------
    n_regressors : int
        k, the number of regressors in the levels relation, the dependent variable not counted
        (1 to 10).
    case : {1, 2, 3, 4, 5}
        PSS case I-V.

    Returns
    -------
    dict of str to (float, float)
        Keys ``"90%"``, ``"95%"``, ``"99%"``; values (I(0) bound, I(1) bound). The test at 5%
        compares the statistic with the ``"95%"`` pair.

    References
    ----------
    Pesaran, M. H., Shin, Y. and Smith, R. J. (2001). Bounds Testing Approaches to the Analysis
    of Level Relationships. Journal of Applied Econometrics, 16(3), 289-326, Tables CI(i)-CI(v).
    """
    _check_case(case)
    if not 1 <= n_regressors <= len(_TABLE[case]):
        raise ValueError(
            f"bounds-test critical values cover 1 to {len(_TABLE[case])} regressors, not {n_regressors}"
        )
    return dict(zip(_LEVELS, _TABLE[case][n_regressors], strict=True))


def _collinear_variable(values: np.ndarray, names: Sequence[str]) -> tuple[str, tuple[str, ...]] | None:
    design = np.column_stack([np.ones(values.shape[0]), values])
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


def _sum_of_squares(target: np.ndarray, design: np.ndarray) -> float:
    if design.shape[1] == 0:
        return float(target @ target)
    norms = np.linalg.norm(design, axis=0)
    scaled = design / np.where(norms > 0.0, norms, 1.0)  # the residuals do not depend on column scales
    coefficients, *_ = np.linalg.lstsq(scaled, target, rcond=None)
    residuals = target - scaled @ coefficients
    return float(residuals @ residuals)


def _decision(statistic: float, bounds: tuple[float, float]) -> str:
    """PSS (2001): above the I(1) bound, below the I(0) bound, or between them."""
    lower, upper = bounds
    if statistic > upper:
        return "levels relation"
    if statistic < lower:
        return "no levels relation"
    return "inside the bounds"


def bounds_test(
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    *,
    significance: float,
    case: int = 3,
    max_lags: int = 4,
    lag_criterion: str = "aic",
) -> BoundsTestResult:
    """PSS (2001) bounds F test of the null hypothesis of no levels relation.

    Parameters
    ----------
    data : pandas.DataFrame
        Float columns named by series, indexed by a ``PeriodIndex``, aligned, no missing values.
    dependent : str
        The variable on the left of the levels relation.
    regressors : sequence of str
        The other variables of the relation, 1 to 10; each may be I(0) or I(1).
    significance : float
        Significance level, one of 0.01, 0.05, 0.10 (compared with the 99%, 95% and 90% bounds).
    case : {1, 2, 3, 4, 5}
        PSS case I-V; III (unrestricted intercept, no trend) by default.
    max_lags : int
        Largest ARDL lag of each variable searched (at least 1).
    lag_criterion : {"aic", "bic"}
        Criterion of the lag search.

    Returns
    -------
    BoundsTestResult
        ``lags`` holds the ARDL order of each variable as estimated; ``nobs`` the observations of
        the conditional ECM regression; ``critical_values`` the (I(0), I(1)) bounds at every level
        for k = ``len(regressors)``; ``decision`` one of "levels relation" (F above the I(1)
        bound), "no levels relation" (F below the I(0) bound) or "inside the bounds".

    Raises
    ------
    SampleTooShortError
        When the sample has fewer than ``max_lags`` plus 10 plus the number of parameters of the
        largest ARDL searched.
    StatsInputError
        When a variable appears twice, or columns are missing or not finite.
    CollinearRegressorsError
        When a variable is constant or the variables are perfectly collinear.

    Notes
    -----
    statsmodels' ``ardl_select_order`` fits every ARDL(p, q_1, ..., q_k) with p, q_j in
    0..max_lags on the common sample of ``max_lags`` and keeps the smallest criterion. The
    conditional ECM needs at least one lag of each variable in levels, so an order of 0 is
    raised to 1 for estimation (a note says so). The chosen model is refitted on the whole sample
    its lags allow. The bounds are asymptotic; PSS (2001) show the finite-sample bounds lie
    somewhat higher in short samples.

    References
    ----------
    Pesaran, M. H. and Shin, Y. (1999). An Autoregressive Distributed Lag Modelling Approach to
    Cointegration Analysis. In S. Strøm (ed.), Econometrics and Economic Theory in the 20th
    Century, Cambridge University Press.

    Pesaran, M. H., Shin, Y. and Smith, R. J. (2001). Bounds Testing Approaches to the Analysis
    of Level Relationships. Journal of Applied Econometrics, 16(3), 289-326.
    """
    _check_case(case)
    if not any(math.isclose(significance, level) for level in SIGNIFICANCE_LEVELS):
        raise ValueError(f"significance must be one of {SIGNIFICANCE_LEVELS}, not {significance}")
    if lag_criterion not in _LAG_CRITERIA:
        raise ValueError(
            f"lag_criterion must be one of {tuple(_LAG_CRITERIA)} for the ARDL lag search, not {lag_criterion!r}"
        )
    if max_lags < 1:
        raise ValueError(f"max_lags must be at least 1, not {max_lags}")
    regressors = tuple(regressors)
    k = len(regressors)
    if not 1 <= k <= len(_TABLE[case]):
        raise ValueError(f"the bounds test takes 1 to {len(_TABLE[case])} regressors, not {k}")
    variables = (dependent, *regressors)
    if len(set(variables)) != len(variables):
        raise StatsInputError(problem=f"bounds test: a variable appears twice in {', '.join(variables)}")
    missing = [name for name in variables if name not in data.columns]
    if missing:
        raise StatsInputError(problem=f"bounds test: no column named {', '.join(missing)} in the data")
    relation = f"{dependent} on {', '.join(regressors)}"
    frame = data.loc[:, list(variables)].astype(float)
    values = frame.to_numpy()
    if not np.all(np.isfinite(values)):
        raise StatsInputError(problem=f"bounds test of {relation}: the data contain missing or infinite values")
    collinear = _collinear_variable(values, variables)
    if collinear is not None:
        column, used = collinear
        depends = "constant" if used == ("const",) else (
            f"an exact linear combination of {', '.join(used)}" if used else "zero"
        )
        raise CollinearRegressorsError(
            problem=f"bounds test of {relation}: the variables are perfectly collinear: {column} is {depends}"
        )
    # Each variable divided by its largest magnitude: the F statistic and the lag search do not
    # change when a variable is rescaled, and the regressions stay well scaled.
    values = values / np.max(np.abs(values), axis=0)

    nobs = values.shape[0]
    model_terms, tested_terms = _CASE_TERMS[case]
    largest = len(model_terms) + max_lags + k * (max_lags + 1)
    needed = max_lags + largest + BOUNDS_MIN_EXTRA_OBSERVATIONS
    if nobs < needed:
        raise SampleTooShortError(
            problem=(
                f"the bounds test of {relation} searching ARDL lags up to {max_lags} needs at least {needed} "
                f"observations ({max_lags} lags, {BOUNDS_MIN_EXTRA_OBSERVATIONS} plus the {largest} parameters "
                f"of the largest ARDL); the sample has {nobs}"
            )
        )

    notes: list[str] = []
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        positions = pd.RangeIndex(nobs)
        selection = ardl_select_order(
            pd.Series(values[:, 0], index=positions, name=dependent),
            max_lags,
            pd.DataFrame(values[:, 1:], index=positions, columns=list(regressors)),
            max_lags,
            trend=_STATSMODELS_TREND[case],
            ic=lag_criterion,
        )
        chosen_model = selection.model
        autoregressive = [int(lag) for lag in (chosen_model.ar_lags or [])]
        distributed = {str(name): [int(lag) for lag in lags] for name, lags in (chosen_model.dl_lags or {}).items()}
        selected = (
            max(autoregressive, default=0),
            *(max(distributed.get(name, [0]), default=0) for name in regressors),
        )
        orders = tuple(max(order, 1) for order in selected)
        dropped = [name for name in regressors if not distributed.get(name)]
        if dropped:
            notes.append(
                f"{_LAG_CRITERIA[lag_criterion]} left {', '.join(dropped)} out of the ARDL altogether; the "
                "conditional ECM keeps every regressor's lagged level and current difference."
            )
        if orders != selected:
            notes.append(
                f"{_LAG_CRITERIA[lag_criterion]} chose ARDL{selected}; the conditional ECM needs at least "
                f"one lag of each variable in levels, so ARDL{orders} is estimated."
            )

        # The conditional ECM on observations m .. T-1 (0-based), m the largest lag.
        first = max(orders)
        effective = nobs - first
        rows = np.arange(first, nobs)
        differences = np.vstack([np.full((1, values.shape[1]), np.nan), np.diff(values, axis=0)])
        columns: dict[str, np.ndarray] = {}
        if "const" in model_terms:
            columns["const"] = np.ones(effective)
        if "trend" in model_terms:
            columns["trend"] = rows + 1.0
        for position, name in enumerate(variables):
            columns[f"{name}(-1)"] = values[rows - 1, position]
        for lag in range(1, orders[0]):
            columns[f"d.{dependent}(-{lag})"] = differences[rows - lag, 0]
        for position, name in enumerate(regressors, start=1):
            for lag in range(orders[position]):
                columns[f"d.{name}" + (f"(-{lag})" if lag else "")] = differences[rows - lag, position]
        target = differences[rows, 0]
        design = np.column_stack(list(columns.values()))
        tested = [*tested_terms, *(f"{name}(-1)" for name in variables)]
        norms = np.linalg.norm(design, axis=0)
        if np.any(norms == 0) or np.linalg.matrix_rank(design / norms) < design.shape[1]:
            raise CollinearRegressorsError(
                problem=f"bounds test of {relation}: the regressors of the conditional ECM are perfectly collinear"
            )
        kept = [index for index, name in enumerate(columns) if name not in tested]
        unrestricted = _sum_of_squares(target, design)
        restricted = _sum_of_squares(target, design[:, kept])
        residual_df = effective - design.shape[1]
        statistic = float(((restricted - unrestricted) / len(tested)) / (unrestricted / residual_df))
    notes.extend(warning_texts(caught))

    critical_values = bounds_critical_values(k, case)
    level_key = f"{round((1.0 - significance) * 100):d}%"
    lower, upper = critical_values[level_key]
    decision = _decision(statistic, (lower, upper))
    if decision == "inside the bounds":
        notes.append(
            f"F = {statistic:.3f} lies between the I(0) bound {lower:.3f} and the I(1) bound {upper:.3f} at "
            f"{level_key}: the decision depends on the regressors' orders of integration."
        )
    labels = index_labels(frame.index) if isinstance(frame.index, pd.PeriodIndex) else tuple(
        str(label) for label in frame.index
    )
    notes.append(
        f"Conditional ECM {'d.' + dependent} ~ {' + '.join(columns)} on {effective} observations, "
        f"{labels[first]} to {labels[-1]}; F tests {', '.join(tested)} = 0 ({len(tested)} restrictions, "
        f"{residual_df} residual degrees of freedom)."
    )
    lag_rule = (
        f"{_LAG_CRITERIA[lag_criterion]} over ARDL lags 0 to {max_lags} of every variable on the common "
        f"sample of {nobs - max_lags} (statsmodels ardl_select_order), chosen model refitted on its full sample"
    )
    source = (
        f"Pesaran, Shin and Smith (2001), {BOUNDS_CASES[case]}, k={k} regressors, asymptotic "
        "(statsmodels pss_critical_values.py crit_vals at k, not k+1)"
    )
    return BoundsTestResult(
        dependent=dependent,
        regressors=regressors,
        case=case,
        case_description=BOUNDS_CASES[case],
        lags=dict(zip(variables, orders, strict=True)),
        lag_rule=lag_rule,
        nobs=effective,
        f_statistic=statistic,
        critical_values=critical_values,
        critical_values_source=source,
        decision=decision,
        significance=float(significance),
        notes=tuple(notes),
    )
