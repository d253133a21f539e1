"""Calibration of glass capillary viscometer constants, and the step-up chain from water.

Registered models
-----------------
``constant_from_reference_liquid``
    C = (ν_ref + E/t²)/t — the working equation ν = C t − E/t² solved for C (ISO 3105 /
    ASTM D446 form), with the reference liquid's certified ν_ref. E = 0 gives C = ν_ref/t.
``constant_from_two_reference_liquids``
    C = ½[(ν₁ + E/t₁²)/t₁ + (ν₂ + E/t₂²)/t₂]; the two single-liquid constants must agree within
    0.1 % before they are averaged (ASTM D2162) — :meth:`Method.check` flags it.
``constant_by_comparison``
    C_x = C_ref t_ref / t_x: both viscometers measure the same liquid in the same bath, so
    the liquid's viscosity and the bath temperature cancel (to first order).

The step-up chain
-----------------
:func:`step_up_chain` builds ONE measurement model over every input of a chain of master
viscometers calibrated upwards from water at 20 °C (ASTM D2162):

* viscometer 1 with water: C₁ = ν_w (1 + α_w δT) / t₁,
* step k = 2…N, liquid k in viscometers k−1 and k, in the same bath:
  C_k = C_{k−1} · (t′_k / t_k) · (1 + α_k (δT + ΔT_k)) / (1 + α_k δT),
* optionally a liquid X certified in viscometer N: ν_X = C_N t_X / (1 + α_X δT),

where ν_w is the water reference value, δT the error of the bath thermometer (shared by every
measurement), α the relative temperature coefficients (1/ν)∂ν/∂T of the liquids, t′_k and t_k
the flow times of liquid k in the known and in the new viscometer and ΔT_k an independent
temperature difference between the two (gradient, drift). Because ν_w and δT appear once, the
correlation they cause between the steps is carried automatically: δT cancels in each
comparison step, and for a certified liquid its net sensitivity is (α_w − α_X)·ν_X — not the
root-sum-square of separate, independent counts.

References
----------
ASTM D2162 (master viscometers, step-up procedure: factor-3 steps, two references within
0.1 %); ISO/TR 3666:1998 (water at 20 °C: η = 1.0016 mPa·s; ν = 1.0034 mm²/s as cited in
ASTM D2162, 3.1.1.1); ISO 3105 / ASTM D446 (kinetic-energy form).
"""

from __future__ import annotations

import dataclasses
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any

import sympy as sp

from viscometry.errors import InputError
from viscometry.gum import Budget, BudgetResult, InputQuantity
from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols

__all__ = [
    "CONSTANT_FROM_REFERENCE_LIQUID",
    "CONSTANT_FROM_TWO_REFERENCE_LIQUIDS",
    "CONSTANT_BY_COMPARISON",
    "StepUpStep",
    "CertifiedLiquid",
    "StepUpChain",
    "step_up_chain",
    "water_reference_input",
    "water_temperature_coefficient",
]

nu_ref, t, E = symbols("nu_ref t E")
nu1, t1, nu2, t2 = symbols("nu1 t1 nu2 t2")
C_ref, t_ref, t_x = symbols("C_ref t_ref t_x")


def _check_reference(method: Method, v: Mapping[str, float]) -> list[str]:
    return fc.check_flow_time(v["t"], v.get("minimum_flow_time", fc.MINIMUM_FLOW_TIME_MANUAL))


def _check_two(method: Method, v: Mapping[str, float]) -> list[str]:
    tmin = v.get("minimum_flow_time", fc.MINIMUM_FLOW_TIME_MANUAL)
    out = fc.check_flow_time(v["t1"], tmin) + fc.check_flow_time(v["t2"], tmin)
    c1 = (v["nu1"] + v["E"] / v["t1"] ** 2) / v["t1"]
    c2 = (v["nu2"] + v["E"] / v["t2"] ** 2) / v["t2"]
    out += fc.check_two_reference_constants(c1, c2)
    return out


def _check_comparison(method: Method, v: Mapping[str, float]) -> list[str]:
    tmin = v.get("minimum_flow_time", fc.MINIMUM_FLOW_TIME_MANUAL)
    out = fc.check_flow_time(v["t_ref"], tmin) + fc.check_flow_time(v["t_x"], tmin)
    out += fc.check_step_ratio(v["C_ref"], method.value(v))
    return out


_MIN_T = {"minimum_flow_time": "minimum flow time [s] (default 200 s, ISO 3104 manual timing)"}
_E_DESCRIPTION = "kinetic_energy_constant: E of ν = C t − E/t² for the viscometer (0 if negligible)"

CONSTANT_FROM_REFERENCE_LIQUID = Method(
    name="constant_from_reference_liquid",
    positive_inputs=("nu_ref", "t"),
    title="Viscometer constant from a reference liquid, C = (ν_ref + E/t²)/t",
    expression=(nu_ref + E / t**2) / t,
    input_names=("nu_ref", "t", "E"),
    input_units={"nu_ref": "m^2/s", "t": "s", "E": "m^2*s"},
    input_descriptions={
        "nu_ref": "reference_kinematic_viscosity: certified ν of the reference liquid at the "
        "calibration temperature",
        "t": "flow_time: flow time of the reference liquid",
        "E": _E_DESCRIPTION,
    },
    output_name="C",
    output_unit="m^2/s^2",
    references=(
        "ISO 3105 / ASTM D446: ν = C t − E/t² solved for C",
        "ISO 3104: minimum flow time",
    ),
    validity="As for the glass capillary working equation; flow time at least the minimum.",
    context_keys=_MIN_T,
    checker=_check_reference,
)

CONSTANT_FROM_TWO_REFERENCE_LIQUIDS = Method(
    name="constant_from_two_reference_liquids",
    positive_inputs=("nu1", "t1", "nu2", "t2"),
    title="Viscometer constant as the mean from two reference liquids",
    expression=((nu1 + E / t1**2) / t1 + (nu2 + E / t2**2) / t2) / 2,
    input_names=("nu1", "t1", "nu2", "t2", "E"),
    input_units={"nu1": "m^2/s", "t1": "s", "nu2": "m^2/s", "t2": "s", "E": "m^2*s"},
    input_descriptions={
        "nu1": "reference_kinematic_viscosity: certified ν of the first reference liquid",
        "t1": "flow_time: flow time of the first reference liquid",
        "nu2": "reference_kinematic_viscosity: certified ν of the second reference liquid",
        "t2": "flow_time: flow time of the second reference liquid",
        "E": _E_DESCRIPTION,
    },
    output_name="C",
    output_unit="m^2/s^2",
    references=("ASTM D2162: constants from two references averaged if within 0.1 %",),
    validity="Both single-liquid constants agree within 0.1 % (ASTM D2162); flow times at "
    "least the minimum.",
    context_keys=_MIN_T,
    checker=_check_two,
)

CONSTANT_BY_COMPARISON = Method(
    name="constant_by_comparison",
    positive_inputs=("C_ref", "t_ref", "t_x"),
    title="Viscometer constant by comparison with a reference viscometer, C_x = C_ref t_ref/t_x",
    expression=C_ref * t_ref / t_x,
    input_names=("C_ref", "t_ref", "t_x"),
    input_units={"C_ref": "m^2/s^2", "t_ref": "s", "t_x": "s"},
    input_descriptions={
        "C_ref": "reference_constant: constant of the calibrated (reference) viscometer",
        "t_ref": "flow_time: flow time of the liquid in the reference viscometer",
        "t_x": "flow_time: flow time of the same liquid in the viscometer being calibrated",
    },
    output_name="C_x",
    output_unit="m^2/s^2",
    references=("ASTM D2162: calibration by comparison, steps of at most a factor 3",),
    validity="Same liquid, same bath, same temperature for both viscometers; kinetic-energy "
    "terms negligible in both; constants within a factor 3 (ASTM D2162).",
    context_keys=_MIN_T,
    checker=_check_comparison,
)


# ============================================================================ step-up chain
@dataclass(frozen=True)
class StepUpStep:
    """One comparison step of a chain: liquid k in the known viscometer k−1 and the new one k.

    Parameters
    ----------
    time_in_known : InputQuantity
        Flow time t′_k of the step liquid in the already calibrated viscometer [s].
    time_in_new : InputQuantity
        Flow time t_k of the same liquid in the viscometer being calibrated [s].
    temperature_coefficient : InputQuantity, optional
        α_k = (1/ν)∂ν/∂T of the step liquid [1/K]; needed with a thermometer error or a
        temperature difference.
    temperature_difference : InputQuantity, optional
        ΔT_k, an independent temperature difference between the two viscometers [K].
    label : str
        Free text (e.g. the liquid's name).
    """

    time_in_known: InputQuantity
    time_in_new: InputQuantity
    temperature_coefficient: InputQuantity | None = None
    temperature_difference: InputQuantity | None = None
    label: str = ""


@dataclass(frozen=True)
class CertifiedLiquid:
    """A liquid measured in the last master of a chain: ν_X = C_N t_X / (1 + α_X δT).

    Parameters
    ----------
    flow_time : InputQuantity
        t_X [s].
    temperature_coefficient : InputQuantity, optional
        α_X [1/K]; needed when the chain has a thermometer error.
    """

    flow_time: InputQuantity
    temperature_coefficient: InputQuantity | None = None


def _renamed(q: InputQuantity, name: str, description: str) -> InputQuantity:
    if not isinstance(q, InputQuantity):
        raise InputError(f"{name} must be an InputQuantity, got {type(q).__name__}")
    return dataclasses.replace(q, name=name, description=q.description or description)


@dataclass(frozen=True)
class StepUpChain:
    """A step-up chain as one budget, with its intermediate constants and checks.

    Attributes
    ----------
    budget : Budget
        One budget over every input; the measurand is C_N (``C<N>``) or ν_X (``nu_X``). Its
        model is a chain model (``budget.method.name == "step_up_chain"``) whose validity
        checks — flow times (ISO 3104) and factor-3 steps (ASTM D2162) — run whenever the
        budget is evaluated, on every path.
    constant_expressions : tuple of sympy.Expr
        C₁ … C_N as expressions of the inputs.
    """

    budget: Budget
    constant_expressions: tuple[sp.Expr, ...]
    minimum_flow_time: float = fc.MINIMUM_FLOW_TIME_MANUAL

    def constants(self) -> tuple[float, ...]:
        """Estimates of C₁ … C_N [m²/s²]."""
        x, _u, _nu, _c = self.budget.si_arrays()
        values = dict(zip(self.budget.input_names, x, strict=True))
        return _constant_values(self.constant_expressions, values)

    def check(self) -> list[str]:
        """Factor-3 steps (ASTM D2162) and flow times below the minimum (ISO 3104)."""
        return list(self.budget.estimate_warnings)

    def evaluate(self, **kw: Any) -> BudgetResult:
        """Evaluate the chain's budget (its checks are among the result's warnings)."""
        return self.budget.evaluate(**kw)


def _constant_values(
    expressions: Sequence[sp.Expr], values: Mapping[str, float]
) -> tuple[float, ...]:
    subs = {sp.Symbol(n, real=True): float(v) for n, v in values.items()}
    return tuple(float(e.xreplace(subs)) for e in expressions)


def _chain_checker(constants: tuple[sp.Expr, ...], minimum_flow_time: float) -> Any:
    def check(method: Method, values: Mapping[str, float]) -> list[str]:
        out: list[str] = []
        for name in method.input_names:
            if name.startswith("t"):
                found = fc.check_flow_time(float(values[name]), minimum_flow_time)
                out += [f"{name}: {w}" for w in found]
        cs = _constant_values(constants, {n: values[n] for n in method.input_names})
        for k in range(1, len(cs)):
            out += [f"step {k + 1}: {w}" for w in fc.check_step_ratio(cs[k - 1], cs[k])]
        return out

    return check


#: SI unit of each kind of chain input, by the first letters of its name.
_CHAIN_UNITS = (("nu_w", "m^2/s"), ("dT", "K"), ("alpha", "1/K"), ("t", "s"))


def _chain_model(
    inputs: Sequence[InputQuantity],
    expr: sp.Expr,
    constants: tuple[sp.Expr, ...],
    output: str,
    output_unit: str,
    minimum_flow_time: float,
) -> Method:
    """The chain's model: its equation and its checks, as a (non-registry) built-in model."""
    names = tuple(q.name for q in inputs)
    units = {n: next(u for prefix, u in _CHAIN_UNITS if n.startswith(prefix)) for n in names}
    return Method(
        name="step_up_chain",
        title=f"Step-up chain from water, {len(constants)} master viscometer(s)",
        expression=expr, input_names=names, input_units=units,
        input_descriptions={q.name: q.description for q in inputs},
        output_name=output, output_unit=output_unit,
        references=("ASTM D2162 (step-up procedure)", "ISO 3104 (minimum flow time)"),
        validity="each step within a factor 3 of the last; flow times above the minimum",
        checker=_chain_checker(constants, minimum_flow_time),
        positive_inputs=tuple(n for n in names if n == "nu_w" or n.startswith(("t", "tp"))),
    )  # fmt: skip


def step_up_chain(
    water_value: InputQuantity,
    water_flow_time: InputQuantity,
    steps: Sequence[StepUpStep],
    *,
    thermometer_error: InputQuantity | None = None,
    water_temperature_coefficient: InputQuantity | None = None,
    certified: CertifiedLiquid | None = None,
    unit: str | None = None,
    minimum_flow_time: float = fc.MINIMUM_FLOW_TIME_MANUAL,
    **budget_kw: Any,
) -> StepUpChain:
    """Build a step-up chain from water as ONE budget (shared effects counted once).

    Parameters
    ----------
    water_value : InputQuantity
        ν_w, kinematic viscosity of water at the calibration temperature [m²/s]
        (see :func:`water_reference_input`). Renamed ``nu_w``.
    water_flow_time : InputQuantity
        t₁, flow time of water in master 1 [s]. Renamed ``t1``.
    steps : sequence of StepUpStep
        Steps 2 … N. Inputs are renamed ``tp<k>`` (time in the known viscometer), ``t<k>``,
        ``alpha<k>``, ``dT<k>``.
    thermometer_error : InputQuantity, optional
        δT, the bath thermometer's error, shared by all measurements [K]. Renamed ``dT_th``.
    water_temperature_coefficient : InputQuantity, optional
        α_w [1/K] (see :func:`water_temperature_coefficient`); required with
        ``thermometer_error``. Renamed ``alpha_w``.
    certified : CertifiedLiquid, optional
        Makes the measurand ν_X of a liquid measured in master N (``t_X``, ``alpha_X``).
    unit : str, optional
        Unit of the measurand (default m²/s² for C_N, m²/s for ν_X).
    minimum_flow_time : float
        For the flow-time check [s] (default 200 s, ISO 3104).
    **budget_kw
        Passed to :meth:`~viscometry.gum.Budget.from_method` (coverage settings, title,
        correlations, rounding).

    Returns
    -------
    StepUpChain

    Raises
    ------
    InputError
        If a temperature coefficient is missing where a temperature effect is given.

    Notes
    -----
    The model is given in this module's docstring. With every temperature term zero, the
    relative variance of C_N is u_r²(ν_w) + Σ u_r²(t) + α_w² u²(δT) + Σ α_k² u²(ΔT_k); with a
    certified liquid the thermometer term becomes (α_w − α_X)² u²(δT).

    References
    ----------
    ASTM D2162 (step-up procedure); JCGM 100:2008, 5.2 (correlated input quantities — avoided
    here by writing the shared effects as single inputs, JCGM 100:2008, F.1.2.3).

    Examples
    --------
    >>> from viscometry.gum import InputQuantity as Q
    >>> chain = step_up_chain(
    ...     Q.normal("nu_w", 1.0034, 0.0009, "mm^2/s"), Q.normal("t1", 334.5, 0.05, "s"),
    ...     [StepUpStep(Q.normal("a", 700.0, 0.05, "s"), Q.normal("b", 250.0, 0.05, "s"))])
    >>> [f"{c * 1e6:.5f}" for c in chain.constants()]  # mm²/s²
    ['0.00300', '0.00840']
    """
    if (thermometer_error is None) != (water_temperature_coefficient is None):
        raise InputError(
            "thermometer_error and water_temperature_coefficient go together: give both or neither"
        )
    inputs: list[InputQuantity] = [
        _renamed(water_value, "nu_w", "water reference kinematic viscosity"),
        _renamed(water_flow_time, "t1", "flow time of water in master 1"),
    ]
    (nu_w, t1s) = symbols("nu_w t1")
    shared: sp.Expr = sp.Integer(0)
    c_prev: sp.Expr = nu_w / t1s
    if thermometer_error is not None:
        dT_th, alpha_w = symbols("dT_th alpha_w")
        inputs.append(_renamed(thermometer_error, "dT_th", "bath thermometer error (shared)"))
        alpha = "relative temperature coefficient of water"
        inputs.append(_renamed(water_temperature_coefficient, "alpha_w", alpha))  # type: ignore[arg-type]
        shared = dT_th
        c_prev = nu_w * (1 + alpha_w * dT_th) / t1s
    constants = [c_prev]
    for k, step in enumerate(steps, start=2):
        c_prev = c_prev * _step_factor(k, step, shared, inputs)
        constants.append(c_prev)
    if certified is not None:
        expr = _certified(certified, c_prev, shared, len(constants), inputs)
        output, default_unit = "nu_X", "m^2/s"
    else:
        expr, output, default_unit = c_prev, f"C{len(constants)}", "m^2/s^2"
    model = _chain_model(inputs, expr, tuple(constants), output, default_unit, minimum_flow_time)
    budget_kw.setdefault("title", model.title)
    budget = Budget.from_method(model, inputs, default_unit if unit is None else unit, **budget_kw)
    return StepUpChain(budget, tuple(constants), minimum_flow_time)


def _step_factor(k: int, step: StepUpStep, shared: sp.Expr, inputs: list[InputQuantity]) -> sp.Expr:
    """C_k/C_{k−1} of step k (appends the step's inputs)."""
    if not isinstance(step, StepUpStep):
        raise InputError(f"step {k} must be a StepUpStep, got {type(step).__name__}")
    label = f" ({step.label})" if step.label else ""
    tp, tk = symbols(f"tp{k} t{k}")
    inputs.append(
        _renamed(step.time_in_known, f"tp{k}", f"flow time of liquid {k}{label} in master {k - 1}")
    )
    inputs.append(
        _renamed(step.time_in_new, f"t{k}", f"flow time of liquid {k}{label} in master {k}")
    )
    factor: sp.Expr = tp / tk
    if step.temperature_coefficient is None:
        if step.temperature_difference is not None:
            raise InputError(f"step {k}: temperature_difference needs a temperature_coefficient")
        return factor
    (ak,) = symbols(f"alpha{k}")
    alpha = f"relative temperature coefficient of liquid {k}{label}"
    inputs.append(_renamed(step.temperature_coefficient, f"alpha{k}", alpha))
    local: sp.Expr = sp.Integer(0)
    if step.temperature_difference is not None:
        (dk,) = symbols(f"dT{k}")
        gap = f"temperature difference between masters {k - 1} and {k}"
        inputs.append(_renamed(step.temperature_difference, f"dT{k}", gap))
        local = dk
    if shared == 0 and local == 0:
        raise InputError(
            f"step {k}: a temperature_coefficient without a thermometer_error or a "
            "temperature_difference has no effect; leave it out"
        )
    return factor * (1 + ak * (shared + local)) / (1 + ak * shared)


def _certified(
    certified: CertifiedLiquid,
    c_last: sp.Expr,
    shared: sp.Expr,
    n_last: int,
    inputs: list[InputQuantity],
) -> sp.Expr:
    """ν_X of a liquid certified in the last master (appends its inputs)."""
    (tX,) = symbols("t_X")
    where = f"flow time of the certified liquid in master {n_last}"
    inputs.append(_renamed(certified.flow_time, "t_X", where))
    expr = c_last * tX
    if certified.temperature_coefficient is not None:
        if shared == 0:
            raise InputError("certified.temperature_coefficient needs a thermometer_error")
        (aX,) = symbols("alpha_X")
        alpha = "relative temperature coefficient of the certified liquid"
        inputs.append(_renamed(certified.temperature_coefficient, "alpha_X", alpha))
        return expr / (1 + aX * shared)
    if shared != 0:
        raise InputError("with a thermometer_error, certified needs a temperature_coefficient")
    return expr


# ============================================================================ water helpers
def water_reference_input(name: str = "nu_w") -> InputQuantity:
    """ν of water at 20 °C, 101.325 kPa, as an input quantity (ISO/TR 3666:1998).

    Value 1.0034 mm²/s (ISO/TR 3666:1998 as cited in ASTM D2162, 3.1.1.1); relative expanded
    uncertainty 0.17 % with k = 2 (that of the viscosity, ISO/TR 3666:1998 as commonly cited —
    from memory; the density's is negligible beside it).

    Examples
    --------
    >>> q = water_reference_input()
    >>> q.value, q.unit, round(q.standard_uncertainty, 7)
    (1.0034, 'mm^2/s', 0.0008529)
    """
    from viscometry.properties.constants import (
        ISO_TR_3666_COVERAGE_FACTOR,
        ISO_TR_3666_WATER_KINEMATIC_VISCOSITY_20C,
        ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY,
    )

    value = round(ISO_TR_3666_WATER_KINEMATIC_VISCOSITY_20C * 1e6, 10)
    return InputQuantity.from_expanded(
        name,
        value,
        value * ISO_TR_3666_WATER_VISCOSITY_20C_RELATIVE_EXPANDED_UNCERTAINTY,
        "mm^2/s",
        coverage_factor=ISO_TR_3666_COVERAGE_FACTOR,
        description="kinematic viscosity of water at 20 °C, 101.325 kPa",
        source="ISO/TR 3666:1998 (value as cited in ASTM D2162, 3.1.1.1)",
    )


def water_temperature_coefficient(temperature: float = 293.15) -> float:
    """Relative temperature coefficient (1/ν)∂ν/∂T of water at 101.325 kPa [1/K].

    Central difference (step 0.01 K) of the IAPWS R12-08 / IAPWS-IF97 kinematic viscosity of
    :func:`viscometry.properties.water.water_kinematic_viscosity`; the truncation error is far
    below the formulation's uncertainty.

    Parameters
    ----------
    temperature : float
        T [K], 273.16 K to 373.14 K.

    Examples
    --------
    >>> round(water_temperature_coefficient(293.15), 4)  # η: −2.45 %/K; ρ: −0.02 %/K
    -0.0243
    """
    from viscometry.properties.water import water_kinematic_viscosity

    step = 0.01
    T = float(temperature)
    if not math.isfinite(T) or T <= 0:
        raise InputError(f"temperature must be a positive temperature in K, got {temperature!r}")
    nu_plus = float(water_kinematic_viscosity(T + step))
    nu_minus = float(water_kinematic_viscosity(T - step))
    nu = float(water_kinematic_viscosity(T))
    return (nu_plus - nu_minus) / (2.0 * step * nu)
