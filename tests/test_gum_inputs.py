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
