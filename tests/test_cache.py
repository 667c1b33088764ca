"""The result cache: a second run computes nothing, a changed series recomputes what depends on it, and
nothing the cache holds is trusted without its key; results are the same bytes with or without it.

Computations are counted by wrapping ``integration_order`` and ``assess_regression`` in the
runner's module, so these runs use ``--jobs 1`` (worker processes would not see the wrappers).
Every test has its own cache folder (the ``private_result_cache`` fixture of conftest.py).
"""

from __future__ import annotations

import json
import os
import threading
from collections.abc import Callable
from pathlib import Path
from typing import Any

import pytest

import reportgen.runner
from reportgen import cli
from reportgen.cache import (
    CACHE_FORMAT,
    ResultCache,
    content_key,
    decode,
    default_cache_dir,
    encode,
    software_fingerprint,
)
from reportgen.manifest import load_manifest
from reportgen.runner import OrderOutcome, RegressionOutcome, analyse, results_to_dict


@pytest.fixture
def calls(monkeypatch: pytest.MonkeyPatch) -> dict[str, list[str]]:
    """The names of the series and regressions the runner computes, from now on."""
    counted: dict[str, list[str]] = {"order": [], "regression": []}
    order, assess = reportgen.runner.integration_order, reportgen.runner.assess_regression

    def counting_order(name: str, *arguments: Any, **options: Any) -> Any:
        counted["order"].append(name)
        return order(name, *arguments, **options)

    def counting_assess(name: str, *arguments: Any, **options: Any) -> Any:
        counted["regression"].append(name)
        return assess(name, *arguments, **options)

    monkeypatch.setattr(reportgen.runner, "integration_order", counting_order)
    monkeypatch.setattr(reportgen.runner, "assess_regression", counting_assess)
    return counted


@pytest.fixture
def fixed_date(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setenv("SOURCE_DATE_EPOCH", "1700000000")


def _run(manifest: Path, out: Path, *options: str) -> bytes:
    status = cli.main(["run", str(manifest), "--out", str(out), "--format", "json", "--quiet", "--jobs", "1",
                       *options])
    assert status == 0
    return (out / "results.json").read_bytes()


def _entries(folder: Path) -> list[Path]:
    return sorted(folder.rglob("*.json"))


def test_a_second_run_computes_nothing_and_writes_the_same_bytes(small_project: Callable[..., Path], tmp_path: Path,
                                                                  private_result_cache: Path, fixed_date: None,
                                                                  calls: dict[str, list[str]]) -> None:
    manifest = small_project()
    first = _run(manifest, tmp_path / "out")
    assert calls == {"order": ["walk_a", "walk_b", "noise"], "regression": ["a_on_b", "noise_on_a"]}
    assert len(_entries(private_result_cache)) == 5
    calls["order"].clear()
    calls["regression"].clear()
    assert _run(manifest, tmp_path / "out") == first
    assert calls == {"order": [], "regression": []}
    assert _run(manifest, tmp_path / "out", "--no-cache") == first  # and the same bytes as computed afresh
    assert calls == {"order": ["walk_a", "walk_b", "noise"], "regression": ["a_on_b", "noise_on_a"]}


def test_a_changed_series_recomputes_it_and_the_regressions_that_use_it(
        small_project: Callable[..., Path], simulated_data: Callable[..., str], tmp_path: Path, fixed_date: None,
        calls: dict[str, list[str]]) -> None:
    manifest = small_project()
    _run(manifest, tmp_path / "out")
    lines = simulated_data().splitlines()
    header, rows = lines[0], [line.split(",") for line in lines[1:]]
    rows[40][2] = f"{float(rows[40][2]) + 3:.6f}"  # one value of walk_b
    manifest = small_project(data="\n".join([header, *(",".join(row) for row in rows)]) + "\n")
    calls["order"].clear()
    calls["regression"].clear()
    cached = _run(manifest, tmp_path / "out")
    assert calls == {"order": ["walk_b"], "regression": ["a_on_b"]}
    assert _run(manifest, tmp_path / "out", "--no-cache") == cached


def test_settings_and_overrides_are_part_of_the_key(small_project: Callable[..., Path], small_manifest: str,
                                                    tmp_path: Path, calls: dict[str, list[str]]) -> None:
    _run(small_project(), tmp_path / "out")
    calls["order"].clear()
    calls["regression"].clear()
    override = small_manifest.replace("noise: {dataset: sim, column: noise}",
                                      "noise: {dataset: sim, column: noise, deterministic: constant-trend}")
    _run(small_project(override), tmp_path / "out")
    assert calls["order"] == ["noise"]
    assert set(calls["regression"]) <= {"noise_on_a"}  # recomputed only if noise's order or fragility changed
    calls["order"].clear()
    calls["regression"].clear()
    _run(small_project(small_manifest + "settings: {significance: 0.1}\n"), tmp_path / "out")
    assert calls == {"order": ["walk_a", "walk_b", "noise"], "regression": ["a_on_b", "noise_on_a"]}


def _texts(folder: Path, kind: str) -> list[Path]:
    return sorted((folder / f"v{CACHE_FORMAT}" / kind).rglob("*.txt"))


def test_corrupt_and_foreign_entries_are_ignored_and_replaced(small_project: Callable[..., Path], tmp_path: Path,
                                                              private_result_cache: Path, fixed_date: None,
                                                              calls: dict[str, list[str]]) -> None:
    manifest = small_project()
    expected = _run(manifest, tmp_path / "out")
    for part in _texts(private_result_cache, "series-part"):  # so that every verdict is read from its entry
        part.unlink()
    orders = _entries(private_result_cache / f"v{CACHE_FORMAT}" / "order")
    regressions = _entries(private_result_cache / f"v{CACHE_FORMAT}" / "regression")
    orders[0].write_bytes(orders[0].read_bytes()[:200])  # truncated
    orders[1].write_bytes(orders[2].read_bytes())  # another series' entry under this one's key
    entry = json.loads(regressions[0].read_text())
    entry["value"]["assessment"]["verdict"] = "no such verdict"  # does not rebuild into an assessment
    regressions[0].write_text(json.dumps(entry))
    calls["order"].clear()
    calls["regression"].clear()
    assert _run(manifest, tmp_path / "out") == expected
    assert len(calls["order"]) == 2
    assert len(calls["regression"]) == 1
    calls["order"].clear()
    calls["regression"].clear()
    assert _run(manifest, tmp_path / "out") == expected  # the entries were rewritten
    assert calls == {"order": [], "regression": []}


def test_corrupt_and_foreign_parts_are_ignored_and_replaced(small_project: Callable[..., Path], tmp_path: Path,
                                                            private_result_cache: Path, fixed_date: None,
                                                            calls: dict[str, list[str]]) -> None:
    """A results.json part that cannot be trusted is built again from its (cached) verdict or assessment."""
    manifest = small_project()
    expected = _run(manifest, tmp_path / "out")
    parts = _texts(private_result_cache, "series-part")
    regression_parts = _texts(private_result_cache, "regression-part")
    assert len(parts) == 3
    assert len(regression_parts) == 2
    parts[0].write_bytes(parts[0].read_bytes()[:300])  # truncated: not JSON
    parts[1].write_bytes(parts[2].read_bytes())  # another series' part under this one's key: its header says so
    header = regression_parts[0].read_text().partition("\n")[0]
    regression_parts[0].write_text(header + "\n[1, 2]")  # JSON, but not a part
    calls["order"].clear()
    calls["regression"].clear()
    cache = ResultCache(private_result_cache)
    assert _run(manifest, tmp_path / "out") == expected
    assert calls == {"order": [], "regression": []}
    for path in (parts[0], parts[1], regression_parts[0]):
        kind = path.parent.parent.name
        assert cache.load_text(kind, path.stem) is not None  # rewritten
    assert cache.stats.rejected == 0


def test_a_run_from_parts_gives_the_records_of_a_computed_run(small_project: Callable[..., Path],
                                                              private_result_cache: Path, fixed_date: None,
                                                              calls: dict[str, list[str]]) -> None:
    """The series records of a run that took every part from the cache are built when asked for, equal to a
    computed run's: from the cached verdicts, or computed again where those entries are gone."""
    manifest = load_manifest(small_project())
    computed = analyse(manifest, ["reportgen"])
    results_to_dict(analyse(manifest, ["reportgen"], cache=ResultCache(private_result_cache)))  # parts stored
    calls["order"].clear()
    from_parts = analyse(manifest, ["reportgen"], cache=ResultCache(private_result_cache))
    assert calls["order"] == []
    assert from_parts.parts is not None
    assert set(from_parts.parts.found["series"]) == set(computed.series)
    assert list(from_parts.series) == list(computed.series)
    assert dict(from_parts.series.items()) == dict(computed.series.items())
    assert calls["order"] == []  # every verdict from its entry
    again = analyse(manifest, ["reportgen"], cache=ResultCache(private_result_cache))
    for entry in _entries(private_result_cache / f"v{CACHE_FORMAT}" / "order"):
        entry.unlink()
    assert again.series["walk_b"] == computed.series["walk_b"]
    assert calls["order"] == ["walk_b"]  # computed again, the one asked for
    assert again.to_frame().equals(computed.to_frame())
    assert results_to_dict(again) == results_to_dict(computed)


def test_a_changed_label_or_note_changes_the_part_but_not_the_verdict(small_project: Callable[..., Path],
                                                                       small_manifest: str, tmp_path: Path,
                                                                       fixed_date: None,
                                                                       calls: dict[str, list[str]]) -> None:
    _run(small_project(), tmp_path / "out")
    calls["order"].clear()
    calls["regression"].clear()
    labelled = small_manifest.replace("noise: {dataset: sim, column: noise}",
                                      "noise: {dataset: sim, column: noise, label: Pure noise}")
    written = json.loads(_run(small_project(labelled), tmp_path / "out"))
    assert written["series"]["noise"]["label"] == "Pure noise"
    assert calls == {"order": [], "regression": []}
    assert _run(small_project(labelled), tmp_path / "out", "--no-cache") == json.dumps(written, indent=2,
                                                                                      ensure_ascii=False).encode() \
        + b"\n"


def test_no_cache_reads_and_writes_nothing(small_project: Callable[..., Path], tmp_path: Path,
                                           private_result_cache: Path, calls: dict[str, list[str]]) -> None:
    manifest = small_project()
    _run(manifest, tmp_path / "out", "--no-cache")
    assert _entries(private_result_cache) == []
    _run(manifest, tmp_path / "out")
    calls["order"].clear()
    _run(manifest, tmp_path / "out", "--no-cache")
    assert calls["order"] == ["walk_a", "walk_b", "noise"]


def test_cache_option_names_the_folder(small_project: Callable[..., Path], tmp_path: Path,
                                       private_result_cache: Path) -> None:
    folder = tmp_path / "elsewhere"
    _run(small_project(), tmp_path / "out", "--cache", str(folder))
    assert len(_entries(folder)) == 5
    assert _entries(private_result_cache) == []


def test_an_unwritable_cache_is_reported_and_the_run_succeeds(small_project: Callable[..., Path], tmp_path: Path,
                                                              capsys: pytest.CaptureFixture[str]) -> None:
    blocker = tmp_path / "file"
    blocker.write_text("not a folder")
    assert cli.main(["run", str(small_project()), "--out", str(tmp_path / "out"), "--format", "json", "--jobs", "1",
                     "--cache", str(blocker)]) == 0
    err = capsys.readouterr().err
    assert f"  cache {blocker}: 0 of 5 results reused\n" in err
    assert f"  cache {blocker}: results could not be stored (" in err
    assert "the next run computes them again\n" in err


def test_the_default_folder_follows_the_environment(tmp_path: Path) -> None:
    home = Path.home()
    assert default_cache_dir({}) == home / ".cache" / "reportgen"
    assert default_cache_dir({"XDG_CACHE_HOME": str(tmp_path)}) == tmp_path / "reportgen"
    assert default_cache_dir({"XDG_CACHE_HOME": str(tmp_path), "REPORTGEN_CACHE": str(tmp_path / "rg")}) \
        == tmp_path / "rg"
    assert default_cache_dir({"XDG_CACHE_HOME": "", "REPORTGEN_CACHE": ""}) == home / ".cache" / "reportgen"


def test_keys_cover_the_software(monkeypatch: pytest.MonkeyPatch) -> None:
    material = {"name": "x", "values": "abc"}
    key = content_key("order", material)
    assert key == content_key("order", dict(reversed(material.items())))
    assert key != content_key("regression", material)
    fingerprint = software_fingerprint()
    assert set(fingerprint) == {"reportgen", "source", "python", "implementation", "packages"}
    assert set(fingerprint["packages"]) == {"numpy", "pandas", "scipy", "statsmodels", "arch"}
    monkeypatch.setattr(reportgen.cache, "software_fingerprint", lambda: {**fingerprint, "source": "edited"})
    assert content_key("order", material) != key


DEMO = Path(__file__).resolve().parent.parent / "manifests" / "demo.yaml"


@pytest.mark.parametrize("project", ["small", "demo"])
def test_outcomes_rebuild_exactly_from_their_entries(project: str, small_project: Callable[..., Path]) -> None:
    """Every verdict and assessment (cointegrated, error-correction, Johansen, bounds test...) survives the cache."""
    results = analyse(load_manifest(small_project() if project == "small" else DEMO), ["reportgen"])
    for record in results.series.values():
        outcome = OrderOutcome(record.verdict, ("UserWarning: kept",))
        assert decode(OrderOutcome, json.loads(json.dumps(encode(outcome)))) == outcome
    for assessment in results.regressions.values():
        outcome = RegressionOutcome(assessment)
        assert decode(RegressionOutcome, json.loads(json.dumps(encode(outcome)))) == outcome
    assert decode(RegressionOutcome, encode(RegressionOutcome(None, "too short"))) == RegressionOutcome(None,
                                                                                                       "too short")
    assert results_to_dict(results)["series"]


def test_values_that_would_not_rebuild_exactly_are_not_stored(tmp_path: Path) -> None:
    import numpy as np

    cache = ResultCache(tmp_path)
    cache.store("order", "ab" * 32, {"value": np.int64(3)})
    assert _entries(tmp_path) == []
    with pytest.raises(TypeError):
        encode({1.5: "float key"})
    with pytest.raises(ValueError, match="fits none of"):
        decode(int | None, "three")


def test_concurrent_writers_never_leave_half_an_entry(tmp_path: Path) -> None:
    key = "cd" * 32
    values = [RegressionOutcome(None, "x" * size) for size in (10, 100_000)]
    seen: list[object] = []

    def write(value: RegressionOutcome) -> None:
        writer = ResultCache(tmp_path)
        for _ in range(30):
            writer.store("regression", key, value)

    def read() -> None:
        reader = ResultCache(tmp_path)
        for _ in range(200):
            seen.append(reader.load("regression", key, RegressionOutcome))

    threads = [threading.Thread(target=write, args=(value,)) for value in values] + [threading.Thread(target=read)]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join()
    assert {value for value in seen if value is not None} <= set(values)
    assert [path.name for path in (tmp_path / f"v{CACHE_FORMAT}" / "regression" / "cd").iterdir()] == [f"{key}.json"]
    assert ResultCache(tmp_path).load("regression", key, RegressionOutcome) in values
    assert not [name for name in os.listdir(tmp_path) if name.endswith(".tmp")]
