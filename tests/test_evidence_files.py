"""History and timings files: the examples load, and hostile files are refused with one line
that names the file, the row and (where there is one) the column."""

from __future__ import annotations

import datetime as _dt
import math as _math
from pathlib import Path

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from viscometry.cli import main
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.evidence import fit_drift
from viscometry.io.acceptance import load_timings, loads_timings
from viscometry.io.history import HISTORY_FORMAT, load_history, loads_history

ROOT = Path(__file__).resolve().parents[1]
HISTORY = ROOT / "examples" / "evidence" / "ubbelohde_4471_history.csv"
TIMINGS = ROOT / "examples" / "evidence" / "base_oil_duplicate_timings.csv"

HEAD = f"format,{HISTORY_FORMAT}\nunit,mm^2/s^2\n"
GOOD = "2020-01-10,0.010021,0.000015,2,cert A\n2022-01-12,0.010026,0.000015,2,cert B\n"


def test_the_examples_load():
    h = load_history(HISTORY)
    assert len(h.history.records) == 5 and h.history.unit == "mm^2/s^2"
    assert h.history.records[-1].source == "Merrow certificate M24-0431, after cleaning"
    assert h.fingerprint.startswith("sha256:") and h.rows == (9, 10, 11, 12, 13)
    t = load_timings(TIMINGS)
    assert t.labels == ("1", "2") and t.result_unit == "mm^2/s"
    # exact analytic: ν = C·t̄
    assert t.results()[0] == pytest.approx(0.030041 * (1042.31 + 1042.55) / 2, rel=1e-15)


HOSTILE_HISTORIES = {
    "empty": ("", "empty; a calibration history starts with"),
    "only comments": ("# nothing\n\n", "empty"),
    "missing column": (HEAD + "date,C,k,source\n" + GOOD, "row 3: header misses column U"),
    "non-number": (
        HEAD + "date,C,U,k,source\n2020-01-10,0.0100x,0.000015,2,A\n",
        "row 4, column C: not a number: '0.0100x'",
    ),
    "negative U": (
        HEAD + "date,C,U,k,source\n2020-01-10,0.010021,-0.000015,2,A\n",
        "row 4, column U: must be positive, got '-0.000015'",
    ),
    "nan constant": (
        HEAD + "date,C,U,k,source\n2020-01-10,nan,0.000015,2,A\n",
        "row 4, column C: must be positive, got 'nan'",
    ),
    "zero k": (
        HEAD + "date,C,U,k,source\n2020-01-10,0.01,0.000015,0,A\n",
        "row 4, column k: must be positive, got '0'",
    ),
    "duplicate dates": (
        HEAD + "date,C,U,k,source\n2020-01-10,0.01,1e-5,2,A\n2020-01-10,0.01,1e-5,2,B\n",
        "row 5, column date: 2020-01-10 repeats the date of row 4",
    ),
    "unsorted dates": (
        HEAD + "date,C,U,k,source\n2021-01-10,0.01,1e-5,2,A\n2020-01-10,0.01,1e-5,2,B\n",
        "row 5, column date: 2020-01-10 is before 2021-01-10 (row 4); list the certificates "
        "oldest first",
    ),
    "bad date": (
        HEAD + "date,C,U,k,source\n10.01.2020,0.01,1e-5,2,A\n",
        "row 4, column date: not a date (YYYY-MM-DD): '10.01.2020'",
    ),
    "too few cells": (HEAD + "date,C,U,k,source\n2020-01-10,0.01,1e-5\n", "row 4: 3 cells"),
    "no format": ("date,C,U,k,source\n" + GOOD, "row 1, column 1: expected format,"),
    "wrong format": ("format,viscometry-history/9\ndate,C,U,k,source\n" + GOOD, "not supported"),
    "bad unit": (
        f"format,{HISTORY_FORMAT}\nunit,mm/s\ndate,C,U,k,source\n" + GOOD,
        "unit 'mm/s' is not a unit of a viscometer constant",
    ),  # fmt: skip
    "unknown key": (HEAD + "colour,blue\ndate,C,U,k,source\n", "row 3, column 1: unknown key"),
    "no rows": (HEAD + "date,C,U,k,source\n", "a header but no certificate rows"),
    "no header": (HEAD, "no header row"),
    "extra column": (HEAD + "date,C,U,k,source,x\n" + GOOD, "header has 'x'"),
    "broken quote": (HEAD + 'date,C,U,k,source\n2020-01-10,0.01,1e-5,2,"A\n', "not valid CSV"),
    "byte-order mark": ("\ufeff" + HEAD, "byte-order mark"),
}


@pytest.mark.parametrize("case", sorted(HOSTILE_HISTORIES))
def test_hostile_history_is_refused_with_one_line(case):
    text, expected = HOSTILE_HISTORIES[case]
    with pytest.raises(BudgetFileError) as info:
        loads_history(text, "lab/v1.csv")
    message = str(info.value)
    assert message.startswith("lab/v1.csv: ") and "\n" not in message
    assert expected in message


def test_hostile_history_through_the_command_line(tmp_path, capsys):
    bad = tmp_path / "v1.csv"
    bad.write_text(HEAD + "date,C,U,k,source\n2020-01-10,0.010021,-0.000015,2,A\n")
    assert main(["drift", str(bad), "--date", "2024-01-01"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("viscometry: error: ")
    assert f"{bad}: row 4, column U: must be positive" in err[0]


def test_a_folder_and_a_device_are_refused(tmp_path):
    with pytest.raises(BudgetFileError, match="is a directory"):
        load_history(tmp_path)
    with pytest.raises(BudgetFileError, match="not a regular file"):
        load_history("/dev/zero")


HOSTILE_TIMINGS = {
    "empty": ("", "empty; a timings file starts with"),
    "one timing": (
        "format,viscometry-timings/1\ndetermination,flow_time\n1,300.1\n2,300.2\n2,300.3\n",
        "determination '1' has one timing",
    ),  # fmt: skip
    "split determination": (
        "format,viscometry-timings/1\ndetermination,flow_time\n1,3\n1,3\n2,3\n2,3\n1,3\n",
        "row 7, column determination: '1' appeared before",
    ),
    "non-number": (
        "format,viscometry-timings/1\ndetermination,flow_time\n1,abc\n",
        "row 3, column flow_time: not a number",
    ),  # fmt: skip
    "bad constant": (
        "format,viscometry-timings/1\nconstant,-1\ndetermination,flow_time\n",
        "row 2, column constant: must be positive",
    ),  # fmt: skip
    "bad header": ("format,viscometry-timings/1\ndetermination,time\n", "header must be"),
}


@pytest.mark.parametrize("case", sorted(HOSTILE_TIMINGS))
def test_hostile_timings_are_refused_with_one_line(case):
    text, expected = HOSTILE_TIMINGS[case]
    with pytest.raises(BudgetFileError) as info:
        loads_timings(text, "t.csv")
    assert str(info.value).startswith("t.csv: ") and "\n" not in str(info.value)
    assert expected in str(info.value)


# ------------------------------------------------------------------------------- fuzzing
FUZZ = settings(max_examples=150, derandomize=True, deadline=_dt.timedelta(seconds=5),
                suppress_health_check=[HealthCheck.too_slow], database=None)  # fmt: skip
CELL = st.one_of(
    st.sampled_from(["2020-01-10", "2021-06-30", "1999-12-31", "0.03", "1e-5", "2", "-1",
                     "nan", "inf", "1e308", "1e-320", "", "x", '"a,b"', "0", "9999-12-31"]),
    st.floats(allow_nan=True, allow_infinity=True).map(repr),
    st.text(max_size=6),
)  # fmt: skip
ROW = st.lists(CELL, min_size=0, max_size=6).map(",".join)


@FUZZ
@given(st.lists(ROW, max_size=8))
def test_any_history_text_is_read_or_refused_with_a_file_error(rows):
    text = HEAD + "date,C,U,k,source\n" + "\n".join(rows)
    try:
        h = loads_history(text, "f.csv")
    except BudgetFileError as exc:
        assert str(exc).startswith("f.csv: ") and "\n" not in str(exc)
        return
    _check_fit(h)


def _check_fit(h):
    if len(h.history.records) < 2:
        return
    try:
        fit = fit_drift(h.history)
    except ViscometryError as exc:  # one certificate with all the weight
        assert "cannot be fitted" in str(exc)
        return
    p = fit.predict(h.history.last.date + _dt.timedelta(days=400))
    values = (fit.slope, fit.slope_uncertainty, p.constant, p.standard_uncertainty)
    assert all(_math.isfinite(v) for v in values)
    try:
        t = fit.recalibration_interval()
    except ViscometryError as exc:  # only the year-9999 overflow is refused
        assert "after the year" in str(exc)
    else:
        assert 0 < t.years <= t.longest


NUMBER = st.floats(min_value=1e-40, max_value=1e40)
RELATIVE = st.floats(min_value=1e-13, max_value=1.0)


@FUZZ
@given(
    st.lists(
        st.tuples(st.integers(1, 20000), NUMBER, RELATIVE, st.sampled_from(["1", "2", "2.5"])),
        min_size=2,
        max_size=6,
    )
)
def test_sorted_certificates_with_any_numbers_fit_or_are_refused(rows):
    day = _dt.date(2000, 1, 1)
    lines = []
    for step, c, rel, k in rows:
        day += _dt.timedelta(days=step)
        lines.append(f"{day},{c!r},{c * rel!r},{k},cert")
    try:
        h = loads_history(HEAD + "date,C,U,k,source\n" + "\n".join(lines), "f.csv")
    except BudgetFileError as exc:
        assert "row " in str(exc) and "\n" not in str(exc)
        return
    _check_fit(h)
