"""Text a person reads about quality-control records and the top-down check.

The edge companion of :mod:`viscometry.evidence.control` and
:mod:`viscometry.evidence.topdown` (numbers and codes only): a control chart becomes its
limits and its run-rule signals in words, proficiency rounds a table of scores, and a
reconciliation the lines the ``reconcile`` command prints — the top-down U, the ratio, both
χ² tests with their assumptions, the verdict and, where the budget does not hold, the inputs to
look at first. User text (names, notes) goes through :func:`viscometry.text.one_line`.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from viscometry.text import format_significant, one_line, unit_suffix

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.evidence.control import ControlChart, RuleViolation
    from viscometry.evidence.topdown import ProficiencyHistory, Reconciliation, TopDown

__all__ = [
    "RECONCILIATION_CAUTION",
    "RULE_TEXT",
    "VERDICT_TEXT",
    "chart_lines",
    "reconciliation_lines",
    "reconciliation_warnings",
    "round_lines",
    "topdown_lines",
    "violation_text",
]

#: Said with every reconciliation verdict.
RECONCILIATION_CAUTION = (
    "The verdict supports the laboratory's own review of its uncertainty under its accredited "
    "procedures; it does not replace it."
)

#: What each run rule detected (ISO 7870-2:2013, Annex B, from memory).
RULE_TEXT = {
    1: "a point beyond the action limit (3σ)",
    2: "9 points in a row on one side of the centre line",
    3: "6 points in a row steadily increasing or decreasing",
    4: "14 points in a row alternating up and down",
    5: "2 of 3 points in a row beyond the warning limit (2σ) on one side",
    6: "4 of 5 points in a row beyond 1σ on one side",
    7: "15 points in a row within 1σ (σ may be overstated)",
    8: "8 points in a row beyond 1σ on either side",
}

#: The verdicts in words.
VERDICT_TEXT = {
    "holds": "the budget's U covers what the records show",
    "borderline": "the records' top-down U exceeds the budget's U, but not significantly: "
    "review the budget's largest inputs",
    "does_not_hold": "the records are not consistent with the budget's u: the budget "
    "understates the uncertainty; review it before relying on it",
}

_FLAGS = {
    "chart_out_of_control": "the control chart signals special causes (run rules {rules}); "
    "s_Rw assumes a stable process: find the causes first",
    "few_control_values": "fewer than 20 control values: s_Rw is rough",
    "few_rounds": "fewer than 3 proficiency rounds: the bias component is rough",
}

_TEST_TEXT = {
    "reproducibility": (
        "test A, check standard against the budget: χ² = (n−1)·s_Rw²/(w·x̄)²",
        "assumes independent, normal values of a stable process and a budget whose u covers "
        "every day-to-day effect",
    ),
    "proficiency": (
        "test B, proficiency rounds against the budget: χ² = Σ ζᵢ² with u_lab = w·xᵢ",
        "assumes independent rounds, normal deviations with mean zero, and the budget's "
        "relative u at each round's value",
    ),
}


def _n(x: float, digits: int = 6) -> str:
    return format_significant(x, digits)


def _pct(x: float, digits: int = 2) -> str:
    return f"{format_significant(100 * x, digits)} %"


def violation_text(v: RuleViolation, chart: ControlChart) -> str:
    """One signal: the rule, what it saw, and the date of the point where it signals."""
    p = chart.record.points[v.index]
    return f"rule {v.rule} at point {v.index + 1} ({p.date}): {RULE_TEXT[v.rule]}"


def chart_lines(chart: ControlChart) -> list[str]:
    """The chart in words: values, centre, σ, limits, s_Rw and every signal."""
    r = chart.record
    u = unit_suffix(r.unit)
    first, last = r.points[0].date, r.points[-1].date
    lines = [
        f"check standard: {one_line(r.check_standard or 'not named', 80)}",
        f"control values: {chart.count} from {first} to {last}",
        f"centre line {_n(chart.centre)}{u} ({'given' if chart.centre_given else 'mean'}), "
        f"σ = {_n(chart.sigma, 2)}{u} ({'given' if chart.sigma_given else 'sample s.d.'})",
        f"warning limits {_n(chart.warning_limits[0])} … {_n(chart.warning_limits[1])}{u}, "
        f"action limits {_n(chart.action_limits[0])} … {_n(chart.action_limits[1])}{u}",
        f"within-lab reproducibility s_Rw = {_n(chart.reproducibility_sd, 2)}{u} "
        f"({_pct(chart.relative_reproducibility_sd)} of the mean, ν = {chart.degrees_of_freedom})",
    ]
    if chart.in_control:
        lines.append("run rules 1–8: no signal")
    else:
        lines.append(f"run rules: {len(chart.violations)} signal(s)")
        lines += [f"  {violation_text(v, chart)}" for v in chart.violations]
    return lines


def round_lines(history: ProficiencyHistory, scheme: str = "") -> list[str]:
    """One line per round: result, assigned value, relative bias, z, ζ and E_n."""
    u = unit_suffix(history.unit)
    lines = [
        f"proficiency rounds ({len(history.rounds)}): {one_line(scheme or 'scheme not named', 80)}"
    ]
    for r in history.rounds:
        s = r.scores()
        lines.append(
            f"  {one_line(r.name, 30)}  {r.date}  x = {r.value:.7g}{u}  x_pt = "
            f"{r.assigned_value:.7g}{u}  bias {_pct(r.relative_bias)}  "
            f"z = {s['z'].value:.2f}  ζ = {s['zeta'].value:.2f}  E_n = {s['E_n'].value:.2f}  "
            f"({_worst(s)})"
        )
    return lines


def _worst(scores: dict) -> str:  # type: ignore[type-arg]
    order = ("satisfactory", "questionable", "unsatisfactory")
    return max((sc.classification for sc in scores.values()), key=order.index)


def topdown_lines(td: TopDown) -> list[str]:
    """The top-down components and U, relative (Nordtest TR 537 / ISO 21748)."""
    return [
        "top-down uncertainty (relative; Nordtest TR 537, ISO 21748):",
        f"  u(Rw) = s_Rw/x̄ = {_pct(td.reproducibility)} from {td.control_values} control values",
        f"  RMS bias = {_pct(td.rms_bias)}, u(Cref) = {_pct(td.reference_uncertainty)} from "
        f"{td.rounds} rounds; u(bias) = {_pct(td.bias_uncertainty)}",
        f"  u_c = √(u(Rw)² + u(bias)²) = {_pct(td.standard_uncertainty)}, "
        f"U = {_pct(td.expanded_uncertainty)} (k = {td.coverage_factor:g})",
    ]


def reconciliation_warnings(rec: Reconciliation, chart: ControlChart | None = None) -> list[str]:
    """The reconciliation's flags, one sentence each."""
    rules = ", ".join(str(r) for r in chart.rules_violated()) if chart is not None else "?"
    return [_FLAGS[f].format(rules=rules) for f in rec.flags]


def reconciliation_lines(rec: Reconciliation) -> list[str]:
    """Ratio, tests with assumptions, verdict, the budget's largest inputs, the caution."""
    c = rec.claim
    u = unit_suffix(c.unit)
    lines = [
        f"budget: {one_line(c.source or 'not named', 80)}",
        f"  y = {_n(c.value)}{u}, u_c = {_n(c.standard_uncertainty, 2)}{u}, "
        f"U = {_pct(c.relative_expanded_uncertainty)} (k = {c.coverage_factor:.3g})",
        f"top-down U at the budget's value: {_n(rec.top_down_expanded_uncertainty, 2)}{u} "
        f"({_pct(rec.top_down.expanded_uncertainty)})",
        f"ratio U_top-down / U_budget = {rec.ratio:.2f}",
    ]
    for t in rec.tests:
        head, assumes = _TEST_TEXT[t.name]
        outcome = "rejected" if t.rejected else "not rejected"
        lines.append(
            f"{head} = {t.statistic:.3g}, ν = {t.degrees_of_freedom}, p = {t.p_value:.3f}: "
            f"consistency {outcome} at α = {t.alpha:g}"
        )
        lines.append(f"  ({assumes})")
    lines.append(f"verdict: {rec.verdict.replace('_', ' ')} — {VERDICT_TEXT[rec.verdict]}")
    if rec.verdict != "holds":
        shares = ", ".join(f"{one_line(n, 30)} {_pct(s)}" for n, s in rec.dominant())
        lines.append(f"look first at the budget's largest variance shares: {shares}")
    lines.append(RECONCILIATION_CAUTION)
    return lines
