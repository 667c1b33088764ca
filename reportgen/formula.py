"""reportgen's regression formula grammar: ``dependent ~ regressor (+ regressor)*``.

The text is tokenised and parsed by hand and never evaluated, so a formula cannot run code.
Names are series names from the manifest (letters, digits and underscores, not starting with a
digit). A constant is always included and is not written.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

_TOKEN = re.compile(r"\s*(?:(?P<name>[A-Za-z_][A-Za-z0-9_]*)|(?P<op>[~+]))")


@dataclass(frozen=True, slots=True)
class Formula:
    """A parsed formula: the dependent series and the regressors, in the order written."""

    text: str
    dependent: str
    regressors: tuple[str, ...]

    @property
    def variables(self) -> tuple[str, ...]:
        """Every series the formula uses, dependent first."""
        return (self.dependent, *self.regressors)


class FormulaGrammarError(ValueError):
    """A formula that does not follow the grammar; ``position`` is the 0-based offending column."""

    def __init__(self, message: str, text: str, position: int) -> None:
        super().__init__(message)
        self.message = message
        self.text = text
        self.position = position

    def caret(self) -> str:
        """The formula with a caret under the offending position, for error messages."""
        return f"{self.text}\n{' ' * self.position}^"


def _tokens(text: str) -> list[tuple[str, str, int]]:
    tokens: list[tuple[str, str, int]] = []
    position = 0
    while position < len(text):
        if text[position:].strip() == "":
            break
        match = _TOKEN.match(text, position)
        if match is None:
            start = position + (len(text[position:]) - len(text[position:].lstrip()))
            raise FormulaGrammarError(
                f"unexpected character {text[start]!r}; a formula holds series names, '~' and '+' only",
                text,
                start,
            )
        kind = "name" if match.group("name") is not None else "op"
        tokens.append((kind, match.group(kind), match.start(kind)))
        position = match.end()
    return tokens


def parse_formula(text: str) -> Formula:
    """Parse ``y ~ x1 + x2``; raise :class:`FormulaGrammarError` with the position on any error."""
    tokens = _tokens(text)
    if not tokens:
        raise FormulaGrammarError("the formula is empty; write it as 'y ~ x1 + x2'", text, 0)
    kind, value, position = tokens[0]
    if kind != "name":
        raise FormulaGrammarError("a formula starts with the dependent series' name", text, position)
    dependent = value
    if len(tokens) < 2 or tokens[1][1] != "~":
        where = tokens[1][2] if len(tokens) > 1 else len(text)
        raise FormulaGrammarError("expected '~' after the dependent series", text, where)
    regressors: list[str] = []
    expect_name = True
    last_position = tokens[1][2]
    for kind, value, position in tokens[2:]:
        last_position = position
        if expect_name:
            if kind != "name":
                raise FormulaGrammarError("expected a series name", text, position)
            if value == dependent:
                raise FormulaGrammarError(f"'{value}' is the dependent series and cannot be a regressor", text,
                                          position)
            if value in regressors:
                raise FormulaGrammarError(f"'{value}' appears twice among the regressors", text, position)
            regressors.append(value)
        elif value != "+":
            raise FormulaGrammarError("expected '+' between regressors", text, position)
        expect_name = not expect_name
    if expect_name:
        where = len(text.rstrip()) if regressors else last_position + 1
        raise FormulaGrammarError("expected a series name after this point", text, where)
    return Formula(text=text, dependent=dependent, regressors=tuple(regressors))
