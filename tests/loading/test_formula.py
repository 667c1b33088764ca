"""reportgen's formula grammar: parsed by hand, never evaluated."""

from __future__ import annotations

import pytest

from reportgen.formula import FormulaGrammarError, parse_formula


def test_parses_dependent_and_regressors_in_order() -> None:
    formula = parse_formula("boxes ~ fuel + wages")
    assert formula.dependent == "boxes"
    assert formula.regressors == ("fuel", "wages")
    assert formula.variables == ("boxes", "fuel", "wages")


def test_whitespace_is_free() -> None:
    assert parse_formula("  y~x1+x2 ").regressors == ("x1", "x2")


@pytest.mark.parametrize(
    ("text", "message", "position"),
    [
        ("", "the formula is empty; write it as 'y ~ x1 + x2'", 0),
        ("y x", "expected '~' after the dependent series", 2),
        ("y ~", "expected a series name after this point", 3),
        ("y ~ x +", "expected a series name after this point", 7),
        ("y ~ x x", "expected '+' between regressors", 6),
        ("y ~ y", "'y' is the dependent series and cannot be a regressor", 4),
        ("y ~ x + x", "'x' appears twice among the regressors", 8),
        ("~ x", "a formula starts with the dependent series' name", 0),
        ("y ~ log(x)", "unexpected character '('; a formula holds series names, '~' and '+' only", 7),
    ],
)
def test_syntax_errors_name_the_position(text: str, message: str, position: int) -> None:
    with pytest.raises(FormulaGrammarError) as caught:
        parse_formula(text)
    assert caught.value.message == message
    assert caught.value.position == position


def test_code_in_a_formula_is_refused_and_never_run(tmp_path) -> None:  # type: ignore[no-untyped-def]
    marker = tmp_path / "ran"
    text = f"y ~ __import__('os').system('touch {marker}')"
    with pytest.raises(FormulaGrammarError):
        parse_formula(text)
    assert not marker.exists()


def test_caret_points_under_the_problem() -> None:
    with pytest.raises(FormulaGrammarError) as caught:
        parse_formula("y ~ x; rm")
    assert caught.value.caret() == "y ~ x; rm\n     ^"
