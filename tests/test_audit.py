"""Audits of budget files and the audit table over many of them (viscometry.audit).

No numeric check values here: the example files are invented demo data. The tests check that
the table reports what :func:`viscometry.audit.audit_file` decides, file by file, and that a
modified copy (in a temporary folder, never in examples/) is caught.
"""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from viscometry.audit import (
    AUDIT_COLUMNS,
    VERDICTS,
    audit_file,
    audit_paths,
    audit_table,
    collect_files,
    exit_code,
    fingerprint_status,
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
        p for p in EXAMPLES.rglob("*.toml") if not {"upgrades", "chains"} & set(p.parts)
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
