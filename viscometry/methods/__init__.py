"""Built-in viscometer measurement models and flow-regime checks.

Each model is a :class:`Method`: a sympy expression with documented inputs (SI units),
references, validity and a ``check`` giving validity warnings. Look one up by name with
:func:`get_method`; :func:`list_methods` lists them; ``viscometry methods`` prints them.

Examples
--------
>>> m = get_method("glass_capillary_kinetic")
>>> m.equation
'nu = C*t - E/t**2'
>>> m.input_units["E"]
'm^2*s'
"""

from __future__ import annotations

from viscometry.errors import ModelError
from viscometry.methods.base import Method
from viscometry.methods.calibration import (
    CONSTANT_BY_COMPARISON,
    CONSTANT_FROM_REFERENCE_LIQUID,
    CONSTANT_FROM_TWO_REFERENCE_LIQUIDS,
    CertifiedLiquid,
    StepUpChain,
    StepUpStep,
    step_up_chain,
    water_reference_input,
    water_temperature_coefficient,
)
from viscometry.methods.dynamic import (
    DYNAMIC_FROM_KINEMATIC,
    DYNAMIC_FROM_KINEMATIC_CORRELATED,
    shared_temperature_correlation,
)
from viscometry.methods.falling_sphere import FALLING_SPHERE, FALLING_SPHERE_STOKES
from viscometry.methods.gas_capillary import GAS_CAPILLARY, GAS_CAPILLARY_SLIP
from viscometry.methods.glass_capillary import (
    GLASS_CAPILLARY_CORRECTED,
    GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION,
    GLASS_CAPILLARY_HAGENBACH,
    GLASS_CAPILLARY_KINETIC,
)
from viscometry.methods.pressure_capillary import (
    PRESSURE_CAPILLARY,
    PRESSURE_CAPILLARY_MANOMETER,
    PRESSURE_CAPILLARY_MERCURY_THREAD,
)

__all__ = [
    "METHODS",
    "Method",
    "get_method",
    "list_methods",
    "StepUpStep",
    "CertifiedLiquid",
    "StepUpChain",
    "step_up_chain",
    "water_reference_input",
    "water_temperature_coefficient",
    "shared_temperature_correlation",
]

#: Registry of the built-in models, by name (in display order).
METHODS: dict[str, Method] = {
    m.name: m
    for m in (
        PRESSURE_CAPILLARY,
        PRESSURE_CAPILLARY_MANOMETER,
        PRESSURE_CAPILLARY_MERCURY_THREAD,
        GLASS_CAPILLARY_KINETIC,
        GLASS_CAPILLARY_HAGENBACH,
        GLASS_CAPILLARY_CORRECTED,
        GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION,
        CONSTANT_FROM_REFERENCE_LIQUID,
        CONSTANT_FROM_TWO_REFERENCE_LIQUIDS,
        CONSTANT_BY_COMPARISON,
        DYNAMIC_FROM_KINEMATIC,
        DYNAMIC_FROM_KINEMATIC_CORRELATED,
        FALLING_SPHERE,
        FALLING_SPHERE_STOKES,
        GAS_CAPILLARY,
        GAS_CAPILLARY_SLIP,
    )
}


def get_method(name: str) -> Method:
    """The built-in model called ``name``.

    Raises
    ------
    ModelError
        ``unknown method 'x' (known: ...)``.

    Examples
    --------
    >>> get_method("falling_sphere").output_unit
    'Pa*s'
    """
    try:
        return METHODS[name]
    except (KeyError, TypeError):
        raise ModelError(f"unknown method {name!r} (known: {', '.join(METHODS)})") from None


def list_methods() -> list[Method]:
    """All built-in models, in display order."""
    return list(METHODS.values())
