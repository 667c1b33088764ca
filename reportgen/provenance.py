"""Provenance: hashes of every input, the environment, the run date and the run id.

A dossier is only as trustworthy as the proof of what produced it: the SHA-256 of the manifest
and of every data file's bytes, the versions of Python and of every package that computed a
number, the command line, the git state of the manifest's folder, and a run id derived from all
of them. The build date comes from ``SOURCE_DATE_EPOCH`` when set (the reproducible-builds
convention), so two runs of the same inputs can give identical bytes.
"""

from __future__ import annotations

import datetime
import hashlib
import importlib.metadata
import json
import os
import platform
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
           packages: Mapping[str, str]) -> str:
    """A short id derived from the tool version, every input's hash, the settings and the packages.

    Two runs share an id exactly when they read the same bytes with the same settings and the
    same software, whatever the date or the output folder.
    """
    material = json.dumps({"tool": tool_version, "inputs": list(input_hashes), "settings": settings,
                           "packages": dict(packages)}, sort_keys=True)
    return "rg-" + sha256_bytes(material.encode())[:16]
