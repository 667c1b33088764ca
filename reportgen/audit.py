"""Audit: prove later that a dossier came from its recorded inputs, and list what changed between runs.

:func:`verify` re-hashes every input that results.json records (at its recorded path, or as the
snapshot inside a bundle), checks the dossier files against ``checksums.sha256``, recomputes the
run id from the recorded provenance and, when asked, runs the analysis again and compares every
number within a tolerance. :func:`diff_dossiers` compares two runs: inputs, settings, software,
datasets, the series' orders and tests, the regressions' verdicts, coefficients and p-values.

Nothing here prints: the command line formats the values these functions return
(:func:`format_verification`, :func:`format_changes`, :func:`changes_html`).
"""

from __future__ import annotations

import json
import math
import os
import re
import tempfile
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, field
from pathlib import Path, PurePosixPath
from typing import Any, Literal

import jinja2
import yaml

from reportgen import __version__
from reportgen.bundle import Bundle, extract_inputs, read_bundle
from reportgen.errors import AuditError, DamagedDossierError, Location, NoDossierError, ReportgenError
from reportgen.manifest import load_manifest
from reportgen.provenance import document_run_id, parse_checksums, sha256_bytes
from reportgen.results import SERVER_QUERY_ROLE
from reportgen.sources import DEFAULT_QUERY_TIMEOUT, ServerSnapshot, ServerSource, query_snapshot

#: Default tolerance of ``verify --recompute`` (relative and absolute).
VERIFY_TOLERANCE = 1e-9
#: Default tolerance of ``diff`` (relative and absolute).
DIFF_TOLERANCE = 1e-6
RESULTS_FILE = "results.json"
CHECKSUMS_FILE = "checksums.sha256"
#: Parts of results.json that ``verify --recompute`` compares (the rest is provenance or prose of the code).
RECOMPUTED_SECTIONS = ("project", "settings", "datasets", "series", "regressions", "summary")
#: The fields of each input that must agree between the recorded and the recomputed run.
_INPUT_FIELDS = ("role", "name", "relative_path", "sha256", "bytes")
_FITS = ("levels", "differences", "long_run", "error_correction")
_IDENTIFIER = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_HINT = "name a folder written by 'reportgen run' or the bundle.zip that 'reportgen run --bundle' wrote"


class _Absent:
    """Marks a key or item present on one side of a comparison only."""

    def __repr__(self) -> str:
        return "(absent)"


ABSENT: Any = _Absent()


# ---------------------------------------------------------------- opening a dossier


@dataclass(frozen=True, slots=True)
class Dossier:
    """A dossier as found on disk: a folder or a bundle, and the results document it holds."""

    path: Path
    kind: Literal["folder", "bundle"]
    document: Mapping[str, Any]
    bundle: Bundle | None = None

    def describe(self) -> str:
        """One line: where, which run, when, which reportgen."""
        document = self.document
        return (f"{self.path} ({'bundle' if self.kind == 'bundle' else 'dossier folder'}; run "
                f"{document.get('run_id', '?')} of {document.get('created', '?')}, reportgen "
                f"{document.get('tool_version', '?')})")


def _checked_document(document: Any, where: Path, error: type[AuditError] = NoDossierError) -> dict[str, Any]:
    """The document if it has the shape of a results.json; else ``error``."""
    shape_ok = (isinstance(document, dict) and isinstance(document.get("inputs"), list)
                and isinstance(document.get("series"), dict) and isinstance(document.get("regressions"), dict)
                and all(isinstance(entry, dict) and {"role", "name", "path", "sha256"} <= set(entry)
                        for entry in document["inputs"]))
    if not shape_ok:
        raise error(problem=f"{where} is not a reportgen results document (inputs, series or regressions missing)",
                    location=Location(where), hint=_HINT)
    return document


def open_dossier(path: Path | str) -> Dossier:
    """Open a dossier folder or a bundle; anything else raises an :class:`AuditError` (exit status 2).

    :class:`NoDossierError` when nothing is there or a folder has no results.json (or a bundle's
    document lacks the shape of one), :class:`DamagedDossierError` when a folder's results.json is
    not a readable results document, :class:`NotABundleError` for a file that is not a bundle.
    """
    target = Path(path)
    if not target.exists():
        raise NoDossierError(problem=f"no dossier at {target}: there is no such file or folder",
                             location=Location(target))
    if target.is_dir():
        results = target / RESULTS_FILE
        if not results.is_file():
            raise NoDossierError(problem=f"{target} is not a reportgen dossier: it has no {RESULTS_FILE}",
                                 location=Location(target))
        try:
            document = json.loads(results.read_text(encoding="utf-8"))
        except (OSError, UnicodeDecodeError, ValueError) as error:
            raise DamagedDossierError(problem=f"{results} is not readable JSON ({error})", location=Location(results),
                                      hint="the dossier is damaged; run it again or use an archived copy") from None
        return Dossier(target, "folder", _checked_document(document, results, DamagedDossierError))
    bundle = read_bundle(target)
    return Dossier(target, "bundle", _checked_document(bundle.document, target), bundle)


# ---------------------------------------------------------------- verify


@dataclass(frozen=True, slots=True)
class Check:
    """One line of a verification: what was checked, and how it came out."""

    kind: str  # "input", "dossier", "run id", "recompute"
    name: str
    status: str  # "ok", or what is wrong: changed, missing, added, unlisted, unreadable, mismatch, differs...
    where: str

    @property
    def ok(self) -> bool:
        """Whether this check holds."""
        return self.status == "ok"


@dataclass(frozen=True, slots=True)
class Difference:
    """A value that differs between two results documents, by its JSON path."""

    path: str
    recorded: Any
    recomputed: Any


@dataclass(frozen=True, slots=True)
class Verification:
    """The outcome of :func:`verify`."""

    dossier: Dossier
    checks: tuple[Check, ...]
    differences: tuple[Difference, ...] = ()
    notes: tuple[str, ...] = ()
    tolerance: float = VERIFY_TOLERANCE

    @property
    def ok(self) -> bool:
        """True when every check holds and the recomputation (if asked) found no difference."""
        return all(check.ok for check in self.checks) and not self.differences


def _input_label(entry: Mapping[str, Any]) -> str:
    return "manifest" if entry["role"] == "manifest" else str(entry["name"])


def _status(content: bytes | None, digest: str) -> str:
    if content is None:
        return "missing"
    return "ok" if sha256_bytes(content) == digest else "changed"


def _read(path: Path) -> bytes | None:
    try:
        return path.read_bytes()
    except OSError:
        return None


def _server_check(entry: Mapping[str, Any], dataset: Mapping[str, Any], notes: list[str]) -> Check:
    """A server query input re-checked by running the recorded query again, when its environment variable is set.

    The fresh result's snapshot is compared with the recorded SHA-256. Without the variable the
    input is ``not re-checked`` (and the verification does not hold): the remedy names the variable.
    """
    name = str(entry["name"])
    recorded = ServerSource.from_record(dataset.get("server") or {})
    variable = recorded.url_env
    if not variable or not isinstance(dataset.get("query"), str):
        return Check("input", name, "unreadable", "results.json does not record the server and query of this input")
    if not os.environ.get(variable, "").strip():
        return Check("input", name, "not re-checked",
                     f"set {variable} to re-run the query on {recorded.display()} (or verify the bundle, which holds "
                     "its snapshot)")
    try:
        source, content = query_snapshot(recorded.dialect, variable, str(dataset["query"]), Location(variable),
                                         Location(variable), timeout=int(dataset.get("query_timeout") or
                                                                         DEFAULT_QUERY_TIMEOUT))
    except ReportgenError as error:  # the messages hold no password (sources scrubs them)
        return Check("input", name, "unreadable", f"{recorded.display()}: {error.message}")
    if source.record() != recorded.record():
        notes.append(f"{variable} names {source.display()} now; the dossier recorded {recorded.display()}")
    return Check("input", name, _status(content, str(entry["sha256"])), f"query re-run on {source.display()}")


def _folder_input_checks(document: Mapping[str, Any], notes: list[str]) -> list[Check]:
    checks = []
    datasets = document.get("datasets") or {}
    for entry in document["inputs"]:
        if entry["role"] == SERVER_QUERY_ROLE:
            checks.append(_server_check(entry, datasets.get(str(entry["name"])) or {}, notes))
        else:
            checks.append(Check("input", _input_label(entry),
                                _status(_read(Path(str(entry["path"]))), str(entry["sha256"])), str(entry["path"])))
    return checks


def _bundle_snapshots(document: Mapping[str, Any], bundle: Bundle) -> dict[str, ServerSnapshot]:
    """The recorded results of the server queries a bundle holds, to recompute without the servers."""
    datasets = document.get("datasets") or {}
    snapshots: dict[str, ServerSnapshot] = {}
    for entry in document["inputs"]:
        name = str(entry["name"])
        content = bundle.entries.get(bundle.input_entries.get(name, ""))
        if entry["role"] == SERVER_QUERY_ROLE and content is not None:
            snapshots[name] = ServerSnapshot(ServerSource.from_record((datasets.get(name) or {}).get("server") or {}),
                                             content)
    return snapshots


def _bundle_input_checks(document: Mapping[str, Any], bundle: Bundle) -> list[Check]:
    checks = []
    entries = bundle.input_entries
    for entry in document["inputs"]:
        name = entries.get(str(entry["name"]))
        content = bundle.entries.get(name) if name is not None else None
        status = "damaged" if name in bundle.damaged else _status(content, str(entry["sha256"]))
        checks.append(Check("input", _input_label(entry), status, name or f"(no snapshot of {entry['relative_path']})"))
    return checks


def _listing_checks(listing: Mapping[str, str] | None, read: Any, where: Any, skip: Iterable[str]) -> list[Check]:
    """Checks of the files a checksums listing names (``read(name)`` gives bytes or None)."""
    if listing is None:
        return [Check("dossier", CHECKSUMS_FILE, "unreadable", where(CHECKSUMS_FILE))]
    checks = []
    skipped = set(skip)
    for name in sorted(listing):
        status = _status(read(name), listing[name])
        if name not in skipped or status != "ok":
            checks.append(Check("dossier", name, status, where(name)))
    if RESULTS_FILE not in listing:
        checks.append(Check("dossier", RESULTS_FILE, "unlisted", f"{where(CHECKSUMS_FILE)} does not list it"))
    return checks


def _folder_file_checks(folder: Path, notes: list[str]) -> list[Check]:
    listing_file = folder / CHECKSUMS_FILE
    if not listing_file.is_file():
        return [Check("dossier", CHECKSUMS_FILE, "missing", f"{listing_file} (the dossier files cannot be checked)")]
    try:
        listing = parse_checksums(listing_file.read_text(encoding="utf-8"))
    except (OSError, UnicodeDecodeError):
        listing = None

    def read(name: str) -> bytes | None:
        # A listed name is a file of the folder or of one of its subfolders (tables/), never a path out of it.
        parts = PurePosixPath(name).parts
        if not parts or PurePosixPath(name).is_absolute() or ".." in parts or "\\" in name:
            return None
        return _read(folder.joinpath(*parts))

    checks = _listing_checks(listing, read, lambda name: str(folder / name), ())
    if listing is not None:
        listed_tops = {PurePosixPath(name).parts[0] for name in listing}
        extra = sorted(path.name for path in folder.iterdir()
                       if path.name not in listed_tops and path.name != CHECKSUMS_FILE)
        if extra:
            notes.append(f"not part of the dossier (absent from {CHECKSUMS_FILE}): {', '.join(extra)}")
    return checks


def _bundle_file_checks(bundle: Bundle, notes: list[str]) -> list[Check]:
    if CHECKSUMS_FILE in bundle.damaged:
        return [Check("dossier", CHECKSUMS_FILE, "damaged", f"{CHECKSUMS_FILE} (fails the zip's CRC check)")]
    if CHECKSUMS_FILE not in bundle.entries:
        return [Check("dossier", CHECKSUMS_FILE, "missing", f"{bundle.path} holds no {CHECKSUMS_FILE}")]
    listing = bundle.checksums
    inputs = set(bundle.input_entries.values())
    checks = []
    for check in _listing_checks(listing, bundle.entries.get, lambda name: name, inputs):
        if check.name in bundle.damaged:
            if check.name in inputs:
                continue  # the input's own row says so
            check = Check(check.kind, check.name, "damaged", f"{check.where} (fails the zip's CRC check)")
        checks.append(check)
    if listing is not None:
        extra = sorted(name for name in [*bundle.entries, *bundle.damaged]
                       if name not in listing and name != CHECKSUMS_FILE)
        if extra:
            notes.append(f"entries of the bundle absent from its {CHECKSUMS_FILE}: {', '.join(extra)}")
    return checks


def _added_checks(document: Mapping[str, Any], manifest_path: Path | None, notes: list[str],
                  in_bundle: bool) -> list[Check]:
    """Datasets the manifest declares now that results.json does not record (``added``)."""
    if manifest_path is None or not manifest_path.is_file():
        return []
    try:
        manifest = load_manifest(manifest_path)
    except (ReportgenError, yaml.YAMLError) as error:
        # yaml.YAMLError: PyYAML refuses some control characters before the manifest loader's own
        # error handling starts; either way the manifest does not load, which is all this needs.
        message = error.message if isinstance(error, ReportgenError) else str(error).splitlines()[0]
        notes.append(f"the manifest {'snapshot' if in_bundle else manifest_path} no longer loads "
                     f"({message}), so datasets it may add are not listed")
        return []
    recorded = {str(entry["name"]) for entry in document["inputs"] if entry["role"] != "manifest"}

    def place(spec: Any) -> str:
        if spec.path is None:
            return f"a query on the server named by {spec.url_env}"
        return spec.path if in_bundle else str((manifest.base_dir / spec.path).resolve())

    return [Check("input", name, "added", place(spec))
            for name, spec in manifest.spec.datasets.items() if name not in recorded]


def _run_id_check(document: Mapping[str, Any], notes: list[str]) -> list[Check]:
    recorded = str(document.get("run_id", ""))
    if document.get("tool_version") != __version__:
        notes.append(f"the run id was not recomputed: results.json was written by reportgen "
                     f"{document.get('tool_version')}, this is reportgen {__version__}")
        return []
    status = "ok" if document_run_id(document) == recorded else "mismatch"
    return [Check("run id", recorded, status, "recomputed from the provenance that results.json records")]


def _recompute(manifest_path: Path, out: Path, snapshots: Mapping[str, ServerSnapshot] | None = None) -> dict[str, Any]:
    from reportgen.runner import run

    outcome = run(manifest_path, out, (), command=["reportgen", "verify", "--recompute"], snapshots=snapshots)
    return dict(outcome.document)


def verify(path: Path | str, *, recompute: bool = False, tolerance: float = VERIFY_TOLERANCE) -> Verification:
    """Check a dossier folder or a bundle against everything results.json records.

    Inputs are re-hashed at their recorded ``path`` (a folder) or as the bundle's snapshots;
    ``added`` lists datasets the manifest declares now but results.json does not record; the
    dossier files are checked against ``checksums.sha256``; the run id is recomputed. With
    ``recompute`` the analysis runs again from the recorded manifest (or from the bundle's
    snapshot, unpacked into a temporary folder) and every value of
    :data:`RECOMPUTED_SECTIONS` is compared within ``tolerance``; it is skipped when an input
    no longer matches. Raises :class:`AuditError` when ``path`` is not a dossier.
    """
    try:
        dossier = open_dossier(path)
    except DamagedDossierError as error:
        folder = Path(path)
        if not (folder / CHECKSUMS_FILE).is_file():
            raise
        notes = [f"{error.message}; only the dossier files were checked"]
        checks = [*_folder_file_checks(folder, notes), Check("dossier", RESULTS_FILE, "unreadable", str(folder))]
        return Verification(dossier=Dossier(folder, "folder", {}), checks=tuple(checks), notes=tuple(notes),
                            tolerance=tolerance)
    document = dossier.document
    notes: list[str] = []
    differences: list[Difference] = []
    with tempfile.TemporaryDirectory(prefix="reportgen-verify-") as scratch:
        snapshots: dict[str, ServerSnapshot] = {}
        if dossier.bundle is None:
            checks = _folder_input_checks(document, notes)
            manifest_path = next((Path(str(entry["path"])) for entry in document["inputs"]
                                  if entry["role"] == "manifest"), None)
            file_checks = _folder_file_checks(dossier.path, notes)
        else:
            checks = _bundle_input_checks(document, dossier.bundle)
            manifest_path = extract_inputs(dossier.bundle, Path(scratch) / "snapshot")
            file_checks = _bundle_file_checks(dossier.bundle, notes)
            snapshots = _bundle_snapshots(document, dossier.bundle)
            if snapshots:
                rerun = ", and the analysis re-run from them" if recompute else ""
                notes.append(f"server queries ({', '.join(snapshots)}) were checked against their snapshots in the "
                             f"bundle{rerun}; no server was queried")
        checks += _added_checks(document, manifest_path, notes, in_bundle=dossier.bundle is not None)
        checks += file_checks
        checks += _run_id_check(document, notes)
        if recompute:
            inputs_hold = all(check.ok for check in checks if check.kind == "input")
            if not inputs_hold or manifest_path is None:
                checks.append(Check("recompute", "analysis", "skipped", "the inputs do not match results.json"))
            else:
                try:
                    recomputed = _recompute(manifest_path, Path(scratch) / "recomputed", snapshots)
                except ReportgenError as error:
                    checks.append(Check("recompute", "analysis", "failed", error.render().replace("\n", " ")))
                else:
                    differences = compare_documents(document, recomputed, tolerance)
                    checks.append(Check("recompute", "analysis", "differs" if differences else "ok",
                                        f"{len(differences)} value(s) differ beyond {tolerance:g}"))
                    if recomputed.get("tool_version") != document.get("tool_version"):
                        notes.append(f"recomputed with reportgen {recomputed.get('tool_version')}; the dossier was "
                                     f"written by reportgen {document.get('tool_version')}")
    return Verification(dossier=dossier, checks=tuple(checks), differences=tuple(differences), notes=tuple(notes),
                        tolerance=tolerance)


# ---------------------------------------------------------------- comparing documents


def _key_path(path: str, key: str) -> str:
    if _IDENTIFIER.match(key):
        return f"{path}.{key}" if path else key
    return f"{path}[{json.dumps(key, ensure_ascii=False)}]"


def _is_number(value: Any) -> bool:
    return isinstance(value, (int, float)) and not isinstance(value, bool)


def close(first: Any, second: Any, tolerance: float) -> bool:
    """Equal values, or numbers within ``tolerance`` (relative to the larger, or absolute)."""
    if _is_number(first) and _is_number(second):
        return math.isclose(first, second, rel_tol=tolerance, abs_tol=tolerance)
    return bool(type(first) is type(second) and first == second)


def _walk(first: Any, second: Any, path: str, tolerance: float, out: list[Difference]) -> None:
    if isinstance(first, dict) and isinstance(second, dict):
        for key in [*first, *(key for key in second if key not in first)]:
            _walk(first.get(key, ABSENT), second.get(key, ABSENT), _key_path(path, str(key)), tolerance, out)
    elif isinstance(first, list) and isinstance(second, list):
        if len(first) != len(second):
            out.append(Difference(path, f"{len(first)} items", f"{len(second)} items"))
            return
        for position, (one, two) in enumerate(zip(first, second, strict=True)):
            _walk(one, two, f"{path}[{position}]", tolerance, out)
    elif not close(first, second, tolerance):
        out.append(Difference(path, first, second))


def differences_between(first: Any, second: Any, tolerance: float, path: str = "") -> list[Difference]:
    """Every value that differs between two JSON values, by JSON path; numbers within ``tolerance`` agree."""
    out: list[Difference] = []
    _walk(first, second, path, tolerance, out)
    return out


def compare_documents(recorded: Mapping[str, Any], recomputed: Mapping[str, Any],
                      tolerance: float) -> list[Difference]:
    """The differences between a recorded and a recomputed results document.

    Compared: the inputs' role, name, relative path, hash and size (not their absolute path,
    which differs for a bundle), and :data:`RECOMPUTED_SECTIONS`: every statistic, p-value,
    order, verdict, coefficient, residual and sentence of the trails. Not compared: the run
    date, the run id and the environment (they describe the run, not its results), nor the
    methods appendix and the cautions (text of the code).
    """
    out: list[Difference] = []
    inputs_old = [{key: entry.get(key) for key in _INPUT_FIELDS} for entry in recorded.get("inputs", [])]
    inputs_new = [{key: entry.get(key) for key in _INPUT_FIELDS} for entry in recomputed.get("inputs", [])]
    _walk(inputs_old, inputs_new, "inputs", tolerance, out)
    for section in RECOMPUTED_SECTIONS:
        _walk(recorded.get(section, ABSENT), recomputed.get(section, ABSENT), section, tolerance, out)
    return out


# ---------------------------------------------------------------- diff


@dataclass(frozen=True, slots=True)
class Change:
    """One row of a diff: in which part, which item, what, and its old and new value (as text)."""

    section: str  # "input", "setting", "software", "dataset", "series", "regression"
    name: str
    what: str
    old: str
    new: str


@dataclass(frozen=True, slots=True)
class Changes:
    """The outcome of :func:`diff_dossiers`."""

    old: Dossier
    new: Dossier
    tolerance: float
    rows: tuple[Change, ...]

    def names(self, section: str) -> list[str]:
        """The items of a section that changed, in order of first appearance."""
        return list(dict.fromkeys(row.name for row in self.rows if row.section == section))


def show(value: Any) -> str:
    """A value as diff text: numbers to 6 significant digits, ``yes``/``no``, ``—`` for none."""
    if value is ABSENT:
        return "(absent)"
    if value is None:
        return "—"
    if isinstance(value, bool):
        return "yes" if value else "no"
    if isinstance(value, float):
        return format(value, ".6g")
    if isinstance(value, (int, str)):
        return str(value)
    return json.dumps(value, ensure_ascii=False, sort_keys=True)


@dataclass
class _Rows:
    """Collects the rows of one item and remembers which JSON paths they cover."""

    section: str
    name: str
    tolerance: float
    rows: list[Change]
    covered: set[str] = field(default_factory=set)

    def add(self, what: str, old: Any, new: Any) -> None:
        self.rows.append(Change(self.section, self.name, what, show(old), show(new)))

    def compare(self, what: str, old: Any, new: Any, path: str) -> None:
        """Add a row when the two values differ (numbers beyond the tolerance); mark the path covered."""
        self.covered.add(path)
        if not close(old, new, self.tolerance):
            self.add(what, old, new)

    def rest(self, old: Any, new: Any) -> None:
        """One row counting every other difference inside the item (nothing escapes the diff)."""
        others = [difference for difference in differences_between(old, new, self.tolerance)
                  if not any(difference.path == path or difference.path.startswith((f"{path}.", f"{path}["))
                             for path in self.covered)]
        if others:
            self.add("other values", "", f"{len(others)} differ (first: {others[0].path})")


def _diff_inputs(old: Mapping[str, Any], new: Mapping[str, Any], rows: list[Change]) -> None:
    def keyed(document: Mapping[str, Any]) -> dict[tuple[str, str], Mapping[str, Any]]:
        return {(str(entry["role"]), str(entry["name"])): entry for entry in document["inputs"]}

    before, after = keyed(old), keyed(new)
    for key in [*before, *(key for key in after if key not in before)]:
        one, two = before.get(key), after.get(key)
        label = "manifest" if key[0] == "manifest" else key[1]
        if one is None or two is None:
            rows.append(Change("input", label, "file", show(one["relative_path"]) if one else "(absent)",
                               show(two["relative_path"]) if two else "(absent)"))
            continue
        if one["relative_path"] != two["relative_path"]:
            rows.append(Change("input", label, "path", one["relative_path"], two["relative_path"]))
        if one["sha256"] != two["sha256"]:
            rows.append(Change("input", label, "content (SHA-256)", f"{str(one['sha256'])[:16]}…",
                               f"{str(two['sha256'])[:16]}…"))


def _diff_settings(old: Mapping[str, Any], new: Mapping[str, Any], rows: list[Change]) -> None:
    for key in [*old, *(key for key in new if key not in old)]:
        one, two = old.get(key, ABSENT), new.get(key, ABSENT)
        if one != two:
            rows.append(Change("setting", str(key), "value", show(one), show(two)))


def _diff_software(old: Mapping[str, Any], new: Mapping[str, Any], rows: list[Change]) -> None:
    if old.get("tool_version") != new.get("tool_version"):
        rows.append(Change("software", "reportgen", "version", show(old.get("tool_version")),
                           show(new.get("tool_version"))))
    before, after = old.get("environment", {}), new.get("environment", {})
    for key in ("python", "platform"):
        if before.get(key) != after.get(key):
            rows.append(Change("software", key, "version", show(before.get(key, ABSENT)),
                               show(after.get(key, ABSENT))))
    packages_before, packages_after = before.get("packages", {}), after.get("packages", {})
    for name in [*packages_before, *(name for name in packages_after if name not in packages_before)]:
        if name == "reportgen":
            continue
        one, two = packages_before.get(name, ABSENT), packages_after.get(name, ABSENT)
        if one != two:
            rows.append(Change("software", name, "version", show(one), show(two)))


def _presence(section: str, name: str, one: Any, two: Any, describe: Any, rows: list[Change]) -> bool:
    """Add an ``added``/``removed`` row when an item is on one side only; True when it is on both."""
    if one is ABSENT:
        rows.append(Change(section, name, "added", "(absent)", describe(two)))
        return False
    if two is ABSENT:
        rows.append(Change(section, name, "removed", describe(one), "(absent)"))
        return False
    return True


def _diff_datasets(old: Mapping[str, Any], new: Mapping[str, Any], tolerance: float, rows: list[Change]) -> None:
    for name in [*old, *(name for name in new if name not in old)]:
        one, two = old.get(name, ABSENT), new.get(name, ABSENT)
        if not _presence("dataset", name, one, two, lambda item: str(item.get("path", "")), rows):
            continue
        item = _Rows("dataset", name, tolerance, rows)
        item.compare("numbers (canonical hash)", str(one.get("table_sha256", ""))[:16],
                     str(two.get("table_sha256", ""))[:16], "table_sha256")
        for key in ("path", "frequency", "rows", "start", "end", "columns"):
            item.compare(key, one.get(key), two.get(key), key)


def _keyed_tests(tests: Sequence[Mapping[str, Any]]) -> dict[tuple[Any, ...], tuple[int, Mapping[str, Any]]]:
    seen: dict[tuple[Any, ...], int] = {}
    keyed: dict[tuple[Any, ...], tuple[int, Mapping[str, Any]]] = {}
    for position, test in enumerate(tests):
        base = (test.get("test"), test.get("level"), test.get("deterministic"))
        seen[base] = seen.get(base, 0) + 1
        keyed[(*base, seen[base])] = (position, test)
    return keyed


def _test_label(key: tuple[Any, ...]) -> str:
    test, level, deterministic, occurrence = key
    label = f"{test}, level {level}, {deterministic}"
    return label if occurrence == 1 else f"{label} ({occurrence})"


def _diff_series_item(item: _Rows, one: Mapping[str, Any], two: Mapping[str, Any]) -> None:
    for key in ("lineage", "frequency", "start", "end", "nobs"):
        item.compare(key, one.get(key), two.get(key), key)
    item.compare("order", one.get("order"), two.get("order"), "order")
    levels = [*one.get("deterministic", {}), *(k for k in two.get("deterministic", {})
                                               if k not in one.get("deterministic", {}))]
    for level in levels:
        item.compare(f"deterministic terms, level {level}", one.get("deterministic", {}).get(level, ABSENT),
                     two.get("deterministic", {}).get(level, ABSENT), _key_path("deterministic", str(level)))
    item.compare("fragile", one.get("fragile"), two.get("fragile"), "fragile")
    data_one, data_two = one.get("data", {}), two.get("data", {})
    item.covered.add("data")
    dates_one, dates_two = data_one.get("dates", []), data_two.get("dates", [])
    values_one, values_two = data_one.get("values", []), data_two.get("values", [])
    if dates_one != dates_two:
        item.add("data periods", f"{dates_one[0]} to {dates_one[-1]} ({len(dates_one)})" if dates_one else "none",
                 f"{dates_two[0]} to {dates_two[-1]} ({len(dates_two)})" if dates_two else "none")
    elif len(values_one) == len(values_two):
        changed = [position for position, (a, b) in enumerate(zip(values_one, values_two, strict=True))
                   if not close(a, b, item.tolerance)]
        if changed:
            first = changed[0]
            item.add("data", f"{len(values_one)} values",
                     f"{len(changed)} of {len(values_one)} changed (first {dates_one[first]}: "
                     f"{show(values_one[first])} → {show(values_two[first])})")
    tests_one, tests_two = _keyed_tests(one.get("tests", [])), _keyed_tests(two.get("tests", []))
    for key in [*tests_one, *(key for key in tests_two if key not in tests_one)]:
        if key not in tests_two or key not in tests_one:
            item.add(f"test {_test_label(key)}", "(absent)" if key not in tests_one else "run",
                     "(absent)" if key not in tests_two else "run")
            continue
        (position, test_one), (_, test_two) = tests_one[key], tests_two[key]
        for field_name, label in (("statistic", "statistic"), ("pvalue", "p-value"), ("rejects", "rejects")):
            item.compare(f"{_test_label(key)}: {label}", test_one.get(field_name), test_two.get(field_name),
                         f"tests[{position}].{field_name}")


def _diff_fit(item: _Rows, role: str, one: Any, two: Any) -> None:
    item.covered.add(role)
    if one is None or two is None:
        if (one is None) != (two is None):
            item.add(f"{role} fit", "none" if one is None else "estimated", "none" if two is None else "estimated")
        return
    terms_one = {coefficient["term"]: coefficient for coefficient in one.get("coefficients", [])}
    terms_two = {coefficient["term"]: coefficient for coefficient in two.get("coefficients", [])}
    for term in [*terms_one, *(term for term in terms_two if term not in terms_one)]:
        if term not in terms_one or term not in terms_two:
            item.add(f"{role}: {term}", "(absent)" if term not in terms_one else "estimated",
                     "(absent)" if term not in terms_two else "estimated")
            continue
        for field_name, label in (("estimate", "estimate"), ("pvalue", "p-value")):
            first, second = terms_one[term].get(field_name), terms_two[term].get(field_name)
            if not close(first, second, item.tolerance):
                item.add(f"{role}: {term} {label}", first, second)
    for key, label in (("nobs", "observations"), ("equation", "equation")):
        if one.get(key) != two.get(key):
            item.add(f"{role}: {label}", one.get(key), two.get(key))
    others = [difference for difference in differences_between(one, two, item.tolerance)
              if not re.match(r"^coefficients\[\d+\]\.(estimate|pvalue|term)$", difference.path)
              and difference.path not in ("nobs", "equation")]
    if others:
        item.add(f"{role}: other values", "", f"{len(others)} differ (first: {others[0].path})")


def _diff_regression_item(item: _Rows, one: Mapping[str, Any], two: Mapping[str, Any]) -> None:
    for key in ("formula", "sample_start", "sample_end", "verdict", "cointegrated", "flagged", "fragile",
                "r2_exceeds_dw"):
        item.compare(key.replace("_", " "), one.get(key), two.get(key), key)
    orders_one, orders_two = one.get("orders", {}), two.get("orders", {})
    item.covered.add("orders")
    for variable in [*orders_one, *(v for v in orders_two if v not in orders_one)]:
        first, second = orders_one.get(variable, ABSENT), orders_two.get(variable, ABSENT)
        if first != second:
            item.add(f"order of {variable}", first, second)
    for role in _FITS:
        _diff_fit(item, role, one.get(role), two.get(role))
    test_one, test_two = one.get("cointegration"), two.get("cointegration")
    item.covered.add("cointegration")
    if (test_one is None) != (test_two is None):
        item.add("cointegration test", "none" if test_one is None else "run", "none" if test_two is None else "run")
    elif test_one is not None and test_two is not None:
        for field_name, label in (("statistic", "statistic"), ("pvalue", "p-value"), ("rejects", "rejects")):
            if not close(test_one.get(field_name), test_two.get(field_name), item.tolerance):
                item.add(f"cointegration {label}", test_one.get(field_name), test_two.get(field_name))


def _diff_items(section: str, old: Mapping[str, Any], new: Mapping[str, Any], tolerance: float,
                compare: Any, rows: list[Change]) -> None:
    for name in [*old, *(name for name in new if name not in old)]:
        one, two = old.get(name, ABSENT), new.get(name, ABSENT)
        describe = (lambda value: str(value.get("lineage") or value.get("formula") or "")) \
            if isinstance(one if one is not ABSENT else two, dict) else show
        if not _presence(section, name, one, two, describe, rows):
            continue
        item = _Rows(section, name, tolerance, rows)
        compare(item, one, two)
        item.rest(one, two)


def diff_documents(old: Mapping[str, Any], new: Mapping[str, Any], tolerance: float = DIFF_TOLERANCE) -> list[Change]:
    """The rows of what changed from ``old`` to ``new`` (two results documents)."""
    rows: list[Change] = []
    _diff_inputs(old, new, rows)
    _diff_settings(old.get("settings", {}), new.get("settings", {}), rows)
    _diff_software(old, new, rows)
    _diff_datasets(old.get("datasets", {}), new.get("datasets", {}), tolerance, rows)
    _diff_items("series", old.get("series", {}), new.get("series", {}), tolerance, _diff_series_item, rows)
    _diff_items("regression", old.get("regressions", {}), new.get("regressions", {}), tolerance,
                _diff_regression_item, rows)
    return rows


def diff_dossiers(old: Path | str, new: Path | str, tolerance: float = DIFF_TOLERANCE) -> Changes:
    """What changed between two dossiers (folders or bundles); raises :class:`AuditError` for a non-dossier."""
    first, second = open_dossier(old), open_dossier(new)
    return Changes(old=first, new=second, tolerance=tolerance,
                   rows=tuple(diff_documents(first.document, second.document, tolerance)))


# ---------------------------------------------------------------- text and HTML


def text_table(header: Sequence[str], rows: Iterable[Sequence[str]], indent: str = "  ") -> list[str]:
    """Rows as aligned plain-text columns (the last column is not padded)."""
    body = [list(header), *(list(row) for row in rows)]
    widths = [max(len(row[column]) for row in body) for column in range(len(header))]
    return [indent + "  ".join(cell.ljust(widths[column]) if column < len(header) - 1 else cell
                               for column, cell in enumerate(row)).rstrip() for row in body]


def format_verification(verification: Verification) -> str:
    """The verification as the terminal shows it: a table of checks, the differences, the outcome."""
    lines = [f"verify {verification.dossier.describe()}"]
    lines += text_table(("check", "name", "status", "where"),
                        ((check.kind, check.name, check.status, check.where) for check in verification.checks))
    if verification.differences:
        lines.append(f"values that differ beyond {verification.tolerance:g} (recorded → recomputed):")
        lines += [f"  {difference.path}: {show(difference.recorded)} → {show(difference.recomputed)}"
                  for difference in verification.differences]
    lines += [f"note: {note}" for note in verification.notes]
    if verification.ok:
        lines.append("verified: every input and every dossier file matches results.json")
    else:
        problems = [f"{check.kind} {check.name} {check.status}" for check in verification.checks if not check.ok]
        lines.append(f"NOT verified: {'; '.join(problems)}")
    return "\n".join(lines)


def format_changes(changes: Changes) -> str:
    """The diff as the terminal shows it: both runs, then an aligned table of changes."""
    lines = [f"old: {changes.old.describe()}", f"new: {changes.new.describe()}"]
    if not changes.rows:
        lines.append(f"no changes beyond the tolerance {changes.tolerance:g}")
        return "\n".join(lines)
    lines += text_table(("section", "name", "what", "old", "new"),
                        ((row.section, row.name, row.what, row.old, row.new) for row in changes.rows))
    lines.append(f"{len(changes.rows)} change(s) beyond the tolerance {changes.tolerance:g}")
    return "\n".join(lines)


def _audit_templates() -> Path:
    here = Path(__file__).resolve().parent
    for candidate in (here / "templates" / "audit", here.parent / "templates" / "audit"):
        if (candidate / "diff.html.j2").is_file():
            return candidate
    raise FileNotFoundError(f"reportgen's audit templates are missing (looked in {here / 'templates' / 'audit'})")


def changes_html(changes: Changes) -> str:
    """The diff as a standalone HTML page ("Changes since the previous version"), every value escaped."""
    environment = jinja2.Environment(loader=jinja2.FileSystemLoader(str(_audit_templates())), autoescape=True,
                                     undefined=jinja2.StrictUndefined, keep_trailing_newline=True)
    sections = {}
    for row in changes.rows:
        sections.setdefault(row.section, []).append(row)

    def side(dossier: Dossier) -> dict[str, str]:
        document = dossier.document
        return {"path": str(dossier.path), "run_id": str(document.get("run_id", "")),
                "created": str(document.get("created", "")), "tool_version": str(document.get("tool_version", "")),
                "title": str(document.get("project", {}).get("title", ""))}

    return environment.get_template("diff.html.j2").render(
        old=side(changes.old), new=side(changes.new), tolerance=f"{changes.tolerance:g}",
        sections=[(name, sections[name]) for name in sections], count=len(changes.rows))
