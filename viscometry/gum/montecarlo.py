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

Reproducibility and parallel runs
---------------------------------
The trials are drawn in chunks of :data:`CHUNK_TRIALS` (65 536) trials. Chunk k (trials
k·65 536 to (k + 1)·65 536 − 1, counted from 0) is drawn from its own PCG64 stream, seeded
with the k-th child of the run's root :class:`numpy.random.SeedSequence`, i.e. the k-th element of
``SeedSequence(seed).spawn(n)`` for any n > k; a generator passed in instead of a seed is
asked for four 63-bit integers, which seed the root. Within a chunk, each uncorrelated input
in turn draws its values for the whole chunk (an input with zero uncertainty draws nothing),
then the block of correlated inputs draws its standard normal deviates. Every chunk is drawn
in full, the last one of a run too, so the values of trial i depend only on the seed and i:

* the same seed (or generator state) gives bit-identical draws and results;
* the results do **not** depend on the number of worker threads ``jobs``: each chunk's model
  values go to their own place among the M values, and every summary is formed over all M
  values in trial order (statistics in fixed blocks);
* a run of M trials uses the first M trials of any longer run with the same seed; an adaptive
  run that stops after h batches of M trials (7.9) has the values of a fixed run of h·M trials.

With ``jobs`` > 1, the chunks are drawn and evaluated by a pool of that many threads: NumPy's
generators and ufuncs release the global interpreter lock on arrays of this size. The model
function is then called from several threads at once and must be thread-safe (a function of
its arguments only, as every measurement model here is).
"""

from __future__ import annotations

import itertools
import math
import threading
import warnings
from collections import deque
from collections.abc import Callable, Iterable, Iterator, Sequence
from concurrent.futures import Future, ThreadPoolExecutor
from dataclasses import dataclass
from typing import Literal, NamedTuple

import numpy as np
from numpy.typing import ArrayLike

from viscometry._checks import available_cores as _available_cores
from viscometry._checks import worker_count
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
    "MAX_JOBS",
    "CHUNK_TRIALS",
    "ProgressCallback",
    "available_cores",
    "check_jobs",
    "check_trials",
]

#: Most Monte Carlo trials M of one run, fixed or adaptive [1]. A run keeps every model value
#: in memory to find the coverage intervals (8 bytes each, 80 MB at the limit) and sorts them
#: in place; besides, each thread holds one chunk of draws (0.5 MB per input) and the tails of
#: the intervals are copied (at most 1/8 of the values), so a run at the limit needs about
#: 0.1 GB beyond the program itself. Larger M is refused with an
#: :class:`~viscometry.errors.InputError` before anything is allocated, by the library, the
#: command line and the widgets alike.
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

#: Trials per chunk of the stream layout [1] (see the module notes): fixed, so that seeded
#: results depend neither on the number of threads nor on the number of trials after a given
#: one. A worker holds one chunk of draws at a time (8 bytes per trial and input: 0.5 MB per
#: input) plus the model's temporaries.
CHUNK_TRIALS = 1 << 16
#: Most worker threads of one run [1]; a larger number is capped. More threads than cores
#: only add memory (one chunk of draws and the model's temporaries each), never speed.
MAX_JOBS = 64

#: Block length for the mean/standard-deviation pass and the search for the shortest
#: interval over all model values; fixed so that the statistics do not depend on the chunking
#: of the draws or on the number of threads.
_STATS_BLOCK = CHUNK_TRIALS

#: ``progress(trials_done, trials_total)``, called in the calling thread after every chunk.
ProgressCallback = Callable[[int, int], object]


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


def available_cores() -> int:
    """The number of cores this process may run on, at most :data:`MAX_JOBS`.

    Returns
    -------
    int
        The CPUs in the process's affinity mask where the system tells them (Linux), else
        :func:`os.cpu_count`; at least 1 [1].

    Examples
    --------
    >>> 1 <= available_cores() <= MAX_JOBS
    True
    """
    return min(_available_cores(), MAX_JOBS)


def check_jobs(value: object, field: str = "jobs") -> int:
    """A number of worker threads: ``None`` means every available core; at most :data:`MAX_JOBS`.

    Parameters
    ----------
    value : int or None
        Threads that draw and evaluate chunks of trials at the same time [1]; ``None`` for
        :func:`available_cores`. The number never changes a result, only how fast it comes.
    field : str
        What to call it in the message (``"--jobs"`` on the command line).

    Returns
    -------
    int
        1 to :data:`MAX_JOBS` (a larger number is capped); 1 means no threads (everything in
        the calling thread).

    Raises
    ------
    InputError
        Not a whole number, or below 1.

    Examples
    --------
    >>> check_jobs(2), check_jobs(1000)
    (2, 64)
    >>> check_jobs(0)
    Traceback (most recent call last):
    ...
    viscometry.errors.InputError: jobs must be a whole number of at least 1, got 0
    """
    return worker_count(value, field, MAX_JOBS)


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


def _check_progress(progress: object) -> None:
    if progress is not None and not callable(progress):
        raise InputError(
            f"progress must be a callable(trials_done, trials_total), got {_shown(progress)}"
        )


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
def _make_root(
    rng: np.random.Generator | None, seed: int | None
) -> tuple[np.random.SeedSequence, int | None]:
    """The root seed sequence of a run and the seed to record (see the module notes)."""
    if rng is not None:
        if seed is not None:
            raise InputError(f"give rng or seed, not both; got seed = {seed!r} with an rng")
        if not isinstance(rng, np.random.Generator):
            raise InputError(f"rng must be a numpy.random.Generator, got {_shown(rng)}")
        entropy = rng.integers(0, 2**63, size=4, dtype=np.int64)
        return np.random.SeedSequence([int(e) for e in entropy]), None
    if seed is not None:
        seed = _check_int(seed, "seed", minimum=0)
    return np.random.SeedSequence(seed), seed


class _Sampler:
    """Draws the chunks of trials of all inputs, each chunk from its own stream (module notes)."""

    def __init__(
        self,
        inputs: tuple[InputQuantity, ...],
        correlation: np.ndarray | None,
        root: np.random.SeedSequence,
        stacklevel: int = 3,
    ) -> None:
        self.inputs = inputs
        self._root = root
        n = len(inputs)
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

    def stream(self, k: int) -> np.random.Generator:
        """The generator of chunk ``k``: the k-th child of the root seed sequence."""
        root = self._root
        child = np.random.SeedSequence(
            root.entropy, spawn_key=(*root.spawn_key, k), pool_size=root.pool_size
        )
        return np.random.Generator(np.random.PCG64(child))

    def draw_chunk(self, k: int, out: np.ndarray | None = None) -> np.ndarray:
        """All :data:`CHUNK_TRIALS` trials of chunk ``k``, shape (n, CHUNK_TRIALS), in ``out``
        if given."""
        stream = self.stream(k)
        if out is None:
            out = np.empty((len(self.inputs), CHUNK_TRIALS), dtype=np.float64)
        joint = set(self._joint)
        for i, q in enumerate(self.inputs):
            if i not in joint:
                _draw_one(q, stream, out[i])
        if self._factor is not None:
            width = len(self._joint)
            z = stream.standard_normal((CHUNK_TRIALS, width))
            for row, i in enumerate(self._joint):
                # Explicit elementwise sum in a fixed order (not BLAS): exact and reproducible.
                acc = out[i]
                np.multiply(z[:, 0], self._factor[row, 0], out=acc)
                for col in range(1, width):
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
    rng: np.random.Generator | None = None,
    *,
    seed: int | None = None,
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
        Number of draws M per input, 1 to :data:`MAX_TRIALS` [1].
    rng : numpy.random.Generator, optional
        Source of randomness; the same generator state gives bit-identical draws.
    seed : int, optional
        Seed of the draws instead of ``rng``: the draws of the first ``size`` trials of a
        run with this seed (module notes).

    Returns
    -------
    numpy.ndarray
        Array of shape (n, M), float64; row i holds the draws of ``inputs[i]``.

    Raises
    ------
    InputError
        Empty or malformed ``inputs``, ``size`` < 1 or above :data:`MAX_TRIALS`, a
        correlation matrix of the wrong shape, ``rng`` not a Generator, both ``rng`` and
        ``seed``.
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
    ...                  InputQuantity.rectangular("b", 0.0, 2.0)], None, 5, seed=1)
    >>> x.shape, bool(np.all(np.abs(x[1]) <= 2.0))
    ((2, 5), True)
    """
    items = _check_inputs(inputs)
    size = check_trials(size, "size")
    r = _check_correlation(correlation, items)
    root, _ = _make_root(rng, seed)
    sampler = _Sampler(items, r, root)
    out = np.empty((len(items), size), dtype=np.float64)
    for k, start in enumerate(range(0, size, CHUNK_TRIALS)):
        stop = min(start + CHUNK_TRIALS, size)
        out[:, start:stop] = sampler.draw_chunk(k)[:, : stop - start]
    return out


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


def _plain(value: float) -> float:
    """``value`` as a float, −0.0 as 0.0: which zero comes first among equal values depends on
    how they were sorted, and a result must not."""
    return float(value) + 0.0


def _interval_from_tails(
    lower: np.ndarray, upper: np.ndarray, r: int, kind: IntervalKind
) -> tuple[float, float]:
    """The interval from the sorted tails ``lower`` = y_(1), ..., y_(M−q) and ``upper`` =
    y_(q+1), ..., y_(M) of the sorted values (JCGM 101:2008, 7.7; r is 1-based)."""
    if kind == "symmetric":
        return _plain(lower[r - 1]), _plain(upper[r - 1])
    # argmin of the widths y_(j+q) − y_(j), in blocks (no copy of all M values); the first
    # smallest width wins, as np.argmin over all of them would pick it.
    best, best_width = 0, math.inf
    with np.errstate(over="ignore"):  # ±inf widths of huge values compare as they should
        for start in range(0, lower.size, _STATS_BLOCK):
            widths = upper[start : start + _STATS_BLOCK] - lower[start : start + _STATS_BLOCK]
            j = int(np.argmin(widths))
            if widths[j] < best_width:
                best, best_width = start + j, float(widths[j])
    return _plain(lower[best]), _plain(upper[best])


def _interval_sorted(y: np.ndarray, p: float, kind: IntervalKind) -> tuple[float, float]:
    m = y.size
    q, r = _coverage_indices(m, p)
    return _interval_from_tails(y[: m - q], y[q:], r, kind)


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


#: Count, mean and sum of squared deviations of one block of model values.
_Stats = tuple[int, float, float]


def _block_stats(block: np.ndarray, work: np.ndarray) -> _Stats:
    """Count, mean and sum of squared deviations of ``block``, in the scratch array ``work``
    (pairwise sums, no BLAS, no new array)."""
    mb = float(block.mean())
    d = work[: block.size]
    np.subtract(block, mb, out=d)
    np.multiply(d, d, out=d)
    return block.size, mb, float(d.sum())


def _combine(stats: Iterable[_Stats]) -> tuple[float, float]:
    """Mean and sum of squared deviations of blocks combined in order (Chan et al.)."""
    count, mean, m2 = 0, 0.0, 0.0
    for nb, mb, m2b in stats:
        total = count + nb
        delta = mb - mean
        mean += delta * nb / total
        m2 += m2b + delta * delta * count * nb / total
        count = total
    return mean, m2


def _mean_and_m2(y: np.ndarray, shift: int = 0) -> tuple[float, float]:
    """Mean and sum of squared deviations of y·2^−shift over fixed blocks of
    :data:`_STATS_BLOCK` values (the chunks of a run), combined in order."""
    work = np.empty(min(y.size, _STATS_BLOCK))
    scaled = np.empty_like(work) if shift else work

    def blocks() -> Iterator[_Stats]:
        for start in range(0, y.size, _STATS_BLOCK):
            block = y[start : start + _STATS_BLOCK]
            if shift:
                block = np.ldexp(block, -shift, out=scaled[: block.size])
            yield _block_stats(block, work)

    return _combine(blocks())


def _mean_and_sd(y: np.ndarray, stats: Sequence[_Stats] | None = None) -> tuple[float, float]:
    """Mean and standard deviation of the model values (from the statistics of their blocks
    when a run has them already).

    A spread whose squares under- or overflow (values near 1e-200 or 1e200) would come out
    0 or ∞; then the values are scaled by a power of two first (exact) and the results
    scaled back, so that no spread is lost. Values in the normal range never take that
    path, so seeded results keep every digit.
    """
    with np.errstate(over="ignore", under="ignore"):  # detected below, not warned about
        mean, m2 = _combine(stats) if stats is not None else _mean_and_m2(y)
    sd = math.sqrt(m2 / (y.size - 1)) if y.size > 1 else 0.0
    if y.size > 1 and not (SMALLEST_NORMAL <= sd < math.inf) and y.min() != y.max():
        top = max(abs(float(y.min())), abs(float(y.max())))
        if math.isfinite(top):
            shift = math.frexp(top)[1]
            mean_s, m2_s = _mean_and_m2(y, shift)
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
    stats: Sequence[_Stats] | None = None,
    jobs: int = 1,
) -> MonteCarloResult:
    """Summarise the model values ``y`` (sorted in place, in pieces: the caller's order is
    lost); ``stats`` are those of its blocks of :data:`_STATS_BLOCK` values, if known."""
    mean, sd = _mean_and_sd(y, stats)
    m = y.size
    q, r = _coverage_indices(m, p)
    order = _Ordered(y, m - q, jobs)
    lower, upper = order.tails(q)
    symmetric = _interval_from_tails(lower, upper, r, "symmetric")
    shortest = _interval_from_tails(lower, upper, r, "shortest")
    lo, hi = order.extremes()
    if lo == hi:  # a constant output: unit-wide bins around it, as numpy.histogram does
        lo, hi = lo - 0.5, hi + 0.5
    edges = np.linspace(lo, hi, bins + 1)
    idx = order.count_below(edges)
    idx[-1] = m  # the last bin is closed
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


_MAGNITUDE = (1 << 63) - 1


def _key(value: float) -> int:
    """An integer that orders floats as their values do (−0.0 just below 0.0)."""
    bits = int(np.float64(value).view(np.int64))
    return bits if bits >= 0 else -(bits & _MAGNITUDE) - 1


def _from_key(key: int) -> float:
    """The float of an integer from :func:`_key`."""
    bits = key if key >= 0 else (-key - 1) | (1 << 63)
    return float(np.uint64(bits).view(np.float64))


class _Ordered:
    """The order statistics of model values sorted in place in pieces, one per thread.

    With ``jobs`` > 1 (and tails of at most 1/16 of the values, so that copying them costs
    little memory), ``y`` is cut into ``jobs`` pieces sorted at the same time; a value of a
    given rank is then found by bisection over the floats, counting the values below it in
    every piece, and the two tails of the coverage intervals are gathered and sorted. Every
    figure is an order statistic of all the values, so it is the same for any ``jobs``.
    """

    def __init__(self, y: np.ndarray, tail: int, jobs: int) -> None:
        m = y.size
        n = jobs if jobs > 1 and m >= 2 * CHUNK_TRIALS and 16 * tail <= m else 1
        bounds = [m * i // n for i in range(n + 1)]
        self.pieces = [y[a:b] for a, b in itertools.pairwise(bounds)]
        self.m = m
        if n == 1:
            y.sort()
        else:
            with ThreadPoolExecutor(max_workers=n, thread_name_prefix="mc-sort") as pool:
                list(pool.map(np.ndarray.sort, self.pieces))

    def extremes(self) -> tuple[float, float]:
        """The smallest and the largest value."""
        return (_plain(min(p[0] for p in self.pieces)), _plain(max(p[-1] for p in self.pieces)))

    def count_below(self, values: np.ndarray) -> np.ndarray:
        """How many model values are below each of ``values``."""
        return sum(np.searchsorted(p, values, side="left") for p in self.pieces)  # type: ignore[return-value]

    def rank(self, i: int) -> float:
        """The value y_(i+1) (0-based rank i) of all the sorted values."""
        lo, hi = self.extremes()
        low, high = _key(lo), _key(hi)
        while low < high:  # the smallest float with at least i + 1 values at or below it
            mid = (low + high) // 2
            v = _from_key(mid)
            if sum(int(np.searchsorted(p, v, side="right")) for p in self.pieces) > i:
                high = mid
            else:
                low = mid + 1
        return _from_key(low)

    def tails(self, q: int) -> tuple[np.ndarray, np.ndarray]:
        """y_(1), ..., y_(M−q) and y_(q+1), ..., y_(M), sorted."""
        t = self.m - q
        if len(self.pieces) == 1:
            y = self.pieces[0]
            return y[:t], y[q:]
        v = self.rank(t - 1)
        below = [p[: np.searchsorted(p, v, side="left")] for p in self.pieces]
        lower = np.empty(t)
        n = sum(b.size for b in below)
        np.concatenate(below, out=lower[:n])
        lower[:n].sort()
        lower[n:] = v  # the values equal to y_(M−q)
        w = self.rank(q)
        above = [p[np.searchsorted(p, w, side="right") :] for p in self.pieces]
        upper = np.empty(t)
        n = sum(a.size for a in above)
        np.concatenate(above, out=upper[t - n :])
        upper[t - n :].sort()
        upper[: t - n] = w  # the values equal to y_(q+1)
        return lower, upper


# ---------------------------------------------------------------------------- running
class _ChunkOutcome(NamedTuple):
    """What the work on one chunk found."""

    bad: int  #: number of non-finite model values
    example: str  #: one of them with its inputs, or ""
    stats: _Stats  #: of the chunk's model values (meaningless when ``bad``)


def _chunk_task(
    func: Callable[..., ArrayLike], sampler: _Sampler, out: np.ndarray
) -> Callable[[int], _ChunkOutcome]:
    """The work on chunk k: draw it, evaluate the model, store its values in ``out``; each
    thread reuses its own scratch arrays from chunk to chunk."""
    m = out.size
    scratch = threading.local()

    def task(k: int) -> _ChunkOutcome:
        if not hasattr(scratch, "draws"):
            scratch.draws = np.empty((len(sampler.inputs), CHUNK_TRIALS))
            scratch.work = np.empty(CHUNK_TRIALS)
        start = k * CHUNK_TRIALS
        size = min(CHUNK_TRIALS, m - start)
        x = sampler.draw_chunk(k, scratch.draws)[:, :size]
        chunk = out[start : start + size]
        with np.errstate(all="ignore"):
            chunk[...] = _model_values(func, x, size)
            finite = np.isfinite(chunk)
            if finite.all():
                return _ChunkOutcome(0, "", _block_stats(chunk, scratch.work))
        j = int(np.argmin(finite))
        example = (
            ", ".join(f"{q.name}={x[i, j]!r}" for i, q in enumerate(sampler.inputs))
            + f" gives {chunk[j]!r}"
        )
        return _ChunkOutcome(int(size - np.count_nonzero(finite)), example, (0, 0.0, 0.0))

    return task


def _model_values(func: Callable[..., ArrayLike], x: np.ndarray, size: int) -> np.ndarray:
    """``func(*x)`` as ``size`` real numbers, or a :class:`ModelError`."""
    try:
        y = np.asarray(func(*x))
    except (ArithmeticError, ValueError, TypeError) as exc:
        raise ModelError(f"the measurement model failed on a chunk of trials: {exc}") from exc
    if y.dtype.kind not in "biuf":
        raise ModelError(f"the measurement model must return real numbers, got dtype {y.dtype}")
    try:
        return np.broadcast_to(y, (size,))
    except ValueError:
        raise ModelError(
            f"the measurement model must return one value per trial, shape ({size},), "
            f"got shape {y.shape}"
        ) from None


def _in_order(
    task: Callable[[int], _ChunkOutcome], chunks: range, jobs: int
) -> Iterator[_ChunkOutcome]:
    """``task(k)`` for every chunk k, yielded in chunk order; with ``jobs`` > 1 computed by a
    pool of threads a few chunks ahead. Closing the iterator (or an error) cancels the chunks
    not yet started and waits for the running ones, so no thread outlives the run."""
    if jobs == 1 or len(chunks) == 1:
        for k in chunks:
            yield task(k)
        return
    pool = ThreadPoolExecutor(max_workers=min(jobs, len(chunks)), thread_name_prefix="mc")
    todo = iter(chunks)
    pending: deque[Future[_ChunkOutcome]] = deque(
        pool.submit(task, k) for k in itertools.islice(todo, 2 * jobs)
    )
    try:
        while pending:
            outcome = pending.popleft().result()
            pending.extend(pool.submit(task, k) for k in itertools.islice(todo, 1))
            yield outcome
    finally:
        for future in pending:
            future.cancel()
        pool.shutdown(wait=True)


def _evaluate(
    func: Callable[..., ArrayLike],
    sampler: _Sampler,
    out: np.ndarray,
    jobs: int,
    progress: ProgressCallback | None,
) -> tuple[int, str, list[_Stats]]:
    """Fill ``out`` with model values; return the number of non-finite values, one example
    and the statistics of every chunk."""
    m = out.size
    bad, example, stats = 0, "", []
    outcomes = _in_order(_chunk_task(func, sampler, out), range(-(-m // CHUNK_TRIALS)), jobs)
    try:
        for k, outcome in enumerate(outcomes):
            bad += outcome.bad
            example = example or outcome.example
            stats.append(outcome.stats)
            if progress is not None:
                progress(min((k + 1) * CHUNK_TRIALS, m), m)
    finally:
        outcomes.close()
    return bad, example, stats


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
    histogram_bins: int = 100,
    jobs: int | None = 1,
    progress: ProgressCallback | None = None,
) -> MonteCarloResult:
    """Propagate the input distributions through a vectorised model with M fixed trials.

    Parameters
    ----------
    func : callable
        Vectorised measurement model ``func(x1, ..., xn)``: one float64 array per input (in
        the order of ``inputs``, in SI units), returning an array of the same length (or a
        scalar, broadcast) [output unit]. Evaluated inside ``numpy.errstate(all="ignore")``;
        non-finite values are reported instead. With ``jobs`` > 1 it is called from several
        threads at once and must be thread-safe.
    inputs : sequence of InputQuantity
        The input quantities (estimates and standard uncertainties in SI).
    correlation : (n, n) array_like or None
        Correlation matrix of the inputs [1]; see :func:`draw_inputs`.
    trials : int
        Number M of Monte Carlo trials [1].
    rng : numpy.random.Generator or None
        Source of randomness: asked for four integers that seed the run's streams.
    seed : int or None
        Seed of the run's streams (recorded in the result); not allowed together with
        ``rng``. With neither, fresh entropy from the operating system.
    coverage_probability : float
        Coverage probability p, 0 < p < 1 [1].
    histogram_bins : int
        Number of histogram bins [1].
    jobs : int or None
        Threads that draw and evaluate chunks of :data:`CHUNK_TRIALS` trials at the same
        time [1], capped at :data:`MAX_JOBS`; 1 (the default) for none, ``None`` for every
        available core. The result does not depend on it (module notes).
    progress : callable, optional
        ``progress(trials_done, trials)``, called in the calling thread after every chunk, in
        order; an exception it raises stops the run and is passed on.

    Returns
    -------
    MonteCarloResult
        Mean, standard deviation, probabilistically symmetric and shortest coverage
        intervals and a histogram of the M model values (``interval`` is the symmetric one).

    Raises
    ------
    InputError
        ``trials`` or ``histogram_bins`` < 1, ``trials`` above :data:`MAX_TRIALS`, ``jobs``
        below 1, p outside (0, 1), M too small for p, a correlation matrix of the wrong
        shape, both ``rng`` and ``seed``.
    CorrelationError
        An invalid correlation matrix.
    ModelError
        The model returned non-finite values (the message says in how many trials, with one
        example of input values), a wrong shape, or raised an arithmetic/value/type error.

    Notes
    -----
    Only the M output values are kept (8 bytes each, e.g. 80 MB for 10⁷ trials), sorted once
    in place for the coverage intervals; the input draws never exist for more than one chunk
    per thread. y is the mean of the values and u(y) their standard deviation with divisor
    M − 1.

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
    bins = _check_int(histogram_bins, "histogram_bins", maximum=MAX_HISTOGRAM_BINS)
    p = _check_probability(coverage_probability)
    _coverage_indices(m, p)
    workers = check_jobs(jobs)
    _check_progress(progress)
    r = _check_correlation(correlation, items)
    root, seed = _make_root(rng, seed)
    sampler = _Sampler(items, r, root)

    y = np.empty(m, dtype=np.float64)
    bad, example, stats = _evaluate(func, sampler, y, workers, progress)
    if bad:
        raise _model_error(bad, m, example)
    note = (
        f"fixed number of trials M = {m}; stabilisation not assessed "
        f"(use run_adaptive, JCGM 101:2008 7.9)"
    )
    return _summarise(y, p, "symmetric", bins, trials=m, seed=seed, converged=False,
                      batches=None, note=note, stats=stats, jobs=workers)  # fmt: skip


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
    jobs: int | None = 1,
    progress: ProgressCallback | None = None,
) -> MonteCarloResult:
    """Adaptive Monte Carlo procedure: add batches of trials until the results are stable.

    Parameters
    ----------
    func, inputs, correlation, rng, seed, coverage_probability, jobs
        As for :func:`run_monte_carlo`.
    significant_digits : int
        n_dig, the number of significant digits of u(y) to be stable [1].
    max_trials : int
        Stop (not converged) rather than exceed this many trials [1]; must be at least one
        batch and at most :data:`MAX_TRIALS` (the default).
    interval : {"symmetric", "shortest"}
        Coverage interval whose end-points are monitored and reported as ``interval``.
    progress : callable, optional
        ``progress(trials_done, max_trials)`` after every chunk, as for
        :func:`run_monte_carlo` (``max_trials`` is an upper bound).

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
    h·M model values, which are those of a fixed run of h·M trials with the same seed. With
    ``jobs`` > 1, chunks are drawn a few ahead of the batch being checked; those past the
    batch that stabilises are discarded, so the result is the same for any ``jobs``.

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
    workers = check_jobs(jobs)
    _check_progress(progress)
    r = _check_correlation(correlation, items)
    root, seed = _make_root(rng, seed)
    sampler = _Sampler(items, r, root)
    run = _AdaptiveRun(batch, p, kind, n_dig)
    all_values, converged = _batches(func, sampler, run, cap, workers, progress)
    h, delta, worst = run.h, run.delta, run.worst
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
                      converged=converged, batches=h, note=note, jobs=workers)  # fmt: skip


class _AdaptiveRun:
    """The stopping rule of the adaptive procedure (JCGM 101:2008, 7.9.4), fed batch by batch."""

    def __init__(self, batch: int, p: float, kind: IntervalKind, n_dig: int) -> None:
        self.batch, self.p, self.kind, self.n_dig = batch, p, kind, n_dig
        self.stats: list[tuple[float, float, float, float]] = []
        self.count, self.mean, self.m2 = 0, 0.0, 0.0
        self.delta, self.worst = math.nan, ""

    @property
    def h(self) -> int:
        """Number of batches so far."""
        return len(self.stats)

    def add(self, y: np.ndarray) -> bool:
        """Take one batch of model values; ``True`` once the results have stabilised."""
        batch = self.batch
        mb, m2b = _mean_and_m2(y)
        lo, hi = _interval_sorted(np.sort(y), self.p, self.kind)
        self.stats.append((mb, math.sqrt(m2b / (batch - 1)), lo, hi))
        total = self.count + batch
        d = mb - self.mean
        self.mean += d * batch / total
        self.m2 += m2b + d * d * self.count * batch / total
        self.count = total
        h = len(self.stats)
        if h < 2:
            return False
        self.delta = numerical_tolerance(math.sqrt(self.m2 / (self.count - 1)), self.n_dig)
        s = np.std(np.array(self.stats), axis=0, ddof=1) / math.sqrt(h)
        j = int(np.argmax(s))
        self.worst = f"2s({('y', 'u(y)', 'y_low', 'y_high')[j]}) = {2 * s[j]:.3g}"
        return bool(np.all(2.0 * s <= self.delta))


def _batches(
    func: Callable[..., ArrayLike],
    sampler: _Sampler,
    run: _AdaptiveRun,
    cap: int,
    jobs: int,
    progress: ProgressCallback | None,
) -> tuple[np.ndarray, bool]:
    """Batches of the adaptive procedure until stable (JCGM 101:2008, 7.9.4) or ``cap``.

    The trials are those of a fixed run, chunk after chunk; a batch is checked as soon as its
    chunks are in. Returns the model values of the h batches taken and whether they
    stabilised.
    """
    batch = run.batch
    need = cap // batch * batch
    y = np.empty(need, dtype=np.float64)  # pages are only touched as chunks fill them
    outcomes = _in_order(_chunk_task(func, sampler, y), range(-(-need // CHUNK_TRIALS)), jobs)
    examples: list[str] = []
    try:
        for k, outcome in enumerate(outcomes):
            examples.append(outcome.example)
            done = min((k + 1) * CHUNK_TRIALS, need)
            if progress is not None:
                progress(done, cap)
            while (run.h + 1) * batch <= done:
                values = y[run.h * batch : (run.h + 1) * batch]
                bad = values.size - int(np.count_nonzero(np.isfinite(values)))
                if bad:  # earlier batches were finite: the first example is in this one
                    example = next(e for e in examples if e)
                    raise _model_error(bad, batch, f"{example} (batch {run.h + 1})")
                if run.add(values):
                    return y[: run.h * batch], True
    finally:
        outcomes.close()
    return y[: run.h * batch], False


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
