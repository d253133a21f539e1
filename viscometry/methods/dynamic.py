"""Dynamic viscosity from kinematic viscosity and density, η = ν ρ.

``dynamic_from_kinematic``
    η = ν (1 − α_ν δT) · ρ (1 − α_ρ δT): ν and ρ measured at the stated temperature T₀ as read
    by thermometers that share the error δT (same reference thermometer, or the same bath).
    The shared error is one input, so its effect on both factors is combined automatically;
    with α_ν and α_ρ both negative for liquids the two effects add.
``dynamic_from_kinematic_correlated``
    η = ν ρ with the two inputs correlated; :func:`shared_temperature_correlation` gives the
    correlation coefficient that the shared δT causes. Both forms give the same u_c (first
    order).

α_ν = (1/ν)∂ν/∂T and α_ρ = (1/ρ)∂ρ/∂T are relative temperature coefficients [1/K];
ν(T₀) = ν(T₀ + δT)(1 − α_ν δT) to first order (Taylor expansion).

References
----------
ISO 3104 (dynamic viscosity η = ν ρ at the same temperature); JCGM 100:2008, 5.2.2 and
F.1.2.3 (correlation from a shared input quantity).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

from viscometry.errors import InputError
from viscometry.methods.base import Method, symbols

__all__ = [
    "DYNAMIC_FROM_KINEMATIC",
    "DYNAMIC_FROM_KINEMATIC_CORRELATED",
    "shared_temperature_correlation",
]

nu, rho, alpha_nu, alpha_rho, dT = symbols("nu rho alpha_nu alpha_rho dT")

_UNITS = {"nu": "m^2/s", "rho": "kg/m^3", "alpha_nu": "1/K", "alpha_rho": "1/K", "dT": "K"}
_DESCRIPTIONS = {
    "nu": "kinematic_viscosity: measured at the stated temperature (thermometer reading)",
    "rho": "density: measured at the stated temperature (thermometer reading)",
    "alpha_nu": "relative_temperature_coefficient: (1/ν)·∂ν/∂T of the liquid (negative)",
    "alpha_rho": "relative_density_temperature_coefficient: (1/ρ)·∂ρ/∂T (minus the volume "
    "expansion coefficient)",
    "dT": "shared_temperature_error: error of the temperature scale shared by both "
    "measurements (a difference; K or delta_degC)",
}


def _check(method: Method, v: Mapping[str, float]) -> list[str]:
    out = []
    for a in ("alpha_nu", "alpha_rho"):
        if a in v and abs(v[a] * v["dT"]) > 0.01:
            out.append(
                f"{a}·dT = {v[a] * v['dT']:.3g}: the first-order temperature correction exceeds "
                "1 %; state the result at the bath temperature instead"
            )
    return out


DYNAMIC_FROM_KINEMATIC = Method(
    name="dynamic_from_kinematic",
    positive_inputs=("nu", "rho"),
    title="Dynamic viscosity η = ν ρ with a shared temperature error",
    expression=nu * (1 - alpha_nu * dT) * rho * (1 - alpha_rho * dT),
    input_names=("nu", "rho", "alpha_nu", "alpha_rho", "dT"),
    input_units=_UNITS,
    input_descriptions=_DESCRIPTIONS,
    output_name="eta",
    output_unit="Pa*s",
    references=(
        "ISO 3104: η = ν ρ with ρ at the same temperature",
        "JCGM 100:2008, F.1.2.3: a shared influence written as one input",
    ),
    validity="ν and ρ of the same sample at the same stated temperature; first-order "
    "temperature corrections small (|α δT| ≪ 1).",
    checker=_check,
)

DYNAMIC_FROM_KINEMATIC_CORRELATED = Method(
    name="dynamic_from_kinematic_correlated",
    positive_inputs=("nu", "rho"),
    title="Dynamic viscosity η = ν ρ (shared effects as a correlation between ν and ρ)",
    expression=nu * rho,
    input_names=("nu", "rho"),
    input_units={"nu": "m^2/s", "rho": "kg/m^3"},
    input_descriptions={k: _DESCRIPTIONS[k] for k in ("nu", "rho")},
    output_name="eta",
    output_unit="Pa*s",
    references=(
        "ISO 3104: η = ν ρ",
        "JCGM 100:2008, 5.2.2: correlated input quantities",
    ),
    validity="ν and ρ of the same sample at the same temperature; give r(ν, ρ) from "
    "shared_temperature_correlation when a temperature error is shared.",
)


def shared_temperature_correlation(
    kinematic_viscosity: float,
    u_kinematic_viscosity: float,
    density: float,
    u_density: float,
    alpha_nu: float,
    alpha_rho: float,
    u_temperature: float,
) -> float:
    """Correlation coefficient r(ν, ρ) caused by a shared temperature error.

    Parameters
    ----------
    kinematic_viscosity : float
        ν [m²/s].
    u_kinematic_viscosity : float
        u(ν) [m²/s], including the temperature part ν·|α_ν|·u(δT).
    density : float
        ρ [kg/m³].
    u_density : float
        u(ρ) [kg/m³], including the temperature part ρ·|α_ρ|·u(δT).
    alpha_nu, alpha_rho : float
        Relative temperature coefficients [1/K].
    u_temperature : float
        u(δT) of the shared error [K].

    Returns
    -------
    float
        r = ν α_ν ρ α_ρ u²(δT) / (u(ν) u(ρ)) [1].

    Raises
    ------
    InputError
        If the uncertainties are not positive or the result lies outside [−1, 1] (the given
        u(ν), u(ρ) are smaller than their temperature parts).

    References
    ----------
    JCGM 100:2008, F.1.2.3 (covariance from a common influence, u(q, r) = c_q c_r u²(δT)).

    Examples
    --------
    >>> round(shared_temperature_correlation(40e-6, 0.05e-6, 860.0, 0.03, -0.06, -7e-4, 0.01), 4)
    0.0963
    """
    if not (u_kinematic_viscosity > 0 and u_density > 0):
        raise InputError(
            f"u(nu) and u(rho) must be positive, got {u_kinematic_viscosity!r} and {u_density!r}"
        )
    cov = kinematic_viscosity * alpha_nu * density * alpha_rho * u_temperature**2
    r = cov / (u_kinematic_viscosity * u_density)
    if not math.isfinite(r) or abs(r) > 1.0:
        raise InputError(
            f"correlation {r!r} outside [-1, 1]: u(nu) = {u_kinematic_viscosity!r} or "
            f"u(rho) = {u_density!r} is smaller than its shared-temperature part"
        )
    return r
