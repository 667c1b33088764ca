"""Hostile input to the rendering: user templates that try to escape the sandbox, markup in the
manifest and the data, and dossier resources outside the project or on the network.

Every attack goes through the command line where it can: the run must stop with a catalogue error
(exit status 2, no traceback, no dossier folder, no staging folder left) and nothing the payload asks
for may happen. The analysis of each project runs once per module (see :func:`analyse_once`); the
attacks are on the rendering, which runs every time.
"""

from __future__ import annotations

import json
import re
import shutil
import socket
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any
from xml.etree import ElementTree

import numpy as np
import pytest
from bs4 import BeautifulSoup

from reportgen import cli, runner
from reportgen.errors import ResourceRefusedError, ResourceUnreadableError
from reportgen.render.environment import build_environment, packaged_templates_dir
from reportgen.render.html import _svg_problem
from reportgen.render.pdf import LocalFileFetcher, build_pdf
from reportgen.render.plots import render_plots

from .conftest import CREATED

CliRun = Callable[..., tuple[int, str, str]]

#: The strings every text field of the hostile project carries.
PAYLOADS = ("<script>alert(1)</script>", '"><img src=x onerror=alert(1)>', "</style><script>alert(1)</script>",
            "javascript:alert(1)")
HOSTILE = " ".join(PAYLOADS)
#: CSV column headers (a header cannot start with a quote, and no data file name can hold a slash).
COLUMN_SCRIPT = "<script>alert(1)</script>"
COLUMN_ATTRIBUTE = 'x"><img src=x onerror=alert(1)> javascript:alert(1) </style><script>'
COLUMN_UNUSED = "</style><script>alert(2)</script>"
DATA_FILE = '"><img src=x onerror=alert(1)> javascript:alert(1).csv'


# ---------------------------------------------------------------- projects and the command line

SMALL_MANIFEST = """\
reportgen: 1
project:
  title: Small check
datasets:
  sim:
    path: sim.csv
    index: month
series:
  walk_a: {dataset: sim, column: walk_a}
  walk_b: {dataset: sim, column: walk_b}
  noise: {dataset: sim, column: noise}
regressions:
  a_on_b: {formula: "walk_a ~ walk_b"}
  noise_on_a: {formula: "noise ~ walk_a"}
"""


def simulated_csv(seed: int = 7, periods: int = 120) -> str:
    """Two independent random walks and a white noise, monthly from 2010-01 (seeded)."""
    rng = np.random.default_rng(seed)
    walk_a = 50 + np.cumsum(rng.standard_normal(periods))
    walk_b = 80 + np.cumsum(rng.standard_normal(periods))
    noise = 5 + rng.standard_normal(periods)
    rows = [f"{2010 + i // 12}-{i % 12 + 1:02d},{walk_a[i]:.6f},{walk_b[i]:.6f},{noise[i]:.6f}"
            for i in range(periods)]
    return "month,walk_a,walk_b,noise\n" + "\n".join(rows) + "\n"


def _yaml(text: str) -> str:
    """``text`` as a YAML double-quoted scalar (JSON strings are YAML)."""
    return json.dumps(text)


def hostile_manifest() -> str:
    """A manifest whose every free-text field, column name and data path carries markup."""
    return f"""\
reportgen: 1
project:
  title: {_yaml("title " + HOSTILE)}
  client: {_yaml("client " + HOSTILE)}
  author: {_yaml("author " + HOSTILE)}
  reference: {_yaml("reference " + HOSTILE)}
datasets:
  sim:
    path: {_yaml(DATA_FILE)}
    index: month
series:
  walk_a: {{dataset: sim, column: {_yaml(COLUMN_SCRIPT)}, missing: drop-leading-trailing,
           label: {_yaml("walk a " + HOSTILE)}}}
  walk_b: {{dataset: sim, column: {_yaml(COLUMN_ATTRIBUTE)}, transform: [log], label: {_yaml("walk b " + HOSTILE)}}}
  noise: {{dataset: sim, column: noise}}
regressions:
  a_on_b: {{formula: "walk_a ~ walk_b", label: {_yaml("a on b " + HOSTILE)}}}
  noise_on_a: {{formula: "noise ~ walk_a", label: {_yaml("noise on a " + HOSTILE)}}}
"""


def hostile_csv() -> str:
    """The small project's data under hostile column names; the first column starts two months late."""
    lines = simulated_csv().splitlines()
    rows = []
    for number, line in enumerate(lines[1:]):
        month, walk_a, walk_b, noise = line.split(",")
        rows.append(f"{month},{'' if number < 2 else walk_a},{walk_b},{noise},1")
    return f"month,{COLUMN_SCRIPT},{COLUMN_ATTRIBUTE},noise,{COLUMN_UNUSED}\n" + "\n".join(rows) + "\n"


@pytest.fixture(scope="module")
def project(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The small clean project (its manifest), shared by the template attacks."""
    folder = tmp_path_factory.mktemp("project")
    (folder / "sim.csv").write_text(simulated_csv(), encoding="utf-8")
    (folder / "manifest.yaml").write_text(SMALL_MANIFEST, encoding="utf-8")
    return folder / "manifest.yaml"


@pytest.fixture(scope="module")
def hostile_project(tmp_path_factory: pytest.TempPathFactory) -> Path:
    """The hostile project (its manifest)."""
    folder = tmp_path_factory.mktemp("hostile")
    (folder / DATA_FILE).write_text(hostile_csv(), encoding="utf-8")
    (folder / "manifest.yaml").write_text(hostile_manifest(), encoding="utf-8")
    return folder / "manifest.yaml"


_ANALYSES: dict[tuple[str, bytes], Any] = {}


@pytest.fixture(autouse=True)
def analyse_once(monkeypatch: pytest.MonkeyPatch) -> None:
    """Run the statistics of a manifest once per test session; rendering still runs every time."""
    real = runner.analyse

    def cached(manifest: Any, *arguments: Any, **options: Any) -> Any:
        key = (str(manifest.path), bytes(manifest.raw))
        if key not in _ANALYSES:
            _ANALYSES[key] = real(manifest, *arguments, **options)
        return _ANALYSES[key]

    monkeypatch.setattr(runner, "analyse", cached)


@pytest.fixture
def cli_run(capsys: pytest.CaptureFixture[str]) -> CliRun:
    """Run ``reportgen`` in this process (``run`` with ``--quiet``); return (exit status, stdout, stderr)."""

    def call(*arguments: str | Path) -> tuple[int, str, str]:
        words = [str(argument) for argument in arguments]
        if words[0] == "run" and "--quiet" not in words:
            words.append("--quiet")
        status = cli.main(words)
        captured = capsys.readouterr()
        return status, captured.out, captured.err

    return call


@pytest.fixture
def no_network(monkeypatch: pytest.MonkeyPatch) -> list[Any]:
    """Make every network call fail loudly and record it; the test asserts the list stays empty."""
    attempts: list[Any] = []

    def refuse(*arguments: Any, **options: Any) -> Any:
        attempts.append(arguments[1:] if arguments and isinstance(arguments[0], socket.socket) else arguments)
        raise OSError("network access attempted during a test")

    monkeypatch.setattr(socket.socket, "connect", refuse)
    monkeypatch.setattr(socket.socket, "connect_ex", refuse)
    monkeypatch.setattr(socket, "create_connection", refuse)
    monkeypatch.setattr(socket, "getaddrinfo", refuse)
    return attempts


def assert_refused(status: int, stdout: str, stderr: str, out: Path, code: str) -> None:
    """Exit status 2 with one catalogue error of ``code``, no traceback, nothing written."""
    assert status == 2, stderr
    assert f"error[{code}]" in stderr
    assert "Traceback" not in stdout + stderr
    assert "internal error" not in stderr
    assert not out.exists()
    assert not list(out.parent.glob(f".{out.name}.partial-*"))


# ---------------------------------------------------------------- user templates and the sandbox


SENTINEL = "reportgen-sandbox-escaped"

#: name -> (the template line, the catalogue code it must give).
SANDBOX_ATTACKS: dict[str, tuple[str, str]] = {
    "subclasses": ("{{ ''.__class__.__mro__[1].__subclasses__() }}", "template-unsafe"),
    "cycler-globals": ("{{ cycler.__init__.__globals__ }}", "template-unsafe"),
    "self-dict": ("{{ self.__dict__ }}", "template-unsafe"),
    "self-context": ("{{ self._TemplateReference__context }}", "template-unsafe"),
    "private-attribute": ("{{ namespace(a=1)._Namespace__attrs }}", "template-unsafe"),
    "private-key": ("{{ project._private }}", "template-unsafe"),
    "attr-filter": ("{{ ''|attr('__class__') }}", "template-unsafe"),
    "format-string": ("{{ '{0.__class__.__init__.__globals__}'.format(cycler) }}", "template-unsafe"),
    "format-map": ("{{ '{a.__class__}'.format_map({'a': cycler}) }}", "template-unsafe"),
    "popen": ("{{ cycler.__init__.__globals__.os.popen('touch SENTINEL').read() }}", "template-unsafe"),
    "system": ("{{ lipsum.__globals__['os'].system('touch SENTINEL') }}", "template-unsafe"),
    "include-absolute": ("{% include '/etc/passwd' %}", "template-name-refused"),
    "include-climbing": ("{% include '../../outside.html' %}", "template-name-refused"),
    "include-climbing-default": ("{% include 'default/../../outside.html' %}", "template-name-refused"),
    "extends-absolute": ("{% extends '/etc/passwd' %}", "template-name-refused"),
    "import-climbing": ("{% import '../outside.html' as outside %}", "template-name-refused"),
    "include-missing": ("{% include 'partials/no-such-part.html.j2' %}", "template-not-found"),
    "change-document": ("{{ document.regressions['a_on_b'].update({'flagged': false}) or '' }}", "template-unsafe"),
    "change-list": ("{{ document.inputs.append({}) or '' }}", "template-unsafe"),
}


def user_cover(folder: Path, line: str) -> Path:
    """A template folder whose cover partial holds ``line`` on its line 2; returns the partial."""
    (folder / "partials").mkdir(parents=True, exist_ok=True)
    cover = folder / "partials" / "cover.html.j2"
    cover.write_text(f"<header>\n{line}\n</header>\n", encoding="utf-8")
    return cover


@pytest.mark.parametrize("attack", list(SANDBOX_ATTACKS))
def test_sandbox_refuses_user_template(attack: str, project: Path, tmp_path: Path, cli_run: CliRun,
                                       monkeypatch: pytest.MonkeyPatch) -> None:
    line, code = SANDBOX_ATTACKS[attack]
    sentinel = tmp_path / SENTINEL
    monkeypatch.chdir(tmp_path)  # a payload's relative 'touch SENTINEL' would land here
    (tmp_path / "outside.html").write_text("OUTSIDE {{ 6 * 7 }}", encoding="utf-8")
    cover = user_cover(tmp_path / "work" / "templates", line.replace("SENTINEL", str(sentinel)))
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", project, "--out", out, "--format", "html",
                                     "--templates", cover.parent.parent)
    assert_refused(status, stdout, stderr, out, code)
    assert stderr.startswith(f"{cover}:2: error[{code}]: ")
    assert not sentinel.exists()
    assert "OUTSIDE" not in stderr


def test_sandbox_messages_word_for_word(project: Path, tmp_path: Path, cli_run: CliRun) -> None:
    cover = user_cover(tmp_path / "templates", SANDBOX_ATTACKS["subclasses"][0])
    status, _, stderr = cli_run("run", project, "--out", tmp_path / "out", "--templates", cover.parent.parent)
    assert status == 2
    assert stderr == (f"{cover}:2: error[template-unsafe]: template error: access to attribute '__class__' of 'str' "
                      "object is unsafe.\n"
                      "  hint: the names a template can use are listed in reportgen/render/html.py\n")
    cover = user_cover(tmp_path / "templates", SANDBOX_ATTACKS["include-climbing"][0])
    status, _, stderr = cli_run("run", project, "--out", tmp_path / "out", "--templates", cover.parent.parent)
    assert status == 2
    assert stderr == (f"{cover}:2: error[template-name-refused]: '../../outside.html' is not a template name "
                      "reportgen loads: templates are named by a relative path inside a template folder, without "
                      "'..'\n  hint: include or extend templates by their name inside a template folder, e.g. "
                      "'partials/summary.html.j2'; links out of the folder are not followed\n")
    cover = user_cover(tmp_path / "templates", SANDBOX_ATTACKS["include-missing"][0])
    status, _, stderr = cli_run("run", project, "--out", tmp_path / "out", "--templates", cover.parent.parent)
    assert status == 2
    assert stderr == (f"{cover}:2: error[template-not-found]: template 'partials/no-such-part.html.j2' not found in "
                      "the template folders\n  hint: a user template folder may only replace templates that exist\n")


def test_a_template_cannot_change_the_verdicts_that_fail_on_reads(project: Path, tmp_path: Path,
                                                                   cli_run: CliRun) -> None:
    # Without the template the run is flagged (exit 1); a template that clears 'flagged' must not turn that into 0.
    out = tmp_path / "plain"
    assert cli_run("run", project, "--out", out, "--format", "html", "--fail-on", "flagged")[0] == 1
    cover = user_cover(tmp_path / "templates", SANDBOX_ATTACKS["change-document"][0])
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", project, "--out", out, "--format", "html", "--fail-on", "flagged",
                                     "--templates", cover.parent.parent)
    assert_refused(status, stdout, stderr, out, "template-unsafe")
    # A part of the document is a dict, or (from a run's cache) a dict that also holds its JSON text.
    assert re.search(r"access to attribute 'update' of '(dict|DocumentPart)' object is unsafe", stderr)


@pytest.mark.parametrize("link", ["partials/cover.html.j2", "partials", "style.css"])
def test_links_out_of_the_template_folder_are_not_followed(link: str, project: Path, tmp_path: Path,
                                                           cli_run: CliRun) -> None:
    outside = tmp_path / "outside"
    (outside / "partials").mkdir(parents=True)
    (outside / "partials" / "cover.html.j2").write_text("<p>OUTSIDE {{ 6 * 7 }}</p>\n", encoding="utf-8")
    (outside / "style.css").write_text("body { color: #0badbad; }\n", encoding="utf-8")
    templates = tmp_path / "templates"
    (templates / link).parent.mkdir(parents=True, exist_ok=True)
    (templates / link).symlink_to(outside / link)
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", project, "--out", out, "--format", "html", "--templates", templates)
    assert_refused(status, stdout, stderr, out, "template-name-refused")
    assert f"is a link to {(outside / link).resolve()}" in stderr or f"is a link to {outside.resolve()}" in stderr
    assert "outside its template folder" in stderr


def test_a_link_inside_the_template_folder_is_fine(project: Path, tmp_path: Path) -> None:
    templates = tmp_path / "templates"
    (templates / "parts").mkdir(parents=True)
    (templates / "parts" / "cover.html.j2").write_text("<p>Client cover {{ 6 * 7 }}</p>\n", encoding="utf-8")
    (templates / "partials").mkdir()
    (templates / "partials" / "cover.html.j2").symlink_to(templates / "parts" / "cover.html.j2")
    environment = build_environment([templates])
    assert environment.get_template("partials/cover.html.j2").render() == "<p>Client cover 42</p>\n"
    packaged = environment.get_template("default/partials/cover.html.j2")
    assert packaged.filename == str(packaged_templates_dir() / "partials" / "cover.html.j2")


def test_a_template_that_is_not_utf8_is_a_syntax_error(project: Path, tmp_path: Path, cli_run: CliRun) -> None:
    templates = tmp_path / "templates"
    (templates / "partials").mkdir(parents=True)
    cover = templates / "partials" / "cover.html.j2"
    cover.write_bytes("<p>Caf\u00e9</p>\n".encode("latin-1"))
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", project, "--out", out, "--format", "html", "--templates", templates)
    assert_refused(status, stdout, stderr, out, "template-syntax")
    assert stderr == (f"{cover}:1: error[template-syntax]: template syntax error: the file is not UTF-8 text (byte 6)\n"
                      "  hint: fix the template, or remove it to use the packaged one\n")


def test_a_stylesheet_that_closes_its_element_is_refused(project: Path, tmp_path: Path, cli_run: CliRun) -> None:
    templates = tmp_path / "templates"
    templates.mkdir()
    style = templates / "style.css"
    style.write_text("body { color: red; }\n</STYLE ><script>alert(1)</script>\n", encoding="utf-8")
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", project, "--out", out, "--format", "html", "--templates", templates)
    assert_refused(status, stdout, stderr, out, "stylesheet-unsafe")
    assert stderr == (f"{style}: error[stylesheet-unsafe]: style.css must not contain a closing </style> tag\n"
                      "  hint: remove the tag from the stylesheet\n")


# ---------------------------------------------------------------- markup in the manifest and the data


@pytest.fixture(scope="module")
def hostile_dossier(hostile_project: Path, tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """The hostile project's dossier, HTML and PDF (written once for the module)."""
    out = tmp_path_factory.mktemp("hostile-out") / "dossier"
    # The module's autouse fixture is function-scoped, so this one run analyses for real.
    status = cli.main(["run", str(hostile_project), "--out", str(out), "--format", "html,pdf", "--quiet"])
    assert status == 0
    yield out
    shutil.rmtree(out, ignore_errors=True)


@pytest.fixture(scope="module")
def hostile_soup(hostile_dossier: Path) -> BeautifulSoup:
    return BeautifulSoup((hostile_dossier / "dossier.html").read_text(encoding="utf-8"), "html.parser")


def _text(element: Any) -> str:
    return " ".join(element.get_text(" ").split())


def test_hostile_strings_leave_no_live_markup(hostile_soup: BeautifulSoup) -> None:
    assert hostile_soup.find_all("script") == []
    assert hostile_soup.find_all("img") == []
    handlers = [(element.name, name) for element in hostile_soup.find_all(True) for name in element.attrs
                if name.lower().startswith("on")]
    assert handlers == []
    urls = [value for element in hostile_soup.find_all(True) for name, value in element.attrs.items()
            if name.lower() in ("href", "src", "xlink:href", "action") and "javascript:" in str(value).lower()]
    assert urls == []
    # '</style>' in the data does not close the stylesheet: one <style>, holding the packaged stylesheets only
    # (the colours, then the layout).
    styles = hostile_soup.find_all("style")
    assert len(styles) == 1
    packaged = [(packaged_templates_dir() / name).read_text(encoding="utf-8").split() for name in
                ("colours.css", "style.css")]
    assert styles[0].string.split() == packaged[0] + packaged[1]


def test_hostile_strings_appear_as_text(hostile_soup: BeautifulSoup) -> None:
    soup = hostile_soup
    assert _text(soup.title).startswith(f"title {HOSTILE}")
    assert _text(soup.select_one("h1.project-title")) == f"title {HOSTILE}"
    for key in ("client", "author", "reference"):
        assert _text(soup.select_one(f"td.project-{key}")) == f"{key} {HOSTILE}"
    assert soup.select_one('meta[name="author"]')["content"] == f"author {HOSTILE}"
    assert _text(soup.select_one("#series-walk-a-heading")) == f"walk a {HOSTILE} walk_a"
    assert _text(soup.select_one("#series-walk-b-heading")) == f"walk b {HOSTILE} walk_b"
    assert _text(soup.select_one("#regression-a-on-b-heading")) == f"a on b {HOSTILE} a_on_b"
    assert _text(soup.select_one("#regression-noise-on-a-heading")) == f"noise on a {HOSTILE} noise_on_a"
    codes = {code.get_text() for code in soup.find_all("code")}
    assert {COLUMN_SCRIPT, COLUMN_ATTRIBUTE, COLUMN_UNUSED, DATA_FILE, f"log({COLUMN_ATTRIBUTE})"} <= codes
    notes = {item.get_text() for item in soup.select("ul.notes li")}
    assert any(note.startswith(f"column '{COLUMN_SCRIPT}' holds values from 2010-03") for note in notes), notes


def test_hostile_labels_in_charts_are_svg_text(hostile_dossier: Path, hostile_soup: BeautifulSoup) -> None:
    charts = hostile_soup.find_all("svg")
    assert charts
    titles = {_text(text) for chart in charts for text in chart.find_all("text")}
    assert f"walk a {HOSTILE}: {COLUMN_SCRIPT}" in titles
    assert f"walk b {HOSTILE}: log({COLUMN_ATTRIBUTE})" in titles
    document = json.loads((hostile_dossier / "results.json").read_text(encoding="utf-8"))
    for key, svg in render_plots(document).items():
        assert _svg_problem(svg) is None, key


def test_svg_labels_are_escaped_and_kept_as_written() -> None:
    label = f'{HOSTILE} id="fig" url(#fig) <!-- --> ]]> &amp; $x^2$'
    lineage = f"log({COLUMN_ATTRIBUTE})"
    document = {"series": {"a": {"label": label, "lineage": lineage,
                                 "data": {"dates": ["2010-01", "2010-02", "2010-03"], "values": [1.0, 2.0, 3.0]}}}}
    svg = render_plots(document)["series:a"]
    for markup in ("<script", "<img", "<!--"):
        assert markup not in svg
    assert _svg_problem(svg) is None
    root = ElementTree.fromstring(svg)
    texts = ["".join(element.itertext()) for element in root.iter("{http://www.w3.org/2000/svg}text")]
    assert f"{label}: {lineage}" in texts  # as written: no id prefix pasted into the text, no mathtext


@pytest.mark.parametrize("svg", [
    '<svg xmlns="http://www.w3.org/2000/svg"><script>alert(1)</script></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg"><g onload="alert(1)"/></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg"><foreignObject><p>x</p></foreignObject></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg" xmlns:xlink="http://www.w3.org/1999/xlink">'
    '<use xlink:href="javascript:alert(1)"/></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg"><image href="http://example.com/x.png"/></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg"><rect fill="url(http://example.com/x)"/></svg>',
    '<svg xmlns="http://www.w3.org/2000/svg"><!-- --><rect/></svg>',
    "<svg><rect></svg>",
    "<div><svg/></div>",
])
def test_unsafe_charts_are_refused(svg: str) -> None:
    assert _svg_problem(svg) is not None


def test_hostile_title_in_the_pdf_is_text(hostile_dossier: Path) -> None:
    pdf = hostile_dossier / "dossier.pdf"
    assert pdf.read_bytes().startswith(b"%PDF-")
    import pypdf

    text = pypdf.PdfReader(pdf).pages[0].extract_text()
    flat = " ".join(text.split())
    assert f"title {HOSTILE}" in flat
    assert f"client {HOSTILE}" in flat


# ---------------------------------------------------------------- PDF resources: local files only


def _outside_png(tmp_path: Path) -> Path:
    picture = tmp_path / "outside.png"
    shutil.copy(packaged_templates_dir() / "style.css", picture)  # any bytes: it must never be read
    return picture


#: name -> the CSS of a user style.css (relative URLs resolve against the manifest's folder).
RESOURCE_ATTACKS: dict[str, str] = {
    "http": "body { background: url(http://example.com/x.png) }",
    "https": "body { background: url('https://example.com/x.png') }",
    "file-passwd": "body { background: url(file:///etc/passwd) }",
    "climbing": "body { background: url(../outside.png) }",
    "link-out": "body { background: url(link.png) }",
    "ftp": "body { background: url(ftp://example.com/x.png) }",
    "protocol-relative": "body { background: url(//example.com/x.png) }",
    "import": "@import url(http://example.com/x.css);",
    "import-string": '@import "https://example.com/x.css";',
    "font": "@font-face { font-family: Remote; src: url(http://example.com/x.woff) } body { font-family: Remote }",
}


@pytest.mark.parametrize("attack", list(RESOURCE_ATTACKS))
def test_pdf_refuses_resources_outside_the_project(attack: str, tmp_path: Path, cli_run: CliRun,
                                                   no_network: list[Any]) -> None:
    folder = tmp_path / "project"
    folder.mkdir()
    (folder / "sim.csv").write_text(simulated_csv(), encoding="utf-8")
    manifest = folder / "manifest.yaml"
    manifest.write_text(SMALL_MANIFEST, encoding="utf-8")
    (folder / "link.png").symlink_to(_outside_png(tmp_path))
    templates = tmp_path / "templates"
    templates.mkdir()
    (templates / "style.css").write_text(RESOURCE_ATTACKS[attack] + "\n", encoding="utf-8")
    # A one-paragraph dossier keeps the layout (before background images are fetched) short.
    (templates / "dossier.html.j2").write_text(
        "<!DOCTYPE html><html><head><title>{{ project.title }}</title><style>{{ css }}</style></head>"
        "<body><p>{{ project.title }}</p></body></html>\n", encoding="utf-8")
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", manifest, "--out", out, "--format", "html,pdf", "--templates", templates)
    assert_refused(status, stdout, stderr, out, "resource-refused")
    assert stderr.startswith("error[resource-refused]: the dossier may not load ")
    assert no_network == []


@pytest.mark.parametrize("extra", [
    '<img src="http://example.com/x.png" alt="">',
    '<img src="//example.com/x.png" alt="">',
    '<link rel="stylesheet" href="https://example.com/x.css">',
    '<object data="http://example.com/x.svg" type="image/svg+xml"></object>',
    '<a rel="attachment" href="file:///etc/passwd">attachment</a>',
    '<svg width="10" height="10"><image href="http://example.com/x.png" width="10" height="10"/></svg>',
    # An SVG image from a data: URL that itself refers to the network (WeasyPrint only logs such failures).
    '<img alt="" src="data:image/svg+xml,%3Csvg xmlns=%22http://www.w3.org/2000/svg%22 '
    'xmlns:xlink=%22http://www.w3.org/1999/xlink%22 width=%2210%22 height=%2210%22%3E%3Cimage '
    'xlink:href=%22http://example.com/x.png%22 width=%2210%22 height=%2210%22/%3E%3C/svg%3E">',
    '<img src="HTTP://example.com/x.png" alt="">',
    '<img src="javascript:alert(1)" alt="">',
])
def test_pdf_refuses_every_kind_of_reference(extra: str, tmp_path: Path, no_network: list[Any]) -> None:
    page = f"<!DOCTYPE html><html><head><title>T</title></head><body><p>x</p>{extra}</body></html>"
    with pytest.raises(ResourceRefusedError):
        build_pdf(page, base_dir=tmp_path, created=CREATED)
    assert no_network == []


def test_fetcher_refusals_name_the_reason(tmp_path: Path) -> None:
    project = tmp_path / "project"
    project.mkdir()
    (project / "inside.png").write_bytes(b"inside")
    (project / "link.png").symlink_to(_outside_png(tmp_path))
    fetcher = LocalFileFetcher([project])
    with pytest.raises(ResourceRefusedError) as caught:
        fetcher.fetch(f"file://example.com{project}/inside.png")  # what //example.com/... resolves to
    assert caught.value.message == (f"the dossier may not load 'file://example.com{project}/inside.png': it names the "
                                    "host 'example.com'; only local files and data: URLs are allowed")
    with pytest.raises(ResourceRefusedError) as caught:
        fetcher.fetch((project / "link.png").as_uri())
    assert caught.value.message == f"the dossier may not load {tmp_path / 'outside.png'}: it is outside {project}"
    assert caught.value.hint == "keep images and stylesheets next to the manifest or in the template folder"
    with pytest.raises(ResourceRefusedError):
        fetcher.fetch(f"file://{project}/%2e%2e/outside.png")
    assert [error.code for error in fetcher.refused] == ["resource-refused"] * 3
    assert fetcher.fetch(f"file://localhost{project}/inside.png").read() == b"inside"


def test_data_urls_are_decoded_without_any_io(tmp_path: Path, no_network: list[Any],
                                              monkeypatch: pytest.MonkeyPatch) -> None:
    fetcher = LocalFileFetcher([tmp_path])
    monkeypatch.setattr(type(fetcher), "open", lambda *arguments, **options: pytest.fail("urllib opener used"))
    response = fetcher.fetch("data:image/svg+xml;base64," + "PHN2Zy8+")
    assert (response.read(), response.content_type) == (b"<svg/>", "image/svg+xml")
    with pytest.raises(ResourceUnreadableError, match="data: URL that cannot be decoded"):
        fetcher.fetch("data:text/plain;base64,a")
    svg = ('<img alt="" src="data:image/svg+xml,%3Csvg xmlns=%22http://www.w3.org/2000/svg%22 width=%2210%22 '
           'height=%2210%22/%3E">')
    page = f"<!DOCTYPE html><html><head><title>T</title></head><body>{svg}</body></html>"
    assert build_pdf(page, base_dir=tmp_path, created=CREATED).data.startswith(b"%PDF-")
    assert no_network == []


def test_pdf_may_load_files_of_the_template_folder(tmp_path: Path) -> None:
    project, templates = tmp_path / "project", tmp_path / "templates"
    project.mkdir()
    templates.mkdir()
    logo = templates / "logo.svg"
    logo.write_text('<svg xmlns="http://www.w3.org/2000/svg" width="4" height="4"><rect width="4" height="4"/></svg>',
                    encoding="utf-8")
    page = f'<!DOCTYPE html><html><head><title>T</title></head><body><img src="{logo.as_uri()}" alt=""></body></html>'
    with pytest.raises(ResourceRefusedError, match="outside"):
        build_pdf(page, base_dir=project, created=CREATED)
    assert build_pdf(page, base_dir=project, created=CREATED, template_dirs=[templates]).pages == 1


def test_the_tests_can_see_a_network_attempt(no_network: list[Any]) -> None:
    with pytest.raises(OSError, match="network access attempted"):
        socket.create_connection(("example.com", 80), timeout=1)
    assert no_network
