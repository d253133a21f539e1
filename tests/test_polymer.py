"""Dilute polymer solutions: viscosity ratios, Huggins/Kraemer extrapolation, uncertainties.

Check values are exact analytic (series generated from an exact Huggins or Kraemer law,
series expansions of the single-point forms), or independent computations: the
`uncertainties` package (linear propagation by automatic differentiation) and a Monte Carlo
of the same chain. The concentrations, flow times and uncertainties of the synthetic series
are arbitrary test inputs, not check values.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
import uncertainties
from uncertainties import umath

from viscometry.errors import InputError, ValidityWarning
from viscometry.gum.inputs import InputQuantity as Q
from viscometry.polymer import (
    RELATIVE_VISCOSITY_RANGE,
    DiluteSeries,
    Solution,
    extrapolate,
    inherent_viscosity,
    mark_houwink_molar_mass,
    molar_mass,
    monte_carlo_check,
    reduced_viscosity,
    relative_viscosity,
    single_point_intrinsic_viscosity,
    specific_viscosity,
    viscosity_number,
)

ETA = 0.065  # [η] = 65 mL/g, in m³/kg
K_H = 0.38
T0 = 120.0  # s
FRACTIONS = (1.0, 0.8, 0.6, 0.5, 0.4)  # aliquot/final of each solution
STOCK = 10.0  # kg/m³ (1 g/dL)


def exact_relative(c, eta=ETA, k=K_H, law="huggins"):
    """η_rel of an exact second-order law at c [kg/m³]."""
    if law == "huggins":
        return 1.0 + eta * c + k * eta**2 * c**2
    return np.exp(eta * c - k * eta**2 * c**2)  # Kraemer, with k = k_K


def make_series(
    eta=ETA, k=K_H, *, law="huggins", stock=STOCK, fractions=FRACTIONS, u_t=0.03, kinetic=False
):
    """A series whose estimates follow the law exactly (the uncertainties are arbitrary)."""
    v0 = 25e-6
    mass = stock * v0
    c_vis, e_vis = 1.0e-8, 0.5e-6  # m²/s², m²·s
    sols = []
    for i, f in enumerate(fractions, start=1):
        rel = exact_relative(stock * f, eta, k, law)
        if kinetic:  # flow time t with C t − E/t² = rel·(C t0 − E/t0²), solved by Newton
            target = rel * (c_vis * T0 - e_vis / T0**2)
            t = T0 * rel
            for _ in range(50):
                t -= (c_vis * t - e_vis / t**2 - target) / (c_vis + 2 * e_vis / t**3)
        else:
            t = T0 * rel
        aliquot = None if f == 1.0 else Q.normal(f"Va{i}", f * 10e-6, 0.01e-6)
        final = None if f == 1.0 else Q.normal(f"Vf{i}", 10e-6, 0.015e-6)
        sols.append(Solution(f"c{i}", Q.normal(f"t{i}", t, u_t), aliquot, final))
    extra = {}
    if kinetic:
        extra = {"viscometer_constant": Q.normal("C", c_vis, 2e-11),
                 "kinetic_energy_constant": Q.normal("E", e_vis, 0.2e-6)}  # fmt: skip
    return DiluteSeries(
        Q.normal("m_p", mass, 0.05e-6), Q.normal("V_0", v0, 0.02e-6), Q.normal("t_0", T0, u_t),
        tuple(sols), mass_fraction=Q.normal("w_p", 1.0, 0.001), **extra,
    )  # fmt: skip


# ------------------------------------------------------------------ the viscosity ratios
def test_ratios_exact_analytic():
    # exact analytic: definitions of ISO 1628-1:2009, clause 3 (from memory)
    rel = relative_viscosity(150.0, 100.0)
    assert rel == 1.5
    assert specific_viscosity(rel) == 0.5
    assert reduced_viscosity(rel, 5.0) == pytest.approx(0.1, rel=1e-15)
    assert viscosity_number(rel, 5.0) * 1000 == pytest.approx(100.0, rel=1e-15)  # mL/g
    assert inherent_viscosity(rel, 5.0) == pytest.approx(math.log(1.5) / 5.0, rel=1e-15)
    assert relative_viscosity(150.0, 100.0, density_ratio=1.01) == pytest.approx(1.515, rel=1e-15)


def test_kinetic_energy_correction_exact_analytic():
    # exact analytic: η_rel = (C t − E/t²)/(C t0 − E/t0²), ISO 3105 / ASTM D446 form
    c, e, t, t0 = 0.01, 2.0, 90.0, 60.0
    expected = (c * t - e / t**2) / (c * t0 - e / t0**2)
    got = relative_viscosity(t, t0, viscometer_constant=c, kinetic_energy_constant=e)
    assert got == pytest.approx(expected, rel=1e-14)
    assert got > t / t0  # the correction takes more from the shorter solvent time


# ------------------------------------------------------------------ exact laws
@pytest.mark.parametrize("kinetic", [False, True])
def test_exact_huggins_series_returns_eta_and_kh(kinetic):
    # exact analytic: points on η_sp/c = [η] + k_H[η]²c give the chosen [η] and k_H
    ext = extrapolate(make_series(kinetic=kinetic))
    assert ext.huggins.intrinsic.value == pytest.approx(ETA, rel=1e-12)
    assert ext.huggins.constant.value == pytest.approx(K_H, rel=1e-10)
    assert ext.huggins.chi_squared == pytest.approx(0.0, abs=1e-18)
    np.testing.assert_allclose(ext.concentrations, STOCK * np.array(FRACTIONS), rtol=1e-14)


def test_exact_kraemer_series_returns_eta_and_kk():
    # exact analytic: points on ln(η_rel)/c = [η] − k_K[η]²c give the chosen [η] and k_K
    ext = extrapolate(make_series(k=0.14, law="kraemer"))
    assert ext.kraemer.intrinsic.value == pytest.approx(ETA, rel=1e-12)
    assert ext.kraemer.constant.value == pytest.approx(0.14, rel=1e-10)


def test_kraemer_intercept_of_exact_huggins_series_matches_expansion():
    # exact analytic: for η_sp = [η]c + k_H[η]²c², ln(η_rel)/c = [η] − (½ − k_H)[η]²c
    # + (⅓ − k_H)[η]³c² + O(c³); a straight line fitted with weight W to it has the
    # intercept [η] + (⅓ − k_H)[η]³·q, q the intercept of the same fit to c².
    stock = 0.02  # kg/m³: [η]c ≈ 1e-3, so the O(c³) rest is ~1e-3 of the c² term
    with pytest.warns(ValidityWarning, match="outside 1.2–2.0"):
        ext = extrapolate(make_series(stock=stock, u_t=1e-6))
    c = ext.concentrations
    w = ext.kraemer.weight
    a = np.column_stack([np.ones_like(c), c])
    q = np.linalg.solve(a.T @ w @ a, a.T @ w @ c**2)[0]
    second = (1 / 3 - K_H) * ETA**3 * q
    assert ext.kraemer.intrinsic.value - ETA == pytest.approx(second, rel=5e-3)
    # k_H + k_K → ½ as c → 0 (same expansion), here to O([η]c)
    assert ext.huggins.constant.value + ext.kraemer.constant.value == pytest.approx(0.5, abs=2e-3)


# ------------------------------------------------------------------ uncertainties
def _u_chain(series: DiluteSeries):
    """c and η_rel of the series with the `uncertainties` package (independent reference)."""
    v = {
        q.name: uncertainties.ufloat(q.value, q.standard_uncertainty, q.name)
        for q in series.inputs()
    }
    c_stock = v["m_p"] * v["w_p"] / v["V_0"]
    cs, rel = [], []
    for s in series.solutions:
        cs.append(
            c_stock
            if s.aliquot_volume is None
            else c_stock * v[s.aliquot_volume.name] / v[s.final_volume.name]
        )
        if series.viscometer_constant is None:
            rel.append(v[s.flow_time.name] / v["t_0"])
        else:
            cc, e = v["C"], v["E"]
            t, t0 = v[s.flow_time.name], v["t_0"]
            rel.append((cc * t - e / t**2) / (cc * t0 - e / t0**2))
    return cs, rel


def _u_line(c, y, w):
    """GLS intercept and slope with fixed weight matrix W in `uncertainties` arithmetic."""
    n = len(c)
    dot = lambda a, b: sum(a[i] * w[i, j] * b[j] for i in range(n) for j in range(n))  # noqa: E731
    one = [1.0] * n
    s11, s1c, scc, s1y, scy = dot(one, one), dot(one, c), dot(c, c), dot(one, y), dot(c, y)
    det = s11 * scc - s1c**2
    return (scc * s1y - s1c * scy) / det, (s11 * scy - s1c * s1y) / det


@pytest.mark.parametrize("kinetic", [False, True])
def test_uncertainty_of_eta_against_the_uncertainties_package(kinetic):
    # independent reference: the `uncertainties` package propagates the same chain
    # (weighings → concentrations → flow times → fit with the same fixed weights)
    series = make_series(kinetic=kinetic)
    ext = extrapolate(series)
    cs, rel = _u_chain(series)
    b0h, b1h = _u_line(cs, [(r - 1) / c for r, c in zip(rel, cs, strict=True)], ext.huggins.weight)
    b0k, b1k = _u_line(
        cs, [umath.log(r) / c for r, c in zip(rel, cs, strict=True)], ext.kraemer.weight
    )
    assert ext.huggins.intrinsic.standard_uncertainty == pytest.approx(b0h.std_dev, rel=1e-8)
    assert ext.kraemer.intrinsic.standard_uncertainty == pytest.approx(b0k.std_dev, rel=1e-8)
    assert ext.huggins.constant.standard_uncertainty == pytest.approx(
        (b1h / b0h**2).std_dev, rel=1e-8
    )
    assert ext.kraemer.constant.standard_uncertainty == pytest.approx(
        (-b1k / b0k**2).std_dev, rel=1e-8
    )
    assert ext.difference.standard_uncertainty == pytest.approx((b0h - b0k).std_dev, rel=1e-7)
    cov = uncertainties.covariance_matrix([b0h, b1h])
    np.testing.assert_allclose(ext.huggins.covariance, cov, rtol=1e-8)
    for i, (c, r) in enumerate(zip(cs, rel, strict=True)):
        assert ext.concentration_uncertainties[i] == pytest.approx(c.std_dev, rel=1e-10)
        assert ext.relative_uncertainties[i] == pytest.approx(r.std_dev, rel=1e-10)
        sc = umath.sqrt(2 * (r - 1 - umath.log(r))) / c  # Solomon–Ciută
        sp = ext.single_point("solomon_ciuta", f"c{i + 1}")
        assert sp.estimate.value == pytest.approx(sc.nominal_value, rel=1e-12)
        assert sp.estimate.standard_uncertainty == pytest.approx(sc.std_dev, rel=1e-8)
        assert sp.bias.standard_uncertainty == pytest.approx((sc - b0h).std_dev, rel=1e-7)


def test_points_are_correlated_through_solvent_time_and_stock():
    # exact analytic: with only t_0 uncertain, every η_sp/c moves together; the
    # propagated [η] then differs from one that ignores the correlation
    ext = extrapolate(make_series())
    w_inv = np.linalg.inv(ext.huggins.weight)
    r = w_inv / np.sqrt(np.outer(np.diag(w_inv), np.diag(w_inv)))
    assert np.all(r[np.triu_indices(5, 1)] > 0.1)


def test_monte_carlo_agrees_with_propagation():
    # independent computation: JCGM 101:2008 Monte Carlo of the same chain, normal inputs;
    # 200 000 trials give u to ≈ 0.2 % (standard error 1/√(2M)); nonlinearity is small
    ext = extrapolate(make_series())
    mc = monte_carlo_check(ext, trials=200_000, seed=7)
    for stats, fit in ((mc.huggins, ext.huggins), (mc.kraemer, ext.kraemer)):
        mean, u, low, high = stats
        est = fit.intrinsic
        assert u == pytest.approx(est.standard_uncertainty, rel=0.02)
        assert mean == pytest.approx(
            est.value,
            abs=5 * est.standard_uncertainty / math.sqrt(2e5) + 1e-3 * est.standard_uncertainty,
        )
        assert (high - low) / 2 == pytest.approx(est.expanded_uncertainty, rel=0.03)
    again = monte_carlo_check(ext, trials=200_000, seed=7)
    assert again == mc  # seeded: the same numbers


def test_consistency_verdict():
    ext = extrapolate(make_series())
    d = ext.difference
    assert d.value == pytest.approx(ext.huggins.intrinsic.value - ext.kraemer.intrinsic.value)
    assert ext.consistent is (abs(d.value) <= d.expanded_uncertainty)
    # a series far into the non-linear range of the Kraemer line: the intercepts part
    with pytest.warns(ValidityWarning):
        far = extrapolate(make_series(k=0.9, stock=20.0, u_t=1e-4))
    assert not far.consistent


# ------------------------------------------------------------------ the validity range
@pytest.mark.parametrize("bound", RELATIVE_VISCOSITY_RANGE)
def test_relative_viscosity_range_warns_on_both_sides(bound):
    # threshold 1.2–2.0: common practice, no source; a value at the limit passes
    def series_with(rel_edge):
        others = (1.4, 1.6, 1.8) if bound == RELATIVE_VISCOSITY_RANGE[0] else (1.3, 1.5, 1.7)
        sp = np.array(sorted((rel_edge, *others), reverse=True)) - 1.0
        # k_H = 1/3: η_sp = a + a²/3 with a = [η]c (both lines nearly straight)
        c = 1.5 * (np.sqrt(1.0 + 4.0 * sp / 3.0) - 1.0) / ETA
        return make_series(k=1 / 3, stock=c[0], fractions=tuple(c / c[0]))

    extrapolate(series_with(bound))  # at the limit: no warning (warnings are errors here)
    outside = bound * (1 - 1e-3) if bound == RELATIVE_VISCOSITY_RANGE[0] else bound * (1 + 1e-3)
    with pytest.warns(ValidityWarning, match="outside 1.2–2.0") as caught:
        ext = extrapolate(series_with(outside))
    assert len(ext.warnings) == 1 and str(caught[0].message) == ext.warnings[0]


# ------------------------------------------------------------------ single-point forms
@pytest.mark.parametrize(
    ("form", "k_star"), [("solomon_ciuta", 1 / 3), ("billmeyer", 3 / 8), ("deb_chatterjee", 1 / 4)]
)
def test_single_point_bias_series_expansion(form, k_star):
    # exact analytic: for Huggins data the bias is (k_H − k*)[η]²c + O(c²)
    for k in (0.3, 0.45):
        c = 1e-3 / ETA  # [η]c = 1e-3
        est = single_point_intrinsic_viscosity(exact_relative(c, k=k), c, form)
        assert (est - ETA) / (ETA**2 * c) == pytest.approx(k - k_star, abs=5e-3)


def test_single_point_unknown_form():
    with pytest.raises(InputError, match="form must be one of"):
        single_point_intrinsic_viscosity(1.5, 1.0, "guess")


# ------------------------------------------------------------------ Mark–Houwink
def test_mark_houwink_against_uncertainties_package():
    # independent reference: `uncertainties` with correlated K and a
    ext = extrapolate(make_series())
    eta = ext.huggins.intrinsic
    k = Q.normal("K", 4.7e-5, 0.4e-5)
    a = Q.normal("a", 0.68, 0.01)
    r = -0.9
    m = molar_mass(eta, k, a, correlation=r)
    cov = [[k.standard_uncertainty**2, r * k.standard_uncertainty * a.standard_uncertainty],
           [r * k.standard_uncertainty * a.standard_uncertainty, a.standard_uncertainty**2]]  # fmt: skip
    uk, ua = uncertainties.correlated_values([k.value, a.value], cov)
    ue = uncertainties.ufloat(eta.value, eta.standard_uncertainty)
    ref = (ue / uk) ** (1 / ua)
    assert m.value == pytest.approx(ref.nominal_value, rel=1e-12)
    assert m.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-9)
    assert mark_houwink_molar_mass(K_H * 1e-4 * 1e4**0.5, K_H * 1e-4, 0.5) == pytest.approx(1e4)


def test_series_refuses_bad_input():
    s = make_series()
    with pytest.raises(InputError, match="solutions must number 3 to 50, got 2"):
        DiluteSeries(s.polymer_mass, s.stock_volume, s.solvent_flow_time, s.solutions[:2])
    with pytest.raises(InputError, match="aliquot_volume and final_volume go together"):
        Solution("x", Q.normal("t9", 100.0, 0.1), Q.normal("Va9", 1e-6, 1e-9))
    with pytest.raises(InputError, match="exceeds final_volume"):
        Solution(
            "x",
            Q.normal("t9", 100.0, 0.1),
            Q.normal("Va9", 2e-6, 1e-9),
            Q.normal("Vf9", 1e-6, 1e-9),
        )
    with pytest.raises(InputError, match="solution labels must differ"):
        DiluteSeries(s.polymer_mass, s.stock_volume, s.solvent_flow_time,
                     (s.solutions[0], s.solutions[1], Solution("c1", Q.normal("t8", 1.0, 0.1))))  # fmt: skip


def test_points_without_an_uncertainty_of_their_own_are_refused():
    s = make_series(u_t=0.0)  # no flow-time or volume uncertainty: the covariance is singular
    bare = tuple(Solution(x.label, x.flow_time) for x in s.solutions)
    fractions_lost = DiluteSeries(s.polymer_mass, s.stock_volume, s.solvent_flow_time, bare)
    with pytest.raises(InputError, match="covariance is singular"):
        extrapolate(fractions_lost)
