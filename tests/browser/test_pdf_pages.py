"""The PDF dossier rendered page by page to images (pypdfium2): no page is blank, the cover is not.

A page counts as blank when less than :data:`INK` of its body (the page without the bands
where the running header and the page number sit) is darker than near-white.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pytest

from .conftest import Dossier, keep_artifact, unavailable

#: Rendering scale: 0.75 of 72 dots per inch gives an A4 page of about 447 x 632 pixels.
SCALE = 0.75
#: The least share of a page's body that must be ink (the sparsest page of the fixture has about 2.5 %).
INK = 0.005
#: Grey levels below this count as ink (255 is white).
INK_LEVEL = 240
#: The share of the page's height at the top and at the bottom left out of the body.
MARGIN_BAND = 0.1


def ink_share(image: Any) -> float:
    """The share of ``image`` (greyscale) darker than :data:`INK_LEVEL`."""
    histogram = image.histogram()
    return sum(histogram[:INK_LEVEL]) / (image.size[0] * image.size[1])


def body(image: Any) -> Any:
    """``image`` without the bands at the top and bottom that hold the running header and the page number."""
    width, height = image.size
    return image.crop((0, int(height * MARGIN_BAND), width, int(height * (1 - MARGIN_BAND))))


@pytest.fixture(scope="module")
def pages(dossier: Dossier) -> list[Any]:
    """Every page of dossier.pdf as a greyscale image."""
    try:
        import pypdfium2
    except ImportError:
        unavailable("pypdfium2 is not installed (pip install -e '.[test]')")
    document = pypdfium2.PdfDocument(dossier.pdf)
    try:
        return [document[index].render(scale=SCALE).to_pil().convert("L") for index in range(len(document))]
    finally:
        document.close()


def test_the_blank_check_can_fail() -> None:
    from PIL import Image, ImageDraw

    blank = Image.new("L", (447, 632), 255)
    header_only = blank.copy()
    ImageDraw.Draw(header_only).text((30, 20), "Running header - page 9 of 9", fill=0)
    assert ink_share(body(blank)) == 0
    assert ink_share(body(header_only)) < INK


def test_every_page_has_ink(pages: list[Any]) -> None:
    assert len(pages) > 3
    shares = {number: ink_share(body(image)) for number, image in enumerate(pages, start=1)}
    assert [number for number, share in shares.items() if share < INK] == []


def test_the_cover_is_not_a_blank_page(pages: list[Any], tmp_path: Path) -> None:
    from PIL import Image, ImageChops

    cover = pages[0]
    blank = Image.new("L", cover.size, 255)
    difference = ImageChops.difference(cover, blank)
    assert difference.getbbox() is not None
    assert ink_share(cover) > 0.02
    assert ImageChops.difference(cover, pages[1]).getbbox() is not None  # the cover is its own page
    path = tmp_path / "dossier-pdf-cover.png"
    cover.save(path)
    keep_artifact(path)


def test_contact_sheet_of_every_page(pages: list[Any], tmp_path: Path) -> None:
    from PIL import Image

    columns, thumb_width = 8, 150
    thumb_height = round(pages[0].size[1] * thumb_width / pages[0].size[0])
    rows = -(-len(pages) // columns)
    sheet = Image.new("L", (columns * (thumb_width + 6) + 6, rows * (thumb_height + 6) + 6), 160)
    for index, image in enumerate(pages):
        thumb = image.resize((thumb_width, thumb_height))
        sheet.paste(thumb, (6 + (index % columns) * (thumb_width + 6), 6 + (index // columns) * (thumb_height + 6)))
    path = tmp_path / "dossier-pdf-pages.png"
    sheet.save(path)
    assert keep_artifact(path).stat().st_size > 0
