"""Tests for viscometry.conformity (JCGM 106:2012 conformance probability, ILAC G8 rules).

Sources of expected values:
- p_c = Phi((T_U - y)/u) - Phi((T_L - y)/u): JCGM 106:2012, clause 7 -- from memory
  (REFERENCES.md tags it [from memory]); checked here against an independent recomputation by
  numerical integration of the scipy PDF, not against printed digits.
- Guarded acceptance with w = U, k = 2, normal PDF: p_c at y = T_U - U is Phi(2) ~ 0.977
  (JCGM 106:2012 -- from memory); asserted exactly against scipy's Phi(2) and loosely
  against the recalled 0.977.
"""

from __future__ import annotations

import itertools
import math

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, stats

from viscometry.conformity import (
    DECISION_CAUTION,
    ConformityDecision,
    acceptance_limits,
    conformance_probability,
    decide,
    guard_band,
)
from viscometry.errors import InputError
from viscometry.text import decision_statement


def _quad_pc(y, u, lower, upper, dof=math.inf):
    """Independent recomputation: integrate the PDF of the measurand over [T_L, T_U]."""
    dist = stats.norm(loc=y, scale=u) if math.isinf(dof) else stats.t(dof, loc=y, scale=u)
    lo = -math.inf if lower is None else lower
    hi = math.inf if upper is None else upper
    # Split at y so quad sees the peak whatever the limits are.
    pieces = [(lo, min(hi, y)), (max(lo, y), hi)]
    total = 0.0
    for a, b in pieces:
        if a < b:
            total += integrate.quad(dist.pdf, a, b, epsabs=1e-13, epsrel=1e-11)[0]
    return total


# --------------------------------------------------------------------------- p_c formula

GRID_Y = [9.0, 9.7, 10.0, 10.45, 11.2]
GRID_U = [0.05, 0.3, 1.0]
GRID_LIMITS = [(9.5, 10.5), (8.0, 12.0), (None, 10.5), (9.5, None)]


@pytest.mark.parametrize(("y", "u", "limits"), list(itertools.product(GRID_Y, GRID_U, GRID_LIMITS)))
def test_pc_normal_matches_integrated_pdf(y, u, limits):
    # JCGM 106:2012, clause 7 formula (from memory); expected value recomputed by quadrature.
    lower, upper = limits
    expected = _quad_pc(y, u, lower, upper)
    got = conformance_probability(y, u, lower, upper)
    assert got == pytest.approx(expected, abs=1e-9)
    # ... and by the closed form with scipy's Phi, written out independently here.
    phi_up = 1.0 if upper is None else stats.norm.cdf((upper - y) / u)
    phi_lo = 0.0 if lower is None else stats.norm.cdf((lower - y) / u)
    assert got == pytest.approx(phi_up - phi_lo, abs=1e-12)


@pytest.mark.parametrize(
    ("y", "u", "limits", "dof"),
    list(itertools.product([9.7, 10.0, 10.45], [0.3, 1.0], GRID_LIMITS, [1, 2.5, 4, 30])),
)
def test_pc_student_t_matches_integrated_pdf(y, u, limits, dof):
    # Scaled-and-shifted t PDF, t_nu(y, u) (JCGM 100:2008, G.3); recomputed by quadrature.
    lower, upper = limits
    expected = _quad_pc(y, u, lower, upper, dof)
    assert conformance_probability(y, u, lower, upper, dof=dof) == pytest.approx(expected, abs=1e-8)


def test_pc_small_probabilities_keep_relative_accuracy():
    # Far outside / far inside: p_c and 1 - p_c from tails, recomputed with norm.sf
    # (exact analytic; no source needed).
    y, u = 10.0, 0.1
    # y 1 unit (10 u) below T_L: p_c = sf(10) - sf(20)
    p = conformance_probability(y, u, 11.0, 12.0)
    assert p == pytest.approx(stats.norm.sf(10.0) - stats.norm.sf(20.0), rel=1e-9)
    assert p > 0.0
    d = decide(y, u, 8.0, 12.0)  # 20 u inside both limits
    assert d.specific_risk == pytest.approx(2 * stats.norm.sf(20.0), rel=1e-9)


def test_pc_symmetry_and_centre():
    # Exact analytic: centred in [T_L, T_U] = y -/+ 2u gives Phi(2) - Phi(-2) = 1 - 2 sf(2).
    assert conformance_probability(5.0, 0.25, 4.5, 5.5) == pytest.approx(
        1 - 2 * stats.norm.sf(2.0), rel=1e-14
    )
    a = conformance_probability(10.2, 0.3, 9.5, 10.5)
    b = conformance_probability(9.8, 0.3, 9.5, 10.5)
    assert a == pytest.approx(b, rel=1e-12)


# --------------------------------------------------------------------------- JCGM 106 guard band


def test_pc_at_guarded_acceptance_limit_is_phi_2():
    # JCGM 106:2012 (from memory): normal PDF, k = 2, w = U; at y = A_U = T_U - U the
    # conformance probability is Phi(2) ~ 0.977. Exact check against scipy's Phi(2).
    u, k, t_up = 0.0625, 2.0, 10.0  # binary-exact so T_U - U is exact
    big_u = k * u
    w = guard_band(big_u, r=1.0)
    _, a_up = acceptance_limits(None, t_up, w)
    assert a_up == t_up - big_u
    p = conformance_probability(a_up, u, None, t_up)
    assert p == pytest.approx(stats.norm.cdf(2.0), rel=1e-14)
    assert p == pytest.approx(0.977, abs=5e-4)  # printed digits, from memory
    d = decide(a_up, u, None, t_up, coverage_factor=k, rule="guarded")
    assert d.verdict == "accept"  # acceptance interval is closed
    assert d.specific_risk == pytest.approx(stats.norm.sf(2.0), rel=1e-12)


def test_guard_band_and_acceptance_limits():
    # Definitions w = r U, A_L = T_L + w, A_U = T_U - w (JCGM 106:2012, 8.3 -- from memory).
    assert guard_band(0.5, 1.0) == 0.5
    assert guard_band(0.5, 0.5) == 0.25
    assert guard_band(0.5, 0.0) == 0.0  # r = 0: simple acceptance
    assert acceptance_limits(9.0, 11.0, 0.25) == (9.25, 10.75)
    assert acceptance_limits(9.0, 11.0) == (9.0, 11.0)
    assert acceptance_limits(9.0, None, 0.25) == (9.25, None)
    assert acceptance_limits(None, 11.0, 0.25) == (None, 10.75)


# --------------------------------------------------------------------------- one-sided, t


def test_one_sided_limits():
    # Exact analytic: upper only -> Phi((T_U - y)/u); lower only -> 1 - Phi((T_L - y)/u).
    assert conformance_probability(10.0, 0.5, upper=11.0) == pytest.approx(
        stats.norm.cdf(2.0), rel=1e-14
    )
    assert conformance_probability(10.0, 0.5, lower=9.25) == pytest.approx(
        stats.norm.sf(-1.5), rel=1e-14
    )
    # A one-sided limit equals a two-sided one with the other limit far away.
    assert conformance_probability(10.0, 0.5, upper=11.0) == pytest.approx(
        conformance_probability(10.0, 0.5, -1e6, 11.0), rel=1e-14
    )


@pytest.mark.parametrize("distance", [1.0, 1.5, 2.0, 3.0])
def test_t_with_few_dof_gives_lower_pc_than_normal(distance):
    # Heavier tails of Student's t (common practice, no source): at the same distance in
    # units of u, p_c rises with nu towards the normal value.
    y, u = 10.0, 0.2
    upper = y + distance * u
    lower = y - distance * u
    for lims in [(None, upper), (lower, upper)]:
        values = [conformance_probability(y, u, *lims, dof=nu) for nu in (2, 5, 20)]
        normal = conformance_probability(y, u, *lims)
        assert values[0] < values[1] < values[2] < normal


# --------------------------------------------------------------------------- decide


def test_decide_simple_and_guarded_verdicts():
    # T = [9, 11], u = 0.1, k = 2, U = 0.2 (common practice, no source; exact arithmetic aside).
    simple = decide(10.9, 0.1, 9.0, 11.0)
    assert simple.verdict == "accept"
    assert simple.rule == "simple"
    assert simple.guard_band == 0.0
    assert (simple.acceptance_lower, simple.acceptance_upper) == (9.0, 11.0)
    assert simple.risk_kind == "false accept"
    assert simple.specific_risk == pytest.approx(stats.norm.sf(1.0), rel=1e-12)
    assert simple.conformance_probability + simple.specific_risk == pytest.approx(1.0)

    guarded = decide(10.9, 0.1, 9.0, 11.0, rule="guarded")
    assert guarded.verdict == "reject"
    assert guarded.acceptance_upper == pytest.approx(10.8)
    assert guarded.risk_kind == "false reject"
    assert guarded.specific_risk == pytest.approx(guarded.conformance_probability)

    outside = decide(11.1, 0.1, 9.0, 11.0)
    assert outside.verdict == "reject"
    assert outside.specific_risk == pytest.approx(stats.norm.cdf(-1.0), rel=1e-12)


def test_decide_guarded_with_zero_factor_equals_simple():
    a = decide(10.95, 0.1, 9.0, 11.0, rule="guarded", guard_factor=0.0)
    b = decide(10.95, 0.1, 9.0, 11.0, rule="simple")
    assert a.verdict == b.verdict == "accept"
    assert a.conformance_probability == b.conformance_probability


def test_decide_uses_dof_for_pc():
    d = decide(10.0, 0.5, None, 11.0, dof=4)
    assert d.conformance_probability == pytest.approx(stats.t.cdf(2.0, 4), rel=1e-12)


def test_decision_is_frozen():
    d = decide(10.0, 0.1, 9.0, 11.0)
    assert isinstance(d, ConformityDecision)
    with pytest.raises(AttributeError):
        d.verdict = "reject"  # type: ignore[misc]


def test_statement_wording():
    # Wording of the statement (viscometry.text.decision_statement; the unit is a text
    # matter, no longer an argument of decide); numbers recomputed: Phi(2) = 97.7 %,
    # 1 - Phi(2) = 2.3 %.
    d = decide(9.88, 0.06, None, 10.0, rule="guarded")
    assert decision_statement(d, unit="mm²/s") == (
        "Accepted under guarded acceptance (w = 1.0·U = 0.12 mm²/s): the probability that the "
        "true value conforms is 97.7 %; the specific risk of a false accept is 2.3 %."
    )
    # The pint spelling of the unit prints the same.
    assert decision_statement(d, unit="mm^2/s") == decision_statement(d, unit="mm²/s")
    assert decision_statement(d) == (
        "Accepted under guarded acceptance (w = 1.0·U = 0.12): the probability that the "
        "true value conforms is 97.7 %; the specific risk of a false accept is 2.3 %."
    )
    r = decide(11.1, 0.1, 9.0, 11.0)
    assert decision_statement(r).startswith("Rejected under simple acceptance (w = 0): ")
    assert "specific risk of a false reject is 15.9 %" in decision_statement(r)
    far = decide(10.0, 0.01, 9.0, 11.0)
    assert "conforms is more than 99.9 %" in decision_statement(far)
    assert "false accept is less than 0.1 %" in decision_statement(far)


def test_decision_has_no_text_of_its_own():
    # One budget, one path: the decision holds numbers; the words come from viscometry.text.
    d = decide(9.88, 0.06, None, 10.0, rule="guarded")
    assert not hasattr(d, "statement")
    with pytest.raises(TypeError, match="unit"):
        decide(9.88, 0.06, None, 10.0, rule="guarded", unit="mm²/s")  # type: ignore[call-arg]


def test_decision_statement_refuses_a_unit_that_is_not_text():
    # decide(unit=3) used to be refused with an InputError naming the field and the value;
    # the unit moved to the statement, and so does the refusal (a non-string unit must not
    # end in an AttributeError from deep inside the unit formatter).
    d = decide(9.88, 0.06, None, 10.0, rule="guarded")
    with pytest.raises(InputError) as err:
        decision_statement(d, unit=3)  # type: ignore[arg-type]
    assert "unit" in str(err.value)
    assert "3" in str(err.value)


def test_caution_mentions_customer_and_ilac():
    for word in ("customer", "ILAC G8", "17025", "7.8.6", "procedures", "accredited"):
        assert word in DECISION_CAUTION


@settings(max_examples=200, deadline=None, derandomize=True)
@given(
    y=st.floats(-100, 100),
    u=st.floats(1e-3, 50),
    lo=st.floats(-100, 100),
    width=st.floats(1e-3, 100),
    dof=st.sampled_from([1.0, 3.0, 10.0, math.inf]),
)
def test_pc_is_a_probability_and_risk_complements(y, u, lo, width, dof):
    p = conformance_probability(y, u, lo, lo + width, dof=dof)
    assert 0.0 <= p <= 1.0
    d = decide(y, u, lo, lo + width, dof=dof)
    assert d.conformance_probability == p
    assert 0.0 <= d.specific_risk <= 1.0


# --------------------------------------------------------------------------- bad inputs


@pytest.mark.parametrize(
    ("kwargs", "field", "shown"),
    [
        ({"standard_uncertainty": 0.0}, "standard_uncertainty", "0.0"),
        ({"standard_uncertainty": -0.1}, "standard_uncertainty", "-0.1"),
        ({"standard_uncertainty": math.inf}, "standard_uncertainty", "inf"),
        ({"standard_uncertainty": math.nan}, "standard_uncertainty", "nan"),
        ({"value": math.nan}, "value", "nan"),
        ({"value": -math.inf}, "value", "-inf"),
        ({"value": "ten"}, "value", "'ten'"),
        ({"lower": math.nan}, "lower", "nan"),
        ({"upper": math.inf}, "upper", "inf"),
        ({"lower": None, "upper": None}, "lower and upper", "None"),
        ({"lower": 11.0, "upper": 9.0}, "lower", "11.0"),
        ({"lower": 10.0, "upper": 10.0}, "lower", "10.0"),
        ({"dof": 0}, "dof", "0"),
        ({"dof": -3.0}, "dof", "-3.0"),
        ({"dof": math.nan}, "dof", "nan"),
    ],
)
def test_conformance_probability_bad_inputs(kwargs, field, shown):
    args = {"value": 10.0, "standard_uncertainty": 0.1, "lower": 9.0, "upper": 11.0}
    args.update(kwargs)
    with pytest.raises(InputError) as err:
        conformance_probability(**args)
    assert field in str(err.value)
    assert shown in str(err.value)
    assert isinstance(err.value, ValueError)


@pytest.mark.parametrize(
    ("kwargs", "field", "shown"),
    [
        ({"rule": "strict"}, "rule", "'strict'"),
        ({"coverage_factor": 0.0}, "coverage_factor", "0.0"),
        ({"coverage_factor": math.nan}, "coverage_factor", "nan"),
        ({"rule": "guarded", "guard_factor": -1.0}, "guard_factor", "-1.0"),
        ({"rule": "guarded", "guard_factor": math.inf}, "guard_factor", "inf"),
        ({"standard_uncertainty": 0.6, "rule": "guarded"}, "guard band", "1.2"),
        ({"dof": -1}, "dof", "-1"),
    ],
)
def test_decide_bad_inputs(kwargs, field, shown):
    args = {"value": 10.0, "standard_uncertainty": 0.1, "lower": 9.0, "upper": 11.0}
    args.update(kwargs)
    with pytest.raises(InputError) as err:
        decide(**args)
    assert field in str(err.value)
    assert shown in str(err.value)


@pytest.mark.parametrize(
    ("call", "field", "shown"),
    [
        (lambda: guard_band(-0.1), "expanded_uncertainty", "-0.1"),
        (lambda: guard_band(math.nan), "expanded_uncertainty", "nan"),
        (lambda: guard_band(0.1, r=-0.5), "r", "-0.5"),
        (lambda: acceptance_limits(9.0, 11.0, -0.1), "guard", "-0.1"),
        (lambda: acceptance_limits(9.0, 11.0, 1.0), "guard band w=1.0", "1.0"),
        (lambda: acceptance_limits(None, None, 0.0), "lower and upper", "None"),
    ],
)
def test_guard_band_bad_inputs(call, field, shown):
    with pytest.raises(InputError) as err:
        call()
    assert field in str(err.value)
    assert shown in str(err.value)
