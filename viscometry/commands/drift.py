"""``viscometry drift FILE``: drift of a viscometer constant from its calibration history.

Reads a calibration history (CSV, ``viscometry-history/1``, see docs/evidence.md), fits the
constant against time by weighted least squares, and prints the drift per year with its
uncertainty, the constant predicted at ``--date`` (anchored on the last certificate, drift
since then included), the stability term a budget can take, and a recommended recalibration
interval: the time after which |b| + k·u(b) uses ``--fraction`` of the last certificate's U
(common practice, no source; ILAC-G24 / OIML D 10 describe interval reviews, from memory).
"""

from __future__ import annotations

import argparse

NAME = "drift"
HELP = "drift of a viscometer constant from its calibration history, prediction and interval"


def add_arguments(parser: argparse.ArgumentParser) -> None:
    """Options of ``viscometry drift``."""
    parser.description = (__doc__ or HELP).split("\n", 1)[-1].strip() or HELP
    parser.add_argument("file", metavar="FILE", help="calibration history (CSV, docs/evidence.md)")
    parser.add_argument("--date", metavar="YYYY-MM-DD",
                        help="date of the prediction (default: today)")  # fmt: skip
    parser.add_argument("--fraction", type=float, default=0.5, metavar="F",
                        help="share of U the drift may use before recalibration (default 0.5)")  # fmt: skip
    parser.add_argument("--longest", type=float, default=5.0, metavar="YEARS",
                        help="longest interval recommended (default 5 years)")  # fmt: skip
    parser.add_argument("--coverage-factor", "-k", type=float, default=2.0, metavar="K",
                        help="k for the predicted U and on u(b) in the interval (default 2)")  # fmt: skip
    parser.add_argument("--no-inflate", action="store_true",
                        help="keep the covariance as the certificates state it even when "
                        "they scatter more than their uncertainties (Birge ratio > 1)")  # fmt: skip
    parser.add_argument("--name", default="dC_drift", metavar="NAME",
                        help="name of the stability term for a budget (default dC_drift)")  # fmt: skip
    parser.add_argument("--plot", metavar="PNG",
                        help="also draw the certificates and the prediction band into PNG")  # fmt: skip
    parser.add_argument("--json", action="store_true", help="print one JSON object instead")


def _date(text: str | None):  # noqa: ANN202 - datetime.date
    import datetime as dt

    from viscometry.errors import InputError

    if text is None:
        return dt.date.today()
    try:
        if len(text) != 10:
            raise ValueError(text)
        return dt.date.fromisoformat(text)
    except ValueError:
        raise InputError(f"--date must be a date YYYY-MM-DD, got {text!r}") from None


def run(args: argparse.Namespace) -> int:
    """Fit, predict and print (or JSON). Returns 0."""
    from viscometry.commands._common import print_json
    from viscometry.errors import ViscometryError
    from viscometry.evidence.history import fit_drift
    from viscometry.evidence_text import (
        budget_input_lines,
        drift_lines,
        fit_warnings,
        overdue_warnings,
        warning_lines,
    )
    from viscometry.io.history import load_history

    hf = load_history(args.file)
    try:
        fit = fit_drift(hf.history, inflate=not args.no_inflate)
        prediction = fit.predict(_date(args.date), args.coverage_factor)
        interval = fit.recalibration_interval(
            args.fraction, coverage_factor=args.coverage_factor, longest=args.longest
        )
        term = fit.stability_input(prediction.date, args.name)
    except ViscometryError as exc:
        raise type(exc)(f"{hf.source}: {exc}") from exc
    warnings = fit_warnings(fit) + overdue_warnings(prediction, interval)
    if args.plot:
        from viscometry.evidence_plots import save_history_plot

        save_history_plot(fit, prediction, args.plot, inputs=(args.file,))
    if args.json:
        print_json(_to_dict(hf, fit, prediction, interval, term, warnings), source=hf.source)
        return 0
    print("\n".join(drift_lines(fit, prediction, interval)))
    print("as a budget input (the model adds it to the last certificate's C):")
    print("\n".join(f"  {line}" for line in budget_input_lines(term)))
    for line in warning_lines(warnings):
        print(line)
    print("\n".join(_provenance(hf)))
    return 0


def _provenance(hf) -> list[str]:  # noqa: ANN001 - viscometry.io.history.HistoryFile
    from viscometry import __version__
    from viscometry.text import one_line

    return [
        f"source: {one_line(hf.source)}",
        f"fingerprint: {hf.fingerprint}",
        f"version: viscometry {__version__}",
    ]


def _to_dict(hf, fit, prediction, interval, term, warnings) -> dict:  # noqa: ANN001
    """The JSON object (keys in docs/evidence.md)."""
    from viscometry import __version__
    from viscometry.io.json_out import jsonable, schema

    h = fit.history
    certificates = [
        {"date": r.date.isoformat(), "constant": r.constant,
         "expanded_uncertainty": r.expanded_uncertainty, "coverage_factor": r.coverage_factor,
         "standard_uncertainty": r.standard_uncertainty, "source": r.source, "row": row,
         "residual": float(res)}
        for r, row, res in zip(h.records, hf.rows, fit.fit.residuals, strict=True)
    ]  # fmt: skip
    return jsonable({
        "schema": schema("drift"), "viscometer": h.viscometer, "unit": h.unit,
        "certificates": certificates,
        "drift": {
            "slope": fit.slope, "slope_uncertainty": fit.slope_uncertainty,
            "intercept": fit.intercept, "reference_date": h.last.date.isoformat(),
            "covariance": fit.covariance, "degrees_of_freedom": fit.degrees_of_freedom,
            "birge_ratio": fit.birge_ratio, "chi_squared": fit.fit.chi_squared,
            "inflated": fit.inflated, "significant": fit.drift_significant(),
            "time_unit": "a",
        },
        "prediction": {
            "date": prediction.date.isoformat(), "years_since_last": prediction.years_since_last,
            "constant": prediction.constant,
            "standard_uncertainty": prediction.standard_uncertainty,
            "coverage_factor": prediction.coverage_factor,
            "expanded_uncertainty": prediction.expanded_uncertainty,
            "drift": prediction.drift, "drift_uncertainty": prediction.drift_uncertainty,
        },
        "stability_input": {
            "name": term.name, "value": term.value, "standard_uncertainty":
            term.standard_uncertainty, "unit": term.unit, "distribution": term.distribution,
            "evaluation": term.evaluation, "source": term.source,
        },
        "interval": {
            "years": interval.years, "days": interval.days, "fraction": interval.fraction,
            "coverage_factor": interval.coverage_factor, "longest": interval.longest,
            "capped": interval.capped, "next_date": interval.next_date.isoformat(),
            "rule": "T = fraction*U_last/(|b| + k*u(b)), at most longest; common practice",
        },
        "warnings": warnings, "fingerprint": hf.fingerprint, "version": __version__,
    })  # fmt: skip
