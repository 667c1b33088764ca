"""A realistic results document built by hand from the result types, for the render tests.

Seven monthly series (orders 0, 1, 2 and undetermined) and five regressions, one per verdict.
The integrated series carry the full battery (ADF, PP, DF-GLS, KPSS, Zivot-Andrews, with an
auxiliary ADF that chose the deterministic terms), a robustness grid and a fan chart; one series
and one regression are fragile. The cointegrated and the spurious regressions carry Engle-Granger
under both normalisations, Johansen's tests and a bounds test. The numbers are made up but
internally plausible; nothing here runs a statistical test.
"""

from __future__ import annotations

import copy
import dataclasses
import json
import math
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

import pytest

from reportgen.results import DatasetRecord, InputRecord, Results, SeriesRecord, results_to_dict
from reportgen.stats.types import (
    BoundsTestResult,
    Coefficient,
    CointegrationTest,
    DiagnosticTest,
    FanChart,
    Fit,
    GridCell,
    JohansenResult,
    OrderVerdict,
    RankTest,
    RegressionAssessment,
    TestResult,
)

CREATED = "2024-05-06T09:30:00Z"


def monthly_dates(start_year: int, start_month: int, count: int) -> tuple[str, ...]:
    """``count`` monthly period labels from ``start_year-start_month``."""
    labels = []
    year, month = start_year, start_month
    for _ in range(count):
        labels.append(f"{year:04d}-{month:02d}")
        month += 1
        if month > 12:
            year, month = year + 1, 1
    return tuple(labels)


def wave(count: int, *, level: float, drift: float, amplitude: float, period: float, phase: float = 0.0,
         curvature: float = 0.0) -> tuple[float, ...]:
    """A smooth deterministic path with some wiggle (stands in for data)."""
    return tuple(
        level + drift * t + curvature * t * t + amplitude * math.sin(2 * math.pi * t / period + phase)
        + 0.3 * amplitude * math.sin(2 * math.pi * t / 7.3 + phase)
        for t in range(count)
    )


def adf(level: int, statistic: float, pvalue: float, *, rejects: bool, deterministic: str = "constant",
        bound: str | None = None, lags: int = 2, nobs: int = 117, start: str = "2010-04",
        notes: tuple[str, ...] = (), auxiliary: bool = False) -> TestResult:
    """An ADF result with MacKinnon-style critical values."""
    values = {"1%": -3.49, "5%": -2.89, "10%": -2.58} if deterministic == "constant" else {
        "1%": -4.04, "5%": -3.45, "10%": -3.15}
    return TestResult(
        test="ADF", null_hypothesis="unit root", level=level, deterministic=deterministic,  # type: ignore[arg-type]
        statistic=statistic, pvalue=pvalue, pvalue_bound=bound, critical_values=values,
        critical_values_source=f"MacKinnon (2010), response surface at T={nobs}", lags=lags,
        lag_rule="AIC, at most 12 (Schwert 1989)", nobs=nobs, sample_start=start, sample_end="2019-12",
        rejects=rejects, significance=0.05, notes=notes, pvalue_source="MacKinnon (1994) response surface",
        lag_criterion="aic", auxiliary=auxiliary,
    )


def kpss(level: int, statistic: float, pvalue: float, *, rejects: bool, deterministic: str = "constant",
         bound: str | None = None, lags: int = 5, nobs: int = 120, start: str = "2010-01") -> TestResult:
    """A KPSS result; p-values come from a table, hence the bounds."""
    return TestResult(
        test="KPSS", null_hypothesis="stationarity", level=level, deterministic=deterministic,  # type: ignore[arg-type]
        statistic=statistic, pvalue=pvalue, pvalue_bound=bound,
        critical_values={"10%": 0.347, "5%": 0.463, "2.5%": 0.574, "1%": 0.739},
        critical_values_source="Kwiatkowski et al. (1992), Table 1", lags=lags,
        lag_rule="Bartlett bandwidth, Hobijn et al. (2004) automatic", nobs=nobs, sample_start=start,
        sample_end="2019-12", rejects=rejects, significance=0.05,
        pvalue_source="interpolated in Kwiatkowski et al. (1992), Table 1", bandwidth=lags,
        bandwidth_rule="Hobijn, Franses and Ooms (2004) automatic, Bartlett kernel",
    )


def pp(level: int, statistic: float, pvalue: float, *, rejects: bool, deterministic: str = "constant",
       bound: str | None = None, bandwidth: int = 4, nobs: int = 119, start: str = "2010-02") -> TestResult:
    """A Phillips-Perron result: no lag search, a long-run variance bandwidth instead."""
    values = {"1%": -3.49, "5%": -2.89, "10%": -2.58} if deterministic == "constant" else {
        "1%": -4.04, "5%": -3.45, "10%": -3.15}
    return TestResult(
        test="PP", null_hypothesis="unit root", level=level, deterministic=deterministic,  # type: ignore[arg-type]
        statistic=statistic, pvalue=pvalue, pvalue_bound=bound, critical_values=values,
        critical_values_source=f"MacKinnon (2010), response surface at T={nobs}", lags=0,
        lag_rule="none: serial correlation is handled by the long-run variance", nobs=nobs,
        sample_start=start, sample_end="2019-12", rejects=rejects, significance=0.05,
        pvalue_source="MacKinnon (1994) response surface", bandwidth=bandwidth,
        bandwidth_rule="Newey and West (1994) automatic, Bartlett kernel",
    )


def dfgls(level: int, statistic: float, pvalue: float, *, rejects: bool, deterministic: str = "constant",
          bound: str | None = None, lags: int = 1, nobs: int = 118, start: str = "2010-03") -> TestResult:
    """A DF-GLS result with Elliott-Rothenberg-Stock critical values."""
    values = {"1%": -2.58, "5%": -1.95, "10%": -1.62} if deterministic == "constant" else {
        "1%": -3.48, "5%": -2.89, "10%": -2.57}
    return TestResult(
        test="DF-GLS", null_hypothesis="unit root", level=level, deterministic=deterministic,  # type: ignore[arg-type]
        statistic=statistic, pvalue=pvalue, pvalue_bound=bound, critical_values=values,
        critical_values_source="Elliott, Rothenberg and Stock (1996), Table 1", lags=lags,
        lag_rule="modified AIC, at most 12 (Ng and Perron 2001)", nobs=nobs, sample_start=start,
        sample_end="2019-12", rejects=rejects, significance=0.05,
        pvalue_source="Cheung and Lai (1995) response surface", lag_criterion="aic",
    )


def zivot_andrews(level: int, statistic: float, pvalue: float, *, rejects: bool, break_date: str,
                  bound: str | None = None, lags: int = 1, nobs: int = 117, start: str = "2010-04") -> TestResult:
    """A Zivot-Andrews result: a unit root against stationarity with one break in the intercept."""
    return TestResult(
        test="ZA", null_hypothesis="unit root", level=level, deterministic="constant",
        statistic=statistic, pvalue=pvalue, pvalue_bound=bound,
        critical_values={"1%": -5.34, "5%": -4.80, "10%": -4.58},
        critical_values_source="Zivot and Andrews (1992), Table 2", lags=lags, lag_rule="t-stat, at most 8",
        nobs=nobs, sample_start=start, sample_end="2019-12", rejects=rejects, significance=0.05,
        notes=("The break date is the last period of the old regime; 15% of the sample is trimmed at each end.",),
        pvalue_source="simulated, 2,000 replications", break_date=break_date, lag_criterion="t-stat",
    )


def battery(level: int, integrated: bool, *, trend: bool = False, break_date: str = "2014-06",
            auxiliary: bool = False) -> list[TestResult]:
    """The full battery at one level: every test agrees that the series is (not) stationary there."""
    terms = "constant-trend" if trend else "constant"
    nobs = 117 - level
    tests = []
    if auxiliary:
        tests.append(adf(level, -2.31 if integrated else -5.02, 0.421 if integrated else 0.0004,
                         rejects=not integrated, deterministic="constant-trend", nobs=nobs, auxiliary=True))
    tests += [
        adf(level, -1.62 if integrated else -7.41, 0.4712 if integrated else 0.001, rejects=not integrated,
            deterministic=terms, bound=None if integrated else "<", nobs=nobs),
        pp(level, -1.48 if integrated else -9.12, 0.5403 if integrated else 0.001, rejects=not integrated,
           deterministic=terms, bound=None if integrated else "<"),
        dfgls(level, -0.87 if integrated else -4.88, 0.318 if integrated else 0.01, rejects=not integrated,
              deterministic=terms, bound=None if integrated else "<"),
        kpss(level, 0.912 if integrated else 0.081, 0.01 if integrated else 0.10, rejects=integrated,
             deterministic=terms, bound="<" if integrated else ">"),
    ]
    if level == 0:
        tests.append(zivot_andrews(level, -3.91 if integrated else -6.02, 0.33 if integrated else 0.01,
                                   rejects=not integrated, break_date=break_date, bound=None if integrated else "<"))
    return tests


GRID_TESTS = ("ADF", "PP", "DF-GLS", "KPSS", "combined")
GRID_TERMS = ("constant", "constant-trend")
GRID_CRITERIA = ("aic", "bic", "t-stat")


def grid(order: int | None, changes: Mapping[tuple[str, str, str], int | None] | None = None) -> tuple[GridCell, ...]:
    """A full robustness grid (5 tests x 2 terms x 3 criteria) with ``order`` except at ``changes``."""
    changes = changes or {}
    return tuple(
        GridCell(test=test, lag_criterion=criterion, deterministic=terms,  # type: ignore[arg-type]
                 order=changes.get((test, terms, criterion), order))
        for test in GRID_TESTS for terms in GRID_TERMS for criterion in GRID_CRITERIA
    )


def fan(dates: Sequence[str], first: float, drift: float, std: float, share_outside: float) -> FanChart:
    """Quantile paths of a random walk with drift, as the statistics stage would store them."""
    quantiles = {"5%": -1.645, "25%": -0.674, "50%": 0.0, "75%": 0.674, "95%": 1.645}
    bands = {label: tuple(first + drift * t + z * std * math.sqrt(t) for t in range(len(dates)))
             for label, z in quantiles.items()}
    return FanChart(dates=tuple(dates), bands=bands, drift=drift, innovation_std=std, replications=500,
                    seed=20240601, share_outside=share_outside,
                    description="500 random walks with the series' mean change and innovation spread, "
                                "started at its first value.")


def order_verdict(name: str, order: int | None, tests: Sequence[TestResult], nobs: int,
                  reason: str | None = None, *, cells: tuple[GridCell, ...] = (), fragile_reason: str | None = None,
                  fan_chart: FanChart | None = None) -> OrderVerdict:
    """An order verdict with a short trail built from its tests."""
    trail = [
        f"{test.test} at level {test.level}: statistic {test.statistic:.3f}, "
        f"{'rejects' if test.rejects else 'does not reject'} {test.null_hypothesis} at 5%."
        for test in tests
    ]
    if order is not None:
        trail.append(f"Both tests agree at level {order}: the series is taken as I({order}).")
    else:
        trail.append(reason or "No order could be decided.")
    deterministic: dict[int, Any] = {}
    for test in tests:  # the terms of the first decision test at each level
        if not test.auxiliary:
            deterministic.setdefault(test.level, test.deterministic)
    return OrderVerdict(
        series=name, order=order, deterministic=deterministic,
        deterministic_reasons={
            level: ("the series trends upward and the trend term is significant at 5%" if terms == "constant-trend"
                    else "no significant trend; a constant keeps the test invariant to the mean")
            for level, terms in deterministic.items()
        },
        tests=tuple(tests), trail=tuple(trail), reason=reason, nobs=nobs,
        notes=("KPSS p-value lies beyond the table: the edge is shown.",) if any(t.pvalue_bound for t in tests) else (),
        grid=cells, fragile=fragile_reason is not None, fragile_reason=fragile_reason, fan_chart=fan_chart,
    )


def fit(role: str, equation: str, dependent: str, terms: Sequence[tuple[str, float, float]],
        dates: Sequence[str], *, r_squared: float, durbin_watson: float, scale: float = 0.05,
        covariance: str = "HAC (Newey-West, Bartlett kernel, 4 lags, small-sample correction)") -> Fit:
    """A fitted equation with made-up residuals on ``dates``."""
    hac = covariance.startswith("HAC")
    coefficients = tuple(
        Coefficient(term=term, estimate=estimate, std_error=error, t_statistic=estimate / error,
                    pvalue=min(1.0, math.exp(-abs(estimate / error))))
        for term, estimate, error in terms
    )
    residuals = tuple(scale * math.sin(0.37 * t) + 0.4 * scale * math.cos(1.9 * t) for t in range(len(dates)))
    nobs = len(dates)
    regressors = len(coefficients) - 1
    return Fit(
        role=role, equation=equation, dependent=dependent, coefficients=coefficients,
        covariance=covariance, nobs=nobs, r_squared=r_squared,
        adj_r_squared=1 - (1 - r_squared) * (nobs - 1) / max(1, nobs - regressors - 1),
        durbin_watson=durbin_watson, residual_std_error=scale * 0.8, sample_start=dates[0],
        sample_end=dates[-1], residual_dates=tuple(dates), residuals=residuals,
        hac_kernel="Bartlett" if hac else "", hac_bandwidth=4 if hac else None,
        hac_bandwidth_rule="int(4 (T/100)^(2/9))" if hac else "", small_sample_correction=hac,
        diagnostics=(
            DiagnosticTest(name="Ljung-Box (Q, 12 lags)", null_hypothesis="no autocorrelation up to lag 12",
                           statistic=14.2 if durbin_watson > 1.5 else 211.7,
                           pvalue=0.288 if durbin_watson > 1.5 else 0.0,
                           rejects=durbin_watson <= 1.5),
            DiagnosticTest(name="Jarque-Bera", null_hypothesis="normal residuals", statistic=1.84, pvalue=0.399,
                           rejects=False),
            DiagnosticTest(name="Breusch-Pagan", null_hypothesis="constant residual variance", statistic=3.1,
                           pvalue=0.0781, rejects=False),
            DiagnosticTest(name="RESET (squares and cubes of the fit)", null_hypothesis="no omitted non-linearity",
                           statistic=1.22, pvalue=0.298, rejects=False),
        ),
    )


def engle_granger(dependent: str, variables: tuple[str, ...], statistic: float, pvalue: float, *, rejects: bool,
                  lags: int, nobs: int, notes: tuple[str, ...] = ()) -> CointegrationTest:
    """An Engle-Granger test with ``dependent`` on the left of the cointegrating regression."""
    count = len(variables)
    values = {2: {"1%": -3.99, "5%": -3.38, "10%": -3.07}, 3: {"1%": -4.38, "5%": -3.77, "10%": -3.45}}[count]
    return CointegrationTest(
        method="Engle-Granger", dependent=dependent, variables=variables, deterministic="constant",
        statistic=statistic, pvalue=pvalue, pvalue_bound=None, critical_values=values,
        critical_values_source=f"MacKinnon (2010), {count} variables, constant", lags=lags,
        lag_rule="AIC, at most 12", nobs=nobs, rejects=rejects, significance=0.05, notes=notes,
    )


def johansen(variables: tuple[str, ...], *, rank: int, trace: Sequence[float],
             maximum: Sequence[float]) -> JohansenResult:
    """Johansen's tests on ``variables`` (case 3); the 99% trace value of the last rank is missing."""
    trace_values = [{"90%": 26.70, "95%": 29.80, "99%": 35.46}, {"90%": 13.43, "95%": 15.49, "99%": 19.94},
                    {"90%": 2.71, "95%": 3.84}][-len(variables):]
    maximum_values = [{"90%": 18.89, "95%": 21.13, "99%": 25.86}, {"90%": 12.30, "95%": 14.26, "99%": 18.52},
                      {"90%": 2.71, "95%": 3.84, "99%": 6.63}][-len(variables):]
    return JohansenResult(
        variables=variables, case=3, case_description="unrestricted constant", lags=1,
        lag_rule="BIC over VAR orders 1 to 6", nobs=118,
        eigenvalues=tuple(round(0.18 / (index + 1), 4) for index in range(len(variables))),
        trace=tuple(RankTest(rank=index, statistic=value, critical_values=trace_values[index],
                             rejects=index < rank) for index, value in enumerate(trace)),
        max_eigenvalue=tuple(RankTest(rank=index, statistic=value, critical_values=maximum_values[index],
                                      rejects=index < rank) for index, value in enumerate(maximum)),
        rank=rank, rank_rule="first trace test that does not reject, from rank 0 up",
        critical_values_source="Osterwald-Lenum (1992), Table 1", significance=0.05,
        notes=("The VAR residuals show no autocorrelation up to lag 12.",),
    )


METHODS: dict[str, Any] = {
    "order_rule": [
        "Each series is tested as analysed (level 0), then in first and, if needed, second differences.",
        "At each level an ADF test (null: unit root) and a KPSS test (null: stationarity) are run.",
        "The order is the first level at which ADF rejects and KPSS does not; "
        "if the two tests disagree at every level, the order is left undetermined.",
    ],
    "deterministic_rule": [
        "A trend term is included at level 0 when the series has a significant linear trend; "
        "otherwise a constant only.",
        "Differenced series are tested with a constant only.",
    ],
    "grid_rule": [
        "Every decision test is re-run under each lag criterion (AIC, BIC, t-statistics) and each choice of "
        "deterministic terms (constant; constant and trend).",
        "Each cell shows the order that test alone implies; the combined row applies the whole decision procedure.",
        "A series is fragile when the combined order changes anywhere in the grid.",
    ],
    "verdict_rule": [
        "All variables I(0): the levels regression stands.",
        "Integrated variables of equal order with a cointegration test that rejects: cointegrated.",
        "Integrated variables without cointegration: spurious-regression risk; re-estimated in differences.",
        "Orders that cannot balance: unbalanced. Any undetermined order: inconclusive.",
    ],
    "tests": [
        {"name": "ADF", "null_hypothesis": "unit root",
         "description": "Augmented Dickey-Fuller regression with lagged differences chosen by information criterion.",
         "reference": "Dickey and Fuller (1979); MacKinnon (2010)"},
        {"name": "KPSS", "null_hypothesis": "stationarity",
         "description": "Lagrange-multiplier test of a stationary series around a constant or trend.",
         "reference": "Kwiatkowski, Phillips, Schmidt and Shin (1992)"},
        {"name": "PP", "null_hypothesis": "unit root",
         "description": "Phillips-Perron test with a long-run variance correction instead of lagged differences.",
         "reference": "Phillips and Perron (1988)"},
        {"name": "DF-GLS", "null_hypothesis": "unit root",
         "description": "Dickey-Fuller test on GLS-detrended data.",
         "reference": "Elliott, Rothenberg and Stock (1996)"},
        {"name": "ZA", "null_hypothesis": "unit root",
         "description": "Unit-root test against stationarity with one break at an unknown date.",
         "reference": "Zivot and Andrews (1992)"},
        {"name": "Johansen", "null_hypothesis": "cointegrating rank at most r",
         "description": "Trace and maximum-eigenvalue tests in a VAR in error-correction form.",
         "reference": "Johansen (1988, 1991)"},
        {"name": "Bounds test", "null_hypothesis": "no levels relation",
         "description": "F-test on the lagged levels of an ARDL model against I(0) and I(1) bounds.",
         "reference": "Pesaran, Shin and Smith (2001)"},
        {"name": "Engle-Granger", "null_hypothesis": "no cointegration",
         "description": "ADF-type test on the residuals of the levels regression.",
         "reference": "Engle and Granger (1987)"},
    ],
    "references": [
        "Dickey, D. A. and W. A. Fuller (1979). Distribution of the estimators for autoregressive time series "
        "with a unit root. Journal of the American Statistical Association 74, 427-431.",
        "Engle, R. F. and C. W. J. Granger (1987). Co-integration and error correction: representation, "
        "estimation, and testing. Econometrica 55, 251-276.",
        "Granger, C. W. J. and P. Newbold (1974). Spurious regressions in econometrics. "
        "Journal of Econometrics 2, 111-120.",
        "Kwiatkowski, D., P. C. B. Phillips, P. Schmidt and Y. Shin (1992). Testing the null hypothesis of "
        "stationarity against the alternative of a unit root. Journal of Econometrics 54, 159-178.",
        "MacKinnon, J. G. (2010). Critical values for cointegration tests. Queen's Economics Department "
        "Working Paper 1227.",
    ],
}


def build_results() -> Results:
    """The fixture run: seven series, five regressions, one per verdict."""
    dates = monthly_dates(2010, 1, 120)
    short_dates = monthly_dates(2018, 9, 16)
    raw = {
        "rate": wave(120, level=2.0, drift=0.0, amplitude=0.6, period=17),
        "fuel_growth": wave(120, level=0.002, drift=0.0, amplitude=0.01, period=9, phase=1.0),
        "boxes": wave(120, level=11.2, drift=0.006, amplitude=0.05, period=23),
        "fuel": wave(120, level=4.6, drift=0.004, amplitude=0.08, period=31, phase=0.5),
        "wages": wave(120, level=7.9, drift=0.003, amplitude=0.02, period=40, phase=2.0),
        "cpi": wave(120, level=4.5, drift=0.001, amplitude=0.004, period=50, curvature=0.00002),
        "survey": wave(16, level=51.0, drift=0.1, amplitude=2.0, period=6),
    }
    verdicts = {
        "rate": order_verdict("rate", 0, [adf(0, -4.812, 0.0002, rejects=True),
                                          kpss(0, 0.121, 0.10, rejects=False, bound=">")], 120),
        "fuel_growth": order_verdict("fuel_growth", 0, [adf(0, -6.204, 0.001, rejects=True, bound="<"),
                                                        kpss(0, 0.088, 0.10, rejects=False, bound=">")], 120),
        "boxes": order_verdict(
            "boxes", 1, [*battery(0, True, trend=True, auxiliary=True, break_date="2013-11"), *battery(1, False)], 120,
            cells=grid(1), fan_chart=fan(dates, raw["boxes"][0], 0.006, 0.021, 0.042)),
        "fuel": order_verdict(
            "fuel", 1, [*battery(0, True, auxiliary=True, break_date="2014-06"), *battery(1, False)], 120,
            cells=grid(1), fan_chart=fan(dates, raw["fuel"][0], 0.004, 0.035, 0.0)),
        "wages": order_verdict(
            "wages", 1, [*battery(0, True, trend=True, auxiliary=True, break_date="2016-02"), *battery(1, False)],
            120,
            cells=grid(1, {("DF-GLS", "constant", "bic"): 0, ("DF-GLS", "constant", "t-stat"): 0,
                           ("combined", "constant", "bic"): None}),
            fragile_reason="DF-GLS with a constant finds I(0) when lags are chosen by BIC or by t-statistics; "
                           "with a constant and BIC the combined decision is undetermined.",
            fan_chart=fan(dates, raw["wages"][0], 0.003, 0.012, 0.183)),
        "cpi": order_verdict(
            "cpi", 2, [*battery(0, True, trend=True, auxiliary=True, break_date="2012-01"), *battery(1, True),
                       *battery(2, False)], 120,
            cells=grid(2), fan_chart=fan(dates, raw["cpi"][0], 0.0012, 0.004, 0.25)),
        "survey": order_verdict("survey", None, [], 16,
                                reason="needs at least 20 observations at level 0; the series has 16"),
    }
    labels = {
        "rate": ("Policy rate spread", "harbour", "rate_spread", ()),
        "fuel_growth": ("Fuel price growth", "harbour", "fuel_index", ("log-diff",)),
        "boxes": ("Containers handled (log)", "harbour", "containers", ("log",)),
        "fuel": ("Fuel price index (log)", "harbour", "fuel_index", ("log",)),
        "wages": ("Dock wages (log) & overtime", "harbour", "wages", ("log",)),
        "cpi": ("Consumer prices (log)", "harbour", "cpi", ("log",)),
        "survey": ("Shipper sentiment survey", "survey", "balance", ()),
    }
    series = {}
    for name, (label, dataset, column, transforms) in labels.items():
        values = raw[name]
        series_dates = short_dates if name == "survey" else dates
        lineage = column
        for transform in transforms:
            lineage = f"{transform}({lineage})"
        series[name] = SeriesRecord(
            name=name, label=label, dataset=dataset, column=column, transforms=transforms, lineage=lineage,
            frequency="monthly", start=series_dates[0], end=series_dates[-1], dates=series_dates, values=values,
            verdict=verdicts[name],
            notes=("Two missing months were dropped before testing.",) if name == "wages" else (),
        )
    levels_dates = dates
    diff_dates = dates[1:]
    ecm_dates = dates[2:]
    regressions = {
        "rate_on_fuel_growth": RegressionAssessment(
            name="rate_on_fuel_growth", formula="rate ~ fuel_growth", dependent="rate", regressors=("fuel_growth",),
            orders={"rate": 0, "fuel_growth": 0}, verdict="stationary", cointegrated=None, flagged=False,
            trail=("Every variable is I(0).", "The levels regression is reported with HAC standard errors."),
            levels=fit("levels", "rate ~ const + fuel_growth", "rate",
                       [("const", 1.98, 0.07), ("fuel_growth", 4.1, 2.2)], levels_dates,
                       r_squared=0.031, durbin_watson=1.91, scale=0.5),
            sample_start=dates[0], sample_end=dates[-1],
        ),
        "boxes_on_fuel": RegressionAssessment(
            name="boxes_on_fuel", formula="boxes ~ fuel", dependent="boxes", regressors=("fuel",),
            orders={"boxes": 1, "fuel": 1}, verdict="cointegrated", cointegrated=True, flagged=False,
            trail=("Both variables are I(1).",
                   "Engle-Granger rejects no cointegration at 5% (statistic -4.21).",
                   "The long-run relation is kept and an error-correction model is estimated."),
            levels=fit("levels", "boxes ~ const + fuel", "boxes", [("const", 6.31, 0.42), ("fuel", 1.07, 0.09)],
                       levels_dates, r_squared=0.912, durbin_watson=0.61),
            long_run=fit("long-run (dynamic OLS)", "boxes ~ const + fuel + d.fuel(-2..2)", "boxes",
                         [("const", 6.28, 0.51), ("fuel", 1.08, 0.11)], levels_dates[2:-2], r_squared=0.934,
                         durbin_watson=0.74),
            error_correction=fit(
                "error-correction", "d.boxes ~ const + ec(-1) + d.fuel + d.boxes(-1)", "d.boxes",
                [("const", 0.0011, 0.0009), ("ec(-1)", -0.187, 0.041), ("d.fuel", 0.352, 0.118),
                 ("d.boxes(-1)", 0.104, 0.088)], ecm_dates, r_squared=0.331, durbin_watson=2.03, scale=0.02),
            cointegration=engle_granger("boxes", ("boxes", "fuel"), -4.21, 0.0037, rejects=True, lags=1, nobs=118),
            # The document's order is not the display order: the manifest's normalisation is shown first.
            engle_granger=(
                engle_granger("fuel", ("boxes", "fuel"), -3.52, 0.0341, rejects=True, lags=2, nobs=117),
                engle_granger("boxes", ("boxes", "fuel"), -4.21, 0.0037, rejects=True, lags=1, nobs=118),
            ),
            johansen=johansen(("boxes", "fuel"), rank=1, trace=(24.1, 2.9), maximum=(21.2, 2.9)),
            bounds_test=BoundsTestResult(
                dependent="boxes", regressors=("fuel",), case=3, case_description="unrestricted constant, no trend",
                lags={"boxes": 2, "fuel": 1}, lag_rule="AIC over ARDL(p, q), p and q at most 4", nobs=116,
                f_statistic=7.82,
                critical_values={"10%": (4.04, 4.78), "5%": (4.94, 5.73), "1%": (6.84, 7.84)},
                critical_values_source="Pesaran, Shin and Smith (2001), Table CI(iii), k = 1",
                decision="levels relation", significance=0.05,
                notes=("Asymptotic bounds; the sample has 116 observations.",),
            ),
            adjustment_speed=-0.187,
            adjustment_half_life=3.35, r2_exceeds_dw=True, sample_start=dates[0], sample_end=dates[-1],
            notes=("The long-run coefficient standard errors are not valid for inference.",),
        ),
        "wages_on_fuel": RegressionAssessment(
            name="wages_on_fuel", formula="wages ~ fuel + boxes", dependent="wages", regressors=("fuel", "boxes"),
            orders={"wages": 1, "fuel": 1, "boxes": 1}, verdict="spurious-risk", cointegrated=False, flagged=True,
            trail=("Every variable is I(1).", "Engle-Granger does not reject no cointegration (p = 0.62).",
                   "R² (0.874) exceeds the Durbin-Watson statistic (0.08): the classic spurious-regression sign.",
                   "The regression is re-estimated in first differences."),
            levels=fit("levels", "wages ~ const + fuel + boxes", "wages",
                       [("const", 3.02, 0.11), ("fuel", 1.063, 0.024), ("boxes", 0.05, 0.04)],
                       levels_dates, r_squared=0.874, durbin_watson=0.08, scale=0.04),
            differences=fit("differences", "d.wages ~ const + d.fuel + d.boxes", "d.wages",
                            [("const", 0.0029, 0.0004), ("d.fuel", 0.021, 0.034), ("d.boxes", 0.011, 0.02)],
                            diff_dates, r_squared=0.004, durbin_watson=1.97, scale=0.004),
            cointegration=engle_granger("wages", ("wages", "fuel", "boxes"), -1.71, 0.6214, rejects=False, lags=2,
                                        nobs=117),
            engle_granger=(
                engle_granger("wages", ("wages", "fuel", "boxes"), -1.71, 0.6214, rejects=False, lags=2, nobs=117),
                engle_granger("fuel", ("wages", "fuel", "boxes"), -2.02, 0.4733, rejects=False, lags=1, nobs=118),
                engle_granger("boxes", ("wages", "fuel", "boxes"), -3.95, 0.0412, rejects=True, lags=1, nobs=118,
                              notes=("With boxes on the left the residuals look stationary.",)),
            ),
            johansen=johansen(("wages", "fuel", "boxes"), rank=0, trace=(27.3, 9.1, 1.2), maximum=(18.2, 7.9, 1.2)),
            bounds_test=BoundsTestResult(
                dependent="wages", regressors=("fuel", "boxes"), case=3,
                case_description="unrestricted constant, no trend", lags={"wages": 1, "fuel": 0, "boxes": 1},
                lag_rule="AIC over ARDL(p, q), p and q at most 4", nobs=118, f_statistic=3.71,
                critical_values={"90%": (3.17, 4.14), "95%": (3.79, 4.85), "99%": (5.15, 6.36)},
                critical_values_source="Pesaran, Shin and Smith (2001), Table CI(iii), k = 2",
                decision="inside the bounds", significance=0.05,
            ),
            fragile=True,
            fragile_reason="The order of wages is fragile, and Engle-Granger rejects with boxes on the left only.",
            r2_exceeds_dw=True, sample_start=dates[0], sample_end=dates[-1],
        ),
        "rate_on_boxes": RegressionAssessment(
            name="rate_on_boxes", formula="rate ~ boxes", dependent="rate", regressors=("boxes",),
            orders={"rate": 0, "boxes": 1}, verdict="unbalanced", cointegrated=None, flagged=True,
            trail=("rate is I(0) while its only regressor boxes is I(1): the orders cannot balance.",
                   "The regression is re-estimated with boxes in first differences."),
            levels=fit("levels", "rate ~ const + boxes", "rate", [("const", -4.1, 6.2), ("boxes", 0.54, 0.55)],
                       levels_dates, r_squared=0.058, durbin_watson=0.44, scale=0.5),
            differences=fit("differences", "rate ~ const + d.boxes", "rate",
                            [("const", 2.0, 0.06), ("d.boxes", -1.9, 3.1)], diff_dates,
                            r_squared=0.003, durbin_watson=0.45, scale=0.5),
            sample_start=dates[0], sample_end=dates[-1],
        ),
        "survey_on_boxes": RegressionAssessment(
            name="survey_on_boxes", formula="survey ~ boxes", dependent="survey", regressors=("boxes",),
            orders={"survey": None, "boxes": 1}, verdict="inconclusive", cointegrated=None, flagged=True,
            trail=("The order of survey could not be decided: "
                   "needs at least 20 observations at level 0; the series has 16.",
                   "No verdict is possible without the order of every variable."),
            levels=fit("levels", "survey ~ const + boxes", "survey", [("const", -60.3, 80.1), ("boxes", 9.8, 7.1)],
                       short_dates, r_squared=0.12, durbin_watson=1.1, scale=1.5,
                       covariance="classical (OLS); too few observations for HAC"),
            sample_start=short_dates[0], sample_end=short_dates[-1],
        ),
    }
    inputs = (
        InputRecord(role="manifest", name="manifest", path="/srv/projects/harbour/manifest.yaml",
                    relative_path="manifest.yaml",
                    sha256="9f2c4e1a7b3d5f60718293a4b5c6d7e8f90a1b2c3d4e5f60718293a4b5c6d7e8", bytes=1482),
        InputRecord(role="data", name="harbour", path="/srv/projects/harbour/data/harbour_monthly.csv",
                    relative_path="data/harbour_monthly.csv",
                    sha256="0a1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d4e5f60718293a4b5c6d7e8f9", bytes=18204),
        InputRecord(role="data", name="survey", path="/srv/projects/harbour/data/survey.csv",
                    relative_path="data/survey.csv",
                    sha256="1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d4e5f60718293a4b5c6d7e8f90a", bytes=612),
    )
    datasets = {
        "harbour": DatasetRecord(name="harbour", path="data/harbour_monthly.csv", index_column="month",
                                 frequency="monthly", frequency_source="inferred", rows=120, start="2010-01",
                                 end="2019-12",
                                 columns=("containers", "fuel_index", "rate_spread", "wages", "cpi"),
                                 table_sha256="5e6f708192a3b4c5d6e7f8090a1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d"),
        "survey": DatasetRecord(name="survey", path="data/survey.csv", index_column="month", frequency="monthly",
                                frequency_source="declared", rows=16, start="2018-09", end="2019-12",
                                columns=("balance",),
                                table_sha256="6f708192a3b4c5d6e7f8090a1b2c3d4e5f60718293a4b5c6d7e8f90a1b2c3d4e"),
    }
    environment = {
        "python": "3.11.9 (CPython)",
        "platform": "Linux-6.1.0-x86_64-with-glibc2.36",
        "packages": {"numpy": "2.4.6", "pandas": "3.1.1", "statsmodels": "0.15.0", "matplotlib": "3.11.2",
                     "weasyprint": "70.0"},
        "command": "reportgen run manifest.yaml --out out --format html,pdf",
        "git": {"commit": "3f9e2d1c0b4a", "dirty": False},
    }
    return Results(
        tool_version="0.1.0", run_id="rg-20240506-8c41f2", created=CREATED,
        project={"title": "Harbour throughput and fuel costs", "client": "Port Authority Strategy Unit",
                 "author": "Modelling team", "reference": "PA-2024-017"},
        settings={"significance": 0.05, "max_order": 2, "lag_criterion": "aic", "deterministic": "auto"},
        inputs=inputs, environment=environment, datasets=datasets, series=series, regressions=regressions,
        regression_labels={"boxes_on_fuel": "Container volumes and fuel prices",
                           "wages_on_fuel": "Dock wages and fuel prices"},
        methods=copy.deepcopy(METHODS),
    )


def plain(value: Any) -> Any:
    """A result value as JSON would give it back (tuples become lists)."""
    if value is None:
        return None
    return json.loads(json.dumps(dataclasses.asdict(value) if dataclasses.is_dataclass(value) else value))


def build_document() -> dict[str, Any]:
    """``results_to_dict`` of the fixture run, with the series keys the runner adds to it.

    The series entries of results.json carry ``grid``, ``fragile``, ``fragile_reason`` and
    ``fan_chart`` from each series' verdict; they are set here the same way, whether or not
    ``results_to_dict`` already writes them.
    """
    results = build_results()
    document = results_to_dict(results)
    for name, record in results.series.items():
        verdict = record.verdict
        document["series"][name]["grid"] = [plain(cell) for cell in verdict.grid]
        document["series"][name]["fragile"] = verdict.fragile
        document["series"][name]["fragile_reason"] = verdict.fragile_reason
        document["series"][name]["fan_chart"] = plain(verdict.fan_chart)
    return document


@pytest.fixture(scope="session")
def document_master() -> dict[str, Any]:
    """The fixture document, built once; tests must use ``document`` to get a private copy."""
    return build_document()


@pytest.fixture
def document(document_master: dict[str, Any]) -> dict[str, Any]:
    """A private copy of the fixture document, free to modify."""
    return copy.deepcopy(document_master)


@pytest.fixture(scope="session")
def plots(document_master: dict[str, Any]) -> dict[str, str]:
    """The charts of the fixture document."""
    from reportgen.render.plots import render_plots

    return render_plots(document_master)


@pytest.fixture(scope="session")
def html_text(document_master: dict[str, Any], plots: dict[str, str]) -> str:
    """The dossier HTML of the fixture document."""
    from reportgen.render.html import render_html

    return render_html(document_master, plots)


@pytest.fixture(scope="module")
def workspace(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A project folder with a manifest and a results.json to attach to PDFs (one per test module)."""
    folder = tmp_path_factory.mktemp("project")
    (folder / "manifest.yaml").write_text("reportgen: 1\nproject: {title: Harbour}\n", encoding="utf-8")
    (folder / "results.json").write_text('{"schema_version": "1.0"}\n', encoding="utf-8")
    return folder
