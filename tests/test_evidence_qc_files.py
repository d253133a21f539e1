"""The control-chart and proficiency-round files: the examples read, and every malformed file is
refused with one line naming the file, the row and the column (no numbers from outside)."""

from __future__ import annotations

from pathlib import Path

import pytest

from viscometry.cli import main
from viscometry.errors import BudgetFileError
from viscometry.io.qc_records import (
    CONTROL_FORMAT,
    PROFICIENCY_FORMAT,
    load_control,
    load_proficiency,
    loads_control,
    loads_proficiency,
)

ROOT = Path(__file__).resolve().parents[1]
CONTROL = ROOT / "examples" / "evidence" / "cs46_control_chart.csv"
ROUNDS = ROOT / "examples" / "evidence" / "fenmoor_proficiency_rounds.csv"
BUDGET = ROOT / "examples" / "lubricant_lab_kinematic_viscosity.toml"

C_HEAD = f"format,{CONTROL_FORMAT}\nunit,mm^2/s\n"
C_COLS = "date,value,note\n"
C_GOOD = "2025-09-01,45.90,AB\n2025-09-08,45.91,CD\n"
P_HEAD = f"format,{PROFICIENCY_FORMAT}\nscheme,S\n"
P_COLS = "round,date,x,U,x_pt,u_x_pt,sigma_pt\n"
P_GOOD = "R1,2025-03-11,32.44,0.066,32.41,0.020,0.10\n"


def test_the_examples_read():
    c = load_control(CONTROL)
    assert len(c.record.points) == 25 and c.record.unit == "mm^2/s"
    assert c.rows[0] == 10 and "CS-46" in c.record.check_standard
    p = load_proficiency(ROUNDS)
    assert [r.name for r in p.history.rounds] == [
        "FLV-2025-1", "FLV-2025-2", "FLV-2025-3", "FLV-2026-1"]  # fmt: skip
    assert p.scheme.startswith("Fenmoor") and p.rows == (10, 11, 12, 13)


def test_columns_in_another_order_and_comments_are_read():
    text = C_HEAD + "# a comment\n\nnote,value,date\nAB,45.90,2025-09-01\nCD,45.91,2025-09-01\n"
    c = loads_control(text)
    assert [p.value for p in c.record.points] == [45.90, 45.91] and c.rows == (6, 7)


HOSTILE_CONTROL = {
    "empty": ("", "empty; a control chart starts with the row format,viscometry-control/1"),
    "no format": (C_COLS + C_GOOD, "row 1, column 1: expected format,viscometry-control/1"),
    "wrong format": ("format,viscometry-control/2\n" + C_COLS + C_GOOD, "row 1, column 2: format 'viscometry-control/2' is not supported"),
    "bad unit": (f"format,{CONTROL_FORMAT}\nunit,mm^2/s^2\n" + C_COLS + C_GOOD,
                 "unit 'mm^2/s^2' is not a unit of viscosity"),
    "unknown key": (C_HEAD + "colour,blue\n" + C_COLS, "row 3, column 1: unknown key 'colour'"),
    "repeated key": (C_HEAD + "unit,cSt\n" + C_COLS, "row 3: write unit,<value> once"),
    "no header": (C_HEAD, "no header row date,value,note"),
    "missing column": (C_HEAD + "date,value\n", "row 3: header misses column note"),
    "extra column": (C_HEAD + "date,value,note,x\n", "row 3: header has 'x'"),
    "negative value": (C_HEAD + C_COLS + "2025-09-01,-45.9,AB\n",
                       "row 4, column value: must be positive, got '-45.9'"),
    "text value": (C_HEAD + C_COLS + "2025-09-01,abc,AB\n", "row 4, column value: not a number"),
    "nan value": (C_HEAD + C_COLS + "2025-09-01,nan,AB\n", "row 4, column value: must be positive"),
    "bad date": (C_HEAD + C_COLS + "01.09.2025,45.9,AB\n",
                 "row 4, column date: not a date (YYYY-MM-DD): '01.09.2025'"),
    "unsorted": (C_HEAD + C_COLS + "2025-09-08,45.9,AB\n2025-09-01,45.9,AB\n",
                 "row 5, column date: 2025-09-01 is before 2025-09-08 (row 4)"),
    "too few cells": (C_HEAD + C_COLS + "2025-09-01,45.9\n", "row 4: 2 cells; expected 3"),
    "one value": (C_HEAD + C_COLS + "2025-09-01,45.9,AB\n", "row 4: a control chart needs at least two"),
    "broken quote": (C_HEAD + C_COLS + '2025-09-01,45.9,"AB\n', "not valid CSV"),
    "byte-order mark": ("\ufeff" + C_HEAD, "row 1: starts with a byte-order mark"),
}  # fmt: skip

HOSTILE_ROUNDS = {
    "empty": ("", "empty; proficiency rounds starts with the row format,"),
    "no rounds": (P_HEAD + P_COLS, "row 3: a header but no rounds"),
    "zero sigma": (P_HEAD + P_COLS + "R1,2025-03-11,32.44,0.066,32.41,0.020,0\n",
                   "row 4, column sigma_pt: must be positive, got '0'"),
    "text u": (P_HEAD + P_COLS + "R1,2025-03-11,32.44,0.066,32.41,low,0.1\n",
               "row 4, column u_x_pt: not a number: 'low'"),
    "inf x": (P_HEAD + P_COLS + "R1,2025-03-11,inf,0.066,32.41,0.02,0.1\n",
              "row 4, column x: must be positive"),
    "bad date": (P_HEAD + P_COLS + "R1,2025-13-11,32.44,0.066,32.41,0.020,0.10\n",
                 "row 4, column date: not a date"),
    "unsorted": (P_HEAD + P_COLS + "R2,2025-06-01,1,1,1,1,1\nR1,2025-03-01,1,1,1,1,1\n",
                 "row 5, column date: 2025-03-01 is before 2025-06-01 (row 4)"),
    "too many cells": (P_HEAD + P_COLS + "R1,2025-03-11,1,1,1,1,1,1\n",
                       "row 4: 8 cells; expected 7"),
    "wrong header": (P_HEAD + "round,date,x,U,x_pt,u,sigma_pt\n", "header misses column u_x_pt"),
}  # fmt: skip


@pytest.mark.parametrize("case", sorted(HOSTILE_CONTROL))
def test_a_malformed_control_file_is_refused_with_one_line(case):
    text, expected = HOSTILE_CONTROL[case]
    with pytest.raises(BudgetFileError) as info:
        loads_control(text, "lab/cs.csv")
    message = str(info.value)
    assert message.startswith("lab/cs.csv: ") and "\n" not in message
    assert expected in message


@pytest.mark.parametrize("case", sorted(HOSTILE_ROUNDS))
def test_a_malformed_rounds_file_is_refused_with_one_line(case):
    text, expected = HOSTILE_ROUNDS[case]
    with pytest.raises(BudgetFileError) as info:
        loads_proficiency(text, "lab/pt.csv")
    message = str(info.value)
    assert message.startswith("lab/pt.csv: ") and "\n" not in message
    assert expected in message


def test_too_many_rows_are_refused_while_reading():
    text = C_HEAD + C_COLS + "2025-09-01,45.9,AB\n" * 10_020
    with pytest.raises(BudgetFileError, match="more than 10000 rows in a control chart"):
        loads_control(text, "big.csv")


def test_a_folder_and_a_device_are_refused(tmp_path):
    with pytest.raises(BudgetFileError, match="is a directory"):
        load_control(tmp_path)
    with pytest.raises(BudgetFileError, match="not a regular file"):
        load_proficiency("/dev/zero")


def test_a_bad_file_through_the_command_line_is_one_line(tmp_path, capsys):
    bad = tmp_path / "pt.csv"
    bad.write_text(P_HEAD + P_COLS + "R1,2025-03-11,32.44,0.066,32.41,-0.02,0.10\n")
    argv = ["reconcile", "--control", str(CONTROL), "--proficiency", str(bad), "--budget",
            str(BUDGET)]  # fmt: skip
    assert main(argv) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("viscometry: error: ")
    assert f"{bad}: row 4, column u_x_pt: must be positive" in err[0]
