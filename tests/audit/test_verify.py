"""reportgen verify: every input re-hashed, every dossier file checked, the analysis recomputed on demand."""

from __future__ import annotations

import hashlib
import json
from collections.abc import Callable
from pathlib import Path

import pytest

from reportgen.audit import compare_documents, verify
from reportgen.provenance import checksums_text, document_run_id
from reportgen.runner import run

OTHER_DATASET = ("  other:\n    path: data/other.csv\n    index: month\n"
                 "series:\n  other_walk: {dataset: other, column: walk_a}\n")


def _two_file_project(small_project: Callable[..., Path], small_manifest: str) -> Path:
    """The small project with a second data file in a subfolder."""
    manifest = small_project(small_manifest.replace("series:\n", OTHER_DATASET, 1))
    (manifest.parent / "data").mkdir()
    (manifest.parent / "data" / "other.csv").write_bytes((manifest.parent / "sim.csv").read_bytes())
    return manifest


def test_untouched_dossier_verifies(small_project: Callable[..., Path], tmp_path: Path, cli_run, verify_rows) -> None:
    manifest = small_project()
    out = tmp_path / "out"
    assert cli_run("run", manifest, "--out", out, "--format", "json", "--quiet")[0] == 0
    status, stdout, stderr = cli_run("verify", out)
    assert (status, stderr) == (0, "")
    rows = verify_rows(stdout)
    assert rows[("input", "manifest")] == "ok"
    assert rows[("input", "sim")] == "ok"
    assert rows[("dossier", "results.json")] == "ok"
    document = json.loads((out / "results.json").read_text())
    assert rows[("run id", document["run_id"])] == "ok"
    assert stdout.endswith("verified: every input and every dossier file matches results.json\n")


def test_changing_any_byte_of_any_input_fails_and_names_the_file(small_project: Callable[..., Path],
                                                                 small_manifest: str, tmp_path: Path, cli_run,
                                                                 verify_rows) -> None:
    manifest = _two_file_project(small_project, small_manifest)
    out = tmp_path / "out"
    assert cli_run("run", manifest, "--out", out, "--format", "json", "--quiet")[0] == 0
    inputs = {"manifest": manifest, "sim": manifest.parent / "sim.csv",
              "other": manifest.parent / "data" / "other.csv"}
    for name, path in inputs.items():
        original = path.read_bytes()
        for offset in (0, 1, len(original) // 3, len(original) // 2, len(original) - 1):
            changed = bytearray(original)
            changed[offset] ^= 0x01
            path.write_bytes(bytes(changed))
            status, stdout, _ = cli_run("verify", out)
            path.write_bytes(original)
            rows = verify_rows(stdout)
            assert status == 1, (name, offset)
            assert rows[("input", name)] == "changed", (name, offset)
            assert all(rows[("input", other)] == "ok" for other in inputs if other != name), (name, offset)
            assert f"{path.resolve()}" in stdout
            assert f"NOT verified: input {name} changed" in stdout
    assert cli_run("verify", out)[0] == 0


def test_a_missing_input_and_an_added_dataset(small_project: Callable[..., Path], small_manifest: str,
                                              tmp_path: Path, cli_run, verify_rows) -> None:
    manifest = small_project()
    out = tmp_path / "out"
    assert cli_run("run", manifest, "--out", out, "--format", "json", "--quiet")[0] == 0
    manifest.write_text(small_manifest.replace("series:\n", OTHER_DATASET, 1))
    (manifest.parent / "sim.csv").unlink()
    status, stdout, _ = cli_run("verify", out)
    rows = verify_rows(stdout)
    assert status == 1
    assert rows[("input", "manifest")] == "changed"
    assert rows[("input", "sim")] == "missing"
    assert rows[("input", "other")] == "added"
    assert str((manifest.parent / "data" / "other.csv").resolve()) in stdout
    assert "NOT verified: input manifest changed; input sim missing; input other added" in stdout


@pytest.mark.parametrize("name", ["dossier.html", "results.json"])
def test_a_tampered_dossier_file_is_named(small_project: Callable[..., Path], tmp_path: Path, cli_run,
                                          verify_rows, name: str) -> None:
    out = tmp_path / "out"
    assert cli_run("run", small_project(), "--out", out, "--format", "html", "--quiet")[0] == 0
    target = out / name
    text = target.read_text(encoding="utf-8")
    # An edit that keeps results.json valid JSON: a changed verdict.
    target.write_text(text.replace("spurious-risk", "cointegrated", 1), encoding="utf-8")
    status, stdout, _ = cli_run("verify", out)
    rows = verify_rows(stdout)
    assert status == 1
    assert rows[("dossier", name)] == "changed"
    assert rows[("input", "sim")] == "ok"
    assert f"NOT verified: dossier {name} changed" in stdout
    if name == "dossier.html":
        target.unlink()
        status, stdout, _ = cli_run("verify", out)
        assert status == 1
        assert verify_rows(stdout)[("dossier", name)] == "missing"


def test_an_unreadable_results_json_fails_verification(small_project: Callable[..., Path], tmp_path: Path,
                                                       cli_run, verify_rows) -> None:
    out = tmp_path / "out"
    assert cli_run("run", small_project(), "--out", out, "--format", "json", "--quiet")[0] == 0
    with (out / "results.json").open("ab") as stream:
        stream.write(b"}")
    status, stdout, _ = cli_run("verify", out)
    rows = verify_rows(stdout)
    assert status == 1
    assert rows[("dossier", "results.json")] == "unreadable"
    assert "is not readable JSON" in stdout


def test_a_folder_that_is_not_a_dossier_exits_2(tmp_path: Path, cli_run) -> None:
    folder = tmp_path / "papers"
    folder.mkdir()
    (folder / "notes.txt").write_text("not a dossier")
    status, stdout, stderr = cli_run("verify", folder)
    assert (status, stdout) == (2, "")
    assert stderr == (f"{folder}: error[no-dossier]: {folder} is not a reportgen dossier: it has no results.json\n"
                      "  hint: name a folder written by 'reportgen run' or the bundle.zip that "
                      "'reportgen run --bundle' wrote\n")
    missing = tmp_path / "nowhere"
    status, _, stderr = cli_run("verify", missing)
    assert status == 2
    assert stderr.startswith(f"{missing}: error[no-dossier]: no dossier at {missing}: there is no such file or "
                             "folder\n")
    status, _, stderr = cli_run("verify", folder / "notes.txt")
    assert status == 2
    assert f"{folder / 'notes.txt'} is not a zip file" in stderr
    assert "Traceback" not in stderr


def test_recompute_agrees_and_finds_a_forged_number(small_project: Callable[..., Path], tmp_path: Path,
                                                    cli_run, verify_rows) -> None:
    out = tmp_path / "out"
    assert cli_run("run", small_project(), "--out", out, "--format", "json", "--quiet")[0] == 0
    status, stdout, _ = cli_run("verify", out, "--recompute")
    assert status == 0
    assert verify_rows(stdout)[("recompute", "analysis")] == "ok"
    # Forge a coefficient and write checksums to match: only the recomputation can tell.
    document = json.loads((out / "results.json").read_text())
    estimate = document["regressions"]["a_on_b"]["levels"]["coefficients"][1]["estimate"]
    document["regressions"]["a_on_b"]["levels"]["coefficients"][1]["estimate"] = estimate * (1 + 1e-6)
    (out / "results.json").write_text(json.dumps(document, indent=2) + "\n")
    (out / "checksums.sha256").write_text(checksums_text(
        {"results.json": hashlib.sha256((out / "results.json").read_bytes()).hexdigest()}))
    status, stdout, _ = cli_run("verify", out)
    assert status == 0  # the files agree with each other; the numbers are not rechecked
    status, stdout, _ = cli_run("verify", out, "--recompute")
    assert status == 1
    assert verify_rows(stdout)[("recompute", "analysis")] == "differs"
    assert "  regressions.a_on_b.levels.coefficients[1].estimate: " in stdout
    # Within a looser tolerance the forged value passes.
    assert cli_run("verify", out, "--recompute", "--tolerance", "1e-5")[0] == 0
    status, _, stderr = cli_run("verify", out, "--tolerance", "minus one")
    assert status == 2
    assert "the tolerance must be a number of at least 0, such as 1e-9; not 'minus one'" in stderr


def test_recompute_is_skipped_when_an_input_changed(small_project: Callable[..., Path], tmp_path: Path,
                                                    cli_run, verify_rows) -> None:
    manifest = small_project()
    out = tmp_path / "out"
    assert cli_run("run", manifest, "--out", out, "--format", "json", "--quiet")[0] == 0
    with (manifest.parent / "sim.csv").open("a") as stream:
        stream.write("\n")
    status, stdout, _ = cli_run("verify", out, "--recompute")
    assert status == 1
    assert verify_rows(stdout)[("recompute", "analysis")] == "skipped"


def test_compare_documents_uses_a_relative_and_absolute_tolerance() -> None:
    recorded = {"inputs": [], "series": {"x": {"order": 1, "tests": [{"statistic": -3.0, "pvalue": 0.01}]}},
                "regressions": {}}
    near = json.loads(json.dumps(recorded))
    near["series"]["x"]["tests"][0]["statistic"] = -3.0 * (1 + 5e-10)
    assert compare_documents(recorded, near, 1e-9) == []
    far = json.loads(json.dumps(recorded))
    far["series"]["x"]["tests"][0]["pvalue"] = 0.0100001
    far["series"]["x"]["order"] = 2
    paths = [difference.path for difference in compare_documents(recorded, far, 1e-9)]
    assert paths == ["series.x.order", "series.x.tests[0].pvalue"]


def test_two_runs_without_source_date_epoch_differ_only_in_the_date(small_project: Callable[..., Path],
                                                                    tmp_path: Path,
                                                                    monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.delenv("SOURCE_DATE_EPOCH", raising=False)
    manifest = small_project()
    documents = []
    for name in ("one", "two"):
        outcome = run(manifest, tmp_path / name, (), command=["reportgen", "run", "manifest.yaml"])
        documents.append(json.loads((outcome.out_dir / "results.json").read_text()))
    one, two = documents
    assert one.pop("created")[:2] == "20"
    two.pop("created")
    assert one == two


def test_the_run_id_follows_inputs_and_settings_not_the_folder_or_command(small_project: Callable[..., Path],
                                                                          small_manifest: str,
                                                                          tmp_path: Path) -> None:
    manifest = small_project()

    def run_id(folder: str, command: list[str]) -> str:
        return str(run(manifest, tmp_path / folder, (), command=command).document["run_id"])

    first = run_id("a", ["reportgen", "run", "m.yaml", "--out", "a"])
    assert run_id("b", ["reportgen", "run", "elsewhere"]) == first
    document = json.loads((tmp_path / "a" / "results.json").read_text())
    assert document_run_id(document) == first
    # The same numbers with other bytes (CRLF line ends): same table hash, another raw hash, another id.
    data = manifest.parent / "sim.csv"
    data.write_bytes(data.read_bytes().replace(b"\n", b"\r\n"))
    crlf = json.loads(json.dumps(run(manifest, tmp_path / "c", (), command=["x"]).document))
    assert crlf["datasets"]["sim"]["table_sha256"] == document["datasets"]["sim"]["table_sha256"]
    assert crlf["run_id"] != first
    manifest.write_text(small_manifest + "settings: {significance: 0.1}\n")
    assert run_id("d", ["x"]) not in (first, crlf["run_id"])


def test_verify_api_reports_each_check(small_project: Callable[..., Path], tmp_path: Path) -> None:
    out = tmp_path / "out"
    run(small_project(), out, ("html",), command=["reportgen"])
    verification = verify(out)
    assert verification.ok
    assert [(check.kind, check.name) for check in verification.checks if check.kind == "dossier"] == \
        [("dossier", "dossier.html"), ("dossier", "results.json")]
