"""Errors a person can act on: one base class with a category, a location and a fix hint.

User errors print as ``path:line:col: error: message`` plus a hint and give exit status 2.
Anything that is not a :class:`ReportgenError` is a bug and keeps its traceback.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path


@dataclass(frozen=True, slots=True)
class Location:
    """Where a problem is: a file, optionally a line/column, optionally a key path inside it."""

    path: Path | str | None = None
    line: int | None = None
    column: int | None = None
    key_path: str | None = None

    def where(self) -> str:
        """``path:line:col`` (as much of it as is known)."""
        parts: list[str] = []
        if self.path is not None:
            parts.append(str(self.path))
            if self.line is not None:
                parts.append(str(self.line))
                if self.column is not None:
                    parts.append(str(self.column))
        return ":".join(parts)

    def __str__(self) -> str:
        where = self.where()
        if self.key_path:
            return f"{where}: {self.key_path}" if where else self.key_path
        return where


class ReportgenError(Exception):
    """Base of every error caused by the user's input rather than by a bug."""

    category: str = "Error"

    def __init__(self, message: str, *, location: Location | None = None, hint: str | None = None) -> None:
        super().__init__(message)
        self.message = message
        self.location = location
        self.hint = hint

    def render(self) -> str:
        """The text shown to the user: ``location: error: message`` and a hint line."""
        where = self.location.where() if self.location is not None else ""
        field = f"{self.location.key_path}: " if self.location is not None and self.location.key_path else ""
        text = f"{where}: error: {field}{self.message}" if where else f"error: {field}{self.message}"
        if self.hint:
            text += f"\n  hint: {self.hint}"
        return text


class ManifestError(ReportgenError):
    """The manifest cannot be read or does not follow the schema."""

    category = "Manifest error"


class ManifestErrors(ManifestError):  # noqa: N818 - a collection of ManifestError
    """Several manifest problems found in one pass, reported together."""

    def __init__(self, errors: list[ManifestError]) -> None:
        super().__init__(f"{len(errors)} problem(s) in the manifest")
        self.errors = errors

    def render(self) -> str:
        return "\n".join(error.render() for error in self.errors)


class FormulaError(ManifestError):
    """A regression formula does not follow reportgen's formula grammar."""

    category = "Formula error"


class DataError(ReportgenError):
    """A data file cannot be read or its contents are not usable as a time series."""

    category = "Data error"


class TransformError(DataError):
    """A declared transform cannot be applied to the data (e.g. log of a non-positive value)."""

    category = "Transform error"


class InsufficientDataError(ReportgenError):
    """Too few observations for a test or an estimate; the message states the numbers."""

    category = "Insufficient data"


class OutputError(ReportgenError):
    """The output folder cannot be written as asked."""

    category = "Output error"
