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
