"""Provenance: hashes of every input, the environment, the run date and the run id.

A dossier is only as trustworthy as the proof of what produced it: the SHA-256 of the manifest
and of every data file's bytes, the versions of Python and of every package that computed a
number, the command line, the git state of the manifest's folder, and a run id derived from all
of them. The build date comes from ``SOURCE_DATE_EPOCH`` when set (the reproducible-builds
convention), so two runs of the same inputs can give identical bytes.

The run id (:func:`run_id`, :func:`document_run_id`) is derived from

- the reportgen version;
- the SHA-256 of every input's raw bytes (the manifest and each data file, in manifest order);
- the canonical hash of every parsed table (``datasets.*.table_sha256``), so a re-saved file with
  the same numbers and a changed file are told apart from the raw hash alone;
- the settings;
- the versions of the recorded packages, the Python version and the platform;
- the git state (commit and dirty flag) of the manifest's folder, or its absence.

It does *not* depend on the run date, the command line or the output folder: two runs of the
same inputs with the same software share an id whatever day or folder they ran in.
:func:`environment_lock` lists every installed distribution for the archive bundle.
"""

from __future__ import annotations

import datetime
import hashlib
import importlib.metadata
import json
import os
import platform
import re
import subprocess
import sys
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

#: Packages whose versions are recorded in every dossier.
RECORDED_PACKAGES: tuple[str, ...] = (
    "reportgen", "numpy", "pandas", "scipy", "statsmodels", "matplotlib", "jinja2", "weasyprint", "pyyaml",
    "pydantic",
)


def sha256_bytes(data: bytes) -> str:
    """Hex SHA-256 of some bytes."""
    return hashlib.sha256(data).hexdigest()


def package_versions(names: Sequence[str] = RECORDED_PACKAGES) -> dict[str, str]:
    """Installed versions of the named packages ("not installed" where absent)."""
    versions: dict[str, str] = {}
    for name in names:
        try:
            versions[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            versions[name] = "not installed"
    return versions


def git_state(folder: Path) -> dict[str, Any] | None:
    """The commit and dirty flag of the git repository holding ``folder``, or None if there is none."""
    try:
        commit = subprocess.run(["git", "-C", str(folder), "rev-parse", "HEAD"], capture_output=True, text=True,
                                timeout=10, check=False)
        if commit.returncode != 0:
            return None
        status = subprocess.run(["git", "-C", str(folder), "status", "--porcelain", "--untracked-files=no"],
                                capture_output=True, text=True, timeout=10, check=False)
    except (OSError, subprocess.SubprocessError):
        return None
    return {"commit": commit.stdout.strip(), "dirty": bool(status.stdout.strip())}


def build_time() -> str:
    """The run's timestamp (UTC, ISO 8601): ``SOURCE_DATE_EPOCH`` when set, else now."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch is not None and epoch.strip().isdigit():
        moment = datetime.datetime.fromtimestamp(int(epoch), tz=datetime.UTC)
    else:
        moment = datetime.datetime.now(tz=datetime.UTC).replace(microsecond=0)
    return moment.strftime("%Y-%m-%dT%H:%M:%SZ")


def environment(command: Sequence[str], manifest_folder: Path) -> dict[str, Any]:
    """What computed the numbers: Python, platform, package versions, command line, git state."""
    return {
        "python": platform.python_version(),
        "implementation": sys.implementation.name,
        "platform": platform.platform(),
        "machine": platform.machine(),
        "packages": package_versions(),
        "command": " ".join(command),
        "git": git_state(manifest_folder),
    }


def run_id(tool_version: str, input_hashes: Sequence[str], settings: Mapping[str, Any],
           packages: Mapping[str, str], *, table_hashes: Sequence[str] = (), python: str | None = None,
           platform_name: str | None = None, git: Mapping[str, Any] | None = None) -> str:
    """A short id derived from the tool version, every input's hash, the settings and the software.

    Two runs share an id exactly when they read the same bytes (``input_hashes``) giving the same
    tables (``table_hashes``) with the same settings, the same packages, Python and platform and
    the same git state, whatever the date, the command line or the output folder.
    :func:`document_run_id` computes the same id from a results document.
    """
    material = json.dumps({"tool": tool_version, "inputs": list(input_hashes), "tables": list(table_hashes),
                           "settings": settings, "packages": dict(packages), "python": python,
                           "platform": platform_name, "git": None if git is None else dict(git)},
                          sort_keys=True)
    return "rg-" + sha256_bytes(material.encode())[:16]


def document_run_id(document: Mapping[str, Any]) -> str:
    """The run id a results document should carry, computed from what it records (see :func:`run_id`)."""
    environment_record = document.get("environment", {})
    return run_id(str(document.get("tool_version", "")),
                  [str(entry["sha256"]) for entry in document.get("inputs", [])],
                  document.get("settings", {}), environment_record.get("packages", {}),
                  table_hashes=[str(dataset["table_sha256"]) for dataset in document.get("datasets", {}).values()],
                  python=environment_record.get("python"), platform_name=environment_record.get("platform"),
                  git=environment_record.get("git"))


def _normalised_name(name: str) -> str:
    """A distribution name in its canonical form (PEP 503): lower case, runs of ``-_.`` as ``-``."""
    return re.sub(r"[-_.]+", "-", name).lower()


def installed_distributions() -> dict[str, str]:
    """Every installed distribution (canonical name → version), sorted by name.

    Where a name is installed twice on the path, the first one found (the one Python imports) wins.
    """
    found: dict[str, str] = {}
    for distribution in importlib.metadata.distributions():
        name = distribution.metadata["Name"] if distribution.metadata is not None else None
        if not name:
            continue
        found.setdefault(_normalised_name(name), distribution.version)
    return dict(sorted(found.items()))


def environment_lock() -> str:
    """The environment as a pip requirements text: one ``name==version`` line per distribution, sorted.

    The two comment lines name the Python version and the platform; the text is the same for
    the same environment, whatever the date.
    """
    lines = ["# reportgen environment lock: every installed distribution, sorted by name",
             f"# python {platform.python_version()} ({sys.implementation.name}) on {platform.platform()}"]
    lines.extend(f"{name}=={version}" for name, version in installed_distributions().items())
    return "\n".join(lines) + "\n"


def checksums_text(digests: Mapping[str, str]) -> str:
    """A ``sha256sum``-format listing: ``<hex>  <name>`` per file, sorted by name, LF line ends.

    ``sha256sum -c checksums.sha256`` run in the listed folder checks every file with standard tools.
    """
    return "".join(f"{digests[name]}  {name}\n" for name in sorted(digests))


def parse_checksums(text: str) -> dict[str, str] | None:
    """The name → hex SHA-256 pairs of a ``sha256sum``-format listing, or None if it is not one.

    Both the text form (two spaces) and the binary form (space and ``*``) are read.
    """
    digests: dict[str, str] = {}
    for line in text.splitlines():
        if not line.strip():
            continue
        match = re.fullmatch(r"([0-9a-f]{64}) [ *](.+)", line)
        if match is None:
            return None
        digests[match.group(2)] = match.group(1)
    return digests
