"""Fuzzing the manifest: generated structures and damaged YAML text load or give a catalogue error.

The data files are fixed and valid, so every failure these properties provoke comes from the
manifest: the loading pipeline must either succeed or stop with a typed, coded error that
names the manifest, never with a Python exception.
"""

from __future__ import annotations

from pathlib import Path

from hypothesis import given

from .strategies import DATA_FILES, fixed_csv, manifest_yaml, noisy_yaml
from .support import check_loading, fuzz_settings, write_project

#: Valid data for every path a generated manifest may name (30 months, 24 quarters, 25 years).
_ROWS = {"monthly": 30, "quarterly": 24, "annual": 25}
FIXED_DATA = {path: fixed_csv(frequency, rows=_ROWS[frequency], seed=number)
              for number, (path, frequency) in enumerate(sorted(DATA_FILES.items()))}


@fuzz_settings(max_examples=600)
@given(text=manifest_yaml())
def test_mutated_manifest_structures_load_or_raise_catalogue_errors(project_folder: Path, text: bytes) -> None:
    """600 examples: a valid manifest structure with 0-4 mutations, dumped by yaml.safe_dump.

    Mutations: any value replaced by one of the wrong type (None, booleans, huge and negative
    integers, NaN and infinite floats, odd text, nested lists and mappings), keys deleted, unknown
    keys added, keys renamed to odd names (empty, digits first, unicode, newlines, 5,000
    characters), bad transforms and parameters (0, negative, 10**40, floats, text, several keys
    in one step), formulas of token soup (``__import__('os')``, ``*``, parentheses, unicode),
    sample windows with impossible or out-of-range labels, wrong vocabulary values, data paths
    and index columns that name nothing, a folder, a file outside the project or hold a NUL,
    and whole sections or the whole manifest of the wrong kind. About one example in five has
    no mutation, so the success path is exercised as well.

    Why: every mistake a person can make in a manifest must come back as a catalogue error
    pointing at the manifest, not as a traceback.
    """
    path = write_project(project_folder, text, FIXED_DATA)
    check_loading(path)


@fuzz_settings(max_examples=400)
@given(text=noisy_yaml())
def test_noisy_manifest_text_loads_or_raises_catalogue_errors(project_folder: Path, text: bytes) -> None:
    """400 examples: the YAML text of a valid manifest with 1-4 character-level edits and byte damage.

    Edits: inserted characters and YAML-significant snippets (tabs, unbalanced braces and
    brackets, anchors and aliases, merge keys, directives, document markers, control
    characters, BOMs, line separators, deep nesting up to 20,000 levels, duplicate keys), tags
    (``!!python/object``, ``!!int``, ``!!bool``, ``!custom``, ...) put before a key or a value,
    plain scalars PyYAML reads as numbers (``0b_``, ``0x_``, ``1:20``), deleted and replaced
    characters, duplicated and swapped lines, stray indentation; then maybe a BOM, latin-1 or
    other non-UTF-8 bytes, UTF-16, truncation or CR line ends.

    Why: the YAML reader is the first thing a user's file meets; whatever PyYAML makes of the
    bytes (an error of its own, a surprise value, a recursion) must come out as a catalogue error.
    """
    path = write_project(project_folder, text, FIXED_DATA)
    check_loading(path)
