"""The README's code example runs and prints what the README says it prints."""

import re
from pathlib import Path

README = Path(__file__).resolve().parents[1] / "README.md"


def test_readme_python_example(capsys):
    text = README.read_text(encoding="utf-8")
    blocks = re.findall(r"```python\n(.*?)```", text, flags=re.S)
    assert blocks, "README has no python example"
    for block in blocks:
        exec(compile(block, "README.md", "exec"), {})  # our own documentation, not user input
    out = capsys.readouterr().out
    for claimed in re.findall(r"^# (nu = .*)$", text, flags=re.M):
        assert claimed in out


def test_readme_gives_the_two_commands_and_ci_runs_the_test_one():
    text = README.read_text(encoding="utf-8")
    assert "make demo" in text and "make test" in text
    ci = (README.parent / ".ci" / "run").read_text(encoding="utf-8")
    assert re.search(r"^make test$", ci, flags=re.M)
