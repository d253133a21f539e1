"""Real-browser checks of the evidence panel (workbook 07) and the dilution panel (workbook 08).

Each test copies ``workbooks/`` and ``examples/`` to a temporary folder, serves them with
JupyterLab on 127.0.0.1, opens the workbook in Debian's Chromium (playwright with
``executable_path``) and runs its cells up to the panel. Then, only through the rendered
controls, it types a path of a file that does not exist and clicks the panel's button: the
refusal appears next to the fields and the last good result stays on screen, marked as such.
At 1024 px and 1440 px wide no visible control is squeezed, sticks out or has its label cut,
and no HTML output is cut. Screenshots go to ``test-artifacts/``.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest
from browser_harness import (
    CHROMIUM_ARGS,
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

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
ARTIFACTS = ROOT / "test-artifacts"

# workbook, the source of the panel's cell, the field to type into (its label), the button,
# text shown once the panel has a result, and the marker of a kept result after a refusal
CASES = {
    "evidence": (
        "07_does_our_uncertainty_hold_up.ipynb",
        "panel = evidence_panel(",
        "check-standard chart (CSV)",
        "Check",
        "verdict: borderline",
        "still those of the files last read",
    ),
    "dilution": (
        "08_dilute_solutions.ipynb",
        "panel = dilute_panel(",
        "series file",
        "Load",
        "Huggins: [η]",
        "still that of the last series",
    ),
}


def _check_layout(page, selector: str, width: int, name: str) -> None:
    set_width(page, width, selector)
    count, problems = layout_problems(page, selector, min_button=40, min_field=40)
    screenshot_whole(page, selector, ARTIFACTS / f"panel_{name}_{width}.png")
    assert count >= 3, f"only {count} controls visible at {width} px"
    assert not problems, f"at {width} px:\n" + "\n".join(problems)


@pytest.mark.parametrize("name", sorted(CASES))
def test_panel_in_a_real_browser(tmp_path, name):
    chromium = require_browser()
    from playwright.sync_api import sync_playwright

    workbook, marker, label, button, result_text, kept_text = CASES[name]
    served = tmp_path / "served"
    shutil.copytree(ROOT / "workbooks", served / "workbooks")
    shutil.copytree(ROOT / "examples", served / "examples")
    ARTIFACTS.mkdir(exist_ok=True)
    with jupyterlab(served, tmp_path / "jupyter") as url, sync_playwright() as pw:
        browser = pw.chromium.launch(executable_path=chromium, args=CHROMIUM_ARGS, headless=True)
        try:
            page = browser.new_page(viewport={"width": 1024, "height": 900})
            open_notebook(page, url, f"workbooks/{workbook}")
            index = run_cells_until(page, marker)
            output = f".jp-Notebook .jp-Cell:nth-child({index + 1}) .jp-OutputArea"
            wait_text(page, output, result_text, timeout_ms=120_000)
            wait_settled(page, output)
            _check_layout(page, output, 1024, name)

            field = page.locator(f"{output} .widget-text", has_text=label).locator("input")
            field.first.fill("no_such_file.toml")
            field.first.press("Enter")
            page.locator(f"{output} .jupyter-button", has_text=button).first.click()
            shown = wait_text(page, output, kept_text)
            assert "no_such_file.toml" in shown and result_text in shown

            _check_layout(page, output, 1440, name)
        finally:
            browser.close()
