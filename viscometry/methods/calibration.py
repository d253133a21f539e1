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

Optional terms at each measurement (see :func:`step_up_chain`): the kinetic-energy term E_j/t²
of the master (ν = C t − E/t², ISO 3105 / ASTM D446) and the surface-tension factor 1 + S of a
constant used with another liquid than the one that calibrated it,
S = 2(1/r_u − 1/r_l)(σ_c/ρ_c − σ_x/ρ_x)/(g h) (ISO 3105 / ASTM D446, form from memory); each
master's E and each liquid's σ, ρ is one input, so the correlation they cause between steps is
carried too.

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
from viscometry.gum import Budget, BudgetResult, Constant, InputQuantity
from viscometry.methods import flow_checks as fc
from viscometry.methods.base import Method, symbols
from viscometry.properties.constants import STANDARD_GRAVITY

__all__ = [
    "CONSTANT_FROM_REFERENCE_LIQUID",
    "CONSTANT_FROM_TWO_REFERENCE_LIQUIDS",
    "CONSTANT_BY_COMPARISON",
    "StepUpStep",
    "CertifiedLiquid",
    "LiquidSurface",
    "MeniscusGeometry",
    "SURFACE_TENSION_FACTOR_LIMIT",
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
    flow_time_inputs=("t",),
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
    flow_time_inputs=("t1", "t2"),
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
    flow_time_inputs=("t_ref", "t_x"),
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
#: Largest |S| of a surface-tension factor 1 + S in a chain before a warning (our default, no
#: source): the factor is first order in S.
SURFACE_TENSION_FACTOR_LIMIT = 0.01
#: Name of the constant g [m/s²] in the surface-tension factors of a chain.
GRAVITY_CONSTANT = "g_n"


@dataclass(frozen=True)
class LiquidSurface:
    """Surface tension and density of a chain liquid, for the surface-tension terms.

    Parameters
    ----------
    surface_tension : InputQuantity
        σ of the liquid at the calibration temperature [N/m].
    density : InputQuantity
        ρ of the liquid at the calibration temperature [kg/m³].
    """

    surface_tension: InputQuantity
    density: InputQuantity


@dataclass(frozen=True)
class MeniscusGeometry:
    """Meniscus geometry of a master viscometer, for the surface-tension terms.

    Parameters
    ----------
    upper_radius : InputQuantity
        r_u, radius of the upper bulb at the meniscus [m].
    lower_radius : InputQuantity
        r_l, radius of the lower bulb (or reservoir) at the meniscus [m].
    driving_head : InputQuantity
        h, mean driving head [m].
    """

    upper_radius: InputQuantity
    lower_radius: InputQuantity
    driving_head: InputQuantity


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
    surface : LiquidSurface, optional
        σ_k and ρ_k of the step liquid (inputs ``sigma<k>``, ``rho<k>``): used by the
        surface-tension terms of this step and of the next one (shared, so correlated).
    geometry : MeniscusGeometry, optional
        Meniscus geometry of master k (``r_u<k>``, ``r_l<k>``, ``h<k>``): turns on the
        surface-tension term where master k measures the next liquid (step k+1 or the
        certified liquid).
    kinetic_energy : InputQuantity, optional
        E_k of master k in ν = C t − E/t² [m²·s] (``E<k>``): used in this step and wherever
        master k measures again (shared, so correlated).
    """

    time_in_known: InputQuantity
    time_in_new: InputQuantity
    temperature_coefficient: InputQuantity | None = None
    temperature_difference: InputQuantity | None = None
    label: str = ""
    surface: LiquidSurface | None = None
    geometry: MeniscusGeometry | None = None
    kinetic_energy: InputQuantity | None = None


@dataclass(frozen=True)
class CertifiedLiquid:
    """A liquid measured in the last master of a chain: ν_X = C_N t_X / (1 + α_X δT).

    With the surface-tension and kinetic-energy terms:
    ν_X = [C_N (1 + S_X) t_X − E_N/t_X²] / (1 + α_X δT).

    Parameters
    ----------
    flow_time : InputQuantity
        t_X [s].
    temperature_coefficient : InputQuantity, optional
        α_X [1/K]; needed when the chain has a thermometer error.
    surface : LiquidSurface, optional
        σ_X, ρ_X (``sigma_X``, ``rho_X``); needed when master N has a geometry.
    """

    flow_time: InputQuantity
    temperature_coefficient: InputQuantity | None = None
    surface: LiquidSurface | None = None


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
        x, _u, _nu, c = self.budget.si_arrays()
        values = dict(zip(self.budget.input_names, x, strict=True))
        values.update(zip((k.name for k in self.budget.constants), c, strict=True))
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


@dataclass(frozen=True)
class _TermCheck:
    """A correction term of the chain to check: (label, kind, term, reference) expressions."""

    label: str
    kind: str  # "kinetic" (term E/t² against ν) or "surface" (S, reference 1)
    term: sp.Expr
    reference: sp.Expr


def _term_warnings(terms: Sequence[_TermCheck], subs: Mapping[sp.Symbol, float]) -> list[str]:
    out: list[str] = []
    for c in terms:
        term, ref = float(c.term.xreplace(subs)), float(c.reference.xreplace(subs))
        if c.kind == "kinetic":
            out += [f"{c.label}: {w}" for w in fc.check_kinetic_energy(term, ref)]
        elif abs(term) > SURFACE_TENSION_FACTOR_LIMIT:
            out.append(
                f"{c.label}: surface-tension factor 1 + S has S = {term:.3g}, beyond "
                f"±{SURFACE_TENSION_FACTOR_LIMIT:g} (our default, no source): the correction is "
                "first order in S; check the meniscus radii and the head"
            )
    return out


def _chain_checker(
    constants: tuple[sp.Expr, ...], minimum_flow_time: float, terms: tuple[_TermCheck, ...] = ()
) -> Any:
    def check(method: Method, values: Mapping[str, float]) -> list[str]:
        out: list[str] = []
        for name in method.input_names:
            if name.startswith("t"):
                found = fc.check_flow_time(float(values[name]), minimum_flow_time)
                out += [f"{name}: {w}" for w in found]
        names = method.input_names + method.constant_names
        cs = _constant_values(constants, {n: values[n] for n in names})
        for k in range(1, len(cs)):
            out += [f"step {k + 1}: {w}" for w in fc.check_step_ratio(cs[k - 1], cs[k])]
        if terms:
            subs = {sp.Symbol(n, real=True): float(values[n]) for n in names}
            out += _term_warnings(terms, subs)
        return out

    return check


#: SI unit of each kind of chain input, by the first letters of its name.
_CHAIN_UNITS = (
    ("nu_w", "m^2/s"), ("dT", "K"), ("alpha", "1/K"), ("t", "s"), ("sigma", "N/m"),
    ("rho", "kg/m^3"), ("r_", "m"), ("h", "m"), ("E", "m^2*s"),
)  # fmt: skip
_POSITIVE_PREFIXES = ("t", "rho", "r_", "h", "sigma")


def _chain_model(
    inputs: Sequence[InputQuantity],
    expr: sp.Expr,
    constants: tuple[sp.Expr, ...],
    output: str,
    output_unit: str,
    minimum_flow_time: float,
    terms: tuple[_TermCheck, ...] = (),
    constant_names: tuple[str, ...] = (),
) -> Method:
    """The chain's model: its equation and its checks, as a (non-registry) built-in model."""
    names = tuple(q.name for q in inputs)
    units = {n: next(u for prefix, u in _CHAIN_UNITS if n.startswith(prefix)) for n in names}
    references = ("ASTM D2162 (step-up procedure)", "ISO 3104 (minimum flow time)")
    if terms:
        references += (
            "ISO 3105 / ASTM D446: kinetic-energy term E/t² and surface-tension correction "
            "C_x = C_c[1 + (2/(g h))(1/r_u − 1/r_l)(σ_c/ρ_c − σ_x/ρ_x)] (form from memory)",
        )
    return Method(
        name="step_up_chain",
        title=f"Step-up chain from water, {len(constants)} master viscometer(s)",
        expression=expr, input_names=names, input_units=units,
        input_descriptions={q.name: q.description for q in inputs},
        output_name=output, output_unit=output_unit, references=references,
        validity="each step within a factor 3 of the last; flow times above the minimum",
        checker=_chain_checker(constants, minimum_flow_time, terms),
        constant_names=constant_names,
        positive_inputs=tuple(
            n for n in names if n == "nu_w" or n.startswith(_POSITIVE_PREFIXES)
        ),
    )  # fmt: skip


class _Terms:
    """Work space of :func:`step_up_chain`: the inputs in order and the symbols of the
    surface-tension and kinetic-energy terms (liquid k's σ/ρ, master j's geometry and E_j),
    each created once so that every term that shares them is correlated through them."""

    def __init__(self, inputs: list[InputQuantity]) -> None:
        self.inputs = inputs
        self.ratio: dict[str, sp.Expr] = {}  # liquid → σ/ρ
        self.gamma: dict[int, sp.Expr] = {}  # master → 2(1/r_u − 1/r_l)/(g h)
        self.energy: dict[int, sp.Expr] = {}  # master → E
        self.unused: dict[str, str] = {}  # symbol group → what it is (until used)
        self.checks: list[_TermCheck] = []

    def add(self, q: InputQuantity, name: str, description: str) -> sp.Symbol:
        self.inputs.append(_renamed(q, name, description))
        return sp.Symbol(name, real=True)

    def surface(self, liquid: str, surface: LiquidSurface | None, what: str) -> None:
        if surface is None:
            return
        if not isinstance(surface, LiquidSurface):
            raise InputError(f"{what}: surface must be a LiquidSurface, got {surface!r}")
        sigma = self.add(surface.surface_tension, f"sigma{liquid}", f"surface tension of {what}")
        rho = self.add(surface.density, f"rho{liquid}", f"density of {what}")
        self.ratio[liquid] = sigma / rho
        self.unused[f"liquid {liquid}"] = f"the surface tension and density of {what}"

    def geometry(self, master: int, geometry: MeniscusGeometry | None) -> None:
        if geometry is None:
            return
        if not isinstance(geometry, MeniscusGeometry):
            raise InputError(f"master {master}: geometry must be a MeniscusGeometry")
        where = f"of master {master}"
        r_u = self.add(geometry.upper_radius, f"r_u{master}", f"upper meniscus radius {where}")
        r_l = self.add(geometry.lower_radius, f"r_l{master}", f"lower meniscus radius {where}")
        h = self.add(geometry.driving_head, f"h{master}", f"mean driving head {where}")
        g = sp.Symbol(GRAVITY_CONSTANT, real=True)
        self.gamma[master] = 2 * (1 / r_u - 1 / r_l) / (g * h)
        self.unused[f"master {master}"] = f"the meniscus geometry of master {master}"

    def kinetic(self, master: int, q: InputQuantity | None) -> None:
        if q is not None:
            e = self.add(q, f"E{master}", f"kinetic-energy constant of master {master}")
            self.energy[master] = e

    def surface_factor(self, master: int, known: str, new: str, label: str) -> sp.Expr:
        """S of master ``master`` calibrated with liquid ``known``, used with ``new``."""
        if master not in self.gamma:
            return sp.Integer(0)
        missing = [liq for liq in (known, new) if liq not in self.ratio]
        if missing:
            raise InputError(
                f"the meniscus geometry of master {master} ({label}) needs the surface tension "
                f"and density of the liquids on both sides (missing: {_liquid_names(missing)})",
                where=f"inputs.r_u{master}",
            )
        for key in (f"master {master}", f"liquid {known}", f"liquid {new}"):
            self.unused.pop(key, None)
        s = self.gamma[master] * (self.ratio[known] - self.ratio[new])
        self.checks.append(_TermCheck(label, "surface", s, sp.Integer(1)))
        return s

    def kinetic_term(self, master: int, time: sp.Expr) -> sp.Expr:
        """E/t² of ``master`` at ``time`` (0 without E)."""
        return self.energy[master] / time**2 if master in self.energy else sp.Integer(0)

    def check_kinetic(self, label: str, term: sp.Expr, nu: sp.Expr) -> None:
        """Check a kinetic-energy term against the viscosity ``nu`` it corrects."""
        if term != 0:
            self.checks.append(_TermCheck(label, "kinetic", term, nu))

    def refuse_unused(self) -> None:
        if self.unused:
            kind, _, which = next(iter(self.unused)).partition(" ")
            first = f"r_u{which}" if kind == "master" else f"sigma{which}"
            raise InputError(
                f"{'; '.join(self.unused.values())}: used by no surface-tension term (a term "
                "needs the geometry of the master and σ, ρ of the liquids on both sides); "
                "leave them out",
                where=f"inputs.{first}",
            )


def _liquid_names(liquids: Sequence[str]) -> str:
    names = {"_w": "water", "_X": "the certified liquid"}
    return ", ".join(names.get(liq, f"liquid {liq}") for liq in liquids)


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
    water_surface: LiquidSurface | None = None,
    first_master_geometry: MeniscusGeometry | None = None,
    first_master_kinetic_energy: InputQuantity | None = None,
    gravity: float = STANDARD_GRAVITY,
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
        ``alpha<k>``, ``dT<k>`` and, for the optional terms, ``sigma<k>``, ``rho<k>``,
        ``E<k>``, ``r_u<k>``, ``r_l<k>``, ``h<k>``.
    thermometer_error : InputQuantity, optional
        δT, the bath thermometer's error, shared by all measurements [K]. Renamed ``dT_th``.
    water_temperature_coefficient : InputQuantity, optional
        α_w [1/K] (see :func:`water_temperature_coefficient`); required with
        ``thermometer_error``. Renamed ``alpha_w``.
    certified : CertifiedLiquid, optional
        Makes the measurand ν_X of a liquid measured in master N (``t_X``, ``alpha_X``,
        ``sigma_X``, ``rho_X``).
    unit : str, optional
        Unit of the measurand (default m²/s² for C_N, m²/s for ν_X).
    minimum_flow_time : float
        For the flow-time check [s] (default 200 s, ISO 3104).
    water_surface : LiquidSurface, optional
        σ and ρ of water (``sigma_w``, ``rho_w``), for the surface-tension term of step 2.
    first_master_geometry : MeniscusGeometry, optional
        Meniscus geometry of master 1 (``r_u1``, ``r_l1``, ``h1``): turns on the
        surface-tension term of step 2 (water → liquid 2 in master 1).
    first_master_kinetic_energy : InputQuantity, optional
        E₁ of master 1 [m²·s] (``E1``), in the water measurement and in step 2.
    gravity : float
        g in the surface-tension factors [m/s²] (default standard gravity; the factors are
        corrections, so g's uncertainty does not matter).
    **budget_kw
        Passed to :meth:`~viscometry.gum.Budget.from_method` (coverage settings, title,
        correlations, rounding).

    Returns
    -------
    StepUpChain

    Raises
    ------
    InputError
        If a temperature coefficient is missing where a temperature effect is given, a
        surface-tension term lacks a liquid's σ and ρ, or σ, ρ or a geometry act nowhere.

    Notes
    -----
    The model is given in this module's docstring. With every temperature term zero, the
    relative variance of C_N is u_r²(ν_w) + Σ u_r²(t) + α_w² u²(δT) + Σ α_k² u²(ΔT_k); with a
    certified liquid the thermometer term becomes (α_w − α_X)² u²(δT).

    Optional terms (ISO 3105 / ASTM D446 working equation ν = C t − E/t² and its
    surface-tension correction, form from memory): master j's constant C_j holds for the
    liquid it was calibrated with (water for j = 1, liquid j otherwise); used with liquid k it
    becomes C_j (1 + S), S = 2(1/r_u,j − 1/r_l,j)(σ_j/ρ_j − σ_k/ρ_k)/(g h_j). So

    * C₁ = [ν_w (1 + α_w δT) + E₁/t₁²] / t₁,
    * C_k = [(C_{k−1} (1 + S_k) t′_k − E_{k−1}/t′_k²) τ_k + E_k/t_k²] / t_k, with
      τ_k = (1 + α_k (δT + ΔT_k))/(1 + α_k δT),
    * ν_X = [C_N (1 + S_X) t_X − E_N/t_X²] / (1 + α_X δT).

    Each E_j and each liquid's σ, ρ is ONE input, used in every term it enters (E_j where
    master j measures; σ_k, ρ_k in steps k and k+1), so their correlation between the steps
    is carried by the model (JCGM 100:2008, F.1.2.3). Without these terms the expressions
    are exactly those above. Checks: kinetic-energy term above 1 % of a measured ν and
    |S| above :data:`SURFACE_TENSION_FACTOR_LIMIT` (our defaults, no source).

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
    terms = _Terms(inputs)
    (nu_w, t1s) = symbols("nu_w t1")
    shared: sp.Expr = sp.Integer(0)
    nu_water: sp.Expr = nu_w
    if thermometer_error is not None:
        dT_th, alpha_w = symbols("dT_th alpha_w")
        inputs.append(_renamed(thermometer_error, "dT_th", "bath thermometer error (shared)"))
        alpha = "relative temperature coefficient of water"
        inputs.append(_renamed(water_temperature_coefficient, "alpha_w", alpha))  # type: ignore[arg-type]
        shared = dT_th
        nu_water = nu_w * (1 + alpha_w * dT_th)
    terms.surface("_w", water_surface, "water")
    terms.kinetic(1, first_master_kinetic_energy)
    terms.geometry(1, first_master_geometry)
    ke1 = terms.kinetic_term(1, t1s)
    terms.check_kinetic("water in master 1", ke1, nu_water)
    c_prev: sp.Expr = nu_water / t1s if ke1 == 0 else (nu_water + ke1) / t1s
    constants = [c_prev]
    for k, step in enumerate(steps, start=2):
        c_prev = _step_constant(k, step, c_prev, shared, terms)
        constants.append(c_prev)
    if certified is not None:
        expr = _certified(certified, c_prev, shared, len(constants), terms)
        output, default_unit = "nu_X", "m^2/s"
    else:
        expr, output, default_unit = c_prev, f"C{len(constants)}", "m^2/s^2"
    terms.refuse_unused()
    if terms.gamma:  # g of the surface-tension factors, an exact constant of the budget
        g_n = Constant(GRAVITY_CONSTANT, gravity, "m/s^2", "g in the surface-tension factors")
        budget_kw["constants"] = (*budget_kw.get("constants", ()), g_n)
    model = _chain_model(
        inputs, expr, tuple(constants), output, default_unit, minimum_flow_time,
        tuple(terms.checks), (GRAVITY_CONSTANT,) if terms.gamma else (),
    )  # fmt: skip
    budget_kw.setdefault("title", model.title)
    budget = Budget.from_method(model, inputs, default_unit if unit is None else unit, **budget_kw)
    return StepUpChain(budget, tuple(constants), minimum_flow_time)


def _step_constant(
    k: int, step: StepUpStep, c_prev: sp.Expr, shared: sp.Expr, terms: _Terms
) -> sp.Expr:
    """C_k of step k (appends the step's inputs)."""
    if not isinstance(step, StepUpStep):
        raise InputError(f"step {k} must be a StepUpStep, got {type(step).__name__}")
    label = f" ({step.label})" if step.label else ""
    temperature = _step_factor(k, step, shared, terms.inputs)
    tp, tk = symbols(f"tp{k} t{k}")
    terms.surface(str(k), step.surface, f"liquid {k}{label}")
    terms.kinetic(k, step.kinetic_energy)
    where = f"step {k}{label}"
    s = terms.surface_factor(k - 1, "_w" if k == 2 else str(k - 1), str(k), where)
    ke_known, ke_new = terms.kinetic_term(k - 1, tp), terms.kinetic_term(k, tk)
    nu_known = c_prev * (1 + s) * tp - ke_known
    nu_new = nu_known * temperature
    terms.check_kinetic(f"{where}, in master {k - 1}", ke_known, nu_known)
    terms.check_kinetic(f"{where}, in master {k}", ke_new, nu_new)
    terms.geometry(k, step.geometry)
    if s == 0 and ke_known == 0 and ke_new == 0:
        return c_prev * (tp / tk) * temperature  # the form without the optional terms
    return (nu_new + ke_new) / tk


def _step_factor(k: int, step: StepUpStep, shared: sp.Expr, inputs: list[InputQuantity]) -> sp.Expr:
    """Temperature factor τ_k of step k (appends the step's flow times and α_k, ΔT_k)."""
    label = f" ({step.label})" if step.label else ""
    inputs.append(
        _renamed(step.time_in_known, f"tp{k}", f"flow time of liquid {k}{label} in master {k - 1}")
    )
    inputs.append(
        _renamed(step.time_in_new, f"t{k}", f"flow time of liquid {k}{label} in master {k}")
    )
    if step.temperature_coefficient is None:
        if step.temperature_difference is not None:
            raise InputError(f"step {k}: temperature_difference needs a temperature_coefficient")
        return sp.Integer(1)
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
    if local == 0:
        raise InputError(
            f"step {k}: a temperature_coefficient without a temperature_difference has no "
            "effect (the thermometer_error acts on both viscometers of a step and cancels); "
            "leave it out"
        )
    return (1 + ak * (shared + local)) / (1 + ak * shared)


def _certified(
    certified: CertifiedLiquid,
    c_last: sp.Expr,
    shared: sp.Expr,
    n_last: int,
    terms: _Terms,
) -> sp.Expr:
    """ν_X of a liquid certified in the last master (appends its inputs)."""
    inputs = terms.inputs
    (tX,) = symbols("t_X")
    where = f"flow time of the certified liquid in master {n_last}"
    inputs.append(_renamed(certified.flow_time, "t_X", where))
    terms.surface("_X", certified.surface, "the certified liquid")
    known = "_w" if n_last == 1 else str(n_last)
    s = terms.surface_factor(n_last, known, "_X", "certified liquid")
    ke = terms.kinetic_term(n_last, tX)
    expr = c_last * tX if s == 0 else c_last * (1 + s) * tX
    if ke != 0:
        expr = expr - ke
        terms.check_kinetic(f"certified liquid, in master {n_last}", ke, expr)
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
