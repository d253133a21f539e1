"""The step-up chain from water as ONE budget: shared effects counted once.

An invented two-step chain (water -> master 1 -> master 2; numbers of our own, not check
values) is compared with closed forms derived by hand from the first-order law of
propagation ("exact analytic"): with every temperature estimate zero,

    u_r²(C2) = u_r²(nu_w) + u_r²(t1) + u_r²(tp2) + u_r²(t2) + alpha_w² u²(dT_th) + alpha_2² u²(dT2)

(the shared thermometer error cancels inside the comparison step), and for a liquid X
certified in master 2 the thermometer term becomes (alpha_w - alpha_X)² u²(dT_th).
ASTM D2162 factor-3 steps (published, REFERENCES.md); ISO 3104 200 s minimum (published).
"""

from __future__ import annotations

import math

import pytest

from viscometry.errors import InputError
from viscometry.gum import Budget, Correlation, MeasurementModel
from viscometry.gum import InputQuantity as Q
from viscometry.methods import (
    CertifiedLiquid,
    StepUpStep,
    step_up_chain,
    water_reference_input,
    water_temperature_coefficient,
)

U_NU_W, U_T1, U_TP2, U_T2 = 0.00085, 0.05, 0.06, 0.04
NU_W, T1, TP2, T2 = 1.0034, 334.50, 700.0, 250.0
A_W, U_A_W, U_DT = -0.0243, 0.0002, 0.010
A_2, U_A_2, U_DT2 = -0.040, 0.002, 0.005
T_X, U_TX, A_X, U_A_X = 400.0, 0.05, -0.060, 0.003


def _chain(certified: bool = False, tp2: float = TP2, t2: float = T2):
    step = StepUpStep(
        Q.normal("a", tp2, U_TP2, "s"),
        Q.normal("b", t2, U_T2, "s"),
        temperature_coefficient=Q.normal("c", A_2, U_A_2, "1/K"),
        temperature_difference=Q.normal("d", 0.0, U_DT2, "K"),
        label="oil S3",
    )
    return step_up_chain(
        Q.normal("w", NU_W, U_NU_W, "mm^2/s"),
        Q.normal("t", T1, U_T1, "s"),
        [step],
        thermometer_error=Q.normal("e", 0.0, U_DT, "K"),
        water_temperature_coefficient=Q.normal("f", A_W, U_A_W, "1/K"),
        certified=CertifiedLiquid(Q.normal("x", T_X, U_TX, "s"), Q.normal("y", A_X, U_A_X, "1/K"))
        if certified
        else None,
    )


def _base_rel_var() -> float:
    return (U_NU_W / NU_W) ** 2 + (U_T1 / T1) ** 2 + (U_TP2 / TP2) ** 2 + (U_T2 / T2) ** 2


def test_two_step_chain_closed_form() -> None:
    chain = _chain()
    b = chain.budget
    assert b.measurand == "C2" and b.unit == "m^2/s^2"
    assert b.input_names == ("nu_w", "t1", "dT_th", "alpha_w", "tp2", "t2", "alpha2", "dT2")
    res = chain.evaluate()
    c2 = NU_W * 1e-6 * TP2 / (T1 * T2)  # exact analytic estimate [m²/s²]
    assert res.value == pytest.approx(c2, rel=1e-14)
    rel_var = _base_rel_var() + (A_W * U_DT) ** 2 + (A_2 * U_DT2) ** 2  # exact analytic
    assert res.standard_uncertainty == pytest.approx(c2 * math.sqrt(rel_var), rel=1e-12)
    # the shared thermometer acts only through the water step: |c| u = C2 |alpha_w| u(dT)
    row = res.contribution("dT_th")
    assert abs(row.contribution) == pytest.approx(c2 * abs(A_W) * U_DT, rel=1e-12)
    assert res.contribution("alpha2").contribution == 0.0  # multiplies dT estimates of zero
    assert [round(c / c2, 12) for c in chain.constants()] == [round(T2 / TP2, 12), 1.0]


def test_certified_liquid_carries_the_correlation() -> None:
    chain = _chain(certified=True)
    res = chain.evaluate()
    nu_x = NU_W * 1e-6 * TP2 / (T1 * T2) * T_X
    assert chain.budget.measurand == "nu_X"
    assert res.value == pytest.approx(nu_x, rel=1e-14)
    rel_var = (
        _base_rel_var() + (U_TX / T_X) ** 2 + ((A_W - A_X) * U_DT) ** 2 + (A_2 * U_DT2) ** 2
    )  # exact analytic: the thermometer term is (alpha_w - alpha_X)² u²(dT)
    assert res.standard_uncertainty == pytest.approx(nu_x * math.sqrt(rel_var), rel=1e-12)
    # counting the thermometer twice as independent would give a different (here larger) u
    naive = _base_rel_var() + (U_TX / T_X) ** 2 + (A_W**2 + A_X**2) * U_DT**2 + (A_2 * U_DT2) ** 2
    assert nu_x * math.sqrt(naive) > res.standard_uncertainty * 1.01


def test_chain_equals_two_stage_evaluation_with_correlation() -> None:
    # JCGM 100:2008, 5.2.2: the same result from C2 carried as an input correlated with dT_th,
    # r(C2, dT) = c(C2, dT) u(dT) / u(C2) with c = C2 alpha_w (first order)
    stage1 = _chain().evaluate()
    c2, u_c2 = stage1.value, stage1.standard_uncertainty
    r = c2 * A_W * U_DT / u_c2
    from viscometry.gum.formula import parse_formula

    names = ["C2", "t_X", "alpha_X", "dT_th"]
    model = MeasurementModel(
        parse_formula("C2 * t_X / (1 + alpha_X * dT_th)", names), tuple(names), (), "nu_X"
    )
    inputs = [
        Q.normal("C2", c2, u_c2, "m^2/s^2"),
        Q.normal("t_X", T_X, U_TX, "s"),
        Q.normal("alpha_X", A_X, U_A_X, "1/K"),
        Q.normal("dT_th", 0.0, U_DT, "K"),
    ]
    two_stage = Budget(model, inputs, "m^2/s", correlations=[Correlation("C2", "dT_th", r)])
    # evaluation emits nothing (warnings are errors here); C2 is correlated with dT_th but
    # both have infinite dof, so there is no Welch-Satterthwaite caveat either
    got = two_stage.evaluate()
    assert got.warnings == ()
    assert got.standard_uncertainty == pytest.approx(
        _chain(certified=True).evaluate().standard_uncertainty, rel=1e-12
    )


def test_step_checks_astm_d2162_and_flow_time() -> None:
    assert _chain().check() == []  # step factor 2.8, flow times >= 200 s
    big = _chain(tp2=760.0)  # factor 3.04 > 3 (ASTM D2162)
    msgs = big.check()
    assert len(msgs) == 1 and msgs[0].startswith("step 2:") and "3.04" in msgs[0]
    # the chain's budget carries its checks: estimate warnings and evaluation agree
    assert big.budget.estimate_warnings == tuple(msgs)
    assert [w for w in big.evaluate().warnings if w.startswith("step 2")] == msgs
    short = _chain(tp2=560.0, t2=190.0)  # ISO 3104: 200 s minimum
    assert any(w.startswith("t2: flow time 190 s") for w in short.check())


def test_chain_without_temperature_terms() -> None:
    chain = step_up_chain(
        Q.normal("w", NU_W, U_NU_W, "mm^2/s"), Q.normal("t", T1, U_T1, "s"),
        [StepUpStep(Q.normal("a", TP2, U_TP2, "s"), Q.normal("b", T2, U_T2, "s"))],
    )  # fmt: skip
    res = chain.evaluate()
    c2 = NU_W * 1e-6 * TP2 / (T1 * T2)
    assert res.standard_uncertainty == pytest.approx(c2 * math.sqrt(_base_rel_var()), rel=1e-12)


def test_chain_input_errors() -> None:
    w, t = Q.normal("w", NU_W, U_NU_W, "mm^2/s"), Q.normal("t", T1, U_T1, "s")
    with pytest.raises(InputError, match="give both or neither"):
        step_up_chain(w, t, [], thermometer_error=Q.normal("e", 0.0, 0.01, "K"))
    with pytest.raises(
        InputError, match="step 2: temperature_difference needs a temperature_coefficient"
    ):
        step_up_chain(w, t, [StepUpStep(Q.normal("a", 700.0, 0.1, "s"), Q.normal("b", 250.0, 0.1, "s"),
                                        temperature_difference=Q.normal("d", 0.0, 0.01, "K"))])  # fmt: skip
    with pytest.raises(InputError, match="needs a temperature_coefficient"):
        step_up_chain(w, t, [], thermometer_error=Q.normal("e", 0.0, 0.01, "K"),
                      water_temperature_coefficient=Q.normal("f", A_W, 0.0002, "1/K"),
                      certified=CertifiedLiquid(Q.normal("x", 400.0, 0.1, "s")))  # fmt: skip


def test_water_helpers() -> None:
    q = water_reference_input()
    # ISO/TR 3666:1998 value as cited in ASTM D2162, 3.1.1.1 (published): 1.0034 mm²/s;
    # relative U = 0.17 %, k = 2 (from memory)
    assert q.value == 1.0034 and q.unit == "mm^2/s"
    assert q.standard_uncertainty == pytest.approx(1.0034 * 0.0017 / 2, rel=1e-12)
    # water's viscosity falls about 2.5 %/K near 20 °C (REFERENCES.md, recomputed); nu slightly less
    alpha = water_temperature_coefficient(293.15)
    assert -0.026 < alpha < -0.023
