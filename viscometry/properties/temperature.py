"""Temperature models of viscosity fitted to a user's data, with parameter covariance.

Four published laws, each fitted by (weighted) least squares and returned as a frozen
:class:`TemperatureModelFit` that evaluates the viscosity, its temperature coefficient
∂η/∂T and the relative coefficient (1/η)∂η/∂T, each with a standard uncertainty propagated
from the parameter covariance (JCGM 100:2008, eq. (13): u² = gᵀ C g, g the gradient with
respect to the parameters).  The gradients are exact: each model is written once in sympy and
differentiated symbolically.

=================================  ==========================================  ===============
fit function                        model (T in K)                               fitted in
=================================  ==========================================  ===============
:func:`fit_andrade`                 ln η = A + B/T                               ln η (linear)
:func:`fit_vogel_fulcher_tammann`   ln η = A + B/(T − C)                         ln η (nonlinear)
:func:`fit_walther`                 log₁₀ log₁₀(ν + 0.7) = A − B log₁₀ T,        Z (linear)
                                    ν in mm²/s
:func:`fit_sutherland`              η = η₀ (T/T₀)^{3/2} (T₀ + S)/(T + S)         η (nonlinear)
=================================  ==========================================  ===============

When standard uncertainties u of the viscosities are given they are absolute: the covariance
is (JᵀWJ)⁻¹ with W = diag(1/σ²), σ the uncertainty carried to the fitted quantity to first
order (σ = u/η for ln η).  Without u the observations weigh the same and the covariance is
scaled by the residual variance, as in JCGM 100:2008, H.3.

A fitted law is an interpolation: outside the temperature range of the data
:class:`~viscometry.errors.ValidityWarning` is emitted.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable
from dataclasses import dataclass
from functools import cache
from typing import Any, Literal

import numpy as np
import scipy.optimize
import sympy
from numpy.typing import ArrayLike, NDArray

from viscometry.errors import InputError, ModelError
from viscometry.fitting import weighted_least_squares
from viscometry.properties.constants import ZERO_CELSIUS
from viscometry.properties.water import (
    _as_float_array,
    _require_positive_finite,
    _scalar_or_array,
    _warn_outside,
)

__all__ = [
    "TemperatureModel",
    "TemperatureModelFit",
    "fit_andrade",
    "fit_vogel_fulcher_tammann",
    "fit_walther",
    "fit_sutherland",
    "WALTHER_OFFSET",
    "WALTHER_SIMPLE_FORM_MINIMUM",
]

TemperatureModel = Literal["andrade", "vogel_fulcher_tammann", "walther", "sutherland"]

WALTHER_OFFSET: float = 0.7
"""The constant added to ν [mm²/s] in the Walther equation, ASTM D341 (Z = ν + 0.7)."""

WALTHER_SIMPLE_FORM_MINIMUM: float = 2.0e-6
"""Kinematic viscosity [m²/s] (2 mm²/s) below which ASTM D341 adds small exponential terms
to Z = ν + 0.7 that are omitted here (from memory: the standard's full Z extends the chart down
to about 0.2 mm²/s).  Data below it trigger a ValidityWarning."""

_MM2_PER_M2: float = 1.0e6
"""Conversion of kinematic viscosity from m²/s to mm²/s (the unit of the Walther equation)."""

_SUTHERLAND_DEFAULT_REFERENCE = ZERO_CELSIUS
"""Default Sutherland reference temperature T₀ [K] (0 °C)."""

# --------------------------------------------------------------------------------------------
# symbolic models: written once, differentiated exactly, lambdified to numpy
# --------------------------------------------------------------------------------------------

_T = sympy.Symbol("T", positive=True)
_T0 = sympy.Symbol("T0", positive=True)


@dataclass(frozen=True)
class _ModelSpec:
    parameter_names: tuple[str, ...]
    quantity: Literal["dynamic_viscosity", "kinematic_viscosity"]
    fitted_quantity: str
    expression: Callable[..., sympy.Expr]


_MODELS: dict[str, _ModelSpec] = {
    "andrade": _ModelSpec(
        ("A", "B"),
        "dynamic_viscosity",
        "ln(eta / (Pa*s))",
        lambda t, t0, a, b: sympy.exp(a + b / t),
    ),
    "vogel_fulcher_tammann": _ModelSpec(
        ("A", "B", "C"),
        "dynamic_viscosity",
        "ln(eta / (Pa*s))",
        lambda t, t0, a, b, c: sympy.exp(a + b / (t - c)),
    ),
    "walther": _ModelSpec(
        ("A", "B"),
        "kinematic_viscosity",
        "log10(log10(nu / (mm^2/s) + 0.7))",
        lambda t, t0, a, b: (
            (10 ** (10 ** (a - b * sympy.log(t, 10))) - WALTHER_OFFSET) / _MM2_PER_M2
        ),
    ),
    "sutherland": _ModelSpec(
        ("eta0", "S"),
        "dynamic_viscosity",
        "eta / (Pa*s)",
        lambda t, t0, eta0, s: eta0 * (t / t0) ** sympy.Rational(3, 2) * (t0 + s) / (t + s),
    ),
}

_KINDS = ("value", "temperature_coefficient", "relative_temperature_coefficient")


@cache
def _compiled(model: str) -> dict[str, tuple[Callable[..., Any], Callable[..., Any]]]:
    """Lambdified value, ∂/∂T and ∂ln/∂T, each with its gradient in the parameters."""
    spec = _MODELS[model]
    params = sympy.symbols(spec.parameter_names, real=True)
    expr = spec.expression(_T, _T0, *params)
    exprs = {
        "value": expr,
        "temperature_coefficient": sympy.diff(expr, _T),
        "relative_temperature_coefficient": sympy.diff(sympy.log(expr), _T),
    }
    args = (_T, _T0, *params)
    out = {}
    for kind, e in exprs.items():
        grad = [sympy.diff(e, p) for p in params]
        out[kind] = (sympy.lambdify(args, e, "numpy"), sympy.lambdify(args, grad, "numpy"))
    return out


# --------------------------------------------------------------------------------------------
# result
# --------------------------------------------------------------------------------------------


def _readonly(array: ArrayLike) -> NDArray[np.float64]:
    out = np.array(array, dtype=float, copy=True)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class TemperatureModelFit:
    """A temperature model of viscosity fitted to data (immutable; arrays read-only).

    Attributes
    ----------
    model : {"andrade", "vogel_fulcher_tammann", "walther", "sutherland"}
        Which law.
    parameter_names : tuple of str
        Names of the parameters, in the order of ``parameters``.
    parameters : numpy.ndarray
        Estimates.  Andrade A [1], B [K]; VFT A [1], B [K], C [K]; Walther A [1], B [1];
        Sutherland η₀ [Pa·s] (viscosity at T₀), S [K].
    covariance : numpy.ndarray
        Covariance matrix of the estimates [products of the parameter units].
    degrees_of_freedom : int
        n − p.
    residual_standard_deviation : float
        Standard deviation of the residuals of ``fitted_quantity`` (√(Σr²/ν)); for a weighted
        fit, √(χ²/ν) [1].
    fitted_quantity : str
        The quantity in which the residuals were minimised.
    quantity : {"dynamic_viscosity", "kinematic_viscosity"}
        What :meth:`value` returns: η [Pa·s] or, for Walther, ν [m²/s].
    temperature_range : tuple of float
        Lowest and highest temperature of the data [K].
    reference_temperature : float
        Sutherland's T₀ [K]; unused (NaN) for the other laws.
    """

    model: TemperatureModel
    parameter_names: tuple[str, ...]
    parameters: NDArray[np.float64]
    covariance: NDArray[np.float64]
    degrees_of_freedom: int
    residual_standard_deviation: float
    fitted_quantity: str
    quantity: Literal["dynamic_viscosity", "kinematic_viscosity"]
    temperature_range: tuple[float, float]
    reference_temperature: float = float("nan")

    @property
    def standard_uncertainties(self) -> NDArray[np.float64]:
        """Standard uncertainties of the parameters, √diag(covariance)."""
        return np.sqrt(np.diag(self.covariance))

    def _evaluate(self, kind: str, temperature: ArrayLike) -> tuple[NDArray, NDArray]:
        temp = _as_float_array(temperature, "temperature")
        _require_positive_finite(temp, "temperature", "K")
        if self.model == "vogel_fulcher_tammann" and np.any(temp <= self.parameters[2]):
            bad = float(np.atleast_1d(temp)[np.atleast_1d(temp <= self.parameters[2])][0])
            raise InputError(
                f"temperature must exceed the Vogel-Fulcher-Tammann C = "
                f"{self.parameters[2]:.6g} K, got {bad!r} K"
            )
        _warn_outside(
            temp, "temperature", "K", self.temperature_range, f"the fitted {self.model} model", 4
        )
        fn, grad_fn = _compiled(self.model)[kind]
        args = (temp, self.reference_temperature, *self.parameters)
        value = np.broadcast_to(np.asarray(fn(*args), dtype=float), temp.shape)
        grad = np.array(
            [np.broadcast_to(np.asarray(g, dtype=float), temp.shape) for g in grad_fn(*args)]
        )
        variance = np.einsum("i...,ij,j...->...", grad, self.covariance, grad)
        return value, np.sqrt(np.maximum(variance, 0.0))

    def value(self, temperature: ArrayLike) -> float | NDArray[np.float64]:
        """Viscosity at ``temperature`` [K]: η [Pa·s], or ν [m²/s] for Walther."""
        return _scalar_or_array(np.array(self._evaluate("value", temperature)[0]))

    def value_uncertainty(self, temperature: ArrayLike) -> float | NDArray[np.float64]:
        """Standard uncertainty of :meth:`value` from the parameter covariance [Pa·s or m²/s]."""
        return _scalar_or_array(np.array(self._evaluate("value", temperature)[1]))

    def temperature_coefficient(self, temperature: ArrayLike) -> float | NDArray[np.float64]:
        """∂η/∂T (or ∂ν/∂T) at ``temperature`` [K] → [Pa·s/K or m²/(s·K)]."""
        return _scalar_or_array(np.array(self._evaluate("temperature_coefficient", temperature)[0]))

    def temperature_coefficient_uncertainty(
        self, temperature: ArrayLike
    ) -> float | NDArray[np.float64]:
        """Standard uncertainty of :meth:`temperature_coefficient` [Pa·s/K or m²/(s·K)]."""
        return _scalar_or_array(np.array(self._evaluate("temperature_coefficient", temperature)[1]))

    def relative_temperature_coefficient(
        self, temperature: ArrayLike
    ) -> float | NDArray[np.float64]:
        """(1/η)∂η/∂T = ∂ln η/∂T at ``temperature`` [K] → [1/K]."""
        return _scalar_or_array(
            np.array(self._evaluate("relative_temperature_coefficient", temperature)[0])
        )

    def relative_temperature_coefficient_uncertainty(
        self, temperature: ArrayLike
    ) -> float | NDArray[np.float64]:
        """Standard uncertainty of :meth:`relative_temperature_coefficient` [1/K]."""
        return _scalar_or_array(
            np.array(self._evaluate("relative_temperature_coefficient", temperature)[1])
        )


# --------------------------------------------------------------------------------------------
# fitting
# --------------------------------------------------------------------------------------------


def _check_data(
    temperature: ArrayLike,
    viscosity: ArrayLike,
    uncertainty: ArrayLike | None,
    n_parameters: int,
    viscosity_name: str,
    viscosity_unit: str,
) -> tuple[NDArray, NDArray, NDArray | None]:
    temp = np.atleast_1d(_as_float_array(temperature, "temperature"))
    visc = np.atleast_1d(_as_float_array(viscosity, viscosity_name))
    if temp.ndim != 1 or visc.shape != temp.shape:
        raise InputError(
            f"temperature and {viscosity_name} must be 1-D of equal length, "
            f"got shapes {temp.shape} and {visc.shape}"
        )
    _require_positive_finite(temp, "temperature", "K")
    _require_positive_finite(visc, viscosity_name, viscosity_unit)
    u = None
    if uncertainty is not None:
        u = np.atleast_1d(_as_float_array(uncertainty, "uncertainty"))
        if u.size == 1:
            u = np.full(temp.shape, float(u[0]))
        if u.shape != temp.shape:
            raise InputError(
                f"uncertainty must have one value per point ({temp.size}), got shape {u.shape}"
            )
        _require_positive_finite(u, "uncertainty", viscosity_unit)
    needed = n_parameters if u is not None else n_parameters + 1
    if temp.size < needed:
        raise InputError(
            f"number of data points must be at least {needed} for this model, got {temp.size}"
        )
    if np.unique(temp).size < n_parameters:
        raise InputError(
            f"temperature must take at least {n_parameters} distinct values, "
            f"got {np.unique(temp).size}"
        )
    return temp, visc, u


def _make_fit(
    model: TemperatureModel,
    temp: NDArray,
    parameters: ArrayLike,
    covariance: ArrayLike,
    dof: int,
    spread: float,
    reference_temperature: float = float("nan"),
) -> TemperatureModelFit:
    spec = _MODELS[model]
    return TemperatureModelFit(
        model=model,
        parameter_names=spec.parameter_names,
        parameters=_readonly(parameters),
        covariance=_readonly(covariance),
        degrees_of_freedom=int(dof),
        residual_standard_deviation=float(spread),
        fitted_quantity=spec.fitted_quantity,
        quantity=spec.quantity,
        temperature_range=(float(temp.min()), float(temp.max())),
        reference_temperature=float(reference_temperature),
    )


def _curve_fit(
    model: Callable[..., NDArray],
    jac: Callable[..., NDArray],
    x: NDArray,
    y: NDArray,
    p0: ArrayLike,
    sigma: NDArray | None,
) -> tuple[NDArray, NDArray]:
    """scipy.optimize.curve_fit (Levenberg-Marquardt, analytic Jacobian) with tight tolerances,
    retried with scipy's defaults if MINPACK reports the tight ones unattainable."""
    common = dict(sigma=sigma, absolute_sigma=sigma is not None, jac=jac, method="lm")
    with warnings.catch_warnings():
        # an inestimable covariance comes back as inf and is reported by the caller as a
        # ModelError; scipy's OptimizeWarning would only repeat it
        warnings.simplefilter("ignore", scipy.optimize.OptimizeWarning)
        try:
            return scipy.optimize.curve_fit(
                model, x, y, p0=p0, xtol=1e-15, ftol=1e-15, gtol=1e-15, maxfev=10000, **common
            )
        except RuntimeError:
            return scipy.optimize.curve_fit(model, x, y, p0=p0, maxfev=10000, **common)


def fit_andrade(
    temperature: ArrayLike, viscosity: ArrayLike, uncertainty: ArrayLike | None = None
) -> TemperatureModelFit:
    """Fit the Andrade (Arrhenius) law ln η = A + B/T by linear least squares in ln η.

    Parameters
    ----------
    temperature : array_like
        Temperatures [K].
    viscosity : array_like
        Dynamic viscosities [Pa·s].
    uncertainty : array_like, optional
        Standard uncertainties of the viscosities [Pa·s] (absolute weights; σ = u/η in ln η).

    Returns
    -------
    TemperatureModelFit
        Parameters A [1] and B [K] with covariance.

    Raises
    ------
    viscometry.errors.InputError
        On non-positive data, mismatched lengths, too few points.

    Notes
    -----
    .. math:: \\eta = e^{A + B/T},\\quad \\frac{\\partial\\eta}{\\partial T} = -\\frac{B}{T^2}\\eta

    References
    ----------
    E. N. da C. Andrade, Phil. Mag. 17 (1934) 497 and 698; JCGM 100:2008, H.3 (fit and
    covariance).

    Examples
    --------
    Noise-free data from ln η = −13 + 1900 K/T are recovered exactly:

    >>> import numpy as np
    >>> t = np.array([290.0, 300.0, 310.0])
    >>> fit = fit_andrade(t, np.exp(-13.0 + 1900.0 / t))
    >>> [round(float(p), 9) for p in fit.parameters]
    [-13.0, 1900.0]
    >>> round(fit.relative_temperature_coefficient(300.0), 6)  # −B/T², 1/K
    -0.021111
    """
    temp, visc, u = _check_data(temperature, viscosity, uncertainty, 2, "viscosity", "Pa*s")
    design = np.column_stack([np.ones_like(temp), 1.0 / temp])
    result = weighted_least_squares(design, np.log(visc), None if u is None else u / visc)
    return _make_fit(
        "andrade",
        temp,
        result.parameters,
        result.covariance,
        result.degrees_of_freedom,
        result.residual_standard_deviation,
    )


def fit_vogel_fulcher_tammann(
    temperature: ArrayLike, viscosity: ArrayLike, uncertainty: ArrayLike | None = None
) -> TemperatureModelFit:
    """Fit the Vogel-Fulcher-Tammann law ln η = A + B/(T − C) by nonlinear least squares.

    Parameters
    ----------
    temperature : array_like
        Temperatures [K], at least 3 distinct (4 points without ``uncertainty``).
    viscosity : array_like
        Dynamic viscosities [Pa·s].
    uncertainty : array_like, optional
        Standard uncertainties of the viscosities [Pa·s] (absolute weights; σ = u/η in ln η).

    Returns
    -------
    TemperatureModelFit
        Parameters A [1], B [K], C [K] with covariance.

    Raises
    ------
    viscometry.errors.InputError
        On non-positive data, mismatched lengths, too few points.
    viscometry.errors.ModelError
        If the fit does not converge to C below the lowest temperature.

    Notes
    -----
    Starting values come from a scan over C in [0, min T) with A, B by linear least squares at
    each C; :func:`scipy.optimize.curve_fit` (Levenberg-Marquardt) then refines all three, with
    ``absolute_sigma=True`` when uncertainties are given.  The covariance is the Gauss-Newton
    one, (JᵀWJ)⁻¹, at the optimum.  With three parameters on a short temperature range the
    estimates of A, B, C are strongly correlated; keep the covariance.

    References
    ----------
    H. Vogel, Phys. Z. 22 (1921) 645; G. S. Fulcher, J. Am. Ceram. Soc. 8 (1925) 339;
    G. Tammann, W. Hesse, Z. anorg. allg. Chem. 156 (1926) 245.
    """
    temp, visc, u = _check_data(temperature, viscosity, uncertainty, 3, "viscosity", "Pa*s")
    y = np.log(visc)
    sigma = None if u is None else u / visc
    t_min = float(temp.min())

    best: tuple[float, NDArray] | None = None
    for c in np.linspace(0.0, t_min, 201, endpoint=False)[1:]:
        design = np.column_stack([np.ones_like(temp), 1.0 / (temp - c)])
        lin = weighted_least_squares(design, y, sigma)
        cost = float(np.sum((lin.residuals if sigma is None else lin.residuals / sigma) ** 2))
        if best is None or cost < best[0]:
            best = (cost, np.array([lin.parameters[0], lin.parameters[1], c]))
    assert best is not None  # the scan has 200 points

    def model(t: NDArray, a: float, b: float, c: float) -> NDArray:
        return a + b / (t - c)

    def jac(t: NDArray, a: float, b: float, c: float) -> NDArray:
        d = t - c
        return np.column_stack([np.ones_like(t), 1.0 / d, b / d**2])

    try:
        popt, pcov = _curve_fit(model, jac, temp, y, best[1], sigma)
    except (RuntimeError, ValueError) as exc:
        raise ModelError(f"Vogel-Fulcher-Tammann fit did not converge: {exc}") from exc
    if not (np.all(np.isfinite(popt)) and np.all(np.isfinite(pcov))) or popt[2] >= t_min:
        raise ModelError(
            f"Vogel-Fulcher-Tammann fit gave C = {float(popt[2])!r} K, which must be finite and below "
            f"the lowest temperature {t_min!r} K"
        )
    residuals = y - model(temp, *popt)
    dof = temp.size - 3
    chi2 = float(np.sum((residuals if sigma is None else residuals / sigma) ** 2))
    spread = float(np.sqrt(chi2 / dof)) if dof > 0 else float("nan")
    return _make_fit("vogel_fulcher_tammann", temp, popt, pcov, dof, spread)


def fit_walther(
    temperature: ArrayLike, kinematic_viscosity: ArrayLike, uncertainty: ArrayLike | None = None
) -> TemperatureModelFit:
    """Fit the Walther equation of ASTM D341, log₁₀ log₁₀(ν + 0.7) = A − B log₁₀ T.

    Parameters
    ----------
    temperature : array_like
        Temperatures [K].
    kinematic_viscosity : array_like
        Kinematic viscosities [m²/s]; the equation itself works in mm²/s.
    uncertainty : array_like, optional
        Standard uncertainties of the kinematic viscosities [m²/s] (absolute weights, carried
        to Z = log₁₀ log₁₀(ν + 0.7) to first order).

    Returns
    -------
    TemperatureModelFit
        Parameters A [1] and B [1] with covariance; :meth:`TemperatureModelFit.value` returns
        ν [m²/s].

    Raises
    ------
    viscometry.errors.InputError
        On non-positive data, ν ≤ 0.3 mm²/s (log₁₀(ν + 0.7) ≤ 0), mismatched lengths, too few
        points.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a kinematic viscosity is below 2 mm²/s, where the standard adds correction terms.

    Notes
    -----
    Only the leading form Z = ν + 0.7 of ASTM D341 is used: the small exponential terms the
    standard adds to Z for low viscosities are omitted.  T is in kelvin, as in the current
    editions of ASTM D341 (older editions used degrees Rankine); A depends on that choice,
    B does not.

    References
    ----------
    ASTM D341, Standard Practice for Viscosity-Temperature Equations and Charts for Liquid
    Petroleum or Hydrocarbon Products (Walther equation, section 6 in recent editions);
    C. Walther, Erdöl und Teer 7 (1931) 382.
    """
    temp, nu, u = _check_data(
        temperature, kinematic_viscosity, uncertainty, 2, "kinematic_viscosity", "m^2/s"
    )
    nu_mm2 = nu * _MM2_PER_M2
    if np.any(nu_mm2 + WALTHER_OFFSET <= 1.0):
        bad = float(nu[nu_mm2 + WALTHER_OFFSET <= 1.0][0])
        raise InputError(
            f"kinematic_viscosity must exceed 0.3 mm^2/s for the Walther equation, got {bad!r} m^2/s"
        )
    _warn_outside(
        nu,
        "kinematic_viscosity",
        "m^2/s",
        (WALTHER_SIMPLE_FORM_MINIMUM, np.inf),
        "the Walther form Z = nu + 0.7 (ASTM D341 adds terms below 2 mm^2/s)",
    )
    z_inner = np.log10(nu_mm2 + WALTHER_OFFSET)
    z = np.log10(z_inner)
    sigma = None
    if u is not None:
        dz_dnu = _MM2_PER_M2 / ((nu_mm2 + WALTHER_OFFSET) * np.log(10.0) ** 2 * z_inner)
        sigma = u * dz_dnu
    design = np.column_stack([np.ones_like(temp), -np.log10(temp)])
    result = weighted_least_squares(design, z, sigma)
    return _make_fit(
        "walther",
        temp,
        result.parameters,
        result.covariance,
        result.degrees_of_freedom,
        result.residual_standard_deviation,
    )


def fit_sutherland(
    temperature: ArrayLike,
    viscosity: ArrayLike,
    uncertainty: ArrayLike | None = None,
    reference_temperature: float = _SUTHERLAND_DEFAULT_REFERENCE,
) -> TemperatureModelFit:
    """Fit Sutherland's law for gases, η = η₀ (T/T₀)^{3/2} (T₀ + S)/(T + S).

    Parameters
    ----------
    temperature : array_like
        Temperatures [K].
    viscosity : array_like
        Dynamic viscosities of the gas [Pa·s].
    uncertainty : array_like, optional
        Standard uncertainties of the viscosities [Pa·s] (absolute weights).
    reference_temperature : float, optional
        T₀ [K], held fixed; default 273.15 K.

    Returns
    -------
    TemperatureModelFit
        Parameters η₀ [Pa·s] (the viscosity at T₀) and S [K] with covariance.

    Raises
    ------
    viscometry.errors.InputError
        On non-positive data, mismatched lengths, too few points.
    viscometry.errors.ModelError
        If the nonlinear fit fails.

    Notes
    -----
    Starting values from the linear form T^{3/2}/η = (T + S)/K, K = η₀(T₀ + S)/T₀^{3/2};
    then :func:`scipy.optimize.curve_fit` in η (``absolute_sigma=True`` when uncertainties are
    given).

    References
    ----------
    W. Sutherland, Phil. Mag. (5) 36 (1893) 507-531.
    """
    temp, visc, u = _check_data(temperature, viscosity, uncertainty, 2, "viscosity", "Pa*s")
    t0 = float(reference_temperature)
    if not (np.isfinite(t0) and t0 > 0):
        raise InputError(f"reference_temperature must be positive and finite, got {t0!r} K")

    lin = np.polyfit(temp, temp**1.5 / visc, 1)
    slope, intercept = float(lin[0]), float(lin[1])
    s_start = intercept / slope if slope > 0 else 100.0
    if not np.isfinite(s_start) or s_start <= -float(temp.min()):
        s_start = 100.0
    eta0_start = float(
        np.exp(np.mean(np.log(visc * (temp + s_start) / (t0 + s_start) / (temp / t0) ** 1.5)))
    )

    def model(t: NDArray, eta0: float, s: float) -> NDArray:
        return eta0 * (t / t0) ** 1.5 * (t0 + s) / (t + s)

    def jac(t: NDArray, eta0: float, s: float) -> NDArray:
        base = (t / t0) ** 1.5
        return np.column_stack([base * (t0 + s) / (t + s), eta0 * base * (t - t0) / (t + s) ** 2])

    try:
        popt, pcov = _curve_fit(model, jac, temp, visc, [eta0_start, s_start], u)
    except (RuntimeError, ValueError) as exc:
        raise ModelError(f"Sutherland fit did not converge: {exc}") from exc
    if not (np.all(np.isfinite(popt)) and np.all(np.isfinite(pcov))):
        raise ModelError(f"Sutherland fit gave non-finite parameters {popt.tolist()!r}")
    residuals = visc - model(temp, *popt)
    dof = temp.size - 2
    chi2 = float(np.sum((residuals if u is None else residuals / u) ** 2))
    spread = float(np.sqrt(chi2 / dof)) if dof > 0 else float("nan")
    return _make_fit("sutherland", temp, popt, pcov, dof, spread, reference_temperature=t0)
