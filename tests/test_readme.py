"""The README's code example runs and prints what the README says it prints."""

import re
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def _run_examples(capsys):
    text = README.read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert blocks, "README has no python example"
    namespace: dict = {}
    for block in blocks:
        exec(compile(block, "README.md", "exec"), namespace)  # our own documentation
    return text, capsys.readouterr().out, namespace


def test_readme_python_example(capsys):
    text, out, _ns = _run_examples(capsys)
    # Statements write the measurand's symbol ("ν = ...", viscometry.text.symbol), so a
    # claimed output line is "# <symbol> = (<value> ± <U>) <unit>, k = ...".
    claimed = re.findall(r"^# (\S+ = \(.* ± .*\).*)$", text, flags=re.M)
    assert claimed, "README claims no printed result statement (expected '# ν = (… ± …) …')"
    for line in claimed:
        assert line in out, f"README claims {line!r} but the example printed:\n{out}"


def test_readme_fingerprint_claim(capsys):
    # "print(budget.fingerprint)  # the same budget loaded from a file has the same fingerprint"
    from viscometry.io import budget_to_document, dumps_budget, loads_budget

    _text, out, ns = _run_examples(capsys)
    budget = ns["budget"]
    assert budget.fingerprint.startswith("sha256:") and budget.fingerprint in out
    again = loads_budget(dumps_budget(budget_to_document(budget)), "README round trip")
    assert again.budget.fingerprint == budget.fingerprint


def test_readme_gives_the_two_commands_and_ci_runs_the_test_one():
    text = README.read_text(encoding="utf-8")
    assert "make demo" in text and "make test" in text
    ci = (README.parent / ".ci" / "run").read_text(encoding="utf-8")
    assert re.search(r"^make test$", ci, flags=re.M)
