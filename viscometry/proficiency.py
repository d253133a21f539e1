"""Performance scores for proficiency testing and interlaboratory comparisons.

===========  ==========================================  ===================  ====================
score        formula                                     classification       reference
===========  ==========================================  ===================  ====================
E_n          (x - X) / sqrt(U_lab² + U_ref²)             |E_n| <= 1 satisf.   ISO 13528:2015, 9.7
z            (x - x_pt) / sigma_pt                       2 / 3 thresholds     ISO 13528:2015, 9.4
z′           (x - x_pt) / sqrt(sigma_pt² + u(x_pt)²)     2 / 3 thresholds     ISO 13528:2015, 9.5
zeta         (x - x_pt) / sqrt(u_lab² + u(x_pt)²)        2 / 3 thresholds     ISO 13528:2015, 9.6
===========  ==========================================  ===================  ====================

For z, z′ and zeta: ``|s| <= 2`` satisfactory, ``2 < |s| < 3`` questionable (warning signal),
``|s| >= 3`` unsatisfactory (action signal) (ISO/IEC 17043:2010, B.4). All comparisons are
made on the floating-point score exactly as computed, with the satisfactory bound inclusive:
a score of exactly 1 (E_n) or 2 (z, z′, zeta) is satisfactory, exactly 3 is unsatisfactory.
Clause numbers are cited from memory.

Functions are pure and unit-agnostic: the values and uncertainties of one call share one unit
(SI inside the package, e.g. [m²/s]); scores are dimensionless.

Examples
--------
>>> s = en_score(1.0050, 0.0030, 1.0034, 0.0020)
>>> s.classification
'satisfactory'
>>> z_score(12.5, 10.0, 1.0).classification
'questionable'
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Literal

from viscometry._checks import finite as _finite
from viscometry._checks import positive as _positive
from viscometry.errors import InputError

__all__ = [
    "ScoreKind",
    "Classification",
    "EN_LIMIT",
    "WARNING_LIMIT",
    "ACTION_LIMIT",
    "Score",
    "en_score",
    "z_score",
    "z_prime_score",
    "zeta_score",
]

ScoreKind = Literal["E_n", "z", "z'", "zeta"]
Classification = Literal["satisfactory", "questionable", "unsatisfactory"]

#: |E_n| at or below this is satisfactory (ISO 13528:2015, 9.7; ISO/IEC 17043:2010, B.4).
EN_LIMIT: float = 1.0
#: |z|, |z′|, |zeta| above this is a warning signal (ISO 13528:2015, 9.4; ISO/IEC 17043, B.4).
WARNING_LIMIT: float = 2.0
#: |z|, |z′|, |zeta| at or above this is an action signal (same sources).
ACTION_LIMIT: float = 3.0


@dataclass(frozen=True)
class Score:
    """A performance score with its classification.

    Attributes
    ----------
    kind : {"E_n", "z", "z'", "zeta"}
        Which score.
    value : float
        The score. [1]
    classification : {"satisfactory", "questionable", "unsatisfactory"}
        Performance class (E_n has no "questionable" class);
        :func:`viscometry.text.score_statement` puts it in words.
    """

    kind: ScoreKind
    value: float
    classification: Classification


# --------------------------------------------------------------------------- helpers


def _make(kind: ScoreKind, value: float) -> Score:
    if not math.isfinite(value):  # only by overflow of a huge difference over a tiny scale
        raise InputError(f"{kind} score is not finite ({value!r}); check the magnitudes")
    a = abs(value)
    cls: Classification
    if kind == "E_n":
        cls = "satisfactory" if a <= EN_LIMIT else "unsatisfactory"
    elif a <= WARNING_LIMIT:
        cls = "satisfactory"
    else:
        cls = "questionable" if a < ACTION_LIMIT else "unsatisfactory"
    return Score(kind=kind, value=value, classification=cls)


# --------------------------------------------------------------------------- scores


def en_score(
    lab_value: float,
    lab_expanded_uncertainty: float,
    reference_value: float,
    reference_expanded_uncertainty: float,
) -> Score:
    """E_n number of a participant's result against a reference value.

    Parameters
    ----------
    lab_value : float
        Participant's result ``x``. [unit of the measurand]
    lab_expanded_uncertainty : float
        Participant's expanded uncertainty ``U_lab`` (usually k = 2), positive.
        [unit of the measurand]
    reference_value : float
        Reference (assigned) value ``X``. [unit of the measurand]
    reference_expanded_uncertainty : float
        Expanded uncertainty ``U_ref`` of ``X`` (same coverage as ``U_lab``), positive.
        [unit of the measurand]

    Returns
    -------
    Score
        ``kind="E_n"``; "satisfactory" if ``|E_n| <= 1`` (inclusive), else "unsatisfactory".

    Raises
    ------
    InputError
        If a value is not finite or an uncertainty is not positive and finite.

    Notes
    -----
    .. math:: E_n = \\frac{x - X}{\\sqrt{U_{lab}^2 + U_{ref}^2}}

    The root-sum-square is computed with :func:`math.hypot`.

    References
    ----------
    ISO 13528:2015, 9.7; ISO/IEC 17043:2010, B.4 (clause numbers from memory).

    Examples
    --------
    >>> en_score(15.0, 3.0, 10.0, 4.0).value
    1.0
    """
    x = _finite(lab_value, "lab_value")
    u_lab = _positive(lab_expanded_uncertainty, "lab_expanded_uncertainty")
    ref = _finite(reference_value, "reference_value")
    u_ref = _positive(reference_expanded_uncertainty, "reference_expanded_uncertainty")
    return _make("E_n", (x - ref) / math.hypot(u_lab, u_ref))


def z_score(lab_value: float, assigned_value: float, sd_for_pt: float) -> Score:
    """z score of a participant's result.

    Parameters
    ----------
    lab_value : float
        Participant's result ``x``. [unit of the measurand]
    assigned_value : float
        Assigned value ``x_pt``. [unit of the measurand]
    sd_for_pt : float
        Standard deviation for proficiency assessment ``sigma_pt``, positive.
        [unit of the measurand]

    Returns
    -------
    Score
        ``kind="z"``, classified with the 2 / 3 thresholds.

    Raises
    ------
    InputError
        If a value is not finite or ``sd_for_pt`` is not positive and finite.

    Notes
    -----
    .. math:: z = \\frac{x - x_{pt}}{\\sigma_{pt}}

    References
    ----------
    ISO 13528:2015, 9.4; ISO/IEC 17043:2010, B.4 (clause numbers from memory).

    Examples
    --------
    >>> z_score(14.0, 10.0, 2.0).classification
    'satisfactory'
    """
    x = _finite(lab_value, "lab_value")
    x_pt = _finite(assigned_value, "assigned_value")
    sigma = _positive(sd_for_pt, "sd_for_pt")
    return _make("z", (x - x_pt) / sigma)


def z_prime_score(
    lab_value: float,
    assigned_value: float,
    sd_for_pt: float,
    assigned_value_uncertainty: float,
) -> Score:
    """z′ score: a z score that allows for the standard uncertainty of the assigned value.

    Parameters
    ----------
    lab_value : float
        Participant's result ``x``. [unit of the measurand]
    assigned_value : float
        Assigned value ``x_pt``. [unit of the measurand]
    sd_for_pt : float
        Standard deviation for proficiency assessment ``sigma_pt``, positive.
        [unit of the measurand]
    assigned_value_uncertainty : float
        Standard uncertainty ``u(x_pt)`` of the assigned value, positive.
        [unit of the measurand]

    Returns
    -------
    Score
        ``kind="z'"``, classified with the 2 / 3 thresholds.

    Raises
    ------
    InputError
        If a value is not finite or an uncertainty / ``sd_for_pt`` is not positive and finite.

    Notes
    -----
    .. math:: z' = \\frac{x - x_{pt}}{\\sqrt{\\sigma_{pt}^2 + u(x_{pt})^2}}

    ISO 13528 treats ``u(x_pt)`` as negligible when ``u(x_pt) <= 0.3 sigma_pt``; z′ is the
    score for when it is not (from memory).

    References
    ----------
    ISO 13528:2015, 9.5; ISO/IEC 17043:2010, B.4 (clause numbers from memory).

    Examples
    --------
    >>> z_prime_score(15.0, 10.0, 3.0, 4.0).value
    1.0
    """
    x = _finite(lab_value, "lab_value")
    x_pt = _finite(assigned_value, "assigned_value")
    sigma = _positive(sd_for_pt, "sd_for_pt")
    u_pt = _positive(assigned_value_uncertainty, "assigned_value_uncertainty")
    return _make("z'", (x - x_pt) / math.hypot(sigma, u_pt))


def zeta_score(
    lab_value: float,
    lab_standard_uncertainty: float,
    assigned_value: float,
    assigned_value_uncertainty: float,
) -> Score:
    """zeta (ζ) score: the deviation in units of the combined standard uncertainty.

    Parameters
    ----------
    lab_value : float
        Participant's result ``x``. [unit of the measurand]
    lab_standard_uncertainty : float
        Participant's standard uncertainty ``u_lab``, positive. [unit of the measurand]
    assigned_value : float
        Assigned value ``x_pt``. [unit of the measurand]
    assigned_value_uncertainty : float
        Standard uncertainty ``u(x_pt)`` of the assigned value, positive.
        [unit of the measurand]

    Returns
    -------
    Score
        ``kind="zeta"``, classified with the 2 / 3 thresholds.

    Raises
    ------
    InputError
        If a value is not finite or an uncertainty is not positive and finite.

    Notes
    -----
    .. math:: \\zeta = \\frac{x - x_{pt}}{\\sqrt{u_{lab}^2 + u(x_{pt})^2}}

    The participant's result and the assigned value are assumed uncorrelated.

    References
    ----------
    ISO 13528:2015, 9.6; ISO/IEC 17043:2010, B.4 (clause numbers from memory).

    Examples
    --------
    >>> s = zeta_score(7.0, 0.75, 10.0, 1.0)
    >>> round(s.value, 2), s.classification
    (-2.4, 'questionable')
    """
    x = _finite(lab_value, "lab_value")
    u_lab = _positive(lab_standard_uncertainty, "lab_standard_uncertainty")
    x_pt = _finite(assigned_value, "assigned_value")
    u_pt = _positive(assigned_value_uncertainty, "assigned_value_uncertainty")
    return _make("zeta", (x - x_pt) / math.hypot(u_lab, u_pt))
