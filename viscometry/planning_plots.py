"""Charts for planning results: U across the working range, and U before/after upgrades.

Edge layer (matplotlib). Figures are built with :class:`matplotlib.figure.Figure` directly,
not through ``pyplot``, so they work under the Agg backend, leave no global state behind
and display in a notebook when returned. Each function returns the Figure.
"""

from __future__ import annotations

from typing import Any

import numpy as np
from matplotlib.figure import Figure

from viscometry.errors import InputError
from viscometry.planning import UpgradePlan, WorkingRange
from viscometry.text import format_cost, format_unit, symbol

__all__ = ["plot_working_range", "plot_upgrades"]


def plot_working_range(
    result: WorkingRange,
    *,
    relative: bool = False,
    axis: str = "input",
    log_x: bool | None = None,
    scope: Any = None,
    figsize: tuple[float, float] = (7.0, 4.0),
) -> Figure:
    """U (or U/|y|) across the working range, each point coloured by its dominant input.

    Parameters
    ----------
    result : WorkingRange
        From :func:`viscometry.planning.working_range`.
    relative : bool
        Plot the relative expanded uncertainty in percent instead of U [measurand unit].
    axis : {"input", "value"}
        x axis: the input the range runs over (default) or the measurand value.
    log_x : bool or None
        Logarithmic x axis; None chooses log when the x values span more than a factor 50
        and are all positive.
    scope : pandas.DataFrame or None
        A :func:`viscometry.planning.scope_table` (axis "value") drawn as steps of the stated
        relative U (only with ``relative=True`` and ``axis="value"``).
    figsize : (float, float)
        Figure size [inch].

    Returns
    -------
    matplotlib.figure.Figure
    """
    if axis == "input":
        x = np.asarray(result.values)
        xunit = format_unit(result.over_unit) or "1"
        xlabel = f"{symbol(result.over)} / {xunit}"
    elif axis == "value":
        x = np.asarray(result.value)
        xunit = format_unit(result.unit) or "1"
        xlabel = f"{symbol(result.measurand)} / {xunit}"
    else:
        raise InputError(f"axis must be 'input' or 'value', got {axis!r}")
    unit = format_unit(result.unit) or "1"
    if relative:
        y = 100.0 * np.asarray(result.relative_expanded_uncertainty)
        ylabel = "relative expanded uncertainty U/|y| / %"
    else:
        y = np.asarray(result.expanded_uncertainty)
        ylabel = f"expanded uncertainty U / {unit}"
    if log_x is None:
        log_x = bool(np.all(x > 0) and x.max() / x.min() > 50)
    fig = Figure(figsize=figsize, layout="constrained")
    ax = fig.add_subplot()
    ax.plot(x, y, color="0.6", linewidth=1.0, zorder=1)
    dominant = np.array(result.dominant)
    names = [n for n in result.input_names if n in set(result.dominant)]
    cmap = _colours(len(names))
    for i, name in enumerate(names):
        sel = dominant == name
        ax.scatter(x[sel], y[sel], s=18, color=cmap[i], label=f"dominant: {name}", zorder=2)
    if scope is not None:
        if not (relative and axis == "value"):
            raise InputError("scope steps need relative=True and axis='value'")
        for row in scope.itertuples(index=False):
            ax.hlines(100.0 * row[scope.columns.get_loc("stated_relative_expanded_uncertainty")],
                      row[0], row[1], colors="k", linestyles="--", linewidth=1.2)  # fmt: skip
        ax.plot([], [], "k--", label="stated (scope table)")
    if log_x:
        ax.set_xscale("log")
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    ax.set_title(f"{symbol(result.measurand)}: U across the range of {symbol(result.over)}")
    ax.set_ylim(bottom=0, top=1.25 * float(np.nanmax(y)) if np.isfinite(np.nanmax(y)) else None)
    ax.legend(fontsize="small", loc="upper left", ncols=2)
    ax.grid(True, alpha=0.3)
    return fig


def plot_upgrades(
    plan: UpgradePlan,
    names: Any = None,
    *,
    top: int | None = None,
    figsize: tuple[float, float] | None = None,
) -> Figure:
    """U before and after each upgrade option, as horizontal bars (with the target, if any).

    Parameters
    ----------
    plan : UpgradePlan
        From :func:`viscometry.planning.evaluate_upgrades`.
    names : iterable of iterables of str, or None
        The sets to show (each a collection of candidate names); None shows every single
        candidate, plus the cheapest set reaching the target when there is one.
    top : int or None
        Show only the ``top`` options with the smallest U.
    figsize : (float, float) or None
        Figure size [inch]; None sizes by the number of bars.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if names is None:
        options = list(plan.singles)
        if plan.cheapest is not None and plan.cheapest not in options:
            options.append(plan.cheapest)
    else:
        options = [plan.option(n) for n in names]
    options.sort(key=lambda o: o.expanded_uncertainty)
    if top is not None:
        options = options[: max(int(top), 1)]
    if not options:
        raise InputError("no upgrade options to plot")
    unit = format_unit(plan.unit) or "1"
    base = plan.baseline.expanded_uncertainty
    n = len(options)
    fig = Figure(figsize=figsize or (7.0, 1.2 + 0.45 * n), layout="constrained")
    ax = fig.add_subplot()
    ypos = np.arange(n)[::-1]
    ax.barh(ypos, [base] * n, color="0.85", label="before (baseline)", height=0.7)
    after = [o.expanded_uncertainty for o in options]
    ax.barh(ypos, after, color="tab:blue", label="after", height=0.4)
    for yp, o in zip(ypos, options, strict=True):
        ax.text(o.expanded_uncertainty, yp, f"  {o.expanded_uncertainty:.3g} (cost {format_cost(o.cost)})",
                va="center", fontsize="small")  # fmt: skip
    ax.set_yticks(ypos, [o.label for o in options])
    if plan.target is not None:
        ax.axvline(plan.target, color="tab:red", linestyle="--", label=f"target {plan.target:.3g}")
    ax.set_xlabel(f"expanded uncertainty U / {unit}")
    ax.set_xlim(0, max(base, max(after)) * 1.35)
    ax.set_ylim(-0.6, n - 0.4)
    ax.set_title("U before and after each upgrade")
    # below the axes, clear of the bars and the target line
    ax.legend(
        fontsize="small",
        loc="upper center",
        bbox_to_anchor=(0.5, -0.14 - 0.5 / n),
        ncols=3,
        frameon=False,
    )
    return fig


def _colours(n: int) -> list[Any]:
    from matplotlib import colormaps

    cmap = colormaps["tab10"] if n <= 10 else colormaps["tab20"]
    return [cmap(i % cmap.N) for i in range(n)]
