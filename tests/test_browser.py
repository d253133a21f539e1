"""A real-browser check: JupyterLab + headless Chromium drive a workbook's budget editor.

The test copies the workbooks to a temporary folder, serves them with JupyterLab on
127.0.0.1, opens the routine kinematic-viscosity workbook in Debian's Chromium (through
playwright, with ``executable_path``; nothing is downloaded at run time), runs its cells one
by one up to the budget editor, types a new standard uncertainty into the rendered control,
and checks that the rendered budget statement changed to the value the library computes for
that what-if. A screenshot is saved under ``test-artifacts/``. Every process it started is
stopped. Set up by ``make test`` (scripts/bootstrap.sh installs chromium and playwright).
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest
from browser_harness import (
    CHROMIUM_ARGS,
    WAIT_KERNEL_JS,
    jupyterlab,
    require_browser,
    run_cells_until,
)

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
WORKBOOK = "02_routine_kinematic_viscosity.ipynb"
ARTIFACTS = ROOT / "test-artifacts"


def _expected_statement(notebook: Path, name: str, new_u: float) -> str:
    """Run the notebook's set-up cells in-process to rebuild its budget, then the what-if."""
    import nbformat

    nb = nbformat.read(notebook, as_version=4)
    namespace: dict = {}
    cwd = os.getcwd()
    os.chdir(notebook.parent)
    try:
        for cell in nb.cells:
            if cell.cell_type != "code":
                continue
            if "budget_editor(" in cell.source:
                break
            source = "\n".join(
                line
                for line in cell.source.splitlines()
                if not line.lstrip().startswith(("%", "!"))
            )
            exec(compile(source, str(notebook), "exec"), namespace)  # our own workbook's code
    finally:
        os.chdir(cwd)
    from viscometry.text import statement

    budget = namespace["budget"]
    return statement(budget.with_uncertainty(name, new_u).evaluate())


def test_budget_editor_in_a_real_browser(tmp_path):
    chromium = require_browser()
    from playwright.sync_api import sync_playwright

    served = tmp_path / "served"
    shutil.copytree(ROOT / "workbooks", served / "workbooks")
    shutil.copytree(ROOT / "examples", served / "examples")
    notebook = served / "workbooks" / WORKBOOK
    assert notebook.exists(), f"{WORKBOOK} is missing"

    ARTIFACTS.mkdir(exist_ok=True)
    with jupyterlab(served, tmp_path / "jupyter") as url, sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS, headless=True)
        try:
            page = browser.new_page(viewport={"width": 1400, "height": 1000})
            page.goto(f"{url}/lab/tree/workbooks/{WORKBOOK}", wait_until="domcontentloaded")
            page.wait_for_function(WAIT_KERNEL_JS, timeout=90_000)
            run_cells_until(page, "budget_editor(")
            controls = page.locator("[class*='viscometry-u-']")
            controls.first.wait_for(timeout=60_000)
            classes = controls.first.get_attribute("class") or ""
            name = next(c for c in classes.split() if c.startswith("viscometry-u-"))[
                len("viscometry-u-") :
            ]
            statement = page.locator(".viscometry-statement").first
            before = statement.inner_text()
            box = controls.first.locator("input")
            old = float(box.input_value())
            new_u = old * 3.0
            box.fill(repr(new_u))
            box.press("Enter")
            expected = _expected_statement(served / "workbooks" / WORKBOOK, name, new_u)
            expected_core = expected.split(",")[0]  # "nu = (value ± U) unit"
            page.wait_for_function(
                "([sel, text]) => document.querySelector(sel).innerText.includes(text)",
                arg=[".viscometry-statement", expected_core],
                timeout=30_000,
            )
            after = statement.inner_text()
            statement.scroll_into_view_if_needed()
            page.screenshot(path=str(ARTIFACTS / "browser_budget_editor.png"), full_page=False)
        finally:
            browser.close()
    assert after != before
    assert expected_core in after
