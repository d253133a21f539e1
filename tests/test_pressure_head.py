"""The sample's own hydrostatic head in a pressure-driven capillary
(``pressure_capillary_sample_head``): the logarithmic mean of the falling driving pressure.

Sources beside each assertion: an independent scipy integration of the efflux, closed forms
("exact analytic") and the ``uncertainties`` package.
"""

from __future__ import annotations

import math

import pytest
from scipy.integrate import solve_ivp
from uncertainties import ufloat, umath

from viscometry.gum import InputQuantity as Q
from viscometry.methods import get_method
from viscometry.methods.pressure_capillary import effective_pressure

HEAD = get_method("pressure_capillary_sample_head")
PLAIN = get_method("pressure_capillary")

V0 = {
    "r": 2e-4, "dp": 652.85, "h_s": 0.015, "dh_s": 0.010, "g": 9.8117, "t": 200.15,
    "V": 1e-6, "L": 0.1, "n": 0.57, "m": 1.12, "rho": 998.21,
}  # fmt: skip


def test_log_mean_against_integrated_efflux() -> None:
    # Independent computation (scipy solve_ivp): Poiseuille flow Q = π r⁴ p/(8 η L) from a
    # reservoir of cross-section A = V/Δh_s, p = Δp + ρ g h; integrate h from h₁ = h_s + Δh_s/2
    # until h₂ = h_s − Δh_s/2, then the model (m = n = 0) must return the η used.
    eta, r, length, rho, g = 1.0e-3, 2e-4, 0.1, 998.21, 9.8117
    dp, h_s, dh_s, volume = 652.85, 0.015, 0.010, 1e-6
    area = volume / dh_s
    k = math.pi * r**4 / (8 * eta * length)

    def rate(_t: float, h: list[float]) -> list[float]:
        return [-k * (dp + rho * g * h[0]) / area]

    def reached(_t: float, h: list[float]) -> float:
        return h[0] - (h_s - dh_s / 2)

    reached.terminal = True  # type: ignore[attr-defined]
    sol = solve_ivp(rate, (0.0, 1e4), [h_s + dh_s / 2], events=reached, rtol=1e-12, atol=1e-15)
    t_flow = float(sol.t_events[0][0])
    v = dict(V0, dp=dp, t=t_flow, n=0.0, m=0.0)
    assert HEAD.value(v) == pytest.approx(eta, rel=1e-9)
    # exact analytic: t = (A/(ρ g k)) ln(p₁/p₂)
    p1, p2 = dp + rho * g * (h_s + dh_s / 2), dp + rho * g * (h_s - dh_s / 2)
    assert t_flow == pytest.approx(area / (rho * g * k) * math.log(p1 / p2), rel=1e-9)


def test_effective_pressure_limits() -> None:
    rg = 998.21 * 9.8117
    p_mean = 652.85 + rg * 0.015
    # exact analytic: with x = ρ g Δh/(2 p̄), ln(p₁/p₂) = 2(x + x³/3 + x⁵/5 + …), so the
    # log mean is p̄ (1 − x²/3 − 4x⁴/45 + O(x⁶)); x = 0.061 here, x⁶ ≈ 5e-8
    p_eff = effective_pressure(652.85, 998.21, 9.8117, 0.015, 0.010)
    x = rg * 0.010 / (2 * p_mean)
    assert p_eff == pytest.approx(p_mean * (1 - x**2 / 3 - 4 * x**4 / 45), rel=1e-7)
    assert 1 - p_eff / p_mean == pytest.approx(0.00125, abs=1e-5)  # the demo's 0.12 %
    # exact analytic: Δp = 0 gives the logarithmic-mean head ρ g (h₁ − h₂)/ln(h₁/h₂)
    h1, h2 = 0.30, 0.10
    assert effective_pressure(0.0, 1000.0, 9.81, 0.2, 0.2) == pytest.approx(
        1000.0 * 9.81 * (h1 - h2) / math.log(h1 / h2), rel=1e-14
    )
    # the model with the sample head equals pressure_capillary with dp → p_eff
    assert HEAD.value(V0) == pytest.approx(PLAIN.value(dict(V0, dp=p_eff)), rel=1e-13)
    # a vanishing fall: p_eff → Δp + ρ g h_s (exact analytic limit; log precision ~1e-16/1e-6)
    tiny = effective_pressure(652.85, 998.21, 9.8117, 0.015, 1e-9)
    assert tiny == pytest.approx(p_mean, rel=1e-8)


def test_budget_matches_uncertainties_package() -> None:
    # independent first-order propagation with the `uncertainties` package (SI units)
    spec = {
        "r": (2e-4, 3e-8, "m"), "dp": (652.85, 0.07, "Pa"), "h_s": (0.015, 5e-5, "m"),
        "dh_s": (0.010, 5e-5, "m"), "g": (9.8117, 5e-5, "m/s^2"), "t": (200.15, 0.02, "s"),
        "V": (1e-6, 1.5e-10, "m^3"), "L": (0.1, 5e-6, "m"), "n": (0.57, 0.058, "1"),
        "m": (1.12, 0.035, "1"), "rho": (998.21, 0.01, "kg/m^3"),
    }  # fmt: skip
    res = HEAD.budget([Q.normal(n, v, u, unit) for n, (v, u, unit) in spec.items()]).evaluate()
    x = {n: ufloat(v, u) for n, (v, u, _unit) in spec.items()}
    rg = x["rho"] * x["g"]
    p1 = x["dp"] + rg * (x["h_s"] + x["dh_s"] / 2)
    p2 = x["dp"] + rg * (x["h_s"] - x["dh_s"] / 2)
    p_eff = rg * x["dh_s"] / umath.log(p1 / p2)
    length = x["L"] + x["n"] * x["r"]
    ref = math.pi * x["r"] ** 4 * p_eff * x["t"] / (8 * x["V"] * length) - x["m"] * x["rho"] * x[
        "V"
    ] / (8 * math.pi * length * x["t"])
    assert res.value == pytest.approx(ref.nominal_value, rel=1e-12)
    assert res.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-9)
    assert res.warnings == ()


def test_end_pressure_warning_on_both_sides() -> None:
    # the log mean needs p₂ = Δp + ρ g (h_s − Δh_s/2) > 0 (exact analytic condition)
    assert HEAD.check(V0) == []
    rg = V0["rho"] * V0["g"]
    dp_zero = -rg * (V0["h_s"] - V0["dh_s"] / 2)  # p₂ = 0 exactly at this Δp
    # just above: p₂ = 1 Pa > 0; no end-pressure warning (other checks may still speak)
    assert not any("end of the efflux" in w for w in HEAD.check(dict(V0, dp=dp_zero + 1.0)))
    below = HEAD.check(dict(V0, dp=dp_zero - 1.0))
    assert len(below) == 1 and "end of the efflux" in below[0] and "-1 Pa" in below[0]
    # the usual pressure-capillary checks still run (L/r ≥ 100, our default)
    assert any("L/r = 50" in w for w in HEAD.check(dict(V0, L=0.01)))
