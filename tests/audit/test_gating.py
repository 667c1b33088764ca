"""run --fail-on: the dossier is written, and the exit status says whether a condition held."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

import reportgen.runner
from reportgen.cli import failing_regressions

SHORT = '  short: {formula: "walk_a ~ walk_b", sample: {start: "2019-10"}, too_short: report}\n'


@pytest.fixture
def fragile_only(monkeypatch: pytest.MonkeyPatch) -> Callable[..., None]:
    """Fix which regressions count as fragile, so the gating logic is tested apart from the data.

    Whether a simulated walk's order is fragile depends on the draw; these tests are about how
    --fail-on reads the field, not about the robustness grid (tested in tests/stats).
    """

    def choose(*names: str) -> None:
        original = reportgen.runner.results_to_dict

        def with_chosen_fragility(results: Any) -> dict[str, Any]:
            document = original(results)
            for name, regression in document["regressions"].items():
                regression["fragile"] = name in names
            return document

        monkeypatch.setattr(reportgen.runner, "results_to_dict", with_chosen_fragility)

    return choose


def test_fail_on_flagged_exits_1_naming_the_regressions(small_project: Callable[..., Path], tmp_path: Path,
                                                        cli_run) -> None:
    out = tmp_path / "out"
    status, stdout, stderr = cli_run("run", small_project(), "--out", out, "--format", "json", "--fail-on",
                                     "flagged")
    assert status == 1
    assert stderr.endswith("reportgen: --fail-on: the dossier was written, but these regressions meet a "
                           "condition:\n  flagged: a_on_b, noise_on_a\n")
    assert f"wrote {out / 'results.json'}" in stdout
    assert (out / "results.json").is_file()
    assert cli_run("verify", out)[0] == 0


def test_fail_on_inconclusive_names_only_the_inconclusive(small_project: Callable[..., Path], small_manifest: str,
                                                          tmp_path: Path, cli_run,
                                                          fragile_only: Callable[..., None]) -> None:
    fragile_only()
    manifest = small_project(small_manifest + SHORT)
    out = tmp_path / "out"
    status, _, stderr = cli_run("run", manifest, "--out", out, "--format", "json", "--quiet", "--fail-on",
                                "inconclusive")
    assert status == 1
    assert json.loads((out / "results.json").read_text())["regressions"]["short"]["verdict"] == "inconclusive"
    assert stderr.endswith("condition:\n  inconclusive: short\n")
    # Comma-separated and repeated conditions combine; each lists its own regressions.
    status, _, stderr = cli_run("run", manifest, "--out", out, "--format", "json", "--quiet", "--fail-on",
                                "inconclusive,flagged", "--fail-on", "fragile")
    assert status == 1
    assert stderr.endswith("condition:\n  inconclusive: short\n  flagged: a_on_b, noise_on_a, short\n")


def test_no_condition_met_exits_0(small_project: Callable[..., Path], tmp_path: Path, cli_run,
                                  fragile_only: Callable[..., None]) -> None:
    fragile_only()
    status, _, stderr = cli_run("run", small_project(), "--out", tmp_path / "out", "--format", "json", "--quiet",
                                "--fail-on", "inconclusive,fragile")
    assert (status, stderr) == (0, "")


def test_fail_on_fragile_reads_the_regressions_fragile_field(small_project: Callable[..., Path], tmp_path: Path,
                                                             cli_run, fragile_only: Callable[..., None]) -> None:
    fragile_only("noise_on_a")
    status, _, stderr = cli_run("run", small_project(), "--out", tmp_path / "out", "--format", "json", "--quiet",
                                "--fail-on", "fragile")
    assert status == 1
    assert stderr.endswith("condition:\n  fragile: noise_on_a\n")


def test_an_unknown_condition_is_a_usage_error(small_project: Callable[..., Path], tmp_path: Path,
                                               cli_run) -> None:
    status, _, stderr = cli_run("run", small_project(), "--out", tmp_path / "out", "--fail-on", "sloppy")
    assert status == 2
    assert ("argument --fail-on: unknown condition sloppy; choose from flagged, fragile, inconclusive "
            "(comma-separated or repeated)\n  hint: reportgen run --help\n") in stderr
    assert not (tmp_path / "out").exists()


def test_failing_regressions_keeps_manifest_order() -> None:
    document = {"regressions": {
        "b": {"flagged": True, "fragile": False, "verdict": "inconclusive"},
        "a": {"flagged": True, "fragile": True, "verdict": "spurious-risk"},
        "c": {"flagged": False, "fragile": False, "verdict": "stationary"},
    }}
    assert failing_regressions(document, ["fragile", "flagged", "fragile", "inconclusive"]) == {
        "fragile": ["a"], "flagged": ["b", "a"], "inconclusive": ["b"]}
