"""The closing summary of ``reportgen run``: each series' order and each regression's verdict, coloured on a terminal.

It reads the results document (what results.json holds), never the statistics. A small project
gets one line per series and per regression; a large one (more than :data:`FULL_LIMIT` series
or regressions) gets counts by order and by verdict and a list of its flagged regressions (the
first :data:`FLAGGED_LISTED`), unless the full listing is asked for. Files written into a
subfolder (``tables/``) are counted, not listed.

Colour is ANSI SGR codes. :func:`colour_wanted` decides: ``always`` and ``never`` as told;
``auto`` colours only a terminal, and not when ``NO_COLOR`` is set to anything but the empty
string (https://no-color.org), under CI (``CI`` set and not ``false``/``0``), or when ``TERM``
is ``dumb``. The words are the same with colour or without: colour only repeats them.
"""

from __future__ import annotations

import os
from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Final, Literal, TextIO, get_args

#: When to colour the summary (``reportgen run --color``).
ColourChoice = Literal["auto", "always", "never"]
COLOUR_CHOICES: Final[tuple[str, ...]] = get_args(ColourChoice)

#: How much of the project the summary lists (``reportgen run --summary``).
Detail = Literal["auto", "full", "short"]
DETAILS: Final[tuple[str, ...]] = get_args(Detail)

#: Up to this many series and this many regressions, ``auto`` lists each one on its own line.
FULL_LIMIT: Final = 30
#: The short summary lists at most this many flagged regressions.
FLAGGED_LISTED: Final = 50

#: The verdicts in the order the summary counts them, each with what it means for the regression.
VERDICT_MEANINGS: Final[Mapping[str, str]] = {
    "stationary": "levels inference valid",
    "cointegrated": "long-run relation and error-correction model",
    "spurious-risk": "no cointegration; re-estimated in differences",
    "unbalanced": "orders that cannot cointegrate",
    "inconclusive": "tests disagree or too little data",
}

#: SGR codes of each role a word can play in the summary.
SGR: Final[Mapping[str, str]] = {
    "heading": "1",
    "muted": "2",
    "stationary": "32",
    "cointegrated": "34",
    "spurious-risk": "1;31",
    "unbalanced": "1;35",
    "inconclusive": "1;33",
    "attention": "31",
    "fragile": "33",
    "order-0": "32",
    "order-1": "36",
    "order-2": "35",
    "order-none": "33",
}

ATTENTION: Final = "needs attention"


def _set(value: str | None) -> bool:
    """Whether an environment flag such as ``CI`` is on: set, not empty, not ``0``/``false``/``no``."""
    return value is not None and value.strip().lower() not in ("", "0", "false", "no")


def colour_wanted(choice: ColourChoice, stream: TextIO, environ: Mapping[str, str] | None = None) -> bool:
    """Whether the summary written to ``stream`` is coloured (see the module's docstring for the rules)."""
    if choice == "always":
        return True
    if choice == "never":
        return False
    environment = os.environ if environ is None else environ
    if environment.get("NO_COLOR", "") != "" or _set(environment.get("CI")) or environment.get("TERM") == "dumb":
        return False
    try:
        return stream.isatty()
    except (AttributeError, ValueError):  # a closed or unusual stream
        return False


@dataclass(frozen=True, slots=True)
class Painter:
    """Wraps words in the SGR code of their role, or leaves them alone when colour is off."""

    colour: bool

    def __call__(self, text: str, role: str | None) -> str:
        """``text`` in the colour of ``role`` (None: as it is)."""
        if not self.colour or role is None or not text:
            return text
        return f"\x1b[{SGR[role]}m{text}\x1b[0m"


def order_label(order: Any) -> str:
    """``I(1)``, or ``undetermined`` when no order was found."""
    return f"I({order})" if isinstance(order, int) and not isinstance(order, bool) else "undetermined"


def _order_role(order: Any) -> str:
    label = order_label(order)
    return f"order-{order}" if label != "undetermined" and f"order-{order}" in SGR else "order-none"


def _count(number: int, noun: str, plural: str | None = None) -> str:
    return f"{number:,} {noun if number == 1 else plural or noun + 's'}"


def _table(rows: Iterable[Sequence[tuple[str, str | None]]], paint: Painter, *, right: frozenset[int] = frozenset(),
           indent: str = "  ") -> list[str]:
    """Rows of (text, role) cells in aligned columns; columns in ``right`` are aligned to the right.

    Texts are measured before they are painted, so colour codes never shift a column; empty
    cells at the end of a row are left out.
    """
    rows = [list(row) for row in rows]
    columns = max((len(row) for row in rows), default=0)
    widths = [max((len(row[column][0]) for row in rows if len(row) > column), default=0) for column in range(columns)]
    lines = []
    for row in rows:
        while row and not row[-1][0]:
            row.pop()
        cells = []
        for column, (text, role) in enumerate(row):
            padding = " " * (widths[column] - len(text))
            last = column == len(row) - 1
            if column in right:
                cells.append(padding + paint(text, role))
            else:
                cells.append(paint(text, role) + ("" if last else padding))
        lines.append(indent + "  ".join(cells))
    return lines


def _series_rows(series: Mapping[str, Any]) -> list[list[tuple[str, str | None]]]:
    rows = []
    for name, record in series.items():
        row: list[tuple[str, str | None]] = [(name, None), (order_label(record.get("order")),
                                                            _order_role(record.get("order")))]
        notes = []
        if record.get("fragile"):
            notes.append(("fragile", "fragile"))
        if record.get("order") is None and record.get("reason"):
            notes.append((str(record["reason"]), "muted"))
        row.extend(notes)
        rows.append(row)
    return rows


def _regression_row(name: str, record: Mapping[str, Any], *, attention: bool = True) -> list[tuple[str, str | None]]:
    """Name, verdict, its meaning, and the marks: ``needs attention`` (unless ``attention`` is off) and ``fragile``."""
    verdict = str(record.get("verdict"))
    flagged = attention and bool(record.get("flagged"))
    row: list[tuple[str, str | None]] = [(name, None), (verdict, verdict if verdict in SGR else None),
                                         (VERDICT_MEANINGS.get(verdict, ""), "muted")]
    marks = [word for word, on in ((ATTENTION, flagged), ("fragile", record.get("fragile"))) if on]
    row.append((", ".join(marks), "attention" if flagged else "fragile"))
    return row


def _order_counts(series: Mapping[str, Any]) -> list[list[tuple[str, str | None]]]:
    counts = Counter(order_label(record.get("order")) for record in series.values())
    fragile = Counter(order_label(record.get("order")) for record in series.values() if record.get("fragile"))
    labels = sorted((label for label in counts if label != "undetermined"), key=lambda label: int(label[2:-1]))
    rows = []
    for label in [*labels, *(["undetermined"] if "undetermined" in counts else [])]:
        role = "order-none" if label == "undetermined" else _order_role(int(label[2:-1]))
        row: list[tuple[str, str | None]] = [(label, role), (f"{counts[label]:,}", None)]
        if fragile[label]:
            row.append((f"{fragile[label]:,} fragile", "fragile"))
        rows.append(row)
    return rows


def _verdict_counts(regressions: Mapping[str, Any]) -> list[list[tuple[str, str | None]]]:
    counts = Counter(str(record.get("verdict")) for record in regressions.values())
    flagged = {str(record.get("verdict")) for record in regressions.values() if record.get("flagged")}
    order = [*VERDICT_MEANINGS, *sorted(set(counts) - set(VERDICT_MEANINGS))]
    rows = []
    for verdict in order:
        if counts[verdict]:
            rows.append([(verdict, verdict if verdict in SGR else None), (f"{counts[verdict]:,}", None),
                         (ATTENTION if verdict in flagged else "", "attention")])
    return rows


def _files(files: Sequence[Path], out_dir: Path) -> list[str]:
    """``wrote PATH`` for each file in ``out_dir`` itself, one ``wrote DIR/ (N files)`` per subfolder."""
    entries: dict[Path, int] = {}  # a file (0) or a subfolder (the files written into it), in the order written
    for path in files:
        try:
            parts = path.relative_to(out_dir).parts
        except ValueError:
            parts = ()
        if len(parts) > 1:
            folder = out_dir / parts[0]
            entries[folder] = entries.get(folder, 0) + 1
        else:
            entries.setdefault(path, 0)
    return [f"wrote {path}{os.sep} ({_count(count, 'file')})" if count else f"wrote {path}"
            for path, count in entries.items()]


def format_summary(document: Mapping[str, Any], *, out_dir: Path | None = None, files: Sequence[Path] = (),
                   colour: bool = False, detail: Detail = "auto") -> str:
    """The summary of a run's results document, as lines without a final newline.

    ``files`` are the files the run wrote; those in subfolders of ``out_dir`` are counted per
    subfolder rather than listed.
    """
    paint = Painter(colour)
    series: Mapping[str, Any] = document.get("series", {})
    regressions: Mapping[str, Any] = document.get("regressions", {})
    flagged = [name for name, record in regressions.items() if record.get("flagged")]
    full = detail == "full" or (detail == "auto" and len(series) <= FULL_LIMIT and len(regressions) <= FULL_LIMIT)
    counted = frozenset({1})

    lines = [f"{paint('reportgen ' + str(document.get('tool_version', '')), 'heading')}  "
             f"{paint('run ' + str(document.get('run_id', '')), 'muted')}",
             paint(f"Series ({len(series):,}): order of integration", "heading")]
    lines += _table(_series_rows(series), paint) if full else _table(_order_counts(series), paint, right=counted)
    lines.append(paint(f"Regressions ({len(regressions):,}): verdict", "heading"))
    if full:
        lines += _table((_regression_row(name, record) for name, record in regressions.items()), paint)
    else:
        lines += _table(_verdict_counts(regressions), paint, right=counted)
    if not full and flagged:
        shown = flagged[:FLAGGED_LISTED]
        more = f"; the first {len(shown):,} in manifest order" if len(flagged) > len(shown) else ""
        lines.append(paint(f"Flagged regressions ({len(flagged):,}{more})", "heading"))
        lines += _table((_regression_row(name, regressions[name], attention=False) for name in shown), paint)
        if len(flagged) > len(shown):
            lines.append(f"  and {len(flagged) - len(shown):,} more: --summary full lists every one")

    lines.append(f"{_count(len(series), 'series', 'series')}, {_count(len(regressions), 'regression')}, "
                 + paint(f"{len(flagged):,} flagged", "attention" if flagged else None))
    lines += _files(files, out_dir) if out_dir is not None else [f"wrote {path}" for path in files]
    return "\n".join(lines)
