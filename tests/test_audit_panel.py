"""The audit panel of workbook 06, driven from code (no kernel, no browser).

Check values: the example budgets' records (regression values of this tool, stored in
examples/) — every one must be confirmed — and a copy with one changed number, which must be
caught (the fingerprint covers every number of the budget).
"""

from __future__ import annotations

import shutil
from pathlib import Path

from viscometry.widgets.audit_panel import audit_panel

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
PRIMARY = EXAMPLES / "primary_capillary_poiseuille.toml"


def test_the_examples_audit_clean_with_verdicts_in_words_and_colour(tmp_path: Path) -> None:
    panel = audit_panel(EXAMPLES, export_folder=tmp_path / "record")
    assert {v.status for v in panel.verdicts} == {"match"} and len(panel.verdicts) == 27
    assert (
        "audit PASSED: 27 budget file(s), 27 recorded result(s) confirmed"
        in panel.summary_html.value
    )
    assert "color:#060" in panel.summary_html.value
    assert panel.table_html.value.count("recorded result confirmed") >= 27


def test_a_changed_number_is_caught_and_shown_in_red(tmp_path: Path) -> None:
    folder = tmp_path / "budgets"
    folder.mkdir()
    text = PRIMARY.read_text(encoding="utf-8")
    assert text.count("half_width = 0.05\n") == 1
    (folder / "changed.toml").write_text(
        text.replace("half_width = 0.05\n", "half_width = 0.051\n")
    )
    shutil.copy(PRIMARY, folder / "unchanged.toml")
    (folder / "emptied.toml").write_text("", encoding="utf-8")
    panel = audit_panel(folder)
    statuses = {Path(v.path).name: v.status for v in panel.verdicts}
    assert statuses == {
        "changed.toml": "differs",
        "unchanged.toml": "match",
        "emptied.toml": "error",
    }
    assert "audit FAILED" in panel.summary_html.value and "color:#a00" in panel.summary_html.value
    assert "DIFFERS</b> — differs from the record" in panel.table_html.value
    assert "ERROR</b> — cannot be read or evaluated" in panel.table_html.value


def test_export_keeps_the_record_where_the_auditor_says(tmp_path: Path) -> None:
    panel = audit_panel(EXAMPLES, export_folder=tmp_path / "kept" / "record")
    written = panel.export()
    assert sorted(p.name for p in written) == ["audit.csv", "audit.html"]
    html_text = (tmp_path / "kept" / "record" / "audit.html").read_text(encoding="utf-8")
    assert "audit PASSED" in html_text and "local codes" in html_text
    # a header, 27 audited budget files and the 4 files the search skipped (listed, not audited)
    assert (tmp_path / "kept" / "record" / "audit.csv").read_text().count("\n") == 32
    assert panel.export_html.value.count("download=") == 2


def test_refusals_are_said(tmp_path: Path) -> None:
    missing = audit_panel(tmp_path / "missing")
    assert "does not exist" in missing.message and "does not exist" in missing.summary_html.value
    assert missing.export() == [] and "run the audit first" in missing.message
    blocker = tmp_path / "file"
    blocker.write_text("x", encoding="utf-8")
    panel = audit_panel(EXAMPLES, export_folder=blocker)
    assert panel.export() == [] and "cannot write" in panel.message
    empty = tmp_path / "empty"
    empty.mkdir()
    panel = audit_panel(empty)
    assert [v.status for v in panel.verdicts] == ["error"]
    assert "no budget files" in panel.table_html.value


def test_skipped_files_are_rows_of_the_table(tmp_path: Path) -> None:
    # the panel lists what the folder search left out, with the reason (this package's own
    # wording, no external source), and counts it in the summary
    folder = tmp_path / "budgets"
    folder.mkdir()
    shutil.copy(PRIMARY, folder / PRIMARY.name)
    shutil.copy(EXAMPLES / "chains" / "ashcombe_step_up_chain.toml", folder / "chain.toml")
    (folder / ".ipynb_checkpoints").mkdir()
    shutil.copy(PRIMARY, folder / ".ipynb_checkpoints" / "copy.toml")
    panel = audit_panel(folder)
    assert [v.status for v in panel.verdicts] == ["match"]
    assert sorted(s.kind for s in panel.skipped) == ["hidden", "other"]
    summary = panel.summary_html.value
    assert "audit PASSED: 1 budget file(s)" in summary and "color:#060" in summary
    assert "; 2 skipped (listed in the table, not audited)" in summary
    table = panel.table_html.value
    assert table.count("SKIPPED</b>") == 2
    assert "<td>chain.toml</td>" in table and "a step-up chain file" in table
    assert "<td>.ipynb_checkpoints</td>" in table and "hidden folder, not searched" in table


def test_the_examples_show_their_other_files_as_skipped(tmp_path: Path) -> None:
    panel = audit_panel(EXAMPLES, export_folder=tmp_path / "record")
    names = sorted(Path(s.path).name for s in panel.skipped)
    assert names == [
        "ashcombe_chain_surface_tension.toml",
        "ashcombe_step_up_chain.toml",
        "pet_resin_series.toml",
        "pressure_capillary_upgrades.toml",
    ]
    assert "; 4 skipped (listed in the table, not audited)" in panel.summary_html.value


def test_the_exported_record_lists_the_skipped_files_too(tmp_path: Path) -> None:
    # An auditor's record must show every file the search left out, not only the verdicts.
    panel = audit_panel(EXAMPLES, export_folder=tmp_path / "record")
    written = panel.export()
    page = (tmp_path / "record" / "audit.html").read_text(encoding="utf-8")
    csv = (tmp_path / "record" / "audit.csv").read_text(encoding="utf-8")
    assert len(written) == 2
    assert "; 4 skipped (listed in the table, not audited)" in page
    assert "pressure_capillary_upgrades.toml" in page and "not audited" in page
    assert csv.count(",skipped,") == 4
