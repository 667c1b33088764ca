"""What the fuzz properties check, in one place: the loading pipeline ends in success or a catalogue error.

``check_loading`` runs the loading stages the way :func:`reportgen.runner.analyse` does, up to the
aligned sample of every regression, and accepts exactly two outcomes: success, or a
:class:`~reportgen.errors.ReportgenError` that is a catalogue entry (or a ``ManifestErrors``
made of them) and renders as a message naming the file. Anything else is a bug.

Bugs already found (crashes, and user errors without a catalogue code) have a reproducer in
``test_found.py`` (marked ``xfail(strict=True)``) and an entry in :data:`KNOWN_BUGS`, so the
properties keep exploring past them instead of stopping at the first one. Fixing a bug makes
its reproducer pass, which fails the suite (strict xfail) until the ``xfail`` mark and the
``KNOWN_BUGS`` entries are both removed; a test in ``test_found.py`` checks that every entry
names a reproducer still marked xfail.

Environment variables for hunting by hand: ``REPORTGEN_FUZZ_STRICT=1`` makes the properties
fail on known bugs too; ``REPORTGEN_FUZZ_SCALE=N`` runs N times as many examples;
``REPORTGEN_FUZZ_COLLECT=FILE`` appends every unknown bug to FILE and carries on.
"""

from __future__ import annotations

import os
import traceback
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

from hypothesis import HealthCheck, event, settings
from hypothesis.control import currently_in_test_context

from reportgen.errors import CATALOGUE, ManifestErrors, ReportgenError
from reportgen.manifest import load_manifest
from reportgen.runner import build_series, load_tables, refuse_short_series, regression_data

#: The manifest's file name in every generated project.
MANIFEST_NAME = "manifest.yaml"


def fuzz_settings(max_examples: int) -> settings:
    """Deterministic hypothesis settings for a fuzz property with this many examples.

    ``derandomize`` makes every run test the same examples; no example database is written, so
    the suite leaves no ``.hypothesis`` folder behind and does not depend on one.
    ``REPORTGEN_FUZZ_SCALE=10`` runs ten times as many examples (a longer hunt, by hand).
    """
    scale = float(os.environ.get("REPORTGEN_FUZZ_SCALE", "1"))
    return settings(max_examples=max(1, round(max_examples * scale)), derandomize=True, deadline=None,
                    database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much,
                                           HealthCheck.data_too_large, HealthCheck.large_base_example])


# ---------------------------------------------------------------- known bugs


@dataclass(frozen=True, slots=True)
class KnownBug:
    """A bug already reported: a crash, or a user error without a catalogue code.

    ``test`` names the reproducer in ``test_found.py``. For a ``crash``, ``exceptions`` are the
    exception types it may raise and ``frames`` are substrings that must all occur in the
    formatted traceback (``in read_yaml``, ``yaml/constructor.py``), so that a new crash of the
    same type elsewhere is not taken for this one. For ``uncoded`` (a ReportgenError whose class
    has no catalogue code), ``frames`` are substrings of the rendered message and ``exceptions``
    the classes it may be (empty: any).
    """

    test: str
    exceptions: tuple[str, ...]
    frames: tuple[str, ...]
    kind: str = "crash"

    def matches(self, kind: str, text: str) -> bool:
        """Whether a formatted traceback (kind ``crash``) or ``Class: rendered message`` (``uncoded``) is this bug."""
        if kind != self.kind:
            return False
        last = text.rstrip().splitlines()[-1] if kind == "crash" and text.strip() else text
        name = last.split(":", 1)[0].rsplit(".", 1)[-1]
        return (not self.exceptions or name in self.exceptions) and all(frame in text for frame in self.frames)


_UNCODED = "test_statistics_refusals_are_catalogue_errors"
#: Bugs found by the fuzz properties and not fixed yet (reproducers in test_found.py).
KNOWN_BUGS: tuple[KnownBug, ...] = ()


def known_bug(text: str, kind: str = "crash") -> KnownBug | None:
    """The known bug a traceback (or an uncoded error) shows, or None; always None with REPORTGEN_FUZZ_STRICT=1."""
    if os.environ.get("REPORTGEN_FUZZ_STRICT"):
        return None
    return next((bug for bug in KNOWN_BUGS if bug.matches(kind, text)), None)


# ---------------------------------------------------------------- the loading property


def note_event(text: str) -> None:
    """Count an outcome in hypothesis' statistics (``--hypothesis-show-statistics``); a no-op outside a test."""
    if currently_in_test_context():
        event(text)


def load_everything(manifest_path: Path, data_paths: list[str] | None = None) -> None:
    """The loading stages of ``analyse``: manifest, tables, series, length check, regression samples.

    Once the manifest has loaded, its datasets' paths (as written in it) are added to
    ``data_paths``, if given: the names a data error may use for its file.
    """
    manifest = load_manifest(manifest_path)
    if data_paths is not None:
        data_paths.extend(spec.path for spec in manifest.spec.datasets.values())
    tables = load_tables(manifest)
    built = build_series(manifest, tables)
    refuse_short_series(manifest, built)
    series = {name: item.values for name, item in built.items()}
    frequencies = {name: tables[manifest.spec.series[name].dataset].frequency for name in built}
    for name in manifest.formulas:
        regression_data(manifest, name, series, frequencies)


def assert_catalogue_entry(error: ReportgenError) -> None:
    """The error is a catalogue leaf: its class's code is registered, and registered to that very class."""
    code = type(error).code
    assert code, f"{type(error).__name__} has no catalogue code: {error.render()}"
    assert code in CATALOGUE, f"{type(error).__name__}'s code {code!r} is not in the catalogue"
    assert CATALOGUE[code] is type(error), f"code {code!r} is registered to {CATALOGUE[code].__name__}"


def assert_catalogue_error(error: ReportgenError, files: Iterable[str]) -> str:
    """A user error as the catalogue promises it: typed, coded, rendered without a traceback, naming a file.

    Returns the rendered text.
    """
    parts = error.errors if isinstance(error, ManifestErrors) else [error]
    assert parts, "ManifestErrors with no errors in it"
    names = [name for name in files if name]
    for part in parts:
        assert not isinstance(part, ManifestErrors), "ManifestErrors nested in ManifestErrors"
        assert_catalogue_entry(part)
        text = part.render()
        assert isinstance(text, str)
        assert "Traceback" not in text, text
        assert any(name in text for name in names), f"the message names none of {names}: {text}"
    rendered = error.render()
    assert "Traceback" not in rendered
    note_event(f"error[{type(parts[0]).code}]")
    return rendered


def check_loading(manifest_path: Path) -> ReportgenError | None:
    """Run the loading stages; pass on success or a catalogue error; re-raise anything else.

    A rendered error must name the manifest (by the path it was given) or a data file (by its
    path as the manifest writes it). Returns the user error, if any.
    """
    names = [str(manifest_path)]
    try:
        load_everything(manifest_path, names)
    except ReportgenError as error:
        if tolerated_uncoded(error, manifest_path.parent):
            return error
        assert_catalogue_error(error, names)
        return error
    except Exception as error:  # a crash: tolerated only when it is a bug already reported
        text = "".join(traceback.format_exception(error))
        bug = known_bug(text)
        if bug is None:
            if not collect_crash(text, manifest_path.parent):
                raise
            return None
        note_event(f"known bug {bug.test}")
        return None
    note_event("loaded")
    return None


def tolerated_uncoded(error: ReportgenError, folder: Path) -> bool:
    """Whether a user error has a part without a catalogue code that is a known bug (or was collected)."""
    parts = error.errors if isinstance(error, ManifestErrors) else [error]
    uncoded = [part for part in parts if not type(part).code]
    if not uncoded:
        return False
    text = f"{type(uncoded[0]).__name__}: {uncoded[0].render()}"
    if known_bug(text, "uncoded") is not None:
        note_event("known bug (uncoded error)")
        return True
    return collect_crash(f"uncoded error\n{text}", folder)


def collect_crash(text: str, folder: Path) -> bool:
    """With ``REPORTGEN_FUZZ_COLLECT=FILE``, append a crash (traceback and inputs) to FILE and return True.

    A hunting aid: the properties then run to the end and FILE lists every crash met, instead of
    hypothesis stopping at the first and shrinking it. Without the variable, return False.
    """
    target = os.environ.get("REPORTGEN_FUZZ_COLLECT")
    if not target:
        return False
    inputs = {path.name: path.read_bytes()[:3000] for path in sorted(folder.rglob("*")) if path.is_file()}
    with open(target, "a", encoding="utf-8") as stream:
        stream.write(f"=== CRASH\n{text}\n--- inputs\n{inputs!r}\n")
    return True


def write_project(folder: Path, manifest: bytes, data: Mapping[str, bytes]) -> Path:
    """Write the manifest and its data files (paths relative to ``folder``); return the manifest's path."""
    for relative, content in data.items():
        target = folder / relative
        target.parent.mkdir(parents=True, exist_ok=True)
        target.write_bytes(content)
    path = folder / MANIFEST_NAME
    path.write_bytes(manifest)
    return path
