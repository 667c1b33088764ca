"""Fixtures of the fuzz properties: one project folder per test module, reused by every example.

Hypothesis runs many examples per test and does not mix with function-scoped fixtures, so each
module gets one folder; every example rewrites the manifest and every data file it may name
before loading, so no example sees another's files. (One folder instead of one per example
also saves the cost of creating and removing thousands of folders.)
"""

from __future__ import annotations

from pathlib import Path

import pytest


@pytest.fixture(scope="module")
def project_folder(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """A folder for the manifest and data files of this module's examples.

    It starts with two links a data path may name: ``loop.csv`` (a link to itself) and
    ``dangling.csv`` (a link to nothing).
    """
    folder = tmp_path_factory.mktemp("fuzz")
    (folder / "loop.csv").symlink_to("loop.csv")
    (folder / "dangling.csv").symlink_to("nowhere.csv")
    return folder
