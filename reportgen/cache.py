"""The result cache of incremental runs: one entry per series verdict and per regression assessment.

An entry is found by its key, the SHA-256 of everything its result depends on (see
:func:`content_key`): the inputs of the computation (a series' name, values, dates and settings;
a regression's aligned data, formula, settings and the orders and fragility of its variables) and
the software (:func:`software_fingerprint`: reportgen's version and the SHA-256 of its own source
files, the versions of Python, numpy, pandas, scipy, statsmodels and arch). Change any of it and
the key changes; nothing is ever invalidated by hand.

Entries are JSON files, never pickles: reading one cannot run code, whoever wrote it. Each one
stores its own key and kind, and is used only when both match what was asked for and its value
rebuilds into the expected types (:func:`decode`); anything else (a truncated file, a file of
another version, a file copied under another name) is ignored, the result is computed again and
the entry rewritten. Every entry is written to a temporary file in its folder and renamed into
place, so runs sharing a cache never see half an entry. Floats are written with ``repr``, which
reads back to the same bits, so a run from the cache writes the same results.json bytes as a run
without it.

Location: ``--cache DIR``, else ``$REPORTGEN_CACHE``, else ``$XDG_CACHE_HOME/reportgen``, else
``~/.cache/reportgen`` (:func:`default_cache_dir`). The folder only grows; deleting it (or any
part of it) at any time is safe.
"""

from __future__ import annotations

import dataclasses
import hashlib
import importlib.metadata
import json
import os
import platform
import tempfile
import types
import typing
from collections.abc import Mapping
from dataclasses import dataclass
from functools import cache
from pathlib import Path
from typing import Any, TypeVar

V = TypeVar("V")

#: Version of the entry layout; part of every key and every entry.
CACHE_FORMAT = 1
#: Packages whose versions are part of every key.
KEY_PACKAGES = ("numpy", "pandas", "scipy", "statsmodels", "arch")


def default_cache_dir(environ: Mapping[str, str] | None = None) -> Path:
    """``$REPORTGEN_CACHE``, else ``$XDG_CACHE_HOME/reportgen``, else ``~/.cache/reportgen``."""
    environ = os.environ if environ is None else environ
    if environ.get("REPORTGEN_CACHE"):
        return Path(environ["REPORTGEN_CACHE"]).expanduser()
    if environ.get("XDG_CACHE_HOME"):
        return Path(environ["XDG_CACHE_HOME"]).expanduser() / "reportgen"
    return Path.home() / ".cache" / "reportgen"


@cache
def software_fingerprint() -> dict[str, Any]:
    """What computed a result: reportgen's version and source, Python's version, the numerical packages."""
    from reportgen import __version__

    package = Path(__file__).resolve().parent
    source = hashlib.sha256()
    for path in sorted(package.rglob("*.py")):
        source.update(path.relative_to(package).as_posix().encode())
        source.update(b"\0")
        source.update(path.read_bytes())
        source.update(b"\0")
    packages: dict[str, str] = {}
    for name in KEY_PACKAGES:
        try:
            packages[name] = importlib.metadata.version(name)
        except importlib.metadata.PackageNotFoundError:
            packages[name] = "not installed"
    return {"reportgen": __version__, "source": source.hexdigest(), "python": platform.python_version(),
            "implementation": platform.python_implementation(), "packages": packages}


def content_key(kind: str, material: Mapping[str, Any]) -> str:
    """The key of an entry: SHA-256 of the kind, the cache format, the software and ``material``.

    ``material`` must be JSON-serialisable; floats are written with ``repr`` (exact), keys sorted.
    """
    text = json.dumps({"format": CACHE_FORMAT, "kind": kind, "software": software_fingerprint(),
                       "material": material}, sort_keys=True, allow_nan=True, separators=(",", ":"))
    return hashlib.sha256(text.encode()).hexdigest()


# ---------------------------------------------------------------- values to JSON and back


def encode(value: Any) -> Any:
    """A JSON value for a result: dataclasses as objects of their fields, tuples as lists.

    Raises TypeError for anything :func:`decode` could not rebuild exactly.
    """
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {field.name: encode(getattr(value, field.name)) for field in dataclasses.fields(value)}
    if isinstance(value, Mapping):
        encoded: dict[str, Any] = {}
        for key, item in value.items():
            if not isinstance(key, (str, int)) or isinstance(key, bool):
                raise TypeError(f"cannot cache a mapping key of type {type(key).__name__}")
            encoded[str(key)] = encode(item)
        return encoded
    if isinstance(value, (list, tuple)):
        return [encode(item) for item in value]
    if value is None or isinstance(value, (bool, str)):
        return value
    if type(value) in (int, float):
        return value
    raise TypeError(f"cannot cache a value of type {type(value).__name__}")


class _MismatchError(ValueError):
    """A stored value that does not fit the type it should rebuild into."""


@cache
def _hints(cls: type) -> dict[str, Any]:
    return typing.get_type_hints(cls)


def decode(hint: Any, value: Any) -> Any:
    """Rebuild a value of type ``hint`` from its :func:`encode` form; raise ValueError if it does not fit."""
    if hint is Any or hint is object:
        return value
    if dataclasses.is_dataclass(hint) and isinstance(hint, type):
        if not isinstance(value, dict):
            raise _MismatchError(f"{hint.__name__}: expected an object")
        fields = [field for field in dataclasses.fields(hint) if field.init]
        if set(value) != {field.name for field in fields}:
            raise _MismatchError(f"{hint.__name__}: fields differ")
        hints = _hints(hint)
        return hint(**{field.name: decode(hints[field.name], value[field.name]) for field in fields})
    origin = typing.get_origin(hint)
    arguments = typing.get_args(hint)
    if origin in (typing.Union, types.UnionType):
        if value is None and type(None) in arguments:
            return None
        for argument in arguments:
            if argument is type(None):
                continue
            try:
                return decode(argument, value)
            except _MismatchError:
                continue
        raise _MismatchError(f"{value!r} fits none of {hint}")
    if origin is typing.Literal:
        if value not in arguments:
            raise _MismatchError(f"{value!r} is not one of {arguments}")
        return value
    if origin is tuple:
        if not isinstance(value, list):
            raise _MismatchError("expected a list")
        if len(arguments) == 2 and arguments[1] is Ellipsis:
            return tuple(decode(arguments[0], item) for item in value)
        if len(arguments) != len(value):
            raise _MismatchError("tuple length differs")
        return tuple(decode(argument, item) for argument, item in zip(arguments, value, strict=True))
    if origin is list:
        if not isinstance(value, list):
            raise _MismatchError("expected a list")
        return [decode(arguments[0] if arguments else Any, item) for item in value]
    if origin in (dict, Mapping, typing.Mapping) or hint in (dict, Mapping):
        if not isinstance(value, dict):
            raise _MismatchError("expected an object")
        key_hint, item_hint = arguments if arguments else (str, Any)
        return {_decode_key(key_hint, key): decode(item_hint, item) for key, item in value.items()}
    if hint is float:
        if type(value) not in (int, float):
            raise _MismatchError(f"{value!r} is not a number")
        return value  # an int stays an int: it was one when it was stored
    if hint in (int, str, bool):
        if type(value) is not hint:
            raise _MismatchError(f"{value!r} is not {hint.__name__}")
        return value
    if hint is type(None):
        if value is not None:
            raise _MismatchError("expected null")
        return None
    raise _MismatchError(f"cannot rebuild type {hint}")


def _decode_key(hint: Any, key: str) -> Any:
    if hint is int:
        try:
            return int(key)
        except ValueError:
            raise _MismatchError(f"{key!r} is not an integer key") from None
    if hint is str or hint is Any:
        return key
    if typing.get_origin(hint) is typing.Literal:
        return decode(hint, key)
    raise _MismatchError(f"cannot rebuild a key of type {hint}")


# ---------------------------------------------------------------- the cache folder


@dataclass(slots=True)
class CacheStats:
    """What one run did with the cache."""

    hits: int = 0
    misses: int = 0
    rejected: int = 0  # entries found but not used: unreadable, another key or kind, values that do not fit
    written: int = 0
    unwritable: str | None = None  # why entries could not be written, if they could not


class ResultCache:
    """A folder of entries, ``DIR/v1/KIND/KE/KEY.json``."""

    def __init__(self, folder: Path | str) -> None:
        self.folder = Path(folder)
        self.stats = CacheStats()

    def path(self, kind: str, key: str) -> Path:
        """Where the entry of ``kind`` and ``key`` lives."""
        return self.folder / f"v{CACHE_FORMAT}" / kind / key[:2] / f"{key}.json"

    def load(self, kind: str, key: str, hint: type[V]) -> V | None:
        """The stored value of ``kind`` and ``key`` rebuilt as ``hint``, or None (missing or not trusted)."""
        path = self.path(kind, key)
        try:
            text = path.read_bytes()
        except OSError:
            self.stats.misses += 1
            return None
        try:
            entry = json.loads(text)
            if not (isinstance(entry, dict) and entry.get("format") == CACHE_FORMAT and entry.get("kind") == kind
                    and entry.get("key") == key and "value" in entry):
                raise _MismatchError("not an entry of this key")
            value = decode(hint, entry["value"])
        except (ValueError, TypeError, RecursionError):  # JSON errors and _MismatchError are ValueErrors
            self.stats.rejected += 1
            self.stats.misses += 1
            return None
        self.stats.hits += 1
        return typing.cast(V, value)

    def store(self, kind: str, key: str, value: Any) -> None:
        """Write the entry (atomically); a value that cannot be cached exactly, or a folder that
        cannot be written, leaves the cache as it was (see :attr:`CacheStats.unwritable`)."""
        if self.stats.unwritable is not None:
            return
        try:
            text = json.dumps({"format": CACHE_FORMAT, "kind": kind, "key": key, "value": encode(value)},
                              ensure_ascii=False, allow_nan=True, separators=(",", ":"))
        except (TypeError, ValueError):
            return
        path = self.path(kind, key)
        try:
            path.parent.mkdir(parents=True, exist_ok=True, mode=0o700)
            handle, name = tempfile.mkstemp(prefix=f".{key[:16]}.", suffix=".tmp", dir=path.parent)
            try:
                with os.fdopen(handle, "w", encoding="utf-8") as stream:
                    stream.write(text)
                os.replace(name, path)
            except BaseException:
                Path(name).unlink(missing_ok=True)
                raise
        except OSError as error:
            self.stats.unwritable = f"{error.strerror or error} ({error.filename or self.folder})"
            return
        self.stats.written += 1
