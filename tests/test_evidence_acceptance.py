"""Acceptance of flow timings and duplicate determinations (ISO 5725-6 procedure).

Check values: the factor 2.8 = 1.96·√2 rounded (exact analytic, ISO 5725-6:1994, 4.1.4 from
memory); the critical-range factors f(n) against scipy's studentized range with infinite
degrees of freedom (independent computation; ISO 5725-6:1994, Table 1 prints them rounded,
from memory). The limits of the built-in table are not check values: the tests only check
that each names a source and is applied by the documented arithmetic.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from viscometry.errors import InputError
from viscometry.evidence import (
    CRITICAL_RANGE_FACTORS,
    ISO_5725_FACTOR,
    LIMITS,
    AcceptanceLimit,
    check_determinations,
    check_flow_times,
    check_laboratories,
    critical_range_factor,
    repeatability_limit,
    reproducibility_limit,
)
from viscometry.evidence_text import limit_lines, verdict_statement


def test_factor_2_8_is_1_96_root_2_rounded():
    # exact analytic: r = z_0.975·√2·s_r = 2.77 s_r, printed 2.8 in ISO 5725-6 (from memory)
    exact = stats.norm.ppf(0.975) * math.sqrt(2)
    assert exact == pytest.approx(2.7718, abs=1e-4)
    assert round(exact, 1) == ISO_5725_FACTOR == 2.8
    assert repeatability_limit(0.01) == pytest.approx(0.028, rel=1e-15)
    assert reproducibility_limit(0.05) == pytest.approx(0.14, rel=1e-15)


@pytest.mark.parametrize("n", sorted(CRITICAL_RANGE_FACTORS))
def test_critical_range_factors_are_studentized_range_quantiles(n):
    # independent: q(0.95; n, ∞), rounded to one decimal as ISO 5725-6 Table 1 prints it
    q = stats.studentized_range.ppf(0.95, n, np.inf)
    assert critical_range_factor(n) == round(q, 1)


def test_every_built_in_limit_names_its_source():
    for name, lim in LIMITS.items():
        assert lim.name == name and lim.source, name
        assert any(w in lim.source for w in ("from memory", "common practice", "ISO", "ASTM"))
    lines = limit_lines(LIMITS)
    assert sum(line.strip().startswith("source:") for line in lines) == len(LIMITS)


def test_limit_arithmetic():
    # exact analytic: a·(y + b)^p, scaled by f(n)/f(2) for n results
    lim = AcceptanceLimit("x", "determination", 0.011, offset=8.0)
    assert lim.for_two(92.0) == pytest.approx(1.1, rel=1e-12)
    assert lim.for_results(92.0, 4) == pytest.approx(1.1 * 3.6 / 2.8, rel=1e-12)
    absolute = AcceptanceLimit.absolute("a", "determination", 0.05, source="test")
    assert absolute.for_two(1234.0) == 0.05
    sd = AcceptanceLimit.from_precision("r", "determination", 0.02, source="test")
    assert sd.for_two(10.0) == pytest.approx(0.056, rel=1e-12)


def test_flow_times_accept_repeat_investigate():
    lim = AcceptanceLimit.relative("t", "flow_time", 0.002, source="test")
    ok = check_flow_times([300.0, 300.5], lim)  # limit 0.6003 s
    assert (ok.action, ok.reason, ok.more) == ("accept", "within_limit", 0)
    assert ok.result == pytest.approx(300.25, rel=1e-15)
    again = check_flow_times([300.0, 300.7], lim)
    assert (again.action, again.more, again.result) == ("repeat", 1, None)
    # four timings: limit 0.002·mean·3.6/2.8
    mean = (300.0 + 300.7 + 300.2 + 300.1) / 4
    four = check_flow_times([300.0, 300.7, 300.2, 300.1], lim)
    assert four.limit == pytest.approx(0.002 * mean * 3.6 / 2.8, rel=1e-12)
    assert four.action == "accept"
    bad = check_flow_times([300.0, 301.7, 300.2, 300.1], lim)
    assert (bad.action, bad.reason) == ("investigate", "outside_after_repeat")
    assert check_flow_times([300.0, 301.7, 300.2], lim, most=3).action == "investigate"


def test_duplicates_follow_iso_5725_6():
    # ISO 5725-6:1994, 5.2.2.1 (from memory): two within r → mean; else two more; four within
    # CR(4) = 3.6 σ_r → mean of four; else the median
    lim = AcceptanceLimit.absolute("r", "determination", 0.28, source="test")  # σ_r = 0.1
    assert check_determinations([10.0, 10.2], lim).action == "accept"
    first = check_determinations([10.0, 10.3], lim)
    assert (first.action, first.more, first.reason) == ("repeat", 2, "first_pair_outside")
    four = check_determinations([10.0, 10.3, 10.1, 10.2], lim)
    assert four.limit == pytest.approx(0.36, rel=1e-12)
    assert four.action == "accept" and four.result == pytest.approx(10.15, rel=1e-15)
    wide = check_determinations([10.0, 10.3, 10.5, 10.2], lim)
    assert wide.action == "investigate" and wide.result == pytest.approx(10.25, rel=1e-15)
    assert "median 10.25" in verdict_statement(wide)


def test_laboratories_against_R():
    lim = AcceptanceLimit.from_precision("R", "laboratories", 0.05, source="test")  # R = 0.14
    assert check_laboratories(31.20, 31.30, lim).action == "accept"
    far = check_laboratories(31.20, 31.50, lim)
    assert far.action == "investigate" and far.ratio == pytest.approx(0.30 / 0.14, rel=1e-9)
    assert "laboratories look for the cause" in verdict_statement(far, "mm^2/s")


def test_statements_say_what_to_do_never_pass_or_fail():
    lim = AcceptanceLimit.absolute("r", "determination", 0.28, source="test")
    for values in ([10.0, 10.2], [10.0, 10.3], [10.0, 10.3, 10.5, 10.2]):
        text = verdict_statement(check_determinations(values, lim))
        assert text.split(":")[0] in ("accept", "repeat", "investigate")
        assert "pass" not in text and "fail" not in text


def test_bad_input_is_refused_with_the_field():
    with pytest.raises(InputError, match="times must hold 2 to 10"):
        check_flow_times([300.0])
    with pytest.raises(InputError, match=r"times\[1\] must be positive"):
        check_flow_times([300.0, -1.0])
    with pytest.raises(InputError, match=r"values\[0\] must be a number"):
        check_determinations(["x", 1.0], LIMITS["d445_base_oil_determinability"])
    with pytest.raises(InputError, match="applies to flow_time, not to determination"):
        check_determinations([1.0, 1.0], LIMITS["flow_time_range"])
    with pytest.raises(InputError, match="number of results must be 2 to 10"):
        critical_range_factor(11)
    with pytest.raises(InputError, match="applies_to"):
        AcceptanceLimit("x", "bath", 0.1)  # type: ignore[arg-type]
    with pytest.raises(InputError, match="coefficient must be positive"):
        AcceptanceLimit("x", "flow_time", -0.1)
