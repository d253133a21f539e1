"""Propagation of distributions by a Monte Carlo method (JCGM 101:2008).

A pure, vectorised and seeded implementation of the Monte Carlo method of GUM Supplement 1:

* :func:`draw_inputs` draws M values of every input quantity from its probability
  distribution (JCGM 101:2008, 6.4 and 7.3), jointly normal where inputs are correlated
  (6.4.8);
* :func:`run_monte_carlo` evaluates a vectorised measurement model on M draws taken in
  chunks, and summarises the M model values (7.5-7.7);
* :func:`run_adaptive` repeats batches of trials until the results are stable to a numerical
  tolerance (7.9);
* :func:`validate_against` compares a first-order (law of propagation of uncertainty)
  coverage interval with the Monte Carlo one (clause 8);
* :func:`numerical_tolerance` and :func:`coverage_interval` are the building blocks
  (7.9.2 and 7.7).

The module works on SI floats only: every :class:`~viscometry.gum.inputs.InputQuantity` it
receives must already carry its estimate and standard uncertainty in units consistent with
the model; ``InputQuantity.unit`` is ignored here.

Reproducibility
---------------
All randomness comes from one :class:`numpy.random.Generator`. At the start of a run the
generator is asked for four 63-bit integers, which seed one independent child stream (PCG64, spawned
from a :class:`numpy.random.SeedSequence`) per input quantity plus one for the block of
correlated inputs. Each child stream is read sequentially, trial after trial, so

* the same generator state (or the same ``seed``) gives bit-identical draws and results;
* the results do **not** depend on ``chunk_size``: drawing 10⁶ trials in chunks of 10³ or in
  one piece reads the same numbers from every stream (statistics over all trials are also
  accumulated in fixed blocks independent of the chunking).
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Literal

import numpy as np
from numpy.typing import ArrayLike

from viscometry.errors import CorrelationError, CorrelationWarning, InputError, ModelError
from viscometry.gum.inputs import InputQuantity
from viscometry.gum.propagation import (
    DEFAULT_COVERAGE_PROBABILITY,
    PSD_TOLERANCE,
    SMALLEST_NORMAL,
    validate_correlation,
)

__all__ = [
    "IntervalKind",
    "MonteCarloResult",
    "ValidationResult",
    "draw_inputs",
    "numerical_tolerance",
    "coverage_interval",
    "run_monte_carlo",
    "run_adaptive",
    "validate_against",
    "MAX_TRIALS",
    "check_trials",
]

#: Most Monte Carlo trials M of one run, fixed or adaptive [1]. A run keeps every model value
#: in memory to find the coverage intervals (8 bytes each, 80 MB at the limit; an adaptive run
#: briefly twice that), so the peak memory of a run at the limit stays near 0.3 GB. Larger M is
#: refused with an :class:`~viscometry.errors.InputError` before anything is allocated, by the
#: library, the command line and the widgets alike.
MAX_TRIALS = 10**7
#: Most histogram bins of a result [1].
MAX_HISTOGRAM_BINS = 100_000
#: Most significant digits n_dig of a numerical tolerance [1]: a float has about 17.
_MAX_DIGITS = 17

IntervalKind = Literal["symmetric", "shortest"]
_INTERVAL_KINDS = ("symmetric", "shortest")

#: Half-width divisors a/u of the bounded distributions (JCGM 101:2008, 6.4.2-6.4.6).
_BOUNDED_DIVISOR = {
    "rectangular": math.sqrt(3.0),
    "triangular": math.sqrt(6.0),
    "arcsine": math.sqrt(2.0),
}

#: Block length for the mean/standard-deviation pass over all model values; fixed so that
#: the statistics do not depend on the chunking of the draws.
_STATS_BLOCK = 1 << 18

#: Sub-chunk used inside an adaptive batch (a batch is usually only 10⁴ trials).
_ADAPTIVE_CHUNK = 100_000


# ---------------------------------------------------------------------------- results
@dataclass(frozen=True, slots=True)
class MonteCarloResult:
    """Summary of a Monte Carlo propagation of distributions (immutable).

    Attributes
    ----------
    trials : int
        Number M of Monte Carlo trials used for every figure below.
    seed : int or None
        The seed the generator was created from, or ``None`` when a generator was passed in.
    value : float
        Estimate y, the mean of the M model values (JCGM 101:2008, 7.6), in the output unit.
    standard_uncertainty : float
        u(y), the sample standard deviation of the model values (divisor M − 1; 7.6).
    coverage_probability : float
        Coverage probability p of the intervals [1].
    interval_kind : {"symmetric", "shortest"}
        Which interval ``interval`` is.
    interval : tuple of float
        The reported coverage interval (y_low, y_high).
    symmetric_interval, shortest_interval : tuple of float
        The probabilistically symmetric and the shortest 100p % coverage intervals (7.7).
    histogram_counts : tuple of int
        Counts of the model values in ``len(histogram_edges) - 1`` equal bins spanning the
        smallest to the largest value (last bin closed), a discrete picture of the PDF (7.5).
    histogram_edges : tuple of float
        Bin edges of the histogram, in the output unit.
    converged : bool
        ``True`` only when an adaptive run met its numerical tolerance (7.9.4). A fixed-M run
        does not assess stabilisation and reports ``False`` (see ``note``).
    batches : int or None
        Number h of batches of an adaptive run; ``None`` for a fixed-M run.
    note : str
        Plain-words account of how the run ended.
    """

    trials: int
    seed: int | None
    value: float
    standard_uncertainty: float
    coverage_probability: float
    interval_kind: IntervalKind
    interval: tuple[float, float]
    symmetric_interval: tuple[float, float]
    shortest_interval: tuple[float, float]
    histogram_counts: tuple[int, ...]
    histogram_edges: tuple[float, ...]
    converged: bool
    batches: int | None
    note: str


@dataclass(frozen=True, slots=True)
class ValidationResult:
    """Outcome of validating a first-order result against a Monte Carlo result (immutable).

    Attributes
    ----------
    reference : str
        Label of the result being validated, e.g. ``"first-order"``.
    tolerance : float
        Numerical tolerance δ (JCGM 101:2008, 7.9.2), in the output unit.
    d_low, d_high : float
        |y − U_p − y_low| and |y + U_p − y_high| (JCGM 101:2008, 8.2), in the output unit.
    validated : bool
        ``True`` when both d_low and d_high are at most δ.
    not_applicable : str
        Why a validation could not be made (then ``validated`` is ``False``), else ``""``.
    """

    reference: str
    tolerance: float
    d_low: float
    d_high: float
    validated: bool
    not_applicable: str = ""


# ---------------------------------------------------------------------------- checks
def _shown(value: object) -> str:
    """``repr`` of a value for a message, shortened (a 5000-digit integer has no repr)."""
    if isinstance(value, (int, np.integer)) and not isinstance(value, bool):
        bits = abs(int(value)).bit_length()
        if bits > 100:
            return f"{'-' if value < 0 else ''}an integer of about {int(bits * 0.30103)} digits"
    text = repr(value)
    return text if len(text) <= 60 else text[:57] + "..."


def _check_int(value: object, field: str, minimum: int = 1, maximum: int | None = None) -> int:
    if isinstance(value, bool) or not isinstance(value, (int, np.integer)):
        raise InputError(f"{field} must be an integer, got {_shown(value)}")
    if value < minimum:
        raise InputError(f"{field} must be at least {minimum}, got {_shown(value)}")
    if maximum is not None and value > maximum:
        raise InputError(f"{field} must be at most {maximum}, got {_shown(value)}")
    return int(value)


def check_trials(value: object, field: str = "trials") -> int:
    """A number of Monte Carlo trials, 1 to :data:`MAX_TRIALS`, or an :class:`InputError`.

    Parameters
    ----------
    value : int
        The number of trials M [1].
    field : str
        What to call it in the message.

    Returns
    -------
    int
        ``value`` as a Python int.

    Raises
    ------
    InputError
        Not a whole number, below 1 or above :data:`MAX_TRIALS`; nothing is allocated.

    Examples
    --------
    >>> check_trials(10**6)
    1000000
    >>> check_trials(10**10)  # doctest: +ELLIPSIS
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: trials = 10000000000 is more than the limit of 10000000 ...
    """
    m = _check_int(value, field)
    if m > MAX_TRIALS:
        raise InputError(
            f"{field} = {_shown(m)} is more than the limit of {MAX_TRIALS} trials of one Monte "
            "Carlo run (it keeps every model value in memory, 8 bytes each); use fewer trials "
            "or the adaptive procedure"
        )
    return m


def _check_probability(value: object, field: str = "coverage_probability") -> float:
    try:
        p = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise InputError(f"{field} must be a number in (0, 1), got {value!r}") from None
    if isinstance(value, bool) or not 0.0 < p < 1.0:
        raise InputError(f"{field} must lie strictly between 0 and 1, got {value!r}")
    return p


def _check_kind(kind: object, field: str = "kind") -> IntervalKind:
    if kind not in _INTERVAL_KINDS:
        raise InputError(f"{field} must be 'symmetric' or 'shortest', got {kind!r}")
    return kind  # type: ignore[return-value]


def _check_inputs(inputs: Sequence[InputQuantity]) -> tuple[InputQuantity, ...]:
    if isinstance(inputs, (str, bytes)) or not isinstance(inputs, Sequence):
        raise InputError(f"inputs must be a sequence of InputQuantity, got {inputs!r}")
    items = tuple(inputs)
    if not items:
        raise InputError("inputs must hold at least one InputQuantity, got an empty sequence")
    for i, q in enumerate(items):
        if not isinstance(q, InputQuantity):
            raise InputError(f"inputs[{i}] must be an InputQuantity, got {q!r}")
    return items


def _check_correlation(
    correlation: ArrayLike | None, inputs: Sequence[InputQuantity]
) -> np.ndarray | None:
    """The correlation matrix, refused or accepted exactly as every other path does
    (:func:`~viscometry.gum.propagation.validate_correlation`: one tolerance, one message,
    never repaired)."""
    if correlation is None:
        return None
    try:
        r = np.array(correlation, dtype=float)
    except (TypeError, ValueError):
        raise InputError(f"correlation must be a numeric matrix, got {correlation!r}") from None
    n = len(inputs)
    if r.shape != (n, n):
        raise InputError(
            f"correlation must be a {n}×{n} matrix for {n} inputs, got shape {r.shape}"
        )
    return validate_correlation(r, [q.name for q in inputs])


def _factor(block: np.ndarray, names: Sequence[str]) -> np.ndarray:
    """A matrix L with L Lᵀ = ``block`` (a block of an accepted, positive semidefinite
    correlation matrix): Cholesky, else an eigen-decomposition for a singular one."""
    try:
        return np.linalg.cholesky(block)
    except np.linalg.LinAlgError:
        pass
    eigenvalues, eigenvectors = np.linalg.eigh(block)
    if eigenvalues.min() < -PSD_TOLERANCE:  # pragma: no cover - refused by validate_correlation
        raise CorrelationError(
            f"correlation matrix of {', '.join(names)} is not positive semidefinite: "
            f"smallest eigenvalue {eigenvalues.min():.3g}"
        )
    return eigenvectors * np.sqrt(np.clip(eigenvalues, 0.0, None))


def _half_width(q: InputQuantity) -> float:
    if q.half_width is not None:
        return float(q.half_width)
    if q.distribution == "trapezoidal":
        beta = float(q.beta if q.beta is not None else 0.0)
        return q.standard_uncertainty / math.sqrt((1.0 + beta * beta) / 6.0)
    return q.standard_uncertainty * _BOUNDED_DIVISOR[q.distribution]


# ---------------------------------------------------------------------------- sampling
class _Sampler:
    """Draws successive trials of all inputs from per-input child streams (see module notes)."""

    def __init__(
        self,
        inputs: tuple[InputQuantity, ...],
        correlation: np.ndarray | None,
        rng: np.random.Generator,
        stacklevel: int = 3,
    ) -> None:
        if not isinstance(rng, np.random.Generator):
            raise InputError(f"rng must be a numpy.random.Generator, got {rng!r}")
        self.inputs = inputs
        n = len(inputs)
        entropy = rng.integers(0, 2**63, size=4, dtype=np.int64)
        children = np.random.SeedSequence([int(e) for e in entropy]).spawn(n + 1)
        self._block_stream = np.random.Generator(np.random.PCG64(children[0]))
        self._streams = [np.random.Generator(np.random.PCG64(c)) for c in children[1:]]

        self._joint: list[int] = []
        self._factor: np.ndarray | None = None
        if correlation is not None:
            active = np.array([q.standard_uncertainty > 0 for q in inputs])
            off = correlation.copy()
            np.fill_diagonal(off, 0.0)
            off[~active, :] = 0.0
            off[:, ~active] = 0.0
            self._joint = [i for i in range(n) if np.any(off[i] != 0.0)]
            if self._joint:
                names = [inputs[i].name for i in self._joint]
                block = correlation[np.ix_(self._joint, self._joint)]
                self._factor = _factor(block, names)
                odd = [
                    f"{inputs[i].name} ({inputs[i].distribution})"
                    for i in self._joint
                    if inputs[i].distribution != "normal"
                ]
                if odd:
                    warnings.warn(
                        "correlated inputs are drawn from a joint normal distribution "
                        "(JCGM 101:2008, 6.4.8); the stated shape of "
                        f"{', '.join(odd)} is replaced by a normal with the same standard "
                        "uncertainty",
                        CorrelationWarning,
                        stacklevel=stacklevel,
                    )

    def draw(self, size: int) -> np.ndarray:
        out = np.empty((len(self.inputs), size), dtype=np.float64)
        joint = set(self._joint)
        for i, q in enumerate(self.inputs):
            if i not in joint:
                _draw_one(q, self._streams[i], out[i])
        if self._factor is not None:
            k = len(self._joint)
            z = self._block_stream.standard_normal((size, k))
            for row, i in enumerate(self._joint):
                # Explicit elementwise sum in a fixed order (not BLAS), so every trial's
                # value is independent of how many trials share the chunk.
                acc = out[i]
                np.multiply(z[:, 0], self._factor[row, 0], out=acc)
                for col in range(1, k):
                    if self._factor[row, col] != 0.0:
                        acc += self._factor[row, col] * z[:, col]
                q = self.inputs[i]
                acc *= q.standard_uncertainty
                acc += q.value
        return out


def _draw_one(q: InputQuantity, stream: np.random.Generator, out: np.ndarray) -> None:
    """Fill ``out`` with draws of one uncorrelated input (JCGM 101:2008, 6.4)."""
    u = q.standard_uncertainty
    if u == 0.0:
        out.fill(q.value)
        return
    kind = q.distribution
    if kind == "normal":  # 6.4.7
        stream.standard_normal(out=out)
        out *= u
    elif kind == "student_t":  # 6.4.9: x = value + u·t_ν
        out[...] = stream.standard_t(q.dof, size=out.size)
        out *= u
    elif kind == "rectangular":  # 6.4.2
        a = _half_width(q)
        stream.random(out=out)
        out -= 0.5
        out *= 2.0 * a
    elif kind == "triangular":  # 6.4.5 (inverse distribution function, one uniform per draw)
        a = _half_width(q)
        out[...] = stream.triangular(-a, 0.0, a, size=out.size)
    elif kind == "arcsine":  # 6.4.6: x = a·sin(2πr)
        a = _half_width(q)
        stream.random(out=out)
        out *= 2.0 * math.pi
        np.sin(out, out=out)
        out *= a
    elif kind == "trapezoidal":  # 6.4.4: sum of two centred uniforms of half-widths a(1±β)/2
        a = _half_width(q)
        beta = float(q.beta if q.beta is not None else 0.0)
        r = stream.random((out.size, 2))
        r -= 0.5
        np.multiply(r[:, 0], a * (1.0 + beta), out=out)
        out += a * (1.0 - beta) * r[:, 1]
    else:  # pragma: no cover - InputQuantity rejects unknown distributions
        raise InputError(f"{q.name}.distribution is not supported, got {kind!r}")
    out += q.value


def draw_inputs(
    inputs: Sequence[InputQuantity],
    correlation: ArrayLike | None,
    size: int,
    rng: np.random.Generator,
) -> np.ndarray:
    """Draw ``size`` values of every input quantity from its probability distribution.

    Parameters
    ----------
    inputs : sequence of InputQuantity
        The n input quantities, with estimates and standard uncertainties in consistent
        (SI) units [unit of each input]; ``unit`` is ignored.
    correlation : (n, n) array_like or None
        Correlation matrix of the inputs [1], or ``None`` for independent inputs.
    size : int
        Number of draws M per input [1].
    rng : numpy.random.Generator
        Source of randomness; the same generator state gives bit-identical draws.

    Returns
    -------
    numpy.ndarray
        Array of shape (n, M), float64; row i holds the draws of ``inputs[i]``.

    Raises
    ------
    InputError
        Empty or malformed ``inputs``, ``size`` < 1, a correlation matrix of the wrong shape,
        or ``rng`` not a Generator.
    CorrelationError
        A correlation matrix that is asymmetric, has |r| > 1, a diagonal other than 1, or is
        not positive semidefinite.

    Warns
    -----
    CorrelationWarning
        When a correlated input has a distribution other than normal or student_t.

    Notes
    -----
    Uncorrelated inputs are drawn from their own distribution, centred on ``value``
    (JCGM 101:2008, 6.4): normal x = value + u·z; scaled and shifted t x = value + u·t_ν
    (6.4.9, ν = ``dof``; its standard deviation is u·√(ν/(ν − 2)) for ν > 2); rectangular,
    triangular, arcsine and trapezoidal with half-width a = ``half_width`` when given,
    else a = u√3, u√6, u√2 and u/√((1 + β²)/6) respectively. An input with zero standard
    uncertainty is a constant.

    Inputs taking part in a non-zero correlation with another input of non-zero
    uncertainty are drawn jointly from the multivariate normal distribution with covariance
    U = D R D, D = diag(u) (6.4.8): x = value + D L z with L Lᵀ = R from a Cholesky
    factorisation, or from an eigen-decomposition R = V Λ Vᵀ, L = V Λ^½ when R is only
    positive semidefinite (e.g. r = ±1). Their stated marginal shape (rectangular, t, ...)
    is thereby replaced by a normal with the same standard uncertainty.

    References
    ----------
    JCGM 101:2008, 6.4.2-6.4.9 and 7.3.

    Examples
    --------
    >>> from viscometry.gum.inputs import InputQuantity
    >>> x = draw_inputs([InputQuantity.normal("a", 1.0, 0.1),
    ...                  InputQuantity.rectangular("b", 0.0, 2.0)], None, 5, np.random.default_rng(1))
    >>> x.shape, bool(np.all(np.abs(x[1]) <= 2.0))
    ((2, 5), True)
    """
    items = _check_inputs(inputs)
    size = check_trials(size, "size")
    r = _check_correlation(correlation, items)
    return _Sampler(items, r, rng).draw(size)


# ---------------------------------------------------------------------------- summaries
def numerical_tolerance(standard_uncertainty: float, significant_digits: int = 2) -> float:
    """Numerical tolerance δ associated with a standard uncertainty.

    Parameters
    ----------
    standard_uncertainty : float
        u(y) ≥ 0 [output unit].
    significant_digits : int
        Number n_dig of significant decimal digits regarded as meaningful in u(y) [1].

    Returns
    -------
    float
        δ = ½ × 10^ℓ [output unit], or 0 for u(y) = 0.

    Raises
    ------
    InputError
        Negative or non-finite ``standard_uncertainty``, or ``significant_digits`` < 1 or
        > 17.

    Notes
    -----
    u(y) is written as c × 10^ℓ with c an n_dig-digit integer, i.e. u(y) is first rounded to
    n_dig significant digits (a u that rounds up to the next power of ten, such as 0.0999
    with n_dig = 2 → 0.10 = 10 × 10⁻², raises ℓ accordingly).

    References
    ----------
    JCGM 101:2008, 7.9.2.

    Examples
    --------
    >>> numerical_tolerance(0.02857)
    0.0005
    >>> numerical_tolerance(2.0)
    0.05
    """
    try:
        u = float(standard_uncertainty)
    except (TypeError, ValueError):
        raise InputError(
            f"standard_uncertainty must be a number, got {standard_uncertainty!r}"
        ) from None
    if not math.isfinite(u) or u < 0:
        raise InputError(f"standard_uncertainty must be finite and non-negative, got {u!r}")
    n_dig = _check_int(significant_digits, "significant_digits", maximum=_MAX_DIGITS)
    if u == 0.0:
        return 0.0
    # Scientific formatting rounds u to n_dig significant digits and gives its exponent.
    exponent = int(f"{u:.{n_dig - 1}e}".split("e")[1])
    ell = exponent - (n_dig - 1)
    return 0.5 * 10.0**ell


def _coverage_indices(m: int, p: float) -> tuple[int, int]:
    """q and r of JCGM 101:2008, 7.7 (1-based r); checks M is large enough for p."""
    q = int(math.floor(p * m + 0.5))
    if q < 1 or q > m - 1:
        least = max(math.floor(0.5 / (1.0 - p)) + 1, math.ceil(0.5 / p))
        raise InputError(
            f"trials = {m} is too few for coverage_probability = {p!r}: a coverage interval "
            f"needs 1 ≤ round(p·M) ≤ M − 1, so at least M = {least} trials (JCGM 101:2008, 7.2 "
            "recommends M ≫ 1/(1 − p))"
        )
    r = (m - q + 1) // 2
    return q, r


def _interval_sorted(y: np.ndarray, p: float, kind: IntervalKind) -> tuple[float, float]:
    m = y.size
    q, r = _coverage_indices(m, p)
    if kind == "symmetric":
        return float(y[r - 1]), float(y[r + q - 1])
    widths = y[q:] - y[: m - q]
    j = int(np.argmin(widths))
    return float(y[j]), float(y[j + q])


def coverage_interval(
    sorted_values: ArrayLike, p: float, kind: IntervalKind = "symmetric"
) -> tuple[float, float]:
    """A 100p % coverage interval from a sorted sample of model values.

    Parameters
    ----------
    sorted_values : 1-D array_like
        The M model values y_(1) ≤ ... ≤ y_(M), sorted in non-decreasing order [output unit].
    p : float
        Coverage probability, 0 < p < 1 [1].
    kind : {"symmetric", "shortest"}
        Probabilistically symmetric or shortest coverage interval.

    Returns
    -------
    tuple of float
        (y_low, y_high) [output unit].

    Raises
    ------
    InputError
        ``p`` outside (0, 1), unknown ``kind``, values not a sorted finite 1-D sample, or too
        few values for ``p`` (round(pM) must lie between 1 and M − 1).

    Notes
    -----
    With q = pM when pM is an integer, else the integer part of pM + ½ (both are
    ⌊pM + ½⌋), every [y_(r), y_(r+q)], r = 1, ..., M − q, is a 100p % coverage interval.
    The probabilistically symmetric one takes r = (M − q)/2 when that is an integer, else the
    integer part of (M − q + 1)/2; the shortest takes the r that minimises y_(r+q) − y_(r)
    (the smallest such r on ties).

    References
    ----------
    JCGM 101:2008, 7.7 (clause numbering from memory).

    Examples
    --------
    >>> coverage_interval(np.arange(1.0, 101.0), 0.95)
    (3.0, 98.0)
    >>> coverage_interval([0.0, 0.1, 0.2, 0.3, 5.0], 0.6, "shortest")
    (0.0, 0.3)
    """
    p = _check_probability(p, "p")
    kind = _check_kind(kind)
    try:
        y = np.asarray(sorted_values, dtype=float)
    except (TypeError, ValueError):
        raise InputError("sorted_values must be a 1-D sample of numbers") from None
    if y.ndim != 1 or y.size == 0:
        raise InputError(f"sorted_values must be a non-empty 1-D sample, got shape {y.shape}")
    if not np.all(np.isfinite(y)):
        raise InputError("sorted_values must be finite")
    if y.size > 1 and not np.all(y[1:] >= y[:-1]):
        raise InputError("sorted_values must be sorted in non-decreasing order")
    return _interval_sorted(y, p, kind)


def _mean_and_m2(y: np.ndarray) -> tuple[float, float]:
    """Mean and sum of squared deviations, in fixed blocks combined pairwise (Chan et al.)."""
    count = 0
    mean = 0.0
    m2 = 0.0
    for start in range(0, y.size, _STATS_BLOCK):
        block = y[start : start + _STATS_BLOCK]
        nb = block.size
        mb = float(block.mean())
        d = block - mb
        m2b = float(np.dot(d, d))
        total = count + nb
        delta = mb - mean
        mean += delta * nb / total
        m2 += m2b + delta * delta * count * nb / total
        count = total
    return mean, m2


def _mean_and_sd(y: np.ndarray) -> tuple[float, float]:
    """Mean and standard deviation of the model values.

    A spread whose squares under- or overflow (values near 1e-200 or 1e200) would come out
    0 or ∞; then the values are scaled by a power of two first (exact) and the results
    scaled back, so that no spread is lost. Values in the normal range never take that
    path, so seeded results keep every digit.
    """
    with np.errstate(over="ignore", under="ignore"):  # detected below, not warned about
        mean, m2 = _mean_and_m2(y)
    sd = math.sqrt(m2 / (y.size - 1)) if y.size > 1 else 0.0
    if y.size > 1 and not (SMALLEST_NORMAL <= sd < math.inf) and y.min() != y.max():
        top = float(np.max(np.abs(y)))
        if math.isfinite(top):
            shift = math.frexp(top)[1]
            mean_s, m2_s = _mean_and_m2(np.ldexp(y, -shift))
            mean = math.ldexp(mean_s, shift)
            try:
                sd = math.ldexp(math.sqrt(m2_s / (y.size - 1)), shift)
            except OverflowError:
                sd = math.inf
    return mean, sd


def _summarise(
    y: np.ndarray,
    p: float,
    kind: IntervalKind,
    bins: int,
    *,
    trials: int,
    seed: int | None,
    converged: bool,
    batches: int | None,
    note: str,
) -> MonteCarloResult:
    """Summarise the model values ``y`` (sorted in place: the caller's order is lost)."""
    mean, sd = _mean_and_sd(y)
    y.sort()
    symmetric = _interval_sorted(y, p, "symmetric")
    shortest = _interval_sorted(y, p, "shortest")
    lo, hi = float(y[0]), float(y[-1])
    if lo == hi:  # a constant output: unit-wide bins around it, as numpy.histogram does
        lo, hi = lo - 0.5, hi + 0.5
    edges = np.linspace(lo, hi, bins + 1)
    idx = np.searchsorted(y, edges, side="left")
    idx[-1] = y.size  # the last bin is closed
    counts = np.diff(idx)
    return MonteCarloResult(
        trials=trials,
        seed=seed,
        value=mean,
        standard_uncertainty=sd,
        coverage_probability=p,
        interval_kind=kind,
        interval=symmetric if kind == "symmetric" else shortest,
        symmetric_interval=symmetric,
        shortest_interval=shortest,
        histogram_counts=tuple(int(c) for c in counts),
        histogram_edges=tuple(float(e) for e in edges),
        converged=converged,
        batches=batches,
        note=note,
    )


# ---------------------------------------------------------------------------- running
def _make_rng(
    rng: np.random.Generator | None, seed: int | None
) -> tuple[np.random.Generator, int | None]:
    if rng is not None:
        if seed is not None:
            raise InputError(f"give rng or seed, not both; got seed = {seed!r} with an rng")
        if not isinstance(rng, np.random.Generator):
            raise InputError(f"rng must be a numpy.random.Generator, got {rng!r}")
        return rng, None
    if seed is not None:
        seed = _check_int(seed, "seed", minimum=0)
    return np.random.default_rng(seed), seed


def _evaluate(
    func: Callable[..., ArrayLike],
    sampler: _Sampler,
    out: np.ndarray,
    chunk_size: int,
) -> tuple[int, str]:
    """Fill ``out`` with model values; return (number of non-finite values, one example)."""
    bad = 0
    example = ""
    m = out.size
    for start in range(0, m, chunk_size):
        size = min(chunk_size, m - start)
        x = sampler.draw(size)
        with np.errstate(all="ignore"):
            try:
                raw = func(*x)
            except (ArithmeticError, ValueError, TypeError) as exc:
                raise ModelError(
                    f"the measurement model failed on a chunk of trials: {exc}"
                ) from exc
            y = np.asarray(raw)
        if y.dtype.kind not in "biuf":
            raise ModelError(f"the measurement model must return real numbers, got dtype {y.dtype}")
        try:
            y = np.broadcast_to(y, (size,))
        except ValueError:
            raise ModelError(
                f"the measurement model must return one value per trial, shape ({size},), "
                f"got shape {y.shape}"
            ) from None
        chunk = out[start : start + size]
        chunk[...] = y
        finite = np.isfinite(chunk)
        if not finite.all():
            nbad = int(size - np.count_nonzero(finite))
            if not example:
                j = int(np.argmin(finite))
                example = (
                    ", ".join(f"{q.name}={x[i, j]!r}" for i, q in enumerate(sampler.inputs))
                    + f" gives {chunk[j]!r}"
                )
            bad += nbad
    return bad, example


def _model_error(bad: int, total: int, example: str) -> ModelError:
    return ModelError(
        f"the measurement model gave non-finite values in {bad} of {total} trials, e.g. {example}"
    )


def run_monte_carlo(
    func: Callable[..., ArrayLike],
    inputs: Sequence[InputQuantity],
    *,
    correlation: ArrayLike | None = None,
    trials: int = 10**6,
    rng: np.random.Generator | None = None,
    seed: int | None = None,
    coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY,
    chunk_size: int = 100_000,
    histogram_bins: int = 100,
) -> MonteCarloResult:
    """Propagate the input distributions through a vectorised model with M fixed trials.

    Parameters
    ----------
    func : callable
        Vectorised measurement model ``func(x1, ..., xn)``: one float64 array per input (in
        the order of ``inputs``, in SI units), returning an array of the same length (or a
        scalar, broadcast) [output unit]. Evaluated inside ``numpy.errstate(all="ignore")``;
        non-finite values are reported instead.
    inputs : sequence of InputQuantity
        The input quantities (estimates and standard uncertainties in SI).
    correlation : (n, n) array_like or None
        Correlation matrix of the inputs [1]; see :func:`draw_inputs`.
    trials : int
        Number M of Monte Carlo trials [1].
    rng : numpy.random.Generator or None
        Source of randomness. If ``None``, ``numpy.random.default_rng(seed)`` is created.
    seed : int or None
        Seed for a new generator (recorded in the result); not allowed together with ``rng``.
    coverage_probability : float
        Coverage probability p, 0 < p < 1 [1].
    chunk_size : int
        Trials drawn and evaluated at a time; bounds the memory of the input draws to about
        8·n·chunk_size bytes. Results do not depend on it.
    histogram_bins : int
        Number of histogram bins [1].

    Returns
    -------
    MonteCarloResult
        Mean, standard deviation, probabilistically symmetric and shortest coverage
        intervals and a histogram of the M model values (``interval`` is the symmetric one).

    Raises
    ------
    InputError
        ``trials``, ``chunk_size`` or ``histogram_bins`` < 1, ``trials`` above
        :data:`MAX_TRIALS`, p outside (0, 1), M too small
        for p, a correlation matrix of the wrong shape, both ``rng`` and ``seed``.
    CorrelationError
        An invalid correlation matrix.
    ModelError
        The model returned non-finite values (the message says in how many trials, with one
        example of input values), a wrong shape, or raised an arithmetic/value/type error.

    Notes
    -----
    Only the M output values are kept (8 bytes each, e.g. 80 MB for 10⁷ trials), sorted once
    for the coverage intervals; the input draws never exist for more than one chunk.
    y is the mean of the values and u(y) their standard deviation with divisor M − 1.

    References
    ----------
    JCGM 101:2008, 5.9, 7.1-7.7.

    Examples
    --------
    >>> from viscometry.gum.inputs import InputQuantity
    >>> xs = [InputQuantity.normal("a", 1.0, 0.1), InputQuantity.normal("b", 2.0, 0.1)]
    >>> res = run_monte_carlo(lambda a, b: a + b, xs, trials=20_000, seed=1)
    >>> round(res.value, 2), round(res.standard_uncertainty, 2), res.seed
    (3.0, 0.14, 1)
    """
    items = _check_inputs(inputs)
    m = check_trials(trials, "trials")
    chunk = _check_int(chunk_size, "chunk_size")
    bins = _check_int(histogram_bins, "histogram_bins", maximum=MAX_HISTOGRAM_BINS)
    p = _check_probability(coverage_probability)
    _coverage_indices(m, p)
    r = _check_correlation(correlation, items)
    generator, seed = _make_rng(rng, seed)
    sampler = _Sampler(items, r, generator)

    y = np.empty(m, dtype=np.float64)
    bad, example = _evaluate(func, sampler, y, chunk)
    if bad:
        raise _model_error(bad, m, example)
    note = (
        f"fixed number of trials M = {m}; stabilisation not assessed "
        f"(use run_adaptive, JCGM 101:2008 7.9)"
    )
    return _summarise(
        y, p, "symmetric", bins, trials=m, seed=seed, converged=False, batches=None, note=note
    )


def run_adaptive(
    func: Callable[..., ArrayLike],
    inputs: Sequence[InputQuantity],
    *,
    correlation: ArrayLike | None = None,
    significant_digits: int = 2,
    coverage_probability: float = DEFAULT_COVERAGE_PROBABILITY,
    rng: np.random.Generator | None = None,
    seed: int | None = None,
    max_trials: int = MAX_TRIALS,
    interval: IntervalKind = "symmetric",
) -> MonteCarloResult:
    """Adaptive Monte Carlo procedure: add batches of trials until the results are stable.

    Parameters
    ----------
    func, inputs, correlation, rng, seed, coverage_probability
        As for :func:`run_monte_carlo`.
    significant_digits : int
        n_dig, the number of significant digits of u(y) to be stable [1].
    max_trials : int
        Stop (not converged) rather than exceed this many trials [1]; must be at least one
        batch and at most :data:`MAX_TRIALS` (the default).
    interval : {"symmetric", "shortest"}
        Coverage interval whose end-points are monitored and reported as ``interval``.

    Returns
    -------
    MonteCarloResult
        Summary over all h·M trials (histogram of 100 bins), with ``converged``,
        ``batches`` = h and a ``note``.
        Reaching ``max_trials`` without stabilisation is reported in ``note`` with
        ``converged=False``, not raised.

    Raises
    ------
    InputError
        Invalid arguments, including ``max_trials`` smaller than one batch or larger than
        :data:`MAX_TRIALS`.
    CorrelationError
        An invalid correlation matrix.
    ModelError
        Non-finite model values in a batch.

    Notes
    -----
    Batches of M = max(J, 10⁴) trials with J the smallest integer ≥ 100/(1 − p). After each
    batch h ≥ 2 the standard deviation associated with the average of the h batch values is
    formed for each of y, u(y), y_low and y_high: s_z² = Σ (z⁽ʳ⁾ − z̄)² / (h(h − 1)).
    δ is the numerical tolerance (:func:`numerical_tolerance`) of u(y) from all h·M values.
    The computation has stabilised when 2 s_z ≤ δ for all four; the result then uses all
    h·M model values.

    References
    ----------
    JCGM 101:2008, 7.9.4.

    Examples
    --------
    >>> from viscometry.gum.inputs import InputQuantity
    >>> res = run_adaptive(lambda a: 2 * a, [InputQuantity.normal("a", 0.0, 1.0)],
    ...                    significant_digits=1, seed=3)
    >>> res.converged, round(res.standard_uncertainty, 1)
    (True, 2.0)
    """
    items = _check_inputs(inputs)
    n_dig = _check_int(significant_digits, "significant_digits", maximum=_MAX_DIGITS)
    p = _check_probability(coverage_probability)
    kind = _check_kind(interval, "interval")
    cap = check_trials(max_trials, "max_trials")
    batch = max(math.ceil(100.0 / (1.0 - p) - 1e-9), 10_000)
    if cap < batch:
        raise InputError(
            f"max_trials must be at least one batch of M = {batch} trials for "
            f"coverage_probability = {p!r}, got {cap!r}"
        )
    r = _check_correlation(correlation, items)
    generator, seed = _make_rng(rng, seed)
    sampler = _Sampler(items, r, generator)
    values, converged, delta, worst = _batches(func, sampler, batch, cap, p, kind, n_dig)
    h = len(values)
    all_values = np.concatenate(values)
    del values
    if converged:
        note = (
            f"adaptive procedure stabilised after h = {h} batches of M = {batch} trials "
            f"(δ = {delta:.3g} at n_dig = {n_dig}; largest {worst})"
        )
    else:
        still = (
            f"{worst} still exceeds δ = {delta:.3g} at n_dig = {n_dig}"
            if h >= 2
            else "at least two batches are needed to assess stability"
        )
        limit = " (the limit of one run)" if cap == MAX_TRIALS else ""
        note = (
            f"not stabilised: max_trials = {cap}{limit} reached after h = {h} batches of "
            f"M = {batch} trials; {still}"
        )
    return _summarise(all_values, p, kind, 100, trials=h * batch, seed=seed,
                      converged=converged, batches=h, note=note)  # fmt: skip


def _batches(
    func: Callable[..., ArrayLike],
    sampler: _Sampler,
    batch: int,
    cap: int,
    p: float,
    kind: IntervalKind,
    n_dig: int,
) -> tuple[list[np.ndarray], bool, float, str]:
    """Batches of the adaptive procedure until stable (JCGM 101:2008, 7.9.4) or ``cap``.

    Returns the batches of model values, whether they stabilised, δ and the largest 2s_z.
    """
    values: list[np.ndarray] = []
    stats: list[tuple[float, float, float, float]] = []
    count, mean_all, m2_all = 0, 0.0, 0.0
    delta, worst = math.nan, ""
    while (len(values) + 1) * batch <= cap:
        y = np.empty(batch, dtype=np.float64)
        bad, example = _evaluate(func, sampler, y, _ADAPTIVE_CHUNK)
        if bad:
            raise _model_error(bad, batch, f"{example} (batch {len(values) + 1})")
        values.append(y)
        mb, m2b = _mean_and_m2(y)
        lo, hi = _interval_sorted(np.sort(y), p, kind)
        stats.append((mb, math.sqrt(m2b / (batch - 1)), lo, hi))
        total = count + batch
        d = mb - mean_all
        mean_all += d * batch / total
        m2_all += m2b + d * d * count * batch / total
        count = total
        h = len(values)
        if h < 2:
            continue
        delta = numerical_tolerance(math.sqrt(m2_all / (count - 1)), n_dig)
        s = np.std(np.array(stats), axis=0, ddof=1) / math.sqrt(h)
        j = int(np.argmax(s))
        worst = f"2s({('y', 'u(y)', 'y_low', 'y_high')[j]}) = {2 * s[j]:.3g}"
        if np.all(2.0 * s <= delta):
            return values, True, delta, worst
    return values, False, delta, worst


# ---------------------------------------------------------------------------- validation
def validate_against(
    first_order_value: float,
    first_order_expanded_uncertainty: float,
    mc_result: MonteCarloResult,
    significant_digits: int = 2,
    reference: str = "first-order",
) -> ValidationResult:
    """Validate a first-order (law of propagation) result against a Monte Carlo result.

    Parameters
    ----------
    first_order_value : float
        Estimate y of the first-order evaluation [output unit].
    first_order_expanded_uncertainty : float
        Its expanded uncertainty U_p ≥ 0 for the same coverage probability as
        ``mc_result`` [output unit].
    mc_result : MonteCarloResult
        The Monte Carlo result; its probabilistically symmetric interval is used.
    significant_digits : int
        n_dig for the numerical tolerance of the Monte Carlo u(y) [1].
    reference : str
        Label of the validated result (``"first-order"`` or ``"higher-order"``).

    Returns
    -------
    ValidationResult
        δ, d_low, d_high and the verdict (:func:`viscometry.text.validation_statement`
        puts it in words).

    Raises
    ------
    InputError
        Non-finite y, negative or non-finite U_p, ``mc_result`` not a MonteCarloResult, or
        ``significant_digits`` < 1.

    Notes
    -----
    d_low = |y − U_p − y_low|, d_high = |y + U_p − y_high| with [y_low, y_high] the
    probabilistically symmetric Monte Carlo interval; validated iff d_low ≤ δ and
    d_high ≤ δ, δ from u(y) of the Monte Carlo result at n_dig significant digits.

    References
    ----------
    JCGM 101:2008, 8.1-8.2.

    Examples
    --------
    >>> from viscometry.gum.inputs import InputQuantity
    >>> res = run_monte_carlo(lambda a: a, [InputQuantity.normal("a", 0.0, 1.0)], seed=2,
    ...                       trials=200_000)
    >>> validate_against(0.0, 2.0, res).validated
    True
    """
    try:
        y = float(first_order_value)
        big_u = float(first_order_expanded_uncertainty)
    except (TypeError, ValueError):
        raise InputError(
            f"first_order_value and first_order_expanded_uncertainty must be numbers, "
            f"got {first_order_value!r} and {first_order_expanded_uncertainty!r}"
        ) from None
    if not math.isfinite(y):
        raise InputError(f"first_order_value must be finite, got {y!r}")
    if not math.isfinite(big_u) or big_u < 0:
        raise InputError(
            f"first_order_expanded_uncertainty must be finite and non-negative, got {big_u!r}"
        )
    if not isinstance(mc_result, MonteCarloResult):
        raise InputError(f"mc_result must be a MonteCarloResult, got {mc_result!r}")
    delta = numerical_tolerance(mc_result.standard_uncertainty, significant_digits)
    low, high = mc_result.symmetric_interval
    d_low = abs(y - big_u - low)
    d_high = abs(y + big_u - high)
    return ValidationResult(
        reference=str(reference),
        tolerance=delta,
        d_low=d_low,
        d_high=d_high,
        validated=bool(d_low <= delta and d_high <= delta),
    )
