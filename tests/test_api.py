"""The notebook interface: ``reportgen.run`` returns the results the command line writes."""

from __future__ import annotations

import json
from collections.abc import Callable
from pathlib import Path

import pytest
from bs4 import BeautifulSoup

import reportgen
from reportgen.errors import DatesUnsortedError
from reportgen.manifest import load_manifest


def test_run_returns_the_results_of_the_command_line(small_project: Callable[..., Path], tmp_path: Path) -> None:
    manifest = small_project()
    results = reportgen.run(manifest)
    assert list(results.series) == ["walk_a", "walk_b", "noise"]
    assert list(results.regressions) == ["a_on_b", "noise_on_a"]
    written = reportgen.run(load_manifest(manifest), out=tmp_path / "out", formats=())
    document = json.loads((tmp_path / "out" / "results.json").read_text())
    # The same run id as results.json, with or without writing the dossier.
    assert results.run_id == written.run_id == document["run_id"]
    frame = results.to_frame()
    assert list(frame.index) == ["walk_a", "walk_b", "noise"]
    assert frame.loc["noise", "order"] == document["series"]["noise"]["order"]
    regressions = results.to_frame("regressions")
    assert list(regressions["verdict"]) == [document["regressions"][name]["verdict"] for name in regressions.index]
    with pytest.raises(ValueError, match="kind must be"):
        results.to_frame("tests")


def test_the_html_representation_escapes_and_lists_every_regression(small_project: Callable[..., Path],
                                                                    small_manifest: str) -> None:
    results = reportgen.run(small_project(small_manifest.replace("title: Small check", "title: '<b>Small</b>'")))
    page = BeautifulSoup(results._repr_html_(), "html.parser")
    assert page.find("b") is None
    assert "<b>Small</b>" in page.get_text()
    assert [row.find_all("td")[0].get_text() for row in page.select("tbody tr")] == ["a_on_b", "noise_on_a"]


def test_bad_input_raises_the_catalogue_error(small_project: Callable[..., Path], simulated_data: Callable[..., str]
                                              ) -> None:
    lines = simulated_data().splitlines()
    lines[1], lines[2] = lines[2], lines[1]
    manifest = small_project(data="\n".join(lines) + "\n")
    with pytest.raises(DatesUnsortedError) as caught:
        reportgen.run(manifest)
    assert caught.value.render().startswith(f"{manifest.parent / 'sim.csv'}:3: error[dates-unsorted]")
