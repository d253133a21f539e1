"""Safe terminal output: nothing from a file or a file name can move the cursor, reorder a
line or forge one, and every command works whatever the output encoding.

* Text output shows control characters, escape sequences, bidirectional and zero-width
  characters and line separators of titles, names, descriptions, sources, currency labels
  and file names as escapes, and keeps each on its own line (a property test over hostile
  budgets, in-process through :func:`viscometry.cli.main`).
* Error and warning lines are escaped and cut to a readable length.
* Standard output that cannot encode ``±``, ``°``, ``η`` (ASCII, Latin-1, the C locale) gets
  ASCII spellings instead of an error (in-process with an ASCII stream, and in a subprocess
  for real locales); JSON stays exact JSON of the original strings.

Check values: the escapes (``\\x1b``, ``\\u202e``), the ASCII spellings (``+/-``, ``deg``,
``eta``), the cut mark ``…`` and the limits are this package's own wording and choice (no
external source); the character categories are those of the Unicode Character Database as
shipped with Python (:mod:`unicodedata`).
"""

from __future__ import annotations

import io
import json
import os
import subprocess
import sys
import tempfile
import unicodedata
from pathlib import Path

import pytest
from hypothesis import HealthCheck, Phase, given, settings
from hypothesis import strategies as st

from viscometry.cli import main
from viscometry.io.json_out import dumps
from viscometry.text import (
    MESSAGE_LIMIT,
    ascii_spelling,
    escape_controls,
    is_unsafe,
    message_line,
    one_line,
)

REPO = Path(__file__).resolve().parents[1]
UNSAFE = {"Cc", "Cf", "Zl", "Zp", "Cs"}


def _toml_string(text: str) -> str:
    """A TOML basic string holding ``text`` exactly (anything but letters, digits and spaces
    written as a \\U escape, so control characters are legal)."""
    body = "".join(
        c if (c.isascii() and (c.isalnum() or c == " ")) else f"\\U{ord(c):08X}" for c in text
    )
    return f'"{body}"'


def budget_text(title: str = "clean", note: str = "x", source: str = "x") -> str:
    """y = a + b (mm) with the given title, descriptions and sources."""
    t, n, s = _toml_string(title), _toml_string(note), _toml_string(source)
    return f"""format = "viscometry-budget/1"
title = {t}
[measurand]
name = "y"
unit = "mm"
model = "a + b"
description = {n}
[inputs.a]
value = 1.0
unit = "mm"
standard_uncertainty = 0.3
description = {n}
source = {s}
[inputs.b]
unit = "mm"
readings = [1.9, 2.1, 2.0, 2.0]
description = {n}
source = {s}
"""


def candidates_text(name: str = "x", note: str = "x", currency: str = "EUR") -> str:
    """Two upgrade candidates whose names, descriptions, title and currency hold ``name``…"""
    n1, n2 = _toml_string(f"c1 {name}"), _toml_string(f"c2 {name}")
    d, cur = _toml_string(note), _toml_string(currency)
    return f"""title = {d}
currency = {cur}
[[candidate]]
name = {n1}
cost = 100
description = {d}
[candidate.changes]
a = 0.1
[[candidate]]
name = {n2}
cost = 50
description = {d}
[candidate.changes]
b = 0.01
"""


def _no_unsafe_characters(text: str) -> None:
    for line in text.split("\n"):
        bad = [c for c in line if unicodedata.category(c) in UNSAFE]
        assert not bad, (bad, line)


def _run(capsys, argv: list[str]) -> tuple[int, str, str]:
    code = main(argv)
    captured = capsys.readouterr()
    return code, captured.out, captured.err


def _commands(budget: Path, candidates: Path) -> list[list[str]]:
    return [
        ["evaluate", str(budget)],
        ["audit", str(budget)],
        ["plan", str(budget), str(candidates), "--target", "0.5"],
        ["scope", str(budget), "--over", "a", "--from", "0.5", "--to", "1.5", "--points", "3"],
    ]


# Hostile pieces: escape sequences, carriage returns, newlines, C0/C1 controls, DEL, bidi
# overrides and isolates, marks, zero-width characters, BOM, soft hyphen, line and paragraph
# separators, a tag character, and text that would forge a verdict.
HOSTILE = st.sampled_from(
    ["\x1b[2J", "\x1b[H", "\x1b]0;t\x07", "\r", "\n", "\r\n", "\t", "\x00", "\x08", "\x7f",
     "\x85", "\x9b", "\u202a", "\u202e", "\u2066", "\u2069", "\u200e", "\u200f", "\u061c",
     "\u200b", "\u200d", "\u2060", "\ufeff", "\u2028", "\u2029", "\u00ad", "\U000e0001",
     "MATCH all good", " ", "é", "η"]
)  # fmt: skip
RANDOM_UNSAFE = st.characters(categories=["Cc", "Cf", "Zl", "Zp"])
HOSTILE_TEXT = st.lists(st.one_of(HOSTILE, RANDOM_UNSAFE), max_size=8).map("".join)
# File names: anything but "/" and NUL, undecodable bytes (lone surrogates) included.
NAME_PIECE = st.one_of(
    st.sampled_from(["\x1b[2J", "\r", "\n", "\u202e", "\u200b", "\udcff", "\udc9b", "MATCH"]),
    st.characters(categories=["Cc", "Cf", "Zl", "Zp"], exclude_characters="/\x00"),
)
HOSTILE_NAME = st.lists(NAME_PIECE, max_size=4).map("".join)

PROPERTY = settings(
    max_examples=25,
    derandomize=True,
    deadline=None,
    database=None,
    suppress_health_check=[HealthCheck.function_scoped_fixture, HealthCheck.too_slow],
    phases=[Phase.explicit, Phase.generate],  # no shrinking: a failure shows its example at once
)


def _outputs(capsys, folder: Path, file_name: str, texts: dict[str, str]) -> list[tuple]:
    budget = folder / f"b{file_name}.toml"
    budget.write_text(budget_text(texts["title"], texts["note"], texts["source"]))
    candidates = folder / f"c{file_name}.toml"
    candidates.write_text(candidates_text(texts["name"], texts["note"], texts["currency"]))
    return [_run(capsys, argv) for argv in _commands(budget, candidates)]


@PROPERTY
@given(
    title=HOSTILE_TEXT, note=HOSTILE_TEXT, source=HOSTILE_TEXT, name=HOSTILE_TEXT,
    currency=HOSTILE_TEXT, file_name=HOSTILE_NAME,
)  # fmt: skip
def test_no_printed_line_carries_a_control_character_from_the_input(
    capsys, title, note, source, name, currency, file_name
):
    hostile = {"title": title, "note": note, "source": source, "name": name,
               "currency": f"EUR{currency}"}  # fmt: skip
    clean = dict.fromkeys(hostile, "x")
    with tempfile.TemporaryDirectory() as d:
        got = _outputs(capsys, Path(d), file_name, hostile)
        expected = _outputs(capsys, Path(d), "x", clean)
    for (code, out, err), (code0, out0, err0) in zip(got, expected, strict=True):
        assert code == code0 == 0, (err, err0)
        _no_unsafe_characters(out)
        _no_unsafe_characters(err)
        assert out.count("\n") == out0.count("\n"), (out, out0)
        assert err.count("\n") == err0.count("\n"), (err, err0)


def test_an_escape_sequence_in_the_title_is_shown_escaped(tmp_path, capsys):
    p = tmp_path / "b.toml"
    p.write_text(budget_text("\x1b[2J\x1b[HMATCH all good \u202e\nverdict: PASSED"))
    code, out, err = _run(capsys, ["evaluate", str(p)])
    assert code == 0 and err == ""
    first = out.split("\n")[0]
    # this package's own escapes (no external source)
    assert first == "\\x1b[2J\\x1b[HMATCH all good \\u202e verdict: PASSED"
    assert not any(line.startswith("verdict") for line in out.split("\n"))


def test_a_carriage_return_in_a_file_name_does_not_forge_a_verdict(tmp_path, capsys):
    p = tmp_path / "x\rMATCH.toml"
    p.write_text("")
    code, out, _err = _run(capsys, ["audit", str(p)])
    assert code == 2
    line = out.split("\n")[0]
    assert line.startswith("ERROR ") and "\r" not in out
    assert line.count("MATCH.toml") == 1, line  # the file is named once, not twice


# ----------------------------------------------------------------------------- JSON
def test_json_round_trips_hostile_text_exactly(tmp_path, capsys):
    hostile = "\x1b[2J\u202eMATCH\u200b\u2028\x85\U000e0001é η"
    folder = tmp_path / f"d{hostile.replace(chr(0x2028), '')}"
    folder.mkdir()
    budget = folder / "b.toml"
    budget.write_text(budget_text(hostile, hostile, hostile))
    cands = folder / "c.toml"
    cands.write_text(candidates_text(hostile, hostile, hostile))
    code, out, _ = _run(capsys, ["plan", "--json", str(budget), str(cands)])
    assert code == 0
    _no_unsafe_characters(out)
    data = json.loads(out)
    assert [c["name"] for c in data["candidates"]] == [f"c1 {hostile}", f"c2 {hostile}"]
    assert {c["description"] for c in data["candidates"]} == {hostile}
    assert data["currency"] == hostile and data["source"] == str(budget)
    code, out, _ = _run(capsys, ["audit", "--json", str(budget)])
    _no_unsafe_characters(out)
    assert json.loads(out)["verdicts"][0]["path"] == str(budget)


def test_dumps_escapes_unsafe_characters_and_decodes_to_the_original():
    texts = ["\u202eKO", "\x85\x9b", "a\u2028b", "\ufeff", "\U000e0001", "\udcff", "η ± 1"]
    for ascii_only in (False, True):
        text = dumps(texts, ascii_only=ascii_only)
        assert json.loads(text) == texts
        assert not any(is_unsafe(c) for c in text.replace("\n", ""))
    assert "η ± 1" in dumps(texts) and "\\u03b7" in dumps(texts, ascii_only=True)


# ----------------------------------------------------------------------------- errors
def test_error_line_for_a_file_name_with_escapes_is_escaped(tmp_path, capsys):
    code, out, err = _run(capsys, ["evaluate", str(tmp_path / "nope\x1b[2J\u202e.toml")])
    assert code == 2 and out == ""
    lines = err.split("\n")
    assert len(lines) == 2 and lines[1] == "", lines
    assert lines[0].startswith("viscometry: error: ")
    assert "nope\\x1b[2J\\u202e.toml" in lines[0]
    _no_unsafe_characters(err)


def test_a_huge_key_is_shortened_in_the_error_line(tmp_path, capsys):
    p = tmp_path / "longkey.toml"
    p.write_text(budget_text().replace("[inputs.a]", "[inputs." + "k" * 900_000 + "]"))
    code, _out, err = _run(capsys, ["evaluate", str(p)])
    line = err.rstrip("\n")
    assert code == 2 and "\n" not in line
    assert line.startswith(f"viscometry: error: {p}: [inputs.kkkk"), line[:200]
    assert "…" in line and len(line) < 1000, len(line)


def test_message_line_keeps_the_start_and_bounds_the_length():
    text = "f.toml: " + " ".join(["[inputs.k]", "x" * 5000] * 50) + " the end"
    line = message_line(text)
    assert line.startswith("f.toml: [inputs.k] xxx") and len(line) <= MESSAGE_LIMIT
    assert message_line("a\x1b[2J\nb") == "a\\x1b[2J b"


# ----------------------------------------------------------------------------- helpers
@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("a\x1b[31mb", "a\\x1b[31mb"),
        ("\u202eabc\u202c", "\\u202eabc\\u202c"),
        ("a\u2066b\u2069", "a\\u2066b\\u2069"),
        ("a\u200eb\u200f\u061c", "a\\u200eb\\u200f\\u061c"),
        ("zero\u200bwidth\u200d\u2060\ufeff", "zero\\u200bwidth\\u200d\\u2060\\ufeff"),
        ("line\u2028para\u2029next\x85end", "line para next end"),  # separators fold
        ("soft\u00adhyphen\x9b", "soft\\xadhyphen\\x9b"),
        ("tag\U000e0041", "tag\\U000e0041"),
        ("file\udcff", "file\\udcff"),
        ("η ± 0.1 °C", "η ± 0.1 °C"),
    ],
)
def test_one_line_escapes_every_unsafe_category(text, expected):
    # this package's own escapes (no external source)
    assert one_line(text) == expected


def test_escape_controls_keeps_tab_and_newline_only():
    assert escape_controls("a\tb\nc\rd\x1b\u202e") == "a\tb\nc\\x0dd\\x1b\\u202e"


@pytest.mark.parametrize(
    ("text", "expected"),
    [
        ("η = (1.0016 ± 0.0013) mPa·s", "eta = (1.0016 +/- 0.0013) mPa*s"),
        ("20 °C, ν_eff = ∞", "20 degC, nu_eff = inf"),
        ("µm μm mm² m³ K⁻¹ m⁴", "um um mm^2 m^3 K^-1 m^4"),
        ("p ≈ 95 %, k ≥ 2, x ≤ 1, 3×4", "p ~ 95 %, k >= 2, x <= 1, 3x4"),
        ("a — b – c … d′", "a - b - c ... d'"),
        ("ρ Δ σ √ x₁ Ω", "rho Delta sigma sqrt x_1 Omega"),
        ("Müller ☃", "M\\xfcller \\u2603"),
    ],
)
def test_ascii_spellings(text, expected):
    # this package's own ASCII spellings (no external source)
    assert ascii_spelling(text) == expected


# ----------------------------------------------------------------------------- encodings
class _Streams:
    """sys.stdout and sys.stderr as byte buffers with a given encoding, for one test."""

    def __init__(self, monkeypatch, encoding: str):
        self.out = io.TextIOWrapper(io.BytesIO(), encoding=encoding, newline="\n")
        self.err = io.TextIOWrapper(io.BytesIO(), encoding=encoding, newline="\n")
        monkeypatch.setattr(sys, "stdout", self.out)
        monkeypatch.setattr(sys, "stderr", self.err)

    def read(self) -> tuple[bytes, bytes]:
        values = []
        for s in (self.out, self.err):
            s.flush()
            values.append(s.buffer.getvalue())  # type: ignore[attr-defined]
            s.buffer.seek(0)
            s.buffer.truncate()
        return values[0], values[1]


@pytest.fixture
def files(tmp_path: Path) -> dict[str, Path]:
    budget = tmp_path / "b.toml"
    budget.write_text(budget_text("Water at 20 °C, ± and ∞ in the title"))
    cands = tmp_path / "c.toml"
    cands.write_text(candidates_text("upgrade ✓", "η", "€"))
    return {"budget": budget, "candidates": cands, "folder": tmp_path}


def _every_command(f: dict[str, Path]) -> list[list[str]]:
    b, c = str(f["budget"]), str(f["candidates"])
    return [
        *_commands(f["budget"], f["candidates"]),
        ["simulate", b, "--trials", "2000", "--seed", "1"],
        ["decide", "--budget", b, "--lower", "0", "--upper", "10"],
        ["score", "en", "--value", "1.0", "-U", "0.1", "--assigned", "1.02",
         "--assigned-expanded-uncertainty", "0.05"],
        ["methods"], ["methods", "glass_capillary_kinetic"], ["plan", b, c, "--all"],
        ["report", b, "-o", str(f["folder"] / "r.md")],
        ["workspace", str(f["folder"] / "ws")],
    ]  # fmt: skip


def test_every_command_works_on_an_ascii_stream(monkeypatch, files):
    streams = _Streams(monkeypatch, "ascii")
    seen = b""
    for argv in _every_command(files):
        code = main(argv)
        out, err = streams.read()
        assert code == 0, (argv, err)
        assert b"unexpected" not in err, err
        out.decode("ascii")  # nothing but ASCII reached the stream
        seen += out
    # this package's own ASCII spellings (no external source)
    for spelling in (b"+/-", b"deg", b"eta", b"inf"):
        assert spelling in seen, spelling
    assert (files["folder"] / "r.md").read_text(encoding="utf-8").count("±") > 0  # files: UTF-8


def test_json_on_an_ascii_stream_is_exact(monkeypatch, files):
    streams = _Streams(monkeypatch, "ascii")
    assert main(["plan", "--json", str(files["budget"]), str(files["candidates"])]) == 0
    out, _ = streams.read()
    data = json.loads(out.decode("ascii"))
    assert data["currency"] == "€" and data["candidates"][0]["name"] == "c1 upgrade ✓"
    assert "±" in data["baseline"]["statement"]


def test_latin1_stream_keeps_what_it_can_encode(monkeypatch, files):
    streams = _Streams(monkeypatch, "latin-1")
    assert main(["evaluate", str(files["budget"])]) == 0
    lines = streams.read()[0].decode("latin-1").split("\n")
    assert lines[0] == "Water at 20 °C, ± and inf in the title"  # ∞ is not Latin-1
    assert any(line.startswith("result: y = (") and " ± " in line for line in lines)


def test_error_line_on_an_ascii_stream(monkeypatch, tmp_path):
    streams = _Streams(monkeypatch, "ascii")
    assert main(["evaluate", str(tmp_path / "absent ±.toml")]) == 2
    _, err = streams.read()
    assert err.decode("ascii").startswith("viscometry: error: ")
    assert b"absent +/-.toml" in err


def test_streams_are_restored_after_main(capsys, files):
    before_out, before_err = sys.stdout, sys.stderr
    errors = (sys.stdout.errors, sys.stderr.errors)
    assert main(["evaluate", str(files["budget"])]) == 0
    assert sys.stdout is before_out and sys.stderr is before_err
    assert (sys.stdout.errors, sys.stderr.errors) == errors
    capsys.readouterr()


@pytest.mark.parametrize(
    "env",
    [
        {"PYTHONIOENCODING": "ascii"},
        {"LC_ALL": "C", "LANG": "C", "PYTHONUTF8": "0", "PYTHONIOENCODING": None},
    ],
    ids=["PYTHONIOENCODING=ascii", "LC_ALL=C"],
)
def test_real_ascii_locales_in_a_subprocess(files, env):
    environment = dict(os.environ)
    for key, value in env.items():
        if value is None:
            environment.pop(key, None)
        else:
            environment[key] = value
    script = (
        "import sys; from viscometry.cli import main\n"
        "codes = [main(a) for a in [['evaluate', sys.argv[1]], ['audit', sys.argv[1]],"
        " ['methods', 'glass_capillary_kinetic'], ['evaluate', '--json', sys.argv[1]]]]\n"
        "print(codes)\n"
    )
    done = subprocess.run(
        [sys.executable, "-c", script, str(files["budget"])], capture_output=True,
        env=environment, cwd=REPO, timeout=120,
    )  # fmt: skip
    out, err = done.stdout.decode("ascii"), done.stderr.decode("ascii")
    assert done.returncode == 0 and err == "", err
    assert out.rstrip().endswith("[0, 0, 0, 0]"), out[-300:]
    # this package's own ASCII spellings (no external source)
    lines = out.split("\n")
    assert lines[0] == "Water at 20 degC, +/- and inf in the title", lines[0]
    assert any(
        line.startswith("result: y = (") and " +/- " in line and "p ~ " in line for line in lines
    )
    assert "glass_capillary_kinetic - Glass capillary viscometer" in out
    assert "  nu = C*t - E/t**2    [m^2/s]" in lines
    last_json = out[out.index('{\n  "schema": "viscometry.evaluate/1"') : out.rindex("}") + 1]
    assert "±" in json.loads(last_json)["statement"]


@pytest.mark.parametrize(
    "argv",
    [
        ["decide", "--value", "1", "-u", "0.1", "--upper", "2", "--unit", "m\x1b[2J\u202e\nOK"],
        ["scope", "{budget}", "--over", "a\x1b[2J\nMATCH", "--from", "1", "--to", "2"],
        ["plan", "{budget}", "{budget}\x1b[2J"],
        ["evaluate", "--json", "{budget}\u202e"],
    ],
    ids=["decide --unit", "scope --over", "plan candidates name", "evaluate --json name"],
)
def test_option_values_are_shown_escaped(argv, files, capsys):
    argv = [a.replace("{budget}", str(files["budget"])) for a in argv]
    code, out, err = _run(capsys, argv)
    _no_unsafe_characters(out + err)
    assert len((out + err).strip("\n").split("\n")) == (5 if code == 0 else 1), (out, err)
