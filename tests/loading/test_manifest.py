"""Manifest loading: strict YAML, typed schema, every error with file, line, field and a fix."""

from __future__ import annotations

from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen.errors import ManifestError, ManifestErrors
from reportgen.manifest import load_manifest


def _render(path: Path) -> str:
    with pytest.raises(ManifestError) as caught:
        load_manifest(path)
    return caught.value.render()


def test_base_manifest_loads(project: Callable[..., Path]) -> None:
    manifest = load_manifest(project())
    assert list(manifest.spec.series) == ["a", "b"]
    assert manifest.formulas["a_on_b"].regressors == ("b",)
    assert manifest.spec.settings.significance == 0.05
    assert manifest.transforms["a"][0].name == "log"


def test_unknown_key_suggests_the_nearest(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("  title: Test dossier", "  title: Test dossier\n  clinet: Someone"))
    assert _render(path) == (f"{path}:4:3: error[unknown-key]: project.clinet: unknown key 'clinet'\n"
                             "  hint: did you mean 'client'?")


def test_duplicate_keys_are_refused(project: Callable[..., Path], base: str) -> None:
    path = project(base + "series:\n  c: {dataset: shop, column: a}\n")
    assert _render(path) == (f"{path}:13:1: error[duplicate-key]: duplicate key 'series' (first given on line 8)\n"
                             "  hint: remove or rename one of the two entries")


def test_dates_and_yes_no_are_not_coerced(project: Callable[..., Path], base: str) -> None:
    text = base.replace('{formula: "a ~ b"}', '{formula: "a ~ b", sample: {start: 2011-01-01}}')
    manifest = load_manifest(project(text))
    assert manifest.spec.regressions["a_on_b"].sample.start == "2011-01-01"  # type: ignore[union-attr]
    path = project(base + "settings: {lag_criterion: yes}\n")
    assert "expected one of 'aic', 'bic' or 't-stat'; got 'yes'" in _render(path)


def test_a_number_where_text_is_expected_asks_for_quotes(project: Callable[..., Path], base: str) -> None:
    text = base.replace('{formula: "a ~ b"}', '{formula: "a ~ b", sample: {start: 2011}}')
    path = project(text)
    assert _render(path) == (f"{path}:12:39: error[wrong-type]: regressions.a_on_b.sample.start: expected text; "
                             "got 2011\n  hint: quote it: '2011'")


def test_every_schema_error_is_reported_at_once(project: Callable[..., Path], base: str) -> None:
    text = base.replace("index: month", "index: month\n    frequency: montly") + \
        "settings: {significance: 0.5}\n"
    with pytest.raises(ManifestErrors) as caught:
        load_manifest(project(text))
    lines = caught.value.render().splitlines()
    assert len(caught.value.errors) == 2
    assert lines[0].endswith("datasets.shop.frequency: expected one of 'annual', 'quarterly', 'monthly', "
                             "'weekly' or 'daily'; got 'montly'")
    assert lines[1] == "  hint: did you mean 'monthly'?"
    assert lines[2].endswith("settings.significance: expected one of 0.01, 0.05 or 0.1; got 0.5")


def test_missing_required_field_names_its_parent(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("    index: month\n", ""))
    assert _render(path) == (f"{path}:5:3: error[missing-key]: datasets.shop.index: this field is required\n"
                             "  hint: add it; manifests/demo.yaml shows every section")


def test_unknown_dataset_and_series_are_named(project: Callable[..., Path], base: str) -> None:
    text = base.replace("{dataset: shop, column: b}", "{dataset: shopp, column: b}").replace(
        '"a ~ b"', '"a ~ c"')
    with pytest.raises(ManifestErrors) as caught:
        load_manifest(project(text))
    rendered = caught.value.render()
    assert "series.b.dataset: unknown dataset 'shopp'\n  hint: did you mean 'shop'?" in rendered
    assert "regressions.a_on_b.formula: the formula uses 'c', which is not a declared series" in rendered


def test_formula_error_shows_a_caret(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace('"a ~ b"', '"a ~ b * 2"'))
    assert _render(path) == (
        f"{path}:12:12: error[formula-syntax]: regressions.a_on_b.formula: unexpected character '*'; a formula holds "
        "series "
        "names, '~' and '+' only\n    a ~ b * 2\n          ^\n  hint: write formulas as 'y ~ x1 + x2' with series "
        "names")


def test_parameterised_transforms(project: Callable[..., Path], base: str) -> None:
    manifest = load_manifest(project(base.replace("[log]", "[log, {lag: 2}, seasonal-diff]")))
    steps = manifest.transforms["a"]
    assert [(step.name, step.parameter) for step in steps] == [("log", None), ("lag", 2), ("seasonal-diff", None)]
    path = project(base.replace("[log]", "[{log: 2}]"))
    assert "series.a.transform.0: 'log' takes no parameter" in _render(path)


@pytest.mark.parametrize(
    ("content", "expected"),
    [
        ("", "error[manifest-empty]: the manifest is empty"),
        ("- a\n- b\n", "1:1: error[manifest-not-mapping]: the manifest must be a mapping of sections; found a list"),
        ("reportgen: 1\nproject: {title: x\n", "3:1: error[yaml-syntax]: YAML syntax error: expected ',' or '}', "
                                                "but got "
                                                "'<stream end>'"),
        ("reportgen: 1\n<<: {a: 1}\n",
         "2:1: error[yaml-unsupported]: YAML merge keys ('<<') cannot be used in a manifest"),
        ("reportgen: 2\nproject: {title: x}\ndatasets: {}\nseries: {}\n", "reportgen: expected one of 1; got 2"),
    ],
)
def test_unusable_documents(project: Callable[..., Path], content: str, expected: str) -> None:
    path = project(content)
    rendered = _render(path)
    assert rendered.splitlines()[0].startswith(str(path))
    assert expected in rendered


def test_missing_and_non_utf8_manifest(tmp_path: Path) -> None:
    assert _render(tmp_path / "nope.yaml") == (f"{tmp_path / 'nope.yaml'}: error[manifest-not-found]: manifest file "
                                               "not found\n"
                                               "  hint: check the path; relative paths start from the current folder")
    latin = tmp_path / "latin.yaml"
    latin.write_bytes("reportgen: 1\nproject: {title: caf\xe9}\n".encode("latin-1"))
    assert _render(latin) == (f"{latin}:2:21: error[manifest-encoding]: the manifest is not UTF-8 text (byte 33)\n"
                              "  hint: save the file as UTF-8")


def test_python_tags_cannot_run_code(project: Callable[..., Path], tmp_path: Path) -> None:
    marker = tmp_path / "ran"
    path = project(f"reportgen: !!python/object/apply:os.system ['touch {marker}']\n")
    assert _render(path) == (f"{path}:1:12: error[yaml-unsupported]: the YAML tag "
                             "'tag:yaml.org,2002:python/object/apply:os.system' cannot be used in a manifest\n"
                             "  hint: remove the tag; a manifest holds plain text, numbers, lists and mappings")
    assert not marker.exists()


def test_bad_names_are_refused(project: Callable[..., Path], base: str) -> None:
    path = project(base.replace("  b: {dataset", "  2b: {dataset").replace('"a ~ b"', '"a ~ a2"')
                   .replace("a_on_b", "r"))
    rendered = _render(path)
    assert "series.2b: '2b' is not a usable name" in rendered


def test_control_characters_are_a_manifest_error(project: Callable[..., Path]) -> None:
    path = project("reportgen: 1\x0b\nproject: {title: x}\n")
    rendered = _render(path)
    assert rendered == (f"{path}:1:13: error[yaml-syntax]: YAML syntax error: unacceptable character #x000b: "
                        "special characters are not allowed\n"
                        "  hint: check indentation, colons and quotes near this point")
