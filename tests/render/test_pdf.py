"""The PDF dossier: reproducible bytes, local resources only, attachments."""

from __future__ import annotations

import base64
import re
import zlib
from pathlib import Path
from typing import Any

import pytest

from reportgen.errors import ResourceRefusedError, ResourceUnreadableError
from reportgen.render.pdf import (
    PDF_DETAIL_LIMIT,
    BuiltPdf,
    LocalFileFetcher,
    build_pdf,
    packaged_templates_dir,
    paper_html,
    pdf_timestamp,
    render_pdf,
    series_sections,
)

from .conftest import CREATED

TINY = "<!DOCTYPE html><html><head><title>Tiny</title></head><body><p>Hello</p>{extra}</body></html>"


def inflated(data: bytes) -> bytes:
    """Every stream of a PDF, decompressed where it is Flate-compressed, joined."""
    parts = []
    for match in re.finditer(rb"stream\r?\n(.*?)\r?\nendstream", data, re.DOTALL):
        try:
            parts.append(zlib.decompress(match.group(1)))
        except zlib.error:
            parts.append(match.group(1))
    return b"\n".join(parts)


@pytest.fixture(scope="module")
def built(html_text: str, workspace: Path) -> BuiltPdf:
    return build_pdf(html_text, base_dir=workspace, created=CREATED,
                     attachments=[workspace / "manifest.yaml", workspace / "results.json"])


@pytest.fixture(scope="module")
def small_html(document_master: dict[str, Any]) -> str:
    """One series and one regression with every new table (battery, grid, fan chart, Johansen, bounds).

    Laying out the whole fixture takes several seconds; the reproducibility check lays this out twice.
    """
    from reportgen.render.html import render_html
    from reportgen.render.plots import render_plots

    document = dict(document_master, series={"boxes": document_master["series"]["boxes"]},
                    regressions={"boxes_on_fuel": document_master["regressions"]["boxes_on_fuel"]})
    return render_html(document, render_plots(document))


@pytest.fixture(scope="module")
def written(small_html: str, workspace: Path) -> bytes:
    out = workspace / "dossier.pdf"
    render_pdf(small_html, out, base_dir=workspace, created=CREATED,
               attachments=[workspace / "manifest.yaml", workspace / "results.json"])
    return out.read_bytes()


def test_pdf_is_a_pdf_with_many_pages(built: BuiltPdf, document_master: dict[str, Any]) -> None:
    assert built.data.startswith(b"%PDF-")
    assert built.data.rstrip().endswith(b"%%EOF")
    # Cover, contents, summary, then at least a page per series and per regression; but a
    # compact layout: no more than about four pages for any of them.
    items = len(document_master["series"]) + len(document_master["regressions"])
    assert items + 3 < built.pages <= 4 * items
    assert len(re.findall(rb"/Type\s*/Page\b(?!s)", inflated(built.data))) == built.pages


def test_rendering_twice_gives_identical_bytes(small_html: str, workspace: Path, written: bytes) -> None:
    again = build_pdf(small_html, base_dir=workspace, created=CREATED,
                      attachments=[workspace / "manifest.yaml", workspace / "results.json"])
    assert again.data == written
    assert again.pages >= 4


def test_metadata_title_and_dates(built: BuiltPdf) -> None:
    assert built.title is not None
    assert built.title.startswith("Harbour throughput and fuel costs")
    body = inflated(built.data) + built.data
    assert b"D:20240506093000Z" in body  # creation and modification dates are `created`


def test_attachments_are_embedded(built: BuiltPdf) -> None:
    body = inflated(built.data)
    assert b"manifest.yaml" in body
    assert b"results.json" in body
    assert b"reportgen: 1" in body


def test_no_layout_warnings(built: BuiltPdf) -> None:
    # WeasyPrint's advice about its font subsetter depends on the machine, not on our HTML.
    assert [message for message in built.warnings if "HarfBuzz" not in message] == []


def test_created_changes_the_bytes_only_through_the_dates(workspace: Path) -> None:
    html = TINY.format(extra="")
    first = build_pdf(html, base_dir=workspace, created="2024-05-06T09:30:00Z").data
    again = build_pdf(html, base_dir=workspace, created="2024-05-06T11:30:00+02:00").data
    later = build_pdf(html, base_dir=workspace, created="2025-01-01T00:00:00Z").data
    assert first == again  # the same instant
    assert first != later


def test_pdf_timestamp() -> None:
    assert pdf_timestamp("2024-05-06T09:30:00.75Z").isoformat() == "2024-05-06T09:30:00+00:00"
    assert pdf_timestamp("2024-05-06").isoformat() == "2024-05-06T00:00:00+00:00"
    with pytest.raises(ValueError, match="ISO 8601"):
        pdf_timestamp("yesterday")


def test_missing_attachment_is_an_error(workspace: Path) -> None:
    with pytest.raises(FileNotFoundError, match="cannot attach"):
        build_pdf(TINY.format(extra=""), base_dir=workspace, created=CREATED, attachments=[workspace / "nope"])


# -- the URL fetcher ---------------------------------------------------------------------------

@pytest.mark.parametrize("url", ["http://example.com/logo.png", "https://example.com/style.css",
                                 "ftp://example.com/data.csv", "javascript:alert(1)"])
def test_fetcher_refuses_the_network(workspace: Path, url: str) -> None:
    with pytest.raises(ResourceRefusedError, match="only local files"):
        LocalFileFetcher([workspace]).fetch(url)


def test_fetcher_refuses_files_outside_its_roots(workspace: Path, tmp_path: Path) -> None:
    outside = tmp_path / "secret.txt"
    outside.write_text("secret", encoding="utf-8")
    fetcher = LocalFileFetcher([workspace])
    with pytest.raises(ResourceRefusedError, match="outside"):
        fetcher.fetch(outside.as_uri())
    with pytest.raises(ResourceRefusedError, match="outside"):
        fetcher.fetch((workspace / ".." / outside.parent.name / "secret.txt").as_uri())


def test_fetcher_serves_local_files_and_data_urls(workspace: Path) -> None:
    fetcher = LocalFileFetcher([workspace, packaged_templates_dir()])
    response = fetcher.fetch((workspace / "manifest.yaml").as_uri())
    assert response.read().startswith(b"reportgen: 1")
    assert fetcher.fetch((packaged_templates_dir() / "style.css").as_uri()).content_type == "text/css"
    assert fetcher.fetch("data:text/plain;base64,aGk=").read() == b"hi"
    with pytest.raises(ResourceUnreadableError, match="does not exist"):
        fetcher.fetch((workspace / "missing.png").as_uri())


def test_network_resource_stops_the_rendering(workspace: Path) -> None:
    html = TINY.format(extra='<img src="http://example.com/logo.png" alt="logo">')
    with pytest.raises(ResourceRefusedError, match="only local files"):
        build_pdf(html, base_dir=workspace, created=CREATED)


def test_local_image_next_to_the_manifest_is_used(workspace: Path) -> None:
    (workspace / "logo.svg").write_text(
        '<svg xmlns="http://www.w3.org/2000/svg" width="10" height="10"><rect width="10" height="10"/></svg>',
        encoding="utf-8")
    built = build_pdf(TINY.format(extra='<img src="logo.svg" alt="logo">'), base_dir=workspace, created=CREATED)
    assert built.pages == 1
    assert [message for message in built.warnings if "HarfBuzz" not in message] == []


# -- the page WeasyPrint lays out ----------------------------------------------------------------

def test_charts_are_laid_out_as_svg_images(small_html: str) -> None:
    paper = paper_html(small_html)
    assert '<svg class="chart"' in small_html
    assert '<svg class="chart"' not in paper
    images = re.findall(r'<img class="chart" alt="([^"]*)" src="data:image/svg\+xml;base64,([^"]+)">', paper)
    assert len(images) == small_html.count('<svg class="chart"')
    alt, data = images[0]
    assert alt.startswith("Chart of series boxes")
    assert base64.b64decode(data).decode("utf-8").startswith('<svg class="chart" role="img"')


def test_folded_parts_are_laid_out_or_attached(small_html: str, workspace: Path) -> None:
    assert series_sections(small_html) == 1 <= PDF_DETAIL_LIMIT
    full = build_pdf(small_html, base_dir=workspace, created=CREATED)
    short = build_pdf(small_html, base_dir=workspace, created=CREATED, details=False)
    assert full.details
    assert not short.details
    assert short.pages < full.pages
    assert b"dossier.html" in inflated(short.data)
    assert b"dossier.html" not in inflated(full.data)
    paper = paper_html(small_html, details=False)
    assert '<details class="more series-more">' not in paper
    assert "attached to this PDF" in paper
    assert paper.count('class="more-elsewhere"') == 1


def test_svg_text_handler_is_restored(workspace: Path) -> None:
    from weasyprint import svg as weasy_svg

    before = dict(weasy_svg.TAGS)
    text = weasy_svg.text
    svg = ('<svg xmlns="http://www.w3.org/2000/svg" width="200" height="40"><text x="5" y="20">Whole</text>'
           '<text x="5 15 25" y="35">per glyph</text><text x="5" y="10" dx="1 2">shifted</text></svg>')
    built = build_pdf(TINY.format(extra=svg), base_dir=workspace, created=CREATED)
    assert [message for message in built.warnings if "HarfBuzz" not in message] == []
    assert before == weasy_svg.TAGS
    assert weasy_svg.text is text
