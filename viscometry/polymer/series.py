"""A dilution series and its extrapolation to zero concentration, with uncertainties.

A :class:`DiluteSeries` holds what a laboratory weighs, makes up and times: the polymer
mass (and its dry-mass fraction), the volume of the stock solution, the solvent's flow time,
and for each solution the aliquot of stock made up to a final volume and its flow time
(optionally its density ratio and the viscometer's kinetic-energy constants). Every one is an
:class:`~viscometry.gum.inputs.InputQuantity` in SI units.

:func:`extrapolate` turns it into concentrations and relative viscosities, fits the Huggins
line η_sp/c = [η] + k_H[η]²c and the Kraemer line ln(η_rel)/c = [η] − k_K[η]²c by
generalised least squares, and propagates the uncertainty of every input through the whole
chain (weighings → concentrations → flow times → fit). The points are correlated through the
shared solvent flow time and stock concentration; the weight matrix is the inverse of the
points' covariance propagated from the inputs (evaluated once, at the estimates, and then
held fixed). Sensitivity coefficients are exact derivatives by the complex step
(J. N. Lyness and C. B. Moler, SIAM J. Numer. Anal. 4 (1967) 202; W. Squire and G. Trapp,
SIAM Rev. 40 (1998) 110), so no difference step is chosen by hand. Every u_c, ν_eff, k and U
comes from :func:`viscometry.gum.propagation.propagate`. :func:`monte_carlo_check` repeats
the chain with draws of every input (JCGM 101:2008), seeded.
"""

from __future__ import annotations

import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass

import numpy as np
from numpy.typing import NDArray

from viscometry.errors import InputError, ValidityWarning
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.propagation import DEFAULT_COVERAGE_PROBABILITY, propagate
from viscometry.polymer.viscosity import (
    RELATIVE_VISCOSITY_RANGE,
    SINGLE_POINT_FORMS,
    relative_viscosity,
    single_point_intrinsic_viscosity,
)

__all__ = [
    "MAX_SOLUTIONS",
    "DiluteSeries",
    "Estimate",
    "Extrapolation",
    "LineFit",
    "MonteCarloCheck",
    "SinglePoint",
    "Solution",
    "extrapolate",
    "monte_carlo_check",
]

#: Most solutions a series may have (hostile input is bounded; a real series has 3 to 8).
MAX_SOLUTIONS = 50
#: Fewest solutions a series may have (two parameters and one degree of freedom to check).
MIN_SOLUTIONS = 3
#: Most input draws held in memory at once by :func:`monte_carlo_check` (inputs × trials).
MONTE_CARLO_CHUNK_VALUES = 2_000_000
#: Significance level below which the lack-of-fit χ² of a line is reported [1] (our
#: default, no source).
LACK_OF_FIT_LEVEL = 0.01


@dataclass(frozen=True)
class Solution:
    """One solution of the series (immutable).

    Attributes
    ----------
    label : str
        Its name in the laboratory's records.
    flow_time : InputQuantity
        Flow time t of the solution [s].
    aliquot_volume, final_volume : InputQuantity or None
        Volume of stock solution taken [m³] and the volume it is made up to [m³]; both None
        for the undiluted stock.
    density_ratio : InputQuantity or None
        ρ/ρ₀ [1]; None for 1 exactly.
    """

    label: str
    flow_time: InputQuantity
    aliquot_volume: InputQuantity | None = None
    final_volume: InputQuantity | None = None
    density_ratio: InputQuantity | None = None

    def __post_init__(self) -> None:
        if (self.aliquot_volume is None) != (self.final_volume is None):
            raise InputError(
                f"solution {self.label!r}: aliquot_volume and final_volume go together, "
                "got only one"
            )
        for q in (self.flow_time, self.aliquot_volume, self.final_volume, self.density_ratio):
            if q is not None and not q.value > 0:
                raise InputError(
                    f"solution {self.label!r}: {q.name} must be positive, got {q.value!r}"
                )
        if self.aliquot_volume is not None and self.final_volume is not None:
            if self.aliquot_volume.value > self.final_volume.value:
                raise InputError(
                    f"solution {self.label!r}: aliquot_volume {self.aliquot_volume.value!r} m³ "
                    f"exceeds final_volume {self.final_volume.value!r} m³"
                )

    def quantities(self) -> tuple[InputQuantity, ...]:
        """Its input quantities in a fixed order (those given)."""
        qs = (self.flow_time, self.aliquot_volume, self.final_volume, self.density_ratio)
        return tuple(q for q in qs if q is not None)


@dataclass(frozen=True)
class DiluteSeries:
    """A dilution series of one polymer in one solvent at one temperature (immutable).

    Attributes
    ----------
    polymer_mass : InputQuantity
        Mass m of polymer weighed for the stock solution [kg].
    stock_volume : InputQuantity
        Volume V₀ the stock solution is made up to [m³].
    solvent_flow_time : InputQuantity
        Flow time t₀ of the pure solvent [s].
    solutions : tuple of Solution
        :data:`MIN_SOLUTIONS` to :data:`MAX_SOLUTIONS` solutions.
    mass_fraction : InputQuantity or None
        Dry polymer content w of the weighed material [1]; None for 1.
    viscometer_constant, kinetic_energy_constant : InputQuantity or None
        C [m²/s²] and E [m²·s] of ν = C t − E/t² (both or neither).
    title : str
        What the series is.
    """

    polymer_mass: InputQuantity
    stock_volume: InputQuantity
    solvent_flow_time: InputQuantity
    solutions: tuple[Solution, ...]
    mass_fraction: InputQuantity | None = None
    viscometer_constant: InputQuantity | None = None
    kinetic_energy_constant: InputQuantity | None = None
    title: str = ""

    def __post_init__(self) -> None:
        object.__setattr__(self, "solutions", tuple(self.solutions))
        n = len(self.solutions)
        if not MIN_SOLUTIONS <= n <= MAX_SOLUTIONS:
            raise InputError(f"solutions must number {MIN_SOLUTIONS} to {MAX_SOLUTIONS}, got {n}")
        if (self.viscometer_constant is None) != (self.kinetic_energy_constant is None):
            raise InputError(
                "viscometer_constant and kinetic_energy_constant go together, got only one"
            )
        for q in (self.polymer_mass, self.stock_volume, self.solvent_flow_time,
                  self.mass_fraction, self.viscometer_constant):  # fmt: skip
            if q is not None and not q.value > 0:
                raise InputError(f"{q.name} must be positive, got {q.value!r}")
        names = [q.name for q in self.inputs()]
        twice = sorted({x for x in names if names.count(x) > 1})
        if twice:
            raise InputError(f"input names must differ, got {', '.join(twice)} more than once")
        labels = [s.label for s in self.solutions]
        if len(set(labels)) != len(labels):
            raise InputError(f"solution labels must differ, got {labels!r}")

    def inputs(self) -> tuple[InputQuantity, ...]:
        """Every input quantity of the chain, in a fixed order (series first, then solutions)."""
        head = (self.polymer_mass, self.mass_fraction, self.stock_volume,
                self.solvent_flow_time, self.viscometer_constant, self.kinetic_energy_constant)  # fmt: skip
        out = [q for q in head if q is not None]
        for s in self.solutions:
            out.extend(s.quantities())
        return tuple(out)

    def labels(self) -> tuple[str, ...]:
        """The solutions' labels."""
        return tuple(s.label for s in self.solutions)

    def points(self, x: Sequence | NDArray | None = None) -> tuple[NDArray, NDArray]:
        """Concentrations c [kg/m³] and relative viscosities η_rel [1] of the solutions.

        Parameters
        ----------
        x : sequence of float or arrays, optional
            Values of :meth:`inputs` in their order (SI); each may be an array of trials
            (real or complex). Default: the estimates.

        Returns
        -------
        c, relative : numpy.ndarray
            Shape (n,) or (n, …) with the solutions on the first axis.

        Notes
        -----
        c_stock = w·m/V₀; c_i = c_stock·V_a,i/V_f,i; η_rel,i from
        :func:`~viscometry.polymer.viscosity.relative_viscosity`.
        """
        qs = self.inputs()
        if x is None:
            x = [q.value for q in qs]
        v = {q.name: xi for q, xi in zip(qs, x, strict=True)}

        def get(q: InputQuantity | None, default: float) -> object:
            return default if q is None else v[q.name]

        c_stock = (
            v[self.polymer_mass.name] * get(self.mass_fraction, 1.0) / v[self.stock_volume.name]
        )
        c_vis, e_vis = get(self.viscometer_constant, 1.0), get(self.kinetic_energy_constant, 0.0)
        cs, rel = [], []
        for s in self.solutions:
            if s.aliquot_volume is None or s.final_volume is None:
                cs.append(c_stock * 1.0)
            else:
                cs.append(c_stock * v[s.aliquot_volume.name] / v[s.final_volume.name])
            rel.append(relative_viscosity(
                v[s.flow_time.name], v[self.solvent_flow_time.name],
                density_ratio=get(s.density_ratio, 1.0), viscometer_constant=c_vis,
                kinetic_energy_constant=e_vis,
            ))  # fmt: skip
        return np.stack(np.broadcast_arrays(*cs)), np.stack(np.broadcast_arrays(*rel))


@dataclass(frozen=True)
class Estimate:
    """A derived quantity with its propagated uncertainty (SI; immutable).

    Attributes
    ----------
    value, standard_uncertainty : float
        y and u(y) [unit of y].
    effective_dof : float
        ν_eff, truncated (JCGM 100:2008, G.6.4) [1].
    coverage_factor, expanded_uncertainty, coverage_probability : float
        k [1], U = k·u [unit of y], p [1].
    contributions : tuple of (str, float)
        Signed cᵢ·u(xᵢ) per input name [unit of y].
    """

    value: float
    standard_uncertainty: float
    effective_dof: float
    coverage_factor: float
    expanded_uncertainty: float
    coverage_probability: float
    contributions: tuple[tuple[str, float], ...] = ()

    def dominant(self) -> str:
        """Name of the input with the largest |cᵢ·u(xᵢ)| ("" when there is none)."""
        if not self.contributions:
            return ""
        return max(self.contributions, key=lambda item: abs(item[1]))[0]


def _estimate(
    value: float,
    gradient: NDArray,
    inputs: Sequence[InputQuantity],
    p: float,
    correlation: NDArray | None = None,
) -> Estimate:
    u = np.array([q.standard_uncertainty for q in inputs])
    nu = np.array([q.dof for q in inputs])
    g = np.asarray(gradient, dtype=float)
    r = propagate(g, u, nu, correlation, coverage_probability=p)
    names = [q.name for q in inputs]
    return Estimate(
        value=float(value), standard_uncertainty=float(r.standard_uncertainty),
        effective_dof=float(r.effective_dof_used), coverage_factor=float(r.coverage_factor),
        expanded_uncertainty=float(r.expanded_uncertainty),
        coverage_probability=float(r.coverage_probability),
        contributions=tuple(zip(names, (float(c) for c in r.contributions), strict=True)),
    )  # fmt: skip


def complex_step_jacobian(
    function: Callable[[NDArray], NDArray], x0: NDArray, scale: NDArray
) -> tuple[NDArray, NDArray]:
    """Value and Jacobian of ``function`` at ``x0`` by the complex step.

    ``function`` takes a (N, M) array (inputs on the first axis, M evaluation points) and
    returns (K, M). Step hᵢ = 10⁻²⁰·scaleᵢ; ∂f/∂xᵢ = Im f(x + i hᵢ eᵢ)/hᵢ, exact to
    round-off for analytic functions (Squire and Trapp 1998).
    """
    n = x0.size
    h = 1e-20 * scale
    x = np.repeat(x0.astype(complex)[:, None], n + 1, axis=1)
    x[np.arange(n), np.arange(n)] += 1j * h
    f = np.asarray(function(x))
    return f[:, n].real, f[:, :n].imag / h[None, :]


def _gls_line(c: NDArray, y: NDArray, weight: NDArray) -> tuple[NDArray, NDArray]:
    """Intercept and slope of y = b₀ + b₁c by generalised least squares with weight matrix W
    (n×n, fixed); c and y (n, …), real or complex. Normal equations (AᵀWA)β = AᵀWy."""
    one = np.ones_like(c)

    def dot(a: NDArray, b: NDArray) -> NDArray:
        return np.einsum("i...,ij,j...->...", a, weight, b)

    s11, s1c, scc, s1y, scy = dot(one, one), dot(one, c), dot(c, c), dot(one, y), dot(c, y)
    det = s11 * scc - s1c**2
    return (scc * s1y - s1c * scy) / det, (s11 * scy - s1c * s1y) / det


@dataclass(frozen=True, eq=False)
class LineFit:
    """One extrapolation line to zero concentration (immutable).

    Attributes
    ----------
    form : {"huggins", "kraemer"}
        η_sp/c (Huggins) or ln(η_rel)/c (Kraemer) against c.
    intrinsic : Estimate
        The intercept [η] [m³/kg].
    slope : float
        k[η]² [m⁶/kg²].
    constant : Estimate
        k_H = slope/[η]² (Huggins) or k_K = −slope/[η]² (Kraemer) [1].
    covariance : numpy.ndarray
        2×2 covariance of (intercept, slope) propagated through the whole chain.
    ordinates, ordinate_uncertainties : numpy.ndarray
        The points' y values and standard uncertainties [m³/kg].
    weight : numpy.ndarray
        The weight matrix used, inverse of the points' covariance [kg²/m⁶].
    chi_squared : float
        rᵀWr of the residuals r [1], with :attr:`dof` = n − 2.
    p_value : float
        Probability of a χ² at least as large for a line that holds [1].
    """

    form: str
    intrinsic: Estimate
    slope: float
    constant: Estimate
    covariance: NDArray
    ordinates: NDArray
    ordinate_uncertainties: NDArray
    weight: NDArray
    chi_squared: float
    dof: int
    p_value: float


@dataclass(frozen=True)
class SinglePoint:
    """A single-point estimate of [η] at one solution, and its bias against the extrapolation.

    Attributes
    ----------
    form : str
        Key of :data:`~viscometry.polymer.viscosity.SINGLE_POINT_FORMS`.
    label : str
        The solution it was computed from.
    estimate : Estimate
        [η] from that solution alone [m³/kg].
    bias : Estimate
        Estimate minus the Huggins intercept, with the uncertainty of the difference
        (correlations through the shared inputs included) [m³/kg].
    """

    form: str
    label: str
    estimate: Estimate
    bias: Estimate

    @property
    def relative_bias(self) -> float:
        """bias/[η]_Huggins [1]."""
        return self.bias.value / (self.estimate.value - self.bias.value)


@dataclass(frozen=True, eq=False)
class Extrapolation:
    """Everything :func:`extrapolate` finds for a series (immutable).

    Attributes
    ----------
    series : DiluteSeries
    concentrations, concentration_uncertainties : numpy.ndarray
        c and u(c) per solution [kg/m³].
    relative_viscosities, relative_uncertainties : numpy.ndarray
        η_rel and u(η_rel) per solution [1].
    huggins, kraemer : LineFit
    difference : Estimate
        [η]_Huggins − [η]_Kraemer with its propagated uncertainty [m³/kg].
    consistent : bool
        |difference| ≤ U(difference): the two intercepts agree within the expanded
        uncertainty of their difference (the E_n criterion, ISO 13528, applied to two
        correlated results).
    single_points : tuple of SinglePoint
        Each form of :data:`~viscometry.polymer.viscosity.SINGLE_POINT_FORMS` at each solution.
    warnings : tuple of str
        Relative viscosities outside :data:`RELATIVE_VISCOSITY_RANGE`, lines that do not
        describe the points (lack of fit).
    coverage_probability : float
    """

    series: DiluteSeries
    concentrations: NDArray
    concentration_uncertainties: NDArray
    relative_viscosities: NDArray
    relative_uncertainties: NDArray
    huggins: LineFit
    kraemer: LineFit
    difference: Estimate
    consistent: bool
    single_points: tuple[SinglePoint, ...]
    warnings: tuple[str, ...]
    coverage_probability: float

    def single_point(self, form: str, label: str) -> SinglePoint:
        """The single-point estimate of ``form`` at the solution ``label``."""
        for sp in self.single_points:
            if sp.form == form and sp.label == label:
                return sp
        raise InputError(f"no single-point estimate {form!r} at solution {label!r}")


def _ordinates(form: str, c: NDArray, rel: NDArray) -> NDArray:
    return (rel - 1.0) / c if form == "huggins" else np.log(rel) / c


def _scale(inputs: Sequence[InputQuantity]) -> NDArray:
    """Size of each input for the complex step (its value, else its uncertainty, else 1)."""
    out = []
    for q in inputs:
        out.append(abs(q.value) or q.standard_uncertainty or 1.0)
    return np.array(out, dtype=float)


def _weight(cov: NDArray, form: str) -> NDArray:
    import scipy.linalg

    try:
        factor = scipy.linalg.cho_factor(cov)
        return scipy.linalg.cho_solve(factor, np.eye(cov.shape[0]))
    except (np.linalg.LinAlgError, ValueError):
        raise InputError(
            f"the {form} points' covariance is singular: each solution needs an uncertainty "
            "of its own (flow-time readings or its volumes)"
        ) from None


def _fit(
    series: DiluteSeries, form: str, x0: NDArray, scale: NDArray, p: float
) -> tuple[LineFit, NDArray]:
    """One line with its full-chain covariance; also the gradient rows of (b₀, b₁)."""
    from scipy.special import chdtrc

    inputs = series.inputs()
    n = len(series.solutions)
    u = np.array([q.standard_uncertainty for q in inputs])

    def ordinates(x: NDArray) -> NDArray:
        c, rel = series.points(list(x))
        return _ordinates(form, c, rel)

    y, jy = complex_step_jacobian(ordinates, x0, scale)
    cov_y = (jy * u**2) @ jy.T
    weight = _weight(cov_y, form)

    def line(x: NDArray) -> NDArray:
        c, rel = series.points(list(x))
        b0, b1 = _gls_line(c, _ordinates(form, c, rel), weight)
        return np.stack([b0, b1])

    (b0, b1), g = complex_step_jacobian(line, x0, scale)
    c0, _ = series.points()
    resid = y - (b0 + b1 * c0)
    chi2 = float(resid @ weight @ resid)
    sign = 1.0 if form == "huggins" else -1.0  # Kraemer's constant has the minus sign
    k_grad = sign * (g[1] * b0 - 2.0 * b1 * g[0]) / b0**3
    fit = LineFit(
        form=form, intrinsic=_estimate(b0, g[0], inputs, p), slope=float(b1),
        constant=_estimate(sign * b1 / b0**2, k_grad, inputs, p),
        covariance=_readonly((g * u**2) @ g.T), ordinates=_readonly(y),
        ordinate_uncertainties=_readonly(np.sqrt(np.diag(cov_y))), weight=_readonly(weight),
        chi_squared=chi2, dof=n - 2, p_value=float(chdtrc(n - 2, chi2)),
    )  # fmt: skip
    return fit, g


def _readonly(a: NDArray) -> NDArray:
    a = np.array(a, dtype=float, copy=True)
    a.setflags(write=False)
    return a


def extrapolate(
    series: DiluteSeries, *, coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY
) -> Extrapolation:
    """Huggins and Kraemer extrapolations of a series with uncertainties and checks.

    Parameters
    ----------
    series : DiluteSeries
    coverage_probability : float, optional
        p of every expanded uncertainty [1].

    Returns
    -------
    Extrapolation

    Warns
    -----
    ValidityWarning
        For each relative viscosity outside :data:`RELATIVE_VISCOSITY_RANGE` and each line
        whose lack-of-fit χ² has p < :data:`LACK_OF_FIT_LEVEL` (also in ``warnings``).

    Notes
    -----
    Huggins: η_sp/c = [η] + k_H[η]²c; Kraemer: ln(η_rel)/c = [η] − k_K[η]²c (Huggins 1942,
    Kraemer 1938, from memory). For a polymer obeying the Huggins law with small [η]c,
    k_H + k_K → 1/2 as c → 0 (series expansion of ln(1 + η_sp), exact analytic).
    """
    p = float(coverage_probability)
    inputs = series.inputs()
    x0 = np.array([q.value for q in inputs], dtype=float)
    scale = _scale(inputs)
    u = np.array([q.standard_uncertainty for q in inputs])
    both, jac = complex_step_jacobian(lambda x: np.concatenate(series.points(list(x))), x0, scale)
    n = len(series.solutions)
    c, rel = both[:n], both[n:]
    u_pts = np.sqrt((jac**2) @ u**2)
    huggins, g_h = _fit(series, "huggins", x0, scale, p)
    kraemer, g_k = _fit(series, "kraemer", x0, scale, p)
    d = huggins.intrinsic.value - kraemer.intrinsic.value
    difference = _estimate(d, g_h[0] - g_k[0], inputs, p)
    singles = _single_points(series, x0, scale, huggins.intrinsic.value, g_h[0], p)
    notes = _warnings(series, rel, (huggins, kraemer))
    for text in notes:
        warnings.warn(text, ValidityWarning, stacklevel=2)
    return Extrapolation(
        series=series, concentrations=_readonly(c), concentration_uncertainties=_readonly(u_pts[:n]),
        relative_viscosities=_readonly(rel), relative_uncertainties=_readonly(u_pts[n:]),
        huggins=huggins, kraemer=kraemer, difference=difference,
        consistent=bool(abs(d) <= difference.expanded_uncertainty), single_points=singles,
        warnings=tuple(notes), coverage_probability=p,
    )  # fmt: skip


def _single_points(
    series: DiluteSeries, x0: NDArray, scale: NDArray, intrinsic: float, g_ref: NDArray, p: float
) -> tuple[SinglePoint, ...]:
    inputs = series.inputs()
    out = []
    for form in SINGLE_POINT_FORMS:

        def estimates(x: NDArray, form: str = form) -> NDArray:
            c, rel = series.points(list(x))
            return single_point_intrinsic_viscosity(rel, c, form)

        values, jac = complex_step_jacobian(estimates, x0, scale)
        for label, value, grad in zip(series.labels(), values, jac, strict=True):
            out.append(SinglePoint(
                form=form, label=label, estimate=_estimate(value, grad, inputs, p),
                bias=_estimate(value - intrinsic, grad - g_ref, inputs, p),
            ))  # fmt: skip
    return tuple(out)


def _warnings(series: DiluteSeries, rel: NDArray, fits: Sequence[LineFit]) -> list[str]:
    low, high = RELATIVE_VISCOSITY_RANGE
    out = []
    for label, r in zip(series.labels(), rel, strict=True):
        if r < low or r > high:
            out.append(
                f"solution {label}: relative viscosity {r:.4f} is outside {low}–{high}, where "
                "the linear Huggins and Kraemer forms are used (common practice)"
            )
    for fit in fits:
        if fit.p_value < LACK_OF_FIT_LEVEL:
            out.append(
                f"{fit.form} line: the points scatter about it more than their uncertainties "
                f"allow (χ² = {fit.chi_squared:.3g} with ν = {fit.dof}, p = {fit.p_value:.2g} "
                f"< {LACK_OF_FIT_LEVEL})"
            )
    return out


@dataclass(frozen=True)
class MonteCarloCheck:
    """[η] of both lines by the Monte Carlo method through the whole chain (immutable).

    Attributes
    ----------
    trials : int
    seed : int
    huggins, kraemer : tuple of float
        (mean, standard deviation, lower, upper end of the probabilistically symmetric
        coverage interval) [m³/kg].
    coverage_probability : float
    """

    trials: int
    seed: int
    huggins: tuple[float, float, float, float]
    kraemer: tuple[float, float, float, float]
    coverage_probability: float


def monte_carlo_check(
    extrapolation: Extrapolation, *, trials: int = 100_000, seed: int = 1
) -> MonteCarloCheck:
    """Draw every input (JCGM 101:2008, 6.4) and repeat the chain, weights held fixed.

    Parameters
    ----------
    extrapolation : Extrapolation
        Supplies the series and the weight matrices of its two lines.
    trials : int, optional
        Number M of draws [1], at most :data:`viscometry.gum.montecarlo.MAX_TRIALS`.
    seed : int, optional
        Seed of the draws; the same seed gives the same numbers. The draws come in chunks
        of at most :data:`MONTE_CARLO_CHUNK_VALUES` values from one generator.

    Returns
    -------
    MonteCarloCheck
    """
    from viscometry.gum.montecarlo import check_trials, coverage_interval, draw_inputs

    m = check_trials(trials, "trials")
    series = extrapolation.series
    inputs = series.inputs()
    fits = (extrapolation.huggins, extrapolation.kraemer)
    rng = np.random.default_rng(seed)
    # Chunks bound the memory of the draws (inputs × trials) whatever the number of trials.
    chunk = max(1, MONTE_CARLO_CHUNK_VALUES // len(inputs))
    values = np.empty((2, m))
    for start in range(0, m, chunk):
        size = min(chunk, m - start)
        c, rel = series.points(list(draw_inputs(inputs, None, size, rng)))
        for k, fit in enumerate(fits):
            values[k, start : start + size] = _gls_line(
                c, _ordinates(fit.form, c, rel), fit.weight
            )[0]
    p = extrapolation.coverage_probability
    out = []
    for b0 in values:
        low, high = coverage_interval(np.sort(b0), p)
        out.append((float(np.mean(b0)), float(np.std(b0, ddof=1)), float(low), float(high)))
    return MonteCarloCheck(
        trials=m, seed=int(seed), huggins=out[0], kraemer=out[1], coverage_probability=p
    )
