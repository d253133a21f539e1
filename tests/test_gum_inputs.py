"""Type A and Type B evaluations of input quantities (JCGM 100:2008, clause 4)."""

import math

import numpy as np
import pytest
from scipy import stats

from viscometry.errors import InputError
from viscometry.gum import InputQuantity, dof_from_relative_uncertainty


def test_type_a_from_readings():
    # JCGM 100:2008, 4.2.2-4.2.3: mean, s/sqrt(n), nu = n - 1 (exact analytic)
    readings = [412.31, 412.45, 412.28, 412.40]
    q = InputQuantity.from_readings("t", readings, "s")
    assert q.value == pytest.approx(np.mean(readings))
    assert q.standard_uncertainty == pytest.approx(np.std(readings, ddof=1) / 2.0)
    assert q.dof == 3
    assert q.evaluation == "A"
    assert q.distribution == "student_t"
    assert q.readings == tuple(readings)


def test_type_a_single_reading_is_an_error():
    with pytest.raises(InputError, match="at least 2 readings, got 1"):
        InputQuantity.from_readings("t", [412.3], "s")


def test_type_a_pooled():
    # JCGM 100:2008, 4.2.4: u = s_p / sqrt(n) with the dof of the pooled estimate (exact analytic)
    q = InputQuantity.from_pooled("t", [300.2, 300.4, 300.3], 0.15, 24, "s")
    assert q.value == pytest.approx(300.3)
    assert q.standard_uncertainty == pytest.approx(0.15 / math.sqrt(3))
    assert q.dof == 24
    one = InputQuantity.from_pooled("t", [300.2], 0.15, 24, "s")
    assert one.standard_uncertainty == pytest.approx(0.15)


def test_type_b_normal_and_expanded():
    # JCGM 100:2008, 4.3.3: u = U/k (exact analytic)
    assert InputQuantity.from_expanded(
        "C", 0.1, 3e-4, coverage_factor=2
    ).standard_uncertainty == pytest.approx(1.5e-4)
    # JCGM 100:2008, 4.3.4: u = U / z_p for a normal distribution, U / t_p(nu) with dof
    q = InputQuantity.from_expanded("C", 0.1, 3e-4, coverage_probability=0.95)
    assert q.standard_uncertainty == pytest.approx(3e-4 / stats.norm.ppf(0.975))
    q = InputQuantity.from_expanded("C", 0.1, 3e-4, coverage_probability=0.95, dof=10)
    assert q.standard_uncertainty == pytest.approx(3e-4 / stats.t.ppf(0.975, 10))
    assert q.dof == 10
    with pytest.raises(InputError, match="exactly one of coverage_factor or coverage_probability"):
        InputQuantity.from_expanded("C", 0.1, 3e-4)


@pytest.mark.parametrize(
    ("maker", "divisor"),
    [
        (InputQuantity.rectangular, math.sqrt(3)),  # JCGM 100:2008, 4.3.7
        (InputQuantity.triangular, math.sqrt(6)),  # JCGM 100:2008, 4.3.9
        (InputQuantity.arcsine, math.sqrt(2)),  # JCGM 101:2008, 6.4.6
    ],
)
def test_bounded_distributions(maker, divisor):
    q = maker("x", 5.0, 0.3, "K")
    assert q.standard_uncertainty == pytest.approx(0.3 / divisor)
    assert q.half_width == 0.3
    b = maker("x", lower=4.7, upper=5.3)
    assert b.value == pytest.approx(5.0)
    assert b.standard_uncertainty == pytest.approx(0.3 / divisor)


def test_trapezoidal():
    # JCGM 100:2008, 4.3.9: u^2 = a^2 (1 + beta^2) / 6; beta = 1 rectangular, 0 triangular
    q = InputQuantity.trapezoidal("x", 0.0, 2.0, beta=0.5)
    assert q.standard_uncertainty == pytest.approx(2.0 * math.sqrt(1.25 / 6))
    assert InputQuantity.trapezoidal("x", 0.0, 2.0, beta=1.0).standard_uncertainty == pytest.approx(
        2 / math.sqrt(3)
    )
    assert InputQuantity.trapezoidal("x", 0.0, 2.0, beta=0.0).standard_uncertainty == pytest.approx(
        2 / math.sqrt(6)
    )


def test_dof_from_relative_uncertainty():
    # JCGM 100:2008, G.4.2, eq. (G.3): nu = 1/2 (du/u)^-2; 25 % gives 8, 10 % gives 50
    assert dof_from_relative_uncertainty(0.25) == pytest.approx(8.0)
    assert InputQuantity.normal(
        "x", 1.0, 0.1, relative_uncertainty_of_uncertainty=0.1
    ).dof == pytest.approx(50.0)
    assert math.isinf(InputQuantity.normal("x", 1.0, 0.1).dof)


@pytest.mark.parametrize(
    ("kwargs", "fragment"),
    [
        ({"standard_uncertainty": -0.1}, "r.standard_uncertainty must be non-negative, got -0.1"),
        ({"standard_uncertainty": math.nan}, "r.standard_uncertainty must be finite"),
        ({"value": math.inf}, "r.value must be finite"),
        ({"dof": 0}, "r.dof must be positive, got 0.0"),
        ({"distribution": "gaussian"}, "r.distribution must be one of"),
    ],
)
def test_bad_inputs(kwargs, fragment):
    base = {"name": "r", "value": 0.25, "standard_uncertainty": 0.001, "unit": "mm"}
    base.update(kwargs)
    with pytest.raises(InputError, match=fragment.replace("(", r"\(").replace(".", r"\.")):
        InputQuantity(**base)


@pytest.mark.parametrize("name", ["__class__", "1x", "a b", "_x", "x.y", ""])
def test_bad_names(name):
    with pytest.raises(InputError, match="identifier"):
        InputQuantity.normal(name, 1.0, 0.1)


def test_input_is_immutable():
    q = InputQuantity.normal("x", 1.0, 0.1)
    with pytest.raises(AttributeError):
        q.value = 2.0  # type: ignore[misc]
    q2 = q.with_uncertainty(0.05)
    assert q.standard_uncertainty == 0.1 and q2.standard_uncertainty == 0.05


def test_inputs_keep_how_their_uncertainty_was_stated():
    # Each constructor records its form and the numbers as stated (budget-file key names).
    a = InputQuantity.from_readings("t", [412.31, 412.45, 412.28, 412.40], "s")
    assert a.form == "readings" and a.readings == (412.31, 412.45, 412.28, 412.40)
    p = InputQuantity.from_pooled("t", [300.2, 300.4, 300.3], 0.15, 24, "s")
    assert p.form == "pooled"
    assert p.stated == (("pooled_standard_deviation", 0.15), ("pooled_dof", 24.0))
    e = InputQuantity.from_expanded("C", 0.1, 3e-4, coverage_factor=2)
    assert e.form == "expanded"
    assert e.stated == (("expanded_uncertainty", 3e-4), ("coverage_factor", 2.0))
    assert dict(e.statement) == {"expanded_uncertainty": 3e-4, "coverage_factor": 2.0}
    b = InputQuantity.rectangular("x", lower=4.7, upper=5.3)
    assert b.form == "bounds"
    assert b.stated == (("distribution", "rectangular"), ("lower", 4.7), ("upper", 5.3))
    assert InputQuantity.normal("x", 1.0, 0.1).form == "standard"
    assert InputQuantity("x", 1.0, 0.1).stated == (("standard_uncertainty", 0.1),)


def test_from_standard():
    # JCGM 100:2008, 4.3: u stated directly; distribution and Type as given; nu from G.4.2.
    q = InputQuantity.from_standard("E", 0.0, 0.8, "mm^2*s", distribution="rectangular")
    assert (q.value, q.standard_uncertainty, q.unit) == (0.0, 0.8, "mm^2*s")
    assert q.distribution == "rectangular" and q.evaluation == "B" and math.isinf(q.dof)
    assert q.form == "standard"
    assert q.stated == (("standard_uncertainty", 0.8), ("distribution", "rectangular"))
    # JCGM 100:2008, G.4.2, eq. (G.3): 25 % relative uncertainty of u gives nu = 8 (exact).
    r = InputQuantity.from_standard("E", 1.0, 0.1, relative_uncertainty_of_uncertainty=0.25)
    assert r.dof == pytest.approx(8.0)
    assert dict(r.statement)["relative_uncertainty_of_uncertainty"] == 0.25
    t = InputQuantity.from_standard("E", 1.0, 0.1, evaluation="A", dof=9)
    assert (t.evaluation, t.dof) == ("A", 9.0)
    with pytest.raises(InputError, match="give dof or relative_uncertainty_of_uncertainty"):
        InputQuantity.from_standard("E", 1.0, 0.1, dof=9, relative_uncertainty_of_uncertainty=0.25)


def test_from_expanded_with_relative_uncertainty_of_uncertainty():
    # u = U/k (JCGM 100:2008, 4.3.3) and nu = 1/2 (du/u)^-2 = 8 for 25 % (G.4.2) -- exact.
    q = InputQuantity.from_expanded(
        "C", 0.1, 3e-4, coverage_factor=2, relative_uncertainty_of_uncertainty=0.25
    )
    assert q.standard_uncertainty == pytest.approx(1.5e-4, rel=1e-15)
    assert q.dof == pytest.approx(8.0)
    assert q.form == "expanded"
    assert dict(q.statement) == {
        "expanded_uncertainty": 3e-4,
        "coverage_factor": 2.0,
        "relative_uncertainty_of_uncertainty": 0.25,
    }
    # With a coverage probability, the k is t_p(nu) for nu = 8 (JCGM 100:2008, G.3).
    p = InputQuantity.from_expanded(
        "C", 0.1, 3e-4, coverage_probability=0.95, relative_uncertainty_of_uncertainty=0.25
    )
    assert p.standard_uncertainty == pytest.approx(3e-4 / stats.t.ppf(0.975, 8), rel=1e-12)


def test_with_uncertainty_states_the_new_uncertainty_directly():
    # A what-if copy is in standard form, drops the readings (they no longer give this u)
    # and keeps the distribution, the degrees of freedom and the type of evaluation.
    a = InputQuantity.from_readings("t", [1.0, 1.1, 0.9], "s").with_uncertainty(0.01)
    assert a.form == "standard" and a.readings is None
    assert (a.standard_uncertainty, a.dof, a.evaluation, a.distribution) == (
        0.01,
        2.0,
        "A",
        "student_t",
    )
    assert dict(a.statement)["standard_uncertainty"] == 0.01
    e = InputQuantity.from_expanded("C", 0.1, 3e-4, coverage_factor=2).with_uncertainty(1e-4)
    assert e.form == "standard" and e.stated == (("standard_uncertainty", 1e-4),)
    r = InputQuantity.rectangular("x", 5.0, 0.3, "K").with_uncertainty(0.1)
    assert r.distribution == "rectangular"
    assert r.half_width == pytest.approx(0.1 * math.sqrt(3))  # a = u·√3 (JCGM 100:2008, 4.3.7)
