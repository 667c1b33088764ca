"""The command line: exit codes, messages without tracebacks, and output that is never half-written."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen import cli


def _run(arguments: list[str], capsys: pytest.CaptureFixture[str]) -> tuple[int, str, str]:
    status = cli.main(arguments)
    captured = capsys.readouterr()
    return status, captured.out, captured.err


def test_json_only_run_writes_results_alone(small_project: Callable[..., Path], tmp_path: Path,
                                             capsys: pytest.CaptureFixture[str]) -> None:
    out = tmp_path / "out"
    status, stdout, _ = _run(["run", str(small_project()), "--out", str(out), "--format", "json"], capsys)
    assert status == 0
    # No renderings; checksums.sha256 (written last) lists results.json for reportgen verify.
    assert sorted(path.name for path in out.iterdir()) == ["checksums.sha256", "results.json"]
    document = json.loads((out / "results.json").read_text())
    assert set(document["regressions"]) == {"a_on_b", "noise_on_a"}
    assert f"wrote {out / 'results.json'}" in stdout
    assert not list(tmp_path.glob(".out.partial-*"))


def test_bad_manifest_exits_2_without_traceback_or_output(small_project: Callable[..., Path], small_manifest: str,
                                                         tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace("index: month", "index: month\n    frequncy: monthly"))
    out = tmp_path / "out"
    status, stdout, stderr = _run(["run", str(manifest), "--out", str(out)], capsys)
    assert status == 2
    assert stderr == (f"{manifest}:8:5: error[unknown-key]: datasets.sim.frequncy: unknown key 'frequncy'\n"
                      "  hint: did you mean 'frequency'?\n")
    assert "Traceback" not in stderr + stdout
    assert not out.exists()


def test_bad_data_exits_2_and_keeps_the_previous_dossier(small_project: Callable[..., Path], tmp_path: Path,
                                                        capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project()
    out = tmp_path / "out"
    assert _run(["run", str(manifest), "--out", str(out), "--format", "json"], capsys)[0] == 0
    before = (out / "results.json").read_bytes()
    data = manifest.parent / "sim.csv"
    lines = data.read_text().splitlines()
    lines[5] = lines[5].split(",")[0] + ",oops,1,1"
    data.write_text("\n".join(lines) + "\n")
    status, _, stderr = _run(["run", str(manifest), "--out", str(out), "--format", "json"], capsys)
    assert status == 2
    assert "column 'walk_a' of sim.csv has non-numeric cells: line 6 (2010-05): 'oops'" in stderr
    assert (out / "results.json").read_bytes() == before
    assert sorted(path.name for path in tmp_path.iterdir() if path.name.startswith(".")) == []


def test_output_path_that_is_a_file(small_project: Callable[..., Path], tmp_path: Path,
                                    capsys: pytest.CaptureFixture[str]) -> None:
    target = tmp_path / "taken"
    target.write_text("keep me")
    status, _, stderr = _run(["run", str(small_project()), "--out", str(target)], capsys)
    assert status == 2
    assert stderr == (f"{target}: error[output-is-file]: the output path {target} is a file\n"
                      "  hint: name a folder for the dossier\n")
    assert target.read_text() == "keep me"


def test_output_folder_with_foreign_files_is_left_alone(small_project: Callable[..., Path], tmp_path: Path,
                                                       capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "theirs"
    folder.mkdir()
    (folder / "notes.txt").write_text("someone else's")
    status, _, stderr = _run(["run", str(small_project()), "--out", str(folder)], capsys)
    assert status == 2
    assert "holds files that are not a reportgen dossier" in stderr
    assert sorted(path.name for path in folder.iterdir()) == ["notes.txt"]


def test_unknown_format_is_a_usage_error(small_project: Callable[..., Path], tmp_path: Path,
                                         capsys: pytest.CaptureFixture[str]) -> None:
    status, _, stderr = _run(["run", str(small_project()), "--out", str(tmp_path / "o"), "--format", "docx"],
                             capsys)
    assert status == 2
    assert "unknown format docx; choose from html, pdf, tables, json (comma-separated)" in stderr


def test_missing_arguments_are_usage_errors(capsys: pytest.CaptureFixture[str]) -> None:
    status, _, stderr = _run(["run"], capsys)
    assert status == 2
    assert "the following arguments are required: manifest, --out" in stderr


def test_internal_error_exits_3_and_saves_the_traceback(small_project: Callable[..., Path], tmp_path: Path,
                                                        capsys: pytest.CaptureFixture[str],
                                                        monkeypatch: pytest.MonkeyPatch) -> None:
    import reportgen.runner

    def broken(*args: object, **kwargs: object) -> None:
        raise RuntimeError("simulated defect")

    monkeypatch.setattr(reportgen.runner, "integration_order", broken)
    out = tmp_path / "out"
    status, _, stderr = _run(["run", str(small_project()), "--out", str(out)], capsys)
    assert status == 3
    assert "internal error (RuntimeError: simulated defect); this is a bug." in stderr
    assert "Traceback" not in stderr
    report = Path(stderr.split("the traceback is in ")[1].split(";")[0])
    assert "simulated defect" in report.read_text()
    assert "Traceback" in report.read_text()
    report.unlink()
    assert not out.exists()


def test_debug_shows_the_traceback(small_project: Callable[..., Path], small_manifest: str,
                                   tmp_path: Path,
                                   capsys: pytest.CaptureFixture[str]) -> None:
    manifest = small_project(small_manifest.replace("walk_b ~", "walk_b ~"))
    manifest.parent.joinpath("sim.csv").unlink()
    status, _, stderr = _run(["run", str(manifest), "--out", str(tmp_path / "o"), "--debug"], capsys)
    assert status == 2
    assert "Traceback" in stderr
    assert "data file not found: sim.csv" in stderr


def test_mixed_frequencies_in_one_regression(small_project: Callable[..., Path], small_manifest: str,
                                             tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    manifest_text = small_manifest.replace(
        "series:\n",
        "  yearly:\n    path: yearly.csv\n    index: year\nseries:\n  annual: {dataset: yearly, column: v}\n",
    ).replace('"noise ~ walk_a"', '"noise ~ annual"')
    manifest = small_project(manifest_text)
    (manifest.parent / "yearly.csv").write_text("year,v\n" + "".join(f"{2000 + i},{i}\n" for i in range(25)))
    status, _, stderr = _run(["run", str(manifest), "--out", str(tmp_path / "o"), "--format", "json"], capsys)
    assert status == 2
    assert "regression 'noise_on_a' mixes frequencies (noise is monthly, annual is annual)" in stderr
