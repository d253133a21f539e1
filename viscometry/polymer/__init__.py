"""Dilute polymer solutions: viscosity ratios, extrapolation to [η], molar mass (core layer).

* :mod:`viscometry.polymer.viscosity` — relative, specific, reduced and inherent viscosity,
  the viscosity number (ISO 1628-1), single-point estimates of [η] and the Mark–Houwink law;
* :mod:`viscometry.polymer.series` — a dilution series (weighings, volumes, flow times) and
  its Huggins and Kraemer extrapolations with uncertainties propagated through the whole
  chain, their consistency, single-point biases and a seeded Monte Carlo check;
* :mod:`viscometry.polymer.molar_mass` — M from [η], K and a with its uncertainty.

Series files are read by :mod:`viscometry.io.series`; the command is ``viscometry dilute``.
"""

from viscometry._lazy import lazy_names

#: Where each public name lives; imported on first use (see :mod:`viscometry._lazy`).
_LAZY = {
    "viscometry.polymer.molar_mass": ("molar_mass",),
    "viscometry.polymer.series": (
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
    ),
    "viscometry.polymer.viscosity": (
        "RELATIVE_VISCOSITY_RANGE",
        "SINGLE_POINT_FORMS",
        "inherent_viscosity",
        "mark_houwink_molar_mass",
        "reduced_viscosity",
        "relative_viscosity",
        "single_point_intrinsic_viscosity",
        "specific_viscosity",
        "viscosity_number",
    ),
}
__getattr__, __dir__ = lazy_names(globals(), _LAZY)

__all__ = sorted(name for names in _LAZY.values() for name in names)
