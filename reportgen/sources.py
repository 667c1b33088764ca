"""Read data files into period-indexed tables, with every problem reported, nothing dropped.

A dataset is a CSV file with one date column and numeric columns. Dates are parsed by
reportgen's own rules (``2011``, ``2011Q1``/``2011-Q1``, ``2011-03``, ``2011-03-14``), put on a
``PeriodIndex`` of the declared or inferred frequency, sorted, and checked for duplicates and
gaps. Cells are parsed as numbers column by column, only for the columns a series uses; a
non-numeric cell is an error naming its line, column and value. Empty cells before a column's
first value or after its last are that series' span; empty cells inside it are an error.

Parquet, Excel and SQLite files give typed cells, turned into the text a CSV would hold. A
PostgreSQL dataset is one read-only, timed SELECT on a server whose URL an environment variable
holds (:func:`read_server_table`); its result is kept as a canonical CSV snapshot
(:func:`snapshot_bytes`), whose bytes are hashed and read like a file's. No message, record or
snapshot ever holds the URL's password (:class:`ServerSource` is what is recorded).
"""

from __future__ import annotations

import contextlib
import csv
import datetime
import hashlib
import io
import itertools
import math
import os
import re
import urllib.parse
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from reportgen.errors import (
    CellRangeError,
    ColumnEmptyError,
    ColumnMissingError,
    ConversionError,
    DataEmptyError,
    DataEncodingError,
    DataFormatUnknownError,
    DataIsFolderError,
    DataNotFoundError,
    DataUnreadableError,
    DatesDuplicateError,
    DatesIrregularError,
    DatesUnparsableError,
    DatesUnsortedError,
    DuplicateColumnError,
    FrequencyMismatchError,
    FrequencyUnknownError,
    IndexColumnMissingError,
    Location,
    MissingValuesError,
    NonNumericCellsError,
    RaggedRowsError,
    ReportgenError,
    ServerUnreachableError,
    ServerUrlInvalidError,
    ServerUrlUnsetError,
    SheetMissingError,
    SourcePackageMissingError,
    SqlQueryError,
)
from reportgen.periods import period_label

_PANDAS_FREQ = {"annual": "Y", "quarterly": "Q", "monthly": "M", "weekly": "W-SUN", "daily": "D"}
_PATTERNS: tuple[tuple[str, re.Pattern[str]], ...] = (
    ("annual", re.compile(r"(\d{4})", re.ASCII)),
    ("quarterly", re.compile(r"(\d{4})-?[Qq]([1-4])", re.ASCII)),
    ("monthly", re.compile(r"(\d{4})-(\d{1,2})", re.ASCII)),
    ("date", re.compile(r"(\d{4})-(\d{1,2})-(\d{1,2})", re.ASCII)),
)
_MISSING = {"", "na", "n/a", "nan", "null", "none", "-", "."}
#: How many offending rows an error message lists before summarising.
LISTED = 8


@dataclass(frozen=True, slots=True)
class Column:
    """A column as numbers over the span analysed, and what its missing-data policy did to it."""

    values: pd.Series
    policy: str
    dropped: tuple[str, ...] = ()  # periods before the first or after the last value, left out
    interpolated: tuple[str, ...] = ()  # interior periods filled by linear interpolation

    def describe(self) -> tuple[str, ...]:
        """The policy's effect in sentences, for the dossier's notes."""
        notes: list[str] = []
        if self.dropped:
            notes.append(f"missing data ({self.policy}): {len(self.dropped)} empty period(s) at the start or end "
                         f"left out: {_listing(list(self.dropped))}")
        if self.interpolated:
            notes.append(f"missing data ({self.policy}): {len(self.interpolated)} interior period(s) filled by "
                         f"linear interpolation: {_listing(list(self.interpolated))}")
        return tuple(notes)


@dataclass(frozen=True, slots=True)
class Table:
    """A dataset as read: its raw text cells on a period index, plus what the file was."""

    name: str
    path: Path | None  # None for a server query
    display_path: str
    raw: bytes  # the file's bytes; for a server query, the snapshot of its result (see snapshot_bytes)
    index_column: str
    frequency: str
    frequency_source: str
    periods: pd.PeriodIndex
    lines: tuple[int, ...]  # the file line of each row, in period order; 0 for a period with no row
    cells: Mapping[str, tuple[str, ...]]  # column -> text cells in period order
    notes: tuple[str, ...]
    missing: str = "error"  # the dataset's missing-data policy
    inserted: tuple[str, ...] = ()  # calendar periods without a row, added as empty (policy interpolate)
    unit: str = "line"  # how messages name a row of the file: "line" (CSV) or "row" (Parquet, Excel)
    server: ServerSource | None = None  # where a server query ran (no password); None for a file

    def _row(self, position: int) -> str:
        label = period_label(self.periods[position])
        line = self.lines[position]
        return f"{self.unit} {line} ({label})" if line else f"{label} (no row in the file)"

    def column(self, name: str, where: Location, policy: str | None = None) -> Column:
        """A column as numbers under a missing-data policy; errors name the line, the column and the value.

        ``policy`` (the series' own, else the dataset's) is ``error`` (no empty cell at all),
        ``drop-leading-trailing`` (the span between the first and the last value, no gap inside)
        or ``interpolate`` (that span, with interior gaps filled linearly).
        """
        policy = policy or self.missing
        if name not in self.cells:
            raise ColumnMissingError(location=where, dataset=self.name, file=self.display_path, column=name,
                                     columns=", ".join(self.cells))
        texts = self.cells[name]
        values = np.full(len(texts), np.nan)
        bad: list[str] = []
        for position, text in enumerate(texts):
            stripped = text.strip()
            if stripped.lower() in _MISSING:
                continue
            try:
                # Python's float() accepts "1_000" and digits of any script; a data cell is ASCII text.
                if not stripped.isascii():
                    raise ValueError(stripped)
                number = float(stripped.replace("_", "x"))
            except ValueError:
                bad.append(f"{self._row(position)}: {text!r}")
                continue
            if not math.isfinite(number):
                bad.append(f"{self._row(position)}: {text!r}")
                continue
            values[position] = number
        if bad:
            raise NonNumericCellsError(location=where, column=name, file=self.display_path, listing=_listing(bad))
        present = np.flatnonzero(~np.isnan(values))
        if present.size == 0:
            raise ColumnEmptyError(location=where, column=name, file=self.display_path)
        first, last = int(present[0]), int(present[-1])
        outer = [*range(first), *range(last + 1, len(values))]
        inner = [int(i) for i in np.flatnonzero(np.isnan(values[first:last + 1])) + first]
        if policy == "error" and (outer or inner):
            empty = sorted(outer + inner)
            where_text = "inside its span" if not outer else "at its start or end" if not inner else \
                "at its start or end and inside its span"
            raise MissingValuesError(
                location=where, column=name, file=self.display_path, where=where_text,
                listing=_listing([self._row(i) for i in empty]),
                remedy=("fill them in the data, or declare 'missing: drop-leading-trailing' (analyse the span with "
                        "values) or 'missing: interpolate' (also fill interior gaps linearly) on the series or its "
                        "dataset; either is recorded in the dossier"))
        if policy == "drop-leading-trailing" and inner:
            raise MissingValuesError(
                location=where, column=name, file=self.display_path, where="inside its span",
                listing=_listing([self._row(i) for i in inner]),
                remedy=("fill the gaps in the data, or declare 'missing: interpolate' to fill them linearly "
                        "(recorded in the dossier); reportgen never closes interior gaps silently"))
        span = values[first:last + 1].copy()
        if inner:
            known = np.flatnonzero(~np.isnan(span))
            gaps = np.flatnonzero(np.isnan(span))
            span[gaps] = np.interp(gaps, known, span[known])
        return Column(values=pd.Series(span, index=self.periods[first:last + 1], name=name), policy=policy,
                      dropped=tuple(period_label(self.periods[i]) for i in outer),
                      interpolated=tuple(period_label(self.periods[i]) for i in inner))


def _listing(items: list[str]) -> str:
    shown = "; ".join(items[:LISTED])
    return shown if len(items) <= LISTED else f"{shown}; and {len(items) - LISTED} more"


def _date_kind(text: str) -> tuple[str, tuple[int, ...]] | None:
    """The form of a date label and its parts, or None when it is not a valid date."""
    for kind, pattern in _PATTERNS:
        match = pattern.fullmatch(text.strip())
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


#: How an error message names each form of date label.
_FORM_NAMES = {"annual": "annual (2011)", "quarterly": "quarterly (2011Q1)", "monthly": "monthly (2011-03)",
               "date": "dated (2011-03-14)"}
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


#: File formats a dataset may have, by the suffixes that imply them.
FORMATS_BY_SUFFIX: dict[str, str] = {".csv": "csv", ".txt": "csv", ".parquet": "parquet", ".pq": "parquet",
                                     ".xlsx": "excel", ".xlsm": "excel", ".sqlite": "sqlite", ".sqlite3": "sqlite",
                                     ".db": "sqlite"}
_SELECT = re.compile(r"\s*(?:--[^\n]*\n\s*|/\*.*?\*/\s*)*(select|with)\b", re.IGNORECASE | re.DOTALL)


def data_format(display_path: str, declared: str | None, where: Location) -> str:
    """The format of a data file: declared, else implied by its suffix."""
    if declared is not None:
        return declared
    suffix = Path(display_path).suffix.lower()
    if suffix not in FORMATS_BY_SUFFIX:
        raise DataFormatUnknownError(location=where, file=display_path, suffix=suffix or "(none)")
    return FORMATS_BY_SUFFIX[suffix]


def _csv_rows(raw: bytes, here: str, display_path: str, where: Location) -> tuple[list[list[str]], list[int]]:
    """The rows of a CSV file as text cells, with the line each row starts on."""
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        before = raw[:error.start]
        line, column = before.count(b"\n") + 1, error.start - (before.rfind(b"\n") + 1) + 1
        raise DataEncodingError(location=Location(here, line, column), file=display_path, offset=error.start) from None
    if "\x00" in text:
        raise DataEncodingError(f"{display_path} holds NUL bytes (the first at character {text.index(chr(0))}); "
                                "it is not a text file", location=where)
    rows: list[list[str]] = []
    numbers: list[int] = []  # the file line each row starts on (a quoted cell may span lines)
    reader = csv.reader(io.StringIO(text, newline=""))
    try:
        previous = 0
        for row in reader:
            if row:  # a blank line is not a row
                rows.append(row)
                numbers.append(previous + 1)
            previous = reader.line_num
    except csv.Error as error:
        raise RaggedRowsError(location=Location(here, reader.line_num), file=display_path,
                              listing=f"line {reader.line_num} cannot be read as CSV ({error})") from None
    return rows, numbers


def _cell_text(value: object) -> str:
    """A typed cell (Parquet, Excel) as the text a CSV would hold: numbers exactly, dates as ISO dates."""
    if value is None:
        return ""
    if isinstance(value, bool):
        return str(value)
    if isinstance(value, int | np.integer):
        return str(int(value))
    if isinstance(value, float | np.floating):
        number = float(value)
        return "" if math.isnan(number) else repr(number)
    if isinstance(value, datetime.datetime | pd.Timestamp):
        if pd.isna(value):
            return ""
        moment = pd.Timestamp(value)
        return moment.strftime("%Y-%m-%d") if moment == moment.normalize() else moment.isoformat(sep=" ")
    if isinstance(value, datetime.date):
        return value.isoformat()
    return str(value)


def _needs(module: str, extra: str, file: str, where: Location) -> object:
    """Import an optional reader, or say how to install it."""
    import importlib

    try:
        return importlib.import_module(module)
    except ImportError:
        raise SourcePackageMissingError(location=where, file=file, package=module, extra=extra) from None


def _parquet_rows(raw: bytes, display_path: str, where: Location) -> tuple[list[list[str]], list[int]]:
    """The rows of a Parquet file as text cells; row 1 is the header (the column names)."""
    parquet = _needs("pyarrow.parquet", "parquet", display_path, where)
    try:
        table = parquet.read_table(io.BytesIO(raw))  # type: ignore[attr-defined]
    except Exception as error:  # pyarrow raises its own ArrowInvalid and OSError subclasses
        raise DataUnreadableError(location=where, file=display_path,
                                  reason=f"not a readable Parquet file ({error})") from None
    columns = [table.column(position).to_pylist() for position in range(table.num_columns)]
    rows = [list(table.column_names)] + [[_cell_text(column[row]) for column in columns]
                                         for row in range(table.num_rows)]
    return rows, list(range(1, len(rows) + 1))


def _excel_rows(raw: bytes, display_path: str, sheet: str | None, cells: str | None, where: Location,
                sheet_where: Location, range_where: Location) -> tuple[list[list[str]], list[int]]:
    """The rows of an Excel sheet (or of a cell range of it) as text cells, with their sheet row numbers."""
    openpyxl = _needs("openpyxl", "excel", display_path, where)
    try:
        book = openpyxl.load_workbook(io.BytesIO(raw), read_only=True, data_only=True)  # type: ignore[attr-defined]
    except Exception as error:  # zipfile, XML and openpyxl errors alike: the file is not a workbook
        raise DataUnreadableError(location=where, file=display_path,
                                  reason=f"not a readable Excel workbook ({type(error).__name__}: {error})") from None
    try:
        if sheet is not None and sheet not in book.sheetnames:
            raise SheetMissingError(location=sheet_where, file=display_path, sheet=sheet,
                                    sheets=", ".join(book.sheetnames))
        worksheet = book[sheet] if sheet is not None else book.worksheets[0]
        bounds: dict[str, int] = {}
        if cells is not None:
            from openpyxl.utils.cell import range_boundaries

            try:
                first_column, first_row, last_column, last_row = range_boundaries(cells.upper())
            except (ValueError, TypeError):
                raise CellRangeError(location=range_where, range=cells) from None
            if None in (first_column, first_row, last_column, last_row):
                raise CellRangeError(location=range_where, range=cells)
            bounds = {"min_row": first_row, "max_row": last_row, "min_col": first_column, "max_col": last_column}
        start = bounds.get("min_row", 1)
        rows: list[list[str]] = []
        numbers: list[int] = []
        for offset, values in enumerate(worksheet.iter_rows(values_only=True, **bounds)):
            row = [_cell_text(value) for value in values]
            if any(cell.strip() for cell in row):
                rows.append(row)
                numbers.append(start + offset)
    finally:
        book.close()
    width = max((len(row) for row in rows), default=0)  # read-only sheets may give short rows
    rows = [row + [""] * (width - len(row)) for row in rows]
    while rows and rows[0] and not rows[0][-1].strip() and all(not row[-1].strip() for row in rows):
        rows = [row[:-1] for row in rows]  # columns empty throughout, right of the data
    return rows, numbers


def _sqlite_rows(raw: bytes, display_path: str, query: str | None, where: Location,
                 query_where: Location) -> tuple[list[list[str]], list[int]]:
    """The rows a SELECT query returns from an SQLite database file, through SQLAlchemy, read-only.

    The query runs on a private copy of the bytes that were hashed (so the hash and the rows agree),
    with an authorizer that allows reading only: no ATTACH (another file), no PRAGMA, no writes.
    Row 1 is the header (the result's column names); the result's order is the file's row order.
    """
    if query is None:
        raise SqlQueryError(location=where, problem=f"{display_path} is an SQLite database; say what to read",
                            remedy="add query: \"SELECT month, sales FROM ledger ORDER BY month\" to the dataset")
    if not _SELECT.match(query) or query.strip().rstrip(";").count(";"):
        raise SqlQueryError(location=query_where, problem="the query must be one SELECT (or WITH ... SELECT) "
                                                          "statement", remedy="remove other statements")
    sqlalchemy = _needs("sqlalchemy", "sql", display_path, where)
    import sqlite3
    import tempfile

    allowed = {sqlite3.SQLITE_SELECT, sqlite3.SQLITE_READ, sqlite3.SQLITE_FUNCTION}
    recursive = getattr(sqlite3, "SQLITE_RECURSIVE", None)
    if recursive is not None:
        allowed.add(recursive)

    def authorize(action: int, *_: object) -> int:
        return sqlite3.SQLITE_OK if action in allowed else sqlite3.SQLITE_DENY

    with tempfile.TemporaryDirectory(prefix="reportgen-sqlite-") as folder:
        copy = Path(folder) / "snapshot.sqlite"
        copy.write_bytes(raw)
        engine = sqlalchemy.create_engine(f"sqlite:///file:{copy}?mode=ro&uri=true")  # type: ignore[attr-defined]
        try:
            with engine.connect() as connection:
                connection.connection.driver_connection.set_authorizer(authorize)
                result = connection.execute(sqlalchemy.text(query))  # type: ignore[attr-defined]
                names = result.keys()
                header = [str(column) for column in names]
                records = [[_cell_text(value) for value in record] for record in result]
        except sqlalchemy.exc.SQLAlchemyError as error:  # type: ignore[attr-defined]
            reason = str(getattr(error, "orig", None) or error).splitlines()[0]
            raise SqlQueryError(location=query_where, problem=f"the query on {display_path} failed: {reason}",
                                remedy="check the table and column names (the database is opened read-only)"
                                ) from None
        finally:
            engine.dispose()
    rows = [header, *records]
    return rows, list(range(1, len(rows) + 1))


def read_table(name: str, path: Path, display_path: str, index_column: str, declared: str | None,
               where: Location, index_where: Location, *, missing: str = "error", sort: bool = False,
               shown_path: str | None = None, file_format: str | None = None, sheet: str | None = None,
               cells: str | None = None, sheet_where: Location | None = None,
               range_where: Location | None = None, query: str | None = None,
               query_where: Location | None = None) -> Table:
    """Read a dataset (CSV, Parquet or an Excel sheet); every problem raises a catalogue error naming file, line, value.

    ``missing`` is the dataset's missing-data policy: with ``interpolate`` a period of the
    calendar that has no row becomes a row of empty cells (to be filled), otherwise it is an
    error. ``sort`` lets rows out of date order be sorted (recorded in the notes) rather than refused.
    ``shown_path`` is the file as errors locate it (from the current folder); messages and the
    dossier use ``display_path``, the path as the manifest gives it. ``file_format`` is the
    declared format (else implied by the suffix); ``sheet`` and ``cells`` (``A3:F200``) choose
    the part of a workbook to read. Typed cells are turned into the text a CSV would hold (numbers
    exactly), so every format goes through the same date and number rules.
    """
    here = shown_path or display_path
    kind = data_format(display_path, file_format, where)
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise DataNotFoundError(location=where, file=display_path) from None
    except IsADirectoryError:
        raise DataIsFolderError(location=where, file=display_path) from None
    except OSError as error:
        raise DataUnreadableError(location=where, file=display_path, reason=error.strerror or str(error)) from None
    if kind == "parquet":
        rows, numbers = _parquet_rows(raw, display_path, where)
        unit = "row"
    elif kind == "sqlite":
        rows, numbers = _sqlite_rows(raw, display_path, query, where, query_where or where)
        unit = "result row"
    elif kind == "excel":
        rows, numbers = _excel_rows(raw, display_path, sheet, cells, where, sheet_where or where,
                                    range_where or where)
        unit = "row"
    else:
        rows, numbers = _csv_rows(raw, here, display_path, where)
        unit = "line"
    return _table_from_rows(name, path, display_path, here, raw, rows, numbers, unit, index_column, declared, where,
                            index_where, missing=missing, sort=sort)


def _table_from_rows(name: str, path: Path | None, display_path: str, here: str, raw: bytes, rows: list[list[str]],
                     numbers: list[int], unit: str, index_column: str, declared: str | None, where: Location,
                     index_where: Location, *, missing: str, sort: bool, server: ServerSource | None = None) -> Table:
    """A table from text rows (row 1 the header) by the date, order, gap and duplicate rules every format shares."""
    while rows and not any(cell.strip() for cell in rows[-1]):
        rows.pop()
        numbers.pop()
    if not rows:
        raise DataEmptyError(location=where, file=display_path, problem="is empty")
    header = [cell.strip() for cell in rows[0]]
    if index_column not in header:
        raise IndexColumnMissingError(location=index_where, file=display_path, column=index_column,
                                      columns=", ".join(header))
    duplicated = sorted({column for column in header if header.count(column) > 1})
    if duplicated:
        raise DuplicateColumnError(location=Location(here, numbers[0]), file=display_path,
                                   columns=", ".join(duplicated))
    body = rows[1:]
    if not body:
        raise DataEmptyError(location=where, file=display_path, problem="has a header but no rows")
    position = header.index(index_column)
    parsed: list[tuple[str, tuple[int, ...]]] = []
    unparsable: list[tuple[int, str]] = []
    ragged: list[tuple[int, str]] = []
    for line_number, row in zip(numbers[1:], body, strict=True):
        if len(row) != len(header):
            ragged.append((line_number, f"{unit} {line_number} has {len(row)} fields, the header {len(header)}"))
            continue
        kind = _date_kind(row[position])
        if kind is None:
            unparsable.append((line_number, f"{unit} {line_number}: {row[position]!r}"))
        else:
            parsed.append(kind)
    if ragged:
        raise RaggedRowsError(location=Location(here, ragged[0][0]), file=display_path,
                              listing=_listing([text for _, text in ragged]))
    if unparsable:
        raise DatesUnparsableError(location=Location(here, unparsable[0][0]), column=index_column,
                                   file=display_path, listing=_listing([text for _, text in unparsable]))
    kinds = {kind for kind, _ in parsed}
    timestamps = [pd.Timestamp(year=p[0], month=p[1], day=p[2]) for kind, p in parsed if kind == "date"]
    frequency = declared or _infer_frequency(kinds, timestamps)
    if frequency is None:
        forms = ", ".join(_FORM_NAMES[kind] for kind in sorted(kinds))
        raise FrequencyUnknownError(location=where, file=display_path, forms=forms)
    coarsest = {"annual": "annual", "quarterly": "quarterly", "monthly": "monthly", "date": "daily"}
    too_coarse = sorted(kind for kind in kinds if _RANK[coarsest[kind]] < _RANK[frequency])
    if too_coarse:
        raise FrequencyMismatchError(location=where, file=display_path, frequency=frequency,
                                     form=_FORM_NAMES[too_coarse[0]])
    periods = [_to_period(kind, parts, frequency) for kind, parts in parsed]
    lines = numbers[1:]
    notes: list[str] = []
    seen: dict[pd.Period, int] = {}
    duplicates: list[tuple[int, str]] = []
    for period, line in zip(periods, lines, strict=True):
        if period in seen:
            duplicates.append((line, f"{period_label(period)} on {unit}s {seen[period]} and {line}"))
        else:
            seen[period] = line
    if duplicates:
        raise DatesDuplicateError(location=Location(here, duplicates[0][0]), file=display_path,
                                  listing=_listing([text for _, text in duplicates]), frequency=frequency)
    order = sorted(range(len(periods)), key=lambda i: periods[i])
    if order != list(range(len(periods))):
        steps_back = [i + 1 for i in range(len(periods) - 1) if periods[i + 1] < periods[i]]
        backwards = [f"{unit} {lines[i]} ({period_label(periods[i])} after {period_label(periods[i - 1])})"
                     for i in steps_back]
        if not sort:
            raise DatesUnsortedError(location=Location(here, lines[steps_back[0]]), file=display_path,
                                     listing=_listing(backwards))
        notes.append(f"rows of {display_path} were not in date order ({len(backwards)} step(s) back in time, the "
                     f"first at {backwards[0]}); reportgen sorted them, as the dataset's 'sort: true' allows")
    index = pd.PeriodIndex([periods[i] for i in order], freq=_PANDAS_FREQ[frequency])
    full = pd.period_range(index[0], index[-1], freq=index.freq)
    row_lines = [lines[i] for i in order]
    cells = {column: [body[i][k] for i in order] for k, column in enumerate(header) if column != index_column}
    inserted: list[str] = []
    if len(full) != len(index):
        absent = [period_label(period) for period in full.difference(index)]
        if missing != "interpolate":
            raise DatesIrregularError(location=Location(here), file=display_path, count=len(absent),
                                      frequency=frequency, listing=_listing(absent))
        present = {period: position for position, period in enumerate(index)}
        row_lines = [row_lines[present[period]] if period in present else 0 for period in full]
        cells = {column: [texts[present[period]] if period in present else "" for period in full]
                 for column, texts in cells.items()}
        index, inserted = full, absent
        notes.append(f"{display_path} has no row for {len(absent)} period(s) of its {frequency} calendar "
                     f"({_listing(absent)}); under 'missing: interpolate' they are treated as empty cells")
    return Table(name=name, path=path, display_path=display_path, raw=raw, index_column=index_column,
                 frequency=frequency, frequency_source="declared" if declared else "inferred", periods=index,
                 lines=tuple(row_lines), cells={column: tuple(texts) for column, texts in cells.items()},
                 notes=tuple(notes), missing=missing, inserted=tuple(inserted), unit=unit, server=server)


# ---------------------------------------------------------------- database servers

#: The SQLAlchemy drivers a PostgreSQL URL may name; a plain ``postgresql://`` URL uses psycopg (version 3).
_POSTGRES_DRIVERS = {"postgresql": "psycopg", "postgres": "psycopg", "postgresql+psycopg": "psycopg",
                     "postgresql+psycopg2": "psycopg2"}
#: The Python module each driver needs.
_DRIVER_MODULES = {"psycopg": "psycopg", "psycopg2": "psycopg2"}
#: Seconds a server query may run unless the dataset says otherwise (PostgreSQL's statement_timeout).
DEFAULT_QUERY_TIMEOUT = 60
#: Seconds to wait for the server to answer a connection.
CONNECT_TIMEOUT = 10


@dataclass(frozen=True, slots=True)
class ServerSource:
    """A database server as results.json records it: driver, host, port, database, user, variable; never a password."""

    dialect: str  # "postgresql"
    driver: str  # "psycopg"
    host: str  # a name or address, or the folder of a Unix socket; empty for the driver's default
    port: int | None
    database: str
    user: str
    url_env: str  # the environment variable that held the URL

    def display(self) -> str:
        """The server as messages and the dossier name it: ``postgresql+psycopg://user@host:port/database``."""
        user = f"{self.user}@" if self.user else ""
        port = f":{self.port}" if self.port is not None else ""
        return f"{self.dialect}+{self.driver}://{user}{self.host}{port}/{self.database}"

    def record(self) -> dict[str, Any]:
        """The JSON form written to results.json (``datasets.NAME.server``)."""
        return {"dialect": self.dialect, "driver": self.driver, "host": self.host, "port": self.port,
                "database": self.database, "user": self.user, "url_env": self.url_env}

    @classmethod
    def from_record(cls, record: Mapping[str, Any]) -> ServerSource:
        """The source a results document recorded (the inverse of :meth:`record`)."""
        port = record.get("port")
        return cls(dialect=str(record.get("dialect", "")), driver=str(record.get("driver", "")),
                   host=str(record.get("host", "")), port=None if port is None else int(port),
                   database=str(record.get("database", "")), user=str(record.get("user", "")),
                   url_env=str(record.get("url_env", "")))


@dataclass(frozen=True, slots=True)
class ServerSnapshot:
    """A server query's result as recorded (a bundle's snapshot), read instead of querying the server again."""

    source: ServerSource
    content: bytes  # the snapshot's bytes (see :func:`snapshot_bytes`)


def snapshot_bytes(rows: Iterable[Iterable[str]]) -> bytes:
    """The canonical bytes of a query result: CSV (RFC 4180 quoting, LF line ends, UTF-8), header first.

    Cells are the text :func:`_cell_text` gives (floats by ``repr``, so exactly; dates as ISO
    dates; NULL empty), so the same result always gives the same bytes and the same SHA-256.
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n", quoting=csv.QUOTE_MINIMAL)
    for row in rows:
        writer.writerow(list(row))
    return buffer.getvalue().encode("utf-8")


def _scrubbed(text: str, secrets: Iterable[str]) -> str:
    """``text`` with every secret (and its %-encoded forms) replaced by ``***``."""
    for secret in sorted({item for item in secrets if item}, key=len, reverse=True):
        for form in {secret, urllib.parse.quote(secret, safe=""), urllib.parse.quote_plus(secret)}:
            text = text.replace(form, "***")
    return text


def server_url(dialect: str, url_env: str, where: Location,
               environ: Mapping[str, str] | None = None) -> tuple[Any, ServerSource, tuple[str, ...]]:
    """The SQLAlchemy URL held by the environment variable ``url_env``, its recorded form, and the secrets in it.

    The variable's value is never put in a message: it holds the password. The secrets (the
    whole value and the password) are returned so that the caller can scrub them from any
    message a driver gives.
    """
    environment = os.environ if environ is None else environ
    value = environment.get(url_env)
    if value is None or not value.strip():
        raise ServerUrlUnsetError(location=where, variable=url_env, state="not set" if value is None else "empty",
                                  dialect="PostgreSQL")
    sqlalchemy = _needs("sqlalchemy", "sql", f"the {dialect} server", where)
    secrets: tuple[str, ...] = (value.strip(),)
    try:
        url = sqlalchemy.engine.make_url(value.strip())  # type: ignore[attr-defined]
    except Exception:  # any failure: its message would repeat the value, password included
        raise ServerUrlInvalidError(location=where, variable=url_env, dialect="PostgreSQL",
                                    problem="it cannot be read as a URL") from None
    if url.password:
        secrets += (str(url.password),)
    for key, given in url.query.items():  # ?password=... or ?sslpassword=...: secrets too
        if "pass" in key.lower():
            secrets += tuple(str(item) for item in ((given,) if isinstance(given, str) else given))
    driver = _POSTGRES_DRIVERS.get(url.drivername)
    if driver is None:
        scheme = _scrubbed(str(url.drivername), secrets)
        raise ServerUrlInvalidError(location=where, variable=url_env, dialect="PostgreSQL",
                                    problem=f"it names the driver '{scheme}'; reportgen reads PostgreSQL servers "
                                            "(postgresql:// or postgresql+psycopg://)")
    if not url.database:
        raise ServerUrlInvalidError(location=where, variable=url_env, dialect="PostgreSQL",
                                    problem="it names no database (the part after the last '/')")
    url = url.set(drivername=f"postgresql+{driver}")
    socket_host = url.query.get("host")
    host = url.host or (socket_host if isinstance(socket_host, str) else "")
    source = ServerSource(dialect="postgresql", driver=driver, host=_scrubbed(host, secrets), port=url.port,
                          database=_scrubbed(str(url.database), secrets),
                          user=_scrubbed(str(url.username or ""), secrets), url_env=url_env)
    return url, source, secrets


def _connection_remedy(reason: str, variable: str) -> str:
    """What to do about a failed connection, from the driver's words."""
    lowered = reason.lower()
    if "password" in lowered or "authentication" in lowered:
        return f"check the user name and password in {variable}, and that the server lets this user log in"
    if "does not exist" in lowered:
        return f"check the database and user names in {variable}"
    if "refused" in lowered or "timeout" in lowered or "timed out" in lowered or "could not translate" in lowered:
        return f"check that the server is running and that the host and port in {variable} are right"
    return f"check the URL in {variable} and that the server accepts connections from this machine"


def _server_rows(url: Any, source: ServerSource, secrets: tuple[str, ...], query: str, timeout: int,
                 where: Location, query_where: Location) -> list[list[str]]:
    """The rows one read-only SELECT returns from a server; row 1 is the header (the result's column names).

    The query runs in a transaction begun ``READ ONLY`` (PostgreSQL then refuses any write,
    also one hidden in a ``WITH`` clause or a function) with ``statement_timeout`` set for that
    transaction only, and the transaction is rolled back. Every message is scrubbed of the URL
    and the password.
    """
    if not _SELECT.match(query) or query.strip().rstrip(";").count(";"):
        raise SqlQueryError(location=query_where, problem="the query must be one SELECT (or WITH ... SELECT) "
                                                          "statement", remedy="remove other statements")
    server = source.display()
    sqlalchemy = _needs("sqlalchemy", "sql", server, where)
    driver = _needs(_DRIVER_MODULES[source.driver], "sql", server, where)
    from sqlalchemy.pool import NullPool

    engine = sqlalchemy.create_engine(url, poolclass=NullPool, hide_parameters=True,  # type: ignore[attr-defined]
                                      connect_args={"connect_timeout": CONNECT_TIMEOUT,
                                                    "application_name": "reportgen"})
    errors = (sqlalchemy.exc.SQLAlchemyError, driver.Error)  # type: ignore[attr-defined]

    def reason_of(error: BaseException) -> str:
        original = getattr(error, "orig", None) or error
        lines = [line.strip() for line in str(original).splitlines() if line.strip()]
        return _scrubbed(lines[0] if lines else type(original).__name__, secrets)

    try:
        try:
            connection = engine.connect()
        except errors as error:
            reason = reason_of(error)
            raise ServerUnreachableError(location=where, server=server, variable=source.url_env, reason=reason,
                                         remedy=_connection_remedy(reason, source.url_env)) from None
        with connection:
            transaction = connection.begin()
            try:
                # The driver's own cursor: the query text goes to the server as written, with no placeholders
                # read into it (a '%' or ':name' in the SQL stays SQL).
                cursor = connection.connection.cursor()
                cursor.execute("SET TRANSACTION READ ONLY")
                cursor.execute("SELECT set_config('statement_timeout', %s, true)", (f"{timeout * 1000}",))
                cursor.execute(query)
                if cursor.description is None:
                    raise SqlQueryError(location=query_where, problem=f"the query on {server} returned no rows "
                                                                      "(it is not a SELECT)",
                                        remedy="give one SELECT statement")
                header = [str(column[0]) for column in cursor.description]
                records = [[_cell_text(value) for value in record] for record in cursor.fetchall()]
            except errors as error:
                reason = reason_of(error)
                timed_out = "statement timeout" in reason
                raise SqlQueryError(
                    location=query_where, problem=f"the query on {server} failed: {reason}",
                    remedy=(f"the query ran longer than {timeout} s: make it faster, or raise the dataset's "
                            "query_timeout") if timed_out else
                    "check the table and column names; the query runs in a read-only transaction, so it cannot "
                    "write") from None
            finally:
                with contextlib.suppress(*errors):  # a broken connection has nothing left to roll back
                    transaction.rollback()
    finally:
        engine.dispose()
    return [header, *records]


def query_snapshot(dialect: str, url_env: str, query: str, where: Location, query_where: Location, *,
                   timeout: int = DEFAULT_QUERY_TIMEOUT,
                   environ: Mapping[str, str] | None = None) -> tuple[ServerSource, bytes]:
    """Run a server query read-only and return where it ran (no password) and the snapshot bytes of its result."""
    url, source, secrets = server_url(dialect, url_env, where, environ)
    return source, snapshot_bytes(_server_rows(url, source, secrets, query, timeout, where, query_where))


def read_server_table(name: str, dialect: str, url_env: str, query: str, index_column: str, declared: str | None,
                      where: Location, index_where: Location, query_where: Location, *,
                      timeout: int = DEFAULT_QUERY_TIMEOUT, missing: str = "error", sort: bool = False,
                      snapshot: ServerSnapshot | None = None, environ: Mapping[str, str] | None = None) -> Table:
    """Read a dataset from a database server: run its query, keep the result's snapshot as the table's bytes.

    ``where`` locates the dataset's ``url_env``, ``query_where`` its query. The result is
    serialised by :func:`snapshot_bytes` and the table is read from those bytes, so the
    snapshot's SHA-256 is that of exactly what was analysed and a snapshot read again (a
    bundle's, given as ``snapshot``, with no server at all) gives the same table. ``environ``
    replaces ``os.environ`` (for tests).
    """
    if snapshot is not None:
        source, raw = snapshot.source, snapshot.content
    else:
        source, raw = query_snapshot(dialect, url_env, query, where, query_where, timeout=timeout, environ=environ)
    display = source.display()
    try:
        rows, _ = _csv_rows(raw, display, display, query_where)
        return _table_from_rows(name, None, display, display, raw, rows, list(range(1, len(rows) + 1)),
                                "result row", index_column, declared, query_where, index_where, missing=missing,
                                sort=sort, server=source)
    except DataEmptyError as error:
        raise DataEmptyError(error.message, location=query_where,
                             hint="check the query's conditions and that its tables hold rows") from None
    except ReportgenError as error:
        # A problem at a row of the result is located at the manifest's query (a server has no file lines);
        # the message names the result row.
        if error.location is None or str(error.location.path) != display:
            raise
        raise type(error)(error.message, location=query_where, hint=error.hint) from None


def convert_frequency(column: Column, source: str, target: str, how: str, where: Location) -> tuple[Column, str]:
    """A column combined into the periods of a coarser frequency, complete periods only; and a sentence saying so.

    A target period is kept when the column covers it from its first day to its last (the
    column's calendar has no gaps, so every period inside is present); ``how`` combines the
    values: the ``mean`` or ``sum`` of the periods inside, or the ``last`` or ``first`` of them.
    Dates left out and filled by the missing-data policy are those of the source frequency.
    """
    if _RANK[target] >= _RANK[source]:
        raise ConversionError(location=where, problem=f"cannot convert {source} data to {target}: the target must "
                                                      "be a coarser frequency",
                              remedy="convert to annual, quarterly, monthly or weekly data coarser than the source")
    values = column.values
    starts = values.index.to_timestamp(how="start")
    ends = values.index.to_timestamp(how="end")
    targets = pd.PeriodIndex([period.asfreq(_PANDAS_FREQ[target], how="end") for period in values.index])
    first_start, last_end = starts[0], ends[-1]
    frame = pd.DataFrame({"value": values.to_numpy(), "target": targets})
    grouped = frame.groupby("target", sort=True)["value"]
    combined = {"mean": grouped.mean, "sum": grouped.sum, "last": grouped.last, "first": grouped.first}[how]()
    keep = [period for period in combined.index
            if period.start_time >= first_start and period.end_time <= last_end]
    dropped = [period_label(period) for period in combined.index if period not in set(keep)]
    if not keep:
        raise ConversionError(location=where, problem=f"converting {source} data to {target} leaves no complete "
                                                      f"{target} period ({period_label(values.index[0])} to "
                                                      f"{period_label(values.index[-1])})",
                              remedy="use a longer sample or a finer target frequency")
    index = pd.PeriodIndex(keep, freq=_PANDAS_FREQ[target])
    converted = pd.Series(combined.loc[keep].to_numpy(dtype=float), index=index, name=values.name)
    note = (f"converted from {source} to {target}: the {how} of the {source} values in each {target} period; "
            f"{len(keep)} complete period(s)")
    if dropped:
        note += f"; incomplete period(s) left out: {_listing(dropped)}"
    return Column(values=converted, policy=column.policy, dropped=column.dropped,
                  interpolated=column.interpolated), note


def resolve_data_path(base_dir: Path, relative: str, where: Location) -> Path:
    """A dataset's path made absolute with links followed; an impossible path is a catalogue error."""
    try:
        return (base_dir / relative).resolve()
    except (OSError, RuntimeError, ValueError) as error:  # a NUL byte, a loop of links (RuntimeError on 3.11)
        raise DataUnreadableError(location=where, file=relative, reason=str(error) or type(error).__name__,
                                  hint="check the dataset's path and any links on the way") from None


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
