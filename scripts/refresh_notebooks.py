#!/usr/bin/env python
"""Re-execute the workbooks and store clean outputs for the notebook regression tests.

Usage::

    .venv/bin/python scripts/refresh_notebooks.py [NOTEBOOK ...]

Without arguments every ``workbooks/*.ipynb`` is refreshed. For each notebook the script

1. clears all outputs, execution counts and metadata (keeps cell ids and ``tags``),
2. executes it with nbclient in a kernel running *this* Python (the one the tests use with
   ``--nbval-current-env``), working directory ``workbooks/``, with the CI environment
   (``PYTHONHASHSEED=0``, ``TQDM_DISABLE=1``, no ``MPLBACKEND``), without widget state and
   without timing metadata,
3. refuses to store a notebook when a cell not marked ``# NBVAL_RAISES_EXCEPTION`` raised,
   or when a checked cell wrote to stderr (warnings change between runs and machines),
4. strips volatile metadata (widget state, timings, the interpreter's patch version) and
   widget-view outputs (they cannot render without stored state; their text fallback
   stays), and writes the notebook back atomically
   (:func:`viscometry.io.atomic.atomic_write_text`).

Review the diff afterwards: changed numbers are the point of the regression test.
"""

from __future__ import annotations

import argparse
import os
import sys
from collections.abc import Sequence
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
WORKBOOKS = ROOT / "workbooks"

#: The environment of the notebook test run in CI (see scripts/run_tests.sh and Makefile).
CI_ENVIRONMENT = {"PYTHONHASHSEED": "0", "TQDM_DISABLE": "1"}
#: Variables that would change what the kernel prints (MPLBACKEND=Agg drops figure outputs).
REMOVED_VARIABLES = ("MPLBACKEND",)

CURRENT_ENV_KERNEL = "viscometry-current-env"
KERNELSPEC = {"display_name": "Python 3 (ipykernel)", "language": "python", "name": "python3"}
LANGUAGE_INFO = {
    "codemirror_mode": {"name": "ipython", "version": 3},
    "file_extension": ".py",
    "mimetype": "text/x-python",
    "name": "python",
    "nbconvert_exporter": "python",
    "pygments_lexer": "ipython3",
}
KEPT_CELL_METADATA = ("tags",)
IGNORE_MARKERS = ("# NBVAL_IGNORE_OUTPUT", "# NBVAL_SKIP")
RAISES_MARKER = "# NBVAL_RAISES_EXCEPTION"
WIDGET_VIEW = "application/vnd.jupyter.widget-view+json"


def _markers(source: str) -> set[str]:
    return {line.strip() for line in source.splitlines() if line.strip().startswith("#")}


def clean(nb: object) -> None:
    """Clear outputs, execution counts and metadata in place (cell ids and tags are kept)."""
    nb.metadata = {"kernelspec": dict(KERNELSPEC), "language_info": dict(LANGUAGE_INFO)}  # type: ignore[attr-defined]
    for cell in nb.cells:  # type: ignore[attr-defined]
        cell.metadata = {k: v for k, v in cell.metadata.items() if k in KEPT_CELL_METADATA}
        if cell.cell_type == "code":
            cell.outputs = []
            cell.execution_count = None


def problems(nb: object) -> list[str]:
    """Errors outside ``# NBVAL_RAISES_EXCEPTION`` cells and stderr in checked cells."""
    found = []
    for index, cell in enumerate(nb.cells):  # type: ignore[attr-defined]
        if cell.cell_type != "code":
            continue
        markers = _markers(cell.source)
        for out in cell.outputs:
            if out.output_type == "error" and RAISES_MARKER not in markers:
                found.append(f"cell {index}: {out.ename}: {out.evalue}")
            if (
                out.output_type == "stream"
                and out.name == "stderr"
                and not markers.intersection(IGNORE_MARKERS)
            ):
                found.append(f"cell {index} wrote to stderr: {out.text.strip()[:500]}")
    return found


def _kernel_manager_class() -> type:
    """An AsyncKernelManager whose one kernel spec runs the current Python's ipykernel."""
    import ipykernel.kernelspec
    from jupyter_client.kernelspec import KernelSpecManager
    from jupyter_client.manager import AsyncKernelManager
    from traitlets import default

    class CurrentEnvSpecManager(KernelSpecManager):
        def get_kernel_spec(self, kernel_name: str) -> object:
            if kernel_name == CURRENT_ENV_KERNEL:
                return self.kernel_spec_class(
                    resource_dir=ipykernel.kernelspec.RESOURCES,
                    **ipykernel.kernelspec.get_kernel_dict(),
                )
            return super().get_kernel_spec(kernel_name)

    class CurrentEnvKernelManager(AsyncKernelManager):
        @default("kernel_spec_manager")
        def _kernel_spec_manager_default(self) -> KernelSpecManager:
            return CurrentEnvSpecManager(data_dir=self.data_dir)

    return CurrentEnvKernelManager


def execute(nb: object, cwd: Path, timeout: int) -> None:
    """Execute a cleaned notebook in place with the current Python, in ``cwd``."""
    from nbclient import NotebookClient

    client = NotebookClient(
        nb,
        timeout=timeout,
        kernel_name=CURRENT_ENV_KERNEL,
        kernel_manager_class=_kernel_manager_class(),
        allow_errors=True,  # checked below: only NBVAL_RAISES_EXCEPTION cells may raise
        store_widget_state=False,
        record_timing=False,
        resources={"metadata": {"path": str(cwd)}},
    )
    client.execute()


def strip_volatile(nb: object) -> None:
    """Drop widget state, timings and the interpreter version the kernel reported.

    Widget *views* go too: without stored widget state they cannot render (a reader would
    see "model not found") and their random model ids change on every refresh. The plain
    text fallback of each widget output stays.
    """
    nb.metadata.pop("widgets", None)  # type: ignore[attr-defined]
    nb.metadata["kernelspec"] = dict(KERNELSPEC)  # type: ignore[attr-defined]
    nb.metadata["language_info"] = dict(LANGUAGE_INFO)  # type: ignore[attr-defined]
    for cell in nb.cells:  # type: ignore[attr-defined]
        cell.metadata = {k: v for k, v in cell.metadata.items() if k in KEPT_CELL_METADATA}
        for out in cell.get("outputs", ()):
            data = out.get("data")
            if data is not None and WIDGET_VIEW in data:
                del data[WIDGET_VIEW]
                if not data:
                    data["text/plain"] = "[interactive widget: run the cell to show it]"


def refresh(path: Path, timeout: int = 600) -> list[str]:
    """Refresh one notebook; return the problems found (nothing is written if any)."""
    import nbformat

    from viscometry.io.atomic import atomic_write_text

    nb = nbformat.read(path, as_version=4)
    clean(nb)
    execute(nb, path.resolve().parent, timeout)  # workbooks/ for the workbooks, as under nbval
    found = problems(nb)
    if found:
        return found
    strip_volatile(nb)
    nbformat.validate(nb)
    text = nbformat.writes(nb)
    if not text.endswith("\n"):
        text += "\n"
    atomic_write_text(path, text)
    return []


def main(argv: Sequence[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument(
        "notebooks", nargs="*", type=Path, help="notebooks to refresh (default: workbooks/*.ipynb)"
    )
    parser.add_argument("--timeout", type=int, default=600, help="per-cell timeout in seconds")
    args = parser.parse_args(argv)
    paths = args.notebooks or sorted(WORKBOOKS.glob("*.ipynb"))
    if not paths:
        print("refresh_notebooks: no notebooks found", file=sys.stderr)
        return 1
    os.environ.update(CI_ENVIRONMENT)  # inherited by the kernel
    for name in REMOVED_VARIABLES:
        os.environ.pop(name, None)
    status = 0
    for path in paths:
        if not path.is_file() or path.suffix != ".ipynb":
            print(f"refresh_notebooks: not a notebook: {path}", file=sys.stderr)
            status = 1
            continue
        found = refresh(path, args.timeout)
        if found:
            status = 1
            print(f"refresh_notebooks: {path}: not written:", file=sys.stderr)
            for line in found:
                print(f"  {line}", file=sys.stderr)
        else:
            print(f"refreshed {path}")
    return status


if __name__ == "__main__":
    sys.exit(main())
