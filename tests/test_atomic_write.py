"""No lost or half-written data: writers killed mid-write, and one write path for the package.

* A subprocess writes a budget file (``save_budget``) or a report (``viscometry report``)
  through :mod:`viscometry.io.atomic`, with the file object slowed down so that the process
  can be killed with SIGKILL in the middle of the write. The previous file is then found
  intact (same bytes, still loads, same fingerprint) and the only trace of the killed write
  is a temporary file named ``.<target name>.<random>.tmp`` in the same folder, which is
  hidden and is not a ``*.toml`` file, so no folder scan takes it for a budget. For a target
  name near the file system's limit (255 bytes) the name in it is shortened, so that the
  temporary name is legal for every legal target name.
* Every call in the package that writes a file is a call of the atomic helper: the source
  of ``viscometry/`` is searched (syntax tree, so docstrings do not count) for ``open`` in a
  write mode, ``write_text``/``write_bytes``, pandas ``to_csv``/``to_html``/``to_json``/
  ``to_latex``/``to_excel`` to a path, ``savefig``, ``json.dump``, ``pickle``, ``numpy.save``
  and ``os``/``shutil`` renames and copies; they may appear only in ``viscometry/io/atomic.py``
  (plus an explicit allow-list of writes to in-memory buffers).
"""

from __future__ import annotations

import ast
import os
import re
import signal
import subprocess
import sys
import textwrap
from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.io import load_budget

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "viscometry"
EXAMPLE = ROOT / "examples" / "primary_capillary_poiseuille.toml"
TEMP_NAME = re.compile(r"^\.(?P<target>.+)\.[A-Za-z0-9_]+\.tmp$")

pytestmark = pytest.mark.skipif(os.name != "posix", reason="SIGKILL is POSIX")

# Runs in the child: os.fdopen (used by the atomic helper for its temporary file) returns a
# file whose write() writes small chunks and, after a few, says so and sleeps — the parent
# kills the child there, in the middle of the write.
SLOW_WRITER = textwrap.dedent(
    """
    import os, sys, time
    _real_fdopen = os.fdopen

    class SlowFile:
        def __init__(self, fh):
            self.fh = fh
        def write(self, data):
            view = memoryview(data)
            for n, i in enumerate(range(0, len(view), 64)):
                self.fh.write(view[i:i + 64])
                self.fh.flush()
                if n == 3:
                    print("mid-write", flush=True)
                    time.sleep(120)
            return len(view)
        def __getattr__(self, name):
            return getattr(self.fh, name)
        def __enter__(self):
            return self
        def __exit__(self, *exc):
            return self.fh.__exit__(*exc)

    os.fdopen = lambda fd, mode="r", *a, **k: SlowFile(_real_fdopen(fd, mode, *a, **k))
    """
)


def _kill_mid_write(code: str, cwd: Path) -> None:
    """Run ``code`` after SLOW_WRITER in a child; SIGKILL it once it is mid-write."""
    env = dict(os.environ, PYTHONPATH=str(ROOT), MPLBACKEND="Agg")
    child = subprocess.Popen(
        [sys.executable, "-c", SLOW_WRITER + textwrap.dedent(code)],
        cwd=cwd,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.PIPE,
        text=True,
    )
    try:
        line = child.stdout.readline()
        assert line.strip() == "mid-write", (line, child.stderr.read() if child.poll() else "")
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=30)
    finally:
        if child.poll() is None:  # pragma: no cover - only if an assertion fired first
            child.kill()
            child.wait()
        child.stdout.close()
        child.stderr.close()
    assert child.returncode == -signal.SIGKILL


def _leftovers(folder: Path, target: str) -> list[Path]:
    """Temporary files of killed writes of ``target`` (recognisable by their name)."""
    out = []
    for p in folder.iterdir():
        m = TEMP_NAME.match(p.name)
        if m and m.group("target") == target:
            out.append(p)
    return out


def test_killed_budget_save_leaves_previous_file_intact(tmp_path, capsys):
    target = tmp_path / "budget.toml"
    target.write_bytes(EXAMPLE.read_bytes())
    before = target.read_bytes()
    fingerprint = load_budget(target).fingerprint

    _kill_mid_write(
        f"""
        from viscometry.io import load_budget, save_budget
        bf = load_budget({str(EXAMPLE)!r})
        save_budget(bf.budget.with_uncertainty("r", 0.0005), {str(target)!r})
        """,
        tmp_path,
    )

    assert target.read_bytes() == before
    assert load_budget(target).fingerprint == fingerprint
    stray = _leftovers(tmp_path, "budget.toml")
    assert len(stray) == 1  # the killed write's temporary file: partial, hidden, not *.toml
    assert 0 < stray[0].stat().st_size
    assert sorted(p.name for p in tmp_path.glob("*.toml")) == ["budget.toml"]
    # A folder audit sees only the real budget file.
    code = main(["audit", str(tmp_path)])
    out = capsys.readouterr().out
    assert code == 0, out
    assert ".tmp" not in out and "1 file(s)" in out


def test_killed_first_write_leaves_no_target(tmp_path):
    target = tmp_path / "new.toml"
    _kill_mid_write(
        f"""
        from viscometry.io import load_budget, save_budget
        save_budget(load_budget({str(EXAMPLE)!r}), {str(target)!r})
        """,
        tmp_path,
    )
    assert not target.exists()
    assert list(tmp_path.glob("*.toml")) == []
    assert len(_leftovers(tmp_path, "new.toml")) == 1


def test_killed_report_leaves_previous_report_intact(tmp_path):
    report = tmp_path / "report.html"
    report.write_text("<p>the previous report</p>\n", encoding="utf-8")
    before = report.read_bytes()
    _kill_mid_write(
        f"""
        from viscometry.cli import main
        main(["report", {str(EXAMPLE)!r}, "-o", {str(report)!r}])
        """,
        tmp_path,
    )
    assert report.read_bytes() == before
    assert [p.name for p in tmp_path.iterdir() if not p.name.startswith(".")] == ["report.html"]


def test_killed_write_of_a_255_byte_name_leaves_a_legal_temporary_file(tmp_path):
    if os.pathconf(tmp_path, "PC_NAME_MAX") != 255:
        pytest.skip("the file system's NAME_MAX is not 255")
    name = "r" * 252 + ".md"  # the longest legal name (POSIX NAME_MAX on Linux: 255 bytes)
    report = tmp_path / name
    report.write_text("previous\n", encoding="utf-8")
    _kill_mid_write(
        f"""
        from viscometry.cli import main
        main(["report", {str(EXAMPLE)!r}, "-o", {str(report)!r}])
        """,
        tmp_path,
    )
    assert report.read_text(encoding="utf-8") == "previous\n"
    (stray,) = [p for p in tmp_path.iterdir() if p.name != name]
    m = TEMP_NAME.match(stray.name)
    assert m and name.startswith(m.group("target")) and len(m.group("target")) > 200
    assert len(os.fsencode(stray.name)) <= 255


def test_large_write_completes_and_replaces(tmp_path):
    """Without a kill, a large write replaces the file completely (no temp file left)."""
    from viscometry.io.atomic import atomic_write_text

    target = tmp_path / "big.txt"
    target.write_text("old\n")
    text = "0123456789abcdef\n" * 500_000  # 8.5 MB
    atomic_write_text(target, text)
    assert target.read_text() == text
    assert [p.name for p in tmp_path.iterdir()] == ["big.txt"]


# ----------------------------------------------------------------------------- one write path
PANDAS_WRITERS = {"to_csv", "to_html", "to_json", "to_latex", "to_excel", "to_parquet"}
ALWAYS_WRITERS = {"write_text", "write_bytes", "savefig", "savez", "savez_compressed", "tofile"}
MODULE_WRITERS = {
    ("json", "dump"),
    ("pickle", "dump"),
    ("pickle", "dumps"),
    ("np", "save"),
    ("numpy", "save"),
    ("os", "replace"),
    ("os", "rename"),
    ("os", "renames"),
    ("os", "link"),
    ("os", "symlink"),
    ("shutil", "copy"),
    ("shutil", "copy2"),
    ("shutil", "copyfile"),
    ("shutil", "move"),
}
# Writes that do not touch the file system, with the reason.
ALLOWED = {
    ("viscometry/plots.py", "savefig"): "renders a PNG into an in-memory io.BytesIO buffer",
    ("viscometry/cli.py", "os.open"): "opens os.devnull to silence a closed stdout pipe",
}


def _write_mode(call: ast.Call) -> bool:
    mode = call.args[1] if len(call.args) > 1 else None
    for kw in call.keywords:
        if kw.arg == "mode":
            mode = kw.value
    if mode is None:
        return False
    if isinstance(mode, ast.Constant) and isinstance(mode.value, str):
        return any(c in mode.value for c in "wax+")
    return True  # a computed mode: treat as a write


def _writes(path: Path) -> list[tuple[str, int]]:
    tree = ast.parse(path.read_text(encoding="utf-8"))
    found = []
    for node in ast.walk(tree):
        if not isinstance(node, ast.Call):
            continue
        f = node.func
        if isinstance(f, ast.Name) and f.id == "open" and _write_mode(node):
            found.append(("open", node.lineno))
        elif isinstance(f, ast.Attribute):
            owner = f.value.id if isinstance(f.value, ast.Name) else None
            if f.attr in ALWAYS_WRITERS:
                found.append((f.attr, node.lineno))
            elif f.attr in PANDAS_WRITERS and (
                node.args or any(k.arg == "path_or_buf" for k in node.keywords)
            ):
                found.append((f.attr, node.lineno))
            elif (owner, f.attr) in MODULE_WRITERS:
                found.append((f"{owner}.{f.attr}", node.lineno))
            elif owner == "os" and f.attr in ("open", "fdopen"):
                found.append((f"os.{f.attr}", node.lineno))
            elif f.attr == "open" and _write_mode(node):  # Path(...).open("w")
                found.append(("Path.open", node.lineno))
    return found


def test_every_write_goes_through_the_atomic_helper():
    offenders = []
    for path in sorted(PACKAGE.rglob("*.py")):
        rel = path.relative_to(ROOT).as_posix()
        if rel == "viscometry/io/atomic.py":
            continue
        for what, line in _writes(path):
            if (rel, what) not in ALLOWED:
                offenders.append(f"{rel}:{line}: {what}")
    assert not offenders, "writes that bypass viscometry.io.atomic:\n" + "\n".join(offenders)


def test_the_helper_itself_is_what_the_writers_call():
    """The writers of budget files and reports import the atomic helper (not a copy)."""
    for rel in ("viscometry/io/writer.py", "viscometry/report.py"):
        text = (ROOT / rel).read_text(encoding="utf-8")
        assert "from viscometry.io.atomic import atomic_write_" in text, rel
    # The temporary file is named .<target>.<random>.tmp in the target's folder (the target
    # name shortened only where the whole would exceed NAME_MAX).
    from viscometry.io.atomic import _temporary_prefix

    assert _temporary_prefix("budget.toml", PACKAGE) == ".budget.toml."
    atomic = (PACKAGE / "io" / "atomic.py").read_text(encoding="utf-8")
    assert "tempfile.mkstemp(" in atomic and "dir=directory" in atomic


def test_detector_finds_a_bypassing_write(tmp_path):
    """The source search is not vacuous: it flags the kinds of writes it looks for."""
    sample = tmp_path / "sample.py"
    sample.write_text(
        "import json, os\n"
        "open('x', 'w')\n"
        "p.write_text('a')\n"
        "df.to_csv('out.csv')\n"
        "json.dump({}, fh)\n"
        "os.replace('a', 'b')\n"
        "fig.savefig('a.png')\n"
        "text = df.to_csv(index=False)\n"
        "open('x')\n",
        encoding="utf-8",
    )
    kinds = [w for w, _line in _writes(sample)]
    assert kinds == ["open", "write_text", "to_csv", "json.dump", "os.replace", "savefig"]
