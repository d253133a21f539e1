"""Charts of quality-control records (edge layer: matplotlib only).

:func:`control_chart_figure` draws a check standard's Shewhart chart: the values, the centre
line, warning (2σ) and action (3σ) limits, and a ring around every point where a run rule
signals. :func:`scores_figure` draws the proficiency rounds' z and ζ scores over time with the
2 and 3 lines. As in :mod:`viscometry.plots`, a figure made without an ``ax`` is not
registered with :mod:`matplotlib.pyplot`; a workbook passes its own ``ax`` and ends with
``plt.show()``.
"""

from __future__ import annotations

import os
from collections.abc import Sequence
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from viscometry.evidence.control import ControlChart
    from viscometry.evidence.topdown import ProficiencyHistory

__all__ = ["control_chart_figure", "save_control_chart_plot", "scores_figure"]


def control_chart_figure(chart: ControlChart, *, ax: Axes | None = None) -> Figure:
    """Values, centre line, 2σ and 3σ limits, and the points where a run rule signals."""
    from matplotlib.figure import Figure

    from viscometry.text import one_line, unit_label

    if ax is None:
        fig = Figure(figsize=(7.0, 4.0))
        ax = fig.add_subplot()
    pts = chart.record.points
    dates = [p.date for p in pts]
    ax.plot(dates, [p.value for p in pts], "o-", ms=4, lw=0.8, label="check standard")
    ax.axhline(chart.centre, color="k", lw=1.0, label="centre line")
    for (lo, hi), style, name in (
        (chart.warning_limits, "--", "warning limits (2σ)"),
        (chart.action_limits, ":", "action limits (3σ)"),
    ):
        ax.axhline(lo, color="tab:red", ls=style, lw=1.0, label=name)
        ax.axhline(hi, color="tab:red", ls=style, lw=1.0)
    flagged = sorted({v.index for v in chart.violations})
    if flagged:
        ax.plot([dates[i] for i in flagged], [pts[i].value for i in flagged], "o", ms=11,
                mfc="none", mec="tab:red", mew=1.5, label="run-rule signal")  # fmt: skip
    ax.set_xlabel("date")
    ax.set_ylabel(f"value [{unit_label(chart.record.unit)}]")
    ax.set_title(one_line(chart.record.check_standard or "control chart", 70))
    ax.legend(loc="best", fontsize="small")
    ax.figure.autofmt_xdate()
    return ax.figure  # type: ignore[return-value]


def scores_figure(history: ProficiencyHistory, *, ax: Axes | None = None) -> Figure:
    """z and ζ of each round against its date, with the lines at ±2 and ±3."""
    from matplotlib.figure import Figure

    if ax is None:
        fig = Figure(figsize=(7.0, 3.5))
        ax = fig.add_subplot()
    dates = [r.date for r in history.rounds]
    scores = [r.scores() for r in history.rounds]
    ax.plot(dates, [s["z"].value for s in scores], "o", label="z")
    ax.plot(dates, [s["zeta"].value for s in scores], "s", mfc="none", label="ζ")
    for level, style in ((2.0, "--"), (3.0, ":")):
        ax.axhline(level, color="tab:red", ls=style, lw=1.0)
        ax.axhline(-level, color="tab:red", ls=style, lw=1.0)
    ax.axhline(0.0, color="k", lw=0.8)
    ax.set_ylim(-3.5, 3.5)
    ax.set_xlabel("date of the round")
    ax.set_ylabel("score [1]")
    ax.set_title("proficiency scores (ISO 13528)")
    ax.legend(loc="best", fontsize="small")
    ax.figure.autofmt_xdate()
    return ax.figure  # type: ignore[return-value]


def save_control_chart_plot(
    chart: ControlChart, path: str | os.PathLike[str], *, inputs: Sequence[str] = ()
) -> None:
    """Draw :func:`control_chart_figure` into a PNG file, atomically; ``inputs`` are refused
    as the target."""
    from viscometry.io.atomic import atomic_write_bytes
    from viscometry.plots import figure_png

    png = figure_png(control_chart_figure(chart))
    atomic_write_bytes(path, png, protect=tuple(inputs), what="plot file")
