"""Falling sphere: Haberman-Sayre wall factor, wall-model term, terminal velocity, end effects
and the Oseen limit (issue 15).

Check values and their sources:
* the Haberman-Sayre closed form, typed again here from the paper's formula (W. L. Haberman
  and R. M. Sayre, DTMB Report 1143, 1958; coefficients from memory);
* Bohlin's series to x¹⁰ (B. Bohlin 1960, as quoted by Happel & Brenner 1965, ch. 7; from
  memory), an independent published form;
* the approach to terminal velocity, from a scipy integration of the equation of motion.
"""

from __future__ import annotations

import math

import pytest
import sympy as sp
from scipy.integrate import solve_ivp
from scipy.optimize import brentq

from viscometry.methods import flow_checks as fc
from viscometry.methods import get_method
from viscometry.methods.falling_sphere import (
    bohlin_wall_factor,
    faxen_wall_factor,
    haberman_sayre_wall_factor,
    wall_model_spread,
)

HS = get_method("falling_sphere_haberman_sayre")
STOKES = get_method("falling_sphere_stokes")
BASE = {
    "r": 1e-3,
    "g": 9.811,
    "rho_s": 7800.0,
    "rho_f": 1260.0,
    "s": 0.2,
    "t": 18.8,
    "R": 0.02,
    "delta_w": 0.0,
}


def closed_form(x: float) -> float:
    """Haberman & Sayre (1958), typed independently (from memory)."""
    return (1 - 2.1050 * x + 2.0865 * x**3 - 1.7068 * x**5 + 0.72603 * x**6) / (1 - 0.75857 * x**5)


# --------------------------------------------------------------------------- wall factor
@pytest.mark.parametrize("x", [0.01, 0.05, 0.1, 0.2, 0.3, 0.4, 0.5])
def test_wall_factor_matches_the_closed_form_over_its_range(x: float) -> None:
    # Haberman-Sayre closed form (from memory): the function and the model, within 0.05 %
    assert haberman_sayre_wall_factor(x) == pytest.approx(closed_form(x), rel=5e-4)
    values = dict(BASE, R=BASE["r"] / x)
    stokes = STOKES.value(values)
    assert HS.value(values) / stokes == pytest.approx(closed_form(x), rel=5e-4)
    assert HS.value(values) / stokes == pytest.approx(closed_form(x), rel=1e-12)


@pytest.mark.parametrize("x", [0.05, 0.1, 0.2, 0.25, 0.3])
def test_closed_form_agrees_with_bohlins_series(x: float) -> None:
    # Bohlin's series (from memory) and Haberman-Sayre agree within 0.05 % up to d/D = 0.3
    assert bohlin_wall_factor(x) == pytest.approx(haberman_sayre_wall_factor(x), rel=5e-4)
    assert wall_model_spread(x) < 5e-4


def test_three_term_faxen_series_is_off_by_the_issues_amount() -> None:
    # the issue: Faxén's three terms are 0.22 % above the closed form at d/D = 0.3
    assert faxen_wall_factor(0.3) / closed_form(0.3) - 1 == pytest.approx(0.0022, abs=5e-5)
    # ... and good to 0.05 % only up to about d/D = 0.2
    assert faxen_wall_factor(0.2) / closed_form(0.2) - 1 < 5e-4


def test_wall_ratio_limit_and_spread() -> None:
    # 0.5: HABERMAN_WALL_RATIO_LIMIT, our default: the two forms agree within 1 % up to it
    assert wall_model_spread(0.5) < 0.01 < wall_model_spread(0.55)
    assert not any("Haberman" in w for w in HS.check(dict(BASE, R=BASE["r"] / 0.5)))
    found = HS.check(dict(BASE, R=BASE["r"] / 0.501))
    assert any("0.501 exceeds 0.5: the Haberman-Sayre wall factor" in w for w in found)


def test_limits_and_wall_model_term() -> None:
    # exact analytic: no wall (R → ∞) and δ_w = 0 give Stokes' law; K(0) = 1
    S = {n: sp.Symbol(n, real=True) for n in HS.input_names}
    expr = HS.expression.subs(S["delta_w"], 0)
    assert sp.simplify(sp.limit(expr, S["R"], sp.oo) - STOKES.expression) == 0
    assert haberman_sayre_wall_factor(0.0) == 1.0
    # exact analytic: ∂η/∂δ_w = η at δ_w = 0 (the term scales the result)
    d = sp.diff(HS.expression, S["delta_w"]).subs(S["delta_w"], 0)
    assert sp.simplify(d - expr) == 0
    # exact analytic: relative sensitivities of the Stokes part are unchanged
    for name, want in {"g": 1, "t": 1, "s": -1}.items():
        assert HS.relative_sensitivity(name, BASE) == pytest.approx(want, abs=1e-12)
    # K'(0) = −2.105 in the closed form (Faxén's −2.10444 to four digits; from memory)
    h = 1e-7
    slope = (haberman_sayre_wall_factor(h) - haberman_sayre_wall_factor(-h)) / (2 * h)
    assert slope == pytest.approx(-2.105, rel=1e-6)


# --------------------------------------------------------------------------- Reynolds number
def _values_at_reynolds(target: float) -> dict[str, float]:
    """BASE with the fall time chosen so that Re_p (from the model's η) hits ``target``."""

    def miss(t: float) -> float:
        v = dict(BASE, t=t)
        return fc.particle_reynolds_number(v["rho_f"], v["s"] / t, v["r"], HS.value(v)) - target

    return dict(BASE, t=brentq(miss, 1e-3, 100.0, rtol=1e-13))


@pytest.mark.parametrize(
    ("reynolds", "expected"),
    [(0.099, None), (0.101, "Oseen"), (0.99, "Oseen"), (1.01, "RESULT NOT VALID")],
)
def test_reynolds_checks_on_both_sides_of_each_threshold(reynolds, expected) -> None:
    # 0.1: PARTICLE_REYNOLDS_LIMIT, common practice; 1: OSEEN_REYNOLDS_LIMIT, our default
    found = [w for w in HS.check(_values_at_reynolds(reynolds)) if "particle Reynolds" in w]
    if expected is None:
        assert found == []
    else:
        assert len(found) == 1 and expected in found[0]


# --------------------------------------------------------------------------- terminal velocity
def test_terminal_distance_agrees_with_an_integrated_equation_of_motion() -> None:
    # reference: scipy integration of (m + m_a) dv/dt = (ρ_s − ρ_f) V g − 6 π η r v from rest
    # (added mass m_a = ρ_f V / 2); the distance fallen when v reaches (1 − ε) v_t
    r, rho_s, rho_f, eta, grav, eps = 1e-3, 7800.0, 1260.0, 1.2, 9.811, 1e-3
    vol = 4 / 3 * math.pi * r**3
    inertia = (rho_s + 0.5 * rho_f) * vol
    v_t = (rho_s - rho_f) * vol * grav / (6 * math.pi * eta * r)

    def motion(_t: float, y: list[float]) -> list[float]:
        force = (rho_s - rho_f) * vol * grav - 6 * math.pi * eta * r * y[1]
        return [y[1], force / inertia]

    def reached(_t: float, y: list[float]) -> float:
        return y[1] - (1 - eps) * v_t

    reached.terminal = True
    sol = solve_ivp(motion, (0, 1.0), [0.0, 0.0], events=reached, rtol=1e-11, atol=1e-14)
    distance = float(sol.y_events[0][0][0])
    got = fc.terminal_velocity_distance(v_t, r, rho_s, rho_f, eta, eps)
    assert got == pytest.approx(distance, rel=1e-6)


def test_terminal_velocity_check_on_both_sides() -> None:
    # in the Stokes regime the distance is short (about 0.4 mm for a 2 mm steel ball at
    # Re = 0.09), but a mark placed right at the release point is flagged
    v = _values_at_reynolds(0.09)
    eta = HS.value(v)
    need = fc.terminal_velocity_distance(v["s"] / v["t"], v["r"], v["rho_s"], v["rho_f"], eta)
    assert 0.2e-3 < need < 1e-3
    assert HS.check(dict(v, release_distance=need * 1.001)) == []
    (warning,) = HS.check(dict(v, release_distance=need * 0.999))
    assert "terminal velocity" in warning


# --------------------------------------------------------------------------- end effects
def test_end_effect_checks_on_both_sides() -> None:
    # 1 %: END_EFFECT_LIMIT, our default; (9/8) r/h at a rigid bottom (Lorentz 1907, from
    # memory) is 1 % at h = 112.5 mm for r = 1 mm; (3/4) r/h at a free surface (Brenner 1961,
    # from memory) at h = 75 mm
    assert HS.check(dict(BASE, bottom_distance=0.1126, surface_distance=0.0751)) == []
    (bottom,) = HS.check(dict(BASE, bottom_distance=0.1124))
    assert "from the bottom" in bottom
    (surface,) = HS.check(dict(BASE, surface_distance=0.0749))
    assert "from the liquid surface" in surface
    # the context keys work for the other falling-sphere models too
    faxen = get_method("falling_sphere")
    plain = {k: BASE[k] for k in faxen.input_names}
    assert len(faxen.check(dict(plain, bottom_distance=0.05))) == 1


def test_example_loads_without_warnings() -> None:
    from pathlib import Path

    from viscometry.io import load_budget

    path = Path(__file__).resolve().parents[1] / "examples" / "methods"
    bf = load_budget(path / "falling_sphere_haberman_sayre.toml")
    assert bf.budget.estimate_warnings == ()
    names = {c.name for c in bf.budget.checks}
    assert names == {"release_distance", "bottom_distance", "surface_distance"}


def test_budget_carries_the_oseen_refusal_as_a_validity_warning() -> None:
    # the example file with a fall time 40 times shorter: Re_p ≈ 1.4 → beyond Oseen's limit
    import tomllib
    from pathlib import Path

    from viscometry.errors import ValidityWarning
    from viscometry.io import dumps_budget, loads_budget

    path = Path(__file__).resolve().parents[1] / "examples" / "methods"
    text = (path / "falling_sphere_haberman_sayre.toml").read_text(encoding="utf-8")
    doc = tomllib.loads(text)
    assert loads_budget(dumps_budget(doc)).budget.evaluate().warnings == ()
    doc["inputs"]["t"]["readings"] = [0.707, 0.706, 0.708]
    found = loads_budget(dumps_budget(doc)).budget.evaluate().warnings
    assert any(w.startswith("RESULT NOT VALID: particle Reynolds") for w in found)
    with pytest.warns(ValidityWarning) as record:  # one ValidityWarning per text
        fc.emit(found)
    assert [str(w.message) for w in record] == list(found)
    assert any(str(w.message).startswith("RESULT NOT VALID: particle Reynolds") for w in record)
