"""The evidence panel of workbook 07, driven from code (no kernel, no browser).

Check values: the panel must show the same numbers as the command line (``viscometry drift``
and ``viscometry reconcile``, whose numbers tests/test_evidence_topdown.py and
tests/test_evidence_cli.py check against independent computations); the example files are
invented. A malformed file must be refused in one red line that names file, row and column.
"""

from __future__ import annotations

import contextlib
import io
import json
from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.widgets import evidence_panel

ROOT = Path(__file__).resolve().parents[1]
EXAMPLES = ROOT / "examples"
ARGS = ["--control", str(EXAMPLES / "evidence" / "cs46_control_chart.csv"),
        "--proficiency", str(EXAMPLES / "evidence" / "fenmoor_proficiency_rounds.csv"),
        "--budget", str(EXAMPLES / "lubricant_lab_kinematic_viscosity.toml"),
        "--history", str(EXAMPLES / "evidence" / "ubbelohde_4471_history.csv"),
        "--date", "2026-05-01", "--json"]  # fmt: skip


def _cli() -> dict:
    out = io.StringIO()
    with contextlib.redirect_stdout(out):
        assert main(["reconcile", *ARGS]) == 0
    return json.loads(out.getvalue())


def test_the_panel_shows_what_the_command_line_gives():
    panel = evidence_panel(EXAMPLES)
    ev = panel.evidence
    assert panel.message == "" and ev is not None
    d = _cli()
    rec = ev.reconciliation
    assert rec.verdict == d["reconciliation"]["verdict"] == "borderline"
    assert rec.ratio == pytest.approx(d["reconciliation"]["ratio"], rel=1e-12)
    assert rec.top_down.expanded_uncertainty == pytest.approx(
        d["top_down"]["expanded_uncertainty"], rel=1e-12
    )
    assert ev.prediction.constant == pytest.approx(d["drift"]["prediction"]["constant"], rel=1e-12)
    assert ev.interval.next_date.isoformat() == d["drift"]["interval"]["next_date"]
    assert "verdict: borderline" in panel.verdict_html.value
    assert "color:#a60" in panel.verdict_html.value
    text = panel.text_html.value
    assert "predicted constant on 2026-05-01" in text
    assert "rule 5 at point 22" in text and "ratio U_top-down / U_budget = 1.38" in text
    assert "does not replace it" in text
    for image in (panel.drift_image, panel.chart_image, panel.scores_image):
        assert image.value[:4] == b"\x89PNG"


def test_the_date_field_moves_the_prediction():
    panel = evidence_panel(EXAMPLES, run_now=False)
    panel.date.value = "2024-05-08"  # the last certificate's date: the prediction is it
    ev = panel.run()
    assert ev.prediction.constant == pytest.approx(0.030035, rel=1e-15)
    assert ev.prediction.drift == 0.0
    panel.date.value = "May 2026"
    assert panel.run() is None
    assert "date must be YYYY-MM-DD, got 'May 2026'" in panel.message


def test_without_a_history_the_drift_is_left_out():
    panel = evidence_panel(EXAMPLES, run_now=False)
    panel.history.value = ""
    ev = panel.run()
    assert ev.drift is None and ev.prediction is None
    assert panel.drift_image.value == b"" and "verdict: borderline" in panel.verdict_html.value


def test_a_malformed_file_is_refused_in_one_red_line_and_the_last_results_stay_marked(tmp_path):
    bad = tmp_path / "cs.csv"
    bad.write_text("format,viscometry-control/1\ndate,value,note\n2025-09-01,45.9,AB\n"
                   "2025-09-08,abc,CD\n")  # fmt: skip
    panel = evidence_panel(EXAMPLES)
    assert panel.evidence is not None
    panel.control.value = str(bad)
    panel.check_button.click()
    assert panel.evidence is None
    assert panel.message == f"{bad}: row 4, column value: not a number: 'abc'"
    # the refusal in red next to the fields; the last good results stay on screen, marked
    shown = panel.message_html.value
    assert "color:#a00" in shown and "row 4, column value: not a number" in shown
    assert "still those of the files last read" in shown
    assert "verdict: borderline" in panel.verdict_html.value and panel.text_html.value != ""
    assert panel.chart_image.value != b""
    # the file mended: checked again, the mark goes
    bad.write_text("format,viscometry-control/1\ndate,value,note\n" + "".join(
        f"2025-09-{d:02d},45.9{d % 7},x\n" for d in range(1, 26)))  # fmt: skip
    panel.check_button.click()
    assert panel.evidence is not None and panel.message_html.value == ""


def test_a_refusal_before_any_result_says_only_why(tmp_path):
    panel = evidence_panel(EXAMPLES, control=str(tmp_path / "missing.csv"))
    assert panel.evidence is None and "missing.csv" in panel.message_html.value
    assert "still those" not in panel.message_html.value and panel.text_html.value == ""
