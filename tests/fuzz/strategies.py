"""Hypothesis strategies for manifests (as structures and as text) and for CSV data files.

Everything starts from something valid and is then damaged, so that the examples reach every
stage of loading rather than stopping at the first YAML character: a valid manifest structure
with a few mutations (wrong types, unknown or missing keys, odd names, bad transforms,
formulas and sample windows), the YAML text of one with character-level noise, and a CSV file
built from a seeded random grid with a few edits (dates, cells, header, rows, bytes).
"""

from __future__ import annotations

import copy
import csv
import datetime
import io
import random
from typing import Any

import numpy as np
import yaml
from hypothesis import strategies as st

# ---------------------------------------------------------------- vocabularies, valid and not

FREQUENCIES = ["annual", "quarterly", "monthly", "weekly", "daily"]
MISSING_POLICIES = ["error", "drop-leading-trailing", "interpolate"]
TOO_SHORT = ["error", "report"]
DETERMINISTIC = ["auto", "constant", "constant-trend"]
LAG_CRITERIA = ["aic", "bic", "t-stat"]
TRANSFORMS = ["log", "diff", "log-diff", "growth", "seasonal-diff", "lag"]

#: Valid transform chains (a parameter where one is allowed).
VALID_CHAINS: list[list[Any]] = [
    [], ["log"], ["diff"], ["log", "diff"], ["log-diff"], ["growth"], ["seasonal-diff"], [{"lag": 2}],
    [{"diff": 2}], [{"seasonal-diff": 4}], ["lag"], ["log", {"seasonal-diff": 12}], [{"lag": 30}],
    ["diff", "diff", "diff"], [{"lag": 1000}],
]

#: Names that are not usable as dataset, series or regression names (or are borderline).
ODD_NAMES = [
    "", " ", "1abc", "9", "_", "a b", "a-b", "é", "名前", "a\n", "b\n", "\na", "\t", "x" * 300, "__import__('os')",
    "None", "true", "null", "~", "+", "a+b", "0", "-", ".", "\u202ea", "\x00", "a\x00", "\x7f", "a.b", "a~b",
    "ａ", "_1", "A" * 5000, "\ufeffa", "a\r", "'", '"', "&a", "*a", "!!str", "<<",
]

#: Scalars and containers of the wrong kind for almost any key.
JUNK_SCALARS: list[Any] = [
    None, True, False, 0, -1, 1, 2, 0.0, -0.0, 1.5, 0.05, 1e308, -1e308, float("inf"), float("-inf"),
    float("nan"), 2**31, 2**32, 2**63, 2**64 + 1, -(2**70), 10**30, "", " ", "0", "1", "0.05", "yes", "no", "on",
    "off", "null", "~", "true", "monthly", "log", "2010-01", "2010", "[]", "{}", "\x00", "\t", "é", "x" * 2000,
    "!!python/object:os.system", "${HOME}", "../../etc/passwd", "/", ".", "..",
]

#: Transform list entries that are wrong in every way the schema and cross-checks can see.
BAD_TRANSFORM_ITEMS: list[Any] = [
    "logg", "Log", "LOG", "diff2", "", " ", "log diff", "seasonal_diff", "lags", "exp", None, 1, 0, True, 1.5, [],
    ["log"], [[["diff"]]], {}, {"lag": 0}, {"lag": -1}, {"lag": 1001}, {"lag": 2**63}, {"lag": 10**40},
    {"lag": 1.5}, {"lag": "2"}, {"lag": None}, {"lag": True}, {"lag": [1]}, {"lag": {}}, {"diff": 0},
    {"diff": -3}, {"seasonal-diff": 0}, {"seasonal-diff": 1}, {"seasonal-diff": 1000}, {"log": 1},
    {"growth": 2}, {"log-diff": 1}, {"lag": 1, "diff": 1}, {"logg": 2}, {"": 1}, {"lag": float("nan")},
    {"lag": float("inf")}, {"seasonal-diff": 52}, {"diff": 40},
]

#: Sample window bounds: valid labels of every form, impossible ones and other types.
SAMPLE_LABELS: list[Any] = [
    "2010", "2010Q1", "2010-Q4", "2010q2", "2010-01", "2010-1", "2010-12", "2010-01-31", "2011-06-15", "2005",
    "2030-12-31", "2010-13", "2010Q5", "2010Q0", "20100", "", " ", "2010-02-30", "2010-00", "1500-01-01",
    "0000", "0001-01-01", "9999-12-31", "9999Q4", "10000", "1677-09-21", "2262-04-12", "abc", "2010/01",
    "2010-1-1", "２０１０", "٢٠١٠", "2010-01-01T00:00", "March 2010", 2010, 2010.5, None, True, [], {},
    "2010-W01", "\x00",
]

#: Data paths a user might write: missing files, folders, links out of the project, bytes a path cannot hold.
PATH_ODDITIES = [
    "missing.csv", "sub", "sub/", ".", "..", "/", "d0.csv/", "./d0.csv", "../d0.csv", "sub/../d0.csv",
    "sub//d3.csv", "D0.CSV", "d0.csv ", " d0.csv", "d0.csv\n", "d0.csv\x00", "\x00", "d0\x00.csv", "\\d0.csv",
    "x" * 300 + ".csv", "/".join(["x" * 250] * 20), "~/d0.csv", "${HOME}/d0.csv", "*.csv", "file:///d0.csv",
    "é.csv", "/dev/null", "manifest.yaml", "d0.csv?x=1", "C:\\d0.csv", "loop.csv", "dangling.csv", "loop.csv/x",
]
#: Index column names: the right one, near misses, a data column, odd text.
INDEX_ODDITIES = ["period", "Period", "PERIOD", " period", "period ", "a", "b", "date", "month", "\ufeffperiod",
                  "", " ", "period\x00", "é"]
#: Tags, each followed by a scalar that the tag's constructor may not accept.
TAGS = ["!!int", "!!float", "!!bool", "!!null", "!!str", "!!binary", "!!timestamp", "!!python/object:os.system",
        "!!python/tuple", "!!map", "!!seq", "!!set", "!custom", "!<tag:yaml.org,2002:int>", "!!merge", "!!value"]
#: Plain scalars that PyYAML resolves to numbers, some of which its constructors cannot build.
ODD_SCALARS = ["0b_", "0x_", "-0b_", "+0x__", "0o_", "0b", "0x", "0_", "1__000", "._", "1._", "1:_0", "0:00",
               "190:20:30", "1e", ".5e+3", "+.inf", ".NaN", "0b2", "0x1G", "00", "09", "1_", "~", "Null", "''",
               '""', "abc", "1.5", "-1", "10000000000000000000000", "2001-12-14"]

#: Text pieces that formulas are made of, good and bad.
FORMULA_TOKENS = [
    "a", "b", "c", "y", "x1", "x_2", "_z", "A", "~", "+", "*", "-", "(", ")", ":", "|", "^", "0", "1", "2.5",
    " ", "  ", "\t", "\n", "é", "名", "ａ", "__import__", "('os')", ".system", "('touch X')", "log(", "I(",
    "np.", "'", '"', "\\", "\x00", "\u202e", "~~", "++", "# c", ";", "import os", "lambda", "{", "}", "[", "]",
]

#: Snippets that YAML treats specially, inserted into manifest text.
YAML_NOISE = [
    "\t", "{", "}", "[", "]", ": ", ":", "- ", "-", "? ", ",", "&a ", "*a", "&anchor [1, 2]", "*anchor", "<<: *a",
    "!!python/object:os.system ", "!!python/object/apply:os.system ['touch X'] ", "!!python/name:os.system",
    "!!int ", "!!float ", "!!bool ", "!!null ", "!!str ", "!!binary ", "!!timestamp ", "!!set ", "!!omap ",
    "!!pairs ", "!!map ", "!!seq ", "!custom ", "!<tag:yaml.org,2002:int> ", "!<!> ", "---\n", "...\n",
    "%YAML 1.1\n", "%YAML 2.0\n", "%TAG !e! tag:example.com,2000:\n", "#", "'", '"', "\\", "|", ">", "|-\n",
    "\x00", "\x07", "\x1b", "\x85", "\u2028", "\ufeff", "\ufffe", "\U0001f600", "\r", "\r\n", "0b_", "0x_",
    "0o", ".nan", ".inf", "-.inf", "1_000", "0x1F", "1:20", "~", "null", "yes", "No", "2001-12-14t21:59:43.10-05:00",
    "\n  ", "\n    ", "\n- ", "[" * 60, "]" * 60, "{a: " * 40, "}" * 40, "\"\\ud800\"", "\"\\x00\"", "\"\\u0000\"",
    "'unterminated", "\"unterminated", "a: 1\na: 2\n",
]


names_odd = st.one_of(st.sampled_from(ODD_NAMES), st.text(max_size=12),
                      st.from_regex(r"[A-Za-z_][A-Za-z0-9_]{0,10}", fullmatch=True))

junk_values = st.recursive(
    st.one_of(st.sampled_from(JUNK_SCALARS), st.integers(), st.floats(), st.text(max_size=16)),
    lambda children: st.one_of(st.lists(children, max_size=3),
                               st.dictionaries(st.text(max_size=6), children, max_size=3)),
    max_leaves=6,
)


# ---------------------------------------------------------------- valid manifest structures

#: The data files every generated manifest may name, each a valid CSV with columns a, b and c.
DATA_FILES = {"d0.csv": "monthly", "d1.csv": "quarterly", "d2.csv": "annual", "sub/d3.csv": "monthly"}
SERIES_NAMES = ["a", "b", "c", "y", "x1", "x2", "fuel_price", "S"]


def fixed_csv(frequency: str, rows: int = 30, seed: int = 0) -> bytes:
    """A valid CSV file (columns period, a, b, c; positive values) of the given frequency."""
    rng = np.random.default_rng(seed)
    walk = 100 + np.cumsum(rng.standard_normal((rows, 3)), axis=0)
    labels = [period_text(frequency, 2001, i) for i in range(rows)]
    lines = ["period,a,b,c"] + [f"{label},{row[0]:.5f},{row[1]:.5f},{row[2]:.5f}"
                                 for label, row in zip(labels, walk, strict=True)]
    return ("\n".join(lines) + "\n").encode()


def period_text(form: str, year: int, i: int) -> str:
    """The ``i``-th label after the start of ``year`` in a date form (annual, quarterly, monthly, ...)."""
    if form == "annual":
        return f"{year + i:04d}"
    if form == "quarterly":
        return f"{year + i // 4:04d}Q{i % 4 + 1}"
    if form == "quarterly-dash":
        return f"{year + i // 4:04d}-Q{i % 4 + 1}"
    if form == "monthly":
        return f"{year + i // 12:04d}-{i % 12 + 1:02d}"
    if form == "monthly-short":
        return f"{year + i // 12:04d}-{i % 12 + 1}"
    try:
        if form == "month-end":
            first = datetime.date(max(year, 1) + i // 12, i % 12 + 1, 1)
            last = (first.replace(day=28) + datetime.timedelta(days=4))
            return (last - datetime.timedelta(days=last.day)).isoformat()
        step = {"daily": 1, "weekly": 7}[form]
        start = datetime.date(max(year, 1), 1, 1)
        if form == "weekly":  # the data file carries a weekly period's last day, a Sunday
            start += datetime.timedelta(days=(6 - start.weekday()) % 7)
        return (start + datetime.timedelta(days=step * i)).isoformat()
    except (OverflowError, ValueError):  # past year 9999: a label no calendar has
        return f"{year + i // 12:04d}-{i % 12 + 1:02d}-31"


@st.composite
def valid_manifests(draw: st.DrawFn) -> dict[str, Any]:
    """A manifest structure that loads: 1-3 datasets over DATA_FILES, 1-4 series, 0-3 regressions.

    The many small choices of a valid manifest come from a ``random.Random`` seeded by one drawn
    number (a fraction of the cost of a hypothesis draw each); hypothesis' own draws go to the
    mutations, which is where shrinking a failure to its cause matters. The labels and the
    title are drawn, so that they hold any unicode.
    """
    rnd = random.Random(draw(st.integers(0, 2**32 - 1)))

    def maybe(odds: int) -> bool:
        return rnd.randrange(odds) == 0

    files = rnd.sample(sorted(DATA_FILES), rnd.randint(1, 3))
    datasets: dict[str, Any] = {}
    for number, file in enumerate(files):
        spec: dict[str, Any] = {"path": file, "index": "period"}
        if maybe(2):
            spec["frequency"] = DATA_FILES[file]
        if maybe(4):
            spec["missing"] = rnd.choice(MISSING_POLICIES)
        if maybe(4):
            spec["sort"] = maybe(2)
        datasets[f"ds{number}"] = spec
    names = rnd.sample(SERIES_NAMES, rnd.randint(1, 4))
    series: dict[str, Any] = {}
    for name in names:
        spec = {"dataset": rnd.choice(sorted(datasets)), "column": rnd.choice("abc")}
        if maybe(2):
            spec["transform"] = copy.deepcopy(rnd.choice(VALID_CHAINS))
        if maybe(5):
            spec["label"] = draw(st.text(max_size=20))
        for key, choices in (("deterministic", DETERMINISTIC), ("missing", MISSING_POLICIES),
                             ("too_short", TOO_SHORT)):
            if maybe(6):
                spec[key] = rnd.choice(choices)
        series[name] = spec
    regressions: dict[str, Any] = {}
    if len(names) >= 2:
        for number in range(rnd.randint(0, 3)):
            chosen = rnd.sample(names, rnd.randint(2, len(names)))
            regression: dict[str, Any] = {"formula": f"{chosen[0]} ~ {' + '.join(chosen[1:])}"}
            if maybe(3):
                regression["sample"] = {bound: rnd.choice(SAMPLE_LABELS[:11]) for bound in ("start", "end")
                                        if maybe(2)}
            if maybe(5):
                regression["too_short"] = rnd.choice(TOO_SHORT)
            if maybe(5):
                regression["label"] = draw(st.text(max_size=20))
            regressions[f"r{number}"] = regression
    manifest: dict[str, Any] = {"reportgen": 1, "project": {"title": draw(st.text(min_size=1, max_size=20))}}
    if maybe(4):
        manifest["project"].update(client="c", author="a", reference="r")
    manifest["datasets"] = datasets
    manifest["series"] = series
    if regressions or maybe(2):
        manifest["regressions"] = regressions
    settings: dict[str, Any] = {}
    for key, choices in (("significance", [0.01, 0.05, 0.1]), ("max_order", [1, 2]), ("lag_criterion", LAG_CRITERIA),
                         ("deterministic", DETERMINISTIC), ("seed", [0, 1, 20240601, 2**32 - 1]),
                         ("too_short", TOO_SHORT)):
        if maybe(4):
            settings[key] = rnd.choice(choices)
    if settings or maybe(2):
        manifest["settings"] = settings
    return manifest


# ---------------------------------------------------------------- mutations of a structure


def _paths(value: Any, prefix: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
    """Every key path inside a structure (mapping keys and list positions), parents first."""
    found: list[tuple[Any, ...]] = []
    items = value.items() if isinstance(value, dict) else enumerate(value) if isinstance(value, list) else ()
    for key, child in items:
        found.append((*prefix, key))
        found.extend(_paths(child, (*prefix, key)))
    return found


def _get(value: Any, path: tuple[Any, ...]) -> Any:
    for part in path:
        value = value[part]
    return value


def _formula_soup() -> st.SearchStrategy[str]:
    return st.one_of(
        st.lists(st.sampled_from(FORMULA_TOKENS), max_size=10).map("".join),
        st.lists(st.sampled_from(FORMULA_TOKENS), max_size=8).map(" ".join),
        st.text(max_size=20),
        st.sampled_from(["", " ", "~", "a ~", "~ b", "a ~ b +", "a ~ a", "a ~ b + b", "a ~ b * c", "a ~ (b + c)",
                         "a ~ 1 + b", "a ~ b - 1", "a ~ log(b)", "__import__('os').system('touch X')",
                         "a ~ __import__('os').system('touch X')", "a ~ b\n+ c", "a~b", "y ~ x1 + x2 + zz",
                         "a ~ b ~ c", "a ~~ b", "é ~ b", "a ~ ｂ", "a ~ b\x00", "a" * 3000 + " ~ b"]),
    )


@st.composite
def mutated_manifests(draw: st.DrawFn, max_mutations: int = 4) -> dict[str, Any]:
    """A valid manifest structure with 0..max_mutations mutations, each of a kind a user might make."""
    manifest = draw(valid_manifests())
    for _ in range(draw(st.integers(0, max_mutations))):
        manifest = _mutate(draw, manifest)
    return manifest


def _mutate(draw: st.DrawFn, manifest: Any) -> Any:
    """One mutation: replace, delete, add, rename, or set a transform, formula, sample or vocabulary value."""
    if not isinstance(manifest, dict):
        return manifest
    paths = _paths(manifest)
    kind = draw(st.sampled_from(["replace", "delete", "add", "rename", "transform", "formula", "sample",
                                 "vocabulary", "path", "top"]))
    if kind == "top":  # the whole manifest or a whole section of the wrong kind
        if draw(st.integers(0, 3)) == 0:
            return draw(st.one_of(junk_values, st.lists(st.just(manifest), max_size=1)))
        section = draw(st.sampled_from(["reportgen", "project", "datasets", "series", "regressions", "settings"]))
        manifest[section] = draw(junk_values)
        return manifest
    if kind == "replace" and paths:
        path = draw(st.sampled_from(paths))
        _get(manifest, path[:-1])[path[-1]] = draw(junk_values)
    elif kind == "delete":
        keyed = [path for path in paths if isinstance(_get(manifest, path[:-1]), dict)]
        if keyed:
            path = draw(st.sampled_from(keyed))
            del _get(manifest, path[:-1])[path[-1]]
    elif kind == "add":
        mappings = [(), *[path for path in paths if isinstance(_get(manifest, path), dict)]]
        target = _get(manifest, draw(st.sampled_from(mappings)))
        key = draw(st.one_of(names_odd, st.sampled_from(["titel", "pth", "indx", "frequence", "transforms",
                                                         "formulae", "settings", "colum", "sample", "start"])))
        target[key] = draw(junk_values)
    elif kind == "rename":
        keyed = [path for path in paths if isinstance(_get(manifest, path[:-1]), dict)]
        if keyed:
            path = draw(st.sampled_from(keyed))
            parent = _get(manifest, path[:-1])
            new = draw(names_odd)
            parent[new] = parent.pop(path[-1])
    elif kind == "transform":
        entries = [spec for spec in _section(manifest, "series") if isinstance(spec, dict)]
        if entries:
            spec = draw(st.sampled_from(entries))
            spec["transform"] = draw(st.one_of(
                st.lists(st.one_of(st.sampled_from(BAD_TRANSFORM_ITEMS), st.sampled_from(TRANSFORMS)), max_size=4)
                .map(copy.deepcopy),
                st.sampled_from(BAD_TRANSFORM_ITEMS).map(copy.deepcopy),
                st.dictionaries(st.sampled_from(TRANSFORMS), st.integers(-5, 2000), max_size=3).map(lambda d: [d]),
            ))
    elif kind == "formula":
        entries = [spec for spec in _section(manifest, "regressions") if isinstance(spec, dict)]
        soup = draw(_formula_soup())
        if entries:
            draw(st.sampled_from(entries))["formula"] = soup
        elif isinstance(manifest.get("regressions", {}), dict):
            manifest.setdefault("regressions", {})["r_new"] = {"formula": soup}
    elif kind == "sample":
        entries = [spec for spec in _section(manifest, "regressions") if isinstance(spec, dict)]
        if entries:
            window = {bound: copy.deepcopy(draw(st.sampled_from(SAMPLE_LABELS))) for bound in ("start", "end")
                      if draw(st.booleans())}
            draw(st.sampled_from(entries))["sample"] = draw(st.one_of(st.just(window), junk_values))
    elif kind == "path":
        entries = [spec for spec in _section(manifest, "datasets") if isinstance(spec, dict)]
        if entries:
            spec = draw(st.sampled_from(entries))
            if draw(st.booleans()):
                spec["path"] = draw(st.sampled_from(PATH_ODDITIES))
            else:
                spec["index"] = draw(st.sampled_from(INDEX_ODDITIES))
    elif kind == "vocabulary":
        sections = [spec for name in ("datasets", "series", "regressions") for spec in _section(manifest, name)
                    if isinstance(spec, dict)]
        if isinstance(manifest.get("settings"), dict):
            sections.append(manifest["settings"])
        if sections:
            target = draw(st.sampled_from(sections))
            key = draw(st.sampled_from(["frequency", "missing", "sort", "too_short", "deterministic", "significance",
                                        "max_order", "lag_criterion", "seed", "index", "path", "column", "dataset"]))
            target[key] = draw(st.one_of(
                st.sampled_from([*FREQUENCIES, *MISSING_POLICIES, *TOO_SHORT, *DETERMINISTIC, *LAG_CRITERIA,
                                 "Monthly", "month", "M", "drop", "interpolation", "yes", "report ", 0.05, 0.1, 0.5,
                                 0.010, 1, 2, 3, 0, -1, 2**32, "sub/d3.csv", "missing.csv", "d0.csv/", "sub",
                                 "../d0.csv", "d0.csv\x00", "period", "a", "ds0", "ds9"]),
                junk_values))
    return manifest


def _section(manifest: dict[str, Any], name: str) -> list[Any]:
    section = manifest.get(name)
    return list(section.values()) if isinstance(section, dict) else []


@st.composite
def manifest_yaml(draw: st.DrawFn, structure: st.SearchStrategy[Any] | None = None) -> bytes:
    """A manifest structure dumped by ``yaml.safe_dump`` in a drawn style, as bytes (mostly UTF-8)."""
    value = draw(structure if structure is not None else mutated_manifests())
    text = yaml.safe_dump(value, sort_keys=False, allow_unicode=draw(st.booleans()),
                          default_flow_style=draw(st.sampled_from([False, None, True])),
                          width=draw(st.sampled_from([80, 10**6])))
    return text.encode("utf-8", "surrogatepass")


# ---------------------------------------------------------------- raw text noise


@st.composite
def noisy_yaml(draw: st.DrawFn) -> bytes:
    """The YAML text of a valid manifest with 1-4 character-level edits, then maybe byte-level damage."""
    text = yaml.safe_dump(draw(valid_manifests()), sort_keys=False,
                          default_flow_style=draw(st.sampled_from([False, None])))
    for _ in range(draw(st.sampled_from([1, 1, 1, 2, 2, 3, 4]))):
        position = draw(st.integers(0, len(text)))
        kind = draw(st.sampled_from(["insert", "insert", "delete", "replace", "duplicate-line", "swap-lines",
                                     "indent", "nest", "tag", "tag", "scalar", "scalar"]))
        if kind == "insert":
            piece = draw(st.one_of(st.sampled_from(YAML_NOISE), st.characters(), st.text(max_size=3)))
            text = text[:position] + piece + text[position:]
        elif kind == "delete":
            text = text[:position] + text[position + draw(st.integers(1, 12)):]
        elif kind == "replace" and position < len(text):
            text = text[:position] + draw(st.one_of(st.characters(), st.sampled_from(YAML_NOISE))) + \
                text[position + 1:]
        elif kind in {"duplicate-line", "swap-lines", "indent"}:
            lines = text.split("\n")
            line = draw(st.integers(0, len(lines) - 1))
            if kind == "duplicate-line":
                lines.insert(line, lines[line])
            elif kind == "swap-lines":
                other = draw(st.integers(0, len(lines) - 1))
                lines[line], lines[other] = lines[other], lines[line]
            else:
                lines[line] = draw(st.sampled_from(["\t", " ", "  ", "   "])) + lines[line]
            text = "\n".join(lines)
        elif kind in {"tag", "scalar"}:  # on a value or a key: '!!int text', '0b_'
            lines = text.split("\n")
            candidates = [number for number, line in enumerate(lines) if ":" in line]
            if candidates:
                number = draw(st.sampled_from(candidates))
                line = lines[number]
                on_value = draw(st.booleans())
                colon = line.index(":") + 1 if on_value else len(line) - len(line.lstrip(" -"))
                piece = draw(st.sampled_from(TAGS if kind == "tag" else ODD_SCALARS))
                if on_value and kind == "scalar":  # replace the value (up to a flow comma)
                    end = line.find(",", colon)
                    line = f"{line[:colon]} {piece}{line[end:] if end >= 0 else ''}"
                elif on_value:
                    line = f"{line[:colon]} {piece}{line[colon:]}"
                else:  # before the key, keeping its indentation
                    line = f"{line[:colon]}{piece} {line[colon:]}"
                lines[number] = line
                text = "\n".join(lines)
        elif kind == "nest":
            depth = draw(st.sampled_from([10, 100, 400, 2000, 20000]))
            opener, closer = draw(st.sampled_from([("[", "]"), ("{a: ", "}"), ("- ", "")]))
            nested = opener * depth + "1" + closer * depth if opener != "- " else \
                "".join(f"\n{' ' * (2 * level)}- " for level in range(min(depth, 400))) + "1"
            text = text[:position] + nested + text[position:]
    data = text.encode("utf-8", "surrogatepass")
    damage = draw(st.sampled_from(["none"] * 6 + ["bom", "bom-twice", "latin-1", "bytes", "utf-16", "truncate",
                                                  "crlf", "cr"]))
    if damage == "bom":
        data = b"\xef\xbb\xbf" + data
    elif damage == "bom-twice":
        data = b"\xef\xbb\xbf\xef\xbb\xbf" + data
    elif damage == "latin-1":
        data = text.encode("latin-1", "replace") + "café: é\n".encode("latin-1")
    elif damage == "bytes":
        position = draw(st.integers(0, len(data)))
        data = data[:position] + draw(st.sampled_from([b"\xff", b"\xc3", b"\xe9", b"\x80\x80", b"\xed\xa0\x80",
                                                       b"\xf4\x90\x80\x80", b"\x00", b"\xfe\xff"])) + data[position:]
    elif damage == "utf-16":
        data = text.encode("utf-16", "surrogatepass")
    elif damage == "truncate":
        data = data[:draw(st.integers(0, len(data)))]
    elif damage == "crlf":
        data = data.replace(b"\n", b"\r\n")
    elif damage == "cr":
        data = data.replace(b"\n", b"\r")
    return data


# ---------------------------------------------------------------- CSV files

DATE_FORMS = ["annual", "quarterly", "quarterly-dash", "monthly", "monthly-short", "month-end", "daily", "weekly"]
START_YEARS = st.one_of(st.integers(1995, 2025), st.sampled_from([0, 1, 999, 1000, 1582, 1677, 1678, 2261, 2262,
                                                                  2263, 9998, 9999]))
GARBAGE_DATES = [
    "", " ", "2011-13", "2011Q0", "2011Q5", "2011-02-30", "2011-00", "11-03", "2011/03", "March 2011", "2011-W05",
    "nan", "NA", "２０１１", "٢٠١١", "2011-03-14T00:00", "2011 Q1", "20110314", " 2011 ", "2011-3", "2011q1",
    "2011-Q1", "2011-03-14", "2011", "2011-03", "0000-01-01", "1500-06-15", "9999-12-31", "2262-04-12",
    "1677-09-21", "9999-12-27", "9999-12-30", "12011", "-2011", "+2011", "2011.0", "2e3", "\x00", "é",
    "2011-03-14 ", "2011\n", '"2011"',
]
CELL_SPECIALS = [
    "", " ", "na", "NA", "n/a", "nan", "NaN", "-nan", "+nan", "null", "None", "-", ".", "inf", "-inf", "Infinity",
    "1e308", "-1e308", "1e309", "1e-320", "5e-324", "-0", "0", "+0", "0.0", "1_000", "1,5", "1.5.5", "12 ", " 12",
    "0x10", "1e", "e1", "١٢", "１２", "12abc", "abc", "x" * 400, "9" * 400, "1" + "0" * 400 + ".5", "\t3",
    "3\n4", '"3"', "'3'", "é", "$12", "12%", "(12)", "—", "\u00a012", "TRUE", "1/2", "1e-5", "-1", "-1e-300",
    "1" * 140_000,
]
INDEX = "period"


@st.composite
def csv_tables(draw: st.DrawFn) -> tuple[bytes, dict[str, Any]]:
    """A CSV file and what it was meant to be: ``(bytes, {"form": ..., "rows": ...})``.

    The file is a header ``period,a,b,c`` (in a drawn column order) over 0-45 rows of dates of
    one form and seeded positive values, then damaged by 0-6 edits of dates, cells, header,
    rows or bytes.
    """
    form = draw(st.sampled_from(DATE_FORMS))
    rows = draw(st.one_of(st.integers(20, 45), st.integers(0, 45)))
    seed = draw(st.integers(0, 2**16))
    rng = np.random.default_rng(seed)
    values = 50 + np.cumsum(rng.standard_normal((rows, 3)), axis=0)
    header = [INDEX, "a", "b", "c"]
    if draw(st.integers(0, 4)) == 0:
        header = draw(st.permutations(header))
    if draw(st.integers(0, 7)):
        year = draw(START_YEARS)
        labels = [period_text(form, year, i) for i in range(rows)]
    else:  # the last periods of the calendar, up to 9999-12-31
        per_year = {"annual": 1, "daily": 365, "weekly": 52, "quarterly": 4, "quarterly-dash": 4}.get(form, 12)
        year = 9999 - max(rows - 1, 0) // per_year
        total = per_year * (9999 - year + 1)
        labels = [period_text(form, year, total - rows + i) for i in range(rows)]
    number_format = draw(st.sampled_from(["{:.6f}", "{:.3g}", "{!r}", "{:.2e}", "{:.0f}"]))
    body = [[labels[r] if column == INDEX else number_format.format(float(values[r, "abc".index(column)]))
             for column in header] for r in range(rows)]
    for _ in range(draw(st.integers(0, 6))):
        _edit_csv(draw, header, body)
    lines = [header, *body]
    writer_kind = draw(st.sampled_from(["csv", "csv", "csv-all", "join"]))
    if writer_kind == "join":
        text = "".join(",".join(row) + "\n" for row in lines)
    else:
        stream = io.StringIO()
        quoting = csv.QUOTE_ALL if writer_kind == "csv-all" else csv.QUOTE_MINIMAL
        csv.writer(stream, quoting=quoting, lineterminator=draw(st.sampled_from(["\n", "\r\n"]))).writerows(lines)
        text = stream.getvalue()
    data = text.encode("utf-8", "surrogatepass")
    damage = draw(st.sampled_from(["none"] * 8 + ["empty", "header-only", "bom", "nul", "latin-1", "bytes", "blank",
                                                  "unbalanced-quote", "truncate", "cr"]))
    if damage == "empty":
        data = draw(st.sampled_from([b"", b"\n", b"\n\n", b" \n", b"\xef\xbb\xbf", b",,,\n"]))
    elif damage == "header-only":
        data = data.split(b"\n", 1)[0] + draw(st.sampled_from([b"", b"\n", b"\n\n", b"\n,,,\n"]))
    elif damage == "bom":
        data = b"\xef\xbb\xbf" + data
    elif damage in {"nul", "latin-1", "bytes"}:
        position = draw(st.integers(0, len(data)))
        piece = {"nul": b"\x00", "latin-1": "é".encode("latin-1"),
                 "bytes": draw(st.sampled_from([b"\xff", b"\xc3", b"\x80", b"\xed\xa0\x80"]))}[damage]
        data = data[:position] + piece + data[position:]
    elif damage == "blank":
        data = data + b"\n,,,\n\n  \n"
    elif damage == "unbalanced-quote":
        position = draw(st.integers(0, len(data)))
        data = data[:position] + b'"' + data[position:]
    elif damage == "truncate":
        data = data[:draw(st.integers(0, len(data)))]
    elif damage == "cr":
        data = data.replace(b"\r\n", b"\n").replace(b"\n", b"\r")
    return data, {"form": form, "rows": rows, "year": year}


def _edit_csv(draw: st.DrawFn, header: list[str], body: list[list[str]]) -> None:
    """One edit of a CSV grid in place: a date, a cell, a row or the header."""
    kind = draw(st.sampled_from(["date", "date", "cell", "cell", "cell", "swap", "duplicate", "skip", "ragged",
                                 "header", "column-missing", "constant", "big-cell"]))
    if kind == "header":
        position = draw(st.integers(0, len(header) - 1))
        header[position] = draw(st.one_of(st.sampled_from(["", " ", "a", "b", INDEX, " period", "Period",
                                                           "period ", "\ufeffperiod", "é", "a,b", '"a"', "c"]),
                                          st.text(max_size=5)))
        return
    if kind == "column-missing" and len(header) > 1:
        position = draw(st.integers(0, len(header) - 1))
        del header[position]
        for row in body:
            if position < len(row):
                del row[position]
        return
    if not body:
        return
    r = draw(st.integers(0, len(body) - 1))
    date = header.index(INDEX) if INDEX in header else 0
    if kind == "date" and date < len(body[r]):
        body[r][date] = draw(st.one_of(st.sampled_from(GARBAGE_DATES), st.text(max_size=10)))
    elif kind == "cell":
        columns = [k for k in range(len(body[r])) if k != date] or [0]
        k = draw(st.sampled_from(columns))
        if k < len(body[r]):
            span = draw(st.integers(1, 3))
            for offset in range(span):
                if r + offset < len(body) and k < len(body[r + offset]):
                    body[r + offset][k] = draw(st.one_of(st.sampled_from(CELL_SPECIALS), st.text(max_size=6)))
    elif kind == "big-cell":
        columns = [k for k in range(len(body[r])) if k != date] or [0]
        k = draw(st.sampled_from(columns))
        if k < len(body[r]):
            body[r][k] = draw(st.sampled_from(["1e308", "-1e308", "1e-308", "1e300", "-1e300", "0", "1e15"]))
    elif kind == "swap":
        other = draw(st.integers(0, len(body) - 1))
        body[r], body[other] = body[other], body[r]
    elif kind == "duplicate":
        body.insert(r, list(body[r]))
    elif kind == "skip":
        del body[r]
    elif kind == "ragged":
        if draw(st.booleans()):
            body[r].append(draw(st.sampled_from(["", "1", "extra"])))
        elif body[r]:
            body[r].pop()
    elif kind == "constant":
        columns = [k for k in range(len(header)) if k != date]
        if columns:
            k = draw(st.sampled_from(columns))
            for row in body:
                if k < len(row):
                    row[k] = "7"
