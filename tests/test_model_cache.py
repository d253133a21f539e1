"""The compiled-model cache: the engine's store hook and the on-disk store (an edge).

A hit gives the same numbers bit for bit; damaged, truncated, foreign or hostile entries are
ignored (and rewritten), and nothing in them runs; two processes writing the same entry at
once both succeed; ``VISCOMETRY_CACHE=off`` turns the cache off. Expected values are
exact analytic or this package's own behaviour (no external source).
"""

from __future__ import annotations

import builtins
import contextlib
import json
import os
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from viscometry.cache import DiskStore, cache_directory, install_store
from viscometry.gum import Budget, InputQuantity
from viscometry.gum import model as model_module
from viscometry.gum.model import MeasurementModel, compile_model, compiled_key
from viscometry.gum.store import compiled_store, set_compiled_store

ROOT = Path(__file__).resolve().parents[1]
NAMES = [f"x{i}" for i in range(12)]
FORMULA = "x0 * x1 * exp(x2) / (x3 * x4 * sqrt(x5)) + x6 * x7 - x8 / x9 + log(x10) * x11**2"
VALUES = [1.0 + 0.1 * i for i in range(12)]


@pytest.fixture
def store(tmp_path):
    """A disk store in a temporary folder, installed for the test only; the in-memory
    cache of compiled models is emptied before and after."""
    disk = DiskStore(tmp_path / "cache")
    previous = set_compiled_store(disk)
    model_module._compile_cached.cache_clear()
    yield disk
    set_compiled_store(previous)
    model_module._compile_cached.cache_clear()


def _model() -> MeasurementModel:
    return MeasurementModel.from_formula(FORMULA, NAMES)


def _no_compiling(monkeypatch):
    def forbidden(*_args, **_kwargs):
        raise AssertionError("the model was compiled although the cache had it")

    monkeypatch.setattr(model_module, "compile_expression", forbidden)


def _entry_path(store: DiskStore) -> Path:
    path = store.path(compiled_key(_model()))
    assert path is not None
    return path


def test_a_hit_gives_the_same_numbers_bit_for_bit(store, monkeypatch):
    cold = compile_model(_model())
    assert _entry_path(store).is_file()
    x = np.array(VALUES)
    arrays = [x * (1 + 0.01 * k) for k in range(3)]
    expected = (cold.value(*x), cold.gradient(*x), cold.gradient(*np.stack(arrays, axis=1)))
    model_module._compile_cached.cache_clear()
    _no_compiling(monkeypatch)
    hot = compile_model(_model())
    assert hot is not cold
    got = (hot.value(*x), hot.gradient(*x), hot.gradient(*np.stack(arrays, axis=1)))
    for a, b in zip(expected, got, strict=True):
        assert np.array_equal(a, b) and a.tobytes() == b.tobytes()
    # the exact symbolic derivatives are still there, derived from the expression
    assert hot.derivative(0) == cold.derivative(0)


def test_a_budget_evaluates_identically_from_the_cache(store, monkeypatch):
    inputs = [InputQuantity.normal(n, v, 0.01) for n, v in zip(NAMES, VALUES, strict=True)]
    first = Budget.from_formula("y", FORMULA, inputs).evaluate()
    model_module._compile_cached.cache_clear()
    _no_compiling(monkeypatch)
    second = Budget.from_formula("y", FORMULA, inputs).evaluate()
    assert (first.value, first.standard_uncertainty) == (second.value, second.standard_uncertainty)
    assert [c.sensitivity for c in first.contributions] == [
        c.sensitivity for c in second.contributions
    ]


def _damage(path: Path, how: str) -> None:
    text = path.read_text(encoding="ascii")
    record = json.loads(text)
    if how == "truncated":
        path.write_text(text[: len(text) // 2], encoding="ascii")
    elif how == "garbage":
        path.write_bytes(b"\x80\x00\xffnot json at all")
    elif how == "empty":
        path.write_bytes(b"")
    elif how == "checksum":
        record["payload"]["gradient"]["steps"][0] = ["int", 7]
        path.write_text(json.dumps(record), encoding="ascii")
    elif how == "version":
        record["format"] = "viscometry-compiled-cache/999"
        path.write_text(json.dumps(record), encoding="ascii")
    elif how == "deep":
        path.write_text("[" * 100_000 + "]" * 100_000, encoding="ascii")


@pytest.mark.parametrize("how", ["truncated", "garbage", "empty", "checksum", "version", "deep"])
def test_a_damaged_entry_is_ignored_and_rewritten(store, how):
    reference = compile_model(_model()).gradient(*VALUES)
    path = _entry_path(store)
    _damage(path, how)
    model_module._compile_cached.cache_clear()
    again = compile_model(_model())
    assert np.array_equal(again.gradient(*VALUES), reference)
    assert store.get(compiled_key(_model())) is not None  # rebuilt and readable again


@contextlib.contextmanager
def _spies():
    """Record calls of eval/exec/compile/__import__ of modules outside numpy/sympy."""
    calls: list[str] = []
    real = {n: getattr(builtins, n) for n in ("eval", "exec", "compile", "__import__")}

    def spy(name):
        def wrapper(*args, **kwargs):
            if name != "__import__" or str(args[0]).split(".")[0] in {"os", "subprocess", "pickle"}:
                calls.append(f"{name}:{str(args[0])[:40]}")
            return real[name](*args, **kwargs)

        return wrapper

    for n in real:
        setattr(builtins, n, spy(n))
    try:
        yield calls
    finally:
        for n, f in real.items():
            setattr(builtins, n, f)


def _hostile_payloads(good: dict) -> list[dict]:
    steps = good["gradient"]["steps"]
    return [
        {**good, "gradient": {**good["gradient"], "steps": [["__import__", "os"]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": [["eval", 0]] + steps}},
        {**good, "value": {"py/object": "os.system", "args": ["touch pwned"]}},
        {**good, "gradient": {**good["gradient"], "steps": [["add", 0, 10**6]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": [["float", "inf"]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": [["float", "0x1p+5000"]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": [["int", 2**2000]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": [["mul", 0]] + steps}},
        {**good, "gradient": {**good["gradient"], "steps": "mul"}},
        {**good, "gradient": {**good["gradient"], "version": 2}},
        {**good, "scheme": "viscometry-compiled/0"},
        {**good, "gradient": {**good["gradient"], "outputs": [0]}},  # wrong shape
        {**good, "inputs": ["import os"]},
        {**good, "key": "sha256:" + "0" * 64},
    ]


def test_hostile_entries_are_refused_and_nothing_runs(store, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    key = compiled_key(_model())
    reference = compile_model(_model()).gradient(*VALUES)
    good = store.get(key)
    assert good is not None
    for payload in _hostile_payloads(good):
        store.put(key, payload)  # a valid checksum: only the engine's checks stand
        model_module._compile_cached.cache_clear()
        with _spies() as calls:
            compiled = compile_model(_model())
            gradient = compiled.gradient(*VALUES)
        assert not [c for c in calls if not c.startswith("compile:")], calls
        assert np.array_equal(gradient, reference)
        assert not (tmp_path / "pwned").exists()
    # a pickle or a Python file in the folder is never looked at
    assert all(p.suffix in (".json",) for p in store.directory.iterdir())


def test_links_pipes_and_foreign_keys_are_not_read(store, tmp_path):
    key = compiled_key(_model())
    path = store.path(key)
    store.directory.mkdir(parents=True)
    os.symlink("/dev/zero", path)
    assert store.get(key) is None
    os.unlink(path)
    os.mkfifo(path)
    assert store.get(key) is None  # never opened: no blocking read
    os.unlink(path)
    assert store.path("../../etc/passwd") is None and store.get("../x") is None
    compile_model(_model())  # a miss writes a regular file in place of what was there
    assert path.is_file() and not path.is_symlink()


def test_an_unwritable_cache_costs_only_the_compilation(tmp_path):
    blocked = tmp_path / "file-not-folder"
    blocked.write_text("x", encoding="ascii")
    previous = set_compiled_store(DiskStore(blocked / "cache"))
    model_module._compile_cached.cache_clear()
    try:
        assert compile_model(_model()).value(*VALUES).shape == ()
    finally:
        set_compiled_store(previous)
        model_module._compile_cached.cache_clear()


_WORKER = """
import sys
from viscometry.cache import install_store
from viscometry.gum.model import MeasurementModel, compile_model
install_store()
m = MeasurementModel.from_formula(sys.argv[1], [f"x{i}" for i in range(40)])
print(repr(list(compile_model(m).gradient(*[1.0 + i / 40 for i in range(40)]))))
"""


def test_two_processes_writing_the_same_entry_both_succeed(tmp_path):
    names = [f"x{i}" for i in range(40)]
    formula = " * ".join(names[:20]) + " / (" + " * ".join(names[20:]) + ")"
    env = {**os.environ, "VISCOMETRY_CACHE": str(tmp_path / "shared")}
    runs = [
        subprocess.Popen(
            [sys.executable, "-c", _WORKER, formula],
            env=env,
            cwd=ROOT,
            stdout=subprocess.PIPE,
            stderr=subprocess.PIPE,
            text=True,
        )  # fmt: skip
        for _ in range(2)
    ]
    outputs = [r.communicate(timeout=120) for r in runs]
    assert [r.returncode for r in runs] == [0, 0], [o[1][-500:] for o in outputs]
    assert outputs[0][0] == outputs[1][0]
    entries = list((tmp_path / "shared").iterdir())
    assert len(entries) == 1 and entries[0].suffix == ".json"  # no temporary file left
    # and a third process reads what they wrote, with the same numbers
    third = subprocess.run(
        [sys.executable, "-c", _WORKER, formula], env=env, cwd=ROOT,
        capture_output=True, text=True, timeout=120, check=True,
    )  # fmt: skip
    assert third.stdout == outputs[0][0]


def test_opt_out_and_relocation_by_environment(tmp_path):
    previous = compiled_store()
    try:
        for off in ("off", "OFF", "0", "no", "false", "none"):
            assert install_store({"VISCOMETRY_CACHE": off}) is None
            assert compiled_store() is None
        store = install_store({"VISCOMETRY_CACHE": str(tmp_path / "here")})
        assert store is not None and store.directory == tmp_path / "here"
        assert compiled_store() is store
    finally:
        set_compiled_store(previous)
    home = Path("~").expanduser()
    assert cache_directory({}) is None  # off unless asked for
    assert cache_directory({"VISCOMETRY_CACHE": " "}) is None
    for on in ("on", "ON", "1", "yes", "true"):
        on_env = {"VISCOMETRY_CACHE": on}
        assert cache_directory(on_env) == home / ".cache" / "viscometry" / "compiled"
        assert cache_directory({**on_env, "XDG_CACHE_HOME": "relative"}) == cache_directory(on_env)
        assert (
            cache_directory({**on_env, "XDG_CACHE_HOME": str(tmp_path)})
            == tmp_path / "viscometry" / "compiled"
        )


def test_opt_out_in_a_process_writes_nothing(tmp_path):
    env = {
        **os.environ,
        "VISCOMETRY_CACHE": "off",
        "XDG_CACHE_HOME": str(tmp_path),
        "HOME": str(tmp_path),
    }
    subprocess.run(
        [sys.executable, "-c", _WORKER, " + ".join(f"x{i}" for i in range(40))], env=env, cwd=ROOT,
        capture_output=True, text=True, timeout=120, check=True,
    )  # fmt: skip
    assert list(tmp_path.iterdir()) == []


def test_command_line_uses_the_cache_only_when_asked(tmp_path):
    """Off by default (nothing under HOME or XDG_CACHE_HOME); a named folder gets an entry."""
    example = ROOT / "examples" / "primary_capillary_poiseuille.toml"
    base = {k: v for k, v in os.environ.items() if k != "VISCOMETRY_CACHE"}
    home = tmp_path / "home"
    home.mkdir()
    plain = {**base, "HOME": str(home), "XDG_CACHE_HOME": str(home / "xdg")}
    command = [sys.executable, "-m", "viscometry", "evaluate", str(example)]
    first = subprocess.run(
        command, env=plain, cwd=ROOT, capture_output=True, text=True, timeout=120, check=True
    )
    assert list(home.iterdir()) == []
    asked = {**plain, "VISCOMETRY_CACHE": str(tmp_path / "cache")}
    second = subprocess.run(
        command, env=asked, cwd=ROOT, capture_output=True, text=True, timeout=120, check=True
    )
    assert [p.suffix for p in (tmp_path / "cache").iterdir()] == [".json"]
    assert second.stdout == first.stdout
