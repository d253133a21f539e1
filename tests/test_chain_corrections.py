"""Surface-tension and kinetic-energy terms at the steps of a step-up chain.

An invented two-master chain with a certified liquid (numbers of our own, not check values)
is compared with an independent step-by-step evaluation of the working equation
ν = C (1 + S) t − E/t² (ISO 3105 / ASTM D446 form; S from
:func:`viscometry.methods.glass_capillary.surface_tension_factor`, a separate code path), and
its first-order uncertainty with the ``uncertainties`` package, where a quantity shared by two
steps is one ufloat — so the correlations the chain must carry are the package's own.
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest
import sympy as sp
from uncertainties import ufloat

from viscometry.errors import BudgetFileError, InputError
from viscometry.gum import InputQuantity as Q
from viscometry.io.chain import load_chain_file, loads_chain_file
from viscometry.methods import get_method
from viscometry.methods.calibration import (
    SURFACE_TENSION_FACTOR_LIMIT,
    CertifiedLiquid,
    LiquidSurface,
    MeniscusGeometry,
    StepUpStep,
    step_up_chain,
)
from viscometry.methods.glass_capillary import surface_tension_factor
from viscometry.properties.constants import STANDARD_GRAVITY

#: name → (value, standard uncertainty, unit), SI. Invented demo numbers.
SPEC = {
    "nu_w": (1.0034e-6, 0.00085e-6, "m^2/s"), "t1": (334.5, 0.05, "s"),
    "sigma_w": (0.07274, 0.0002, "N/m"), "rho_w": (998.2, 0.1, "kg/m^3"),
    "E1": (1.0e-4, 0.3e-4, "m^2*s"),
    "r_u1": (0.008, 0.0002, "m"), "r_l1": (0.012, 0.0003, "m"), "h1": (0.150, 0.002, "m"),
    "tp2": (700.0, 0.06, "s"), "t2": (250.0, 0.04, "s"),
    "sigma2": (0.0300, 0.0005, "N/m"), "rho2": (870.0, 0.5, "kg/m^3"),
    "E2": (0.6e-4, 0.2e-4, "m^2*s"),
    "r_u2": (0.007, 0.0002, "m"), "r_l2": (0.011, 0.0003, "m"), "h2": (0.140, 0.002, "m"),
    "t_X": (400.0, 0.05, "s"), "sigma_X": (0.0310, 0.0005, "N/m"), "rho_X": (880.0, 0.5, "kg/m^3"),
}  # fmt: skip


def _q(name: str) -> Q:
    value, u, unit = SPEC[name]
    return Q.normal(name, value, u, unit)


def _surface(liquid: str) -> LiquidSurface:
    return LiquidSurface(_q(f"sigma{liquid}"), _q(f"rho{liquid}"))


def _geometry(master: int) -> MeniscusGeometry:
    return MeniscusGeometry(_q(f"r_u{master}"), _q(f"r_l{master}"), _q(f"h{master}"))


def _chain(surface: bool = True, kinetic: bool = True, certified: bool = True, **kw):
    step = StepUpStep(
        _q("tp2"), _q("t2"), label="S2",
        surface=_surface("2") if surface else None,
        geometry=_geometry(2) if surface and certified else None,
        kinetic_energy=_q("E2") if kinetic else None,
    )  # fmt: skip
    cert = CertifiedLiquid(_q("t_X"), surface=_surface("_X") if surface else None)
    return step_up_chain(
        _q("nu_w"), _q("t1"), [step],
        certified=cert if certified else None,
        water_surface=_surface("_w") if surface else None,
        first_master_geometry=_geometry(1) if surface else None,
        first_master_kinetic_energy=_q("E1") if kinetic else None,
        **kw,
    )  # fmt: skip


def _by_hand(x: dict) -> tuple:
    """Step by step: C₁, C₂ and ν_X from the working equation (floats or ufloats)."""
    g = STANDARD_GRAVITY
    c1 = (x["nu_w"] + x["E1"] / x["t1"] ** 2) / x["t1"]
    s2 = surface_tension_factor(
        x["h1"], x["r_u1"], x["r_l1"], x["sigma_w"], x["rho_w"], x["sigma2"], x["rho2"], g
    )
    nu2 = c1 * (1 + s2) * x["tp2"] - x["E1"] / x["tp2"] ** 2
    c2 = (nu2 + x["E2"] / x["t2"] ** 2) / x["t2"]
    s_x = surface_tension_factor(
        x["h2"], x["r_u2"], x["r_l2"], x["sigma2"], x["rho2"], x["sigma_X"], x["rho_X"], g
    )
    nu_x = c2 * (1 + s_x) * x["t_X"] - x["E2"] / x["t_X"] ** 2
    return c1, c2, nu_x, s2, s_x


def test_values_follow_the_working_equation_step_by_step() -> None:
    # exact analytic: the chain's model is the working equation applied at each measurement
    values = {n: v for n, (v, _u, _unit) in SPEC.items()}
    c1, c2, nu_x, s2, s_x = _by_hand(values)
    chain = _chain()
    assert chain.constants() == pytest.approx((c1, c2), rel=1e-14)
    assert chain.budget.measurand == "nu_X"
    res = chain.evaluate()
    assert res.value == pytest.approx(nu_x, rel=1e-13)
    # the sizes the terms are meant for: water → oil S is ≈ +0.2 %, oil → oil tiny
    assert s2 == pytest.approx(0.0021, abs=1e-4) and abs(s_x) < 1e-4
    assert res.warnings == ()


def test_uncertainty_matches_uncertainties_package_with_shared_terms() -> None:
    # independent first-order propagation (`uncertainties` package): E1 enters the water
    # measurement and step 2, σ2 and ρ2 enter step 2 and the certified liquid, E2 step 2 and
    # the certified liquid — one ufloat each, so the package carries the correlations
    x = {n: ufloat(v, u) for n, (v, u, _unit) in SPEC.items()}
    ref = _by_hand(x)[2]
    res = _chain().evaluate()
    assert res.standard_uncertainty == pytest.approx(ref.std_dev, rel=1e-9)
    # counting the shared quantities as independent copies gives a different answer: the
    # correlation matters (the E's partly cancel: each enters with opposite signs)
    y = dict(x)
    y_copy = {n: ufloat(x[n].nominal_value, x[n].std_dev) for n in ("E1", "E2", "sigma2", "rho2")}
    g = STANDARD_GRAVITY
    c1 = (y["nu_w"] + y["E1"] / y["t1"] ** 2) / y["t1"]
    s2 = surface_tension_factor(
        y["h1"], y["r_u1"], y["r_l1"], y["sigma_w"], y["rho_w"], y["sigma2"], y["rho2"], g
    )
    nu2 = c1 * (1 + s2) * y["tp2"] - y_copy["E1"] / y["tp2"] ** 2
    c2 = (nu2 + y["E2"] / y["t2"] ** 2) / y["t2"]
    s_x = surface_tension_factor(
        y["h2"], y["r_u2"], y["r_l2"], y_copy["sigma2"], y_copy["rho2"], y["sigma_X"],
        y["rho_X"], g,
    )  # fmt: skip
    independent = c2 * (1 + s_x) * y["t_X"] - y_copy["E2"] / y["t_X"] ** 2
    assert abs(independent.std_dev / ref.std_dev - 1) > 1e-3


def test_kinetic_terms_alone_and_the_neutral_form() -> None:
    # exact analytic: without the optional terms the chain is C₂ = ν_w t′₂/(t₁ t₂), ν_X = C₂ t_X
    plain = _chain(surface=False, kinetic=False)
    nu_w, t1, tp2, t2, t_x = sp.symbols("nu_w t1 tp2 t2 t_X", real=True)
    assert sp.simplify(plain.budget.method.expression - nu_w * tp2 * t_x / (t1 * t2)) == 0
    # E alone: C₁ = (ν_w + E₁/t₁²)/t₁, C₂ = ((C₁ t′₂ − E₁/t′₂²) + E₂/t₂²)/t₂ (working equation)
    values = {n: v for n, (v, _u, _unit) in SPEC.items()}
    c1 = (values["nu_w"] + values["E1"] / values["t1"] ** 2) / values["t1"]
    nu2 = c1 * values["tp2"] - values["E1"] / values["tp2"] ** 2
    c2 = (nu2 + values["E2"] / values["t2"] ** 2) / values["t2"]
    assert _chain(surface=False, certified=False).constants() == pytest.approx((c1, c2), rel=1e-14)


def test_refusals_name_what_is_missing_or_idle() -> None:
    step = StepUpStep(_q("tp2"), _q("t2"))
    with pytest.raises(
        InputError, match=r"geometry of master 1 \(step 2\) needs .*missing: water, liquid 2"
    ):
        step_up_chain(_q("nu_w"), _q("t1"), [step], first_master_geometry=_geometry(1))
    with pytest.raises(InputError, match=r"surface tension and density of water: used by no"):
        step_up_chain(_q("nu_w"), _q("t1"), [step], water_surface=_surface("_w"))
    # master 2's geometry with no certified liquid: nothing is measured in master 2 afterwards
    idle = StepUpStep(_q("tp2"), _q("t2"), geometry=_geometry(2))
    with pytest.raises(InputError, match=r"meniscus geometry of master 2: used by no"):
        step_up_chain(_q("nu_w"), _q("t1"), [idle])
    bad = StepUpStep(_q("tp2"), _q("t2"), surface=(0.03, 870.0))  # type: ignore[arg-type]
    with pytest.raises(InputError, match="must be a LiquidSurface"):
        step_up_chain(_q("nu_w"), _q("t1"), [bad])


def _geometry_for(s_target: float, x: dict) -> float:
    """Upper radius of master 1 giving S₂ = s_target (closed form of S for r_u)."""
    ds = x["sigma_w"] / x["rho_w"] - x["sigma2"] / x["rho2"]
    inverse = s_target * STANDARD_GRAVITY * x["h1"] / (2 * ds) + 1 / x["r_l1"]
    return 1 / inverse


def test_checks_on_both_sides_of_their_limits() -> None:
    # the budget gives the model its constant g (standard gravity) with the estimates
    values = {n: v for n, (v, _u, _unit) in SPEC.items()} | {"g_n": STANDARD_GRAVITY}
    method = _chain().budget.method
    assert method.check(values) == []
    # kinetic-energy term of water in master 1 at 0.99 % and 1.01 % of ν_w (limit 1 %, our
    # default, no source — viscometry.methods.flow_checks)
    for fraction, fires in ((0.0099, False), (0.0101, True)):
        e1 = fraction * values["nu_w"] * values["t1"] ** 2
        found = [w for w in method.check(dict(values, E1=e1)) if "water in master 1" in w]
        assert bool(found) is fires, (fraction, found)
    # surface-tension factor of step 2 at S = 0.99 % and 1.01 % (our default, no source)
    assert SURFACE_TENSION_FACTOR_LIMIT == 0.01
    for s_target, fires in ((0.0099, False), (0.0101, True)):
        v = dict(values, r_u1=_geometry_for(s_target, values))
        found = [w for w in method.check(v) if "surface-tension factor" in w]
        assert bool(found) is fires, (s_target, found)
        assert _by_hand(v)[3] == pytest.approx(s_target, rel=1e-12)  # exact analytic


def test_chain_model_lists_the_new_inputs_with_units() -> None:
    model = _chain().budget.method
    units = model.input_units
    assert (units["sigma2"], units["rho_X"], units["r_u1"], units["h2"], units["E1"]) == (
        "N/m", "kg/m^3", "m", "m", "m^2*s",
    )  # fmt: skip
    assert {"r_u1", "r_l1", "h1", "rho2", "rho_w", "t_X", "sigma2"} <= set(model.positive_inputs)
    assert "E1" not in model.positive_inputs  # a kinetic-energy constant may be given as 0 ± a
    assert get_method("glass_capillary_corrected_surface_tension") is not None


# --------------------------------------------------------------------------- chain files
CHAIN_EXAMPLE = (
    Path(__file__).resolve().parents[1]
    / "examples"
    / "chains"
    / "ashcombe_chain_surface_tension.toml"
)


def test_example_chain_file_follows_the_working_equation() -> None:
    # exact analytic: the file's chain equals the working equation evaluated step by step
    # at the file's estimates (means of the readings; δT = ΔT_k = 0, so τ_k = 1)
    doc = tomllib.loads(CHAIN_EXAMPLE.read_text(encoding="utf-8"))
    w, (s2, s3), cert = doc["water"], doc["steps"], doc["certified"]
    g = STANDARD_GRAVITY

    def mean(xs: list[float]) -> float:
        return sum(xs) / len(xs)

    def factor(master: dict, liquid_c: dict, liquid_x: dict) -> float:
        return surface_tension_factor(
            master["driving_head"]["value"] * 1e-3, master["upper_radius"]["value"] * 1e-3,
            master["lower_radius"]["value"] * 1e-3, liquid_c["surface_tension"]["value"] * 1e-3,
            liquid_c["density"]["value"], liquid_x["surface_tension"]["value"] * 1e-3,
            liquid_x["density"]["value"], g,
        )  # fmt: skip

    e = [m["kinetic_energy"]["value"] * 1e-6 for m in (w, s2, s3)]  # m²·s
    t1 = mean(w["readings"])
    c = [(1.0034e-6 + e[0] / t1**2) / t1]
    for k, (known, step) in enumerate(((w, s2), (s2, s3)), start=1):
        tp, tn = mean(step["readings_in_known"]), mean(step["readings_in_new"])
        nu = c[-1] * (1 + factor(known, known, step)) * tp - e[k - 1] / tp**2
        c.append((nu + e[k] / tn**2) / tn)
    t_x = mean(cert["readings"])
    nu_x = c[2] * (1 + factor(s3, s3, cert)) * t_x - e[2] / t_x**2
    parts = load_chain_file(CHAIN_EXAMPLE)
    assert parts.chain.constants() == pytest.approx(tuple(c), rel=1e-12)
    res = parts.chain.evaluate()
    assert res.value == pytest.approx(nu_x * 1e6, rel=1e-12)  # mm²/s
    assert res.warnings == ()
    # water → S2 in master 1: S ≈ +0.08 % (the size the example's comment states)
    assert factor(w, w, s2) == pytest.approx(8.2e-4, abs=0.1e-4)
    # every partial chain builds, without the terms that act only above it
    for n in range(1, parts.masters + 1):
        partial = parts.chain_to(n)
        assert partial.constants() == pytest.approx(tuple(c[:n]), rel=1e-12)
        assert f"r_u{n}" not in partial.budget.input_names


@pytest.mark.parametrize(
    ("old", "new", "message"),
    [
        ('density = { value = 864.0, unit = "kg/m^3", standard_uncertainty = 0.5 }\n', "",
         r"\[\[steps\]\] entry 1 \(S2\) surface_tension needs density too"),
        ('driving_head = { value = 405.0, unit = "mm", standard_uncertainty = 3.0 }\n', "",
         r"\[\[steps\]\] entry 1 \(S2\) upper_radius, lower_radius need driving_head too"),
        ('surface_tension = { value = 30.9, unit = "mN/m", standard_uncertainty = 0.3 }\n'
         'density = { value = 874.0, unit = "kg/m^3", standard_uncertainty = 0.5 }\n', "",
         r"entry 2 \(S3\) upper_radius the meniscus geometry of master 3 \(certified liquid\) "
         r"needs .*missing: the certified liquid"),
        ('kinetic_energy = { value = 20.0, unit = "mm^2*s"', 'kinetic_energy = { value = 20.0, unit = "mm^2"',
         r"\[\[steps\]\] entry 1 \(S2\) kinetic_energy"),
    ],
)  # fmt: skip
def test_chain_file_refusals(old: str, new: str, message: str) -> None:
    text = CHAIN_EXAMPLE.read_text(encoding="utf-8")
    assert old in text
    with pytest.raises(BudgetFileError, match=message):
        loads_chain_file(text.replace(old, new, 1), "chain.toml")


def test_step_coefficient_without_a_temperature_difference_is_refused() -> None:
    # exact analytic: τ_k = (1 + α_k δT)/(1 + α_k δT) = 1 without ΔT_k, so α_k cannot act
    step = StepUpStep(
        _q("tp2"), _q("t2"), temperature_coefficient=Q.normal("a", -0.03, 0.003, "1/K")
    )
    with pytest.raises(InputError, match=r"step 2: a temperature_coefficient without a "
                       r"temperature_difference has no effect \(the thermometer_error"):  # fmt: skip
        step_up_chain(
            _q("nu_w"), _q("t1"), [step], thermometer_error=Q.normal("e", 0.0, 0.01, "K"),
            water_temperature_coefficient=Q.normal("f", -0.0243, 0.0002, "1/K"),
        )  # fmt: skip
    text = CHAIN_EXAMPLE.read_text(encoding="utf-8")
    line = 'temperature_difference = { value = 0.0, standard_uncertainty = 0.002, unit = "K" }\n'
    with pytest.raises(BudgetFileError, match=r"entry 1 \(S2\) temperature_coefficient has no "
                       r"effect without a temperature_difference"):  # fmt: skip
        loads_chain_file(text.replace(line, "", 1), "chain.toml")


def test_methods_command_lists_the_new_inputs(capsys: pytest.CaptureFixture[str]) -> None:
    from viscometry.cli import main

    for name, inputs in (
        ("glass_capillary_thermal_expansion", ("alpha_g", "dT_c")),
        ("glass_capillary_fixed_charge", ("V_c", "beta", "dT_f", "A_l", "h")),
        ("pressure_capillary_sample_head", ("h_s", "dh_s", "g")),
    ):
        assert main(["methods", name]) == 0
        out = capsys.readouterr().out
        assert all(f"\n    {i} " in out for i in inputs), out  # one row per input


def test_a_negative_surface_tension_in_a_chain_file_is_refused_by_the_reader():
    """A surface tension is positive; the file reader refuses it naming table, key and value
    (the chain panel refuses it too, with the same rule)."""
    import re

    from viscometry.errors import BudgetFileError
    from viscometry.io.chain import loads_chain

    text = CHAIN_EXAMPLE.read_text("utf-8")
    bad = re.sub(r"(surface_tension = \{ value = )([0-9.]+)", r"\1-\2", text, count=1)
    with pytest.raises(BudgetFileError, match=r"\[water\] surface_tension value must be positive"):
        loads_chain(bad, "x.toml")
