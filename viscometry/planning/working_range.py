"""A budget across its working range, and the uncertainty a lab states per sub-range of its scope.

Core layer. :func:`working_range` evaluates a budget at many estimates of one input (the
flow time, say, with other inputs following it through ``adjust``) in one vectorised pass
of the compiled model and the propagation kernel; :func:`scope_table` turns the result into
the stated relative expanded uncertainty per sub-range of a scope of accreditation.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from decimal import ROUND_CEILING, ROUND_HALF_EVEN, Decimal
from typing import Any, Literal

import numpy as np

from viscometry._checks import finite as _number
from viscometry.errors import InputError
from viscometry.gum.budget import Budget
from viscometry.gum.linearised import frozen_array
from viscometry.gum.propagation import SMALLEST_NORMAL
from viscometry.gum.result import OfBudget
from viscometry.gum.validity import check_points, point_plausibility, propagate_points

__all__ = [
    "MAX_POINTS",
    "ROUND_UP_ALLOWANCE",
    "WorkingRange",
    "round_up",
    "scope_table",
    "working_range",
]

#: Relative distance below which :func:`round_up` treats a value as already rounded.
ROUND_UP_ALLOWANCE = 1e-9
#: Most points of a working range (memory grows with points × inputs).
MAX_POINTS = 100_000

Adjust = Callable[[np.ndarray], Mapping[str, Any]]


@dataclass(frozen=True)
class WorkingRange(OfBudget):
    """A budget evaluated across a range of one input (arrays are read-only).

    Attributes
    ----------
    budget : Budget
    over : str
        The input whose estimate runs across the range.
    over_unit : str
    values : array
        Its estimates. [unit of ``over``]
    value : array
        Measurand estimate per point. [measurand unit]
    standard_uncertainty, expanded_uncertainty : array
        u_c and U per point. [measurand unit]
    effective_dof, coverage_factor : array
    contributions : array, shape (points, inputs)
        Signed cᵢu(xᵢ) per point. [measurand unit]
    dominant : tuple of str
        Input with the largest |cᵢu(xᵢ)| per point.
    warnings : tuple of str
        The budget's warnings, as its own evaluation gives them.
    point_warnings : tuple of str
        What the budget's checks say at points of the range but not at its own estimates
        (a validity check of a built-in model, an uncertainty reaching past zero, an
        interval below zero...), each naming the first such point and how many there are.
    """

    budget: Budget
    over: str
    over_unit: str
    values: np.ndarray
    value: np.ndarray
    standard_uncertainty: np.ndarray
    effective_dof: np.ndarray
    coverage_factor: np.ndarray
    expanded_uncertainty: np.ndarray
    contributions: np.ndarray
    dominant: tuple[str, ...]
    warnings: tuple[str, ...] = ()
    point_warnings: tuple[str, ...] = ()

    @property
    def input_names(self) -> tuple[str, ...]:
        return self.budget.input_names

    @property
    def relative_expanded_uncertainty(self) -> np.ndarray:
        """U/|y| per point (NaN where y = 0)."""
        with np.errstate(divide="ignore", invalid="ignore"):
            return np.where(self.value != 0, self.expanded_uncertainty / np.abs(self.value), np.nan)

    @property
    def variance_shares(self) -> np.ndarray:
        """(cᵢu(xᵢ))²/u_c² per point and input (shape (points, inputs))."""
        uc = self.standard_uncertainty[:, None]
        with np.errstate(all="ignore"):
            uc2 = uc**2
            # u_c² under- or overflows outside the normal range: the same ratio, scaled first
            normal = (uc2 >= SMALLEST_NORMAL) & np.isfinite(uc2)
            ratio = np.where(normal, self.contributions**2 / uc2, (self.contributions / uc) ** 2)
            return np.where(uc > 0, ratio, 0.0)

    def table(self) -> Any:
        """One row per point (snake_case columns, numbers): ``input_value`` (of
        :attr:`over`, its unit), ``value`` (y), ``standard_uncertainty``, ``effective_dof``,
        ``coverage_factor``, ``expanded_uncertainty``, ``relative_expanded_uncertainty``,
        ``dominant`` and ``dominant_share``."""
        import pandas as pd

        shares = self.variance_shares
        dom_idx = np.argmax(shares, axis=1)
        return pd.DataFrame(
            {
                "input_value": self.values,
                "value": self.value,
                "standard_uncertainty": self.standard_uncertainty,
                "effective_dof": self.effective_dof,
                "coverage_factor": self.coverage_factor,
                "expanded_uncertainty": self.expanded_uncertainty,
                "relative_expanded_uncertainty": self.relative_expanded_uncertainty,
                "dominant": list(self.dominant),
                "dominant_share": shares[np.arange(len(self.values)), dom_idx],
            }
        )


def _points(start: object, stop: object, points: object, spacing: str) -> np.ndarray:
    a, z = _number(start, "range start"), _number(stop, "range stop")
    if isinstance(points, bool) or not isinstance(points, (int, np.integer)) or points < 1:
        raise InputError(f"range points must be a positive integer, got {points!r}")
    if points > MAX_POINTS:
        raise InputError(f"range points must be at most {MAX_POINTS}, got {points!r}")
    if spacing == "linear":
        return np.linspace(a, z, int(points))
    if spacing == "log":
        if a <= 0 or z <= 0:
            raise InputError(f"a log range needs start and stop > 0, got start={a!r}, stop={z!r}")
        return np.geomspace(a, z, int(points))
    raise InputError(f"spacing must be 'linear' or 'log', got {spacing!r}")


def working_range(
    budget: Budget,
    over: str,
    start: float,
    stop: float,
    points: int = 50,
    spacing: Literal["linear", "log"] = "linear",
    adjust: Adjust | None = None,
) -> WorkingRange:
    """Evaluate a budget across a range of one input in one vectorised pass.

    Parameters
    ----------
    budget : Budget
    over : str
        Input whose estimate runs across the range (its standard uncertainty stays as given
        unless ``adjust`` sets it).
    start, stop : float
        Range ends, in the input's own unit (``start > stop`` runs downwards). [input unit]
    points : int
        Number of points, 1 to :data:`MAX_POINTS` (1 gives ``start`` only).
    spacing : {"linear", "log"}
        Evenly or geometrically spaced (log needs both ends > 0).
    adjust : callable or None
        ``adjust(values)`` receives the estimates of ``over`` (array, own unit) and returns a
        mapping: input name → array of new estimates (own unit), or → a mapping with
        ``"value"`` and/or ``"standard_uncertainty"`` arrays (own unit). Scalars broadcast.
        ``over`` itself may only get a ``"standard_uncertainty"``. Write it with numpy
        operations so the evaluation stays vectorised.

    Returns
    -------
    WorkingRange

    Raises
    ------
    InputError
        Unknown input, bad range or spacing, a non-finite result, or a malformed ``adjust``
        return value.

    Notes
    -----
    Each point is the first-order budget of JCGM 100:2008 (eq. 16, G.2b, G.6.4) with the
    inputs of that point. To cover a range of the measurand, run the input that drives it
    (the flow time t in ν = C·t) and let ``adjust`` move the inputs that follow it; the
    measurand value of each point is in ``value`` and :func:`scope_table` uses it.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "C*t", [InputQuantity.normal("C", 0.01, 1e-5),
    ...                                      InputQuantity.normal("t", 300.0, 0.25)],
    ...                         coverage_factor=2.0)
    >>> s = working_range(b, "t", 200.0, 400.0, points=3)
    >>> [round(float(v), 3) for v in s.value], s.dominant
    ([2.0, 3.0, 4.0], ('t', 'C', 'C'))
    """
    q = budget.input(over)
    values = _points(start, stop, points, spacing)
    x, u = _columns(budget, q.name, values, adjust)

    def label(j: int) -> str:
        return f"at {q.name} = {float(values[j])!r} (point {j + 1} of the range)"

    notes = check_points(budget, x, u, label)
    _x0, _u0, nu, const = budget.si_arrays()
    comp = budget.compiled
    y = np.broadcast_to(comp.value(*x, *const), values.shape)
    grad = comp.gradient(*x, *const)
    bad = ~(np.isfinite(y) & np.isfinite(grad).all(axis=0))
    if np.any(bad):
        first = int(np.argmax(bad))
        raise InputError(f"the model or a sensitivity is not finite {label(first)}")
    prop, lost = propagate_points(budget, x, u, nu, y, grad, label)
    notes += lost
    out_s = budget.output_scale
    contributions = (prop.contributions / out_s).T
    dom = np.argmax(np.abs(prop.variance_shares.T), axis=1)
    value = (y - budget.output_offset) / out_s
    big_u = prop.expanded_uncertainty / out_s
    own = budget.linearise().warnings
    notes += point_plausibility(budget, x, u, value, big_u, label, known=own)
    return WorkingRange(
        budget=budget, over=q.name, over_unit=q.unit, values=frozen_array(values),
        value=frozen_array(value),
        standard_uncertainty=frozen_array(prop.standard_uncertainty / out_s),
        effective_dof=frozen_array(prop.effective_dof),
        coverage_factor=frozen_array(prop.coverage_factor),
        expanded_uncertainty=frozen_array(big_u),
        contributions=frozen_array(contributions),
        dominant=tuple(budget.input_names[int(d)] for d in dom),
        warnings=own, point_warnings=tuple(notes),
    )  # fmt: skip


def _columns(
    budget: Budget, over: str, values: np.ndarray, adjust: Adjust | None
) -> tuple[np.ndarray, np.ndarray]:
    """Estimates and standard uncertainties (SI) per point: inputs × points."""
    names = budget.input_names
    x0, u0, _nu, _c = budget.si_arrays()
    p = len(values)
    x, u = np.repeat(x0[:, None], p, axis=1), np.repeat(u0[:, None], p, axis=1)
    s, o = budget.input_conversions[names.index(over)]
    x[names.index(over)] = values * s + o
    if adjust is None:
        return x, u
    changes = adjust(values.copy())
    if not isinstance(changes, Mapping):
        raise InputError(
            f"adjust must return a mapping of input name to arrays, got {type(changes).__name__}"
        )
    for key, spec in changes.items():
        if key not in names:
            raise InputError(f"adjust returned unknown input {key!r} (inputs: {', '.join(names)})")
        j = names.index(key)
        sj, oj = budget.input_conversions[j]
        new_x, new_u = spec, None
        if isinstance(spec, Mapping):
            bad = sorted(set(spec) - {"value", "standard_uncertainty"})
            if bad:
                raise InputError(
                    f"adjust[{key!r}] has unknown key(s) {bad}; use 'value', 'standard_uncertainty'"
                )
            new_x, new_u = spec.get("value"), spec.get("standard_uncertainty")
        if new_x is not None:
            if key == over:
                raise InputError(
                    f"adjust may not set the estimate of {key!r}, which the range runs over"
                )
            x[j] = _array(new_x, p, f"adjust[{key!r}] value") * sj + oj
        if new_u is not None:
            uu = _array(new_u, p, f"adjust[{key!r}] standard_uncertainty")
            if np.any(uu < 0):
                raise InputError(
                    f"adjust[{key!r}] standard_uncertainty must be ≥ 0, got {uu.min()!r}"
                )
            u[j] = uu * sj
    return x, u


def _array(v: Any, p: int, field: str) -> np.ndarray:
    try:
        arr = np.broadcast_to(np.asarray(v, dtype=float), (p,))
    except (TypeError, ValueError):
        raise InputError(
            f"{field} must be a number or an array of {p} numbers, got {v!r}"
        ) from None
    if not np.all(np.isfinite(arr)):
        raise InputError(f"{field} must be finite, got {arr[~np.isfinite(arr)][0]!r}")
    return arr


# =============================================================================== scope tables
def round_up(x: float, digits: int = 2) -> float:
    """Round a positive number up to ``digits`` significant digits (decimal, exact).

    The float's shortest decimal representation is rounded towards +∞. A value within a
    relative :data:`ROUND_UP_ALLOWANCE` of a ``digits``-digit number is taken as that number,
    so binary round-off (0.0246/3 = 0.008200000000000001) does not raise the claim a step.

    Examples
    --------
    >>> round_up(0.002501), round_up(0.0025), round_up(1234.0), round_up(0.0246 / 3)
    (0.0026, 0.0025, 1300.0, 0.0082)
    """
    v = _number(x, "value to round")
    if isinstance(digits, bool) or not isinstance(digits, int) or digits < 1:
        raise InputError(f"digits must be a positive integer, got {digits!r}")
    if v <= 0:
        raise InputError(f"value to round up must be positive, got {v!r}")
    d = Decimal(repr(v))
    step = Decimal(1).scaleb(d.adjusted() - digits + 1)
    nearest = d.quantize(step, rounding=ROUND_HALF_EVEN)
    if abs(d - nearest) <= d * Decimal(ROUND_UP_ALLOWANCE):
        return float(nearest)  # binary round-off only (e.g. 0.0246/3 = 0.008200000000000001)
    return float(d.quantize(step, rounding=ROUND_CEILING))


def scope_table(
    result: WorkingRange,
    edges: Any,
    *,
    axis: Literal["value", "input"] = "value",
    digits: int = 2,
) -> Any:
    """Stated relative expanded uncertainties per sub-range (a scope-of-accreditation table).

    Parameters
    ----------
    result : WorkingRange
        From :func:`working_range`.
    edges : sequence of float
        Increasing sub-range boundaries, at least two. [measurand unit for ``axis="value"``,
        unit of the input for ``axis="input"``]
    axis : {"value", "input"}
        Split the range by the measurand value (default) or by the input.
    digits : int
        Significant digits of the stated value (default 2).

    Returns
    -------
    pandas.DataFrame
        One row per sub-range [from, to] (both ends included, so a point on a shared edge
        counts in both): ``points``, the ``largest_relative_expanded_uncertainty`` found,
        where it occurs (``at``) and the ``stated_relative_expanded_uncertainty`` (the largest
        rounded up to ``digits`` significant digits).

    Raises
    ------
    InputError
        Fewer than two edges, edges not increasing, or a sub-range with no point.

    Notes
    -----
    The stated uncertainty of a sub-range is the largest relative U within it, rounded UP to
    two significant digits, so the claim is never smaller than any point it covers (common
    practice, no source). The claim is only as good as the resolution: use enough points for
    U to be smooth between them.

    Examples
    --------
    >>> from viscometry.gum import Budget, InputQuantity
    >>> b = Budget.from_formula("y", "C*t", [InputQuantity.normal("C", 0.01, 1e-5),
    ...                                      InputQuantity.normal("t", 300.0, 0.3)],
    ...                         coverage_factor=2.0)
    >>> s = working_range(b, "t", 100.0, 1000.0, points=91)
    >>> scope_table(s, [1.0, 5.0, 10.0])["stated_relative_expanded_uncertainty"].tolist()
    [0.0064, 0.0024]
    """
    import pandas as pd

    e = np.asarray([_number(v, "scope edge") for v in edges], dtype=float)
    if e.size < 2:
        raise InputError(f"scope_table needs at least two edges, got {list(edges)!r}")
    if np.any(np.diff(e) <= 0):
        raise InputError(f"scope edges must be strictly increasing, got {list(edges)!r}")
    if axis not in ("value", "input"):
        raise InputError(f"axis must be 'value' or 'input', got {axis!r}")
    xs = np.asarray(result.value if axis == "value" else result.values)
    label = result.measurand if axis == "value" else result.over
    rel = np.asarray(result.relative_expanded_uncertainty)
    rows = []
    for lo, hi in itertools.pairwise(e):
        inside = (xs >= lo) & (xs <= hi)
        if not inside.any():
            raise InputError(
                f"no point with {label} in the sub-range [{lo:g}, {hi:g}]; widen the range or add points"
            )
        r = rel[inside]
        if np.any(~np.isfinite(r)):
            raise InputError(f"relative U is undefined (y = 0) in the sub-range [{lo:g}, {hi:g}]")
        j = int(np.argmax(r))
        worst = float(r[j])
        rows.append(
            {
                "from": float(lo), "to": float(hi), "points": int(inside.sum()),
                "largest_relative_expanded_uncertainty": worst, "at": float(xs[inside][j]),
                "stated_relative_expanded_uncertainty": round_up(worst, digits) if worst > 0 else 0.0,
            }
        )  # fmt: skip
    return pd.DataFrame(rows)
