"""The methods appendix: every citation in a test description has its full reference."""

from __future__ import annotations

import re

from reportgen.stats.methods import REFERENCES, TESTS, methods_text


def _cited(text: str) -> set[tuple[str, str]]:
    """(first author surname, year) pairs cited as 'Author (1999)' or 'Author and Other (1999, 2010)'."""
    pairs: set[tuple[str, str]] = set()
    for match in re.finditer(r"([A-Z][A-Za-z-]+)(?:,? (?:and )?[A-Z][A-Za-z-]+)* \(((?:\d{4}(?:, )?)+)", text):
        for year in re.findall(r"\d{4}", match.group(2)):
            pairs.add((match.group(1), year))
    return pairs


def test_every_cited_work_is_in_the_reference_list() -> None:
    listed = {(entry.split(",")[0], re.search(r"\((\d{4})\)", entry).group(1)) for entry in REFERENCES}  # type: ignore[union-attr]
    for test in TESTS:
        for author, year in _cited(test["reference"]):
            assert (author, year) in listed, (test["name"], author, year)


def test_methods_text_carries_every_rule() -> None:
    methods = methods_text()
    assert {"order_rule", "deterministic_rule", "verdict_rule", "tests", "references"} <= set(methods)
    assert methods["references"] == sorted(methods["references"])
    assert all(sentence.strip() for key in ("order_rule", "deterministic_rule", "verdict_rule")
               for sentence in methods[key])
