"""A panel to load a lab's own dilution series file and see its [η] with U (workbook 08).

Thin: a path field, a load button, an upload and the Monte Carlo settings, wired to
:func:`viscometry.io.series.load_series` / :func:`~viscometry.io.series.loads_series`,
:func:`viscometry.polymer.extrapolate`, :func:`~viscometry.polymer.monte_carlo_check`,
:func:`~viscometry.polymer.molar_mass` and :func:`viscometry.polymer_text.series_text`. A
file that cannot be read is refused next to the field with the reader's one-line message, and
the last good report stays on screen.
"""

from __future__ import annotations

import html
import warnings
from dataclasses import dataclass
from typing import Any

import ipywidgets as widgets

from viscometry.errors import ValidityWarning, ViscometryError
from viscometry.io.series import SeriesFile, load_series, loads_series
from viscometry.polymer import extrapolate, molar_mass, monte_carlo_check
from viscometry.polymer_text import series_text
from viscometry.widgets.fields import error_html, message_label, wrap_row

__all__ = ["DilutePanel", "dilute_panel"]


@dataclass(frozen=True)
class Report:
    """What the panel shows: the file read, and the numbers behind the text."""

    file: SeriesFile
    extrapolation: Any
    monte_carlo: Any
    molar_mass: Any
    text: str


class DilutePanel:
    """Controls: ``path`` (Text), ``load_button``, ``upload``, ``trials`` and ``seed``
    (IntText); ``message`` (refusals) and ``report_html`` (the report); :meth:`report` is the
    last good :class:`Report`."""

    def __init__(self, path: str = "", *, trials: int = 20_000, seed: int = 1) -> None:
        wide = widgets.Layout(width="36em", min_width="14em")
        self.path = widgets.Text(value=path, description="series file", layout=wide,
                                 style={"description_width": "7em"})  # fmt: skip
        self.load_button = widgets.Button(description="Load", layout=widgets.Layout(width="auto"))
        self.upload = widgets.FileUpload(accept=".toml", multiple=False, description="Upload")
        self.trials = widgets.IntText(value=trials, description="MC trials",
                                      layout=widgets.Layout(width="14em"))  # fmt: skip
        self.seed = widgets.IntText(
            value=seed, description="seed", layout=widgets.Layout(width="16em")
        )
        self.message = message_label()
        self.report_html = widgets.HTML()
        self._report: Report | None = None
        self.load_button.on_click(lambda _b: self.load_path(self.path.value))
        self.upload.observe(lambda c: self._uploaded(c["new"]), names="value")
        self.widget = widgets.VBox([
            wrap_row([self.path, self.load_button, self.upload]),
            wrap_row([self.trials, self.seed]), self.message, self.report_html,
        ])  # fmt: skip
        if path:
            self.load_path(path)

    def report(self) -> Report | None:
        """The last good report (None before the first)."""
        return self._report

    def load_path(self, path: str) -> bool:
        """Read a series file from ``path``; True when it was shown."""
        try:
            sf = load_series(path)
        except ViscometryError as exc:
            return self._refuse(str(exc))
        return self._show(sf)

    def load_text(self, text: str, name: str = "uploaded file") -> bool:
        """Read a series file from its text (an upload); True when it was shown."""
        try:
            sf = loads_series(text, name)
        except ViscometryError as exc:
            return self._refuse(str(exc))
        return self._show(sf)

    def _uploaded(self, files: Any) -> None:
        if not files:
            return
        item = files[0]
        try:
            text = bytes(item["content"]).decode("utf-8")
        except UnicodeDecodeError:
            self._refuse(f"{item['name']}: not UTF-8 text; save the file as UTF-8")
            return
        self.load_text(text, str(item["name"]))

    def _refuse(self, message: str) -> bool:
        lines = [message]
        if self.report_html.value:
            lines.append("nothing was loaded: the report below is still that of the last series")
        self.message.value = error_html(lines)
        return False

    def _show(self, sf: SeriesFile) -> bool:
        try:
            p = (
                {}
                if sf.coverage_probability is None
                else {"coverage_probability": sf.coverage_probability}
            )
            with warnings.catch_warnings():
                warnings.simplefilter("ignore", ValidityWarning)  # shown in the report
                ext = extrapolate(sf.series, **p)
            trials = int(self.trials.value)
            mc = (
                monte_carlo_check(ext, trials=trials, seed=int(self.seed.value)) if trials else None
            )
            mm = None
            if sf.mark_houwink is not None:
                k, a, r, _ = sf.mark_houwink
                mm = molar_mass(ext.huggins.intrinsic, k, a, correlation=r,
                                coverage_probability=ext.coverage_probability)  # fmt: skip
        except ViscometryError as exc:
            return self._refuse(f"{sf.source}: {exc}")
        text = series_text(ext, concentration_unit=sf.concentration_unit, title=sf.title,
                           monte_carlo=mc, molar_mass=mm)  # fmt: skip
        self._report = Report(sf, ext, mc, mm, text)
        self.message.value = ""
        self.report_html.value = (
            "<pre style='font-size:0.85em;white-space:pre-wrap;word-break:normal;"
            f"overflow-wrap:break-word'>{html.escape(text)}</pre>"
        )
        return True


def dilute_panel(path: str = "", **kwargs: Any) -> DilutePanel:
    """A :class:`DilutePanel`, loaded with ``path`` when given."""
    return DilutePanel(path, **kwargs)
