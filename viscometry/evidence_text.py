"""Text a person reads about lab evidence: acceptance verdicts and calibration histories.

The edge companion of :mod:`viscometry.evidence` (which holds numbers and codes only): a
verdict becomes a sentence that says what to do, a drift fit's flags become warnings, and a
history becomes the lines the ``drift`` command prints. User text (viscometer names,
certificate sources) goes through :func:`viscometry.text.one_line`.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from typing import TYPE_CHECKING

from viscometry.text import format_like, format_significant, one_line, unit_suffix

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.evidence.acceptance import AcceptanceLimit, AcceptanceVerdict
    from viscometry.evidence.history import DriftFit, Prediction, RecalibrationInterval
    from viscometry.gum.inputs import InputQuantity

__all__ = [
    "ACCEPTANCE_CAUTION",
    "budget_input_lines",
    "drift_lines",
    "fit_warnings",
    "limit_lines",
    "overdue_warnings",
    "verdict_statement",
]

#: Said with every acceptance verdict.
ACCEPTANCE_CAUTION = (
    "Which limit applies is set by the test method and the laboratory's own procedures; "
    "the computed verdict supports that judgement."
)

_WARNINGS = {
    "few_certificates": "only two certificates: the drift has no degrees of freedom left to "
    "check it; treat the slope with care",
    "scatter_exceeds_uncertainties": "the certificates scatter more than their uncertainties "
    "allow (Birge ratio {birge:.2g} > 1); look for a cause (cleaning, damage, a changed "
    "calibration method)",
    "covariance_inflated": "the drift's covariance was enlarged by the Birge ratio squared",
}

_CHECK_WORDS = {
    "flow_time": ("flow times", "timing"),
    "determination": ("determinations", "determination"),
    "laboratories": ("laboratories' results", "result"),
}


def _n(x: float, digits: int = 6) -> str:
    return format_significant(x, digits)


def _g(x: float, digits: int = 8) -> str:
    """A number with up to ``digits`` significant digits, no trailing zeros."""
    return f"{x:.{digits}g}"


def fit_warnings(fit: DriftFit) -> list[str]:
    """The warnings of a drift fit, one sentence each."""
    return [_WARNINGS[f].format(birge=fit.birge_ratio) for f in fit.flags]


def verdict_statement(verdict: AcceptanceVerdict, unit: str = "") -> str:
    """One sentence: what was compared, against which limit, and what to do next.

    Examples
    --------
    >>> from viscometry.evidence import check_flow_times
    >>> verdict_statement(check_flow_times([312.40, 312.62]), "s")
    'accept: the 2 flow times agree (range 0.22 s ≤ limit 0.625 s); report their mean 312.51 s'
    """
    plural, single = _CHECK_WORDS[verdict.check]
    u = unit_suffix(unit) if unit else ""
    n = len(verdict.values)
    compare = f"range {_g(verdict.spread, 3)}{u} {{}} limit {_g(verdict.limit, 3)}{u}"
    if verdict.action == "accept":
        return (
            f"accept: the {n} {plural} agree ({compare.format('≤')}); "
            f"report their mean {_g(verdict.result, 7)}{u}"
        )
    if verdict.action == "repeat":
        more = f"{verdict.more} more {single}{'s' if verdict.more > 1 else ''}"
        return f"repeat: the {n} {plural} differ ({compare.format('>')}); take {more}"
    tail = (
        f"; if no cause is found, ISO 5725-6 reports the median {_g(verdict.result, 7)}{u}"
        if verdict.result is not None
        else ""
    )
    causes = (
        "the laboratories look for the cause together (method, calibration, sample)"
        if verdict.check == "laboratories"
        else "look for the cause before reporting (cleanliness, particles, bubbles, temperature)"
    )
    return f"investigate: the {n} {plural} differ ({compare.format('>')}); {causes}{tail}"


def limit_lines(limits: Mapping[str, AcceptanceLimit]) -> list[str]:
    """The limit table: name, what it compares, the limit, its source."""
    out = []
    for name, lim in limits.items():
        if lim.exponent == 0:
            rule = f"{_g(lim.coefficient, 4)} (absolute)"
        elif lim.offset == 0 and lim.exponent == 1:
            rule = f"{_g(100 * lim.coefficient, 4)} % of the mean"
        else:
            rule = f"{_g(lim.coefficient, 4)}·(y + {_g(lim.offset, 4)})^{_g(lim.exponent, 3)}"
        out.append(f"{one_line(name, 60)}  [{lim.applies_to}]  {rule}")
        if lim.description:
            out.append(f"    {one_line(lim.description, 100)}")
        out.append(f"    source: {one_line(lim.source or 'not stated', 100)}")
    return out


def _records_lines(fit: DriftFit) -> list[str]:
    h = fit.history
    u = unit_suffix(h.unit)
    lines = [f"certificates ({len(h.records)}), C and U in{u or ' the unit of C'}:"]
    for r, res in zip(h.records, fit.fit.residuals, strict=True):
        lines.append(
            f"  {r.date}  C = {format_like(r.constant, r.expanded_uncertainty / 10)}  "
            f"U = {_n(r.expanded_uncertainty, 2)} "
            f"(k = {_g(r.coverage_factor, 3)})  residual {_n(res, 2)}  "
            f"{one_line(r.source, 60)}"
        )
    return lines


def drift_lines(
    fit: DriftFit,
    prediction: Prediction | None = None,
    interval: RecalibrationInterval | None = None,
) -> list[str]:
    """What the ``drift`` command prints: certificates, drift, prediction, interval."""
    h = fit.history
    u = unit_suffix(h.unit)
    lines = [f"viscometer: {one_line(h.viscometer or 'not named', 80)}", *_records_lines(fit)]
    sig = "significant" if fit.drift_significant() else "not significant"
    lines.append(
        f"drift: b = {_n(fit.slope, 3)}{u} per year, u(b) = {_n(fit.slope_uncertainty, 2)}"
        f"{u} per year ({sig} at k = 2); ν = {fit.degrees_of_freedom}, "
        f"Birge ratio {_n(fit.birge_ratio, 2)}"
    )
    if prediction is not None:
        p = prediction
        lines.append(
            f"predicted constant on {p.date} ({_n(p.years_since_last, 3)} years after the last "
            f"certificate): C = ({format_like(p.constant, p.expanded_uncertainty / 10)} ± {_n(p.expanded_uncertainty, 2)}){u}, "
            f"k = {_g(p.coverage_factor, 3)}"
        )
        lines.append(
            f"stability term for a budget: {_n(p.drift, 2)}{u}, "
            f"u = {_n(p.drift_uncertainty, 2)}{u} (drift since {h.last.date})"
        )
    if interval is not None:
        t = interval
        capped = f" (capped at {_n(t.longest, 3)} years)" if t.capped else ""
        lines.append(
            f"recommended recalibration interval: {_n(t.years, 2)} years ({t.days} days){capped},"
            f" next calibration by {t.next_date}: drift + {_g(t.coverage_factor, 3)}·u(b) stays "
            f"within {_g(100 * t.fraction, 3)} % of U = {_n(h.last.expanded_uncertainty, 2)}{u}"
        )
    return lines


def overdue_warnings(prediction: Prediction, interval: RecalibrationInterval) -> list[str]:
    """A warning when the prediction date is past the recommended recalibration date.

    Examples
    --------
    >>> import datetime as dt
    >>> from types import SimpleNamespace as NS
    >>> overdue_warnings(NS(date=dt.date(2026, 5, 1)), NS(next_date=dt.date(2025, 12, 13)))[0][:40]
    'recalibration overdue on 2026-05-01: the'
    >>> overdue_warnings(NS(date=dt.date(2025, 1, 1)), NS(next_date=dt.date(2025, 12, 13)))
    []
    """
    if prediction.date <= interval.next_date:
        return []
    return [
        f"recalibration overdue on {prediction.date}: the recommended date {interval.next_date} "
        "has passed, so the predicted constant leans on the drift model beyond the interval "
        "that keeps the drift within its share of U; recalibrate"
    ]


def budget_input_lines(term: InputQuantity) -> list[str]:
    """The stability term as a budget-file input table (TOML), ready to paste.

    Examples
    --------
    >>> from viscometry.gum import InputQuantity
    >>> print("\\n".join(budget_input_lines(InputQuantity.normal("dC", 6e-06, 7.6e-06, "mm^2/s^2"))))
    [inputs.dC]
    value = 6e-06
    unit = "mm^2/s^2"
    standard_uncertainty = 7.6e-06
    """
    import json

    lines = [
        f"[inputs.{term.name}]",
        f"value = {term.value!r}",
        f"unit = {json.dumps(term.unit)}",
        f"standard_uncertainty = {term.standard_uncertainty!r}",
    ]
    for key in ("description", "source"):
        text = getattr(term, key)
        if text:
            lines.append(f"{key} = {json.dumps(text)}")  # ASCII escapes: valid TOML strings
    return lines


def warning_lines(warnings: Iterable[str]) -> list[str]:
    """``warning: ...`` lines for text output."""
    return [f"warning: {w}" for w in warnings]
