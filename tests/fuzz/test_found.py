"""Bugs the fuzz properties found, each as a minimal reproducer (xfail until fixed).

Every test here is marked ``xfail(strict=True)`` with the exception the bug raises: once the
bug is fixed the test passes, strict xfail turns that into a failure, and the fix removes the
mark together with the bug's entry in ``support.KNOWN_BUGS`` (the entry lets the properties run
past the bug meanwhile; ``test_known_bugs_name_the_reproducers_here`` keeps the two in step).

The first group are crashes (an exception that is not a ReportgenError) and user errors
without a catalogue code, the two things the properties forbid. The second group are wrong
answers met on the way: no exception, but not what the documentation promises.
"""

from __future__ import annotations

import math
import sys
import textwrap
from pathlib import Path

import numpy as np
import pytest

from reportgen.errors import BadNameError, ReportgenError, SeriesScaleError
from reportgen.manifest import load_manifest
from reportgen.runner import analyse

from .support import KNOWN_BUGS, assert_catalogue_entry, assert_catalogue_error, load_everything

MANIFEST = """\
reportgen: 1
project: {{title: Found}}
datasets:
  d: {{path: {path}, index: period{dataset}}}
series:
  a: {{dataset: d, column: a}}
  b: {{dataset: d, column: b}}
regressions:
  r: {{formula: "{formula}"}}
settings: {{{settings}}}
"""


def _project(folder: Path, data: str, *, path: str = "data.csv", dataset: str = "", formula: str = "a ~ b",
             settings: str = "", manifest: str | None = None) -> Path:
    """Write ``data.csv`` and a manifest over it (the template above, or ``manifest``); return its path."""
    (folder / "data.csv").write_text(data, encoding="utf-8")
    target = folder / "manifest.yaml"
    text = manifest if manifest is not None else MANIFEST.format(path=path, dataset=dataset, formula=formula,
                                                                  settings=settings)
    target.write_text(text, encoding="utf-8")
    return target


def _monthly(columns: dict[str, np.ndarray]) -> str:
    """A monthly CSV from 2001-01 with the given columns (values written exactly)."""
    rows = len(next(iter(columns.values())))
    lines = ["period," + ",".join(columns)]
    lines += [f"{2001 + i // 12}-{i % 12 + 1:02d}," + ",".join(repr(float(values[i])) for values in columns.values())
              for i in range(rows)]
    return "\n".join(lines) + "\n"


def _walks(rows: int = 40, seed: int = 3) -> tuple[np.ndarray, np.ndarray]:
    rng = np.random.default_rng(seed)
    return 100 + np.cumsum(rng.standard_normal(rows)), 100 + np.cumsum(rng.standard_normal(rows))


VALID_DATA = _monthly(dict(zip(("a", "b"), _walks(30), strict=True)))


def _loads_or_refuses(path: Path) -> None:
    """The loading property on one input: success, or a catalogue error naming the manifest or a data file."""
    names = [str(path)]
    try:
        load_everything(path, names)
    except ReportgenError as error:
        assert_catalogue_error(error, names)


# ================================================================ crashes and uncoded errors


@pytest.mark.parametrize("setting", ["seed: 0b_", "seed: 0x_", "seed: -0b_", "seed: !!int abc", "seed: !!int ''",
                                     "significance: !!float abc", "significance: !!float ''",
                                     "too_short: !!bool maybe", "!!int abc: 1"])
def test_yaml_scalar_pyyaml_cannot_construct_is_a_catalogue_error(tmp_path: Path, setting: str) -> None:
    """A scalar that PyYAML resolves (or is told) to be a number or boolean, but cannot build one from.

    ``0b_`` matches YAML 1.1's binary-integer pattern and is built as ``int("", 2)``; an ``!!int``
    tag on text is built as ``int("abc")``. Expected: a catalogue error (yaml-syntax or
    wrong-type) at the scalar's line, as for any other unreadable YAML.
    """
    _loads_or_refuses(_project(tmp_path, VALID_DATA, settings=setting))


def test_nul_byte_in_a_data_path_is_a_catalogue_error(tmp_path: Path) -> None:
    r"""A data path written with a NUL escape (``path: "data.csv\0"``) is refused as a user error.

    YAML's double-quoted ``\0`` makes a string with a NUL character, which no path can hold.
    Expected: data-not-found (or a manifest error on the path) naming the manifest.
    """
    _loads_or_refuses(_project(tmp_path, VALID_DATA, path='"data.csv\\0"'))


def test_data_path_that_is_a_symlink_loop_is_a_catalogue_error(tmp_path: Path) -> None:
    """A data path naming a symbolic link to itself is refused as a user error (data-unreadable, ELOOP)."""
    path = _project(tmp_path, VALID_DATA, path="loop.csv")
    (tmp_path / "loop.csv").symlink_to("loop.csv")
    _loads_or_refuses(path)


def test_weekly_period_ending_after_9999_is_labelled(tmp_path: Path) -> None:
    """Weekly data whose last date falls in the week that ends on 10000-01-02.

    Any message or note that labels that week (here the unsorted-rows listing) crashes.
    Expected: the week is labelled (or the date refused as out of range) and the loading
    ends in success or a catalogue error.
    """
    data = "period,a,b\n9999-12-31,1,1\n9999-12-26,2,2\n"
    _loads_or_refuses(_project(tmp_path, data, dataset=", frequency: weekly"))


@pytest.mark.parametrize("formula", ["const ~ x", "y ~ const"])
def test_a_series_named_const_is_analysed(tmp_path: Path, formula: str) -> None:
    """A series may be called ``const``: the run gives a verdict, or refuses the name as a catalogue error."""
    columns = dict(zip(("const", "x", "y"), (*_walks(40), _walks(40, seed=4)[0]), strict=True))
    series = "".join(f"  {name}: {{dataset: d, column: {name}}}\n" for name in columns)
    manifest = MANIFEST.format(path="data.csv", dataset="", formula=formula, settings="")
    manifest = manifest.replace("  a: {dataset: d, column: a}\n  b: {dataset: d, column: b}\n", series)
    path = _project(tmp_path, _monthly(columns), manifest=manifest)
    try:
        analyse(load_manifest(path), ["reportgen"])
    except ReportgenError as error:
        assert_catalogue_error(error, [str(path)])


#: Runs that the statistics refuse with the abstract DataError, which has no catalogue code, although
#: the catalogue has entries for most of them (collinear, nearly-collinear, constant-dependent):
#: columns, formula, and transforms by series.
_ROWS = 40
_WALK_A, _WALK_B = _walks(_ROWS)
_NEAR_B = _WALK_B + 1e-9 * np.random.default_rng(5).standard_normal(_ROWS)
UNCODED_CASES: dict[str, tuple[dict[str, np.ndarray], str, dict[str, str]]] = {
    "constant-regressor": ({"a": _WALK_A, "b": np.full(_ROWS, 7.0)}, "a ~ b", {}),
    "collinear-regressors": ({"a": _WALK_A, "b": _WALK_B, "c": 2 * _WALK_B + 3}, "a ~ b + c", {}),
    "nearly-collinear-regressors": ({"a": _WALK_A, "b": _WALK_B, "c": _NEAR_B}, "a ~ b + c", {}),
    "constant-dependent": ({"a": np.full(_ROWS, 7.0), "b": _WALK_A}, "a ~ b", {}),
    "exact-fit": ({"a": _WALK_A, "b": 2 * _WALK_A + 3}, "a ~ b", {}),
    "overflowing-difference": ({"a": _WALK_A, "b": np.where(np.arange(_ROWS) % 2 == 0, 1e308, -1e308)}, "a ~ b",
                               {"b": "[diff]"}),
}


@pytest.mark.parametrize("case", sorted(UNCODED_CASES))
def test_statistics_refusals_are_catalogue_errors(tmp_path: Path, case: str) -> None:
    """A regression the statistics cannot estimate is refused with a catalogue error.

    Cases: a constant regressor (collinear with the constant), a regressor that is an exact
    linear combination of another, one 1e-9 away from another, a constant dependent, a
    dependent that is an exact linear function of the regressor (Engle-Granger: R² = 1), and
    a regressor whose differences overflow to infinity (+-1e308 alternating, then diff).
    """
    columns, formula, transforms = UNCODED_CASES[case]
    series = "".join(f"  {name}: {{dataset: d, column: {name}"
                     + (f", transform: {transforms[name]}" if name in transforms else "") + "}\n"
                     for name in columns)
    manifest = MANIFEST.format(path="data.csv", dataset="", formula=formula, settings="")
    manifest = manifest.replace("  a: {dataset: d, column: a}\n  b: {dataset: d, column: b}\n", series)
    path = _project(tmp_path, _monthly(columns), manifest=manifest)
    with pytest.raises(ReportgenError) as caught:
        analyse(load_manifest(path), ["reportgen"])
    assert_catalogue_entry(caught.value)


# ================================================================ wrong answers met on the way


@pytest.mark.parametrize("scale", [1e90, 1e-90, 1e200, 1e-200])
def test_rescaled_series_give_the_same_verdicts_or_a_clear_refusal(tmp_path: Path, scale: float) -> None:
    """Two random walks give the same verdict in units or in 1e90 (1e-90) units, and are refused at 1e+-200.

    STYLE.md: rescaling a series leaves every test statistic unchanged. Beyond 1e100 (or below
    1e-100) the squares the tests form leave the range of float64, so reportgen refuses the series
    with series-scale and a hint to rescale, rather than compute with overflowing numbers.
    """
    plain = _project(tmp_path, _monthly({"a": _WALK_A, "b": _WALK_B}))
    expected = analyse(load_manifest(plain), ["reportgen"]).regressions["r"].verdict
    scaled = _project(tmp_path, _monthly({"a": _WALK_A * scale, "b": _WALK_B * scale}))
    if abs(math.log10(scale)) < 100:
        assert analyse(load_manifest(scaled), ["reportgen"]).regressions["r"].verdict == expected
        return
    with pytest.raises(SeriesScaleError) as caught:
        analyse(load_manifest(scaled), ["reportgen"])
    assert caught.value.location is not None
    assert caught.value.location.key_path == "series.a"


def test_a_name_ending_in_a_newline_is_a_bad_name(tmp_path: Path) -> None:
    """A series named ``"b\\n"`` (a quoted YAML key) cannot appear in a formula and is refused as bad-name."""
    manifest = textwrap.dedent("""\
        reportgen: 1
        project: {title: Found}
        datasets:
          d: {path: data.csv, index: period}
        series:
          a: {dataset: d, column: a}
          "b\\n": {dataset: d, column: b}
        """)
    path = _project(tmp_path, VALID_DATA, manifest=manifest)
    try:
        load_manifest(path)
    except BadNameError:
        return
    raise AssertionError("the series name 'b\\n' was accepted")


# ================================================================ bookkeeping


def test_known_bugs_name_the_reproducers_here() -> None:
    """Every KNOWN_BUGS entry names a test of this module that is still marked xfail.

    So a fix that removes a reproducer's xfail mark must also remove its KNOWN_BUGS entries,
    and the properties stop tolerating a bug as soon as it is fixed.
    """
    module = sys.modules[__name__]
    xfailing = {name for name in dir(module) if name.startswith("test_")
                and any(mark.name == "xfail" for mark in getattr(getattr(module, name), "pytestmark", []))}
    assert {bug.test for bug in KNOWN_BUGS} <= xfailing
