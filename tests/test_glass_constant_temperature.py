"""Temperature dependence of a glass viscometer's constant: glass expansion and the charge
volume of fixed-charge designs (``glass_capillary_thermal_expansion``,
``glass_capillary_fixed_charge``).

Sources are given beside each assertion: exact analytic results of the Hagen-Poiseuille law,
an independent scipy integration of the efflux, and the ``uncertainties`` package for the
first-order propagation.
"""

from __future__ import annotations

import math

import pytest
from scipy.integrate import quad
from uncertainties import ufloat, umath

from viscometry.gum import InputQuantity as Q
from viscometry.methods import get_method
from viscometry.methods.glass_capillary import (
    CHARGE_CORRECTION_LIMIT,
    charge_volume_factor,
    glass_expansion_factor,
)

THERMAL = get_method("glass_capillary_thermal_expansion")
CHARGE = get_method("glass_capillary_fixed_charge")

BASE = {
    "C": 1.0012e-7, "t": 460.0, "E": 2e-12, "g1": 9.8183, "g2": 9.8070, "theta": 0.004,
    "alpha": -0.058, "dT": 0.004,
}  # fmt: skip
GLASS = {"alpha_g": 3.3e-6, "dT_c": 60.0}
FILL = {"V_c": 7e-6, "beta": 7e-4, "dT_f": 18.0, "A_l": 4.5e-4, "h": 0.085}


def _poiseuille_constant(radius: float, head: float, length: float, volume: float) -> float:
    """C = π g r⁴ h/(8 L V) of a gravity capillary (Hagen-Poiseuille, g = 9.80665 m/s²)."""
    return math.pi * 9.80665 * radius**4 * head / (8.0 * length * volume)


def test_glass_expansion_is_the_scaled_poiseuille_constant() -> None:
    # exact analytic: lengths × (1 + ε), volume × (1 + ε)³ in C = π g r⁴ h/(8 L V) give
    # C × (1 + ε)^(4+1−1−3) = C × (1 + ε), ε = α_g ΔT_c, exactly (isotropic expansion)
    eps = 3.3e-6 * 60.0
    c0 = _poiseuille_constant(3.7e-4, 0.09, 0.09, 4e-6)
    c1 = _poiseuille_constant(
        3.7e-4 * (1 + eps), 0.09 * (1 + eps), 0.09 * (1 + eps), 4e-6 * (1 + eps) ** 3
    )
    assert c1 / c0 == pytest.approx(glass_expansion_factor(3.3e-6, 60.0), rel=1e-13)
    # the model applies exactly that factor to the constant (E = 0, no other correction)
    v = dict(BASE, E=0.0, g2=BASE["g1"], theta=0.0, dT=0.0, **GLASS)
    plain = get_method("glass_capillary_corrected").value(v)
    assert THERMAL.value(v) / plain == pytest.approx(1 + eps, rel=1e-14)


def _flow_time(offset: float, head0: float, area_upper: float, area_lower: float) -> float:
    """Efflux time ∫ dV/(k h(V)) of the timed volume with k = 1 m³/(s·m)."""
    volume = 4e-6

    def head(v: float) -> float:
        return head0 - v / area_upper - v / area_lower - offset

    return quad(lambda v: 1.0 / head(v), 0.0, volume, epsabs=0.0, epsrel=1e-13)[0]


def test_charge_factor_against_integrated_efflux() -> None:
    # Independent computation (scipy integration): a U-tube whose upper bulb (cross-section
    # 2 cm², 4 mL timed) drains into a lower reservoir (A_l = 4.5 cm²), so the head falls
    # linearly by Δh = 28.9 mm about its mean h = 85 mm; the extra charge lifts the lower
    # meniscus by δ = V_c β ΔT_f/A_l, and C ∝ 1/t. The model's factor is 1 − δ/h, first order
    # in δ/h with the mean head. Exact analytic for the integral: d ln t/dδ = ⟨1/h²⟩/⟨1/h⟩
    # = Δh/(h₁ h₂ ln(h₁/h₂)) = (1/h)(1 + 2x²/3 + …), x = Δh/(2h); so the integrated correction
    # is the model's times 1 + 2x²/3 (here 1.9 % of the ≈ 0.23 % correction), up to terms of
    # order x⁴ and δ/h (tolerance 0.5 % of the correction).
    a_up, a_low = 2e-4, FILL["A_l"]
    travel = 4e-6 * (1 / a_up + 1 / a_low)
    head0 = 0.085 + 0.5 * travel  # mean head 85 mm over the efflux
    delta = FILL["V_c"] * FILL["beta"] * FILL["dT_f"] / a_low
    ratio = _flow_time(0.0, head0, a_up, a_low) / _flow_time(delta, head0, a_up, a_low)
    factor = charge_volume_factor(FILL["V_c"], FILL["beta"], FILL["dT_f"], a_low, FILL["h"])
    assert factor == pytest.approx(1 - delta / 0.085, rel=1e-15)  # exact analytic
    x = travel / (2 * 0.085)
    assert 1 - ratio == pytest.approx((1 - factor) * (1 + 2 * x**2 / 3), rel=5e-3)
    assert 1 - factor == pytest.approx(0.0023, abs=1e-4)  # the size of the demo's correction


def test_limits_recover_the_corrected_model() -> None:
    # exact analytic: α_g ΔT_c = 0 and V_c β ΔT_f = 0 leave glass_capillary_corrected
    corrected = get_method("glass_capillary_corrected").value(BASE)
    assert THERMAL.value(dict(BASE, alpha_g=3.3e-6, dT_c=0.0)) == corrected
    assert CHARGE.value(dict(BASE, alpha_g=0.0, dT_c=60.0, **dict(FILL, dT_f=0.0))) == corrected
    assert CHARGE.value(dict(BASE, **GLASS, **dict(FILL, V_c=0.0))) == THERMAL.value(
        dict(BASE, **GLASS)
    )


def test_relative_sensitivities_of_the_new_inputs() -> None:
    # exact analytic: (x/ν)∂ν/∂x of α_g is α_g ΔT_c/(1 + α_g ΔT_c) times the share of the C t
    # term; with E = 0 that share is 1. The charge inputs V_c, β, ΔT_f carry −f_c/(1 − f_c)
    # and A_l, h carry +f_c/(1 − f_c), f_c = V_c β ΔT_f/(A_l h).
    v = dict(BASE, E=0.0, **GLASS, **FILL)
    eps = 3.3e-6 * 60.0
    assert CHARGE.relative_sensitivity("alpha_g", v) == pytest.approx(eps / (1 + eps), rel=1e-10)
    fc = FILL["V_c"] * FILL["beta"] * FILL["dT_f"] / (FILL["A_l"] * FILL["h"])
    for name in ("V_c", "beta", "dT_f"):
        assert CHARGE.relative_sensitivity(name, v) == pytest.approx(-fc / (1 - fc), rel=1e-10)
    for name in ("A_l", "h"):
        assert CHARGE.relative_sensitivity(name, v) == pytest.approx(fc / (1 - fc), rel=1e-10)


def test_budget_matches_uncertainties_package() -> None:
    # independent first-order propagation with the `uncertainties` package
    spec = {
        "C": (0.10012, 0.00009, "mm^2/s^2"), "t": (461.06, 0.06, "s"), "E": (1.0, 1.2, "mm^2*s"),
        "g1": (9.81172, 5e-5, "m/s^2"), "g2": (9.80702, 5e-5, "m/s^2"),
        "theta": (0.0087, 0.005, "rad"), "alpha": (-0.058, 0.003, "1/K"),
        "dT": (0.004, 0.006, "K"), "alpha_g": (3.3e-6, 1.7e-7, "1/K"), "dT_c": (20.0, 0.01, "K"),
        "V_c": (7.0, 0.025, "mL"), "beta": (7.0e-4, 3e-5, "1/K"), "dT_f": (18.0, 0.6, "K"),
        "A_l": (4.5, 0.1, "cm^2"), "h": (85.0, 1.0, "mm"),
    }  # fmt: skip
    res = CHARGE.budget(
        [Q.normal(n, v, u, unit) for n, (v, u, unit) in spec.items()], unit="mm^2/s"
    ).evaluate()
    x = {n: ufloat(v, u) for n, (v, u, _unit) in spec.items()}
    # in mm, s: V_c [mL] → 1000 mm³, A_l [cm²] → 100 mm², h [mm]
    head_factor = 1 - x["V_c"] * 1000 * x["beta"] * x["dT_f"] / (x["A_l"] * 100 * x["h"])
    core = x["C"] * x["g2"] / x["g1"] * umath.cos(x["theta"]) * (1 + x["alpha_g"] * x["dT_c"])
    ref = (core * head_factor * x["t"] - x["E"] / x["t"] ** 2) * (1 - x["alpha"] * x["dT"])
    assert res.value == pytest.approx(ref.nominal_value, rel=1e-12)
    assert res.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-9)
    assert res.warnings == ()


def test_charge_warning_on_both_sides_of_the_limit() -> None:
    # CHARGE_CORRECTION_LIMIT = 1 % (our default, no source): the warning fires strictly above
    v = dict(BASE, **GLASS, **FILL)
    per_kelvin = FILL["V_c"] * FILL["beta"] / (FILL["A_l"] * FILL["h"])
    at_limit = CHARGE_CORRECTION_LIMIT / per_kelvin
    assert CHARGE.check(dict(v, dT_f=0.99 * at_limit)) == []
    above = CHARGE.check(dict(v, dT_f=1.01 * at_limit))
    assert (
        len(above) == 1 and "charge-volume correction changes the constant by -1.01 %" in above[0]
    )
    # a liquid that shrinks (filled warmer than tested) is flagged the same way
    assert CHARGE.check(dict(v, dT_f=-0.99 * at_limit)) == []
    assert "+1.01 %" in CHARGE.check(dict(v, dT_f=-1.01 * at_limit))[0]
    # the usual glass checks still run: a short flow time (ISO 3104 / ASTM D445: 200 s)
    assert "flow time 150 s" in CHARGE.check(dict(v, t=150.0))[0]
    assert "flow time 150 s" in THERMAL.check(dict(BASE, t=150.0, **GLASS))[0]
