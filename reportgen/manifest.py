"""Load and validate a manifest: strict YAML with line numbers, typed models, friendly errors.

The YAML is safe-loaded with a stricter resolver than YAML 1.1: duplicate keys are refused,
dates stay text (``2010-01`` is a period label, not a timestamp) and only ``true``/``false`` are
booleans (``yes``, ``no``, ``on``, ``off`` stay words). Every key's line is remembered, so a schema
error points at ``manifest.yaml:14:5: series.boxes.transform``. All problems are collected and
reported together.
"""

from __future__ import annotations

import difflib
import re
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any, Literal

import yaml
from pydantic import BaseModel, ConfigDict, Field, ValidationError

from reportgen.errors import FormulaError, Location, ManifestError, ManifestErrors
from reportgen.formula import Formula, FormulaSyntaxError, parse_formula
from reportgen.transforms import Step
from reportgen.vocabulary import DeterministicPolicy, Frequency, LagCriterion, TransformName, allowed

KeyPath = tuple[str | int, ...]
_NAME = re.compile(r"^[A-Za-z_][A-Za-z0-9_]*$")
_BOOL_TAG = "tag:yaml.org,2002:bool"
_STRICT_BOOL = re.compile(r"^(?:true|True|TRUE|false|False|FALSE)$")


class _StrictLoader(yaml.SafeLoader):
    """SafeLoader without timestamps and with YAML 1.2 booleans only."""


_StrictLoader.yaml_implicit_resolvers = {
    first: [(tag, regexp) for tag, regexp in resolvers if tag not in {_BOOL_TAG, "tag:yaml.org,2002:timestamp"}]
    for first, resolvers in yaml.SafeLoader.yaml_implicit_resolvers.items()
}
_StrictLoader.add_implicit_resolver(_BOOL_TAG, _STRICT_BOOL, list("tTfF"))


# ---------------------------------------------------------------- schema


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", strict=True, frozen=True)


class ProjectSpec(_Model):
    """Cover details of the dossier."""

    title: str = Field(min_length=1)
    client: str = ""
    author: str = ""
    reference: str = ""


class DatasetSpec(_Model):
    """A data file: its path (relative to the manifest), its date column, optional frequency."""

    path: str = Field(min_length=1)
    index: str = Field(min_length=1)
    frequency: Frequency | None = None


class SeriesSpec(_Model):
    """A series: a column of a dataset, an optional transform chain, a label, an override."""

    dataset: str
    column: str = Field(min_length=1)
    transform: list[TransformName | dict[TransformName, int]] = Field(default_factory=list)
    label: str | None = None
    deterministic: DeterministicPolicy | None = None


class SampleSpec(_Model):
    """A regression's estimation window, inclusive, as period labels (``2010-01``, ``2010Q1``)."""

    start: str | None = None
    end: str | None = None


class RegressionSpec(_Model):
    """A candidate regression: a formula over series names, an optional label and window."""

    formula: str = Field(min_length=1)
    label: str | None = None
    sample: SampleSpec | None = None


class SettingsSpec(_Model):
    """Choices that steer the statistics."""

    significance: Literal[0.01, 0.05, 0.1] = 0.05
    max_order: Literal[1, 2] = 2
    lag_criterion: LagCriterion = "aic"
    deterministic: DeterministicPolicy = "auto"
    seed: int = Field(default=20240601, ge=0, le=2**32 - 1)


class ManifestSpec(_Model):
    """The whole manifest."""

    reportgen: Literal[1]
    project: ProjectSpec
    datasets: dict[str, DatasetSpec] = Field(min_length=1)
    series: dict[str, SeriesSpec] = Field(min_length=1)
    regressions: dict[str, RegressionSpec] = Field(default_factory=dict)
    settings: SettingsSpec = Field(default_factory=SettingsSpec)


# ---------------------------------------------------------------- loaded manifest


@dataclass(frozen=True, slots=True)
class Manifest:
    """A validated manifest with the positions of its keys, for later error messages."""

    path: Path  # resolved, absolute
    display_path: Path  # as the user named it, for messages
    raw: bytes
    spec: ManifestSpec
    formulas: Mapping[str, Formula]
    transforms: Mapping[str, tuple[Step, ...]]
    positions: Mapping[KeyPath, tuple[int, int]]

    @property
    def base_dir(self) -> Path:
        """The folder relative paths resolve against."""
        return self.path.parent

    def locate(self, *key_path: str | int) -> Location:
        """The location of a key (or of its nearest present parent) in the manifest file."""
        path: KeyPath = tuple(key_path)
        while path and path not in self.positions:
            path = path[:-1]
        line, column = self.positions.get(path, (None, None))
        return Location(self.display_path, line, column, ".".join(str(part) for part in key_path) or None)


# ---------------------------------------------------------------- YAML with positions


def _construct(loader: _StrictLoader, node: yaml.Node, path: KeyPath, positions: dict[KeyPath, tuple[int, int]],
               file: Path) -> Any:
    if isinstance(node, yaml.MappingNode):
        result: dict[str, Any] = {}
        for key_node, value_node in node.value:
            where = Location(file, key_node.start_mark.line + 1, key_node.start_mark.column + 1)
            if key_node.tag == "tag:yaml.org,2002:merge" or key_node.value == "<<":
                raise ManifestError("YAML merge keys ('<<') are not supported in a manifest", location=where,
                                    hint="write the keys out in full")
            key = loader.construct_object(key_node, deep=True)
            if not isinstance(key, str):
                raise ManifestError(f"keys must be text; found {key!r}", location=where,
                                    hint="quote the key or rename it")
            if key in result:
                first = positions[(*path, key)]
                raise ManifestError(f"duplicate key '{key}' (first given on line {first[0]})", location=where,
                                    hint="remove or rename one of the two entries")
            positions[(*path, key)] = (where.line or 0, where.column or 0)
            result[key] = _construct(loader, value_node, (*path, key), positions, file)
        return result
    if isinstance(node, yaml.SequenceNode):
        items = []
        for index, item in enumerate(node.value):
            positions[(*path, index)] = (item.start_mark.line + 1, item.start_mark.column + 1)
            items.append(_construct(loader, item, (*path, index), positions, file))
        return items
    return loader.construct_object(node, deep=True)


def read_yaml(path: Path) -> tuple[bytes, Any, dict[KeyPath, tuple[int, int]]]:
    """Read a YAML file strictly; return its bytes, its data and the position of every key."""
    try:
        raw = path.read_bytes()
    except FileNotFoundError:
        raise ManifestError("manifest file not found", location=Location(path),
                            hint="check the path; relative paths start from the current folder") from None
    except IsADirectoryError:
        raise ManifestError("this is a folder, not a manifest file", location=Location(path),
                            hint="name the manifest's .yaml file") from None
    except OSError as error:
        raise ManifestError(f"cannot read the manifest: {error.strerror}", location=Location(path)) from None
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as error:
        raise ManifestError(f"the manifest is not UTF-8 text (byte {error.start})", location=Location(path),
                            hint="save the file as UTF-8") from None
    positions: dict[KeyPath, tuple[int, int]] = {(): (1, 1)}
    loader: _StrictLoader | None = None
    try:
        loader = _StrictLoader(text)
        node = loader.get_single_node()
        data = None if node is None else _construct(loader, node, (), positions, path)
    except yaml.MarkedYAMLError as error:
        mark = error.problem_mark or error.context_mark
        line, column = (mark.line + 1, mark.column + 1) if mark is not None else (None, None)
        problem = error.problem or error.context or "invalid YAML"
        raise ManifestError(f"YAML syntax error: {problem}", location=Location(path, line, column),
                            hint="check indentation, colons and quotes near this point") from None
    except yaml.YAMLError as error:
        raise ManifestError(f"YAML error: {error}", location=Location(path)) from None
    finally:
        if loader is not None:
            loader.dispose()
    return raw, data, positions


# ---------------------------------------------------------------- validation


def _describe_expected(error: Mapping[str, Any]) -> str:
    kind = error["type"]
    context = error.get("ctx") or {}
    if kind == "missing":
        return "this field is required"
    if kind in {"literal_error", "enum"}:
        return f"expected one of {context.get('expected', '')}; got {error.get('input')!r}"
    if kind == "string_type":
        return f"expected text; got {error.get('input')!r} — quote it"
    if kind in {"int_type", "int_from_float"}:
        return f"expected a whole number; got {error.get('input')!r}"
    if kind == "dict_type":
        return "expected a mapping of names to entries"
    if kind == "list_type":
        return "expected a list, e.g. [log, diff]"
    if kind == "too_short":
        return "at least one entry is required"
    if kind == "model_type":
        return "expected a mapping of keys to values"
    return str(error.get("msg", "invalid value"))


def _fields_of(model: type[BaseModel], path: KeyPath) -> list[str]:
    """The allowed keys at a key path of the schema, for 'did you mean' suggestions."""
    current: Any = model
    entry_name_next = False
    for part in path:
        if isinstance(part, int) or entry_name_next:
            entry_name_next = False
            continue
        if not (isinstance(current, type) and issubclass(current, BaseModel)):
            return []
        field = current.model_fields.get(str(part))
        if field is None:
            return []
        annotation = field.annotation
        args = getattr(annotation, "__args__", ())
        if getattr(annotation, "__origin__", None) is dict:
            current, entry_name_next = args[1], True
            continue
        candidates = [arg for arg in (annotation, *args) if isinstance(arg, type) and issubclass(arg, BaseModel)]
        current = candidates[0] if candidates else None
    if isinstance(current, type) and issubclass(current, BaseModel):
        return list(current.model_fields)
    return []


def _model_errors(error: ValidationError, file: Path,
                  positions: Mapping[KeyPath, tuple[int, int]]) -> list[ManifestError]:
    problems: list[ManifestError] = []
    seen: set[tuple[KeyPath, str]] = set()
    for item in error.errors():
        loc: KeyPath = tuple(part for part in item["loc"] if not (isinstance(part, str) and _is_union_tag(part)))
        key = (loc, item["type"])
        if key in seen:
            continue
        seen.add(key)
        lookup = loc
        while lookup and lookup not in positions:
            lookup = lookup[:-1]
        line, column = positions.get(lookup, (None, None))
        where = Location(file, line, column, ".".join(str(part) for part in loc) or "(top level)")
        if item["type"] == "extra_forbidden":
            name = str(loc[-1])
            options = _fields_of(ManifestSpec, loc[:-1])
            close = difflib.get_close_matches(name, options, n=1)
            if close:
                hint: str | None = f"did you mean '{close[0]}'?"
            else:
                hint = f"allowed keys: {', '.join(options)}" if options else None
            problems.append(ManifestError(f"unknown key '{name}'", location=where, hint=hint))
        else:
            problems.append(ManifestError(_describe_expected(item), location=where))
    return _drop_union_noise(problems)


def _is_union_tag(part: str) -> bool:
    """Pydantic inserts the tried union member into error locations; they are not keys."""
    return part.startswith(("literal[", "dict[", "function-")) or part in {"str", "int", "float"}


def _drop_union_noise(problems: list[ManifestError]) -> list[ManifestError]:
    """Keep one message per location: a union reports one error per member tried."""
    kept: dict[str, ManifestError] = {}
    for problem in problems:
        where = str(problem.location)
        if where not in kept:
            kept[where] = problem
    return list(kept.values())


def _check_names(spec: ManifestSpec, manifest_path: Path, locate: Any) -> list[ManifestError]:
    problems: list[ManifestError] = []
    for section in ("datasets", "series", "regressions"):
        for name in getattr(spec, section):
            if not _NAME.match(name):
                problems.append(ManifestError(
                    f"'{name}' is not a usable name", location=locate(section, name),
                    hint="use letters, digits and underscores, starting with a letter (names appear in formulas)"))
    return problems


def _transform_steps(spec: SeriesSpec) -> tuple[Step, ...]:
    steps: list[Step] = []
    for item in spec.transform:
        if isinstance(item, str):
            steps.append(Step(item))
        else:
            ((name, parameter),) = item.items()
            steps.append(Step(name, parameter))
    return tuple(steps)


def _cross_check(spec: ManifestSpec, locate: Any) -> tuple[list[ManifestError], dict[str, Formula],
                                                            dict[str, tuple[Step, ...]]]:
    problems: list[ManifestError] = []
    transforms: dict[str, tuple[Step, ...]] = {}
    for name, series in spec.series.items():
        if series.dataset not in spec.datasets:
            close = difflib.get_close_matches(series.dataset, list(spec.datasets), n=1)
            hint = f"did you mean '{close[0]}'?" if close else f"datasets declared: {', '.join(spec.datasets)}"
            problems.append(ManifestError(f"unknown dataset '{series.dataset}'",
                                          location=locate("series", name, "dataset"), hint=hint))
        for position, item in enumerate(series.transform):
            if isinstance(item, dict):
                if len(item) != 1:
                    problems.append(ManifestError(
                        "a parameterised transform has exactly one key, e.g. {lag: 2}",
                        location=locate("series", name, "transform", position)))
                    continue
                ((step, parameter),) = item.items()
                if step in {"log", "log-diff", "growth"}:
                    problems.append(ManifestError(f"'{step}' takes no parameter",
                                                  location=locate("series", name, "transform", position),
                                                  hint=f"write it as plain '{step}'"))
                elif parameter < 1:
                    problems.append(ManifestError(f"'{step}' needs a whole number of at least 1; got {parameter}",
                                                  location=locate("series", name, "transform", position)))
        if not any(p.location and p.location.key_path and p.location.key_path.startswith(f"series.{name}.transform")
                   for p in problems):
            transforms[name] = _transform_steps(series)
    formulas: dict[str, Formula] = {}
    for name, regression in spec.regressions.items():
        where = locate("regressions", name, "formula")
        try:
            formula = parse_formula(regression.formula)
        except FormulaSyntaxError as error:
            problems.append(FormulaError(f"{error.message}\n    {error.caret().replace(chr(10), chr(10) + '    ')}",
                                         location=where, hint="write formulas as 'y ~ x1 + x2' with series names"))
            continue
        unknown = [variable for variable in formula.variables if variable not in spec.series]
        for variable in unknown:
            close = difflib.get_close_matches(variable, list(spec.series), n=1)
            hint = f"did you mean '{close[0]}'?" if close else "declare it under 'series' first"
            problems.append(FormulaError(f"the formula uses '{variable}', which is not a declared series",
                                         location=where, hint=hint))
        if not unknown:
            formulas[name] = formula
    return problems, formulas, transforms


def load_manifest(path: Path | str) -> Manifest:
    """Read, validate and cross-check a manifest; raise one error listing every problem."""
    file = Path(path)
    raw, data, positions = read_yaml(file)
    if data is None:
        raise ManifestError("the manifest is empty", location=Location(file),
                            hint="start from manifests/demo.yaml; a manifest needs reportgen, project, datasets "
                                 "and series")
    if not isinstance(data, dict):
        raise ManifestError(f"the manifest must be a mapping of sections; found a {type(data).__name__}",
                            location=Location(file, 1, 1), hint="write 'reportgen: 1' and the sections as keys")
    try:
        spec = ManifestSpec.model_validate(data)
    except ValidationError as error:
        problems = _model_errors(error, file, positions)
        raise (problems[0] if len(problems) == 1 else ManifestErrors(problems)) from None

    def locate(*key_path: str | int) -> Location:
        lookup: KeyPath = tuple(key_path)
        while lookup and lookup not in positions:
            lookup = lookup[:-1]
        line, column = positions.get(lookup, (None, None))
        return Location(file, line, column, ".".join(str(part) for part in key_path))

    problems = _check_names(spec, file, locate)
    cross, formulas, transforms = _cross_check(spec, locate)
    problems.extend(cross)
    if problems:
        raise problems[0] if len(problems) == 1 else ManifestErrors(problems)
    return Manifest(path=file.resolve(), display_path=file, raw=raw, spec=spec, formulas=formulas,
                    transforms=transforms, positions=positions)


ALLOWED_TRANSFORMS = allowed(TransformName)
