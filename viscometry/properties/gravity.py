"""Standard and normal gravity (WGS 84), for the g-dependence of viscometer constants.

ISO 3104, 7.2: a capillary viscometer constant is proportional to the local acceleration of
gravity, C₂ = (g₂/g₁)·C₁; :func:`normal_gravity` gives a model value of g at a laboratory's
latitude and height when no measured value is at hand.  Normal gravity ignores local anomalies
(typically up to a few 1e-4 relative in mountains), so a measured or surveyed g is better.
"""

from __future__ import annotations

import numpy as np
from numpy.typing import ArrayLike, NDArray

from viscometry.errors import InputError
from viscometry.properties.constants import (
    STANDARD_GRAVITY,
    WGS84_FIRST_ECCENTRICITY_SQUARED,
    WGS84_FLATTENING,
    WGS84_M,
    WGS84_NORMAL_GRAVITY_EQUATOR,
    WGS84_SEMI_MAJOR_AXIS,
    WGS84_SOMIGLIANA_K,
)
from viscometry.properties.water import (
    _as_float_array,
    _scalar_or_array,
    _warn_outside,
)

__all__ = ["standard_gravity", "normal_gravity"]

LATITUDE_RANGE: tuple[float, float] = (-90.0, 90.0)
"""Allowed geodetic latitudes [°]."""

HEIGHT_RANGE: tuple[float, float] = (-1000.0, 20000.0)
"""Ellipsoidal heights [m] for which the second-order free-air series is used without warning
(NIMA TR8350.2 recommends it for heights near the Earth's surface; the bounds are ours)."""


def standard_gravity() -> float:
    """Standard acceleration of gravity g_n, exact.

    Returns
    -------
    float
        9.806 65 [m/s²].

    References
    ----------
    3rd CGPM (1901); SI Brochure, 9th ed. (2019).

    Examples
    --------
    >>> standard_gravity()
    9.80665
    """
    return STANDARD_GRAVITY


def normal_gravity(latitude: ArrayLike, height: ArrayLike = 0.0) -> float | NDArray[np.float64]:
    """Normal gravity of the WGS 84 ellipsoid at a geodetic latitude and ellipsoidal height.

    Parameters
    ----------
    latitude : float or array_like
        Geodetic latitude φ [°], −90 to 90.
    height : float or array_like, optional
        Height above the ellipsoid h [m]; default 0.  (Height above sea level differs from it
        by the geoid undulation, at most about ±100 m: 3e-5 relative in g.)

    Returns
    -------
    float or numpy.ndarray
        Normal gravity γ_h [m/s²].

    Raises
    ------
    viscometry.errors.InputError
        If a latitude is outside −90° to 90° or an input is not finite.

    Warns
    -----
    viscometry.errors.ValidityWarning
        If a height is outside −1 km to 20 km.

    Notes
    -----
    Somigliana's closed formula on the ellipsoid and the second-order free-air correction:

    .. math:: \\gamma = \\gamma_e\\,\\frac{1 + k\\sin^2\\varphi}{\\sqrt{1 - e^2\\sin^2\\varphi}},
              \\qquad
              \\gamma_h = \\gamma\\Big[1 - \\frac{2}{a}\\big(1 + f + m - 2f\\sin^2\\varphi\\big)h
              + \\frac{3h^2}{a^2}\\Big],\\quad m = \\frac{\\omega^2 a^2 b}{GM}.

    Near the surface at mid-latitudes the vertical gradient is about −3.086e-6 s⁻²
    (−0.3086 mGal/m).

    References
    ----------
    NIMA TR8350.2, 3rd ed. (1997, amended 2000), eq. (4-1) (Somigliana) and eq. (4-3)
    (free-air correction), Tables 3.1-3.4 (constants).

    Examples
    --------
    >>> round(normal_gravity(45.0), 6)
    9.806198
    >>> normal_gravity(0.0) == 9.7803253359
    True
    """
    phi_deg = _as_float_array(latitude, "latitude")
    h = _as_float_array(height, "height")
    if not np.all(np.isfinite(phi_deg)) or np.any(np.abs(phi_deg) > 90.0):
        bad = np.atleast_1d(phi_deg)[~(np.abs(np.atleast_1d(phi_deg)) <= 90.0)][0]
        raise InputError(f"latitude must be between -90 and 90 degrees, got {float(bad)!r}")
    if not np.all(np.isfinite(h)):
        bad = np.atleast_1d(h)[~np.isfinite(np.atleast_1d(h))][0]
        raise InputError(f"height must be finite, got {float(bad)!r} m")
    _warn_outside(h, "height", "m", HEIGHT_RANGE, "the free-air series of NIMA TR8350.2")
    sin2 = np.sin(np.deg2rad(phi_deg)) ** 2
    gamma = (
        WGS84_NORMAL_GRAVITY_EQUATOR
        * (1.0 + WGS84_SOMIGLIANA_K * sin2)
        / np.sqrt(1.0 - WGS84_FIRST_ECCENTRICITY_SQUARED * sin2)
    )
    a = WGS84_SEMI_MAJOR_AXIS
    f = WGS84_FLATTENING
    factor = 1.0 - 2.0 / a * (1.0 + f + WGS84_M - 2.0 * f * sin2) * h + 3.0 * h**2 / a**2
    return _scalar_or_array(gamma * factor)
