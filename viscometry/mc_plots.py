"""Chart of a Monte Carlo simulation of a budget (edge layer: matplotlib, no new numerics).

:func:`monte_carlo_figure` draws the histogram that the Monte Carlo core keeps
(:attr:`~viscometry.gum.montecarlo.MonteCarloResult.histogram_counts` and ``histogram_edges``)
as a probability density, the PDF that the first-order evaluation assigns to the measurand
(normal, or scaled and shifted t with ν_eff degrees of freedom), and both coverage intervals.
As in :mod:`viscometry.plots`, a figure made without an ``ax`` is not registered with
:mod:`matplotlib.pyplot`: it works with any backend (Agg in tests and widget callbacks).
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from viscometry.text import decimals_for, format_percent, format_unit, symbol

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.simulation import BudgetSimulation

__all__ = ["first_order_density", "histogram_density", "monte_carlo_figure"]


def histogram_density(sim: BudgetSimulation) -> tuple[np.ndarray, np.ndarray]:
    """The Monte Carlo histogram scaled to a probability density.

    Parameters
    ----------
    sim : BudgetSimulation
        A simulated budget.

    Returns
    -------
    density : numpy.ndarray
        count_j / (M·w_j) for each bin j of width w_j [1/measurand unit]; it integrates to 1.
    edges : numpy.ndarray
        The bin edges [measurand unit].

    References
    ----------
    JCGM 101:2008, 7.5 (the distribution function of the output as a discrete
    representation from M model values).
    """
    counts = np.asarray(sim.mc.histogram_counts, dtype=float)
    edges = np.asarray(sim.mc.histogram_edges, dtype=float)
    widths = np.diff(edges)
    total = counts.sum()
    density = counts / (total * widths) if total > 0 else np.zeros_like(counts)
    return density, edges


def first_order_density(sim: BudgetSimulation, x: np.ndarray) -> np.ndarray:
    """PDF of the measurand implied by the first-order (or higher-order) result.

    Parameters
    ----------
    sim : BudgetSimulation
        A simulated budget.
    x : array_like
        Values of the measurand [measurand unit].

    Returns
    -------
    numpy.ndarray
        A normal density N(y, u_c²) when ν_eff is infinite, else the scaled and shifted t
        density with ν = ν_eff (truncated, as used for k), location y and scale u_c
        [1/measurand unit].

    Notes
    -----
    (Y − y)/u_c is taken as t-distributed with ν_eff degrees of freedom (JCGM 100:2008,
    G.3 and G.6.4; JCGM 101:2008, 6.4.9), so the first-order interval y ± t_p(ν_eff)·u_c is
    exactly the central 100p % interval of this density.
    """
    from scipy import stats  # here, not at import: only a drawn chart needs it (slow import)

    fo = sim.first_order
    xs = np.asarray(x, dtype=float)
    u = fo.standard_uncertainty
    if not u > 0:
        return np.zeros_like(xs)
    nu = fo.effective_dof_used
    if math.isfinite(nu):
        return stats.t.pdf(xs, df=nu, loc=fo.value, scale=u)
    return stats.norm.pdf(xs, loc=fo.value, scale=u)


def monte_carlo_figure(
    sim: BudgetSimulation,
    ax: Axes | None = None,
    *,
    figsize: tuple[float, float] = (6.4, 4.0),
    title: str | None = None,
) -> Figure:
    """Histogram of the Monte Carlo values with the first-order PDF and both intervals.

    Parameters
    ----------
    sim : BudgetSimulation
        A simulated budget (:func:`viscometry.gum.simulation.simulate_budget`).
    ax : matplotlib Axes, optional
        Draw into these axes (e.g. from ``plt.subplots()`` in a workbook). When omitted a
        new, stand-alone :class:`~matplotlib.figure.Figure` is created that pyplot does not
        track (safe under any backend, nothing to close).
    figsize : (float, float)
        Size of a new figure [inch]; ignored when ``ax`` is given.
    title : str, optional
        Axes title; default states the trials and the validation verdict.

    Returns
    -------
    matplotlib.figure.Figure
        The figure holding the chart.

    Notes
    -----
    The histogram is drawn as a density (:func:`histogram_density`); the curve is
    :func:`first_order_density`. Solid vertical lines mark the Monte Carlo coverage
    interval (``sim.mc.interval``, symmetric or shortest), dashed lines the first-order
    interval y ± U_p; the legend gives their end-points. A chart hides numbers, so a
    workbook should also print them (``sim.summary_lines()``).

    References
    ----------
    JCGM 101:2008, 7.5, 7.7 and 8.2.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> from viscometry.gum.simulation import simulate_budget
    >>> b = Budget.from_formula("y", "x**2", [InputQuantity.normal("x", 1.0, 0.1)])
    >>> fig = monte_carlo_figure(simulate_budget(b, trials=20_000, seed=1))
    >>> len(fig.axes), len(fig.axes[0].get_legend().get_texts())
    (1, 4)
    """
    if ax is None:
        fig = Figure(figsize=figsize, layout="constrained")
        ax = fig.add_subplot()
    else:
        fig = ax.figure  # type: ignore[assignment]
    mc, fo = sim.mc, sim.first_order
    unit = format_unit(sim.unit)
    unit_text = f" {unit}" if unit else ""
    density, edges = histogram_density(sim)
    ax.stairs(
        density,
        edges,
        fill=True,
        color="tab:blue",
        alpha=0.45,
        label=f"Monte Carlo, M = {mc.trials}",
    )
    f_low, f_high = sim.first_order_interval
    lo = min(edges[0], f_low)
    hi = max(edges[-1], f_high)
    x = np.linspace(lo, hi, 400)
    nu = fo.effective_dof_used
    if math.isfinite(nu):
        shape = f"t, ν = {nu:.0f}" if nu < 1e4 else f"t, ν = {nu:.2g}"
    else:
        shape = "normal"
    ax.plot(
        x,
        first_order_density(sim, x),
        color="tab:orange",
        linewidth=1.8,
        label=f"{fo.propagation} PDF ({shape})",
    )
    dec = decimals_for(sim.validation.tolerance)
    low, high = mc.interval
    kind = "symmetric" if mc.interval_kind == "symmetric" else "shortest"
    p = format_percent(mc.coverage_probability)
    for i, xv in enumerate((low, high)):
        ax.axvline(
            xv,
            color="tab:blue",
            linestyle="-",
            linewidth=1.4,
            label=(
                f"MC {p} % interval ({kind}) [{low:.{dec}f}, {high:.{dec}f}]" if i == 0 else None
            ),
        )
    for i, xv in enumerate((f_low, f_high)):
        ax.axvline(
            xv,
            color="tab:orange",
            linestyle="--",
            linewidth=1.4,
            label=(
                f"{fo.propagation} y ± U [{f_low:.{dec}f}, {f_high:.{dec}f}]" if i == 0 else None
            ),
        )
    name = symbol(sim.measurand)
    ax.set_xlabel(f"{name} / {unit}" if unit else name)
    ax.set_ylabel(f"probability density / ({unit})⁻¹" if unit else "probability density")
    ax.set_ylim(0.0, 1.08 * float(max(np.max(density), np.max(first_order_density(sim, x)))))
    verdict = "validated" if sim.validated else "not validated"
    delta = f"{sim.validation.tolerance:.{dec}f}{unit_text}"
    ax.set_title(
        title if title is not None else f"{name}: {fo.propagation} budget {verdict} at δ = {delta}"
    )
    # The legend goes below the axes, clear of the histogram and the interval lines.
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.16), fontsize=7, ncols=2, frameon=False)
    return fig  # type: ignore[return-value]
