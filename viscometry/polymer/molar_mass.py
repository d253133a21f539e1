"""Viscosity-average molar mass from [η] by the Mark–Houwink law, with its uncertainty.

[η] = K·M^a (H. Mark 1938, R. Houwink 1940; from memory), so M = ([η]/K)^(1/a). K and a
belong to one polymer–solvent–temperature system and are fitted together, so they are
usually strongly (negatively) correlated; the correlation coefficient can be given.
"""

from __future__ import annotations

import math

import numpy as np

from viscometry.errors import InputError
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.propagation import DEFAULT_COVERAGE_PROBABILITY, validate_correlation
from viscometry.polymer.series import Estimate, _estimate
from viscometry.polymer.viscosity import mark_houwink_molar_mass

__all__ = ["molar_mass"]


def molar_mass(
    intrinsic: Estimate,
    k_constant: InputQuantity,
    exponent: InputQuantity,
    *,
    correlation: float = 0.0,
    coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY,
) -> Estimate:
    """M = ([η]/K)^(1/a) with the uncertainty of [η], K and a.

    Parameters
    ----------
    intrinsic : Estimate
        [η] from an extrapolation [m³/kg]; its ν_eff is used as its degrees of freedom.
    k_constant : InputQuantity
        K [m³/kg] (for M in g/mol), named ``K`` in the contributions.
    exponent : InputQuantity
        a [1].
    correlation : float, optional
        r(K, a) [1]; 0 by default.
    coverage_probability : float, optional
        p of the expanded uncertainty [1].

    Returns
    -------
    Estimate
        M [g/mol]; contributions named ``intrinsic_viscosity``, the name of K and of a.

    Notes
    -----
    Sensitivities (exact analytic): ∂M/∂[η] = M/(a[η]), ∂M/∂K = −M/(aK),
    ∂M/∂a = −M·ln([η]/K)/a².

    Examples
    --------
    >>> from viscometry.polymer.series import Estimate
    >>> eta = Estimate(0.1, 0.001, math.inf, 2.0, 0.002, 0.95)
    >>> m = molar_mass(eta, InputQuantity.normal("K", 1e-5, 0.0), InputQuantity.normal("a", 0.5, 0.0))
    >>> f"{m.value:.6g} {m.standard_uncertainty / m.value:.6g}"  # u_rel(M) = u_rel([η])/a
    '1e+08 0.02'
    """
    eta, k, a = intrinsic.value, k_constant.value, exponent.value
    for name, v in (("intrinsic viscosity", eta), (k_constant.name, k), (exponent.name, a)):
        if not v > 0:
            raise InputError(f"{name} must be positive, got {v!r}")
    m = float(mark_houwink_molar_mass(eta, k, a))
    grad = np.array([m / (a * eta), -m / (a * k), -m * math.log(eta / k) / a**2])
    eta_q = InputQuantity.normal(
        "intrinsic_viscosity", eta, intrinsic.standard_uncertainty,
        dof=intrinsic.effective_dof,
    )  # fmt: skip
    r = np.eye(3)
    r[1, 2] = r[2, 1] = float(correlation)
    r = validate_correlation(r, ["intrinsic_viscosity", k_constant.name, exponent.name])
    return _estimate(m, grad, (eta_q, k_constant, exponent), coverage_probability, r)
