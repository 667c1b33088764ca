"""Assessment of one candidate regression: levels fit, cointegration test, re-estimation, verdict.

Given the orders of integration of its variables, a regression is classed as ``stationary``,
``cointegrated``, ``spurious-risk``, ``unbalanced`` or ``inconclusive`` by the rules in
:data:`VERDICT_RULE`, and the fits that the verdict calls for are estimated: always the levels
regression; the long-run relation and an Engle-Granger two-step error-correction model when the
integrated variables cointegrate; the regression in differences when they do not or when the orders
cannot balance.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Final

import numpy as np
import pandas as pd
from statsmodels.regression.linear_model import OLS, RegressionResultsWrapper
from statsmodels.stats.diagnostic import acorr_breusch_godfrey, acorr_ljungbox
from statsmodels.stats.stattools import durbin_watson, jarque_bera

from reportgen.errors import DataError, InsufficientDataError
from reportgen.periods import index_labels
from reportgen.stats.cointegration import engle_granger
from reportgen.stats.types import (
    Coefficient,
    CointegrationTest,
    DiagnosticTest,
    Fit,
    RegressionAssessment,
    StatsSettings,
)
from reportgen.vocabulary import FLAGGED_VERDICTS, Verdict

__all__ = [
    "MIN_EXTRA_OBSERVATIONS",
    "VERDICT_RULE",
    "assess_regression",
    "diagnostic_lags",
    "newey_west_lags",
]

#: A fit needs at least this many observations more than it has parameters.
MIN_EXTRA_OBSERVATIONS: Final[int] = 10

#: The verdict rules in plain sentences, for the methods appendix.
VERDICT_RULE: Final[tuple[str, ...]] = (
    "Every regression is first fitted in levels by OLS with a constant.",
    "Every fit reports Newey-West HAC standard errors (Bartlett kernel, floor(4(T/100)^(2/9)) lags, "
    "small-sample correction) with p-values from Student's t distribution.",
    "If the order of integration of any variable is undetermined, the verdict is inconclusive and "
    "only the levels fit is reported.",
    "If every variable is I(0), the verdict is stationary: the levels regression and its inference "
    "are valid.",
    "If the dependent variable is I(1) or I(2), at least one regressor has the same order and no "
    "regressor has a different non-zero order, the Engle-Granger test is run on the dependent "
    "variable and the regressors of its order, with a constant; I(0) regressors are left out of "
    "the cointegrating regression.",
    "If the sample is too short for that test (fewer than 20 observations more than the "
    "cointegrating regression has parameters), the verdict is inconclusive.",
    "If the Engle-Granger test rejects no cointegration at the chosen significance level, the "
    "verdict is cointegrated: the cointegrating regression is reported as the long-run relation, "
    "and an error-correction model regresses the difference of the dependent variable on a "
    "constant, the lagged long-run residual ec(-1), the current differences of the integrated "
    "regressors, the I(0) regressors in levels, and one lag of the differences of the dependent "
    "variable and of the integrated regressors (second differences throughout for I(2) "
    "variables).",
    "If the Engle-Granger test does not reject, the verdict is spurious-risk and the regression is "
    "re-estimated with each integrated variable differenced to I(0) (first differences for I(1), "
    "second differences for I(2)) and I(0) regressors kept in levels.",
    "Any other combination of orders (an I(0) dependent variable with an integrated regressor, an "
    "integrated dependent variable with only I(0) regressors, or a regressor integrated of a "
    "different order than the dependent variable) is unbalanced and is re-estimated in "
    "differences in the same way.",
    "The verdicts spurious-risk, unbalanced and inconclusive are flagged.",
    "An R² above the Durbin-Watson statistic in the levels fit is reported as the Granger and "
    "Newbold (1974) warning sign of a spurious regression; it does not change the verdict.",
    "The half-life of a deviation from the long-run relation is ln(0.5)/ln|1 + a| periods, where a "
    "is the coefficient on ec(-1), reported only when -2 < a < 0.",
)

_CRITERION_NAMES: Final[dict[str, str]] = {"aic": "AIC", "bic": "BIC", "t-stat": "t-stat"}
_LONG_RUN_NOTE: Final[str] = (
    "The standard errors of a cointegrating regression, classical or HAC, are not valid for "
    "inference on the long-run coefficients; dynamic OLS will replace them."
)


@dataclass(frozen=True, slots=True)
class _Estimate:
    """A fit together with the statsmodels results it came from (kept inside this module)."""

    fit: Fit
    results: RegressionResultsWrapper


def newey_west_lags(nobs: int) -> int:
    """Bartlett-kernel truncation lag ``floor(4 (T/100)^(2/9))`` of the HAC covariance.

    References
    ----------
    Newey, W. K. and West, K. D. (1987). A Simple, Positive Semi-Definite, Heteroskedasticity and
    Autocorrelation Consistent Covariance Matrix. Econometrica, 55(3), 703-708.

    Newey, W. K. and West, K. D. (1994). Automatic Lag Selection in Covariance Matrix Estimation.
    Review of Economic Studies, 61(4), 631-653.
    """
    return int(4.0 * (nobs / 100.0) ** (2.0 / 9.0))


def diagnostic_lags(nobs: int) -> int:
    """Lags of the Ljung-Box and Breusch-Godfrey residual tests: ``min(10, T//5)``, at least 1."""
    return max(1, min(10, nobs // 5))


def _labels(index: pd.Index) -> tuple[str, ...]:
    if isinstance(index, pd.PeriodIndex):
        return index_labels(index)
    return tuple(str(label) for label in index)


def _order_text(order: int | None) -> str:
    return "undetermined" if order is None else f"I({order})"


def _difference_name(name: str, order: int) -> str:
    if order == 0:
        return name
    prefix = "d" if order == 1 else f"d{order}"
    return f"{prefix}.{name}"


def _difference(series: pd.Series, order: int) -> pd.Series:
    result = series
    for _ in range(order):
        result = result.diff()
    return result


def _join(names: Sequence[str]) -> str:
    names = list(names)
    if len(names) <= 1:
        return "".join(names)
    return ", ".join(names[:-1]) + " and " + names[-1]


def _percent(significance: float) -> str:
    return f"{round(significance * 100):d}%"


def _format_pvalue(pvalue: float, bound: str | None = None) -> str:
    if math.isnan(pvalue):
        return "p not available"
    if pvalue >= 0.01:
        text = f"{pvalue:.2f}"
    elif pvalue >= 0.001:
        text = f"{pvalue:.3f}"
    else:
        text = f"{pvalue:.1e}"
    return f"p {bound} {text}" if bound else f"p = {text}"


def _collinearity(design: pd.DataFrame) -> tuple[str, tuple[str, ...]] | None:
    """The first column of ``design`` that is an exact linear combination of the ones before it."""
    values = design.to_numpy(dtype=float)
    norms = np.linalg.norm(values, axis=0)
    scaled = values / np.where(norms > 0, norms, 1.0)
    names = list(design.columns)
    for column in range(scaled.shape[1]):
        if norms[column] == 0:
            return names[column], ()
        if np.linalg.matrix_rank(scaled[:, : column + 1]) <= column:
            coefficients, *_ = np.linalg.lstsq(scaled[:, :column], scaled[:, column], rcond=None)
            used = tuple(
                name for name, value in zip(names[:column], coefficients, strict=True) if abs(value) > 1e-8
            )
            return names[column], used
    return None


def _fit(
    regression: str,
    role: str,
    dependent_label: str,
    frame: pd.DataFrame,
    terms: Sequence[str],
    significance: float,
    extra_notes: Sequence[str] = (),
) -> _Estimate:
    """OLS of ``frame[dependent_label]`` on ``frame[terms]`` with HAC standard errors and diagnostics.

    Rows with missing values (created by differencing and lagging) are dropped first.
    """
    frame = frame.loc[:, [dependent_label, *terms]].dropna()
    nobs = len(frame)
    n_parameters = len(terms)
    needed = n_parameters + MIN_EXTRA_OBSERVATIONS
    if nobs < needed:
        raise InsufficientDataError(
            f"regression {regression!r}: the {role} fit ({n_parameters} parameters) needs at least "
            f"{needed} observations ({n_parameters} parameters plus {MIN_EXTRA_OBSERVATIONS}); "
            f"the sample has {nobs}"
        )
    design = frame.loc[:, list(terms)]
    collinear = _collinearity(design)
    if collinear is not None:
        column, used = collinear
        depends = f"an exact linear combination of {', '.join(used)}" if used else "zero throughout"
        raise DataError(
            f"regression {regression!r}: the regressors of the {role} fit are perfectly collinear: "
            f"{column} is {depends}",
            hint="drop one of the collinear regressors or change its transform",
        )
    endog = frame[dependent_label].to_numpy(dtype=float)
    if np.ptp(endog) == 0:
        raise DataError(f"regression {regression!r}: {dependent_label} is constant over the sample")
    exog = design.to_numpy(dtype=float)
    hac_lags = newey_west_lags(nobs)
    lb_lags = diagnostic_lags(nobs)

    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        model = OLS(endog, exog)
        classical = model.fit()
        robust = model.fit(
            cov_type="HAC", cov_kwds={"maxlags": hac_lags, "use_correction": True}, use_t=True
        )
        residuals = np.asarray(classical.resid)
        ljung_box = acorr_ljungbox(residuals, lags=[lb_lags], return_df=True)
        jb_statistic, jb_pvalue, _, _ = jarque_bera(residuals)
        breusch_godfrey = acorr_breusch_godfrey(classical, nlags=lb_lags, result_object=True)
        dw = float(durbin_watson(residuals))
    notes = list(extra_notes)
    notes.extend(dict.fromkeys(f"{item.category.__name__}: {item.message}" for item in caught))

    coefficients = tuple(
        Coefficient(
            term=term,
            estimate=float(robust.params[position]),
            std_error=float(robust.bse[position]),
            t_statistic=float(robust.tvalues[position]),
            pvalue=float(robust.pvalues[position]),
        )
        for position, term in enumerate(terms)
    )
    lb_statistic = float(ljung_box["lb_stat"].iloc[0])
    lb_pvalue = float(ljung_box["lb_pvalue"].iloc[0])
    diagnostics = (
        DiagnosticTest(
            name=f"Ljung-Box (Q, {lb_lags} lags)",
            null_hypothesis=f"no autocorrelation of the residuals up to lag {lb_lags}",
            statistic=lb_statistic,
            pvalue=lb_pvalue,
            rejects=lb_pvalue < significance,
        ),
        DiagnosticTest(
            name=f"Breusch-Godfrey (LM, {lb_lags} lags)",
            null_hypothesis=f"no serial correlation of the errors up to lag {lb_lags}",
            statistic=float(breusch_godfrey.lm),
            pvalue=float(breusch_godfrey.lmpval),
            rejects=float(breusch_godfrey.lmpval) < significance,
        ),
        DiagnosticTest(
            name="Jarque-Bera",
            null_hypothesis="normally distributed residuals",
            statistic=float(jb_statistic),
            pvalue=float(jb_pvalue),
            rejects=float(jb_pvalue) < significance,
        ),
    )
    dates = _labels(frame.index)
    fit = Fit(
        role=role,
        equation=f"{dependent_label} ~ {' + '.join(terms)}",
        dependent=dependent_label,
        coefficients=coefficients,
        covariance=(
            f"HAC (Newey-West, Bartlett kernel, {hac_lags} lags, small-sample correction; "
            f"t distribution with {int(classical.df_resid)} degrees of freedom)"
        ),
        nobs=nobs,
        r_squared=float(classical.rsquared),
        adj_r_squared=float(classical.rsquared_adj),
        durbin_watson=dw,
        residual_std_error=float(np.sqrt(classical.scale)),
        sample_start=dates[0],
        sample_end=dates[-1],
        residual_dates=dates,
        residuals=tuple(float(value) for value in residuals),
        diagnostics=diagnostics,
        notes=tuple(dict.fromkeys(notes)),
    )
    return _Estimate(fit=fit, results=robust)


def _with_constant(data: pd.DataFrame) -> pd.DataFrame:
    frame = data.copy()
    frame.insert(0, "const", 1.0)
    return frame


def _levels_estimate(
    name: str,
    role: str,
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    significance: float,
    extra_notes: Sequence[str] = (),
) -> _Estimate:
    frame = _with_constant(data.loc[:, [dependent, *regressors]])
    return _fit(name, role, dependent, frame, ["const", *regressors], significance, extra_notes)


def _differences_estimate(
    name: str,
    data: pd.DataFrame,
    dependent: str,
    regressors: Sequence[str],
    orders: Mapping[str, int],
    significance: float,
) -> _Estimate:
    columns: dict[str, pd.Series] = {}
    for variable in (dependent, *regressors):
        columns[_difference_name(variable, orders[variable])] = _difference(
            data[variable], orders[variable]
        )
    frame = _with_constant(pd.DataFrame(columns, index=data.index))
    terms = ["const", *(_difference_name(variable, orders[variable]) for variable in regressors)]
    return _fit(
        name,
        "differences",
        _difference_name(dependent, orders[dependent]),
        frame,
        terms,
        significance,
    )


def _error_correction_estimate(
    name: str,
    data: pd.DataFrame,
    dependent: str,
    integrated: Sequence[str],
    stationary: Sequence[str],
    order: int,
    long_run_residuals: pd.Series,
    significance: float,
) -> _Estimate:
    """Engle and Granger (1987) second step: the error-correction model in ``order``-th differences."""
    dependent_label = _difference_name(dependent, order)
    columns: dict[str, pd.Series] = {dependent_label: _difference(data[dependent], order)}
    columns["ec(-1)"] = long_run_residuals.shift(1)
    for variable in integrated:
        columns[_difference_name(variable, order)] = _difference(data[variable], order)
    for variable in stationary:
        columns[variable] = data[variable]
    lagged = [dependent_label, *(_difference_name(variable, order) for variable in integrated)]
    for label in lagged:
        columns[f"{label}(-1)"] = columns[label].shift(1)
    frame = _with_constant(pd.DataFrame(columns, index=data.index))
    terms = [
        "const",
        "ec(-1)",
        *(_difference_name(variable, order) for variable in integrated),
        *stationary,
        *(f"{label}(-1)" for label in lagged),
    ]
    notes = []
    if order == 2:
        notes.append(
            "The variables are I(2): the model is written in second differences, which assumes the "
            "long-run residual is I(0); whether it is I(1) (multi-cointegration) is not assessed."
        )
    return _fit(name, "error-correction", dependent_label, frame, terms, significance, notes)


def _half_life(alpha: float) -> tuple[float | None, str]:
    """Half-life of a deviation from equilibrium implied by the error-correction coefficient."""
    if not -2.0 < alpha < 0.0:
        if alpha >= 0.0:
            return None, (
                f"The error-correction coefficient {alpha:.3f} is not negative: no adjustment toward "
                "the long-run relation, so no half-life."
            )
        return None, (
            f"The error-correction coefficient {alpha:.3f} is -2 or below: deviations overshoot and "
            "grow, so no half-life."
        )
    ratio = abs(1.0 + alpha)
    half_life = 0.0 if ratio == 0.0 else math.log(0.5) / math.log(ratio)
    sentence = f"half of a deviation from the long-run relation is closed in {half_life:.2f} periods"
    if alpha < -1.0:
        sentence += " (the deviation changes sign each period: overshooting)"
    return half_life, sentence


def _r2_dw_sentence(levels: Fit) -> str:
    if levels.r_squared > levels.durbin_watson:
        return (
            f"Levels fit: R² {levels.r_squared:.2f} exceeds the Durbin-Watson statistic "
            f"{levels.durbin_watson:.2f}, the Granger and Newbold (1974) warning sign of a spurious "
            "regression (a weak sign in short samples)."
        )
    return (
        f"Levels fit: R² {levels.r_squared:.2f} does not exceed the Durbin-Watson statistic "
        f"{levels.durbin_watson:.2f} (Granger and Newbold 1974 rule of thumb)."
    )


def _cointegration_sentence(test: CointegrationTest, lag_criterion: str) -> str:
    others = [variable for variable in test.variables if variable != test.dependent]
    lag_word = "lagged difference" if test.lags == 1 else "lagged differences"
    criterion = _CRITERION_NAMES.get(lag_criterion, lag_criterion)
    chosen = "fixed" if test.lag_rule.startswith("fixed") else f"by {criterion}"
    terms = "constant" if test.deterministic == "constant" else "constant and trend"
    outcome = "cointegration" if test.rejects else "no cointegration"
    return (
        f"Engle-Granger ({test.dependent} on {', '.join(others)}, {terms}): statistic "
        f"{test.statistic:.2f}, {_format_pvalue(test.pvalue, test.pvalue_bound)}, {test.lags} "
        f"{lag_word} {chosen}; {outcome} at {_percent(test.significance)}."
    )


def _differences_phrase(orders: Mapping[str, int]) -> str:
    """How the differences fit transforms the variables, e.g. ``in first differences``."""
    if all(order == 1 for order in orders.values()):
        return "in first differences"
    if all(order == 2 for order in orders.values()):
        return "in second differences"
    groups = []
    for order, word in ((1, "first differences"), (2, "second differences")):
        group = [variable for variable, value in orders.items() if value == order]
        if group:
            groups.append(f"{_join(group)} in {word}")
    kept = [variable for variable, value in orders.items() if value == 0]
    if kept:
        groups.append(f"{_join(kept)} kept in levels")
    return "with " + _join(groups)


def _unbalanced_reason(
    dependent: str, regressors: Sequence[str], orders: Mapping[str, int]
) -> tuple[str, list[str]]:
    """Why the orders cannot balance, and any further remarks for the trail."""
    dependent_order = orders[dependent]
    integrated = [variable for variable in regressors if orders[variable] > 0]
    remarks: list[str] = []
    if dependent_order == 0:
        listed = _join([f"{variable} is {_order_text(orders[variable])}" for variable in integrated])
        reason = f"{dependent} is I(0) but {listed}"
        by_order: dict[int, list[str]] = {}
        for variable in integrated:
            by_order.setdefault(orders[variable], []).append(variable)
        for order, group in sorted(by_order.items()):
            if len(group) >= 2:
                quantifier = "both" if len(group) == 2 else "all"
                remarks.append(
                    f"{_join(group)} are {quantifier} I({order}) and could cointegrate among themselves, "
                    "which would balance the equation; reportgen does not test that yet."
                )
        return reason, remarks
    if not integrated:
        return (
            f"{dependent} is I({dependent_order}) but every regressor is I(0), and stationary "
            "regressors cannot account for a stochastic trend"
        ), remarks
    higher = [variable for variable in integrated if orders[variable] > dependent_order]
    lower = [variable for variable in integrated if orders[variable] < dependent_order]
    parts = []
    if higher:
        parts.append(
            f"{_join([f'{v} is I({orders[v]})' for v in higher])}, of higher order than "
            f"{dependent} (I({dependent_order}))"
        )
    if lower:
        parts.append(
            f"{_join([f'{v} is I({orders[v]})' for v in lower])}, of lower order than "
            f"{dependent} (I({dependent_order}))"
        )
    return "; ".join(parts), remarks


def assess_regression(
    name: str,
    formula: str,
    dependent: str,
    regressors: Sequence[str],
    data: pd.DataFrame,
    orders: Mapping[str, int | None],
    settings: StatsSettings,
) -> RegressionAssessment:
    """Fit a candidate regression, test it for spurious-regression risk and give a verdict.

    Parameters
    ----------
    name : str
        The regression's name in the manifest.
    formula : str
        The formula as written in the manifest (recorded, not parsed).
    dependent : str
        Column of the dependent variable.
    regressors : sequence of str
        Columns of the regressors (a constant is always added).
    data : pandas.DataFrame
        Float columns indexed by a ``PeriodIndex``, aligned, restricted to the regression's sample,
        without missing values.
    orders : mapping of str to int or None
        Order of integration of every variable of the regression (None: undetermined).
    settings : StatsSettings
        Significance level and lag criterion (the Engle-Granger lag search uses them).

    Returns
    -------
    RegressionAssessment
        The verdict, the decision trail and every fit the verdict calls for; see
        :data:`VERDICT_RULE`.

    Raises
    ------
    DataError
        When columns are missing or not finite, the dependent variable appears among the
        regressors, or regressors are perfectly collinear.
    InsufficientDataError
        When the levels fit has fewer than 10 observations more than parameters.

    Notes
    -----
    Too few observations for the Engle-Granger test makes the verdict inconclusive; too few for the
    error-correction or differences fit leaves that fit out with a sentence in the trail.

    References
    ----------
    Granger, C. W. J. and Newbold, P. (1974). Spurious Regressions in Econometrics. Journal of
    Econometrics, 2(2), 111-120.

    Engle, R. F. and Granger, C. W. J. (1987). Co-integration and Error Correction:
    Representation, Estimation, and Testing. Econometrica, 55(2), 251-276.

    Newey, W. K. and West, K. D. (1987). A Simple, Positive Semi-Definite, Heteroskedasticity and
    Autocorrelation Consistent Covariance Matrix. Econometrica, 55(3), 703-708.

    Ljung, G. M. and Box, G. E. P. (1978). On a Measure of Lack of Fit in Time Series Models.
    Biometrika, 65(2), 297-303.

    Breusch, T. S. (1978). Testing for Autocorrelation in Dynamic Linear Models. Australian
    Economic Papers, 17(31), 334-355. Godfrey, L. G. (1978). Testing Against General
    Autoregressive and Moving Average Error Models when the Regressors Include Lagged Dependent
    Variables. Econometrica, 46(6), 1293-1301.

    Jarque, C. M. and Bera, A. K. (1980). Efficient Tests for Normality, Homoscedasticity and
    Serial Independence of Regression Residuals. Economics Letters, 6(3), 255-259.
    """
    regressors = tuple(regressors)
    variables = (dependent, *regressors)
    if not regressors:
        raise ValueError(f"regression {name!r} has no regressors")
    if dependent in regressors:
        raise DataError(f"regression {name!r}: {dependent} appears on both sides of the formula")
    if len(set(regressors)) != len(regressors):
        raise DataError(f"regression {name!r}: a regressor appears twice in {', '.join(regressors)}")
    missing = [variable for variable in variables if variable not in data.columns]
    if missing:
        raise DataError(f"regression {name!r}: no column named {', '.join(missing)} in the data")
    absent = [variable for variable in variables if variable not in orders]
    if absent:
        raise ValueError(f"regression {name!r}: no order of integration given for {', '.join(absent)}")
    frame = data.loc[:, list(variables)].astype(float)
    if not np.all(np.isfinite(frame.to_numpy())):
        raise DataError(f"regression {name!r}: the data contain missing or infinite values")
    variable_orders: dict[str, int | None] = {variable: orders[variable] for variable in variables}
    significance = settings.significance
    labels = _labels(frame.index)

    levels = _levels_estimate(name, "levels", frame, dependent, regressors, significance).fit
    trail: list[str] = [
        "Orders: "
        + ", ".join(f"{variable} {_order_text(order)}" for variable, order in variable_orders.items())
        + "."
    ]
    verdict: Verdict
    cointegrated: bool | None = None
    differences: Fit | None = None
    long_run: Fit | None = None
    error_correction: Fit | None = None
    cointegration: CointegrationTest | None = None
    half_life: float | None = None

    undetermined = [variable for variable, order in variable_orders.items() if order is None]
    known: dict[str, int] = {
        variable: order for variable, order in variable_orders.items() if order is not None
    }
    dependent_order = variable_orders[dependent]
    integrated_regressors = [variable for variable in regressors if known.get(variable, 0) > 0]
    stationary_regressors = [variable for variable in regressors if known.get(variable) == 0]

    def differences_fit() -> Fit | None:
        try:
            return _differences_estimate(name, frame, dependent, regressors, known, significance).fit
        except InsufficientDataError as error:
            trail.append(f"The differences fit is left out: {error.message}.")
            return None

    if undetermined:
        verdict = "inconclusive"
        trail.append(
            f"Verdict inconclusive: the order of integration of {_join(undetermined)} is undetermined, "
            "so reportgen cannot tell whether the levels regression is balanced, cointegrated or "
            "spurious; only the levels fit is reported."
        )
    elif all(order == 0 for order in known.values()):
        verdict = "stationary"
        trail.append(
            "Verdict stationary: every variable is I(0), so the levels regression and its HAC "
            "inference are valid."
        )
    elif (
        dependent_order is not None
        and dependent_order >= 1
        and integrated_regressors
        and all(known[variable] == dependent_order for variable in integrated_regressors)
    ):
        order = dependent_order
        try:
            cointegration = engle_granger(
                frame,
                dependent,
                integrated_regressors,
                significance=significance,
                lag_criterion=settings.lag_criterion,
                deterministic="constant",
            )
        except InsufficientDataError as error:
            verdict = "inconclusive"
            trail.append(
                f"Verdict inconclusive: the orders balance but the Engle-Granger test cannot be run: "
                f"{error.message}."
            )
        else:
            trail.append(_cointegration_sentence(cointegration, settings.lag_criterion))
            if stationary_regressors:
                trail.append(
                    f"The I(0) regressor{'s' if len(stationary_regressors) > 1 else ''} "
                    f"{_join(stationary_regressors)} "
                    f"{'are' if len(stationary_regressors) > 1 else 'is'} left out of the "
                    "cointegrating regression."
                )
            if order == 2:
                trail.append(
                    "The variables are I(2); MacKinnon's critical values assume I(1) variables, so the "
                    "Engle-Granger test is only indicative here."
                )
            if cointegration.rejects:
                verdict = "cointegrated"
                cointegrated = True
                long_run_estimate = _levels_estimate(
                    name, "long-run", frame, dependent, integrated_regressors, significance,
                    (_LONG_RUN_NOTE,),
                )
                long_run = long_run_estimate.fit
                residuals = pd.Series(
                    np.asarray(long_run_estimate.results.resid), index=frame.index, dtype=float
                )
                trail.append(
                    "Verdict cointegrated: the levels relation "
                    f"({long_run.equation}) is a long-run relation, and the short-run dynamics are "
                    "estimated as an error-correction model (Engle and Granger 1987, two steps)."
                )
                try:
                    error_correction = _error_correction_estimate(
                        name, frame, dependent, integrated_regressors, stationary_regressors, order,
                        residuals, significance,
                    ).fit
                except InsufficientDataError as error:
                    trail.append(f"The error-correction fit is left out: {error.message}.")
                else:
                    adjustment = next(c for c in error_correction.coefficients if c.term == "ec(-1)")
                    half_life, sentence = _half_life(adjustment.estimate)
                    significant = adjustment.pvalue < significance and adjustment.estimate < 0
                    trail.append(
                        f"Error-correction coefficient {adjustment.estimate:.3f} (t = "
                        f"{adjustment.t_statistic:.2f}, {_format_pvalue(adjustment.pvalue)}"
                        f"{'' if significant else ', not significantly negative'})"
                        + (f": {sentence}." if half_life is not None else ".")
                    )
                    if half_life is None:
                        trail.append(sentence)
            else:
                verdict = "spurious-risk"
                cointegrated = False
                trail.append(
                    f"Verdict spurious-risk: the levels fit is re-estimated {_differences_phrase(known)}."
                )
                differences = differences_fit()
    else:
        verdict = "unbalanced"
        reason, remarks = _unbalanced_reason(dependent, regressors, known)
        trail.append(
            f"Verdict unbalanced: {reason}, so the levels regression cannot be a cointegrating "
            f"relation; it is re-estimated {_differences_phrase(known)}."
        )
        trail.extend(remarks)
        differences = differences_fit()

    trail.append(_r2_dw_sentence(levels))
    return RegressionAssessment(
        name=name,
        formula=formula,
        dependent=dependent,
        regressors=regressors,
        orders=variable_orders,
        verdict=verdict,
        cointegrated=cointegrated,
        flagged=verdict in FLAGGED_VERDICTS,
        trail=tuple(trail),
        levels=levels,
        differences=differences,
        long_run=long_run,
        error_correction=error_correction,
        cointegration=cointegration,
        adjustment_half_life=half_life,
        r2_exceeds_dw=levels.r_squared > levels.durbin_watson,
        sample_start=labels[0],
        sample_end=labels[-1],
    )
