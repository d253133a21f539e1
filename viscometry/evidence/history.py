"""Calibration history of a viscometer constant: drift fit, prediction, stability, interval.

A viscometer's certificates (date, constant C, expanded uncertainty U, coverage factor k,
source) form a :class:`CalibrationHistory`. :func:`fit_drift` fits the straight line
C(t) = C_ref + b·(t − t_ref) by weighted least squares (weights 1/u², u = U/k; absolute
uncertainties, :func:`viscometry.fitting.weighted_least_squares`), with t_ref the date of the
last certificate and t in years of 365.25 days.

From the fit:

* :meth:`DriftFit.predict` — the constant at a later date, **anchored on the last
  certificate**: C(t) = C_last + b·Δt, Δt = t − t_last. Its uncertainty follows from the
  linear propagation of every certificate's value (JCGM 100:2008, eq. (13); the certificates
  independent): u²(C) = u²_last + Δt² u²(b) + 2 Δt g_last u²_last, where g_last is the weight
  of the last certificate in the slope (cov(C_last, b) = g_last u²_last).
* :meth:`DriftFit.stability_input` — the drift since the last calibration as an input of a
  budget: value b·Δt and the standard uncertainty √(u²(C) − u²_last), so that the last
  certificate's C plus this independent term has exactly the prediction's uncertainty.
* :meth:`DriftFit.recalibration_interval` — the time T after which the drift, enlarged by its
  own expanded uncertainty, reaches a chosen fraction f of the last certificate's U:
  T = f·U_last / (|b| + k·u(b)). The rule is common practice (no source); ILAC-G24:2007 /
  OIML D 10:2007 (from memory) describe how intervals are reviewed from calibration history
  and leave the criterion to the laboratory.

When the certificates scatter more than their uncertainties allow (Birge ratio
R_B = √(χ²/ν) > 1), the slope's covariance is enlarged by R_B² (common practice, no source)
unless ``inflate=False``.
"""

from __future__ import annotations

import datetime as _dt
import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from viscometry._checks import positive
from viscometry.errors import InputError
from viscometry.fitting import LeastSquaresResult, weighted_least_squares
from viscometry.gum.inputs import InputQuantity

__all__ = [
    "DAYS_PER_YEAR",
    "MAX_RECORDS",
    "CalibrationHistory",
    "CalibrationRecord",
    "DriftFit",
    "Prediction",
    "RecalibrationInterval",
    "fit_drift",
]

#: Days in a year of the time axis (Julian year) [d].
DAYS_PER_YEAR = 365.25
#: Most certificates a history may hold.
MAX_RECORDS = 1000
#: Range of a constant's magnitude accepted, in the history's unit (guards the arithmetic).
CONSTANT_RANGE = (1e-30, 1e30)
#: Range of U/C accepted for a certificate [1].
RELATIVE_UNCERTAINTY_RANGE = (1e-12, 1.0)
#: Range of a certificate's coverage factor accepted [1].
COVERAGE_FACTOR_RANGE = (1.0, 10.0)
#: Longest recalibration interval that may be asked for [a].
LONGEST_INTERVAL = 100.0
#: Flags a fit may carry (rendered as warnings by :mod:`viscometry.evidence_text`).
FLAGS = ("few_certificates", "scatter_exceeds_uncertainties", "covariance_inflated")


@dataclass(frozen=True)
class CalibrationRecord:
    """One certificate of a viscometer constant (immutable).

    Attributes
    ----------
    date : datetime.date
        Date of calibration.
    constant : float
        C, in the history's unit (e.g. mm²/s²).
    expanded_uncertainty : float
        U > 0, in the history's unit.
    coverage_factor : float
        k > 0 [1].
    source : str
        The certificate (number, laboratory).
    """

    date: _dt.date
    constant: float
    expanded_uncertainty: float
    coverage_factor: float = 2.0
    source: str = ""

    def __post_init__(self) -> None:
        if not isinstance(self.date, _dt.date) or isinstance(self.date, _dt.datetime):
            raise InputError(f"date must be a datetime.date, got {self.date!r}")
        c = positive(self.constant, "constant")
        u = positive(self.expanded_uncertainty, "expanded_uncertainty")
        k = positive(self.coverage_factor, "coverage_factor")
        if not CONSTANT_RANGE[0] <= c <= CONSTANT_RANGE[1]:
            raise InputError(
                f"constant must lie between {CONSTANT_RANGE[0]:g} and {CONSTANT_RANGE[1]:g}, "
                f"got {c!r}"
            )
        lo, hi = RELATIVE_UNCERTAINTY_RANGE
        if not lo * c <= u < hi * c:
            raise InputError(
                f"expanded_uncertainty must be below the constant and above {lo:g} of it, "
                f"got U = {u!r} for C = {c!r}"
            )
        if not COVERAGE_FACTOR_RANGE[0] <= k <= COVERAGE_FACTOR_RANGE[1]:
            raise InputError(
                f"coverage_factor must lie between {COVERAGE_FACTOR_RANGE[0]:g} and "
                f"{COVERAGE_FACTOR_RANGE[1]:g}, got {k!r}"
            )
        object.__setattr__(self, "constant", c)
        object.__setattr__(self, "expanded_uncertainty", u)
        object.__setattr__(self, "coverage_factor", k)
        if not isinstance(self.source, str):
            raise InputError(f"source must be text, got {self.source!r}")

    @property
    def standard_uncertainty(self) -> float:
        """u = U/k, in the history's unit."""
        return self.expanded_uncertainty / self.coverage_factor


@dataclass(frozen=True)
class CalibrationHistory:
    """The certificates of one viscometer, oldest first (immutable).

    Raises
    ------
    InputError
        No certificate, more than :data:`MAX_RECORDS`, or dates not strictly increasing (the
        message names the position, from 1, and the dates).
    """

    viscometer: str
    unit: str
    records: tuple[CalibrationRecord, ...]

    def __post_init__(self) -> None:
        records = tuple(self.records)
        if not records:
            raise InputError("a calibration history needs at least one certificate, got none")
        if len(records) > MAX_RECORDS:
            raise InputError(f"a calibration history holds at most {MAX_RECORDS} certificates")
        for i, r in enumerate(records):
            if not isinstance(r, CalibrationRecord):
                raise InputError(f"records[{i}] must be a CalibrationRecord, got {r!r}")
        for i in range(1, len(records)):
            a, b = records[i - 1].date, records[i].date
            if b == a:
                raise InputError(f"certificate {i + 1}: date {b} repeats certificate {i}")
            if b < a:
                raise InputError(f"certificate {i + 1}: date {b} is before {a}; sort by date")
        object.__setattr__(self, "records", records)

    @property
    def last(self) -> CalibrationRecord:
        """The latest certificate."""
        return self.records[-1]

    def years_since_last(self, date: _dt.date) -> float:
        """(date − date of the last certificate) in years of 365.25 days."""
        return (date - self.last.date).days / DAYS_PER_YEAR


@dataclass(frozen=True)
class Prediction:
    """The constant at a date (immutable; values in the history's unit).

    Attributes
    ----------
    date : datetime.date
    years_since_last : float
        Δt [a].
    constant : float
        C_last + b·Δt.
    standard_uncertainty : float
        u(C) including the drift since the last calibration.
    drift : float
        b·Δt, the drift since the last calibration.
    drift_uncertainty : float
        √(u²(C) − u²_last): the stability term's standard uncertainty.
    coverage_factor : float
        k used for :attr:`expanded_uncertainty`.
    """

    date: _dt.date
    years_since_last: float
    constant: float
    standard_uncertainty: float
    drift: float
    drift_uncertainty: float
    coverage_factor: float

    @property
    def expanded_uncertainty(self) -> float:
        """U = k·u(C)."""
        return self.coverage_factor * self.standard_uncertainty


@dataclass(frozen=True)
class RecalibrationInterval:
    """A recommended recalibration interval (immutable).

    Attributes
    ----------
    years : float
        T = f·U_last / (|b| + k·u(b)), capped at ``longest`` [a].
    fraction : float
        f, the share of U the drift may use [1].
    coverage_factor : float
        k on the slope's uncertainty [1].
    longest : float
        The cap [a].
    capped : bool
        True when T was longer than the cap.
    next_date : datetime.date
        Date of the last certificate + T.
    """

    years: float
    fraction: float
    coverage_factor: float
    longest: float
    capped: bool
    next_date: _dt.date

    @property
    def days(self) -> int:
        """T in whole days (rounded down)."""
        return int(math.floor(self.years * DAYS_PER_YEAR))


@dataclass(frozen=True, eq=False)
class DriftFit:
    """The weighted straight-line fit of a calibration history (immutable).

    Attributes
    ----------
    history : CalibrationHistory
    fit : LeastSquaresResult
        Parameters (C at the last certificate's date on the line, slope b per year) and
        their covariance (enlarged by R_B² when :attr:`inflated`).
    last_slope_covariance : float
        cov(C_last, b) = g_last·u²_last, g_last = ∂b/∂C_last (times R_B² when
        :attr:`inflated`) [unit²/a].
    birge_ratio : float
        √(χ²/ν) (NaN for two certificates).
    inflated : bool
        Whether the covariance was enlarged by R_B².
    flags : tuple of str
        Codes of what the user should know (see :data:`FLAGS`).
    """

    history: CalibrationHistory
    fit: LeastSquaresResult
    last_slope_covariance: float
    birge_ratio: float
    inflated: bool
    flags: tuple[str, ...]

    @property
    def intercept(self) -> float:
        """C on the fitted line at the last certificate's date."""
        return float(self.fit.parameters[0])

    @property
    def slope(self) -> float:
        """b, drift per year [unit/a]."""
        return float(self.fit.parameters[1])

    @property
    def slope_uncertainty(self) -> float:
        """u(b) [unit/a]."""
        return float(self.fit.standard_uncertainties[1])

    def drift_significant(self, coverage_factor: float = 2.0) -> bool:
        """Whether |b| exceeds k·u(b) (k = 2 by default; common practice, no source)."""
        return abs(self.slope) > positive(coverage_factor, "coverage_factor") * (
            self.slope_uncertainty
        )

    @property
    def covariance(self) -> np.ndarray:
        """2×2 covariance of (intercept, slope)."""
        return self.fit.covariance

    @property
    def degrees_of_freedom(self) -> int:
        """ν = n − 2."""
        return self.fit.degrees_of_freedom

    def line(self, dates: Sequence[_dt.date]) -> tuple[np.ndarray, np.ndarray]:
        """The fitted line and its standard uncertainty at ``dates`` (for a plot's band)."""
        x = np.array([self.history.years_since_last(d) for d in dates], dtype=float)
        rows = np.column_stack([np.ones_like(x), x])
        value, u = self.fit.predict(rows)
        return np.asarray(value), np.asarray(u)

    def predict(self, date: _dt.date, coverage_factor: float = 2.0) -> Prediction:
        """The constant at ``date`` (on or after the last certificate) with its uncertainty.

        Raises
        ------
        InputError
            If ``date`` is before the last certificate.
        """
        if not isinstance(date, _dt.date) or isinstance(date, _dt.datetime):
            raise InputError(f"date must be a datetime.date, got {date!r}")
        last = self.history.last
        if date < last.date:
            raise InputError(
                f"date {date} is before the last calibration ({last.date}); "
                "predict only from the last certificate on"
            )
        k = positive(coverage_factor, "coverage_factor")
        dt = self.history.years_since_last(date)
        u_last = last.standard_uncertainty
        drift_var = dt**2 * self.slope_uncertainty**2 + 2.0 * dt * self.last_slope_covariance
        drift_var = max(drift_var, 0.0)
        return Prediction(
            date=date, years_since_last=dt, constant=last.constant + self.slope * dt,
            standard_uncertainty=math.sqrt(u_last**2 + drift_var), drift=self.slope * dt,
            drift_uncertainty=math.sqrt(drift_var), coverage_factor=k,
        )  # fmt: skip

    def stability_input(
        self, date: _dt.date, name: str = "dC_drift", *, unit: str | None = None
    ) -> InputQuantity:
        """The drift since the last calibration as a budget input (Type B, normal).

        Value b·Δt and standard uncertainty √(u²(C) − u²_last), in the history's unit: the
        last certificate's C plus this term has the prediction's uncertainty.
        """
        p = self.predict(date)
        return InputQuantity.normal(
            name, p.drift, p.drift_uncertainty, self.history.unit if unit is None else unit,
            description=f"drift of the constant from {self.history.last.date} to {date}",
            source=f"drift fit of {len(self.history.records)} certificates "
            f"of {self.history.viscometer or 'the viscometer'}",
        )  # fmt: skip

    def recalibration_interval(
        self, fraction: float = 0.5, *, coverage_factor: float = 2.0, longest: float = 5.0
    ) -> RecalibrationInterval:
        """T = f·U_last / (|b| + k·u(b)), at most ``longest`` years (rule: module notes)."""
        f = positive(fraction, "fraction")
        if f > 1:
            raise InputError(f"fraction must be at most 1 (a share of U), got {f!r}")
        k = positive(coverage_factor, "coverage_factor")
        cap = positive(longest, "longest")
        if cap > LONGEST_INTERVAL:
            raise InputError(f"longest must be at most {LONGEST_INTERVAL:g} years, got {cap!r}")
        rate = abs(self.slope) + k * self.slope_uncertainty
        years = f * self.history.last.expanded_uncertainty / rate if rate > 0 else math.inf
        capped = years > cap
        years = min(years, cap)
        days = int(math.floor(years * DAYS_PER_YEAR))
        try:
            next_date = self.history.last.date + _dt.timedelta(days=days)
        except OverflowError:
            raise InputError(
                f"the next calibration date falls after the year {_dt.MAXYEAR}"
            ) from None
        return RecalibrationInterval(
            years=years, fraction=f, coverage_factor=k, longest=cap, capped=capped,
            next_date=next_date,
        )  # fmt: skip


def fit_drift(history: CalibrationHistory, *, inflate: bool = True) -> DriftFit:
    """Weighted straight-line fit of the constant against time (see the module notes).

    Parameters
    ----------
    history : CalibrationHistory
        At least two certificates.
    inflate : bool, optional
        Enlarge the covariance by R_B² when the Birge ratio exceeds 1 (default True).

    Returns
    -------
    DriftFit

    References
    ----------
    JCGM 100:2008, H.3 (straight-line calibration) and eq. (13).

    Examples
    --------
    >>> import datetime as dt
    >>> recs = [CalibrationRecord(dt.date(2020 + i, 1, 1), 0.01 + 1e-6 * i, 2e-6) for i in range(3)]
    >>> fit = fit_drift(CalibrationHistory("V1", "mm^2/s^2", tuple(recs)))
    >>> f"{fit.slope:.2g}"  # per year (2020 was a leap year)
    '1e-06'
    """
    if not isinstance(history, CalibrationHistory):
        raise InputError(f"history must be a CalibrationHistory, got {history!r}")
    recs = history.records
    if len(recs) < 2:
        raise InputError(f"a drift fit needs at least two certificates, got {len(recs)}")
    x = np.array([history.years_since_last(r.date) for r in recs])
    scale = history.last.constant  # fitted in units of C_last: no overflow in the weights
    y = np.array([r.constant for r in recs]) / scale
    u = np.array([r.standard_uncertainty for r in recs]) / scale
    a = np.column_stack([np.ones_like(x), x])
    try:
        raw = weighted_least_squares(a, y, u, absolute_sigma=True)
    except InputError as exc:
        raise InputError(
            "the certificates cannot be fitted: their uncertainties differ so much that one "
            f"certificate carries all the weight ({exc})"
        ) from None
    # g = row "slope" of (AᵀWA)⁻¹AᵀW: the slope's weight of each certificate (scale-free).
    gain = raw.covariance @ (a / u[:, None] ** 2).T
    cross = float(gain[1, -1]) * (float(u[-1]) * scale) ** 2
    fit = _rescaled(raw, scale)
    nu = fit.degrees_of_freedom
    birge = fit.residual_standard_deviation if nu > 0 else math.nan
    flags = ["few_certificates"] if len(recs) < 3 else []
    inflated = False
    if nu > 0 and birge > 1.0:
        flags.append("scatter_exceeds_uncertainties")
        if inflate:
            inflated = True
            flags.append("covariance_inflated")
            scale = birge**2
            cross *= scale
            fit = LeastSquaresResult(
                parameters=fit.parameters, covariance=_frozen(fit.covariance * scale),
                residuals=fit.residuals, degrees_of_freedom=nu,
                residual_standard_deviation=fit.residual_standard_deviation,
                chi_squared=fit.chi_squared, covariance_scaled=True,
            )  # fmt: skip
    return DriftFit(history, fit, cross, float(birge), inflated, tuple(flags))


def _rescaled(fit: LeastSquaresResult, scale: float) -> LeastSquaresResult:
    """The fit of y/scale turned back into the fit of y."""
    return LeastSquaresResult(
        parameters=_frozen(fit.parameters * scale), covariance=_frozen(fit.covariance * scale**2),
        residuals=_frozen(fit.residuals * scale), degrees_of_freedom=fit.degrees_of_freedom,
        residual_standard_deviation=fit.residual_standard_deviation,
        chi_squared=fit.chi_squared, covariance_scaled=fit.covariance_scaled,
    )  # fmt: skip


def _frozen(array: np.ndarray) -> np.ndarray:
    out = np.array(array, dtype=float, copy=True)
    out.setflags(write=False)
    return out
