"""An evidence panel: does our uncertainty hold up against our own records?

:func:`evidence_panel` shows four file fields — the viscometer's calibration history
(``viscometry-history/1``), the check standard's control chart (``viscometry-control/1``), the
proficiency rounds (``viscometry-proficiency/1``) and the budget file (TOML) — a date for the
predicted constant, and a *Check* button. It reads the files with
:func:`viscometry.io.qc_records.load_evidence` and shows the drift and predicted constant, the
control chart with its run-rule signals, the proficiency scores, the top-down U and the
reconciliation verdict, with the same sentences as ``viscometry drift`` and ``viscometry
reconcile``. A file that cannot be read is said in red in one line (file, row, column) and
the previous results are cleared. The verdict supports the laboratory's accredited
procedures; it does not replace them.
"""

from __future__ import annotations

import datetime as dt
import html
from dataclasses import dataclass, field
from pathlib import Path

import ipywidgets as widgets

from viscometry.errors import ViscometryError
from viscometry.evidence_qc_text import (
    VERDICT_TEXT,
    chart_lines,
    reconciliation_lines,
    reconciliation_warnings,
    round_lines,
    topdown_lines,
)
from viscometry.evidence_text import drift_lines, fit_warnings
from viscometry.io.qc_records import Evidence, load_evidence
from viscometry.widgets.fields import chart_image, error_html, warning_lines, wrap_row

__all__ = ["EXAMPLE_FILES", "EvidencePanel", "evidence_panel"]

#: The invented Harrowgate files the panel opens with, relative to the examples folder (the
#: budget, written for another fictional lab, stands in for Harrowgate's routine budget).
EXAMPLE_FILES = {
    "history": "evidence/ubbelohde_4471_history.csv",
    "control": "evidence/cs46_control_chart.csv",
    "proficiency": "evidence/fenmoor_proficiency_rounds.csv",
    "budget": "lubricant_lab_kinematic_viscosity.toml",
}
_VERDICT_COLOUR = {"holds": "#060", "borderline": "#a60", "does_not_hold": "#a00"}


class _State:
    def __init__(self) -> None:
        self.evidence: Evidence | None = None
        self.message = ""
        self.shown = False  # whether results are on screen


@dataclass(frozen=True, eq=False)
class EvidencePanel:
    """Handle of an evidence panel made by :func:`evidence_panel`."""

    widget: widgets.VBox
    history: widgets.Text
    control: widgets.Text
    proficiency: widgets.Text
    budget: widgets.Text
    date: widgets.Text
    check_button: widgets.Button
    verdict_html: widgets.HTML
    message_html: widgets.HTML
    text_html: widgets.HTML
    drift_image: widgets.Image
    chart_image: widgets.Image
    scores_image: widgets.Image
    _state: _State = field(repr=False, default=None)  # type: ignore[assignment]

    @property
    def evidence(self) -> Evidence | None:
        """What the last check read and computed (None after a refusal; the screen keeps
        the last good results, marked as those of the files last read)."""
        return self._state.evidence

    @property
    def message(self) -> str:
        """The last refusal, or ``""``."""
        return self._state.message

    def run(self) -> Evidence | None:
        """Read the files in the fields, compute, and show everything."""
        try:
            day = _date(self.date.value)
            history = self.history.value.strip() or None
            ev = load_evidence(self.control.value.strip(), self.proficiency.value.strip(),
                               self.budget.value.strip(), history=history, date=day)  # fmt: skip
        except ViscometryError as exc:
            return self._refuse(str(exc))
        self._state.evidence, self._state.message = ev, ""
        self._state.shown = True
        self.message_html.value = ""
        colour = _VERDICT_COLOUR[ev.reconciliation.verdict]
        self.verdict_html.value = (
            f"<b style='color:{colour}'>verdict: "
            f"{html.escape(ev.reconciliation.verdict.replace('_', ' '))}</b> — "
            f"{html.escape(VERDICT_TEXT[ev.reconciliation.verdict])}"
        )
        self.text_html.value = _text_html(ev)
        self._draw(ev)
        return ev

    def _draw(self, ev: Evidence) -> None:
        from viscometry.evidence_plots import history_figure
        from viscometry.evidence_qc_plots import control_chart_figure, scores_figure
        from viscometry.plots import figure_png

        self.chart_image.value = figure_png(control_chart_figure(ev.chart))
        self.scores_image.value = figure_png(scores_figure(ev.proficiency.history))
        if ev.drift is not None:
            self.drift_image.value = figure_png(history_figure(ev.drift, ev.prediction))
        else:
            self.drift_image.value = b""

    def _refuse(self, text: str) -> None:
        """The refusal next to the fields; results on screen stay, marked as the last good."""
        self._state.evidence, self._state.message = None, text
        lines = [text]
        if self._state.shown:
            lines.append(
                "nothing was checked: the results below are still those of the files last read"
            )
        self.message_html.value = error_html(lines)
        return None


def _date(text: str) -> dt.date:
    from viscometry.errors import InputError

    text = text.strip()
    try:
        if len(text) != 10:
            raise ValueError(text)
        return dt.date.fromisoformat(text)
    except ValueError:
        raise InputError(f"date must be YYYY-MM-DD, got {text[:40]!r}") from None


def _text_html(ev: Evidence) -> str:
    blocks = [chart_lines(ev.chart), round_lines(ev.proficiency.history, ev.proficiency.scheme)]
    warnings = reconciliation_warnings(ev.reconciliation, ev.chart)
    if ev.drift is not None:
        blocks.insert(0, drift_lines(ev.drift, ev.prediction, ev.interval))
        warnings += fit_warnings(ev.drift)
    blocks += [topdown_lines(ev.reconciliation.top_down), reconciliation_lines(ev.reconciliation)]
    body = "\n\n".join("\n".join(b) for b in blocks)
    return (
        f"<pre style='white-space:pre-wrap;word-break:normal;overflow-wrap:break-word'>{html.escape(body)}</pre>"
        + "<br>".join(warning_lines(warnings))
    )


def evidence_panel(
    examples: str | Path | None = None,
    *,
    history: str | Path | None = None,
    control: str | Path | None = None,
    proficiency: str | Path | None = None,
    budget: str | Path | None = None,
    date: dt.date | str = "2026-05-01",
    run_now: bool = True,
) -> EvidencePanel:
    """Build an evidence panel on the given files, checked at once unless ``run_now`` is
    False. A file not given is the invented Harrowgate example (:data:`EXAMPLE_FILES`) in
    ``examples`` (default: the shipped examples folder).

    Examples
    --------
    >>> panel = evidence_panel(control="missing.csv")
    >>> "missing.csv" in panel.message
    True
    """

    def text(label: str, value: object) -> widgets.Text:
        return widgets.Text(value="" if value is None else str(value), description=label,
                            continuous_update=False, style={"description_width": "15em"},
                            layout=widgets.Layout(width="calc(100% - 8px)", max_width="46em",
                                                  min_width="18em"))  # fmt: skip

    if examples is None:
        from viscometry.workspace import bundled

        examples = bundled("examples")
    given = {"history": history, "control": control, "proficiency": proficiency,
             "budget": budget}  # fmt: skip
    files = {k: Path(examples) / EXAMPLE_FILES[k] if v is None else v for k, v in given.items()}
    history, control, proficiency, budget = (files[k] for k in EXAMPLE_FILES)
    panel = EvidencePanel(
        widget=widgets.VBox(), history=text("calibration history (CSV)", history),
        control=text("check-standard chart (CSV)", control),
        proficiency=text("proficiency rounds (CSV)", proficiency),
        budget=text("budget file (TOML)", budget), date=text("predict the constant on", date),
        check_button=widgets.Button(description="Check", button_style="primary"),
        verdict_html=widgets.HTML(), message_html=widgets.HTML(), text_html=widgets.HTML(layout=widgets.Layout(width="100%")),
        drift_image=chart_image(), chart_image=chart_image(), scores_image=chart_image(),
        _state=_State(),
    )  # fmt: skip
    panel.widget.children = (
        panel.history, panel.control, panel.proficiency, panel.budget,
        wrap_row([panel.date, panel.check_button]), panel.message_html, panel.verdict_html,
        wrap_row([panel.drift_image, panel.chart_image, panel.scores_image]), panel.text_html,
    )  # fmt: skip
    panel.check_button.on_click(lambda _b: panel.run())
    if run_now:
        panel.run()
    return panel
