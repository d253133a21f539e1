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
    assert {v.status for v in panel.verdicts} == {"match"} and len(panel.verdicts) == 20
    assert (
        "audit PASSED: 20 budget file(s), 20 recorded result(s) confirmed"
        in panel.summary_html.value
    )
    assert "color:#060" in panel.summary_html.value
    assert panel.table_html.value.count("recorded result confirmed") >= 20


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
    assert (tmp_path / "kept" / "record" / "audit.csv").read_text().count("\n") == 21
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
