"""The archive bundle: deterministic, complete, and verifiable after the project folder is gone."""

from __future__ import annotations

import hashlib
import json
import shutil
import zipfile
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen.bundle import bundle_bytes
from reportgen.provenance import parse_checksums


def _bundle_run(small_project: Callable[..., Path], tmp_path: Path, cli_run, formats: str = "json",
                manifest_text: str | None = None) -> tuple[Path, Path]:
    manifest = small_project() if manifest_text is None else small_project(manifest_text)
    out = tmp_path / "out"
    status, _, stderr = cli_run("run", manifest, "--out", out, "--format", formats, "--bundle", "--quiet")
    assert (status, stderr) == (0, "")
    return manifest, out


def test_bundle_layout_times_modes_and_checksums(small_project: Callable[..., Path], tmp_path: Path,
                                                 cli_run) -> None:
    manifest, out = _bundle_run(small_project, tmp_path, cli_run, formats="html")
    document = json.loads((out / "results.json").read_text())
    with zipfile.ZipFile(out / "bundle.zip") as archive:
        infos = archive.infolist()
        names = [info.filename for info in infos]
        assert names == sorted(names)
        assert names == ["bundle.json", "checksums.sha256", "dossier.html", "environment.lock",
                         "inputs/manifest.yaml", "inputs/sim.csv", "results.json"]
        created = document["created"]
        stamp = tuple(int(part) for part in (created[0:4], created[5:7], created[8:10], created[11:13],
                                             created[14:16], created[17:19]))
        # Zip entries keep seconds in units of two.
        assert {info.date_time for info in infos} == {(*stamp[:5], stamp[5] - stamp[5] % 2)}
        assert {info.external_attr >> 16 for info in infos} == {0o100644}
        content = {name: archive.read(name) for name in names}
    assert content["inputs/manifest.yaml"] == manifest.read_bytes()
    assert content["inputs/sim.csv"] == (manifest.parent / "sim.csv").read_bytes()
    assert content["results.json"] == (out / "results.json").read_bytes()
    assert content["dossier.html"] == (out / "dossier.html").read_bytes()
    listing = parse_checksums(content["checksums.sha256"].decode())
    assert listing == {name: hashlib.sha256(data).hexdigest() for name, data in content.items()
                       if name != "checksums.sha256"}
    lock = content["environment.lock"].decode().splitlines()
    packages = [line for line in lock if not line.startswith("#")]
    assert all(line.count("==") == 1 for line in packages)
    distributions = [line.split("==")[0] for line in packages]
    assert distributions == sorted(distributions)
    assert {"pandas", "statsmodels", "reportgen"} <= set(distributions)
    index = json.loads(content["bundle.json"])
    assert index["format"] == "reportgen-bundle"
    assert index["manifest"] == "inputs/manifest.yaml"
    assert index["run_id"] == document["run_id"]
    # The folder's own checksums cover the bundle too, and list names sorted.
    folder_listing = (out / "checksums.sha256").read_text().splitlines()
    assert [line.split("  ")[1] for line in folder_listing] == ["bundle.zip", "dossier.html", "results.json"]


def test_bundles_of_two_runs_are_identical(small_project: Callable[..., Path], tmp_path: Path, cli_run,
                                           monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1767225600")
    manifest = small_project()
    outputs = []
    for name in ("one", "two"):
        folder = tmp_path / name
        folder.mkdir()
        monkeypatch.chdir(folder)
        assert cli_run("run", manifest, "--out", "dossier", "--format", "json", "--bundle", "--quiet")[0] == 0
        outputs.append(folder / "dossier")
    one, two = outputs
    for name in ("results.json", "bundle.zip", "checksums.sha256"):
        assert (one / name).read_bytes() == (two / name).read_bytes(), name
    with zipfile.ZipFile(one / "bundle.zip") as archive:
        assert {info.date_time for info in archive.infolist()} == {(2026, 1, 1, 0, 0, 0)}


def test_bundle_verifies_after_the_project_is_deleted(small_project: Callable[..., Path], tmp_path: Path,
                                                      cli_run, verify_rows) -> None:
    manifest, out = _bundle_run(small_project, tmp_path, cli_run)
    shutil.rmtree(manifest.parent)
    status, stdout, _ = cli_run("verify", out / "bundle.zip", "--recompute")
    rows = verify_rows(stdout)
    assert status == 0, stdout
    assert rows[("input", "manifest")] == "ok"
    assert rows[("input", "sim")] == "ok"
    assert rows[("dossier", "results.json")] == "ok"
    assert rows[("dossier", "environment.lock")] == "ok"
    assert rows[("recompute", "analysis")] == "ok"
    # The folder itself now points at inputs that are gone.
    status, stdout, _ = cli_run("verify", out)
    assert status == 1
    assert verify_rows(stdout)[("input", "sim")] == "missing"


def test_data_outside_the_manifest_folder_is_bundled_so_it_reruns(small_project: Callable[..., Path],
                                                                  small_manifest: str, tmp_path: Path,
                                                                  cli_run) -> None:
    project = small_project().parent
    (project / "shared").mkdir()
    shutil.move(project / "sim.csv", project / "shared" / "sim.csv")
    (project / "analysis").mkdir()
    manifest = project / "analysis" / "manifest.yaml"
    manifest.write_text(small_manifest.replace("path: sim.csv", "path: ../shared/sim.csv"))
    out = tmp_path / "out"
    assert cli_run("run", manifest, "--out", out, "--format", "json", "--bundle", "--quiet")[0] == 0
    with zipfile.ZipFile(out / "bundle.zip") as archive:
        inputs = sorted(name for name in archive.namelist() if name.startswith("inputs/"))
    assert inputs == ["inputs/analysis/manifest.yaml", "inputs/shared/sim.csv"]
    shutil.rmtree(project)
    assert cli_run("verify", out / "bundle.zip", "--recompute")[0] == 0


def test_a_changed_snapshot_in_the_bundle_is_named(small_project: Callable[..., Path], tmp_path: Path,
                                                   cli_run, verify_rows) -> None:
    _, out = _bundle_run(small_project, tmp_path, cli_run)
    with zipfile.ZipFile(out / "bundle.zip") as archive:
        entries = {name: archive.read(name) for name in archive.namelist()}
    entries["inputs/sim.csv"] = entries["inputs/sim.csv"].replace(b"2010-01,", b"2010-01,1", 1)
    forged = tmp_path / "forged.zip"
    forged.write_bytes(bundle_bytes(entries, "2026-01-01T00:00:00Z"))
    status, stdout, _ = cli_run("verify", forged, "--recompute")
    rows = verify_rows(stdout)
    assert status == 1
    assert rows[("input", "sim")] == "changed"
    assert rows[("dossier", "inputs/sim.csv")] == "changed"
    assert rows[("recompute", "analysis")] == "skipped"
    assert "NOT verified: input sim changed; dossier inputs/sim.csv changed; recompute analysis skipped" in stdout


def test_a_zip_that_is_not_a_bundle_exits_2(tmp_path: Path, cli_run) -> None:
    other = tmp_path / "photos.zip"
    other.write_bytes(bundle_bytes({"a.txt": b"hello"}, "2026-01-01T00:00:00Z"))
    status, stdout, stderr = cli_run("verify", other)
    assert (status, stdout) == (2, "")
    assert stderr == (f"{other}: error[not-a-bundle]: {other} is a zip file but not a reportgen bundle (no "
                      "bundle.json or results.json)\n  hint: name the bundle.zip that 'reportgen run --bundle' wrote\n")


def test_an_absolute_data_path_cannot_be_bundled(small_project: Callable[..., Path], small_manifest: str,
                                                 tmp_path: Path, cli_run) -> None:
    data = tmp_path / "elsewhere.csv"
    manifest = small_project()
    shutil.copy(manifest.parent / "sim.csv", data)
    manifest.write_text(small_manifest.replace("path: sim.csv", f"path: {data}"))
    out = tmp_path / "out"
    status, _, stderr = cli_run("run", manifest, "--out", out, "--format", "json", "--bundle")
    assert status == 2
    assert (f"error[bundle-input]: datasets.sim.path: dataset 'sim' has the absolute path {data}, which a bundle "
            "cannot hold") in stderr
    assert "hint: write data paths relative to the manifest's folder, or run without --bundle" in stderr
    assert not out.exists()
