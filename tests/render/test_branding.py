"""Branding, the sign-off block and the appendix layout, through the runner and the command line.

The scenario is invented: a consultancy called Quillfeather Analytics reviews a tiny simulated
project (two random walks and a noise, seeded; see tests/conftest.py). The logo is a 4 by 2 PNG
written here.
"""

from __future__ import annotations

import base64
import hashlib
import json
import struct
import zlib
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest
from bs4 import BeautifulSoup

from reportgen import cli
from reportgen.render.html import render_html
from reportgen.runner import run

FIRM = "Quillfeather Analytics"
DISCLAIMER = "Prepared for the client's internal model review; not for distribution."
BRANDED = """\
  title: Small check
  author: Ines Vardy
  reference: QF-0042
  branding:
    templates: brand
    firm: Quillfeather Analytics
    logo: brand/logo.png
    disclaimer: "Prepared for the client's internal model review; not for distribution."
"""
COLOURS = (":root { --ink: #111111; --muted: #555555; --rule: #cccccc; --faint: #f5f5f5; --accent: #6a1b4d; "
           "--flag: #8f3f00; --flag-bg: #fff3e3; --flag-edge: #c8661a; --ok: #1d5640; --ok-bg: #e7f2ec; "
           "--brand: #6a1b4d; --page-text: #555555; }\n")
COVER = ('<header class="cover" id="{{ ids.cover }}">\n{% include "partials/page_header.html.j2" %}\n'
         '{% include "partials/page_footer.html.j2" %}\n<p class="quill-cover">Quillfeather review edition</p>\n'
         '{% include "partials/logo.html.j2" %}\n<h1 class="project-title">{{ project.title }}</h1>\n'
         '{% include "partials/sign_off.html.j2" %}\n</header>\n')


def png(width: int = 4, height: int = 2, colour: tuple[int, int, int] = (106, 27, 77)) -> bytes:
    """A tiny RGB PNG, written by hand (signature, IHDR, one IDAT, IEND)."""
    rows = b"".join(b"\x00" + bytes(colour) * width for _ in range(height))

    def chunk(kind: bytes, data: bytes) -> bytes:
        return struct.pack(">I", len(data)) + kind + data + struct.pack(">I", zlib.crc32(kind + data) & 0xFFFFFFFF)

    header = struct.pack(">IIBBBBB", width, height, 8, 2, 0, 0, 0)
    return b"\x89PNG\r\n\x1a\n" + chunk(b"IHDR", header) + chunk(b"IDAT", zlib.compress(rows)) + chunk(b"IEND", b"")


@pytest.fixture(autouse=True)
def fixed_time(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1780000000")


@pytest.fixture
def branded_project(small_project: Callable[..., Path], small_manifest: str) -> Path:
    """The small project with a brand folder: a custom cover, colours and a logo."""
    manifest = small_project(small_manifest.replace("  title: Small check\n", BRANDED))
    brand = manifest.parent / "brand"
    (brand / "partials").mkdir(parents=True)
    (brand / "partials" / "cover.html.j2").write_text(COVER, encoding="utf-8")
    (brand / "colours.css").write_text(COLOURS, encoding="utf-8")
    (brand / "logo.png").write_bytes(png())
    return manifest


def soup_of(folder: Path) -> BeautifulSoup:
    return BeautifulSoup((folder / "dossier.html").read_text(encoding="utf-8"), "html.parser")


def results_of(folder: Path) -> dict[str, Any]:
    return json.loads((folder / "results.json").read_text(encoding="utf-8"))


# ---------------------------------------------------------------- branding


def test_a_brand_folder_replaces_the_cover_colours_and_logo(branded_project: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(branded_project, out, ("html",), command=["reportgen", "run"])
    soup = soup_of(out)
    assert soup.select_one("p.quill-cover").get_text() == "Quillfeather review edition"
    assert "--brand: #6a1b4d;" in soup.style.get_text()
    assert "--brand: #1b4965;" not in soup.style.get_text()  # the packaged colours.css is replaced
    logo = png()
    expected = "data:image/png;base64," + base64.b64encode(logo).decode("ascii")
    assert [image["src"] for image in soup.select("img.logo")] == [expected, expected]  # page header and cover
    assert soup.select_one(".page-header .firm-name").get_text() == FIRM
    assert soup.select_one(".page-footer").get_text(" ", strip=True).startswith(f"{FIRM} · Run ")


def test_brand_files_are_inputs_with_their_hashes(branded_project: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(branded_project, out, ("html",), command=["reportgen", "run"])
    document = results_of(out)
    brand = {entry["name"]: entry for entry in document["inputs"] if entry["role"] == "brand"}
    assert list(brand) == ["brand:logo", "brand:templates/colours.css", "brand:templates/partials/cover.html.j2"]
    folder = branded_project.parent
    assert brand["brand:logo"]["sha256"] == hashlib.sha256(png()).hexdigest()
    assert brand["brand:logo"]["relative_path"] == "brand/logo.png"
    assert brand["brand:templates/colours.css"]["sha256"] == hashlib.sha256(COLOURS.encode()).hexdigest()
    assert brand["brand:templates/partials/cover.html.j2"]["path"] == str(folder / "brand/partials/cover.html.j2")
    provenance = soup_of(out).find(id="provenance").get_text(" ", strip=True)
    assert hashlib.sha256(png()).hexdigest() in provenance
    assert document["project"]["branding"] == {"templates": "brand", "firm": FIRM, "logo": "brand/logo.png",
                                               "disclaimer": DISCLAIMER}
    assert cli.main(["verify", str(out), "--recompute"]) == 0  # the recomputation hashes the same brand files


def test_version_control_folders_of_the_brand_folder_are_not_inputs(branded_project: Path, tmp_path: Path) -> None:
    history = branded_project.parent / "brand" / ".git"
    history.mkdir()
    (history / "HEAD").write_text("ref: refs/heads/main\n", encoding="utf-8")
    (branded_project.parent / "brand" / ".notes.txt").write_text("kept\n", encoding="utf-8")
    outcome = run(branded_project, tmp_path / "out", (), command=["reportgen", "run"])
    names = [entry["name"] for entry in outcome.document["inputs"] if entry["role"] == "brand"]
    assert names == ["brand:logo", "brand:templates/.notes.txt", "brand:templates/colours.css",
                     "brand:templates/partials/cover.html.j2"]


def test_a_changed_brand_file_changes_the_run_id(branded_project: Path, tmp_path: Path) -> None:
    first = run(branded_project, tmp_path / "one", (), command=["reportgen", "run"])
    (branded_project.parent / "brand" / "colours.css").write_text(COLOURS.replace("6a1b4d", "22577a"))
    second = run(branded_project, tmp_path / "two", (), command=["reportgen", "run"])
    assert first.document["run_id"] != second.document["run_id"]
    assert cli.main(["verify", str(tmp_path / "one")]) == 1  # the brand file no longer matches


def test_command_line_templates_come_before_the_brand_folder(branded_project: Path, tmp_path: Path) -> None:
    own = tmp_path / "own" / "partials"
    own.mkdir(parents=True)
    (own / "cover.html.j2").write_text('<header id="{{ ids.cover }}"><p class="own-cover">Desk copy</p></header>\n')
    out = tmp_path / "out"
    run(branded_project, out, ("html",), template_dirs=[tmp_path / "own"], command=["reportgen", "run"])
    soup = soup_of(out)
    assert soup.select_one("p.own-cover") is not None
    assert soup.select_one("p.quill-cover") is None
    assert "--brand: #6a1b4d;" in soup.style.get_text()  # colours.css still comes from the brand folder
    origins = [row.get_text(" ", strip=True) for row in soup.select("table.rendering-folders tbody")]
    assert "--templates" in origins[0]
    assert "project.branding.templates" in origins[1]


def test_the_firm_disclaimer_is_added_to_the_standard_cautions(branded_project: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(branded_project, out, ("html",), command=["reportgen", "run"])
    cautions = soup_of(out).find(id="cautions")
    items = [item.get_text(" ", strip=True) for item in cautions.select("ol.caution-list li")]
    assert items[0] == "These diagnostics inform professional judgement; they do not replace it."
    assert items[1].startswith("Every result depends on the sample, the transforms and the specification")
    assert cautions.select_one(".firm-disclaimer").get_text(" ", strip=True) == (
        f"{FIRM}: disclaimer. {DISCLAIMER}")


def test_a_missing_brand_folder_is_named_with_its_manifest_line(small_project: Callable[..., Path],
                                                                small_manifest: str, tmp_path: Path,
                                                                capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace("  title: Small check\n",
                                                    "  title: Small check\n  branding:\n    templates: brand\n"))
    status = cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--quiet"])
    assert status == 2
    assert capsys.readouterr().err == (
        f"{manifest}:5:5: error[template-folder-missing]: project.branding.templates: template folder "
        f"{manifest.parent / 'brand'} does not exist or is not a folder\n"
        "  hint: name a folder relative to the manifest's folder, e.g. 'templates: brand', or remove the key\n")
    assert not (tmp_path / "out").exists()


def test_a_brand_folder_holding_the_manifest_is_refused(small_project: Callable[..., Path], small_manifest: str,
                                                        tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace("  title: Small check\n",
                                                    "  title: Small check\n  branding:\n    templates: .\n"))
    assert cli.main(["check", str(manifest)]) == 2
    assert capsys.readouterr().err == (
        f"{manifest}:5:5: error[invalid-value]: project.branding.templates: the brand folder {manifest.parent} "
        "holds the manifest; every file in it is hashed as an input, so it would take in the data and the outputs "
        "too\n  hint: keep the brand templates in a folder of their own, e.g. 'templates: brand'\n")


def test_check_reads_the_logo(branded_project: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["check", str(branded_project)]) == 0
    capsys.readouterr()
    (branded_project.parent / "brand" / "logo.png").write_bytes(b"GIF89a")
    assert cli.main(["check", str(branded_project)]) == 2
    assert capsys.readouterr().err == (
        f"{branded_project}:9:5: error[logo-unusable]: project.branding.logo: the logo "
        f"{branded_project.parent / 'brand' / 'logo.png'} cannot be used: it is not a PNG, a JPEG or a plain SVG "
        "drawing (no scripts, event handlers, style elements or links to other files)\n"
        "  hint: save the logo as PNG, JPEG or plain SVG\n")


def test_an_svg_logo_with_a_script_is_refused() -> None:
    from reportgen.branding import logo_media_type

    plain = '<?xml version="1.0"?>\n<svg xmlns="http://www.w3.org/2000/svg"><rect width="4" height="2"/></svg>'
    assert logo_media_type(plain.encode()) == "image/svg+xml"
    assert logo_media_type(plain.replace("<rect", "<script>alert(1)</script><rect").encode()) is None
    assert logo_media_type(plain.replace("<rect", '<image href="file:///etc/passwd"/><rect').encode()) is None


def test_a_brand_template_error_points_into_the_brand_folder(branded_project: Path, tmp_path: Path,
                                                             capsys: pytest.CaptureFixture[str]) -> None:
    cover = branded_project.parent / "brand" / "partials" / "cover.html.j2"
    cover.write_text("<header>\n{{ no_such_name }}\n</header>\n", encoding="utf-8")
    status = cli.main(["run", str(branded_project), "--out", str(tmp_path / "out"), "--format", "html", "--quiet"])
    assert status == 2
    assert capsys.readouterr().err.startswith(f"{cover}:2: error[template-unsafe]")


def test_the_manifest_schema_describes_branding_and_sign_off(capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["schema"]) == 0
    schema = json.loads(capsys.readouterr().out)
    definitions = schema["$defs"]
    assert set(definitions["BrandingSpec"]["properties"]) == {"templates", "firm", "logo", "disclaimer"}
    assert set(definitions["SignOffSpec"]["properties"]) == {"prepared_by", "prepared_on", "reviewed_by",
                                                             "reviewed_on"}


# ---------------------------------------------------------------- sign-off


def cover_of(document: dict[str, Any]) -> BeautifulSoup:
    return BeautifulSoup(render_html(document, {}), "html.parser").find(id="cover")


def test_no_sign_off_block_without_sign_off_in_the_manifest(document: dict[str, Any]) -> None:
    assert cover_of(document).select_one("table.sign-off") is None


def test_sign_off_says_not_yet_reviewed_until_a_reviewer_signs(document: dict[str, Any]) -> None:
    document["project"]["sign_off"] = {"prepared_on": "2026-11-20"}
    table = cover_of(document).select_one("table.sign-off")
    assert table.caption.get_text(" ", strip=True) == "Sign-off: not yet reviewed"
    rows = [[cell.get_text(" ", strip=True) for cell in row.find_all(["th", "td"])] for row in table.tbody("tr")]
    assert rows == [["Prepared by", document["project"]["author"], "2026-11-20", ""],
                    ["Reviewed by", "Not yet reviewed", "", ""]]
    assert len(table.select("td.signature")) == 2


def test_sign_off_names_the_reviewer_and_date(document: dict[str, Any]) -> None:
    document["project"]["sign_off"] = {"prepared_by": "Ines Vardy", "prepared_on": "2026-11-20",
                                       "reviewed_by": "Tomas Reyl", "reviewed_on": "2026-11-27"}
    table = cover_of(document).select_one("table.sign-off")
    assert table.caption.get_text(" ", strip=True) == "Sign-off: reviewed by Tomas Reyl on 2026-11-27"
    rows = [[cell.get_text(" ", strip=True) for cell in row.find_all(["th", "td"])] for row in table.tbody("tr")]
    assert rows == [["Prepared by", "Ines Vardy", "2026-11-20", ""], ["Reviewed by", "Tomas Reyl", "2026-11-27", ""]]


@pytest.mark.parametrize(("sign_off", "line", "message"), [
    ("    reviewed_by: Tomas Reyl\n    reviewed_on: 2026-11-31\n", 6,
     "error[invalid-value]: project.sign_off.reviewed_on: '2026-11-31' is not a date written as YYYY-MM-DD "
     "(year, month, day)\n  hint: write the date in ISO form, e.g. reviewed_on: 2026-11-27\n"),
    ("    reviewed_by: Tomas Reyl\n    reviewed_on: 27/11/2026\n", 6,
     "error[invalid-value]: project.sign_off.reviewed_on: '27/11/2026' is not a date written as YYYY-MM-DD "
     "(year, month, day)\n  hint: write the date in ISO form, e.g. reviewed_on: 2026-11-27\n"),
    ("    reviewed_by: Tomas Reyl\n", 5,
     "error[invalid-value]: project.sign_off.reviewed_by: a review is recorded with its reviewer and its date; "
     "'reviewed_by' is given without 'reviewed_on'\n"
     "  hint: add reviewed_on, or remove reviewed_by while the dossier is not yet reviewed\n"),
    ("    prepared_on: 2026-11-20\n    reviewed_by: Tomas Reyl\n    reviewed_on: 2026-11-02\n", 7,
     "error[invalid-value]: project.sign_off.reviewed_on: the review (2026-11-02) is dated before the preparation "
     "(2026-11-20)\n  hint: check both dates\n"),
])
def test_sign_off_dates_are_checked(sign_off: str, line: int, message: str, small_project: Callable[..., Path],
                                    small_manifest: str, tmp_path: Path,
                                    capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace("  title: Small check\n",
                                                    "  title: Small check\n  sign_off:\n" + sign_off))
    status = cli.main(["run", str(manifest), "--out", str(tmp_path / "out"), "--quiet"])
    captured = capsys.readouterr()
    assert status == 2
    assert captured.err == f"{manifest}:{line}:5: {message}"
    assert "Traceback" not in captured.err + captured.out
    assert not (tmp_path / "out").exists()


# ---------------------------------------------------------------- appendix layout


def test_the_appendix_has_every_series_and_regression_and_no_chart(small_project: Callable[..., Path],
                                                                  tmp_path: Path) -> None:
    manifest = small_project()
    out = tmp_path / "out"
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "html", "--quiet"]) == 0
    full = (out / "results.json").read_bytes()
    full_soup = soup_of(out)
    assert cli.main(["run", str(manifest), "--out", str(out), "--format", "html", "--quiet", "--appendix"]) == 0
    assert (out / "results.json").read_bytes() == full  # the layout never changes results.json
    soup = soup_of(out)
    assert soup.find("meta", attrs={"name": "reportgen-layout"})["content"] == "appendix"
    assert full_soup.find("meta", attrs={"name": "reportgen-layout"})["content"] == "full"
    assert soup.find("svg") is None
    assert soup.find("details") is None
    assert soup.find("figure") is None
    assert soup.select_one(".cover-layout-name").get_text().startswith("referee's appendix")
    document = results_of(out)
    blocks = {block["data-series"]: block for block in soup.select("table.appendix-series tbody.appendix-block")}
    assert list(blocks) == list(document["series"])
    for name, block in blocks.items():
        order = document["series"][name]["order"]
        assert block.select_one(".appendix-order").get_text(" ", strip=True).startswith(f"I({order})")
        levels = [int(row["data-level"]) for row in block.select("tr.appendix-row")]
        assert levels == ([order - 1, order] if order else [0])
    regressions = soup.select("table.appendix-regressions tbody.appendix-block")
    assert [block["data-regression"] for block in regressions] == list(document["regressions"])
    for block in regressions:
        regression = document["regressions"][block["data-regression"]]
        assert block.select_one(".verdict-cell")["data-verdict"] == regression["verdict"]
        terms = [coefficient["term"] for coefficient in regression["levels"]["coefficients"]]
        assert [code.get_text() for code in block.select("tr")[0].select("ul.coefficient-list code")] == terms
    assert soup.find(id="provenance") is not None
    assert soup.find(id="cautions") is not None
    assert soup.find(id="methods") is None
    assert soup.find(id="contents") is None


def test_two_runs_give_byte_identical_html(branded_project: Path, tmp_path: Path) -> None:
    out = tmp_path / "out"
    pages = []
    for layout in ("full", "full", "appendix", "appendix"):
        run(branded_project, out, ("html",), command=["reportgen", "run"], layout=layout)
        pages.append((out / "dossier.html").read_bytes())
    assert pages[0] == pages[1]
    assert pages[2] == pages[3]
    assert pages[0] != pages[2]


# ---------------------------------------------------------------- PDF (slow: two tiny dossiers)


def pdf_text(path: Path) -> list[str]:
    from pypdf import PdfReader

    return [page.extract_text() for page in PdfReader(path).pages]


def test_the_branded_pdf_has_the_brand_cover_header_and_logo(branded_project: Path, tmp_path: Path) -> None:
    manifest_text = branded_project.read_text(encoding="utf-8")
    branded_project.write_text(manifest_text.replace(
        "  branding:", "  sign_off:\n    reviewed_by: Tomas Reyl\n    reviewed_on: 2026-11-27\n  branding:"))
    out = tmp_path / "out"
    run(branded_project, out, ("pdf",), command=["reportgen", "run"])
    pages = pdf_text(out / "dossier.pdf")
    assert "Quillfeather review edition" in pages[0]
    assert "Sign-off: reviewed by Tomas Reyl on 2026-11-27" in pages[0]
    assert all(FIRM in page for page in pages)  # the running footer (and, after the cover, header)
    assert all("QF-0042" in page for page in pages[1:])  # the running header
    data = (out / "dossier.pdf").read_bytes()
    assert b"/Subtype /Image" in data


def test_the_appendix_pdf_lists_every_series(small_project: Callable[..., Path], tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(small_project(), out, ("pdf",), command=["reportgen", "run"], layout="appendix")
    text = "\n".join(pdf_text(out / "dossier.pdf"))
    assert "Series: orders of integration and decisive tests" in text
    assert "Regressions: verdicts and coefficients" in text
    for name in ("walk_a", "walk_b", "noise", "a_on_b", "noise_on_a"):
        assert name in text
    assert "referee's appendix" in text
    assert "Appendix A" not in text  # no methods appendix in this layout


def test_the_appendix_of_the_fixture_document_has_every_item(document: dict[str, Any]) -> None:
    soup = BeautifulSoup(render_html(document, {}, layout="appendix"), "html.parser")
    series = [block["data-series"] for block in soup.select("tbody.appendix-block[data-series]")]
    regressions = [block["data-regression"] for block in soup.select("tbody.appendix-block[data-regression]")]
    assert series == list(document["series"])
    assert regressions == list(document["regressions"])
    verdicts = [cell["data-verdict"] for cell in soup.select("table.appendix-regressions .verdict-cell")]
    assert verdicts == [body["verdict"] for body in document["regressions"].values()]
    undetermined = [name for name, body in document["series"].items() if body["order"] is None]
    assert undetermined == ["survey"]
    for name in undetermined:
        block = soup.select_one(f'tbody[data-series="{name}"]')
        assert "undetermined" in block.get_text(" ", strip=True)


def test_an_unknown_layout_is_a_bug(document: dict[str, Any]) -> None:
    with pytest.raises(ValueError, match="layout must be one of full, appendix, not 'compact'"):
        render_html(document, {}, layout="compact")


def test_a_pdf_laid_out_in_parts_keeps_the_running_header_and_footer(document_master: dict[str, Any],
                                                                     tmp_path: Path) -> None:
    from reportgen.render.pdf import build_pdf

    document = dict(document_master, series={"boxes": document_master["series"]["boxes"]},
                    regressions={"boxes_on_fuel": document_master["regressions"]["boxes_on_fuel"]})
    document["project"] = dict(document["project"], branding={"firm": FIRM})
    html = render_html(document, {})
    built = build_pdf(html, base_dir=tmp_path, created=document["created"], parts=True, parallel=False)
    assert built.parts > 1
    output = tmp_path / "parts.pdf"
    output.write_bytes(built.data)
    pages = pdf_text(output)
    assert len(pages) == built.pages
    assert all(FIRM in page for page in pages)  # the running footer, carried into every part with the cover
    assert all(document["project"]["title"] in page for page in pages[1:])  # the running header
