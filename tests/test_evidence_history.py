"""Calibration history of a viscometer constant: drift fit, prediction, stability, interval.

Check values come from exact analytic cases (a straight line through exact points) and from
independent computations: numpy.polyfit with weights, scipy.optimize.curve_fit with
absolute_sigma, and the `uncertainties` package for the linear propagation of the
certificates into the predicted constant. The certificate numbers below are test inputs
only, never reference values.
"""

from __future__ import annotations

import datetime as dt
import math

import numpy as np
import pytest
from scipy.optimize import curve_fit

from viscometry.errors import InputError
from viscometry.evidence import CalibrationHistory, CalibrationRecord, fit_drift
from viscometry.evidence.history import DAYS_PER_YEAR
from viscometry.gum import InputQuantity

DATES = [dt.date(2016, 5, 11), dt.date(2018, 4, 26), dt.date(2020, 6, 3), dt.date(2022, 5, 19),
         dt.date(2024, 5, 8)]  # fmt: skip
C = [0.030011, 0.030019, 0.030020, 0.030031, 0.030035]
U = [0.000024, 0.000024, 0.000021, 0.000021, 0.000021]


def _history(dates=DATES, c=C, u=U, k=2.0) -> CalibrationHistory:
    recs = tuple(CalibrationRecord(d, ci, ui, k, f"cert {i}") for i, (d, ci, ui) in
                 enumerate(zip(dates, c, u, strict=True)))  # fmt: skip
    return CalibrationHistory("V1", "mm^2/s^2", recs)


def _years(dates, ref):
    return np.array([(d - ref).days / DAYS_PER_YEAR for d in dates])


def test_exact_line_returns_slope_and_intercept_to_round_off():
    # exact analytic: C = 0.0300 + 2e-6 * years since the last date, through every point
    x = _years(DATES, DATES[-1])
    c = list(0.0300 + 2e-6 * x)
    fit = fit_drift(_history(c=c))
    assert fit.slope == pytest.approx(2e-6, rel=1e-9)
    assert fit.intercept == pytest.approx(0.0300, rel=1e-12)
    assert np.max(np.abs(fit.fit.residuals)) < 1e-15
    # the prediction of an exact line lies on it
    p = fit.predict(dt.date(2026, 5, 8))
    assert p.constant == pytest.approx(0.0300 + 2e-6 * (730 / DAYS_PER_YEAR), rel=1e-12)


def test_fit_and_covariance_match_numpy_polyfit_and_curve_fit():
    h = _history()
    fit = fit_drift(h, inflate=False)
    x = _years(DATES, DATES[-1])
    s = np.array(U) / 2.0
    # independent reference 1: numpy.polyfit with weights 1/σ, unscaled covariance
    p, cov = np.polyfit(x, C, 1, w=1 / s, cov="unscaled")
    assert fit.slope == pytest.approx(p[0], rel=1e-9)
    assert fit.intercept == pytest.approx(p[1], rel=1e-12)
    assert fit.slope_uncertainty == pytest.approx(math.sqrt(cov[0, 0]), rel=1e-9)
    # independent reference 2: scipy curve_fit with absolute_sigma=True
    popt, pcov = curve_fit(lambda t, a, b: a + b * t, x, C, p0=[0.03, 0.0], sigma=s,
                           absolute_sigma=True)  # fmt: skip
    assert fit.covariance == pytest.approx(pcov, rel=1e-6)
    assert fit.birge_ratio == pytest.approx(
        math.sqrt(np.sum(((np.array(C) - popt[0] - popt[1] * x) / s) ** 2) / 3), rel=1e-6
    )


def test_prediction_matches_the_uncertainties_package():
    # independent linear propagation: every certificate an independent ufloat, the weighted
    # slope written out (JCGM 100:2008, H.3 weighted), C(t) = C_last + b·Δt
    from uncertainties import ufloat

    h = _history()
    fit = fit_drift(h, inflate=False)
    x = _years(DATES, DATES[-1])
    s = np.array(U) / 2.0
    y = [ufloat(c, si) for c, si in zip(C, s, strict=True)]
    w = 1 / s**2
    xbar = np.sum(w * x) / np.sum(w)
    sxx = np.sum(w * (x - xbar) ** 2)
    b = sum(wi * (xi - xbar) * yi for wi, xi, yi in zip(w, x, y, strict=True)) / sxx
    date = dt.date(2026, 5, 1)
    dtime = (date - DATES[-1]).days / DAYS_PER_YEAR
    ref = y[-1] + b * dtime
    p = fit.predict(date)
    assert p.constant == pytest.approx(ref.nominal_value, rel=1e-12)
    assert p.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-9)
    assert p.expanded_uncertainty == pytest.approx(2 * ref.std_dev, rel=1e-9)
    assert p.drift == pytest.approx(b.nominal_value * dtime, rel=1e-9)
    # the stability term: certificate's C plus it reproduces the prediction (exact analytic)
    term = fit.stability_input(date)
    assert isinstance(term, InputQuantity) and term.unit == "mm^2/s^2"
    assert term.value == pytest.approx(p.drift, rel=1e-12)
    u_last = U[-1] / 2
    assert math.hypot(u_last, term.standard_uncertainty) == pytest.approx(ref.std_dev, rel=1e-9)


def test_prediction_at_the_last_date_is_the_last_certificate():
    # exact analytic: Δt = 0 gives C_last with u_last
    p = fit_drift(_history()).predict(DATES[-1])
    assert p.constant == C[-1] and p.standard_uncertainty == pytest.approx(U[-1] / 2, rel=1e-15)
    assert p.drift == 0 and p.drift_uncertainty == 0


def test_prediction_before_the_last_certificate_is_refused():
    with pytest.raises(InputError, match="before the last calibration"):
        fit_drift(_history()).predict(dt.date(2023, 1, 1))


def test_recalibration_interval_rule():
    fit = fit_drift(_history(), inflate=False)
    t = fit.recalibration_interval(0.5)
    # exact analytic: T = f·U_last / (|b| + k u(b))
    expected = 0.5 * U[-1] / (abs(fit.slope) + 2 * fit.slope_uncertainty)
    assert t.years == pytest.approx(expected, rel=1e-12) and not t.capped
    assert t.next_date == DATES[-1] + dt.timedelta(days=math.floor(expected * DAYS_PER_YEAR))
    capped = fit.recalibration_interval(0.5, longest=0.5)
    assert capped.capped and capped.years == 0.5
    with pytest.raises(InputError, match="fraction"):
        fit.recalibration_interval(1.5)


def test_scattered_certificates_inflate_the_covariance_like_curve_fit_relative_sigma():
    c = [0.030011, 0.030060, 0.029990, 0.030070, 0.030035]
    h = _history(c=c)
    fit = fit_drift(h)
    assert fit.inflated and fit.birge_ratio > 1
    assert fit.flags == ("scatter_exceeds_uncertainties", "covariance_inflated")
    x = _years(DATES, DATES[-1])
    # independent: curve_fit with absolute_sigma=False scales the covariance by χ²/ν
    _popt, pcov = curve_fit(lambda t, a, b: a + b * t, x, c, p0=[0.03, 0.0],
                            sigma=np.array(U) / 2, absolute_sigma=False)  # fmt: skip
    assert fit.covariance == pytest.approx(pcov, rel=1e-6)
    plain = fit_drift(h, inflate=False)
    assert not plain.inflated and plain.flags == ("scatter_exceeds_uncertainties",)


def test_two_certificates_fit_exactly_and_are_flagged():
    fit = fit_drift(_history(DATES[:2], C[:2], U[:2]))
    # exact analytic: the line through two points
    years = (DATES[1] - DATES[0]).days / DAYS_PER_YEAR
    assert fit.slope == pytest.approx((C[1] - C[0]) / years, rel=1e-9)
    assert fit.degrees_of_freedom == 0 and math.isnan(fit.birge_ratio)
    assert fit.flags == ("few_certificates",)


def test_history_refuses_bad_records():
    with pytest.raises(InputError, match="repeats"):
        _history([DATES[0], DATES[0]], C[:2], U[:2])
    with pytest.raises(InputError, match="sort by date"):
        _history([DATES[1], DATES[0]], C[:2], U[:2])
    with pytest.raises(InputError, match="at least one"):
        CalibrationHistory("V", "mm^2/s^2", ())
    with pytest.raises(InputError, match="expanded_uncertainty must be positive"):
        CalibrationRecord(DATES[0], 0.03, -1e-6)
    with pytest.raises(InputError, match="at least two"):
        fit_drift(_history(DATES[:1], C[:1], U[:1]))


def test_results_are_immutable():
    fit = fit_drift(_history())
    with pytest.raises(AttributeError):
        fit.inflated = True  # type: ignore[misc]
    with pytest.raises(ValueError):
        fit.covariance[0, 0] = 1.0


def test_a_budget_takes_the_stability_term_and_reproduces_the_prediction():
    # exact analytic: C(t) = C_last + δC, inputs independent → u² = u²_last + u²(δC) = u²(C)
    from viscometry.gum import Budget

    fit = fit_drift(_history())
    date = dt.date(2026, 5, 1)
    term = fit.stability_input(date)
    last = InputQuantity.from_expanded("C_last", C[-1], U[-1], "mm^2/s^2", coverage_factor=2.0)
    budget = Budget.from_formula("C", "C_last + dC_drift", [last, term], "mm^2/s^2")
    result = budget.evaluate()
    p = fit.predict(date)
    assert result.value == pytest.approx(p.constant, rel=1e-12)
    assert result.standard_uncertainty == pytest.approx(p.standard_uncertainty, rel=1e-9)


def test_history_figure_draws_certificates_band_and_prediction():
    from matplotlib.container import ErrorbarContainer

    from viscometry.evidence_plots import history_figure

    fit = fit_drift(_history())
    p = fit.predict(dt.date(2026, 5, 1))
    fig = history_figure(fit, p)
    (ax,) = fig.axes
    bars = [c for c in ax.containers if isinstance(c, ErrorbarContainer)]
    assert len(bars) == 2  # certificates and the prediction
    # the certificates' error bars are ±U (exact: the stated numbers)
    segments = bars[0].lines[2][0].get_segments()
    assert [s[1][1] - s[0][1] for s in segments] == pytest.approx([2 * x for x in U], rel=1e-9)
    assert len(ax.collections) >= 1  # the band
    assert "C [mm²/s²]" in ax.get_ylabel()
