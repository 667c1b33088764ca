"""Fuzzing the formula grammar: any text parses to names it holds, or fails with a position; nothing runs."""

from __future__ import annotations

import contextlib
import io
import os
import re
import tempfile
from pathlib import Path

import yaml
from hypothesis import given
from hypothesis import strategies as st

from reportgen.cli import main
from reportgen.errors import FormulaSyntaxError, ManifestErrors, ReportgenError
from reportgen.formula import Formula, FormulaGrammarError, parse_formula
from reportgen.manifest import load_manifest

from .strategies import FORMULA_TOKENS, fixed_csv
from .support import assert_catalogue_error, fuzz_settings

_IDENTIFIER = re.compile(r"[A-Za-z_][A-Za-z0-9_]*")

formula_texts = st.one_of(
    st.lists(st.sampled_from(FORMULA_TOKENS), max_size=12).map("".join),
    st.lists(st.sampled_from(FORMULA_TOKENS), max_size=10).map(" ".join),
    st.lists(st.one_of(st.sampled_from(["a", "b", "c", "~", "+", " "]), st.characters()), max_size=12).map("".join),
    st.text(max_size=30),
    st.from_regex(r"\s*[a-c]\s*~\s*[a-c](\s*\+\s*[a-z_0-9]{1,3})*\s*", fullmatch=True),
)


def _parse(text: str) -> Formula | FormulaGrammarError:
    try:
        return parse_formula(text)
    except FormulaGrammarError as error:
        return error


@fuzz_settings(max_examples=1000)
@given(text=formula_texts)
def test_formula_parses_to_names_in_the_text_or_reports_a_position(text: str) -> None:
    """1,000 examples: token soup (names, ~, +, *, parentheses, digits, unicode, ``__import__``,
    quotes, control characters), arbitrary unicode text and near-valid formulas.

    A formula that parses names a dependent and at least one regressor, all distinct, each an
    identifier that occurs as a word of the text; one that does not raises FormulaGrammarError
    with a position inside the text (0 to its length, the end for "something is missing") and a
    caret line that draws. No other exception.

    Why: the grammar is reportgen's own, hand-written tokenizer and parser; the caret in every
    formula error message is only right if the position is.
    """
    formula = _parse(text)
    if isinstance(formula, FormulaGrammarError):
        assert 0 <= formula.position <= len(text), (formula.position, len(text))
        assert formula.text == text
        assert formula.message
        caret = formula.caret()
        assert caret.startswith(text)
        assert caret.endswith("^")
        return
    words = _IDENTIFIER.findall(text)
    assert formula.regressors, text
    assert len(set(formula.variables)) == len(formula.variables)
    for name in formula.variables:
        assert _IDENTIFIER.fullmatch(name), name
        assert name in words, (name, text)
    assert formula.text == text


_PAYLOADS = [
    "__import__('os').system('touch {marker}')",
    "a ~ __import__('os').system('touch {marker}')",
    "a ~ b + __import__('os').system('touch {marker}')",
    "a ~ eval(\"open('{marker}', 'w')\")",
    "a ~ exec('open(\"{marker}\", \"w\")')",
    "a ~ b + open('{marker}', 'w').close()",
    "a ~ I(open('{marker}', 'w'))",
    "a ~ $(touch {marker})",
    "a ~ `touch {marker}`",
    "a ~ b; touch {marker}",
    "a ~ b\nimport os; os.system('touch {marker}')",
    "a ~ {{{{ cycler.__init__.__globals__.os.system('touch {marker}') }}}}",
    "a ~ np.save('{marker}', 1)",
    "a ~ b + (lambda: open('{marker}', 'w'))()",
]


@fuzz_settings(max_examples=30)
@given(template=st.sampled_from(_PAYLOADS), prefix=st.sampled_from(["", " ", "a ~ b + ", "\t"]),
       relative=st.booleans())
def test_formula_text_is_never_evaluated(template: str, prefix: str, relative: bool) -> None:
    """30 examples: a manifest whose formula is code that would create a marker file if run
    (``__import__('os').system('touch X')``, ``eval``, ``exec``, ``open``, shell and template
    syntax), loaded by load_manifest and run by ``reportgen run``, from inside the project folder.

    The manifest is refused with a formula-syntax catalogue error (exit status 2 from the
    command line) and the marker file does not exist afterwards.

    Why: a manifest may come from anyone; a formula must only ever be parsed, never evaluated.
    """
    with tempfile.TemporaryDirectory() as name:
        folder = Path(name)
        marker = "X" if relative else str(folder / "X")
        formula = prefix + template.format(marker=marker)
        manifest = {"reportgen": 1, "project": {"title": "t"},
                    "datasets": {"d": {"path": "d.csv", "index": "period"}},
                    "series": {"a": {"dataset": "d", "column": "a"}, "b": {"dataset": "d", "column": "b"}},
                    "regressions": {"r": {"formula": formula}}}
        path = folder / "manifest.yaml"
        path.write_text(yaml.safe_dump(manifest), encoding="utf-8")
        (folder / "d.csv").write_bytes(fixed_csv("monthly"))
        previous = Path.cwd()
        os.chdir(folder)
        try:
            try:
                load_manifest(path)
            except ReportgenError as error:
                assert_catalogue_error(error, [str(path)])
                parts = error.errors if isinstance(error, ManifestErrors) else [error]
                assert any(isinstance(part, FormulaSyntaxError) for part in parts)
            else:
                raise AssertionError(f"the formula {formula!r} was accepted")
            stderr = io.StringIO()
            with contextlib.redirect_stderr(stderr), contextlib.redirect_stdout(io.StringIO()):
                status = main(["run", str(path), "--out", str(folder / "out"), "--format", "json", "--quiet"])
            assert status == 2, stderr.getvalue()
            assert "error[formula-syntax]" in stderr.getvalue()
        finally:
            os.chdir(previous)
        assert not (folder / "X").exists()
        assert sorted(item.name for item in folder.iterdir()) == ["d.csv", "manifest.yaml"]
