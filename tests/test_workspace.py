"""viscometry.workspace: the shipped folders, a workspace of one's own, the save guard.

No check values: every expectation is read from the shipped folders themselves. The wheel
side (an installed package finds the same files) is tests/test_install.py.
"""

from __future__ import annotations

import ast
from pathlib import Path
from types import SimpleNamespace

import pytest

import viscometry
import viscometry.workspace as workspace
from viscometry.cli import main
from viscometry.errors import InputError
from viscometry.workspace import (
    SHIPPED,
    SHIPPED_FILES,
    bundled,
    guard_shipped_workbooks,
    make_workspace,
    shipped_files,
)

ROOT = Path(__file__).resolve().parents[1]


def _all_files(folder: Path) -> dict[str, bytes]:
    return {
        p.relative_to(folder).as_posix(): p.read_bytes() for p in folder.rglob("*") if p.is_file()
    }


def _shipped() -> dict[str, bytes]:
    return {
        f"{name}/{rel.as_posix()}": (bundled(name) / rel).read_bytes()
        for name in SHIPPED
        for rel in shipped_files(name)
    }


@pytest.fixture
def fake_shipped(tmp_path, monkeypatch) -> Path:
    """A shipped tree with files that must not be copied, under a folder named 'checkpoints'."""
    root = tmp_path / "checkpoints" / "shipped"
    files = {
        "examples/a.toml": "a",
        "examples/sub/b.toml": "b",
        "examples/notes.txt": "not shipped",
        "examples/.ipynb_checkpoints/a-checkpoint.toml": "hidden",
        "workbooks/01_x.ipynb": "{}",
        "workbooks/sanitize.cfg": "cfg",
        "workbooks/report.html": "an export, not shipped",
        "workbooks/.ipynb_checkpoints/01_x-checkpoint.ipynb": "hidden",
        "docs/x.md": "doc",
        "docs/.hidden.md": "hidden",
    }
    for rel, text in files.items():
        (root / rel).parent.mkdir(parents=True, exist_ok=True)
        (root / rel).write_text(text, encoding="utf-8")
    monkeypatch.setattr(workspace, "bundled", lambda name: root / name)
    return root


# --- the shipped folders ----------------------------------------------------------------


@pytest.mark.parametrize("name", SHIPPED)
def test_bundled_finds_each_shipped_folder(name):
    folder = bundled(name)
    package = Path(viscometry.__file__).resolve().parent
    assert folder in (ROOT / name, package / "_files" / name)
    assert shipped_files(name), f"nothing shipped from {folder}"


def test_bundled_refuses_an_unknown_name_and_names_it():
    with pytest.raises(InputError, match=r"'notebooks'.*examples, workbooks, docs"):
        bundled("notebooks")


def test_the_build_ships_the_patterns_the_workspace_copies():
    # setup.py cannot import the package while it builds, so it keeps its own copy.
    tree = ast.parse((ROOT / "setup.py").read_text(encoding="utf-8"))
    (value,) = [
        node.value
        for node in tree.body
        if isinstance(node, ast.Assign) and [t.id for t in node.targets] == ["SHIPPED"]
    ]
    assert ast.literal_eval(value) == SHIPPED_FILES
    assert tuple(SHIPPED_FILES) == SHIPPED


def test_hidden_files_and_other_patterns_are_not_shipped(fake_shipped, tmp_path):
    ws = make_workspace(tmp_path / "ws")
    assert sorted(_all_files(ws.folder)) == [
        "docs/x.md",
        "examples/a.toml",
        "examples/sub/b.toml",
        "workbooks/01_x.ipynb",
        "workbooks/sanitize.cfg",
    ]
    assert len(ws.copied) == 5 and ws.kept == ()


# --- make_workspace ---------------------------------------------------------------------


def test_make_workspace_copies_every_shipped_file(tmp_path):
    dest = tmp_path / "new" / "ws"  # parents are created too
    ws = make_workspace(dest)
    shipped = _shipped()
    assert _all_files(dest) == shipped
    assert sorted(p.relative_to(dest).as_posix() for p in ws.copied) == sorted(shipped)
    assert ws.folder == dest and ws.kept == () and ws.differing == ()
    # Workbooks read ../examples: the workspace repeats the repository's layout.
    assert (
        dest / "workbooks" / ".." / "examples" / "reference" / "gum_h1_end_gauge.toml"
    ).is_file()


def test_make_workspace_keeps_existing_files_and_restores_missing_ones(tmp_path):
    dest = tmp_path / "ws"
    first = make_workspace(dest)
    mine = dest / "workbooks" / "01_absolute_pressure_capillary.ipynb"
    mine.write_text("my own work", encoding="utf-8")
    gone = dest / "docs" / "glossary.md"
    gone.unlink()
    extra = dest / "examples" / "my_budget.toml"
    extra.write_text("mine", encoding="utf-8")

    again = make_workspace(dest)
    assert mine.read_text(encoding="utf-8") == "my own work"
    assert gone.read_bytes() == (bundled("docs") / "glossary.md").read_bytes()
    assert extra.read_text(encoding="utf-8") == "mine"
    assert again.copied == (gone,)
    assert set(again.kept) == set(first.copied) - {gone}
    assert again.differing == (mine,)


def test_a_destination_that_is_a_file_is_refused_and_named(tmp_path):
    target = tmp_path / "notes.txt"
    target.write_text("keep me", encoding="utf-8")
    with pytest.raises(InputError, match="is a file, not a folder") as info:
        make_workspace(target)
    assert repr(str(target)) in str(info.value)
    assert target.read_text(encoding="utf-8") == "keep me"


def test_a_shipped_folder_name_taken_by_a_file_is_refused_and_named(tmp_path):
    dest = tmp_path / "ws"
    dest.mkdir()
    (dest / "workbooks").write_text("not a folder", encoding="utf-8")
    with pytest.raises(InputError) as info:
        make_workspace(dest)
    message = str(info.value)
    assert repr(str(dest)) in message and str(dest / "workbooks") in message
    assert (dest / "workbooks").read_text(encoding="utf-8") == "not a folder"


def test_the_start_page_of_a_workspace(tmp_path):
    ws = make_workspace(tmp_path / "ws")
    assert ws.start == tmp_path / "ws" / "workbooks" / "00_start_here.ipynb"
    # Copied whenever the package ships it (the start-here workbook is 00_start_here).
    assert ws.start.is_file() == (bundled("workbooks") / "00_start_here.ipynb").is_file()


# --- viscometry workspace DEST ----------------------------------------------------------


def test_cli_workspace_copies_then_keeps(tmp_path, capsys):
    dest = tmp_path / "ws"
    n = len(_shipped())
    assert main(["workspace", str(dest)]) == 0
    out = capsys.readouterr().out
    assert f"{n} file(s) copied, 0 kept as they were" in out
    start = dest / "workbooks" / "00_start_here.ipynb"
    assert f"start here: {start if start.is_file() else dest / 'workbooks'}" in out
    assert f"jupyter lab {dest}" in out

    mine = dest / "examples" / "primary_capillary_poiseuille.toml"
    mine.write_text("# my change\n", encoding="utf-8")
    assert main(["workspace", str(dest)]) == 0
    out = capsys.readouterr().out
    assert f"0 file(s) copied, {n} kept as they were" in out
    assert "1 kept file(s) differ from the shipped version" in out and f"  {mine}\n" in out


def test_cli_workspace_on_a_file_is_one_error_line(tmp_path, capsys):
    target = tmp_path / "notes.txt"
    target.write_text("keep me", encoding="utf-8")
    assert main(["workspace", str(target)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.count("\n") == 1 and str(target) in captured.err
    assert captured.err.startswith("viscometry: error: workspace ")


# --- the save guard of `make lab` -------------------------------------------------------


def _server() -> SimpleNamespace:
    """A server whose root holds the stored workbooks (the repository, for `make lab`)."""
    return SimpleNamespace(root_dir=str(bundled("workbooks").parent))


@pytest.mark.parametrize(
    "path",
    [
        "workbooks/01_absolute_pressure_capillary.ipynb",
        "/workbooks/new.ipynb",
        "workbooks/sub/x.txt",
        "lab/../workbooks/01_absolute_pressure_capillary.ipynb",
    ],
)
def test_the_guard_refuses_saves_into_the_stored_workbooks(path):
    web = pytest.importorskip("tornado.web")
    with pytest.raises(web.HTTPError) as info:
        guard_shipped_workbooks(model={}, path=path, contents_manager=_server())
    assert info.value.status_code == 403
    assert "stored workbooks folder" in info.value.log_message
    assert path.strip("/") in info.value.log_message and "lab/workbooks/" in info.value.log_message


@pytest.mark.parametrize(
    "path",
    ["lab/workbooks/01_absolute_pressure_capillary.ipynb", "README.md", "workbooks_old/x.ipynb"],
)
def test_the_guard_lets_other_saves_through(path):
    assert guard_shipped_workbooks(model={}, path=path, contents_manager=_server()) is None


def test_the_guard_in_a_jupyter_contents_manager(fake_shipped):
    # The hook as `make lab` passes it: an import string in the server's configuration.
    pytest.importorskip("jupyter_server")
    from jupyter_server.services.contents.filemanager import FileContentsManager
    from tornado.web import HTTPError

    root = fake_shipped.parent  # serves checkpoints/: shipped/workbooks is the guarded folder
    (root / "lab" / "workbooks").mkdir(parents=True)
    cm = FileContentsManager(
        root_dir=str(root), pre_save_hook="viscometry.workspace.guard_shipped_workbooks"
    )
    model = {"type": "file", "format": "text", "content": "new"}
    stored = root / "shipped" / "workbooks" / "01_x.ipynb"
    for path in ("shipped/workbooks/01_x.ipynb", "shipped/workbooks/02_new.ipynb"):
        with pytest.raises(HTTPError) as info:
            cm.save(dict(model), path)
        assert info.value.status_code == 403
    assert stored.read_text(encoding="utf-8") == "{}"
    assert not (root / "shipped" / "workbooks" / "02_new.ipynb").exists()
    cm.save(dict(model), "lab/workbooks/01_x.ipynb")
    assert (root / "lab" / "workbooks" / "01_x.ipynb").read_text(encoding="utf-8") == "new"
