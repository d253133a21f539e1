"""Flow-regime checks: each warning fires just beyond its threshold and not at it.

Threshold sources (see viscometry/methods/flow_checks.py and /work/shared/REFERENCES.md):
laminar Re 2000 and glass range 1-100 — common practice, no source; minimum flow time 200 s —
ISO 3104 / ASTM D445 (published); gravity ratio 0.1 % — ISO 3104, 7.2 (published); step-up
factor 3 and two references within 0.1 % — ASTM D2162 (published); the other limits are our
own defaults (no source) and are tested as such.
"""

from __future__ import annotations

import math
import warnings

import pytest

from viscometry.errors import InputError, ValidityWarning
from viscometry.methods import flow_checks as fc


def test_capillary_reynolds_number_matches_definition() -> None:
    # independent recomputation: Re = rho * vbar * d / eta with vbar = V / (pi r^2 t)
    rho, vol, t, r, eta = 860.0, 5e-6, 300.0, 3e-4, 0.04
    vbar = vol / (math.pi * r**2 * t)
    assert fc.capillary_reynolds_number(rho, vol, t, r, eta) == pytest.approx(
        rho * vbar * 2 * r / eta, rel=1e-14
    )


def test_entrance_length_and_knudsen_definitions() -> None:
    # exact arithmetic of the definitions L_e = 0.06 Re d and Kn = lambda / d
    assert fc.entrance_length(100.0, 1e-3) == pytest.approx(0.06 * 100 * 2e-3, rel=1e-15)
    assert fc.knudsen_number(2e-7, 1e-5) == pytest.approx(0.01, rel=1e-15)


def test_mean_free_path_of_air_is_about_65_nm() -> None:
    # air at 20 °C, 1 atm: λ ≈ 65-68 nm (from memory; kinetic-theory estimate good to ~10 %)
    lam = fc.mean_free_path(1.81e-5, 101325.0, 293.15, 0.02896)
    assert 60e-9 < lam < 72e-9


@pytest.mark.parametrize(
    ("value", "fires"),
    [(2000.0, False), (2000.0 * (1 + 1e-9), True), (1500.0, False)],
)
def test_reynolds_laminar_limit(value: float, fires: bool) -> None:
    # Re ≈ 2000: common practice, no source
    out = fc.check_reynolds(value)
    assert bool(out) is fires
    if fires:
        assert "2e+03" in out[0] and "laminar limit 2000" in out[0]


def test_reynolds_glass_range() -> None:
    # glass viscometers run at Re ≈ 1-100: common practice, no source
    assert fc.check_reynolds(100.0, usual_maximum=100.0) == []
    out = fc.check_reynolds(100.5, usual_maximum=100.0)
    assert len(out) == 1 and "100" in out[0] and "usual range" in out[0]
    assert fc.check_reynolds(100.5) == []  # no usual range given: only the laminar limit


def test_entrance_length_threshold() -> None:
    # our default: L_e / L at most 10 %; L_e = 0.06 * Re * 2r
    r, re = 1e-4, 100.0
    le = fc.entrance_length(re, r)  # 1.2 mm
    assert fc.check_entrance_length(re, r, le / 0.1) == []
    out = fc.check_entrance_length(re, r, le / 0.1 * (1 - 1e-9))
    assert len(out) == 1 and "entrance length 1.2 mm" in out[0] and "limit 10 %" in out[0]


def test_kinetic_energy_threshold() -> None:
    # our default limit 1 % of the result
    assert fc.check_kinetic_energy(0.01, 1.0) == []
    out = fc.check_kinetic_energy(0.0101, 1.0)
    assert len(out) == 1 and "1.01 %" in out[0]
    assert fc.check_kinetic_energy(-0.02, 1.0)  # sign does not matter
    assert "zero" in fc.check_kinetic_energy(0.1, 0.0)[0]


def test_flow_time_minimum_iso_3104() -> None:
    # ISO 3104 / ASTM D445: 200 s minimum for manual timing (published, REFERENCES.md)
    assert fc.MINIMUM_FLOW_TIME_MANUAL == 200.0
    assert fc.check_flow_time(200.0) == []
    out = fc.check_flow_time(199.99)
    assert out == [
        "flow time 200 s is below the minimum 200 s (ISO 3104 / ASTM D445, manual timing)"
    ] or (len(out) == 1 and "199.99 s" in out[0])
    assert fc.check_flow_time(150.0, minimum=100.0) == []


def test_length_to_radius_threshold() -> None:
    # our default minimum L/r = 100
    assert fc.check_length_to_radius(0.1, 0.001) == []
    out = fc.check_length_to_radius(0.0999, 0.001)
    assert len(out) == 1 and "L/r = 99.9" in out[0]


def test_gravity_ratio_iso_3104_clause_7_2() -> None:
    # ISO 3104, 7.2: apply C2 = (g2/g1) C1 when g differs by more than 0.1 % (published)
    g1 = 9.80665
    assert fc.GRAVITY_RATIO_TOLERANCE == 1e-3
    assert fc.check_gravity_ratio(g1, g1 * 1.001) == []
    assert fc.check_gravity_ratio(g1, g1 * 0.999) == []
    up = fc.check_gravity_ratio(g1, g1 * 1.0011)
    down = fc.check_gravity_ratio(g1, g1 * 0.9989)
    assert len(up) == 1 and "+0.110 %" in up[0] and "ISO 3104, 7.2" in up[0]
    assert len(down) == 1 and "-0.110 %" in down[0]
    assert fc.check_gravity_ratio(g1, g1 * 1.0011, applied=True) == []


def test_step_ratio_astm_d2162() -> None:
    # ASTM D2162: successive constants within a factor 3 (published)
    assert fc.check_step_ratio(0.01, 0.03) == []
    assert fc.check_step_ratio(0.03, 0.01) == []
    out = fc.check_step_ratio(0.01, 0.0301)
    assert len(out) == 1 and "3.01" in out[0] and "ASTM D2162" in out[0]


def test_two_reference_constants_astm_d2162() -> None:
    # ASTM D2162: constants from two references averaged only within 0.1 % (published)
    assert fc.check_two_reference_constants(1.0, 1.0009) == []
    out = fc.check_two_reference_constants(1.0, 1.0011)
    assert len(out) == 1 and "0.11 %" in out[0] and "ASTM D2162" in out[0]


def test_particle_reynolds_and_wall_ratio() -> None:
    # our defaults: Re_p 0.1 (common practice, no source), d/D 0.3 (no source)
    assert fc.check_particle_reynolds(0.1) == []
    out = fc.check_particle_reynolds(0.2)
    assert len(out) == 1 and "0.2" in out[0] and "3.8 %" in out[0]  # Oseen 3*0.2/16 = 3.75 %
    assert fc.check_wall_ratio(0.3) == []
    assert len(fc.check_wall_ratio(0.31)) == 1


def test_knudsen_regimes() -> None:
    # continuum below Kn 0.01, slip to 0.1, transition above (common practice, no source)
    assert fc.check_knudsen(0.01, slip_corrected=False) == []
    assert "gas_capillary_slip" in fc.check_knudsen(0.0101, slip_corrected=False)[0]
    assert fc.check_knudsen(0.1, slip_corrected=True) == []
    assert "transition" in fc.check_knudsen(0.101, slip_corrected=True)[0]


def test_bad_numbers_raise_input_error_naming_field() -> None:
    with pytest.raises(InputError, match="capillary_radius must be positive and finite, got -0.3"):
        fc.capillary_reynolds_number(1000.0, 1e-6, 100.0, -0.3, 1e-3)


def test_emit_issues_validity_warnings() -> None:
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        fc.emit(fc.check_flow_time(100.0))
    assert len(caught) == 1 and issubclass(caught[0].category, ValidityWarning)
