"""A real-browser check of the budget builder of the start-here workbook (JupyterLab + Chromium).

The test copies the repository's ``workbooks/`` and ``examples/`` to a temporary folder (so the
workbook's ``../examples`` resolves and nothing in the repository is touched), serves them with
JupyterLab on 127.0.0.1, opens ``00_start_here.ipynb`` in Debian's Chromium (playwright with
``executable_path``; nothing is downloaded) and runs its cells one by one up to the builder.
Then, only through the rendered controls, it

1. loads a budget file by typing its path and clicking **Load**, and finds the statement and
   fingerprint the library computes for that file;
2. types a new expanded uncertainty of an input (Enter) and finds the statement, the budget
   table (cell by cell) and the fingerprint the library computes for that change;
3. saves to a new path (**save as**, **Save**) and reloads that file in-process: the same
   fingerprint as the UI showed, and the recorded statement as shown;
4. types a negative half-width and finds the library's refusal next to the field while the last
   good statement stays on screen;
5. at 1024 px and 1440 px wide, checks that no visible control is squeezed, sticks out of its
   parent or has its label cut, that no HTML output is cut, and that the chart keeps its aspect.

Screenshots go to ``test-artifacts/``. Every process the test started is stopped.
"""

from __future__ import annotations

import contextlib
import copy
import html.parser
import re
import shutil
import tomllib
from pathlib import Path

import pytest
from browser_harness import (
    CHROMIUM_ARGS,
    image_box,
    jupyterlab,
    layout_problems,
    open_notebook,
    require_browser,
    run_cells_until,
    screenshot_whole,
    set_width,
    wait_settled,
    wait_text,
)

from viscometry.errors import ViscometryError
from viscometry.io import load_budget
from viscometry.io.reader import read_document
from viscometry.text import budget_html, statement

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
WORKBOOK = "00_start_here.ipynb"
ARTIFACTS = ROOT / "test-artifacts"
BUDGET = "../examples/methods/glass_capillary_kinetic.toml"  # as typed, relative to workbooks/
SAVE_AS = "kinetic_recertified_by_browser.toml"
NEW_U_C = "0.00009"  # expanded uncertainty of C typed in (the file has 0.00018, k = 2)

ROOT_SEL = ".viscometry-builder"
STATEMENT = ".viscometry-builder-statement-html"
TABLE = ".viscometry-builder-table-html"
CHART = ".viscometry-builder .viscometry-chart"
FINGERPRINT = re.compile(r"sha256:[0-9a-f]{64}")


class _Cells(html.parser.HTMLParser):
    """The text of every table cell, row by row (the expected table, from the library's HTML)."""

    def __init__(self) -> None:
        super().__init__()
        self.rows: list[list[str]] = []
        self._cell: list[str] | None = None

    def handle_starttag(self, tag, attrs):
        if tag == "tr":
            self.rows.append([])
        elif tag in ("td", "th"):
            self._cell = []

    def handle_endtag(self, tag):
        if tag in ("td", "th") and self._cell is not None:
            self.rows[-1].append(" ".join("".join(self._cell).split()))
            self._cell = None

    def handle_data(self, data):
        if self._cell is not None:
            self._cell.append(data)


def _cells(markup: str) -> list[list[str]]:
    parser = _Cells()
    parser.feed(markup)
    return parser.rows


RENDERED_CELLS_JS = """
(sel) => [...document.querySelectorAll(sel + ' tr')].map(
  (tr) => [...tr.querySelectorAll('td, th')].map((c) => c.textContent.split(/\\s+/).filter(Boolean).join(' ')))
"""


def _rendered_cells(page, expected: list[list[str]]) -> list[list[str]]:
    """The rendered budget table's cells, once they equal ``expected`` (or after a timeout)."""
    from playwright.sync_api import TimeoutError as PlaywrightTimeout

    with contextlib.suppress(PlaywrightTimeout):
        page.wait_for_function(
            f"([sel, want]) => JSON.stringify(({RENDERED_CELLS_JS})(sel)) === JSON.stringify(want)",
            arg=[TABLE, expected],
            timeout=30_000,
        )
    return page.evaluate(RENDERED_CELLS_JS, TABLE)


def _document(path: Path) -> dict:
    doc = tomllib.loads(path.read_text(encoding="utf-8"))
    doc.pop("recorded", None)
    return doc


def _shown_fingerprint(page, selector: str) -> str:
    found = FINGERPRINT.findall(page.locator(selector).first.inner_text())
    assert len(found) == 1, f"{selector} should show one fingerprint, shows {found}"
    return found[0]


def _check_layout(page, width: int) -> None:
    set_width(page, width, ROOT_SEL)
    count, problems = layout_problems(page, ROOT_SEL, min_button=40, min_field=40)
    assert count >= 30, f"only {count} visible controls of the builder at {width} px"
    assert not problems, f"layout at {width} px:\n" + "\n".join(problems)
    chart = image_box(page, CHART)
    assert chart["width"] >= 200, f"chart squeezed at {width} px: {chart}"
    assert chart["height"] <= 2 * chart["width"], f"chart stretched at {width} px: {chart}"
    aspect = chart["height"] / chart["width"]
    natural = chart["natural_height"] / chart["natural_width"]
    assert abs(aspect / natural - 1) < 0.05, f"chart distorted at {width} px: {chart}"


def test_budget_builder_in_a_real_browser(tmp_path):
    chromium = require_browser()
    from playwright.sync_api import sync_playwright

    served = tmp_path / "served"
    shutil.copytree(ROOT / "workbooks", served / "workbooks")
    shutil.copytree(ROOT / "examples", served / "examples")
    kernel_dir = served / "workbooks"  # the kernel runs in the workbook's folder
    assert (kernel_dir / WORKBOOK).exists(), f"{WORKBOOK} is missing"
    budget_file = kernel_dir / BUDGET
    saved_file = kernel_dir / SAVE_AS
    assert budget_file.is_file() and not saved_file.exists()

    # What the library computes, in-process, for each step.
    loaded = load_budget(budget_file)
    loaded_statement = statement(loaded.budget.evaluate())
    changed_doc = _document(budget_file)
    changed_doc["inputs"]["C"]["expanded_uncertainty"] = float(NEW_U_C)
    changed = read_document(copy.deepcopy(changed_doc), "expected").budget
    changed_result = changed.evaluate()
    changed_statement = statement(changed_result)
    assert changed_statement != loaded_statement
    refused_doc = copy.deepcopy(changed_doc)
    refused_doc["inputs"]["E"]["half_width"] = -1.0
    with pytest.raises(ViscometryError) as refusal:
        read_document(refused_doc, "expected")
    refusal_text = str(refusal.value).removeprefix("expected: ")
    assert "non-negative" in refusal_text

    ARTIFACTS.mkdir(exist_ok=True)
    with jupyterlab(served, tmp_path / "jupyter") as url, sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS, headless=True)
        try:
            page = browser.new_page(viewport={"width": 1024, "height": 900})
            open_notebook(page, url, f"workbooks/{WORKBOOK}")
            run_cells_until(page, "budget_builder(")
            page.locator(ROOT_SEL).first.wait_for(timeout=60_000)
            image_box(page, CHART, timeout_ms=60_000)
            wait_settled(page, ROOT_SEL)
            # the opening budget (a formula with a correlation row) at the narrow width
            _check_layout(page, 1024)

            # 1. load a budget file by its path
            path_field = page.locator(".viscometry-builder-path input").first
            path_field.fill(BUDGET)
            path_field.press("Enter")
            page.locator(".viscometry-builder-load-button").first.click()
            wait_text(page, ".viscometry-builder-start-message", f"loaded {BUDGET}")
            shown = wait_text(page, STATEMENT, loaded_statement)
            assert _shown_fingerprint(page, STATEMENT) == loaded.fingerprint, shown
            table_before = page.evaluate(RENDERED_CELLS_JS, TABLE)

            # 2. change an input through its rendered field
            big_u = page.locator(".viscometry-input-C .viscometry-field-big-u input").first
            assert big_u.input_value() == "0.00018"
            big_u.fill(NEW_U_C)
            big_u.press("Enter")
            wait_text(page, STATEMENT, changed_statement)
            assert _shown_fingerprint(page, STATEMENT) == changed.fingerprint
            expected_cells = _cells(budget_html(changed_result))
            assert expected_cells != table_before
            assert _rendered_cells(page, expected_cells) == expected_cells

            # 3. save to a new path and reload it in-process
            save_field = page.locator(".viscometry-builder-save-path input").first
            save_field.fill(SAVE_AS)
            save_field.press("Enter")
            page.locator(".viscometry-builder-save-button").first.click()
            wait_text(page, ".viscometry-builder-save-html", "saved")
            ui_fingerprint = _shown_fingerprint(page, STATEMENT)
            assert _shown_fingerprint(page, ".viscometry-builder-save-html") == ui_fingerprint
            assert saved_file.is_file(), f"Save wrote no {saved_file}"
            reloaded = load_budget(saved_file)
            assert reloaded.fingerprint == ui_fingerprint == changed.fingerprint
            assert reloaded.recorded is not None
            assert reloaded.recorded.statement == changed_statement

            # 4. a negative uncertainty is refused next to its field; the last good budget stays
            half_width = page.locator(".viscometry-input-E .viscometry-field-half-width input")
            half_width.first.fill("-1")
            half_width.first.press("Enter")
            message = ".viscometry-input-E .viscometry-field-message"
            wait_text(page, message, refusal_text)
            assert page.locator(message).first.is_visible()
            after = wait_text(page, STATEMENT, "last budget that could be built")
            assert changed_statement in after
            assert _shown_fingerprint(page, STATEMENT) == ui_fingerprint
            other = page.locator(".viscometry-input-C .viscometry-field-message").first
            assert other.inner_text().strip() == ""
            row = page.locator(".viscometry-input-E").first
            row.scroll_into_view_if_needed()
            row.screenshot(path=str(ARTIFACTS / "browser_builder_refusal.png"))

            # 5. layout at 1024 px and 1440 px, with the refusal on screen
            for width in (1024, 1440):
                _check_layout(page, width)
                screenshot_whole(page, ROOT_SEL, ARTIFACTS / f"browser_builder_{width}.png")
        finally:
            browser.close()
