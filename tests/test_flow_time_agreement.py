"""A glass-viscometer budget checks that the readings of each flow time agree, on every path.

The limit is the ``flow_time_range`` entry of :mod:`viscometry.evidence.acceptance`: two
timings may differ by 0.2 % of their mean (common practice, no source); n timings by
0.2 % · f(n)/f(2), with the critical range factors f(n) of ISO 5725-6:1994, Table 1
(f(2) = 2.8, f(3) = 3.3, f(4) = 3.6; from memory, and the helper's own test checks them
against scipy's studentized range).
"""

from __future__ import annotations

import json
import shutil
from pathlib import Path

from viscometry.cli import main
from viscometry.gum import Budget, InputQuantity
from viscometry.io import load_budget
from viscometry.methods import get_method

EXAMPLE = (
    Path(__file__).resolve().parents[1] / "examples" / "methods" / "glass_capillary_kinetic.toml"
)


def _budget(method: str, readings: list[float]) -> Budget:
    m = get_method(method)
    inputs = {
        "C": InputQuantity.normal("C", 0.10012, 0.00009, "mm^2/s^2"),
        "t": InputQuantity.from_readings("t", readings, "s"),
        "E": InputQuantity.normal("E", 0.0, 1.0, "mm^2*s"),
    }
    return Budget.from_method(m, [inputs[n] for n in m.input_names], unit="mm^2/s")


def _flow_warnings(result) -> list[str]:
    return [w for w in result.warnings if "readings of flow time" in w]


def test_readings_within_the_limit_give_no_warning():
    # two timings 0.9 s apart at 460 s: 0.196 % < 0.2 % (limit 0.920 s)
    assert _flow_warnings(_budget("glass_capillary_kinetic", [459.55, 460.45]).evaluate()) == []


def test_two_readings_outside_ask_for_one_more_timing():
    # 1.0 s apart at 460 s: 0.217 % > 0.2 %
    result = _budget("glass_capillary_kinetic", [459.5, 460.5]).evaluate()
    (w,) = _flow_warnings(result)
    assert "the 2 readings of flow time t span 1 s, more than the 0.92 s" in w
    assert "flow_time_range, common practice, no source" in w and w.endswith("take one more timing")


def test_three_readings_use_the_wider_range_for_three():
    # limit for 3: 0.2 % · 460 s · 3.3/2.8 = 1.084 s; a range of 1.05 s passes, 1.2 s does not
    assert (
        _flow_warnings(_budget("glass_capillary_kinetic", [459.5, 460.0, 460.55]).evaluate()) == []
    )
    (w,) = _flow_warnings(_budget("glass_capillary_kinetic", [459.4, 460.0, 460.6]).evaluate())
    assert "more than the 1.08 s" in w and w.endswith("take one more timing")


def test_four_readings_outside_ask_for_an_investigation():
    result = _budget("glass_capillary_kinetic", [459.0, 459.8, 460.2, 461.0]).evaluate()
    (w,) = _flow_warnings(result)
    assert "investigate before reporting" in w


def test_a_falling_sphere_is_not_a_glass_viscometer():
    m = get_method("falling_sphere_stokes")
    assert m.flow_time_inputs == ()


def test_every_path_shows_it(tmp_path, capsys):
    """A budget file with spread timings: evaluate and simulate JSON carry the warning."""
    text = EXAMPLE.read_text(encoding="utf-8").replace(
        "readings = [459.82, 460.11, 459.95, 460.04]", "readings = [459.0, 460.11, 459.95, 461.0]"
    )
    text = text[: text.index("[recorded]")]
    f = tmp_path / "spread.toml"
    f.write_text(text, encoding="utf-8")
    assert any("readings of flow time t" in w for w in load_budget(f).budget.evaluate().warnings)
    for command in (["evaluate", str(f), "--json"], ["simulate", str(f), "--json", "--seed", "1",
                                                    "--trials", "20000"]):  # fmt: skip
        assert main(command) == 0
        warnings = json.loads(capsys.readouterr().out)["warnings"]
        assert any(w.startswith("the 4 readings of flow time t span 2 s") for w in warnings)


def test_the_shipped_glass_examples_agree(tmp_path):
    # the examples' timings are within the limit: no new warning on any of them
    shutil.copy(EXAMPLE, tmp_path / "kinetic.toml")
    assert _flow_warnings(load_budget(tmp_path / "kinetic.toml").budget.evaluate()) == []


def test_flow_time_inputs_are_inputs_in_seconds():
    from viscometry.methods import METHODS

    named = {n: m for n, m in METHODS.items() if getattr(m, "flow_time_inputs", ())}
    assert {"glass_capillary_kinetic", "constant_by_comparison", "viscosity_number"} <= set(named)
    for name, m in named.items():
        for t in m.flow_time_inputs:
            assert t in m.input_names and m.input_units[t] == "s", (name, t)
