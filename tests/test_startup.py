"""Start-up: what ``import viscometry``, ``--help`` and ``evaluate`` import (nothing timed).

Each check runs in a fresh interpreter (an import made by another test would hide one) and
reads ``sys.modules`` afterwards. The speed itself is measured by benchmarks/bench_startup.py.
The module lists are this package's own goals (issue "Fast start and scaling"), no external
source.
"""

from __future__ import annotations

import ast
import importlib
import json
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGE = ROOT / "viscometry"
EXAMPLE = ROOT / "examples" / "primary_capillary_poiseuille.toml"

#: Heavy libraries that neither ``import viscometry`` nor any ``--help`` may import.
HEAVY = ("sympy", "pandas", "matplotlib", "pint", "scipy", "numpy", "ipywidgets", "IPython")
#: What no engine import and no ``evaluate`` may import: tables, plots, the Jupyter stack,
#: and scipy.stats (quantiles come from scipy.special).
NOT_FOR_EVALUATE = ("pandas", "matplotlib", "ipywidgets", "IPython", "scipy.stats")
COMMANDS = ("audit", "decide", "demo", "evaluate", "methods", "plan", "report", "scope",
            "score", "simulate", "workspace")  # fmt: skip


def imported_after(code: str, watch: tuple[str, ...]) -> list[str]:
    """Run ``code`` in a fresh interpreter; the modules of ``watch`` it left imported."""
    probe = (
        "import contextlib, io, json, sys\n"
        f"{code}\n"
        f"print(json.dumps([m for m in {list(watch)!r} if m in sys.modules]))\n"
    )
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                          cwd=ROOT, timeout=120)  # fmt: skip
    assert done.returncode == 0, done.stderr
    return json.loads(done.stdout.strip().splitlines()[-1])


def test_import_viscometry_imports_no_heavy_library() -> None:
    assert imported_after("import viscometry", HEAVY) == []
    # The error classes are there at once; __version__ on first use.
    code = "import viscometry\nassert issubclass(viscometry.InputError, ValueError)\n" \
           "assert viscometry.__version__"  # fmt: skip
    assert imported_after(code, HEAVY) == []


def test_help_and_version_import_no_heavy_library() -> None:
    calls = [["--help"], ["--version"]] + [[name, "--help"] for name in COMMANDS]
    code = (
        "from viscometry.cli import main\n"
        f"for argv in {calls!r}:\n"
        "    with contextlib.redirect_stdout(io.StringIO()):\n"
        "        assert main(argv) == 0, argv\n"
    )
    assert imported_after(code, HEAVY) == []


def test_the_engine_imports_no_table_plot_or_jupyter_library() -> None:
    code = "import viscometry.gum as gum\nfor name in gum.__all__:\n    getattr(gum, name)\n"
    assert imported_after(code, (*NOT_FOR_EVALUATE, "pint")) == []


def test_evaluate_imports_no_table_plot_or_jupyter_library() -> None:
    code = (
        "from viscometry.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        f"    assert main(['evaluate', {str(EXAMPLE)!r}]) == 0\n"
        "    assert main(['evaluate', '--json', '--higher-order', "
        f"{str(EXAMPLE)!r}]) == 0\n"
    )
    assert imported_after(code, (*NOT_FOR_EVALUATE, "scipy.optimize")) == []


def test_commands_without_a_budget_import_no_symbolic_library() -> None:
    code = (
        "from viscometry.cli import main\n"
        "with contextlib.redirect_stdout(io.StringIO()):\n"
        "    assert main(['score', 'z', '--value', '1', '--assigned', '1.1', "
        "'--sigma-pt', '0.1']) == 0\n"
    )
    assert imported_after(code, ("sympy", "pint", "scipy", "pandas", "matplotlib")) == []


# -- the lazy tables ----------------------------------------------------------------------


def _lazy_tables() -> dict[str, dict[str, tuple[str, ...]]]:
    """Package → its ``_LAZY`` table, read from the source (nothing imported)."""
    tables = {}
    for init in sorted(PACKAGE.rglob("__init__.py")):
        for node in ast.parse(init.read_text(encoding="utf-8")).body:
            targets = node.targets if isinstance(node, ast.Assign) else []
            if any(isinstance(t, ast.Name) and t.id == "_LAZY" for t in targets):
                package = ".".join(init.relative_to(ROOT).parent.parts)
                tables[package] = ast.literal_eval(node.value)
    return tables


def test_every_package_with_lazy_names_is_found() -> None:
    assert set(_lazy_tables()) >= {"viscometry", "viscometry.gum", "viscometry.io",
                                   "viscometry.methods", "viscometry.planning",
                                   "viscometry.properties", "viscometry.widgets"}  # fmt: skip


@pytest.mark.parametrize("package", sorted(_lazy_tables()))
def test_lazy_names_stay_inside_their_package(package: str) -> None:
    # So the layer rules (tests/test_layers.py, which reads import statements) hold for the
    # lazy imports too: a package only ever reaches into itself.
    for module in _lazy_tables()[package]:
        assert module.startswith(package + "."), f"{package} lazily imports {module}"


@pytest.mark.parametrize("package", sorted(_lazy_tables()))
def test_lazy_names_are_the_objects_of_their_modules(package: str) -> None:
    pkg = importlib.import_module(package)
    exported = set()
    for module, names in _lazy_tables()[package].items():
        mod = importlib.import_module(module)
        for name in names:
            assert getattr(pkg, name) is getattr(mod, name), f"{package}.{name}"
            exported.add(name)
    missing = [n for n in getattr(pkg, "__all__", ()) if not hasattr(pkg, n)]
    assert not missing, f"{package}.__all__ names nothing for {missing}"
    assert exported <= set(dir(pkg))
    with pytest.raises(AttributeError, match="no attribute 'no_such_name'"):
        pkg.no_such_name  # noqa: B018


def test_star_import_and_submodules_work_as_before() -> None:
    code = (
        "from viscometry.gum import *\n"
        "assert Budget and simulate_budget and propagate\n"
        "import viscometry\n"
        "assert viscometry.gum.montecarlo.run_monte_carlo\n"
        "from viscometry.methods import METHODS, get_method, flow_checks\n"
        "assert get_method('falling_sphere') is METHODS['falling_sphere']\n"
    )
    assert imported_after(code, ()) == []


def test_a_function_named_like_its_module_stays_the_function() -> None:
    # ``viscometry.planning.working_range`` and ``viscometry.widgets.budget_editor`` are
    # functions, also after their submodules were imported first (as with eager imports).
    code = (
        "import types\n"
        "from viscometry.planning.working_range import MAX_POINTS\n"
        "from viscometry.planning import working_range\n"
        "import viscometry.planning\n"
        "assert not isinstance(working_range, types.ModuleType)\n"
        "assert viscometry.planning.working_range is working_range\n"
        "import viscometry.widgets.budget_editor\n"
        "from viscometry.widgets import budget_editor\n"
        "assert callable(budget_editor) and not isinstance(budget_editor, types.ModuleType)\n"
    )
    assert imported_after(code, ()) == []


# -- the unit registry --------------------------------------------------------------------


def test_the_unit_registry_is_built_once_on_first_use() -> None:
    code = (
        "import threading\n"
        "import viscometry.units as units\n"
        "assert 'pint' not in sys.modules\n"
        "seen = []\n"
        "threads = [threading.Thread(target=lambda: seen.append(id(units.registry())))\n"
        "           for _ in range(8)]\n"
        "for t in threads: t.start()\n"
        "for t in threads: t.join()\n"
        "assert len(set(seen)) == 1 and len(seen) == 8, seen\n"
        "from viscometry.units import ureg\n"
        "assert ureg is units.registry() and id(ureg) == seen[0]\n"
        "assert units.si_conversion('mm') == (0.001, 0.0)\n"
    )
    assert imported_after(code, ()) == []


def test_the_scope_help_states_the_engines_point_limit() -> None:
    from viscometry.commands.scope import MAX_POINTS_SHOWN
    from viscometry.planning import MAX_POINTS

    assert MAX_POINTS_SHOWN == MAX_POINTS
