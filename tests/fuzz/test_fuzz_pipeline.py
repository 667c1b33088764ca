"""Fuzzing manifest and data together, loading only: generated CSV files under mutated manifests.

Where the other loading properties hold one side fixed, this one damages both: each of the
data files a manifest may name is generated (and perhaps damaged), and the manifest structure
has 0-2 mutations. Several datasets of different frequencies meet in regressions, so mixed
frequencies, sample windows in another frequency's labels and series of different spans are
exercised too.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import yaml
from hypothesis import given
from hypothesis import strategies as st

from .strategies import DATA_FILES, csv_tables, mutated_manifests
from .support import check_loading, fuzz_settings, write_project


@st.composite
def projects(draw: st.DrawFn) -> tuple[bytes, dict[str, bytes]]:
    """A manifest (0-2 mutations) and a generated CSV file for every path it may name."""
    manifest: Any = draw(mutated_manifests(max_mutations=2))
    text = yaml.safe_dump(manifest, sort_keys=False, allow_unicode=True).encode("utf-8", "surrogatepass")
    data = {path: draw(csv_tables())[0] for path in sorted(DATA_FILES)}
    return text, data


@fuzz_settings(max_examples=300)
@given(project=projects())
def test_mutated_manifests_over_generated_data_load_or_raise_catalogue_errors(
        project_folder: Path, project: tuple[bytes, dict[str, bytes]]) -> None:
    """300 examples: a manifest of 1-3 datasets, 1-4 series and 0-3 regressions with 0-2 mutations,
    over four generated CSV files (as in the CSV property: any date form, edits, byte damage).

    Why: the stages after reading (transforms, the length check, aligning a regression's
    series and cutting its sample window) only run when both files are good enough; this
    property reaches them with inputs that are still odd, and checks that what fails there is a
    catalogue error too.
    """
    text, data = project
    path = write_project(project_folder, text, data)
    check_loading(path)
