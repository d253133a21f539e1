"""A small harness that drives a workbook in a real JupyterLab with headless Chromium.

It starts JupyterLab on 127.0.0.1 (a free port, temporary config/runtime/settings folders,
a temporary copy of the workbooks so nothing in the repository is touched), opens one
notebook in Debian's Chromium through playwright (``executable_path``; no browser download),
runs cells one by one, and stops every process it started.
"""

from __future__ import annotations

import contextlib
import json
import os
import shutil
import socket
import subprocess
import sys
import time
import urllib.request
from collections.abc import Iterator
from pathlib import Path

CHROMIUM_ARGS = [
    "--no-sandbox",
    "--disable-gpu",
    "--disable-dev-shm-usage",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]


def chromium_path() -> str | None:
    """Path of the system Chromium, or None."""
    for name in ("chromium", "chromium-browser"):
        found = shutil.which(name)
        if found:
            return found
    return None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def jupyterlab(root: Path, scratch: Path, timeout: float = 60.0) -> Iterator[str]:
    """Run JupyterLab serving ``root``; yield its base URL; stop it afterwards."""
    port = _free_port()
    env = dict(os.environ)
    for key, sub in (
        ("JUPYTER_CONFIG_DIR", "config"),
        ("JUPYTER_RUNTIME_DIR", "runtime"),
        ("JUPYTERLAB_SETTINGS_DIR", "settings"),
        ("JUPYTERLAB_WORKSPACES_DIR", "workspaces"),
        ("IPYTHONDIR", "ipython"),
    ):
        d = scratch / sub
        d.mkdir(parents=True, exist_ok=True)
        env[key] = str(d)
    env["PYTHONHASHSEED"] = "0"
    env["TQDM_DISABLE"] = "1"
    app_settings = scratch / "app-settings"
    app_settings.mkdir(parents=True, exist_ok=True)
    overrides = app_settings / "overrides.json"
    overrides.write_text(
        json.dumps(
            {
                "@jupyterlab/apputils-extension:notification": {
                    "fetchNews": "false",
                    "checkForUpdates": False,
                }
            }
        ),
        encoding="utf-8",
    )
    cmd = [
        sys.executable, "-m", "jupyter", "lab", "--no-browser", "--ip=127.0.0.1",
        f"--port={port}", "--allow-root", f"--ServerApp.root_dir={root}",
        "--IdentityProvider.token=", "--ServerApp.password=", "--LabApp.news_url=None",
        "--LabApp.check_for_updates_class=jupyterlab.NeverCheckForUpdate",
        "--LabApp.expose_app_in_browser=True", "--ServerApp.disable_check_xsrf=True",
        f"--LabApp.app_settings_dir={app_settings}",
    ]  # fmt: skip
    log = open(scratch / "jupyterlab.log", "wb")  # noqa: SIM115 - closed below
    proc = subprocess.Popen(
        cmd, env=env, stdout=log, stderr=subprocess.STDOUT, start_new_session=True
    )
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + timeout
        while True:
            if proc.poll() is not None:
                raise RuntimeError(f"JupyterLab exited early; see {scratch / 'jupyterlab.log'}")
            try:
                with urllib.request.urlopen(url + "/api", timeout=2) as r:
                    if r.status == 200:
                        break
            except OSError:
                pass
            if time.monotonic() > deadline:
                raise RuntimeError("JupyterLab did not start in time")
            time.sleep(0.3)
        yield url
    finally:
        with contextlib.suppress(ProcessLookupError):
            os.killpg(proc.pid, 15)
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            with contextlib.suppress(ProcessLookupError):
                os.killpg(proc.pid, 9)
            proc.wait(timeout=5)
        log.close()


WAIT_KERNEL_JS = """
() => {
  const app = window.jupyterapp;
  if (!app) return false;
  const w = app.shell.currentWidget;
  if (!w || !w.sessionContext) return false;
  const ctx = w.sessionContext;
  const k = ctx.session && ctx.session.kernel;
  return ctx.isReady && !!k && k.connectionStatus === 'connected' && k.status === 'idle';
}
"""

RUN_CELL_JS = """
async (i) => {
  const app = window.jupyterapp;
  const nb = app.shell.currentWidget;
  nb.content.activeCellIndex = i;
  await app.commands.execute('notebook:run-cell');
  return true;
}
"""

CELL_DONE_JS = """
(i) => {
  const nb = window.jupyterapp.shell.currentWidget;
  const cell = nb.content.widgets[i];
  if (cell.model.type !== 'code') return true;
  const k = nb.sessionContext.session.kernel;
  return cell.model.executionCount !== null && k.status === 'idle';
}
"""

CELL_COUNT_JS = "() => window.jupyterapp.shell.currentWidget.content.widgets.length"

CELL_SOURCE_JS = (
    "(i) => window.jupyterapp.shell.currentWidget.content.widgets[i].model.sharedModel.getSource()"
)


def run_cells_until(page, marker: str, timeout_ms: int = 120_000) -> int:
    """Run code cells one by one up to and including the first whose source contains ``marker``.

    Returns the index of that cell.
    """
    n = page.evaluate(CELL_COUNT_JS)
    for i in range(n):
        page.evaluate(RUN_CELL_JS, i)
        page.wait_for_function(CELL_DONE_JS, arg=i, timeout=timeout_ms)
        if marker in page.evaluate(CELL_SOURCE_JS, i):
            return i
    raise AssertionError(f"no cell contains {marker!r}")


# ============================================================================ helpers for widget tests
def require_browser() -> str:
    """Path of the system Chromium when it and playwright are installed.

    Under ``CI`` a missing browser fails the test (the bootstrap should have installed it);
    elsewhere the test is skipped.
    """
    import pytest

    path = chromium_path()
    try:
        import playwright.sync_api  # noqa: F401
    except ImportError:
        path = None
    if path is None:
        if os.environ.get("CI"):
            pytest.fail(
                "Chromium or playwright is missing on CI; scripts/bootstrap.sh should install them"
            )
        pytest.skip("Chromium/playwright not installed (make test installs them where it can)")
    return path


def open_notebook(page, url: str, path: str, timeout_ms: int = 90_000) -> None:
    """Open ``path`` (relative to the server root) in JupyterLab and wait for an idle kernel."""
    page.goto(f"{url}/lab/tree/{path}", wait_until="domcontentloaded")
    page.wait_for_function(WAIT_KERNEL_JS, timeout=timeout_ms)


# The element's box stays the same over a few consecutive polls (Lumino lays out after a resize).
SETTLED_JS = """
(sel) => {
  const el = document.querySelector(sel);
  if (!el) return false;
  const r = el.getBoundingClientRect();
  const key = [r.left, r.width, r.height].map(Math.round).join(',');
  const s = (window.__settled = window.__settled || {});
  if (s[sel] && s[sel].key === key) s[sel].n += 1; else s[sel] = {key, n: 0};
  return r.width > 0 && s[sel].n >= 3;
}
"""


def wait_settled(page, selector: str, timeout_ms: int = 30_000) -> None:
    """Wait until ``selector``'s box no longer changes (short polls, no blind sleep)."""
    page.evaluate("() => { window.__settled = {}; }")
    page.wait_for_function(SETTLED_JS, arg=selector, polling=100, timeout=timeout_ms)


def set_width(page, width: int, selector: str, height: int = 900) -> None:
    """Resize the viewport to ``width`` x ``height`` and wait for ``selector`` to settle."""
    page.set_viewport_size({"width": width, "height": height})
    page.wait_for_function("(w) => window.innerWidth === w", arg=width, timeout=30_000)
    wait_settled(page, selector)


def screenshot_whole(page, selector: str, path: Path) -> None:
    """Screenshot the whole of a (tall) rendered element at the current viewport width.

    The notebook scrolls inside its own panel, so the viewport is made tall enough for the
    element to fit, and restored afterwards (the width, which decides the layout, is kept).
    """
    before = page.viewport_size
    element = page.locator(selector).first
    height = element.evaluate("(e) => e.getBoundingClientRect().height")
    page.set_viewport_size({"width": before["width"], "height": int(height) + 400})
    wait_settled(page, selector)
    element.scroll_into_view_if_needed()
    element.screenshot(path=str(path))
    page.set_viewport_size(before)
    wait_settled(page, selector)


# Every visible control (button, text field, text area, dropdown, checkbox) under ROOT: a box
# too small to use, a box sticking out of its parent or of the output area, a label or button
# text cut, a field too narrow to type in; every HTML output whose content is wider than its
# box while it does not scroll (cut text). Returns {count, problems} with the boxes in pixels.
LAYOUT_PROBLEMS_JS = """
([rootSel, minButton, minField]) => {
  const root = document.querySelector(rootSel);
  if (!root) return {count: 0, problems: ['no element ' + rootSel]};
  const problems = [];
  const box = (r) => `x=${Math.round(r.left)}..${Math.round(r.right)} w=${Math.round(r.width)} h=${Math.round(r.height)}`;
  const who = (el) => {
    const cls = [...el.classList].filter((c) => c.startsWith('viscometry-') || c.startsWith('widget-'));
    const lab = el.querySelector(':scope > .widget-label, :scope > .widget-label-basic');
    const text = ((lab && lab.textContent) || el.textContent || '').trim().slice(0, 40);
    let row = el.closest('[class*="viscometry-input-"]');
    row = row ? [...row.classList].find((c) => c.startsWith('viscometry-input-')) + ' ' : '';
    return `${row}${cls.join('.')} "${text}" (${box(el.getBoundingClientRect())})`;
  };
  const visible = (el) => el.checkVisibility({checkOpacity: true, checkVisibilityCSS: true});
  const area = root.closest('.jp-OutputArea-output') || root.parentElement;
  const areaBox = area.getBoundingClientRect();
  const cut = (el) => el.scrollWidth > el.clientWidth + 1;
  let count = 0;
  const sel = '.jupyter-button, .widget-text, .widget-textarea, .widget-dropdown, .widget-checkbox';
  for (const el of root.querySelectorAll(sel)) {
    if (!visible(el)) continue;
    count += 1;
    const r = el.getBoundingClientRect();
    const isButton = el.classList.contains('jupyter-button');
    if (r.width < (isButton ? minButton : minField) || r.height < 10)
      problems.push(`${who(el)}: too small`);
    const p = el.parentElement.getBoundingClientRect();
    if (r.left < p.left - 1 || r.right > p.right + 1)
      problems.push(`${who(el)}: sticks out of its parent (${box(p)})`);
    if (r.left < areaBox.left - 1 || r.right > areaBox.right + 1)
      problems.push(`${who(el)}: sticks out of the output area (${box(areaBox)})`);
    if (isButton) {
      if (cut(el)) problems.push(`${who(el)}: text cut (${el.scrollWidth} px in ${el.clientWidth} px)`);
      continue;
    }
    for (const lab of el.querySelectorAll(':scope > .widget-label, :scope > .widget-label-basic')) {
      if (!visible(lab) || !lab.textContent.replace('\\u200b', '').trim()) continue;
      const lr = lab.getBoundingClientRect();
      if (lr.width < 1 || cut(lab)) problems.push(`${who(el)}: label cut (${box(lr)})`);
    }
    const field = el.querySelector('input:not([type=checkbox]), select, textarea');
    if (field) {
      const fr = field.getBoundingClientRect();
      if (fr.width < minField) problems.push(`${who(el)}: field only ${Math.round(fr.width)} px wide`);
      if (fr.left < r.left - 1 || fr.right > r.right + 1) problems.push(`${who(el)}: field sticks out (${box(fr)})`);
    }
  }
  for (const el of root.querySelectorAll('.widget-html')) {
    if (!visible(el)) continue;
    const content = el.querySelector('.widget-html-content') || el;
    const scrolls = ['auto', 'scroll'].includes(getComputedStyle(el).overflowX);
    if (!scrolls && content.scrollWidth > el.clientWidth + 1)
      problems.push(`${who(el)}: content ${content.scrollWidth} px wide in a ${el.clientWidth} px box (cut)`);
    const r = el.getBoundingClientRect();
    if (r.width > 0 && (r.left < areaBox.left - 1 || r.right > areaBox.right + 3))
      problems.push(`${who(el)}: sticks out of the output area (${box(areaBox)})`);
  }
  return {count, problems};
}
"""


def layout_problems(
    page, root_selector: str, *, min_button: float = 40, min_field: float = 40
) -> tuple[int, list[str]]:
    """(number of visible controls checked, layout problems found) under ``root_selector``."""
    out = page.evaluate(LAYOUT_PROBLEMS_JS, [root_selector, min_button, min_field])
    return out["count"], out["problems"]


# The rendered size of an <img> and its natural size, once it has loaded.
IMAGE_BOX_JS = """
(sel) => {
  const img = document.querySelector(sel);
  if (!img || !img.complete || !img.naturalWidth) return null;
  const r = img.getBoundingClientRect();
  return {width: r.width, height: r.height, natural_width: img.naturalWidth,
          natural_height: img.naturalHeight};
}
"""


def image_box(page, selector: str, timeout_ms: int = 30_000) -> dict[str, float]:
    """Rendered and natural size of the image ``selector`` (waits until it has loaded)."""
    page.wait_for_function(f"() => ({IMAGE_BOX_JS})({json.dumps(selector)}) !== null",
                           timeout=timeout_ms)  # fmt: skip
    return page.evaluate(IMAGE_BOX_JS, selector)


def wait_text(page, selector: str, text: str, timeout_ms: int = 30_000) -> str:
    """Wait until the rendered text of ``selector`` contains ``text``; return that text."""
    page.wait_for_function(
        "([sel, text]) => { const e = document.querySelector(sel);"
        " return !!e && e.innerText.includes(text); }",
        arg=[selector, text],
        timeout=timeout_ms,
    )
    return page.locator(selector).first.inner_text()
