"""The GUM engine against published worked examples and exact tables."""

import math

import pytest

from viscometry.gum import Budget, InputQuantity, coverage_factor_for, truncate_dof


# JCGM 100:2008, Table G.2 (recomputed as exact t quantiles; ../shared/REFERENCES.md)
@pytest.mark.parametrize(
    ("dof", "p", "expected"),
    [
        (1, 0.6827, 1.84),
        (2, 0.95, 4.30),
        (3, 0.9545, 3.31),
        (5, 0.99, 4.03),
        (10, 0.95, 2.23),
        (20, 0.9545, 2.13),
        (50, 0.99, 2.68),
        (math.inf, 0.95, 1.960),
        (math.inf, 0.9545, 2.000),
        (math.inf, 0.99, 2.576),
    ],
)
def test_table_g2_t_factors(dof, p, expected):
    k = coverage_factor_for(p, dof)
    digits = 3 if math.isinf(dof) else 2
    assert round(k, digits) == pytest.approx(expected, abs=1e-12)


def end_gauge_budget(**settings):
    """JCGM 100:2008, H.1 end-gauge calibration (from memory; recomputed per REFERENCES.md)."""
    inputs = [
        InputQuantity.normal("l_s", 50.000623, 25e-6, "mm", dof=18),
        InputQuantity.normal("d", 215e-6, 9.7e-6, "mm", dof=25.6),
        InputQuantity.rectangular("alpha_s", 11.5e-6, 2e-6, "1/K"),  # u = 1.2e-6 /K (H.1.3.3)
        InputQuantity.normal("theta", -0.1, 0.41, "K"),
        InputQuantity.normal("delta_alpha", 0.0, 0.58e-6, "1/K", dof=50),
        InputQuantity.normal("delta_theta", 0.0, 0.029, "K", dof=2),
    ]
    return Budget.from_formula(
        "l",
        "l_s + d - l_s*(delta_alpha*theta + alpha_s*delta_theta)",
        inputs,
        "mm",
        coverage_probability=0.99,
        **settings,
    )


def test_h1_end_gauge_first_order():
    # JCGM 100:2008, H.1.4-H.1.6: u_c = 32 nm (31.7 unrounded), nu_eff = 16 (16.7),
    # t99(16) = 2.92, U99 = 93 nm, l = 50.000 838 mm (from memory; recomputed).
    r = end_gauge_budget().evaluate()
    assert r.value == pytest.approx(50.000838, abs=5e-7)
    assert r.standard_uncertainty * 1e6 == pytest.approx(31.7, abs=0.05)
    assert r.effective_dof == pytest.approx(16.7, abs=0.05)
    assert r.effective_dof_used == 16
    assert round(r.coverage_factor, 2) == 2.92
    assert round(r.expanded_uncertainty * 1e6) == 93
    rounded = r.rounded()
    assert (rounded.value, rounded.uncertainty) == ("50.000838", "0.000093")
    # sensitivities at the estimates (H.1.3): c(delta_alpha) = -l_s*theta, c(delta_theta) = -l_s*alpha_s
    assert r.contribution("delta_alpha").sensitivity == pytest.approx(-50.000623 * -0.1)
    assert r.contribution("delta_theta").sensitivity == pytest.approx(-50.000623 * 11.5e-6)
    assert r.contribution("alpha_s").sensitivity == 0.0
    assert r.contribution("theta").sensitivity == 0.0


def test_h1_end_gauge_higher_order():
    # JCGM 100:2008, H.1.7: with the second-order terms u_c = 34 nm (33.8 unrounded)
    # (from memory; recomputed per REFERENCES.md).
    r = end_gauge_budget().evaluate(higher_order=True)
    assert r.propagation == "higher-order"
    assert end_gauge_budget().evaluate().propagation == "first-order"
    assert r.standard_uncertainty * 1e6 == pytest.approx(33.9, abs=0.15)
    assert round(r.standard_uncertainty * 1e6) == 34
    assert any("higher-order terms change u_c" in w for w in r.warnings)


def test_truncation_g64():
    # JCGM 100:2008, G.6.4: nu_eff is truncated to the next lower integer.
    assert truncate_dof(16.7) == 16
    assert truncate_dof(2.0) == 2
    assert math.isinf(truncate_dof(math.inf))
