"""Linear (weighted) least squares with the parameter covariance a budget needs.

One function, :func:`weighted_least_squares`, and its frozen result
:class:`LeastSquaresResult`.  It serves calibration curves and the temperature models of
:mod:`viscometry.properties.temperature`; JCGM 100:2008, H.3 (thermometer calibration) is the
worked example it is tested against.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import scipy.linalg
from numpy.typing import ArrayLike, NDArray

from viscometry.errors import InputError

__all__ = ["LeastSquaresResult", "weighted_least_squares"]


def _readonly(array: NDArray[np.float64]) -> NDArray[np.float64]:
    array = np.array(array, dtype=float, copy=True)
    array.setflags(write=False)
    return array


@dataclass(frozen=True, eq=False)
class LeastSquaresResult:
    """Result of :func:`weighted_least_squares` (immutable; arrays are read-only).

    Attributes
    ----------
    parameters : numpy.ndarray
        Estimates of the p parameters [units of y per unit of the design-matrix column].
    covariance : numpy.ndarray
        p×p covariance matrix of the estimates [products of the parameter units].
    residuals : numpy.ndarray
        y − A·parameters, unweighted [unit of y].
    degrees_of_freedom : int
        ν = n − p.
    residual_standard_deviation : float
        Unweighted fit: s = √(Σ rᵢ²/ν) [unit of y], the experimental standard deviation of the
        observations about the line (JCGM 100:2008, H.3).  Weighted fit: √(χ²/ν) [1], the
        standard deviation of unit weight (Birge ratio).  NaN when ν = 0.
    chi_squared : float or None
        Σ (rᵢ/σᵢ)² for a weighted fit [1]; None when no σ was given.
    covariance_scaled : bool
        True when the covariance was scaled by the residual variance (always for an unweighted
        fit; for a weighted fit when ``absolute_sigma=False``).
    """

    parameters: NDArray[np.float64]
    covariance: NDArray[np.float64]
    residuals: NDArray[np.float64]
    degrees_of_freedom: int
    residual_standard_deviation: float
    chi_squared: float | None
    covariance_scaled: bool

    @property
    def standard_uncertainties(self) -> NDArray[np.float64]:
        """Standard uncertainties of the parameters, √diag(covariance)."""
        return np.sqrt(np.diag(self.covariance))

    @property
    def correlation(self) -> NDArray[np.float64]:
        """Correlation matrix of the parameters [1] (zero rows where an uncertainty is zero)."""
        u = self.standard_uncertainties
        with np.errstate(divide="ignore", invalid="ignore"):
            r = self.covariance / np.outer(u, u)
        r = np.where(np.isfinite(r), r, 0.0)
        np.fill_diagonal(r, 1.0)
        return r

    def predict(self, row: ArrayLike) -> tuple[float, float] | tuple[NDArray, NDArray]:
        """Value of the fitted model for a design-matrix row, with its standard uncertainty.

        Parameters
        ----------
        row : array_like
            One row x of the design matrix (length p), or an m×p array of rows.

        Returns
        -------
        value : float or numpy.ndarray
            x·parameters [unit of y].
        standard_uncertainty : float or numpy.ndarray
            √(x C xᵀ) with C the covariance (correlations included) [unit of y].

        Raises
        ------
        viscometry.errors.InputError
            If the row length differs from the number of parameters.

        Notes
        -----
        JCGM 100:2008, eq. (13) applied to the linear model: u²(y) = Σ Σ xᵢ xⱼ u(pᵢ, pⱼ).
        """
        x = np.asarray(row, dtype=float)
        p = self.parameters.size
        if x.shape[-1:] != (p,) or x.ndim > 2:
            raise InputError(f"row must have {p} elements (one per parameter), got shape {x.shape}")
        value = x @ self.parameters
        variance = np.einsum("...i,ij,...j->...", x, self.covariance, x)
        u = np.sqrt(np.maximum(variance, 0.0))
        if x.ndim == 1:
            return float(value), float(u)
        return value, u


def weighted_least_squares(
    design_matrix: ArrayLike,
    y: ArrayLike,
    sigma: ArrayLike | None = None,
    *,
    absolute_sigma: bool = True,
) -> LeastSquaresResult:
    """Fit y ≈ A·β by (weighted) linear least squares, returning β and its covariance.

    Parameters
    ----------
    design_matrix : array_like
        n×p design matrix A [column units chosen by the caller].
    y : array_like
        n observations [unit of y].
    sigma : array_like, optional
        n standard uncertainties of the observations [unit of y]; weights 1/σ².  If None, all
        observations weigh the same and the covariance is scaled by the residual variance.
    absolute_sigma : bool, optional
        With ``sigma`` given: True (default) takes σ as absolute, C = (AᵀWA)⁻¹; False treats σ
        as relative weights and scales C by χ²/ν.

    Returns
    -------
    LeastSquaresResult
        Estimates, covariance, residuals, ν, residual standard deviation, χ².

    Raises
    ------
    viscometry.errors.InputError
        On shape mismatch, non-finite data, non-positive σ, a rank-deficient design matrix, or
        n ≤ p when the covariance must be scaled by the residual variance.

    Notes
    -----
    Solved by a QR factorisation of the whitened system W^½A = QR:
    β = R⁻¹Qᵀ W^½ y and (AᵀWA)⁻¹ = R⁻¹R⁻ᵀ.  Unweighted: C = s²(AᵀA)⁻¹ with
    s² = Σrᵢ²/(n − p), as in JCGM 100:2008, H.3 (eqs. H.13-H.15).

    References
    ----------
    JCGM 100:2008 (GUM), Annex H.3 and C.3; Å. Björck, *Numerical Methods for Least Squares
    Problems*, SIAM (1996), 1.1-1.3.

    Examples
    --------
    Exact straight line y = 1 + 2x:

    >>> fit = weighted_least_squares([[1, 0], [1, 1], [1, 2]], [1, 3, 5])
    >>> [round(float(b), 12) for b in fit.parameters]
    [1.0, 2.0]
    """
    a = np.asarray(design_matrix, dtype=float)
    yy = np.asarray(y, dtype=float)
    if a.ndim != 2:
        raise InputError(f"design_matrix must be two-dimensional (n x p), got shape {a.shape}")
    n, p = a.shape
    if yy.shape != (n,):
        raise InputError(
            f"y must have {n} elements (one per design-matrix row), got shape {yy.shape}"
        )
    if not np.all(np.isfinite(a)):
        raise InputError("design_matrix must be finite, got a non-finite entry")
    if not np.all(np.isfinite(yy)):
        raise InputError(f"y must be finite, got {float(yy[~np.isfinite(yy)][0])!r}")
    if p == 0:
        raise InputError("design_matrix must have at least one column, got 0")
    if sigma is None:
        s_arr = np.ones(n)
    else:
        s_arr = np.asarray(sigma, dtype=float)
        if s_arr.ndim == 0:
            s_arr = np.full(n, float(s_arr))
        if s_arr.shape != (n,):
            raise InputError(f"sigma must have {n} elements, got shape {s_arr.shape}")
        bad = ~(np.isfinite(s_arr) & (s_arr > 0))
        if np.any(bad):
            raise InputError(f"sigma must be positive and finite, got {float(s_arr[bad][0])!r}")
    scaled = sigma is None or not absolute_sigma
    dof = n - p
    if dof < 0 or (scaled and dof < 1):
        raise InputError(
            f"number of observations must exceed the number of parameters ({p}) "
            f"to estimate the covariance, got {n}"
        )
    aw = a / s_arr[:, None]
    yw = yy / s_arr
    if np.linalg.matrix_rank(aw) < p:
        raise InputError(
            f"design_matrix must have full column rank {p}, got rank {np.linalg.matrix_rank(aw)}"
        )
    q, r = np.linalg.qr(aw, mode="reduced")
    beta = scipy.linalg.solve_triangular(r, q.T @ yw)
    r_inv = scipy.linalg.solve_triangular(r, np.eye(p))
    covariance = r_inv @ r_inv.T
    residuals = yy - a @ beta
    chi2 = float(np.sum((residuals / s_arr) ** 2))
    spread = float(np.sqrt(chi2 / dof)) if dof > 0 else float("nan")
    if scaled:
        covariance = covariance * chi2 / dof
    return LeastSquaresResult(
        parameters=_readonly(beta),
        covariance=_readonly(0.5 * (covariance + covariance.T)),
        residuals=_readonly(residuals),
        degrees_of_freedom=int(dof),
        residual_standard_deviation=spread,
        chi_squared=None if sigma is None else chi2,
        covariance_scaled=bool(scaled),
    )
