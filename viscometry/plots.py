"""Charts of evaluated budgets (edge layer: matplotlib only, no numerics beyond sorting).

Every function here draws into a :class:`matplotlib.figure.Figure` and returns it. A figure
made here without an ``ax`` is *not* registered with :mod:`matplotlib.pyplot`, so it works
with any backend (Agg on a server, in plain pytest, inside a widget callback) and never
leaks open pyplot figures. Nothing here calls ``plt.show()``; a workbook passes its own
``ax`` from ``plt.subplots()`` and ends the cell with ``plt.show()``.
"""

from __future__ import annotations

import io
from typing import TYPE_CHECKING

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import BudgetResult

from viscometry.text import symbol

__all__ = ["pareto_data", "pareto_figure", "figure_png"]


def pareto_data(result: BudgetResult) -> tuple[tuple[str, float], ...]:
    """Variance shares of a budget, sorted from the largest to the smallest.

    Parameters
    ----------
    result : BudgetResult
        An evaluated budget.

    Returns
    -------
    tuple of (label, share)
        One entry per input, ``share`` = (cᵢu(xᵢ))²/u_c² [1] (a fraction, not a percent),
        plus one entry per correlation cross-term labelled ``"r(a, b)"`` whose share is
        2 r cᵢcⱼu(xᵢ)u(xⱼ)/u_c² and may be negative. The shares add up to 1 when u_c > 0.
        Ties keep the order of the budget.

    Notes
    -----
    The variance shares are the terms of the law of propagation of uncertainty,
    u_c² = Σ cᵢ²u²(xᵢ) + 2 Σ r cᵢcⱼu(xᵢ)u(xⱼ), divided by u_c² (JCGM 100:2008, 5.1.2 and
    5.2.2).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 0.3),
    ...                                        InputQuantity.normal("b", 2.0, 0.4)])
    >>> [(name, round(share, 2)) for name, share in pareto_data(b.evaluate())]
    [('b', 0.64), ('a', 0.36)]
    """
    rows = [(c.name, float(c.variance_share)) for c in result.contributions]
    rows += [(f"r({t.first}, {t.second})", float(t.variance_share)) for t in result.cross_terms]
    order = sorted(range(len(rows)), key=lambda i: (-rows[i][1], i))
    return tuple(rows[i] for i in order)


def pareto_figure(
    result: BudgetResult,
    ax: Axes | None = None,
    *,
    figsize: tuple[float, float] = (6.4, 4.0),
    title: str | None = None,
) -> Figure:
    """Pareto chart of the variance shares of a budget, with the cumulative share.

    Bars show each input's share of u_c² in percent, sorted descending; a line with markers
    shows the running total (reaching 100 %). Bars are labelled with their percentage.

    Parameters
    ----------
    result : BudgetResult
        An evaluated budget.
    ax : matplotlib Axes, optional
        Draw into these axes (e.g. from ``plt.subplots()`` in a workbook). When omitted a
        new, stand-alone :class:`~matplotlib.figure.Figure` is created that pyplot does not
        track (safe under any backend, nothing to close).
    figsize : (float, float)
        Size of a new figure [inch]; ignored when ``ax`` is given.
    title : str, optional
        Axes title; default "Variance shares of <measurand>".

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the chart.

    Notes
    -----
    Shares as in :func:`pareto_data` (JCGM 100:2008, 5.1.2). A chart hides the numbers, so a
    workbook should print them too (:func:`pareto_data`).

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + b", [InputQuantity.normal("a", 1.0, 0.3),
    ...                                        InputQuantity.normal("b", 2.0, 0.4)])
    >>> fig = pareto_figure(b.evaluate())
    >>> [t.get_text() for t in fig.axes[0].get_xticklabels()]
    ['b', 'a']
    """
    if ax is None:
        # Fixed margins rather than a layout engine: one draw instead of two (widget redraws).
        fig = Figure(figsize=figsize)
        fig.subplots_adjust(left=0.13, right=0.98, bottom=0.12, top=0.9)
        ax = fig.add_subplot()
    else:
        fig = ax.figure  # type: ignore[assignment]
    data = pareto_data(result)
    labels = [name for name, _ in data]
    shares = 100.0 * np.array([share for _, share in data], dtype=float)
    positions = np.arange(len(data))
    bars = ax.bar(positions, shares, color="tab:blue", label="variance share")
    ax.bar_label(bars, labels=[f"{s:.1f} %" for s in shares], fontsize=8, padding=2)
    cumulative = np.cumsum(shares)
    ax.plot(positions, cumulative, color="tab:orange", marker="o", label="cumulative")
    ax.set_xticks(positions, labels)
    ax.set_ylabel("share of combined variance / %")
    # Headroom above 100 % holds the legend, clear of the bars and the cumulative line.
    top = max(
        130.0,
        float(np.max(cumulative, initial=0.0)) + 30.0,
        float(np.max(shares, initial=0.0)) + 30.0,
    )
    bottom = min(0.0, float(np.min(shares, initial=0.0)) - 5.0)
    ax.set_ylim(bottom, top)
    ax.axhline(0.0, color="black", linewidth=0.6)
    ax.set_title(title if title is not None else f"Variance shares of {symbol(result.measurand)}")
    ax.legend(loc="upper left", fontsize=8, ncols=2)
    return fig  # type: ignore[return-value]


def figure_png(fig: Figure, dpi: float = 80.0) -> bytes:
    """Render a figure to PNG bytes with the Agg renderer (no display needed).

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    dpi : float
        Resolution [dots per inch].

    Returns
    -------
    bytes
        The PNG file content (without the software-version metadata, so equal figures give
        equal bytes on one installation).

    Examples
    --------
    >>> png = figure_png(Figure(figsize=(1, 1)))
    >>> png[:8] == b"\\x89PNG\\r\\n\\x1a\\n"
    True
    """
    buffer = io.BytesIO()
    fig.savefig(buffer, format="png", dpi=dpi, metadata={"Software": None})
    return buffer.getvalue()
