"""reportgen diff: what changed between two runs, in the terminal and as a page for a referee."""

from __future__ import annotations

import shutil
from collections.abc import Callable
from pathlib import Path

from bs4 import BeautifulSoup

from reportgen.audit import diff_dossiers


def _change_one_value(data: Path, column: str, row: int, delta: float) -> None:
    """Add ``delta`` to one cell of the simulated CSV (``row`` counts data rows from 0)."""
    lines = data.read_text().splitlines()
    header = lines[0].split(",")
    cells = lines[row + 1].split(",")
    position = header.index(column)
    cells[position] = f"{float(cells[position]) + delta:.6f}"
    lines[row + 1] = ",".join(cells)
    data.write_text("\n".join(lines) + "\n")


def _two_runs(small_project: Callable[..., Path], tmp_path: Path, cli_run, change: Callable[[Path], None],
              manifest_text: str | None = None, formats: str = "json") -> tuple[Path, Path]:
    manifest = small_project() if manifest_text is None else small_project(manifest_text)
    old = tmp_path / "old"
    assert cli_run("run", manifest, "--out", old, "--format", formats, "--quiet")[0] == 0
    later = tmp_path / "later"
    shutil.copytree(manifest.parent, later)
    change(later)
    new = tmp_path / "new"
    assert cli_run("run", later / manifest.name, "--out", new, "--format", formats, "--quiet")[0] == 0
    return old, new


def test_one_changed_data_point_names_its_series_and_regressions_only(small_project: Callable[..., Path],
                                                                      tmp_path: Path, cli_run) -> None:
    old, new = _two_runs(small_project, tmp_path, cli_run,
                         lambda folder: _change_one_value(folder / "sim.csv", "walk_b", 50, 0.5))
    changes = diff_dossiers(old, new)
    assert changes.names("input") == ["sim"]
    assert changes.names("dataset") == ["sim"]
    assert changes.names("series") == ["walk_b"]
    # a_on_b regresses walk_a on walk_b; noise_on_a uses noise and walk_a, which did not change.
    assert changes.names("regression") == ["a_on_b"]
    assert changes.names("setting") == []
    data_rows = [row for row in changes.rows if row.section == "series" and row.what == "data"]
    assert len(data_rows) == 1
    assert data_rows[0].old == "120 values"
    assert data_rows[0].new.startswith("1 of 120 changed (first 2014-03: ")
    assert any(row.name == "a_on_b" and row.what == "levels: walk_b estimate" for row in changes.rows)

    status, stdout, stderr = cli_run("diff", old, new)
    assert (status, stderr) == (0, "")
    lines = stdout.splitlines()
    assert lines[0].startswith(f"old: {old} (dossier folder; run rg-")
    assert lines[2].split() == ["section", "name", "what", "old", "new"]
    assert "noise_on_a" not in stdout
    assert "walk_a " not in stdout.replace("walk_a ~", "")
    assert any(line.split()[:2] == ["series", "walk_b"] for line in lines)
    assert stdout.endswith(f"{len(changes.rows)} change(s) beyond the tolerance 1e-06\n")
    assert cli_run("diff", old, new, "--exit-code")[0] == 1


def test_identical_runs_show_no_changes(small_project: Callable[..., Path], tmp_path: Path, cli_run) -> None:
    manifest = small_project()
    for name in ("one", "two"):
        assert cli_run("run", manifest, "--out", tmp_path / name, "--format", "json", "--quiet")[0] == 0
    status, stdout, _ = cli_run("diff", tmp_path / "one", tmp_path / "two", "--exit-code")
    assert status == 0
    assert stdout.splitlines()[-1] == "no changes beyond the tolerance 1e-06"


def test_settings_and_removed_items(small_project: Callable[..., Path], small_manifest: str, tmp_path: Path,
                                    cli_run) -> None:
    def edit(folder: Path) -> None:
        text = (folder / "manifest.yaml").read_text()
        text = text.replace("  noise: {dataset: sim, column: noise}\n", "")
        text = text.replace('  noise_on_a: {formula: "noise ~ walk_a"}\n', "")
        (folder / "manifest.yaml").write_text(text + "settings: {significance: 0.1}\n")

    old, new = _two_runs(small_project, tmp_path, cli_run, edit)
    changes = diff_dossiers(old, new)
    rows = {(row.section, row.name, row.what): (row.old, row.new) for row in changes.rows}
    assert rows[("input", "manifest", "content (SHA-256)")][0].endswith("…")
    assert ("input", "sim", "content (SHA-256)") not in rows
    assert rows[("setting", "significance", "value")] == ("0.05", "0.1")
    assert rows[("series", "noise", "removed")] == ("noise", "(absent)")
    assert rows[("regression", "noise_on_a", "removed")] == ("noise ~ walk_a", "(absent)")
    # The reverse direction says "added".
    back = {(row.section, row.name, row.what) for row in diff_dossiers(new, old).rows}
    assert ("series", "noise", "added") in back


def test_html_page_for_a_referee_is_standalone_and_escaped(small_project: Callable[..., Path],
                                                            small_manifest: str, tmp_path: Path, cli_run) -> None:
    text = small_manifest.replace("title: Small check", 'title: "Walks <script>alert(1)</script> & noise"')
    old, new = _two_runs(small_project, tmp_path, cli_run,
                         lambda folder: _change_one_value(folder / "sim.csv", "walk_b", 10, -0.25),
                         manifest_text=text)
    page = tmp_path / "changes.html"
    status, stdout, _ = cli_run("diff", old, new, "--html", page)
    assert status == 0
    assert stdout.endswith(f"wrote {page}\n")
    html = page.read_text(encoding="utf-8")
    assert "<script>" not in html
    assert "&lt;script&gt;alert(1)&lt;/script&gt; &amp; noise" in html
    soup = BeautifulSoup(html, "html.parser")
    assert soup.title is not None
    assert soup.title.get_text() == "Changes since the previous version"
    assert soup.find("h1").get_text() == "Changes since the previous version"
    assert not soup.find_all(["link", "img", "script"])
    headings = [h2.get_text() for h2 in soup.find_all("h2")]
    assert headings == ["Inputs", "Datasets", "Series", "Regressions"]
    items = {row.find("td").get_text() for row in soup.find_all("tr") if row.find("td")}
    assert items == {"sim", "walk_b", "a_on_b"}
    # Writing the page twice gives the same bytes.
    cli_run("diff", old, new, "--html", tmp_path / "again.html")
    assert (tmp_path / "again.html").read_bytes() == page.read_bytes()


def test_diff_reads_bundles_and_refuses_non_dossiers(small_project: Callable[..., Path], tmp_path: Path,
                                                     cli_run) -> None:
    old = tmp_path / "old"
    assert cli_run("run", small_project(), "--out", old, "--format", "json", "--bundle", "--quiet")[0] == 0
    status, stdout, _ = cli_run("diff", old / "bundle.zip", old)
    assert status == 0
    assert stdout.splitlines()[0].startswith(f"old: {old / 'bundle.zip'} (bundle; run rg-")
    assert stdout.splitlines()[-1] == "no changes beyond the tolerance 1e-06"
    status, _, stderr = cli_run("diff", old, tmp_path / "missing")
    assert status == 2
    assert f"no dossier at {tmp_path / 'missing'}" in stderr
    status, _, stderr = cli_run("diff", old, old, "--html", tmp_path / "no" / "page.html")
    assert status == 2
    assert f"cannot write {tmp_path / 'no' / 'page.html'}: the folder {tmp_path / 'no'} does not exist" in stderr
