"""``viscometry reconcile``: does a budget's U hold up against the lab's own records?

Reads a check standard's control chart (CSV, ``viscometry-control/1``), the laboratory's
proficiency rounds (CSV, ``viscometry-proficiency/1``) and a budget file (TOML); prints the
Shewhart chart with its run-rule signals (ISO 7870-2), the rounds' scores (ISO 13528), the
top-down uncertainty (within-lab reproducibility and bias; Nordtest TR 537, ISO 21748) and the
verdict: the ratio of the top-down U to the budget's U and two χ² tests of consistency (see
docs/evidence-topdown.md). With ``--history`` it also prints the viscometer constant's drift,
the constant predicted at ``--date`` and the recalibration interval (as ``viscometry drift``).
The verdict supports the laboratory's accredited procedures; it does not replace them.
"""

from __future__ import annotations

import argparse

NAME = "reconcile"
HELP = "top-down check of a budget's U against control-chart and proficiency records"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry reconcile``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("--control", required=True, metavar="CSV",
                        help="control chart of a check standard (viscometry-control/1)")  # fmt: skip
    parser.add_argument("--proficiency", required=True, metavar="CSV",
                        help="proficiency rounds (viscometry-proficiency/1)")  # fmt: skip
    parser.add_argument("--budget", required=True, metavar="TOML",
                        help="the budget file whose U is checked")  # fmt: skip
    parser.add_argument("--history", metavar="CSV",
                        help="also: calibration history of the viscometer (viscometry-history/1)")  # fmt: skip
    parser.add_argument("--date", metavar="YYYY-MM-DD",
                        help="date of the constant's prediction with --history (default today)")  # fmt: skip
    parser.add_argument("--alpha", type=float, default=0.05, metavar="A",
                        help="significance level of the χ² tests (default 0.05)")  # fmt: skip
    parser.add_argument("--coverage-factor", "-k", type=float, default=2.0, metavar="K",
                        help="k of the top-down U (default 2)")  # fmt: skip
    parser.add_argument("--centre", type=float, metavar="X",
                        help="fixed centre line of the chart (default: the mean)")  # fmt: skip
    parser.add_argument("--sigma", type=float, metavar="S",
                        help="fixed σ of the chart (default: the sample s.d.)")  # fmt: skip
    parser.add_argument("--plot", metavar="PNG", help="also draw the control chart into PNG")
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def run(args: argparse.Namespace) -> int:
    """Load, compute and print (or JSON). Returns 0."""
    from viscometry.commands._common import evaluate_file, print_json
    from viscometry.errors import ViscometryError
    from viscometry.evidence.control import control_chart
    from viscometry.evidence.topdown import BudgetClaim, reconcile
    from viscometry.evidence_qc_text import reconciliation_warnings
    from viscometry.io.qc_records import load_control, load_proficiency

    cf = load_control(args.control)
    pf = load_proficiency(args.proficiency)
    bf, result = evaluate_file(args.budget)
    try:
        chart = control_chart(cf.record, centre=args.centre, sigma=args.sigma)
    except ViscometryError as exc:
        raise type(exc)(f"{cf.source}: {exc}") from exc
    claim = BudgetClaim.from_result(result, bf.source)
    try:
        rec = reconcile(chart, pf.history, claim, coverage_factor=args.coverage_factor,
                        alpha=args.alpha)  # fmt: skip
    except ViscometryError as exc:  # e.g. records and budget of different quantities
        raise type(exc)(f"{cf.source}, {pf.source}, {bf.source}: {exc}") from exc
    drift = _drift(args) if args.history else None
    warnings = reconciliation_warnings(rec, chart) + list(result.warnings)
    if drift is not None:
        warnings += drift[-1]
    if args.plot:
        from viscometry.evidence_qc_plots import save_control_chart_plot

        save_control_chart_plot(chart, args.plot, inputs=(args.control, args.proficiency,
                                                          args.budget))  # fmt: skip
    sources = _sources(cf, pf, bf, drift)
    if args.json:
        print_json(_to_dict(cf, pf, chart, rec, drift, warnings, sources))
        return 0
    _print_text(pf, chart, rec, drift, warnings, sources)
    return 0


def _drift(args: argparse.Namespace):  # noqa: ANN202 - (file, fit, prediction, interval, warnings)
    from viscometry.commands.drift import _date
    from viscometry.errors import ViscometryError
    from viscometry.evidence.history import fit_drift
    from viscometry.evidence_text import fit_warnings
    from viscometry.io.history import load_history

    hf = load_history(args.history)
    try:
        fit = fit_drift(hf.history)
        prediction = fit.predict(_date(args.date))
        interval = fit.recalibration_interval()
    except ViscometryError as exc:
        raise type(exc)(f"{hf.source}: {exc}") from exc
    return hf, fit, prediction, interval, fit_warnings(fit)


def _sources(cf, pf, bf, drift) -> dict:  # noqa: ANN001
    out = {
        "control": {"file": cf.source, "fingerprint": cf.fingerprint},
        "proficiency": {"file": pf.source, "fingerprint": pf.fingerprint},
        "budget": {"file": bf.source, "fingerprint": bf.fingerprint},
    }
    if drift is not None:
        out["history"] = {"file": drift[0].source, "fingerprint": drift[0].fingerprint}
    return out


def _print_text(pf, chart, rec, drift, warnings, sources) -> None:  # noqa: ANN001
    from viscometry import __version__
    from viscometry.evidence_qc_text import (
        chart_lines,
        reconciliation_lines,
        round_lines,
        topdown_lines,
    )
    from viscometry.evidence_text import drift_lines, warning_lines
    from viscometry.text import one_line

    blocks = [chart_lines(chart), round_lines(pf.history, pf.scheme)]
    if drift is not None:
        blocks.append(drift_lines(drift[1], drift[2], drift[3]))
    blocks += [topdown_lines(rec.top_down), reconciliation_lines(rec)]
    print("\n\n".join("\n".join(b) for b in blocks))
    for line in warning_lines(warnings):
        print(line)
    for name, s in sources.items():
        print(f"{name}: {one_line(s['file'])} ({s['fingerprint']})")
    print(f"version: viscometry {__version__}")


def _chart_dict(cf, chart) -> dict:  # noqa: ANN001
    from viscometry.evidence_qc_text import RULE_TEXT

    pts = chart.record.points
    return {
        "check_standard": chart.record.check_standard, "unit": chart.record.unit,
        "count": chart.count, "mean": chart.mean, "centre": chart.centre, "sigma": chart.sigma,
        "centre_given": chart.centre_given, "sigma_given": chart.sigma_given,
        "warning_limits": {"lower": chart.warning_limits[0], "upper": chart.warning_limits[1]},
        "action_limits": {"lower": chart.action_limits[0], "upper": chart.action_limits[1]},
        "reproducibility_sd": chart.reproducibility_sd,
        "relative_reproducibility_sd": chart.relative_reproducibility_sd,
        "degrees_of_freedom": chart.degrees_of_freedom, "in_control": chart.in_control,
        "points": [{"date": p.date.isoformat(), "value": p.value, "note": p.note, "row": row}
                   for p, row in zip(pts, cf.rows, strict=True)],
        "violations": [{"rule": v.rule, "point": v.index + 1, "date": pts[v.index].date.isoformat(),
                        "row": cf.rows[v.index], "points": [i + 1 for i in v.points],
                        "description": RULE_TEXT[v.rule]} for v in chart.violations],
    }  # fmt: skip


_SCORE_KEYS = {"z": "z", "z'": "z_prime", "zeta": "zeta", "E_n": "e_n"}


def _rounds_dict(pf) -> dict:  # noqa: ANN001
    rounds = []
    for r, row in zip(pf.history.rounds, pf.rows, strict=True):
        scores = {_SCORE_KEYS[k]: {"value": s.value, "classification": s.classification}
                  for k, s in r.scores().items()}  # fmt: skip
        rounds.append({
            "round": r.name, "date": r.date.isoformat(), "row": row, "value": r.value,
            "expanded_uncertainty": r.expanded_uncertainty, "assigned_value": r.assigned_value,
            "assigned_uncertainty": r.assigned_uncertainty, "sd_for_pt": r.sd_for_pt,
            "relative_bias": r.relative_bias, "scores": scores,
        })  # fmt: skip
    return {"scheme": pf.scheme, "unit": pf.history.unit, "rounds": rounds}


def _to_dict(cf, pf, chart, rec, drift, warnings, sources) -> dict:  # noqa: ANN001
    """The JSON object (keys in docs/evidence-topdown.md)."""
    from viscometry import __version__
    from viscometry.evidence_qc_text import RECONCILIATION_CAUTION
    from viscometry.io.json_out import jsonable, schema

    td, c = rec.top_down, rec.claim
    out = {
        "schema": schema("reconcile"), "chart": _chart_dict(cf, chart),
        "proficiency": _rounds_dict(pf),
        "top_down": {
            "reproducibility": td.reproducibility, "rms_bias": td.rms_bias,
            "reference_uncertainty": td.reference_uncertainty,
            "bias_uncertainty": td.bias_uncertainty,
            "standard_uncertainty": td.standard_uncertainty,
            "coverage_factor": td.coverage_factor,
            "expanded_uncertainty": td.expanded_uncertainty,
            "expanded_uncertainty_at_budget_value": rec.top_down_expanded_uncertainty,
            "relative": True,
        },
        "budget": {
            "value": c.value, "unit": c.unit, "standard_uncertainty": c.standard_uncertainty,
            "coverage_factor": c.coverage_factor,
            "relative_expanded_uncertainty": c.relative_expanded_uncertainty,
            "variance_shares": [{"name": n, "variance_share": s} for n, s in c.shares],
        },
        "reconciliation": {
            "ratio": rec.ratio, "verdict": rec.verdict,
            "tests": [{"name": t.name, "statistic": t.statistic,
                       "degrees_of_freedom": t.degrees_of_freedom, "p_value": t.p_value,
                       "alpha": t.alpha, "rejected": t.rejected} for t in rec.tests],
            "dominant_inputs": [{"name": n, "variance_share": s} for n, s in rec.dominant()],
            "caution": RECONCILIATION_CAUTION,
        },
        "warnings": warnings, "sources": sources, "version": __version__,
    }  # fmt: skip
    if drift is not None:
        out["drift"] = _drift_dict(drift)
    return jsonable(out)


def _drift_dict(drift) -> dict:  # noqa: ANN001
    _hf, fit, p, t, _w = drift
    return {
        "viscometer": fit.history.viscometer, "unit": fit.history.unit,
        "slope": fit.slope, "slope_uncertainty": fit.slope_uncertainty, "time_unit": "a",
        "prediction": {"date": p.date.isoformat(), "constant": p.constant,
                       "standard_uncertainty": p.standard_uncertainty,
                       "coverage_factor": p.coverage_factor,
                       "expanded_uncertainty": p.expanded_uncertainty},
        "interval": {"years": t.years, "days": t.days, "next_date": t.next_date.isoformat()},
    }  # fmt: skip
