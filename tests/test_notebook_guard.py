"""Guard the notebook regression tests against silent holes (no kernel needed, fast).

nbval silently skips what it cannot see: a cell stored unexecuted is not checked, a marker
comment with a typo or trailing words is ignored, a malformed sanitize entry is dropped, a
trailing ``;`` does not suppress output. These checks catch that in the stored workbooks;
the rules come from the project's measured notes on nbval (common practice, no source) and
from nbval 0.11's own parsers, which are imported where possible so the guard and the
plugin agree.
"""

from __future__ import annotations

import re
from pathlib import Path

import nbformat
import pytest
from nbval.plugin import comment_markers, get_sanitize_patterns, metadata_tags

ROOT = Path(__file__).resolve().parent.parent
WORKBOOKS = ROOT / "workbooks"
SANITIZE = WORKBOOKS / "sanitize.cfg"
NOTEBOOKS = sorted(WORKBOOKS.glob("*.ipynb"))

#: The markers this project uses, spelled exactly, each alone on its line.
MARKERS = (
    "# NBVAL_IGNORE_OUTPUT",
    "# NBVAL_SKIP",
    "# NBVAL_RAISES_EXCEPTION",
    "# NBVAL_CHECK_OUTPUT",
)
UNCHECKED = {"# NBVAL_IGNORE_OUTPUT", "# NBVAL_SKIP"}
RAISES = "# NBVAL_RAISES_EXCEPTION"
WIDGET_VIEW = "application/vnd.jupyter.widget-view+json"
TIMING_KEYS = {"execution", "ExecuteTime"}
# A comment that looks like a marker attempt: mentions nbval or its old prefix, any case.
MARKER_LIKE = re.compile(r"nbval|pytest_validate", re.IGNORECASE)
# Decimal numbers as printed in results (hex addresses are excluded before matching).
NUMBER = re.compile(r"(?<![\w.])[-+]?\d+(?:\.\d+)?(?:[eE][-+]?\d+)?")
HEX = re.compile(r"\b0x[0-9a-fA-F]+")


def _ids(paths: list[Path]) -> list[str]:
    return [p.name for p in paths]


def _code_cells(path: Path) -> list[tuple[int, nbformat.NotebookNode]]:
    nb = nbformat.read(path, as_version=4)
    return [(i, c) for i, c in enumerate(nb.cells) if c.cell_type == "code"]


def _markers(source: str) -> set[str]:
    return {line.strip() for line in source.splitlines() if line.strip() in MARKERS}


def _is_checked(cell: nbformat.NotebookNode) -> bool:
    return not (_markers(cell.source) & UNCHECKED)


def _texts(output: nbformat.NotebookNode) -> list[str]:
    if output.output_type == "stream":
        return [output.text]
    if output.output_type == "error":
        return [f"{output.ename}: {output.evalue}"]
    data = output.get("data", {})
    return [v for k, v in data.items() if isinstance(v, str) and not k.startswith("image/")]


def test_there_are_workbooks() -> None:
    assert NOTEBOOKS, "no workbooks/*.ipynb found"


def test_project_markers_are_nbval_markers() -> None:
    # If nbval renamed a marker, the guard would otherwise bless a dead spelling.
    for marker in MARKERS:
        assert marker.lstrip("#").strip() in comment_markers


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_notebook_is_valid_and_opens_with_its_job(path: Path) -> None:
    nb = nbformat.read(path, as_version=4)
    nbformat.validate(nb)
    assert nb.cells and nb.cells[0].cell_type == "markdown", (
        f"{path.name}: the first cell must be markdown saying what job the workbook does"
    )


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_every_code_cell_was_executed_in_order(path: Path) -> None:
    counts = []
    for index, cell in _code_cells(path):
        assert cell.source.strip(), f"{path.name} cell {index}: empty code cell"
        assert cell.execution_count is not None, (
            f"{path.name} cell {index} was stored unexecuted: nbval would silently not check it; "
            "run scripts/refresh_notebooks.py"
        )
        counts.append(cell.execution_count)
    assert counts == list(range(1, len(counts) + 1)), (
        f"{path.name}: execution counts {counts} are not one clean top-to-bottom run"
    )


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_no_widget_state_or_timing_metadata(path: Path) -> None:
    nb = nbformat.read(path, as_version=4)
    assert "widgets" not in nb.metadata, f"{path.name}: widget state stored in metadata"
    assert "version" not in nb.metadata.get("language_info", {}), (
        f"{path.name}: interpreter version stored in metadata"
    )
    for index, cell in enumerate(nb.cells):
        bad = TIMING_KEYS & set(cell.metadata)
        assert not bad, f"{path.name} cell {index}: timing metadata {sorted(bad)}"
        assert "widgets" not in cell.metadata
        for out in cell.get("outputs", ()):
            assert WIDGET_VIEW not in out.get("data", {}), (
                f"{path.name} cell {index}: widget view stored without its state"
            )


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_no_stderr_or_unexpected_errors(path: Path) -> None:
    for index, cell in _code_cells(path):
        for out in cell.outputs:
            if out.output_type == "stream" and out.name == "stderr" and _is_checked(cell):
                pytest.fail(f"{path.name} cell {index} writes to stderr: {out.text[:300]!r}")
            if out.output_type == "error" and RAISES not in _markers(cell.source):
                pytest.fail(f"{path.name} cell {index} raised {out.ename}: {out.evalue}")


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_marker_comments_spelled_exactly_and_alone(path: Path) -> None:
    for index, cell in _code_cells(path):
        lines = cell.source.splitlines()
        leading = 0  # markers must open the cell, before any code
        while leading < len(lines) and lines[leading].strip() in MARKERS:
            leading += 1
        for number, line in enumerate(lines):
            stripped = line.strip()
            if "#" not in stripped or not MARKER_LIKE.search(stripped):
                continue
            where = f"{path.name} cell {index} line {number + 1}: {stripped!r}"
            assert stripped in MARKERS, f"{where} is not one of {MARKERS} standing alone"
            assert line == stripped, f"{where} must start at column 0"
            assert number < leading, f"{where} must be at the top of the cell, before any code"
        found = _markers(cell.source)
        assert not ({"# NBVAL_IGNORE_OUTPUT", "# NBVAL_CHECK_OUTPUT"} <= found), (
            f"{path.name} cell {index}: conflicting markers"
        )
        for tag in cell.metadata.get("tags", []):
            if MARKER_LIKE.search(tag) or tag == "raises-exception":
                assert tag in metadata_tags, f"{path.name} cell {index}: unknown nbval tag {tag!r}"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_no_trailing_semicolon_in_checked_cells(path: Path) -> None:
    # A trailing ';' does not suppress output under nbval: end plot cells with plt.show().
    for index, cell in _code_cells(path):
        lines = [
            ln for ln in cell.source.splitlines() if ln.strip() and not ln.strip().startswith("#")
        ]
        if _is_checked(cell) and lines:
            assert not lines[-1].rstrip().endswith(";"), (
                f"{path.name} cell {index}: ends with ';' — use plt.show() or '_ = ...'"
            )


# ------------------------------------------------------------------------ sanitize file
def _strict_pairs(text: str) -> list[tuple[str, str]]:
    """Parse the sanitize file strictly: 'regex: P' then, on the next line, 'replace: R'."""
    lines = text.splitlines()
    pairs = []
    i = 0
    while i < len(lines):
        line = lines[i]
        if not line.strip() or line.startswith("#") or re.fullmatch(r"\[[\w .-]+\]", line):
            i += 1
            continue
        assert line.startswith("regex: ") and not line.startswith("regex:  "), (
            f"sanitize.cfg line {i + 1}: expected 'regex: PATTERN' (one space), got {line!r}"
        )
        assert i + 1 < len(lines), f"sanitize.cfg line {i + 1}: regex without a replace line"
        nxt = lines[i + 1]
        assert nxt.startswith("replace: ") or nxt == "replace: ", (
            f"sanitize.cfg line {i + 2}: expected 'replace: TEXT' (one space), got {nxt!r}"
        )
        assert not nxt.startswith("replace:  "), (
            f"sanitize.cfg line {i + 2}: two spaces after 'replace:'"
        )
        pairs.append((line[len("regex: ") :], nxt[len("replace: ") :]))
        i += 2
    return pairs


def test_sanitize_file_parses_as_nbval_reads_it() -> None:
    text = SANITIZE.read_text(encoding="utf-8")
    pairs = _strict_pairs(text)
    assert pairs, "sanitize.cfg has no regex/replace pair"
    # nbval's own parser must see exactly the same pairs (malformed entries vanish silently).
    assert [tuple(p) for p in get_sanitize_patterns(text)] == pairs
    for pattern, _replace in pairs:
        compiled = re.compile(pattern)
        assert not compiled.fullmatch(""), f"sanitize pattern {pattern!r} matches the empty string"


# Result-like texts the sanitiser must leave alone (format of the engine's statements).
RESULT_SAMPLES = [
    "eta = (19.00 ± 0.24) mPa·s, k = 2.04, p ≈ 95.45 % (relative U = 1.3 %)",
    "u_c = 0.067 mPa·s, ν_eff = 60.5 (used: 60), k = 2.043",
    "estimate η = 18.998122 mPa·s, U = 0.000093 mm, 1.234e-05, -3.8, 4707981.5",
    "<Figure size 640x400 with 1 Axes>",
    "r   90.89 %\nh    7.01 %",
]


def _sanitize(text: str, pairs: list[tuple[str, str]]) -> str:
    for pattern, replace in pairs:  # the same loop as nbval's IPyNbCell.sanitize
        text = re.sub(pattern, replace, text)
    return text


def _numbers(text: str) -> list[str]:
    return NUMBER.findall(HEX.sub(" ", text))


def test_sanitize_never_touches_result_digits() -> None:
    pairs = _strict_pairs(SANITIZE.read_text(encoding="utf-8"))
    for sample in RESULT_SAMPLES:
        assert _sanitize(sample, pairs) == sample
    # Addresses are what it is for:
    assert _sanitize("<object at 0x7f3a12bc>", pairs) != "<object at 0x7f3a12bc>"


@pytest.mark.parametrize("path", NOTEBOOKS, ids=_ids(NOTEBOOKS))
def test_sanitize_keeps_every_number_of_stored_outputs(path: Path) -> None:
    pairs = _strict_pairs(SANITIZE.read_text(encoding="utf-8"))
    for index, cell in _code_cells(path):
        for out in cell.outputs:
            for text in _texts(out):
                assert _numbers(_sanitize(text, pairs)) == _numbers(text), (
                    f"{path.name} cell {index}: the sanitize file changes a number in {text[:200]!r}"
                )
