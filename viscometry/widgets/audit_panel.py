"""An audit panel: audit a folder the auditor chooses and keep the record where they keep it.

:func:`audit_panel` shows a folder field and an *Audit* button; every budget file below the
folder is evaluated again and compared with its record (:func:`viscometry.audit.audit_paths`),
and the table shows each verdict in words and colour. *Export* writes ``audit.html`` and
``audit.csv`` (:func:`viscometry.report.write_audit_report`) into a folder the auditor
names, and offers download links. A folder that does not exist, holds no budget files or
cannot be written is said in red; nothing is skipped silently: every file or folder the search
leaves out (another kind of TOML file, a hidden folder, a symbolic link to a folder) is a row
of the table with the verdict *skipped* and the reason, and the summary counts them
(:func:`viscometry.audit.run_audit`). A large folder is audited on every core (``jobs``;
worker processes are started with 'spawn', which works from a notebook kernel because the
function they run is importable from :mod:`viscometry.audit`).
"""

from __future__ import annotations

import html
from dataclasses import dataclass, field
from pathlib import Path

import ipywidgets as widgets

from viscometry.audit import AuditVerdict, Skipped, audit_table, run_audit
from viscometry.errors import ViscometryError
from viscometry.parallel import check_jobs
from viscometry.report import write_audit_report
from viscometry.text import audit_summary, audit_table_html
from viscometry.widgets.fields import download_link, error_html, wrap_row

__all__ = ["AuditPanel", "audit_panel"]


class _State:
    def __init__(self) -> None:
        self.verdicts: tuple[AuditVerdict, ...] = ()
        self.skipped: tuple[Skipped, ...] = ()
        self.folder: Path | None = None
        self.message = ""
        self.jobs: int | None = None


@dataclass(frozen=True, eq=False)
class AuditPanel:
    """Handle of an audit panel made by :func:`audit_panel`."""

    widget: widgets.VBox
    folder: widgets.Text
    audit_button: widgets.Button
    summary_html: widgets.HTML
    table_html: widgets.HTML
    export_folder: widgets.Text
    export_button: widgets.Button
    export_html: widgets.HTML
    _state: _State = field(repr=False, default=None)  # type: ignore[assignment]

    @property
    def verdicts(self) -> tuple[AuditVerdict, ...]:
        """The verdicts of the last audit."""
        return self._state.verdicts

    @property
    def skipped(self) -> tuple[Skipped, ...]:
        """What the last audit's folder search left out, with the reasons."""
        return self._state.skipped

    @property
    def message(self) -> str:
        """The last refusal (a missing folder, an export that failed), or ``""``."""
        return self._state.message

    def run(self) -> tuple[AuditVerdict, ...]:
        """Audit the folder in :attr:`folder`; show the table and the summary."""
        folder = Path(self.folder.value.strip() or ".")
        if not folder.is_dir():
            self._refuse(self.summary_html, f"folder {str(folder)!r} does not exist")
            return ()
        audit = run_audit([folder], jobs=self._state.jobs)
        verdicts = audit.verdicts
        table = audit_table(verdicts, relative_to=folder, skipped=audit.skipped)
        self._state.verdicts, self._state.skipped = verdicts, audit.skipped
        self._state.folder, self._state.message = folder, ""
        counts = audit.counts()
        colour = "#060" if counts.get("differs", 0) + counts.get("error", 0) == 0 else "#a00"
        self.summary_html.value = (
            f"<b style='color:{colour}'>{html.escape(audit_summary(counts))}</b>"
        )
        self.table_html.value = audit_table_html(table)
        return verdicts

    def export(self) -> list[Path]:
        """Write the audit record into :attr:`export_folder`; show links to it."""
        if not self._state.verdicts:
            self._refuse(self.export_html, "nothing to export: run the audit first")
            return []
        target = Path(self.export_folder.value.strip() or "audit_record")
        try:
            written = write_audit_report(
                self._state.verdicts,
                target,
                relative_to=self._state.folder,
                skipped=self._state.skipped,
            )
        except ViscometryError as exc:
            self._refuse(self.export_html, str(exc))
            return []
        links = ", ".join(download_link(p.name, p.read_bytes(), p.name) for p in written)
        self.export_html.value = (
            f"<span style='color:#060'>wrote the audit record to "
            f"{html.escape(str(target.resolve()))}</span>: {links}"
        )
        return written

    def _refuse(self, where: widgets.HTML, text: str) -> None:
        self._state.message = text
        where.value = error_html([text])


def audit_panel(folder: str | Path = "examples", *, export_folder: str | Path = "audit_record",
                run_now: bool = True, jobs: int | None = None) -> AuditPanel:  # fmt: skip
    """Build an audit panel for a folder of budget files (audited at once unless ``run_now``
    is False) by ``jobs`` processes (default every core; see
    :func:`viscometry.audit.run_audit`).

    Examples
    --------
    >>> import tempfile, pathlib
    >>> with tempfile.TemporaryDirectory() as d:
    ...     panel = audit_panel(pathlib.Path(d) / "missing")
    ...     "does not exist" in panel.message
    True
    """

    def text(label: str, value: str) -> widgets.Text:
        return widgets.Text(value=value, description=label, continuous_update=False,
                            style={"description_width": "9em"},
                            layout=widgets.Layout(width="36em", min_width="16em"))  # fmt: skip

    def button(label: str, style: str = "") -> widgets.Button:
        return widgets.Button(description=label, button_style=style,
                              layout=widgets.Layout(width="auto", min_width="8em"))  # fmt: skip

    folder_w, export_w = (
        text("folder to audit", str(folder)),
        text("keep the record in", str(export_folder)),
    )
    state = _State()
    state.jobs = check_jobs(jobs)
    panel = AuditPanel(
        widget=widgets.VBox(), folder=folder_w, audit_button=button("Audit", "primary"),
        summary_html=widgets.HTML(), table_html=widgets.HTML(layout=widgets.Layout(width="100%")),
        export_folder=export_w, export_button=button("Export the record"), export_html=widgets.HTML(),
        _state=state,
    )  # fmt: skip
    panel.widget.children = (
        wrap_row([folder_w, panel.audit_button]), panel.summary_html, panel.table_html,
        wrap_row([export_w, panel.export_button]), panel.export_html,
    )  # fmt: skip
    panel.audit_button.on_click(lambda _b: panel.run())
    panel.export_button.on_click(lambda _b: panel.export())
    if run_now:
        panel.run()
    return panel
