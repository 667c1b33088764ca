"""The pipeline: manifest → datasets → series → orders → regressions → results → dossier.

``run`` calls each stage in order and writes the outputs atomically: everything goes into a
temporary folder beside the output folder and is moved into place only when complete, so a
failed run never leaves a half-written dossier and never destroys the previous one.
``checksums.sha256`` is written last; the staging folder's name carries the process id, so the
next run can remove what a killed run left (see :func:`remove_stale_staging`).
"""

from __future__ import annotations

import ctypes
import dataclasses
import errno
import functools
import hashlib
import json
import os
import shutil
import sys
import tempfile
import time
import warnings
from collections.abc import Callable, Iterator, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal, TypeVar

import numpy as np
import pandas as pd

from reportgen import __version__
from reportgen.branding import BRAND_ROLE, brand_files, brand_folder, logo_data_url
from reportgen.cache import ResultCache, content_key
from reportgen.errors import (
    ConstantSeriesError,
    DaskMissingError,
    DataError,
    InsufficientDataError,
    Location,
    MixedFrequenciesError,
    OutputForeignError,
    OutputIsFileError,
    OutputOtherDossierError,
    OutputUnreadableResultsError,
    OutputUnwritableError,
    ReportgenError,
    SampleBoundError,
    SampleTooShortError,
    SeriesScaleError,
    SeriesTooShortError,
)
from reportgen.executor import Executor, SerialExecutor, make_executor
from reportgen.manifest import Manifest, load_manifest
from reportgen.periods import index_labels, period_label
from reportgen.progress import Progress as ProgressDisplay
from reportgen.progress import as_progress
from reportgen.provenance import build_time, checksums_text, document_run_id, environment, run_id, sha256_bytes
from reportgen.results import (
    SERVER_QUERY_ROLE,
    DatasetRecord,
    DocumentPart,
    InputRecord,
    PartStore,
    Results,
    SeriesRecord,
    dump,
    load_part,
    results_to_dict,
)
from reportgen.sources import (
    DEFAULT_QUERY_TIMEOUT,
    Column,
    ServerSnapshot,
    Table,
    canonical_table_hash,
    convert_frequency,
    parse_period,
    read_server_table,
    read_table,
    resolve_data_path,
)
from reportgen.stats.checks import check_magnitude, check_variation
from reportgen.stats.methods import methods_text
from reportgen.stats.order import integration_order
from reportgen.stats.regression import assess_regression
from reportgen.stats.types import OrderVerdict, RegressionAssessment, StatsSettings
from reportgen.transforms import apply_transforms, lineage_of

#: Output formats besides results.json, which is always written: the HTML and PDF dossier, and every table as
#: CSV and LaTeX under tables/.
FORMATS = ("html", "pdf", "tables")
#: The file that marks a folder as a reportgen dossier.
RESULTS_FILE = "results.json"
#: The SHA-256 of every other file of the dossier folder (sha256sum format, sorted), written last.
CHECKSUMS_FILE = "checksums.sha256"
#: The folder of the tables as CSV and LaTeX files (format ``tables``).
TABLES_FOLDER = "tables"
#: The archive bundle, written when asked (``--bundle``).
BUNDLE_FILE = "bundle.zip"
#: Layouts of the HTML and PDF dossier: every section in full, or a referee's appendix of compact tables.
Layout = Literal["full", "appendix"]
#: Settings that choose where the statistics run, not what they compute: not recorded in results.json.
EXECUTION_SETTINGS = frozenset({"executor"})

#: What ``progress`` may be: a :class:`reportgen.progress.Progress`, a callable of one sentence, or None.
Progress = ProgressDisplay | Callable[[str], object] | None


@dataclass(frozen=True, slots=True)
class RunOutcome:
    """What a run produced and where."""

    out_dir: Path
    files: tuple[Path, ...]
    document: Mapping[str, Any]
    results: Results | None = None  # the analysis behind the document (its run id is the document's)


def outside_project(manifest: Manifest, relative: str) -> str | None:
    """A sentence when a data path leaves the manifest's folder (by ``..``, an absolute path or a link), else None."""
    given = manifest.base_dir / relative
    resolved = given.resolve()
    if resolved.is_relative_to(manifest.base_dir):
        return None
    linked = any(part.is_symlink() for part in (given, *given.parents) if part.is_relative_to(manifest.base_dir))
    how = "through a symbolic link" if linked else "by its path"
    return (f"{relative} lies outside the project folder (the manifest's folder), {how}; its resolved path is "
            "recorded with the inputs and its bytes are hashed as read, but a copy of the project folder alone "
            "cannot reproduce the dossier")


def load_tables(manifest: Manifest, snapshots: Mapping[str, ServerSnapshot] | None = None) -> dict[str, Table]:
    """Read every dataset the manifest declares (in manifest order).

    A server dataset runs its query, unless ``snapshots`` holds its recorded result (a bundle
    verified offline), which is then read instead.
    """
    tables: dict[str, Table] = {}
    for name, spec in manifest.spec.datasets.items():
        if spec.server:
            tables[name] = read_server_table(
                name, str(spec.format), str(spec.url_env), str(spec.query), spec.index, spec.frequency,
                manifest.locate("datasets", name, "url_env"), manifest.locate("datasets", name, "index"),
                manifest.locate("datasets", name, "query"), timeout=spec.query_timeout or DEFAULT_QUERY_TIMEOUT,
                missing=spec.missing, sort=spec.sort, snapshot=(snapshots or {}).get(name))
            continue
        assert spec.path is not None  # the manifest's cross-checks require it of a file dataset
        path = resolve_data_path(manifest.base_dir, spec.path, manifest.locate("datasets", name, "path"))
        tables[name] = read_table(name, path, spec.path, spec.index, spec.frequency,
                                  manifest.locate("datasets", name, "path"),
                                  manifest.locate("datasets", name, "index"), missing=spec.missing, sort=spec.sort,
                                  shown_path=str(manifest.display_path.parent / spec.path), file_format=spec.format,
                                  sheet=spec.sheet, cells=spec.range,
                                  sheet_where=manifest.locate("datasets", name, "sheet"),
                                  range_where=manifest.locate("datasets", name, "range"), query=spec.query,
                                  query_where=manifest.locate("datasets", name, "query"))
    return tables


@dataclass(frozen=True, slots=True)
class BuiltSeries:
    """A series as analysed, with its lineage, notes and what its missing-data policy did."""

    values: pd.Series
    lineage: str
    notes: tuple[str, ...]
    column: Column
    frequency: str  # after any conversion of the dataset


def _too_short(manifest: Manifest, name: str) -> str:
    """The too-short policy of a series: its own, else the settings'."""
    return manifest.spec.series[name].too_short or manifest.spec.settings.too_short


def build_series(manifest: Manifest, tables: Mapping[str, Table]) -> dict[str, BuiltSeries]:
    """Each declared series as analysed: its column under its missing-data policy, then its transforms."""
    built: dict[str, BuiltSeries] = {}
    for name, spec in manifest.spec.series.items():
        table = tables[spec.dataset]
        column = table.column(spec.column, manifest.locate("series", name, "column"), spec.missing)
        raw = column.values
        notes: list[str] = []
        if column.dropped:
            notes.append(f"column '{spec.column}' holds values from {period_label(raw.index[0])} to "
                         f"{period_label(raw.index[-1])}; the dataset runs from {period_label(table.periods[0])} "
                         f"to {period_label(table.periods[-1])}")
        notes.extend(column.describe())
        frequency = table.frequency
        conversion = manifest.spec.datasets[spec.dataset].convert
        if conversion is not None:
            column, note = convert_frequency(column, table.frequency, conversion.to, conversion.how,
                                             manifest.locate("datasets", spec.dataset, "convert"))
            raw, frequency = column.values, conversion.to
            notes.append(note)
        steps = manifest.transforms[name]
        values = apply_transforms(raw, steps, frequency, manifest.locate("series", name, "transform"))
        built[name] = BuiltSeries(values.rename(name), lineage_of(spec.column, steps, frequency),
                                  tuple(notes), column, frequency)
    return built


def refuse_short_series(manifest: Manifest, built: Mapping[str, BuiltSeries]) -> None:
    """Raise :class:`SeriesTooShortError` for the first series too short to test, unless its policy says report.

    A series needs ``min_observations`` at its highest differencing level (``max_order``), so
    ``min_observations + max_order`` in all.
    """
    settings = manifest.spec.settings
    floor = StatsSettings().min_observations
    minimum = floor + settings.max_order
    for name, item in built.items():
        values = item.values
        if len(values) >= minimum or _too_short(manifest, name) != "error":
            continue
        span = f"{period_label(values.index[0])} to {period_label(values.index[-1])}"
        lost = len(item.column.values) - len(values)
        after = f"after {lost} lost to transforms, " if lost else ""
        raise SeriesTooShortError(location=manifest.locate("series", name), series=name, count=len(values),
                                  span=f"{after}{span}",
                                  minimum=f"{minimum} ({floor} at the highest differencing level, "
                                          f"{settings.max_order})")


def _stats_settings(manifest: Manifest) -> StatsSettings:
    settings = manifest.spec.settings
    return StatsSettings(significance=float(settings.significance), max_order=settings.max_order,
                         lag_criterion=settings.lag_criterion, deterministic=settings.deterministic,
                         seed=settings.seed)


def regression_data(manifest: Manifest, name: str, series: Mapping[str, pd.Series],
                    frequencies: Mapping[str, str]) -> pd.DataFrame:
    """The aligned sample of a regression's variables: common periods, within its window."""
    formula = manifest.formulas[name]
    spec = manifest.spec.regressions[name]
    where = manifest.locate("regressions", name, "formula")
    used = {variable: frequencies[variable] for variable in formula.variables}
    if len(set(used.values())) > 1:
        listing = ", ".join(f"{variable} is {frequency}" for variable, frequency in used.items())
        raise MixedFrequenciesError(location=where, regression=name, listing=listing)
    frequency = next(iter(used.values()))
    frame = pd.concat([series[variable] for variable in formula.variables], axis=1, join="inner")
    if spec.sample is not None:
        for bound, how in (("start", "start"), ("end", "end")):
            text = getattr(spec.sample, bound)
            if text is None:
                continue
            period = parse_period(text, frequency, how)
            if period is None:
                raise SampleBoundError(location=manifest.locate("regressions", name, "sample", bound), bound=bound,
                                       text=text, frequency=frequency)
            frame = frame[frame.index >= period] if bound == "start" else frame[frame.index <= period]
    return frame


def _infeasible(name: str, formula_text: str, dependent: str, regressors: tuple[str, ...],
                orders: Mapping[str, int | None], reason: str) -> RegressionAssessment:
    """An inconclusive assessment for a regression that cannot be estimated on its sample."""
    return RegressionAssessment(
        name=name, formula=formula_text, dependent=dependent, regressors=regressors, orders=dict(orders),
        verdict="inconclusive", cointegrated=None, flagged=True,
        trail=(f"The regression cannot be estimated: {reason}", "Verdict inconclusive: too little data."),
        levels=None)


# ---------------------------------------------------------------- the work units of the statistics stages
#
# A task is a small picklable value (a series' values and periods, or a regression's aligned
# sample, with the settings); its function is module-level, so that worker processes and Dask
# workers can run it. A catalogue error raised inside a task comes back as a Failure and is
# raised here, in manifest order, exactly as a serial run would raise it.


@dataclass(frozen=True, slots=True)
class Failure:
    """A catalogue error raised inside a task, carried back to be raised by the runner."""

    kind: type[ReportgenError]
    message: str
    hint: str | None
    location: Location | None

    @classmethod
    def of(cls, error: ReportgenError) -> Failure:
        return cls(type(error), error.message, error.hint, error.location)

    def error(self, location: Location | None = None) -> ReportgenError:
        """The error to raise, at ``location`` (else where it was raised)."""
        return self.kind(self.message, location=location or self.location, hint=self.hint)


@dataclass(frozen=True, slots=True)
class OrderTask:
    """The order of integration of one series: its values and periods, the settings, its override."""

    name: str
    values: np.ndarray
    index: pd.PeriodIndex
    settings: StatsSettings
    deterministic: str | None


@dataclass(frozen=True, slots=True)
class OrderOutcome:
    """A series' verdict and the library warnings caught around it."""

    verdict: OrderVerdict
    warnings: tuple[str, ...] = ()


@dataclass(frozen=True, slots=True)
class RegressionTask:
    """One regression on its aligned sample, with the orders and fragility of its variables."""

    name: str
    formula: str
    dependent: str
    regressors: tuple[str, ...]
    data: pd.DataFrame
    orders: dict[str, int | None]
    fragile: dict[str, str]
    settings: StatsSettings


@dataclass(frozen=True, slots=True)
class RegressionOutcome:
    """A regression's assessment, or why its sample is too short to estimate it."""

    assessment: RegressionAssessment | None
    insufficient: str | None = None  # the message of the insufficient-data error


@dataclass(frozen=True, slots=True)
class OrderSummary:
    """What the regressions need of a series' verdict: its order, and whether (and why) it is fragile."""

    order: int | None
    fragile: bool
    fragile_reason: str | None

    @classmethod
    def of_verdict(cls, verdict: OrderVerdict) -> OrderSummary:
        return cls(verdict.order, verdict.fragile, verdict.fragile_reason)

    @classmethod
    def of_part(cls, part: Mapping[str, Any]) -> OrderSummary | None:
        """The summary a series' results.json part records, or None if the part does not hold one."""
        order, fragile, reason = part.get("order"), part.get("fragile"), part.get("fragile_reason")
        if not ((order is None or type(order) is int) and type(fragile) is bool
                and (reason is None or type(reason) is str)):
            return None
        return cls(order, fragile, reason)


def _record_basics(manifest: Manifest, name: str, item: BuiltSeries) -> dict[str, Any]:
    """A series record's fields that are neither its periods, its values nor its verdict."""
    spec = manifest.spec.series[name]
    return {"label": spec.label or item.lineage, "dataset": spec.dataset, "column": spec.column,
            "transforms": tuple(step.name if step.parameter is None else f"{step.name}:{step.parameter}"
                                for step in manifest.transforms[name]),
            "lineage": item.lineage, "frequency": item.frequency, "missing_policy": item.column.policy,
            "dropped": item.column.dropped, "interpolated": item.column.interpolated}


def series_record(name: str, item: BuiltSeries, basics: Mapping[str, Any], outcome: OrderOutcome) -> SeriesRecord:
    """A series as analysed: ``basics`` (:func:`_record_basics`), its periods and values, its verdict."""
    values = item.values
    return SeriesRecord(name=name, start=period_label(values.index[0]), end=period_label(values.index[-1]),
                        dates=index_labels(values.index), values=tuple(float(v) for v in values.to_numpy()),
                        verdict=outcome.verdict, notes=item.notes + outcome.warnings, **basics)


def _deferred_record(name: str, item: BuiltSeries, basics: Mapping[str, Any], task: OrderTask, key: str,
                     cache: ResultCache | None) -> SeriesRecord:
    """The record of a series whose results.json part came from the cache, built when first asked for:
    its verdict from the cache, or computed again here (same inputs, same verdict) if the entry is gone."""
    outcome = None if cache is None else cache.load("order", key, OrderOutcome)
    if outcome is None:
        computed = order_of_integration(task)
        if isinstance(computed, Failure):  # it succeeded on these inputs before: only a changed library fails here
            raise computed.error()
        outcome = computed
    return series_record(name, item, basics, outcome)


class SeriesRecords(Mapping[str, SeriesRecord]):
    """The series records of a run, in manifest order; a record given as a function is built on first use.

    A run from the cache takes the results.json part of an unchanged series as stored and needs
    its record (its verdict rebuilt from the cache) only when someone asks: a notebook, a test.
    """

    def __init__(self, records: Mapping[str, SeriesRecord | Callable[[], SeriesRecord]]) -> None:
        self._records = dict(records)

    def __getitem__(self, name: str) -> SeriesRecord:
        record = self._records[name]
        if not isinstance(record, SeriesRecord):
            record = self._records[name] = record()
        return record

    def __iter__(self) -> Iterator[str]:
        return iter(self._records)

    def __len__(self) -> int:
        return len(self._records)

    def __repr__(self) -> str:
        return f"SeriesRecords({list(self._records)})"

    def __reduce__(self) -> tuple[Any, ...]:
        return (dict, (dict(self.items()),))


def order_of_integration(task: OrderTask) -> OrderOutcome | Failure:
    """Check and test one series (the function worker processes run for the first stage)."""
    values = pd.Series(task.values, index=task.index, name=task.name)
    try:
        check_magnitude(task.name, values)
        check_variation(task.name, values)
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            verdict = integration_order(task.name, values, task.settings, task.deterministic)
    except ReportgenError as error:
        return Failure.of(error)
    return OrderOutcome(verdict, tuple(dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught)))


def regression_assessment(task: RegressionTask) -> RegressionOutcome | Failure:
    """Assess one regression (the function worker processes run for the second stage)."""
    try:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            assessment = assess_regression(task.name, task.formula, task.dependent, task.regressors, task.data,
                                           task.orders, task.settings, fragile_orders=task.fragile)
    except InsufficientDataError as error:
        return RegressionOutcome(None, error.message)
    except ReportgenError as error:
        return Failure.of(error)
    escaped = tuple(f"{w.category.__name__}: {w.message}" for w in caught)
    if escaped:  # assess_regression keeps its own; anything else is kept here rather than lost
        assessment = dataclasses.replace(assessment, warnings=tuple(dict.fromkeys((*assessment.warnings, *escaped))))
    return RegressionOutcome(assessment)


def _digest(array: np.ndarray) -> str:
    return sha256_bytes(np.ascontiguousarray(array, dtype="<f8").tobytes())


def _periods_digest(index: pd.PeriodIndex) -> dict[str, str]:
    return {"frequency": index.freqstr, "ordinals": sha256_bytes(np.ascontiguousarray(index.asi8, "<i8").tobytes())}


def order_key(task: OrderTask) -> str:
    """The cache key of a series' verdict: its name (it seeds the simulations), values, periods, settings."""
    return content_key("order", {"name": task.name, "values": _digest(task.values), "nobs": len(task.values),
                                 "periods": _periods_digest(task.index), "settings": dataclasses.asdict(task.settings),
                                 "deterministic": task.deterministic})


def regression_key(task: RegressionTask) -> str:
    """The cache key of an assessment: the regression, its aligned sample, the orders and fragility, settings."""
    return content_key("regression", {
        "name": task.name, "formula": task.formula, "dependent": task.dependent, "regressors": list(task.regressors),
        "columns": [str(column) for column in task.data.columns], "shape": list(task.data.shape),
        "values": _digest(task.data.to_numpy(dtype=float)), "periods": _periods_digest(task.data.index),
        "orders": task.orders, "fragile": task.fragile, "settings": dataclasses.asdict(task.settings)})


TaskT = TypeVar("TaskT")
OutcomeT = TypeVar("OutcomeT")


def _run_stage(stage: str, kind: str, tasks: Sequence[TaskT], function: Callable[[TaskT], OutcomeT | Failure],
               keys: Sequence[str], outcome_type: type[OutcomeT], names: Sequence[str], executor: Executor,
               cache: ResultCache | None, progress: ProgressDisplay, reused: int = 0) -> Iterator[OutcomeT | Failure]:
    """The outcome of every task in task order: from the cache where it holds one (under the task's
    key in ``keys``), else computed.

    Computed outcomes are stored as they complete; failures are never stored. Progress counts
    ``reused`` items of the stage that need no task (their results are known) and the cached
    outcomes at once, and the computed ones as they complete.
    """
    progress.start(stage, len(tasks) + reused)
    if reused:
        progress.advance(stage, reused)
    found: dict[int, OutcomeT] = {}
    if cache is not None:
        for index, task_key in enumerate(keys):
            stored = cache.load(kind, task_key, outcome_type)
            if stored is not None:
                found[index] = stored
        if found:
            progress.advance(stage, len(found))
    missing = [index for index in range(len(tasks)) if index not in found]

    def completed(position: int, outcome: OutcomeT | Failure) -> None:
        index = missing[position]
        if cache is not None and not isinstance(outcome, Failure):
            cache.store(kind, keys[index], outcome)
        progress.advance(stage, item=names[index])

    computed = executor.map(function, [tasks[index] for index in missing], completed)
    try:
        for index in range(len(tasks)):
            yield found.pop(index) if index in found else next(computed)
    finally:
        close = getattr(computed, "close", None)
        if close is not None:
            close()
    progress.finish(stage)


def analyse(manifest: Manifest, command: Sequence[str], progress: Progress = None, *,
            executor: Executor | None = None, cache: ResultCache | None = None,
            snapshots: Mapping[str, ServerSnapshot] | None = None) -> Results:
    """Run every stage up to the results (no files written).

    The orders of integration and the regressions run on ``executor`` (default: one after
    another in this process) and come from ``cache`` where it holds them; the results are the
    same either way, to the byte. ``snapshots`` replaces server queries by their recorded
    results (see :func:`load_tables`).
    """
    display = as_progress(progress)
    executor = executor if executor is not None else SerialExecutor()
    settings = _stats_settings(manifest)
    brand = brand_files(manifest)  # before any data is read: a missing brand folder or logo stops the run early
    display.start("reading data")
    tables = load_tables(manifest, snapshots)
    built = build_series(manifest, tables)
    refuse_short_series(manifest, built)
    frequencies = {name: item.frequency for name, item in built.items()}
    display.finish("reading data")

    order_tasks = [OrderTask(name, item.values.to_numpy(dtype=float), item.values.index, settings,
                             manifest.spec.series[name].deterministic) for name, item in built.items()]
    basics = {name: _record_basics(manifest, name, item) for name, item in built.items()}
    keys = {task.name: order_key(task) for task in order_tasks} if cache is not None else {}
    part_keys: dict[str, dict[str, str]] = {"series": {}, "regressions": {}}
    found: dict[str, DocumentPart] = {}
    summaries: dict[str, OrderSummary] = {}
    if cache is not None:  # a series whose results.json part is stored needs neither its verdict nor its record now
        for name, item in built.items():
            part_keys["series"][name] = content_key("series-part", {"verdict": keys[name], "notes": item.notes,
                                                                    "record": basics[name]})
            part = load_part(cache, "series", part_keys["series"][name])
            summary = None if part is None else OrderSummary.of_part(part)
            if summary is not None:
                found[name], summaries[name] = part, summary
    needed = [task for task in order_tasks if task.name not in found]
    verdicts: dict[str, OrderOutcome] = {}
    outcomes = _run_stage("order of integration", "order", needed, order_of_integration,
                          [keys[task.name] for task in needed] if cache is not None else [], OrderOutcome,
                          [task.name for task in needed], executor, cache, display, reused=len(found))
    for task, outcome in zip(needed, outcomes, strict=True):
        if isinstance(outcome, Failure):
            outcomes.close()
            located = issubclass(outcome.kind, (ConstantSeriesError, SeriesScaleError))
            raise outcome.error(manifest.locate("series", task.name) if located else None) from None
        verdicts[task.name] = outcome
        summaries[task.name] = OrderSummary.of_verdict(outcome.verdict)

    tasks_by_name = {task.name: task for task in order_tasks}
    records = SeriesRecords({name: (series_record(name, item, basics[name], verdicts[name]) if name in verdicts
                                    else functools.partial(_deferred_record, name, item, basics[name],
                                                           tasks_by_name[name], keys[name], cache))
                             for name, item in built.items()})

    assessments = _assess_regressions(manifest, built, summaries, frequencies, settings, executor, cache, display,
                                      part_keys["regressions"])
    if cache is not None:
        _report_cache(cache, len(found), display)

    inputs = [InputRecord(role="manifest", name="manifest", path=str(manifest.path),
                          relative_path=manifest.path.name, sha256=sha256_bytes(manifest.raw),
                          bytes=len(manifest.raw))]
    datasets: dict[str, DatasetRecord] = {}
    for name, table in tables.items():
        # A server query's input is the snapshot of its result: its hash and size, at the server's redacted URL.
        role = "data" if table.server is None else SERVER_QUERY_ROLE
        inputs.append(InputRecord(role=role, name=name, path=str(table.path or table.display_path),
                                  relative_path=table.display_path, sha256=sha256_bytes(table.raw),
                                  bytes=len(table.raw)))
        outside = outside_project(manifest, table.display_path) if table.server is None else None
        spec = manifest.spec.datasets[name]
        datasets[name] = DatasetRecord(
            name=name, path=table.display_path, index_column=table.index_column, frequency=table.frequency,
            frequency_source=table.frequency_source, rows=len(table.periods), start=period_label(table.periods[0]),
            end=period_label(table.periods[-1]), columns=tuple(table.cells), table_sha256=canonical_table_hash(table),
            notes=table.notes + ((outside,) if outside else ()), query=spec.query,
            query_sha256=None if spec.query is None else sha256_bytes(str(spec.query).encode()),
            server=None if table.server is None else table.server.record(),
            snapshot_sha256=None if table.server is None else sha256_bytes(table.raw),
            query_timeout=None if table.server is None else spec.query_timeout or DEFAULT_QUERY_TIMEOUT)
    inputs += [InputRecord(role=BRAND_ROLE, name=item.name, path=str(item.path), relative_path=item.relative_path,
                           sha256=sha256_bytes(item.data), bytes=len(item.data)) for item in brand]
    env = environment(command, manifest.base_dir)
    settings_record = manifest.spec.settings.model_dump(exclude=EXECUTION_SETTINGS)
    identifier = run_id(__version__, [record.sha256 for record in inputs], settings_record, env["packages"],
                        table_hashes=[record.table_sha256 for record in datasets.values()],
                        python=env["python"], platform_name=env["platform"], git=env["git"])
    project = manifest.spec.project.model_dump(exclude_none=True)  # branding and sign-off only when given
    return Results(tool_version=__version__, run_id=identifier, created=build_time(), project=project,
                   settings=settings_record, inputs=tuple(inputs), environment=env, datasets=datasets,
                   series=records, regressions=assessments,
                   regression_labels={name: spec.label or name for name, spec in manifest.spec.regressions.items()},
                   methods=methods_text(),
                   snapshots={name: table.raw for name, table in tables.items() if table.server is not None},
                   parts=None if cache is None else PartStore(cache, part_keys, {"series": found}))


def _assess_regressions(manifest: Manifest, built: Mapping[str, BuiltSeries], summaries: Mapping[str, OrderSummary],
                        frequencies: Mapping[str, str], settings: StatsSettings, executor: Executor,
                        cache: ResultCache | None, progress: ProgressDisplay,
                        part_keys: dict[str, str]) -> dict[str, RegressionAssessment]:
    """Every regression's assessment, in manifest order; errors raised as a serial run raises them.

    A regression whose sample cannot be formed (mixed frequencies, a bad sample bound, no common
    period) stops the run there: the regressions before it are assessed first, so an error of
    theirs is the one raised, as it would be one regression at a time.
    """
    series_values = {name: item.values for name, item in built.items()}
    planned: list[tuple[str, RegressionTask | RegressionAssessment]] = []
    stop: ReportgenError | None = None
    for name, formula in manifest.formulas.items():
        orders = {variable: summaries[variable].order for variable in formula.variables}
        policy = _regression_policy(manifest, name)
        try:
            data = regression_data(manifest, name, series_values, frequencies)
        except ReportgenError as error:
            stop = error
            break
        if data.empty:
            reason = "the variables share no periods within the sample window"
            if policy == "error":
                stop = SampleTooShortError(location=manifest.locate("regressions", name), problem=reason,
                                           hint="widen the sample window, or set 'too_short: report' to keep the "
                                                "regression in the dossier as inconclusive")
                break
            planned.append((name, _infeasible(name, formula.text, formula.dependent, formula.regressors, orders,
                                              reason)))
            continue
        fragile = {variable: summaries[variable].fragile_reason or "fragile order"
                   for variable in formula.variables if summaries[variable].fragile}
        planned.append((name, RegressionTask(name, formula.text, formula.dependent, tuple(formula.regressors), data,
                                             orders, fragile, settings)))

    tasks = [plan for _, plan in planned if isinstance(plan, RegressionTask)]
    keys = [regression_key(task) for task in tasks] if cache is not None else []
    # A regression's results.json part: its assessment, its name and the label it is shown by (no keys, no cache).
    for task, key in zip(tasks, keys, strict=False):
        part_keys[task.name] = content_key("regression-part", {"assessment": key, "name": task.name,
                                                               "label": manifest.spec.regressions[task.name].label
                                                               or task.name})
    outcomes = _run_stage("regressions", "regression", tasks, regression_assessment, keys, RegressionOutcome,
                          [task.name for task in tasks], executor, cache, progress)
    assessments: dict[str, RegressionAssessment] = {}
    for name, plan in planned:
        if isinstance(plan, RegressionAssessment):
            assessments[name] = plan
            continue
        outcome = next(outcomes)
        if isinstance(outcome, Failure):
            outcomes.close()
            located = issubclass(outcome.kind, DataError)
            raise outcome.error(manifest.locate("regressions", name, "formula") if located else None) from None
        if outcome.assessment is not None:
            assessments[name] = outcome.assessment
            continue
        reason = outcome.insufficient or "too little data"
        if _regression_policy(manifest, name) == "error":
            outcomes.close()
            raise SampleTooShortError(location=manifest.locate("regressions", name), problem=reason,
                                      hint="use a longer sample or fewer regressors, or set 'too_short: report' "
                                           "to keep the regression in the dossier as inconclusive")
        assessments[name] = _infeasible(name, plan.formula, plan.dependent, plan.regressors, plan.orders, reason)
    for _ in outcomes:  # run the stage to its end (its progress line finishes)
        pass
    if stop is not None:
        raise stop
    return assessments


def _regression_policy(manifest: Manifest, name: str) -> str:
    return manifest.spec.regressions[name].too_short or manifest.spec.settings.too_short


def _report_cache(cache: ResultCache, parts: int, progress: ProgressDisplay) -> None:
    """Say how many results came from the cache: outcomes read, and series whose whole part was."""
    stats = cache.stats
    rejected = f"; {stats.rejected} stored entries not trusted, computed again" if stats.rejected else ""
    progress.note(f"cache {cache.folder}: {stats.hits + parts} of {stats.hits + stats.misses + parts} results "
                  f"reused{rejected}")
    if stats.unwritable is not None:
        progress.note(f"cache {cache.folder}: results could not be stored ({stats.unwritable}); "
                      "the next run computes them again")


#: How a top-level ``inputs`` key starts in a results.json that :func:`reportgen.results.dumps` wrote.
_INPUTS_KEY = '\n  "inputs": '


def recorded_manifest(results_file: Path) -> Path | None:
    """The manifest path (resolved at its run) that a results.json records, or None if unreadable.

    In a complete file as reportgen writes it only the start, up to the end of the ``inputs``
    list, is read and parsed (a results.json of many series runs to tens of megabytes); any other
    file is parsed whole.
    """
    try:
        inputs = _recorded_inputs(results_file)
        if not isinstance(inputs, list):
            inputs = json.loads(results_file.read_text(encoding="utf-8"))["inputs"]
        return Path(next(entry["path"] for entry in inputs if entry["role"] == "manifest"))
    except (OSError, ValueError, KeyError, TypeError, StopIteration):
        return None


def _recorded_inputs(results_file: Path, chunk: int = 1 << 16) -> Any:
    """The ``inputs`` list of a complete results.json as :func:`reportgen.results.dump` writes it, read
    from its start only; None if the file is not one (not complete, or the list is not where it should be)."""
    import codecs

    with results_file.open("rb") as stream:
        size = os.fstat(stream.fileno()).st_size
        stream.seek(max(0, size - 3))
        if size < 5 or stream.read() != b"\n}\n":
            return None
        stream.seek(0)
        decoder = codecs.getincrementaldecoder("utf-8")()
        text = ""
        while True:
            block = stream.read(chunk)
            text += decoder.decode(block, final=not block)
            if not text.startswith("{\n"[:len(text)]):
                return None
            start = text.find(_INPUTS_KEY)
            if start > 0:
                try:
                    return json.JSONDecoder().raw_decode(text, start + len(_INPUTS_KEY))[0]
                except ValueError:
                    pass  # the list goes on beyond what was read
            if not block:
                return None
            chunk *= 2


def _check_out_dir(out_dir: Path, manifest_path: Path | None = None, *, force: bool = False) -> None:
    """Refuse an output path that is a file, a folder of foreign files, or another manifest's dossier.

    A folder whose results.json records a different manifest (by resolved path) is replaced only
    with ``force``; foreign files are never replaced.
    """
    if out_dir.exists() and not out_dir.is_dir():
        raise OutputIsFileError(location=Location(out_dir), path=out_dir)
    if out_dir.is_dir() and any(out_dir.iterdir()) and not (out_dir / RESULTS_FILE).is_file():
        raise OutputForeignError(location=Location(out_dir), path=out_dir)
    if manifest_path is None or force or not (out_dir / RESULTS_FILE).is_file():
        return
    wanted = Path(manifest_path).resolve()
    recorded = recorded_manifest(out_dir / RESULTS_FILE)
    if recorded is None:
        raise OutputUnreadableResultsError(location=Location(out_dir / RESULTS_FILE), path=out_dir)
    if recorded != wanted and recorded.resolve() != wanted:
        raise OutputOtherDossierError(location=Location(out_dir), path=out_dir, recorded=recorded, wanted=wanted)


def _owner_pid(folder_name: str, prefix: str) -> int | None:
    """The process id written into a staging folder's name (``.NAME.partial-PID-XXXX``), if any."""
    pid, separator, _ = folder_name[len(prefix):].partition("-")
    return int(pid) if separator and pid.isdigit() else None


def _process_exists(pid: int) -> bool:
    """Whether a process with this id runs on this machine (when in doubt: yes)."""
    if pid == os.getpid() or os.name != "posix":  # on Windows, os.kill(pid, 0) would send CTRL_C_EVENT
        return True
    try:
        os.kill(pid, 0)
    except ProcessLookupError:
        return False
    except OSError:
        return True
    return True


def remove_stale_staging(out_dir: Path, started: float) -> list[str]:
    """Tidy the folders a killed run left beside ``out_dir``; one sentence per folder handled.

    A staging folder ``.NAME.partial-PID-XXXX`` (or a retired ``.NAME.previous-PID-XXXX``) is
    stale when it is older than ``started`` (the current run's start) and process PID no longer
    exists. Stale staging folders are removed; a stale retired folder is put back as ``out_dir``
    if ``out_dir`` is missing (a run killed between the two renames of the fallback swap), and
    removed otherwise. Folders of live processes and folders without a process id are left alone.
    """
    messages: list[str] = []
    if not out_dir.parent.is_dir():
        return messages
    for folder in sorted(out_dir.parent.iterdir()):
        kind = next((kind for kind in ("partial", "previous") if folder.name.startswith(f".{out_dir.name}.{kind}-")),
                    None)
        if kind is None or folder.is_symlink() or not folder.is_dir():
            continue
        pid = _owner_pid(folder.name, f".{out_dir.name}.{kind}-")
        if pid is None or _process_exists(pid):
            continue
        try:
            if folder.stat().st_mtime >= started:
                continue
        except FileNotFoundError:
            continue
        if kind == "previous" and not out_dir.exists():
            os.replace(folder, out_dir)
            messages.append(f"restored {out_dir} from {folder.name}, left by process {pid}, which no longer runs")
        else:
            shutil.rmtree(folder, ignore_errors=True)
            messages.append(f"removed {folder.name}, left by process {pid}, which no longer runs")
    return messages


def write_checksums(folder: Path, names: Sequence[str]) -> Path:
    """Write ``folder/checksums.sha256`` (sha256sum format, sorted) listing the named files."""
    digests: dict[str, str] = {}
    for name in names:
        with (folder / name).open("rb") as stream:
            digests[name] = hashlib.file_digest(stream, "sha256").hexdigest()
    target = folder / CHECKSUMS_FILE
    target.write_text(checksums_text(digests), encoding="utf-8", newline="\n")
    return target


def _sync_folder(folder: Path) -> None:
    """Flush the folder's files and the folder itself to disk, so a crash cannot leave empty files."""
    for path in sorted(folder.iterdir()):
        if path.is_file():
            with path.open("rb") as stream:
                os.fsync(stream.fileno())
        elif path.is_dir() and not path.is_symlink():
            _sync_folder(path)
    _sync_directory(folder)


def _sync_directory(folder: Path) -> None:
    try:
        descriptor = os.open(folder, os.O_RDONLY)
    except OSError:
        return
    try:
        os.fsync(descriptor)
    except OSError:
        pass
    finally:
        os.close(descriptor)


def draw_charts(document: Mapping[str, Any], executor: Executor) -> dict[str, str]:
    """Every chart of the dossier (:func:`reportgen.render.plots.render_plots`), on ``executor`` where it takes one.

    The hook for drawing charts in parallel: a ``render_plots`` with an ``executor`` parameter is
    given the run's executor (the same worker processes or cluster as the statistics).
    """
    import inspect

    from reportgen.render.plots import render_plots

    if "executor" in inspect.signature(render_plots).parameters:
        return render_plots(document, executor=executor)  # type: ignore[call-arg]
    return render_plots(document)


def write_outputs(document: Mapping[str, Any], out_dir: Path, formats: Sequence[str], *, manifest: Manifest,
                  template_dirs: Sequence[Path] = (), progress: Progress = None, bundle: bool = False,
                  force: bool = False, started: float | None = None, executor: Executor | None = None,
                  snapshots: Mapping[str, bytes] | None = None, layout: Layout = "full") -> RunOutcome:
    """Write results.json, the asked-for renderings, the bundle and checksums.sha256, atomically.

    ``snapshots`` are the snapshot bytes of the server queries' results (by dataset), which the
    bundle stores in place of a data file. ``template_dirs`` (``--templates``) are searched before
    the manifest's brand folder, which is searched before the packaged templates. ``layout``
    chooses the dossier's layout (``"full"``, or ``"appendix"``: compact tables only); it changes
    the HTML and PDF, never results.json.

    Everything is written into a staging folder ``.NAME.partial-PID-XXXX`` beside ``out_dir`` (PID
    is this process) and swapped into place when complete; ``checksums.sha256`` is written last
    and lists every other file. Stale staging folders of killed runs are tidied first (see
    :func:`remove_stale_staging`); each one handled is reported through ``progress``. The charts
    are drawn on ``executor`` where the chart module accepts one (see :func:`draw_charts`).
    """
    display = as_progress(progress)
    _check_out_dir(out_dir, manifest.path, force=force)
    try:
        out_dir.parent.mkdir(parents=True, exist_ok=True)
        for message in remove_stale_staging(out_dir, time.time() if started is None else started):
            display.note(message)
        staging = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.partial-{os.getpid()}-", dir=out_dir.parent))
    except OSError as error:
        if error.errno not in _UNWRITABLE:
            raise
        raise OutputUnwritableError(location=Location(out_dir), path=out_dir,
                                    reason=error.strerror or str(error)) from None
    try:
        staging.chmod(_folder_mode())
        written = [RESULTS_FILE]
        with (staging / RESULTS_FILE).open("w", encoding="utf-8") as stream:
            dump(document, stream)
        if "html" in formats or "pdf" in formats:
            from reportgen.render.html import render_html

            brand = brand_folder(manifest)
            user_dirs = [*template_dirs, *((brand,) if brand is not None else ())]
            plots: dict[str, str] = {}
            if layout != "appendix":  # the appendix layout has no charts
                display.start("charts")
                plots = draw_charts(document, executor if executor is not None else SerialExecutor())
                display.finish("charts")
            display.start("HTML")
            html = render_html(document, plots, template_dirs, layout=layout, brand_folder=brand,
                               logo_url=logo_data_url(manifest, document))
            display.finish("HTML")
            if "html" in formats:
                (staging / "dossier.html").write_text(html, encoding="utf-8")
                written.append("dossier.html")
            if "pdf" in formats:
                from reportgen.render.pdf import render_pdf

                display.start("PDF")
                render_pdf(html, staging / "dossier.pdf", base_dir=manifest.base_dir, created=document["created"],
                           attachments=(manifest.path, staging / RESULTS_FILE), template_dirs=user_dirs,
                           parallel=executor is not None and not isinstance(executor, SerialExecutor))
                display.finish("PDF")
                written.append("dossier.pdf")
        if "tables" in formats:
            from reportgen.render.tables import write_tables

            display.start("tables")
            tables = write_tables(document, staging / TABLES_FOLDER)
            display.finish("tables")
            written += [path.relative_to(staging).as_posix() for path in tables]
        if bundle:
            from reportgen.bundle import write_bundle

            display.start("bundle")
            write_bundle(staging / BUNDLE_FILE, document, {name: staging / name for name in written}, manifest,
                         snapshots or {})
            display.finish("bundle")
            written.append(BUNDLE_FILE)
        write_checksums(staging, written)
        written.append(CHECKSUMS_FILE)
        _sync_folder(staging)
        _swap_into_place(staging, out_dir)
        _sync_directory(out_dir.parent)
    except OSError as error:
        shutil.rmtree(staging, ignore_errors=True)
        if error.errno not in _UNWRITABLE:
            raise
        raise OutputUnwritableError(location=Location(out_dir), path=out_dir,
                                    reason=error.strerror or str(error)) from None
    except BaseException:
        shutil.rmtree(staging, ignore_errors=True)
        raise
    return RunOutcome(out_dir=out_dir, files=tuple(out_dir / name for name in written), document=document)


#: The operating-system errors that mean "this place cannot be written", not "reportgen has a bug".
_UNWRITABLE = frozenset({errno.EACCES, errno.EPERM, errno.ENOSPC, errno.EROFS, errno.EDQUOT, errno.ENAMETOOLONG,
                         errno.ENOTDIR})


def _folder_mode() -> int:
    """The mode a new folder gets under the current umask (mkdtemp makes it private)."""
    umask = os.umask(0)
    os.umask(umask)
    return 0o777 & ~umask


_AT_FDCWD = -100
_RENAME_EXCHANGE = 2


def _exchange(first: Path, second: Path) -> bool:
    """Swap two paths in one atomic step (Linux ``renameat2`` with ``RENAME_EXCHANGE``).

    Returns False where the exchange is not available (another system, an old C library, a file
    system without it); raises OSError for any other failure.
    """
    if not sys.platform.startswith("linux"):
        return False
    try:
        function = ctypes.CDLL(None, use_errno=True).renameat2
    except (OSError, AttributeError):
        return False
    function.argtypes = [ctypes.c_int, ctypes.c_char_p, ctypes.c_int, ctypes.c_char_p, ctypes.c_uint]
    function.restype = ctypes.c_int
    if function(_AT_FDCWD, os.fsencode(first), _AT_FDCWD, os.fsencode(second), _RENAME_EXCHANGE) == 0:
        return True
    code = ctypes.get_errno()
    if code in (errno.EINVAL, errno.ENOSYS, errno.EOPNOTSUPP, errno.ENOTSUP):
        return False
    raise OSError(code, os.strerror(code), str(second))


def _swap_into_place(staging: Path, out_dir: Path) -> None:
    """Replace ``out_dir`` by ``staging`` so that at every moment one complete dossier exists.

    On Linux both folders are exchanged atomically and the old dossier, now at the staging path,
    is removed. Elsewhere the old folder is renamed to ``.NAME.previous-PID-XXXX`` and the new one
    moved in; should the run be killed between those two renames, the next run puts the previous
    dossier back (see :func:`remove_stale_staging`).
    """
    if out_dir.exists():
        if _exchange(staging, out_dir):
            shutil.rmtree(staging, ignore_errors=True)
            return
        retired = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.previous-{os.getpid()}-", dir=out_dir.parent))
        retired.rmdir()
        os.replace(out_dir, retired)
        try:
            os.replace(staging, out_dir)
        except BaseException:
            os.replace(retired, out_dir)
            raise
        shutil.rmtree(retired, ignore_errors=True)
    else:
        os.replace(staging, out_dir)


def open_executor(manifest: Manifest, jobs: int | None = 1, cluster: str | None = None) -> Executor:
    """The executor of a run: ``cluster`` (a Dask scheduler address), else the manifest's
    ``settings.executor``, else ``jobs`` on this machine (see :func:`reportgen.executor.make_executor`)."""
    from_manifest = cluster is None and manifest.spec.settings.executor == "dask"
    try:
        return make_executor(jobs, cluster=cluster, dask=from_manifest)
    except DaskMissingError as error:
        if not from_manifest:
            raise
        raise DaskMissingError(error.message, location=manifest.locate("settings", "executor"),
                               hint=error.hint) from None


def run(manifest_path: Path | str, out_dir: Path | str, formats: Sequence[str] = FORMATS, *,
        template_dirs: Sequence[Path] = (), command: Sequence[str] | None = None,
        progress: Progress = None, bundle: bool = False, force: bool = False, jobs: int | None = 1,
        cluster: str | None = None, executor: Executor | None = None,
        cache: ResultCache | Path | str | None = None,
        snapshots: Mapping[str, ServerSnapshot] | None = None, layout: Layout = "full") -> RunOutcome:
    """Load, analyse and write a dossier; the one function the command line and notebooks call.

    ``bundle`` also writes ``bundle.zip`` (see :mod:`reportgen.bundle`); ``force`` replaces a
    dossier of another manifest in ``out_dir``. The run id is recomputed from the results
    document (:func:`reportgen.provenance.document_run_id`), so it always covers every input
    hash, the table hashes, the settings, the software and the git state.

    The statistics run on ``executor`` when one is given (and left open), else on one made for
    ``jobs`` and ``cluster`` (:func:`open_executor`; closed at the end): by default one after
    another in this process. ``cache`` (a :class:`~reportgen.cache.ResultCache` or its folder)
    reuses the verdicts and assessments of earlier runs; by default nothing is cached. Neither
    changes a byte of the results. ``snapshots`` reads recorded server query results instead of
    querying the servers (``verify --recompute`` of a bundle). ``layout`` (``"full"`` or
    ``"appendix"``) chooses the layout of the HTML and PDF dossier (see :func:`write_outputs`);
    results.json is the same for both.
    """
    started = time.time()
    display = as_progress(progress)
    manifest = load_manifest(manifest_path)
    out = Path(out_dir)
    for message in remove_stale_staging(out, started):
        display.note(message)
    _check_out_dir(out, manifest.path, force=force)
    if bundle:
        from reportgen.bundle import check_bundle_inputs

        check_bundle_inputs(manifest)
    store = cache if isinstance(cache, ResultCache) or cache is None else ResultCache(cache)
    chosen = executor if executor is not None else open_executor(manifest, jobs, cluster)
    try:
        results = analyse(manifest, command if command is not None else sys.argv, display, executor=chosen,
                          cache=store, snapshots=snapshots)
        document = results_to_dict(results)
        document["run_id"] = document_run_id(document)
        outcome = write_outputs(document, out, formats, manifest=manifest, template_dirs=template_dirs,
                                progress=display, bundle=bundle, force=force, started=started, executor=chosen,
                                snapshots=results.snapshots, layout=layout)
    finally:
        if executor is None:
            chosen.close()
    return dataclasses.replace(outcome, results=dataclasses.replace(results, run_id=document["run_id"]))
