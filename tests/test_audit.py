"""Audits of budget files and the audit table over many of them (viscometry.audit).

No numeric check values here: the example files are invented demo data. The tests check that
the table reports what :func:`viscometry.audit.audit_file` decides, file by file, and that a
modified copy (in a temporary folder, never in examples/) is caught.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path

import pytest

from viscometry.audit import (
    AUDIT_COLUMNS,
    SKIP_KINDS,
    VERDICTS,
    audit_file,
    audit_paths,
    audit_table,
    classify_toml,
    collect_files,
    exit_code,
    fingerprint_status,
    run_audit,
)

ROOT = Path(__file__).resolve().parent.parent
EXAMPLES = ROOT / "examples"
PRIMARY = EXAMPLES / "primary_capillary_poiseuille.toml"


@pytest.fixture(scope="module")
def verdicts() -> tuple:
    return audit_paths([EXAMPLES])


def test_every_budget_file_is_audited_and_others_skipped(verdicts: tuple) -> None:
    audited = {Path(v.path).resolve() for v in verdicts}
    assert PRIMARY.resolve() in audited
    # The list of upgrade candidates and the step-up chain's data are TOML but not budget
    # files: skipped.
    assert (EXAMPLES / "upgrades" / "pressure_capillary_upgrades.toml").resolve() not in audited
    assert (EXAMPLES / "chains" / "ashcombe_step_up_chain.toml").resolve() not in audited
    budget_files = [
        p for p in EXAMPLES.rglob("*.toml") if not {"upgrades", "chains", "polymer"} & set(p.parts)
    ]
    assert len(verdicts) == len(budget_files)


def test_table_agrees_with_audit_file(verdicts: tuple) -> None:
    table = audit_table(verdicts, relative_to=EXAMPLES)
    assert tuple(table.columns) == AUDIT_COLUMNS
    assert len(table) == len(verdicts)
    for row, v in zip(table.itertuples(index=False), verdicts, strict=True):
        # audit_file again only for the primary file (each audit evaluates a model: slow)
        again = audit_file(v.path) if Path(v.path).resolve() == PRIMARY.resolve() else v
        assert row.verdict == again.status
        assert (
            not row.file.startswith("/")
            and Path(EXAMPLES, row.file).resolve() == Path(v.path).resolve()
        )
        if again.status == "match":
            assert row.fingerprint in ("matches", "not recorded")
            assert row.recorded != "—"
            # the recomputed column is the statement up to ", k = "
            assert again.recomputed["statement"].startswith(row.recomputed + ", k = ")
        if again.status == "unrecorded":
            assert row.recorded == "—" and row.fingerprint == "not recorded"
    assert set(table["verdict"]) <= {"match", "unrecorded"}  # the shipped examples are clean


def test_a_changed_input_is_detected(tmp_path: Path) -> None:
    copy = tmp_path / PRIMARY.name
    text = PRIMARY.read_text(encoding="utf-8")
    assert "value = 0.20000" in text
    copy.write_text(text.replace("value = 0.20000", "value = 0.20010", 1), encoding="utf-8")
    (v,) = audit_paths([tmp_path])
    assert v.status == "differs"
    assert fingerprint_status(v) == "changed"
    row = audit_table([v], relative_to=tmp_path).iloc[0]
    assert row["file"] == PRIMARY.name
    assert "fingerprint recorded" in row["detail"] and "value recorded" in row["detail"]


def test_free_text_change_keeps_the_fingerprint(tmp_path: Path) -> None:
    copy = tmp_path / PRIMARY.name
    text = PRIMARY.read_text(encoding="utf-8")
    copy.write_text(text.replace('"capillary length"', '"length (reworded)"', 1), encoding="utf-8")
    (v,) = audit_paths([copy])
    assert v.status == "match" and fingerprint_status(v) == "matches"


def test_broken_file_and_empty_folder_are_errors(tmp_path: Path) -> None:
    bad = tmp_path / "broken.toml"
    bad.write_text("format = \n", encoding="utf-8")
    (v,) = audit_paths([bad])
    assert v.status == "error" and fingerprint_status(v) == "—"
    row = audit_table([v]).iloc[0]
    assert row["recorded"] == "—" and row["recomputed"] == "—" and row["detail"]
    empty = tmp_path / "empty"
    empty.mkdir()
    shutil.copy(EXAMPLES / "upgrades" / "pressure_capillary_upgrades.toml", empty)
    (v,) = audit_paths([empty])
    assert v.status == "error" and "no budget files" in v.messages[0]


@pytest.mark.parametrize("content", ["", "# every line commented out\n"], ids=["empty", "comments"])
def test_emptied_budget_file_in_a_folder_is_an_error_not_skipped(
    tmp_path: Path, content: str
) -> None:
    # an emptied budget file has lost its budget: scanning the folder must report it
    shutil.copy(PRIMARY, tmp_path / PRIMARY.name)
    emptied = tmp_path / "emptied.toml"
    emptied.write_text(content, encoding="utf-8")
    shutil.copy(EXAMPLES / "upgrades" / "pressure_capillary_upgrades.toml", tmp_path)
    files, empty_folders = collect_files([tmp_path])
    # the candidates list is still skipped; the emptied file is not
    assert [f.name for f in files] == ["emptied.toml", PRIMARY.name] and empty_folders == []
    verdicts = audit_paths([tmp_path])
    by_name = {Path(v.path).name: v for v in verdicts}
    assert set(by_name) == {"emptied.toml", PRIMARY.name}
    v = by_name["emptied.toml"]
    assert v.status == "error" and "missing key format" in v.messages[0]
    assert by_name[PRIMARY.name].status == "match"
    assert exit_code(verdicts) == VERDICTS["error"] == 2
    row = audit_table([v], relative_to=tmp_path).iloc[0]
    assert (row["file"], row["verdict"], row["fingerprint"]) == ("emptied.toml", "error", "—")


def test_collect_files_reports_folders_without_budget_files(tmp_path: Path) -> None:
    (tmp_path / "notes.toml").write_text('title = "not a budget"\n', encoding="utf-8")
    files, empty_folders = collect_files([tmp_path, PRIMARY])
    assert files == [PRIMARY]  # a file named explicitly is always audited
    (v,) = empty_folders
    assert v.path == str(tmp_path) and v.status == "error"
    assert "no budget files" in v.messages[0]
    assert exit_code(empty_folders) == 2 and exit_code([]) == 2


# ------------------------------------------------------------ folder searches leave nothing out
# Expected reasons and messages are this package's own wording (no external source).
CANDIDATES = EXAMPLES / "upgrades" / "pressure_capillary_upgrades.toml"
CHAIN = EXAMPLES / "chains" / "ashcombe_step_up_chain.toml"


def _damage(kind: str) -> bytes:
    """A copy of the primary budget, damaged the way ``kind`` says."""
    text = PRIMARY.read_text(encoding="utf-8")
    lines = text.splitlines(keepends=True)
    if kind == "empty":
        return b""
    if kind == "comments":
        return "".join("# " + line for line in lines).encode("utf-8")
    if kind == "format_removed":
        return "".join(line for line in lines if not line.startswith("format")).encode("utf-8")
    if kind == "truncated":  # cut inside the model formula's string
        return text[: text.index("model = ") + 14].encode("utf-8")
    if kind == "bom":
        return b"\xef\xbb\xbf" + text.encode("utf-8")
    if kind == "latin1":
        return text.encode("latin-1", errors="replace")  # "°" becomes the byte 0xb0
    raise AssertionError(kind)


DAMAGE = ["empty", "comments", "format_removed", "truncated", "bom", "latin1"]


def _folder_with(tmp_path: Path, **extra: bytes) -> Path:
    folder = tmp_path / "budgets"
    folder.mkdir()
    shutil.copy(PRIMARY, folder / PRIMARY.name)
    for name, data in extra.items():
        (folder / name).write_bytes(data)
    return folder


@pytest.mark.parametrize("kind", DAMAGE)
def test_a_damaged_budget_file_in_a_folder_makes_the_audit_fail(tmp_path, kind, capsys) -> None:
    from viscometry.cli import main

    folder = _folder_with(tmp_path, **{"damaged.toml": _damage(kind)})
    run = run_audit([folder])
    statuses = {Path(v.path).name: v.status for v in run.verdicts}
    assert statuses == {"damaged.toml": "error", PRIMARY.name: "match"}
    assert run.skipped == () and run.exit_code() == 2
    (bad,) = (v for v in run.verdicts if v.status == "error")
    assert "counted as a damaged budget file" in bad.messages[-1]
    assert main(["audit", str(folder)]) == 2
    out = capsys.readouterr().out.splitlines()
    assert any(line.startswith("ERROR") and "damaged.toml" in line for line in out)
    assert out[-1] == "2 file(s): 1 match, 1 error"


@pytest.mark.parametrize("kind", DAMAGE)
def test_skip_damaged_lists_the_file_as_skipped(tmp_path, kind, capsys) -> None:
    from viscometry.cli import main

    folder = _folder_with(tmp_path, **{"damaged.toml": _damage(kind)})
    run = run_audit([folder], skip_damaged=True)
    assert [(Path(v.path).name, v.status) for v in run.verdicts] == [(PRIMARY.name, "match")]
    (skip,) = run.skipped
    assert (Path(skip.path).name, skip.kind) == ("damaged.toml", "damaged")
    assert skip.reason.startswith("damaged, skipped as asked: ")
    assert run.exit_code() == 0 and run.counts()["skipped"] == 1
    assert main(["audit", "--skip-damaged", str(folder)]) == 0
    out = capsys.readouterr().out.splitlines()
    assert out[0].startswith("MATCH")
    assert out[1].startswith("SKIP") and "damaged.toml: damaged, skipped as asked" in out[1]
    assert out[-1] == "1 file(s): 1 match; 1 skipped (listed above, not audited)"


def test_reasons_name_the_damage(tmp_path) -> None:
    reasons = {}
    for kind in DAMAGE:
        path = tmp_path / f"{kind}.toml"
        path.write_bytes(_damage(kind))
        reasons[kind] = classify_toml(path)
    assert all(k == "damaged" for k, _ in reasons.values())
    assert (
        reasons["empty"][1]
        == reasons["comments"][1]
        == "empty (nothing but comments or blank lines)"
    )
    assert (
        "[inputs], [measurand], [recorded] (lost its format line?)" in reasons["format_removed"][1]
    )
    assert "Unterminated string" in reasons["truncated"][1]
    assert "byte-order mark" in reasons["bom"][1]
    assert "not UTF-8" in reasons["latin1"][1]


def test_a_file_that_says_it_is_a_budget_is_always_audited(tmp_path) -> None:
    # a budget cut off after its [measurand] table still has its format line, and a later
    # format version is a budget this version cannot read: errors even with skip_damaged
    text = PRIMARY.read_text(encoding="utf-8")
    folder = _folder_with(
        tmp_path,
        **{
            "cut.toml": text[: text.index("[inputs")].encode("utf-8"),
            "later.toml": text.replace("viscometry-budget/1", "viscometry-budget/2").encode(),
        },
    )
    run = run_audit([folder], skip_damaged=True)
    statuses = {Path(v.path).name: v.status for v in run.verdicts}
    assert statuses == {"cut.toml": "error", "later.toml": "error", PRIMARY.name: "match"}
    assert run.skipped == () and run.exit_code() == 2


def test_a_file_named_explicitly_is_never_skipped(tmp_path) -> None:
    empty = tmp_path / "empty.toml"
    empty.write_bytes(b"")
    hidden = tmp_path / ".hidden.toml"
    shutil.copy(PRIMARY, hidden)
    run = run_audit([empty, hidden, CHAIN], skip_damaged=True)
    assert [v.status for v in run.verdicts] == ["error", "match", "error"]
    assert run.skipped == ()


def test_other_kinds_of_toml_are_skipped_with_their_reason(tmp_path, capsys) -> None:
    from viscometry.cli import main

    folder = _folder_with(
        tmp_path,
        **{
            "candidates.toml": CANDIDATES.read_bytes(),
            "chain.toml": CHAIN.read_bytes(),
            "pyproject.toml": (ROOT / "pyproject.toml").read_bytes(),
            "settings.toml": b'title = "not a budget"\n[colours]\nmatch = "green"\n',
            "other_tool.toml": b'format = "another-tool/3"\n',
        },
    )
    run = run_audit([folder])
    assert [(Path(v.path).name, v.status) for v in run.verdicts] == [(PRIMARY.name, "match")]
    reasons = {Path(s.path).name: (s.kind, s.reason) for s in run.skipped}
    assert reasons == {
        "candidates.toml": ("other", "not a budget file (a list of upgrade candidates)"),
        "chain.toml": (
            "other",
            "not a budget file (a step-up chain file, format = 'viscometry-chain/1')",
        ),
        "other_tool.toml": ("other", "not a budget file (format = 'another-tool/3')"),
        "pyproject.toml": ("other", "not a budget file (a Python project file)"),
        "settings.toml": (
            "other",
            "not a budget file (no format key and no budget table; keys 'colours', 'title')",
        ),
    }
    assert [s.path for s in run.skipped] == sorted(s.path for s in run.skipped)
    assert run.exit_code() == 0  # skipped files do not change the exit code
    assert main(["audit", str(folder)]) == 0
    out = capsys.readouterr().out.splitlines()
    assert len(out) == 1 + 5 + 1
    assert out[1] == f"SKIP   {folder / 'candidates.toml'}: " + reasons["candidates.toml"][1]
    assert out[-1] == "1 file(s): 1 match; 5 skipped (listed above, not audited)"


def test_the_examples_list_their_other_files_as_skipped() -> None:
    run = run_audit([EXAMPLES])
    assert {(Path(s.path).resolve(), s.kind) for s in run.skipped} == {
        (CANDIDATES.resolve(), "other"),
        (CHAIN.resolve(), "other"),
        ((EXAMPLES / "chains" / "ashcombe_chain_surface_tension.toml").resolve(), "other"),
        ((EXAMPLES / "polymer" / "pet_resin_series.toml").resolve(), "other"),
    }


def test_names_hidden_folders_and_backups(tmp_path) -> None:
    folder = _folder_with(tmp_path)
    for hidden in (".git", ".ipynb_checkpoints"):
        (folder / hidden).mkdir()
        shutil.copy(PRIMARY, folder / hidden / "copy.toml")
    shutil.copy(PRIMARY, folder / "UPPER.TOML")  # audited: the ending in any case
    for name in ("backup.toml~", "backup.toml.bak"):
        shutil.copy(PRIMARY, folder / name)
    (folder / ".budget.toml.x1y2.tmp").write_bytes(b"partial")  # an interrupted write: ignored
    (folder / "notes.txt").write_text("not TOML", encoding="utf-8")  # no TOML name: ignored
    run = run_audit([folder])
    assert sorted(Path(v.path).name for v in run.verdicts) == sorted([PRIMARY.name, "UPPER.TOML"])
    assert [(Path(s.path).name, s.kind, s.reason) for s in run.skipped] == [
        (".git", "hidden", "hidden folder, not searched (name it to audit it)"),
        (".ipynb_checkpoints", "hidden", "hidden folder, not searched (name it to audit it)"),
        ("backup.toml.bak", "name", "name does not end in .toml (a backup copy?)"),
        ("backup.toml~", "name", "name does not end in .toml (a backup copy?)"),
    ]


def test_fifo_and_link_to_a_device_are_errors_without_blocking(tmp_path) -> None:
    # run in a child process with a generous limit, so that a reader which opened the FIFO
    # (and blocked) or read /dev/zero (without end) fails the test instead of hanging it
    import json
    import subprocess
    import sys

    folder = _folder_with(tmp_path)
    os.mkfifo(folder / "pipe.toml")
    (folder / "zeros.toml").symlink_to("/dev/zero")
    (folder / "pipe_link.toml").symlink_to(folder / "pipe.toml")
    proc = subprocess.run(
        [sys.executable, "-m", "viscometry", "audit", "--json", str(folder)],
        capture_output=True, text=True, timeout=120, check=False,
    )  # fmt: skip
    assert proc.returncode == 2, proc.stderr
    d = json.loads(proc.stdout)
    errors = {
        Path(v["path"]).name: v["messages"][0] for v in d["verdicts"] if v["status"] == "error"
    }
    assert set(errors) == {"pipe.toml", "pipe_link.toml", "zeros.toml"}
    assert all("is not a regular file" in m for m in errors.values())
    assert d["skipped"] == [] and d["exit_code"] == 2


def test_symbolic_links_to_folders_are_listed_never_followed(tmp_path) -> None:
    folder = _folder_with(tmp_path)
    (folder / "a").mkdir()
    (folder / "b").mkdir()
    shutil.copy(PRIMARY, folder / "b" / "in_b.toml")
    (folder / "a" / "to_b").symlink_to("../b")  # a loop through two links
    (folder / "b" / "to_a").symlink_to("../a")
    (folder / "a" / "up").symlink_to("..")  # a link back to the folder above
    (folder / "self").symlink_to("self")  # a link to itself
    (folder / "gone").symlink_to("does-not-exist")
    (folder / "self.toml").symlink_to("self.toml")  # named like a budget: an error
    outside = tmp_path / "outside"
    outside.mkdir()
    shutil.copy(PRIMARY, outside / "elsewhere.toml")
    (folder / "out").symlink_to(outside)
    run = run_audit([folder])  # terminates: no link to a folder is followed
    statuses = {Path(v.path).relative_to(folder).as_posix(): v.status for v in run.verdicts}
    assert statuses == {PRIMARY.name: "match", "b/in_b.toml": "match", "self.toml": "error"}
    reasons = {Path(s.path).relative_to(folder).as_posix(): s.reason for s in run.skipped}
    assert set(reasons) == {"a/to_b", "a/up", "b/to_a", "gone", "out", "self"}
    assert {s.kind for s in run.skipped} == {"link"}
    assert reasons["a/up"].startswith("symbolic link loop: leads back to the folder")
    assert "inside the search, not followed" in reasons["a/to_b"]
    assert reasons["out"].endswith("outside the search, not followed (name it to audit it)")
    assert reasons["self"].startswith("symbolic link that leads nowhere")
    assert reasons["gone"].startswith("symbolic link that leads nowhere")
    assert run.exit_code() == 2


def test_an_unreadable_file_is_an_error(tmp_path, monkeypatch) -> None:
    # as root, chmod 000 does not stop reading: refuse the open as the system would
    folder = _folder_with(tmp_path)
    locked = folder / "locked.toml"
    shutil.copy(PRIMARY, locked)
    real_open = Path.open

    def refusing_open(self, *args, **kwargs):  # type: ignore[no-untyped-def]
        if self.name == "locked.toml":
            raise PermissionError(13, "Permission denied", str(self))
        return real_open(self, *args, **kwargs)

    monkeypatch.setattr(Path, "open", refusing_open)
    run = run_audit([folder])
    (v,) = (v for v in run.verdicts if Path(v.path).name == "locked.toml")
    assert v.status == "error" and "cannot read the file: Permission denied" in v.messages[0]
    assert run.exit_code() == 2


def test_the_search_is_bounded(tmp_path, monkeypatch) -> None:
    import viscometry.audit as audit

    folder = _folder_with(tmp_path)
    for i in range(6):
        (folder / f"note{i}.txt").write_text("x", encoding="utf-8")
    monkeypatch.setattr(audit, "MAX_SCAN_ENTRIES", 5)
    run = run_audit([folder])
    (v,) = run.verdicts
    assert v.status == "error" and v.path == str(folder)
    assert v.messages == ("more than 5 entries below this folder; audit smaller folders",)


def test_json_carries_the_skipped_list(tmp_path, capsys) -> None:
    import json

    from viscometry.cli import main

    folder = _folder_with(tmp_path, **{"chain.toml": CHAIN.read_bytes(), "emptied.toml": b""})
    assert main(["audit", "--json", "--skip-damaged", str(folder)]) == 0
    d = json.loads(capsys.readouterr().out)
    assert [v["status"] for v in d["verdicts"]] == ["match"] and d["exit_code"] == 0
    assert d["skipped"] == [
        {"path": str(folder / "chain.toml"), "kind": "other",
         "reason": "not a budget file (a step-up chain file, format = 'viscometry-chain/1')"},
        {"path": str(folder / "emptied.toml"), "kind": "damaged",
         "reason": "damaged, skipped as asked: empty (nothing but comments or blank lines)"},
    ]  # fmt: skip
    assert {s["kind"] for s in d["skipped"]} <= set(SKIP_KINDS)


def test_the_table_shows_skipped_files(tmp_path) -> None:
    folder = _folder_with(tmp_path, **{"chain.toml": CHAIN.read_bytes()})
    (folder / ".ipynb_checkpoints").mkdir()
    run = run_audit([folder])
    table = audit_table(run.verdicts, relative_to=folder, skipped=run.skipped)
    assert list(table["file"]) == [PRIMARY.name, ".ipynb_checkpoints", "chain.toml"]
    assert list(table["verdict"]) == ["match", "skipped", "skipped"]
    row = table.iloc[2]
    assert (row["recorded"], row["recomputed"], row["fingerprint"]) == ("—", "—", "—")
    assert row["detail"].startswith("not a budget file (a step-up chain file")


# ------------------------------------------------------------ every core (viscometry.parallel)
# Expected lines are this package's own wording (no external source); the files are copies of
# the invented examples and generated budgets whose records come from this package.
_REAL_AUDIT_FILE = audit_file
_FAILING = "failing.toml"


def _audit_or_fail(path):  # type: ignore[no-untyped-def]
    """audit_file, except that a file named ``failing.toml`` raises (in a worker too)."""
    if Path(path).name == _FAILING:
        raise RuntimeError("simulated fault")
    return _REAL_AUDIT_FILE(path)


@pytest.fixture
def workers_do_the_work(monkeypatch: pytest.MonkeyPatch) -> None:
    """Start worker processes whatever the work left, and let them evaluate every file after
    the first three (which the calling process evaluates to measure them)."""
    import viscometry.parallel as parallel

    monkeypatch.setattr(parallel, "PARALLEL_WORK", 0.0)
    monkeypatch.setattr(parallel, "WORK_HERE", False)
    started = []
    real = parallel._with_workers

    def spy(run, indexes, workers, size):  # type: ignore[no-untyped-def]
        started.append(len(indexes))
        return real(run, indexes, workers, size)

    monkeypatch.setattr(parallel, "_with_workers", spy)
    return started


def _archive(tmp_path: Path) -> Path:
    """About 30 budget files: the examples under other titles, generated formula budgets,
    one damaged and one whose record differs."""
    from viscometry.gum import Budget, InputQuantity
    from viscometry.io import save_budget
    from viscometry.io.writer import recorded_from

    folder = tmp_path / "archive"
    folder.mkdir()
    examples = sorted(
        p for p in EXAMPLES.rglob("*.toml") if not {"upgrades", "chains", "polymer"} & set(p.parts)
    )
    for n, path in enumerate(examples):
        text = path.read_text(encoding="utf-8")
        retitled = text.replace('title = "', f'title = "copy {n}: ', 1)
        (folder / f"example_{n:02d}.toml").write_text(retitled, encoding="utf-8")
    for n in range(8):
        inputs = [InputQuantity.normal(f"x{j}_{n}", 1.0 + j + n / 10, 0.01 * (j + 1), "1")
                  for j in range(3 + n % 4)]  # fmt: skip
        formula = " * ".join(q.name for q in inputs[:-1]) + f" / {inputs[-1].name}"
        budget = Budget.from_formula("y", formula, inputs, "1", title=f"generated {n}")
        save_budget(
            budget, folder / f"generated_{n}.toml", recorded=recorded_from(budget.evaluate())
        )
    (folder / "x_damaged.toml").write_bytes(b"")
    text = PRIMARY.read_text(encoding="utf-8")
    (folder / "x_differs.toml").write_text(text.replace("value = 0.20000", "value = 0.20010", 1))
    return folder


def test_more_jobs_print_the_same_bytes_and_exit_code(
    tmp_path, capsys, monkeypatch, workers_do_the_work
) -> None:
    import viscometry.commands.audit as command
    import viscometry.parallel as parallel
    from viscometry.cli import main

    folder = _archive(tmp_path)
    code = {}
    out = {}
    for jobs in ("1", "2", "2 started ahead"):
        if jobs == "2 started ahead":  # workers started before the engine is imported
            monkeypatch.setattr(command, "EARLY_FILES", 1)
            monkeypatch.setattr(parallel, "READY_WORK", 0.0)
        code[jobs] = main(["audit", "--jobs", jobs[0], str(folder)])
        captured = capsys.readouterr()
        out[jobs] = captured.out
        assert captured.err == ""  # no progress line: standard error is not a terminal
    assert workers_do_the_work == [34, 34]  # every file but the first three, in workers
    assert out["2"] == out["2 started ahead"] == out["1"]
    assert code["2"] == code["2 started ahead"] == code["1"] == 2
    lines = out["1"].splitlines()
    assert lines[-1] == "37 file(s): 35 match, 1 differs, 1 error"
    assert lines[-3].startswith(f"ERROR    {folder / 'x_damaged.toml'}: missing key format")
    assert "counted as a damaged budget file: empty" in lines[-3]
    assert lines[-2].startswith(f"DIFFERS  {folder / 'x_differs.toml'}: value recorded")


def test_a_failing_evaluation_is_an_error_line_for_that_file(tmp_path, capsys, monkeypatch,
                                                             workers_do_the_work) -> None:  # fmt: skip
    import viscometry.audit as audit
    from viscometry.cli import main

    folder = _folder_with(tmp_path)
    for name in ("a.toml", "b.toml", "c.toml", _FAILING):
        shutil.copy(PRIMARY, folder / name)
    monkeypatch.setattr(audit, "audit_file", _audit_or_fail)
    out = {}
    for jobs in ("1", "2"):
        assert main(["audit", "--jobs", jobs, str(folder)]) == 2
        out[jobs] = capsys.readouterr().out
    assert workers_do_the_work == [2]  # the failing file and the one after it, in a worker
    assert out["2"] == out["1"]
    lines = out["1"].splitlines()
    assert f"ERROR  {folder / _FAILING}: unexpected RuntimeError: simulated fault" in lines
    assert lines[-1] == "5 file(s): 4 match, 1 error"


@pytest.mark.parametrize("jobs", ["0", "-3"])
def test_jobs_below_one_are_refused(capsys, jobs) -> None:
    from viscometry.cli import main

    assert main(["audit", "--jobs", jobs, str(PRIMARY)]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert (
        captured.err
        == f"viscometry: error: --jobs must be a whole number of at least 1, got {jobs}\n"
    )
    with pytest.raises(ValueError, match="jobs must be a whole number of at least 1, got 0"):
        run_audit([PRIMARY], jobs=0)


def test_jobs_that_are_not_whole_numbers_are_refused(capsys) -> None:
    from viscometry.cli import main

    assert main(["audit", "--jobs", "1.5", str(PRIMARY)]) == 2
    assert "argument --jobs: must be a whole number, got '1.5'" in capsys.readouterr().err


def test_progress_shows_on_a_terminal_only_and_never_with_json(tmp_path, capsys, monkeypatch):
    import io
    import sys

    from test_parallel import shown_on

    from viscometry.cli import main
    from viscometry.parallel import TerminalProgress

    folder = _folder_with(tmp_path)
    shutil.copy(PRIMARY, folder / "copy.toml")
    monkeypatch.setattr(TerminalProgress.__init__, "__kwdefaults__", {"delay": 0, "interval": 0})
    reader, writer = os.openpty()
    terminal = io.TextIOWrapper(io.FileIO(writer, "w"), encoding="utf-8")
    monkeypatch.setattr(sys, "stderr", terminal)
    try:
        assert main(["audit", "--jobs", "1", str(folder)]) == 0
        text_out = capsys.readouterr().out
        assert main(["audit", "--jobs", "1", "--json", str(folder)]) == 0
        terminal.flush()
        shown = shown_on(reader)
    finally:
        monkeypatch.undo()
        terminal.close()
        os.close(reader)
    blank = " " * len("auditing 2/2 files")
    assert shown == "\rauditing 0/2 files\rauditing 1/2 files\rauditing 2/2 files\r" + blank + "\r"
    assert text_out.splitlines()[-1] == "2 file(s): 2 match"  # standard output as without it


def test_workers_are_started_ahead_only_for_many_files(tmp_path) -> None:
    from viscometry.commands.audit import _many_files

    folder = _folder_with(tmp_path)
    (folder / ".git").mkdir()
    for n in range(3):
        shutil.copy(PRIMARY, folder / ".git" / f"{n}.toml")  # hidden: not counted
    (folder / "notes.txt").write_text("x", encoding="utf-8")
    assert _many_files([str(folder)], 1) and not _many_files([str(folder)], 2)
    assert _many_files([str(PRIMARY), str(folder)], 2)  # a named file counts
