"""Read data files into period-indexed tables, with every problem reported, nothing dropped.

A dataset is a CSV file with one date column and numeric columns. Dates are parsed by
reportgen's own rules (``2011``, ``2011Q1``/``2011-Q1``, ``2011-03``, ``2011-03-14``), put on a
``PeriodIndex`` of the declared or inferred frequency, sorted, and checked for duplicates and
gaps. Cells are parsed as numbers column by column, only for the columns a series uses; a
non-numeric cell is an error naming its line, column and value. Empty cells before a column's
first value or after its last are that series' span; empty cells inside it are an error.
"""

from __future__ import annotations

import csv
import datetime
import hashlib
import io
import itertools
import math
import re
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from reportgen.errors import DataError, Location
from reportgen.periods import period_label

_PANDAS_FREQ = {"annual": "Y", "quarterly": "Q", "monthly": "M", "weekly": "W-SUN", "daily": "D"}
_PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    ("annual", re.compile(r"^(\d{4})$")),
    ("quarterly", re.compile(r"^(\d{4})-?[Qq]([1-4])$")),
    ("monthly", re.compile(r"^(\d{4})-(\d{1,2})$")),
    ("date", re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})$")),
)
_MISSING = {"", "na", "n/a", "nan", "null", "none", "-", "."}
#: How many offending rows an error message lists before summarising.
LISTED = 8


@dataclass(frozen=True, slots=True)
class Table:
    """A dataset as read: its raw text cells on a period index, plus what the file was."""

    name: str
    path: Path
    display_path: str
    raw: bytes
    index_column: str
    frequency: str
    frequency_source: str
    periods: pd.PeriodIndex
    lines: tuple[int, ...]  # the file line of each row, in period order
    cells: Mapping[str, tuple[str, ...]]  # column -> text cells in period order
    notes: tuple[str, ...]

    def column(self, name: str, where: Location) -> pd.Series:
        """A column as numbers over its span; errors name the line, the column and the value."""
        if name not in self.cells:
            raise DataError(f"dataset '{self.name}' ({self.display_path}) has no column '{name}'", location=where,
                            hint=f"columns: {', '.join(self.cells)}")
        texts = self.cells[name]
        values = np.full(len(texts), np.nan)
        bad: list[str] = []
        for position, text in enumerate(texts):
            stripped = text.strip()
            if stripped.lower() in _MISSING:
                continue
            try:
                # Python's float() accepts "1_000"; a data cell with an underscore is not a number.
                number = float(stripped.replace("_", "x"))
            except ValueError:
                bad.append(f"line {self.lines[position]} ({period_label(self.periods[position])}): {text!r}")
                continue
            if not math.isfinite(number):
                bad.append(f"line {self.lines[position]} ({period_label(self.periods[position])}): {text!r}")
                continue
            values[position] = number
        if bad:
            raise DataError(f"column '{name}' of {self.display_path} has non-numeric cells: {_listing(bad)}",
                            location=where, hint="fix or remove those cells; leave a cell empty for a missing value")
        present = np.flatnonzero(~np.isnan(values))
        if present.size == 0:
            raise DataError(f"column '{name}' of {self.display_path} holds no numbers", location=where,
                            hint="check the column name and the file")
        first, last = int(present[0]), int(present[-1])
        inner = np.flatnonzero(np.isnan(values[first:last + 1])) + first
        if inner.size:
            missing = [f"line {self.lines[i]} ({period_label(self.periods[i])})" for i in inner]
            raise DataError(f"column '{name}' of {self.display_path} has empty cells inside its span: "
                            f"{_listing(missing)}", location=where,
                            hint="fill the gaps in the data; reportgen never closes interior gaps silently")
        return pd.Series(values[first:last + 1], index=self.periods[first:last + 1], name=name)


def _listing(items: list[str]) -> str:
    shown = "; ".join(items[:LISTED])
    return shown if len(items) <= LISTED else f"{shown}; and {len(items) - LISTED} more"


def _date_kind(text: str) -> tuple[str, tuple[int, ...]] | None:
    """The form of a date label and its parts, or None when it is not a valid date."""
    for kind, pattern in _PATTERNS:
        match = pattern.match(text.strip())
        if match:
            parts = tuple(int(group) for group in match.groups())
            if kind in {"monthly", "date"} and not 1 <= parts[1] <= 12:
                return None
            if kind == "date":
                try:
                    datetime.date(*parts)
                except ValueError:
                    return None
            return kind, parts
    return None


def _to_period(kind: str, parts: tuple[int, ...], frequency: str, how: str = "start") -> pd.Period:
    """Place a parsed date label in a period of the target frequency.

    A coarser label (a year in a monthly calendar) maps to its first period, or its last with
    ``how="end"``; a finer one (a date in a monthly calendar) maps to the period holding it.
    """
    target = _PANDAS_FREQ[frequency]
    if kind == "annual":
        period = pd.Period(year=parts[0], freq="Y")
    elif kind == "quarterly":
        period = pd.Period(year=parts[0], quarter=parts[1], freq="Q")
    elif kind == "monthly":
        period = pd.Period(year=parts[0], month=parts[1], freq="M")
    else:
        return pd.Period(pd.Timestamp(year=parts[0], month=parts[1], day=parts[2]), freq=target)
    return period if period.freqstr == pd.Period("2000", freq=target).freqstr else period.asfreq(target, how=how)


_RANK = {"annual": 0, "quarterly": 1, "monthly": 2, "weekly": 3, "daily": 4}


def _infer_frequency(kinds: set[str], dates: list[pd.Timestamp]) -> str | None:
    if kinds == {"annual"}:
        return "annual"
    if kinds == {"quarterly"}:
        return "quarterly"
    if kinds == {"monthly"}:
        return "monthly"
    if kinds == {"date"} and len(dates) >= 2:
        ordered = sorted(set(dates))
        steps = {(later - earlier).days for earlier, later in itertools.pairwise(ordered)}
        if steps <= {1}:
            return "daily"
        if steps <= {7}:
            return "weekly"
        months = {(later.year - earlier.year) * 12 + later.month - earlier.month
                  for earlier, later in itertools.pairwise(ordered)}
        if months <= {1}:
            return "monthly"
        if months <= {3}:
            return "quarterly"
        if months <= {12}:
            return "annual"
    return None


def read_table(name: str, path: Path, display_path: str, index_column: str, declared: str | None,
               where: Location, index_where: Location) -> Table:
    """Read a CSV dataset; every problem raises a :class:`DataError` naming file, line and value."""
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise DataError(f"data file not found: {display_path}", location=where,
                        hint="paths are relative to the manifest's folder") from None
    except IsADirectoryError:
        raise DataError(f"{display_path} is a folder, not a data file", location=where) from None
    except OSError as error:
        raise DataError(f"cannot read {display_path}: {error.strerror}", location=where) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise DataError(f"{display_path} is not UTF-8 text (byte {error.start})", location=where,
                        hint="save the file as UTF-8 (CSV UTF-8 in a spreadsheet program)") from None
    rows = list(csv.reader(io.StringIO(text, newline="")))
    while rows and not any(cell.strip() for cell in rows[-1]):
        rows.pop()
    if not rows:
        raise DataError(f"{display_path} is empty", location=where)
    header = [cell.strip() for cell in rows[0]]
    if index_column not in header:
        raise DataError(f"{display_path} has no column '{index_column}' to use as the date index",
                        location=index_where, hint=f"columns in the file: {', '.join(header)}")
    duplicated = sorted({column for column in header if header.count(column) > 1})
    if duplicated:
        raise DataError(f"{display_path} repeats column name(s) {', '.join(duplicated)} in its header",
                        location=Location(display_path, 1), hint="give every column its own name")
    body = rows[1:]
    if not body:
        raise DataError(f"{display_path} has a header but no rows", location=where)
    position = header.index(index_column)
    parsed: list[tuple[str, tuple[int, ...]]] = []
    unparsable: list[str] = []
    ragged: list[str] = []
    for line_number, row in enumerate(body, start=2):
        if len(row) != len(header):
            ragged.append(f"line {line_number} has {len(row)} fields, the header {len(header)}")
            continue
        kind = _date_kind(row[position])
        if kind is None:
            unparsable.append(f"line {line_number}: {row[position]!r}")
        else:
            parsed.append(kind)
    if ragged:
        raise DataError(f"{display_path}: {_listing(ragged)}", location=Location(display_path),
                        hint="every row needs one field per column")
    if unparsable:
        raise DataError(f"column '{index_column}' of {display_path} has dates reportgen cannot read: "
                        f"{_listing(unparsable)}", location=Location(display_path),
                        hint="write dates as 2011, 2011Q1, 2011-03 or 2011-03-14")
    kinds = {kind for kind, _ in parsed}
    timestamps = [pd.Timestamp(year=p[0], month=p[1], day=p[2]) for kind, p in parsed if kind == "date"]
    frequency = declared or _infer_frequency(kinds, timestamps)
    if frequency is None:
        raise DataError(f"cannot infer the frequency of {display_path} (date forms: {', '.join(sorted(kinds))})",
                        location=where, hint="declare it: frequency: annual|quarterly|monthly|weekly|daily")
    coarsest = {"annual": "annual", "quarterly": "quarterly", "monthly": "monthly", "date": "daily"}
    too_coarse = [kind for kind in kinds if _RANK[coarsest[kind]] < _RANK[frequency]]
    if too_coarse:
        raise DataError(f"{display_path} is declared {frequency} but has {too_coarse[0]} date labels",
                        location=where, hint="declare the frequency the dates carry")
    periods = [_to_period(kind, parts, frequency) for kind, parts in parsed]
    lines = list(range(2, 2 + len(body)))
    notes: list[str] = []
    seen: dict[pd.Period, int] = {}
    duplicates: list[str] = []
    for period, line in zip(periods, lines, strict=True):
        if period in seen:
            duplicates.append(f"{period_label(period)} on lines {seen[period]} and {line}")
        else:
            seen[period] = line
    if duplicates:
        raise DataError(f"{display_path} has more than one row for a period: {_listing(duplicates)}",
                        location=Location(display_path),
                        hint=f"keep one row per period (the dataset is {frequency})")
    order = sorted(range(len(periods)), key=lambda i: periods[i])
    if order != list(range(len(periods))):
        notes.append(f"rows of {display_path} were not in date order; reportgen sorted them")
    index = pd.PeriodIndex([periods[i] for i in order], freq=_PANDAS_FREQ[frequency])
    full = pd.period_range(index[0], index[-1], freq=index.freq)
    if len(full) != len(index):
        missing = [period_label(period) for period in full.difference(index)]
        raise DataError(f"{display_path} skips {len(missing)} period(s) of its {frequency} calendar: "
                        f"{_listing(missing)}", location=Location(display_path),
                        hint="add rows for those periods (empty cells are allowed at a column's start or end)")
    cells = {column: tuple(body[i][k] for i in order) for k, column in enumerate(header) if column != index_column}
    return Table(name=name, path=path, display_path=display_path, raw=raw, index_column=index_column,
                 frequency=frequency, frequency_source="declared" if declared else "inferred", periods=index,
                 lines=tuple(lines[i] for i in order), cells=cells, notes=tuple(notes))


def canonical_table_hash(table: Table, columns: Iterable[str] | None = None) -> str:
    """SHA-256 of the table's numbers in a canonical form, so a re-saved file hashes the same.

    The canonical form is one line per period, ``label,value,value...``, values written with
    ``repr`` of the parsed float (empty for missing), columns in sorted order.
    """
    names = sorted(columns if columns is not None else table.cells)
    digest = hashlib.sha256()
    digest.update(("period," + ",".join(names) + "\n").encode())
    for position, period in enumerate(table.periods):
        fields = [period_label(period)]
        for name in names:
            text = table.cells[name][position].strip()
            try:
                fields.append(repr(float(text)) if text.lower() not in _MISSING else "")
            except ValueError:
                fields.append(text)
        digest.update((",".join(fields) + "\n").encode())
    return digest.hexdigest()


def pandas_frequency(frequency: str) -> str:
    """The pandas period alias of one of reportgen's frequencies."""
    return _PANDAS_FREQ[frequency]


def parse_period(text: str, frequency: str, how: str = "start") -> pd.Period | None:
    """A period label from a manifest (``2010-01``, ``2010Q1``) in the given frequency, or None.

    A coarser label maps to its first period (``how="start"``) or its last (``how="end"``).
    """
    kind = _date_kind(str(text))
    if kind is None:
        return None
    try:
        return _to_period(kind[0], kind[1], frequency, how)
    except ValueError:
        return None
