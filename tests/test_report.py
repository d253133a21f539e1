"""Reports: every format written and read back, escaping, reproducibility, the CLI.

No external check values: every assertion compares a report with the result object it was
rendered from (consistency checks), or with analytic cases y = a + b.
"""

from __future__ import annotations

import base64
import io
import json
import re
from pathlib import Path

import pandas as pd
import pytest

from viscometry.cli import main
from viscometry.errors import InputError
from viscometry.gum import Budget, Correlation, InputQuantity
from viscometry.io import load_budget
from viscometry.io.json_out import dumps, result_to_dict
from viscometry.report import (
    CAUTIONS,
    FORMATS,
    format_for_path,
    latex_escape,
    markdown_escape,
    render_report,
    write_report,
)
from viscometry.text import statement

REPO = Path(__file__).resolve().parents[1]
END_GAUGE = REPO / "examples" / "reference" / "gum_h1_end_gauge.toml"
CORRELATED = REPO / "examples" / "methods" / "dynamic_from_kinematic_correlated.toml"
EXTENSIONS = (".html", ".md", ".tex", ".csv", ".json")
HOSTILE_TITLE = "<script>alert(1)</script>"
HOSTILE_TEX = "50% & _x_"


@pytest.fixture(scope="module")
def end_gauge():
    bf = load_budget(END_GAUGE)
    return bf, bf.budget.evaluate()


def _hostile_result(title: str = HOSTILE_TITLE, text: str = HOSTILE_TEX):
    """y = a + b with user strings chosen to break HTML, LaTeX and Markdown."""
    a = InputQuantity.normal("a", 1.0, 0.3, "mm")
    b = InputQuantity.normal("b", 2.0, 0.4, "mm")
    a = InputQuantity(**{**_fields(a), "description": text, "source": "<img src=x onerror=1>"})
    budget = Budget.from_formula("y", "a + b", [a, b], "mm", title=title)
    return budget.evaluate()


def _fields(q: InputQuantity) -> dict:
    import dataclasses

    return {f.name: getattr(q, f.name) for f in dataclasses.fields(q) if f.init}


# --------------------------------------------------------------------------- formats
def test_json_equals_result_to_dict(end_gauge, tmp_path):
    bf, result = end_gauge
    path = write_report(result, tmp_path / "r.json")
    loaded = json.loads(path.read_text(encoding="utf-8"))
    # dumps writes inf as "inf"; compare through the same strict JSON round trip.
    assert loaded == json.loads(dumps(result_to_dict(result, kind="report")))
    assert loaded["schema"] == "viscometry.report/1"
    # the fingerprint comes from the result's budget, the same as the file's
    assert loaded["fingerprint"] == bf.fingerprint == result.fingerprint


def test_json_matches_evaluate_json(tmp_path, capsys):
    out = tmp_path / "r.json"
    assert main(["report", str(END_GAUGE), "-o", str(out)]) == 0
    capsys.readouterr()
    assert main(["evaluate", "--json", str(END_GAUGE)]) == 0
    printed = json.loads(capsys.readouterr().out)
    report = json.loads(out.read_text(encoding="utf-8"))
    # the same object, except that each names its own kind in "schema" and the command line
    # adds the file it read ("source")
    assert report["schema"] == "viscometry.report/1"
    assert printed["schema"] == "viscometry.evaluate/1"
    assert printed.pop("source") == str(END_GAUGE)
    assert list(report) == list(printed)
    assert {**report, "schema": printed["schema"]} == printed


def test_csv_one_row_per_input(end_gauge, tmp_path):
    bf, result = end_gauge
    path = write_report(result, tmp_path / "r.csv")
    table = pd.read_csv(path, comment="#")
    assert list(table["quantity"]) == [c.name for c in result.contributions]
    # Floats are written with repr, so they read back exactly.
    assert list(table["estimate"]) == [c.value for c in result.contributions]
    assert list(table["variance_share"]) == [c.variance_share for c in result.contributions]
    text = path.read_text(encoding="utf-8")
    assert f"# fingerprint: {bf.fingerprint}\n" in text
    assert f"# statement: {statement(result)}\n" in text
    assert f"# expanded_uncertainty: {result.expanded_uncertainty!r}\n" in text


def test_csv_has_correlation_rows(tmp_path):
    bf = load_budget(CORRELATED)
    result = bf.budget.evaluate()
    assert result.cross_terms  # the example declares a correlation
    table = pd.read_csv(write_report(result, tmp_path / "c.csv"), comment="#")
    assert len(table) == len(result.contributions) + len(result.cross_terms)
    assert table["quantity"].iloc[-1].startswith("r(")


def test_csv_guards_text_cells(tmp_path):
    result = _hostile_result(text="=HYPERLINK(1) # not a comment")
    table = pd.read_csv(write_report(result, tmp_path / "h.csv"), comment="#")
    assert len(table) == 2
    # a leading '=' is neutralised; a '#' inside a quoted cell is not a comment
    assert table["description"].iloc[0] == "'=HYPERLINK(1) # not a comment"


def test_html_content(end_gauge, tmp_path):
    bf, result = end_gauge
    text = write_report(result, tmp_path / "r.html").read_text(encoding="utf-8")
    assert text.startswith("<!DOCTYPE html>")
    assert statement(result) in text
    assert bf.fingerprint in text
    for caution in CAUTIONS:
        assert caution.replace("'", "&#x27;") in text
    for word in (
        "hot liquid baths",
        "mercury",
        "local codes",
        "accredited practice",
        "decision rule",
    ):
        assert word in text
    # the embedded Pareto chart is a real PNG
    match = re.search(r'src="data:image/png;base64,([A-Za-z0-9+/=]+)"', text)
    assert match is not None
    assert base64.b64decode(match.group(1))[:8] == b"\x89PNG\r\n\x1a\n"
    # model and sensitivities: MathML plus LaTeX source, no network resources
    assert text.count("<math ") == 1 + len(result.contributions)
    assert r"\frac{\partial l}{\partial d}" in text
    assert "<script" not in text and "http://" not in text.replace(
        'xmlns="http://www.w3.org/1998/Math/MathML"', ""
    )
    for c in result.contributions:
        assert f"<td>{c.name}</td>" in text


def test_html_without_figures(end_gauge):
    _, result = end_gauge
    assert "data:image/png" not in render_report(result, "html", figures=False)


def test_html_escapes_user_text():
    text = render_report(_hostile_result(), "html")
    assert "<script>" not in text and "<img src=x" not in text
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in text
    assert "&lt;img src=x onerror=1&gt;" in text
    assert "50% &amp; _x_" in text


def test_latex_escapes_user_text(tmp_path):
    path = write_report(_hostile_result(title=HOSTILE_TEX), tmp_path / "h.tex")
    text = path.read_text(encoding="utf-8")
    assert r"50\% \& \_x\_" in text
    assert HOSTILE_TEX not in text
    assert r"\begin{tabular}" in text and r"\end{tabular}" in text
    assert r"\ensuremath{\pm}" in text  # the ± of the statement
    # every unescaped special character in the tabular rows is a column separator
    body = text.split(r"\begin{tabular}", 1)[1].split(r"\end{tabular}", 1)[0]
    rows = [r for r in body.splitlines() if r.endswith(r"\\")]
    assert len(rows) == 1 + 2  # header + two inputs
    assert {len(re.findall(r"(?<!\\)&", r)) for r in rows} == {11}


@pytest.mark.parametrize(
    ("raw", "escaped"),
    [
        ("&", r"\&"), ("%", r"\%"), ("$", r"\$"), ("#", r"\#"), ("_", r"\_"),
        ("{", r"\{"), ("}", r"\}"), ("~", r"\textasciitilde{}"),
        ("^", r"\textasciicircum{}"), ("\\", r"\textbackslash{}"),
        ("a\nb", "a b"),
    ],
)  # fmt: skip
def test_latex_escape_specials(raw, escaped):
    assert latex_escape(raw) == escaped


def test_markdown_table_and_escaping(end_gauge, tmp_path):
    bf, result = end_gauge
    text = write_report(result, tmp_path / "r.md").read_text(encoding="utf-8")
    assert "| quantity | estimate | unit | u(x) |" in text
    assert statement(result) in text
    assert bf.fingerprint in text
    table_rows = [line for line in text.splitlines() if line.startswith("| l\\_s |")]
    assert len(table_rows) == 1
    hostile = render_report(_hostile_result(), "md")
    assert "<script>" not in hostile and "&lt;script&gt;" in hostile
    assert markdown_escape("a|b\nc") == "a\\|b c"


@pytest.mark.parametrize("fmt", ["html", "md", "tex", "csv", "json"])
def test_reproducible(end_gauge, fmt):
    bf, result = end_gauge
    first = render_report(result, fmt)
    again = render_report(load_budget(END_GAUGE).budget.evaluate(), fmt)
    assert first == again
    assert first.endswith("\n")
    assert bf.fingerprint in first


def test_fingerprint_is_the_budgets(end_gauge):
    bf, result = end_gauge
    expected = result_to_dict(result)["fingerprint"]
    assert expected == result.fingerprint == bf.fingerprint
    assert expected.startswith("sha256:")
    for fmt in ("html", "md", "tex", "csv", "json"):
        assert expected in render_report(result, fmt)
    # reports take no fingerprint of their own: it is the budget's
    with pytest.raises(TypeError):
        render_report(result, "md", fingerprint="sha256:0")  # type: ignore[call-arg]


def test_unknown_format_and_extension(end_gauge, tmp_path):
    _, result = end_gauge
    with pytest.raises(InputError, match=r"report\.pdf.*allowed extensions: \.csv"):
        write_report(result, tmp_path / "report.pdf")
    assert not (tmp_path / "report.pdf").exists()
    with pytest.raises(InputError, match="'docx'"):
        render_report(result, "docx")
    with pytest.raises(InputError, match="does not exist"):
        write_report(result, tmp_path / "missing" / "r.html")
    assert format_for_path("R.MD") == "md"
    assert set(FORMATS.values()) == {"html", "md", "tex", "csv", "json"}


# --------------------------------------------------------------------------- command line
@pytest.mark.parametrize("ext", EXTENSIONS)
def test_cli_writes_each_format(tmp_path, capsys, ext):
    out = tmp_path / f"budget{ext}"
    assert main(["report", str(END_GAUGE), "-o", str(out)]) == 0
    assert "wrote" in capsys.readouterr().out
    text = out.read_text(encoding="utf-8")
    fp = load_budget(END_GAUGE).fingerprint
    assert fp in text
    again = tmp_path / f"again{ext}"
    assert main(["report", str(END_GAUGE), "--output", str(again)]) == 0
    assert again.read_bytes() == out.read_bytes()  # byte for byte, no timestamps
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []  # no temp files


def test_cli_higher_order(tmp_path):
    out = tmp_path / "h.json"
    assert main(["report", str(END_GAUGE), "-o", str(out), "--higher-order"]) == 0
    assert json.loads(out.read_text(encoding="utf-8"))["propagation"] == "higher-order"


BROKEN_TOML = 'format = "viscometry-budget/1"\n[measurand\n'
FAILS_TO_EVALUATE = """format = "viscometry-budget/1"
[measurand]
name = "y"
unit = "1"
model = "log(a - b)"
[inputs.a]
value = 1.0
unit = "1"
standard_uncertainty = 0.1
[inputs.b]
value = 1.0
unit = "1"
standard_uncertainty = 0.1
"""


@pytest.mark.parametrize("content", [BROKEN_TOML, FAILS_TO_EVALUATE], ids=["load", "evaluate"])
def test_cli_failure_writes_nothing(tmp_path, capsys, content):
    bad = tmp_path / "bad.toml"
    bad.write_text(content, encoding="utf-8")
    new = tmp_path / "new.html"
    assert main(["report", str(bad), "-o", str(new)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("viscometry: error:") and "bad.toml" in err
    assert not new.exists()
    old = tmp_path / "old.md"
    old.write_text("previous report\n", encoding="utf-8")
    assert main(["report", str(bad), "-o", str(old)]) == 2
    assert old.read_text(encoding="utf-8") == "previous report\n"
    assert sorted(p.name for p in tmp_path.iterdir()) == ["bad.toml", "old.md"]


@pytest.mark.parametrize("spelling", ["same", "relative", "dotted", "symlink"])
def test_cli_refuses_to_overwrite_its_own_budget_file(tmp_path, capsys, monkeypatch, spelling):
    # a budget file saved as .json (an extension a report may have) must never be replaced by
    # the report of itself, however the output path is written
    budget = tmp_path / "budget.json"
    budget.write_bytes(END_GAUGE.read_bytes())
    before = budget.read_bytes()
    (tmp_path / "sub").mkdir()
    (tmp_path / "link.json").symlink_to(budget)
    monkeypatch.chdir(tmp_path)
    assert main(["evaluate", str(budget)]) == 0  # it is a readable budget file
    capsys.readouterr()
    out = {"same": str(budget), "relative": "budget.json", "dotted": "./sub/../budget.json",
           "symlink": "link.json"}[spelling]  # fmt: skip
    assert main(["report", str(budget), "-o", out]) == 2
    captured = capsys.readouterr()
    assert captured.out == ""
    assert captured.err.startswith("viscometry: error: ")
    assert "is the budget file itself" in captured.err
    assert budget.read_bytes() == before  # byte for byte
    assert (tmp_path / "link.json").is_symlink()
    assert sorted(p.name for p in tmp_path.iterdir()) == ["budget.json", "link.json", "sub"]


def test_cli_unknown_extension(tmp_path, capsys):
    out = tmp_path / "budget.pdf"
    assert main(["report", str(END_GAUGE), "-o", str(out)]) == 2
    err = capsys.readouterr().err
    assert "budget.pdf" in err and ".html" in err and ".json" in err
    assert not out.exists()


def test_cli_requires_output(capsys):
    assert main(["report", str(END_GAUGE)]) == 2
    assert "-o" in capsys.readouterr().err


def test_csv_reads_from_text(end_gauge):
    _, result = end_gauge
    text = render_report(result, "csv")
    assert len(pd.read_csv(io.StringIO(text), comment="#")) == len(result.contributions)


def test_correlated_budget_in_every_format():
    a = InputQuantity.normal("a", 1.0, 0.3, "mm")
    b = InputQuantity.normal("b", 2.0, 0.4, "mm")
    result = Budget.from_formula(
        "y", "a + b", [a, b], "mm", correlations=[Correlation("a", "b", 0.5)]
    ).evaluate()
    for fmt in ("html", "md", "tex"):
        assert "r(a, b) = 0.5" in render_report(result, fmt)


@pytest.mark.parametrize("fmt", ["md", "tex", "csv"])
def test_a_title_with_a_newline_stays_one_line(fmt):
    # A newline in a title must not start a Markdown heading or a CSV comment line of its own.
    text = render_report(_hostile_result(title="Bath A\n# forged heading\r\x1b[2J"), fmt)
    assert "\n# forged heading" not in text
    assert "\x1b" not in text and "\r" not in text
    assert any("Bath A" in line and "forged heading" in line for line in text.splitlines())


def test_a_derivative_too_big_to_typeset_is_named_not_printed():
    # The derivative of the IAPWS water-viscosity formula has ~10⁴ nodes: typesetting it as
    # LaTeX and MathML took longer than deriving it and nobody can read it.
    t = InputQuantity.normal("T", 20.0, 0.01, "degC")
    result = Budget.from_formula("eta", "water_viscosity(T)", [t], "mPa*s").evaluate()
    for fmt in ("md", "html"):  # the .tex fragment holds the table only
        text = render_report(result, fmt)
        assert "not typeset" in text
    assert "\\frac" in render_report(_hostile_result(), "md")  # small ones still are
