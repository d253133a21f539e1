"""Built-in models ``dilute_relative_viscosity`` and ``viscosity_number`` (budget files).

Check values are exact analytic (relative sensitivities of a ratio model, the limit E → 0),
the `uncertainties` package as an independent reference, and the thresholds of the checks
(η_rel 1.2–2.0: common practice, no source; kinetic-energy term 1 %: our default, no source).
"""

from __future__ import annotations

import math
from pathlib import Path

import pytest
import uncertainties

from viscometry.errors import ValidityWarning
from viscometry.gum.inputs import InputQuantity as Q
from viscometry.io import load_budget
from viscometry.methods import flow_checks as fc
from viscometry.methods import get_method
from viscometry.polymer import RELATIVE_VISCOSITY_RANGE, relative_viscosity

EXAMPLES = Path(__file__).resolve().parents[1] / "examples" / "methods"
BASE = {"t": 180.0, "t0": 120.0, "C": 1e-8, "E": 0.0, "r_rho": 1.0, "m": 0.25e-3, "w": 1.0,
        "V": 50e-6}  # fmt: skip


def test_relative_sensitivities_at_zero_corrections():
    # exact analytic: η_rel = t/t0 at E = 0, r_rho = 1 → t: +1, t0: −1, r_rho: +1, C and E: 0
    rel = get_method("dilute_relative_viscosity")
    expected = {"t": 1.0, "t0": -1.0, "r_rho": 1.0, "C": 0.0}
    for name, value in expected.items():
        assert rel.relative_sensitivity(name, BASE) == pytest.approx(value, abs=1e-12), name
    # VN = (t/t0 − 1)V/(w m): m, w: −1, V: +1, t: η_rel/(η_rel − 1) = 3, t0: −3
    vn = get_method("viscosity_number")
    expected = {"t": 3.0, "t0": -3.0, "m": -1.0, "w": -1.0, "V": 1.0, "r_rho": 3.0, "C": 0.0}
    for name, value in expected.items():
        assert vn.relative_sensitivity(name, BASE) == pytest.approx(value, rel=1e-12, abs=1e-12), (
            name
        )


def test_values_and_limits():
    # exact analytic: E = 0 gives t/t0; VN = (η_rel − 1)/c with c = 5 kg/m³
    rel = get_method("dilute_relative_viscosity")
    assert rel.value(BASE) == pytest.approx(1.5, rel=1e-15)
    assert get_method("viscosity_number").value(BASE) == pytest.approx(0.1, rel=1e-14)
    with_e = {**BASE, "E": 2e-6}
    expected = (1e-8 * 180 - 2e-6 / 180**2) / (1e-8 * 120 - 2e-6 / 120**2)
    assert rel.value(with_e) == pytest.approx(expected, rel=1e-13)
    assert rel.value(with_e) == pytest.approx(
        relative_viscosity(180.0, 120.0, viscometer_constant=1e-8, kinetic_energy_constant=2e-6),
        rel=1e-14,
    )


def test_example_budget_against_uncertainties_package():
    # independent reference: the same budget propagated with the `uncertainties` package
    bf = load_budget(EXAMPLES / "viscosity_number.toml")
    result = bf.budget.evaluate()
    x, u, _nu, _c = bf.budget.si_arrays()
    v = {
        n: uncertainties.ufloat(xi, ui, n)
        for n, xi, ui in zip(bf.budget.input_names, x, u, strict=True)
    }
    rel = (
        v["r_rho"]
        * (v["C"] * v["t"] - v["E"] / v["t"] ** 2)
        / (v["C"] * v["t0"] - v["E"] / v["t0"] ** 2)
    )
    vn = (rel - 1) * v["V"] / (v["w"] * v["m"])  # m³/kg
    assert result.value == pytest.approx(vn.nominal_value * 1000, rel=1e-12)  # mL/g
    assert result.standard_uncertainty == pytest.approx(vn.std_dev * 1000, rel=1e-9)


@pytest.mark.parametrize("name", ["dilute_relative_viscosity", "viscosity_number"])
@pytest.mark.parametrize("bound", RELATIVE_VISCOSITY_RANGE)
def test_relative_viscosity_range_both_sides(name, bound):
    # threshold 1.2–2.0: common practice, no source; a value at the limit passes
    method = get_method(name)
    at = {**BASE, "t": bound * BASE["t0"]}
    assert method.check(at) == []
    step = -1e-6 if bound == RELATIVE_VISCOSITY_RANGE[0] else 1e-6
    outside = {**BASE, "t": (bound + step) * BASE["t0"]}
    found = method.check(outside)
    assert len(found) == 1 and "outside 1.2–2.0" in found[0]
    with pytest.warns(ValidityWarning, match="outside 1.2–2.0"):
        fc.emit(found)


def test_kinetic_energy_term_both_sides():
    # threshold: E/t² ≤ 1 % of C t for the shorter flow time (our default, no source)
    method = get_method("dilute_relative_viscosity")
    limit_e = fc.KINETIC_ENERGY_FRACTION_LIMIT * BASE["C"] * BASE["t0"] ** 3
    assert method.check({**BASE, "E": limit_e * (1 - 1e-9)}) == []
    found = method.check({**BASE, "E": limit_e * (1 + 1e-6)})
    assert len(found) == 1 and "kinetic-energy term" in found[0]
    with pytest.warns(ValidityWarning, match="kinetic-energy term"):
        fc.emit(found)


def test_budget_from_method_carries_the_check():
    method = get_method("dilute_relative_viscosity")
    inputs = [
        Q.from_readings("t", [130.0, 130.1, 129.9], "s"),
        Q.from_readings("t0", [120.0, 120.1, 119.9], "s"),
        Q.normal("C", 0.01, 0.0, "mm^2/s^2"),
        Q.normal("E", 0.0, 0.0, "mm^2*s"),
        Q.normal("r_rho", 1.0, 0.0, "1"),
    ]
    result = method.budget(inputs).evaluate()
    assert result.value == pytest.approx(130.0 / 120.0, rel=1e-12)
    assert any("outside 1.2–2.0" in w for w in result.warnings)
    assert math.isfinite(result.standard_uncertainty)
