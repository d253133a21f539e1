"""Rounding of results (JCGM 100:2008, 7.2.6) and the result statement."""

import math

import pytest

from viscometry.gum import Budget, InputQuantity, round_result
from viscometry.planning import working_range
from viscometry.text import budget_html, budget_text, statement


@pytest.mark.parametrize(
    ("value", "U", "rounding", "expected"),
    [
        # JCGM 100:2008, 7.2.6: U to at most two significant digits, value to the same place
        (50.000838, 0.0000926, "nearest", ("50.000838", "0.000093")),
        (41.27449, 0.1512, "nearest", ("41.27", "0.15")),
        (1234.5678, 23.4, "nearest", ("1235", "23")),
        (98765.0, 1234.0, "nearest", ("98800", "1200")),
        (10.0, 0.0996, "nearest", ("10.00", "0.10")),
        # EA-4/02 M:2022, 5.4: round up when ordinary rounding lowers U by more than 5 %
        (41.27449, 0.1049, "ea-4/02", ("41.27", "0.10")),  # 0.10 is 4.7 % lower: kept
        (41.27449, 0.01149, "ea-4/02", ("41.274", "0.011")),  # 0.011 is 4.3 % lower: kept
        (41.27449, 0.1151, "up", ("41.27", "0.12")),
    ],
)
def test_round_result(value, U, rounding, expected):
    r = round_result(value, U, rounding=rounding)
    assert (r.value, r.uncertainty) == expected


def test_ea402_rounds_up_beyond_five_percent():
    # EA-4/02 M:2022, 5.4 (from memory): with one digit, 0.0106 -> 0.01 would lose 5.7 %,
    # so U is rounded up to 0.02; 0.0104 -> 0.01 loses 3.8 % and stands
    assert round_result(1.0, 0.0106, digits=1, rounding="ea-4/02").uncertainty == "0.02"
    assert round_result(1.0, 0.0104, digits=1, rounding="ea-4/02").uncertainty == "0.01"


def test_statement_and_relative_uncertainty():
    qs = [
        InputQuantity.normal("a", 41.2, 0.05, "mm^2/s"),
        InputQuantity.normal("b", 0.07449, 0.05, "mm^2/s"),
    ]
    r = Budget.from_formula("nu", "a + b", qs, "mm^2/s", coverage_factor=2.0).evaluate()
    # U = 2 * sqrt(2) * 0.05 = 0.1414 -> 0.14; value to two decimals (JCGM 100:2008, 7.2.6).
    # The statement now writes the measurand's symbol: "nu" -> "ν" (viscometry.text.symbol).
    assert statement(r) == "ν = (41.27 ± 0.14) mm²/s, k = 2.00, p ≈ 95.45 % (relative U = 0.34 %)"
    assert r.relative_expanded_uncertainty == pytest.approx(2 * math.sqrt(0.005) / 41.27449)


def test_zero_estimate_gives_undefined_relative_quantities():
    qs = [InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 1.0, 0.1)]
    r = Budget.from_formula("d", "a - b", qs).evaluate()
    assert r.value == 0.0
    assert math.isnan(r.relative_expanded_uncertainty)
    assert all(math.isnan(c.relative_sensitivity) for c in r.contributions)
    assert any("estimate is zero" in w for w in r.warnings)


def test_result_is_immutable_and_what_if_is_new():
    qs = [InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 2.0, 0.2)]
    b = Budget.from_formula("y", "a * b", qs)
    r = b.evaluate()
    with pytest.raises(AttributeError):
        r.value = 3.0  # type: ignore[misc]
    b2 = b.with_uncertainty("a", 0.01)
    assert b.input("a").standard_uncertainty == 0.1
    assert b2.evaluate().standard_uncertainty < r.standard_uncertainty


def test_to_ufloat_and_table():
    qs = [InputQuantity.normal("a", 1.0, 0.1, "m"), InputQuantity.normal("b", 2.0, 0.2, "s")]
    r = Budget.from_formula("v", "a / b", qs, "m/s").evaluate()
    u = r.to_ufloat()
    assert u.nominal_value == pytest.approx(0.5)  # exact analytic: 1 m / 2 s
    assert u.std_dev == pytest.approx(r.standard_uncertainty)
    table = r.table()
    assert list(table["quantity"]) == ["a", "b"]
    # snake_case numeric columns; the text renderings live in viscometry.text
    assert list(table.columns) == [
        "quantity",
        "estimate",
        "unit",
        "standard_uncertainty",
        "distribution",
        "type",
        "dof",
        "sensitivity",
        "sensitivity_unit",
        "relative_sensitivity",
        "contribution",
        "variance_share",
        "correlation",
    ]
    # exact analytic: v = a/b, c_a = 1/b = 0.5 s^-1, c_b = -a/b^2 = -0.25 m/s^2
    assert list(table["sensitivity"]) == pytest.approx([0.5, -0.25], rel=1e-12)
    assert list(table["contribution"]) == pytest.approx([0.05, -0.05], rel=1e-12)
    assert list(table["variance_share"]) == pytest.approx([0.5, 0.5], rel=1e-12)
    assert table["correlation"].isna().all()
    assert "<table>" in budget_html(r)
    assert "a" in budget_text(r) and "b" in budget_text(r)
    for removed in ("statement", "to_text", "_repr_html_", "method"):
        assert not hasattr(r, removed)


def test_working_range_equals_point_evaluations():
    # Budget.sweep became viscometry.planning.working_range; each point must still equal a
    # full evaluation of the budget with that estimate.
    qs = [InputQuantity.normal("C", 0.1, 1e-4, "mm^2/s^2"), InputQuantity.from_readings("t", [400.0, 400.2, 399.9], "s"),
          InputQuantity.rectangular("E", 150.0, 20.0, "mm^2*s")]  # fmt: skip
    b = Budget.from_formula("nu", "C * t - E / t**2", qs, "mm^2/s")
    assert not hasattr(b, "sweep")
    wr = working_range(b, "t", 250.0, 900.0, points=14)  # 250, 300, ..., 900 s
    assert list(wr.values) == pytest.approx([250.0 + 50.0 * i for i in range(14)], abs=1e-12)
    for i, t in enumerate(wr.values):
        from dataclasses import replace

        r = b.with_input(replace(qs[1], value=float(t), readings=None)).evaluate()
        assert wr.value[i] == pytest.approx(r.value, rel=1e-12)
        assert wr.standard_uncertainty[i] == pytest.approx(r.standard_uncertainty, rel=1e-12)
        assert wr.effective_dof[i] == pytest.approx(r.effective_dof, rel=1e-12)
        assert wr.coverage_factor[i] == pytest.approx(r.coverage_factor, rel=1e-12)
        assert wr.expanded_uncertainty[i] == pytest.approx(r.expanded_uncertainty, rel=1e-12)


def test_units_checked_and_converted():
    from viscometry.errors import UnitError

    qs = [InputQuantity.normal("a", 1.0, 0.1, "mm"), InputQuantity.normal("b", 2.0, 0.2, "s")]
    with pytest.raises(UnitError, match="do not match the measurand unit 'Pa'"):
        Budget.from_formula("v", "a / b", qs, "Pa")
    with pytest.raises(UnitError, match="dimensionally inconsistent"):
        Budget.from_formula("v", "a + b", qs, "m")
    with pytest.raises(UnitError, match="unknown unit 'furlongs_per_blorp'"):
        Budget.from_formula("v", "a / b", qs, "furlongs_per_blorp")
    r = Budget.from_formula("v", "a / b", qs, "m/s").evaluate()
    assert r.value == pytest.approx(0.0005)  # exact analytic: 1 mm / 2 s = 0.0005 m/s


def test_celsius_offset_and_difference():
    # common practice: a temperature in degC is an offset value, its uncertainty a difference
    qs = [InputQuantity.normal("T", 20.0, 0.01, "degC")]
    r = Budget.from_formula("Tk", "T", qs, "K").evaluate()
    assert r.value == pytest.approx(293.15)
    assert r.standard_uncertainty == pytest.approx(0.01)


def test_linearised_budget_matches_full_evaluation():
    # exact: only uncertainties change, so the linearised budget must equal a full evaluation
    qs = [InputQuantity.normal("C", 0.1, 1e-4, "mm^2/s^2"), InputQuantity.from_readings("t", [400.0, 400.2, 399.9], "s"),
          InputQuantity.rectangular("E", 150.0, 20.0, "mm^2*s")]  # fmt: skip
    b = Budget.from_formula("nu", "C * t - E / t**2", qs, "mm^2/s")
    lin = b.linearise()
    for name, u in [("C", 3e-4), ("t", 0.5), ("E", 0.0)]:
        full = b.with_uncertainty(name, u).evaluate()
        fast = lin.with_uncertainty(name, u)
        assert fast.standard_uncertainty == pytest.approx(full.standard_uncertainty, rel=1e-12)
        assert fast.effective_dof == pytest.approx(full.effective_dof, rel=1e-12)
        assert fast.expanded_uncertainty == pytest.approx(full.expanded_uncertainty, rel=1e-12)
    assert lin.uncertainties[0] == 1e-4  # the original is untouched


def test_fixed_k_with_few_degrees_of_freedom_states_what_it_covers():
    # JCGM 100:2008, G.3: +-k covers 2 F_t(k; nu) - 1; k = 2 with nu = 2 covers 81.65 %
    # (exact t distribution, recomputed with scipy)
    from scipy import stats

    qs = [
        InputQuantity.from_readings("a", [1.0, 1.2, 1.1], "m"),
        InputQuantity.normal("b", 1.0, 0.001, "m"),
    ]
    r = Budget.from_formula("y", "a + b", qs, "m", coverage_factor=2).evaluate()
    assert r.effective_dof_used == 2
    assert r.coverage_probability == pytest.approx(2 * stats.t.cdf(2.0, 2) - 1)
    assert "p ≈ 81.65 %" in statement(r)
    assert any("gives a coverage probability of about 81.6 %" in w for w in r.warnings)
    # with infinite dof, k = 2 covers 95.45 % (JCGM 100:2008, G.1.3): nothing to say
    exact = [InputQuantity.normal("a", 1.0, 0.1, "m"), InputQuantity.normal("b", 1.0, 0.1, "m")]
    r2 = Budget.from_formula("y", "a + b", exact, "m", coverage_factor=2).evaluate()
    assert r2.coverage_probability == 0.9545 and not r2.warnings


def test_relative_uncertainty_of_a_celsius_measurand_is_undefined():
    qs = [InputQuantity.normal("T", 20.0, 0.1, "degC"), InputQuantity.normal("dT", 0.5, 0.05, "K")]
    r = Budget.from_formula("T2", "T + dT", qs, "degC").evaluate()
    assert r.value == pytest.approx(20.5)
    assert math.isnan(r.relative_expanded_uncertainty)
    assert "relative U" not in statement(r)


def test_rounding_is_a_setting_of_the_budget():
    # evaluate() has no rounding argument any more: the rule is the budget's and the result
    # reports it. U = 0.1151 rounds to 0.12 "up" and to 0.12 "nearest" too, so use 0.1049:
    # nearest 0.10, up 0.11 (JCGM 100:2008, 7.2.6; EA-4/02 M:2022, 5.4 keeps 0.10: 4.7 % lower).
    qs = [InputQuantity.normal("a", 41.27449, 0.1049, "mm^2/s")]
    b = Budget.from_formula("nu", "a", qs, "mm^2/s", coverage_factor=1.0)
    with pytest.raises(TypeError, match="rounding"):
        b.evaluate(rounding="up")  # type: ignore[call-arg]
    assert b.rounding == "nearest" and b.evaluate().rounding == "nearest"
    assert (b.evaluate().rounded().value, b.evaluate().rounded().uncertainty) == ("41.27", "0.10")
    up = b.with_settings(rounding="up").evaluate()
    assert up.rounding == "up"
    assert (up.rounded().value, up.rounded().uncertainty) == ("41.27", "0.11")
    assert "± 0.11)" in statement(up)
    ea = Budget.from_formula("nu", "a", qs, "mm^2/s", coverage_factor=1.0, rounding="ea-4/02")
    assert ea.evaluate().rounded().uncertainty == "0.10"
    # the numbers themselves do not depend on the rounding rule
    assert up.expanded_uncertainty == b.evaluate().expanded_uncertainty
