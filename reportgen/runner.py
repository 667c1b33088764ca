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
import json
import os
import shutil
import sys
import tempfile
import time
import warnings
from collections.abc import Callable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import pandas as pd

from reportgen import __version__
from reportgen.errors import (
    ConstantSeriesError,
    DataError,
    InsufficientDataError,
    Location,
    MixedFrequenciesError,
    OutputForeignError,
    OutputIsFileError,
    OutputOtherDossierError,
    OutputUnreadableResultsError,
    OutputUnwritableError,
    SampleBoundError,
    SampleTooShortError,
    SeriesScaleError,
    SeriesTooShortError,
)
from reportgen.manifest import Manifest, load_manifest
from reportgen.periods import index_labels, period_label
from reportgen.provenance import build_time, checksums_text, document_run_id, environment, run_id, sha256_bytes
from reportgen.results import DatasetRecord, InputRecord, Results, SeriesRecord, dumps, results_to_dict
from reportgen.sources import (
    Column,
    Table,
    canonical_table_hash,
    convert_frequency,
    parse_period,
    read_table,
    resolve_data_path,
)
from reportgen.stats.checks import check_magnitude, check_variation
from reportgen.stats.methods import methods_text
from reportgen.stats.order import integration_order
from reportgen.stats.regression import assess_regression
from reportgen.stats.types import RegressionAssessment, StatsSettings
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

Progress = Callable[[str], None]


@dataclass(frozen=True, slots=True)
class RunOutcome:
    """What a run produced and where."""

    out_dir: Path
    files: tuple[Path, ...]
    document: Mapping[str, Any]
    results: Results | None = None  # the analysis behind the document (its run id is the document's)


def _quiet(_: str) -> None:
    return None


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


def load_tables(manifest: Manifest) -> dict[str, Table]:
    """Read every dataset the manifest declares (in manifest order)."""
    tables: dict[str, Table] = {}
    for name, spec in manifest.spec.datasets.items():
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


def analyse(manifest: Manifest, command: Sequence[str], progress: Progress = _quiet) -> Results:
    """Run every stage up to the results (no files written)."""
    settings = _stats_settings(manifest)
    progress("reading data")
    tables = load_tables(manifest)
    built = build_series(manifest, tables)
    refuse_short_series(manifest, built)
    frequencies = {name: item.frequency for name, item in built.items()}

    records: dict[str, SeriesRecord] = {}
    for position, (name, item) in enumerate(built.items(), start=1):
        values, lineage, notes = item.values, item.lineage, item.notes
        progress(f"order of integration {position}/{len(built)}: {name}")
        spec = manifest.spec.series[name]
        try:
            check_magnitude(name, values)
            check_variation(name, values)
        except (ConstantSeriesError, SeriesScaleError) as error:
            raise type(error)(error.message, location=manifest.locate("series", name), hint=error.hint) from None
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            verdict = integration_order(name, values, settings, spec.deterministic)
        extra = tuple(dict.fromkeys(f"{w.category.__name__}: {w.message}" for w in caught))
        records[name] = SeriesRecord(
            name=name, label=spec.label or lineage, dataset=spec.dataset, column=spec.column,
            transforms=tuple(step.name if step.parameter is None else f"{step.name}:{step.parameter}"
                             for step in manifest.transforms[name]),
            lineage=lineage, frequency=frequencies[name], start=period_label(values.index[0]),
            end=period_label(values.index[-1]), dates=index_labels(values.index),
            values=tuple(float(v) for v in values.to_numpy()), verdict=verdict, notes=notes + extra,
            missing_policy=item.column.policy, dropped=item.column.dropped, interpolated=item.column.interpolated)

    assessments: dict[str, RegressionAssessment] = {}
    series_values = {name: item.values for name, item in built.items()}
    for position, (name, formula) in enumerate(manifest.formulas.items(), start=1):
        progress(f"regression {position}/{len(manifest.formulas)}: {name}")
        data = regression_data(manifest, name, series_values, frequencies)
        orders = {variable: records[variable].verdict.order for variable in formula.variables}
        policy = manifest.spec.regressions[name].too_short or manifest.spec.settings.too_short
        if data.empty:
            reason = "the variables share no periods within the sample window"
            if policy == "error":
                raise SampleTooShortError(location=manifest.locate("regressions", name), problem=reason,
                                          hint="widen the sample window, or set 'too_short: report' to keep the "
                                               "regression in the dossier as inconclusive")
            assessments[name] = _infeasible(name, formula.text, formula.dependent, formula.regressors, orders, reason)
            continue
        try:
            with warnings.catch_warnings(record=True) as caught:
                warnings.simplefilter("always")
                fragile = {variable: records[variable].verdict.fragile_reason or "fragile order"
                           for variable in formula.variables if records[variable].verdict.fragile}
                assessment = assess_regression(name, formula.text, formula.dependent, formula.regressors,
                                               data, orders, settings, fragile_orders=fragile)
            escaped = tuple(f"{w.category.__name__}: {w.message}" for w in caught)
            if escaped:  # assess_regression keeps its own; anything else is kept here rather than lost
                assessment = dataclasses.replace(
                    assessment, warnings=tuple(dict.fromkeys((*assessment.warnings, *escaped))))
            assessments[name] = assessment
        except InsufficientDataError as error:
            if policy == "error":
                raise SampleTooShortError(location=manifest.locate("regressions", name), problem=error.message,
                                          hint="use a longer sample or fewer regressors, or set 'too_short: report' "
                                               "to keep the regression in the dossier as inconclusive") from None
            assessments[name] = _infeasible(name, formula.text, formula.dependent, formula.regressors, orders,
                                            error.message)
        except DataError as error:
            raise type(error)(error.message, location=manifest.locate("regressions", name, "formula"),
                              hint=error.hint) from None

    inputs = [InputRecord(role="manifest", name="manifest", path=str(manifest.path),
                          relative_path=manifest.path.name, sha256=sha256_bytes(manifest.raw),
                          bytes=len(manifest.raw))]
    datasets: dict[str, DatasetRecord] = {}
    for name, table in tables.items():
        inputs.append(InputRecord(role="data", name=name, path=str(table.path), relative_path=table.display_path,
                                  sha256=sha256_bytes(table.raw), bytes=len(table.raw)))
        outside = outside_project(manifest, table.display_path)
        datasets[name] = DatasetRecord(
            name=name, path=table.display_path, index_column=table.index_column, frequency=table.frequency,
            frequency_source=table.frequency_source, rows=len(table.periods), start=period_label(table.periods[0]),
            end=period_label(table.periods[-1]), columns=tuple(table.cells), table_sha256=canonical_table_hash(table),
            notes=table.notes + ((outside,) if outside else ()), query=manifest.spec.datasets[name].query,
            query_sha256=None if manifest.spec.datasets[name].query is None
            else sha256_bytes(str(manifest.spec.datasets[name].query).encode()))
    env = environment(command, manifest.base_dir)
    settings_record = manifest.spec.settings.model_dump()
    identifier = run_id(__version__, [record.sha256 for record in inputs], settings_record, env["packages"],
                        table_hashes=[record.table_sha256 for record in datasets.values()],
                        python=env["python"], platform_name=env["platform"], git=env["git"])
    project = manifest.spec.project.model_dump()
    return Results(tool_version=__version__, run_id=identifier, created=build_time(), project=project,
                   settings=settings_record, inputs=tuple(inputs), environment=env, datasets=datasets,
                   series=records, regressions=assessments,
                   regression_labels={name: spec.label or name for name, spec in manifest.spec.regressions.items()},
                   methods=methods_text())


def recorded_manifest(results_file: Path) -> Path | None:
    """The manifest path (resolved at its run) that a results.json records, or None if unreadable."""
    try:
        document = json.loads(results_file.read_text(encoding="utf-8"))
        return Path(next(entry["path"] for entry in document["inputs"] if entry["role"] == "manifest"))
    except (OSError, ValueError, KeyError, TypeError, StopIteration):
        return None


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
    digests = {name: sha256_bytes((folder / name).read_bytes()) for name in names}
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


def write_outputs(document: Mapping[str, Any], out_dir: Path, formats: Sequence[str], *, manifest: Manifest,
                  template_dirs: Sequence[Path] = (), progress: Progress = _quiet, bundle: bool = False,
                  force: bool = False, started: float | None = None) -> RunOutcome:
    """Write results.json, the asked-for renderings, the bundle and checksums.sha256, atomically.

    Everything is written into a staging folder ``.NAME.partial-PID-XXXX`` beside ``out_dir`` (PID
    is this process) and swapped into place when complete; ``checksums.sha256`` is written last
    and lists every other file. Stale staging folders of killed runs are tidied first (see
    :func:`remove_stale_staging`); each one handled is reported through ``progress``.
    """
    _check_out_dir(out_dir, manifest.path, force=force)
    try:
        out_dir.parent.mkdir(parents=True, exist_ok=True)
        for message in remove_stale_staging(out_dir, time.time() if started is None else started):
            progress(message)
        staging = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.partial-{os.getpid()}-", dir=out_dir.parent))
    except OSError as error:
        if error.errno not in _UNWRITABLE:
            raise
        raise OutputUnwritableError(location=Location(out_dir), path=out_dir,
                                    reason=error.strerror or str(error)) from None
    try:
        staging.chmod(_folder_mode())
        written = [RESULTS_FILE]
        (staging / RESULTS_FILE).write_text(dumps(document), encoding="utf-8")
        if "html" in formats or "pdf" in formats:
            from reportgen.render.html import render_html
            from reportgen.render.plots import render_plots

            progress("drawing charts")
            plots = render_plots(document)
            progress("writing HTML")
            html = render_html(document, plots, template_dirs)
            if "html" in formats:
                (staging / "dossier.html").write_text(html, encoding="utf-8")
                written.append("dossier.html")
            if "pdf" in formats:
                from reportgen.render.pdf import render_pdf

                progress("writing PDF")
                render_pdf(html, staging / "dossier.pdf", base_dir=manifest.base_dir, created=document["created"],
                           attachments=(manifest.path, staging / RESULTS_FILE), template_dirs=template_dirs)
                written.append("dossier.pdf")
        if "tables" in formats:
            from reportgen.render.tables import write_tables

            progress("writing tables")
            tables = write_tables(document, staging / TABLES_FOLDER)
            written += [path.relative_to(staging).as_posix() for path in tables]
        if bundle:
            from reportgen.bundle import write_bundle

            progress("writing the archive bundle")
            write_bundle(staging / BUNDLE_FILE, document, {name: staging / name for name in written}, manifest)
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


def run(manifest_path: Path | str, out_dir: Path | str, formats: Sequence[str] = FORMATS, *,
        template_dirs: Sequence[Path] = (), command: Sequence[str] | None = None,
        progress: Progress = _quiet, bundle: bool = False, force: bool = False) -> RunOutcome:
    """Load, analyse and write a dossier; the one function the command line and notebooks call.

    ``bundle`` also writes ``bundle.zip`` (see :mod:`reportgen.bundle`); ``force`` replaces a
    dossier of another manifest in ``out_dir``. The run id is recomputed from the results
    document (:func:`reportgen.provenance.document_run_id`), so it always covers every input
    hash, the table hashes, the settings, the software and the git state.
    """
    started = time.time()
    manifest = load_manifest(manifest_path)
    out = Path(out_dir)
    for message in remove_stale_staging(out, started):
        progress(message)
    _check_out_dir(out, manifest.path, force=force)
    if bundle:
        from reportgen.bundle import check_bundle_inputs

        check_bundle_inputs(manifest)
    results = analyse(manifest, command if command is not None else sys.argv, progress)
    document = results_to_dict(results)
    document["run_id"] = document_run_id(document)
    outcome = write_outputs(document, out, formats, manifest=manifest, template_dirs=template_dirs,
                            progress=progress, bundle=bundle, force=force, started=started)
    return dataclasses.replace(outcome, results=dataclasses.replace(results, run_id=document["run_id"]))
