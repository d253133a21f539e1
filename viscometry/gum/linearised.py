"""A budget linearised at its estimates: the fast path for sliders and what-ifs on uncertainties.

Sensitivity coefficients depend on the estimates only (JCGM 100:2008, 5.1.3), so changing
standard uncertainties needs no new derivative and no model call. A
:class:`LinearisedBudget` keeps cᵢ, u(xᵢ), νᵢ and the correlation matrix and gets u_c, ν_eff,
k and U from the one propagation kernel (:func:`viscometry.gum.propagation.propagate`), the
same function :meth:`viscometry.gum.Budget.evaluate` calls. Its warnings are the budget's
estimate warnings plus the plausibility warnings of the current uncertainties, so a slider
shows what a full evaluation would.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from typing import TYPE_CHECKING, NamedTuple

import numpy as np

from viscometry.errors import InputError
from viscometry.gum.propagation import (
    SMALLEST_KEPT,
    Propagation,
    propagate,
    representation_problem,
)
from viscometry.gum.validity import check_propagation, si_problem, uncertainty_warnings

if TYPE_CHECKING:  # pragma: no cover
    from viscometry.gum.budget import Budget

__all__ = ["LinearisedBudget"]


def frozen_array(a: object) -> np.ndarray:
    """A read-only float copy of ``a``."""
    out = np.array(a, dtype=float)
    out.setflags(write=False)
    return out


@dataclass(frozen=True, eq=False)
class LinearisedBudget:
    """A first-order budget linearised at fixed estimates (measurand unit; inputs' own units).

    Built by :meth:`viscometry.gum.Budget.linearise`; cheap to copy with new standard
    uncertainties; derived numbers are computed on first access.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "a + 2*b", [InputQuantity.normal("a", 1.0, 0.3),
    ...                                          InputQuantity.normal("b", 1.0, 0.2)])
    >>> lin = b.linearise()
    >>> round(lin.standard_uncertainty, 12), round(lin.with_uncertainty("b", 0.0).standard_uncertainty, 12)
    (0.5, 0.3)
    """

    budget: Budget
    value: float
    sensitivities: np.ndarray
    uncertainties: np.ndarray

    @property
    def names(self) -> tuple[str, ...]:
        return self.budget.input_names

    @functools.cached_property
    def dofs(self) -> np.ndarray:
        """νᵢ of the inputs (read-only)."""
        return frozen_array([q.dof for q in self.budget.inputs])

    def with_uncertainty(self, name: str, standard_uncertainty: float) -> LinearisedBudget:
        """A copy where input ``name`` has another standard uncertainty (its own unit)."""
        return self.with_uncertainties({name: standard_uncertainty})

    @functools.cached_property
    def _index(self) -> dict[str, int]:
        return {n: i for i, n in enumerate(self.budget.input_names)}

    @functools.cached_property
    def _scales(self) -> tuple[float, ...]:
        return self.budget.input_scales

    def with_uncertainties(self, changes: dict[str, float]) -> LinearisedBudget:
        """A copy with several standard uncertainties changed (each ≥ 0, own unit).

        Refused as a budget refuses them: a negative or non-finite value, or one that is
        not a usable float in SI units (below 3e-316 there, say).
        """
        u = self.uncertainties.copy()
        index = self._index
        scales = self._scales
        for name, value in changes.items():
            i = index.get(name)
            if i is None:
                raise InputError(f"no input named {name!r} (inputs: {', '.join(self.names)})")
            if not (math.isfinite(value) and value >= 0):
                raise InputError(f"{name}.standard_uncertainty must be non-negative, got {value!r}")
            v = value * scales[i]
            found = (
                None
                if v == 0 or SMALLEST_KEPT <= v < math.inf
                else si_problem((name,), np.zeros(1), np.array([v]))
            )
            if found is not None:
                raise InputError(f"{name}.standard_uncertainty = {value!r}: {found[2]}",
                                 where=f"inputs.{name}")  # fmt: skip
            u[i] = value
        u.setflags(write=False)
        # A shallow copy that keeps what does not depend on u (the dofs, the name index,
        # the inputs that keep their sign) and drops the cached propagation: faster than
        # dataclasses.replace for a slider. The plausibility warnings and the propagation
        # checks of the new u run when the copy is read (warnings, _propagation).
        new = object.__new__(LinearisedBudget)
        new.__dict__.update(
            budget=self.budget, value=self.value, sensitivities=self.sensitivities,
            dofs=self.dofs, _index=index, _scales=scales, uncertainties=u,
            _sign_bound_rows=self._sign_bound_rows,
        )  # fmt: skip
        return new

    def with_estimate(self, name: str, value: float) -> LinearisedBudget:
        """The budget linearised again at another estimate of ``name`` (its own unit).

        The sensitivity coefficients depend on the estimates, so this is no shortcut: the
        budget is rebuilt with the new estimate — and refused exactly as loading it would
        be (a radius that is not positive, a value that is not finite...) — and
        linearised there; the standard uncertainties of this copy are kept.

        Raises
        ------
        InputError, ModelError
            As :class:`~viscometry.gum.Budget` and :meth:`~viscometry.gum.Budget.linearise`.
        """
        q = self.budget.input(name)
        u = dict(zip(self.names, self.uncertainties.tolist(), strict=True))
        new = self.budget.with_input(q.with_uncertainty(u[name], value=value))
        return new.linearise().with_uncertainties(u)

    @functools.cached_property
    def _propagation(self) -> Propagation:
        """The kernel's numbers; a u_c or U that cannot be represented is refused (as by
        :meth:`~viscometry.gum.Budget.evaluate`)."""
        b = self.budget
        prop = propagate(
            self.sensitivities, self.uncertainties, self.dofs, b.correlation_matrix,
            coverage_probability=b.coverage_probability, coverage_factor=b.coverage_factor,
        )  # fmt: skip
        lost = b.underflowed_sensitivities
        if lost or representation_problem(prop) is not None:  # (rare: no arrays otherwise)
            check_propagation(
                b, prop, self.uncertainties * np.array(self._scales), lost, _at_estimates,
                units=f"the measurand unit {b.unit!r}", log10_to_si=math.log10(b.output_scale),
            )  # fmt: skip
        return prop

    @property
    def contributions(self) -> np.ndarray:
        """Signed cᵢu(xᵢ) in the measurand unit."""
        return self._propagation.contributions

    @property
    def standard_uncertainty(self) -> float:
        return float(self._propagation.standard_uncertainty)

    @property
    def effective_dof(self) -> float:
        return float(self._propagation.effective_dof)

    @property
    def coverage_factor(self) -> float:
        return float(self._propagation.coverage_factor)

    @property
    def coverage_probability(self) -> float:
        return float(self._propagation.coverage_probability)

    @property
    def expanded_uncertainty(self) -> float:
        return float(self._propagation.expanded_uncertainty)

    @property
    def variance_shares(self) -> np.ndarray:
        """(cᵢu(xᵢ))²/u_c² per input (correlation cross-terms not included)."""
        return np.asarray(self._propagation.variance_shares, dtype=float)

    @functools.cached_property
    def _sign_bound_rows(self) -> tuple[tuple[int, str, float, str], ...]:
        """(index, name, estimate, unit) of the inputs that keep their sign: they depend on
        the estimates only, so every what-if on uncertainties shares them."""
        bound = set(self.budget.sign_bound)
        return tuple(
            (i, q.name, q.value, q.unit)
            for i, q in enumerate(self.budget.inputs)
            if q.name in bound
        )

    @property
    def warnings(self) -> tuple[str, ...]:
        """The budget's estimate warnings and the plausibility warnings of these u(xᵢ)."""
        b = self.budget
        u = self.uncertainties.tolist()
        rows = [_Row(name, value, unit, u[i]) for i, name, value, unit in self._sign_bound_rows]
        notes = uncertainty_warnings(
            rows, b.measurand, self.value, self.expanded_uncertainty, b.positive_measurand,
            b.sign_bound, b.unit,
        )  # fmt: skip
        return b.estimate_warnings + tuple(notes)


def _at_estimates(_point: int) -> str:
    return "at the input estimates"


class _Row(NamedTuple):
    """What a plausibility check needs of an input (no InputQuantity is rebuilt)."""

    name: str
    value: float
    unit: str
    standard_uncertainty: float
