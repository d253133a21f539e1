"""No silent data loss: output paths that are inputs, write-protected, links or not files.

Every writer of the package goes through :mod:`viscometry.io.atomic`, whose
:func:`~viscometry.io.atomic.check_output_path` refuses, before anything is written:

* an input of the run under any name: the same path spelled differently, a symbolic link to
  it, a hard link to it (same device and inode);
* a write-protected file, and a file in a write-protected folder (the mode bits are checked
  as well as ``os.access``, so the refusal holds when the tests run as root);
* a folder, a named pipe, a device (checked with ``stat``; a pipe is never opened);
* a dangling symbolic link or a loop of links.

A symbolic link to a regular file is followed: the file it leads to is replaced atomically
and the link stays a link. Temporary names fit the file system's limit on names for every
legal output name (250 and 255 characters, 255 bytes of UTF-8).

Check values: the refusal wording is this package's own (no external source); the name
limit of 255 bytes is POSIX ``NAME_MAX`` on common Linux file systems (the tests read it
with ``os.pathconf`` and skip where it differs).
"""

from __future__ import annotations

import os
import stat
from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.errors import BudgetFileError, InputError, OutputError, ViscometryError
from viscometry.io import atomic as atomic_mod
from viscometry.io import load_budget, save_budget
from viscometry.io.atomic import atomic_write_text, check_output_path
from viscometry.report import write_audit_report, write_report

ROOT = Path(__file__).resolve().parents[1]
END_GAUGE = ROOT / "examples" / "reference" / "gum_h1_end_gauge.toml"
OIL = ROOT / "examples" / "lubricant_lab_kinematic_viscosity.toml"

pytestmark = pytest.mark.skipif(os.name != "posix", reason="links, modes and FIFOs are POSIX")


def _name_max(folder: Path) -> int:
    return os.pathconf(folder, "PC_NAME_MAX")


@pytest.fixture
def budget(tmp_path: Path) -> Path:
    path = tmp_path / "budget.toml"
    path.write_bytes(END_GAUGE.read_bytes())
    return path


@pytest.fixture
def readonly(tmp_path: Path):
    """Make paths read-only for one test; restore write permission afterwards."""
    made: list[Path] = []

    def make(path: Path, mode: int) -> Path:
        path.chmod(mode)
        made.append(path)
        return path

    yield make
    for path in made:
        path.chmod(0o755 if path.is_dir() else 0o644)


# ----------------------------------------------------------------------------- the input
@pytest.mark.parametrize(
    ("source", "output"),
    [
        ("budget.toml", "hard.json"),  # a hard link to the budget file
        ("./sub/../budget.toml", "hard.json"),  # the input named through another path
        ("budget.toml", "./sub/../hard.json"),  # the output named through another path
        ("budget.toml", "sub/link.json"),  # a symbolic link (in another folder) to it
        ("budget.toml", "sub/link_to_hard.md"),  # a symbolic link to the hard link
    ],
)
def test_report_refuses_its_budget_file_under_any_name(
    tmp_path, budget, monkeypatch, capsys, source, output
):
    before = budget.read_bytes()
    (tmp_path / "sub").mkdir()
    os.link(budget, tmp_path / "hard.json")
    (tmp_path / "sub" / "link.json").symlink_to(budget)
    (tmp_path / "sub" / "link_to_hard.md").symlink_to(tmp_path / "hard.json")
    monkeypatch.chdir(tmp_path)
    assert main(["report", source, "-o", output]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    # this package's own wording (no external source)
    assert "is the budget file itself" in captured.err and "choose another name" in captured.err
    assert budget.read_bytes() == before  # byte for byte
    assert os.path.samefile(budget, tmp_path / "hard.json")  # the hard link is still one
    assert (tmp_path / "sub" / "link.json").is_symlink()
    assert not [p for p in tmp_path.rglob(".*.tmp")]


def test_hard_link_message_says_what_it_is(tmp_path, budget):
    os.link(budget, tmp_path / "hard.json")
    with pytest.raises(OutputError, match=r"'.*hard\.json' is the input file itself \(a hard link"):
        check_output_path(tmp_path / "hard.json", protect=[budget])
    with pytest.raises(OutputError, match=r"is the input file itself \(the same path\)"):
        check_output_path(budget, protect=budget)  # a single path works as well


def test_write_report_protects_what_it_is_told(tmp_path, budget):
    os.link(budget, tmp_path / "hard.md")
    result = load_budget(budget).budget.evaluate()
    with pytest.raises(OutputError, match="report path .*hard.md' is the budget file itself"):
        write_report(result, tmp_path / "hard.md", protect={budget: "the budget file"})
    assert budget.read_bytes() == END_GAUGE.read_bytes()
    # a missing protected file is no reason to refuse
    assert write_report(result, tmp_path / "r.md", protect=[tmp_path / "gone.toml"]).is_file()


def test_a_hard_linked_output_that_is_no_input_is_replaced_under_its_name_only(tmp_path):
    # documented behaviour of an atomic replacement: the other name keeps the old content
    first, second = tmp_path / "a.md", tmp_path / "b.md"
    first.write_text("old\n")
    os.link(first, second)
    atomic_write_text(second, "new\n")
    assert (first.read_text(), second.read_text()) == ("old\n", "new\n")


def test_audit_record_never_replaces_an_audited_file(tmp_path, budget):
    from viscometry.audit import audit_paths

    record = tmp_path / "record"
    record.mkdir()
    os.link(budget, record / "audit.csv")
    verdicts = audit_paths([budget])
    with pytest.raises(OutputError, match="audit.csv' is an audited file itself"):
        write_audit_report(verdicts, record)
    assert budget.read_bytes() == END_GAUGE.read_bytes()
    assert sorted(p.name for p in record.iterdir()) == ["audit.csv"]  # audit.html not written


# ----------------------------------------------------------------------------- write-protected
def test_report_refuses_a_write_protected_file(tmp_path, budget, readonly, capsys):
    out = tmp_path / "ro.md"
    out.write_text("keep\n")
    readonly(out, 0o444)
    assert main(["report", str(budget), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    # this package's own wording (no external source)
    assert "ro.md' is write-protected (mode 0444); refusing to replace it" in err
    assert out.read_text() == "keep\n" and stat.S_IMODE(out.stat().st_mode) == 0o444


@pytest.mark.parametrize("mode", [0o444, 0o044, 0o400])
def test_every_writer_refuses_a_write_protected_file(tmp_path, readonly, mode):
    bf = load_budget(END_GAUGE)
    target, report = tmp_path / "keep.toml", tmp_path / "keep.md"
    for path in (target, report):
        path.write_text("mine\n")
        readonly(path, mode)
    with pytest.raises(OutputError, match="write-protected"):
        atomic_write_text(target, "x\n")
    with pytest.raises(OutputError, match="budget file .*keep.toml' is write-protected"):
        save_budget(bf, target, overwrite=True)
    with pytest.raises(
        OutputError, match=f"report path .*keep.md' is write-protected .mode {mode:04o}"
    ):
        write_report(bf.budget.evaluate(), report)
    assert target.read_text() == report.read_text() == "mine\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["keep.md", "keep.toml"]


def test_a_write_protected_folder_is_refused(tmp_path, readonly, capsys):
    folder = tmp_path / "ro"
    folder.mkdir()
    readonly(folder, 0o555)
    assert main(["report", str(END_GAUGE), "-o", str(folder / "r.md")]) == 2
    # this package's own wording (no external source)
    assert "the folder" in (err := capsys.readouterr().err) and "is write-protected" in err
    with pytest.raises(OutputError, match="folder .*ro' is write-protected"):
        save_budget(load_budget(END_GAUGE), folder / "b.toml")
    assert list(folder.iterdir()) == []


def test_a_workspace_in_a_write_protected_folder_is_refused(tmp_path, readonly):
    from viscometry.workspace import make_workspace

    folder = tmp_path / "lab"
    folder.mkdir()
    for name in ("examples", "workbooks", "docs"):
        (folder / name).mkdir()
        readonly(folder / name, 0o555)
    with pytest.raises(ViscometryError, match="write-protected"):
        make_workspace(folder)
    assert not [p for p in folder.rglob("*") if p.is_file()]


# ----------------------------------------------------------------------------- links
def test_a_symbolic_link_is_followed_and_kept(tmp_path, budget, capsys):
    elsewhere = tmp_path / "reports"
    elsewhere.mkdir()
    target = elsewhere / "target.md"
    target.write_text("old\n")
    target.chmod(0o640)
    link = tmp_path / "link.md"
    link.symlink_to(target)
    assert main(["report", str(budget), "-o", str(link)]) == 0
    assert "wrote" in capsys.readouterr().out
    assert link.is_symlink() and os.readlink(link) == str(target)
    assert target.read_text(encoding="utf-8").startswith("# ")  # the new Markdown report
    assert stat.S_IMODE(target.stat().st_mode) == 0o640  # its permission bits are kept
    assert not list(tmp_path.rglob(".*.tmp"))


def test_save_budget_through_a_relative_link(tmp_path, budget, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "current.toml").symlink_to("budget.toml")
    bf = load_budget(OIL)
    save_budget(bf, "current.toml")
    assert (tmp_path / "current.toml").is_symlink()
    assert load_budget(budget).fingerprint == bf.fingerprint


@pytest.mark.parametrize("link_to", ["missing.md", "loop.md"])
def test_a_dangling_link_or_a_loop_is_refused(tmp_path, budget, capsys, link_to):
    link = tmp_path / "loop.md" if link_to == "loop.md" else tmp_path / "dangling.md"
    link.symlink_to(link_to)
    assert main(["report", str(budget), "-o", str(link)]) == 2
    err = capsys.readouterr().err
    # this package's own wording (no external source)
    assert "is a symbolic link to" in err and "refusing to follow it" in err
    with pytest.raises(OutputError, match="symbolic link"):
        save_budget(load_budget(budget), link)
    assert link.is_symlink() and os.readlink(link) == link_to
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["budget.toml", link.name])


# ----------------------------------------------------------------------------- not files
def test_a_folder_a_device_and_a_link_to_a_device_are_refused(tmp_path, budget, capsys):
    (tmp_path / "folder.md").mkdir()
    (tmp_path / "null.md").symlink_to(os.devnull)
    for out, kind in (("folder.md", "a folder"), ("null.md", "a device")):
        assert main(["report", str(budget), "-o", str(tmp_path / out)]) == 2
        assert f"is {kind}, not a file" in capsys.readouterr().err  # own wording
    with pytest.raises(OutputError, match="is a device"):
        atomic_write_text(os.devnull, "x")
    assert (tmp_path / "null.md").is_symlink() and (tmp_path / "folder.md").is_dir()


def test_a_fifo_is_refused_without_opening_it(tmp_path, budget, capsys):
    fifo = tmp_path / "pipe.md"
    os.mkfifo(fifo)
    # Hold the reading end open (non-blocking): a writer that opened the pipe by mistake
    # would then not block, and its bytes would show up here.
    reader = os.open(fifo, os.O_RDONLY | os.O_NONBLOCK)
    try:
        assert main(["report", str(budget), "-o", str(fifo)]) == 2
        assert "is a named pipe (FIFO), not a file" in capsys.readouterr().err  # own wording
        with pytest.raises(OutputError, match="named pipe"):
            save_budget(load_budget(budget), fifo)
        assert os.read(reader, 4096) == b""  # no writer, nothing written into the pipe
    finally:
        os.close(reader)
    assert stat.S_ISFIFO(os.lstat(fifo).st_mode)


# ----------------------------------------------------------------------------- long names
@pytest.mark.parametrize(
    "name", ["x" * 247 + ".md", "x" * 252 + ".md", "é" * 125 + "y.md"], ids=["250", "255", "utf8"]
)
def test_long_legal_names_are_written(tmp_path, budget, monkeypatch, capsys, name):
    if _name_max(tmp_path) != 255:
        pytest.skip("the file system's NAME_MAX is not 255")
    assert len(os.fsencode(name)) <= 255
    temporary: list[str] = []
    real_replace = os.replace

    def spy(src, dst):
        temporary.append(Path(src).name)
        return real_replace(src, dst)

    monkeypatch.setattr(atomic_mod.os, "replace", spy)
    assert main(["report", str(budget), "-o", str(tmp_path / name)]) == 0, capsys.readouterr()
    assert (tmp_path / name).read_text(encoding="utf-8").startswith("# ")
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(["budget.toml", name])
    (tmp_name,) = temporary
    assert len(os.fsencode(tmp_name)) <= 255 and tmp_name.endswith(".tmp")
    assert tmp_name.startswith(".xxxx" if name[0] == "x" else ".éé")  # recognisable


def test_a_name_longer_than_the_limit_is_a_clear_error(tmp_path, budget, capsys):
    if _name_max(tmp_path) != 255:
        pytest.skip("the file system's NAME_MAX is not 255")
    name = "x" * 253 + ".md"
    assert main(["report", str(budget), "-o", str(tmp_path / name)]) == 2
    err = capsys.readouterr().err
    assert "cannot write the file" in err and "File name too long" in err  # strerror(3)
    with pytest.raises(BudgetFileError, match="File name too long"):
        save_budget(load_budget(budget), tmp_path / ("y" * 251 + ".toml"))
    with pytest.raises(InputError, match="File name too long"):
        write_report(load_budget(budget).budget.evaluate(), tmp_path / name)


def test_temporary_names_keep_the_target_name_when_it_fits(tmp_path):
    prefix = atomic_mod._temporary_prefix
    assert prefix("budget.toml", tmp_path) == ".budget.toml."
    for name in ("x" * 255, "é" * 127, "a" * 240 + "€" * 5):
        assert len(os.fsencode(prefix(name, tmp_path))) + 8 + len(".tmp") <= 255
        assert prefix(name, tmp_path)[1:-1] == name[: len(prefix(name, tmp_path)) - 2]


# ----------------------------------------------------------------------------- the builder
@pytest.fixture
def oil(tmp_path: Path):
    from viscometry.widgets.builder import budget_builder

    return budget_builder(OIL, folder=ROOT / "examples", save_path=tmp_path / "oil.toml",
                          export_folder=tmp_path / "reports", show_chart=False)  # fmt: skip


def test_builder_refused_save_keeps_what_the_user_typed(oil, tmp_path, readonly):
    target = tmp_path / "oil.toml"
    target.write_text("the lab's own file\n")
    readonly(target, 0o444)
    oil.title.value = "Oil check, second week"
    oil.input_row("t").readings.value = "451.62\n451.88\n451.47"
    typed = oil.document()
    fingerprint = oil.current_budget().fingerprint
    oil.overwrite.value = True
    oil.save_button.click()
    assert "is write-protected" in oil.message("save")  # own wording
    assert "write-protected" in oil.save_html.value
    assert target.read_text() == "the lab's own file\n"
    assert oil.document() == typed and oil.current_budget().fingerprint == fingerprint
    assert oil.title.value == "Oil check, second week"
    target.chmod(0o644)  # the user makes it writable: the same budget is saved
    assert oil.save() == target
    assert load_budget(target).fingerprint == fingerprint


def test_builder_saves_over_its_loaded_file_only_when_asked(tmp_path):
    # Saving an edited budget over the file it came from is how it is kept: allowed with the
    # overwrite tick (the loaded file is not an "input" of a save).
    from viscometry.widgets.builder import budget_builder

    own = tmp_path / "oil.toml"
    own.write_bytes(OIL.read_bytes())
    b = budget_builder(own, folder=tmp_path, save_path=own, show_chart=False)
    b.title.value = "Edited"
    assert b.save() is None and "exists already" in b.message("save")
    assert own.read_bytes() == OIL.read_bytes()
    b.overwrite.value = True
    assert b.save() == own and load_budget(own).budget.title == "Edited"
