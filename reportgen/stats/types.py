"""Result types of the statistics stage: frozen values with full-word fields.

These are the only things ``reportgen.stats`` hands to the rest of the program. They hold plain
Python values (floats, ints, strings, tuples, dicts of those) so that ``results.py`` can write them
to JSON without knowing any statistics, and so that a notebook user can read them directly.
Dates are ISO-like period labels (``"2011-03"``, ``"2011Q1"``, ``"2011"``, ``"2011-03-14"``).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import ClassVar

from reportgen.vocabulary import Deterministic, Verdict


@dataclass(frozen=True, slots=True)
class TestResult:
    """One unit-root or stationarity test on one series at one differencing level.

    ``pvalue_bound`` is ``"<"`` or ``">"`` when the p-value lies beyond the range of the table or
    response surface it comes from; ``pvalue`` then holds the edge of that range, never a clipped
    value passed off as exact.
    """

    __test__: ClassVar[bool] = False  # not a pytest test class, despite its name

    test: str  # "ADF" or "KPSS" (more tests arrive with the battery)
    null_hypothesis: str  # "unit root" or "stationarity"
    level: int  # differencing level: 0 = as transformed, 1 = first differences, 2 = second
    deterministic: Deterministic
    statistic: float
    pvalue: float
    pvalue_bound: str | None
    critical_values: dict[str, float]  # keys "1%", "5%", "10%" (KPSS also "2.5%")
    critical_values_source: str  # e.g. "MacKinnon (2010), response surface at T=238"
    lags: int  # ADF: lagged differences; KPSS: Bartlett bandwidth
    lag_rule: str  # e.g. "AIC, at most 14 (Schwert 1989, floor)"
    nobs: int  # observations in the test regression
    sample_start: str
    sample_end: str
    rejects: bool  # rejects its null at the manifest's significance level
    significance: float
    notes: tuple[str, ...] = ()
    pvalue_source: str = ""  # e.g. "MacKinnon (1994) response surface"
    bandwidth: int | None = None  # long-run variance bandwidth (KPSS, Phillips-Perron); None for ADF
    bandwidth_rule: str = ""  # e.g. "Newey and West (1994) automatic, Bartlett kernel"
    break_date: str | None = None  # Zivot-Andrews: period label of the estimated break (convention in notes)
    lag_criterion: str | None = None  # "aic", "bic", "t-stat" or "fixed" where lags were searched
    auxiliary: bool = False  # run only to choose deterministic terms, not part of the decision


@dataclass(frozen=True, slots=True)
class GridCell:
    """One cell of a series' robustness grid: the order one test alone implies under one set of choices."""

    test: str  # "ADF", "PP", "DF-GLS", "KPSS", or "combined" for the whole decision procedure
    lag_criterion: str  # "aic", "bic", "t-stat" (tests without a lag search repeat the same cell)
    deterministic: Deterministic
    order: int | None


@dataclass(frozen=True, slots=True)
class FanChart:
    """Simulated random walks calibrated to a series' drift and innovation spread (seeded).

    ``bands`` maps a quantile label ("5%", "25%", "50%", "75%", "95%") to a path the length of
    ``dates``; every path starts at the series' first value.
    """

    dates: tuple[str, ...]
    bands: dict[str, tuple[float, ...]]
    drift: float
    innovation_std: float
    replications: int
    seed: int
    share_outside: float  # share of the observed path outside the 5%-95% band
    description: str


@dataclass(frozen=True, slots=True)
class OrderVerdict:
    """The order of integration of one series and how it was reached."""

    series: str
    order: int | None  # 0, 1, 2, or None when inconclusive
    deterministic: dict[int, Deterministic]  # chosen terms per differencing level tested
    deterministic_reasons: dict[int, str]  # one sentence per level: why these terms
    tests: tuple[TestResult, ...]  # every test run, in the order they were run
    trail: tuple[str, ...]  # the decision trail in plain sentences
    reason: str | None  # why the order is None; None when an order was found
    nobs: int  # observations of the series (level 0)
    notes: tuple[str, ...] = ()  # captured library warnings and other remarks
    grid: tuple[GridCell, ...] = ()  # the robustness grid: lag criterion x deterministic terms x test
    fragile: bool = False  # the combined order changes somewhere in the grid
    fragile_reason: str | None = None  # which choices change it
    fan_chart: FanChart | None = None  # for integrated series (order >= 1)


@dataclass(frozen=True, slots=True)
class Coefficient:
    """One estimated coefficient with its (HAC or classical) standard error."""

    term: str  # "const", "trend", "fuel", "d.fuel", "ec(-1)", "d.boxes(-1)"
    estimate: float
    std_error: float
    t_statistic: float | None  # None when the standard error is zero (the fit's notes say why)
    pvalue: float | None


@dataclass(frozen=True, slots=True)
class DiagnosticTest:
    """A residual diagnostic: name, statistic, p-value, what its null says."""

    name: str  # "Ljung-Box (Q, 12 lags)", "Jarque-Bera"
    null_hypothesis: str
    statistic: float
    pvalue: float
    rejects: bool


@dataclass(frozen=True, slots=True)
class Fit:
    """One fitted equation (OLS) with everything the dossier shows about it."""

    role: str  # "levels", "differences", "long-run", "error-correction"
    equation: str  # human-readable, e.g. "d.boxes ~ const + d.fuel"
    dependent: str
    coefficients: tuple[Coefficient, ...]
    covariance: str  # e.g. "HAC (Newey-West, Bartlett kernel, 4 lags, small-sample correction)"
    nobs: int
    r_squared: float
    adj_r_squared: float
    durbin_watson: float
    residual_std_error: float
    sample_start: str
    sample_end: str
    residual_dates: tuple[str, ...]
    residuals: tuple[float, ...]
    diagnostics: tuple[DiagnosticTest, ...] = ()
    notes: tuple[str, ...] = ()
    hac_kernel: str = ""  # "Bartlett"; empty for classical standard errors
    hac_bandwidth: int | None = None  # lags in the Newey-West estimator
    hac_bandwidth_rule: str = ""  # e.g. "int(4 (T/100)^(2/9))"
    small_sample_correction: bool = False


@dataclass(frozen=True, slots=True)
class CointegrationTest:
    """A residual-based (Engle-Granger) cointegration test."""

    method: str  # "Engle-Granger"
    dependent: str  # the variable on the left of the cointegrating regression
    variables: tuple[str, ...]  # every integrated variable in the relation
    deterministic: Deterministic
    statistic: float
    pvalue: float | None  # None beyond the p-value surfaces (more than six variables); a note says so
    pvalue_bound: str | None
    critical_values: dict[str, float]
    critical_values_source: str
    lags: int
    lag_rule: str
    nobs: int
    rejects: bool  # rejects "no cointegration" at the manifest's significance level
    significance: float
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class RankTest:
    """One step of a Johansen sequence: H0 rank <= r against the trace or maximum-eigenvalue alternative."""

    rank: int  # r under the null hypothesis
    statistic: float
    critical_values: dict[str, float]  # "90%", "95%", "99%"
    rejects: bool  # at the manifest's significance level


@dataclass(frozen=True, slots=True)
class JohansenResult:
    """Johansen's reduced-rank tests on a VAR of the integrated variables."""

    variables: tuple[str, ...]
    case: int  # 1-5 in the usual numbering (1 none, 2 restricted constant, 3 unrestricted constant, ...)
    case_description: str
    lags: int  # lagged differences in the VAR's error-correction form (VAR order minus one)
    lag_rule: str
    nobs: int
    eigenvalues: tuple[float, ...]
    trace: tuple[RankTest, ...]
    max_eigenvalue: tuple[RankTest, ...]
    rank: int  # chosen by the sequential trace procedure
    rank_rule: str
    critical_values_source: str
    significance: float
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class BoundsTestResult:
    """Pesaran, Shin and Smith (2001) bounds test for a levels relation in an ARDL model."""

    dependent: str
    regressors: tuple[str, ...]
    case: int  # PSS case (I-V)
    case_description: str
    lags: dict[str, int]  # ARDL lag order of each variable
    lag_rule: str
    nobs: int
    f_statistic: float
    critical_values: dict[str, tuple[float, float]]  # level -> (I(0) bound, I(1) bound)
    critical_values_source: str
    decision: str  # "levels relation", "no levels relation", "inside the bounds"
    significance: float
    notes: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class RegressionAssessment:
    """Everything reportgen concludes about one candidate regression."""

    name: str
    formula: str  # as written in the manifest
    dependent: str
    regressors: tuple[str, ...]
    orders: dict[str, int | None]  # every variable's order of integration
    verdict: Verdict
    cointegrated: bool | None  # None when no cointegration test applied
    flagged: bool
    trail: tuple[str, ...]  # the decision in plain sentences
    levels: Fit | None  # None only when not even the levels fit is feasible
    differences: Fit | None = None  # the regression re-estimated with each integrated side differenced
    long_run: Fit | None = None  # the cointegrating (levels) relation when cointegrated
    error_correction: Fit | None = None
    cointegration: CointegrationTest | None = None
    adjustment_half_life: float | None = None  # periods, from the error-correction coefficient
    r2_exceeds_dw: bool = False  # the Granger-Newbold warning sign on the levels fit
    sample_start: str = ""
    sample_end: str = ""
    notes: tuple[str, ...] = field(default_factory=tuple)
    engle_granger: tuple[CointegrationTest, ...] = ()  # every normalisation (each variable on the left)
    johansen: JohansenResult | None = None
    bounds_test: BoundsTestResult | None = None
    adjustment_speed: float | None = None  # the error-correction coefficient on ec(-1)
    fragile: bool = False  # a variable's order is fragile, or the cointegration tests disagree
    fragile_reason: str | None = None
    warnings: tuple[str, ...] = ()  # library warnings raised during the assessment, "Category: message"


@dataclass(frozen=True, slots=True)
class StatsSettings:
    """The choices that steer the statistics, taken from the manifest's ``settings`` section."""

    significance: float = 0.05  # one of 0.01, 0.05, 0.10
    max_order: int = 2  # highest order of integration tested (1 or 2)
    lag_criterion: str = "aic"  # "aic", "bic" or "t-stat"
    deterministic: str = "auto"  # "auto", "constant" or "constant-trend"
    min_observations: int = 20  # fewer observations at a differencing level: no test, order None
    seed: int = 20240601  # for every simulation (fan charts); results are identical for the same seed
    fan_replications: int = 500
