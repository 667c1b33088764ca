"""The dossier as PDF: WeasyPrint lays out the same HTML, reading local files only.

The PDF is a pure function of the HTML, the ``created`` time and the attachments: its creation
and modification dates are ``created`` (not the clock), its file identifier is derived from its
content, and the attachments carry ``created`` as their dates, so two runs give identical bytes.
Nothing is fetched from the network: the URL fetcher serves ``file:`` URLs inside the manifest's
folder or the template folders, and ``data:`` URLs; anything else stops the rendering.

Time: WeasyPrint's cost grows with the boxes it lays out and paints, about linearly in the
number of sections. Three things keep a large dossier affordable (see :func:`paper_html` and
:func:`_svg_text_in_one_piece`): charts are handed over as SVG images rather than inline markup,
chart texts are shaped in one piece rather than letter by letter, and a dossier of more than
:data:`PDF_DETAIL_LIMIT` series leaves the folded records of its series (every test, grid, trail,
notes, fan chart) to the HTML page attached to the PDF. The stylesheet does its part: fixed table
layouts, page numbers in the index without leaders, long summary tables split (see style.css and
:data:`reportgen.render.html.SUMMARY_ROWS`). A dossier of more than :data:`PDF_DETAIL_LIMIT` series
is also laid out in parts at once, on every core, and joined (:mod:`reportgen.render.paged`).
"""

from __future__ import annotations

import base64
import contextlib
import datetime
import html as htmlmodule
import logging
import math
import mimetypes
import os
import re
from collections.abc import Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any
from urllib.error import URLError
from urllib.parse import urlsplit
from urllib.request import DataHandler, Request, url2pathname

from weasyprint.urls import URLFetcher, URLFetcherResponse  # type: ignore[import-untyped]

from reportgen.errors import ReportgenError, ResourceRefusedError, ResourceUnreadableError
from reportgen.render.environment import packaged_templates_dir


class LocalFileFetcher(URLFetcher):  # type: ignore[misc]
    """A WeasyPrint URL fetcher that serves local files under ``roots`` and ``data:`` URLs only.

    Every refusal raises :class:`ResourceRefusedError` before any input or output: a URL of any
    other scheme (``http:``, ``https:``, ``ftp:``, ...), a ``file:`` URL naming a host (which is
    what a protocol-relative ``//host/x.png`` becomes against the manifest's folder), and a file
    whose real path (links followed) is outside every root. ``data:`` URLs are decoded here,
    without urllib's opener. WeasyPrint is told to stop on fetch errors, and every refusal is also
    kept in :attr:`refused` (WeasyPrint swallows errors inside SVG images), so that
    :func:`build_pdf` stops on it: a refused resource never turns into a silently missing image.
    """

    def __init__(self, roots: Sequence[Path]) -> None:
        super().__init__(timeout=5, allowed_protocols=("file", "data"), allow_redirects=False,
                         fail_on_errors=True)
        self.roots = tuple(Path(root).resolve() for root in roots)
        #: Every refusal so far, in order.
        self.refused: list[ResourceRefusedError] = []

    def fetch(self, url: str, headers: Any = None) -> URLFetcherResponse:
        """Serve ``url`` if it is a ``data:`` URL or a file inside one of the roots."""
        try:
            return self._fetch(url)
        except ResourceRefusedError as error:
            self.refused.append(error)
            raise

    def _fetch(self, url: str) -> URLFetcherResponse:
        scheme = url.split(":", 1)[0].strip().lower() if ":" in url else ""
        if scheme == "data":
            return _data_response(url)
        if scheme != "file":
            raise ResourceRefusedError(
                problem=f"the dossier may not load {url!r}: only local files and data: URLs are allowed",
                hint="copy the resource into the manifest's folder and refer to it by a relative path",
            )
        parts = urlsplit(url)
        if parts.netloc not in ("", "localhost"):
            raise ResourceRefusedError(
                problem=f"the dossier may not load {url!r}: it names the host {parts.netloc!r}; only local files "
                        "and data: URLs are allowed",
                hint="copy the resource into the manifest's folder and refer to it by a relative path",
            )
        path = Path(url2pathname(parts.path)).resolve()
        if not any(path.is_relative_to(root) for root in self.roots):
            raise ResourceRefusedError(
                problem=f"the dossier may not load {path}: it is outside "
                + " and ".join(str(root) for root in self.roots))
        if not path.is_file():
            raise ResourceUnreadableError(problem=f"the dossier refers to {path}, which does not exist")
        content_type = mimetypes.guess_type(path.name)[0] or "application/octet-stream"
        return URLFetcherResponse(path.as_uri(), body=path.read_bytes(), headers={"Content-Type": content_type})


def _data_response(url: str) -> URLFetcherResponse:
    """A ``data:`` URL decoded in memory (RFC 2397), as WeasyPrint expects a response."""
    try:
        with DataHandler().data_open(Request(url)) as response:
            body = response.read()
            content_type = response.headers.get("Content-Type", "text/plain;charset=US-ASCII")
    except (ValueError, URLError) as error:
        raise ResourceUnreadableError(problem=f"the dossier has a data: URL that cannot be decoded ({error})",
                                      hint="check the data: URL's base64 text") from None
    return URLFetcherResponse(url, body=body, headers={"Content-Type": content_type})


def pdf_timestamp(created: str) -> datetime.datetime:
    """``created`` (ISO 8601; ``Z`` or an offset; naive means UTC) as a UTC time to the second."""
    try:
        moment = datetime.datetime.fromisoformat(created.strip())
    except ValueError as error:
        raise ValueError(f"created must be an ISO 8601 time such as 2024-05-06T09:30:00Z, not {created!r}") from error
    if moment.tzinfo is None:
        moment = moment.replace(tzinfo=datetime.UTC)
    return moment.astimezone(datetime.UTC).replace(microsecond=0)


@dataclass(frozen=True, slots=True)
class BuiltPdf:
    """A laid-out dossier: the PDF bytes, its page count and title, WeasyPrint's warnings, whether
    the folded parts of the series sections are in the PDF (else in the attached HTML), and how
    many parts it was laid out in (1: in one piece; see :mod:`reportgen.render.paged`)."""

    data: bytes
    pages: int
    title: str | None = None
    warnings: tuple[str, ...] = ()
    details: bool = True
    parts: int = 1
    #: CPU seconds spent in worker processes (the parts laid out at once), beside this process's own.
    worker_seconds: float = 0.0
    #: The largest peak resident memory of those workers, in MiB.
    worker_peak_mib: float = 0.0


class _Collect(logging.Handler):
    """Keeps WeasyPrint's warnings and errors (it logs them; it does not raise them)."""

    def __init__(self) -> None:
        super().__init__(level=logging.WARNING)
        self.messages: list[str] = []

    def emit(self, record: logging.LogRecord) -> None:
        self.messages.append(record.getMessage())


@contextlib.contextmanager
def _fixed_clock(moment: datetime.datetime) -> Iterator[_Collect]:
    """Pin ``SOURCE_DATE_EPOCH`` to ``moment`` and collect WeasyPrint's log messages.

    fontTools stamps every font subset it writes into the PDF with the current time unless
    ``SOURCE_DATE_EPOCH`` is set, which would make two renderings differ.
    """
    previous = os.environ.get("SOURCE_DATE_EPOCH")
    os.environ["SOURCE_DATE_EPOCH"] = str(int(moment.timestamp()))
    handler = _Collect()
    logger = logging.getLogger("weasyprint")
    logger.addHandler(handler)
    try:
        yield handler
    finally:
        logger.removeHandler(handler)
        if previous is None:
            del os.environ["SOURCE_DATE_EPOCH"]
        else:
            os.environ["SOURCE_DATE_EPOCH"] = previous


#: An inline chart as :func:`reportgen.render.plots.render_plots` writes it (matplotlib escapes ``<`` in
#: text, so a chart holds no ``</svg>`` but its own end).
_INLINE_CHART = re.compile(r'<svg class="chart" [^>]*>.*?</svg>', re.DOTALL)
_ARIA_LABEL = re.compile(r'\saria-label="([^"]*)"')


def _chart_image(match: re.Match[str]) -> str:
    svg = match.group(0)
    label = _ARIA_LABEL.search(svg[: svg.index(">")])
    alt = label.group(1) if label else ""
    data = base64.b64encode(svg.encode("utf-8")).decode("ascii")
    return f'<img class="chart" alt="{alt}" src="data:image/svg+xml;base64,{data}">'


#: A dossier of more series than this is laid out without the folded part of each series section
#: (``<details class="more series-more">``: the fan chart, every test, the robustness grid, the
#: decision trail and the notes), which the PDF then carries as the attached ``dossier.html``; laying
#: out those records takes WeasyPrint about a second a series, so a 1,000-series dossier would take
#: a quarter of an hour. ``details=True`` or ``False`` in :func:`build_pdf` decides either way.
PDF_DETAIL_LIMIT = 50
#: Name of the attached HTML dossier when the PDF leaves the folded parts out.
ATTACHED_HTML = "dossier.html"
_SERIES_SECTION = re.compile(r'<article class="item series[ "]')
_FOLDED = re.compile(r'<details class="more series-more">.*?</details>', re.DOTALL)
_FOLDED_ELSEWHERE = (
    '<p class="more-elsewhere">The fan chart, every test run, the robustness grid, the choice of deterministic '
    f"terms, the decision trail and the notes of this series are in {ATTACHED_HTML}, attached to this PDF, and "
    "in results.json.</p>")


def series_sections(html: str) -> int:
    """How many series sections the dossier page has."""
    return len(_SERIES_SECTION.findall(html))


def paper_html(html: str, *, details: bool = True) -> str:
    """The dossier page as WeasyPrint lays it out.

    Each inline chart becomes an SVG image: the same drawing, but parsed by the XML parser
    instead of the HTML5 one and not matched against the page's stylesheet element by element,
    which makes a chart a fraction of its inline cost (``alt`` keeps its description; a
    ``data:`` URL is fetched by :class:`LocalFileFetcher` like any other resource). Without
    ``details``, the folded part of each series section is replaced by a sentence that says
    where it is.
    """
    if not details:
        html = _FOLDED.sub(_FOLDED_ELSEWHERE, html)
    return _INLINE_CHART.sub(_chart_image, html)


class _Unsplit(str):
    """Text that iterates as one piece (see :func:`_svg_text_in_one_piece`)."""

    __slots__ = ()

    def __iter__(self) -> Iterator[str]:
        yield str(self)


#: Attributes that place an SVG text's glyphs one by one; a text with any of them is laid out letter by letter.
_GLYPH_PLACEMENT = ("dx", "dy", "rotate", "textLength", "letter-spacing", "lengthAdjust")


@contextlib.contextmanager
def _svg_text_in_one_piece() -> Iterator[None]:
    """Lay out each plain SVG ``<text>`` of the charts as one run instead of one letter at a time.

    WeasyPrint (up to at least 70) draws SVG text code point by code point, so that each glyph
    could take its own ``x``, ``y``, ``dx``, ``dy`` or ``rotate``; one Pango layout per letter
    makes the text of a chart the larger part of its cost, and separates combining marks and
    ligatures (WeasyPrint issue #2249, whose suggested fix is the same: shape the whole text when
    nothing places glyphs one by one). For a text with a single ``x`` and ``y`` and none of
    :data:`_GLYPH_PLACEMENT`, this hands WeasyPrint's own text function the string as a single
    "letter", so it is shaped, measured and drawn once, at the same place. Anything else, and any
    WeasyPrint whose SVG text function is not the one this was written for, is left as it is.
    """
    try:
        from weasyprint import svg as weasy_svg  # type: ignore[import-untyped]
    except ImportError:  # pragma: no cover - an unusual WeasyPrint layout: nothing to adjust
        yield
        return
    tags = getattr(weasy_svg, "TAGS", None)
    original = tags.get("text") if isinstance(tags, dict) else None
    if (tags is None or original is None or getattr(original, "__module__", None) != "weasyprint.svg.text"
            or getattr(original, "__name__", None) != "text" or getattr(weasy_svg, "text", None) is not original):
        yield
        return

    def text(svg: Any, node: Any, font_size: float) -> Any:
        element = getattr(node, "_etree_node", None)
        content = getattr(element, "text", None)
        attributes = getattr(node, "attrib", {})
        if (getattr(node, "tag", None) in ("text", "tspan") and isinstance(content, str) and len(content) > 1
                and not any(key in attributes for key in _GLYPH_PLACEMENT)
                and all(len(str(attributes.get(key, "0")).replace(",", " ").split()) == 1 for key in ("x", "y"))):
            element.text = _Unsplit(content)
            try:
                return original(svg, node, font_size)
            finally:
                element.text = content
        return original(svg, node, font_size)

    # WeasyPrint recognises text elements by comparing their function with its own name ``text``.
    replaced = [key for key, function in tags.items() if function is original]
    for key in replaced:
        tags[key] = text
    weasy_svg.text = text
    try:
        yield
    finally:
        for key in replaced:
            tags[key] = original
        weasy_svg.text = original


#: A path as the chart module writes it: absolute ``M`` and ``L`` commands, each followed by one or more
#: coordinate pairs of plain numbers (digits, a fraction, a sign), everything separated by single spaces.
_STRAIGHT_PATH = re.compile(r"M(?: -?[0-9]+(?:\.[0-9]+)?){2}(?:(?: [ML])?(?: -?[0-9]+(?:\.[0-9]+)?){2})*")


def _straight_path(d: str) -> list[tuple[str, float, float]] | None:
    """The commands of a path written as :data:`_STRAIGHT_PATH` says, one per coordinate pair; else None."""
    if _STRAIGHT_PATH.fullmatch(d) is None:
        return None
    tokens = d.split(" ")
    commands: list[tuple[str, float, float]] = []
    letter, position, count = "M", 1, len(tokens)
    while position < count:
        token = tokens[position]
        if token == "M" or token == "L":
            letter, position = token, position + 1
            continue
        commands.append((letter, float(token), float(tokens[position + 1])))
        position += 2
        if letter == "M":  # further pairs after a move are lines, as SVG says
            letter = "L"
    return commands


@contextlib.contextmanager
def _svg_paths_read_at_once() -> Iterator[None]:
    """Read the charts' straight-line paths in one pass instead of WeasyPrint's pair-by-pair parsing.

    WeasyPrint (up to at least 70) reads a path's ``d`` by cutting the remaining text after every
    coordinate pair and measuring each number as a length with units; a chart's dozen paths of a
    few hundred points then cost a sizeable share of its drawing. For a path of absolute ``M`` and
    ``L`` commands with plain numbers only (:func:`_straight_path`), this does what WeasyPrint's own
    path function does for those commands, call for call: the same moves and lines on the stream,
    the same vertices for markers. Any other path, and any WeasyPrint whose path function is not
    the one this was written for, is left to WeasyPrint.
    """
    try:
        import importlib

        from weasyprint import svg as weasy_svg  # type: ignore[import-untyped]

        weasy_path = importlib.import_module("weasyprint.svg.path")  # the module: weasyprint.svg.path is its function
    except ImportError:  # pragma: no cover - an unusual WeasyPrint layout: nothing to adjust
        yield
        return
    tags = getattr(weasy_svg, "TAGS", None)
    original = tags.get("path") if isinstance(tags, dict) else None
    if (original is None or getattr(original, "__module__", None) != "weasyprint.svg.path"
            or getattr(original, "__name__", None) != "path" or getattr(weasy_path, "path", None) is not original):
        yield
        return

    def path(svg: Any, node: Any, font_size: float) -> Any:
        commands = _straight_path(node.get("d", "") or "")
        if commands is None:
            return original(svg, node, font_size)
        stream, vertices = svg.stream, node.vertices
        current = (0, 0)
        stream.move_to(*current)
        last: str | None = None
        for letter, x, y in commands:
            if letter == "M":
                if last is not None:
                    vertices.append(None)
                stream.move_to(x, y)
            else:
                old_x, old_y = current
                angle = math.atan2(y - old_y, x - old_x)
                vertices.append((math.pi - angle, angle))
                stream.line_to(x, y)
            current = (x, y)
            vertices.append(current)
            last = letter
        return None

    replaced = [key for key, function in tags.items() if function is original]
    for key in replaced:
        tags[key] = path
    try:
        yield
    finally:
        for key in replaced:
            tags[key] = original


@contextlib.contextmanager
def chart_drawing() -> Iterator[None]:
    """WeasyPrint's drawing of the charts made faster, with the same result (text and paths, above)."""
    with _svg_text_in_one_piece(), _svg_paths_read_at_once():
        yield


def build_pdf(html: str, *, base_dir: Path, created: str, attachments: Sequence[Path] = (),
              template_dirs: Sequence[Path] = (), details: bool | None = None, parts: bool | None = None,
              parallel: bool = True) -> BuiltPdf:
    """Lay out ``html`` with WeasyPrint and return the PDF bytes (see :func:`render_pdf`)."""
    from weasyprint import HTML, Attachment  # type: ignore[import-untyped]
    from weasyprint.urls import FatalURLFetchingError

    moment = pdf_timestamp(created)
    stamp = moment.strftime("%Y-%m-%dT%H:%M:%SZ")
    fetcher = LocalFileFetcher([Path(base_dir), packaged_templates_dir(), *template_dirs])
    files: list[Any] = []
    for path in attachments:
        path = Path(path)
        if not path.is_file():
            raise FileNotFoundError(f"cannot attach {path} to the PDF: no such file")
        files.append(Attachment(filename=str(path), name=path.name, description=f"{path.name}, attached by reportgen",
                                created=moment, modified=moment, url_fetcher=fetcher,
                                relationship="Data" if path.suffix == ".json" else "Source"))
    if details is None:
        details = series_sections(html) <= PDF_DETAIL_LIMIT
    large = series_sections(html) > PDF_DETAIL_LIMIT
    if parts if parts is not None else large:
        from reportgen.render.paged import build_in_parts

        payloads: list[tuple[str, Any]] = [
            ("file", {"filename": str(Path(path)), "name": Path(path).name,
                      "description": f"{Path(path).name}, attached by reportgen",
                      "relationship": "Data" if Path(path).suffix == ".json" else "Source"}) for path in attachments]
        if not details:
            payloads.append(("string", {"string": html, "name": ATTACHED_HTML, "relationship": "Supplement",
                                        "description": f"{ATTACHED_HTML}: the dossier with every record of every "
                                                       "series, attached by reportgen"}))
        joined = build_in_parts(paper_html(html, details=details), base_url=str(Path(base_dir).resolve()) + os.sep,
                                roots=fetcher.roots, created=created, attachments=payloads, parallel=parallel)
        if joined is not None:
            return BuiltPdf(data=joined.data, pages=joined.pages, title=_title(html), warnings=joined.warnings,
                            details=details, parts=joined.parts, worker_seconds=joined.worker_seconds,
                            worker_peak_mib=joined.worker_peak_mib)
    if not details:
        files.append(Attachment(string=html, name=ATTACHED_HTML, description=f"{ATTACHED_HTML}: the dossier with "
                                "every record of every series, attached by reportgen", created=moment,
                                modified=moment, url_fetcher=fetcher, relationship="Supplement"))
    try:
        with _fixed_clock(moment) as log, chart_drawing():
            document = HTML(string=paper_html(html, details=details), base_url=str(Path(base_dir).resolve()) + os.sep,
                            url_fetcher=fetcher, media_type="print").render()
            document.metadata.created = stamp
            document.metadata.modified = stamp
            data = document.write_pdf(attachments=files, pdf_identifier=True)
    except FatalURLFetchingError as error:
        if fetcher.refused:
            raise fetcher.refused[0] from None
        cause = error.__cause__
        if isinstance(cause, ReportgenError):
            raise cause from None
        raise ResourceRefusedError(problem=f"a resource of the dossier could not be loaded: {cause or error}",
                                   hint="check the resource's address; only local files and data: URLs are "
                                        "allowed") from error
    if fetcher.refused:  # refused inside an SVG image, where WeasyPrint only logs the failure
        raise fetcher.refused[0]
    return BuiltPdf(data=data, pages=len(document.pages), title=document.metadata.title,
                    warnings=tuple(log.messages), details=details)


def _title(html: str) -> str | None:
    """The page's title, as WeasyPrint reads it into the PDF's metadata."""
    found = re.search(r"<title>(.*?)</title>", html, re.DOTALL)
    return htmlmodule.unescape(found.group(1)).strip() if found else None


def render_pdf(html: str, out_path: Path, *, base_dir: Path, created: str, attachments: Sequence[Path] = (),
               template_dirs: Sequence[Path] = (), details: bool | None = None, parts: bool | None = None,
               parallel: bool = True) -> BuiltPdf:
    """Write the dossier PDF to ``out_path`` (atomically: a temporary file, then a rename).

    Parameters
    ----------
    html
        The page from :func:`reportgen.render.html.render_html`.
    out_path
        Where the PDF goes.
    base_dir
        The manifest's folder: relative URLs resolve against it and only files inside it (or
        inside the packaged template folder) may be loaded.
    created
        The run's timestamp (``document["created"]``), used for every date in the PDF.
    attachments
        Files embedded in the PDF (the manifest and results.json), under their own names.
    template_dirs
        The user's template folders (``--templates``): files inside them may be loaded too.
    details
        Whether the folded part of every series section (fan chart, every test, robustness grid,
        decision trail, notes) is laid out in the PDF, in smaller type; without it the PDF carries
        the HTML page as the attachment ``dossier.html``. ``None`` (the default): for a dossier of
        at most :data:`PDF_DETAIL_LIMIT` series.
    parts
        Whether the document is laid out in parts and joined (:mod:`reportgen.render.paged`);
        ``None`` (the default): for a dossier of more than :data:`PDF_DETAIL_LIMIT` series. The
        pages are the same either way but for the index's page numbers, which sit in a column.
    parallel
        Whether the parts are laid out at once in worker processes (else one after the other, in
        two passes); the bytes are the same either way.

    Returns
    -------
    BuiltPdf
        What was written, with its page count.

    Raises
    ------
    ResourceRefusedError
        The HTML refers to a network resource or to a file outside the allowed folders.
    """
    built = build_pdf(html, base_dir=base_dir, created=created, attachments=attachments, template_dirs=template_dirs,
                      details=details, parts=parts, parallel=parallel)
    out_path = Path(out_path)
    # A plain open() so the file gets the usual permissions (umask), unlike tempfile's 0600.
    temporary = out_path.with_name(f".{out_path.name}.{os.getpid()}.partial")
    try:
        with open(temporary, "wb") as stream:
            stream.write(built.data)
        os.replace(temporary, out_path)
    except BaseException:
        temporary.unlink(missing_ok=True)
        raise
    return built
