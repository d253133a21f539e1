"""The audit fingerprint: stable under reordering and reformatting, different under any
numeric change. Expected behaviour is defined by the module's own canonicalisation rules
(common practice, no source); SHA-256 itself is checked against hashlib.
"""

from __future__ import annotations

import copy
import hashlib
import re
import tomllib

import pytest

from viscometry.errors import ViscometryWarning
from viscometry.io.budget_file import loads_budget
from viscometry.io.fingerprint import canonical_json, fingerprint

TEXT = """
format = "viscometry-budget/1"
title = "original"

[measurand]
name = "nu"
unit = "mm^2/s"
model = "C * t - E / t**2"

[constants]
k0 = { value = 1.0, unit = "1", description = "unused factor" }

[inputs.C]
value = 0.10012
unit = "mm^2/s^2"
expanded_uncertainty = 0.00030
coverage_factor = 2
description = "viscometer constant"

[inputs.t]
unit = "s"
readings = [412.31, 412.45, 412.28, 412.40]

[inputs.E]
value = 0.0
unit = "mm^2*s"
distribution = "rectangular"
half_width = 2.0

[[correlations]]
between = ["C", "E"]
coefficient = 0.3
"""

# The same budget: keys and tables reordered, comments and blank lines added, numbers
# typed differently (2 → 2.0, 0.0 → -0.0, 0.10012 → 1.0012e-1), formula and units spaced
# differently, correlation pair swapped, default coverage probability given explicitly,
# title, descriptions and the [recorded] table changed.
REFORMATTED = """
# a comment
[inputs.E]   # comment
half_width = 2.0
distribution = "rectangular"
unit = "mm^2 * s"
value = -0.0

[inputs.t]
readings = [412.31, 412.45, 412.28, 412.4]
unit = "s"

[inputs.C]
coverage_factor = 2.0
expanded_uncertainty = 3.0e-4
unit = " mm^2/s^2 "
value = 1.0012e-1
description = "something else entirely"

[constants]
k0 = { unit = "1", value = 1 }

[measurand]
model = "C*t-E/t**2"
coverage_probability = 0.9545
unit = "mm^2 / s"
name = "nu"

[[correlations]]
coefficient = 0.30
between = ["E", "C"]

[recorded]
value = 41.29
expanded_uncertainty = 0.12
"""

REFORMATTED = 'format = "viscometry-budget/1"\ntitle = "another title"\n' + REFORMATTED


def _fp(text: str) -> str:
    return fingerprint(tomllib.loads(text))


def test_stable_under_reordering_reformatting_and_comments():
    assert _fp(TEXT) == _fp(REFORMATTED)
    assert canonical_json(tomllib.loads(TEXT)) == canonical_json(tomllib.loads(REFORMATTED))


def test_budget_file_carries_the_fingerprint():
    with pytest.warns(ViscometryWarning, match="k0 is not used"):
        bf = loads_budget(TEXT)
    assert bf.fingerprint == _fp(TEXT)


def test_is_the_sha256_of_the_canonical_json():
    doc = tomllib.loads(TEXT)
    expected = hashlib.sha256(
        canonical_json(doc).encode("ascii")
    ).hexdigest()  # FIPS 180-4 via hashlib
    assert fingerprint(doc) == "sha256:" + expected


def _numbers(obj, path=()):
    """Paths to every numeric leaf of a TOML document."""
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from _numbers(v, (*path, k))
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            yield from _numbers(v, (*path, i))
    elif isinstance(obj, (int, float)) and not isinstance(obj, bool):
        yield path


DOC = tomllib.loads(TEXT)
NUMERIC_PATHS = list(_numbers(DOC))


@pytest.mark.parametrize("path", NUMERIC_PATHS, ids=lambda p: ".".join(map(str, p)))
def test_any_numeric_change_changes_the_fingerprint(path):
    changed = copy.deepcopy(DOC)
    target = changed
    for key in path[:-1]:
        target = target[key]
    old = target[path[-1]]
    # the smallest representable change of a float, or +1 for an integer
    import math

    target[path[-1]] = math.nextafter(float(old), math.inf) if isinstance(old, float) else old + 1
    assert fingerprint(changed) != fingerprint(DOC)


def test_every_numeric_leaf_is_covered():
    assert len(NUMERIC_PATHS) >= 10  # values, uncertainties, readings, coefficient, constant


@pytest.mark.parametrize(
    ("old", "new"),
    [
        ('model = "C * t - E / t**2"', 'model = "C * t + E / t**2"'),
        ('unit = "mm^2/s"\nmodel', 'unit = "m^2/s"\nmodel'),
        ('distribution = "rectangular"', 'distribution = "triangular"'),
        ('name = "nu"', 'name = "nu2"'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\ncoverage_factor = 2'),
        ('model = "C * t - E / t**2"', 'model = "C * t - E / t**2"\nrounding = "up"'),
        ("coefficient = 0.3", "coefficient = 0.31"),
    ],
)
def test_other_changes_that_matter(old, new):
    assert old in TEXT
    assert _fp(TEXT.replace(old, new)) != _fp(TEXT)


def test_format_is_sha256_hex():
    assert re.fullmatch(r"sha256:[0-9a-f]{64}", _fp(TEXT))
