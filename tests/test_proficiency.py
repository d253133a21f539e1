"""Tests for viscometry.proficiency (E_n, z, z′, zeta scores).

Sources:
- Formulas and thresholds: ISO 13528:2015, 9.4-9.7 / ISO/IEC 17043:2010, B.4 (clause numbers
  from memory); E_n and z formulas with their thresholds are tagged [published] in
  REFERENCES.md ("Proficiency testing and decisions").
- Expected scores are exact analytic cases chosen so that every intermediate is exactly
  representable in binary floating point (3-4-5 triangles, halves and quarters), so threshold
  tests compare exact numbers; the comparisons are inclusive at the satisfactory bound.
"""

from __future__ import annotations

import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from viscometry.errors import InputError
from viscometry.proficiency import (
    ACTION_LIMIT,
    EN_LIMIT,
    WARNING_LIMIT,
    Score,
    en_score,
    z_prime_score,
    z_score,
    zeta_score,
)
from viscometry.text import score_statement

# --------------------------------------------------------------------------- formulas


def test_en_formula_exact():
    # E_n = (x - X)/sqrt(U_lab^2 + U_ref^2) (REFERENCES.md, [published]); 3-4-5: sqrt(25) = 5.
    s = en_score(12.5, 3.0, 10.0, 4.0)
    assert s.kind == "E_n"
    assert s.value == 0.5
    assert s.classification == "satisfactory"
    # Quarters: sqrt(0.75^2 + 1^2) = 1.25 exactly.
    assert en_score(10.0, 0.75, 11.25, 1.0).value == -1.0


def test_z_formula_exact():
    # z = (x - x_pt)/sigma_pt (REFERENCES.md, [published]).
    assert z_score(13.0, 10.0, 2.0).value == 1.5
    assert z_score(7.0, 10.0, 2.0).value == -1.5


def test_z_prime_formula_exact():
    # z' = (x - x_pt)/sqrt(sigma_pt^2 + u(x_pt)^2) (ISO 13528:2015, 9.5 -- from memory).
    s = z_prime_score(20.0, 10.0, 3.0, 4.0)
    assert s.kind == "z'"
    assert s.value == 2.0
    # z' is smaller in magnitude than z for the same sigma_pt.
    assert abs(s.value) < abs(z_score(20.0, 10.0, 3.0).value)


def test_zeta_formula_exact():
    # zeta = (x - x_pt)/sqrt(u_lab^2 + u(x_pt)^2) (ISO 13528:2015, 9.6 -- from memory).
    s = zeta_score(7.0, 0.75, 10.0, 1.0)
    assert s.kind == "zeta"
    assert s.value == -2.4
    assert s.classification == "questionable"


def test_scores_match_a_plain_recomputation():
    # Independent recomputation with explicit squares and sqrt (no hypot), non-exact inputs.
    x, x_pt, u_lab, u_pt, sigma = 1.0061, 1.0034, 0.0011, 0.0007, 0.0015
    assert en_score(x, 2 * u_lab, x_pt, 2 * u_pt).value == pytest.approx(
        (x - x_pt) / math.sqrt((2 * u_lab) ** 2 + (2 * u_pt) ** 2), rel=1e-13
    )
    assert z_prime_score(x, x_pt, sigma, u_pt).value == pytest.approx(
        (x - x_pt) / math.sqrt(sigma**2 + u_pt**2), rel=1e-13
    )
    assert zeta_score(x, u_lab, x_pt, u_pt).value == pytest.approx(
        (x - x_pt) / math.sqrt(u_lab**2 + u_pt**2), rel=1e-13
    )


# --------------------------------------------------------------------------- thresholds


def test_threshold_constants():
    # ISO 13528:2015, 9.4-9.7 / ISO/IEC 17043:2010, B.4 (from memory); REFERENCES.md [published].
    assert (EN_LIMIT, WARNING_LIMIT, ACTION_LIMIT) == (1.0, 2.0, 3.0)


@pytest.mark.parametrize(
    ("lab_value", "expected_value", "expected_class"),
    [
        (15.0, 1.0, "satisfactory"),  # |E_n| = 1 exactly: inclusive bound
        (5.0, -1.0, "satisfactory"),
        (14.99999, None, "satisfactory"),
        (15.0000005, None, "unsatisfactory"),  # E_n = 1.0000001
        (4.9999995, None, "unsatisfactory"),
        (16.0, 1.2, "unsatisfactory"),
    ],
)
def test_en_classification_at_threshold(lab_value, expected_value, expected_class):
    # |E_n| <= 1 satisfactory, else unsatisfactory: ISO 13528:2015, 9.7 / ISO/IEC 17043:2010,
    # B.4 (from memory); REFERENCES.md [published]. U_lab = 3, U_ref = 4 -> denominator 5.
    s = en_score(lab_value, 3.0, 10.0, 4.0)
    if expected_value is not None:
        assert s.value == expected_value
    assert s.classification == expected_class


def test_en_just_above_one_is_unsatisfactory():
    s = en_score(15.0000005, 3.0, 10.0, 4.0)
    assert s.value == pytest.approx(1.0000001, abs=1e-12)
    assert s.value > 1.0
    assert s.classification == "unsatisfactory"


@pytest.mark.parametrize(
    ("lab_value", "expected_value", "expected_class"),
    [
        (14.0, 2.0, "satisfactory"),  # |z| = 2 exactly: inclusive
        (6.0, -2.0, "satisfactory"),
        (14.0000002, None, "questionable"),  # z = 2.0000001
        (15.0, 2.5, "questionable"),
        (5.0, -2.5, "questionable"),
        (15.9999998, None, "questionable"),  # z = 2.9999999
        (16.0, 3.0, "unsatisfactory"),  # |z| = 3 exactly: action signal
        (4.0, -3.0, "unsatisfactory"),
        (30.0, 10.0, "unsatisfactory"),
        (10.0, 0.0, "satisfactory"),
    ],
)
def test_z_classification_at_thresholds(lab_value, expected_value, expected_class):
    # |z| <= 2 satisfactory, 2 < |z| < 3 questionable, |z| >= 3 unsatisfactory:
    # REFERENCES.md [published]; ISO 13528:2015, 9.4 / ISO/IEC 17043:2010, B.4 (from memory).
    s = z_score(lab_value, 10.0, 2.0)
    if expected_value is not None:
        assert s.value == expected_value
    assert s.classification == expected_class


@pytest.mark.parametrize(
    ("lab_value", "expected_value", "expected_class"),
    [
        (20.0, 2.0, "satisfactory"),
        (22.5, 2.5, "questionable"),
        (25.0, 3.0, "unsatisfactory"),
    ],
)
def test_z_prime_and_zeta_share_the_z_thresholds(lab_value, expected_value, expected_class):
    # Same 2 / 3 classification for z' and zeta: ISO 13528:2015, 9.5-9.6 (from memory).
    # Denominators sqrt(3^2 + 4^2) = 5 exactly.
    zp = z_prime_score(lab_value, 10.0, 3.0, 4.0)
    ze = zeta_score(lab_value, 3.0, 10.0, 4.0)
    assert zp.value == ze.value == expected_value
    assert zp.classification == ze.classification == expected_class


# --------------------------------------------------------------------------- statements


def test_statements():
    # Wording moved to viscometry.text.score_statement, unchanged (ISO 13528 classes above).
    assert (
        score_statement(en_score(15.0, 3.0, 10.0, 4.0))
        == "E_n = 1.00: satisfactory, since |E_n| <= 1."
    )
    assert (
        score_statement(en_score(16.0, 3.0, 10.0, 4.0))
        == "E_n = 1.20: unsatisfactory, since |E_n| > 1."
    )
    assert (
        score_statement(z_score(16.0, 10.0, 2.0))
        == "z = 3.00: unsatisfactory (action signal), since |z| >= 3."
    )
    assert (
        score_statement(z_prime_score(22.5, 10.0, 3.0, 4.0))
        == "z′ = 2.50: questionable (warning signal), since 2 < |z′| < 3."
    )
    assert score_statement(z_score(10.0, 10.0, 2.0)) == "z = 0.00: satisfactory, since |z| <= 2."
    assert score_statement(z_score(9.999, 10.0, 2.0)).startswith("z = 0.00:")  # no "-0.00"


def test_statement_says_which_side_when_two_decimals_hide_it():
    s = en_score(15.0000005, 3.0, 10.0, 4.0)
    assert score_statement(s) == "E_n = 1.00 (|E_n| just above 1): unsatisfactory, since |E_n| > 1."
    s = z_score(15.9999998, 10.0, 2.0)
    assert score_statement(s) == (
        "z = 3.00 (|z| just below 3): questionable (warning signal), since 2 < |z| < 3."
    )


def test_score_has_no_text_of_its_own():
    # One budget, one path: a Score holds numbers; the words come from viscometry.text.
    assert not hasattr(z_score(12.0, 10.0, 2.0), "statement")


def test_score_is_frozen():
    s = z_score(12.0, 10.0, 2.0)
    assert isinstance(s, Score)
    with pytest.raises(AttributeError):
        s.value = 0.0  # type: ignore[misc]


@settings(max_examples=200, deadline=None, derandomize=True)
@given(
    d=st.floats(-1e3, 1e3),
    a=st.floats(1e-3, 1e3),
    b=st.floats(1e-3, 1e3),
)
def test_sign_symmetry_and_class_consistency(d, a, b):
    # Swapping the sign of the deviation flips the score and keeps the class.
    for f in (
        lambda x: zeta_score(x, a, 0.0, b),
        lambda x: z_prime_score(x, 0.0, a, b),
        lambda x: en_score(x, a, 0.0, b),
    ):
        s, t = f(d), f(-d)
        assert s.value == -t.value
        assert s.classification == t.classification
        assert s.classification in ("satisfactory", "questionable", "unsatisfactory")


# --------------------------------------------------------------------------- bad inputs


@pytest.mark.parametrize(
    ("call", "field", "shown"),
    [
        (lambda: en_score(1.0, 0.0, 1.0, 0.1), "lab_expanded_uncertainty", "0.0"),
        (lambda: en_score(1.0, -0.1, 1.0, 0.1), "lab_expanded_uncertainty", "-0.1"),
        (lambda: en_score(1.0, 0.1, 1.0, 0.0), "reference_expanded_uncertainty", "0.0"),
        (lambda: en_score(1.0, 0.1, 1.0, math.inf), "reference_expanded_uncertainty", "inf"),
        (lambda: en_score(math.nan, 0.1, 1.0, 0.1), "lab_value", "nan"),
        (lambda: en_score(1.0, 0.1, math.inf, 0.1), "reference_value", "inf"),
        (lambda: z_score(1.0, 1.0, 0.0), "sd_for_pt", "0.0"),
        (lambda: z_score(1.0, 1.0, -2.0), "sd_for_pt", "-2.0"),
        (lambda: z_score(1.0, 1.0, math.nan), "sd_for_pt", "nan"),
        (lambda: z_score(-math.inf, 1.0, 1.0), "lab_value", "-inf"),
        (lambda: z_score(1.0, math.nan, 1.0), "assigned_value", "nan"),
        (lambda: z_score("1.0x", 1.0, 1.0), "lab_value", "'1.0x'"),
        (lambda: z_score(True, 1.0, 1.0), "lab_value", "True"),
        (lambda: z_prime_score(1.0, 1.0, 0.0, 0.1), "sd_for_pt", "0.0"),
        (lambda: z_prime_score(1.0, 1.0, 0.1, 0.0), "assigned_value_uncertainty", "0.0"),
        (lambda: z_prime_score(1.0, 1.0, 0.1, -0.1), "assigned_value_uncertainty", "-0.1"),
        (lambda: zeta_score(1.0, 0.0, 1.0, 0.1), "lab_standard_uncertainty", "0.0"),
        (lambda: zeta_score(1.0, math.inf, 1.0, 0.1), "lab_standard_uncertainty", "inf"),
        (lambda: zeta_score(1.0, 0.1, 1.0, -1e-9), "assigned_value_uncertainty", "-1e-09"),
        (lambda: zeta_score(1.0, 0.1, math.nan, 0.1), "assigned_value", "nan"),
    ],
)
def test_bad_inputs_raise_input_error_naming_field_and_value(call, field, shown):
    with pytest.raises(InputError) as err:
        call()
    assert field in str(err.value)
    assert shown in str(err.value)
    assert isinstance(err.value, ValueError)


def test_overflowing_score_raises():
    with pytest.raises(InputError, match="not finite"):
        z_score(1e308, -1e308, 1.0)
