"""The HTML dossier in a real browser: every in-page reference resolves, links scroll, nothing fails to load.

Everything is read from the live DOM of headless Chromium (after the page's own parsing), not
from the file's text. The console check is tried on a page built to fail first, so it cannot
pass by seeing nothing.
"""

from __future__ import annotations

import io
from pathlib import Path
from typing import Any

import pytest

from .conftest import Dossier, keep_artifact

#: Every same-document reference of the page: link targets (HTML and SVG) and ``url(#id)`` in attributes and
#: style sheets, as ``[where, fragment]`` pairs, with whether an element of that id exists.
REFERENCES_SCRIPT = r"""
const found = [];
const pattern = /url\(\s*['"]?#([^'")\s]+)/g;
for (const element of document.querySelectorAll('*')) {
  for (const attribute of element.attributes) {
    const value = attribute.value;
    const where = element.tagName.toLowerCase() + '[' + attribute.name + ']';
    if ((attribute.name === 'href' || attribute.name === 'xlink:href') && value.startsWith('#')) {
      found.push([where, value.slice(1)]);
    }
    for (const match of value.matchAll(pattern)) { found.push([where, match[1]]); }
  }
}
for (const sheet of document.querySelectorAll('style')) {
  for (const match of sheet.textContent.matchAll(pattern)) { found.push(['style', match[1]]); }
}
return found.map(([where, fragment]) => {
  let id = fragment;
  try { id = decodeURIComponent(fragment); } catch (error) { /* kept as written */ }
  return [where, fragment, document.getElementById(id) !== null];
});
"""

#: Identifiers given to more than one element.
DUPLICATE_IDS_SCRIPT = """
const seen = new Map();
for (const element of document.querySelectorAll('[id]')) { seen.set(element.id, (seen.get(element.id) || 0) + 1); }
return Array.from(seen).filter(([, count]) => count > 1).map(([id]) => id);
"""

#: Images that did not load, style sheets without rules, and resources fetched from anywhere but a data: URL.
LOAD_PROBLEMS_SCRIPT = """
const problems = [];
for (const image of document.images) {
  if (!image.complete || image.naturalWidth === 0) { problems.push('image did not load: ' + image.src.slice(0, 80)); }
}
for (const link of document.querySelectorAll('link[rel~="stylesheet"]')) {
  if (!link.sheet) { problems.push('style sheet did not load: ' + link.href); }
}
for (const entry of performance.getEntriesByType('resource')) {
  if (!entry.name.startsWith('data:')) { problems.push('fetched ' + entry.name); }
}
return problems;
"""

#: Where a link's target sits after following it: the URL's fragment, whether it is :target, its box.
TARGET_SCRIPT = """
const target = document.getElementById(arguments[0]);
const box = target.getBoundingClientRect();
return {hash: location.hash, isTarget: document.querySelector(':target') === target, top: box.top,
        bottom: box.bottom, shown: target.getClientRects().length > 0, viewport: innerHeight, scrolled: scrollY};
"""

#: How many distinct link targets are followed by clicking (spread evenly over the page).
CLICKS = 16


def console_errors(driver: Any) -> list[str]:
    """The console's errors since it was last read (this empties the browser's log)."""
    return [f"{entry.get('source', '?')}: {entry['message']}" for entry in driver.get_log("browser")
            if entry["level"] == "SEVERE"]


@pytest.fixture
def page(browser: Any, dossier: Dossier) -> tuple[Any, list[str]]:
    """The dossier freshly opened in Chromium (selenium waits for its load event), with the console's errors."""
    console_errors(browser)  # whatever an earlier page left
    browser.get(dossier.html.as_uri())
    return browser, console_errors(browser)


def test_the_checks_see_errors_failed_loads_and_broken_references(browser: Any, tmp_path: Path) -> None:
    trap = tmp_path / "trap.html"
    trap.write_text("<!doctype html><title>trap</title><img src='missing.png' alt=''>"
                    "<p id='twice'>a</p><p id='twice'>b</p><a href='#twice'>ok</a><a href='#nowhere'>broken</a>"
                    "<svg><g clip-path='url(#gone)'></g></svg>"
                    "<script>console.error('planted error')</script>", encoding="utf-8")
    console_errors(browser)
    browser.get(trap.as_uri())
    errors = console_errors(browser)
    assert any("planted error" in error for error in errors), errors
    assert any("missing.png" in error for error in errors), errors
    assert any("missing.png" in problem for problem in browser.execute_script(LOAD_PROBLEMS_SCRIPT))
    assert browser.execute_script(REFERENCES_SCRIPT) == [
        ["a[href]", "twice", True], ["a[href]", "nowhere", False], ["g[clip-path]", "gone", False]]
    assert browser.execute_script(DUPLICATE_IDS_SCRIPT) == ["twice"]


def test_no_console_error_while_loading(page: tuple[Any, list[str]]) -> None:
    driver, errors = page
    assert driver.title.startswith('Browser check: <every> verdict & "quoted" names')
    assert errors == []


def test_nothing_fails_to_load_and_nothing_is_fetched(page: tuple[Any, list[str]]) -> None:
    driver, _ = page
    assert driver.execute_script(LOAD_PROBLEMS_SCRIPT) == []


def test_every_in_page_reference_resolves(page: tuple[Any, list[str]]) -> None:
    driver, _ = page
    references = driver.execute_script(REFERENCES_SCRIPT)
    unresolved = sorted({f"{where} -> #{fragment}" for where, fragment, resolved in references if not resolved})
    assert unresolved == []
    links = {fragment for where, fragment, _ in references if where == "a[href]"}
    # Every series and every regression is reached from the contents and the summary, under its own id
    # (Walk_B and walk_b share a slug, so one of them gets a suffix).
    assert len({fragment for fragment in links if fragment.startswith("series-")}) == 9
    assert len({fragment for fragment in links if fragment.startswith("regression-")}) == 5
    assert any(where.endswith("[clip-path]") for where, _, _ in references), "the charts' clip paths were not seen"


def test_identifiers_are_unique(page: tuple[Any, list[str]]) -> None:
    driver, _ = page
    assert driver.execute_script(DUPLICATE_IDS_SCRIPT) == []


def test_following_links_scrolls_to_their_targets(page: tuple[Any, list[str]]) -> None:
    from selenium.webdriver.common.by import By
    from selenium.webdriver.support.ui import WebDriverWait

    driver, _ = page
    fragments: list[str] = []
    for link in driver.find_elements(By.CSS_SELECTOR, 'a[href^="#"]'):
        fragment = (link.get_attribute("href") or "").partition("#")[2]
        if fragment and fragment not in fragments and link.is_displayed():
            fragments.append(fragment)
    assert len(fragments) >= CLICKS
    step = len(fragments) / CLICKS
    sample = [fragments[int(index * step)] for index in range(CLICKS)]
    for fragment in sample:
        driver.execute_script("window.scrollTo(0, 0)")
        link = next(element for element in driver.find_elements(By.CSS_SELECTOR, f'a[href="#{fragment}"]')
                    if element.is_displayed())
        link.click()
        WebDriverWait(driver, 5).until(lambda browser, wanted=fragment: browser.execute_script(
            TARGET_SCRIPT, wanted)["hash"] == f"#{wanted}")
        # Allow a smooth scroll to settle, then the target must be on screen, near the top unless the page ends.
        WebDriverWait(driver, 5).until(lambda browser, wanted=fragment: _on_screen(browser.execute_script(
            TARGET_SCRIPT, wanted)))
        where = driver.execute_script(TARGET_SCRIPT, fragment)
        assert where["isTarget"], (fragment, where)
        assert where["shown"], (fragment, where)
    assert console_errors(driver) == []


def test_screenshot_of_a_regression_reached_by_its_link(page: tuple[Any, list[str]], tmp_path: Path) -> None:
    from selenium.webdriver.common.by import By

    driver, _ = page
    driver.find_element(By.CSS_SELECTOR, 'a[href="#regression-tied-on-a"]').click()
    assert driver.execute_script(TARGET_SCRIPT, "regression-tied-on-a")["isTarget"]
    shot = tmp_path / "dossier-cointegrated-regression.png"
    assert driver.save_screenshot(str(shot))
    keep_artifact(shot)


def _on_screen(where: dict[str, Any]) -> bool:
    return where["shown"] and -2 <= where["top"] < where["viewport"] and where["bottom"] > 0


def test_screenshot_of_the_first_screen(page: tuple[Any, list[str]], tmp_path: Path) -> None:
    from PIL import Image

    driver, _ = page
    driver.execute_script("window.scrollTo(0, 0)")
    shot = tmp_path / "dossier-first-screen.png"
    assert driver.save_screenshot(str(shot))
    keep_artifact(shot)
    with Image.open(io.BytesIO(shot.read_bytes())) as image:
        grey = image.convert("L")
        assert grey.size[0] >= 1000
        assert grey.size[1] >= 600
        histogram = grey.histogram()
        inked = sum(histogram[:200]) / (grey.size[0] * grey.size[1])
        assert inked > 0.01, f"only {inked:.2%} of the first screen is ink"
        assert len(grey.getcolors(256) or []) > 16  # text, rules and shading, not a flat fill
