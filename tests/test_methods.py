"""Built-in measurement models: registry, dimensions, exact sensitivities, limits, checks,
and the example budget files (examples/methods/*.toml).

Sources: relative sensitivities and limits are exact analytic results of the equations
(derived by hand, "exact analytic"); thresholds as named in tests/test_flow_checks.py;
Faxén's coefficients from memory (Happel & Brenner 1965, ch. 7).
"""

from __future__ import annotations

import math
import pathlib
import re
import tomllib

import pytest
import sympy as sp
from uncertainties import ufloat

from viscometry.errors import ModelError
from viscometry.gum import Budget
from viscometry.gum import InputQuantity as Q
from viscometry.methods import METHODS, Method, get_method, list_methods
from viscometry.methods.falling_sphere import FAXEN_COEFFICIENTS, faxen_wall_factor
from viscometry.units import check_model_dimensions, same_dimension

EXAMPLES = pathlib.Path(__file__).resolve().parent.parent / "examples" / "methods"


def S(name: str) -> sp.Symbol:
    return sp.Symbol(name, real=True)


def rel_sens(method: Method, name: str, subs: dict[str, object]) -> sp.Expr:
    """Exact relative sensitivity (x/f)·∂f/∂x with some symbols substituted."""
    f = method.expression
    x = S(name)
    expr = sp.diff(f, x) * x / f
    return sp.simplify(expr.subs({S(k): v for k, v in subs.items()}))


# --------------------------------------------------------------------------- registry
def test_registry_names_and_lookup() -> None:
    names = [m.name for m in list_methods()]
    assert names == list(METHODS)
    for required in (
        "pressure_capillary", "pressure_capillary_manometer", "pressure_capillary_mercury_thread",
        "glass_capillary_kinetic", "glass_capillary_hagenbach", "glass_capillary_corrected",
        "constant_from_reference_liquid", "constant_by_comparison", "dynamic_from_kinematic",
        "falling_sphere", "gas_capillary",
    ):  # fmt: skip
        assert required in METHODS
    assert all(re.fullmatch(r"[a-z][a-z0-9_]*", n) for n in names)
    assert get_method("gas_capillary") is METHODS["gas_capillary"]


def test_unknown_method_message() -> None:
    with pytest.raises(
        ModelError, match=r"unknown method 'capilary' \(known: pressure_capillary, "
    ):
        get_method("capilary")


@pytest.mark.parametrize("method", list_methods(), ids=lambda m: m.name)
def test_metadata_complete(method: Method) -> None:
    assert method.title and method.validity and method.references
    assert set(method.input_units) == set(method.input_names)
    assert set(method.input_descriptions) == set(method.input_names)
    assert {s.name for s in method.expression.free_symbols} == set(method.input_names)
    assert all(s.is_real for s in method.expression.free_symbols)
    d = method.describe()
    assert [i["name"] for i in d["inputs"]] == list(method.input_names)


@pytest.mark.parametrize("method", list_methods(), ids=lambda m: m.name)
def test_dimensional_consistency(method: Method) -> None:
    # every model's dimensions agree with its output unit, in the documented SI input units
    check_model_dimensions(method.expression, method.input_units, method.output_unit)


# --------------------------------------------------------------------------- sensitivities
def test_poiseuille_relative_sensitivities_exact() -> None:
    # exact analytic: eta = pi r^4 dp t / (8 V L) at n = m = 0 -> 4, 1, 1, -1, -1
    m = get_method("pressure_capillary")
    expected = {"r": 4, "dp": 1, "t": 1, "V": -1, "L": -1}
    for name, want in expected.items():
        assert rel_sens(m, name, {"n": 0, "m": 0}) == want


def test_poiseuille_numeric_relative_sensitivities() -> None:
    m = get_method("pressure_capillary")
    v = {"r": 2e-4, "dp": 800.0, "t": 200.0, "V": 1e-6, "L": 0.1, "n": 0.0, "m": 0.0, "rho": 998.2}
    got = [m.relative_sensitivity(k, v) for k in ("r", "dp", "t", "V", "L")]
    assert got == pytest.approx([4, 1, 1, -1, -1], abs=1e-12)  # exact analytic


def test_mercury_thread_exponent_two_on_mass() -> None:
    # exact analytic: r^4 = m^2/(pi^2 rho^2 l^2) -> thread mass 2, density and length -2
    m = get_method("pressure_capillary_mercury_thread")
    assert rel_sens(m, "m_Hg", {"n": 0, "m": 0}) == 2
    assert rel_sens(m, "rho_Hg", {"n": 0, "m": 0}) == -2
    assert rel_sens(m, "l_Hg", {"n": 0, "m": 0}) == -2
    assert rel_sens(m, "dp", {"n": 0, "m": 0}) == 1


def test_manometer_sensitivities_with_buoyancy() -> None:
    # exact analytic: dp = (rho_m - rho_air) g h -> c_r(rho_m) = rho_m/(rho_m - rho_air)
    m = get_method("pressure_capillary_manometer")
    assert rel_sens(m, "g", {"n": 0, "m": 0}) == 1
    assert rel_sens(m, "h", {"n": 0, "m": 0}) == 1
    assert rel_sens(m, "rho_m", {"n": 0, "m": 0, "rho_air": 0}) == 1
    got = rel_sens(m, "rho_m", {"n": 0, "m": 0})
    assert sp.simplify(got - S("rho_m") / (S("rho_m") - S("rho_air"))) == 0


def test_gas_capillary_pressure_sensitivities() -> None:
    # exact analytic: c_r(p1) = 2 p1^2/(p1^2 - p2^2); c_r(p2) = -2 p2^2/(p1^2 - p2^2) - 1
    m = get_method("gas_capillary")
    p1, p2 = S("p1"), S("p2")
    assert sp.simplify(rel_sens(m, "p1", {}) - 2 * p1**2 / (p1**2 - p2**2)) == 0
    assert sp.simplify(rel_sens(m, "p2", {}) + 2 * p2**2 / (p1**2 - p2**2) + 1) == 0
    for name, want in {"r": 4, "t": 1, "L": -1, "V2": -1}.items():
        assert rel_sens(m, name, {}) == want


def test_falling_sphere_stokes_sensitivities() -> None:
    # exact analytic: eta = 2 r^2 g (rho_s - rho_f) t / (9 s)
    m = get_method("falling_sphere_stokes")
    for name, want in {"r": 2, "g": 1, "t": 1, "s": -1}.items():
        assert rel_sens(m, name, {}) == want


# --------------------------------------------------------------------------- limits
def _same(a: sp.Expr, b: sp.Expr) -> bool:
    return sp.simplify(a - b) == 0


def test_limits_recover_simple_forms() -> None:
    # exact analytic: every correction set to its neutral value gives the plain equation
    r, dp, t, V, L = (S(n) for n in ("r", "dp", "t", "V", "L"))
    C, E, B = S("C"), S("E"), S("B")
    pc = get_method("pressure_capillary").expression
    assert _same(pc.subs({S("n"): 0, S("m"): 0}), sp.pi * r**4 * dp * t / (8 * V * L))
    kin = get_method("glass_capillary_kinetic").expression
    assert _same(kin.subs(E, 0), C * t)
    assert _same(get_method("glass_capillary_hagenbach").expression.subs(B, 0), C * t)
    corr = get_method("glass_capillary_corrected").expression
    neutral = {S("g1"): S("g2"), S("theta"): 0, S("dT"): 0}
    assert _same(corr.subs(neutral), kin)
    st = get_method("glass_capillary_corrected_surface_tension").expression
    assert _same(st.subs({S("sigma_x"): S("sigma_c"), S("rho_x"): S("rho_c")}), corr)
    assert _same(st.subs({S("r_l"): S("r_u")}), corr)
    ref = get_method("constant_from_reference_liquid").expression
    assert _same(ref.subs(E, 0), S("nu_ref") / t)
    dyn = get_method("dynamic_from_kinematic").expression
    assert _same(dyn.subs(S("dT"), 0), get_method("dynamic_from_kinematic_correlated").expression)
    slip = get_method("gas_capillary_slip").expression
    assert _same(slip.subs(S("xi"), 0), get_method("gas_capillary").expression)
    fs = get_method("falling_sphere").expression
    assert _same(sp.limit(fs, S("R"), sp.oo), get_method("falling_sphere_stokes").expression)


def test_gas_capillary_small_pressure_drop_is_poiseuille() -> None:
    # exact analytic: with p1 = p2 + dp, eta -> pi r^4 dp t / (8 L V2) as dp -> 0
    gas = get_method("gas_capillary").expression
    r, t, L, V2, p2, d = S("r"), S("t"), S("L"), S("V2"), S("p2"), sp.Symbol("d", positive=True)
    ratio = sp.limit(gas.subs(S("p1"), p2 + d) / (sp.pi * r**4 * d * t / (8 * L * V2)), d, 0)
    assert ratio == 1


def test_two_reference_constant_is_mean() -> None:
    # exact analytic: equal liquids give the single-liquid constant
    two = get_method("constant_from_two_reference_liquids").expression
    one = get_method("constant_from_reference_liquid").expression
    same = {S("nu2"): S("nu1"), S("t2"): S("t1")}
    assert _same(two.subs(same), one.subs({S("nu_ref"): S("nu1"), S("t"): S("t1")}))


def test_faxen_series() -> None:
    # Faxén's coefficients for a sphere on the axis of a cylinder (from memory; Happel &
    # Brenner 1965, ch. 7); K(0) = 1 exactly, K'(0) = -2.104
    assert FAXEN_COEFFICIENTS == {1: -2.104, 3: 2.09, 5: -0.95}
    assert faxen_wall_factor(0.0) == 1.0
    h = 1e-6
    assert (faxen_wall_factor(h) - faxen_wall_factor(-h)) / (2 * h) == pytest.approx(
        -2.104, rel=1e-9
    )
    # the model's factor equals the function (independent evaluation)
    m = get_method("falling_sphere")
    v = {"r": 1e-3, "g": 9.81, "rho_s": 7800.0, "rho_f": 1260.0, "s": 0.2, "t": 18.8, "R": 0.02}
    stokes = 2 * 1e-6 * 9.81 * (7800 - 1260) * 18.8 / (9 * 0.2)
    assert m.value(v) == pytest.approx(stokes * faxen_wall_factor(0.05), rel=1e-13)


# --------------------------------------------------------------------------- budgets
def test_budget_matches_uncertainties_package() -> None:
    # independent recomputation of first-order propagation with the `uncertainties` package
    m = get_method("glass_capillary_kinetic")
    inputs = [
        Q.normal("C", 0.10012, 0.00009, "mm^2/s^2"),
        Q.normal("t", 460.0, 0.08, "s"),
        Q.normal("E", 1.0, 0.6, "mm^2*s"),
    ]
    res = m.budget(inputs, unit="mm^2/s").evaluate()
    C, t, E = ufloat(0.10012, 0.00009), ufloat(460.0, 0.08), ufloat(1.0, 0.6)
    ref = C * t - E / t**2
    assert res.value == pytest.approx(ref.nominal_value, rel=1e-13)
    assert res.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-10)


def test_budget_rejects_missing_and_extra_inputs() -> None:
    m = get_method("glass_capillary_kinetic")
    # The refusal names the missing and the extra input, worded like the budget-file reader.
    with pytest.raises(
        ModelError,
        match=r"^inputs: method 'glass_capillary_kinetic' needs input\(s\) E; does not use B "
        r"\(it uses: C, t, E\)$",
    ) as err:
        m.budget([Q.normal("C", 0.1, 0.001, "mm^2/s^2"), Q.normal("t", 400, 0.1, "s"),
                  Q.normal("B", 0.0, 0.1, "mm^2")])  # fmt: skip
    assert err.value.where == "inputs"


def test_evaluate_appends_validity_warnings() -> None:
    # Method.evaluate is gone: the budget of a built-in model carries its validity checks,
    # and its evaluation reports them (ISO 3104 / ASTM D445 minimum flow time 200 s).
    m = get_method("glass_capillary_kinetic")
    assert not hasattr(m, "evaluate") and not hasattr(m, "evaluate_budget")
    inputs = [Q.normal("C", 0.1, 0.0001, "mm^2/s^2"), Q.normal("t", 150.0, 0.1, "s"),
              Q.normal("E", 0.0, 1.0, "mm^2*s")]  # fmt: skip
    res = m.budget(inputs, unit="mm^2/s").evaluate()
    assert any("flow time 150 s is below the minimum 200 s" in w for w in res.warnings)
    # the same through Budget.from_method, and the estimate-only warnings say the same
    b = Budget.from_method(m, inputs, "mm^2/s")
    assert b.evaluate().warnings == res.warnings
    assert any("flow time 150 s" in w for w in b.estimate_warnings)
    res_ok = m.budget(inputs, unit="mm^2/s", checks={"minimum_flow_time": 100.0}).evaluate()
    assert not any("flow time" in w for w in res_ok.warnings)
    assert res_ok.value == res.value  # the check context changes no number


# --------------------------------------------------------------------------- checks
PC_OK = {
    "r": 2e-4,
    "dp": 800.0,
    "t": 200.0,
    "V": 1e-6,
    "L": 0.1,
    "n": 0.57,
    "m": 1.12,
    "rho": 998.2,
}


def test_pressure_capillary_checks() -> None:
    m = get_method("pressure_capillary")
    assert m.check(PC_OK) == []
    # wide, short, fast, no kinetic-energy term: eta ≈ 1 mPa·s, Re = 2 rho V/(pi r t eta) ≈ 3e4
    fast = dict(PC_OK, r=1e-3, dp=6439.0, t=2.0, V=1e-4, L=0.05, m=0.0, rho=1000.0)
    text = " | ".join(m.check(fast))
    assert "laminar limit" in text and "L/r = 50" in text and "entrance length" in text
    # ten times the usual kinetic-energy coefficient: 2.26 % of the result (exact analytic
    # recomputation: m rho V / (8 pi (L + n r) t) = 2.222e-5 Pa·s of eta = 1.004e-3 -
    # 2.222e-5 = 9.82e-4 Pa·s)
    slow_ke = dict(PC_OK, m=1.12 * 10)
    assert "kinetic-energy term is 2.2" in m.check(slow_ke)[0]
    assert "not positive" in " ".join(m.check(dict(PC_OK, dp=1.0)))


def test_mercury_thread_check_uses_thread_radius() -> None:
    m = get_method("pressure_capillary_mercury_thread")
    v = {k: PC_OK[k] for k in ("dp", "t", "V", "L", "n", "m", "rho")}
    v.update(m_Hg=math.pi * 13545.9 * 0.05 * 4e-8, rho_Hg=13545.9, l_Hg=0.05)
    assert m.check(v) == []
    assert get_method("pressure_capillary").value(PC_OK) == pytest.approx(m.value(v), rel=1e-12)


def test_glass_checks_gravity_and_reynolds() -> None:
    m = get_method("glass_capillary_kinetic")
    v = {"C": 1e-7, "t": 460.0, "E": 0.0}
    assert m.check(v) == []
    g1 = 9.80665
    # ISO 3104, 7.2: flag above 0.1 % when not applied (published)
    assert m.check(dict(v, g_calibration=g1, g_local=g1 * 1.001)) == []
    assert "ISO 3104, 7.2" in m.check(dict(v, g_calibration=g1, g_local=g1 * 1.0011))[0]
    # Re = 2 V/(pi r t nu): V = 5 mL, r = 0.5 mm, t = 460 s, nu = 46 mm²/s -> 0.30 (no warning)
    assert m.check(dict(v, capillary_radius=5e-4, flow_volume=5e-6)) == []
    hot = {
        "C": 1e-9,
        "t": 210.0,
        "E": 0.0,
    }  # nu = 0.21 mm²/s: Re = 2*5e-6/(pi*5e-4*210*2.1e-7) ≈ 144
    assert "usual range" in m.check(dict(hot, capillary_radius=5e-4, flow_volume=5e-6))[0]


def test_corrected_glass_applies_gravity_and_flags_big_ke() -> None:
    m = get_method("glass_capillary_corrected")
    v = {
        "C": 1e-7,
        "t": 460.0,
        "E": 0.0,
        "g1": 9.818,
        "g2": 9.807,
        "theta": 0.0,
        "alpha": -0.05,
        "dT": 0.0,
    }
    assert m.check(v) == []  # gravity ratio is in the model: no ISO 3104 7.2 flag
    big = dict(v, E=0.02 * 1e-7 * 460.0**3)  # E/t² = 2 % of C t
    assert "kinetic-energy term" in m.check(big)[0]


def test_hagenbach_kinetic_energy_fraction() -> None:
    m = get_method("glass_capillary_hagenbach")
    # B/t exactly 1 % of C t - B/t ... fires just above 1 % of the result
    t, C = 300.0, 1e-7
    nu = C * t / 1.01  # B/t = 0.01 nu
    assert m.check({"C": C, "t": t, "B": (C * t - nu) * t * 0.999}) == []
    assert m.check({"C": C, "t": t, "B": (C * t - nu) * t * 1.001})


def test_calibration_checks() -> None:
    two = get_method("constant_from_two_reference_liquids")
    ok = {"nu1": 10e-6, "t1": 400.0, "nu2": 30e-6, "t2": 1200.0, "E": 0.0}
    assert two.check(ok) == []
    bad = dict(ok, nu2=30e-6 * 1.0011)  # ASTM D2162: > 0.1 % apart
    assert "ASTM D2162" in two.check(bad)[0]
    comp = get_method("constant_by_comparison")
    assert comp.check({"C_ref": 0.01e-6, "t_ref": 600.0, "t_x": 200.0}) == []
    assert "factor 3" in comp.check({"C_ref": 0.01e-6, "t_ref": 603.0, "t_x": 200.0})[0]
    ref = get_method("constant_from_reference_liquid")
    assert "below the minimum" in ref.check({"nu_ref": 1e-6, "t": 199.0, "E": 0.0})[0]


def test_falling_sphere_checks() -> None:
    m = get_method("falling_sphere")
    v = {"r": 1e-3, "g": 9.81, "rho_s": 7800.0, "rho_f": 1260.0, "s": 0.2, "t": 18.8, "R": 0.02}
    assert m.check(v) == []
    assert "Faxén" in m.check(dict(v, R=0.003))[0]  # d/D = 0.33
    fast = dict(v, t=0.5)  # eta ~ 0.03 Pa·s, v = 0.4 m/s: Re_p ≈ 30
    assert any("particle Reynolds" in w for w in m.check(fast))
    assert any("does not fall" in w for w in m.check(dict(v, rho_s=1000.0)))


def test_gas_capillary_knudsen_checks() -> None:
    m = get_method("gas_capillary")
    v = {"r": 1e-4, "p1": 111300.0, "p2": 101300.0, "t": 213.55, "L": 0.1, "V2": 5e-5}
    assert m.check(v) == []
    assert m.check(dict(v, temperature=293.15, molar_mass=0.028)) == []  # Kn ≈ 3e-4
    lowp = dict(v, r=1e-5, L=0.02, mean_free_path=0.6e-6)  # Kn = 0.03
    assert "gas_capillary_slip" in m.check(lowp)[0]
    slip = get_method("gas_capillary_slip")
    assert slip.check(dict(lowp, xi=0.6e-6)) == []
    assert "transition" in slip.check(dict(lowp, xi=0.6e-6, mean_free_path=3e-6))[0]


def test_dynamic_shared_and_correlated_forms_agree() -> None:
    # JCGM 100:2008, F.1.2.3: a shared input and the equivalent correlation give the same u_c
    from viscometry.gum import Correlation
    from viscometry.methods import shared_temperature_correlation

    nu, rho, a_nu, a_rho, u_t = 46.06, 861.42, -0.058, -0.00072, 0.01
    shared = get_method("dynamic_from_kinematic").budget(
        [Q.normal("nu", nu, 0.045, "mm^2/s"), Q.normal("rho", rho, 0.05, "kg/m^3"),
         Q.normal("alpha_nu", a_nu, 0.003, "1/K"), Q.normal("alpha_rho", a_rho, 2e-5, "1/K"),
         Q.normal("dT", 0.0, u_t, "K")], unit="mPa*s")  # fmt: skip
    u_nu = math.hypot(0.045, nu * a_nu * u_t)
    u_rho = math.hypot(0.05, rho * a_rho * u_t)
    r = shared_temperature_correlation(nu * 1e-6, u_nu * 1e-6, rho, u_rho, a_nu, a_rho, u_t)
    corr = get_method("dynamic_from_kinematic_correlated").budget(
        [Q.normal("nu", nu, u_nu, "mm^2/s"), Q.normal("rho", rho, u_rho, "kg/m^3")],
        unit="mPa*s",
        correlations=[Correlation("nu", "rho", r)],
    )
    # evaluation emits nothing (warnings are errors here); its findings are in .warnings
    a, b = shared.evaluate(), corr.evaluate()
    assert a.warnings == b.warnings == ()
    assert a.value == pytest.approx(b.value, rel=1e-14)
    assert a.standard_uncertainty == pytest.approx(b.standard_uncertainty, rel=1e-12)
    dyn = get_method("dynamic_from_kinematic")
    vals = {"nu": nu * 1e-6, "rho": rho, "alpha_nu": a_nu, "alpha_rho": a_rho, "dT": 0.5}
    assert "exceeds 1 %" in dyn.check(vals)[0]


# --------------------------------------------------------------------------- examples
def test_one_example_file_per_method() -> None:
    files = {p.stem for p in EXAMPLES.glob("*.toml")}
    assert files == set(METHODS)


@pytest.mark.parametrize("name", list(METHODS))
def test_example_file_matches_method(name: str) -> None:
    doc = tomllib.loads((EXAMPLES / f"{name}.toml").read_text(encoding="utf-8"))
    assert doc["format"] == "viscometry-budget/1"
    assert doc["measurand"]["method"] == name
    assert "invented" in doc["title"]
    method = get_method(name)
    assert set(doc["inputs"]) == set(method.input_names)
    for key, spec in doc["inputs"].items():
        assert same_dimension(spec["unit"], method.input_units[key]), key
    assert same_dimension(doc["measurand"]["unit"], method.output_unit)


# Loading does not warn (warnings are errors here anyway); the budget carries the method's
# checks, and every example must be within its model's validity: no estimate warnings.
# Full evaluation of the cheap models; the others are evaluated by the budget-file and audit
# tests that run over examples/.
@pytest.mark.parametrize("name", list(METHODS))
def test_example_loads_clean(name: str) -> None:
    from viscometry.io import load_budget

    bf = load_budget(EXAMPLES / f"{name}.toml")
    assert bf.budget.method is not None and bf.budget.method.name == name
    assert bf.budget.estimate_warnings == ()
    method = get_method(name)
    x, _u, _nu, _c = bf.budget.si_arrays()
    value_si = method.value(dict(zip(bf.budget.input_names, x, strict=True)))
    assert math.isfinite(value_si) and value_si > 0


@pytest.mark.parametrize(
    "name",
    [
        "glass_capillary_kinetic",
        "constant_by_comparison",
        "dynamic_from_kinematic_correlated",
        "pressure_capillary",
    ],  # fmt: skip
)
def test_example_evaluates(name: str) -> None:
    from viscometry.io import load_budget

    res = load_budget(EXAMPLES / f"{name}.toml").budget.evaluate()
    assert res.warnings == ()
    assert 0 < res.relative_expanded_uncertainty < 0.01


def test_docs_cover_every_method() -> None:
    text = (EXAMPLES.parent.parent / "docs" / "methods.md").read_text(encoding="utf-8")
    for name, method in METHODS.items():
        assert f"### `{name}`" in text
        assert method.equation in text
