"""Every public name in the models and reference data is in docs/glossary.md (STYLE, habit 2)."""

import inspect
import re
from pathlib import Path

import viscometry.properties as properties
from viscometry.methods import METHODS

GLOSSARY = (Path(__file__).resolve().parents[1] / "docs" / "glossary.md").read_text(
    encoding="utf-8"
)
NAMES = set(re.findall(r"^\| `([a-z_0-9]+)`", GLOSSARY, flags=re.M))


def test_every_model_input_has_a_glossary_name():
    missing = []
    for method in METHODS.values():
        for symbol in method.input_names:
            long_name = method.input_descriptions.get(symbol, "").partition(":")[0]
            if long_name not in NAMES:
                missing.append(f"{method.name}.{symbol} ({long_name!r})")
    assert not missing, missing


def test_every_reference_data_parameter_is_in_the_glossary():
    missing = []
    for name in properties.__all__:
        obj = getattr(properties, name)
        if inspect.isfunction(obj):
            missing += [f"{name}({p})" for p in inspect.signature(obj).parameters if p not in NAMES]
    assert not missing, missing
