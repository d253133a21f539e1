"""Reading a step-up chain's data from a file (TOML, ``viscometry-chain/1``).

A chain file holds what a laboratory measures and certifies for a step-up chain from water
(ASTM D2162): the flow times of water in master 1, the flow times of each step liquid in the
known and in the new master, the step liquids' temperature coefficients, the shared error of
the bath thermometer and, optionally, a liquid certified in the last master and the quantities of
the surface-tension and kinetic-energy terms (σ and ρ of the liquids, E and the meniscus
geometry of the masters). The format is
described with an example in ``docs/chain-files.md``.

The reader checks the *shape* of the file key by key and maps it onto the engine's own
constructors: every quantity with a stated uncertainty is an inline table in the input form
of a budget file (read by the budget reader's own input builders), flow times are readings
in seconds (Type A, JCGM 100:2008, 4.2), and the chain is built by
:func:`viscometry.methods.step_up_chain` — so the chain's checks (flow times, factor-3 steps)
come with its evaluation, as for every budget. Errors name the file, the table, the key and
the value (:class:`~viscometry.errors.BudgetFileError`, with ``where`` saying which part of
the chain they are about). Reading uses :mod:`tomllib` (data only, through the budget
reader's ``parse_toml``) and a size limit; nothing in a file is ever run.
"""

from __future__ import annotations

import dataclasses
import os
from collections.abc import Iterator, Mapping
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from viscometry import units as _units
from viscometry.errors import BudgetFileError, ViscometryError
from viscometry.gum.inputs import InputQuantity
from viscometry.io.reader import (
    _Reader,
    _show,
    parse_toml,
    read_quantity,
    read_text_file,
)
from viscometry.io.schema import MAX_FILE_BYTES
from viscometry.methods.calibration import (
    CertifiedLiquid,
    LiquidSurface,
    MeniscusGeometry,
    StepUpChain,
    StepUpStep,
    step_up_chain,
    water_reference_input,
    water_temperature_coefficient,
)
from viscometry.methods.flow_checks import MINIMUM_FLOW_TIME_MANUAL

__all__ = [
    "CHAIN_FORMAT",
    "ChainFile",
    "load_chain",
    "load_chain_file",
    "loads_chain",
    "loads_chain_file",
    "read_chain_document",
]

#: The format tag every chain file starts with.
CHAIN_FORMAT = "viscometry-chain/1"
#: Keys of each part of a chain file.
TOP_KEYS = (
    "format", "title", "unit", "minimum_flow_time", "water", "thermometer_error", "steps",
    "certified",
)  # fmt: skip
#: Optional keys of the surface-tension and kinetic-energy terms: σ and ρ of the liquid, and
#: the kinetic-energy constant and the meniscus geometry of the master it calibrates.
SURFACE_KEYS = ("surface_tension", "density")
MASTER_KEYS = ("kinetic_energy", "upper_radius", "lower_radius", "driving_head")
WATER_KEYS = ("readings", "reference", "temperature_coefficient", *SURFACE_KEYS, *MASTER_KEYS)
STEP_KEYS = (
    "label", "readings_in_known", "readings_in_new", "temperature_coefficient",
    "temperature_difference", *SURFACE_KEYS, *MASTER_KEYS,
)  # fmt: skip
CERTIFIED_KEYS = ("label", "readings", "temperature_coefficient", "unit", *SURFACE_KEYS)
#: Default units of the measurand: the constants C_k, or ν of a certified liquid.
CONSTANT_UNIT = "mm^2/s^2"
CERTIFIED_UNIT = "mm^2/s"
#: Temperature of the water reference (ISO/TR 3666:1998: 20 °C) [K].
WATER_TEMPERATURE = 293.15


@dataclass(frozen=True)
class ChainFile:
    """A step-up chain read from a file (or from a panel's fields), with its parts.

    Attributes
    ----------
    chain : StepUpChain
        The whole chain as one budget (measurand C_N, or ν_X with a certified liquid).
    water_value : InputQuantity
        ν_w, the water reference (``nu_w``).
    water_flow_time : InputQuantity
        t₁, the flow time of water in master 1 from its readings (``t1``) [s].
    steps : tuple of StepUpStep
        Steps 2 … N in the order of the file.
    thermometer_error, water_temperature_coefficient : InputQuantity or None
        δT (``dT_th``) and α_w (``alpha_w``), both or neither.
    certified : CertifiedLiquid or None
        A liquid certified in the last master.
    certified_label : str
        Its name.
    title : str
        The file's title ("" when it has none).
    unit : str
        Unit of the constants C_k.
    minimum_flow_time : float
        For the flow-time checks [s].
    source : str
        The file (or name) the chain was read from.
    water_surface : LiquidSurface or None
        σ and ρ of water (``[water] surface_tension``, ``density``).
    first_master_geometry : MeniscusGeometry or None
        Meniscus geometry of master 1 (``[water] upper_radius``, ``lower_radius``,
        ``driving_head``).
    first_master_kinetic_energy : InputQuantity or None
        E₁ of master 1 (``[water] kinetic_energy``).
    """

    chain: StepUpChain
    water_value: InputQuantity
    water_flow_time: InputQuantity
    steps: tuple[StepUpStep, ...]
    thermometer_error: InputQuantity | None
    water_temperature_coefficient: InputQuantity | None
    certified: CertifiedLiquid | None
    certified_label: str
    title: str
    unit: str
    minimum_flow_time: float
    source: str
    water_surface: LiquidSurface | None = None
    first_master_geometry: MeniscusGeometry | None = None
    first_master_kinetic_energy: InputQuantity | None = None

    @property
    def masters(self) -> int:
        """Number N of master viscometers in the chain (1 + the number of steps)."""
        return 1 + len(self.steps)

    def labels(self) -> tuple[str, ...]:
        """What calibrated each master: ``"water"``, then each step's label."""
        return ("water", *(s.label for s in self.steps))

    def chain_to(self, master: int) -> StepUpChain:
        """The chain from water up to ``master`` (1 … N), without a certified liquid.

        Its measurand is C_master in :attr:`unit`; ``chain_to(N)`` is :attr:`chain` when the
        file has no certified liquid.
        """
        if isinstance(master, bool) or not isinstance(master, int):
            raise BudgetFileError(f"master must be an integer, got {master!r}")
        if not 1 <= master <= self.masters:
            raise BudgetFileError(f"master must be 1 to {self.masters}, got {master!r}")
        title = self.title or f"Step-up chain from water, {self.masters} master viscometer(s)"
        if master < self.masters or self.certified is not None:
            title = f"{title} (up to master {master})"
        steps, water_surface, geometry = _up_to(self, master)
        return step_up_chain(
            self.water_value, self.water_flow_time, steps,
            thermometer_error=self.thermometer_error,
            water_temperature_coefficient=self.water_temperature_coefficient,
            unit=self.unit, minimum_flow_time=self.minimum_flow_time, title=title,
            water_surface=water_surface, first_master_geometry=geometry,
            first_master_kinetic_energy=self.first_master_kinetic_energy,
        )  # fmt: skip


def _up_to(
    f: ChainFile, master: int
) -> tuple[list[StepUpStep], LiquidSurface | None, MeniscusGeometry | None]:
    """Steps, water's σ, ρ and master 1's geometry of the chain up to ``master``, without
    the surface-tension quantities that act only above it (the last master's geometry, and the
    last liquid's σ, ρ when no term below uses them)."""
    steps = list(f.steps[: master - 1])
    water_surface, geometry = f.water_surface, f.first_master_geometry
    if master == 1:
        return steps, None, None
    last = steps[-1]
    below = f.first_master_geometry if master == 2 else steps[-2].geometry
    surface = last.surface if below is not None else None
    steps[-1] = dataclasses.replace(last, geometry=None, surface=surface)
    return steps, water_surface, geometry


# --------------------------------------------------------------------------- entry points
def load_chain(path: str | os.PathLike[str]) -> StepUpChain:
    """The step-up chain of a chain file (see :func:`load_chain_file` for its parts).

    Raises
    ------
    BudgetFileError
        The file cannot be read, is too large, not UTF-8, not valid TOML (the message gives
        the line), or its content is invalid (the message names table, key and value).
    """
    return load_chain_file(path).chain


def loads_chain(text: str, source_name: str = "<string>") -> StepUpChain:
    """The step-up chain of a chain file given as text; see :func:`load_chain`.

    Examples
    --------
    >>> chain = loads_chain('''
    ... format = "viscometry-chain/1"
    ... [water]
    ... readings = [334.47, 334.55, 334.54]
    ... [[steps]]
    ... label = "S2"
    ... readings_in_known = [610.09, 610.16, 609.95]
    ... readings_in_new = [211.50, 211.42, 211.46]
    ... ''')
    >>> chain.budget.measurand, [f"{c * 1e6:.6g}" for c in chain.constants()]  # mm²/s²
    ('C2', ['0.00299952', '0.00865368'])
    """
    return loads_chain_file(text, source_name).chain


def load_chain_file(path: str | os.PathLike[str]) -> ChainFile:
    """Read and validate a chain file (TOML, ``viscometry-chain/1``, UTF-8, at most 1 MB)."""
    return loads_chain_file(read_text_file(path, "a chain file"), str(Path(path)))


def loads_chain_file(text: str, source_name: str = "<string>") -> ChainFile:
    """Validate a chain file given as text; see :func:`load_chain_file`."""
    src = source_name
    if not isinstance(text, str):
        raise BudgetFileError(f"{src}: chain text must be a str, got {type(text).__name__}")
    if len(text.encode("utf-8", "surrogatepass")) > MAX_FILE_BYTES:
        raise BudgetFileError(
            f"{src}: more than {MAX_FILE_BYTES} bytes; too large for a chain file"
        )
    with _part("top"):
        doc = parse_toml(text, src)
    return read_chain_document(doc, src)


# --------------------------------------------------------------------------- the document
@contextmanager
def _part(where: str) -> Iterator[None]:
    """Errors raised while reading one part of the file say which part (``where``)."""
    try:
        yield
    except BudgetFileError as exc:
        raise BudgetFileError(str(exc), where=where) from exc.__cause__


def read_chain_document(doc: Mapping[str, Any], src: str) -> ChainFile:
    """The :class:`ChainFile` of a parsed chain document (``src`` names it in errors).

    ``where`` of an error: ``"top"``, ``"water"``, ``"water.reference"``,
    ``"water.temperature_coefficient"``, ``"thermometer_error"``, ``"steps"``,
    ``"steps.<i>"`` (the i-th ``[[steps]]`` entry, from 0) or ``"certified"``.
    """
    r = _Reader(src)
    with _part("top"):
        if not isinstance(doc, Mapping):
            raise BudgetFileError(f"{src}: a chain document must be a table, got {_show(doc)}")
        _check_format(src, doc.get("format"))
        r.keys(doc, TOP_KEYS, "top level")
        title = r.text(doc, "title", "top level", default="")
        unit = _unit(r, doc, "top level", CONSTANT_UNIT, "m^2/s^2", "a viscometer constant")
        t_min = r.number(doc, "minimum_flow_time", "top level", default=MINIMUM_FLOW_TIME_MANUAL)
        if not t_min > 0:
            raise r.fail("top level", f"minimum_flow_time must be positive (in s), got {t_min!r}")
    names: dict[str, tuple[str, str]] = {}
    water = _water(r, doc, names)
    with _part("water"):
        w = doc["water"]
        water_surface = _surface(r, w, "[water]", "_w", names, "water")
        geometry, energy = _master(r, w, "[water]", 1, names, "water")
    thermometer = _thermometer(r, doc, names)
    steps = _steps(r, doc, names)
    certified, label, x_unit = _certified(r, doc, names)
    _check_pairs(r, water, thermometer, steps, certified)
    parts = {
        "water_value": water[0], "water_flow_time": water[1], "steps": tuple(steps),
        "thermometer_error": thermometer, "water_temperature_coefficient": water[2],
        "certified": certified, "certified_label": label, "title": title, "unit": unit,
        "minimum_flow_time": t_min, "source": src, "water_surface": water_surface,
        "first_master_geometry": geometry, "first_master_kinetic_energy": energy,
    }  # fmt: skip
    chain = _build(src, names, parts, x_unit)
    return ChainFile(chain=chain, **parts)


def _check_format(src: str, fmt: Any) -> None:
    if fmt is None:
        raise BudgetFileError(f'{src}: missing key format (write format = "{CHAIN_FORMAT}" first)')
    if fmt != CHAIN_FORMAT:
        raise BudgetFileError(
            f"{src}: format = {_show(fmt)} is not supported; expected {CHAIN_FORMAT!r}"
        )


def _unit(r: _Reader, t: Mapping[str, Any], where: str, default: str, like: str, what: str) -> str:
    """The optional ``unit`` key of ``t``: a unit of the same dimension as ``like``."""
    if "unit" not in t:
        return default
    unit = r.unit(t, where)
    if not _units.same_dimension(unit, like):
        raise r.fail(where, f"unit must be a unit of {what} (like {default!r}), got {unit!r}")
    return unit


def _table(r: _Reader, doc: Mapping[str, Any], key: str, where: str, keys: tuple) -> dict:
    t = r.table(doc, key, where)
    r.keys(t, keys, where)
    return t


def _readings(r: _Reader, t: Mapping[str, Any], key: str, where: str, name: str) -> InputQuantity:
    """Flow-time readings in seconds → a Type A input (JCGM 100:2008, 4.2)."""
    if key not in t:
        raise r.fail(where, f"is missing key {key} (the flow-time readings, in s)")
    values = r.numbers(t, key, where)
    try:
        return InputQuantity.from_readings(name, values, "s")
    except ViscometryError as exc:
        raise BudgetFileError(f"{r.src}: {where} {key}: {exc}") from exc


def _quantity(
    r: _Reader, spec: Any, where: str, name: str, default_value: float | None = None
) -> InputQuantity:
    """A quantity stated like an input of a budget file (:func:`read_quantity`)."""
    return read_quantity(r, spec, where, name, default_value=default_value)


def _water(
    r: _Reader, doc: Mapping[str, Any], names: dict[str, tuple[str, str]]
) -> tuple[InputQuantity, InputQuantity, InputQuantity | None]:
    """ν_w (default: ISO/TR 3666 via water_reference_input), t₁ and α_w of ``[water]``."""
    with _part("water"):
        if "water" not in doc:
            raise BudgetFileError(
                f"{r.src}: missing table [water] (the flow-time readings of water in master 1)"
            )
        w = _table(r, doc, "water", "[water]", WATER_KEYS)
        t1 = _readings(r, w, "readings", "[water]", "t1")
    names["t1"] = ("[water] readings", "water")
    value = water_reference_input()
    if "reference" in w:
        with _part("water.reference"):
            value = _quantity(r, w["reference"], "[water] reference", "nu_w")
    names["nu_w"] = ("[water] reference", "water.reference")
    alpha = None
    if "temperature_coefficient" in w:
        with _part("water.temperature_coefficient"):
            default = water_temperature_coefficient(WATER_TEMPERATURE)
            where = "[water] temperature_coefficient"
            alpha = _quantity(r, w["temperature_coefficient"], where, "alpha_w", default)
        names["alpha_w"] = ("[water] temperature_coefficient", "water.temperature_coefficient")
    return value, t1, alpha


def _thermometer(
    r: _Reader, doc: Mapping[str, Any], names: dict[str, tuple[str, str]]
) -> InputQuantity | None:
    if "thermometer_error" not in doc:
        return None
    with _part("thermometer_error"):
        q = _quantity(r, doc["thermometer_error"], "[thermometer_error]", "dT_th")
    names["dT_th"] = ("[thermometer_error]", "thermometer_error")
    return q


def _steps(
    r: _Reader, doc: Mapping[str, Any], names: dict[str, tuple[str, str]]
) -> list[StepUpStep]:
    items = doc.get("steps", [])
    if not isinstance(items, list):
        with _part("steps"):
            raise r.fail("steps", f"must be an array of tables [[steps]], got {_show(items)}")
    return [_step(r, i, item, names) for i, item in enumerate(items)]


def _step(r: _Reader, i: int, item: Any, names: dict[str, tuple[str, str]]) -> StepUpStep:
    """The i-th ``[[steps]]`` entry (it calibrates master k = i + 2)."""
    k = i + 2
    with _part(f"steps.{i}"):
        where = f"[[steps]] entry {i + 1}"
        if not isinstance(item, dict):
            raise r.fail(where, f"must be a table, got {_show(item)}")
        label = r.text(item, "label", where, default="")
        where = f"{where} ({label})" if label else where
        r.keys(item, STEP_KEYS, where)
        known = _readings(r, item, "readings_in_known", where, f"tp{k}")
        new = _readings(r, item, "readings_in_new", where, f"t{k}")
        alpha = dt = None
        if "temperature_coefficient" in item:
            key = f"{where} temperature_coefficient"
            alpha = _quantity(r, item["temperature_coefficient"], key, f"alpha{k}")
        if "temperature_difference" in item:
            key = f"{where} temperature_difference"
            dt = _quantity(r, item["temperature_difference"], key, f"dT{k}")
        surface = _surface(r, item, where, str(k), names, f"steps.{i}")
        geometry, energy = _master(r, item, where, k, names, f"steps.{i}")
    for name, key in ((f"tp{k}", "readings_in_known"), (f"t{k}", "readings_in_new"),
                      (f"alpha{k}", "temperature_coefficient"),
                      (f"dT{k}", "temperature_difference")):  # fmt: skip
        names[name] = (f"{where} {key}", f"steps.{i}")
    return StepUpStep(known, new, alpha, dt, label, surface, geometry, energy)


def _surface(
    r: _Reader,
    t: Mapping[str, Any],
    where: str,
    liquid: str,
    names: dict[str, tuple[str, str]],
    part: str,
) -> LiquidSurface | None:
    """σ and ρ of a liquid (``surface_tension`` and ``density``, both or neither)."""
    given = [k for k in SURFACE_KEYS if k in t]
    if not given:
        return None
    if len(given) == 1:
        raise r.fail(
            where,
            f"{given[0]} needs {'density' if given[0] != 'density' else 'surface_tension'} "
            "too (σ and ρ of the liquid go together, for the surface-tension terms)",
        )
    quantities = []
    for key, prefix in zip(SURFACE_KEYS, ("sigma", "rho"), strict=True):
        quantities.append(_quantity(r, t[key], f"{where} {key}", f"{prefix}{liquid}"))
        names[f"{prefix}{liquid}"] = (f"{where} {key}", part)
    return LiquidSurface(*quantities)


def _master(
    r: _Reader,
    t: Mapping[str, Any],
    where: str,
    master: int,
    names: dict[str, tuple[str, str]],
    part: str,
) -> tuple[MeniscusGeometry | None, InputQuantity | None]:
    """The meniscus geometry (all three keys or none) and E of the master ``t`` calibrates."""
    energy = None
    if "kinetic_energy" in t:
        energy = _quantity(r, t["kinetic_energy"], f"{where} kinetic_energy", f"E{master}")
        names[f"E{master}"] = (f"{where} kinetic_energy", part)
    keys = MASTER_KEYS[1:]
    given = [k for k in keys if k in t]
    if not given:
        return None, energy
    if len(given) < len(keys):
        missing = ", ".join(k for k in keys if k not in t)
        raise r.fail(
            where,
            f"{', '.join(given)} need{'s' if len(given) == 1 else ''} {missing} too (the meniscus geometry of "
            f"master {master}: upper_radius, lower_radius and driving_head go together)",
        )
    quantities = []
    for key, prefix in zip(keys, ("r_u", "r_l", "h"), strict=True):
        quantities.append(_quantity(r, t[key], f"{where} {key}", f"{prefix}{master}"))
        names[f"{prefix}{master}"] = (f"{where} {key}", part)
    return MeniscusGeometry(*quantities), energy


def _certified(
    r: _Reader, doc: Mapping[str, Any], names: dict[str, tuple[str, str]]
) -> tuple[CertifiedLiquid | None, str, str]:
    if "certified" not in doc:
        return None, "", CERTIFIED_UNIT
    with _part("certified"):
        c = _table(r, doc, "certified", "[certified]", CERTIFIED_KEYS)
        label = r.text(c, "label", "[certified]", default="")
        unit = _unit(r, c, "[certified]", CERTIFIED_UNIT, "m^2/s", "kinematic viscosity")
        t_x = _readings(r, c, "readings", "[certified]", "t_X")
        alpha = None
        if "temperature_coefficient" in c:
            where = "[certified] temperature_coefficient"
            alpha = _quantity(r, c["temperature_coefficient"], where, "alpha_X")
        surface = _surface(r, c, "[certified]", "_X", names, "certified")
    names["t_X"] = ("[certified] readings", "certified")
    names["alpha_X"] = ("[certified] temperature_coefficient", "certified")
    return CertifiedLiquid(t_x, alpha, surface), label, unit


def _check_pairs(
    r: _Reader,
    water: tuple[InputQuantity, InputQuantity, InputQuantity | None],
    thermometer: InputQuantity | None,
    steps: list[StepUpStep],
    certified: CertifiedLiquid | None,
) -> None:
    """Temperature terms that only make sense together, in the file's own words."""
    src = r.src
    if (thermometer is None) != (water[2] is None):
        given = "[thermometer_error]" if water[2] is None else "[water] temperature_coefficient"
        raise BudgetFileError(
            f"{src}: {given} is given alone; the bath thermometer's error [thermometer_error] "
            "and water's temperature coefficient [water] temperature_coefficient go together: "
            "give both or neither",
            where="thermometer_error" if water[2] is None else "water.temperature_coefficient",
        )
    for i, s in enumerate(steps):
        where = f"[[steps]] entry {i + 1}" + (f" ({s.label})" if s.label else "")
        if s.temperature_difference is not None and s.temperature_coefficient is None:
            raise BudgetFileError(
                f"{src}: {where} temperature_difference needs the step liquid's "
                "temperature_coefficient",
                where=f"steps.{i}",
            )
        if s.temperature_coefficient is not None and thermometer is None:
            if s.temperature_difference is None:
                raise BudgetFileError(
                    f"{src}: {where} temperature_coefficient has no effect without "
                    "[thermometer_error] or a temperature_difference; leave it out",
                    where=f"steps.{i}",
                )
        if s.temperature_coefficient is not None and s.temperature_difference is None:
            raise BudgetFileError(
                f"{src}: {where} temperature_coefficient has no effect without a "
                "temperature_difference ([thermometer_error] acts on both viscometers of a step "
                "and cancels); leave it out",
                where=f"steps.{i}",
            )
    if certified is not None and thermometer is not None:
        if certified.temperature_coefficient is None:
            raise BudgetFileError(
                f"{src}: [certified] needs temperature_coefficient (the certified liquid's α) "
                "when the chain has a [thermometer_error]",
                where="certified",
            )
    if (
        certified is not None
        and thermometer is None
        and certified.temperature_coefficient is not None
    ):
        raise BudgetFileError(
            f"{src}: [certified] temperature_coefficient has no effect without "
            "[thermometer_error]; leave it out",
            where="certified",
        )


def _build(
    src: str, names: Mapping[str, tuple[str, str]], parts: Mapping[str, Any], x_unit: str
) -> StepUpChain:
    """The chain from its parts; the budget's refusals are pointed at the file's keys."""
    certified = parts["certified"]
    title = parts["title"] or None
    try:
        return step_up_chain(
            parts["water_value"], parts["water_flow_time"], parts["steps"],
            thermometer_error=parts["thermometer_error"],
            water_temperature_coefficient=parts["water_temperature_coefficient"],
            certified=certified, unit=x_unit if certified is not None else parts["unit"],
            minimum_flow_time=parts["minimum_flow_time"], **({"title": title} if title else {}),
            water_surface=parts["water_surface"],
            first_master_geometry=parts["first_master_geometry"],
            first_master_kinetic_energy=parts["first_master_kinetic_energy"],
        )  # fmt: skip
    except ViscometryError as exc:
        where = getattr(exc, "where", None) or ""
        name = where.removeprefix("inputs.")
        if name in names:
            location, part = names[name]
            text = str(exc).removeprefix(f"{where}: ")
            raise BudgetFileError(f"{src}: {location} {text}", where=part) from exc
        raise BudgetFileError(f"{src}: {exc}", where="top") from exc
