"""The PDF laid out in parts and joined: the same pages, numbers, links and outline as in one piece."""

from __future__ import annotations

import re
from pathlib import Path

import pypdf
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from reportgen.render.paged import INDEX_CLASS, index_with_pages, split_parts
from reportgen.render.pdf import BuiltPdf, build_pdf, paper_html

from .conftest import CREATED


def _build(html: str, workspace: Path, **options: bool) -> BuiltPdf:
    return build_pdf(html, base_dir=workspace, created=CREATED, details=False,
                     attachments=[workspace / "manifest.yaml", workspace / "results.json"], **options)


@pytest.fixture(scope="module")
def whole(html_text: str, workspace: Path) -> BuiltPdf:
    return _build(html_text, workspace, parts=False)


@pytest.fixture(scope="module")
def joined(html_text: str, workspace: Path) -> BuiltPdf:
    return _build(html_text, workspace, parts=True, parallel=True)


def _reader(built: BuiltPdf, folder: Path, name: str) -> pypdf.PdfReader:
    path = folder / name
    path.write_bytes(built.data)
    return pypdf.PdfReader(path)


def _outline(items: list, depth: int = 0) -> list[tuple[int, str]]:
    flat: list[tuple[int, str]] = []
    for item in items:
        if isinstance(item, list):
            flat.extend(_outline(item, depth + 1))
        else:
            flat.append((depth, item.title))
    return flat


def test_the_page_is_cut_at_section_boundaries(html_text: str) -> None:
    paper = paper_html(html_text, details=False)
    parts = split_parts(paper)
    assert parts is not None
    kinds = [part.kind for part in parts]
    assert kinds[:2] == ["front", "index"]
    assert set(kinds[2:]) == {"body"}
    assert len(kinds) >= 4
    # every section of the page is in exactly one part, in order, and keeps its id there
    ids = re.findall(r'<article class="item [^"]*" id="([^"]+)"', paper)
    found = [name for part in parts for name in re.findall(r'<article class="item [^"]*" id="([^"]+)"', part.html)]
    assert found == ids
    assert sum(part.html.count(f'<nav class="{INDEX_CLASS}"') for part in parts) == 1
    # parts after the first carry the cover (for the running title), without its ids, on a page that is dropped
    for part in parts[1:]:
        assert part.skip == 1
        assert 'class="cover carried"' in part.html
        assert 'id="cover"' not in part.html
    assert parts[0].skip == 0
    assert 'id="cover"' in parts[0].html


def test_pages_numbers_links_and_outline_match_the_whole(whole: BuiltPdf, joined: BuiltPdf,
                                                         tmp_path: Path) -> None:
    one, parts = _reader(whole, tmp_path, "whole.pdf"), _reader(joined, tmp_path, "parts.pdf")
    assert whole.parts == 1
    assert joined.parts >= 4
    assert joined.pages == whole.pages == len(parts.pages)
    total = len(parts.pages)
    index_pages = {number for number, page in enumerate(parts.pages) if "Contents" in page.extract_text()[:40]}
    assert index_pages
    for number, (first, second) in enumerate(zip(one.pages, parts.pages, strict=True)):
        text = second.extract_text()
        assert f"page {number + 1} of {total}" in text  # the footer numbers run through the parts
        if number not in index_pages:
            assert text == first.extract_text()
    # the index gives the same page numbers (extracted in another order: they sit in a column)
    for number in index_pages:
        assert sorted(re.findall(r"\d+", one.pages[number].extract_text())) == sorted(
            re.findall(r"\d+", parts.pages[number].extract_text()))
    assert _outline(parts.outline) == _outline(one.outline)
    destinations = parts.named_destinations
    assert set(destinations) == set(one.named_destinations)
    links = 0
    for page in parts.pages:
        for annotation in page.get("/Annots") or []:
            annotation = annotation.get_object()
            if annotation.get("/Subtype") == "/Link" and "/Dest" in annotation:
                links += 1
                assert str(annotation["/Dest"]) in destinations
    assert links > 20
    # each destination is on the page of its section in both files
    for name in ("summary", "contents"):
        if name in destinations:
            assert parts.get_destination_page_number(destinations[name]) == one.get_destination_page_number(
                one.named_destinations[name])
    assert set(parts.attachments) == {"manifest.yaml", "results.json", "dossier.html"}
    assert parts.metadata.title == one.metadata.title
    assert parts.metadata.creation_date == one.metadata.creation_date


def test_parts_in_worker_processes_or_in_turn_give_the_same_bytes(html_text: str, workspace: Path,
                                                                  joined: BuiltPdf) -> None:
    in_turn = _build(html_text, workspace, parts=True, parallel=False)
    assert in_turn.parts == joined.parts >= 4
    assert in_turn.data == joined.data
    assert joined.data.startswith(b"%PDF-")


def test_a_page_without_the_expected_outline_is_laid_out_in_one_piece(workspace: Path) -> None:
    page = ("<!DOCTYPE html><html><head><title>Odd</title></head><body><div><p>No cover, no index.</p></div>"
            "</body></html>")
    assert split_parts(page) is None
    built = build_pdf(page, base_dir=workspace, created=CREATED, parts=True)
    assert built.pages == 1
    assert built.parts == 1
    assert built.data.startswith(b"%PDF-")


def test_index_entries_get_their_page_or_a_hidden_stand_in() -> None:
    html = ('<nav class="contents"><a href="#a">A</a><a href="#b">B</a></nav><a href="#a">outside</a>')
    numbered = index_with_pages(html, {"a": 7}, 3)
    assert '<a href="#a">A<span class="page-ref">7</span></a>' in numbered
    assert '<a href="#b">B<span class="page-ref" style="visibility: hidden">000</span></a>' in numbered
    assert numbered.endswith('<a href="#a">outside</a>')


class _Stream:
    """A drawing stream that records what it is told."""

    def __init__(self) -> None:
        self.operations: list[tuple[object, ...]] = []

    def move_to(self, x: float, y: float) -> None:
        self.operations.append(("move", x, y))

    def line_to(self, x: float, y: float) -> None:
        self.operations.append(("line", x, y))

    def close(self) -> None:
        self.operations.append(("close",))


def _drawn(function: object, d: str) -> tuple[list[tuple[object, ...]], list[object]]:
    from collections import deque

    import weasyprint.svg

    class Node(dict):
        vertices: deque

    class Drawing:
        inner_width = inner_height = 100.0
        point = weasyprint.svg.SVG.point

    node, drawing = Node(d=d), Drawing()
    node.vertices = deque()
    drawing.stream = _Stream()  # type: ignore[attr-defined]
    function(drawing, node, 10.0)  # type: ignore[operator]
    return drawing.stream.operations, list(node.vertices)  # type: ignore[attr-defined]


_NUMBER = st.builds(lambda whole, fraction, sign: f"{sign}{whole}{fraction}", st.integers(0, 10**6),
                    st.sampled_from(["", ".5", ".25", ".001", ".999999"]), st.sampled_from(["", "-"]))
_PAIRS = st.lists(st.tuples(_NUMBER, _NUMBER), min_size=1, max_size=4).map(
    lambda pairs: " ".join(f"{x} {y}" for x, y in pairs))
_STRAIGHT = st.lists(st.tuples(st.sampled_from(["M", "L", ""]), _PAIRS), min_size=1, max_size=8).map(
    lambda commands: " ".join(["M", commands[0][1]] + [part for letter, pairs in commands[1:]
                                                        for part in ((letter, pairs) if letter else (pairs,))]))


@settings(max_examples=300, derandomize=True, database=None, deadline=None)
@given(_STRAIGHT | st.sampled_from(["M 1 2 Z", "M 1,2 L 3,4", "M 1e5 2", "L 1 2", "M 1 2 L", "", "m 1 2 l 3 4",
                                     "M 1 2 H 5 V 6", "M 1 2 C 3 4 5 6 7 8"]))
def test_charts_straight_paths_are_drawn_as_weasyprint_draws_them(d: str) -> None:
    """The one-pass reader of the charts' M/L paths against WeasyPrint's own path function (the reference):
    the same moves and lines and the same marker vertices, for any such path; anything else goes to WeasyPrint."""
    import importlib

    import weasyprint.svg

    from reportgen.render.pdf import _straight_path, _svg_paths_read_at_once

    original = importlib.import_module("weasyprint.svg.path").path
    with _svg_paths_read_at_once():
        fast = weasyprint.svg.TAGS["path"]
    assert fast is not original  # the reader was installed (and is removed again on leaving)
    assert weasyprint.svg.TAGS["path"] is original
    try:
        expected = _drawn(original, d)
    except Exception:  # a path WeasyPrint cannot draw is never one the reader takes
        assert _straight_path(d) is None
        return
    assert _drawn(fast, d) == expected


def test_the_fast_path_reader_leaves_the_pdf_bytes_as_they_are(html_text: str, workspace: Path, whole: BuiltPdf,
                                                               monkeypatch: pytest.MonkeyPatch) -> None:
    import contextlib

    import reportgen.render.pdf

    monkeypatch.setattr(reportgen.render.pdf, "_svg_paths_read_at_once", contextlib.nullcontext)
    assert _build(html_text, workspace, parts=False).data == whole.data
