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

from typing import TYPE_CHECKING, Any

from viscometry._lazy import lazy_names
from viscometry.errors import ModelError

if TYPE_CHECKING:
    from viscometry.methods.base import Method

#: Where each name lives; imported on first use (see :mod:`viscometry._lazy`), so that the
#: flow checks (:mod:`viscometry.methods.flow_checks`) come without every model's sympy
#: expression. ``METHODS`` is built on first use as well.
_LAZY = {
    "viscometry.methods.base": ("Method",),
    "viscometry.methods.calibration": (
        "CONSTANT_BY_COMPARISON",
        "CONSTANT_FROM_REFERENCE_LIQUID",
        "CONSTANT_FROM_TWO_REFERENCE_LIQUIDS",
        "CertifiedLiquid",
        "LiquidSurface",
        "MeniscusGeometry",
        "StepUpChain",
        "StepUpStep",
        "step_up_chain",
        "water_reference_input",
        "water_temperature_coefficient",
    ),
    "viscometry.methods.dilute_solution": ("DILUTE_RELATIVE_VISCOSITY", "VISCOSITY_NUMBER"),
    "viscometry.methods.dynamic": (
        "DYNAMIC_FROM_KINEMATIC",
        "DYNAMIC_FROM_KINEMATIC_CORRELATED",
        "shared_temperature_correlation",
    ),
    "viscometry.methods.falling_sphere": (
        "FALLING_SPHERE",
        "FALLING_SPHERE_STOKES",
        "FALLING_SPHERE_HABERMAN_SAYRE",
    ),
    "viscometry.methods.gas_capillary": (
        "GAS_CAPILLARY",
        "GAS_CAPILLARY_SLIP",
        "GAS_CAPILLARY_COMPRESSIBLE",
    ),
    "viscometry.methods.glass_capillary": (
        "GLASS_CAPILLARY_CORRECTED",
        "GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION",
        "GLASS_CAPILLARY_FIXED_CHARGE",
        "GLASS_CAPILLARY_HAGENBACH",
        "GLASS_CAPILLARY_KINETIC",
        "GLASS_CAPILLARY_THERMAL_EXPANSION",
    ),
    "viscometry.methods.pressure_capillary": (
        "PRESSURE_CAPILLARY",
        "PRESSURE_CAPILLARY_MANOMETER",
        "PRESSURE_CAPILLARY_MERCURY_THREAD",
        "PRESSURE_CAPILLARY_SAMPLE_HEAD",
    ),
}
_names_getattr, _names_dir = lazy_names(globals(), _LAZY)

#: The registry's models, by name, in display order.
_ORDER = (
    "PRESSURE_CAPILLARY",
    "PRESSURE_CAPILLARY_MANOMETER",
    "PRESSURE_CAPILLARY_MERCURY_THREAD",
    "PRESSURE_CAPILLARY_SAMPLE_HEAD",
    "GLASS_CAPILLARY_KINETIC",
    "GLASS_CAPILLARY_HAGENBACH",
    "GLASS_CAPILLARY_CORRECTED",
    "GLASS_CAPILLARY_CORRECTED_SURFACE_TENSION",
    "GLASS_CAPILLARY_THERMAL_EXPANSION",
    "GLASS_CAPILLARY_FIXED_CHARGE",
    "CONSTANT_FROM_REFERENCE_LIQUID",
    "CONSTANT_FROM_TWO_REFERENCE_LIQUIDS",
    "CONSTANT_BY_COMPARISON",
    "DYNAMIC_FROM_KINEMATIC",
    "DYNAMIC_FROM_KINEMATIC_CORRELATED",
    "DILUTE_RELATIVE_VISCOSITY",
    "VISCOSITY_NUMBER",
    "FALLING_SPHERE",
    "FALLING_SPHERE_STOKES",
    "FALLING_SPHERE_HABERMAN_SAYRE",
    "GAS_CAPILLARY",
    "GAS_CAPILLARY_SLIP",
    "GAS_CAPILLARY_COMPRESSIBLE",
)


def _registry() -> dict[str, Method]:
    """``METHODS``: the built-in models by name (in display order), built on first use."""
    methods = globals().get("METHODS")
    if methods is None:
        methods = {m.name: m for m in (_names_getattr(n) for n in _ORDER)}
        globals()["METHODS"] = methods
    return methods


def __getattr__(name: str) -> Any:
    # PEP 562: the models and ``METHODS`` (registry of the built-in models, by name, in
    # display order) on first use.
    if name == "METHODS":
        return _registry()
    return _names_getattr(name)


def __dir__() -> list[str]:
    return sorted({*_names_dir(), "METHODS"})


__all__ = [
    "METHODS",
    "Method",
    "get_method",
    "list_methods",
    "StepUpStep",
    "CertifiedLiquid",
    "LiquidSurface",
    "MeniscusGeometry",
    "StepUpChain",
    "step_up_chain",
    "water_reference_input",
    "water_temperature_coefficient",
    "shared_temperature_correlation",
]


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
    methods = _registry()
    try:
        return methods[name]
    except (KeyError, TypeError):
        raise ModelError(f"unknown method {name!r} (known: {', '.join(methods)})") from None


def list_methods() -> list[Method]:
    """All built-in models, in display order."""
    return list(_registry().values())
