"""Fuzzing the data files: generated and damaged CSV files load or give a catalogue error.

The manifest is valid and small (one dataset, two or three series, one regression); its
dataset options (frequency, missing-data policy, sorting) and the series' transforms are
drawn, so the same file meets every reading rule. Every failure must be a catalogue error
naming the data file or the manifest.
"""

from __future__ import annotations

import copy
from pathlib import Path
from typing import Any

import yaml
from hypothesis import given
from hypothesis import strategies as st

from .strategies import (
    FREQUENCIES,
    INDEX,
    MISSING_POLICIES,
    SAMPLE_LABELS,
    TOO_SHORT,
    VALID_CHAINS,
    csv_tables,
)
from .support import check_loading, fuzz_settings, write_project

DATA = "data.csv"


@st.composite
def csv_manifests(draw: st.DrawFn) -> bytes:
    """A valid manifest over ``data.csv`` with drawn dataset options, transforms and sample window."""
    dataset: dict[str, Any] = {"path": DATA, "index": draw(st.sampled_from([INDEX] * 12 + ["Period", "a"]))}
    frequency = draw(st.one_of(st.none(), st.none(), st.sampled_from(FREQUENCIES)))
    if frequency is not None:
        dataset["frequency"] = frequency
    if draw(st.booleans()):
        dataset["missing"] = draw(st.sampled_from(MISSING_POLICIES))
    if draw(st.booleans()):
        dataset["sort"] = draw(st.booleans())
    series: dict[str, Any] = {"a": {"dataset": "d", "column": "a"}, "b": {"dataset": "d", "column": "b"}}
    if draw(st.booleans()):
        series["c"] = {"dataset": "d", "column": "c"}
    for spec in series.values():
        if draw(st.booleans()):
            spec["transform"] = copy.deepcopy(draw(st.sampled_from(VALID_CHAINS)))
        if draw(st.integers(0, 3)) == 0:
            spec["missing"] = draw(st.sampled_from(MISSING_POLICIES))
    regression: dict[str, Any] = {"formula": " + ".join(series).replace("+", "~", 1)}
    if draw(st.integers(0, 2)) == 0:
        regression["sample"] = {bound: draw(st.sampled_from([label for label in SAMPLE_LABELS
                                                             if isinstance(label, str)]))
                                for bound in ("start", "end") if draw(st.booleans())}
    manifest = {"reportgen": 1, "project": {"title": "Fuzz"}, "datasets": {"d": dataset}, "series": series,
                "regressions": {"r": regression},
                "settings": {"too_short": draw(st.sampled_from(TOO_SHORT)),
                             "max_order": draw(st.sampled_from([1, 2]))}}
    return yaml.safe_dump(manifest, sort_keys=False).encode()


@fuzz_settings(max_examples=700)
@given(manifest=csv_manifests(), table=csv_tables())
def test_generated_csv_files_load_or_raise_catalogue_errors(project_folder: Path, manifest: bytes,
                                                             table: tuple[bytes, dict[str, Any]]) -> None:
    """700 examples: a CSV file of 0-45 rows with 0-6 edits and maybe byte damage, under drawn options.

    The file: a header ``period,a,b,c`` (sometimes reordered) and dates in one form (2011,
    2011Q1, 2011-Q1, 2011-03, 2011-3, month-end dates, daily, weekly Sundays) from a start year
    that is usually recent and sometimes at a calendar's edge (0, 1, 1677, 2262, 9999), with
    seeded random-walk values in a drawn number format. Edits: garbage or other-form dates,
    swapped, duplicated and skipped rows, cells that are empty, na, text, inf, nan, 1e308,
    -0, 400 digits or unicode digits, ragged rows, constant columns, header names missing,
    duplicated, empty or padded, a column dropped. Byte damage: empty file, header only, BOM,
    NUL, latin-1 or other non-UTF-8 bytes, trailing blank lines, an unbalanced quote,
    truncation, CR line ends; the rows are written quoted, minimally quoted or naively joined.
    The manifest draws the frequency (or none: inferred), missing-data policy, sort flag,
    transforms, too-short policy, max order and sample window.

    Why: a data file is where real inputs are messiest; every problem with it must be named,
    with its file and line, as a catalogue error.
    """
    data, _ = table
    path = write_project(project_folder, manifest, {DATA: data})
    check_loading(path)
