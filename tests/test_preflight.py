"""``init``, ``check`` and ``schema`` as functions: a new project validates, runs, and its manifest fits the schema."""

from __future__ import annotations

import json
from pathlib import Path

import jsonschema
import pytest
import yaml

from reportgen import cli
from reportgen.errors import DatesUnsortedError, InitTargetError
from reportgen.preflight import check_manifest, manifest_schema
from reportgen.scaffold import example_data, init_project


def test_init_then_check_then_run_from_an_empty_folder(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    folder = tmp_path / "new-project"
    files = init_project(folder)
    assert sorted(path.relative_to(folder).as_posix() for path in files) == [
        "README.md", "data/board_monthly.csv", "manifest.yaml"]
    report = check_manifest(folder / "manifest.yaml")
    assert report.text().splitlines()[0] == f"{folder / 'manifest.yaml'}: ok, ready to run"
    assert report.series[0] == ("demand: log(water_demand_ml), 180 observations, 2010-01 to 2024-12 (monthly)")
    assert report.regressions[1] == ("demand_on_rainfall: demand ~ rainfall, 156 common observations, 2012-01 to "
                                     "2024-12")
    out = tmp_path / "out"
    assert cli.main(["run", str(folder / "manifest.yaml"), "--out", str(out), "--format", "json", "--quiet"]) == 0
    document = json.loads((out / "results.json").read_text())
    assert set(document["regressions"]) == {"demand_on_tariff", "demand_on_rainfall"}
    capsys.readouterr()


def test_init_never_overwrites(tmp_path: Path) -> None:
    (tmp_path / "notes.txt").write_text("keep")
    with pytest.raises(InitTargetError) as caught:
        init_project(tmp_path)
    assert caught.value.message == f"cannot create a project in {tmp_path}: it is a folder that already holds files"
    assert (tmp_path / "notes.txt").read_text() == "keep"


def test_the_example_data_are_the_same_every_time() -> None:
    assert example_data() == example_data()


def test_check_raises_what_a_run_would(tmp_path: Path) -> None:
    init_project(tmp_path / "p")
    data = tmp_path / "p" / "data" / "board_monthly.csv"
    lines = data.read_text().splitlines()
    lines[3], lines[4] = lines[4], lines[3]
    data.write_text("\n".join(lines) + "\n")
    with pytest.raises(DatesUnsortedError):
        check_manifest(tmp_path / "p" / "manifest.yaml")


def test_manifests_validate_against_the_schema(tmp_path: Path) -> None:
    schema = manifest_schema()
    jsonschema.Draft202012Validator.check_schema(schema)
    init_project(tmp_path / "p")
    for path in (tmp_path / "p" / "manifest.yaml", Path(__file__).resolve().parents[1] / "manifests" / "demo.yaml"):
        jsonschema.validate(yaml.safe_load(path.read_text(encoding="utf-8")), schema)
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate({"reportgen": 1, "project": {"title": "x"}, "datasets": {}, "series": {},
                             "settings": {"lag_criterion": "aicc"}}, schema)


def test_the_commands(tmp_path: Path, capsys: pytest.CaptureFixture[str]) -> None:
    assert cli.main(["init", str(tmp_path / "p")]) == 0
    assert capsys.readouterr().out.splitlines()[-1] == f"next: reportgen check {tmp_path / 'p' / 'manifest.yaml'}"
    assert cli.main(["check", str(tmp_path / "p" / "manifest.yaml")]) == 0
    assert "ok, ready to run" in capsys.readouterr().out
    assert cli.main(["schema"]) == 0
    assert json.loads(capsys.readouterr().out) == manifest_schema()
    assert cli.main(["check", str(tmp_path / "nothing.yaml")]) == 2
    assert "error[manifest-not-found]" in capsys.readouterr().err
