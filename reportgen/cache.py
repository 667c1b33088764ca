"""The result cache of incremental runs: one entry per series verdict and per regression assessment,
and one text entry per series' and regression's part of results.json.

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

Text entries (:meth:`ResultCache.load_text`) keep what is costly to rebuild but cheap to keep as
text: the part of results.json a series or regression writes, keyed by everything that part is
made of (see :func:`reportgen.results.results_to_dict`). A run that finds the part of an unchanged
series neither rebuilds its verdict nor encodes it again; the entry's header line names its kind
and key, and an entry whose header does not match, or whose text is not a JSON object, is ignored.

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


Reader = typing.Callable[[Any], Any]


def decode(hint: Any, value: Any) -> Any:
    """Rebuild a value of type ``hint`` from its :func:`encode` form; raise ValueError if it does not fit."""
    return _reader(hint)(value)


@cache
def _reader(hint: Any) -> Reader:
    """A function rebuilding values of type ``hint`` (made once per type: entries hold many values)."""
    if hint is Any or hint is object:
        return _same
    if dataclasses.is_dataclass(hint) and isinstance(hint, type):
        return _dataclass_reader(hint)
    origin = typing.get_origin(hint)
    arguments = typing.get_args(hint)
    if origin in (typing.Union, types.UnionType):
        return _union_reader(hint, arguments)
    if origin is typing.Literal:
        allowed = frozenset(arguments)

        def literal(value: Any) -> Any:
            if type(value) is not str or value not in allowed:
                raise _MismatchError(f"{value!r} is not one of {sorted(allowed)}")
            return value

        return literal
    if origin is tuple:
        return _tuple_reader(arguments)
    if origin is list:
        item = _reader(arguments[0] if arguments else Any)

        def listed(value: Any) -> Any:
            if type(value) is not list:
                raise _MismatchError("expected a list")
            return [item(element) for element in value]

        return listed
    if origin in (dict, Mapping, typing.Mapping) or hint in (dict, Mapping):
        key_hint, item_hint = arguments if arguments else (str, Any)
        return _mapping_reader(_key_reader(key_hint), _reader(item_hint))
    if hint is float:
        return _number
    if hint in (int, str, bool):
        def exact(value: Any) -> Any:
            if type(value) is not hint:
                raise _MismatchError(f"{value!r} is not {hint.__name__}")
            return value

        return exact
    if hint is type(None):
        return _none
    raise _MismatchError(f"cannot rebuild type {hint}")


def _same(value: Any) -> Any:
    return value


def _number(value: Any) -> Any:
    if type(value) is not float and type(value) is not int:
        raise _MismatchError(f"{value!r} is not a number")
    return value  # an int stays an int: it was one when it was stored


def _none(value: Any) -> None:
    if value is not None:
        raise _MismatchError("expected null")


def _dataclass_reader(cls: type) -> Reader:
    hints = typing.get_type_hints(cls)
    fields = tuple(field.name for field in dataclasses.fields(cls) if field.init)
    names = frozenset(fields)
    readers: dict[str, Reader] = {}

    def rebuild(value: Any) -> Any:
        if type(value) is not dict or value.keys() != names:
            raise _MismatchError(f"{cls.__name__}: expected an object with its fields")
        if not readers:  # filled on first use: a field may hold this class itself
            readers.update((name, _reader(hints[name])) for name in fields)
        return cls(**{name: readers[name](value[name]) for name in fields})

    return rebuild


def _union_reader(hint: Any, arguments: tuple[Any, ...]) -> Reader:
    optional = type(None) in arguments
    choices = tuple(_reader(argument) for argument in arguments if argument is not type(None))

    def either(value: Any) -> Any:
        if value is None and optional:
            return None
        for choice in choices:
            try:
                return choice(value)
            except _MismatchError:
                continue
        raise _MismatchError(f"{value!r} fits none of {hint}")

    return either


def _tuple_reader(arguments: tuple[Any, ...]) -> Reader:
    if len(arguments) == 2 and arguments[1] is Ellipsis:
        item = _reader(arguments[0])
        if item is _same:
            def any_items(value: Any) -> Any:
                if type(value) is not list:
                    raise _MismatchError("expected a list")
                return tuple(value)

            return any_items

        def items(value: Any) -> Any:
            if type(value) is not list:
                raise _MismatchError("expected a list")
            return tuple([item(element) for element in value])

        return items
    readers = tuple(_reader(argument) for argument in arguments)

    def fixed(value: Any) -> Any:
        if type(value) is not list or len(value) != len(readers):
            raise _MismatchError(f"expected a list of {len(readers)}")
        return tuple(reader(element) for reader, element in zip(readers, value, strict=True))

    return fixed


def _mapping_reader(key: Reader, item: Reader) -> Reader:
    def mapping(value: Any) -> Any:
        if type(value) is not dict:
            raise _MismatchError("expected an object")
        return {key(name): item(element) for name, element in value.items()}

    return mapping


def _key_reader(hint: Any) -> Reader:
    if hint is str or hint is Any:
        return _same
    if hint is int:
        def integer(key: str) -> int:
            if not key.lstrip("-").isdigit() or not key.isascii():
                raise _MismatchError(f"{key!r} is not an integer key")
            return int(key)

        return integer
    if typing.get_origin(hint) is typing.Literal:
        return _reader(hint)
    raise _MismatchError(f"cannot rebuild a key of type {hint}")


# ---------------------------------------------------------------- the cache folder


@dataclass(slots=True)
class CacheStats:
    """What one run did with the cache."""

    hits: int = 0
    misses: int = 0
    rejected: int = 0  # entries found but not used: unreadable, another key or kind, values that do not fit
    written: int = 0
    text_hits: int = 0  # text entries (see ResultCache.load_text) found and used
    text_misses: int = 0
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
        if self._write(self.path(kind, key), key, text):
            self.stats.written += 1

    def text_path(self, kind: str, key: str) -> Path:
        """Where the text entry of ``kind`` and ``key`` lives."""
        return self.folder / f"v{CACHE_FORMAT}" / kind / key[:2] / f"{key}.txt"

    def load_text(self, kind: str, key: str) -> str | None:
        """The stored text of ``kind`` and ``key``, or None (missing, or its header names another entry).

        A text entry is one header line (the format, kind and key, as JSON) and the text; it holds
        what is costly to rebuild but cheap to keep, such as a result's encoded results.json part.
        """
        try:
            stored = self.text_path(kind, key).read_text(encoding="utf-8")
        except (OSError, UnicodeError):
            self.stats.text_misses += 1
            return None
        header, newline, text = stored.partition("\n")
        if not newline or header != _text_header(kind, key):
            self.stats.rejected += 1
            self.stats.text_misses += 1
            return None
        self.stats.text_hits += 1
        return text

    def store_text(self, kind: str, key: str, text: str) -> None:
        """Write a text entry (atomically); a folder that cannot be written leaves the cache as it was."""
        if self.stats.unwritable is None:
            self._write(self.text_path(kind, key), key, _text_header(kind, key) + "\n" + text)

    def _write(self, path: Path, key: str, text: str) -> bool:
        """Write ``text`` to ``path`` through a temporary file renamed into place; False if it cannot be."""
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
            return False
        return True


def _text_header(kind: str, key: str) -> str:
    return json.dumps({"format": CACHE_FORMAT, "kind": kind, "key": key}, separators=(",", ":"))
