"""Plain-text and HTML renderings of an evaluated budget (edge layer, no numerics here)."""

from __future__ import annotations

import html
import math
from typing import TYPE_CHECKING

from viscometry import units as _units

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import BudgetResult

__all__ = ["HEADERS", "budget_text", "budget_html", "format_number", "format_dof", "table_rows"]


def format_number(x: float, digits: int = 4) -> str:
    """Compact fixed-precision text for a table cell (``digits`` significant digits)."""
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return ""
    if x == 0:
        return "0"
    return f"{x:.{digits}g}"


def format_dof(nu: float) -> str:
    """Degrees of freedom for display: ``'∞'`` or a number with at most one decimal."""
    if math.isinf(nu):
        return "∞"
    return f"{nu:.1f}".rstrip("0").rstrip(".")


def table_rows(result: BudgetResult, value_digits: int = 8) -> list[list[str]]:
    """Display cells of the budget table (see :data:`HEADERS`): one row per input, then one
    per correlation term. Shared by the text, HTML and exported reports."""
    rows = []
    for c in result.contributions:
        rows.append(
            [
                c.name,
                f"{c.value:.{value_digits}g}",
                _units.format_unit(c.unit) if c.unit else "1",
                format_number(c.standard_uncertainty, 3),
                c.distribution,
                c.evaluation,
                format_dof(c.dof),
                format_number(c.sensitivity, 4),
                c.sensitivity_unit or "1",
                format_number(c.relative_sensitivity, 4),
                format_number(c.contribution, 3),
                f"{100 * c.variance_share:.1f} %",
            ]
        )
    for t in result.cross_terms:
        rows.append(
            [
                f"r({t.first}, {t.second}) = {t.coefficient:g}",
                "",
                "",
                "",
                "",
                "",
                "",
                "",
                "",
                "",
                format_number(
                    math.copysign(math.sqrt(abs(t.covariance_term)), t.covariance_term), 3
                ),
                f"{100 * t.variance_share:.1f} %",
            ]  # fmt: skip
        )
    return rows


HEADERS = [
    "quantity", "estimate", "unit", "u(x)", "distribution", "type", "dof",
    "c", "unit of c", "rel. c", "c·u(x)", "share",
]  # fmt: skip


def _summary_lines(result: BudgetResult) -> list[str]:
    unit = _units.format_unit(result.unit) if result.unit else ""
    lines = [
        f"{result.measurand} = {result.value:.10g} {unit}".rstrip(),
        f"combined standard uncertainty u_c = {result.standard_uncertainty:.4g} {unit}".rstrip(),
        f"effective degrees of freedom ν_eff = {format_dof(result.effective_dof)}"
        + (
            f" (truncated to {format_dof(result.effective_dof_used)})"
            if math.isfinite(result.effective_dof)
            else ""
        ),
        f"coverage factor k = {result.coverage_factor:.3f} ({result.coverage_factor_source}), "
        f"expanded uncertainty U = {result.expanded_uncertainty:.4g} {unit}".rstrip(),
        f"method: {result.method}",
        "result: " + result.statement(),
    ]
    lines += [f"warning: {w}" for w in result.warnings]
    return lines


def budget_text(result: BudgetResult) -> str:
    """A fixed-width text table plus the summary lines and warnings."""
    rows = table_rows(result)
    widths = [max(len(h), *(len(r[i]) for r in rows)) for i, h in enumerate(HEADERS)]
    out = []
    title = result.budget.title or f"Uncertainty budget of {result.measurand}"
    out.append(title)
    model = result.budget.model
    out.append(f"model: {model.output_name} = {model.formula or model.expression}")
    out.append("  ".join(h.ljust(w) for h, w in zip(HEADERS, widths, strict=True)).rstrip())
    out.append("  ".join("-" * w for w in widths))
    for r in rows:
        out.append("  ".join(v.ljust(w) for v, w in zip(r, widths, strict=True)).rstrip())
    out.append("")
    out += _summary_lines(result)
    return "\n".join(out)


def budget_html(result: BudgetResult) -> str:
    """An HTML table for Jupyter (``_repr_html_``): budget rows, then the summary."""
    e = html.escape
    head = "".join(f"<th>{e(h)}</th>" for h in HEADERS)
    body = "".join(
        "<tr>" + "".join(f"<td>{e(v)}</td>" for v in r) + "</tr>" for r in table_rows(result)
    )
    summary = "<br>".join(e(line) for line in _summary_lines(result))
    title = e(result.budget.title or f"Uncertainty budget of {result.measurand}")
    return (
        f"<div class='viscometry-budget'><b>{title}</b>"
        f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"
        f"<p>{summary}</p></div>"
    )
