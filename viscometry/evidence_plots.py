"""Chart of a viscometer constant's calibration history (edge layer: matplotlib only).

:func:`history_figure` draws the certificates with their expanded-uncertainty error bars,
the weighted drift line with its band ±k·u(line), and the constant predicted at a date with
its U. As in :mod:`viscometry.plots`, a figure made without an ``ax`` is not registered with
:mod:`matplotlib.pyplot`; a workbook passes its own ``ax`` and ends with ``plt.show()``.
"""

from __future__ import annotations

import datetime as dt
import os
from collections.abc import Sequence
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:  # pragma: no cover
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

    from viscometry.evidence.history import DriftFit, Prediction

__all__ = ["history_figure", "save_history_plot"]


def history_figure(
    fit: DriftFit,
    prediction: Prediction | None = None,
    *,
    coverage_factor: float = 2.0,
    ax: Axes | None = None,
) -> Figure:
    """Certificates (C ± U), drift line with its ±k·u band, and the prediction (C ± U).

    Returns
    -------
    matplotlib.figure.Figure
        The figure (``ax.figure`` when ``ax`` is given).
    """
    from matplotlib.figure import Figure

    from viscometry.text import one_line, unit_label

    if ax is None:
        fig = Figure(figsize=(7.0, 4.0))
        ax = fig.add_subplot()
    h = fit.history
    dates = [r.date for r in h.records]
    end = prediction.date if prediction is not None else h.last.date
    span = (end - dates[0]).days
    grid = [dates[0] + dt.timedelta(days=float(d)) for d in np.linspace(0, max(span, 1), 200)]
    value, u = fit.line(grid)
    ax.fill_between(grid, value - coverage_factor * u, value + coverage_factor * u,
                    alpha=0.25, label=f"drift line ± {coverage_factor:g}·u")  # fmt: skip
    ax.plot(grid, value, lw=1.2)
    ax.errorbar(dates, [r.constant for r in h.records],
                yerr=[r.expanded_uncertainty for r in h.records], fmt="o", capsize=4,
                label="certificates (C ± U)")  # fmt: skip
    if prediction is not None:
        ax.errorbar([prediction.date], [prediction.constant],
                    yerr=[prediction.expanded_uncertainty], fmt="s", capsize=4,
                    label=f"predicted {prediction.date} (C ± U)")  # fmt: skip
    ax.set_xlabel("date of calibration")
    ax.set_ylabel(f"viscometer constant C [{unit_label(h.unit)}]")
    ax.set_title(one_line(h.viscometer or "calibration history", 70))
    ax.legend(loc="best", fontsize="small")
    ax.figure.autofmt_xdate()
    return ax.figure  # type: ignore[return-value]


def save_history_plot(
    fit: DriftFit,
    prediction: Prediction | None,
    path: str | os.PathLike[str],
    *,
    inputs: Sequence[str | os.PathLike[str]] = (),
) -> None:
    """Draw :func:`history_figure` into a PNG file, atomically; ``inputs`` are refused as
    the target."""
    from viscometry.io.atomic import atomic_write_bytes
    from viscometry.plots import figure_png

    png = figure_png(history_figure(fit, prediction))
    atomic_write_bytes(path, png, protect=tuple(inputs), what="plot file")
