"""Input quantities of a measurement model and their Type A / Type B evaluations.

An :class:`InputQuantity` is an immutable record of one input: its estimate, standard
uncertainty, the distribution that describes it, degrees of freedom and the evaluation type,
plus description and source for the audit trail. Values are stored in the input's own unit
(``unit``); the budget converts them to SI when it evaluates the model.

The constructors implement the usual evaluations:

========================  =========================================  ==========================
constructor               standard uncertainty                       reference
========================  =========================================  ==========================
``from_readings``         s / sqrt(n), nu = n - 1                    JCGM 100:2008, 4.2
``from_pooled``           s_p / sqrt(n), nu = nu_p                   JCGM 100:2008, 4.2.4
``normal``                u as given                                 JCGM 100:2008, 4.3
``from_expanded``         U / k, or U / t_p(nu) / z_p                JCGM 100:2008, 4.3.3-4.3.4
``rectangular``           a / sqrt(3)                                JCGM 100:2008, 4.3.7
``triangular``            a / sqrt(6)                                JCGM 100:2008, 4.3.9
``arcsine``               a / sqrt(2)                                JCGM 101:2008, 6.4.6
``trapezoidal``           a sqrt((1 + beta^2) / 6)                   JCGM 100:2008, 4.3.9
========================  =========================================  ==========================
"""

from __future__ import annotations

import contextvars
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from types import MappingProxyType
from typing import Any, Literal

import numpy as np

from viscometry._checks import degrees_of_freedom as _dof
from viscometry._checks import finite as _finite
from viscometry._checks import positive as _positive
from viscometry.errors import InputError
from viscometry.gum.propagation import t_quantile

__all__ = [
    "Distribution",
    "DISTRIBUTIONS",
    "FORMS",
    "UncertaintyForm",
    "InputQuantity",
    "dof_from_relative_uncertainty",
    "check_name",
]

Distribution = Literal["normal", "student_t", "rectangular", "triangular", "arcsine", "trapezoidal"]

#: The distributions the engine knows, with the divisor that turns a half-width into a
#: standard uncertainty (``None`` where the distribution is not given by a half-width).
DISTRIBUTIONS: dict[str, float | None] = {
    "normal": None,
    "student_t": None,
    "rectangular": math.sqrt(3.0),
    "triangular": math.sqrt(6.0),
    "arcsine": math.sqrt(2.0),
    "trapezoidal": None,
}

#: How an input's uncertainty was stated: the forms a budget file knows.
UncertaintyForm = Literal["standard", "expanded", "bounds", "readings", "pooled"]
FORMS: tuple[str, ...] = ("standard", "expanded", "bounds", "readings", "pooled")

#: Names of the numbers an uncertainty statement may hold (the budget-file keys).
_STATED_KEYS = frozenset(
    {
        "standard_uncertainty", "expanded_uncertainty", "coverage_factor",
        "coverage_probability", "half_width", "lower", "upper", "beta", "distribution",
        "evaluation", "dof", "relative_uncertainty_of_uncertainty",
        "pooled_standard_deviation", "pooled_dof",
    }
)  # fmt: skip

_MAX_NAME_LENGTH = 64


def check_name(name: object, field: str = "name") -> str:
    """Check that ``name`` is a valid quantity name (a Python identifier, not a dunder).

    Raises
    ------
    InputError
        If the name is not a string, not an identifier, starts with an underscore or is too long.
    """
    if not isinstance(name, str) or not name.isidentifier() or name.startswith("_"):
        raise InputError(
            f"{field} must be an identifier of letters, digits and '_' not starting with '_', "
            f"got {name!r}"
        )
    if len(name) > _MAX_NAME_LENGTH:
        raise InputError(f"{field} is longer than {_MAX_NAME_LENGTH} characters: {name[:20]!r}...")
    if not name.isascii():
        raise InputError(f"{field} must use ASCII letters only, got {name!r}")
    return name


def _probability(value: object, field: str = "coverage_probability") -> float:
    p = _finite(value, field)
    if not 0.0 < p < 1.0:
        raise InputError(f"{field} must lie strictly between 0 and 1, got {p!r}")
    return p


def dof_from_relative_uncertainty(relative_uncertainty: float) -> float:
    """Degrees of freedom of a Type B standard uncertainty from its own relative uncertainty.

    Parameters
    ----------
    relative_uncertainty : float
        Relative uncertainty of the standard uncertainty, Δu/u (e.g. 0.25 for 25 %) [1].

    Returns
    -------
    float
        ν ≈ ½ (Δu/u)⁻² [1].

    References
    ----------
    JCGM 100:2008, G.4.2, eq. (G.3).

    Examples
    --------
    >>> dof_from_relative_uncertainty(0.25)
    8.0
    """
    r = _positive(relative_uncertainty, "relative_uncertainty_of_uncertainty")
    return 0.5 / r**2


@dataclass(frozen=True, slots=True)
class InputQuantity:
    """One input quantity of a measurement model (immutable).

    Parameters
    ----------
    name : str
        Symbol used in the model formula (an identifier).
    value : float
        Estimate x_i, in ``unit``.
    standard_uncertainty : float
        Standard uncertainty u(x_i) ≥ 0, in ``unit`` (a temperature *difference* for
        offset units such as degC).
    unit : str
        Unit of the estimate (pint syntax, e.g. ``"mm"``, ``"mm^2/s"``; ``""`` for
        dimensionless).
    distribution : str
        One of :data:`DISTRIBUTIONS`; used by the Monte Carlo method and reported in the table.
    dof : float
        Degrees of freedom ν_i (``math.inf`` for an exactly known standard uncertainty).
    evaluation : {"A", "B"}
        Type A (statistical) or Type B evaluation.
    description, source : str
        Free text for the audit trail.
    half_width : float or None
        Half-width *a* of a bounded distribution, in ``unit``.
    beta : float or None
        Ratio of top to base half-width of a trapezoidal distribution (0 ≤ β ≤ 1).
    readings : tuple of float or None
        The repeated readings a Type A input was evaluated from (forms "readings" and
        "pooled"), kept for the audit trail.
    form : {"standard", "expanded", "bounds", "readings", "pooled"}
        How the uncertainty was stated (set by the constructors below).
    stated : tuple of (str, value) pairs
        The numbers as they were stated, named like the budget-file keys (e.g.
        ``(("expanded_uncertainty", 0.0003), ("coverage_factor", 2.0))``). A budget file is
        written back in this form, and the fingerprint covers it, so a certificate's U and k
        stay U and k. Left empty, it is filled from the fields (standard form).
    """

    name: str
    value: float
    standard_uncertainty: float
    unit: str = ""
    distribution: Distribution = "normal"
    dof: float = math.inf
    evaluation: Literal["A", "B"] = "B"
    description: str = ""
    source: str = ""
    half_width: float | None = None
    beta: float | None = None
    readings: tuple[float, ...] | None = None
    form: UncertaintyForm = "standard"
    stated: tuple[tuple[str, float | str], ...] = ()

    def __post_init__(self) -> None:
        check_name(self.name, "input name")
        object.__setattr__(self, "value", _finite(self.value, f"{self.name}.value"))
        object.__setattr__(
            self,
            "standard_uncertainty",
            _positive(
                self.standard_uncertainty, f"{self.name}.standard_uncertainty", allow_zero=True
            ),
        )
        object.__setattr__(self, "dof", _dof(self.dof, f"{self.name}.dof"))
        if self.distribution not in DISTRIBUTIONS:
            raise InputError(
                f"{self.name}.distribution must be one of {', '.join(DISTRIBUTIONS)}, "
                f"got {self.distribution!r}"
            )
        if self.evaluation not in ("A", "B"):
            raise InputError(f"{self.name}.evaluation must be 'A' or 'B', got {self.evaluation!r}")
        if not isinstance(self.unit, str):
            raise InputError(f"{self.name}.unit must be a string, got {self.unit!r}")
        if self.beta is not None:
            b = _finite(self.beta, f"{self.name}.beta")
            if not 0.0 <= b <= 1.0:
                raise InputError(f"{self.name}.beta must lie in [0, 1], got {b!r}")
        if self.distribution == "trapezoidal" and self.beta is None:
            raise InputError(f"{self.name}: a trapezoidal distribution needs beta in [0, 1]")
        if self.distribution == "student_t" and not math.isfinite(self.dof):
            raise InputError(f"{self.name}: a student_t distribution needs finite dof")
        if self.form not in FORMS:
            raise InputError(
                f"{self.name}.form must be one of {', '.join(FORMS)}, got {self.form!r}"
            )
        stated = tuple(self.stated)
        bad = [k for k, _v in stated if k not in _STATED_KEYS]
        if bad:
            raise InputError(f"{self.name}.stated has unknown key(s) {', '.join(map(repr, bad))}")
        object.__setattr__(self, "stated", stated)
        if (not stated and self.form == "standard") or not (
            _TRUSTED.get() or self._statement_holds()
        ):
            # No statement given, or a copy whose numbers no longer follow from its statement
            # (dataclasses.replace of the uncertainty, say): it states its uncertainty directly.
            object.__setattr__(self, "form", "standard")
            object.__setattr__(self, "stated", self._standard_statement())
        if self.form in ("standard", "expanded", "bounds"):
            object.__setattr__(self, "readings", None)  # readings belong to a Type A form

    def _statement_holds(self) -> bool:
        """Whether u, ν and the distribution follow from :attr:`stated` (and the readings)."""
        st = dict(self.stated)
        if self.form in ("readings", "pooled") and not self.readings:
            return False
        if self.form == "standard":
            rel = st.get("relative_uncertainty_of_uncertainty")
            dof = dof_from_relative_uncertainty(rel) if rel is not None else st.get("dof", math.inf)
            return (
                st.get("standard_uncertainty") == self.standard_uncertainty
                and st.get("distribution", "normal") == self.distribution
                and st.get("evaluation", "B") == self.evaluation
                and st.get("beta") == self.beta
                and dof == self.dof
            )
        try:
            again = _rebuild(self)
        except InputError:
            return False
        return (again.value, again.standard_uncertainty, again.dof, again.distribution) == (
            self.value, self.standard_uncertainty, self.dof, self.distribution,
        )  # fmt: skip

    def _standard_statement(self) -> tuple[tuple[str, float | str], ...]:
        out: list[tuple[str, float | str]] = [("standard_uncertainty", self.standard_uncertainty)]
        if self.distribution != "normal":
            out.append(("distribution", self.distribution))
        if self.beta is not None:
            out.append(("beta", float(self.beta)))
        if math.isfinite(self.dof):
            out.append(("dof", self.dof))
        if self.evaluation != "B":
            out.append(("evaluation", self.evaluation))
        return tuple(out)

    @property
    def statement(self) -> Mapping[str, float | str]:
        """The uncertainty as stated (read-only mapping of :attr:`stated`)."""
        return MappingProxyType(dict(self.stated))

    # ------------------------------------------------------------------ Type A
    @classmethod
    def from_readings(
        cls,
        name: str,
        readings: Sequence[float],
        unit: str = "",
        *,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """Type A evaluation from n repeated, independent readings.

        The estimate is the arithmetic mean; u = s/√n with s the experimental standard
        deviation; ν = n − 1 (JCGM 100:2008, 4.2.1-4.2.3). The distribution recorded for the
        Monte Carlo method is the scaled and shifted t distribution (JCGM 101:2008, 6.4.9).

        Raises
        ------
        InputError
            Fewer than two readings (one reading carries no Type A information), or a reading
            that is not a finite number.

        Examples
        --------
        >>> q = InputQuantity.from_readings("t", [10.0, 10.2, 10.1, 10.3], "s")
        >>> round(q.value, 3), round(q.standard_uncertainty, 4), q.dof
        (10.15, 0.0645, 3.0)
        """
        x = _readings(name, readings)
        n = x.size
        s = float(np.std(x, ddof=1))
        return _make(
            cls,
            name=name,
            value=float(np.mean(x)),
            standard_uncertainty=s / math.sqrt(n),
            unit=unit,
            distribution="student_t",
            dof=float(n - 1),
            evaluation="A",
            description=description,
            source=source,
            readings=tuple(float(v) for v in x),
            form="readings",
        )

    @classmethod
    def from_pooled(
        cls,
        name: str,
        readings: Sequence[float],
        pooled_standard_deviation: float,
        pooled_dof: float,
        unit: str = "",
        *,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """Type A evaluation of the mean of n new readings with a pooled standard deviation.

        u = s_p/√n where s_p comes from an earlier, well-characterised study with ν_p degrees of
        freedom, which are also those of u (JCGM 100:2008, 4.2.4). A single new reading is
        allowed here because the dispersion is known from the earlier study.

        Examples
        --------
        >>> q = InputQuantity.from_pooled("t", [200.1, 200.3], 0.2, 30, "s")
        >>> round(q.standard_uncertainty, 4), q.dof
        (0.1414, 30.0)
        """
        x = _readings(name, readings, minimum=1)
        sp = _positive(pooled_standard_deviation, f"{name}.pooled_standard_deviation")
        nu = _dof(pooled_dof, f"{name}.pooled_dof")
        return _make(
            cls,
            name=name,
            value=float(np.mean(x)),
            standard_uncertainty=sp / math.sqrt(x.size),
            unit=unit,
            distribution="student_t" if math.isfinite(nu) else "normal",
            dof=nu,
            evaluation="A",
            description=description,
            source=source,
            readings=tuple(float(v) for v in x),
            form="pooled",
            stated=(("pooled_standard_deviation", sp), ("pooled_dof", nu)),
        )

    # ------------------------------------------------------------------ Type B
    @classmethod
    def normal(
        cls,
        name: str,
        value: float,
        standard_uncertainty: float,
        unit: str = "",
        *,
        dof: float | None = None,
        relative_uncertainty_of_uncertainty: float | None = None,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """Type B input with a normal distribution and a given standard uncertainty.

        Examples
        --------
        >>> InputQuantity.normal("V", 2.0, 0.01, "mL").standard_uncertainty
        0.01
        """
        return cls.from_standard(
            name, value, standard_uncertainty, unit, dof=dof,
            relative_uncertainty_of_uncertainty=relative_uncertainty_of_uncertainty,
            description=description, source=source,
        )  # fmt: skip

    @classmethod
    def from_standard(
        cls,
        name: str,
        value: float,
        standard_uncertainty: float,
        unit: str = "",
        *,
        distribution: Distribution = "normal",
        evaluation: Literal["A", "B"] = "B",
        dof: float | None = None,
        relative_uncertainty_of_uncertainty: float | None = None,
        beta: float | None = None,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """An input whose standard uncertainty is stated directly (JCGM 100:2008, 4.3).

        The distribution (for the Monte Carlo method) and the evaluation type are as given;
        the degrees of freedom come from ``dof`` or from the relative uncertainty of the
        uncertainty (JCGM 100:2008, G.4.2).

        Examples
        --------
        >>> q = InputQuantity.from_standard("E", 0.0, 0.8, "mm^2*s", distribution="rectangular")
        >>> q.distribution, dict(q.statement)
        ('rectangular', {'standard_uncertainty': 0.8, 'distribution': 'rectangular'})
        """
        nu = _type_b_dof(name, dof, relative_uncertainty_of_uncertainty)
        stated: list[tuple[str, float | str]] = [
            ("standard_uncertainty", _finite(standard_uncertainty, f"{name}.standard_uncertainty"))
        ]
        if distribution != "normal":
            stated.append(("distribution", distribution))
        if beta is not None:
            stated.append(("beta", _finite(beta, f"{name}.beta")))
        stated += _dof_statement(dof, relative_uncertainty_of_uncertainty)
        if evaluation != "B":
            stated.append(("evaluation", evaluation))
        return _make(
            cls,
            name=name, value=value, standard_uncertainty=standard_uncertainty, unit=unit,
            distribution=distribution, dof=nu, evaluation=evaluation, beta=beta,
            description=description, source=source, form="standard", stated=tuple(stated),
        )  # fmt: skip

    @classmethod
    def from_expanded(
        cls,
        name: str,
        value: float,
        expanded_uncertainty: float,
        unit: str = "",
        *,
        coverage_factor: float | None = None,
        coverage_probability: float | None = None,
        dof: float | None = None,
        relative_uncertainty_of_uncertainty: float | None = None,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """Type B input from an expanded uncertainty quoted on a certificate.

        Give either ``coverage_factor`` (u = U/k, JCGM 100:2008, 4.3.3) or
        ``coverage_probability`` (u = U/t_p(ν) when ``dof`` is given, else U/z_p for a normal
        distribution, JCGM 100:2008, 4.3.4 and G.3).

        Examples
        --------
        >>> round(InputQuantity.from_expanded("C", 1.0, 0.002, coverage_factor=2).standard_uncertainty, 6)
        0.001
        >>> q = InputQuantity.from_expanded("C", 1.0, 1.96, coverage_probability=0.95)
        >>> round(q.standard_uncertainty, 4)
        1.0
        """
        big_u = _positive(expanded_uncertainty, f"{name}.expanded_uncertainty", allow_zero=True)
        if (coverage_factor is None) == (coverage_probability is None):
            raise InputError(
                f"{name}: give exactly one of coverage_factor or coverage_probability "
                f"with expanded_uncertainty"
            )
        nu = _type_b_dof(name, dof, relative_uncertainty_of_uncertainty)
        stated: list[tuple[str, float | str]] = [("expanded_uncertainty", big_u)]
        if coverage_factor is not None:
            k = _positive(coverage_factor, f"{name}.coverage_factor")
            stated.append(("coverage_factor", k))
        else:
            p = _probability(coverage_probability, f"{name}.coverage_probability")
            k = coverage_factor_for(p, nu)
            stated.append(("coverage_probability", p))
        stated += _dof_statement(dof, relative_uncertainty_of_uncertainty)
        return _make(
            cls,
            name=name,
            value=value,
            standard_uncertainty=big_u / k,
            unit=unit,
            distribution="normal" if not math.isfinite(nu) else "student_t",
            dof=nu,
            evaluation="B",
            description=description,
            source=source,
            form="expanded",
            stated=tuple(stated),
        )

    @classmethod
    def bounded(
        cls,
        kind: str,
        name: str,
        value: float | None = None,
        half_width: float | None = None,
        unit: str = "",
        *,
        lower: float | None = None,
        upper: float | None = None,
        beta: float | None = None,
        dof: float | None = None,
        relative_uncertainty_of_uncertainty: float | None = None,
        description: str = "",
        source: str = "",
    ) -> InputQuantity:
        """Type B input from the bounds of a symmetric distribution (``kind``: rectangular,
        triangular, arcsine or trapezoidal), centred on its estimate.

        Give ``half_width`` a with ``value``, or ``lower`` and ``upper`` (the estimate is
        their centre). ``beta`` is the ratio of top to base half-width of a trapezoid;
        ``dof`` or ``relative_uncertainty_of_uncertainty`` the reliability of u (JCGM
        100:2008, G.4.2). The named constructors below say which divisor each shape has.

        Examples
        --------
        >>> round(InputQuantity.bounded("triangular", "x", 0.0, 6.0).standard_uncertainty, 6)
        2.44949
        """
        if kind not in ("rectangular", "triangular", "arcsine", "trapezoidal"):
            raise InputError(f"{name}: a distribution given by bounds must be rectangular, "
                             f"triangular, arcsine or trapezoidal, got {kind!r}")  # fmt: skip
        if half_width is not None and (lower is not None or upper is not None):
            raise InputError(f"{name}: give either half_width or lower/upper bounds, not both")
        stated: list[tuple[str, float | str]] = [("distribution", kind)]
        if half_width is None:
            if lower is None or upper is None:
                raise InputError(f"{name}: a {kind} distribution needs half_width or both bounds")
            lo = _finite(lower, f"{name}.lower")
            hi = _finite(upper, f"{name}.upper")
            if not hi > lo:
                raise InputError(f"{name}.upper must exceed lower, got lower={lo!r}, upper={hi!r}")
            a = (hi - lo) / 2.0
            centre = (hi + lo) / 2.0
            if value is not None and _finite(value, f"{name}.value") != centre:
                raise InputError(
                    f"{name}.value {value!r} is not the centre {centre!r} of [lower, upper]; "
                    f"a symmetric {kind} distribution is centred on its estimate"
                )
            value = centre
            stated += [("lower", lo), ("upper", hi)]
        else:
            a = _positive(half_width, f"{name}.half_width", allow_zero=True)
            if value is None:
                raise InputError(f"{name}: value is required with half_width")
            stated.append(("half_width", a))
        if kind == "trapezoidal":
            if beta is None:
                raise InputError(f"{name}: a trapezoidal distribution needs beta in [0, 1]")
            b = _finite(beta, f"{name}.beta")
            if not 0.0 <= b <= 1.0:
                raise InputError(f"{name}.beta must lie in [0, 1], got {b!r}")
            u = a * math.sqrt((1.0 + b * b) / 6.0)
            stated.append(("beta", b))
        else:
            divisor = DISTRIBUTIONS[kind]
            assert divisor is not None
            u = a / divisor
        return _make(
            cls,
            name=name,
            value=value,
            standard_uncertainty=u,
            unit=unit,
            distribution=kind,  # type: ignore[arg-type]
            dof=_type_b_dof(name, dof, relative_uncertainty_of_uncertainty),
            evaluation="B",
            description=description,
            source=source,
            half_width=a,
            beta=beta if kind == "trapezoidal" else None,
            form="bounds",
            stated=tuple(stated) + _dof_statement(dof, relative_uncertainty_of_uncertainty),
        )

    @classmethod
    def rectangular(
        cls, name: str, value: float | None = None, half_width: float | None = None,
        unit: str = "", **bounds: Any,
    ) -> InputQuantity:  # fmt: skip
        """Type B input with a rectangular distribution: u = a/√3 (JCGM 100:2008, 4.3.7).

        Keywords as :meth:`bounded` (``lower``, ``upper``, ``dof``, ...).

        Examples
        --------
        >>> round(InputQuantity.rectangular("E", 0.0, 3.0).standard_uncertainty, 6)
        1.732051
        >>> InputQuantity.rectangular("x", lower=1.0, upper=3.0).value
        2.0
        """
        return cls.bounded("rectangular", name, value, half_width, unit, **bounds)

    @classmethod
    def triangular(
        cls, name: str, value: float | None = None, half_width: float | None = None,
        unit: str = "", **bounds: Any,
    ) -> InputQuantity:  # fmt: skip
        """Type B input with a symmetric triangular distribution: u = a/√6 (JCGM 100:2008, 4.3.9).

        Examples
        --------
        >>> round(InputQuantity.triangular("x", 0.0, 6.0).standard_uncertainty, 6)
        2.44949
        """
        return cls.bounded("triangular", name, value, half_width, unit, **bounds)

    @classmethod
    def arcsine(
        cls, name: str, value: float | None = None, half_width: float | None = None,
        unit: str = "", **bounds: Any,
    ) -> InputQuantity:  # fmt: skip
        """Type B input with an arcsine (U-shaped) distribution: u = a/√2 (JCGM 101:2008, 6.4.6).

        Typical of a quantity that oscillates sinusoidally, e.g. a bath temperature cycling
        around its set point.

        Examples
        --------
        >>> round(InputQuantity.arcsine("dT", 0.0, 0.02, "K").standard_uncertainty, 6)
        0.014142
        """
        return cls.bounded("arcsine", name, value, half_width, unit, **bounds)

    @classmethod
    def trapezoidal(
        cls, name: str, value: float | None = None, half_width: float | None = None,
        unit: str = "", *, beta: float = 0.5, **bounds: Any,
    ) -> InputQuantity:  # fmt: skip
        """Type B input with a symmetric trapezoidal distribution.

        Base half-width a, top half-width βa: u = a √((1 + β²)/6) (JCGM 100:2008, 4.3.9).
        β = 1 is rectangular, β = 0 triangular.

        Examples
        --------
        >>> round(InputQuantity.trapezoidal("x", 0.0, 1.0, beta=1.0).standard_uncertainty, 6)
        0.57735
        """
        return cls.bounded("trapezoidal", name, value, half_width, unit, beta=beta, **bounds)

    # ------------------------------------------------------------------ helpers
    @property
    def relative_uncertainty(self) -> float:
        """u(x)/|x|, or NaN when the estimate is zero (relative uncertainty undefined)."""
        return self.standard_uncertainty / abs(self.value) if self.value != 0 else math.nan

    def with_uncertainty(self, standard_uncertainty: float, **changes: object) -> InputQuantity:
        """A copy with a new standard uncertainty (a what-if), other fields unchanged.

        The copy states its uncertainty directly (standard form): the distribution keeps its
        shape (a bounded one its half-width rescaled), the degrees of freedom and the
        evaluation type stay, and readings are dropped (they no longer give this u).
        """
        u = _positive(standard_uncertainty, f"{self.name}.standard_uncertainty", allow_zero=True)
        hw = self.half_width
        if hw is not None and self.standard_uncertainty > 0:
            hw = hw * u / self.standard_uncertainty
        fields: dict[str, object] = {
            "standard_uncertainty": u, "half_width": hw, "readings": None,
            "form": "standard", "stated": (),
        }  # fmt: skip
        fields.update(changes)
        return replace(self, **fields)  # type: ignore[arg-type]


def coverage_factor_for(coverage_probability: float, dof: float = math.inf) -> float:
    """Coverage factor for a coverage probability: t quantile for finite ν, else normal.

    Parameters
    ----------
    coverage_probability : float
        Two-sided coverage probability p, 0 < p < 1 [1].
    dof : float
        Degrees of freedom ν (``math.inf`` for the normal distribution).

    Returns
    -------
    float
        k_p = t_p(ν), the (1+p)/2 quantile of Student's t (JCGM 100:2008, G.3, Table G.2).

    Examples
    --------
    >>> round(coverage_factor_for(0.95), 3)
    1.96
    >>> round(coverage_factor_for(0.99, 16), 2)
    2.92
    """
    return _coverage_factor(_probability(coverage_probability), _dof(dof))


def _coverage_factor(p: float, nu: float) -> float:
    return t_quantile(p, nu)


def _readings(name: str, readings: Sequence[float], minimum: int = 2) -> np.ndarray:
    if isinstance(readings, (str, bytes)):
        raise InputError(f"{name}.readings must be a list of numbers, got {readings!r}")
    try:
        values = [float(r) for r in readings]
    except (TypeError, ValueError):
        raise InputError(f"{name}.readings must be a list of numbers, got {readings!r}") from None
    x = np.asarray(values, dtype=float)
    if x.size < minimum:
        if minimum == 2:
            raise InputError(
                f"{name}.readings: a Type A evaluation needs at least 2 readings, got {x.size}; "
                f"one reading gives no estimate of dispersion (use a pooled standard deviation, "
                f"JCGM 100:2008 4.2.4, or a Type B evaluation)"
            )
        raise InputError(f"{name}.readings must not be empty")
    bad = ~np.isfinite(x)
    if bad.any():
        raise InputError(f"{name}.readings must be finite, got {x[bad][0]!r}")
    return x


#: Set while a constructor of this module builds an input: its statement holds by construction.
_TRUSTED: contextvars.ContextVar[bool] = contextvars.ContextVar("viscometry_trusted", default=False)


def _make(cls: type[InputQuantity], **fields: object) -> InputQuantity:
    token = _TRUSTED.set(True)
    try:
        return cls(**fields)  # type: ignore[arg-type]
    finally:
        _TRUSTED.reset(token)


def _rebuild(q: InputQuantity) -> InputQuantity:
    """The input its statement describes, built again by the matching constructor."""
    st = dict(q.stated)
    if q.form == "readings":
        return InputQuantity.from_readings(q.name, q.readings or (), q.unit)
    if q.form == "pooled":
        return InputQuantity.from_pooled(
            q.name, q.readings or (), st["pooled_standard_deviation"], st["pooled_dof"], q.unit
        )
    dofs = {k: st.get(k) for k in ("dof", "relative_uncertainty_of_uncertainty")}
    if q.form == "expanded":
        return InputQuantity.from_expanded(
            q.name, q.value, st["expanded_uncertainty"], q.unit,
            coverage_factor=st.get("coverage_factor"),
            coverage_probability=st.get("coverage_probability"), **dofs,  # type: ignore[arg-type]
        )  # fmt: skip
    kind = str(st.get("distribution"))
    value = None if "lower" in st else q.value
    return InputQuantity.bounded(
        kind, q.name, value, st.get("half_width"), q.unit, lower=st.get("lower"),
        upper=st.get("upper"), beta=st.get("beta") if kind == "trapezoidal" else None, **dofs,  # type: ignore[arg-type]
    )  # fmt: skip


def _dof_statement(dof: float | None, rel: float | None) -> tuple[tuple[str, float | str], ...]:
    if rel is not None:
        return (("relative_uncertainty_of_uncertainty", float(rel)),)
    if dof is not None:
        return (("dof", _dof(dof)),)
    return ()


def _type_b_dof(name: str, dof: float | None, rel: float | None) -> float:
    if dof is not None and rel is not None:
        raise InputError(f"{name}: give dof or relative_uncertainty_of_uncertainty, not both")
    if rel is not None:
        return dof_from_relative_uncertainty(rel)
    return _dof(dof, f"{name}.dof")
