"""A large dossier's PDF laid out in parts at once, one WeasyPrint process per part, then joined.

WeasyPrint lays a document out in one process, so a 1,000-series dossier costs four minutes of one
core. The dossier's sections already start on a new page each (``break-before: page``), so the
same pages come out if the document is cut at section boundaries and each part laid out on its
own. What ties the parts together is handled here:

* **page numbers**: each part lays its pages out, reports how many it has and waits; once every
  part has reported, each gets its first page number and the total, and only then lays out its
  margin boxes (see :func:`_page_numbers`). The footers read "page n of N" as in one piece.
* **the index** (``nav.contents``) cites the page of every section, which other parts lay out: it
  is laid out once to count its pages (its numbers sit in a reserved column, so they cannot move
  anything), then again with the numbers filled in.
* **running strings** (title, reference, run): every part but the first starts with a copy of the
  cover, which sets them, and whose page is dropped when the parts are joined.
* **links and bookmarks**: links keep their named destinations; the joined PDF gets one name tree
  of every part's anchors, and one outline built from every part's headings as WeasyPrint builds it.
* **attachments and metadata** come from the first part.

The cut and the parts depend on the HTML alone, never on the number of cores: laid out in worker
processes (``parallel=True``) or one after the other in this process (twice, then: once to count
the pages, once with the numbers), the PDF has the same bytes. Where the page does not have the
expected outline (a user template that moved the sections), :func:`split_parts` returns ``None``
and the caller lays the document out in one piece.
"""

from __future__ import annotations

import contextlib
import copy
import dataclasses
import io
import math
import multiprocessing
import queue
import re
import resource
import tempfile
import time
import traceback
import warnings
import zlib
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any

#: Class of the index element, which is laid out in a part of its own.
INDEX_CLASS = "contents"
#: About how many elements of section markup one part gets (a series section has about 90).
PART_BUDGET = 25_000
MIN_BODY_PARTS = 2
MAX_BODY_PARTS = 6
#: Seconds a worker may stay silent before the parallel layout is given up (and done in one piece).
WORKER_SILENCE = 900.0

_TAG = re.compile(r"<(/?)(header|main|section|nav|article|footer)\b([^>]*)>")
_ID_ATTRIBUTE = re.compile(r'\sid="[^"]*"')
_INDEX_LINK = re.compile(r'(<a href="#([^"]+)"[^>]*>)(.*?)(</a>)', re.DOTALL)
#: Extra rules of the index part: its page numbers in a reserved column instead of target-counter().
INDEX_STYLE = (
    "<style>@media print { nav.contents a::after { content: none; } "
    "nav.contents a { position: relative; padding-right: 3.2em; } "
    "nav.contents a > .page-ref { position: absolute; right: 0; top: 0; } }</style>")
#: Keeps the copied cover of a later part on a page of its own (that page is dropped).
CARRIED_COVER_STYLE = "<style>@media print { header.cover.carried { break-after: page; } }</style>"


@dataclass(frozen=True)
class Element:
    """One outline element of the page: its tag, where its markup starts and ends, and its children."""

    tag: str
    start: int
    open_end: int
    close_start: int
    end: int
    attributes: str
    children: tuple[Element, ...] = ()


@dataclass(frozen=True)
class Part:
    """One piece of the dossier as a whole HTML document; ``skip`` leading pages are dropped when joined."""

    kind: str  # "front", "index" or "body"
    html: str
    skip: int


@dataclass(frozen=True)
class LaidOut:
    """What one part reports: its pages (after ``skip``), anchors, headings, messages and PDF file."""

    pages: int
    anchors: tuple[tuple[str, int, float, float], ...]
    bookmarks: tuple[tuple[int, tuple[tuple[int, str, tuple[float, float], str], ...]], ...]
    heights: tuple[float, ...]
    warnings: tuple[str, ...]
    pdf: Path
    #: CPU seconds of the worker process that laid the part out (0 when laid out in this process).
    seconds: float = 0.0
    #: Peak resident memory of that worker process, in MiB (0 likewise).
    peak_mib: float = 0.0


@dataclass(frozen=True)
class Joined:
    """The joined PDF: bytes, pages, WeasyPrint's warnings, the number of parts, and what the workers
    spent (CPU seconds in all, the largest peak memory in MiB; zero when laid out in this process)."""

    data: bytes
    pages: int
    warnings: tuple[str, ...]
    parts: int
    worker_seconds: float
    worker_peak_mib: float


@dataclass
class _Numbers:
    """The page numbering a part's margin boxes are given: first page number and total."""

    first: int = 1
    total: int = 0
    counted: int = 0


def _outline(html: str, start: int, end: int) -> list[Element] | None:
    """The outline elements between ``start`` and ``end``, nested; ``None`` if the tags do not balance."""
    stack: list[tuple[str, int, int, str, list[Element]]] = [("", start, start, "", [])]
    for match in _TAG.finditer(html, start, end):
        closing, tag, attributes = match.group(1), match.group(2), match.group(3)
        if not closing:
            stack.append((tag, match.start(), match.end(), attributes, []))
            continue
        if len(stack) < 2 or stack[-1][0] != tag:
            return None
        name, opened, open_end, attrs, children = stack.pop()
        stack[-1][4].append(Element(name, opened, open_end, match.start(), match.end(), attrs, tuple(children)))
    if len(stack) != 1:
        return None
    return stack[0][4]


def _has_class(element: Element, name: str) -> bool:
    found = re.search(r'\sclass="([^"]*)"', element.attributes)
    return bool(found and name in found.group(1).split())


def _cost(markup: str) -> int:
    """Elements in the markup: a stand-in for WeasyPrint's work on it (a regression section, with its
    many small tables, costs about six series sections, and has about six times their elements)."""
    return markup.count("<")


def split_parts(paper: str) -> list[Part] | None:
    """Cut the paper form of the dossier into parts at section boundaries (``None``: cannot be cut).

    The parts, in page order: the cover and what precedes the index; the index alone; then the
    sections (every ``<article>`` of each part of ``<main>``, and whatever follows) in groups of
    about :data:`PART_BUDGET` elements, at least :data:`MIN_BODY_PARTS` of them.
    """
    body_open = re.search(r"<body\b[^>]*>", paper)
    body_close = paper.rfind("</body>")
    if body_open is None or body_close < body_open.end():
        return None
    top = _outline(paper, body_open.end(), body_close)
    if top is None:
        return None
    mains = [element for element in top if element.tag == "main"]
    if len(mains) != 1:
        return None
    main = mains[0]
    covers = [element for element in top if element.tag == "header" and _has_class(element, "cover")]
    if len(covers) != 1 or covers[0].end > main.start:
        return None
    head = paper[: body_open.end()]
    cover = paper[covers[0].start: covers[0].end]
    before_main = paper[body_open.end(): main.start]
    after_main = paper[main.end: body_close]
    children = list(main.children)
    if paper[main.open_end: main.close_start].strip() and not children:
        return None
    # Nothing but whitespace may sit between the children of <main>: it would belong to no part.
    edges = [main.open_end, *[position for child in children for position in (child.start, child.end)],
             main.close_start]
    if any(paper[edges[index]: edges[index + 1]].strip() for index in range(0, len(edges), 2)):
        return None
    indexes = [position for position, child in enumerate(children) if child.tag == "nav"
               and _has_class(child, INDEX_CLASS)]
    if len(indexes) != 1:
        return None
    at = indexes[0]
    front = "".join(paper[child.start: child.end] for child in children[:at])
    index = paper[children[at].start: children[at].end]

    # Units of the body, in order: (section it belongs to, its opening tag for a part that starts
    # with it, markup). A section holding articles gives one unit per article, its heading going
    # with the first; a part that starts inside a section opens it again without its id.
    units: list[tuple[int | None, str, str]] = []
    for key, child in enumerate(children[at + 1:]):
        articles = [element for element in child.children if element.tag == "article"]
        if child.tag != "section" or not articles:
            units.append((None, "", paper[child.start: child.end]))
            continue
        opening = paper[child.start: child.open_end]
        continued = _ID_ATTRIBUTE.sub("", opening)
        for position, article in enumerate(articles):
            begin = child.open_end if position == 0 else article.start
            stop = articles[position + 1].start if position + 1 < len(articles) else child.close_start
            units.append((key, opening if position == 0 else continued, paper[begin:stop]))
    total = sum(_cost(markup) for _, _, markup in units)
    count = max(MIN_BODY_PARTS, min(MAX_BODY_PARTS, math.ceil(total / PART_BUDGET)))
    count = min(count, len(units))
    groups: list[list[tuple[int | None, str, str]]] = [[] for _ in range(count)]
    spent, share = 0, total / count if count else 0.0
    for unit in units:
        groups[min(count - 1, int(spent / share)) if share else 0].append(unit)
        spent += _cost(unit[2])
    groups = [group for group in groups if group]
    if not groups:
        return None

    carried = _CARRIED.sub(_carried_class, _ID_ATTRIBUTE.sub("", cover), count=1)
    parts = [Part("front", f"{head}{before_main}<main>{front}</main></body></html>", 0),
             Part("index", _with_style(f"{head}{carried}<main>{index}</main></body></html>",
                                       INDEX_STYLE + CARRIED_COVER_STYLE), 1)]
    for number, group in enumerate(groups):
        pieces: list[str] = []
        current: int | None = None
        for key, opening, markup in group:
            if key != current:
                if current is not None:
                    pieces.append("</section>")
                if key is not None:
                    pieces.append(opening)
                current = key
            pieces.append(markup)
        if current is not None:
            pieces.append("</section>")
        tail = after_main if number == len(groups) - 1 else ""
        html = f"{head}{carried}<main>{''.join(pieces)}</main>{tail}</body></html>"
        parts.append(Part("body", _with_style(html, CARRIED_COVER_STYLE), 1))
    return parts


_CARRIED = re.compile(r'\sclass="([^"]*)"')


def _carried_class(match: re.Match[str]) -> str:
    return f' class="{match.group(1)} carried"'


def _with_style(html: str, style: str) -> str:
    """``html`` with ``style`` added at the end of its head."""
    at = html.find("</head>")
    return html if at < 0 else html[:at] + style + html[at:]


def index_with_pages(html: str, pages: dict[str, int], width: int) -> str:
    """The index part with the page of every linked section after its entry (``width`` digits when unknown)."""

    def entry(match: re.Match[str]) -> str:
        number = pages.get(match.group(2))
        text = str(number) if number is not None else "0" * width
        hidden = "" if number is not None else ' style="visibility: hidden"'
        return f'{match.group(1)}{match.group(3)}<span class="page-ref"{hidden}>{text}</span>{match.group(4)}'

    start = html.find('<nav class="contents"')
    end = html.find("</nav>", start)
    if start < 0 or end < 0:
        return html
    return html[:start] + _INDEX_LINK.sub(entry, html[start:end]) + html[end:]


# --- WeasyPrint hooks -----------------------------------------------------------------------------------


class _CountedError(Exception):
    """Raised to stop a layout once its pages are counted (the counting pass needs nothing more)."""


@contextlib.contextmanager
def _page_numbers(sync: Callable[[int], tuple[int, int]]) -> Iterator[None]:
    """Lay out margin boxes with page numbers from ``sync(pages)``: (number of the first page, total).

    WeasyPrint lays every page out first, then adds each page's margin boxes from the page's
    counter state; the hook counts the pages as they are made, calls ``sync`` before the first
    margin box (where a worker waits for the other parts) and shifts the ``page`` counter and
    sets ``pages`` in the state the margin boxes read. Raises :class:`RuntimeError` when WeasyPrint
    is not laid out as this was written for (the caller then lays the dossier out in one piece).
    """
    from weasyprint import layout  # type: ignore[import-untyped]

    make_all_pages = getattr(layout, "make_all_pages", None)
    make_margin_boxes = getattr(layout, "make_margin_boxes", None)
    if (getattr(make_all_pages, "__module__", "") != "weasyprint.layout.page"
            or getattr(make_margin_boxes, "__module__", "") != "weasyprint.layout.page"):
        raise RuntimeError("WeasyPrint's page layout is not the one the parallel PDF layout was written for")
    numbers = _Numbers()
    synced = False

    def counting(*arguments: Any, **keywords: Any) -> Iterator[Any]:
        numbers.counted = 0
        for page in make_all_pages(*arguments, **keywords):
            numbers.counted += 1
            yield page

    def numbered(context: Any, page: Any, state: Any) -> Any:
        nonlocal synced
        if not synced:
            numbers.first, numbers.total = sync(numbers.counted)
            synced = True
        shifted = copy.deepcopy(state)
        counters = shifted[1]
        counters["page"] = [context.current_page - 1 + numbers.first]
        counters["pages"] = [numbers.total]
        return make_margin_boxes(context, page, shifted)

    layout.make_all_pages, layout.make_margin_boxes = counting, numbered
    try:
        yield
    finally:
        layout.make_all_pages, layout.make_margin_boxes = make_all_pages, make_margin_boxes


class _Level6:
    """zlib as pydyf sees it, with level 6 where it asks for 9 (same size here, a third of the time)."""

    def __getattr__(self, name: str) -> Any:
        return getattr(zlib, name)

    @staticmethod
    def compressobj(level: int = -1, *arguments: Any, **keywords: Any) -> Any:
        return zlib.compressobj(min(level, 6) if level >= 0 else level, *arguments, **keywords)


@contextlib.contextmanager
def _faster_compression() -> Iterator[None]:
    """Streams and attachments compressed at zlib level 6 instead of pydyf's 9.

    On a large dossier's attachments (the HTML page and results.json, 180 MB) level 9 takes ten
    seconds and level 6 four, for files within 1% of the same size; the PDF stays deterministic.
    """
    import pydyf  # type: ignore[import-untyped]

    if getattr(pydyf, "zlib", None) is not zlib:
        yield
        return
    pydyf.zlib = _Level6()
    try:
        yield
    finally:
        pydyf.zlib = zlib


@dataclass(frozen=True)
class Settings:
    """What every part's layout needs besides its HTML (picklable, for worker processes)."""

    base_url: str
    roots: tuple[Path, ...]
    created: str
    attachments: tuple[tuple[str, Any], ...]  # for the first part: (kind, payload) of each attachment
    folder: Path


def lay_out(part: Part, number: int, settings: Settings, sync: Callable[[int], tuple[int, int]],
            anchored: Callable[[dict[str, int]], None] | None = None) -> LaidOut:
    """Lay out one part and write its PDF to ``settings.folder``; ``sync`` numbers its pages.

    Links to sections of other parts get a stand-in anchor on the part's first page, so that
    WeasyPrint keeps them (with their named destination, which the joined PDF resolves).
    ``anchored``, when given, receives the part's anchors (name: page number counted from the
    part's first kept page) as soon as the layout is done, before painting.
    """
    from weasyprint import HTML, Attachment

    from reportgen.render.pdf import LocalFileFetcher, _fixed_clock, chart_drawing, pdf_timestamp

    moment = pdf_timestamp(settings.created)
    stamp = moment.strftime("%Y-%m-%dT%H:%M:%SZ")
    fetcher = LocalFileFetcher(list(settings.roots))
    with _fixed_clock(moment) as log, chart_drawing(), _page_numbers(sync):
        document = HTML(string=part.html, base_url=settings.base_url, url_fetcher=fetcher,
                        media_type="print").render()
        if fetcher.refused:
            raise fetcher.refused[0]
        pages = document.pages
        kept = pages[part.skip:]
        anchors: list[tuple[str, int, float, float]] = []
        seen: set[str] = set()
        for position, page in enumerate(kept):
            for name, (x, y, _, _) in page.anchors.items():
                if name not in seen:
                    seen.add(name)
                    anchors.append((name, position, 0.75 * x, 0.75 * (page.height - y)))
        if anchored is not None:
            anchored({name: position for name, position, _, _ in anchors})
        present = {name for page in pages for name in page.anchors}
        missing = sorted({target for page in pages for kind, target, _, _ in page.links
                          if kind == "internal" and target not in present})
        for name in missing:  # kept as links to a named destination that another part defines
            pages[0].anchors[name] = (0, 0, 0, 0)
        files = []
        for kind, payload in (settings.attachments if part.kind == "front" else ()):
            if kind == "file":
                path = Path(payload["filename"])
                files.append(Attachment(filename=str(path), name=payload["name"], description=payload["description"],
                                        created=moment, modified=moment, url_fetcher=fetcher,
                                        relationship=payload["relationship"]))
            else:
                files.append(Attachment(string=payload["string"], name=payload["name"],
                                        description=payload["description"], created=moment, modified=moment,
                                        url_fetcher=fetcher, relationship=payload["relationship"]))
        document.metadata.created = stamp
        document.metadata.modified = stamp
        target = settings.folder / f"part-{number:03d}.pdf"
        with _faster_compression():
            document.write_pdf(target, attachments=files)
    bookmarks = tuple((position, tuple((level, label, (0.75 * x, 0.75 * (page.height - y)), state)
                                       for level, label, (x, y), state in page.bookmarks))
                      for position, page in enumerate(kept) if page.bookmarks)
    return LaidOut(pages=len(kept), anchors=tuple(anchors), bookmarks=bookmarks,
                   heights=tuple(0.75 * page.height for page in kept),
                   warnings=tuple(message for message in log.messages if not message.startswith("No anchor")),
                   pdf=target)


# --- Running the parts ----------------------------------------------------------------------------------


def _offsets(counts: Sequence[int]) -> tuple[list[int], int]:
    """The number of each part's first kept page, and the total, from the parts' kept page counts."""
    firsts, running = [], 1
    for count in counts:
        firsts.append(running)
        running += count
    return firsts, running - 1


def _page_map(parts: Sequence[Part], firsts: Sequence[int],
              anchors: dict[int, dict[str, int]]) -> dict[str, int]:
    """Page number of every anchor, the first part that defines it winning."""
    pages: dict[str, int] = {}
    for number in range(len(parts)):
        for name, position in anchors.get(number, {}).items():
            pages.setdefault(name, firsts[number] + position)
    return pages


def lay_out_in_turn(parts: Sequence[Part], settings: Settings) -> list[LaidOut]:
    """Lay the parts out one after the other in this process: a counting pass, then the real one."""
    counts: list[int] = []
    for number, part in enumerate(parts):
        def count(pages: int, part: Part = part) -> tuple[int, int]:
            counts.append(pages - part.skip)
            raise _CountedError

        with contextlib.suppress(_CountedError):
            lay_out(counting_index(part) if part.kind == "index" else part, number, settings, count)
    firsts, total = _offsets(counts)
    laid: dict[int, LaidOut] = {}
    anchors: dict[int, dict[str, int]] = {}
    order = [number for number, part in enumerate(parts) if part.kind != "index"]
    for number in order:
        laid[number] = lay_out(parts[number], number, settings, _fixed(parts[number], firsts[number], total,
                                                                         counts[number]))
        anchors[number] = {name: position for name, position, _, _ in laid[number].anchors}
    pages = _page_map(parts, firsts, anchors)
    for number, part in enumerate(parts):
        if part.kind == "index":
            sync = _fixed(part, firsts[number], total, counts[number])
            laid[number] = lay_out(numbered_index(part, pages, total), number, settings, sync)
    return [laid[number] for number in range(len(parts))]


def _fixed(part: Part, first: int, total: int, expected: int) -> Callable[[int], tuple[int, int]]:
    """A ``sync`` for a part whose numbering is known; it checks that the pages came out as counted."""

    def sync(pages: int) -> tuple[int, int]:
        if pages - part.skip != expected:
            raise RuntimeError(f"a part of the PDF laid out on {pages - part.skip} pages, counted {expected}")
        return first - part.skip, total

    return sync


def _worker(number: int, part: Part, settings: Settings, replies: Any, events: Any) -> None:
    """One part in a worker process: report the pages, wait for the numbering, report the anchors, paint."""
    try:
        if part.kind == "index":
            def count(pages: int) -> tuple[int, int]:
                events.put(("count", number, pages - part.skip))
                raise _CountedError

            with contextlib.suppress(_CountedError):
                lay_out(counting_index(part), number, settings, count)
            first, total, pages = replies.get()
            laid = lay_out(numbered_index(part, pages, total), number, settings, lambda _: (first - part.skip, total))
        else:
            def wait(pages: int) -> tuple[int, int]:
                events.put(("count", number, pages - part.skip))
                first, total = replies.get()
                return first - part.skip, total

            laid = lay_out(part, number, settings, wait,
                           anchored=lambda anchors: events.put(("anchors", number, anchors)))
        peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024  # Linux: KiB
        events.put(("done", number, dataclasses.replace(laid, seconds=time.process_time(), peak_mib=peak)))
    except BaseException:  # reported to the parent, which lays the dossier out in one piece instead
        events.put(("failed", number, traceback.format_exc()))


def counting_index(part: Part) -> Part:
    """The index part for counting its pages: hidden stand-ins in the page-number column."""
    return Part(part.kind, index_with_pages(part.html, {}, 4), part.skip)


def numbered_index(part: Part, pages: dict[str, int], total: int) -> Part:
    """The index part with the page number of every entry."""
    return Part(part.kind, index_with_pages(part.html, pages, len(str(total))), part.skip)


def _context() -> Any:
    """Worker processes forked from a server that has imported WeasyPrint once (else spawned).

    Spawning pays WeasyPrint's import (about a second) in every part; the fork server is a fresh,
    single-threaded process, so forking it is safe where forking this one (threads, a plotting
    back end) might not be.
    """
    if "forkserver" not in multiprocessing.get_all_start_methods():
        return multiprocessing.get_context("spawn")
    context = multiprocessing.get_context("forkserver")
    context.set_forkserver_preload(["reportgen.render.paged", "reportgen.render.pdf", "weasyprint"])
    return context


def lay_out_together(parts: Sequence[Part], settings: Settings) -> list[LaidOut]:
    """Lay the parts out at once, one worker process each; :class:`RuntimeError` if any fails."""
    context = _context()
    events = context.Queue()
    replies = [context.Queue() for _ in parts]
    workers = [context.Process(target=_worker, args=(number, part, settings, replies[number], events), daemon=True)
               for number, part in enumerate(parts)]
    for worker in workers:
        worker.start()
    counts: dict[int, int] = {}
    anchors: dict[int, dict[str, int]] = {}
    laid: dict[int, LaidOut] = {}
    firsts: list[int] = []
    total = 0
    indexes = [number for number, part in enumerate(parts) if part.kind == "index"]
    try:
        while len(laid) < len(parts):
            try:
                kind, number, payload = events.get(timeout=WORKER_SILENCE)
            except queue.Empty:
                raise RuntimeError("a PDF layout worker stopped answering") from None
            if kind == "failed":
                raise RuntimeError(f"a PDF layout worker failed:\n{payload}")
            if kind == "count":
                counts[number] = payload
                if len(counts) == len(parts):
                    firsts, total = _offsets([counts[index] for index in range(len(parts))])
                    for index, part in enumerate(parts):
                        if part.kind != "index":
                            replies[index].put((firsts[index], total))
            elif kind == "anchors":
                anchors[number] = payload
                if len(anchors) == len(parts) - len(indexes):
                    pages = _page_map(parts, firsts, anchors)
                    for index in indexes:
                        replies[index].put((firsts[index], total, pages))
            elif kind == "done":
                laid[number] = payload
    finally:
        for worker in workers:
            worker.join(timeout=5 if len(laid) == len(parts) else 0)
            if worker.is_alive():
                worker.terminate()
                worker.join()
        events.close()
        for reply in replies:
            reply.close()
    return [laid[number] for number in range(len(parts))]


# --- Joining --------------------------------------------------------------------------------------------


class _Page:
    """A stand-in page for WeasyPrint's bookmark-tree builder: its headings and height."""

    def __init__(self, bookmarks: Sequence[tuple[int, str, tuple[float, float], str]], height: float) -> None:
        self.bookmarks = list(bookmarks)
        self.height = height


def _bookmark_tree(laid: Sequence[LaidOut]) -> list[Any]:
    """The outline of the joined document, nested by heading level as WeasyPrint nests it."""
    from weasyprint.document import Document  # type: ignore[import-untyped]

    pages: list[_Page] = []
    for part in laid:
        marks = dict(part.bookmarks)
        pages.extend(_Page(marks.get(position, ()), part.heights[position]) for position in range(part.pages))

    class Pages:
        def __init__(self) -> None:
            self.pages = pages

    # Coordinates are already in PDF points from the page's bottom: no further transformation.
    return Document.make_bookmark_tree(Pages(), scale=1, transform_pages=False)  # type: ignore[arg-type]


def join(parts: Sequence[Part], laid: Sequence[LaidOut]) -> tuple[bytes, int]:
    """The parts' PDFs as one file: pages in order, one name tree, one outline, the first part's extras."""
    import pikepdf

    out = pikepdf.new()
    sources = [pikepdf.open(part.pdf) for part in laid]
    try:
        starts: list[int] = []
        with warnings.catch_warnings():
            # pikepdf warns that named destinations are not carried over: the name tree is rebuilt below
            warnings.simplefilter("ignore", pikepdf.PageCopyWarning if hasattr(pikepdf, "PageCopyWarning")
                                  else Warning)
            for part, source in zip(parts, sources, strict=True):
                starts.append(len(out.pages))
                out.pages.extend(source.pages[part.skip:])

        def copied(value: Any) -> Any:
            return out.copy_foreign(value if value.is_indirect else front.make_indirect(value))

        front = sources[0]
        for key in ("/Lang", "/MarkInfo", "/ViewerPreferences", "/PageMode", "/AF", "/Metadata"):
            if key in front.Root:
                out.Root[key] = copied(front.Root[key])
        names = pikepdf.Dictionary()
        if "/Names" in front.Root and "/EmbeddedFiles" in front.Root.Names:
            names.EmbeddedFiles = copied(front.Root.Names.EmbeddedFiles)
        destinations: dict[str, tuple[int, float, float]] = {}
        for start, part in zip(starts, laid, strict=True):
            for name, position, x, y in part.anchors:
                destinations.setdefault(name, (start + position, x, y))
        entries = pikepdf.Array()
        for name in sorted(destinations):
            page, x, y = destinations[name]
            entries.append(pikepdf.String(name))
            entries.append(pikepdf.Array([out.pages[page].obj, pikepdf.Name.XYZ, x, y, 0]))
        names.Dests = out.make_indirect(pikepdf.Dictionary(Names=entries))
        out.Root.Names = out.make_indirect(names)
        if "/Info" in front.trailer:
            out.trailer.Info = copied(front.trailer.Info)
        with out.open_outline() as outline:
            outline.root.extend(_outline_items(_bookmark_tree(laid)))
        buffer = io.BytesIO()
        out.save(buffer, deterministic_id=True)
        return buffer.getvalue(), len(out.pages)
    finally:
        for source in sources:
            source.close()
        out.close()


def _outline_items(tree: Sequence[Any]) -> list[Any]:
    """pikepdf outline items of WeasyPrint bookmark subtrees (label, (page, x, y), children, state)."""
    import pikepdf

    items = []
    for label, (page, x, y), children, state in tree:
        item = pikepdf.OutlineItem(label, page, "XYZ", left=x, top=y)
        item.children.extend(_outline_items(children))
        item.is_closed = state == "closed"
        items.append(item)
    return items


def build_in_parts(paper: str, *, base_url: str, roots: Sequence[Path], created: str,
                   attachments: Sequence[tuple[str, Any]],
                   parallel: bool) -> Joined | None:
    """The PDF of the paper form ``paper`` laid out in parts and joined, or ``None``.

    ``None`` when the page cannot be cut (see :func:`split_parts`) or a worker failed; the
    caller then lays the document out in one piece, which also reports any error properly.
    """
    parts = split_parts(paper)
    if parts is None:
        return None
    with tempfile.TemporaryDirectory(prefix="reportgen-pdf-parts-") as scratch:
        settings = Settings(base_url=base_url, roots=tuple(roots), created=created,
                            attachments=tuple(attachments), folder=Path(scratch))
        try:
            laid = lay_out_together(parts, settings) if parallel else lay_out_in_turn(parts, settings)
        except RuntimeError:
            return None
        data, pages = join(parts, laid)
    warnings = tuple(message for part in laid for message in part.warnings)
    return Joined(data=data, pages=pages, warnings=warnings, parts=len(parts),
                  worker_seconds=sum(part.seconds for part in laid),
                  worker_peak_mib=max((part.peak_mib for part in laid), default=0.0))
