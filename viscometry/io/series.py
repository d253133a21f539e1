"""Reading a dilution series from a file (TOML, ``viscometry-series/1``).

A series file holds what a polymer laboratory weighs, makes up and times for one
dilute-solution viscometry determination: the polymer mass and the stock volume, the
solvent's flow-time readings, and for each solution the aliquot of stock, the volume it is
made up to and its flow-time readings; optionally the dry-mass fraction of the polymer,
density ratios, the viscometer's kinetic-energy constants and Mark–Houwink constants. The
format is described with an example in ``docs/polymer.md``.

Every quantity with a stated uncertainty is an inline table in the input form of a budget
file (read by the budget reader's :func:`~viscometry.io.reader.read_quantity`); flow times
are readings in seconds (Type A, JCGM 100:2008, 4.2). Values are converted to SI here, at the
edge, and the series is built by :class:`viscometry.polymer.series.DiluteSeries`. Errors are
one line naming the file, the table, the key and the value
(:class:`~viscometry.errors.BudgetFileError`). Reading uses :mod:`tomllib` (data only) and a
size limit; nothing in a file is ever run.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.inputs import InputQuantity
from viscometry.io.reader import _Reader, _show, parse_toml, read_quantity, read_text_file
from viscometry.io.schema import MAX_FILE_BYTES
from viscometry.polymer.series import MAX_SOLUTIONS, DiluteSeries, Solution

__all__ = ["SERIES_FORMAT", "SeriesFile", "load_series", "loads_series"]

#: The format tag every series file starts with.
SERIES_FORMAT = "viscometry-series/1"
#: Keys of each part of a series file.
TOP_KEYS = (
    "format", "title", "solvent", "temperature", "concentration_unit", "coverage_probability",
    "stock", "solvent_flow_time", "viscometer", "solutions", "mark_houwink",
)  # fmt: skip
STOCK_KEYS = ("polymer_mass", "mass_fraction", "volume")
VISCOMETER_KEYS = ("constant", "kinetic_energy_constant")
SOLUTION_KEYS = ("label", "readings", "aliquot_volume", "final_volume", "density_ratio")
MARK_HOUWINK_KEYS = ("K", "a", "correlation", "source")
#: Default unit of concentrations; [η] is shown in its inverse.
DEFAULT_CONCENTRATION_UNIT = "g/mL"


@dataclass(frozen=True)
class SeriesFile:
    """A series read from a file, with what the file says about showing it.

    Attributes
    ----------
    series : DiluteSeries
        In SI units.
    title, solvent, temperature : str
        Free text from the file ("" when absent).
    concentration_unit : str
        Unit for concentrations in reports; [η] is reported in its inverse.
    coverage_probability : float or None
        p of the expanded uncertainties (None: the package default).
    mark_houwink : tuple of (InputQuantity, InputQuantity, float, str) or None
        K [m³/kg], a [1], r(K, a) and the source text of the constants.
    source : str
        The file (or name) the series was read from.
    """

    series: DiluteSeries
    title: str
    solvent: str
    temperature: str
    concentration_unit: str
    coverage_probability: float | None
    mark_houwink: tuple[InputQuantity, InputQuantity, float, str] | None
    source: str


def load_series(path: str | os.PathLike[str]) -> SeriesFile:
    """Read and validate a series file (TOML, ``viscometry-series/1``, UTF-8, at most 1 MB).

    Raises
    ------
    BudgetFileError
        The file cannot be read, is too large, not UTF-8, not valid TOML (the message gives
        the line), or its content is invalid (the message names table, key and value).
    """
    return loads_series(read_text_file(path, "a series file"), str(Path(path)))


def loads_series(text: str, source_name: str = "<string>") -> SeriesFile:
    """Validate a series file given as text; see :func:`load_series`.

    Examples
    --------
    >>> sf = loads_series('''
    ... format = "viscometry-series/1"
    ... solvent_flow_time = [100.02, 100.00, 99.98]
    ... [stock]
    ... polymer_mass = { value = 0.1, standard_uncertainty = 0.0001, unit = "g" }
    ... volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
    ... [[solutions]]
    ... readings = [150.1, 150.0]
    ... [[solutions]]
    ... readings = [130.1, 130.0]
    ... aliquot_volume = { value = 10, standard_uncertainty = 0.01, unit = "mL" }
    ... final_volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
    ... [[solutions]]
    ... readings = [120.1, 120.0]
    ... aliquot_volume = { value = 5, standard_uncertainty = 0.01, unit = "mL" }
    ... final_volume = { value = 20, standard_uncertainty = 0.02, unit = "mL" }
    ... ''')
    >>> sf.series.labels(), [f"{c:.4g}" for c in sf.series.points()[0]]  # kg/m³
    (('1', '2', '3'), ['5', '2.5', '1.25'])
    """
    src = source_name
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: series text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(
            f"{src}: more than {MAX_FILE_BYTES} bytes; too large for a series file"
        )
    return read_series_document(parse_toml(text, src), src)


def read_series_document(doc: Mapping[str, Any], src: str) -> SeriesFile:
    """The :class:`SeriesFile` of a parsed series document (``src`` names it in errors)."""
    r = _Reader(src)
    if not isinstance(doc, Mapping):
        raise BudgetFileError(f"{src}: a series document must be a table, got {_show(doc)}")
    fmt = doc.get("format")
    if fmt is None:
        raise BudgetFileError(f'{src}: missing key format (write format = "{SERIES_FORMAT}" first)')
    if fmt != SERIES_FORMAT:
        raise BudgetFileError(
            f"{src}: format = {_show(fmt)} is not supported; expected {SERIES_FORMAT!r}"
        )
    r.keys(doc, TOP_KEYS, "top level")
    texts = {
        k: r.text(doc, k, "top level", default="") for k in ("title", "solvent", "temperature")
    }
    c_unit = r.text(doc, "concentration_unit", "top level", default=DEFAULT_CONCENTRATION_UNIT)
    _check_dimension(r, "top level", "concentration_unit", c_unit, "kg/m^3", "a mass concentration")
    p = r.number(doc, "coverage_probability", "top level", default=None)
    if p is not None and not 0.0 < p < 1.0:
        raise r.fail("top level", f"coverage_probability must lie between 0 and 1, got {p!r}")
    stock = r.table(doc, "stock", "[stock]", required=True)
    r.keys(stock, STOCK_KEYS, "[stock]")
    mass = _si(r, stock, "polymer_mass", "[stock]", "m_p", "kg", "a mass", required=True)
    fraction = _si(r, stock, "mass_fraction", "[stock]", "w_p", "1", "a mass fraction")
    volume = _si(r, stock, "volume", "[stock]", "V_0", "m^3", "a volume", required=True)
    t0 = _readings(r, doc, "solvent_flow_time", "top level", "t_0")
    vis = r.table(doc, "viscometer", "[viscometer]")
    r.keys(vis, VISCOMETER_KEYS, "[viscometer]")
    constant = _si(r, vis, "constant", "[viscometer]", "C", "m^2/s^2", "a viscometer constant")
    kinetic = _si(
        r, vis, "kinetic_energy_constant", "[viscometer]", "E", "m^2*s", "E (like mm^2*s)"
    )
    solutions = _solutions(r, doc)
    try:
        series = DiluteSeries(
            mass, volume, t0, solutions, mass_fraction=fraction, viscometer_constant=constant,
            kinetic_energy_constant=kinetic, title=texts["title"],
        )  # fmt: skip
    except BudgetFileError:
        raise
    except ViscometryError as exc:
        raise BudgetFileError(f"{src}: {exc}") from exc
    return SeriesFile(
        series=series, title=texts["title"], solvent=texts["solvent"],
        temperature=texts["temperature"], concentration_unit=c_unit, coverage_probability=p,
        mark_houwink=_mark_houwink(r, doc), source=src,
    )  # fmt: skip


def _check_dimension(r: _Reader, where: str, key: str, unit: str, like: str, what: str) -> None:
    try:
        same = _units.same_dimension(unit, like)
    except ViscometryError:
        same = False
    if not same:
        raise r.fail(where, f"{key} must be a unit of {what} (like {like!r}), got {_show(unit)}")


def _si(
    r: _Reader, table: Mapping[str, Any], key: str, where: str, name: str, like: str,
    what: str, *, required: bool = False,
) -> InputQuantity | None:  # fmt: skip
    """The quantity ``table[key]`` (budget-file input form) converted to SI."""
    if key not in table:
        if required:
            raise r.fail(where, f"is missing key {key}")
        return None
    location = f"{where} {key}"
    q = read_quantity(r, table[key], location, name)
    if not _units.same_dimension(q.unit, like):
        raise r.fail(
            location, f"unit must be a unit of {what} (like {like!r}), got {_show(q.unit)}"
        )
    scale, offset = _units.si_conversion(q.unit)
    if scale == 1.0 and offset == 0.0:
        return q
    half = None if q.half_width is None else q.half_width * scale
    return dataclasses.replace(
        q, value=q.value * scale, standard_uncertainty=q.standard_uncertainty * scale,
        unit=_units.si_unit_label(q.unit), half_width=half, readings=None,
    )  # fmt: skip


def _readings(r: _Reader, t: Mapping[str, Any], key: str, where: str, name: str) -> InputQuantity:
    """Flow-time readings in seconds → a Type A input (JCGM 100:2008, 4.2)."""
    if key not in t:
        raise r.fail(where, f"is missing key {key} (the flow-time readings, in s)")
    values = r.numbers(t, key, where)
    for i, v in enumerate(values):
        if not v > 0:
            raise r.fail(where, f"{key}[{i}] must be a positive flow time in s, got {_show(v)}")
    try:
        return InputQuantity.from_readings(name, values, "s")
    except ViscometryError as exc:
        raise BudgetFileError(f"{r.src}: {where} {key}: {exc}") from exc


def _solutions(r: _Reader, doc: Mapping[str, Any]) -> tuple[Solution, ...]:
    items = doc.get("solutions")
    if not isinstance(items, list) or not items:
        raise r.fail("solutions", f"must be an array of tables [[solutions]], got {_show(items)}")
    if len(items) > MAX_SOLUTIONS:
        raise r.fail("solutions", f"may hold at most {MAX_SOLUTIONS} solutions, got {len(items)}")
    out = []
    for i, item in enumerate(items, start=1):
        where = f"[[solutions]] {i}"
        if not isinstance(item, dict):
            raise r.fail(where, f"must be a table, got {_show(item)}")
        r.keys(item, SOLUTION_KEYS, where)
        label = r.text(item, "label", where, default=str(i))
        if not label.strip() or len(label) > 40 or not label.isprintable():
            raise r.fail(where, f"label must be 1 to 40 printable characters, got {_show(label)}")
        flow = _readings(r, item, "readings", where, f"t_{i}")
        aliquot = _si(r, item, "aliquot_volume", where, f"V_a{i}", "m^3", "a volume")
        final = _si(r, item, "final_volume", where, f"V_f{i}", "m^3", "a volume")
        if (aliquot is None) != (final is None):
            raise r.fail(
                where, "aliquot_volume and final_volume go together (neither for the stock)"
            )
        rho = _si(r, item, "density_ratio", where, f"r_rho{i}", "1", "a density ratio (unit 1)")
        try:
            out.append(Solution(label, flow, aliquot, final, rho))
        except ViscometryError as exc:
            raise BudgetFileError(f"{r.src}: {where} {exc}") from exc
    return tuple(out)


def _mark_houwink(
    r: _Reader, doc: Mapping[str, Any]
) -> tuple[InputQuantity, InputQuantity, float, str] | None:
    if "mark_houwink" not in doc:
        return None
    mh = r.table(doc, "mark_houwink", "[mark_houwink]")
    r.keys(mh, MARK_HOUWINK_KEYS, "[mark_houwink]")
    k = _si(r, mh, "K", "[mark_houwink]", "K", "m^3/kg", "[η] (like 'mL/g')", required=True)
    a = _si(r, mh, "a", "[mark_houwink]", "a", "1", "an exponent (unit 1)", required=True)
    corr = r.number(mh, "correlation", "[mark_houwink]", default=0.0)
    if not -1.0 <= corr <= 1.0:
        raise r.fail("[mark_houwink]", f"correlation must lie in [-1, 1], got {corr!r}")
    source = r.text(mh, "source", "[mark_houwink]", default="")
    assert k is not None and a is not None
    if not k.value > 0 or not a.value > 0:
        bad = "K" if not k.value > 0 else "a"
        raise r.fail(
            "[mark_houwink]", f"{bad} must be positive, got {_show((k if bad == 'K' else a).value)}"
        )
    return k, a, corr, source


def _estimate_dict(est: Any, scale: float) -> dict[str, Any]:
    return {
        "value": est.value * scale,
        "standard_uncertainty": est.standard_uncertainty * scale,
        "effective_dof": est.effective_dof,
        "coverage_factor": est.coverage_factor,
        "expanded_uncertainty": est.expanded_uncertainty * scale,
    }


def _fit_dict(fit: Any, cs: float, unit: str, constant_key: str) -> dict[str, Any]:
    from viscometry.polymer_text import estimate_statement

    return {
        "intrinsic_viscosity": _estimate_dict(fit.intrinsic, cs),
        constant_key: {
            "value": fit.constant.value,
            "standard_uncertainty": fit.constant.standard_uncertainty,
        },
        "slope": fit.slope * cs**2,
        "chi_squared": fit.chi_squared,
        "dof": fit.dof,
        "p_value": fit.p_value,
        "dominant_input": fit.intrinsic.dominant(),
        "contributions": [
            {"name": name, "contribution": c * cs} for name, c in fit.intrinsic.contributions
        ],
        "statement": estimate_statement("[η]", fit.intrinsic, cs, unit),
    }


def result_to_dict(sf: SeriesFile, ext: Any, mc: Any = None, mm: Any = None) -> dict[str, Any]:
    """The JSON object of ``viscometry dilute --json`` (keys in docs/polymer.md).

    [η] and its relatives are in the inverse of the file's concentration unit
    (``intrinsic_viscosity_unit``), concentrations in ``concentration_unit``, molar masses in
    g/mol; ``monte_carlo`` and ``molar_mass`` are ``None`` when not computed.
    """
    from viscometry import __version__
    from viscometry.io.json_out import schema
    from viscometry.polymer_text import concentration_scale, intrinsic_unit

    cs = concentration_scale(sf.concentration_unit)
    unit = intrinsic_unit(sf.concentration_unit)
    points = [
        {
            "label": label,
            "concentration": float(ext.concentrations[i] / cs),
            "concentration_standard_uncertainty": float(ext.concentration_uncertainties[i] / cs),
            "relative_viscosity": float(ext.relative_viscosities[i]),
            "relative_viscosity_standard_uncertainty": float(ext.relative_uncertainties[i]),
            "specific_viscosity": float(ext.relative_viscosities[i] - 1.0),
            "reduced_viscosity": float(ext.huggins.ordinates[i] * cs),
            "inherent_viscosity": float(ext.kraemer.ordinates[i] * cs),
        }
        for i, label in enumerate(ext.series.labels())
    ]
    d = ext.difference
    out: dict[str, Any] = {
        "schema": schema("dilute"), "title": sf.title, "solvent": sf.solvent,
        "temperature": sf.temperature, "concentration_unit": sf.concentration_unit,
        "intrinsic_viscosity_unit": unit, "coverage_probability": ext.coverage_probability,
        "points": points,
        "huggins": _fit_dict(ext.huggins, cs, unit, "huggins_constant"),
        "kraemer": _fit_dict(ext.kraemer, cs, unit, "kraemer_constant"),
        "consistency": {**_estimate_dict(d, cs), "consistent": ext.consistent},
        "single_point": [
            {"form": sp.form, "label": sp.label,
             "intrinsic_viscosity": sp.estimate.value * cs,
             "standard_uncertainty": sp.estimate.standard_uncertainty * cs,
             "bias": sp.bias.value * cs, "bias_standard_uncertainty": sp.bias.standard_uncertainty * cs,
             "relative_bias": sp.relative_bias}
            for sp in ext.single_points
        ],
        "monte_carlo": None, "molar_mass": None, "warnings": list(ext.warnings),
        "source": sf.source, "version": __version__,
    }  # fmt: skip
    if mc is not None:
        keys = ("mean", "standard_uncertainty", "low", "high")
        out["monte_carlo"] = {
            "trials": mc.trials, "seed": mc.seed,
            "huggins": dict(zip(keys, (x * cs for x in mc.huggins), strict=True)),
            "kraemer": dict(zip(keys, (x * cs for x in mc.kraemer), strict=True)),
        }  # fmt: skip
    if mm is not None and sf.mark_houwink is not None:
        k, a, r, src = sf.mark_houwink
        out["molar_mass"] = {
            **_estimate_dict(mm, 1.0), "unit": "g/mol", "k_constant": k.value * cs,
            "k_constant_standard_uncertainty": k.standard_uncertainty * cs, "exponent": a.value,
            "exponent_standard_uncertainty": a.standard_uncertainty, "correlation": r,
            "constants_source": src, "dominant_input": mm.dominant(),
        }  # fmt: skip
    return out
