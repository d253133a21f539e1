"""Records and a budget of different kinds of quantity are refused, not compared.

The reconciliation is relative, so without this check a kinematic control chart (mm²/s)
would be "reconciled" with a dynamic-viscosity budget (mPa·s) without a word.
"""

from __future__ import annotations

from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.errors import InputError
from viscometry.evidence.topdown import BudgetClaim, reconcile
from viscometry.io import load_budget
from viscometry.io.qc_records import load_control, load_proficiency

EXAMPLES = Path(__file__).resolve().parents[1] / "examples"
CONTROL = EXAMPLES / "evidence" / "cs46_control_chart.csv"
ROUNDS = EXAMPLES / "evidence" / "fenmoor_proficiency_rounds.csv"
KINEMATIC = EXAMPLES / "lubricant_lab_kinematic_viscosity.toml"
DYNAMIC = EXAMPLES / "primary_capillary_poiseuille.toml"


def _claim(path: Path) -> BudgetClaim:
    return BudgetClaim.from_result(load_budget(path).budget.evaluate(), str(path))


def test_a_dynamic_budget_against_kinematic_records_is_refused() -> None:
    from viscometry.evidence.control import control_chart

    chart = control_chart(load_control(CONTROL).record)
    rounds = load_proficiency(ROUNDS).history
    assert reconcile(chart, rounds, _claim(KINEMATIC)).verdict  # the same quantity: compared
    with pytest.raises(InputError, match=r"the budget is in 'mPa\*s' but the proficiency rounds"):
        reconcile(chart, rounds, _claim(DYNAMIC))


def test_the_command_names_the_files(capsys) -> None:
    args = ["reconcile", "--control", str(CONTROL), "--proficiency", str(ROUNDS)]
    assert main([*args, "--budget", str(DYNAMIC)]) == 2
    err = capsys.readouterr().err
    assert str(DYNAMIC) in err and "not the same kind of quantity" in err
