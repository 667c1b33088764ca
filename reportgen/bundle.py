"""The archive bundle: one zip that holds everything needed to check a dossier and run it again.

``reportgen run MANIFEST --out DIR --bundle`` writes ``DIR/bundle.zip``::

    bundle.json                    what the bundle is: format, run id, where each input sits
    checksums.sha256               SHA-256 of every other entry (sha256sum format, sorted)
    environment.lock               every installed distribution, name==version, sorted
    results.json                   the run's results
    dossier.html, dossier.pdf      the renderings that were asked for
    inputs/<folder>/<manifest>     the manifest, byte for byte
    inputs/<folder>/<data path>    every data file, at its path relative to the manifest's folder
    snapshots/<dataset>.csv        the result of every server query (role ``server-query``), as hashed

``<folder>`` is empty when every data path stays inside the manifest's folder; when a path climbs
out of it (``../shared/rates.csv``), the snapshot keeps as many of the manifest folder's own names
as needed for the relative paths to resolve inside ``inputs/``. Absolute data paths cannot be
bundled (the snapshot could not be re-run without editing the manifest). A server query has no
file: its snapshot (the CSV whose SHA-256 results.json records as the input's) lets ``verify``
check it, and ``verify --recompute`` run the analysis again, without the server.

The zip is deterministic: entries sorted by name, every entry dated ``created`` (the run date,
from ``SOURCE_DATE_EPOCH`` when set, in UTC, to the even second below as the zip format
requires), mode 0644, deflate level 9, no comment and no extra fields.
``unzip bundle.zip && sha256sum -c checksums.sha256`` checks it without reportgen;
``reportgen verify bundle.zip`` also checks each snapshot against the hashes in results.json.
"""

from __future__ import annotations

import datetime
import io
import json
import posixpath
import zipfile
import zlib
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path, PurePosixPath
from typing import Any

from reportgen.errors import BundleInputError, Location, NotABundleError
from reportgen.manifest import Manifest
from reportgen.provenance import checksums_text, environment_lock, parse_checksums, sha256_bytes
from reportgen.results import SERVER_QUERY_ROLE
from reportgen.sources import resolve_data_path

#: The bundle's own description, and how to recognise a reportgen bundle.
INDEX_ENTRY = "bundle.json"
CHECKSUMS_ENTRY = "checksums.sha256"
LOCK_ENTRY = "environment.lock"
RESULTS_ENTRY = "results.json"
INPUTS_FOLDER = "inputs"
SNAPSHOTS_FOLDER = "snapshots"
BUNDLE_FORMAT = "reportgen-bundle"
BUNDLE_FORMAT_VERSION = 1
_ZIP_EPOCH = (1980, 1, 1, 0, 0, 0)  # the earliest date a zip entry can carry
_ENTRY_MODE = 0o100644


@dataclass(frozen=True, slots=True)
class Bundle:
    """A bundle as read: its index, its checksum listing and every entry's bytes."""

    path: Path
    index: Mapping[str, Any]
    entries: Mapping[str, bytes]
    damaged: tuple[str, ...] = ()  # entries whose bytes fail the zip's CRC check (left out of ``entries``)

    @property
    def document(self) -> dict[str, Any]:
        """The results document the bundle carries."""
        return json.loads(self.entries[RESULTS_ENTRY].decode("utf-8"))

    @property
    def checksums(self) -> dict[str, str] | None:
        """The listing in ``checksums.sha256`` (None if absent or unreadable)."""
        raw = self.entries.get(CHECKSUMS_ENTRY)
        if raw is None:
            return None
        try:
            return parse_checksums(raw.decode("utf-8"))
        except UnicodeDecodeError:
            return None

    @property
    def input_entries(self) -> dict[str, str]:
        """Input name → entry name, as the index records them."""
        return {str(item["name"]): str(item["entry"]) for item in self.index.get("inputs", [])}


def _safe_entry(name: str) -> bool:
    """Whether a zip entry name is a plain relative path that stays inside the bundle."""
    pure = PurePosixPath(name)
    return bool(name) and not pure.is_absolute() and ".." not in pure.parts and "\\" not in name \
        and ":" not in pure.parts[0]


def snapshot_entries(inputs: list[Mapping[str, Any]]) -> dict[str, str]:
    """The entry name of each input (by input name) inside the bundle: see the module docstring.

    Raises :class:`BundleInputError` for a data path that is absolute or climbs above the root folder.
    """
    manifest = next(entry for entry in inputs if entry["role"] == "manifest")
    folder_names = PurePosixPath(Path(str(manifest["path"])).parent.as_posix()).parts[1:]
    relative: dict[str, str] = {}
    servers: dict[str, str] = {}
    climb = 0
    for entry in inputs:
        if entry["role"] == SERVER_QUERY_ROLE:
            servers[str(entry["name"])] = f"{SNAPSHOTS_FOLDER}/{entry['name']}.csv"
            continue
        text = str(entry["relative_path"]).replace("\\", "/")
        if PurePosixPath(text).is_absolute():
            raise BundleInputError(
                problem=f"dataset '{entry['name']}' has the absolute path {text}, which a bundle cannot hold",
                location=Location(str(manifest["path"]), key_path=f"datasets.{entry['name']}.path"),
                remedy="write data paths relative to the manifest's folder, or run without --bundle")
        normal = posixpath.normpath(text)
        parts = PurePosixPath(normal).parts
        climb = max(climb, next((i for i, part in enumerate(parts) if part != ".."), len(parts)))
        relative[str(entry["name"])] = normal
    if climb > len(folder_names):
        raise BundleInputError(problem="a data path climbs above the root folder",
                               location=Location(str(manifest["path"])),
                               remedy="write data paths relative to the manifest's folder, or run without --bundle")
    kept = folder_names[len(folder_names) - climb:] if climb else ()
    base = PurePosixPath(INPUTS_FOLDER, *kept)
    return {**{name: posixpath.normpath(str(base / path)) for name, path in relative.items()}, **servers}


def check_bundle_inputs(manifest: Manifest) -> None:
    """Refuse, before any analysis, a data path that a bundle cannot hold; the error points at the manifest line."""
    inputs: list[dict[str, Any]] = [{"role": "manifest", "name": "manifest", "path": str(manifest.path),
                                     "relative_path": manifest.path.name}]
    inputs += [{"role": "data", "name": name, "relative_path": spec.path,
                "path": str(resolve_data_path(manifest.base_dir, spec.path, manifest.locate("datasets", name, "path")))}
               for name, spec in manifest.spec.datasets.items() if spec.path is not None]
    try:
        snapshot_entries(inputs)
    except BundleInputError as error:
        key_path = error.location.key_path if error.location is not None else None
        if key_path:
            where = manifest.locate(*key_path.split("."))
        else:
            first = next(iter(manifest.spec.datasets))
            where = manifest.locate("datasets", first, "path")
        raise BundleInputError(error.message, location=where, hint=error.hint) from None


def _zip_time(created: str) -> tuple[int, int, int, int, int, int]:
    """``created`` (ISO 8601, UTC) as a zip entry date: never before 1980, seconds rounded down to even.

    The zip format keeps seconds in units of two; rounding here states that rather than leaving it
    to the zip writer.
    """
    moment = datetime.datetime.fromisoformat(created.replace("Z", "+00:00")).astimezone(datetime.UTC)
    stamp = (moment.year, moment.month, moment.day, moment.hour, moment.minute, moment.second - moment.second % 2)
    return max(stamp, _ZIP_EPOCH)


def bundle_bytes(entries: Mapping[str, bytes], created: str) -> bytes:
    """A deterministic zip of ``entries``: sorted, dated ``created``, mode 0644, deflate level 9."""
    stamp = _zip_time(created)
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for name in sorted(entries):
            info = zipfile.ZipInfo(name, date_time=stamp)
            info.compress_type = zipfile.ZIP_DEFLATED
            info.create_system = 3  # Unix, so the mode below is read as such
            info.external_attr = _ENTRY_MODE << 16
            archive.writestr(info, entries[name], compress_type=zipfile.ZIP_DEFLATED, compresslevel=9)
    return buffer.getvalue()


def write_bundle(target: Path, document: Mapping[str, Any], dossier_files: Mapping[str, Path],
                 manifest: Manifest, snapshots: Mapping[str, bytes] | None = None) -> Path:
    """Write the bundle of a run to ``target``.

    ``dossier_files`` are the files already written (results.json and the renderings, by name).
    Each data file is read again and must still have the SHA-256 that results.json records;
    the manifest's bytes are those that were analysed; ``snapshots`` holds the result of each
    server query as analysed (by dataset name), stored under ``snapshots/``.
    """
    inputs = list(document["inputs"])
    where = snapshot_entries(inputs)
    entries: dict[str, bytes] = {name: path.read_bytes() for name, path in dossier_files.items()}
    for entry in inputs:
        if entry["role"] == "manifest":
            content = manifest.raw
        elif entry["role"] == SERVER_QUERY_ROLE:
            recorded = (snapshots or {}).get(str(entry["name"]))
            if recorded is None:
                raise BundleInputError(problem=f"the result of the query of dataset '{entry['name']}' was not kept "
                                               "for the bundle", location=Location(str(manifest.path)),
                                       remedy="run again with --bundle")
            content = recorded
        else:
            try:
                content = Path(str(entry["path"])).read_bytes()
            except OSError as error:
                raise BundleInputError(problem=f"cannot read {entry['path']} for the bundle: {error.strerror}",
                                       location=Location(str(entry["path"])),
                                       remedy="check that the file is still there and readable") from None
        if sha256_bytes(content) != entry["sha256"]:
            raise BundleInputError(
                problem=f"{entry['path']} changed while reportgen ran; the bundle would not match results.json",
                location=Location(str(entry["path"])), remedy="run again once the file is final")
        entries[where[str(entry["name"])]] = content
    entries[LOCK_ENTRY] = environment_lock().encode("utf-8")
    index = {
        "format": BUNDLE_FORMAT,
        "format_version": BUNDLE_FORMAT_VERSION,
        "tool_version": document["tool_version"],
        "run_id": document["run_id"],
        "created": document["created"],
        "manifest": where["manifest"],
        "inputs": [{"role": entry["role"], "name": entry["name"], "relative_path": entry["relative_path"],
                    "entry": where[str(entry["name"])]} for entry in inputs],
        "dossier": sorted(dossier_files),
    }
    entries[INDEX_ENTRY] = (json.dumps(index, indent=2, ensure_ascii=False) + "\n").encode("utf-8")
    entries[CHECKSUMS_ENTRY] = checksums_text({name: sha256_bytes(content)
                                               for name, content in entries.items()}).encode("utf-8")
    target.write_bytes(bundle_bytes(entries, str(document["created"])))
    return target


def read_bundle(path: Path) -> Bundle:
    """Open a bundle and read every entry; a file that is not a reportgen bundle raises :class:`NotABundleError`."""
    where = Location(path)
    entries: dict[str, bytes] = {}
    damaged: list[str] = []
    try:
        with zipfile.ZipFile(path) as archive:
            for info in archive.infolist():
                if info.is_dir():
                    continue
                try:
                    entries[info.filename] = archive.read(info)
                except (zipfile.BadZipFile, zlib.error, EOFError):
                    damaged.append(info.filename)
    except (zipfile.BadZipFile, zipfile.LargeZipFile, EOFError) as error:
        raise NotABundleError(problem=f"{path} is not a zip file ({error})", location=where,
                              hint="name a dossier folder or the bundle.zip that 'reportgen run --bundle' wrote"
                              ) from None
    except OSError as error:
        raise NotABundleError(problem=f"cannot read {path}: {error.strerror or error}", location=where,
                              hint="check the file's permissions") from None
    essential = [name for name in (INDEX_ENTRY, RESULTS_ENTRY) if name in damaged]
    if essential:
        raise NotABundleError(problem=f"{path} is damaged: {' and '.join(essential)} fail(s) the zip's CRC check",
                              location=where, hint="the bundle was altered or its copy is corrupt; use another copy")
    if INDEX_ENTRY not in entries or RESULTS_ENTRY not in entries:
        raise NotABundleError(
            problem=f"{path} is a zip file but not a reportgen bundle (no {INDEX_ENTRY} or {RESULTS_ENTRY})",
            location=where)
    try:
        index = json.loads(entries[INDEX_ENTRY].decode("utf-8"))
        json.loads(entries[RESULTS_ENTRY].decode("utf-8"))
    except (UnicodeDecodeError, ValueError) as error:
        raise NotABundleError(problem=f"{path}: {INDEX_ENTRY} or {RESULTS_ENTRY} is not readable JSON ({error})",
                              location=where, hint="the bundle is damaged; use another copy") from None
    if not isinstance(index, dict) or index.get("format") != BUNDLE_FORMAT:
        raise NotABundleError(
            problem=f"{path} is a zip file but not a reportgen bundle ({INDEX_ENTRY} does not say so)",
            location=where)
    if index.get("format_version") != BUNDLE_FORMAT_VERSION:
        raise NotABundleError(problem=f"{path} is a bundle of format version {index.get('format_version')}; this "
                                      f"reportgen reads version {BUNDLE_FORMAT_VERSION}", location=where,
                              hint="verify it with the reportgen version that wrote it")
    for item in index.get("inputs", []):
        if not isinstance(item, dict) or not _safe_entry(str(item.get("entry", ""))):
            raise NotABundleError(problem=f"{path}: {INDEX_ENTRY} names an input entry outside the bundle: {item!r}",
                                  location=where, hint="the bundle is damaged or was altered; use another copy")
    return Bundle(path=path, index=index, entries=entries, damaged=tuple(damaged))


def extract_inputs(bundle: Bundle, folder: Path) -> Path | None:
    """Write the input snapshots into ``folder`` at their bundle paths; return the manifest's path there.

    Returns None when the bundle holds no manifest snapshot. Inputs absent from the bundle are skipped.
    """
    for entry in sorted(set(bundle.input_entries.values())):
        content = bundle.entries.get(entry)
        if content is None:
            continue
        target = folder.joinpath(*PurePosixPath(entry).parts)
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(content)
    manifest_entry = str(bundle.index.get("manifest", ""))
    if not _safe_entry(manifest_entry) or manifest_entry not in bundle.entries:
        return None
    return folder.joinpath(*PurePosixPath(manifest_entry).parts)
